//! Web path geometry through the public API: tangents for every wrap
//! combination, point-to-roller tangents, arc lengths, refused geometries.
//! Reference: plane geometry of common tangents (derived, see model/path.rs).

use websigma::model::{Line, NodeKind, parse_line};

fn line_with(rollers: &str, path: &str) -> Result<Line, websigma::model::ValidationError> {
    parse_line(&format!(
        "web: {{width: 1 m, thickness: 20 um, relative_permittivity: 2, relaxation_time: 10 s, speed: 1 m/s}}\nrollers:\n{rollers}\npath:\n{path}\n"
    ))
}

/// Every span end lies on its roller's surface, the span is perpendicular to
/// the radius there, and the roller lies on the side its wrap direction says.
fn assert_tangent(line: &Line) {
    for s in &line.path.spans {
        let d = s.direction();
        for (node, t, sign) in [(s.from_node, s.start, 1.0), (s.to_node, s.end, 1.0)] {
            let _ = sign;
            if let NodeKind::Roller { roller, wrap } = line.path.nodes[node].kind {
                let r = &line.rollers[roller];
                let rv = [t[0] - r.center[0], t[1] - r.center[1]];
                let dist = rv[0].hypot(rv[1]);
                assert!(
                    (dist - r.radius).abs() < 1e-12,
                    "{}: off the surface by {}",
                    s.name,
                    dist - r.radius
                );
                assert!(
                    (rv[0] * d[0] + rv[1] * d[1]).abs() < 1e-12,
                    "{}: not tangent",
                    s.name
                );
                // cross(d, C − T) > 0: centre on the left of travel = ccw.
                let cross = d[0] * (-rv[1]) - d[1] * (-rv[0]);
                assert_eq!(cross > 0.0, wrap.side() > 0.0, "{}: wrong side", s.name);
            }
        }
    }
}

#[test]
fn all_four_wrap_combinations_give_true_tangents() {
    let rollers = "  - {id: A, center: [0 m, 1 m], diameter: 200 mm, earthing: grounded}\n  - {id: B, center: [1.5 m, 0.7 m], diameter: 300 mm, earthing: grounded}";
    for (wa, wb) in [("cw", "cw"), ("ccw", "ccw"), ("cw", "ccw"), ("ccw", "cw")] {
        let path = format!(
            "  - point: [-1 m, 2 m]\n  - {{roller: A, wrap: {wa}}}\n  - {{roller: B, wrap: {wb}}}\n  - point: [3 m, 2 m]"
        );
        let line = line_with(rollers, &path).unwrap_or_else(|e| panic!("{wa}/{wb}: {e}"));
        assert_eq!(line.path.spans.len(), 3);
        assert_tangent(&line);
        // Outer tangent (equal wraps): L² = D² − (r2 − r1)²; crossed: D² − (r1 + r2)².
        let d2 = 1.5f64.powi(2) + 0.3f64.powi(2);
        let expect = if wa == wb {
            (d2 - 0.05f64.powi(2)).sqrt()
        } else {
            (d2 - 0.25f64.powi(2)).sqrt()
        };
        assert!(
            (line.path.spans[1].length - expect).abs() < 1e-12,
            "{wa}/{wb}"
        );
    }
}

#[test]
fn arc_length_is_continuous_and_sums_spans_and_wraps() {
    let line = parse_line(websigma::DEMO_LINE).unwrap();
    assert_tangent(&line);
    let mut s = 0.0;
    let mut arcs = line.path.arcs.iter();
    for (i, span) in line.path.spans.iter().enumerate() {
        if i > 0 {
            let a = arcs.next().unwrap();
            assert!((a.s_start - s).abs() < 1e-12);
            let r = line.rollers[a.roller].radius;
            // Arc length = r·|φ|.
            s += r * a.sweep.abs();
            assert!((a.s_end - s).abs() < 1e-12);
        }
        assert!((span.s_start - s).abs() < 1e-12);
        s += span.length;
        assert!((span.s_end - s).abs() < 1e-12);
    }
    assert!((line.path.total_length - s).abs() < 1e-12);
}

/// A web wrapping half a roller (in over the top from the left, out along
/// the bottom back to the left) has wrap angle π and arc length π·r.
#[test]
fn half_wrap_has_arc_length_pi_r() {
    let line = line_with(
        "  - {id: A, center: [0 m, 1 m], diameter: 200 mm, earthing: grounded}",
        "  - point: [-2 m, 1.1 m]\n  - {roller: A, wrap: cw}\n  - point: [-2 m, 0.9 m]",
    )
    .unwrap();
    let a = &line.path.arcs[0];
    assert!((a.sweep.abs() - std::f64::consts::PI).abs() < 1e-12);
    assert!((a.s_end - a.s_start - std::f64::consts::PI * 0.1).abs() < 1e-12);
}

#[test]
fn point_to_roller_tangent_length_is_sqrt_of_d2_minus_r2() {
    let line = line_with(
        "  - {id: A, center: [1 m, 0.5 m], diameter: 1 m, earthing: grounded}",
        "  - point: [0 m, 1.5 m]\n  - {roller: A, wrap: ccw}",
    )
    .unwrap();
    let d2: f64 = 1.0 + 1.0;
    assert!((line.path.spans[0].length - (d2 - 0.25).sqrt()).abs() < 1e-12);
    assert_tangent(&line);
}

#[test]
fn spans_answer_to_node_ids() {
    let line = parse_line(websigma::DEMO_LINE).unwrap();
    assert_eq!(line.path.span_index("R5-R6"), Some(5));
    assert_eq!(line.path.span_index("S6"), Some(5));
    assert_eq!(line.path.span_index("UNWIND-R1"), Some(0));
    assert_eq!(line.path.span_index("R1-R5"), None);
}

#[test]
fn invalid_geometries_are_refused() {
    let cases = [
        // overlapping rollers
        (
            "  - {id: A, center: [0 m, 1 m], diameter: 200 mm, earthing: grounded}\n  - {id: B, center: [0.15 m, 1 m], diameter: 200 mm, earthing: grounded}",
            "  - {roller: A, wrap: cw}\n  - {roller: B, wrap: cw}",
            "overlaps roller A",
        ),
        // crossed tangent between touching rollers
        (
            "  - {id: A, center: [0 m, 1 m], diameter: 200 mm, earthing: grounded}\n  - {id: B, center: [0.2 m, 1 m], diameter: 200 mm, earthing: grounded}",
            "  - {roller: A, wrap: cw}\n  - {roller: B, wrap: ccw}",
            "no web span",
        ),
        // a point inside the roller it should touch
        (
            "  - {id: A, center: [0 m, 1 m], diameter: 200 mm, earthing: grounded}",
            "  - point: [0.05 m, 1 m]\n  - {roller: A, wrap: cw}",
            "inside roller A",
        ),
        // two coincident points: zero length
        (
            "  - {id: A, center: [5 m, 1 m], diameter: 200 mm, earthing: grounded}",
            "  - point: [0 m, 1 m]\n  - point: [0 m, 1 m]",
            "coincide",
        ),
        // unknown roller
        (
            "  - {id: A, center: [0 m, 1 m], diameter: 200 mm, earthing: grounded}",
            "  - point: [-1 m, 1 m]\n  - {roller: Z, wrap: cw}",
            "unknown roller \"Z\"",
        ),
        // fewer than two nodes
        (
            "  - {id: A, center: [0 m, 1 m], diameter: 200 mm, earthing: grounded}",
            "  - {roller: A, wrap: cw}",
            "at least two",
        ),
    ];
    for (rollers, path, expect) in cases {
        let err = line_with(rollers, path).expect_err(expect).to_string();
        assert!(err.contains(expect), "expected {expect:?} in {err}");
    }
}

#[test]
fn a_span_through_another_roller_is_warned_about() {
    let line = line_with(
        "  - {id: A, center: [0 m, 1 m], diameter: 200 mm, earthing: grounded}\n  - {id: B, center: [2 m, 1 m], diameter: 200 mm, earthing: grounded}\n  - {id: C, center: [1 m, 1.1 m], diameter: 200 mm, earthing: grounded}",
        "  - {roller: A, wrap: cw}\n  - {roller: B, wrap: cw}",
    )
    .unwrap();
    assert!(
        line.warnings
            .iter()
            .any(|w| w.message.contains("passes through roller C")),
        "{:?}",
        line.warnings
    );
}
