//! # Physical constants and laws shared by every stage
//!
//! Values from outside the project that more than one stage needs, each with
//! its source: the relaxation law of the web's charge, the breakdown of air,
//! and Paschen's law for the gap that opens where the web leaves a roller
//! (the gap-discharge check of the conductors' issue builds on it). Stages
//! import them from here, never from the validator.
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
//! | p, d | gas pressure, gap | Pa, m |
//! | A, B, γ | Townsend's constants of air, secondary emission | 1/(m·Pa), V/(m·Pa), 1 |
//!
//! ## Reference
//! Paschen's law with A = 15 /(cm·Torr), B = 365 V/(cm·Torr), γ = 0.01:
//! high-voltage texts (E. M. Bazelyan, Yu. P. Raizer, *Spark Discharge*);
//! FACTS.md "Paschen's law". Air breakdown: textbook value for uniform fields at 1 atm in cm gaps
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

/// Townsend's coefficient A of air [1/(m·Pa)]: 15 /(cm·Torr) (high-voltage
/// texts, e.g. E. M. Bazelyan and Yu. P. Raizer, *Spark Discharge*; FACTS.md
/// "Paschen's law", confirmed). 1 Torr = 101325/760 Pa.
pub const PASCHEN_A: f64 = 15.0 * 100.0 / TORR;

/// Townsend's coefficient B of air [V/(m·Pa)]: 365 V/(cm·Torr) (same source).
pub const PASCHEN_B: f64 = 365.0 * 100.0 / TORR;

/// Secondary-emission coefficient γ of the cathode in air (same source).
pub const PASCHEN_GAMMA: f64 = 0.01;

/// One torr [Pa].
pub const TORR: f64 = 101_325.0 / 760.0;

/// Atmospheric pressure [Pa].
pub const ATMOSPHERE: f64 = 101_325.0;

/// Breakdown voltage of a uniform air gap by Paschen's law [V]:
///
/// $$ V_B = \frac{B\,pd}{\ln(A\,pd) - \ln\ln(1 + 1/γ)} $$
///
/// with p the pressure [Pa], d the gap [m] and A, B, γ the constants above.
/// `None` left of the asymptote (A·pd ≤ ln(1 + 1/γ)), where the law gives no
/// breakdown. Assumes a uniform field and Townsend breakdown; valid from a
/// few µm to a few cm at atmospheric pressure (FACTS.md).
pub fn paschen_voltage(gap: f64, pressure: f64) -> Option<f64> {
    let pd = pressure * gap;
    let denom = (PASCHEN_A * pd).ln() - (1.0 + 1.0 / PASCHEN_GAMMA).ln().ln();
    (pd > 0.0 && denom > 0.0).then(|| PASCHEN_B * pd / denom)
}

/// The minimum of Paschen's curve, (pd_min [Pa·m], V_min [V]): pd_min =
/// e·ln(1 + 1/γ)/A and V_min = e·B·ln(1 + 1/γ)/A, from dV_B/d(pd) = 0.
pub fn paschen_minimum() -> (f64, f64) {
    let k = (1.0 + 1.0 / PASCHEN_GAMMA).ln();
    let e = std::f64::consts::E;
    (e * k / PASCHEN_A, e * PASCHEN_B * k / PASCHEN_A)
}

/// The net density [C/m²] at which the gap `gap` [m] between a web of
/// thickness `thickness` [m] and relative permittivity `eps_r` and the
/// grounded roller it leaves breaks down at atmospheric pressure:
/// σ = ε0·V_B(g)/(g + t/εr), from the gap voltage V_g = σ·(g + t/εr)/ε0 of a
/// charged sheet over a grounded plane while g ≪ the web width (FACTS.md,
/// derived). `None` where Paschen's law gives no breakdown.
pub fn gap_breakdown_sigma(gap: f64, thickness: f64, eps_r: f64) -> Option<CoulombsPerSquareMeter> {
    paschen_voltage(gap, ATMOSPHERE).map(|v| EPS0 * v / (gap + thickness / eps_r))
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

    #[test]
    fn paschen_minimum_is_where_the_curve_is_lowest_and_near_the_measured_one() {
        let (pd_min, v_min) = paschen_minimum();
        // The closed-form minimum is the curve's own minimum.
        let v = |pd: f64| paschen_voltage(pd / ATMOSPHERE, ATMOSPHERE).unwrap();
        assert!((v(pd_min) - v_min).abs() < 1e-9 * v_min);
        assert!(v(pd_min * 0.9) > v_min && v(pd_min * 1.1) > v_min);
        // Measured minimum in air about 327 V at about 7.5 µm at 1 atm
        // (textbook value, FACTS.md); the three-constant law gives 305 V at
        // 11 µm: within 10 % in voltage, within a factor 1.5 in gap.
        assert!((v_min - 327.0).abs() < 0.1 * 327.0, "{v_min}");
        let d_min = pd_min / ATMOSPHERE;
        assert!(d_min > 7.5e-6 / 1.5 && d_min < 7.5e-6 * 1.5, "{d_min}");
    }

    #[test]
    fn paschen_agrees_with_the_empirical_uniform_field_breakdown() {
        // Empirical V[kV] = 24.22·x + 6.08·√x, x = d in cm at 20 °C, 1 atm
        // (Bazelyan & Raizer; Naidu & Kamaraju; FACTS.md, confirmed from
        // 0.1 mm to a few cm). Townsend's three-constant law is coarser:
        // within 25 % over 0.1 mm to 1 cm.
        for d in [1e-4f64, 1e-3, 1e-2] {
            let x = d * 100.0;
            let empirical = (24.22 * x + 6.08 * x.sqrt()) * 1e3;
            let v = paschen_voltage(d, ATMOSPHERE).unwrap();
            assert!(
                (v / empirical - 1.0).abs() < 0.25,
                "{d}: {v} vs {empirical}"
            );
        }
        // No breakdown left of the asymptote.
        assert_eq!(paschen_voltage(1e-7, ATMOSPHERE), None);
    }

    #[test]
    fn gap_breakdown_density_falls_with_the_gap() {
        // FACTS.md (derived from the empirical fit, thin web): 38 µC/m² at
        // 1 mm and 27 µC/m² at 10 mm; Paschen's law within 25 %.
        let s1 = gap_breakdown_sigma(1e-3, 0.0, 1.0).unwrap();
        let s10 = gap_breakdown_sigma(1e-2, 0.0, 1.0).unwrap();
        assert!((s1 / 38e-6 - 1.0).abs() < 0.25, "{s1}");
        assert!((s10 / 27e-6 - 1.0).abs() < 0.25, "{s10}");
        assert!(s1 > s10);
        // A web's own thickness adds t/εr to the gap: a lower density breaks it.
        assert!(gap_breakdown_sigma(1e-3, 30e-6, 2.2).unwrap() < s1);
    }
}
