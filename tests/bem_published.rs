//! Published checks of the boundary-element conductor solve (`field::bem`,
//! issue 9): a sphere's capacitance alone and above a grounded plane against
//! the image series, a neutral floating sphere against the mean-value theorem,
//! convergence under panel refinement, and grounded rollers beside a charged
//! web span against an independent 2-D boundary-element solve as the rollers
//! and the web widen.
//!
//! Every check names its source beside it and every tolerance says where it
//! comes from; sources quoted from memory say so.

use std::f64::consts::PI;
use websigma::field::bem::{Bem, BemSettings, ConductorSpec, Earthing};
use websigma::field::kernels::uniform_rectangle;
use websigma::field::panels::Shape;
use websigma::units::EPS0;

/// 1/(4πε₀) [m/F], written out here rather than taken from the crate.
const K: f64 = 1.0 / (4.0 * PI * EPS0);

const FLOAT: Earthing = Earthing::Isolated {
    charge: 0.0,
    lumped_capacitance: 0.0,
};

fn sphere(center: [f64; 3], a: f64) -> ConductorSpec {
    ConductorSpec {
        id: "sphere".into(),
        shape: Shape::Sphere { center, radius: a },
        earthing: FLOAT,
    }
}

/// A panel size giving exactly `bands` latitude bands on a sphere of radius
/// `a` (the mesher takes ⌈πa/h⌉ bands).
fn band_size(a: f64, bands: usize) -> f64 {
    PI * a / (bands as f64 - 0.5)
}

fn sphere_bem(center: [f64; 3], a: f64, bands: usize, ground: Option<f64>) -> Bem {
    let s = BemSettings::new(band_size(a, bands)).unwrap();
    Bem::new(&[sphere(center, a)], ground, s).unwrap()
}

/// C/(4πε₀a) of a sphere whose centre is at height `h` above a grounded plane,
/// by the series sinh α·Σ_{n≥1} 1/sinh(nα), cosh α = h/a.
fn sphere_plane_series(h_over_a: f64) -> f64 {
    let alpha = h_over_a.acosh();
    let mut sum = 0.0;
    for n in 1..100_000 {
        let t = 1.0 / (n as f64 * alpha).sinh();
        sum += t;
        if t < 1e-17 * sum {
            break;
        }
    }
    alpha.sinh() * sum
}

/// The same by explicit Kelvin images: charge q inside the sphere at height z
/// has the plane image −q at −z, whose image in the sphere (centre height h,
/// distance D = h + z) is q·a/D at height h − a²/D; starting from 1 at the
/// centre, the charges sum to C/(4πε₀a) at unit potential.
fn sphere_plane_images(h_over_a: f64) -> f64 {
    let (a, h) = (1.0, h_over_a);
    let (mut q, mut z, mut sum) = (1.0, h, 0.0);
    for _ in 0..100_000 {
        sum += q;
        if q < 1e-17 * sum {
            break;
        }
        let d = h + z;
        q *= a / d;
        z = h - a * a / d;
    }
    sum
}

#[test]
fn sphere_capacitance_alone_and_above_a_grounded_plane() {
    // Isolated sphere: C = 4πε₀a (Jackson, Classical Electrodynamics, 3rd ed., ch. 1,
    // from memory; it is Gauss's law for a uniformly charged sphere).
    // Above a grounded plane, centre at height h: C = 4πε₀a·sinh α·Σ_{n≥1} 1/sinh(nα),
    // cosh α = h/a (W. R. Smythe, Static and Dynamic Electricity, 3rd ed., ch. 5, the
    // sphere and plane by successive images; quoted from memory). The series is checked
    // first against the explicit image iteration written independently above, so the
    // reference does not rest on memory alone.
    for ha in [4.0, 2.0, 1.5, 1.2, 1.05] {
        let (s, i) = (sphere_plane_series(ha), sphere_plane_images(ha));
        assert!(
            (s - i).abs() < 1e-12 * s,
            "h/a = {ha}: series {s} vs images {i}"
        );
    }
    // Far from the plane the series tends to the isolated sphere, 1 + a/(2h) + …
    assert!((sphere_plane_series(100.0) - (1.0 + 1.0 / 200.0)).abs() < 1e-4);

    let a = 0.1;
    let bands = 24;
    let alone = sphere_bem([0.2, -0.1, 0.5], a, bands, None);
    let c0 = alone.capacitance_to_ground(0).unwrap() / (4.0 * PI * EPS0 * a);
    let e0 = (c0 - 1.0).abs();
    eprintln!(
        "sphere alone, {} panels: C/(4πε₀a) = {c0:.6} (error {e0:.2e})",
        alone.panels().len()
    );
    // Measured 6.8e-4 high at 24 bands (747 panels): the tangent panels stand outside
    // the sphere (by aΔ²/12 on average, Δ = π/24; see the panels module), and the error
    // falls like Δ² (refinement test below); allow 2e-3.
    assert!(e0 < 2e-3, "{c0}");

    let mut errs = Vec::new();
    for ha in [3.0, 1.5, 1.2] {
        let bem = sphere_bem([0.0, 0.0, ha * a], a, bands, Some(0.0));
        let c = bem.capacitance_to_ground(0).unwrap() / (4.0 * PI * EPS0 * a);
        let want = sphere_plane_series(ha);
        let err = (c - want) / want;
        eprintln!(
            "sphere over plane h/a = {ha}: C/(4πε₀a) = {c:.6} vs series {want:.6} ({err:+.2e})"
        );
        errs.push(err.abs());
    }
    // Measured +8.2e-4, +1.1e-3, +1.4e-3 (largest at h/a = 1.2, where the charge crowds
    // into the gap of 0.2a, about 1.5 panel sides); allow 3e-3. The plane itself raises
    // C by 20 % to 87 % here, far above the tolerance, so the image term is checked.
    assert!(errs.iter().all(|&e| e < 3e-3), "{errs:?}");
}

#[test]
fn floating_sphere_takes_the_mean_of_the_external_potential() {
    // A neutral isolated conductor takes, for a sphere, the mean of the external
    // potential over its surface: the induced charge has zero net charge, and for a
    // sphere its potential is that of the mean-value theorem for harmonic functions
    // (O. D. Kellogg, Foundations of Potential Theory, 1929, ch. IX, from memory;
    // equally the Green's-reciprocity argument of Jackson, 3rd ed., problem 1.12). For a
    // point charge q at distance d > a from the centre that mean is q/(4πε₀d); for a
    // uniform field it is the potential at the centre.
    let (c, a) = ([0.4, 0.1, 0.8], 0.1);
    let bem = sphere_bem(c, a, 20, None);
    let q = 1e-9;
    let pts = bem.collocation_points();
    let mut worst: f64 = 0.0;
    for (d, dir) in [
        (1.3, [1.0, 0.0, 0.0]),
        (2.0, [0.0, 0.6, 0.8]),
        (5.0, [-0.48, 0.6, -0.64]),
    ] {
        let x0 = [
            c[0] + d * a * dir[0],
            c[1] + d * a * dir[1],
            c[2] + d * a * dir[2],
        ];
        let ext: Vec<f64> = pts
            .iter()
            .map(|x| {
                let r = ((x[0] - x0[0]).powi(2) + (x[1] - x0[1]).powi(2) + (x[2] - x0[2]).powi(2))
                    .sqrt();
                K * q / r
            })
            .collect();
        let sol = bem.solve(&ext).unwrap();
        let want = K * q / (d * a);
        let err = (sol.potential(0) - want).abs() / want;
        eprintln!(
            "point charge at d = {d}a: V_float {:.6e} vs q/(4πε₀d) {want:.6e} ({err:.1e})",
            sol.potential(0)
        );
        assert!(sol.net_charge(0).abs() < 1e-12 * q);
        worst = worst.max(err);
    }
    // Measured 3.5e-5, 1.7e-5, 6e-7 at d = 1.3a, 2a, 5a (20 bands, 514 panels; largest
    // for the charge 0.3a from the surface, where the external potential varies most
    // over one panel); allow 2e-4.
    assert!(worst < 2e-4, "{worst}");
    // A uniform field E₀ along x (φ = −E₀x): the sphere floats at −E₀·x_centre.
    // The odd part of φ about the centre would cancel exactly on a mirror-symmetric
    // mesh; the rings with an odd number of panels are not symmetric under x → −x, so
    // it cancels only to the discretisation: measured 2.6e-7 relative; allow 1e-5.
    let e0 = 1e4;
    let ext: Vec<f64> = pts.iter().map(|x| -e0 * x[0]).collect();
    let v = bem.solve(&ext).unwrap().potential(0);
    eprintln!("uniform field: V_float {v} vs {}", -e0 * c[0]);
    assert!((v + e0 * c[0]).abs() < 1e-5 * e0 * c[0], "{v}");
}

#[test]
fn sphere_capacitance_converges_under_refinement() {
    // Reference: C = 4πε₀a exactly (Gauss's law). Bands N_b = 8, 16, 32 halve the panel
    // side each time (about 1.27·N_b² panels).
    let a = 1.0;
    let mut rows = Vec::new();
    for bands in [8, 16, 32] {
        let bem = sphere_bem([0.0; 3], a, bands, None);
        let c = bem.capacitance_to_ground(0).unwrap() / (4.0 * PI * EPS0 * a);
        rows.push((bands, bem.panels().len(), c, (c - 1.0).abs()));
    }
    for (b, n, c, e) in &rows {
        eprintln!("sphere N_b = {b}: {n} panels, C/(4πε₀a) = {c:.6}, error {e:.2e}");
    }
    let err: Vec<f64> = rows.iter().map(|r| r.3).collect();
    let order: Vec<f64> = err.windows(2).map(|w| (w[0] / w[1]).log2()).collect();
    eprintln!("observed orders {order:?}");
    // Measured errors 5.8e-3, 1.5e-3, 3.9e-4 (86, 334, 1322 panels), orders 1.93 and
    // 1.97 (second order: the panels' offset from the sphere and the constant density
    // per panel both err by O(Δ²)); require at least 1.5 each, i.e. monotone convergence
    // by a factor 2.8 per halving, all errors positive (C high), and at 32 bands below
    // 1e-3.
    assert!(order.iter().all(|&p| p > 1.5), "{order:?} from {err:?}");
    assert!(rows.iter().all(|r| r.2 > 1.0), "{rows:?}");
    assert!(err[2] < 1e-3, "{err:?}");
    // Second order, so Richardson extrapolation C₃ + (C₃ − C₂)/3 removes the leading
    // term: measured 1.2e-5 from 1; allow 1e-4.
    let extrap = rows[2].2 + (rows[2].2 - rows[1].2) / 3.0;
    eprintln!("extrapolated C/(4πε₀a) = {extrap:.7}");
    assert!((extrap - 1.0).abs() < 1e-4, "{extrap}");
}

// ---------------------------------------------------------------------------
// Rollers beside a web span: the 3-D solve against an independent 2-D solve.
// ---------------------------------------------------------------------------

/// One straight 2-D panel (in the x–z plane) from `p1` to `p2` [m], carrying
/// a constant density; its image in the plane z = 0 is handled by the caller.
#[derive(Debug, Clone, Copy)]
struct Seg {
    p1: [f64; 2],
    p2: [f64; 2],
}

impl Seg {
    fn len(&self) -> f64 {
        (self.p2[0] - self.p1[0]).hypot(self.p2[1] - self.p1[1])
    }
    fn mid(&self) -> [f64; 2] {
        [
            0.5 * (self.p1[0] + self.p2[0]),
            0.5 * (self.p1[1] + self.p2[1]),
        ]
    }
    fn mirrored(&self) -> Seg {
        Seg {
            p1: [self.p1[0], -self.p1[1]],
            p2: [self.p2[0], -self.p2[1]],
        }
    }
    /// x in the panel's frame: distance u along it from p1, signed distance d from
    /// its line, and its length l.
    fn local(&self, x: [f64; 2]) -> (f64, f64, f64) {
        let l = self.len();
        let e = [(self.p2[0] - self.p1[0]) / l, (self.p2[1] - self.p1[1]) / l];
        let r = [x[0] - self.p1[0], x[1] - self.p1[1]];
        (r[0] * e[0] + r[1] * e[1], r[1] * e[0] - r[0] * e[1], l)
    }
    /// ∫ ln|x − s| ds over the panel [m], exactly: with w = u − τ,
    /// ∫ ln√(w² + d²) dw = F(w) = ½w·ln(w² + d²) − w + d·atan(w/d).
    fn log_integral(&self, x: [f64; 2]) -> f64 {
        let (u, d, l) = self.local(x);
        let f = |w: f64| {
            let log = if w == 0.0 {
                0.0
            } else {
                0.5 * w * (w * w + d * d).ln()
            };
            let ang = if d == 0.0 { 0.0 } else { d * (w / d).atan() };
            log - w + ang
        };
        f(u) - f(u - l)
    }
    /// ∫ (x − s)/|x − s|² ds over the panel [1] (x off the panel), exactly:
    /// ½ln((u² + d²)/((u − l)² + d²)) along it, atan(u/d) − atan((u − l)/d) across.
    fn grad_integral(&self, x: [f64; 2]) -> [f64; 2] {
        let (u, d, l) = self.local(x);
        let along = 0.5 * ((u * u + d * d) / ((u - l) * (u - l) + d * d)).ln();
        let across = (u / d).atan() - ((u - l) / d).atan();
        let e = [(self.p2[0] - self.p1[0]) / l, (self.p2[1] - self.p1[1]) / l];
        // d is signed along n = (−e_z, e_x) in (x, z).
        [along * e[0] - across * e[1], along * e[1] + across * e[0]]
    }
    /// Potential [V] at x of density σ on the panel and −σ on its image below z = 0:
    /// σ/(2πε₀)·∫ ln(|x − s*|/|x − s|) ds (the 2-D log kernel; Jackson ch. 2, from memory).
    fn potential(&self, sigma: f64, x: [f64; 2]) -> f64 {
        2.0 * K * sigma * (self.mirrored().log_integral(x) - self.log_integral(x))
    }
    /// Field [V/m] (x, z) at x of the same pair.
    fn field(&self, sigma: f64, x: [f64; 2]) -> [f64; 2] {
        let g = self.grad_integral(x);
        let gm = self.mirrored().grad_integral(x);
        [
            2.0 * K * sigma * (g[0] - gm[0]),
            2.0 * K * sigma * (g[1] - gm[1]),
        ]
    }
}

/// Solves A·x = b by Gaussian elimination with partial pivoting (A row-major n × n).
fn gauss_solve(mut a: Vec<f64>, mut b: Vec<f64>) -> Vec<f64> {
    let n = b.len();
    for k in 0..n {
        let p = (k..n)
            .max_by(|&i, &j| a[i * n + k].abs().total_cmp(&a[j * n + k].abs()))
            .unwrap();
        if p != k {
            for c in 0..n {
                a.swap(k * n + c, p * n + c);
            }
            b.swap(k, p);
        }
        let piv = a[k * n + k];
        for i in k + 1..n {
            let f = a[i * n + k] / piv;
            if f != 0.0 {
                for c in k..n {
                    a[i * n + c] -= f * a[k * n + c];
                }
                b[i] -= f * b[k];
            }
        }
    }
    let mut x = vec![0.0; n];
    for k in (0..n).rev() {
        let s: f64 = (k + 1..n).map(|c| a[k * n + c] * x[c]).sum();
        x[k] = (b[k] - s) / a[k * n + k];
    }
    x
}

/// The cross-section: floor z = 0 grounded, two grounded rollers (radius R, axes at
/// x = ±X_R, height Z_R), the charged web span at z = Z_R + R from −X_W to X_W (ending
/// 50 mm short of the lines where it would touch the rollers).
const R: f64 = 0.05;
const X_R: f64 = 0.3;
const Z_R: f64 = 1.0;
const X_W: f64 = 0.25;
const Z_W: f64 = Z_R + R;
const SIGMA: f64 = 1e-6;
/// Where the two solves are compared (x, z) [m]: above and below the web's middle,
/// and above the first roller.
const PROBES: [[f64; 2]; 3] = [[0.0, Z_W + 0.1], [0.0, Z_W - 0.15], [-X_R, Z_W + 0.15]];

/// What is compared: per roller the charge per length [C/m], and at each probe V [V]
/// and E (x, z) [V/m].
#[derive(Debug, Clone)]
struct Section {
    lambda: [f64; 2],
    v: [f64; 3],
    e: [[f64; 2]; 3],
}

impl Section {
    /// Largest deviation from `o`, each kind relative to its own scale in `o`: λ to
    /// |λ|, V to the largest |V|, E to the largest |E|.
    fn deviation(&self, o: &Section) -> f64 {
        let lam = (0..2)
            .map(|k| (self.lambda[k] - o.lambda[k]).abs() / o.lambda[k].abs())
            .fold(0.0, f64::max);
        let vs = o.v.iter().map(|v| v.abs()).fold(0.0, f64::max);
        let dv = (0..3)
            .map(|i| (self.v[i] - o.v[i]).abs() / vs)
            .fold(0.0, f64::max);
        let es = o.e.iter().map(|e| e[0].hypot(e[1])).fold(0.0, f64::max);
        let de = (0..3)
            .map(|i| (self.e[i][0] - o.e[i][0]).hypot(self.e[i][1] - o.e[i][1]) / es)
            .fold(0.0, f64::max);
        lam.max(dv).max(de)
    }
}

/// The independent 2-D solve: constant density on straight panels `rollers[k]` (each
/// roller's cross-section), potential 0 imposed at the panel midpoints, images in the
/// floor, the web as a uniform strip (closed form above).
fn solve_2d(rollers: &[Vec<Seg>; 2]) -> Section {
    let web = Seg {
        p1: [-X_W, Z_W],
        p2: [X_W, Z_W],
    };
    let all: Vec<Seg> = rollers.iter().flatten().copied().collect();
    let n = all.len();
    let mut a = vec![0.0; n * n];
    let mut b = vec![0.0; n];
    for (i, pi) in all.iter().enumerate() {
        let x = pi.mid();
        for (j, pj) in all.iter().enumerate() {
            a[i * n + j] = pj.potential(1.0, x);
        }
        b[i] = -web.potential(SIGMA, x);
    }
    let sigma = gauss_solve(a, b);
    let n0 = rollers[0].len();
    let lambda = [
        (0..n0).map(|j| sigma[j] * all[j].len()).sum(),
        (n0..n).map(|j| sigma[j] * all[j].len()).sum(),
    ];
    let mut v = [0.0; 3];
    let mut e = [[0.0; 2]; 3];
    for (p, x) in PROBES.iter().enumerate() {
        v[p] = web.potential(SIGMA, *x);
        e[p] = web.field(SIGMA, *x);
        for (s, seg) in sigma.iter().zip(&all) {
            v[p] += seg.potential(*s, *x);
            let f = seg.field(*s, *x);
            e[p][0] += f[0];
            e[p][1] += f[1];
        }
    }
    Section { lambda, v, e }
}

/// `m` panels on the circle of radius R about (xc, Z_R), vertices on the circle.
fn circle(xc: f64, m: usize) -> Vec<Seg> {
    let pt = |k: usize| {
        let t = 2.0 * PI * k as f64 / m as f64;
        [xc + R * t.cos(), Z_R + R * t.sin()]
    };
    (0..m)
        .map(|k| Seg {
            p1: pt(k),
            p2: pt(k + 1),
        })
        .collect()
}

/// Web potential and field (with its image in the floor) for a web of half-width
/// `half_y` [m] across the machine: the closed form of a uniform rectangle.
fn web_3d(half_y: f64, x: [f64; 3]) -> (f64, [f64; 3]) {
    let own = uniform_rectangle(-X_W, X_W, -half_y, half_y, SIGMA, [x[0], x[1], x[2] - Z_W]);
    let img = uniform_rectangle(-X_W, X_W, -half_y, half_y, -SIGMA, [x[0], x[1], x[2] + Z_W]);
    (
        own.v + img.v,
        [
            own.e[0] + img.e[0],
            own.e[1] + img.e[1],
            own.e[2] + img.e[2],
        ],
    )
}

/// The 3-D solve for rollers of length `len` and a web 0.2 m narrower, at mid-width;
/// also the 2-D cross-section of its own mesh (the facets nearest mid-width).
fn solve_3d(len: f64) -> (Section, [Vec<Seg>; 2], usize) {
    let rod = |id: &str, x: f64| ConductorSpec {
        id: id.into(),
        shape: Shape::Cylinder {
            center: [x, 0.0, Z_R],
            axis: [0.0, 1.0, 0.0],
            radius: R,
            length: len,
        },
        earthing: Earthing::Grounded,
    };
    // Panels 0.25 m along the rollers (the density varies slowly there at mid-width),
    // 24 facets around (faceting error π²/(3·24²) ≈ 0.6 % of the radius).
    let s = BemSettings::new(0.25).unwrap().with_min_facets(24).unwrap();
    let bem = Bem::new(&[rod("r1", -X_R), rod("r2", X_R)], Some(0.0), s).unwrap();
    let half_y = 0.5 * (len - 0.2);
    let ext: Vec<f64> = bem
        .collocation_points()
        .iter()
        .map(|&x| web_3d(half_y, x).0)
        .collect();
    let sol = bem.solve(&ext).unwrap();
    let dens = sol.densities();
    let mut lambda = [0.0; 2];
    let mut facets: [Vec<Seg>; 2] = [Vec::new(), Vec::new()];
    for (k, c) in bem.conductors().iter().enumerate() {
        let lateral: Vec<usize> = c
            .panels
            .clone()
            .filter(|&j| bem.panels()[j].en[1].abs() < 0.5)
            .collect();
        // Charge per length over the middle |y| < 0.3 m: Σσ·A over Σ A/(2πR) (the
        // facets' perimeter is exactly 2πR).
        let (mut q, mut area) = (0.0, 0.0);
        for &j in &lateral {
            let p = &bem.panels()[j];
            if p.center[1].abs() < 0.3 {
                q += dens[j] * p.area();
                area += p.area();
            }
        }
        lambda[k] = q / (area / (2.0 * PI * R));
        // The ring of facets nearest y = 0, as 2-D panels.
        let y0 = lateral
            .iter()
            .map(|&j| bem.panels()[j].center[1])
            .min_by(|a, b| a.abs().total_cmp(&b.abs()))
            .unwrap_or(0.0);
        for &j in &lateral {
            let p = &bem.panels()[j];
            if (p.center[1] - y0).abs() < 1e-9 {
                let t = [p.ev[0] * p.half_v, p.ev[2] * p.half_v];
                let c = [p.center[0], p.center[2]];
                facets[k].push(Seg {
                    p1: [c[0] - t[0], c[1] - t[1]],
                    p2: [c[0] + t[0], c[1] + t[1]],
                });
            }
        }
    }
    let mut v = [0.0; 3];
    let mut e = [[0.0; 2]; 3];
    for (p, xz) in PROBES.iter().enumerate() {
        let x = [xz[0], 0.0, xz[1]];
        let (ei, vi) = sol.at(&bem, x);
        let (vw, ew) = web_3d(half_y, x);
        v[p] = vi + vw;
        e[p] = [ei[0] + ew[0], ei[2] + ew[2]];
    }
    (Section { lambda, v, e }, facets, bem.panels().len())
}

#[test]
fn grounded_rollers_beside_a_web_span_tend_to_the_2d_solution() {
    // As the rollers and the web widen, the fields at mid-width tend to those of the
    // 2-D cross-section (translation invariance along the rollers; the ends' influence
    // at mid-width falls off like a line of dipoles, the web and its floor image, i.e.
    // like (H/W)² with H ≈ 1 m the height and W the width). The 2-D reference is
    // solved here independently: constant density on straight panels, the log kernel
    // integrated exactly over each panel, the web an infinite uniform strip in closed
    // form, images in the floor (method of images: Jackson, 3rd ed., §2.1, from memory).

    // The 2-D panel kernels agree with each other: E = −∇V by central differences
    // (step 1e-5 m: truncation ~1e-10 relative, rounding ~1e-11 V/1e-5 m).
    let seg = Seg {
        p1: [0.2, 0.9],
        p2: [-0.1, 1.3],
    };
    for x in [[0.0, 1.0], [0.5, 0.4], [-0.3, 1.6]] {
        let h = 1e-5;
        let f = seg.field(1.0, x);
        let gx = (seg.potential(1.0, [x[0] + h, x[1]]) - seg.potential(1.0, [x[0] - h, x[1]]))
            / (2.0 * h);
        let gz = (seg.potential(1.0, [x[0], x[1] + h]) - seg.potential(1.0, [x[0], x[1] - h]))
            / (2.0 * h);
        let scale = f[0].hypot(f[1]);
        assert!(
            (f[0] + gx).abs() < 1e-6 * scale && (f[1] + gz).abs() < 1e-6 * scale,
            "{x:?}: {f:?} vs {gx}, {gz}"
        );
    }

    // The 2-D solver itself converges: 128 against 256 panels per circle.
    let fine = solve_2d(&[circle(-X_R, 256), circle(X_R, 256)]);
    let coarse = solve_2d(&[circle(-X_R, 128), circle(X_R, 128)]);
    let d2 = coarse.deviation(&fine);
    eprintln!("2-D circles: {fine:?}; 128 vs 256 panels {d2:.1e}");
    // Inscribed polygons: midpoints inside the circle by R(1 − cos(π/M)) ≈ 3e-4·R at
    // M = 128; measured 7.4e-5; allow 5e-4.
    assert!(d2 < 5e-4, "{d2}");
    // Symmetry: both rollers take the same charge, opposite in sign to the web's.
    assert!((fine.lambda[0] - fine.lambda[1]).abs() < 1e-9 * fine.lambda[0].abs());
    assert!(fine.lambda[0] < 0.0);

    let mut rows = Vec::new();
    for len in [2.0, 4.0, 8.0] {
        let (s3, facets, panels) = solve_3d(len);
        assert_eq!(facets[0].len(), 24);
        let same_mesh = solve_2d(&facets);
        let to_facets = s3.deviation(&same_mesh);
        let to_circles = s3.deviation(&fine);
        eprintln!(
            "rollers {len} m ({panels} panels): λ {:.4e} C/m (2-D {:.4e}), V {:.4e} V (2-D {:.4e}); deviation from the 2-D solve of the same facets {to_facets:.2e}, of the circles {to_circles:.2e}",
            s3.lambda[0], fine.lambda[0], s3.v[0], fine.v[0]
        );
        rows.push((len, to_facets, to_circles, same_mesh.deviation(&fine)));
    }
    eprintln!("(length, to facets, to circles, facets against circles in 2-D): {rows:?}");
    // The faceting alone (2-D facets against 2-D circles): measured 1.6e-3; it is what
    // the 3-D solve cannot lose by widening. Allow 5e-3 (the facets' collocation points
    // lie π²/(3N²) = 0.6 % of the radius inside the circle).
    assert!(rows.iter().all(|r| r.3 < 5e-3), "{rows:?}");
    // Against the 2-D solve of the same cross-section, the deviation falls as the
    // width doubles: measured 6.0e-2, 1.8e-2, 5.9e-3 at 2, 4, 8 m (624, 1104, 2112
    // panels), factors 3.3 and 3.1 per doubling (somewhat below the 4 of a pure (H/W)²
    // dipole-line tail); require at least 2.5 each time;
    assert!(
        rows[1].1 < rows[0].1 / 2.5 && rows[2].1 < rows[1].1 / 2.5,
        "{rows:?}"
    );
    // at 8 m it is measured 5.9e-3: allow 1.2 %; against the circles (adding the
    // faceting) measured 6.6e-3: allow 1.5 %.
    assert!(rows[2].1 < 1.2e-2, "{rows:?}");
    assert!(rows[2].2 < 1.5e-2, "{rows:?}");
}
