//! The command line: [`args`] (what can be typed), [`request`] (the one conversion into typed
//! requests), and here the dispatch: load the inputs, call the library's pipeline, render, and
//! write requested files. Nothing here computes a bound, parses a file format or draws a chart.

pub mod args;
pub mod request;
mod sweep;

use std::io::IsTerminal;
use std::path::{Path, PathBuf};
use std::sync::Mutex;
use std::time::Instant;

use serde_json::Value;

use bellgap::bounds::quantum::npa;
use bellgap::formats::certificate::Certificate;
use bellgap::formats::files::write_atomic;
use bellgap::formats::game::spec::readable_yaml;
use bellgap::formats::game::{product, Game};
use bellgap::formats::protocol_file::ProtocolFile;
use bellgap::limits::human_seconds;
use bellgap::model::correlations::Correlations;
use bellgap::model::counts::Counts;
use bellgap::model::strategy::QuantumStrategy;
use bellgap::optim::first_order::IterationReport;
use bellgap::pipeline::{self, BoundKind, EntropyGiven, GameReport, Observer, RunData, Stage};
use bellgap::render::{charts, document, json, text};
use bellgap::{Error, Result};

use request::{
    DocumentFormat, FamilyChoice, GameInput, Invocation, Request, RunInput, SelfTestInput,
    TargetSource,
};

/// What a command produced: text for people, one JSON object for programs, warnings for stderr.
pub struct Output {
    /// The text output.
    pub text: String,
    /// The JSON output.
    pub json: Value,
    /// Warnings printed on stderr after the run.
    pub warnings: Vec<String>,
}

/// Warnings and progress on stderr: warnings unless `--quiet`, progress only when a person is
/// watching (stderr is a terminal) and the output is not JSON.
struct Stderr {
    quiet: bool,
    progress: bool,
    last: Mutex<Instant>,
    /// Whether a solver progress line is on the terminal, to be cleared when it finishes.
    solver_line: std::sync::atomic::AtomicBool,
    /// `bounds --json-lines`: each bound on stdout as soon as it is obtained.
    json_lines: bool,
}

impl Stderr {
    fn new(invocation: &Invocation) -> Self {
        Stderr {
            quiet: invocation.quiet,
            progress: !invocation.quiet && !invocation.json && std::io::stderr().is_terminal(),
            last: Mutex::new(Instant::now()),
            solver_line: std::sync::atomic::AtomicBool::new(false),
            json_lines: matches!(
                invocation.request,
                Request::Bounds {
                    json_lines: true,
                    ..
                }
            ),
        }
    }
}

impl Observer for Stderr {
    fn warn(&self, message: &str) {
        if !self.quiet {
            eprintln!("warning: {message}");
        }
    }

    fn wants_progress(&self) -> bool {
        self.progress
    }

    fn progress(&self, stage: Stage, done: usize, total: usize) {
        let mut last = self.last.lock().unwrap_or_else(|e| e.into_inner());
        if last.elapsed().as_millis() < 200 && done != total && stage == Stage::ClassicalSearch {
            return;
        }
        *last = Instant::now();
        match stage {
            Stage::ClassicalSearch => eprint!("\rclassical search: {done}/{total} subtrees"),
            Stage::SeesawRestarts => eprint!("\rsee-saw: {done}/{total} restarts"),
            Stage::EntropyNodes => eprint!("\rentropy hierarchy: {done}/{total} relaxations"),
            Stage::TangentLines => eprint!("\rentropy bound: {done}/{total} scores"),
            Stage::DesignSearches => {
                eprint!("\rimplementation search: {done}/{total} noise levels")
            }
        }
        if done == total {
            eprint!("\r{:40}\r", "");
        }
    }

    fn solver_progress(&self, stage: &str, report: &IterationReport) {
        self.solver_line
            .store(true, std::sync::atomic::Ordering::Relaxed);
        eprint!(
            "\r{stage}: iteration {}, bound so far {:.9}, residual {:.1e}, {}   ",
            report.iteration,
            report.verified,
            report.residual,
            human_seconds(report.seconds)
        );
    }

    fn solver_done(&self, _stage: &str) {
        if self
            .solver_line
            .swap(false, std::sync::atomic::Ordering::Relaxed)
        {
            eprint!("\r{:100}\r", "");
        }
    }

    fn obtained(&self, bound: BoundKind, so_far: &GameReport<'_>) {
        // The report so far as the final one will read (its bounds reconciled).
        let mut report = so_far.clone();
        report.reconcile_bounds();
        if self.json_lines {
            let mut line = json::to_value(&report);
            if let Some(object) = line.as_object_mut() {
                object.insert("obtained".into(), Value::String(bound.name().into()));
            }
            use std::io::Write;
            let mut stdout = std::io::stdout().lock();
            let _ = writeln!(stdout, "{line}");
            let _ = stdout.flush();
        } else if self.progress {
            eprintln!("{}", text::bound_obtained(&report, bound));
        }
    }
}

fn load(input: &GameInput) -> Result<Game> {
    Game::from_file(&input.path.to_string_lossy(), input.compile)
}

/// The reference pages generated from the command definitions: a man page for `bellgap` and
/// one per command, and completions for bash, zsh and fish.
pub fn reference_pages() -> Result<Vec<(String, String)>> {
    use clap::CommandFactory;
    let render_error =
        |e: std::io::Error| Error::solver("writing the reference pages", e.to_string());
    let mut command = args::Cli::command();
    command.build();
    let mut pages = Vec::new();
    let man = |cmd: clap::Command| -> Result<String> {
        let mut buffer = Vec::new();
        clap_mangen::Man::new(cmd)
            .render(&mut buffer)
            .map_err(render_error)?;
        Ok(String::from_utf8_lossy(&buffer).into_owned())
    };
    pages.push(("bellgap.1".to_string(), man(command.clone())?));
    for sub in command.get_subcommands().filter(|c| c.get_name() != "help") {
        let name = format!("bellgap-{}", sub.get_name());
        // The page's title is `bellgap-npa` (clap names want a static string: leaked once per
        // command, a few dozen bytes for the life of this short command).
        let page = sub.clone().name(&*Box::leak(name.clone().into_boxed_str()));
        pages.push((format!("{name}.1"), man(page)?));
    }
    for (shell, file) in [
        (clap_complete::Shell::Bash, "bellgap.bash"),
        (clap_complete::Shell::Zsh, "_bellgap"),
        (clap_complete::Shell::Fish, "bellgap.fish"),
    ] {
        let mut buffer = Vec::new();
        clap_complete::generate(shell, &mut command.clone(), "bellgap", &mut buffer);
        pages.push((
            file.to_string(),
            String::from_utf8_lossy(&buffer).into_owned(),
        ));
    }
    Ok(pages)
}

/// Writes an output atomically, never over one of the command's inputs.
fn write(file: &Path, content: &str, inputs: &[PathBuf]) -> Result<()> {
    let inputs: Vec<&Path> = inputs.iter().map(PathBuf::as_path).collect();
    write_atomic(file, content, &inputs)
}

fn output<T: serde::Serialize>(text: String, report: &T, warnings: &[String]) -> Output {
    Output {
        text,
        json: json::to_value(report),
        warnings: warnings.to_vec(),
    }
}

/// Runs one invocation.
pub fn run(invocation: &Invocation) -> Result<Output> {
    let observer = Stderr::new(invocation);
    let inputs = &invocation.inputs;
    match &invocation.request {
        Request::Check { game } => {
            let game = load(game)?;
            let r = pipeline::check(&game);
            Ok(output(text::game_report(&r), &r, &game.warnings))
        }
        Request::Classical { game, options } => {
            let game = load(game)?;
            let r = pipeline::classical(&game, options, &observer)?;
            Ok(output(text::game_report(&r), &r, &game.warnings))
        }
        Request::Nosignal { game, limits, save } => {
            let game = load(game)?;
            let r = pipeline::nosignal(&game, limits)?;
            let mut out = output(text::game_report(&r), &r, &game.warnings);
            if let Some(file) = save {
                let saved = pipeline::nosignal_behaviour(&game, &r)?;
                write(file, &saved.text, inputs)?;
                out.text += &text::saved_behaviour(&saved, &file.to_string_lossy());
                if let Value::Object(m) = &mut out.json {
                    let mut view = json::to_value(&saved);
                    if let Value::Object(v) = &mut view {
                        v.insert(
                            "file".into(),
                            Value::from(file.to_string_lossy().to_string()),
                        );
                    }
                    m.insert("saved_behaviour".into(), view);
                }
            }
            Ok(out)
        }
        Request::Bounds {
            game,
            options,
            dims,
            table,
            ..
        } => {
            let game = load(game)?;
            let options = pipeline::BoundsOptions {
                seesaw: bellgap::bounds::quantum::seesaw::SeesawOptions {
                    dims: dims.resolve(game.scenario.players()),
                    ..options.seesaw.clone()
                },
                ..options.clone()
            };
            let r = pipeline::bounds(&game, &options, &observer)?;
            let text = match table {
                Some(format) => bellgap::render::tables::bounds(&r, *format),
                None => text::game_report(&r),
            };
            Ok(output(text, &r, &game.warnings))
        }
        Request::Npa {
            game,
            options,
            certificate,
            exact_certificate,
            sdpa,
            table,
            svg,
        } => {
            let game = load(game)?;
            if let Some(file) = sdpa {
                let level = options.levels.last().cloned().unwrap_or(npa::Level::Joint);
                let (text, words) = npa::sdpa_export(&game.scenario, &level, &options.limits)?;
                write(file, &text, inputs)?;
                let mut words_file = file.clone().into_os_string();
                words_file.push(".words");
                write(Path::new(&words_file), &words, inputs)?;
            }
            let r = pipeline::npa_levels(&game, options, &observer)?;
            if let Some(file) = exact_certificate {
                let bound = r
                    .npa
                    .as_ref()
                    .ok_or_else(|| Error::solver("NPA", "no bound to certify"))?;
                let plain = npa::plain_certificate(&game.name, &game.scenario, bound)?;
                write(file, &plain.to_text(), inputs)?;
            }
            if let Some(file) = svg {
                write(file, &charts::npa_levels(&r), inputs)?;
            }
            if let Some(file) = certificate {
                let bound = r
                    .npa
                    .as_ref()
                    .ok_or_else(|| Error::solver("NPA", "no bound to certify"))?;
                let cert = npa::certificate(&game.name, &game.scenario, bound)
                    .ok_or_else(|| Error::solver("NPA", "no dual solution to save"))?;
                write(file, &cert.to_json(), inputs)?;
            }
            let text = match table {
                Some(format) => bellgap::render::tables::npa_levels(&r, *format),
                None => text::game_report(&r),
            };
            Ok(output(text, &r, &game.warnings))
        }
        Request::Seesaw {
            game,
            dims,
            options,
            save,
            svg,
        } => {
            let game = load(game)?;
            let options = bellgap::bounds::quantum::seesaw::SeesawOptions {
                dims: dims.resolve(game.scenario.players()),
                ..options.clone()
            };
            let r = pipeline::seesaw(&game, &options, &observer)?;
            let found = r
                .seesaw
                .as_ref()
                .ok_or_else(|| Error::solver("see-saw", "no strategy found"))?;
            if let Some(file) = save {
                // Saved in the Schmidt basis, real where it can be: the same behaviour, a file a
                // person can read.
                let readable = found.strategy.in_schmidt_basis();
                let yaml = readable_yaml(&readable.to_yaml_value(&game.scenario));
                write(file, &yaml, inputs)?;
            }
            if let Some(file) = svg {
                let classical = r.strategy_analysis.as_ref().and_then(|a| a.classical);
                write(
                    file,
                    &charts::robustness(&game, &found.strategy, classical),
                    inputs,
                )?;
            }
            Ok(output(text::game_report(&r), &r, &game.warnings))
        }
        Request::Design {
            game,
            request,
            dims,
            no_click,
            save,
            svg,
        } => {
            let game = load(game)?;
            let mut request = request.clone();
            request.design.seesaw.dims = dims.resolve(game.scenario.players());
            request.design.noise.no_click = no_click.resolve(&game.scenario)?;
            let r = pipeline::design(&game, &request, &observer)?;
            if let Some(file) = save {
                // The implementation with the noise it was designed for (`evaluate` scores it).
                let imp = &r.implementation;
                let readable = imp.strategy.in_schmidt_basis();
                let yaml = readable_yaml(&readable.to_yaml_value_with_noise(
                    &game.scenario,
                    &imp.noise,
                    &imp.no_click_answers,
                ));
                write(file, &yaml, inputs)?;
            }
            if let Some(file) = svg {
                write(file, &charts::design_threshold(&r), inputs)?;
            }
            Ok(output(text::design(&r), &r, &game.warnings))
        }
        Request::SelfTest {
            game,
            given,
            target,
            questions,
            level,
            dims,
            seesaw,
        } => {
            let game = load(game)?;
            let target = match target {
                TargetSource::Seesaw => pipeline::SelfTestTarget::Seesaw(
                    bellgap::bounds::quantum::seesaw::SeesawOptions {
                        dims: match dims.resolve(game.scenario.players()) {
                            d if d.is_empty() => vec![2; game.scenario.players()],
                            d => d,
                        },
                        ..seesaw.clone()
                    },
                ),
                TargetSource::Amplitudes(a) => pipeline::SelfTestTarget::Amplitudes(a.clone()),
                TargetSource::Strategy(file) => {
                    let name = file.to_string_lossy().to_string();
                    let st = QuantumStrategy::from_file_with(
                        &name,
                        &game.scenario,
                        &Default::default(),
                    )?;
                    pipeline::SelfTestTarget::Strategy(st, name)
                }
            };
            let r = pipeline::self_test(
                &game,
                &pipeline::SelfTestRequest {
                    given: match given {
                        SelfTestInput::Score(v) => pipeline::SelfTestGiven::Score(*v),
                        SelfTestInput::Behaviour(f) => pipeline::SelfTestGiven::Behaviour(
                            Correlations::from_file(&f.to_string_lossy())?,
                        ),
                        SelfTestInput::Counts(f, alpha) => pipeline::SelfTestGiven::Counts(
                            Counts::from_file(&f.to_string_lossy())?,
                            *alpha,
                        ),
                    },
                    target,
                    questions: questions.clone(),
                    level: level.clone(),
                },
                &observer,
            )?;
            Ok(output(text::self_test(&r), &r, &game.warnings))
        }
        Request::Evaluate {
            game,
            strategy,
            reading,
            options,
            svg,
        } => {
            let game = load(game)?;
            let (st, noise) = QuantumStrategy::with_noise_from_file(
                &strategy.to_string_lossy(),
                &game.scenario,
                reading,
            )?;
            // The file's noise model, when it has one, is scored too.
            let options = pipeline::EvaluateOptions {
                noise,
                ..options.clone()
            };
            let r = pipeline::evaluate(&game, &st, &options, &observer)?;
            if let Some(file) = svg {
                let classical = r.strategy_analysis.as_ref().and_then(|a| a.classical);
                write(
                    file,
                    &charts::robustness(&game, &st.made_valid(), classical),
                    inputs,
                )?;
            }
            Ok(output(text::game_report(&r), &r, &game.warnings))
        }
        Request::Margin { game, run, options } => {
            let game = load(game)?;
            let run = match run {
                RunInput::Summary(run) => RunData::Summary(*run),
                RunInput::Counts(file) => {
                    RunData::Counts(Counts::from_file(&file.to_string_lossy())?)
                }
            };
            let r = pipeline::margin(&game, &run, options, &observer)?;
            Ok(output(text::margin(&r), &r, &game.warnings))
        }
        Request::Randomness {
            game,
            options,
            counts,
            svg,
            sdpa,
            sdpa_solution,
        } => {
            let game = load(game)?;
            if let Some(file) = sdpa {
                let (text, words) = pipeline::randomness_sdpa_export(&game, options)?;
                write(file, &text, inputs)?;
                let mut words_file = file.clone().into_os_string();
                words_file.push(".words");
                write(Path::new(&words_file), &words, inputs)?;
            }
            if let Some(file) = sdpa_solution {
                let text = bellgap::formats::files::read_text(file)?;
                let r = pipeline::randomness_sdpa_import(&game, options, &text)
                    .map_err(|e| e.in_file(&file.to_string_lossy()))?;
                let out = text::guessing_import(&r, &file.to_string_lossy());
                return Ok(output(out, &r, &game.warnings));
            }
            let mut options = options.clone();
            if let Some((file, alpha)) = counts {
                options.from_counts = Some((Counts::from_file(&file.to_string_lossy())?, *alpha));
            }
            let r = pipeline::randomness(&game, &options, &observer)?;
            if let Some(file) = svg {
                write(file, &charts::min_entropy(&r), inputs)?;
            }
            Ok(output(text::randomness(&r), &r, &game.warnings))
        }
        Request::Entropy {
            game,
            behaviour,
            strategy,
            counts,
            options,
            sdpa,
            sdpa_solutions,
            exact,
        } => {
            let game = load(game)?;
            if let Some(prefix) = sdpa_solutions {
                let mut texts = Vec::new();
                for k in 0..pipeline::entropy_node_count(options) {
                    let mut file = prefix.clone().into_os_string();
                    file.push(format!("-node-{:02}.out", k + 1));
                    let text = bellgap::formats::files::read_text(Path::new(&file))?;
                    texts.push((file.to_string_lossy().to_string(), text));
                }
                let r = pipeline::entropy_sdpa_import(&game, options, &texts, *exact)?;
                return Ok(output(text::entropy_import(&r), &r, &game.warnings));
            }
            if let Some(prefix) = sdpa {
                for (k, node) in pipeline::entropy_sdpa_export(&game, options)?
                    .iter()
                    .enumerate()
                {
                    let mut file = prefix.clone().into_os_string();
                    file.push(format!("-node-{:02}.dat-s", k + 1));
                    write(Path::new(&file), &node.sdpa, inputs)?;
                    file.push(".words");
                    write(Path::new(&file), &node.words, inputs)?;
                }
            }
            let mut options = options.clone();
            if let Some((file, alpha)) = counts {
                let c = Counts::from_file(&file.to_string_lossy())?;
                options.given = EntropyGiven::Counts {
                    counts: c,
                    error: *alpha,
                };
            }
            if let Some(file) = behaviour {
                let c = Correlations::from_file(&file.to_string_lossy())?;
                options.given = EntropyGiven::Behaviour(c);
            }
            if let Some(file) = strategy {
                let name = file.to_string_lossy();
                options.given = EntropyGiven::Strategy {
                    strategy: QuantumStrategy::from_file(&name, &game.scenario)?,
                    name: name.to_string(),
                };
            }
            let r = pipeline::entropy(&game, &options, &observer)?;
            Ok(output(text::entropy(&r), &r, &game.warnings))
        }
        Request::FiniteSize { game, options, svg } => {
            let game = load(game)?;
            let r = pipeline::finite_size(&game, options, &observer)?;
            if let Some(file) = svg {
                write(file, &charts::finite_size_rate(&r), inputs)?;
            }
            Ok(output(text::finite_size(&r), &r, &game.warnings))
        }
        Request::Key(options) => {
            let r = pipeline::key(options)?;
            Ok(output(text::key(&r), &r, &[]))
        }
        Request::Review {
            protocol,
            format,
            output: file,
        } => {
            let protocol = ProtocolFile::from_file(&protocol.to_string_lossy())?;
            let game = Game::from_file(&protocol.game_path.to_string_lossy(), Default::default())?;
            let mut r = pipeline::review(&protocol, &game, &observer)?;
            r.command_line = std::env::args().collect::<Vec<_>>().join(" ");
            let mut inputs = inputs.clone();
            inputs.push(protocol.game_path.clone());
            inputs.extend(protocol.counts_path.clone());
            let text = match (format, file) {
                (DocumentFormat::Html, Some(file)) => {
                    write(file, &document::html(&r), &inputs)?;
                    format!("review written to {}\n", file.to_string_lossy())
                }
                (DocumentFormat::Html, None) => document::html(&r),
                (DocumentFormat::Markdown, Some(file)) => {
                    // The plots go beside the report, named after it, and are linked from it.
                    let stem = file
                        .file_stem()
                        .map(|s| s.to_string_lossy().into_owned())
                        .unwrap_or_else(|| "review".into());
                    let (doc, plots) = document::markdown(&r, Some(&stem));
                    let folder = file.parent().unwrap_or(std::path::Path::new(""));
                    let mut written = vec![file.to_string_lossy().into_owned()];
                    for (name, svg) in &plots {
                        let path = folder.join(name);
                        write(&path, svg, &inputs)?;
                        written.push(path.to_string_lossy().into_owned());
                    }
                    write(file, &doc, &inputs)?;
                    format!("review written to {}\n", written.join(", "))
                }
                (DocumentFormat::Markdown, None) => document::markdown(&r, None).0,
            };
            Ok(output(text, &r, &game.warnings))
        }
        Request::Verify {
            game,
            certificate,
            limits,
            exact,
            sdpa_level,
        } => {
            let game = load(game)?;
            if let Some(level) = sdpa_level {
                let text = bellgap::formats::files::read_text(certificate)?;
                let r = npa::sdpa_import(&game.scenario, level, &text, *exact, limits)
                    .map_err(|e| e.in_file(&certificate.to_string_lossy()))?;
                let out = text::sdpa_import(&game, &certificate.to_string_lossy(), &r);
                let mut json = json::to_value(&r);
                if let Value::Object(m) = &mut json {
                    m.insert("schema_version".into(), Value::from(json::SCHEMA_VERSION));
                    m.insert("command".into(), Value::from("verify"));
                    m.insert("game".into(), Value::from(game.name.clone()));
                }
                return Ok(Output {
                    text: out,
                    json,
                    warnings: game.warnings.clone(),
                });
            }
            let cert = Certificate::from_file(certificate)?;
            let source = certificate.to_string_lossy();
            let r = pipeline::verify(&game, &cert, &source, limits, *exact)?;
            Ok(output(text::verify(&r), &r, &game.warnings))
        }
        Request::Local {
            correlations,
            counts,
            save,
            limits,
        } => {
            let path = correlations.to_string_lossy();
            let c = if *counts {
                Counts::from_file(&path)?.as_correlations()
            } else {
                Correlations::from_file(&path)?
            };
            let r = pipeline::local(&c, limits)?;
            let mut saved = None;
            if let (Some(file), Some(sep)) = (save, &r.test.separating) {
                // The integer form when there is one: its bound and value are exact.
                let spec = match &sep.integer {
                    Some(int) => bellgap::formats::correlations::expression_as_game(
                        &c,
                        &int.coefficients
                            .iter()
                            .map(|&k| k as f64)
                            .collect::<Vec<_>>(),
                        int.local_bound as f64,
                        int.value,
                    ),
                    None => bellgap::formats::correlations::expression_as_game(
                        &c,
                        &sep.coefficients,
                        sep.local_bound,
                        sep.value,
                    ),
                };
                write(file, &spec.to_yaml(), inputs)?;
                saved = Some(file.to_string_lossy().to_string());
            }
            Ok(Output {
                text: text::local(&r, saved.as_deref()),
                json: json::to_value(&json::LocalView::of(&r, saved.as_deref())),
                warnings: Vec::new(),
            })
        }
        Request::Sweep {
            list,
            shard,
            output: file,
        } => sweep::sweep(list, *shard, file.as_ref(), inputs),
        Request::SweepMerge {
            shards,
            output: file,
        } => sweep::merge(shards, file.as_ref(), inputs),
        Request::Reference { folder } => {
            let files = reference_pages()?;
            std::fs::create_dir_all(folder).map_err(|e| Error::Io {
                path: folder.display().to_string(),
                op: bellgap::IoOp::Write,
                source: e,
            })?;
            let mut written = Vec::new();
            for (name, content) in &files {
                let path = folder.join(name);
                write(&path, content, inputs)?;
                written.push(path.display().to_string());
            }
            Ok(Output {
                text: format!(
                    "{} reference pages written to {}: {}\n",
                    written.len(),
                    folder.display(),
                    files
                        .iter()
                        .map(|(n, _)| n.as_str())
                        .collect::<Vec<_>>()
                        .join(", ")
                ),
                json: serde_json::json!({
                    "schema_version": json::SCHEMA_VERSION,
                    "command": "reference",
                    "folder": folder.display().to_string(),
                    "files": written,
                }),
                warnings: Vec::new(),
            })
        }
        Request::Family { family } => {
            let spec = match family {
                FamilyChoice::Standard(f) => f.spec()?,
                FamilyChoice::Product { game, rounds } => {
                    let g = Game::from_file(&game.to_string_lossy(), Default::default())?;
                    product::parallel_repetition(&g.scenario, &g.name, *rounds)?
                }
            };
            // A family must always compile; checking here keeps `games/` honest.
            Game::from_spec(&spec, "family")?;
            Ok(Output {
                text: spec.to_yaml(),
                json: serde_json::to_value(&spec).map_err(|e| Error::Usage(e.to_string()))?,
                warnings: Vec::new(),
            })
        }
    }
}
