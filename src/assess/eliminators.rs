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
//! - **onset** (passive devices): a passive device ionises only when the
//!   field of the web's charge at its tips reaches its onset E_on; below,
//!   it neutralises nothing. value = E_on / E_tip, warning at 1 (a bar that
//!   does not work leaves the charge as it is, which the other checks then
//!   judge; it is no hazard by itself). E_tip is |E| at the tips from the
//!   charge arriving (upstream devices applied), as the readings stage
//!   computes it. Since the field is linear in the charge, the device
//!   would ionise with about E_on/E_tip times the charge arriving (every
//!   density scaled together) (J. A. McInally, IEEE Trans. Ind. Appl.
//!   IA-13(3), 1977: a passive device works by corona from its tips, which
//!   needs a threshold field; K. Robinson, PFFC "Static Beat": passive
//!   devices need a charged web to work; the default onset is from memory);
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
//! | E_tip, E_on | field at a passive device's tips, its onset | V/m |
//!
//! ## Reference
//! K. Robinson, PFFC "Static Beat" columns (2010, 2019); FACTS.md "Static
//! eliminators".

use super::{Confidence, Finding, FindingNote, Subject};
use crate::charge::ChargeProfile;
use crate::model::{Earthing, EliminatorKind, Line, NodeKind};
use std::sync::{Arc, LazyLock};

/// Name under which these findings are listed.
pub const PROFILE: &str = "eliminators";

/// A built-in rule's fixed texts, shared so findings copy them without
/// allocating.
struct BuiltIn {
    rule: Arc<str>,
    /// What the dimensionless value is (`5·I′/I_ion`).
    ratio: &'static str,
    /// The class of harm.
    hazard: super::Hazard,
    check: Arc<str>,
    source: Arc<str>,
    confidence: Confidence,
}

fn built_in(
    rule: &str,
    ratio: &'static str,
    check: &str,
    source: &str,
    confidence: Confidence,
) -> BuiltIn {
    BuiltIn {
        rule: rule.into(),
        ratio,
        // A powered bar in a zone 0 or 1 is an ignition question; the
        // others concern how well the bars work.
        hazard: if rule == "zone-approval" {
            super::Hazard::Ignition
        } else {
            super::Hazard::Equipment
        },
        check: check.into(),
        source: source.into(),
        confidence,
    }
}

static PROFILE_NAME: LazyLock<Arc<str>> = LazyLock::new(|| PROFILE.into());
static CAPACITY: LazyLock<BuiltIn> = LazyLock::new(|| {
    built_in(
        "capacity",
        "5·I′/I_ion",
        "ion output of a powered bar against five times the web current it must neutralise",
        "K. Robinson, PFFC \"Static Beat\": about 1000 µA per metre of bar; keep at least 5× the web current I′ = σ·v",
        Confidence::Confirmed,
    )
});
static FACING_ROLLER: LazyLock<BuiltIn> = LazyLock::new(|| {
    built_in(
        "facing-roller",
        "3·d/clearance",
        "clearance of a bar from a conducting roller the web touches, against three bar distances",
        "K. Robinson, PFFC \"Static Beat\": place bars on a free span where a meter would read the web's field, not facing a grounded roller the web touches (the factor 3 is common practice)",
        Confidence::CommonPractice,
    )
});
static OPPOSITE_BARS: LazyLock<BuiltIn> = LazyLock::new(|| {
    built_in(
        "opposite-bars",
        "2·d/offset",
        "offset along the span of two bars on opposite sides, against twice their distance",
        "K. Robinson, PFFC \"Static Beat\": two-sided bars offset by more than twice the bar distance",
        Confidence::CommonPractice,
    )
});
static ONSET: LazyLock<BuiltIn> = LazyLock::new(|| {
    built_in(
        "onset",
        "E_on/E_tip",
        "field at a passive device's tips from the charge arriving, against the onset it needs to ionise",
        "J. A. McInally, IEEE Trans. Ind. Appl. IA-13(3), 1977: a passive device ionises by corona at its tips only above an onset field; K. Robinson, PFFC \"Static Beat\" (the default onset is from memory)",
        Confidence::Confirmed,
    )
});
static ZONE_APPROVAL: LazyLock<BuiltIn> = LazyLock::new(|| {
    built_in(
        "zone-approval",
        "1 inside a zone 0 or 1",
        "a powered bar inside a zone 0 or 1 must be of a type approved for that zone",
        "IEC 60079-0 (equipment for explosive atmospheres); the bar maker's approval — common practice",
        Confidence::CommonPractice,
    )
});

fn finding(
    rule: &BuiltIn,
    subject: Subject,
    value: f64,
    warn: Option<f64>,
    fail: Option<f64>,
    note: FindingNote,
) -> Finding {
    let verdict = super::verdict_for(value, warn, fail);
    let limit = fail.or(warn).unwrap_or(1.0);
    Finding {
        profile: PROFILE_NAME.clone(),
        rule: rule.rule.clone(),
        check: rule.check.clone(),
        hazard: rule.hazard,
        subject,
        value,
        meter: None,
        ratio: Some(rule.ratio),
        per_inch: false,
        dim: crate::units::Dim::Number,
        limit,
        warn,
        fail,
        margin: value / limit,
        verdict,
        bounds: super::Bounds::exact(value),
        source: rule.source.clone(),
        confidence: rule.confidence,
        notes: vec![note],
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
    let mut out = Vec::new();
    each_check(line, charge, |rule, subject, value, warn, fail, note| {
        out.push(finding(rule, subject, value, warn, fail, note))
    });
    out
}

/// The onset findings of the passive devices, from what the readings
/// stage decided (`states`, one per eliminator, with the field at each
/// passive device's tips): value = E_on / E_tip, warning at 1 (the device
/// does not ionise). A device no charge reaches (E_tip = 0) or without an
/// onset gives none.
pub fn onset_findings(line: &Line, states: &[crate::readings::EliminatorState]) -> Vec<Finding> {
    let mut out = Vec::new();
    for st in states {
        let Some(e) = line.eliminators.get(st.index) else {
            continue;
        };
        let (Some(tip), Some(onset)) = (st.tip_field, e.onset) else {
            continue;
        };
        if e.kind != EliminatorKind::Passive || tip.is_nan() || tip <= 0.0 {
            continue;
        }
        let value = onset / tip;
        let mut f = finding(
            &ONSET,
            Subject::Eliminator(st.index),
            value,
            Some(1.0),
            None,
            FindingNote::Onset {
                eliminator: st.index,
                active: st.active,
                tip_field: tip,
                onset,
                sigma_in: st.sigma_in,
                distance: e.distance,
            },
        );
        // Whether it ionises is the solver's decision (E_tip ≥ E_on).
        f.verdict = if st.active {
            super::Verdict::Pass
        } else {
            super::Verdict::Warn
        };
        out.push(f);
    }
    out
}

/// The number of failing eliminator findings and their largest margin,
/// exactly as [`eliminator_findings`] gives them (the planner's objective).
pub fn eliminator_score(line: &Line, charge: &ChargeProfile) -> (usize, f64) {
    let (mut fails, mut worst) = (0, 0.0f64);
    each_check(line, charge, |_, _, value, warn, fail, _| {
        let limit = fail.or(warn).unwrap_or(1.0);
        fails += usize::from(super::verdict_for(value, warn, fail) == super::Verdict::Fail);
        worst = worst.max(value / limit);
    });
    (fails, worst)
}

/// One eliminator check's outcome: its rule, subject, value, warning and
/// failure limits, and note.
type CheckSink<'a> =
    dyn FnMut(&'static BuiltIn, Subject, f64, Option<f64>, Option<f64>, FindingNote) + 'a;

/// Applies every built-in eliminator check, in eliminator order.
fn each_check(
    line: &Line,
    charge: &ChargeProfile,
    mut sink: impl FnMut(&'static BuiltIn, Subject, f64, Option<f64>, Option<f64>, FindingNote),
) {
    let out: &mut CheckSink<'_> = &mut sink;
    for (i, e) in line.eliminators.iter().enumerate() {
        let span = &line.path.spans[e.span];
        if e.kind == EliminatorKind::Powered {
            let sigma_in = arriving(charge, e.s).abs();
            let current = sigma_in * line.web.speed;
            out(
                &CAPACITY,
                Subject::Eliminator(i),
                5.0 * current / e.ion_output,
                None,
                Some(1.0),
                FindingNote::WebCurrent {
                    current,
                    sigma_in,
                    speed: line.web.speed,
                    output: e.ion_output,
                },
            );
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
            out(
                &FACING_ROLLER,
                Subject::Eliminator(i),
                3.0 * e.distance / clearance.max(1e-9),
                None,
                Some(1.0),
                FindingNote::RollerClearance {
                    clearance,
                    distance: e.distance,
                },
            );
        }
        for (j, o) in line.eliminators.iter().enumerate().skip(i + 1) {
            if o.span == e.span && o.side != e.side {
                let offset = (o.along - e.along).abs();
                let d = e.distance.max(o.distance);
                out(
                    &OPPOSITE_BARS,
                    Subject::EliminatorPair(i, j),
                    2.0 * d / offset.max(1e-9),
                    Some(1.0),
                    None,
                    FindingNote::BarOffset {
                        offset,
                        distance: d,
                    },
                );
            }
        }
        if e.kind == EliminatorKind::Powered {
            let (at, _) =
                crate::model::geometry::meter_geometry(span, e.along, 0.0, e.distance, e.side);
            for (k, _) in line
                .zones
                .iter()
                .enumerate()
                .filter(|(_, z)| z.zone <= 1 && z.contains(at))
            {
                out(
                    &ZONE_APPROVAL,
                    Subject::Eliminator(i),
                    1.0,
                    Some(1.0),
                    None,
                    FindingNote::ZoneApproval { zone: k },
                );
            }
        }
    }
}
