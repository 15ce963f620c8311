//! Findings an auditor can sign, on the demo line: every value and limit
//! with its unit (a meter rule's "at 1 in"), no 0.00× margin, no warning
//! below its warning limit, the summary led by ignition in zones, then
//! shock, electronics and equipment, and the meter rules compared in the
//! meter's terms.

use crate::util::websigma;
use websigma::assess::{Check, Hazard, Verdict, with_air_limit};
use websigma::field::SolverSettings;
use websigma::model::parse_line;
use websigma::report::build::{FindingRow, Report, build_report};
use websigma::report::finding_text::{limit_text, margin_text, value_text};
use websigma::units::EPS0;

/// The demo line's report, built as `assess` builds it (conductors solved).
fn demo_report() -> Report {
    let text = websigma::DEMO_LINE;
    let line = parse_line(text).unwrap();
    let profiles = with_air_limit(
        line.assess
            .iter()
            .map(|n| websigma::assess::profile::load_profile(n).unwrap())
            .collect(),
    );
    let solver = SolverSettings::default().with_default_conductors();
    let websigma::pipeline::Analysis { evaluation: e, .. } =
        websigma::pipeline::analyse(&line, &profiles, &websigma::pipeline::Settings::new(solver))
            .unwrap();
    let now = chrono::DateTime::parse_from_rfc3339("2026-01-02T03:04:05Z")
        .unwrap()
        .with_timezone(&chrono::Utc);
    build_report(
        &line,
        "demo.yaml",
        text,
        &e.charge,
        &e.readings,
        &e.points,
        &e.assessment,
        &profiles,
        solver,
        Vec::new(),
        now,
    )
}

/// Whether a shown quantity ends in a unit (letters or symbols after the
/// number), says what its ratio is, or says it is dimensionless.
fn has_unit(text: &str) -> bool {
    let number_end = text
        .find(|c: char| !(c.is_ascii_digit() || ".-e+".contains(c)))
        .unwrap_or(text.len());
    let rest = text[number_end..].trim();
    !rest.is_empty()
        && rest
            .chars()
            .any(|c| c.is_alphabetic() || "µ²Ω%(".contains(c))
}

#[test]
fn every_demo_finding_shows_its_value_and_limits_with_a_unit() {
    let r = demo_report();
    assert!(r.findings.len() > 20, "{}", r.findings.len());
    for f in &r.findings {
        let (v, l) = (value_text(f), limit_text(f));
        assert!(has_unit(&v), "{}/{} value {v:?}", f.profile, f.rule);
        // "warn 2 kV, fail 10 kV": each limit carries a unit.
        for part in l.split(", ") {
            let q = part.trim_start_matches("warn ").trim_start_matches("fail ");
            assert!(has_unit(q), "{}/{} limit {l:?}", f.profile, f.rule);
        }
        let m = margin_text(f.margin);
        assert!(
            !m.starts_with("0.00×"),
            "{}/{} margin {m}",
            f.profile,
            f.rule
        );
        if f.margin > 0.0 {
            assert_ne!(m, "0×", "{}/{}", f.profile, f.rule);
        }
        if f.meter.is_some() {
            // "2.6 kV at 1 in", or with its range "2.6 kV at 1 in (2.43 kV to 2.77 kV)".
            let v = v.split(" (").next().unwrap_or_default();
            assert!(v.ends_with(" at 1 in"), "{v}");
            assert!(l.contains(" at 1 in"), "{l}");
        }
    }
}

#[test]
fn no_warning_sits_below_its_warning_limit_and_no_failure_below_its_failure_limit() {
    // Verdicts are judged on the value's range (`assess::judge`): a
    // failure's whole range is at or above the failure limit, an uncertain
    // finding's range straddles it, a warning's top reaches the warning
    // limit only, a pass's range is below every limit.
    let r = demo_report();
    for f in &r.findings {
        let (lo, hi) = (f.bounds.low, f.bounds.high);
        assert!(lo <= f.value && f.value <= hi, "{}/{}", f.profile, f.rule);
        match f.verdict {
            Verdict::Warn => {
                let w = f.warn.expect("a warning has a warning limit");
                assert!(hi >= w, "{}/{}: {} < {w}", f.profile, f.rule, hi);
                assert!(f.fail.is_none_or(|x| hi < x));
            }
            Verdict::Uncertain => {
                let x = f.fail.expect("an uncertain finding has a failure limit");
                assert!(lo < x && x <= hi, "{}/{}", f.profile, f.rule);
            }
            Verdict::Fail => {
                let x = f.fail.expect("a failure has a failure limit");
                assert!(lo >= x, "{}/{}", f.profile, f.rule);
            }
            Verdict::Pass => {
                assert!(
                    f.warn.is_none_or(|w| hi < w) && f.fail.is_none_or(|x| hi < x),
                    "{}/{}",
                    f.profile,
                    f.rule
                );
            }
        }
    }
}

/// Findings are ordered by verdict, then class of harm, then margin; the
/// report's summary lists the failing and warning findings per class,
/// ignition in zones first.
#[test]
fn the_summary_leads_with_ignition_then_shock_electronics_equipment() {
    let r = demo_report();
    let key = |f: &FindingRow| (std::cmp::Reverse(f.verdict), f.hazard);
    for w in r.findings.windows(2) {
        assert!(
            key(&w[0]) <= key(&w[1]),
            "{}/{} before {}/{}",
            w[0].profile,
            w[0].rule,
            w[1].profile,
            w[1].rule
        );
        if key(&w[0]) == key(&w[1]) {
            assert!(w[0].margin >= w[1].margin);
        }
    }
    let md =
        websigma::report::Writer::render(&websigma::report::markdown::MarkdownWriter, &r).unwrap();
    let md = String::from_utf8(md).unwrap();
    let summary = &md[md.find("## Summary").unwrap()..md.find("## Method").unwrap()];
    let headings = [
        "Ignition in hazardous zones:",
        "Shock to people:",
        "Electronics:",
        "Equipment and product:",
    ];
    let at: Vec<Option<usize>> = headings.iter().map(|h| summary.find(h)).collect();
    // The demo has failing or warning findings of the first three classes.
    let present: Vec<usize> = at.iter().flatten().copied().collect();
    assert!(present.len() >= 3, "{summary}");
    assert!(present.windows(2).all(|w| w[0] < w[1]), "{summary}");
    for h in Hazard::ALL {
        let any = r
            .findings
            .iter()
            .any(|f| f.hazard == h && f.verdict != Verdict::Pass);
        let i = Hazard::ALL.iter().position(|&x| x == h).unwrap();
        assert_eq!(any, at[i].is_some(), "{h}: {summary}");
    }
    // Each summary line reads in the source's terms.
    assert!(summary.contains(" at 1 in against "), "{summary}");
}

/// The meter-screening rule compares a reading at 1 in: on a wide free span
/// far from rollers and ground a meter at d reads σd/(2ε0) (Gauss's law,
/// isolated sheet), so 2 µC/m² reads 2.87 kV at 1 in and passes the 5 kV
/// boundary that the one-sided conversion ε0E (1.7 µC/m²) used to fail.
#[test]
fn the_five_kv_rule_compares_a_meter_reading_not_a_one_sided_density() {
    let line = parse_line(
        "web: {width: 4 m, thickness: 30 um, relative_permittivity: 2.2, relaxation_time: 1e30 s, speed: 1 m/s}\n\
         path:\n  - point: [0 m, 50 m]\n    id: A\n  - point: [8 m, 50 m]\n    id: B\n\
         charge:\n  - at: start\n    sigma: 2 uC/m^2\n\
         zones:\n  - {id: Z, zone: 1, gas_group: IIA, mie: 0.24 mJ, box: {from: [-1 m, -3 m, 49 m], to: [9 m, 3 m, 51 m]}}\n",
    )
    .unwrap();
    let profiles = with_air_limit(vec![
        websigma::assess::profile::load_profile("ex-zone-1").unwrap(),
    ]);
    let a = websigma::pipeline::analyse(&line, &profiles, &websigma::pipeline::Settings::default())
        .unwrap()
        .evaluation
        .assessment;
    let m: Vec<_> = a
        .findings
        .iter()
        .filter(|f| &*f.rule == "meter-screening-iia-iib")
        .collect();
    assert_eq!(m.len(), 1);
    let expected = 2e-6 * 0.0254 / (2.0 * EPS0);
    // The 8 m × 4 m sheet's field 1 in off it is within 1 % of the
    // infinite sheet's anywhere 2 in inside its edges.
    assert!(
        (m[0].value - expected).abs() < 0.01 * expected,
        "{} vs {expected}",
        m[0].value
    );
    assert_eq!(m[0].verdict, Verdict::Pass);
    assert_eq!(m[0].meter, Some(0.0254));
    let rule = websigma::assess::profile::load_profile("ex-zone-1").unwrap();
    assert!(rule.rules.iter().any(|r| r.check == Check::MeterReading));
}

/// `assess` on the demo prints the meter rules in the meter's terms and no
/// margin of 0.00×.
#[test]
fn assess_prints_findings_in_the_sources_terms() {
    let dir = tempfile::tempdir().unwrap();
    let out = websigma()
        .args(["assess", "profiles/lines/demo.yaml", "--out"])
        .arg(dir.path())
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(1));
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(text.contains("at 1 in"), "{text}");
    assert!(!text.contains("0.00×"), "{text}");
    assert!(text.contains("secondary source"), "{text}");
}
