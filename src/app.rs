//! Glue between the command line and the pipeline: one function per
//! subcommand, `Cli → checked settings → pipeline → writers`.
//!
//! This is the only module (besides `cli.rs` and `main.rs`) that knows about
//! the command line; the core modules take checked types only.

use crate::charge::ChargeProfile;
use crate::cli::{
    AssessArgs, BarKind, CheckArgs, Cli, Command, DemoArgs, FieldArgs, OutputFormat, PlanArgs,
    ProfilesArgs, ReadingsArgs,
};
use crate::error::Outcome;
use crate::field::{ASSUMPTIONS, PointField, Scene, SolverSettings, WebField};
use crate::model::geometry::point_problem;
use crate::model::{Line, load_line, parse_line};
use crate::readings::{ReadingsResult, invert_readings};
use crate::report::{self, PointRequest, csv, json, text};
use crate::units::{Dim, format_quantity, parse_quantity_or};
use anyhow::{Context, Result, bail};
use rayon::prelude::*;
use std::io::{BufRead, BufReader, Write};
use std::path::Path;

/// Field-map resolution (points across) of the demo's report.
pub const DEMO_MAP_RESOLUTION: usize = 160;

/// Points evaluated per chunk when streaming a point file.
const CHUNK: usize = 4096;

/// Runs one command.
pub fn run(cli: Cli) -> Result<Outcome> {
    match cli.command {
        Command::Check(a) => check(&a),
        Command::Field(a) => field(&a),
        Command::Assess(a) => assess_cmd(&a),
        Command::Profiles(a) => profiles_cmd(&a),
        Command::Readings(a) => readings_cmd(&a),
        Command::Plan(a) => plan_cmd(&a),
        Command::Demo(a) => demo(&a),
    }
}

fn print_warnings(line: &Line) {
    for w in &line.warnings {
        eprintln!("warning: {w}");
    }
}

/// Writes to stdout; a closed pipe (e.g. `| head`) ends quietly.
fn emit(out: &mut impl Write, s: &str) -> Result<()> {
    match out.write_all(s.as_bytes()) {
        Ok(()) => Ok(()),
        Err(e) if e.kind() == std::io::ErrorKind::BrokenPipe => Ok(()),
        Err(e) => Err(e).context("writing to standard output"),
    }
}

fn summary(line: &Line, charge: &ChargeProfile) -> String {
    let w = &line.web;
    let mut s = format!("line: {}\n", line.title);
    s.push_str(&format!(
        "web: {}, width {}, thickness {}, εr {}, speed {} ({})\n",
        w.material.as_deref().unwrap_or("material not given"),
        format_quantity(w.width, Dim::Length),
        format_quantity(w.thickness, Dim::Length),
        w.relative_permittivity,
        format_quantity(w.speed, Dim::Speed),
        crate::units::format_si(w.speed * 60.0, "m/min"),
    ));
    let lambda = w.decay_length();
    s.push_str(&format!(
        "charge relaxation: τ = {}{}, decay length v·τ = {}\n",
        format_quantity(w.relaxation_time, Dim::Time),
        if w.volume_resistivity.is_some() {
            " (ε0·εr·ρ)"
        } else {
            " (given)"
        },
        if lambda.is_finite() {
            format_quantity(lambda, Dim::Length)
        } else {
            "infinite".into()
        }
    ));
    s.push_str(&format!("across the web: {}\n", charge.across.describe()));
    match line.ground_plane {
        Some(g) => s.push_str(&format!(
            "ground plane: z = {} (potentials relative to it)\n",
            format_quantity(g, Dim::Length)
        )),
        None => s.push_str("ground plane: none (potentials relative to zero at infinity)\n"),
    }
    let defaulted: Vec<&str> = line
        .rollers
        .iter()
        .filter(|r| r.length_defaulted)
        .map(|r| r.id.as_str())
        .collect();
    if !defaulted.is_empty() {
        s.push_str(&format!(
            "roller length: web width + 0.2 m = {} (not given) for {}\n",
            format_quantity(
                line.web.width + crate::model::path::ROLLER_LENGTH_MARGIN,
                Dim::Length
            ),
            defaulted.join(", ")
        ));
    }
    for c in &line.conductors {
        s.push_str(&conductor_summary(c));
    }
    s.push_str(&format!(
        "path: {} nodes, {} spans, {} wrap arcs, {} long\n",
        line.path.nodes.len(),
        line.path.spans.len(),
        line.path.arcs.len(),
        format_quantity(line.path.total_length, Dim::Length)
    ));
    if line.charge.is_empty() {
        s.push_str("charge: no entries — the web is uncharged\n");
    }
    for c in &line.charge {
        s.push_str(&format!(
            "charge: {} {} leaving {}\n",
            match c.mode {
                crate::model::ChargeMode::Set => "sets",
                crate::model::ChargeMode::Add => "adds",
            },
            format_quantity(c.sigma, Dim::SurfaceChargeDensity),
            c.at
        ));
    }
    for e in &line.eliminators {
        s.push_str(&format!(
            "eliminator: {} {} on {} at {}, {} {}, η {}{}\n",
            e.id,
            e.kind.text(),
            line.path.spans[e.span].label(),
            format_quantity(e.along, Dim::Length),
            format_quantity(e.distance, Dim::Length),
            e.side.text(),
            format_quantity(e.efficiency, Dim::Percent),
            match e.onset {
                Some(on) => format!(", onset {}", crate::units::format_si(on, "V/m")),
                None => String::new(),
            }
        ));
    }
    if !line.readings.is_empty() {
        s.push_str(&format!(
            "readings: {} (the segments they fall on take their density from them; see `websigma readings`)\n",
            line.readings.len()
        ));
    }
    s
}

/// One summary line for a conductor: id, shape and size, earthing.
fn conductor_summary(c: &crate::model::Conductor) -> String {
    use crate::model::{ConductorEarthing, ConductorKind, ConductorShape};
    let len = |x: f64| format_quantity(x, Dim::Length);
    let norm = |v: [f64; 3]| (v[0] * v[0] + v[1] * v[1] + v[2] * v[2]).sqrt();
    let shape = match (c.kind, c.shape) {
        (
            ConductorKind::Person,
            ConductorShape::Cylinder {
                center,
                radius,
                length,
                ..
            },
        ) => format!(
            "person at [{}, {}], a vertical cylinder {} high and {} wide on the floor",
            len(center[0]),
            len(center[1]),
            len(length),
            len(2.0 * radius)
        ),
        (_, ConductorShape::Plate { origin, e1, e2 }) => format!(
            "plate {} × {} from [{}, {}, {}]",
            len(norm(e1)),
            len(norm(e2)),
            len(origin[0]),
            len(origin[1]),
            len(origin[2])
        ),
        (_, ConductorShape::Box { min, max }) => format!(
            "box {} × {} × {}",
            len(max[0] - min[0]),
            len(max[1] - min[1]),
            len(max[2] - min[2])
        ),
        (_, ConductorShape::Cylinder { radius, length, .. }) => format!(
            "cylinder {} long, {} in diameter",
            len(length),
            len(2.0 * radius)
        ),
    };
    let earthing = match c.earthing {
        ConductorEarthing::Grounded => "grounded".to_string(),
        ConductorEarthing::Isolated {
            charge,
            capacitance_to_ground,
            capacitance_defaulted,
        } => format!(
            "isolated, net charge {}{}",
            format_quantity(charge, Dim::Charge),
            match capacitance_to_ground {
                Some(cg) if capacitance_defaulted => format!(
                    ", {} feet-to-floor (assumed default)",
                    format_quantity(cg, Dim::Capacitance)
                ),
                Some(cg) => format!(
                    ", {} lumped to ground",
                    format_quantity(cg, Dim::Capacitance)
                ),
                None => String::new(),
            }
        ),
    };
    format!("conductor: {} {shape}, {earthing}\n", c.id)
}

fn assumptions_text() -> String {
    let mut s = String::from("assumptions:\n");
    for a in ASSUMPTIONS {
        s.push_str(&format!("  - {a}\n"));
    }
    s
}

/// Reading warnings go to stderr.
fn print_reading_warnings(r: &ReadingsResult) {
    for x in &r.readings {
        for w in &x.warnings {
            eprintln!(
                "warning: reading {}: {}",
                x.id,
                crate::report::notes::reading_note(w)
            );
        }
    }
}

/// The charge along the path: the model's, with the segments that hold
/// readings fitted to them. Reading warnings go to stderr.
fn line_charge(line: &Line, scene: &Scene) -> Result<(ChargeProfile, ReadingsResult)> {
    let r = invert_readings(line, scene).context("converting the meter readings")?;
    print_reading_warnings(&r);
    Ok((r.charge.clone(), r))
}

fn check(a: &CheckArgs) -> Result<Outcome> {
    let line = load_line(&a.line)?;
    print_warnings(&line);
    let scene = Scene::new(&line, SolverSettings::default())?;
    let (charge, _) = line_charge(&line, &scene)?;
    let mut out = std::io::stdout().lock();
    let mut s = summary(&line, &charge);
    s.push('\n');
    s.push_str(&text::spans_table(&report::span_rows(&line, &charge)));
    s.push_str(&format!(
        "\npoints of interest: {} checked\n",
        line.points.len()
    ));
    s.push_str(&assumptions_text());
    s.push_str(&format!(
        "\nvalid: {} ({} warning{})\n",
        a.line.display(),
        line.warnings.len(),
        if line.warnings.len() == 1 { "" } else { "s" }
    ));
    emit(&mut out, &s)?;
    Ok(Outcome::Pass)
}

/// Parses `X,Y,Z` with bare numbers in metres.
fn parse_point(text: &str) -> std::result::Result<[f64; 3], String> {
    let parts: Vec<&str> = text.split(',').collect();
    if parts.len() != 3 {
        return Err(format!(
            "expected three coordinates X,Y,Z such as \"1.2,0,0.025\" or \"1.2 m,0,25 mm\", got \"{text}\""
        ));
    }
    let mut p = [0.0; 3];
    for (i, part) in parts.iter().enumerate() {
        p[i] = parse_quantity_or(part, Dim::Length, 1.0)
            .map_err(|e| format!("{} coordinate: {e}", ["x", "y", "z"][i]))?;
    }
    Ok(p)
}

/// Reads the points of a CSV file: header with x, y, z (metres) and optional id.
struct PointCsv {
    reader: BufReader<std::fs::File>,
    columns: [usize; 3],
    id_col: Option<usize>,
    line_no: usize,
    name: String,
}

impl PointCsv {
    fn open(path: &Path) -> Result<Self> {
        let f = std::fs::File::open(path)
            .with_context(|| format!("opening point file '{}'", path.display()))?;
        let mut reader = BufReader::new(f);
        let mut header = String::new();
        reader
            .read_line(&mut header)
            .with_context(|| format!("reading point file '{}'", path.display()))?;
        let cols: Vec<String> = header
            .trim_start_matches('\u{feff}')
            .trim()
            .split(',')
            .map(|c| c.trim().trim_matches('"').to_ascii_lowercase())
            .collect();
        let find = |n: &str| cols.iter().position(|c| c == n);
        let (Some(x), Some(y), Some(z)) = (find("x"), find("y"), find("z")) else {
            bail!(
                "{}:1: expected a header with columns x,y,z (metres) and optionally id, got \"{}\"",
                path.display(),
                header.trim()
            );
        };
        Ok(PointCsv {
            reader,
            columns: [x, y, z],
            id_col: find("id"),
            line_no: 1,
            name: path.display().to_string(),
        })
    }

    /// Up to `n` more points; an empty vector at the end of the file.
    fn next_chunk(&mut self, n: usize) -> Result<Vec<PointRequest>> {
        let mut out = Vec::new();
        let mut buf = String::new();
        while out.len() < n {
            buf.clear();
            let read = self
                .reader
                .read_line(&mut buf)
                .with_context(|| format!("reading point file '{}'", self.name))?;
            if read == 0 {
                break;
            }
            self.line_no += 1;
            let row = buf.trim();
            if row.is_empty() {
                continue;
            }
            let cells: Vec<&str> = row.split(',').map(|c| c.trim()).collect();
            let mut at = [0.0; 3];
            for (k, &c) in self.columns.iter().enumerate() {
                let cell = cells.get(c).copied().unwrap_or("");
                at[k] = parse_quantity_or(cell, Dim::Length, 1.0).map_err(|e| {
                    anyhow::anyhow!(
                        "{}:{}: column {}: {e}",
                        self.name,
                        self.line_no,
                        ["x", "y", "z"][k]
                    )
                })?;
            }
            let id = self
                .id_col
                .and_then(|c| cells.get(c))
                .map(|s| s.trim_matches('"').to_string())
                .filter(|s| !s.is_empty());
            out.push(PointRequest { id, at });
        }
        Ok(out)
    }
}

fn check_point(line: &Line, p: &PointRequest, where_: &str) -> Result<()> {
    if let Some(msg) = point_problem(
        &line.path,
        &line.rollers,
        line.web.width,
        line.ground_plane,
        p.at,
    ) {
        bail!("{where_}: {msg}");
    }
    Ok(())
}

/// Formats results in the chosen format, one row per point.
struct FieldWriter {
    format: OutputFormat,
    first: bool,
    contributions: bool,
}

impl FieldWriter {
    fn header(&self, spans: &[String]) -> String {
        match self.format {
            OutputFormat::Table => String::new(),
            OutputFormat::Csv => format!("{}\n", csv::field_header(spans, self.contributions)),
            OutputFormat::Json => json::FIELD_OPEN.to_string(),
        }
    }
    fn rows(&mut self, reqs: &[PointRequest], res: &[PointField]) -> String {
        let mut s = String::new();
        match self.format {
            OutputFormat::Table => {
                let cells: Vec<Vec<String>> = reqs
                    .iter()
                    .zip(res)
                    .map(|(q, f)| text::field_cells(q, f))
                    .collect();
                let t = text::table(&text::FIELD_HEADER, &cells);
                // The header is repeated per chunk only for very long lists.
                s.push_str(if self.first {
                    &t
                } else {
                    t.split_once('\n')
                        .and_then(|x| x.1.split_once('\n'))
                        .map(|x| x.1)
                        .unwrap_or("")
                });
                if self.contributions {
                    for (q, f) in reqs.iter().zip(res) {
                        s.push_str(&format!(
                            "\ncontributions at {}:\n{}",
                            q.id.clone().unwrap_or_else(|| format!(
                                "[{}, {}, {}] m",
                                f.at[0], f.at[1], f.at[2]
                            )),
                            text::contributions_table(f)
                        ));
                    }
                }
            }
            OutputFormat::Csv => {
                for (q, f) in reqs.iter().zip(res) {
                    s.push_str(&csv::field_row(q, f));
                    s.push('\n');
                }
            }
            OutputFormat::Json => {
                for (q, f) in reqs.iter().zip(res) {
                    if !self.first {
                        s.push_str(",\n");
                    }
                    self.first = false;
                    s.push_str(&json::field_point(q, f));
                }
            }
        }
        self.first = false;
        s
    }
    fn footer(&self) -> String {
        match self.format {
            OutputFormat::Json => json::FIELD_CLOSE.to_string(),
            _ => String::new(),
        }
    }
}

fn evaluate(
    model: &WebField<'_>,
    reqs: &[PointRequest],
    contributions: bool,
) -> Result<Vec<PointField>> {
    Ok(reqs
        .par_iter()
        .map(|q| model.at(q.at, contributions))
        .collect::<std::result::Result<Vec<_>, _>>()?)
}

fn field(a: &FieldArgs) -> Result<Outcome> {
    let settings = SolverSettings::new(a.tolerance).context("--tolerance")?;
    let line = load_line(&a.line)?;
    print_warnings(&line);
    let scene = Scene::new(&line, settings)?;
    let (charge, _) = line_charge(&line, &scene)?;
    let model = scene.web(&charge);
    let spans: Vec<String> = line.path.spans.iter().map(|s| s.name.clone()).collect();
    let mut w = FieldWriter {
        format: a.format,
        first: true,
        contributions: a.contributions,
    };
    let mut out = std::io::BufWriter::new(std::io::stdout().lock());

    if let Some(path) = &a.points {
        // First pass: every row parses and is a point the model can evaluate.
        let mut csvr = PointCsv::open(path)?;
        let mut count = 0usize;
        loop {
            let start_line = csvr.line_no;
            let chunk = csvr.next_chunk(CHUNK)?;
            if chunk.is_empty() {
                break;
            }
            for (i, q) in chunk.iter().enumerate() {
                check_point(
                    &line,
                    q,
                    &format!("{}: point {}", path.display(), start_line + i),
                )?;
            }
            count += chunk.len();
        }
        if count == 0 {
            bail!(
                "{}: no points after the header: expected rows of x,y,z in metres",
                path.display()
            );
        }
        // Second pass: evaluate and write chunk by chunk.
        let mut csvr = PointCsv::open(path)?;
        emit(&mut out, &w.header(&spans))?;
        loop {
            let chunk = csvr.next_chunk(CHUNK)?;
            if chunk.is_empty() {
                break;
            }
            let res = evaluate(&model, &chunk, a.contributions)?;
            emit(&mut out, &w.rows(&chunk, &res))?;
        }
    } else {
        let reqs: Vec<PointRequest> = if a.at.is_empty() {
            if line.points.is_empty() {
                bail!(
                    "no points to evaluate: give --at X,Y,Z or --points FILE.csv (the line has no `points:`)"
                );
            }
            line.points
                .iter()
                .map(|p| PointRequest {
                    id: Some(p.id.clone()),
                    at: p.at,
                })
                .collect()
        } else {
            let mut v = Vec::new();
            for (i, t) in a.at.iter().enumerate() {
                let at = parse_point(t).map_err(|e| anyhow::anyhow!("--at #{}: {e}", i + 1))?;
                let q = PointRequest { id: None, at };
                check_point(&line, &q, &format!("--at #{} \"{t}\"", i + 1))?;
                v.push(q);
            }
            v
        };
        let res = evaluate(&model, &reqs, a.contributions)?;
        emit(&mut out, &w.header(&spans))?;
        emit(&mut out, &w.rows(&reqs, &res))?;
    }
    emit(&mut out, &w.footer())?;
    if a.format == OutputFormat::Table {
        emit(&mut out, &format!("\n{}", assumptions_text()))?;
    }
    match out.flush() {
        Err(e) if e.kind() != std::io::ErrorKind::BrokenPipe => {
            return Err(e).context("writing to standard output");
        }
        _ => {}
    }
    Ok(Outcome::Pass)
}

/// Everything an assessment run needs, checked before any solving.
struct AssessJob<'a> {
    line: Line,
    line_file: String,
    line_text: &'a str,
    extra_profiles: &'a [String],
    out: &'a Path,
    settings: SolverSettings,
    map_resolution: usize,
    /// Plan up to this many bars when a limit fails.
    plan: Option<usize>,
}

/// Checks that the output folder can be written before the long work.
fn check_out_dir(out: &Path) -> Result<()> {
    std::fs::create_dir_all(out)
        .with_context(|| format!("creating the output folder '{}' (--out)", out.display()))?;
    let probe = out.join(format!(".websigma-write-test-{}", std::process::id()));
    std::fs::write(&probe, b"").with_context(|| {
        format!(
            "the output folder '{}' is not writable (--out)",
            out.display()
        )
    })?;
    let _ = std::fs::remove_file(&probe);
    Ok(())
}

fn load_profiles(line: &Line, extra: &[String]) -> Result<Vec<crate::assess::ThresholdProfile>> {
    let mut names: Vec<String> = line.assess.clone();
    for e in extra {
        if !names.contains(e) {
            names.push(e.clone());
        }
    }
    let mut out = Vec::new();
    for n in &names {
        out.push(
            crate::assess::profile::load_profile(n)
                .with_context(|| format!("threshold profile \"{n}\""))?,
        );
    }
    Ok(crate::assess::with_air_limit(out))
}

/// The lowest |E| limit among the rules in force, for the map's contour.
fn lowest_field_limit(profiles: &[crate::assess::ThresholdProfile]) -> Option<(f64, String)> {
    profiles
        .iter()
        .flat_map(|p| p.rules.iter().map(move |r| (p, r)))
        .filter(|(_, r)| r.dim == Dim::Field)
        .filter_map(|(p, r)| {
            r.fail
                .or(r.warn)
                .map(|v| (v, format!("{}/{}", p.name, r.id)))
        })
        .min_by(|a, b| a.0.total_cmp(&b.0))
}

/// The largest |σ| on the path, across-web peak included [C/m²].
fn curve_peak(charge: &ChargeProfile, line: &Line) -> f64 {
    charge
        .pieces_between(0.0, line.path.total_length)
        .iter()
        .map(|p| p.2.abs())
        .fold(0.0, f64::max)
        * charge.across.max_abs()
}

/// The three report pictures of a line: side view, field map at y = 0 and
/// charge along the path (the field map is computed here on an
/// `map_resolution`-wide grid).
#[allow(clippy::too_many_arguments)]
pub fn make_plots(
    line: &Line,
    charge: &ChargeProfile,
    readings: &ReadingsResult,
    model: &WebField<'_>,
    profiles: &[crate::assess::ThresholdProfile],
    assessment: &crate::assess::Assessment,
    map_resolution: usize,
) -> Result<Vec<crate::report::build::Plot>> {
    use crate::report::{build, figures, plot};
    // Figures.
    let side = figures::side_view(line, charge);
    let (xr, zr) = figures::extent(line);
    let nx = map_resolution.clamp(20, 1000);
    let nz = ((nx as f64) * (zr[1] - zr[0]) / (xr[1] - xr[0]))
        .round()
        .clamp(10.0, 1000.0) as usize;
    let (xs, zs, e) = model.side_view_grid(xr, zr, nx, nz, 0.0);
    let grid = figures::field_grid(xs, zs, e, 0.0, lowest_field_limit(profiles));
    let height = figures::picture_height(xr, zr, 1400);
    // Charge limits that apply somewhere on this line (from the findings),
    // without those so far above the charge that they would flatten the plot.
    let peak = curve_peak(charge, line);
    let mut sigma_limits: Vec<(f64, String)> = Vec::new();
    for f in &assessment.findings {
        if f.dim != Dim::SurfaceChargeDensity {
            continue;
        }
        let label = format!("{}/{} fail", f.profile, f.rule);
        if let Some(v) = f.fail
            && !sigma_limits.iter().any(|(_, l)| l == &label)
            && (v <= 3.0 * peak || sigma_limits.is_empty())
        {
            sigma_limits.push((v, label));
        }
    }
    let mut curve = figures::charge_curve(line, charge, sigma_limits);
    curve.markers = readings
        .readings
        .iter()
        .map(|r| (r.s, r.sigma, r.sigma_low, r.sigma_high, r.id.clone()))
        .collect();
    Ok(vec![
        build::Plot {
            file: "side_view.png".into(),
            caption: "Side view: rollers, web path coloured by charge density, zones and points of interest".into(),
            png: plot::side_view_png(&side, 1400, height)?,
        },
        build::Plot {
            file: "field_map.png".into(),
            caption: "Field strength |E| on the centreline plane y = 0 (logarithmic colour scale)".into(),
            png: plot::field_map_png(&side, &grid, 1400, height)?,
        },
        build::Plot {
            file: "charge_along_path.png".into(),
            caption: "Charge density along the web path, with the limits in force".into(),
            png: plot::charge_png(&curve, 1400, 700)?,
        },
    ])
}

/// Runs the whole pipeline and writes the report folder; returns its path
/// and the assessment.
/// What an assessment run leaves for the terminal.
struct AssessRun {
    dir: std::path::PathBuf,
    assessment: crate::assess::Assessment,
    charge: ChargeProfile,
    readings: ReadingsResult,
}

fn run_assessment(job: AssessJob<'_>) -> Result<AssessRun> {
    use crate::report::{build, folder};
    check_out_dir(job.out)?;
    let line = &job.line;
    let profiles = load_profiles(line, job.extra_profiles)?;
    let analysis = crate::pipeline::analyse(
        line,
        &profiles,
        &crate::pipeline::Settings::new(job.settings),
    )?;
    let scene = &analysis.scene;
    let crate::pipeline::Evaluation {
        readings,
        charge,
        points,
        assessment,
    } = analysis.evaluation;
    print_reading_warnings(&readings);
    let model = scene.web(&charge);

    let plots = make_plots(
        line,
        &charge,
        &readings,
        &model,
        &profiles,
        &assessment,
        job.map_resolution,
    )?;
    let mut plots = plots;
    let mut plan_section = None;
    if let Some(n) = job.plan
        && assessment.verdict == crate::assess::Verdict::Fail
    {
        let mut st = crate::plan::PlanSettings::new();
        st.max_bars = n.max(1);
        st.spacing = 0.25;
        let plan = crate::plan::plan(line, &profiles, &st, scene, &|_, _| {})?;
        if let Some(best) = plan.options.first() {
            let planning = crate::plan::planning_line(line, scene)?;
            let bars: Vec<_> = best
                .bars
                .iter()
                .map(|&b| plan.candidates[b].clone())
                .collect();
            let placed = crate::plan::apply(&planning, &bars);
            let (pc, _) = line_charge(&placed, scene)?;
            let side = crate::report::figures::side_view(&placed, &pc);
            let (xr, zr) = crate::report::figures::extent(&placed);
            let h = crate::report::figures::picture_height(xr, zr, 1400);
            let curve = crate::report::figures::charge_curve(&placed, &pc, Vec::new());
            plots.push(build::Plot {
                file: "side_view_planned.png".into(),
                caption: "Side view with the best plan's bars".into(),
                png: crate::report::plot::side_view_png(&side, 1400, h)?,
            });
            plots.push(build::Plot {
                file: "charge_along_path_planned.png".into(),
                caption:
                    "Charge density along the path with the best plan's bars, and without them"
                        .into(),
                png: crate::report::plot::charge_png(&curve, 1400, 700)?,
            });
        }
        plan_section = Some(build::PlanSection::from_plan(&plan, line));
    }
    let mut report = build::build_report(
        line,
        &job.line_file,
        job.line_text,
        &charge,
        &readings,
        &points,
        &assessment,
        &profiles,
        job.settings.rel_tol(),
        plots,
        chrono::Utc::now(),
    );
    report.plan = plan_section;
    let files = folder::render_all(&report)?;
    let dir = folder::write_folder(job.out, &report.meta.report_id, files.into_iter().map(Ok))?;
    Ok(AssessRun {
        dir,
        assessment,
        charge,
        readings,
    })
}

/// The short terminal summary: one line per finding, worst first.
fn summary_table(line: &Line, a: &crate::assess::Assessment, max_rows: usize) -> String {
    use tabled::settings::Style;
    #[derive(tabled::Tabled)]
    struct Row {
        verdict: String,
        rule: String,
        subject: String,
        value: String,
        limit: String,
        margin: String,
        confidence: String,
    }
    let rows: Vec<Row> = a
        .findings
        .iter()
        .take(max_rows)
        .map(|f| Row {
            verdict: f.verdict.text().to_uppercase(),
            rule: format!("{}/{}", f.profile, f.rule),
            subject: crate::report::notes::subject_label(line, &f.subject),
            value: format_quantity(f.value, f.dim),
            limit: format_quantity(f.limit, f.dim),
            margin: crate::report::document::margin_text(f.margin),
            confidence: f.confidence.text().to_string(),
        })
        .collect();
    let mut t = tabled::Table::new(rows);
    t.with(Style::sharp());
    let mut s = t.to_string();
    if a.findings.len() > max_rows {
        s.push_str(&format!(
            "\n… and {} more findings in the report",
            a.findings.len() - max_rows
        ));
    }
    s
}

fn print_assessment(line: &Line, a: &crate::assess::Assessment, dir: &Path) -> Result<()> {
    let n = |v: crate::assess::Verdict| a.findings.iter().filter(|f| f.verdict == v).count();
    let s = format!(
        "{}\n{}\n\nverdict: {} ({} fail, {} warn, {} pass)\nreport: {}\n\ncaution: {}\n",
        line.title,
        summary_table(line, a, 25),
        a.verdict.text().to_uppercase(),
        n(crate::assess::Verdict::Fail),
        n(crate::assess::Verdict::Warn),
        n(crate::assess::Verdict::Pass),
        dir.display(),
        crate::CAUTIONS
    );
    emit(&mut std::io::stdout().lock(), &s)
}

fn assess_cmd(a: &AssessArgs) -> Result<Outcome> {
    let settings = SolverSettings::new(a.tolerance).context("--tolerance")?;
    let text = crate::model::read_line_text(&a.line)?;
    let line = parse_line(&text).map_err(|e| {
        anyhow::Error::new(e).context(format!("invalid line description '{}'", a.line.display()))
    })?;
    print_warnings(&line);
    let AssessRun {
        dir, assessment, ..
    } = run_assessment(AssessJob {
        line_file: a.line.display().to_string(),
        line: line.clone(),
        line_text: &text,
        extra_profiles: &a.profiles,
        out: &a.out,
        settings,
        map_resolution: a.map_resolution,
        plan: a.plan,
    })?;
    print_assessment(&line, &assessment, &dir)?;
    Ok(if assessment.verdict == crate::assess::Verdict::Fail {
        Outcome::Exceeded
    } else {
        Outcome::Pass
    })
}

/// Converts the plan command line into checked planner settings.
fn plan_settings(a: &PlanArgs, line: &Line) -> Result<crate::plan::PlanSettings> {
    use crate::model::EliminatorKind;
    use crate::units::parse_quantity;
    let mut st = crate::plan::PlanSettings::new();
    st.bars = a.bars;
    st.max_bars = a.max_bars;
    if a.max_bars == 0 || a.bars == Some(0) {
        bail!("--bars/--max-bars: expected at least 1 bar");
    }
    st.kind = match a.kind {
        BarKind::Powered => EliminatorKind::Powered,
        BarKind::Passive => EliminatorKind::Passive,
    };
    st.distance =
        parse_quantity(&a.distance, Dim::Length).map_err(|e| anyhow::anyhow!("--distance: {e}"))?;
    st.spacing =
        parse_quantity(&a.spacing, Dim::Length).map_err(|e| anyhow::anyhow!("--spacing: {e}"))?;
    if st.distance <= 0.0 || st.spacing <= 0.0 {
        bail!("--distance and --spacing: expected positive lengths such as \"40 mm\"");
    }
    if st.spacing < 0.01 {
        bail!(
            "--spacing: {} is finer than 10 mm; bars are not placed that precisely",
            a.spacing
        );
    }
    if let Some(list) = &a.spans {
        for name in list.split(',').map(str::trim).filter(|n| !n.is_empty()) {
            match line.path.span_index(name) {
                Some(k) => st.spans.push(k),
                None => bail!(
                    "--spans: unknown span \"{name}\": expected names such as {}",
                    line.path
                        .spans
                        .iter()
                        .map(|s| s.label())
                        .collect::<Vec<_>>()
                        .join(", ")
                ),
            }
        }
    }
    if let Some(path) = &a.candidates {
        let text = std::fs::read_to_string(path)
            .with_context(|| format!("reading candidates '{}'", path.display()))?;
        let list = crate::model::parse_eliminator_list(&text, line).map_err(|e| {
            anyhow::Error::new(e).context(format!("invalid candidates '{}'", path.display()))
        })?;
        st.candidates = Some(
            list.iter()
                .map(|e| crate::plan::Candidate {
                    kind: e.kind,
                    span: e.span,
                    along: e.along,
                    side: e.side,
                    distance: e.distance,
                    efficiency: e.efficiency,
                    residual: e.residual,
                })
                .collect(),
        );
    }
    st.top = a.top.clamp(1, 100);
    Ok(st)
}

fn plan_cmd(a: &PlanArgs) -> Result<Outcome> {
    use std::io::IsTerminal;
    let text = crate::model::read_line_text(&a.line)?;
    let line = parse_line(&text).map_err(|e| {
        anyhow::Error::new(e).context(format!("invalid line description '{}'", a.line.display()))
    })?;
    print_warnings(&line);
    let solver = SolverSettings::new(a.tolerance).context("--tolerance")?;
    let st = plan_settings(a, &line)?;
    if let Some(out) = &a.apply
        && out.exists()
    {
        bail!(
            "--apply: '{}' exists; websigma never overwrites a file — choose a new name",
            out.display()
        );
    }
    let profiles = load_profiles(&line, &a.profiles)?;
    let tty = std::io::stderr().is_terminal();
    let progress = move |done: usize, total: usize| {
        if tty && total > 20000 {
            eprint!("\rsearching placements: {done} of {total}   ");
        }
    };
    let started = std::time::Instant::now();
    let scene = Scene::new(&line, solver)?;
    let plan = crate::plan::plan(&line, &profiles, &st, &scene, &progress).map_err(|e| {
        let flags = match &a.candidates {
            Some(path) => format!("--candidates '{}'", path.display()),
            None => format!("--distance \"{}\", --spacing \"{}\"", a.distance, a.spacing),
        };
        match e {
            crate::plan::PlanError::NoCandidatePositions => anyhow::Error::new(e).context(flags),
            e => anyhow::Error::new(e),
        }
    })?;
    if tty {
        eprintln!(
            "\rsearched {} placements in {:.1} s            ",
            plan.evaluated,
            started.elapsed().as_secs_f64()
        );
    }
    let s = match a.format {
        OutputFormat::Json => plan_json(&plan, &line),
        _ => plan_text(&plan, &line),
    };
    emit(&mut std::io::stdout().lock(), &s)?;
    let passes = plan.options.first().is_some_and(|o| o.counts[2] == 0);
    if let (Some(out), Some(best)) = (&a.apply, plan.options.first()) {
        let bars: Vec<crate::plan::Candidate> = best
            .bars
            .iter()
            .map(|&b| plan.candidates[b].clone())
            .collect();
        let new_text = crate::plan::apply_to_yaml(&text, &line, &bars, &scene)?;
        parse_line(&new_text).map_err(|e| {
            anyhow::Error::new(e).context("internal: the planned line description does not parse")
        })?;
        let mut f = std::fs::OpenOptions::new()
            .write(true)
            .create_new(true)
            .open(out)
            .with_context(|| format!("--apply: creating '{}'", out.display()))?;
        f.write_all(new_text.as_bytes())
            .with_context(|| format!("--apply: writing '{}'", out.display()))?;
        eprintln!("wrote {} with the best plan's bars added", out.display());
    }
    Ok(if passes {
        Outcome::Pass
    } else {
        Outcome::Exceeded
    })
}

fn plan_text(plan: &crate::plan::Plan, line: &Line) -> String {
    let mut s = format!(
        "{}\n\n",
        crate::report::plan_words::plan_summary(plan, line)
    );
    let before = &plan.before;
    let count = |a: &crate::assess::Assessment, v: crate::assess::Verdict| {
        a.findings.iter().filter(|f| f.verdict == v).count()
    };
    s.push_str(&format!(
        "without new bars: {} fail, {} warn, {} pass\n\n",
        count(before, crate::assess::Verdict::Fail),
        count(before, crate::assess::Verdict::Warn),
        count(before, crate::assess::Verdict::Pass)
    ));
    let rows: Vec<Vec<String>> = plan
        .options
        .iter()
        .enumerate()
        .map(|(i, o)| {
            vec![
                format!("{}", i + 1),
                o.bars
                    .iter()
                    .map(|&b| crate::report::plan_words::candidate_text(&plan.candidates[b], line))
                    .collect::<Vec<_>>()
                    .join("; "),
                format!("{}", o.counts[2]),
                format!("{}", o.counts[1]),
                format!("{}", o.counts[0]),
                crate::report::document::margin_text(o.worst_margin),
            ]
        })
        .collect();
    s.push_str(&text::table(
        &["plan", "bars", "fail", "warn", "pass", "worst margin"],
        &rows,
    ));
    if let Some(best) = plan.options.first() {
        s.push_str("\nbest plan, findings that warn or fail before → after:\n");
        let mut rows = Vec::new();
        for f in before
            .findings
            .iter()
            .filter(|f| f.verdict != crate::assess::Verdict::Pass)
        {
            let after = best
                .assessment
                .findings
                .iter()
                .find(|g| g.profile == f.profile && g.rule == f.rule && g.subject == f.subject);
            rows.push(vec![
                format!("{}/{}", f.profile, f.rule),
                crate::report::notes::subject_label(line, &f.subject),
                format!(
                    "{} {}",
                    f.verdict.text().to_uppercase(),
                    format_quantity(f.value, f.dim)
                ),
                after
                    .map(|g| {
                        format!(
                            "{} {}",
                            g.verdict.text().to_uppercase(),
                            format_quantity(g.value, g.dim)
                        )
                    })
                    .unwrap_or_else(|| "—".into()),
            ]);
        }
        for g in best.assessment.findings.iter().filter(|g| {
            &*g.profile == crate::assess::eliminators::PROFILE
                && g.verdict != crate::assess::Verdict::Pass
        }) {
            rows.push(vec![
                format!("{}/{}", g.profile, g.rule),
                crate::report::notes::subject_label(line, &g.subject),
                "—".into(),
                format!(
                    "{} {}",
                    g.verdict.text().to_uppercase(),
                    crate::report::notes::finding_notes(line, g)
                ),
            ]);
        }
        s.push_str(&text::table(&["rule", "subject", "before", "after"], &rows));
    }
    s.push_str(&format!("\ncaution: {}\n", crate::CAUTIONS));
    s
}

fn plan_json(plan: &crate::plan::Plan, line: &Line) -> String {
    let count = |a: &crate::assess::Assessment, v: crate::assess::Verdict| {
        a.findings.iter().filter(|f| f.verdict == v).count()
    };
    let plans: Vec<String> = plan
        .options
        .iter()
        .map(|o| {
            let bars: Vec<String> = o
                .bars
                .iter()
                .map(|&b| {
                    let c = &plan.candidates[b];
                    format!(
                        "{{\"kind\": {}, \"span\": {}, \"position\": {}, \"side\": {}, \"distance\": {}, \"efficiency\": {}}}",
                        json::string(c.kind.text()),
                        json::string(&line.path.spans[c.span].name),
                        json::num(c.along),
                        json::string(c.side.text()),
                        json::num(c.distance),
                        json::num(c.efficiency)
                    )
                })
                .collect();
            format!(
                "    {{\"bars\": [{}], \"fail\": {}, \"warn\": {}, \"pass\": {}, \"worst_margin\": {}}}",
                bars.join(", "),
                o.counts[2],
                o.counts[1],
                o.counts[0],
                json::num(o.worst_margin)
            )
        })
        .collect();
    format!(
        "{{\n  \"summary\": {},\n  \"exhaustive\": {},\n  \"evaluated\": {},\n  \"candidates\": {},\n  \"before\": {{\"fail\": {}, \"warn\": {}, \"pass\": {}}},\n  \"plans\": [\n{}\n  ]\n}}\n",
        json::string(&crate::report::plan_words::plan_summary(plan, line)),
        plan.exhaustive,
        plan.evaluated,
        plan.candidates.len(),
        count(&plan.before, crate::assess::Verdict::Fail),
        count(&plan.before, crate::assess::Verdict::Warn),
        count(&plan.before, crate::assess::Verdict::Pass),
        plans.join(",\n")
    )
}

fn readings_cmd(a: &ReadingsArgs) -> Result<Outcome> {
    let settings = SolverSettings::new(a.tolerance).context("--tolerance")?;
    let line = load_line(&a.line)?;
    print_warnings(&line);
    let scene = Scene::new(&line, settings)?;
    let (_, r) = line_charge(&line, &scene)?;
    if r.readings.is_empty() {
        bail!(
            "the line has no `readings:`: add field-meter readings (span, position, distance, side, reading) to convert"
        );
    }
    let s = match a.format {
        OutputFormat::Table => {
            let mut s = text::readings_table(&r);
            s.push_str(&format!(
                "\nσ is the density at the meter's foot from all readings together ({}).\n",
                r.method
                    .as_ref()
                    .map(crate::report::notes::fit_method)
                    .unwrap_or_default()
            ));
            s.push_str("naive: σ = 2·ε0·E (isolated sheet) and ε0·E (all field on one side), the infinite-sheet rule (Gauss's law)\n");
            s
        }
        OutputFormat::Csv => csv::readings_csv(&r.readings),
        OutputFormat::Json => json::readings_json(&r),
    };
    emit(&mut std::io::stdout().lock(), &s)?;
    Ok(Outcome::Pass)
}

fn profiles_cmd(a: &ProfilesArgs) -> Result<Outcome> {
    use crate::assess::profile;
    let mut s = String::new();
    match &a.name {
        None => {
            let mut rows = Vec::new();
            for (name, _) in profile::shipped() {
                let p = profile::load_profile(name)?;
                rows.push(vec![
                    p.name.to_string(),
                    p.title.clone(),
                    format!("{}", p.rules.len()),
                ]);
            }
            s.push_str(&text::table(&["profile", "title", "rules"], &rows));
            s.push_str("\nshow one with `websigma profiles NAME`; apply with `assess: [NAME]` in the line or `--profile NAME|FILE`\n");
        }
        Some(name) => {
            let p = profile::load_profile(name)?;
            s.push_str(&format!("{} — {}\n{}\n\n", p.name, p.title, p.description));
            let rows: Vec<Vec<String>> = p
                .rules
                .iter()
                .map(|r| {
                    vec![
                        r.id.to_string(),
                        r.what.to_string(),
                        r.warn
                            .map(|w| format_quantity(w, r.dim))
                            .unwrap_or_else(|| "—".into()),
                        r.fail
                            .map(|w| format_quantity(w, r.dim))
                            .unwrap_or_else(|| "—".into()),
                        r.confidence.text().to_string(),
                    ]
                })
                .collect();
            s.push_str(&text::table(
                &["rule", "checks", "warn", "fail", "confidence"],
                &rows,
            ));
            s.push_str("\nsources:\n");
            for r in &p.rules {
                s.push_str(&format!("  {}: {}\n", r.id, r.source));
                if let Some(n) = &r.note {
                    s.push_str(&format!("    note: {n}\n"));
                }
            }
        }
    }
    emit(&mut std::io::stdout().lock(), &s)?;
    Ok(Outcome::Pass)
}

fn demo(a: &DemoArgs) -> Result<Outcome> {
    let text = crate::DEMO_LINE;
    let line = parse_line(text).context("the built-in demo line (profiles/lines/demo.yaml)")?;
    print_warnings(&line);
    let started = std::time::Instant::now();
    let run = run_assessment(AssessJob {
        line_file: "profiles/lines/demo.yaml (built in)".into(),
        line: line.clone(),
        line_text: text,
        extra_profiles: &[],
        out: &a.out,
        settings: SolverSettings::default(),
        map_resolution: DEMO_MAP_RESOLUTION,
        plan: Some(3),
    })?;
    let elapsed = started.elapsed().as_secs_f64();
    let (charge, readings) = (&run.charge, &run.readings);
    let mut s = String::from("websigma demo — an invented example line, not a real plant\n\n");
    s.push_str(&summary(&line, charge));
    s.push('\n');
    s.push_str(&text::spans_table(&report::span_rows(&line, charge)));
    if !readings.readings.is_empty() {
        s.push_str("\nmeter readings converted with the line's geometry (beside the infinite-sheet rule):\n");
        s.push_str(&text::readings_table(readings));
    }
    emit(&mut std::io::stdout().lock(), &s)?;
    eprintln!("assessed in {elapsed:.1} s");
    print_assessment(&line, &run.assessment, &run.dir)?;
    // A demonstration: exit 0 once the report is written, whatever it found.
    Ok(Outcome::Pass)
}
