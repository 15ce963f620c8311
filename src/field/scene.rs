//! # The scene: the charge-independent field model of a line
//!
//! Built once per line, before any charge is known: the frame of every
//! straight span, the ground plane whose images every span gets, and the
//! solver settings (and, with conductors, their factorised matrix). Every
//! stage that needs a field — readings, passive-bar onset, assessment,
//! planner influences, the field map — borrows one scene and charges it with
//! [`Scene::web`]; nothing else builds field models.
//!
//! A charged scene evaluates, for a point **r**, the superposition over the
//! spans k and their images in the plane z = z_g,
//!
//! $$ \mathbf E(\mathbf r) = \sum_k \big[\mathbf E_k(\mathbf r) - M\,\mathbf E_k(M\mathbf r)\big], \qquad
//!    V(\mathbf r) = \sum_k \big[V_k(\mathbf r) - V_k(M\mathbf r)\big], $$
//!
//! with M the reflection in the plane and **E**_k, V_k the Coulomb integrals
//! of span k's density σ(s, y) = σc(s)·f(y) (see [`super::kernels`] and
//! [`super::integrate`]); without a plane only the first terms remain.
//!
//! | symbol | meaning | unit |
//! | --- | --- | --- |
//! | **E**, V | field, potential | V/m, V |
//! | σ, σc, f | density, centreline density, across-web shape | C/m², C/m², 1 |
//! | z_g | height of the grounded plane | m |
//!
//! ## Reference
//! Superposition and the method of images (D. J. Griffiths, *Introduction to
//! Electrodynamics*, 4th ed., §2.1 and §3.2).

use super::integrate::{Patch, patch_field};
use super::kernels::{LocalField, QuadPiece};
use super::{FieldAt, FieldError, FieldMap, PointField, SolverSettings, SpanContribution};
use crate::charge::ChargeProfile;
use crate::model::Line;
use crate::model::Span;
use crate::model::geometry::{MIN_POINT_DISTANCE, span_frame};
use crate::units::{Meters, VoltsPerMeter};
use rayon::prelude::*;
use std::cell::Cell;

thread_local! {
    static BUILT: Cell<usize> = const { Cell::new(0) };
}

/// How many scenes this thread has built so far (a test counts the scenes
/// one command builds; scenes are only ever built outside rayon tasks).
pub fn scenes_built_on_this_thread() -> usize {
    BUILT.with(Cell::get)
}

/// One straight span's frame.
#[derive(Debug, Clone)]
struct SpanGeometry {
    span: Span,
    label: String,
    /// Unit vector along the span (3-D).
    t: [f64; 3],
    /// Unit normal t × ŷ (3-D).
    n: [f64; 3],
}

/// The charge-independent field model of a line.
#[derive(Debug, Clone)]
pub struct Scene {
    spans: Vec<SpanGeometry>,
    width: Meters,
    ground: Option<Meters>,
    settings: SolverSettings,
}

impl Scene {
    /// Builds the scene of `line` (once per line; every stage borrows it).
    pub fn new(line: &Line, settings: SolverSettings) -> Result<Scene, FieldError> {
        BUILT.with(|b| b.set(b.get() + 1));
        let spans = line
            .path
            .spans
            .iter()
            .map(|s| {
                let d = s.direction();
                let t = [d[0], 0.0, d[1]];
                // n = t × ŷ = (−t_z, 0, t_x).
                let n = [-t[2], 0.0, t[0]];
                SpanGeometry {
                    span: s.clone(),
                    label: s.label(),
                    t,
                    n,
                }
            })
            .collect();
        Ok(Scene {
            spans,
            width: line.web.width,
            ground: line.ground_plane,
            settings,
        })
    }

    /// The solver settings the scene was built with.
    pub fn settings(&self) -> SolverSettings {
        self.settings
    }

    /// Number of spans.
    pub fn span_count(&self) -> usize {
        self.spans.len()
    }

    /// The scene charged as `charge` says.
    pub fn web<'s>(&'s self, charge: &ChargeProfile) -> WebField<'s> {
        let across = quad_pieces(charge);
        let patches = self
            .spans
            .iter()
            .map(|g| {
                let s = &g.span;
                charge
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
                                across: across.clone(),
                            },
                        )
                    })
                    .collect()
            })
            .collect();
        WebField {
            scene: self,
            patches,
        }
    }

    /// The scene charged with a unit centreline density (1 C/m²) on the
    /// path from `s0` to `s1` [m] only, relaxing from `s0` with the decay
    /// length and across-web shape of `like`.
    pub fn unit_piece<'s>(&'s self, like: &ChargeProfile, s0: Meters, s1: Meters) -> WebField<'s> {
        let mut p = like.clone();
        p.segments = vec![crate::charge::ChargeSegment {
            s_start: s0,
            s_end: s1,
            amplitude: 1.0,
            origin: crate::charge::SegmentOrigin::CarriedIn,
            from_readings: false,
        }];
        self.web(&p)
    }
}

fn quad_pieces(charge: &ChargeProfile) -> Vec<QuadPiece> {
    charge
        .across
        .pieces()
        .iter()
        .map(|p| QuadPiece {
            y_lo: p.y_lo,
            y_hi: p.y_hi,
            c: p.c,
        })
        .collect()
}

/// A scene with charge on its web, ready for evaluation at any number of
/// points.
#[derive(Debug, Clone)]
pub struct WebField<'s> {
    scene: &'s Scene,
    /// Per span: patches with their along-span offset [m].
    patches: Vec<Vec<(f64, Patch)>>,
}

impl WebField<'_> {
    /// Field and potential at `at`; with `contributions`, also per span.
    pub fn at(&self, at: [Meters; 3], contributions: bool) -> Result<PointField, FieldError> {
        let mut e = [0.0; 3];
        let mut v = 0.0;
        let mut parts = Vec::new();
        for (g, patches) in self.scene.spans.iter().zip(&self.patches) {
            let mut f = self.span_field(g, patches, at)?;
            if let Some(zg) = self.scene.ground {
                let mirrored = [at[0], at[1], 2.0 * zg - at[2]];
                let img = self.span_field(g, patches, mirrored)?;
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
                    span: g.label.clone(),
                    name: g.span.name.clone(),
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

    /// Field and potential at every point (in parallel), in input order.
    pub fn solve(
        &self,
        points: &[[Meters; 3]],
        contributions: bool,
    ) -> Result<FieldMap, FieldError> {
        let points = points
            .par_iter()
            .map(|&p| self.at(p, contributions))
            .collect::<Result<Vec<_>, _>>()?;
        Ok(FieldMap { points })
    }

    /// |E| on a regular grid in the side-view plane at across position `y`:
    /// `nx × nz` points over `x ∈ [x0, x1]`, `z ∈ [z0, z1]`, row-major by z
    /// (`values[iz * nx + ix]`) [V/m]. Points on the web (within 1 µm) are NaN.
    pub fn side_view_grid(
        &self,
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
                self.at(p, false)
                    .map(|f| f.e_magnitude())
                    .unwrap_or(f64::NAN)
            })
            .collect();
        (xs, zs, values)
    }

    /// Field of one span (not its image) at a point, in global coordinates.
    fn span_field(
        &self,
        g: &SpanGeometry,
        patches: &[(f64, Patch)],
        at: [f64; 3],
    ) -> Result<LocalField, FieldError> {
        let frame = span_frame(&g.span, self.scene.width, at);
        if frame.distance < MIN_POINT_DISTANCE {
            return Err(FieldError::OnWeb {
                at,
                span: g.label.clone(),
                distance: frame.distance,
            });
        }
        let mut local = LocalField::default();
        for (offset, patch) in patches {
            let p = [frame.u - offset, frame.y, frame.h];
            let f = patch_field(patch, p, self.scene.settings.rel_tol()).map_err(|source| {
                FieldError::NotConverged {
                    at,
                    span: g.label.clone(),
                    source,
                }
            })?;
            local.add(&f);
        }
        // Back to global coordinates: E = E_u t + E_y ŷ + E_h n.
        let e = [
            local.e[0] * g.t[0] + local.e[2] * g.n[0],
            local.e[1],
            local.e[0] * g.t[2] + local.e[2] * g.n[2],
        ];
        Ok(LocalField { v: local.v, e })
    }
}

impl FieldAt for WebField<'_> {
    fn field_at(&self, at: [Meters; 3], contributions: bool) -> Result<PointField, FieldError> {
        self.at(at, contributions)
    }
}
