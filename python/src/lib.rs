//! Python bindings of the bellgap library (`bellgap._bellgap`; the Python package `bellgap`
//! wraps them). Each command takes a loaded game and its options as a JSON object (the Python
//! keyword arguments), converts them to the library's typed options in one place here, runs the
//! library's pipeline function with the GIL released, and returns the same JSON the command
//! line prints with `--json` (`bellgap::render::json::to_value`), as text.
//!
//! Long computations run on a worker thread while the calling thread waits with the GIL
//! released and checks for Ctrl-C every 100 ms: an interrupt raises `KeyboardInterrupt` at once
//! (the abandoned computation finishes on its own thread and its result is dropped).

use std::panic::AssertUnwindSafe;
use std::sync::{mpsc, Arc};
use std::time::Duration;

use pyo3::create_exception;
use pyo3::exceptions::PyException;
use pyo3::prelude::*;
use serde::Deserialize;
use serde_json::{json, Value};

use bellgap::bounds::classical::{Choice, ClassicalOptions};
use bellgap::bounds::entropy::{AdversaryWords, EntropyOptions, MomentField, Preprocessing};
use bellgap::bounds::quantum::npa::Level;
use bellgap::bounds::quantum::symmetric::SymmetryChoice;
use bellgap::formats::game::families::{self, Family};
use bellgap::formats::game::CompileOptions;
use bellgap::formats::protocol_file::ProtocolFile;
use bellgap::limits::{run_stoppable, StopSignal};
use bellgap::model::counts::Counts;
use bellgap::model::strategy::{CMatrix, CVector};
use bellgap::optim::first_order::FirstOrderOptions;
use bellgap::pipeline::{
    self, BoundKind, BoundsOptions, EntropyCommandOptions, EntropyGiven, ErrorCorrection,
    EvaluateOptions, FiniteSizeOptions, KeyDisclosure, KeyParts, MarginOptions, NpaLevelsOptions,
    RandomnessOptions, RunData, Silent, Tangent, TargetChoice,
};
use bellgap::protocol::accumulation::{SecurityParameters, Statement};
use bellgap::protocol::finite::ObservedRun;
use bellgap::render::json::to_value;
use bellgap::{Backend, Error, Game, Limits, QuantumStrategy, SeesawOptions};

create_exception!(
    _bellgap,
    BellgapError,
    PyException,
    "An error of bellgap: args are (kind, message, location), location a dict or None."
);

/// The library's error as a Python exception carrying its kind, message and location (the
/// same three the command line's JSON error object has).
fn to_py(e: Error) -> PyErr {
    let location = e
        .location()
        .map(|l| serde_json::to_string(l).unwrap_or_default());
    BellgapError::new_err((e.kind(), e.to_string(), location))
}

fn usage(message: String) -> PyErr {
    to_py(Error::Usage(message))
}

/// A failure that is a bug or of the machine, not of the input (kind `internal`).
fn internal(message: String) -> PyErr {
    BellgapError::new_err(("internal", message, None::<String>))
}

/// Runs `work` on worker threads of its own; waits with the GIL released, checking for signals.
/// On a signal (Ctrl-C) the computation is asked to stop and winds down within an iteration.
fn interruptible<T: Send + 'static>(
    py: Python<'_>,
    work: impl FnOnce() -> bellgap::Result<T> + Send + 'static,
) -> PyResult<T> {
    let (tx, rx) = mpsc::channel();
    let stop = StopSignal::new();
    let stop_worker = stop.clone();
    std::thread::Builder::new()
        .name("bellgap".into())
        .spawn(move || {
            let outcome = run_stoppable(&stop_worker, || {
                std::panic::catch_unwind(AssertUnwindSafe(work))
            });
            let _ = tx.send(outcome);
        })
        .map_err(|e| internal(format!("cannot start a worker thread: {e}")))?;
    // The receiver is not Sync, so it moves into each wait and back out.
    let mut rx = rx;
    loop {
        let (got, back) = py.detach(move || {
            let got = rx.recv_timeout(Duration::from_millis(100));
            (got, rx)
        });
        rx = back;
        match got {
            Ok(Ok(Ok(result))) => return result.map_err(to_py),
            Ok(Err(message)) => return Err(internal(message)),
            Ok(Ok(Err(_))) => {
                return Err(internal(
                    "internal error (a bug; please report it): the computation panicked".into(),
                ))
            }
            Err(mpsc::RecvTimeoutError::Timeout) => {
                if let Err(interrupt) = py.check_signals() {
                    stop.raise();
                    return Err(interrupt);
                }
            }
            Err(mpsc::RecvTimeoutError::Disconnected) => {
                return Err(internal("the worker thread stopped".into()))
            }
        }
    }
}

/// A loaded, validated game.
#[pyclass(name = "Game", module = "bellgap._bellgap", frozen)]
struct PyGame {
    game: Arc<Game>,
}

#[pymethods]
impl PyGame {
    /// The game's name.
    #[getter]
    fn name(&self) -> String {
        self.game.name.clone()
    }
    /// Where it came from (a path, `<string>`, or `family NAME`).
    #[getter]
    fn source(&self) -> String {
        self.game.source.clone()
    }
    /// Warnings found while loading (e.g. a score that never changes).
    #[getter]
    fn warnings(&self) -> Vec<String> {
        self.game.warnings.clone()
    }
    /// (name, questions, answers) of each player.
    #[getter]
    fn players(&self) -> Vec<(String, usize, usize)> {
        self.game
            .scenario
            .parties()
            .iter()
            .map(|p| (p.name.clone(), p.questions(), p.answers()))
            .collect()
    }
    /// The flat table every bound reads: question weights w(q), scores V(a|q) (row-major, one
    /// row of joint answers per joint question, first player most significant), the offset,
    /// and the questions and answers per player.
    fn table(&self) -> (Vec<f64>, Vec<f64>, f64, Vec<usize>, Vec<usize>) {
        let s = &self.game.scenario;
        (
            s.weights().to_vec(),
            s.scores().to_vec(),
            s.offset(),
            s.question_radices(),
            s.answer_radices(),
        )
    }
    fn __repr__(&self) -> String {
        let players: Vec<String> = self
            .players()
            .iter()
            .map(|(n, q, a)| format!("{n} {q}×{a}"))
            .collect();
        format!(
            "Game({:?}, {}, from {})",
            self.game.name,
            players.join(", "),
            self.game.source.escape_debug()
        )
    }
}

/// Loads a game file.
#[pyfunction]
fn load_file(py: Python<'_>, path: String) -> PyResult<PyGame> {
    let game = interruptible(py, move || {
        Game::from_file(&path, CompileOptions::default())
    })?;
    Ok(PyGame {
        game: Arc::new(game),
    })
}

/// Loads a game from YAML text (JSON text is YAML too); errors name `file` as the source.
#[pyfunction]
#[pyo3(signature = (text, file = "<string>".to_string()))]
fn load_yaml(py: Python<'_>, text: String, file: String) -> PyResult<PyGame> {
    let game = interruptible(py, move || {
        Game::from_yaml(&text, &file, CompileOptions::default())
    })?;
    Ok(PyGame {
        game: Arc::new(game),
    })
}

#[derive(Deserialize, Default)]
#[serde(deny_unknown_fields)]
struct FamilyArgs {
    #[serde(default)]
    n: Option<usize>,
    #[serde(default)]
    d: Option<usize>,
    #[serde(default)]
    m: Option<usize>,
    #[serde(default)]
    players: Option<usize>,
    #[serde(default)]
    signs: Option<String>,
    #[serde(default)]
    alpha: Option<f64>,
    #[serde(default)]
    beta: Option<f64>,
}

/// One of the standard games by name, with its parameter (`n`, `d`, `m`, `players`, `signs`).
#[pyfunction]
fn family(name: &str, args: &str) -> PyResult<PyGame> {
    let a: FamilyArgs = options(args)?;
    let need = |v: Option<usize>, what: &str| {
        v.ok_or_else(|| usage(format!("the family `{name}` needs the parameter `{what}`")))
    };
    let family = match name {
        "chsh" => Family::Chsh,
        "chsh-expression" => Family::ChshExpression,
        "xor" => Family::Xor {
            signs: families::parse_sign_table(
                a.signs
                    .as_deref()
                    .ok_or_else(|| usage("the family `xor` needs `signs`".into()))?,
            )
            .map_err(to_py)?,
        },
        "odd-cycle" => Family::OddCycle { n: need(a.n, "n")? },
        "magic-square" => Family::MagicSquare,
        "ghz" => Family::Ghz {
            players: need(a.players, "players")?,
        },
        "cglmp" => Family::Cglmp { d: need(a.d, "d")? },
        "i3322" => Family::I3322,
        "chained" => Family::Chained { m: need(a.m, "m")? },
        "mermin" => Family::Mermin {
            players: a.players.unwrap_or(3),
        },
        "svetlichny" => Family::Svetlichny {
            players: a.players.unwrap_or(3),
        },
        "chsh-mod" => Family::ChshMod { d: need(a.d, "d")? },
        "tilted-chsh" => Family::TiltedChsh {
            alpha: a.alpha.unwrap_or(1.0),
            beta: a.beta.unwrap_or(0.5),
        },
        other => {
            return Err(usage(format!(
                "no family `{other}` (known: chsh, chsh-expression, xor, odd-cycle, magic-square, ghz, cglmp, i3322, chained, mermin, svetlichny, chsh-mod, tilted-chsh)"
            )))
        }
    };
    let spec = family.spec().map_err(to_py)?;
    let game = Game::from_spec(&spec, &format!("family {name}")).map_err(to_py)?;
    Ok(PyGame {
        game: Arc::new(game),
    })
}

/// Keyword arguments (a JSON object) into an options struct; unknown names are refused.
fn options<T: for<'de> Deserialize<'de>>(json: &str) -> PyResult<T> {
    serde_json::from_str(json).map_err(|e| usage(format!("bad keyword argument: {e}")))
}

fn backend(name: &str) -> PyResult<Backend> {
    match name {
        "auto" => Ok(Backend::Auto),
        "ipm" => Ok(Backend::MomentIpm),
        "clarabel" => Ok(Backend::Clarabel),
        "first-order" => Ok(Backend::FirstOrder),
        other => Err(usage(format!(
            "solver must be auto, ipm, clarabel or first-order, got `{other}`"
        ))),
    }
}

fn symmetry(name: &str) -> PyResult<SymmetryChoice> {
    match name {
        "auto" => Ok(SymmetryChoice::Auto),
        "off" => Ok(SymmetryChoice::Off),
        other => Err(usage(format!(
            "symmetry must be auto or off, got `{other}`"
        ))),
    }
}

fn first_order(budget: Option<f64>) -> PyResult<FirstOrderOptions> {
    let mut o = FirstOrderOptions::default();
    if let Some(seconds) = budget {
        if !(seconds.is_finite() && seconds > 0.0) {
            return Err(usage(format!(
                "budget must be a positive number of seconds, got {seconds}"
            )));
        }
        o.max_seconds = seconds;
    }
    Ok(o)
}

fn limits(force: bool) -> Limits {
    Limits { force }
}

fn default_solver() -> String {
    "auto".into()
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct SolveArgs {
    #[serde(default)]
    level: Option<String>,
    #[serde(default = "default_solver")]
    solver: String,
    #[serde(default = "default_solver")]
    symmetry: String,
    #[serde(default)]
    budget: Option<f64>,
    #[serde(default)]
    force: bool,
    #[serde(default = "default_solver")]
    method: String,
    #[serde(default)]
    dims: Option<Vec<usize>>,
    #[serde(default = "default_restarts")]
    restarts: usize,
    #[serde(default = "default_seed")]
    seed: u64,
    #[serde(default)]
    certificate: bool,
    #[serde(default)]
    no_classical: bool,
    #[serde(default)]
    skip: Vec<String>,
}

/// The command line's default (`seesaw --restarts`).
fn default_restarts() -> usize {
    10
}
fn default_seed() -> u64 {
    1
}

/// What a command returns: the command line's JSON, and for `seesaw` the strategy.
fn reply(value: Value, extra: Option<Value>) -> String {
    json!({"result": value, "extra": extra}).to_string()
}

fn strategy_json(st: &QuantumStrategy) -> Value {
    let c = |z: &num_complex::Complex64| json!([z.re, z.im]);
    let matrix = |m: &CMatrix| -> Value {
        Value::Array(
            (0..m.nrows())
                .map(|r| Value::Array((0..m.ncols()).map(|k| c(&m[(r, k)])).collect()))
                .collect(),
        )
    };
    json!({
        "dims": st.dims,
        "state": st.state.iter().map(c).collect::<Vec<_>>(),
        "measurements": st.measurements.iter().map(|player| {
            player.iter().map(|question| question.iter().map(matrix).collect::<Vec<_>>()).collect::<Vec<_>>()
        }).collect::<Vec<_>>(),
    })
}

/// A complex matrix as rows of (re, im) pairs.
type PairMatrix = Vec<Vec<[f64; 2]>>;

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct StrategyInput {
    dims: Vec<usize>,
    state: Vec<[f64; 2]>,
    /// `measurements[player][question][answer]`.
    measurements: Vec<Vec<Vec<PairMatrix>>>,
}

/// A strategy given from Python (state and measurements as complex arrays), checked like a
/// strategy file.
fn strategy_from(input: StrategyInput, game: &Game) -> bellgap::Result<QuantumStrategy> {
    let bad = |m: String| Error::Input {
        location: bellgap::Location {
            file: "<strategy>".into(),
            field: Some("strategy".into()),
            ..Default::default()
        },
        message: m,
    };
    let z = |p: &[f64; 2]| num_complex::Complex64::new(p[0], p[1]);
    if input.dims.len() != game.scenario.players() || input.measurements.len() != input.dims.len() {
        return Err(bad(format!(
            "the strategy has {} dimensions and measurements for {} players; the game has {}",
            input.dims.len(),
            input.measurements.len(),
            game.scenario.players()
        )));
    }
    let Some(total) = bellgap::model::strategy::joint_dimension(&input.dims) else {
        return Err(bad(format!(
            "the joint dimension of {:?} is above the limit of {}",
            input.dims,
            bellgap::model::strategy::MAX_JOINT_DIMENSION
        )));
    };
    if input.state.len() != total {
        return Err(bad(format!(
            "the state has {} amplitudes, the dimensions {:?} need {total}",
            input.state.len(),
            input.dims
        )));
    }
    let mut measurements = Vec::new();
    for (p, player) in input.measurements.iter().enumerate() {
        let d = *input
            .dims
            .get(p)
            .ok_or_else(|| bad(format!("no dimension for player {p}")))?;
        let mut questions = Vec::new();
        for question in player {
            let mut answers = Vec::new();
            for m in question {
                if m.len() != d || m.iter().any(|row| row.len() != d) {
                    return Err(bad(format!(
                        "player {p}'s measurement operators must be {d}×{d}"
                    )));
                }
                answers.push(CMatrix::from_fn(d, d, |r, k| z(&m[r][k])));
            }
            questions.push(answers);
        }
        measurements.push(questions);
    }
    let st = QuantumStrategy {
        dims: input.dims,
        state: CVector::from_iterator(total, input.state.iter().map(z)),
        measurements,
    };
    st.check_located(&game.scenario)
        .map_err(|(field, message)| Error::Input {
            location: bellgap::Location {
                file: "<strategy>".into(),
                field: Some(field),
                ..Default::default()
            },
            message,
        })?;
    Ok(st)
}

/// Runs one game command: `check`, `classical`, `nosignal`, `bounds`, `npa`, `seesaw`,
/// `evaluate` (the strategy in `strategy`, a JSON object).
#[pyfunction]
#[pyo3(signature = (command, game, args, strategy = None))]
fn run_game(
    py: Python<'_>,
    command: String,
    game: &PyGame,
    args: &str,
    strategy: Option<String>,
) -> PyResult<String> {
    let a: SolveArgs = options(args)?;
    let game = game.game.clone();
    let backend = backend(&a.solver)?;
    let symmetry = symmetry(&a.symmetry)?;
    let first_order = first_order(a.budget)?;
    let limits = limits(a.force);
    let method = match a.method.as_str() {
        "auto" => Choice::Auto,
        "search" => Choice::Search,
        "milp" => Choice::Milp,
        other => {
            return Err(usage(format!(
                "method must be auto, search or milp, got `{other}`"
            )))
        }
    };
    let level = a.level.clone();
    let strategy: Option<StrategyInput> = strategy.map(|s| options(&s)).transpose()?;
    interruptible(py, move || {
        let g = &*game;
        match command.as_str() {
            "check" => Ok(reply(to_value(&pipeline::check(g)), None)),
            "classical" => {
                let o = ClassicalOptions { method, limits };
                Ok(reply(to_value(&pipeline::classical(g, &o, &Silent)?), None))
            }
            "nosignal" => Ok(reply(to_value(&pipeline::nosignal(g, &limits)?), None)),
            "bounds" => {
                let skip = a
                    .skip
                    .iter()
                    .map(|name| {
                        BoundKind::ALL
                            .into_iter()
                            .find(|k| k.name() == name)
                            .ok_or_else(|| {
                                Error::Usage(format!(
                                    "skip: unknown bound `{name}` (classical, no-signalling, npa or seesaw)"
                                ))
                            })
                    })
                    .collect::<bellgap::Result<Vec<_>>>()?;
                let o = BoundsOptions {
                    npa_level: level.as_deref().map(Level::parse).transpose()?,
                    backend,
                    symmetry,
                    first_order,
                    limits,
                    seesaw: SeesawOptions {
                        dims: a.dims.clone().unwrap_or_default(),
                        restarts: a.restarts,
                        seed: a.seed,
                        limits,
                        ..Default::default()
                    },
                    skip,
                    budget: a.budget,
                };
                Ok(reply(to_value(&pipeline::bounds(g, &o, &Silent)?), None))
            }
            "npa" => {
                // The command line's default level.
                let text = level.unwrap_or_else(|| "1+joint".into());
                let levels = text
                    .split(';')
                    .filter(|l| !l.trim().is_empty())
                    .map(Level::parse)
                    .collect::<bellgap::Result<Vec<_>>>()?;
                if levels.is_empty() {
                    return Err(Error::Usage("no NPA level given".into()));
                }
                let o = NpaLevelsOptions {
                    levels,
                    backend,
                    symmetry,
                    first_order,
                    limits,
                };
                let r = pipeline::npa_levels(g, &o, &Silent)?;
                let certificate = if a.certificate {
                    r.npa
                        .as_ref()
                        .and_then(|b| {
                            bellgap::bounds::quantum::npa::certificate(&g.name, &g.scenario, b)
                        })
                        .map(|c| serde_json::from_str::<Value>(&c.to_json()).unwrap_or(Value::Null))
                } else {
                    None
                };
                Ok(reply(to_value(&r), certificate))
            }
            "seesaw" => {
                let o = SeesawOptions {
                    dims: a.dims.clone().unwrap_or_default(),
                    restarts: a.restarts,
                    seed: a.seed,
                    limits,
                    ..Default::default()
                };
                let r = pipeline::seesaw(g, &o, &Silent)?;
                let extra = r.seesaw.as_ref().map(|f| strategy_json(&f.strategy));
                Ok(reply(to_value(&r), extra))
            }
            "evaluate" => {
                let input =
                    strategy.ok_or_else(|| Error::Usage("evaluate needs a strategy".into()))?;
                let st = strategy_from(input, g)?;
                let o = EvaluateOptions {
                    skip_classical: a.no_classical,
                    limits,
                    noise: None,
                };
                Ok(reply(
                    to_value(&pipeline::evaluate(g, &st, &o, &Silent)?),
                    None,
                ))
            }
            other => Err(Error::Usage(format!("no game command `{other}`"))),
        }
    })
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct FigureArgs {
    // margin
    #[serde(default)]
    rounds: Option<u64>,
    #[serde(default)]
    wins: Option<u64>,
    #[serde(default)]
    score_sum: Option<f64>,
    #[serde(default)]
    score_range: Option<(f64, f64)>,
    #[serde(default)]
    alpha: Option<f64>,
    #[serde(default)]
    target_p_value: Option<f64>,
    #[serde(default)]
    expected: Option<f64>,
    // randomness, entropy, finite size
    #[serde(default)]
    score: Option<f64>,
    #[serde(default)]
    scores: Option<Vec<f64>>,
    #[serde(default)]
    player: Option<String>,
    #[serde(default)]
    question: Option<i64>,
    #[serde(default)]
    with_player: Option<String>,
    #[serde(default)]
    with_question: Option<i64>,
    #[serde(default)]
    level: Option<String>,
    #[serde(default)]
    nodes: Option<usize>,
    #[serde(default)]
    adversary_words: Option<String>,
    #[serde(default)]
    entropy_symmetry: Option<String>,
    #[serde(default)]
    moments: Option<String>,
    #[serde(default)]
    solver: Option<String>,
    #[serde(default)]
    error_rate: Option<f64>,
    #[serde(default)]
    noisy_preprocessing: Option<f64>,
    #[serde(default)]
    key_with: Option<String>,
    #[serde(default)]
    key_question: Option<i64>,
    /// A correlations file's text and its name (entropy given a behaviour).
    #[serde(default)]
    behaviour_text: Option<String>,
    #[serde(default)]
    behaviour_name: Option<String>,
    /// A counts file's text and its name (margin and entropy given a lab's counts).
    #[serde(default)]
    counts_text: Option<String>,
    #[serde(default)]
    counts_name: Option<String>,
    // finite size
    #[serde(default)]
    testing: Option<f64>,
    #[serde(default)]
    threshold: Option<f64>,
    #[serde(default)]
    smoothing: Option<f64>,
    #[serde(default)]
    pass_floor: Option<f64>,
    #[serde(default)]
    extractor_error: Option<f64>,
    #[serde(default)]
    fraction: Option<f64>,
    #[serde(default)]
    key_disclosed_bits: Option<f64>,
    #[serde(default)]
    key_error_rate: Option<f64>,
    #[serde(default)]
    ec_efficiency: Option<f64>,
    #[serde(default)]
    verification_error: Option<f64>,
    #[serde(default)]
    correction_failure: Option<f64>,
    #[serde(default)]
    statement: Option<String>,
    #[serde(default)]
    max_test_rounds: Option<u64>,
    #[serde(default)]
    tangent: Option<f64>,
    #[serde(default)]
    tangent_points: Option<usize>,
    /// Randomness: also prove each bound in exact rationals.
    #[serde(default)]
    exact: bool,
    #[serde(default)]
    force: bool,
}

fn hierarchy(a: &FigureArgs) -> PyResult<EntropyOptions> {
    let mut o = EntropyOptions::default();
    if let Some(n) = a.nodes {
        o.nodes = n;
    }
    o.level = a
        .level
        .as_deref()
        .map(Level::parse)
        .transpose()
        .map_err(to_py)?;
    if let Some(w) = &a.adversary_words {
        o.adversary = match w.as_str() {
            "letters" => AdversaryWords::Letters,
            "with-projectors" => AdversaryWords::WithProjectors,
            "with-player-words" => AdversaryWords::WithPlayerWords,
            "with-pairs" => AdversaryWords::WithPairs,
            other => return Err(usage(format!("unknown adversary_words `{other}`"))),
        };
    }
    if let Some(m) = &a.moments {
        o.field = match m.as_str() {
            "real" => MomentField::Real,
            "complex" => MomentField::Complex,
            other => {
                return Err(usage(format!(
                    "moments must be real or complex, got `{other}`"
                )))
            }
        };
    }
    if let Some(s) = &a.solver {
        o.backend = match s.as_str() {
            "auto" => Backend::Auto,
            "ipm" => Backend::MomentIpm,
            "clarabel" => Backend::Clarabel,
            other => {
                return Err(usage(format!(
                    "solver must be auto, ipm or clarabel, got `{other}`"
                )))
            }
        };
    }
    o.preprocessing = Preprocessing::noisy_if(a.noisy_preprocessing);
    if let Some(name) = &a.entropy_symmetry {
        o.symmetry = symmetry(name)?;
    }
    o.limits = limits(a.force);
    Ok(o)
}

fn scores_of(a: &FigureArgs) -> PyResult<Vec<f64>> {
    match (a.score, &a.scores) {
        (Some(s), None) => Ok(vec![s]),
        (None, Some(v)) if !v.is_empty() => Ok(v.clone()),
        _ => Err(usage("give score (one number) or scores (a list)".into())),
    }
}

/// Runs one figure command on a game: `margin`, `randomness`, `entropy`, `finite_size`
/// (`entropy` may be given a strategy, as JSON like `run_game`'s).
#[pyfunction]
#[pyo3(signature = (command, game, args, strategy=None))]
fn run_figure(
    py: Python<'_>,
    command: String,
    game: &PyGame,
    args: &str,
    strategy: Option<String>,
) -> PyResult<String> {
    let a: FigureArgs = options(args)?;
    let strategy: Option<StrategyInput> = strategy.map(|s| options(&s)).transpose()?;
    if strategy.is_some() && command != "entropy" {
        return Err(usage(format!("{command} takes no strategy")));
    }
    let game = game.game.clone();
    let target = TargetChoice {
        player: a.player.clone(),
        question: a.question,
    };
    let with = a.with_player.clone().map(|p| TargetChoice {
        player: Some(p),
        question: a.with_question,
    });
    let hierarchy = hierarchy(&a)?;
    match command.as_str() {
        "margin" => {
            let run = match &a.counts_text {
                Some(text) => {
                    if a.rounds.is_some() || a.wins.is_some() || a.score_sum.is_some() {
                        return Err(usage(
                            "give counts, or rounds with wins or a score sum, not both".into(),
                        ));
                    }
                    let name = a.counts_name.as_deref().unwrap_or("<string>");
                    RunData::Counts(Counts::from_yaml(text, name).map_err(to_py)?)
                }
                None => RunData::Summary(ObservedRun {
                    rounds: a
                        .rounds
                        .ok_or_else(|| usage("margin needs rounds (or counts)".into()))?,
                    wins: a.wins,
                    score_sum: a.score_sum,
                    score_range: a.score_range,
                }),
            };
            let defaults = MarginOptions::default();
            let o = MarginOptions {
                alpha: a.alpha.unwrap_or(defaults.alpha),
                target_p_value: a.target_p_value.unwrap_or(defaults.target_p_value),
                expected: a.expected,
                classical: ClassicalOptions {
                    limits: limits(a.force),
                    ..Default::default()
                },
            };
            interruptible(py, move || {
                Ok(reply(
                    to_value(&pipeline::margin(&game, &run, &o, &Silent)?),
                    None,
                ))
            })
        }
        "randomness" => {
            let from_counts = match &a.counts_text {
                Some(text) => {
                    if a.score.is_some() || a.scores.is_some() {
                        return Err(usage("give scores or counts, not both".into()));
                    }
                    let name = a.counts_name.as_deref().unwrap_or("<string>");
                    Some((
                        Counts::from_yaml(text, name).map_err(to_py)?,
                        a.alpha.unwrap_or(1e-6),
                    ))
                }
                None => None,
            };
            let o = RandomnessOptions {
                guessed: target,
                with,
                scores: if from_counts.is_some() {
                    Vec::new()
                } else {
                    scores_of(&a)?
                },
                level: Level::parse(a.level.as_deref().unwrap_or("2")).map_err(to_py)?,
                from_counts,
                limits: limits(a.force),
                exact: a.exact,
            };
            interruptible(py, move || {
                Ok(reply(
                    to_value(&pipeline::randomness(&game, &o, &Silent)?),
                    None,
                ))
            })
        }
        "entropy" => {
            let fixed = a.behaviour_text.is_some() || strategy.is_some() || a.counts_text.is_some();
            if fixed && (a.score.is_some() || a.scores.is_some()) {
                return Err(usage(
                    "give a score (or scores), a behaviour, a strategy or counts, not two of them"
                        .into(),
                ));
            }
            let has_strategy = strategy.is_some();
            let given = match (&a.behaviour_text, strategy) {
                _ if a.counts_text.is_some() && (a.behaviour_text.is_some() || has_strategy) => {
                    return Err(usage(
                        "give a behaviour, a strategy or counts, not two of them".into(),
                    ))
                }
                (Some(_), Some(_)) => {
                    return Err(usage("give a behaviour or a strategy, not both".into()))
                }
                (None, None) if a.counts_text.is_some() => {
                    let text = a.counts_text.as_deref().unwrap_or_default();
                    let name = a.counts_name.as_deref().unwrap_or("<string>");
                    EntropyGiven::Counts {
                        counts: Counts::from_yaml(text, name).map_err(to_py)?,
                        error: a.alpha.unwrap_or(1e-6),
                    }
                }
                (Some(text), None) => {
                    let name = a.behaviour_name.as_deref().unwrap_or("<string>");
                    EntropyGiven::Behaviour(
                        bellgap::Correlations::from_yaml(text, name).map_err(to_py)?,
                    )
                }
                (None, Some(input)) => EntropyGiven::Strategy {
                    strategy: strategy_from(input, &game).map_err(to_py)?,
                    name: "<strategy>".into(),
                },
                (None, None) => EntropyGiven::Scores(scores_of(&a)?),
            };
            let key = match (&a.key_with, a.error_rate) {
                (Some(_), Some(_)) => {
                    return Err(usage("give key_with or error_rate, not both".into()))
                }
                (Some(p), None) => Some(ErrorCorrection::KeyPair(TargetChoice {
                    player: Some(p.clone()),
                    question: a.key_question,
                })),
                (None, rate) => rate.map(ErrorCorrection::ErrorRate),
            };
            let o = EntropyCommandOptions {
                target,
                with,
                given,
                key,
                hierarchy,
            };
            interruptible(py, move || {
                Ok(reply(
                    to_value(&pipeline::entropy(&game, &o, &Silent)?),
                    None,
                ))
            })
        }
        "finite_size" => {
            let defaults = FiniteSizeOptions::default();
            let security = SecurityParameters::default();
            let o = FiniteSizeOptions {
                target,
                with,
                rounds: a
                    .rounds
                    .ok_or_else(|| usage("finite_size needs rounds".into()))?,
                testing: a
                    .testing
                    .ok_or_else(|| usage("finite_size needs testing".into()))?,
                threshold: a
                    .threshold
                    .ok_or_else(|| usage("finite_size needs threshold".into()))?,
                security: SecurityParameters {
                    smoothing: a.smoothing.unwrap_or(security.smoothing),
                    pass_floor: a.pass_floor.unwrap_or(security.pass_floor),
                    extraction: a.extractor_error.unwrap_or(security.extraction),
                    statement: match &a.statement {
                        Some(name) => Statement::parse(name).map_err(to_py)?,
                        None => security.statement,
                    },
                },
                expected: a.expected,
                fraction: a.fraction.unwrap_or(defaults.fraction),
                key: {
                    let parts = KeyParts {
                        disclosed_bits: a.key_disclosed_bits,
                        error_rate: a.key_error_rate,
                        efficiency: a.ec_efficiency,
                        verification_error: a.verification_error,
                        correction_failure: a.correction_failure,
                        max_test_rounds: a.max_test_rounds,
                    };
                    let key = KeyDisclosure::from_parts(parts).map_err(to_py)?;
                    if key.is_none() && parts != KeyParts::default() {
                        return Err(usage(
                            "the key options need key_disclosed_bits or key_error_rate".into(),
                        ));
                    }
                    key
                },
                tangent: match a.tangent {
                    Some(s) => Tangent::At(s),
                    None => Tangent::Search(
                        a.tangent_points.unwrap_or(pipeline::DEFAULT_TANGENT_POINTS),
                    ),
                },
                hierarchy,
            };
            interruptible(py, move || {
                Ok(reply(
                    to_value(&pipeline::finite_size(&game, &o, &Silent)?),
                    None,
                ))
            })
        }
        other => Err(usage(format!("no figure command `{other}`"))),
    }
}

/// Keyword arguments of `design` and `self_test`.
#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct DesignArgs {
    #[serde(default)]
    figure: Option<String>,
    #[serde(default)]
    efficiency: Option<Vec<f64>>,
    #[serde(default)]
    visibility: Option<f64>,
    #[serde(default)]
    dark_counts: Option<f64>,
    /// `best`, or an answer label used by every player.
    #[serde(default)]
    no_click: Option<Value>,
    #[serde(default)]
    state: Option<String>,
    #[serde(default)]
    threshold: Option<String>,
    #[serde(default)]
    tolerance: Option<f64>,
    #[serde(default)]
    curve_points: Option<usize>,
    #[serde(default)]
    player: Option<String>,
    #[serde(default)]
    question: Option<i64>,
    #[serde(default)]
    key_with: Option<String>,
    #[serde(default)]
    key_question: Option<i64>,
    #[serde(default)]
    noisy_preprocessing: Option<f64>,
    #[serde(default)]
    nodes: Option<usize>,
    #[serde(default)]
    dims: Option<Vec<usize>>,
    #[serde(default)]
    restarts: Option<usize>,
    #[serde(default)]
    seed: Option<u64>,
    // self_test
    #[serde(default)]
    score: Option<f64>,
    #[serde(default)]
    target: Option<Vec<f64>>,
    #[serde(default)]
    questions: Option<Vec<i64>>,
    #[serde(default)]
    level: Option<String>,
    #[serde(default)]
    behaviour_text: Option<String>,
    #[serde(default)]
    behaviour_name: Option<String>,
    #[serde(default)]
    counts_text: Option<String>,
    #[serde(default)]
    counts_name: Option<String>,
    #[serde(default)]
    alpha: Option<f64>,
    #[serde(default)]
    force: bool,
}

/// `design` and `self_test`: the best implementation under noise (and thresholds), and the
/// verified fidelity bound; the implementation's strategy comes back as the reply's extra.
#[pyfunction]
#[pyo3(signature = (command, game, args, strategy=None))]
fn run_design(
    py: Python<'_>,
    command: String,
    game: &PyGame,
    args: &str,
    strategy: Option<String>,
) -> PyResult<String> {
    use bellgap::bounds::quantum::design::{
        DesignOptions, NoiseParameter, StateChoice, ThresholdOptions,
    };
    use bellgap::model::noise::{NoClick, NoiseModel};
    let a: DesignArgs = options(args)?;
    let strategy: Option<StrategyInput> = strategy.map(|s| options(&s)).transpose()?;
    let game = game.game.clone();
    let limits = Limits {
        force: a.force,
        ..Default::default()
    };
    let seesaw = SeesawOptions {
        dims: a.dims.clone().unwrap_or_default(),
        restarts: a
            .restarts
            .unwrap_or(bellgap::bounds::quantum::seesaw::DEFAULT_RESTARTS),
        seed: a.seed.unwrap_or(1),
        limits,
        ..Default::default()
    };
    match command.as_str() {
        "design" => {
            let figure = match a.figure.as_deref().unwrap_or("margin") {
                "margin" => pipeline::DesignFigure::Margin,
                "min-entropy" => pipeline::DesignFigure::MinEntropy,
                "entropy" => pipeline::DesignFigure::Entropy,
                "key-rate" => pipeline::DesignFigure::KeyRate,
                other => {
                    return Err(usage(format!(
                        "figure must be margin, min-entropy, entropy or key-rate, got `{other}`"
                    )))
                }
            };
            let state = match a.state.as_deref().unwrap_or("optimised") {
                "optimised" => StateChoice::Optimised,
                "maximally-entangled" => StateChoice::MaximallyEntangled,
                other => {
                    return Err(usage(format!(
                        "state must be optimised or maximally-entangled, got `{other}`"
                    )))
                }
            };
            let no_click = match &a.no_click {
                None => NoClick::Best,
                Some(Value::String(t)) if t == "best" => NoClick::Best,
                Some(Value::String(t)) if t == "extra" => NoClick::Extra,
                Some(Value::Number(n)) => {
                    let label = n
                        .as_i64()
                        .ok_or_else(|| usage(format!("no_click: `{n}` is not an answer label")))?;
                    NoClick::from_label(&game.scenario, label)
                        .map_err(|m| usage(format!("no_click: {m}")))?
                }
                Some(other) => {
                    return Err(usage(format!(
                        "no_click must be \"best\", \"extra\" or an answer label, got {other}"
                    )))
                }
            };
            let threshold = match a.threshold.as_deref() {
                None => None,
                Some(t) => Some(ThresholdOptions {
                    parameter: match t {
                        "efficiency" => NoiseParameter::Efficiency,
                        "visibility" => NoiseParameter::Visibility,
                        other => {
                            return Err(usage(format!(
                                "threshold must be efficiency or visibility, got `{other}`"
                            )))
                        }
                    },
                    tolerance: a.tolerance.unwrap_or(1e-3),
                    curve_points: a.curve_points.unwrap_or(10),
                }),
            };
            let mut entropy = EntropyOptions {
                preprocessing: Preprocessing::noisy_if(a.noisy_preprocessing),
                limits,
                ..Default::default()
            };
            if let Some(n) = a.nodes {
                entropy.nodes = n;
            }
            let request = pipeline::DesignRequest {
                figure,
                design: DesignOptions {
                    seesaw,
                    noise: NoiseModel {
                        visibility: a.visibility.unwrap_or(1.0),
                        efficiency: a.efficiency.clone().unwrap_or_default(),
                        dark_counts: a.dark_counts.unwrap_or(0.0),
                        no_click,
                    },
                    state,
                },
                threshold,
                key: TargetChoice {
                    player: a.player.clone(),
                    question: a.question,
                },
                partner: a.key_with.clone().map(|p| TargetChoice {
                    player: Some(p),
                    question: a.key_question,
                }),
                randomness_level: a
                    .level
                    .as_deref()
                    .map(Level::parse)
                    .transpose()
                    .map_err(to_py)?,
                entropy,
                tangents: pipeline::DEFAULT_TANGENTS,
            };
            interruptible(py, move || {
                let r = pipeline::design(&game, &request, &Silent)?;
                let extra = strategy_json(&r.implementation.strategy);
                Ok(reply(to_value(&r), Some(extra)))
            })
        }
        "self-test" => {
            let given = match (a.score, &a.behaviour_text, &a.counts_text) {
                (Some(v), None, None) => pipeline::SelfTestGiven::Score(v),
                (None, Some(text), None) => pipeline::SelfTestGiven::Behaviour(
                    bellgap::Correlations::from_yaml(
                        text,
                        a.behaviour_name.as_deref().unwrap_or("<string>"),
                    )
                    .map_err(to_py)?,
                ),
                (None, None, Some(text)) => pipeline::SelfTestGiven::Counts(
                    Counts::from_yaml(text, a.counts_name.as_deref().unwrap_or("<string>"))
                        .map_err(to_py)?,
                    a.alpha.unwrap_or(1e-6),
                ),
                _ => {
                    return Err(usage(
                        "self_test needs one of score, behaviour or counts".into(),
                    ))
                }
            };
            let level = a
                .level
                .as_deref()
                .map(Level::parse)
                .transpose()
                .map_err(to_py)?;
            interruptible(py, move || {
                let target = match (a.target, strategy) {
                    (Some(_), Some(_)) => {
                        return Err(Error::Usage("give a target or a strategy, not both".into()))
                    }
                    (Some(t), None) => pipeline::SelfTestTarget::Amplitudes(t),
                    (None, Some(input)) => pipeline::SelfTestTarget::Strategy(
                        strategy_from(input, &game)?,
                        "<strategy>".into(),
                    ),
                    (None, None) => pipeline::SelfTestTarget::Seesaw(SeesawOptions {
                        dims: if seesaw.dims.is_empty() {
                            vec![2; game.scenario.players()]
                        } else {
                            seesaw.dims.clone()
                        },
                        ..seesaw
                    }),
                };
                let r = pipeline::self_test(
                    &game,
                    &pipeline::SelfTestRequest {
                        given,
                        target,
                        questions: a.questions,
                        level,
                    },
                    &Silent,
                )?;
                Ok(reply(to_value(&r), None))
            })
        }
        other => Err(usage(format!("no design command `{other}`"))),
    }
}

/// `key`: CHSH-based DIQKD figures.
#[pyfunction]
#[pyo3(signature = (chsh, qber, noisy_preprocessing=None))]
fn key(py: Python<'_>, chsh: f64, qber: f64, noisy_preprocessing: Option<f64>) -> PyResult<String> {
    let options = pipeline::KeyOptions {
        chsh,
        qber,
        preprocessing: Preprocessing::noisy_if(noisy_preprocessing),
    };
    interruptible(py, move || {
        Ok(reply(to_value(&pipeline::key(&options)?), None))
    })
}

/// `review`: the review of a protocol file, as JSON.
#[pyfunction]
fn review(py: Python<'_>, protocol: String) -> PyResult<String> {
    interruptible(py, move || {
        let file = ProtocolFile::from_file(&protocol)?;
        let game = Game::from_file(&file.game_path.to_string_lossy(), CompileOptions::default())?;
        let r = pipeline::review(&file, &game, &Silent)?;
        Ok(reply(to_value(&r), None))
    })
}

/// `local`: whether correlations (YAML text of a correlations file; `file` names it in errors)
/// have a local model.
#[pyfunction]
#[pyo3(signature = (text, file = "<string>".to_string(), force = false))]
fn locality(py: Python<'_>, text: String, file: String, force: bool) -> PyResult<String> {
    interruptible(py, move || {
        let c = bellgap::Correlations::from_yaml(&text, &file)?;
        let r = pipeline::local(&c, &limits(force))?;
        Ok(reply(
            to_value(&bellgap::render::json::LocalView::of(&r, None)),
            None,
        ))
    })
}

/// The library's version.
#[pyfunction]
fn version() -> &'static str {
    env!("CARGO_PKG_VERSION")
}

#[pymodule]
fn _bellgap(m: &Bound<'_, PyModule>) -> PyResult<()> {
    m.add_class::<PyGame>()?;
    m.add_function(wrap_pyfunction!(load_file, m)?)?;
    m.add_function(wrap_pyfunction!(load_yaml, m)?)?;
    m.add_function(wrap_pyfunction!(family, m)?)?;
    m.add_function(wrap_pyfunction!(run_game, m)?)?;
    m.add_function(wrap_pyfunction!(run_figure, m)?)?;
    m.add_function(wrap_pyfunction!(run_design, m)?)?;
    m.add_function(wrap_pyfunction!(key, m)?)?;
    m.add_function(wrap_pyfunction!(review, m)?)?;
    m.add_function(wrap_pyfunction!(locality, m)?)?;
    m.add_function(wrap_pyfunction!(version, m)?)?;
    m.add("BellgapError", m.py().get_type::<BellgapError>())?;
    Ok(())
}
