//! Bounds that are theorems: a dual certificate checked in exact rational arithmetic.
//!
//! For `maximise c·y + c0` subject to `Γ_k(y) = F0_k + Σ_i y_i F_ik ⪰ 0`, `E y = e`, `G y ≤ g`
//! and `|y_i| ≤ β_i`, any symmetric `Z_k ⪰ 0`, multipliers `μ` and `ν ≥ 0` give, for every
//! feasible `y` (weak duality, with `r_i = c_i + Σ_k ⟨Z_k, F_ik⟩ − (Eᵀμ)_i − (Gᵀν)_i`):
//!
//! `c·y + c0 = r·y − Σ_k ⟨Z_k, Γ_k(y)⟩ + Σ_k ⟨Z_k, F0_k⟩ + μ·e + ν·(G y) + c0
//!          ≤ c0 + Σ_k ⟨Z_k, F0_k⟩ + μ·e + ν·g + Σ_i β_i |r_i|`.
//!
//! The floating-point dual is rounded to rationals (each matrix entry to a multiple of 2⁻²ᵇ,
//! b as large as keeps every product below in 127-bit integers, at most 62); each `Z_k` is then
//! proven positive semidefinite exactly: with `L` a rational factor rounded from its floating
//! eigendecomposition (`V √Λ₊`, entries multiples of 2⁻ᵇ), the remainder
//! `R = Z_k − L Lᵀ` is computed exactly in integers, and `ρ_k = max_i Σ_j |R_ij|` makes
//! `Z_k + ρ_k I = L Lᵀ + (R + ρ_k I)` a sum of a Gram matrix and a diagonally dominant matrix
//! with a non-negative diagonal, both positive semidefinite. The bound above is evaluated with
//! `Z_k + ρ_k I` in exact rationals (every coefficient of the problem is a binary64 number, so
//! exactly a rational); it is a theorem about the problem as stored, whose table entries are
//! the nearest binary64 numbers to the game file's values.

use nalgebra::DMatrix;
use num_bigint::BigInt;
use num_rational::BigRational;
use num_traits::{One, Signed, ToPrimitive, Zero};
use serde::Serialize;

use super::sdp::{upper_index, SdpProblem};
use crate::error::{Error, Result};

/// An exactly proven upper bound.
#[derive(Debug, Clone, Serialize)]
pub struct ExactBound {
    /// The bound as a reduced fraction, `numerator/denominator`.
    pub fraction: String,
    /// The bound as a binary64 number rounded up (never below the fraction).
    pub rounded_up: f64,
    /// The exact shift ρ_k added to each dual matrix to prove it positive semidefinite, rounded
    /// up.
    pub shifts: Vec<f64>,
    /// The exact residual charge Σ β_i |r_i|, rounded up.
    pub residual_charge: f64,
}

fn rat(x: f64) -> Result<BigRational> {
    BigRational::from_float(x)
        .ok_or_else(|| Error::solver("exact verification", format!("{x} is not a finite number")))
}

fn pow2(bits: u32) -> BigInt {
    BigInt::one() << bits
}

/// The smallest binary64 number at least `q`.
pub fn round_up(q: &BigRational) -> f64 {
    let mut f = q.to_f64().unwrap_or(f64::INFINITY);
    if !f.is_finite() {
        return f;
    }
    while rat(f).map(|r| &r < q).unwrap_or(false) {
        f = f.next_up();
    }
    f
}

/// The largest binary64 number at most `q`.
pub fn round_down(q: &BigRational) -> f64 {
    -round_up(&-q)
}

/// One block's dual matrix rounded to a grid 2^(−2b), with b chosen so that every integer
/// below fits in 127 bits, and the shift that proves it PSD: the rounded numerators, the bits
/// `2b` of their denominator, and ρ as a rational.
fn proven_psd(z: &DMatrix<f64>) -> Result<(Vec<Vec<i128>>, u32, BigRational, PsdProof)> {
    let n = z.nrows();
    let overflow = || {
        Error::solver(
            "exact verification",
            "the dual matrix's entries are too large to check exactly",
        )
    };
    let symmetric = DMatrix::from_fn(n, n, |r, c| if r <= c { z[(r, c)] } else { z[(c, r)] });
    let eig = symmetric.clone().symmetric_eigen();
    // The factor L = V √Λ₊; its entries are at most √‖Z‖.
    let largest = symmetric
        .iter()
        .fold(0.0f64, |m, v| m.max(v.abs()))
        .max(1.0);
    let factor_largest = (largest * n as f64).sqrt().max(1.0);
    // L_int ≤ factor_largest·2^b and n of their products must stay below 2^126, as must Z's
    // numerators at 2^(2b).
    let headroom = 126.0 - (n as f64).log2().ceil() - 2.0 * factor_largest.log2().ceil() - 2.0;
    let b = ((headroom / 2.0).floor() as i64).clamp(8, 62) as u32;
    if (largest * (n as f64)).log2() + 2.0 * b as f64 > 125.0 {
        return Err(overflow());
    }
    let zgrid = 2f64.powi(2 * b as i32);
    let lgrid = 2f64.powi(b as i32);
    let zi: Vec<Vec<i128>> = (0..n)
        .map(|r| {
            (0..n)
                .map(|c| (symmetric[(r, c)] * zgrid).round() as i128)
                .collect()
        })
        .collect();
    // Row r of L: (V √Λ₊)_{r,t} on the grid 2^(−b).
    let roots: Vec<f64> = eig.eigenvalues.iter().map(|v| v.max(0.0).sqrt()).collect();
    let l: Vec<Vec<i128>> = (0..n)
        .map(|r| {
            roots
                .iter()
                .enumerate()
                .map(|(t, s)| (eig.eigenvectors[(r, t)] * s * lgrid).round() as i128)
                .collect()
        })
        .collect();
    // R = Z − L Lᵀ on the grid 2^(−2b), exactly; ρ = max_i Σ_j |R_ij|.
    let mut rho_num: i128 = 0;
    for (lr, zr) in l.iter().zip(&zi) {
        let mut row_sum: i128 = 0;
        for (lc, &z) in l.iter().zip(zr) {
            let mut gram: i128 = 0;
            for (a, c) in lr.iter().zip(lc) {
                let p = a.checked_mul(*c).ok_or_else(overflow)?;
                gram = gram.checked_add(p).ok_or_else(overflow)?;
            }
            let residual = z.checked_sub(gram).ok_or_else(overflow)?;
            row_sum = row_sum
                .checked_add(residual.checked_abs().ok_or_else(overflow)?)
                .ok_or_else(overflow)?;
        }
        rho_num = rho_num.max(row_sum);
    }
    let proof = PsdProof {
        size: n,
        z_bits: 2 * b,
        z: (0..n)
            .flat_map(|r| (r..n).map(move |c| (r, c)))
            .filter(|&(r, c)| zi[r][c] != 0)
            .map(|(r, c)| (r, c, zi[r][c]))
            .collect(),
        l_bits: b,
        l: l.iter()
            .enumerate()
            .flat_map(|(r, row)| {
                row.iter()
                    .enumerate()
                    .filter(|(_, v)| **v != 0)
                    .map(move |(t, &v)| (r, t, v))
            })
            .collect(),
        rho: rho_num,
    };
    Ok((
        zi,
        2 * b,
        BigRational::new(BigInt::from(rho_num), pow2(2 * b)),
        proof,
    ))
}

/// The exact PSD proof of one dual matrix, for a plain certificate: `Z = z/2^z_bits` (upper
/// triangle, non-zero entries), `L = l/2^l_bits` (non-zero entries), and `ρ = rho/2^z_bits`
/// with `Z + ρI − LLᵀ` diagonally dominant with a non-negative diagonal (`z_bits = 2·l_bits`).
#[derive(Debug, Clone)]
pub struct PsdProof {
    /// Side of the matrix.
    pub size: usize,
    /// Bits of Z's (and ρ's) denominator.
    pub z_bits: u32,
    /// Z's upper-triangle numerators (row, column, numerator), non-zero ones.
    pub z: Vec<(usize, usize, i128)>,
    /// Bits of L's denominator.
    pub l_bits: u32,
    /// L's numerators (row, column, numerator), non-zero ones.
    pub l: Vec<(usize, usize, i128)>,
    /// ρ's numerator.
    pub rho: i128,
}

/// The exact bound a dual vector (in [`SdpProblem::assemble`]'s layout) proves for `problem`.
pub fn exact_bound(problem: &SdpProblem, z: &[f64]) -> Result<ExactBound> {
    exact_bound_with_proofs(problem, z).map(|(b, _)| b)
}

/// [`exact_bound`], with each block's PSD proof (for a plain certificate).
pub fn exact_bound_with_proofs(
    problem: &SdpProblem,
    z: &[f64],
) -> Result<(ExactBound, Vec<PsdProof>)> {
    let assembled = problem.assemble();
    if z.len() != assembled.b.len() {
        return Err(Error::solver(
            "exact verification",
            format!(
                "the dual vector has {} entries, the problem {}",
                z.len(),
                assembled.b.len()
            ),
        ));
    }
    if let Some(k) = z.iter().position(|v| !v.is_finite()) {
        return Err(Error::solver(
            "exact verification",
            format!("dual entry {k} is not a finite number"),
        ));
    }
    let m = problem.variables;
    // r_i = c_i + Σ_k ⟨Z_k, F_ik⟩ − (Eᵀμ)_i − (Gᵀν)_i, accumulated exactly.
    let mut residual: Vec<BigRational> = problem
        .objective
        .iter()
        .map(|&c| rat(c))
        .collect::<Result<_>>()?;
    let mut bound = rat(problem.objective_constant)?;
    let (ne, ni) = (problem.equalities.len(), problem.inequalities.len());
    for (row, (terms, rhs)) in problem.equalities.iter().enumerate() {
        let mu = rat(z[row])?;
        bound += &mu * rat(*rhs)?;
        for &(j, c) in terms {
            residual[j] -= &mu * rat(c)?;
        }
    }
    for (k, (terms, rhs)) in problem.inequalities.iter().enumerate() {
        // The multipliers of G y ≤ g must be non-negative: negative ones are set to 0.
        let nu = rat(z[ne + k].max(0.0))?;
        bound += &nu * rat(*rhs)?;
        for &(j, c) in terms {
            residual[j] -= &nu * rat(c)?;
        }
    }
    let mut offset = ne + ni;
    let mut shifts = Vec::with_capacity(problem.blocks.len());
    let mut proofs = Vec::with_capacity(problem.blocks.len());
    for block in &problem.blocks {
        let n = block.size;
        let mut zm = DMatrix::zeros(n, n);
        for col in 0..n {
            for row in 0..=col {
                let v = z[offset + upper_index(row, col)];
                let v = if row == col {
                    v
                } else {
                    v * std::f64::consts::FRAC_1_SQRT_2
                };
                zm[(row, col)] = v;
                zm[(col, row)] = v;
            }
        }
        let (zi, bits, rho, proof) = proven_psd(&zm)?;
        proofs.push(proof);
        shifts.push(round_up(&rho));
        // ⟨Z', F⟩ over the upper triangle (off-diagonal entries count twice), Z' = Z + ρ I.
        let denominator = pow2(bits);
        for (row, zrow) in zi.iter().enumerate() {
            for (col, &numerator) in zrow.iter().enumerate().skip(row) {
                let entry = &block.upper[upper_index(row, col)];
                let mut value = BigRational::new(BigInt::from(numerator), denominator.clone());
                if row == col {
                    value += &rho;
                } else {
                    value *= BigRational::from_integer(BigInt::from(2));
                }
                if entry.constant != 0.0 {
                    bound += &value * rat(entry.constant)?;
                }
                for &(j, c) in &entry.terms {
                    residual[j] += &value * rat(c)?;
                }
            }
        }
        offset += n * (n + 1) / 2;
    }
    let bounds: Vec<f64> = if problem.variable_bounds.len() == m {
        problem.variable_bounds.clone()
    } else {
        vec![problem.variable_bound; m]
    };
    let mut charge = BigRational::zero();
    for (r, &b) in residual.iter().zip(&bounds) {
        if !r.is_zero() {
            charge += r.abs() * rat(b)?;
        }
    }
    bound += &charge;
    Ok((
        ExactBound {
            fraction: format!("{}/{}", bound.numer(), bound.denom()),
            rounded_up: round_up(&bound),
            shifts,
            residual_charge: round_up(&charge),
        },
        proofs,
    ))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::optim::certify::tests::two_by_two;

    #[test]
    fn the_exact_dual_proves_the_optimum_and_a_bad_one_proves_less() {
        // maximise y subject to [[1, y], [y, 1]] ⪰ 0: optimum 1, dual Z = [[1/2, −1/2], [−1/2, 1/2]].
        let p = two_by_two(1.0);
        // svec layout: Z00, √2·Z01, Z11.
        let z = [0.5, -0.5 * std::f64::consts::SQRT_2, 0.5];
        let b = exact_bound(&p, &z).unwrap();
        assert!(b.rounded_up >= 1.0 && b.rounded_up < 1.0 + 1e-9, "{b:?}");
        // A dual matrix that is not PSD pays its shift; a wrong one its residual.
        let bad = [0.5, -0.7 * std::f64::consts::SQRT_2, 0.5];
        let worse = exact_bound(&p, &bad).unwrap();
        assert!(worse.rounded_up > 1.1, "{worse:?}");
        assert!(exact_bound(&p, &[0.5, f64::NAN, 0.5]).is_err());
        assert!(exact_bound(&p, &[0.5, 0.5]).is_err());
        // Entries too large for exact integers are refused, not wrapped.
        assert!(exact_bound(&p, &[1e300, 0.0, 1e300]).is_err());
        assert!(exact_bound(&p, &[0.5, f64::INFINITY, 0.5]).is_err());
    }
}
