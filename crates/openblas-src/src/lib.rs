//! Pure-Rust BLAS/LAPACK routines with the Fortran calling convention, exported under their
//! usual symbol names (`dgemm_`, `dsyevr_`, ...), for clarabel's semidefinite cone.
//!
//! Only what clarabel calls is provided, in double precision: symmetric eigendecomposition
//! (`dsyevr`), Cholesky factorisation and solve (`dpotrf`, `dpotrs`), singular value
//! decompositions (`dgesdd`, `dgesvd`), a general solve (`dgesv`) and the level-2/3 kernels
//! `dgemm`, `dgemv`, `dsymv`, `dsyrk`, `dsyr2k`. Matrices are column-major with leading
//! dimensions, as in the reference routines; workspace queries (`lwork = -1`) answer with a size
//! and do nothing else. The factorisations delegate to nalgebra; the kernels are plain loops (the
//! matrices clarabel hands over for moment matrices are at most a few hundred wide).
//!
//! Options outside what the reference routines allow set `info` to minus the argument's
//! position; options the reference allows but this provider does not implement (full `U` of a
//! non-square SVD) do the same, so a caller can never mistake them for a result.

#![allow(clippy::missing_safety_doc, clippy::too_many_arguments)]

use std::os::raw::{c_char, c_int};

use nalgebra::{DMatrix, DVector};

mod kernels;
pub use kernels::*;

#[inline]
unsafe fn ch(p: *const c_char) -> u8 {
    (*p as u8).to_ascii_uppercase()
}

/// Reads an n×n symmetric matrix from the `uplo` triangle of column-major `a`.
unsafe fn read_symmetric(uplo: u8, n: usize, a: *const f64, lda: usize) -> DMatrix<f64> {
    let mut m = DMatrix::zeros(n, n);
    for j in 0..n {
        for i in 0..n {
            let (r, c) = if (uplo == b'U') == (i <= j) {
                (i, j)
            } else {
                (j, i)
            };
            m[(i, j)] = *a.add(r + c * lda);
        }
    }
    m
}

/// Eigenvalues (ascending) and, for `jobz = 'V'`, eigenvectors of a symmetric matrix; `range`
/// `'A'` (all), `'V'` (values in (vl, vu]) or `'I'` (the il-th to iu-th, 1-based).
#[no_mangle]
pub unsafe extern "C" fn dsyevr_(
    jobz: *const c_char,
    range: *const c_char,
    uplo: *const c_char,
    n: *const c_int,
    a: *mut f64,
    lda: *const c_int,
    vl: *const f64,
    vu: *const f64,
    il: *const c_int,
    iu: *const c_int,
    _abstol: *const f64,
    m: *mut c_int,
    w: *mut f64,
    z: *mut f64,
    ldz: *const c_int,
    isuppz: *mut c_int,
    work: *mut f64,
    lwork: *const c_int,
    iwork: *mut c_int,
    liwork: *const c_int,
    info: *mut c_int,
) {
    let (jobz, range, uplo, nn) = (ch(jobz), ch(range), ch(uplo), *n);
    *info = if !matches!(jobz, b'N' | b'V') {
        -1
    } else if !matches!(range, b'A' | b'V' | b'I') {
        -2
    } else if !matches!(uplo, b'U' | b'L') {
        -3
    } else if nn < 0 {
        -4
    } else if *lda < nn.max(1) {
        -6
    } else if *ldz < 1 || (jobz == b'V' && *ldz < nn) {
        -15
    } else {
        0
    };
    if *info != 0 {
        return;
    }
    let nu = nn as usize;
    if *lwork == -1 || *liwork == -1 {
        *work = (26 * nu).max(1) as f64;
        *iwork = (10 * nu).max(1) as c_int;
        return;
    }
    if *lwork < (26 * nu).max(1) as c_int {
        *info = -18;
        return;
    }
    if *liwork < (10 * nu).max(1) as c_int {
        *info = -20;
        return;
    }
    *m = 0;
    if nu == 0 {
        return;
    }
    let sym = read_symmetric(uplo, nu, a, *lda as usize);
    let eig = sym.symmetric_eigen();
    let mut order: Vec<usize> = (0..nu).collect();
    order.sort_by(|&i, &j| eig.eigenvalues[i].total_cmp(&eig.eigenvalues[j]));
    let selected: Vec<usize> = match range {
        b'A' => order,
        b'V' => order
            .into_iter()
            .filter(|&k| eig.eigenvalues[k] > *vl && eig.eigenvalues[k] <= *vu)
            .collect(),
        _ => {
            let (lo, hi) = (*il, *iu);
            if lo < 1 || hi < lo || hi > nn {
                *info = -9;
                return;
            }
            order[(lo - 1) as usize..hi as usize].to_vec()
        }
    };
    *m = selected.len() as c_int;
    for (col, &k) in selected.iter().enumerate() {
        *w.add(col) = eig.eigenvalues[k];
        if jobz == b'V' {
            for i in 0..nu {
                *z.add(i + col * *ldz as usize) = eig.eigenvectors[(i, k)];
            }
            *isuppz.add(2 * col) = 1;
            *isuppz.add(2 * col + 1) = nn;
        }
    }
}

/// Cholesky factorisation of the `uplo` triangle: `A = L Lᵀ` ('L') or `A = Uᵀ U` ('U'); the
/// factor overwrites that triangle, the other is untouched. `info = k > 0` if the leading minor of
/// order k is not positive definite.
#[no_mangle]
pub unsafe extern "C" fn dpotrf_(
    uplo: *const c_char,
    n: *const c_int,
    a: *mut f64,
    lda: *const c_int,
    info: *mut c_int,
) {
    let (uplo, nn) = (ch(uplo), *n);
    *info = if !matches!(uplo, b'U' | b'L') {
        -1
    } else if nn < 0 {
        -2
    } else if *lda < nn.max(1) {
        -4
    } else {
        0
    };
    if *info != 0 {
        return;
    }
    let (nu, ld) = (nn as usize, *lda as usize);
    // Work on the lower factor L (for 'U', U = Lᵀ is stored transposed).
    let at = |i: usize, j: usize| if uplo == b'L' { i + j * ld } else { j + i * ld };
    for j in 0..nu {
        let mut d = *a.add(at(j, j));
        for k in 0..j {
            let l = *a.add(at(j, k));
            d -= l * l;
        }
        if d <= 0.0 || !d.is_finite() {
            *info = (j + 1) as c_int;
            return;
        }
        let d = d.sqrt();
        *a.add(at(j, j)) = d;
        for i in j + 1..nu {
            let mut s = *a.add(at(i, j));
            for k in 0..j {
                s -= *a.add(at(i, k)) * *a.add(at(j, k));
            }
            *a.add(at(i, j)) = s / d;
        }
    }
}

/// Solves `A X = B` with the factor from `dpotrf`; B is overwritten by X.
#[no_mangle]
pub unsafe extern "C" fn dpotrs_(
    uplo: *const c_char,
    n: *const c_int,
    nrhs: *const c_int,
    a: *const f64,
    lda: *const c_int,
    b: *mut f64,
    ldb: *const c_int,
    info: *mut c_int,
) {
    let (uplo, nn, nr) = (ch(uplo), *n, *nrhs);
    *info = if !matches!(uplo, b'U' | b'L') {
        -1
    } else if nn < 0 {
        -2
    } else if nr < 0 {
        -3
    } else if *lda < nn.max(1) {
        -5
    } else if *ldb < nn.max(1) {
        -7
    } else {
        0
    };
    if *info != 0 {
        return;
    }
    let (nu, ld, ldb) = (nn as usize, *lda as usize, *ldb as usize);
    let l = |i: usize, j: usize| {
        if uplo == b'L' {
            *a.add(i + j * ld)
        } else {
            *a.add(j + i * ld)
        }
    };
    for c in 0..nr as usize {
        let x = b.add(c * ldb);
        // L y = b, then Lᵀ x = y.
        for i in 0..nu {
            let mut s = *x.add(i);
            for k in 0..i {
                s -= l(i, k) * *x.add(k);
            }
            *x.add(i) = s / l(i, i);
        }
        for i in (0..nu).rev() {
            let mut s = *x.add(i);
            for k in i + 1..nu {
                s -= l(k, i) * *x.add(k);
            }
            *x.add(i) = s / l(i, i);
        }
    }
}

/// Solves `A X = B` by LU with partial pivoting; A is overwritten by its factors (unit lower L
/// below the diagonal, U on and above), `ipiv` holds the 1-based row interchanges.
#[no_mangle]
pub unsafe extern "C" fn dgesv_(
    n: *const c_int,
    nrhs: *const c_int,
    a: *mut f64,
    lda: *const c_int,
    ipiv: *mut c_int,
    b: *mut f64,
    ldb: *const c_int,
    info: *mut c_int,
) {
    let (nn, nr) = (*n, *nrhs);
    *info = if nn < 0 {
        -1
    } else if nr < 0 {
        -2
    } else if *lda < nn.max(1) {
        -4
    } else if *ldb < nn.max(1) {
        -7
    } else {
        0
    };
    if *info != 0 {
        return;
    }
    let (nu, ld, ldb) = (nn as usize, *lda as usize, *ldb as usize);
    let at = |i: usize, j: usize| i + j * ld;
    for k in 0..nu {
        let mut p = k;
        for i in k + 1..nu {
            if (*a.add(at(i, k))).abs() > (*a.add(at(p, k))).abs() {
                p = i;
            }
        }
        *ipiv.add(k) = (p + 1) as c_int;
        if *a.add(at(p, k)) == 0.0 {
            if *info == 0 {
                *info = (k + 1) as c_int;
            }
            continue;
        }
        if p != k {
            for j in 0..nu {
                std::ptr::swap(a.add(at(k, j)), a.add(at(p, j)));
            }
        }
        let pivot = *a.add(at(k, k));
        for i in k + 1..nu {
            *a.add(at(i, k)) /= pivot;
        }
        for j in k + 1..nu {
            let u = *a.add(at(k, j));
            if u != 0.0 {
                for i in k + 1..nu {
                    *a.add(at(i, j)) -= *a.add(at(i, k)) * u;
                }
            }
        }
    }
    if *info != 0 {
        return;
    }
    for c in 0..nr as usize {
        let x = b.add(c * ldb);
        for k in 0..nu {
            let p = (*ipiv.add(k) - 1) as usize;
            if p != k {
                std::ptr::swap(x.add(k), x.add(p));
            }
        }
        for i in 0..nu {
            let mut s = *x.add(i);
            for k in 0..i {
                s -= *a.add(at(i, k)) * *x.add(k);
            }
            *x.add(i) = s;
        }
        for i in (0..nu).rev() {
            let mut s = *x.add(i);
            for k in i + 1..nu {
                s -= *a.add(at(i, k)) * *x.add(k);
            }
            *x.add(i) = s / *a.add(at(i, i));
        }
    }
}

/// Shared SVD: `s` descending; with `thin_u`/`thin_v`, the leading min(m, n) columns of U and rows
/// of Vᵀ. Returns false when nalgebra's iteration fails.
unsafe fn svd_into(
    m: usize,
    n: usize,
    a: *const f64,
    lda: usize,
    s: *mut f64,
    u: Option<(*mut f64, usize)>,
    vt: Option<(*mut f64, usize)>,
) -> bool {
    let mat = DMatrix::from_fn(m, n, |i, j| *a.add(i + j * lda));
    let k = m.min(n);
    let Some(svd) = nalgebra::linalg::SVD::try_new(mat, u.is_some(), vt.is_some(), f64::EPSILON, 0)
    else {
        return false;
    };
    let mut order: Vec<usize> = (0..k).collect();
    order.sort_by(|&i, &j| svd.singular_values[j].total_cmp(&svd.singular_values[i]));
    for (col, &idx) in order.iter().enumerate() {
        *s.add(col) = svd.singular_values[idx];
        if let (Some((up, ldu)), Some(uu)) = (u, svd.u.as_ref()) {
            for i in 0..m {
                *up.add(i + col * ldu) = uu[(i, idx)];
            }
        }
        if let (Some((vp, ldvt)), Some(vv)) = (vt, svd.v_t.as_ref()) {
            for j in 0..n {
                *vp.add(col + j * ldvt) = vv[(idx, j)];
            }
        }
    }
    true
}

/// What both SVD drivers do once their arguments are checked: answer a workspace query, or
/// compute, setting `info = 1` when the iteration fails.
unsafe fn svd_checked(
    (m, n): (usize, usize),
    a: *const f64,
    lda: usize,
    s: *mut f64,
    u: Option<(*mut f64, usize)>,
    vt: Option<(*mut f64, usize)>,
    work: *mut f64,
    lwork: c_int,
    info: *mut c_int,
) {
    if lwork == -1 {
        *work = svd_lwork(m, n) as f64;
        return;
    }
    if m == 0 || n == 0 {
        return;
    }
    if !svd_into(m, n, a, lda, s, u, vt) {
        *info = 1;
    }
}

/// Workspace size reported by the SVD queries (the reference's bound for the thin case).
fn svd_lwork(m: usize, n: usize) -> usize {
    let (mn, mx) = (m.min(n), m.max(n));
    (3 * mn + mx.max(5 * mn * mn + 4 * mn)).max(1)
}

/// SVD by divide and conquer in the reference; here nalgebra's bidiagonal QR. `jobz`: 'N'
/// (values only), 'S' (thin U and Vᵀ), 'A' (full; only for square matrices here).
#[no_mangle]
pub unsafe extern "C" fn dgesdd_(
    jobz: *const c_char,
    m: *const c_int,
    n: *const c_int,
    a: *mut f64,
    lda: *const c_int,
    s: *mut f64,
    u: *mut f64,
    ldu: *const c_int,
    vt: *mut f64,
    ldvt: *const c_int,
    work: *mut f64,
    lwork: *const c_int,
    _iwork: *mut c_int,
    info: *mut c_int,
) {
    let (job, mm, nn) = (ch(jobz), *m, *n);
    let square = mm == nn;
    *info = if !(matches!(job, b'N' | b'S') || (job == b'A' && square)) {
        -1
    } else if mm < 0 {
        -2
    } else if nn < 0 {
        -3
    } else if *lda < mm.max(1) {
        -5
    } else if job != b'N' && *ldu < mm.max(1) {
        -8
    } else if job != b'N' && *ldvt < mm.min(nn).max(1) {
        -10
    } else {
        0
    };
    if *info != 0 {
        return;
    }
    let vectors = job != b'N';
    svd_checked(
        (mm as usize, nn as usize),
        a,
        *lda as usize,
        s,
        vectors.then(|| (u, *ldu as usize)),
        vectors.then(|| (vt, *ldvt as usize)),
        work,
        *lwork,
        info,
    );
}

/// SVD with separate choices for U (`jobu`) and Vᵀ (`jobvt`): 'N' or 'S' ('A' for square
/// matrices); 'O' (overwrite A) is not provided.
#[no_mangle]
pub unsafe extern "C" fn dgesvd_(
    jobu: *const c_char,
    jobvt: *const c_char,
    m: *const c_int,
    n: *const c_int,
    a: *mut f64,
    lda: *const c_int,
    s: *mut f64,
    u: *mut f64,
    ldu: *const c_int,
    vt: *mut f64,
    ldvt: *const c_int,
    work: *mut f64,
    lwork: *const c_int,
    info: *mut c_int,
) {
    let (ju, jv, mm, nn) = (ch(jobu), ch(jobvt), *m, *n);
    let ok_job = |j: u8| matches!(j, b'N' | b'S') || (j == b'A' && mm == nn);
    *info = if !ok_job(ju) {
        -1
    } else if !ok_job(jv) {
        -2
    } else if mm < 0 {
        -3
    } else if nn < 0 {
        -4
    } else if *lda < mm.max(1) {
        -6
    } else if ju != b'N' && *ldu < mm.max(1) {
        -9
    } else if jv != b'N' && *ldvt < mm.min(nn).max(1) {
        -11
    } else {
        0
    };
    if *info != 0 {
        return;
    }
    svd_checked(
        (mm as usize, nn as usize),
        a,
        *lda as usize,
        s,
        (ju != b'N').then(|| (u, *ldu as usize)),
        (jv != b'N').then(|| (vt, *ldvt as usize)),
        work,
        *lwork,
        info,
    );
}

/// A column vector from a strided pointer (negative strides start at the end, as in BLAS).
pub(crate) unsafe fn strided(x: *const f64, len: usize, inc: c_int) -> DVector<f64> {
    DVector::from_fn(len, |i, _| *x.offset(stride_offset(i, len, inc)))
}

pub(crate) fn stride_offset(i: usize, len: usize, inc: c_int) -> isize {
    if inc >= 0 {
        (i as isize) * inc as isize
    } else {
        ((len - 1 - i) as isize) * (-inc) as isize
    }
}

#[cfg(test)]
mod tests;
