//! A thin adapter over good_lp: linear programs written with plain variable indices, solved by
//! the pure-Rust simplex backend (microlp), so that nothing outside the Rust toolchain is needed.
//!
//! The bound modules (no-signalling, locality, the classical MILP) build a [`LinearProgram`] and
//! never touch good_lp types; swapping the backend touches this file only.

use good_lp::solvers::microlp::microlp;
use good_lp::{variable, Expression, ProblemVariables, Solution, SolverModel};

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
}

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
        let mut model = unsolved.using(microlp);
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
        Ok(LpSolution { x, objective })
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
