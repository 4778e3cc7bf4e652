//! Games as users write them: the YAML schema ([`spec`]), the formula language ([`formula`]),
//! validation and compilation to the flat table ([`compile`]), the standard families
//! ([`families`]) and products of games ([`product`]).
//!
//! Most callers want [`Game::from_file`] or [`Game::from_spec`], then `game.scenario`.

pub mod compile;
pub mod families;
pub mod formula;
pub mod located;
pub mod product;
pub mod spec;

pub use compile::CompileOptions;
pub use spec::{GameSpec, PlayerSpec};

use crate::error::{Error, Location, Result};
use crate::model::scenario::Scenario;
use compile::Context;
use located::SourceMap;

/// A validated game: its name, the flat table, and warnings found while building it.
#[derive(Debug, Clone)]
pub struct Game {
    pub name: String,
    pub description: Option<String>,
    /// Where it came from (a file path, or `family:NAME`).
    pub source: String,
    pub scenario: Scenario,
    pub warnings: Vec<String>,
}

impl Game {
    /// Reads, validates and compiles a game file.
    pub fn from_file(path: &str, options: CompileOptions) -> Result<Game> {
        let text = crate::formats::files::read_text(path)?;
        Game::from_yaml(&text, path, options)
    }

    /// Validates and compiles game text; `file` names it in error messages.
    pub fn from_yaml(text: &str, file: &str, options: CompileOptions) -> Result<Game> {
        let spec = parse_spec(text, file)?;
        let ctx = Context {
            file: file.to_string(),
            map: SourceMap::new(text),
        };
        Game::build(&spec, &ctx, file, options)
    }

    /// Compiles a game built in code (e.g. by a family constructor).
    pub fn from_spec(spec: &GameSpec, source: &str) -> Result<Game> {
        let ctx = Context {
            file: source.to_string(),
            map: SourceMap::default(),
        };
        Game::build(spec, &ctx, source, CompileOptions::default())
    }

    fn build(
        spec: &GameSpec,
        ctx: &Context,
        source: &str,
        options: CompileOptions,
    ) -> Result<Game> {
        let compiled = compile::compile(spec, ctx, options)?;
        Ok(Game {
            name: spec.name.clone().unwrap_or_else(|| default_name(source)),
            description: spec.description.clone(),
            source: source.to_string(),
            scenario: compiled.scenario,
            warnings: compiled.warnings,
        })
    }
}

/// Deserialises the schema, turning serde's message into a located error.
pub fn parse_spec(text: &str, file: &str) -> Result<GameSpec> {
    serde_yaml::from_str::<GameSpec>(text).map_err(|e| yaml_error(e, file))
}

pub(crate) fn yaml_error(e: serde_yaml::Error, file: &str) -> Error {
    let loc = e.location();
    let mut message = e.to_string();
    // serde_yaml appends " at line L column C"; we print the position ourselves.
    if let Some(cut) = message.find(" at line ") {
        message.truncate(cut);
    }
    let message = redact_quoted(&message);
    let (field, message) = match message.split_once(": ") {
        Some((path, rest)) if !path.contains(' ') => (Some(path.to_string()), rest.to_string()),
        _ => (None, message),
    };
    Error::Input {
        location: Location {
            file: file.to_string(),
            line: loc.as_ref().map(|l| l.line()),
            column: loc.as_ref().map(|l| l.column()),
            field,
        },
        message,
    }
}

/// The parser quotes what it found (`invalid type: string "..."`, or a name or number in
/// backticks): a long quotation is cut, so that pointing a command at a foreign file (say, a
/// password file) never echoes its content, and control characters are shown escaped.
fn redact_quoted(message: &str) -> String {
    const KEEP: usize = 16;
    let shown = |quoted: &str| {
        if quoted.chars().count() > KEEP {
            "…".to_string()
        } else {
            quoted.escape_default().to_string()
        }
    };
    let mut out = String::new();
    let mut quoted = String::new();
    // The open quotation's delimiter: the parser quotes strings with `"` and names and numbers
    // with backticks, and either may come from the file.
    let mut open: Option<char> = None;
    for c in message.chars() {
        match open {
            Some(q) if c == q => {
                out.push_str(&shown(&quoted));
                out.push(c);
                quoted.clear();
                open = None;
            }
            Some(_) => quoted.push(c),
            None if c == '"' || c == '`' => {
                out.push(c);
                open = Some(c);
            }
            None => out.push(c),
        }
    }
    if open.is_some() {
        out.push_str(&shown(&quoted));
    }
    out.chars().take(400).collect()
}

fn default_name(source: &str) -> String {
    std::path::Path::new(source)
        .file_stem()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_else(|| source.to_string())
}
