//! The eliminator plan as a JSON document (SI units), for other programs.
//!
//! Writer stage: formats a [`Plan`] with the helpers of [`crate::report::json`];
//! computes nothing.

use crate::assess::VerdictCounts;
use crate::model::{Line, Side};
use crate::plan::{BlockerCause, Candidate, Plan};
use crate::report::json::{num, string};

/// One bar: kind, span name, position along the span [m], side (`above`,
/// `below` or `above or below`) and the sides as a list, distance from the
/// web [m] and efficiency [1].
fn bar(c: &Candidate, sides: &[Side], line: &Line) -> String {
    format!(
        "{{\"kind\": {}, \"span\": {}, \"position\": {}, \"side\": {}, \"sides\": [{}], \"distance\": {}, \"efficiency\": {}}}",
        string(c.kind.text()),
        string(&line.path.spans[c.span].name),
        num(c.along),
        string(&super::plan_words::sides_text(sides)),
        sides
            .iter()
            .map(|s| string(s.text()))
            .collect::<Vec<_>>()
            .join(", "),
        num(c.distance),
        num(c.efficiency)
    )
}

/// The candidate settings: kind, distance [m], spacing [m] (null for a
/// given list), sides, the bars asked for (`bars`: exactly so many, or
/// null for the fewest up to `max_bars`), the most bars searched and the
/// ranking rule.
fn settings(plan: &Plan) -> String {
    let st = &plan.settings;
    format!(
        "{{\"kind\": {}, \"distance\": {}, \"spacing\": {}, \"sides\": [\"above\", \"below\"], \"given_list\": {}, \"bars\": {}, \"max_bars\": {}, \"searched_up_to\": {}, \"text\": {}, \"ranking\": {}}}",
        string(st.kind.text()),
        num(st.distance),
        if st.candidates.is_some() {
            "null".to_string()
        } else {
            num(st.spacing)
        },
        st.candidates.is_some(),
        st.bars.map_or("null".into(), |n| n.to_string()),
        st.max_bars,
        plan.max_bars,
        string(&super::plan_words::settings_text(plan)),
        string(super::plan_words::RANKING)
    )
}

/// The dead end: the blockers, typed, each with its words; `null` when a
/// plan passes.
fn dead_end(plan: &Plan, line: &Line) -> String {
    let Some(d) = &plan.dead_end else {
        return "null".into();
    };
    let blockers: Vec<String> = d
        .blockers
        .iter()
        .map(|b| {
            let f = &b.finding;
            let cause = match &b.cause {
                BlockerCause::UpstreamOfBars {
                    span,
                    stretch,
                    bar_on_span,
                    keep_clear,
                    density,
                    node,
                    charged_at,
                } => format!(
                    "\"upstream_of_bars\", \"span\": {}, \"stretch\": {}, \"bar_on_span\": {bar_on_span}, \"keep_clear\": {}, \"density\": {}, \"node\": {}, \"charged_at\": {}",
                    string(&line.path.spans[*span].name),
                    num(*stretch),
                    keep_clear.map_or("null".into(), num),
                    num(*density),
                    node.as_deref().map_or("null".into(), string),
                    charged_at.as_deref().map_or("null".into(), string)
                ),
                BlockerCause::PointField { span } => format!(
                    "\"point_field\", \"largest_share\": {}",
                    span.as_deref().map_or("null".into(), string)
                ),
                BlockerCause::ChargedConductor => "\"charged_conductor\"".into(),
                BlockerCause::WebProperty => "\"web_property\"".into(),
                BlockerCause::NotReached => "\"not_reached\"".into(),
            };
            format!(
                "      {{\"rule\": {}, \"subject\": {}, \"value\": {}, \"limit\": {}, \"cause\": {cause}, \"text\": {}}}",
                string(&format!("{}/{}", f.profile, f.rule)),
                string(&super::notes::subject_label(line, &f.subject)),
                num(b.value),
                num(b.limit),
                string(&super::plan_words::blocker_text(b, line))
            )
        })
        .collect();
    format!(
        "{{\"positions\": {}, \"fails_full\": {}, \"fails_fast\": {}, \"text\": {}, \"blockers\": [\n{}\n    ]}}",
        d.positions,
        d.fails_full,
        d.fails_fast,
        string(&super::plan_words::dead_end_intro(d, plan.max_bars)),
        blockers.join(",\n")
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
                .enumerate()
                .map(|(i, &b)| {
                    let c = &plan.candidates[b];
                    let own = [c.side];
                    bar(c, o.sides.get(i).map_or(&own[..], |s| s), line)
                })
                .collect();
            let [pass, warn, fail] = o.counts;
            format!(
                "    {{\"text\": {}, \"bars\": [{}], {}, \"worst_margin\": {}}}",
                string(&super::plan_words::option_bars_text(plan, o, line)),
                bars.join(", "),
                counts(VerdictCounts {
                    pass,
                    warn,
                    fail,
                    uncertain: 0,
                }),
                num(o.worst_margin)
            )
        })
        .collect();
    format!(
        "{{\n  \"summary\": {},\n  \"settings\": {},\n  \"dead_end\": {},\n  \"exhaustive\": {},\n  \"evaluated\": {},\n  \"candidates\": {},\n  \"refused\": [{}],\n  \"before\": {{{}}},\n  \"plans\": [\n{}\n  ]\n}}\n",
        string(&super::plan_words::plan_summary(plan, line)),
        settings(plan),
        dead_end(plan, line),
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
