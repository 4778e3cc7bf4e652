//! Whether a region of behaviours ([`BehaviourRegion`]) meets the NPA relaxation at a level: the
//! smallest δ by which the region's intervals must be widened for a point of the relaxation to
//! lie in it,
//!
//! ```text
//! δ* = min δ   subject to   Γ(y) ⪰ 0,   lower − δ ≤ P_{q,a}(y) ≤ upper + δ for every (q, a),   δ ≥ 0,
//! ```
//!
//! with `P_{q,a}(y)` the full probability in Collins–Gisin moments. A verified lower bound on δ*
//! above zero (from the dual, every residual charged, as for every NPA bound) proves that no
//! quantum behaviour lies in the region: figures conditioned on it would be vacuous, and the
//! commands refuse it with that reason instead of printing them. δ* = 0 is no proof of the
//! converse (the relaxation is larger than the quantum set), only that the relaxation cannot
//! tell.

use std::collections::BTreeMap;

use serde::Serialize;

use super::npa::{self, Level};
use super::words::{collins_gisin_word, moment_key, Word};
use crate::error::{Error, Result};
use crate::model::collins_gisin::CollinsGisin;
use crate::model::region::BehaviourRegion;
use crate::model::scenario::{digits, Scenario};
use crate::optim::backend::{self, Backend};
use crate::optim::sdp::{AffineEntry, MatrixBlock};
use crate::optim::SolveStatus;

/// How far a region lies from the NPA relaxation at one level.
#[derive(Debug, Clone, Serialize)]
pub struct RegionDistance {
    /// The level of the relaxation.
    pub level: Level,
    /// Verified lower bound on δ* (see the module notes); above 0 proves the region holds no
    /// quantum behaviour.
    pub verified_lower: f64,
    /// The solver's value of δ*.
    pub solver_value: f64,
    /// How the solver ended.
    pub status: SolveStatus,
}

impl RegionDistance {
    /// Whether the region is proven to hold no quantum behaviour.
    pub fn proven_outside(&self) -> bool {
        self.verified_lower > 0.0
    }
}

/// A full probability `p(a|q)` as Collins–Gisin words and a constant (the words in the
/// scenario's canonical form).
pub fn full_probability_terms(
    s: &Scenario,
    cg: &CollinsGisin,
    q: usize,
    a: usize,
) -> (Vec<(Word, f64)>, f64) {
    let n = s.players();
    let (mut qd, mut ad) = (vec![0; n], vec![0; n]);
    digits(q, &s.question_radices(), &mut qd);
    digits(a, &s.answer_radices(), &mut ad);
    let mut vars = Vec::new();
    let constant = cg.expand(&qd, &ad, &mut vars);
    let terms = vars
        .into_iter()
        .map(|(v, c)| {
            let (mask, qv, av) = cg.describe(v);
            (collins_gisin_word(mask, &qv, &av), c)
        })
        .collect();
    (terms, constant)
}

/// δ* of the region at `level` (module notes), verified from the dual.
pub fn region_distance(
    s: &Scenario,
    region: &BehaviourRegion,
    level: &Level,
    solver: Backend,
) -> Result<RegionDistance> {
    let nq: usize = s.question_radices().iter().product();
    let na: usize = s.answer_radices().iter().product();
    if region.lower.len() != nq * na || region.upper.len() != nq * na {
        return Err(Error::InvalidArgument(format!(
            "the region has {} intervals, the game's players need {}",
            region.lower.len(),
            nq * na
        )));
    }
    let r = npa::relaxation(s, level)?;
    let mut problem = r.problem;
    let mut index: BTreeMap<&Word, usize> = BTreeMap::new();
    for (i, m) in r.matrix.moments.iter().enumerate() {
        index.insert(m, i);
    }
    let delta = problem.variables;
    problem.variables += 1;
    problem.objective = vec![0.0; problem.variables];
    problem.objective[delta] = -1.0;
    problem.objective_constant = 0.0;
    // δ* ≤ 2: the maximally mixed behaviour lies in the relaxation and within 2 of any interval
    // whose ends lie in [−1, 2] (the region's ends are clamped to that range below, which only
    // widens it where a probability could never be anyway).
    const DELTA_MOST: f64 = 2.0;
    let mut bounds = vec![problem.variable_bound; delta];
    bounds.push(DELTA_MOST);
    problem.variable_bounds = bounds;
    let cg = CollinsGisin::new(s);
    for q in 0..nq {
        for a in 0..na {
            let k = q * na + a;
            let (lo, hi) = (region.lower[k].max(-1.0), region.upper[k].min(2.0));
            if lo
                .partial_cmp(&hi)
                .is_none_or(|o| o == std::cmp::Ordering::Greater)
            {
                return Err(Error::InvalidArgument(format!(
                    "the region's interval {k} is empty or not a number"
                )));
            }
            let (words, constant) = full_probability_terms(s, &cg, q, a);
            let mut terms = Vec::with_capacity(words.len() + 1);
            for (w, c) in words {
                let Some(&id) = index.get(&moment_key(w)) else {
                    return Err(Error::InvalidArgument(format!(
                        "level {} does not contain the products every full probability needs; use `1+joint` or a higher level",
                        level.name()
                    )));
                };
                terms.push((id, c));
            }
            // At an optimal point, P ∈ [lo − δ, hi + δ] and δ ≤ 2: each side's slack is at most
            // hi − lo + 2δ.
            let trace_bound = hi - lo + 2.0 * DELTA_MOST;
            let mut below = terms.clone();
            below.push((delta, 1.0));
            problem.blocks.push(MatrixBlock {
                size: 1,
                upper: vec![AffineEntry {
                    constant: constant - lo,
                    terms: below,
                }],
                trace_bound,
            });
            let mut above: Vec<(usize, f64)> = terms.iter().map(|&(v, c)| (v, -c)).collect();
            above.push((delta, 1.0));
            problem.blocks.push(MatrixBlock {
                size: 1,
                upper: vec![AffineEntry {
                    constant: hi - constant,
                    terms: above,
                }],
                trace_bound,
            });
        }
    }
    problem.blocks.push(MatrixBlock {
        size: 1,
        upper: vec![AffineEntry {
            constant: 0.0,
            terms: vec![(delta, 1.0)],
        }],
        trace_bound: DELTA_MOST,
    });
    let sol = backend::solve(
        &problem,
        solver,
        &format!(
            "membership of the behaviour region at NPA level {}",
            level.name()
        ),
    )?;
    // The SDP maximised −δ: its verified upper bound is minus a verified lower bound on δ*.
    Ok(RegionDistance {
        level: level.clone(),
        verified_lower: -sol.certified,
        solver_value: -sol.primal,
        status: sol.status,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::formats::game::families;
    use crate::formats::game::Game;

    fn chsh_box(correlator: f64) -> Vec<f64> {
        // p(a, b | x, y) = (1 + (−1)^(a⊕b⊕xy) E)/4.
        let mut p = Vec::new();
        for x in 0..2 {
            for y in 0..2 {
                for a in 0..2 {
                    for b in 0..2 {
                        let sign = if (a ^ b) == (x & y) { 1.0 } else { -1.0 };
                        p.push((1.0 + sign * correlator) / 4.0);
                    }
                }
            }
        }
        p
    }

    #[test]
    fn boxes_beyond_tsirelson_are_proven_outside_and_quantum_ones_are_not() {
        let game = Game::from_spec(&families::chsh(), "chsh").unwrap();
        let s = &game.scenario;
        let level = Level::Length(1);
        let at = |e: f64, tol: f64| {
            let region = BehaviourRegion::around(&chsh_box(e), tol, "t".into()).unwrap();
            region_distance(s, &region, &level, Backend::Auto).unwrap()
        };
        // The PR box is 1/4 − 1/(4√2)·... away: each probability differs by (1 − 1/√2)/4.
        let pr = at(1.0, 1e-6);
        assert!(pr.proven_outside(), "{pr:?}");
        let far = (1.0 - 1.0 / 2f64.sqrt()) / 4.0 - 1e-6;
        assert!(pr.verified_lower <= far + 1e-7, "{pr:?}");
        assert!(pr.verified_lower >= far - 1e-4, "{pr:?}");
        // Tsirelson's box moved outwards by 1e-4 in the correlator.
        let beyond = at(1.0 / 2f64.sqrt() + 1e-4, 1e-7);
        assert!(beyond.proven_outside(), "{beyond:?}");
        // Tsirelson's box itself, and a noisy one, are not.
        assert!(!at(1.0 / 2f64.sqrt(), 1e-6).proven_outside());
        assert!(!at(0.6, 1e-6).proven_outside());
    }
}
