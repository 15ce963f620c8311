//! # Release benchmark: field maps with conductors, and how cost grows
//!
//! Measures, with the crate's public API and the release binary, and prints
//! Markdown tables (wall-clock time with `std::time::Instant`, results
//! passed through `std::hint::black_box`; one run per size unless stated):
//!
//! 1. **The demo's field map with conductors.** The demo line
//!    (`profiles/lines/demo.yaml`: 12 spans with relaxation, the charge
//!    fitted to its readings, 13 conductors meshed at the default 100 mm,
//!    images in the floor) at the default tolerance 1e-9: the scene build
//!    (meshing, assembly, LU), the readings fit and charge, then |E| on a
//!    400 × 300 side-view grid ([`websigma::field::WebField::side_view_grid`],
//!    the near spans, panels and images summed at every point and the far
//!    ones interpolated by boxes, [`websigma::field::map_boxes`], as the
//!    report draws it) on 2 threads, against the same points one by one
//!    ([`websigma::field::WebField::at`]: every span, panel and image at
//!    every point); the work done (source-point evaluations) and the largest
//!    difference between the two relative to |E| at the point and to the
//!    map's largest |E|.
//! 2. **Spans.** Serpentine lines of 5 to 200 spans (the `edges` profile
//!    k = 0.6, τ = 5 s, ground plane, conductors off so that only the spans
//!    count): time per field point on one thread, over 400 points spread
//!    along the line, and per span-point (the spans and their images).
//! 3. **Points.** The demo with conductors: `WebField::solve` over 10² to
//!    10⁵ points (chunks of 4096 as the `field` command streams them), and
//!    the `field --points` command over a file of 10⁶ points (conductors
//!    off, CSV out to /dev/null) with its peak memory (VmHWM of
//!    `/proc/<pid>/status`, polled every 20 ms).
//! 4. **Panels.** A row of grounded rollers over a floor meshed into 10² to
//!    10⁴ panels: `Bem::new` (assembly and LU, the dense direct solve: its
//!    cost grows like n³ by nature), one solve (a back-substitution, n²), and
//!    the field of the solved charge per point, panel by panel and by
//!    clusters.
//!
//! For each series the growth exponent between consecutive sizes,
//! d ln t / d ln n, is printed: 1 is linear in that input.
//!
//! Run: `cargo bench --bench scaling` (about 5 minutes on 2 cores).
//!
//! ## Reference
//! Timing method: wall clock, one or a few runs (no statistics beyond the
//! median); treecode: see [`websigma::field::tree`].

#[path = "common/load.rs"]
mod load;
use load::{Load, machine};

use rayon::prelude::*;
use std::error::Error;
use std::hint::black_box;
use std::time::Instant;
use websigma::field::bem::{Bem, BemSettings, ConductorSpec, Earthing};
use websigma::field::panels::Shape;
use websigma::field::tree::{DEFAULT_TOL, PanelTree};
use websigma::field::{Scene, SolverSettings};

fn secs(t: Instant) -> f64 {
    t.elapsed().as_secs_f64()
}

fn exponent(a: (f64, f64), b: (f64, f64)) -> String {
    if a.0 > 0.0 && b.0 > a.0 && a.1 > 0.0 && b.1 > 0.0 {
        format!("{:.2}", (b.1 / a.1).ln() / (b.0 / a.0).ln())
    } else {
        "—".into()
    }
}

fn part1() -> Result<(), Box<dyn Error>> {
    let line = websigma::model::parse_line(websigma::DEMO_LINE)?;
    let settings = SolverSettings::new(1e-9)?.with_default_conductors();
    let t = Instant::now();
    let scene = Scene::new(&line, settings)?;
    let build = secs(t);
    let t = Instant::now();
    let readings = websigma::readings::invert_readings(&line, &scene)?;
    let web = scene.web(&readings.charge);
    let fit = secs(t);
    let (xr, zr) = websigma::report::figures::extent(&line);
    let (nx, nz) = (400usize, 300usize);
    let t = Instant::now();
    let ((xs, zs, boxed), stats) = web.side_view_with_stats(xr, zr, nx, nz, 0.0);
    let map = secs(t);
    let pts: Vec<[f64; 3]> = (0..nx * nz)
        .map(|k| [xs[k % nx], 0.0, zs[k / nx]])
        .collect();
    let t = Instant::now();
    let direct: Vec<Option<[f64; 3]>> = pts
        .par_iter()
        .map(|&p| web.at(black_box(p), false).ok().map(|f| f.e))
        .collect();
    let map_direct = secs(t);
    let norm = |e: &[f64; 3]| (e[0] * e[0] + e[1] * e[1] + e[2] * e[2]).sqrt();
    let largest = direct.iter().flatten().map(norm).fold(0.0_f64, f64::max);
    let (mut rel_point, mut rel_map, mut mismatched) = (0.0_f64, 0.0_f64, 0usize);
    for (a, b) in boxed.iter().zip(&direct) {
        match (a, b) {
            (Some(a), Some(b)) => {
                let d = norm(&[a[0] - b[0], a[1] - b[1], a[2] - b[2]]);
                if norm(b) > 0.0 {
                    rel_point = rel_point.max(d / norm(b));
                }
                rel_map = rel_map.max(d / largest);
            }
            (None, None) => {}
            _ => mismatched += 1,
        }
    }
    let panels = scene.conductors().map_or(0, |b| b.panels().len());
    let sources = (panels + scene.span_count()) * 2;
    let full = (nx * nz * sources) as f64;
    println!("## 1: the demo's field map with conductors ({panels} panels, 12 spans, images)\n");
    println!("| step | threads | time | target |");
    println!("| --- | ---: | ---: | --- |");
    println!("| scene: mesh, assemble, factorise | 2 | {build:.2} s | |");
    println!(
        "| readings fit and charge (with the conductors' solves) | 2 | {fit:.3} s | ≤ 0.2 s |"
    );
    println!(
        "| map 400 × 300 (`side_view_grid`: near sources at every point, far ones interpolated by boxes) | 2 | {map:.2} s | ≤ 3 s |"
    );
    println!(
        "| the same points one by one (`WebField::at`, every span, panel and image) | 2 | {map_direct:.2} s | |"
    );
    println!(
        "\nboxes against point by point: {:.2}× as fast; source-point evaluations {:.1} % of point by point ({} at grid points, {} at Chebyshev points, {} boxes interpolating, {} refused, wasting {}); largest difference {rel_point:.1e} of |E| at the point, {rel_map:.1e} of the map's largest |E| ({:.3} kV/m); {mismatched} points computed by one way only\n",
        map_direct / map,
        100.0 * (stats.direct + stats.at_nodes) as f64 / full,
        stats.direct,
        stats.at_nodes,
        stats.boxes,
        stats.refused,
        stats.wasted,
        largest / 1e3
    );
    Ok(())
}

/// A serpentine of `spans` spans: rollers alternating z = 1.3 m and 0.5 m,
/// 0.5 m apart, between free points, over a floor at 0 m.
fn serpentine_yaml(spans: usize) -> String {
    let mut rollers = String::new();
    let mut path = String::from("  - point: [0 m, 1.0 m]\n    id: IN\n");
    for i in 1..spans {
        let x = 0.5 * i as f64;
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
    path.push_str(&format!(
        "  - point: [{} m, 1.0 m]\n    id: OUT\n",
        0.5 * spans as f64
    ));
    format!(
        "line: scaling serpentine
web:
  width: 1.2 m
  thickness: 50 um
  relative_permittivity: 3
  relaxation_time: 5 s
  speed: 1 m/s
ground_plane: 0 m
rollers:
{rollers}path:
{path}across_profile:
  shape: edges
  k: 0.6
charge:
  - at: start
    sigma: 10 uC/m^2
"
    )
}

fn part2() -> Result<(), Box<dyn Error>> {
    println!("## 2: cost against the number of spans (conductors off, one thread)\n");
    println!("| spans | µs per point | µs per span-point | growth exponent |");
    println!("| ---: | ---: | ---: | ---: |");
    let pool = rayon::ThreadPoolBuilder::new().num_threads(1).build()?;
    let mut prev: Option<(f64, f64)> = None;
    for spans in [5usize, 10, 20, 50, 100, 200] {
        let line = websigma::model::parse_line(&serpentine_yaml(spans))?;
        let scene = Scene::new(&line, SolverSettings::new(1e-9)?)?;
        let charge = websigma::charge::charge_profile(&line);
        let web = scene.web(&charge);
        let len = 0.5 * spans as f64;
        let pts: Vec<[f64; 3]> = (0..400)
            .map(|i| {
                let f = (i as f64 + 0.5) / 400.0;
                [
                    len * f,
                    0.1 * ((i % 7) as f64 - 3.0),
                    0.2 + 1.4 * ((i * 13 % 17) as f64 / 17.0),
                ]
            })
            .collect();
        let t = Instant::now();
        let n = pool.install(|| {
            pts.iter()
                .filter(|&&p| web.at(black_box(p), false).is_ok())
                .count()
        });
        let per_point = secs(t) / n.max(1) as f64 * 1e6;
        let span_points = 2 * scene.span_count();
        let here = (spans as f64, per_point);
        println!(
            "| {spans} | {per_point:.1} | {:.3} | {} |",
            per_point / span_points as f64,
            prev.map_or("—".into(), |p| exponent(p, here))
        );
        prev = Some(here);
    }
    println!();
    Ok(())
}

/// Peak resident memory of a child process [bytes], polled every 20 ms.
fn peak_memory(
    mut child: std::process::Child,
) -> Result<(u64, std::process::ExitStatus), Box<dyn Error>> {
    let pid = child.id();
    let mut peak = 0;
    loop {
        if let Ok(s) = std::fs::read_to_string(format!("/proc/{pid}/status"))
            && let Some(kb) = s
                .lines()
                .find(|l| l.starts_with("VmHWM:"))
                .and_then(|l| l.split_whitespace().nth(1))
                .and_then(|v| v.parse::<u64>().ok())
        {
            peak = peak.max(kb * 1024);
        }
        if let Some(status) = child.try_wait()? {
            return Ok((peak, status));
        }
        std::thread::sleep(std::time::Duration::from_millis(20));
    }
}

fn part3() -> Result<(), Box<dyn Error>> {
    println!("## 3: cost against the number of points (demo, 2 threads)\n");
    println!("| points | conductors | time | µs per point | growth exponent | peak memory |");
    println!("| ---: | --- | ---: | ---: | ---: | ---: |");
    let line = websigma::model::parse_line(websigma::DEMO_LINE)?;
    let scene = Scene::new(&line, SolverSettings::new(1e-9)?.with_default_conductors())?;
    let readings = websigma::readings::invert_readings(&line, &scene)?;
    let web = scene.web(&readings.charge);
    let (xr, zr) = websigma::report::figures::extent(&line);
    let point = |i: usize| {
        // A low-discrepancy spread over the side view (golden-ratio steps).
        let a = (i as f64 * 0.618_033_988_749_895).fract();
        let b = (i as f64 * 0.754_877_666_246_693).fract();
        [
            xr[0] + a * (xr[1] - xr[0]),
            0.0,
            zr[0] + b * (zr[1] - zr[0]),
        ]
    };
    let mut prev: Option<(f64, f64)> = None;
    for n in [100usize, 1_000, 10_000, 100_000] {
        let pts: Vec<[f64; 3]> = (0..n)
            .map(point)
            .filter(|&p| line.point_problem(p).is_none())
            .collect();
        let t = Instant::now();
        let mut done = 0;
        for chunk in pts.chunks(4096) {
            done += black_box(web.solve(chunk, false)?).points.len();
        }
        let s = secs(t);
        let here = (done as f64, s);
        println!(
            "| {done} | on | {s:.3} s | {:.1} | {} | |",
            s / done as f64 * 1e6,
            prev.map_or("—".into(), |p| exponent(p, here))
        );
        prev = Some(here);
    }
    // 10⁶ points through the command, streamed.
    let dir = tempdir()?;
    let file = dir.join("points.csv");
    {
        use std::io::Write;
        let mut w = std::io::BufWriter::new(std::fs::File::create(&file)?);
        writeln!(w, "x,y,z")?;
        let mut written = 0;
        let mut i = 0;
        while written < 1_000_000 {
            let p = point(i);
            i += 1;
            if line.point_problem(p).is_none() {
                writeln!(w, "{},{},{}", p[0], p[1], p[2])?;
                written += 1;
            }
        }
    }
    let exe = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("target/release/websigma");
    if exe.exists() {
        let t = Instant::now();
        let child = std::process::Command::new(&exe)
            .args([
                "field",
                "--quiet",
                "--conductors",
                "off",
                "--format",
                "csv",
                "--points",
            ])
            .arg(&file)
            .arg(std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("profiles/lines/demo.yaml"))
            .stdout(std::process::Stdio::null())
            .stderr(std::process::Stdio::null())
            .spawn()?;
        let (peak, status) = peak_memory(child)?;
        let s = secs(t);
        println!(
            "| 1000000 | off (`field --points`, CSV to /dev/null) | {s:.1} s | {:.1} | | {:.0} MB{} |",
            s,
            peak as f64 / 1e6,
            if status.success() {
                ""
            } else {
                " (the command failed)"
            }
        );
    } else {
        println!(
            "| 1000000 | | build `target/release/websigma` first (`cargo build --release`) | | | |"
        );
    }
    let _ = std::fs::remove_dir_all(&dir);
    println!("\nmemory target for 10⁶ points: under 200 MB (streamed)\n");
    Ok(())
}

fn tempdir() -> Result<std::path::PathBuf, Box<dyn Error>> {
    let d = std::env::temp_dir().join(format!("websigma-scaling-{}", std::process::id()));
    std::fs::create_dir_all(&d)?;
    Ok(d)
}

fn part4() -> Result<(), Box<dyn Error>> {
    println!(
        "## 4: cost against the number of panels (grounded rollers over a floor, 2 threads)\n"
    );
    println!(
        "| panels | Bem::new | growth | one solve | field per point, panel by panel | by clusters | clusters / panels |"
    );
    println!("| ---: | ---: | ---: | ---: | ---: | ---: | ---: |");
    let mut prev: Option<(f64, f64)> = None;
    for (rollers, size) in [(1usize, 0.2), (2, 0.1), (4, 0.07), (8, 0.05), (12, 0.035)] {
        let specs: Vec<ConductorSpec> = (0..rollers)
            .map(|i| ConductorSpec {
                id: format!("R{i}"),
                shape: Shape::Cylinder {
                    center: [0.8 * i as f64, 0.0, 0.9],
                    axis: [0.0, 1.0, 0.0],
                    radius: 0.05,
                    length: 1.4,
                },
                earthing: Earthing::Grounded,
            })
            .collect();
        let settings = BemSettings::new(size)?.with_max_panels(20_000)?;
        let t = Instant::now();
        let bem = Bem::new(&specs, Some(0.0), settings)?;
        let build = secs(t);
        let n = bem.panels().len();
        let ext: Vec<f64> = bem
            .collocation_points()
            .iter()
            .map(|x| 1e4 * (1.0 + 0.1 * x[0]))
            .collect();
        let t = Instant::now();
        let sol = bem.solve(&ext)?;
        let solve = secs(t);
        let pts: Vec<[f64; 3]> = (0..400)
            .map(|i| {
                let f = (i as f64 + 0.5) / 400.0;
                [
                    -0.5 + f * (0.8 * rollers as f64 + 0.5),
                    0.0,
                    0.2 + 1.4 * ((i * 13 % 17) as f64 / 17.0),
                ]
            })
            .collect();
        let t = Instant::now();
        let a: f64 = pts.iter().map(|&p| black_box(sol.at(&bem, p)).1).sum();
        let direct = secs(t) / pts.len() as f64;
        let tree = PanelTree::new(
            bem.panels(),
            sol.scaled_densities(),
            bem.ground(),
            DEFAULT_TOL,
        );
        let t = Instant::now();
        let b: f64 = pts.iter().map(|&p| black_box(tree.at(p)).1).sum();
        let clustered = secs(t) / pts.len() as f64;
        black_box(a + b);
        let here = (n as f64, build);
        println!(
            "| {n} | {build:.2} s | {} | {:.1} ms | {:.0} µs | {:.0} µs | {:.2} |",
            prev.map_or("—".into(), |p| exponent(p, here)),
            solve * 1e3,
            direct * 1e6,
            clustered * 1e6,
            clustered / direct
        );
        prev = Some(here);
    }
    println!();
    Ok(())
}

fn main() -> Result<(), Box<dyn Error>> {
    println!("{}\n", machine());
    let load = Load::start();
    let only = std::env::args().skip(1).find(|a| !a.starts_with('-'));
    let run = |k: &str| only.as_deref().is_none_or(|o| o == k);
    if run("1") {
        part1()?;
    }
    if run("2") {
        part2()?;
    }
    if run("3") {
        part3()?;
    }
    if run("4") {
        part4()?;
    }
    if let Some(line) = load.report() {
        println!("{line}");
    }
    Ok(())
}
