//! Level-2 and level-3 BLAS kernels as plain loops. When `beta = 0` the output is overwritten
//! without being read, as the reference requires (it may hold NaN on entry).

use std::os::raw::{c_char, c_int};

use super::{ch, stride_offset, strided};

/// `op(X)[i, j]` for column-major X with leading dimension `ld`.
#[inline]
unsafe fn op(x: *const f64, ld: usize, trans: bool, i: usize, j: usize) -> f64 {
    if trans {
        *x.add(j + i * ld)
    } else {
        *x.add(i + j * ld)
    }
}

#[inline]
fn scaled(beta: f64, c: f64) -> f64 {
    if beta == 0.0 {
        0.0
    } else {
        beta * c
    }
}

fn is_trans(t: u8) -> Option<bool> {
    match t {
        b'N' => Some(false),
        b'T' | b'C' => Some(true),
        _ => None,
    }
}

/// `C := alpha op(A) op(B) + beta C`, C m×n.
#[no_mangle]
pub unsafe extern "C" fn dgemm_(
    transa: *const c_char,
    transb: *const c_char,
    m: *const c_int,
    n: *const c_int,
    k: *const c_int,
    alpha: *const f64,
    a: *const f64,
    lda: *const c_int,
    b: *const f64,
    ldb: *const c_int,
    beta: *const f64,
    c: *mut f64,
    ldc: *const c_int,
) {
    let (Some(ta), Some(tb)) = (is_trans(ch(transa)), is_trans(ch(transb))) else {
        return;
    };
    let (m, n, k) = (*m as usize, *n as usize, *k as usize);
    let (lda, ldb, ldc) = (*lda as usize, *ldb as usize, *ldc as usize);
    let (alpha, beta) = (*alpha, *beta);
    let mut column = vec![0.0; m];
    for j in 0..n {
        column.iter_mut().for_each(|v| *v = 0.0);
        if alpha != 0.0 {
            for p in 0..k {
                let bpj = op(b, ldb, tb, p, j);
                if bpj == 0.0 {
                    continue;
                }
                if ta {
                    for (i, v) in column.iter_mut().enumerate() {
                        *v += *a.add(p + i * lda) * bpj;
                    }
                } else {
                    let acol = a.add(p * lda);
                    for (i, v) in column.iter_mut().enumerate() {
                        *v += *acol.add(i) * bpj;
                    }
                }
            }
        }
        for (i, v) in column.iter().enumerate() {
            let cij = c.add(i + j * ldc);
            *cij = alpha * v + scaled(beta, *cij);
        }
    }
}

/// `y := alpha op(A) x + beta y`, A m×n.
#[no_mangle]
pub unsafe extern "C" fn dgemv_(
    trans: *const c_char,
    m: *const c_int,
    n: *const c_int,
    alpha: *const f64,
    a: *const f64,
    lda: *const c_int,
    x: *const f64,
    incx: *const c_int,
    beta: *const f64,
    y: *mut f64,
    incy: *const c_int,
) {
    let Some(t) = is_trans(ch(trans)) else {
        return;
    };
    let (m, n, lda) = (*m as usize, *n as usize, *lda as usize);
    let (rows, cols) = if t { (n, m) } else { (m, n) };
    let xv = strided(x, cols, *incx);
    for i in 0..rows {
        let mut s = 0.0;
        for (j, xj) in xv.iter().enumerate() {
            s += op(a, lda, t, i, j) * xj;
        }
        let yi = y.offset(stride_offset(i, rows, *incy));
        *yi = *alpha * s + scaled(*beta, *yi);
    }
}

/// `y := alpha A x + beta y`, A symmetric, read from its `uplo` triangle.
#[no_mangle]
pub unsafe extern "C" fn dsymv_(
    uplo: *const c_char,
    n: *const c_int,
    alpha: *const f64,
    a: *const f64,
    lda: *const c_int,
    x: *const f64,
    incx: *const c_int,
    beta: *const f64,
    y: *mut f64,
    incy: *const c_int,
) {
    let upper = match ch(uplo) {
        b'U' => true,
        b'L' => false,
        _ => return,
    };
    let (n, lda) = (*n as usize, *lda as usize);
    let xv = strided(x, n, *incx);
    for i in 0..n {
        let mut s = 0.0;
        for j in 0..n {
            let (r, c) = if upper == (i <= j) { (i, j) } else { (j, i) };
            s += *a.add(r + c * lda) * xv[j];
        }
        let yi = y.offset(stride_offset(i, n, *incy));
        *yi = *alpha * s + scaled(*beta, *yi);
    }
}

/// `C := alpha A Aᵀ + beta C` ('N', A n×k) or `alpha Aᵀ A + beta C` ('T', A k×n); only the `uplo`
/// triangle of C is referenced and updated.
#[no_mangle]
pub unsafe extern "C" fn dsyrk_(
    uplo: *const c_char,
    trans: *const c_char,
    n: *const c_int,
    k: *const c_int,
    alpha: *const f64,
    a: *const f64,
    lda: *const c_int,
    beta: *const f64,
    c: *mut f64,
    ldc: *const c_int,
) {
    let upper = match ch(uplo) {
        b'U' => true,
        b'L' => false,
        _ => return,
    };
    let Some(t) = is_trans(ch(trans)) else {
        return;
    };
    let (n, k, lda, ldc) = (*n as usize, *k as usize, *lda as usize, *ldc as usize);
    // With t, op(A) = Aᵀ is n×k: element (i, p) is A[p, i].
    for j in 0..n {
        let (lo, hi) = if upper { (0, j + 1) } else { (j, n) };
        for i in lo..hi {
            let mut s = 0.0;
            for p in 0..k {
                s += op(a, lda, t, i, p) * op(a, lda, t, j, p);
            }
            let cij = c.add(i + j * ldc);
            *cij = *alpha * s + scaled(*beta, *cij);
        }
    }
}

/// `C := alpha (A Bᵀ + B Aᵀ) + beta C` ('N', A and B n×k) or with transposes ('T'); only the
/// `uplo` triangle of C is referenced and updated.
#[no_mangle]
pub unsafe extern "C" fn dsyr2k_(
    uplo: *const c_char,
    trans: *const c_char,
    n: *const c_int,
    k: *const c_int,
    alpha: *const f64,
    a: *const f64,
    lda: *const c_int,
    b: *const f64,
    ldb: *const c_int,
    beta: *const f64,
    c: *mut f64,
    ldc: *const c_int,
) {
    let upper = match ch(uplo) {
        b'U' => true,
        b'L' => false,
        _ => return,
    };
    let Some(t) = is_trans(ch(trans)) else {
        return;
    };
    let (n, k) = (*n as usize, *k as usize);
    let (lda, ldb, ldc) = (*lda as usize, *ldb as usize, *ldc as usize);
    for j in 0..n {
        let (lo, hi) = if upper { (0, j + 1) } else { (j, n) };
        for i in lo..hi {
            let mut s = 0.0;
            for p in 0..k {
                s += op(a, lda, t, i, p) * op(b, ldb, t, j, p)
                    + op(b, ldb, t, i, p) * op(a, lda, t, j, p);
            }
            let cij = c.add(i + j * ldc);
            *cij = *alpha * s + scaled(*beta, *cij);
        }
    }
}
