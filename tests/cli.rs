//! The binary end to end: success cases, output formats, exit codes, and the
//! corpus of bad inputs under `tests/fixtures/bad/`.

use crate::util::{SMALL_LINE, temp_yaml, websigma};
use predicates::prelude::*;
use std::time::Duration;

/// Every file in the bad-input corpus is refused with exit code 2 and one
/// `error:` message containing the text its first line promises
/// (`# expect: ...`), without a panic or a backtrace. The timeout guards
/// against hangs (e.g. YAML alias bombs); it is not a speed assertion.
#[test]
fn bad_input_corpus_is_refused_with_located_messages() {
    let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/bad");
    let mut n = 0;
    for entry in std::fs::read_dir(&dir).unwrap() {
        let path = entry.unwrap().path();
        let text = std::fs::read_to_string(&path).unwrap();
        let expect = text
            .lines()
            .next()
            .and_then(|l| l.strip_prefix("# expect: "))
            .unwrap_or_else(|| panic!("{} lacks an `# expect:` first line", path.display()))
            .to_string();
        let out = websigma()
            .arg("check")
            .arg(&path)
            .timeout(Duration::from_secs(20))
            .output()
            .unwrap();
        let stderr = String::from_utf8_lossy(&out.stderr);
        assert_eq!(out.status.code(), Some(2), "{}: {stderr}", path.display());
        assert!(
            stderr.starts_with("error: "),
            "{}: {stderr}",
            path.display()
        );
        assert!(
            stderr.contains(&expect),
            "{}: expected {expect:?} in\n{stderr}",
            path.display()
        );
        assert!(
            !stderr.contains("panicked") && !stderr.contains("stack backtrace"),
            "{stderr}"
        );
        assert_eq!(
            stderr.matches("error:").count(),
            1,
            "one error message: {stderr}"
        );
        // `assess` refuses what `check` refuses, with the same message, and
        // writes nothing.
        let out_dir = tempfile::tempdir().unwrap();
        let assess = websigma()
            .arg("assess")
            .arg(&path)
            .arg("--out")
            .arg(out_dir.path())
            .timeout(Duration::from_secs(20))
            .output()
            .unwrap();
        assert_eq!(assess.status.code(), Some(2), "{}", path.display());
        assert_eq!(
            String::from_utf8_lossy(&assess.stderr),
            stderr,
            "{}: assess and check disagree",
            path.display()
        );
        assert_eq!(
            std::fs::read_dir(out_dir.path()).unwrap().count(),
            0,
            "{}: a refused line leaves no report",
            path.display()
        );
        n += 1;
    }
    assert!(n >= 60, "corpus has {n} files");
}

#[test]
fn check_prints_spans_and_exits_zero() {
    let (_d, p) = temp_yaml(SMALL_LINE);
    websigma()
        .arg("check")
        .arg(&p)
        .assert()
        .code(0)
        .stdout(predicate::str::contains("S2    A → B"))
        .stdout(predicate::str::contains("valid:"))
        .stdout(predicate::str::contains(
            "the straight spans are integrated; the charge on a wrap arc is bound",
        ))
        // The grounded rollers' induced charge (conductors by default).
        .stdout(predicate::str::contains(
            "conductors (charge induced by the web",
        ));
}

#[test]
fn missing_file_is_an_error_with_the_path() {
    websigma()
        .args(["check", "no/such/file.yaml"])
        .assert()
        .code(2)
        .stderr(predicate::str::contains(
            "reading line description 'no/such/file.yaml'",
        ));
}

#[test]
fn field_json_has_the_documented_shape() {
    let (_d, p) = temp_yaml(SMALL_LINE);
    let out = websigma()
        .arg("field")
        .arg(&p)
        .args([
            "--at",
            "1,0,1.1",
            "--at",
            "1 m,0.2 m,75 mm",
            "--format",
            "json",
            "--contributions",
        ])
        .output()
        .unwrap();
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let pts = v["points"].as_array().unwrap();
    assert_eq!(pts.len(), 2);
    assert_eq!(pts[0]["at"], serde_json::json!([1.0, 0.0, 1.1]));
    assert_eq!(pts[1]["at"][2].as_f64().unwrap(), 0.075);
    let e: Vec<f64> = pts[0]["E"]
        .as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_f64().unwrap())
        .collect();
    let mag = pts[0]["E_magnitude"].as_f64().unwrap();
    assert!((mag - (e[0] * e[0] + e[1] * e[1] + e[2] * e[2]).sqrt()).abs() <= 1e-12 * mag);
    // Above a positively charged horizontal span the field points up.
    assert!(e[2] > 0.0);
    // The contributions add up to the total (superposition): three spans
    // and the charge induced on the grounded rollers (conductors are in by
    // default).
    let c = pts[0]["contributions"].as_array().unwrap();
    assert_eq!(c.len(), 4);
    assert!(c[3]["span"].as_str().unwrap().contains("conductors"));
    let vsum: f64 = c.iter().map(|x| x["V"].as_f64().unwrap()).sum();
    let v0 = pts[0]["V"].as_f64().unwrap();
    assert!((vsum - v0).abs() <= 1e-12 * v0.abs());
    assert_eq!(c[1]["span"], "S2");
}

#[test]
fn field_csv_and_table_agree_with_json() {
    let (_d, p) = temp_yaml(SMALL_LINE);
    let json = websigma()
        .arg("field")
        .arg(&p)
        .args(["--at", "0.5,0.1,1.2", "--format", "json"])
        .output()
        .unwrap();
    let v: serde_json::Value = serde_json::from_slice(&json.stdout).unwrap();
    let csv = websigma()
        .arg("field")
        .arg(&p)
        .args(["--at", "0.5,0.1,1.2", "--format", "csv"])
        .output()
        .unwrap();
    let csv = String::from_utf8(csv.stdout).unwrap();
    let mut lines = csv.lines();
    assert!(
        lines
            .next()
            .unwrap()
            .starts_with("id,x_m,y_m,z_m,Ex_V_per_m")
    );
    let row: Vec<&str> = lines.next().unwrap().split(',').collect();
    let vj = v["points"][0]["V"].as_f64().unwrap();
    assert_eq!(row[8].parse::<f64>().unwrap(), vj);
    websigma()
        .arg("field")
        .arg(&p)
        .args(["--at", "0.5,0.1,1.2"])
        .assert()
        .code(0)
        .stdout(predicate::str::contains("|E|"))
        .stdout(predicate::str::contains("assumptions:"));
}

#[test]
fn field_defaults_to_the_lines_points_of_interest() {
    let (_d, p) = temp_yaml(SMALL_LINE);
    websigma()
        .arg("field")
        .arg(&p)
        .assert()
        .code(0)
        .stdout(predicate::str::contains("M "));
}

#[test]
fn field_refuses_points_on_the_web_and_bad_coordinates() {
    let (_d, p) = temp_yaml(SMALL_LINE);
    websigma()
        .arg("field")
        .arg(&p)
        .args(["--at", "1,0,1.05"])
        .assert()
        .code(2)
        .stderr(predicate::str::contains("--at #1"))
        .stderr(predicate::str::contains("on the web"));
    websigma()
        .arg("field")
        .arg(&p)
        .args(["--at", "1,0"])
        .assert()
        .code(2)
        .stderr(predicate::str::contains("expected three coordinates"));
    websigma()
        .arg("field")
        .arg(&p)
        .args(["--at", "1,0,2 kV"])
        .assert()
        .code(2)
        .stderr(predicate::str::contains("z coordinate: expected a length"));
    websigma()
        .arg("field")
        .arg(&p)
        .args(["--at", "0,0,1", "--tolerance", "0"])
        .assert()
        .code(2)
        .stderr(predicate::str::contains(
            "relative tolerance must be between",
        ));
}

#[test]
fn field_streams_a_point_file_in_order() {
    let (d, p) = temp_yaml(SMALL_LINE);
    let csv = d.path().join("pts.csv");
    let mut s = String::from("id,x,y,z\n");
    for i in 0..9000 {
        s.push_str(&format!(
            "p{i},{},{},{}\n",
            -0.5 + i as f64 * 3e-4,
            0.0,
            1.3
        ));
    }
    std::fs::write(&csv, s).unwrap();
    let out = websigma()
        .arg("field")
        .arg(&p)
        .arg("--points")
        .arg(&csv)
        .args(["--format", "json"])
        .output()
        .unwrap();
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let pts = v["points"].as_array().unwrap();
    assert_eq!(pts.len(), 9000);
    assert_eq!(pts[4097]["id"], "p4097");
    assert!((pts[8999]["at"][0].as_f64().unwrap() - (-0.5 + 8999.0 * 3e-4)).abs() < 1e-12);
}

#[test]
fn point_file_errors_name_the_file_line_and_column() {
    let (d, p) = temp_yaml(SMALL_LINE);
    let csv = d.path().join("pts.csv");
    std::fs::write(&csv, "x,y,z\n1,0,1.3\n1,zero,1.3\n").unwrap();
    websigma()
        .arg("field")
        .arg(&p)
        .arg("--points")
        .arg(&csv)
        .assert()
        .code(2)
        .stderr(predicate::str::contains("pts.csv:3: column y"));
    std::fs::write(&csv, "a,b\n1,2\n").unwrap();
    websigma()
        .arg("field")
        .arg(&p)
        .arg("--points")
        .arg(&csv)
        .assert()
        .code(2)
        .stderr(predicate::str::contains(
            "expected a header with columns x,y,z",
        ));
}

#[test]
fn warnings_go_to_stderr_and_do_not_fail() {
    // 40 µC/m² with edges k = 0.5 peaks at 60 µC/m², above 2·ε0·Eb ≈ 53 µC/m².
    let text = SMALL_LINE
        .replace("sigma: 5 uC/m^2", "sigma: 40 uC/m^2")
        .replace("charge:", "across_profile: {shape: edges, k: 0.5}\ncharge:");
    let (_d, p) = temp_yaml(&text);
    websigma()
        .arg("check")
        .arg(&p)
        .assert()
        .code(0)
        .stderr(predicate::str::contains("warning: charge[0].sigma"))
        .stderr(predicate::str::contains("above 2·ε0·Eb = 53.13 µC/m²"));
}

#[test]
fn demo_runs_end_to_end_and_writes_its_report() {
    let d = tempfile::tempdir().unwrap();
    let out = websigma()
        .arg("demo")
        .arg("--out")
        .arg(d.path())
        .output()
        .unwrap();
    let stdout = String::from_utf8_lossy(&out.stdout);
    // A demonstration exits 0 once the report is written, even though it fails limits.
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    assert!(stdout.contains("invented example"));
    assert!(stdout.contains("S12"));
    assert!(stdout.contains("verdict: FAIL"));
    assert!(stdout.contains("caution: Estimates from a model are not measurements"));
    let dirs: Vec<_> = std::fs::read_dir(d.path())
        .unwrap()
        .map(|e| e.unwrap().path())
        .collect();
    assert_eq!(dirs.len(), 1);
    for f in [
        "report.md",
        "report.html",
        "results.csv",
        "points.csv",
        "spans.csv",
        "results.json",
        "side_view.png",
        "field_map.png",
        "charge_along_path.png",
        "manifest.json",
    ] {
        assert!(dirs[0].join(f).is_file(), "missing {f}");
    }
    assert!(stdout.contains(&dirs[0].display().to_string()));
}

#[test]
fn profiles_lists_and_shows_sources() {
    websigma()
        .arg("profiles")
        .assert()
        .code(0)
        .stdout(predicate::str::contains("ex-zone-1"))
        .stdout(predicate::str::contains("operator-shock"));
    websigma()
        .args(["profiles", "electronics"])
        .assert()
        .code(0)
        .stdout(predicate::str::contains("sources:"))
        .stdout(predicate::str::contains("verify"));
    websigma().args(["profiles", "nope"]).assert().code(2);
}

#[test]
fn help_and_version_work() {
    websigma()
        .arg("--help")
        .assert()
        .code(0)
        .stdout(predicate::str::contains("field"));
    websigma()
        .arg("--version")
        .assert()
        .code(0)
        .stdout(predicate::str::contains("websigma"));
    websigma().arg("nonsense").assert().code(2);
}
