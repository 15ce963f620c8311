//! Validation through the library: every problem collected with its YAML
//! path, and the values that are derived from the input (τ = ε0·εr·ρ).

use crate::util::SMALL_LINE;
use websigma::model::{AcrossShape, parse_line};
use websigma::units::EPS0;

#[test]
fn collects_every_problem_with_its_yaml_path() {
    let text = SMALL_LINE
        .replace("width: 1.0 m", "width: 1.0")
        .replace("speed: 1 m/s", "speed: fast")
        .replace(
            "{id: B, center: [2 m, 1 m], diameter: 100 mm",
            "{id: B, center: [2 m, 1 m], diameter: 100 kV",
        );
    let err = parse_line(&text).unwrap_err();
    let paths: Vec<&str> = err.issues.iter().map(|i| i.path.as_str()).collect();
    assert!(paths.contains(&"web.width"), "{paths:?}");
    assert!(paths.contains(&"web.speed"), "{paths:?}");
    assert!(paths.contains(&"rollers[1].diameter"), "{paths:?}");
    let msg = err.to_string();
    assert!(
        msg.contains("web.width: expected a length such as \"120 mm\", got \"1.0\""),
        "{msg}"
    );
    assert!(msg.contains("3 problems"), "{msg}");
}

#[test]
fn syntax_errors_carry_line_and_column() {
    let err = parse_line("web:\n  width: [1 m\n").unwrap_err();
    assert!(err.issues[0].location.is_some(), "{err}");
}

/// τ = ε0·εr·ρ (continuity equation, FACTS.md): εr = 3, ρ = 1e12 Ω·m gives
/// 26.56 s.
#[test]
fn relaxation_time_from_resistivity() {
    let text = SMALL_LINE.replace("relaxation_time: 100 s", "volume_resistivity: 1e12 ohm m");
    let line = parse_line(&text).unwrap();
    let tau = EPS0 * 3.0 * 1e12;
    assert!((line.web.relaxation_time - tau).abs() < 1e-12 * tau);
    assert!((line.web.decay_length() - tau * 1.0).abs() < 1e-12 * tau);
}

#[test]
fn across_profiles_are_parsed_and_checked() {
    let with = |p: &str| {
        parse_line(&SMALL_LINE.replace("charge:", &format!("across_profile: {p}\ncharge:")))
    };
    assert_eq!(
        with("{shape: edges, k: 0.5}").unwrap().across.shape,
        AcrossShape::Edges(0.5)
    );
    assert_eq!(
        with("{shape: tilt, k: -0.2}").unwrap().across.shape,
        AcrossShape::Tilt(-0.2)
    );
    let t = with("{shape: table, table: [[-0.5 m, 2], [0 m, 1], [0.5 m, 3]]}").unwrap();
    assert!((t.across.f(0.25) - 2.0).abs() < 1e-15);
    assert!((t.across.f(-0.25) - 1.5).abs() < 1e-15);
    assert!(
        with("{shape: table, table: [[-0.5 m, 2], [0.5 m, 3]]}")
            .unwrap_err()
            .to_string()
            .contains("f(0) = 2.5")
    );
    assert!(
        with("{shape: table, table: [[-0.2 m, 1], [0.5 m, 1]]}")
            .unwrap_err()
            .to_string()
            .contains("cover the whole web")
    );
    assert!(
        with("{shape: edges}")
            .unwrap_err()
            .to_string()
            .contains("across_profile.k: missing")
    );
    assert!(
        with("{shape: wavy}")
            .unwrap_err()
            .to_string()
            .contains("expected one of uniform | edges | tilt | table")
    );
}

#[test]
fn charge_entries_set_add_and_relax() {
    let text = SMALL_LINE.replace(
        "  - at: start\n    sigma: 5 uC/m^2",
        "  - at: start\n    sigma: 5 uC/m^2\n  - at: B\n    adds: 2 uC/m^2",
    );
    let line = parse_line(&text).unwrap();
    let charge = websigma::charge::charge_profile(&line);
    let s_b = line.path.departure_s[2];
    // σc just after B = 5e-6·exp(−s_B/(v·τ)) + 2e-6 (λ = 1 m/s × 100 s).
    let expect = 5e-6 * (-s_b / 100.0).exp() + 2e-6;
    assert!((charge.sigma_c(s_b) - expect).abs() < 1e-18);
    assert!((charge.sigma_c(0.0) - 5e-6).abs() < 1e-20);
    assert_eq!(charge.segments.len(), 2);
}

#[test]
fn point_inside_a_roller_or_below_the_ground_is_refused() {
    let inside = SMALL_LINE.replace("at: [1 m, 0 m, 1.075 m]", "at: [2 m, 0.1 m, 1.0 m]");
    assert!(
        parse_line(&inside)
            .unwrap_err()
            .to_string()
            .contains("points[0].at: the point lies inside roller B")
    );
    let below = SMALL_LINE
        .replace("points:", "ground_plane: 0.5 m\npoints:")
        .replace("at: [1 m, 0 m, 1.075 m]", "at: [1 m, 0 m, 0.2 m]");
    assert!(
        parse_line(&below)
            .unwrap_err()
            .to_string()
            .contains("below the ground plane")
    );
}

mod no_panic {
    //! No panic on any input: arbitrary text, and the demo line with one
    //! line removed or one value replaced, go through validation, the
    //! readings inversion and the field at a point returning Ok or Err.
    use proptest::prelude::*;
    use websigma::field::{Scene, SolverSettings};
    use websigma::model::parse_line;

    fn run(text: &str) {
        if let Ok(line) = parse_line(text) {
            let st = SolverSettings::new(1e-6).unwrap();
            if let Ok(r) =
                websigma::readings::invert_readings(&line, &Scene::new(&line, st).unwrap())
            {
                let scene_m = Scene::new(&line, st).unwrap();
                let m = scene_m.web(&r.charge);
                let _ = m.at([1.0, 0.3, 2.0], false);
            }
        }
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(64))]

        #[test]
        fn arbitrary_text_never_panics(text in "\\PC{0,400}") {
            run(&text);
        }

        #[test]
        fn a_demo_line_removed_never_panics(k in 0usize..200) {
            let lines: Vec<&str> = websigma::DEMO_LINE.lines().collect();
            let k = k % lines.len();
            let text: String = lines.iter().enumerate().filter(|(i, _)| *i != k).map(|(_, l)| format!("{l}\n")).collect();
            run(&text);
        }

        #[test]
        fn a_demo_value_replaced_never_panics(k in 0usize..400, v in prop_oneof![
            Just("0".to_string()), Just("-1 m".to_string()), Just("1e300 m".to_string()),
            Just("nan".to_string()), Just("[]".to_string()), Just("{}".to_string()),
            Just("1e-30 mm".to_string()), Just("100 %".to_string()), Just("5 C/m^2".to_string()),
            Just("R1".to_string()), Just("S99".to_string()), Just("~".to_string()),
        ]) {
            // Replace the k-th "key: value" value.
            let mut n = 0;
            let mut out = String::new();
            for l in websigma::DEMO_LINE.lines() {
                if let Some(i) = l.find(": ") {
                    if n == k % 120 {
                        out.push_str(&format!("{}: {v}\n", &l[..i]));
                        n += 1;
                        continue;
                    }
                    n += 1;
                }
                out.push_str(l);
                out.push('\n');
            }
            run(&out);
        }
    }
}
