//! # Static-eliminator placement planner
//!
//! After the assessment: `(Line, profiles) → Plan`. Candidate bar positions
//! are laid along the free spans (or read from a list); each placement of N
//! bars is assessed with every rule in force and ranked by, in order: the
//! number of failing findings, the number of bars, the worst margin (value
//! ÷ limit over every finding), then the simplest installation — fewest
//! distinct spans, then the largest clearance from rollers and grounded
//! conductors, then the bars farthest upstream (`search` gives the exact
//! rule). Placements that differ only in the side of some bars and score
//! the same are one plan listing both sides.
//!
//! `plan`, `assess --plan N` and `demo` use the same [`PlanSettings::new`]
//! defaults (powered bars 40 mm from the web, candidates every 100 mm on
//! both sides), and `assess --plan N` asks what `plan --max-bars N` asks:
//! the fewest bars, up to N, that pass. When no size passes, the best
//! partial plan is chosen over every size searched.
//!
//! ## A dead end
//! When no placement passes, the planner puts a bar at every allowed
//! candidate position at once (one per position: the most any placement can
//! neutralise), scores it with the superposition and assesses it with the
//! full model; every finding that still fails is a [`Blocker`] with its
//! typed cause (charge upstream of every allowed bar position, a point's
//! field, a charged conductor, a property of the web).
//!
//! ## Superposition makes each placement cheap
//! The field is linear in the density, and a bar multiplies what arrives by
//! (1 − η). Cut the path into pieces e at every candidate, charge entry and
//! existing eliminator; let G_e(p) be the field and potential at point p of
//! piece e carrying unit density at its start (relaxing along it, with the
//! across-web shape and the ground-plane image). A charge entry i
//! contributes c_ie = σ_i·exp(−(s_e − s_i)/(vτ)) to every piece after it
//! until the next `sigma:` entry, scaled by the bars in between, so
//!
//! $$ \mathbf E(p) = \sum_i \sum_{r} F_{ir}\,\bigl[P_i(p, b_{r+1}) - P_i(p, b_r)\bigr],
//!    \qquad P_i(p, e) = \sum_{e' < e} c_{ie'}\, G_{e'}(p), $$
//!
//! with ranges r between consecutive bars and F_ir the product of (1 − η)
//! over the bars from entry i to range r. The prefix sums P are computed
//! once; a placement then costs a few dozen multiply-adds per point. The
//! points are the places of interest and every point the rules sample (the
//! web potential near electronics), recorded once from a full assessment.
//!
//! Exact for powered bars without an offset (the planner's own candidates):
//! the plans shown are re-assessed with the full model. Passive devices and
//! offsets are non-linear (residual, onset); with them the ranking uses the
//! linear part (η) and the re-assessment decides.
//!
//! | symbol | meaning | unit |
//! | --- | --- | --- |
//! | η | bar efficiency | 1 |
//! | σ_i, s_i | density and arc length of charge entry i | C/m², m |
//! | G_e(p) | field / potential per unit density of piece e | V/m, V per C/m² |
//!
//! Candidates keep [`CONDUCTOR_CLEARANCE`] bar distances from every grounded
//! conductor (`candidates`): grid positions that do not are refused and
//! listed with the reason ([`Plan::refused`]); a given list with such a
//! position is refused as a whole ([`PlanError::CandidateNearConductor`]).
//!
//! Search: every combination for N ≤ 3 (the proven optimum over the
//! candidate set), the profiles' rules computed once for the placements
//! that differ only in the sides of bars (`search` and `placement` say why
//! that is exact); for larger N a greedy start (add the best bar one at a
//! time) with local improvement (swap one bar for another while it helps),
//! which is heuristic. The precomputed influences and the exhaustive search
//! announce their progress ([`crate::progress::Task::Influences`],
//! [`crate::progress::Task::Plan`]).
//!
//! ## Reference
//! Superposition (Coulomb's law); bar models and placement rules: K.
//! Robinson, PFFC "Static Beat" (FACTS.md "Static eliminators").

use crate::assess::{Assessment, Finding, Subject, ThresholdProfile};
use crate::field::{FieldError, Scene};
use crate::model::{EliminatorKind, Line, NodeKind, Side};
use crate::units::{Dim, Meters};
use rayon::prelude::*;

mod apply;
mod candidates;
mod influence;
mod placement;
mod search;
#[cfg(test)]
mod tests;

pub use apply::{apply_to_yaml, planning_line};
pub use candidates::{
    CONDUCTOR_CLEARANCE, Candidate, GroundedConductor, MAX_CANDIDATES, MAX_CANDIDATES_FILE_BYTES,
    Refusal, Refused, apply, candidates, candidates_and_refusals, clearance, read_candidates,
    refusal,
};
pub use search::{CLEARANCE_CAP, MAX_EXHAUSTIVE, binomial, combinations};

use influence::Influence;
use search::{Score, Scored};

/// Checked planner settings.
#[derive(Debug, Clone, PartialEq)]
pub struct PlanSettings {
    /// Exactly this many bars, or
    pub bars: Option<usize>,
    /// the fewest bars up to this many that pass.
    pub max_bars: usize,
    /// Kind of the planner's own candidates.
    pub kind: EliminatorKind,
    /// Bar distance of the planner's own candidates [m].
    pub distance: Meters,
    /// Spacing of the planner's own candidates along the spans [m].
    pub spacing: Meters,
    /// Only these spans (indices); all when empty.
    pub spans: Vec<usize>,
    /// An explicit candidate list instead of the planner's own.
    pub candidates: Option<Vec<Candidate>>,
    /// How many plans to show.
    pub top: usize,
}

impl PlanSettings {
    /// Defaults: up to 3 powered bars at 40 mm, candidates every 100 mm, top 5.
    pub fn new() -> Self {
        PlanSettings {
            bars: None,
            max_bars: 3,
            kind: EliminatorKind::Powered,
            distance: 0.04,
            spacing: 0.1,
            spans: Vec::new(),
            candidates: None,
            top: 5,
        }
    }
}

impl Default for PlanSettings {
    fn default() -> Self {
        PlanSettings::new()
    }
}

/// A placement and how it fares.
#[derive(Debug, Clone, PartialEq)]
pub struct PlanOption {
    /// Indices into `Plan::candidates`, ordered by span, position and side.
    pub bars: Vec<usize>,
    /// For each bar of `bars`, the sides it may take with the same score
    /// (the plan holds every combination; its own side first).
    pub sides: Vec<Vec<Side>>,
    /// Findings by verdict: pass, warn, fail (uncertain ones counted as
    /// failing).
    pub counts: [usize; 3],
    /// The largest margin over every finding.
    pub worst_margin: f64,
    /// The full assessment with these bars fitted.
    pub assessment: Assessment,
    /// The line the assessment is of (the planner's line with these bars
    /// placed): its subjects index into this line.
    pub placed: Line,
}

/// Whether two subjects, of `a_line` and `b_line`, are the same thing
/// (eliminators compared by id, as placing bars renumbers them).
fn same_subject(a_line: &Line, a: &Subject, b_line: &Line, b: &Subject) -> bool {
    fn id(l: &Line, i: usize) -> Option<&str> {
        l.eliminators.get(i).map(|e| e.id.as_str())
    }
    match (*a, *b) {
        (Subject::Eliminator(i), Subject::Eliminator(j)) => {
            id(a_line, i).is_some() && id(a_line, i) == id(b_line, j)
        }
        (Subject::EliminatorPair(i, k), Subject::EliminatorPair(j, m)) => {
            id(a_line, i).is_some()
                && id(a_line, k).is_some()
                && id(a_line, i) == id(b_line, j)
                && id(a_line, k) == id(b_line, m)
        }
        (a, b) => a == b,
    }
}

impl PlanOption {
    /// This plan's finding for the same rule and subject as `f`, a finding
    /// of the assessment of `line` (the line without new bars).
    pub fn after(&self, line: &Line, f: &Finding) -> Option<&Finding> {
        self.assessment.findings.iter().find(|g| {
            g.profile == f.profile
                && g.rule == f.rule
                && same_subject(line, &f.subject, &self.placed, &g.subject)
        })
    }
}

/// The planner's answer.
#[derive(Debug, Clone, PartialEq)]
pub struct Plan {
    /// The candidate positions searched.
    pub candidates: Vec<Candidate>,
    /// The best plans, best first (each re-assessed with the full model).
    pub options: Vec<PlanOption>,
    /// The assessment without new bars.
    pub before: Assessment,
    /// Number of bars in the best plan.
    pub bars: usize,
    /// The most bars searched.
    pub max_bars: usize,
    /// Placements evaluated.
    pub evaluated: usize,
    /// Whether the search was exhaustive (the optimum over the candidates).
    pub exhaustive: bool,
    /// What the search found.
    pub outcome: PlanOutcome,
    /// Grid positions refused for their clearance from grounded conductors
    /// (empty for a given candidate list, which is refused as a whole
    /// instead: [`PlanError::CandidateNearConductor`]).
    pub refused: Vec<Refused>,
    /// The settings searched with (kind, distance, spacing of the grid,
    /// or the given list).
    pub settings: PlanSettings,
    /// When no placement passes: what blocks every placement.
    pub dead_end: Option<DeadEnd>,
}

/// Why no placement passes: the findings that still fail with a bar at
/// every allowed candidate position at once.
#[derive(Debug, Clone, PartialEq)]
pub struct DeadEnd {
    /// Bars placed for the test: one at every allowed candidate position.
    pub positions: usize,
    /// Failing findings with them, by the superposition the search uses
    /// (without the conductors' solve) …
    pub fails_fast: usize,
    /// … and by the full model.
    pub fails_full: usize,
    /// The failing findings, each with its cause (the eliminators' own
    /// findings about so many bars left out).
    pub blockers: Vec<Blocker>,
}

/// A finding no placement can bring within its failure limit.
#[derive(Debug, Clone, PartialEq)]
pub struct Blocker {
    /// Which finding.
    pub finding: FindingRef,
    /// Its value with a bar at every allowed position, SI [unit of `dim`].
    pub value: f64,
    /// Its failure limit, SI.
    pub limit: f64,
    /// Dimension of value and limit.
    pub dim: Dim,
    /// Why the bars cannot help.
    pub cause: BlockerCause,
}

/// Why a finding fails whatever the bars.
#[derive(Debug, Clone, PartialEq)]
pub enum BlockerCause {
    /// The charge on the first stretch of a span, between the node that
    /// charges it and the first allowed bar position, exceeds the limit.
    UpstreamOfBars {
        /// Span index.
        span: usize,
        /// Length of the stretch [m]: to the first allowed bar position on
        /// the span, or the whole span when none is allowed there.
        stretch: Meters,
        /// Whether a bar is allowed anywhere on the span.
        bar_on_span: bool,
        /// How close to the node a bar may come by the placement rules
        /// (three bar distances from a conducting roller) [m], if a rule
        /// applies.
        keep_clear: Option<Meters>,
        /// The largest density on the stretch (across-web peak) [C/m²].
        density: f64,
        /// The id of the node the span leaves, if it has one.
        node: Option<String>,
        /// Where the charge entry that charges the stretch applies, as the
        /// line names it (`R3`, `start`), if one does.
        charged_at: Option<String>,
    },
    /// A point's field or what follows from it; `span` is the span with
    /// the largest share of the field there (its label).
    PointField {
        /// The span with the largest share, if known.
        span: Option<String>,
    },
    /// A roller or conductor charged by the web.
    ChargedConductor,
    /// A property of the web itself, which bars do not change.
    WebProperty,
    /// Another finding the allowed bar positions do not reach.
    NotReached,
}

impl Plan {
    /// The bars of the best plan, if there is one.
    pub fn best_bars(&self) -> Option<Vec<Candidate>> {
        let best = self.options.first()?;
        Some(
            best.bars
                .iter()
                .map(|&b| self.candidates[b].clone())
                .collect(),
        )
    }

    /// The line with the best plan's bars placed (readings converted to
    /// charge entries, as the planner worked), if there is a best plan.
    pub fn placed_line(&self, line: &Line, scene: &Scene) -> Result<Option<Line>, PlanError> {
        match self.best_bars() {
            Some(bars) => Ok(Some(apply(&planning_line(line, scene)?, &bars))),
            None => Ok(None),
        }
    }
}

/// What the search found, for the words in `report::plan_words`.
#[derive(Debug, Clone, PartialEq)]
pub enum PlanOutcome {
    /// The best plan brings every rule within its failure limit.
    AllPass,
    /// No placement searched passes; the best one leaves `fails` failing
    /// findings, the first of them `first_failing` (subjects of the best
    /// plan's placed line).
    NoPass {
        /// Failing findings with the best plan.
        fails: usize,
        /// The first failing finding with the best plan.
        first_failing: Option<FindingRef>,
        /// Every failing finding with the best plan.
        failing: Vec<FindingRef>,
    },
    /// No placement could be evaluated.
    Nothing,
}

/// Which finding: its profile, rule and subject.
#[derive(Debug, Clone, PartialEq)]
pub struct FindingRef {
    /// Threshold profile.
    pub profile: std::sync::Arc<str>,
    /// Rule in the profile.
    pub rule: std::sync::Arc<str>,
    /// Place or item the rule was applied to.
    pub subject: crate::assess::Subject,
}

/// Why planning failed.
#[derive(Debug, thiserror::Error)]
pub enum PlanError {
    /// The field solver failed.
    #[error(transparent)]
    Field(#[from] FieldError),
    /// The readings, or the assessment of a placement, failed.
    #[error(transparent)]
    Pipeline(#[from] crate::pipeline::PipelineError),
    /// Converting the meter readings failed.
    #[error(transparent)]
    Readings(#[from] crate::readings::ReadingsError),
    /// Nothing to place bars on: no candidate was given and the placement
    /// rules leave no position on the spans searched.
    #[error(
        "no candidate position for a bar: every span is too short or too close to its rollers or to grounded conductors for a bar at this distance: lower the bar distance or the candidate spacing, or give a candidate list"
    )]
    NoCandidatePositions,
    /// The planner's own grid has more positions than [`MAX_CANDIDATES`]
    /// before the placement rules (a long line at a fine spacing).
    #[error(
        "the candidate grid has {count} positions before the placement rules: the limit is {MAX_CANDIDATES}, as the search is combinatorial (C(n, N) placements of N bars among n candidates): widen the candidate spacing or search fewer spans"
    )]
    TooManyCandidates {
        /// Positions on the grid.
        count: usize,
    },
    /// A candidate of a given list comes closer to a grounded conductor
    /// than [`CONDUCTOR_CLEARANCE`] bar distances.
    #[error(transparent)]
    CandidateNearConductor(Box<CandidateTooClose>),
}

/// A candidate of a given list that comes closer to a grounded conductor
/// than [`CONDUCTOR_CLEARANCE`] bar distances, with what the message names.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error(
    "candidate {number} of the list ({span} at {along}, {side}, {bar} from the web) is {distance} from grounded {kind} {id}, closer than {clearance} ({CONDUCTOR_CLEARANCE} bar distances, the clearance kept from rollers the web touches): move the bar away from {id} or remove it from the list"
)]
pub struct CandidateTooClose {
    /// 1-based position in the list.
    pub number: usize,
    /// Span label.
    pub span: String,
    /// Distance along the span, formatted.
    pub along: String,
    /// `above` or `below`.
    pub side: &'static str,
    /// Bar to web, formatted.
    pub bar: String,
    /// Distance to the conductor, formatted.
    pub distance: String,
    /// `roller`, `plate`, `box`, `cylinder` or `person`.
    pub kind: &'static str,
    /// The conductor's id.
    pub id: String,
    /// The clearance, formatted.
    pub clearance: String,
}

/// The given candidate list, refused as a whole at its first candidate too
/// close to a grounded conductor.
fn check_list(line: &Line, list: &[Candidate]) -> Result<(), PlanError> {
    use crate::units::{Dim, format_quantity};
    for (i, c) in list.iter().enumerate() {
        let Some(Refusal::NearConductor {
            conductor,
            distance,
            clearance,
        }) = refusal(line, c)
        else {
            continue;
        };
        let len = |v: f64| format_quantity(v, Dim::Length);
        return Err(PlanError::CandidateNearConductor(Box::new(
            CandidateTooClose {
                number: i + 1,
                span: line.path.spans[c.span].label(),
                along: len(c.along),
                side: c.side.text(),
                bar: len(c.distance),
                distance: len(distance),
                kind: conductor.kind(line),
                id: conductor.id(line).to_string(),
                clearance: len(clearance),
            },
        )));
    }
    Ok(())
}

/// The full assessment of a line variant (readings, passive onset and
/// all) through the pipeline, in the line's scene.
pub fn full_assessment(
    scene: &Scene,
    line: &Line,
    profiles: &[ThresholdProfile],
) -> Result<Assessment, PlanError> {
    Ok(crate::pipeline::evaluate(scene, line, profiles)?.assessment)
}

/// A finding's reference.
fn finding_ref(f: &Finding) -> FindingRef {
    FindingRef {
        profile: f.profile.clone(),
        rule: f.rule.clone(),
        subject: f.subject,
    }
}

/// Searches placements. `progress` is called with (done, total) now and then.
pub fn plan(
    line: &Line,
    profiles: &[ThresholdProfile],
    st: &PlanSettings,
    scene: &Scene,
    progress: &(dyn Fn(usize, usize) + Sync),
) -> Result<Plan, PlanError> {
    let original = line;
    let planning = planning_line(line, scene)?;
    let line = &planning;
    let (cands, refused) = match &st.candidates {
        Some(list) => {
            check_list(line, list)?;
            (list.clone(), Vec::new())
        }
        None => {
            let count = candidates::grid_positions(line, st);
            if count > MAX_CANDIDATES {
                return Err(PlanError::TooManyCandidates { count });
            }
            candidates_and_refusals(line, st)
        }
    };
    if cands.is_empty() {
        return Err(PlanError::NoCandidatePositions);
    }
    let clearances: Vec<f64> = cands
        .iter()
        .map(|c| clearance(line, c, CLEARANCE_CAP))
        .collect();
    // The assessment without new bars and, beside it, every point the
    // rules ask for; then the superposition over them.
    let (before, points) = rayon::join(
        || full_assessment(scene, line, profiles),
        || influence::sampled_points(line, scene, profiles),
    );
    let (before, points) = (before?, points?);
    let mut inf = Influence::build(line, points, &cands, scene)?;
    inf.learn_order(|fast| placement::ask_all(line, fast, profiles));

    let scorer = placement::Scorer::new(line, &cands, &clearances, &inf, profiles);
    let scratch = scorer.scratch();
    let class = placement::side_classes(&cands);
    let shared = |sc: &mut placement::Scratch, bars: &[usize]| scorer.shared(sc, bars);
    let finish = |sc: &mut placement::Scratch, bars: &[usize], sh: &placement::Shared| {
        scorer.finish(sc, bars, sh)
    };
    let evaluate = |sc: &mut placement::Scratch, bars: &[usize]| scorer.score(sc, bars);
    let keep = st.top.max(1);

    let n_cand = cands.len();
    let sizes: Vec<usize> = match st.bars {
        Some(n) => vec![n],
        None => (1..=st.max_bars.max(1)).collect(),
    };
    // Every size searched goes into one list: when no size passes, the
    // best partial plan is the best over all of them.
    let mut ranked: Vec<Scored> = Vec::new();
    let mut evaluated = 0usize;
    let mut exhaustive = true;
    let mut max_size = 0;
    for &n in &sizes {
        // Room for every side variant of the `keep` best plans.
        let room = keep.saturating_mul(1 << n.min(3));
        let (found, count) = if search::is_exhaustive(n, n_cand) {
            search::exhaustive(n, &class, room, &scratch, &shared, &finish, progress)
        } else {
            exhaustive = false;
            search::greedy(n, n_cand, &scratch, &evaluate, progress)
        };
        evaluated += count;
        max_size = n;
        let passes = found.iter().any(|f| f.1.fails == 0);
        ranked.extend(found);
        if st.bars.is_none() && passes {
            break;
        }
    }
    ranked.sort_by(search::order);
    let mut merged = search::merge_sides(&ranked, &cands);
    merged.truncate(keep);
    // Re-assess the best plans with the full model (in parallel, kept in
    // the search's order).
    let mut options: Vec<(Score, PlanOption)> = merged
        .into_par_iter()
        .map(|m| -> Result<(Score, PlanOption), PlanError> {
            let placed = apply(
                line,
                &m.bars.iter().map(|&b| cands[b].clone()).collect::<Vec<_>>(),
            );
            let a = full_assessment(scene, &placed, profiles)?;
            Ok((
                search::score(&a, &m.bars, &cands, &clearances, line),
                PlanOption {
                    bars: m.bars,
                    sides: m.sides,
                    counts: a.counts().pass_warn_exceeding(),
                    worst_margin: a.worst_margin(),
                    assessment: a,
                    placed,
                },
            ))
        })
        .collect::<Result<Vec<_>, _>>()?;
    // A stable sort: ties keep the search's order.
    options.sort_by(|a, b| {
        if search::better(&a.0, &b.0) {
            std::cmp::Ordering::Less
        } else if search::better(&b.0, &a.0) {
            std::cmp::Ordering::Greater
        } else {
            std::cmp::Ordering::Equal
        }
    });
    let options: Vec<PlanOption> = options.into_iter().map(|(_, o)| o).collect();
    let outcome = match options.first() {
        Some(best) if best.counts[2] == 0 => PlanOutcome::AllPass,
        Some(best) => {
            let failing: Vec<FindingRef> = best
                .assessment
                .findings
                .iter()
                .filter(|f| f.verdict.exceeds())
                .map(finding_ref)
                .collect();
            PlanOutcome::NoPass {
                fails: best.counts[2],
                first_failing: failing.first().cloned(),
                failing,
            }
        }
        None => PlanOutcome::Nothing,
    };
    let dead_end = match outcome {
        PlanOutcome::AllPass => None,
        _ => Some(dead_end(
            original,
            line,
            &cands,
            profiles,
            scene,
            &|bars| scorer.score(&mut scorer.scratch(), bars),
        )?),
    };
    let settings = st.clone();
    Ok(Plan {
        candidates: cands,
        bars: options.first().map_or(0, |o| o.bars.len()),
        max_bars: max_size,
        options,
        before,
        evaluated,
        exhaustive,
        outcome,
        refused,
        settings,
        dead_end,
    })
}

/// One candidate at every allowed position (the first listed there: above
/// the web where both sides are allowed), as indices.
fn one_per_position(cands: &[Candidate]) -> Vec<usize> {
    let mut seen: Vec<(usize, u64)> = Vec::new();
    let mut out = Vec::new();
    for (i, c) in cands.iter().enumerate() {
        let key = (c.span, c.along.to_bits());
        if !seen.contains(&key) {
            seen.push(key);
            out.push(i);
        }
    }
    out
}

/// What blocks every placement: a bar at every allowed position at once,
/// scored by the superposition (`evaluate`) and assessed with the full
/// model; each finding that still fails (other than the eliminators' own)
/// with its cause. `original` names the charge entries as the user wrote
/// them; `line` is the planner's line.
fn dead_end(
    original: &Line,
    line: &Line,
    cands: &[Candidate],
    profiles: &[ThresholdProfile],
    scene: &Scene,
    evaluate: &dyn Fn(&[usize]) -> Option<Score>,
) -> Result<DeadEnd, PlanError> {
    let all = one_per_position(cands);
    let fails_fast = evaluate(&all).map_or(0, |s| s.fails);
    let placed = apply(
        line,
        &all.iter().map(|&b| cands[b].clone()).collect::<Vec<_>>(),
    );
    let a = full_assessment(scene, &placed, profiles)?;
    let charge = crate::charge::charge_profile(&placed);
    let blockers = a
        .findings
        .iter()
        .filter(|f| f.verdict.exceeds() && &*f.profile != crate::assess::eliminators::PROFILE)
        .map(|f| Blocker {
            finding: finding_ref(f),
            value: f.value,
            limit: f.fail.unwrap_or(f.limit),
            dim: f.dim,
            cause: cause(original, line, cands, &charge, f),
        })
        .collect();
    Ok(DeadEnd {
        positions: all.len(),
        fails_fast,
        fails_full: a.counts().fail,
        blockers,
    })
}

/// Why `f` fails with a bar at every allowed position (`charge` is the
/// charge with them).
fn cause(
    original: &Line,
    line: &Line,
    cands: &[Candidate],
    charge: &crate::charge::ChargeProfile,
    f: &Finding,
) -> BlockerCause {
    match f.subject {
        Subject::Span(k) if f.dim == Dim::SurfaceChargeDensity => {
            let Some(span) = line.path.spans.get(k) else {
                return BlockerCause::NotReached;
            };
            let first = cands
                .iter()
                .filter(|c| c.span == k)
                .map(|c| c.along)
                .fold(f64::INFINITY, f64::min);
            let bar_on_span = first.is_finite();
            let stretch = if bar_on_span { first } else { span.length };
            let density = charge.peak_between(span.s_start, span.s_start + stretch);
            let limit = f.fail.unwrap_or(f.limit);
            if density < limit {
                return BlockerCause::NotReached;
            }
            let node = line.path.nodes.get(span.from_node);
            let keep_clear = node.and_then(|n| match n.kind {
                NodeKind::Roller { roller, .. }
                    if line.rollers[roller].earthing != crate::model::Earthing::Insulating =>
                {
                    cands
                        .iter()
                        .map(|c| CONDUCTOR_CLEARANCE * c.distance)
                        .reduce(f64::min)
                }
                _ => None,
            });
            // The entry that charges the stretch: the last one at or
            // before its end, named as the user wrote it.
            let entry = line
                .charge
                .iter()
                .filter(|e| e.s <= span.s_start + stretch)
                .max_by(|a, b| a.s.total_cmp(&b.s));
            let charged_at = entry.map(|e| {
                original
                    .charge
                    .iter()
                    .find(|o| o.s == e.s)
                    .map(|o| o.at.clone())
                    .unwrap_or_else(|| e.at.clone())
            });
            BlockerCause::UpstreamOfBars {
                span: k,
                stretch,
                bar_on_span,
                keep_clear,
                density,
                node: node.and_then(|n| n.id.clone()),
                charged_at,
            }
        }
        Subject::Span(_) => BlockerCause::NotReached,
        Subject::Point(_) => BlockerCause::PointField {
            span: f.contributions.first().map(|c| c.span.clone()),
        },
        Subject::Roller(_) | Subject::Conductor(_) => BlockerCause::ChargedConductor,
        Subject::Web => BlockerCause::WebProperty,
        Subject::Eliminator(_) | Subject::EliminatorPair(..) => BlockerCause::NotReached,
    }
}
