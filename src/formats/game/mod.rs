//! Games as users write them: the YAML schema ([`spec`]), the formula language
//! ([`crate::formats::formula`]), validation and compilation to the flat table (`compile`, one
//! file per step, reached through [`Game::from_file`] and [`Game::from_spec`]), the standard families
//! ([`families`]) and products of games ([`product`]).
//!
//! Most callers want [`Game::from_file`] or [`Game::from_spec`], then `game.scenario`.

pub(crate) mod compile;
pub mod families;
pub mod product;
pub mod spec;

pub use compile::{
    CompileOptions, DEFAULT_TABLE_LIMIT, HARD_TABLE_LIMIT, MAX_NAME_CHARS, MAX_PLAYERS,
    PROBABILITY_TOLERANCE,
};
pub use spec::{GameSpec, PlayerSpec};

use crate::error::Result;
use crate::formats::located::{yaml_error, Context, SourceMap};
use crate::model::scenario::Scenario;

/// A validated game: its name, the flat table, and warnings found while building it.
#[derive(Debug, Clone)]
pub struct Game {
    /// Name of the game.
    pub name: String,
    /// One line about it, when the file gives one.
    pub description: Option<String>,
    /// Where it came from (a file path, or `family:NAME`).
    pub source: String,
    /// The flat table.
    pub scenario: Scenario,
    /// Warnings found while building it (e.g. a score that never changes).
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

fn default_name(source: &str) -> String {
    std::path::Path::new(source)
        .file_stem()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_else(|| source.to_string())
}
