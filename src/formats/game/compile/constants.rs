//! The `constants` section: named numbers, booleans and tables the formulas may use.

use super::super::spec::GameSpec;
use super::parties::check_identifier;
use crate::error::Result;
use crate::formats::fields::constant_value;
use crate::formats::formula::Value;
use crate::formats::located::{yaml_brief, Context};

pub(super) fn parse_constants(spec: &GameSpec, ctx: &Context) -> Result<Vec<(String, Value)>> {
    let mut constants: Vec<(String, Value)> = Vec::new();
    let Some(map) = &spec.constants else {
        return Ok(constants);
    };
    for (key, value) in map {
        let Some(name) = key.as_str() else {
            return Err(ctx.error(
                "constants",
                format!("constant names are words, found {}", yaml_brief(key)),
            ));
        };
        let field = format!("constants.{name}");
        check_identifier(name, ctx, &field)?;
        if constants.iter().any(|(c, _)| c == name) {
            return Err(ctx.error(&field, format!("the constant `{name}` is defined twice")));
        }
        let v = constant_value(value, ctx, &field, &constants)?;
        constants.push((name.to_string(), v));
    }
    Ok(constants)
}
