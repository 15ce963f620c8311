//! # Release benchmark of the boundary-element conductor solve
//!
//! Field stage, conductor part ([`websigma::field::bem`]): measures, with the
//! crate's public API only, what the dense moment-method solve costs and how
//! accurate it is, and prints Markdown tables (median of a few repetitions,
//! timed with `std::time::Instant`, results passed through
//! `std::hint::black_box`):
//!
//! 1. **Unit cube capacitance.** An isolated cube of side a = 1 m, no ground
//!    plane, uncharged, meshed with 8, 12, 16 and 24 panels per edge (384,
//!    864, 1536, 3456 panels, default edge grading 0.5). Timed: `Bem::new`
//!    (meshing, assembly, LU factorisation and the unit-charge solve that
//!    gives the capacitance); the assembly alone, repeated here exactly as
//!    `Bem::new` does it (one column per rayon task,
//!    [`websigma::field::panels::Panel::potential_factor`] at every
//!    collocation point: closed form near a panel, Gauss rules far away); the
//!    LU factorisation alone (`faer`'s partial-pivot LU of that matrix, as
//!    `Bem::new` calls it). Also the same
//!    matrix with the exact closed form
//!    ([`websigma::field::kernels::rectangle_geometry`]) for every pair on one
//!    thread, the fair counterpart of a plain numpy script, and the largest
//!    relative difference between the two matrices. Accuracy: C/(4πε₀a)
//!    against the published 0.6606785.
//! 2. **A line's conductors.** 11 grounded rollers (radius 50 mm, length
//!    1.4 m, axes along y at z = 0.9 m, spaced 0.8 m in x from x = 0) and an
//!    isolated uncharged plate 1.0 m × 1.4 m at z = 0.3 m under rollers 4 and
//!    5, over a grounded plane z = 0, at panel sizes 100 mm and 50 mm. Timed:
//!    `Bem::new`, its assembly alone (with the image term), the LU alone, one
//!    back-substitution (`Bem::solve` for a given external potential) and
//!    `Induced::at` (V and E with images) per field point and per panel, on
//!    one thread, over points in the air between the rollers.
//!
//! It also writes `target/bench-bem.json` (relative to the crate root): the
//! cube's panel counts, capacitances and timings, read by `benches/bem_numpy.py`.
//!
//! The capacitance solved for (point-matching collocation, see the module
//! header of [`websigma::field::bem`]):
//!
//! $$ \sum_j G_{ij}\,q̃_j = V \;(\text{all } i), \qquad
//!    C = \frac{Q}{V} = \frac{4πε_0\sum_j q̃_j A_j}{V}, \qquad
//!    G_{ij} = \iint_{\text{panel } j}\frac{dA'}{|\mathbf x_i-\mathbf r'|}. $$
//!
//! | symbol | meaning | unit |
//! | --- | --- | --- |
//! | G_ij | influence of panel j at centroid x_i | m |
//! | q̃_j | σ_j/(4πε₀) | V/m |
//! | A_j | panel area | m² |
//! | V, Q | cube potential and charge | V, C |
//! | C | capacitance of the isolated cube | F |
//! | a | cube side, 1 | m |
//! | ε₀ | vacuum permittivity ([`websigma::units::EPS0`]) | F/m |
//!
//! Assumptions: perfect conductors in vacuum, as in the solver. Speed figures
//! depend on the machine and its load (both printed). Valid range: the fixed
//! cases above.
//!
//! Run (release build; about two minutes on 2 cores, most of it the 50 mm scene):
//!
//! ```sh
//! cargo bench --bench bem
//! python3 benches/bem_numpy.py   # the cube again, scripted with numpy/scipy
//! ```
//!
//! ## Reference
//! Unit cube capacitance 0.6606785·4πε₀a: F. H. Read, J. Comput. Phys. 133
//! (1997), boundary elements with extrapolation; C.-O. Hwang and M. Mascagni,
//! J. Appl. Phys. 95 (2004), random walks, 0.660678. Quoted from memory, as in
//! `tests/bem.rs`. Moment method: R. F. Harrington, *Field Computation by
//! Moment Methods*, 1968, ch. 1–2. Timing method: median of repeated
//! wall-clock runs (no statistics beyond the median).

#[path = "common/load.rs"]
mod load;
use load::{Load, machine};

use faer::MatRef;
use faer::linalg::solvers::PartialPivLu;
use rayon::prelude::*;
use std::error::Error;
use std::f64::consts::PI;
use std::hint::black_box;
use std::time::{Duration, Instant};
use websigma::field::bem::{Bem, BemSettings, ConductorSpec, Earthing};
use websigma::field::kernels::rectangle_geometry;
use websigma::field::panels::{Panel, Shape};
use websigma::units::EPS0;

/// Published unit cube capacitance over 4πε₀a (from memory, see the header).
const CUBE: f64 = 0.660_678_5;
/// Default edge grading of `BemSettings` (used to pick panel sizes giving whole panel counts).
const GRADING: f64 = BemSettings::DEFAULT_GRADING;
/// Panels per cube edge of part 1.
const CUBE_EDGES: [usize; 4] = [8, 12, 16, 24];
/// Part 2: number of rollers, their radius, length, spacing and axis height [m].
const ROLLERS: usize = 11;
const ROLLER_RADIUS: f64 = 0.05;
const ROLLER_LENGTH: f64 = 1.4;
const ROLLER_SPACING: f64 = 0.8;
const ROLLER_Z: f64 = 0.9;

const FLOAT: Earthing = Earthing::Isolated {
    charge: 0.0,
    lumped_capacitance: 0.0,
};

/// Median of `reps` timings of `f`.
fn median(
    reps: usize,
    mut f: impl FnMut() -> Result<Duration, Box<dyn Error>>,
) -> Result<Duration, Box<dyn Error>> {
    let mut t = (0..reps.max(1))
        .map(|_| f())
        .collect::<Result<Vec<_>, _>>()?;
    t.sort();
    Ok(t[t.len() / 2])
}

/// The assembly loop of `Bem::new` over the public panels, column-major, one
/// column per rayon task, with the image term when `ground` is given; returns the matrix.
fn assemble(bem: &Bem, ground: Option<f64>) -> Vec<f64> {
    let panels = bem.panels();
    let n = panels.len();
    let mut data = vec![0.0; n * n];
    data.par_chunks_mut(n).enumerate().for_each(|(j, col)| {
        let pj = &panels[j];
        for (c, pi) in col.iter_mut().zip(panels) {
            let x = pi.center;
            let mut g = pj.potential_factor(x);
            if let Some(zg) = ground {
                g -= pj.potential_factor([x[0], x[1], 2.0 * zg - x[2]]);
            }
            *c = g;
        }
    });
    data
}

/// The same matrix (no ground plane) with the closed form for every pair, on the
/// calling thread: what a plain port of the textbook formula costs, without the
/// far-field Gauss rules of `Panel::potential_factor`.
fn assemble_closed_form(panels: &[Panel]) -> Vec<f64> {
    let n = panels.len();
    let mut data = vec![0.0; n * n];
    for (col, pj) in data.chunks_mut(n).zip(panels) {
        for (c, pi) in col.iter_mut().zip(panels) {
            let d = [
                pi.center[0] - pj.center[0],
                pi.center[1] - pj.center[1],
                pi.center[2] - pj.center[2],
            ];
            let dot = |e: [f64; 3]| d[0] * e[0] + d[1] * e[1] + d[2] * e[2];
            let l = [dot(pj.eu), dot(pj.ev), dot(pj.en)];
            *c = rectangle_geometry(-pj.half_u, pj.half_u, -pj.half_v, pj.half_v, l).v;
        }
    }
    data
}

/// Medians of `Bem::new`, of its assembly alone and of the LU factorisation
/// alone (`faer`'s partial-pivot LU of the assembled matrix, as `Bem::new` calls it).
struct Build {
    build: Duration,
    assembly: Duration,
    lu: Duration,
    bem: Bem,
}

fn time_build(
    specs: &[ConductorSpec],
    ground: Option<f64>,
    settings: BemSettings,
    reps: usize,
) -> Result<Build, Box<dyn Error>> {
    let mut last = None;
    let build = median(reps, || {
        drop(last.take()); // free the previous matrix first
        let t = Instant::now();
        let bem = Bem::new(specs, ground, settings)?;
        let d = t.elapsed();
        last = Some(bem);
        Ok(d)
    })?;
    let bem = last.ok_or("no repetition ran")?;
    let mut matrix = Vec::new();
    let assembly = median(reps, || {
        drop(std::mem::take(&mut matrix));
        let t = Instant::now();
        matrix = assemble(&bem, ground);
        Ok(t.elapsed())
    })?;
    let n = bem.panels().len();
    let lu = median(reps, || {
        let a = MatRef::from_column_major_slice(&matrix, n, n);
        let t = Instant::now();
        let lu = PartialPivLu::new(black_box(a));
        let d = t.elapsed();
        black_box(lu);
        Ok(d)
    })?;
    Ok(Build {
        build,
        assembly,
        lu,
        bem,
    })
}

/// A panel size giving exactly `n` panels along an edge of length `len` (see `panels::MeshParams`).
fn size_for(n: usize, len: f64) -> f64 {
    let factor = 1.0 - GRADING + GRADING * PI / 2.0;
    len * factor / (n as f64 - 0.5)
}

fn secs(d: Duration) -> f64 {
    d.as_secs_f64()
}

fn cube_spec() -> ConductorSpec {
    ConductorSpec {
        id: "cube".into(),
        shape: Shape::Cuboid {
            min: [0.0; 3],
            max: [1.0; 3],
        },
        earthing: FLOAT,
    }
}

fn part1() -> Result<serde_json::Value, Box<dyn Error>> {
    println!("## 1. Isolated unit cube (a = 1 m, no ground plane), capacitance");
    println!();
    println!(
        "| panels | panel size [m] | Bem::new [s] | assembly [s] | LU [s] | closed form everywhere, 1 thread [s] | far rules: max \\|ΔG\\|/G | C/(4πε₀a) | relative error vs 0.6606785 |"
    );
    println!("| ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: |");
    // Warm-up: thread pool and page faults, untimed.
    black_box(Bem::new(
        &[cube_spec()],
        None,
        BemSettings::new(size_for(8, 1.0))?,
    )?);
    let mut rows = Vec::new();
    for n in CUBE_EDGES {
        let h = size_for(n, 1.0);
        let reps = if n >= 24 { 3 } else { 5 };
        let Build {
            build,
            assembly,
            lu,
            bem,
        } = time_build(&[cube_spec()], None, BemSettings::new(h)?, reps)?;
        let panels = bem.panels().len();
        let mut exact = Vec::new();
        let closed = median(reps, || {
            let t = Instant::now();
            exact = assemble_closed_form(bem.panels());
            Ok(t.elapsed())
        })?;
        let far_dev = assemble(&bem, None)
            .iter()
            .zip(&exact)
            .map(|(g, e)| ((g - e) / e).abs())
            .fold(0.0, f64::max);
        drop(exact);
        let c = bem
            .capacitance_to_ground(0)
            .ok_or("the cube has no capacitance")?
            / (4.0 * PI * EPS0);
        let err = (c - CUBE) / CUBE;
        println!(
            "| {panels} | {h:.4} | {:.3} | {:.3} | {:.3} | {:.3} | {far_dev:.1e} | {c:.6} | {err:+.2e} |",
            secs(build),
            secs(assembly),
            secs(lu),
            secs(closed),
        );
        rows.push(serde_json::json!({
            "per_edge": n,
            "panels": panels,
            "panel_size": h,
            "capacitance_over_4pi_eps0_a": c,
            "bem_new_s": secs(build),
            "assembly_s": secs(assembly),
            "lu_s": secs(lu),
            "closed_form_one_thread_s": secs(closed),
        }));
    }
    println!();
    println!(
        "Bem::new = meshing + assembly + LU + the unit-charge solve; assembly and LU are its two stages repeated alone (assembly with far-field Gauss rules, both on 2 threads); the closed-form column builds the same matrix with the exact rectangle formula for every pair on one thread."
    );
    println!();
    Ok(serde_json::json!({
        "what": "isolated cube [0,1]^3 m, no ground plane, from cargo bench --bench bem",
        "grading": GRADING,
        "published": CUBE,
        "threads": rayon::current_num_threads(),
        "cube": rows,
    }))
}

/// The scene of part 2: rollers R1..R11 (grounded), then plate P (isolated, uncharged).
fn scene() -> Vec<ConductorSpec> {
    let mut specs: Vec<ConductorSpec> = (0..ROLLERS)
        .map(|i| ConductorSpec {
            id: format!("R{}", i + 1),
            shape: Shape::Cylinder {
                center: [ROLLER_SPACING * i as f64, 0.0, ROLLER_Z],
                axis: [0.0, 1.0, 0.0],
                radius: ROLLER_RADIUS,
                length: ROLLER_LENGTH,
            },
            earthing: Earthing::Grounded,
        })
        .collect();
    specs.push(ConductorSpec {
        id: "P".into(),
        shape: Shape::Plate {
            origin: [2.4, -0.7, 0.3],
            e1: [1.0, 0.0, 0.0],
            e2: [0.0, 1.4, 0.0],
        },
        earthing: FLOAT,
    });
    specs
}

/// Field points in the air: y = 0.1 m, x across the rollers, z from 0.5 m to 1.3 m,
/// at least 20 mm from every roller surface.
fn air_points() -> Vec<[f64; 3]> {
    let mut pts = Vec::new();
    for i in 0..64 {
        for k in 0..8 {
            let x = -0.3 + 8.6 * i as f64 / 63.0;
            let z = 0.5 + 0.8 * k as f64 / 7.0;
            let nearest = (0..ROLLERS)
                .map(|r| (x - ROLLER_SPACING * r as f64).hypot(z - ROLLER_Z))
                .fold(f64::INFINITY, f64::min);
            if nearest > ROLLER_RADIUS + 0.02 {
                pts.push([x, 0.1, z]);
            }
        }
    }
    pts
}

/// Potential [V] of a point charge of 1 nC at (4.4 m, 0, 1.3 m): a stand-in for the web.
fn external(x: [f64; 3]) -> f64 {
    let d = [x[0] - 4.4, x[1], x[2] - 1.3];
    1e-9 / (4.0 * PI * EPS0 * (d[0] * d[0] + d[1] * d[1] + d[2] * d[2]).sqrt())
}

fn part2() -> Result<(), Box<dyn Error>> {
    println!(
        "## 2. {ROLLERS} grounded rollers (r = 50 mm, 1.4 m, 0.8 m apart) + an isolated plate 1.0 m × 1.4 m, ground plane"
    );
    println!();
    println!(
        "| panel size | panels | Bem::new [s] | assembly [s] | LU [s] | one solve [ms] | Induced::at [µs/point] | [ns/panel] | plate C [pF] |"
    );
    println!("| ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: |");
    let specs = scene();
    let pts = air_points();
    for (h, reps) in [(0.1, 3), (0.05, 3)] {
        let Build {
            build,
            assembly,
            lu,
            bem,
        } = time_build(&specs, Some(0.0), BemSettings::new(h)?, reps)?;
        let panels = bem.panels().len();
        let ext: Vec<f64> = bem
            .collocation_points()
            .iter()
            .map(|&x| external(x))
            .collect();
        let mut sol = None;
        let solve = median(9, || {
            let t = Instant::now();
            let s = bem.solve(black_box(&ext))?;
            let d = t.elapsed();
            sol = Some(s);
            Ok(d)
        })?;
        let sol = sol.ok_or("no solve ran")?;
        let at = median(5, || {
            let t = Instant::now();
            let mut sum = 0.0;
            for &p in &pts {
                let (e, v) = sol.at(&bem, black_box(p));
                sum += v + e[0] + e[1] + e[2];
            }
            black_box(sum);
            Ok(t.elapsed())
        })?;
        let per_point = secs(at) / pts.len() as f64;
        let plate = bem
            .capacitance_to_ground(ROLLERS)
            .ok_or("the plate has no capacitance")?;
        println!(
            "| {} mm | {panels} | {:.3} | {:.3} | {:.3} | {:.2} | {:.1} | {:.1} | {:.3} |",
            h * 1e3,
            secs(build),
            secs(assembly),
            secs(lu),
            secs(solve) * 1e3,
            per_point * 1e6,
            per_point * 1e9 / panels as f64,
            plate * 1e12,
        );
    }
    println!();
    println!(
        "Induced::at: {} points in the air (y = 0.1 m, 0.5 m ≤ z ≤ 1.3 m), one thread; each panel is evaluated with its image.",
        pts.len()
    );
    Ok(())
}

fn main() -> Result<(), Box<dyn Error>> {
    println!("{}\n", machine());
    let load = Load::start();
    let doc = part1()?;
    let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("target");
    std::fs::create_dir_all(&dir)?;
    std::fs::write(
        dir.join("bench-bem.json"),
        serde_json::to_string_pretty(&doc)? + "\n",
    )?;
    part2()?;
    // How much of the machine other processes used meanwhile (they slow the figures above).
    if let Some(line) = load.report() {
        println!("\n{line}");
    }
    Ok(())
}
