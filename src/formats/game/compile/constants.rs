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

#[cfg(test)]
mod tests {
    use super::super::testing::{located, spec, two_by_two};
    use super::*;

    #[test]
    fn constants_are_read_in_file_order_and_may_use_earlier_ones() {
        let (s, ctx) = spec(&two_by_two(
            "constants:\n  n: 5\n  half: n / 2\n  signs: [[1, 1], [1, -1]]\n  yes: true\nwin: 'true'\n",
        ));
        let c = parse_constants(&s, &ctx).unwrap();
        let names: Vec<&str> = c.iter().map(|(n, _)| n.as_str()).collect();
        assert_eq!(names, vec!["n", "half", "signs", "yes"]);
        assert_eq!(c[0].1, Value::Int(5));
        assert_eq!(c[1].1.as_f64().unwrap(), 2.5);
        assert!(matches!(&c[2].1, Value::List(rows) if rows.len() == 2));
        assert_eq!(c[3].1, Value::Bool(true));
    }

    #[test]
    fn a_later_constant_is_not_in_scope_and_bad_names_are_located() {
        let (s, ctx) = spec(&two_by_two("constants:\n  a: b + 1\n  b: 2\nwin: 'true'\n"));
        let e = parse_constants(&s, &ctx).unwrap_err();
        assert_eq!(located(&e), (Some("constants.a".into()), Some(5)), "{e}");
        let (s, ctx) = spec(&two_by_two("constants:\n  pi: 3\nwin: 'true'\n"));
        let e = parse_constants(&s, &ctx).unwrap_err();
        assert_eq!(located(&e).0.as_deref(), Some("constants.pi"), "{e}");
    }
}
