//! Reports: writer snapshots (time and hashes normalised), the HTML's
//! sections and self-containment, the PNGs, the folder discipline, and the
//! `assess` exit codes end to end.

use crate::util::{temp_yaml, websigma};
use websigma::assess::with_air_limit;
use websigma::field::{FieldMap, Scene, SolverSettings};
use websigma::model::parse_line;
use websigma::report::build::{Report, build_report};
use websigma::report::{Writer, csv, json, markdown::MarkdownWriter};

/// A small line with a zone, an operator and electronics (invented).
pub const ZONE_LINE: &str = r#"
line: Snapshot test line
web:
  material: test film
  width: 1.0 m
  thickness: 40 um
  relative_permittivity: 3
  relaxation_time: 20 s
  speed: 2 m/s
  breakdown_strength: 150 kV/mm
ground_plane: 0 m
rollers:
  - {id: A, center: [0 m, 1 m], diameter: 100 mm, earthing: grounded}
  - {id: B, center: [2 m, 1 m], diameter: 100 mm, earthing: isolated}
path:
  - point: [-1 m, 1.05 m]
    id: IN
  - {roller: A, wrap: cw}
  - {roller: B, wrap: cw}
  - point: [3 m, 1.05 m]
    id: OUT
across_profile: {shape: edges, k: 0.5}
charge:
  - at: start
    sigma: 2 uC/m^2
  - at: A
    adds: 1 uC/m^2
points:
  - {id: M1, kind: meter, at: [1 m, 0 m, 1.075 m]}
  - {id: OP1, kind: operator, at: [1 m, 1.2 m, 1.0 m]}
  - {id: EL1, kind: electronics, at: [2.5 m, 0.3 m, 1.2 m]}
zones:
  - id: Z1
    name: test enclosure
    zone: 1
    gas_group: IIA
    mie: 0.24 mJ
    box: {from: [0.5 m, -1.5 m, 0.5 m], to: [2.2 m, 1.5 m, 1.6 m]}
readings:
  - {id: MR1, span: A-B, position: 50 %, distance: 25 mm, side: above, reading: 90 kV/m}
assess: [ex-zone-1, operator-shock, electronics]
"#;

/// Everything the report needs, computed the way `assess` does.
struct Pipeline {
    profiles: Vec<websigma::assess::ThresholdProfile>,
    readings: websigma::readings::ReadingsResult,
    charge: websigma::charge::ChargeProfile,
    scene: Scene,
    points: FieldMap,
    assessment: websigma::assess::Assessment,
    uncertainty: websigma::uncertainty::Uncertainty,
}

fn pipeline(line: &websigma::model::Line) -> Pipeline {
    pipeline_with(line, SolverSettings::default())
}

fn pipeline_with(line: &websigma::model::Line, solver: SolverSettings) -> Pipeline {
    let profiles = with_air_limit(
        line.assess
            .iter()
            .map(|n| websigma::assess::profile::load_profile(n).unwrap())
            .collect(),
    );
    let websigma::pipeline::Analysis { scene, evaluation } =
        websigma::pipeline::analyse(line, &profiles, &websigma::pipeline::Settings::new(solver))
            .unwrap();
    let websigma::pipeline::Evaluation {
        readings,
        charge,
        points,
        assessment,
        uncertainty,
    } = evaluation;
    Pipeline {
        profiles,
        readings,
        charge,
        scene,
        points,
        assessment,
        uncertainty,
    }
}

fn report() -> Report {
    let line = parse_line(ZONE_LINE).unwrap();
    let Pipeline {
        profiles,
        readings,
        charge,
        points,
        assessment: a,
        uncertainty,
        ..
    } = pipeline(&line);
    let now = chrono::DateTime::parse_from_rfc3339("2026-01-02T03:04:05Z")
        .unwrap()
        .with_timezone(&chrono::Utc);
    let mut r = build_report(
        &line,
        "zone_line.yaml",
        ZONE_LINE,
        &charge,
        &readings,
        &points,
        &a,
        &profiles,
        SolverSettings::default(),
        Vec::new(),
        now,
    );
    r.uncertainty = uncertainty;
    r
}

/// Replaces SHA-256 hex strings and the tool version, which change without
/// the report's content changing.
fn normalise(s: &str) -> String {
    let mut out = String::new();
    let mut run = String::new();
    for c in s.chars() {
        if c.is_ascii_hexdigit() && !c.is_ascii_uppercase() {
            run.push(c);
        } else {
            out.push_str(if run.len() == 64 { "<sha256>" } else { &run });
            run.clear();
            out.push(c);
        }
    }
    out.push_str(if run.len() == 64 { "<sha256>" } else { &run });
    out.replace(env!("CARGO_PKG_VERSION"), "<version>")
}

#[test]
fn markdown_report_snapshot() {
    let md = String::from_utf8(MarkdownWriter.render(&report()).unwrap()).unwrap();
    insta::assert_snapshot!("report_md", normalise(&md));
}

#[test]
fn csv_snapshots() {
    let r = report();
    insta::assert_snapshot!("results_csv", normalise(&csv::findings_csv(&r)));
    insta::assert_snapshot!("points_csv", normalise(&csv::points_csv(&r)));
    insta::assert_snapshot!("spans_csv", normalise(&csv::spans_csv(&r)));
}

#[test]
fn json_snapshot_and_schema() {
    let r = report();
    let text = json::results_json(&r);
    insta::assert_snapshot!("results_json", normalise(&text));
    let v: serde_json::Value = serde_json::from_str(&text).unwrap();
    assert!(["pass", "warn", "fail"].contains(&v["verdict"].as_str().unwrap()));
    for f in v["findings"].as_array().unwrap() {
        for k in [
            "rule",
            "subject",
            "value",
            "unit",
            "limit",
            "margin",
            "verdict",
            "source",
            "confidence",
        ] {
            assert!(!f[k].is_null(), "finding lacks {k}: {f}");
        }
        let (val, lim, m) = (
            f["value"].as_f64().unwrap(),
            f["limit"].as_f64().unwrap(),
            f["margin"].as_f64().unwrap(),
        );
        assert!(
            (m - val / lim).abs() <= 1e-12 * m.abs().max(1e-300),
            "margin = value / limit"
        );
    }
    for p in v["points"].as_array().unwrap() {
        for k in ["id", "kind", "at", "E", "E_magnitude", "V"] {
            assert!(!p[k].is_null(), "point lacks {k}");
        }
    }
    for s in v["spans"].as_array().unwrap() {
        for k in ["id", "sigma_start", "sigma_end", "length"] {
            assert!(!s[k].is_null(), "span lacks {k}");
        }
    }
}

#[test]
fn html_has_every_section_and_no_external_reference() {
    let line = parse_line(ZONE_LINE).unwrap();
    let (d, p) = temp_yaml(ZONE_LINE);
    let out = d.path().join("out");
    let run = websigma()
        .arg("assess")
        .arg(&p)
        .arg("--out")
        .arg(&out)
        .args(["--map-resolution", "40"])
        .output()
        .unwrap();
    assert!(
        matches!(run.status.code(), Some(0) | Some(1)),
        "{}",
        String::from_utf8_lossy(&run.stderr)
    );
    let dirs: Vec<_> = std::fs::read_dir(&out)
        .unwrap()
        .map(|e| e.unwrap().path())
        .collect();
    assert_eq!(dirs.len(), 1);
    let html = std::fs::read_to_string(dirs[0].join("report.html")).unwrap();
    for s in [
        "Scope",
        "Summary",
        "Method",
        "Inputs",
        "Results",
        "Findings",
        "Uncertainty",
        "Span contributions at the worst points",
        "Plots",
        "Recommendations",
        "Limitations",
        "Cautions",
        "References",
        "Sign-off",
    ] {
        assert!(
            html.contains(&format!("<h2>{s}</h2>")),
            "missing section {s}"
        );
    }
    assert!(html.contains(&line.title));
    for bad in ["http://", "https://", "<script", "<link", "@import", "url("] {
        assert!(!html.contains(bad), "external reference {bad}");
    }
    // Side view, field map, charge along the path, and the sensitivity of
    // the worst findings (the line's reading gives them ranges).
    assert_eq!(html.matches("src=\"data:image/png;base64,").count(), 4);
    assert!(dirs[0].join("sensitivity.png").is_file());
    // Every file the manifest lists exists with that hash.
    let m: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(dirs[0].join("manifest.json")).unwrap())
            .unwrap();
    for f in m["outputs"].as_array().unwrap() {
        let bytes = std::fs::read(dirs[0].join(f["file"].as_str().unwrap())).unwrap();
        assert_eq!(
            f["sha256"].as_str().unwrap(),
            websigma::report::build::sha256_hex(&bytes)
        );
    }
    assert_eq!(
        m["inputs"][0]["sha256"].as_str().unwrap(),
        websigma::report::build::sha256_hex(ZONE_LINE.as_bytes())
    );
}

/// PNG signature and IHDR (ISO/IEC 15948): width and height are the
/// big-endian u32s at bytes 16..24.
fn png_size(bytes: &[u8]) -> (u32, u32) {
    assert_eq!(&bytes[..8], b"\x89PNG\r\n\x1a\n");
    assert_eq!(&bytes[12..16], b"IHDR");
    let be = |i: usize| u32::from_be_bytes([bytes[i], bytes[i + 1], bytes[i + 2], bytes[i + 3]]);
    (be(16), be(20))
}

#[test]
fn pngs_decode_with_the_expected_size_and_are_not_blank() {
    let (d, p) = temp_yaml(ZONE_LINE);
    let out = d.path().join("out");
    websigma()
        .arg("assess")
        .arg(&p)
        .arg("--out")
        .arg(&out)
        .args(["--map-resolution", "40"])
        .output()
        .unwrap();
    let dir = crate::util::only_report(&out);
    let line = parse_line(ZONE_LINE).unwrap();
    let (xr, zr) = websigma::report::figures::extent(&line);
    let h = websigma::report::figures::picture_height(xr, zr, 1400);
    assert!(h < 800, "a flat line gets a flat picture: {h}");
    for (name, w, h) in [
        ("side_view.png", 1400, h),
        ("field_map.png", 1400, h),
        ("charge_along_path.png", 1400, 700),
    ] {
        let bytes = std::fs::read(dir.join(name)).unwrap();
        assert_eq!(png_size(&bytes), (w, h), "{name}");
        // A blank image compresses to a few kB; a drawn one is far larger.
        assert!(
            bytes.len() > 20_000,
            "{name} looks blank: {} bytes",
            bytes.len()
        );
    }
}

#[test]
fn two_runs_give_two_folders() {
    let (d, p) = temp_yaml(ZONE_LINE);
    let out = d.path().join("out");
    for _ in 0..2 {
        websigma()
            .arg("assess")
            .arg(&p)
            .arg("--out")
            .arg(&out)
            .args(["--map-resolution", "20"])
            .output()
            .unwrap();
    }
    let n = std::fs::read_dir(&out)
        .unwrap()
        .filter(|e| e.as_ref().unwrap().path().is_dir())
        .count();
    assert_eq!(n, 2);
}

#[test]
fn assess_exit_codes() {
    // Fails: the zone-1 web-charge limit is exceeded on this line.
    let (d, p) = temp_yaml(ZONE_LINE);
    let out = d.path().join("out");
    websigma()
        .arg("assess")
        .arg(&p)
        .arg("--out")
        .arg(&out)
        .args(["--map-resolution", "20"])
        .assert()
        .code(1);
    // Passes: an uncharged web checked against the air limit only.
    let calm = ZONE_LINE
        .replace("sigma: 2 uC/m^2", "sigma: 0 uC/m^2")
        .replace("adds: 1 uC/m^2", "adds: 0 uC/m^2")
        .replace(
            "assess: [ex-zone-1, operator-shock, electronics]",
            "assess: []",
        )
        .replace("earthing: isolated", "earthing: grounded");
    let (_d2, p2) = temp_yaml(&calm);
    websigma()
        .arg("assess")
        .arg(&p2)
        .arg("--out")
        .arg(&out)
        .args(["--map-resolution", "20"])
        .assert()
        .code(0);
    // Error: an unknown profile, before anything is written.
    let before = std::fs::read_dir(&out).unwrap().count();
    websigma()
        .arg("assess")
        .arg(&p)
        .arg("--out")
        .arg(&out)
        .args(["--profile", "no-such-profile"])
        .assert()
        .code(2)
        .stderr(predicates::str::contains("no-such-profile"));
    assert_eq!(std::fs::read_dir(&out).unwrap().count(), before);
}

/// The sample pictures in `reports/sample/` shown by the README are the
/// demo's, byte for byte. Regenerate them with
/// `WEBSIGMA_UPDATE_SAMPLE=1 cargo test sample_pictures`. The demo's
/// settings: conductors solved on the default panels.
#[test]
fn sample_pictures_are_current() {
    let line = parse_line(websigma::DEMO_LINE).unwrap();
    let Pipeline {
        profiles,
        readings,
        charge,
        scene,
        points,
        assessment: a,
        uncertainty,
    } = pipeline_with(&line, SolverSettings::default().with_default_conductors());
    let model = scene.web(&charge);
    // The demo's own resolution, so the sample is exactly what `demo` writes.
    let plots = websigma::report::pictures::make_plots(
        &line,
        &charge,
        &readings,
        &model,
        &profiles,
        &a,
        websigma::app::DEMO_MAP_RESOLUTION,
    )
    .unwrap();
    let mut pictures: Vec<(String, Vec<u8>)> = plots
        .into_iter()
        .filter(|p| p.file != "charge_along_path.png")
        .map(|p| (p.file, p.png))
        .collect();
    // The sensitivity of the demo's worst findings to its readings.
    let mut r = build_report(
        &line,
        "demo.yaml",
        websigma::DEMO_LINE,
        &charge,
        &readings,
        &points,
        &a,
        &profiles,
        SolverSettings::default().with_default_conductors(),
        Vec::new(),
        chrono::Utc::now(),
    );
    r.uncertainty = uncertainty;
    let sens = websigma::report::pictures::sensitivity_plot(&r)
        .unwrap()
        .expect("the demo's findings have ranges");
    pictures.push((sens.file, sens.png));
    let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("reports/sample");
    for (name, bytes) in pictures {
        let path = dir.join(name);
        if std::env::var_os("WEBSIGMA_UPDATE_SAMPLE").is_some() {
            std::fs::create_dir_all(&dir).unwrap();
            std::fs::write(&path, &bytes).unwrap();
        }
        let committed = std::fs::read(&path).unwrap_or_default();
        assert!(
            committed == bytes,
            "{} is out of date: run WEBSIGMA_UPDATE_SAMPLE=1 cargo test sample_pictures",
            path.display()
        );
    }
}
