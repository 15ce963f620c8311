//! Words for the eliminator planner's results (report stage): the one-line
//! summary of what was searched and what it found, and a candidate bar in
//! words. The planner returns a typed [`PlanOutcome`]; the terminal table,
//! the JSON and the report documents all take their text from here, so a
//! plan reads the same everywhere.

use crate::model::Line;
use crate::plan::{Candidate, Plan, PlanOutcome};
use crate::units::{Dim, format_quantity};

/// What was searched and what the result means, in one sentence.
pub fn plan_summary(plan: &Plan, line: &Line) -> String {
    match &plan.outcome {
        PlanOutcome::AllPass => format!(
            "{} bar(s) bring every rule within its failure limit; {} placements of {} candidates evaluated; {}",
            plan.bars,
            plan.evaluated,
            plan.candidates.len(),
            if plan.exhaustive {
                "the search was exhaustive, so this is the optimum over the candidate set"
            } else {
                "greedy search with local improvement (heuristic)"
            }
        ),
        PlanOutcome::NoPass {
            fails,
            first_failing,
        } => format!(
            "no placement of up to {} bar(s) passes; the best leaves {} failing finding(s), e.g. {}; {} placements of {} candidates evaluated",
            plan.bars,
            fails,
            first_failing
                .as_ref()
                .map(|f| {
                    format!(
                        "{}/{} on {}",
                        f.profile,
                        f.rule,
                        super::notes::subject_label(line, &f.subject)
                    )
                })
                .unwrap_or_default(),
            plan.evaluated,
            plan.candidates.len()
        ),
        PlanOutcome::Nothing => "no placement could be evaluated".to_string(),
    }
}

/// A candidate in words: `powered S2 at 500 mm, above, 40 mm from the web`.
pub fn candidate_text(c: &Candidate, line: &Line) -> String {
    format!(
        "{} {} at {}, {}, {} from the web",
        c.kind.text(),
        line.path.spans[c.span].label(),
        format_quantity(c.along, Dim::Length),
        c.side.text(),
        format_quantity(c.distance, Dim::Length)
    )
}
