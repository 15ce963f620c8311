//! What the assessment returns: findings as numbers, units, typed subjects
//! and typed notes, never prose. The words for subjects, notes and
//! assumptions are made in `report::notes`, so the planner's inner loop
//! builds no text at all.

use super::meter::MeterEquivalent;
use super::{Confidence, Hazard};
use crate::field::SpanContribution;
use crate::units::{Dim, Farads, Joules, Meters, Volts, VoltsPerMeter};
use std::fmt;
use std::sync::Arc;

/// Outcome of one rule for one subject; ordered pass < warn < uncertain <
/// fail.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum Verdict {
    /// Below every limit.
    Pass,
    /// At or above the warning limit, below the failure limit.
    Warn,
    /// The value's range straddles the failure limit (see
    /// [`super::bounds::judge`]): counted as a failure for the exit code.
    Uncertain,
    /// At or above the failure limit.
    Fail,
}

impl Verdict {
    /// `pass`, `warn` or `fail` (the keyword also used in files).
    pub fn text(self) -> &'static str {
        match self {
            Verdict::Pass => "pass",
            Verdict::Warn => "warn",
            Verdict::Uncertain => "uncertain",
            Verdict::Fail => "fail",
        }
    }

    /// Whether the verdict counts as exceeding a limit (fail, or uncertain:
    /// it may exceed it).
    pub fn exceeds(self) -> bool {
        self >= Verdict::Uncertain
    }
}

impl fmt::Display for Verdict {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.text())
    }
}

/// What kind of subject a finding is about.
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
    /// An entry of the line's `conductors:` list (plate, box, cylinder,
    /// person).
    Conductor,
}

/// What a finding is about, by index into the line.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Subject {
    /// `line.path.spans[i]`.
    Span(usize),
    /// `line.points[i]`.
    Point(usize),
    /// `line.rollers[i]`.
    Roller(usize),
    /// The web as a whole.
    Web,
    /// `line.eliminators[i]`.
    Eliminator(usize),
    /// Two eliminators facing each other: `line.eliminators[i]` and `[j]`.
    EliminatorPair(usize, usize),
    /// `line.conductors[i]`.
    Conductor(usize),
}

impl Subject {
    /// The kind of subject.
    pub fn kind(self) -> SubjectKind {
        match self {
            Subject::Span(_) => SubjectKind::Span,
            Subject::Point(_) => SubjectKind::Point,
            Subject::Roller(_) => SubjectKind::Roller,
            Subject::Web => SubjectKind::Web,
            Subject::Eliminator(_) | Subject::EliminatorPair(..) => SubjectKind::Eliminator,
            Subject::Conductor(_) => SubjectKind::Conductor,
        }
    }
}

/// How the height of an isolated roller above ground was chosen.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum HeightBasis {
    /// Its axis height above the ground plane.
    AboveGroundPlane,
    /// It reaches the ground plane: a fallback height was used.
    TouchesGroundPlane,
    /// Its axis height above z = 0 (no ground plane given).
    AboveZero,
    /// No ground plane and the axis is not above z = 0: a fallback height.
    NoGround,
}

/// The capacitance estimate of an isolated roller.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RollerCapacitance {
    /// C [F].
    pub capacitance: Farads,
    /// Radius r [m].
    pub radius: Meters,
    /// Length L [m].
    pub length: Meters,
    /// Axis height h [m].
    pub height: Meters,
    /// How h was chosen.
    pub basis: HeightBasis,
}

/// What the conductors' boundary-element solve gives for one isolated
/// conductor (a roller or a `conductors:` entry).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SolvedConductor {
    /// Capacitance to ground C [F], the lumped part included.
    pub capacitance: Farads,
    /// Floating potential V [V].
    pub potential: Volts,
    /// The lumped capacitance to ground added to the solved one [F] (a
    /// person's feet to the floor, or a given `capacitance_to_ground`).
    pub lumped: Option<Farads>,
    /// Whether `lumped` is the person default rather than given.
    pub lumped_assumed: bool,
    /// Panels of the conductor's mesh.
    pub panels: usize,
}

/// Where gap discharges occur as the web leaves a grounded roller.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct GapBreakdown {
    /// Web thickness t [m].
    pub thickness: Meters,
    /// Web relative permittivity εr [1].
    pub eps_r: f64,
    /// The gap at which the breakdown density is lowest (where a web at the
    /// limit breaks down first) [m].
    pub lowest_at: Meters,
    /// The smallest gap at which the span's own density breaks the gap
    /// down, when it does [m].
    pub first_gap: Option<Meters>,
}

/// Context of a finding, as data.
#[derive(Debug, Clone, PartialEq)]
pub enum FindingNote {
    /// The subject is in these zones (indices into `line.zones`).
    InZones(Vec<usize>),
    /// A span rule bound to zones judged only these parts of the span, the
    /// ones inside its zones: `(u0, u1)` along the span from its start [m].
    ZoneParts(Vec<(f64, f64)>),
    /// The operator's capacitance [F]; `assumed`: the default body model.
    Capacitance {
        /// C [F].
        capacitance: Farads,
        /// Whether it is the default 150 pF body model.
        assumed: bool,
    },
    /// The potential |V| at the operator [V].
    BodyPotential(Volts),
    /// The failure limit is the MIE [J] of this zone (index).
    FailAtZoneMie {
        /// Index into `line.zones`.
        zone: usize,
        /// Its minimum ignition energy [J].
        mie: Joules,
    },
    /// The worst span for an electronics item.
    Separation {
        /// Index into `line.path.spans`.
        span: usize,
        /// Distance from the item to the span [m].
        distance: Meters,
        /// Potential allowed at that distance [V].
        allowed: Volts,
        /// The distance band the allowance holds within [m].
        within: Meters,
    },
    /// Zones an isolated roller is in or near: (zone index, distance [m],
    /// 0 inside).
    NearZones(Vec<(usize, Meters)>),
    /// How an isolated roller's capacitance was estimated.
    Roller(RollerCapacitance),
    /// The web's breakdown voltage U_b = t·E_b.
    BreakdownVoltage {
        /// Thickness t [m].
        thickness: Meters,
        /// Dielectric strength E_b [V/m].
        strength: VoltsPerMeter,
    },
    /// `breakdown_strength` not given: the hazard cannot be ruled out.
    NoBreakdownStrength,
    /// A powered bar's load.
    WebCurrent {
        /// Web current per metre of width [A/m].
        current: f64,
        /// Density arriving at the bar [C/m²].
        sigma_in: f64,
        /// Web speed [m/s].
        speed: f64,
        /// Bar ion output per metre [A/m].
        output: f64,
    },
    /// A bar's clearance from a conducting roller the web touches.
    RollerClearance {
        /// Clearance along the span [m].
        clearance: Meters,
        /// Bar-to-web distance [m].
        distance: Meters,
    },
    /// Two bars on opposite sides of a span.
    BarOffset {
        /// Offset along the span [m].
        offset: Meters,
        /// The larger bar distance [m].
        distance: Meters,
    },
    /// A powered bar inside a zone 0 or 1 (index): a caution.
    ZoneApproval {
        /// Index into `line.zones`.
        zone: usize,
    },
    /// An isolated conductor's capacitance, potential and spark energy
    /// come from the conductors' solve.
    Solved(SolvedConductor),
    /// The analytic estimate of an isolated roller's capacitance, shown
    /// beside the solved one for comparison.
    RollerAnalytic(RollerCapacitance),
    /// The subject is bonded to earth: at 0 V, no shock and no spark.
    Earthed,
    /// A person of `conductors:`: body voltage and spark energy are the
    /// person's floating potential and ½CV² from the solve.
    Person,
    /// An insulating roller's chargeable surface A = 2πrL.
    InsulatingArea {
        /// Radius r [m].
        radius: Meters,
        /// Length L [m].
        length: Meters,
    },
    /// The gap-discharge limit and where breakdown happens.
    Gap(GapBreakdown),
    /// Where the meter-equivalent reading of the finding was taken, with
    /// the field there.
    Meter(MeterEquivalent),
    /// The largest |V| of the web near the item [V], for information (the
    /// rule compares what a meter would read, not this).
    WebPotential(Volts),
    /// The profile's own note on the rule.
    Rule(Arc<str>),
    /// A passive device's tip field against its onset.
    Onset {
        /// Index into `line.eliminators`.
        eliminator: usize,
        /// Whether it ionises (the solver's decision, E_tip ≥ E_on).
        active: bool,
        /// |E| at the tips from the charge arriving [V/m].
        tip_field: VoltsPerMeter,
        /// The field needed to ionise [V/m].
        onset: VoltsPerMeter,
        /// Centreline density arriving [C/m²].
        sigma_in: f64,
        /// Tips to web [m].
        distance: Meters,
    },
    /// A meter reading against what the fitted charge gives there.
    ReadingFit {
        /// Index into `line.readings`.
        reading: usize,
        /// Reading minus what the final charge profile gives at the meter
        /// (V/m, or C/m² for a density reading).
        residual: f64,
        /// The reading's tolerance u = accuracy·|r| + offset (same unit).
        tolerance: f64,
        /// Whether the reading is a density (C/m²).
        density: bool,
    },
}

/// A modelling assumption a rule used.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Assumption {
    /// Operators insulated from earth, at the potential of their position.
    InsulatedOperator,
    /// 150 pF where an operator's capacitance is not given.
    BodyCapacitance,
    /// The largest |σ| on a span is at a charge piece's start.
    WebCharge,
    /// Isolated roller capacitance from a cylinder over a plane.
    RollerCapacitance,
    /// "Near" a zone is within 0.5 m.
    NearZone,
    /// The web potential near electronics from 9 samples.
    WebPotential,
    /// A field meter reads E_n·d at its calibration distance d, with the
    /// field the model gives where its face would be, undisturbed by it.
    MeterReading,
    /// Isolated conductors' capacitance, potential and spark energy from
    /// the boundary-element solve.
    ConductorsSolved,
    /// No conductors' solve: analytic roller capacitance; spark energies of
    /// isolated conductors, `conductors:` entries and people not assessed.
    ConductorsNotSolved,
    /// No conductors' solve: gap discharges at roller separation not
    /// checked.
    GapNotChecked,
    /// The gap voltage of a web leaving a grounded roller is that of a
    /// charged sheet over a grounded plane.
    GapVoltage,
    /// An insulating roller's chargeable surface is its whole surface.
    InsulatingArea,
}

/// One rule applied to one subject.
#[derive(Debug, Clone, PartialEq)]
pub struct Finding {
    /// Name of the profile the rule belongs to.
    pub profile: Arc<str>,
    /// Rule id.
    pub rule: Arc<str>,
    /// What the rule checks (the rule's own text).
    pub check: Arc<str>,
    /// The class of harm the rule guards against.
    pub hazard: Hazard,
    /// The subject.
    pub subject: Subject,
    /// The value found, SI [unit of `dim`].
    pub value: f64,
    /// For meter rules: the calibration distance d [m] at which value and
    /// limits are field-meter readings ("4.5 kV at 1 in").
    pub meter: Option<Meters>,
    /// For a dimensionless value: what ratio it is (`5·I′/I_ion`).
    pub ratio: Option<&'static str>,
    /// A field whose rule states its limits per inch: shown per inch.
    pub per_inch: bool,
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
    /// The verdict (of the value's range, see [`super::bounds::judge`]).
    pub verdict: Verdict,
    /// The value's range over the uncertain inputs, in the value's unit.
    pub bounds: super::bounds::Bounds,
    /// Where the limit comes from (the rule's own text).
    pub source: Arc<str>,
    /// How sure the source is.
    pub confidence: Confidence,
    /// Context, in order.
    pub notes: Vec<FindingNote>,
    /// For point findings: each span's share of the field and potential
    /// there, largest |E| first.
    pub contributions: Vec<SpanContribution>,
}

/// How many findings have each verdict.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct VerdictCounts {
    /// Passing findings.
    pub pass: usize,
    /// Warnings.
    pub warn: usize,
    /// Failures.
    pub fail: usize,
    /// Findings whose range straddles the failure limit.
    pub uncertain: usize,
}

impl VerdictCounts {
    /// `[pass, warn, fail + uncertain]`: an uncertain finding counted as a
    /// failure (the planner's and the exit code's rule).
    pub fn pass_warn_exceeding(self) -> [usize; 3] {
        [self.pass, self.warn, self.fail + self.uncertain]
    }

    /// The counts indexed by `Verdict as usize`: `[pass, warn, uncertain,
    /// fail]`.
    pub fn as_array(self) -> [usize; 4] {
        [self.pass, self.warn, self.uncertain, self.fail]
    }
}

/// All findings of an assessment, worst first.
#[derive(Debug, Clone, PartialEq)]
pub struct Assessment {
    /// Findings sorted by verdict (fail first), then by margin (largest first).
    pub findings: Vec<Finding>,
    /// The worst verdict.
    pub verdict: Verdict,
    /// Assumptions the rules used, in the order first used.
    pub assumptions: Vec<Assumption>,
}

impl Assessment {
    /// Findings by verdict.
    pub fn counts(&self) -> VerdictCounts {
        let mut c = VerdictCounts::default();
        for f in &self.findings {
            match f.verdict {
                Verdict::Pass => c.pass += 1,
                Verdict::Warn => c.warn += 1,
                Verdict::Uncertain => c.uncertain += 1,
                Verdict::Fail => c.fail += 1,
            }
        }
        c
    }

    /// The largest margin over every finding (0 without findings).
    pub fn worst_margin(&self) -> f64 {
        self.findings.iter().map(|f| f.margin).fold(0.0, f64::max)
    }
}
