//! Explicit quantum strategies: a pure state shared by the players and, for each player and
//! question, a POVM with one element per answer. Values are computed by the Born rule,
//! independently of how the strategy was found, and strategy files are checked (normalised
//! state, Hermitian positive elements summing to the identity) with located errors.
//! Reading and writing strategy files is [`crate::formats::strategy_file`]'s job.

use nalgebra::{DMatrix, DVector};
use num_complex::Complex64;

use crate::model::scenario::{at_most, digits, Scenario};

/// A complex matrix.
pub type CMatrix = DMatrix<Complex64>;
/// A complex vector.
pub type CVector = DVector<Complex64>;

/// Tolerances for checking a strategy file.
pub const NORM_TOLERANCE: f64 = 1e-6;
/// Tolerance of the POVM checks (Hermitian, positive, summing to the identity).
pub const POVM_TOLERANCE: f64 = 1e-7;

/// A strategy's value with the error term of its evaluation.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct CertifiedValue {
    /// The value computed (compensated sum) for the strategy made valid.
    pub value: f64,
    /// A bound on |value − the exact value of that valid strategy|.
    pub error: f64,
    /// `value − error`: a lower bound on the quantum value that rounding cannot invalidate.
    pub lower: f64,
}

/// The largest joint dimension (product of the local dimensions) a strategy may have: its
/// state has that many amplitudes and each Born-rule evaluation multiplies matrices of that side.
pub const MAX_JOINT_DIMENSION: usize = 1 << 14;

/// The joint dimension of `dims`, or None when it overflows or exceeds
/// [`MAX_JOINT_DIMENSION`] (checked before anything of that size is allocated).
pub fn joint_dimension(dims: &[usize]) -> Option<usize> {
    dims.iter()
        .try_fold(1usize, |acc, &d| acc.checked_mul(d))
        .filter(|&t| t <= MAX_JOINT_DIMENSION)
}

/// Makes a nearly valid POVM exactly valid (up to rounding): Hermitian parts, negative
/// eigenvalues clipped, then `M_a ← S^{-1/2} M_a S^{-1/2}` with `S = Σ M_a`.
pub fn clean_povm(povm: Vec<CMatrix>) -> Vec<CMatrix> {
    let d = povm[0].nrows();
    let clipped: Vec<CMatrix> = povm
        .into_iter()
        .map(|m| {
            let h = (&m + m.adjoint()) * Complex64::new(0.5, 0.0);
            let eig = h.symmetric_eigen();
            let mut out = CMatrix::zeros(d, d);
            for k in 0..d {
                let v = eig.eigenvalues[k].max(0.0);
                if v > 0.0 {
                    let col = eig.eigenvectors.column(k);
                    out += col * col.adjoint() * Complex64::new(v, 0.0);
                }
            }
            out
        })
        .collect();
    let sum = clipped.iter().fold(CMatrix::zeros(d, d), |acc, m| acc + m);
    let eig = sum.symmetric_eigen();
    let mut inv_sqrt = CMatrix::zeros(d, d);
    for k in 0..d {
        let v = eig.eigenvalues[k].max(1e-300);
        let col = eig.eigenvectors.column(k);
        inv_sqrt += col * col.adjoint() * Complex64::new(1.0 / v.sqrt(), 0.0);
    }
    clipped.iter().map(|m| &inv_sqrt * m * &inv_sqrt).collect()
}

/// A pure state shared by the players and a POVM per player and question.
#[derive(Debug, Clone, PartialEq)]
pub struct QuantumStrategy {
    /// Local dimension of each player.
    pub dims: Vec<usize>,
    /// Amplitudes in the product basis, first player most significant.
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
    /// The joint dimension.
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

    /// The same strategy, for a reader's eyes: for two players of equal dimension, the state in
    /// its Schmidt basis (Σ_k σ_k |k⟩|k⟩ with σ_k ≥ 0, from the singular value decomposition
    /// Ψ = U Σ V* of its amplitude matrix) and the measurements carried along (U* A U for the
    /// first player, Vᵀ B V̄ for the second: the same behaviour); then the diagonal phases that
    /// keep that state make the first player's first element's first row real, and entries
    /// left with imaginary parts below 1e-12 are written as real numbers. Anything else is
    /// returned unchanged. The behaviour is unchanged up to rounding.
    pub fn in_schmidt_basis(&self) -> QuantumStrategy {
        let [da, db] = self.dims[..] else {
            return self.clone();
        };
        if da != db || self.measurements.len() != 2 {
            return self.clone();
        }
        let psi = CMatrix::from_fn(da, db, |i, j| self.state[i * db + j]);
        let svd = psi.svd(true, true);
        let (Some(u), Some(v_t)) = (svd.u, svd.v_t) else {
            return self.clone();
        };
        // Ψ = U Σ Vᴴ with Vᴴ = v_t; the second player's basis vectors are the columns of V̄.
        let v = v_t.adjoint();
        let mut state = CVector::zeros(da * db);
        for k in 0..da {
            state[k * db + k] = Complex64::new(svd.singular_values[k], 0.0);
        }
        let a_map = |m: &CMatrix| u.adjoint() * m * &u;
        let b_map = |m: &CMatrix| v.transpose() * m * v.conjugate();
        let mut measurements = vec![
            self.measurements[0]
                .iter()
                .map(|q| q.iter().map(a_map).collect::<Vec<_>>())
                .collect::<Vec<_>>(),
            self.measurements[1]
                .iter()
                .map(|q| q.iter().map(b_map).collect::<Vec<_>>())
                .collect::<Vec<_>>(),
        ];
        let sigma = &svd.singular_values;
        let rotate = |measurements: &mut Vec<Vec<Vec<CMatrix>>>, w: &CMatrix| {
            for q in &mut measurements[0] {
                for m in q.iter_mut() {
                    *m = w.adjoint() * &*m * w;
                }
            }
            for q in &mut measurements[1] {
                for m in q.iter_mut() {
                    *m = w.transpose() * &*m * w.conjugate();
                }
            }
        };
        // With equal Schmidt coefficients (a maximally entangled state) every W ⊗ W̄ keeps the
        // state: W diagonalises the first player's first element, as a reader would choose.
        if sigma.iter().all(|s| (s - sigma[0]).abs() < 1e-9) {
            let eig = measurements[0][0][0].clone().symmetric_eigen();
            let mut order: Vec<usize> = (0..da).collect();
            order.sort_by(|&a, &b| eig.eigenvalues[b].total_cmp(&eig.eigenvalues[a]));
            let w = CMatrix::from_fn(da, da, |r, c| eig.eigenvectors[(r, order[c])]);
            rotate(&mut measurements, &w);
        }
        // Phases D = diag(e^{iθ_k}) act as D* A D and Dᵀ B D̄, keeping Σ_k σ_k |kk⟩; θ_k makes
        // entry (0, k) of the first player's first element with a non-zero first row real and
        // non-negative.
        let first = measurements[0]
            .iter()
            .flatten()
            .find(|m| (1..da).any(|k| m[(0, k)].norm() > 1e-9))
            .unwrap_or(&measurements[0][0][0])
            .clone();
        let phases: Vec<Complex64> = (0..da)
            .map(|k| {
                let z = first[(0, k)];
                if k > 0 && z.norm() > 1e-9 {
                    z.conj() / z.norm()
                } else {
                    Complex64::new(1.0, 0.0)
                }
            })
            .collect();
        let d = CMatrix::from_diagonal(&nalgebra::DVector::from_vec(phases));
        rotate(&mut measurements, &d);
        let real = measurements
            .iter()
            .flatten()
            .flatten()
            .all(|m| m.iter().all(|z| z.im.abs() < 1e-12));
        if real {
            for m in measurements.iter_mut().flatten().flatten() {
                m.apply(|z| *z = Complex64::new(z.re, 0.0));
            }
        }
        QuantumStrategy {
            dims: self.dims.clone(),
            state,
            measurements,
        }
    }

    /// The same strategy made exactly valid (up to rounding): the state normalised, each
    /// element replaced by its Hermitian part with negative eigenvalues clipped, and each
    /// question's elements rescaled by `S^{-1/2} · S^{-1/2}` with `S = Σ_a M_a`. A strategy that
    /// passed [`QuantumStrategy::check`] moves by at most the check's tolerances.
    pub fn made_valid(&self) -> QuantumStrategy {
        let norm = self.state.norm();
        QuantumStrategy {
            dims: self.dims.clone(),
            state: &self.state / Complex64::new(norm, 0.0),
            measurements: self
                .measurements
                .iter()
                .map(|player| player.iter().map(|povm| clean_povm(povm.clone())).collect())
                .collect(),
        }
    }

    /// How far the strategy is from a valid one, as it stands in floating point: `state` is
    /// `|‖ψ‖ − 1|`, and per player the largest over questions of `‖Σ_a M_a − I‖_F + Σ_a
    /// (‖M_a − M_a†‖_F + max(0, −λ_min))`.
    pub fn invalidity(&self) -> (f64, Vec<f64>) {
        let state = (self.state.norm() - 1.0).abs();
        let players = self
            .measurements
            .iter()
            .zip(&self.dims)
            .map(|(player, &d)| {
                player
                    .iter()
                    .map(|povm| {
                        let mut sum = CMatrix::zeros(d, d);
                        let mut elementwise = 0.0;
                        for m in povm {
                            let h = (m + m.adjoint()) * Complex64::new(0.5, 0.0);
                            let min = h
                                .symmetric_eigenvalues()
                                .iter()
                                .cloned()
                                .fold(f64::INFINITY, f64::min);
                            elementwise += (m - m.adjoint()).norm() + (-min).max(0.0);
                            sum += m;
                        }
                        (sum - CMatrix::identity(d, d)).norm() + elementwise
                    })
                    .fold(0.0, f64::max)
            })
            .collect();
        (state, players)
    }

    /// The value with an explicit error term, for reporting a lower bound that rounding cannot
    /// push above the value of a valid strategy. Evaluated on [`QuantumStrategy::made_valid`];
    /// the error charges, per probability, the distance to a valid strategy (a state off by `η`
    /// moves each `⟨ψ|M|ψ⟩` by at most `2η + η²`; an element off by `μ` in Frobenius norm moves it
    /// by at most `μ` times the product of the others' norms, ≤ (1 + μ)) and the rounding of the
    /// Born-rule evaluation (a few units in the last place per multiply-add along the
    /// `n·d + D` products, a common-practice bound), each weighted by `Σ |w(q)V(a|q)|`; the sum
    /// itself is compensated (Neumaier) with its own error charged.
    pub fn certified_value(&self, s: &Scenario) -> CertifiedValue {
        let (p, per_probability) = self.certified_behaviour(s);
        let unit = f64::EPSILON / 2.0;
        let (mut sum, mut compensation, mut magnitude, mut weight) = (0.0f64, 0.0f64, 0.0, 0.0);
        let mut add = |t: f64| {
            let next = sum + t;
            compensation += if sum.abs() >= t.abs() {
                (sum - next) + t
            } else {
                (t - next) + sum
            };
            sum = next;
        };
        add(s.offset());
        for (c, pr) in s.objective().iter().zip(&p) {
            if *c != 0.0 {
                add(c * pr);
                magnitude += (c * pr).abs();
                weight += c.abs();
            }
        }
        let value = sum + compensation;
        let non_finite = !value.is_finite() || !per_probability.is_finite();
        let error = if non_finite {
            f64::INFINITY
        } else {
            weight * per_probability
                + 4.0 * unit * (magnitude + s.offset().abs())
                + unit * value.abs()
        };
        CertifiedValue {
            value,
            error,
            lower: value - error,
        }
    }

    /// The Born-rule behaviour of the strategy made valid ([`QuantumStrategy::made_valid`]), and
    /// a bound on how far each of its probabilities may lie from the behaviour of an exactly
    /// valid strategy (the terms of [`QuantumStrategy::certified_value`] per probability): every
    /// behaviour within that distance of the returned one, entry by entry, includes a quantum one.
    pub fn certified_behaviour(&self, s: &Scenario) -> (Vec<f64>, f64) {
        let valid = self.made_valid();
        let p = valid.behaviour(s);
        let (eta, mus) = valid.invalidity();
        let unit = f64::EPSILON / 2.0;
        let d_max = self.dims.iter().copied().max().unwrap_or(1) as f64;
        let joint = self.total_dim() as f64;
        let n = s.players() as f64;
        let mu_total: f64 = mus.iter().sum();
        let growth = mus.iter().fold(1.0, |acc, m| acc * (1.0 + m));
        let per_probability = (2.0 * eta + eta * eta) * growth
            + mu_total * growth
            + 8.0 * unit * (n * d_max * d_max + joint + 8.0) * growth;
        (p, per_probability)
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
        s.value_of_behaviour(&self.noise_behaviour(s))
    }

    /// The behaviour of the maximally mixed state with these measurements:
    /// `p(a|q) = Π_i tr(M^i_{a_i|q_i}) / d_i`.
    pub fn noise_behaviour(&self, s: &Scenario) -> Vec<f64> {
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
        p
    }

    /// Checks normalisation and the POVM conditions; the message names player, question, answer.
    pub fn check(&self, s: &Scenario) -> std::result::Result<(), String> {
        self.check_located(s).map_err(|(_, m)| m)
    }

    /// As [`QuantumStrategy::check`], with the file field at fault (`state`, or
    /// `measurements.<player>`).
    pub fn check_located(&self, s: &Scenario) -> std::result::Result<(), (String, String)> {
        // Shapes first: every later check (and the Born rule) indexes by them.
        let parties = s.parties();
        if self.dims.len() != parties.len() || self.measurements.len() != parties.len() {
            return Err((
                "measurements".into(),
                format!(
                    "the strategy has {} dimensions and measurements for {} players; the game has {} players",
                    self.dims.len(),
                    self.measurements.len(),
                    parties.len()
                ),
            ));
        }
        if let Some(d) = self.dims.iter().find(|&&d| d == 0) {
            return Err(("dims".into(), format!("a local dimension is {d}")));
        }
        let total = self
            .dims
            .iter()
            .try_fold(1usize, |acc, &d| acc.checked_mul(d));
        if total != Some(self.state.len()) {
            return Err((
                "state".into(),
                format!(
                    "the state has {} amplitudes; the dimensions {:?} need their product",
                    self.state.len(),
                    self.dims
                ),
            ));
        }
        for (i, (player, p)) in self.measurements.iter().zip(parties).enumerate() {
            let field = format!("measurements.{}", p.name);
            if player.len() != p.questions() {
                return Err((
                    field,
                    format!(
                        "{} has {} questions in the game, the strategy measures {}",
                        p.name,
                        p.questions(),
                        player.len()
                    ),
                ));
            }
            for (x, povm) in player.iter().enumerate() {
                if povm.len() != p.answers() {
                    return Err((
                        field,
                        format!(
                            "{}, question {}: the game has {} answers, the measurement {} elements",
                            p.name,
                            p.question_labels[x],
                            p.answers(),
                            povm.len()
                        ),
                    ));
                }
                if povm
                    .iter()
                    .any(|m| m.nrows() != self.dims[i] || m.ncols() != self.dims[i])
                {
                    return Err((
                        field,
                        format!(
                            "{}, question {}: every element must be {d}×{d}",
                            p.name,
                            p.question_labels[x],
                            d = self.dims[i]
                        ),
                    ));
                }
            }
        }
        // `at_most` is false for NaN, so a NaN fails every check.
        let norm = self.state.norm();
        if !at_most((norm - 1.0).abs(), NORM_TOLERANCE) {
            let hint = if (norm - 1.0).abs() <= 1e-3 {
                " (within 1e-3: the amplitudes look rounded; write them exactly, e.g. \"1/sqrt(2)\", or normalise the state, with `--normalise` on `evaluate`)"
            } else {
                ""
            };
            return Err((
                "state".into(),
                format!("the state has norm {norm}, not 1{hint}"),
            ));
        }
        for (i, player) in self.measurements.iter().enumerate() {
            let p = &s.parties()[i];
            let d = self.dims[i];
            for (x, povm) in player.iter().enumerate() {
                let mut sum = CMatrix::zeros(d, d);
                for (a, m) in povm.iter().enumerate() {
                    let at = format!(
                        "{}, question {}, answer {}",
                        p.name, p.question_labels[x], p.answer_labels[a]
                    );
                    let herm = (m - m.adjoint()).norm();
                    if !at_most(herm, POVM_TOLERANCE) {
                        return Err((
                            format!("measurements.{}", p.name),
                            format!("{at}: the element is not Hermitian (‖M − M†‖ = {herm:.2e})"),
                        ));
                    }
                    let hm = (m + m.adjoint()) * Complex64::new(0.5, 0.0);
                    let min = hm
                        .symmetric_eigenvalues()
                        .iter()
                        .cloned()
                        .fold(f64::INFINITY, f64::min);
                    if !at_most(-min, POVM_TOLERANCE) {
                        return Err((
                            format!("measurements.{}", p.name),
                            format!("{at}: the element has a negative eigenvalue {min:.3e}"),
                        ));
                    }
                    sum += m;
                }
                let dev = (sum - CMatrix::identity(d, d)).norm();
                if !at_most(dev, POVM_TOLERANCE) {
                    return Err((
                        format!("measurements.{}", p.name),
                        format!(
                            "{}, question {}: the elements sum to the identity only up to {dev:.2e}",
                            p.name, p.question_labels[x]
                        ),
                    ));
                }
            }
        }
        Ok(())
    }
}
