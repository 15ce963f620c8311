//! # Field and potential of the charged web, by superposition
//!
//! Third stage of the pipeline: `(Line, ChargeProfile) → FieldMap`. Every
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

pub mod integrate;
pub mod kernels;

use crate::charge::ChargeProfile;
use crate::model::{Line, Span};
use crate::units::{Meters, Volts, VoltsPerMeter};
use integrate::{KernelError, Patch, patch_field};
use kernels::{LocalField, QuadPiece};
use rayon::prelude::*;

/// The modelling assumptions, shown in every output.
pub const ASSUMPTIONS: &[&str] = &[
    "the web is a thin charged sheet in free space: its own permittivity and the charge induced on rollers and frames are not modelled (except the grounded plane, by images)",
    "only the straight spans are integrated; the charge on the wrap arcs (in contact with the rollers) is not",
    "rollers are taken to be as long as the web is wide and do not screen the field",
];

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

    /// Settings with relative tolerance `rel_tol` on V and |E|.
    pub fn new(rel_tol: f64) -> Result<Self, SettingsError> {
        if !(Self::MIN_TOL..=Self::MAX_TOL).contains(&rel_tol) {
            return Err(SettingsError(format!(
                "relative tolerance must be between {:e} and {:e}, got {rel_tol:e}",
                Self::MIN_TOL,
                Self::MAX_TOL
            )));
        }
        Ok(SolverSettings { rel_tol })
    }
    /// The same settings with another tolerance.
    pub fn with_tolerance(self, rel_tol: f64) -> Result<Self, SettingsError> {
        SolverSettings::new(rel_tol)
    }
    /// Relative tolerance on V and |E|.
    pub fn rel_tol(&self) -> f64 {
        self.rel_tol
    }
}

impl Default for SolverSettings {
    /// Relative tolerance 1e-9.
    fn default() -> Self {
        SolverSettings { rel_tol: 1e-9 }
    }
}

/// The solver could not give a result of the accuracy asked for.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum FieldError {
    /// The point is on (or within 1 µm of) a charged span.
    #[error("the point [{x:.6} m, {y:.6} m, {z:.6} m] is {distance:.2e} m from span {span}, i.e. on the charged web: choose a point at least 1 µm away", x = at[0], y = at[1], z = at[2])]
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

/// A span ready for integration: its frame and its charged patches.
#[derive(Debug, Clone)]
struct ChargedSpan {
    label: String,
    name: String,
    /// Start of the span, 3-D [m].
    origin: [f64; 3],
    /// Unit vector along the span.
    t: [f64; 3],
    /// Unit normal (t × ŷ).
    n: [f64; 3],
    length: f64,
    half_width: f64,
    /// Patches with their along-span offset [m].
    patches: Vec<(f64, Patch)>,
}

/// The charged web ready for evaluation at any number of points.
#[derive(Debug, Clone)]
pub struct FieldModel {
    spans: Vec<ChargedSpan>,
    ground: Option<f64>,
    settings: SolverSettings,
}

fn dot(a: [f64; 3], b: [f64; 3]) -> f64 {
    a[0] * b[0] + a[1] * b[1] + a[2] * b[2]
}

impl FieldModel {
    /// Prepares the spans of `line` charged as `charge` says.
    pub fn new(line: &Line, charge: &ChargeProfile, settings: SolverSettings) -> Self {
        let across: Vec<QuadPiece> = charge
            .across
            .pieces()
            .iter()
            .map(|p| QuadPiece {
                y_lo: p.y_lo,
                y_hi: p.y_hi,
                c: p.c,
            })
            .collect();
        let spans = line
            .path
            .spans
            .iter()
            .map(|s| charged_span(s, charge, &across, line.web.width))
            .collect();
        FieldModel {
            spans,
            ground: line.ground_plane,
            settings,
        }
    }

    /// Number of spans.
    pub fn span_count(&self) -> usize {
        self.spans.len()
    }

    /// Field and potential at `at`; with `contributions`, also per span.
    pub fn at(&self, at: [Meters; 3], contributions: bool) -> Result<PointField, FieldError> {
        let mut e = [0.0; 3];
        let mut v = 0.0;
        let mut parts = Vec::new();
        for span in &self.spans {
            let mut f = self.span_field(span, at, false)?;
            if let Some(g) = self.ground {
                let mirrored = [at[0], at[1], 2.0 * g - at[2]];
                let img = self.span_field(span, mirrored, true)?;
                f.v -= img.v;
                f.e[0] -= img.e[0];
                f.e[1] -= img.e[1];
                f.e[2] += img.e[2];
            }
            v += f.v;
            for (ek, fk) in e.iter_mut().zip(f.e) {
                *ek += fk;
            }
            if contributions {
                parts.push(SpanContribution {
                    span: span.label.clone(),
                    name: span.name.clone(),
                    e: f.e,
                    v: f.v,
                });
            }
        }
        Ok(PointField {
            at,
            e,
            v,
            contributions: parts,
        })
    }

    /// Field of one span (not its image) at a point, in global coordinates.
    /// `image` only relaxes the on-web check (a mirrored point may not sit on
    /// the original span unless the span lies in the ground plane).
    fn span_field(
        &self,
        span: &ChargedSpan,
        at: [f64; 3],
        image: bool,
    ) -> Result<LocalField, FieldError> {
        let rel = [
            at[0] - span.origin[0],
            at[1] - span.origin[1],
            at[2] - span.origin[2],
        ];
        let u = dot(rel, span.t);
        let y = rel[1];
        let h = dot(rel, span.n);
        let du = if u < 0.0 {
            -u
        } else if u > span.length {
            u - span.length
        } else {
            0.0
        };
        let dy = (y.abs() - span.half_width).max(0.0);
        let dist = (du * du + dy * dy + h * h).sqrt();
        if dist < crate::model::validate::MIN_POINT_DISTANCE {
            let _ = image;
            return Err(FieldError::OnWeb {
                at,
                span: span.label.clone(),
                distance: dist,
            });
        }
        let mut local = LocalField::default();
        for (offset, patch) in &span.patches {
            let p = [u - offset, y, h];
            let f = patch_field(patch, p, self.settings.rel_tol).map_err(|source| {
                FieldError::NotConverged {
                    at,
                    span: span.label.clone(),
                    source,
                }
            })?;
            local.add(&f);
        }
        // Back to global coordinates: E = E_u t + E_y ŷ + E_h n.
        let g = [
            local.e[0] * span.t[0] + local.e[2] * span.n[0],
            local.e[1],
            local.e[0] * span.t[2] + local.e[2] * span.n[2],
        ];
        Ok(LocalField { v: local.v, e: g })
    }
}

fn charged_span(s: &Span, charge: &ChargeProfile, across: &[QuadPiece], width: f64) -> ChargedSpan {
    let d = s.direction();
    let t = [d[0], 0.0, d[1]];
    // n = t × ŷ = (−t_z, 0, t_x)... (t_x, 0, t_z) × (0, 1, 0) = (−t_z, 0, t_x).
    let n = [-t[2], 0.0, t[0]];
    let patches = charge
        .pieces_between(s.s_start, s.s_end)
        .into_iter()
        .filter(|(_, _, a)| *a != 0.0)
        .map(|(a, b, amp)| {
            (
                a - s.s_start,
                Patch {
                    len: b - a,
                    amplitude: amp,
                    decay_length: charge.decay_length,
                    across: across.to_vec(),
                },
            )
        })
        .collect();
    ChargedSpan {
        label: s.label(),
        name: s.name.clone(),
        origin: [s.start[0], 0.0, s.start[1]],
        t,
        n,
        length: s.length,
        half_width: width / 2.0,
        patches,
    }
}

/// Anything that gives the field and potential at a point: the solver
/// itself ([`FieldModel`]) or a precomputed superposition (the planner's).
pub trait FieldAt: Sync {
    /// Field and potential at `at`; with `contributions`, also per span.
    fn field_at(&self, at: [Meters; 3], contributions: bool) -> Result<PointField, FieldError>;
}

impl FieldAt for FieldModel {
    fn field_at(&self, at: [Meters; 3], contributions: bool) -> Result<PointField, FieldError> {
        self.at(at, contributions)
    }
}

/// Field and potential at every point (in parallel), in input order.
pub fn solve(
    line: &Line,
    charge: &ChargeProfile,
    points: &[[Meters; 3]],
    settings: SolverSettings,
    contributions: bool,
) -> Result<FieldMap, FieldError> {
    let model = FieldModel::new(line, charge, settings);
    let points = points
        .par_iter()
        .map(|&p| model.at(p, contributions))
        .collect::<Result<Vec<_>, _>>()?;
    Ok(FieldMap { points })
}

/// |E| on a regular grid in the side-view plane at across position `y`:
/// `nx × nz` points over `x ∈ [x0, x1]`, `z ∈ [z0, z1]`, row-major by z
/// (`values[iz * nx + ix]`) [V/m]. Points on the web (within 1 µm) are NaN.
pub fn side_view_grid(
    model: &FieldModel,
    x: [Meters; 2],
    z: [Meters; 2],
    nx: usize,
    nz: usize,
    y: Meters,
) -> (Vec<Meters>, Vec<Meters>, Vec<VoltsPerMeter>) {
    let step = |a: f64, b: f64, n: usize, i: usize| {
        if n > 1 {
            a + (b - a) * i as f64 / (n - 1) as f64
        } else {
            a
        }
    };
    let xs: Vec<f64> = (0..nx).map(|i| step(x[0], x[1], nx, i)).collect();
    let zs: Vec<f64> = (0..nz).map(|i| step(z[0], z[1], nz, i)).collect();
    let values: Vec<f64> = (0..nx * nz)
        .into_par_iter()
        .map(|k| {
            let p = [xs[k % nx], y, zs[k / nx]];
            model
                .at(p, false)
                .map(|f| f.e_magnitude())
                .unwrap_or(f64::NAN)
        })
        .collect();
    (xs, zs, values)
}
