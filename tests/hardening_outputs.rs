//! Outputs that cannot be forged, half-written or misread (issue 11, items
//! 2, 4, 5 and 10): report.md and report.html escape every text that came
//! from the user; `plan --apply` writes its file whole or not at all and
//! never over another; CSV cells of user text cannot become spreadsheet
//! formulas; report folders of killed runs are cleaned up and every report's
//! id equals its folder's name.

use crate::reports::ZONE_LINE;
use crate::util::{temp_yaml, websigma};
use predicates::prelude::*;
use std::path::{Path, PathBuf};
use websigma::assess::with_air_limit;
use websigma::field::SolverSettings;
use websigma::model::parse_line;
use websigma::report::build::{Plot, Report, build_report};
use websigma::report::html::HtmlWriter;
use websigma::report::markdown::MarkdownWriter;
use websigma::report::{Writer, csv, folder, unfinished};

/// The report of [`ZONE_LINE`] as `assess` builds it, at a fixed time.
fn report() -> Report {
    let line = parse_line(ZONE_LINE).unwrap();
    let profiles = with_air_limit(
        line.assess
            .iter()
            .map(|n| websigma::assess::profile::load_profile(n).unwrap())
            .collect(),
    );
    let a = websigma::pipeline::analyse(
        &line,
        &profiles,
        &websigma::pipeline::Settings::new(SolverSettings::default()),
    )
    .unwrap();
    let e = a.evaluation;
    let now = chrono::DateTime::parse_from_rfc3339("2026-01-02T03:04:05Z")
        .unwrap()
        .with_timezone(&chrono::Utc);
    build_report(
        &line,
        "zone_line.yaml",
        ZONE_LINE,
        &e.charge,
        &e.readings,
        &e.points,
        &e.assessment,
        &profiles,
        SolverSettings::default(),
        Vec::new(),
        now,
    )
}

/// A title that tries to forge a passing verdict and run a script.
const FORGED: &str =
    "Demo\n\n## Summary verdict\n\n**PASS**\n<script>alert(1)</script><img src=x onerror=alert(1)>";

/// Raw HTML that must never reach a report.
const RAW_HTML: [&str; 4] = ["<script", "<img", "<iframe", "<svg"];

/// The report with user texts an input check should refuse, put in
/// directly (defence in depth: the writers must not rely on the check).
fn forged_report() -> Report {
    let mut r = report();
    r.meta.title = FORGED.to_string();
    r.line.title = FORGED.to_string();
    r.line.points[0].id = "P|1".into();
    r.points[0].point.id = "P|1".into();
    r.line.zones[0].name = Some("<iframe src=x>\r\n# zone".into());
    r.line.rollers[0].id = "1. <svg onload=alert(1)>".into();
    r.findings[0].subject = "S|x\n- [ ] <script>".into();
    r.findings[0].note = "> **quoted** `code` ~~gone~~".into();
    r.profiles[0].title = "<script>x</script>\n\n## Summary".into();
    r.profiles[0].origin = "my|profile.yaml".into();
    r.references[0] = "<img src=x onerror=alert(2)> [link](javascript:alert(1))".into();
    r.recommendations.push("\n## Summary\n**PASS**".into());
    r
}

/// Splits a GitHub table row into its cells (a `\|` is not a divider).
fn cells(row: &str) -> Vec<String> {
    let inner = row.trim().trim_start_matches('|').trim_end_matches('|');
    let mut out = vec![String::new()];
    let mut escaped = false;
    for c in inner.chars() {
        if c == '|' && !escaped {
            out.push(String::new());
        } else {
            out.last_mut().unwrap().push(c);
        }
        escaped = c == '\\' && !escaped;
    }
    out
}

#[test]
fn markdown_report_cannot_be_forged() {
    let md = String::from_utf8(MarkdownWriter.render(&forged_report()).unwrap()).unwrap();
    let headings: Vec<&str> = md.lines().filter(|l| l.starts_with('#')).collect();
    assert_eq!(
        headings
            .iter()
            .filter(|l| l.starts_with("## Summary"))
            .count(),
        1,
        "{headings:#?}"
    );
    assert_eq!(headings.iter().filter(|l| l.starts_with("# ")).count(), 1);
    assert!(headings.contains(&"## Summary"), "{headings:#?}");
    // Every heading is one of ours: "# Electrostatic assessment — ..." or a
    // section title without user text.
    for h in &headings {
        assert!(
            h.starts_with("# Electrostatic assessment — Demo")
                || !h.contains("Demo") && !h.contains("PASS"),
            "{h}"
        );
    }
    let lower = md.to_lowercase();
    for tag in RAW_HTML {
        assert!(!lower.contains(tag), "raw {tag} in report.md");
    }
    assert!(!md.contains("**PASS**"), "an unescaped bold PASS");
    assert!(!md.contains("[link]("), "a live link");
    // The real verdict is there, once.
    assert_eq!(md.matches("**Overall verdict:").count(), 1);
    assert!(md.contains("**Overall verdict: FAIL"), "the line fails");
    // No line starts a block from user text: no list item, quote or
    // numbered item beyond ours.
    for l in md.lines() {
        assert!(
            !l.starts_with('>') || l.starts_with("> **Caution.**"),
            "{l}"
        );
        assert!(!l.starts_with("1."), "{l}");
        assert!(!l.starts_with("- - "), "{l}");
    }
    // A cell holding `|` stays one cell: the points table keeps 4 columns.
    let header = md.lines().find(|l| l.starts_with("| id | kind |")).unwrap();
    let row = md.lines().find(|l| l.starts_with("| P\\|1 |")).unwrap();
    assert_eq!(cells(header).len(), 4, "{header}");
    assert_eq!(cells(row).len(), 4, "{row}");
    // Every table row has as many cells as its header.
    let mut width = None;
    for l in md.lines() {
        if l.starts_with('|') {
            let n = cells(l).len();
            match width {
                None => width = Some(n),
                Some(w) => assert_eq!(n, w, "{l}"),
            }
        } else {
            width = None;
        }
    }
    // The texts are still there to read, escaped.
    assert!(md.contains("&lt;script&gt;alert(1)&lt;/script&gt;"));
    assert!(md.contains("\\*\\*PASS\\*\\*"));
}

#[test]
fn html_report_escapes_text_and_attributes() {
    let mut r = forged_report();
    r.plots.push(Plot {
        file: "side_view.png".into(),
        caption: "x\" onerror=\"alert(1)".into(),
        png: vec![0x89, b'P', b'N', b'G'],
    });
    let html = String::from_utf8(HtmlWriter.render(&r).unwrap()).unwrap();
    let lower = html.to_lowercase();
    for tag in ["<script", "<iframe", "<svg"] {
        assert!(!lower.contains(tag), "raw {tag} in report.html");
    }
    // The one image is ours, its alt text closed where we close it.
    assert_eq!(lower.matches("<img").count(), 1);
    assert!(!html.contains("\" onerror"), "an attribute broke out");
    assert!(html.contains("alt=\"x&quot; onerror=&quot;alert(1)\""));
    assert!(html.contains("&lt;script&gt;alert(1)&lt;/script&gt;"));
    assert_eq!(lower.matches("<h2>summary</h2>").count(), 1);
}

/// Every CSV writer neutralises user text that a spreadsheet would read as
/// a formula (OWASP, CSV Injection): a single quote in front, the cell
/// quoted; numbers, negative ones included, stay numbers.
#[test]
fn csv_cells_of_user_text_are_not_formulas() {
    const IDS: [&str; 5] = ["=1+1", "+A", "-B", "@C", "\tD"];
    let mut r = report();
    let template = r.points[0].clone();
    r.points = IDS
        .iter()
        .map(|id| {
            let mut p = template.clone();
            p.point.id = id.to_string();
            p.e[0] = -1234.5;
            p
        })
        .collect();
    for (f, id) in r.findings.iter_mut().zip(IDS) {
        f.subject = id.to_string();
        f.note = format!("{id} note");
    }
    r.readings[0].id = "=HYPERLINK(\"http://x\")".into();
    let text = csv::points_csv(&r);
    for id in IDS {
        assert!(text.contains(&format!("\"'{id}\"")), "{id:?} in\n{text}");
    }
    let mut rd = ::csv::Reader::from_reader(text.as_bytes());
    let rows: Vec<::csv::StringRecord> = rd.records().map(|x| x.unwrap()).collect();
    assert_eq!(rows.len(), IDS.len());
    for (row, id) in rows.iter().zip(IDS) {
        assert_eq!(&row[0], format!("'{id}"));
        assert_eq!(row[5].parse::<f64>().unwrap(), -1234.5, "Ex stays a number");
    }
    let findings = csv::findings_csv(&r);
    let mut rd = ::csv::Reader::from_reader(findings.as_bytes());
    let head = rd.headers().unwrap().clone();
    let subject = head.iter().position(|h| h == "subject").unwrap();
    let note = head.iter().position(|h| h == "note").unwrap();
    let value = head.iter().position(|h| h == "value").unwrap();
    for (row, id) in rd.records().map(|x| x.unwrap()).zip(IDS) {
        assert_eq!(&row[subject], format!("'{id}"));
        assert_eq!(&row[note], format!("'{id} note"));
        row[value].parse::<f64>().unwrap();
    }
    let readings = csv::readings_csv(&r.readings);
    let mut rd = ::csv::Reader::from_reader(readings.as_bytes());
    let first = rd.records().next().unwrap().unwrap();
    assert_eq!(&first[0], "'=HYPERLINK(\"http://x\")");
    // Span names, in spans.csv and in the field CSV's header.
    r.spans[0].row.name = "-S1".into();
    let spans = csv::spans_csv(&r);
    let mut rd = ::csv::Reader::from_reader(spans.as_bytes());
    assert_eq!(&rd.records().next().unwrap().unwrap()[0], "'-S1");
    let header = csv::field_header(&["@S".to_string()], true);
    let mut rd = ::csv::ReaderBuilder::new()
        .has_headers(false)
        .from_reader(header.as_bytes());
    let h = rd.records().next().unwrap().unwrap();
    assert_eq!(&h[9], "'@S_Ex_V_per_m");
    // A field row of a point file's id.
    let req = websigma::report::PointRequest {
        id: Some("+cmd".into()),
        at: [1.0, 0.0, 1.0],
    };
    let f = websigma::field::PointField {
        at: [-1.0, 0.0, 1.0],
        e: [-2.0, 0.0, 3.0],
        v: -5.0,
        contributions: Vec::new(),
    };
    let row = csv::field_row(&req, &f);
    assert!(row.starts_with("\"'+cmd\",-1.0,"), "{row}");
}

/// The plan's CSV goes through the same cell function.
#[test]
fn plan_csv_neutralises_span_names() {
    let mut line = parse_line(PLAN_LINE).unwrap();
    let profiles = with_air_limit(vec![
        websigma::assess::profile::load_profile("operator-shock").unwrap(),
    ]);
    let scene =
        websigma::field::Scene::new(&line, SolverSettings::default().without_conductors()).unwrap();
    let mut st = websigma::plan::PlanSettings::new();
    st.spacing = 0.5;
    st.max_bars = 1;
    let plan = websigma::plan::plan(&line, &profiles, &st, &scene, &|_, _| {}).unwrap();
    for s in &mut line.path.spans {
        s.name = format!("={}", s.name);
    }
    let text = csv::plan_csv(&plan, &line);
    let mut rd = ::csv::Reader::from_reader(text.as_bytes());
    let head = rd.headers().unwrap().clone();
    let span = head.iter().position(|h| h == "span").unwrap();
    let rows: Vec<_> = rd.records().map(|x| x.unwrap()).collect();
    assert!(!rows.is_empty());
    for row in rows.iter().filter(|r| !r[span].is_empty()) {
        assert!(row[span].starts_with("'="), "{row:?}");
    }
}

/// A charged web passing an operator; one bar makes it pass (invented).
const PLAN_LINE: &str = r#"
line: Apply test line
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
  - at: A
    adds: 2 uC/m^2
points:
  - {id: OP1, kind: operator, at: [3 m, 0.8 m, 1.2 m]}
  - {id: OP2, kind: operator, at: [1 m, 0.8 m, 1.2 m]}
assess: [operator-shock]
"#;

/// The names in a folder, sorted.
fn names(d: &Path) -> Vec<String> {
    let mut v: Vec<String> = std::fs::read_dir(d)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    v.sort();
    v
}

fn plan_apply(line: &Path, out: &Path) -> assert_cmd::assert::Assert {
    websigma()
        .arg("plan")
        .arg(line)
        .args(["--spacing", "500 mm", "--conductors", "off", "--apply"])
        .arg(out)
        .assert()
}

#[test]
fn apply_writes_the_whole_file_and_nothing_else() {
    let (d, p) = temp_yaml(PLAN_LINE);
    let out = d.path().join("planned.yaml");
    // An unfinished file of a dead process (pid above any pid_max) is
    // removed; one of this live process is kept.
    let dead = d
        .path()
        .join(".websigma-unfinished-pid4000000-0-planned.yaml");
    let live = d.path().join(format!(
        ".websigma-unfinished-pid{}-99-other.yaml",
        std::process::id()
    ));
    std::fs::write(&dead, "line: half").unwrap();
    std::fs::write(&live, "line: half").unwrap();
    plan_apply(&p, &out).code(predicate::in_iter([0, 1]));
    let text = std::fs::read_to_string(&out).unwrap();
    assert!(text.ends_with('\n'));
    assert!(!parse_line(&text).unwrap().eliminators.is_empty());
    let mut expected = vec![
        "line.yaml".to_string(),
        "planned.yaml".to_string(),
        live.file_name().unwrap().to_string_lossy().into_owned(),
    ];
    expected.sort();
    assert_eq!(names(d.path()), expected);
}

#[test]
fn apply_refuses_an_existing_file_and_leaves_nothing() {
    let (d, p) = temp_yaml(PLAN_LINE);
    let out = d.path().join("planned.yaml");
    std::fs::write(&out, "mine\n").unwrap();
    plan_apply(&p, &out)
        .code(2)
        .stderr(predicate::str::contains("--apply: '"))
        .stderr(predicate::str::contains(
            "exists; websigma never overwrites a file",
        ));
    assert_eq!(std::fs::read_to_string(&out).unwrap(), "mine\n");
    assert_eq!(names(d.path()), ["line.yaml", "planned.yaml"]);
}

/// A folder this process cannot create files in: a temporary folder made
/// read-only, or, where the permission bits do not bind this user (root),
/// `/sys`, which refuses new files to everyone.
#[cfg(unix)]
fn read_only_folder() -> (tempfile::TempDir, PathBuf) {
    use std::os::unix::fs::PermissionsExt;
    let d = tempfile::tempdir().unwrap();
    let ro = d.path().join("ro");
    std::fs::create_dir(&ro).unwrap();
    std::fs::set_permissions(&ro, std::fs::Permissions::from_mode(0o555)).unwrap();
    if std::fs::write(ro.join("probe"), b"").is_ok() {
        std::fs::remove_file(ro.join("probe")).unwrap();
        return (d, PathBuf::from("/sys"));
    }
    (d, ro)
}

#[cfg(unix)]
#[test]
fn apply_into_a_read_only_folder_is_an_error_and_leaves_nothing() {
    let (_keep, ro) = read_only_folder();
    let before = names(&ro);
    let (_d, p) = temp_yaml(PLAN_LINE);
    let out = ro.join("planned.yaml");
    plan_apply(&p, &out)
        .code(2)
        .stderr(predicate::str::contains(
            "--apply: cannot create a file in the folder",
        ))
        .stderr(predicate::str::contains(ro.display().to_string()));
    assert_eq!(names(&ro), before);
}

/// Reads `report_id` from a report folder's JSON files and checks the
/// Markdown and HTML name the same id.
fn ids_inside(dir: &Path) -> Vec<String> {
    let mut ids = Vec::new();
    for f in ["results.json", "manifest.json"] {
        let v: serde_json::Value =
            serde_json::from_str(&std::fs::read_to_string(dir.join(f)).unwrap()).unwrap();
        ids.push(v["report_id"].as_str().unwrap().to_string());
    }
    let md = std::fs::read_to_string(dir.join("report.md")).unwrap();
    let row = md.lines().find(|l| l.starts_with("| report id |")).unwrap();
    ids.push(cells(row)[1].trim().replace('\\', ""));
    let html = std::fs::read_to_string(dir.join("report.html")).unwrap();
    let at = html.find("<td>report id</td><td>").unwrap() + "<td>report id</td><td>".len();
    ids.push(html[at..].split('<').next().unwrap().to_string());
    ids
}

/// Two reports of the same line in the same second: two folders, each
/// report's id its own folder's name.
#[test]
fn reports_of_the_same_second_carry_their_folder_names() {
    let d = tempfile::tempdir().unwrap();
    let mut a = report();
    let mut b = report();
    assert_eq!(a.meta.report_id, b.meta.report_id, "same line, same second");
    let da = folder::write_report(d.path(), &mut a).unwrap();
    let db = folder::write_report(d.path(), &mut b).unwrap();
    assert_ne!(da, db);
    for (dir, r) in [(&da, &a), (&db, &b)] {
        let name = dir.file_name().unwrap().to_str().unwrap();
        assert_eq!(r.meta.report_id, name);
        for id in ids_inside(dir) {
            assert_eq!(id, name, "in {}", dir.display());
        }
    }
    assert!(db.to_str().unwrap().ends_with("-2"));
}

/// End to end: back-to-back runs each carry their own folder's name.
#[test]
fn assess_runs_carry_their_folder_names() {
    let (d, p) = temp_yaml(ZONE_LINE);
    let out = d.path().join("out");
    for _ in 0..2 {
        websigma()
            .arg("assess")
            .arg(&p)
            .arg("--out")
            .arg(&out)
            .args(["--map-resolution", "20", "--conductors", "off"])
            .assert()
            .code(1);
    }
    let dirs = names(&out);
    assert_eq!(dirs.len(), 2, "{dirs:?}");
    for n in dirs {
        for id in ids_inside(&out.join(&n)) {
            assert_eq!(id, n);
        }
    }
}

/// A killed run's unfinished folder is removed by the next write when its
/// process is gone, kept while it runs; an unfinished folder of the older
/// naming (`.<id>.partial-<PID>`) too.
#[cfg(target_os = "linux")]
#[test]
fn stale_unfinished_folders_of_dead_processes_are_removed() {
    let d = tempfile::tempdir().unwrap();
    assert!(
        !Path::new("/proc/4000000").exists(),
        "pid 4000000 is running"
    );
    let me = std::process::id();
    let dead = d
        .path()
        .join(".websigma-unfinished-pid4000000-3-line-20260101T000000Z");
    let old = d.path().join(".line-20260101T000000Z.partial-4000000");
    let live = d.path().join(format!(
        ".websigma-unfinished-pid{me}-999-line-20260101T000000Z"
    ));
    let stranger = d.path().join(".notes.partial-4000000");
    for dir in [&dead, &old, &live] {
        std::fs::create_dir(dir).unwrap();
        std::fs::write(dir.join("report.md"), "half").unwrap();
    }
    std::fs::write(&stranger, "a file, not a report folder").unwrap();
    let mut r = report();
    let written = folder::write_report(d.path(), &mut r).unwrap();
    assert!(!dead.exists());
    assert!(!old.exists());
    assert!(live.exists(), "a live process's folder is kept");
    assert!(
        stranger.exists(),
        "only folders of the old naming are removed"
    );
    let mut expected = vec![
        written.file_name().unwrap().to_string_lossy().into_owned(),
        live.file_name().unwrap().to_string_lossy().into_owned(),
        ".notes.partial-4000000".to_string(),
    ];
    expected.sort();
    assert_eq!(names(d.path()), expected);
    // The names say what they are.
    let n = unfinished::name_for("x");
    assert!(
        n.starts_with(&format!(".websigma-unfinished-pid{me}-")),
        "{n}"
    );
}
