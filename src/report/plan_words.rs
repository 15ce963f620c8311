//! Words for the eliminator planner's results (report stage): the one-line
//! summary of what was searched and what it found, the candidate settings,
//! the ranking rule, a plan's bars, and why a dead end is one. The planner
//! returns typed results ([`PlanOutcome`], [`Blocker`]); the terminal
//! table, the JSON and the report documents all take their text from here,
//! so a plan reads the same everywhere.

use crate::model::{Line, Side};
use crate::plan::{Blocker, BlockerCause, Candidate, DeadEnd, Plan, PlanOption, PlanOutcome};
use crate::units::{Dim, format_quantity};

/// How plans are ranked, in one sentence (the rule of `plan::search`).
pub const RANKING: &str = "Plans are ranked by failing findings, then the number of bars, then the worst margin (value ÷ limit over every finding), then the simplest installation: fewest spans carrying bars, then the largest clearance from rollers and grounded conductors (capped at 1 m), then the bars farthest upstream. Placements that differ only in the side of a bar and score the same are one plan listing both sides; each plan shown is re-assessed with the full model.";

/// The line the best plan's findings are named with: its placed line
/// (placing bars renumbers the eliminators), else `line`.
fn best_line<'a>(plan: &'a Plan, line: &'a Line) -> &'a Line {
    plan.options.first().map_or(line, |o| &o.placed)
}

/// What was searched and what the result means, in one sentence.
pub fn plan_summary(plan: &Plan, line: &Line) -> String {
    let search = if plan.exhaustive {
        "the search was exhaustive, so this is the optimum over the candidate set"
    } else {
        "greedy search with local improvement (heuristic)"
    };
    match &plan.outcome {
        PlanOutcome::AllPass => format!(
            "{} bar(s) bring every rule within its failure limit; {} placements of {} candidates evaluated; {search}",
            plan.bars,
            plan.evaluated,
            plan.candidates.len(),
        ),
        PlanOutcome::NoPass {
            fails,
            first_failing,
            ..
        } => format!(
            "no placement of up to {} bar(s) passes; the best ({} bar(s)) leaves {} failing finding(s), e.g. {}; {} placements of {} candidates evaluated",
            plan.max_bars,
            plan.bars,
            fails,
            first_failing
                .as_ref()
                .map(|f| {
                    format!(
                        "{}/{} on {}",
                        f.profile,
                        f.rule,
                        super::notes::subject_label(best_line(plan, line), &f.subject)
                    )
                })
                .unwrap_or_default(),
            plan.evaluated,
            plan.candidates.len()
        ),
        PlanOutcome::Nothing => "no placement could be evaluated".to_string(),
    }
}

/// The candidate positions searched, in one sentence.
pub fn settings_text(plan: &Plan) -> String {
    let st = &plan.settings;
    match &st.candidates {
        Some(list) => format!(
            "Candidates: the {} position(s) of the given list.",
            list.len()
        ),
        None => format!(
            "Candidates: {} bars {} from the web, every {} along {}, above and below the web, where the placement rules allow (three bar distances from rollers the web touches and from grounded conductors); {}.",
            st.kind.text(),
            format_quantity(st.distance, Dim::Length),
            format_quantity(st.spacing, Dim::Length),
            if st.spans.is_empty() {
                "every span"
            } else {
                "the spans chosen"
            },
            match st.bars {
                Some(n) => format!("exactly {n} bar(s)"),
                None => format!("the fewest bars that pass, up to {}", st.max_bars),
            }
        ),
    }
}

/// Sides in words: `above`, `below`, `above or below`.
pub fn sides_text(sides: &[Side]) -> String {
    sides
        .iter()
        .map(|s| s.text())
        .collect::<Vec<_>>()
        .join(" or ")
}

/// A candidate in words: `powered S2 at 500 mm, above, 40 mm from the web`.
pub fn candidate_text(c: &Candidate, line: &Line) -> String {
    candidate_sides_text(c, &[c.side], line)
}

/// A candidate that may take any of `sides`: `powered S2 at 500 mm, above
/// or below, 40 mm from the web`.
pub fn candidate_sides_text(c: &Candidate, sides: &[Side], line: &Line) -> String {
    format!(
        "{} {} at {}, {}, {} from the web",
        c.kind.text(),
        line.path.spans[c.span].label(),
        format_quantity(c.along, Dim::Length),
        sides_text(sides),
        format_quantity(c.distance, Dim::Length)
    )
}

/// A plan's bars in words, `; `-separated, each with the sides it may take.
pub fn option_bars_text(plan: &Plan, o: &PlanOption, line: &Line) -> String {
    o.bars
        .iter()
        .enumerate()
        .map(|(i, &b)| {
            let c = &plan.candidates[b];
            let own = [c.side];
            let sides = o.sides.get(i).map_or(&own[..], |s| s.as_slice());
            candidate_sides_text(c, sides, line)
        })
        .collect::<Vec<_>>()
        .join("; ")
}

/// The sentence before the blockers of a dead end; `max_bars` is the most
/// bars searched.
pub fn dead_end_intro(d: &DeadEnd, max_bars: usize) -> String {
    if d.blockers.is_empty() {
        return format!(
            "With a bar at every one of the {} allowed position(s) at once, no finding other than the bars' own fails: the charge can be brought within the limits from the allowed positions, but not with {max_bars} bar(s) or fewer; search more bars.",
            d.positions
        );
    }
    format!(
        "Why no placement passes: with a bar at every one of the {} allowed position(s) at once (the most any placement can neutralise), {} finding(s) still fail, listed below (with the bars' own findings, the full model counts {} failing, the superposition the search uses, without the conductors' solve, {}):",
        d.positions,
        d.blockers.len(),
        d.fails_full,
        d.fails_fast
    )
}

/// A value with its unit.
fn q(v: f64, dim: Dim) -> String {
    format_quantity(v, dim)
}

/// Why a finding blocks every placement, in the line's terms.
pub fn blocker_text(b: &Blocker, line: &Line) -> String {
    let f = &b.finding;
    let subject = super::notes::subject_label(line, &f.subject);
    let rule = format!("{}/{}", f.profile, f.rule);
    let against = format!(
        "{} against the failure limit {}",
        q(b.value, b.dim),
        q(b.limit, b.dim)
    );
    match &b.cause {
        BlockerCause::UpstreamOfBars {
            span,
            stretch,
            bar_on_span,
            keep_clear,
            density,
            node,
            charged_at,
        } => {
            let name = line
                .path
                .spans
                .get(*span)
                .map(|s| s.name.clone())
                .unwrap_or_default();
            let after = node
                .as_ref()
                .map_or("after its start".to_string(), |n| format!("after {n}"));
            let stretch_words = if *bar_on_span {
                format!("on its first {}", q(*stretch, Dim::Length))
            } else {
                format!("on its whole length ({})", q(*stretch, Dim::Length))
            };
            let where_ = if *bar_on_span {
                "upstream of every allowed bar position".to_string()
            } else {
                "where no bar position is allowed".to_string()
            };
            let keep = match (keep_clear, node) {
                (Some(k), Some(n)) => {
                    format!(" (a bar keeps {} from {n})", q(*k, Dim::Length))
                }
                _ => String::new(),
            };
            let at_node = node
                .as_ref()
                .map_or("where the charge enters".to_string(), |n| format!("at {n}"));
            let reduce = charged_at.as_ref().map_or(
                "reduce the charge carried in".to_string(),
                |c| format!("reduce charging at {c}"),
            );
            format!(
                "{rule} on {subject} ({against}): {name} carries {} {stretch_words} {after}{keep}, {where_}: neutralise {at_node} (a bar closer than the placement rules allow needs the maker's approval) or {reduce}",
                q(*density, Dim::SurfaceChargeDensity)
            )
        }
        BlockerCause::PointField { span } => format!(
            "{rule} at {subject} ({against}) with a bar at every allowed position: {}; neutralise that charge nearer to where it enters, or move {subject} away from the web or screen it",
            span.as_ref().map_or(
                "the remaining field there comes from charge no allowed bar reaches".to_string(),
                |s| format!("the largest share of the field there comes from {s}, from charge no allowed bar reaches")
            )
        ),
        BlockerCause::ChargedConductor => format!(
            "{rule} on {subject} ({against}) with a bar at every allowed position: it is charged by the web's field before any allowed bar acts; ground it or move it away from the web"
        ),
        BlockerCause::WebProperty => format!(
            "{rule} on the web ({against}): a property of the web (material, thickness), which no bar changes; change the web or the process"
        ),
        BlockerCause::NotReached => format!(
            "{rule} on {subject} ({against}) with a bar at every allowed position: no allowed bar position reaches it; allow bars on other spans, at another distance or at other places (a candidate list)"
        ),
    }
}
