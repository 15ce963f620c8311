//! # The range of a finding's value, and the verdict it supports
//!
//! Every finding carries [`Bounds`]: the least and greatest value its rule
//! can take over the box of uncertain inputs (the charge segments' ranges
//! from the readings' tolerances and the `charge:` entries' tolerances; see
//! `crate::uncertainty`), how the range was obtained ([`BoundBasis`]), and
//! how much of its half-width each input accounts for ([`Share`]). A
//! finding starts with the point range of its value; the uncertainty stage
//! widens it.
//!
//! ## Verdict over a range
//!
//! With x_lo ≤ x ≤ x_hi and the rule's limits,
//!
//! - the verdict of x_lo and of x_hi agree: that verdict (**certain**);
//! - x_hi reaches the failure limit and x_lo does not: **uncertain**, counted
//!   as a failure for the exit code (conservative: a value that may exceed
//!   the limit is not called a pass);
//! - the range straddles only the warning limit: **warn** (the worse of the
//!   two, again conservative; a warning never changes the exit code).
//!
//! | symbol | meaning | unit |
//! | --- | --- | --- |
//! | x, x_lo, x_hi | value and its bounds | the rule's |

use super::finding::Verdict;

/// How a finding's range was obtained.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum BoundBasis {
    /// No input of the analysis is uncertain: the range is the value.
    NoUncertainInput,
    /// The value does not depend on the web's charge (geometry, material
    /// or settings only): the range is the value.
    ChargeIndependent,
    /// The value is a magnitude linear in the segment amplitudes (|E|, |V|,
    /// a meter reading, a density, a current ratio): x(a₀ + Δ) lies within
    /// x(a₀) ± Σ_k |Δ_k|·x(e_k), the triangle inequality over each
    /// segment's unit contribution (exact when one segment alone is charged
    /// and uncertain, conservative otherwise).
    Linear,
    /// The value is ½CV² with V a magnitude linear in the amplitudes: the
    /// bounds of √x by [`BoundBasis::Linear`], squared (monotone).
    Quadratic,
    /// A passive device's onset: the ranges hold every device's state as
    /// the fit found it, so this check keeps its value.
    DeviceState,
    /// The readings' own check (reading against the fitted charge): the
    /// reading's tolerance is already in the comparison.
    ReadingsCheck,
    /// The value is neither constant nor homogeneous in the charge (for
    /// instance a conductor with a given net charge, or a passive device's
    /// onset ratio): no bound was derived, so the range is open above and
    /// the verdict is uncertain unless the value already fails.
    NotBounded,
}

impl BoundBasis {
    /// The keyword used in JSON and CSV.
    pub fn key(self) -> &'static str {
        match self {
            BoundBasis::NoUncertainInput => "no-uncertain-input",
            BoundBasis::ChargeIndependent => "charge-independent",
            BoundBasis::Linear => "linear",
            BoundBasis::Quadratic => "quadratic",
            BoundBasis::DeviceState => "device-state",
            BoundBasis::ReadingsCheck => "readings-check",
            BoundBasis::NotBounded => "not-bounded",
        }
    }
}

/// One input's part of a finding's half-width.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Share {
    /// Index into the uncertainty stage's inputs (one per charge segment).
    pub input: usize,
    /// How far the value can move across that input's range, from its
    /// nominal value, at most [unit of the value].
    pub width: f64,
}

/// A finding's range over the box of uncertain inputs.
#[derive(Debug, Clone, PartialEq)]
pub struct Bounds {
    /// Least value [unit of the value].
    pub low: f64,
    /// Greatest value [unit of the value] (may be +∞ for
    /// [`BoundBasis::NotBounded`]).
    pub high: f64,
    /// How the range was obtained.
    pub basis: BoundBasis,
    /// Each uncertain input's share of the half-width, largest first
    /// (empty for a point range).
    pub shares: Vec<Share>,
}

impl Bounds {
    /// The point range [x, x] of a value with no uncertain input.
    pub fn exact(value: f64) -> Bounds {
        Bounds {
            low: value,
            high: value,
            basis: BoundBasis::NoUncertainInput,
            shares: Vec::new(),
        }
    }

    /// Whether the range is a single value.
    pub fn is_point(&self) -> bool {
        self.low == self.high
    }
}

/// The verdict a range supports against optional warning and failure
/// limits (see the module's rules): `verdict(x)` is fail at or above
/// `fail`, warn at or above `warn`, else pass.
pub fn judge(bounds: &Bounds, warn: Option<f64>, fail: Option<f64>) -> Verdict {
    let lo = super::verdict_for(bounds.low, warn, fail);
    let hi = super::verdict_for(bounds.high, warn, fail);
    if lo == hi {
        hi
    } else if hi == Verdict::Fail {
        Verdict::Uncertain
    } else {
        hi
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn range(low: f64, high: f64) -> Bounds {
        Bounds {
            low,
            high,
            basis: BoundBasis::Linear,
            shares: Vec::new(),
        }
    }

    #[test]
    fn ranges_on_one_side_of_every_limit_are_certain() {
        assert_eq!(
            judge(&range(1.0, 1.5), Some(2.0), Some(10.0)),
            Verdict::Pass
        );
        assert_eq!(
            judge(&range(3.0, 9.0), Some(2.0), Some(10.0)),
            Verdict::Warn
        );
        assert_eq!(
            judge(&range(10.0, 12.0), Some(2.0), Some(10.0)),
            Verdict::Fail
        );
        assert_eq!(
            judge(&Bounds::exact(10.0), Some(2.0), Some(10.0)),
            Verdict::Fail
        );
    }

    #[test]
    fn straddling_the_failure_limit_is_uncertain_and_the_warning_limit_warns() {
        assert_eq!(
            judge(&range(9.0, 11.0), Some(2.0), Some(10.0)),
            Verdict::Uncertain
        );
        assert_eq!(
            judge(&range(1.0, 11.0), Some(2.0), Some(10.0)),
            Verdict::Uncertain
        );
        assert_eq!(
            judge(&range(1.0, 3.0), Some(2.0), Some(10.0)),
            Verdict::Warn
        );
        // A rule with a warning limit only: straddling it warns, never fails.
        assert_eq!(judge(&range(1.0, 3.0), Some(2.0), None), Verdict::Warn);
        // Open above: uncertain unless already failing.
        assert_eq!(
            judge(&range(1.0, f64::INFINITY), None, Some(10.0)),
            Verdict::Uncertain
        );
        assert_eq!(
            judge(&range(11.0, f64::INFINITY), None, Some(10.0)),
            Verdict::Fail
        );
    }
}
