//! # Scoring one placement by the superposition (plan stage)
//!
//! A placement's [`Score`] is what [`crate::assess::score`] gives for the
//! line with its bars fitted, the field answered by the precomputed
//! superposition ([`Fast`]). It is formed in two parts:
//!
//! - the **shared part**: the threshold profiles' rules
//!   ([`crate::assess::profile_score`]) and the charge profile. It reads the
//!   bars only through the charge profile (each bar's arc length s, kind,
//!   efficiency η and offset/residual) and the superposition (s and η):
//!   never their side, bar distance or id;
//! - the **own part**: the built-in eliminator checks
//!   ([`crate::assess::eliminators::eliminator_score`]), which read the
//!   sides (two bars on opposite sides), the bar distance and the zones at
//!   the bar, and the charge arriving at each bar (from the shared charge
//!   profile).
//!
//! The score is the shared part's failing findings plus the own part's, and
//! the larger of the two worst margins — the same numbers, added and
//! compared in the same order, as [`crate::assess::score`] forms them, so
//! the score is bit for bit the one a single evaluation gives.
//!
//! Candidates that differ only in their side are one **side class**
//! ([`side_classes`]): every placement whose bars fall in the same classes
//! (the same multiset of classes) has the same shared part, which the
//! exhaustive search therefore computes once per multiset — for the
//! planner's own grid, with both sides at every position, once for up to
//! 2ᴺ placements of N bars.
//!
//! What does not change from one placement to the next is made once: each
//! candidate's eliminator, and where each rule applies on each span
//! ([`crate::assess::span_scopes`]: bars change neither spans nor zones).
//! What does is written into a [`Scratch`] per worker thread (the line with
//! the bars fitted, the superposition's field, the field at the line's
//! points), so scoring a placement allocates little. Neither changes a
//! score: the same numbers are formed in the same order.

use super::Candidate;
use super::influence::{Fast, FastBuffers, Influence};
use super::search::{Score, score_of};
use crate::assess::{SpanScopes, ThresholdProfile};
use crate::charge::ChargeProfile;
use crate::field::{FieldAt, FieldMap};
use crate::model::{Eliminator, EliminatorKind, Line};
use std::collections::HashMap;

/// For each candidate, the index of the first candidate equal to it in
/// everything but its side (its side class).
pub(super) fn side_classes(cands: &[Candidate]) -> Vec<usize> {
    let mut first: HashMap<(u8, usize, [u64; 4]), usize> = HashMap::new();
    cands
        .iter()
        .enumerate()
        .map(|(i, c)| {
            let kind = match c.kind {
                EliminatorKind::Powered => 0,
                EliminatorKind::Passive => 1,
            };
            let bits = [
                c.along.to_bits(),
                c.distance.to_bits(),
                c.efficiency.to_bits(),
                c.residual.to_bits(),
            ];
            *first.entry((kind, c.span, bits)).or_insert(i)
        })
        .collect()
}

/// The shared part of a placement's score (see the module doc).
pub(super) struct Shared {
    /// Failing findings of the threshold profiles' rules.
    fails: usize,
    /// Their worst margin [1].
    margin: f64,
    /// The charge profile with the bars fitted.
    charge: ChargeProfile,
}

/// What a worker thread overwrites while it scores placements, kept from
/// one placement to the next so that scoring one allocates (almost)
/// nothing: a copy of the line whose eliminators are replaced, the
/// superposition's buffers and the field at the line's points.
#[derive(Debug, Clone)]
pub(super) struct Scratch {
    /// The planner's line with the placement's bars fitted.
    placed: Line,
    /// The superposition's bars and field.
    fast: FastBuffers,
    /// The field at the line's points (`line.points`).
    points: FieldMap,
}

/// Scores placements of the candidates on the planner's line.
pub(super) struct Scorer<'a> {
    /// The planner's line (its own eliminators stay).
    line: &'a Line,
    /// The candidates.
    cands: &'a [Candidate],
    /// Each candidate's clearance [m].
    clearances: &'a [f64],
    /// The superposition.
    inf: &'a Influence,
    /// The threshold profiles.
    profiles: &'a [ThresholdProfile],
    /// Each candidate as the eliminator it places (without id: the score
    /// does not read ids), made once.
    bars: Vec<Eliminator>,
    /// Where each rule applies on each span: the same for every placement
    /// (bars change neither the spans nor the zones), worked out once.
    scopes: SpanScopes,
}

impl<'a> Scorer<'a> {
    /// A scorer of placements of `cands` (with their `clearances` [m]) on
    /// `line`, the field from `inf`, the rules of `profiles`.
    pub(super) fn new(
        line: &'a Line,
        cands: &'a [Candidate],
        clearances: &'a [f64],
        inf: &'a Influence,
        profiles: &'a [ThresholdProfile],
    ) -> Self {
        Scorer {
            line,
            cands,
            clearances,
            inf,
            profiles,
            bars: cands.iter().map(|c| c.eliminator(line, "")).collect(),
            scopes: crate::assess::span_scopes(line, profiles),
        }
    }

    /// A scratch for one worker thread.
    pub(super) fn scratch(&self) -> Scratch {
        Scratch {
            placed: self.line.clone(),
            fast: FastBuffers::default(),
            points: FieldMap {
                points: Vec::with_capacity(self.line.points.len()),
            },
        }
    }

    /// Fits `bars` to the scratch line (its eliminators are replaced, so
    /// no line is cloned per placement): the line's own eliminators, then
    /// the bars in the order given, sorted stably along the path.
    fn place(&self, placed: &mut Line, bars: &[usize]) {
        placed.eliminators.clear();
        placed
            .eliminators
            .extend(self.line.eliminators.iter().cloned());
        placed
            .eliminators
            .extend(bars.iter().filter_map(|&b| self.bars.get(b).cloned()));
        placed.eliminators.sort_by(|a, b| a.s.total_cmp(&b.s));
    }

    /// The shared part for `bars` (the same for every placement in their
    /// side classes); `None` when a field the rules ask for is not
    /// precomputed.
    pub(super) fn shared(&self, scratch: &mut Scratch, bars: &[usize]) -> Option<Shared> {
        self.place(&mut scratch.placed, bars);
        let placed = &scratch.placed;
        let charge = crate::charge::charge_profile(placed);
        let fast = Fast::in_buffers(
            self.inf,
            &placed.eliminators,
            std::mem::take(&mut scratch.fast),
        );
        let sc = rules_score(
            placed,
            &charge,
            &fast,
            &mut scratch.points,
            self.profiles,
            Some(&self.scopes),
        );
        scratch.fast = fast.into_buffers();
        let sc = sc?;
        Some(Shared {
            fails: sc.fails,
            margin: sc.worst_margin,
            charge,
        })
    }

    /// The score of `bars`, whose side classes are those `shared` was
    /// computed for.
    pub(super) fn finish(&self, scratch: &mut Scratch, bars: &[usize], shared: &Shared) -> Score {
        self.place(&mut scratch.placed, bars);
        let (fails, worst) =
            crate::assess::eliminators::eliminator_score(&scratch.placed, &shared.charge);
        score_of(
            shared.fails + fails,
            shared.margin.max(worst),
            bars,
            self.cands,
            self.clearances,
            self.line,
        )
    }

    /// The score of one placement, both parts computed for it.
    pub(super) fn score(&self, scratch: &mut Scratch, bars: &[usize]) -> Option<Score> {
        let shared = self.shared(scratch, bars)?;
        Some(self.finish(scratch, bars, &shared))
    }
}

/// The threshold profiles' part of the score of `line` with the field of
/// `fast`: the field at the line's points (written into `points`, its
/// allocation reused), then the rules (`None` when a field asked for is not
/// precomputed). `scopes`, when given, are the rules' [`SpanScopes`] of
/// the line (the same result, sooner).
fn rules_score(
    line: &Line,
    charge: &ChargeProfile,
    fast: &Fast<'_>,
    points: &mut FieldMap,
    profiles: &[ThresholdProfile],
    scopes: Option<&SpanScopes>,
) -> Option<crate::assess::Score> {
    points.points.clear();
    for p in &line.points {
        points.points.push(fast.field_at(p.at, false).ok()?);
    }
    crate::assess::profile_score_in(line, charge, fast, points, profiles, scopes).ok()
}

/// Asks `fast` every question the shared part of a score asks, for `line`
/// as it is (for [`Influence::learn_order`]).
pub(super) fn ask_all(line: &Line, fast: &Fast<'_>, profiles: &[ThresholdProfile]) {
    let charge = crate::charge::charge_profile(line);
    let mut points = FieldMap { points: Vec::new() };
    let _ = rules_score(line, &charge, fast, &mut points, profiles, None);
}
