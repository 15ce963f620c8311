//! # Superposition over path pieces (plan stage)
//!
//! Precomputes, once per planning run, the field and potential that every
//! piece of the web path puts at every point the rules sample, so that one
//! placement of bars then costs a few dozen multiply-adds per point instead
//! of a field solve.
//!
//! The path is cut into pieces e at every candidate, charge entry and
//! existing eliminator. With G_e(p) the field and potential at point p of
//! piece e carrying unit density at its start (relaxing along it, with the
//! across-web shape and the ground-plane image), and
//! c_ie = σ_i·exp(−(s_e − s_i)/(vτ)) what charge entry i puts at the start of
//! piece e (up to the next `sigma:` entry), the prefix sums
//!
//! $$ P_i(p, e) = \sum_{e' < e} c_{ie'}\, G_{e'}(p) $$
//!
//! give the field with bars b_1 < b_2 < … of efficiency η as
//!
//! $$ \mathbf E(p) = \sum_i \sum_{r} F_{ir}\,\bigl[P_i(p, b_{r+1}) - P_i(p, b_r)\bigr], $$
//!
//! where F_ir is the product of (1 − η) over the bars from entry i to range
//! r. Exact for powered bars without an offset; see the module doc of
//! [`crate::plan`] for the symbols and the reference (superposition,
//! Coulomb's law).
//!
//! [`Recorder`] finds the points (it answers a full assessment from the full
//! model and notes every point asked for); [`Fast`] answers the lean
//! assessment of one placement from the prefix sums.

use super::Candidate;
use crate::assess::{ThresholdProfile, assess};
use crate::charge::decay;
use crate::field::{FieldAt, FieldError, FieldMap, PointField, Scene, WebField};
use crate::model::{ChargeMode, Eliminator, Line};
use rayon::prelude::*;
use std::collections::HashMap;
use std::sync::Mutex;

/// Every point a full assessment of `line` asks the field at (the places
/// of interest and the points the rules sample), sorted and without
/// repeats: the points [`Influence::build`] precomputes.
pub(super) fn sampled_points(
    line: &Line,
    scene: &Scene,
    profiles: &[ThresholdProfile],
) -> Result<Vec<[f64; 3]>, FieldError> {
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
    Ok(points)
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

/// A point's coordinates as exact bit patterns, so a position the
/// assessment asks for again finds its precomputed index.
fn key(p: [f64; 3]) -> [u64; 3] {
    [p[0].to_bits(), p[1].to_bits(), p[2].to_bits()]
}

/// A source of charge: an entry with its place and value.
#[derive(Debug, Clone)]
struct Source {
    s: f64,
}

/// Precomputed superposition over path pieces.
pub(super) struct Influence {
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
    /// The prefix sums for `points`, with pieces cut at every candidate.
    pub(super) fn build(
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
            .chain(cands.iter().map(|c| c.s(line)))
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
        // The conductors' panel factors at every point, once: each piece's
        // induced field there is then a dot product.
        let factors = scene.panel_factors(&points);
        let g: Vec<Vec<[f64; 4]>> = pieces
            .par_iter()
            .map(|&(a, b)| {
                let m = scene.unit_piece(&base, a, b);
                points
                    .iter()
                    .enumerate()
                    .map(|(k, &p)| {
                        m.at_with(p, factors.as_ref().map(|f| f[k].as_slice()))
                            .map(|f| [f.e[0], f.e[1], f.e[2], f.v])
                    })
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

    /// The piece that starts at or after arc length `s`.
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
pub(super) struct Fast<'a> {
    inf: &'a Influence,
    /// (arc length, η, piece index), sorted.
    bars: Vec<(f64, f64, usize)>,
}

impl<'a> Fast<'a> {
    /// The field with `eliminators` (sorted along the path) fitted.
    pub(super) fn new(inf: &'a Influence, eliminators: &[Eliminator]) -> Self {
        let bars = eliminators
            .iter()
            .map(|e| (e.s, e.efficiency, inf.piece_at(e.s)))
            .collect();
        Fast { inf, bars }
    }
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

    /// It holds every point the recorded full assessment asked for.
    fn is_precomputed(&self) -> bool {
        true
    }
}
