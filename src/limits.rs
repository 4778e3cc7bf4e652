//! How much work a call may do. Every command estimates its time and memory before it starts
//! and refuses with the estimate when it is above its limit; [`Limits::force`] overrides that
//! (never the hard ceilings that protect the machine, which each module states).

use std::cell::RefCell;
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::Arc;

/// Work limits of a computation.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct Limits {
    /// Run even when the estimate is above the default limit (the user accepts the cost).
    pub force: bool,
}

impl Limits {
    /// Limits with the override set.
    pub fn forced() -> Self {
        Limits { force: true }
    }
}

/// A request to stop a computation early, shared by all the threads working on it.
///
/// A caller that may abandon a computation (the Python package, when the user presses Ctrl-C)
/// runs it through [`run_stoppable`]; the iterative solvers and searches look at
/// [`stop_requested`] once per iteration or task and wind down, so an abandoned computation
/// frees its threads within one iteration instead of running on unseen. What a stopped
/// computation returns is meaningless and is never shown: its caller has already gone.
#[derive(Debug, Clone, Default)]
pub struct StopSignal(Arc<AtomicBool>);

impl StopSignal {
    /// A signal not yet raised.
    pub fn new() -> Self {
        Self::default()
    }

    /// Asks the computation to stop.
    pub fn raise(&self) {
        self.0.store(true, Ordering::Relaxed);
    }

    /// Whether [`StopSignal::raise`] was called.
    pub fn is_raised(&self) -> bool {
        self.0.load(Ordering::Relaxed)
    }
}

thread_local! {
    /// The stop signal of the computation this thread works for, if it can be stopped.
    static CURRENT_STOP: RefCell<Option<StopSignal>> = const { RefCell::new(None) };
}

/// Whether the computation running on this thread has been asked to stop (always false outside
/// [`run_stoppable`]).
pub fn stop_requested() -> bool {
    CURRENT_STOP.with(|c| c.borrow().as_ref().is_some_and(StopSignal::is_raised))
}

/// Runs `work` on a thread pool of its own whose threads all see `signal` (through
/// [`stop_requested`]). Its own pool also keeps an abandoned computation from occupying the
/// threads later calls need.
pub fn run_stoppable<T: Send>(
    signal: &StopSignal,
    work: impl FnOnce() -> T + Send,
) -> std::result::Result<T, String> {
    let for_threads = signal.clone();
    let pool = rayon::ThreadPoolBuilder::new()
        .thread_name(|i| format!("bellgap-{i}"))
        .stack_size(64 << 20)
        .start_handler(move |_| {
            CURRENT_STOP.with(|c| *c.borrow_mut() = Some(for_threads.clone()));
        })
        .build()
        .map_err(|e| format!("cannot start the worker threads: {e}"))?;
    Ok(pool.install(work))
}

/// "3.2 s", "4.1 min", "2.0 h", "3.5 days", "1.2e3 years": durations in refusal messages.
pub fn human_seconds(s: f64) -> String {
    if s < 60.0 {
        format!("{s:.1} s")
    } else if s < 3600.0 {
        format!("{:.1} min", s / 60.0)
    } else if s < 86400.0 {
        format!("{:.1} h", s / 3600.0)
    } else if s < 86400.0 * 365.0 {
        format!("{:.1} days", s / 86400.0)
    } else {
        format!("{:.1e} years", s / (86400.0 * 365.0))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_raised_signal_is_seen_by_every_thread_of_the_computation() {
        use rayon::prelude::*;
        let signal = StopSignal::new();
        assert!(!stop_requested());
        let seen = run_stoppable(&signal, || {
            let before: Vec<bool> = (0..64).into_par_iter().map(|_| stop_requested()).collect();
            signal.raise();
            let after: Vec<bool> = (0..64).into_par_iter().map(|_| stop_requested()).collect();
            (before, after)
        })
        .unwrap();
        assert!(seen.0.iter().all(|s| !s));
        assert!(seen.1.iter().all(|s| *s));
        // Outside the computation nothing is stopped.
        assert!(!stop_requested());
    }

    #[test]
    fn durations_read_in_the_unit_that_fits() {
        assert_eq!(human_seconds(3.24), "3.2 s");
        assert_eq!(human_seconds(246.0), "4.1 min");
        assert_eq!(human_seconds(7200.0), "2.0 h");
        assert_eq!(human_seconds(3.5 * 86400.0), "3.5 days");
        assert_eq!(human_seconds(1.2e3 * 86400.0 * 365.0), "1.2e3 years");
    }
}
