//! # Tests: readings with a passive device between the charge and the meters
//!
//! On the invented gravure line (tests/fixtures/lines/gravure.yaml: a print
//! nip at R3 charging the web, meter MR1 mid-span after it, a passive tinsel
//! T1 downstream on the next span, a grounded cylinder beside the path),
//! the fit of the readings must reproduce every reading with the tool's
//! own field: the reading is compared with n̂·E of the final charge profile
//! at the meter face (the same field `field --at` gives), never with the
//! rows of a linearised model.
//!
//! What is checked against what:
//! - the fit reproduces MR1 to 1e-9 relative (library and CLI: `field
//!   --at` at the JSON's `at`, along its `normal`);
//! - readings synthesised by the forward model (the tool's field of a
//!   known entry density σ0, T1 on or off) invert back to σ0 to 1e-9
//!   (a property test over σ0 of both signs);
//! - a reading in T1's onset gap (the reading just below and just above
//!   the density where T1 switches on differ: no density gives a reading
//!   between them) is an error-level finding and exit 1, its residual the
//!   reading minus the final profile's field, not 0;
//! - with a powered bar instead (an affine response), the fit equals the
//!   closed linear solve x = (r − b)/g, with b and g from the forward model
//!   at σ0 = 0 and 1 µC/m², in one solve;
//! - T1 with an onset far above its tip field gives the built-in `onset`
//!   warning with value E_on/E_tip, E_tip recomputed here from the final
//!   profile.
//!
//! | symbol | meaning | unit |
//! | --- | --- | --- |
//! | σ0, x | entry density at the nip, fitted density | C/m² |
//! | r, u | reading and its tolerance a·\|r\| + e0 | V/m |
//! | n̂, E | meter normal, field at the meter face | 1, V/m |
//! | E_tip, E_on | field at T1's tips, its onset | V/m |
//!
//! ## Reference
//! Passive devices ionise by corona only above an onset field and leave
//! about 1–2 µC/m² (J. A. McInally, IEEE Trans. Ind. Appl. IA-13(3), 1977;
//! K. Robinson, PFFC "Static Beat"); weighted least squares (Å. Björck,
//! Numerical Methods for Least Squares Problems, SIAM 1996, ch. 1); the
//! intermediate value theorem for the bisection fallback.

use crate::util::{temp_yaml, websigma};
use proptest::prelude::*;
use websigma::charge::ChargeProfile;
use websigma::field::{Scene, SolverSettings};
use websigma::model::geometry::meter_geometry;
use websigma::model::{Line, parse_line};
use websigma::readings::{ReadingNote, ReadingsResult, invert_readings};

const GRAVURE: &str = include_str!("fixtures/lines/gravure.yaml");
const MR1: &str =
    "  - {id: MR1, span: R3-R4, position: 50 %, distance: 25 mm, side: above, reading: 190 kV/m}\n";
const T1: &str =
    "  - {id: T1, kind: passive, span: R4-R5, position: 40 %, distance: 50 mm, side: above}";

fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs().max(1e-300)
}

fn line(text: &str) -> Line {
    parse_line(text).unwrap_or_else(|e| panic!("{e}\n{text}"))
}

/// The solver settings of the CLI's default: conductors (the rollers and
/// the cylinder) solved.
fn settings() -> SolverSettings {
    SolverSettings::default().with_default_conductors()
}

/// The gravure line's scene (geometry only: shared by every variant here,
/// which change charge, readings and the device's settings).
fn scene(l: &Line) -> Scene {
    Scene::new(l, settings()).unwrap()
}

fn invert(l: &Line, s: &Scene) -> ReadingsResult {
    invert_readings(l, s).unwrap()
}

/// n̂·E [V/m] of `charge` at reading `i`'s meter face, from the line's own
/// geometry (not from the readings' result).
fn normal_field(l: &Line, s: &Scene, charge: &ChargeProfile, i: usize) -> f64 {
    let r = &l.readings[i];
    let (at, n) = meter_geometry(&l.path.spans[r.span], r.along, r.across, r.distance, r.side);
    let e = s.web(charge).at(at, false).unwrap().e;
    e[0] * n[0] + e[1] * n[1] + e[2] * n[2]
}

/// The gravure text with the entry at the nip set to `sigma` [C/m²], MR1
/// reading `reading` [V/m] (or no readings), T1 as `t1` and an optional
/// `meter:` block.
fn variant(sigma: f64, reading: Option<f64>, t1: &str, meter: &str) -> String {
    let mut t = GRAVURE.replace(
        "    sigma: 3 uC/m^2",
        &format!("    sigma: {:e} uC/m^2", sigma * 1e6),
    );
    t = match reading {
        Some(r) => t.replace("reading: 190 kV/m", &format!("reading: {r:e} V/m")),
        None => t.replace(&format!("readings:\n{MR1}"), ""),
    };
    t = t.replace(T1, t1);
    format!("{t}\n{meter}")
}

/// What MR1 reads when the entry density is σ0 (the line's forward model:
/// the charge without readings, T1's activity decided by the solver, and
/// the tool's field at MR1's face) [V/m]; also whether T1 ionises.
fn forward(s: &Scene, sigma: f64, t1: &str) -> (f64, bool) {
    let with = line(&variant(sigma, Some(1e5), t1, ""));
    let bare = line(&variant(sigma, None, t1, ""));
    let r = invert(&bare, s);
    (
        normal_field(&with, s, &r.charge, 0),
        r.eliminators[0].active,
    )
}

fn gravure() -> (Line, Scene) {
    let l = line(GRAVURE);
    let s = scene(&l);
    (l, s)
}

/// The fit reproduces MR1 with the tool's own field to 1e-9 relative, with
/// T1 ionising at the fitted charge and its response the piecewise one
/// (McInally: σ′ = sign σ·min(|σ|, max(|σ|(1 − η), σ_res))).
#[test]
fn gravure_fit_reproduces_its_reading() {
    let (l, s) = gravure();
    let r = invert(&l, &s);
    let x = &r.readings[0];
    let e = normal_field(&l, &s, &r.charge, 0);
    assert!(rel(e, 190e3) < 1e-9, "n̂·E {e} against the reading 190 kV/m");
    assert!(rel(x.model_field.unwrap(), e) < 1e-9);
    assert!(x.residual.abs() <= 1e-9 * 190e3, "{}", x.residual);
    assert!(x.reproduced() && x.warnings.is_empty(), "{:?}", x.warnings);
    let m = r.method.as_ref().unwrap();
    assert!(m.self_consistent, "{m:?}");
    // T1 ionises at the fitted charge (its tip field reaches the onset)
    // and leaves what its response gives for the density arriving.
    let t1 = &r.eliminators[0];
    let e1 = &l.eliminators[0];
    assert!(
        t1.active && t1.tip_field.unwrap() >= e1.onset.unwrap(),
        "{t1:?}"
    );
    let a = t1.sigma_in.abs();
    let expected = a.min((a * (1.0 - e1.efficiency)).max(e1.residual));
    assert!(rel(t1.sigma_out, expected.copysign(t1.sigma_in)) < 1e-12);
    // The fitted charge is not the one a fit with T1 off would give: the
    // readings do depend on T1's regime here.
    let off = line(&GRAVURE.replace(T1, &format!("{}, onset: 10 MV/m}}", &T1[..T1.len() - 1])));
    let x_off = invert(&off, &s).segments[0].fitted;
    assert!(rel(r.segments[0].fitted, x_off) > 1e-4, "{x_off}");
}

/// `readings --format json` gives `at`, `normal` and `model_field`;
/// `field --at` there gives n̂·E = model_field = the reading (1e-9).
#[test]
fn gravure_json_checks_with_field_at() {
    let out = websigma()
        .args([
            "readings",
            "tests/fixtures/lines/gravure.yaml",
            "--format",
            "json",
        ])
        .assert()
        .success()
        .get_output()
        .stdout
        .clone();
    let v: serde_json::Value = serde_json::from_slice(&out).unwrap();
    let x = &v["readings"][0];
    let at: Vec<f64> = (0..3).map(|i| x["at"][i].as_f64().unwrap()).collect();
    let n: Vec<f64> = (0..3).map(|i| x["normal"][i].as_f64().unwrap()).collect();
    let model = x["model_field"].as_f64().unwrap();
    assert!(x["reproduced"].as_bool().unwrap());
    let out = websigma()
        .args([
            "field",
            "tests/fixtures/lines/gravure.yaml",
            "--at",
            &format!("{:?},{:?},{:?}", at[0], at[1], at[2]),
            "--format",
            "json",
        ])
        .assert()
        .success()
        .get_output()
        .stdout
        .clone();
    let f: serde_json::Value = serde_json::from_slice(&out).unwrap();
    let e: f64 = (0..3)
        .map(|i| f["points"][0]["E"][i].as_f64().unwrap() * n[i])
        .sum();
    assert!(rel(e, model) < 1e-9, "{e} vs {model}");
    assert!(rel(e, 190e3) < 1e-9, "{e}");
    assert!(x["residual"].as_f64().unwrap().abs() <= 1e-9 * 190e3);
}

/// A reading in T1's onset gap: just below the density σc where T1 starts
/// to ionise MR1 reads r−, just above r+ > r− (T1 then removes charge whose
/// field opposes the meter's); no density gives a reading between them.
/// The fit must say so: an error-level finding, exit 1, the residual from
/// the final profile and larger than the tolerance.
#[test]
fn a_reading_in_the_onset_gap_is_an_error() {
    let (l, s) = gravure();
    // T1's tip field is linear in σ0 while it is off (the field is linear
    // in the charge), so σc = E_on / (E_tip per unit σ0).
    let unit = invert(&line(&variant(1e-6, None, T1, "")), &s);
    assert!(!unit.eliminators[0].active);
    let sc = l.eliminators[0].onset.unwrap() / unit.eliminators[0].tip_field.unwrap() * 1e-6;
    let (below, on_below) = forward(&s, sc * (1.0 - 1e-6), T1);
    let (above, on_above) = forward(&s, sc * (1.0 + 1e-6), T1);
    assert!(!on_below && on_above);
    let gap = above - below;
    // About 0.1 kV/m here (T1 is a span away from MR1): far below what a
    // 5 % meter resolves, so the test meter is a precise one.
    assert!(gap > 60.0, "gap {gap} V/m");
    let mid = 0.5 * (below + above);
    // A meter good to 0.01 % + 1 V/m: u ≈ 19 V/m, under half the gap.
    let meter = "meter: {accuracy: 0.01 %, offset: 1 V/m}\n";
    let text = variant(3e-6, Some(mid), T1, meter);
    let gl = line(&text);
    let r = invert(&gl, &s);
    let x = &r.readings[0];
    assert!(!x.reproduced(), "{x:?}");
    assert!(x.residual.abs() > x.uncertainty && x.residual.abs() > 0.1 * gap);
    // The residual is the reading minus the final profile's own field.
    let e = normal_field(&gl, &s, &r.charge, 0);
    assert!(
        rel(x.residual, mid - e) < 1e-9,
        "{} vs {}",
        x.residual,
        mid - e
    );
    // The fit lands at the switch: within 1e-6 of σc.
    assert!(
        rel(r.segments[0].fitted, sc) < 1e-6,
        "{}",
        r.segments[0].fitted
    );
    assert!(!r.method.as_ref().unwrap().self_consistent);
    assert!(
        x.warnings
            .iter()
            .any(|w| matches!(w, ReadingNote::NotReproduced { .. }))
    );
    // The assessment fails on it.
    let a = websigma::pipeline::analyse(
        &gl,
        &websigma::assess::with_air_limit(Vec::new()),
        &websigma::pipeline::Settings::new(settings()),
    )
    .unwrap();
    let f = a
        .evaluation
        .assessment
        .findings
        .iter()
        .find(|f| &*f.rule == "reproduced")
        .unwrap();
    assert_eq!(f.verdict, websigma::assess::Verdict::Fail);
    assert!(rel(f.value, x.residual.abs() / x.uncertainty) < 1e-12);
    // And so do `assess` (exit 1) and `readings` (exit 1, marked).
    let (d, path) = temp_yaml(&text);
    let out = websigma()
        .arg("assess")
        .arg(&path)
        .arg("--out")
        .arg(d.path().join("out"))
        .args(["--map-resolution", "20"])
        .assert()
        .code(1)
        .get_output()
        .stdout
        .clone();
    let out = String::from_utf8(out).unwrap();
    assert!(
        out.lines()
            .any(|l| l.contains("FAIL") && l.contains("readings/reproduced")),
        "{out}"
    );
    // The report says what to do about it, and marks the reading.
    let md =
        std::fs::read_to_string(crate::util::only_report(&d.path().join("out")).join("report.md"))
            .unwrap();
    assert!(
        md.contains("does not give back a reading on span S4 (R3-R4)"),
        "{md}"
    );
    assert!(md.contains("NOT REPRODUCED"));
    let out = websigma()
        .args(["readings", path.to_str().unwrap()])
        .assert()
        .code(1)
        .get_output()
        .clone();
    let all = format!(
        "{}{}",
        String::from_utf8_lossy(&out.stdout),
        String::from_utf8_lossy(&out.stderr)
    );
    assert!(all.contains("NOT REPRODUCED"), "{all}");
}

/// With a powered bar in T1's place the response is affine and the fit is
/// the linear solve: x = (r − b)/g with b = r(σ0 = 0), g = r(1 µC/m²) − b
/// (forward model), in one solve, reproducing the reading.
#[test]
fn a_powered_bar_fits_as_the_linear_solve() {
    let (_, s) = gravure();
    let powered =
        "  - {id: T1, kind: powered, span: R4-R5, position: 40 %, distance: 50 mm, side: above}";
    let (b, _) = forward(&s, 0.0, powered);
    let (r1, _) = forward(&s, 1e-6, powered);
    let g = (r1 - b) / 1e-6;
    let r = 150e3;
    let l = line(&variant(3e-6, Some(r), powered, ""));
    let res = invert(&l, &s);
    let read = match l.readings[0].value {
        websigma::model::ReadingValue::Field(e) => e,
        ref v => panic!("{v:?}"),
    };
    let x = (read - b) / g;
    assert!(
        rel(res.segments[0].fitted, x) < 1e-9,
        "{} vs {x}",
        res.segments[0].fitted
    );
    let m = res.method.as_ref().unwrap();
    assert!(
        m.self_consistent && m.iterations == 1 && m.passive == 0,
        "{m:?}"
    );
    assert!(res.readings[0].residual.abs() <= 1e-9 * r);
}

/// T1 with an onset of 400 kV/m, far above the field at its tips: the
/// built-in `onset` check warns, value = E_on/E_tip with E_tip = |E| at
/// the tips of the final profile (T1 off), and says how far it is.
#[test]
fn a_device_below_its_onset_is_a_warning() {
    let (_, s) = gravure();
    let t1 = "  - {id: T1, kind: passive, span: R4-R5, position: 40 %, distance: 50 mm, side: above, onset: 400 kV/m}";
    let l = line(&variant(3e-6, Some(190e3), t1, ""));
    let a = websigma::pipeline::evaluate(&s, &l, &websigma::assess::with_air_limit(Vec::new()))
        .unwrap();
    let e = &l.eliminators[0];
    let (tip, _) = meter_geometry(&l.path.spans[e.span], e.along, 0.0, e.distance, e.side);
    let tip_field = s.web(&a.charge).at(tip, false).unwrap().e_magnitude();
    assert!(tip_field < 400e3 && tip_field > 10e3, "{tip_field}");
    assert!(!a.readings.eliminators[0].active);
    let f = a
        .assessment
        .findings
        .iter()
        .find(|f| &*f.rule == "onset")
        .unwrap();
    assert_eq!(f.verdict, websigma::assess::Verdict::Warn);
    assert!(
        rel(f.value, 400e3 / tip_field) < 1e-9,
        "{} vs {}",
        f.value,
        400e3 / tip_field
    );
    let words = websigma::report::notes::finding_notes(&l, f);
    assert!(
        words.contains("T1 does not ionise at 50 mm: it neutralises nothing"),
        "{words}"
    );
    let pct = format!("{:.3}", tip_field / 400e3 * 100.0);
    assert!(words.contains(&pct[..4]), "{words} / {pct}");
    // The gravure line as shipped: T1 ionises, the check passes.
    let g = line(GRAVURE);
    let a = websigma::pipeline::evaluate(&s, &g, &websigma::assess::with_air_limit(Vec::new()))
        .unwrap();
    let f = a
        .assessment
        .findings
        .iter()
        .find(|f| &*f.rule == "onset")
        .unwrap();
    assert_eq!(f.verdict, websigma::assess::Verdict::Pass);
    assert!(f.value < 1.0);
}

/// Both regimes of T1, by hand: an entry density well below σc (T1 off)
/// and well above (T1 on) invert back to the entry density.
#[test]
fn readings_from_the_forward_model_invert_back_in_both_regimes() {
    let (_, s) = gravure();
    for (sigma, on) in [(1.5e-6, false), (6e-6, true), (-6e-6, true)] {
        let (r, active) = forward(&s, sigma, T1);
        assert_eq!(active, on, "σ0 = {sigma}");
        let truth = line(&variant(sigma, None, T1, "")).charge[0].sigma;
        let l = line(&variant(3e-6, Some(r), T1, ""));
        let res = invert(&l, &s);
        assert!(
            rel(res.segments[0].fitted, truth) < 1e-9,
            "σ0 = {sigma}: fitted {}",
            res.segments[0].fitted
        );
        assert_eq!(res.eliminators[0].active, on);
    }
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(12))]
    /// For random entry densities of either sign (T1 on or off), the
    /// readings the forward model gives invert back to the entry density
    /// to 1e-9 relative.
    #[test]
    fn forward_then_invert_recovers_the_entry(mag in 0.3f64..12.0, negative in any::<bool>()) {
        let (_, s) = gravure();
        let sigma = if negative { -mag } else { mag } * 1e-6;
        let bare = line(&variant(sigma, None, T1, ""));
        let truth = bare.charge[0].sigma;
        let (r, _) = forward(&s, sigma, T1);
        let l = line(&variant(sigma, Some(r), T1, ""));
        let res = invert(&l, &s);
        prop_assert!(rel(res.segments[0].fitted, truth) < 1e-9,
            "σ0 {truth}: fitted {}", res.segments[0].fitted);
        prop_assert!(res.readings[0].reproduced());
    }
}
