//! Special functions and tail bounds the statistics need (no dependency): ln Γ, the regularised
//! incomplete beta function, χ² and binomial upper tails, and the Clopper–Pearson bound.

/// ln Γ(x), Lanczos approximation (g = 7, 9 terms), accurate to about 1e-15 for x > 0.
pub fn ln_gamma(x: f64) -> f64 {
    const G: [f64; 9] = [
        0.999_999_999_999_809_9,
        676.520_368_121_885_1,
        -1_259.139_216_722_402_8,
        771.323_428_777_653_1,
        -176.615_029_162_140_6,
        12.507_343_278_686_905,
        -0.138_571_095_265_720_12,
        9.984_369_578_019_572e-6,
        1.505_632_735_149_311_6e-7,
    ];
    if x < 0.5 {
        return (std::f64::consts::PI / (std::f64::consts::PI * x).sin()).ln() - ln_gamma(1.0 - x);
    }
    let x = x - 1.0;
    let mut a = G[0];
    let t = x + 7.5;
    for (i, g) in G.iter().enumerate().skip(1) {
        a += g / (x + i as f64);
    }
    0.5 * (2.0 * std::f64::consts::PI).ln() + (x + 0.5) * t.ln() - t + a.ln()
}

/// Continued fraction of the incomplete beta function (modified Lentz).
fn beta_fraction(a: f64, b: f64, x: f64) -> f64 {
    let tiny = 1e-300;
    let guard = |v: f64| if v.abs() < tiny { tiny } else { v };
    let (qab, qap, qam) = (a + b, a + 1.0, a - 1.0);
    let mut c = 1.0;
    let mut d = 1.0 / guard(1.0 - qab * x / qap);
    let mut h = d;
    // One Lentz update with coefficient `aa`; returns the factor applied to h.
    let step = |aa: f64, c: &mut f64, d: &mut f64| {
        *d = 1.0 / guard(1.0 + aa * *d);
        *c = guard(1.0 + aa / *c);
        *d * *c
    };
    for m in 1..10_000 {
        let m = m as f64;
        let m2 = 2.0 * m;
        h *= step(m * (b - m) * x / ((qam + m2) * (a + m2)), &mut c, &mut d);
        let del = step(
            -(a + m) * (qab + m) * x / ((a + m2) * (qap + m2)),
            &mut c,
            &mut d,
        );
        h *= del;
        if (del - 1.0).abs() < 1e-15 {
            break;
        }
    }
    h
}

/// Regularised incomplete beta function I_x(a, b).
pub fn incomplete_beta(a: f64, b: f64, x: f64) -> f64 {
    if x <= 0.0 {
        return 0.0;
    }
    if x >= 1.0 {
        return 1.0;
    }
    let front =
        (ln_gamma(a + b) - ln_gamma(a) - ln_gamma(b) + a * x.ln() + b * (1.0 - x).ln()).exp();
    if x < (a + 1.0) / (a + b + 2.0) {
        front * beta_fraction(a, b, x) / a
    } else {
        1.0 - front * beta_fraction(b, a, 1.0 - x) / b
    }
}

/// Upper tail of the χ² distribution, P(X ≥ x) for `dof` degrees of freedom: the regularised
/// upper incomplete gamma Q(dof/2, x/2), by its series below a + 1 and Lentz's continued
/// fraction above (the standard pair of expansions).
pub fn chi_square_upper_tail(x: f64, dof: f64) -> f64 {
    if x <= 0.0 || dof <= 0.0 {
        return 1.0;
    }
    let (a, z) = (dof / 2.0, x / 2.0);
    let log_front = a * z.ln() - z - ln_gamma(a);
    if z < a + 1.0 {
        // P(a, z) = e^{-z} z^a / Γ(a) Σ z^n / (a (a+1) ... (a+n)).
        let (mut term, mut sum, mut ap) = (1.0 / a, 1.0 / a, a);
        for _ in 0..10_000 {
            ap += 1.0;
            term *= z / ap;
            sum += term;
            if term.abs() < sum.abs() * 1e-16 {
                break;
            }
        }
        (1.0 - sum * log_front.exp()).clamp(0.0, 1.0)
    } else {
        let tiny = 1e-300;
        let mut b = z + 1.0 - a;
        let mut c = 1.0 / tiny;
        let mut d = 1.0 / b;
        let mut h = d;
        for i in 1..10_000 {
            let an = -(i as f64) * (i as f64 - a);
            b += 2.0;
            d = an * d + b;
            if d.abs() < tiny {
                d = tiny;
            }
            c = b + an / c;
            if c.abs() < tiny {
                c = tiny;
            }
            d = 1.0 / d;
            let del = d * c;
            h *= del;
            if (del - 1.0).abs() < 1e-16 {
                break;
            }
        }
        (log_front.exp() * h).clamp(0.0, 1.0)
    }
}

/// P(X ≥ k) for X ~ Binomial(n, p).
pub fn binomial_upper_tail(n: u64, k: u64, p: f64) -> f64 {
    if k == 0 {
        1.0
    } else if k > n {
        0.0
    } else {
        incomplete_beta(k as f64, (n - k + 1) as f64, p)
    }
}

/// Clopper–Pearson one-sided lower bound: the p with P(X ≥ k | p) = α (0 when k = 0).
pub fn clopper_pearson_lower(n: u64, k: u64, alpha: f64) -> f64 {
    if k == 0 {
        return 0.0;
    }
    let (mut lo, mut hi) = (0.0, k as f64 / n as f64);
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if binomial_upper_tail(n, k, mid) < alpha {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    lo
}

#[cfg(test)]
#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn special_functions_match_known_values() {
        // ln Γ(5) = ln 24; Γ(1/2) = √π.
        assert!((ln_gamma(5.0) - 24f64.ln()).abs() < 1e-13);
        assert!((ln_gamma(0.5) - std::f64::consts::PI.sqrt().ln()).abs() < 1e-13);
        // P(X ≥ 2) for Binomial(3, 1/2) = 4/8.
        assert!((binomial_upper_tail(3, 2, 0.5) - 0.5).abs() < 1e-12);
        // P(X ≥ 8) for Binomial(10, 0.3), summed by hand.
        let direct: f64 = (8..=10u64)
            .map(|k| {
                let c = (1..=k).fold(1.0, |acc, i| acc * (10 - k + i) as f64 / i as f64);
                c * 0.3f64.powi(k as i32) * 0.7f64.powi(10 - k as i32)
            })
            .sum();
        assert!((binomial_upper_tail(10, 8, 0.3) - direct).abs() < 1e-13);
        // χ² upper tails: with 2 degrees of freedom P(X ≥ x) = e^{−x/2}; with 1, P(X ≥ 3.841459)
        // = 0.05 (the familiar 95% point, from memory).
        for x in [0.1, 1.0, 5.0, 30.0] {
            assert!((chi_square_upper_tail(x, 2.0) - (-x / 2.0f64).exp()).abs() < 1e-12);
        }
        assert!((chi_square_upper_tail(3.841459, 1.0) - 0.05).abs() < 1e-6);
        // Clopper–Pearson: all n successes give α^(1/n).
        assert!((clopper_pearson_lower(20, 20, 0.05) - 0.05f64.powf(1.0 / 20.0)).abs() < 1e-10);
    }
}
