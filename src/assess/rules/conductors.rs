//! The checks of conductors (assessment stage; formulas and sources in the
//! parent module `assess`): isolated rollers and `conductors:` entries
//! against the 10 pF earthing rule and their spark energy against the
//! zone's MIE, people of `conductors:` under the operator rules, insulating
//! rollers' chargeable area in zones 0 and 1, and gap discharges where the
//! web leaves a grounded roller. Where the scene has no conductors' solve,
//! the checks that need it give no finding and say so as an assumption.

use super::{Found, Run, box_distance, in_zones};
use crate::assess::finding::{Assumption, FindingNote, GapBreakdown, SolvedConductor, Subject};
use crate::assess::gap::{first_breakdown_gap, lowest_breakdown};
use crate::assess::{
    Check, NEAR_ZONE, ROLLER_OVERHANG, Rule, Subjects, ThresholdProfile, roller_capacitance,
};
use crate::field::ConductorResult;
use crate::model::{ConductorEarthing, ConductorKind, Earthing, Line, NodeKind, Roller};

/// The conductors' results of the scene, indexed by the line's rollers and
/// `conductors:` entries.
pub(in crate::assess) struct Solved<'a> {
    results: &'a [ConductorResult],
    /// `line.rollers[i]` → index into `results` (conducting rollers only).
    rollers: Vec<Option<usize>>,
    /// `line.conductors[i]` → index into `results`.
    conductors: Vec<Option<usize>>,
}

impl<'a> Solved<'a> {
    /// Matches the results to the line: conducting rollers first in line
    /// order, then `line.conductors` (the solve's order), each checked by
    /// its id.
    pub(in crate::assess) fn new(line: &Line, results: &'a [ConductorResult]) -> Self {
        let mut next = 0usize;
        let mut take = |id: &str| {
            let k = next;
            next += 1;
            results.get(k).filter(|r| r.id == id).map(|_| k)
        };
        let rollers = line
            .rollers
            .iter()
            .map(|r| if r.is_conductor() { take(&r.id) } else { None })
            .collect();
        let conductors = line.conductors.iter().map(|c| take(&c.id)).collect();
        Solved {
            results,
            rollers,
            conductors,
        }
    }

    fn roller(&self, i: usize) -> Option<&'a ConductorResult> {
        self.rollers
            .get(i)
            .copied()
            .flatten()
            .map(|k| &self.results[k])
    }

    fn conductor(&self, i: usize) -> Option<&'a ConductorResult> {
        self.conductors
            .get(i)
            .copied()
            .flatten()
            .map(|k| &self.results[k])
    }
}

/// An isolated conductor's solved values as a note's data (`None` for a
/// grounded one).
fn solved_note(
    r: &ConductorResult,
    earthing: Option<&ConductorEarthing>,
) -> Option<SolvedConductor> {
    let capacitance = r.capacitance?;
    let (lumped, lumped_assumed) = match earthing {
        Some(ConductorEarthing::Isolated {
            capacitance_to_ground,
            capacitance_defaulted,
            ..
        }) => (*capacitance_to_ground, *capacitance_defaulted),
        _ => (None, false),
    };
    Some(SolvedConductor {
        capacitance,
        potential: r.potential,
        lumped,
        lumped_assumed,
        panels: r.panels,
    })
}

/// The bounding box of a roller: its side-view circle, and the web width
/// plus [`ROLLER_OVERHANG`] across [m].
fn roller_box(line: &Line, roller: &Roller) -> ([f64; 3], [f64; 3]) {
    let half_len = (line.web.width + ROLLER_OVERHANG) / 2.0;
    (
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
    )
}

/// One isolated subject of the conductor checks: what it is, its bounding
/// box and its solved values.
struct Isolated<'a> {
    subject: Subject,
    bounds: ([f64; 3], [f64; 3]),
    result: Option<&'a ConductorResult>,
    earthing: Option<&'a ConductorEarthing>,
    /// The roller, for the analytic capacitance.
    roller: Option<&'a Roller>,
}

impl<'a> Run<'a> {
    /// Matching zones within [`NEAR_ZONE`] of a box, as (zone, distance);
    /// `Some(empty)` when the rule is not zone-bound, `None` when it is and
    /// no zone is near.
    fn near_zones(
        &mut self,
        rule: &Rule,
        bounds: ([f64; 3], [f64; 3]),
    ) -> Option<Vec<(usize, f64)>> {
        if !rule.applies.in_zone {
            return Some(Vec::new());
        }
        self.assume(Assumption::NearZone);
        let near: Vec<(usize, f64)> = self
            .line
            .zones
            .iter()
            .enumerate()
            .filter(|(_, z)| rule.applies.zones.matches(z))
            .map(|(k, z)| (k, box_distance(bounds, (z.min, z.max))))
            .filter(|(_, d)| *d <= NEAR_ZONE)
            .collect();
        (!near.is_empty()).then_some(near)
    }

    /// The isolated subjects of a conductor rule: isolated rollers
    /// (`rollers:`), or isolated `conductors:` entries (`conductors:`),
    /// people included only when `people` is set.
    fn isolated_subjects(&self, rule: &Rule, people: bool) -> Vec<Isolated<'a>> {
        let line: &'a Line = self.line;
        let solved = self.solved.as_ref();
        match rule.applies.subjects {
            Subjects::Rollers => line
                .rollers
                .iter()
                .enumerate()
                .filter(|(_, r)| r.earthing == Earthing::Isolated)
                .map(|(i, r)| Isolated {
                    subject: Subject::Roller(i),
                    bounds: roller_box(line, r),
                    result: solved.and_then(|s| s.roller(i)),
                    earthing: None,
                    roller: Some(r),
                })
                .collect(),
            Subjects::Conductors => line
                .conductors
                .iter()
                .enumerate()
                .filter(|(_, c)| !c.earthing.is_grounded())
                .filter(|(_, c)| people || c.kind != ConductorKind::Person)
                .map(|(i, c)| Isolated {
                    subject: Subject::Conductor(i),
                    bounds: c.shape.bounds(),
                    result: solved.and_then(|s| s.conductor(i)),
                    earthing: Some(&c.earthing),
                    roller: None,
                })
                .collect(),
            _ => Vec::new(),
        }
    }

    /// `isolated_conductor`: the capacitance to ground of each isolated
    /// roller or `conductors:` entry (people excluded) in or near a
    /// matching zone; solved when the scene has conductors, else the
    /// analytic cylinder over a plane for rollers and no finding for other
    /// conductors.
    pub(super) fn isolated(&mut self, profile: &ThresholdProfile, rule: &Rule) {
        for s in self.isolated_subjects(rule, false) {
            let Some(near) = self.near_zones(rule, s.bounds) else {
                continue;
            };
            let near_note = move || {
                if near.is_empty() {
                    Vec::new()
                } else {
                    vec![FindingNote::NearZones(near)]
                }
            };
            let analytic = s.roller.map(|r| roller_capacitance(r, self.line));
            let solved = s.result.and_then(|r| solved_note(r, s.earthing));
            let (value, notes): (f64, Vec<FindingNote>) = match (solved, analytic) {
                (Some(sc), _) => {
                    self.assume(Assumption::ConductorsSolved);
                    let mut notes = near_note();
                    notes.push(FindingNote::Solved(sc));
                    notes.extend(analytic.map(FindingNote::RollerAnalytic));
                    (sc.capacitance, notes)
                }
                (None, Some(c)) => {
                    self.assume(Assumption::RollerCapacitance);
                    if self.solved.is_none() {
                        self.assume(Assumption::ConductorsNotSolved);
                    }
                    let mut notes = near_note();
                    notes.push(FindingNote::Roller(c));
                    (c.capacitance, notes)
                }
                (None, None) => {
                    self.assume(Assumption::ConductorsNotSolved);
                    continue;
                }
            };
            self.push(
                profile,
                rule,
                Found {
                    subject: s.subject,
                    value,
                    warn: rule.warn,
                    fail: rule.fail,
                    notes: || notes,
                    contributions: Vec::new,
                },
            );
        }
    }

    /// `conductor_spark`: W = ½CV² of each isolated roller or `conductors:`
    /// entry (people included) in or near a matching zone, from the solve;
    /// with `fail: zone_mie` the lowest MIE of those zones.
    pub(super) fn conductor_spark(&mut self, profile: &ThresholdProfile, rule: &Rule) {
        for s in self.isolated_subjects(rule, true) {
            let Some(near) = self.near_zones(rule, s.bounds) else {
                continue;
            };
            let Some((energy, sc)) = s
                .result
                .and_then(|r| Some((r.spark_energy?, solved_note(r, s.earthing)?)))
            else {
                self.assume(Assumption::ConductorsNotSolved);
                continue;
            };
            self.assume(Assumption::ConductorsSolved);
            let zs = &self.line.zones;
            let mie = if rule.fail_is_zone_mie {
                near.iter()
                    .map(|&(z, _)| z)
                    .min_by(|&a, &b| zs[a].mie.total_cmp(&zs[b].mie))
                    .map(|z| (z, zs[z].mie))
            } else {
                None
            };
            if rule.fail_is_zone_mie && mie.is_none() {
                continue;
            }
            let person = matches!(s.subject, Subject::Conductor(i)
                if self.line.conductors[i].kind == ConductorKind::Person);
            self.push(
                profile,
                rule,
                Found {
                    subject: s.subject,
                    value: energy,
                    warn: rule.warn,
                    fail: mie.map(|m| m.1).or(rule.fail),
                    notes: || {
                        let mut notes = Vec::new();
                        if person {
                            notes.push(FindingNote::Person);
                        }
                        notes.push(FindingNote::Solved(sc));
                        if let Some((zone, mie)) = mie {
                            notes.push(FindingNote::FailAtZoneMie { zone, mie });
                        }
                        if !near.is_empty() {
                            notes.push(FindingNote::NearZones(near));
                        }
                        notes
                    },
                    contributions: Vec::new,
                },
            );
        }
    }

    /// `body_voltage` and `spark_energy` on the people of `conductors:`
    /// (rules not bound to a zone: a person in or near a zone is compared
    /// with its MIE by `conductor_spark`): |V| and ½CV² from the solve; an
    /// earthed person passes with 0.
    pub(super) fn people(&mut self, profile: &ThresholdProfile, rule: &Rule) {
        if rule.applies.in_zone || rule.fail_is_zone_mie {
            return;
        }
        let line: &'a Line = self.line;
        for (i, c) in line.conductors.iter().enumerate() {
            if c.kind != ConductorKind::Person {
                continue;
            }
            let Some(r) = self.solved.as_ref().and_then(|s| s.conductor(i)) else {
                self.assume(Assumption::ConductorsNotSolved);
                continue;
            };
            self.assume(Assumption::ConductorsSolved);
            let solved = solved_note(r, Some(&c.earthing));
            let value = match (rule.check, solved) {
                (_, None) => 0.0,
                (Check::BodyVoltage, Some(_)) => r.potential.abs(),
                (_, Some(_)) => r.spark_energy.unwrap_or(0.0),
            };
            self.push(
                profile,
                rule,
                Found {
                    subject: Subject::Conductor(i),
                    value,
                    warn: rule.warn,
                    fail: rule.fail,
                    notes: || {
                        vec![
                            FindingNote::Person,
                            solved.map_or(FindingNote::Earthed, FindingNote::Solved),
                        ]
                    },
                    contributions: Vec::new,
                },
            );
        }
    }

    /// `insulating_surface`: the chargeable area 2πrL of each insulating
    /// roller in or near a matching zone.
    pub(super) fn insulating(&mut self, profile: &ThresholdProfile, rule: &Rule) {
        let line: &'a Line = self.line;
        for (i, roller) in line.rollers.iter().enumerate() {
            if roller.earthing != Earthing::Insulating {
                continue;
            }
            let Some(near) = self.near_zones(rule, roller_box(line, roller)) else {
                continue;
            };
            self.assume(Assumption::InsulatingArea);
            let (radius, length) = (roller.radius, roller.length);
            self.push(
                profile,
                rule,
                Found {
                    subject: Subject::Roller(i),
                    value: 2.0 * std::f64::consts::PI * radius * length,
                    warn: rule.warn,
                    fail: rule.fail,
                    notes: || {
                        let mut notes = Vec::new();
                        if !near.is_empty() {
                            notes.push(FindingNote::NearZones(near));
                        }
                        notes.push(FindingNote::InsulatingArea { radius, length });
                        notes
                    },
                    contributions: Vec::new,
                },
            );
        }
    }

    /// `gap_discharge`: |σ| where each span leaves a grounded roller against
    /// the lowest density that breaks the opening gap down. Checked only
    /// with the conductors' solve in the scene (the check itself uses none
    /// of its results; see the parent module).
    pub(super) fn gap_discharge(&mut self, profile: &ThresholdProfile, rule: &Rule) {
        let line: &'a Line = self.line;
        let leaves_grounded = |span: &crate::model::Span| {
            matches!(line.path.nodes[span.from_node].kind,
                NodeKind::Roller { roller, .. } if line.rollers[roller].earthing == Earthing::Grounded)
        };
        if !line.path.spans.iter().any(leaves_grounded) {
            return;
        }
        if self.solved.is_none() {
            self.assume(Assumption::GapNotChecked);
            return;
        }
        let (t, er) = (line.web.thickness, line.web.relative_permittivity);
        let Some(lowest) = lowest_breakdown(t, er) else {
            return;
        };
        self.assume(Assumption::GapVoltage);
        for (i, span) in line.path.spans.iter().enumerate() {
            if !leaves_grounded(span) {
                continue;
            }
            let Some(zones) = self.span_zones(rule, i).map(|z| z.zones.clone()) else {
                continue;
            };
            let (start, _) = self.charge.ends_between(span.s_start, span.s_end);
            let sigma = start.abs() * self.charge.across.max_abs();
            self.push(
                profile,
                rule,
                Found {
                    subject: Subject::Span(i),
                    value: sigma,
                    warn: None,
                    fail: Some(lowest.sigma),
                    notes: || {
                        let mut notes = vec![FindingNote::Gap(GapBreakdown {
                            thickness: t,
                            eps_r: er,
                            lowest_at: lowest.gap,
                            first_gap: first_breakdown_gap(sigma, t, er),
                        })];
                        notes.extend(in_zones(zones));
                        notes
                    },
                    contributions: Vec::new,
                },
            );
        }
    }
}
