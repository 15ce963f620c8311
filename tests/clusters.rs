//! The conductors' charge summed by clusters (`field::tree`) for long point
//! lists against the panel-by-panel sum, and the progress the core announces for that work.
//!
//! The reference is the direct superposition of every panel's closed form or
//! Gauss rule (Coulomb's law summed over panels: D. J. Griffiths,
//! *Introduction to Electrodynamics*, 4th ed., §2.1); the tree's bound (its
//! module doc, from the Legendre expansion of 1/R, J. D. Jackson, *Classical
//! Electrodynamics*, 3rd ed., §3.6) is 1e-7 of the sum of the panels'
//! contribution magnitudes.

use crate::util::websigma;
use std::sync::Mutex;
use websigma::field::{Scene, SolverSettings};
use websigma::model::parse_line;
use websigma::progress::{Sink, Task, install};

/// Every task begun (task, total) and every count set, from any test of
/// this binary (they run in parallel, so the two lists interleave).
static BEGUN: Mutex<Vec<(Task, u64)>> = Mutex::new(Vec::new());
static SET: Mutex<Vec<u64>> = Mutex::new(Vec::new());

struct Recorder;
impl Sink for Recorder {
    fn begin(&self, task: Task, total: u64) {
        BEGUN.lock().unwrap().push((task, total));
    }
    fn set(&self, done: u64) {
        SET.lock().unwrap().push(done);
    }
    fn end(&self) {}
}

/// The demo's map grid (conductors solved, 13 of them, images in the
/// floor) as a point list of 2400 points, summed by clusters, equals the map
/// (by boxes, `tests/map_boxes.rs` checks it against panel by panel): at every grid point within 1e-6 of the local |E| (the
/// bound is 1e-7 of the sum of the panels' magnitudes; the panels'
/// contributions here partly cancel the web's, so the local |E| is the
/// stricter measure); and the map's work is announced to the installed sink
/// with its total.
#[test]
fn demo_map_grid_by_clusters_equals_the_panel_sum() {
    install(Box::new(Recorder));
    let line = parse_line(websigma::DEMO_LINE).unwrap();
    let scene = Scene::new(
        &line,
        SolverSettings::new(1e-9).unwrap().with_default_conductors(),
    )
    .unwrap();
    let charge = websigma::readings::invert_readings(&line, &scene)
        .unwrap()
        .charge;
    let web = scene.web(&charge);
    let (xr, zr) = websigma::report::figures::extent(&line);
    let (nx, nz) = (60, 40);
    let (xs, zs, map) = web.side_view_grid(xr, zr, nx, nz, 0.0);
    let (pts, direct): (Vec<[f64; 3]>, Vec<f64>) = map
        .iter()
        .enumerate()
        .filter(|(_, e)| e.is_finite())
        .map(|(k, e)| ([xs[k % nx], 0.0, zs[k / nx]], *e))
        .unzip();
    assert!(
        pts.len() >= 2000,
        "most grid points are in the air: {}",
        pts.len()
    );
    let clustered = web.solve(&pts, false).unwrap();
    for ((p, d), f) in pts.iter().zip(&direct).zip(&clustered.points) {
        let e = f.e_magnitude();
        assert!(
            (e - d).abs() <= 1e-6 * d,
            "at {p:?}: clusters {e} V/m against {d} V/m panel by panel"
        );
    }
    let total = (nx * nz) as u64;
    assert!(
        BEGUN.lock().unwrap().contains(&(Task::Map, total)),
        "the map announced its 2400 points"
    );
    assert!(
        SET.lock().unwrap().contains(&total),
        "the map's count reached its total"
    );
}

/// A long point list (from 2000 points on `solve` sums by clusters) gives
/// the same field as the points one at a time, within 1e-6 of |E|, and the
/// chunks after the first reuse the tree.
#[test]
fn long_point_lists_by_clusters_equal_single_points() {
    let line = parse_line(websigma::DEMO_LINE).unwrap();
    let scene = Scene::new(
        &line,
        SolverSettings::new(1e-9).unwrap().with_default_conductors(),
    )
    .unwrap();
    let charge = websigma::charge::charge_profile(&line);
    let web = scene.web(&charge);
    let (xr, zr) = websigma::report::figures::extent(&line);
    let pts: Vec<[f64; 3]> = (0..2100)
        .map(|i| {
            let a = (i as f64 * 0.618_033_988_749_895).fract();
            let b = (i as f64 * 0.754_877_666_246_693).fract();
            [
                xr[0] + a * (xr[1] - xr[0]),
                0.3 * (b - 0.5),
                zr[0] + b * (zr[1] - zr[0]),
            ]
        })
        .filter(|&p| line.point_problem(p).is_none())
        .collect();
    assert!(pts.len() >= 2000, "enough points to use the clusters");
    let many = web.solve(&pts, false).unwrap();
    // A short chunk after a long one: the tree is built, so it is used too.
    let few = web.solve(&pts[..7], false).unwrap();
    // The potential's bound is relative to the sum of the panels' own
    // potentials, which partly cancel: it is checked against the largest |V|
    // of the list, the potentials' scale.
    let v_scale = many.points.iter().map(|f| f.v.abs()).fold(0.0, f64::max);
    for (k, f) in many.points.iter().enumerate().step_by(13) {
        let one = web.at(pts[k], false).unwrap();
        let d = one.e_magnitude();
        let de = ((f.e[0] - one.e[0]).powi(2)
            + (f.e[1] - one.e[1]).powi(2)
            + (f.e[2] - one.e[2]).powi(2))
        .sqrt();
        assert!(
            de <= 1e-6 * d,
            "point {k}: |ΔE| {de} V/m against |E| {d} V/m"
        );
        assert!(
            (f.v - one.v).abs() <= 1e-6 * v_scale,
            "point {k}: V {} against {} V (scale {v_scale} V)",
            f.v,
            one.v
        );
    }
    for (a, b) in few.points.iter().zip(&many.points) {
        assert_eq!(a.e, b.e, "the short chunk uses the same clusters");
    }
}

/// Progress goes to a terminal only: through a pipe (as here, and in CI)
/// `field` over 2500 points writes its CSV and nothing on stderr, with or
/// without `--quiet`.
#[test]
fn no_progress_bars_outside_a_terminal() {
    let dir = tempfile::tempdir().unwrap();
    let file = dir.path().join("points.csv");
    let mut text = String::from("x,y,z\n");
    for i in 0..2500 {
        let x = 0.2 + 7.5 * (i as f64 * 0.618_033_988_749_895).fract();
        text.push_str(&format!("{x},0,0.25\n"));
    }
    std::fs::write(&file, text).unwrap();
    for quiet in [false, true] {
        let mut cmd = websigma();
        cmd.args(["field", "--format", "csv", "--points"])
            .arg(&file)
            .arg("profiles/lines/demo.yaml");
        if quiet {
            cmd.arg("--quiet");
        }
        let out = cmd.output().unwrap();
        assert!(
            out.status.success(),
            "{}",
            String::from_utf8_lossy(&out.stderr)
        );
        let stdout = String::from_utf8_lossy(&out.stdout);
        assert_eq!(
            stdout.lines().filter(|l| l.starts_with(',')).count(),
            2500,
            "one row per point"
        );
        let stderr = String::from_utf8_lossy(&out.stderr);
        assert!(
            !stderr.contains("field at points") && !stderr.contains('\r'),
            "no bar on a pipe: {stderr}"
        );
    }
}
