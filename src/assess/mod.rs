//! # Assessment against threshold profiles
//!
//! Fourth stage of the pipeline: `(Line, ChargeProfile, FieldMap) →
//! Assessment`. Each rule of each threshold profile in force is applied to
//! the subjects it concerns (spans, points of a kind, rollers, zones) and
//! gives a [`Finding`]: the value, the limit, the margin (value ÷ limit), a
//! verdict, and the published source of the limit with its confidence.
//!
//! ## Verdict and margin
//!
//! $$ \text{verdict} = \begin{cases} \text{fail} & x \ge x_\text{fail} \\
//!    \text{warn} & x \ge x_\text{warn} \\ \text{pass} & \text{otherwise} \end{cases},
//!    \qquad \text{limit} = x_\text{fail} \text{ if given, else } x_\text{warn},
//!    \qquad \text{margin} = x / \text{limit}. $$
//!
//! Every applicable rule × subject gives a finding, passes included. Findings
//! are sorted by verdict (fail first), then by margin (largest first); the
//! assessment's verdict is the worst one (pass when there are none).
//!
//! ## The checks
//!
//! - **web_charge** — the largest |σ| on a span,
//!   $x = \max_k |σ_c(s_k)| \cdot \max_y |f(y)|$ over the charge pieces k
//!   that overlap the span, $s_k$ the start of the piece on the span:
//!   relaxation $σ_c ∝ e^{-s/(vτ)}$ only lowers |σc| along a piece, so its
//!   start is its largest value. Subjects: every span, or the spans whose
//!   charged rectangle touches the box of a matching zone
//!   (`Zone::touches_span`).
//! - **field_at_points** — $x = |\mathbf E|$ at points of the kind
//!   (optionally only inside a matching zone).
//! - **body_voltage** — $x = |V|$ at operator points: the operator is taken
//!   to be insulated from earth and charged to the potential of the position.
//! - **spark_energy** — $x = W = \tfrac12 C V^2$, C the operator's
//!   capacitance or [`DEFAULT_BODY_CAPACITANCE`] = 150 pF (IEC 61000-4-2
//!   body model). With `fail: zone_mie` the failure limit is the lowest MIE
//!   of the matching zones containing the operator; an operator in no
//!   matching zone gets no finding from that rule.
//! - **electronics_separation** — for each electronics point and each span at
//!   distance $d$ (point to charged rectangle, [`distance_to_span`]) below
//!   the far distance: $x = |V_\text{web}|$, the largest |V| at
//!   [`SEPARATION_SAMPLES`] places on the span around its point nearest to
//!   the item (the nearest point and its neighbours ±max(d, 10 mm) along and
//!   across the span, clamped to the span), each moved
//!   [`WEB_OFFSET`] = 10 µm off the web along the span normal on the item's
//!   side (V is continuous through the sheet; the offset only keeps the
//!   evaluation point off the charged surface). The allowed potential is
//!   $V_\text{near}$ for $d < d_\text{near}$, $V_\text{far}$ for
//!   $d_\text{near} \le d < d_\text{far}$; no limit beyond $d_\text{far}$.
//!   Verdict fail if $x \ge$ the allowed potential (margin = x ÷ allowed).
//!   One finding per point, for its worst span (largest margin); a point
//!   farther than $d_\text{far}$ from every span gets none.
//! - **isolated_conductor** — rollers with `earthing: isolated` (insulating
//!   rollers are not conductors and are skipped), inside or within
//!   [`NEAR_ZONE`] = 0.5 m of a matching zone's box (the roller's bounding
//!   box against the zone's). The capacitance of a cylinder of radius r and
//!   length L over a grounded plane, its axis at height h,
//!   $$ C = \frac{2π ε_0 L}{\operatorname{arcosh}(h/r)}, \qquad L = w + 0.2\ \text{m}, $$
//!   with h above the ground plane; without one, h = the axis height above
//!   z = 0, or 1 m (at least 2r) where that is not above r.
//! - **propagating_brush** — $x = U_b = t \cdot E_{b,\text{web}}$ (thickness
//!   × dielectric strength) for spans in a matching zone, one finding per
//!   span. A propagating brush discharge also needs a bipolar double layer
//!   above 2.5e-4 C/m² per face and a strong charging process, which the
//!   model cannot see, so this is a necessary condition only. Without
//!   `breakdown_strength` one finding on the web as a whole (when the rule
//!   has subjects) with verdict **warn**, value 0 and margin 0 (a Finding
//!   never carries NaN): the hazard cannot be ruled out.
//!
//! | symbol | meaning | unit |
//! | --- | --- | --- |
//! | σc, f | centreline density, across-web shape | C/m², 1 |
//! | **E**, V | field and potential at a point (relative to ground) | V/m, V |
//! | C, W | capacitance, stored energy | F, J |
//! | r, L, h | roller radius, length, axis height | m |
//! | w, t | web width, thickness | m |
//! | E_b,web | dielectric strength of the web | V/m |
//! | d | distance from an electronics item to a span | m |
//!
//! Point findings carry the point's span contributions, largest |E| first.
//!
//! ## Reference
//! - W = ½CV²; Gauss's law; capacitance of a cylinder parallel to a grounded
//!   plane (W. R. Smythe, *Static and Dynamic Electricity*, 3rd ed., §4.13,
//!   or any EM text: image line charge) — derived.
//! - IEC 61000-4-2: 150 pF body model.
//! - TRBS 2153 8.3.5: earth conductors above 10 pF.
//! - TRGS 727; IEC TS 60079-32-1: conditions for propagating brush discharges.
//! - ANSI/ESD S20.20-2021, IEC 61340-5-1: separation of insulators from
//!   ESD-sensitive items.
//! - The limits themselves: the profiles under `profiles/thresholds/`.

pub mod eliminators;
pub mod profile;

pub use profile::{
    Applies, Check, Confidence, Rule, Separation, Subjects, ThresholdProfile, ZoneFilter,
    load_profile, parse_profile, shipped, with_air_limit,
};

use crate::charge::ChargeProfile;
use crate::field::{FieldAt, FieldError, FieldMap, PointField, SpanContribution};
use crate::model::geometry::distance_to_span;
use crate::model::{Earthing, Line, Point, Roller, Span, Zone};
use crate::units::{Dim, EPS0, Farads, Joules, Meters, Volts, format_quantity};
use std::fmt;

/// Outcome of one rule for one subject; ordered pass < warn < fail.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum Verdict {
    /// Below every limit.
    Pass,
    /// At or above the warning limit, below the failure limit.
    Warn,
    /// At or above the failure limit.
    Fail,
}

impl Verdict {
    /// `pass`, `warn` or `fail`.
    pub fn text(self) -> &'static str {
        match self {
            Verdict::Pass => "pass",
            Verdict::Warn => "warn",
            Verdict::Fail => "fail",
        }
    }
}

impl fmt::Display for Verdict {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.text())
    }
}

/// What a finding is about.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SubjectKind {
    /// A span of the web.
    Span,
    /// A place of interest.
    Point,
    /// A roller.
    Roller,
    /// The web as a whole (material properties).
    Web,
    /// A static eliminator.
    Eliminator,
}

/// One rule applied to one subject.
#[derive(Debug, Clone, PartialEq)]
pub struct Finding {
    /// Name of the profile the rule belongs to.
    pub profile: String,
    /// Rule id.
    pub rule: String,
    /// What the rule checks, in words.
    pub check: String,
    /// What kind of subject.
    pub subject_kind: SubjectKind,
    /// The subject's label (`S6 (R5-R6)`, `OP1`, `R6`).
    pub subject: String,
    /// The value found, SI [unit of `dim`].
    pub value: f64,
    /// Dimension of value and limits, for formatting.
    pub dim: Dim,
    /// The governing limit: the failure limit if the rule has one, else the
    /// warning limit, SI.
    pub limit: f64,
    /// Warning limit, SI.
    pub warn: Option<f64>,
    /// Failure limit, SI.
    pub fail: Option<f64>,
    /// value ÷ limit [1]: above 1 the governing limit is exceeded.
    pub margin: f64,
    /// The verdict.
    pub verdict: Verdict,
    /// Where the limit comes from.
    pub source: String,
    /// How sure the source is.
    pub confidence: Confidence,
    /// Context in words (zone, distance, assumption used).
    pub note: String,
    /// For point findings: each span's share of the field and potential
    /// there, largest |E| first.
    pub contributions: Vec<SpanContribution>,
}

/// All findings of an assessment, worst first.
#[derive(Debug, Clone, PartialEq)]
pub struct Assessment {
    /// Findings sorted by verdict (fail first), then by margin (largest first).
    pub findings: Vec<Finding>,
    /// The worst verdict.
    pub verdict: Verdict,
    /// Assumptions the rules used (e.g. the default body capacitance).
    pub assumptions: Vec<String>,
}

/// Body capacitance used where an operator has none [F]: the 150 pF human
/// body model of IEC 61000-4-2 (FACTS.md: people are 100–300 pF, NFPA 77).
pub const DEFAULT_BODY_CAPACITANCE: Farads = 150e-12;

/// "Near" a zone for isolated rollers: within this distance of its box [m]
/// (an assumption of this program, stated in every assessment that uses it).
pub const NEAR_ZONE: Meters = 0.5;

/// Length a roller is taken to extend beyond the web, both ends together [m].
pub const ROLLER_OVERHANG: Meters = 0.2;

/// Axis height used for a roller's capacitance when no ground plane is given
/// and the roller's axis is not above z = 0 by more than its radius [m].
pub const FALLBACK_ROLLER_HEIGHT: Meters = 1.0;

/// Offset of the web-potential samples from the web surface [m].
pub const WEB_OFFSET: Meters = 1e-5;

/// Number of web-potential samples per span for electronics_separation.
pub const SEPARATION_SAMPLES: usize = 9;

/// Smallest step between web-potential samples [m].
const SAMPLE_STEP: Meters = 0.01;

/// Assumption texts, shown in `Assessment::assumptions` when a rule uses them.
pub mod assumption {
    /// Operators and body voltage.
    pub const INSULATED_OPERATOR: &str = "operators are assumed insulated from earth (insulating floor or footwear) and charged to the potential of their position";
    /// The default body capacitance.
    pub const BODY_CAPACITANCE: &str =
        "operator capacitance 150 pF (IEC 61000-4-2 body model) where not given";
    /// Largest σ on a span.
    pub const WEB_CHARGE: &str = "the largest |σ| on a span is taken at the start of each charge piece on it (relaxation only lowers it), times the largest |f(y)| across the web";
    /// Roller capacitance.
    pub const ROLLER_CAPACITANCE: &str = "an isolated roller's capacitance is that of a cylinder over a grounded plane, C = 2πε0·L/arcosh(h/r), L = web width + 0.2 m; without a ground plane h is the axis height above z = 0 (1 m where that is not above the radius)";
    /// Near a zone.
    pub const NEAR: &str = "an isolated roller counts as near a zone when its bounding box is within 0.5 m of the zone's box";
    /// Web potential near electronics.
    pub const WEB_POTENTIAL: &str = "the web potential near an electronics item is the largest |V| at 9 places on each span around its point nearest to the item, 10 µm off the web";
}

/// Verdict of a value against optional limits: fail at or above `fail`,
/// warn at or above `warn`, else pass.
pub fn verdict_for(value: f64, warn: Option<f64>, fail: Option<f64>) -> Verdict {
    if fail.is_some_and(|f| value >= f) {
        Verdict::Fail
    } else if warn.is_some_and(|w| value >= w) {
        Verdict::Warn
    } else {
        Verdict::Pass
    }
}

/// Energy stored on a capacitance C at potential V: W = ½CV² [J].
pub fn stored_energy(capacitance: Farads, voltage: Volts) -> Joules {
    0.5 * capacitance * voltage * voltage
}

/// Capacitance of a cylinder of radius `r` and length `length` whose axis is
/// at height `h` above a grounded plane, C = 2πε0·L / arcosh(h/r) [F]; needs
/// h > r (NaN otherwise).
pub fn cylinder_over_plane_capacitance(r: Meters, length: Meters, h: Meters) -> Farads {
    2.0 * std::f64::consts::PI * EPS0 * length / (h / r).acosh()
}

/// Largest |σ| on a span [C/m²] (see the `web_charge` check).
pub fn span_peak_sigma(span: &Span, charge: &ChargeProfile) -> f64 {
    let peak = charge
        .pieces_between(span.s_start, span.s_end)
        .iter()
        .map(|(_, _, a)| a.abs())
        .fold(0.0, f64::max);
    peak * charge.across.max_abs()
}

/// The capacitance estimate of a roller and the axis height used, with a
/// note on how h was chosen: `(C [F], L [m], h [m], note)`.
pub fn roller_capacitance(roller: &Roller, line: &Line) -> (Farads, Meters, Meters, String) {
    let r = roller.radius;
    let length = line.web.width + ROLLER_OVERHANG;
    let fallback = FALLBACK_ROLLER_HEIGHT.max(2.0 * r);
    let (h, how) = match line.ground_plane {
        Some(g) if roller.center[1] - g > r => (roller.center[1] - g, "above the ground plane"),
        Some(_) => (
            fallback,
            "assumed: the roller reaches the ground plane, so its height above it was replaced by",
        ),
        None if roller.center[1] > r => (roller.center[1], "above z = 0 (no ground plane given)"),
        None => (
            fallback,
            "assumed: no ground plane and the axis is not above z = 0, so the height is",
        ),
    };
    let c = cylinder_over_plane_capacitance(r, length, h);
    let note = format!(
        "r = {}, L = {}, h = {} {how}; C = 2πε0·L/arcosh(h/r)",
        format_quantity(r, Dim::Length),
        format_quantity(length, Dim::Length),
        format_quantity(h, Dim::Length),
    );
    (c, length, h, note)
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

/// Collects findings and assumptions while the rules are applied.
struct Run<'a> {
    line: &'a Line,
    charge: &'a ChargeProfile,
    model: &'a dyn FieldAt,
    fields: &'a [PointField],
    findings: Vec<Finding>,
    assumptions: Vec<String>,
    /// Only count failures and the worst margin (the planner's inner loop):
    /// no finding, note or label is built.
    lean: bool,
    lean_fails: usize,
    lean_worst: f64,
}

/// One finding's variable parts.
struct Subject {
    kind: SubjectKind,
    label: String,
    value: f64,
    warn: Option<f64>,
    fail: Option<f64>,
    note: String,
    contributions: Vec<SpanContribution>,
}

impl<'a> Run<'a> {
    fn new(
        line: &'a Line,
        charge: &'a ChargeProfile,
        model: &'a dyn FieldAt,
        fields: &'a [PointField],
        lean: bool,
    ) -> Self {
        Run {
            line,
            charge,
            model,
            fields,
            findings: Vec::new(),
            assumptions: Vec::new(),
            lean,
            lean_fails: 0,
            lean_worst: 0.0,
        }
    }

    /// Applies every rule of every profile.
    fn apply_all(mut self, profiles: &[ThresholdProfile]) -> Result<Self, FieldError> {
        for profile in profiles {
            for rule in &profile.rules {
                self.apply(profile, rule)?;
            }
        }
        Ok(self)
    }

    fn assume(&mut self, text: &str) {
        if self.lean {
            return;
        }
        if !self.assumptions.iter().any(|a| a == text) {
            self.assumptions.push(text.to_string());
        }
    }

    fn push(&mut self, profile: &ThresholdProfile, rule: &Rule, s: Subject) {
        let verdict = verdict_for(s.value, s.warn, s.fail);
        let limit = s.fail.or(s.warn).unwrap_or(f64::INFINITY);
        let margin = if limit.is_finite() && limit > 0.0 {
            s.value / limit
        } else {
            0.0
        };
        if self.lean {
            self.lean_fails += usize::from(verdict == Verdict::Fail);
            self.lean_worst = self.lean_worst.max(margin);
            return;
        }
        let note = match &rule.note {
            Some(n) if s.note.is_empty() => n.clone(),
            Some(n) => format!("{}; {n}", s.note),
            None => s.note,
        };
        self.findings.push(Finding {
            profile: profile.name.clone(),
            rule: rule.id.clone(),
            check: rule.what.clone(),
            subject_kind: s.kind,
            subject: s.label,
            value: s.value,
            dim: rule.dim,
            limit,
            warn: s.warn,
            fail: s.fail,
            margin,
            verdict,
            source: rule.source.clone(),
            confidence: rule.confidence,
            note,
            contributions: s.contributions,
        });
    }

    /// Matching zones the span touches; `None` when the rule wants zones and
    /// there is none.
    fn span_zones(&self, rule: &Rule, span: &Span) -> Option<Vec<&'a Zone>> {
        if !rule.applies.in_zone {
            return Some(Vec::new());
        }
        let zones: Vec<&Zone> = self
            .line
            .zones
            .iter()
            .filter(|z| rule.applies.zones.matches(z) && z.touches_span(span, self.line.web.width))
            .collect();
        (!zones.is_empty()).then_some(zones)
    }

    /// Points of the rule's kind with their field, and the matching zones
    /// containing each (all points when the rule is not zone-bound).
    fn points(&self, rule: &Rule) -> Vec<(&'a Point, &'a PointField, Vec<&'a Zone>)> {
        let Subjects::Points(kind) = rule.applies.subjects else {
            return Vec::new();
        };
        let mut out = Vec::new();
        for (p, f) in self.line.points.iter().zip(self.fields) {
            if kind.is_some_and(|k| k != p.kind) {
                continue;
            }
            let zones: Vec<&Zone> = self
                .line
                .zones
                .iter()
                .filter(|z| rule.applies.zones.matches(z) && z.contains(p.at))
                .collect();
            if rule.applies.in_zone && zones.is_empty() {
                continue;
            }
            out.push((
                p,
                f,
                if rule.applies.in_zone {
                    zones
                } else {
                    Vec::new()
                },
            ));
        }
        out
    }

    fn apply(&mut self, profile: &ThresholdProfile, rule: &Rule) -> Result<(), FieldError> {
        match rule.check {
            Check::WebCharge => self.web_charge(profile, rule),
            Check::FieldAtPoints | Check::BodyVoltage | Check::SparkEnergy => {
                self.point_values(profile, rule)
            }
            Check::ElectronicsSeparation => self.separation(profile, rule)?,
            Check::IsolatedConductor => self.isolated(profile, rule),
            Check::PropagatingBrush => self.propagating_brush(profile, rule),
        }
        Ok(())
    }

    fn web_charge(&mut self, profile: &ThresholdProfile, rule: &Rule) {
        self.assume(assumption::WEB_CHARGE);
        for span in &self.line.path.spans {
            let Some(zones) = self.span_zones(rule, span) else {
                continue;
            };
            let value = span_peak_sigma(span, self.charge);
            let note = if zones.is_empty() || self.lean {
                String::new()
            } else {
                format!("in {}", zone_labels(&zones))
            };
            self.push(
                profile,
                rule,
                Subject {
                    kind: SubjectKind::Span,
                    label: if self.lean {
                        String::new()
                    } else {
                        span.label()
                    },
                    value,
                    warn: rule.warn,
                    fail: rule.fail,
                    note,
                    contributions: Vec::new(),
                },
            );
        }
    }

    fn point_values(&mut self, profile: &ThresholdProfile, rule: &Rule) {
        if rule.check != Check::FieldAtPoints {
            self.assume(assumption::INSULATED_OPERATOR);
        }
        for (p, f, zones) in self.points(rule) {
            let v = f.v.abs();
            let mut notes = Vec::new();
            let mut fail = rule.fail;
            let value = match rule.check {
                Check::FieldAtPoints => f.e_magnitude(),
                Check::BodyVoltage => v,
                _ => {
                    let c = match p.capacitance {
                        Some(c) => {
                            if !self.lean {
                                notes.push(format!("C = {}", format_quantity(c, Dim::Capacitance)));
                            }
                            c
                        }
                        None => {
                            self.assume(assumption::BODY_CAPACITANCE);
                            notes.push("C = 150 pF (IEC 61000-4-2 body model)".to_string());
                            DEFAULT_BODY_CAPACITANCE
                        }
                    };
                    if !self.lean {
                        notes.push(format!("|V| = {}", format_quantity(v, Dim::Voltage)));
                    }
                    if rule.fail_is_zone_mie {
                        let Some(z) = zones.iter().min_by(|a, b| a.mie.total_cmp(&b.mie)) else {
                            continue;
                        };
                        fail = Some(z.mie);
                        notes.push(if self.lean {
                            String::new()
                        } else {
                            format!(
                                "fail at the MIE of {} = {}",
                                z.label(),
                                format_quantity(z.mie, Dim::Energy)
                            )
                        });
                    }
                    stored_energy(c, v)
                }
            };
            if !zones.is_empty() && !rule.fail_is_zone_mie && !self.lean {
                notes.push(format!("in {}", zone_labels(&zones)));
            }
            self.push(
                profile,
                rule,
                Subject {
                    kind: SubjectKind::Point,
                    label: if self.lean {
                        String::new()
                    } else {
                        p.id.clone()
                    },
                    value,
                    warn: rule.warn,
                    fail,
                    note: notes.join("; "),
                    contributions: sorted_contributions(f),
                },
            );
        }
    }

    fn separation(&mut self, profile: &ThresholdProfile, rule: &Rule) -> Result<(), FieldError> {
        let (Some(near), Some(far)) = (rule.near, rule.far) else {
            return Ok(());
        };
        self.assume(assumption::WEB_POTENTIAL);
        for (p, f, zones) in self.points(rule) {
            // (margin, |V_web|, allowed, span, d)
            let mut worst: Option<(f64, f64, f64, &Span, f64)> = None;
            for span in &self.line.path.spans {
                let d = distance_to_span(span, self.line.web.width, p.at);
                if d >= far.distance {
                    continue;
                }
                let allowed = if d < near.distance {
                    near.voltage
                } else {
                    far.voltage
                };
                let v = self.web_potential(span, p.at, d)?;
                let margin = v / allowed;
                if worst.as_ref().is_none_or(|w| margin > w.0) {
                    worst = Some((margin, v, allowed, span, d));
                }
            }
            let Some((_, v, allowed, span, d)) = worst else {
                continue;
            };
            let label = if self.lean {
                String::new()
            } else {
                span.label()
            };
            let mut note = if self.lean {
                String::new()
            } else {
                format!(
                    "span {label} at {}: allowed {} within {}",
                    format_quantity(d, Dim::Length),
                    format_quantity(allowed, Dim::Voltage),
                    format_quantity(
                        if d < near.distance {
                            near.distance
                        } else {
                            far.distance
                        },
                        Dim::Length
                    )
                )
            };
            if !zones.is_empty() && !self.lean {
                note.push_str(&format!("; in {}", zone_labels(&zones)));
            }
            self.push(
                profile,
                rule,
                Subject {
                    kind: SubjectKind::Point,
                    label: if self.lean {
                        String::new()
                    } else {
                        p.id.clone()
                    },
                    value: v,
                    warn: None,
                    fail: Some(allowed),
                    note,
                    contributions: sorted_contributions(f),
                },
            );
        }
        Ok(())
    }

    /// Largest |V| on the span's surface around its point nearest to `at`.
    fn web_potential(&self, span: &Span, at: [f64; 3], d: f64) -> Result<f64, FieldError> {
        let dir = span.direction();
        let half = self.line.web.width / 2.0;
        let rel = [at[0] - span.start[0], at[2] - span.start[1]];
        let u0 = (rel[0] * dir[0] + rel[1] * dir[1]).clamp(0.0, span.length);
        let h = -rel[0] * dir[1] + rel[1] * dir[0];
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

    fn isolated(&mut self, profile: &ThresholdProfile, rule: &Rule) {
        let half_len = (self.line.web.width + ROLLER_OVERHANG) / 2.0;
        for roller in &self.line.rollers {
            if roller.earthing != Earthing::Isolated {
                continue;
            }
            let mut zone_note = String::new();
            if rule.applies.in_zone {
                self.assume(assumption::NEAR);
                let bb = (
                    [
                        roller.center[0] - roller.radius,
                        -half_len,
                        roller.center[1] - roller.radius,
                    ],
                    [
                        roller.center[0] + roller.radius,
                        half_len,
                        roller.center[1] + roller.radius,
                    ],
                );
                let near: Vec<(&Zone, f64)> = self
                    .line
                    .zones
                    .iter()
                    .filter(|z| rule.applies.zones.matches(z))
                    .map(|z| (z, box_distance(bb, (z.min, z.max))))
                    .filter(|(_, d)| *d <= NEAR_ZONE)
                    .collect();
                if near.is_empty() {
                    continue;
                }
                let parts: Vec<String> = near
                    .iter()
                    .map(|(z, d)| {
                        if *d == 0.0 {
                            format!("in {}", z.label())
                        } else {
                            format!("{} from {}", format_quantity(*d, Dim::Length), z.label())
                        }
                    })
                    .collect();
                zone_note = parts.join(", ");
            }
            self.assume(assumption::ROLLER_CAPACITANCE);
            let (c, _, _, mut note) = roller_capacitance(roller, self.line);
            if !zone_note.is_empty() {
                note = format!("{zone_note}; {note}");
            }
            self.push(
                profile,
                rule,
                Subject {
                    kind: SubjectKind::Roller,
                    label: if self.lean {
                        String::new()
                    } else {
                        roller.id.clone()
                    },
                    value: c,
                    warn: rule.warn,
                    fail: rule.fail,
                    note,
                    contributions: Vec::new(),
                },
            );
        }
    }

    fn propagating_brush(&mut self, profile: &ThresholdProfile, rule: &Rule) {
        let web = &self.line.web;
        let subjects: Vec<(&Span, Vec<&Zone>)> = self
            .line
            .path
            .spans
            .iter()
            .filter_map(|s| self.span_zones(rule, s).map(|z| (s, z)))
            .collect();
        if subjects.is_empty() {
            return;
        }
        let Some(eb) = web.breakdown_strength else {
            let limit = rule.fail.or(rule.warn);
            self.findings.push(Finding {
                profile: profile.name.clone(),
                rule: rule.id.clone(),
                check: rule.what.clone(),
                subject_kind: SubjectKind::Web,
                subject: "web".to_string(),
                value: 0.0,
                dim: rule.dim,
                limit: limit.unwrap_or(0.0),
                warn: rule.warn,
                fail: rule.fail,
                margin: 0.0,
                verdict: Verdict::Warn,
                source: rule.source.clone(),
                confidence: rule.confidence,
                note: "breakdown_strength not given: cannot rule out propagating brush discharges (value shown as 0)".to_string(),
                contributions: Vec::new(),
            });
            return;
        };
        let ub = web.thickness * eb;
        for (span, zones) in subjects {
            let mut note = if self.lean {
                String::new()
            } else {
                format!(
                    "U_b = {} × {}",
                    format_quantity(web.thickness, Dim::Length),
                    format_quantity(eb, Dim::Field)
                )
            };
            if !zones.is_empty() && !self.lean {
                note.push_str(&format!("; in {}", zone_labels(&zones)));
            }
            self.push(
                profile,
                rule,
                Subject {
                    kind: SubjectKind::Span,
                    label: if self.lean {
                        String::new()
                    } else {
                        span.label()
                    },
                    value: ub,
                    warn: rule.warn,
                    fail: rule.fail,
                    note,
                    contributions: Vec::new(),
                },
            );
        }
    }
}

fn zone_labels(zones: &[&Zone]) -> String {
    zones
        .iter()
        .map(|z| z.label())
        .collect::<Vec<_>>()
        .join(", ")
}

fn sorted_contributions(f: &PointField) -> Vec<SpanContribution> {
    let mag = |c: &SpanContribution| (c.e[0] * c.e[0] + c.e[1] * c.e[1] + c.e[2] * c.e[2]).sqrt();
    let mut out = f.contributions.clone();
    out.sort_by(|a, b| mag(b).total_cmp(&mag(a)));
    out
}

/// Applies every rule of every profile to the line.
///
/// `points` holds the field at `line.points`, in order, computed with
/// contributions (if its length differs, the field is recomputed here from
/// `model`). Pass the profiles through [`with_air_limit`] so that the
/// physical limit of air is always applied.
pub fn assess(
    line: &Line,
    charge: &ChargeProfile,
    model: &dyn FieldAt,
    points: &FieldMap,
    profiles: &[ThresholdProfile],
) -> Result<Assessment, FieldError> {
    let recomputed;
    let fields: &[PointField] = if points.points.len() == line.points.len() {
        &points.points
    } else {
        recomputed = line
            .points
            .iter()
            .map(|p| model.field_at(p.at, true))
            .collect::<Result<Vec<_>, _>>()?;
        &recomputed
    };
    let run = Run::new(line, charge, model, fields, false).apply_all(profiles)?;
    let mut findings = run.findings;
    findings.extend(eliminators::eliminator_findings(line, charge));
    findings.sort_by(|a, b| {
        b.verdict
            .cmp(&a.verdict)
            .then(b.margin.total_cmp(&a.margin))
    });
    let verdict = findings
        .iter()
        .map(|f| f.verdict)
        .max()
        .unwrap_or(Verdict::Pass);
    Ok(Assessment {
        findings,
        verdict,
        assumptions: run.assumptions,
    })
}

/// The planner's objective for a line: the number of failing findings and
/// the worst margin over every finding, exactly as [`assess`] would give
/// them, without building the findings' texts.
pub fn assess_score(
    line: &Line,
    charge: &ChargeProfile,
    model: &dyn FieldAt,
    points: &FieldMap,
    profiles: &[ThresholdProfile],
) -> Result<(usize, f64), FieldError> {
    let run = Run::new(line, charge, model, &points.points, true).apply_all(profiles)?;
    let mut fails = run.lean_fails;
    let mut worst = run.lean_worst;
    for f in eliminators::eliminator_findings_lean(line, charge) {
        fails += usize::from(f.verdict == Verdict::Fail);
        worst = worst.max(f.margin);
    }
    Ok((fails, worst))
}

/// How many findings of an assessment gave each verdict.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct VerdictCounts {
    /// Findings below every limit.
    pub pass: usize,
    /// Findings at or above a warning limit, below the failure limit.
    pub warn: usize,
    /// Findings at or above a failure limit.
    pub fail: usize,
}

impl VerdictCounts {
    /// The counts indexed by `Verdict as usize`: `[pass, warn, fail]`.
    pub fn as_array(self) -> [usize; 3] {
        [self.pass, self.warn, self.fail]
    }
}

impl Assessment {
    /// The number of findings with each verdict.
    pub fn counts(&self) -> VerdictCounts {
        let mut c = VerdictCounts::default();
        for f in &self.findings {
            match f.verdict {
                Verdict::Pass => c.pass += 1,
                Verdict::Warn => c.warn += 1,
                Verdict::Fail => c.fail += 1,
            }
        }
        c
    }
}

#[cfg(test)]
mod counts_tests {
    use super::*;
    use crate::field::{Scene, SolverSettings};

    /// A real assessment of a one-span line (uniform sheet: fast).
    fn assessment() -> Assessment {
        let line = crate::model::parse_line(
            "web: {width: 1 m, thickness: 30 um, relative_permittivity: 2.2, relaxation_time: 1e30 s, speed: 1 m/s}\n\
             path:\n  - point: [0 m, 1 m]\n    id: A\n  - point: [2 m, 1 m]\n    id: B\n\
             charge:\n  - at: start\n    sigma: 5 uC/m^2\n",
        )
        .unwrap();
        let profiles = with_air_limit(Vec::new());
        let scene = Scene::new(&line, SolverSettings::default()).unwrap();
        crate::pipeline::evaluate(&scene, &line, &profiles)
            .unwrap()
            .assessment
    }

    #[test]
    fn counts_each_verdict_once() {
        let mut a = assessment();
        let first = a.findings.first().cloned().expect("the air limit applies");
        a.findings = [Verdict::Fail, Verdict::Warn, Verdict::Pass, Verdict::Warn]
            .into_iter()
            .map(|v| Finding {
                verdict: v,
                ..first.clone()
            })
            .collect();
        let c = a.counts();
        assert_eq!((c.pass, c.warn, c.fail), (1, 2, 1));
        assert_eq!(c.as_array(), [1, 2, 1]);
        a.findings.clear();
        assert_eq!(a.counts(), VerdictCounts::default());
    }

    #[test]
    fn counts_add_up_to_the_findings() {
        let a = assessment();
        let c = a.counts();
        assert_eq!(c.pass + c.warn + c.fail, a.findings.len());
        assert_eq!(c.fail > 0, a.verdict == Verdict::Fail);
    }
}
