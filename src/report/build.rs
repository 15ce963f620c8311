//! The report as plain data, built once from the assessment.
//!
//! `build_report` gathers what every writer needs — inputs, results,
//! findings, recommendations, references, plots — so that the Markdown,
//! HTML, CSV and JSON writers only format. Recommendations are chosen here
//! from the failing and warning findings (which span to neutralise, which
//! conductor to earth); no field is computed here.

use crate::assess::{Assessment, Confidence, Finding, SubjectKind, ThresholdProfile, Verdict};
use crate::charge::ChargeProfile;
use crate::field::{FieldMap, SpanContribution};
use crate::model::{ChargeMode, Line, NodeKind, Point, Zone};
use crate::readings::{ReadingResult, ReadingsResult, SegmentFit};
use crate::report::{SpanRow, span_rows};
use crate::units::Meters;

/// Identification of a report.
#[derive(Debug, Clone, PartialEq)]
pub struct ReportMeta {
    /// Title of the line.
    pub title: String,
    /// `<line-slug>-<yyyymmddThhmmssZ>`.
    pub report_id: String,
    /// UTC time of the run, RFC 3339.
    pub created_utc: String,
    /// websigma version.
    pub tool_version: String,
    /// The line description file as given.
    pub line_file: String,
    /// SHA-256 of the line description text, hex.
    pub line_sha256: String,
}

/// A span's results.
#[derive(Debug, Clone, PartialEq)]
pub struct SpanResult {
    /// The derived-span row (ends, length, σ at both ends).
    pub row: SpanRow,
    /// Label `S6 (R5-R6)`.
    pub label: String,
    /// Largest |σ| on the span, across-web peak included [C/m²].
    pub sigma_peak: f64,
    /// Ids of the zones the span's rectangle touches.
    pub zones: Vec<String>,
    /// The largest reading a field meter would give on the span at its
    /// calibration distance (information; `None` when not computed or no
    /// place on the span can hold a meter).
    pub meter: Option<crate::assess::meter::MeterEquivalent>,
}

/// A point's results.
#[derive(Debug, Clone, PartialEq)]
pub struct PointResult {
    /// The place of interest.
    pub point: Point,
    /// Field [V/m].
    pub e: [f64; 3],
    /// |E| [V/m].
    pub e_magnitude: f64,
    /// Potential [V].
    pub v: f64,
    /// Ids of the zones containing it.
    pub zones: Vec<String>,
}

/// A plot to include.
#[derive(Debug, Clone, PartialEq)]
pub struct Plot {
    /// File name, e.g. `side_view.png`.
    pub file: String,
    /// Caption.
    pub caption: String,
    /// PNG bytes.
    pub png: Vec<u8>,
}

/// A profile in force, for the inputs section and the manifest.
#[derive(Debug, Clone, PartialEq)]
pub struct ProfileRef {
    /// Name.
    pub name: String,
    /// Title.
    pub title: String,
    /// `shipped` or the file path.
    pub origin: String,
    /// SHA-256 of its YAML text.
    pub sha256: String,
    /// Number of rules.
    pub rules: usize,
}

/// Everything a report says, computed once.
#[derive(Debug, Clone, PartialEq)]
pub struct Report {
    /// Identification.
    pub meta: ReportMeta,
    /// Overall verdict.
    pub verdict: Verdict,
    /// Counts of findings by verdict: pass, warn, uncertain, fail.
    pub counts: [usize; 4],
    /// The validated line (inputs section).
    pub line: Line,
    /// Profiles in force.
    pub profiles: Vec<ProfileRef>,
    /// Solver relative tolerance.
    pub rel_tol: f64,
    /// Modelling assumptions (solver and rules).
    pub assumptions: Vec<String>,
    /// Per-span results.
    pub spans: Vec<SpanResult>,
    /// Per-point results.
    pub points: Vec<PointResult>,
    /// Findings, worst first.
    pub findings: Vec<FindingRow>,
    /// Span contributions at the worst points: (point id, shares largest first).
    pub contributions: Vec<(String, Vec<SpanContribution>)>,
    /// What to do about the failing and warning findings.
    pub recommendations: Vec<String>,
    /// What the model does not cover.
    pub limitations: Vec<String>,
    /// Every source cited by a rule, once.
    pub references: Vec<String>,
    /// Warnings raised while reading the input.
    pub warnings: Vec<String>,
    /// PNG plots.
    pub plots: Vec<Plot>,
    /// Meter readings converted to charge density.
    pub readings: Vec<ReadingResult>,
    /// The charge segments the readings determine.
    pub reading_segments: Vec<SegmentFit>,
    /// How the reading bounds were computed.
    pub reading_method: String,
    /// What every eliminator does (density in and out, ionising or not).
    pub eliminators: Vec<crate::readings::EliminatorState>,
    /// The eliminator plan, when one was asked for and the line fails.
    pub plan: Option<PlanSection>,
    /// What the web's charge does to each conductor (empty without the
    /// conductors' solve).
    pub conductors: Vec<crate::field::ConductorResult>,
    /// The conductors' accuracy estimate at the places of interest.
    pub conductor_accuracy: Option<crate::field::ConductorAccuracy>,
    /// The uncertain inputs and the ranges of the points', spans' and
    /// conductors' results (findings carry their own).
    pub uncertainty: crate::uncertainty::Uncertainty,
}

/// A finding as the report shows it: the assessment's numbers with its
/// subject and notes in words.
#[derive(Debug, Clone, PartialEq)]
pub struct FindingRow {
    /// Name of the profile the rule belongs to.
    pub profile: String,
    /// Rule id.
    pub rule: String,
    /// What the rule checks, in words.
    pub check: String,
    /// The class of harm the rule guards against.
    pub hazard: crate::assess::Hazard,
    /// What kind of subject.
    pub subject_kind: SubjectKind,
    /// The subject's label (`S6 (R5-R6)`, `OP1`, `R6`).
    pub subject: String,
    /// The value found, SI [unit of `dim`].
    pub value: f64,
    /// Dimension of value and limits, for formatting.
    pub dim: crate::units::Dim,
    /// A meter rule's calibration distance [m]: value and limits are
    /// readings at it.
    pub meter: Option<crate::units::Meters>,
    /// What a dimensionless value is.
    pub ratio: Option<&'static str>,
    /// A field shown per inch, as its rule states it.
    pub per_inch: bool,
    /// The governing limit, SI.
    pub limit: f64,
    /// Warning limit, SI.
    pub warn: Option<f64>,
    /// Failure limit, SI.
    pub fail: Option<f64>,
    /// value ÷ limit [1].
    pub margin: f64,
    /// The verdict.
    pub verdict: Verdict,
    /// The value's range over the uncertain inputs [unit of `dim`].
    pub bounds: crate::assess::Bounds,
    /// Where the limit comes from.
    pub source: String,
    /// How sure the source is.
    pub confidence: Confidence,
    /// Context in words.
    pub note: String,
    /// For point findings: each span's share, largest |E| first.
    pub contributions: Vec<SpanContribution>,
}

impl FindingRow {
    /// Lays out one finding of `line`.
    pub fn new(line: &Line, f: &Finding) -> Self {
        FindingRow {
            profile: f.profile.to_string(),
            rule: f.rule.to_string(),
            check: f.check.to_string(),
            hazard: f.hazard,
            subject_kind: f.subject.kind(),
            subject: super::notes::subject_label(line, &f.subject),
            value: f.value,
            dim: f.dim,
            meter: f.meter,
            ratio: f.ratio,
            per_inch: f.per_inch,
            limit: f.limit,
            warn: f.warn,
            fail: f.fail,
            margin: f.margin,
            verdict: f.verdict,
            bounds: f.bounds.clone(),
            source: f.source.to_string(),
            confidence: f.confidence,
            note: super::notes::finding_notes(line, f),
            contributions: f.contributions.clone(),
        }
    }
}

/// The eliminator plan as the report shows it.
#[derive(Debug, Clone, PartialEq)]
pub struct PlanSection {
    /// What was searched and what the result means.
    pub summary: String,
    /// The candidate positions searched (kind, distance, spacing, sides).
    pub settings: String,
    /// The best plans: bars described, fail, warn, pass, worst margin.
    pub options: Vec<(String, [usize; 3], f64)>,
    /// For the best plan, each finding that warns or fails before:
    /// (rule, subject, before, after).
    pub before_after: Vec<(String, String, String, String)>,
    /// Candidate positions refused, each with its reason.
    pub refused: Vec<String>,
    /// When no plan passes: why (the sentence before the list, then one
    /// entry per blocking finding), and what the best partial plan leaves
    /// failing.
    pub dead_end: Option<(String, Vec<String>, Vec<String>)>,
}

impl PlanSection {
    /// Lays out a plan for the report.
    pub fn from_plan(plan: &crate::plan::Plan, line: &Line) -> Self {
        use super::finding_text::value_text;
        use super::plan_words as words;
        let options = plan
            .options
            .iter()
            .map(|o| {
                (
                    words::option_bars_text(plan, o, line),
                    o.counts,
                    o.worst_margin,
                )
            })
            .collect();
        let mut before_after = Vec::new();
        if let Some(best) = plan.options.first() {
            for f in plan
                .before
                .findings
                .iter()
                .filter(|f| f.verdict != Verdict::Pass)
            {
                let after = best.after(line, f);
                before_after.push((
                    format!("{}/{}", f.profile, f.rule),
                    super::notes::subject_label(line, &f.subject),
                    format!("{} {}", f.verdict.text(), value_text(f)),
                    after
                        .map(|g| format!("{} {}", g.verdict.text(), value_text(g)))
                        .unwrap_or_else(|| "—".into()),
                ));
            }
        }
        let dead_end = plan.dead_end.as_ref().map(|d| {
            let leaves = match (&plan.outcome, plan.options.first()) {
                (crate::plan::PlanOutcome::NoPass { failing, .. }, Some(best)) => failing
                    .iter()
                    .map(|f| {
                        format!(
                            "{}/{} on {}",
                            f.profile,
                            f.rule,
                            super::notes::subject_label(&best.placed, &f.subject)
                        )
                    })
                    .collect(),
                _ => Vec::new(),
            };
            (
                words::dead_end_intro(d, plan.max_bars),
                d.blockers
                    .iter()
                    .map(|b| words::blocker_text(b, line))
                    .collect(),
                leaves,
            )
        });
        PlanSection {
            summary: words::plan_summary(plan, line),
            settings: words::settings_text(plan),
            options,
            before_after,
            refused: plan
                .refused
                .iter()
                .map(|r| super::notes::candidate_refusal(line, r))
                .collect(),
            dead_end,
        }
    }
}

/// SHA-256 of bytes as lower-case hex.
pub fn sha256_hex(bytes: &[u8]) -> String {
    use sha2::Digest;
    let d = sha2::Sha256::digest(bytes);
    d.iter().map(|b| format!("{b:02x}")).collect()
}

/// A file-name-safe slug of a title: lower case, digits and dashes, ≤ 40 chars.
pub fn slug(title: &str) -> String {
    let mut s = String::new();
    for c in title.chars() {
        if c.is_ascii_alphanumeric() {
            s.push(c.to_ascii_lowercase());
        } else if !s.ends_with('-') && !s.is_empty() {
            s.push('-');
        }
        if s.len() >= 40 {
            break;
        }
    }
    let s = s.trim_end_matches('-').to_string();
    if s.is_empty() { "line".to_string() } else { s }
}

/// What the model does not cover (stated in every report).
pub const LIMITATIONS: &[&str] = &[
    "The charge on the web is what the line description states; nothing here measures it. Charging at contacts and nips is not predicted, only entered.",
    "Grounded rollers, frames and machine parts other than the ground plane are not modelled as conductors (conductors off): near them the real field is lower and the real potential of the web much lower than computed here, so potentials far from the ground plane are upper estimates.",
    "The wrap arcs are not integrated; the web is a thin sheet whose own permittivity is neglected.",
    "Brush-discharge incendivity depends on charge transfer, which no published surface charge limit captures; the web-charge limits are common practice and must be read as screening values.",
    "Operators are points insulated from earth; their real body voltage depends on footwear, flooring and movement.",
];

/// The limitations of a run whose scene solved the line's conductors.
pub const LIMITATIONS_WITH_CONDUCTORS: &[&str] = &[
    "The charge on the web is what the line description states; nothing here measures it. Charging at contacts and nips is not predicted, only entered.",
    "Only the conductors in the line description screen the field: frames, cabinets, guards and people that are not described are not there, and near them the real field and potential are lower than computed.",
    "Conductors are solved on flat panels of constant charge density: about 1 % from a mesh of half the panel size on the demo line, less accurate within a panel size of a conductor's surface and near its edges.",
    "The web is a thin sheet whose own permittivity is neglected; its charge on a wrap arc is taken as bound by its image in a grounded roller, and as added to the net charge of an isolated roller.",
    "Brush-discharge incendivity depends on charge transfer, which no published surface charge limit captures; the web-charge limits are common practice and must be read as screening values.",
    "Operator points are probes in the air and take the potential there; people described as conductors are upright cylinders with a lumped feet-to-floor capacitance. A real body voltage depends on footwear, flooring and movement.",
];

/// The limitations that hold for a run with these solver settings.
pub fn limitations(solver: crate::field::SolverSettings) -> &'static [&'static str] {
    if solver.conductor_panel().is_some() {
        LIMITATIONS_WITH_CONDUCTORS
    } else {
        LIMITATIONS
    }
}

/// Builds the report. `now` is the UTC time of the run (given, so tests can fix it).
#[allow(clippy::too_many_arguments)]
pub fn build_report(
    line: &Line,
    line_file: &str,
    line_text: &str,
    charge: &ChargeProfile,
    readings: &ReadingsResult,
    points: &FieldMap,
    assessment: &Assessment,
    profiles: &[ThresholdProfile],
    solver: crate::field::SolverSettings,
    plots: Vec<Plot>,
    now: chrono::DateTime<chrono::Utc>,
) -> Report {
    let stamp = now.format("%Y%m%dT%H%M%SZ").to_string();
    let meta = ReportMeta {
        title: line.title.clone(),
        report_id: format!("{}-{stamp}", slug(&line.title)),
        created_utc: now.to_rfc3339_opts(chrono::SecondsFormat::Secs, true),
        tool_version: env!("CARGO_PKG_VERSION").to_string(),
        line_file: line_file.to_string(),
        line_sha256: sha256_hex(line_text.as_bytes()),
    };
    let zones_touching = |zones: &[Zone], f: &dyn Fn(&Zone) -> bool| -> Vec<String> {
        zones
            .iter()
            .filter(|z| f(z))
            .map(|z| z.id.clone())
            .collect()
    };
    let spans: Vec<SpanResult> = span_rows(line, charge)
        .into_iter()
        .zip(&line.path.spans)
        .map(|(row, s)| SpanResult {
            label: s.label(),
            sigma_peak: charge.peak_between(s.s_start, s.s_end),
            zones: zones_touching(&line.zones, &|z| z.touches_span(s, line.web.width)),
            meter: None,
            row,
        })
        .collect();
    let point_results: Vec<PointResult> = line
        .points
        .iter()
        .zip(&points.points)
        .map(|(p, f)| PointResult {
            point: p.clone(),
            e: f.e,
            e_magnitude: f.e_magnitude(),
            v: f.v,
            zones: zones_touching(&line.zones, &|z| z.contains(p.at)),
        })
        .collect();

    let counts = assessment.counts().as_array();
    let findings: Vec<FindingRow> = assessment
        .findings
        .iter()
        .map(|f| FindingRow::new(line, f))
        .collect();
    // Contributions at the worst points: the first three distinct points
    // among the findings (worst first).
    let mut contributions: Vec<(String, Vec<SpanContribution>)> = Vec::new();
    for f in &findings {
        if f.subject_kind == SubjectKind::Point
            && !f.contributions.is_empty()
            && !contributions.iter().any(|(id, _)| id == &f.subject)
        {
            contributions.push((f.subject.clone(), f.contributions.clone()));
        }
        if contributions.len() == 3 {
            break;
        }
    }
    let mut references: Vec<String> = Vec::new();
    let rule_sources = profiles
        .iter()
        .flat_map(|p| p.rules.iter().map(|r| &r.source));
    for src in rule_sources.chain(assessment.findings.iter().map(|f| &f.source)) {
        if !references.iter().any(|r| r.as_str() == &**src) {
            references.push(src.to_string());
        }
    }
    for extra in [
        "Coulomb's law, superposition and the method of images: D. J. Griffiths, Introduction to Electrodynamics, 4th ed., §2.1, §3.2",
        "Charge relaxation τ = ε0·εr·ρ: continuity equation and Ohm's law (Griffiths §7.1)",
        "ε0 = 8.8541878128e-12 F/m: CODATA 2018",
    ] {
        references.push(extra.to_string());
    }
    let mut assumptions: Vec<String> = crate::field::assumptions(&solver)
        .iter()
        .map(|s| s.to_string())
        .collect();
    assumptions.extend(
        assessment
            .assumptions
            .iter()
            .map(|&a| super::notes::assumption(a).to_string()),
    );

    Report {
        meta,
        verdict: assessment.verdict,
        counts,
        line: line.clone(),
        profiles: profiles
            .iter()
            .map(|p| ProfileRef {
                name: p.name.to_string(),
                title: p.title.clone(),
                origin: p.origin.clone(),
                sha256: sha256_hex(p.text.as_bytes()),
                rules: p.rules.len(),
            })
            .collect(),
        rel_tol: solver.rel_tol(),
        assumptions,
        spans,
        points: point_results,
        recommendations: recommendations(line, &findings),
        findings,
        contributions,
        limitations: limitations(solver).iter().map(|s| s.to_string()).collect(),
        references,
        warnings: line
            .warnings
            .iter()
            .map(|w| w.to_string())
            .chain(readings.readings.iter().flat_map(|r| {
                r.warnings
                    .iter()
                    .map(move |w| format!("reading {}: {}", r.id, super::notes::reading_note(w)))
            }))
            .collect(),
        plots,
        readings: readings.readings.clone(),
        reading_segments: readings.segments.clone(),
        reading_method: readings
            .method
            .as_ref()
            .map(super::notes::fit_method)
            .unwrap_or_default(),
        eliminators: readings.eliminators.clone(),
        plan: None,
        conductors: Vec::new(),
        conductor_accuracy: None,
        uncertainty: crate::uncertainty::Uncertainty::default(),
    }
}

/// Recommendations from the failing and warning findings, most urgent first.
fn recommendations(line: &Line, findings: &[FindingRow]) -> Vec<String> {
    let mut out: Vec<String> = Vec::new();
    let mut push = |s: String| {
        if !out.contains(&s) {
            out.push(s);
        }
    };
    for f in findings.iter().filter(|f| f.verdict != Verdict::Pass) {
        let urgency = if f.verdict.exceeds() {
            "Required"
        } else {
            "Advised"
        };
        match f.subject_kind {
            SubjectKind::Span if f.rule == "propagating-brush" => push(format!(
                "{urgency}: on span {} the web layer could carry a propagating brush discharge ({}): it needs a bipolar double layer, so keep the web from being charged to opposite polarities on its two faces (no strong charging process such as high-speed separation from charged rollers or spraying in the zone), or use a web whose breakdown voltage is below 4 kV; neutralising the net charge alone does not remove this condition.",
                f.subject, f.note
            )),
            SubjectKind::Span if f.rule == "gap-discharge" => push(format!(
                "{urgency}: where span {} leaves its grounded roller the web carries more charge than the opening gap holds: gap discharges must occur there (they cap the charge the web carries off the roller) — neutralise the web before it reaches the roller, or keep a flammable atmosphere away from the separation line ({}).",
                f.subject, f.note
            )),
            SubjectKind::Span if f.rule == "reproduced" => push(format!(
                "{urgency}: the charge fitted to the meter readings does not give back a reading on span {} ({}): until it does, the charge assessed is not the charge the meters saw — check the reading, the meter's position, side and distance, readings that disagree, and any passive device between the charge and the meter (one switching at its onset leaves a gap no charge reproduces); re-measure.",
                f.subject, f.note
            )),
            SubjectKind::Span => push(format!(
                "{urgency}: reduce the charge on span {} ({}) — neutralise it with a static eliminator on the free span upstream, after the last charging point, where a meter would read the web's field; re-measure after fitting.",
                f.subject, f.check
            )),
            SubjectKind::Roller if f.rule.starts_with("insulating-roller") => push(format!(
                "{urgency}: replace insulating roller {} by a conductive, earthed one, or keep its chargeable surface below the area limit of the zone — {}.",
                f.subject, f.note
            )),
            SubjectKind::Roller => push(format!(
                "{urgency}: bond roller {} to earth (resistance to earth below 1e6 Ω, TRBS 2153 8.3.3) — {}.",
                f.subject, f.note
            )),
            SubjectKind::Conductor if f.subject.ends_with("(person)") => push(format!(
                "{urgency}: earth {} (conductive footwear and flooring, below 1e8 Ω to earth, TRBS 2153 8.3.3; NFPA 77) and neutralise the spans that charge the body — {}.",
                f.subject, f.note
            )),
            SubjectKind::Conductor => push(format!(
                "{urgency}: bond {} to earth (resistance to earth below 1e6 Ω, TRBS 2153 8.3.3) — {}.",
                f.subject, f.note
            )),
            SubjectKind::Point => {
                let dominant = f
                    .contributions
                    .first()
                    .map(|c| {
                        format!(
                            " The largest share of the field there comes from span {}.",
                            c.span
                        )
                    })
                    .unwrap_or_default();
                let kind = line
                    .points
                    .iter()
                    .find(|p| p.id == f.subject)
                    .map(|p| p.kind);
                let action = match kind {
                    Some(crate::model::PointKind::Operator) => {
                        "earth the operator (conductive footwear and flooring, below 1e8 Ω to earth, NFPA 77) and neutralise the spans that dominate the field there"
                    }
                    Some(crate::model::PointKind::Electronics) => {
                        "move the item farther from the web or screen it with earthed metal, and neutralise the spans that dominate the field there"
                    }
                    _ => "neutralise the spans that dominate the field there",
                };
                push(format!(
                    "{urgency}: at {} ({}), {action}.{dominant}",
                    f.subject, f.check
                ))
            }
            SubjectKind::Eliminator => push(format!(
                "{urgency}: eliminator {} — {} ({}).",
                f.subject, f.check, f.note
            )),
            SubjectKind::Web => push(format!("{urgency}: {} — {}.", f.check, f.note)),
        }
    }
    if out.is_empty() {
        out.push(format!(
            "No limit in the profiles applied is reached on {}. Keep the earthing and eliminators in place and verify with measurements on the running line.",
            line.title
        ));
    }
    out
}

/// A short text for the charge entries of the inputs section.
pub fn charge_entry_text(line: &Line) -> Vec<(String, String, f64)> {
    line.charge
        .iter()
        .map(|c| {
            (
                c.at.clone(),
                match c.mode {
                    ChargeMode::Set => "sets".to_string(),
                    ChargeMode::Add => "adds".to_string(),
                },
                c.sigma,
            )
        })
        .collect()
}

/// The path nodes as text: `UNWIND (point [0 m, 1.45 m])`, `R1 (roller, cw)`.
pub fn node_texts(line: &Line) -> Vec<String> {
    line.path
        .nodes
        .iter()
        .enumerate()
        .map(|(i, n)| {
            let id = n.id.clone().unwrap_or_else(|| format!("path[{i}]"));
            match n.kind {
                NodeKind::Point(p) => format!(
                    "{id}: point [{}, {}]",
                    crate::units::format_quantity(p[0], crate::units::Dim::Length),
                    crate::units::format_quantity(p[1], crate::units::Dim::Length)
                ),
                NodeKind::Roller { wrap, .. } => format!("{id}: roller, wrap {}", wrap.text()),
            }
        })
        .collect()
}

/// Distance unit helper for writers.
pub fn len_text(x: Meters) -> String {
    crate::units::format_quantity(x, crate::units::Dim::Length)
}
