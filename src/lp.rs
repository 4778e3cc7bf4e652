//! Linear programs written with plain variable indices, solved by one of two pure-Rust backends
//! so that nothing outside the Rust toolchain is needed:
//! - [`LinearProgram::solve`]: simplex (microlp through good_lp), exact vertices, integers allowed;
//! - [`LinearProgram::solve_interior_point`]: clarabel's interior-point method, which always
//!   terminates and copes with degenerate problems that make the simplex cycle (the locality LP).
//!
//! The bound modules build a [`LinearProgram`] and never touch solver types; swapping a backend
//! touches this file only.

use good_lp::solvers::microlp::microlp;
use good_lp::{variable, Expression, ProblemVariables, Solution, SolverModel, WithTimeLimit};

use crate::error::{Error, Result};

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Relation {
    Le,
    Ge,
    Eq,
}

#[derive(Debug, Clone)]
pub struct Row {
    pub terms: Vec<(usize, f64)>,
    pub relation: Relation,
    pub rhs: f64,
}

#[derive(Debug, Clone, Copy)]
pub struct VarBounds {
    pub lower: f64,
    pub upper: f64,
    pub integer: bool,
}

impl VarBounds {
    pub const NONNEGATIVE: VarBounds = VarBounds {
        lower: 0.0,
        upper: f64::INFINITY,
        integer: false,
    };
    pub const FREE: VarBounds = VarBounds {
        lower: f64::NEG_INFINITY,
        upper: f64::INFINITY,
        integer: false,
    };
    pub const BINARY: VarBounds = VarBounds {
        lower: 0.0,
        upper: 1.0,
        integer: true,
    };
}

/// `maximise (or minimise) cᵀx subject to rows, bounds`.
#[derive(Debug, Clone, Default)]
pub struct LinearProgram {
    pub bounds: Vec<VarBounds>,
    pub objective: Vec<f64>,
    pub maximise: bool,
    pub rows: Vec<Row>,
}

#[derive(Debug, Clone)]
pub struct LpSolution {
    pub x: Vec<f64>,
    pub objective: f64,
    /// `solved`, or `almost solved` when the interior-point method met only its relaxed
    /// tolerances.
    pub status: &'static str,
}

/// Simplex runs longer than this are stopped and reported as a solver failure rather than hang.
pub const SIMPLEX_TIME_LIMIT_SECONDS: f64 = 600.0;

impl LinearProgram {
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

    pub fn add_row(&mut self, terms: Vec<(usize, f64)>, relation: Relation, rhs: f64) {
        self.rows.push(Row {
            terms,
            relation,
            rhs,
        });
    }

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
        let mut model = unsolved
            .using(microlp)
            .with_time_limit(SIMPLEX_TIME_LIMIT_SECONDS);
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
        let solution = model.solve().map_err(|e| Error::solver(stage, e.to_string()))?;
        let x: Vec<f64> = vars.iter().map(|v| solution.value(*v)).collect();
        let objective = x.iter().zip(&self.objective).map(|(x, c)| x * c).sum();
        Ok(LpSolution {
            x,
            objective,
            status: "solved",
        })
    }

    /// Solves with clarabel's interior-point method (continuous variables only).
    pub fn solve_interior_point(&self, stage: &str) -> Result<LpSolution> {
        use clarabel::algebra::CscMatrix;
        use clarabel::solver::{
            DefaultSettingsBuilder, DefaultSolver, IPSolver, SolverStatus, SupportedConeT,
        };
        if self.bounds.iter().any(|b| b.integer) {
            return Err(Error::solver(stage, "integer variables need the simplex backend"));
        }
        let n = self.vars();
        // clarabel's form: minimise qᵀx s.t. Ax + s = b, s in the cones; equalities first.
        let (mut rows, mut cols, mut vals, mut rhs) = (Vec::new(), Vec::new(), Vec::new(), Vec::new());
        let mut push = |terms: &[(usize, f64)], sign: f64, b: f64| {
            let r = rhs.len();
            for &(j, c) in terms {
                rows.push(r);
                cols.push(j);
                vals.push(sign * c);
            }
            rhs.push(sign * b);
        };
        for row in self.rows.iter().filter(|r| r.relation == Relation::Eq) {
            push(&row.terms, 1.0, row.rhs);
        }
        let equalities = self.rows.iter().filter(|r| r.relation == Relation::Eq).count();
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
        let a = CscMatrix::new_from_triplets(m, n, rows, cols, vals);
        let p = CscMatrix::zeros((n, n));
        let sign = if self.maximise { -1.0 } else { 1.0 };
        let q: Vec<f64> = self.objective.iter().map(|c| sign * c).collect();
        let cones = [
            SupportedConeT::ZeroConeT(equalities),
            SupportedConeT::NonnegativeConeT(m - equalities),
        ];
        let settings = DefaultSettingsBuilder::default()
            .verbose(false)
            .tol_gap_abs(1e-10)
            .tol_gap_rel(1e-10)
            .tol_feas(1e-10)
            .build()
            .map_err(|e| Error::solver(stage, format!("{e:?}")))?;
        let mut solver = DefaultSolver::new(&p, &q, &a, &rhs, &cones, settings)
            .map_err(|e| Error::solver(stage, format!("{e:?}")))?;
        solver.solve();
        let status = match solver.solution.status {
            SolverStatus::Solved => "solved",
            SolverStatus::AlmostSolved => "almost solved",
            other => {
                return Err(Error::solver(
                    stage,
                    format!("the interior-point method stopped with status {other:?}"),
                ))
            }
        };
        let x = solver.solution.x.clone();
        let objective = x.iter().zip(&self.objective).map(|(x, c)| x * c).sum();
        Ok(LpSolution {
            x,
            objective,
            status,
        })
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
        let s = lp.solve_interior_point("test").unwrap();
        assert!((s.objective - 2.8).abs() < 1e-8);
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
