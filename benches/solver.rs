//! # Release benchmark of the field solver
//!
//! Measures the speed of the three layers of the field stage and prints one
//! Markdown table (median of several repetitions, timed with
//! `std::time::Instant`, inputs and outputs passed through
//! `std::hint::black_box`):
//!
//! 1. the closed form for a uniform rectangle
//!    ([`websigma::field::kernels::uniform_rectangle`], V and E together):
//!    span-point evaluations per second over 2²⁰ varied points around a
//!    1 m × 1.25 m rectangle, on one thread and spread over 2 rayon threads;
//! 2. the numerical patch integral ([`websigma::field::integrate::patch_field`],
//!    rel_tol 1e-9): µs per span-point (V, E_u, E_y, E_h) for a 1 m × 1.25 m
//!    patch with a decaying density at 1 m, 25 mm and 0.5 mm from it, for the
//!    `edges`, `tilt` and a 3-piece `table` profile, against the target ≤ 1 µs,
//!    with the ratio to the uniform closed form on the same rectangle at the
//!    same point (timed in the same run), the path taken (closed-form moments
//!    with the degree of the decay polynomial, or the Gauss–Kronrod plan with
//!    its evaluation count) and the double-exponential rule's time for the
//!    same integral;
//! 3. a 400 × 300 side-view grid (y = 0) over a 20-span serpentine line with a
//!    ground plane ([`websigma::field::WebField::at`]): wall time on 1 and 2
//!    threads, for a uniform non-decaying density (closed-form path) and for
//!    `edges` k = 0.6 with τ = 5 s (numerical path);
//! 4. the eliminator planner ([`websigma::plan::plan`]) on the demo line with
//!    its conductors, 3 bars over 200 candidates, exhaustive (the scene build
//!    timed apart), against 5 s;
//! 5. the readings inversion ([`websigma::readings::invert_readings`]) of the
//!    demo line with its conductors (the scene build timed apart), against
//!    0.2 s.
//!
//! It also writes `target/bench-reference.json` (relative to the crate root):
//! V and E of the `edges` patch at P1..P3 computed at rel_tol 1e-12 (by the
//! double-exponential rule, independent of the fast path), the values
//! at rel_tol 1e-9 and their cost in µs per point, and the serpentine of part 3
//! (its spans, patches and plane) with websigma's V and E at points 1 m, 25 mm
//! and 0.5 mm from its last span: a reference (every span and image by the
//! double-exponential rule at rel_tol 1e-12) and
//! [`websigma::field::WebField::at`] at 1e-9 with its µs per point; read by
//! `benches/dblquad.py`.
//!
//! The integrals timed are Coulomb's law over a flat patch in its own frame
//! (u along, y across, h normal):
//!
//! $$ V(P) = \frac{1}{4πε_0}\iint \frac{σ(u',y')}{R}\,du'\,dy', \qquad
//!    \mathbf E(P) = \frac{1}{4πε_0}\iint σ(u',y')\,\frac{P-r'}{R^3}\,du'\,dy', \qquad
//!    σ = A\,e^{-u'/λ} f(y'). $$
//!
//! | symbol | meaning | unit |
//! | --- | --- | --- |
//! | σ | surface charge density | C/m² |
//! | A | amplitude, 1e-5 | C/m² |
//! | λ | decay length, 5 | m |
//! | f | across-web shape: 1 + k(2y/w)² (edges), 1 + k(2y/w) (tilt), table | 1 |
//! | w | patch width, 1.25 | m |
//! | P = (u, y, h) | field point in the patch frame | m |
//! | R | distance from source point r′ to P | m |
//! | V, E | potential, field | V, V/m |
//!
//! Assumptions: thin sheet in free space, as in the solver. Valid range: the
//! fixed cases above; speed figures depend on the machine (printed first).
//!
//! Run (release build, takes about a minute on 2 cores):
//!
//! ```sh
//! cargo bench --bench solver
//! cargo bench --bench solver -- 4   # one part only (1–5)
//! python3 benches/dblquad.py   # the same integrals with scipy.integrate.dblquad
//! ```
//!
//! ## Reference
//! Coulomb's law and superposition: D. J. Griffiths, *Introduction to
//! Electrodynamics*, 4th ed., §2.1. Timing method: median of repeated
//! wall-clock runs (no statistics beyond the median).

#[path = "common/load.rs"]
mod load;
use load::{Load, machine};

use rayon::prelude::*;
use std::error::Error;
use std::hint::black_box;
use std::time::{Duration, Instant};
use websigma::field::integrate::{
    Patch, patch_field, patch_field_fast, patch_field_moments, patch_field_numerical,
};
use websigma::field::kernels::{LocalField, QuadPiece, uniform_rectangle};
use websigma::field::{Scene, SolverSettings, WebField};

/// Amplitude A of the benchmark patch [C/m²].
const AMPLITUDE: f64 = 1e-5;
/// Decay length λ of the benchmark patch [m].
const DECAY: f64 = 5.0;
/// Length of the patch along the span [m].
const LEN: f64 = 1.0;
/// Width of the patch across the span [m].
const WIDTH: f64 = 1.25;
/// The three field points of part 2 (patch frame) [m], with their names.
const POINTS: [(&str, [f64; 3]); 3] = [
    ("P1", [0.5, 0.1, 1.0]),
    ("P2", [0.5, 0.1, 0.025]),
    ("P3", [0.5, 0.1, 0.0005]),
];
/// Tolerance of the timed runs and of the reference values.
const REL_TOL: f64 = 1e-9;
const REF_TOL: f64 = 1e-12;

/// One row of the printed table.
struct Row {
    case: String,
    threads: usize,
    value: String,
    unit: &'static str,
    target: String,
}

/// Median of `reps` timings of `f`.
fn median(reps: usize, mut f: impl FnMut() -> Duration) -> Duration {
    let mut t: Vec<Duration> = (0..reps.max(1)).map(|_| f()).collect();
    t.sort();
    t[t.len() / 2]
}

/// Small deterministic generator (64-bit LCG, Knuth's MMIX constants) giving numbers in [0, 1).
struct Lcg(u64);

impl Lcg {
    fn next(&mut self) -> f64 {
        self.0 = self
            .0
            .wrapping_mul(6_364_136_223_846_793_005)
            .wrapping_add(1_442_695_040_888_963_407);
        (self.0 >> 11) as f64 / (1u64 << 53) as f64
    }
}

fn sum_field(f: &LocalField) -> f64 {
    f.v + f.e[0] + f.e[1] + f.e[2]
}

/// The closed form at every point of `pts`, summed (so nothing is optimised away).
fn uniform_sum(pts: &[[f64; 3]]) -> f64 {
    let half = 0.5 * WIDTH;
    pts.iter()
        .map(|&p| {
            sum_field(&uniform_rectangle(
                0.0,
                LEN,
                -half,
                half,
                AMPLITUDE,
                black_box(p),
            ))
        })
        .sum()
}

fn part1(rows: &mut Vec<Row>) -> Result<(), Box<dyn Error>> {
    const N: usize = 1 << 20;
    let mut rng = Lcg(0x5eed);
    // Points in a box around the rectangle [0, 1] × [−0.625, 0.625], 1 mm to 1.5 m above or below it.
    let pts: Vec<[f64; 3]> = (0..N)
        .map(|_| {
            let u = -1.0 + 3.0 * rng.next();
            let y = -1.25 + 2.5 * rng.next();
            let h = 1e-3 + 1.5 * rng.next();
            let h = if rng.next() < 0.5 { -h } else { h };
            [u, y, h]
        })
        .collect();
    black_box(uniform_sum(&pts)); // warm-up
    let t1 = median(7, || {
        let t = Instant::now();
        black_box(uniform_sum(black_box(&pts)));
        t.elapsed()
    });
    let pool = rayon::ThreadPoolBuilder::new().num_threads(2).build()?;
    let t2 = median(7, || {
        let t = Instant::now();
        let s: f64 = pool.install(|| pts.par_chunks(8192).map(uniform_sum).sum());
        black_box(s);
        t.elapsed()
    });
    let rate1 = N as f64 / t1.as_secs_f64() / 1e6;
    let rate2 = N as f64 / t2.as_secs_f64() / 1e6;
    let case = format!("1: uniform closed form, E and V, {N} points");
    rows.push(Row {
        case: case.clone(),
        threads: 1,
        value: format!("{rate1:.1}"),
        unit: "M evals/s",
        target: "≥ 10 M/s per core".into(),
    });
    rows.push(Row {
        case,
        threads: 2,
        value: format!("{rate2:.1} ({:.1} per thread)", rate2 / 2.0),
        unit: "M evals/s",
        target: "≥ 10 M/s per core".into(),
    });
    Ok(())
}

/// The benchmark patch with across-web shape `across`.
fn patch(across: Vec<QuadPiece>) -> Patch {
    Patch {
        len: LEN,
        amplitude: AMPLITUDE,
        decay_length: DECAY,
        across,
    }
}

/// The three across-web shapes of part 2.
fn profiles() -> Vec<(&'static str, Patch)> {
    let h = 0.5 * WIDTH;
    let one = |c: [f64; 3]| {
        vec![QuadPiece {
            y_lo: -h,
            y_hi: h,
            c,
        }]
    };
    // Piecewise linear table [y, f], 3 pieces, as the line reader builds it.
    let table = [(-h, 1.5), (-0.2, 1.0), (0.3, 1.1), (h, 0.7)];
    let pieces = table
        .windows(2)
        .map(|w| {
            let (y0, f0) = w[0];
            let (y1, f1) = w[1];
            let s = (f1 - f0) / (y1 - y0);
            QuadPiece {
                y_lo: y0,
                y_hi: y1,
                c: [f0 - s * y0, s, 0.0],
            }
        })
        .collect();
    vec![
        (
            "edges k = 0.6",
            patch(one([1.0, 0.0, 4.0 * 0.6 / (WIDTH * WIDTH)])),
        ),
        ("tilt k = 0.5", patch(one([1.0, 2.0 * 0.5 / WIDTH, 0.0]))),
        ("table, 3 pieces", patch(pieces)),
    ]
}

/// Median µs per call of `f` (calibrated to about 30 ms per repetition, 7 repetitions).
fn time_us<T, E: Error + 'static>(
    mut once: impl FnMut() -> Result<T, E>,
) -> Result<f64, Box<dyn Error>> {
    black_box(once()?);
    let t = Instant::now();
    let mut n = 0u32;
    while t.elapsed() < Duration::from_millis(30) {
        black_box(once()?);
        n += 1;
    }
    let mut err = None;
    let d = median(7, || {
        let t = Instant::now();
        for _ in 0..n {
            match once() {
                Ok(f) => {
                    black_box(f);
                }
                Err(e) => err = Some(e),
            }
        }
        t.elapsed()
    });
    if let Some(e) = err {
        return Err(e.into());
    }
    Ok(d.as_secs_f64() * 1e6 / f64::from(n))
}

/// Median µs per call of `patch_field(patch, p, REL_TOL)`.
fn time_patch(patch: &Patch, p: [f64; 3]) -> Result<f64, Box<dyn Error>> {
    time_us(|| patch_field(black_box(patch), black_box(p), black_box(REL_TOL)))
}

/// Median µs per call of the uniform closed form on the same rectangle at `p` (the floor).
fn time_uniform(p: [f64; 3]) -> Result<f64, Box<dyn Error>> {
    let half = 0.5 * WIDTH;
    time_us(|| {
        Ok::<_, std::fmt::Error>(uniform_rectangle(
            0.0,
            LEN,
            -half,
            half,
            AMPLITUDE,
            black_box(p),
        ))
    })
}

fn json_field(f: &LocalField) -> serde_json::Value {
    serde_json::json!({ "v": f.v, "e": f.e })
}

fn part2(rows: &mut Vec<Row>) -> Result<(), Box<dyn Error>> {
    let mut reference = Vec::new();
    for (i, (name, patch)) in profiles().iter().enumerate() {
        for &(pname, p) in &POINTS {
            let us = time_patch(patch, p)?;
            let floor = time_uniform(p)?;
            let de = time_us(|| patch_field_numerical(black_box(patch), black_box(p), REL_TOL))?;
            // Which path `patch_field` took (the far rule does not apply this close).
            let path = match (
                patch_field_moments(patch, p, REL_TOL)?,
                patch_field_fast(patch, p, REL_TOL)?,
            ) {
                (Some((_, b)), _) => format!("closed-form moments, degree {}", b.degree),
                (None, Some((_, _, n))) => format!("Gauss–Kronrod, {n} evaluations"),
                (None, None) => "double-exponential fallback".to_string(),
            };
            rows.push(Row {
                case: format!(
                    "2: patch 1 m × 1.25 m, {name}, {pname} (h = {} mm): {path} (the double-exponential rule takes {de:.1} µs)",
                    p[2] * 1e3
                ),
                threads: 1,
                value: format!("{us:.2} ({:.0}× the uniform closed form, {floor:.3} µs)", us / floor),
                unit: "µs/span-point",
                target: "≤ 1 µs (about 10× the uniform floor)".into(),
            });
            if i == 0 {
                // Reference by the double-exponential rule, independent of the fast path.
                let exact = patch_field_numerical(patch, p, REF_TOL)?;
                let ours = patch_field(patch, p, REL_TOL)?;
                reference.push(serde_json::json!({
                    "name": pname,
                    "at": p,
                    "reference_rel_tol": REF_TOL,
                    "reference": json_field(&exact),
                    "websigma_rel_tol": REL_TOL,
                    "websigma": json_field(&ours),
                    "websigma_us_per_point": us,
                }));
            }
        }
    }
    let doc = serde_json::json!({
        "what": "V [V] and E = [E_u, E_y, E_h] [V/m] of a patch u' in [0, 1] m, y' in [-0.625, 0.625] m, h' = 0, sigma = A exp(-u'/lambda) (1 + k (2y'/w)^2), from cargo bench --bench solver",
        "amplitude": AMPLITUDE,
        "decay_length": DECAY,
        "length": LEN,
        "width": WIDTH,
        "edges_k": 0.6,
        "points": reference,
        "line": line_reference()?,
    });
    let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("target");
    std::fs::create_dir_all(&dir)?;
    std::fs::write(
        dir.join("bench-reference.json"),
        serde_json::to_string_pretty(&doc)? + "\n",
    )?;
    Ok(())
}

/// Distances from the last span of the serpentine of part 3 at which the line is compared
/// with `scipy.integrate.dblquad` (benches/dblquad.py) [m].
const LINE_DISTANCES: [f64; 3] = [1.0, 0.025, 0.0005];

/// The serpentine of part 3 (edges k = 0.6, τ = 5 s, ground plane) for benches/dblquad.py:
/// every span's rectangle and charged patches, the plane, and at points 1 m, 25 mm and
/// 0.5 mm from the middle of the last span (along its normal, away from the line, y = 0.1 m)
/// a reference V and E (every span and image by the double-exponential rule at 1e-12) and
/// websigma's at 1e-9 with `WebField::at`'s time.
fn line_reference() -> Result<serde_json::Value, Box<dyn Error>> {
    let line = websigma::model::parse_line(&serpentine_yaml("  shape: edges\n  k: 0.6", "5 s"))?;
    let charge = websigma::charge::charge_profile(&line);
    let pieces: Vec<[f64; 5]> = charge
        .across
        .pieces()
        .iter()
        .map(|p| [p.y_lo, p.y_hi, p.c[0], p.c[1], p.c[2]])
        .collect();
    let spans: Vec<serde_json::Value> = line
        .path
        .spans
        .iter()
        .map(|s| {
            let patches: Vec<serde_json::Value> = charge
                .pieces_between(s.s_start, s.s_end)
                .into_iter()
                .filter(|(_, _, a)| *a != 0.0)
                .map(|(a, b, amp)| {
                    serde_json::json!({
                        "offset": a - s.s_start,
                        "length": b - a,
                        "amplitude": amp,
                    })
                })
                .collect();
            serde_json::json!({
                "name": s.name,
                "start": s.start,
                "direction": s.direction(),
                "length": s.length,
                "patches": patches,
            })
        })
        .collect();
    let scene = Scene::new(&line, SolverSettings::new(REL_TOL)?)?;
    let web = scene.web(&charge);
    let across = charge
        .across
        .pieces()
        .iter()
        .map(|p| QuadPiece {
            y_lo: p.y_lo,
            y_hi: p.y_hi,
            c: p.c,
        })
        .collect::<Vec<_>>();
    let zg = line
        .ground_plane
        .ok_or("the serpentine has no ground plane")?;
    // Reference independent of the fast path: every span and image by the double-exponential
    // rule at 1e-12 (the superposition of WebField::at, written out).
    let reference = |at: [f64; 3]| -> Result<LocalField, Box<dyn Error>> {
        let mut sum = LocalField::default();
        for s in &line.path.spans {
            let (d, mut one) = (s.direction(), LocalField::default());
            for (sign, q) in [(1.0, at), (-1.0, [at[0], at[1], 2.0 * zg - at[2]])] {
                let fr = websigma::model::geometry::span_frame(s, line.web.width, q);
                let mut local = LocalField::default();
                for (a, b, amp) in charge.pieces_between(s.s_start, s.s_end) {
                    let patch = Patch {
                        len: b - a,
                        amplitude: amp,
                        decay_length: charge.decay_length,
                        across: across.clone(),
                    };
                    let p = [fr.u - (a - s.s_start), fr.y, fr.h];
                    local.add(&patch_field_numerical(&patch, p, REF_TOL)?);
                }
                // Global E = E_u t + E_y ŷ + E_h n; the image's E_z enters with the other sign.
                let e = [
                    local.e[0] * d[0] - local.e[2] * d[1],
                    local.e[1],
                    local.e[0] * d[1] + local.e[2] * d[0],
                ];
                one.v += sign * local.v;
                one.e[0] += sign * e[0];
                one.e[1] += sign * e[1];
                one.e[2] += e[2];
            }
            sum.add(&one);
        }
        Ok(sum)
    };
    let last = line
        .path
        .spans
        .last()
        .ok_or("the serpentine has no spans")?;
    let d = last.direction();
    // Normal (−d_z, d_x) in x–z: away from the rollers for this last, descending span.
    let n = [-d[1], d[0]];
    let mid = [
        last.start[0] + 0.5 * last.length * d[0],
        last.start[1] + 0.5 * last.length * d[1],
    ];
    let mut points = Vec::new();
    for h in LINE_DISTANCES {
        let at = [mid[0] + h * n[0], 0.1, mid[1] + h * n[1]];
        let exact = reference(at)?;
        let ours = web.at(at, false)?;
        let us = time_us(|| web.at(black_box(at), false))?;
        points.push(serde_json::json!({
            "distance": h,
            "at": at,
            "reference": { "v": exact.v, "e": exact.e },
            "websigma": { "v": ours.v, "e": ours.e },
            "websigma_us_per_point": us,
        }));
    }
    Ok(serde_json::json!({
        "what": "20-span serpentine of part 3 (edges k = 0.6, tau = 5 s): spans in the x-z plane (start [x, z] m, unit direction, length m), patches (offset, length m, amplitude C/m^2 at the patch start), decay length m, across-web pieces [y_lo, y_hi, c0, c1, c2], width m, ground plane z m; E = [Ex, Ey, Ez]",
        "width": line.web.width,
        "ground_plane": line.ground_plane,
        "decay_length": charge.decay_length,
        "across": pieces,
        "spans": spans,
        "points": points,
    }))
}

/// A 20-span serpentine: 19 rollers (120 mm) alternating z = 1.3 m (cw) and 0.5 m (ccw),
/// 0.5 m apart in x, between free points at x = 0 and x = 10 m, above a ground plane at 0 m.
fn serpentine_yaml(across: &str, tau: &str) -> String {
    let mut rollers = String::new();
    let mut path = String::from("  - point: [0 m, 1.0 m]\n    id: IN\n");
    for i in 1..=19 {
        let x = 0.5 * f64::from(i);
        let (z, wrap) = if i % 2 == 1 {
            (1.3, "cw")
        } else {
            (0.5, "ccw")
        };
        rollers.push_str(&format!(
            "  - {{id: R{i}, center: [{x} m, {z} m], diameter: 120 mm, earthing: grounded}}\n"
        ));
        path.push_str(&format!("  - {{roller: R{i}, wrap: {wrap}}}\n"));
    }
    path.push_str("  - point: [10 m, 1.0 m]\n    id: OUT\n");
    format!(
        "line: benchmark serpentine, 19 rollers
web:
  width: 1.2 m
  thickness: 50 um
  relative_permittivity: 3
  relaxation_time: {tau}
  speed: 1 m/s
ground_plane: 0 m
rollers:
{rollers}path:
{path}across_profile:
{across}
charge:
  - at: start
    sigma: 10 uC/m^2
"
    )
}

/// Sum of V over the grid points that are not on the web, and their number.
fn grid_sum(model: &WebField<'_>, pts: &[[f64; 3]]) -> (f64, usize) {
    pts.par_iter()
        .filter_map(|&p| model.at(black_box(p), false).ok())
        .map(|f| (f.v + f.e[0] + f.e[2], 1))
        .reduce(|| (0.0, 0), |a, b| (a.0 + b.0, a.1 + b.1))
}

fn part3(rows: &mut Vec<Row>) -> Result<(), Box<dyn Error>> {
    let (nx, nz) = (400usize, 300usize);
    let pts: Vec<[f64; 3]> = (0..nz)
        .flat_map(|j| {
            (0..nx).map(move |i| {
                let x = -0.5 + 11.0 * i as f64 / (nx - 1) as f64;
                let z = 0.02 + 2.48 * j as f64 / (nz - 1) as f64;
                [x, 0.0, z]
            })
        })
        .collect();
    let cases = [
        (
            "3a: grid 400 × 300, 20 spans + images, uniform, τ = 1e30 s",
            "  shape: uniform",
            "1e30 s",
            5,
            "well under 1 s",
        ),
        (
            "3b: grid 400 × 300, 20 spans + images, edges k = 0.6, τ = 5 s",
            "  shape: edges\n  k: 0.6",
            "5 s",
            3,
            "",
        ),
    ];
    for (name, across, tau, reps, target) in cases {
        let line = websigma::model::parse_line(&serpentine_yaml(across, tau))?;
        let charge = websigma::charge::charge_profile(&line);
        let scene = Scene::new(&line, SolverSettings::new(REL_TOL)?)?;
        let model = scene.web(&charge);
        for threads in [1usize, 2] {
            let pool = rayon::ThreadPoolBuilder::new()
                .num_threads(threads)
                .build()?;
            let mut done = 0;
            let d = median(reps, || {
                let t = Instant::now();
                let (s, n) = pool.install(|| grid_sum(&model, black_box(&pts)));
                black_box(s);
                done = n;
                t.elapsed()
            });
            rows.push(Row {
                case: format!(
                    "{name} ({done} of {} points, {} spans)",
                    pts.len(),
                    scene.span_count()
                ),
                threads,
                value: format!("{:.3}", d.as_secs_f64()),
                unit: "s",
                target: target.into(),
            });
        }
    }
    Ok(())
}

/// The demo line and its threshold profiles.
fn demo_line() -> Result<
    (
        websigma::model::Line,
        Vec<websigma::assess::ThresholdProfile>,
    ),
    Box<dyn Error>,
> {
    let line = websigma::model::parse_line(websigma::DEMO_LINE)?;
    let profiles = websigma::assess::with_air_limit(
        line.assess
            .iter()
            .map(|n| websigma::assess::profile::load_profile(n))
            .collect::<Result<Vec<_>, _>>()?,
    );
    Ok((line, profiles))
}

/// The demo's scene as the command line builds it (conductors on the
/// default panels, the default tolerance), and the time it took.
fn demo_scene(line: &websigma::model::Line) -> Result<(Scene, f64), Box<dyn Error>> {
    let t = Instant::now();
    let scene = Scene::new(line, SolverSettings::default().with_default_conductors())?;
    Ok((scene, t.elapsed().as_secs_f64()))
}

/// 4: the eliminator planner on the demo line with its conductors (the
/// scene as `plan` builds it, timed apart): 3 powered bars, candidates
/// every 70 mm (200 positions, 1.3 million combinations), exhaustive.
fn part4(rows: &mut Vec<Row>) -> Result<(), Box<dyn Error>> {
    use websigma::plan::{PlanSettings, plan};
    let (line, profiles) = demo_line()?;
    let (scene, build) = demo_scene(&line)?;
    rows.push(Row {
        case: "4a: demo line, scene build (conductors' solve on the default panels)".to_string(),
        threads: 2,
        value: format!("{build:.2}"),
        unit: "s",
        target: "separate from the planner".to_string(),
    });
    let mut st = PlanSettings::new();
    st.bars = Some(3);
    st.spacing = 0.07;
    let t = Instant::now();
    let p = plan(&line, &profiles, &st, &scene, &|_, _| {})?;
    let secs = t.elapsed().as_secs_f64();
    rows.push(Row {
        case: format!(
            "4b: planner, demo line with conductors, 3 bars over {} candidates ({} combinations, exhaustive), 2 threads",
            p.candidates.len(),
            p.evaluated
        ),
        threads: 2,
        value: format!(
            "{secs:.2} ({:.0} k placements/s)",
            p.evaluated as f64 / secs / 1e3
        ),
        unit: "s",
        target: "≤ 5 s".to_string(),
    });
    Ok(())
}

/// 5: converting the demo's meter readings into densities (the readings
/// inversion) in the scene `readings` builds: the scene build, the first
/// conversion and the median of 5 more (each charges the scene with a unit
/// density per segment, fits, and computes the fitted field at the meters).
fn part5(rows: &mut Vec<Row>) -> Result<(), Box<dyn Error>> {
    let (line, _) = demo_line()?;
    let (scene, build) = demo_scene(&line)?;
    rows.push(Row {
        case: "5a: demo line, scene build (conductors' solve on the default panels)".to_string(),
        threads: 2,
        value: format!("{build:.2}"),
        unit: "s",
        target: "separate from the inversion".to_string(),
    });
    let t = Instant::now();
    let first = websigma::readings::invert_readings(&line, &scene)?;
    let first_secs = t.elapsed().as_secs_f64();
    let d = median(5, || {
        let t = Instant::now();
        black_box(
            websigma::readings::invert_readings(black_box(&line), &scene)
                .map(|r| r.readings.len())
                .ok(),
        );
        t.elapsed()
    });
    rows.push(Row {
        case: format!(
            "5b: readings inversion of the demo ({} readings), first run in the scene",
            first.readings.len()
        ),
        threads: 2,
        value: format!("{first_secs:.3}"),
        unit: "s",
        target: "≤ 0.2 s".to_string(),
    });
    rows.push(Row {
        case: "5c: readings inversion of the demo, median of 5 later runs".to_string(),
        threads: 2,
        value: format!("{:.3}", d.as_secs_f64()),
        unit: "s",
        target: "≤ 0.2 s".to_string(),
    });
    Ok(())
}

fn main() -> Result<(), Box<dyn Error>> {
    println!("{}\n", machine());
    let load = Load::start();
    // `cargo bench --bench solver -- 4` runs part 4 only (any part 1–5).
    let only = std::env::args().skip(1).find(|a| !a.starts_with('-'));
    let run = |k: &str| only.as_deref().is_none_or(|o| o == k);
    let mut rows = Vec::new();
    if run("1") {
        part1(&mut rows)?;
    }
    if run("2") {
        part2(&mut rows)?;
    }
    if run("3") {
        part3(&mut rows)?;
    }
    if run("4") {
        part4(&mut rows)?;
    }
    if run("5") {
        part5(&mut rows)?;
    }
    println!("| benchmark | threads | median | unit | target |");
    println!("| --- | ---: | ---: | --- | --- |");
    for r in &rows {
        println!(
            "| {} | {} | {} | {} | {} |",
            r.case, r.threads, r.value, r.unit, r.target
        );
    }
    // How much of the machine other processes used meanwhile (they slow the figures above).
    if let Some(line) = load.report() {
        println!("\n{line}");
    }
    Ok(())
}
