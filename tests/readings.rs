//! # Tests: meter readings to surface charge density (`src/readings`)
//!
//! The naive infinite-sheet rule, the geometry-aware inversion against closed
//! forms, round trips through the field solver, the weighted least squares,
//! the uncertainty bounds, the warnings, validation and `websigma readings`.
//! The closed form used (derived from Coulomb's law): on the axis of a
//! uniformly charged rectangle the normal field is σΩ/(4πε0), Ω the solid
//! angle the rectangle subtends,
//!
//! $$ E(z) = \frac{σ}{π ε_0} \arctan\frac{a b}{z \sqrt{a^2 + b^2 + z^2}}, $$
//!
//! which tends to σ/(2ε0) (isolated infinite sheet, Gauss's law) as z/a → 0;
//! a grounded plane adds the image sheet −σ (method of images).
//!
//! | symbol | meaning | unit |
//! | --- | --- | --- |
//! | σ | surface charge density | C/m² |
//! | a, b | half length and half width of the charged rectangle | m |
//! | z, d | distance of the meter from the sheet | m |
//! | E, r | normal field at the meter, reading | V/m |
//! | u = a_m·\|r\| + e0 | reading uncertainty (accuracy a_m, offset e0) | V/m |
//! | ε0 | vacuum permittivity, 8.8541878128e-12 (CODATA 2018) | F/m |
//!
//! Assumptions: thin sheets in free space (the solver's model); tolerances are
//! the solver's 1e-9 unless a comment says otherwise. Valid for the small
//! lines built here (webs 0.1 m to 200 m wide, meters 5 to 110 mm away).
//!
//! ## Reference
//! Gauss's law and the 1 kV/cm ↔ 0.885 / 1.77 µC/m² rule (FACTS.md); method
//! of images (D. J. Griffiths, Introduction to Electrodynamics, 4th ed.,
//! §3.2); weighted least squares (Å. Björck, Numerical Methods for Least
//! Squares Problems, SIAM 1996, ch. 1); field-meter practice (FACTS.md:
//! reading ÷ calibrated distance, 25 mm default, mid-span readings).

use crate::util::{temp_yaml, websigma};
use proptest::prelude::*;
use websigma::charge::charge_profile;
use websigma::field::{Scene, SolverSettings, WebField};
use websigma::model::geometry::meter_geometry;
use websigma::model::{Line, Side, parse_line};
use websigma::readings::ReadingNote;
use websigma::readings::{ReadingsResult, invert_readings};

/// ε0 [F/m], CODATA 2018 — written out here rather than taken from the crate.
const EPS0: f64 = 8.8541878128e-12;

fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs().max(1e-300)
}

fn line(text: &str) -> Line {
    parse_line(text).unwrap_or_else(|e| panic!("{e}\n{text}"))
}

fn invert(l: &Line) -> ReadingsResult {
    invert_readings(l, &Scene::new(l, SolverSettings::default()).unwrap()).unwrap()
}

/// Field on the axis of a uniformly charged rectangle, half-sides a, b, at
/// distance z [V/m] (derived from Coulomb's law, see the module header).
fn rectangle_axis_field(sigma: f64, a: f64, b: f64, z: f64) -> f64 {
    sigma / (std::f64::consts::PI * EPS0) * (a * b / (z * (a * a + b * b + z * z).sqrt())).atan()
}

/// A meter placed over a span.
#[derive(Debug, Clone, Copy)]
struct Meter {
    span: usize,
    along: f64,
    across: f64,
    distance: f64,
    side: Side,
}

impl Meter {
    /// A meter at a fraction of span `span`'s length.
    fn at(l: &Line, span: usize, frac: f64, across: f64, distance: f64, side: Side) -> Self {
        Meter {
            span,
            along: frac * l.path.spans[span].length,
            across,
            distance,
            side,
        }
    }
    /// Arc length of the meter's foot [m].
    fn s(&self, l: &Line) -> f64 {
        l.path.spans[self.span].s_start + self.along
    }
    /// The field a meter reads: the solver's field (public API) along the
    /// normal from the web to the meter [V/m].
    fn reads(&self, l: &Line, model: &WebField<'_>) -> f64 {
        let (at, n) = meter_geometry(
            &l.path.spans[self.span],
            self.along,
            self.across,
            self.distance,
            self.side,
        );
        let f = model.at(at, false).unwrap();
        f.e[0] * n[0] + f.e[1] * n[1] + f.e[2] * n[2]
    }
    /// One `readings:` entry with `value` such as `reading: 4e4 V/m`. Lengths
    /// are written in metres with every digit, so the parsed line places the
    /// meter exactly where this test computed its field.
    fn yaml(&self, l: &Line, id: &str, value: &str) -> String {
        format!(
            "  - {{id: {id}, span: {}, position: {:e} m, across: {:e} m, distance: {:e} m, side: {}, {value}}}\n",
            l.path.spans[self.span].name,
            self.along,
            self.across,
            self.distance,
            self.side.text()
        )
    }
}

fn scene(l: &Line) -> Scene {
    Scene::new(l, SolverSettings::default()).unwrap()
}

/// A straight web along x at height `z` through free points `N0, N1, …`.
fn straight(web: &str, ground: Option<f64>, xs: &[f64], z: f64, charge: &str) -> String {
    let mut s = format!("web: {{{web}}}\n");
    if let Some(g) = ground {
        s.push_str(&format!("ground_plane: {g} m\n"));
    }
    s.push_str("path:\n");
    for (i, x) in xs.iter().enumerate() {
        s.push_str(&format!("  - point: [{x} m, {z} m]\n    id: N{i}\n"));
    }
    s.push_str(&format!("charge:\n{charge}"));
    s
}

// ---------------------------------------------------------------------------
// 1-4: the naive rule and the limits where the geometry-aware value is known
// ---------------------------------------------------------------------------

/// FACTS.md (Gauss's law): 1 kV/cm ↔ 0.885 µC/m² (field on one side, ε0E) or
/// 1.77 µC/m² (isolated sheet, 2ε0E). Checked to the digits FACTS gives (half
/// a unit of the last digit) and to 4 digits, ε0·1e5 V/m = 8.854e-7 C/m².
#[test]
fn naive_conversions_follow_gauss_law() {
    let mut text = straight(
        "width: 1 m, thickness: 50 um, relative_permittivity: 3, relaxation_time: 100 s, speed: 1 m/s",
        None,
        &[0.0, 2.0],
        1.0,
        "  - {at: start, sigma: 1 uC/m^2}\n",
    );
    text.push_str(
        "readings:\n  - {span: S1, position: 50 %, distance: 25 mm, side: above, reading: 1 kV/cm}\n",
    );
    let r = invert(&line(&text));
    let x = &r.readings[0];
    assert_eq!(x.field, Some(1e5), "1 kV/cm = 1e5 V/m");
    let one = x.sigma_naive_one_sided.unwrap();
    let iso = x.sigma_naive_isolated.unwrap();
    assert!((one - 0.885e-6).abs() <= 0.0005e-6, "{one}");
    assert!((iso - 1.77e-6).abs() <= 0.005e-6, "{iso}");
    assert!((one - 8.854e-7).abs() <= 0.0005e-7, "{one}");
    assert!((iso - 1.771e-6).abs() <= 0.0005e-6, "{iso}");
}

/// A 200 m × 200 m web, no ground plane, no relaxation, meter 25 mm above
/// the centre: the geometry-aware σ is the isolated-sheet value 2ε0E within
/// 1e-3 (the finite-size term is (2/π)·z√(a²+b²)/(ab) ≈ 2.3e-4 here), and
/// equals the exact rectangle closed form (Coulomb's law) within 1e-7
/// (solver tolerance 1e-9, with margin).
#[test]
fn very_wide_web_reads_as_an_isolated_sheet() {
    let mut text = straight(
        "width: 200 m, thickness: 50 um, relative_permittivity: 3, relaxation_time: 1e30 s, speed: 1 m/s",
        None,
        &[0.0, 200.0],
        1.0,
        "  - {at: start, sigma: 1 uC/m^2}\n",
    );
    text.push_str(
        "readings:\n  - {span: S1, position: 50 %, distance: 25 mm, side: above, reading: 100 kV/m}\n",
    );
    let l = line(&text);
    let r = invert(&l);
    let x = &r.readings[0];
    // Meter 25 mm above a horizontal span: "above" is +z.
    assert!((x.at[0] - 100.0).abs() < 1e-12 && (x.at[2] - 1.025).abs() < 1e-12);
    let isolated = 2.0 * EPS0 * 1e5;
    assert!(rel(x.sigma, isolated) < 1e-3, "{} vs {isolated}", x.sigma);
    let exact = 1e5 / rectangle_axis_field(1.0, 100.0, 100.0, 0.025);
    assert!(rel(x.sigma, exact) < 1e-7, "{} vs {exact}", x.sigma);
    // The finite web reads a little less than the infinite sheet: σ > 2ε0E.
    assert!(x.sigma > isolated);
}

/// A 50 m × 50 m web 20 mm above a grounded plane (method of images,
/// Griffiths §3.2): the image −σ cancels the field above an infinite sheet and
/// doubles it below, so a meter between web and plane reads σ/ε0 (the
/// one-sided rule) and one above reads almost nothing.
/// Below, 5 mm from the web: σ equals ε0E within 1e-2 (finite size ≈ 7e-4)
/// and the closed form E = E_rect(5 mm) + E_rect(35 mm) within 1e-7.
/// Above, 5 mm: E = E_rect(5 mm) − E_rect(45 mm) is < 1 % of σ/(2ε0); the
/// solver's field matches that difference within 1e-6 (a 1e-9 error on each
/// term, divided by the 1.4e-3 left after cancellation), and the inversion
/// recovers σ from it within 1e-9.
#[test]
fn web_close_above_a_ground_plane() {
    let web = "width: 50 m, thickness: 50 um, relative_permittivity: 3, relaxation_time: 1e30 s, speed: 1 m/s";
    let base = straight(
        web,
        Some(0.0),
        &[-25.0, 25.0],
        0.02,
        "  - {at: start, sigma: 20 uC/m^2}\n",
    );
    let sigma = 20e-6;
    let truth = line(&base);
    let scene_m = scene(&truth);
    let m = scene_m.web(&charge_profile(&truth));
    let below = Meter::at(&truth, 0, 0.5, 0.0, 0.005, Side::Below);
    let above = Meter::at(&truth, 0, 0.5, 0.0, 0.005, Side::Above);
    let e_below = below.reads(&truth, &m);
    let e_above = above.reads(&truth, &m);
    let exact_below = rectangle_axis_field(sigma, 25.0, 25.0, 0.005)
        + rectangle_axis_field(sigma, 25.0, 25.0, 0.035);
    let exact_above = rectangle_axis_field(sigma, 25.0, 25.0, 0.005)
        - rectangle_axis_field(sigma, 25.0, 25.0, 0.045);
    assert!(
        rel(e_below, exact_below) < 1e-7,
        "{e_below} vs {exact_below}"
    );
    assert!(
        rel(e_above, exact_above) < 1e-6,
        "{e_above} vs {exact_above}"
    );
    assert!(
        e_above > 0.0 && e_above < 0.01 * sigma / (2.0 * EPS0),
        "{e_above}"
    );

    let text = format!(
        "{base}readings:\n{}{}",
        below.yaml(&truth, "B", &format!("reading: {e_below:e} V/m")),
        above.yaml(&truth, "A", &format!("reading: {e_above:e} V/m"))
    );
    // Each reading alone (one unknown, one reading).
    for (i, id) in ["B", "A"].iter().enumerate() {
        let keep: String = text
            .lines()
            .filter(|l| !l.starts_with("  - {id:") || l.contains(&format!("id: {id},")))
            .map(|l| format!("{l}\n"))
            .collect();
        let r = invert(&line(&keep));
        let x = &r.readings[0];
        assert!(rel(x.sigma, sigma) < 1e-9, "{id}: {} vs {sigma}", x.sigma);
        if i == 0 {
            let one = x.sigma_naive_one_sided.unwrap();
            assert!(rel(x.sigma, one) < 1e-2, "{} vs one-sided {one}", x.sigma);
            // The isolated-sheet rule would double it.
            assert!(rel(x.sigma_naive_isolated.unwrap(), 2.0 * sigma) < 1e-2);
        }
    }
}

/// A 100 mm strip read from 25 mm: the rectangle closed form (Coulomb's law)
/// gives 70 % of σ/(2ε0), so the isolated-sheet rule underestimates σ by more
/// than 20 %; the inversion recovers σ within 1e-9 (solver tolerance).
#[test]
fn narrow_strip_reads_less_than_the_naive_rule() {
    let base = straight(
        "width: 100 mm, thickness: 50 um, relative_permittivity: 3, relaxation_time: 1e30 s, speed: 1 m/s",
        None,
        &[0.0, 2.0],
        1.0,
        "  - {at: start, sigma: 5 uC/m^2}\n",
    );
    let sigma = 5e-6;
    let truth = line(&base);
    let meter = Meter::at(&truth, 0, 0.5, 0.0, 0.025, Side::Above);
    let e = meter.reads(&truth, &scene(&truth).web(&charge_profile(&truth)));
    let exact = rectangle_axis_field(sigma, 1.0, 0.05, 0.025);
    assert!(rel(e, exact) < 1e-8, "{e} vs {exact}");
    let text = format!(
        "{base}readings:\n{}",
        meter.yaml(&truth, "M", &format!("reading: {e:e} V/m"))
    );
    let r = invert(&line(&text));
    let x = &r.readings[0];
    assert!(rel(x.sigma, sigma) < 1e-9, "{} vs {sigma}", x.sigma);
    let naive = x.sigma_naive_isolated.unwrap();
    assert!(naive < 0.8 * sigma, "naive {naive} vs {sigma}");
    assert!(x.warnings.is_empty(), "{:?}", x.warnings);
}

// ---------------------------------------------------------------------------
// 5: round trips through the solver
// ---------------------------------------------------------------------------

const PROFILES: &[&str] = &[
    "{shape: uniform}",
    "{shape: edges, k: 0.6}",
    "{shape: tilt, k: 0.3}",
    "{shape: table, table: [[-0.5 m, 1.4], [0 m, 1], [0.5 m, 0.7]]}",
];

/// Rollers wrapped cw, ccw, cw; charge set at the start and added at B.
fn roller_line(ground: bool, tau: &str, profile: &str) -> String {
    format!(
        "web: {{width: 1.0 m, thickness: 40 um, relative_permittivity: 3, relaxation_time: {tau}, speed: 1 m/s}}
{}rollers:
  - {{id: A, center: [0 m, 1 m], diameter: 100 mm, earthing: grounded}}
  - {{id: B, center: [0.8 m, 0.4 m], diameter: 100 mm, earthing: grounded}}
  - {{id: C, center: [1.6 m, 1 m], diameter: 100 mm, earthing: isolated}}
path:
  - point: [-0.8 m, 1.05 m]
    id: IN
  - {{roller: A, wrap: cw}}
  - {{roller: B, wrap: ccw}}
  - {{roller: C, wrap: cw}}
  - point: [2.4 m, 1.05 m]
    id: OUT
across_profile: {profile}
charge:
  - {{at: start, sigma: 3 uC/m^2}}
  - {{at: B, adds: 1.2 uC/m^2}}
meter: {{distance_tolerance: 0 mm}}
",
        if ground { "ground_plane: 0 m\n" } else { "" }
    )
}

/// A vertical span going up, then a horizontal one.
fn vertical_line(ground: bool, tau: &str, profile: &str) -> String {
    format!(
        "web: {{width: 1.0 m, thickness: 40 um, relative_permittivity: 3, relaxation_time: {tau}, speed: 1 m/s}}
{}path:
  - point: [0 m, 0.2 m]
    id: LO
  - point: [0 m, 1.2 m]
    id: TOP
  - point: [1.2 m, 1.2 m]
    id: END
across_profile: {profile}
charge:
  - {{at: start, sigma: 2 uC/m^2}}
  - {{at: TOP, adds: 1 uC/m^2}}
meter: {{distance_tolerance: 0 mm}}
",
        if ground { "ground_plane: 0 m\n" } else { "" }
    )
}

/// What a test reading is: a field, a voltage at a calibrated distance [m],
/// or a density.
#[derive(Clone, Copy)]
enum Kind {
    Field,
    Voltage(f64),
    Sigma,
}

/// Computes every meter's reading on `base` (charge as its entries say),
/// writes them as `readings:`, inverts, and returns the worst relative error
/// of the recovered σ at the meters' feet.
fn round_trip(base: &str, meters: &[(Meter, Kind)]) -> f64 {
    let truth = line(base);
    let charge = charge_profile(&truth);
    let scene_m = scene(&truth);
    let m = scene_m.web(&charge);
    let mut text = format!("{base}readings:\n");
    for (i, (meter, kind)) in meters.iter().enumerate() {
        let value = match kind {
            Kind::Field => format!("reading: {:e} V/m", meter.reads(&truth, &m)),
            // FACTS.md: field = reading ÷ calibrated distance.
            Kind::Voltage(cal) => format!(
                "voltage: {:e} V, calibrated_at: {cal:e} m",
                meter.reads(&truth, &m) * cal
            ),
            Kind::Sigma => format!(
                "sigma: {:e} C/m^2",
                charge.sigma(meter.s(&truth), meter.across)
            ),
        };
        text.push_str(&meter.yaml(&truth, &format!("M{i}"), &value));
    }
    let l = line(&text);
    let r = invert(&l);
    assert_eq!(r.readings.len(), meters.len());
    let mut worst: f64 = 0.0;
    for ((meter, _), x) in meters.iter().zip(&r.readings) {
        let want = charge.sigma(meter.s(&truth), meter.across);
        assert!(want.abs() > 1e-7, "test setup: σ = {want} at {}", x.id);
        let e = rel(x.sigma, want);
        assert!(
            e < 1e-9,
            "{}: σ {} vs {want} (rel {e:e})\n{text}",
            x.id,
            x.sigma
        );
        worst = worst.max(e);
        // A consistent set: every residual vanishes.
        assert!(
            x.residual.abs() <= 1e-9 * x.reading.abs(),
            "{}: residual {}",
            x.id,
            x.residual
        );
    }
    worst
}

/// Round trip (the inversion is the inverse of the solver): for every across
/// profile and several geometries — rollers wrapped cw/ccw with a grounded
/// and an isolated roller, a vertical span, the ground plane on and off,
/// relaxation on and practically off — the σ recovered at every meter equals
/// the charge entries' σ within 1e-9 relative (the solver's tolerance), with
/// meters on both sides, a voltage reading with `calibrated_at:` and a
/// `sigma:` reading among them.
#[test]
fn round_trip_every_profile_and_geometry() {
    let mut worst: f64 = 0.0;
    for profile in PROFILES {
        for (ground, tau) in [(true, "2 s"), (false, "1e30 s")] {
            // Rollers: S1 IN-A, S2 A-B (down), S3 B-C (up), S4 C-OUT.
            let base = roller_line(ground, tau, profile);
            let l = line(&base);
            let meters = [
                (Meter::at(&l, 0, 0.5, 0.0, 0.025, Side::Above), Kind::Field),
                (Meter::at(&l, 1, 0.5, 0.1, 0.03, Side::Below), Kind::Field),
                (Meter::at(&l, 1, 0.3, 0.3, 0.025, Side::Above), Kind::Field),
                (
                    Meter::at(&l, 2, 0.6, -0.25, 0.05, Side::Above),
                    Kind::Voltage(0.05),
                ),
                (Meter::at(&l, 2, 0.5, 0.0, 0.02, Side::Below), Kind::Field),
                (Meter::at(&l, 3, 0.5, 0.4, 0.025, Side::Above), Kind::Sigma),
            ];
            worst = worst.max(round_trip(&base, &meters));

            // Vertical: S1 LO-TOP going up, S2 TOP-END.
            let base = vertical_line(!ground, tau, profile);
            let l = line(&base);
            // "Above" a vertical span is +x (model/mod.rs, Side).
            let (_, n) = meter_geometry(&l.path.spans[0], 0.5, 0.0, 0.025, Side::Above);
            assert_eq!(n, [1.0, 0.0, 0.0]);
            let (_, n) = meter_geometry(&l.path.spans[1], 0.5, 0.0, 0.025, Side::Above);
            assert_eq!(n, [0.0, 0.0, 1.0]);
            let meters = [
                (Meter::at(&l, 0, 0.5, 0.0, 0.025, Side::Above), Kind::Field),
                (
                    Meter::at(&l, 0, 0.4, -0.2, 0.025, Side::Below),
                    Kind::Voltage(0.025),
                ),
                (Meter::at(&l, 1, 0.5, 0.2, 0.025, Side::Above), Kind::Field),
                (Meter::at(&l, 1, 0.7, 0.0, 0.04, Side::Below), Kind::Field),
                (Meter::at(&l, 1, 0.3, -0.3, 0.04, Side::Below), Kind::Sigma),
            ];
            worst = worst.max(round_trip(&base, &meters));
        }
    }
    eprintln!("round trip: worst relative error {worst:e}");
}

// ---------------------------------------------------------------------------
// 6: least squares
// ---------------------------------------------------------------------------

fn single_segment() -> String {
    straight(
        "width: 1 m, thickness: 50 um, relative_permittivity: 3, relaxation_time: 5 s, speed: 1 m/s",
        Some(0.5),
        &[0.0, 1.0, 2.0],
        1.0,
        "  - {at: start, sigma: 4 uC/m^2}\n",
    )
}

/// Weighted least squares with one unknown (Björck ch. 1): with G_m = r_m/σ_m
/// from each reading alone and weights w_m = 1/u_m², u_m = a|r_m| + e0, the
/// fit is x = Σ w G r / Σ w G² and the residuals are r_m − G_m x.
/// Consistent readings give residuals below 1e-9 of the reading; a reading
/// 20 % off puts the fit between the two single answers (1e-9, solver) with
/// residuals of opposite sign and no flag; one 3× off is flagged.
#[test]
fn least_squares_combines_and_flags_readings() {
    let base = single_segment();
    let truth = line(&base);
    let scene_m = scene(&truth);
    let m = scene_m.web(&charge_profile(&truth));
    let m1 = Meter::at(&truth, 0, 0.5, 0.0, 0.025, Side::Above);
    let m2 = Meter::at(&truth, 1, 0.4, 0.2, 0.04, Side::Below);
    let (e1, e2) = (m1.reads(&truth, &m), m2.reads(&truth, &m));
    let with = |r1: f64, r2: Option<f64>| {
        let mut t = format!(
            "{base}readings:\n{}",
            m1.yaml(&truth, "A", &format!("reading: {r1:e} V/m"))
        );
        if let Some(r2) = r2 {
            t.push_str(&m2.yaml(&truth, "B", &format!("reading: {r2:e} V/m")));
        }
        invert(&line(&t))
    };
    let alone2 = |r2: f64| {
        let t = format!(
            "{base}readings:\n{}",
            m2.yaml(&truth, "B", &format!("reading: {r2:e} V/m"))
        );
        invert(&line(&t)).readings[0].sigma
    };

    // Consistent.
    let r = with(e1, Some(e2));
    for x in &r.readings {
        assert!(x.residual.abs() < 1e-9 * x.reading.abs(), "{x:?}");
        assert!(rel(x.sigma, 4e-6 * (-x.s / 5.0).exp()) < 1e-9);
        assert!(x.warnings.is_empty(), "{:?}", x.warnings);
    }

    // Conflicting by 20 % and by 3×.
    for factor in [1.2, 3.0] {
        let r2 = factor * e2;
        let s1 = with(e1, None).readings[0].sigma;
        let s2 = alone2(r2);
        // Starting densities implied by each reading alone.
        let a1 = s1 / (-m1.s(&truth) / 5.0).exp();
        let a2 = s2 / (-m2.s(&truth) / 5.0).exp();
        let r = with(e1, Some(r2));
        let fitted = r.segments[0].fitted;
        assert!(
            fitted > a1.min(a2) && fitted < a1.max(a2),
            "{fitted} not between {a1} and {a2}"
        );
        let (g1, g2) = (e1 / a1, r2 / a2);
        let u = |x: f64| 0.05 * x.abs() + 1e3; // default meter: 5 % + 1 kV/m
        let (w1, w2) = (1.0 / u(e1).powi(2), 1.0 / u(r2).powi(2));
        let x = (w1 * g1 * e1 + w2 * g2 * r2) / (w1 * g1 * g1 + w2 * g2 * g2);
        assert!(rel(fitted, x) < 1e-9, "{fitted} vs {x}");
        let (ra, rb) = (r.readings[0].residual, r.readings[1].residual);
        assert!(rel(ra, e1 - g1 * x) < 1e-6 && rel(rb, r2 - g2 * x) < 1e-6);
        assert!(ra < 0.0 && rb > 0.0, "{ra} {rb}");
        assert!(rel(r.readings[0].uncertainty, u(e1)) < 1e-12);
        let flagged = |i: usize| {
            r.readings[i]
                .warnings
                .iter()
                .any(|w| matches!(w, ReadingNote::LargeResidual { .. }))
        };
        if factor < 2.0 {
            // |residual| < 3u for both: 8.5e3 vs 1.8e4 and 1.1e4 vs 2.1e4 V/m.
            assert!(!flagged(0) && !flagged(1), "{:?}", r.readings);
        } else {
            // |residual| > 3u for both: 3.7e4 vs 2.7e4 and 3.4e5 vs 9.0e4 V/m.
            assert!(flagged(0) && flagged(1), "{:?}", r.readings);
            assert!(rb.abs() > 3.0 * r.readings[1].uncertainty);
            assert!(
                matches!(
                    r.readings[1].warnings[0],
                    ReadingNote::LargeResidual { shared: true, .. }
                ),
                "{:?}",
                r.readings[1].warnings
            );
        }
    }
}

// ---------------------------------------------------------------------------
// 7: uncertainty bounds
// ---------------------------------------------------------------------------

fn two_segments(tolerance: &str) -> String {
    let mut s = straight(
        "width: 0.6 m, thickness: 50 um, relative_permittivity: 3, relaxation_time: 5 s, speed: 1 m/s",
        Some(0.4),
        &[0.0, 1.0, 2.0],
        1.0,
        "  - {at: start, sigma: 4 uC/m^2}\n  - {at: N1, adds: -1.5 uC/m^2}\n",
    );
    s.push_str(&format!(
        "meter: {{accuracy: 5 %, offset: 1 kV/m, distance_tolerance: {tolerance}}}\n"
    ));
    s
}

/// The reading r a meter of accuracy a and offset e0 shows for the true field
/// e when its error is the fraction f (|f| ≤ 1) of its stated bound
/// a·|r| + e0 ("a % of the reading"): r = e + f(a|r| + e0), solved for r
/// (r has the sign of e while e0 < |e|).
fn with_error(e: f64, f: f64, a: f64, e0: f64) -> f64 {
    let r = (e + f * e0) / (1.0 - f * a * e.signum());
    assert!((r - e - f * (a * r.abs() + e0)).abs() <= 1e-9 * e.abs());
    r
}

/// Meter errors: each field reading off by f·(a|r| + e0), |f| ≤ 1, and each
/// meter actually `dd` (|dd| ≤ tolerance) farther than the YAML says.
fn bounds_contain_truth(f: &[f64], dd: &[f64], tolerance: &str) -> Result<(), String> {
    let base = two_segments(tolerance);
    let truth = line(&base);
    let charge = charge_profile(&truth);
    let scene_m = scene(&truth);
    let m = scene_m.web(&charge);
    let meters = [
        Meter::at(&truth, 0, 0.5, 0.0, 0.025, Side::Above),
        Meter::at(&truth, 1, 0.4, 0.1, 0.03, Side::Below),
        Meter::at(&truth, 1, 0.7, -0.1, 0.025, Side::Above),
    ];
    let mut text = format!("{base}readings:\n");
    for (i, meter) in meters.iter().enumerate() {
        let mut real = *meter;
        real.distance += dd[i];
        let e = real.reads(&truth, &m);
        let r = with_error(e, f[i], 0.05, 1e3);
        text.push_str(&meter.yaml(&truth, &format!("M{i}"), &format!("reading: {r:e} V/m")));
    }
    let r = invert(&line(&text));
    for (meter, x) in meters.iter().zip(&r.readings) {
        let want = charge.sigma(meter.s(&truth), meter.across);
        // Slack 1e-9 relative: the solver's tolerance.
        let slack = 1e-9 * want.abs();
        let inside = x.sigma_low - slack <= want && want <= x.sigma_high + slack;
        if !inside {
            return Err(format!(
                "{}: true σ {want:e} outside [{:e}, {:e}] (fit {:e})",
                x.id, x.sigma_low, x.sigma_high, x.sigma
            ));
        }
    }
    Ok(())
}

fn unit_error() -> impl Strategy<Value = f64> {
    // The corners of the error box are where a bound is tight: draw them often.
    prop_oneof![Just(-1.0), Just(1.0), -1.0..=1.0f64]
}

fn distance_error() -> impl Strategy<Value = f64> {
    prop_oneof![Just(-2e-3), Just(2e-3), -2e-3..=2e-3f64]
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(16))]

    /// Reading errors alone (meters where the YAML says, no distance
    /// tolerance): σ is linear in the readings, so x̂ ± Σ|P|u is the exact
    /// worst case of errors within 5 % of the reading + 1 kV/m and must hold
    /// the true σ (slack 1e-9, the solver's tolerance).
    #[test]
    fn reading_error_bounds_hold_the_true_sigma(
        f in prop::collection::vec(unit_error(), 3),
    ) {
        bounds_contain_truth(&f, &[0.0; 3], "0 mm").map_err(TestCaseError::fail)?;
    }

    /// Both errors of the meter (5 % of the reading + 1 kV/m, and the true
    /// distance anywhere within ± 2 mm of the YAML's): [σ_low, σ_high] must
    /// hold the true σ. Fails at corners of the error box such as
    /// f = [1, −1, −1], Δd = [−2, +2, +2] mm (true σ of M1 0.05 % above
    /// σ_high).
    #[test]
    fn bounds_hold_the_true_sigma(
        f in prop::collection::vec(unit_error(), 3),
        dd in prop::collection::vec(distance_error(), 3),
    ) {
        bounds_contain_truth(&f, &dd, "2 mm").map_err(TestCaseError::fail)?;
    }
}

// ---------------------------------------------------------------------------
// 8: readings set segment densities
// ---------------------------------------------------------------------------

/// A reading on the segment opened by `sigma: 5 uC/m^2` overrides it: the
/// fitted amplitude is the 8 µC/m² the reading implies (round trip, 1e-9);
/// the downstream segment opened by `adds: 2 uC/m^2` carries the fitted
/// density on, A₂ = A₁·exp(−Δs/λ) + 2 µC/m² (charge relaxation,
/// τ = ε0εrρ, charge/mod.rs), within 1e-9.
#[test]
fn readings_set_segment_densities() {
    let web = "width: 1 m, thickness: 50 um, relative_permittivity: 3, relaxation_time: 3 s, speed: 1.5 m/s";
    let xs = [0.0, 1.0, 2.0, 3.0];
    let charge =
        |a: &str| format!("  - {{at: start, sigma: {a}}}\n  - {{at: N2, adds: 2 uC/m^2}}\n");
    let truth = line(&straight(web, None, &xs, 1.0, &charge("8 uC/m^2")));
    let meter = Meter::at(&truth, 0, 0.5, 0.0, 0.025, Side::Above);
    let e = meter.reads(&truth, &scene(&truth).web(&charge_profile(&truth)));
    let text = format!(
        "{}readings:\n{}",
        straight(web, None, &xs, 1.0, &charge("5 uC/m^2")),
        meter.yaml(&truth, "M", &format!("reading: {e:e} V/m"))
    );
    let l = line(&text);
    assert_eq!(charge_profile(&l).segments[0].amplitude, 5e-6);
    let r = invert(&l);
    let segs = &r.charge.segments;
    assert_eq!(segs.len(), 2);
    assert!(rel(segs[0].amplitude, 8e-6) < 1e-9, "{}", segs[0].amplitude);
    assert!(rel(r.segments[0].fitted, 8e-6) < 1e-9);
    assert_eq!(r.segments[0].predicted, 5e-6);
    assert!(segs[0].from_readings, "{:?}", segs[0]);
    assert!(
        websigma::report::notes::segment_origin(&l, &segs[0]).ends_with("(from readings)"),
        "{:?}",
        segs[0]
    );
    let lambda = 1.5 * 3.0;
    assert!((segs[1].s_start - 2.0).abs() < 1e-12);
    let carried = segs[0].amplitude * (-2.0f64 / lambda).exp() + 2e-6;
    assert!(
        rel(segs[1].amplitude, carried) < 1e-12,
        "{}",
        segs[1].amplitude
    );
    assert!(rel(segs[1].amplitude, 8e-6 * (-2.0f64 / lambda).exp() + 2e-6) < 1e-9);
}

// ---------------------------------------------------------------------------
// 9: warnings
// ---------------------------------------------------------------------------

fn warnings_of(text: &str) -> Vec<String> {
    invert(&line(text)).readings[0]
        .warnings
        .iter()
        .map(websigma::report::notes::reading_note)
        .collect()
}

/// A two-roller line (SMALL_LINE's geometry) with one reading.
fn one_reading(width: &str, reading: &str) -> String {
    format!(
        "web: {{width: {width}, thickness: 50 um, relative_permittivity: 3, relaxation_time: 100 s, speed: 1 m/s}}
rollers:
  - {{id: A, center: [0 m, 1 m], diameter: 100 mm, earthing: grounded}}
  - {{id: B, center: [2 m, 1 m], diameter: 100 mm, earthing: grounded}}
path:
  - point: [-1 m, 1.05 m]
    id: IN
  - {{roller: A, wrap: cw}}
  - {{roller: B, wrap: cw}}
  - point: [3 m, 1.05 m]
    id: OUT
charge:
  - {{at: start, sigma: 5 uC/m^2}}
readings:
  - {{span: A-B, {reading}}}
"
    )
}

/// Each warning by a line of its own, and absent from a line just on the
/// other side of its threshold: a meter within 3 distances of a roller the
/// web touches (K. Robinson, PFFC 2010; NFPA 77 5.4), a reading at the 3 MV/m
/// air breakdown (FACTS.md), a meter farther than a third of the width, a
/// voltage without `calibrated_at:` (25 mm assumed, FACTS.md: 5 kV at 25 mm =
/// 200 kV/m).
#[test]
fn every_warning_has_its_trigger() {
    let only = |w: &[String], needle: &str| {
        assert_eq!(w.len(), 1, "{w:?}");
        assert!(w[0].contains(needle), "{w:?}");
    };
    let at = "distance: 25 mm, side: above";
    // Roller: 3 × 25 mm = 75 mm; 70 mm from A warns, 80 mm does not.
    only(
        &warnings_of(&one_reading(
            "1 m",
            &format!("position: 70 mm, {at}, reading: 50 kV/m"),
        )),
        "suppresses the reading",
    );
    only(
        &warnings_of(&one_reading(
            "1 m",
            &format!("position: 1930 mm, {at}, reading: 50 kV/m"),
        )),
        "suppresses the reading",
    );
    assert!(
        warnings_of(&one_reading(
            "1 m",
            &format!("position: 80 mm, {at}, reading: 50 kV/m")
        ))
        .is_empty()
    );
    // Breakdown.
    only(
        &warnings_of(&one_reading(
            "1 m",
            &format!("position: 50 %, {at}, reading: 3 MV/m"),
        )),
        "3 MV/m",
    );
    assert!(
        warnings_of(&one_reading(
            "1 m",
            &format!("position: 50 %, {at}, reading: 2.9 MV/m")
        ))
        .is_empty()
    );
    // Distance over a third of the width: 300 mm web, 110 mm vs 90 mm.
    only(
        &warnings_of(&one_reading(
            "300 mm",
            "position: 50 %, distance: 110 mm, side: above, reading: 10 kV/m",
        )),
        "a third of its width",
    );
    assert!(
        warnings_of(&one_reading(
            "300 mm",
            "position: 50 %, distance: 90 mm, side: above, reading: 10 kV/m"
        ))
        .is_empty()
    );
    // Voltage without calibration.
    let text = one_reading("1 m", &format!("position: 50 %, {at}, voltage: 5 kV"));
    only(&warnings_of(&text), "25 mm (1 inch) assumed");
    let x = &invert(&line(&text)).readings[0];
    assert!(rel(x.field.unwrap(), 200e3) < 1e-12, "{:?}", x.field);
    let text = one_reading(
        "1 m",
        &format!("position: 50 %, {at}, voltage: 5 kV, calibrated_at: 50 mm"),
    );
    assert!(warnings_of(&text).is_empty());
    let x = &invert(&line(&text)).readings[0];
    assert!(rel(x.field.unwrap(), 100e3) < 1e-12, "{:?}", x.field);
}

// ---------------------------------------------------------------------------
// 10: validation
// ---------------------------------------------------------------------------

/// Problems in `readings:` are refused with their YAML path.
#[test]
fn bad_readings_are_refused_with_their_path() {
    let refused = |reading: &str, want: &str| {
        let err = parse_line(&one_reading("1 m", reading))
            .unwrap_err()
            .to_string();
        assert!(err.contains(want), "expected {want:?} in\n{err}");
    };
    let ok = "position: 50 %, distance: 25 mm, side: above, reading: 50 kV/m";
    assert!(parse_line(&one_reading("1 m", ok)).is_ok());
    let text = one_reading("1 m", ok).replace("span: A-B", "span: S9");
    let err = parse_line(&text).unwrap_err().to_string();
    assert!(
        err.contains("readings[0].span: unknown span \"S9\""),
        "{err}"
    );
    refused(
        "position: 120 %, distance: 25 mm, side: above, reading: 50 kV/m",
        "readings[0].position: 2.4 m is outside span S2 (A-B)",
    );
    refused(
        "position: 2.5 m, distance: 25 mm, side: above, reading: 50 kV/m",
        "readings[0].position:",
    );
    refused(
        "position: 50 %, distance: 25 mm, side: above, reading: 50 kV/m, voltage: 1 kV",
        "readings[0]: give one of `reading:`, `voltage:` or `sigma:`, not several",
    );
    refused(
        "position: 50 %, distance: 25 mm, reading: 50 kV/m",
        "readings[0].side: missing",
    );
    refused(
        "position: 50 %, across: 0.6 m, distance: 25 mm, side: above, reading: 50 kV/m",
        "readings[0].across: 600 mm is off the web",
    );
}

// ---------------------------------------------------------------------------
// 11: the command
// ---------------------------------------------------------------------------

/// `websigma readings`: JSON with SI values (1.5e5 V/m read at 25 mm, 50 %
/// of the 2 m span), table and CSV exit 0, a line without readings exits 2
/// naming `readings:`.
#[test]
fn readings_command() {
    let text = one_reading(
        "1 m",
        "id: MR1, position: 50 %, distance: 25 mm, side: above, reading: 150 kV/m",
    );
    let (_d, p) = temp_yaml(&text);
    let out = websigma()
        .arg("readings")
        .arg(&p)
        .args(["--format", "json"])
        .output()
        .unwrap();
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let list = v["readings"].as_array().unwrap();
    assert_eq!(list.len(), 1);
    let x = &list[0];
    for key in [
        "id",
        "span",
        "position",
        "distance",
        "reading",
        "sigma",
        "sigma_low",
        "sigma_high",
        "sigma_naive_isolated",
        "sigma_naive_one_sided",
        "residual",
        "warnings",
    ] {
        assert!(x.get(key).is_some(), "missing {key} in {x}");
    }
    let num = |k: &str| x[k].as_f64().unwrap();
    assert_eq!(x["id"], "MR1");
    assert!(x["span"].as_str().unwrap().contains("A-B"));
    // The span A-B runs over the tops of two 100 mm rollers 2 m apart.
    assert!(rel(num("position"), 1.0) < 1e-12, "{x}");
    assert!(rel(num("distance"), 0.025) < 1e-12);
    assert!(rel(num("reading"), 1.5e5) < 1e-12);
    assert!(rel(num("sigma_naive_isolated"), 2.0 * EPS0 * 1.5e5) < 1e-9);
    assert!(rel(num("sigma_naive_one_sided"), EPS0 * 1.5e5) < 1e-9);
    // A 1 m web read from 25 mm: σ a little above 2ε0E, in C/m².
    let s = num("sigma");
    assert!(
        s > 2.0 * EPS0 * 1.5e5 && s < 1.2 * 2.0 * EPS0 * 1.5e5,
        "{s}"
    );
    assert!(num("sigma_low") < s && s < num("sigma_high"));
    assert!(num("residual").abs() < 1e-6 * 1.5e5);
    assert_eq!(x["warnings"].as_array().unwrap().len(), 0);

    for format in ["table", "csv"] {
        let out = websigma()
            .arg("readings")
            .arg(&p)
            .args(["--format", format])
            .output()
            .unwrap();
        assert_eq!(out.status.code(), Some(0), "{format}");
        assert!(
            String::from_utf8_lossy(&out.stdout).contains("MR1"),
            "{format}"
        );
    }

    let bare: String = text
        .lines()
        .take_while(|l| !l.starts_with("readings:"))
        .map(|l| format!("{l}\n"))
        .collect();
    let (_d2, p2) = temp_yaml(&bare);
    let out = websigma().arg("readings").arg(&p2).output().unwrap();
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("`readings:`"));
}

/// Every corner of the error box of the three meters above (each reading off
/// by ±(5 % of the reading + 1 kV/m), each meter ± 2 mm from where the YAML
/// says): 64 cases, each must lie within [σ_low, σ_high].
#[test]
fn bounds_hold_at_every_corner_of_the_error_box() {
    let mut misses = Vec::new();
    for bits in 0..64u32 {
        let b = |k: u32| if bits >> k & 1 == 1 { 1.0 } else { -1.0 };
        let f = [b(0), b(1), b(2)];
        let dd = [2e-3 * b(3), 2e-3 * b(4), 2e-3 * b(5)];
        if let Err(e) = bounds_contain_truth(&f, &dd, "2 mm") {
            misses.push(format!("f = {f:?}, dd = {dd:?}: {e}"));
        }
    }
    assert!(
        misses.is_empty(),
        "{} of 64 corners: {misses:#?}",
        misses.len()
    );
}

/// One reading, one unknown, on a 100 mm strip whose field falls fast with
/// distance: the true meter 2 mm farther than the YAML says (the tolerance)
/// and reading low by its full stated error (5 % of the reading + 1 kV/m).
/// The worst case of these two errors together is σ = (r + u)/G(d + tol),
/// G(d) the field per unit σ; the bounds must hold it.
#[test]
fn bounds_hold_at_the_corner_of_the_error_box() {
    let mut base = straight(
        "width: 100 mm, thickness: 50 um, relative_permittivity: 3, relaxation_time: 1e30 s, speed: 1 m/s",
        None,
        &[0.0, 2.0],
        1.0,
        "  - {at: start, sigma: 5 uC/m^2}\n",
    );
    base.push_str("meter: {accuracy: 5 %, offset: 1 kV/m, distance_tolerance: 2 mm}\n");
    let truth = line(&base);
    let nominal = Meter::at(&truth, 0, 0.5, 0.0, 0.025, Side::Above);
    let mut misses = Vec::new();
    for (f, dd) in [(-1.0, 2e-3), (1.0, -2e-3), (-1.0, -2e-3), (1.0, 2e-3)] {
        let mut real = nominal;
        real.distance += dd;
        let e = real.reads(&truth, &scene(&truth).web(&charge_profile(&truth)));
        let r = with_error(e, f, 0.05, 1e3);
        let text = format!(
            "{base}readings:\n{}",
            nominal.yaml(&truth, "M", &format!("reading: {r:e} V/m"))
        );
        let x = invert(&line(&text)).readings[0].clone();
        // Slack 1e-9: the solver's tolerance (an exact bound touches 5e-6).
        let inside = x.sigma_low <= 5e-6 * (1.0 + 1e-9) && 5e-6 * (1.0 - 1e-9) <= x.sigma_high;
        if !inside {
            misses.push(format!(
                "f = {f}, Δd = {dd} m: true σ 5e-6 outside [{:e}, {:e}]",
                x.sigma_low, x.sigma_high
            ));
        }
    }
    assert!(misses.is_empty(), "{misses:#?}");
}

// ---------------------------------------------------------------------------
// An isolated conductor with a given charge: counted once in the fit
// ---------------------------------------------------------------------------

/// A charged isolated plate (100 nC) 150 mm above a 2 m span, one field
/// reading at mid-span. The predicted reading is affine in the span's
/// density A: r(A) = E_0 + A·E_1, E_0 what the plate's charge alone puts at
/// the meter (superposition, Coulomb's law: D. J. Griffiths, *Introduction to
/// Electrodynamics*, 4th ed., §2.1). The direct computation takes the full
/// field of the scene at A = 0 and A = 1 µC/m² (each charged once with the
/// plate's charge) and solves r = E(0) + A·(E(1) − E(0))/1 µC/m² for A; the
/// fit must give the same A. (Before the fix, the unit-segment field of the
/// fit carried the plate's charge too, so E_0 was counted as part of the
/// slope.)
#[test]
fn an_isolated_conductors_given_charge_is_counted_once_in_the_fit() {
    let text = |charge: &str, readings: &str| {
        format!(
            "web: {{width: 1.0 m, thickness: 40 um, relative_permittivity: 3, relaxation_time: 1e30 s, speed: 1 m/s}}
ground_plane: 0 m
path:
  - point: [0 m, 1 m]
  - point: [2 m, 1 m]
charge:
  - {{at: start, sigma: {charge}}}
conductors:
  - {{id: HOOD, shape: plate, earthing: isolated, charge: 100 nC, from: [0.7 m, -0.3 m, 1.15 m], to: [1.3 m, 0.3 m, 1.15 m]}}
meter: {{distance_tolerance: 0 mm}}
{readings}"
        )
    };
    let settings = SolverSettings::default().with_default_conductors();
    let reading = "readings:\n  - {span: S1, position: 50 %, distance: 50 mm, side: above, reading: 60 kV/m}\n";
    let l = line(&text("1 uC/m^2", reading));
    let sc = Scene::new(&l, settings).unwrap();
    let (at, n) = meter_geometry(&l.path.spans[0], 1.0, 0.0, 0.05, Side::Above);
    let normal_at = |sigma: &str| {
        let li = line(&text(sigma, ""));
        let e = sc.web(&charge_profile(&li)).at(at, false).unwrap().e;
        e[0] * n[0] + e[1] * n[1] + e[2] * n[2]
    };
    let (e0, e1) = (normal_at("0 uC/m^2"), normal_at("1 uC/m^2"));
    assert!(
        e0.abs() > 1e3,
        "the plate's charge alone must be felt at the meter: {e0} V/m"
    );
    let direct = (6e4 - e0) / (e1 - e0) * 1e-6;
    let r = invert_readings(&l, &sc).unwrap();
    let fitted = r.segments[0].fitted;
    assert!(
        rel(fitted, direct) < 1e-9,
        "fitted {fitted} C/m² vs direct {direct} C/m²"
    );
}
