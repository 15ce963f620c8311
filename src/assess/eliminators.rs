//! # Built-in checks of static eliminators
//!
//! Applied whenever the line has eliminators, beside the threshold profiles:
//!
//! - **capacity** (powered bars): the web carries a current per metre of
//!   width I′ = |σ_in|·v; a bar should deliver at least five times that,
//!   value = 5·I′ / I_ion, failing at 1 (K. Robinson, PFFC "Static Beat":
//!   about 1000 µA per metre of bar, keep ≥ 5× the web current — confirmed);
//! - **facing a roller**: a bar closer to a roller the web touches than
//!   three bar distances sees the field suppressed by the roller and does
//!   little; value = 3·d / clearance, failing at 1 (K. Robinson, PFFC:
//!   not facing a grounded roller the web touches — common practice for the
//!   factor three);
//! - **opposite bars**: two bars on opposite sides of a span closer along it
//!   than twice their distance neutralise each other's ions; value =
//!   2·d / offset, warning at 1 (K. Robinson, PFFC; common practice);
//! - **zone approval**: a powered bar inside a zone 0 or 1 must be of a type
//!   approved for that zone — a caution, not a computed risk (IEC 60079-0
//!   equipment requirements; common practice).
//!
//! | symbol | meaning | unit |
//! | --- | --- | --- |
//! | σ_in | centreline density arriving at the bar | C/m² |
//! | v | web speed | m/s |
//! | I′, I_ion | web current and bar ion output per metre | A/m |
//! | d | bar-to-web distance | m |
//!
//! ## Reference
//! K. Robinson, PFFC "Static Beat" columns (2010, 2019); FACTS.md "Static
//! eliminators".

use super::{Confidence, Finding, SubjectKind};
use crate::charge::ChargeProfile;
use crate::model::{Earthing, EliminatorKind, Line, NodeKind};
use crate::units::{Dim, format_quantity, format_si};

/// Name under which these findings are listed.
pub const PROFILE: &str = "eliminators";

#[allow(clippy::too_many_arguments)]
fn finding(
    rule: &str,
    check: &str,
    subject: &str,
    value: f64,
    warn: Option<f64>,
    fail: Option<f64>,
    source: &str,
    confidence: Confidence,
    note: String,
) -> Finding {
    let verdict = super::verdict_for(value, warn, fail);
    let limit = fail.or(warn).unwrap_or(1.0);
    Finding {
        profile: PROFILE.to_string(),
        rule: rule.to_string(),
        check: check.to_string(),
        subject_kind: SubjectKind::Eliminator,
        subject: subject.to_string(),
        value,
        dim: Dim::Number,
        limit,
        warn,
        fail,
        margin: value / limit,
        verdict,
        source: source.to_string(),
        confidence,
        note,
        contributions: Vec::new(),
    }
}

/// The centreline density arriving at arc length `s` (the upstream value at
/// a segment boundary) [C/m²].
pub fn arriving(charge: &ChargeProfile, s: f64) -> f64 {
    let k = charge.segment_at(s);
    if k > 0 && charge.segments[k].s_start == s {
        charge.arriving(k)
    } else {
        charge.sigma_c(s)
    }
}

/// The findings of every eliminator on the line.
pub fn eliminator_findings(line: &Line, charge: &ChargeProfile) -> Vec<Finding> {
    findings_impl(line, charge, false)
}

/// The same findings without their texts (the planner's inner loop).
pub fn eliminator_findings_lean(line: &Line, charge: &ChargeProfile) -> Vec<Finding> {
    findings_impl(line, charge, true)
}

fn findings_impl(line: &Line, charge: &ChargeProfile, lean: bool) -> Vec<Finding> {
    let text = |f: &dyn Fn() -> String| if lean { String::new() } else { f() };
    let mut out = Vec::new();
    for (i, e) in line.eliminators.iter().enumerate() {
        let span = &line.path.spans[e.span];
        let label = text(&|| format!("{} ({} on {})", e.id, e.kind.text(), span.label()));
        if e.kind == EliminatorKind::Powered {
            let sigma_in = arriving(charge, e.s).abs();
            let current = sigma_in * line.web.speed;
            out.push(finding(
                "capacity",
                "ion output of a powered bar against five times the web current it must neutralise",
                &label,
                5.0 * current / e.ion_output,
                None,
                Some(1.0),
                "K. Robinson, PFFC \"Static Beat\": about 1000 µA per metre of bar; keep at least 5× the web current I′ = σ·v",
                Confidence::Confirmed,
                text(&|| {
                    format!(
                        "web current {}/m ({} at {}), bar output {}/m",
                        format_si(current, "A"),
                        format_quantity(sigma_in, Dim::SurfaceChargeDensity),
                        format_quantity(line.web.speed, Dim::Speed),
                        format_si(e.ion_output, "A")
                    )
                }),
            ));
        }
        let roller_end = |node: usize| match line.path.nodes[node].kind {
            NodeKind::Roller { roller, .. } => {
                line.rollers[roller].earthing != Earthing::Insulating
            }
            NodeKind::Point(_) => false,
        };
        let mut clearance = f64::INFINITY;
        if roller_end(span.from_node) {
            clearance = clearance.min(e.along);
        }
        if roller_end(span.to_node) {
            clearance = clearance.min(span.length - e.along);
        }
        if clearance.is_finite() {
            out.push(finding(
                "facing-roller",
                "clearance of a bar from a conducting roller the web touches, against three bar distances",
                &label,
                3.0 * e.distance / clearance.max(1e-9),
                None,
                Some(1.0),
                "K. Robinson, PFFC \"Static Beat\": place bars on a free span where a meter would read the web's field, not facing a grounded roller the web touches (the factor 3 is common practice)",
                Confidence::CommonPractice,
                text(&|| {
                    format!(
                        "{} from the roller, bar {} from the web",
                        format_quantity(clearance, Dim::Length),
                        format_quantity(e.distance, Dim::Length)
                    )
                }),
            ));
        }
        for o in line.eliminators.iter().skip(i + 1) {
            if o.span == e.span && o.side != e.side {
                let offset = (o.along - e.along).abs();
                let d = e.distance.max(o.distance);
                out.push(finding(
                    "opposite-bars",
                    "offset along the span of two bars on opposite sides, against twice their distance",
                    &format!("{} and {}", e.id, o.id),
                    2.0 * d / offset.max(1e-9),
                    Some(1.0),
                    None,
                    "K. Robinson, PFFC \"Static Beat\": two-sided bars offset by more than twice the bar distance",
                    Confidence::CommonPractice,
                    format!("offset {}, distance {}", format_quantity(offset, Dim::Length), format_quantity(d, Dim::Length)),
                ));
            }
        }
        if e.kind == EliminatorKind::Powered {
            let (at, _) =
                crate::model::geometry::meter_geometry(span, e.along, 0.0, e.distance, e.side);
            for z in line.zones.iter().filter(|z| z.zone <= 1 && z.contains(at)) {
                out.push(finding(
                    "zone-approval",
                    "a powered bar inside a zone 0 or 1 must be of a type approved for that zone",
                    &label,
                    1.0,
                    Some(1.0),
                    None,
                    "IEC 60079-0 (equipment for explosive atmospheres); the bar maker's approval — common practice",
                    Confidence::CommonPractice,
                    format!("in {} — a caution, not a computed risk", z.label()),
                ));
            }
        }
    }
    out
}
