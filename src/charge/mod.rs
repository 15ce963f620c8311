//! # Charge density along the web path
//!
//! Second stage of the pipeline: `Line → ChargeProfile`. The web's net
//! surface charge density is separated into a centreline density along the
//! path and a shape across it,
//!
//! $$ σ(s, y) = σ_c(s)\, f(y), $$
//!
//! and the path is cut into *charge segments* at its start and at every
//! `charge` entry. Within a segment the centreline density relaxes through
//! the material,
//!
//! $$ σ_c(s) = A_k \exp\!\left(-\frac{s - s_k}{v τ}\right), \qquad τ = ε_0 ε_r ρ, $$
//!
//! and at a segment start the amplitude is set by the entry (`sigma:`), or is
//! what flows in from upstream plus the entry (`adds:`).
//!
//! | symbol | meaning | unit |
//! | --- | --- | --- |
//! | s | arc length along the path | m |
//! | y | position across the web, 0 on the centreline | m |
//! | σ_c | centreline density | C/m² |
//! | f | across-web shape, f(0) = 1 | 1 |
//! | A_k, s_k | amplitude and start of segment k | C/m², m |
//! | v | web speed | m/s |
//! | τ | charge relaxation time | s |
//! | ε0, εr, ρ | vacuum permittivity, relative permittivity, volume resistivity | F/m, 1, Ω·m |
//!
//! Assumptions: the web is thin, so only the net density of both faces
//! produces the external field; relaxation is ohmic with one time constant;
//! contact with grounded rollers does not change the net density (a later
//! model may add charging and discharging at contacts).
//!
//! ## Reference
//! Relaxation τ = ε0·εr·ρ from the continuity equation and Ohm's law (e.g.
//! D. J. Griffiths, *Introduction to Electrodynamics*, 4th ed., §7.1;
//! NFPA 77 annex on charge relaxation).

use crate::model::{Eliminator, EliminatorKind, Line};
use crate::units::{CoulombsPerSquareMeter, Meters};

pub use crate::model::charge::segment_amplitudes;
pub use crate::physics::decay;

/// What opened a charge segment.
#[derive(Debug, Clone, PartialEq)]
pub enum SegmentOrigin {
    /// The start of the path (uncharged until a charge entry).
    PathStart,
    /// Nothing at its start changes the density: it is carried in.
    CarriedIn,
    /// A `charge:` entry (the last one at this place).
    Entry {
        /// Index into `Line::charge`.
        entry: usize,
    },
    /// An eliminator (the last one at this place).
    Eliminator {
        /// Index into `Line::eliminators`.
        eliminator: usize,
        /// Whether it ionises.
        active: bool,
    },
}

/// A stretch of path over which σc follows one relaxation curve.
#[derive(Debug, Clone, PartialEq)]
pub struct ChargeSegment {
    /// Arc length where it starts [m].
    pub s_start: Meters,
    /// Arc length where it ends [m].
    pub s_end: Meters,
    /// Centreline density at the start, A [C/m²].
    pub amplitude: CoulombsPerSquareMeter,
    /// What opened it.
    pub origin: SegmentOrigin,
    /// Whether meter readings set its starting density.
    pub from_readings: bool,
}

/// The centreline density along the whole path and the across-web shape.
#[derive(Debug, Clone, PartialEq)]
pub struct ChargeProfile {
    /// Segments in path order, covering [0, total length].
    pub segments: Vec<ChargeSegment>,
    /// Relaxation length λ = v·τ [m] (may be infinite).
    pub decay_length: Meters,
    /// The across-web shape f(y).
    pub across: crate::model::AcrossProfile,
}

impl ChargeProfile {
    /// σc(s) [C/m²]; at a segment boundary the downstream value.
    pub fn sigma_c(&self, s: Meters) -> CoulombsPerSquareMeter {
        let seg = self
            .segments
            .iter()
            .rev()
            .find(|g| s >= g.s_start)
            .or(self.segments.first());
        match seg {
            Some(g) => g.amplitude * decay(s - g.s_start, self.decay_length),
            None => 0.0,
        }
    }

    /// σ(s, y) = σc(s)·f(y) [C/m²].
    pub fn sigma(&self, s: Meters, y: Meters) -> CoulombsPerSquareMeter {
        self.sigma_c(s) * self.across.f(y)
    }

    /// σc arriving at the start of segment `k` from upstream, before
    /// anything there acts (0 for the first segment) [C/m²].
    pub fn arriving(&self, k: usize) -> CoulombsPerSquareMeter {
        match k.checked_sub(1).and_then(|i| self.segments.get(i)) {
            Some(g) => g.amplitude * decay(g.s_end - g.s_start, self.decay_length),
            None => 0.0,
        }
    }

    /// Index of the segment holding arc length `s` [m] (the downstream one
    /// at a boundary; the first before the path starts).
    pub fn segment_at(&self, s: Meters) -> usize {
        self.segments
            .iter()
            .rposition(|g| s >= g.s_start)
            .unwrap_or(0)
    }

    /// σc just after `s0` and just before `s1` [m] (0 where the path
    /// carries no piece there) [C/m²].
    pub fn ends_between(
        &self,
        s0: Meters,
        s1: Meters,
    ) -> (CoulombsPerSquareMeter, CoulombsPerSquareMeter) {
        let pieces = self.pieces_between(s0, s1);
        let start = pieces.first().map(|p| p.2).unwrap_or(0.0);
        let end = pieces
            .last()
            .map(|p| p.2 * decay(p.1 - p.0, self.decay_length))
            .unwrap_or(0.0);
        (start, end)
    }

    /// Largest |σ| on the path between `s0` and `s1` [m], across-web peak
    /// included [C/m²]: the largest |σc| at the start of each charge piece
    /// there (relaxation only lowers |σc| along a piece) times max |f(y)|.
    pub fn peak_between(&self, s0: Meters, s1: Meters) -> CoulombsPerSquareMeter {
        let peak = self
            .pieces_between(s0, s1)
            .iter()
            .map(|(_, _, a)| a.abs())
            .fold(0.0, f64::max);
        peak * self.across.max_abs()
    }

    /// The segments that overlap [s0, s1], clipped to it: `(start, end, σc at start)`.
    pub fn pieces_between(
        &self,
        s0: Meters,
        s1: Meters,
    ) -> Vec<(Meters, Meters, CoulombsPerSquareMeter)> {
        let mut out = Vec::new();
        for g in &self.segments {
            let a = g.s_start.max(s0);
            let b = g.s_end.min(s1);
            if b > a {
                out.push((a, b, g.amplitude * decay(a - g.s_start, self.decay_length)));
            }
        }
        out
    }
}

/// Builds the charge profile of a validated line, every eliminator taken as
/// working (whether a passive device ionises depends on the field at its
/// tips: the readings stage decides that with the solver, see
/// [`charge_profile_with`]).
pub fn charge_profile(line: &Line) -> ChargeProfile {
    charge_profile_with(line, &[], &vec![true; line.eliminators.len()])
}

/// Arc lengths where charge segments start: 0, every distinct place of a
/// charge entry and every eliminator further down the path [m].
pub fn segment_starts(line: &Line) -> Vec<Meters> {
    let mut starts: Vec<Meters> = std::iter::once(0.0)
        .chain(line.charge.iter().map(|e| e.s))
        .chain(line.eliminators.iter().map(|e| e.s))
        .collect();
    starts.sort_by(f64::total_cmp);
    starts.dedup();
    starts
}

/// The density an eliminator leaves, from the density σ arriving [C/m²]:
///
/// - powered bar: σ′ = σ·(1 − η) + σ_off (K. Robinson, PFFC: η ≥ 95 %);
/// - passive device, when it ionises: σ′ = sign(σ)·max(|σ|·(1 − η), σ_res),
///   never more than |σ| (J. A. McInally, IEEE Trans. Ind. Appl. IA-13(3),
///   1977: a passive device cannot go below about 1–2 µC/m²); when it does
///   not ionise, σ′ = σ.
pub fn neutralise(
    e: &Eliminator,
    sigma: CoulombsPerSquareMeter,
    active: bool,
) -> CoulombsPerSquareMeter {
    match e.kind {
        EliminatorKind::Powered => sigma * (1.0 - e.efficiency) + e.residual,
        EliminatorKind::Passive if active => {
            let m = (sigma.abs() * (1.0 - e.efficiency))
                .max(e.residual)
                .min(sigma.abs());
            m.copysign(sigma)
        }
        EliminatorKind::Passive => sigma,
    }
}

/// The charge profile with the starting density of some segments imposed
/// (`(segment index, A [C/m²])`, e.g. from meter readings) and with each
/// eliminator working or not (`active[i]` for `line.eliminators[i]`; powered
/// bars always work). At a segment start the charge entries there apply
/// first, then the eliminators there; an imposed segment ignores both. The
/// others carry the relaxed density in from upstream.
pub fn charge_profile_with(
    line: &Line,
    overrides: &[(usize, f64)],
    active: &[bool],
) -> ChargeProfile {
    charge_profile_arrivals(line, overrides, active).0
}

/// [`charge_profile_with`], and the density arriving at every eliminator
/// [C/m²] (after the charge entries at the same place; 0 for one at the
/// path's start).
pub fn charge_profile_arrivals(
    line: &Line,
    overrides: &[(usize, f64)],
    active: &[bool],
) -> (ChargeProfile, Vec<CoulombsPerSquareMeter>) {
    build(line, overrides, &mut |i, e, sigma| {
        let on = active.get(i).copied().unwrap_or(true);
        (neutralise(e, sigma, on), on)
    })
}

/// Which piece of its response an eliminator works on, for the density σ
/// arriving [C/m²] (see [`neutralise`]). Within one regime the response is
/// affine, σ′ = α·σ + β ([`Regime::affine`]), so a profile built with every
/// regime fixed is affine in the imposed densities.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Regime {
    /// A powered bar: σ′ = σ·(1 − η) + σ_off.
    Powered,
    /// A passive device that does not ionise: σ′ = σ.
    Inactive,
    /// A passive device that ionises with |σ| ≤ σ_res: σ′ = σ.
    PassThrough,
    /// A passive device that ionises with |σ|·(1 − η) ≤ σ_res < |σ|:
    /// σ′ = sign(σ)·σ_res (`true` for σ > 0).
    Floor(bool),
    /// A passive device that ionises with |σ|·(1 − η) > σ_res:
    /// σ′ = σ·(1 − η).
    Proportional,
}

impl Regime {
    /// The regime of eliminator `e` for the arriving density σ [C/m²],
    /// working (`active`) or not.
    pub fn of(e: &Eliminator, sigma: CoulombsPerSquareMeter, active: bool) -> Regime {
        match e.kind {
            EliminatorKind::Powered => Regime::Powered,
            EliminatorKind::Passive if !active => Regime::Inactive,
            EliminatorKind::Passive => {
                let a = sigma.abs();
                if a <= e.residual {
                    Regime::PassThrough
                } else if a * (1.0 - e.efficiency) <= e.residual {
                    Regime::Floor(sigma > 0.0)
                } else {
                    Regime::Proportional
                }
            }
        }
    }

    /// (α [1], β [C/m²]) of σ′ = α·σ + β for eliminator `e` in this regime;
    /// equal to [`neutralise`] wherever [`Regime::of`] gives this regime.
    pub fn affine(self, e: &Eliminator) -> (f64, CoulombsPerSquareMeter) {
        match self {
            Regime::Powered => (1.0 - e.efficiency, e.residual),
            Regime::Inactive | Regime::PassThrough => (1.0, 0.0),
            Regime::Floor(positive) => (0.0, if positive { e.residual } else { -e.residual }),
            Regime::Proportional => (1.0 - e.efficiency, 0.0),
        }
    }

    /// Whether the device ionises in this regime.
    pub fn active(self) -> bool {
        self != Regime::Inactive
    }
}

/// The charge profile with some starting densities imposed (as in
/// [`charge_profile_with`]) and every eliminator held in the given regime
/// (`regimes[i]` for `line.eliminators[i]`): σ′ = α·σ + β with (α, β) of
/// [`Regime::affine`], whatever σ arrives. The amplitudes are then affine
/// in the imposed densities. Also returns the density arriving at every
/// eliminator [C/m²] (after the charge entries at the same place).
pub fn charge_profile_in_regimes(
    line: &Line,
    overrides: &[(usize, f64)],
    regimes: &[Regime],
) -> (ChargeProfile, Vec<CoulombsPerSquareMeter>) {
    build(line, overrides, &mut |i, e, sigma| {
        let r = regimes.get(i).copied().unwrap_or(Regime::Powered);
        let (alpha, beta) = r.affine(e);
        (alpha * sigma + beta, r.active())
    })
}

/// The profile and the density arriving at every eliminator [C/m²] (0 for
/// one the path never reaches), with `respond(i, e, σ) = (σ′, ionises)`
/// giving what eliminator i leaves.
fn build(
    line: &Line,
    overrides: &[(usize, f64)],
    respond: &mut dyn FnMut(usize, &Eliminator, f64) -> (f64, bool),
) -> (ChargeProfile, Vec<CoulombsPerSquareMeter>) {
    let lambda = line.web.decay_length();
    let total = line.path.total_length;
    let starts = segment_starts(line);
    let mut segments: Vec<ChargeSegment> = Vec::with_capacity(starts.len());
    let mut arriving = vec![0.0; line.eliminators.len()];
    let mut carried = 0.0;
    for (k, &s0) in starts.iter().enumerate() {
        let s1 = starts.get(k + 1).copied().unwrap_or(total);
        let mut a = carried;
        let mut origin = if k == 0 {
            SegmentOrigin::PathStart
        } else {
            SegmentOrigin::CarriedIn
        };
        for (i, e) in line.charge.iter().enumerate().filter(|(_, e)| e.s == s0) {
            a = e.mode.apply(a, e.sigma);
            origin = SegmentOrigin::Entry { entry: i };
        }
        for (i, e) in line
            .eliminators
            .iter()
            .enumerate()
            .filter(|(_, e)| e.s == s0)
        {
            if let Some(slot) = arriving.get_mut(i) {
                *slot = a;
            }
            let (out, on) = respond(i, e, a);
            a = out;
            origin = SegmentOrigin::Eliminator {
                eliminator: i,
                active: on,
            };
        }
        let from_readings = match overrides.iter().find(|(i, _)| *i == k) {
            Some(&(_, v)) => {
                a = v;
                true
            }
            None => false,
        };
        segments.push(ChargeSegment {
            s_start: s0,
            s_end: s1,
            amplitude: a,
            origin,
            from_readings,
        });
        carried = a * decay(s1 - s0, lambda);
    }
    (
        ChargeProfile {
            segments,
            decay_length: lambda,
            across: line.across.clone(),
        },
        arriving,
    )
}

/// The charge the entries state with no eliminator at all (for the
/// "without eliminators" curve).
pub fn charge_without_eliminators(line: &Line) -> ChargeProfile {
    let mut bare = line.clone();
    bare.eliminators.clear();
    charge_profile(&bare)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::{Eliminator, EliminatorKind, Side};

    fn passive(efficiency: f64, residual: f64) -> Eliminator {
        Eliminator {
            id: "T".into(),
            kind: EliminatorKind::Passive,
            span: 0,
            along: 0.0,
            s: 0.0,
            distance: 0.05,
            side: Side::Above,
            efficiency,
            residual,
            onset: Some(80e3),
            ion_output: 0.0,
        }
    }

    /// The affine piece of every regime equals the piecewise response
    /// (McInally 1977: σ′ = sign σ·min(|σ|, max(|σ|(1 − η), σ_res))) on
    /// the densities of that regime, on both sides of every breakpoint.
    #[test]
    fn each_regime_is_the_response_where_it_holds() {
        let e = passive(0.8, 1.5e-6);
        let mut seen = std::collections::HashSet::new();
        for i in -400..=400 {
            let sigma = i as f64 * 0.05e-6;
            for active in [false, true] {
                let r = Regime::of(&e, sigma, active);
                seen.insert(r);
                let (a, b) = r.affine(&e);
                let exact = neutralise(&e, sigma, active);
                assert!(
                    (a * sigma + b - exact).abs() <= 1e-18,
                    "σ {sigma}: {r:?} gives {} against {exact}",
                    a * sigma + b
                );
                assert_eq!(r.active(), active);
            }
        }
        // Breakpoints: |σ| = σ_res and |σ|(1 − η) = σ_res (7.5 µC/m²).
        assert_eq!(Regime::of(&e, 1.5e-6, true), Regime::PassThrough);
        assert_eq!(Regime::of(&e, 1.6e-6, true), Regime::Floor(true));
        assert_eq!(Regime::of(&e, -7.4e-6, true), Regime::Floor(false));
        assert_eq!(Regime::of(&e, 7.6e-6, true), Regime::Proportional);
        assert_eq!(seen.len(), 5, "{seen:?}");
    }
}
