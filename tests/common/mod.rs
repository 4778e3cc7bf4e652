//! Helpers shared by the tests that run the binary.

use std::process::{Command, Output};

use serde_json::Value;

/// Runs `bellgap` with these arguments from the repository root.
pub fn bellgap(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_bellgap"))
        .args(args)
        .current_dir(env!("CARGO_MANIFEST_DIR"))
        .output()
        .expect("the binary runs")
}

/// The one JSON object a `--json` run prints on stdout.
pub fn json_of(out: &Output) -> Value {
    let text = String::from_utf8_lossy(&out.stdout);
    serde_json::from_str(&text).unwrap_or_else(|e| panic!("not one JSON object ({e}): {text}"))
}
