//! Second step of reading a threshold profile: `YAML text → RawProfile →
//! ThresholdProfile` (reading stage of the assessment). The text is read by
//! [`crate::yaml::from_str`]; then every rule is checked and **all** problems
//! are collected with their YAML path
//! (`rules[2].warn: expected a surface charge density such as "1.7 uC/m^2", got "5 kV", …`).

use super::checked::{
    Applies, Check, Confidence, Hazard, Rule, Separation, Subjects, ThresholdProfile, ZoneFilter,
};
use super::raw::{RawApplies, RawProfile, RawRule, RawSeparation};
use crate::assess::meter::DEFAULT_METER_DISTANCE;
use crate::model::raw::Scalar;
use crate::model::{GasGroup, Issue, PointKind, ValidationError};
use crate::units::{Dim, Meters, format_quantity, parse_quantity};

fn parse_raw(text: &str) -> Result<RawProfile, ValidationError> {
    if crate::yaml::is_blank(text) {
        return Err(ValidationError {
            issues: vec![Issue::at(
                "",
                "the threshold profile is empty: expected `name:`, `title:`, `description:` and `rules:` (see `websigma profiles ex-zone-1`)",
            )],
        });
    }
    Ok(crate::yaml::from_str::<RawProfile>(text)?)
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
        if split_meter(v.as_str()).is_some() {
            self.err(
                path,
                format!(
                    "`at <distance>` belongs to the limits of meter_reading and electronics_separation (a field meter's reading at its calibration distance): give {} such as \"{}\"",
                    dim.name(),
                    dim.example()
                ),
            );
            return None;
        }
        self.limit_text(v.as_str(), dim, path)
    }

    /// A meter limit: a positive voltage, optionally followed by `at` and
    /// the meter's calibration distance (`"5 kV at 1 in"`); the distance,
    /// when given, is pushed to `at` with the path.
    fn meter_limit(
        &mut self,
        v: &Scalar,
        path: &str,
        at: &mut Vec<(Meters, String)>,
    ) -> Option<f64> {
        let text = v.as_str().trim();
        let volts = match split_meter(text) {
            Some((volts, d)) => {
                match parse_quantity(d, Dim::Length) {
                    Ok(x) if (1e-3..=1.0).contains(&x) => at.push((x, path.to_string())),
                    Ok(x) if x > 0.0 => self.err(
                        path,
                        format!(
                            "the meter's calibration distance after `at` is {}: field meters are calibrated between 1 mm and 1 m from the surface (commonly at 1 in)",
                            format_quantity(x, Dim::Length)
                        ),
                    ),
                    Ok(x) => self.err(
                        path,
                        format!(
                            "the meter's calibration distance after `at` must be positive, got {}",
                            format_quantity(x, Dim::Length)
                        ),
                    ),
                    Err(e) => self.err(
                        path,
                        format!("the meter's calibration distance after `at`: {e}"),
                    ),
                }
                volts
            }
            None => text,
        };
        self.limit_text(volts, Dim::Voltage, path)
    }

    fn limit_text(&mut self, text: &str, dim: Dim, path: &str) -> Option<f64> {
        match parse_quantity(text, dim) {
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
            name: name.into(),
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
                "missing: expected confirmed | derived | common practice | secondary source | from memory",
            );
            None
        }
        Some(t) => {
            let c = Confidence::parse(t);
            if c.is_none() {
                ctx.err(
                    format!("{p}.confidence"),
                    format!(
                        "expected confirmed | derived | common practice | secondary source | from memory, got \"{t}\""
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
    let limits = match check {
        Some(c) => validate_limits(ctx, r, c, p, applies.as_ref()),
        None => Limits::default(),
    };
    if ctx.issues.len() > before {
        return None;
    }
    let (id, check, what, applies, source, confidence) =
        (id?, check?, what?, applies?, source?, confidence?);
    let hazard = Hazard::of(check, &applies, limits.computed == Some(Computed::ZoneMie));
    Some(Rule {
        id: id.into(),
        check,
        what: what.into(),
        applies,
        hazard,
        warn: limits.warn,
        fail: limits.fail,
        fail_is_zone_mie: limits.computed == Some(Computed::ZoneMie),
        fail_is_paschen: limits.computed == Some(Computed::Paschen),
        near: limits.near,
        far: limits.far,
        meter_distance: limits.meter_distance,
        per_inch: check.dim() == Dim::Field
            && [&r.warn, &r.fail]
                .into_iter()
                .flatten()
                .any(|v| per_inch_text(v.as_str())),
        dim: check.dim(),
        source: source.into(),
        confidence,
        note: note.map(Into::into),
    })
}

/// A failure limit the assessment computes instead of reading it.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Computed {
    /// `fail: zone_mie`.
    ZoneMie,
    /// `fail: paschen`.
    Paschen,
}

/// What `validate_limits` reads.
#[derive(Default)]
struct Limits {
    warn: Option<f64>,
    fail: Option<f64>,
    computed: Option<Computed>,
    near: Option<Separation>,
    far: Option<Separation>,
    /// The meter's calibration distance of a meter check [m].
    meter_distance: Option<Meters>,
}

/// Whether a field written as text is per inch (`2000 V/in`, `2 kV/inch`).
fn per_inch_text(t: &str) -> bool {
    let t = t.trim().to_lowercase();
    t.ends_with("/in") || t.ends_with("/inch")
}

/// `"5 kV at 1 in"` → `("5 kV", "1 in")`; `None` without ` at `.
fn split_meter(text: &str) -> Option<(&str, &str)> {
    let (v, d) = text.trim().split_once(" at ")?;
    Some((v.trim(), d.trim()))
}

/// The one calibration distance of a meter rule's limits: the distance
/// they give (all the same, else an error at the first that differs), or
/// [`DEFAULT_METER_DISTANCE`].
fn meter_distance(ctx: &mut Ctx, at: &[(Meters, String)]) -> Meters {
    let Some((first, first_path)) = at.first() else {
        return DEFAULT_METER_DISTANCE;
    };
    for (d, path) in &at[1..] {
        if (d - first).abs() > 1e-9 * first {
            ctx.err(
                path.clone(),
                format!(
                    "the meter distance {} differs from {} at {first_path}: a rule compares readings taken at one calibration distance",
                    format_quantity(*d, Dim::Length),
                    format_quantity(*first, Dim::Length)
                ),
            );
        }
    }
    *first
}

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
        let mut at = Vec::new();
        let near = separation(ctx, r.near.as_ref(), &format!("{p}.near"), &mut at);
        let far = separation(ctx, r.far.as_ref(), &format!("{p}.far"), &mut at);
        let meter = meter_distance(ctx, &at);
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
        return Limits {
            near,
            far,
            meter_distance: Some(meter),
            ..Limits::default()
        };
    }
    for (key, v) in [("near", r.near.is_some()), ("far", r.far.is_some())] {
        if v {
            ctx.err(
                format!("{p}.{key}"),
                format!("`{key}:` belongs to electronics_separation only: use warn/fail"),
            );
        }
    }
    let mut at = Vec::new();
    let mut read = |ctx: &mut Ctx, v: &Scalar, path: String| {
        if check == Check::MeterReading {
            ctx.meter_limit(v, &path, &mut at)
        } else {
            ctx.limit(v, dim, &path)
        }
    };
    let warn = r
        .warn
        .as_ref()
        .and_then(|w| read(ctx, w, format!("{p}.warn")));
    let mut computed = None;
    let fail = match &r.fail {
        Some(f) if f.as_str().trim() == "zone_mie" => {
            let zoned = applies.is_some_and(|a| a.in_zone);
            match check {
                Check::SparkEnergy if !zoned => ctx.err(
                    format!("{p}.fail"),
                    "`fail: zone_mie` needs `applies: {points: operator, in_zone: true, ...}` (the MIE is that of the zone the operator stands in)",
                ),
                Check::ConductorSpark if !zoned => ctx.err(
                    format!("{p}.fail"),
                    "`fail: zone_mie` needs `applies: {rollers: in_or_near_zone, ...}` or `{conductors: in_or_near_zone, ...}` (the MIE is that of the zones the conductor is in or near)",
                ),
                Check::SparkEnergy | Check::ConductorSpark => {}
                _ => ctx.err(
                    format!("{p}.fail"),
                    "`zone_mie` is a limit of spark_energy and conductor_spark only: give a quantity",
                ),
            }
            computed = Some(Computed::ZoneMie);
            None
        }
        Some(f) if f.as_str().trim() == "paschen" => {
            if check != Check::GapDischarge {
                ctx.err(
                    format!("{p}.fail"),
                    "`paschen` is a limit of gap_discharge only: give a quantity",
                );
            }
            computed = Some(Computed::Paschen);
            None
        }
        Some(f) if check == Check::GapDischarge => {
            ctx.err(
                format!("{p}.fail"),
                format!(
                    "gap_discharge computes its limit from Paschen's law: write `fail: paschen`, got \"{}\"",
                    f.as_str().trim()
                ),
            );
            None
        }
        Some(f) => read(ctx, f, format!("{p}.fail")),
        None => None,
    };
    let meter = (check == Check::MeterReading).then(|| meter_distance(ctx, &at));
    if check == Check::GapDischarge {
        if r.warn.is_some() {
            ctx.err(
                format!("{p}.warn"),
                "gap_discharge takes only `fail: paschen` (the limit is computed from the web and Paschen's law)",
            );
        }
        if r.fail.is_none() {
            ctx.err(
                format!("{p}.fail"),
                "missing: gap_discharge needs `fail: paschen`",
            );
        }
    }
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
    Limits {
        warn,
        fail,
        computed,
        meter_distance: meter,
        ..Limits::default()
    }
}

fn separation(
    ctx: &mut Ctx,
    s: Option<&RawSeparation>,
    p: &str,
    at: &mut Vec<(Meters, String)>,
) -> Option<Separation> {
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
        Some(v) => ctx.meter_limit(v, &format!("{p}.voltage"), at),
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
            "missing: expected {spans: all | in_zone, ...}, {points: KIND, in_zone: true|false, ...}, {rollers: all | in_or_near_zone, ...} or {conductors: all | in_or_near_zone, ...}",
        );
        return None;
    };
    let given = [
        a.spans.is_some(),
        a.points.is_some(),
        a.rollers.is_some(),
        a.conductors.is_some(),
    ]
    .iter()
    .filter(|b| **b)
    .count();
    if given != 1 {
        ctx.err(
            p,
            "expected exactly one of `spans:`, `points:`, `rollers:` or `conductors:`",
        );
        return None;
    }
    let (subjects, in_zone) = if let Some(s) = &a.spans {
        (
            Subjects::Spans,
            all_or_zoned(ctx, a, s, p, "spans", "in_zone")?,
        )
    } else if let Some(s) = &a.rollers {
        (
            Subjects::Rollers,
            all_or_zoned(ctx, a, s, p, "rollers", "in_or_near_zone")?,
        )
    } else if let Some(s) = &a.conductors {
        (
            Subjects::Conductors,
            all_or_zoned(ctx, a, s, p, "conductors", "in_or_near_zone")?,
        )
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
            "`zone:` and `gas_group:` only restrict zone-bound subjects: use `spans: in_zone`, `in_zone: true`, `rollers: in_or_near_zone` or `conductors: in_or_near_zone`",
        );
    }
    if let Some(c) = check {
        let fits = matches!(
            (c, subjects),
            (
                Check::WebCharge
                    | Check::PropagatingBrush
                    | Check::GapDischarge
                    | Check::MeterReading,
                Subjects::Spans
            ) | (Check::FieldAtPoints, Subjects::Points(_))
                | (
                    Check::BodyVoltage | Check::SparkEnergy,
                    Subjects::Points(Some(PointKind::Operator))
                )
                | (
                    Check::ElectronicsSeparation,
                    Subjects::Points(Some(PointKind::Electronics))
                )
                | (
                    Check::IsolatedConductor | Check::ConductorSpark,
                    Subjects::Rollers | Subjects::Conductors
                )
                | (Check::InsulatingSurface, Subjects::Rollers)
        );
        if !fits {
            let expected = match c {
                Check::WebCharge
                | Check::PropagatingBrush
                | Check::GapDischarge
                | Check::MeterReading => "`spans: all | in_zone`",
                Check::FieldAtPoints => "`points: operator | electronics | meter | probe | any`",
                Check::BodyVoltage | Check::SparkEnergy => "`points: operator`",
                Check::ElectronicsSeparation => "`points: electronics`",
                Check::IsolatedConductor | Check::ConductorSpark => {
                    "`rollers: all | in_or_near_zone` or `conductors: all | in_or_near_zone`"
                }
                Check::InsulatingSurface => "`rollers: all | in_or_near_zone`",
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

/// `spans:` or `rollers:` (the `key`): `all` gives `false`, the zone-bound
/// keyword `zoned` gives `true`; `in_zone:` does not belong beside them.
fn all_or_zoned(
    ctx: &mut Ctx,
    a: &RawApplies,
    s: &Scalar,
    p: &str,
    key: &str,
    zoned: &str,
) -> Option<bool> {
    if a.in_zone.is_some() {
        ctx.err(
            format!("{p}.in_zone"),
            format!("`in_zone:` belongs to points: write `{key}: {zoned}`"),
        );
    }
    match word(s).as_str() {
        "all" => Some(false),
        t if t == zoned => Some(true),
        t => {
            ctx.err(
                format!("{p}.{key}"),
                format!("expected all | {zoned}, got \"{t}\""),
            );
            None
        }
    }
}

/// A keyword as written, without surrounding spaces.
fn word(s: &Scalar) -> String {
    s.as_str().trim().to_string()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn rule_with(applies: &str) -> String {
        format!(
            "name: t\ntitle: T\ndescription: d\nrules:\n  - id: r\n    check: web_charge\n    what: w\n    applies: {applies}\n    fail: 1 uC/m^2\n    source: s\n    confidence: derived\n"
        )
    }

    fn problems(text: &str) -> Vec<String> {
        match parse_profile(text, "test") {
            Ok(_) => Vec::new(),
            Err(e) => e.issues.iter().map(|i| i.to_string()).collect(),
        }
    }

    #[test]
    fn spans_take_all_or_in_zone() {
        let p = parse_profile(&rule_with("{spans: all}"), "test").unwrap();
        assert!(!p.rules[0].applies.in_zone);
        let p = parse_profile(&rule_with("{spans: in_zone}"), "test").unwrap();
        assert!(p.rules[0].applies.in_zone);
        assert_eq!(
            problems(&rule_with("{spans: near}")),
            ["rules[0].applies.spans: expected all | in_zone, got \"near\""]
        );
    }

    #[test]
    fn in_zone_beside_spans_or_rollers_is_refused_with_the_fix() {
        assert_eq!(
            problems(&rule_with("{spans: all, in_zone: true}")),
            ["rules[0].applies.in_zone: `in_zone:` belongs to points: write `spans: in_zone`"]
        );
        let text = rule_with("{rollers: all, in_zone: true}")
            .replace("check: web_charge", "check: isolated_conductor");
        let text = text.replace("fail: 1 uC/m^2", "fail: 10 pF");
        assert_eq!(
            problems(&text),
            [
                "rules[0].applies.in_zone: `in_zone:` belongs to points: write `rollers: in_or_near_zone`"
            ]
        );
    }

    /// A one-rule profile with `check`, `applies` and `limits` (YAML lines).
    fn one_rule(check: &str, applies: &str, limits: &str) -> String {
        format!(
            "name: t\ntitle: T\ndescription: d\nrules:\n  - id: r\n    check: {check}\n    what: w\n    applies: {applies}\n{limits}    source: s\n    confidence: derived\n"
        )
    }

    #[test]
    fn computed_limits_belong_to_their_checks() {
        let p = parse_profile(
            &one_rule("gap_discharge", "{spans: all}", "    fail: paschen\n"),
            "test",
        )
        .unwrap();
        assert!(p.rules[0].fail_is_paschen && p.rules[0].fail.is_none());
        assert_eq!(
            problems(&one_rule(
                "web_charge",
                "{spans: all}",
                "    fail: paschen\n"
            )),
            ["rules[0].fail: `paschen` is a limit of gap_discharge only: give a quantity"]
        );
        assert_eq!(
            problems(&one_rule(
                "gap_discharge",
                "{spans: all}",
                "    fail: 20 uC/m^2\n"
            )),
            [
                "rules[0].fail: gap_discharge computes its limit from Paschen's law: write `fail: paschen`, got \"20 uC/m^2\""
            ]
        );
        let p = parse_profile(
            &one_rule(
                "conductor_spark",
                "{conductors: in_or_near_zone, zone: [1]}",
                "    fail: zone_mie\n",
            ),
            "test",
        )
        .unwrap();
        assert!(p.rules[0].fail_is_zone_mie);
        assert_eq!(p.rules[0].applies.subjects, Subjects::Conductors);
        assert_eq!(
            problems(&one_rule(
                "conductor_spark",
                "{conductors: all}",
                "    fail: zone_mie\n"
            )),
            [
                "rules[0].fail: `fail: zone_mie` needs `applies: {rollers: in_or_near_zone, ...}` or `{conductors: in_or_near_zone, ...}` (the MIE is that of the zones the conductor is in or near)"
            ]
        );
        assert_eq!(
            problems(&one_rule(
                "insulating_surface",
                "{conductors: all}",
                "    fail: 100 cm^2\n"
            )),
            ["rules[0].applies: insulating_surface applies to `rollers: all | in_or_near_zone`"]
        );
    }

    #[test]
    fn a_blank_profile_is_refused_before_parsing() {
        assert_eq!(
            problems("# only a comment\n\n"),
            [
                "the threshold profile is empty: expected `name:`, `title:`, `description:` and `rules:` (see `websigma profiles ex-zone-1`)"
            ]
        );
    }

    #[test]
    fn parser_errors_keep_their_location_and_lose_type_names() {
        assert_eq!(
            problems("name: t\nrules: [foo]\n"),
            ["2:9: rules[0]: invalid type: string \"foo\", expected a mapping of keys"]
        );
    }
}
