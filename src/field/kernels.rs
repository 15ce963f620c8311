//! # Closed forms for a charged flat rectangle
//!
//! Field stage, innermost layer: everything here is exact (closed-form)
//! integration of Coulomb's law over a flat rectangle in its own frame; the
//! numerical driver in [`super::integrate`] builds on it.
//!
//! Frame: the charge lies in the plane h = 0, u along the span, y across it.
//! The field point is P = (u, y, h); a source point is r′ = (u′, y′, 0) and
//! R = |P − r′|. Coulomb's law and superposition give
//!
//! $$ V(P) = \frac{1}{4πε_0}\iint \frac{σ(u',y')}{R}\,du'\,dy', \qquad
//!    \mathbf E(P) = \frac{1}{4πε_0}\iint σ(u',y')\,\frac{P-r'}{R^3}\,du'\,dy'. $$
//!
//! ## Uniform rectangle [u₁, u₂] × [y₁, y₂]
//!
//! With X = u′ − u, Y = y′ − y, R = √(X² + Y² + h²) and the corner sum
//! ⟦g⟧ = Σᵢⱼ sᵢ sⱼ g(Xᵢ, Yⱼ) (s = −1 at the lower limit, +1 at the upper):
//!
//! $$ \frac{4πε_0}{σ}V = ⟦X\,\mathrm{asinh}\tfrac{Y}{\sqrt{X^2+h^2}}
//!      + Y\,\mathrm{asinh}\tfrac{X}{\sqrt{Y^2+h^2}}
//!      - |h|\arctan\tfrac{XY}{|h|R}⟧, $$
//! $$ \frac{4πε_0}{σ}E_u = ⟦\mathrm{asinh}\tfrac{Y}{\sqrt{X^2+h^2}}⟧,\quad
//!    \frac{4πε_0}{σ}E_y = ⟦\mathrm{asinh}\tfrac{X}{\sqrt{Y^2+h^2}}⟧,\quad
//!    \frac{4πε_0}{σ}E_h = \mathrm{sgn}(h)\,⟦\arctan\tfrac{XY}{|h|R}⟧, $$
//!
//! i.e. E_u = G_u(X₂) − G_u(X₁) with G_u(X) = asinh(Y₂/ρ) − asinh(Y₁/ρ),
//! ρ = √(X² + h²) (and E_y likewise with X and Y exchanged); the V sum reuses
//! the same four logarithms. The E_h sum is the solid angle Ω subtended by the
//! rectangle (E_h = σΩ/(4πε₀)), which tends to ±σ/(2ε₀) just above/below it.
//!
//! ## Across-web integrals of one line of a patch
//!
//! For a line u′ = const of a patch whose density across the web is piecewise
//! quadratic, f(y′) = c₀ + c₁y′ + c₂y′² on each piece, put a = u′ − u,
//! t = y′ − y, d² = a² + h², R = √(t² + d²). Writing f = b₀ + b₁t + b₂t² (b₀ =
//! f(y), b₁ = f′(y), b₂ = c₂), everything needed reduces to the moments
//!
//! $$ ∫\frac{dt}{R} = \mathrm{asinh}\tfrac{t}{d},\; ∫\frac{t\,dt}{R} = R,\;
//!    ∫\frac{t^2dt}{R} = \tfrac12\bigl(tR - d^2\mathrm{asinh}\tfrac td\bigr), $$
//! $$ ∫\frac{dt}{R^3} = \frac{t}{d^2R},\; ∫\frac{t\,dt}{R^3} = -\frac1R,\;
//!    ∫\frac{t^2dt}{R^3} = \mathrm{asinh}\tfrac td - \frac tR,\;
//!    ∫\frac{t^3dt}{R^3} = R + \frac{d^2}{R}, $$
//!
//! evaluated between the piece's limits t₁ < t₂ in forms without cancellation:
//! asinh(t₂/d) − asinh(t₁/d) = ln((t₂+R₂)/(t₁+R₁)) for 0 ≤ t₁ (mirrored for
//! t₂ ≤ 0, ln((t₂+R₂)(R₁−t₁)/d²) when the limits straddle 0), each taken as
//! ln_1p of a difference written with terms of one sign;
//! [t/(d²R)] = (t₂² − t₁²)/((t₂R₁ + t₁R₂)R₁R₂) for limits of one sign;
//! R₂ − R₁ = (t₂² − t₁²)/(R₁ + R₂); [t/R] = d²[t/(d²R)];
//! [R + d²/R] = (R₂ − R₁)(t₁²t₂² + d²(t₁² + t₂²))/(R₁R₂(R₁R₂ + d²)).
//! These hold for d = 0 as long as the piece does not contain t = 0.
//!
//! The closed forms still lose about (D/w)² digits for a piece of half-width
//! w whose centre is a distance D ≫ w away (in the (t, d) plane), because the
//! antiderivatives are then large and nearly equal. For D > 5w the piece is
//! therefore integrated with an 8-point Gauss–Legendre rule instead: the
//! integrand's nearest singularity (t = ±i d) is then at least 5 half-widths
//! away, so the rule's error is below ρ⁻¹⁶ ≈ 1e-16 relative (ρ = 5 + √24, the
//! Bernstein-ellipse parameter), i.e. exact to rounding.
//!
//! | symbol | meaning | unit |
//! | --- | --- | --- |
//! | σ | surface charge density | C/m² |
//! | f | across-web shape of the density, f = c₀ + c₁y + c₂y² | 1 |
//! | c₀, c₁, c₂ | coefficients of f | 1, 1/m, 1/m² |
//! | ε₀ | vacuum permittivity, [`EPS0`] | F/m |
//! | u, y, h | field point: along, across, normal to the patch | m |
//! | u′, y′ | source point on the patch | m |
//! | a, t | u′ − u, y′ − y | m |
//! | d | distance from P to the line u′ = const, √(a² + h²) | m |
//! | V, E | potential, field | V, V/m |
//!
//! Assumptions: a thin sheet in free space (no dielectric, no conductors).
//! Valid range: any point off the rectangle; the callers keep points ≥ 1 µm
//! from it. Lengths from about 1e-6 m to 1e3 m keep every intermediate far
//! from overflow and underflow; the corner sums lose about (distance/size)·ε
//! relative far away (≈ 1e-11 for a 1 mm patch seen from 100 m). Inside the
//! rectangle at h = 0, V is still right and E_h is returned as 0 (its limits
//! are ±σ/(2ε₀)); on the edges the field is infinite.
//!
//! ## Reference
//! Coulomb's law and superposition: D. J. Griffiths, *Introduction to
//! Electrodynamics*, 4th ed., §2.1 and §2.3. The rectangle and the moments
//! above are derived from Coulomb's law by elementary integration (standard
//! integrals, e.g. I. S. Gradshteyn & I. M. Ryzhik, *Table of Integrals*,
//! 2.271–2.275). Gauss–Legendre nodes and weights: M. Abramowitz &
//! I. A. Stegun, *Handbook of Mathematical Functions*, Table 25.4 (checked
//! against Newton iteration in this module's tests).

use crate::units::EPS0;
use std::f64::consts::PI;

/// One piece of the across-web shape: f(y) = c[0] + c[1]·y + c[2]·y² on [y_lo, y_hi].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct QuadPiece {
    /// Lower end of the piece, across the web [m].
    pub y_lo: f64,
    /// Upper end of the piece [m].
    pub y_hi: f64,
    /// Coefficients c₀ [1], c₁ [1/m], c₂ [1/m²].
    pub c: [f64; 3],
}

impl QuadPiece {
    /// The shape f(y) [1] (no check that y lies on the piece).
    #[inline]
    pub fn value(&self, y: f64) -> f64 {
        self.c[0] + y * (self.c[1] + self.c[2] * y)
    }

    /// The largest |f| [1] on the piece (ends and, for a parabola, its vertex).
    pub fn max_abs(&self) -> f64 {
        let mut m = self.value(self.y_lo).abs().max(self.value(self.y_hi).abs());
        if self.c[2] != 0.0 {
            let yv = -self.c[1] / (2.0 * self.c[2]);
            if yv > self.y_lo && yv < self.y_hi {
                m = m.max(self.value(yv).abs());
            }
        }
        m
    }
}

/// Potential and field at one point, in the patch's local frame.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct LocalField {
    /// Potential [V].
    pub v: f64,
    /// Field `[E_u, E_y, E_h]` [V/m].
    pub e: [f64; 3],
}

impl LocalField {
    /// Adds `o` to `self` (superposition).
    pub fn add(&mut self, o: &LocalField) {
        self.v += o.v;
        for k in 0..3 {
            self.e[k] += o.e[k];
        }
    }

    /// `self` multiplied by `k` (linearity in the density).
    pub fn scaled(&self, k: f64) -> LocalField {
        LocalField {
            v: self.v * k,
            e: [self.e[0] * k, self.e[1] * k, self.e[2] * k],
        }
    }

    /// |E| [V/m].
    pub fn e_norm(&self) -> f64 {
        (self.e[0] * self.e[0] + self.e[1] * self.e[1] + self.e[2] * self.e[2]).sqrt()
    }
}

/// 1/(4πε₀) [m/F].
pub const COULOMB: f64 = 1.0 / (4.0 * PI * EPS0);

/// asinh(t₂/d) − asinh(t₁/d) [1] for t₁ < t₂, given d² and R₁,₂ = √(t₁,₂² + d²), without
/// cancellation: ln(x/y) is taken as ln_1p((x − y)/y) with x − y formed from terms of one sign,
/// so it stays accurate when the two limits are close compared with d. Finite for d = 0 when
/// t₁, t₂ have one sign.
#[inline]
pub fn asinh_difference(t1: f64, t2: f64, d2: f64, r1: f64, r2: f64) -> f64 {
    let dt = t2 - t1;
    if t1 >= 0.0 {
        // ln((t₂ + R₂)/(t₁ + R₁)); R₂ − R₁ = dt·(t₁ + t₂)/(R₁ + R₂).
        ln_1p_fast(dt * (1.0 + (t1 + t2) / (r1 + r2)) / (t1 + r1))
    } else if t2 <= 0.0 {
        // ln((R₁ − t₁)/(R₂ − t₂)), the mirror image.
        ln_1p_fast(dt * (1.0 - (t1 + t2) / (r1 + r2)) / (r2 - t2))
    } else {
        // ln((t₂ + R₂)(R₁ − t₁)/d²); the product minus d² is a sum of non-negative terms.
        let (t1s, t2s) = (t1 * t1, t2 * t2);
        let x = t2 * r1 - t1 * r2 - t1 * t2 + (t1s * t2s + d2 * (t1s + t2s)) / (r1 * r2 + d2);
        ln_1p_fast(x / d2)
    }
}

/// ln(1 + r) for r ≥ 0: `ln_1p` where it matters (r small), the faster `ln` elsewhere
/// (for r ≥ 1/4 forming 1 + r costs at most 5 ulp of the result).
#[inline]
fn ln_1p_fast(r: f64) -> f64 {
    if r < 0.25 { r.ln_1p() } else { (1.0 + r).ln() }
}

/// Geometric factors of a uniform rectangle [u1,u2]×[y1,y2] at `p = [u, y, h]`:
/// `v` = ∬ dA′/R [m] and `e` = ∬ (P − r′)/R³ dA′ [1], so that
/// [`uniform_rectangle`] = σ/(4πε₀) × these.
pub fn rectangle_geometry(u1: f64, u2: f64, y1: f64, y2: f64, p: [f64; 3]) -> LocalField {
    let [u, y, h] = p;
    let x = [u1 - u, u2 - u];
    let t = [y1 - y, y2 - y];
    let h2 = h * h;
    let hh = h.abs();
    let x2 = [x[0] * x[0], x[1] * x[1]];
    let t2 = [t[0] * t[0], t[1] * t[1]];
    let r = [
        [(x2[0] + t2[0] + h2).sqrt(), (x2[0] + t2[1] + h2).sqrt()],
        [(x2[1] + t2[0] + h2).sqrt(), (x2[1] + t2[1] + h2).sqrt()],
    ];
    // G_u(X_i) = ∫ dY / R at X = X_i; G_y(Y_j) = ∫ dX / R at Y = Y_j.
    let gu = [
        asinh_difference(t[0], t[1], x2[0] + h2, r[0][0], r[0][1]),
        asinh_difference(t[0], t[1], x2[1] + h2, r[1][0], r[1][1]),
    ];
    let gy = [
        asinh_difference(x[0], x[1], t2[0] + h2, r[0][0], r[1][0]),
        asinh_difference(x[0], x[1], t2[1] + h2, r[0][1], r[1][1]),
    ];
    // Solid angle Ω = ⟦atan(XY/(|h|R))⟧ (zero in the plane of the rectangle, outside it).
    let omega = if h == 0.0 {
        0.0
    } else {
        (x[1] * t[1] / (hh * r[1][1])).atan()
            - (x[1] * t[0] / (hh * r[1][0])).atan()
            - (x[0] * t[1] / (hh * r[0][1])).atan()
            + (x[0] * t[0] / (hh * r[0][0])).atan()
    };
    // X·G_u(X) → 0 as X → 0 even where G_u grows like ln|X| (in-plane, on an edge's line).
    let xg = |xv: f64, g: f64| if xv == 0.0 { 0.0 } else { xv * g };
    let v = xg(x[1], gu[1]) - xg(x[0], gu[0]) + xg(t[1], gy[1]) - xg(t[0], gy[0]) - hh * omega;
    LocalField {
        v,
        e: [gu[1] - gu[0], gy[1] - gy[0], omega.copysign(h)],
    }
}

/// Closed form for a uniform rectangle [u1,u2]×[y1,y2], density `sigma` [C/m²], at
/// `p = [u, y, h]` [m]: V [V] and E [V/m]. About 100 ns for V and E together.
pub fn uniform_rectangle(
    u1: f64,
    u2: f64,
    y1: f64,
    y2: f64,
    sigma: f64,
    p: [f64; 3],
) -> LocalField {
    rectangle_geometry(u1, u2, y1, y2, p).scaled(sigma * COULOMB)
}

/// The across-web integrals of one line u′ = u + a of a patch (see the module header):
/// with σ = A·f(y′) on the line and R = √((y′−y)² + a² + h²),
/// V per unit length of u′ is A/(4πε₀)·`g1`, E_u is −a·A/(4πε₀)·`g3`,
/// E_y is A/(4πε₀)·`gy` and E_h is h·A/(4πε₀)·`g3`.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct AcrossIntegrals {
    /// ∫ f(y′)/R dy′ [1].
    pub g1: f64,
    /// ∫ f(y′)/R³ dy′ [1/m²].
    pub g3: f64,
    /// ∫ f(y′)·(y − y′)/R³ dy′ [1/m].
    pub gy: f64,
}

impl AcrossIntegrals {
    /// The integrands of `[V, E_u, E_y, E_h]` along u′ (per unit A/(4πε₀)) at offset `a` [m] and height `h` [m].
    #[inline]
    pub fn components(&self, a: f64, h: f64) -> [f64; 4] {
        [self.g1, -a * self.g3, self.gy, h * self.g3]
    }

    #[inline]
    fn add(&mut self, o: AcrossIntegrals) {
        self.g1 += o.g1;
        self.g3 += o.g3;
        self.gy += o.gy;
    }
}

/// A piece is integrated by Gauss–Legendre when its centre is farther than this many
/// half-widths from the line's nearest point to P (see the module header).
const FAR_PIECE: f64 = 5.0;

/// 8-point Gauss–Legendre nodes on [−1, 1] (positive half), Abramowitz & Stegun Table 25.4.
const GL8_X: [f64; 4] = [
    0.183_434_642_495_649_8,
    0.525_532_409_916_329,
    0.796_666_477_413_626_7,
    0.960_289_856_497_536_2,
];
/// The matching weights.
const GL8_W: [f64; 4] = [
    0.362_683_783_378_362,
    0.313_706_645_877_887_3,
    0.222_381_034_453_374_5,
    0.101_228_536_290_376_3,
];

/// The across-web integrals of one piece, at across position `y` of P and d² = a² + h² [m²].
#[inline]
pub fn inner_piece(pc: &QuadPiece, y: f64, d2: f64) -> AcrossIntegrals {
    let hw = 0.5 * (pc.y_hi - pc.y_lo);
    let tc = 0.5 * (pc.y_lo + pc.y_hi) - y;
    if tc * tc + d2 > (FAR_PIECE * hw) * (FAR_PIECE * hw) {
        piece_gauss(pc, y, d2, tc, hw)
    } else {
        piece_closed(pc, y, d2)
    }
}

/// Closed-form moments (module header), for a piece not far from P.
#[inline]
fn piece_closed(pc: &QuadPiece, y: f64, d2: f64) -> AcrossIntegrals {
    let t1 = pc.y_lo - y;
    let t2 = pc.y_hi - y;
    let t1s = t1 * t1;
    let t2s = t2 * t2;
    let r1 = (t1s + d2).sqrt();
    let r2 = (t2s + d2).sqrt();
    let [c0, c1, c2] = pc.c;
    let b0 = c0 + y * (c1 + c2 * y);
    let b1 = c1 + 2.0 * c2 * y;
    let b2 = c2;
    let l0 = asinh_difference(t1, t2, d2, r1, r2);
    let dt2 = (t2 - t1) * (t2 + t1); // t₂² − t₁²
    let p = r1 * r2;
    let ip = 1.0 / p;
    // [t/(d²R)]
    let q0 = if t1 < 0.0 && t2 > 0.0 {
        (t2 * r1 - t1 * r2) * ip / d2
    } else {
        dt2 * ip / (t2 * r1 + t1 * r2)
    };
    let m11 = dt2 / (r1 + r2); // R₂ − R₁
    let m31 = m11 * ip; // 1/R₁ − 1/R₂
    if b1 == 0.0 && b2 == 0.0 {
        return AcrossIntegrals {
            g1: b0 * l0,
            g3: b0 * q0,
            gy: -b0 * m31,
        };
    }
    let m32 = l0 - d2 * q0; // [asinh(t/d) − t/R]
    let m12 = 0.5 * ((t2 * r2 - t1 * r1) - d2 * l0);
    let m33 = m31 * (t1s * t2s + d2 * (t1s + t2s)) / (p + d2);
    AcrossIntegrals {
        g1: b0 * l0 + b1 * m11 + b2 * m12,
        g3: b0 * q0 + b1 * m31 + b2 * m32,
        gy: -(b0 * m31 + b1 * m32 + b2 * m33),
    }
}

/// Gauss–Legendre (8 points) for a piece far from P; `tc` = centre − y, `hw` = half-width.
#[inline]
fn piece_gauss(pc: &QuadPiece, y: f64, d2: f64, tc: f64, hw: f64) -> AcrossIntegrals {
    let mut s = AcrossIntegrals::default();
    for (xi, wi) in GL8_X.iter().zip(GL8_W.iter()) {
        for sg in [-1.0, 1.0] {
            let t = tc + sg * hw * xi;
            let f = wi * pc.value(y + t);
            let inv = 1.0 / (t * t + d2).sqrt();
            let inv3 = inv * inv * inv;
            s.g1 += f * inv;
            s.g3 += f * inv3;
            s.gy -= f * t * inv3;
        }
    }
    AcrossIntegrals {
        g1: s.g1 * hw,
        g3: s.g3 * hw,
        gy: s.gy * hw,
    }
}

/// The across-web (y′) integrals, done exactly, of the line u′ = u + `a` of a patch with
/// across-web shape `pieces`, for P at across position `y` [m] and height `h` [m].
/// Multiply by A/(4πε₀) and see [`AcrossIntegrals::components`] for V and E.
#[inline]
pub fn inner_across(pieces: &[QuadPiece], a: f64, y: f64, h: f64) -> AcrossIntegrals {
    let d2 = a * a + h * h;
    let mut s = AcrossIntegrals::default();
    for pc in pieces {
        s.add(inner_piece(pc, y, d2));
    }
    s
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Gauss–Legendre nodes and weights by Newton iteration on P_n.
    fn gauss_legendre(n: usize) -> Vec<(f64, f64)> {
        let mut out = Vec::new();
        for i in 0..n {
            let mut x = (PI * (i as f64 + 0.75) / (n as f64 + 0.5)).cos();
            let mut dp = 0.0;
            for _ in 0..100 {
                let (mut p0, mut p1) = (1.0, x);
                for k in 2..=n {
                    let p2 = ((2 * k - 1) as f64 * x * p1 - (k - 1) as f64 * p0) / k as f64;
                    p0 = p1;
                    p1 = p2;
                }
                dp = n as f64 * (x * p1 - p0) / (x * x - 1.0);
                let dx = p1 / dp;
                x -= dx;
                if dx.abs() < 1e-16 {
                    break;
                }
            }
            out.push((x, 2.0 / ((1.0 - x * x) * dp * dp)));
        }
        out
    }

    /// ∫ over [lo, hi] of g by composite 40-point Gauss–Legendre on `cells` equal cells.
    fn brute(lo: f64, hi: f64, cells: usize, g: impl Fn(f64) -> f64) -> f64 {
        let gl = gauss_legendre(40);
        let w = (hi - lo) / cells as f64;
        let mut s = 0.0;
        for c in 0..cells {
            let m = lo + (c as f64 + 0.5) * w;
            for &(x, wt) in &gl {
                s += wt * 0.5 * w * g(m + 0.5 * w * x);
            }
        }
        s
    }

    #[test]
    fn gl8_constants_match_newton() {
        let gl = gauss_legendre(8);
        for k in 0..4 {
            // Newton converges to rounding; the tabulated values have 16 digits.
            let (x, w) = gl
                .iter()
                .copied()
                .find(|&(x, _)| (x - GL8_X[k]).abs() < 1e-3)
                .unwrap();
            assert!((x - GL8_X[k]).abs() < 1e-15, "node {k}");
            assert!((w - GL8_W[k]).abs() < 1e-15, "weight {k}");
        }
    }

    #[test]
    fn inner_piece_matches_brute_force() {
        // Reference: composite Gauss–Legendre of the defining integrals (exact to ~1e-15 here
        // since d ≥ 0.05 and 400 cells of 40 points resolve 1/R³ of width d).
        let pc = QuadPiece {
            y_lo: -0.4,
            y_hi: 0.6,
            c: [1.0, -2.0, 3.0],
        };
        for &(y, d) in &[
            (0.1, 0.05),
            (-0.9, 0.3),
            (2.0, 0.2),
            (0.6, 1.0),
            (3.5, 0.05),
            (0.0, 20.0),
        ] {
            let got = inner_piece(&pc, y, d * d);
            let r = |yp: f64| ((yp - y) * (yp - y) + d * d).sqrt();
            let g1 = brute(pc.y_lo, pc.y_hi, 400, |yp| pc.value(yp) / r(yp));
            let g3 = brute(pc.y_lo, pc.y_hi, 400, |yp| pc.value(yp) / r(yp).powi(3));
            let gy = brute(pc.y_lo, pc.y_hi, 400, |yp| {
                pc.value(yp) * (y - yp) / r(yp).powi(3)
            });
            let s3 = brute(pc.y_lo, pc.y_hi, 400, |yp| {
                pc.value(yp).abs() / r(yp).powi(3)
            });
            // Relative to the integral of |f|/R³ (gy may be near zero): rounding only.
            assert!(
                (got.g1 - g1).abs() <= 1e-13 * g1.abs(),
                "g1 at {y},{d}: {} vs {g1}",
                got.g1
            );
            assert!(
                (got.g3 - g3).abs() <= 1e-13 * s3,
                "g3 at {y},{d}: {} vs {g3}",
                got.g3
            );
            assert!(
                (got.gy - gy).abs() <= 1e-13 * s3,
                "gy at {y},{d}: {} vs {gy}",
                got.gy
            );
        }
    }

    #[test]
    fn closed_and_gauss_agree_at_the_switch() {
        // Both forms are exact up to rounding at D = 5 half-widths, where the switch happens.
        let pc = QuadPiece {
            y_lo: 0.0,
            y_hi: 0.2,
            c: [0.5, 3.0, -7.0],
        };
        for &(y, d) in &[(0.6, 0.0), (0.1, 0.5), (-0.3, 0.3), (0.9, 0.01)] {
            let hw = 0.1;
            let tc = 0.1 - y;
            let a = piece_closed(&pc, y, d * d);
            let b = piece_gauss(&pc, y, d * d, tc, hw);
            let m = a.g3.abs().max(a.gy.abs());
            assert!((a.g1 - b.g1).abs() <= 1e-14 * a.g1.abs(), "{y},{d}");
            assert!((a.g3 - b.g3).abs() <= 1e-13 * m, "{y},{d}");
            assert!((a.gy - b.gy).abs() <= 1e-13 * m, "{y},{d}");
        }
    }

    #[test]
    fn in_plane_line_through_p_is_finite() {
        // d = 0 with the piece entirely on one side of P: finite, and E_h = 0.
        let pc = QuadPiece {
            y_lo: -0.5,
            y_hi: 0.5,
            c: [1.0, 0.0, 2.0],
        };
        for y in [0.5 + 1e-6, -0.7, 0.52] {
            let g = inner_piece(&pc, y, 0.0);
            assert!(
                g.g1.is_finite() && g.g3.is_finite() && g.gy.is_finite(),
                "{y}: {g:?}"
            );
            assert_eq!(g.components(0.0, 0.0)[3], 0.0);
        }
    }

    #[test]
    fn asinh_diff_is_stable_for_large_negative_t() {
        // Reference asinh(-1e6+1) - asinh(-1e6) = 1/sqrt(1+t²) to first order (mean value).
        let d2: f64 = 1e-4;
        let (t1, t2) = (-1e6_f64, -1e6_f64 + 1.0);
        let got = asinh_difference(t1, t2, d2, (t1 * t1 + d2).sqrt(), (t2 * t2 + d2).sqrt());
        let want = 1.0 / (1e6 - 0.5);
        assert!((got - want).abs() < 1e-9 * want);
    }
}
