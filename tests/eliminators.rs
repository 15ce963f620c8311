//! Static eliminators: the models against hand arithmetic (K. Robinson,
//! PFFC "Static Beat": powered η ≥ 95 %, passive > 80 %; J. A. McInally,
//! IEEE Trans. Ind. Appl. IA-13(3), 1977: passive residual ≈ 1–2 µC/m²),
//! the passive onset decided by the solver, and the placement findings.

use websigma::assess::{Verdict, assess};
use websigma::charge::{charge_profile, decay};
use websigma::field::{FieldMap, Scene, SolverSettings};
use websigma::model::{Line, parse_line};
use websigma::readings::invert_readings;
use websigma::report::build::FindingRow;

/// A straight web through free points A → B → C (2 m each), with charge set
/// at the start and eliminators given as YAML list items.
fn line(sigma_uc: f64, eliminators: &str) -> Line {
    parse_line(&format!(
        "web: {{width: 1 m, thickness: 30 um, relative_permittivity: 3, relaxation_time: 10 s, speed: 2 m/s}}
rollers:
  - {{id: R, center: [4 m, 0.95 m], diameter: 100 mm, earthing: grounded}}
path:
  - point: [0 m, 1 m]
    id: A
  - point: [2 m, 1 m]
    id: B
  - {{roller: R, wrap: cw}}
  - point: [6 m, 1 m]
    id: C
charge:
  - at: start
    sigma: {sigma_uc} uC/m^2
eliminators:
{eliminators}"
    ))
    .unwrap_or_else(|e| panic!("{e}"))
}

fn sigma_after(line: &Line, s: f64) -> f64 {
    invert_readings(line, &Scene::new(line, SolverSettings::default()).unwrap())
        .unwrap()
        .charge
        .sigma_c(s)
}

/// Powered bar: σ′ = σ·(1 − η) + offset, by hand.
#[test]
fn powered_bar_by_hand() {
    let l = line(
        10.0,
        "  - {id: E1, kind: powered, span: S1, position: 50 %, distance: 30 mm, side: above}",
    );
    let lambda = 2.0 * 10.0;
    let s = 1.0;
    let before = 10e-6 * decay(s, lambda);
    let after = sigma_after(&l, s);
    assert!(
        (after - before * 0.05).abs() < 1e-18,
        "{after} vs {}",
        before * 0.05
    );
    let l = line(
        10.0,
        "  - {id: E1, kind: powered, span: S1, position: 1 m, distance: 30 mm, side: above, efficiency: 90 %, residual: 0.2 uC/m^2}",
    );
    assert!((sigma_after(&l, s) - (before * 0.1 + 0.2e-6)).abs() < 1e-18);
    // Downstream it relaxes from the new value.
    let down = sigma_after(&l, 1.5);
    assert!((down - (before * 0.1 + 0.2e-6) * decay(0.5, lambda)).abs() < 1e-18);
}

/// Passive device: it cannot go below its residual, nor raise the density.
#[test]
fn passive_device_residual_by_hand() {
    let strong = line(
        20.0,
        "  - {id: P1, kind: passive, span: S1, position: 1 m, distance: 10 mm, side: above, onset: 1 kV/m}",
    );
    let before = 20e-6 * decay(1.0, 20.0);
    // 20 µC/m² × (1 − 0.8) = 3.9 µC/m² > 1.5 µC/m² residual.
    assert!((sigma_after(&strong, 1.0) - before * 0.2).abs() < 1e-18);
    let weak = line(
        5.0,
        "  - {id: P1, kind: passive, span: S1, position: 1 m, distance: 10 mm, side: above, onset: 1 kV/m}",
    );
    // 5 µC/m² × 0.2 = 1 µC/m² is below the 1.5 µC/m² it cannot go under.
    assert!((sigma_after(&weak, 1.0) - 1.5e-6).abs() < 1e-18);
    let tiny = line(
        1.0,
        "  - {id: P1, kind: passive, span: S1, position: 1 m, distance: 10 mm, side: above, onset: 1 kV/m}",
    );
    // Below the residual it changes nothing.
    assert!((sigma_after(&tiny, 1.0) - 1e-6 * decay(1.0, 20.0)).abs() < 1e-18);
}

/// The passive device ionises exactly when the solver's field at its tips,
/// from the charge arriving there, reaches the onset.
#[test]
fn passive_onset_switches_where_the_tip_field_crosses_it() {
    let probe = line(
        8.0,
        "  - {id: P1, kind: passive, span: S1, position: 1 m, distance: 20 mm, side: above, onset: 1 V/m}",
    );
    let r = invert_readings(
        &probe,
        &Scene::new(&probe, SolverSettings::default()).unwrap(),
    )
    .unwrap();
    let tip = r.eliminators[0].tip_field.unwrap();
    // Independent: the field at the tip point of a web without the device.
    let mut bare = probe.clone();
    bare.eliminators.clear();
    let scene_m = Scene::new(&bare, SolverSettings::default()).unwrap();
    let m = scene_m.web(&charge_profile(&bare));
    let direct = m.at([1.0, 0.0, 1.02], false).unwrap().e_magnitude();
    assert!((tip - direct).abs() <= 1e-9 * direct, "{tip} vs {direct}");
    for (onset, on) in [(tip * 0.999, true), (tip * 1.001, false)] {
        let l = line(
            8.0,
            &format!(
                "  - {{id: P1, kind: passive, span: S1, position: 1 m, distance: 20 mm, side: above, onset: {onset} V/m}}"
            ),
        );
        let r = invert_readings(&l, &Scene::new(&l, SolverSettings::default()).unwrap()).unwrap();
        assert_eq!(r.eliminators[0].active, on, "onset {onset}, tip {tip}");
        let expect = if on {
            8e-6 * decay(1.0, 20.0) * 0.2
        } else {
            8e-6 * decay(1.0, 20.0)
        };
        assert!((r.charge.sigma_c(1.0) - expect).abs() < 1e-18);
    }
    // The default onset, 4 kV / tip distance (from memory — verify).
    let l = line(
        8.0,
        "  - {id: P1, kind: passive, span: S1, position: 1 m, distance: 20 mm, side: above}",
    );
    assert_eq!(l.eliminators[0].onset, Some(4e3 / 0.02));
}

fn findings(l: &Line) -> Vec<FindingRow> {
    let r = invert_readings(l, &Scene::new(l, SolverSettings::default()).unwrap()).unwrap();
    let scene_m = Scene::new(l, SolverSettings::default()).unwrap();
    let m = scene_m.web(&r.charge);
    let pts = FieldMap { points: vec![] };
    assess(l, &r.charge, &m, &pts, &[])
        .unwrap()
        .findings
        .iter()
        .map(|f| FindingRow::new(l, f))
        .collect()
}

fn verdict_of(f: &[FindingRow], rule: &str) -> Option<Verdict> {
    f.iter().find(|x| x.rule == rule).map(|x| x.verdict)
}

#[test]
fn bar_facing_a_roller_is_a_finding() {
    // S2 runs from B to the roller R; a bar 50 mm before the roller at 30 mm
    // is within 3 × 30 mm of it.
    let near = line(
        5.0,
        "  - {id: E1, kind: powered, span: S2, position: 1.95 m, distance: 30 mm, side: above}",
    );
    let f = findings(&near);
    assert_eq!(verdict_of(&f, "facing-roller"), Some(Verdict::Fail));
    let x = f.iter().find(|x| x.rule == "facing-roller").unwrap();
    let clearance = near.path.spans[1].length - 1.95;
    assert!((x.value - 0.09 / clearance).abs() < 1e-12);
    let mid = line(
        5.0,
        "  - {id: E1, kind: powered, span: S2, position: 50 %, distance: 30 mm, side: above}",
    );
    assert_eq!(
        verdict_of(&findings(&mid), "facing-roller"),
        Some(Verdict::Pass)
    );
    // S1 joins two free points: no roller to face.
    let free = line(
        5.0,
        "  - {id: E1, kind: powered, span: S1, position: 10 mm, distance: 30 mm, side: above}",
    );
    assert_eq!(verdict_of(&findings(&free), "facing-roller"), None);
}

#[test]
fn opposite_bars_too_close_are_a_finding() {
    let close = line(
        5.0,
        "  - {id: E1, kind: powered, span: S1, position: 1.00 m, distance: 40 mm, side: above}\n  - {id: E2, kind: powered, span: S1, position: 1.05 m, distance: 40 mm, side: below}",
    );
    assert_eq!(
        verdict_of(&findings(&close), "opposite-bars"),
        Some(Verdict::Warn)
    );
    let apart = line(
        5.0,
        "  - {id: E1, kind: powered, span: S1, position: 0.5 m, distance: 40 mm, side: above}\n  - {id: E2, kind: powered, span: S1, position: 1.5 m, distance: 40 mm, side: below}",
    );
    assert_eq!(
        verdict_of(&findings(&apart), "opposite-bars"),
        Some(Verdict::Pass)
    );
}

/// Capacity: 5·σ·v against the ion output. 20 µC/m² at 2 m/s is 40 µA/m;
/// five times that against a 150 µA/m bar fails, against 1000 µA/m passes.
#[test]
fn undersized_bar_is_a_finding() {
    let small = line(
        20.0,
        "  - {id: E1, kind: powered, span: S1, position: 1 m, distance: 30 mm, side: above, ion_output: 150 uA/m}",
    );
    let f = findings(&small);
    let x = f.iter().find(|x| x.rule == "capacity").unwrap();
    let expect = 5.0 * 20e-6 * decay(1.0, 20.0) * 2.0 / 150e-6;
    assert!((x.value - expect).abs() < 1e-12, "{} vs {expect}", x.value);
    assert_eq!(x.verdict, Verdict::Fail);
    let big = line(
        20.0,
        "  - {id: E1, kind: powered, span: S1, position: 1 m, distance: 30 mm, side: above}",
    );
    assert_eq!(verdict_of(&findings(&big), "capacity"), Some(Verdict::Pass));
}

#[test]
fn powered_bar_in_zone_1_is_a_caution() {
    let mut l = line(
        5.0,
        "  - {id: E1, kind: powered, span: S1, position: 1 m, distance: 30 mm, side: above}",
    );
    l.zones.push(websigma::model::Zone {
        id: "Z1".into(),
        name: None,
        zone: 1,
        gas_group: websigma::model::GasGroup::IIA,
        mie: 0.24e-3,
        min: [0.5, -1.0, 0.9],
        max: [1.5, 1.0, 1.2],
    });
    assert_eq!(
        verdict_of(&findings(&l), "zone-approval"),
        Some(Verdict::Warn)
    );
    l.zones[0].zone = 2;
    assert_eq!(verdict_of(&findings(&l), "zone-approval"), None);
}

#[test]
fn eliminator_input_errors_are_located() {
    let bad = |e: &str| {
        parse_line(&format!(
            "web: {{width: 1 m, thickness: 30 um, relative_permittivity: 3, relaxation_time: 10 s, speed: 2 m/s}}\npath:\n  - point: [0 m, 1 m]\n  - point: [2 m, 1 m]\neliminators:\n{e}"
        ))
        .unwrap_err()
        .to_string()
    };
    assert!(
        bad("  - {id: E1, kind: laser, span: S1, position: 50 %, distance: 30 mm, side: above}")
            .contains("eliminators[0].kind: expected one of powered | passive")
    );
    assert!(
        bad("  - {id: E1, kind: powered, span: S9, position: 50 %, distance: 30 mm, side: above}")
            .contains("eliminators[0].span: unknown span")
    );
    assert!(
        bad("  - {id: E1, kind: powered, span: S1, position: 150 %, distance: 30 mm, side: above}")
            .contains("eliminators[0].position")
    );
    assert!(bad("  - {id: E1, kind: powered, span: S1, position: 50 %, distance: 30 mm, side: above, efficiency: 120 %}").contains("eliminators[0].efficiency"));
    assert!(bad("  - {id: E1, kind: powered, span: S1, position: 50 %, distance: 30 mm, side: above, onset: 5 kV/m}").contains("onset belongs to passive"));
}
