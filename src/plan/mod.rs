//! # Static-eliminator placement planner
//!
//! After the assessment: `(Line, profiles) → Plan`. Candidate bar positions
//! are laid along the free spans (or read from a list); each placement of N
//! bars is assessed with every rule in force and ranked by, in order: the
//! number of failing findings, the worst margin (value ÷ limit over every
//! finding), the number of bars, and how far upstream the bars sit.
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
//! candidate set); for larger N a greedy start (add the best bar one at a
//! time) with local improvement (swap one bar for another while it helps),
//! which is heuristic.
//!
//! ## Reference
//! Superposition (Coulomb's law); bar models and placement rules: K.
//! Robinson, PFFC "Static Beat" (FACTS.md "Static eliminators").

use crate::assess::{Assessment, ThresholdProfile, Verdict};
use crate::field::{FieldAt, FieldError, FieldMap, Scene};
use crate::model::{EliminatorKind, Line};
use crate::units::Meters;

mod apply;
mod candidates;
mod influence;
mod search;

pub use apply::{apply_to_yaml, planning_line};
pub use candidates::{
    CONDUCTOR_CLEARANCE, Candidate, GroundedConductor, MAX_CANDIDATES, MAX_CANDIDATES_FILE_BYTES,
    Refusal, Refused, apply, candidates, candidates_and_refusals, read_candidates, refusal,
};
pub use search::{MAX_EXHAUSTIVE, binomial, combinations};

use influence::{Fast, Influence};
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
    /// Indices into `Plan::candidates`.
    pub bars: Vec<usize>,
    /// Findings by verdict: pass, warn, fail.
    pub counts: [usize; 3],
    /// The largest margin over every finding.
    pub worst_margin: f64,
    /// The full assessment with these bars fitted.
    pub assessment: Assessment,
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
    /// findings, the first of them `first_failing`.
    NoPass {
        /// Failing findings with the best plan.
        fails: usize,
        /// The first failing finding with the best plan.
        first_failing: Option<FindingRef>,
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

/// Searches placements. `progress` is called with (done, total) now and then.
pub fn plan(
    line: &Line,
    profiles: &[ThresholdProfile],
    st: &PlanSettings,
    scene: &Scene,
    progress: &(dyn Fn(usize, usize) + Sync),
) -> Result<Plan, PlanError> {
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
    let before = full_assessment(scene, line, profiles)?;
    // Every point the rules ask for, then the superposition over them.
    let points = influence::sampled_points(line, scene, profiles)?;
    let inf = Influence::build(line, points, &cands, scene)?;

    // One placement: `placed` is a scratch copy of the line whose
    // eliminators are replaced (so no line is cloned per placement).
    let base_elims = line.eliminators.clone();
    let evaluate_in = |placed: &mut Line, bars: &[usize]| -> Option<Score> {
        placed.eliminators.clear();
        placed.eliminators.extend(base_elims.iter().cloned());
        for (i, &b) in bars.iter().enumerate() {
            placed
                .eliminators
                .push(cands[b].eliminator(line, &format!("PB{}", i + 1)));
        }
        placed.eliminators.sort_by(|a, b| a.s.total_cmp(&b.s));
        let charge = crate::charge::charge_profile(placed);
        let fast = Fast::new(&inf, &placed.eliminators);
        let pts = FieldMap {
            points: placed
                .points
                .iter()
                .map(|p| fast.field_at(p.at, false))
                .collect::<Result<Vec<_>, _>>()
                .ok()?,
        };
        let sc = crate::assess::score(placed, &charge, &fast, &pts, profiles).ok()?;
        Some((
            sc.fails,
            sc.worst_margin,
            bars.len(),
            search::upstream(bars, &cands, line),
        ))
    };
    let evaluate = |bars: &[usize]| -> Option<Score> { evaluate_in(&mut line.clone(), bars) };
    let keep = st.top.max(1);

    let n_cand = cands.len();
    let sizes: Vec<usize> = match st.bars {
        Some(n) => vec![n],
        None => (1..=st.max_bars.max(1)).collect(),
    };
    let mut ranked: Vec<Scored> = Vec::new();
    let mut evaluated = 0usize;
    let mut exhaustive = true;
    let mut chosen_size = 0;
    for &n in &sizes {
        let (mut found, count) = if search::is_exhaustive(n, n_cand) {
            search::exhaustive(n, n_cand, keep, line, &evaluate_in, progress)
        } else {
            exhaustive = false;
            search::greedy(n, n_cand, &evaluate)
        };
        evaluated += count;
        found.sort_by(|a, b| search::order(&a.1, &b.1));
        found.truncate(keep);
        let passes = found.first().is_some_and(|f| f.1.0 == 0);
        ranked = found;
        chosen_size = n;
        if st.bars.is_none() && passes {
            break;
        }
    }
    // Re-assess the best plans with the full model.
    let mut options: Vec<PlanOption> = Vec::new();
    for (bars, _) in &ranked {
        let placed = apply(
            line,
            &bars.iter().map(|&b| cands[b].clone()).collect::<Vec<_>>(),
        );
        let a = full_assessment(scene, &placed, profiles)?;
        options.push(PlanOption {
            bars: bars.clone(),
            counts: a.counts().as_array(),
            worst_margin: a.worst_margin(),
            assessment: a,
        });
    }
    options.sort_by(|a, b| {
        search::order(
            &search::score(&a.assessment, &a.bars, &cands, line),
            &search::score(&b.assessment, &b.bars, &cands, line),
        )
    });
    let outcome = match options.first() {
        Some(best) if best.counts[2] == 0 => PlanOutcome::AllPass,
        Some(best) => PlanOutcome::NoPass {
            fails: best.counts[2],
            first_failing: best
                .assessment
                .findings
                .iter()
                .find(|f| f.verdict == Verdict::Fail)
                .map(|f| FindingRef {
                    profile: f.profile.clone(),
                    rule: f.rule.clone(),
                    subject: f.subject,
                }),
        },
        None => PlanOutcome::Nothing,
    };
    Ok(Plan {
        candidates: cands,
        options,
        before,
        bars: chosen_size,
        evaluated,
        exhaustive,
        outcome,
        refused,
    })
}
