//! `sweep` and `sweep-merge`: a list of command lines run one after another (or one shard of
//! them, for a batch scheduler's job array), each line's JSON result kept as a line of JSON
//! Lines, and the shards' outputs merged back in list order.

use std::path::{Path, PathBuf};

use serde_json::{json, Value};

use super::args::Cli;
use super::request::Invocation;
use super::{run, write, Output};
use bellgap::formats::files::read_text;
use bellgap::{Error, Result};
use clap::Parser;

/// Splits a line into words at spaces; "double quotes" keep spaces inside a word.
fn words(line: &str) -> std::result::Result<Vec<String>, String> {
    let mut out = Vec::new();
    let mut word = String::new();
    let (mut quoted, mut started) = (false, false);
    for c in line.chars() {
        match c {
            '"' => {
                quoted = !quoted;
                started = true;
            }
            c if c.is_whitespace() && !quoted => {
                if started {
                    out.push(std::mem::take(&mut word));
                    started = false;
                }
            }
            c => {
                word.push(c);
                started = true;
            }
        }
    }
    if quoted {
        return Err("a double quote is not closed".into());
    }
    if started {
        out.push(word);
    }
    Ok(out)
}

/// The error object the command line prints for `e`.
fn error_value(kind: &str, message: String, location: Value) -> Value {
    json!({"kind": kind, "message": message, "location": location})
}

/// The command line of a list line, parsed (None when it does not parse; running it reports
/// why).
fn parsed(line: &str) -> Option<Cli> {
    let words = words(line).ok()?;
    Cli::try_parse_from(std::iter::once("bellgap".to_string()).chain(words)).ok()
}

/// A 64-bit FNV-1a hash of the list's text, as 16 hex digits: binds each record to its list so
/// that shards of different lists are never merged (not a cryptographic commitment).
fn list_hash(text: &str) -> String {
    let mut h: u64 = 0xcbf29ce484222325;
    for b in text.bytes() {
        h ^= u64::from(b);
        h = h.wrapping_mul(0x100000001b3);
    }
    format!("{h:016x}")
}

/// Runs one line as the command line would with `--json --quiet`; its JSON, or its error.
/// `protected` are files no line may write: the list, the sweep's output, and every line's
/// inputs.
fn run_line(line: &str, protected: &[PathBuf]) -> std::result::Result<Value, Value> {
    let words = words(line).map_err(|m| error_value("usage", m, Value::Null))?;
    match words.first().map(String::as_str) {
        Some("sweep" | "sweep-merge") => {
            return Err(error_value(
                "usage",
                "a sweep list may not run sweep or sweep-merge".into(),
                Value::Null,
            ))
        }
        None => return Err(error_value("usage", "empty line".into(), Value::Null)),
        _ => {}
    }
    let cli =
        Cli::try_parse_from(std::iter::once("bellgap".to_string()).chain(words)).map_err(|e| {
            let text = e.to_string();
            let first = text
                .lines()
                .next()
                .unwrap_or("")
                .trim_start_matches("error: ");
            error_value("usage", first.to_string(), Value::Null)
        })?;
    let outcome = std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| {
        Invocation::from_cli(&cli).and_then(|mut invocation| {
            invocation.json = true;
            invocation.quiet = true;
            invocation.inputs.extend(protected.iter().cloned());
            run(&invocation)
        })
    }));
    match outcome {
        Ok(Ok(out)) => Ok(out.json),
        Ok(Err(e)) => Err(error_value(
            e.kind(),
            e.to_string(),
            serde_json::to_value(e.location()).unwrap_or(Value::Null),
        )),
        Err(_) => Err(error_value(
            "internal",
            "internal error (a bug; please report it): the command panicked".into(),
            Value::Null,
        )),
    }
}

/// The list's command lines with their line numbers (1-based), comments and blanks skipped.
fn tasks(text: &str) -> Vec<(usize, String)> {
    text.lines()
        .enumerate()
        .map(|(k, l)| (k + 1, l.trim().to_string()))
        .filter(|(_, l)| !l.is_empty() && !l.starts_with('#'))
        .collect()
}

/// What `sweep` and `sweep-merge` print: the records themselves, or a summary when they went
/// to a file; as JSON, one object.
fn finish(
    records: Vec<Value>,
    summary: Value,
    output: Option<&PathBuf>,
    inputs: &[PathBuf],
) -> Result<Output> {
    let lines: String = records.iter().map(|r| format!("{r}\n")).collect();
    match output {
        Some(file) => {
            write(file, &lines, inputs)?;
            Ok(Output {
                text: format!(
                    "{} records written to {} ({} failed)\n",
                    summary["records"],
                    file.display(),
                    summary["failed"]
                ),
                json: summary,
                warnings: Vec::new(),
            })
        }
        None => {
            let mut json = summary;
            json["items"] = Value::Array(records);
            Ok(Output {
                text: lines,
                json,
                warnings: Vec::new(),
            })
        }
    }
}

/// `sweep`.
pub fn sweep(
    list: &Path,
    shard: Option<(usize, usize)>,
    output: Option<&PathBuf>,
    inputs: &[PathBuf],
) -> Result<Output> {
    let text = read_text(list)?;
    let tasks = tasks(&text);
    let total = tasks.len();
    let hash = list_hash(&text);
    // No line may write over the list, the sweep's own output, or any line's inputs (each
    // line's own check sees only its own inputs).
    let mut protected: Vec<PathBuf> = vec![list.to_path_buf()];
    protected.extend(output.cloned());
    protected.extend(inputs.iter().cloned());
    for (_, line) in &tasks {
        if let Some(cli) = parsed(line) {
            protected.extend(cli.inputs());
        }
    }
    let (mut records, mut failed) = (Vec::new(), 0usize);
    for (index, (line_number, line)) in tasks.iter().enumerate() {
        if let Some((i, n)) = shard {
            if index % n != i - 1 {
                continue;
            }
        }
        let mut record = json!({"task": index + 1, "of": total, "list_line": line_number, "line": line, "list_hash": hash});
        match run_line(line, &protected) {
            Ok(result) => record["result"] = result,
            Err(error) => {
                failed += 1;
                record["error"] = error;
            }
        }
        records.push(record);
    }
    let summary = json!({
        "schema_version": bellgap::render::json::SCHEMA_VERSION,
        "command": "sweep",
        "list": list.display().to_string(),
        "list_hash": hash,
        "of": total,
        "shard": shard.map(|(i, n)| format!("{i}/{n}")),
        "records": records.len(),
        "failed": failed,
    });
    finish(records, summary, output, inputs)
}

/// `sweep-merge`.
pub fn merge(shards: &[PathBuf], output: Option<&PathBuf>, inputs: &[PathBuf]) -> Result<Output> {
    let mut records: Vec<(usize, Value)> = Vec::new();
    let mut total: Option<u64> = None;
    let mut hash: Option<String> = None;
    for file in shards {
        let name = file.display().to_string();
        let text = read_text(file)?;
        for (k, line) in text
            .lines()
            .enumerate()
            .filter(|(_, l)| !l.trim().is_empty())
        {
            let bad = |m: String| Error::Input {
                location: bellgap::Location {
                    file: name.clone(),
                    line: Some(k + 1),
                    ..Default::default()
                },
                message: m,
            };
            let record: Value =
                serde_json::from_str(line).map_err(|e| bad(format!("not a JSON object: {e}")))?;
            let (Some(task), Some(of)) = (record["task"].as_u64(), record["of"].as_u64()) else {
                return Err(bad(
                    "a sweep record needs `task` and `of` (records of an older bellgap cannot be merged: rerun the sweep)".into(),
                ));
            };
            if *total.get_or_insert(of) != of {
                return Err(bad(format!(
                    "this record is of a list of {of} lines, an earlier one of {}: shards of different sweeps",
                    total.unwrap_or(0)
                )));
            }
            let this = record["list_hash"].as_str().unwrap_or("").to_string();
            if this.is_empty() {
                return Err(bad(
                    "a sweep record needs `list_hash` (records of an older bellgap cannot be merged: rerun the sweep)".into(),
                ));
            }
            if *hash.get_or_insert_with(|| this.clone()) != this {
                return Err(bad(format!(
                    "this record is of the list with hash {this}, an earlier one of {}: shards of different lists",
                    hash.clone().unwrap_or_default()
                )));
            }
            if task == 0 || task > of {
                return Err(bad(format!(
                    "task {task} is outside a list of {of} tasks (they count from 1)"
                )));
            }
            records.push((task as usize - 1, record));
        }
    }
    let total = total.unwrap_or(0) as usize;
    records.sort_by_key(|(i, _)| *i);
    if let Some(w) = records.windows(2).find(|w| w[0].0 == w[1].0) {
        return Err(Error::InvalidArgument(format!(
            "task {} of the list appears in more than one record: a shard was given twice",
            w[0].0 + 1
        )));
    }
    let missing: Vec<usize> = {
        let have: std::collections::BTreeSet<usize> = records.iter().map(|(i, _)| *i).collect();
        (0..total).filter(|i| !have.contains(i)).collect()
    };
    if !missing.is_empty() {
        let shown: Vec<String> = missing
            .iter()
            .take(10)
            .map(|i| (i + 1).to_string())
            .collect();
        return Err(Error::InvalidArgument(format!(
            "{} of {total} records are missing (tasks {}{}): a shard is missing or did not finish",
            missing.len(),
            shown.join(", "),
            if missing.len() > 10 { ", ..." } else { "" }
        )));
    }
    let failed = records
        .iter()
        .filter(|(_, r)| r.get("error").is_some())
        .count();
    let summary = json!({
        "schema_version": bellgap::render::json::SCHEMA_VERSION,
        "command": "sweep-merge",
        "list_hash": hash,
        "of": total,
        "records": records.len(),
        "failed": failed,
    });
    finish(
        records.into_iter().map(|(_, r)| r).collect(),
        summary,
        output,
        inputs,
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn words_split_at_spaces_and_keep_quoted_spaces() {
        assert_eq!(
            words(r#"npa  games/a b.yaml --level "1;2""#).unwrap(),
            vec!["npa", "games/a", "b.yaml", "--level", "1;2"]
        );
        assert_eq!(
            words(r#"check "my game.yaml""#).unwrap(),
            vec!["check", "my game.yaml"]
        );
        assert!(words(r#"check "open"#).is_err());
    }
}
