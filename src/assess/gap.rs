//! # Gap discharge where the web leaves a grounded roller
//!
//! Assessment stage, the numbers behind the `gap_discharge` check. As the
//! web leaves a grounded roller the air gap g between web and roller grows
//! from zero. While g is much smaller than the web's width, the web and the
//! roller surface form a charged sheet over a grounded plane, and the net
//! density σ of the web puts the voltage
//!
//! $$ V_g(g) = \frac{σ\,(g + t/ε_r)}{ε_0} $$
//!
//! across the air gap (FACTS.md "Paschen's law", derived). The gap breaks
//! down when V_g reaches Paschen's breakdown voltage V_B(g)
//! ([`crate::physics::paschen_voltage`]), that is when
//!
//! $$ σ \ge σ_B(g) = \frac{ε_0\, V_B(g)}{g + t/ε_r} $$
//!
//! ([`crate::physics::gap_breakdown_sigma`]). A web leaving the roller
//! passes through every gap from 0 upwards, so gap discharges must occur
//! when σ reaches the lowest σ_B over the gaps it passes; they then limit the
//! charge the web can carry off the roller. The gaps scanned run from
//! [`GAP_MIN`] = 5 µm (just right of Paschen's asymptote at 1 atm, about
//! 4 µm) to [`GAP_MAX`] = 10 mm (beyond which g ≪ web width no longer holds
//! for narrow webs and the field is no longer uniform), on [`GAP_SAMPLES`]
//! log-spaced gaps, the lowest refined by golden-section search.
//!
//! | symbol | meaning | unit |
//! | --- | --- | --- |
//! | σ | net density of the web at the start of the span | C/m² |
//! | g | air gap between web and roller | m |
//! | t, ε_r | web thickness, relative permittivity | m, 1 |
//! | V_g, V_B | gap voltage, Paschen breakdown voltage at 1 atm | V |
//! | σ_B | density that breaks gap g down | C/m² |
//!
//! Assumptions: uniform field in the gap (sheet over a plane, g ≪ width, the
//! roller's curvature neglected), air at 1 atm and 20 °C, Townsend breakdown
//! with the constants of [`crate::physics`], the roller at 0 V, and the web's
//! charge all on the face away from the roller (the t/εr term: the web's own
//! layer in series with the gap).
//!
//! ## Reference
//! Paschen's law with A = 15 /(cm·Torr), B = 365 V/(cm·Torr), γ = 0.01
//! (high-voltage texts, E. M. Bazelyan and Yu. P. Raizer, *Spark
//! Discharge*; constants cited in `physics.rs`); the gap voltage of a sheet
//! over a grounded plane by Gauss's law (FACTS.md, derived).

use crate::physics::gap_breakdown_sigma;
use crate::units::{CoulombsPerSquareMeter, Meters};

/// Smallest gap scanned [m]: just right of Paschen's asymptote at 1 atm.
pub const GAP_MIN: Meters = 5e-6;

/// Largest gap scanned [m].
pub const GAP_MAX: Meters = 10e-3;

/// Number of log-spaced gaps scanned.
pub const GAP_SAMPLES: usize = 400;

/// The lowest breakdown density over the gaps scanned and its gap.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LowestBreakdown {
    /// The lowest σ_B [C/m²].
    pub sigma: CoulombsPerSquareMeter,
    /// The gap where it is lowest [m].
    pub gap: Meters,
}

/// The i-th of the log-spaced gaps [m].
fn gap_at(i: usize) -> Meters {
    let f = i as f64 / (GAP_SAMPLES - 1) as f64;
    GAP_MIN * (GAP_MAX / GAP_MIN).powf(f)
}

/// σ_B(g), infinite where Paschen's law gives no breakdown.
fn sigma_b(g: Meters, thickness: Meters, eps_r: f64) -> f64 {
    gap_breakdown_sigma(g, thickness, eps_r).unwrap_or(f64::INFINITY)
}

/// The lowest σ_B over [`GAP_MIN`, `GAP_MAX`] for a web of `thickness` [m]
/// and relative permittivity `eps_r`; `None` when no gap breaks down (not
/// for air at 1 atm with positive inputs).
pub fn lowest_breakdown(thickness: Meters, eps_r: f64) -> Option<LowestBreakdown> {
    let (i, s) = (0..GAP_SAMPLES)
        .map(|i| (i, sigma_b(gap_at(i), thickness, eps_r)))
        .min_by(|a, b| a.1.total_cmp(&b.1))?;
    if !s.is_finite() {
        return None;
    }
    if i == 0 || i == GAP_SAMPLES - 1 {
        return Some(LowestBreakdown {
            sigma: s,
            gap: gap_at(i),
        });
    }
    // Golden-section search in ln g between the neighbours.
    let f = |x: f64| sigma_b(x.exp(), thickness, eps_r);
    let (mut a, mut b) = (gap_at(i - 1).ln(), gap_at(i + 1).ln());
    let r = (5f64.sqrt() - 1.0) / 2.0;
    let (mut c, mut d) = (b - r * (b - a), a + r * (b - a));
    for _ in 0..60 {
        if f(c) < f(d) {
            b = d;
        } else {
            a = c;
        }
        c = b - r * (b - a);
        d = a + r * (b - a);
    }
    let x = 0.5 * (a + b);
    let best = f(x).min(s);
    Some(LowestBreakdown {
        sigma: best,
        gap: if best < s { x.exp() } else { gap_at(i) },
    })
}

/// The smallest gap in [`GAP_MIN`, `GAP_MAX`] at which a web of density
/// |σ| = `sigma` [C/m²] breaks the gap down (σ ≥ σ_B(g)), refined by
/// bisection between the scanned gaps; `None` when it does not.
pub fn first_breakdown_gap(
    sigma: CoulombsPerSquareMeter,
    thickness: Meters,
    eps_r: f64,
) -> Option<Meters> {
    let sigma = sigma.abs();
    let breaks = |g: f64| sigma >= sigma_b(g, thickness, eps_r);
    let i = (0..GAP_SAMPLES).find(|&i| breaks(gap_at(i)))?;
    if i == 0 {
        return Some(GAP_MIN);
    }
    let (mut lo, mut hi) = (gap_at(i - 1), gap_at(i));
    for _ in 0..60 {
        let mid = (lo * hi).sqrt();
        if breaks(mid) {
            hi = mid;
        } else {
            lo = mid;
        }
    }
    Some(hi)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_lowest_breakdown_is_below_every_scanned_gap() {
        // A dense independent scan (20 000 gaps) never finds a lower σ_B.
        let (t, er) = (23e-6, 3.2);
        let low = lowest_breakdown(t, er).unwrap();
        for k in 0..20_000 {
            let g = GAP_MIN * (GAP_MAX / GAP_MIN).powf(k as f64 / 19_999.0);
            if let Some(s) = gap_breakdown_sigma(g, t, er) {
                assert!(s >= low.sigma * (1.0 - 1e-12), "{g}: {s} < {}", low.sigma);
            }
        }
        assert!((GAP_MIN..=GAP_MAX).contains(&low.gap));
    }

    #[test]
    fn the_first_gap_is_where_the_density_reaches_the_breakdown_density() {
        let (t, er) = (23e-6, 3.2);
        let low = lowest_breakdown(t, er).unwrap();
        assert_eq!(first_breakdown_gap(0.99 * low.sigma, t, er), None);
        let g = first_breakdown_gap(3.0 * low.sigma, t, er).unwrap();
        let s = gap_breakdown_sigma(g, t, er).unwrap();
        assert!((s / (3.0 * low.sigma) - 1.0).abs() < 1e-6, "{s}");
        // A larger density breaks a smaller gap first.
        let g2 = first_breakdown_gap(5.0 * low.sigma, t, er).unwrap();
        assert!(g2 < g, "{g2} vs {g}");
    }
}
