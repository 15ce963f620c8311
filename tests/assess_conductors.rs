//! The assessment with conductors (issue #9, "what this changes
//! downstream"): the 10 pF rule on solved capacitances, the spark energy of
//! isolated conductors against the zone's MIE, people under the operator
//! rules, insulating rollers' area in zones, and gap discharges where the
//! web leaves a grounded roller. Small invented lines; conductors are asked
//! for explicitly (`with_conductors`).

use approx::assert_relative_eq;
use websigma::assess::gap::{GAP_MAX, GAP_MIN};
use websigma::assess::{
    Finding, FindingNote, Subject, ThresholdProfile, Verdict, cylinder_over_plane_capacitance,
    load_profile, roller_capacitance, with_air_limit,
};
use websigma::field::{ConductorResult, SolverSettings};
use websigma::model::{Line, parse_line};
use websigma::physics::gap_breakdown_sigma;
use websigma::pipeline::{Analysis, Settings, analyse};

/// A web that does not relax (every span a uniform sheet: fast).
const WEB: &str = "web: {width: 1 m, thickness: 30 um, relative_permittivity: 2.2, relaxation_time: 1e30 s, speed: 1 m/s}\nground_plane: 0 m\n";

fn line(text: &str) -> Line {
    match parse_line(text) {
        Ok(l) => l,
        Err(e) => panic!("{e}\n{text}"),
    }
}

/// The line analysed with its profiles (air limit added), with or without
/// the conductors' solve (100 mm panels).
fn analysed(line: &Line, profiles: &[&str], conductors: bool) -> Analysis {
    let profiles: Vec<ThresholdProfile> =
        with_air_limit(profiles.iter().map(|n| load_profile(n).unwrap()).collect());
    let mut solver = SolverSettings::default();
    if conductors {
        solver = solver.with_conductors(0.1).unwrap();
    }
    analyse(line, &profiles, &Settings::new(solver)).unwrap()
}

/// The conductors' results of the analysed line, as the field stage gives them.
fn results(a: &Analysis) -> Vec<ConductorResult> {
    a.scene
        .web(&a.evaluation.charge)
        .conductor_results()
        .unwrap()
}

fn result<'a>(r: &'a [ConductorResult], id: &str) -> &'a ConductorResult {
    r.iter().find(|c| c.id == id).expect("a conductor result")
}

fn findings<'a>(a: &'a Analysis, rule: &str) -> Vec<&'a Finding> {
    a.evaluation
        .assessment
        .findings
        .iter()
        .filter(|f| &*f.rule == rule)
        .collect()
}

fn one<'a>(a: &'a Analysis, rule: &str) -> &'a Finding {
    let f = findings(a, rule);
    assert_eq!(f.len(), 1, "{rule}: {f:#?}");
    f[0]
}

/// One straight span from a free point over roller R (isolated, 100 mm,
/// axis 1 m above the grounded floor) to another free point, with a zone
/// 1 IIA box around the roller; `extra` adds keys (conductors, points).
fn roller_line(earthing: &str, sigma: &str, extra: &str) -> Line {
    line(&format!(
        "{WEB}rollers:\n  - {{id: R, center: [1 m, 1 m], diameter: 100 mm, earthing: {earthing}}}\n\
         path:\n  - point: [0 m, 1.05 m]\n  - {{roller: R, wrap: cw}}\n  - point: [2 m, 1.05 m]\n\
         charge:\n  - at: start\n    sigma: {sigma}\n\
         zones:\n  - {{id: Z1, zone: 1, gas_group: IIA, mie: 0.24 mJ, box: {{from: [0.5 m, -1 m, 0.5 m], to: [1.5 m, 1 m, 1.5 m]}}}}\n{extra}"
    ))
}

// ------------------------------------------------ 10 pF rule, solved C

/// TRBS 2153 8.3.5: earth any conductor above 10 pF. With conductors the
/// rule takes the boundary-element capacitance to ground, exactly; without,
/// the analytic cylinder over a plane, C = 2πε0·L/arcosh(h/r) (image line
/// charge, Smythe §4.13): r = 50 mm, h = 1 m, L = 1.2 m gives ≈ 18.1 pF.
/// That formula is for an infinitely long cylinder and has no ends. An
/// independent estimate that has them: the slender cylinder's free-space
/// capacitance by the average-potential method, C₀ = 2πε0·L/(ln(2L/r) − 1)
/// (leading term of the slender-body expansion), less the mutual potential
/// coefficient of its image 2h away, the mean of 1/|y − y′| over two
/// parallel segments, p_m = 2[L·asinh(L/D) − √(L² + D²) + D]/(4πε0·L²),
/// D = 2h; C ≈ 1/(1/C₀ − p_m) ≈ 25.8 pF. The solve must agree within 10 %
/// (the estimate's neglected higher-order terms are a few %), and so lies
/// 1.2–1.6 times above the end-less analytic value.
#[test]
fn the_10_pf_rule_uses_the_solved_capacitance() {
    let l = roller_line("isolated", "1 uC/m^2", "");
    let with = analysed(&l, &["ex-zone-1"], true);
    let r = results(&with);
    let solved = result(&r, "R").capacitance.unwrap();
    let f = one(&with, "isolated-roller");
    assert_eq!(f.subject, Subject::Roller(0));
    assert_relative_eq!(f.value, solved, max_relative = 1e-12);
    assert!(
        f.notes.iter().any(|n| matches!(n, FindingNote::Solved(_))),
        "{f:#?}"
    );
    let analytic = roller_capacitance(&l.rollers[0], &l).capacitance;
    assert_relative_eq!(
        analytic,
        cylinder_over_plane_capacitance(0.05, 1.2, 1.0),
        max_relative = 1e-12
    );
    let (r0, l0, d) = (0.05f64, 1.2f64, 2.0f64);
    let four_pi_eps0 = 4.0 * std::f64::consts::PI * websigma::units::EPS0;
    let c_free = 0.5 * four_pi_eps0 * l0 / ((2.0 * l0 / r0).ln() - 1.0);
    let p_m =
        2.0 * (l0 * (l0 / d).asinh() - (l0 * l0 + d * d).sqrt() + d) / (four_pi_eps0 * l0 * l0);
    let estimate = 1.0 / (1.0 / c_free - p_m);
    assert!(
        (solved / estimate - 1.0).abs() < 0.1,
        "solved {solved} vs slender-cylinder estimate {estimate}"
    );
    let ratio = solved / analytic;
    assert!((1.2..1.6).contains(&ratio), "solved / analytic = {ratio}");
    assert_eq!(f.verdict, Verdict::Fail, "≈ 20 pF > 10 pF");

    // Without conductors: the analytic value, and the assessment says so.
    let without = analysed(&l, &["ex-zone-1"], false);
    let f = one(&without, "isolated-roller");
    assert_relative_eq!(f.value, analytic, max_relative = 1e-12);
    assert!(f.notes.iter().any(|n| matches!(n, FindingNote::Roller(_))));
    let words: Vec<&str> = without
        .evaluation
        .assessment
        .assumptions
        .iter()
        .map(|&a| websigma::report::notes::assumption(a))
        .collect();
    assert!(words.iter().any(|w| w.contains("not solved")), "{words:?}");
}

// --------------------------------- spark energy of an isolated plate

/// An isolated 0.4 m × 0.4 m plate 0.2 m above the charged span, inside the
/// zone. W = ½CV² (physics): the conductor-spark finding equals ½·C·V² of
/// the conductor's solved capacitance and floating potential, and fails
/// at the zone's MIE (0.24 mJ, as given; e.g. n-hexane, BGR 132 Table 14).
/// The same plate is held to the 10 pF rule with its solved capacitance
/// (TRBS 2153 8.3.5).
#[test]
fn an_isolated_plate_sparks_with_half_c_v_squared_from_the_solve() {
    let plate = "conductors:\n  - {id: P, shape: plate, earthing: isolated, from: [0.3 m, -0.2 m, 1.25 m], to: [0.7 m, 0.2 m, 1.25 m]}\n";
    let l = roller_line("grounded", "10 uC/m^2", plate);
    let a = analysed(&l, &["ex-zone-1"], true);
    let r = results(&a);
    let p = result(&r, "P");
    let (c, v) = (p.capacitance.unwrap(), p.potential);
    assert!(v.abs() > 100.0, "the charged web lifts the plate: {v} V");
    let f = one(&a, "conductor-spark");
    assert_eq!(f.subject, Subject::Conductor(0));
    assert_relative_eq!(f.value, 0.5 * c * v * v, max_relative = 1e-12);
    assert_relative_eq!(f.limit, 0.24e-3, max_relative = 1e-12);
    assert_eq!(
        f.verdict,
        if f.value >= 0.24e-3 {
            Verdict::Fail
        } else {
            Verdict::Pass
        }
    );
    let cap = one(&a, "isolated-conductor");
    assert_relative_eq!(cap.value, c, max_relative = 1e-12);
    // A grounded roller is no spark subject.
    assert!(findings(&a, "roller-spark").is_empty());
}

// ---------------------------------------------------- people

/// The operator-shock profile (TRGS 727 via the BAuA handbook: felt from
/// 2 kV, painful from 10 kV; ½CV² felt from 0.5 mJ) applied to a person of
/// `conductors:`: the body voltage is the person's solved floating
/// potential, the shock energy ½CV² with the solved capacitance (body +
/// 100 pF feet to floor). An earthed person passes with 0.
#[test]
fn a_person_gets_the_body_voltage_of_the_solve() {
    let person = |earthing: &str| {
        format!(
            "conductors:\n  - {{id: W, shape: person, earthing: {earthing}, at: [1.0 m, 1.0 m]}}\n"
        )
    };
    let l = roller_line("grounded", "10 uC/m^2", &person("isolated"));
    let a = analysed(&l, &["operator-shock"], true);
    let r = results(&a);
    let w = result(&r, "W");
    let f = one(&a, "body-voltage");
    assert_eq!(f.subject, Subject::Conductor(0));
    assert!(w.potential.abs() > 0.0);
    assert_relative_eq!(f.value, w.potential.abs(), max_relative = 1e-12);
    let e = one(&a, "shock-energy");
    assert_relative_eq!(e.value, w.spark_energy.unwrap(), max_relative = 1e-12);
    // The solved capacitance includes the 100 pF feet-to-floor default.
    assert!(w.capacitance.unwrap() > 100e-12, "{:?}", w.capacitance);

    let l = roller_line("grounded", "10 uC/m^2", &person("grounded"));
    let a = analysed(&l, &["operator-shock"], true);
    for rule in ["body-voltage", "shock-energy"] {
        let f = one(&a, rule);
        assert_eq!((f.value, f.verdict), (0.0, Verdict::Pass), "{rule}");
        assert!(f.notes.contains(&FindingNote::Earthed));
    }

    // Without conductors the person is not assessed.
    let l = roller_line("grounded", "10 uC/m^2", &person("isolated"));
    let a = analysed(&l, &["operator-shock"], false);
    assert!(findings(&a, "body-voltage").is_empty());
}

// ----------------------------------------- insulating roller in a zone

/// IEC TS 60079-32-1 7.4.2 (from memory): chargeable insulating surfaces in
/// zone 1 IIA at most 100 cm². A 100 mm roller 1.2 m long has 2πrL =
/// 0.377 m² (3770 cm²): fails in zone 1; zone 2 has no area limit, so the
/// ex-zone-2 profile gives no finding.
#[test]
fn an_insulating_roller_fails_in_zone_1_and_not_in_zone_2() {
    let l = roller_line("insulating", "1 uC/m^2", "");
    let a = analysed(&l, &["ex-zone-1"], false);
    let f = one(&a, "insulating-roller-iia-iib");
    assert_eq!(f.subject, Subject::Roller(0));
    assert_relative_eq!(
        f.value,
        2.0 * std::f64::consts::PI * 0.05 * l.rollers[0].length,
        max_relative = 1e-12
    );
    assert_relative_eq!(f.limit, 100e-4, max_relative = 1e-12);
    assert_eq!(f.verdict, Verdict::Fail);

    let mut zone2 = roller_line("insulating", "1 uC/m^2", "");
    zone2.zones[0].zone = 2;
    let a = analysed(&zone2, &["ex-zone-2"], false);
    assert!(
        a.evaluation
            .assessment
            .findings
            .iter()
            .all(|f| f.subject != Subject::Roller(0) && f.verdict != Verdict::Fail),
        "{:#?}",
        a.evaluation.assessment.findings
    );
}

// ------------------------------------------------------ gap discharge

/// Paschen's law (constants in physics.rs): the limit is the lowest
/// σ_B(g) = ε0·V_B(g)/(g + t/εr) over g = 5 µm … 10 mm, here checked
/// against an independent dense scan of `gap_breakdown_sigma` (20 000 gaps;
/// the check refines its own minimum, so it may only be lower, by less
/// than 1e-6). A span leaving a grounded roller above that density fails,
/// below it passes; without conductors the check is not made.
#[test]
fn gap_discharge_at_the_paschen_limited_density() {
    let (t, er) = (30e-6, 2.2);
    let lowest = (0..20_000)
        .map(|k| GAP_MIN * (GAP_MAX / GAP_MIN).powf(k as f64 / 19_999.0))
        .filter_map(|g| gap_breakdown_sigma(g, t, er))
        .fold(f64::INFINITY, f64::min);
    // About 27 µC/m² near 10 mm (FACTS.md, derived from the empirical fit).
    assert!((20e-6..35e-6).contains(&lowest), "{lowest}");
    for (sigma_uc, verdict) in [(1.2 * lowest * 1e6, Verdict::Fail), (10.0, Verdict::Pass)] {
        let l = roller_line("grounded", &format!("{sigma_uc} uC/m^2"), "");
        let a = analysed(&l, &[], true);
        let f = one(&a, "gap-discharge");
        // S2 leaves the grounded roller R; S1 arrives at it.
        assert_eq!(f.subject, Subject::Span(1));
        assert_relative_eq!(f.value, sigma_uc * 1e-6, max_relative = 1e-9);
        assert!(
            f.limit <= lowest && f.limit > lowest * (1.0 - 1e-6),
            "{}",
            f.limit
        );
        assert_eq!(f.verdict, verdict, "σ = {sigma_uc} µC/m²");
        let gap = f.notes.iter().find_map(|n| match n {
            FindingNote::Gap(g) => Some(*g),
            _ => None,
        });
        let gap = gap.expect("a gap note");
        assert_eq!(gap.first_gap.is_some(), verdict == Verdict::Fail);
        if let Some(g) = gap.first_gap {
            // At the first gap the density just reaches σ_B(g).
            let sb = gap_breakdown_sigma(g, t, er).unwrap();
            assert_relative_eq!(sb, sigma_uc * 1e-6, max_relative = 1e-6);
        }
    }
    let l = roller_line("grounded", "40 uC/m^2", "");
    assert!(findings(&analysed(&l, &[], false), "gap-discharge").is_empty());
}
