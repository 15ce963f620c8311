//! # Physical constants and laws shared by every stage
//!
//! Values from outside the project that more than one stage needs, each with
//! its source, and the relaxation law of the web's charge. Stages import them
//! from here, never from the validator.
//!
//! $$ σ(s) = σ(s_0)\,\exp\!\left(-\frac{s - s_0}{λ}\right), \qquad λ = v\,τ, \quad τ = ε_0 ε_r ρ $$
//!
//! | symbol | meaning | unit |
//! | --- | --- | --- |
//! | E_b | breakdown field of air | V/m |
//! | ε0 | vacuum permittivity ([`crate::units::EPS0`], CODATA 2018) | F/m |
//! | λ | relaxation length of the moving web | m |
//! | s | arc length along the web path | m |
//!
//! ## Reference
//! Air breakdown: textbook value for uniform fields at 1 atm in cm gaps
//! (FACTS.md "Air breakdown"). Relaxation: the continuity equation with
//! Ohm's law (D. J. Griffiths, *Introduction to Electrodynamics*, 4th ed.,
//! §7.1).

use crate::units::{CoulombsPerSquareMeter, EPS0, Meters, VoltsPerMeter};

/// Breakdown field of air, uniform field, 1 atm, cm gaps [V/m]
/// (textbook value; FACTS.md "Air breakdown").
pub const AIR_BREAKDOWN_FIELD: VoltsPerMeter = 3.0e6;

/// Largest net density an isolated thin sheet can hold before the air breaks
/// down, 2·ε0·E_b ≈ 5.3e-5 C/m² [C/m²] (derived, FACTS.md).
pub fn isolated_sheet_limit() -> CoulombsPerSquareMeter {
    2.0 * EPS0 * AIR_BREAKDOWN_FIELD
}

/// Relaxation factor exp(−Δs/λ) over a stretch Δs [m] of web with
/// relaxation length λ [m]; exactly 1 for an infinite λ.
pub fn decay(ds: Meters, lambda: Meters) -> f64 {
    if lambda.is_infinite() {
        1.0
    } else {
        (-ds / lambda).exp()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn isolated_sheet_limit_is_twice_eps0_eb() {
        // FACTS.md: 2·ε0·3 MV/m ≈ 5.3e-5 C/m² (derived).
        assert!((isolated_sheet_limit() - 5.3125e-5).abs() < 1e-8);
    }

    #[test]
    fn decay_is_one_at_infinite_length_and_e_inverse_at_lambda() {
        assert_eq!(decay(10.0, f64::INFINITY), 1.0);
        assert!((decay(2.0, 2.0) - (-1.0f64).exp()).abs() < 1e-15);
    }
}
