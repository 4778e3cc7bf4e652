//! The `bellgap` binary: parse the command line, run, print, and turn every error into one
//! message and an exit code (0 success, 2 bad input or usage, 1 solver or internal failure,
//! 3 a sweep whose records were all written but some of whose lines failed).
//! With `--json`, stdout carries exactly one JSON object in every case, errors included.

mod cli;

use std::io::Write;
use std::process::ExitCode;

use clap::Parser;
use serde_json::json;

fn main() -> ExitCode {
    // `--json` is looked for in the raw arguments too, so that an argument error (which clap
    // reports before anything is parsed) still yields one JSON object.
    let json_requested = std::env::args_os().any(|a| a == "--json");
    let cli = match cli::args::Cli::try_parse() {
        Ok(cli) => cli,
        Err(e) => {
            use clap::error::ErrorKind;
            if matches!(e.kind(), ErrorKind::DisplayHelp | ErrorKind::DisplayVersion)
                || !json_requested
            {
                e.exit();
            }
            let message = e.kind().to_string();
            let detail = e.to_string();
            eprint!("{detail}");
            let obj = json!({"schema_version": bellgap::render::json::SCHEMA_VERSION, "error": {
                "kind": "usage",
                "message": detail.lines().next().unwrap_or(&message).trim_start_matches("error: "),
                "location": null,
            }});
            let _ = write_stdout(&format!("{obj}\n"));
            return ExitCode::from(2);
        }
    };
    let json = cli.wants_json();
    // A panic is a bug; it still ends in one message (and one JSON object) and exit code 1.
    let outcome = std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| {
        cli::request::Invocation::from_cli(&cli).and_then(|invocation| cli::run(&invocation))
    }));
    let result = match outcome {
        Ok(r) => r,
        Err(payload) => {
            let what = payload
                .downcast_ref::<String>()
                .cloned()
                .or_else(|| payload.downcast_ref::<&str>().map(|s| s.to_string()))
                .unwrap_or_else(|| "unknown panic".into());
            if json {
                let obj = json!({"schema_version": bellgap::render::json::SCHEMA_VERSION, "error": {
                    "kind": "internal",
                    "message": format!("internal error (a bug; please report it): {what}"),
                    "location": null,
                }});
                let _ = write_stdout(&format!("{obj}\n"));
            }
            return ExitCode::from(1);
        }
    };
    // A report that could not be written as JSON is an internal failure: never exit 0 with an
    // error object on stdout.
    let result = result.and_then(|out| match out.json.get("error") {
        Some(e) if json && out.json.get("command").is_none() => Err(bellgap::Error::Solver {
            stage: "writing the JSON report".into(),
            status: None,
            message: e["message"].as_str().unwrap_or("unknown").to_string(),
        }),
        _ => Ok(out),
    });
    match result {
        Ok(out) => {
            for w in &out.warnings {
                eprintln!("warning: {}", for_terminal(w));
            }
            let text = if cli.wants_json_lines() {
                format!("{}\n", serde_json::to_string(&out.json).unwrap_or_default())
            } else if json {
                format!(
                    "{}\n",
                    serde_json::to_string_pretty(&out.json).unwrap_or_default()
                )
            } else {
                for_terminal(&out.text)
            };
            let code = write_stdout(&text);
            // A batch scheduler must see a sweep with failed lines as not successful, though
            // every record (the failures' error objects included) was written.
            let failed = out.json.get("failed").and_then(|v| v.as_u64()).unwrap_or(0);
            if cli.is_sweep() && failed > 0 {
                eprintln!(
                    "error: {failed} {} of the list failed ({} among the records); exit code 3",
                    if failed == 1 { "line" } else { "lines" },
                    if failed == 1 {
                        "its error object is"
                    } else {
                        "their error objects are"
                    }
                );
                return ExitCode::from(3);
            }
            code
        }
        Err(e) => {
            let message = cut(&e.to_string());
            eprintln!("error: {}", for_terminal(&message));
            if json {
                let obj = json!({"schema_version": bellgap::render::json::SCHEMA_VERSION, "error": {
                    "kind": e.kind(),
                    "message": message,
                    "location": e.location(),
                }});
                let _ = write_stdout(&format!("{obj}\n"));
            }
            ExitCode::from(e.exit_code() as u8)
        }
    }
}

/// Text for a terminal: control characters from files (ESC, BEL, CR, ...) would be obeyed by
/// it, so every one but newline and tab is shown as its escape (`\u{1b}`) instead.
fn for_terminal(text: &str) -> String {
    text.chars()
        .map(|c| {
            if c.is_control() && c != '\n' && c != '\t' {
                c.escape_unicode().to_string()
            } else {
                c.to_string()
            }
        })
        .collect()
}

/// An error message of reasonable length: text echoed from a hostile file (a megabyte-long
/// field) is cut, saying so.
fn cut(message: &str) -> String {
    const MOST: usize = 2000;
    if message.chars().count() <= MOST {
        return message.to_string();
    }
    let kept: String = message.chars().take(MOST).collect();
    format!(
        "{kept}… (cut: the message was {} characters)",
        message.chars().count()
    )
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
