//! How the `charge:` entries of a line combine, shared by the validator
//! (which checks the densities they produce), the charge stage and the
//! planner.
//!
//! An entry either sets the centreline density leaving its node, or adds to
//! the density arriving there, which relaxes on the way from the previous
//! entry: σ_k = σ_set, or σ_k = σ_{k−1}·exp(−(s_k − s_{k−1})/λ) + σ_add
//! (σ [C/m²], s arc length [m], λ relaxation length [m]; see
//! [`crate::physics::decay`]).

use super::{ChargeEntry, ChargeMode};
use crate::physics::decay;
use crate::units::{CoulombsPerSquareMeter, Meters};

impl ChargeMode {
    /// The density leaving an entry of this mode with density `sigma`
    /// [C/m²], given the density `arriving` there [C/m²].
    pub fn apply(
        self,
        arriving: CoulombsPerSquareMeter,
        sigma: CoulombsPerSquareMeter,
    ) -> CoulombsPerSquareMeter {
        match self {
            ChargeMode::Set => sigma,
            ChargeMode::Add => arriving + sigma,
        }
    }
}

/// The centreline density leaving each entry's place, in the order given
/// (entries must be sorted by arc length): set, or carried in and added to.
pub fn segment_amplitudes(entries: &[ChargeEntry], lambda: Meters) -> Vec<CoulombsPerSquareMeter> {
    let mut out = Vec::with_capacity(entries.len());
    let mut sigma = 0.0;
    let mut s_prev = 0.0;
    for e in entries {
        sigma = e.mode.apply(sigma * decay(e.s - s_prev, lambda), e.sigma);
        s_prev = e.s;
        out.push(sigma);
    }
    out
}
#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::ChargeMode;

    fn entry(s: f64, mode: ChargeMode, sigma: f64) -> ChargeEntry {
        ChargeEntry {
            at: format!("s={s}"),
            s,
            mode,
            sigma,
            tolerance: 0.0,
            yaml_path: String::new(),
        }
    }

    /// Hand arithmetic: 10 µC/m² relaxing over one decay length is 10/e; adding
    /// 2 gives 10/e + 2; a later `sigma:` overrides what flows in.
    #[test]
    fn set_add_and_relax_by_hand() {
        let e = [
            entry(0.0, ChargeMode::Set, 10e-6),
            entry(2.0, ChargeMode::Add, 2e-6),
            entry(3.0, ChargeMode::Set, 1e-6),
        ];
        let a = segment_amplitudes(&e, 2.0);
        assert!((a[0] - 10e-6).abs() < 1e-18);
        assert!((a[1] - (10e-6 / std::f64::consts::E + 2e-6)).abs() < 1e-18);
        assert!((a[2] - 1e-6).abs() < 1e-18);
    }

    #[test]
    fn infinite_relaxation_carries_charge_unchanged() {
        let e = [
            entry(0.0, ChargeMode::Set, 5e-6),
            entry(100.0, ChargeMode::Add, 1e-6),
        ];
        let a = segment_amplitudes(&e, f64::INFINITY);
        assert_eq!(a[1], 6e-6);
    }
}
