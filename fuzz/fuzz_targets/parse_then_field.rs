//! Fuzz target: any bytes parsed as a line and, when accepted, its field
//! computed in the free-space model (no conductors' solve, to keep each run
//! short): the readings converted, then field and potential at every point
//! of the line and at a few places above its spans. Any outcome but a
//! panic, an abort or a hang is fine; a computed field must be finite.
#![no_main]

use libfuzzer_sys::fuzz_target;
use websigma::field::{Scene, SolverSettings};

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else {
        return;
    };
    let Ok(line) = websigma::model::parse_line(text) else {
        return;
    };
    let Ok(settings) = SolverSettings::new(1e-6) else {
        return;
    };
    let Ok(scene) = Scene::new(&line, settings.without_conductors()) else {
        return;
    };
    let Ok(r) = websigma::readings::invert_readings(&line, &scene) else {
        return;
    };
    let model = scene.web(&r.charge);
    let mut at: Vec<[f64; 3]> = line.points.iter().map(|p| p.at).collect();
    for s in line.path.spans.iter().take(8) {
        let m = [(s.start[0] + s.end[0]) / 2.0, (s.start[1] + s.end[1]) / 2.0];
        at.push([m[0], 0.0, m[1] + 0.05]);
    }
    let at: Vec<[f64; 3]> = at
        .into_iter()
        .filter(|&p| line.point_problem(p).is_none())
        .collect();
    if let Ok(map) = model.solve(&at, false) {
        for p in &map.points {
            assert!(
                p.e.iter().all(|x| x.is_finite()) && p.v.is_finite(),
                "a computed field is not finite: {p:?}"
            );
        }
    }
});
