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

/// A surface resistivity R_s [Ω/sq] gives ρ = R_s·t for a web conducting
/// through its bulk (IEC 61340-2-3's relation for a homogeneous sheet), then
/// τ = ε0·εr·ρ; given with ρ or τ as well, it is refused with the reason.
#[test]
fn relaxation_time_from_surface_resistivity() {
    let text = SMALL_LINE.replace("relaxation_time: 100 s", "surface_resistivity: 1e16 ohm/sq");
    let line = parse_line(&text).unwrap();
    let t = line.web.thickness;
    let rho = 1e16 * t;
    assert!((line.web.volume_resistivity.unwrap() - rho).abs() < 1e-12 * rho);
    assert_eq!(line.web.surface_resistivity, Some(1e16));
    let tau = EPS0 * line.web.relative_permittivity * rho;
    assert!((line.web.relaxation_time - tau).abs() < 1e-12 * tau);
    let both = SMALL_LINE.replace(
        "relaxation_time: 100 s",
        "relaxation_time: 100 s\n  surface_resistivity: 1e16 ohm/sq",
    );
    let err = parse_line(&both).unwrap_err().to_string();
    assert!(err.contains("not several"), "{err}");
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

mod conductors {
    //! Rollers' earthing and length, and the `conductors:` list: shapes
    //! resolved to 3-D geometry, and every refusal located (issue #9).
    use crate::util::SMALL_LINE;
    use websigma::model::conductor::{PERSON_FEET_CAPACITANCE, PERSON_HEIGHT, PERSON_WIDTH};
    use websigma::model::geometry::PointProblem;
    use websigma::model::{
        ConductorEarthing, ConductorKind, ConductorShape, Line, ValidationError, parse_line,
    };

    /// SMALL_LINE (web 1 m wide, rollers A at x = 0 and B at x = 2, z = 1 m,
    /// the web at z ≈ 1.05 m between them) with `extra` appended.
    fn with(extra: &str) -> Result<Line, ValidationError> {
        parse_line(&format!("{SMALL_LINE}{extra}"))
    }

    fn refused(extra: &str, expect: &str) {
        let err = with(extra).expect_err(expect).to_string();
        assert!(err.contains(expect), "expected {expect:?} in {err}");
    }

    fn close(a: [f64; 3], b: [f64; 3]) -> bool {
        (0..3).all(|k| (a[k] - b[k]).abs() < 1e-12)
    }

    #[test]
    fn a_roller_without_earthing_is_refused_with_the_reason() {
        let text = SMALL_LINE.replace(
            "diameter: 100 mm, earthing: grounded}\npath",
            "diameter: 100 mm}\npath",
        );
        let err = parse_line(&text).unwrap_err().to_string();
        assert!(
            err.contains("rollers[1].earthing: missing: expected grounded | isolated | insulating"),
            "{err}"
        );
        assert!(err.contains("hide the spark hazard"), "{err}");
        assert!(err.contains("invent screening"), "{err}");
    }

    #[test]
    fn roller_length_defaults_to_the_web_width_plus_0_2_m() {
        let line = parse_line(SMALL_LINE).unwrap();
        let a = &line.rollers[0];
        assert!((a.length - 1.2).abs() < 1e-12, "{}", a.length);
        assert!(a.length_defaulted);
        let given = SMALL_LINE.replace(
            "{id: A, center: [0 m, 1 m], diameter: 100 mm, earthing: grounded}",
            "{id: A, center: [0 m, 1 m], diameter: 100 mm, earthing: grounded, length: 1.5 m}",
        );
        let line = parse_line(&given).unwrap();
        assert_eq!(line.rollers[0].length, 1.5);
        assert!(!line.rollers[0].length_defaulted);
        assert!(line.rollers[1].length_defaulted);
        // The roller as a conductor: centre [x, 0, z], axis ŷ.
        assert_eq!(
            line.rollers[0].cylinder(),
            ConductorShape::Cylinder {
                center: [0.0, 0.0, 1.0],
                axis: [0.0, 1.0, 0.0],
                radius: 0.05,
                length: 1.5
            }
        );
        let short = given.replace("length: 1.5 m", "length: 0.8 m");
        let err = parse_line(&short).unwrap_err().to_string();
        assert!(
            err.contains("rollers[0].length: 800 mm is shorter than the web is wide (1 m)"),
            "{err}"
        );
    }

    /// A point 0.55 m off the centreline inside roller B's circle: inside a
    /// roller of the default length 1.2 m, outside one of 1 m.
    #[test]
    fn inside_a_roller_uses_its_length() {
        let p = "at: [2 m, 0.55 m, 1.0 m]";
        let inside = SMALL_LINE.replace("at: [1 m, 0 m, 1.075 m]", p);
        assert!(
            parse_line(&inside)
                .unwrap_err()
                .to_string()
                .contains("inside roller B")
        );
        let outside = inside.replace(
            "{id: B, center: [2 m, 1 m], diameter: 100 mm, earthing: grounded}",
            "{id: B, center: [2 m, 1 m], diameter: 100 mm, earthing: grounded, length: 1 m}",
        );
        parse_line(&outside).unwrap();
    }

    #[test]
    fn shapes_are_resolved_to_3d_geometry() {
        let line = with(
            "conductors:
  - {id: FRAME, shape: plate, earthing: grounded, from: [0.5 m, -0.8 m, 0.2 m], to: [1.5 m, -0.8 m, 1.4 m]}
  - id: HOOD
    shape: plate
    earthing: isolated
    charge: 5 nC
    corner: [0.5 m, -0.3 m, 1.5 m]
    edge1: [1 m, 0 m, 0 m]
    edge2: [0 m, 600 mm, 100 mm]
  - {id: CAB, shape: box, earthing: grounded, from: [1.5 m, 2 m, 1 m], to: [0.5 m, 1 m, 0 m]}
  - {id: DRUM, shape: cylinder, earthing: isolated, capacitance_to_ground: 50 pF, center: [3 m, 0 m, 0.3 m], axis: [0, 0, 2], radius: 0.2 m, length: 0.6 m}
  - {id: RAIL, shape: cylinder, earthing: grounded, center: [1 m, -1.5 m, 1 m], axis: x, radius: 20 mm, length: 2 m}
",
        )
        .unwrap();
        let c = &line.conductors;
        assert_eq!(c.len(), 5);
        assert_eq!(c[0].kind, ConductorKind::Plate);
        assert_eq!(c[0].yaml_path, "conductors[0]");
        assert_eq!(c[0].earthing, ConductorEarthing::Grounded);
        let ConductorShape::Plate { origin, e1, e2 } = c[0].shape else {
            panic!("{:?}", c[0].shape)
        };
        assert!(close(origin, [0.5, -0.8, 0.2]));
        assert!(close(e1, [1.0, 0.0, 0.0]));
        assert!(close(e2, [0.0, 0.0, 1.2]));
        let ConductorShape::Plate { e2, .. } = c[1].shape else {
            panic!()
        };
        assert!(close(e2, [0.0, 0.6, 0.1]));
        let ConductorEarthing::Isolated {
            charge,
            capacitance_to_ground,
            capacitance_defaulted,
        } = c[1].earthing
        else {
            panic!()
        };
        assert!((charge - 5e-9).abs() < 1e-20);
        assert_eq!(capacitance_to_ground, None);
        assert!(!capacitance_defaulted);
        assert_eq!(
            c[2].shape,
            ConductorShape::Box {
                min: [0.5, 1.0, 0.0],
                max: [1.5, 2.0, 1.0]
            }
        );
        // A direction is normalised; `x` is the unit x.
        let ConductorShape::Cylinder { axis, .. } = c[3].shape else {
            panic!()
        };
        assert!(close(axis, [0.0, 0.0, 1.0]));
        let ConductorEarthing::Isolated {
            charge,
            capacitance_to_ground,
            ..
        } = c[3].earthing
        else {
            panic!()
        };
        assert_eq!(charge, 0.0);
        assert!((capacitance_to_ground.unwrap() - 50e-12).abs() < 1e-24);
        let ConductorShape::Cylinder { axis, .. } = c[4].shape else {
            panic!()
        };
        assert!(close(axis, [1.0, 0.0, 0.0]));
    }

    /// A person is a vertical cylinder of the person's width and height
    /// standing on the floor: the ground plane, or z = 0 without one.
    #[test]
    fn a_person_stands_on_the_floor() {
        let person =
            "conductors:\n  - {id: OP, shape: person, earthing: isolated, at: [1 m, 1.2 m]}\n";
        let line = with(person).unwrap();
        assert_eq!(line.conductors[0].kind, ConductorKind::Person);
        assert_eq!(
            line.conductors[0].shape,
            ConductorShape::Cylinder {
                center: [1.0, 1.2, PERSON_HEIGHT / 2.0],
                axis: [0.0, 0.0, 1.0],
                radius: PERSON_WIDTH / 2.0,
                length: PERSON_HEIGHT
            }
        );
        assert_eq!(
            line.conductors[0].earthing,
            ConductorEarthing::Isolated {
                charge: 0.0,
                capacitance_to_ground: Some(PERSON_FEET_CAPACITANCE),
                capacitance_defaulted: true
            }
        );
        // The NFPA 77 range for the whole body is 100–300 pF; the lumped
        // part alone must leave room for the body's own capacitance.
        assert!((50e-12..=250e-12).contains(&PERSON_FEET_CAPACITANCE));
        // On a raised ground plane, with a given size and capacitance.
        let line = parse_line(&format!(
            "{}conductors:\n  - {{id: OP, shape: person, earthing: isolated, capacitance_to_ground: 200 pF, at: [1 m, 1.2 m, 0.3 m], height: 1.6 m, width: 0.4 m}}\n",
            SMALL_LINE.replace("charge:", "ground_plane: 0.3 m\ncharge:")
        ))
        .unwrap();
        let ConductorShape::Cylinder {
            center,
            radius,
            length,
            ..
        } = line.conductors[0].shape
        else {
            panic!()
        };
        assert!(close(center, [1.0, 1.2, 0.3 + 0.8]));
        assert!((radius - 0.2).abs() < 1e-12 && (length - 1.6).abs() < 1e-12);
        assert!(matches!(
            line.conductors[0].earthing,
            ConductorEarthing::Isolated {
                capacitance_defaulted: false,
                ..
            }
        ));
        // A grounded person has no lumped capacitance.
        let grounded = with(&person.replace("isolated", "grounded")).unwrap();
        assert_eq!(grounded.conductors[0].earthing, ConductorEarthing::Grounded);
        refused(
            &person.replace("at: [1 m, 1.2 m]", "at: [1 m, 1.2 m, 0.2 m]"),
            "conductors[0].at: a person stands on the floor at z = 0 m, but z = 200 mm was given",
        );
    }

    #[test]
    fn points_readings_and_bars_inside_a_conductor_are_refused() {
        let cab = "conductors:\n  - {id: CAB, shape: box, earthing: grounded, from: [0.6 m, -0.3 m, 1.1 m], to: [1.4 m, 0.3 m, 1.3 m]}\n";
        // The meter M of SMALL_LINE at [1 m, 0, 1.075 m] is outside; move it in.
        let line = with(cab).unwrap();
        assert!(matches!(
            line.point_problem([1.0, 0.0, 1.2]),
            Some(PointProblem::InsideConductor { ref conductor, kind: ConductorKind::Box }) if conductor == "CAB"
        ));
        assert_eq!(line.point_problem([1.0, 0.0, 1.075]), None);
        let inside = SMALL_LINE.replace("at: [1 m, 0 m, 1.075 m]", "at: [1 m, 0 m, 1.2 m]");
        let err = parse_line(&format!("{inside}{cab}"))
            .unwrap_err()
            .to_string();
        assert!(
            err.contains("points[0].at: the point lies inside conductor CAB (a box)"),
            "{err}"
        );
        refused(
            &format!(
                "readings:\n  - {{span: S2, position: 50 %, distance: 100 mm, side: above, reading: 10 kV/m}}\n{cab}"
            ),
            "readings[0].distance: the meter would stand at [1 m, 0 m, 1.15 m]: the point lies inside conductor CAB",
        );
        refused(
            &format!(
                "eliminators:\n  - {{id: E1, kind: powered, span: S2, position: 50 %, distance: 100 mm, side: above}}\n{cab}"
            ),
            "eliminators[0].distance: the bar would stand at [1 m, 1.15 m]: the point lies inside conductor CAB",
        );
        // A point on a plate.
        refused(
            "conductors:\n  - {id: P, shape: plate, earthing: grounded, from: [0.5 m, -0.5 m, 1.075 m], to: [1.5 m, 0.5 m, 1.075 m]}\n",
            "points[0].at: the point lies on plate P",
        );
        // A person standing on the meter.
        refused(
            "conductors:\n  - {id: OP, shape: person, earthing: isolated, at: [1 m, 0.6 m], width: 1.3 m}\n",
            "conductor OP meets the web on span S2",
        );
    }

    #[test]
    fn conductors_meeting_the_web_or_each_other_are_refused() {
        // A vertical plate crossing the span between A and B.
        refused(
            "conductors:\n  - {id: P, shape: plate, earthing: grounded, from: [1 m, -2 m, 0.5 m], to: [1 m, 2 m, 1.5 m]}\n",
            "conductors[0].from: conductor P meets the web on span S2 (A-B)",
        );
        // The same plate beside the web (past its edge at y = 0.5 m) is fine.
        with("conductors:\n  - {id: P, shape: plate, earthing: grounded, from: [1 m, 0.6 m, 0.5 m], to: [1 m, 2 m, 1.5 m]}\n").unwrap();
        // A pipe across the machine through roller A (and the web on it).
        refused(
            "conductors:\n  - {id: PIPE, shape: cylinder, earthing: grounded, center: [0 m, -1 m, 1 m], axis: y, radius: 10 mm, length: 1.5 m}\n",
            "conductors[0].center: conductor PIPE overlaps roller A",
        );
        // Touching is allowed: a box on top of a box.
        let two = "conductors:\n  - {id: C1, shape: box, earthing: grounded, from: [0 m, 1 m, 0 m], to: [1 m, 2 m, 0.5 m]}\n  - {id: C2, shape: box, earthing: isolated, from: [0 m, 1 m, 0.5 m], to: [1 m, 2 m, 0.9 m]}\n";
        with(two).unwrap();
        refused(
            &two.replace("from: [0 m, 1 m, 0.5 m]", "from: [0 m, 1 m, 0.4 m]"),
            "conductors[1].from: conductor C2 overlaps conductor C1 (conductors[0])",
        );
        // A person beside a cabinet, then inside it.
        let cab = "  - {id: CAB, shape: box, earthing: grounded, from: [3 m, 1 m, 0 m], to: [4 m, 2 m, 1 m]}\n";
        with(&format!("conductors:\n{cab}  - {{id: OP, shape: person, earthing: isolated, at: [2.8 m, 1.5 m]}}\n")).unwrap();
        refused(
            &format!(
                "conductors:\n{cab}  - {{id: OP, shape: person, earthing: isolated, at: [2.9 m, 1.5 m]}}\n"
            ),
            "conductor OP overlaps conductor CAB",
        );
    }

    #[test]
    fn bad_conductor_entries_are_refused_with_what_is_accepted() {
        let cases = [
            (
                "{id: C, shape: box, from: [0 m, 1 m, 0 m], to: [1 m, 2 m, 1 m]}",
                "conductors[0].earthing: missing: expected grounded | isolated",
            ),
            (
                "{id: C, shape: box, earthing: insulating, from: [0 m, 1 m, 0 m], to: [1 m, 2 m, 1 m]}",
                "an insulating part is not a conductor",
            ),
            (
                "{id: C, shape: box, earthing: grounded, capacitance_to_ground: 10 pF, from: [0 m, 1 m, 0 m], to: [1 m, 2 m, 1 m]}",
                "conductors[0].capacitance_to_ground: `capacitance_to_ground:` belongs to isolated conductors",
            ),
            (
                "{id: C, shape: box, earthing: isolated, charge: 5 nC/m^2, from: [0 m, 1 m, 0 m], to: [1 m, 2 m, 1 m]}",
                "conductors[0].charge: expected a charge such as \"5 nC\"",
            ),
            (
                "{id: C, shape: box, earthing: isolated, capacitance_to_ground: -5 pF, from: [0 m, 1 m, 0 m], to: [1 m, 2 m, 1 m]}",
                "expected a capacitance of zero or more",
            ),
            (
                "{id: C, shape: sphere, earthing: grounded}",
                "conductors[0].shape: expected one of plate | box | cylinder | person, got \"sphere\"",
            ),
            (
                "{id: C, shape: box, earthing: grounded, from: [0 m, 1 m, 0 m], to: [1 m, 1 m, 1 m]}",
                "conductors[0].to: the box has no volume",
            ),
            (
                "{id: C, shape: plate, earthing: grounded, from: [0 m, 1 m, 0 m], to: [1 m, 2 m, 1 m]}",
                "exactly one coordinate equal; they differ in all three",
            ),
            (
                "{id: C, shape: plate, earthing: grounded, from: [0 m, 1 m, 0 m], to: [1 m, 1 m, 0 m]}",
                "the plate has no area",
            ),
            (
                "{id: C, shape: plate, earthing: grounded, corner: [0 m, 1 m, 0 m], edge1: [1 m, 0 m, 0 m], edge2: [0 m, 0 m, 0 m]}",
                "conductors[0].edge2: the edge has zero length",
            ),
            (
                "{id: C, shape: plate, earthing: grounded, corner: [0 m, 1 m, 0 m], edge1: [1 m, 0 m, 0 m], edge2: [0.1 m, 1 m, 0 m]}",
                "conductors[0].edge2: edge1 and edge2 are 84.29° apart",
            ),
            (
                "{id: C, shape: plate, earthing: grounded, from: [0 m, 1 m, 0 m], to: [1 m, 1 m, 1 m], corner: [0 m, 1 m, 0 m]}",
                "give either `from:`/`to:`",
            ),
            (
                "{id: C, shape: cylinder, earthing: grounded, center: [0 m, 2 m, 1 m], axis: w, radius: 1 cm, length: 1 m}",
                "conductors[0].axis: expected x, y, z or a direction such as [0, 0, 1], got \"w\"",
            ),
            (
                "{id: C, shape: cylinder, earthing: grounded, center: [0 m, 2 m, 1 m], axis: [0, 0, 0], radius: 1 cm, length: 1 m}",
                "conductors[0].axis: the direction is zero",
            ),
            (
                "{id: C, shape: cylinder, earthing: grounded, center: [0 m, 2 m, 1 m], axis: z, length: 1 m}",
                "conductors[0].radius: missing: expected a length",
            ),
            (
                "{id: C, shape: person, earthing: grounded, at: [0 m, 2 m], height: 0 m}",
                "conductors[0].height: expected a positive length",
            ),
            (
                "{id: C, shape: person, earthing: grounded, at: [0 m, 2 m], center: [0 m, 2 m, 1 m]}",
                "conductors[0].center: `center:` does not belong to shape person: its keys are at, height, width",
            ),
            (
                "{id: A, shape: person, earthing: grounded, at: [0 m, 2 m]}",
                "conductors[0].id: duplicate id \"A\": a roller has it too",
            ),
            (
                "{id: IN, shape: person, earthing: grounded, at: [0 m, 2 m]}",
                "conductors[0].id: duplicate id \"IN\": a path node has it too",
            ),
        ];
        for (entry, expect) in cases {
            refused(&format!("conductors:\n  - {entry}\n"), expect);
        }
        // Two conductors with one id.
        refused(
            "conductors:\n  - {id: C, shape: person, earthing: grounded, at: [0 m, 2 m]}\n  - {id: C, shape: person, earthing: grounded, at: [1 m, 2 m]}\n",
            "conductors[1].id: duplicate conductor id \"C\"",
        );
    }

    /// Every problem is reported, not only the first.
    #[test]
    fn every_conductor_problem_is_collected() {
        let err = with(
            "conductors:\n  - {id: C1, shape: box, from: [0 m, 1 m, 0 m], to: [1 m, 2 m, 1 m]}\n  - {id: C2, shape: cylinder, earthing: grounded, center: [0 m, 2 m, 1 m], axis: q, radius: 1 cm, length: 1 m}\n",
        )
        .unwrap_err();
        let paths: Vec<&str> = err.issues.iter().map(|i| i.path.as_str()).collect();
        assert_eq!(
            paths,
            ["conductors[0].earthing", "conductors[1].axis"],
            "{err}"
        );
    }

    /// `y` (and `n`, `yes`, `no`) are plain words in YAML 1.2, not booleans.
    #[test]
    fn axis_y_is_read_as_a_name() {
        let line = with("conductors:\n  - {id: C, shape: cylinder, earthing: grounded, center: [1 m, 0 m, 0.3 m], axis: y, radius: 5 cm, length: 1.2 m}\n").unwrap();
        let ConductorShape::Cylinder { axis, .. } = line.conductors[0].shape else {
            panic!()
        };
        assert_eq!(axis, [0.0, 1.0, 0.0]);
    }

    /// The demo carries a grounded frame plate, an isolated roller and an
    /// isolated person standing behind the operator point OP1.
    #[test]
    fn the_demo_has_its_conductors() {
        let line = parse_line(websigma::DEMO_LINE).unwrap();
        assert!(
            line.conductors.iter().any(
                |c| c.kind == ConductorKind::Plate && c.earthing == ConductorEarthing::Grounded
            )
        );
        assert!(
            line.rollers
                .iter()
                .any(|r| r.earthing == websigma::model::Earthing::Isolated)
        );
        assert!(
            line.conductors
                .iter()
                .any(|c| c.kind == ConductorKind::Person && !c.earthing.is_grounded())
        );
        assert!(line.points.iter().any(|p| p.id == "OP1"));
    }
}

/// `check` states each conductor and the defaulted roller lengths.
#[test]
fn check_lists_conductors_and_defaulted_roller_lengths() {
    let text = format!(
        "{SMALL_LINE}conductors:\n  - {{id: OP, shape: person, earthing: isolated, at: [1 m, 1.2 m]}}\n  - {{id: GUARD, shape: plate, earthing: grounded, from: [0.5 m, -0.8 m, 0.2 m], to: [1.5 m, -0.8 m, 1.4 m]}}\n"
    );
    let (_d, p) = crate::util::temp_yaml(&text);
    let out = crate::util::websigma()
        .arg("check")
        .arg(&p)
        .output()
        .unwrap();
    let stdout = String::from_utf8_lossy(&out.stdout);
    assert_eq!(out.status.code(), Some(0), "{stdout}");
    assert!(
        stdout.contains("roller length: web width + 0.2 m = 1.2 m (not given) for A, B"),
        "{stdout}"
    );
    assert!(
        stdout.contains("conductor: OP person at [1 m, 1.2 m], a vertical cylinder 1.75 m high and 300 mm wide on the floor, isolated, net charge 0 C, 100 pF feet-to-floor (assumed default)"),
        "{stdout}"
    );
    assert!(
        stdout.contains(
            "conductor: GUARD plate 1 m × 1.2 m from [500 mm, -800 mm, 200 mm], grounded"
        ),
        "{stdout}"
    );
}
