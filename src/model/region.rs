//! A region of behaviours: an interval for every probability `p(a|q)` in the scenario's layout.
//!
//! Figures computed from a behaviour hold for every behaviour in its region, never for one
//! point: a behaviour typed to a tolerance stands for every behaviour within that tolerance,
//! a strategy's Born-rule behaviour for every behaviour within its evaluation error, and
//! measured counts for every behaviour in their confidence region (the chance that the true
//! behaviour lies outside is [`BehaviourRegion::error`]). The relaxations impose the intervals
//! as constraints, so slightly signalling data need no projection: the region simply has to
//! contain a quantum behaviour, which the relaxation checks.

use serde::Serialize;

use crate::error::{Error, Result};

/// Intervals `[lower, upper]` for each `p[q * joint_answers + a]`, with the point estimate at
/// their centre and what the region stands for.
#[derive(Debug, Clone, Serialize)]
pub struct BehaviourRegion {
    /// The point estimate (the given behaviour, or the observed frequencies).
    pub centre: Vec<f64>,
    /// Lower end of each probability's interval.
    pub lower: Vec<f64>,
    /// Upper end of each probability's interval.
    pub upper: Vec<f64>,
    /// The probability that the devices' true behaviour lies outside the region (0 when the
    /// region is a tolerance, the confidence region's error for counts).
    pub error: f64,
    /// How the region was made, in words, for reports.
    pub description: String,
}

impl BehaviourRegion {
    /// Every behaviour within `half_width` of `centre` in each probability (a typed behaviour's
    /// tolerance, or a strategy's evaluation error).
    pub fn around(centre: &[f64], half_width: f64, description: String) -> Result<Self> {
        if !(half_width >= 0.0 && half_width.is_finite()) {
            return Err(Error::InvalidArgument(format!(
                "a region's half-width must be a non-negative number, got {half_width}"
            )));
        }
        if centre.iter().any(|v| !v.is_finite()) {
            return Err(Error::InvalidArgument(
                "the behaviour has a non-finite probability".into(),
            ));
        }
        Ok(BehaviourRegion {
            centre: centre.to_vec(),
            lower: centre.iter().map(|v| v - half_width).collect(),
            upper: centre.iter().map(|v| v + half_width).collect(),
            error: 0.0,
            description,
        })
    }

    /// The largest half-width of any interval.
    pub fn largest_half_width(&self) -> f64 {
        self.lower
            .iter()
            .zip(&self.upper)
            .map(|(l, u)| (u - l) / 2.0)
            .fold(0.0, f64::max)
    }

    /// Whether `p` lies in the region (entry by entry, ends included).
    pub fn contains(&self, p: &[f64]) -> bool {
        p.len() == self.lower.len()
            && p.iter()
                .zip(self.lower.iter().zip(&self.upper))
                .all(|(v, (l, u))| *l <= *v && *v <= *u)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_tolerance_region_contains_its_centre_and_nothing_beyond_the_tolerance() {
        let r = BehaviourRegion::around(&[0.25, 0.75], 1e-6, "t".into()).unwrap();
        assert!(r.contains(&[0.25, 0.75]));
        assert!(r.contains(&[0.25 + 9e-7, 0.75 - 9e-7]));
        assert!(!r.contains(&[0.25 + 2e-6, 0.75]));
        assert!((r.largest_half_width() - 1e-6).abs() < 1e-15);
        assert!(BehaviourRegion::around(&[0.5], f64::NAN, "t".into()).is_err());
        assert!(BehaviourRegion::around(&[f64::INFINITY], 0.0, "t".into()).is_err());
    }
}
