//! # Searching placements (plan stage)
//!
//! Ranks placements of bars among the candidates. A placement's [`Score`]
//! is compared in this order, the first difference deciding:
//!
//! 1. fewer failing findings;
//! 2. fewer bars;
//! 3. a lower worst margin (value ÷ limit over every finding; margins within
//!    10⁻⁹ relative count as equal, so that round-off cannot reorder
//!    equivalent plans);
//! 4. the simplest installation: fewer distinct spans carrying bars, then
//!    the larger clearance (the smallest, over the bars, of the distance
//!    along the span to a conducting roller at either end and the distance
//!    to any other grounded conductor, capped at [`CLEARANCE_CAP`]; within
//!    1 µm counts as equal), then the bars farther upstream (smaller Σ s_b);
//! 5. the candidates' order (so that the answer never depends on the order
//!    the search met the placements in).
//!
//! For N ≤ 3 and at most [`MAX_EXHAUSTIVE`] placements, every one of the
//! C(n, N) = n!/(N!(n − N)!) subsets of the n candidates is scored: the
//! result is the proven optimum over the candidate set. Otherwise a greedy
//! start (add the best bar one at a time) is improved by one-bar swaps while
//! they help, which is heuristic (local search; any textbook on
//! combinatorial optimisation).
//!
//! Placements that differ only in the side of some bars and score equally
//! are one plan ([`merge_sides`]).
//!
//! ## The exhaustive search visits side classes
//! Candidates equal in everything but their side form a side class
//! ([`super::placement::side_classes`]). The search enumerates every
//! multiset of N classes (taking no class more often than it has members,
//! [`class_multisets`]) and, for each, every placement whose bars fall in
//! those classes ([`members_of`]): each of the C(n, N) placements belongs
//! to exactly one multiset, so every placement is still scored, none twice
//! (a test checks the union against [`combinations`]). The expensive part
//! of the score — the profiles' rules over the superposition's field — does
//! not read the bars' sides, so it is computed once per multiset and the
//! cheap part (the built-in eliminator checks, which do read the sides) per
//! placement ([`super::placement`] gives the argument). Nothing is pruned:
//! the scores are the ones a placement-by-placement evaluation gives, bit
//! for bit, and the best `keep` are kept by the total order of [`order`],
//! which does not depend on the order the placements are met in; the result
//! is therefore exactly that of scoring every placement on its own (a test
//! compares the whole ranking with such a brute force on random candidate
//! lists). On the planner's grid, with both sides at every position, this
//! computes the rules about 2ᴺ times less often.

use super::Candidate;
use crate::assess::Assessment;
use crate::model::{Line, Side};
use crate::progress::{Task, Tracker};
use rayon::prelude::*;
use std::cmp::Ordering;
use std::sync::atomic::{AtomicUsize, Ordering as Atomic};

/// How a placement ranks; see the module doc for the order.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(super) struct Score {
    /// Failing findings.
    pub fails: usize,
    /// Bars placed.
    pub bars: usize,
    /// The largest margin over every finding [1].
    pub margin: f64,
    /// Distinct spans carrying bars.
    pub spans: usize,
    /// The smallest clearance of a bar [m] (larger is better).
    pub clearance: f64,
    /// Σ s_b, the bars' arc lengths added up [m].
    pub upstream: f64,
}

/// Clearances above this count as this [m]: beyond a metre a bar is as
/// easy to mount whatever the distance.
pub const CLEARANCE_CAP: f64 = 1.0;

/// Clearances closer than this count as equal [m] (the distance to a
/// conductor is found to 1 µm).
const CLEARANCE_EQUAL: f64 = 1e-6;

/// A placement (indices into the candidates, increasing) with its score.
pub(super) type Scored = (Vec<usize>, Score);

/// Most combinations searched exhaustively; beyond, the greedy search runs
/// (and says it is heuristic).
pub const MAX_EXHAUSTIVE: f64 = 4.0e6;

/// Whether a placement of `n` bars among `n_cand` candidates is searched
/// exhaustively.
pub(super) fn is_exhaustive(n: usize, n_cand: usize) -> bool {
    n <= 3 && binomial(n_cand, n) <= MAX_EXHAUSTIVE
}

/// C(n, k) as a float (no overflow for the sizes met here).
pub fn binomial(n: usize, k: usize) -> f64 {
    if k > n {
        return 0.0;
    }
    (0..k).fold(1.0, |acc, i| acc * (n - i) as f64 / (i + 1) as f64)
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

/// The score of a placement of `bars` with `fails` failing findings and
/// worst margin `margin`; `clearances` holds each candidate's clearance.
pub(super) fn score_of(
    fails: usize,
    margin: f64,
    bars: &[usize],
    cands: &[Candidate],
    clearances: &[f64],
    line: &Line,
) -> Score {
    // Distinct spans: the bars whose span no earlier bar has (no
    // allocation per placement).
    let spans = (0..bars.len())
        .filter(|&i| {
            let k = cands[bars[i]].span;
            !bars[..i].iter().any(|&b| cands[b].span == k)
        })
        .count();
    Score {
        fails,
        bars: bars.len(),
        margin,
        spans,
        clearance: bars
            .iter()
            .map(|&b| clearances[b])
            .fold(CLEARANCE_CAP, f64::min),
        upstream: bars.iter().map(|&b| cands[b].s(line)).sum(),
    }
}

/// The score of a placement from its full assessment.
pub(super) fn score(
    a: &Assessment,
    bars: &[usize],
    cands: &[Candidate],
    clearances: &[f64],
    line: &Line,
) -> Score {
    score_of(
        a.counts().fail,
        a.worst_margin(),
        bars,
        cands,
        clearances,
        line,
    )
}

/// Whether `a` ranks before `b` (the order of the module doc, without the
/// candidates' order).
pub(super) fn better(a: &Score, b: &Score) -> bool {
    if a.fails != b.fails {
        return a.fails < b.fails;
    }
    if a.bars != b.bars {
        return a.bars < b.bars;
    }
    // Margins within 1e-9 relative count as equal, so round-off cannot
    // reorder equivalent plans.
    if (a.margin - b.margin).abs() > 1e-9 * a.margin.abs().max(b.margin.abs()) {
        return a.margin < b.margin;
    }
    if a.spans != b.spans {
        return a.spans < b.spans;
    }
    if (a.clearance - b.clearance).abs() > CLEARANCE_EQUAL {
        return a.clearance > b.clearance;
    }
    a.upstream < b.upstream
}

/// Whether two scores tie (neither ranks before the other).
pub(super) fn tie(a: &Score, b: &Score) -> bool {
    !better(a, b) && !better(b, a)
}

/// Best first, for `sort_by`; ties by the candidates' order.
pub(super) fn order(a: &Scored, b: &Scored) -> Ordering {
    if better(&a.1, &b.1) {
        Ordering::Less
    } else if better(&b.1, &a.1) {
        Ordering::Greater
    } else {
        a.0.cmp(&b.0)
    }
}

/// A plan: placements that differ only in the side of some bars and tie.
#[derive(Debug, Clone, PartialEq)]
pub(super) struct Merged {
    /// The first placement, its bars in the order of `sides`.
    pub bars: Vec<usize>,
    /// Its score.
    pub score: Score,
    /// For each bar, the sides it may take (the plan holds every
    /// combination of them).
    pub sides: Vec<Vec<Side>>,
}

/// Where a placement's bars are, side aside: (span, position bits) each.
type PositionKey = Vec<(usize, u64)>;

/// A placement's bars ordered by (span, position, side), with its
/// position key.
fn slots(bars: &[usize], cands: &[Candidate]) -> (Vec<usize>, PositionKey) {
    let mut b = bars.to_vec();
    let side = |s: Side| u8::from(s != Side::Above);
    b.sort_by(|&x, &y| {
        let (p, q) = (&cands[x], &cands[y]);
        p.span
            .cmp(&q.span)
            .then(p.along.total_cmp(&q.along))
            .then(side(p.side).cmp(&side(q.side)))
    });
    let key = b
        .iter()
        .map(|&i| (cands[i].span, cands[i].along.to_bits()))
        .collect();
    (b, key)
}

/// Merges the placements of `ranked` (best first) that differ only in the
/// side of some bars and tie into one plan listing the sides. A group is
/// merged only when it holds every combination of its sides (so that "above
/// or below" at each bar is true of every combination); otherwise its
/// placements stay plans of their own.
pub(super) fn merge_sides(ranked: &[Scored], cands: &[Candidate]) -> Vec<Merged> {
    // Groups in the order of their best placement.
    let mut groups: Vec<(PositionKey, Vec<Scored>)> = Vec::new();
    for (bars, sc) in ranked {
        let (b, key) = slots(bars, cands);
        match groups
            .iter_mut()
            .find(|(k, members)| *k == key && tie(&members[0].1, sc))
        {
            Some((_, members)) => members.push((b, *sc)),
            None => groups.push((key, vec![(b, *sc)])),
        }
    }
    let mut out = Vec::new();
    for (_, members) in groups {
        let n = members[0].0.len();
        let sides: Vec<Vec<Side>> = (0..n)
            .map(|i| {
                let mut v: Vec<Side> = members.iter().map(|m| cands[m.0[i]].side).collect();
                v.sort_by_key(|&s| u8::from(s != Side::Above));
                v.dedup();
                v
            })
            .collect();
        let product: usize = sides.iter().map(Vec::len).product();
        if product == members.len() {
            out.push(Merged {
                bars: members[0].0.clone(),
                score: members[0].1,
                sides,
            });
        } else {
            for (bars, score) in members {
                let sides = bars.iter().map(|&b| vec![cands[b].side]).collect();
                out.push(Merged { bars, score, sides });
            }
        }
    }
    out
}

/// Inserts a placement into a best-first list of at most `keep` entries.
fn keep_best(best: &mut Vec<Scored>, c: &[usize], sc: Score, keep: usize) {
    if best.len() == keep
        && best
            .last()
            .is_some_and(|w| better(&w.1, &sc) || (tie(&w.1, &sc) && w.0.as_slice() < c))
    {
        return;
    }
    let at = best
        .iter()
        .position(|b| better(&sc, &b.1) || (tie(&b.1, &sc) && c < b.0.as_slice()))
        .unwrap_or(best.len());
    best.insert(at, (c.to_vec(), sc));
    best.truncate(keep);
}

/// The candidates of each side class (increasing), the classes in the
/// order of their first candidate; `class[b]` is the first candidate of
/// b's class ([`super::placement::side_classes`]).
pub(super) fn class_members(class: &[usize]) -> Vec<Vec<usize>> {
    let mut slot = vec![usize::MAX; class.len()];
    let mut out: Vec<Vec<usize>> = Vec::new();
    for (b, &c) in class.iter().enumerate() {
        let Some(s) = slot.get_mut(c) else {
            continue;
        };
        if *s == usize::MAX {
            *s = out.len();
            out.push(Vec::new());
        }
        out[*s].push(b);
    }
    out
}

/// Every multiset of `n` classes (class indices nondecreasing) that takes
/// no class more often than it has members (`sizes[k]`).
pub(super) fn class_multisets(sizes: &[usize], n: usize) -> Vec<Vec<usize>> {
    fn grow(
        sizes: &[usize],
        n: usize,
        from: usize,
        cur: &mut Vec<usize>,
        out: &mut Vec<Vec<usize>>,
    ) {
        if cur.len() == n {
            out.push(cur.clone());
            return;
        }
        for (k, &size) in sizes.iter().enumerate().skip(from) {
            if cur.iter().filter(|&&c| c == k).count() >= size {
                continue;
            }
            cur.push(k);
            grow(sizes, n, k, cur, out);
            cur.pop();
        }
    }
    let mut out = Vec::new();
    grow(sizes, n, 0, &mut Vec::with_capacity(n), &mut out);
    out
}

/// The placements whose bars fall in the classes of `multiset`: every
/// choice of as many members of each class as it appears, each placement
/// increasing.
pub(super) fn members_of(multiset: &[usize], members: &[Vec<usize>]) -> Vec<Vec<usize>> {
    let mut out: Vec<Vec<usize>> = vec![Vec::with_capacity(multiset.len())];
    let mut i = 0;
    while i < multiset.len() {
        let k = multiset[i];
        let m = multiset[i..].iter().take_while(|&&c| c == k).count();
        let Some(class) = members.get(k) else {
            return Vec::new();
        };
        let picks = combinations(class.len(), m);
        out = out
            .iter()
            .flat_map(|prefix| {
                picks.iter().map(move |p| {
                    let mut v = prefix.clone();
                    v.extend(p.iter().map(|&j| class[j]));
                    v
                })
            })
            .collect();
        i += m;
    }
    for v in &mut out {
        v.sort_unstable();
    }
    out
}

/// Placements scored between two reports to the progress tracker.
const BATCH: usize = 1000;

/// The old-style progress callback is called about every this many
/// placements.
const CALLBACK_EVERY: usize = 20_000;

/// Every placement of `n` bars among the candidates (`class` gives each
/// candidate's side class), in parallel; the best `keep`, best first, and
/// the number evaluated. The placements are visited class multiset by class
/// multiset: `shared` computes the part of the score the placements of one
/// multiset have in common, once, for its first placement; `finish` then
/// scores each placement of the multiset (see [`super::placement`] for why
/// the shared part is the same for all of them). Both use a scratch copy
/// of `scratch` they may overwrite (one per worker, so no line or buffer is
/// made per placement). The work is announced as [`Task::Plan`], advanced in
/// batches of about [`BATCH`] placements; `progress` is called with (done,
/// total) now and then.
pub(super) fn exhaustive<S: Clone + Send + Sync, R>(
    n: usize,
    class: &[usize],
    keep: usize,
    scratch: &S,
    shared: &(dyn Fn(&mut S, &[usize]) -> Option<R> + Sync),
    finish: &(dyn Fn(&mut S, &[usize], &R) -> Score + Sync),
    progress: &(dyn Fn(usize, usize) + Sync),
) -> (Vec<Scored>, usize) {
    let members = class_members(class);
    let sizes: Vec<usize> = members.iter().map(Vec::len).collect();
    let multisets = class_multisets(&sizes, n);
    let total = binomial(class.len(), n).round() as usize;
    let tracker = Tracker::new(Task::Plan, total as u64);
    let done = AtomicUsize::new(0);
    let report = |pending: usize| {
        if pending == 0 {
            return;
        }
        tracker.advance(pending as u64);
        let before = done.fetch_add(pending, Atomic::Relaxed);
        if before / CALLBACK_EVERY != (before + pending) / CALLBACK_EVERY {
            progress(before + pending, total);
        }
    };
    multisets
        .par_iter()
        .fold(
            || (scratch.clone(), Vec::new(), 0usize, 0usize),
            |(mut placed, mut best, mut pending, mut count): (S, Vec<Scored>, usize, usize), m| {
                let group = members_of(m, &members);
                pending += group.len();
                count += group.len();
                if let Some(sh) = group.first().and_then(|g| shared(&mut placed, g)) {
                    for c in &group {
                        let sc = finish(&mut placed, c, &sh);
                        keep_best(&mut best, c, sc, keep);
                    }
                }
                if pending >= BATCH {
                    report(pending);
                    pending = 0;
                }
                (placed, best, pending, count)
            },
        )
        .map(|(_, best, pending, count)| {
            report(pending);
            (best, count)
        })
        .reduce(
            || (Vec::new(), 0),
            |(mut a, na), (b, nb)| {
                for (c, sc) in b {
                    keep_best(&mut a, &c, sc, keep);
                }
                (a, na + nb)
            },
        )
}

/// Greedy start and one-bar swaps while they improve; the placement found
/// and the number evaluated. `evaluate` scores a placement in a scratch
/// copy of `scratch` it may overwrite (one per worker). The greedy start is announced as one
/// [`Task::Plan`] of Σ_{i<n} (n_cand − i) placements, then each pass of
/// swaps as another of n·(n_cand − n) (how many passes run is not known
/// beforehand); `progress` is called with (done, total) of the current
/// one now and then.
pub(super) fn greedy<S: Clone + Send + Sync>(
    n: usize,
    n_cand: usize,
    scratch: &S,
    evaluate: &(dyn Fn(&mut S, &[usize]) -> Option<Score> + Sync),
    progress: &(dyn Fn(usize, usize) + Sync),
) -> (Vec<Scored>, usize) {
    let mut count = 0;
    let mut current: Vec<usize> = Vec::new();
    let mut best_score = None;
    let start_total: usize = (0..n.min(n_cand)).map(|i| n_cand - i).sum();
    let tracker = Tracker::new(Task::Plan, start_total as u64);
    let done = AtomicUsize::new(0);
    let step = |tracker: &Tracker, total: usize| {
        tracker.advance(1);
        let d = done.fetch_add(1, Atomic::Relaxed) + 1;
        if d.is_multiple_of(CALLBACK_EVERY) || d == total {
            progress(d, total);
        }
    };
    for _ in 0..n {
        let trial: Vec<(usize, Score)> = (0..n_cand)
            .into_par_iter()
            .filter(|c| !current.contains(c))
            .map_init(
                || (scratch.clone(), Vec::with_capacity(current.len() + 1)),
                |(sc, t), c| {
                    t.clear();
                    t.extend_from_slice(&current);
                    t.push(c);
                    t.sort_unstable();
                    let s = evaluate(sc, t);
                    step(&tracker, start_total);
                    s.map(|s| (c, s))
                },
            )
            .flatten()
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
    drop(tracker);
    let mut sc = scratch.clone();
    let mut improved = true;
    while improved {
        improved = false;
        let pass_total = current.len() * n_cand.saturating_sub(current.len());
        let tracker = Tracker::new(Task::Plan, pass_total as u64);
        done.store(0, Atomic::Relaxed);
        for i in 0..current.len() {
            for c in 0..n_cand {
                if current.contains(&c) {
                    continue;
                }
                let mut t = current.clone();
                t[i] = c;
                t.sort_unstable();
                count += 1;
                let scored = evaluate(&mut sc, &t);
                step(&tracker, pass_total);
                if let (Some(s), Some(b)) = (scored, best_score)
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
