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
//! Search: every combination for N ≤ 3 (the proven optimum over the
//! candidate set); for larger N a greedy start (add the best bar one at a
//! time) with local improvement (swap one bar for another while it helps),
//! which is heuristic.
//!
//! ## Reference
//! Superposition (Coulomb's law); bar models and placement rules: K.
//! Robinson, PFFC "Static Beat" (FACTS.md "Static eliminators").

use crate::assess::{Assessment, ThresholdProfile, Verdict, assess};
use crate::charge::decay;
use crate::field::{FieldAt, FieldError, FieldMap, PointField, Scene, WebField};
use crate::model::geometry::{meter_geometry, point_problem};
use crate::model::{ChargeMode, Earthing, Eliminator, EliminatorKind, Line, NodeKind, Side};
use crate::model::{
    PASSIVE_EFFICIENCY, PASSIVE_ONSET_VOLTAGE, PASSIVE_RESIDUAL, POWERED_EFFICIENCY,
    POWERED_ION_OUTPUT,
};
use crate::units::Meters;
use rayon::prelude::*;
use std::collections::HashMap;
use std::sync::Mutex;

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

impl Candidate {
    /// The eliminator this candidate places, with an id.
    pub fn eliminator(&self, line: &Line, id: &str) -> Eliminator {
        Eliminator {
            id: id.to_string(),
            kind: self.kind,
            span: self.span,
            along: self.along,
            s: line.path.spans[self.span].s_start + self.along,
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

    /// `S3 at 450 mm, above`.
    pub fn describe(&self, line: &Line) -> String {
        format!(
            "{} {} at {}, {}, {} from the web",
            self.kind.text(),
            line.path.spans[self.span].label(),
            crate::units::format_quantity(self.along, crate::units::Dim::Length),
            self.side.text(),
            crate::units::format_quantity(self.distance, crate::units::Dim::Length)
        )
    }
}

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
    /// In words: what was searched and what the result means.
    pub summary: String,
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
    /// Nothing to place bars on.
    #[error("no candidate position for a bar: {0}")]
    NoCandidates(String),
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
                if point_problem(
                    &line.path,
                    &line.rollers,
                    line.web.width,
                    line.ground_plane,
                    at,
                )
                .is_some()
                {
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

/// Records every point an assessment asks the field at.
struct Recorder<'a> {
    model: &'a WebField<'a>,
    seen: Mutex<Vec<[f64; 3]>>,
}

impl FieldAt for Recorder<'_> {
    fn field_at(&self, at: [f64; 3], contributions: bool) -> Result<PointField, FieldError> {
        if let Ok(mut s) = self.seen.lock() {
            s.push(at);
        }
        self.model.at(at, contributions)
    }
}

fn key(p: [f64; 3]) -> [u64; 3] {
    [p[0].to_bits(), p[1].to_bits(), p[2].to_bits()]
}

/// A source of charge: an entry with its place and value.
#[derive(Debug, Clone)]
struct Source {
    s: f64,
}

/// Precomputed superposition over path pieces.
struct Influence {
    /// Piece start arc lengths (sorted); piece e runs to `starts[e + 1]`.
    starts: Vec<f64>,
    /// Sources (charge entries, folded by place).
    sources: Vec<Source>,
    /// prefix[i][p][e] = Σ_{e' < e} c_ie' G_e'(p), as [Ex, Ey, Ez, V].
    prefix: Vec<Vec<Vec<[f64; 4]>>>,
    /// Piece index where each source starts.
    source_piece: Vec<usize>,
    /// Point index by position bits.
    index: HashMap<[u64; 3], usize>,
    points: Vec<[f64; 3]>,
}

impl Influence {
    fn build(
        line: &Line,
        points: Vec<[f64; 3]>,
        cands: &[Candidate],
        scene: &Scene,
    ) -> Result<Self, FieldError> {
        let lambda = line.web.decay_length();
        let total = line.path.total_length;
        let mut starts: Vec<f64> = std::iter::once(0.0)
            .chain(line.charge.iter().map(|e| e.s))
            .chain(line.eliminators.iter().map(|e| e.s))
            .chain(
                cands
                    .iter()
                    .map(|c| line.path.spans[c.span].s_start + c.along),
            )
            .filter(|s| *s < total)
            .collect();
        starts.sort_by(f64::total_cmp);
        starts.dedup();
        // Sources: each distinct entry place; its value is what the entries
        // there add on top of the carried density (a `sigma:` entry also cuts
        // off everything upstream).
        let mut places: Vec<f64> = line.charge.iter().map(|e| e.s).collect();
        places.sort_by(f64::total_cmp);
        places.dedup();
        let sources: Vec<Source> = places.iter().map(|&s| Source { s }).collect();
        // Unit influence of every piece at every point.
        let base = crate::charge::charge_profile(line);
        let pieces: Vec<(f64, f64)> = starts
            .iter()
            .enumerate()
            .map(|(e, &a)| (a, starts.get(e + 1).copied().unwrap_or(total)))
            .collect();
        let g: Vec<Vec<[f64; 4]>> = pieces
            .par_iter()
            .map(|&(a, b)| {
                let m = scene.unit_piece(&base, a, b);
                points
                    .iter()
                    .map(|&p| m.at(p, false).map(|f| [f.e[0], f.e[1], f.e[2], f.v]))
                    .collect::<Result<Vec<_>, _>>()
            })
            .collect::<Result<Vec<_>, _>>()?;
        // Per source: the density it puts at each piece start (before any bar).
        let unit_entries = |i: usize| -> Vec<f64> {
            let s_i = sources[i].s;
            // Value of the source: entries at s_i applied to zero if the
            // first is `sigma:`, else added.
            let mut v = 0.0;
            for e in line.charge.iter().filter(|e| e.s == s_i) {
                v = e.mode.apply(v, e.sigma);
            }
            let next_set = line
                .charge
                .iter()
                .filter(|e| e.s > s_i && e.mode == ChargeMode::Set)
                .map(|e| e.s)
                .fold(f64::INFINITY, f64::min);
            pieces
                .iter()
                .map(|&(a, _)| {
                    if a >= s_i && a < next_set {
                        v * decay(a - s_i, lambda)
                    } else {
                        0.0
                    }
                })
                .collect()
        };
        let mut prefix = Vec::with_capacity(sources.len());
        for i in 0..sources.len() {
            let c = unit_entries(i);
            let mut per_point = Vec::with_capacity(points.len());
            #[allow(clippy::needless_range_loop)]
            for p in 0..points.len() {
                let mut acc = [0.0; 4];
                let mut v = Vec::with_capacity(pieces.len() + 1);
                v.push(acc);
                for e in 0..pieces.len() {
                    for k in 0..4 {
                        acc[k] += c[e] * g[e][p][k];
                    }
                    v.push(acc);
                }
                per_point.push(v);
            }
            prefix.push(per_point);
        }
        let index = points
            .iter()
            .enumerate()
            .map(|(i, &p)| (key(p), i))
            .collect();
        let source_piece = sources
            .iter()
            .map(|src| starts.partition_point(|&a| a < src.s))
            .collect();
        Ok(Influence {
            source_piece,
            starts,
            sources,
            prefix,
            index,
            points,
        })
    }

    fn piece_at(&self, s: f64) -> usize {
        self.starts.partition_point(|&a| a < s)
    }

    /// The field at point `p` with bars `(arc length, η, piece index)`
    /// sorted along the path.
    fn field(&self, p: usize, bars: &[(f64, f64, usize)]) -> [f64; 4] {
        let n = self.starts.len();
        let mut out = [0.0; 4];
        for (i, src) in self.sources.iter().enumerate() {
            let pre = &self.prefix[i][p];
            let mut factor = 1.0;
            let mut from = self.source_piece[i];
            for &(sb, eta, to) in bars {
                if sb < src.s {
                    continue;
                }
                let (a, b) = (&pre[to], &pre[from]);
                for k in 0..4 {
                    out[k] += factor * (a[k] - b[k]);
                }
                factor *= 1.0 - eta;
                from = to.max(from);
            }
            let (a, b) = (&pre[n], &pre[from]);
            for k in 0..4 {
                out[k] += factor * (a[k] - b[k]);
            }
        }
        out
    }
}

/// The superposition answering the assessment's field questions.
struct Fast<'a> {
    inf: &'a Influence,
    /// (arc length, η, piece index), sorted.
    bars: Vec<(f64, f64, usize)>,
}

impl FieldAt for Fast<'_> {
    fn field_at(&self, at: [f64; 3], _contributions: bool) -> Result<PointField, FieldError> {
        let Some(&i) = self.inf.index.get(&key(at)) else {
            return Err(FieldError::NotPrecomputed { at });
        };
        let f = self.inf.field(i, &self.bars);
        Ok(PointField {
            at: self.inf.points[i],
            e: [f[0], f[1], f[2]],
            v: f[3],
            contributions: Vec::new(),
        })
    }
}

/// (fails, worst margin, bars, upstream): smaller is better.
fn score(
    a: &Assessment,
    bars: &[usize],
    cands: &[Candidate],
    line: &Line,
) -> (usize, f64, usize, f64) {
    let fails = a
        .findings
        .iter()
        .filter(|f| f.verdict == Verdict::Fail)
        .count();
    let worst = a.findings.iter().map(|f| f.margin).fold(0.0, f64::max);
    let upstream: f64 = bars
        .iter()
        .map(|&b| line.path.spans[cands[b].span].s_start + cands[b].along)
        .sum();
    (fails, worst, bars.len(), upstream)
}

fn better(a: &(usize, f64, usize, f64), b: &(usize, f64, usize, f64)) -> bool {
    // Margins within 1e-9 relative count as equal, so round-off cannot
    // reorder equivalent plans.
    if a.0 != b.0 {
        return a.0 < b.0;
    }
    if (a.1 - b.1).abs() > 1e-9 * a.1.abs().max(b.1.abs()) {
        return a.1 < b.1;
    }
    if a.2 != b.2 {
        return a.2 < b.2;
    }
    a.3 < b.3
}

fn counts(a: &Assessment) -> [usize; 3] {
    let mut c = [0; 3];
    for f in &a.findings {
        c[f.verdict as usize] += 1;
    }
    c
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

/// The line the planner works on: where meter readings determine segment
/// densities, they become charge entries (a `sigma:` where the segment was
/// set, else an `adds:` of what the fit adds to the density carried in), and
/// the readings are dropped — they were taken without the planned bars.
/// Without readings the line is returned unchanged.
pub fn planning_line(line: &Line, scene: &Scene) -> Result<Line, PlanError> {
    if line.readings.is_empty() {
        return Ok(line.clone());
    }
    let r = crate::readings::invert_readings(line, scene)?;
    let mut out = line.clone();
    out.readings.clear();
    for fit in &r.segments {
        let k = fit.index;
        let s_k = fit.s_start;
        let was_set = k == 0
            || line
                .charge
                .iter()
                .any(|e| e.s == s_k && e.mode == ChargeMode::Set)
            || line.eliminators.iter().any(|e| e.s == s_k);
        let carried = r.charge.arriving(k);
        let at = line
            .charge
            .iter()
            .find(|e| e.s == s_k)
            .map(|e| e.at.clone())
            .unwrap_or_else(|| "start".to_string());
        out.charge.retain(|e| e.s != s_k);
        out.charge.push(crate::model::ChargeEntry {
            at: format!("{at} (fitted to readings)"),
            s: s_k,
            mode: if was_set {
                ChargeMode::Set
            } else {
                ChargeMode::Add
            },
            sigma: if was_set {
                fit.fitted
            } else {
                fit.fitted - carried
            },
            yaml_path: String::new(),
        });
    }
    out.charge.sort_by(|a, b| a.s.total_cmp(&b.s));
    Ok(out)
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
    let cands = st
        .candidates
        .clone()
        .unwrap_or_else(|| candidates(line, st));
    if cands.is_empty() {
        return Err(PlanError::NoCandidates(
            "every span is too short or too close to its rollers for a bar at this distance: lower --distance or --spacing, or give --candidates".into(),
        ));
    }
    let before = full_assessment(scene, line, profiles)?;
    // Record every point the rules ask for.
    let charge = crate::charge::charge_profile(line);
    let model = scene.web(&charge);
    let rec = Recorder {
        model: &model,
        seen: Mutex::new(Vec::new()),
    };
    let pts0 = FieldMap {
        points: line
            .points
            .iter()
            .map(|p| rec.field_at(p.at, false))
            .collect::<Result<Vec<_>, _>>()?,
    };
    let _ = assess(line, &charge, &rec, &pts0, profiles)?;
    let mut points: Vec<[f64; 3]> = rec.seen.into_inner().unwrap_or_default();
    points.sort_by(|a, b| {
        a.iter()
            .zip(b)
            .map(|(x, y)| x.total_cmp(y))
            .find(|o| o.is_ne())
            .unwrap_or(std::cmp::Ordering::Equal)
    });
    points.dedup();
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
        let bs: Vec<(f64, f64, usize)> = placed
            .eliminators
            .iter()
            .map(|e| (e.s, e.efficiency, inf.piece_at(e.s)))
            .collect();
        let fast = Fast {
            inf: &inf,
            bars: bs,
        };
        let pts = FieldMap {
            points: placed
                .points
                .iter()
                .map(|p| fast.field_at(p.at, false))
                .collect::<Result<Vec<_>, _>>()
                .ok()?,
        };
        let sc = crate::assess::score(placed, &charge, &fast, &pts, profiles).ok()?;
        let (fails, worst) = (sc.fails, sc.worst_margin);
        let upstream: f64 = bars
            .iter()
            .map(|&b| line.path.spans[cands[b].span].s_start + cands[b].along)
            .sum();
        Some((fails, worst, bars.len(), upstream))
    };
    let evaluate = |bars: &[usize]| -> Option<Score> { evaluate_in(&mut line.clone(), bars) };
    let keep = st.top.max(1);

    let n_cand = cands.len();
    let sizes: Vec<usize> = match st.bars {
        Some(n) => vec![n],
        None => (1..=st.max_bars.max(1)).collect(),
    };
    let mut ranked: Vec<(Vec<usize>, Score)> = Vec::new();
    let mut evaluated = 0usize;
    let mut exhaustive = true;
    let mut chosen_size = 0;
    for &n in &sizes {
        let mut found: Vec<(Vec<usize>, Score)>;
        if n <= 3 && binomial(n_cand, n) <= MAX_EXHAUSTIVE {
            let combos = combinations(n_cand, n);
            let total = combos.len();
            let done = std::sync::atomic::AtomicUsize::new(0);
            found = combos
                .par_iter()
                .fold(
                    || (line.clone(), Vec::new()),
                    |(mut placed, mut best): (Line, Vec<(Vec<usize>, Score)>), c| {
                        let d = done.fetch_add(1, std::sync::atomic::Ordering::Relaxed);
                        if d.is_multiple_of(20000) {
                            progress(d, total);
                        }
                        if let Some(sc) = evaluate_in(&mut placed, c) {
                            keep_best(&mut best, c, sc, keep);
                        }
                        (placed, best)
                    },
                )
                .map(|(_, best)| best)
                .reduce(Vec::new, |mut a, b| {
                    for (c, sc) in b {
                        keep_best(&mut a, &c, sc, keep);
                    }
                    a
                });
            evaluated += total;
        } else {
            exhaustive = false;
            let (list, count) = greedy(n, n_cand, &evaluate);
            evaluated += count;
            found = list;
        }
        found.sort_by(|a, b| {
            if better(&a.1, &b.1) {
                std::cmp::Ordering::Less
            } else if better(&b.1, &a.1) {
                std::cmp::Ordering::Greater
            } else {
                std::cmp::Ordering::Equal
            }
        });
        found.truncate(st.top.max(1));
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
            counts: counts(&a),
            worst_margin: a.findings.iter().map(|f| f.margin).fold(0.0, f64::max),
            assessment: a,
        });
    }
    options.sort_by(|a, b| {
        let sa = score(&a.assessment, &a.bars, &cands, line);
        let sb = score(&b.assessment, &b.bars, &cands, line);
        if better(&sa, &sb) {
            std::cmp::Ordering::Less
        } else if better(&sb, &sa) {
            std::cmp::Ordering::Greater
        } else {
            std::cmp::Ordering::Equal
        }
    });
    let summary = match options.first() {
        Some(best) if best.counts[2] == 0 => format!(
            "{} bar(s) bring every rule within its failure limit; {} placements of {} candidates evaluated; {}",
            chosen_size,
            evaluated,
            n_cand,
            if exhaustive {
                "the search was exhaustive, so this is the optimum over the candidate set"
            } else {
                "greedy search with local improvement (heuristic)"
            }
        ),
        Some(best) => {
            let remaining = best
                .assessment
                .findings
                .iter()
                .find(|f| f.verdict == Verdict::Fail)
                .map(|f| {
                    format!(
                        "{}/{} on {}",
                        f.profile,
                        f.rule,
                        crate::report::notes::subject_label(line, &f.subject)
                    )
                })
                .unwrap_or_default();
            format!(
                "no placement of up to {} bar(s) passes; the best leaves {} failing finding(s), e.g. {}; {} placements of {} candidates evaluated",
                chosen_size, best.counts[2], remaining, evaluated, n_cand
            )
        }
        None => "no placement could be evaluated".to_string(),
    };
    Ok(Plan {
        candidates: cands,
        options,
        before,
        bars: chosen_size,
        evaluated,
        exhaustive,
        summary,
    })
}

/// Most combinations searched exhaustively; beyond, the greedy search runs
/// (and says it is heuristic).
pub const MAX_EXHAUSTIVE: f64 = 4.0e6;

/// C(n, k) as a float (no overflow for the sizes met here).
pub fn binomial(n: usize, k: usize) -> f64 {
    if k > n {
        return 0.0;
    }
    (0..k).fold(1.0, |acc, i| acc * (n - i) as f64 / (i + 1) as f64)
}

/// Inserts a placement into a best-first list of at most `keep` entries.
fn keep_best(best: &mut Vec<(Vec<usize>, Score)>, c: &[usize], sc: Score, keep: usize) {
    if best.len() == keep && best.last().is_some_and(|w| !better(&sc, &w.1)) {
        return;
    }
    let at = best
        .iter()
        .position(|b| better(&sc, &b.1) || (!better(&b.1, &sc) && c < b.0.as_slice()))
        .unwrap_or(best.len());
    best.insert(at, (c.to_vec(), sc));
    best.truncate(keep);
}

/// All k-subsets of 0..n in lexicographic order.
pub fn combinations(n: usize, k: usize) -> Vec<Vec<usize>> {
    let mut out = Vec::new();
    if k == 0 || k > n {
        return if k == 0 { vec![Vec::new()] } else { out };
    }
    let mut c: Vec<usize> = (0..k).collect();
    loop {
        out.push(c.clone());
        let mut i = k;
        while i > 0 && c[i - 1] == n - k + i - 1 {
            i -= 1;
        }
        if i == 0 {
            return out;
        }
        c[i - 1] += 1;
        for j in i..k {
            c[j] = c[j - 1] + 1;
        }
    }
}

type Score = (usize, f64, usize, f64);

/// Greedy start and one-bar swaps while they improve.
fn greedy(
    n: usize,
    n_cand: usize,
    evaluate: &(dyn Fn(&[usize]) -> Option<Score> + Sync),
) -> (Vec<(Vec<usize>, Score)>, usize) {
    let mut count = 0;
    let mut current: Vec<usize> = Vec::new();
    let mut best_score = None;
    for _ in 0..n {
        let trial: Vec<(usize, Score)> = (0..n_cand)
            .into_par_iter()
            .filter(|c| !current.contains(c))
            .filter_map(|c| {
                let mut t = current.clone();
                t.push(c);
                t.sort_unstable();
                evaluate(&t).map(|s| (c, s))
            })
            .collect();
        count += trial.len();
        let Some(best) = trial
            .into_iter()
            .reduce(|a, b| if better(&b.1, &a.1) { b } else { a })
        else {
            break;
        };
        current.push(best.0);
        current.sort_unstable();
        best_score = Some(best.1);
    }
    let mut improved = true;
    while improved {
        improved = false;
        for i in 0..current.len() {
            for c in 0..n_cand {
                if current.contains(&c) {
                    continue;
                }
                let mut t = current.clone();
                t[i] = c;
                t.sort_unstable();
                count += 1;
                if let (Some(s), Some(b)) = (evaluate(&t), best_score)
                    && better(&s, &b)
                {
                    current = t;
                    best_score = Some(s);
                    improved = true;
                }
            }
        }
    }
    (
        best_score.map(|s| vec![(current, s)]).unwrap_or_default(),
        count,
    )
}

/// Comments out a top-level YAML block (`key:` and the lines under it).
fn comment_out_block(lines: &mut [String], key: &str, why: &str) -> bool {
    let Some(start) = lines
        .iter()
        .position(|l| l.trim_end() == format!("{key}:") || l.starts_with(&format!("{key}: ")))
    else {
        return false;
    };
    lines[start] = format!("# {why}\n# {}", lines[start]);
    for l in lines.iter_mut().skip(start + 1) {
        let top =
            !l.is_empty() && !l.starts_with(' ') && !l.starts_with('#') && !l.starts_with('-');
        if top {
            break;
        }
        if !l.trim().is_empty() {
            *l = format!("# {l}");
        }
    }
    true
}

/// A new line description: the original text with the bars added to its
/// `eliminators:` list (created when absent). Where the line has meter
/// readings, they were taken without the planned bars: their fitted
/// densities are written as charge entries and the original `charge:` and
/// `readings:` blocks are kept as comments, so assessing the new file gives
/// exactly the planner's findings. The original file is not touched.
pub fn apply_to_yaml(
    text: &str,
    line: &Line,
    bars: &[Candidate],
    scene: &Scene,
) -> Result<String, PlanError> {
    let planning = planning_line(line, scene)?;
    let placed = apply(&planning, bars);
    // Every eliminator, the existing ones and the new ones, in block style.
    let items: String = placed
        .eliminators
        .iter()
        .map(|e| {
            let added = !line.eliminators.iter().any(|o| o.id == e.id);
            let mut fields = format!(
                "id: {}, kind: {}, span: {}, position: {:?} m, distance: {:?} m, side: {}, efficiency: {:?} %, residual: {:?} uC/m^2",
                e.id,
                e.kind.text(),
                line.path.spans[e.span].name,
                e.along,
                e.distance,
                e.side.text(),
                e.efficiency * 100.0,
                e.residual * 1e6
            );
            if let Some(on) = e.onset {
                fields.push_str(&format!(", onset: {on:?} V/m"));
            }
            if e.kind == EliminatorKind::Powered {
                fields.push_str(&format!(", ion_output: {:?} uA/m", e.ion_output * 1e6));
            }
            format!("  - {{{fields}}}{}\n", if added { "   # added by websigma plan" } else { "" })
        })
        .collect();
    let mut lines: Vec<String> = text.lines().map(str::to_string).collect();
    let mut tail = String::new();
    if !line.readings.is_empty() {
        comment_out_block(
            &mut lines,
            "readings",
            "readings taken without the planned bars; converted to the charge entries below by websigma plan",
        );
        comment_out_block(&mut lines, "meter", "meter accuracy of the readings above");
        comment_out_block(
            &mut lines,
            "charge",
            "charge entries before the readings were fitted (see the new `charge:` below)",
        );
        tail.push_str("charge:   # fitted to the meter readings by websigma plan\n");
        for c in &planning.charge {
            let at = c.at.trim_end_matches(" (fitted to readings)");
            let key = match c.mode {
                ChargeMode::Set => "sigma",
                ChargeMode::Add => "adds",
            };
            tail.push_str(&format!(
                "  - at: {at}\n    {key}: {:?} uC/m^2\n",
                c.sigma * 1e6
            ));
        }
    }
    comment_out_block(
        &mut lines,
        "eliminators",
        "eliminators as given; the full list, with the planned bars, is below",
    );
    tail.push_str("eliminators:\n");
    tail.push_str(&items);
    let mut out = lines.join("\n");
    out.push('\n');
    out.push_str(&tail);
    Ok(out)
}
