//! What the user can type: the commands and options (clap), with long help beside the options
//! users get wrong. Nothing here interprets a value beyond its syntax; [`super::request`] turns
//! what was typed into a typed request.

use std::path::PathBuf;

use clap::{Args, Parser, Subcommand, ValueEnum};

const LEVEL_HELP: &str = "NPA level: which operator words index the moment matrix.

`1`, `2`, `3`, ...: every word of at most that length. `1+joint`: level 1 plus the products of one operator per player (for two players the level usually written 1+AB); it is often nearly as tight as level 2 and much cheaper. A list of player letters such as `1 A B AB AAB` gives the words of those patterns (A is the first player).

Several levels separated by `;` (e.g. \"1;1+joint;2\") are built and size-checked before any is solved, then solved in order; every level's verified bound is valid, and the smallest is reported as the best.

The moment matrix grows quickly with the level (roughly (questions·(answers−1))^level words per player). Levels whose matrix would be too large are refused before anything is built, with the estimate; see --force.";

const ONE_LEVEL_HELP: &str = "NPA level of the relaxation: which operator words index the moment matrix (one level; `;` lists are for `npa`).

`1`, `2`, `3`, ...: every word of at most that length. `1+joint`: level 1 plus the products of one operator per player (for two players the level usually written 1+AB). A list of player letters such as `1 A B AB AAB` gives the words of those patterns (A is the first player).

Levels whose matrix would be too large are refused before anything is built, with the estimate; see --force.";

const SYMMETRY_HELP: &str = "Reduce the NPA relaxation by the game's symmetries.

`auto` (default): find the relabellings of players, questions and answers that leave the game's value unchanged on every no-signalling behaviour (as `check` reports them: the table's own symmetries and, for example, flips of answers that the table writes differently but that give the same value), merge the moments that the group maps onto each other, and solve the smaller problem. The value is the same as without the reduction. The verified bound does not rely on it: the smaller problem's dual is averaged over the group and checked on the full problem, and a saved certificate is in the full problem's format. A game without symmetry, a level whose words a symmetry does not preserve, or a reduction estimated to cost more than the full problem, is solved in full.

`off`: always solve the full relaxation.";

const SOLVER_HELP: &str = "SDP solver of the NPA bound.

`auto` (default) picks from cost estimates: the moment-matrix interior-point method (`ipm`) for large moment matrices, clarabel for small ones, falling back to the other if the first fails (clarabel only when it fits in memory and time); the first-order method when the interior-point method would need more than 4 GiB, or over two minutes and eight times the first-order estimate. On a full (unreduced) relaxation that the first-order method is expected to finish sooner, it goes first and hands over to the interior-point method when its own convergence forecast exceeds twice the interior-point estimate.

`ipm`: our interior-point method on the moment matrix's Schur complement, usually 30–460 times faster than clarabel on NPA problems, but its memory grows as the square of the number of moments. `clarabel`: a general conic solver, accurate but slow and memory-hungry on large matrices. `first-order`: an accelerated ADMM on the moment matrix (one eigendecomposition per iteration, memory proportional to the matrix), for relaxations the others cannot hold; it converges fast on well-posed problems and slowly on degenerate ones, shows its progress, and stops at --budget if given.

Whichever runs, the reported bound is verified from the dual solution with every floating-point error charged, so the choice changes speed, never the honesty of the number.";

const BUDGET_HELP: &str = "Time limit, in seconds, for the first-order solver (`--solver first-order`, or `auto` when it picks that solver; the other solvers ignore it).

When the limit is reached the run stops and reports the verified bound of the point it has: still a rigorous upper bound on the quantum value, with every residual charged, but looser than a converged run's. The output marks it as stopped at the time limit and never as solved.";

const BOUNDS_BUDGET_HELP: &str = "Wall-clock seconds for the whole command.

Each bound is started only if its estimate fits in what is left: a classical search estimated to take longer is not started, an NPA relaxation the interior-point method would take longer on is solved by the first-order method, stopped at the time left with the verified bound it has reached (marked as stopped at the time limit, never as solved), and the see-saw starts no restart once the time is up (the report says how many ran). A bound not obtained is listed as such. The no-signalling LP always runs.";

const FORCE_HELP: &str = "Run even when the estimate says the work would take very long or need much memory.

Every command estimates its time and memory before starting (the classical search from random probes, the NPA moment matrix from its size, the see-saw from a rule of thumb) and refuses with the estimate when it is above its default limit (about an hour or 16 GiB for the searches and SDPs, a number of nonzeros for the LPs). --force starts the work anyway.

It does not lift the hard ceilings that protect the machine (e.g. 50,000 words for an NPA matrix, 2^30 table entries), and it never makes a number less honest: a solver stopped early is still reported as what it is.";

const SCORE_HELP: &str = "The observed score, in the game's own units.

For a game with a win predicate this is the winning probability (e.g. 0.85 for CHSH); for a Bell expression it is the expression's value (e.g. 2.7 for the CHSH expression in correlators, whose classical bound is 2).

The adversary's guessing probability is bounded over every quantum behaviour reaching at least this score. A score above the NPA bound is refused (no quantum device reaches it); a score at or below the classical value certifies nothing (min-entropy 0).";

const ENTROPY_SCORE_HELP: &str = "The observed score, in the game's own units.

For a game with a win predicate this is the winning probability (e.g. 0.85 for CHSH); for a Bell expression it is the expression's value (e.g. 2.7 for the CHSH expression in correlators, whose classical bound is 2).

The conditional von Neumann entropy H(A|X=x, E) is bounded below over every quantum behaviour reaching at least this score. A score above the NPA bound is refused (no quantum device reaches it); a score at or below the classical value certifies nothing (a bound of 0 bits).";

#[derive(Parser, Debug)]
#[command(
    name = "bellgap",
    version,
    about = "Bounds for nonlocal games and Bell expressions: classical, quantum (explicit strategies and verified NPA upper bounds) and no-signalling values, the gaps between them, and what an observed run certifies",
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
    Nosignal {
        #[command(flatten)]
        args: GameArgs,
        /// Write an optimal no-signalling behaviour as a correlations file (exact fractions when
        /// the LP's solution reads as one, checked exactly).
        #[arg(long, value_name = "FILE")]
        save: Option<PathBuf>,
    },
    /// Every bound available, then the gaps between them.
    Bounds {
        #[command(flatten)]
        args: GameArgs,
        /// NPA level for the quantum upper bound (default: chosen from the size estimate).
        #[arg(long, long_help = LEVEL_HELP)]
        level: Option<String>,
        /// SDP solver for the NPA bound.
        #[arg(long, value_enum, default_value_t = SolverArg::Auto, long_help = SOLVER_HELP)]
        solver: SolverArg,
        /// Reduce the NPA relaxation by the game's symmetries (`auto`) or solve it in full (`off`).
        #[arg(long, value_enum, default_value_t = SymmetryArg::Auto, long_help = SYMMETRY_HELP)]
        symmetry: SymmetryArg,
        /// Wall-clock seconds for the whole command: bounds estimated to need more than what is
        /// left are not started, and the NPA bound and see-saw stop at the time left.
        #[arg(long, value_name = "SECONDS", value_parser = parse_finite, long_help = BOUNDS_BUDGET_HELP)]
        budget: Option<f64>,
        /// Bounds not to compute, comma separated.
        #[arg(long, value_enum, value_delimiter = ',')]
        skip: Vec<BoundArg>,
        /// Print each bound as soon as it is obtained, as one JSON object per line (the report so
        /// far, with `obtained` naming the bound), then the whole report as the last line.
        #[arg(long)]
        json_lines: bool,
        /// Print the bounds as a table to paste into a paper instead of the report (upper
        /// bounds rounded up, lower bounds down).
        #[arg(long, value_enum, conflicts_with_all = ["json", "json_lines"])]
        table: Option<TableArg>,
        #[command(flatten)]
        seesaw: SeesawArgs,
    },
    /// Quantum upper bound from the NPA hierarchy, with a verified bound from the dual solution.
    Npa {
        #[command(flatten)]
        args: GameArgs,
        /// `1`, `2`, ... (all words up to that length), `1+joint` (level 1 plus products of one
        /// operator per player), or patterns of player letters such as "1 A B AB AA". Several
        /// levels separated by `;` are compared (e.g. "1;1+joint;2").
        #[arg(long, default_value = "1+joint", long_help = LEVEL_HELP)]
        level: String,
        /// Write the dual certificate (JSON) of the last level here; `bellgap verify` re-checks it.
        #[arg(long, value_name = "FILE")]
        certificate: Option<PathBuf>,
        /// Write the last level's bound as a plain certificate (text, exact fractions) that
        /// `scripts/check_certificate.py` re-proves with Python's standard library alone.
        #[arg(long, value_name = "FILE")]
        exact_certificate: Option<PathBuf>,
        /// Print the levels' verified bounds as a table to paste into a paper instead of the
        /// report (rounded up).
        #[arg(long, value_enum, conflicts_with = "json")]
        table: Option<TableArg>,
        /// Write the last level's full relaxation in the SDPA sparse format (FILE) and its
        /// moment map (FILE.words), for external solvers; `verify --sdpa-level` reads their
        /// solutions back.
        #[arg(long, value_name = "FILE")]
        sdpa: Option<PathBuf>,
        /// Plot the verified bound against the level (SVG), when comparing levels.
        #[arg(long, value_name = "FILE")]
        svg: Option<PathBuf>,
        /// SDP solver: our interior-point method (`ipm`), `clarabel`, our first-order method
        /// (`first-order`), or `auto` (chosen from cost estimates, with fallbacks).
        #[arg(long, value_enum, default_value_t = SolverArg::Auto, long_help = SOLVER_HELP)]
        solver: SolverArg,
        /// Reduce the relaxation by the game's symmetries (`auto`) or solve it in full (`off`).
        #[arg(long, value_enum, default_value_t = SymmetryArg::Auto, long_help = SYMMETRY_HELP)]
        symmetry: SymmetryArg,
        /// Stop the first-order solver after this many seconds and report the verified bound it
        /// has reached (marked as stopped at the time limit).
        #[arg(long, value_name = "SECONDS", long_help = BUDGET_HELP)]
        budget: Option<f64>,
    },
    /// Explicit quantum strategy by see-saw: a lower bound on the quantum value.
    Seesaw {
        #[command(flatten)]
        args: GameArgs,
        #[command(flatten)]
        seesaw: SeesawArgs,
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
        /// Divide the strategy's state by its norm before checking it (for amplitudes written
        /// rounded, such as 0.7071).
        #[arg(long)]
        normalise: bool,
    },
    /// The best honest implementation under noise (visibility, detection efficiency, dark
    /// counts) for a figure, and the least efficiency or visibility at which the figure is
    /// positive.
    Design {
        #[command(flatten)]
        args: GameArgs,
        /// The figure to maximise: the margin over the classical value, the certified
        /// min-entropy, the von Neumann entropy bound, or the Devetak–Winter key rate.
        #[arg(long, value_enum, default_value = "margin")]
        figure: FigureArg,
        /// Detection efficiency in (0, 1]: one for every player, or one per player, comma
        /// separated.
        #[arg(long, value_delimiter = ',', allow_hyphen_values = true, value_parser = parse_finite)]
        efficiency: Vec<f64>,
        /// Visibility in [0, 1]: the weight of the intended state against white noise.
        #[arg(long, default_value_t = 1.0, allow_hyphen_values = true, value_parser = parse_finite)]
        visibility: f64,
        /// Probability in [0, 1] that a round without a click registers a uniformly random
        /// answer.
        #[arg(long, default_value_t = 0.0, allow_hyphen_values = true, value_parser = parse_finite)]
        dark_counts: f64,
        /// What a round without a click is reported as: `best` (the best assignment per player
        /// and question), an answer label used by every player, or `extra` (each player's last
        /// answer means "no click" and a clicking detector never reports it).
        #[arg(long, default_value = "best", allow_hyphen_values = true)]
        no_click: String,
        /// Which states the search may use.
        #[arg(long, value_enum, default_value = "optimised")]
        state: StateArg,
        /// Search for the least value of this parameter at which the figure is positive
        /// (bisection, re-optimising at each point), instead of one noise level.
        #[arg(long, value_enum)]
        threshold: Option<NoiseParameterArg>,
        /// Width of the threshold's final bracket.
        #[arg(long, default_value_t = 1e-3, value_parser = parse_finite)]
        tolerance: f64,
        /// Points of the figure-against-noise curve besides the bisection's own.
        #[arg(long, default_value_t = 10)]
        curve_points: usize,
        #[command(flatten)]
        answers: KeyAnswerArgs,
        /// Key rate: the other player, whose answers the key is reconciled with.
        #[arg(long)]
        key_with: Option<String>,
        /// Key rate: that player's question (label; default: the first).
        #[arg(long, allow_hyphen_values = true, requires = "key_with")]
        key_question: Option<i64>,
        /// NPA level of the min-entropy's guessing-probability SDP.
        #[arg(long, default_value = "2", long_help = ONE_LEVEL_HELP)]
        randomness_level: String,
        #[command(flatten)]
        hierarchy: HierarchyArgs,
        #[command(flatten)]
        seesaw: SeesawArgs,
        /// Write the implementation (state and measurements, before noise) to this file.
        #[arg(long, value_name = "FILE")]
        save: Option<PathBuf>,
        /// Plot the figure against the noise parameter (SVG; with --threshold).
        #[arg(long, value_name = "FILE", requires = "threshold")]
        svg: Option<PathBuf>,
    },
    /// Self-testing: a verified lower bound on the fidelity of the devices' state (extracted by
    /// local SWAP isometries) with a target state, from a score, a behaviour or counts (two
    /// players, two questions each).
    SelfTest {
        #[command(flatten)]
        args: GameArgs,
        /// The score (in the game's own units): the bound holds for every quantum behaviour
        /// scoring at least this.
        #[arg(long, allow_hyphen_values = true, value_parser = parse_finite, required_unless_present_any = ["behaviour", "counts"], conflicts_with_all = ["behaviour", "counts"])]
        score: Option<f64>,
        /// Condition on a behaviour instead: a correlations file (with rounds, the confidence
        /// region of the counts they stand for; without, every behaviour within 1e-6).
        #[arg(long, value_name = "FILE", conflicts_with = "counts")]
        behaviour: Option<PathBuf>,
        /// Condition on a lab's counts instead: every quantum behaviour in their confidence
        /// region (error `--alpha`).
        #[arg(long, value_name = "FILE")]
        counts: Option<PathBuf>,
        /// The confidence region's error probability (with --counts).
        #[arg(long, default_value_t = 1e-6, value_parser = parse_finite)]
        alpha: f64,
        /// The target's four real amplitudes of |00⟩, |01⟩, |10⟩, |11⟩, comma separated
        /// (default: the state the see-saw's best strategy extracts to).
        #[arg(long, value_delimiter = ',', allow_hyphen_values = true, value_parser = parse_finite, conflicts_with = "strategy")]
        target: Option<Vec<f64>>,
        /// Take the target from this strategy file's extracted state instead.
        #[arg(long, value_name = "FILE")]
        strategy: Option<PathBuf>,
        /// The question labels whose measurements build each player's Z and X: the first
        /// player's two, then the second's (default: each player's first two).
        #[arg(long, value_delimiter = ',', allow_hyphen_values = true)]
        questions: Option<Vec<i64>>,
        /// The NPA level (default: `1 A B AA AB BB AAB ABB AABB`).
        #[arg(long, long_help = ONE_LEVEL_HELP)]
        level: Option<String>,
        #[command(flatten)]
        seesaw: SeesawArgs,
    },
    /// What an observed score over n rounds certifies: confidence bounds, margin over the
    /// classical value, p-value of classical devices, rounds needed.
    Margin {
        #[command(flatten)]
        args: GameArgs,
        /// Number of rounds played.
        #[arg(long, required_unless_present = "counts")]
        rounds: Option<u64>,
        /// The lab's counts instead of a summary: a counts file (per joint question, the rounds
        /// and the count of each joint answer, no-clicks binned as the file says); the
        /// per-round estimator is stated in the output.
        #[arg(long, value_name = "FILE", conflicts_with_all = ["rounds", "wins", "score_sum", "score_range"])]
        counts: Option<PathBuf>,
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
        #[arg(long, allow_hyphen_values = true, required_unless_present_any = ["sweep", "counts"], value_parser = parse_finite, long_help = SCORE_HELP)]
        score: Option<f64>,
        /// Sweep the score: LOW:HIGH:POINTS.
        #[arg(long, conflicts_with = "counts")]
        sweep: Option<String>,
        /// A lab's counts instead of a score: the bound at their lower confidence score (exact
        /// binomial for a win/lose game, Hoeffding otherwise; error `--alpha`, i.i.d. rounds).
        #[arg(long, value_name = "FILE", conflicts_with = "score")]
        counts: Option<PathBuf>,
        /// The lower confidence score's error probability (with --counts).
        #[arg(long, default_value_t = 1e-6, value_parser = parse_finite)]
        alpha: f64,
        #[command(flatten)]
        answers: AnswerArgs,
        /// NPA level of the relaxation.
        #[arg(long, default_value = "2", long_help = ONE_LEVEL_HELP)]
        level: String,
        /// Write the min-entropy curve of a sweep as an SVG plot.
        #[arg(long, value_name = "FILE")]
        svg: Option<PathBuf>,
        /// Also prove each bound in exact rational arithmetic (the dual rounded to rationals,
        /// its positive semidefiniteness proven exactly) and print it as a fraction.
        #[arg(long)]
        exact: bool,
        /// Write the guessing-probability SDP at the score (one) in the SDPA sparse format,
        /// with its variable map (FILE.words), for external solvers.
        #[arg(long, value_name = "FILE", requires = "score")]
        sdpa: Option<PathBuf>,
        /// Instead of solving, verify an external solver's solution (SDPA output format) of
        /// the SDP that `--sdpa` writes at the same score and level.
        #[arg(long, value_name = "FILE", requires = "score", conflicts_with_all = ["sweep", "counts", "svg"])]
        sdpa_solution: Option<PathBuf>,
    },
    /// A verified lower bound on the conditional von Neumann entropy of a player's answer given
    /// a quantum adversary, H(A|X=x*, E), at a score or for an observed behaviour (Gauss–Radau
    /// hierarchy of NPA relaxations); with the Devetak–Winter key rate when asked.
    Entropy {
        #[command(flatten)]
        args: GameArgs,
        /// The score (in the game's own units): the bound holds for every quantum behaviour
        /// scoring at least this.
        #[arg(long, allow_hyphen_values = true, value_parser = parse_finite, conflicts_with_all = ["sweep", "behaviour", "strategy"], long_help = ENTROPY_SCORE_HELP)]
        score: Option<f64>,
        /// Sweep the score: LOW:HIGH:POINTS.
        #[arg(long, conflicts_with_all = ["behaviour", "strategy"])]
        sweep: Option<String>,
        /// Condition on the devices' full behaviour instead: a correlations file with the
        /// game's players (it must be no-signalling).
        #[arg(long, value_name = "FILE", conflicts_with_all = ["strategy", "counts"])]
        behaviour: Option<PathBuf>,
        /// Condition on a lab's counts instead: every quantum behaviour in their confidence
        /// region (two-sided Clopper–Pearson intervals for every probability, union bound, error
        /// `--alpha`; i.i.d. rounds). Slightly signalling data need no projection; data with no
        /// quantum behaviour in the region are refused.
        #[arg(long, value_name = "FILE", conflicts_with_all = ["strategy", "score", "sweep"])]
        counts: Option<PathBuf>,
        /// The confidence region's error probability (with --counts).
        #[arg(long, default_value_t = 1e-6, value_parser = parse_finite)]
        alpha: f64,
        /// Condition on the behaviour of a strategy file instead (as written by `bellgap
        /// seesaw --save`), computed by the Born rule.
        #[arg(long, value_name = "FILE")]
        strategy: Option<PathBuf>,
        #[command(flatten)]
        answers: AnswerArgs,
        #[command(flatten)]
        hierarchy: HierarchyArgs,
        /// Key rate: the player whose answers the key is reconciled with (needs --behaviour or --strategy).
        #[arg(long, conflicts_with = "error_rate")]
        key_with: Option<String>,
        /// Key rate: that player's question (label; default: the first).
        #[arg(long, allow_hyphen_values = true, requires = "key_with")]
        key_question: Option<i64>,
        /// Key rate: the probability that the key answers differ (H(A|B) by Fano's bound).
        #[arg(long, allow_hyphen_values = true, value_parser = parse_finite)]
        error_rate: Option<f64>,
        /// Write each node's SDP at the score (one) in the SDPA sparse format, as
        /// PREFIX-node-KK.dat-s (K from 01) with its variable map (.words), for external solvers.
        #[arg(long, value_name = "PREFIX", requires = "score")]
        sdpa: Option<PathBuf>,
        /// Instead of solving, verify external solvers' solutions (SDPA output format) of the
        /// node SDPs that `--sdpa` writes at the same score and options, read from
        /// PREFIX-node-KK.out, and sum the bound they prove.
        #[arg(long, value_name = "PREFIX", requires = "score", conflicts_with_all = ["sweep", "behaviour", "strategy", "counts", "key_with", "error_rate"])]
        sdpa_solutions: Option<PathBuf>,
        /// With --sdpa-solutions: prove each node's bound in exact rational arithmetic.
        #[arg(long, requires = "sdpa_solutions")]
        exact: bool,
    },
    /// What a spot-checking run of n rounds certifies, by entropy accumulation: the smooth
    /// min-entropy, the certified bits of randomness (or key) and the rate per round, the n at
    /// which the rate reaches a fraction of its limit, and the rate against n.
    FiniteSize {
        #[command(flatten)]
        args: GameArgs,
        /// Rounds n of the run.
        #[arg(long)]
        rounds: u64,
        /// Probability γ that a round is a test round (questions from the game's distribution).
        #[arg(long, value_parser = parse_finite)]
        testing: f64,
        /// The score per test round the run must reach to pass (in the game's own units): the
        /// entropy is credited at this score.
        #[arg(long, allow_hyphen_values = true, value_parser = parse_finite)]
        threshold: f64,
        /// The honest devices' expected score per test round, for the completeness error.
        #[arg(long, allow_hyphen_values = true, value_parser = parse_finite)]
        expected: Option<f64>,
        /// Smoothing parameter ε_s.
        #[arg(long, default_value_t = 1e-9, value_parser = parse_finite)]
        smoothing: f64,
        /// Pass floor ε_EA: the bound covers runs that pass with at least this probability.
        #[arg(long, default_value_t = 1e-9, value_parser = parse_finite)]
        pass_floor: f64,
        /// Error ε_ext of the extractor (or of privacy amplification).
        #[arg(long, default_value_t = 1e-9, value_parser = parse_finite)]
        extractor_error: f64,
        /// Report the rounds at which the rate reaches this fraction of its limit.
        #[arg(long, default_value_t = 0.9, value_parser = parse_finite)]
        fraction: f64,
        /// Key instead of randomness: the bits error correction disclosed over the run (the
        /// verification hash is counted separately, from --verification-error).
        #[arg(long, value_parser = parse_finite, conflicts_with = "key_error_rate")]
        key_disclosed_bits: Option<f64>,
        /// Key instead of randomness: the key pair's error rate Q; error correction then
        /// discloses n·f·(h(Q) + Q·log₂(d − 1)) bits (Fano's bound times the efficiency f).
        #[arg(long, value_parser = parse_finite)]
        key_error_rate: Option<f64>,
        /// Key: the error-correcting code's efficiency f ≥ 1 (default 1.16, common practice in
        /// reports of experiments; state your code's own).
        #[arg(long, value_parser = parse_finite, requires = "key_error_rate")]
        ec_efficiency: Option<f64>,
        /// Key: ε_EC, the verification hash's collision probability (the key's correctness
        /// error); the hash discloses ⌈log₂(1/ε_EC)⌉ bits [default: 1e-9].
        #[arg(long, value_parser = parse_finite)]
        verification_error: Option<f64>,
        /// Key: the probability that error correction fails on honest devices, as the code's
        /// designer states it (added to the completeness error; not computed here).
        #[arg(long, value_parser = parse_finite)]
        correction_failure: Option<f64>,
        /// Key: the most test rounds the protocol allows (default: a Chernoff cap that honest
        /// runs exceed with probability at most 1e-9).
        #[arg(long)]
        max_test_rounds: Option<u64>,
        /// Which entropy accumulation statement certifies: smaller (both evaluated, the
        /// smaller bound certified), improved-second-order or original.
        #[arg(long, default_value = "smaller")]
        statement: String,
        /// The score where the min-tradeoff line touches the entropy bound (default: the best
        /// of --tangent-points scores from the threshold down towards the classical value).
        #[arg(long, allow_hyphen_values = true, value_parser = parse_finite, conflicts_with = "tangent_points")]
        tangent: Option<f64>,
        /// How many tangent scores the search tries (1 to 32; each is one entropy computation).
        #[arg(long, default_value_t = bellgap::pipeline::DEFAULT_TANGENT_POINTS)]
        tangent_points: usize,
        #[command(flatten)]
        answers: AnswerArgs,
        #[command(flatten)]
        hierarchy: HierarchyArgs,
        /// Write the rate against n as an SVG plot.
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
        /// Noisy preprocessing: the key player flips its bit with this probability (in
        /// [0, 0.5]) before error correction.
        #[arg(long, value_name = "PROBABILITY", value_parser = parse_finite)]
        noisy_preprocessing: Option<f64>,
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
        /// No progress output on stderr.
        #[arg(long, short)]
        quiet: bool,
    },
    /// Re-check an NPA dual certificate without any solver and print the bound it proves.
    Verify {
        #[command(flatten)]
        args: GameArgs,
        /// Certificate written by `bellgap npa --certificate`.
        certificate: PathBuf,
        /// Also prove the bound in exact rational arithmetic (the dual rounded to rationals,
        /// its positive semidefiniteness proven exactly) and print it as a fraction.
        #[arg(long)]
        exact: bool,
        /// The file is an external solver's solution in SDPA output format for the relaxation
        /// `npa --sdpa` exported at this level: its dual is verified on our own relaxation.
        #[arg(long, value_name = "LEVEL")]
        sdpa_level: Option<String>,
    },
    /// Decide whether given correlations p(answers|questions) have a local model.
    Local {
        /// Correlations file (YAML or JSON, see README).
        correlations: PathBuf,
        /// The file is a counts file: the test runs on its frequencies, with its rounds for
        /// the signalling p-value.
        #[arg(long)]
        counts: bool,
        /// Write the separating Bell expression (if any) as a game file here.
        #[arg(long, value_name = "FILE")]
        save: Option<PathBuf>,
        /// Run even when the estimate says it would take very long.
        #[arg(long, long_help = FORCE_HELP)]
        force: bool,
        /// Print exactly one JSON object on stdout.
        #[arg(long)]
        json: bool,
        /// No progress output on stderr.
        #[arg(long, short)]
        quiet: bool,
    },
    /// Run a list of commands, one per line of a file (e.g. `npa games/chsh.yaml --level 2`,
    /// without `bellgap`), and write each one's JSON result as a line of JSON Lines; a failing
    /// line gives its error object and the others still run. `--shard I/N` runs lines I, I+N,
    /// I+2N, ... of the list (counting from 1), so N jobs of a batch scheduler split it;
    /// `sweep-merge` joins their outputs.
    Sweep {
        /// The list file: one command line per line; blank lines and lines starting with `#`
        /// are skipped; words are split at spaces, and "double quotes" keep spaces in a word.
        /// Paths in it are relative to the current folder.
        list: PathBuf,
        /// Run only this shard, I of N (1 ≤ I ≤ N).
        #[arg(long, value_name = "I/N")]
        shard: Option<String>,
        /// Write the JSON Lines here (atomically) instead of stdout.
        #[arg(long, short, value_name = "FILE")]
        output: Option<PathBuf>,
        /// Print one JSON object (a summary, with the records when there is no --output).
        #[arg(long)]
        json: bool,
        /// No progress output on stderr.
        #[arg(long, short)]
        quiet: bool,
    },
    /// Merge the JSON Lines of a sweep's shards into one, in list order, after checking that
    /// every line of the list is there exactly once.
    SweepMerge {
        /// The shards' output files.
        #[arg(required = true)]
        shards: Vec<PathBuf>,
        /// Write the merged JSON Lines here (atomically) instead of stdout.
        #[arg(long, short, value_name = "FILE")]
        output: Option<PathBuf>,
        /// Print one JSON object (a summary, with the records when there is no --output).
        #[arg(long)]
        json: bool,
        /// No progress output on stderr.
        #[arg(long, short)]
        quiet: bool,
    },
    /// Write the reference pages generated from the command definitions into a folder: a man
    /// page per command (`bellgap.1`, `bellgap-npa.1`, ...) and shell completions
    /// (`bellgap.bash`, `_bellgap` for zsh, `bellgap.fish`).
    Reference {
        /// The folder (created if missing); existing pages of the same names are replaced.
        folder: PathBuf,
        /// Print one JSON object listing the files written.
        #[arg(long)]
        json: bool,
        /// No progress output on stderr (accepted for uniformity: `reference` has none).
        #[arg(long, short)]
        quiet: bool,
    },
    /// Print a standard game or Bell expression as a game file.
    Family {
        #[command(subcommand)]
        family: FamilyCommand,
        /// Print the game as JSON (also a valid game file) instead of YAML.
        #[arg(long, global = true)]
        json: bool,
        /// No progress output on stderr (accepted for uniformity: `family` has none).
        #[arg(long, short, global = true)]
        quiet: bool,
    },
}

/// The see-saw's search (`seesaw`, and the see-saw of `bounds`).
#[derive(Args, Debug, Clone)]
pub struct SeesawArgs {
    /// Local dimension of every player in the see-saw.
    #[arg(long, conflicts_with = "dims")]
    pub dim: Option<usize>,
    /// Local dimension per player in the see-saw, comma separated (e.g. 2,3).
    #[arg(long, value_delimiter = ',')]
    pub dims: Option<Vec<usize>>,
    /// Random restarts of the see-saw (run in parallel; the best is kept).
    #[arg(long, default_value_t = bellgap::bounds::quantum::seesaw::DEFAULT_RESTARTS)]
    pub restarts: usize,
    /// Seed of the see-saw's random starts (reported, so runs are reproducible).
    #[arg(long, default_value_t = 1)]
    pub seed: u64,
}

/// A bound of `bounds` (`--skip`).
#[derive(ValueEnum, Debug, Clone, Copy, PartialEq, Eq)]
pub enum BoundArg {
    /// The exact classical value.
    Classical,
    /// The no-signalling value.
    NoSignalling,
    /// The NPA upper bound.
    Npa,
    /// The see-saw lower bound.
    Seesaw,
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
    #[arg(long, long_help = FORCE_HELP)]
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
    FirstOrder,
}

/// The entropy hierarchy's options (`entropy`, `finite-size`).
#[derive(Args, Debug, Clone)]
pub struct HierarchyArgs {
    /// Gauss–Radau nodes (2 to 64); one relaxation is solved per node but the last.
    #[arg(long, default_value_t = bellgap::bounds::entropy::hierarchy::DEFAULT_NODES)]
    pub nodes: usize,
    /// The players' NPA level of each relaxation (default: 1+joint and the target players'
    /// products of two of their own operators, e.g. `1 A B AB AA`, while the matrix side stays
    /// within 120; else 1+joint).
    #[arg(long, long_help = ONE_LEVEL_HELP)]
    pub level: Option<String>,
    /// Which of the adversary's words join the players' words.
    #[arg(long, value_enum, default_value = "with-player-words")]
    pub adversary_words: AdversaryWordsArg,
    /// Real symmetric or complex Hermitian moment matrices (the same bound; complex is a
    /// check and costs more).
    #[arg(long, value_enum, default_value = "real")]
    pub moments: MomentsArg,
    /// SDP solver of the relaxations (first-order is not offered: each node's bound needs
    /// an accurate dual).
    #[arg(long, value_enum, default_value = "auto")]
    pub solver: EntropySolverArg,
    /// Noisy preprocessing: the key player changes its answer with this probability (to each
    /// other answer alike) before the entropy is counted; the entropy and the error-correction
    /// term are both of the changed answer.
    #[arg(long, value_name = "PROBABILITY", value_parser = parse_finite)]
    pub noisy_preprocessing: Option<f64>,
    /// Reduce the relaxations by the game's relabellings that keep the key player, its
    /// question and the key's answers' roles (`auto`, with a score; a behaviour or counts are
    /// solved in full), or never (`off`). The bound is checked on the full relaxations either
    /// way.
    #[arg(long, value_enum, default_value = "auto")]
    pub symmetry: SymmetryArg,
}

/// Whose answer the entropy figures of `design` are about.
#[derive(Args, Debug, Clone)]
pub struct KeyAnswerArgs {
    /// Whose answer (default: the first player).
    #[arg(long)]
    pub player: Option<String>,
    /// To which question (label; default: the first).
    #[arg(long, allow_hyphen_values = true)]
    pub question: Option<i64>,
}

/// `bounds --table`, `npa --table`.
#[derive(ValueEnum, Debug, Clone, Copy, PartialEq, Eq)]
pub enum TableArg {
    /// Comma-separated values.
    Csv,
    /// A LaTeX tabular.
    Latex,
}

/// `design --figure`.
#[derive(ValueEnum, Debug, Clone, Copy)]
pub enum FigureArg {
    /// The noisy score's margin over the classical value.
    Margin,
    /// The certified min-entropy of the key player's answer.
    MinEntropy,
    /// The bound on the conditional von Neumann entropy H(A|X=x*, E).
    Entropy,
    /// The Devetak–Winter key rate (needs --key-with).
    KeyRate,
}

/// `design --state`.
#[derive(ValueEnum, Debug, Clone, Copy)]
pub enum StateArg {
    /// Any state of the local dimensions, optimised.
    Optimised,
    /// The maximally entangled state, fixed (two players of equal dimension).
    MaximallyEntangled,
}

/// `design --threshold`.
#[derive(ValueEnum, Debug, Clone, Copy)]
pub enum NoiseParameterArg {
    /// Every player's detection efficiency (the same for all).
    Efficiency,
    /// The visibility.
    Visibility,
}

/// Whose answers (`randomness`, `entropy`, `finite-size`): one player's, or a pair's.
#[derive(Args, Debug, Clone)]
pub struct AnswerArgs {
    /// Whose answer (default: the first player).
    #[arg(long)]
    pub player: Option<String>,
    /// To which question (label; default: the first).
    #[arg(long, allow_hyphen_values = true)]
    pub question: Option<i64>,
    /// Also this second player's answer (the pair of answers).
    #[arg(long = "with")]
    pub with_player: Option<String>,
    /// The second player's question (label; default: the first).
    #[arg(long, allow_hyphen_values = true)]
    pub with_question: Option<i64>,
}

#[derive(ValueEnum, Debug, Clone, Copy)]
pub enum AdversaryWordsArg {
    Letters,
    WithProjectors,
    WithPlayerWords,
    WithPairs,
}

#[derive(ValueEnum, Debug, Clone, Copy)]
pub enum EntropySolverArg {
    Auto,
    Ipm,
    Clarabel,
}

#[derive(ValueEnum, Debug, Clone, Copy)]
pub enum MomentsArg {
    Real,
    Complex,
}

#[derive(ValueEnum, Debug, Clone, Copy)]
pub enum SymmetryArg {
    Auto,
    Off,
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
    /// Mermin's expression for n players (three by default).
    Mermin {
        #[arg(long, default_value_t = 3)]
        players: usize,
    },
    /// Svetlichny's expression for n players: a violation of 2^(n−1) witnesses genuine
    /// multipartite nonlocality.
    Svetlichny {
        #[arg(long, default_value_t = 3)]
        players: usize,
    },
    /// CHSH modulo d: win iff a + b = x·y mod d (questions and answers in 0..d).
    ChshMod {
        #[arg(long, default_value_t = 3)]
        d: usize,
    },
    /// Tilted CHSH expression β⟨A0⟩ + α⟨A0B0⟩ + α⟨A0B1⟩ + ⟨A1B0⟩ − ⟨A1B1⟩.
    TiltedChsh {
        #[arg(long, default_value_t = 1.0, value_parser = parse_finite, allow_hyphen_values = true)]
        alpha: f64,
        #[arg(long, default_value_t = 0.5, value_parser = parse_finite, allow_hyphen_values = true)]
        beta: f64,
    },
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

impl Cli {
    /// Every file the command reads (outputs may not replace them).
    pub fn inputs(&self) -> Vec<PathBuf> {
        let mut v: Vec<PathBuf> = self
            .game_args()
            .map(|a| a.game.clone())
            .into_iter()
            .collect();
        match &self.command {
            Command::Evaluate { strategy, .. } => v.push(strategy.clone()),
            Command::SelfTest {
                strategy,
                behaviour,
                counts,
                ..
            } => v.extend([strategy, behaviour, counts].into_iter().flatten().cloned()),
            Command::Verify { certificate, .. } => v.push(certificate.clone()),
            Command::Review { protocol, .. } => v.push(protocol.clone()),
            Command::Local { correlations, .. } => v.push(correlations.clone()),
            Command::Sweep { list, .. } => v.push(list.clone()),
            Command::SweepMerge { shards, .. } => v.extend(shards.iter().cloned()),
            Command::Entropy {
                behaviour,
                strategy,
                counts,
                ..
            } => v.extend([behaviour, strategy, counts].into_iter().flatten().cloned()),
            Command::Margin {
                counts: Some(c), ..
            }
            | Command::Randomness {
                counts: Some(c),
                sdpa_solution: None,
                ..
            } => v.push(c.clone()),
            Command::Randomness {
                sdpa_solution: Some(f),
                ..
            } => v.push(f.clone()),
            Command::Family {
                family: FamilyCommand::Product { game, .. },
                ..
            } => v.push(game.clone()),
            _ => {}
        }
        v
    }

    /// The options every game command shares, for the commands that read a game.
    fn game_args(&self) -> Option<&GameArgs> {
        match &self.command {
            Command::Check(a) | Command::Nosignal { args: a, .. } => Some(a),
            Command::Classical { args, .. }
            | Command::Bounds { args, .. }
            | Command::Npa { args, .. }
            | Command::Seesaw { args, .. }
            | Command::Evaluate { args, .. }
            | Command::Verify { args, .. }
            | Command::Margin { args, .. }
            | Command::Randomness { args, .. }
            | Command::Entropy { args, .. }
            | Command::Design { args, .. }
            | Command::SelfTest { args, .. }
            | Command::FiniteSize { args, .. } => Some(args),
            Command::Key { .. }
            | Command::Review { .. }
            | Command::Local { .. }
            | Command::Reference { .. }
            | Command::Family { .. }
            | Command::Sweep { .. }
            | Command::SweepMerge { .. } => None,
        }
    }

    /// Whether `--quiet` was given (commands without it are never quiet).
    pub fn quiet(&self) -> bool {
        match (&self.command, self.game_args()) {
            (_, Some(a)) => a.quiet,
            (
                Command::Key { quiet, .. }
                | Command::Review { quiet, .. }
                | Command::Local { quiet, .. }
                | Command::Reference { quiet, .. }
                | Command::Family { quiet, .. }
                | Command::Sweep { quiet, .. }
                | Command::SweepMerge { quiet, .. },
                None,
            ) => *quiet,
            _ => false,
        }
    }

    /// Whether the command is `sweep` or `sweep-merge` (whose partial failures have an exit
    /// code of their own).
    pub fn is_sweep(&self) -> bool {
        matches!(
            self.command,
            Command::Sweep { .. } | Command::SweepMerge { .. }
        )
    }

    /// Whether `--json-lines` was given (`bounds`).
    pub fn wants_json_lines(&self) -> bool {
        matches!(
            &self.command,
            Command::Bounds {
                json_lines: true,
                ..
            }
        )
    }

    /// Whether `--json` (or `--json-lines`) was given.
    pub fn wants_json(&self) -> bool {
        match (&self.command, self.game_args()) {
            (_, Some(a)) => a.json || self.wants_json_lines(),
            (Command::Key { json, .. } | Command::Review { json, .. }, None) => *json,
            (Command::Local { json, .. } | Command::Family { json, .. }, None) => *json,
            (Command::Reference { json, .. }, None) => *json,
            (Command::Sweep { json, .. } | Command::SweepMerge { json, .. }, None) => *json,
            _ => false,
        }
    }
}

/// A command-line number that must be finite (NaN and ±inf are refused at the edge).
pub fn parse_finite(text: &str) -> std::result::Result<f64, String> {
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
