//! The line description: reading, validating and the checked [`Line`].
//!
//! First stage of the pipeline: `YAML text → RawLine (raw.rs) → Line
//! (validate.rs)`. A `Line` that exists is valid: every later stage accepts
//! only this type. All YAML parsing goes through [`parse_line`], so the YAML
//! library can be swapped in one place.

pub mod charge;
pub mod conductor;
pub mod convex;
pub mod geometry;
pub mod path;
pub mod raw;
pub mod validate;

pub use conductor::{Conductor, ConductorEarthing, ConductorKind, ConductorShape};
pub use path::{Earthing, NodeKind, NodeSpec, Roller, Span, WebPath, Wrap, WrapArc};

use crate::units::{
    CoulombsPerSquareMeter, Meters, MetersPerSecond, OhmMeters, Seconds, VoltsPerMeter,
};
use std::fmt;
use std::path::Path as FsPath;

/// Largest line description file read [bytes]; larger files are refused.
pub const MAX_FILE_BYTES: u64 = 4 * 1024 * 1024;

/// One problem found in the input, with its location.
#[derive(Debug, Clone, PartialEq)]
pub struct Issue {
    /// YAML path such as `rollers[2].diameter`, or empty for the whole file.
    pub path: String,
    /// `line:column` in the file where the parser gave one.
    pub location: Option<(usize, usize)>,
    /// What is wrong and what would be accepted.
    pub message: String,
}

impl Issue {
    /// A problem at a YAML path.
    pub fn at(path: impl Into<String>, message: impl Into<String>) -> Self {
        Issue {
            path: path.into(),
            location: None,
            message: message.into(),
        }
    }
}

impl fmt::Display for Issue {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        if let Some((l, c)) = self.location {
            write!(f, "{l}:{c}: ")?;
        }
        if self.path.is_empty() {
            write!(f, "{}", self.message)
        } else {
            write!(f, "{}: {}", self.path, self.message)
        }
    }
}

/// The line description could not be accepted; holds every problem found.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub struct ValidationError {
    /// The problems, in the order of the file.
    pub issues: Vec<Issue>,
}

impl fmt::Display for ValidationError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let n = self.issues.len();
        write!(f, "{n} problem{}", if n == 1 { "" } else { "s" })?;
        for i in &self.issues {
            write!(f, "\n  {i}")?;
        }
        Ok(())
    }
}

/// Properties of the web.
#[derive(Debug, Clone, PartialEq)]
pub struct Web {
    /// Material, free text.
    pub material: Option<String>,
    /// Width across the machine [m].
    pub width: Meters,
    /// Thickness [m].
    pub thickness: Meters,
    /// Relative permittivity εr [1].
    pub relative_permittivity: f64,
    /// Volume resistivity ρ [Ω·m], when given (or derived from a surface
    /// resistivity: ρ = R_s·t).
    pub volume_resistivity: Option<OhmMeters>,
    /// Surface resistivity R_s [Ω per square], when given instead of ρ.
    pub surface_resistivity: Option<f64>,
    /// Charge relaxation time τ [s]: given, or ε0·εr·ρ.
    pub relaxation_time: Seconds,
    /// Web speed v [m/s].
    pub speed: MetersPerSecond,
    /// Dielectric strength of the web material [V/m], when given.
    pub breakdown_strength: Option<VoltsPerMeter>,
}

impl Web {
    /// Length of web over which charge falls by 1/e: λ = v·τ [m] (infinite when
    /// τ is infinite).
    pub fn decay_length(&self) -> Meters {
        self.speed * self.relaxation_time
    }
}

/// The shape f(y) of the density across the web, f(0) = 1.
#[derive(Debug, Clone, PartialEq)]
pub enum AcrossShape {
    /// f = 1.
    Uniform,
    /// f = 1 + k(2y/w)².
    Edges(f64),
    /// f = 1 + k(2y/w).
    Tilt(f64),
    /// Piecewise linear through `[y [m], f]` pairs, y increasing.
    Table(Vec<(Meters, f64)>),
}

/// The validated across-web profile over y ∈ [−w/2, w/2].
#[derive(Debug, Clone, PartialEq)]
pub struct AcrossProfile {
    /// The shape as given.
    pub shape: AcrossShape,
    /// Web width w [m].
    pub width: Meters,
}

/// One piece of a piecewise quadratic f(y) = c0 + c1·y + c2·y² on [y_lo, y_hi] [m].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AcrossPiece {
    /// Lower end [m].
    pub y_lo: Meters,
    /// Upper end [m].
    pub y_hi: Meters,
    /// Coefficients c0 [1], c1 [1/m], c2 [1/m²].
    pub c: [f64; 3],
}

impl AcrossProfile {
    /// f(y) [1]; zero outside the web.
    pub fn f(&self, y: Meters) -> f64 {
        let h = self.width / 2.0;
        if y < -h || y > h {
            return 0.0;
        }
        self.pieces()
            .iter()
            .find(|p| y >= p.y_lo && y <= p.y_hi)
            .map(|p| p.c[0] + p.c[1] * y + p.c[2] * y * y)
            .unwrap_or(0.0)
    }

    /// The profile as piecewise quadratic pieces covering [−w/2, w/2].
    pub fn pieces(&self) -> Vec<AcrossPiece> {
        let h = self.width / 2.0;
        let w = self.width;
        match &self.shape {
            AcrossShape::Uniform => vec![AcrossPiece {
                y_lo: -h,
                y_hi: h,
                c: [1.0, 0.0, 0.0],
            }],
            AcrossShape::Edges(k) => vec![AcrossPiece {
                y_lo: -h,
                y_hi: h,
                c: [1.0, 0.0, 4.0 * k / (w * w)],
            }],
            AcrossShape::Tilt(k) => vec![AcrossPiece {
                y_lo: -h,
                y_hi: h,
                c: [1.0, 2.0 * k / w, 0.0],
            }],
            AcrossShape::Table(t) => {
                let mut out = Vec::new();
                for pair in t.windows(2) {
                    let (y0, f0) = pair[0];
                    let (y1, f1) = pair[1];
                    let lo = y0.max(-h);
                    let hi = y1.min(h);
                    if hi <= lo {
                        continue;
                    }
                    let slope = (f1 - f0) / (y1 - y0);
                    out.push(AcrossPiece {
                        y_lo: lo,
                        y_hi: hi,
                        c: [f0 - slope * y0, slope, 0.0],
                    });
                }
                out
            }
        }
    }

    /// The largest |f| over the web [1].
    pub fn max_abs(&self) -> f64 {
        let h = self.width / 2.0;
        match &self.shape {
            AcrossShape::Uniform => 1.0,
            AcrossShape::Edges(k) => 1.0f64.max((1.0 + k).abs()),
            AcrossShape::Tilt(k) => (1.0 + k).abs().max((1.0 - k).abs()),
            AcrossShape::Table(_) => {
                let mut m: f64 = 0.0;
                for p in self.pieces() {
                    for y in [p.y_lo, p.y_hi] {
                        m = m.max((p.c[0] + p.c[1] * y).abs());
                    }
                }
                let _ = h;
                m
            }
        }
    }
}

/// Whether a charge entry sets or adds to the centreline density.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ChargeMode {
    /// `sigma:` sets the density leaving the node.
    Set,
    /// `adds:` adds to the density arriving at the node.
    Add,
}

/// A validated charge entry.
#[derive(Debug, Clone, PartialEq)]
pub struct ChargeEntry {
    /// Where, as written (`start`, `R1`, …).
    pub at: String,
    /// Arc length where it applies (where the web leaves the node) [m].
    pub s: Meters,
    /// Set or add.
    pub mode: ChargeMode,
    /// Centreline density [C/m²].
    pub sigma: CoulombsPerSquareMeter,
    /// Tolerance of `sigma` as an absolute half-width δ ≥ 0 [C/m²]: the
    /// density lies in `sigma ± tolerance`. Written after the density
    /// (`8 uC/m^2 ± 20 %` gives δ = 0.2·|σ|, `8 uC/m^2 ± 1.6 uC/m^2` gives
    /// δ = 1.6 µC/m²); 0 when none is given.
    pub tolerance: CoulombsPerSquareMeter,
    /// YAML path of the entry, for messages.
    pub yaml_path: String,
}

/// What a place of interest is.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum PointKind {
    /// A field meter.
    Meter,
    /// An operator's position.
    Operator,
    /// Sensitive electronics.
    Electronics,
    /// Any other probe point.
    Probe,
}

impl PointKind {
    /// The keyword used in the YAML.
    pub fn text(self) -> &'static str {
        match self {
            PointKind::Meter => "meter",
            PointKind::Operator => "operator",
            PointKind::Electronics => "electronics",
            PointKind::Probe => "probe",
        }
    }
}

/// A place of interest.
#[derive(Debug, Clone, PartialEq)]
pub struct Point {
    /// Identifier.
    pub id: String,
    /// What it is.
    pub kind: PointKind,
    /// Position `[x, y, z]` [m].
    pub at: [Meters; 3],
    /// Body capacitance [F], when given (operators only).
    pub capacitance: Option<crate::units::Farads>,
}

/// Gas group of a hazardous zone (IEC 60079-20-1 grouping).
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
pub enum GasGroup {
    /// IIA, e.g. propane, hexane, toluene.
    IIA,
    /// IIB, e.g. ethylene, diethyl ether.
    IIB,
    /// IIC, e.g. hydrogen, acetylene.
    IIC,
}

impl GasGroup {
    /// The keyword used in the YAML.
    pub fn text(self) -> &'static str {
        match self {
            GasGroup::IIA => "IIA",
            GasGroup::IIB => "IIB",
            GasGroup::IIC => "IIC",
        }
    }
}

/// A hazardous area: an axis-aligned box with its classification.
#[derive(Debug, Clone, PartialEq)]
pub struct Zone {
    /// Identifier.
    pub id: String,
    /// Free-text name.
    pub name: Option<String>,
    /// Zone class 0, 1 or 2.
    pub zone: u8,
    /// Gas group.
    pub gas_group: GasGroup,
    /// Lowest minimum ignition energy present [J].
    pub mie: crate::units::Joules,
    /// Lower corner `[x, y, z]` [m].
    pub min: [Meters; 3],
    /// Upper corner `[x, y, z]` [m].
    pub max: [Meters; 3],
}

impl Zone {
    /// Whether a point lies inside the box (faces included).
    pub fn contains(&self, p: [Meters; 3]) -> bool {
        (0..3).all(|k| p[k] >= self.min[k] && p[k] <= self.max[k])
    }

    /// Whether any part of a span's charged rectangle lies inside the box:
    /// the segment `[start, end]` in x-z, extruded over y ∈ [−w/2, w/2].
    pub fn touches_span(&self, span: &Span, width: Meters) -> bool {
        self.span_part(span, width).is_some()
    }

    /// The part of a span's charged rectangle inside the box, as distances
    /// `(u0, u1)` along the span from its start [m], `None` when no part is.
    ///
    /// The rectangle is the segment `[start, end]` in x-z extruded over
    /// y ∈ [−w/2, w/2], so its part inside an axis-aligned box is the
    /// segment clipped against the x and z slabs (Liang–Barsky: with
    /// p(t) = p0 + t·Δp, t ∈ [0, 1], each slab lo ≤ p ≤ hi keeps
    /// t ∈ [min(a, b), max(a, b)], a = (lo − p0)/Δp, b = (hi − p0)/Δp), kept
    /// whole across the web when the box overlaps y ∈ [−w/2, w/2]; then
    /// u = t·L. Reference: Y.-D. Liang and B. A. Barsky, "A new concept and
    /// method for line clipping", ACM Trans. Graphics 3(1), 1984.
    pub fn span_part(&self, span: &Span, width: Meters) -> Option<(Meters, Meters)> {
        if self.max[1] < -width / 2.0 || self.min[1] > width / 2.0 {
            return None;
        }
        let (x0, z0) = (span.start[0], span.start[1]);
        let (dx, dz) = (span.end[0] - x0, span.end[1] - z0);
        let mut t0: f64 = 0.0;
        let mut t1: f64 = 1.0;
        for (p0, d, lo, hi) in [
            (x0, dx, self.min[0], self.max[0]),
            (z0, dz, self.min[2], self.max[2]),
        ] {
            if d == 0.0 {
                if p0 < lo || p0 > hi {
                    return None;
                }
            } else {
                let (a, b) = ((lo - p0) / d, (hi - p0) / d);
                t0 = t0.max(a.min(b));
                t1 = t1.min(a.max(b));
            }
        }
        (t0 <= t1).then_some((t0 * span.length, t1 * span.length))
    }

    /// A label such as `Z1 (coating head enclosure, zone 1 IIA)`.
    pub fn label(&self) -> String {
        match &self.name {
            Some(n) => format!(
                "{} ({n}, zone {} {})",
                self.id,
                self.zone,
                self.gas_group.text()
            ),
            None => format!("{} (zone {} {})", self.id, self.zone, self.gas_group.text()),
        }
    }
}

/// Which side of a span a meter is on.
///
/// Every span has two normals; "above" is the one pointing up (positive z
/// component). For a vertical span, where neither points up, "above" is the
/// one pointing in +x (downstream in the machine direction).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Side {
    /// The normal with positive z (or +x on a vertical span).
    Above,
    /// The opposite side.
    Below,
}

impl Side {
    /// The keyword used in the YAML.
    pub fn text(self) -> &'static str {
        match self {
            Side::Above => "above",
            Side::Below => "below",
        }
    }
}

/// Calibrated distance assumed for a voltage reading that gives none [m]
/// (25 mm = 1 inch, the usual calibration of hand-held meters; FACTS.md).
pub const DEFAULT_CALIBRATION: Meters = 0.025;

/// What a reading measured.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum ReadingValue {
    /// A field reading [V/m]; positive when the field points from the web to the meter.
    Field(f64),
    /// A voltage shown by a meter calibrated at a distance [V], [m] (distance
    /// not given: `None`).
    Voltage(f64, Option<Meters>),
    /// A surface charge density measured directly [C/m²].
    Sigma(f64),
}

/// A validated reading.
#[derive(Debug, Clone, PartialEq)]
pub struct Reading {
    /// Identifier (given, or `reading[i]`).
    pub id: String,
    /// Index of the span.
    pub span: usize,
    /// Distance along the span from its start [m].
    pub along: Meters,
    /// Across-web offset from the centreline [m].
    pub across: Meters,
    /// Meter face to web, along the span's normal [m].
    pub distance: Meters,
    /// Side of the span.
    pub side: Side,
    /// What was read.
    pub value: ReadingValue,
    /// What was recorded with it: the texts as typed, the instrument and the
    /// conditions of the measurement.
    pub record: ReadingRecord,
}

/// What was recorded with a reading besides its converted value: the texts
/// as typed (so that outputs can show `1.8 kV/in at 1 in` beside the SI
/// value) and the optional instrument and conditions of the measurement.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct ReadingRecord {
    /// The value as typed (the `reading:`, `voltage:` or `sigma:` text,
    /// trimmed), e.g. `1.8 kV/in`.
    pub value_text: String,
    /// A voltage reading's `calibrated_at:` as typed, e.g. `1 in`.
    pub calibrated_at_text: Option<String>,
    /// The meter distance as typed, e.g. `1 in`.
    pub distance_text: String,
    /// Instrument identifier (`meter:`), free text.
    pub meter: Option<String>,
    /// Date of the instrument's last calibration (`calibrated_on:`).
    pub calibrated_on: Option<chrono::NaiveDate>,
    /// Relative humidity of the air at measurement [1] (`45 %` is 0.45).
    pub relative_humidity: Option<f64>,
    /// Web speed at measurement [m/s].
    pub speed: Option<MetersPerSecond>,
}

/// Meter accuracy applied to every reading.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MeterSpec {
    /// Relative accuracy of the reading [1].
    pub accuracy: f64,
    /// Zero uncertainty [V/m].
    pub offset: VoltsPerMeter,
    /// Uncertainty of the meter distance [m].
    pub distance_tolerance: Meters,
}

impl Default for MeterSpec {
    /// 5 % of the reading, 1 kV/m offset, 2 mm on the distance (typical
    /// hand-held field meters; common practice, stated in every output).
    fn default() -> Self {
        MeterSpec {
            accuracy: 0.05,
            offset: 1e3,
            distance_tolerance: 2e-3,
        }
    }
}

/// What kind of static eliminator.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum EliminatorKind {
    /// A powered ionising bar (AC or DC).
    Powered,
    /// A passive device (tinsel, brush, cord) that ionises by induction.
    Passive,
}

impl EliminatorKind {
    /// The keyword used in the YAML.
    pub fn text(self) -> &'static str {
        match self {
            EliminatorKind::Powered => "powered",
            EliminatorKind::Passive => "passive",
        }
    }
}

/// Default efficiency of a powered bar [1]: target ≥ 95 % (K. Robinson, PFFC).
pub const POWERED_EFFICIENCY: f64 = 0.95;
/// Default efficiency of a passive device [1]: target > 80 % (K. Robinson, PFFC).
pub const PASSIVE_EFFICIENCY: f64 = 0.80;
/// Default residual of a passive device [C/m²]: about 1–2 µC/m² (J. A.
/// McInally, IEEE Trans. Ind. Appl. IA-13(3), 1977); 1.5 µC/m² taken.
pub const PASSIVE_RESIDUAL: f64 = 1.5e-6;
/// Web potential at which a passive device starts to ionise [V]: about
/// 3–5 kV (trade knowledge, from memory — verify); 4 kV taken. The default
/// onset field at the tips is this divided by the tip distance.
pub const PASSIVE_ONSET_VOLTAGE: f64 = 4e3;
/// Default ion output of a powered bar [A/m]: about 1000 µA per metre of bar
/// (K. Robinson, PFFC).
pub const POWERED_ION_OUTPUT: f64 = 1e-3;

/// A validated static eliminator.
#[derive(Debug, Clone, PartialEq)]
pub struct Eliminator {
    /// Identifier.
    pub id: String,
    /// Powered or passive.
    pub kind: EliminatorKind,
    /// Index of the span.
    pub span: usize,
    /// Distance along the span from its start [m].
    pub along: Meters,
    /// Arc length of the bar's position on the path [m].
    pub s: Meters,
    /// Bar (tips) to web [m].
    pub distance: Meters,
    /// Side of the span.
    pub side: Side,
    /// Fraction of the arriving density removed, η [1].
    pub efficiency: f64,
    /// Powered: signed offset added after neutralising; passive: the
    /// density magnitude it cannot go below [C/m²].
    pub residual: CoulombsPerSquareMeter,
    /// Passive: field at the tips needed to ionise [V/m].
    pub onset: Option<VoltsPerMeter>,
    /// Powered: ion output per metre of bar [A/m].
    pub ion_output: f64,
}

/// A validated line: every field is checked and consistent.
#[derive(Debug, Clone, PartialEq)]
pub struct Line {
    /// Title.
    pub title: String,
    /// The web.
    pub web: Web,
    /// Height z of a grounded plane [m], when given.
    pub ground_plane: Option<Meters>,
    /// Rollers.
    pub rollers: Vec<Roller>,
    /// Path geometry.
    pub path: WebPath,
    /// Density across the web.
    pub across: AcrossProfile,
    /// Charge entries in the order they apply along the path.
    pub charge: Vec<ChargeEntry>,
    /// Places of interest.
    pub points: Vec<Point>,
    /// Hazardous zones.
    pub zones: Vec<Zone>,
    /// Names of the threshold profiles the line asks for (`assess:`).
    pub assess: Vec<String>,
    /// Field-meter and density readings.
    pub readings: Vec<Reading>,
    /// Meter accuracy used for every reading.
    pub meter: MeterSpec,
    /// Static eliminators, in path order.
    pub eliminators: Vec<Eliminator>,
    /// Conductors other than rollers (plates, boxes, cylinders, people).
    pub conductors: Vec<Conductor>,
    /// Problems that are not fatal, to show the user and list in reports.
    pub warnings: Vec<Issue>,
}

impl Line {
    /// Why the point `at` = [x, y, z] [m] cannot be evaluated on this line
    /// (below the ground plane, inside a roller or another conductor, on the
    /// web), or `None` when it can.
    pub fn point_problem(&self, at: [Meters; 3]) -> Option<geometry::PointProblem> {
        geometry::point_problem_in(
            &self.path,
            &self.rollers,
            &self.conductors,
            self.web.width,
            self.ground_plane,
            at,
        )
    }

    /// The floor a person stands on: the ground plane, or z = 0 without one [m].
    pub fn floor(&self) -> Meters {
        self.ground_plane.unwrap_or(0.0)
    }
}

/// Parses and validates a line description from YAML text.
pub fn parse_line(text: &str) -> Result<Line, ValidationError> {
    let raw = parse_raw(text)?;
    validate::validate(&raw)
}

/// Reads a line description file as text (size-limited, UTF-8).
pub fn read_line_text(path: &FsPath) -> anyhow::Result<String> {
    crate::yaml::read_text(path, "line description", MAX_FILE_BYTES)
}

/// Reads, parses and validates a line description file.
pub fn load_line(path: &FsPath) -> anyhow::Result<Line> {
    let text = read_line_text(path)?;
    parse_line(&text).map_err(|e| {
        anyhow::Error::new(e).context(format!("invalid line description '{}'", path.display()))
    })
}

/// Parses a list of eliminator entries (the planner's candidate file) and
/// checks it against `line`. The YAML is read by [`crate::yaml::from_str`].
pub fn parse_eliminator_list(text: &str, line: &Line) -> Result<Vec<Eliminator>, ValidationError> {
    let list: Vec<raw::RawEliminator> = crate::yaml::from_str(text).map_err(|mut e| {
        e.message.push_str(": expected a list of entries like `- {kind: powered, span: S3, position: 50 %, distance: 40 mm, side: above}`");
        ValidationError::from(e)
    })?;
    validate::validate_eliminator_list(&list, line)
}

/// Reads YAML text into the raw line (through [`crate::yaml::from_str`]).
pub(crate) fn parse_raw(text: &str) -> Result<raw::RawLine, ValidationError> {
    if crate::yaml::is_blank(text) {
        return Err(ValidationError {
            issues: vec![Issue::at(
                "",
                "the file is empty: expected a line description with at least `web:`, `rollers:` or `path:` (see profiles/lines/demo.yaml)",
            )],
        });
    }
    crate::yaml::from_str::<raw::RawLine>(text).map_err(|mut e| {
        if e.wrong_document_type {
            e.message = "expected a mapping of keys such as `line:`, `web:`, `rollers:`, `path:` at the top level".to_string();
        }
        ValidationError::from(e)
    })
}
