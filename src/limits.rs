//! How much work a call may do. Every command estimates its time and memory before it starts
//! and refuses with the estimate when it is above its limit; [`Limits::force`] overrides that
//! (never the hard ceilings that protect the machine, which each module states).

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
    fn durations_read_in_the_unit_that_fits() {
        assert_eq!(human_seconds(3.24), "3.2 s");
        assert_eq!(human_seconds(246.0), "4.1 min");
        assert_eq!(human_seconds(7200.0), "2.0 h");
        assert_eq!(human_seconds(3.5 * 86400.0), "3.5 days");
        assert_eq!(human_seconds(1.2e3 * 86400.0 * 365.0), "1.2e3 years");
    }
}
