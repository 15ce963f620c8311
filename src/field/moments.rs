//! # Field of a patch with a non-uniform density, by closed-form moments
//!
//! Field stage, middle layer: the fastest exact path of
//! [`super::integrate::patch_field`] near a patch. The decay along the span is
//! replaced by a polynomial with a rigorous remainder bound, and the Coulomb
//! integrals of every monomial over each rectangle of the patch are taken in
//! closed form by recurrences that only need one-dimensional edge integrals.
//! The result comes with a bound on its error (truncation plus rounding); when
//! the bound misses the target the path returns nothing and the caller uses
//! the quadrature paths.
//!
//! ## Density
//!
//! The patch is u′ ∈ [0, L], y′ ∈ [y_lo, y_hi] (pieces [y_k, y_{k+1}]), h′ = 0,
//! with σ = A·e^{−u′/λ}·f(y′), f = c₀ + c₁y′ + c₂y′² on each piece. With the
//! centre u_c = L/2, t = (u′ − u_c)/λ and x = L/(2λ), Taylor's theorem with the
//! Lagrange remainder gives
//!
//! $$ e^{-u'/λ} = e^{-u_c/λ}\Bigl(\sum_{k=0}^{d}\frac{(-t)^k}{k!} + ρ_d\Bigr),\qquad
//!    |e^{-u_c/λ}ρ_d| \le e^{-x}\frac{x^{d+1}}{(d+1)!}e^{x} = \frac{x^{d+1}}{(d+1)!} =: ε_d, $$
//!
//! so the density error is at most ε_d·|A|·max|f| = ε_d·σ_max, relative to the
//! largest density of the patch (the density of the error scales S_V, S_E of
//! [`super::integrate`]). The degree d ≤ [`MAX_DEGREE`] is the least with
//! ε_d ≤ r·s/2·min(1, Ω/(π ln(1 + D²/h²))) (Ω and D below; this makes each
//! truncation bound at most half its target, as S_E ≥ kσ_max·Ω); patches with
//! x > [`MAX_HALF_RATIO`] are left to the quadrature. With a = u′ − u, b = y′ − y and δ = u − u_c the
//! polynomial is re-expanded as Σ p_m a^m (a Taylor shift by δ) and f on each
//! piece as Σ q_n b^n (q₀ = f(y), q₁ = f′(y), q₂ = c₂).
//!
//! A density error |δσ| ≤ ε_d·σ_max changes the results by at most
//!
//! $$ |δV| \le kε_dσ_{max}\iint\frac{dA'}{R} = ε_d S_V,\qquad
//!    |δE_h| \le kε_dσ_{max}|h|\iint\frac{dA'}{R^3} = ε_d σ_{max}k\,Ω \le ε_d S_E, $$
//! $$ |δE_u|, |δE_y| \le kε_dσ_{max}\iint\frac{dA'}{R^2} \le kε_dσ_{max}\,π\ln\Bigl(1+\frac{D^2}{h^2}\Bigr), $$
//!
//! k = 1/(4πε₀), Ω the solid angle of the patch, and the last integral taken
//! over the disc of radius D (the distance from the foot of the perpendicular
//! to the farthest corner) centred at the foot, which contains the patch.
//!
//! ## Moments
//!
//! With R² = a² + b² + h² and the rectangle [a₀, a₁] × [b₀, b₁] of a piece,
//!
//! $$ F_{mn} = \iint\frac{a^m b^n}{R}\,da\,db,\qquad G_{mn} = \iint\frac{a^m b^n}{R^3}\,da\,db, $$
//! $$ V = kA\sum p_m q_n F_{mn},\quad E_u = -kA\sum p_m q_n G_{m+1,n},\quad
//!    E_y = -kA\sum p_m q_n G_{m,n+1},\quad E_h = kAh\sum p_m q_n G_{mn}. $$
//!
//! They follow from (all derived here by differentiation and checked in the
//! tests against an independent quadrature):
//!
//! - edge integrals on b = b_j (ρ_j² = b_j² + h², R_ij the corner distances):
//!   A₀ = asinh(a₁/ρ_j) − asinh(a₀/ρ_j), A₁ = R₁ⱼ − R₀ⱼ and
//!   k·A_k = [a^{k−1}R]_{a₀}^{a₁} − (k−1)ρ_j²A_{k−2}, since
//!   d(a^{k−1}R)/da = k a^k/R + (k−1)ρ² a^{k−2}/R; on a = a_i the same in b
//!   (B_n, n ≤ 2);
//! - the divergence theorem in the plane, ∇·((a, b) a^m b^n/R) =
//!   (m+n+1) a^m b^n/R + h² a^m b^n/R³:
//!   (m+n+1)F_{mn} + h²G_{mn} = [a^{m+1}B_n]_{a₀}^{a₁} + [b^{n+1}A_m]_{b₀}^{b₁};
//! - integration by parts with ∂(1/R)/∂a = −a/R³:
//!   G_{m0} = −[a^{m−1}B_0]_{a₀}^{a₁} + (m−1)F_{m−2,0} (m ≥ 1), and in b
//!   G_{mn} = −[b^{n−1}A_m]_{b₀}^{b₁} + (n−1)F_{m,n−2} (n ≥ 1);
//! - G₀₀ = Ω/|h|, Ω = ⟦atan(ab/(|h|R))⟧ over the corners, as in
//!   [`super::kernels::rectangle_geometry`].
//!
//! Column n = 0 is computed in increasing m, then n = 1, 2, 3. Adjacent
//! pieces share their edge b = b_j (corner distances, solid-angle terms and
//! A_k). A point in the plane of the patch (h = 0) is left to the quadrature.
//!
//! ## Rounding
//!
//! The recurrences lose digits when the point is far compared with the patch
//! (|a| ≪ ρ in A_k, |h| ≫ |a| in G_{m0}) and the Taylor shift when |δ| ≫ L.
//! Every quantity Q is therefore computed beside a magnitude M_Q: the same
//! recurrence with every term replaced by its absolute value (and inputs by
//! their magnitudes). In the first-order model of rounding each operation
//! adds at most u times the magnitude of its result, so each stage adds at
//! most about 2u·M per dependent step: the Taylor shift ≤ d steps, the edge
//! and moment recurrences ≤ d + 6, the final sums ≤ d + 4 terms, and the
//! logarithms, arc tangents and square roots at the base a few u each —
//! in all below 2(3d + 10) + 16 units. The path claims
//! [`ROUND_STEP`]·(d + 12)·u·M = 8(d + 12)·u·M, which is larger for every d.
//! The error claimed for each
//! component is the truncation bound above plus this rounding bound; the path
//! answers only if each is at most r·s·S (S_V, S_E as the caller defines
//! them, computed here from F₀₀, G₁₀, G₀₁, G₀₀ less their own rounding
//! bound). Measured against the double-exponential rule at 1e-12 over 2000
//! sampled patches and points at tolerances 1e-9–1e-3 (tests/fast_path.rs):
//! the error was at most 0.87 of the claim (plus the reference's own
//! target), the largest ratios where the truncation dominates close to the
//! sheet near an end of the patch, where the Lagrange bound is nearly
//! attained.
//!
//! | symbol | meaning | unit |
//! | --- | --- | --- |
//! | A, λ, L | amplitude, decay length, patch length | C/m², m, m |
//! | f, q_n | across-web shape, its coefficients about y | 1, m⁻ⁿ |
//! | p_m | coefficients of the decay polynomial in a | m⁻ᵐ |
//! | u, y, h | field point in the patch frame | m |
//! | a, b | u′ − u, y′ − y | m |
//! | R, ρ_j | distance to a source point, to the line b = b_j | m |
//! | F_{mn}, G_{mn} | moments | m^{m+n+1}, m^{m+n−1} |
//! | A_k, B_n | edge integrals | m^k, m^n |
//! | Ω | solid angle of a rectangle | sr |
//! | d, ε_d | degree of the decay polynomial, its remainder bound | 1, 1 |
//! | D | farthest corner from the foot of the perpendicular | m |
//! | r, s | `rel_tol`, the safety factor of [`super::integrate`] | 1, 1 |
//! | u (rounding) | unit roundoff 2⁻⁵³ | 1 |
//!
//! Assumptions: thin sheet in free space; h ≠ 0; at most [`MAX_PIECES`]
//! across-web pieces; valid where the claimed bound meets the target (the
//! caller falls back elsewhere). No heap allocation. Cost (release, one
//! core of a shared machine, `cargo bench --bench solver` part 2: 1 m ×
//! 1.25 m, λ = 5 m, rel_tol 1e-9, d = 6, at 1 m–0.5 mm): 0.9–1.6 µs for a
//! one-piece profile (6–9× the uniform closed form of the same run),
//! 1.4–1.8 µs for a three-piece table (11–15×); each piece adds its own
//! moment table and two logarithms, each edge one arc tangent
//! ([`atan_difference`]), a logarithm and two square roots.
//!
//! ## Reference
//! Coulomb's law: D. J. Griffiths, *Introduction to Electrodynamics*, 4th ed.,
//! §2.1. Taylor's theorem with the Lagrange remainder and the elementary
//! integrals ∫dx/√(x² + ρ²) = asinh(x/ρ), ∫x dx/√(x² + ρ²) = √(x² + ρ²):
//! M. Abramowitz & I. A. Stegun, *Handbook of Mathematical Functions*, 3.6.4
//! and 3.3.43–3.3.44 (from memory: formula numbers not re-checked). Exact
//! integration of polynomial densities over flat panels by edge integrals
//! and the divergence theorem follows the idea of J. N. Newman, "Distributions
//! of sources and normal dipoles over a quadrilateral panel", *J. Eng. Math.*
//! 20 (1986) 113–126 (from memory; the recurrences here are derived and
//! tested independently). Rounding model: N. J. Higham, *Accuracy and
//! Stability of Numerical Algorithms*, 2nd ed., §2.2 and §3.1 (from memory).

use super::integrate::{Patch, SAFETY};
use super::kernels::{COULOMB, LocalField, QuadPiece, asinh_difference};
use std::f64::consts::{FRAC_PI_2, PI};

/// Highest degree d of the decay polynomial.
pub const MAX_DEGREE: usize = 16;
/// Largest x = L/(2λ) taken by this path (above it the polynomial needs d > 16).
pub const MAX_HALF_RATIO: f64 = 1.5;
/// Most across-web pieces taken by this path.
pub const MAX_PIECES: usize = 6;
/// Share of the target left to the truncation when d is chosen.
const TRUNC_SHARE: f64 = 0.5;
/// Units of rounding per dependent step in the rounding bound (module header).
pub const ROUND_STEP: f64 = 8.0;
/// Highest power of a among the moments (d + 1 for E_u).
const MMAX: usize = MAX_DEGREE + 1;
/// Unit roundoff of f64 [1].
const UNIT: f64 = f64::EPSILON * 0.5;

/// The moments of one rectangle, with their magnitudes (module header).
#[derive(Debug, Clone, Copy)]
pub struct Moments {
    /// F_mn = ∬ a^m b^n / R [m^{m+n+1}], m ≤ d + 1, n ≤ 2.
    pub f: [[f64; 3]; MMAX + 1],
    /// G_mn = ∬ a^m b^n / R³ [m^{m+n−1}], m ≤ d + 1, n ≤ 3.
    pub g: [[f64; 4]; MMAX + 1],
    /// Magnitudes of `f` (same recurrences on absolute values).
    pub mf: [[f64; 3]; MMAX + 1],
    /// Magnitudes of `g`.
    pub mg: [[f64; 4]; MMAX + 1],
}

impl Moments {
    fn zero() -> Moments {
        Moments {
            f: [[0.0; 3]; MMAX + 1],
            g: [[0.0; 4]; MMAX + 1],
            mf: [[0.0; 3]; MMAX + 1],
            mg: [[0.0; 4]; MMAX + 1],
        }
    }
}

/// 1/k for k ≤ d + 5 (the divisors of the divergence identity).
const RECIPROCAL: [f64; MMAX + 5] = {
    let mut r = [0.0; MMAX + 5];
    let mut k = 1;
    while k < MMAX + 5 {
        r[k] = 1.0 / k as f64;
        k += 1;
    }
    r
};

/// atan x₁ − atan x₀ [rad] with one arc tangent: the argument of (1 + ix₁)(1 − ix₀) =
/// (1 + x₁x₀) + i(x₁ − x₀), which lies in (−π, π) as each arc tangent lies in (−π/2, π/2), so
/// atan((x₁ − x₀)/(1 + x₁x₀)) is corrected by ±π where the real part is negative. Rounding: the
/// error is a few units of roundoff times Σ min(|x_i|, π/2), which bounds Σ|atan x_i| and
/// Σ|x_i|/(1 + x_i²) (the effect of the inputs' own rounding); where x₁ ≈ x₀ are large it is far
/// smaller than that of the plain difference of two arc tangents.
fn atan_difference(x0: f64, x1: f64) -> f64 {
    let num = x1 - x0;
    let den = 1.0 + x1 * x0;
    if den > 0.0 {
        (num / den).atan()
    } else if den < 0.0 {
        (num / den).atan() + PI.copysign(num)
    } else {
        FRAC_PI_2.copysign(num)
    }
}

/// Powers a^k [m^k] of the two ends a₀, a₁ of the patch in a, k ≤ d + 2.
struct Powers {
    p: [[f64; MMAX + 2]; 2],
}

impl Powers {
    fn new(a: [f64; 2], top: usize) -> Powers {
        let mut p = [[1.0; MMAX + 2]; 2];
        for (i, row) in p.iter_mut().enumerate() {
            for k in 1..=top.min(MMAX + 1) {
                row[k] = row[k - 1] * a[i];
            }
        }
        Powers { p }
    }
}

/// One edge b = b_j of the patch: corner distances R₀ⱼ, R₁ⱼ [m], the edge's solid-angle term
/// Δt = atan x₁ − atan x₀ with x_i = a_i b_j/(|h| R_ij) [rad] and its magnitude, and the edge
/// integrals A_k = ∫ a^k/R da [m^k] with magnitudes.
#[derive(Clone)]
struct Edge {
    b: f64,
    rho2: f64,
    r: [f64; 2],
    dt: f64,
    mdt: f64,
    a: [f64; MMAX + 1],
    ma: [f64; MMAX + 1],
}

impl Edge {
    /// The edge b = `b` for the ends `a`, height `h` ≠ 0: corners, solid-angle terms, A₀, A₁.
    fn new(a: [f64; 2], b: f64, h: f64) -> Edge {
        let mut e = Edge::unused();
        e.init(a, b, h);
        e
    }

    /// Sets this edge to b = `b` (as [`Edge::new`], in place).
    fn init(&mut self, a: [f64; 2], b: f64, h: f64) {
        let hh = h.abs();
        let rho2 = b * b + h * h;
        let r = [(a[0] * a[0] + rho2).sqrt(), (a[1] * a[1] + rho2).sqrt()];
        self.b = b;
        self.rho2 = rho2;
        self.r = r;
        let x = [a[0] * b / (hh * r[0]), a[1] * b / (hh * r[1])];
        self.dt = atan_difference(x[0], x[1]);
        self.mdt = x[0].abs().min(FRAC_PI_2) + x[1].abs().min(FRAC_PI_2);
        self.a[0] = asinh_difference(a[0], a[1], rho2, r[0], r[1]);
        self.ma[0] = self.a[0].abs();
        // R₁ − R₀ without cancellation.
        self.a[1] = (a[1] - a[0]) * (a[1] + a[0]) / (r[0] + r[1]);
        self.ma[1] = self.a[1].abs();
    }

    /// A placeholder for the unused slots of a fixed array of edges.
    const fn unused() -> Edge {
        Edge {
            b: 0.0,
            rho2: 0.0,
            r: [0.0; 2],
            dt: 0.0,
            mdt: 0.0,
            a: [0.0; MMAX + 1],
            ma: [0.0; MMAX + 1],
        }
    }

    /// A_k for 2 ≤ k ≤ `top` by the recurrence k·A_k = [a^{k−1}R] − (k−1)ρ²A_{k−2}.
    fn extend(&mut self, pw: &Powers, top: usize) {
        for k in 2..=top.min(MMAX) {
            let kf = k as f64;
            let s1 = pw.p[1][k - 1] * self.r[1];
            let s0 = pw.p[0][k - 1] * self.r[0];
            let w = (kf - 1.0) / kf * self.rho2;
            self.a[k] = (s1 - s0) / kf - w * self.a[k - 2];
            self.ma[k] = (s1.abs() + s0.abs()) / kf + w * self.ma[k - 2];
        }
    }
}

/// The moments of the rectangle between edges `lo` and `hi` (b₀ < b₁) for the ends `a`, up to
/// m ≤ `top` (≤ d + 1), into `mo` (entries beyond are left as they were). Without `quad`
/// (q₂ = 0) the columns F_{m2} and G_{m3} are not needed and not computed.
#[allow(clippy::too_many_arguments)]
fn piece_moments(
    a: [f64; 2],
    pw: &Powers,
    lo: &Edge,
    hi: &Edge,
    h: f64,
    top: usize,
    quad: bool,
    mo: &mut Moments,
) {
    let top = top.min(MMAX);
    let hh = h.abs();
    let h2 = h * h;
    let bl = [lo.b, hi.b];
    // Edge integrals B_n on a = a_i, n ≤ 2, and their magnitudes.
    let mut bq = [[0.0; 3]; 2];
    let mut mbq = [[0.0; 3]; 2];
    for i in 0..2 {
        let rho2 = a[i] * a[i] + h2;
        let (r0, r1) = (lo.r[i], hi.r[i]);
        let b0 = asinh_difference(bl[0], bl[1], rho2, r0, r1);
        let b1 = (bl[1] - bl[0]) * (bl[1] + bl[0]) / (r0 + r1);
        let (s1, s0) = (bl[1] * r1, bl[0] * r0);
        bq[i] = [b0, b1, 0.5 * (s1 - s0) - 0.5 * rho2 * b0];
        mbq[i] = [
            b0.abs(),
            b1.abs(),
            0.5 * (s1.abs() + s0.abs()) + 0.5 * rho2 * b0.abs(),
        ];
    }
    // Powers of the b ends, n ≤ 3.
    let mut bp = [[1.0; 4]; 2];
    for j in 0..2 {
        for n in 1..4 {
            bp[j][n] = bp[j][n - 1] * bl[j];
        }
    }
    let ed = [lo, hi];
    // F from the divergence identity once G is known.
    let fill_f = |mo: &mut Moments, m: usize, n: usize| {
        let t = [
            pw.p[1][m + 1] * bq[1][n],
            pw.p[0][m + 1] * bq[0][n],
            bp[1][n + 1] * ed[1].a[m],
            bp[0][n + 1] * ed[0].a[m],
        ];
        let mt = pw.p[1][m + 1].abs() * mbq[1][n]
            + pw.p[0][m + 1].abs() * mbq[0][n]
            + bp[1][n + 1].abs() * ed[1].ma[m]
            + bp[0][n + 1].abs() * ed[0].ma[m];
        let inv = RECIPROCAL[m + n + 1];
        mo.f[m][n] = (t[0] - t[1] + t[2] - t[3] - h2 * mo.g[m][n]) * inv;
        mo.mf[m][n] = (mt + h2 * mo.mg[m][n]) * inv;
    };
    // Column n = 0: G₀₀ from the solid angle, G_m0 by parts in a.
    let omega = hi.dt - lo.dt;
    let momega = hi.mdt + lo.mdt;
    mo.g[0][0] = omega.abs() / hh;
    mo.mg[0][0] = momega / hh;
    fill_f(mo, 0, 0);
    // Only the entries the sums need: F_{d+1,n} only for G_{d+1,2} (with q₂).
    let f_top = if quad { top } else { top - 1 };
    for m in 1..=top {
        let (s1, s0) = (pw.p[1][m - 1] * bq[1][0], pw.p[0][m - 1] * bq[0][0]);
        let ms = pw.p[1][m - 1].abs() * mbq[1][0] + pw.p[0][m - 1].abs() * mbq[0][0];
        let (mut g, mut mg) = (s0 - s1, ms);
        if m >= 2 {
            let w = (m - 1) as f64;
            g += w * mo.f[m - 2][0];
            mg += w * mo.mf[m - 2][0];
        }
        mo.g[m][0] = g;
        mo.mg[m][0] = mg;
        if m <= f_top {
            fill_f(mo, m, 0);
        }
    }
    // Columns n = 1, 2, 3 by parts in b (without q₂, G_{m3} and F_{m2} are not needed).
    let last = if quad { 4 } else { 3 };
    for n in 1..last {
        let g_top = if n == 1 || (n == 2 && quad) {
            top
        } else {
            top - 1
        };
        for m in 0..=g_top {
            let (s1, s0) = (bp[1][n - 1] * hi.a[m], bp[0][n - 1] * lo.a[m]);
            let ms = bp[1][n - 1].abs() * hi.ma[m] + bp[0][n - 1].abs() * lo.ma[m];
            let (mut g, mut mg) = (s0 - s1, ms);
            if n >= 2 {
                let w = (n - 1) as f64;
                g += w * mo.f[m][n - 2];
                mg += w * mo.mf[m][n - 2];
            }
            mo.g[m][n] = g;
            mo.mg[m][n] = mg;
            if m < top && (n == 1 || (n == 2 && quad)) {
                fill_f(mo, m, n);
            }
        }
    }
}

/// The moments F_mn, G_mn (m ≤ `top` ≤ [`MAX_DEGREE`] + 1) of the rectangle
/// [a₀, a₁] × [b₀, b₁] [m] seen from height `h` [m] ≠ 0 above the origin of (a, b), with
/// their magnitudes (for tests: the patch path shares edges between pieces).
pub fn rectangle_moments(a: [f64; 2], b: [f64; 2], h: f64, top: usize) -> Moments {
    let top = top.min(MMAX);
    let pw = Powers::new(a, top + 1);
    let mut lo = Edge::new(a, b[0], h);
    let mut hi = Edge::new(a, b[1], h);
    lo.extend(&pw, top);
    hi.extend(&pw, top);
    let mut mo = Moments::zero();
    piece_moments(a, &pw, &lo, &hi, h, top, true, &mut mo);
    mo
}

/// ε_d = x^{d+1}/(d+1)! [1] for d = 0..=`MAX_DEGREE`.
fn remainder(x: f64, d: usize) -> f64 {
    let mut e = 1.0;
    for k in 1..=d + 1 {
        e *= x / k as f64;
    }
    e
}

/// The decay polynomial Σ p_m a^m [m⁻ᵐ] of degree `d` (module header) for the point's offset
/// δ = u − u_c [m], with the magnitudes of its coefficients.
fn decay_polynomial(
    len: f64,
    inv_lambda: f64,
    delta: f64,
    d: usize,
    p: &mut [f64; MMAX],
    mp: &mut [f64; MMAX],
) {
    // Taylor coefficients in t = u′ − u_c: e^{−u_c/λ}(−1/λ)^k/k!.
    p[0] = (-0.5 * len * inv_lambda).exp();
    mp[0] = p[0];
    for k in 1..=d {
        p[k] = -p[k - 1] * inv_lambda / k as f64;
        mp[k] = p[k].abs();
    }
    // Taylor shift t = a + δ (synthetic division, d(d+1)/2 steps).
    let ad = delta.abs();
    for i in 0..d {
        for j in (i..d).rev() {
            p[j] += delta * p[j + 1];
            mp[j] += ad * mp[j + 1];
        }
    }
}

/// The claimed error [V, V/m ×3] and the targets r·s·S [V, V/m] of one moment evaluation.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MomentBound {
    /// Claimed error bounds (truncation + rounding) of V, E_u, E_y, E_h.
    pub claimed: [f64; 4],
    /// Degree d of the decay polynomial used.
    pub degree: usize,
}

/// V [V] and E [V/m] of `patch` at `p = [u, y, h]` [m] by closed-form moments, with the claimed
/// error bounds, or `None` where the path does not apply (h = 0, too many pieces, a density
/// falling by more than e^{2·MAX_HALF_RATIO} over the patch) or its bound misses a target
/// r·s·S_V, r·s·S_E (`rel_tol` = r, s = [`SAFETY`]). The caller has checked the patch, the
/// point and `rel_tol`.
pub fn moment_field(patch: &Patch, p: [f64; 3], rel_tol: f64) -> Option<(LocalField, MomentBound)> {
    let [u, y, h] = p;
    let np = patch.across.len();
    if h == 0.0 || np == 0 || np > MAX_PIECES {
        return None;
    }
    let len = patch.len;
    let inv_lambda = 1.0 / patch.decay_length;
    let x = 0.5 * len * inv_lambda;
    if x.is_nan() || x > MAX_HALF_RATIO {
        return None;
    }
    let eps = rel_tol * SAFETY;
    let fmax = patch.max_abs_shape();
    if fmax == 0.0 || patch.amplitude == 0.0 {
        return Some((
            LocalField::default(),
            MomentBound {
                claimed: [0.0; 4],
                degree: 0,
            },
        ));
    }
    let a = [-u, len - u];
    let [y_lo, y_hi] = patch.y_range();
    let b_ends = [y_lo - y, y_hi - y];
    let h2 = h * h;
    // D²: farthest corner from the foot of the perpendicular, in the plane.
    let dd = (a[0] * a[0]).max(a[1] * a[1]) + (b_ends[0] * b_ends[0]).max(b_ends[1] * b_ends[1]);
    let log_disc = (dd / h2).ln_1p();
    // Edges b = b_j shared by adjacent pieces (two alive at a time, the interior ones made as
    // the pieces are met); the outer ones' solid-angle terms give Ω of the whole patch,
    // Ω ≤ S_E/(k|A|fmax).
    let mut lo = Edge::new(a, b_ends[0], h);
    let mut last = Edge::new(a, patch.across[np - 1].y_hi - y, h);
    let omega = (last.dt - lo.dt).abs();
    // Degree: least d with ε_d ≤ TRUNC_SHARE·eps (V, E_h) and ε_d·π ln(1 + D²/h²) ≤
    // TRUNC_SHARE·eps·Ω (E_u, E_y); the bounds are checked exactly below.
    let want = TRUNC_SHARE * eps * (omega / (PI * log_disc)).min(1.0);
    let mut d = 0;
    while remainder(x, d) > want {
        d += 1;
        if d > MAX_DEGREE {
            return None;
        }
    }
    let top = d + 1;
    let eps_d = remainder(x, d);
    let (mut pc, mut mpc) = ([0.0; MMAX], [0.0; MMAX]);
    decay_polynomial(len, inv_lambda, u - 0.5 * len, d, &mut pc, &mut mpc);
    let pw = Powers::new(a, top + 1);
    lo.extend(&pw, top);
    last.extend(&pw, top);
    // The lower edge of the current piece and the next interior edge, alternating (no copies).
    let mut pair = [lo, Edge::unused()];
    let mut cur = 0;
    let mut sum = [0.0; 4];
    let mut mag = [0.0; 4];
    // Geometry of the covering uniform rectangle (unit density) and its magnitudes.
    let mut geo = [0.0; 4];
    let mut mgeo = [0.0; 4];
    let mut mo = Moments::zero();
    for (i, pc_k) in patch.across.iter().enumerate() {
        let interior = i + 1 < np;
        if interior {
            let e = &mut pair[1 - cur];
            e.init(a, pc_k.y_hi - y, h);
            e.extend(&pw, top);
        }
        let next = if interior { &pair[1 - cur] } else { &last };
        let (q, mq) = across_coefficients(pc_k, y);
        piece_moments(a, &pw, &pair[cur], next, h, top, mq[2] != 0.0, &mut mo);
        for n in 0..3 {
            if q[n] == 0.0 && mq[n] == 0.0 {
                continue;
            }
            let mut s = [0.0; 4];
            let mut ms = [0.0; 4];
            for m in 0..=d {
                s[0] += pc[m] * mo.f[m][n];
                s[1] += pc[m] * mo.g[m + 1][n];
                s[2] += pc[m] * mo.g[m][n + 1];
                s[3] += pc[m] * mo.g[m][n];
                ms[0] += mpc[m] * mo.mf[m][n];
                ms[1] += mpc[m] * mo.mg[m + 1][n];
                ms[2] += mpc[m] * mo.mg[m][n + 1];
                ms[3] += mpc[m] * mo.mg[m][n];
            }
            for k in 0..4 {
                sum[k] += q[n] * s[k];
                mag[k] += mq[n] * ms[k];
            }
        }
        geo[0] += mo.f[0][0];
        geo[1] -= mo.g[1][0];
        geo[2] -= mo.g[0][1];
        geo[3] += mo.g[0][0];
        mgeo[0] += mo.mf[0][0];
        mgeo[1] += mo.mg[1][0];
        mgeo[2] += mo.mg[0][1];
        mgeo[3] += mo.mg[0][0];
        cur = 1 - cur;
    }
    let hh = h.abs();
    let round = ROUND_STEP * (d as f64 + 12.0) * UNIT;
    // Error scales per unit k·|A| (module header), less their own rounding.
    let sv = fmax * (geo[0].abs() - round * mgeo[0]);
    let se_exact = (geo[1] * geo[1] + geo[2] * geo[2] + h2 * geo[3] * geo[3]).sqrt();
    let se = fmax * (se_exact - round * (mgeo[1] + mgeo[2] + hh * mgeo[3]));
    // Truncation bounds per unit k·|A|.
    let disc = PI * log_disc;
    let trunc = [
        eps_d * fmax * geo[0].abs(),
        eps_d * fmax * disc,
        eps_d * fmax * disc,
        eps_d * fmax * hh * geo[3],
    ];
    let mut bound = [0.0; 4];
    for k in 0..4 {
        let scale = if k == 3 { hh } else { 1.0 };
        bound[k] = trunc[k] + round * scale * mag[k];
    }
    let ok = bound[0] <= eps * sv && bound[1..].iter().all(|b| *b <= eps * se);
    if !ok || !bound.iter().all(|b| b.is_finite()) || !sum.iter().all(|s| s.is_finite()) {
        return None;
    }
    let k = patch.amplitude * COULOMB;
    let ka = k.abs();
    let field = LocalField {
        v: k * sum[0],
        e: [-k * sum[1], -k * sum[2], k * (h * sum[3])],
    };
    Some((
        field,
        MomentBound {
            claimed: [ka * bound[0], ka * bound[1], ka * bound[2], ka * bound[3]],
            degree: d,
        },
    ))
}

/// The coefficients q_n [m⁻ⁿ] of f(y + b) = Σ q_n b^n on one piece, and their magnitudes.
fn across_coefficients(pc: &QuadPiece, y: f64) -> ([f64; 3], [f64; 3]) {
    let [c0, c1, c2] = pc.c;
    let q = [c0 + y * (c1 + c2 * y), c1 + 2.0 * c2 * y, c2];
    let mq = [
        c0.abs() + (y * c1).abs() + (c2 * y * y).abs(),
        c1.abs() + (2.0 * c2 * y).abs(),
        c2.abs(),
    ];
    (q, mq)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::field::integrate::{error_scale, patch_field_numerical};
    use crate::field::kernels::{rectangle_geometry, uniform_rectangle};
    use crate::units::EPS0;

    /// Gauss–Legendre nodes and weights on [−1, 1] by Newton iteration on P_n.
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

    /// Nodes and weights of a composite rule with `cells` equal cells of 24 points on [lo, hi].
    fn composite(lo: f64, hi: f64, cells: usize) -> Vec<(f64, f64)> {
        let gl = gauss_legendre(24);
        let w = (hi - lo) / cells as f64;
        let mut out = Vec::new();
        for c in 0..cells {
            let m = lo + (c as f64 + 0.5) * w;
            for &(x, wt) in &gl {
                out.push((m + 0.5 * w * x, 0.5 * w * wt));
            }
        }
        out
    }

    #[test]
    fn moments_match_an_independent_quadrature() {
        // Reference: the defining double integrals by a composite tensor Gauss–Legendre rule
        // (cells no wider than h, so the integrand's complex singularities at distance ≥ h from
        // the real axis leave the 24-point rule exact to rounding). Compared relative to the
        // matching moment of |a|^m |b|^n, i.e. to the magnitude of the integrand.
        for &(a, b, h) in &[
            ([-0.3, 0.7], [-0.2, 0.5], 0.1),
            ([0.2, 1.0], [-0.6, -0.1], 0.25),
            ([-1.2, -0.4], [0.3, 0.9], -0.4),
            ([-0.5, 0.5], [-0.625, 0.625], 1.0),
        ] {
            let mo = rectangle_moments(a, b, h, 5);
            let cells = ((a[1] - a[0]) / h.abs()).ceil() as usize + 2;
            let qa = composite(a[0], a[1], cells);
            let qb = composite(b[0], b[1], cells);
            let mut f = [[0.0; 3]; 5];
            let mut g = [[0.0; 4]; 5];
            let mut fa = [[0.0; 3]; 5];
            let mut ga = [[0.0; 4]; 5];
            for &(x, wx) in &qa {
                for &(y, wy) in &qb {
                    let r = (x * x + y * y + h * h).sqrt();
                    let w = wx * wy;
                    for m in 0..5 {
                        for n in 0..4 {
                            let mono = x.powi(m as i32) * y.powi(n as i32);
                            g[m][n] += w * mono / (r * r * r);
                            ga[m][n] += w * mono.abs() / (r * r * r);
                            if n < 3 {
                                f[m][n] += w * mono / r;
                                fa[m][n] += w * mono.abs() / r;
                            }
                        }
                    }
                }
            }
            for m in 0..5 {
                for n in 0..4 {
                    let e = (mo.g[m][n] - g[m][n]).abs();
                    assert!(
                        e <= 1e-12 * ga[m][n],
                        "G{m}{n} {a:?} {b:?} {h}: {} vs {}",
                        mo.g[m][n],
                        g[m][n]
                    );
                    if n < 3 {
                        let e = (mo.f[m][n] - f[m][n]).abs();
                        assert!(
                            e <= 1e-12 * fa[m][n],
                            "F{m}{n} {a:?} {b:?} {h}: {} vs {}",
                            mo.f[m][n],
                            f[m][n]
                        );
                    }
                }
            }
        }
    }

    #[test]
    fn lowest_moments_are_the_uniform_closed_form() {
        // F₀₀ = ∬1/R, −G₁₀ = E_u, −G₀₁ = E_y and h·G₀₀ = E_h per unit density (kernels module).
        for &(a, b, h) in &[
            ([-0.3, 0.7], [-0.2, 0.5], 1e-6),
            ([0.2, 1.0], [-0.6, -0.1], 0.025),
            ([-50.0, -49.0], [3.0, 4.0], -7.0),
        ] {
            let mo = rectangle_moments(a, b, h, 2);
            let g = rectangle_geometry(a[0], a[1], b[0], b[1], [0.0, 0.0, h]);
            let tol = 1e-13 * g.v.abs().max(g.e_norm());
            assert!((mo.f[0][0] - g.v).abs() <= tol, "{a:?} {h}");
            assert!((-mo.g[1][0] - g.e[0]).abs() <= tol, "{a:?} {h}");
            assert!((-mo.g[0][1] - g.e[1]).abs() <= tol, "{a:?} {h}");
            assert!((h * mo.g[0][0] - g.e[2]).abs() <= tol, "{a:?} {h}");
        }
    }

    fn table_patch(decay: f64) -> Patch {
        Patch {
            len: 1.0,
            amplitude: 1e-5,
            decay_length: decay,
            across: vec![
                QuadPiece {
                    y_lo: -0.625,
                    y_hi: -0.2,
                    c: [0.5 / 0.425 * -0.2 + 1.0, -0.5 / 0.425, 0.0],
                },
                QuadPiece {
                    y_lo: -0.2,
                    y_hi: 0.3,
                    c: [1.04, 0.2, 0.0],
                },
                QuadPiece {
                    y_lo: 0.3,
                    y_hi: 0.625,
                    c: [1.1, -1.0, 3.0],
                },
            ],
        }
    }

    #[test]
    fn no_decay_is_the_uniform_rectangle() {
        // λ = ∞ with f = 1: degree 0, the field of the uniform closed form (kernels module).
        let pt = Patch {
            len: 1.25,
            amplitude: 2e-6,
            decay_length: f64::INFINITY,
            across: vec![QuadPiece {
                y_lo: -0.5,
                y_hi: 0.5,
                c: [1.0, 0.0, 0.0],
            }],
        };
        for p in [
            [0.6, 0.1, 1.0],
            [0.6, 0.1, 1e-6],
            [1.3, 0.55, -0.01],
            [-0.2, 0.0, 0.3],
        ] {
            let (f, b) = moment_field(&pt, p, 1e-9).expect("moment path");
            assert_eq!(b.degree, 0);
            let want = uniform_rectangle(0.0, 1.25, -0.5, 0.5, 2e-6, p);
            let [sv, se] = error_scale(&pt, p);
            assert!((f.v - want.v).abs() <= 1e-13 * sv, "{p:?}");
            for k in 0..3 {
                assert!((f.e[k] - want.e[k]).abs() <= 1e-13 * se, "{p:?}");
            }
        }
    }

    #[test]
    fn gauss_law_across_the_sheet() {
        // E_h jumps by σ/ε₀ across a charged sheet (Griffiths, Introduction to
        // Electrodynamics, 4th ed., §2.3.5): at ±1 µm the rest of the sheet changes the jump
        // by about h/w ≈ 1e-6 relative (asserted 1e-5).
        let pt = table_patch(5.0);
        for (u, y) in [(0.5, 0.1), (0.2, -0.4), (0.9, 0.45)] {
            let up = moment_field(&pt, [u, y, 1e-6], 1e-9).expect("above").0;
            let down = moment_field(&pt, [u, y, -1e-6], 1e-9).expect("below").0;
            let piece = pt
                .across
                .iter()
                .find(|q| q.y_lo <= y && y <= q.y_hi)
                .unwrap();
            let sigma = pt.amplitude * (-u / 5.0f64).exp() * piece.value(y);
            let jump = up.e[2] - down.e[2];
            assert!(
                (jump - sigma / EPS0).abs() <= 1e-5 * (sigma / EPS0).abs(),
                "{u},{y}: {jump} vs {}",
                sigma / EPS0
            );
        }
    }

    /// The benchmark's 3-piece table at 1 m, 25 mm, 0.5 mm: within the claimed bound of the
    /// double-exponential rule at 1e-12 (plus that rule's own target, 1e-12 of the scale).
    #[test]
    fn bench_points_agree_with_the_reference() {
        let pt = table_patch(5.0);
        for p in [[0.5, 0.1, 1.0], [0.5, 0.1, 0.025], [0.5, 0.1, 5e-4]] {
            let (f, b) = moment_field(&pt, p, 1e-9).expect("moment path");
            let want = patch_field_numerical(&pt, p, 1e-12).unwrap();
            let [sv, se] = error_scale(&pt, p);
            assert!((f.v - want.v).abs() <= b.claimed[0] + 1e-12 * sv);
            for k in 0..3 {
                assert!((f.e[k] - want.e[k]).abs() <= b.claimed[k + 1] + 1e-12 * se);
            }
        }
    }
}
