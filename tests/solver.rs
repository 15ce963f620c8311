//! Path-level physics: superposition over spans, images in the ground plane,
//! symmetry, linearity in σ and convergence. References: Coulomb's law and
//! superposition; the method of images (Griffiths, Introduction to
//! Electrodynamics, 4th ed., §3.2).

use proptest::prelude::*;
use websigma::charge::charge_profile;
use websigma::field::kernels::uniform_rectangle;
use websigma::field::{Scene, SolverSettings};
use websigma::model::{Line, parse_line};
use websigma::units::EPS0;

fn web(extra: &str) -> String {
    format!(
        "web: {{width: 1.2 m, thickness: 30 um, relative_permittivity: 2.2, {extra} speed: 2 m/s}}\n"
    )
}

/// A web straight along x at height z = 1 m through free points.
fn straight(xs: &[f64], sigma_uc: f64, tau: &str, ground: bool, profile: &str) -> Line {
    let mut s = web(&format!("relaxation_time: {tau},"));
    if ground {
        s.push_str("ground_plane: 0.2 m\n");
    }
    s.push_str(&format!("across_profile: {profile}\npath:\n"));
    for (i, x) in xs.iter().enumerate() {
        s.push_str(&format!("  - point: [{x} m, 1 m]\n    id: N{i}\n"));
    }
    s.push_str(&format!(
        "charge:\n  - at: start\n    sigma: {sigma_uc} uC/m^2\n"
    ));
    parse_line(&s).unwrap()
}

fn field(line: &Line, p: [f64; 3]) -> websigma::field::PointField {
    let charge = charge_profile(line);
    Scene::new(line, SolverSettings::default())
        .unwrap()
        .web(&charge)
        .at(p, true)
        .unwrap()
}

fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs().max(1e-300)
}

/// Superposition: a straight web cut into three spans at free points is the
/// same sheet as one uncut span, whose field is the closed-form rectangle
/// (derived from Coulomb's law). Uniform σ (infinite τ is approximated by
/// 1e30 s, a numerically uniform sheet). Tolerance 1e-9, the solver's.
#[test]
fn path_is_the_sum_of_its_spans() {
    let cut = straight(
        &[0.0, 0.7, 1.1, 2.5],
        4.0,
        "1e30 s",
        false,
        "{shape: uniform}",
    );
    let whole = straight(&[0.0, 2.5], 4.0, "1e30 s", false, "{shape: uniform}");
    for p in [
        [1.0, 0.1, 1.3],
        [0.7, 0.0, 1.0005],
        [3.0, 0.8, 0.2],
        [1.1, 0.59, 1.0 + 1e-4],
    ] {
        let a = field(&cut, p);
        let b = field(&whole, p);
        let local = [p[0], p[1], p[2] - 1.0];
        let c = uniform_rectangle(0.0, 2.5, -0.6, 0.6, 4e-6, local);
        assert!(
            rel(a.v, b.v) < 1e-9 && rel(a.v, c.v) < 1e-9,
            "{p:?}: {} {} {}",
            a.v,
            b.v,
            c.v
        );
        assert!(rel(a.e_magnitude(), b.e_magnitude()) < 1e-9);
        let cm = (c.e[0].powi(2) + c.e[1].powi(2) + c.e[2].powi(2)).sqrt();
        assert!(rel(a.e_magnitude(), cm) < 1e-9, "{p:?}");
        // Contributions per span add up to the total.
        let vs: f64 = a.contributions.iter().map(|c| c.v).sum();
        assert!(rel(vs, a.v) < 1e-12);
    }
}

/// A grounded plane: the potential vanishes on it (method of images).
#[test]
fn potential_is_zero_on_the_ground_plane() {
    let line = parse_line(websigma::DEMO_LINE).unwrap();
    let charge = charge_profile(&line);
    let scene_m = Scene::new(&line, SolverSettings::default()).unwrap();
    let m = scene_m.web(&charge);
    let v_scale = m.at([3.3, 0.0, 1.385], false).unwrap().v.abs();
    for (x, y) in [
        (0.0, 0.0),
        (3.0, 0.4),
        (6.6, -2.0),
        (-3.0, 1.0),
        (12.0, 0.0),
    ] {
        let f = m.at([x, y, 0.0], false).unwrap();
        assert!(f.v.abs() < 1e-12 * v_scale, "V = {} at ({x}, {y})", f.v);
        // The field meets a conductor at right angles: no tangential part.
        assert!(
            f.e[0].abs() < 1e-9 * f.e[2].abs().max(1e-30) + 1e-9,
            "Ex = {}",
            f.e[0]
        );
    }
}

/// The image of a span in the plane z = g is its mirror carrying −σ, so a line
/// above a plane equals the same line in free space plus its explicit mirror
/// with the opposite charge (mirroring reverses the wrap directions).
#[test]
fn ground_plane_equals_explicit_mirror_line() {
    let src = |ground: &str, z: &dyn Fn(f64) -> f64, wrap: &str, sigma: &str| {
        parse_line(&format!(
            "{}{ground}rollers:\n  - {{id: A, center: [1 m, {} m], diameter: 200 mm, earthing: grounded}}\npath:\n  - point: [0 m, {} m]\n    id: IN\n  - {{roller: A, wrap: {wrap}}}\n  - point: [2 m, {} m]\n    id: OUT\nacross_profile: {{shape: tilt, k: 0.3}}\ncharge:\n  - at: start\n    sigma: {sigma}\n",
            web("relaxation_time: 2 s,"),
            z(1.0),
            z(1.4),
            z(1.3)
        ))
        .unwrap()
    };
    let g = 0.3;
    let grounded = src(&format!("ground_plane: {g} m\n"), &|z| z, "ccw", "5 uC/m^2");
    let free = src("", &|z| z, "ccw", "5 uC/m^2");
    let mirror = src("", &|z| 2.0 * g - z, "cw", "-5 uC/m^2");
    for p in [
        [0.5, 0.2, 1.0],
        [1.5, -0.7, 0.5],
        [1.0, 0.0, 1.45],
        [3.0, 0.3, 0.31],
    ] {
        let a = field(&grounded, p);
        let b = field(&free, p);
        let c = field(&mirror, p);
        let v = b.v + c.v;
        let e: Vec<f64> = (0..3).map(|k| b.e[k] + c.e[k]).collect();
        assert!(rel(a.v, v) < 1e-9, "{p:?}: {} vs {v}", a.v);
        for (k, (ak, ek)) in a.e.iter().zip(&e).enumerate() {
            assert!((ak - ek).abs() <= 1e-9 * a.e_magnitude(), "{p:?} E{k}");
        }
    }
}

/// Mirror symmetry across y = 0 for a symmetric profile: V even, Ey odd.
#[test]
fn symmetric_profile_gives_symmetric_field() {
    let line = parse_line(websigma::DEMO_LINE).unwrap();
    let charge = charge_profile(&line);
    let scene_m = Scene::new(&line, SolverSettings::default()).unwrap();
    let m = scene_m.web(&charge);
    for p in [[3.3, 0.3, 1.385], [2.4, 1.0, 1.1], [6.0, 0.55, 0.9]] {
        let a = m.at(p, false).unwrap();
        let b = m.at([p[0], -p[1], p[2]], false).unwrap();
        assert!(rel(a.v, b.v) < 1e-9);
        assert!((a.e[1] + b.e[1]).abs() <= 1e-9 * a.e_magnitude());
        assert!((a.e[0] - b.e[0]).abs() <= 1e-9 * a.e_magnitude());
    }
}

/// Near the middle of a wide span far from everything else the field tends to
/// the isolated-sheet value σ/(2ε0) (Gauss's law); the finite width (1.2 m)
/// and length at 1 mm change it by about 2h/L ≈ 0.3 %.
#[test]
fn close_to_a_span_the_field_is_near_sigma_over_two_eps0() {
    let line = straight(&[0.0, 3.0], 4.0, "1e30 s", false, "{shape: uniform}");
    let f = field(&line, [1.5, 0.0, 1.001]);
    let expect = 4e-6 / (2.0 * EPS0);
    assert!(rel(f.e[2], expect) < 5e-3, "{} vs {expect}", f.e[2]);
}

#[test]
fn solve_keeps_input_order_and_refuses_points_on_the_web() {
    let line = straight(&[0.0, 2.0], 4.0, "10 s", false, "{shape: edges, k: 1}");
    let charge = charge_profile(&line);
    let pts: Vec<[f64; 3]> = (0..50).map(|i| [i as f64 * 0.05, 0.1, 1.2]).collect();
    let scene = Scene::new(&line, SolverSettings::default()).unwrap();
    let web = scene.web(&charge);
    let map = web.solve(&pts, false).unwrap();
    for (p, f) in pts.iter().zip(&map.points) {
        assert_eq!(&f.at, p);
    }
    let err = web.solve(&[[1.0, 0.0, 1.0]], false).unwrap_err();
    assert!(err.to_string().contains("span S1"), "{err}");
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(24))]

    /// Linearity in σ: doubling every density doubles E and V.
    #[test]
    fn field_is_linear_in_sigma(x in -1.0f64..4.0, y in -1.5f64..1.5, z in 0.3f64..2.0, s in 0.5f64..20.0) {
        prop_assume!((z - 1.0).abs() > 1e-3);
        let a = straight(&[0.0, 1.0, 3.0], s, "3 s", true, "{shape: tilt, k: 0.4}");
        let b = straight(&[0.0, 1.0, 3.0], 2.0 * s, "3 s", true, "{shape: tilt, k: 0.4}");
        let fa = field(&a, [x, y, z]);
        let fb = field(&b, [x, y, z]);
        prop_assert!(rel(fb.v, 2.0 * fa.v) < 1e-9);
        for k in 0..3 {
            prop_assert!((fb.e[k] - 2.0 * fa.e[k]).abs() <= 1e-9 * fb.e_magnitude());
        }
    }

    /// Convergence: tightening the tolerance from 1e-6 to 1e-11 changes the
    /// result by no more than the looser tolerance.
    #[test]
    fn results_converge_as_tolerance_tightens(x in -1.0f64..4.0, y in -1.0f64..1.0, h in 1e-4f64..1.0) {
        let line = straight(&[0.0, 3.0], 3.0, "0.5 s", false, "{shape: edges, k: 2}");
        let charge = charge_profile(&line);
        let p = [x, y, 1.0 + h];
        let lo = Scene::new(&line, SolverSettings::new(1e-6).unwrap()).unwrap().web(&charge).at(p, false).unwrap();
        let hi = Scene::new(&line, SolverSettings::new(1e-11).unwrap()).unwrap().web(&charge).at(p, false).unwrap();
        prop_assert!(rel(lo.v, hi.v) < 1e-6);
        prop_assert!(rel(lo.e_magnitude(), hi.e_magnitude()) < 1e-6);
    }
}
