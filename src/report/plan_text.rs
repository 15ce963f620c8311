//! The eliminator plan as the terminal shows it: the best placements, and
//! for the best one each finding that warns or fails before and after.
//!
//! Writer stage: formats a [`Plan`]; computes nothing.

use crate::assess::{Verdict, eliminators};
use crate::model::Line;
use crate::plan::Plan;
use crate::report::document::margin_text;
use crate::report::text;
use crate::units::format_quantity;

/// The `plan` command's table output.
pub fn plan_text(plan: &Plan, line: &Line) -> String {
    let mut s = format!("{}\n\n", super::plan_words::plan_summary(plan, line));
    let before = &plan.before;
    let n = before.counts();
    s.push_str(&format!(
        "without new bars: {} fail, {} warn, {} pass\n\n",
        n.fail, n.warn, n.pass
    ));
    let rows: Vec<Vec<String>> = plan
        .options
        .iter()
        .enumerate()
        .map(|(i, o)| {
            vec![
                format!("{}", i + 1),
                o.bars
                    .iter()
                    .map(|&b| super::plan_words::candidate_text(&plan.candidates[b], line))
                    .collect::<Vec<_>>()
                    .join("; "),
                format!("{}", o.counts[2]),
                format!("{}", o.counts[1]),
                format!("{}", o.counts[0]),
                margin_text(o.worst_margin),
            ]
        })
        .collect();
    s.push_str(&text::table(
        &["plan", "bars", "fail", "warn", "pass", "worst margin"],
        &rows,
    ));
    if !plan.refused.is_empty() {
        s.push_str(&format!(
            "\n{} candidate position(s) left out for their clearance from grounded conductors:\n",
            plan.refused.len()
        ));
        for r in &plan.refused {
            s.push_str(&format!(
                "  - {}\n",
                super::notes::candidate_refusal(line, r)
            ));
        }
    }
    if let Some(best) = plan.options.first() {
        s.push_str("\nbest plan, findings that warn or fail before → after:\n");
        let mut rows = Vec::new();
        for f in before
            .findings
            .iter()
            .filter(|f| f.verdict != Verdict::Pass)
        {
            let after = best
                .assessment
                .findings
                .iter()
                .find(|g| g.profile == f.profile && g.rule == f.rule && g.subject == f.subject);
            rows.push(vec![
                format!("{}/{}", f.profile, f.rule),
                super::notes::subject_label(line, &f.subject),
                format!(
                    "{} {}",
                    f.verdict.text().to_uppercase(),
                    format_quantity(f.value, f.dim)
                ),
                after
                    .map(|g| {
                        format!(
                            "{} {}",
                            g.verdict.text().to_uppercase(),
                            format_quantity(g.value, g.dim)
                        )
                    })
                    .unwrap_or_else(|| "—".into()),
            ]);
        }
        for g in best
            .assessment
            .findings
            .iter()
            .filter(|g| &*g.profile == eliminators::PROFILE && g.verdict != Verdict::Pass)
        {
            rows.push(vec![
                format!("{}/{}", g.profile, g.rule),
                super::notes::subject_label(line, &g.subject),
                "—".into(),
                format!(
                    "{} {}",
                    g.verdict.text().to_uppercase(),
                    super::notes::finding_notes(line, g)
                ),
            ]);
        }
        s.push_str(&text::table(&["rule", "subject", "before", "after"], &rows));
    }
    s.push_str(&format!("\ncaution: {}\n", crate::CAUTIONS));
    s
}
