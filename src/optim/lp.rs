//! Linear programs written with plain variable indices, solved by one of two pure-Rust backends
//! so that nothing outside the Rust toolchain is needed:
//! - [`LinearProgram::solve`]: simplex (microlp through good_lp), exact vertices, integers allowed;
//! - [`LinearProgram::solve_interior_point`]: clarabel's interior-point method, which always
//!   terminates and copes with degenerate problems that make the simplex cycle (the locality LP).
//!
//! The bound modules build a [`LinearProgram`] and never touch solver types; swapping a backend
//! touches this file only.

use good_lp::solvers::microlp::microlp;
use good_lp::{
    variable, Expression, ProblemVariables, Solution, SolutionStatus, SolverModel, WithTimeLimit,
};

use super::SolveStatus;
use crate::error::{Error, Result};

/// How a row relates its left side to its right-hand side.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Relation {
    /// At most.
    Le,
    /// At least.
    Ge,
    /// Equal.
    Eq,
}

/// A linear constraint `Σ c_j x_j (≤ | ≥ | =) rhs`.
#[derive(Debug, Clone)]
pub struct Row {
    /// `(variable, coefficient)` pairs.
    pub terms: Vec<(usize, f64)>,
    /// The relation.
    pub relation: Relation,
    /// The right-hand side.
    pub rhs: f64,
}

/// A variable's bounds and integrality.
#[derive(Debug, Clone, Copy)]
pub struct VarBounds {
    /// Lower bound (−∞ for none).
    pub lower: f64,
    /// Upper bound (+∞ for none).
    pub upper: f64,
    /// Whether the variable must be an integer (MILP).
    pub integer: bool,
}

impl VarBounds {
    /// `x ≥ 0`.
    pub const NONNEGATIVE: VarBounds = VarBounds {
        lower: 0.0,
        upper: f64::INFINITY,
        integer: false,
    };
    /// No bounds.
    pub const FREE: VarBounds = VarBounds {
        lower: f64::NEG_INFINITY,
        upper: f64::INFINITY,
        integer: false,
    };
    /// `x ∈ {0, 1}`.
    pub const BINARY: VarBounds = VarBounds {
        lower: 0.0,
        upper: 1.0,
        integer: true,
    };
}

/// `maximise (or minimise) cᵀx subject to rows, bounds`.
#[derive(Debug, Clone, Default)]
pub struct LinearProgram {
    /// Each variable's bounds.
    pub bounds: Vec<VarBounds>,
    /// Objective coefficients `c`.
    pub objective: Vec<f64>,
    /// Maximise (else minimise).
    pub maximise: bool,
    /// The constraints.
    pub rows: Vec<Row>,
    /// A fact the caller vouches for: every feasible point has `|x_j| ≤ box` for all j. With it,
    /// the interior-point route turns its (slightly infeasible) dual solution into a bound on
    /// the optimum that floating-point error cannot invalidate.
    pub variable_box: Option<f64>,
    /// Time limit of the simplex / branch and bound (default [`SIMPLEX_TIME_LIMIT_SECONDS`]).
    pub time_limit_seconds: Option<f64>,
}

/// An LP optimum (or, for a MILP stopped by its time limit, an incumbent).
#[derive(Debug, Clone)]
pub struct LpSolution {
    /// The point.
    pub x: Vec<f64>,
    /// Its objective value.
    pub objective: f64,
    /// `solved`, `almost solved` when the interior-point method met only its relaxed
    /// tolerances, or `stopped at the time limit` when the simplex/branch and bound ran out of
    /// time with a feasible point that is not proven optimal (integer programmes only: a
    /// continuous simplex that runs out of time is an error).
    pub status: SolveStatus,
    /// A bound on the optimum that holds despite solver and rounding error, derived from the
    /// dual solution (interior point with [`LinearProgram::variable_box`] set; see there).
    pub certified_bound: Option<f64>,
}

/// Which LP method produced a solution. Serialised as `simplex` or `interior point`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
pub enum LpMethod {
    /// The simplex method (microlp): an exact vertex.
    #[serde(rename = "simplex")]
    Simplex,
    /// clarabel's interior-point method, with a certified bound from its dual solution.
    #[serde(rename = "interior point")]
    InteriorPoint,
}

impl std::fmt::Display for LpMethod {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(match self {
            LpMethod::Simplex => "simplex",
            LpMethod::InteriorPoint => "interior point",
        })
    }
}

/// Simplex runs longer than this are stopped rather than hang: a continuous LP then fails, an
/// integer programme returns its incumbent with status [`SolveStatus::TimeLimit`].
pub const SIMPLEX_TIME_LIMIT_SECONDS: f64 = 600.0;

impl LinearProgram {
    /// An empty programme.
    pub fn new(maximise: bool) -> Self {
        LinearProgram {
            maximise,
            ..Default::default()
        }
    }

    /// Adds a variable with objective coefficient `cost`; returns its index.
    pub fn add_var(&mut self, bounds: VarBounds, cost: f64) -> usize {
        self.bounds.push(bounds);
        self.objective.push(cost);
        self.bounds.len() - 1
    }

    /// Adds a constraint.
    pub fn add_row(&mut self, terms: Vec<(usize, f64)>, relation: Relation, rhs: f64) {
        self.rows.push(Row {
            terms,
            relation,
            rhs,
        });
    }

    /// Number of variables.
    pub fn vars(&self) -> usize {
        self.bounds.len()
    }

    /// Solves with microlp. `stage` names the problem in error messages.
    pub fn solve(&self, stage: &str) -> Result<LpSolution> {
        let mut problem_vars = ProblemVariables::new();
        let vars: Vec<_> = self
            .bounds
            .iter()
            .map(|b| {
                let mut def = variable();
                if b.integer {
                    def = def.integer();
                }
                if b.lower.is_finite() {
                    def = def.min(b.lower);
                }
                if b.upper.is_finite() {
                    def = def.max(b.upper);
                }
                problem_vars.add(def)
            })
            .collect();
        let mut objective = Expression::with_capacity(vars.len());
        for (v, &c) in vars.iter().zip(&self.objective) {
            if c != 0.0 {
                objective.add_mul(c, *v);
            }
        }
        let unsolved = if self.maximise {
            problem_vars.maximise(objective)
        } else {
            problem_vars.minimise(objective)
        };
        let mut model = unsolved.using(microlp).with_time_limit(
            self.time_limit_seconds
                .unwrap_or(SIMPLEX_TIME_LIMIT_SECONDS),
        );
        for row in &self.rows {
            let mut e = Expression::with_capacity(row.terms.len());
            for &(i, c) in &row.terms {
                e.add_mul(c, vars[i]);
            }
            let constraint = match row.relation {
                Relation::Le => e.leq(row.rhs),
                Relation::Ge => e.geq(row.rhs),
                Relation::Eq => e.eq(row.rhs),
            };
            model = model.with(constraint);
        }
        let solution = model
            .solve()
            .map_err(|e| Error::solver(stage, e.to_string()))?;
        // A run stopped by the time limit keeps a feasible point, but it is not an optimum: it
        // must never be reported as one.
        let status = match solution.status() {
            SolutionStatus::Optimal => SolveStatus::Solved,
            _ => SolveStatus::TimeLimit,
        };
        if status != SolveStatus::Solved && !self.bounds.iter().any(|b| b.integer) {
            return Err(Error::solver_stopped(
                stage,
                SolveStatus::TimeLimit,
                format!(
                    "the simplex stopped at its time limit ({} s) before reaching an optimum",
                    self.time_limit_seconds
                        .unwrap_or(SIMPLEX_TIME_LIMIT_SECONDS)
                ),
            ));
        }
        let x: Vec<f64> = vars.iter().map(|v| solution.value(*v)).collect();
        let objective = x.iter().zip(&self.objective).map(|(x, c)| x * c).sum();
        Ok(LpSolution {
            x,
            objective,
            status,
            certified_bound: None,
        })
    }

    /// Solves with clarabel's interior-point method (continuous variables only).
    pub fn solve_interior_point(&self, stage: &str) -> Result<LpSolution> {
        use clarabel::algebra::CscMatrix;
        use clarabel::solver::SupportedConeT;
        if self.bounds.iter().any(|b| b.integer) {
            return Err(Error::solver(
                stage,
                "integer variables need the simplex backend",
            ));
        }
        let n = self.vars();
        let (a, rhs, equalities) = self.conic_form();
        let m = rhs.len();
        let p = CscMatrix::zeros((n, n));
        let sign = if self.maximise { -1.0 } else { 1.0 };
        let q: Vec<f64> = self.objective.iter().map(|c| sign * c).collect();
        let cones = [
            SupportedConeT::ZeroConeT(equalities),
            SupportedConeT::NonnegativeConeT(m - equalities),
        ];
        let (solver, status) =
            super::clarabel::run_clarabel(&p, &q, &a, &rhs, &cones, 1e-10, stage)?;
        let x = solver.solution.x.clone();
        let objective = x.iter().zip(&self.objective).map(|(x, c)| x * c).sum();
        let certified_bound = self
            .variable_box
            .map(|bx| certified(&a, &rhs, &q, &solver.solution.z, equalities, bx, sign));
        Ok(LpSolution {
            x,
            objective,
            status,
            certified_bound,
        })
    }

    /// The constraints in clarabel's form `Ax + s = b`, s in the cones: the equality rows first
    /// (zero cone), then inequalities and finite variable bounds as `≤` rows (nonnegative
    /// cone). Returns (A, b, number of equality rows).
    fn conic_form(&self) -> (clarabel::algebra::CscMatrix<f64>, Vec<f64>, usize) {
        let (mut rows, mut cols, mut vals, mut rhs) =
            (Vec::new(), Vec::new(), Vec::new(), Vec::new());
        let mut push = |terms: &[(usize, f64)], sign: f64, b: f64| {
            let r = rhs.len();
            for &(j, c) in terms {
                rows.push(r);
                cols.push(j);
                vals.push(sign * c);
            }
            rhs.push(sign * b);
        };
        let mut equalities = 0;
        for row in self.rows.iter().filter(|r| r.relation == Relation::Eq) {
            push(&row.terms, 1.0, row.rhs);
            equalities += 1;
        }
        for row in &self.rows {
            match row.relation {
                Relation::Le => push(&row.terms, 1.0, row.rhs),
                Relation::Ge => push(&row.terms, -1.0, row.rhs),
                Relation::Eq => {}
            }
        }
        for (j, b) in self.bounds.iter().enumerate() {
            if b.lower.is_finite() {
                push(&[(j, 1.0)], -1.0, b.lower);
            }
            if b.upper.is_finite() {
                push(&[(j, 1.0)], 1.0, b.upper);
            }
        }
        let m = rhs.len();
        let a = clarabel::algebra::CscMatrix::new_from_triplets(m, self.vars(), rows, cols, vals);
        (a, rhs, equalities)
    }

    /// The point of this programme's feasible set nearest to `target` in the weighted norm
    /// `Σ_j w_j (x_j − t_j)²` (a convex QP; the objective of the programme is ignored), by
    /// clarabel's interior-point method.
    pub fn weighted_projection(
        &self,
        target: &[f64],
        weights: &[f64],
        stage: &str,
    ) -> Result<Vec<f64>> {
        use clarabel::algebra::CscMatrix;
        use clarabel::solver::SupportedConeT;
        let n = self.vars();
        if target.len() != n || weights.len() != n {
            return Err(Error::solver(
                stage,
                "target and weights need one entry per variable",
            ));
        }
        let (a, rhs, equalities) = self.conic_form();
        let m = rhs.len();
        let p = CscMatrix::new_from_triplets(
            n,
            n,
            (0..n).collect(),
            (0..n).collect(),
            weights.to_vec(),
        );
        let q: Vec<f64> = target.iter().zip(weights).map(|(t, w)| -t * w).collect();
        let cones = [
            SupportedConeT::ZeroConeT(equalities),
            SupportedConeT::NonnegativeConeT(m - equalities),
        ];
        let (solver, _) = super::clarabel::run_clarabel(&p, &q, &a, &rhs, &cones, 1e-10, stage)?;
        Ok(solver.solution.x.clone())
    }
}

/// Weak duality with the error accounted for. For `min qᵀx` s.t. `Ax + s = b`, s ≥ 0 on the
/// inequality rows and 0 on the equalities: any z with z ≥ 0 on the inequality rows gives
/// `qᵀx = rᵀx − zᵀb + zᵀs ≥ rᵀx − zᵀb ≥ −zᵀb − ‖r‖₁·box` with residual `r = q + Aᵀz`. The
/// solver's z is first projected onto its cone, the residual is recomputed exactly as stated,
/// and a rounding allowance proportional to the magnitudes involved is added. Returned in the
/// caller's sense (an upper bound when maximising, a lower bound when minimising).
fn certified(
    a: &clarabel::algebra::CscMatrix<f64>,
    b: &[f64],
    q: &[f64],
    z: &[f64],
    equalities: usize,
    bx: f64,
    sign: f64,
) -> f64 {
    let z: Vec<f64> = z
        .iter()
        .enumerate()
        .map(|(i, &v)| if i < equalities { v } else { v.max(0.0) })
        .collect();
    let mut residual = q.to_vec();
    let mut magnitude = 0.0;
    for (j, r) in residual.iter_mut().enumerate() {
        for k in a.colptr[j]..a.colptr[j + 1] {
            let t = a.nzval[k] * z[a.rowval[k]];
            *r += t;
            magnitude += t.abs();
        }
    }
    let zb: f64 = z.iter().zip(b).map(|(z, b)| z * b).sum();
    let zb_magnitude: f64 = z.iter().zip(b).map(|(z, b)| (z * b).abs()).sum();
    let slack: f64 = residual.iter().map(|r| r.abs()).sum::<f64>() * bx;
    let rounding = 1e-14 * (magnitude * bx + zb_magnitude) * (a.m + a.n) as f64;
    // min qᵀx ≥ −zᵀb − slack − rounding; the caller maximised −qᵀx when sign = −1.
    let lower_of_min = -zb - slack - rounding;
    if sign < 0.0 {
        -lower_of_min
    } else {
        lower_of_min
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn solves_a_small_lp_and_milp() {
        // max x + y s.t. x + 2y <= 4, 3x + y <= 6, x, y >= 0: optimum at (8/5, 6/5), value 14/5.
        let mut lp = LinearProgram::new(true);
        let x = lp.add_var(VarBounds::NONNEGATIVE, 1.0);
        let y = lp.add_var(VarBounds::NONNEGATIVE, 1.0);
        lp.add_row(vec![(x, 1.0), (y, 2.0)], Relation::Le, 4.0);
        lp.add_row(vec![(x, 3.0), (y, 1.0)], Relation::Le, 6.0);
        let s = lp.solve("test").unwrap();
        assert!((s.objective - 2.8).abs() < 1e-9);
        lp.variable_box = Some(10.0);
        let s = lp.solve_interior_point("test").unwrap();
        assert!((s.objective - 2.8).abs() < 1e-8);
        let bound = s.certified_bound.unwrap();
        assert!((2.8..2.8 + 1e-7).contains(&bound), "certified {bound}");
        assert!((s.x[0] - 1.6).abs() < 1e-7 && (s.x[1] - 1.2).abs() < 1e-7);
        // Integer version: best integer point has value 2 ((1,1), (2,0), (0,2)).
        lp.bounds = vec![
            VarBounds {
                lower: 0.0,
                upper: 10.0,
                integer: true
            };
            2
        ];
        let s = lp.solve("test").unwrap();
        assert!((s.objective - 2.0).abs() < 1e-9);
    }
}
