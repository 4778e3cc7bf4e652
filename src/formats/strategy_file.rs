//! The strategy file (YAML or JSON): what `seesaw --save` writes and `evaluate` reads. Every
//! entry is checked (finite numbers, shapes against the game, normalised state, POVM conditions)
//! with located errors.
//!
//! File schema (YAML or JSON):
//!
//! ```yaml
//! dims: [2, 2]                       # local dimension of each player, in game order
//! state: ["1/sqrt(2)", 0, 0, [0.7071067811865476, 0]]   # amplitudes, product basis, first player most significant
//! measurements:
//!   alice:                           # one entry per question, in the game's question order
//!     - question: 0                  # the question label
//!       elements:                    # one d×d matrix per answer, entries real or [re, im]
//!                                    # (each number may be an expression such as "1/sqrt(2)")
//!         - [[1, 0], [0, 0]]
//!         - [[0, 0], [0, 1]]
//! noise:                             # optional: the noise the implementation meets
//!   visibility: 0.98                 # in [0, 1] (default 1)
//!   efficiency: 0.9                  # in (0, 1], one number or one per player (default 1)
//!   dark_counts: 0                   # in [0, 1] (default 0)
//!   no_click: {alice: [0, 0], bob: [0, 0]}   # answer label per question, or `extra`, or one label
//! ```

use num_complex::Complex64;
use serde_yaml::{Mapping, Value as Yaml};

use super::fields::real;
use super::files::read_text;
use super::located::{yaml_error, Context, SourceMap};
use crate::error::Result;
use crate::model::noise::{Assignment, NoClick, NoiseModel};
use crate::model::scenario::Scenario;
use crate::model::strategy::{
    joint_dimension, CMatrix, CVector, QuantumStrategy, MAX_JOINT_DIMENSION,
};

impl QuantumStrategy {
    /// The strategy as a file (see the module notes).
    pub fn to_yaml_value(&self, s: &Scenario) -> Yaml {
        // Integral parts are written as integers, and dust below 1e-15 as 0, for readable files.
        let clean = |v: f64| -> Yaml {
            let v = if v.abs() < 1e-15 { 0.0 } else { v };
            // Within 1e-12 of a number with at most six decimals (0.5, 1, 0.25): that number.
            // The file is re-checked when read, and the change is far below the checks'
            // tolerances and the value's stated error.
            let short = (v * 1e6).round() / 1e6;
            let v = if (v - short).abs() < 1e-12 { short } else { v };
            if v == v.round() && v.abs() < 1e15 {
                Yaml::from(v as i64)
            } else {
                Yaml::from(v)
            }
        };
        let c = |z: Complex64| -> Yaml {
            if z.im.abs() < 1e-12 {
                clean(z.re)
            } else {
                Yaml::Sequence(vec![clean(z.re), clean(z.im)])
            }
        };
        let mut root = Mapping::new();
        root.insert(
            "dims".into(),
            Yaml::Sequence(self.dims.iter().map(|&d| Yaml::from(d as u64)).collect()),
        );
        root.insert(
            "state".into(),
            Yaml::Sequence(self.state.iter().map(|&z| c(z)).collect()),
        );
        let mut ms = Mapping::new();
        for (i, player) in self.measurements.iter().enumerate() {
            let p = &s.parties()[i];
            let list = player
                .iter()
                .enumerate()
                .map(|(x, povm)| {
                    let mut e = Mapping::new();
                    e.insert("question".into(), Yaml::from(p.question_labels[x]));
                    e.insert(
                        "elements".into(),
                        Yaml::Sequence(
                            povm.iter()
                                .map(|m| {
                                    Yaml::Sequence(
                                        (0..m.nrows())
                                            .map(|r| {
                                                Yaml::Sequence(
                                                    (0..m.ncols()).map(|k| c(m[(r, k)])).collect(),
                                                )
                                            })
                                            .collect(),
                                    )
                                })
                                .collect(),
                        ),
                    );
                    Yaml::Mapping(e)
                })
                .collect();
            ms.insert(Yaml::from(p.name.clone()), Yaml::Sequence(list));
        }
        root.insert("measurements".into(), Yaml::Mapping(ms));
        Yaml::Mapping(root)
    }

    /// The file's `noise:` section, when it has one (see the module notes), checked against
    /// the game with located errors.
    pub fn noise_from_yaml(text: &str, file: &str, s: &Scenario) -> Result<Option<NoiseModel>> {
        let root: Yaml = serde_yaml::from_str(text).map_err(|e| yaml_error(e, file))?;
        let ctx = Context {
            file: file.to_string(),
            map: SourceMap::new(text),
        };
        let Some(section) = root.get("noise") else {
            return Ok(None);
        };
        let Yaml::Mapping(m) = section else {
            return Err(ctx.error(
                "noise",
                "expected a mapping with `visibility`, `efficiency`, `dark_counts`, `no_click`",
            ));
        };
        let mut noise = NoiseModel::default();
        for (k, v) in m {
            let key = k.as_str().unwrap_or("");
            let field = format!("noise.{key}");
            match key {
                "visibility" => noise.visibility = real(v, &ctx, &field, &[])?,
                "dark_counts" => noise.dark_counts = real(v, &ctx, &field, &[])?,
                "efficiency" => {
                    noise.efficiency = match v {
                        Yaml::Sequence(list) => list
                            .iter()
                            .enumerate()
                            .map(|(i, e)| real(e, &ctx, &format!("{field}[{i}]"), &[]))
                            .collect::<Result<_>>()?,
                        other => vec![real(other, &ctx, &field, &[])?],
                    }
                }
                "no_click" => noise.no_click = no_click_from(v, &ctx, &field, s)?,
                other => {
                    return Err(ctx.error(
                        &field,
                        format!("unknown field `{other}` (expected `visibility`, `efficiency`, `dark_counts`, `no_click`)"),
                    ))
                }
            }
        }
        noise
            .check(s)
            .map_err(|(f, m)| ctx.error(&format!("noise.{f}"), m))?;
        Ok(Some(noise))
    }

    /// The strategy as a file with a `noise:` section: the noise model, its no-click answers
    /// (`f`, by label per player and question) written out.
    pub fn to_yaml_value_with_noise(
        &self,
        s: &Scenario,
        noise: &NoiseModel,
        f: &Assignment,
    ) -> Yaml {
        let mut root = match self.to_yaml_value(s) {
            Yaml::Mapping(m) => m,
            _ => Mapping::new(),
        };
        let mut n = Mapping::new();
        n.insert("visibility".into(), Yaml::from(noise.visibility));
        n.insert(
            "efficiency".into(),
            match noise.efficiency.as_slice() {
                [] => Yaml::from(1),
                [one] => Yaml::from(*one),
                many => Yaml::Sequence(many.iter().map(|&e| Yaml::from(e)).collect()),
            },
        );
        n.insert("dark_counts".into(), Yaml::from(noise.dark_counts));
        let no_click = if noise.no_click == NoClick::Extra {
            Yaml::from("extra")
        } else {
            let mut per = Mapping::new();
            for (p, row) in s.parties().iter().zip(f) {
                per.insert(
                    Yaml::from(p.name.clone()),
                    Yaml::Sequence(
                        row.iter()
                            .map(|&a| Yaml::from(p.answer_labels[a]))
                            .collect(),
                    ),
                );
            }
            Yaml::Mapping(per)
        };
        n.insert("no_click".into(), no_click);
        root.insert("noise".into(), Yaml::Mapping(n));
        Yaml::Mapping(root)
    }

    /// Reads a strategy file for game `s`, with located errors.
    pub fn from_yaml(text: &str, file: &str, s: &Scenario) -> Result<QuantumStrategy> {
        Self::from_yaml_with(text, file, s, &StrategyFileOptions::default())
    }

    /// [`QuantumStrategy::from_yaml`] with options (the state normalised first, when asked).
    pub fn from_yaml_with(
        text: &str,
        file: &str,
        s: &Scenario,
        options: &StrategyFileOptions,
    ) -> Result<QuantumStrategy> {
        let root: Yaml = serde_yaml::from_str(text).map_err(|e| yaml_error(e, file))?;
        let ctx = Context {
            file: file.to_string(),
            map: SourceMap::new(text),
        };
        let Yaml::Mapping(map) = &root else {
            return Err(ctx.error(
                "",
                "expected a mapping with `dims`, `state` and `measurements`",
            ));
        };
        for k in map.keys() {
            let key = k.as_str().unwrap_or("");
            if !matches!(
                key,
                "dims" | "state" | "measurements" | "game" | "value" | "noise"
            ) {
                return Err(ctx.error(
                    key,
                    format!(
                        "unknown field `{key}` (expected `dims`, `state`, `measurements`, `noise`)"
                    ),
                ));
            }
        }
        let n = s.players();
        let dims: Vec<usize> = match map.get("dims") {
            Some(Yaml::Sequence(v)) if v.len() == n => v
                .iter()
                .enumerate()
                .map(|(i, d)| {
                    d.as_u64()
                        .filter(|&d| (1..=64).contains(&d))
                        .map(|d| d as usize)
                        .ok_or_else(|| {
                            ctx.error(&format!("dims[{i}]"), "expected a dimension from 1 to 64")
                        })
                })
                .collect::<Result<_>>()?,
            _ => {
                return Err(ctx.error(
                    "dims",
                    format!("expected a list of {n} dimensions, one per player"),
                ))
            }
        };
        let Some(total) = joint_dimension(&dims) else {
            return Err(ctx.error(
                "dims",
                format!(
                    "the joint dimension of {dims:?} is above the limit of {MAX_JOINT_DIMENSION}"
                ),
            ));
        };
        // Non-finite entries are refused here: NaN passes every `> tolerance` check later.
        // Numbers or constant expressions ("1/sqrt(2)"), as in correlations files.
        let complex = |v: &Yaml, field: &str| -> Result<Complex64> {
            match v {
                Yaml::Number(_) | Yaml::String(_) => {
                    Ok(Complex64::new(real(v, &ctx, field, &[])?, 0.0))
                }
                Yaml::Sequence(p) if p.len() == 2 => Ok(Complex64::new(
                    real(&p[0], &ctx, &format!("{field}[0]"), &[])?,
                    real(&p[1], &ctx, &format!("{field}[1]"), &[])?,
                )),
                Yaml::Sequence(_) => Err(ctx.error(field, "expected [re, im] with two numbers")),
                _ => Err(ctx.error(field, "expected a number or [re, im]")),
            }
        };
        let state = match map.get("state") {
            Some(Yaml::Sequence(v)) if v.len() == total => CVector::from_vec(
                v.iter()
                    .enumerate()
                    .map(|(k, z)| complex(z, &format!("state[{k}]")))
                    .collect::<Result<Vec<_>>>()?,
            ),
            Some(Yaml::Sequence(v)) => {
                return Err(ctx.error(
                    "state",
                    format!(
                        "expected {total} amplitudes (the product of dims), found {}",
                        v.len()
                    ),
                ))
            }
            _ => return Err(ctx.error("state", "expected a list of amplitudes")),
        };
        let Some(Yaml::Mapping(ms)) = map.get("measurements") else {
            return Err(ctx.error(
                "measurements",
                "expected a mapping from player name to its measurements",
            ));
        };
        let mut measurements = Vec::with_capacity(n);
        for (i, p) in s.parties().iter().enumerate() {
            let base = format!("measurements.{}", p.name);
            let Some(Yaml::Sequence(list)) = ms.get(p.name.as_str()) else {
                return Err(ctx.error(
                    "measurements",
                    format!("no measurements for player `{}`", p.name),
                ));
            };
            let mut per_question: Vec<Option<Vec<CMatrix>>> = vec![None; p.questions()];
            for (k, entry) in list.iter().enumerate() {
                let ef = format!("{base}[{k}]");
                let label = entry
                    .get("question")
                    .and_then(Yaml::as_i64)
                    .ok_or_else(|| ctx.error(&ef, "expected `question: LABEL`"))?;
                let x = p
                    .question_labels
                    .iter()
                    .position(|&l| l == label)
                    .ok_or_else(|| {
                        ctx.error(
                            &format!("{ef}.question"),
                            format!("{} has no question {label}", p.name),
                        )
                    })?;
                let Some(Yaml::Sequence(elements)) = entry.get("elements") else {
                    return Err(ctx.error(&ef, "expected `elements`: one matrix per answer"));
                };
                if elements.len() != p.answers() {
                    return Err(ctx.error(
                        &format!("{ef}.elements"),
                        format!(
                            "{} has {} answers but {} elements are given",
                            p.name,
                            p.answers(),
                            elements.len()
                        ),
                    ));
                }
                let d = dims[i];
                let mut povm = Vec::with_capacity(elements.len());
                for (a, m) in elements.iter().enumerate() {
                    let mf = format!("{ef}.elements[{a}]");
                    let rows = m
                        .as_sequence()
                        .filter(|r| r.len() == d)
                        .ok_or_else(|| ctx.error(&mf, format!("expected a {d}×{d} matrix")))?;
                    let mut mat = CMatrix::zeros(d, d);
                    for (r, row) in rows.iter().enumerate() {
                        let cols = row.as_sequence().filter(|c| c.len() == d).ok_or_else(|| {
                            ctx.error(
                                &format!("{mf}[{r}]"),
                                format!("expected a row of {d} entries"),
                            )
                        })?;
                        for (c, z) in cols.iter().enumerate() {
                            mat[(r, c)] = complex(z, &format!("{mf}[{r}][{c}]"))?;
                        }
                    }
                    povm.push(mat);
                }
                if per_question[x].is_some() {
                    return Err(ctx.error(&ef, format!("question {label} is given twice")));
                }
                per_question[x] = Some(povm);
            }
            let mut povms = Vec::with_capacity(p.questions());
            for (x, m) in per_question.into_iter().enumerate() {
                povms.push(m.ok_or_else(|| {
                    ctx.error(
                        &base,
                        format!("no measurement for question {}", p.question_labels[x]),
                    )
                })?);
            }
            measurements.push(povms);
        }
        let state = if options.normalise {
            let norm = state.norm();
            if !(norm > 0.0 && norm.is_finite()) {
                return Err(ctx.error(
                    "state",
                    format!("the state has norm {norm}: nothing to normalise"),
                ));
            }
            &state / Complex64::new(norm, 0.0)
        } else {
            state
        };
        let strategy = QuantumStrategy {
            dims,
            state,
            measurements,
        };
        strategy
            .check_located(s)
            .map_err(|(field, m)| ctx.error(&field, m))?;
        Ok(strategy)
    }

    /// Reads and checks a strategy file for game `s`.
    pub fn from_file(path: &str, s: &Scenario) -> Result<QuantumStrategy> {
        Self::from_file_with(path, s, &StrategyFileOptions::default())
    }

    /// [`QuantumStrategy::from_file`] with options.
    pub fn from_file_with(
        path: &str,
        s: &Scenario,
        options: &StrategyFileOptions,
    ) -> Result<QuantumStrategy> {
        let text = read_text(path)?;
        Self::from_yaml_with(&text, path, s, options)
    }

    /// A strategy file and its `noise:` section, when it has one.
    pub fn with_noise_from_file(
        path: &str,
        s: &Scenario,
        options: &StrategyFileOptions,
    ) -> Result<(QuantumStrategy, Option<NoiseModel>)> {
        let text = read_text(path)?;
        let strategy = Self::from_yaml_with(&text, path, s, options)?;
        Ok((strategy, Self::noise_from_yaml(&text, path, s)?))
    }
}

/// How a strategy file is read.
#[derive(Debug, Clone, Default)]
pub struct StrategyFileOptions {
    /// Divide the state by its norm before the checks (amplitudes written rounded, such as
    /// 0.7071, then pass the normalisation check).
    pub normalise: bool,
}

/// `noise.no_click`: `best`, `extra`, one answer label for everyone, or per player a list of
/// labels, one per question.
fn no_click_from(v: &Yaml, ctx: &Context, field: &str, s: &Scenario) -> Result<NoClick> {
    let index = |p: &crate::model::scenario::Party, label: &Yaml, at: &str| -> Result<usize> {
        let l = label
            .as_i64()
            .ok_or_else(|| ctx.error(at, "expected an answer label"))?;
        p.answer_labels
            .iter()
            .position(|&a| a == l)
            .ok_or_else(|| ctx.error(at, format!("{} has no answer {l}", p.name)))
    };
    match v {
        Yaml::String(t) if t == "best" => Ok(NoClick::Best),
        Yaml::String(t) if t == "extra" => Ok(NoClick::Extra),
        Yaml::Number(_) => {
            let table = s
                .parties()
                .iter()
                .map(|p| Ok(vec![index(p, v, field)?; p.questions()]))
                .collect::<Result<_>>()?;
            Ok(NoClick::Table(table))
        }
        Yaml::Mapping(m) => {
            let mut table = Vec::with_capacity(s.players());
            for p in s.parties() {
                let at = format!("{field}.{}", p.name);
                let Some(Yaml::Sequence(list)) = m.get(p.name.as_str()) else {
                    return Err(ctx.error(
                        field,
                        format!(
                            "expected a list of {} answer labels for `{}`",
                            p.questions(),
                            p.name
                        ),
                    ));
                };
                if list.len() != p.questions() {
                    return Err(ctx.error(
                        &at,
                        format!(
                            "expected {} answer labels (one per question), found {}",
                            p.questions(),
                            list.len()
                        ),
                    ));
                }
                table.push(
                    list.iter()
                        .enumerate()
                        .map(|(x, l)| index(p, l, &format!("{at}[{x}]")))
                        .collect::<Result<_>>()?,
                );
            }
            if let Some(k) = m.keys().find_map(|k| {
                let name = k.as_str().unwrap_or("");
                (!s.parties().iter().any(|p| p.name == name)).then(|| name.to_string())
            }) {
                return Err(ctx.error(field, format!("there is no player `{k}`")));
            }
            Ok(NoClick::Table(table))
        }
        _ => Err(ctx.error(
            field,
            "expected `best`, `extra`, an answer label, or a list of labels per player",
        )),
    }
}
