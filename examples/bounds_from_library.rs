//! The library API on an invented game: load a game file, compute the classical value with an
//! optimal strategy and the no-signalling value, then test invented lab frequencies for a local
//! model. Run with `cargo run --example bounds_from_library`.

use bellgap::bounds::classical::locality::locality_test;
use bellgap::{classical_value, no_signalling_value, CompileOptions, Correlations, Game, Limits};

fn main() -> Result<(), bellgap::Error> {
    let dir = env!("CARGO_MANIFEST_DIR");
    let game = Game::from_file(
        &format!("{dir}/examples/data/depot-game.yaml"),
        CompileOptions::default(),
    )?;
    let s = &game.scenario;
    let classical = classical_value(s, &Default::default(), None)?;
    let ns = no_signalling_value(s, &Limits::default())?;
    println!(
        "{}: classical {:.6}, no-signalling {:.6}",
        game.name, classical.value, ns.value
    );
    for (party, answers) in s.parties().iter().zip(&classical.strategy.answers) {
        println!(
            "  {} answers {:?} to questions {:?}",
            party.name, answers, party.question_labels
        );
    }

    let lab = Correlations::from_file(&format!("{dir}/examples/data/lab-frequencies.yaml"))?;
    let report = locality_test(&lab, &Limits::default())?;
    println!(
        "{}: local model {}, critical visibility {:.4}",
        lab.name,
        if report.local {
            "exists"
        } else {
            "does not exist"
        },
        report.visibility
    );
    Ok(())
}
