//! The Tsirelson strategy, shared by the tests that need an explicit optimal CHSH strategy.

use bellgap::model::strategy::{CMatrix, CVector, QuantumStrategy};
use num_complex::Complex64;

/// The Tsirelson strategy: the maximally entangled state, Z and X for Alice, (Z ± X)/√2 for Bob.
pub fn tsirelson() -> QuantumStrategy {
    let c = |re: f64| Complex64::new(re, 0.0);
    let projector = |theta: f64| -> Vec<CMatrix> {
        let (cs, sn) = ((theta / 2.0).cos(), (theta / 2.0).sin());
        let p = CMatrix::from_row_slice(2, 2, &[c(cs * cs), c(cs * sn), c(cs * sn), c(sn * sn)]);
        let q = CMatrix::identity(2, 2) - &p;
        vec![p, q]
    };
    let pi = std::f64::consts::PI;
    let h = std::f64::consts::FRAC_1_SQRT_2;
    QuantumStrategy {
        dims: vec![2, 2],
        state: CVector::from_vec(vec![c(h), c(0.0), c(0.0), c(h)]),
        measurements: vec![
            vec![projector(0.0), projector(pi / 2.0)],
            vec![projector(pi / 4.0), projector(-pi / 4.0)],
        ],
    }
}
