//! Each routine against a direct computation (naive loops or the defining identity), including
//! the workspace-size queries and non-trivial leading dimensions.

// Index loops mirror the textbook definitions being checked.
#![allow(clippy::needless_range_loop)]

use super::*;

fn random(len: usize, seed: u64) -> Vec<f64> {
    let mut s = seed
        .wrapping_mul(2862933555777941757)
        .wrapping_add(3037000493);
    (0..len)
        .map(|_| {
            s = s
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            ((s >> 11) as f64 / (1u64 << 53) as f64) * 2.0 - 1.0
        })
        .collect()
}

/// Column-major element with leading dimension.
fn at(x: &[f64], ld: usize, i: usize, j: usize) -> f64 {
    x[i + j * ld]
}

fn c(b: u8) -> c_char {
    b as c_char
}

fn close(a: f64, b: f64) -> bool {
    (a - b).abs() < 1e-10 * (1.0 + a.abs().max(b.abs()))
}

#[test]
fn gemm_matches_naive_products_for_every_transpose() {
    let (m, n, k) = (4usize, 3usize, 5usize);
    for (ta, tb) in [(b'N', b'N'), (b'T', b'N'), (b'N', b'T'), (b'T', b'T')] {
        let (ar, ac) = if ta == b'N' { (m, k) } else { (k, m) };
        let (br, bc) = if tb == b'N' { (k, n) } else { (n, k) };
        let (lda, ldb, ldc) = (ar + 2, br + 1, m + 3);
        let a = random(lda * ac, 1);
        let b = random(ldb * bc, 2);
        let c0 = random(ldc * n, 3);
        for beta in [0.0, 0.5] {
            let mut cm = c0.clone();
            if beta == 0.0 {
                cm.iter_mut().for_each(|v| *v = f64::NAN);
            }
            let (alpha, mi, ni, ki) = (1.5f64, m as c_int, n as c_int, k as c_int);
            let (ldai, ldbi, ldci) = (lda as c_int, ldb as c_int, ldc as c_int);
            unsafe {
                dgemm_(
                    &c(ta),
                    &c(tb),
                    &mi,
                    &ni,
                    &ki,
                    &alpha,
                    a.as_ptr(),
                    &ldai,
                    b.as_ptr(),
                    &ldbi,
                    &beta,
                    cm.as_mut_ptr(),
                    &ldci,
                );
            }
            for i in 0..m {
                for j in 0..n {
                    let mut s = 0.0;
                    for p in 0..k {
                        let aip = if ta == b'N' {
                            at(&a, lda, i, p)
                        } else {
                            at(&a, lda, p, i)
                        };
                        let bpj = if tb == b'N' {
                            at(&b, ldb, p, j)
                        } else {
                            at(&b, ldb, j, p)
                        };
                        s += aip * bpj;
                    }
                    let want = alpha * s
                        + if beta == 0.0 {
                            0.0
                        } else {
                            beta * at(&c0, ldc, i, j)
                        };
                    assert!(close(at(&cm, ldc, i, j), want), "{ta} {tb} beta {beta}");
                }
            }
        }
    }
}

#[test]
fn gemv_and_symv_match_naive_products() {
    let (m, n, lda) = (4usize, 3usize, 6usize);
    let a = random(lda * n, 4);
    let x = random(2 * m, 5);
    let y0 = random(m.max(n), 6);
    for t in [b'N', b'T'] {
        let (rows, cols) = if t == b'N' { (m, n) } else { (n, m) };
        let mut y = y0.clone();
        let (alpha, beta) = (0.7f64, -0.3f64);
        let (mi, ni, ldai, incx, incy) =
            (m as c_int, n as c_int, lda as c_int, 2 as c_int, 1 as c_int);
        unsafe {
            dgemv_(
                &c(t),
                &mi,
                &ni,
                &alpha,
                a.as_ptr(),
                &ldai,
                x.as_ptr(),
                &incx,
                &beta,
                y.as_mut_ptr(),
                &incy,
            );
        }
        for i in 0..rows {
            let s: f64 = (0..cols)
                .map(|j| if t == b'N' { at(&a, lda, i, j) } else { at(&a, lda, j, i) } * x[2 * j])
                .sum();
            assert!(close(y[i], alpha * s + beta * y0[i]));
        }
    }
    // symv reads only one triangle: poison the other.
    let n = 4usize;
    let full = random(n * n, 7);
    let sym = |i: usize, j: usize| {
        if i <= j {
            full[i + j * n]
        } else {
            full[j + i * n]
        }
    };
    for uplo in [b'U', b'L'] {
        let mut a = vec![f64::NAN; n * n];
        for i in 0..n {
            for j in 0..n {
                if (uplo == b'U') == (i <= j) || i == j {
                    a[i + j * n] = sym(i, j);
                }
            }
        }
        let x = random(n, 8);
        let mut y = vec![f64::NAN; n];
        let (ni, one, alpha, beta) = (n as c_int, 1 as c_int, 2.0f64, 0.0f64);
        unsafe {
            dsymv_(
                &c(uplo),
                &ni,
                &alpha,
                a.as_ptr(),
                &ni,
                x.as_ptr(),
                &one,
                &beta,
                y.as_mut_ptr(),
                &one,
            )
        };
        for i in 0..n {
            let s: f64 = (0..n).map(|j| sym(i, j) * x[j]).sum();
            assert!(close(y[i], 2.0 * s), "{uplo}");
        }
    }
}

#[test]
fn syrk_and_syr2k_update_one_triangle() {
    let (n, k) = (4usize, 3usize);
    for t in [b'N', b'T'] {
        let (ar, ac) = if t == b'N' { (n, k) } else { (k, n) };
        let a = random(ar * ac, 9);
        let b = random(ar * ac, 10);
        let opa = |i: usize, p: usize| {
            if t == b'N' {
                a[i + p * ar]
            } else {
                a[p + i * ar]
            }
        };
        let opb = |i: usize, p: usize| {
            if t == b'N' {
                b[i + p * ar]
            } else {
                b[p + i * ar]
            }
        };
        for uplo in [b'U', b'L'] {
            let c0 = random(n * n, 11);
            let (mut c1, mut c2) = (c0.clone(), c0.clone());
            let (ni, ki, ld, alpha, beta) = (n as c_int, k as c_int, ar as c_int, 1.25f64, 0.5f64);
            let ldc = n as c_int;
            unsafe {
                dsyrk_(
                    &c(uplo),
                    &c(t),
                    &ni,
                    &ki,
                    &alpha,
                    a.as_ptr(),
                    &ld,
                    &beta,
                    c1.as_mut_ptr(),
                    &ldc,
                );
                dsyr2k_(
                    &c(uplo),
                    &c(t),
                    &ni,
                    &ki,
                    &alpha,
                    a.as_ptr(),
                    &ld,
                    b.as_ptr(),
                    &ld,
                    &beta,
                    c2.as_mut_ptr(),
                    &ldc,
                );
            }
            for i in 0..n {
                for j in 0..n {
                    let inside = if uplo == b'U' { i <= j } else { i >= j };
                    let s1: f64 = (0..k).map(|p| opa(i, p) * opa(j, p)).sum();
                    let s2: f64 = (0..k)
                        .map(|p| opa(i, p) * opb(j, p) + opb(i, p) * opa(j, p))
                        .sum();
                    let (w1, w2) = if inside {
                        (
                            alpha * s1 + beta * c0[i + j * n],
                            alpha * s2 + beta * c0[i + j * n],
                        )
                    } else {
                        (c0[i + j * n], c0[i + j * n])
                    };
                    assert!(close(c1[i + j * n], w1), "syrk {t} {uplo}");
                    assert!(close(c2[i + j * n], w2), "syr2k {t} {uplo}");
                }
            }
        }
    }
}

/// A random symmetric positive definite matrix, column-major n×n.
fn spd(n: usize, seed: u64) -> Vec<f64> {
    let g = random(n * n, seed);
    let mut a = vec![0.0; n * n];
    for i in 0..n {
        for j in 0..n {
            a[i + j * n] = (0..n).map(|p| g[i + p * n] * g[j + p * n]).sum::<f64>()
                + if i == j { 0.5 } else { 0.0 };
        }
    }
    a
}

#[test]
fn syevr_gives_ascending_eigenpairs_and_answers_the_workspace_query() {
    let n = 6usize;
    let a0 = spd(n, 12);
    let ni = n as c_int;
    let (mut m, mut info) = (0 as c_int, 0 as c_int);
    let (mut w, mut z, mut isuppz) = (vec![0.0; n], vec![0.0; n * n], vec![0 as c_int; 2 * n]);
    let (mut work, mut iwork) = (vec![0.0; 1], vec![0 as c_int; 1]);
    let (zero, izero, query) = (0.0f64, 0 as c_int, -1 as c_int);
    let mut a = a0.clone();
    unsafe {
        dsyevr_(
            &c(b'V'),
            &c(b'A'),
            &c(b'U'),
            &ni,
            a.as_mut_ptr(),
            &ni,
            &zero,
            &zero,
            &izero,
            &izero,
            &zero,
            &mut m,
            w.as_mut_ptr(),
            z.as_mut_ptr(),
            &ni,
            isuppz.as_mut_ptr(),
            work.as_mut_ptr(),
            &query,
            iwork.as_mut_ptr(),
            &query,
            &mut info,
        );
    }
    assert_eq!(info, 0);
    assert!(work[0] >= (26 * n) as f64 && iwork[0] >= (10 * n) as c_int);
    let (lwork, liwork) = (work[0] as c_int, iwork[0]);
    work.resize(lwork as usize, 0.0);
    iwork.resize(liwork as usize, 0);
    for uplo in [b'U', b'L'] {
        // Only the named triangle may be read.
        let mut a = a0.clone();
        for i in 0..n {
            for j in 0..n {
                if (uplo == b'U' && i > j) || (uplo == b'L' && i < j) {
                    a[i + j * n] = f64::NAN;
                }
            }
        }
        unsafe {
            dsyevr_(
                &c(b'V'),
                &c(b'A'),
                &c(uplo),
                &ni,
                a.as_mut_ptr(),
                &ni,
                &zero,
                &zero,
                &izero,
                &izero,
                &zero,
                &mut m,
                w.as_mut_ptr(),
                z.as_mut_ptr(),
                &ni,
                isuppz.as_mut_ptr(),
                work.as_mut_ptr(),
                &lwork,
                iwork.as_mut_ptr(),
                &liwork,
                &mut info,
            );
        }
        assert_eq!((info, m), (0, n as c_int));
        assert!(w.windows(2).all(|p| p[0] <= p[1]), "ascending");
        for k in 0..n {
            for i in 0..n {
                let av: f64 = (0..n).map(|j| a0[i + j * n] * z[j + k * n]).sum();
                assert!((av - w[k] * z[i + k * n]).abs() < 1e-9, "A v = λ v");
            }
        }
    }
    // range 'I': the 2nd to 3rd eigenvalues only.
    let mut a = a0.clone();
    let (il, iu) = (2 as c_int, 3 as c_int);
    let mut w2 = vec![0.0; n];
    unsafe {
        dsyevr_(
            &c(b'N'),
            &c(b'I'),
            &c(b'L'),
            &ni,
            a.as_mut_ptr(),
            &ni,
            &zero,
            &zero,
            &il,
            &iu,
            &zero,
            &mut m,
            w2.as_mut_ptr(),
            z.as_mut_ptr(),
            &ni,
            isuppz.as_mut_ptr(),
            work.as_mut_ptr(),
            &lwork,
            iwork.as_mut_ptr(),
            &liwork,
            &mut info,
        );
    }
    assert_eq!((info, m), (0, 2));
    assert!(close(w2[0], w[1]) && close(w2[1], w[2]));
}

#[test]
fn potrf_potrs_factor_and_solve() {
    let n = 5usize;
    let a0 = spd(n, 13);
    let ni = n as c_int;
    for uplo in [b'L', b'U'] {
        let mut a = a0.clone();
        let mut info = 0 as c_int;
        unsafe { dpotrf_(&c(uplo), &ni, a.as_mut_ptr(), &ni, &mut info) };
        assert_eq!(info, 0);
        // Reconstruct from the factor.
        let l = |i: usize, j: usize| {
            if i < j {
                0.0
            } else if uplo == b'L' {
                a[i + j * n]
            } else {
                a[j + i * n]
            }
        };
        for i in 0..n {
            for j in 0..n {
                let s: f64 = (0..n).map(|p| l(i, p) * l(j, p)).sum();
                assert!(close(s, a0[i + j * n]), "{uplo}");
            }
        }
        let x0 = random(2 * n, 14);
        let mut b: Vec<f64> = (0..2)
            .flat_map(|r| (0..n).map(move |i| (i, r)))
            .map(|(i, r)| (0..n).map(|j| a0[i + j * n] * x0[j + r * n]).sum())
            .collect();
        let two = 2 as c_int;
        unsafe {
            dpotrs_(
                &c(uplo),
                &ni,
                &two,
                a.as_ptr(),
                &ni,
                b.as_mut_ptr(),
                &ni,
                &mut info,
            )
        };
        assert_eq!(info, 0);
        assert!(b.iter().zip(&x0).all(|(u, v)| (u - v).abs() < 1e-9));
    }
    // Not positive definite: info names the failing minor.
    let mut a = vec![1.0, 2.0, 2.0, 1.0];
    let (two, mut info) = (2 as c_int, 0 as c_int);
    unsafe { dpotrf_(&c(b'L'), &two, a.as_mut_ptr(), &two, &mut info) };
    assert_eq!(info, 2);
}

#[test]
fn gesv_solves_with_pivoting() {
    let n = 5usize;
    let mut a = random(n * n, 15);
    a[0] = 0.0; // force a pivot
    let a0 = a.clone();
    let x0 = random(n, 16);
    let mut b: Vec<f64> = (0..n)
        .map(|i| (0..n).map(|j| a0[i + j * n] * x0[j]).sum())
        .collect();
    let (ni, one, mut info) = (n as c_int, 1 as c_int, 0 as c_int);
    let mut ipiv = vec![0 as c_int; n];
    unsafe {
        dgesv_(
            &ni,
            &one,
            a.as_mut_ptr(),
            &ni,
            ipiv.as_mut_ptr(),
            b.as_mut_ptr(),
            &ni,
            &mut info,
        )
    };
    assert_eq!(info, 0);
    assert!(b.iter().zip(&x0).all(|(u, v)| (u - v).abs() < 1e-9));
    assert!(ipiv[0] != 1, "row 1 had a zero pivot and must be exchanged");
}

#[test]
fn svds_reconstruct_and_answer_the_workspace_query() {
    for (m, n) in [(5usize, 3usize), (3, 5), (4, 4)] {
        let k = m.min(n);
        let a0 = random(m * n, 17 + m as u64);
        let (mi, ni, ki) = (m as c_int, n as c_int, k as c_int);
        for routine in ["gesdd", "gesvd"] {
            let mut a = a0.clone();
            let (mut s, mut u, mut vt) = (vec![0.0; k], vec![0.0; m * k], vec![0.0; k * n]);
            let mut work = vec![0.0; 1];
            let mut iwork = vec![0 as c_int; 8 * k];
            let (query, mut info) = (-1 as c_int, 0 as c_int);
            let call = |a: &mut [f64],
                        s: &mut [f64],
                        u: &mut [f64],
                        vt: &mut [f64],
                        work: &mut [f64],
                        lwork: c_int,
                        iwork: &mut [c_int],
                        info: &mut c_int| unsafe {
                if routine == "gesdd" {
                    dgesdd_(
                        &c(b'S'),
                        &mi,
                        &ni,
                        a.as_mut_ptr(),
                        &mi,
                        s.as_mut_ptr(),
                        u.as_mut_ptr(),
                        &mi,
                        vt.as_mut_ptr(),
                        &ki,
                        work.as_mut_ptr(),
                        &lwork,
                        iwork.as_mut_ptr(),
                        info,
                    );
                } else {
                    dgesvd_(
                        &c(b'S'),
                        &c(b'S'),
                        &mi,
                        &ni,
                        a.as_mut_ptr(),
                        &mi,
                        s.as_mut_ptr(),
                        u.as_mut_ptr(),
                        &mi,
                        vt.as_mut_ptr(),
                        &ki,
                        work.as_mut_ptr(),
                        &lwork,
                        info,
                    );
                }
            };
            call(
                &mut a, &mut s, &mut u, &mut vt, &mut work, query, &mut iwork, &mut info,
            );
            assert_eq!(info, 0);
            let lwork = work[0] as c_int;
            assert!(lwork as usize >= 3 * k + m.max(n));
            work.resize(lwork as usize, 0.0);
            call(
                &mut a, &mut s, &mut u, &mut vt, &mut work, lwork, &mut iwork, &mut info,
            );
            assert_eq!(info, 0, "{routine} {m}x{n}");
            assert!(s.windows(2).all(|p| p[0] >= p[1]), "descending");
            for i in 0..m {
                for j in 0..n {
                    let r: f64 = (0..k).map(|p| u[i + p * m] * s[p] * vt[p + j * k]).sum();
                    assert!((r - a0[i + j * m]).abs() < 1e-9, "{routine} U S Vᵀ = A");
                }
            }
            for p in 0..k {
                for q in 0..k {
                    let uu: f64 = (0..m).map(|i| u[i + p * m] * u[i + q * m]).sum();
                    assert!(
                        (uu - if p == q { 1.0 } else { 0.0 }).abs() < 1e-9,
                        "orthonormal U"
                    );
                }
            }
        }
    }
}

#[test]
fn illegal_options_are_reported_not_computed() {
    let (n, mut info) = (2 as c_int, 0 as c_int);
    let mut a = vec![4.0, 0.0, 0.0, 4.0];
    unsafe { dpotrf_(&c(b'X'), &n, a.as_mut_ptr(), &n, &mut info) };
    assert_eq!(info, -1);
    let (mut s, mut u, mut vt, mut work) =
        (vec![0.0; 2], vec![0.0; 4], vec![0.0; 4], vec![0.0; 64]);
    let (three, lwork) = (3 as c_int, 64 as c_int);
    let mut b = vec![0.0; 6];
    // Full U of a non-square matrix is not provided: reported as an illegal jobz.
    unsafe {
        dgesdd_(
            &c(b'A'),
            &three,
            &n,
            b.as_mut_ptr(),
            &three,
            s.as_mut_ptr(),
            u.as_mut_ptr(),
            &three,
            vt.as_mut_ptr(),
            &n,
            work.as_mut_ptr(),
            &lwork,
            std::ptr::null_mut(),
            &mut info,
        )
    };
    assert_eq!(info, -1);
}
