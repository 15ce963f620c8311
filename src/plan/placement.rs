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

use super::Candidate;
use super::influence::{Fast, Influence};
use super::search::{Score, score_of};
use crate::assess::ThresholdProfile;
use crate::charge::ChargeProfile;
use crate::field::{FieldAt, FieldMap};
use crate::model::{EliminatorKind, Line};
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

/// Scores placements of the candidates on the planner's line.
pub(super) struct Scorer<'a> {
    /// The planner's line (its own eliminators stay).
    pub line: &'a Line,
    /// The candidates.
    pub cands: &'a [Candidate],
    /// Each candidate's clearance [m].
    pub clearances: &'a [f64],
    /// The superposition.
    pub inf: &'a Influence,
    /// The threshold profiles.
    pub profiles: &'a [ThresholdProfile],
}

impl Scorer<'_> {
    /// Fits `bars` to `placed`, a scratch copy of the line (its eliminators
    /// are replaced, so no line is cloned per placement). The bars carry no
    /// id: the score does not read ids.
    fn place(&self, placed: &mut Line, bars: &[usize]) {
        placed.eliminators.clear();
        placed
            .eliminators
            .extend(self.line.eliminators.iter().cloned());
        placed.eliminators.extend(
            bars.iter()
                .map(|&b| self.cands[b].eliminator(self.line, "")),
        );
        placed.eliminators.sort_by(|a, b| a.s.total_cmp(&b.s));
    }

    /// The shared part for `bars` (the same for every placement in their
    /// side classes); `None` when a field the rules ask for is not
    /// precomputed.
    pub(super) fn shared(&self, placed: &mut Line, bars: &[usize]) -> Option<Shared> {
        self.place(placed, bars);
        let charge = crate::charge::charge_profile(placed);
        let fast = Fast::new(self.inf, &placed.eliminators);
        let sc = rules_score(placed, &charge, &fast, self.profiles)?;
        Some(Shared {
            fails: sc.fails,
            margin: sc.worst_margin,
            charge,
        })
    }

    /// The score of `bars`, whose side classes are those `shared` was
    /// computed for.
    pub(super) fn finish(&self, placed: &mut Line, bars: &[usize], shared: &Shared) -> Score {
        self.place(placed, bars);
        let (fails, worst) = crate::assess::eliminators::eliminator_score(placed, &shared.charge);
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
    pub(super) fn score(&self, placed: &mut Line, bars: &[usize]) -> Option<Score> {
        let shared = self.shared(placed, bars)?;
        Some(self.finish(placed, bars, &shared))
    }
}

/// The threshold profiles' part of the score of `line` with the field of
/// `fast`: the field at the line's points, then the rules (`None` when a
/// field asked for is not precomputed).
fn rules_score(
    line: &Line,
    charge: &ChargeProfile,
    fast: &Fast<'_>,
    profiles: &[ThresholdProfile],
) -> Option<crate::assess::Score> {
    let pts = FieldMap {
        points: line
            .points
            .iter()
            .map(|p| fast.field_at(p.at, false))
            .collect::<Result<Vec<_>, _>>()
            .ok()?,
    };
    crate::assess::profile_score(line, charge, fast, &pts, profiles).ok()
}

/// Asks `fast` every question the shared part of a score asks, for `line`
/// as it is (for [`Influence::learn_order`]).
pub(super) fn ask_all(line: &Line, fast: &Fast<'_>, profiles: &[ThresholdProfile]) {
    let charge = crate::charge::charge_profile(line);
    let _ = rules_score(line, &charge, fast, profiles);
}
