//! What a strategy needs and how robust it is: entanglement of the state across each
//! bipartition (Schmidt coefficients, entanglement entropy, partial-transpose spectrum and
//! negativity), its value under white noise and the critical visibility, and the critical
//! detection efficiency.

use serde::Serialize;

use crate::model::scenario::{digits, index_of, Scenario};
use crate::model::strategy::{CMatrix, QuantumStrategy};

/// Largest joint dimension for which the partial transpose (a D×D matrix) is computed.
pub const PPT_DIMENSION_LIMIT: usize = 1024;

/// Entanglement across one bipartition of the players.
#[derive(Debug, Clone, Serialize)]
pub struct Bipartition {
    /// Player names on one side (the rest are on the other).
    pub side: Vec<String>,
    /// Schmidt coefficients, descending (their squares sum to 1).
    pub schmidt: Vec<f64>,
    /// Entanglement entropy in bits, −Σ λ² log₂ λ².
    pub entropy_bits: f64,
    /// Smallest eigenvalue of the partial transpose (None above the size limit).
    pub min_partial_transpose_eigenvalue: Option<f64>,
    /// Sum of the moduli of the negative eigenvalues of the partial transpose.
    pub negativity: Option<f64>,
    /// Positive partial transpose (within 1e-12).
    pub ppt: Option<bool>,
}

/// The state as a matrix: rows index the players in `side` (bit mask), columns the rest.
fn split(st: &QuantumStrategy, side: usize) -> CMatrix {
    let n = st.dims.len();
    let left: Vec<usize> = (0..n).filter(|i| side >> i & 1 == 1).collect();
    let right: Vec<usize> = (0..n).filter(|i| side >> i & 1 == 0).collect();
    let ld: Vec<usize> = left.iter().map(|&i| st.dims[i]).collect();
    let rd: Vec<usize> = right.iter().map(|&i| st.dims[i]).collect();
    let (rows, cols) = (ld.iter().product::<usize>(), rd.iter().product::<usize>());
    let mut m = CMatrix::zeros(rows, cols);
    let mut d = vec![0; n];
    for (k, &amp) in st.state.iter().enumerate() {
        digits(k, &st.dims, &mut d);
        let r = index_of(&left.iter().map(|&i| d[i]).collect::<Vec<_>>(), &ld);
        let c = index_of(&right.iter().map(|&i| d[i]).collect::<Vec<_>>(), &rd);
        m[(r, c)] = amp;
    }
    m
}

/// Every bipartition (each split counted once: the last player is always on the other side).
pub fn bipartitions(s: &Scenario, st: &QuantumStrategy) -> Vec<Bipartition> {
    let n = st.dims.len();
    let total = st.total_dim();
    (1usize..(1 << (n - 1)))
        .map(|side| {
            let m = split(st, side);
            let mut schmidt: Vec<f64> = m.singular_values().iter().cloned().collect();
            schmidt.sort_by(|a, b| b.total_cmp(a));
            let entropy_bits = -schmidt
                .iter()
                .map(|s| s * s)
                .filter(|&p| p > 1e-300)
                .map(|p| p * p.log2())
                .sum::<f64>();
            let (min_pt, negativity) = if total <= PPT_DIMENSION_LIMIT {
                let eig = partial_transpose(st, side).symmetric_eigenvalues();
                let min = eig.iter().cloned().fold(f64::INFINITY, f64::min);
                let neg = eig.iter().filter(|&&v| v < 0.0).map(|v| -v).sum::<f64>();
                (Some(min), Some(neg))
            } else {
                (None, None)
            };
            Bipartition {
                side: (0..n)
                    .filter(|i| side >> i & 1 == 1)
                    .map(|i| s.parties()[i].name.clone())
                    .collect(),
                schmidt,
                entropy_bits: entropy_bits.max(0.0),
                min_partial_transpose_eigenvalue: min_pt,
                negativity,
                ppt: min_pt.map(|v| v > -1e-12),
            }
        })
        .collect()
}

/// `(|ψ⟩⟨ψ|)^{T_side}`: the indices of the players in `side` swapped between row and column.
fn partial_transpose(st: &QuantumStrategy, side: usize) -> CMatrix {
    let dim = st.total_dim();
    let n = st.dims.len();
    let (mut rd, mut cd) = (vec![0; n], vec![0; n]);
    let mut out = CMatrix::zeros(dim, dim);
    for r in 0..dim {
        digits(r, &st.dims, &mut rd);
        for c in 0..dim {
            digits(c, &st.dims, &mut cd);
            let (mut r2, mut c2) = (rd.clone(), cd.clone());
            for i in 0..n {
                if side >> i & 1 == 1 {
                    std::mem::swap(&mut r2[i], &mut c2[i]);
                }
            }
            let (i, j) = (index_of(&r2, &st.dims), index_of(&c2, &st.dims));
            out[(r, c)] = st.state[i] * st.state[j].conj();
        }
    }
    out
}

/// How much noise and loss a strategy tolerates before it no longer beats the classical value.
#[derive(Debug, Clone, Serialize)]
pub struct Robustness {
    /// Value of the state mixed with white noise at visibility v is `v·value + (1−v)·noise_value`.
    pub value: f64,
    /// Value of white noise (every player answering uniformly at random).
    pub noise_value: f64,
    /// Smallest visibility at which the strategy still beats the classical value (None when it
    /// never does).
    pub critical_visibility: Option<f64>,
    /// Smallest detection efficiency (all players alike, no-click reported as the first answer)
    /// above which the strategy beats the classical value (None when it never does).
    pub critical_detection_efficiency: Option<f64>,
}

/// Critical visibility and detection efficiency of `st` against the classical value.
pub fn robustness(s: &Scenario, st: &QuantumStrategy, classical: f64) -> Robustness {
    let value = st.value(s);
    let noise_value = st.noise_value(s);
    let critical_visibility = (value > classical + 1e-12 && noise_value < value)
        .then(|| ((classical - noise_value) / (value - noise_value)).clamp(0.0, 1.0));
    Robustness {
        value,
        noise_value,
        critical_visibility,
        critical_detection_efficiency: critical_efficiency(s, st, classical),
    }
}

/// Scans down from η = 1 for the last efficiency that still beats the classical value, then
/// bisects the crossing to 1e-10.
fn critical_efficiency(s: &Scenario, st: &QuantumStrategy, classical: f64) -> Option<f64> {
    let beats = |eta: f64| st.lossy(eta).value(s) > classical + 1e-12;
    if !beats(1.0) {
        return None;
    }
    let step = 1.0 / 256.0;
    let mut hi = 1.0;
    let mut lo = 1.0 - step;
    while lo > 0.0 && beats(lo) {
        hi = lo;
        lo -= step;
    }
    if lo <= 0.0 {
        return Some(0.0);
    }
    while hi - lo > 1e-10 {
        let mid = 0.5 * (lo + hi);
        if beats(mid) {
            hi = mid;
        } else {
            lo = mid;
        }
    }
    Some(hi)
}

/// Entanglement of a strategy's state and, when the classical value is known, its robustness.
#[derive(Debug, Clone, Serialize)]
pub struct StrategyAnalysis {
    /// Each bipartition of the players.
    pub bipartitions: Vec<Bipartition>,
    /// Critical visibility and detection efficiency (None without a classical value).
    pub robustness: Option<Robustness>,
    /// The classical value the robustness figures are measured against.
    pub classical: Option<f64>,
}

/// Entanglement of the state and, when the classical value is known, robustness thresholds.
pub fn analyse(s: &Scenario, st: &QuantumStrategy, classical: Option<f64>) -> StrategyAnalysis {
    StrategyAnalysis {
        bipartitions: bipartitions(s, st),
        robustness: classical.map(|c| robustness(s, st, c)),
        classical,
    }
}
