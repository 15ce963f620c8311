//! Shared helpers for the integration tests.

use assert_cmd::Command;
use std::path::PathBuf;

/// The websigma binary, run from the repository root.
pub fn websigma() -> Command {
    let mut c = Command::cargo_bin("websigma").expect("binary built");
    c.current_dir(env!("CARGO_MANIFEST_DIR"));
    c.env_remove("RUST_BACKTRACE");
    c
}

/// A small valid line: two grounded rollers, a point before and after.
pub const SMALL_LINE: &str = r#"
line: Test line
web:
  width: 1.0 m
  thickness: 50 um
  relative_permittivity: 3
  relaxation_time: 100 s
  speed: 1 m/s
rollers:
  - {id: A, center: [0 m, 1 m], diameter: 100 mm, earthing: grounded}
  - {id: B, center: [2 m, 1 m], diameter: 100 mm, earthing: grounded}
path:
  - point: [-1 m, 1.05 m]
    id: IN
  - {roller: A, wrap: cw}
  - {roller: B, wrap: cw}
  - point: [3 m, 1.05 m]
    id: OUT
charge:
  - at: start
    sigma: 5 uC/m^2
points:
  - {id: M, kind: meter, at: [1 m, 0 m, 1.075 m]}
"#;

/// Writes `text` to a fresh temporary file and returns its path (kept alive by the guard).
pub fn temp_yaml(text: &str) -> (tempfile::TempDir, PathBuf) {
    let dir = tempfile::tempdir().expect("temp dir");
    let p = dir.path().join("line.yaml");
    std::fs::write(&p, text).expect("write temp file");
    (dir, p)
}

/// The only report folder under `out`.
pub fn only_report(out: &std::path::Path) -> std::path::PathBuf {
    let dirs: Vec<_> = std::fs::read_dir(out)
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.is_dir())
        .collect();
    assert_eq!(dirs.len(), 1, "{dirs:?}");
    dirs[0].clone()
}
