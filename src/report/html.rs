//! `report.html`: the report as one self-contained HTML page (PNGs as data
//! URIs, inline CSS, no scripts, fonts or external links), printable on A4.

use crate::assess::Verdict;
use crate::report::Writer;
use crate::report::build::Report;
use crate::report::document::{Block, layout};
use crate::report::table::TableWriter;

/// Writes `report.html`.
pub struct HtmlWriter;

/// Escapes text for HTML element content and quoted attribute values:
/// `&`, `<`, `>`, `"` and `'` become character references, and control
/// characters (which HTML does not allow in text, and which would carry a
/// line break into a one-line field) become a space. Source: WHATWG HTML
/// Living Standard, "Writing HTML documents" (text, attribute values,
/// character references).
pub fn esc(s: &str) -> String {
    let mut out = String::with_capacity(s.len() + s.len() / 8);
    for c in s.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            c if c.is_control() => out.push(' '),
            c => out.push(c),
        }
    }
    out
}

impl TableWriter for HtmlWriter {
    fn escape(&self, s: &str) -> String {
        esc(s)
    }
    fn row(&self, cells: &[String], header: bool) -> String {
        let tag = if header { "th" } else { "td" };
        let mut s = String::from("<tr>");
        for c in cells {
            let class = match c.as_str() {
                "FAIL" => " class=\"fail\"",
                "WARN" => " class=\"warn\"",
                "pass" => " class=\"pass\"",
                _ => "",
            };
            s.push_str(&format!("<{tag}{class}>{c}</{tag}>"));
        }
        s.push_str("</tr>\n");
        s
    }
    fn divider(&self, _columns: usize) -> String {
        "</thead><tbody>\n".into()
    }
    fn frame(&self) -> (&'static str, &'static str) {
        ("<table><thead>\n", "</tbody></table>\n")
    }
}

const STYLE: &str = "body{font-family:system-ui,-apple-system,'Segoe UI',sans-serif;max-width:60rem;margin:2rem auto;padding:0 1rem;color:#1d2428;line-height:1.45}
h1{font-size:1.6rem;border-bottom:3px solid #2a6f7f;padding-bottom:.3rem}
h2{font-size:1.2rem;color:#2a6f7f;margin-top:2rem;border-bottom:1px solid #c9d6da}
table{border-collapse:collapse;width:100%;font-size:.85rem;margin:.5rem 0 1rem}
th,td{border:1px solid #c9d6da;padding:.25rem .4rem;text-align:left;vertical-align:top}
th{background:#e8f0f2}
td.fail{background:#f6d2cc;font-weight:bold}td.warn{background:#fbeac0;font-weight:bold}td.pass{color:#3c6e47}
.verdict{font-size:1.1rem;padding:.6rem .8rem;border-radius:4px;margin:.5rem 0}
.v-fail{background:#f6d2cc;border-left:6px solid #b0302a}.v-warn{background:#fbeac0;border-left:6px solid #b98a00}.v-pass{background:#d8eddc;border-left:6px solid #3c6e47}
.caution{background:#fff4d6;border:1px solid #d9b65c;padding:.6rem .8rem}
figure{margin:1rem 0}img{max-width:100%;border:1px solid #c9d6da}figcaption{font-size:.85rem;color:#4b5a60}
.sign p{border-bottom:1px solid #888;padding-bottom:1.2rem;width:60%}
@media print{body{max-width:none;margin:0;font-size:10pt}table{font-size:7.5pt}th,td{padding:.1rem .2rem}@page{size:A4;margin:15mm}h2{break-after:avoid}tr,figure{break-inside:avoid}}";

fn base64(bytes: &[u8]) -> String {
    const T: &[u8; 64] = b"ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/";
    let mut s = String::with_capacity(bytes.len().div_ceil(3) * 4);
    for c in bytes.chunks(3) {
        let n = (c[0] as u32) << 16
            | (*c.get(1).unwrap_or(&0) as u32) << 8
            | *c.get(2).unwrap_or(&0) as u32;
        s.push(T[(n >> 18) as usize & 63] as char);
        s.push(T[(n >> 12) as usize & 63] as char);
        s.push(if c.len() > 1 {
            T[(n >> 6) as usize & 63] as char
        } else {
            '='
        });
        s.push(if c.len() > 2 {
            T[n as usize & 63] as char
        } else {
            '='
        });
    }
    s
}

impl Writer for HtmlWriter {
    fn render(&self, r: &Report) -> anyhow::Result<Vec<u8>> {
        let mut s = format!(
            "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n<title>Electrostatic assessment — {}</title>\n<style>\n{STYLE}\n</style>\n</head>\n<body>\n<h1>Electrostatic assessment — {}</h1>\n",
            esc(&r.meta.title),
            esc(&r.meta.title)
        );
        for sec in layout(r) {
            s.push_str(&format!("<section>\n<h2>{}</h2>\n", esc(&sec.title)));
            for b in &sec.blocks {
                match b {
                    Block::Para(t) => s.push_str(&format!("<p>{}</p>\n", esc(t))),
                    Block::List(items) => {
                        s.push_str("<ul>\n");
                        for i in items {
                            s.push_str(&format!("<li>{}</li>\n", esc(i)));
                        }
                        s.push_str("</ul>\n");
                    }
                    Block::Table { header, rows } => s.push_str(&self.table(header, rows)),
                    Block::Image { file, caption } => {
                        let png = r
                            .plots
                            .iter()
                            .find(|p| &p.file == file)
                            .map(|p| base64(&p.png))
                            .unwrap_or_default();
                        s.push_str(&format!(
                            "<figure><img alt=\"{}\" src=\"data:image/png;base64,{png}\"><figcaption>{}</figcaption></figure>\n",
                            esc(caption),
                            esc(caption)
                        ));
                    }
                    Block::Verdict(v, text) => {
                        let (class, word) = match v {
                            Verdict::Fail => ("v-fail", "FAIL — a limit is exceeded"),
                            Verdict::Uncertain => (
                                "v-fail",
                                "UNCERTAIN — a limit may be exceeded within the inputs' tolerances (counted as failing)",
                            ),
                            Verdict::Warn => ("v-warn", "WARN — a warning limit is reached"),
                            Verdict::Pass => ("v-pass", "PASS — no limit reached"),
                        };
                        s.push_str(&format!(
                            "<div class=\"verdict {class}\"><strong>Overall verdict: {word}.</strong> {}</div>\n",
                            esc(text)
                        ));
                    }
                    Block::Caution(t) => s.push_str(&format!(
                        "<div class=\"caution\"><strong>Caution.</strong> {}</div>\n",
                        esc(t)
                    )),
                    Block::SignOff(lines) => {
                        s.push_str("<div class=\"sign\">\n");
                        for l in lines {
                            s.push_str(&format!("<p>{}</p>\n", esc(l)));
                        }
                        s.push_str("</div>\n");
                    }
                }
            }
            s.push_str("</section>\n");
        }
        s.push_str("</body>\n</html>\n");
        Ok(s.into_bytes())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn text_and_attributes_are_escaped() {
        assert_eq!(
            esc("<img src=x onerror=\"alert('1')\">&\n"),
            "&lt;img src=x onerror=&quot;alert(&#39;1&#39;)&quot;&gt;&amp; "
        );
    }

    /// RFC 4648 test vectors.
    #[test]
    fn base64_matches_rfc4648() {
        assert_eq!(base64(b""), "");
        assert_eq!(base64(b"f"), "Zg==");
        assert_eq!(base64(b"fo"), "Zm8=");
        assert_eq!(base64(b"foo"), "Zm9v");
        assert_eq!(base64(b"foobar"), "Zm9vYmFy");
    }
}
