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
//! $$ \mathbf E(p) = G_0(p) + \sum_i \sum_{r} F_{ir}\,\bigl[P_i(p, b_{r+1}) - P_i(p, b_r)\bigr], $$
//!
//! where F_ir is the product of (1 − η) over the bars from entry i to range
//! r, and G_0 the field of the isolated conductors' given charges alone
//! (absent when they carry none; G_e then holds only the web's own charge,
//! see [`Scene::webs_linear`]).
//!
//! With conductors, each G_e includes the charge piece e induces on them:
//! the factorised boundary-element system A·X = B (A of order n + m for n
//! panels and m isolated conductors) is solved once for the matrix B whose
//! column e is piece e's right-hand side (−φ_e [V] at the n collocation
//! points, its wrap charges [C] scaled as in [`crate::field::bem`]),
//! [`Scene::unit_pieces`] (at present column by column: see
//! [`Scene::webs_linear`]); the induced field at p is then the dot product of
//! X's column with the panels' factors at p ([`Scene::panel_factors`]). Exact for powered bars without an offset; see the module doc of
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
use crate::progress::{Task, Tracker};
use rayon::prelude::*;
use std::collections::HashMap;
use std::hash::{BuildHasherDefault, Hasher};
use std::sync::Mutex;
use std::sync::atomic::{AtomicUsize, Ordering::Relaxed};

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

/// A multiplicative hash of a point's bit pattern (one rotate, xor and
/// multiply per 8 bytes): the lookup runs once per point and placement,
/// and the keys are exact coordinates, not adversarial input.
#[derive(Debug, Default, Clone, Copy)]
struct PointHasher(u64);

impl PointHasher {
    /// An odd constant with well-mixed bits (2⁶⁴ divided by the golden ratio).
    const SEED: u64 = 0x9e37_79b9_7f4a_7c15;

    fn add(&mut self, word: u64) {
        self.0 = (self.0.rotate_left(5) ^ word).wrapping_mul(Self::SEED);
    }
}

impl Hasher for PointHasher {
    fn write(&mut self, bytes: &[u8]) {
        for chunk in bytes.chunks(8) {
            let mut b = [0u8; 8];
            b[..chunk.len()].copy_from_slice(chunk);
            self.add(u64::from_le_bytes(b));
        }
    }

    fn write_u64(&mut self, word: u64) {
        self.add(word);
    }

    fn write_usize(&mut self, word: usize) {
        self.add(word as u64);
    }

    fn finish(&self) -> u64 {
        self.0
    }
}

/// Point index by position bits.
type PointIndex = HashMap<[u64; 3], usize, BuildHasherDefault<PointHasher>>;

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
    /// prefix[i][e][p] = Σ_{e' < e} c_ie' G_e'(p), as [Ex, Ey, Ez, V]: the
    /// points of one source and piece are contiguous, so one placement is a
    /// few vector operations over all points.
    prefix: Vec<Vec<Vec<[f64; 4]>>>,
    /// Piece index where each source starts.
    source_piece: Vec<usize>,
    /// G_0(p): the field of the isolated conductors' given charges at each
    /// point, added to every placement's (`None` when they carry none).
    fixed: Option<Vec<[f64; 4]>>,
    /// Point index by position bits.
    index: PointIndex,
    /// The point indices, each with its position bits, in the order the
    /// scoring of the line without new bars asked for them
    /// ([`Influence::learn_order`]): the scoring of a placement asks in much
    /// the same order, so [`Fast`] tries the next one of these before the
    /// hash lookup.
    order: Vec<(usize, [u64; 3])>,
    points: Vec<[f64; 3]>,
}

impl Influence {
    /// The prefix sums for `points`, with pieces cut at every candidate.
    /// Announces its field evaluations (pieces × points) as
    /// [`Task::Influences`].
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
        let tracker = Tracker::new(Task::Influences, (pieces.len() * points.len()) as u64);
        // The conductors' panel factors at every point, once: each piece's
        // induced field there is then a dot product.
        let factors = scene.panel_factors(&points);
        // Every piece's web charge and the conductors' share of it.
        let webs = scene.unit_pieces(&base, &pieces);
        let g: Vec<Vec<[f64; 4]>> = webs
            .par_iter()
            .map(|m| {
                let out = points
                    .iter()
                    .enumerate()
                    .map(|(k, &p)| {
                        m.at_with(p, factors.as_ref().map(|f| f[k].as_slice()))
                            .map(|f| [f.e[0], f.e[1], f.e[2], f.v])
                    })
                    .collect::<Result<Vec<_>, _>>();
                tracker.advance(points.len() as u64);
                out
            })
            .collect::<Result<Vec<_>, _>>()?;
        drop(tracker);
        // The isolated conductors' given charges: a fixed part of every
        // placement's field (none when they carry none).
        let fixed = match scene.given_part() {
            Some(m) => Some(
                points
                    .par_iter()
                    .enumerate()
                    .map(|(k, &p)| {
                        m.at_with(p, factors.as_ref().map(|f| f[k].as_slice()))
                            .map(|f| [f.e[0], f.e[1], f.e[2], f.v])
                    })
                    .collect::<Result<Vec<_>, _>>()?,
            ),
            None => None,
        };
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
            let mut acc = vec![[0.0; 4]; points.len()];
            let mut per_piece = Vec::with_capacity(pieces.len() + 1);
            per_piece.push(acc.clone());
            for (e, ge) in g.iter().enumerate() {
                for (a, gp) in acc.iter_mut().zip(ge) {
                    for k in 0..4 {
                        a[k] += c[e] * gp[k];
                    }
                }
                per_piece.push(acc.clone());
            }
            prefix.push(per_piece);
        }
        let index: PointIndex = points
            .iter()
            .enumerate()
            .map(|(i, &p)| (key(p), i))
            .collect();
        let order = Vec::new();
        let source_piece = sources
            .iter()
            .map(|src| starts.partition_point(|&a| a < src.s))
            .collect();
        Ok(Influence {
            fixed,
            source_piece,
            starts,
            sources,
            prefix,
            index,
            order,
            points,
        })
    }

    /// The piece that starts at or after arc length `s`.
    fn piece_at(&self, s: f64) -> usize {
        self.starts.partition_point(|&a| a < s)
    }

    /// Notes the order in which `ask` (the scoring of a placement, run once
    /// on the line without new bars) asks for the points, for [`Fast`] to
    /// try first. Only the speed of the lookups depends on it.
    pub(super) fn learn_order(&mut self, ask: impl FnOnce(&Fast<'_>)) {
        let asked = {
            let fast = Fast::recording(self, &[]);
            ask(&fast);
            fast.asked.map(|m| m.into_inner().unwrap_or_default())
        };
        self.order = asked
            .unwrap_or_default()
            .into_iter()
            .filter_map(|i| Some((i, key(*self.points.get(i)?))))
            .collect();
    }

    /// The bars of `eliminators` (sorted along the path) as `(arc length,
    /// η, piece index)`, written into `out` (cleared first).
    fn bars_into(&self, eliminators: &[Eliminator], out: &mut Vec<(f64, f64, usize)>) {
        out.clear();
        out.extend(
            eliminators
                .iter()
                .map(|e| (e.s, e.efficiency, self.piece_at(e.s))),
        );
    }

    /// The field at every point with bars `(arc length, η, piece index)`
    /// sorted along the path, as [Ex, Ey, Ez, V] by point index, written
    /// into `out` (its old contents replaced; its allocation reused). Each
    /// point's sum is formed in the same order as the formula of the module
    /// doc (source by source, range by range), so the result does not
    /// depend on how many points there are.
    fn fields_into(&self, bars: &[(f64, f64, usize)], out: &mut Vec<[f64; 4]>) {
        let n = self.starts.len();
        out.clear();
        match &self.fixed {
            Some(f) => out.extend_from_slice(f),
            None => out.resize(self.points.len(), [0.0; 4]),
        }
        // Component by component over the flattened arrays (the same
        // operations on each component as point by point, in a form the
        // compiler vectorises).
        let out = out.as_flattened_mut();
        let mut add = |factor: f64, a: &[[f64; 4]], b: &[[f64; 4]]| {
            for ((o, a), b) in out.iter_mut().zip(a.as_flattened()).zip(b.as_flattened()) {
                *o += factor * (a - b);
            }
        };
        for (i, src) in self.sources.iter().enumerate() {
            let pre = &self.prefix[i];
            let mut factor = 1.0;
            let mut from = self.source_piece[i];
            for &(sb, eta, to) in bars {
                if sb < src.s {
                    continue;
                }
                add(factor, &pre[to], &pre[from]);
                factor *= 1.0 - eta;
                from = to.max(from);
            }
            add(factor, &pre[n], &pre[from]);
        }
    }
}

/// Buffers a [`Fast`] fills, kept between placements so that scoring one
/// allocates nothing for the field (one per worker thread).
#[derive(Debug, Clone, Default)]
pub(super) struct FastBuffers {
    bars: Vec<(f64, f64, usize)>,
    fields: Vec<[f64; 4]>,
}

/// The superposition answering the assessment's field questions.
pub(super) struct Fast<'a> {
    inf: &'a Influence,
    /// The bars and the field at every precomputed point with them fitted
    /// (`buffers.fields`).
    buffers: FastBuffers,
    /// Position in `inf.order` of the question expected next.
    next: AtomicUsize,
    /// The point indices asked for, in order, when recording.
    asked: Option<Mutex<Vec<usize>>>,
}

impl<'a> Fast<'a> {
    /// The field with `eliminators` (sorted along the path) fitted.
    pub(super) fn new(inf: &'a Influence, eliminators: &[Eliminator]) -> Self {
        Fast::in_buffers(inf, eliminators, FastBuffers::default())
    }

    /// [`Fast::new`], its field computed into `buffers` (their allocations
    /// reused; [`Fast::into_buffers`] gives them back). The field is the
    /// same, bit for bit.
    pub(super) fn in_buffers(
        inf: &'a Influence,
        eliminators: &[Eliminator],
        mut buffers: FastBuffers,
    ) -> Self {
        inf.bars_into(eliminators, &mut buffers.bars);
        inf.fields_into(&buffers.bars, &mut buffers.fields);
        Fast {
            inf,
            buffers,
            next: AtomicUsize::new(0),
            asked: None,
        }
    }

    /// The buffers back, for the next placement.
    pub(super) fn into_buffers(self) -> FastBuffers {
        self.buffers
    }

    /// [`Fast::new`], noting every point index asked for.
    fn recording(inf: &'a Influence, eliminators: &[Eliminator]) -> Self {
        Fast {
            asked: Some(Mutex::new(Vec::new())),
            ..Fast::new(inf, eliminators)
        }
    }
}

impl FieldAt for Fast<'_> {
    fn field_at(&self, at: [f64; 3], _contributions: bool) -> Result<PointField, FieldError> {
        // The question expected next, checked bit for bit; else the hash
        // lookup (the answer is the same either way).
        let k = key(at);
        let c = self.next.load(Relaxed);
        let i = match self.inf.order.get(c) {
            Some(&(i, expected)) if expected == k => {
                self.next.store(c + 1, Relaxed);
                i
            }
            _ => {
                let Some(&i) = self.inf.index.get(&k) else {
                    return Err(FieldError::NotPrecomputed { at });
                };
                i
            }
        };
        if let Some(m) = &self.asked
            && let Ok(mut v) = m.lock()
        {
            v.push(i);
        }
        let f = self.buffers.fields[i];
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
