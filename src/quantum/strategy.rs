//! Explicit quantum strategies: a pure state shared by the players and, for each player and
//! question, a POVM with one element per answer. Values are computed by the Born rule,
//! independently of how the strategy was found, and strategy files are checked (normalised
//! state, Hermitian positive elements summing to the identity) with located errors.
//!
//! File schema (YAML or JSON):
//!
//! ```yaml
//! dims: [2, 2]                       # local dimension of each player, in game order
//! state: [[0.7071, 0], 0, 0, [0.7071, 0]]   # amplitudes, product basis, first player most significant
//! measurements:
//!   alice:                           # one entry per question, in the game's question order
//!     - question: 0                  # the question label
//!       elements:                    # one d×d matrix per answer, entries real or [re, im]
//!         - [[1, 0], [0, 0]]
//!         - [[0, 0], [0, 1]]
//! ```

use nalgebra::{DMatrix, DVector};
use num_complex::Complex64;
use serde_yaml::{Mapping, Value as Yaml};

use crate::error::{Error, Result};
use crate::game::compile::Context;
use crate::game::locate::SourceMap;
use crate::scenario::{digits, Scenario};

pub type CMatrix = DMatrix<Complex64>;
pub type CVector = DVector<Complex64>;

/// Tolerances for checking a strategy file.
pub const NORM_TOLERANCE: f64 = 1e-6;
pub const POVM_TOLERANCE: f64 = 1e-7;

#[derive(Debug, Clone, PartialEq)]
pub struct QuantumStrategy {
    pub dims: Vec<usize>,
    pub state: CVector,
    /// `measurements[player][question][answer]`.
    pub measurements: Vec<Vec<Vec<CMatrix>>>,
}

/// Applies `m` to tensor factor `axis` of `psi` (dimensions `dims`, first factor most significant).
pub fn apply_on_axis(psi: &CVector, dims: &[usize], axis: usize, m: &CMatrix) -> CVector {
    let d = dims[axis];
    let right: usize = dims[axis + 1..].iter().product();
    let left: usize = dims[..axis].iter().product();
    let mut out = CVector::zeros(psi.len());
    for l in 0..left {
        for r in 0..d {
            for c in 0..d {
                let coef = m[(r, c)];
                if coef == Complex64::new(0.0, 0.0) {
                    continue;
                }
                let (ro, co) = ((l * d + r) * right, (l * d + c) * right);
                for t in 0..right {
                    out[ro + t] += coef * psi[co + t];
                }
            }
        }
    }
    out
}

impl QuantumStrategy {
    pub fn total_dim(&self) -> usize {
        self.dims.iter().product()
    }

    /// `p(a|q)` for every joint question and answer, by the Born rule.
    pub fn behaviour(&self, s: &Scenario) -> Vec<f64> {
        let n = s.players();
        let qr = s.question_radices();
        let ar = s.answer_radices();
        let na = s.joint_answers();
        let mut p = vec![0.0; s.joint_questions() * na];
        let (mut qd, mut ad) = (vec![0; n], vec![0; n]);
        for q in 0..s.joint_questions() {
            digits(q, &qr, &mut qd);
            for a in 0..na {
                digits(a, &ar, &mut ad);
                let mut phi = self.state.clone();
                for i in 0..n {
                    phi = apply_on_axis(&phi, &self.dims, i, &self.measurements[i][qd[i]][ad[i]]);
                }
                p[q * na + a] = self.state.dotc(&phi).re;
            }
        }
        p
    }

    /// The game's value for this strategy.
    pub fn value(&self, s: &Scenario) -> f64 {
        s.value_of_behaviour(&self.behaviour(s))
    }

    /// The value when every player's detector clicks with probability `eta` and a missing click
    /// is reported as the player's first answer.
    pub fn lossy(&self, eta: f64) -> QuantumStrategy {
        let mut lossy = self.clone();
        for (i, player) in lossy.measurements.iter_mut().enumerate() {
            for povm in player.iter_mut() {
                for (a, m) in povm.iter_mut().enumerate() {
                    *m *= Complex64::new(eta, 0.0);
                    if a == 0 {
                        *m += CMatrix::identity(self.dims[i], self.dims[i])
                            * Complex64::new(1.0 - eta, 0.0);
                    }
                }
            }
        }
        lossy
    }

    /// Value of the maximally mixed state with these measurements (for white-noise mixtures,
    /// whose value is linear in the visibility).
    pub fn noise_value(&self, s: &Scenario) -> f64 {
        let n = s.players();
        let qr = s.question_radices();
        let ar = s.answer_radices();
        let na = s.joint_answers();
        let (mut qd, mut ad) = (vec![0; n], vec![0; n]);
        let mut p = vec![0.0; s.joint_questions() * na];
        for q in 0..s.joint_questions() {
            digits(q, &qr, &mut qd);
            for a in 0..na {
                digits(a, &ar, &mut ad);
                p[q * na + a] = (0..n)
                    .map(|i| self.measurements[i][qd[i]][ad[i]].trace().re / self.dims[i] as f64)
                    .product();
            }
        }
        s.value_of_behaviour(&p)
    }

    /// Checks normalisation and the POVM conditions; the message names player, question, answer.
    pub fn check(&self, s: &Scenario) -> std::result::Result<(), String> {
        let norm = self.state.norm();
        if (norm - 1.0).abs() > NORM_TOLERANCE {
            return Err(format!("the state has norm {norm}, not 1"));
        }
        for (i, player) in self.measurements.iter().enumerate() {
            let p = &s.parties[i];
            let d = self.dims[i];
            for (x, povm) in player.iter().enumerate() {
                let mut sum = CMatrix::zeros(d, d);
                for (a, m) in povm.iter().enumerate() {
                    let at = format!(
                        "{}, question {}, answer {}",
                        p.name, p.question_labels[x], p.answer_labels[a]
                    );
                    let herm = (m - m.adjoint()).norm();
                    if herm > POVM_TOLERANCE {
                        return Err(format!(
                            "{at}: the element is not Hermitian (‖M − M†‖ = {herm:.2e})"
                        ));
                    }
                    let hm = (m + m.adjoint()) * Complex64::new(0.5, 0.0);
                    let min = hm
                        .symmetric_eigenvalues()
                        .iter()
                        .cloned()
                        .fold(f64::INFINITY, f64::min);
                    if min < -POVM_TOLERANCE {
                        return Err(format!(
                            "{at}: the element has a negative eigenvalue {min:.3e}"
                        ));
                    }
                    sum += m;
                }
                let dev = (sum - CMatrix::identity(d, d)).norm();
                if dev > POVM_TOLERANCE {
                    return Err(format!(
                        "{}, question {}: the elements sum to the identity only up to {dev:.2e}",
                        p.name, p.question_labels[x]
                    ));
                }
            }
        }
        Ok(())
    }

    /// The strategy as a file (see the module notes).
    pub fn to_yaml_value(&self, s: &Scenario) -> Yaml {
        // Integral parts are written as integers, and dust below 1e-15 as 0, for readable files.
        let clean = |v: f64| -> Yaml {
            let v = if v.abs() < 1e-15 { 0.0 } else { v };
            if v == v.round() && v.abs() < 1e15 {
                Yaml::from(v as i64)
            } else {
                Yaml::from(v)
            }
        };
        let c = |z: Complex64| -> Yaml {
            if z.im.abs() < 1e-15 {
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
            let p = &s.parties[i];
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

    /// Reads a strategy file for game `s`, with located errors.
    pub fn from_yaml(text: &str, file: &str, s: &Scenario) -> Result<QuantumStrategy> {
        let root: Yaml =
            serde_yaml::from_str(text).map_err(|e| crate::game::yaml_error(e, file))?;
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
            if !matches!(key, "dims" | "state" | "measurements" | "game" | "value") {
                return Err(ctx.error(
                    key,
                    format!("unknown field `{key}` (expected `dims`, `state`, `measurements`)"),
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
        let total: usize = dims.iter().product();
        if total > 1 << 14 {
            return Err(ctx.error(
                "dims",
                format!("the joint dimension {total} is above the limit of 16384"),
            ));
        }
        let complex = |v: &Yaml, field: &str| -> Result<Complex64> {
            match v {
                Yaml::Number(x) => Ok(Complex64::new(x.as_f64().unwrap_or(f64::NAN), 0.0)),
                Yaml::Sequence(p) if p.len() == 2 => match (p[0].as_f64(), p[1].as_f64()) {
                    (Some(re), Some(im)) => Ok(Complex64::new(re, im)),
                    _ => Err(ctx.error(field, "expected [re, im] with two numbers")),
                },
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
        for (i, p) in s.parties.iter().enumerate() {
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
        let strategy = QuantumStrategy {
            dims,
            state,
            measurements,
        };
        strategy.check(s).map_err(|m| ctx.error("", m))?;
        Ok(strategy)
    }

    pub fn from_file(path: &str, s: &Scenario) -> Result<QuantumStrategy> {
        let text = std::fs::read_to_string(path).map_err(|source| Error::Io {
            path: path.to_string(),
            source,
        })?;
        Self::from_yaml(&text, path, s)
    }
}
