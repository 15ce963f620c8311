//! Mutated copies of the demo line through `check` and `assess` (the
//! binary): each run ends, within its bound, either with one `error:` line
//! that names the file, or — when `check` accepts the file — with a report
//! from `assess`. `check` accepts nothing that `assess` then refuses.
//! The bounds are guards against hangs, not speed assertions.

use crate::util::websigma;
use proptest::prelude::*;
use std::time::Duration;

/// Values a careless or hostile edit puts in place of a value.
const NASTY: &[&str] = &[
    "0x10",
    "0o17",
    "1e15 m",
    "-1 m",
    "0 m",
    "1e-300 m",
    "!!binary aGVsbG8=",
    "!!python/object x",
    "\"\\u202Eid\"",
    "\"\\e[2J\"",
    "\"a\\nb\"",
    "~",
    "[]",
    "{}",
    ".nan",
    "-.inf",
    "4e8 m/s",
    "999 uC/m^2",
    "1e12 V/m",
    "ex-zone-9",
    "---",
    "'x'",
    "5 mm",
    "[1 m, 2 m]",
    "123456789012345678901234567890",
];

/// The demo with one edit: 0 replaces the value of line `i` with a nasty
/// value, 1 deletes the line, 2 doubles it, 3 inserts the nasty value as a
/// line of its own after it.
fn mutate(text: &str, edits: &[(usize, usize, u8)]) -> String {
    let mut lines: Vec<String> = text.lines().map(str::to_string).collect();
    for &(i, j, op) in edits {
        let i = i % lines.len();
        let nasty = NASTY[j % NASTY.len()];
        match op % 4 {
            0 => {
                if let Some(k) = lines[i].find(": ") {
                    let head = lines[i][..k + 2].to_string();
                    lines[i] = format!("{head}{nasty}");
                }
            }
            1 => {
                lines.remove(i);
            }
            2 => {
                let l = lines[i].clone();
                lines.insert(i, l);
            }
            _ => lines.insert(i + 1, nasty.to_string()),
        }
        if lines.is_empty() {
            lines.push(String::new());
        }
    }
    lines.join("\n") + "\n"
}

/// One error line that names the file, no panic, no control character.
fn assert_one_located_error(stderr: &str, file: &str) {
    assert!(stderr.starts_with("error: "), "{stderr}");
    assert_eq!(stderr.matches("error:").count(), 1, "{stderr}");
    assert!(stderr.contains(file), "the error names the file: {stderr}");
    assert!(
        !stderr.contains("panicked") && !stderr.contains("stack backtrace"),
        "{stderr}"
    );
    assert!(
        stderr.chars().all(|c| c == '\n' || !c.is_control()),
        "no control character reaches the terminal: {stderr:?}"
    );
}

proptest! {
    #![proptest_config(ProptestConfig {
        cases: 64,
        failure_persistence: None,
        ..ProptestConfig::default()
    })]

    #[test]
    fn mutated_demo_lines_give_one_located_error_or_a_report(
        edits in proptest::collection::vec((0usize..200, 0usize..100, 0u8..4), 1..4)
    ) {
        let text = mutate(websigma::DEMO_LINE, &edits);
        let dir = tempfile::tempdir().unwrap();
        let file = dir.path().join("mutated.yaml");
        std::fs::write(&file, &text).unwrap();
        let name = file.display().to_string();
        let check = websigma()
            .args(["check", &name, "--conductors", "off"])
            .timeout(Duration::from_secs(60))
            .output()
            .unwrap();
        let stderr = String::from_utf8_lossy(&check.stderr).to_string();
        match check.status.code() {
            Some(2) => assert_one_located_error(&stderr, &name),
            Some(0) => {
                let out = dir.path().join("out");
                let assess = websigma()
                    .args(["assess", &name, "--conductors", "off", "--map-resolution", "24", "--out"])
                    .arg(&out)
                    .timeout(Duration::from_secs(120))
                    .output()
                    .unwrap();
                let err = String::from_utf8_lossy(&assess.stderr);
                prop_assert!(
                    matches!(assess.status.code(), Some(0 | 1)),
                    "check accepted what assess refused ({:?}):\n{err}\n--- file:\n{text}",
                    assess.status.code()
                );
                let reports: Vec<_> = std::fs::read_dir(&out).unwrap().collect();
                prop_assert_eq!(reports.len(), 1);
            }
            other => prop_assert!(false, "check ended with {other:?}: {stderr}\n--- file:\n{text}"),
        }
    }
}

#[test]
fn the_mutations_change_the_text() {
    let t = websigma::DEMO_LINE;
    assert_ne!(mutate(t, &[(5, 0, 0)]), mutate(t, &[(5, 0, 1)]));
    assert!(mutate(t, &[(0, 20, 3)]).lines().nth(1) == Some("---"));
}
