//! Glue between the command line and the pipeline: one function per
//! subcommand, `Cli → checked settings → pipeline → writers`.
//!
//! This is the only module (besides `cli.rs` and `main.rs`) that knows about
//! the command line; the core modules take checked types only.

use crate::charge::ChargeProfile;
use crate::cli::{
    AssessArgs, BarKind, CheckArgs, Cli, Command, DemoArgs, FieldArgs, OutputFormat, PlanArgs,
    ProfilesArgs, ReadingsArgs, SweepArgs,
};
use crate::error::Outcome;
use crate::field::{PointField, Scene, SolverSettings, WebField};
use crate::model::{Line, load_line, parse_line};
use crate::points::{self, PointFile};
use crate::progress::{Task, Tracker};
use crate::readings::{ReadingsResult, invert_readings};
use crate::report::field_out::{self, FieldFormat, FieldWriter};
use crate::report::{
    PointRequest, assessment_text, csv, json, pictures, plan_json, plan_text, profiles_text,
    readings_text, summary,
};
use crate::units::Dim;
use anyhow::{Context, Result, bail};
use std::io::Write;
use std::path::Path;

/// Field-map resolution (points across) of the demo's report.
pub const DEMO_MAP_RESOLUTION: usize = 160;

/// Points evaluated per chunk when streaming a point file.
const CHUNK: usize = 4096;

/// Runs one command.
pub fn run(cli: Cli) -> Result<Outcome> {
    use std::io::IsTerminal;
    if !cli.quiet && std::io::stderr().is_terminal() {
        crate::progress::install(Box::new(crate::report::progress_bar::TerminalBars::new()));
    }
    match cli.command {
        Command::Check(a) => check(&a),
        Command::Field(a) => field(&a),
        Command::Assess(a) => assess_cmd(&a),
        Command::Profiles(a) => profiles_cmd(&a),
        Command::Readings(a) => readings_cmd(&a),
        Command::Plan(a) => plan_cmd(&a),
        Command::Demo(a) => demo(&a),
        Command::Sweep(a) => sweep_cmd(&a),
    }
}

fn print_warnings(line: &Line) {
    for w in &line.warnings {
        eprintln!(
            "warning: {}",
            crate::safe_text::printable_message(&w.to_string())
        );
    }
}

/// Checked solver settings from `--tolerance`.
fn solver(tolerance: f64) -> Result<SolverSettings> {
    SolverSettings::new(tolerance).context("--tolerance")
}

/// Checked solver settings from `--tolerance` and `--conductors PANEL|off`
/// (absent: the default panel size).
fn solver_with(tolerance: f64, conductors: &Option<String>) -> Result<SolverSettings> {
    let settings = solver(tolerance)?;
    match conductors.as_deref().map(str::trim) {
        None => Ok(settings.with_default_conductors()),
        Some("off") => Ok(settings.without_conductors()),
        Some(panel) => {
            let size = crate::units::parse_quantity(panel, Dim::Length)
                .map_err(|e| anyhow::anyhow!("--conductors: {e}"))?;
            settings.with_conductors(size).context("--conductors")
        }
    }
}

/// Reads and checks the line description at `path`, keeping its text
/// (for the report's checksum and `--apply`); warnings go to stderr.
fn read_line(path: &Path) -> Result<(String, Line)> {
    let text = crate::model::read_line_text(path)?;
    let line = parse_line(&text).map_err(|e| {
        anyhow::Error::new(e).context(format!("invalid line description '{}'", path.display()))
    })?;
    print_warnings(&line);
    Ok((text, line))
}

/// Loads the line at `path`, builds its scene and converts its readings
/// (the result holds the charge the rest of the run uses).
fn load_with_charge(
    path: &Path,
    settings: SolverSettings,
) -> Result<(Line, Scene, ReadingsResult)> {
    let line = load_line(path)?;
    print_warnings(&line);
    let scene = Scene::new(&line, settings)?;
    let r = line_charge(&line, &scene)?;
    Ok((line, scene, r))
}

/// Writes `s` to standard output.
fn print(s: &str) -> Result<()> {
    emit(&mut std::io::stdout().lock(), s)
}

/// Exit 1 when a limit is exceeded, else 0.
fn outcome(exceeded: bool) -> Outcome {
    if exceeded {
        Outcome::Exceeded
    } else {
        Outcome::Pass
    }
}

/// Writes to stdout; a closed pipe (e.g. `| head`) ends quietly.
fn emit(out: &mut impl Write, s: &str) -> Result<()> {
    out.write_all(s.as_bytes()).or_else(quiet_pipe)
}

/// A closed pipe is not an error; any other write error is.
fn quiet_pipe(e: std::io::Error) -> Result<()> {
    match e.kind() {
        std::io::ErrorKind::BrokenPipe => Ok(()),
        _ => Err(e).context("writing to standard output"),
    }
}

/// Reading warnings go to stderr.
fn print_reading_warnings(r: &ReadingsResult) {
    for w in readings_text::reading_warnings(r) {
        eprintln!(
            "warning: {}",
            crate::safe_text::printable_message(&w.to_string())
        );
    }
}

/// The readings converted and the charge along the path: the model's, with
/// the segments that hold readings fitted to them. Warnings go to stderr.
fn line_charge(line: &Line, scene: &Scene) -> Result<ReadingsResult> {
    let r = invert_readings(line, scene).context("converting the meter readings")?;
    print_reading_warnings(&r);
    Ok(r)
}

fn check(a: &CheckArgs) -> Result<Outcome> {
    let settings = solver_with(1e-9, &a.conductors)?;
    let line = load_line(&a.line)?;
    print_warnings(&line);
    // The profiles `assess` would apply exist and are valid.
    crate::assess::load_profiles(&line.assess, &[], &a.line.display().to_string())?;
    let scene = Scene::new(&line, settings)?;
    let r = line_charge(&line, &scene)?;
    let conductors = scene.web(&r.charge).conductor_results()?;
    let s = summary::check_text(
        &line,
        &r.charge,
        &a.line.display().to_string(),
        crate::field::assumptions(&scene.settings()),
        &conductors,
    );
    print(&s)?;
    Ok(Outcome::Pass)
}

/// The `field` command's output format for the writer.
fn field_format(f: OutputFormat) -> FieldFormat {
    match f {
        OutputFormat::Table => FieldFormat::Table,
        OutputFormat::Csv => FieldFormat::Csv,
        OutputFormat::Json => FieldFormat::Json,
    }
}

fn check_point(line: &Line, p: &PointRequest, where_: &str) -> Result<()> {
    match line.point_problem(p.at) {
        Some(msg) => bail!("{where_}: {msg}"),
        None => Ok(()),
    }
}

/// Field and potential at the requested points, in order.
fn evaluate(
    model: &WebField<'_>,
    reqs: &[PointRequest],
    contributions: bool,
) -> Result<Vec<PointField>> {
    let at: Vec<[f64; 3]> = reqs.iter().map(|q| q.at).collect();
    Ok(model.solve(&at, contributions)?.points)
}

fn field(a: &FieldArgs) -> Result<Outcome> {
    let settings = solver_with(a.tolerance, &a.conductors)?;
    if let Some(path) = &a.points {
        // A file that is not a point list fails before the solve.
        PointFile::open(path)?;
    }
    let (line, scene, r) = load_with_charge(&a.line, settings)?;
    let model = scene.web(&r.charge);
    let spans: Vec<String> = line.path.spans.iter().map(|s| s.name.clone()).collect();
    let mut w = FieldWriter::new(field_format(a.format), a.contributions)
        .with_assumptions(crate::field::assumptions(&scene.settings()));
    let mut out = std::io::BufWriter::new(std::io::stdout().lock());
    // The points the conductors' accuracy estimate is checked at (the listed
    // ones; a streamed point file is not kept).
    let mut checked: Vec<[f64; 3]> = Vec::new();

    if let Some(path) = &a.points {
        let name = path.display().to_string();
        // First pass: every row parses and is a point the model can
        // evaluate; the bad rows are collected, not only the first.
        let mut bad = points::BadRows::default();
        let count = PointFile::open(path)?.for_each_chunk(CHUNK, |chunk| {
            for r in &chunk.bad {
                bad.push(r.clone());
            }
            for (q, &line_no) in chunk.points.iter().zip(&chunk.lines) {
                if let Some(msg) = line.point_problem(q.at) {
                    bad.push(points::BadRow {
                        line: line_no,
                        message: msg.to_string(),
                    });
                }
            }
            Ok(())
        })?;
        if count == 0 {
            bail!("{name}: no points after the header: expected rows of x,y,z in metres");
        }
        if bad.total > 0 {
            let listing = bad.lines(&name);
            if !a.skip_bad_points {
                bail!(
                    "{name}: {} of {count} row(s) cannot be evaluated; correct them, or give --skip-bad-points to compute the others:\n{}",
                    bad.total,
                    listing.trim_end()
                );
            }
            if bad.total == count {
                bail!(
                    "{name}: none of the {count} row(s) can be evaluated:\n{}",
                    listing.trim_end()
                );
            }
            eprint!(
                "warning: {name}: skipped {} of {count} row(s) (--skip-bad-points):\n{listing}",
                bad.total
            );
        }
        // Second pass: evaluate the good rows and write chunk by chunk.
        emit(&mut out, &w.header(&spans))?;
        let progress = Tracker::new(Task::Points, count as u64);
        PointFile::open(path)?.for_each_chunk(CHUNK, |chunk| {
            let rows = (chunk.points.len() + chunk.bad.len()) as u64;
            let good: Vec<PointRequest> = chunk
                .points
                .iter()
                .filter(|q| line.point_problem(q.at).is_none())
                .cloned()
                .collect();
            if !good.is_empty() {
                let res = evaluate(&model, &good, a.contributions)?;
                emit(&mut out, &w.rows(&good, &res))?;
            }
            progress.advance(rows);
            Ok(())
        })?;
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
                let at =
                    points::parse_point(t).map_err(|e| anyhow::anyhow!("--at #{}: {e}", i + 1))?;
                let q = PointRequest { id: None, at };
                check_point(&line, &q, &format!("--at #{} \"{t}\"", i + 1))?;
                v.push(q);
            }
            v
        };
        let res = evaluate(&model, &reqs, a.contributions)?;
        emit(&mut out, &w.header(&spans))?;
        emit(&mut out, &w.rows(&reqs, &res))?;
        checked = reqs.iter().map(|q| q.at).collect();
    }
    emit(&mut out, &w.footer())?;
    let conductors = model.conductor_results()?;
    let accuracy = model.conductor_accuracy(&checked)?;
    if a.format == OutputFormat::Table && !conductors.is_empty() {
        emit(&mut out, &field_out::conductors_table(&conductors))?;
        if let Some(acc) = &accuracy {
            emit(&mut out, &field_out::accuracy_text(acc))?;
        }
    }
    if let Some(w) = accuracy.as_ref().and_then(field_out::accuracy_warning) {
        eprintln!(
            "warning: {}",
            crate::safe_text::printable_message(&w.to_string())
        );
    }
    out.flush().or_else(quiet_pipe)?;
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

/// What an assessment run leaves for the terminal.
struct AssessRun {
    dir: std::path::PathBuf,
    assessment: crate::assess::Assessment,
    charge: ChargeProfile,
    readings: ReadingsResult,
}

/// Runs the whole pipeline and writes the report folder.
fn run_assessment(job: AssessJob<'_>) -> Result<AssessRun> {
    use crate::report::{build, folder};
    check_out_dir(job.out)?;
    let line = &job.line;
    let profiles = crate::assess::load_profiles(&line.assess, job.extra_profiles, &job.line_file)?;
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
        uncertainty,
    } = analysis.evaluation;
    print_reading_warnings(&readings);
    let model = scene.web(&charge);

    let mut plots = pictures::make_plots(
        line,
        &charge,
        &readings,
        &model,
        &profiles,
        &assessment,
        job.map_resolution,
    )?;
    let mut plan_section = None;
    if let Some(n) = job.plan
        && assessment.verdict.exceeds()
    {
        // The `plan` command's defaults, asking what `plan --max-bars N`
        // asks: one planner, one answer.
        let mut st = crate::plan::PlanSettings::new();
        st.max_bars = n;
        let plan = crate::plan::plan(line, &profiles, &st, scene, &|_, _| {})?;
        if let Some(placed) = plan.placed_line(line, scene)? {
            let placed_charge = line_charge(&placed, scene)?.charge;
            plots.extend(pictures::planned_plots(&placed, &placed_charge)?);
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
        job.settings,
        plots,
        chrono::Utc::now(),
    );
    report.plan = plan_section;
    let meters = crate::assess::meter::every_span(
        line,
        &model,
        crate::assess::meter::DEFAULT_METER_DISTANCE,
    )?;
    for (s, m) in report.spans.iter_mut().zip(meters) {
        s.meter = m;
    }
    report.conductors = model.conductor_results()?;
    let places: Vec<[f64; 3]> = line.points.iter().map(|p| p.at).collect();
    report.conductor_accuracy = model.conductor_accuracy(&places)?;
    report.uncertainty = uncertainty;
    report.plots.extend(pictures::sensitivity_plot(&report)?);
    let dir = folder::write_report(job.out, &mut report)?;
    Ok(AssessRun {
        dir,
        assessment,
        charge,
        readings,
    })
}

fn assess_cmd(a: &AssessArgs) -> Result<Outcome> {
    let settings = solver_with(a.tolerance, &a.conductors)?;
    let plan = a.plan.map(|n| bar_count("--plan", n)).transpose()?;
    if !MAP_RESOLUTION.contains(&a.map_resolution) {
        bail!(
            "--map-resolution must be between {} and {}, got {}: the field map has N × N/2 points, each a field solve",
            MAP_RESOLUTION.start(),
            MAP_RESOLUTION.end(),
            a.map_resolution
        );
    }
    let (text, line) = read_line(&a.line)?;
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
        plan,
    })?;
    print(&assessment_text::assessment_text(&line, &assessment, &dir))?;
    Ok(outcome(assessment.verdict.exceeds()))
}

/// Converts the plan command line into checked planner settings.
fn plan_settings(a: &PlanArgs, line: &Line) -> Result<crate::plan::PlanSettings> {
    use crate::model::EliminatorKind;
    use crate::units::parse_quantity;
    let mut st = crate::plan::PlanSettings::new();
    st.bars = a.bars.map(|n| bar_count("--bars", n)).transpose()?;
    st.max_bars = bar_count("--max-bars", a.max_bars)?;
    st.kind = match a.kind {
        BarKind::Powered => EliminatorKind::Powered,
        BarKind::Passive => EliminatorKind::Passive,
    };
    st.distance =
        parse_quantity(&a.distance, Dim::Length).map_err(|e| anyhow::anyhow!("--distance: {e}"))?;
    st.spacing =
        parse_quantity(&a.spacing, Dim::Length).map_err(|e| anyhow::anyhow!("--spacing: {e}"))?;
    for (flag, value, text, example) in [
        ("--distance", st.distance, &a.distance, "40 mm"),
        ("--spacing", st.spacing, &a.spacing, "100 mm"),
    ] {
        if value <= 0.0 {
            bail!("{flag}: expected a positive length such as \"{example}\", got \"{text}\"");
        }
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
        st.candidates = Some(crate::plan::read_candidates(path, line)?);
    }
    if !(1..=MAX_TOP).contains(&a.top) {
        bail!(
            "--top must be at least 1 and at most {MAX_TOP}, got {}: each plan listed is assessed again with the full model",
            a.top
        );
    }
    st.top = a.top;
    Ok(st)
}

/// Most bars placed by `plan --bars/--max-bars` and `assess --plan` [1]:
/// the search is combinatorial (C(n, N) placements of N bars among n
/// candidates, greedy above 3 bars), and a line that 8 bars cannot bring
/// within its limits needs another remedy than more bars.
const MAX_BARS: usize = 8;

/// Most plans listed by `plan --top` [1]: each is assessed again with the
/// full model (about as long as `assess` without its pictures).
const MAX_TOP: usize = 100;

/// Field-map resolutions accepted by `assess --map-resolution` (points
/// across) [1]: the map has N × N/2 points, each a field solve; 1000 gives
/// 500,000 points.
const MAP_RESOLUTION: std::ops::RangeInclusive<usize> = 20..=1000;

/// A number of bars given with `flag`, checked against [`MAX_BARS`].
fn bar_count(flag: &str, n: usize) -> Result<usize> {
    if !(1..=MAX_BARS).contains(&n) {
        bail!(
            "{flag} must be at least 1 and at most {MAX_BARS}, got {n}: the search is combinatorial (C(n, N) placements of N bars among n candidates); a line that {MAX_BARS} bars cannot bring within its limits needs another remedy"
        );
    }
    Ok(n)
}

fn plan_cmd(a: &PlanArgs) -> Result<Outcome> {
    use std::io::IsTerminal;
    let (text, line) = read_line(&a.line)?;
    let solver = solver_with(a.tolerance, &a.conductors)?;
    let st = plan_settings(a, &line)?;
    // Created before the search, so a bad --apply path fails at once;
    // removed again unless the planned file is written.
    let apply = a
        .apply
        .as_deref()
        .map(crate::report::new_file::NewFile::create)
        .transpose()
        .context("--apply")?;
    let profiles =
        crate::assess::load_profiles(&line.assess, &a.profiles, &a.line.display().to_string())?;
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
            crate::plan::PlanError::NoCandidatePositions
            | crate::plan::PlanError::TooManyCandidates { .. } => {
                anyhow::Error::new(e).context(flags)
            }
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
        OutputFormat::Json => plan_json::plan_json(&plan, &line),
        OutputFormat::Csv => csv::plan_csv(&plan, &line),
        OutputFormat::Table => plan_text::plan_text(&plan, &line),
    };
    print(&s)?;
    let passes = plan.options.first().is_some_and(|o| o.counts[2] == 0);
    if let (Some(file), Some(bars)) = (apply, plan.best_bars()) {
        let new_text = crate::plan::apply_to_yaml(&text, &line, &bars, &scene)?;
        parse_line(&new_text).map_err(|e| {
            anyhow::Error::new(e).context("internal: the planned line description does not parse")
        })?;
        let out = file.commit(new_text.as_bytes()).context("--apply")?;
        eprintln!("wrote {} with the best plan's bars added", out.display());
    }
    Ok(outcome(!passes))
}

fn readings_cmd(a: &ReadingsArgs) -> Result<Outcome> {
    let (_, _, r) = load_with_charge(&a.line, solver_with(a.tolerance, &a.conductors)?)?;
    if r.readings.is_empty() {
        bail!(
            "the line has no `readings:`: add field-meter readings (span, position, distance, side, reading) to convert"
        );
    }
    let s = match a.format {
        OutputFormat::Table => readings_text::readings_text(&r),
        OutputFormat::Csv => csv::readings_csv(&r.readings),
        OutputFormat::Json => json::readings_json(&r),
    };
    print(&s)?;
    // A fit that does not give a reading back within its tolerance is a
    // limit exceeded (exit 1), as in the assessment.
    Ok(outcome(!r.readings.iter().all(|x| x.reproduced())))
}

fn profiles_cmd(a: &ProfilesArgs) -> Result<Outcome> {
    use crate::assess::profile::{load_profile, shipped};
    let s = match &a.name {
        None => {
            let profiles = shipped()
                .iter()
                .map(|(name, _)| load_profile(name))
                .collect::<std::result::Result<Vec<_>, _>>()?;
            profiles_text::profile_list(&profiles)
        }
        Some(name) => profiles_text::profile_text(&load_profile(name)?),
    };
    print(&s)?;
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
        settings: SolverSettings::default().with_default_conductors(),
        map_resolution: DEMO_MAP_RESOLUTION,
        plan: Some(3),
    })?;
    let elapsed = started.elapsed().as_secs_f64();
    let s = summary::demo_text(&line, &run.charge, &run.readings);
    print(&s)?;
    eprintln!("assessed in {elapsed:.1} s");
    print(&assessment_text::assessment_text(
        &line,
        &run.assessment,
        &run.dir,
    ))?;
    // A demonstration: exit 0 once the report is written, whatever it found.
    Ok(Outcome::Pass)
}

/// Width and height of the sweep's plot [px].
const SWEEP_PLOT: (u32, u32) = (1400, 700);

fn sweep_cmd(a: &SweepArgs) -> Result<Outcome> {
    use crate::report::folder::{OutputFile, write_folder};
    use crate::report::{plot, sweep_csv, sweep_text};
    let spec = crate::sweep::parse_vary(
        a.vary.first().map_or("", String::as_str),
        a.vary.get(1).map(String::as_str),
    )?;
    let (text, line) = read_line(&a.line)?;
    let varied = crate::sweep::Varied::new(&text, spec, a.steps)?;
    // Profiles and solver settings as `assess` takes them by default.
    let profiles = crate::assess::load_profiles(&line.assess, &[], &a.line.display().to_string())?;
    let settings = crate::pipeline::Settings::new(solver_with(1e-9, &None)?);
    check_out_dir(&a.out)?;
    let result = crate::sweep::sweep(&varied, &profiles, &settings)?;
    for w in &result.warnings {
        eprintln!(
            "warning: {}",
            crate::safe_text::printable_message(&sweep_text::warning_text(&result, w))
        );
    }
    let png = plot::sweep_png(&result, SWEEP_PLOT.0, SWEEP_PLOT.1)?;
    let csv = sweep_csv::sweep_csv(&result);
    let stamp = chrono::Utc::now().format("%Y%m%dT%H%M%SZ");
    let id = format!("sweep-{}-{stamp}", crate::report::build::slug(&line.title));
    let dir = write_folder(&a.out, &id, |_| {
        [
            ("sweep.csv", csv.as_bytes().to_vec()),
            ("sweep.png", png.clone()),
        ]
        .into_iter()
        .map(|(name, bytes)| {
            Ok(OutputFile {
                name: name.to_string(),
                bytes,
            })
        })
        .collect::<Vec<_>>()
    })?;
    print(&sweep_text::sweep_text(&result, &dir))?;
    Ok(outcome(result.exceeded()))
}
