//! Inputs read with bounded memory and flags checked at the edge (issue 11,
//! items 6 and 11): devices, pipes and FIFOs as input files, oversize and
//! empty candidate lists, point files read as CSV (quoted commas, doubled
//! columns, long rows), the 1 µm closeness rule, and every bounded flag.
//! Each refusal is exit code 2 with one `error:` message and no backtrace.
//! The timeouts guard against hangs; they are not speed assertions.
// See: #11

use crate::util::{SMALL_LINE, temp_yaml, websigma};
use std::path::{Path, PathBuf};
use std::time::Duration;

/// Generous bound for a command that must not hang.
const HANG: Duration = Duration::from_secs(60);

/// Runs `websigma args…` and checks that it is refused: exit 2, one
/// `error:` line first, no panic and no backtrace; returns stderr.
fn refused(args: &[&str]) -> String {
    refused_with(websigma().args(args))
}

/// [`refused`] for a command already set up (stdin, timeout).
fn refused_with(cmd: &mut assert_cmd::Command) -> String {
    let out = cmd.timeout(HANG).output().unwrap();
    let e = String::from_utf8_lossy(&out.stderr).into_owned();
    assert_eq!(out.status.code(), Some(2), "{e}");
    assert!(e.starts_with("error: "), "{e}");
    assert_eq!(e.matches("error:").count(), 1, "one error message: {e}");
    assert!(
        !e.contains("panicked") && !e.contains("stack backtrace"),
        "{e}"
    );
    e
}

/// A line whose only span runs along z = 1.05 m, from x = 0 to 2 m (1 m
/// wide, no rollers): a point typed 1 µm above it computes at
/// 0.99999999992 µm in binary floating point.
const FLAT_LINE: &str = r#"
line: Flat test line
web:
  width: 1.0 m
  thickness: 50 um
  relative_permittivity: 3
  relaxation_time: 100 s
  speed: 1 m/s
path:
  - point: [0 m, 1.05 m]
    id: IN
  - point: [2 m, 1.05 m]
    id: OUT
charge:
  - at: start
    sigma: 5 uC/m^2
"#;

fn s(p: &Path) -> &str {
    p.to_str().unwrap()
}

/// A file `name` with `text` beside the guard's line file.
fn beside(dir: &tempfile::TempDir, name: &str, text: &[u8]) -> PathBuf {
    let p = dir.path().join(name);
    std::fs::write(&p, text).unwrap();
    p
}

// --- item 6: reads bounded by the bytes actually read ---

#[test]
fn r11_dev_zero_as_line_file_is_refused_at_4_mib() {
    let e = refused(&["check", "/dev/zero"]);
    assert_eq!(
        e,
        "error: line description '/dev/zero' holds more than 4 MiB: a line description is a short YAML file\n"
    );
}

#[test]
fn r11_a_pipe_on_stdin_is_read_up_to_the_limit() {
    // The line description from a pipe: read, as a file would be.
    websigma()
        .args(["check", "/dev/stdin", "--conductors", "off"])
        .write_stdin(SMALL_LINE)
        .timeout(HANG)
        .assert()
        .code(0);
    // 5 MiB of comments: valid YAML, but more than the limit.
    let big = "# a comment line of sixty-four bytes, repeated to fill the pipe\n"
        .repeat(5 * 1024 * 1024 / 64);
    let out = std::process::Command::new(env!("CARGO_BIN_EXE_websigma"))
        .args(["check", "/dev/stdin"])
        .env_remove("RUST_BACKTRACE")
        .stdin(std::process::Stdio::piped())
        .stderr(std::process::Stdio::piped())
        .stdout(std::process::Stdio::null())
        .spawn()
        .and_then(|mut child| {
            let mut stdin = child.stdin.take().unwrap();
            // The program stops reading at the limit: the rest of the
            // write fails with a broken pipe, which is expected.
            let writer = std::thread::spawn(move || {
                use std::io::Write;
                let _ = stdin.write_all(big.as_bytes());
            });
            let out = child.wait_with_output();
            writer.join().unwrap();
            out
        })
        .unwrap();
    let e = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(2), "{e}");
    assert_eq!(
        e,
        "error: line description '/dev/stdin' holds more than 4 MiB: a line description is a short YAML file\n"
    );
}

/// A FIFO whose writer never stops: the reader stops at the limit.
#[cfg(unix)]
#[test]
fn r11_an_endless_fifo_as_line_file_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    let fifo = dir.path().join("line.fifo");
    let made = std::process::Command::new("mkfifo")
        .arg(&fifo)
        .status()
        .unwrap();
    assert!(made.success());
    let path = fifo.clone();
    let writer = std::thread::spawn(move || {
        use std::io::Write;
        // Blocks until the program opens the FIFO; ends at the broken pipe.
        let mut f = std::fs::OpenOptions::new().write(true).open(path).unwrap();
        let block = [b'#'; 65536];
        while f.write_all(&block).is_ok() {}
    });
    let e = refused(&["check", s(&fifo)]);
    writer.join().unwrap();
    assert!(e.contains("holds more than 4 MiB"), "{e}");
}

#[test]
fn r11_a_line_file_that_is_not_utf8_names_the_byte() {
    let (d, _) = temp_yaml("");
    let p = beside(&d, "latin1.yaml", b"line: Test\n# caf\xe9\n");
    let e = refused(&["check", s(&p)]);
    assert!(
        e.ends_with(
            "is not UTF-8 text: byte 16 (line 2, column 6) is not valid UTF-8: save the file as UTF-8\n"
        ),
        "{e}"
    );
}

#[test]
fn r11_dev_zero_as_point_file_is_refused() {
    let (_d, line) = temp_yaml(SMALL_LINE);
    let e = refused(&["field", s(&line), "--points", "/dev/zero"]);
    assert!(
        e.starts_with("error: point file '/dev/zero' is not a regular file: it is read twice"),
        "{e}"
    );
}

/// A regular file with a row longer than 64 KiB (no line ends, as a
/// binary file) stops at that row, with its line.
#[test]
fn r11_a_point_row_longer_than_64_kib_is_refused_at_its_line() {
    let (d, line) = temp_yaml(SMALL_LINE);
    let mut text = b"x,y,z\n1,0,1.3\n".to_vec();
    text.extend(std::iter::repeat_n(0u8, 200 * 1024));
    let pts = beside(&d, "pts.csv", &text);
    let e = refused(&[
        "field",
        s(&line),
        "--points",
        s(&pts),
        "--conductors",
        "off",
    ]);
    assert_eq!(
        e,
        format!(
            "error: {}:3: a row holds more than 64 KiB: a point file's rows hold three coordinates and an id (is this a CSV file of points?)\n",
            pts.display()
        )
    );
}

// --- the planner's candidate list ---

/// A candidate entry for SMALL_LINE (span S2 runs from roller A to B).
const ENTRY: &str = "- {kind: powered, span: S2, position: 50 %, distance: 40 mm, side: above}\n";

#[test]
fn r11_an_oversize_candidates_file_is_refused() {
    let (d, line) = temp_yaml(SMALL_LINE);
    let mut text = ENTRY.to_string();
    text.push_str(&"# padding\n".repeat(110_000));
    let c = beside(&d, "cands.yaml", text.as_bytes());
    let e = refused(&["plan", s(&line), "--candidates", s(&c)]);
    assert_eq!(
        e,
        format!(
            "error: candidates file '{}' holds more than 1 MiB: a candidates file is a short YAML list of at most 5000 bar positions\n",
            c.display()
        )
    );
    // A device the same way, in bounded time.
    let e = refused(&["plan", s(&line), "--candidates", "/dev/zero"]);
    assert!(e.contains("'/dev/zero' holds more than 1 MiB"), "{e}");
}

#[test]
fn r11_more_than_5000_candidates_are_refused_with_the_reason() {
    let (d, line) = temp_yaml(SMALL_LINE);
    let c = beside(&d, "cands.yaml", ENTRY.repeat(5001).as_bytes());
    let e = refused(&["plan", s(&line), "--candidates", s(&c)]);
    assert_eq!(
        e,
        format!(
            "error: the candidates file '{}' holds 5001 candidates: the limit is 5000, as the search is combinatorial (C(n, N) placements of N bars among n candidates): keep the positions that matter\n",
            c.display()
        )
    );
}

#[test]
fn r11_an_empty_candidates_file_says_so() {
    let (d, line) = temp_yaml(SMALL_LINE);
    for (name, text) in [
        ("empty.yaml", ""),
        ("comments.yaml", "# positions to try\n\n"),
        ("list.yaml", "[]\n"),
    ] {
        let c = beside(&d, name, text.as_bytes());
        let e = refused(&["plan", s(&line), "--candidates", s(&c)]);
        assert_eq!(
            e,
            format!(
                "error: the candidates file '{}' holds no candidates: write a YAML list of eliminator entries, one per line, e.g. `- {{kind: powered, span: S3, position: 50 %, distance: 40 mm, side: above}}`\n",
                c.display()
            ),
            "{name}"
        );
    }
}

/// The planner's own grid is bounded the same way, counted before it is
/// laid: a 30 m line at 10 mm would give about 6,000 positions.
#[test]
fn r11_a_candidate_grid_beyond_5000_positions_is_refused() {
    let long = SMALL_LINE.replace("point: [3 m, 1.05 m]", "point: [30 m, 1.05 m]");
    let (_d, line) = temp_yaml(&long);
    let e = refused(&[
        "plan",
        s(&line),
        "--conductors",
        "off",
        "--spacing",
        "10 mm",
    ]);
    assert!(
        e.starts_with("error: --distance \"40 mm\", --spacing \"10 mm\": the candidate grid has "),
        "{e}"
    );
    assert!(
        e.contains(" positions before the placement rules: the limit is 5000, as the search is combinatorial"),
        "{e}"
    );
}

// --- item 11: points CSV ---

#[test]
fn r11_quoted_commas_in_point_ids_are_one_cell() {
    let (d, line) = temp_yaml(SMALL_LINE);
    let pts = beside(
        &d,
        "pts.csv",
        b"id,x,y,z\n\"B, 2\",1,0,1.3\n\"say \"\"hi\"\"\",1.2,0,1.3\n",
    );
    let out = websigma()
        .args(["field", s(&line), "--points", s(&pts)])
        .args(["--conductors", "off", "--format", "json"])
        .timeout(HANG)
        .output()
        .unwrap();
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let ids: Vec<&str> = v["points"]
        .as_array()
        .unwrap()
        .iter()
        .map(|q| q["id"].as_str().unwrap())
        .collect();
    assert_eq!(ids, ["B, 2", "say \"hi\""]);
    // Unquoted, the comma makes a fifth cell: the row is refused, not read
    // shifted (x = 2, y = 1, z = 0).
    let pts = beside(&d, "bad.csv", b"id,x,y,z\nB, 2,1,0,1.3\n");
    let e = refused(&["field", s(&line), "--points", s(&pts)]);
    assert!(
        e.contains(&format!(
            "{}:2: expected 4 cells as in the header (\"id,x,y,z\"), got 5: quote a cell that holds a comma, e.g. \"B, 2\"",
            pts.display()
        )),
        "{e}"
    );
    // With --skip-bad-points the other rows are computed.
    let pts = beside(&d, "mixed.csv", b"id,x,y,z\nB, 2,1,0,1.3\nC,1,0,1.3\n");
    let out = websigma()
        .args(["field", s(&line), "--points", s(&pts), "--skip-bad-points"])
        .args(["--conductors", "off", "--format", "csv"])
        .timeout(HANG)
        .output()
        .unwrap();
    let e = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(0), "{e}");
    assert!(e.contains("skipped 1 of 2 row(s)"), "{e}");
    assert!(String::from_utf8_lossy(&out.stdout).contains("\nC,"));
}

#[test]
fn r11_a_doubled_point_column_is_refused_naming_both() {
    let (d, line) = temp_yaml(SMALL_LINE);
    let pts = beside(&d, "pts.csv", b"x,y,z,x\n1,0,1.3,2\n");
    let e = refused(&["field", s(&line), "--points", s(&pts)]);
    assert_eq!(
        e,
        format!(
            "error: {}:1: columns 1 and 4 of the header are both named \"x\": keep one (expected the columns x,y,z and optionally id, each once)\n",
            pts.display()
        )
    );
}

#[test]
fn r11_a_bad_cell_names_file_line_and_column() {
    let (d, line) = temp_yaml(SMALL_LINE);
    let pts = beside(&d, "pts.csv", b"x,y,z\n\n1,0,1.3\n1,0,1 kV\n");
    let e = refused(&["field", s(&line), "--points", s(&pts)]);
    assert!(
        e.contains(&format!("{}:4: column z: expected a length", pts.display())),
        "{e}"
    );
}

#[test]
fn r11_a_point_id_with_a_terminal_escape_is_a_bad_row() {
    let (d, line) = temp_yaml(SMALL_LINE);
    let pts = beside(&d, "pts.csv", b"id,x,y,z\n\"\x1b[2J\",1,0,1.3\n");
    let e = refused(&["field", s(&line), "--points", s(&pts)]);
    assert!(
        e.contains(":2: column id: the id holds a control character (U+001B)"),
        "{e}"
    );
    assert!(!e.contains('\x1b'), "echoed raw: {e:?}");
}

// --- item 11: the 1 µm rule ---

/// A point typed 1 µm from the web is accepted (the rule is "at least
/// 1 µm"); 0.9 µm is refused with a distance below 1 µm as shown.
#[test]
fn r11_a_point_at_1_um_is_accepted_and_closer_is_refused_consistently() {
    let (_d, line) = temp_yaml(FLAT_LINE);
    websigma()
        .args(["field", s(&line), "--conductors", "off"])
        .args(["--at", "1,0,1.050001", "--at", "1 m,0 m,1049.999 mm"])
        .timeout(HANG)
        .assert()
        .code(0);
    let e = refused(&[
        "field",
        s(&line),
        "--conductors",
        "off",
        "--at",
        "1,0,1.0500009",
    ]);
    assert!(
        e.contains("the point is 0.9 µm from span S1 (IN-OUT), closer than 1 µm: it is on the web"),
        "{e}"
    );
    // The same rule for a place of interest in the line description.
    let text =
        format!("{FLAT_LINE}points:\n  - {{id: P, kind: probe, at: [1 m, 0 m, 1.050001 m]}}\n");
    let (_d, at_1um) = temp_yaml(&text);
    websigma()
        .args(["check", s(&at_1um), "--conductors", "off"])
        .timeout(HANG)
        .assert()
        .code(0);
    let (_d, closer) = temp_yaml(&text.replace("1.050001 m", "1.0500005 m"));
    let e = refused(&["check", s(&closer), "--conductors", "off"]);
    assert!(
        e.contains("is 0.5 µm from span S1 (IN-OUT), closer than 1 µm"),
        "{e}"
    );
}

// --- item 11: flags ---

#[test]
fn r11_top_is_bounded_not_clamped() {
    let (_d, line) = temp_yaml(SMALL_LINE);
    for top in ["0", "101"] {
        let e = refused(&["plan", s(&line), "--top", top]);
        assert_eq!(
            e,
            format!(
                "error: --top must be at least 1 and at most 100, got {top}: each plan listed is assessed again with the full model\n"
            )
        );
    }
    // A negative count is clap's error, still exit 2 and no backtrace.
    let out = websigma()
        .args(["plan", s(&line), "--top", "-1"])
        .timeout(HANG)
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("invalid value '-1' for '--top <K>'"));
}

#[test]
fn r11_bar_counts_are_bounded_with_the_reason() {
    let (_d, line) = temp_yaml(SMALL_LINE);
    for (flag, n) in [
        ("--bars", "18446744073709551615"),
        ("--bars", "0"),
        ("--bars", "9"),
        ("--max-bars", "0"),
        ("--max-bars", "9"),
    ] {
        let e = refused(&["plan", s(&line), flag, n]);
        assert_eq!(
            e,
            format!(
                "error: {flag} must be at least 1 and at most 8, got {n}: the search is combinatorial (C(n, N) placements of N bars among n candidates); a line that 8 bars cannot bring within its limits needs another remedy\n"
            )
        );
    }
    let out = tempfile::tempdir().unwrap();
    for n in ["0", "9"] {
        let e = refused(&["assess", s(&line), "--out", s(out.path()), "--plan", n]);
        assert!(
            e.starts_with(&format!(
                "error: --plan must be at least 1 and at most 8, got {n}"
            )),
            "{e}"
        );
    }
}

#[test]
fn r11_map_resolution_is_bounded() {
    let (_d, line) = temp_yaml(SMALL_LINE);
    let out = tempfile::tempdir().unwrap();
    for n in ["19", "1001", "18446744073709551615"] {
        let e = refused(&[
            "assess",
            s(&line),
            "--out",
            s(out.path()),
            "--map-resolution",
            n,
        ]);
        assert_eq!(
            e,
            format!(
                "error: --map-resolution must be between 20 and 1000, got {n}: the field map has N × N/2 points, each a field solve\n"
            )
        );
    }
    // Nothing was written.
    assert_eq!(std::fs::read_dir(out.path()).unwrap().count(), 0);
}

/// Negative quantities reach websigma's own parser, which says what is
/// accepted, instead of being taken for flags.
#[test]
fn r11_negative_quantities_are_read_and_refused_by_websigma() {
    let (_d, line) = temp_yaml(SMALL_LINE);
    let e = refused(&["plan", s(&line), "--spacing", "-10 mm"]);
    assert_eq!(
        e,
        "error: --spacing: expected a positive length such as \"100 mm\", got \"-10 mm\"\n"
    );
    let e = refused(&["plan", s(&line), "--distance", "-40 mm"]);
    assert_eq!(
        e,
        "error: --distance: expected a positive length such as \"40 mm\", got \"-40 mm\"\n"
    );
    let e = refused(&["check", s(&line), "--conductors", "-50 mm"]);
    assert!(e.starts_with("error: --conductors: "), "{e}");
    assert!(e.contains("between 1 mm and 1 m"), "{e}");
    let e = refused(&["field", s(&line), "--tolerance", "-1e-9", "--at", "1,0,1.3"]);
    assert!(e.starts_with("error: --tolerance: "), "{e}");
    assert!(e.contains("relative tolerance must be between"), "{e}");
    // A negative coordinate means something and is accepted.
    websigma()
        .args([
            "field",
            s(&line),
            "--conductors",
            "off",
            "--at",
            "-0.5,0,1.3",
        ])
        .timeout(HANG)
        .assert()
        .code(0);
}
