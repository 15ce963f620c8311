//! Candidate bar positions for the planner (plan stage): the planner's own
//! grid along the free spans, the placement rule that keeps bars away from
//! rollers the web touches, and a line with chosen candidates fitted as
//! eliminators.
//!
//! The grid puts n = ⌊L / spacing⌋ (at least 1) positions at the centres of
//! n equal parts of a span of length L, on both sides of the web; a position
//! is dropped when it lies within three bar distances of a conducting roller
//! at either end of its span, or when the bar would sit inside a roller or
//! below the ground plane.

use super::PlanSettings;
use crate::model::geometry::meter_geometry;
use crate::model::{Earthing, Eliminator, EliminatorKind, Line, NodeKind, Side};
use crate::model::{
    PASSIVE_EFFICIENCY, PASSIVE_ONSET_VOLTAGE, PASSIVE_RESIDUAL, POWERED_EFFICIENCY,
    POWERED_ION_OUTPUT,
};
use crate::units::Meters;

/// A place a bar could go (an `eliminators` entry without an id).
#[derive(Debug, Clone, PartialEq)]
pub struct Candidate {
    /// Powered or passive.
    pub kind: EliminatorKind,
    /// Span index.
    pub span: usize,
    /// Distance along the span [m].
    pub along: Meters,
    /// Side.
    pub side: Side,
    /// Bar to web [m].
    pub distance: Meters,
    /// Efficiency η [1].
    pub efficiency: f64,
    /// Offset or residual [C/m²].
    pub residual: f64,
}

impl From<&Eliminator> for Candidate {
    /// The candidate at an eliminator's place (a candidate list read as
    /// `eliminators` entries).
    fn from(e: &Eliminator) -> Self {
        Candidate {
            kind: e.kind,
            span: e.span,
            along: e.along,
            side: e.side,
            distance: e.distance,
            efficiency: e.efficiency,
            residual: e.residual,
        }
    }
}

impl Candidate {
    /// The eliminator this candidate places, with an id.
    pub fn eliminator(&self, line: &Line, id: &str) -> Eliminator {
        Eliminator {
            id: id.to_string(),
            kind: self.kind,
            span: self.span,
            along: self.along,
            s: self.s(line),
            distance: self.distance,
            side: self.side,
            efficiency: self.efficiency,
            residual: self.residual,
            onset: match self.kind {
                EliminatorKind::Passive => Some(PASSIVE_ONSET_VOLTAGE / self.distance),
                EliminatorKind::Powered => None,
            },
            ion_output: POWERED_ION_OUTPUT,
        }
    }

    /// Arc length of the bar along the web path [m].
    pub fn s(&self, line: &Line) -> Meters {
        line.path.spans[self.span].s_start + self.along
    }
}

/// Bars this close to a conducting roller the web touches are not proposed
/// (three bar distances, the placement rule of the assessment).
fn too_close_to_roller(line: &Line, span: usize, along: f64, distance: f64) -> bool {
    let s = &line.path.spans[span];
    let conducting = |node: usize| match line.path.nodes[node].kind {
        NodeKind::Roller { roller, .. } => line.rollers[roller].earthing != Earthing::Insulating,
        NodeKind::Point(_) => false,
    };
    (conducting(s.from_node) && along < 3.0 * distance)
        || (conducting(s.to_node) && s.length - along < 3.0 * distance)
}

/// The planner's own candidates: every `spacing` along the chosen spans, on
/// both sides, where the placement rules allow a bar.
pub fn candidates(line: &Line, st: &PlanSettings) -> Vec<Candidate> {
    let (eff, res) = match st.kind {
        EliminatorKind::Powered => (POWERED_EFFICIENCY, 0.0),
        EliminatorKind::Passive => (PASSIVE_EFFICIENCY, PASSIVE_RESIDUAL),
    };
    let mut out = Vec::new();
    for (k, span) in line.path.spans.iter().enumerate() {
        if !st.spans.is_empty() && !st.spans.contains(&k) {
            continue;
        }
        let n = (span.length / st.spacing).floor() as usize;
        for i in 0..n.max(1) {
            let along = (i as f64 + 0.5) * span.length / n.max(1) as f64;
            if too_close_to_roller(line, k, along, st.distance) {
                continue;
            }
            for side in [Side::Above, Side::Below] {
                let (at, _) = meter_geometry(span, along, 0.0, st.distance, side);
                if line.point_problem(at).is_some() {
                    continue;
                }
                out.push(Candidate {
                    kind: st.kind,
                    span: k,
                    along,
                    side,
                    distance: st.distance,
                    efficiency: eff,
                    residual: res,
                });
            }
        }
    }
    out
}

/// The line with bars added (ids `PB1`, `PB2`, … — "planned bar" — skipping
/// any id the line already uses).
pub fn apply(line: &Line, cands: &[Candidate]) -> Line {
    let mut l = line.clone();
    let taken = |l: &Line, id: &str| {
        l.eliminators.iter().any(|e| e.id == id)
            || l.points.iter().any(|p| p.id == id)
            || l.rollers.iter().any(|r| r.id == id)
            || l.zones.iter().any(|z| z.id == id)
            || l.readings.iter().any(|r| r.id == id)
    };
    for (i, c) in cands.iter().enumerate() {
        let mut k = i + 1;
        let mut id = format!("PB{k}");
        while taken(&l, &id) {
            k += 1;
            id = format!("PB{k}");
        }
        l.eliminators.push(c.eliminator(line, &id));
    }
    l.eliminators.sort_by(|a, b| a.s.total_cmp(&b.s));
    l
}
