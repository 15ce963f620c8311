//! # Searching placements (plan stage)
//!
//! Ranks placements of N bars among the candidates. A placement is scored
//! by the tuple (failing findings, worst margin, bars, Σ s_b), compared in
//! that order, smaller being better; margins within 10⁻⁹ relative count as
//! equal so that round-off cannot reorder equivalent plans.
//!
//! For N ≤ 3 and at most [`MAX_EXHAUSTIVE`] placements, every one of the
//! C(n, N) = n!/(N!(n − N)!) subsets of the n candidates is scored: the
//! result is the proven optimum over the candidate set. Otherwise a greedy
//! start (add the best bar one at a time) is improved by one-bar swaps while
//! they help, which is heuristic (local search; any textbook on
//! combinatorial optimisation).

use super::Candidate;
use crate::assess::Assessment;
use crate::model::Line;
use rayon::prelude::*;
use std::cmp::Ordering;
use std::sync::atomic::{AtomicUsize, Ordering as Atomic};

/// (fails, worst margin, bars, upstream): smaller is better.
pub(super) type Score = (usize, f64, usize, f64);

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

/// Σ s_b: the arc lengths of the bars added up [m].
pub(super) fn upstream(bars: &[usize], cands: &[Candidate], line: &Line) -> f64 {
    bars.iter().map(|&b| cands[b].s(line)).sum()
}

/// The score of a placement from its full assessment.
pub(super) fn score(a: &Assessment, bars: &[usize], cands: &[Candidate], line: &Line) -> Score {
    (
        a.counts().fail,
        a.worst_margin(),
        bars.len(),
        upstream(bars, cands, line),
    )
}

/// Whether `a` ranks before `b`.
pub(super) fn better(a: &Score, b: &Score) -> bool {
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

/// Best first, for `sort_by` (a stable sort keeps ties in their order).
pub(super) fn order(a: &Score, b: &Score) -> Ordering {
    if better(a, b) {
        Ordering::Less
    } else if better(b, a) {
        Ordering::Greater
    } else {
        Ordering::Equal
    }
}

/// Inserts a placement into a best-first list of at most `keep` entries.
fn keep_best(best: &mut Vec<Scored>, c: &[usize], sc: Score, keep: usize) {
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

/// Every placement of `n` bars among `n_cand` candidates, in parallel; the
/// best `keep`, best first, and the number evaluated. `evaluate_in` scores
/// a placement using a scratch copy of `scratch` it may overwrite (one per
/// worker, so no line is cloned per placement); `progress` is called with
/// (done, total) now and then.
pub(super) fn exhaustive(
    n: usize,
    n_cand: usize,
    keep: usize,
    scratch: &Line,
    evaluate_in: &(dyn Fn(&mut Line, &[usize]) -> Option<Score> + Sync),
    progress: &(dyn Fn(usize, usize) + Sync),
) -> (Vec<Scored>, usize) {
    let combos = combinations(n_cand, n);
    let total = combos.len();
    let done = AtomicUsize::new(0);
    let found = combos
        .par_iter()
        .fold(
            || (scratch.clone(), Vec::new()),
            |(mut placed, mut best): (Line, Vec<Scored>), c| {
                let d = done.fetch_add(1, Atomic::Relaxed);
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
    (found, total)
}

/// Greedy start and one-bar swaps while they improve; the placement found
/// and the number evaluated.
pub(super) fn greedy(
    n: usize,
    n_cand: usize,
    evaluate: &(dyn Fn(&[usize]) -> Option<Score> + Sync),
) -> (Vec<Scored>, usize) {
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
