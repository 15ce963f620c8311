//! What a field meter would read near the web, from the model: the
//! *meter-equivalent reading* that rules stated in a meter's terms ("5 kV at
//! 1 inch", "an insulator at 125 V") compare, instead of the web's absolute
//! potential or a density converted one-sided.
//!
//! ## Formula
//!
//! A field meter held at its calibration distance d from a surface shows
//! the field at its sensing face times d: a meter calibrated at 1 in that
//! sees 197 kV/m shows "5 kV" (instrument practice: reading = E·d, K.
//! Robinson, PFFC 2010 and 2019; FACTS.md "Field meters on webs"). The model
//! gives the field **E** at the place the meter's face would be, so
//!
//! $$ V_m = |\mathbf E(\mathbf x_m) \cdot \hat{\mathbf n}|\, d, \qquad
//!    \mathbf x_m = \mathbf x_w + d\,\hat{\mathbf n}, $$
//!
//! with $\mathbf x_w$ a point of the span's charged surface and
//! $\hat{\mathbf n}$ its unit normal towards the meter. Far from rollers and
//! other spans, a wide span of density σ gives $E_n = σ/(2ε_0)$ on either
//! side (the infinite isolated sheet, Gauss's law), so
//! $V_m = σ d/(2ε_0)$: 1 µC/m² reads 1.43 kV at 1 in; near a grounded
//! roller or over grounded metal the reading is suppressed, as a real
//! meter's is (NFPA 77 (2000) 5.4; K. Robinson, PFFC 2010).
//!
//! | symbol | meaning | unit |
//! | --- | --- | --- |
//! | V_m | meter-equivalent reading | V (at d) |
//! | d | calibration distance, default [`DEFAULT_METER_DISTANCE`] = 1 in | m |
//! | E_n | field component along the normal, web → meter | V/m |
//! | σ | surface charge density | C/m² |
//!
//! ## Where it is computed
//!
//! - **A span's worst position** ([`span_worst`]): the largest |E_n|·d
//!   over [`ALONG`] stations evenly spread between 2d from either end (a
//!   meter is held clear of the rollers; a span shorter than 4d gets its
//!   midpoint only), 3 positions across (the centreline and 2d inside each
//!   edge, the centreline only on a web narrower than 4d), on both sides.
//!   A rule bound to zones judges only the part of the span inside them
//!   ([`span_part_worst`]: the stations spread over that part, clear of
//!   the ends as above).
//! - **Near an item** ([`near_item`]): the largest over 3 × 3 places around
//!   the span's point nearest the item (± max(d, 10 mm) along and across,
//!   clamped to the span), on the item's side; where none of those can
//!   hold a meter, the span's worst position.
//!
//! A place where the meter would have less than d of clear air to a
//! roller, to another span or to the ground plane, or would sit inside a
//! conductor, is skipped: a meter is held where its face sees the web
//! across free air (in the wedge between a web and the roller it leaves
//! the field is enhanced, all of it on that side, and no meter fits).
//!
//! ## Assumptions
//! The meter does not disturb the field it measures (a real meter is a
//! grounded body that concentrates the field on its face; its calibration
//! against a plate at distance d absorbs this for a wide, uniform surface).

use crate::field::{FieldAt, FieldError};
use crate::model::geometry::{distance_to_span, meter_geometry, span_frame};
use crate::model::{Line, Side, Span};
use crate::units::{Meters, Volts, VoltsPerMeter};

/// The calibration distance assumed where a rule states none: 1 in =
/// 25.4 mm, the usual calibration of field meters on webs (instrument
/// practice, FACTS.md; the inch exact by NIST SP 811).
pub const DEFAULT_METER_DISTANCE: Meters = 0.0254;

/// Stations along a span for [`span_worst`].
pub const ALONG: usize = 9;

/// Smallest step between the samples near an item [m].
const NEAR_STEP: Meters = 0.01;

/// A field meter's reading at one place, from the model.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MeterEquivalent {
    /// Index into `line.path.spans`.
    pub span: usize,
    /// Position of the meter's foot along the span from its start [m].
    pub along: Meters,
    /// Its position across the web (y) [m].
    pub across: Meters,
    /// The side of the web the meter is on.
    pub side: Side,
    /// Calibration distance d [m].
    pub distance: Meters,
    /// E_n, the field along the normal from the web towards the meter, at
    /// the meter [V/m] (signed: positive away from the web).
    pub field: VoltsPerMeter,
    /// Where the meter's face is [m].
    pub at: [Meters; 3],
}

impl MeterEquivalent {
    /// V_m = |E_n|·d [V at d].
    pub fn reading(&self) -> Volts {
        self.field.abs() * self.distance
    }
}

/// The meter's reading at one place, or `None` where a meter cannot be
/// (inside a roller or conductor, below ground, on the web).
fn sample(
    line: &Line,
    model: &dyn FieldAt,
    k: usize,
    span: &Span,
    (along, across, side): (Meters, Meters, Side),
    d: Meters,
) -> Result<Option<MeterEquivalent>, FieldError> {
    let (at, n) = meter_geometry(span, along, across, d, side);
    // A precomputed superposition (the planner's) holds exactly the places
    // the full assessment of the same geometry kept: the geometric checks
    // were made then.
    let precomputed = model.is_precomputed();
    if !precomputed && (!has_room(line, k, at, d) || line.point_problem(at).is_some()) {
        return Ok(None);
    }
    let f = match model.field_at(at, false) {
        Ok(f) => f,
        // Another span's end within d (a sharp turn at a free point).
        Err(FieldError::OnWeb { .. }) => return Ok(None),
        Err(FieldError::NotPrecomputed { .. }) if precomputed => return Ok(None),
        Err(e) => return Err(e),
    };
    let field = f.e[0] * n[0] + f.e[1] * n[1] + f.e[2] * n[2];
    Ok(Some(MeterEquivalent {
        span: k,
        along,
        across,
        side,
        distance: d,
        field,
        at,
    }))
}

/// Whether a meter face at `at`, held d from span `k`, has at least d of
/// clear air to every roller, every other span and the ground plane.
fn has_room(line: &Line, k: usize, at: [Meters; 3], d: Meters) -> bool {
    let clear = 0.999 * d;
    if line.ground_plane.is_some_and(|g| at[2] - g < clear) {
        return false;
    }
    let rollers_clear = line.rollers.iter().all(|r| {
        (at[0] - r.center[0]).hypot(at[2] - r.center[1]) - r.radius >= clear
            || at[1].abs() > r.length / 2.0 + clear
    });
    let spans_clear = line
        .path
        .spans
        .iter()
        .enumerate()
        .all(|(j, s)| j == k || distance_to_span(s, line.web.width, at) >= clear);
    rollers_clear && spans_clear
}

/// The largest of the readings at `places` (the first of equal ones).
fn largest(
    line: &Line,
    model: &dyn FieldAt,
    k: usize,
    places: &[Place],
    d: Meters,
) -> Result<Option<MeterEquivalent>, FieldError> {
    use rayon::prelude::*;
    let span = &line.path.spans[k];
    let one = |&place: &Place| sample(line, model, k, span, place, d);
    let mut best: Option<MeterEquivalent> = None;
    let mut keep = |m: MeterEquivalent| {
        if best.is_none_or(|b| m.reading() > b.reading()) {
            best = Some(m);
        }
    };
    // A precomputed superposition answers in nanoseconds (the planner asks
    // millions of times): sequentially, nothing collected. Otherwise in
    // parallel, kept in order. Either way the places are compared in their
    // order, so the same place wins a tie every run.
    if model.is_precomputed() {
        for place in places {
            if let Some(m) = one(place)? {
                keep(m);
            }
        }
    } else {
        let read: Vec<Option<MeterEquivalent>> =
            places.par_iter().map(one).collect::<Result<_, _>>()?;
        read.into_iter().flatten().for_each(&mut keep);
    }
    Ok(best)
}

/// A place a meter may be held: its foot along the span [m], across the
/// web [m], and the side.
type Place = (Meters, Meters, Side);

/// Most places [`span_part_worst`] samples: [`ALONG`] stations × 3 across
/// × 2 sides.
const MOST_PLACES: usize = ALONG * 3 * 2;

/// The largest meter-equivalent reading at distance `d` on span `k` (see
/// the module documentation for the stations), `None` when no station can
/// hold a meter.
pub fn span_worst(
    line: &Line,
    model: &dyn FieldAt,
    k: usize,
    d: Meters,
) -> Result<Option<MeterEquivalent>, FieldError> {
    let length = line.path.spans[k].length;
    span_part_worst(line, model, k, d, 0.0, length)
}

/// The largest meter-equivalent reading at distance `d` over the part
/// `[from, to]` of span `k` (distances from its start [m]): the stations of
/// [`span_worst`] that fall in the part, [`ALONG`] of them spread evenly
/// over it; where the part lies wholly within 2d of an end, one station at
/// the nearest place a meter is held (2d from that end). `None` when no
/// station can hold a meter.
pub fn span_part_worst(
    line: &Line,
    model: &dyn FieldAt,
    k: usize,
    d: Meters,
    from: Meters,
    to: Meters,
) -> Result<Option<MeterEquivalent>, FieldError> {
    let length = line.path.spans[k].length;
    let (lo, hi) = if length > 4.0 * d {
        (2.0 * d, length - 2.0 * d)
    } else {
        (0.5 * length, 0.5 * length)
    };
    let (a, b) = (from.max(lo), to.min(hi));
    let (a, b, count) = if a < b {
        (a, b, ALONG)
    } else {
        let m = (0.5 * (from + to)).clamp(lo, hi);
        (m, m, 1)
    };
    let half = line.web.width / 2.0;
    let edge = half - 2.0 * d;
    let across: &[Meters] = if half > 2.0 * d {
        &[0.0, -edge, edge]
    } else {
        &[0.0]
    };
    // On the stack: the planner scores millions of placements.
    let mut places = [(0.0, 0.0, Side::Above); MOST_PLACES];
    let mut len = 0;
    for i in 0..count {
        let u = if count > 1 {
            a + (b - a) * i as f64 / (count - 1) as f64
        } else {
            a
        };
        for &y in across {
            for side in [Side::Above, Side::Below] {
                if let Some(p) = places.get_mut(len) {
                    *p = (u, y, side);
                    len += 1;
                }
            }
        }
    }
    largest(line, model, k, &places[..len], d)
}

/// The largest meter-equivalent reading at distance `d` on every span of
/// the line, in span order (information for the results: what a meter
/// survey of the line would find at worst on each span).
pub fn every_span(
    line: &Line,
    model: &dyn FieldAt,
    d: Meters,
) -> Result<Vec<Option<MeterEquivalent>>, FieldError> {
    (0..line.path.spans.len())
        .map(|k| span_worst(line, model, k, d))
        .collect()
}

/// The largest meter-equivalent reading at distance `d` on span `k` near
/// the item at `item` (see the module documentation), on the item's side.
pub fn near_item(
    line: &Line,
    model: &dyn FieldAt,
    k: usize,
    item: [Meters; 3],
    d: Meters,
) -> Result<Option<MeterEquivalent>, FieldError> {
    let span = &line.path.spans[k];
    let frame = span_frame(span, line.web.width, item);
    let half = line.web.width / 2.0;
    let (u0, y0) = (frame.u.clamp(0.0, span.length), item[1].clamp(-half, half));
    let side = item_side(span, item);
    let step = frame.distance.max(d).max(NEAR_STEP);
    let mut places = [(0.0, 0.0, side); 9];
    let mut at = places.iter_mut();
    for du in [0.0, -step, step] {
        for dy in [0.0, -step, step] {
            if let Some(p) = at.next() {
                *p = (
                    (u0 + du).clamp(0.0, span.length),
                    (y0 + dy).clamp(-half, half),
                    side,
                );
            }
        }
    }
    match largest(line, model, k, &places, d)? {
        Some(m) => Ok(Some(m)),
        None => span_worst(line, model, k, d),
    }
}

/// The side of `span` the point `p` is on.
fn item_side(span: &Span, p: [Meters; 3]) -> Side {
    let (_, n) = meter_geometry(span, 0.0, 0.0, 1.0, Side::Above);
    let rel = [p[0] - span.start[0], p[2] - span.start[1]];
    if rel[0] * n[0] + rel[1] * n[2] >= 0.0 {
        Side::Above
    } else {
        Side::Below
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::field::{Scene, SolverSettings};
    use crate::units::EPS0;

    /// A long, wide, uniformly charged span far above ground, with no
    /// rollers near its middle.
    fn free_line(sigma: &str) -> Line {
        crate::model::parse_line(&format!(
            "web: {{width: 4 m, thickness: 30 um, relative_permittivity: 2.2, relaxation_time: 1e30 s, speed: 1 m/s}}\n\
             path:\n  - point: [0 m, 50 m]\n    id: A\n  - point: [8 m, 50 m]\n    id: B\n\
             charge:\n  - at: start\n    sigma: {sigma}\n"
        ))
        .unwrap()
    }

    /// Gauss's law for an isolated sheet: E_n = σ/(2ε0) on either side, so
    /// a meter at 1 in over a wide free span reads σ·d/(2ε0) (textbook
    /// infinite-sheet relation, e.g. D. J. Griffiths, Introduction to
    /// Electrodynamics, Example 2.5). The span is 8 m × 4 m and the meter
    /// 25.4 mm off it, so the finite sheet's field is within 1 % of it.
    #[test]
    fn a_wide_free_span_reads_sigma_d_over_two_eps0() {
        let line = free_line("1 uC/m^2");
        let scene = Scene::new(&line, SolverSettings::default()).unwrap();
        let charge = crate::charge::charge_profile(&line);
        let web = scene.web(&charge);
        let m = span_worst(&line, &web, 0, DEFAULT_METER_DISTANCE)
            .unwrap()
            .unwrap();
        let expected = 1e-6 * DEFAULT_METER_DISTANCE / (2.0 * EPS0);
        assert!((expected - 1434.3).abs() < 0.1, "{expected}");
        let rel = (m.reading() - expected).abs() / expected;
        assert!(rel < 0.01, "{} V against {expected} V", m.reading());
        assert!(
            m.field > 0.0,
            "a positive sheet pushes the field away from itself"
        );
    }

    /// The reading is linear in σ (superposition) and the same on both
    /// sides of a free sheet (symmetry).
    #[test]
    fn linear_in_sigma_and_symmetric_about_the_sheet() {
        let read = |sigma: &str, side: Side| {
            let line = free_line(sigma);
            let scene = Scene::new(&line, SolverSettings::default()).unwrap();
            let charge = crate::charge::charge_profile(&line);
            let web = scene.web(&charge);
            let span = &line.path.spans[0];
            sample(&line, &web, 0, span, (4.0, 0.0, side), 0.0254)
                .unwrap()
                .unwrap()
                .reading()
        };
        let one = read("1 uC/m^2", Side::Above);
        let three = read("3 uC/m^2", Side::Above);
        assert!((three / one - 3.0).abs() < 1e-9, "{three} vs 3×{one}");
        let below = read("1 uC/m^2", Side::Below);
        assert!((below / one - 1.0).abs() < 1e-9, "{below} vs {one}");
    }

    /// A meter at distance d reads E_n·d with the field the model gives at
    /// the meter's face (the definition, checked against `field_at`).
    #[test]
    fn the_reading_is_the_normal_field_times_the_distance() {
        let line = free_line("2 uC/m^2");
        let scene = Scene::new(&line, SolverSettings::default()).unwrap();
        let charge = crate::charge::charge_profile(&line);
        let web = scene.web(&charge);
        let m = near_item(&line, &web, 0, [3.0, 0.5, 50.3], 0.05)
            .unwrap()
            .unwrap();
        assert_eq!(m.side, Side::Above);
        let f = web.field_at(m.at, false).unwrap();
        // A horizontal span: the normal above is +z.
        assert!((m.reading() - f.e[2].abs() * 0.05).abs() < 1e-9 * m.reading());
        assert!((m.at[2] - 50.05).abs() < 1e-12);
    }
}
