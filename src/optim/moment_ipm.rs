//! A primal-dual interior-point method for the SDPs the tool builds, working on the m×m Schur
//! complement (m = number of variables, i.e. distinct moments) instead of carrying the PSD cone
//! as a dense n(n+1)/2 block as clarabel does.
//!
//! In the notation of [`crate::optim::sdp`]: maximise `bᵀy + c0` subject to `Γ_k(y) = F0_k + Σ_i y_i F_ik ⪰ 0`
//! for each block k and `G y ≤ g`. The conic dual is: minimise `Σ_k ⟨F0_k, X_k⟩ + gᵀx + c0` subject to
//! `Σ_k ⟨F_ik, X_k⟩ − (Gᵀx)_i = −b_i`, `X ⪰ 0`, `x ≥ 0`. Equalities `E y = e` are eliminated first
//! (y = y0 + N w), which keeps every `F` sparse for the problems we build.
//!
//! Method (standard, published machinery): infeasible-start path following with the HKM search
//! direction (Helmberg–Rendl–Vanderbei–Wolkowicz 1996; Kojima–Shindoh–Hara 1997; Monteiro 1997)
//! and Mehrotra's predictor–corrector (Mehrotra 1992). The Schur complement
//! `M_ij = ⟨F_j, X F_i S⁻¹⟩ + (Gᵀ diag(x/s) G)_ij` is assembled from the sparsity of the `F_i`
//! (each matrix entry belongs to one moment), in parallel over rows, and factorised by a dense
//! Cholesky (faer, both cores). The result is reported in the same form as the clarabel path,
//! including clarabel's dual vector layout, so the same certificate check applies.

use std::time::Instant;

use faer::linalg::matmul::matmul;
use faer::prelude::*;
use faer::{Accum, Mat, Side};
use rayon::prelude::*;

use super::sdp::{upper_index, Assembled, Backend, SdpBackend, SdpProblem, SdpSolution};
use super::SolveStatus;
use crate::error::{Error, Result};

/// Relative gap and residuals at or below which a run counts as solved.
pub const SOLVED: f64 = 1e-8;
/// ... and as almost solved (reported as such).
pub const ALMOST_SOLVED: f64 = 1e-6;

/// Iteration limit and tolerance of the method.
#[derive(Debug, Clone, Copy)]
pub struct IpmOptions {
    /// Iterations before the run stops (and its best iterate is judged).
    pub max_iterations: usize,
    /// Relative duality gap and relative residuals to reach.
    pub tolerance: f64,
    /// What a run that stalls short of the relaxed tolerance returns.
    pub on_stall: StallPolicy,
    /// The starting point `X = S = c·I` as a multiple of the standard `c`, ten times the largest
    /// of ‖F0‖, max |b_i| and √(total size): that `c` sits well inside both cones on any
    /// problem, but where F0 carries large constants far from the solution's scale (the
    /// entropy nodes' norm bounds) a smaller one saves the first iterations' shrinking.
    pub start_scale: f64,
}

/// What a run that stalls short of the relaxed tolerance returns.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum StallPolicy {
    /// An error (the caller may try another solver): for callers that report the solver's
    /// value as the answer.
    #[default]
    Error,
    /// The best iterate, with status [`SolveStatus::Stalled`] and its verified bound: for callers
    /// that use only the verified bound, which holds for any dual vector.
    KeepBest,
}

impl Default for IpmOptions {
    fn default() -> Self {
        IpmOptions {
            max_iterations: 100,
            tolerance: 1e-9,
            on_stall: StallPolicy::Error,
            start_scale: 1.0,
        }
    }
}

/// One entry of a constraint matrix: block, row ≤ column, coefficient.
#[derive(Debug, Clone, Copy)]
struct Entry {
    block: u32,
    row: u32,
    col: u32,
    coef: f64,
}

/// The problem without equalities, in the solver's layout.
struct Internal {
    m: usize,
    b: Vec<f64>,
    sizes: Vec<usize>,
    f0: Vec<Mat<f64>>,
    /// Per variable, the entries of F_i (upper triangle).
    columns: Vec<Vec<Entry>>,
    /// Per block, its entries by variable (compressed columns): variable j's entries are
    /// `starts[j]..starts[j + 1]` of (triangle slot, coefficient).
    by_variable: Vec<SlotColumns>,
    /// Inequality rows G y ≤ g.
    g_rows: Vec<(Vec<(usize, f64)>, f64)>,
    /// Per block, when the F_i fill it densely (as after a split into symmetry blocks): the
    /// matrix of their coefficients, triangle slot × variable, for the Schur complement by one
    /// matrix product.
    dense: Vec<Option<Mat<f64>>>,
    /// Whether the F_i have pairwise disjoint supports, and their squared Frobenius norms.
    disjoint: bool,
    norms: Vec<f64>,
    /// When they overlap (and there are no inequality rows): the Cholesky factor of their Gram
    /// matrix `⟨F_i, F_j⟩`, for projecting onto the constraints.
    gram: Option<faer::linalg::solvers::Llt<f64>>,
    /// Per variable, its part in each block it touches (for the Schur rows).
    shapes: Vec<Vec<RowShape>>,
}

/// Variable i's entries in one block, as the Schur row uses them: the block, the range of its
/// entries in `columns[i]`, the matrix columns they touch (sorted), and each entry's row and
/// column as positions in that list. Fixed by the problem, so found once, not per iteration.
struct RowShape {
    block: usize,
    entries: std::ops::Range<usize>,
    touched: Vec<usize>,
    positions: Vec<(usize, usize)>,
}

/// The [`RowShape`]s of one variable's entries (sorted by block).
fn row_shapes(cols: &[Entry]) -> Vec<RowShape> {
    let mut shapes = Vec::new();
    let mut start = 0;
    while start < cols.len() {
        let block = cols[start].block as usize;
        let end = start + cols[start..].partition_point(|e| e.block as usize == block);
        let mine = &cols[start..end];
        let mut touched: Vec<usize> = mine
            .iter()
            .flat_map(|e| [e.row as usize, e.col as usize])
            .collect();
        touched.sort_unstable();
        touched.dedup();
        let pos = |c: usize| touched.binary_search(&c).unwrap_or(0);
        let positions = mine
            .iter()
            .map(|e| (pos(e.row as usize), pos(e.col as usize)))
            .collect();
        shapes.push(RowShape {
            block,
            entries: start..end,
            touched,
            positions,
        });
        start = end;
    }
    shapes
}

/// The entries of one block by variable, as compressed columns over triangle slots.
struct SlotColumns {
    starts: Vec<usize>,
    slots: Vec<u32>,
    coefs: Vec<f64>,
    /// Per variable i, the first matrix column holding an entry of some F_j with j ≥ i: row i of
    /// the Schur complement (j ≥ i) reads no slot left of it, so neither the slot values nor
    /// the top-left square of G = X F_i S⁻¹ before it are formed.
    first_column: Vec<u32>,
}

/// `y = y0 + N w`: the equality constraints solved for some variables.
struct Elimination {
    y0: Vec<f64>,
    /// Column j of N, sparse.
    basis: Vec<Vec<(usize, f64)>>,
}

fn eliminate(p: &SdpProblem) -> Result<Elimination> {
    let m = p.variables;
    let k = p.equalities.len();
    if k == 0 {
        return Ok(Elimination {
            y0: vec![0.0; m],
            basis: (0..m).map(|j| vec![(j, 1.0)]).collect(),
        });
    }
    // Dense Gauss–Jordan with partial pivoting on [E | e].
    let mut a = vec![vec![0.0; m + 1]; k];
    for (r, (terms, rhs)) in p.equalities.iter().enumerate() {
        for &(j, c) in terms {
            a[r][j] += c;
        }
        a[r][m] = *rhs;
    }
    let mut pivots = Vec::new();
    let mut row = 0;
    for col in 0..m {
        if row == k {
            break;
        }
        let best = (row..k).max_by(|&x, &y| a[x][col].abs().total_cmp(&a[y][col].abs()));
        let Some(best) = best else { break };
        if a[best][col].abs() < 1e-12 {
            continue;
        }
        a.swap(row, best);
        let pv = a[row][col];
        for v in a[row].iter_mut() {
            *v /= pv;
        }
        for r in 0..k {
            if r != row && a[r][col] != 0.0 {
                let f = a[r][col];
                let (src, dst) = if r < row {
                    let (lo, hi) = a.split_at_mut(row);
                    (&hi[0], &mut lo[r])
                } else {
                    let (lo, hi) = a.split_at_mut(r);
                    (&lo[row], &mut hi[0])
                };
                for (d, s) in dst.iter_mut().zip(src.iter()) {
                    *d -= f * s;
                }
            }
        }
        pivots.push(col);
        row += 1;
    }
    for rest in &a[row..k] {
        if rest[m].abs() > 1e-9 {
            return Err(Error::solver(
                "interior point",
                "the equality constraints are inconsistent",
            ));
        }
    }
    let is_pivot: Vec<Option<usize>> = {
        let mut v = vec![None; m];
        for (r, &c) in pivots.iter().enumerate() {
            v[c] = Some(r);
        }
        v
    };
    let mut y0 = vec![0.0; m];
    for (r, &c) in pivots.iter().enumerate() {
        y0[c] = a[r][m];
    }
    let mut basis = Vec::new();
    for j in 0..m {
        if is_pivot[j].is_some() {
            continue;
        }
        // Free variable j: y_j = w, pivot variables move by −a[r][j]·w.
        let mut col = vec![(j, 1.0)];
        for (r, &c) in pivots.iter().enumerate() {
            if a[r][j].abs() > 1e-15 {
                col.push((c, -a[r][j]));
            }
        }
        basis.push(col);
    }
    Ok(Elimination { y0, basis })
}

fn build(p: &SdpProblem, el: &Elimination) -> Internal {
    let m = el.basis.len();
    let sizes: Vec<usize> = p.blocks.iter().map(|b| b.size).collect();
    // Original variable → its F entries.
    let mut orig: Vec<Vec<Entry>> = vec![Vec::new(); p.variables];
    let mut f0: Vec<Mat<f64>> = sizes.iter().map(|&n| Mat::zeros(n, n)).collect();
    for (bi, block) in p.blocks.iter().enumerate() {
        for col in 0..block.size {
            for row in 0..=col {
                let e = &block.upper[upper_index(row, col)];
                if e.constant != 0.0 {
                    f0[bi][(row, col)] += e.constant;
                    if row != col {
                        f0[bi][(col, row)] += e.constant;
                    }
                }
                for &(v, c) in &e.terms {
                    orig[v].push(Entry {
                        block: bi as u32,
                        row: row as u32,
                        col: col as u32,
                        coef: c,
                    });
                }
            }
        }
    }
    // Substitute y = y0 + N w.
    for (v, entries) in orig.iter().enumerate() {
        if el.y0[v] != 0.0 {
            for e in entries {
                let f = &mut f0[e.block as usize];
                f[(e.row as usize, e.col as usize)] += el.y0[v] * e.coef;
                if e.row != e.col {
                    f[(e.col as usize, e.row as usize)] += el.y0[v] * e.coef;
                }
            }
        }
    }
    // Each column of N combines a few original variables (one, without equalities); a dense
    // accumulator over the triangle slots keeps combining many cheap when it does.
    let block_start: Vec<usize> = sizes
        .iter()
        .scan(0, |acc, &n| {
            let start = *acc;
            *acc += n * (n + 1) / 2;
            Some(start)
        })
        .collect();
    let slots = sizes.iter().map(|&n| n * (n + 1) / 2).sum::<usize>();
    let used = if el.basis.iter().any(|c| c.len() > 1) {
        slots
    } else {
        0
    };
    let (mut accumulator, mut marked) = (vec![0.0; used], vec![false; used]);
    let columns: Vec<Vec<Entry>> = el
        .basis
        .iter()
        .map(|col| {
            if let [(v, w)] = col[..] {
                return orig[v]
                    .iter()
                    .map(|e| Entry {
                        coef: w * e.coef,
                        ..*e
                    })
                    .filter(|e| e.coef.abs() > 1e-15)
                    .collect();
            }
            let mut touched: Vec<(u32, u32, u32)> = Vec::new();
            for &(v, w) in col {
                for e in &orig[v] {
                    let slot =
                        block_start[e.block as usize] + upper_index(e.row as usize, e.col as usize);
                    if !std::mem::replace(&mut marked[slot], true) {
                        touched.push((e.block, e.row, e.col));
                    }
                    accumulator[slot] += w * e.coef;
                }
            }
            touched.sort_unstable();
            touched
                .into_iter()
                .filter_map(|(block, row, col)| {
                    let slot =
                        block_start[block as usize] + upper_index(row as usize, col as usize);
                    marked[slot] = false;
                    let coef = std::mem::take(&mut accumulator[slot]);
                    (coef.abs() > 1e-15).then_some(Entry {
                        block,
                        row,
                        col,
                        coef,
                    })
                })
                .collect()
        })
        .collect();
    let mut by_block: Vec<Vec<(u32, u32, u32, f64)>> = vec![Vec::new(); sizes.len()];
    for (j, col) in columns.iter().enumerate() {
        for e in col {
            by_block[e.block as usize].push((e.row, e.col, j as u32, e.coef));
        }
    }
    // by_block lists each block's entries in variable order: cut it into columns.
    let by_variable = by_block
        .iter()
        .map(|entries| {
            let mut starts = vec![0; m + 1];
            for &(_, _, j, _) in entries {
                starts[j as usize + 1] += 1;
            }
            for j in 0..m {
                starts[j + 1] += starts[j];
            }
            // Entries are (row ≤ column): a variable's leftmost column is its smallest `c`;
            // a suffix minimum gives the leftmost over j ≥ i.
            let mut first_column = vec![u32::MAX; m + 1];
            for &(_, c, j, _) in entries {
                let f = &mut first_column[j as usize];
                *f = (*f).min(c);
            }
            for j in (0..m).rev() {
                first_column[j] = first_column[j].min(first_column[j + 1]);
            }
            first_column.truncate(m);
            SlotColumns {
                starts,
                slots: entries
                    .iter()
                    .map(|&(r, c, _, _)| upper_index(r as usize, c as usize) as u32)
                    .collect(),
                coefs: entries.iter().map(|e| e.3).collect(),
                first_column,
            }
        })
        .collect();
    let b: Vec<f64> = el
        .basis
        .iter()
        .map(|col| col.iter().map(|&(v, w)| w * p.objective[v]).sum())
        .collect();
    let g_rows = p
        .inequalities
        .iter()
        .map(|(terms, rhs)| {
            let shift: f64 = terms.iter().map(|&(v, c)| c * el.y0[v]).sum();
            let mut dense = vec![0.0; m];
            for (j, col) in el.basis.iter().enumerate() {
                for &(v, w) in col {
                    for &(tv, tc) in terms {
                        if tv == v {
                            dense[j] += w * tc;
                        }
                    }
                }
            }
            let sparse = dense
                .into_iter()
                .enumerate()
                .filter(|(_, c)| *c != 0.0)
                .collect();
            (sparse, rhs - shift)
        })
        .collect();
    let mut seen = std::collections::HashSet::new();
    let disjoint = columns
        .iter()
        .flatten()
        .all(|e| seen.insert((e.block, e.row, e.col)));
    let norms = columns
        .iter()
        .map(|cols| {
            cols.iter()
                .map(|e| {
                    if e.row == e.col {
                        e.coef * e.coef
                    } else {
                        2.0 * e.coef * e.coef
                    }
                })
                .sum()
        })
        .collect();
    // A block is dense when its entries fill at least a quarter of slot × variable.
    let dense = sizes
        .iter()
        .enumerate()
        .map(|(k, &n)| {
            let slots = n * (n + 1) / 2;
            (by_block[k].len() * 4 >= slots * m && slots * m <= 50_000_000).then(|| {
                let mut a = Mat::<f64>::zeros(slots, m);
                for &(r, c, j, coef) in &by_block[k] {
                    a[(upper_index(r as usize, c as usize), j as usize)] += coef;
                }
                a
            })
        })
        .collect();
    let mut p = Internal {
        m,
        b,
        dense,
        sizes,
        f0,
        columns,
        by_variable,
        g_rows,
        disjoint,
        norms,
        gram: None,
        shapes: Vec::new(),
    };
    p.shapes = p.columns.iter().map(|cols| row_shapes(cols)).collect();
    if !p.disjoint && p.g_rows.is_empty() && p.m <= MAX_GRAM_SIDE {
        // The Schur complement at X = S = I is the Gram matrix.
        let identity: Vec<Mat<f64>> = p.sizes.iter().map(|&n| Mat::identity(n, n)).collect();
        p.gram = schur(&p, &identity, &identity, &[], &[]).and_then(|m| m.llt(Side::Lower).ok());
    }
    p
}

/// ⟨F_i, W⟩ restricted to block k's entries of variable i.
fn inner(entries: &[Entry], w: &[Mat<f64>]) -> f64 {
    entries
        .iter()
        .map(|e| {
            let (r, c) = (e.row as usize, e.col as usize);
            let m = &w[e.block as usize];
            if r == c {
                e.coef * m[(r, c)]
            } else {
                e.coef * (m[(r, c)] + m[(c, r)])
            }
        })
        .sum()
}

/// Adds `scale · F_i` (both triangles) to the block matrices.
fn add_f(entries: &[Entry], scale: f64, out: &mut [Mat<f64>]) {
    for e in entries {
        let (r, c) = (e.row as usize, e.col as usize);
        let m = &mut out[e.block as usize];
        m[(r, c)] += scale * e.coef;
        if r != c {
            m[(c, r)] += scale * e.coef;
        }
    }
}

fn frob(a: &Mat<f64>, b: &Mat<f64>) -> f64 {
    let mut s = 0.0;
    for j in 0..a.ncols() {
        for i in 0..a.nrows() {
            s += a[(i, j)] * b[(i, j)];
        }
    }
    s
}

fn symmetrise(mut a: MatMut<'_, f64>) {
    let n = a.nrows();
    for j in 0..n {
        for i in 0..j {
            let v = 0.5 * (a[(i, j)] + a[(j, i)]);
            a[(i, j)] = v;
            a[(j, i)] = v;
        }
    }
}

/// Copies the strict lower triangle onto the upper one.
fn mirror_lower(mut a: MatMut<'_, f64>) {
    for j in 0..a.ncols() {
        for i in 0..j {
            a[(i, j)] = a[(j, i)];
        }
    }
}

fn mul(a: &Mat<f64>, b: &Mat<f64>) -> Mat<f64> {
    let mut out = Mat::zeros(a.nrows(), b.ncols());
    matmul(&mut out, Accum::Replace, a, b, 1.0, Par::rayon(0));
    out
}

/// Inverse of a symmetric positive definite matrix (None if not positive definite).
fn spd_inverse(a: &Mat<f64>) -> Option<Mat<f64>> {
    let llt = a.llt(Side::Lower).ok()?;
    let mut inv = Mat::<f64>::identity(a.nrows(), a.ncols());
    llt.solve_in_place(&mut inv);
    symmetrise(inv.as_mut());
    Some(inv)
}

/// Largest step α ≤ 1/γ-free with A + αD ⪰ 0 (∞ when D ⪰ 0 relative to A).
fn max_step(a: &Mat<f64>, d: &Mat<f64>) -> f64 {
    let n = a.nrows();
    let Ok(llt) = a.llt(Side::Lower) else {
        return 0.0;
    };
    // L⁻¹ D L⁻ᵀ
    let mut t = d.clone();
    llt.L().solve_lower_triangular_in_place(&mut t);
    let mut tt = t.transpose().to_owned();
    llt.L().solve_lower_triangular_in_place(&mut tt);
    symmetrise(tt.as_mut());
    let Ok(ev) = tt.self_adjoint_eigenvalues(Side::Lower) else {
        return 0.0;
    };
    let min = ev.iter().cloned().fold(f64::INFINITY, f64::min);
    let _ = n;
    if min >= 0.0 {
        f64::INFINITY
    } else {
        -1.0 / min
    }
}

/// `sym((target·I − K − X D) S⁻¹)`: the complementarity part of the HKM direction.
fn centred(
    x: &Mat<f64>,
    d: &Mat<f64>,
    target: f64,
    k: Option<&Mat<f64>>,
    sinv: &Mat<f64>,
) -> Mat<f64> {
    let n = x.nrows();
    let mut t = mul(x, d);
    for j in 0..n {
        for i in 0..n {
            t[(i, j)] = -t[(i, j)];
        }
        t[(j, j)] += target;
    }
    if let Some(k) = k {
        t -= k;
    }
    let mut w = mul(&t, sinv);
    symmetrise(w.as_mut());
    w
}

/// The search direction for given centring target and second-order term.
struct Direction {
    dy: Vec<f64>,
    dx: Vec<Mat<f64>>,
    ds: Vec<Mat<f64>>,
    dxl: Vec<f64>,
    dsl: Vec<f64>,
}

/// Solves with the Cholesky-factored Schur complement.
#[allow(clippy::too_many_arguments)]
fn direction(
    p: &Internal,
    llt: &SchurFactor,
    x: &[Mat<f64>],
    sinv: &[Mat<f64>],
    rd: &[Mat<f64>],
    xl: &[f64],
    sl: &[f64],
    rdl: &[f64],
    target: f64,
    second: Option<(&[Mat<f64>], &[f64])>,
    correct: bool,
) -> Direction {
    // W = (σμ I − K − X Rd) S⁻¹ per block.
    let w: Vec<Mat<f64>> = (0..p.sizes.len())
        .map(|k| {
            centred(
                &x[k],
                &rd[k],
                target,
                second.map(|(kk, _)| &kk[k]),
                &sinv[k],
            )
        })
        .collect();
    let wl: Vec<f64> = (0..xl.len())
        .map(|r| {
            let kr = second.map_or(0.0, |(_, kl)| kl[r]);
            (target - kr - xl[r] * rdl[r]) / sl[r]
        })
        .collect();
    let mut rhs = Mat::<f64>::zeros(p.m, 1);
    for i in 0..p.m {
        rhs[(i, 0)] = p.b[i] + inner(&p.columns[i], &w);
    }
    for (r, (terms, _)) in p.g_rows.iter().enumerate() {
        for &(i, c) in terms {
            rhs[(i, 0)] -= c * wl[r];
        }
    }
    llt.solve_in_place(&mut rhs);
    let dy: Vec<f64> = (0..p.m).map(|i| rhs[(i, 0)]).collect();
    // ΔS = Rd + Σ Δy_i F_i; Δs = rdl − G Δy.
    let mut ds: Vec<Mat<f64>> = rd.to_vec();
    for (i, cols) in p.columns.iter().enumerate() {
        if dy[i] != 0.0 {
            add_f(cols, dy[i], &mut ds);
        }
    }
    let dsl: Vec<f64> = p
        .g_rows
        .iter()
        .enumerate()
        .map(|(r, (terms, _))| rdl[r] - terms.iter().map(|&(i, c)| c * dy[i]).sum::<f64>())
        .collect();
    // ΔX = (σμ I − K − X ΔS) S⁻¹ − X, symmetrised.
    let dx: Vec<Mat<f64>> = (0..p.sizes.len())
        .map(|k| {
            let mut d = centred(
                &x[k],
                &ds[k],
                target,
                second.map(|(kk, _)| &kk[k]),
                &sinv[k],
            );
            d -= &x[k];
            d
        })
        .collect();
    let dxl: Vec<f64> = (0..xl.len())
        .map(|r| {
            let kr = second.map_or(0.0, |(_, kl)| kl[r]);
            (target - kr - xl[r] * dsl[r]) / sl[r] - xl[r]
        })
        .collect();
    let mut dx = dx;
    if correct {
        // In exact arithmetic ⟨F_i, X + ΔX⟩ − Σ_r G_ri (x_r + Δx_r) = −b_i; near a degenerate
        // optimum the large, cancelling terms of ΔX lose that to rounding, so ΔX is projected
        // back (the inequality multipliers' step is kept as it is).
        let mut miss: Vec<f64> = (0..p.m)
            .map(|i| p.b[i] + inner(&p.columns[i], x) + inner(&p.columns[i], &dx))
            .collect();
        for (r, (terms, _)) in p.g_rows.iter().enumerate() {
            for &(i, c) in terms {
                miss[i] -= c * (xl[r] + dxl[r]);
            }
        }
        if let Some(alpha) = constraint_multipliers(p, miss) {
            for (cols, a) in p.columns.iter().zip(alpha) {
                add_f(cols, -a, &mut dx);
            }
        }
    }
    Direction {
        dy,
        dx,
        ds,
        dxl,
        dsl,
    }
}

/// Schur complement `M_ij = ⟨F_j, X F_i S⁻¹⟩ + Σ_r G_ri G_rj x_r / s_r` into `buf` (column-major,
/// m × m), columns in parallel: column i's entries j ≥ i are row i's upper part, so only the
/// lower triangle is written (all the Cholesky factorisation reads), except with dense blocks,
/// whose product fills both triangles and is then symmetrised. The buffer is reused from one
/// iteration to the next: a fresh m × m matrix per iteration cost a tenth of the run in page
/// faults and zeroing on I3322's entropy nodes. `false` when the computation was asked to stop
/// (one complement can take seconds on large relaxations, so the request is looked at per row).
fn schur_into(
    p: &Internal,
    x: &[Mat<f64>],
    sinv: &[Mat<f64>],
    xl: &[f64],
    sl: &[f64],
    buf: &mut [f64],
) -> bool {
    let m = p.m;
    // Per worker, the slot values of each block, reused from row to row (overwritten, never
    // zeroed).
    let scratch = || -> Vec<(Mat<f64>, Vec<f64>)> {
        p.sizes
            .iter()
            .map(|&n| (Mat::zeros(n, n), vec![0.0; n * (n + 1) / 2]))
            .collect()
    };
    // The dense blocks' slot values per row (one row of `dense_values` per variable): each
    // dense block's offset in a row, and the row's width.
    let mut dense_width = 0;
    let dense_offsets: Vec<usize> = p
        .sizes
        .iter()
        .zip(&p.dense)
        .map(|(&n, d)| {
            let here = dense_width;
            if d.is_some() {
                dense_width += n * (n + 1) / 2;
            }
            here
        })
        .collect();
    let any_dense = dense_width > 0;
    let fused = fused_slots_available();
    if m == 0 {
        // Nothing to assemble (every variable eliminated); chunks of zero are not allowed.
        return !crate::limits::stop_requested();
    }
    let mut dense_values = vec![0.0; m * dense_width.max(1)];
    buf[..m * m]
        .par_chunks_mut(m)
        .zip(dense_values.par_chunks_mut(dense_width.max(1)))
        .enumerate()
        .for_each_init(scratch, |gs, (i, (column, dense_row))| {
            if crate::limits::stop_requested() {
                return;
            }
            let row = &mut column[i..];
            row.fill(0.0);
            let cols = &p.columns[i];
            for shape in &p.shapes[i] {
                let (k, n) = (shape.block, p.sizes[shape.block]);
                let mine = &cols[shape.entries.clone()];
                // X F_i has non-zero columns only where F_i has entries.
                let touched = &shape.touched;
                // Columns as slices (contiguous, column-major): the axpy loops vectorise.
                let axpy = |dst: &mut [f64], coef: f64, src: &[f64]| {
                    for (d, s) in dst.iter_mut().zip(src) {
                        *d += coef * s;
                    }
                };
                let mut xf = Mat::<f64>::zeros(n, touched.len());
                for (e, &(pr, pc)) in mine.iter().zip(&shape.positions) {
                    let (r, c) = (e.row as usize, e.col as usize);
                    axpy(xf.col_as_slice_mut(pc), e.coef, x[k].col_as_slice(r));
                    if r != c {
                        axpy(xf.col_as_slice_mut(pr), e.coef, x[k].col_as_slice(c));
                    }
                }
                let (g, v) = &mut gs[k];
                // Dense blocks need every slot; otherwise only columns from `first` on (and
                // the rows below `first` of the columns before it, for G_cr).
                let first = if p.dense[k].is_some() {
                    0
                } else {
                    (p.by_variable[k].first_column[i] as usize).min(n)
                };
                if touched.len() <= FUSED_SLOT_COLUMNS && fused {
                    let sinv_cols: Vec<&[f64]> =
                        touched.iter().map(|&t| sinv[k].col_as_slice(t)).collect();
                    slot_values(&xf, &sinv_cols, first, v);
                } else {
                    // Rows `touched` of S⁻¹ are its columns (S⁻¹ is symmetric).
                    let mut srows = Mat::<f64>::zeros(touched.len(), n);
                    for (a, &c) in touched.iter().enumerate() {
                        for (t, v) in sinv[k].col_as_slice(c).iter().enumerate() {
                            srows[(a, t)] = *v;
                        }
                    }
                    matmul(
                        g.as_mut().subcols_mut(first, n - first),
                        Accum::Replace,
                        &xf,
                        srows.as_ref().subcols(first, n - first),
                        1.0,
                        Par::Seq,
                    );
                    matmul(
                        g.as_mut().submatrix_mut(first, 0, n - first, first),
                        Accum::Replace,
                        xf.as_ref().subrows(first, n - first),
                        srows.as_ref().subcols(0, first),
                        1.0,
                        Par::Seq,
                    );
                    let g = &*g;
                    // ⟨E_slot, G⟩ per triangle slot: G_rr on the diagonal, G_rc + G_cr off it.
                    for col in first..n {
                        let gc = g.col_as_slice(col);
                        let at = upper_index(0, col);
                        for r in 0..col {
                            v[at + r] = gc[r] + g.col_as_slice(r)[col];
                        }
                        v[at + col] = gc[col];
                    }
                }
                if p.dense[k].is_some() {
                    let at = dense_offsets[k];
                    dense_row[at..at + v.len()].copy_from_slice(v);
                    continue;
                }
                // M is symmetric: the sparse part fills j ≥ i only.
                // Each M_ij gathers its own entries (a register sum, one load each).
                let sc = &p.by_variable[k];
                for (j, out) in row.iter_mut().enumerate() {
                    let j = j + i;
                    let range = sc.starts[j]..sc.starts[j + 1];
                    let mut sum = 0.0;
                    for (&slot, &coef) in sc.slots[range.clone()].iter().zip(&sc.coefs[range]) {
                        sum += coef * v[slot as usize];
                    }
                    *out += sum;
                }
            }
        });
    if crate::limits::stop_requested() {
        return false;
    }
    let mut mat = MatMut::from_column_major_slice_mut(&mut buf[..m * m], m, m);
    if any_dense {
        // Both triangles, as the dense product below adds to both and the two are averaged.
        mirror_lower(mat.rb_mut());
        for (k, dense) in p.dense.iter().enumerate() {
            let Some(a) = dense else { continue };
            let slots = a.nrows();
            let at = dense_offsets[k];
            let v = Mat::<f64>::from_fn(m, slots, |i, s| dense_values[i * dense_width + at + s]);
            matmul(mat.rb_mut(), Accum::Add, &v, a, 1.0, Par::rayon(0));
        }
    }
    for (r, (terms, _)) in p.g_rows.iter().enumerate() {
        let d = xl[r] / sl[r];
        for &(i, ci) in terms {
            for &(j, cj) in terms {
                mat[(i, j)] += d * ci * cj;
            }
        }
    }
    if any_dense {
        symmetrise(mat);
    }
    true
}

/// Most columns a Schur row's F_i may touch for its slot values to come from [`slot_values`]
/// rather than a whole product G = X F_i S⁻¹ (both give the same values): past about this
/// many, the matrix product's register blocking wins (measured on CGLMP-3's entropy nodes).
const FUSED_SLOT_COLUMNS: usize = 16;

/// The triangle-slot values of G + Gᵀ for G = X F_i S⁻¹ = A·S⁻¹_{T,:} (A = X F_i restricted to
/// the touched columns T, `sinv_cols` the columns T of S⁻¹, which are its rows T), in the
/// columns from `first` on: `v[slot(r, c)] = G_rc + G_cr` for r < c and `G_cc` on the
/// diagonal. Each G entry is one fused multiply-add chain over T in order, from zero, as the
/// matrix-product kernels form it (so the values are those of forming G whole and adding its
/// transpose), but only the upper triangle's pairs are formed, with no n × n G written and read
/// back across its columns.
fn slot_values(a: &Mat<f64>, sinv_cols: &[&[f64]], first: usize, v: &mut [f64]) {
    #[cfg(target_arch = "x86_64")]
    {
        let fma = fused_slots_available();
        if fma && std::arch::is_x86_feature_detected!("avx512f") {
            // SAFETY: the features the function is compiled for are present.
            unsafe { slot_values_avx512(a, sinv_cols, first, v) };
            return;
        }
        if fma {
            // SAFETY: the features the function is compiled for are present.
            unsafe { slot_values_fma(a, sinv_cols, first, v) };
            return;
        }
    }
    slot_values_generic(a, sinv_cols, first, v);
}

/// Whether [`slot_values`] runs on hardware fused multiply-add (x86-64 with AVX2 and FMA, or
/// ARM64); elsewhere `mul_add` would be a library call, and the matrix product is used instead.
fn fused_slots_available() -> bool {
    #[cfg(target_arch = "x86_64")]
    {
        std::arch::is_x86_feature_detected!("avx2") && std::arch::is_x86_feature_detected!("fma")
    }
    #[cfg(target_arch = "aarch64")]
    {
        true
    }
    #[cfg(not(any(target_arch = "x86_64", target_arch = "aarch64")))]
    {
        false
    }
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx512f,avx2,fma")]
unsafe fn slot_values_avx512(a: &Mat<f64>, sinv_cols: &[&[f64]], first: usize, v: &mut [f64]) {
    slot_values_generic(a, sinv_cols, first, v)
}

#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2,fma")]
unsafe fn slot_values_fma(a: &Mat<f64>, sinv_cols: &[&[f64]], first: usize, v: &mut [f64]) {
    slot_values_generic(a, sinv_cols, first, v)
}

/// [`slot_values`]'s body, inlined into each instruction-set variant.
#[inline(always)]
fn slot_values_generic(a: &Mat<f64>, sinv_cols: &[&[f64]], first: usize, v: &mut [f64]) {
    const CHUNK: usize = 32;
    let n = a.nrows();
    let a_cols: Vec<&[f64]> = (0..a.ncols()).map(|t| a.col_as_slice(t)).collect();
    for c in first..n {
        let at = upper_index(0, c);
        let out = &mut v[at..=at + c];
        let mut r0 = 0;
        while r0 <= c {
            let len = CHUNK.min(c + 1 - r0);
            // G_rc = Σ_t A_rt S⁻¹_{t_t, c} and G_cr = Σ_t A_ct S⁻¹_{r, t_t}, each in order.
            let mut lower = [0.0f64; CHUNK];
            let mut upper = [0.0f64; CHUNK];
            if len == CHUNK {
                for (acol, scol) in a_cols.iter().zip(sinv_cols) {
                    let (x, y) = (scol[c], acol[c]);
                    let (ar, sr) = (&acol[r0..r0 + CHUNK], &scol[r0..r0 + CHUNK]);
                    for j in 0..CHUNK {
                        lower[j] = ar[j].mul_add(x, lower[j]);
                        upper[j] = y.mul_add(sr[j], upper[j]);
                    }
                }
            } else {
                // The tail below the diagonal: blocks of 8 (vectorised), then single rows.
                let blocks = len / 8 * 8;
                for (acol, scol) in a_cols.iter().zip(sinv_cols) {
                    let (x, y) = (scol[c], acol[c]);
                    let (ar, sr) = (&acol[r0..r0 + len], &scol[r0..r0 + len]);
                    for b in (0..blocks).step_by(8) {
                        let (lo, up) = (&mut lower[b..b + 8], &mut upper[b..b + 8]);
                        let (ab, sb) = (&ar[b..b + 8], &sr[b..b + 8]);
                        for j in 0..8 {
                            lo[j] = ab[j].mul_add(x, lo[j]);
                            up[j] = y.mul_add(sb[j], up[j]);
                        }
                    }
                    for j in blocks..len {
                        lower[j] = ar[j].mul_add(x, lower[j]);
                        upper[j] = y.mul_add(sr[j], upper[j]);
                    }
                }
            }
            for j in 0..len {
                let r = r0 + j;
                out[r] = if r == c {
                    lower[j]
                } else {
                    lower[j] + upper[j]
                };
            }
            r0 += len;
        }
    }
}

/// The Schur complement as a full symmetric matrix (for the Gram matrix of a projection), or
/// `None` when the computation was asked to stop.
fn schur(
    p: &Internal,
    x: &[Mat<f64>],
    sinv: &[Mat<f64>],
    xl: &[f64],
    sl: &[f64],
) -> Option<Mat<f64>> {
    let mut buf = vec![0.0; p.m * p.m];
    if !schur_into(p, x, sinv, xl, sl, &mut buf) {
        return None;
    }
    let mut m = Mat::<f64>::from_fn(p.m, p.m, |i, j| buf[j * p.m + i]);
    mirror_lower(m.as_mut());
    Some(m)
}

/// The factorisation's parallelism: all threads from the top level, one inside a worker of the
/// pool (the entropy hierarchy solves its nodes side by side, and a nested parallel
/// factorisation only contended with them: 5.3 s against 5.05 s on I3322's nodes). The blocked
/// factorisation computes the same values either way (checked on the entropy benchmarks).
fn factor_parallelism() -> Par {
    if rayon::current_thread_index().is_some() {
        Par::Seq
    } else {
        faer::get_global_parallelism()
    }
}

/// A Cholesky factor of the Schur complement, factored in place in a buffer kept across
/// iterations (no m × m allocation per iteration); the same factorisation and solve as faer's
/// `Llt`, whose constructor copies into a fresh zeroed matrix.
struct SchurFactor {
    m: usize,
    buf: Vec<f64>,
    /// Once a factorisation has failed in this run: the lower triangle as assembled, packed by
    /// columns, copied before each factorisation. Failures come in runs (every iteration of a
    /// stall near the optimum, where the complement is numerically singular), and a copy
    /// restores the spoiled buffer for the regularised retry in a fraction of the time that
    /// assembling it again takes, with the same values. Empty before the first failure or
    /// when the copy would exceed [`SCHUR_COPY_BYTES`].
    copy: Vec<f64>,
}

/// Most bytes the copy of a Schur complement's lower triangle may take.
const SCHUR_COPY_BYTES: usize = 256 << 20;

impl SchurFactor {
    fn new(m: usize) -> Self {
        SchurFactor {
            m,
            buf: vec![0.0; m * m],
            copy: Vec::new(),
        }
    }

    /// The columns' lower parts in turn: (start in the buffer, length).
    fn lower_columns(&self) -> impl Iterator<Item = (usize, usize)> {
        let m = self.m;
        (0..m).map(move |j| (j * m + j, m - j))
    }

    /// Factors the lower triangle in place; `false` if it is not positive definite (the
    /// buffer is then spoiled: see [`SchurFactor::restore`]).
    fn factor(&mut self) -> bool {
        use faer::dyn_stack::{MemBuffer, MemStack};
        use faer::linalg::cholesky::llt::factor;
        if self.m == 0 {
            return true;
        }
        if !self.copy.is_empty() {
            let mut at = 0;
            for (start, len) in self.lower_columns() {
                self.copy[at..at + len].copy_from_slice(&self.buf[start..start + len]);
                at += len;
            }
        }
        let par = factor_parallelism();
        let mut mem = MemBuffer::new(factor::cholesky_in_place_scratch::<f64>(
            self.m,
            par,
            Default::default(),
        ));
        let stack = MemStack::new(&mut mem);
        let a = MatMut::from_column_major_slice_mut(&mut self.buf, self.m, self.m);
        factor::cholesky_in_place(a, Default::default(), par, stack, Default::default()).is_ok()
    }

    /// After a failed factorisation: the assembled lower triangle back from the copy (`true`),
    /// or `false` when no copy was kept (it is kept from now on, when affordable), and the
    /// complement must be assembled again.
    fn restore(&mut self) -> bool {
        if self.copy.is_empty() {
            let packed = self.m * (self.m + 1) / 2;
            if packed * std::mem::size_of::<f64>() <= SCHUR_COPY_BYTES {
                self.copy = vec![0.0; packed];
            }
            return false;
        }
        let mut at = 0;
        for (start, len) in self.lower_columns() {
            self.buf[start..start + len].copy_from_slice(&self.copy[at..at + len]);
            at += len;
        }
        true
    }

    /// Solves M v = rhs in place.
    fn solve_in_place(&self, rhs: &mut Mat<f64>) {
        use faer::dyn_stack::{MemBuffer, MemStack};
        use faer::linalg::cholesky::llt::solve;
        if self.m == 0 {
            return;
        }
        // The solve stays on the global setting: its parallel and sequential forms round
        // differently, and the factorisation above does not.
        let par = faer::get_global_parallelism();
        let mut mem = MemBuffer::new(solve::solve_in_place_scratch::<f64>(
            self.m,
            rhs.ncols(),
            par,
        ));
        let stack = MemStack::new(&mut mem);
        let l = MatRef::from_column_major_slice(&self.buf, self.m, self.m);
        solve::solve_in_place_with_conj(l, faer::Conj::No, rhs.as_mut(), par, stack);
    }
}

/// Solves the problem; the solution carries clarabel's dual layout so that
/// [`Assembled::certified_bound`] applies unchanged.
pub fn solve(problem: &SdpProblem, stage: &str, opts: IpmOptions) -> Result<SdpSolution> {
    let start = Instant::now();
    let el = eliminate(problem)?;
    let p = build(problem, &el);
    let nb = p.sizes.len();
    let nl = p.g_rows.len();
    let total: f64 = p.sizes.iter().sum::<usize>() as f64 + nl as f64;
    let scale = {
        let fmax = p.f0.iter().map(|f| f.norm_l2()).fold(1.0f64, f64::max);
        let bmax = p.b.iter().fold(1.0f64, |m, v| m.max(v.abs()));
        let scale = 10.0 * fmax.max(bmax).max(total.sqrt());
        if opts.start_scale.is_finite() && opts.start_scale > 0.0 {
            scale * opts.start_scale
        } else {
            scale
        }
    };
    let mut x: Vec<Mat<f64>> = p
        .sizes
        .iter()
        .map(|&n| Mat::<f64>::identity(n, n) * Scale(scale))
        .collect();
    let mut s: Vec<Mat<f64>> = p
        .sizes
        .iter()
        .map(|&n| Mat::<f64>::identity(n, n) * Scale(scale))
        .collect();
    let mut xl = vec![scale; nl];
    let mut sl = vec![scale; nl];
    let mut y = vec![0.0; p.m];
    let norm_b = p.b.iter().map(|v| v * v).sum::<f64>().sqrt();
    let norm_c = p.f0.iter().map(|f| f.norm_l2().powi(2)).sum::<f64>().sqrt()
        + p.g_rows.iter().map(|(_, g)| g * g).sum::<f64>().sqrt();
    // The best iterate so far (by its worst relative residual or gap): late iterations can
    // lose accuracy to rounding, so the answer is the best point seen, not the last.
    let mut best: (f64, Vec<Mat<f64>>, Vec<f64>, Vec<f64>) =
        (f64::INFINITY, Vec::new(), Vec::new(), Vec::new());
    let (mut accuracy_gap, mut accuracy_residual) = (f64::NAN, f64::NAN);
    let mut iterations = 0;
    let mut schur_factor = SchurFactor::new(p.m);
    let (mut best_gap, mut stalled, mut progress_mu) = (f64::INFINITY, 0, f64::INFINITY);
    for it in 0..opts.max_iterations {
        if crate::limits::stop_requested() {
            break;
        }
        iterations = it + 1;
        // Residuals.
        let mut rd: Vec<Mat<f64>> = p.f0.clone();
        for (i, cols) in p.columns.iter().enumerate() {
            if y[i] != 0.0 {
                add_f(cols, y[i], &mut rd);
            }
        }
        for k in 0..nb {
            rd[k] -= &s[k];
        }
        let rdl: Vec<f64> = p
            .g_rows
            .iter()
            .enumerate()
            .map(|(r, (terms, g))| g - sl[r] - terms.iter().map(|&(i, c)| c * y[i]).sum::<f64>())
            .collect();
        let mut rp: Vec<f64> = (0..p.m)
            .map(|i| p.b[i] + inner(&p.columns[i], &x))
            .collect();
        for (r, (terms, _)) in p.g_rows.iter().enumerate() {
            for &(i, c) in terms {
                rp[i] -= c * xl[r];
            }
        }
        let primal_obj: f64 = (0..nb).map(|k| frob(&p.f0[k], &x[k])).sum::<f64>()
            + p.g_rows
                .iter()
                .zip(&xl)
                .map(|((_, g), x)| g * x)
                .sum::<f64>();
        let dual_obj: f64 = p.b.iter().zip(&y).map(|(b, y)| b * y).sum();
        let gap = (primal_obj - dual_obj).abs() / (1.0 + primal_obj.abs() + dual_obj.abs());
        let pinf = rp.iter().map(|v| v * v).sum::<f64>().sqrt() / (1.0 + norm_b);
        let dinf = (rd.iter().map(|m| m.norm_l2().powi(2)).sum::<f64>()
            + rdl.iter().map(|v| v * v).sum::<f64>())
        .sqrt()
            / (1.0 + norm_c);
        if std::env::var("BELLGAP_IPM_TRACE").is_ok() {
            eprintln!("it {it:3} P {primal_obj:.12} D {dual_obj:.12} gap {gap:.2e} pinf {pinf:.2e} dinf {dinf:.2e}");
        }
        let worst = gap.max(pinf).max(dinf);
        if worst < best.0 {
            best = (worst, x.clone(), xl.clone(), y.clone());
            accuracy_gap = gap;
            accuracy_residual = pinf.max(dinf);
        }
        if worst < opts.tolerance {
            break;
        }
        // Progress means 1% better; once at the accuracy that counts as solved, a step must
        // halve the error to count, and two steps without that end the run (on I3322 level 4
        // the last dozen iterations moved the gap between 5e-9 and 1e-9 at 2 s each).
        let (factor, patience) = if best_gap < SOLVED {
            (0.5, 2)
        } else {
            (0.99, 5)
        };
        // Far from the optimum the relative gap sits near 1 while the objectives still fall by
        // orders of magnitude (a node of the entropy hierarchy with a large norm bound starts
        // at 3e6): a halving of the complementarity counts as progress too.
        let mu = ((0..nb).map(|k| frob(&x[k], &s[k])).sum::<f64>()
            + xl.iter().zip(&sl).map(|(a, b)| a * b).sum::<f64>())
            / total;
        if worst < best_gap * factor || (best_gap >= SOLVED && mu < 0.5 * progress_mu) {
            best_gap = best_gap.min(worst);
            progress_mu = mu;
            stalled = 0;
        } else {
            stalled += 1;
        }
        if stalled >= patience {
            break;
        }
        let _ = &s;
        let xnorm = x.iter().map(|m| m.norm_l2()).fold(0.0, f64::max);
        let snorm = s.iter().map(|m| m.norm_l2()).fold(0.0, f64::max);
        if xnorm > 1e12 || snorm > 1e12 {
            return Err(Error::solver(
                stage,
                "the iterates diverge: the problem is probably infeasible or unbounded",
            ));
        }
        let sinv: Vec<Mat<f64>> = match s.iter().map(spd_inverse).collect::<Option<Vec<_>>>() {
            Some(v) => v,
            None => {
                return Err(Error::solver(
                    stage,
                    "the dual slack lost positive definiteness",
                ))
            }
        };
        if !schur_into(&p, &x, &sinv, &xl, &sl, &mut schur_factor.buf) {
            break;
        }
        if !schur_factor.factor() {
            // Regularise slightly: the Schur complement is PD in exact arithmetic. The failed
            // factorisation spoiled the buffer: restored from its copy, or formed again.
            if !schur_factor.restore()
                && !schur_into(&p, &x, &sinv, &xl, &sl, &mut schur_factor.buf)
            {
                break;
            }
            let m = p.m;
            let reg = 1e-12
                * (0..m)
                    .map(|i| schur_factor.buf[i * m + i].abs())
                    .fold(1e-300, f64::max);
            for i in 0..m {
                schur_factor.buf[i * m + i] += reg;
            }
            if !schur_factor.factor() {
                return Err(Error::solver(
                    stage,
                    "the Schur complement is not positive definite",
                ));
            }
        }
        let llt = &schur_factor;
        // Predictor.
        // Project ΔX back onto the primal equalities at every step (where that is a diagonal
        // projection): with the 0.9 step factor below this measured best on the check games.
        let correct = true;
        let pred = direction(&p, llt, &x, &sinv, &rd, &xl, &sl, &rdl, 0.0, None, correct);
        let step = |d: &Direction, gamma: f64| {
            let mut ap = f64::INFINITY;
            let mut ad = f64::INFINITY;
            for k in 0..nb {
                ap = ap.min(max_step(&x[k], &d.dx[k]));
                ad = ad.min(max_step(&s[k], &d.ds[k]));
            }
            for r in 0..nl {
                if d.dxl[r] < 0.0 {
                    ap = ap.min(-xl[r] / d.dxl[r]);
                }
                if d.dsl[r] < 0.0 {
                    ad = ad.min(-sl[r] / d.dsl[r]);
                }
            }
            ((gamma * ap).min(1.0), (gamma * ad).min(1.0))
        };
        let (ap, ad) = step(&pred, 1.0);
        let mu_aff = ((0..nb)
            .map(|k| {
                let xa = &x[k] + &pred.dx[k] * Scale(ap);
                let sa = &s[k] + &pred.ds[k] * Scale(ad);
                frob(&xa, &sa)
            })
            .sum::<f64>()
            + (0..nl)
                .map(|r| (xl[r] + ap * pred.dxl[r]) * (sl[r] + ad * pred.dsl[r]))
                .sum::<f64>())
            / total;
        let sigma = (mu_aff / mu).clamp(0.0, 1.0).powi(3);
        // Corrector with the second-order term ΔXp ΔSp.
        let kk: Vec<Mat<f64>> = (0..nb).map(|k| mul(&pred.dx[k], &pred.ds[k])).collect();
        let kl: Vec<f64> = (0..nl).map(|r| pred.dxl[r] * pred.dsl[r]).collect();
        let corr = direction(
            &p,
            llt,
            &x,
            &sinv,
            &rd,
            &xl,
            &sl,
            &rdl,
            sigma * mu,
            Some((&kk, &kl)),
            correct,
        );
        // A step to 90% of the way to the boundary: more aggressive choices reached the
        // boundary region too early on degenerate check problems and stalled above 1e-8.
        let gamma = 0.9;
        let (ap, ad) = step(&corr, gamma);
        for k in 0..nb {
            x[k] += &corr.dx[k] * Scale(ap);
            s[k] += &corr.ds[k] * Scale(ad);
            symmetrise(x[k].as_mut());
            symmetrise(s[k].as_mut());
        }
        for r in 0..nl {
            xl[r] += ap * corr.dxl[r];
            sl[r] += ad * corr.dsl[r];
        }
        for (yi, dyi) in y.iter_mut().zip(&corr.dy) {
            *yi += ad * dyi;
        }
    }
    if crate::limits::stop_requested() {
        return Err(Error::solver(stage, "stopped on request"));
    }
    let (accuracy, x, xl, y) = best;
    let status = if accuracy <= SOLVED {
        SolveStatus::Solved
    } else if accuracy <= ALMOST_SOLVED {
        SolveStatus::AlmostSolved
    } else if opts.on_stall == StallPolicy::KeepBest && !x.is_empty() {
        SolveStatus::Stalled
    } else {
        return Err(Error::solver_stopped(
            stage,
            SolveStatus::Stalled,
            format!(
                "the interior-point method stalled after {iterations} iterations at relative accuracy {accuracy:.1e}"
            ),
        ));
    };
    // Back to the original variables and clarabel's dual layout.
    let mut yo = el.y0.clone();
    for (j, col) in el.basis.iter().enumerate() {
        for &(v, w) in col {
            yo[v] += w * y[j];
        }
    }
    let asm = problem.assemble();
    let to_z = |x: &[Mat<f64>]| {
        let mut z = vec![0.0; asm.b.len()];
        let ne = problem.equalities.len();
        z[ne..ne + nl].copy_from_slice(&xl[..nl]);
        let mut offset = ne + nl;
        for (k, &n) in p.sizes.iter().enumerate() {
            for col in 0..n {
                for row in 0..=col {
                    let v = 0.5 * (x[k][(row, col)] + x[k][(col, row)]);
                    z[offset + upper_index(row, col)] = if row == col {
                        v
                    } else {
                        v * std::f64::consts::SQRT_2
                    };
                }
            }
            offset += n * (n + 1) / 2;
        }
        if ne > 0 {
            fill_equality_duals(problem, &asm, &mut z);
        }
        z
    };
    // Two certificates, both valid: X itself, and X moved onto the affine constraints (when the
    // F_i have disjoint supports the projection is diagonal). The residual charge scales with
    // the number of moments, the eigenvalue charge with the matrix size; keep the smaller bound.
    let mut z = to_z(&x);
    let mut certified = asm.certified_bound(&z)?;
    if let Some(projected) = project_onto_constraints(&p, &x, &xl) {
        let z2 = to_z(&projected);
        let c2 = asm.certified_bound(&z2)?;
        if c2 < certified {
            certified = c2;
            z = z2;
        }
    }
    let primal = problem.primal_value(&yo);
    let dual = asm.dual_value(&z);
    Ok(SdpSolution {
        primal,
        dual,
        certified,
        status,
        iterations: iterations as u32,
        seconds: start.elapsed().as_secs_f64(),
        gap: accuracy_gap,
        residual: accuracy_residual,
        solver: Backend::MomentIpm,
        y: yo,
        z,
    })
}

/// X moved onto the affine constraints `⟨F_i, X⟩ = −b_i (+ inequality terms)` by the smallest
/// change in Frobenius norm, `X − Σ_i α_i F_i` with `Gα = r` for the Gram matrix
/// `G_ij = ⟨F_i, F_j⟩` and the residuals r. When the F_i have pairwise disjoint supports (a full
/// NPA moment matrix) G is diagonal; otherwise (merged or split problems, whose F_i overlap) G
/// is factored once and the solve refined once. The interior-point iterate's residual grows as
/// it converges, and over a reduced problem's wide F_i it would otherwise be charged at full
/// size. `None` when G is too large to hold or not positive definite.
fn project_onto_constraints(p: &Internal, x: &[Mat<f64>], xl: &[f64]) -> Option<Vec<Mat<f64>>> {
    let residuals = |x: &[Mat<f64>]| -> Vec<f64> {
        (0..p.m)
            .map(|i| {
                let mut rp = p.b[i] + inner(&p.columns[i], x);
                for (r, (terms, _)) in p.g_rows.iter().enumerate() {
                    for &(j, c) in terms {
                        if j == i {
                            rp -= c * xl[r];
                        }
                    }
                }
                rp
            })
            .collect()
    };
    let mut out = x.to_vec();
    // Twice: the second pass refines the Gram solve (exact at once when G is diagonal).
    for _pass in 0..if p.disjoint { 1 } else { 2 } {
        let alpha = constraint_multipliers(p, residuals(&out))?;
        for (cols, a) in p.columns.iter().zip(alpha) {
            add_f(cols, -a, &mut out);
        }
    }
    Some(out)
}

/// The α with `Gα = r` for the Gram matrix `G_ij = ⟨F_i, F_j⟩` (so that subtracting
/// `Σ_i α_i F_i` removes the residuals r by the smallest change): a division when the F_i are
/// disjoint, the stored Cholesky factor otherwise; `None` without one or when α is not finite.
fn constraint_multipliers(p: &Internal, residuals: Vec<f64>) -> Option<Vec<f64>> {
    let alpha: Vec<f64> = if p.disjoint {
        residuals
            .iter()
            .zip(&p.norms)
            .map(|(r, n)| if *n > 0.0 { r / n } else { 0.0 })
            .collect()
    } else {
        let mut a = Mat::<f64>::from_fn(p.m, 1, |i, _| residuals[i]);
        p.gram.as_ref()?.solve_in_place(&mut a);
        (0..p.m).map(|i| a[(i, 0)]).collect()
    };
    alpha.iter().all(|v| v.is_finite()).then_some(alpha)
}

/// Most variables for which the Gram matrix of a projection onto the constraints is formed
/// (side² · 8 bytes, and a Cholesky factorisation of that side).
const MAX_GRAM_SIDE: usize = 6000;

/// Multipliers of the eliminated equalities: a least-squares solution of
/// `Eᵀν = −(q + (the other rows)ᵀ z)`, so that the certificate's residual is as small as possible
/// (whatever remains is charged by the certified bound). The equalities may be redundant (the
/// invariance equations of a reduction are), so the normal equations would be singular: this
/// takes a QR factorisation of Eᵀ with column pivoting, keeps its numerically independent
/// columns (Golub & Van Loan, Matrix Computations, 4th ed. 2013, §5.4.1), and refines once.
fn fill_equality_duals(problem: &SdpProblem, asm: &Assembled, z: &mut [f64]) {
    let ne = problem.equalities.len();
    let n = asm.a.n;
    let mut target = asm.q.clone();
    // Eᵀ, E being the first ne rows of A.
    let mut et = Mat::<f64>::zeros(n, ne);
    for (j, t) in target.iter_mut().enumerate() {
        for k in asm.a.colptr[j]..asm.a.colptr[j + 1] {
            let r = asm.a.rowval[k];
            if r >= ne {
                *t += asm.a.nzval[k] * z[r];
            } else {
                et[(j, r)] = asm.a.nzval[k];
            }
        }
        *t = -*t;
    }
    let qr = et.col_piv_qr();
    let r = qr.thin_R();
    let q = qr.compute_thin_Q();
    let (forward, _) = qr.P().arrays();
    let rank = super::pivoted_qr_rank(r, n, ne);
    let mut nu = vec![0.0; ne];
    for _pass in 0..2 {
        // What is left of the target, then the correction from the independent columns.
        let mut left = target.clone();
        for (j, l) in left.iter_mut().enumerate() {
            for (i, v) in nu.iter().enumerate() {
                *l -= et[(j, i)] * v;
            }
        }
        let mut x: Vec<f64> = (0..rank)
            .map(|i| (0..n).map(|j| q[(j, i)] * left[j]).sum())
            .collect();
        for i in (0..rank).rev() {
            let mut v = x[i];
            for k in i + 1..rank {
                v -= r[(i, k)] * x[k];
            }
            x[i] = v / r[(i, i)];
        }
        for (i, v) in x.iter().enumerate() {
            nu[forward[i]] += v;
        }
    }
    if nu.iter().all(|v| v.is_finite()) {
        z[..ne].copy_from_slice(&nu);
    }
}

/// The moment-matrix method as an [`SdpBackend`], with default options.
pub struct MomentIpmBackend;

impl SdpBackend for MomentIpmBackend {
    fn backend(&self) -> Backend {
        Backend::MomentIpm
    }

    fn solve(&self, problem: &SdpProblem, stage: &str) -> Result<SdpSolution> {
        solve(problem, stage, IpmOptions::default())
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::optim::sdp::{AffineEntry, MatrixBlock};

    fn numbers(mut seed: u64) -> impl FnMut() -> f64 {
        move || {
            seed ^= seed << 13;
            seed ^= seed >> 7;
            seed ^= seed << 17;
            (seed >> 11) as f64 / (1u64 << 53) as f64 - 0.5
        }
    }

    /// A random positive definite matrix of side n.
    fn positive_definite(n: usize, next: &mut impl FnMut() -> f64) -> Mat<f64> {
        let a = Mat::<f64>::from_fn(n, n, |_, _| next());
        let mut m = mul(&a, &a.transpose().to_owned());
        for i in 0..n {
            m[(i, i)] += 0.5;
        }
        m
    }

    #[test]
    fn the_slot_kernel_gives_the_products_values() {
        // G = A·S⁻¹_{T,:}; the kernel's G_rc + G_cr (G_cc on the diagonal) against the whole
        // product, for few and many touched columns and a cut at `first`.
        let mut next = numbers(3);
        for &(n, k) in &[(5usize, 1usize), (40, 3), (110, 16), (70, 20), (175, 9)] {
            let a = Mat::<f64>::from_fn(n, k, |_, _| next());
            let sinv = positive_definite(n, &mut next);
            let touched: Vec<usize> = (0..k).map(|t| (t * 7 + 1) % n).collect();
            let srows = Mat::<f64>::from_fn(k, n, |t, c| sinv[(touched[t], c)]);
            let g = mul(&a, &srows);
            let cols: Vec<&[f64]> = touched.iter().map(|&t| sinv.col_as_slice(t)).collect();
            for first in [0, n / 3] {
                let mut v = vec![f64::NAN; n * (n + 1) / 2];
                slot_values(&a, &cols, first, &mut v);
                for c in 0..n {
                    for r in 0..=c {
                        let got = v[upper_index(r, c)];
                        if c < first {
                            assert!(got.is_nan(), "slot ({r}, {c}) left of {first} written");
                            continue;
                        }
                        let want = if r == c {
                            g[(c, c)]
                        } else {
                            g[(r, c)] + g[(c, r)]
                        };
                        assert!(
                            (got - want).abs() <= 1e-13 * (1.0 + want.abs()),
                            "n {n} k {k} ({r}, {c}): {got} against {want}"
                        );
                    }
                }
            }
        }
    }

    #[test]
    fn a_failed_factorisation_is_restored_from_the_copy() {
        // An indefinite 3 × 3 lower triangle: the first failure keeps no copy (the caller
        // assembles again), later ones restore exactly what was assembled.
        let lower = [4.0, 2.0, 1.0, 1.0, 3.0, -5.0];
        let fill = |f: &mut SchurFactor| {
            let mut at = 0;
            for j in 0..3 {
                for i in j..3 {
                    f.buf[j * 3 + i] = lower[at];
                    at += 1;
                }
            }
        };
        let mut f = SchurFactor::new(3);
        fill(&mut f);
        assert!(!f.factor());
        assert!(!f.restore(), "no copy before the first failure");
        fill(&mut f);
        assert!(!f.factor());
        assert!(f.restore());
        let mut at = 0;
        for j in 0..3 {
            for i in j..3 {
                assert_eq!(f.buf[j * 3 + i], lower[at], "entry ({i}, {j})");
                at += 1;
            }
        }
        // A positive definite matrix then factors, and its solve is right.
        f.buf
            .copy_from_slice(&[4.0, 2.0, 0.0, 0.0, 3.0, 1.0, 0.0, 0.0, 2.0]);
        assert!(f.factor());
        let mut rhs = Mat::<f64>::from_fn(3, 1, |i, _| [6.0, 6.0, 3.0][i]);
        f.solve_in_place(&mut rhs);
        for (i, want) in [1.0, 1.0, 1.0].into_iter().enumerate() {
            assert!((rhs[(i, 0)] - want).abs() < 1e-12, "solution {i}");
        }
    }

    #[test]
    fn the_schur_complement_is_its_definition() {
        // Overlapping F_i (each entry an expression of up to three variables, as in reduced
        // problems), some touching more columns than the slot kernel takes, a 1 × 1 block and
        // an inequality row: M_ij = ⟨F_i, X F_j S⁻¹⟩ + Σ_r g_ri g_rj x_r / s_r, formed densely.
        let mut next = numbers(5);
        let (n, m) = (24usize, 30usize);
        let mut upper = Vec::new();
        for c in 0..n {
            for r in 0..=c {
                let terms: Vec<(usize, f64)> = (0..1 + (r * 3 + c) % 3)
                    .map(|t| ((r * 5 + c * 11 + t * 7) % m, next()))
                    .collect();
                upper.push(AffineEntry {
                    constant: if r == c { 1.0 } else { 0.0 },
                    terms,
                });
            }
        }
        let problem = SdpProblem {
            variables: m,
            objective: (0..m).map(|_| next()).collect(),
            inequalities: vec![(vec![(0, 1.0), (3, -2.0)], 4.0)],
            blocks: vec![
                MatrixBlock {
                    size: n,
                    upper,
                    trace_bound: n as f64,
                },
                MatrixBlock {
                    size: 1,
                    upper: vec![AffineEntry {
                        constant: 2.0,
                        terms: vec![(1, -1.0)],
                    }],
                    trace_bound: 2.0,
                },
            ],
            variable_bound: 1.0,
            ..Default::default()
        };
        let el = eliminate(&problem).unwrap();
        let p = build(&problem, &el);
        assert!(p
            .shapes
            .iter()
            .any(|s| s.iter().any(|r| r.touched.len() > FUSED_SLOT_COLUMNS)));
        let x: Vec<Mat<f64>> = p
            .sizes
            .iter()
            .map(|&s| positive_definite(s, &mut next))
            .collect();
        let s: Vec<Mat<f64>> = p
            .sizes
            .iter()
            .map(|&s| positive_definite(s, &mut next))
            .collect();
        let sinv: Vec<Mat<f64>> = s.iter().map(|b| spd_inverse(b).unwrap()).collect();
        let (xl, sl) = (vec![0.7], vec![1.3]);
        let got = schur(&p, &x, &sinv, &xl, &sl).unwrap();
        let dense = |i: usize| -> Vec<Mat<f64>> {
            let mut f: Vec<Mat<f64>> = p.sizes.iter().map(|&s| Mat::zeros(s, s)).collect();
            add_f(&p.columns[i], 1.0, &mut f);
            f
        };
        for i in 0..p.m {
            let fi = dense(i);
            for j in 0..p.m {
                let fj = dense(j);
                let mut want: f64 = (0..p.sizes.len())
                    .map(|k| frob(&fi[k], &mul(&mul(&x[k], &fj[k]), &sinv[k])))
                    .sum();
                for (r, (terms, _)) in p.g_rows.iter().enumerate() {
                    let gi: f64 = terms.iter().filter(|t| t.0 == i).map(|t| t.1).sum();
                    let gj: f64 = terms.iter().filter(|t| t.0 == j).map(|t| t.1).sum();
                    want += xl[r] / sl[r] * gi * gj;
                }
                assert!(
                    (got[(i, j)] - want).abs() <= 1e-10 * (1.0 + want.abs()),
                    "M[{i}][{j}] = {} against {want}",
                    got[(i, j)]
                );
            }
        }
        // The factor kept across iterations solves with it.
        let mut factor = SchurFactor::new(p.m);
        assert!(schur_into(&p, &x, &sinv, &xl, &sl, &mut factor.buf));
        assert!(factor.factor());
        let want: Vec<f64> = (0..p.m).map(|_| next()).collect();
        let rhs_vec: Vec<f64> = (0..p.m)
            .map(|i| (0..p.m).map(|j| got[(i, j)] * want[j]).sum())
            .collect();
        let mut rhs = Mat::<f64>::from_fn(p.m, 1, |i, _| rhs_vec[i]);
        factor.solve_in_place(&mut rhs);
        for i in 0..p.m {
            assert!(
                (rhs[(i, 0)] - want[i]).abs() < 1e-8,
                "{i}: {} against {}",
                rhs[(i, 0)],
                want[i]
            );
        }
    }
}
