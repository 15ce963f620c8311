//! `report.md`: the report as Markdown (GitHub-flavoured tables).

use crate::assess::Verdict;
use crate::report::Writer;
use crate::report::build::Report;
use crate::report::document::{Block, layout};
use crate::report::table::TableWriter;

/// Writes `report.md`.
pub struct MarkdownWriter;

impl TableWriter for MarkdownWriter {
    fn escape(&self, s: &str) -> String {
        s.replace('|', "\\|").replace('\n', " ")
    }
    fn row(&self, cells: &[String], _header: bool) -> String {
        format!("| {} |\n", cells.join(" | "))
    }
    fn divider(&self, columns: usize) -> String {
        format!("|{}\n", " --- |".repeat(columns))
    }
    fn frame(&self) -> (&'static str, &'static str) {
        ("\n", "\n")
    }
}

impl Writer for MarkdownWriter {
    fn render(&self, r: &Report) -> anyhow::Result<Vec<u8>> {
        let mut s = format!("# Electrostatic assessment — {}\n", r.meta.title);
        for sec in layout(r) {
            s.push_str(&format!("\n## {}\n\n", sec.title));
            for b in &sec.blocks {
                match b {
                    Block::Para(t) => s.push_str(&format!("{t}\n\n")),
                    Block::List(items) => {
                        for i in items {
                            s.push_str(&format!("- {i}\n"));
                        }
                        s.push('\n');
                    }
                    Block::Table { header, rows } => s.push_str(&self.table(header, rows)),
                    Block::Image { file, caption } => {
                        s.push_str(&format!("![{caption}]({file})\n\n*{caption}*\n\n"))
                    }
                    Block::Verdict(v, text) => s.push_str(&format!(
                        "**Overall verdict: {}** — {text}\n\n",
                        match v {
                            Verdict::Fail => "FAIL (a limit is exceeded)",
                            Verdict::Warn => "WARN (a warning limit is reached)",
                            Verdict::Pass => "PASS (no limit reached)",
                        }
                    )),
                    Block::Caution(t) => s.push_str(&format!("> **Caution.** {t}\n\n")),
                    Block::SignOff(lines) => {
                        for l in lines {
                            s.push_str(&format!("{l} ______________________________\n\n"));
                        }
                    }
                }
            }
        }
        Ok(s.into_bytes())
    }
}
