//! The `bellgap` binary: parse the command line, run, print, and turn every error into one
//! message and an exit code (0 success, 2 bad input or usage, 1 solver or internal failure).

mod cli;

use std::io::Write;
use std::process::ExitCode;

use clap::Parser;
use serde_json::json;

fn main() -> ExitCode {
    let cli = cli::Cli::parse();
    let json = cli.wants_json();
    match cli::run(&cli) {
        Ok(out) => {
            for w in &out.warnings {
                eprintln!("warning: {w}");
            }
            let text = if json {
                format!(
                    "{}\n",
                    serde_json::to_string_pretty(&out.json).unwrap_or_default()
                )
            } else {
                out.text
            };
            write_stdout(&text)
        }
        Err(e) => {
            eprintln!("error: {e}");
            if json {
                let obj = json!({"error": {
                    "kind": e.kind(),
                    "message": e.to_string(),
                    "location": e.location(),
                }});
                let _ = write_stdout(&format!("{obj}\n"));
            }
            ExitCode::from(e.exit_code() as u8)
        }
    }
}

/// Writes to stdout; a closed pipe (e.g. `| head`) is not an error, as for other Unix tools.
fn write_stdout(text: &str) -> ExitCode {
    let mut out = std::io::stdout().lock();
    match out.write_all(text.as_bytes()).and_then(|_| out.flush()) {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) if e.kind() == std::io::ErrorKind::BrokenPipe => ExitCode::SUCCESS,
        Err(e) => {
            eprintln!("error: cannot write output: {e}");
            ExitCode::from(1)
        }
    }
}
