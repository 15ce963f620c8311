//! Applies the rules of the threshold profiles to their subjects (the
//! checks and their formulas are documented in the parent module). Returns
//! findings with typed subjects and notes, and the assumptions used. The
//! checks of conductors (isolated rollers and `conductors:` entries, people,
//! insulating rollers, gap discharges) are in `rules/conductors.rs`.

mod conductors;

use super::finding::{Assumption, Finding, FindingNote, Subject};
use super::meter::{self, DEFAULT_METER_DISTANCE, MeterEquivalent};
use super::{
    Check, DEFAULT_BODY_CAPACITANCE, Rule, Subjects, ThresholdProfile, Verdict, WEB_OFFSET,
    stored_energy, verdict_for,
};
use crate::charge::ChargeProfile;
use crate::field::{ConductorResult, FieldAt, FieldError, PointField, SpanContribution};
use crate::model::geometry::{distance_to_span, span_frame};
use crate::model::{Line, Point, Span};
use std::borrow::Cow;

/// Smallest step between web-potential samples [m].
const SAMPLE_STEP: f64 = 0.01;

/// What applying the rules gives: the findings (unsorted, empty when only
/// the score was asked for), the assumptions used, the number of failures
/// and the largest margin.
pub(super) struct Outcome {
    pub findings: Vec<Finding>,
    pub assumptions: Vec<Assumption>,
    pub fails: usize,
    pub worst: f64,
}

/// Every rule of every profile applied. With `keep`, every finding is
/// built; without, only the failures are counted and the worst margin kept
/// (the planner's objective, evaluated millions of times): the rules are the
/// same code either way, only what is kept differs.
///
/// `solved` holds the conductors' results (`WebField::conductor_results`,
/// conducting rollers first in line order, then `line.conductors`) when
/// the scene has a conductors' solve; `None` keeps the checks that do not
/// need it and states what was left out.
///
/// `scopes`, when given, holds where each rule applies on each span
/// ([`span_scopes`] of a line with the same spans, web width and zones, and
/// of the same `profiles`); without, it is worked out as the rules run.
#[allow(clippy::too_many_arguments)]
pub(super) fn apply_all(
    line: &Line,
    charge: &ChargeProfile,
    model: &dyn FieldAt,
    fields: &[PointField],
    solved: Option<&[ConductorResult]>,
    profiles: &[ThresholdProfile],
    scopes: Option<&SpanScopes>,
    keep: bool,
) -> Result<Outcome, FieldError> {
    let mut run = Run {
        line,
        charge,
        model,
        fields,
        solved: solved.map(|r| conductors::Solved::new(line, r)),
        scopes,
        rule_at: (0, 0),
        keep,
        out: Outcome {
            findings: Vec::new(),
            assumptions: Vec::new(),
            fails: 0,
            worst: 0.0,
        },
    };
    for (i, profile) in profiles.iter().enumerate() {
        for (j, rule) in profile.rules.iter().enumerate() {
            run.rule_at = (i, j);
            run.apply(profile, rule)?;
        }
    }
    Ok(run.out)
}

/// Where each rule applies on each span (see [`scope_of`]), by profile,
/// rule and span: it depends only on the spans, the web's width and the
/// zones, so the planner works it out once for all its placements.
#[derive(Debug, Clone)]
pub struct SpanScopes(Vec<Vec<Vec<Option<SpanScope>>>>);

/// [`SpanScopes`] of `line` for the rules of `profiles`.
pub(super) fn span_scopes(line: &Line, profiles: &[ThresholdProfile]) -> SpanScopes {
    SpanScopes(
        profiles
            .iter()
            .map(|p| {
                p.rules
                    .iter()
                    .map(|r| {
                        line.path
                            .spans
                            .iter()
                            .map(|s| scope_of(line, r, s))
                            .collect()
                    })
                    .collect()
            })
            .collect(),
    )
}

/// Collects findings and assumptions while the rules are applied.
struct Run<'a> {
    line: &'a Line,
    charge: &'a ChargeProfile,
    model: &'a dyn FieldAt,
    fields: &'a [PointField],
    /// The conductors' solve, when the scene has one.
    solved: Option<conductors::Solved<'a>>,
    /// Where each rule applies on each span, when worked out beforehand.
    scopes: Option<&'a SpanScopes>,
    /// The profile and rule being applied (indices), for `scopes`.
    rule_at: (usize, usize),
    /// Build every finding, or only count.
    keep: bool,
    out: Outcome,
}

/// One finding's variable parts; its notes and contributions are built
/// only when the finding is kept.
struct Found<N, C> {
    subject: Subject,
    value: f64,
    warn: Option<f64>,
    fail: Option<f64>,
    notes: N,
    contributions: C,
}

/// Zone indices matching `keep`.
fn zone_indices(line: &Line, keep: impl Fn(&crate::model::Zone) -> bool) -> Vec<usize> {
    line.zones
        .iter()
        .enumerate()
        .filter(|(_, z)| keep(z))
        .map(|(i, _)| i)
        .collect()
}

impl<'a> Run<'a> {
    fn assume(&mut self, a: Assumption) {
        if !self.out.assumptions.contains(&a) {
            self.out.assumptions.push(a);
        }
    }

    fn push<N, C>(&mut self, profile: &ThresholdProfile, rule: &Rule, s: Found<N, C>)
    where
        N: FnOnce() -> Vec<FindingNote>,
        C: FnOnce() -> Vec<SpanContribution>,
    {
        let verdict = verdict_for(s.value, s.warn, s.fail);
        let limit = s.fail.or(s.warn).unwrap_or(f64::INFINITY);
        let margin = if limit.is_finite() && limit > 0.0 {
            s.value / limit
        } else {
            0.0
        };
        self.count(verdict, margin);
        if !self.keep {
            return;
        }
        let mut notes = (s.notes)();
        if let Some(n) = &rule.note {
            notes.push(FindingNote::Rule(n.clone()));
        }
        self.out.findings.push(Finding {
            profile: profile.name.clone(),
            rule: rule.id.clone(),
            check: rule.what.clone(),
            hazard: rule.hazard,
            subject: s.subject,
            value: s.value,
            meter: rule.meter_distance,
            ratio: None,
            per_inch: rule.per_inch,
            dim: rule.dim,
            limit,
            warn: s.warn,
            fail: s.fail,
            margin,
            verdict,
            bounds: super::Bounds::exact(s.value),
            source: rule.source.clone(),
            confidence: rule.confidence,
            notes,
            contributions: (s.contributions)(),
        });
    }

    fn count(&mut self, verdict: Verdict, margin: f64) {
        self.out.fails += usize::from(verdict == Verdict::Fail);
        self.out.worst = self.out.worst.max(margin);
    }

    /// Where on span `k` the rule being applied applies ([`scope_of`]),
    /// from `scopes` when they were worked out beforehand.
    fn span_zones(&self, rule: &Rule, k: usize) -> Option<Cow<'a, SpanScope>> {
        let cached = self
            .scopes
            .and_then(|c| c.0.get(self.rule_at.0)?.get(self.rule_at.1)?.get(k));
        match cached {
            Some(scope) => scope.as_ref().map(Cow::Borrowed),
            None => scope_of(self.line, rule, self.line.path.spans.get(k)?).map(Cow::Owned),
        }
    }

    /// Points of the rule's kind (with their index and field) and the
    /// matching zones containing each (all points when the rule is not
    /// zone-bound).
    fn points(&self, rule: &Rule) -> Vec<(usize, &'a Point, &'a PointField, Vec<usize>)> {
        let Subjects::Points(kind) = rule.applies.subjects else {
            return Vec::new();
        };
        let mut out = Vec::new();
        for (i, (p, f)) in self.line.points.iter().zip(self.fields).enumerate() {
            if kind.is_some_and(|k| k != p.kind) {
                continue;
            }
            if !rule.applies.in_zone {
                out.push((i, p, f, Vec::new()));
                continue;
            }
            let zones = zone_indices(self.line, |z| {
                rule.applies.zones.matches(z) && z.contains(p.at)
            });
            if !zones.is_empty() {
                out.push((i, p, f, zones));
            }
        }
        out
    }

    fn apply(&mut self, profile: &ThresholdProfile, rule: &Rule) -> Result<(), FieldError> {
        match rule.check {
            Check::WebCharge => self.web_charge(profile, rule),
            Check::FieldAtPoints => self.point_values(profile, rule),
            Check::BodyVoltage | Check::SparkEnergy => {
                self.point_values(profile, rule);
                self.people(profile, rule);
            }
            Check::ElectronicsSeparation => self.separation(profile, rule)?,
            Check::IsolatedConductor => self.isolated(profile, rule),
            Check::PropagatingBrush => self.propagating_brush(profile, rule),
            Check::ConductorSpark => self.conductor_spark(profile, rule),
            Check::InsulatingSurface => self.insulating(profile, rule),
            Check::GapDischarge => self.gap_discharge(profile, rule),
            Check::MeterReading => self.meter_reading(profile, rule)?,
        }
        Ok(())
    }

    /// The largest |σ| on each span the rule applies to, over the part of
    /// it inside the rule's zones (the whole span for a rule not bound to
    /// zones).
    fn web_charge(&mut self, profile: &ThresholdProfile, rule: &Rule) {
        self.assume(Assumption::WebCharge);
        for (i, span) in self.line.path.spans.iter().enumerate() {
            let Some(scope) = self.span_zones(rule, i) else {
                continue;
            };
            let value = scope
                .parts()
                .iter()
                .map(|&(a, b)| part_peak_sigma(self.charge, span.s_start + a, span.s_start + b))
                .fold(0.0, f64::max);
            self.push(
                profile,
                rule,
                Found {
                    subject: Subject::Span(i),
                    value,
                    warn: rule.warn,
                    fail: rule.fail,
                    notes: || scope.notes(),
                    contributions: Vec::new,
                },
            );
        }
    }

    /// The largest meter-equivalent reading on each span the rule applies
    /// to (see `assess::meter`).
    fn meter_reading(&mut self, profile: &ThresholdProfile, rule: &Rule) -> Result<(), FieldError> {
        self.assume(Assumption::MeterReading);
        let d = rule.meter_distance.unwrap_or(DEFAULT_METER_DISTANCE);
        for i in 0..self.line.path.spans.len() {
            let Some(scope) = self.span_zones(rule, i) else {
                continue;
            };
            let mut worst: Option<MeterEquivalent> = None;
            for &(a, b) in scope.parts() {
                if let Some(m) = meter::span_part_worst(self.line, self.model, i, d, a, b)?
                    && worst.is_none_or(|w| m.reading() > w.reading())
                {
                    worst = Some(m);
                }
            }
            let Some(m) = worst else {
                continue;
            };
            self.push(
                profile,
                rule,
                Found {
                    subject: Subject::Span(i),
                    value: m.reading(),
                    warn: rule.warn,
                    fail: rule.fail,
                    notes: || {
                        let mut notes = vec![FindingNote::Meter(m)];
                        notes.extend(scope.notes());
                        notes
                    },
                    contributions: Vec::new,
                },
            );
        }
        Ok(())
    }

    fn point_values(&mut self, profile: &ThresholdProfile, rule: &Rule) {
        if rule.check != Check::FieldAtPoints {
            self.assume(Assumption::InsulatedOperator);
        }
        for (i, p, f, zones) in self.points(rule) {
            let v = f.v.abs();
            let mut fail = rule.fail;
            // (C, assumed) for spark energy; (zone, MIE) when it fails there.
            let mut spark: Option<(f64, bool)> = None;
            let mut mie: Option<(usize, f64)> = None;
            let value = match rule.check {
                Check::FieldAtPoints => f.e_magnitude(),
                Check::BodyVoltage => v,
                _ => {
                    let c = match p.capacitance {
                        Some(c) => (c, false),
                        None => {
                            self.assume(Assumption::BodyCapacitance);
                            (DEFAULT_BODY_CAPACITANCE, true)
                        }
                    };
                    spark = Some(c);
                    if rule.fail_is_zone_mie {
                        let zs = &self.line.zones;
                        let Some(&z) = zones
                            .iter()
                            .min_by(|&&a, &&b| zs[a].mie.total_cmp(&zs[b].mie))
                        else {
                            continue;
                        };
                        fail = Some(zs[z].mie);
                        mie = Some((z, zs[z].mie));
                    }
                    stored_energy(c.0, v)
                }
            };
            let zone_bound = !rule.fail_is_zone_mie;
            self.push(
                profile,
                rule,
                Found {
                    subject: Subject::Point(i),
                    value,
                    warn: rule.warn,
                    fail,
                    notes: || {
                        let mut notes = Vec::new();
                        if let Some((capacitance, assumed)) = spark {
                            notes.push(FindingNote::Capacitance {
                                capacitance,
                                assumed,
                            });
                            notes.push(FindingNote::BodyPotential(v));
                        }
                        if let Some((zone, mie)) = mie {
                            notes.push(FindingNote::FailAtZoneMie { zone, mie });
                        }
                        if zone_bound {
                            notes.extend(in_zones(zones));
                        }
                        notes
                    },
                    contributions: || sorted_contributions(f),
                },
            );
        }
    }

    fn separation(&mut self, profile: &ThresholdProfile, rule: &Rule) -> Result<(), FieldError> {
        let (Some(near), Some(far)) = (rule.near, rule.far) else {
            return Ok(());
        };
        self.assume(Assumption::MeterReading);
        self.assume(Assumption::WebPotential);
        let md = rule.meter_distance.unwrap_or(DEFAULT_METER_DISTANCE);
        for (i, p, f, zones) in self.points(rule) {
            // (margin, reading, allowed, span index, d)
            let mut worst: Option<(f64, MeterEquivalent, f64, usize, f64)> = None;
            for (k, span) in self.line.path.spans.iter().enumerate() {
                let d = distance_to_span(span, self.line.web.width, p.at);
                if d >= far.distance {
                    continue;
                }
                let allowed = if d < near.distance {
                    near.voltage
                } else {
                    far.voltage
                };
                let Some(m) = meter::near_item(self.line, self.model, k, p.at, md)? else {
                    continue;
                };
                let margin = m.reading() / allowed;
                if worst.as_ref().is_none_or(|w| margin > w.0) {
                    worst = Some((margin, m, allowed, k, d));
                }
            }
            let Some((_, m, allowed, k, d)) = worst else {
                continue;
            };
            let within = if d < near.distance {
                near.distance
            } else {
                far.distance
            };
            // The web's own potential there, for information.
            let v_web = if self.keep {
                Some(self.web_potential(&self.line.path.spans[k], p.at, d)?)
            } else {
                None
            };
            self.push(
                profile,
                rule,
                Found {
                    subject: Subject::Point(i),
                    value: m.reading(),
                    warn: None,
                    fail: Some(allowed),
                    notes: || {
                        let mut notes = vec![
                            FindingNote::Separation {
                                span: k,
                                distance: d,
                                allowed,
                                within,
                            },
                            FindingNote::Meter(m),
                        ];
                        notes.extend(v_web.map(FindingNote::WebPotential));
                        notes.extend(in_zones(zones));
                        notes
                    },
                    contributions: || sorted_contributions(f),
                },
            );
        }
        Ok(())
    }

    /// Largest |V| on the span's surface around its point nearest to `at`.
    fn web_potential(&self, span: &Span, at: [f64; 3], d: f64) -> Result<f64, FieldError> {
        let dir = span.direction();
        let half = self.line.web.width / 2.0;
        let frame = span_frame(span, self.line.web.width, at);
        let (u0, h) = (frame.u.clamp(0.0, span.length), frame.h);
        let y0 = at[1].clamp(-half, half);
        // Unit normal in x-z, on the item's side of the span.
        let side = if h < 0.0 { -1.0 } else { 1.0 };
        let n = [-dir[1] * side, dir[0] * side];
        let step = d.max(SAMPLE_STEP);
        let mut best: Option<f64> = None;
        let mut last_err = None;
        for du in [0.0, -step, step] {
            for dy in [0.0, -step, step] {
                let u = (u0 + du).clamp(0.0, span.length);
                let y = (y0 + dy).clamp(-half, half);
                let q = [
                    span.start[0] + u * dir[0] + WEB_OFFSET * n[0],
                    y,
                    span.start[1] + u * dir[1] + WEB_OFFSET * n[1],
                ];
                match self.model.field_at(q, false) {
                    Ok(f) => best = Some(best.unwrap_or(0.0).max(f.v.abs())),
                    // Near another span's end (a sharp turn at a free point)
                    // a sample may sit on that span: skip that sample.
                    Err(e @ FieldError::OnWeb { .. }) => last_err = Some(e),
                    Err(e) => return Err(e),
                }
            }
        }
        match (best, last_err) {
            (Some(v), _) => Ok(v),
            (None, Some(e)) => Err(e),
            (None, None) => Ok(0.0),
        }
    }

    fn propagating_brush(&mut self, profile: &ThresholdProfile, rule: &Rule) {
        let web = &self.line.web;
        let subjects: Vec<(usize, Vec<usize>)> = self
            .line
            .path
            .spans
            .iter()
            .enumerate()
            .filter_map(|(i, _)| self.span_zones(rule, i).map(|z| (i, z.zones.clone())))
            .collect();
        if subjects.is_empty() {
            return;
        }
        let Some(eb) = web.breakdown_strength else {
            // Not known: taken at the warning limit (stated in the note),
            // so the warning's value is never below its own limit.
            let limit = rule.fail.or(rule.warn);
            let value = rule.warn.or(rule.fail).unwrap_or(0.0);
            let margin = match limit {
                Some(l) if l > 0.0 => value / l,
                _ => 0.0,
            };
            self.count(Verdict::Warn, margin);
            if !self.keep {
                return;
            }
            self.out.findings.push(Finding {
                profile: profile.name.clone(),
                rule: rule.id.clone(),
                check: rule.what.clone(),
                hazard: rule.hazard,
                subject: Subject::Web,
                value,
                meter: None,
                ratio: None,
                per_inch: false,
                dim: rule.dim,
                limit: limit.unwrap_or(0.0),
                warn: rule.warn,
                fail: rule.fail,
                margin,
                verdict: Verdict::Warn,
                bounds: super::Bounds::exact(value),
                source: rule.source.clone(),
                confidence: rule.confidence,
                notes: vec![FindingNote::NoBreakdownStrength],
                contributions: Vec::new(),
            });
            return;
        };
        let ub = web.thickness * eb;
        for (i, zones) in subjects {
            let thickness = web.thickness;
            self.push(
                profile,
                rule,
                Found {
                    subject: Subject::Span(i),
                    value: ub,
                    warn: rule.warn,
                    fail: rule.fail,
                    notes: || {
                        let mut notes = vec![FindingNote::BreakdownVoltage {
                            thickness,
                            strength: eb,
                        }];
                        notes.extend(in_zones(zones));
                        notes
                    },
                    contributions: Vec::new,
                },
            );
        }
    }
}

/// Where on `span` the rule applies: the matching zones it touches and
/// the parts of it inside them (the whole span for a rule not bound to
/// zones); `None` when the rule wants zones and the span touches none.
fn scope_of(line: &Line, rule: &Rule, span: &Span) -> Option<SpanScope> {
    if !rule.applies.in_zone {
        // Nothing allocated: the planner asks this for every span and
        // rule of millions of placements.
        return Some(SpanScope {
            zones: Vec::new(),
            whole_span: (0.0, span.length),
            zone_parts: Vec::new(),
            whole: true,
        });
    }
    let width = line.web.width;
    let mut zones = Vec::new();
    let mut parts = Vec::new();
    for (i, z) in line.zones.iter().enumerate() {
        if !rule.applies.zones.matches(z) {
            continue;
        }
        if let Some(p) = z.span_part(span, width) {
            zones.push(i);
            parts.push(p);
        }
    }
    if zones.is_empty() {
        return None;
    }
    let parts = merge_parts(parts);
    let whole = parts.len() == 1
        && parts[0].0 <= PART_SLACK * span.length
        && parts[0].1 >= (1.0 - PART_SLACK) * span.length;
    Some(SpanScope {
        zones,
        whole_span: (0.0, span.length),
        zone_parts: parts,
        whole,
    })
}

/// Parts of a span closer to its ends than this fraction of its length
/// count as reaching the end (round-off of the clipping) [1].
const PART_SLACK: f64 = 1e-9;

/// Where on a span a rule applies.
#[derive(Debug, Clone)]
struct SpanScope {
    /// The matching zones the span touches (empty for a rule not bound to
    /// zones).
    zones: Vec<usize>,
    /// The whole span, `(0, length)` [m].
    whole_span: (f64, f64),
    /// For a rule bound to zones, the parts inside them, `(u0, u1)` along
    /// the span from its start [m], sorted, disjoint and never empty; empty
    /// for a rule not bound to zones (which judges `whole_span`).
    zone_parts: Vec<(f64, f64)>,
    /// Whether the parts make up the whole span.
    whole: bool,
}

impl SpanScope {
    /// The parts judged, `(u0, u1)` along the span from its start [m],
    /// sorted and disjoint.
    fn parts(&self) -> &[(f64, f64)] {
        if self.zone_parts.is_empty() {
            std::slice::from_ref(&self.whole_span)
        } else {
            &self.zone_parts
        }
    }

    /// The finding's notes: the zones, and the parts judged when they are
    /// not the whole span.
    fn notes(&self) -> Vec<FindingNote> {
        let mut notes = in_zones(self.zones.clone());
        if !self.whole {
            notes.push(FindingNote::ZoneParts(self.parts().to_vec()));
        }
        notes
    }
}

/// Intervals sorted and overlapping ones joined.
fn merge_parts(mut parts: Vec<(f64, f64)>) -> Vec<(f64, f64)> {
    parts.sort_by(|a, b| a.0.total_cmp(&b.0));
    let mut out: Vec<(f64, f64)> = Vec::with_capacity(parts.len());
    for (a, b) in parts {
        match out.last_mut() {
            Some(last) if a <= last.1 => last.1 = last.1.max(b),
            _ => out.push((a, b)),
        }
    }
    out
}

/// Largest |σ| on the path between arc lengths `s0` ≤ `s1` [m], across-web
/// peak included [C/m²] (`ChargeProfile::peak_between`; a part of zero
/// length, where a box only touches the span, takes |σc| there).
fn part_peak_sigma(charge: &ChargeProfile, s0: f64, s1: f64) -> f64 {
    if s1 > s0 {
        charge.peak_between(s0, s1)
    } else {
        charge.sigma_c(s0).abs() * charge.across.max_abs()
    }
}

/// The `InZones` note, when there are zones.
fn in_zones(zones: Vec<usize>) -> Vec<FindingNote> {
    if zones.is_empty() {
        Vec::new()
    } else {
        vec![FindingNote::InZones(zones)]
    }
}

/// Distance between two axis-aligned boxes (0 when they overlap) [m].
fn box_distance(a: ([f64; 3], [f64; 3]), b: ([f64; 3], [f64; 3])) -> f64 {
    (0..3)
        .map(|k| {
            let gap = (b.0[k] - a.1[k]).max(a.0[k] - b.1[k]).max(0.0);
            gap * gap
        })
        .sum::<f64>()
        .sqrt()
}

fn sorted_contributions(f: &PointField) -> Vec<SpanContribution> {
    let mag = |c: &SpanContribution| (c.e[0] * c.e[0] + c.e[1] * c.e[1] + c.e[2] * c.e[2]).sqrt();
    let mut out = f.contributions.clone();
    out.sort_by(|a, b| mag(b).total_cmp(&mag(a)));
    out
}
