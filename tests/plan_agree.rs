//! One planner, one answer: `assess --plan N`, `demo` and `plan --max-bars
//! N` give the same best plan for every line under tests/fixtures/lines and
//! the demo; `plan --bars k` agrees for the size chosen; side variants are
//! one plan; the ranking's tie-breaks; a dead end explained (the charge
//! after the print nip, upstream of every allowed bar position); a brute
//! force over every pair with the full model; after-findings named from
//! the placed line.

use crate::util::websigma;
use std::path::{Path, PathBuf};
use websigma::assess::{Subject, Verdict, with_air_limit};
use websigma::field::{Scene, SolverSettings};
use websigma::model::{Line, Side, load_line, parse_line};
use websigma::plan::{
    BlockerCause, CLEARANCE_CAP, Candidate, Plan, PlanSettings, apply, candidates, clearance,
    combinations, full_assessment, plan,
};

/// Every line under tests/fixtures/lines.
fn fixture_lines() -> Vec<PathBuf> {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/lines");
    let mut v: Vec<PathBuf> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.extension().is_some_and(|x| x == "yaml"))
        .collect();
    v.sort();
    assert!(v.len() >= 2, "the gravure line and its dead-end variant");
    v
}

fn profiles(line: &Line) -> Vec<websigma::assess::ThresholdProfile> {
    with_air_limit(
        line.assess
            .iter()
            .map(|n| websigma::assess::profile::load_profile(n).unwrap())
            .collect(),
    )
}

/// `plan --format json` with `args`: the parsed document.
fn plan_json(line: &Path, args: &[&str]) -> serde_json::Value {
    let o = websigma()
        .arg("plan")
        .arg(line)
        .args(args)
        .args(["--format", "json"])
        .output()
        .unwrap();
    assert!(
        matches!(o.status.code(), Some(0 | 1)),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    serde_json::from_slice(&o.stdout).unwrap()
}

/// The best plan's bars in words, from the plan section of a report.md:
/// the second cell of the row of plan 1.
fn report_best(md: &str) -> String {
    let section = md
        .split("## Eliminator plan")
        .nth(1)
        .unwrap_or_else(|| panic!("no plan section:\n{md}"));
    let row = section
        .lines()
        .find(|l| l.starts_with("| 1 | "))
        .unwrap_or_else(|| panic!("no plan 1:\n{section}"));
    row.split(" | ").nth(1).unwrap().to_string()
}

/// `assess LINE --plan N`: its report.md.
fn assess_report(line: &Path, n: usize) -> String {
    let out = tempfile::tempdir().unwrap();
    let o = websigma()
        .arg("assess")
        .arg(line)
        .args(["--plan", &n.to_string(), "--map-resolution", "20"])
        .arg("--out")
        .arg(out.path())
        .output()
        .unwrap();
    assert_eq!(
        o.status.code(),
        Some(1),
        "the line fails, so it is planned: {}",
        String::from_utf8_lossy(&o.stderr)
    );
    std::fs::read_to_string(crate::util::only_report(out.path()).join("report.md")).unwrap()
}

/// For every fixture line and N = 1..3: `assess --plan N` and `plan
/// --max-bars N` give the same best plan, and `plan --bars k`, with k the
/// size that search chose, gives it too. Both state the same candidate
/// settings (100 mm spacing, 40 mm, powered, both sides).
#[test]
fn assess_plan_and_plan_agree_on_every_fixture_line() {
    for line in fixture_lines() {
        for n in 1..=3 {
            let md = assess_report(&line, n);
            let json = plan_json(&line, &["--max-bars", &n.to_string()]);
            let best = json["plans"][0]["text"].as_str().unwrap().to_string();
            assert_eq!(report_best(&md), best, "{} --plan {n}", line.display());
            let settings = json["settings"]["text"].as_str().unwrap();
            assert!(settings.contains("every 100 mm"), "{settings}");
            assert!(settings.contains("40 mm from the web"), "{settings}");
            assert!(settings.contains("above and below"), "{settings}");
            assert!(md.contains(settings), "the report states {settings}");
            assert_eq!(json["settings"]["spacing"].as_f64(), Some(0.1));
            assert_eq!(json["settings"]["distance"].as_f64(), Some(0.04));
            let k = json["plans"][0]["bars"].as_array().unwrap().len();
            assert!((1..=n).contains(&k));
            let exact = plan_json(&line, &["--bars", &k.to_string()]);
            assert_eq!(
                exact["plans"][0]["text"].as_str().unwrap(),
                best,
                "{} --bars {k}",
                line.display()
            );
        }
    }
}

/// The demo plans up to 3 bars in its report: the same best plan as `plan
/// --max-bars 3` on the demo line.
#[test]
fn demo_plan_is_the_plan_commands() {
    let out = tempfile::tempdir().unwrap();
    websigma()
        .arg("demo")
        .arg("--out")
        .arg(out.path())
        .assert()
        .success();
    let md =
        std::fs::read_to_string(crate::util::only_report(out.path()).join("report.md")).unwrap();
    let demo = Path::new(env!("CARGO_MANIFEST_DIR")).join("profiles/lines/demo.yaml");
    assert_eq!(
        std::fs::read_to_string(&demo).unwrap(),
        websigma::DEMO_LINE,
        "the demo runs the shipped demo line"
    );
    let json = plan_json(&demo, &["--max-bars", "3"]);
    assert_eq!(report_best(&md), json["plans"][0]["text"].as_str().unwrap());
}

/// The `--plan` help states the shared defaults, not another spacing.
#[test]
fn plan_help_states_the_shared_defaults() {
    let o = websigma().args(["assess", "--help"]).output().unwrap();
    let help = String::from_utf8(o.stdout).unwrap();
    // Whatever the width clap wraps the help to.
    let help = help.split_whitespace().collect::<Vec<_>>().join(" ");
    assert!(help.contains("every 100 mm"), "{help}");
    assert!(!help.contains("250 mm"), "{help}");
}

fn gravure(name: &str) -> (Line, Scene, Vec<websigma::assess::ThresholdProfile>) {
    let path = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/fixtures/lines")
        .join(name);
    let line = load_line(&path).unwrap();
    // As `plan` runs it: its tolerance, the default conductors' solve.
    let scene = Scene::new(
        &line,
        SolverSettings::new(1e-6).unwrap().with_default_conductors(),
    )
    .unwrap();
    let p = profiles(&line);
    (line, scene, p)
}

/// A plan's bars as (span, position bits, sides).
fn positions(p: &Plan, o: &websigma::plan::PlanOption) -> Vec<(usize, u64, Vec<Side>)> {
    o.bars
        .iter()
        .zip(&o.sides)
        .map(|(&b, s)| {
            (
                p.candidates[b].span,
                p.candidates[b].along.to_bits(),
                s.clone(),
            )
        })
        .collect()
}

/// Placements that differ only in the side of a bar are one plan listing
/// both sides, shown once; a side whose candidate does not exist is not
/// listed.
#[test]
fn side_variants_are_one_plan() {
    let (line, scene, profiles) = gravure("gravure.yaml");
    let p = plan(&line, &profiles, &PlanSettings::new(), &scene, &|_, _| {}).unwrap();
    let best = &p.options[0];
    assert_eq!(best.sides, vec![vec![Side::Above, Side::Below]]);
    // No two plans shown sit at the same positions.
    for (i, a) in p.options.iter().enumerate() {
        for b in &p.options[i + 1..] {
            let key = |o| {
                positions(&p, o)
                    .into_iter()
                    .map(|(s, x, _)| (s, x))
                    .collect::<Vec<_>>()
            };
            assert_ne!(key(a), key(b), "{:?} shown twice", key(a));
        }
    }
    // Both side variants really score the same with the full model.
    let c = &p.candidates[best.bars[0]];
    let mut scores = Vec::new();
    for side in [Side::Above, Side::Below] {
        let placed = apply(&line, &[Candidate { side, ..c.clone() }]);
        let a = full_assessment(&scene, &placed, &profiles).unwrap();
        scores.push((a.counts().fail, a.worst_margin()));
    }
    assert_eq!(scores[0].0, scores[1].0);
    assert!((scores[0].1 - scores[1].1).abs() <= 1e-9 * scores[0].1);
    // A list holding only the upper side lists only that side.
    let mut st = PlanSettings::new();
    st.candidates = Some(vec![Candidate {
        side: Side::Above,
        ..c.clone()
    }]);
    st.bars = Some(1);
    let one = plan(&line, &profiles, &st, &scene, &|_, _| {}).unwrap();
    assert_eq!(one.options[0].sides, vec![vec![Side::Above]]);
    // The grid's refused positions (below S5, near the cylinder) are never
    // listed as a side of a plan.
    for o in &p.options {
        for (span, x, sides) in positions(&p, o) {
            for side in sides {
                assert!(
                    p.candidates
                        .iter()
                        .any(|c| c.span == span && c.along.to_bits() == x && c.side == side),
                    "a side without a candidate"
                );
            }
        }
    }
}

/// The ranking of the module doc, written out independently: (fails, bars,
/// margin within 1e-9, distinct spans, clearance within 1 µm, larger
/// first, Σ s): whether `a` ranks strictly before `b`.
fn ranks_before(a: &Rank, b: &Rank) -> bool {
    if a.0 != b.0 {
        return a.0 < b.0;
    }
    if a.1 != b.1 {
        return a.1 < b.1;
    }
    if (a.2 - b.2).abs() > 1e-9 * a.2.max(b.2) {
        return a.2 < b.2;
    }
    if a.3 != b.3 {
        return a.3 < b.3;
    }
    if (a.4 - b.4).abs() > 1e-6 {
        return a.4 > b.4;
    }
    a.5 < b.5 - 1e-12
}

/// (fails, bars, worst margin, spans, clearance, Σ s).
type Rank = (usize, usize, f64, usize, f64, f64);

fn rank(line: &Line, a: &websigma::assess::Assessment, bars: &[Candidate]) -> Rank {
    let mut spans: Vec<usize> = bars.iter().map(|c| c.span).collect();
    spans.sort_unstable();
    spans.dedup();
    (
        a.counts().fail,
        bars.len(),
        a.worst_margin(),
        spans.len(),
        bars.iter()
            .map(|c| clearance(line, c, CLEARANCE_CAP))
            .fold(CLEARANCE_CAP, f64::min),
        bars.iter().map(|c| c.s(line)).sum(),
    )
}

/// The plans shown follow the stated ranking, and its tie-breaks decide
/// on the dead-end line: one bar before two with the same failures and
/// margin, and between equal single bars the one with more room.
#[test]
fn ranking_tie_breaks() {
    let (line, scene, profiles) = gravure("gravure_iic.yaml");
    let p = plan(&line, &profiles, &PlanSettings::new(), &scene, &|_, _| {}).unwrap();
    let planning = websigma::plan::planning_line(&line, &scene).unwrap();
    let ranks: Vec<Rank> = p
        .options
        .iter()
        .map(|o| {
            let bars: Vec<Candidate> = o.bars.iter().map(|&b| p.candidates[b].clone()).collect();
            rank(&planning, &o.assessment, &bars)
        })
        .collect();
    for w in ranks.windows(2) {
        assert!(
            !ranks_before(&w[1], &w[0]),
            "{:?} listed after {:?}",
            w[1],
            w[0]
        );
    }
    // Fewest bars: the best, with one bar, leaves as many failures as a
    // plan of more bars listed after it.
    assert_eq!(ranks[0].1, 1);
    let more = ranks
        .iter()
        .find(|r| r.1 > 1)
        .expect("plans of more bars listed");
    assert_eq!(more.0, ranks[0].0);
    // Plans 1 and 2 have one bar each on S4 and as many failures; the
    // lower worst margin (here the passive T1's onset check downstream),
    // else the clearance, decides.
    assert_eq!((ranks[1].0, ranks[1].1, ranks[1].3), (ranks[0].0, 1, 1));
    let tie = (ranks[1].2 - ranks[0].2).abs() <= 1e-9 * ranks[0].2;
    assert!(
        (tie && ranks[0].4 > ranks[1].4 + 1e-6) || (!tie && ranks[0].2 < ranks[1].2),
        "{ranks:?}"
    );
    // When no size passes, the best partial plan is chosen over every size
    // searched, not only the last.
    assert_eq!(p.max_bars, 3);
    assert_eq!(p.bars, 1);
}

/// The dead end names S4, the stretch after the nip R3 and R3: the charge
/// there is what the nip puts on (the fitted reading), the stretch ends at
/// the first allowed position on S4, no allowed bar lies upstream of it,
/// and the words say so in plan's text, its JSON and the report.
#[test]
fn dead_end_names_the_span_the_stretch_and_the_nip() {
    let (line, scene, profiles) = gravure("gravure_iic.yaml");
    let p = plan(&line, &profiles, &PlanSettings::new(), &scene, &|_, _| {}).unwrap();
    assert!(p.options[0].counts[2] > 0, "the variant is a dead end");
    let d = p.dead_end.as_ref().expect("a dead end is explained");
    let s4 = line.path.span_index("S4").unwrap();
    let b = d
        .blockers
        .iter()
        .find(|b| b.finding.subject == Subject::Span(s4))
        .expect("S4 blocks");
    assert_eq!(&*b.finding.rule, "web-charge-iic");
    let BlockerCause::UpstreamOfBars {
        span,
        stretch,
        bar_on_span,
        keep_clear,
        density,
        node,
        charged_at,
    } = &b.cause
    else {
        panic!("{:?}", b.cause);
    };
    assert_eq!(*span, s4);
    assert!(*bar_on_span);
    assert_eq!(node.as_deref(), Some("R3"));
    assert_eq!(charged_at.as_deref(), Some("R3"));
    // Three bar distances from the grounded nip roller (the placement rule).
    assert!((keep_clear.unwrap() - 0.12).abs() < 1e-12);
    let first = p
        .candidates
        .iter()
        .filter(|c| c.span == s4)
        .map(|c| c.along)
        .fold(f64::INFINITY, f64::min);
    assert_eq!(*stretch, first);
    assert!(*stretch >= 0.12);
    // The density on the stretch is what arrives without any bar: the
    // before finding's value, and above the failure limit.
    let before = p
        .before
        .findings
        .iter()
        .find(|f| f.rule == b.finding.rule && f.subject == Subject::Span(s4))
        .unwrap();
    assert!((density - before.value).abs() <= 1e-9 * before.value);
    assert!(*density > b.limit);
    assert!((b.limit - 1e-6).abs() < 1e-15, "{}", b.limit);
    // Every allowed position at once: the superposition and the full model
    // agree on what still fails.
    assert_eq!(d.fails_fast, d.fails_full);
    assert!(d.blockers.len() <= d.fails_full);

    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/lines/gravure_iic.yaml");
    let json = plan_json(&path, &[]);
    let blocker = &json["dead_end"]["blockers"][0];
    assert_eq!(blocker["cause"], "upstream_of_bars");
    assert_eq!(blocker["span"], "S4");
    assert_eq!(blocker["charged_at"], "R3");
    let words = blocker["text"].as_str().unwrap();
    for part in [
        "S4 carries 3.643 µC/m² on its first 167.1 mm after R3",
        "a bar keeps 120 mm from R3",
        "upstream of every allowed bar position",
        "reduce charging at R3",
    ] {
        assert!(words.contains(part), "{part:?} not in {words}");
    }
    let text = websigma().arg("plan").arg(&path).output().unwrap();
    assert_eq!(text.status.code(), Some(1));
    let text = String::from_utf8(text.stdout).unwrap();
    assert!(text.contains(words), "{text}");
    assert!(
        text.contains("the best partial plan leaves failing"),
        "{text}"
    );
    let md = assess_report(&path, 3);
    assert!(md.contains(words), "{md}");
    assert!(md.contains("The best partial plan leaves failing"), "{md}");
}

/// The report's plan section lists the positions refused for their
/// clearance from grounded conductors, as `plan` does.
#[test]
fn report_lists_refused_positions() {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/lines/gravure.yaml");
    let md = assess_report(&path, 1);
    let json = plan_json(&path, &["--max-bars", "1"]);
    let refused = json["refused"].as_array().unwrap();
    assert_eq!(refused.len(), 4, "below S5, near the cylinder CYL");
    for r in refused {
        let r = r.as_str().unwrap();
        assert!(r.contains("cylinder CYL"), "{r}");
        assert!(md.contains(r), "{r} not in the report");
    }
}

/// A small line: two spans, a charge at the start and one added at the
/// roller, an operator beside each span.
const SMALL: &str = r#"
line: Pairs test line
web: {width: 1 m, thickness: 30 um, relative_permittivity: 3, relaxation_time: 20 s, speed: 2 m/s}
ground_plane: 0 m
rollers:
  - {id: A, center: [2 m, 0.95 m], diameter: 100 mm, earthing: grounded}
path:
  - point: [0 m, 1 m]
    id: IN
  - {roller: A, wrap: cw}
  - point: [4 m, 1 m]
    id: OUT
charge:
  - at: start
    sigma: 40 uC/m^2
  - at: A
    adds: 30 uC/m^2
points:
  - {id: OP1, kind: operator, at: [3 m, 0.8 m, 1.2 m]}
  - {id: OP2, kind: operator, at: [1 m, 0.8 m, 1.2 m]}
assess: [operator-shock]
"#;

/// Brute force over every pair of the planner's own candidates, each
/// assessed with the full model and ranked by the stated rule written out
/// independently: no pair ranks before the planner's best 2-bar plan, the
/// best pair ties it, and it is one of the plan's side combinations.
#[test]
fn brute_force_over_pairs_equals_the_best_two_bar_plan() {
    let line = parse_line(SMALL).unwrap();
    let profiles = profiles(&line);
    let scene = Scene::new(&line, SolverSettings::new(1e-8).unwrap()).unwrap();
    let mut st = PlanSettings::new();
    st.spacing = 0.5;
    st.bars = Some(2);
    let cands = candidates(&line, &st);
    assert!(cands.len() >= 8, "{}", cands.len());
    let p = plan(&line, &profiles, &st, &scene, &|_, _| {}).unwrap();
    assert_eq!(p.candidates, cands);
    let best = &p.options[0];
    let best_bars: Vec<Candidate> = best.bars.iter().map(|&b| cands[b].clone()).collect();
    let planner = rank(&line, &best.assessment, &best_bars);
    let mut top: Option<(Rank, Vec<usize>)> = None;
    for c in combinations(cands.len(), 2) {
        let bars: Vec<Candidate> = c.iter().map(|&i| cands[i].clone()).collect();
        let a = full_assessment(&scene, &apply(&line, &bars), &profiles).unwrap();
        let r = rank(&line, &a, &bars);
        assert!(
            !ranks_before(&r, &planner),
            "{c:?} {r:?} ranks before the planner's {planner:?}"
        );
        if top.as_ref().is_none_or(|t| ranks_before(&r, &t.0)) {
            top = Some((r, c));
        }
    }
    let (r, c) = top.unwrap();
    assert!(!ranks_before(&planner, &r) && !ranks_before(&r, &planner));
    let mut got = positions(&p, best);
    got.sort_by_key(|a| (a.0, a.1));
    let mut brute: Vec<&Candidate> = c.iter().map(|&i| &cands[i]).collect();
    brute.sort_by_key(|a| (a.span, a.along.to_bits()));
    assert_eq!(got.len(), brute.len());
    for ((span, x, sides), b) in got.iter().zip(brute) {
        assert_eq!((*span, *x), (b.span, b.along.to_bits()));
        assert!(sides.contains(&b.side), "{sides:?} vs {:?}", b.side);
    }
}

/// Findings with the plan are named from the placed line: on the gravure
/// line the new bar PB1 sorts before T1, and the zone-approval caution is
/// about PB1 in Z1 (on S4), never T1 (on S5, outside Z1); T1's own findings
/// before the plan find T1's after it.
#[test]
fn after_findings_are_named_from_the_placed_line() {
    let (line, scene, profiles) = gravure("gravure.yaml");
    let p = plan(&line, &profiles, &PlanSettings::new(), &scene, &|_, _| {}).unwrap();
    let best = &p.options[0];
    let approval: Vec<String> = best
        .assessment
        .findings
        .iter()
        .filter(|f| &*f.rule == "zone-approval" && f.verdict != Verdict::Pass)
        .map(|f| websigma::report::notes::subject_label(&best.placed, &f.subject))
        .collect();
    assert_eq!(approval, vec!["PB1 (powered on S4 (R3-R4))".to_string()]);
    let t1_before = p
        .before
        .findings
        .iter()
        .filter(|f| matches!(f.subject, Subject::Eliminator(i) if line.eliminators[i].id == "T1"))
        .collect::<Vec<_>>();
    assert!(!t1_before.is_empty(), "T1 has findings before");
    for f in t1_before {
        let g = best.after(&line, f).expect("T1's finding after the plan");
        let Subject::Eliminator(j) = g.subject else {
            panic!("{:?}", g.subject);
        };
        assert_eq!(best.placed.eliminators[j].id, "T1");
    }
    let o = websigma()
        .arg("plan")
        .arg(Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/lines/gravure.yaml"))
        .output()
        .unwrap();
    let text = String::from_utf8(o.stdout).unwrap();
    assert!(text.contains("PB1 (powered on S4 (R3-R4))"), "{text}");
    assert!(
        !text
            .lines()
            .any(|l| l.contains("zone-approval") && l.contains("T1 (passive")),
        "{text}"
    );
}

/// A dead end that more bars would open: on the small line at a lower
/// charge, one bar cannot pass while a bar at every allowed position does;
/// no finding blocks, and the words say more bars are needed. (The charge
/// levels are tried in turn; at least one must be such a line.)
#[test]
fn dead_end_without_blockers_asks_for_more_bars() {
    let mut found = false;
    for (sigma, adds) in [("4", "2"), ("8", "4"), ("12", "8"), ("16", "12")] {
        let text = SMALL
            .replace("sigma: 40 uC/m^2", &format!("sigma: {sigma} uC/m^2"))
            .replace("adds: 30 uC/m^2", &format!("adds: {adds} uC/m^2"));
        let line = parse_line(&text).unwrap();
        let profiles = profiles(&line);
        let scene = Scene::new(&line, SolverSettings::new(1e-8).unwrap()).unwrap();
        let mut st = PlanSettings::new();
        st.spacing = 0.5;
        st.bars = Some(1);
        let p = plan(&line, &profiles, &st, &scene, &|_, _| {}).unwrap();
        if p.options[0].counts[2] == 0 {
            assert!(p.dead_end.is_none());
            continue;
        }
        let d = p.dead_end.as_ref().unwrap();
        // Confirm with the full model: the blockers are exactly the
        // findings, other than the bars' own, that fail with a bar at
        // every allowed position.
        let mut seen = Vec::new();
        let all: Vec<Candidate> = p
            .candidates
            .iter()
            .filter(|c| {
                let k = (c.span, c.along.to_bits());
                let new = !seen.contains(&k);
                seen.push(k);
                new
            })
            .cloned()
            .collect();
        assert_eq!(all.len(), d.positions);
        let a = full_assessment(&scene, &apply(&line, &all), &profiles).unwrap();
        let failing = a
            .findings
            .iter()
            .filter(|f| f.verdict == Verdict::Fail && &*f.profile != "eliminators")
            .count();
        assert_eq!(failing, d.blockers.len());
        if d.blockers.is_empty() {
            let words = websigma::report::plan_words::dead_end_intro(d, p.max_bars);
            assert!(words.contains("not with 1 bar(s) or fewer"), "{words}");
            found = true;
        }
    }
    assert!(found, "no charge level where only more bars help");
}

/// The planner's pieces solved together ([`Scene::unit_pieces`], one
/// conductors' solve with a matrix of right-hand sides) agree with each piece
/// solved on its own ([`Scene::unit_piece`]) to 1e-12 relative, in E and V at
/// points around the demo line (rollers and conductors in the solve). The
/// two differ only in the order the blocked substitution adds up.
#[test]
fn pieces_solved_together_agree_with_one_solve_each() {
    let line = parse_line(websigma::DEMO_LINE).unwrap();
    let scene = Scene::new(&line, SolverSettings::default().with_default_conductors()).unwrap();
    assert!(scene.conductors().is_some(), "the demo line has conductors");
    let base = websigma::charge::charge_profile(&line);
    let total = line.path.total_length;
    let cuts: Vec<f64> = (0..=12).map(|k| total * k as f64 / 12.0).collect();
    let pieces: Vec<(f64, f64)> = cuts.windows(2).map(|w| (w[0], w[1])).collect();
    let together = scene.unit_pieces(&base, &pieces);
    let points: Vec<[f64; 3]> = line.points.iter().map(|p| p.at).collect();
    assert!(!points.is_empty());
    for (k, &(a, b)) in pieces.iter().enumerate() {
        let alone = scene.unit_piece(&base, a, b);
        for &p in &points {
            let (x, y) = (
                together[k].at(p, false).unwrap(),
                alone.at(p, false).unwrap(),
            );
            let scale = y.e_magnitude().max(1e-300);
            for c in 0..3 {
                assert!(
                    (x.e[c] - y.e[c]).abs() <= 1e-12 * scale,
                    "piece {k} at {p:?}: E {:?} vs {:?}",
                    x.e,
                    y.e
                );
            }
            assert!(
                (x.v - y.v).abs() <= 1e-12 * y.v.abs().max(1e-300),
                "piece {k} at {p:?}: V {} vs {}",
                x.v,
                y.v
            );
        }
    }
}
