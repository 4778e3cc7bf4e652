//! A protocol review on invented data: two imaginary labs feeding a randomness beacon with CHSH
//! rounds (see examples/data/beacon-protocol.yaml). Prints the Markdown report (its plots are
//! written only when the report goes to a file: `bellgap review ... --markdown -o FILE.md`).
//! Run with `cargo run --release --example beacon_review`.

use bellgap::formats::protocol_file::ProtocolFile;
use bellgap::pipeline::{self, Silent};
use bellgap::render::document;
use bellgap::Game;

fn main() -> Result<(), bellgap::Error> {
    let path = format!(
        "{}/examples/data/beacon-protocol.yaml",
        env!("CARGO_MANIFEST_DIR")
    );
    let protocol = ProtocolFile::from_file(&path)?;
    let game = Game::from_file(&protocol.game_path.to_string_lossy(), Default::default())?;
    let review = pipeline::review(&protocol, &game, &Silent)?;
    let (text, _plots) = document::markdown(&review, None);
    print!("{text}");
    Ok(())
}
