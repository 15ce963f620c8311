//! Tests of the planner's exhaustive search against a plain brute force:
//! every placement scored on its own, the way one placement is assessed
//! (bars with ids fitted to a copy of the line, the charge profile, the
//! superposition's field, [`crate::assess::score`]), then sorted by the
//! ranking of `search`. Lines and candidate lists are drawn from a fixed
//! seed (a linear congruential generator: D. Knuth, TAOCP vol. 2, §3.2.1,
//! with the constants of PCG's multiplier), so every run checks the same
//! cases.

use super::influence::{Fast, Influence, sampled_points};
use super::placement::{Scorer, Scratch, side_classes};
use super::search::{self, Score, Scored};
use super::{Candidate, apply, clearance, planning_line};
use crate::field::{FieldAt, FieldMap, Scene, SolverSettings};
use crate::model::{EliminatorKind, Line, Side};

/// A reproducible stream of numbers in [0, 1).
struct Lcg(u64);

impl Lcg {
    fn next(&mut self) -> f64 {
        self.0 = self
            .0
            .wrapping_mul(6_364_136_223_846_793_005)
            .wrapping_add(1_442_695_040_888_963_407);
        (self.0 >> 11) as f64 / (1u64 << 53) as f64
    }

    fn below(&mut self, n: usize) -> usize {
        ((self.next() * n as f64) as usize).min(n - 1)
    }
}

/// The demo line (conductors left out, so the scene is quick) with its
/// charge entries scaled by `scale`, and its profiles.
fn demo(scale: f64) -> (Line, Scene, Vec<crate::assess::ThresholdProfile>) {
    let mut line = crate::model::parse_line(crate::DEMO_LINE).expect("the demo line parses");
    for e in &mut line.charge {
        e.sigma *= scale;
    }
    let profiles = crate::assess::with_air_limit(
        line.assess
            .iter()
            .map(|n| crate::assess::profile::load_profile(n))
            .collect::<Result<Vec<_>, _>>()
            .expect("the demo's profiles load"),
    );
    let scene = Scene::new(&line, SolverSettings::new(1e-6).expect("a valid tolerance"))
        .expect("the scene builds");
    let line = planning_line(&line, &scene).expect("the readings convert");
    (line, scene, profiles)
}

/// `count` positions drawn on the line's spans, each with one or both
/// sides, some with a lower efficiency (another side class at the same
/// place), and one position listed twice on the same side.
fn random_candidates(line: &Line, rng: &mut Lcg, count: usize) -> Vec<Candidate> {
    let mut out = Vec::new();
    for _ in 0..count {
        let span = rng.below(line.path.spans.len());
        let length = line.path.spans[span].length;
        let along = length * (0.05 + 0.9 * rng.next());
        let efficiency = if rng.next() < 0.2 { 0.8 } else { 0.95 };
        let c = Candidate {
            kind: EliminatorKind::Powered,
            span,
            along,
            side: Side::Above,
            distance: 0.04,
            efficiency,
            residual: 0.0,
        };
        match rng.below(3) {
            0 => out.push(c),
            1 => out.push(Candidate {
                side: Side::Below,
                ..c
            }),
            _ => {
                out.push(c.clone());
                out.push(Candidate {
                    side: Side::Below,
                    ..c
                });
            }
        }
    }
    if let Some(c) = out.first().cloned() {
        out.push(c);
    }
    out
}

/// One placement scored on its own, as the planner scored every placement
/// before the search grouped them by side class.
fn plain_score(
    line: &Line,
    inf: &Influence,
    profiles: &[crate::assess::ThresholdProfile],
    cands: &[Candidate],
    clearances: &[f64],
    bars: &[usize],
) -> Option<Score> {
    let mut placed = line.clone();
    for (i, &b) in bars.iter().enumerate() {
        placed
            .eliminators
            .push(cands[b].eliminator(line, &format!("PB{}", i + 1)));
    }
    placed.eliminators.sort_by(|a, b| a.s.total_cmp(&b.s));
    let charge = crate::charge::charge_profile(&placed);
    let fast = Fast::new(inf, &placed.eliminators);
    let pts = FieldMap {
        points: placed
            .points
            .iter()
            .map(|p| fast.field_at(p.at, false))
            .collect::<Result<Vec<_>, _>>()
            .ok()?,
    };
    let sc = crate::assess::score(&placed, &charge, &fast, &pts, profiles).ok()?;
    Some(search::score_of(
        sc.fails,
        sc.worst_margin,
        bars,
        cands,
        clearances,
        line,
    ))
}

/// Every placement of `n` bars scored by `plain_score`, best first.
fn brute_force(
    line: &Line,
    inf: &Influence,
    profiles: &[crate::assess::ThresholdProfile],
    cands: &[Candidate],
    clearances: &[f64],
    n: usize,
) -> Vec<Scored> {
    let mut all: Vec<Scored> = search::combinations(cands.len(), n)
        .into_iter()
        .filter_map(|c| plain_score(line, inf, profiles, cands, clearances, &c).map(|s| (c, s)))
        .collect();
    all.sort_by(search::order);
    all
}

/// Scores bit for bit (the search may not round differently).
fn same(a: &Score, b: &Score) -> bool {
    a.fails == b.fails
        && a.bars == b.bars
        && a.margin.to_bits() == b.margin.to_bits()
        && a.spans == b.spans
        && a.clearance.to_bits() == b.clearance.to_bits()
        && a.upstream.to_bits() == b.upstream.to_bits()
}

#[test]
fn grouped_search_equals_brute_force_on_random_candidates() {
    let mut rng = Lcg(13);
    let mut saw_fail = false;
    let mut saw_pass = false;
    let mut saw_tie = false;
    // A low charge (most placements pass), the demo's, and a high one
    // (placements with failing findings).
    for scale in [0.2, 1.0, 4.0] {
        let (line, scene, profiles) = demo(scale);
        for _ in 0..2 {
            let cands = random_candidates(&line, &mut rng, 6);
            let clearances: Vec<f64> = cands
                .iter()
                .map(|c| clearance(&line, c, search::CLEARANCE_CAP))
                .collect();
            let points = sampled_points(&line, &scene, &profiles).expect("points");
            let mut inf = Influence::build(&line, points, &cands, &scene).expect("influences");
            inf.learn_order(|fast| super::placement::ask_all(&line, fast, &profiles));
            let scorer = Scorer::new(&line, &cands, &clearances, &inf, &profiles);
            let scratch = scorer.scratch();
            let class = side_classes(&cands);
            for n in 1..=3 {
                let brute = brute_force(&line, &inf, &profiles, &cands, &clearances, n);
                let total = search::combinations(cands.len(), n).len();
                // Everything kept: the whole ranking must agree.
                let (found, count) = search::exhaustive(
                    n,
                    &class,
                    total,
                    &scratch,
                    &|p: &mut Scratch, b: &[usize]| scorer.shared(p, b),
                    &|p: &mut Scratch, b: &[usize], sh: &super::placement::Shared| {
                        scorer.finish(p, b, sh)
                    },
                    &|_, _| {},
                );
                assert_eq!(count, total, "every placement is counted");
                assert_eq!(found.len(), brute.len(), "every placement is scored");
                for (f, b) in found.iter().zip(&brute) {
                    assert_eq!(f.0, b.0, "same placement at the same rank (n = {n})");
                    assert!(same(&f.1, &b.1), "same score: {:?} vs {:?}", f.1, b.1);
                }
                // The planner's own room (a few plans): the best few agree.
                let (top, _) = search::exhaustive(
                    n,
                    &class,
                    5,
                    &scratch,
                    &|p: &mut Scratch, b: &[usize]| scorer.shared(p, b),
                    &|p: &mut Scratch, b: &[usize], sh: &super::placement::Shared| {
                        scorer.finish(p, b, sh)
                    },
                    &|_, _| {},
                );
                assert_eq!(top, brute[..5.min(brute.len())].to_vec());
                saw_fail |= brute.iter().any(|b| b.1.fails > 0);
                saw_pass |= brute.iter().any(|b| b.1.fails == 0);
                saw_tie |= brute.windows(2).any(|w| search::tie(&w[0].1, &w[1].1));
            }
        }
    }
    assert!(saw_fail, "some placements fail a rule");
    assert!(saw_pass, "some placements pass");
    assert!(saw_tie, "some placements tie (side variants)");
}

#[test]
fn class_multisets_cover_every_placement_once() {
    // Classes of sizes 2, 1, 3, 1: the placements of n bars, grouped by
    // class multiset, are the C(7, n) subsets, each once.
    let class = [0, 0, 2, 3, 3, 3, 6];
    let members = search::class_members(&class);
    assert_eq!(members, vec![vec![0, 1], vec![2], vec![3, 4, 5], vec![6]]);
    let sizes: Vec<usize> = members.iter().map(Vec::len).collect();
    for n in 0..=5 {
        let mut all: Vec<Vec<usize>> = search::class_multisets(&sizes, n)
            .iter()
            .flat_map(|m| search::members_of(m, &members))
            .collect();
        all.sort();
        assert_eq!(all, search::combinations(class.len(), n), "n = {n}");
    }
}

#[test]
fn side_classes_join_only_the_sides() {
    let (line, _, _) = demo(1.0);
    let mut rng = Lcg(7);
    let cands = random_candidates(&line, &mut rng, 8);
    let class = side_classes(&cands);
    for (i, a) in cands.iter().enumerate() {
        for (j, b) in cands.iter().enumerate() {
            let alike = Candidate {
                side: a.side,
                ..b.clone()
            } == *a;
            assert_eq!(class[i] == class[j], alike, "candidates {i} and {j}");
        }
    }
    // The placed line of a plan is what `apply` gives (the full
    // re-assessment sees the same bars the search scored).
    let placed = apply(&line, &cands[..2]);
    assert_eq!(placed.eliminators.len(), line.eliminators.len() + 2);
}

/// The greedy search reports its progress: the greedy start as one task of
/// Σ_{i<n} (n_cand − i) placements, each pass of swaps as one of
/// n·(n_cand − n), each ending at its total, and the count it returns is
/// the number of placements it evaluated.
#[test]
fn greedy_search_reports_progress_to_each_phase_total() {
    let (n, n_cand) = (2, 7);
    let evaluated = std::sync::atomic::AtomicUsize::new(0);
    // Lower Σ (index − 3)² is better: the best pair is {2, 3} or {3, 4}.
    let evaluate = |_: &mut (), bars: &[usize]| {
        evaluated.fetch_add(1, std::sync::atomic::Ordering::Relaxed);
        Some(Score {
            fails: 0,
            bars: bars.len(),
            margin: bars.iter().map(|&b| (b as f64 - 3.0).powi(2)).sum(),
            spans: 1,
            clearance: 1.0,
            upstream: 0.0,
        })
    };
    let calls = std::sync::Mutex::new(Vec::new());
    let progress = |done: usize, total: usize| calls.lock().unwrap().push((done, total));
    let (found, count) = search::greedy(n, n_cand, &(), &evaluate, &progress);
    assert_eq!(count, evaluated.load(std::sync::atomic::Ordering::Relaxed));
    assert_eq!(found.len(), 1);
    assert_eq!(found[0].1.margin, 1.0, "{:?}", found[0]);
    let calls = calls.into_inner().unwrap();
    let start = 7 + 6;
    let pass = 2 * (7 - 2);
    assert!(calls.contains(&(start, start)), "{calls:?}");
    assert!(calls.contains(&(pass, pass)), "{calls:?}");
    assert!(
        calls
            .iter()
            .all(|&(d, t)| d <= t && (t == start || t == pass))
    );
    // The greedy start, then at least one pass of swaps.
    assert!(count >= start + pass, "{count}");
}
