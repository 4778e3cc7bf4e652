//! Command-line definitions (clap) and the resolution of what the user typed into calls of the
//! library. Nothing here computes a bound.

use std::io::IsTerminal;
use std::path::PathBuf;
use std::sync::Mutex;
use std::time::Instant;

use clap::{Args, Parser, Subcommand, ValueEnum};
use serde_json::{json, Value};

use bellgap::bounds::classical::locality::{expression_as_game, locality_test, Correlations};
use bellgap::bounds::classical::{self, Choice, ClassicalEstimate};
use bellgap::bounds::nosignal;
use bellgap::bounds::quantum::analysis;
use bellgap::bounds::quantum::npa::{self, Level};
use bellgap::bounds::quantum::seesaw::{self, SeesawOptions};
use bellgap::formats::game::spec::readable_yaml;
use bellgap::formats::game::{families, product, CompileOptions, Game, GameSpec};
use bellgap::model::strategy::QuantumStrategy;
use bellgap::optim::sdp::SdpSolver;
use bellgap::protocol::finite;
use bellgap::protocol::randomness::{self, Target};
use bellgap::protocol::{key, review};
use bellgap::render::charts as plot;
use bellgap::render::report::{self, Report};
use bellgap::{Error, Result};

#[derive(Parser, Debug)]
#[command(
    name = "bellgap",
    version,
    about = "Bounds for nonlocal games and Bell expressions: classical, no-signalling, and the gaps between them",
    long_about = None
)]
pub struct Cli {
    #[command(subcommand)]
    pub command: Command,
}

#[derive(Subcommand, Debug)]
pub enum Command {
    /// Validate a game file and print its sizes and cost estimates.
    Check(GameArgs),
    /// Exact classical value and an optimal deterministic strategy.
    Classical {
        #[command(flatten)]
        args: GameArgs,
        /// How to compute it: branch and bound, a MILP, or chosen by size.
        #[arg(long, value_enum, default_value_t = MethodArg::Auto)]
        method: MethodArg,
    },
    /// No-signalling value (linear programme).
    Nosignal(GameArgs),
    /// Every bound available, then the gaps between them.
    Bounds {
        #[command(flatten)]
        args: GameArgs,
        /// NPA level for the quantum upper bound (default: chosen from the size estimate).
        #[arg(long)]
        level: Option<String>,
        /// SDP solver for the NPA bound.
        #[arg(long, value_enum, default_value_t = SolverArg::Auto)]
        solver: SolverArg,
    },
    /// Quantum upper bound from the NPA hierarchy, with a verified bound from the dual solution.
    Npa {
        #[command(flatten)]
        args: GameArgs,
        /// `1`, `2`, ... (all words up to that length), `1+joint` (level 1 plus products of one
        /// operator per player), or patterns of player letters such as "1 A B AB AA". Several
        /// levels separated by `;` are compared (e.g. "1;1+joint;2").
        #[arg(long, default_value = "1+joint")]
        level: String,
        /// Write the dual certificate (JSON) of the last level here; `bellgap verify` re-checks it.
        #[arg(long, value_name = "FILE")]
        certificate: Option<PathBuf>,
        /// Plot the verified bound against the level (SVG), when comparing levels.
        #[arg(long, value_name = "FILE")]
        svg: Option<PathBuf>,
        /// SDP solver: the moment-matrix interior-point method (`ipm`), `clarabel`, or `auto`
        /// (ipm, falling back to clarabel).
        #[arg(long, value_enum, default_value_t = SolverArg::Auto)]
        solver: SolverArg,
    },
    /// Explicit quantum strategy by see-saw: a lower bound on the quantum value.
    Seesaw {
        #[command(flatten)]
        args: GameArgs,
        /// Local dimension of every player.
        #[arg(long, conflicts_with = "dims")]
        dim: Option<usize>,
        /// Local dimension per player, comma separated (e.g. 2,3).
        #[arg(long, value_delimiter = ',')]
        dims: Option<Vec<usize>>,
        /// Random restarts (run in parallel; the best is kept).
        #[arg(long, default_value_t = 10)]
        restarts: usize,
        /// Seed of the random starts (reported, so runs are reproducible).
        #[arg(long, default_value_t = 1)]
        seed: u64,
        /// Write the best strategy (state and measurements) to this file.
        #[arg(long, value_name = "FILE")]
        save: Option<PathBuf>,
        /// Plot the value against visibility and detection efficiency (SVG).
        #[arg(long, value_name = "FILE")]
        svg: Option<PathBuf>,
    },
    /// Recompute a strategy file's value by the Born rule and check it; with entanglement,
    /// noise and detection-efficiency thresholds.
    Evaluate {
        #[command(flatten)]
        args: GameArgs,
        /// Strategy file (as written by `bellgap seesaw --save`).
        strategy: PathBuf,
        /// Plot the value against visibility and detection efficiency (SVG).
        #[arg(long, value_name = "FILE")]
        svg: Option<PathBuf>,
        /// Skip the classical value (and so the robustness figures, which are measured against
        /// it); on a large game computing it can take long.
        #[arg(long)]
        no_classical: bool,
    },
    /// What an observed score over n rounds certifies: confidence bounds, margin over the
    /// classical value, p-value of classical devices, rounds needed.
    Margin {
        #[command(flatten)]
        args: GameArgs,
        /// Number of rounds played.
        #[arg(long)]
        rounds: u64,
        /// Rounds won (a game).
        #[arg(long, conflicts_with = "score_sum")]
        wins: Option<u64>,
        /// Sum of per-round scores (a Bell expression or a scored game).
        #[arg(long, allow_hyphen_values = true, value_parser = parse_finite)]
        score_sum: Option<f64>,
        /// Smallest and largest possible per-round score, as `LO,HI` (default: the
        /// game's own range; a narrower one is refused, since the bounds would not hold).
        #[arg(long, value_delimiter = ',', num_args = 1, allow_hyphen_values = true, value_parser = parse_finite)]
        score_range: Option<Vec<f64>>,
        /// Error probability of the confidence bounds.
        #[arg(long, default_value_t = 1e-6, value_parser = parse_finite)]
        alpha: f64,
        /// p-value to reach when computing the rounds needed.
        #[arg(long, default_value_t = 1e-9, value_parser = parse_finite)]
        target_p_value: f64,
        /// Expected mean score for the rounds needed (default: the observed mean).
        #[arg(long, allow_hyphen_values = true, value_parser = parse_finite)]
        expected: Option<f64>,
    },
    /// Certified randomness: the adversary's guessing probability and the min-entropy per round
    /// at a given score (NPA with the score as a constraint).
    Randomness {
        #[command(flatten)]
        args: GameArgs,
        /// The score (in the game's own units).
        #[arg(long, allow_hyphen_values = true, required_unless_present = "sweep", value_parser = parse_finite)]
        score: Option<f64>,
        /// Sweep the score: LOW:HIGH:POINTS.
        #[arg(long)]
        sweep: Option<String>,
        /// Whose answer is guessed (default: the first player).
        #[arg(long)]
        player: Option<String>,
        /// To which question (label; default: the first).
        #[arg(long, allow_hyphen_values = true)]
        question: Option<i64>,
        /// Also guess this second player's answer (the pair of answers).
        #[arg(long = "with")]
        with_player: Option<String>,
        /// The second player's question (label; default: the first).
        #[arg(long, allow_hyphen_values = true)]
        with_question: Option<i64>,
        /// NPA level of the relaxation.
        #[arg(long, default_value = "2")]
        level: String,
        /// Write the min-entropy curve of a sweep as an SVG plot.
        #[arg(long, value_name = "FILE")]
        svg: Option<PathBuf>,
    },
    /// Key figures for CHSH-based device-independent QKD (analytic bound).
    Key {
        /// CHSH correlator value S (at most 2√2; the entropy bound is 0 at or below 2).
        #[arg(long, allow_hyphen_values = true, value_parser = parse_finite)]
        chsh: f64,
        /// Quantum bit error rate, in [0, 0.5].
        #[arg(long, allow_hyphen_values = true, value_parser = parse_finite)]
        qber: f64,
        /// Print exactly one JSON object on stdout.
        #[arg(long)]
        json: bool,
        /// No progress output on stderr (accepted for uniformity: `key` has none).
        #[arg(long, short)]
        quiet: bool,
    },
    /// A self-contained review report of a protocol run: bounds, margins, randomness, key
    /// figures and the assumptions behind each.
    Review {
        /// Protocol file (YAML, see README).
        protocol: PathBuf,
        /// Markdown instead of HTML.
        #[arg(long)]
        markdown: bool,
        /// Write the report here instead of stdout.
        #[arg(long, short, value_name = "FILE")]
        output: Option<PathBuf>,
        /// Print exactly one JSON object on stdout instead of the report.
        #[arg(long)]
        json: bool,
    },
    /// Re-check an NPA dual certificate without any solver and print the bound it proves.
    Verify {
        #[command(flatten)]
        args: GameArgs,
        /// Certificate written by `bellgap npa --certificate`.
        certificate: PathBuf,
    },
    /// Decide whether given correlations p(answers|questions) have a local model.
    Local {
        /// Correlations file (YAML or JSON, see README).
        correlations: PathBuf,
        /// Write the separating Bell expression (if any) as a game file here.
        #[arg(long, value_name = "FILE")]
        save: Option<PathBuf>,
        /// Run even when the estimate says it would take very long.
        #[arg(long)]
        force: bool,
        /// Print exactly one JSON object on stdout.
        #[arg(long)]
        json: bool,
    },
    /// Print a standard game or Bell expression as a game file.
    Family {
        #[command(subcommand)]
        family: FamilyCommand,
        /// Print the game as JSON (also a valid game file) instead of YAML.
        #[arg(long, global = true)]
        json: bool,
    },
}

#[derive(Args, Debug, Clone)]
pub struct GameArgs {
    /// Game file (YAML).
    pub game: PathBuf,
    /// Print exactly one JSON object on stdout.
    #[arg(long)]
    pub json: bool,
    /// No progress output on stderr.
    #[arg(long, short)]
    pub quiet: bool,
    /// Run even when the size estimate says it would take very long.
    #[arg(long)]
    pub force: bool,
    /// Build game tables larger than the default memory limit.
    #[arg(long)]
    pub allow_large: bool,
}

#[derive(ValueEnum, Debug, Clone, Copy)]
pub enum SolverArg {
    Auto,
    Ipm,
    Clarabel,
}

impl SolverArg {
    fn resolve(self) -> SdpSolver {
        match self {
            SolverArg::Auto => SdpSolver::Auto,
            SolverArg::Ipm => SdpSolver::MomentIpm,
            SolverArg::Clarabel => SdpSolver::Clarabel,
        }
    }
}

#[derive(ValueEnum, Debug, Clone, Copy)]
pub enum MethodArg {
    Auto,
    Search,
    Milp,
}

#[derive(Subcommand, Debug)]
pub enum FamilyCommand {
    /// CHSH game (win iff a xor b = x·y).
    Chsh,
    /// CHSH expression in correlators, E00 + E01 + E10 − E11.
    ChshExpression,
    /// XOR game from a sign table.
    Xor {
        /// Rows separated by `;`, entries -1, 0 or 1 separated by `,` (e.g. "1,1;1,-1").
        #[arg(long, allow_hyphen_values = true)]
        signs: String,
    },
    /// Odd cycle game on n vertices.
    OddCycle {
        #[arg(long, default_value_t = 3)]
        n: usize,
    },
    /// Magic square game.
    MagicSquare,
    /// n-player GHZ parity game.
    Ghz {
        #[arg(long, default_value_t = 3)]
        players: usize,
    },
    /// CGLMP expression with d outcomes.
    Cglmp {
        #[arg(long, default_value_t = 3)]
        d: usize,
    },
    /// I3322 expression (Collins–Gisin form).
    I3322,
    /// Chained Bell expression with m settings.
    Chained {
        #[arg(long, default_value_t = 3)]
        m: usize,
    },
    /// Mermin's three-player expression.
    Mermin,
    /// k-fold parallel repetition of any game file.
    Product {
        /// The game to repeat.
        #[arg(long)]
        game: PathBuf,
        /// Number of rounds played in parallel.
        #[arg(long, default_value_t = 2)]
        rounds: usize,
    },
}

/// What a command produced: text for people, one JSON object for programs, warnings for stderr.
pub struct Output {
    pub text: String,
    pub json: Value,
    pub warnings: Vec<String>,
}

impl Cli {
    /// Every file the command reads (outputs may not replace them).
    pub fn inputs(&self) -> Vec<PathBuf> {
        let mut v = Vec::new();
        match &self.command {
            Command::Check(a) | Command::Nosignal(a) => v.push(a.game.clone()),
            Command::Classical { args, .. }
            | Command::Bounds { args, .. }
            | Command::Npa { args, .. }
            | Command::Seesaw { args, .. }
            | Command::Margin { args, .. }
            | Command::Randomness { args, .. } => v.push(args.game.clone()),
            Command::Evaluate { args, strategy, .. } => {
                v.push(args.game.clone());
                v.push(strategy.clone());
            }
            Command::Verify { args, certificate } => {
                v.push(args.game.clone());
                v.push(certificate.clone());
            }
            Command::Review { protocol, .. } => v.push(protocol.clone()),
            Command::Local { correlations, .. } => v.push(correlations.clone()),
            Command::Key { .. } => {}
            Command::Family { family, .. } => {
                if let FamilyCommand::Product { game, .. } = family {
                    v.push(game.clone());
                }
            }
        }
        v
    }

    pub fn wants_json(&self) -> bool {
        match &self.command {
            Command::Check(a) | Command::Nosignal(a) => a.json,
            Command::Classical { args, .. }
            | Command::Bounds { args, .. }
            | Command::Npa { args, .. }
            | Command::Seesaw { args, .. }
            | Command::Evaluate { args, .. }
            | Command::Verify { args, .. }
            | Command::Margin { args, .. }
            | Command::Randomness { args, .. } => args.json,
            Command::Key { json, .. } | Command::Review { json, .. } => *json,
            Command::Local { json, .. } | Command::Family { json, .. } => *json,
        }
    }
}

fn load(args: &GameArgs) -> Result<Game> {
    Game::from_file(
        &args.game.to_string_lossy(),
        CompileOptions {
            allow_large: args.allow_large,
        },
    )
}

/// Progress on stderr for long searches, only when a person is watching.
fn progress_printer(quiet: bool) -> Option<impl Fn(usize, usize) + Sync> {
    if quiet || !std::io::stderr().is_terminal() {
        return None;
    }
    let last = Mutex::new(Instant::now());
    Some(move |done: usize, total: usize| {
        let mut t = last.lock().unwrap_or_else(|e| e.into_inner());
        if t.elapsed().as_millis() >= 200 || done == total {
            *t = Instant::now();
            eprint!("\rclassical search: {done}/{total} subtrees");
            if done == total {
                eprint!("\r{:40}\r", "");
            }
        }
    })
}

/// A heads-up before a search that is estimated to take long (but not so long it is refused).
fn warn_long_search(s: &bellgap::Scenario, force: bool, warnings: &mut Vec<String>) {
    if ClassicalEstimate::of(s).search_work < 1e9 {
        return;
    }
    let p = classical::estimate_search(s);
    if p.seconds > 30.0 && (force || p.seconds <= classical::SEARCH_SECONDS_LIMIT) {
        warnings.push(format!(
            "the classical search may take about {} (estimate from random probes: {:.1e} nodes)",
            bellgap::limits::human_seconds(p.seconds),
            p.nodes
        ));
    }
}

fn classical_for(
    game: &Game,
    args: &GameArgs,
    choice: Choice,
) -> Result<classical::ClassicalValue> {
    let printer = progress_printer(args.quiet || args.json);
    let progress = printer.as_ref().map(|p| p as classical::Progress);
    classical::classical_value(&game.scenario, choice, args.force, progress)
}

pub fn run(cli: &Cli) -> Result<Output> {
    let inputs = cli.inputs();
    match &cli.command {
        Command::Check(args) => {
            let game = load(args)?;
            let mut r = Report::new("check", &game);
            r.sizes = true;
            Ok(game_output(&r))
        }
        Command::Classical { args, method } => {
            let game = load(args)?;
            let choice = match method {
                MethodArg::Auto => Choice::Auto,
                MethodArg::Search => Choice::Search,
                MethodArg::Milp => Choice::Milp,
            };
            let mut early = Vec::new();
            if !matches!(choice, Choice::Milp) {
                warn_long_search(&game.scenario, args.force, &mut early);
            }
            print_early(&early, args.quiet);
            let mut r = Report::new("classical", &game);
            let printer = progress_printer(args.quiet || args.json);
            let progress = printer.as_ref().map(|p| p as classical::Progress);
            r.classical = Some(classical::classical_value_or_incumbent(
                &game.scenario,
                choice,
                args.force,
                progress,
            )?);
            Ok(game_output(&r))
        }
        Command::Nosignal(args) => {
            let game = load(args)?;
            let mut r = Report::new("nosignal", &game);
            r.no_signalling = Some(nosignal::no_signalling_value(&game.scenario, args.force)?);
            Ok(game_output(&r))
        }
        Command::Bounds {
            args,
            level,
            solver,
        } => {
            let game = load(args)?;
            let mut early = Vec::new();
            warn_long_search(&game.scenario, args.force, &mut early);
            print_early(&early, args.quiet);
            let mut r = Report::new("bounds", &game);
            // A classical value that cannot be obtained exactly (too large, or a MILP stopped
            // at its time limit) is listed, and the other bounds are still reported.
            match classical_for(&game, args, Choice::Auto) {
                Ok(c) => r.classical = Some(c),
                Err(e @ (Error::Solver { .. } | Error::TooLarge { .. })) => {
                    r.failures.push(format!("classical value: {e}"))
                }
                Err(e) => return Err(e),
            }
            r.no_signalling = Some(nosignal::no_signalling_value(&game.scenario, args.force)?);
            // In `bounds` a quantum bound that cannot be obtained is reported as such, and the
            // other bounds still are.
            let level = match level {
                Some(l) => Some(Level::parse(l)?),
                None => npa::default_level(&game.scenario).ok(),
            };
            match level
                .map(|l| npa::npa_bound_with(&game.scenario, &l, args.force, solver.resolve()))
            {
                Some(Ok(b)) => r.npa = Some(b),
                Some(Err(e)) => r.failures.push(format!("NPA upper bound: {e}")),
                None => r
                    .failures
                    .push("NPA upper bound: no standard level fits this game".into()),
            }
            let opts = SeesawOptions {
                dims: seesaw::default_dims(&game.scenario),
                force: args.force,
                ..Default::default()
            };
            if !args.quiet {
                warn_slow_seesaw(&game.scenario, &opts);
            }
            match seesaw::seesaw(&game.scenario, &opts, None) {
                Ok(found) => {
                    r.strategy_analysis = Some(analyse(
                        &game,
                        &found.strategy,
                        r.classical.as_ref().map(|c| c.value),
                    ));
                    r.seesaw = Some(found);
                }
                Err(e) => r.failures.push(format!("see-saw lower bound: {e}")),
            }
            r.reconcile_bounds();
            Ok(game_output(&r))
        }
        Command::Seesaw {
            args,
            dim,
            dims,
            restarts,
            seed,
            save,
            svg,
        } => {
            let game = load(args)?;
            let dims = match (dim, dims) {
                (Some(d), _) => vec![*d; game.scenario.players()],
                (None, Some(ds)) => ds.clone(),
                (None, None) => seesaw::default_dims(&game.scenario),
            };
            let opts = SeesawOptions {
                dims,
                restarts: *restarts,
                seed: *seed,
                force: args.force,
                ..Default::default()
            };
            if !args.quiet {
                warn_slow_seesaw(&game.scenario, &opts);
            }
            let printer = restart_printer(args.quiet || args.json);
            let found = seesaw::seesaw(
                &game.scenario,
                &opts,
                printer
                    .as_ref()
                    .map(|p| p as &(dyn Fn(usize, usize) + Sync)),
            )?;
            if let Some(file) = save {
                let text = readable_yaml(&found.strategy.to_yaml_value(&game.scenario));
                write_file(file, &text, &inputs)?;
            }
            let classical = classical::classical_value(&game.scenario, Choice::Auto, false, None)
                .ok()
                .map(|c| c.value);
            if let Some(file) = svg {
                write_file(
                    file,
                    &robustness_chart(&game, &found.strategy, classical),
                    &inputs,
                )?;
            }
            let mut r = Report::new("seesaw", &game);
            r.strategy_analysis = Some(analyse(&game, &found.strategy, classical));
            r.seesaw = Some(found);
            Ok(game_output(&r))
        }
        Command::Evaluate {
            args,
            strategy,
            svg,
            no_classical,
        } => {
            let game = load(args)?;
            let st = QuantumStrategy::from_file(&strategy.to_string_lossy(), &game.scenario)?
                .made_valid();
            let mut early = Vec::new();
            let classical = if *no_classical {
                None
            } else {
                // Said before it starts: the robustness figures need the exact classical value.
                if ClassicalEstimate::of(&game.scenario).search_work > 1e9 {
                    early.push("computing the exact classical value for the robustness figures (pass --no-classical to skip)".to_string());
                }
                warn_long_search(&game.scenario, args.force, &mut early);
                print_early(&early, args.quiet);
                classical::classical_value(&game.scenario, Choice::Auto, args.force, None)
                    .ok()
                    .map(|c| c.value)
            };
            if let Some(file) = svg {
                write_file(file, &robustness_chart(&game, &st, classical), &inputs)?;
            }
            let mut r = Report::new("evaluate", &game);
            // The value reported is that of the strategy made exactly valid (within the file
            // check's tolerances), with the evaluation's error term.
            r.evaluated = Some(st.certified_value(&game.scenario));
            r.strategy_analysis = Some(analyse(&game, &st, classical));
            Ok(game_output(&r))
        }
        Command::Npa {
            args,
            level,
            certificate,
            svg,
            solver,
        } => {
            let game = load(args)?;
            let mut r = Report::new("npa", &game);
            let levels = level
                .split(';')
                .filter(|l| !l.trim().is_empty())
                .map(Level::parse)
                .collect::<Result<Vec<_>>>()?;
            if levels.is_empty() {
                return Err(Error::Usage("no NPA level given".into()));
            }
            // Every level is built and size-checked before any is solved, so a refusal comes
            // first and not after hours of work on the others.
            let relaxations = levels
                .iter()
                .map(|l| {
                    let start = Instant::now();
                    npa::sized_relaxation(&game.scenario, l, args.force, solver.resolve())
                        .map(|(r, _)| (r, start.elapsed().as_secs_f64()))
                })
                .collect::<Result<Vec<_>>>()?;
            // A level that fails (solver) after others finished keeps what finished.
            let mut bounds = Vec::new();
            for (relaxation, build_seconds) in &relaxations {
                match npa::solve_relaxation(relaxation, solver.resolve(), *build_seconds) {
                    Ok(b) => bounds.push(b),
                    Err(e) if levels.len() > 1 => r
                        .failures
                        .push(format!("NPA level {}: {e}", relaxation.level.name())),
                    Err(e) => return Err(e),
                }
            }
            if bounds.is_empty() {
                return Err(Error::solver("NPA", r.failures.join("; ")));
            }
            if let Some(file) = svg {
                let chart = plot::category_chart(
                    &format!("NPA bound by level, {}", game.name),
                    "level",
                    &bounds.iter().map(|b| b.level.clone()).collect::<Vec<_>>(),
                    "verified upper bound",
                    &[plot::Series {
                        name: "verified".into(),
                        points: bounds
                            .iter()
                            .enumerate()
                            .map(|(k, b)| ((k + 1) as f64, b.verified_upper))
                            .collect(),
                    }],
                );
                write_file(file, &chart, &inputs)?;
            }
            let bound = bounds
                .pop()
                .ok_or_else(|| Error::Usage("no NPA level given".into()))?;
            r.npa_levels = bounds;
            if let Some(file) = certificate {
                let cert = npa::Certificate::new(&game.name, &game.scenario, &bound)
                    .ok_or_else(|| Error::solver("NPA", "no dual solution to save"))?;
                let text = serde_json::to_string(&cert)
                    .map_err(|e| Error::solver("NPA", e.to_string()))?;
                write_file(file, &text, &inputs)?;
            }
            r.npa = Some(bound);
            r.note_best_level();
            Ok(game_output(&r))
        }
        Command::Margin {
            args,
            rounds,
            wins,
            score_sum,
            score_range,
            alpha,
            target_p_value,
            expected,
        } => {
            let game = load(args)?;
            if let Some(r) = score_range {
                if r.len() != 2 {
                    return Err(Error::Usage(format!(
                        "--score-range takes two numbers, LO,HI; got {}",
                        r.len()
                    )));
                }
            }
            let obs = finite::observation(
                &game.scenario,
                &finite::ObservedRun {
                    rounds: *rounds,
                    wins: *wins,
                    score_sum: *score_sum,
                    score_range: score_range.as_ref().map(|r| (r[0], r[1])),
                },
            )?;
            let classical = classical_for(&game, args, Choice::Auto)?.value;
            let m = finite::margin(&obs, classical, *alpha, *target_p_value, *expected)?;
            Ok(Output {
                text: report::margin_text(&game, &m),
                json: report::margin_json(&game, &m),
                warnings: game.warnings.clone(),
            })
        }
        Command::Randomness {
            args,
            score,
            sweep,
            player,
            question,
            with_player,
            with_question,
            level,
            svg,
        } => {
            let game = load(args)?;
            let s = &game.scenario;
            let pick = |name: Option<&String>,
                        q: Option<i64>,
                        default_player: usize|
             -> Result<(usize, usize)> {
                let p = match name {
                    Some(n) => s
                        .parties
                        .iter()
                        .position(|p| &p.name == n)
                        .ok_or_else(|| Error::Usage(format!("there is no player `{n}`")))?,
                    None => default_player,
                };
                let x = match q {
                    Some(l) => s.parties[p]
                        .question_labels
                        .iter()
                        .position(|&k| k == l)
                        .ok_or_else(|| {
                            Error::Usage(format!("{} has no question {l}", s.parties[p].name))
                        })?,
                    None => 0,
                };
                Ok((p, x))
            };
            let mut parts = vec![pick(player.as_ref(), *question, 0)?];
            if with_player.is_some() {
                parts.push(pick(with_player.as_ref(), *with_question, 1)?);
            }
            let target = Target { parts };
            let level = Level::parse(level)?;
            let scores: Vec<f64> = match (score, sweep) {
                (_, Some(spec)) => parse_sweep(spec)?,
                (Some(v), None) => vec![*v],
                (None, None) => unreachable!("clap requires one"),
            };
            // A point of a sweep that cannot be certified (e.g. above the quantum maximum) is
            // reported and the sweep goes on; a single score that fails is an error.
            let mut results = Vec::new();
            let mut failures = Vec::new();
            for &v in &scores {
                match randomness::guessing_probability(s, &target, v, &level) {
                    Ok(r) => results.push(r),
                    Err(e) if scores.len() > 1 && !matches!(e, Error::TooLarge { .. }) => {
                        failures.push(format!("score {v}: {e}"))
                    }
                    Err(e) => return Err(e),
                }
            }
            if results.is_empty() {
                return Err(Error::Usage(format!(
                    "no score of the sweep could be certified: {}",
                    failures.join("; ")
                )));
            }
            if let Some(file) = svg {
                let chart = plot::line_chart(
                    &format!("Certified min-entropy, {}", game.name),
                    "score",
                    "min-entropy per round (bits)",
                    &[plot::Series {
                        name: "min-entropy".into(),
                        points: results.iter().map(|r| (r.score, r.min_entropy)).collect(),
                    }],
                );
                write_file(file, &chart, &inputs)?;
            }
            let mut text = report::randomness_text(&game, &target, &results);
            let mut json = report::randomness_json(&game, &target, &results);
            if !failures.is_empty() {
                for f in &failures {
                    text += &format!("not obtained: {f}\n");
                }
                json["not_obtained"] = json!(failures);
            }
            Ok(Output {
                text,
                json,
                warnings: game.warnings.clone(),
            })
        }
        Command::Key { chsh, qber, .. } => {
            let k = key::key_rate(&key::ChshEntropyBound, *chsh, *qber)?;
            let threshold = key::chsh_threshold_qber();
            Ok(Output {
                text: report::key_text(&k, threshold),
                json: report::key_json(&k, threshold),
                warnings: Vec::new(),
            })
        }
        Command::Review {
            protocol,
            markdown,
            output,
            json,
        } => {
            let mut r = review::review(&protocol.to_string_lossy())?;
            r.command_line = std::env::args().collect::<Vec<_>>().join(" ");
            let mut inputs = inputs.clone();
            inputs.push(PathBuf::from(&r.game.source));
            let doc = if *markdown {
                r.to_markdown()
            } else {
                r.to_html()
            };
            let text = match output {
                Some(file) => {
                    write_file(file, &doc, &inputs)?;
                    format!("review written to {}\n", file.to_string_lossy())
                }
                None => doc,
            };
            let _ = json;
            Ok(Output {
                text,
                json: r.to_json(),
                warnings: r.game.warnings.clone(),
            })
        }
        Command::Verify { args, certificate } => {
            let game = load(args)?;
            let path = certificate.to_string_lossy().to_string();
            let text = bellgap::formats::files::read_text(certificate)?;
            let cert: npa::Certificate = serde_json::from_str(&text).map_err(|e| Error::Input {
                location: bellgap::error::Location {
                    file: path.clone(),
                    line: Some(e.line()),
                    column: Some(e.column()),
                    field: None,
                },
                message: format!("not a certificate: {e}"),
            })?;
            let v = npa::verify(&game.scenario, &cert, args.force).map_err(|e| e.in_file(&path))?;
            Ok(Output {
                text: report::verification_text(&game, &path, &v),
                json: report::verification_json(&game, &path, &v),
                warnings: game.warnings.clone(),
            })
        }
        Command::Local {
            correlations,
            save,
            force,
            json: _,
        } => {
            let path = correlations.to_string_lossy().to_string();
            let c = Correlations::from_file(&path)?;
            let report = locality_test(&c, *force)?;
            let mut saved = None;
            if let (Some(file), Some(sep)) = (save, &report.separating) {
                let spec = expression_as_game(&c, sep);
                write_file(file, &spec.to_yaml(), &inputs)?;
                saved = Some(file.to_string_lossy().to_string());
            }
            let mut json = report::locality_json(&c.name, &report);
            json["saved"] = json!(saved);
            Ok(Output {
                text: report::locality_text(&c.name, &report, saved.as_deref()),
                json,
                warnings: Vec::new(),
            })
        }
        Command::Family { family, json: _ } => {
            let spec = family_spec(family)?;
            // A family must always compile; checking here keeps `games/` honest.
            Game::from_spec(&spec, "family")?;
            Ok(Output {
                text: spec.to_yaml(),
                json: serde_json::to_value(&spec).map_err(|e| Error::Usage(e.to_string()))?,
                warnings: Vec::new(),
            })
        }
    }
}

/// Writes an output atomically, never over one of the command's inputs.
fn write_file(file: &std::path::Path, text: &str, inputs: &[PathBuf]) -> Result<()> {
    let inputs: Vec<&std::path::Path> = inputs.iter().map(PathBuf::as_path).collect();
    bellgap::formats::files::write_atomic(file, text, &inputs)
}

/// Value of a strategy against visibility and detection efficiency, with the classical value.
fn robustness_chart(game: &Game, st: &QuantumStrategy, classical: Option<f64>) -> String {
    let s = &game.scenario;
    let (value, noise) = (st.value(s), st.noise_value(s));
    let grid: Vec<f64> = (0..=50).map(|k| k as f64 / 50.0).collect();
    let mut series = vec![
        plot::Series {
            name: "white-noise visibility".into(),
            points: grid
                .iter()
                .map(|&v| (v, v * value + (1.0 - v) * noise))
                .collect(),
        },
        plot::Series {
            name: "detection efficiency".into(),
            points: grid.iter().map(|&e| (e, st.lossy(e).value(s))).collect(),
        },
    ];
    if let Some(c) = classical {
        series.push(plot::Series {
            name: "classical value".into(),
            points: vec![(0.0, c), (1.0, c)],
        });
    }
    plot::line_chart(
        &format!("Strategy value, {}", game.name),
        "visibility / detection efficiency",
        "value",
        &series,
    )
}

/// A heads-up before a see-saw estimated to take long (a rule of thumb, see
/// [`seesaw::estimate_seconds`]); runs estimated above an hour are refused by the library.
fn warn_slow_seesaw(s: &bellgap::Scenario, opts: &SeesawOptions) {
    let seconds = seesaw::estimate_seconds(s, opts);
    if seconds > 30.0 {
        eprintln!(
            "warning: the see-saw may take roughly {} (rule of thumb)",
            bellgap::limits::human_seconds(seconds)
        );
    }
}

/// A command-line number that must be finite (NaN and ±inf are refused at the edge).
fn parse_finite(text: &str) -> std::result::Result<f64, String> {
    let v: f64 = text
        .trim()
        .parse()
        .map_err(|_| format!("`{text}` is not a number"))?;
    if v.is_finite() {
        Ok(v)
    } else {
        Err(format!("`{text}` is not a finite number"))
    }
}

/// `LOW:HIGH:POINTS` → evenly spaced scores.
fn parse_sweep(spec: &str) -> Result<Vec<f64>> {
    let parts: Vec<&str> = spec.split(':').collect();
    let bad = || Error::Usage(format!("--sweep expects LOW:HIGH:POINTS, got `{spec}`"));
    if parts.len() != 3 {
        return Err(bad());
    }
    let lo: f64 = parts[0].trim().parse().map_err(|_| bad())?;
    let hi: f64 = parts[1].trim().parse().map_err(|_| bad())?;
    let n: usize = parts[2].trim().parse().map_err(|_| bad())?;
    if !(2..=1000).contains(&n) || hi <= lo {
        return Err(bad());
    }
    Ok((0..n)
        .map(|k| lo + (hi - lo) * k as f64 / (n - 1) as f64)
        .collect())
}

/// Entanglement of the state and, when the classical value is known, robustness thresholds.
fn analyse(game: &Game, st: &QuantumStrategy, classical: Option<f64>) -> report::StrategyAnalysis {
    report::StrategyAnalysis {
        bipartitions: analysis::bipartitions(&game.scenario, st),
        robustness: classical.map(|c| analysis::robustness(&game.scenario, st, c)),
        classical,
    }
}

/// Progress of see-saw restarts on stderr, only when a person is watching.
fn restart_printer(quiet: bool) -> Option<impl Fn(usize, usize) + Sync> {
    if quiet || !std::io::stderr().is_terminal() {
        return None;
    }
    Some(move |done: usize, total: usize| {
        eprint!("\rsee-saw: {done}/{total} restarts");
        if done == total {
            eprint!("\r{:40}\r", "");
        }
    })
}

fn print_early(warnings: &[String], quiet: bool) {
    if !quiet {
        for w in warnings {
            eprintln!("warning: {w}");
        }
    }
}

fn game_output(r: &Report) -> Output {
    Output {
        text: r.to_text(),
        json: r.to_json(),
        warnings: r.game.warnings.clone(),
    }
}

fn family_spec(f: &FamilyCommand) -> Result<GameSpec> {
    Ok(match f {
        FamilyCommand::Chsh => families::chsh(),
        FamilyCommand::ChshExpression => families::chsh_expression(),
        FamilyCommand::Xor { signs } => families::xor_game(&families::parse_sign_table(signs)?)?,
        FamilyCommand::OddCycle { n } => families::odd_cycle(*n)?,
        FamilyCommand::MagicSquare => families::magic_square(),
        FamilyCommand::Ghz { players } => families::ghz(*players)?,
        FamilyCommand::Cglmp { d } => families::cglmp(*d)?,
        FamilyCommand::I3322 => families::i3322(),
        FamilyCommand::Chained { m } => families::chained_bell(*m)?,
        FamilyCommand::Mermin => families::mermin(),
        FamilyCommand::Product { game, rounds } => {
            let path = game.to_string_lossy().to_string();
            let g = Game::from_file(&path, CompileOptions::default())?;
            product::parallel_repetition(&g.scenario, &g.name, *rounds)?
        }
    })
}
