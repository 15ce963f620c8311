//! # Reading input files with bounded memory
//!
//! First step of every input read whole (the line description, threshold
//! profiles, the planner's candidate list): the file is read as text up to
//! a number of bytes *actually read*, never trusting the length the file
//! system reports — it is 0 for devices, pipes and FIFOs, and `/dev/zero`
//! never ends. One byte more than the limit is asked for; if it arrives, the
//! file is refused with the limit and the reason for it, whatever the source.
//! Text must be UTF-8: the first byte that is not is named by its offset and
//! its line and column.
//!
//! Streamed inputs (the point files of `field --points`) are not read here:
//! they are bounded per row instead (`points`).

use anyhow::{Context, Result, anyhow, bail};
use std::io::Read;
use std::path::Path;

/// `n` bytes for people: `4 MiB`, `64 KiB`, or `100 bytes` when `n` is not a
/// whole number of KiB (binary prefixes, IEC 80000-13).
pub fn size_text(n: u64) -> String {
    const KIB: u64 = 1024;
    const MIB: u64 = 1024 * KIB;
    if n >= MIB && n.is_multiple_of(MIB) {
        format!("{} MiB", n / MIB)
    } else if n >= KIB && n.is_multiple_of(KIB) {
        format!("{} KiB", n / KIB)
    } else {
        format!("{n} bytes")
    }
}

/// Reads a YAML file as text, refusing one that holds more than `max_bytes`
/// (these files are short) or that is not UTF-8; `what` names the file in
/// messages, such as `line description` or `threshold profile`.
pub fn read_text(path: &Path, what: &str, max_bytes: u64) -> Result<String> {
    read_text_because(
        path,
        what,
        max_bytes,
        &format!("a {what} is a short YAML file"),
    )
}

/// [`read_text`] with the reason for the limit given: `why` ends the message
/// of a file that holds more than `max_bytes`.
pub fn read_text_because(path: &Path, what: &str, max_bytes: u64, why: &str) -> Result<String> {
    let shown = path.display();
    let file = std::fs::File::open(path).with_context(|| format!("reading {what} '{shown}'"))?;
    let mut bytes = Vec::new();
    file.take(max_bytes.saturating_add(1))
        .read_to_end(&mut bytes)
        .with_context(|| format!("reading {what} '{shown}'"))?;
    if bytes.len() as u64 > max_bytes {
        bail!(
            "{what} '{shown}' holds more than {}: {why}",
            size_text(max_bytes)
        );
    }
    String::from_utf8(bytes).map_err(|e| {
        let at = e.utf8_error().valid_up_to();
        let (line, column) = line_column(&e.as_bytes()[..at]);
        anyhow!(
            "{what} '{shown}' is not UTF-8 text: byte {at} (line {line}, column {column}) is not valid UTF-8: save the file as UTF-8"
        )
    })
}

/// The line and column (both from 1, the column in characters) just after
/// `before`, a valid UTF-8 prefix of a text.
fn line_column(before: &[u8]) -> (usize, usize) {
    let line_start = before
        .iter()
        .rposition(|&b| b == b'\n')
        .map_or(0, |i| i + 1);
    let line = before.iter().filter(|&&b| b == b'\n').count() + 1;
    let column = String::from_utf8_lossy(&before[line_start..])
        .chars()
        .count()
        + 1;
    (line, column)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn temp(bytes: &[u8]) -> (tempfile::TempDir, std::path::PathBuf) {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("f.yaml");
        std::fs::write(&p, bytes).unwrap();
        (dir, p)
    }

    #[test]
    fn sizes_are_shown_with_binary_prefixes() {
        assert_eq!(size_text(4 * 1024 * 1024), "4 MiB");
        assert_eq!(size_text(64 * 1024), "64 KiB");
        assert_eq!(size_text(1536), "1536 bytes");
        assert_eq!(size_text(100), "100 bytes");
    }

    #[test]
    fn a_file_at_the_limit_is_read_one_byte_more_is_refused() {
        let (_d, p) = temp(b"abcd");
        assert_eq!(read_text(&p, "line description", 4).unwrap(), "abcd");
        let e = format!("{:#}", read_text(&p, "line description", 3).unwrap_err());
        assert_eq!(
            e,
            format!(
                "line description '{}' holds more than 3 bytes: a line description is a short YAML file",
                p.display()
            )
        );
    }

    /// The device reports a length of 0 and never ends: the bytes read decide.
    #[cfg(unix)]
    #[test]
    fn an_endless_device_is_refused_at_the_limit() {
        let p = Path::new("/dev/zero");
        assert_eq!(std::fs::metadata(p).unwrap().len(), 0);
        let e = format!(
            "{:#}",
            read_text_because(p, "candidates file", 1024, "keep it short").unwrap_err()
        );
        assert_eq!(
            e,
            "candidates file '/dev/zero' holds more than 1 KiB: keep it short"
        );
    }

    #[test]
    fn text_that_is_not_utf8_is_refused_at_its_byte() {
        let (_d, p) = temp(b"line: a\nweb: \xc3\xa9t\xff\n");
        let e = format!("{:#}", read_text(&p, "line description", 100).unwrap_err());
        assert!(
            e.ends_with(
                "is not UTF-8 text: byte 16 (line 2, column 8) is not valid UTF-8: save the file as UTF-8"
            ),
            "{e}"
        );
    }

    #[test]
    fn a_missing_file_names_the_file() {
        let e = format!(
            "{:#}",
            read_text(Path::new("no/such.yaml"), "line description", 100).unwrap_err()
        );
        assert!(
            e.starts_with("reading line description 'no/such.yaml': "),
            "{e}"
        );
    }
}
