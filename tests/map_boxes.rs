//! The field map summed by boxes (`field::map_boxes`: near spans, panels and
//! images at every grid point, far ones interpolated from Chebyshev points)
//! against the point-by-point superposition (`WebField::at`: every span,
//! panel and image at every point) on the demo line with its conductors.
//!
//! The reference is the direct superposition of Coulomb's law over every
//! source (D. J. Griffiths, *Introduction to Electrodynamics*, 4th ed.,
//! §2.1); the interpolation's estimate (Chebyshev coefficients, L. N.
//! Trefethen, *Approximation Theory and Approximation Practice*, SIAM 2013,
//! ch. 8) is held to 1e-7 of the far sources' summed magnitudes per box.

use websigma::field::{Scene, SolverSettings};
use websigma::model::parse_line;

/// The demo's map, 120 × 80 points: boxes interpolate (the work counts say
/// so), do less than half the point-by-point work, and agree with
/// `WebField::at` at every grid point within 1e-6 of |E| there plus 1e-9 of
/// the map's largest |E|; the points on the web are missing in both.
#[test]
fn demo_map_by_boxes_equals_the_point_by_point_sum() {
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
    let (nx, nz) = (120, 80);
    let ((xs, zs, boxed), stats) = web.side_view_with_stats(xr, zr, nx, nz, 0.0);
    assert!(stats.boxes > 0, "no box interpolated: {stats:?}");
    let sources = 2 * (scene.span_count() + scene.conductors().unwrap().panels().len());
    let full = (nx * nz * sources) as u64;
    assert!(
        2 * (stats.direct + stats.at_nodes + stats.wasted) < full,
        "work {stats:?} against {full} point by point"
    );
    let norm = |e: [f64; 3]| (e[0] * e[0] + e[1] * e[1] + e[2] * e[2]).sqrt();
    let direct: Vec<Option<[f64; 3]>> = (0..nx * nz)
        .map(|k| {
            web.at([xs[k % nx], 0.0, zs[k / nx]], false)
                .ok()
                .map(|f| f.e)
        })
        .collect();
    let largest = direct
        .iter()
        .flatten()
        .map(|&e| norm(e))
        .fold(0.0, f64::max);
    let mut on_web = 0;
    for (k, (b, d)) in boxed.iter().zip(&direct).enumerate() {
        let p = [xs[k % nx], 0.0, zs[k / nx]];
        match (b, d) {
            (Some(b), Some(d)) => {
                let diff = norm([b[0] - d[0], b[1] - d[1], b[2] - d[2]]);
                assert!(
                    diff <= 1e-6 * norm(*d) + 1e-9 * largest,
                    "at {p:?}: boxes {b:?} against {d:?} V/m point by point"
                );
            }
            (None, None) => on_web += 1,
            _ => panic!("at {p:?}: boxes {b:?}, point by point {d:?}"),
        }
    }
    assert!(on_web < nx * nz / 20, "{on_web} points missing");
}

/// `side_view_grid` is the magnitude of the vectors, NaN where they are missing.
#[test]
fn grid_magnitudes_are_the_vectors_norms() {
    let line = parse_line(websigma::DEMO_LINE).unwrap();
    let scene = Scene::new(&line, SolverSettings::new(1e-9).unwrap()).unwrap();
    let charge = websigma::charge::charge_profile(&line);
    let web = scene.web(&charge);
    let (xr, zr) = websigma::report::figures::extent(&line);
    let (_, _, mags) = web.side_view_grid(xr, zr, 40, 20, 0.0);
    let (_, _, vecs) = web.side_view_vectors(xr, zr, 40, 20, 0.0);
    for (m, v) in mags.iter().zip(&vecs) {
        match v {
            Some(e) => assert_eq!(*m, (e[0] * e[0] + e[1] * e[1] + e[2] * e[2]).sqrt()),
            None => assert!(m.is_nan()),
        }
    }
}
