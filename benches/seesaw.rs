//! See-saw speed: restarts per second for CHSH, CGLMP d = 3..5 and the three-player GHZ game,
//! on one core and on all cores (restarts run in parallel).
//!
//! `cargo bench --bench seesaw` prints a Markdown table.

use std::time::Instant;

use bellgap::bounds::quantum::seesaw::{seesaw, SeesawOptions};
use bellgap::formats::game::{families, Game, GameSpec};

fn main() {
    let cases: Vec<(String, GameSpec, usize, usize)> = vec![
        ("CHSH".into(), families::chsh(), 2, 64),
        ("CGLMP d=3".into(), families::cglmp(3).unwrap(), 3, 16),
        ("CGLMP d=4".into(), families::cglmp(4).unwrap(), 4, 8),
        ("CGLMP d=5".into(), families::cglmp(5).unwrap(), 5, 4),
        ("GHZ 3 players".into(), families::ghz(3).unwrap(), 2, 32),
    ];
    let cores = std::thread::available_parallelism()
        .map(|n| n.get())
        .unwrap_or(1);
    println!("| case | dims | restarts | best value | restarts/s, 1 core | restarts/s, {cores} cores | speed-up |");
    println!("|---|---|---|---|---|---|---|");
    for (name, spec, d, restarts) in cases {
        let s = Game::from_spec(&spec, &name).unwrap().scenario;
        let opts = SeesawOptions {
            dims: vec![d; s.players()],
            restarts,
            seed: 1,
            tolerance: 1e-10,
            max_rounds: 500,
            ..Default::default()
        };
        let timed = |threads: usize| {
            let pool = rayon::ThreadPoolBuilder::new()
                .num_threads(threads)
                .build()
                .unwrap();
            let t = Instant::now();
            let r = pool.install(|| seesaw(&s, &opts, None).unwrap());
            (restarts as f64 / t.elapsed().as_secs_f64(), r.quantum_lower)
        };
        let (one, value) = timed(1);
        let (all, _) = timed(cores);
        println!(
            "| {name} | {d} | {restarts} | {value:.8} | {one:.1} | {all:.1} | {:.2}× |",
            all / one
        );
    }
}
