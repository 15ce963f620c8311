//! The checked threshold-profile types (reading stage of the assessment,
//! the result of `validate.rs`): a profile is a list of rules, each with its
//! check, the subjects it applies to, its limits in SI units, their source
//! and how sure that source is. An existing `ThresholdProfile` is valid.

use crate::model::{GasGroup, PointKind, Zone};
use crate::units::{Dim, Meters, Volts};
use std::fmt;
use std::sync::Arc;

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
    /// What a field meter would read near the web by an electronics item,
    /// against the separation rule [V at the meter's calibration distance].
    ElectronicsSeparation,
    /// Capacitance of an isolated conductive roller or conductor [F].
    IsolatedConductor,
    /// Breakdown voltage of the web layer (propagating brush) [V].
    PropagatingBrush,
    /// Spark energy ½CV² of an isolated roller or conductor, from the
    /// conductors' solve [J].
    ConductorSpark,
    /// Chargeable surface 2πrL of an insulating roller [m², as a number].
    InsulatingSurface,
    /// Density where the web leaves a grounded roller against the density
    /// that breaks the opening gap down (Paschen's law) [C/m²].
    GapDischarge,
    /// The largest reading a field meter held at its calibration distance
    /// from a span would give, |E_n|·d [V at d].
    MeterReading,
}

impl Check {
    /// Every check, in the order of the documentation.
    pub const ALL: [Check; 11] = [
        Check::WebCharge,
        Check::FieldAtPoints,
        Check::BodyVoltage,
        Check::SparkEnergy,
        Check::ElectronicsSeparation,
        Check::IsolatedConductor,
        Check::PropagatingBrush,
        Check::ConductorSpark,
        Check::InsulatingSurface,
        Check::GapDischarge,
        Check::MeterReading,
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
            Check::ConductorSpark => "conductor_spark",
            Check::InsulatingSurface => "insulating_surface",
            Check::GapDischarge => "gap_discharge",
            Check::MeterReading => "meter_reading",
        }
    }

    /// The dimension of the checked value and of the limits.
    pub fn dim(self) -> Dim {
        match self {
            Check::WebCharge | Check::GapDischarge => Dim::SurfaceChargeDensity,
            Check::FieldAtPoints => Dim::Field,
            Check::BodyVoltage
            | Check::ElectronicsSeparation
            | Check::PropagatingBrush
            | Check::MeterReading => Dim::Voltage,
            Check::SparkEnergy | Check::ConductorSpark => Dim::Energy,
            Check::IsolatedConductor => Dim::Capacitance,
            Check::InsulatingSurface => Dim::Area,
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
    /// Read in a secondary source (a paper, a column or a handbook quoting
    /// the standard), not in the primary text: verify against it.
    Secondary,
    /// Recalled, not confirmed: verify against the current edition.
    FromMemory,
}

impl Confidence {
    /// `confirmed`, `derived`, `common practice`,
    /// `secondary source — verify against the primary`, or
    /// `from memory — verify against the current edition`.
    pub fn text(self) -> &'static str {
        match self {
            Confidence::Confirmed => "confirmed",
            Confidence::Derived => "derived",
            Confidence::CommonPractice => "common practice",
            Confidence::Secondary => "secondary source — verify against the primary",
            Confidence::FromMemory => "from memory — verify against the current edition",
        }
    }

    /// Whether the limit must be verified before it is relied on.
    pub fn needs_verification(self) -> bool {
        matches!(self, Confidence::FromMemory | Confidence::Secondary)
    }

    /// Reads the YAML keyword (`from memory` may carry its `— verify …` tail).
    pub(super) fn parse(text: &str) -> Option<Confidence> {
        let t = text.trim().to_lowercase();
        match t.as_str() {
            "confirmed" => Some(Confidence::Confirmed),
            "derived" => Some(Confidence::Derived),
            "common practice" => Some(Confidence::CommonPractice),
            _ if t == "secondary source" || t.starts_with("secondary source ") => {
                Some(Confidence::Secondary)
            }
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
    /// Entries of the line's `conductors:` list (plates, boxes, cylinders,
    /// people).
    Conductors,
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
}

/// Where a rule applies.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Applies {
    /// What kind of subject.
    pub subjects: Subjects,
    /// Only subjects in a matching zone: spans touching its box, points
    /// inside it, rollers and conductors inside or near it (see
    /// `assess::NEAR_ZONE`).
    pub in_zone: bool,
    /// The zones that count when `in_zone` is set.
    pub zones: ZoneFilter,
}

/// A separation limit: within `distance` the web may reach at most `voltage`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Separation {
    /// Distance from the sensitive item [m].
    pub distance: Meters,
    /// Potential allowed closer than `distance` [V].
    pub voltage: Volts,
}

/// The class of harm a rule guards against, in the order a summary leads
/// with: ignition in hazardous zones, then shock to people, then
/// electronics, then equipment and product.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum Hazard {
    /// Ignition of an explosive atmosphere in or near a hazardous zone.
    Ignition,
    /// Shock to a person.
    Shock,
    /// Damage to electrostatic-discharge-sensitive electronics.
    Electronics,
    /// Equipment and product: the air's limit, gap discharges, eliminators.
    Equipment,
}

impl Hazard {
    /// Every class, in the order of the summary.
    pub const ALL: [Hazard; 4] = [
        Hazard::Ignition,
        Hazard::Shock,
        Hazard::Electronics,
        Hazard::Equipment,
    ];

    /// `ignition`, `shock`, `electronics` or `equipment` (JSON, CSV).
    pub fn key(self) -> &'static str {
        match self {
            Hazard::Ignition => "ignition",
            Hazard::Shock => "shock",
            Hazard::Electronics => "electronics",
            Hazard::Equipment => "equipment",
        }
    }

    /// The class of a rule: zone-bound rules (spans in a zone, points in a
    /// zone, rollers and conductors in or near one, a zone's MIE as the
    /// limit) guard against ignition; otherwise operator and people rules
    /// and sparks from isolated conductors against shock, electronics
    /// rules against electronics damage, the rest (air breakdown, gap
    /// discharges, capacitance of conductors outside zones) equipment.
    pub fn of(check: Check, applies: &Applies, zone_mie: bool) -> Hazard {
        if applies.in_zone || zone_mie {
            return Hazard::Ignition;
        }
        match (check, applies.subjects) {
            (Check::ElectronicsSeparation, _)
            | (Check::FieldAtPoints, Subjects::Points(Some(PointKind::Electronics))) => {
                Hazard::Electronics
            }
            (Check::BodyVoltage | Check::SparkEnergy | Check::ConductorSpark, _)
            | (Check::FieldAtPoints, Subjects::Points(Some(PointKind::Operator))) => Hazard::Shock,
            _ => Hazard::Equipment,
        }
    }
}

impl fmt::Display for Hazard {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.key())
    }
}

/// One checked rule.
#[derive(Debug, Clone, PartialEq)]
pub struct Rule {
    /// Identifier, unique in its profile (shared, so findings copy it
    /// without allocating).
    pub id: Arc<str>,
    /// What is checked.
    pub check: Check,
    /// What the rule checks, in words (the profile's text).
    pub what: Arc<str>,
    /// Where it applies.
    pub applies: Applies,
    /// The class of harm it guards against (from the check and where it
    /// applies, see [`Hazard::of`]).
    pub hazard: Hazard,
    /// Warning limit, SI [unit of `dim`].
    pub warn: Option<f64>,
    /// Failure limit, SI [unit of `dim`]; `None` when `fail_is_zone_mie` or
    /// `fail_is_paschen`.
    pub fail: Option<f64>,
    /// `fail: zone_mie`: the failure limit is the minimum ignition energy of
    /// the zone the operator stands in (spark_energy), or of the zones the
    /// conductor is in or near (conductor_spark).
    pub fail_is_zone_mie: bool,
    /// `fail: paschen`: the failure limit is the lowest density at which
    /// the gap opening between the web and a grounded roller breaks down by
    /// Paschen's law (gap_discharge only).
    pub fail_is_paschen: bool,
    /// electronics_separation: the near limit (e.g. 125 V within 25 mm).
    pub near: Option<Separation>,
    /// electronics_separation: the far limit (e.g. 2000 V within 300 mm).
    pub far: Option<Separation>,
    /// meter_reading and electronics_separation: the calibration distance
    /// d of the field meter whose reading |E_n|·d the limits are stated in
    /// [m] (`"5 kV at 1 in"`; 1 in when the limits give none).
    pub meter_distance: Option<Meters>,
    /// A field rule whose limits were written per inch (`2000 V/in`): its
    /// findings are shown per inch too, as the source states them.
    pub per_inch: bool,
    /// Dimension of the value and the limits.
    pub dim: Dim,
    /// Where the limits come from.
    pub source: Arc<str>,
    /// How sure the source is.
    pub confidence: Confidence,
    /// Text shown in reports, when given.
    pub note: Option<Arc<str>>,
}

/// A checked threshold profile.
#[derive(Debug, Clone, PartialEq)]
pub struct ThresholdProfile {
    /// Short name (`ex-zone-1`).
    pub name: Arc<str>,
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

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn confidence_reads_its_keywords_and_the_verify_tail() {
        assert_eq!(
            Confidence::parse(" Confirmed "),
            Some(Confidence::Confirmed)
        );
        assert_eq!(
            Confidence::parse("common practice"),
            Some(Confidence::CommonPractice)
        );
        assert_eq!(
            Confidence::parse(Confidence::FromMemory.text()),
            Some(Confidence::FromMemory)
        );
        assert_eq!(Confidence::parse("from memoryish"), None);
        assert_eq!(Confidence::parse("sure"), None);
    }

    #[test]
    fn zone_filter_matches_class_and_gas_group() {
        let f = ZoneFilter {
            classes: vec![1],
            gas_groups: vec![GasGroup::IIA, GasGroup::IIB],
        };
        let zone = |class: u8, gas_group: GasGroup| Zone {
            id: "Z".to_string(),
            name: None,
            zone: class,
            gas_group,
            mie: 2e-4,
            min: [0.0; 3],
            max: [1.0; 3],
        };
        assert!(f.matches(&zone(1, GasGroup::IIB)));
        assert!(!f.matches(&zone(2, GasGroup::IIB)));
        assert!(!f.matches(&zone(1, GasGroup::IIC)));
        assert!(ZoneFilter::default().matches(&zone(0, GasGroup::IIC)));
    }
}
