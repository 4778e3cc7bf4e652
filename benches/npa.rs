//! NPA bound speed and peak memory: I3322 at levels 2–4 and CGLMP d = 3..8 at level 1+joint,
//! moment-matrix construction timed apart from the solve, both SDP solvers side by side.
//!
//! `cargo bench --bench npa` runs each case and solver in its own process (so peak memory is that
//! run's own) and prints a Markdown table. Runs whose estimated solve time exceeds
//! `BELLGAP_BENCH_MAX_SECONDS` (default 300) are not made; their estimate is printed instead.

use std::process::Command;
use std::time::Instant;

use bellgap::bounds::quantum::npa::{estimate_for, relaxation, Level};
use bellgap::formats::game::{families, Game, GameSpec};
use bellgap::Backend;

fn solver(name: &str) -> Backend {
    if name == "clarabel" {
        Backend::Clarabel
    } else {
        Backend::MomentIpm
    }
}

fn cases() -> Vec<(String, GameSpec, &'static str)> {
    let mut v = vec![
        ("I3322".to_string(), families::i3322(), "2"),
        ("I3322".to_string(), families::i3322(), "3"),
        ("I3322".to_string(), families::i3322(), "4"),
    ];
    for d in 3..=8 {
        v.push((
            format!("CGLMP d={d}"),
            families::cglmp(d).unwrap(),
            "1+joint",
        ));
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

fn run_case(index: usize, solver_name: &str) {
    let (name, spec, level) = &cases()[index];
    let s = Game::from_spec(spec, name).unwrap().scenario;
    let level = Level::parse(level).unwrap();
    let t = Instant::now();
    let r = relaxation(&s, &level).unwrap();
    let build = t.elapsed().as_secs_f64();
    let b = bellgap::npa_bound(
        &s,
        &bellgap::NpaOptions {
            level: level.clone(),
            backend: solver(solver_name),
            limits: bellgap::Limits { force: true },
        },
    )
    .unwrap();
    println!(
        "| {name} | {} | {solver_name} | {}×{} | {} | {:.4} | {:.2} | {:.0} | {:.9} | {:.9} | {} ({} it.) |",
        b.level,
        r.matrix.size(),
        r.matrix.size(),
        b.moments,
        build,
        b.seconds - b.build_seconds,
        peak_mib().unwrap_or(f64::NAN),
        b.quantum_upper,
        b.verified_upper,
        b.status,
        b.iterations
    );
}

fn main() {
    let args: Vec<String> = std::env::args().collect();
    if let Some(pos) = args.iter().position(|a| a == "--case") {
        run_case(args[pos + 1].parse().unwrap(), &args[pos + 2]);
        return;
    }
    let max: f64 = std::env::var("BELLGAP_BENCH_MAX_SECONDS")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(300.0);
    println!("| case | level | solver | matrix | moments | build s | solve s | peak MiB | raw bound | verified bound | status |");
    println!("|---|---|---|---|---|---|---|---|---|---|---|");
    let exe = std::env::current_exe().unwrap();
    for (i, (name, spec, level)) in cases().iter().enumerate() {
        let s = Game::from_spec(spec, name).unwrap().scenario;
        let r = relaxation(&s, &Level::parse(level).unwrap()).unwrap();
        for solver_name in ["moment-ipm", "clarabel"] {
            let est = estimate_for(&r, solver(solver_name));
            if est.seconds > max {
                println!(
                    "| {name} | {level} | {solver_name} | {}×{} | {} | | not run: estimated {} | est. {:.0} | | | |",
                    est.matrix_size,
                    est.matrix_size,
                    est.moments,
                    bellgap::limits::human_seconds(est.seconds),
                    est.memory_bytes / (1u64 << 20) as f64
                );
                continue;
            }
            let out = Command::new(&exe)
                .args(["--case", &i.to_string(), solver_name])
                .output()
                .unwrap();
            print!("{}", String::from_utf8_lossy(&out.stdout));
        }
    }
}
