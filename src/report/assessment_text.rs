//! The assessment as the terminal shows it: the findings table, worst
//! first, and the verdict with its counts.
//!
//! Writer stage: formats an [`Assessment`]; computes nothing.

use crate::assess::Assessment;
use crate::model::Line;
use crate::report::finding_text::{limit_text, margin_text, value_text};
use std::path::Path;

/// The short terminal summary: one line per finding, worst first.
pub fn summary_table(line: &Line, a: &Assessment, max_rows: usize) -> String {
    use tabled::settings::Style;
    #[derive(tabled::Tabled)]
    struct Row {
        verdict: String,
        hazard: String,
        rule: String,
        subject: String,
        value: String,
        limit: String,
        margin: String,
        confidence: String,
    }
    let rows: Vec<Row> = a
        .findings
        .iter()
        .take(max_rows)
        .map(|f| Row {
            verdict: f.verdict.text().to_uppercase(),
            hazard: f.hazard.key().to_string(),
            rule: format!("{}/{}", f.profile, f.rule),
            subject: super::notes::subject_label(line, &f.subject),
            value: value_text(f),
            limit: limit_text(f),
            margin: margin_text(f.margin),
            confidence: f.confidence.text().to_string(),
        })
        .collect();
    let mut t = tabled::Table::new(rows);
    t.with(Style::sharp());
    let mut s = t.to_string();
    if a.findings.len() > max_rows {
        s.push_str(&format!(
            "\n… and {} more findings in the report",
            a.findings.len() - max_rows
        ));
    }
    s
}

/// What `assess` and `demo` print after the run: the line's title, the
/// first 25 findings (values with their ranges), the verdict with its
/// counts, the report folder `dir` and the cautions.
pub fn assessment_text(line: &Line, a: &Assessment, dir: &Path) -> String {
    let n = a.counts();
    format!(
        "{}\n{}\n\nverdict: {} ({} fail, {} uncertain, {} warn, {} pass){}\nreport: {}\n\ncaution: {}\n",
        line.title,
        summary_table(line, a, 25),
        a.verdict.text().to_uppercase(),
        n.fail,
        n.uncertain,
        n.warn,
        n.pass,
        if n.uncertain > 0 {
            "\nuncertain: the value's range over the inputs' tolerances straddles the failure limit; counted as failing (the report says which readings would settle it)"
        } else {
            ""
        },
        dir.display(),
        crate::CAUTIONS
    )
}
