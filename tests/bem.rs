//! Physics checks of the boundary-element conductor solve (`field::bem`)
//! against published capacitances, image solutions and reciprocity.
//!
//! Every tolerance carries a comment saying where it comes from; values
//! quoted from memory say so.

use rayon::prelude::*;
use std::f64::consts::PI;
use std::time::Instant;
use websigma::field::bem::{Bem, BemSettings, ConductorSpec, Earthing, Induced};
use websigma::field::panels::Shape;
use websigma::units::EPS0;

/// 1/(4πε0) [m/F], written out here rather than taken from the crate.
const K: f64 = 1.0 / (4.0 * PI * EPS0);

/// The unit cube's capacitance over 4πε₀·a: 0.6606785 (F. H. Read, J. Comput.
/// Phys. 133, 1997, boundary elements with extrapolation; C.-O. Hwang &
/// M. Mascagni, J. Appl. Phys. 95, 2004, random walks, 0.660678). Quoted from
/// memory: the value and the references were not re-read here; the published
/// values agree to about 6 digits, far beyond what the tests below resolve.
const CUBE: f64 = 0.660_678_5;

const FLOAT: Earthing = Earthing::Isolated {
    charge: 0.0,
    lumped_capacitance: 0.0,
};

fn cube(id: &str, min: [f64; 3], a: f64, earthing: Earthing) -> ConductorSpec {
    ConductorSpec {
        id: id.into(),
        shape: Shape::Cuboid {
            min,
            max: [min[0] + a, min[1] + a, min[2] + a],
        },
        earthing,
    }
}

/// A cylinder along y, centred at (x, 0, z).
fn rod(id: &str, x: f64, z: f64, r: f64, len: f64, earthing: Earthing) -> ConductorSpec {
    ConductorSpec {
        id: id.into(),
        shape: Shape::Cylinder {
            center: [x, 0.0, z],
            axis: [0.0, 1.0, 0.0],
            radius: r,
            length: len,
        },
        earthing,
    }
}

fn settings(h: f64) -> BemSettings {
    BemSettings::new(h).unwrap()
}

fn norm(e: [f64; 3]) -> f64 {
    (e[0] * e[0] + e[1] * e[1] + e[2] * e[2]).sqrt()
}

fn zeros(bem: &Bem) -> Vec<f64> {
    vec![0.0; bem.panels().len()]
}

/// Potential [V] and field [V/m] of a point charge `q` [C] at `x0`.
fn point_charge(q: f64, x0: [f64; 3], x: [f64; 3]) -> (f64, [f64; 3]) {
    let d = [x[0] - x0[0], x[1] - x0[1], x[2] - x0[2]];
    let r = norm(d);
    let k = K * q / (r * r * r);
    (K * q / r, [k * d[0], k * d[1], k * d[2]])
}

/// Isolated unit cube capacitance [F / (4πε₀·a)] at `n` panels per edge (uniform grading 0.5).
fn cube_capacitance(n: usize) -> f64 {
    // Panels per edge = ceil(a·(1 − g + gπ/2)/h): choose h just under a·factor/(n − 1/2).
    let factor = 0.5 + 0.5 * PI / 2.0;
    let h = factor / (n as f64 - 0.5);
    let bem = Bem::new(&[cube("c", [0.0; 3], 1.0, FLOAT)], None, settings(h)).unwrap();
    assert_eq!(bem.panels().len(), 6 * n * n);
    bem.capacitance_matrix()[0][0] / (4.0 * PI * EPS0)
}

#[test]
fn unit_cube_capacitance_converges_to_the_published_value() {
    let c: Vec<f64> = [4, 8, 16].iter().map(|&n| cube_capacitance(n)).collect();
    let err: Vec<f64> = c.iter().map(|v| (v - CUBE).abs() / CUBE).collect();
    eprintln!("cube C/(4πε₀a) at n = 4, 8, 16: {c:?}, relative errors {err:?}");
    // Monotone convergence under refinement, by at least a factor 1.8 per halving
    // (constant-density collocation converges at order 1 to 2 in the panel size).
    assert!(err[1] < err[0] / 1.8 && err[2] < err[1] / 1.8, "{err:?}");
    // 1536 panels: measured 0.13 % low; allow 0.3 %.
    assert!(err[2] < 3e-3, "{err:?}");
    // Richardson (Aitken Δ²) extrapolation from the three levels removes the leading
    // error term: measured within 2e-4 of the published value; allow 5e-4.
    let d1 = c[1] - c[0];
    let d2 = c[2] - c[1];
    let p = (d1 / d2).log2();
    let extrap = c[2] + d2 / (d1 / d2 - 1.0);
    eprintln!("observed order {p:.2}, extrapolated {extrap:.6}");
    assert!((1.0..=2.5).contains(&p), "order {p}");
    assert!((extrap - CUBE).abs() / CUBE < 5e-4, "{extrap}");
}

#[test]
fn error_estimate_bounds_the_true_error_of_the_cube() {
    // The coarse/fine difference must exceed the true error (published value above).
    let factor = 0.5 + 0.5 * PI / 2.0;
    let bem = Bem::new(
        &[cube("c", [0.0; 3], 1.0, FLOAT)],
        None,
        settings(factor / 9.5),
    )
    .unwrap();
    let c = bem.capacitance_to_ground(0).unwrap() / (4.0 * PI * EPS0);
    let est = bem
        .error_estimate(
            &|x| point_charge(1e-9, [3.0, 0.5, 0.5], x).0,
            &[[2.0, 0.5, 0.5]],
        )
        .unwrap();
    let truth = (c - CUBE).abs() / CUBE;
    eprintln!(
        "cube n = 10: true error {truth:.2e}, estimate {:?}",
        est.capacitance
    );
    assert!(
        est.capacitance[0] >= truth,
        "{} < {truth}",
        est.capacitance[0]
    );
    // …and is not wildly pessimistic (at most 10 × the truth).
    assert!(est.capacitance[0] < 10.0 * truth);
    assert_eq!(est.coarse_panels, 6 * 5 * 5);
    assert!(est.points[0].dv > 0.0 && est.points[0].dv < 0.05 * est.points[0].v.abs());
}

#[test]
fn floating_potential_obeys_greens_reciprocity() {
    // Green's reciprocity theorem (Jackson, Classical Electrodynamics, 3rd ed.,
    // problem 1.12, from memory): an uncharged isolated conductor near a point charge q at x0 floats at
    // V = q·φ₁(x0)/Q₁, φ₁ the potential at x0 when the conductor alone carries Q₁.
    let a = 0.2;
    let bem = Bem::new(&[cube("c", [0.0; 3], a, FLOAT)], None, settings(a / 8.0)).unwrap();
    for x0 in [[0.35, 0.1, 0.1], [-0.1, 0.25, 0.3], [0.1, 0.1, 0.6]] {
        let q = 1e-9;
        let ext: Vec<f64> = bem
            .collocation_points()
            .iter()
            .map(|&x| point_charge(q, x0, x).0)
            .collect();
        let v_float = bem.solve(&ext).unwrap().potential(0);
        let q1 = 1e-9;
        let alone = bem.solve_with_charges(&zeros(&bem), &[q1]).unwrap();
        let want = q * alone.at(&bem, x0).1 / q1;
        // The discrete collocation matrix is not exactly symmetric: measured within
        // 1.5e-5; allow 1e-4.
        eprintln!("reciprocity at {x0:?}: {v_float} vs {want}");
        assert!(
            (v_float - want).abs() < 1e-4 * want.abs(),
            "{v_float} vs {want}"
        );
    }
}

#[test]
fn field_inside_a_conductor_vanishes_and_its_potential_is_uniform() {
    // A conductor in electrostatic equilibrium: E = 0 inside, V = V_k throughout
    // (Jackson ch. 1). Both the grounded and the isolated case, beside a point charge.
    let a = 0.2;
    let x0 = [0.35, 0.13, 0.08];
    for earthing in [Earthing::Grounded, FLOAT] {
        let bem = Bem::new(&[cube("c", [0.0; 3], a, earthing)], None, settings(a / 8.0)).unwrap();
        let ext: Vec<f64> = bem
            .collocation_points()
            .iter()
            .map(|&x| point_charge(1e-9, x0, x).0)
            .collect();
        let sol = bem.solve(&ext).unwrap();
        let vk = sol.potential(0);
        // The external field scale: its value at the cube's centre.
        let e_ref = norm(point_charge(1e-9, x0, [0.1; 3]).1);
        let v_ref = point_charge(1e-9, x0, [0.1; 3]).0;
        for x in [
            [0.1, 0.1, 0.1],
            [0.05, 0.15, 0.1],
            [0.15, 0.05, 0.15],
            [0.16, 0.1, 0.04],
        ] {
            let (ei, vi) = sol.at(&bem, x);
            let (vx, ex) = point_charge(1e-9, x0, x);
            let e = [ei[0] + ex[0], ei[1] + ex[1], ei[2] + ex[2]];
            let v = vi + vx;
            // Points ≥ 0.04 m (≈ 1.6 panels) inside: measured |E|/E_ref ≤ 8e-4 and
            // |V − V_k|/V_ref ≤ 1.2e-4; allow 3e-3 and 5e-4.
            eprintln!(
                "{earthing:?} {x:?}: |E|/E_ref {:.1e}, ΔV/V_ref {:.1e}",
                norm(e) / e_ref,
                (v - vk).abs() / v_ref
            );
            assert!(norm(e) < 3e-3 * e_ref, "{x:?}: {e:?}");
            assert!((v - vk).abs() < 5e-4 * v_ref, "{x:?}: {v} vs {vk}");
        }
        // Outside, the field is not zero: the check above can fail.
        let (ei, _) = sol.at(&bem, [0.3, 0.1, 0.1]);
        let (_, ex) = point_charge(1e-9, x0, [0.3, 0.1, 0.1]);
        assert!(norm([ei[0] + ex[0], ei[1] + ex[1], ei[2] + ex[2]]) > 0.5 * e_ref);
    }
}

/// Potential [V] and field [V/m] of a uniform line charge λ along y ∈ [−l, l]
/// at (xl, ·, zl) (Coulomb's law integrated along the line).
fn line_charge(lambda: f64, xl: f64, zl: f64, l: f64, x: [f64; 3]) -> (f64, [f64; 3]) {
    let (dx, dz) = (x[0] - xl, x[2] - zl);
    let rho = dx.hypot(dz);
    let (y1, y2) = (-l - x[1], l - x[1]);
    let (r1, r2) = (y1.hypot(rho), y2.hypot(rho));
    let v = K * lambda * ((y2 / rho).asinh() - (y1 / rho).asinh());
    let er = K * lambda / rho * (y2 / r2 - y1 / r1);
    let ey = K * lambda * (1.0 / r2 - 1.0 / r1);
    (v, [er * dx / rho, ey, er * dz / rho])
}

/// 2-D field [V/m] (x, z components) of an infinite line λ at (xl, zl).
fn line_2d(lambda: f64, xl: f64, zl: f64, x: f64, z: f64) -> [f64; 2] {
    let (dx, dz) = (x - xl, z - zl);
    let k = 2.0 * K * lambda / (dx * dx + dz * dz);
    [k * dx, k * dz]
}

#[test]
fn neutral_cylinder_beside_a_line_charge_matches_the_image_solution() {
    // A conducting cylinder (radius a) beside a parallel line charge λ at distance d:
    // the image is −λ at a²/d from the axis (the 2-D image of a line charge in a circle:
    // Smythe, Static and Dynamic Electricity, ch. 4, and Jackson ch. 2 problems; chapter
    // numbers from memory); an isolated neutral cylinder adds +λ on the axis.
    // The surface density is σ(θ) = λ/(2πa)·[1 − (d² − a²)/(a² + d² − 2ad cos θ)],
    // so the half facing the line carries λ[1/2 − (2/π)·atan((d + a)/(d − a))] per
    // length (the Poisson integral of the image density). A grounded finite cylinder
    // would instead take a charge per length depending logarithmically on its length,
    // so the exactly checkable 3-D case is the neutral one, away from the ends.
    let (a, d, len): (f64, f64, f64) = (0.05, 0.15, 2.4);
    let lambda = 1e-9;
    // The line runs far beyond the cylinder: a 10 m line's potential falls by
    // ≈ kλ·y²/25 along the cylinder, enough to put a net ≈ 1 % of λ on its middle.
    let l_line = 100.0;
    let want_half = lambda * (0.5 - 2.0 / PI * ((d + a) / (d - a)).atan());
    // Panel size 0.08 m along the axis (graded at the ends), N = 16 then 32 facets
    // (even: the near half is exact).
    let mut worst = Vec::new();
    for facets in [16, 32] {
        let s = settings(0.08).with_min_facets(facets).unwrap();
        let bem = Bem::new(&[rod("r", 0.0, 0.0, a, len, FLOAT)], None, s).unwrap();
        let ext: Vec<f64> = bem
            .collocation_points()
            .iter()
            .map(|&x| line_charge(lambda, d, 0.0, l_line, x).0)
            .collect();
        let sol = bem.solve(&ext).unwrap();
        assert!(sol.net_charge(0).abs() < 1e-12 * lambda);
        // Near-half charge per length in the middle section |y| < 0.1 m.
        let sigma = sol.densities();
        let (mut q, mut area) = (0.0, 0.0);
        for (p, s) in bem.panels().iter().zip(&sigma) {
            let lateral = p.en[1].abs() < 0.5;
            if lateral && p.center[1].abs() < 0.1 && p.center[0] > 0.0 {
                q += s * p.area();
                area += p.area();
            }
        }
        let per_len = q / (area / (PI * a)); // the near half's width is πa
        let dq = (per_len - want_half).abs() / want_half.abs();
        // Induced field at the middle cross-section against the 2-D images, relative to
        // the total field there.
        let mut dev_max: f64 = 0.0;
        for (x, z) in [(0.09, 0.0), (-0.08, 0.0), (0.0, 0.08), (0.07, -0.05)] {
            let p = [x, 0.0, z];
            let (ei, _) = sol.at(&bem, p);
            let (_, el) = line_charge(lambda, d, 0.0, l_line, p);
            let img = line_2d(-lambda, a * a / d, 0.0, x, z);
            let axis = line_2d(lambda, 0.0, 0.0, x, z);
            let want = [img[0] + axis[0], 0.0, img[1] + axis[1]];
            let total = norm([ei[0] + el[0], ei[1] + el[1], ei[2] + el[2]]);
            let dev = norm([ei[0] - want[0], ei[1] - want[1], ei[2] - want[2]]) / total;
            dev_max = dev_max.max(dev);
        }
        eprintln!(
            "{facets} facets, {} panels: near-half charge per length {per_len:.5e} vs {want_half:.5e} ({dq:.1e}), field deviation ≤ {dev_max:.1e} of |E|",
            bem.panels().len()
        );
        worst.push((dq, dev_max));
    }
    // Faceting error falls like 1/N² (panels module): measured 16 → 32 facets
    // 1.2e-2 → 3.5e-3 on the field; require at least a factor 2.5.
    assert!(worst[1].1 < worst[0].1 / 2.5, "{worst:?}");
    // At 32 facets: charge measured within 4e-4 and field within 3.5e-3 of |E|; allow
    // 2e-3 and 6e-3. (With 64 facets and L = 4.8 m the same checks reach 1.7e-4 and
    // 9e-4: the rest is the finite length, the ends 1.2 m away.)
    assert!(worst[1].0 < 2e-3, "{worst:?}");
    assert!(worst[1].1 < 6e-3, "{worst:?}");
}

#[test]
fn capacitance_matrix_is_symmetric_with_the_right_signs() {
    // Green's reciprocity: C₁₂ = C₂₁; C_ii > 0, C_ij < 0 (Jackson ch. 1, problem 1.12; Smythe ch. 2; from memory),
    // with a grounded plane and a grounded third conductor present.
    let bem = Bem::new(
        &[
            cube("box", [0.0, 0.0, 0.1], 0.2, FLOAT),
            rod("roller", 0.45, 0.2, 0.05, 0.5, FLOAT),
            ConductorSpec {
                id: "plate".into(),
                shape: Shape::Plate {
                    origin: [-0.2, -0.3, 0.6],
                    e1: [0.9, 0.0, 0.0],
                    e2: [0.0, 0.6, 0.0],
                },
                earthing: Earthing::Grounded,
            },
        ],
        Some(0.0),
        settings(0.04),
    )
    .unwrap();
    let c = bem.capacitance_matrix();
    assert_eq!(c.len(), 2);
    let asym = (c[0][1] - c[1][0]).abs() / c[0][1].abs();
    eprintln!("Maxwell matrix {c:?}, asymmetry {asym:.2e}");
    assert!(c[0][0] > 0.0 && c[1][1] > 0.0);
    assert!(c[0][1] < 0.0 && c[1][0] < 0.0);
    // The collocation matrix is not symmetric, so neither is C exactly: measured
    // 2.5e-5 at this coarse mesh; allow 1e-3.
    assert!(asym < 1e-3, "{asym}");
    // Diagonal dominance: each conductor sees ground, so C_ii > |C_ij|.
    assert!(c[0][0] > -c[0][1] && c[1][1] > -c[1][0]);
    // Capacitance to ground with the other floating lies between C_ii − C_ij²/C_jj and C_ii.
    let c0 = bem.capacitance_to_ground(0).unwrap();
    assert!((c0 - (c[0][0] - c[0][1] * c[1][0] / c[1][1])).abs() < 1e-9 * c0);
    assert!(bem.capacitance_to_ground(2).is_none());
}

#[test]
fn cylinder_over_a_grounded_plane() {
    // A long horizontal cylinder (radius r, axis at height h) over a grounded plane:
    // C per length = 2πε₀ / arcosh(h/r), the exact 2-D image result: a line charge and
    // its image in the plane have circular equipotentials, one of them the cylinder
    // (Smythe, Static and Dynamic Electricity, ch. 4, from memory; the two-wire line's
    // πε₀/arcosh(D/2r) halved).
    let (r, h, len) = (0.05, 0.1, 1.6);
    let bem = Bem::new(
        &[rod("r", 0.0, h, r, len, FLOAT)],
        Some(0.0),
        settings(0.02),
    )
    .unwrap();
    let c = bem.capacitance_to_ground(0).unwrap();
    // At 1 V, the charge per length in the middle |y| < 0.1 m.
    let sol = bem.solve_with_charges(&zeros(&bem), &[c]).unwrap();
    assert!((sol.potential(0) - 1.0).abs() < 1e-9);
    let sigma = sol.densities();
    let (mut q, mut area) = (0.0, 0.0);
    for (p, s) in bem.panels().iter().zip(&sigma) {
        if p.en[1].abs() < 0.5 && p.center[1].abs() < 0.1 {
            q += s * p.area();
            area += p.area();
        }
    }
    let per_len = q / (area / (2.0 * PI * r));
    let want = 2.0 * PI * EPS0 / (h / r).acosh();
    eprintln!(
        "cylinder over plane: middle {per_len:.4e} F/m vs 2-D {want:.4e}; total {c:.4e} F vs L·2-D {:.4e}",
        want * len
    );
    // The finite length (ends 0.8 m away) and the 16 facets each perturb the middle's
    // charge by up to about 1 %: measured 0.14 % low; allow 1 %.
    assert!((per_len - want).abs() < 0.01 * want, "{per_len} vs {want}");
    // The ends carry extra charge: the total exceeds L × the 2-D value, by less than 20 %.
    assert!(c > want * len && c < 1.2 * want * len, "{c}");
    // Capacitance rises as the cylinder approaches the plane.
    let caps: Vec<f64> = [0.4, 0.2, 0.1, 0.07]
        .iter()
        .map(|&z| {
            let b = Bem::new(
                &[rod("r", 0.0, z, r, 0.6, FLOAT)],
                Some(0.0),
                settings(0.04),
            )
            .unwrap();
            b.capacitance_to_ground(0).unwrap()
        })
        .collect();
    eprintln!("capacitance at heights 0.4, 0.2, 0.1, 0.07 m: {caps:?}");
    assert!(caps.windows(2).all(|w| w[1] > w[0]), "{caps:?}");
}

#[test]
fn the_response_is_linear() {
    // solve_response is linear in the external potential: solve(2·φ) = 2·solve(φ) and
    // solve(φ₁ + φ₂) = solve(φ₁) + solve(φ₂), to rounding (one LU, back-substitutions).
    let bem = Bem::new(
        &[
            cube("a", [0.0, 0.0, 0.2], 0.2, FLOAT),
            rod("b", 0.5, 0.3, 0.05, 0.4, Earthing::Grounded),
        ],
        Some(0.0),
        settings(0.05),
    )
    .unwrap();
    let pts = bem.collocation_points();
    let f1: Vec<f64> = pts
        .iter()
        .map(|&x| point_charge(1e-9, [0.2, 0.4, 0.7], x).0)
        .collect();
    let f2: Vec<f64> = pts.iter().map(|&x| 100.0 * x[0] - 30.0 * x[2]).collect();
    let s1 = bem.solve_response(&f1).unwrap();
    let s2 = bem.solve_response(&f2).unwrap();
    let twice: Vec<f64> = f1.iter().map(|v| 2.0 * v).collect();
    let sum: Vec<f64> = f1.iter().zip(&f2).map(|(a, b)| a + b).collect();
    let s11 = bem.solve_response(&twice).unwrap();
    let s12 = bem.solve_response(&sum).unwrap();
    let check = |got: &Induced, want: &dyn Fn(usize) -> f64, dens: &[f64]| {
        let scale = dens.iter().map(|v| v.abs()).fold(0.0, f64::max);
        for (j, g) in got.densities().iter().enumerate() {
            assert!((g - want(j)).abs() < 1e-10 * scale, "panel {j}");
        }
    };
    let (d1, d2) = (s1.densities(), s2.densities());
    check(&s11, &|j| 2.0 * d1[j], &d1);
    check(&s12, &|j| d1[j] + d2[j], &d1);
    assert!((s11.potential(0) - 2.0 * s1.potential(0)).abs() < 1e-10 * s1.potential(0).abs());
    // The given charge enters affinely: solve = solve_response + the charge's own solve.
    let x = [0.3, 0.1, 0.5];
    let (_, v1) = s1.at(&bem, x);
    let (_, v11) = s11.at(&bem, x);
    assert!((v11 - 2.0 * v1).abs() < 1e-10 * v1.abs());
}

#[test]
#[ignore = "timing: run with --release --ignored --nocapture"]
fn timing_assembly_and_factorisation() {
    // Assembly + LU for about 2000 and 4000 panels (a cube; panel counts 6n²).
    for n in [18, 26] {
        let factor = 0.5 + 0.5 * PI / 2.0;
        let h = factor / (n as f64 - 0.5);
        let t = Instant::now();
        let bem = Bem::new(&[cube("c", [0.0; 3], 1.0, FLOAT)], None, settings(h)).unwrap();
        let build = t.elapsed().as_secs_f64();
        // Assembly alone, as Bem::new does it (one column per task, on rayon).
        let panels = bem.panels();
        let t = Instant::now();
        let sum: f64 = panels
            .par_iter()
            .map(|pj| {
                panels
                    .iter()
                    .map(|pi| pj.potential_factor(pi.center))
                    .sum::<f64>()
            })
            .sum();
        std::hint::black_box(sum);
        let assembly = t.elapsed().as_secs_f64();
        let t = Instant::now();
        let sol = bem.solve(&zeros(&bem)).unwrap();
        let solve = t.elapsed().as_secs_f64();
        let t = Instant::now();
        for _ in 0..100 {
            std::hint::black_box(sol.at(&bem, [2.0, 0.3, 0.4]));
        }
        let eval = t.elapsed().as_secs_f64() / 100.0;
        let c = bem.capacitance_to_ground(0).unwrap() / (4.0 * PI * EPS0);
        eprintln!(
            "{} panels: Bem::new {build:.3} s (assembly {assembly:.3} s, LU and the rest {:.3} s), one solve {solve:.4} s, one point {:.1} µs, C/(4πε₀a) {c:.6}",
            bem.panels().len(),
            build - assembly,
            eval * 1e6
        );
        assert!(c > 0.65 && c < CUBE);
    }
}
