//! # Meshing conductor surfaces into flat rectangular panels
//!
//! Field stage, conductor part: turns the plain geometry of a conductor
//! ([`Shape`]) into flat rectangular panels for the boundary-element solve in
//! [`super::bem`]. Each panel carries one unknown, constant surface charge
//! density; its influence anywhere is the exact closed form of
//! [`super::kernels::rectangle_geometry`], so the only discretisation errors
//! are the constant density per panel and, for a cylinder, the facets.
//!
//! ## Shapes
//! - **Plate**: the rectangle origin + s·e₁ + t·e₂, s, t ∈ [0, 1], e₁ ⟂ e₂.
//!   A thin plate is one layer of panels carrying the *total* density of both
//!   faces (σ = σ_top + σ_bottom): the usual zero-thickness model, exact for
//!   the field outside a plate thin compared with its distance to the field
//!   points (R. F. Harrington, *Field Computation by Moment Methods*, 1968,
//!   ch. 2, the charged plate).
//! - **Cuboid**: six faces, each meshed as a plate.
//! - **Cylinder**: a prism of N flat facets (N = ⌈2πr/h⌉ for panel size h,
//!   at least [`MIN_FACETS`] and the settings' minimum), closed by its
//!   two end faces (regular N-gons). The facet circumradius r_f is chosen so
//!   that the prism's perimeter equals the circle's,
//!   N·2r_f·sin(π/N) = 2πr, i.e. r_f = πr/(N sin(π/N)): the lateral area is
//!   exact, and the collocation points (facet centres, at the apothem
//!   r_a = r_f cos(π/N) = r·(π/N)/tan(π/N) ≈ r(1 − π²/(3N²))) lie within
//!   π²/(3N²) relative of the true surface (0.6 % for N = 24). Each N-gon end
//!   face is cut into N wedges, each wedge into rings; the trapezoid between
//!   ring fractions f₁ < f₂ of the apothem becomes the rectangle of the same
//!   radial extent r_a(f₂ − f₁) and the mean tangential width w(f₁ + f₂)/2
//!   (w the facet width), centred mid-ring: the same area as the trapezoid
//!   (so the end face's area is exact) and the same radial band.
//! - **Sphere** (radius a): latitude bands of equal polar-angle width
//!   Δ = π/N_b (N_b = ⌈πa/h⌉ for panel size h, at least [`MIN_BANDS`] and
//!   half the settings' minimum facets, so the rings by the equator have
//!   about that many panels). Each pole is one square cap panel tangent at
//!   the pole, of the area 2πa²(1 − cos(Δ/2)) of the cap θ < Δ/2; between
//!   the caps, N_b − 1 bands θ₁ < θ < θ₂ = θ₁ + Δ, each cut into
//!   N_φ = ⌈2N_b sin θ_c⌉ equal azimuthal cells (θ_c the mid-angle), so the
//!   cells are about square. Each cell becomes the rectangle tangent to the
//!   sphere at (θ̄, φ_c), φ_c the mid-azimuth and θ̄ the cell's mean polar
//!   angle over its area, θ̄ = [sin θ − θ cos θ]₁² / (cos θ₁ − cos θ₂), with
//!   sides along the meridian (e_θ, length aΔ) and the parallel (e_φ),
//!   the latter chosen so the area equals the cell's, a²(cos θ₁ − cos θ₂)Δφ:
//!   every panel has its cell's exact area, so the total is exactly 4πa²
//!   (to rounding), and every side is at most aΔ ≤ h. The collocation points
//!   lie on the sphere; a panel's other points lie outside it, a point at
//!   distance ρ from the centre by √(a² + ρ²) − a ≈ ρ²/(2a): at most about
//!   aΔ²/4 at a corner and aΔ²/12 on average over a square panel (0.8 % and
//!   0.3 % of a for N_b = 10). The cells' shape is not kept: by the poles
//!   the cells are trapezoids (the first ring's parallels differ by a factor
//!   sin(3Δ/2)/sin(Δ/2) ≈ 3) and become rectangles of the same area and
//!   meridional extent. A sphere has no edges: grading does not apply.
//!
//! ## Edge grading
//! The charge density of a conductor is singular at its edges (∝ d^(−1/3) at
//! a right-angled edge, ∝ d^(−1/2) at the edge of a thin plate: J. D. Jackson,
//! *Classical Electrodynamics*, 3rd ed., §2.11, from memory). Panels are therefore made
//! smaller towards edges: on [0, 1] the nodes are
//! s_i = (1 − g)·i/n + g·(1 − cos(πi/n))/2 (both ends edges) or
//! s_i = (1 − g)·i/n + g·sin(πi/(2n)) (edge at s = 1 only), g ∈ [0, 1) the
//! grading. The largest spacing is (1 − g + gπ/2)/n, so n is raised by that
//! factor to keep every panel at most the panel size.
//!
//! | symbol | meaning | unit |
//! | --- | --- | --- |
//! | r, r_f, r_a | cylinder radius, facet circumradius, apothem | m |
//! | N | number of facets around a cylinder | 1 |
//! | w | facet width, 2r_f sin(π/N) = 2πr/N | m |
//! | g | grading, 0 = uniform | 1 |
//! | n | panels along one edge | 1 |
//! | a | sphere radius | m |
//! | N_b, Δ | latitude bands on a sphere, their polar-angle width π/N_b | 1, rad |
//! | θ, φ | polar angle from +z, azimuth from +x about the sphere's centre | rad |

use std::f64::consts::PI;

use super::kernels::{LocalField, rectangle_geometry};

/// Beyond this many larger half-sides from a panel's centre its influence is
/// taken with the 2 × 2 Gauss rule (see [`Panel::factors`]).
pub const GAUSS2_RATIO: f64 = 30.0;
/// Beyond this many larger half-sides (and within [`GAUSS2_RATIO`]) the
/// 3 × 3 Gauss rule.
pub const GAUSS3_RATIO: f64 = 8.0;
const GL2_NODES: [f64; 2] = [-0.577_350_269_189_625_8, 0.577_350_269_189_625_8];
const GL2_WEIGHTS: [f64; 2] = [1.0, 1.0];
const GL3_NODES: [f64; 3] = [-0.774_596_669_241_483_4, 0.0, 0.774_596_669_241_483_4];
const GL3_WEIGHTS: [f64; 3] = [5.0 / 9.0, 8.0 / 9.0, 5.0 / 9.0];

/// Fewest facets around a cylinder.
pub const MIN_FACETS: usize = 12;
/// Fewest latitude bands on a sphere (the rings by its equator then have
/// about twice as many panels).
pub const MIN_BANDS: usize = 6;
/// Shortest accepted length of any conductor dimension [m] (the closed-form
/// kernels are accurate from about 1e-6 m, see [`super::kernels`]).
pub const MIN_SIZE: f64 = crate::model::conductor::MIN_CONDUCTOR_SIZE;
/// Longest accepted length of any conductor dimension [m].
pub const MAX_SIZE: f64 = crate::model::conductor::MAX_CONDUCTOR_SIZE;
/// Largest |e₁·e₂|/(|e₁||e₂|) accepted for a plate's edges (perpendicular to
/// rounding of typed-in coordinates).
const MAX_SKEW: f64 = 1e-9;

/// The surface of one conductor (x along the machine, y across, z up) [m].
#[derive(Debug, Clone, PartialEq)]
pub enum Shape {
    /// A closed circular cylinder (with its two end discs).
    Cylinder {
        /// Centre of the axis [m].
        center: [f64; 3],
        /// Direction of the axis (normalised here; any non-zero length).
        axis: [f64; 3],
        /// Radius [m].
        radius: f64,
        /// Length along the axis [m].
        length: f64,
    },
    /// A thin rectangular plate, origin + s·e₁ + t·e₂ for s, t ∈ [0, 1].
    Plate {
        /// One corner [m].
        origin: [f64; 3],
        /// First edge [m].
        e1: [f64; 3],
        /// Second edge, perpendicular to the first [m].
        e2: [f64; 3],
    },
    /// An axis-aligned box.
    Cuboid {
        /// Lowest corner [m].
        min: [f64; 3],
        /// Highest corner [m].
        max: [f64; 3],
    },
    /// A sphere.
    Sphere {
        /// Centre [m].
        center: [f64; 3],
        /// Radius [m].
        radius: f64,
    },
}

/// A shape that cannot be meshed; the message says what is accepted.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("{0}")]
pub struct ShapeError(pub String);

/// One flat rectangular panel with constant density: centre, orthonormal
/// frame (e_u, e_v in the panel, e_n normal) and half-sides.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Panel {
    /// Centroid, the collocation point [m].
    pub center: [f64; 3],
    /// Unit vector along the first side [1].
    pub eu: [f64; 3],
    /// Unit vector along the second side [1].
    pub ev: [f64; 3],
    /// Unit normal [1].
    pub en: [f64; 3],
    /// Half-length along e_u [m].
    pub half_u: f64,
    /// Half-length along e_v [m].
    pub half_v: f64,
}

impl Panel {
    /// Area [m²].
    pub fn area(&self) -> f64 {
        4.0 * self.half_u * self.half_v
    }

    /// ∬ dA′/R [m] at `x` (the potential of unit density times 4πε₀).
    ///
    /// Exact closed form near the panel; far from it a tensor Gauss–Legendre
    /// rule (see [`Panel::factors`] for the distances and the error bound).
    #[inline]
    pub fn potential_factor(&self, x: [f64; 3]) -> f64 {
        let l = self.local(x);
        match self.far_rule(l) {
            Some(n) => self.gauss(l, n, false).v,
            None => rectangle_geometry(-self.half_u, self.half_u, -self.half_v, self.half_v, l).v,
        }
    }

    /// ∬ dA′/R [m] and ∬ (x − r′)/R³ dA′ [1] (global components) at `x`.
    ///
    /// Near the panel (distance r from its centre below [`GAUSS3_RATIO`]·h,
    /// h the larger half-side) the exact closed form of
    /// [`rectangle_geometry`]; farther, an n × n tensor Gauss–Legendre rule
    /// over the panel, n = 3 up to [`GAUSS2_RATIO`]·h and n = 2 beyond. The
    /// n-point rule integrates polynomials of degree 2n − 1 exactly; the
    /// integrands 1/R and (x − r′)/R³ are analytic on the panel for r > √2·h,
    /// with Taylor coefficients in (h/r)^k, so the relative error falls like
    /// (h/r)^(2n) (Davis & Rabinowitz, *Methods of Numerical Integration*,
    /// 2nd ed., §2.7, the Gauss error term; measured: halving h/r divides the
    /// error by 16 for n = 2 and 64 for n = 3). The thresholds keep the
    /// relative error of V and of **E** (vector norm) below 1e-6 in every
    /// direction, measured for panels of aspect ratio 1 to 5 in this
    /// module's tests (`far_rules_match_the_closed_form`); the largest, for
    /// **E** with n = 3 at 8·h, is 6e-7. Cost: 4 or 9 square roots against
    /// logarithms and arctangents for the closed form.
    #[inline]
    pub fn factors(&self, x: [f64; 3]) -> LocalField {
        let l = self.local(x);
        let f = match self.far_rule(l) {
            Some(n) => self.gauss(l, n, true),
            None => rectangle_geometry(-self.half_u, self.half_u, -self.half_v, self.half_v, l),
        };
        let mut e = [0.0; 3];
        for (k, ek) in e.iter_mut().enumerate() {
            *ek = f.e[0] * self.eu[k] + f.e[1] * self.ev[k] + f.e[2] * self.en[k];
        }
        LocalField { v: f.v, e }
    }

    /// The Gauss order to use at local point `l`, or `None` for the closed form.
    #[inline]
    fn far_rule(&self, l: [f64; 3]) -> Option<usize> {
        let h = self.half_u.max(self.half_v);
        let r2 = l[0] * l[0] + l[1] * l[1] + l[2] * l[2];
        if r2 >= (GAUSS2_RATIO * h).powi(2) {
            Some(2)
        } else if r2 >= (GAUSS3_RATIO * h).powi(2) {
            Some(3)
        } else {
            None
        }
    }

    /// The n × n Gauss–Legendre rule (n = 2 or 3) for V and, if `field`,
    /// the local field factors at local point `l`.
    #[inline]
    fn gauss(&self, l: [f64; 3], n: usize, field: bool) -> LocalField {
        let (nodes, weights): (&[f64], &[f64]) = if n == 2 {
            (&GL2_NODES, &GL2_WEIGHTS)
        } else {
            (&GL3_NODES, &GL3_WEIGHTS)
        };
        let jac = self.half_u * self.half_v;
        let mut out = LocalField::default();
        for (a, wa) in nodes.iter().zip(weights) {
            let du = l[0] - a * self.half_u;
            for (b, wb) in nodes.iter().zip(weights) {
                let dv = l[1] - b * self.half_v;
                let r2 = du * du + dv * dv + l[2] * l[2];
                let inv = 1.0 / r2.sqrt();
                let w = wa * wb * jac;
                out.v += w * inv;
                if field {
                    let k = w * inv * inv * inv;
                    out.e[0] += k * du;
                    out.e[1] += k * dv;
                    out.e[2] += k * l[2];
                }
            }
        }
        out
    }

    /// `x` in the panel's frame [m].
    #[inline]
    fn local(&self, x: [f64; 3]) -> [f64; 3] {
        let d = sub(x, self.center);
        [dot(d, self.eu), dot(d, self.ev), dot(d, self.en)]
    }

    /// The lowest z of the panel's corners [m].
    pub fn z_min(&self) -> f64 {
        self.center[2] - (self.half_u * self.eu[2]).abs() - (self.half_v * self.ev[2]).abs()
    }
}

/// Meshing parameters (checked by `BemSettings`).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MeshParams {
    /// Largest panel side [m].
    pub panel_size: f64,
    /// Edge grading g ∈ [0, 1).
    pub grading: f64,
    /// Fewest facets around a cylinder (at least [`MIN_FACETS`]).
    pub min_facets: usize,
}

impl MeshParams {
    /// Panels along an edge of length `len` (at least `min`), allowing for grading.
    fn count(&self, len: f64, min: usize) -> usize {
        let factor = 1.0 - self.grading + self.grading * PI / 2.0;
        let n = (len * factor / self.panel_size).ceil();
        // Bounded by the caller's size checks; the cast saturates anyway.
        (n as usize).max(min)
    }
}

/// Nodes on [0, 1] graded towards both ends (`two_sided`) or towards 1 only.
pub fn graded_nodes(n: usize, g: f64, two_sided: bool) -> Vec<f64> {
    (0..=n)
        .map(|i| {
            let x = i as f64 / n as f64;
            let curved = if two_sided {
                0.5 * (1.0 - (PI * x).cos())
            } else {
                (0.5 * PI * x).sin()
            };
            if i == n {
                1.0
            } else {
                (1.0 - g) * x + g * curved
            }
        })
        .collect()
}

/// Panels of one shape.
pub fn mesh(shape: &Shape, p: &MeshParams) -> Result<Vec<Panel>, ShapeError> {
    match shape {
        Shape::Plate { origin, e1, e2 } => plate(*origin, *e1, *e2, p),
        Shape::Cuboid { min, max } => cuboid(*min, *max, p),
        Shape::Cylinder {
            center,
            axis,
            radius,
            length,
        } => cylinder(*center, *axis, *radius, *length, p),
        Shape::Sphere { center, radius } => sphere(*center, *radius, p),
    }
}

fn check_size(what: &str, v: f64) -> Result<(), ShapeError> {
    if !v.is_finite() || !(MIN_SIZE..=MAX_SIZE).contains(&v) {
        return Err(ShapeError(format!(
            "{what} is {}: expected a length between 10 µm and 1 km",
            crate::units::format_quantity(v, crate::units::Dim::Length)
        )));
    }
    Ok(())
}

fn check_point(what: &str, x: [f64; 3]) -> Result<(), ShapeError> {
    if x.iter().any(|c| !c.is_finite() || c.abs() > 1e4) {
        return Err(ShapeError(format!(
            "{what} [{}, {}, {}] is not a finite point within 10 km of the origin",
            x[0], x[1], x[2]
        )));
    }
    Ok(())
}

fn plate(
    origin: [f64; 3],
    e1: [f64; 3],
    e2: [f64; 3],
    p: &MeshParams,
) -> Result<Vec<Panel>, ShapeError> {
    check_point("plate origin", origin)?;
    let (l1, l2) = (norm(e1), norm(e2));
    check_size("plate edge e1", l1)?;
    check_size("plate edge e2", l2)?;
    let skew = dot(e1, e2) / (l1 * l2);
    if skew.abs() > MAX_SKEW {
        return Err(ShapeError(format!(
            "plate edges e1 and e2 are not perpendicular (cosine of the angle between them {skew:.3e}): give a rectangle, with e1·e2 = 0"
        )));
    }
    let eu = scale(e1, 1.0 / l1);
    let ev = scale(e2, 1.0 / l2);
    let en = cross(eu, ev);
    let su = graded_nodes(p.count(l1, 2), p.grading, true);
    let sv = graded_nodes(p.count(l2, 2), p.grading, true);
    let mut out = Vec::with_capacity((su.len() - 1) * (sv.len() - 1));
    for a in su.windows(2) {
        for b in sv.windows(2) {
            let cu = 0.5 * (a[0] + a[1]) * l1;
            let cv = 0.5 * (b[0] + b[1]) * l2;
            out.push(Panel {
                center: add(origin, add(scale(eu, cu), scale(ev, cv))),
                eu,
                ev,
                en,
                half_u: 0.5 * (a[1] - a[0]) * l1,
                half_v: 0.5 * (b[1] - b[0]) * l2,
            });
        }
    }
    Ok(out)
}

fn cuboid(min: [f64; 3], max: [f64; 3], p: &MeshParams) -> Result<Vec<Panel>, ShapeError> {
    check_point("box min", min)?;
    check_point("box max", max)?;
    let d = sub(max, min);
    for (k, name) in ["x", "y", "z"].iter().enumerate() {
        check_size(&format!("box size along {name} (max − min)"), d[k])?;
    }
    let ex = [d[0], 0.0, 0.0];
    let ey = [0.0, d[1], 0.0];
    let ez = [0.0, 0.0, d[2]];
    let mut out = Vec::new();
    // Two faces normal to each axis: (corner, e1, e2).
    let faces = [
        (min, ey, ez),
        (add(min, ex), ey, ez),
        (min, ex, ez),
        (add(min, ey), ex, ez),
        (min, ex, ey),
        (add(min, ez), ex, ey),
    ];
    for (o, a, b) in faces {
        out.extend(plate(o, a, b, p)?);
    }
    Ok(out)
}

fn cylinder(
    center: [f64; 3],
    axis: [f64; 3],
    radius: f64,
    length: f64,
    p: &MeshParams,
) -> Result<Vec<Panel>, ShapeError> {
    check_point("cylinder centre", center)?;
    check_size("cylinder radius", radius)?;
    check_size("cylinder length", length)?;
    let la = norm(axis);
    if !la.is_finite() || la < 1e-12 {
        return Err(ShapeError(format!(
            "cylinder axis [{}, {}, {}] has no direction: give a non-zero vector along the axis",
            axis[0], axis[1], axis[2]
        )));
    }
    let a = scale(axis, 1.0 / la);
    // p1 ⟂ a: cross with the coordinate axis least aligned with a.
    let k = (0..3)
        .min_by(|&i, &j| a[i].abs().total_cmp(&a[j].abs()))
        .unwrap_or(0);
    let mut ek = [0.0; 3];
    ek[k] = 1.0;
    let p1 = normalise(cross(a, ek));
    let p2 = cross(a, p1);
    let nf = ((2.0 * PI * radius / p.panel_size).ceil() as usize)
        .max(p.min_facets)
        .max(MIN_FACETS);
    let half = PI / nf as f64;
    let rf = PI * radius / (nf as f64 * half.sin());
    let apothem = rf * half.cos();
    let width = 2.0 * rf * half.sin();
    let sl = graded_nodes(p.count(length, 2), p.grading, true);
    let sr = graded_nodes(p.count(apothem, 1), p.grading, false);
    let mut out = Vec::new();
    for f in 0..nf {
        let phi = (2 * f + 1) as f64 * half;
        let n = add(scale(p1, phi.cos()), scale(p2, phi.sin()));
        let t = add(scale(p1, -phi.sin()), scale(p2, phi.cos()));
        for s in sl.windows(2) {
            let along = (0.5 * (s[0] + s[1]) - 0.5) * length;
            out.push(Panel {
                center: add(center, add(scale(a, along), scale(n, apothem))),
                eu: a,
                ev: t,
                en: n,
                half_u: 0.5 * (s[1] - s[0]) * length,
                half_v: 0.5 * width,
            });
        }
        for end in [-0.5, 0.5] {
            let c_end = add(center, scale(a, end * length));
            for r in sr.windows(2) {
                out.push(Panel {
                    center: add(c_end, scale(n, 0.5 * (r[0] + r[1]) * apothem)),
                    eu: n,
                    ev: t,
                    en: a,
                    half_u: 0.5 * (r[1] - r[0]) * apothem,
                    half_v: 0.25 * (r[0] + r[1]) * width,
                });
            }
        }
    }
    Ok(out)
}

/// Latitude–longitude panels of a sphere (see the module header).
fn sphere(center: [f64; 3], radius: f64, p: &MeshParams) -> Result<Vec<Panel>, ShapeError> {
    check_point("sphere centre", center)?;
    check_size("sphere radius", radius)?;
    let a = radius;
    // Bounded by the size checks (πa/h ≤ π·1e3/1e-5); the cast saturates anyway.
    let nb = ((PI * a / p.panel_size).ceil() as usize)
        .max(p.min_facets.div_ceil(2))
        .max(MIN_BANDS);
    let dt = PI / nb as f64;
    let mut out = Vec::new();
    // Polar caps θ < Δ/2 (and mirrored): squares of the cap's area, tangent at the pole.
    let cap = 2.0 * PI * a * a * (1.0 - (0.5 * dt).cos());
    for pole in [1.0, -1.0] {
        let half = 0.5 * cap.sqrt();
        out.push(Panel {
            center: add(center, [0.0, 0.0, pole * a]),
            eu: [1.0, 0.0, 0.0],
            ev: [0.0, pole, 0.0],
            en: [0.0, 0.0, pole],
            half_u: half,
            half_v: half,
        });
    }
    for i in 0..nb - 1 {
        let t1 = (i as f64 + 0.5) * dt;
        let t2 = t1 + dt;
        let tc = 0.5 * (t1 + t2);
        let (c1, c2) = (t1.cos(), t2.cos());
        let band = c1 - c2;
        let mean_theta = ((t2.sin() - t2 * c2) - (t1.sin() - t1 * c1)) / band;
        let (st, ct) = mean_theta.sin_cos();
        let nphi = ((2.0 * nb as f64 * tc.sin()).ceil() as usize).max(3);
        let dphi = 2.0 * PI / nphi as f64;
        let half_u = 0.5 * a * dt;
        let half_v = a * a * band * dphi / (4.0 * half_u);
        for j in 0..nphi {
            let (sp, cp) = ((j as f64 + 0.5) * dphi).sin_cos();
            let en = [st * cp, st * sp, ct];
            out.push(Panel {
                center: add(center, scale(en, a)),
                eu: [ct * cp, ct * sp, -st],
                ev: [-sp, cp, 0.0],
                en,
                half_u,
                half_v,
            });
        }
    }
    Ok(out)
}

#[inline]
pub(crate) fn sub(a: [f64; 3], b: [f64; 3]) -> [f64; 3] {
    [a[0] - b[0], a[1] - b[1], a[2] - b[2]]
}
#[inline]
pub(crate) fn add(a: [f64; 3], b: [f64; 3]) -> [f64; 3] {
    [a[0] + b[0], a[1] + b[1], a[2] + b[2]]
}
#[inline]
pub(crate) fn scale(a: [f64; 3], k: f64) -> [f64; 3] {
    [a[0] * k, a[1] * k, a[2] * k]
}
#[inline]
pub(crate) fn dot(a: [f64; 3], b: [f64; 3]) -> f64 {
    a[0] * b[0] + a[1] * b[1] + a[2] * b[2]
}
#[inline]
pub(crate) fn norm(a: [f64; 3]) -> f64 {
    dot(a, a).sqrt()
}
#[inline]
fn cross(a: [f64; 3], b: [f64; 3]) -> [f64; 3] {
    [
        a[1] * b[2] - a[2] * b[1],
        a[2] * b[0] - a[0] * b[2],
        a[0] * b[1] - a[1] * b[0],
    ]
}
fn normalise(a: [f64; 3]) -> [f64; 3] {
    scale(a, 1.0 / norm(a))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn params(ps: f64, g: f64) -> MeshParams {
        MeshParams {
            panel_size: ps,
            grading: g,
            min_facets: MIN_FACETS,
        }
    }

    fn total_area(p: &[Panel]) -> f64 {
        p.iter().map(Panel::area).sum()
    }

    #[test]
    fn graded_nodes_are_increasing_and_bounded() {
        for two in [true, false] {
            let s = graded_nodes(7, 0.6, two);
            assert_eq!(s[0], 0.0);
            assert_eq!(s[7], 1.0);
            assert!(s.windows(2).all(|w| w[1] > w[0]));
            // Largest spacing within the stated bound (1 − g + gπ/2)/n.
            let max = s.windows(2).map(|w| w[1] - w[0]).fold(0.0, f64::max);
            assert!(max <= (0.4 + 0.6 * PI / 2.0) / 7.0 + 1e-15);
        }
    }

    #[test]
    fn plate_and_box_areas_are_exact() {
        let pl = mesh(
            &Shape::Plate {
                origin: [0.1, 0.2, 0.3],
                e1: [0.0, 0.6, 0.8],
                e2: [2.0, 0.0, 0.0],
            },
            &params(0.1, 0.5),
        )
        .unwrap();
        assert!((total_area(&pl) - 2.0).abs() < 1e-13);
        // Every panel at most the panel size.
        assert!(
            pl.iter()
                .all(|q| q.half_u <= 0.05 + 1e-12 && q.half_v <= 0.05 + 1e-12)
        );
        let bx = mesh(
            &Shape::Cuboid {
                min: [0.0, 0.0, 0.0],
                max: [1.0, 2.0, 3.0],
            },
            &params(0.25, 0.5),
        )
        .unwrap();
        assert!((total_area(&bx) - 22.0).abs() < 1e-12);
    }

    #[test]
    fn cylinder_area_is_exact_and_facets_near_the_surface() {
        let (r, l) = (0.05, 0.7);
        let pc = mesh(
            &Shape::Cylinder {
                center: [1.0, 0.0, 0.5],
                axis: [0.0, 2.0, 0.0],
                radius: r,
                length: l,
            },
            &params(0.02, 0.5),
        )
        .unwrap();
        // Lateral 2πrL is exact by the perimeter match; each end N-gon has area
        // N·r_a·w/2 = π·r·r_a, r_a = r(π/N)/tan(π/N) (N = 16 here).
        let ra = r * (PI / 16.0) / (PI / 16.0).tan();
        let want = 2.0 * PI * r * l + 2.0 * PI * r * ra;
        assert!(
            (total_area(&pc) - want).abs() < 1e-14,
            "{} vs {want}",
            total_area(&pc)
        );
        assert_eq!(pc.iter().filter(|q| q.en[1].abs() < 0.5).count() % 16, 0);
        // Collocation points of the facets within π²/(3N²) of the radius (N = 16 here).
        for q in pc.iter().filter(|q| q.en[1].abs() < 0.5) {
            let rho = (q.center[0] - 1.0).hypot(q.center[2] - 0.5);
            assert!((rho - r).abs() < r * PI * PI / (3.0 * 16.0 * 16.0) * 1.01);
        }
    }

    #[test]
    fn degenerate_shapes_are_refused() {
        let p = params(0.1, 0.5);
        let bad = [
            Shape::Cylinder {
                center: [0.0; 3],
                axis: [0.0, 0.0, 1.0],
                radius: 0.0,
                length: 1.0,
            },
            Shape::Cylinder {
                center: [0.0; 3],
                axis: [0.0; 3],
                radius: 0.1,
                length: 1.0,
            },
            Shape::Plate {
                origin: [0.0; 3],
                e1: [1.0, 0.0, 0.0],
                e2: [1.0, 1.0, 0.0],
            },
            Shape::Cuboid {
                min: [0.0; 3],
                max: [1.0, 0.0, 1.0],
            },
            Shape::Cuboid {
                min: [f64::NAN, 0.0, 0.0],
                max: [1.0; 3],
            },
        ];
        for s in bad {
            let e = mesh(&s, &p).unwrap_err().0;
            assert!(
                e.contains("expected") || e.contains("give") || e.contains("finite"),
                "{e}"
            );
        }
    }
}

#[cfg(test)]
mod sphere_tests {
    use super::*;

    fn sphere_panels(center: [f64; 3], a: f64, h: f64) -> Vec<Panel> {
        let p = MeshParams {
            panel_size: h,
            grading: 0.5,
            min_facets: MIN_FACETS,
        };
        mesh(&Shape::Sphere { center, radius: a }, &p).unwrap()
    }

    #[test]
    fn sphere_area_is_exact_and_panels_are_tangent_and_small() {
        let (c, a) = ([0.3, -1.0, 2.0], 0.25);
        for h in [0.2, 0.05, 0.013] {
            let pan = sphere_panels(c, a, h);
            let area: f64 = pan.iter().map(Panel::area).sum();
            let want = 4.0 * PI * a * a;
            assert!((area - want).abs() < 1e-13 * want, "{h}: {area} vs {want}");
            let nb = ((PI * a / h).ceil() as usize).max(MIN_BANDS);
            for q in &pan {
                // Centre on the sphere, outward unit normal, orthonormal frame.
                let r = sub(q.center, c);
                assert!((norm(r) - a).abs() < 1e-14, "{:?}", q.center);
                let radial = scale(r, 1.0 / a);
                assert!(norm(sub(radial, q.en)) < 1e-14);
                for (x, y) in [(q.eu, q.ev), (q.eu, q.en), (q.ev, q.en)] {
                    assert!(dot(x, y).abs() < 1e-14);
                }
                for v in [q.eu, q.ev, q.en] {
                    assert!((norm(v) - 1.0).abs() < 1e-14);
                }
                assert!(norm(sub(cross(q.eu, q.ev), q.en)) < 1e-14);
                // Every side at most aΔ = πa/N_b ≤ h.
                let side = PI * a / nb as f64;
                assert!(side <= h + 1e-15);
                assert!(2.0 * q.half_u <= side * (1.0 + 1e-12), "{q:?}");
                assert!(2.0 * q.half_v <= side * (1.0 + 1e-12), "{q:?}");
            }
        }
    }

    #[test]
    fn sphere_panel_centres_are_mean_angles() {
        // ∫ cos θ dA over the upper hemisphere is πa² (its shadow on the equator plane).
        // With an odd N_b the equator is a band boundary, and the panel sum
        // Σ A_j cos θ̄_j over the upper panels differs from it only because cos is
        // curved over each band: cos θ̄ exceeds the band's mean of cos θ by about
        // cos θ̄·Var(θ)/2 = cos θ̄·Δ²/24, so the relative difference is Δ²/24 + O(Δ⁴).
        // Centres at the bands' mid-angles would give 3Δ²/24 instead (the mean angle
        // lies cot θ·Δ²/12 towards the equator): the check tells the two apart.
        let a = 1.0;
        for nb in [9_usize, 17, 33] {
            let s: f64 = sphere_panels([0.0; 3], a, PI * a / (nb as f64 - 0.5))
                .iter()
                .filter(|q| q.en[2] > 0.0)
                .map(|q| q.area() * q.en[2])
                .sum();
            let rel = (s - PI * a * a) / (PI * a * a);
            let want = (PI / nb as f64).powi(2) / 24.0;
            assert!(
                (rel - want).abs() < 0.02 * want,
                "N_b = {nb}: {rel:e} vs {want:e}"
            );
        }
    }

    #[test]
    fn degenerate_spheres_are_refused() {
        let p = MeshParams {
            panel_size: 0.1,
            grading: 0.0,
            min_facets: MIN_FACETS,
        };
        for s in [
            Shape::Sphere {
                center: [0.0; 3],
                radius: 0.0,
            },
            Shape::Sphere {
                center: [0.0; 3],
                radius: f64::INFINITY,
            },
            Shape::Sphere {
                center: [f64::NAN, 0.0, 0.0],
                radius: 1.0,
            },
        ] {
            let e = mesh(&s, &p).unwrap_err().0;
            assert!(
                e.contains("sphere") && (e.contains("expected") || e.contains("finite")),
                "{e}"
            );
        }
    }
}

#[cfg(test)]
mod far_field_tests {
    use super::*;

    fn worst(p: &Panel, ratio: f64, n: usize) -> (f64, f64) {
        let h = p.half_u.max(p.half_v);
        let (mut ev, mut ee) = (0.0_f64, 0.0_f64);
        for i in 0..40 {
            for j in 0..80 {
                let th = PI * (i as f64 + 0.5) / 40.0;
                let ph = 2.0 * PI * j as f64 / 80.0;
                let l = [
                    ratio * h * th.sin() * ph.cos(),
                    ratio * h * th.sin() * ph.sin(),
                    ratio * h * th.cos(),
                ];
                let exact = rectangle_geometry(-p.half_u, p.half_u, -p.half_v, p.half_v, l);
                let g = p.gauss(l, n, true);
                ev = ev.max((g.v - exact.v).abs() / exact.v.abs());
                let de = (0..3)
                    .map(|k| (g.e[k] - exact.e[k]).powi(2))
                    .sum::<f64>()
                    .sqrt();
                let me = exact.e.iter().map(|x| x * x).sum::<f64>().sqrt();
                ee = ee.max(de / me);
            }
        }
        (ev, ee)
    }

    /// The far rules against the closed form on spheres at the switching
    /// distances (the worst place for each rule), for square and elongated
    /// panels: relative error of V and of E below 1e-6 (the documented bound).
    #[test]
    fn far_rules_match_the_closed_form() {
        for (hu, hv) in [(0.05, 0.05), (0.05, 0.02), (0.01, 0.05), (0.05, 0.01)] {
            let p = Panel {
                center: [0.0; 3],
                eu: [1.0, 0.0, 0.0],
                ev: [0.0, 1.0, 0.0],
                en: [0.0, 0.0, 1.0],
                half_u: hu,
                half_v: hv,
            };
            let (v3, e3) = worst(&p, GAUSS3_RATIO, 3);
            let (v2, e2) = worst(&p, GAUSS2_RATIO, 2);
            for (what, err) in [("V n=3", v3), ("E n=3", e3), ("V n=2", v2), ("E n=2", e2)] {
                assert!(err < 1e-6, "{what} for {hu}×{hv}: {err:e}");
            }
            // Just inside the closed-form region the 3-point rule would not
            // meet the bound for E: the switch is where it is for a reason.
            let (_, e_near) = worst(&p, 0.5 * GAUSS3_RATIO, 3);
            assert!(e_near > 1e-6, "{hu}×{hv}: {e_near:e}");
        }
    }

    /// The public factors switch rules without a jump beyond the bound.
    #[test]
    fn factors_are_continuous_at_the_switches() {
        let p = Panel {
            center: [0.3, -0.2, 1.0],
            eu: [0.0, 1.0, 0.0],
            ev: [0.0, 0.0, 1.0],
            en: [1.0, 0.0, 0.0],
            half_u: 0.04,
            half_v: 0.03,
        };
        for ratio in [GAUSS3_RATIO, GAUSS2_RATIO] {
            let r = ratio * 0.04;
            let inside = p.factors(add(p.center, [r * (1.0 - 1e-9), 0.0, 0.0]));
            let outside = p.factors(add(p.center, [r * (1.0 + 1e-9), 0.0, 0.0]));
            assert!((inside.v - outside.v).abs() < 1e-6 * inside.v.abs());
            assert!((inside.e[0] - outside.e[0]).abs() < 1e-6 * inside.e[0].abs());
        }
    }
}
