//! `report.md`: the report as Markdown (GitHub-flavoured tables).
//!
//! Every text that reaches the page — the line's title, ids, names, notes,
//! readings as typed, profile names and sources, and our own sentences —
//! goes through [`escape`], so that it reads as the same text and nothing in
//! it acts as Markdown or HTML: a line title cannot open a heading, forge a
//! verdict, split a table cell or carry a `<script>`. The writer adds the
//! markup itself (headings, `**`, table bars) around escaped text only.

use crate::assess::Verdict;
use crate::report::Writer;
use crate::report::build::Report;
use crate::report::document::{Block, layout};
use crate::report::table::TableWriter;

/// Writes `report.md`.
pub struct MarkdownWriter;

/// Text made inert for Markdown (CommonMark with GitHub's extensions), to
/// be placed where one line of text goes: a heading, a paragraph, a list
/// item or a table cell.
///
/// - Newlines, carriage returns, tabs and every other control character
///   (and the Unicode line and paragraph separators) become a space, so the
///   text stays on its line and cannot start a block of its own; leading
///   spaces are dropped (four of them would start a code block).
/// - `&`, `<` and `>` become the entities `&amp;`, `&lt;` and `&gt;`: no raw
///   HTML, no autolink, no block quote passes.
/// - The inline markup characters `` \ ` * [ ] | # ~ $ `` are escaped with
///   a backslash wherever they stand (`|` would split a table cell, `#` close
///   a heading, `~` and `$` make strike-through and maths on GitHub), and so
///   is `_` unless it stands between two letters or digits (where it cannot
///   open or close emphasis: `zone_line.yaml` stays as it is).
/// - At the start of the text, where a block would open, a list or rule
///   marker is escaped: a `-` followed by a space, another `-` or nothing, a
///   `+` followed by a space or nothing, and the `.` or `)` after leading
///   digits when a space or nothing follows (`1. ` opens an ordered list,
///   `1.5 m` does not).
///
/// Source: CommonMark Spec 0.31.2, §2.4 (backslash escapes), §2.5 (entity
/// references), §4.1 (thematic breaks), §5.2 (list items), §6.2 (the
/// flanking rules of `_`) and GitHub Flavored Markdown Spec 0.29-gfm, §4.10
/// (tables: `\|` inside a cell).
pub fn escape(text: &str) -> String {
    let flat: Vec<char> = text
        .chars()
        .map(|c| {
            if c.is_control() || c == '\u{2028}' || c == '\u{2029}' {
                ' '
            } else {
                c
            }
        })
        .skip_while(|c| *c == ' ')
        .collect();
    let at = |i: usize| flat.get(i).copied();
    let ends_marker = |i: usize| at(i).is_none_or(|c| c == ' ');
    let digits = flat.iter().take_while(|c| c.is_ascii_digit()).count();
    let mut out = String::with_capacity(flat.len() + flat.len() / 8 + 4);
    for (i, &c) in flat.iter().enumerate() {
        let escaped = match c {
            '&' => {
                out.push_str("&amp;");
                continue;
            }
            '<' => {
                out.push_str("&lt;");
                continue;
            }
            '>' => {
                out.push_str("&gt;");
                continue;
            }
            '\\' | '`' | '*' | '[' | ']' | '|' | '#' | '~' | '$' => true,
            '_' => {
                let word = |c: Option<char>| c.is_some_and(char::is_alphanumeric);
                !(i > 0 && word(at(i - 1)) && word(at(i + 1)))
            }
            '-' => i == 0 && (ends_marker(1) || at(1) == Some('-')),
            '+' => i == 0 && ends_marker(1),
            '.' | ')' => i == digits && digits > 0 && ends_marker(i + 1),
            _ => false,
        };
        if escaped {
            out.push('\\');
        }
        out.push(c);
    }
    out
}

/// A file name as a link target: characters other than letters, digits and
/// `. _ -` percent-encoded (RFC 3986 §2.1), so the target cannot close the
/// link or carry markup.
fn link_target(file: &str) -> String {
    let mut out = String::with_capacity(file.len());
    for b in file.bytes() {
        if b.is_ascii_alphanumeric() || matches!(b, b'.' | b'_' | b'-') {
            out.push(b as char);
        } else {
            out.push_str(&format!("%{b:02X}"));
        }
    }
    out
}

impl TableWriter for MarkdownWriter {
    fn escape(&self, s: &str) -> String {
        escape(s)
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
        let mut s = format!("# Electrostatic assessment — {}\n", escape(&r.meta.title));
        for sec in layout(r) {
            s.push_str(&format!("\n## {}\n\n", escape(&sec.title)));
            for b in &sec.blocks {
                match b {
                    Block::Para(t) => s.push_str(&format!("{}\n\n", escape(t))),
                    Block::List(items) => {
                        for i in items {
                            s.push_str(&format!("- {}\n", escape(i)));
                        }
                        s.push('\n');
                    }
                    Block::Table { header, rows } => s.push_str(&self.table(header, rows)),
                    Block::Image { file, caption } => {
                        let caption = escape(caption);
                        s.push_str(&format!(
                            "![{caption}]({})\n\n*{caption}*\n\n",
                            link_target(file)
                        ))
                    }
                    Block::Verdict(v, text) => s.push_str(&format!(
                        "**Overall verdict: {}** — {}\n\n",
                        match v {
                            Verdict::Fail => "FAIL (a limit is exceeded)",
                            Verdict::Uncertain => "UNCERTAIN (a limit may be exceeded within the inputs' tolerances; counted as failing)",
                            Verdict::Warn => "WARN (a warning limit is reached)",
                            Verdict::Pass => "PASS (no limit reached)",
                        },
                        escape(text)
                    )),
                    Block::Caution(t) => s.push_str(&format!("> **Caution.** {}\n\n", escape(t))),
                    Block::SignOff(lines) => {
                        for l in lines {
                            s.push_str(&format!(
                                "{} ______________________________\n\n",
                                escape(l)
                            ));
                        }
                    }
                }
            }
        }
        Ok(s.into_bytes())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn newlines_and_controls_flatten_to_spaces() {
        assert_eq!(escape("a\nb\r\nc\td\u{0}e\u{2028}f"), "a b  c d e f");
        assert_eq!(escape("\n\n## Summary"), "\\#\\# Summary");
        assert_eq!(escape("    code"), "code");
    }

    #[test]
    fn html_becomes_entities() {
        assert_eq!(
            escape("<script>alert(1)</script> & <img src=x onerror=alert(1)>"),
            "&lt;script&gt;alert(1)&lt;/script&gt; &amp; &lt;img src=x onerror=alert(1)&gt;"
        );
        assert_eq!(escape("&lt;"), "&amp;lt;");
    }

    #[test]
    fn inline_markup_is_escaped_everywhere() {
        assert_eq!(
            escape(r"**PASS** _x_ `c` [l](u) a|b ~~s~~ $m$ \ # a _b"),
            r"\*\*PASS\*\* \_x\_ \`c\` \[l\](u) a\|b \~\~s\~\~ \$m\$ \\ \# a \_b"
        );
        assert_eq!(escape("zone_line.yaml U_b"), "zone_line.yaml U_b");
        assert_eq!(escape("_a a_ a__"), "\\_a a\\_ a\\_\\_");
    }

    #[test]
    fn block_openers_are_escaped_at_the_start_only() {
        assert_eq!(escape("- item"), "\\- item");
        assert_eq!(escape("-"), "\\-");
        assert_eq!(escape("---"), "\\---");
        assert_eq!(escape("+ item"), "\\+ item");
        assert_eq!(escape("12. x"), "12\\. x");
        assert_eq!(escape("3) x"), "3\\) x");
        assert_eq!(escape("3."), "3\\.");
        assert_eq!(escape("> quote"), "&gt; quote");
        assert_eq!(escape("S1-S2 1. 2) - x"), "S1-S2 1. 2) - x");
        assert_eq!(escape("-3 kV"), "-3 kV");
        assert_eq!(escape("+5 %"), "+5 %");
        assert_eq!(escape("1.844 µC/m²"), "1.844 µC/m²");
        assert_eq!(escape("12 mm"), "12 mm");
    }

    #[test]
    fn link_targets_are_percent_encoded() {
        assert_eq!(link_target("side_view.png"), "side_view.png");
        assert_eq!(link_target("a b)(.png"), "a%20b%29%28.png");
    }
}
