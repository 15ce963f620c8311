//! The eliminator plan as a JSON document (SI units), for other programs.
//!
//! Writer stage: formats a [`Plan`] with the helpers of [`crate::report::json`];
//! computes nothing.

use crate::assess::VerdictCounts;
use crate::model::Line;
use crate::plan::{Candidate, Plan};
use crate::report::json::{num, string};

/// One bar: kind, span name, position along the span [m], side, distance
/// from the web [m] and efficiency [1].
fn bar(c: &Candidate, line: &Line) -> String {
    format!(
        "{{\"kind\": {}, \"span\": {}, \"position\": {}, \"side\": {}, \"distance\": {}, \"efficiency\": {}}}",
        string(c.kind.text()),
        string(&line.path.spans[c.span].name),
        num(c.along),
        string(c.side.text()),
        num(c.distance),
        num(c.efficiency)
    )
}

/// `"fail": …, "warn": …, "pass": …`
fn counts(c: VerdictCounts) -> String {
    format!(
        "\"fail\": {}, \"warn\": {}, \"pass\": {}",
        c.fail, c.warn, c.pass
    )
}

/// The `plan` command's JSON output.
pub fn plan_json(plan: &Plan, line: &Line) -> String {
    let plans: Vec<String> = plan
        .options
        .iter()
        .map(|o| {
            let bars: Vec<String> = o
                .bars
                .iter()
                .map(|&b| bar(&plan.candidates[b], line))
                .collect();
            let [pass, warn, fail] = o.counts;
            format!(
                "    {{\"bars\": [{}], {}, \"worst_margin\": {}}}",
                bars.join(", "),
                counts(VerdictCounts { pass, warn, fail }),
                num(o.worst_margin)
            )
        })
        .collect();
    format!(
        "{{\n  \"summary\": {},\n  \"exhaustive\": {},\n  \"evaluated\": {},\n  \"candidates\": {},\n  \"refused\": [{}],\n  \"before\": {{{}}},\n  \"plans\": [\n{}\n  ]\n}}\n",
        string(&super::plan_words::plan_summary(plan, line)),
        plan.exhaustive,
        plan.evaluated,
        plan.candidates.len(),
        plan.refused
            .iter()
            .map(|r| string(&super::notes::candidate_refusal(line, r)))
            .collect::<Vec<_>>()
            .join(", "),
        counts(plan.before.counts()),
        plans.join(",\n")
    )
}
