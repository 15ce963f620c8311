//! # Field and potential of the charged web, by superposition
//!
//! Third stage of the pipeline: `(Scene, ChargeProfile) → FieldMap`. The
//! charge-independent part (span frames, images, settings) is the [`Scene`],
//! built once per line; [`Scene::web`] charges it. Every
//! straight span is a flat rectangle carrying σ(s, y) = σc(s)·f(y); its field
//! and potential at a point **r** are the Coulomb integrals
//!
//! $$ \mathbf E(\mathbf r) = \frac{1}{4πε_0}\iint σ(\mathbf r')\,
//!    \frac{\mathbf r-\mathbf r'}{|\mathbf r-\mathbf r'|^3}\,dA', \qquad
//!    V(\mathbf r) = \frac{1}{4πε_0}\iint \frac{σ(\mathbf r')}{|\mathbf r-\mathbf r'|}\,dA', $$
//!
//! evaluated in the span's own frame (u along the span, y across, h along its
//! normal) by [`kernels`] and [`integrate`], and summed over all spans. A
//! grounded plane z = z_g is represented by the image of every span: the
//! mirror rectangle carrying −σ, whose field at **r** is −M·**E**(M**r**) and
//! potential −V(M**r**), M the reflection in the plane; the potential is then
//! zero on the plane. Without a plane, potentials are relative to zero at
//! infinity.
//!
//! | symbol | meaning | unit |
//! | --- | --- | --- |
//! | **E**, V | field, potential | V/m, V |
//! | σ | surface charge density | C/m² |
//! | ε0 | vacuum permittivity, 8.8541878128e-12 | F/m |
//! | **r**, **r**′ | field point, source point | m |
//!
//! Assumptions (listed in every output by [`ASSUMPTIONS`]): the web is a
//! thin sheet in free space (no dielectric of the web itself, no charge
//! induced on rollers or frames except through the ground-plane image); the
//! wrap arcs are not integrated — only the straight spans are; rollers do not
//! screen the field.
//!
//! ## Reference
//! Coulomb's law and superposition; the method of images for a grounded plane
//! (D. J. Griffiths, *Introduction to Electrodynamics*, 4th ed., §2.1 and §3.2).

pub mod bem;
pub mod far;
pub mod integrate;
pub mod kernels;
pub mod kronrod;
pub mod map_boxes;
pub mod moments;
pub mod panels;
pub mod scene;
pub mod tree;

pub use scene::{ConductorAccuracy, ConductorResult, Scene, WebField};

use crate::units::{Meters, Volts, VoltsPerMeter};
use integrate::KernelError;

/// The modelling assumptions, shown in every output.
pub const ASSUMPTIONS: &[&str] = &[
    "the web is a thin charged sheet in free space: its own permittivity and the charge induced on rollers and frames are not modelled (except the grounded plane, by images)",
    "only the straight spans are integrated; the charge on the wrap arcs (in contact with the rollers) is not",
    "conductors off (--conductors off): rollers and the line's other conductors do not screen the field, which over-states potentials away from the web (only the grounded plane's induced charge is computed, by images)",
];

/// The modelling assumptions when the charge induced on the line's
/// conductors is solved (`SolverSettings::with_conductors`).
pub const ASSUMPTIONS_WITH_CONDUCTORS: &[&str] = &[
    "the web is a thin charged sheet: its own permittivity is not modelled",
    "the straight spans are integrated; the charge on a wrap arc is bound by its image in a grounded roller and not integrated, and on an isolated roller it is added to the roller's net charge (it raises the roller's floating potential)",
    "grounded and isolated rollers and the line's conductors carry the charge the web induces on them (boundary-element solve on flat panels with constant density, collocation at their centres, about 1 % from a mesh of half the panel size on the demo); the grounded plane by images",
];

/// The assumptions that hold for a scene built with these settings.
pub fn assumptions(settings: &SolverSettings) -> &'static [&'static str] {
    if settings.conductor_panel().is_some() {
        ASSUMPTIONS_WITH_CONDUCTORS
    } else {
        ASSUMPTIONS
    }
}

/// Checked settings of the solver.
///
/// ```
/// use websigma::field::SolverSettings;
/// let s = SolverSettings::new(1e-9).unwrap();
/// assert_eq!(s.rel_tol(), 1e-9);
/// assert!(SolverSettings::new(0.0).is_err());
/// ```
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SolverSettings {
    rel_tol: f64,
    /// Panel size of the conductors' boundary-element solve [m]; `None`:
    /// conductors do not enter the field (free space over the grounded
    /// plane: the library's default, which the closed-form checks use; the
    /// command line asks for [`Self::with_default_conductors`]).
    conductor_panel: Option<f64>,
    /// Whether the panel size was chosen by the user (then a mesh over the
    /// panel limit is an error) or is the default (then the scene coarsens
    /// the mesh until it fits, and says so).
    panel_given: bool,
}

/// A solver setting out of range.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("`SolverSettings`: {0}")]
pub struct SettingsError(String);

impl SolverSettings {
    /// Smallest relative tolerance accepted (about 100 × machine epsilon).
    pub const MIN_TOL: f64 = 1e-12;
    /// Largest relative tolerance accepted.
    pub const MAX_TOL: f64 = 1e-2;
    /// Default panel size of the conductors' solve [m]: 100 mm. On the demo
    /// line it gives about 3,200 panels and results within about 1 % of
    /// 50 mm panels (measured, README), at a quarter of the memory and a
    /// fifth of the time.
    pub const DEFAULT_CONDUCTOR_PANEL: f64 = 0.1;

    /// Settings with relative tolerance `rel_tol` on V and |E|.
    pub fn new(rel_tol: f64) -> Result<Self, SettingsError> {
        if !(Self::MIN_TOL..=Self::MAX_TOL).contains(&rel_tol) {
            return Err(SettingsError(format!(
                "relative tolerance must be between {:e} and {:e}, got {}",
                Self::MIN_TOL,
                Self::MAX_TOL,
                crate::units::format_quantity(rel_tol, crate::units::Dim::Number)
            )));
        }
        Ok(SolverSettings {
            rel_tol,
            conductor_panel: None,
            panel_given: false,
        })
    }
    /// The same settings with another tolerance.
    pub fn with_tolerance(self, rel_tol: f64) -> Result<Self, SettingsError> {
        Ok(SolverSettings {
            conductor_panel: self.conductor_panel,
            panel_given: self.panel_given,
            ..SolverSettings::new(rel_tol)?
        })
    }
    /// The same settings with the line's conductors solved on panels of
    /// [`Self::DEFAULT_CONDUCTOR_PANEL`], coarsened where a line has so many
    /// conductors that the mesh would exceed the panel limit (the panel
    /// size used is reported with the results).
    pub fn with_default_conductors(self) -> Self {
        SolverSettings {
            conductor_panel: Some(Self::DEFAULT_CONDUCTOR_PANEL),
            panel_given: false,
            ..self
        }
    }
    /// The same settings without conductors (free space over the plane).
    pub fn without_conductors(self) -> Self {
        SolverSettings {
            conductor_panel: None,
            panel_given: false,
            ..self
        }
    }
    /// Whether the panel size was given (not the default).
    pub fn conductor_panel_given(&self) -> bool {
        self.panel_given
    }
    /// The same settings with the charge induced on the line's conductors
    /// (grounded and isolated rollers, `conductors:`) solved on panels of
    /// about `panel_size` [m] (between 1 mm and 1 m).
    pub fn with_conductors(self, panel_size: f64) -> Result<Self, SettingsError> {
        if !(1e-3..=1.0).contains(&panel_size) {
            return Err(SettingsError(format!(
                "conductor panel size must be between 1 mm and 1 m, got {}",
                crate::units::format_quantity(panel_size, crate::units::Dim::Length)
            )));
        }
        Ok(SolverSettings {
            conductor_panel: Some(panel_size),
            panel_given: true,
            ..self
        })
    }
    /// Panel size of the conductors' solve [m], when conductors are solved.
    pub fn conductor_panel(&self) -> Option<f64> {
        self.conductor_panel
    }
    /// Relative tolerance on V and |E|.
    pub fn rel_tol(&self) -> f64 {
        self.rel_tol
    }
}

impl Default for SolverSettings {
    /// Relative tolerance 1e-9.
    fn default() -> Self {
        SolverSettings {
            rel_tol: 1e-9,
            conductor_panel: None,
            panel_given: false,
        }
    }
}

/// The solver could not give a result of the accuracy asked for.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum FieldError {
    /// The point is on (closer than 1 µm to) a charged span
    /// ([`crate::model::geometry::on_web`]).
    #[error("the point [{x:.6} m, {y:.6} m, {z:.6} m] is {shown} from span {span}, closer than 1 µm: it is on the charged web; choose a point at least 1 µm away", x = at[0], y = at[1], z = at[2], shown = crate::units::format_quantity(*distance, crate::units::Dim::Length))]
    OnWeb {
        /// The point [m].
        at: [Meters; 3],
        /// The span's label.
        span: String,
        /// Its distance from the span [m].
        distance: Meters,
    },
    /// A precomputed superposition was asked for a point it does not hold.
    #[error("internal: no precomputed field at [{x:.6} m, {y:.6} m, {z:.6} m]", x = at[0], y = at[1], z = at[2])]
    NotPrecomputed {
        /// The point [m].
        at: [Meters; 3],
    },
    /// The conductors' boundary-element solve failed.
    #[error("conductors: {0}")]
    Conductors(String),
    /// The numerical integration did not reach its tolerance.
    #[error("span {span} at [{x:.6} m, {y:.6} m, {z:.6} m]: {source}", x = at[0], y = at[1], z = at[2])]
    NotConverged {
        /// The point [m].
        at: [Meters; 3],
        /// The span's label.
        span: String,
        /// What the integrator reported.
        source: KernelError,
    },
}

/// One span's share of the field at a point (the span plus its image).
#[derive(Debug, Clone, PartialEq)]
pub struct SpanContribution {
    /// Span label (`S3` or `S3 (R2-R3)`).
    pub span: String,
    /// Span name (`S3`).
    pub name: String,
    /// Field [V/m].
    pub e: [VoltsPerMeter; 3],
    /// Potential [V].
    pub v: Volts,
}

/// Field and potential at one point.
#[derive(Debug, Clone, PartialEq)]
pub struct PointField {
    /// Position [m].
    pub at: [Meters; 3],
    /// Field `[Ex, Ey, Ez]` [V/m].
    pub e: [VoltsPerMeter; 3],
    /// Potential relative to ground [V].
    pub v: Volts,
    /// Per-span shares, in span order (empty unless asked for).
    pub contributions: Vec<SpanContribution>,
}

impl PointField {
    /// |E| [V/m].
    pub fn e_magnitude(&self) -> VoltsPerMeter {
        (self.e[0] * self.e[0] + self.e[1] * self.e[1] + self.e[2] * self.e[2]).sqrt()
    }
}

/// Field and potential at a list of points, in input order.
#[derive(Debug, Clone, PartialEq)]
pub struct FieldMap {
    /// One entry per point.
    pub points: Vec<PointField>,
}

/// Anything that gives the field and potential at a point: the charged
/// scene ([`WebField`]) or a precomputed superposition (the planner's).
pub trait FieldAt: Sync {
    /// Field and potential at `at`; with `contributions`, also per span.
    fn field_at(&self, at: [Meters; 3], contributions: bool) -> Result<PointField, FieldError>;

    /// Whether this is a precomputed superposition that holds exactly the
    /// points a full assessment of the same geometry asked for (the
    /// planner's): a point it does not hold
    /// ([`FieldError::NotPrecomputed`]) is one the full assessment found no
    /// use for, so callers may skip their geometric checks and skip such a
    /// point instead.
    fn is_precomputed(&self) -> bool {
        false
    }
}
