//! Candidate bar positions for the planner (plan stage): the planner's own
//! grid along the free spans, the placement rules that keep bars away from
//! rollers the web touches and from grounded conductors, and a line with
//! chosen candidates fitted as eliminators.
//!
//! The grid puts n = ⌊L / spacing⌋ (at least 1) positions at the centres of
//! n equal parts of a span of length L, on both sides of the web; a position
//! is dropped when it lies within three bar distances of a conducting roller
//! at either end of its span (measured along the span), or when the bar
//! would sit inside a roller or below the ground plane.
//!
//! ## Clearance from grounded conductors
//! A bar facing grounded metal sends its ions there instead of to the web,
//! and its field is screened. A position is *refused* (kept in a list with
//! its reason) when the bar — the segment across the web, y ∈ [−w/2, w/2],
//! at its position — comes closer than c = [`CONDUCTOR_CLEARANCE`] · d to a
//! grounded conductor: every grounded `conductors:` entry (plate, box,
//! cylinder, grounded person) and every grounded roller, on the web path or
//! not, except the two rollers that end the bar's own span (the along-span
//! rule above covers those, as the assessment's facing-roller check does).
//! The factor three is the one the assessment uses for rollers (common
//! practice; K. Robinson, PFFC "Static Beat": bars face the web on a free
//! span, not grounded metal).
//!
//! The distance test is exact for these convex shapes: the bar is within c
//! of a shape S exactly when it meets S ⊕ B(c), the shape grown by a ball of
//! radius c, whose support function is s_S(**d**) + c·**d**/|**d**|; the
//! intersection is decided by the test of `model::convex`. The distance shown
//! with a refusal is found by bisection on c to 1 µm.
//!
//! | symbol | meaning | unit |
//! | --- | --- | --- |
//! | d | bar-to-web distance | m |
//! | c | clearance from grounded conductors | m |
//! | w | web width | m |
//!
//! ## A given candidate list
//! `plan --candidates FILE` reads a YAML list of eliminator entries
//! ([`read_candidates`]), at most [`MAX_CANDIDATES_FILE_BYTES`] of it and at
//! most [`MAX_CANDIDATES`] entries: the search is combinatorial, C(n, N)
//! placements of N bars among n candidates.

use super::PlanSettings;
use crate::model::convex::{Convex, Vec3, intersects};
use crate::model::geometry::meter_geometry;
use crate::model::{ConductorShape, Earthing, Eliminator, EliminatorKind, Line, NodeKind, Side};
use crate::model::{
    PASSIVE_EFFICIENCY, PASSIVE_ONSET_VOLTAGE, PASSIVE_RESIDUAL, POWERED_EFFICIENCY,
    POWERED_ION_OUTPUT,
};
use crate::units::Meters;
use anyhow::{Result, bail};
use std::path::Path;

/// Largest candidates file read [bytes]. A candidate entry is a line of
/// about 80 bytes, so 1 MiB holds more entries than [`MAX_CANDIDATES`].
pub const MAX_CANDIDATES_FILE_BYTES: u64 = 1024 * 1024;

/// Most candidates in a given list, or on the planner's own grid [1]. The
/// search is combinatorial: with n = 5,000 there are 1.2·10⁷ pairs and
/// 2.1·10¹⁰ triples, so every N ≥ 2 is searched greedily (about N·n
/// placements per pass), and the superposition holds a field for every
/// piece of web between candidates at every sampled point. Measured on the
/// demo line with 5,000 candidates (release build, 2 shared cores, default
/// conductors): 60–110 s and 250 MB for `plan --bars 1` or `--bars 3`
/// (29,988 placements), nearly all of it building the superposition, about
/// 20 ms per candidate (1,000: 26 s; 2,000: 52 s).
pub const MAX_CANDIDATES: usize = 5000;

/// An example of a candidate list entry, for messages.
const EXAMPLE_ENTRY: &str =
    "`- {kind: powered, span: S3, position: 50 %, distance: 40 mm, side: above}`";

/// Reads the planner's candidate list at `path`: a YAML list of eliminator
/// entries without ids, checked against `line` (spans, positions, clearance
/// from rollers and the ground plane), at most [`MAX_CANDIDATES_FILE_BYTES`]
/// and [`MAX_CANDIDATES`] entries.
pub fn read_candidates(path: &Path, line: &Line) -> Result<Vec<Candidate>> {
    let shown = path.display();
    let text = crate::read::read_text_because(
        path,
        "candidates file",
        MAX_CANDIDATES_FILE_BYTES,
        &format!(
            "a candidates file is a short YAML list of at most {MAX_CANDIDATES} bar positions"
        ),
    )?;
    let empty = || {
        anyhow::anyhow!(
            "the candidates file '{shown}' holds no candidates: write a YAML list of eliminator entries, one per line, e.g. {EXAMPLE_ENTRY}"
        )
    };
    if crate::yaml::is_blank(&text) {
        return Err(empty());
    }
    let list = crate::model::parse_eliminator_list(&text, line)
        .map_err(|e| anyhow::Error::new(e).context(format!("invalid candidates file '{shown}'")))?;
    if list.is_empty() {
        return Err(empty());
    }
    if list.len() > MAX_CANDIDATES {
        bail!(
            "the candidates file '{shown}' holds {} candidates: the limit is {MAX_CANDIDATES}, as the search is combinatorial (C(n, N) placements of N bars among n candidates): keep the positions that matter",
            list.len()
        );
    }
    Ok(list.iter().map(Candidate::from).collect())
}

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

/// Bars keep this many bar distances from grounded conductors [1] (the
/// factor the assessment's facing-roller check uses; common practice).
pub const CONDUCTOR_CLEARANCE: f64 = 3.0;

/// Bisection steps for the distance shown with a refusal (the clearance
/// halved 30 times: below 1 µm for any clearance under 1 km).
const DISTANCE_STEPS: usize = 30;

/// A grounded conductor a bar keeps clear of.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum GroundedConductor {
    /// `line.rollers[i]`.
    Roller(usize),
    /// `line.conductors[i]`.
    Conductor(usize),
}

impl GroundedConductor {
    /// Its id on `line` (empty if out of range).
    pub fn id<'a>(&self, line: &'a Line) -> &'a str {
        match *self {
            GroundedConductor::Roller(i) => line.rollers.get(i).map(|r| r.id.as_str()),
            GroundedConductor::Conductor(i) => line.conductors.get(i).map(|c| c.id.as_str()),
        }
        .unwrap_or_default()
    }

    /// Its kind keyword: `roller`, or the `conductors:` shape (`plate`,
    /// `box`, `cylinder`, `person`).
    pub fn kind(&self, line: &Line) -> &'static str {
        match *self {
            GroundedConductor::Roller(_) => "roller",
            GroundedConductor::Conductor(i) => line
                .conductors
                .get(i)
                .map(|c| c.kind.text())
                .unwrap_or_default(),
        }
    }
}

/// Why a candidate position is refused.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Refusal {
    /// The bar comes closer than `clearance` to a grounded conductor.
    NearConductor {
        /// Which conductor (the nearest one that is too close).
        conductor: GroundedConductor,
        /// Shortest distance from the bar to it [m].
        distance: Meters,
        /// The clearance it must keep, [`CONDUCTOR_CLEARANCE`] bar distances [m].
        clearance: Meters,
    },
}

/// A candidate position and why it was refused.
#[derive(Debug, Clone, PartialEq)]
pub struct Refused {
    /// The position.
    pub candidate: Candidate,
    /// Why.
    pub reason: Refusal,
}

/// The bar as a segment across the web at its position [m].
struct Bar {
    ends: [Vec3; 2],
}

impl Convex for Bar {
    fn support(&self, d: Vec3) -> Vec3 {
        let along = |p: Vec3| p[0] * d[0] + p[1] * d[1] + p[2] * d[2];
        if along(self.ends[1]) > along(self.ends[0]) {
            self.ends[1]
        } else {
            self.ends[0]
        }
    }
    fn interior_point(&self) -> Vec3 {
        [0, 1, 2].map(|k| 0.5 * (self.ends[0][k] + self.ends[1][k]))
    }
}

/// A convex shape grown by a ball of radius `by` [m] (Minkowski sum).
struct Grown<'a> {
    shape: &'a ConductorShape,
    by: Meters,
}

impl Convex for Grown<'_> {
    fn support(&self, d: Vec3) -> Vec3 {
        let p = self.shape.support(d);
        let n = (d[0] * d[0] + d[1] * d[1] + d[2] * d[2]).sqrt();
        if n > 0.0 {
            [0, 1, 2].map(|k| p[k] + self.by * d[k] / n)
        } else {
            p
        }
    }
    fn interior_point(&self) -> Vec3 {
        self.shape.interior_point()
    }
}

/// Distance from the bar to `shape` when it is below `clearance` [m]
/// (bisection to [`DISTANCE_STEPS`]), else `None`.
fn distance_within(bar: &Bar, shape: &ConductorShape, clearance: Meters) -> Option<Meters> {
    if !intersects(
        bar,
        &Grown {
            shape,
            by: clearance,
        },
    ) {
        return None;
    }
    if intersects(bar, shape) {
        return Some(0.0);
    }
    let (mut lo, mut hi) = (0.0, clearance);
    for _ in 0..DISTANCE_STEPS {
        let mid = 0.5 * (lo + hi);
        if intersects(bar, &Grown { shape, by: mid }) {
            hi = mid;
        } else {
            lo = mid;
        }
    }
    Some(hi)
}

/// The grounded conductors a bar on `span` keeps clear of, with their shapes:
/// grounded `conductors:` entries and grounded rollers other than the two
/// that end the span.
fn grounded_conductors(line: &Line, span: usize) -> Vec<(GroundedConductor, ConductorShape)> {
    let s = &line.path.spans[span];
    let end_roller = |node: usize| match line.path.nodes[node].kind {
        NodeKind::Roller { roller, .. } => Some(roller),
        NodeKind::Point(_) => None,
    };
    let ends = [end_roller(s.from_node), end_roller(s.to_node)];
    let rollers = line
        .rollers
        .iter()
        .enumerate()
        .filter(|(i, r)| r.earthing == Earthing::Grounded && !ends.contains(&Some(*i)))
        .map(|(i, r)| (GroundedConductor::Roller(i), r.cylinder()));
    let others = line
        .conductors
        .iter()
        .enumerate()
        .filter(|(_, c)| c.earthing.is_grounded())
        .map(|(i, c)| (GroundedConductor::Conductor(i), c.shape));
    rollers.chain(others).collect()
}

/// Why `c` may not be placed on `line`, if it may not: the nearest grounded
/// conductor closer than [`CONDUCTOR_CLEARANCE`] bar distances.
pub fn refusal(line: &Line, c: &Candidate) -> Option<Refusal> {
    let span = line.path.spans.get(c.span)?;
    let (at, _) = meter_geometry(span, c.along, 0.0, c.distance, c.side);
    let half = 0.5 * line.web.width;
    let bar = Bar {
        ends: [[at[0], -half, at[2]], [at[0], half, at[2]]],
    };
    let clearance = CONDUCTOR_CLEARANCE * c.distance;
    grounded_conductors(line, c.span)
        .into_iter()
        .filter_map(|(which, shape)| distance_within(&bar, &shape, clearance).map(|d| (which, d)))
        .min_by(|a, b| a.1.total_cmp(&b.1))
        .map(|(conductor, distance)| Refusal::NearConductor {
            conductor,
            distance,
            clearance,
        })
}

/// How much room a bar at `c` has [m], for ranking plans by the simplest
/// installation: the smallest of the distance along its span to a
/// conducting roller at either end and the shortest distance from the bar
/// (the segment across the web) to any other grounded conductor, capped at
/// `cap` (found to 1 µm by bisection; see the module doc).
pub fn clearance(line: &Line, c: &Candidate, cap: Meters) -> Meters {
    let Some(span) = line.path.spans.get(c.span) else {
        return 0.0;
    };
    let conducting = |node: usize| match line.path.nodes[node].kind {
        NodeKind::Roller { roller, .. } => line.rollers[roller].earthing != Earthing::Insulating,
        NodeKind::Point(_) => false,
    };
    let mut room = cap;
    if conducting(span.from_node) {
        room = room.min(c.along);
    }
    if conducting(span.to_node) {
        room = room.min(span.length - c.along);
    }
    let (at, _) = meter_geometry(span, c.along, 0.0, c.distance, c.side);
    let half = 0.5 * line.web.width;
    let bar = Bar {
        ends: [[at[0], -half, at[2]], [at[0], half, at[2]]],
    };
    for (_, shape) in grounded_conductors(line, c.span) {
        if let Some(d) = distance_within(&bar, &shape, room) {
            room = room.min(d);
        }
    }
    room.max(0.0)
}

/// Positions of the planner's own grid before the placement rules: n =
/// ⌊L / spacing⌋ (at least 1) on each chosen span, on both sides. Counted
/// without laying the grid, so that a grid too large to search is refused
/// at once.
pub fn grid_positions(line: &Line, st: &PlanSettings) -> usize {
    line.path
        .spans
        .iter()
        .enumerate()
        .filter(|(k, _)| st.spans.is_empty() || st.spans.contains(k))
        .map(|(_, span)| 2 * ((span.length / st.spacing).floor() as usize).max(1))
        .fold(0, usize::saturating_add)
}

/// The planner's own candidates: every `spacing` along the chosen spans, on
/// both sides, where the placement rules allow a bar.
pub fn candidates(line: &Line, st: &PlanSettings) -> Vec<Candidate> {
    candidates_and_refusals(line, st).0
}

/// The planner's own candidates, and the grid positions refused for their
/// clearance from grounded conductors (with the reason).
pub fn candidates_and_refusals(line: &Line, st: &PlanSettings) -> (Vec<Candidate>, Vec<Refused>) {
    let (eff, res) = match st.kind {
        EliminatorKind::Powered => (POWERED_EFFICIENCY, 0.0),
        EliminatorKind::Passive => (PASSIVE_EFFICIENCY, PASSIVE_RESIDUAL),
    };
    let mut out = Vec::new();
    let mut refused = Vec::new();
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
                let c = Candidate {
                    kind: st.kind,
                    span: k,
                    along,
                    side,
                    distance: st.distance,
                    efficiency: eff,
                    residual: res,
                };
                match refusal(line, &c) {
                    Some(reason) => refused.push(Refused {
                        candidate: c,
                        reason,
                    }),
                    None => out.push(c),
                }
            }
        }
    }
    (out, refused)
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
