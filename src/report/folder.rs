//! Writes a report folder: the folder's name chosen first, every format
//! rendered with it as the report id, written to a hidden unfinished folder
//! and renamed into place, so a failure leaves no half report, an earlier
//! report is never overwritten and the id inside equals the folder's name.

use crate::report::Writer;
use crate::report::build::{Report, sha256_hex};
use crate::report::html::HtmlWriter;
use crate::report::json::{num, string};
use crate::report::markdown::MarkdownWriter;
use crate::report::unfinished;
use anyhow::{Context, Result};
use std::io::Write;
use std::path::{Path, PathBuf};

/// One file of a report folder.
#[derive(Debug, Clone, PartialEq)]
pub struct OutputFile {
    /// File name inside the folder.
    pub name: String,
    /// Contents.
    pub bytes: Vec<u8>,
}

fn file(name: &str, bytes: Vec<u8>) -> OutputFile {
    OutputFile {
        name: name.to_string(),
        bytes,
    }
}

/// Renders every output of the report, the manifest last.
pub fn render_all(r: &Report) -> Result<Vec<OutputFile>> {
    let mut files = vec![
        file("report.md", MarkdownWriter.render(r)?),
        file("report.html", HtmlWriter.render(r)?),
        file(
            "results.csv",
            crate::report::csv::findings_csv(r).into_bytes(),
        ),
        file("points.csv", crate::report::csv::points_csv(r).into_bytes()),
        file("spans.csv", crate::report::csv::spans_csv(r).into_bytes()),
        file(
            "results.json",
            crate::report::json::results_json(r).into_bytes(),
        ),
    ];
    for p in &r.plots {
        files.push(file(&p.file, p.png.clone()));
    }
    let manifest = manifest(r, &files);
    files.push(file("manifest.json", manifest.into_bytes()));
    Ok(files)
}

/// `manifest.json`: tool version, time, hashes of every input and output,
/// solver settings.
pub fn manifest(r: &Report, files: &[OutputFile]) -> String {
    let mut s = String::from("{\n");
    s.push_str(&format!(
        "  \"tool\": \"websigma\",\n  \"tool_version\": {},\n",
        string(&r.meta.tool_version)
    ));
    s.push_str(&format!(
        "  \"report_id\": {},\n",
        string(&r.meta.report_id)
    ));
    s.push_str(&format!(
        "  \"created_utc\": {},\n",
        string(&r.meta.created_utc)
    ));
    s.push_str(&format!(
        "  \"settings\": {{\"relative_tolerance\": {}}},\n",
        num(r.rel_tol)
    ));
    s.push_str("  \"inputs\": [\n");
    let mut inputs = vec![format!(
        "    {{\"role\": \"line\", \"path\": {}, \"sha256\": {}}}",
        string(&r.meta.line_file),
        string(&r.meta.line_sha256)
    )];
    for p in &r.profiles {
        inputs.push(format!(
            "    {{\"role\": \"profile\", \"name\": {}, \"origin\": {}, \"sha256\": {}}}",
            string(&p.name),
            string(&p.origin),
            string(&p.sha256)
        ));
    }
    s.push_str(&inputs.join(",\n"));
    s.push_str("\n  ],\n  \"outputs\": [\n");
    let outs: Vec<String> = files
        .iter()
        .map(|f| {
            format!(
                "    {{\"file\": {}, \"bytes\": {}, \"sha256\": {}}}",
                string(&f.name),
                f.bytes.len(),
                string(&sha256_hex(&f.bytes))
            )
        })
        .collect();
    s.push_str(&outs.join(",\n"));
    s.push_str("\n  ]\n}\n");
    s
}

/// Writes the report as a new folder in `base` and returns its path. The
/// folder is named by the report id (`<id>`, or `<id>-2`, `-3`, … if taken)
/// and the report is rendered with exactly that name as its id, so the
/// `report_id` inside every file equals the folder's name; `r.meta.report_id`
/// is set to it.
pub fn write_report(base: &Path, r: &mut Report) -> Result<PathBuf> {
    let id = r.meta.report_id.clone();
    write_folder(base, &id, |name| {
        r.meta.report_id = name.to_string();
        match render_all(r) {
            Ok(files) => files.into_iter().map(Ok).collect(),
            Err(e) => vec![Err(e)],
        }
    })
}

/// Writes a new folder `base/id` (or `base/id-2`, `-3`, … if taken) with
/// the files `files_for(name)` gives for the name chosen. Unfinished
/// folders of dead processes in `base` are removed first
/// ([`unfinished::remove_stale`]). The files are written into a hidden
/// unfinished folder and flushed to the disk; the folder is renamed into
/// place only when every file is written. If the name was taken meanwhile,
/// the files are rendered and written again for the next name. On any error
/// the unfinished folder is removed and nothing is left behind.
pub fn write_folder<I>(
    base: &Path,
    id: &str,
    mut files_for: impl FnMut(&str) -> I,
) -> Result<PathBuf>
where
    I: IntoIterator<Item = Result<OutputFile>>,
{
    std::fs::create_dir_all(base)
        .with_context(|| format!("creating the report folder '{}'", base.display()))?;
    unfinished::remove_stale(base, true);
    for k in 1..1000 {
        let name = if k == 1 {
            id.to_string()
        } else {
            format!("{id}-{k}")
        };
        let dest = base.join(&name);
        if dest.exists() {
            continue;
        }
        let tmp = base.join(unfinished::name_for(&name));
        std::fs::create_dir(&tmp).with_context(|| format!("creating '{}'", tmp.display()))?;
        let placed = (|| -> Result<bool> {
            for f in files_for(&name) {
                let f = f?;
                if f.name.contains(['/', '\\']) || f.name.starts_with('.') {
                    anyhow::bail!(
                        "refusing to write '{}': report files are plain names",
                        f.name
                    );
                }
                std::fs::File::create(tmp.join(&f.name))
                    .and_then(|mut out| {
                        out.write_all(&f.bytes)?;
                        out.sync_all()
                    })
                    .with_context(|| format!("writing '{}'", f.name))?;
            }
            // rename(2) fails if dest appeared meanwhile as a non-empty folder.
            match std::fs::rename(&tmp, &dest) {
                Ok(()) => Ok(true),
                Err(_) if dest.exists() => Ok(false),
                Err(e) => {
                    Err(e).with_context(|| format!("moving the report into '{}'", dest.display()))
                }
            }
        })();
        match placed {
            Ok(true) => return Ok(dest),
            Ok(false) => {
                let _ = std::fs::remove_dir_all(&tmp);
            }
            Err(e) => {
                let _ = std::fs::remove_dir_all(&tmp);
                return Err(e);
            }
        }
    }
    anyhow::bail!("too many reports named '{id}' in '{}'", base.display())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn two_writes_give_two_folders_and_a_failure_leaves_nothing() {
        let d = tempfile::tempdir().unwrap();
        let ok = |name: &str| vec![Ok(file("id.txt", name.as_bytes().to_vec()))];
        let a = write_folder(d.path(), "r", ok).unwrap();
        let b = write_folder(d.path(), "r", ok).unwrap();
        assert_ne!(a, b);
        assert!(b.ends_with("r-2"));
        assert_eq!(std::fs::read(a.join("id.txt")).unwrap(), b"r");
        assert_eq!(std::fs::read(b.join("id.txt")).unwrap(), b"r-2");
        let bad = |_: &str| {
            vec![
                Ok(file("a.txt", b"1".to_vec())),
                Err(anyhow::anyhow!("boom")),
            ]
        };
        assert!(write_folder(d.path(), "x", bad).is_err());
        let names: Vec<String> = std::fs::read_dir(d.path())
            .unwrap()
            .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
            .collect();
        assert_eq!(names.len(), 2, "{names:?}");
        assert!(
            !names
                .iter()
                .any(|n| n.starts_with('x') || n.starts_with('.'))
        );
    }
}
