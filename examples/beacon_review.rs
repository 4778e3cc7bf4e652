//! A protocol review on invented data: two imaginary labs feeding a randomness beacon with CHSH
//! rounds (see examples/data/beacon-protocol.yaml). Prints the Markdown report.
//! Run with `cargo run --release --example beacon_review`.

fn main() -> Result<(), bellgap::Error> {
    let path = format!(
        "{}/examples/data/beacon-protocol.yaml",
        env!("CARGO_MANIFEST_DIR")
    );
    let review = bellgap::protocol::review::review(&path)?;
    print!("{}", review.to_markdown());
    Ok(())
}
