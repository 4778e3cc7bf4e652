//! How numbers are written for people: ten decimals without trailing zeros (bounds rounded on
//! their side: `num_up`, `num_down`), exact
//! fractions where a value is one, counts too large for integers, bits. Used by every text
//! renderer and by the notes the library writes.

/// A value with ten significant digits.
pub fn num(x: f64) -> String {
    if x == 0.0 {
        return "0".into();
    }
    if !x.is_finite() {
        return format!("{x}");
    }
    let s = format!("{:.10}", x);
    let s = s.trim_end_matches('0').trim_end_matches('.');
    if s == "-0" {
        "0".into()
    } else {
        s.to_string()
    }
}

/// An upper bound with at most ten decimals, rounded up: never below `x` (exactly, by rational
/// arithmetic), unless `x` is within four units in its last place of a ten-decimal number,
/// which is then written (a distance far inside the error terms every verified bound is
/// rounded by).
pub fn num_up(x: f64) -> String {
    directed(x, true)
}

/// A lower bound with at most ten decimals, rounded down (see [`num_up`]).
pub fn num_down(x: f64) -> String {
    directed(x, false)
}

fn directed(x: f64, up: bool) -> String {
    use num_bigint::BigInt;
    use num_rational::BigRational;
    if x == 0.0 || !x.is_finite() {
        return num(x);
    }
    let nearest = num(x);
    if let Ok(v) = nearest.parse::<f64>() {
        let ulp = (x.next_up() - x).abs().max((x - x.next_down()).abs());
        if (v - x).abs() <= 4.0 * ulp {
            return nearest;
        }
    }
    let Some(q) = BigRational::from_float(x) else {
        return nearest;
    };
    let scale = BigInt::from(10u64).pow(10);
    let scaled = q * BigRational::from_integer(scale.clone());
    let n = if up { scaled.ceil() } else { scaled.floor() }.to_integer();
    let negative = n < BigInt::from(0);
    let digits = if negative { -n.clone() } else { n.clone() }.to_string();
    let digits = format!("{digits:0>11}");
    let (int, frac) = digits.split_at(digits.len() - 10);
    let frac = frac.trim_end_matches('0');
    let body = if frac.is_empty() {
        int.to_string()
    } else {
        format!("{int}.{frac}")
    };
    if negative && body != "0" {
        format!("-{body}")
    } else {
        body
    }
}

/// The value, plus `= p/q` when it is within 1e-12 of a fraction with a small denominator
/// (exact values of games with rational probabilities are such fractions).
pub fn with_fraction(x: f64) -> String {
    match rational_hint(x) {
        Some((p, q)) if q > 1 => format!("{}  (= {p}/{q})", num(x)),
        _ => num(x),
    }
}

/// `(p, q)` when `x` is within 1e-12 of p/q with q ≤ 1000 (the smallest such q).
pub fn rational_hint(x: f64) -> Option<(i64, i64)> {
    if !x.is_finite() || x.abs() > 1e6 {
        return None;
    }
    (1..=1000i64).find_map(|q| {
        let p = (x * q as f64).round();
        ((x - p / q as f64).abs() < 1e-12).then_some((p as i64, q))
    })
}

/// A number with `digits` significant digits, trailing zeros dropped.
pub fn num_sig(x: f64, digits: usize) -> String {
    if x == 0.0 || !x.is_finite() {
        return num(x);
    }
    let magnitude = x.abs().log10().floor() as i64;
    let decimals = (digits as i64 - 1 - magnitude).max(0) as usize;
    let s = format!("{x:.decimals$}");
    let s = if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    };
    if s == "-0" {
        "0".into()
    } else {
        s
    }
}

/// An exact rational as `n/d`, or `n` when the denominator is 1.
pub fn fraction_text(q: &num_rational::BigRational) -> String {
    if num_traits::One::is_one(q.denom()) {
        q.numer().to_string()
    } else {
        format!("{}/{}", q.numer(), q.denom())
    }
}

/// A count that may be astronomically large: exact up to 10^15, then `m×10^e`.
pub fn count_text(x: f64) -> String {
    if x < 1e15 {
        format!("{}", x.round() as u64)
    } else {
        let e = x.log10().floor();
        format!("{}×10^{}", num_sig(x / 10f64.powf(e), 4), e as i64)
    }
}

/// `1 bit`, `0.5 bits`.
pub fn bits_text(x: f64) -> String {
    // Certified bits are lower bounds: written down.
    with_bits(num_down(x))
}

/// An upper bound in bits (an error-correction term), written up.
pub fn bits_up_text(x: f64) -> String {
    with_bits(num_up(x))
}

fn with_bits(n: String) -> String {
    if n == "1" {
        "1 bit".into()
    } else {
        format!("{n} bits")
    }
}

/// Fixed six decimals, with a negative zero shown as 0.
pub fn fixed6(x: f64) -> String {
    let s = format!("{x:.6}");
    if s == "-0.000000" {
        "0.000000".into()
    } else {
        s
    }
}

/// Serialises a count that may exceed 64 bits (a symmetry group's order): as a JSON number up to
/// 2⁶⁴ − 1, beyond that as a string of its exact decimal digits, and a count that saturated
/// (`u128::MAX`, the product overflowed) as the string `"at least 3.4e38"`. JSON numbers beyond
/// 64 bits are not representable in serde_json without loss, and an error here once turned a
/// whole report into an error object printed with exit 0.
pub(crate) fn serialize_count<S: serde::Serializer>(
    count: &u128,
    serializer: S,
) -> Result<S::Ok, S::Error> {
    match u64::try_from(*count) {
        Ok(small) => serializer.serialize_u64(small),
        Err(_) if *count == u128::MAX => serializer.serialize_str("at least 3.4e38"),
        Err(_) => serializer.serialize_str(&count.to_string()),
    }
}

#[cfg(test)]
mod directed_tests {
    use super::*;

    #[test]
    fn bounds_are_written_on_their_side() {
        // 0.85355339114…: the upper bound is written up, the lower bound down.
        let x = 0.853_553_391_14;
        assert_eq!(num_up(x), "0.8535533912");
        assert_eq!(num_down(x), "0.8535533911");
        assert!(num_up(x).parse::<f64>().unwrap() >= x);
        assert!(num_down(x).parse::<f64>().unwrap() <= x);
        // Values a few units in the last place from a short decimal stay short.
        assert_eq!(num_up(0.1), "0.1");
        assert_eq!(num_down(0.75), "0.75");
        assert_eq!(num_down(-0.123_456_789_012_3), "-0.1234567891");
        assert_eq!(num_up(-0.123_456_789_012_3), "-0.123456789");
        assert_eq!(num_up(2.0), "2");
    }
}
