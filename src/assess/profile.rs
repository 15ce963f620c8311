//! # Threshold profiles
//!
//! Reading stage of the assessment: `YAML text → RawProfile → ThresholdProfile`,
//! in the same two steps as the line description (`model/raw.rs` →
//! `model/validate.rs`). The raw structs refuse unknown keys and keep every
//! quantity as the text written; validation then checks every rule and
//! collects **all** problems with their YAML path
//! (`rules[2].warn: expected a surface charge density such as "1.7 uC/m^2", got "5 kV", …`).
//!
//! A profile is a list of rules. Each rule names one check, the subjects it
//! applies to (spans, points of a kind, rollers; optionally only those in or
//! near a hazardous zone of a given class and gas group), its limits with
//! units, the published source of the limits and how sure that source is.
//! No number is accepted without a `source:` and a `confidence:`.
//!
//! | check | subjects | limits, dimension |
//! | --- | --- | --- |
//! | `web_charge` | spans | `warn`/`fail`, surface charge density (C/m²) |
//! | `field_at_points` | points of a kind | `warn`/`fail`, field (V/m) |
//! | `body_voltage` | operator points | `warn`/`fail`, voltage (V) |
//! | `spark_energy` | operator points | `warn`/`fail` energy (J); `fail: zone_mie` |
//! | `electronics_separation` | electronics points | `near`/`far`: `{distance, voltage}` (m, V) |
//! | `isolated_conductor` | rollers | `warn`/`fail`, capacitance (F) |
//! | `propagating_brush` | spans | `warn`/`fail`, voltage (V) |
//!
//! Refused: an unknown check or key, a limit of the wrong dimension, a limit
//! that is not positive, `warn` above `fail`, a rule without limits, a missing
//! `source` or `confidence`, duplicate rule ids, subjects that do not suit the
//! check (e.g. `body_voltage` on meters).
//!
//! ## Reference
//! The profile format is this program's own; the limits it carries cite their
//! sources in the shipped files under `profiles/thresholds/`.

use crate::model::raw::Scalar;
use crate::model::{GasGroup, Issue, PointKind, ValidationError, Zone};
use crate::units::{Dim, Meters, Volts, format_quantity, parse_quantity};
use serde::Deserialize;
use std::fmt;

/// Name of the profile that is always applied (the physical limit of air).
pub const AIR_LIMIT: &str = "air-limit";

/// Largest threshold profile file read [bytes].
pub const MAX_PROFILE_BYTES: u64 = 1024 * 1024;

/// The shipped profiles, `(name, YAML text)`, one per file of
/// `profiles/thresholds/`.
pub fn shipped() -> Vec<(&'static str, &'static str)> {
    vec![
        (
            "air-limit",
            include_str!("../../profiles/thresholds/air-limit.yaml"),
        ),
        (
            "ex-zone-0",
            include_str!("../../profiles/thresholds/ex-zone-0.yaml"),
        ),
        (
            "ex-zone-1",
            include_str!("../../profiles/thresholds/ex-zone-1.yaml"),
        ),
        (
            "ex-zone-2",
            include_str!("../../profiles/thresholds/ex-zone-2.yaml"),
        ),
        (
            "operator-shock",
            include_str!("../../profiles/thresholds/operator-shock.yaml"),
        ),
        (
            "electronics",
            include_str!("../../profiles/thresholds/electronics.yaml"),
        ),
    ]
}

// ---------------------------------------------------------------- raw stage

/// A scalar or a list of scalars (`zone: 1` or `zone: [0, 1]`).
#[derive(Debug, Clone, Deserialize)]
#[serde(untagged)]
enum RawList {
    One(Scalar),
    Many(Vec<Scalar>),
}

impl RawList {
    fn items(&self) -> Vec<&Scalar> {
        match self {
            RawList::One(s) => vec![s],
            RawList::Many(v) => v.iter().collect(),
        }
    }
}

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawProfile {
    name: Option<Scalar>,
    title: Option<Scalar>,
    description: Option<Scalar>,
    rules: Option<Vec<RawRule>>,
}

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawRule {
    id: Option<Scalar>,
    check: Option<Scalar>,
    what: Option<Scalar>,
    applies: Option<RawApplies>,
    warn: Option<Scalar>,
    fail: Option<Scalar>,
    near: Option<RawSeparation>,
    far: Option<RawSeparation>,
    source: Option<Scalar>,
    confidence: Option<Scalar>,
    note: Option<Scalar>,
}

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawApplies {
    spans: Option<Scalar>,
    points: Option<Scalar>,
    rollers: Option<Scalar>,
    in_zone: Option<Scalar>,
    zone: Option<RawList>,
    gas_group: Option<RawList>,
}

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawSeparation {
    distance: Option<Scalar>,
    voltage: Option<Scalar>,
}

// ---------------------------------------------------------- checked types

/// What a rule checks.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Check {
    /// Largest |σ| on a span [C/m²].
    WebCharge,
    /// |E| at points of a kind [V/m].
    FieldAtPoints,
    /// |V| at an operator's position [V].
    BodyVoltage,
    /// Spark energy ½CV² of an insulated operator [J].
    SparkEnergy,
    /// Web potential near electronics against the separation rule [V].
    ElectronicsSeparation,
    /// Capacitance of an isolated conductive roller [F].
    IsolatedConductor,
    /// Breakdown voltage of the web layer (propagating brush) [V].
    PropagatingBrush,
}

impl Check {
    /// Every check, in the order of the documentation.
    pub const ALL: [Check; 7] = [
        Check::WebCharge,
        Check::FieldAtPoints,
        Check::BodyVoltage,
        Check::SparkEnergy,
        Check::ElectronicsSeparation,
        Check::IsolatedConductor,
        Check::PropagatingBrush,
    ];

    /// The keyword used in the YAML: `web_charge`, ….
    pub fn text(self) -> &'static str {
        match self {
            Check::WebCharge => "web_charge",
            Check::FieldAtPoints => "field_at_points",
            Check::BodyVoltage => "body_voltage",
            Check::SparkEnergy => "spark_energy",
            Check::ElectronicsSeparation => "electronics_separation",
            Check::IsolatedConductor => "isolated_conductor",
            Check::PropagatingBrush => "propagating_brush",
        }
    }

    /// The dimension of the checked value and of the limits.
    pub fn dim(self) -> Dim {
        match self {
            Check::WebCharge => Dim::SurfaceChargeDensity,
            Check::FieldAtPoints => Dim::Field,
            Check::BodyVoltage | Check::ElectronicsSeparation | Check::PropagatingBrush => {
                Dim::Voltage
            }
            Check::SparkEnergy => Dim::Energy,
            Check::IsolatedConductor => Dim::Capacitance,
        }
    }
}

impl fmt::Display for Check {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.text())
    }
}

/// How sure the source of a limit is (FACTS.md categories).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Confidence {
    /// Read in the named source.
    Confirmed,
    /// Arithmetic from confirmed values.
    Derived,
    /// Trade knowledge without a single source.
    CommonPractice,
    /// Recalled, not confirmed: verify against the current edition.
    FromMemory,
}

impl Confidence {
    /// `confirmed`, `derived`, `common practice`, or
    /// `from memory — verify against the current edition`.
    pub fn text(self) -> &'static str {
        match self {
            Confidence::Confirmed => "confirmed",
            Confidence::Derived => "derived",
            Confidence::CommonPractice => "common practice",
            Confidence::FromMemory => "from memory — verify against the current edition",
        }
    }

    /// Whether the limit must be verified before it is relied on.
    pub fn needs_verification(self) -> bool {
        self == Confidence::FromMemory
    }

    /// Reads the YAML keyword (`from memory` may carry its `— verify …` tail).
    fn parse(text: &str) -> Option<Confidence> {
        let t = text.trim().to_lowercase();
        match t.as_str() {
            "confirmed" => Some(Confidence::Confirmed),
            "derived" => Some(Confidence::Derived),
            "common practice" => Some(Confidence::CommonPractice),
            _ if t == "from memory" || t.starts_with("from memory ") => {
                Some(Confidence::FromMemory)
            }
            _ => None,
        }
    }
}

impl fmt::Display for Confidence {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.text())
    }
}

/// The kind of subject a rule looks at.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Subjects {
    /// Spans of the web.
    Spans,
    /// Points of interest of one kind, or of any kind (`None`).
    Points(Option<PointKind>),
    /// Rollers.
    Rollers,
}

/// Which hazardous zones a rule concerns; an empty list means any.
#[derive(Debug, Clone, PartialEq, Eq, Default)]
pub struct ZoneFilter {
    /// Zone classes (0, 1, 2); empty = every class.
    pub classes: Vec<u8>,
    /// Gas groups; empty = every group.
    pub gas_groups: Vec<GasGroup>,
}

impl ZoneFilter {
    /// Whether a zone is of a listed class and gas group.
    pub fn matches(&self, z: &Zone) -> bool {
        (self.classes.is_empty() || self.classes.contains(&z.zone))
            && (self.gas_groups.is_empty() || self.gas_groups.contains(&z.gas_group))
    }

    /// `zone 1 IIA/IIB`, `any zone`.
    pub fn describe(&self) -> String {
        let classes = if self.classes.is_empty() {
            "any zone".to_string()
        } else {
            let c: Vec<String> = self.classes.iter().map(|c| c.to_string()).collect();
            format!("zone {}", c.join("/"))
        };
        if self.gas_groups.is_empty() {
            classes
        } else {
            let g: Vec<&str> = self.gas_groups.iter().map(|g| g.text()).collect();
            format!("{classes} {}", g.join("/"))
        }
    }
}

/// Where a rule applies.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Applies {
    /// What kind of subject.
    pub subjects: Subjects,
    /// Only subjects in a matching zone: spans touching its box, points
    /// inside it, rollers inside or near it (see `assess::NEAR_ZONE`).
    pub in_zone: bool,
    /// The zones that count when `in_zone` is set.
    pub zones: ZoneFilter,
}

impl Applies {
    /// A short description: `spans in zone 1 IIA/IIB`, `operator points`.
    pub fn describe(&self) -> String {
        let what = match self.subjects {
            Subjects::Spans => "spans".to_string(),
            Subjects::Points(Some(k)) => format!("{} points", k.text()),
            Subjects::Points(None) => "points".to_string(),
            Subjects::Rollers => "rollers".to_string(),
        };
        if !self.in_zone {
            return format!("all {what}");
        }
        let how = match self.subjects {
            Subjects::Rollers => "in or near",
            _ => "in",
        };
        format!("{what} {how} {}", self.zones.describe())
    }
}

/// A separation limit: within `distance` the web may reach at most `voltage`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Separation {
    /// Distance from the sensitive item [m].
    pub distance: Meters,
    /// Potential allowed closer than `distance` [V].
    pub voltage: Volts,
}

/// One checked rule.
#[derive(Debug, Clone, PartialEq)]
pub struct Rule {
    /// Identifier, unique in its profile.
    pub id: String,
    /// What is checked.
    pub check: Check,
    /// What the rule checks, in words.
    pub what: String,
    /// Where it applies.
    pub applies: Applies,
    /// Warning limit, SI [unit of `dim`].
    pub warn: Option<f64>,
    /// Failure limit, SI [unit of `dim`]; `None` when `fail_is_zone_mie`.
    pub fail: Option<f64>,
    /// `fail: zone_mie`: the failure limit is the minimum ignition energy of
    /// the zone the operator stands in (spark_energy only).
    pub fail_is_zone_mie: bool,
    /// electronics_separation: the near limit (e.g. 125 V within 25 mm).
    pub near: Option<Separation>,
    /// electronics_separation: the far limit (e.g. 2000 V within 300 mm).
    pub far: Option<Separation>,
    /// Dimension of the value and the limits.
    pub dim: Dim,
    /// Where the limits come from.
    pub source: String,
    /// How sure the source is.
    pub confidence: Confidence,
    /// Text shown in reports, when given.
    pub note: Option<String>,
}

impl Rule {
    /// The limits in words: `warn 1 µC/m², fail 1.7 µC/m²`.
    pub fn limits_text(&self) -> String {
        let mut parts = Vec::new();
        if let Some(w) = self.warn {
            parts.push(format!("warn {}", format_quantity(w, self.dim)));
        }
        if let Some(f) = self.fail {
            parts.push(format!("fail {}", format_quantity(f, self.dim)));
        }
        if self.fail_is_zone_mie {
            parts.push("fail at the MIE of the zone".to_string());
        }
        for (word, s) in [("near", self.near), ("far", self.far)] {
            if let Some(s) = s {
                parts.push(format!(
                    "{word}: {} within {}",
                    format_quantity(s.voltage, Dim::Voltage),
                    format_quantity(s.distance, Dim::Length)
                ));
            }
        }
        parts.join(", ")
    }
}

/// A checked threshold profile.
#[derive(Debug, Clone, PartialEq)]
pub struct ThresholdProfile {
    /// Short name (`ex-zone-1`).
    pub name: String,
    /// One-line title.
    pub title: String,
    /// Scope and how to read it.
    pub description: String,
    /// The rules, in file order.
    pub rules: Vec<Rule>,
    /// `shipped`, or the path of the file it was read from.
    pub origin: String,
    /// The YAML text as read, for hashing in the manifest.
    pub text: String,
}

// ------------------------------------------------------------- validation

/// Replaces serde's internal type names (`struct RawRule`) with words.
fn tidy(message: &str) -> String {
    let mut out = String::new();
    let mut rest = message;
    while let Some(i) = rest.find("struct Raw") {
        out.push_str(&rest[..i]);
        out.push_str("a mapping of keys");
        rest = &rest[i + "struct Raw".len()..];
        let end = rest
            .find(|c: char| !c.is_alphanumeric())
            .unwrap_or(rest.len());
        rest = &rest[end..];
    }
    out.push_str(rest);
    out.replace("enum RawList", "a value or a list of values")
}

fn parse_raw(text: &str) -> Result<RawProfile, ValidationError> {
    if text
        .lines()
        .all(|l| l.trim().is_empty() || l.trim_start().starts_with('#'))
    {
        return Err(ValidationError {
            issues: vec![Issue::at(
                "",
                "the threshold profile is empty: expected `name:`, `title:`, `description:` and `rules:` (see `websigma profiles ex-zone-1`)",
            )],
        });
    }
    serde_yaml::from_str::<RawProfile>(text).map_err(|e| {
        let location = e.location().map(|l| (l.line(), l.column()));
        let mut message = e.to_string();
        if let Some(i) = message.find(" at line ") {
            message.truncate(i);
        }
        ValidationError {
            issues: vec![Issue {
                path: String::new(),
                location,
                message: tidy(&message),
            }],
        }
    })
}

struct Ctx {
    issues: Vec<Issue>,
}

impl Ctx {
    fn err(&mut self, path: impl Into<String>, msg: impl Into<String>) {
        self.issues.push(Issue::at(path, msg));
    }
    /// A required, non-empty text.
    fn text(&mut self, v: &Option<Scalar>, path: &str, what: &str) -> Option<String> {
        match v.as_ref().map(|s| s.as_str().trim()) {
            Some(t) if !t.is_empty() => Some(t.to_string()),
            _ => {
                self.err(path, format!("missing: expected {what}"));
                None
            }
        }
    }
    /// A limit: a positive quantity of `dim`.
    fn limit(&mut self, v: &Scalar, dim: Dim, path: &str) -> Option<f64> {
        match parse_quantity(v.as_str(), dim) {
            Ok(x) if x > 0.0 => Some(x),
            Ok(x) => {
                self.err(
                    path,
                    format!(
                        "expected a positive limit such as \"{}\", got {}",
                        dim.example(),
                        format_quantity(x, dim)
                    ),
                );
                None
            }
            Err(e) => {
                self.err(path, e.to_string());
                None
            }
        }
    }
}

/// Parses and checks a threshold profile; `origin` is `shipped` or the file
/// path. Every problem is collected with its YAML path.
pub fn parse_profile(text: &str, origin: &str) -> Result<ThresholdProfile, ValidationError> {
    let raw = parse_raw(text)?;
    let mut ctx = Ctx { issues: Vec::new() };
    let name = ctx.text(&raw.name, "name", "a short name such as \"ex-zone-1\"");
    if let Some(n) = &name
        && (n.contains(char::is_whitespace) || n.len() > 64)
    {
        ctx.err(
            "name",
            format!("expected a short name of up to 64 characters without spaces, such as \"ex-zone-1\", got \"{n}\""),
        );
    }
    let title = ctx.text(&raw.title, "title", "a one-line title");
    let description = ctx.text(
        &raw.description,
        "description",
        "a paragraph on the profile's scope and how to read it",
    );
    let mut rules: Vec<Rule> = Vec::new();
    match &raw.rules {
        None => ctx.err("rules", "missing: expected a list of rules"),
        Some(list) if list.is_empty() => ctx.err("rules", "expected at least one rule"),
        Some(list) => {
            let mut ids: Vec<String> = Vec::new();
            for (i, r) in list.iter().enumerate() {
                let p = format!("rules[{i}]");
                if let Some(id) = r.id.as_ref().map(|s| s.as_str().trim().to_string())
                    && !id.is_empty()
                {
                    if ids.contains(&id) {
                        ctx.err(
                            format!("{p}.id"),
                            format!("duplicate rule id \"{id}\": every rule needs its own id"),
                        );
                    }
                    ids.push(id);
                }
                if let Some(rule) = validate_rule(&mut ctx, r, &p) {
                    rules.push(rule);
                }
            }
        }
    }
    if !ctx.issues.is_empty() {
        return Err(ValidationError { issues: ctx.issues });
    }
    match (name, title, description) {
        (Some(name), Some(title), Some(description)) => Ok(ThresholdProfile {
            name,
            title,
            description,
            rules,
            origin: origin.to_string(),
            text: text.to_string(),
        }),
        _ => Err(ValidationError {
            issues: vec![Issue::at("", "incomplete profile")],
        }),
    }
}

fn validate_rule(ctx: &mut Ctx, r: &RawRule, p: &str) -> Option<Rule> {
    let before = ctx.issues.len();
    let id = ctx.text(
        &r.id,
        &format!("{p}.id"),
        "an id such as \"web-charge-iia\"",
    );
    if let Some(id) = &id
        && (id.contains(char::is_whitespace) || id.len() > 64)
    {
        ctx.err(
            format!("{p}.id"),
            format!("expected an id of up to 64 characters without spaces, got \"{id}\""),
        );
    }
    let names: Vec<&str> = Check::ALL.iter().map(|c| c.text()).collect();
    let check = match r.check.as_ref().map(|s| s.as_str().trim()) {
        None | Some("") => {
            ctx.err(
                format!("{p}.check"),
                format!("missing: expected one of {}", names.join(" | ")),
            );
            None
        }
        Some(t) => {
            let c = Check::ALL.iter().copied().find(|c| c.text() == t);
            if c.is_none() {
                ctx.err(
                    format!("{p}.check"),
                    format!(
                        "unknown check \"{t}\": expected one of {}",
                        names.join(" | ")
                    ),
                );
            }
            c
        }
    };
    let what = ctx.text(
        &r.what,
        &format!("{p}.what"),
        "what the rule checks, in words",
    );
    let source = ctx.text(
        &r.source,
        &format!("{p}.source"),
        "the published source of the limits (standard and clause, paper, handbook) or \"common practice\"",
    );
    let confidence = match r.confidence.as_ref().map(|s| s.as_str().trim()) {
        None | Some("") => {
            ctx.err(
                format!("{p}.confidence"),
                "missing: expected confirmed | derived | common practice | from memory",
            );
            None
        }
        Some(t) => {
            let c = Confidence::parse(t);
            if c.is_none() {
                ctx.err(
                    format!("{p}.confidence"),
                    format!(
                        "expected confirmed | derived | common practice | from memory, got \"{t}\""
                    ),
                );
            }
            c
        }
    };
    let note = r
        .note
        .as_ref()
        .map(|n| n.as_str().trim().to_string())
        .filter(|n| !n.is_empty());
    let applies = validate_applies(ctx, r.applies.as_ref(), check, &format!("{p}.applies"));
    let (warn, fail, zone_mie, near, far) = match check {
        Some(c) => validate_limits(ctx, r, c, p, applies.as_ref()),
        None => (None, None, false, None, None),
    };
    if ctx.issues.len() > before {
        return None;
    }
    let (id, check, what, applies, source, confidence) =
        (id?, check?, what?, applies?, source?, confidence?);
    Some(Rule {
        id,
        check,
        what,
        applies,
        warn,
        fail,
        fail_is_zone_mie: zone_mie,
        near,
        far,
        dim: check.dim(),
        source,
        confidence,
        note,
    })
}

type Limits = (
    Option<f64>,
    Option<f64>,
    bool,
    Option<Separation>,
    Option<Separation>,
);

fn validate_limits(
    ctx: &mut Ctx,
    r: &RawRule,
    check: Check,
    p: &str,
    applies: Option<&Applies>,
) -> Limits {
    let dim = check.dim();
    if check == Check::ElectronicsSeparation {
        for (key, v) in [("warn", &r.warn), ("fail", &r.fail)] {
            if v.is_some() {
                ctx.err(
                    format!("{p}.{key}"),
                    "electronics_separation takes `near: {distance, voltage}` and `far: {distance, voltage}` instead of warn/fail",
                );
            }
        }
        let near = separation(ctx, r.near.as_ref(), &format!("{p}.near"));
        let far = separation(ctx, r.far.as_ref(), &format!("{p}.far"));
        if let (Some(n), Some(f)) = (near, far) {
            if n.distance >= f.distance {
                ctx.err(
                    format!("{p}.near.distance"),
                    format!(
                        "the near distance {} must be smaller than the far distance {}",
                        format_quantity(n.distance, Dim::Length),
                        format_quantity(f.distance, Dim::Length)
                    ),
                );
            }
            if n.voltage > f.voltage {
                ctx.err(
                    format!("{p}.near.voltage"),
                    format!(
                        "the near voltage {} must not exceed the far voltage {} (closer means stricter)",
                        format_quantity(n.voltage, Dim::Voltage),
                        format_quantity(f.voltage, Dim::Voltage)
                    ),
                );
            }
        }
        return (None, None, false, near, far);
    }
    for (key, v) in [("near", r.near.is_some()), ("far", r.far.is_some())] {
        if v {
            ctx.err(
                format!("{p}.{key}"),
                format!("`{key}:` belongs to electronics_separation only: use warn/fail"),
            );
        }
    }
    let warn = r
        .warn
        .as_ref()
        .and_then(|w| ctx.limit(w, dim, &format!("{p}.warn")));
    let mut zone_mie = false;
    let fail = match &r.fail {
        Some(f) if f.as_str().trim() == "zone_mie" => {
            if check != Check::SparkEnergy {
                ctx.err(
                    format!("{p}.fail"),
                    "`zone_mie` is a limit of spark_energy only: give a quantity",
                );
            } else if !applies.is_some_and(|a| a.in_zone) {
                ctx.err(
                    format!("{p}.fail"),
                    "`fail: zone_mie` needs `applies: {points: operator, in_zone: true, ...}` (the MIE is that of the zone the operator stands in)",
                );
            }
            zone_mie = true;
            None
        }
        Some(f) => ctx.limit(f, dim, &format!("{p}.fail")),
        None => None,
    };
    if r.warn.is_none() && r.fail.is_none() {
        ctx.err(
            p,
            format!(
                "a rule needs `warn:` or `fail:` (or both), e.g. `fail: {}`",
                dim.example()
            ),
        );
    }
    if let (Some(w), Some(f)) = (warn, fail)
        && w > f
    {
        ctx.err(
            p,
            format!(
                "warn {} is above fail {}: the warning limit must not exceed the failure limit",
                format_quantity(w, dim),
                format_quantity(f, dim)
            ),
        );
    }
    (warn, fail, zone_mie, None, None)
}

fn separation(ctx: &mut Ctx, s: Option<&RawSeparation>, p: &str) -> Option<Separation> {
    let Some(s) = s else {
        ctx.err(
            p,
            "missing: expected {distance: 25 mm, voltage: 125 V} (the web potential allowed within that distance)",
        );
        return None;
    };
    let d = match &s.distance {
        Some(d) => ctx.limit(d, Dim::Length, &format!("{p}.distance")),
        None => {
            ctx.err(
                format!("{p}.distance"),
                "missing: expected a length such as \"25 mm\"",
            );
            None
        }
    };
    let v = match &s.voltage {
        Some(v) => ctx.limit(v, Dim::Voltage, &format!("{p}.voltage")),
        None => {
            ctx.err(
                format!("{p}.voltage"),
                "missing: expected a voltage such as \"125 V\"",
            );
            None
        }
    };
    Some(Separation {
        distance: d?,
        voltage: v?,
    })
}

fn validate_applies(
    ctx: &mut Ctx,
    a: Option<&RawApplies>,
    check: Option<Check>,
    p: &str,
) -> Option<Applies> {
    let Some(a) = a else {
        ctx.err(
            p,
            "missing: expected {spans: all | in_zone, ...}, {points: KIND, in_zone: true|false, ...} or {rollers: all | in_or_near_zone, ...}",
        );
        return None;
    };
    let given = [a.spans.is_some(), a.points.is_some(), a.rollers.is_some()]
        .iter()
        .filter(|b| **b)
        .count();
    if given != 1 {
        ctx.err(
            p,
            "expected exactly one of `spans:`, `points:` or `rollers:`",
        );
        return None;
    }
    let word = |s: &Scalar| s.as_str().trim().to_string();
    let (subjects, in_zone) = if let Some(s) = &a.spans {
        if a.in_zone.is_some() {
            ctx.err(
                format!("{p}.in_zone"),
                "`in_zone:` belongs to points: write `spans: in_zone`",
            );
        }
        match word(s).as_str() {
            "all" => (Subjects::Spans, false),
            "in_zone" => (Subjects::Spans, true),
            t => {
                ctx.err(
                    format!("{p}.spans"),
                    format!("expected all | in_zone, got \"{t}\""),
                );
                return None;
            }
        }
    } else if let Some(s) = &a.rollers {
        if a.in_zone.is_some() {
            ctx.err(
                format!("{p}.in_zone"),
                "`in_zone:` belongs to points: write `rollers: in_or_near_zone`",
            );
        }
        match word(s).as_str() {
            "all" => (Subjects::Rollers, false),
            "in_or_near_zone" => (Subjects::Rollers, true),
            t => {
                ctx.err(
                    format!("{p}.rollers"),
                    format!("expected all | in_or_near_zone, got \"{t}\""),
                );
                return None;
            }
        }
    } else {
        let kind = match a.points.as_ref().map(word).as_deref() {
            Some("operator") => Some(PointKind::Operator),
            Some("electronics") => Some(PointKind::Electronics),
            Some("meter") => Some(PointKind::Meter),
            Some("probe") => Some(PointKind::Probe),
            Some("any") => None,
            t => {
                ctx.err(
                    format!("{p}.points"),
                    format!(
                        "expected operator | electronics | meter | probe | any, got \"{}\"",
                        t.unwrap_or("")
                    ),
                );
                return None;
            }
        };
        let in_zone = match a.in_zone.as_ref().map(word).as_deref() {
            None | Some("false") => false,
            Some("true") => true,
            Some(t) => {
                ctx.err(
                    format!("{p}.in_zone"),
                    format!("expected true | false, got \"{t}\""),
                );
                false
            }
        };
        (Subjects::Points(kind), in_zone)
    };
    let mut zones = ZoneFilter::default();
    if let Some(list) = &a.zone {
        for (i, s) in list.items().into_iter().enumerate() {
            match word(s).as_str() {
                "0" => zones.classes.push(0),
                "1" => zones.classes.push(1),
                "2" => zones.classes.push(2),
                t => ctx.err(
                    format!("{p}.zone[{i}]"),
                    format!("expected a zone class 0 | 1 | 2, got \"{t}\""),
                ),
            }
        }
    }
    if let Some(list) = &a.gas_group {
        for (i, s) in list.items().into_iter().enumerate() {
            match word(s).as_str() {
                "IIA" => zones.gas_groups.push(GasGroup::IIA),
                "IIB" => zones.gas_groups.push(GasGroup::IIB),
                "IIC" => zones.gas_groups.push(GasGroup::IIC),
                t => ctx.err(
                    format!("{p}.gas_group[{i}]"),
                    format!("expected a gas group IIA | IIB | IIC, got \"{t}\""),
                ),
            }
        }
    }
    if !in_zone && (a.zone.is_some() || a.gas_group.is_some()) {
        ctx.err(
            p,
            "`zone:` and `gas_group:` only restrict zone-bound subjects: use `spans: in_zone`, `in_zone: true` or `rollers: in_or_near_zone`",
        );
    }
    if let Some(c) = check {
        let fits = matches!(
            (c, subjects),
            (Check::WebCharge | Check::PropagatingBrush, Subjects::Spans)
                | (Check::FieldAtPoints, Subjects::Points(_))
                | (
                    Check::BodyVoltage | Check::SparkEnergy,
                    Subjects::Points(Some(PointKind::Operator))
                )
                | (
                    Check::ElectronicsSeparation,
                    Subjects::Points(Some(PointKind::Electronics))
                )
                | (Check::IsolatedConductor, Subjects::Rollers)
        );
        if !fits {
            let expected = match c {
                Check::WebCharge | Check::PropagatingBrush => "`spans: all | in_zone`",
                Check::FieldAtPoints => "`points: operator | electronics | meter | probe | any`",
                Check::BodyVoltage | Check::SparkEnergy => "`points: operator`",
                Check::ElectronicsSeparation => "`points: electronics`",
                Check::IsolatedConductor => "`rollers: all | in_or_near_zone`",
            };
            ctx.err(p, format!("{} applies to {expected}", c.text()));
            return None;
        }
    }
    Some(Applies {
        subjects,
        in_zone,
        zones,
    })
}

// ---------------------------------------------------------------- loading

/// Loads a shipped profile by name, or else a profile file by path.
pub fn load_profile(name_or_path: &str) -> anyhow::Result<ThresholdProfile> {
    use anyhow::Context;
    let list = shipped();
    if let Some((_, text)) = list.iter().find(|(n, _)| *n == name_or_path) {
        return parse_profile(text, "shipped").map_err(|e| problems(name_or_path, &e));
    }
    let path = std::path::Path::new(name_or_path);
    let names: Vec<&str> = list.iter().map(|(n, _)| *n).collect();
    if !path.is_file() {
        anyhow::bail!(
            "no threshold profile '{name_or_path}': give a shipped name ({}) or the path of a profile file",
            names.join(", ")
        );
    }
    let meta = std::fs::metadata(path)
        .with_context(|| format!("reading threshold profile '{}'", path.display()))?;
    if meta.len() > MAX_PROFILE_BYTES {
        anyhow::bail!(
            "threshold profile '{}' is {} bytes: the limit is {MAX_PROFILE_BYTES} bytes (a profile is a short YAML file)",
            path.display(),
            meta.len()
        );
    }
    let text = std::fs::read_to_string(path).with_context(|| {
        format!(
            "reading threshold profile '{}' (it must be UTF-8 text)",
            path.display()
        )
    })?;
    parse_profile(&text, name_or_path).map_err(|e| problems(name_or_path, &e))
}

fn problems(origin: &str, e: &ValidationError) -> anyhow::Error {
    let n = e.issues.len();
    let mut msg = format!(
        "invalid threshold profile '{origin}': {n} problem{}",
        if n == 1 { "" } else { "s" }
    );
    for i in &e.issues {
        msg.push_str(&format!("\n  {i}"));
    }
    anyhow::anyhow!(msg)
}

/// The profiles with the shipped `air-limit` profile added (first) unless one
/// of that name is already there: the physical limit of air always applies.
pub fn with_air_limit(mut profiles: Vec<ThresholdProfile>) -> Vec<ThresholdProfile> {
    if profiles.iter().any(|p| p.name == AIR_LIMIT) {
        return profiles;
    }
    // The shipped file is parsed by a test, so this cannot fail in a release.
    if let Some((_, text)) = shipped().into_iter().find(|(n, _)| *n == AIR_LIMIT)
        && let Ok(p) = parse_profile(text, "shipped")
    {
        profiles.insert(0, p);
    }
    profiles
}
