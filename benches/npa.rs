//! NPA bound speed and peak memory: I3322 at levels 2–5, CGLMP d = 3..12 at level 1+joint, GHZ
//! games at level 2, magic square and CHSH x2 at 1+joint; moment-matrix construction timed apart
//! from the solve; both SDP solvers side by side, and the moment-matrix method with the
//! game's symmetries (`symmetry auto`).
//!
//! `cargo bench --bench npa` runs each case and solver in its own process (so peak memory is that
//! run's own) and prints a Markdown table. Runs whose estimated solve time exceeds
//! `BELLGAP_BENCH_MAX_SECONDS` (default 300) are not made; their estimate is printed instead.

use std::process::Command;
use std::time::Instant;

use bellgap::bounds::quantum::npa::{relaxation, sized_relaxation, Entry, Level};
use bellgap::bounds::quantum::symmetric::SymmetryChoice;
use bellgap::formats::game::{families, product, Game, GameSpec};
use bellgap::optim::first_order::FirstOrderOptions;
use bellgap::{Backend, NpaOptions};

/// The runs of each case: solver and symmetry choice.
const RUNS: [&str; 4] = [
    "moment-ipm, symmetry",
    "moment-ipm",
    "first-order",
    "clarabel",
];

/// The longest run the bench makes, in seconds (`BELLGAP_BENCH_MAX_SECONDS`, default 300); the
/// first-order method is given it as its budget.
fn max_seconds() -> f64 {
    std::env::var("BELLGAP_BENCH_MAX_SECONDS")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(300.0)
}

fn options(run: &str, level: Level) -> NpaOptions {
    NpaOptions {
        level,
        backend: match run {
            "clarabel" => Backend::Clarabel,
            "first-order" => Backend::FirstOrder,
            _ => Backend::MomentIpm,
        },
        first_order: FirstOrderOptions {
            max_seconds: max_seconds(),
            ..Default::default()
        },
        symmetry: if run.ends_with("symmetry") {
            SymmetryChoice::Auto
        } else {
            SymmetryChoice::Off
        },
        limits: bellgap::Limits { force: true },
    }
}

#[path = "../tests/common/random_game.rs"]
mod random_game;
use random_game::random_game_yaml as random_game_yaml_sized;

/// A two-player game with 4 questions and 4 answers each and scores drawn uniformly from
/// [0, 1) (three decimals) by a fixed xorshift sequence: no symmetry, 7,404 moments at `1+joint`.
pub fn random_game_yaml() -> String {
    random_game_yaml_sized(4, 4, 2026)
}

fn cases() -> Vec<(String, GameSpec, &'static str)> {
    let mut v = vec![
        ("I3322".to_string(), families::i3322(), "2"),
        ("I3322".to_string(), families::i3322(), "3"),
        ("I3322".to_string(), families::i3322(), "4"),
        ("I3322".to_string(), families::i3322(), "5"),
    ];
    for d in [3, 4, 5, 6, 7, 8, 10, 12] {
        v.push((
            format!("CGLMP d={d}"),
            families::cglmp(d).unwrap(),
            "1+joint",
        ));
    }
    for n in [3, 4] {
        v.push((format!("GHZ {n} players"), families::ghz(n).unwrap(), "2"));
    }
    v.push((
        "magic square".to_string(),
        families::magic_square(),
        "1+joint",
    ));
    v.push((
        "CHSH x2".to_string(),
        product::parallel_repetition(
            &Game::from_spec(&families::chsh(), "chsh").unwrap().scenario,
            "chsh-x2",
            2,
        )
        .unwrap(),
        "1+joint",
    ));
    let random: GameSpec = serde_yaml::from_str(&random_game_yaml()).unwrap();
    v.push(("random 4×4".to_string(), random, "1+joint"));
    // The random games of the automatic choice's benchmark (BENCHMARKS.md), with this file's
    // generator: where the interior-point method used to be chosen and lose.
    for (q, a) in [(3, 4), (4, 3), (3, 5), (5, 3), (6, 3)] {
        let spec: GameSpec = serde_yaml::from_str(&random_game_yaml_sized(q, a, 2026)).unwrap();
        v.push((format!("random {q}×{a}"), spec, "1+joint"));
    }
    v
}

/// Peak resident memory of this process, from /proc (Linux), in MiB.
fn peak_mib() -> Option<f64> {
    let status = std::fs::read_to_string("/proc/self/status").ok()?;
    let line = status.lines().find(|l| l.starts_with("VmHWM:"))?;
    let kib: f64 = line.split_whitespace().nth(1)?.parse().ok()?;
    Some(kib / 1024.0)
}

fn run_case(index: usize, run: &str) {
    let (name, spec, level) = &cases()[index];
    let s = Game::from_spec(spec, name).unwrap().scenario;
    let level = Level::parse(level).unwrap();
    let t = Instant::now();
    let r = relaxation(&s, &level).unwrap();
    let build = t.elapsed().as_secs_f64();
    let b = bellgap::npa_bound(&s, &options(run, level)).unwrap();
    let variables = match &b.symmetry {
        Some(u) => format!(
            "{} → {} (group {}, {} blocks, largest {})",
            b.moments,
            u.moments,
            u.order,
            u.blocks.len(),
            u.blocks.iter().max().unwrap_or(&0)
        ),
        None => b.moments.to_string(),
    };
    println!(
        "| {name} | {} | {run} | {}×{} | {variables} | {:.4} | {:.2} | {:.0} | {:.9} | {:.9} | {} ({} it.) |",
        b.level,
        r.matrix.size(),
        r.matrix.size(),
        build,
        b.seconds - b.build_seconds,
        peak_mib().unwrap_or(f64::NAN),
        b.quantum_upper,
        b.verified_upper,
        b.status,
        b.iterations
    );
}

/// Writes every case for the peer script (`benches/peer/run.sh`): the game file, and the
/// moment matrix's structure as JSON (`upper`: per upper-triangle entry, column by column, the
/// moment index, −1 for zero or −2 for the identity; `objective` per moment; `constant`).
fn export(dir: &str) {
    std::fs::create_dir_all(dir).unwrap();
    for (i, (name, spec, level)) in cases().iter().enumerate() {
        let game = Game::from_spec(spec, name).unwrap();
        let level = Level::parse(level).unwrap();
        let r = relaxation(&game.scenario, &level).unwrap();
        let upper: Vec<i64> = r
            .matrix
            .entries
            .iter()
            .map(|e| match e {
                Entry::Zero => -1,
                Entry::Identity => -2,
                Entry::Moment(m) => *m as i64,
            })
            .collect();
        let json = serde_json::json!({
            "name": name,
            "level": level.name(),
            "size": r.matrix.size(),
            "moments": r.matrix.moments.len(),
            "upper": upper,
            "objective": r.problem.objective,
            "constant": r.problem.objective_constant,
        });
        std::fs::write(format!("{dir}/case-{i:02}.json"), json.to_string()).unwrap();
        let yaml = serde_yaml::to_string(spec).unwrap();
        std::fs::write(format!("{dir}/case-{i:02}.yaml"), yaml).unwrap();
    }
}

fn main() {
    let args: Vec<String> = std::env::args().collect();
    if let Some(pos) = args.iter().position(|a| a == "--export") {
        export(&args[pos + 1]);
        return;
    }
    if let Some(pos) = args.iter().position(|a| a == "--case") {
        run_case(args[pos + 1].parse().unwrap(), &args[pos + 2]);
        return;
    }
    let max = max_seconds();
    println!("| case | level | solver | matrix | moments | build s | solve s | peak MiB | raw bound | verified bound | status |");
    println!("|---|---|---|---|---|---|---|---|---|---|---|");
    let exe = std::env::current_exe().unwrap();
    for (i, (name, spec, level)) in cases().iter().enumerate() {
        let s = Game::from_spec(spec, name).unwrap().scenario;
        for run in RUNS {
            let Ok((_, est)) = sized_relaxation(&s, &options(run, Level::parse(level).unwrap()))
            else {
                continue;
            };
            // The first-order method runs within its budget whatever its estimate.
            if est.seconds > max && run != "first-order" {
                println!(
                    "| {name} | {level} | {run} | {}×{} | {} | | not run: estimated {} | est. {:.0} | | | |",
                    est.matrix_size,
                    est.matrix_size,
                    est.moments,
                    bellgap::limits::human_seconds(est.seconds),
                    est.memory_bytes / (1u64 << 20) as f64
                );
                continue;
            }
            let out = Command::new(&exe)
                .args(["--case", &i.to_string(), run])
                .output()
                .unwrap();
            print!("{}", String::from_utf8_lossy(&out.stdout));
        }
    }
}
