//! # Assessment against threshold profiles
//!
//! Fourth stage of the pipeline: `(Line, ChargeProfile, FieldMap) →
//! Assessment`. Each rule of each threshold profile in force is applied to
//! the subjects it concerns (spans, points of a kind, rollers, zones) and
//! gives a [`Finding`]: the value, the limit, the margin (value ÷ limit), a
//! verdict, and the published source of the limit with its confidence.
//!
//! ## Verdict and margin
//!
//! $$ \text{verdict} = \begin{cases} \text{fail} & x \ge x_\text{fail} \\
//!    \text{warn} & x \ge x_\text{warn} \\ \text{pass} & \text{otherwise} \end{cases},
//!    \qquad \text{limit} = x_\text{fail} \text{ if given, else } x_\text{warn},
//!    \qquad \text{margin} = x / \text{limit}. $$
//!
//! Every applicable rule × subject gives a finding, passes included. Findings
//! are sorted by verdict (fail first), then by the class of harm
//! ([`Hazard`]: ignition in zones, shock, electronics, equipment), then by
//! margin (largest first); the assessment's verdict is the worst one (pass
//! when there are none).
//!
//! ## The checks
//!
//! - **web_charge** — the largest |σ| on a span,
//!   $x = \max_k |σ_c(s_k)| \cdot \max_y |f(y)|$ over the charge pieces k
//!   that overlap the span, $s_k$ the start of the piece on the span:
//!   relaxation $σ_c ∝ e^{-s/(vτ)}$ only lowers |σc| along a piece, so its
//!   start is its largest value. Subjects: every span, or the spans whose
//!   charged rectangle touches the box of a matching zone
//!   (`Zone::touches_span`). A zone-bound span rule (this one and
//!   **meter_reading**) judges only the part of the span inside the
//!   matching zones (`Zone::span_part`, the segment clipped to the box):
//!   a box over half a span judges that half, so a bar upstream of a zone
//!   clears it; the finding then says which part was judged.
//! - **field_at_points** — $x = |\mathbf E|$ at points of the kind
//!   (optionally only inside a matching zone).
//! - **body_voltage** — $x = |V|$ at operator points: the operator is taken
//!   to be insulated from earth and charged to the potential of the position.
//! - **spark_energy** — $x = W = \tfrac12 C V^2$, C the operator's
//!   capacitance or [`DEFAULT_BODY_CAPACITANCE`] = 150 pF (IEC 61000-4-2
//!   body model). With `fail: zone_mie` the failure limit is the lowest MIE
//!   of the matching zones containing the operator; an operator in no
//!   matching zone gets no finding from that rule.
//! - **electronics_separation** — the separation rule of ANSI/ESD S20.20 and
//!   IEC 61340-5-1 is stated in what a field meter or non-contact voltmeter
//!   reads on the insulator, so for each electronics point and each span at
//!   distance $d$ (point to charged rectangle, [`distance_to_span`]) below
//!   the far distance: $x = V_m = |E_n| d_m$, the meter-equivalent reading
//!   at the meter's calibration distance $d_m$ (the rule's, 1 in by
//!   default) near the span's point nearest the item, on the item's side
//!   ([`meter::near_item`]). The allowed reading is $V_\text{near}$ for
//!   $d < d_\text{near}$, $V_\text{far}$ for
//!   $d_\text{near} \le d < d_\text{far}$; no limit beyond $d_\text{far}$.
//!   Verdict fail if $x \ge$ the allowed reading (margin = x ÷ allowed).
//!   One finding per point, for its worst span (largest margin); a point
//!   farther than $d_\text{far}$ from every span gets none. The web's own
//!   potential there (the largest |V| at [`SEPARATION_SAMPLES`] places
//!   around the nearest point, [`WEB_OFFSET`] = 10 µm off the web) is kept
//!   in the finding's notes for information: it is not what the rule
//!   compares.
//! - **meter_reading** — $x = V_m = |E_n| d_m$, the largest
//!   meter-equivalent reading on a span ([`meter::span_worst`]: stations
//!   along and across the span, both sides), for rules stated as a meter
//!   reading ("5 kV at 1 inch", A. Seaver 1995). Limits are written
//!   `5 kV at 1 in`; the value and the limits are readings at the same
//!   calibration distance.
//! - **isolated_conductor** — the capacitance to ground C of isolated
//!   conductors (10 pF earthing rule): with `rollers:`, rollers with
//!   `earthing: isolated` (insulating rollers are not conductors); with
//!   `conductors:`, the isolated plates, boxes and cylinders of the line's
//!   `conductors:` list (people have their own rules below). Subjects inside
//!   or within [`NEAR_ZONE`] = 0.5 m of a matching zone's box (the subject's
//!   bounding box against the zone's; a roller's is its side-view circle
//!   times the web width + [`ROLLER_OVERHANG`]). **With the conductors'
//!   solve** (`Scene::conductors()` is `Some`, results passed to
//!   [`assess_with_conductors`]) C is `Bem::capacitance_to_ground` (the
//!   boundary-element capacitance to ground with every other conductor
//!   held at 0 V, lumped `capacitance_to_ground` included), and a roller's
//!   finding also shows the analytic estimate below for comparison.
//!   **Without it** a roller's C is the analytic estimate of a cylinder of
//!   radius r and length L over a grounded plane, its axis at height h,
//!   $$ C = \frac{2π ε_0 L}{\operatorname{arcosh}(h/r)}, \qquad L = w + 0.2\ \text{m}, $$
//!   with h above the ground plane; without one, h = the axis height above
//!   z = 0, or 1 m (at least 2r) where that is not above r; other
//!   conductors get no finding. The finding's note says which basis was
//!   used.
//! - **conductor_spark** — (needs the conductors' solve) the energy a spark
//!   from an isolated roller (`rollers:`) or an isolated plate, box,
//!   cylinder or person (`conductors:`) to earth can release,
//!   $x = W = \tfrac12 C V^2$, V its floating potential with the web's
//!   charge and C its capacitance to ground, both from the solve. With
//!   `fail: zone_mie` the failure limit is the lowest MIE of the matching
//!   zones the conductor is in or within [`NEAR_ZONE`] of.
//! - **people** — a `conductors:` entry of kind person is a subject of the
//!   `body_voltage` and `spark_energy` rules on `points: operator` that are
//!   not zone-bound (the operator-shock profile): x = |V| and x = ½CV² with
//!   the person's floating potential V and capacitance C (body cylinder +
//!   lumped feet-to-floor, `PERSON_FEET_CAPACITANCE` = 100 pF unless given)
//!   from the solve. A grounded person gets a pass with value 0 (held at
//!   0 V: no shock). A person in or near a zone is compared with the zone's
//!   MIE by `conductor_spark`, so the zone-bound operator rules keep to
//!   `points` (a probe in the air, screened by the conductors when solved).
//!   Without the solve, people get no finding.
//! - **insulating_surface** — rollers with `earthing: insulating` inside or
//!   within [`NEAR_ZONE`] of a matching zone: the chargeable insulating
//!   surface $x = A = 2π r L$ [m², a plain number since `units` has no
//!   area], r the radius and L the roller's length (the whole surface
//!   counts: any part may face the charged web or be rubbed). The shipped
//!   limits are IEC TS 60079-32-1 7.4.2 (zone 0: 50 / 25 / 4 cm², zone 1:
//!   100 / 100 / 20 cm² for IIA / IIB / IIC; recalled from memory), none in
//!   zone 2, where that clause sets no area limit.
//! - **gap_discharge** — (checked with the conductors' solve in the scene,
//!   though it uses none of its results) for each span that leaves a roller
//!   with `earthing: grounded`: $x = |σ_c(s_0)| \cdot \max_y |f(y)|$ at the
//!   span's start $s_0$, against the lowest density that breaks down the
//!   gap g opening between web and roller,
//!   $$ σ_B = \min_{5\,µ\text{m} \le g \le 10\,\text{mm}} \frac{ε_0 V_B(g)}{g + t/ε_r}, $$
//!   $V_B$ Paschen's law at 1 atm (`physics::gap_breakdown_sigma`, see
//!   [`gap`]); the gap voltage is that of a charged sheet over a grounded
//!   plane, valid while g ≪ the web width. At or above the limit gap
//!   discharges must occur (fail); the note gives the gap at which
//!   breakdown first happens. εr is the web's `relative_permittivity`,
//!   which every line gives (the validator requires it), so no default is
//!   needed.
//! - **propagating_brush** — $x = U_b = t \cdot E_{b,\text{web}}$ (thickness
//!   × dielectric strength) for spans in a matching zone, one finding per
//!   span. A propagating brush discharge also needs a bipolar double layer
//!   above 2.5e-4 C/m² per face and a strong charging process, which the
//!   model cannot see, so this is a necessary condition only. Without
//!   `breakdown_strength` one finding on the web as a whole (when the rule
//!   has subjects) with verdict **warn**, the value taken at the warning
//!   limit (stated in its note; a Finding never carries NaN, and a warning
//!   is never below its own limit): the hazard cannot be ruled out.
//!
//! | symbol | meaning | unit |
//! | --- | --- | --- |
//! | σc, f | centreline density, across-web shape | C/m², 1 |
//! | **E**, V | field and potential at a point (relative to ground) | V/m, V |
//! | C, W | capacitance, stored energy | F, J |
//! | r, L, h | roller radius, length, axis height | m |
//! | A | chargeable surface of an insulating roller | m² |
//! | g, V_B, σ_B | gap web–roller, Paschen breakdown voltage, breakdown density | m, V, C/m² |
//! | εr | web relative permittivity | 1 |
//! | w, t | web width, thickness | m |
//! | E_b,web | dielectric strength of the web | V/m |
//! | d | distance from an electronics item to a span | m |
//!
//! Point findings carry the point's span contributions, largest |E| first.
//!
//! ## Reference
//! - W = ½CV²; Gauss's law; capacitance of a cylinder parallel to a grounded
//!   plane (W. R. Smythe, *Static and Dynamic Electricity*, 3rd ed., §4.13,
//!   or any EM text: image line charge) — derived.
//! - IEC 61000-4-2: 150 pF body model.
//! - TRBS 2153 8.3.5: earth conductors above 10 pF.
//! - IEC TS 60079-32-1:2013 7.4.2 (CLC/TR 50404 Table 1): area limits of
//!   chargeable insulating surfaces — from memory, verify against the
//!   current edition.
//! - Paschen's law with the constants of `physics.rs` (E. M. Bazelyan and
//!   Yu. P. Raizer, *Spark Discharge*); the conductors' capacitances and
//!   potentials from the boundary-element solve (`field::bem`).
//! - TRGS 727; IEC TS 60079-32-1: conditions for propagating brush discharges.
//! - ANSI/ESD S20.20-2021, IEC 61340-5-1: separation of insulators from
//!   ESD-sensitive items.
//! - The limits themselves: the profiles under `profiles/thresholds/`.

pub mod bounds;
pub mod eliminators;
mod finding;
pub mod gap;
pub mod meter;
pub mod profile;
pub mod readings_fit;
mod rules;

pub use bounds::{BoundBasis, Bounds, Share, judge};
pub use finding::{
    Assessment, Assumption, Finding, FindingNote, GapBreakdown, HeightBasis, RollerCapacitance,
    SolvedConductor, Subject, SubjectKind, Verdict, VerdictCounts,
};
pub use profile::{
    Applies, Check, Confidence, Hazard, Rule, Separation, Subjects, ThresholdProfile, ZoneFilter,
    load_profile, load_profiles, parse_profile, shipped, with_air_limit,
};

use crate::charge::ChargeProfile;
use crate::field::{ConductorResult, FieldAt, FieldError, FieldMap, PointField};
use crate::model::{Line, Roller, Span};
use crate::units::{EPS0, Farads, Joules, Meters, Volts};

/// Body capacitance used where an operator has none [F]: the 150 pF human
/// body model of IEC 61000-4-2 (FACTS.md: people are 100–300 pF, NFPA 77).
pub const DEFAULT_BODY_CAPACITANCE: Farads = 150e-12;

/// "Near" a zone for isolated rollers: within this distance of its box [m]
/// (an assumption of this program, stated in every assessment that uses it).
pub const NEAR_ZONE: Meters = 0.5;

/// Length a roller is taken to extend beyond the web, both ends together [m].
pub const ROLLER_OVERHANG: Meters = 0.2;

/// Axis height used for a roller's capacitance when no ground plane is given
/// and the roller's axis is not above z = 0 by more than its radius [m].
pub const FALLBACK_ROLLER_HEIGHT: Meters = 1.0;

/// Offset of the web-potential samples from the web surface [m].
pub const WEB_OFFSET: Meters = 1e-5;

/// Number of web-potential samples per span for electronics_separation.
pub const SEPARATION_SAMPLES: usize = 9;

/// Verdict of a value against optional limits: fail at or above `fail`,
/// warn at or above `warn`, else pass.
pub fn verdict_for(value: f64, warn: Option<f64>, fail: Option<f64>) -> Verdict {
    if fail.is_some_and(|f| value >= f) {
        Verdict::Fail
    } else if warn.is_some_and(|w| value >= w) {
        Verdict::Warn
    } else {
        Verdict::Pass
    }
}

/// Energy stored on a capacitance C at potential V: W = ½CV² [J].
pub fn stored_energy(capacitance: Farads, voltage: Volts) -> Joules {
    0.5 * capacitance * voltage * voltage
}

/// Capacitance of a cylinder of radius `r` and length `length` whose axis is
/// at height `h` above a grounded plane, C = 2πε0·L / arcosh(h/r) [F]; needs
/// h > r (NaN otherwise).
pub fn cylinder_over_plane_capacitance(r: Meters, length: Meters, h: Meters) -> Farads {
    2.0 * std::f64::consts::PI * EPS0 * length / (h / r).acosh()
}

/// Largest |σ| on a span [C/m²] (see the `web_charge` check).
pub fn span_peak_sigma(span: &Span, charge: &ChargeProfile) -> f64 {
    charge.peak_between(span.s_start, span.s_end)
}

/// The capacitance estimate of an isolated roller (see the
/// `isolated_conductor` check).
pub fn roller_capacitance(roller: &Roller, line: &Line) -> RollerCapacitance {
    let r = roller.radius;
    let length = line.web.width + ROLLER_OVERHANG;
    let fallback = FALLBACK_ROLLER_HEIGHT.max(2.0 * r);
    let (height, basis) = match line.ground_plane {
        Some(g) if roller.center[1] - g > r => {
            (roller.center[1] - g, HeightBasis::AboveGroundPlane)
        }
        Some(_) => (fallback, HeightBasis::TouchesGroundPlane),
        None if roller.center[1] > r => (roller.center[1], HeightBasis::AboveZero),
        None => (fallback, HeightBasis::NoGround),
    };
    RollerCapacitance {
        capacitance: cylinder_over_plane_capacitance(r, length, height),
        radius: r,
        length,
        height,
        basis,
    }
}

/// Applies every rule of every profile to the line, without a conductors'
/// solve: [`assess_with_conductors`] with `None`.
pub fn assess(
    line: &Line,
    charge: &ChargeProfile,
    model: &dyn FieldAt,
    points: &FieldMap,
    profiles: &[ThresholdProfile],
) -> Result<Assessment, FieldError> {
    assess_with_conductors(line, charge, model, points, None, profiles)
}

/// Applies every rule of every profile to the line.
///
/// `points` holds the field at `line.points`, in order, computed with
/// contributions (if its length differs, the field is recomputed here from
/// `model`). `conductors` holds `WebField::conductor_results()` of the same
/// charged scene when the scene has a conductors' solve
/// (`Scene::conductors()` is `Some`); with `None` the checks that need it
/// fall back or give no finding and the assessment says so in its
/// assumptions. Pass the profiles through [`with_air_limit`] so that the
/// physical limit of air is always applied.
pub fn assess_with_conductors(
    line: &Line,
    charge: &ChargeProfile,
    model: &dyn FieldAt,
    points: &FieldMap,
    conductors: Option<&[ConductorResult]>,
    profiles: &[ThresholdProfile],
) -> Result<Assessment, FieldError> {
    let recomputed;
    let fields: &[PointField] = if points.points.len() == line.points.len() {
        &points.points
    } else {
        recomputed = line
            .points
            .iter()
            .map(|p| model.field_at(p.at, true))
            .collect::<Result<Vec<_>, _>>()?;
        &recomputed
    };
    let out = rules::apply_all(
        line, charge, model, fields, conductors, profiles, None, true,
    )?;
    let (mut findings, assumptions) = (out.findings, out.assumptions);
    findings.extend(eliminators::eliminator_findings(line, charge));
    findings.sort_by(|a, b| {
        b.verdict
            .cmp(&a.verdict)
            .then(a.hazard.cmp(&b.hazard))
            .then(b.margin.total_cmp(&a.margin))
    });
    let verdict = findings
        .iter()
        .map(|f| f.verdict)
        .max()
        .unwrap_or(Verdict::Pass);
    Ok(Assessment {
        findings,
        verdict,
        assumptions,
    })
}

/// What [`assess`] would give as the planner ranks placements: the number
/// of failing findings and the largest margin over every finding.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Score {
    /// Failing findings.
    pub fails: usize,
    /// The largest margin (0 without findings).
    pub worst_margin: f64,
}

/// The [`Score`] of a line, exactly as [`assess`] (without a conductors'
/// solve) would give it, without building the findings (the same rules
/// run; only what is kept differs). `points` must hold the field at
/// `line.points`, in order. The checks that need the conductors' solve
/// (solved capacitances, spark energies of isolated conductors and people,
/// gap discharges) do not enter the score.
pub fn score(
    line: &Line,
    charge: &ChargeProfile,
    model: &dyn FieldAt,
    points: &FieldMap,
    profiles: &[ThresholdProfile],
) -> Result<Score, FieldError> {
    let rules = profile_score(line, charge, model, points, profiles)?;
    let (fails, worst) = eliminators::eliminator_score(line, charge);
    Ok(Score {
        fails: rules.fails + fails,
        worst_margin: rules.worst_margin.max(worst),
    })
}

/// The part of [`score`] from the threshold profiles' rules alone, without
/// the built-in eliminator checks ([`eliminators::eliminator_score`] gives
/// those): [`score`] is this part's fails plus theirs and the larger of the
/// two margins. The rules read the eliminators only through `charge` and
/// `model` (not their sides or ids), which lets the planner score the
/// rules once for placements that differ only in the sides of bars.
pub fn profile_score(
    line: &Line,
    charge: &ChargeProfile,
    model: &dyn FieldAt,
    points: &FieldMap,
    profiles: &[ThresholdProfile],
) -> Result<Score, FieldError> {
    profile_score_in(line, charge, model, points, profiles, None)
}

/// Where each rule of some profiles applies on each span of a line
/// ([`span_scopes`]).
pub use rules::SpanScopes;

/// Where each rule of `profiles` applies on each span of `line` (the
/// matching zones a span touches and the parts of it inside them): it
/// depends only on the spans, the web's width and the zones, so it holds
/// for every variant of `line` that differs in its eliminators or charge
/// alone ([`profile_score_in`]).
pub fn span_scopes(line: &Line, profiles: &[ThresholdProfile]) -> SpanScopes {
    rules::span_scopes(line, profiles)
}

/// [`profile_score`], with where the rules apply on each span worked out
/// beforehand (`scopes`, [`span_scopes`] of a line with the same spans,
/// web width and zones, and of the same `profiles`): the same score, bit
/// for bit, without working it out again (the planner scores millions of
/// placements of one line).
pub fn profile_score_in(
    line: &Line,
    charge: &ChargeProfile,
    model: &dyn FieldAt,
    points: &FieldMap,
    profiles: &[ThresholdProfile],
    scopes: Option<&SpanScopes>,
) -> Result<Score, FieldError> {
    let out = rules::apply_all(
        line,
        charge,
        model,
        &points.points,
        None,
        profiles,
        scopes,
        false,
    )?;
    Ok(Score {
        fails: out.fails,
        worst_margin: out.worst,
    })
}

#[cfg(test)]
mod counts_tests {
    use super::*;
    use crate::field::{Scene, SolverSettings};

    /// A real assessment of a one-span line (uniform sheet: fast).
    fn assessment() -> Assessment {
        let line = crate::model::parse_line(
            "web: {width: 1 m, thickness: 30 um, relative_permittivity: 2.2, relaxation_time: 1e30 s, speed: 1 m/s}\n\
             path:\n  - point: [0 m, 1 m]\n    id: A\n  - point: [2 m, 1 m]\n    id: B\n\
             charge:\n  - at: start\n    sigma: 5 uC/m^2\n",
        )
        .unwrap();
        let profiles = with_air_limit(Vec::new());
        let scene = Scene::new(&line, SolverSettings::default()).unwrap();
        crate::pipeline::evaluate(&scene, &line, &profiles)
            .unwrap()
            .assessment
    }

    #[test]
    fn counts_each_verdict_once() {
        let mut a = assessment();
        let first = a.findings.first().cloned().expect("the air limit applies");
        a.findings = [
            Verdict::Fail,
            Verdict::Warn,
            Verdict::Pass,
            Verdict::Uncertain,
            Verdict::Warn,
        ]
        .into_iter()
        .map(|v| Finding {
            verdict: v,
            ..first.clone()
        })
        .collect();
        let c = a.counts();
        assert_eq!((c.pass, c.warn, c.uncertain, c.fail), (1, 2, 1, 1));
        assert_eq!(c.as_array(), [1, 2, 1, 1]);
        assert_eq!(c.pass_warn_exceeding(), [1, 2, 2]);
        a.findings.clear();
        assert_eq!(a.counts(), VerdictCounts::default());
    }

    #[test]
    fn counts_add_up_to_the_findings() {
        let a = assessment();
        let c = a.counts();
        assert_eq!(c.pass + c.warn + c.uncertain + c.fail, a.findings.len());
        assert_eq!(c.fail > 0, a.verdict == Verdict::Fail);
    }
}
