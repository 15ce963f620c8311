//! Physics checks of the patch kernels against closed forms, Gauss's law and an
//! independent brute-force integration of Coulomb's law.
//!
//! Every tolerance carries a comment saying where it comes from.

use approx::assert_relative_eq;
use proptest::prelude::*;
use std::f64::consts::PI;
use websigma::field::integrate::{
    KernelError, Patch, error_scale, patch_field, patch_field_numerical, patch_is_uniform,
};
use websigma::field::kernels::{LocalField, QuadPiece, uniform_rectangle};
use websigma::units::EPS0;

/// 1/(4πε0) [m/F], written out here rather than taken from the crate.
const K: f64 = 1.0 / (4.0 * PI * EPS0);
/// Surface density used throughout [C/m²] (a typical web charge).
const SIGMA: f64 = 2.0e-6;
/// Patch used throughout: L = 1.25 m along the span, 1 m wide (y ∈ [−0.5, 0.5]).
const L: f64 = 1.25;
const W: f64 = 1.0;

fn vnorm(e: [f64; 3]) -> f64 {
    (e[0] * e[0] + e[1] * e[1] + e[2] * e[2]).sqrt()
}

fn dist3(a: [f64; 3], b: [f64; 3]) -> f64 {
    vnorm([a[0] - b[0], a[1] - b[1], a[2] - b[2]])
}

fn uniform_patch() -> Patch {
    Patch {
        len: L,
        amplitude: SIGMA,
        decay_length: f64::INFINITY,
        across: vec![QuadPiece {
            y_lo: -0.5 * W,
            y_hi: 0.5 * W,
            c: [1.0, 0.0, 0.0],
        }],
    }
}

/// f = 1 + k(2y/w)² (the `edges` shape of DESIGN.md §3).
fn edges(k: f64) -> Vec<QuadPiece> {
    vec![QuadPiece {
        y_lo: -0.5 * W,
        y_hi: 0.5 * W,
        c: [1.0, 0.0, 4.0 * k / (W * W)],
    }]
}

/// f = 1 + k(2y/w) (the `tilt` shape).
fn tilt(k: f64) -> Vec<QuadPiece> {
    vec![QuadPiece {
        y_lo: -0.5 * W,
        y_hi: 0.5 * W,
        c: [1.0, 2.0 * k / W, 0.0],
    }]
}

/// A 3-piece piecewise-linear table through (y, f) = (−0.5, 0.2), (−0.1, 1), (0.2, 1.3), (0.5, −0.4).
fn table() -> Vec<QuadPiece> {
    let pts = [(-0.5, 0.2), (-0.1, 1.0), (0.2, 1.3), (0.5, -0.4)];
    pts.windows(2)
        .map(|w| {
            let (y0, f0) = w[0];
            let (y1, f1) = w[1];
            let s = (f1 - f0) / (y1 - y0);
            QuadPiece {
                y_lo: y0,
                y_hi: y1,
                c: [f0 - s * y0, s, 0.0],
            }
        })
        .collect()
}

fn patch(across: Vec<QuadPiece>, decay_length: f64) -> Patch {
    Patch {
        len: L,
        amplitude: SIGMA,
        decay_length,
        across,
    }
}

// ---------------------------------------------------------------------------
// Independent reference: tensor-product Gauss–Legendre on a graded mesh.
// ---------------------------------------------------------------------------

/// Gauss–Legendre nodes and weights on [−1, 1] by Newton iteration on P_n.
fn gauss_legendre(n: usize) -> Vec<(f64, f64)> {
    (0..n)
        .map(|i| {
            let mut x = (PI * (i as f64 + 0.75) / (n as f64 + 0.5)).cos();
            let mut dp = 1.0;
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
                if dx.abs() < 1e-17 {
                    break;
                }
            }
            (x, 2.0 / ((1.0 - x * x) * dp * dp))
        })
        .collect()
}

/// Cell ends on [lo, hi]: `focus` ± h0·2^k (k ≥ 0), plus `extra`, clipped to [lo, hi].
fn graded(lo: f64, hi: f64, focus: f64, h0: f64, extra: &[f64]) -> Vec<f64> {
    let mut b = vec![lo, hi];
    b.extend(extra.iter().copied().filter(|&x| x > lo && x < hi));
    if focus > lo && focus < hi {
        b.push(focus);
    }
    let mut s = h0;
    while s < 2.0 * (hi - lo) + (focus - lo).abs() + (focus - hi).abs() {
        for x in [focus - s, focus + s] {
            if x > lo && x < hi {
                b.push(x);
            }
        }
        s *= 2.0;
    }
    b.sort_by(|a, c| a.total_cmp(c));
    b.dedup();
    b
}

/// Composite Gauss–Legendre nodes (position, weight) on cells with ends `b`.
fn nodes(b: &[f64], gl: &[(f64, f64)]) -> Vec<(f64, f64)> {
    let mut out = Vec::new();
    for w in b.windows(2) {
        let (m, r) = (0.5 * (w[0] + w[1]), 0.5 * (w[1] - w[0]));
        out.extend(gl.iter().map(|&(x, wt)| (m + r * x, r * wt)));
    }
    out
}

/// V and E of `patch` at `p` by brute force: 16-point Gauss–Legendre per cell on a mesh graded
/// geometrically (ratio 2, smallest cell = half the distance to the patch) towards the foot of
/// the perpendicular in u and y, with cell ends at the across-web piece ends (and, along u, at
/// λ/4·2^k for the decay). On every cell the
/// integrand's nearest singularity is at least one cell size away, so the rule's error is below
/// ~(3 + √8)^−32 ≈ 1e-24 relative per cell; the sum is accurate to rounding (≈ 1e-13).
fn brute(patch: &Patch, p: [f64; 3]) -> LocalField {
    let gl = gauss_legendre(16);
    let [u, y, h] = p;
    let (y_lo, y_hi) = (
        patch.across[0].y_lo,
        patch.across[patch.across.len() - 1].y_hi,
    );
    let du = (-u).max(u - patch.len).max(0.0);
    let dy = (y_lo - y).max(y - y_hi).max(0.0);
    let h0 = 0.5 * (du * du + dy * dy + h * h).sqrt();
    let ends: Vec<f64> = patch.across.iter().map(|pc| pc.y_hi).collect();
    // Cell ends at λ/4·2^k resolve a decay much shorter than the patch.
    let mut decay_ends = Vec::new();
    let mut x = patch.decay_length / 4.0;
    while x < patch.len {
        decay_ends.push(x);
        x *= 2.0;
    }
    let un = nodes(&graded(0.0, patch.len, u, h0, &decay_ends), &gl);
    let yn = nodes(&graded(y_lo, y_hi, y, h0, &ends), &gl);
    // σ = A e^(−u/λ) f(y) is separable: fold it into the weights.
    let uw: Vec<(f64, f64)> = un
        .iter()
        .map(|&(x, w)| (x, w * patch.amplitude * (-x / patch.decay_length).exp()))
        .collect();
    let yw: Vec<(f64, f64)> = yn
        .iter()
        .map(|&(yy, w)| {
            let pc = patch
                .across
                .iter()
                .find(|pc| yy >= pc.y_lo && yy <= pc.y_hi)
                .expect("node inside the patch");
            (yy, w * (pc.c[0] + pc.c[1] * yy + pc.c[2] * yy * yy))
        })
        .collect();
    let mut acc = [0.0; 4];
    for &(x, wu) in &uw {
        let ax = u - x;
        let mut row = [0.0; 4];
        for &(yy, wy) in &yw {
            let ay = y - yy;
            let r2 = ax * ax + ay * ay + h * h;
            let ir = 1.0 / r2.sqrt();
            let ir3 = ir * ir * ir * wy;
            row[0] += wy * ir;
            row[1] += ir3;
            row[2] += ay * ir3;
            row[3] += ir3;
        }
        acc[0] += wu * row[0];
        acc[1] += wu * ax * row[1];
        acc[2] += wu * row[2];
        acc[3] += wu * h * row[3];
    }
    LocalField {
        v: K * acc[0],
        e: [K * acc[1], K * acc[2], K * acc[3]],
    }
}

/// Relative errors (on V, on |E|) of `got` against `want`.
fn rel_err(got: &LocalField, want: &LocalField) -> (f64, f64) {
    let de = [
        got.e[0] - want.e[0],
        got.e[1] - want.e[1],
        got.e[2] - want.e[2],
    ];
    (
        (got.v - want.v).abs() / want.v.abs(),
        vnorm(de) / vnorm(want.e),
    )
}

#[test]
fn brute_force_reference_reproduces_the_closed_form() {
    // The reference integrator itself, against the closed form of a uniform rectangle
    // (derived from Coulomb's law); both are exact to rounding, so 1e-12.
    let pt = uniform_patch();
    for p in [
        [0.625, 0.1, 5e-4],
        [1.3, 0.55, 0.025],
        [0.2, -0.5, 1e-4],
        [-0.3, 0.2, 0.0],
        [0.6, 0.0, 1.0],
    ] {
        let want = uniform_rectangle(0.0, L, -0.5, 0.5, SIGMA, p);
        let (ev, ee) = rel_err(&brute(&pt, p), &want);
        assert!(ev < 1e-12 && ee < 1e-12, "{p:?}: {ev:e} {ee:e}");
    }
}

// ---------------------------------------------------------------------------
// 1. Closed forms of the uniform rectangle.
// ---------------------------------------------------------------------------

#[test]
fn large_sheet_gives_the_infinite_plane_field() {
    // Gauss's law: E = σ/(2ε0) for an infinite plane. A 200 m × 200 m square at h = 1 mm
    // differs by the finite-size correction (4√2/π)·h/s ≈ 9e-6 (from the on-axis formula
    // below), hence 1e-5.
    let f = uniform_rectangle(-100.0, 100.0, -100.0, 100.0, SIGMA, [0.0, 0.0, 1e-3]);
    assert_relative_eq!(f.e[2], SIGMA / (2.0 * EPS0), max_relative = 1e-5);
    assert!(f.e[0].abs() < 1e-9 * f.e[2] && f.e[1].abs() < 1e-9 * f.e[2]);
    let below = uniform_rectangle(-100.0, 100.0, -100.0, 100.0, SIGMA, [0.0, 0.0, -1e-3]);
    assert_relative_eq!(below.e[2], -SIGMA / (2.0 * EPS0), max_relative = 1e-5);
}

#[test]
fn on_axis_field_of_a_rectangle() {
    // Derived from Coulomb's law: E_h = σ/(4πε0)·Ω, the solid angle of four quarter rectangles
    // X×Y (X = a/2, Y = b/2) with a corner at the foot, each atan(XY/(hR)), R = √(h²+X²+Y²):
    // E_h = σ/(πε0)·atan(ab/(4h√(h² + a²/4 + b²/4))). Same exact expression: 1e-12 (rounding).
    let (a, b) = (1.25, 0.8);
    for h in [1e-5, 1e-3, 0.05, 0.7, 3.0, 40.0] {
        let f = uniform_rectangle(-a / 2.0, a / 2.0, -b / 2.0, b / 2.0, SIGMA, [0.0, 0.0, h]);
        let want = SIGMA / (PI * EPS0)
            * (a * b / (4.0 * h * (h * h + a * a / 4.0 + b * b / 4.0).sqrt())).atan();
        assert_relative_eq!(f.e[2], want, max_relative = 1e-12);
        assert!(
            f.e[0].abs() < 1e-12 * want && f.e[1].abs() < 1e-12 * want,
            "h = {h}"
        );
    }
}

#[test]
fn potential_at_the_centre_of_a_square() {
    // Derived from Coulomb's law: V = 4·σ/(4πε0)·∬_[0,s/2]² dx dy/√(x²+y²) and
    // ∬_[0,c]² dx dy/r = 2c·ln(1+√2), so V = σ·s·ln(1+√2)/(πε0). Exact: 1e-12.
    for s in [1e-3, 0.3, 2.0, 20.0] {
        let f = uniform_rectangle(-s / 2.0, s / 2.0, -s / 2.0, s / 2.0, SIGMA, [0.0, 0.0, 0.0]);
        let want = SIGMA * s * (1.0 + 2f64.sqrt()).ln() / (PI * EPS0);
        assert_relative_eq!(f.v, want, max_relative = 1e-12);
    }
}

#[test]
fn long_strip_above_its_centre_line() {
    // Derived from Coulomb's law (infinite strip of width w, by superposition of line
    // charges): E_h = σ/(πε0)·atan(w/(2h)). A 1000 m strip differs by ≈ (w² + 4h²)/L², ≤ 1e-6.
    let w = 0.5;
    for h in [1e-3, 0.01, 0.1, 0.4] {
        let f = uniform_rectangle(-500.0, 500.0, -w / 2.0, w / 2.0, SIGMA, [0.0, 0.0, h]);
        assert_relative_eq!(
            f.e[2],
            SIGMA / (PI * EPS0) * (w / (2.0 * h)).atan(),
            max_relative = 1e-6
        );
    }
}

#[test]
fn normal_field_jumps_by_sigma_over_eps0() {
    // Gauss's law (pillbox): E_h(+δ) − E_h(−δ) → σ/ε0. At δ = 1 µm above a 1.25 m × 1 m
    // patch the correction is O(δ/size) ≈ 1e-6: 1e-5.
    let p = [0.4, 0.2, 1e-6];
    let m = [0.4, 0.2, -1e-6];
    let jump = uniform_rectangle(0.0, L, -0.5, 0.5, SIGMA, p).e[2]
        - uniform_rectangle(0.0, L, -0.5, 0.5, SIGMA, m).e[2];
    assert_relative_eq!(jump, SIGMA / EPS0, max_relative = 1e-5);
    // The same for a non-uniform patch, numerically: the jump is the local density
    // σ(u, y)/ε0 (+ O(δ·|∇σ|/σ) ≈ 1e-6).
    let pt = patch(edges(2.0), 0.3);
    let local = SIGMA * (-0.4f64 / 0.3).exp() * (1.0 + 2.0 * (2.0 * 0.2_f64).powi(2));
    let up = patch_field(&pt, p, 1e-9).unwrap().e[2];
    let down = patch_field(&pt, m, 1e-9).unwrap().e[2];
    println!(
        "jump relative error (non-uniform): {:.1e}",
        ((up - down) * EPS0 / local - 1.0).abs()
    );
    assert_relative_eq!(up - down, local / EPS0, max_relative = 1e-5);
}

#[test]
fn in_plane_points_outside_are_finite_with_zero_normal_field() {
    // In the plane of the sheet, outside it, E_h = 0 by symmetry (h → −h); V and the in-plane
    // field are continuous there: compare with h = 1e-9 m, where the change is O(h/dist) ≈ 1e-8.
    for p in [
        [1.35, 0.2, 0.0],
        [0.6, 0.7, 0.0],
        [-1e-3, 0.5 + 1e-3, 0.0],
        [0.0, 0.6, 0.0],
    ] {
        let f = uniform_rectangle(0.0, L, -0.5, 0.5, SIGMA, p);
        assert!(
            f.v.is_finite() && f.e.iter().all(|e| e.is_finite()),
            "{p:?}"
        );
        assert_eq!(f.e[2], 0.0);
        let g = uniform_rectangle(0.0, L, -0.5, 0.5, SIGMA, [p[0], p[1], 1e-9]);
        assert_relative_eq!(f.v, g.v, max_relative = 1e-7);
        assert_relative_eq!(
            f.e[0],
            g.e[0],
            max_relative = 1e-6,
            epsilon = 1e-6 * vnorm(g.e)
        );
        assert_relative_eq!(
            f.e[1],
            g.e[1],
            max_relative = 1e-6,
            epsilon = 1e-6 * vnorm(g.e)
        );
    }
}

#[test]
fn far_field_is_that_of_a_point_charge() {
    // Coulomb's law for a point charge Q = ∬σ dA at the patch centre: both patches below have
    // no dipole moment about their centre, so the relative deviation is O((size/r)²) =
    // (1.25/100)² ≈ 1.6e-4, the tolerance.
    let centre = [L / 2.0, 0.0, 0.0];
    let cases = [
        (uniform_patch(), SIGMA * L * W),
        (
            patch(edges(2.0), f64::INFINITY),
            SIGMA * L * W * (1.0 + 2.0 / 3.0),
        ),
    ];
    for (pt, q) in cases {
        for dir in [
            [0.0, 0.0, 1.0],
            [0.6, 0.0, 0.8],
            [0.0, 1.0, 0.0],
            [-0.48, 0.6, -0.64],
        ] {
            let r = 100.0;
            let p = [
                centre[0] + r * dir[0],
                centre[1] + r * dir[1],
                centre[2] + r * dir[2],
            ];
            let f = patch_field(&pt, p, 1e-9).unwrap();
            assert_relative_eq!(f.v, K * q / r, max_relative = 1.6e-4);
            let want = [
                K * q * dir[0] / (r * r),
                K * q * dir[1] / (r * r),
                K * q * dir[2] / (r * r),
            ];
            assert!(
                dist3(f.e, want) <= 1.6e-4 * vnorm(want),
                "{dir:?}: {:?} vs {want:?}",
                f.e
            );
        }
    }
}

// ---------------------------------------------------------------------------
// 2. The numerical path on a uniform patch against the closed form.
// ---------------------------------------------------------------------------

/// Points at distance `d` from the patch: above the middle, an edge and a corner, outside it
/// (beside a corner, at height d), in the plane h = 0 beside an edge and an end, and below.
fn probe_points(d: f64) -> Vec<[f64; 3]> {
    vec![
        [0.5 * L + 0.013, 0.07, d],
        [0.41, 0.5, d],
        [L, -0.5, d],
        [L + d, 0.5 + d, d],
        [0.37, 0.5 + d, 0.0],
        [-d, -0.12, 0.0],
        [0.83, -0.21, -d],
    ]
}

#[test]
fn numerical_path_reproduces_the_uniform_closed_form() {
    // For a uniform patch the error scale is the closed-form |V|, |E| itself, so the contract
    // "error ≤ rel_tol × scale" with rel_tol = 1e-10 means 1e-10 relative to the closed form.
    let pt = uniform_patch();
    assert!(patch_is_uniform(&pt));
    let mut worst: f64 = 0.0;
    for d in [1e-4, 5e-4, 0.025, 1.0, 100.0] {
        for p in probe_points(d) {
            let want = uniform_rectangle(0.0, L, -0.5, 0.5, SIGMA, p);
            let got = patch_field_numerical(&pt, p, 1e-10).unwrap();
            let (ev, ee) = rel_err(&got, &want);
            worst = worst.max(ev).max(ee);
            assert!(
                ev <= 1e-10 && ee <= 1e-10,
                "d = {d}, p = {p:?}: V {ev:.1e}, E {ee:.1e}"
            );
            // patch_field takes the closed form for this patch: identical.
            assert_eq!(patch_field(&pt, p, 1e-10).unwrap(), want);
        }
    }
    println!("numerical vs closed form, worst relative error: {worst:.1e}");
}

// ---------------------------------------------------------------------------
// 3. Non-uniform patches against the brute-force reference.
// ---------------------------------------------------------------------------

#[test]
fn non_uniform_patches_match_brute_force() {
    // Reference: `brute` (≈ 1e-13). Requirement: relative error ≤ 1e-9 on V and |E| at
    // rel_tol = 1e-9 (the solver's target is 0.1·rel_tol times the uniform max-density field,
    // and its error estimate is conservative, see integrate.rs).
    let profiles: Vec<(&str, Patch)> = vec![
        ("edges k=2", patch(edges(2.0), f64::INFINITY)),
        ("tilt k=0.5", patch(tilt(0.5), f64::INFINITY)),
        ("tilt k=3", patch(tilt(3.0), f64::INFINITY)),
        ("table", patch(table(), f64::INFINITY)),
        ("edges, decay 0.3 m", patch(edges(2.0), 0.3)),
        ("tilt, decay 1e5 m", patch(tilt(3.0), 1e5)),
    ];
    let mut worst: f64 = 0.0;
    for (name, pt) in &profiles {
        assert!(!patch_is_uniform(pt));
        for d in [1.0, 0.025, 5e-4] {
            for p in [
                [0.5 * L + 0.013, 0.07, d],
                [0.41, 0.5, d],
                [L, -0.5, -d],
                [L + 0.2, 0.31, d],
                [0.66, -0.5 - d, 0.0],
            ] {
                let want = brute(pt, p);
                let got = patch_field(pt, p, 1e-9).unwrap();
                let (ev, ee) = rel_err(&got, &want);
                worst = worst.max(ev).max(ee);
                assert!(
                    ev <= 1e-9 && ee <= 1e-9,
                    "{name}, p = {p:?}: V {ev:.1e}, E {ee:.1e}"
                );
            }
        }
        let p = [0.3, -0.2, 1e-4];
        let (ev, ee) = rel_err(&patch_field(pt, p, 1e-9).unwrap(), &brute(pt, p));
        worst = worst.max(ev).max(ee);
        assert!(
            ev <= 1e-9 && ee <= 1e-9,
            "{name}, p = {p:?}: V {ev:.1e}, E {ee:.1e}"
        );
    }
    println!("worst relative error against brute force: {worst:.1e}");
}

// ---------------------------------------------------------------------------
// 4. Gauss's law.
// ---------------------------------------------------------------------------

/// ∬ g over [a0, a1] × [b0, b1] by 8-point Gauss–Legendre on na × nb cells.
fn face(a: (f64, f64, usize), b: (f64, f64, usize), g: &dyn Fn(f64, f64) -> f64) -> f64 {
    let gl = gauss_legendre(8);
    let cells = |(lo, hi, n): (f64, f64, usize)| -> Vec<f64> {
        (0..=n)
            .map(|i| lo + (hi - lo) * i as f64 / n as f64)
            .collect()
    };
    let (na, nb) = (nodes(&cells(a), &gl), nodes(&cells(b), &gl));
    na.iter()
        .map(|&(x, wx)| nb.iter().map(|&(y, wy)| wx * wy * g(x, y)).sum::<f64>())
        .sum()
}

#[test]
fn flux_through_a_box_is_the_enclosed_charge() {
    // Gauss's law: ∮E·dA = Q_enc/ε0. The box u ∈ [−0.4, 1.65], y ∈ [0, 1], h ∈ [−0.5, 0.5]
    // holds the half y > 0 of a patch with σ = A e^(−u/λ)(1 + 8y²) (edges k = 2, λ = 0.3 m):
    // Q = A·λ(1 − e^(−L/λ))·∫_0^0.5 (1 + 8y²) dy = A·λ(1 − e^(−L/λ))·5/6.
    // The face y = 0 cuts the sheet where ∂σ/∂y = 0; there E_y = 0 by the mirror symmetry of
    // f. The other faces are ≥ 0.4 m from the charge, where 8-point Gauss–Legendre on
    // 0.2–0.25 m cells is accurate to ~1e-9: tolerance 1e-6.
    let lam = 0.3;
    let pt = patch(edges(2.0), lam);
    let e = |p: [f64; 3]| patch_field(&pt, p, 1e-8).unwrap().e;
    let (u0, u1, y1, hh) = (-0.4, 1.65, 1.0, 0.5);
    let top = face((u0, u1, 9), (0.0, y1, 4), &|u, y| e([u, y, hh])[2]);
    let bottom = face((u0, u1, 9), (0.0, y1, 4), &|u, y| -e([u, y, -hh])[2]);
    let far_y = face((u0, u1, 9), (-hh, hh, 4), &|u, h| e([u, y1, h])[1]);
    let end0 = face((0.0, y1, 4), (-hh, hh, 4), &|y, h| -e([u0, y, h])[0]);
    let end1 = face((0.0, y1, 4), (-hh, hh, 4), &|y, h| e([u1, y, h])[0]);
    // On y = 0 every E_y is exactly zero: a coarse rule over the face checks it.
    let mid = face((u0, u1, 3), (-hh, hh, 2), &|u, h| -e([u, 0.0, h + 1e-7])[1]);
    assert!(mid.abs() < 1e-12 * top.abs());
    let q = SIGMA * lam * (1.0 - (-L / lam).exp()) * 5.0 / 6.0;
    let flux = top + bottom + far_y + end0 + end1 + mid;
    println!("flux relative error: {:.1e}", (flux * EPS0 / q - 1.0).abs());
    assert_relative_eq!(flux, q / EPS0, max_relative = 1e-6);
}

// ---------------------------------------------------------------------------
// 5. Invariants (proptest).
// ---------------------------------------------------------------------------

fn any_patch() -> impl Strategy<Value = Patch> {
    let shape = prop_oneof![
        (-0.9..3.0f64).prop_map(edges),
        (-3.0..3.0f64).prop_map(tilt),
        Just(table()),
    ];
    let decay = prop_oneof![Just(f64::INFINITY), 0.05..20.0f64];
    (shape, decay, 0.05..5.0f64).prop_map(|(across, decay_length, len)| Patch {
        len,
        amplitude: SIGMA,
        decay_length,
        across,
    })
}

fn any_point() -> impl Strategy<Value = [f64; 3]> {
    // Points at least 1 mm from the sheet (keeps the debug-build suite fast).
    (
        -1.0..6.0f64,
        -1.5..1.5f64,
        prop_oneof![1e-3..2.0f64, -2.0..-1e-3f64],
    )
        .prop_map(|(u, y, h)| [u, y, h])
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(24))]

    #[test]
    fn linear_in_the_amplitude(pt in any_patch(), p in any_point(), s in 0.1..10.0f64) {
        // Coulomb's law is linear in σ: rounding only, 1e-12.
        let a = patch_field(&pt, p, 1e-9).unwrap();
        let mut scaled = pt.clone();
        scaled.amplitude *= s;
        let b = patch_field(&scaled, p, 1e-9).unwrap();
        prop_assert!((b.v - s * a.v).abs() <= 1e-12 * (s * a.v).abs());
        prop_assert!(dist3(b.e, a.scaled(s).e) <= 1e-12 * s * vnorm(a.e));
    }

    #[test]
    fn mirror_symmetric_across_the_centre_line(k in -0.9..3.0f64, lam in 0.05..20.0f64, p in any_point()) {
        // A profile even in y gives V(y) = V(−y), E_y(y) = −E_y(−y). The two evaluations may
        // stop at different quadrature levels, so they agree to the tolerance: 2·rel_tol·scale.
        let pt = patch(edges(k), lam);
        let q = [p[0], -p[1], p[2]];
        let a = patch_field(&pt, p, 1e-9).unwrap();
        let b = patch_field(&pt, q, 1e-9).unwrap();
        let [sv, se] = error_scale(&pt, p);
        prop_assert!((a.v - b.v).abs() <= 2e-9 * sv);
        prop_assert!((a.e[0] - b.e[0]).abs() <= 2e-9 * se);
        prop_assert!((a.e[1] + b.e[1]).abs() <= 2e-9 * se);
        prop_assert!((a.e[2] - b.e[2]).abs() <= 2e-9 * se);
    }

    #[test]
    fn reflection_through_the_sheet(pt in any_patch(), p in any_point()) {
        // h → −h: V and the in-plane field unchanged, E_h reversed (the integrands depend on h²
        // except E_h ∝ h, so the computation is the same up to that sign): 1e-12.
        let a = patch_field(&pt, p, 1e-9).unwrap();
        let b = patch_field(&pt, [p[0], p[1], -p[2]], 1e-9).unwrap();
        let se = vnorm(a.e);
        prop_assert!((a.v - b.v).abs() <= 1e-12 * a.v.abs());
        prop_assert!((a.e[0] - b.e[0]).abs() <= 1e-12 * se);
        prop_assert!((a.e[1] - b.e[1]).abs() <= 1e-12 * se);
        prop_assert!((a.e[2] + b.e[2]).abs() <= 1e-12 * se);
    }

    #[test]
    fn converges_as_the_tolerance_tightens(pt in any_patch(), p in any_point()) {
        // Results at rel_tol 1e-6 and 1e-10 differ by at most the looser one's bound,
        // 1e-6 × scale (plus 1e-10 × scale).
        let a = patch_field(&pt, p, 1e-6).unwrap();
        let b = patch_field(&pt, p, 1e-10).unwrap();
        let [sv, se] = error_scale(&pt, p);
        prop_assert!((a.v - b.v).abs() <= 1.0001e-6 * sv);
        prop_assert!(dist3(a.e, b.e) <= 1.0001e-6 * 3f64.sqrt() * se);
    }
}

// ---------------------------------------------------------------------------
// 6. Failures are errors, not numbers.
// ---------------------------------------------------------------------------

#[test]
fn an_unreachable_tolerance_is_an_error() {
    // 1e-17 is below double precision: the estimates cannot get there.
    let pt = patch(tilt(3.0), 0.3);
    match patch_field(&pt, [0.4, 0.1, 2e-3], 1e-17) {
        Err(KernelError::NotConverged {
            achieved, target, ..
        }) => {
            assert!(achieved > target && target > 0.0);
        }
        other => panic!("expected NotConverged, got {other:?}"),
    }
    let msg = patch_field(&pt, [0.4, 0.1, 2e-3], 1e-17)
        .unwrap_err()
        .to_string();
    assert!(msg.contains("loosen"), "{msg}");
}

#[test]
fn bad_input_is_refused() {
    let pt = patch(edges(2.0), 0.3);
    for tol in [0.0, -1e-9, f64::NAN, 1.0] {
        assert!(matches!(
            patch_field(&pt, [0.1, 0.1, 0.1], tol),
            Err(KernelError::InvalidTolerance { .. })
        ));
    }
    for p in [[0.5, 0.1, 0.0], [f64::NAN, 0.0, 1.0], [0.5, 0.5, 1e-12]] {
        assert!(
            matches!(
                patch_field(&pt, p, 1e-9),
                Err(KernelError::InvalidPoint { .. })
            ),
            "{p:?}"
        );
    }
    let mut gap = patch(table(), f64::INFINITY);
    gap.across[1].y_lo += 0.01;
    let mut empty = pt.clone();
    empty.across.clear();
    let mut neg = pt.clone();
    neg.decay_length = -1.0;
    let mut zero_len = pt.clone();
    zero_len.len = 0.0;
    for bad in [gap, empty, neg, zero_len] {
        assert!(
            matches!(
                patch_field(&bad, [0.1, 0.1, 0.1], 1e-9),
                Err(KernelError::InvalidPatch { .. })
            ),
            "{bad:?}"
        );
    }
}
