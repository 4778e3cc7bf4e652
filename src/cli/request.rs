//! The one place where what the user typed becomes a typed request: option strings are parsed
//! (levels, sweeps, score ranges), defaults are applied, and every option lands in the library's
//! options structs. Each conversion has a unit test below.

use std::path::PathBuf;

use bellgap::bounds::classical::{Choice, ClassicalOptions};
use bellgap::bounds::entropy::{AdversaryWords, EntropyOptions, MomentField, Preprocessing};
use bellgap::bounds::quantum::design::{
    DesignOptions, NoiseParameter, StateChoice, ThresholdOptions,
};
use bellgap::bounds::quantum::npa::Level;
use bellgap::bounds::quantum::seesaw::SeesawOptions;
use bellgap::bounds::quantum::symmetric::SymmetryChoice;
use bellgap::formats::game::families::{self, Family};
use bellgap::formats::game::CompileOptions;
use bellgap::formats::strategy_file::StrategyFileOptions;
use bellgap::limits::Limits;
use bellgap::model::noise::{NoClick, NoiseModel};
use bellgap::optim::backend::Backend;
use bellgap::optim::first_order::FirstOrderOptions;
use bellgap::pipeline::{
    BoundKind, BoundsOptions, DesignFigure, DesignRequest, EntropyCommandOptions, EntropyGiven,
    ErrorCorrection, EvaluateOptions, FiniteSizeOptions, KeyDisclosure, KeyOptions, KeyParts,
    MarginOptions, NpaLevelsOptions, RandomnessOptions, Tangent, TargetChoice, DEFAULT_TANGENTS,
};
use bellgap::protocol::accumulation::{SecurityParameters, Statement};
use bellgap::protocol::finite::ObservedRun;
use bellgap::render::tables::TableFormat;
use bellgap::{Error, Result};

use super::args::{
    AdversaryWordsArg, AnswerArgs, BoundArg, Cli, Command, EntropySolverArg, FamilyCommand,
    FigureArg, GameArgs, HierarchyArgs, MethodArg, MomentsArg, NoiseParameterArg, SeesawArgs,
    SolverArg, StateArg, SymmetryArg, TableArg,
};

/// A game file and how to compile it.
#[derive(Debug, Clone, PartialEq)]
pub struct GameInput {
    /// The file.
    pub path: PathBuf,
    /// Table size limit.
    pub compile: CompileOptions,
}

/// Local dimensions of the see-saw, as given.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum DimsChoice {
    /// The default for the game's answer counts.
    Default,
    /// The same dimension for every player.
    Each(usize),
    /// One dimension per player.
    List(Vec<usize>),
}

impl DimsChoice {
    /// The dimensions for a game with `players` players (empty: the see-saw's default).
    pub fn resolve(&self, players: usize) -> Vec<usize> {
        match self {
            DimsChoice::Default => Vec::new(),
            DimsChoice::Each(d) => vec![*d; players],
            DimsChoice::List(ds) => ds.clone(),
        }
    }
}

/// Which document `review` writes.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum DocumentFormat {
    /// One self-contained HTML page.
    Html,
    /// Markdown with the plot embedded.
    Markdown,
}

/// Which family `family` prints.
#[derive(Debug, Clone, PartialEq)]
pub enum FamilyChoice {
    /// A standard family member.
    Standard(Family),
    /// The parallel repetition of a game file.
    Product {
        /// The game repeated.
        game: PathBuf,
        /// Rounds played in parallel.
        rounds: usize,
    },
}

/// One NPA level for a command that solves one relaxation per point (`;` lists are `npa`'s).
fn one_level(text: &str) -> Result<Level> {
    if text.contains(';') {
        return Err(Error::Usage(format!(
            "level `{text}`: this command solves one level; `;` lists of levels are for `npa`"
        )));
    }
    Level::parse(text)
}

/// What `self-test` conditions on, as typed (files are read by the runner).
#[derive(Debug, Clone, PartialEq)]
pub enum SelfTestInput {
    /// A score.
    Score(f64),
    /// A correlations file.
    Behaviour(PathBuf),
    /// A counts file and the confidence region's error.
    Counts(PathBuf, f64),
}

/// Where `self-test` takes its target state from.
#[derive(Debug, Clone, PartialEq)]
pub enum TargetSource {
    /// The state the see-saw's best strategy extracts to.
    Seesaw,
    /// Amplitudes typed on the command line.
    Amplitudes(Vec<f64>),
    /// A strategy file's extracted state.
    Strategy(PathBuf),
}

/// `design --no-click`: the best assignment, or one answer label for every player.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum NoClickChoice {
    /// The best assignment per player and question.
    Best,
    /// Each player's last answer is "no click", never reported by a clicking detector.
    Extra,
    /// This answer label for every player and question.
    Label(i64),
}

impl NoClickChoice {
    /// The noise model's assignment for `s`: the label's index for every player.
    pub fn resolve(&self, s: &bellgap::Scenario) -> Result<NoClick> {
        match self {
            NoClickChoice::Best => Ok(NoClick::Best),
            NoClickChoice::Extra => Ok(NoClick::Extra),
            NoClickChoice::Label(l) => NoClick::from_label(s, *l)
                .map_err(|m| Error::InvalidArgument(format!("--no-click: {m}"))),
        }
    }
}

/// A run's data as typed: a summary, or a counts file the runner reads.
#[derive(Debug, Clone, PartialEq)]
pub enum RunInput {
    /// Rounds with wins or a score sum.
    Summary(ObservedRun),
    /// A counts file.
    Counts(PathBuf),
}

/// A command with every option converted.
#[derive(Debug, Clone)]
pub enum Request {
    /// `check`.
    Check { game: GameInput },
    /// `classical`.
    Classical {
        game: GameInput,
        options: ClassicalOptions,
    },
    /// `nosignal`.
    Nosignal {
        game: GameInput,
        limits: Limits,
        /// Where to write an optimal behaviour.
        save: Option<PathBuf>,
    },
    /// `bounds`.
    Bounds {
        game: GameInput,
        options: BoundsOptions,
        /// The see-saw's dimensions (resolved once the game is read).
        dims: DimsChoice,
        /// Each bound printed as a JSON line as soon as it is obtained.
        json_lines: bool,
        /// A table instead of the report.
        table: Option<TableFormat>,
    },
    /// `npa`.
    Npa {
        game: GameInput,
        options: NpaLevelsOptions,
        certificate: Option<PathBuf>,
        exact_certificate: Option<PathBuf>,
        sdpa: Option<PathBuf>,
        table: Option<TableFormat>,
        svg: Option<PathBuf>,
    },
    /// `seesaw`.
    Seesaw {
        game: GameInput,
        dims: DimsChoice,
        options: SeesawOptions,
        save: Option<PathBuf>,
        svg: Option<PathBuf>,
    },
    /// `evaluate`.
    Evaluate {
        game: GameInput,
        strategy: PathBuf,
        reading: StrategyFileOptions,
        options: EvaluateOptions,
        svg: Option<PathBuf>,
    },
    /// `margin`.
    Margin {
        game: GameInput,
        run: RunInput,
        options: MarginOptions,
    },
    /// `randomness`.
    Randomness {
        game: GameInput,
        options: RandomnessOptions,
        /// A counts file and the error of its lower confidence score (read by the runner).
        counts: Option<(PathBuf, f64)>,
        svg: Option<PathBuf>,
        /// Where to write the SDP in SDPA format (at the one score).
        sdpa: Option<PathBuf>,
        /// An external solver's SDPA output to verify instead of solving.
        sdpa_solution: Option<PathBuf>,
    },
    /// `entropy`; the behaviour, strategy or counts file, when given, is read by the runner
    /// (counts with the confidence region's error).
    Entropy {
        game: GameInput,
        behaviour: Option<PathBuf>,
        strategy: Option<PathBuf>,
        counts: Option<(PathBuf, f64)>,
        options: EntropyCommandOptions,
        /// Where to write the node SDPs (a path prefix).
        sdpa: Option<PathBuf>,
        /// Where to read external solutions of them (a path prefix).
        sdpa_solutions: Option<PathBuf>,
        /// Prove the imported nodes' bounds exactly.
        exact: bool,
    },
    /// `design`; the no-click answer label and the dimensions are resolved with the game.
    Design {
        game: GameInput,
        request: DesignRequest,
        dims: DimsChoice,
        no_click: NoClickChoice,
        save: Option<PathBuf>,
        svg: Option<PathBuf>,
    },
    /// `self-test`; the question labels, the target's source and the see-saw's dimensions are
    /// resolved with the game.
    SelfTest {
        game: GameInput,
        given: SelfTestInput,
        target: TargetSource,
        questions: Option<Vec<i64>>,
        level: Option<Level>,
        dims: DimsChoice,
        seesaw: SeesawOptions,
    },
    /// `finite-size`.
    FiniteSize {
        game: GameInput,
        options: FiniteSizeOptions,
        svg: Option<PathBuf>,
    },
    /// `key`.
    Key(KeyOptions),
    /// `review`.
    Review {
        protocol: PathBuf,
        format: DocumentFormat,
        output: Option<PathBuf>,
    },
    /// `verify`.
    Verify {
        game: GameInput,
        certificate: PathBuf,
        limits: Limits,
        exact: bool,
        sdpa_level: Option<Level>,
    },
    /// `local`.
    Local {
        correlations: PathBuf,
        /// Whether the file is a counts file.
        counts: bool,
        save: Option<PathBuf>,
        limits: Limits,
    },
    /// `family`.
    Family { family: FamilyChoice },
    /// `sweep`: the list file, the shard (I, N) and where the records go.
    Sweep {
        list: PathBuf,
        shard: Option<(usize, usize)>,
        output: Option<PathBuf>,
    },
    /// `sweep-merge`.
    SweepMerge {
        shards: Vec<PathBuf>,
        output: Option<PathBuf>,
    },
    /// `reference`.
    Reference { folder: PathBuf },
}

/// A request with how its result is presented.
#[derive(Debug, Clone)]
pub struct Invocation {
    /// What to do.
    pub request: Request,
    /// One JSON object on stdout instead of text.
    pub json: bool,
    /// No warnings or progress on stderr.
    pub quiet: bool,
    /// Every file the command reads (outputs may not replace them).
    pub inputs: Vec<PathBuf>,
}

fn game_input(args: &GameArgs) -> GameInput {
    GameInput {
        path: args.game.clone(),
        compile: CompileOptions {
            allow_large: args.allow_large,
        },
    }
}

fn limits(force: bool) -> Limits {
    Limits { force }
}

/// The first-order method's options from `--budget` (a finite, positive number of seconds).
pub fn first_order(budget: Option<f64>) -> Result<FirstOrderOptions> {
    let mut options = FirstOrderOptions::default();
    if let Some(seconds) = budget {
        if !(seconds.is_finite() && seconds > 0.0) {
            return Err(Error::InvalidArgument(format!(
                "--budget must be a positive number of seconds (found {seconds})"
            )));
        }
        options.max_seconds = seconds;
    }
    Ok(options)
}

/// The first player's answer named by `--player` / `--question`.
fn first_answer(a: &AnswerArgs) -> TargetChoice {
    TargetChoice {
        player: a.player.clone(),
        question: a.question,
    }
}

/// The second player's answer named by `--with` / `--with-question`, when given.
fn second_answer(a: &AnswerArgs) -> Option<TargetChoice> {
    a.with_player.as_ref().map(|p| TargetChoice {
        player: Some(p.clone()),
        question: a.with_question,
    })
}

/// The see-saw's options from `--restarts` and `--seed` (dimensions are resolved with the game).
fn seesaw_options(a: &SeesawArgs, force: bool) -> SeesawOptions {
    SeesawOptions {
        restarts: a.restarts,
        seed: a.seed,
        limits: limits(force),
        ..Default::default()
    }
}

/// `--table`.
fn table_format(t: TableArg) -> TableFormat {
    match t {
        TableArg::Csv => TableFormat::Csv,
        TableArg::Latex => TableFormat::Latex,
    }
}

/// `--skip`.
pub fn bound_kind(b: BoundArg) -> BoundKind {
    match b {
        BoundArg::Classical => BoundKind::Classical,
        BoundArg::NoSignalling => BoundKind::NoSignalling,
        BoundArg::Npa => BoundKind::Npa,
        BoundArg::Seesaw => BoundKind::Seesaw,
    }
}

/// `--solver`.
pub fn backend(solver: SolverArg) -> Backend {
    match solver {
        SolverArg::Auto => Backend::Auto,
        SolverArg::Ipm => Backend::MomentIpm,
        SolverArg::Clarabel => Backend::Clarabel,
        SolverArg::FirstOrder => Backend::FirstOrder,
    }
}

/// `--symmetry`.
pub fn symmetry(choice: SymmetryArg) -> SymmetryChoice {
    match choice {
        SymmetryArg::Auto => SymmetryChoice::Auto,
        SymmetryArg::Off => SymmetryChoice::Off,
    }
}

/// `--method`.
pub fn method(m: MethodArg) -> Choice {
    match m {
        MethodArg::Auto => Choice::Auto,
        MethodArg::Search => Choice::Search,
        MethodArg::Milp => Choice::Milp,
    }
}

/// `npa --level "1;1+joint;2"`: levels separated by `;`.
pub fn levels(text: &str) -> Result<Vec<Level>> {
    let levels = text
        .split(';')
        .filter(|l| !l.trim().is_empty())
        .map(Level::parse)
        .collect::<Result<Vec<_>>>()?;
    if levels.is_empty() {
        return Err(Error::Usage("no NPA level given".into()));
    }
    Ok(levels)
}

/// `--sweep LOW:HIGH:POINTS` → evenly spaced scores (2 to 1000 points, LOW < HIGH, finite).
pub fn sweep(spec: &str) -> Result<Vec<f64>> {
    let parts: Vec<&str> = spec.split(':').collect();
    let bad = || Error::Usage(format!("--sweep expects LOW:HIGH:POINTS, got `{spec}`"));
    if parts.len() != 3 {
        return Err(bad());
    }
    let lo: f64 = parts[0].trim().parse().map_err(|_| bad())?;
    let hi: f64 = parts[1].trim().parse().map_err(|_| bad())?;
    let n: usize = parts[2].trim().parse().map_err(|_| bad())?;
    if !(2..=1000).contains(&n) || !lo.is_finite() || !hi.is_finite() || hi <= lo {
        return Err(bad());
    }
    Ok((0..n)
        .map(|k| lo + (hi - lo) * k as f64 / (n - 1) as f64)
        .collect())
}

/// `--shard I/N` → (I, N), 1 ≤ I ≤ N.
pub fn shard(text: &str) -> Result<(usize, usize)> {
    let bad = || Error::Usage(format!("--shard expects I/N with 1 ≤ I ≤ N, got `{text}`"));
    let (i, n) = text.split_once('/').ok_or_else(bad)?;
    let i: usize = i.trim().parse().map_err(|_| bad())?;
    let n: usize = n.trim().parse().map_err(|_| bad())?;
    if i == 0 || n == 0 || i > n {
        return Err(bad());
    }
    Ok((i, n))
}

/// `--score-range LO,HI`.
pub fn score_range(values: Option<&Vec<f64>>) -> Result<Option<(f64, f64)>> {
    match values.map(|v| &v[..]) {
        None => Ok(None),
        Some([lo, hi]) => Ok(Some((*lo, *hi))),
        Some(v) => Err(Error::Usage(format!(
            "--score-range takes two numbers, LO,HI; got {}",
            v.len()
        ))),
    }
}

/// `--dim` / `--dims`.
pub fn dims(dim: Option<usize>, dims: Option<&Vec<usize>>) -> DimsChoice {
    match (dim, dims) {
        (Some(d), _) => DimsChoice::Each(d),
        (None, Some(ds)) => DimsChoice::List(ds.clone()),
        (None, None) => DimsChoice::Default,
    }
}

/// `family ...`.
pub fn family(f: &FamilyCommand) -> Result<FamilyChoice> {
    Ok(FamilyChoice::Standard(match f {
        FamilyCommand::Chsh => Family::Chsh,
        FamilyCommand::ChshExpression => Family::ChshExpression,
        FamilyCommand::Xor { signs } => Family::Xor {
            signs: families::parse_sign_table(signs)?,
        },
        FamilyCommand::OddCycle { n } => Family::OddCycle { n: *n },
        FamilyCommand::MagicSquare => Family::MagicSquare,
        FamilyCommand::Ghz { players } => Family::Ghz { players: *players },
        FamilyCommand::Cglmp { d } => Family::Cglmp { d: *d },
        FamilyCommand::I3322 => Family::I3322,
        FamilyCommand::Chained { m } => Family::Chained { m: *m },
        FamilyCommand::Mermin { players } => Family::Mermin { players: *players },
        FamilyCommand::Svetlichny { players } => Family::Svetlichny { players: *players },
        FamilyCommand::ChshMod { d } => Family::ChshMod { d: *d },
        FamilyCommand::TiltedChsh { alpha, beta } => Family::TiltedChsh {
            alpha: *alpha,
            beta: *beta,
        },
        FamilyCommand::Product { game, rounds } => {
            return Ok(FamilyChoice::Product {
                game: game.clone(),
                rounds: *rounds,
            })
        }
    }))
}

impl Invocation {
    /// Converts what was typed into a request.
    pub fn from_cli(cli: &Cli) -> Result<Invocation> {
        let request = match &cli.command {
            Command::Check(a) => Request::Check {
                game: game_input(a),
            },
            Command::Classical { args, method: m } => Request::Classical {
                game: game_input(args),
                options: ClassicalOptions {
                    method: method(*m),
                    limits: limits(args.force),
                },
            },
            Command::Nosignal { args: a, save } => Request::Nosignal {
                game: game_input(a),
                limits: limits(a.force),
                save: save.clone(),
            },
            Command::Bounds {
                args,
                level,
                solver,
                symmetry: sym,
                budget,
                skip,
                json_lines,
                table,
                seesaw,
            } => Request::Bounds {
                game: game_input(args),
                options: BoundsOptions {
                    npa_level: level.as_deref().map(one_level).transpose()?,
                    backend: backend(*solver),
                    symmetry: symmetry(*sym),
                    first_order: first_order(*budget)?,
                    limits: limits(args.force),
                    seesaw: seesaw_options(seesaw, args.force),
                    skip: skip.iter().map(|&b| bound_kind(b)).collect(),
                    budget: *budget,
                },
                dims: dims(seesaw.dim, seesaw.dims.as_ref()),
                json_lines: *json_lines,
                table: table.map(table_format),
            },
            Command::Npa {
                args,
                level,
                certificate,
                exact_certificate,
                sdpa,
                table,
                svg,
                solver,
                symmetry: sym,
                budget,
            } => Request::Npa {
                game: game_input(args),
                options: NpaLevelsOptions {
                    levels: levels(level)?,
                    backend: backend(*solver),
                    symmetry: symmetry(*sym),
                    first_order: first_order(*budget)?,
                    limits: limits(args.force),
                },
                certificate: certificate.clone(),
                exact_certificate: exact_certificate.clone(),
                sdpa: sdpa.clone(),
                table: table.map(table_format),
                svg: svg.clone(),
            },
            Command::Seesaw {
                args,
                seesaw,
                save,
                svg,
            } => Request::Seesaw {
                game: game_input(args),
                dims: dims(seesaw.dim, seesaw.dims.as_ref()),
                options: seesaw_options(seesaw, args.force),
                save: save.clone(),
                svg: svg.clone(),
            },
            Command::Evaluate {
                args,
                strategy,
                svg,
                no_classical,
                normalise,
            } => Request::Evaluate {
                game: game_input(args),
                strategy: strategy.clone(),
                reading: StrategyFileOptions {
                    normalise: *normalise,
                },
                options: EvaluateOptions {
                    skip_classical: *no_classical,
                    limits: limits(args.force),
                    noise: None,
                },
                svg: svg.clone(),
            },
            Command::Margin {
                args,
                rounds,
                counts,
                wins,
                score_sum,
                score_range: range,
                alpha,
                target_p_value,
                expected,
            } => Request::Margin {
                game: game_input(args),
                run: match (counts, rounds) {
                    (Some(file), _) => RunInput::Counts(file.clone()),
                    (None, Some(rounds)) => RunInput::Summary(ObservedRun {
                        rounds: *rounds,
                        wins: *wins,
                        score_sum: *score_sum,
                        score_range: score_range(range.as_ref())?,
                    }),
                    (None, None) => {
                        return Err(Error::Usage(
                            "give --rounds (with --wins or --score-sum) or --counts".into(),
                        ))
                    }
                },
                options: MarginOptions {
                    alpha: *alpha,
                    target_p_value: *target_p_value,
                    expected: *expected,
                    classical: ClassicalOptions {
                        limits: limits(args.force),
                        ..Default::default()
                    },
                },
            },
            Command::Randomness {
                args,
                score,
                sweep: spec,
                counts,
                alpha,
                answers,
                level,
                svg,
                exact,
                sdpa,
                sdpa_solution,
            } => Request::Randomness {
                game: game_input(args),
                options: RandomnessOptions {
                    guessed: first_answer(answers),
                    with: second_answer(answers),
                    scores: match (score, spec) {
                        _ if counts.is_some() => Vec::new(),
                        (_, Some(spec)) => sweep(spec)?,
                        (Some(v), None) => vec![*v],
                        (None, None) => {
                            return Err(Error::Usage("give --score, --sweep or --counts".into()))
                        }
                    },
                    level: one_level(level)?,
                    from_counts: None,
                    limits: limits(args.force),
                    exact: *exact,
                },
                counts: counts.clone().map(|c| (c, *alpha)),
                svg: svg.clone(),
                sdpa: sdpa.clone(),
                sdpa_solution: sdpa_solution.clone(),
            },
            Command::Entropy {
                args,
                score,
                sweep: spec,
                behaviour,
                strategy,
                counts,
                alpha,
                answers,
                hierarchy,
                key_with,
                key_question,
                error_rate,
                sdpa,
                sdpa_solutions,
                exact,
            } => Request::Entropy {
                game: game_input(args),
                sdpa: sdpa.clone(),
                sdpa_solutions: sdpa_solutions.clone(),
                exact: *exact,
                behaviour: behaviour.clone(),
                strategy: strategy.clone(),
                counts: counts.clone().map(|c| (c, *alpha)),
                options: EntropyCommandOptions {
                    target: first_answer(answers),
                    with: second_answer(answers),
                    // A behaviour or a strategy replaces the scores once the runner has read it.
                    given: EntropyGiven::Scores(match (score, spec) {
                        _ if behaviour.is_some() || strategy.is_some() || counts.is_some() => {
                            Vec::new()
                        }
                        (_, Some(spec)) => sweep(spec)?,
                        (Some(v), None) => vec![*v],
                        (None, None) => {
                            return Err(Error::Usage(
                                "give --score, --sweep, --behaviour, --strategy or --counts".into(),
                            ))
                        }
                    }),
                    key: match (key_with, error_rate) {
                        (Some(p), _) => Some(ErrorCorrection::KeyPair(TargetChoice {
                            player: Some(p.clone()),
                            question: *key_question,
                        })),
                        (None, Some(q)) => Some(ErrorCorrection::ErrorRate(*q)),
                        (None, None) => None,
                    },
                    hierarchy: hierarchy_options(hierarchy, args.force)?,
                },
            },
            Command::Design {
                args,
                figure,
                efficiency,
                visibility,
                dark_counts,
                no_click,
                state,
                threshold,
                tolerance,
                curve_points,
                answers,
                key_with,
                key_question,
                randomness_level,
                hierarchy,
                seesaw,
                save,
                svg,
            } => Request::Design {
                game: game_input(args),
                request: DesignRequest {
                    figure: match figure {
                        FigureArg::Margin => DesignFigure::Margin,
                        FigureArg::MinEntropy => DesignFigure::MinEntropy,
                        FigureArg::Entropy => DesignFigure::Entropy,
                        FigureArg::KeyRate => DesignFigure::KeyRate,
                    },
                    design: DesignOptions {
                        seesaw: seesaw_options(seesaw, args.force),
                        noise: NoiseModel {
                            visibility: *visibility,
                            efficiency: efficiency.clone(),
                            dark_counts: *dark_counts,
                            no_click: NoClick::Best,
                        },
                        state: match state {
                            StateArg::Optimised => StateChoice::Optimised,
                            StateArg::MaximallyEntangled => StateChoice::MaximallyEntangled,
                        },
                    },
                    threshold: threshold.map(|t| ThresholdOptions {
                        parameter: match t {
                            NoiseParameterArg::Efficiency => NoiseParameter::Efficiency,
                            NoiseParameterArg::Visibility => NoiseParameter::Visibility,
                        },
                        tolerance: *tolerance,
                        curve_points: *curve_points,
                    }),
                    key: TargetChoice {
                        player: answers.player.clone(),
                        question: answers.question,
                    },
                    partner: key_with.as_ref().map(|p| TargetChoice {
                        player: Some(p.clone()),
                        question: *key_question,
                    }),
                    randomness_level: Some(one_level(randomness_level)?),
                    entropy: hierarchy_options(hierarchy, args.force)?,
                    tangents: DEFAULT_TANGENTS,
                },
                dims: dims(seesaw.dim, seesaw.dims.as_ref()),
                no_click: if no_click.trim() == "best" {
                    NoClickChoice::Best
                } else if no_click.trim() == "extra" {
                    NoClickChoice::Extra
                } else {
                    NoClickChoice::Label(no_click.trim().parse().map_err(|_| {
                        Error::Usage(format!(
                            "--no-click: `{no_click}` is not `best`, `extra` or an answer label"
                        ))
                    })?)
                },
                save: save.clone(),
                svg: svg.clone(),
            },
            Command::SelfTest {
                args,
                score,
                behaviour,
                counts,
                alpha,
                target,
                strategy,
                questions,
                level,
                seesaw,
            } => Request::SelfTest {
                game: game_input(args),
                given: match (score, behaviour, counts) {
                    (Some(v), _, _) => SelfTestInput::Score(*v),
                    (None, Some(f), _) => SelfTestInput::Behaviour(f.clone()),
                    (None, None, Some(f)) => SelfTestInput::Counts(f.clone(), *alpha),
                    (None, None, None) => {
                        return Err(Error::Usage("give --score, --behaviour or --counts".into()))
                    }
                },
                target: match (target, strategy) {
                    (Some(t), _) => TargetSource::Amplitudes(t.clone()),
                    (None, Some(f)) => TargetSource::Strategy(f.clone()),
                    (None, None) => TargetSource::Seesaw,
                },
                questions: questions.clone(),
                level: level.as_deref().map(one_level).transpose()?,
                dims: dims(seesaw.dim, seesaw.dims.as_ref()),
                seesaw: seesaw_options(seesaw, args.force),
            },
            Command::FiniteSize {
                args,
                rounds,
                testing,
                threshold,
                expected,
                smoothing,
                pass_floor,
                extractor_error,
                fraction,
                key_disclosed_bits,
                key_error_rate,
                ec_efficiency,
                verification_error,
                correction_failure,
                max_test_rounds,
                statement,
                tangent,
                tangent_points,
                answers,
                hierarchy,
                svg,
            } => Request::FiniteSize {
                game: game_input(args),
                options: FiniteSizeOptions {
                    target: first_answer(answers),
                    with: second_answer(answers),
                    rounds: *rounds,
                    testing: *testing,
                    threshold: *threshold,
                    security: SecurityParameters {
                        smoothing: *smoothing,
                        pass_floor: *pass_floor,
                        extraction: *extractor_error,
                        statement: Statement::parse(statement)?,
                    },
                    expected: *expected,
                    fraction: *fraction,
                    key: {
                        let parts = KeyParts {
                            disclosed_bits: *key_disclosed_bits,
                            error_rate: *key_error_rate,
                            efficiency: *ec_efficiency,
                            verification_error: *verification_error,
                            correction_failure: *correction_failure,
                            max_test_rounds: *max_test_rounds,
                        };
                        let key = KeyDisclosure::from_parts(parts)?;
                        if key.is_none() && parts != KeyParts::default() {
                            return Err(Error::Usage(
                                "the key options need --key-disclosed-bits or --key-error-rate"
                                    .into(),
                            ));
                        }
                        key
                    },
                    tangent: match tangent {
                        Some(score) => Tangent::At(*score),
                        None => Tangent::Search(*tangent_points),
                    },
                    hierarchy: hierarchy_options(hierarchy, args.force)?,
                },
                svg: svg.clone(),
            },
            Command::Key {
                chsh,
                qber,
                noisy_preprocessing,
                ..
            } => Request::Key(KeyOptions {
                chsh: *chsh,
                qber: *qber,
                preprocessing: Preprocessing::noisy_if(*noisy_preprocessing),
            }),
            Command::Review {
                protocol,
                markdown,
                output,
                ..
            } => Request::Review {
                protocol: protocol.clone(),
                format: if *markdown {
                    DocumentFormat::Markdown
                } else {
                    DocumentFormat::Html
                },
                output: output.clone(),
            },
            Command::Verify {
                args,
                certificate,
                exact,
                sdpa_level,
            } => Request::Verify {
                game: game_input(args),
                certificate: certificate.clone(),
                limits: limits(args.force),
                exact: *exact,
                sdpa_level: sdpa_level.as_deref().map(one_level).transpose()?,
            },
            Command::Local {
                correlations,
                counts,
                save,
                force,
                ..
            } => Request::Local {
                correlations: correlations.clone(),
                counts: *counts,
                save: save.clone(),
                limits: limits(*force),
            },
            Command::Family { family: f, .. } => Request::Family { family: family(f)? },
            Command::Sweep {
                list,
                shard: s,
                output,
                ..
            } => Request::Sweep {
                list: list.clone(),
                shard: s.as_deref().map(shard).transpose()?,
                output: output.clone(),
            },
            Command::Reference { folder, .. } => Request::Reference {
                folder: folder.clone(),
            },
            Command::SweepMerge { shards, output, .. } => Request::SweepMerge {
                shards: shards.clone(),
                output: output.clone(),
            },
        };
        Ok(Invocation {
            request,
            json: cli.wants_json(),
            quiet: cli.quiet(),
            inputs: cli.inputs(),
        })
    }
}

/// The entropy hierarchy's options from the command line.
fn hierarchy_options(h: &HierarchyArgs, force: bool) -> Result<EntropyOptions> {
    Ok(EntropyOptions {
        nodes: h.nodes,
        level: h.level.as_deref().map(one_level).transpose()?,
        adversary: match h.adversary_words {
            AdversaryWordsArg::Letters => AdversaryWords::Letters,
            AdversaryWordsArg::WithProjectors => AdversaryWords::WithProjectors,
            AdversaryWordsArg::WithPlayerWords => AdversaryWords::WithPlayerWords,
            AdversaryWordsArg::WithPairs => AdversaryWords::WithPairs,
        },
        field: match h.moments {
            MomentsArg::Real => MomentField::Real,
            MomentsArg::Complex => MomentField::Complex,
        },
        backend: match h.solver {
            EntropySolverArg::Auto => Backend::Auto,
            EntropySolverArg::Ipm => Backend::MomentIpm,
            EntropySolverArg::Clarabel => Backend::Clarabel,
        },
        preprocessing: Preprocessing::noisy_if(h.noisy_preprocessing),
        symmetry: symmetry(h.symmetry),
        limits: limits(force),
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use clap::Parser;

    #[test]
    fn every_command_takes_quiet_and_json() {
        // README promises both on every command; `review`, `local`, `sweep` and `sweep-merge`
        // once refused `--quiet`.
        use clap::CommandFactory;
        for sub in Cli::command().get_subcommands() {
            let names: Vec<&str> = sub.get_arguments().map(|a| a.get_id().as_str()).collect();
            for wanted in ["quiet", "json"] {
                assert!(
                    names.contains(&wanted),
                    "`{}` has no --{wanted}",
                    sub.get_name()
                );
            }
        }
        for line in [
            "review p.yaml --quiet",
            "local c.yaml -q",
            "sweep l.txt --quiet",
            "sweep-merge a.jsonl --quiet",
            "family chsh --quiet",
        ] {
            let cli = Cli::try_parse_from(std::iter::once("bellgap").chain(line.split(' ')))
                .unwrap_or_else(|e| panic!("{line}: {e}"));
            assert!(cli.quiet(), "{line}");
        }
    }

    #[test]
    fn help_texts_say_what_each_command_does() {
        use clap::CommandFactory;
        let mut cli = Cli::command();
        let top = cli.render_help().to_string();
        assert!(top.contains("quantum"), "{top}");
        let help = |name: &str| {
            let mut sub = Cli::command()
                .find_subcommand(name)
                .unwrap_or_else(|| panic!("{name}"))
                .clone();
            (
                sub.render_help().to_string(),
                sub.render_long_help().to_string(),
            )
        };
        // `entropy --score` speaks of the entropy, not of the guessing probability.
        let (_, long) = help("entropy");
        let score = &long[long.find("--score").unwrap()..long.find("--sweep").unwrap()];
        assert!(score.contains("von Neumann"), "{score}");
        assert!(!score.contains("guessing"), "{score}");
        // Both helps of `npa --solver` name the first-order method.
        let (short, long) = help("npa");
        for text in [&short, &long] {
            let solver = &text[text.find("--solver").unwrap()..text.find("--symmetry").unwrap()];
            assert!(solver.contains("first-order"), "{solver}");
        }
    }

    fn request(args: &[&str]) -> Result<Request> {
        let cli = Cli::try_parse_from(std::iter::once("bellgap").chain(args.iter().copied()))
            .map_err(|e| Error::Usage(e.to_string()))?;
        Invocation::from_cli(&cli).map(|i| i.request)
    }

    #[test]
    fn npa_levels_split_on_semicolons_and_keep_their_order() {
        let Request::Npa { options, .. } =
            request(&["npa", "g.yaml", "--level", "1; 1+joint ;2;"]).unwrap()
        else {
            panic!("not an npa request")
        };
        assert_eq!(
            options.levels,
            vec![Level::Length(1), Level::Joint, Level::Length(2)]
        );
        assert_eq!(options.backend, Backend::Auto);
        assert!(!options.limits.force);
        assert!(matches!(
            request(&["npa", "g.yaml", "--level", " ; "]),
            Err(Error::Usage(_))
        ));
        assert!(matches!(
            request(&["npa", "g.yaml", "--level", "1;x"]),
            Err(Error::InvalidArgument(_))
        ));
    }

    #[test]
    fn npa_level_patterns_are_player_letters() {
        let Request::Npa { options, .. } =
            request(&["npa", "g.yaml", "--level", "1 A B AB"]).unwrap()
        else {
            panic!()
        };
        assert_eq!(
            options.levels,
            vec![Level::Patterns(vec![vec![], vec![0], vec![1], vec![0, 1]])]
        );
    }

    #[test]
    fn solver_names_map_to_backends() {
        assert_eq!(backend(SolverArg::Ipm), Backend::MomentIpm);
        assert_eq!(backend(SolverArg::Clarabel), Backend::Clarabel);
        assert_eq!(backend(SolverArg::Auto), Backend::Auto);
        let Request::Bounds { options, .. } =
            request(&["bounds", "g.yaml", "--solver", "clarabel", "--level", "2"]).unwrap()
        else {
            panic!()
        };
        assert_eq!(options.backend, Backend::Clarabel);
        assert_eq!(options.npa_level, Some(Level::Length(2)));
        let Request::Bounds { options, .. } = request(&["bounds", "g.yaml"]).unwrap() else {
            panic!()
        };
        assert_eq!(options.npa_level, None, "default level is chosen by size");
    }

    #[test]
    fn force_and_allow_large_reach_the_options() {
        let Request::Classical { game, options } = request(&[
            "classical",
            "g.yaml",
            "--force",
            "--allow-large",
            "--method",
            "milp",
        ])
        .unwrap() else {
            panic!()
        };
        assert!(options.limits.force);
        assert_eq!(options.method, Choice::Milp);
        assert!(game.compile.allow_large);
        let Request::Local { limits, .. } = request(&["local", "c.yaml", "--force"]).unwrap()
        else {
            panic!()
        };
        assert!(limits.force);
        let Request::Nosignal { limits, .. } = request(&["nosignal", "g.yaml"]).unwrap() else {
            panic!()
        };
        assert!(!limits.force);
    }

    #[test]
    fn seesaw_dimensions_and_restarts() {
        let Request::Seesaw {
            dims: d, options, ..
        } = request(&[
            "seesaw",
            "g.yaml",
            "--dim",
            "3",
            "--restarts",
            "4",
            "--seed",
            "9",
        ])
        .unwrap()
        else {
            panic!()
        };
        assert_eq!(d, DimsChoice::Each(3));
        assert_eq!(d.resolve(3), vec![3, 3, 3]);
        assert_eq!((options.restarts, options.seed), (4, 9));
        let Request::Seesaw {
            dims: d, options, ..
        } = request(&["seesaw", "g.yaml", "--dims", "2,4"]).unwrap()
        else {
            panic!()
        };
        assert_eq!(d.resolve(2), vec![2, 4]);
        assert_eq!(options.restarts, 10, "the command's default");
        assert_eq!(dims(None, None).resolve(2), Vec::<usize>::new());
        assert!(request(&["seesaw", "g.yaml", "--dim", "2", "--dims", "2,2"]).is_err());
    }

    #[test]
    fn margin_run_and_score_range() {
        let Request::Margin { run, options, .. } = request(&[
            "margin",
            "g.yaml",
            "--rounds",
            "100",
            "--score-sum",
            "-3.5",
            "--score-range",
            "-4,4",
            "--alpha",
            "1e-3",
        ])
        .unwrap() else {
            panic!()
        };
        let RunInput::Summary(run) = run else {
            panic!("a summary")
        };
        assert_eq!(run.rounds, 100);
        assert_eq!(run.score_sum, Some(-3.5));
        assert_eq!(run.score_range, Some((-4.0, 4.0)));
        assert_eq!(options.alpha, 1e-3);
        // Counts instead of a summary; not both.
        let Request::Margin { run, .. } =
            request(&["margin", "g.yaml", "--counts", "c.yaml"]).unwrap()
        else {
            panic!()
        };
        assert_eq!(run, RunInput::Counts(PathBuf::from("c.yaml")));
        assert!(request(&["margin", "g.yaml", "--counts", "c.yaml", "--rounds", "5"]).is_err());
        assert!(request(&["margin", "g.yaml"]).is_err());
        assert_eq!(options.target_p_value, 1e-9);
        assert!(matches!(
            request(&[
                "margin",
                "g.yaml",
                "--rounds",
                "1",
                "--score-sum",
                "1",
                "--score-range",
                "1,2,3"
            ]),
            Err(Error::Usage(_))
        ));
        assert!(
            request(&["margin", "g.yaml", "--rounds", "1", "--wins", "1", "--alpha", "nan"])
                .is_err()
        );
        assert!(request(&[
            "margin",
            "g.yaml",
            "--rounds",
            "1",
            "--wins",
            "1",
            "--score-sum",
            "1"
        ])
        .is_err());
    }

    #[test]
    fn entropy_scores_behaviour_and_key_options() {
        let Request::Entropy {
            options, behaviour, ..
        } = request(&[
            "entropy",
            "g.yaml",
            "--score",
            "2.5",
            "--nodes",
            "6",
            "--moments",
            "complex",
            "--adversary-words",
            "letters",
            "--error-rate",
            "0.02",
        ])
        .unwrap()
        else {
            panic!()
        };
        assert!(behaviour.is_none());
        assert!(matches!(&options.given, EntropyGiven::Scores(v) if v == &vec![2.5]));
        assert_eq!(options.hierarchy.nodes, 6);
        assert_eq!(options.hierarchy.field, MomentField::Complex);
        assert_eq!(options.hierarchy.adversary, AdversaryWords::Letters);
        assert_eq!(options.hierarchy.level, None);
        assert!(matches!(options.key, Some(ErrorCorrection::ErrorRate(q)) if q == 0.02));
        let Request::Entropy {
            options, behaviour, ..
        } = request(&[
            "entropy",
            "g.yaml",
            "--behaviour",
            "p.yaml",
            "--key-with",
            "bob",
            "--key-question",
            "1",
            "--player",
            "alice",
        ])
        .unwrap()
        else {
            panic!()
        };
        assert_eq!(behaviour, Some(PathBuf::from("p.yaml")));
        assert!(
            matches!(&options.key, Some(ErrorCorrection::KeyPair(c)) if c.player.as_deref() == Some("bob") && c.question == Some(1))
        );
        assert_eq!(options.hierarchy.field, MomentField::Real);
        assert!(matches!(
            request(&["entropy", "g.yaml"]),
            Err(Error::Usage(_))
        ));
        assert!(request(&["entropy", "g.yaml", "--score", "2", "--behaviour", "p.yaml"]).is_err());
    }

    #[test]
    fn randomness_scores_targets_and_sweeps() {
        let Request::Randomness { options, .. } = request(&[
            "randomness",
            "g.yaml",
            "--sweep",
            "0.75:0.85:3",
            "--player",
            "alice",
            "--question",
            "-1",
            "--with",
            "bob",
        ])
        .unwrap() else {
            panic!()
        };
        assert_eq!(options.scores.len(), 3);
        assert!((options.scores[1] - 0.8).abs() < 1e-15);
        assert_eq!(options.guessed.player.as_deref(), Some("alice"));
        assert_eq!(options.guessed.question, Some(-1));
        assert_eq!(options.with.as_ref().unwrap().question, None);
        assert_eq!(options.level, Level::Length(2));
        let Request::Randomness { options, .. } = request(&[
            "randomness",
            "g.yaml",
            "--score",
            "0.8",
            "--level",
            "1+joint",
        ])
        .unwrap() else {
            panic!()
        };
        assert_eq!(options.scores, vec![0.8]);
        assert_eq!(options.level, Level::Joint);
        assert!(options.with.is_none());
        for bad in ["1:0:3", "0:1:1", "0:1", "nan:1:3", "0:inf:3", "0:1:1001"] {
            assert!(matches!(sweep(bad), Err(Error::Usage(_))), "{bad}");
        }
    }

    #[test]
    fn review_format_and_family_parameters() {
        let Request::Review { format, output, .. } =
            request(&["review", "p.yaml", "--markdown", "-o", "r.md"]).unwrap()
        else {
            panic!()
        };
        assert_eq!(format, DocumentFormat::Markdown);
        assert_eq!(output, Some(PathBuf::from("r.md")));
        let Request::Family { family: f } =
            request(&["family", "xor", "--signs", "1,1;1,-1"]).unwrap()
        else {
            panic!()
        };
        assert_eq!(
            f,
            FamilyChoice::Standard(Family::Xor {
                signs: vec![vec![1, 1], vec![1, -1]]
            })
        );
        let Request::Family { family: f } =
            request(&["family", "product", "--game", "g.yaml", "--rounds", "3"]).unwrap()
        else {
            panic!()
        };
        assert_eq!(
            f,
            FamilyChoice::Product {
                game: PathBuf::from("g.yaml"),
                rounds: 3
            }
        );
    }

    #[test]
    fn presentation_flags_and_inputs() {
        let cli = Cli::try_parse_from(["bellgap", "evaluate", "g.yaml", "s.yaml", "--json", "-q"])
            .unwrap();
        let inv = Invocation::from_cli(&cli).unwrap();
        assert!(inv.json && inv.quiet);
        assert_eq!(
            inv.inputs,
            vec![PathBuf::from("g.yaml"), PathBuf::from("s.yaml")]
        );
        let cli =
            Cli::try_parse_from(["bellgap", "key", "--chsh", "2.5", "--qber", "0.01"]).unwrap();
        let inv = Invocation::from_cli(&cli).unwrap();
        assert!(!inv.json && inv.inputs.is_empty());
        assert!(
            matches!(inv.request, Request::Key(KeyOptions { chsh, qber, .. }) if chsh == 2.5 && qber == 0.01)
        );
    }
}
