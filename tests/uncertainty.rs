//! Ranges over the inputs' tolerances (`websigma::uncertainty`): every
//! finding's and point's bounds against brute force over the corners of the
//! input box and random inputs inside it, exactness where the method claims
//! it, the readings' tolerances carried through, the uncertain verdict and
//! its exit code. Small invented lines; the extremes of a quantity linear in
//! the inputs over a box lie at its corners (a linear-programming fact), so
//! the corners are the reference.

use assert_cmd::Command;
use proptest::prelude::*;
use std::collections::HashMap;
use websigma::assess::{BoundBasis, ThresholdProfile, Verdict, load_profile, with_air_limit};
use websigma::field::SolverSettings;
use websigma::model::{Line, ReadingValue, parse_line};
use websigma::pipeline::{Analysis, Settings, analyse};

/// Three charge entries, each with a tolerance (relative, absolute, and one
/// whose range crosses zero), on a web that does not relax, over a grounded
/// floor; an operator, an electronics item and a probe.
fn three_entries(sigmas: [&str; 3]) -> String {
    format!(
        "line: Ranges test line (invented)\n\
         web: {{width: 1 m, thickness: 30 um, relative_permittivity: 2.2, relaxation_time: 1e30 s, speed: 1 m/s}}\n\
         ground_plane: 0 m\n\
         path:\n  - point: [0 m, 1 m]\n    id: A\n  - point: [1 m, 1 m]\n    id: B\n  - point: [1.5 m, 1.6 m]\n    id: C\n  - point: [3 m, 1.6 m]\n    id: D\n\
         charge:\n  - at: start\n    sigma: {}\n  - at: B\n    sigma: {}\n  - at: C\n    sigma: {}\n\
         points:\n  - {{id: OP, kind: operator, at: [1.2 m, 0.2 m, 1.05 m]}}\n  - {{id: EL, kind: electronics, at: [2 m, 0 m, 1.62 m]}}\n  - {{id: PR, kind: probe, at: [0.5 m, 0.3 m, 1.3 m]}}\n\
         assess: [operator-shock, electronics]\n",
        sigmas[0], sigmas[1], sigmas[2]
    )
}

/// Nominal densities [µC/m²] and tolerances [µC/m²] of [`three_entries`].
const NOMINAL: [f64; 3] = [2.0, 1.0, -0.5];
const TOLERANCE: [f64; 3] = [0.4, 0.5, 1.0];

fn toleranced() -> String {
    three_entries([
        "2 uC/m^2 ± 20 %",
        "1 uC/m^2 ± 0.5 uC/m^2",
        "-0.5 uC/m^2 +- 1 uC/m^2",
    ])
}

/// The same line with the densities given exactly (no tolerance) [µC/m²].
fn exact(s: [f64; 3]) -> String {
    let t = |x: f64| format!("{x:?} uC/m^2");
    three_entries([&t(s[0]), &t(s[1]), &t(s[2])])
}

fn line(text: &str) -> Line {
    match parse_line(text) {
        Ok(l) => l,
        Err(e) => panic!("{e}\n{text}"),
    }
}

fn analysed(line: &Line) -> Analysis {
    let profiles: Vec<ThresholdProfile> = with_air_limit(
        line.assess
            .iter()
            .map(|n| load_profile(n).unwrap())
            .collect(),
    );
    analyse(line, &profiles, &Settings::new(SolverSettings::default())).unwrap()
}

/// Each finding's value by (profile, rule, subject).
fn values(a: &Analysis) -> HashMap<String, f64> {
    a.evaluation
        .assessment
        .findings
        .iter()
        .map(|f| (format!("{}/{}/{:?}", f.profile, f.rule, f.subject), f.value))
        .collect()
}

/// |E| and V at every point.
fn point_values(a: &Analysis) -> Vec<(f64, f64, [f64; 3])> {
    a.evaluation
        .points
        .points
        .iter()
        .map(|p| (p.e_magnitude(), p.v, p.e))
        .collect()
}

/// Asserts every value of `corner` lies within the ranges of `bounded`
/// (relative slack 1e-9 for rounding) and returns nothing.
fn assert_within(bounded: &Analysis, corner: &Analysis, what: &str) {
    let slack = |x: f64| 1e-9 * x.abs().max(1e-30);
    let vals = values(corner);
    for f in &bounded.evaluation.assessment.findings {
        // The readings' own checks compare each reading with the fit: they
        // move with the readings by design and carry no range.
        if f.bounds.basis == BoundBasis::ReadingsCheck {
            continue;
        }
        let k = format!("{}/{}/{:?}", f.profile, f.rule, f.subject);
        let Some(&v) = vals.get(&k) else {
            panic!("{k} missing at {what}")
        };
        assert!(
            v >= f.bounds.low - slack(v) && v <= f.bounds.high + slack(v),
            "{k} at {what}: {v} outside [{}, {}] ({:?})",
            f.bounds.low,
            f.bounds.high,
            f.bounds.basis
        );
    }
    let u = &bounded.evaluation.uncertainty;
    for (i, (e, v, c)) in point_values(corner).into_iter().enumerate() {
        let b = &u.points[i];
        assert!(
            e >= b.e[0] - slack(e) && e <= b.e[1] + slack(e),
            "|E| at point {i}, {what}"
        );
        assert!(
            v >= b.v[0] - slack(v) && v <= b.v[1] + slack(v),
            "V at point {i}, {what}"
        );
        // Each span's share of the field there.
        for c in &corner.evaluation.points.points[i].contributions {
            let share = b
                .spans
                .iter()
                .find(|s| s.span == c.span)
                .expect("a share range");
            let m = (c.e[0] * c.e[0] + c.e[1] * c.e[1] + c.e[2] * c.e[2]).sqrt();
            assert!(
                m >= share.e[0] - slack(m) && m <= share.e[1] + slack(m),
                "{} at {i}",
                c.span
            );
            assert!(c.v >= share.v[0] - slack(c.v) && c.v <= share.v[1] + slack(c.v));
        }
        for (x, r) in c.iter().zip(b.components) {
            assert!(
                *x >= r[0] - slack(*x) && *x <= r[1] + slack(*x),
                "E at point {i}, {what}"
            );
        }
    }
}

fn corners() -> Vec<[f64; 3]> {
    (0..8)
        .map(|m: usize| {
            std::array::from_fn(|i| {
                let sign = if m >> i & 1 == 1 { 1.0 } else { -1.0 };
                NOMINAL[i] + sign * TOLERANCE[i]
            })
        })
        .collect()
}

/// Every corner of the three tolerances lies within every range, and the
/// ranges the method calls exact (V and the components of E at a point:
/// linear in the inputs) are the extremes over the corners.
#[test]
fn ranges_hold_every_corner_and_signed_ones_are_the_corner_extremes() {
    let bounded = analysed(&line(&toleranced()));
    let u = &bounded.evaluation.uncertainty;
    assert_eq!(u.inputs.len(), 3, "{:#?}", u.inputs);
    for (inp, (n, t)) in u.inputs.iter().zip(NOMINAL.iter().zip(TOLERANCE)) {
        assert!((inp.nominal - n * 1e-6).abs() < 1e-15);
        assert!((inp.low - (n - t) * 1e-6).abs() < 1e-15);
        assert!((inp.high - (n + t) * 1e-6).abs() < 1e-15);
    }
    let runs: Vec<Analysis> = corners()
        .iter()
        .map(|c| analysed(&line(&exact(*c))))
        .collect();
    let mut v_range = vec![[f64::INFINITY, f64::NEG_INFINITY]; u.points.len()];
    for (c, a) in corners().iter().zip(&runs) {
        assert_within(&bounded, a, &format!("{c:?}"));
        for (i, (_, v, _)) in point_values(a).into_iter().enumerate() {
            v_range[i] = [v_range[i][0].min(v), v_range[i][1].max(v)];
        }
    }
    for (i, r) in v_range.iter().enumerate() {
        let b = u.points[i].v;
        let scale = r[0].abs().max(r[1].abs());
        assert!(
            (b[0] - r[0]).abs() <= 1e-9 * scale,
            "V low at {i}: {} vs {}",
            b[0],
            r[0]
        );
        assert!(
            (b[1] - r[1]).abs() <= 1e-9 * scale,
            "V high at {i}: {} vs {}",
            b[1],
            r[1]
        );
    }
    // Charge-dependent findings are bounded, not left open.
    for f in &bounded.evaluation.assessment.findings {
        assert_ne!(
            f.bounds.basis,
            BoundBasis::NotBounded,
            "{}/{}",
            f.profile,
            f.rule
        );
        assert!(f.bounds.low <= f.value && f.value <= f.bounds.high);
    }
}

/// With one charged segment, and that one uncertain, the triangle
/// inequality is exact: a magnitude's range is the extremes over the
/// input's two ends.
#[test]
fn one_charged_uncertain_segment_gives_the_exact_range_of_every_magnitude() {
    let text = three_entries(["2 uC/m^2 ± 20 %", "0 uC/m^2", "0 uC/m^2"]);
    let bounded = analysed(&line(&text));
    assert_eq!(bounded.evaluation.uncertainty.inputs.len(), 1);
    let ends = [1.6, 2.4].map(|s| analysed(&line(&exact([s, 0.0, 0.0]))));
    let (lo, hi) = (values(&ends[0]), values(&ends[1]));
    for f in &bounded.evaluation.assessment.findings {
        if !matches!(f.bounds.basis, BoundBasis::Linear | BoundBasis::Quadratic) {
            continue;
        }
        let k = format!("{}/{}/{:?}", f.profile, f.rule, f.subject);
        let (a, b) = (lo[&k], hi[&k]);
        let (min, max) = (a.min(b), a.max(b));
        assert!(
            (f.bounds.low - min).abs() <= 1e-6 * max,
            "{k}: {} vs {min}",
            f.bounds.low
        );
        assert!(
            (f.bounds.high - max).abs() <= 1e-6 * max,
            "{k}: {} vs {max}",
            f.bounds.high
        );
    }
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 10, .. ProptestConfig::default() })]
    /// Densities drawn inside the box give values inside every range.
    #[test]
    fn random_inputs_inside_the_box_stay_inside_the_ranges(
        t in proptest::array::uniform3(-1.0f64..=1.0)
    ) {
        let bounded = analysed(&line(&toleranced()));
        let s: [f64; 3] = std::array::from_fn(|i| NOMINAL[i] + t[i] * TOLERANCE[i]);
        let a = analysed(&line(&exact(s)));
        assert_within(&bounded, &a, &format!("{s:?}"));
    }
}

/// The readings' tolerances carried through: the demo line (conductors
/// off, for speed) with every reading moved to either end of its
/// tolerance, and with every meter at ± its distance tolerance, gives
/// values inside the ranges of the demo as given.
#[test]
fn demo_readings_at_the_ends_of_their_tolerances_stay_inside_the_ranges() {
    let demo = line(websigma::DEMO_LINE);
    let bounded = analysed(&demo);
    let results = &bounded.evaluation.readings.readings;
    assert!(!bounded.evaluation.uncertainty.inputs.is_empty());
    let moved = |mask: usize| {
        let mut l = demo.clone();
        for (i, (r, res)) in l.readings.iter_mut().zip(results).enumerate() {
            let sign = if mask >> i & 1 == 1 { 1.0 } else { -1.0 };
            let du = sign * res.uncertainty;
            r.value = match r.value {
                ReadingValue::Field(f) => ReadingValue::Field(f + du),
                ReadingValue::Voltage(v, Some(d)) => ReadingValue::Voltage(v + du * d, Some(d)),
                ReadingValue::Voltage(v, None) => ReadingValue::Voltage(v + du * r.distance, None),
                ReadingValue::Sigma(s) => ReadingValue::Sigma(s + du),
            };
        }
        l
    };
    let n = demo.readings.len();
    for mask in 0..(1usize << n) {
        let a = analysed(&moved(mask));
        assert_within(&bounded, &a, &format!("readings corner {mask:b}"));
    }
    let tol = demo.meter.distance_tolerance;
    for d in [-tol, tol] {
        let mut l = demo.clone();
        for r in &mut l.readings {
            r.distance += d;
        }
        assert_within(&bounded, &analysed(&l), &format!("meters moved {d} m"));
    }
}

/// A finding whose range straddles its failure limit is uncertain, counted
/// as failing: `assess` exits 1 and says so; without the tolerance the same
/// line passes.
#[test]
fn a_straddling_finding_is_uncertain_and_exits_1() {
    // The body voltage of the operator for 1 µC/m² on every span, then the
    // density that puts it at 90 % of the 10 kV failure limit.
    let probe = analysed(&line(&exact([1.0, 1.0, 1.0])));
    let v1 = probe.evaluation.points.points[0].v.abs();
    let s = 0.9 * 10e3 / v1;
    // The operator rules only (the electronics item would fail anyway).
    let text = |tol: &str| {
        three_entries([
            &format!("{s:?} uC/m^2{tol}"),
            &format!("{s:?} uC/m^2{tol}"),
            &format!("{s:?} uC/m^2{tol}"),
        ])
        .replace(
            "assess: [operator-shock, electronics]",
            "assess: [operator-shock]",
        )
    };
    let a = analysed(&line(&text(" ± 20 %")));
    let f = a
        .evaluation
        .assessment
        .findings
        .iter()
        .find(|f| &*f.rule == "body-voltage")
        .expect("a body-voltage finding");
    assert_eq!(f.verdict, Verdict::Uncertain);
    assert!(f.bounds.low < 10e3 && f.bounds.high > 10e3 && f.value < 10e3);
    assert!(a.evaluation.assessment.verdict.exceeds());

    let dir = tempfile::tempdir().unwrap();
    for (tol, code, word) in [(" ± 20 %", 1, "UNCERTAIN"), ("", 0, "PASS")] {
        let file = dir.path().join(format!("line{code}.yaml"));
        std::fs::write(&file, text(tol)).unwrap();
        let out = Command::cargo_bin("websigma")
            .unwrap()
            .args(["assess", file.to_str().unwrap(), "--out"])
            .arg(dir.path())
            .output()
            .unwrap();
        let stdout = String::from_utf8_lossy(&out.stdout);
        assert_eq!(out.status.code(), Some(code), "{stdout}");
        assert!(stdout.contains(word), "{stdout}");
        if code == 1 {
            assert!(stdout.contains("1 uncertain"), "{stdout}");
        }
    }
}

/// A line without readings or tolerances has no uncertain input: every
/// range is its value.
#[test]
fn no_tolerance_means_point_ranges() {
    let a = analysed(&line(&exact(NOMINAL)));
    assert!(a.evaluation.uncertainty.inputs.is_empty());
    for f in &a.evaluation.assessment.findings {
        assert_eq!((f.bounds.low, f.bounds.high), (f.value, f.value));
        assert!(f.bounds.shares.is_empty());
    }
}

/// With the conductors' solve (an isolated person near the web, 100 mm
/// panels): the person's floating potential and spark energy ½CV² are
/// bounded too, and every corner of the three tolerances stays inside.
#[test]
fn conductor_results_and_spark_energies_hold_every_corner() {
    let with_person = |text: String| {
        line(&text.replace(
            "assess:",
            "conductors:\n  - {id: PERSON, shape: person, earthing: isolated, at: [1.2 m, 1.0 m]}\nassess:",
        ))
    };
    let settings = Settings::new(SolverSettings::default().with_conductors(0.1).unwrap());
    let profiles: Vec<ThresholdProfile> = with_air_limit(vec![
        load_profile("operator-shock").unwrap(),
        load_profile("electronics").unwrap(),
    ]);
    let run = |l: &Line| analyse(l, &profiles, &settings).unwrap();
    let bounded = run(&with_person(toleranced()));
    let energy = bounded
        .evaluation
        .assessment
        .findings
        .iter()
        .find(|f| &*f.rule == "shock-energy" && format!("{:?}", f.subject).contains("Conductor"))
        .expect("the person's shock energy");
    assert_eq!(energy.bounds.basis, BoundBasis::Quadratic);
    assert!(energy.bounds.low < energy.value && energy.value < energy.bounds.high);
    let ranges = &bounded.evaluation.uncertainty.conductors;
    assert!(!ranges.is_empty());
    let mut seen = vec![[f64::INFINITY, f64::NEG_INFINITY]; ranges.len()];
    for c in corners() {
        let a = run(&with_person(exact(c)));
        assert_within(&bounded, &a, &format!("{c:?} with the person"));
        let results = a
            .scene
            .web(&a.evaluation.charge)
            .conductor_results()
            .unwrap();
        for (i, r) in results.iter().enumerate() {
            seen[i] = [seen[i][0].min(r.potential), seen[i][1].max(r.potential)];
            if let (Some(w), Some(b)) = (r.spark_energy, ranges[i].spark_energy) {
                assert!(
                    w >= b[0] * (1.0 - 1e-9) && w <= b[1] * (1.0 + 1e-9),
                    "{}",
                    r.id
                );
            }
        }
    }
    // A potential is linear in the charge: its range is the corners' extremes.
    for (b, s) in ranges.iter().zip(&seen) {
        let scale = s[0].abs().max(s[1].abs()).max(1e-12);
        assert!(
            (b.potential[0] - s[0]).abs() <= 1e-7 * scale,
            "{:?} vs {s:?}",
            b.potential
        );
        assert!(
            (b.potential[1] - s[1]).abs() <= 1e-7 * scale,
            "{:?} vs {s:?}",
            b.potential
        );
    }
}
