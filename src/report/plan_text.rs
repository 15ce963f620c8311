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
    use super::plan_words as words;
    let mut s = format!(
        "{}\n\n{}\n{}\n\n",
        words::plan_summary(plan, line),
        words::settings_text(plan),
        words::RANKING
    );
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
                words::option_bars_text(plan, o, line),
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
    if let Some(d) = &plan.dead_end {
        s.push_str(&format!("\n{}\n", words::dead_end_intro(d, plan.max_bars)));
        for b in &d.blockers {
            s.push_str(&format!("  - {}\n", words::blocker_text(b, line)));
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
            let after = best.after(line, f);
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
        // The eliminators' own findings with the plan (new bars included),
        // named from the placed line.
        for g in best.assessment.findings.iter().filter(|g| {
            &*g.profile == eliminators::PROFILE
                && g.verdict != Verdict::Pass
                && !before.findings.iter().any(|f| {
                    f.verdict != Verdict::Pass
                        && best.after(line, f).is_some_and(|a| std::ptr::eq(a, *g))
                })
        }) {
            rows.push(vec![
                format!("{}/{}", g.profile, g.rule),
                super::notes::subject_label(&best.placed, &g.subject),
                "—".into(),
                format!(
                    "{} {}",
                    g.verdict.text().to_uppercase(),
                    super::notes::finding_notes(&best.placed, g)
                ),
            ]);
        }
        s.push_str(&text::table(&["rule", "subject", "before", "after"], &rows));
        if let crate::plan::PlanOutcome::NoPass { failing, .. } = &plan.outcome {
            s.push_str("\nthe best partial plan leaves failing:\n");
            for f in failing {
                s.push_str(&format!(
                    "  - {}/{} on {}\n",
                    f.profile,
                    f.rule,
                    super::notes::subject_label(&best.placed, &f.subject)
                ));
            }
        }
    }
    s.push_str(&format!("\ncaution: {}\n", crate::CAUTIONS));
    s
}
