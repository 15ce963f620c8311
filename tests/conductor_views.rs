//! Conductors downstream of the solve (issue #9): the planner keeps bars
//! clear of grounded conductors, a meter near a grounded roller says by how
//! much the induced charge suppresses its reading, and the side view draws
//! the `conductors:` entries where they are.
//!
//! Small invented lines; conductors are asked for explicitly
//! (`SolverSettings::with_conductors`), so these tests hold whether the
//! command line solves them by default or not.

use websigma::charge::charge_profile;
use websigma::field::{Scene, SolverSettings};
use websigma::model::{EliminatorKind, Line, Side, parse_line};
use websigma::plan::{
    Candidate, GroundedConductor, PlanError, PlanSettings, Refusal, candidates_and_refusals, plan,
    refusal,
};
use websigma::readings::{ReadingNote, ReadingsResult, invert_readings};
use websigma::report::plot::{ConductorLayer, side_view_png};
use websigma::report::{figures, notes, pictures};

/// A charged web from IN over roller A to OUT at about z = 1 m, with a
/// grounded plate F1 100 mm above the first span (x 0.8 to 1.2 m) and a
/// grounded roller C, not on the path, 80 mm above the second span.
fn plan_line(plate_earthing: &str) -> Line {
    parse_line(&format!(
        r#"
line: Clearance test line (invented)
web: {{width: 1 m, thickness: 30 um, relative_permittivity: 3, relaxation_time: 20 s, speed: 2 m/s}}
ground_plane: 0 m
rollers:
  - {{id: A, center: [2 m, 0.95 m], diameter: 100 mm, earthing: grounded}}
  - {{id: C, center: [3 m, 1.12 m], diameter: 80 mm, earthing: grounded}}
path:
  - point: [0 m, 1 m]
    id: IN
  - {{roller: A, wrap: cw}}
  - point: [4 m, 1 m]
    id: OUT
charge:
  - at: start
    sigma: 4 uC/m^2
conductors:
  - {{id: F1, shape: plate, earthing: {plate_earthing}, from: [0.8 m, -0.4 m, 1.1 m], to: [1.2 m, 0.4 m, 1.1 m]}}
points:
  - {{id: OP1, kind: operator, at: [3.5 m, 0.8 m, 1.2 m]}}
assess: [operator-shock]
"#
    ))
    .unwrap()
}

/// A powered bar 40 mm from the web: clearance 3 × 40 mm = 120 mm.
fn bar(span: usize, along: f64, side: Side) -> Candidate {
    Candidate {
        kind: EliminatorKind::Powered,
        span,
        along,
        side,
        distance: 0.04,
        efficiency: 0.95,
        residual: 0.0,
    }
}

/// A bar 40 mm above the web under the plate (the plate is 100 mm above the
/// web, so 60 mm from the bar) is refused with the plate, the distance and
/// the clearance; the same bar 0.5 m before the plate, or 40 mm below the web
/// (140 mm from the plate), is not.
#[test]
fn a_bar_within_the_clearance_of_a_grounded_plate_is_refused() {
    let line = plan_line("grounded");
    let Some(Refusal::NearConductor {
        conductor,
        distance,
        clearance,
    }) = refusal(&line, &bar(0, 1.0, Side::Above))
    else {
        panic!("the bar under F1 is not refused");
    };
    assert_eq!(conductor, GroundedConductor::Conductor(0));
    // The span dips 0.05 m over its 2 m (towards A's top at 1.0 m), so
    // 1 mm is ample for the bar's height under the plate.
    assert!((distance - 0.06).abs() < 1e-3, "distance {distance}");
    assert!((clearance - 0.12).abs() < 1e-12);
    assert_eq!(refusal(&line, &bar(0, 0.3, Side::Above)), None);
    assert_eq!(refusal(&line, &bar(0, 1.0, Side::Below)), None);

    // The planner's own grid: the positions above the span under the plate
    // are refused and listed, those below it are kept.
    let (cands, refused) = candidates_and_refusals(&line, &PlanSettings::new());
    assert!(!refused.is_empty());
    for r in &refused {
        assert!(refusal(&line, &r.candidate).is_some());
    }
    assert!(cands.iter().all(|c| refusal(&line, c).is_none()));
    let under = |c: &Candidate| c.span == 0 && (c.along - 1.0).abs() < 0.2;
    assert!(refused.iter().any(|r| under(&r.candidate)));
    assert!(cands.iter().any(|c| under(c) && c.side == Side::Below));
    assert!(!cands.iter().any(|c| under(c) && c.side == Side::Above));
    let words = notes::candidate_refusal(&line, &refused[0]);
    assert!(
        words.contains("grounded plate F1") && words.contains("120 mm"),
        "{words}"
    );

    // A given list holding such a bar is refused as a whole, with the reason.
    let scene = Scene::new(&line, SolverSettings::default()).unwrap();
    let mut st = PlanSettings::new();
    st.candidates = Some(vec![bar(0, 0.3, Side::Above), bar(0, 1.0, Side::Above)]);
    let profiles: Vec<_> = line
        .assess
        .iter()
        .map(|n| websigma::assess::profile::load_profile(n).unwrap())
        .collect();
    let e = plan(&line, &profiles, &st, &scene, &|_, _| {}).unwrap_err();
    assert!(
        matches!(&e, PlanError::CandidateNearConductor(c) if c.number == 2),
        "{e}"
    );
    let msg = e.to_string();
    assert!(
        msg.contains("candidate 2") && msg.contains("plate F1") && msg.contains("120 mm"),
        "{msg}"
    );
}

/// Only grounded conductors are kept clear of: an isolated plate is not
/// (its hazard is its spark, which the assessment checks).
#[test]
fn an_isolated_plate_does_not_refuse_a_bar() {
    let line = plan_line("isolated");
    assert_eq!(refusal(&line, &bar(0, 1.0, Side::Above)), None);
}

/// A grounded roller that is not on the web path (C, 80 mm above the web
/// with its 40 mm radius: 40 mm from a bar 40 mm above the web) refuses too.
#[test]
fn a_grounded_roller_off_the_path_refuses_a_bar() {
    let line = plan_line("grounded");
    let span = 1; // A-OUT
    let along = 3.0 - line.path.spans[span].start[0];
    match refusal(&line, &bar(span, along, Side::Above)) {
        Some(Refusal::NearConductor {
            conductor,
            distance,
            ..
        }) => {
            assert_eq!(conductor, GroundedConductor::Roller(1));
            assert!((distance - 0.04).abs() < 2e-3, "distance {distance}");
        }
        None => panic!("the bar under C is not refused"),
    }
}

/// Two grounded rollers 3 m apart, a 0.5 m wide web at 5 µC/m²; meter MR1
/// right over A's contact line, 20 mm from the web (so 20 mm from A's
/// surface), MR2 mid-span, 1.5 m from either roller.
fn readings_line() -> Line {
    parse_line(
        r#"
line: Screened meter test line (invented)
web: {width: 0.5 m, thickness: 50 um, relative_permittivity: 3, relaxation_time: 1e30 s, speed: 1 m/s}
rollers:
  - {id: A, center: [0 m, 1 m], diameter: 100 mm, earthing: grounded}
  - {id: B, center: [3 m, 1 m], diameter: 100 mm, earthing: grounded}
path:
  - {roller: A, wrap: cw}
  - {roller: B, wrap: cw}
charge:
  - at: start
    sigma: 5 uC/m^2
readings:
  - {id: MR1, span: S1, position: 0 mm, distance: 20 mm, side: above, reading: 100 kV/m}
  - {id: MR2, span: S1, position: 50 %, distance: 25 mm, side: above, reading: 250 kV/m}
"#,
    )
    .unwrap()
}

fn readings(line: &Line, conductors: bool) -> ReadingsResult {
    let st = SolverSettings::new(1e-7).unwrap();
    let st = if conductors {
        st.with_conductors(0.1).unwrap()
    } else {
        st
    };
    invert_readings(line, &Scene::new(line, st).unwrap()).unwrap()
}

/// The meter 20 mm from grounded roller A is suppressed (factor below 1,
/// carried by its near-roller warning and said in words). This close the
/// charge induced on A (the roller holds the web's potential, hundreds of kV
/// without it, at 0 V) outweighs the web's own field and the factor is even
/// negative: the model says the meter reads the opposite sign there. The
/// factor equals the normal field with the conductors divided by the field
/// of the same charge in a scene without them (1e-6: the web's own part is
/// the same integral, so they differ by rounding only). Mid-span it is 1
/// within 1 %: the induced charge, a few µC on each roller, sits 1.5 m away
/// nearly level with the meter, so its normal field there is well below 1 %
/// of the sheet's own σ/(2ε0) ≈ 280 kV/m.
#[test]
fn a_meter_near_a_grounded_roller_says_how_much_it_is_suppressed() {
    let line = readings_line();
    let r = readings(&line, true);
    let k1 = r.readings[0].screening.expect("a factor with conductors");
    let k2 = r.readings[1].screening.expect("a factor with conductors");
    assert!(k1 < 1.0, "near A: {k1}");
    assert!((k2 - 1.0).abs() < 0.01, "mid-span: {k2}");
    assert!(k1 < k2);

    // Independent: the same unit-density field with and without conductors.
    let charge = charge_profile(&line);
    let st = SolverSettings::new(1e-7).unwrap();
    let at = r.readings[0].at;
    let n = [0.0, 0.0, 1.0]; // the span is level and the meter above it
    let normal = |s: SolverSettings| {
        let scene = Scene::new(&line, s).unwrap();
        let e = scene.web(&charge).at(at, false).unwrap().e;
        e[0] * n[0] + e[1] * n[1] + e[2] * n[2]
    };
    let k = normal(st.with_conductors(0.1).unwrap()) / normal(st);
    assert!((k - k1).abs() <= 1e-6 * k.abs(), "{k} vs {k1}");

    let near = r.readings[0]
        .warnings
        .iter()
        .find(|w| matches!(w, ReadingNote::NearRoller { .. }))
        .expect("the near-roller warning");
    assert_eq!(
        near,
        &ReadingNote::NearRoller {
            suppression: Some(k1)
        }
    );
    let words = notes::reading_note(near);
    assert!(words.contains(&format!("{k1:.2}×")), "{words}");
    if k1 < 0.0 {
        assert!(words.contains("opposite sign"), "{words}");
    }
    // A factor between 0 and 1 is said as a suppression in per cent.
    let words = notes::reading_note(&ReadingNote::NearRoller {
        suppression: Some(0.62),
    });
    assert!(
        words.contains("0.62×") && words.contains("suppressed by 38 %"),
        "{words}"
    );
    assert!(
        !r.readings[1]
            .warnings
            .iter()
            .any(|w| matches!(w, ReadingNote::NearRoller { .. }))
    );

    // Without conductors: no factor, and today's warning.
    let r0 = readings(&line, false);
    assert!(r0.readings.iter().all(|x| x.screening.is_none()));
    let w0 = &r0.readings[0].warnings;
    assert!(w0.contains(&ReadingNote::NearRoller { suppression: None }));
    let words0 = notes::reading_note(&ReadingNote::NearRoller { suppression: None });
    assert!(words0.contains("take readings mid-span"), "{words0}");
}

/// A line whose grounded box F2 sits under the web between two grounded
/// rollers, inside the extent the rollers and web already give (so the
/// picture's scale is the same with and without it).
fn view_line() -> Line {
    parse_line(
        r#"
line: Side view test line (invented)
web: {width: 1 m, thickness: 30 um, relative_permittivity: 3, relaxation_time: 20 s, speed: 2 m/s}
ground_plane: 0 m
rollers:
  - {id: A, center: [0 m, 1 m], diameter: 160 mm, earthing: grounded}
  - {id: B, center: [1.5 m, 1 m], diameter: 160 mm, earthing: grounded}
path:
  - {roller: A, wrap: cw}
  - {roller: B, wrap: cw}
  - point: [3 m, 1.08 m]
    id: OUT
charge:
  - at: start
    sigma: 2 uC/m^2
conductors:
  - {id: F2, shape: box, earthing: grounded, from: [0.55 m, -0.3 m, 0.3 m], to: [0.95 m, 0.3 m, 0.7 m]}
"#,
    )
    .unwrap()
}

fn decode(png: &[u8]) -> (usize, usize, Vec<u8>) {
    let mut reader = png::Decoder::new(std::io::Cursor::new(png))
        .read_info()
        .unwrap();
    let mut rgb = vec![0u8; reader.output_buffer_size().unwrap()];
    let info = reader.next_frame(&mut rgb).unwrap();
    assert_eq!(info.color_type, png::ColorType::Rgb);
    (info.width as usize, info.height as usize, rgb)
}

/// Centroids [px] of the grounded rollers' fill (exact colour 70, 82, 96) in
/// the left `x_max` px, split in two at the widest gap in x.
fn roller_centroids(w: usize, rgb: &[u8], x_max: usize) -> [(f64, f64); 2] {
    let mut px: Vec<(usize, usize)> = rgb
        .chunks_exact(3)
        .enumerate()
        .filter(|(i, p)| *p == [70, 82, 96] && i % w < x_max)
        .map(|(i, _)| (i % w, i / w))
        .collect();
    px.sort_unstable();
    let cut = (1..px.len())
        .max_by_key(|&i| px[i].0 - px[i - 1].0)
        .unwrap();
    let mean = |s: &[(usize, usize)]| {
        let n = s.len() as f64;
        (
            s.iter().map(|p| p.0 as f64).sum::<f64>() / n,
            s.iter().map(|p| p.1 as f64).sum::<f64>() / n,
        )
    };
    [mean(&px[..cut]), mean(&px[cut..])]
}

/// The side view with the box differs from the one without it inside the
/// box's rectangle (located from the rollers' centres, 1.5 m apart at
/// z = 1 m, on the equal-scale chart) and nowhere else on the chart but its
/// label just above it (the legend, right of the chart, gains a row).
#[test]
fn the_side_view_draws_a_conductor_where_it_is() {
    let line = view_line();
    let charge = charge_profile(&line);
    let side = figures::side_view(&line, &charge);
    let (wpx, hpx) = (1400, 700);
    let with = side_view_png(
        &side,
        &pictures::conductor_layer(&line, false, None),
        wpx,
        hpx,
    )
    .unwrap();
    let without = side_view_png(&side, &ConductorLayer::default(), wpx, hpx).unwrap();
    let (w, h, a) = decode(&with);
    let (_, _, b) = decode(&without);
    // The chart sits left of the 330 px legend panel.
    let chart_right = w - 330;
    let [ra, rb] = roller_centroids(w, &b, chart_right);
    let scale = (rb.0 - ra.0) / 1.5; // px per metre
    assert!(scale > 100.0, "{scale} px/m");
    let to_px = |x: f64, z: f64| (ra.0 + x * scale, ra.1 - (z - 1.0) * scale);
    let (x0, y1) = to_px(0.55, 0.3);
    let (x1, y0) = to_px(0.95, 0.7);
    let differs = |x: usize, y: usize| {
        let i = 3 * (y * w + x);
        a[i..i + 3] != b[i..i + 3]
    };
    // Inside the rectangle (3 px in from its edges): the fill and hatch.
    let m = 3.0;
    let (mut inside, mut changed) = (0, 0);
    for y in (y0 + m) as usize..=(y1 - m) as usize {
        for x in (x0 + m) as usize..=(x1 - m) as usize {
            inside += 1;
            changed += usize::from(differs(x, y));
        }
    }
    assert!(inside > 1000, "{inside} px inside");
    assert!(changed * 10 >= inside * 9, "{changed} of {inside} changed");
    // Elsewhere on the chart: nothing but the label (up to 30 px above).
    let g = 5.0;
    let allowed = |x: usize, y: usize| {
        let (x, y) = (x as f64, y as f64);
        x >= x0 - g && x <= x1 + g && y >= y0 - 30.0 && y <= y1 + g
    };
    let stray: Vec<(usize, usize)> = (0..h)
        .flat_map(|y| (0..chart_right).map(move |x| (x, y)))
        .filter(|&(x, y)| differs(x, y) && !allowed(x, y))
        .collect();
    assert!(
        stray.is_empty(),
        "{} px changed outside: {:?}",
        stray.len(),
        &stray[..stray.len().min(5)]
    );
}

/// The gravure test line (tests/fixtures/lines/gravure.yaml): a grounded
/// 300 mm cylinder CYL beside the path, under span S5 (R4-R5), not on the
/// web path. No bar the planner searches or proposes comes within three bar
/// distances of it, and the positions that would are listed as refused.
/// The distance is checked independently of the planner's convex test: the
/// bar is a segment across the web (|y| ≤ 0.5 m) parallel to the cylinder's
/// axis (y, 1.4 m long, so it covers the bar), hence its distance is the
/// side-view distance from the bar to the axis minus the radius.
#[test]
fn no_planned_bar_faces_the_grounded_cylinder_beside_the_path() {
    use websigma::model::geometry::meter_geometry;
    let text = include_str!("fixtures/lines/gravure.yaml");
    let line = parse_line(text).unwrap();
    let to_cylinder = |c: &Candidate| {
        let (at, _) = meter_geometry(&line.path.spans[c.span], c.along, 0.0, c.distance, c.side);
        (at[0] - 3.1).hypot(at[2] - 0.8) - 0.15
    };
    let st = PlanSettings::new();
    let (cands, refused) = candidates_and_refusals(&line, &st);
    assert!(
        refused.len() >= 2,
        "positions under S5 near CYL are refused: {refused:#?}"
    );
    for r in &refused {
        let d = to_cylinder(&r.candidate);
        assert!(d < 0.12, "refused at {d} m from CYL: {r:#?}");
        let Refusal::NearConductor {
            conductor,
            distance,
            ..
        } = r.reason;
        assert_eq!(conductor.id(&line), "CYL");
        assert!((distance - d).abs() < 1e-5, "{distance} against {d}");
    }
    for c in &cands {
        assert!(to_cylinder(c) >= 0.12 - 1e-9, "{c:#?}");
    }
    let scene = Scene::new(&line, SolverSettings::default()).unwrap();
    let profiles: Vec<_> = line
        .assess
        .iter()
        .map(|n| websigma::assess::profile::load_profile(n).unwrap())
        .collect();
    let p = plan(&line, &profiles, &st, &scene, &|_, _| {}).unwrap();
    assert!(!p.options.is_empty());
    for o in &p.options {
        for &b in &o.bars {
            assert!(to_cylinder(&p.candidates[b]) >= 0.12 - 1e-9);
        }
    }
}
