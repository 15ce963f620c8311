//! Input a practitioner types and the outputs that keep it: wrap directions
//! that are likely wrong, readings shown as recorded (with their instrument
//! and conditions), the planned line written with rounded values, the plan
//! as CSV, point files with bad rows, and tolerances on `charge:` entries
//! (kept as a half-width, refused elsewhere, kept by `plan --apply`).

use crate::util::{SMALL_LINE, temp_yaml, websigma};
use predicates::prelude::*;
use websigma::field::{Scene, SolverSettings};
use websigma::model::parse_line;

/// A roller turning the web down: it comes in level with the roller's
/// centre and leaves straight down below it. The right wrap is `cw` (over
/// the top and down the far side); `ccw` sends the web under the roller and
/// the long way round, across its own incoming span.
const TURN: &str = r#"
line: Turning roller
web: {width: 1 m, thickness: 50 um, relative_permittivity: 3, relaxation_time: 100 s, speed: 1 m/s}
rollers:
  - {id: T, center: [1 m, 1 m], diameter: 200 mm, earthing: grounded}
path:
  - point: [0 m, 1 m]
  - {roller: T, wrap: WRAP}
  - point: [1 m, 0 m]
charge:
  - at: start
    sigma: 1 uC/m^2
"#;

/// Plane geometry: both free points are L = 1 m from the centre of a roller
/// of radius r = 0.1 m, and a tangent from such a point leans asin(r/L) off
/// the line to the centre; the directions of travel are 90° apart, so `cw`
/// wraps 90° + 2·asin(0.1) = 101.5° and `ccw` wraps 270° + 2·asin(0.1) =
/// 281.5°, which is warned about with the other direction's wrap.
#[test]
fn a_wrap_above_270_degrees_is_warned_with_the_likely_direction() {
    let lean = 0.1f64.asin().to_degrees();
    let good = parse_line(&TURN.replace("WRAP", "cw")).unwrap();
    let phi = good.path.arcs[0].sweep.abs().to_degrees();
    assert!((phi - (90.0 + 2.0 * lean)).abs() < 1e-9, "{phi}");
    assert!(good.warnings.is_empty(), "{:?}", good.warnings);

    let bad = parse_line(&TURN.replace("WRAP", "ccw")).unwrap();
    let phi = bad.path.arcs[0].sweep.abs().to_degrees();
    assert!((phi - (270.0 + 2.0 * lean)).abs() < 1e-9, "{phi}");
    let w: Vec<String> = bad.warnings.iter().map(|w| w.to_string()).collect();
    let w = w
        .iter()
        .find(|w| w.starts_with("path[1].wrap: "))
        .unwrap_or_else(|| panic!("no wrap warning in {w:?}"));
    assert!(
        w.contains("the web wraps 281° round roller T (`wrap: ccw`), more than 270°"),
        "{w}"
    );
    assert!(w.contains("the wrap direction is likely wrong"), "{w}");
    assert!(w.contains("`wrap: cw` would give 101°"), "{w}");
}

/// The warning reaches `check` (stderr), `assess` (stderr) and the report's
/// list of warnings raised while reading the input; the exit codes keep
/// their meaning.
#[test]
fn the_wrap_warning_reaches_check_assess_and_the_report() {
    let (d, p) = temp_yaml(&TURN.replace("WRAP", "ccw"));
    websigma()
        .arg("check")
        .arg(&p)
        .assert()
        .code(0)
        .stderr(predicate::str::contains(
            "warning: path[1].wrap: the web wraps",
        ));
    let out = d.path().join("reports");
    let run = websigma()
        .arg("assess")
        .arg(&p)
        .arg("--out")
        .arg(&out)
        .args(["--map-resolution", "20", "--conductors", "off"])
        .output()
        .unwrap();
    let stderr = String::from_utf8_lossy(&run.stderr);
    assert!(matches!(run.status.code(), Some(0 | 1)), "{stderr}");
    assert!(stderr.contains("warning: path[1].wrap:"), "{stderr}");
    let md = std::fs::read_to_string(crate::util::only_report(&out).join("report.md")).unwrap();
    // Markdown-escaped: report.md shows every text as text.
    assert!(md.contains("path\\[1\\].wrap: the web wraps"), "{md}");
}

/// SMALL_LINE with one reading typed in inch units and its record.
fn recorded_line(extra: &str) -> String {
    format!(
        "{SMALL_LINE}readings:\n  - {{id: R1, span: S2, position: 50 %, distance: 1 in, side: above, reading: 1.8 kV/in{extra}}}\n"
    )
}

const RECORD: &str =
    ", meter: FM-2 s/n 4411, calibrated_on: 2024-03-18, relative_humidity: 45 %, speed: 60 m/min";

/// The record is kept as typed and in SI: 1.8 kV/in = 1800 V / 0.0254 m
/// (NIST SP 811: 1 in = 0.0254 m exactly), 60 m/min = 1 m/s.
#[test]
fn a_reading_keeps_what_was_recorded() {
    let line = parse_line(&recorded_line(RECORD)).unwrap();
    let r = &line.readings[0];
    assert_eq!(r.record.value_text, "1.8 kV/in");
    assert_eq!(r.record.distance_text, "1 in");
    assert_eq!(r.record.meter.as_deref(), Some("FM-2 s/n 4411"));
    assert_eq!(
        r.record.calibrated_on.map(|d| d.to_string()).as_deref(),
        Some("2024-03-18")
    );
    assert!((r.record.relative_humidity.unwrap() - 0.45).abs() < 1e-15);
    assert!((r.record.speed.unwrap() - 1.0).abs() < 1e-15);
    assert!((r.distance - 0.0254).abs() < 1e-15);
    match r.value {
        websigma::model::ReadingValue::Field(e) => {
            assert!((e - 1800.0 / 0.0254).abs() < 1e-9, "{e}")
        }
        v => panic!("{v:?}"),
    }
    assert!(line.warnings.is_empty(), "{:?}", line.warnings);
}

/// Every bad record value is refused with its YAML path and what is
/// accepted; a speed far from the modelled one is a warning.
#[test]
fn bad_record_values_are_refused_with_their_path() {
    let bad = recorded_line(
        ", meter: '', calibrated_on: 2024-02-30, relative_humidity: 120 %, speed: -5 m/min",
    );
    let e = parse_line(&bad).unwrap_err().to_string();
    assert!(e.contains("4 problems"), "{e}");
    assert!(
        e.contains("readings[0].meter: expected the instrument's identifier"),
        "{e}"
    );
    assert!(
        e.contains("readings[0].calibrated_on: expected a calendar date written YYYY-MM-DD, such as \"2024-03-18\", got \"2024-02-30\""),
        "{e}"
    );
    assert!(
        e.contains("readings[0].relative_humidity: expected a relative humidity from 0 % to 100 %, got 120 %"),
        "{e}"
    );
    assert!(
        e.contains("readings[0].speed: expected a web speed of zero or more"),
        "{e}"
    );
    for date in ["18.03.2024", "2024-3-18", "24-03-18", "2024-13-01"] {
        let e = parse_line(&recorded_line(&format!(", calibrated_on: {date}")))
            .unwrap_err()
            .to_string();
        assert!(
            e.contains("readings[0].calibrated_on: expected a calendar date"),
            "{date}: {e}"
        );
    }
    let e = parse_line(&recorded_line(", relative_humidity: 45"))
        .unwrap_err()
        .to_string();
    assert!(e.contains("readings[0].relative_humidity"), "{e}");
    let slow = parse_line(&recorded_line(", speed: 30 m/min")).unwrap();
    let w: Vec<String> = slow.warnings.iter().map(|w| w.to_string()).collect();
    assert!(
        w.iter().any(
            |w| w.starts_with("readings[0].speed: the reading was taken at 500 mm/s")
                || w.starts_with("readings[0].speed: the reading was taken at 0.5 m/s")
        ),
        "{w:?}"
    );
}

/// `websigma readings` shows the reading as typed beside the converted
/// value, the record, and says when no humidity was recorded.
#[test]
fn readings_output_shows_the_reading_as_entered() {
    let (_d, p) = temp_yaml(&recorded_line(RECORD));
    let out = websigma()
        .arg("readings")
        .arg(&p)
        .args(["--conductors", "off"])
        .output()
        .unwrap();
    let s = String::from_utf8_lossy(&out.stdout);
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    assert!(s.contains("as entered"), "{s}");
    // 1800 V / 0.0254 m = 70 866 V/m, shown to 3 significant digits.
    assert!(s.contains("1.8 kV/in at 1 in  70.9 kV/m"), "{s}");
    assert!(
        s.contains("recorded: R1: meter FM-2 s/n 4411, calibrated on 2024-03-18, RH 45 %, web at 1 m/s (60 m/min)"),
        "{s}"
    );
    assert!(s.contains("Relative humidity at measurement: 45 %"), "{s}");

    let (_d, p) = temp_yaml(&recorded_line(""));
    let s = websigma()
        .arg("readings")
        .arg(&p)
        .args(["--conductors", "off"])
        .output()
        .unwrap();
    let s = String::from_utf8_lossy(&s.stdout);
    assert!(!s.contains("recorded:"), "{s}");
    assert!(
        s.contains("No reading gives `relative_humidity:`, so the relaxation time was not checked against the humidity at measurement"),
        "{s}"
    );

    let (_d, p) = temp_yaml(&recorded_line(RECORD));
    let csv = websigma()
        .arg("readings")
        .arg(&p)
        .args(["--conductors", "off", "--format", "csv"])
        .output()
        .unwrap();
    let csv = String::from_utf8_lossy(&csv.stdout);
    let mut rows = csv.lines();
    let header: Vec<&str> = rows.next().unwrap().split(',').collect();
    let row: Vec<&str> = rows.next().unwrap().split(',').collect();
    let col = |name: &str| row[header.iter().position(|h| *h == name).unwrap()];
    assert_eq!(col("as_entered"), "1.8 kV/in at 1 in");
    assert_eq!(col("meter"), "FM-2 s/n 4411");
    assert_eq!(col("calibrated_on"), "2024-03-18");
    assert_eq!(col("relative_humidity_fraction"), "0.45");
    assert_eq!(col("speed_m_per_s"), "1.0");
}

/// The report's inputs show the reading as typed, its record, and the
/// humidity note; without a humidity it says the relaxation time was not
/// checked against it.
#[test]
fn the_report_inputs_show_the_record_and_the_humidity_note() {
    let report = |text: &str| {
        let (d, p) = temp_yaml(text);
        let out = d.path().join("reports");
        let run = websigma()
            .arg("assess")
            .arg(&p)
            .arg("--out")
            .arg(&out)
            .args(["--map-resolution", "20", "--conductors", "off"])
            .output()
            .unwrap();
        assert!(
            matches!(run.status.code(), Some(0 | 1)),
            "{}",
            String::from_utf8_lossy(&run.stderr)
        );
        std::fs::read_to_string(crate::util::only_report(&out).join("report.md")).unwrap()
    };
    let md = report(&recorded_line(RECORD));
    assert!(md.contains("| 1.8 kV/in at 1 in | 70.9 kV/m |"), "{md}");
    assert!(
        md.contains("| R1 | FM-2 s/n 4411 | 2024-03-18 | 45 % | 1 m/s (60 m/min) |"),
        "{md}"
    );
    assert!(
        md.contains("Relative humidity at measurement: 45 %. The relaxation time τ = 100 s"),
        "{md}"
    );
    let md = report(&recorded_line(""));
    assert!(!md.contains("calibrated on"), "{md}");
    assert!(
        md.contains("No reading gives \\`relative_humidity:\\`, so the relaxation time τ = 100 s was not checked against the humidity at measurement"),
        "{md}"
    );
}

/// The planner's test line (tests/plan.rs) with a reading: the applied file
/// is rounded, ends with a newline, and says why the readings were replaced.
const PLAN_LINE: &str = r#"
line: Planner test line
web: {width: 1 m, thickness: 30 um, relative_permittivity: 3, relaxation_time: 20 s, speed: 2 m/s}
ground_plane: 0 m
rollers:
  - {id: A, center: [2 m, 0.95 m], diameter: 100 mm, earthing: grounded}
path:
  - point: [0 m, 1 m]
    id: IN
  - {roller: A, wrap: cw}
  - point: [4 m, 1 m]
    id: OUT
charge:
  - at: start
    sigma: 4 uC/m^2
points:
  - {id: OP1, kind: operator, at: [3 m, 0.8 m, 1.2 m]}
  - {id: OP2, kind: operator, at: [1 m, 0.8 m, 1.2 m]}
assess: [operator-shock]
"#;

/// Every number written by `--apply` is a millimetre length or has at most
/// four significant digits; the file ends with a newline, opens with a
/// comment saying why the readings became charge entries, and assesses as
/// the planner predicted (to the rounding: a bar moved by at most 0.5 mm
/// on a 2 m span and densities to 4 digits change the findings by far less
/// than 1 %).
#[test]
fn applied_plan_is_rounded_and_explains_the_fitted_charge() {
    let text = format!(
        "{PLAN_LINE}readings:\n  - {{id: R1, span: S1, position: 40 %, distance: 30 mm, side: above, reading: 150 kV/m}}\n"
    );
    let (d, p) = temp_yaml(&text);
    let out = d.path().join("planned.yaml");
    let run = websigma()
        .arg("plan")
        .arg(&p)
        .args(["--spacing", "300 mm", "--conductors", "off", "--apply"])
        .arg(&out)
        .output()
        .unwrap();
    assert!(
        matches!(run.status.code(), Some(0 | 1)),
        "{}",
        String::from_utf8_lossy(&run.stderr)
    );
    let planned = std::fs::read_to_string(&out).unwrap();
    assert!(planned.ends_with('\n'), "{planned}");
    assert!(
        planned.starts_with("# Written by `websigma plan --apply`"),
        "{planned}"
    );
    let header: String = planned
        .lines()
        .take_while(|l| l.starts_with('#'))
        .collect::<Vec<_>>()
        .join("\n");
    assert!(
        header.contains("The meter readings were taken without these bars"),
        "{header}"
    );
    let tail = &planned[planned.find("\ncharge:   # fitted").expect(&planned)..];
    let mut numbers = 0;
    for word in tail.split([' ', ',', '{', '}', '\n']) {
        if let Ok(v) = word.parse::<f64>() {
            numbers += 1;
            let digits: String = word.chars().filter(|c| c.is_ascii_digit()).collect();
            let significant = digits.trim_start_matches('0').trim_end_matches('0').len();
            assert!(significant <= 4, "{word} ({v}) in\n{tail}");
        }
    }
    assert!(numbers >= 5, "{tail}");
    for l in tail.lines().filter(|l| l.contains("position:")) {
        let pos = l.split("position: ").nth(1).unwrap();
        let value = pos.split(' ').next().unwrap();
        assert!(pos.split(' ').nth(1).unwrap().starts_with("mm"), "{l}");
        assert!(!value.contains('.'), "a planned position to the mm: {l}");
    }
    // The new file is valid and carries the fitted charge and the bars.
    let applied = parse_line(&planned).unwrap_or_else(|e| panic!("{e}\n{planned}"));
    assert!(applied.readings.is_empty());
    assert!(!applied.eliminators.is_empty());

    // Without readings: no word about them, no fitted charge.
    let (d, p) = temp_yaml(PLAN_LINE);
    let out = d.path().join("planned.yaml");
    websigma()
        .arg("plan")
        .arg(&p)
        .args(["--spacing", "300 mm", "--conductors", "off", "--apply"])
        .arg(&out)
        .assert()
        .code(predicate::in_iter([0, 1]));
    let planned = std::fs::read_to_string(&out).unwrap();
    assert!(planned.ends_with('\n'));
    assert!(!planned.contains("readings"), "{planned}");
    assert!(!planned.contains("fitted"), "{planned}");
}

/// `plan --format csv`: one row per bar of each plan, the plan's counts on
/// each row, the same plans and bars as the JSON output.
#[test]
fn plan_csv_has_one_row_per_bar_and_matches_json() {
    let (_d, p) = temp_yaml(PLAN_LINE);
    let run = |format: &str| {
        let o = websigma()
            .arg("plan")
            .arg(&p)
            .args(["--spacing", "500 mm", "--conductors", "off", "--top", "3"])
            .args(["--format", format])
            .output()
            .unwrap();
        assert!(matches!(o.status.code(), Some(0 | 1)));
        String::from_utf8(o.stdout).unwrap()
    };
    let csv = run("csv");
    let json: serde_json::Value = serde_json::from_str(&run("json")).unwrap();
    let mut lines = csv.lines();
    let header: Vec<&str> = lines.next().unwrap().split(',').collect();
    assert_eq!(
        header,
        [
            "plan",
            "bars",
            "fail",
            "warn",
            "pass",
            "worst_margin",
            "bar",
            "kind",
            "span",
            "span_label",
            "position_m",
            "side",
            "distance_m",
            "efficiency"
        ]
    );
    let rows: Vec<Vec<&str>> = lines.map(|l| l.split(',').collect()).collect();
    let plans = json["plans"].as_array().unwrap();
    let expected: usize = plans
        .iter()
        .map(|p| p["bars"].as_array().unwrap().len())
        .sum();
    assert_eq!(rows.len(), expected, "{csv}");
    let mut i = 0;
    for (k, plan) in plans.iter().enumerate() {
        for (b, bar) in plan["bars"].as_array().unwrap().iter().enumerate() {
            let row = &rows[i];
            i += 1;
            assert_eq!(row.len(), header.len(), "{row:?}");
            assert_eq!(row[0], (k + 1).to_string());
            assert_eq!(row[2], plan["fail"].to_string());
            assert_eq!(row[6], (b + 1).to_string());
            assert_eq!(row[8], bar["span"].as_str().unwrap());
            let pos: f64 = row[10].parse().unwrap();
            assert!((pos - bar["position"].as_f64().unwrap()).abs() < 1e-12);
            assert_eq!(row[11], bar["side"].as_str().unwrap());
        }
    }
}

/// Points for SMALL_LINE: rows 3 and 5 cannot be parsed, row 6 lies on the
/// web (span S2 runs at z = 1.05 m), the others are good.
const POINTS: &str =
    "id,x,y,z\na,1,0,1.3\nb,1,zero,1.3\nc,1.2,0,1.3\nd,1 kV,0,x\ne,1,0,1.05\nf,1.4,0,1.3\n";

#[test]
fn every_bad_point_row_is_reported_at_once() {
    let (d, p) = temp_yaml(SMALL_LINE);
    let pts = d.path().join("pts.csv");
    std::fs::write(&pts, POINTS).unwrap();
    let out = websigma()
        .arg("field")
        .arg(&p)
        .arg("--points")
        .arg(&pts)
        .args(["--conductors", "off"])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    assert!(out.stdout.is_empty());
    let e = String::from_utf8(out.stderr).unwrap();
    assert!(e.contains("3 of 6 row(s) cannot be evaluated"), "{e}");
    assert!(e.contains("--skip-bad-points"), "{e}");
    assert!(e.contains("pts.csv:3: column y: "), "{e}");
    assert!(e.contains("pts.csv:5: column x: "), "{e}");
    assert!(e.contains("; column z: "), "{e}");
    assert!(e.contains("pts.csv:6: "), "{e}");
    assert!(e.ends_with('\n') && !e.ends_with("\n\n"), "{e:?}");
    assert_eq!(e.lines().count(), 4, "{e}");
}

#[test]
fn skip_bad_points_computes_the_rest_and_lists_what_it_skipped() {
    let (d, p) = temp_yaml(SMALL_LINE);
    let pts = d.path().join("pts.csv");
    std::fs::write(&pts, POINTS).unwrap();
    let out = websigma()
        .arg("field")
        .arg(&p)
        .arg("--points")
        .arg(&pts)
        .args([
            "--conductors",
            "off",
            "--skip-bad-points",
            "--format",
            "json",
        ])
        .output()
        .unwrap();
    let e = String::from_utf8(out.stderr).unwrap();
    assert_eq!(out.status.code(), Some(0), "{e}");
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let ids: Vec<&str> = v["points"]
        .as_array()
        .unwrap()
        .iter()
        .map(|q| q["id"].as_str().unwrap())
        .collect();
    assert_eq!(ids, ["a", "c", "f"]);
    assert!(e.starts_with("warning: "), "{e}");
    assert!(
        e.contains("skipped 3 of 6 row(s) (--skip-bad-points)"),
        "{e}"
    );
    for line in ["pts.csv:3: column y", "pts.csv:5: column x", "pts.csv:6: "] {
        assert!(e.contains(line), "{line}: {e}");
    }
    assert!(e.ends_with('\n'), "{e:?}");

    // Nothing left to compute is an error; the flag needs --points.
    std::fs::write(&pts, "x,y,z\n1,zero,1\n").unwrap();
    websigma()
        .arg("field")
        .arg(&p)
        .arg("--points")
        .arg(&pts)
        .args(["--conductors", "off", "--skip-bad-points"])
        .assert()
        .code(2)
        .stderr(predicate::str::contains(
            "none of the 1 row(s) can be evaluated",
        ));
    websigma()
        .arg("field")
        .arg(&p)
        .args(["--at", "1,0,1.3", "--skip-bad-points"])
        .assert()
        .code(2);
}

/// The planned line's scene is the planner's: `apply_to_yaml` through the
/// library gives a file that ends with one newline even for a text without
/// one at the end.
#[test]
fn apply_to_yaml_ends_with_a_newline() {
    use websigma::model::{EliminatorKind, Side};
    use websigma::plan::{Candidate, apply_to_yaml};
    let text = PLAN_LINE.trim_end();
    let line = parse_line(text).unwrap();
    let scene = Scene::new(&line, SolverSettings::default().without_conductors()).unwrap();
    let bar = Candidate {
        kind: EliminatorKind::Powered,
        span: 0,
        along: 1.0 / 3.0,
        side: Side::Above,
        distance: 0.04,
        efficiency: 0.95,
        residual: 0.0,
    };
    let out = apply_to_yaml(text, &line, &[bar], &scene).unwrap();
    assert!(out.ends_with("# added by websigma plan\n"), "{out}");
    assert!(out.contains("position: 333 mm, distance: 40 mm"), "{out}");
    let applied = parse_line(&out).unwrap();
    assert!((applied.eliminators[0].along - 0.333).abs() < 1e-12);
}

/// `SMALL_LINE` with its `charge:` entry's density written as `sigma`.
fn small_line_sigma(sigma: &str) -> String {
    let line = SMALL_LINE.replace("sigma: 5 uC/m^2", &format!("sigma: {sigma}"));
    assert_ne!(line, SMALL_LINE);
    line
}

/// A tolerance on a `charge:` entry is kept as an absolute half-width in
/// C/m²: 20 % of 5 µC/m² is 1 µC/m² = 1e-6 C/m²; 500 nC/m² is 5e-7 C/m²;
/// none written is 0. `check` shows it with its unit.
#[test]
fn a_tolerance_on_a_charge_entry_becomes_a_half_width_in_c_per_m2() {
    for spelling in ["5 uC/m^2 ± 20 %", "5 uC/m^2 +- 20 %", "5 uC/m^2±20%"] {
        let line = parse_line(&small_line_sigma(spelling)).unwrap_or_else(|e| panic!("{e}"));
        let c = &line.charge[0];
        assert!((c.sigma - 5e-6).abs() < 1e-18, "{spelling}: {}", c.sigma);
        assert!(
            (c.tolerance - 0.2 * c.sigma.abs()).abs() < 1e-18,
            "{spelling}: {}",
            c.tolerance
        );
        assert!((c.tolerance - 1e-6).abs() < 1e-18);
    }
    let text = small_line_sigma("5 uC/m^2\n  - at: A\n    adds: -2 uC/m^2 ± 500 nC/m^2");
    let line = parse_line(&text).unwrap_or_else(|e| panic!("{e}"));
    let adds = line.charge.iter().find(|c| c.at == "A").unwrap();
    assert!((adds.sigma + 2e-6).abs() < 1e-18);
    assert!((adds.tolerance - 5e-7).abs() < 1e-19, "{}", adds.tolerance);
    assert_eq!(parse_line(SMALL_LINE).unwrap().charge[0].tolerance, 0.0);

    let (_d, p) = temp_yaml(&small_line_sigma("5 uC/m^2 ± 20 %"));
    websigma()
        .arg("check")
        .arg(&p)
        .args(["--conductors", "off"])
        .assert()
        .code(0)
        .stdout(predicate::str::contains(
            "charge: sets 5 µC/m² ± 1 µC/m² leaving start",
        ));
    // Without a tolerance the line is as before.
    let (_d, p) = temp_yaml(SMALL_LINE);
    websigma()
        .arg("check")
        .arg(&p)
        .args(["--conductors", "off"])
        .assert()
        .code(0)
        .stdout(predicate::str::contains(
            "charge: sets 5 µC/m² leaving start\n",
        ));
}

/// Each bad tolerance is an input error (exit 2) at its YAML path, saying
/// what is wrong and what would be accepted.
#[test]
fn bad_tolerances_exit_2_at_their_yaml_path() {
    let accepted = "such as \"8 uC/m^2 ± 20 %\" or \"8 uC/m^2 ± 1.6 uC/m^2\"";
    let cases = [
        ("5 uC/m^2 ± -20 %", "is negative"),
        ("5 uC/m^2 ± -1 uC/m^2", "is negative"),
        ("5 uC/m^2 ± .nan %", "is not a finite number"),
        ("5 uC/m^2 ± inf uC/m^2", "is not a finite number"),
        ("5 uC/m^2 ± 3 kV", "the tolerance \"3 kV\" is a voltage"),
        ("5 uC/m^2 ± 20 % ± 1 uC/m^2", "more than one ±"),
        ("5 uC/m^2 +- 20 % +- 1 uC/m^2", "more than one ±"),
        ("± 20 %", "nothing before the ±"),
        ("5 uC/m^2 ±", "nothing after the ±"),
        ("5 uC/m^2 ± 20", "has no unit"),
        (
            "5 uC/m^2 ± 150 %",
            "over 100 %, so the range would cross zero: write such a range as an absolute tolerance, here \"5 uC/m^2 ± 7.5 µC/m²\"",
        ),
    ];
    for (value, why) in cases {
        let (_d, p) = temp_yaml(&small_line_sigma(&format!("\"{value}\"")));
        websigma()
            .arg("check")
            .arg(&p)
            .assert()
            .code(2)
            .stderr(predicate::str::contains(format!(
                "charge[0].sigma: \"{value}\": "
            )))
            .stderr(predicate::str::contains(why))
            .stderr(predicate::str::contains(accepted));
    }
    // On `adds:`, at its own path; a tolerance beyond what air can hold is
    // a unit error.
    let text = small_line_sigma("5 uC/m^2\n  - at: A\n    adds: 1 uC/m^2 ± 5 mC/m^2");
    let (_d, p) = temp_yaml(&text);
    websigma()
        .arg("check")
        .arg(&p)
        .assert()
        .code(2)
        .stderr(predicate::str::contains(
            "charge[1].adds: the tolerance ± 5 mC/m² is about",
        ))
        .stderr(predicate::str::contains("likely a unit error"));
}

/// Other quantities keep refusing a ±, at their path, saying where one is
/// accepted; a reading points to the meter's accuracy.
#[test]
fn other_quantities_refuse_a_tolerance() {
    let roller = SMALL_LINE.replacen("diameter: 100 mm,", "diameter: 100 mm ± 1 mm,", 1);
    let reading = format!(
        "{SMALL_LINE}readings:\n  - {{id: R1, span: S2, position: 50 %, distance: 30 mm, side: above, reading: 150 kV/m +- 5 %}}\n"
    );
    for (text, path, extra) in [
        (
            roller,
            "rollers[0].diameter: \"100 mm ± 1 mm\"",
            "expected a length such as \"120 mm\" alone",
        ),
        (
            reading,
            "readings[0].reading: \"150 kV/m +- 5 %\"",
            "`meter.accuracy`",
        ),
    ] {
        let (_d, p) = temp_yaml(&text);
        websigma()
            .arg("check")
            .arg(&p)
            .assert()
            .code(2)
            .stderr(predicate::str::contains(path))
            .stderr(predicate::str::contains(
                "carries a tolerance (±), which only the densities of `charge:` entries",
            ))
            .stderr(predicate::str::contains(extra));
    }
}

/// `plan --apply` with readings rewrites the `charge:` block: an entry the
/// readings do not replace keeps its tolerance (0.5 µC/m² here), the fitted
/// entry has none.
#[test]
fn applied_plan_keeps_the_tolerance_of_an_entry_it_does_not_fit() {
    let text = format!(
        "{}readings:\n  - {{id: R1, span: S1, position: 40 %, distance: 30 mm, side: above, reading: 150 kV/m}}\n",
        PLAN_LINE.replace(
            "    sigma: 4 uC/m^2\n",
            "    sigma: 4 uC/m^2 ± 20 %\n  - at: A\n    adds: 1 uC/m^2 ± 500 nC/m^2\n"
        )
    );
    assert!(text.contains("adds:"));
    let (d, p) = temp_yaml(&text);
    let out = d.path().join("planned.yaml");
    let run = websigma()
        .arg("plan")
        .arg(&p)
        .args(["--spacing", "500 mm", "--conductors", "off", "--apply"])
        .arg(&out)
        .output()
        .unwrap();
    assert!(
        matches!(run.status.code(), Some(0 | 1)),
        "{}",
        String::from_utf8_lossy(&run.stderr)
    );
    let planned = std::fs::read_to_string(&out).unwrap();
    let tail = &planned[planned.find("\ncharge:   # fitted").expect(&planned)..];
    assert!(tail.contains("adds: 1 uC/m^2 ± 0.5 uC/m^2\n"), "{tail}");
    let applied = parse_line(&planned).unwrap_or_else(|e| panic!("{e}\n{planned}"));
    let kept = applied.charge.iter().find(|c| c.at == "A").unwrap();
    assert!((kept.tolerance - 5e-7).abs() < 1e-19, "{}", kept.tolerance);
    let fitted = applied.charge.iter().find(|c| c.at == "start").unwrap();
    assert_eq!(fitted.tolerance, 0.0);
}
