//! # Cluster sums of the conductors' panel charges (treecode)
//!
//! Field stage, conductor part: the field and potential of the charge a
//! solve put on the conductors' panels (and of its images in the grounded
//! plane) at many points, without visiting every panel from every point.
//! The panels are sorted into a binary tree of clusters (split at the median
//! of the longest side of their centres' box); from far away a cluster's
//! panels act through a Cartesian Taylor expansion of 1/R about the
//! cluster's centre c, of an order p chosen per point so that a stated bound
//! on the error holds; close by, each panel is evaluated as in
//! [`super::panels::Panel::factors`] (closed form or Gauss rule).
//!
//! ## Expansion
//! With q̃_j = σ_j/(4πε₀) the panel densities [V/m] and k = (k₁, k₂, k₃) a
//! multi-index,
//!
//! $$ V(\mathbf x) = \sum_j q̃_j \iint_{j}\frac{dA'}{|\mathbf x-\mathbf r'|}
//!    ≈ \sum_{|k| ≤ p} a_k(\mathbf x - \mathbf c)\, m_k, \qquad
//!    m_k = \sum_j q̃_j \iint_j (\mathbf r' - \mathbf c)^k\, dA', $$
//!
//! a_k = (1/k!) ∂^k_y (1/|x − y|) at y = c, from the recurrence (with
//! **d** = **x** − **c**, R = |**d**|, n = |k|, a₀ = 1/R)
//!
//! $$ n R^2 a_k = (2n - 1)\sum_i d_i\, a_{k - e_i} - (n - 1)\sum_i a_{k - 2e_i}, $$
//!
//! and **E** = −∇V, E_i = Σ_k (k_i + 1) a_{k+e_i} m_k. The moments m_k are
//! exact: a tensor Gauss–Legendre rule of [`GAUSS_POINTS`] points per side
//! integrates the polynomial (**r**′ − **c**)^k of degree ≤ [`MAX_ORDER`] on
//! a flat panel exactly; a parent's moments are its children's shifted
//! exactly, m_k(c′) = Σ_{l ≤ k} C(k, l) (c − c′)^{k−l} m_l(c).
//!
//! ## Error bound and choice of order
//! The degree-n terms of the expansion are the n-th term of the Legendre
//! series 1/|x − y| = Σ_n r^n P_n(cos γ)/R^{n+1} (r = |y − c|), and
//! |P_n| ≤ 1, so for a cluster inside the sphere of radius r about c,
//! ρ = r/R < 1 and Q = Σ_j |q̃_j| A_j,
//!
//! $$ |δV| ≤ Q\,\frac{ρ^{p+1}}{R - r}, \qquad
//!    |δ\mathbf E| ≤ \frac{Q}{R^2}\Bigl[\frac{(p+2)ρ^{p+1}}{1-ρ}
//!      + \frac{ρ^{p+2}}{(1-ρ)^2}\Bigr], $$
//!
//! the second from |∇(P_n(cos γ)/R^{n+1})| ≤ (n + 1)/R^{n+2}, the exterior
//! harmonic's gradient being largest on its axis (checked in this module's
//! tests against the direct sum over random clusters). A cluster is used
//! from **x** with the smallest even p ≤ [`MAX_ORDER`] for which both bounds
//! are at most `tol` times Q/(R + r)² and Q/(R + r) — lower bounds of the sum
//! of the magnitudes Σ|q̃_j|A_j/d_j² and Σ|q̃_j|A_j/d_j of what its panels
//! would contribute one by one; otherwise its two halves are tried. So at
//! every point the error of the sum is at most `tol` times the sum of the
//! magnitudes of the panels' own contributions (plus the panels' own rules,
//! 1e-6 of each contribution in [`super::panels`]).
//!
//! | symbol | meaning | unit |
//! | --- | --- | --- |
//! | q̃_j | panel density σ_j/(4πε₀) | V/m |
//! | A_j | panel area | m² |
//! | **c**, r | cluster centre, radius of the sphere holding its panels | m |
//! | **x**, **d**, R | field point, **x** − **c**, \|**d**\| | m |
//! | m_k | moments of the cluster | V·m^(1+\|k\|) |
//! | a_k | Taylor coefficients of 1/R | m^(−1−\|k\|) |
//! | p | expansion order | 1 |
//!
//! Assumptions: the panels' charges are fixed (one solve); images in the
//! grounded plane are clusters like the others (mirrored panels carrying
//! −q̃). Cost: a cluster of order p costs about (p + 2)³/6 multiply-adds
//! twice; the tree of n panels takes O(n log n) to build.
//!
//! ## Reference
//! Taylor expansion of 1/R and its recurrence: Z.-H. Duan & R. Krasny, "An
//! adaptive treecode for computing nonbonded potential energy in classical
//! molecular systems", *J. Comput. Chem.* 22 (2001) 184–195, and K. Lindsay
//! & R. Krasny, *J. Comput. Phys.* 172 (2001) 879–907 (from memory). The
//! Legendre expansion and |P_n| ≤ 1: J. D. Jackson, *Classical
//! Electrodynamics*, 3rd ed., §3.6. Barnes–Hut clustering: J. Barnes &
//! P. Hut, *Nature* 324 (1986) 446–449.

// Index loops over the three coordinates and the multi-index tables read
// closer to the formulas than iterator chains.
#![allow(clippy::needless_range_loop)]

use super::kernels::LocalField;
use super::panels::Panel;
use std::sync::OnceLock;

/// Highest expansion order a cluster is used with.
pub const MAX_ORDER: usize = 8;
/// Gauss–Legendre points per side of a panel for its moments: exact for
/// degree 2·5 − 1 = 9 ≥ [`MAX_ORDER`] in each of the panel's coordinates.
pub const GAUSS_POINTS: usize = 5;
/// Most panels in a leaf cluster.
const LEAF: usize = 12;
/// The default tolerance: 1e-7 of the sum of the panels' contribution magnitudes.
pub const DEFAULT_TOL: f64 = 1e-7;

/// Multi-index tables up to order MAX_ORDER + 1 (the field needs one more).
/// Flat index 0 is a padding slot holding 0 in the coefficient array, so
/// that the recurrence needs no branch; multi-index j ≥ 1 is `k[j]`.
struct Indices {
    /// k per flat index (slot 0 unused), ordered by total degree.
    k: Vec<[usize; 3]>,
    /// One past the last flat index of total degree ≤ n, n = 0 ..= TOP.
    upto: Vec<usize>,
    /// Flat index of k − e_i (0, the zero slot, if k_i = 0).
    down1: Vec<[u16; 3]>,
    /// Flat index of k − 2e_i (0 if k_i < 2).
    down2: Vec<[u16; 3]>,
    /// (2n − 1)/n and (n − 1)/n for n = |k|.
    coef: Vec<[f64; 2]>,
    /// Flat index of k + e_i (for |k| ≤ MAX_ORDER).
    up: Vec<[u16; 3]>,
    /// k_i + 1.
    up_factor: Vec<[f64; 3]>,
    /// Flat index of every multi-index by (k₀, k₁, k₂), side TOP + 2.
    flat: Vec<usize>,
}

const NONE: usize = usize::MAX;
const TOP: usize = MAX_ORDER + 1;
/// Number of flat indices (padding slot included) up to order TOP.
const SLOTS: usize = 1 + (TOP + 1) * (TOP + 2) * (TOP + 3) / 6;
const SIDE: usize = TOP + 2;

fn key(v: [usize; 3]) -> usize {
    (v[0] * SIDE + v[1]) * SIDE + v[2]
}

fn indices() -> &'static Indices {
    static I: OnceLock<Indices> = OnceLock::new();
    I.get_or_init(|| {
        let mut k = vec![[0; 3]];
        let mut upto = Vec::new();
        for n in 0..=TOP {
            for a in (0..=n).rev() {
                for b in (0..=n - a).rev() {
                    k.push([a, b, n - a - b]);
                }
            }
            upto.push(k.len());
        }
        let mut flat = vec![NONE; SIDE * SIDE * SIDE];
        for (i, v) in k.iter().enumerate().skip(1) {
            flat[key(*v)] = i;
        }
        let shift = |v: [usize; 3], i: usize, by: isize| -> u16 {
            let mut w = v;
            let c = w[i] as isize + by;
            if c < 0 {
                return 0;
            }
            w[i] = c as usize;
            if w.iter().sum::<usize>() > TOP {
                return 0;
            }
            flat[key(w)] as u16
        };
        let down1 = k
            .iter()
            .map(|&v| [shift(v, 0, -1), shift(v, 1, -1), shift(v, 2, -1)])
            .collect();
        let down2 = k
            .iter()
            .map(|&v| [shift(v, 0, -2), shift(v, 1, -2), shift(v, 2, -2)])
            .collect();
        let up = k
            .iter()
            .map(|&v| [shift(v, 0, 1), shift(v, 1, 1), shift(v, 2, 1)])
            .collect();
        let coef = k
            .iter()
            .map(|v| {
                let n = (v[0] + v[1] + v[2]).max(1) as f64;
                [(2.0 * n - 1.0) / n, (n - 1.0) / n]
            })
            .collect();
        let up_factor = k
            .iter()
            .map(|v| [v[0] as f64 + 1.0, v[1] as f64 + 1.0, v[2] as f64 + 1.0])
            .collect();
        Indices {
            k,
            upto,
            down1,
            down2,
            coef,
            up,
            up_factor,
            flat,
        }
    })
}

/// One charged panel of the tree (an image is a mirrored panel with −q̃).
#[derive(Debug, Clone, Copy)]
struct Source {
    panel: Panel,
    /// q̃ [V/m].
    q: f64,
}

#[derive(Debug, Clone)]
struct Node {
    center: [f64; 3],
    radius: f64,
    lo: usize,
    hi: usize,
    children: Option<[usize; 2]>,
    /// m_k for |k| ≤ MAX_ORDER.
    moments: Vec<f64>,
}

/// The panels' charges sorted into clusters, with their moments.
#[derive(Debug, Clone)]
pub struct PanelTree {
    sources: Vec<Source>,
    nodes: Vec<Node>,
    tol: f64,
}

/// What an evaluation did (for tests and benchmarks).
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct TreeStats {
    /// Panels evaluated one by one.
    pub direct: usize,
    /// Clusters used through their expansion.
    pub clusters: usize,
}

impl PanelTree {
    /// Sorts `panels` carrying q̃ = `q` [V/m] into clusters; with a grounded
    /// plane at z = `ground` [m] their images (mirrored, −q̃) are added.
    /// `tol` is the error bound relative to the sum of the contributions'
    /// magnitudes (see the module doc); [`DEFAULT_TOL`] is 1e-7.
    pub fn new(panels: &[Panel], q: &[f64], ground: Option<f64>, tol: f64) -> PanelTree {
        let mut sources: Vec<Source> = panels
            .iter()
            .zip(q)
            .filter(|(_, q)| **q != 0.0)
            .map(|(p, &q)| Source { panel: *p, q })
            .collect();
        if let Some(zg) = ground {
            let mirror = |v: [f64; 3]| [v[0], v[1], -v[2]];
            let images: Vec<Source> = sources
                .iter()
                .map(|s| {
                    let p = s.panel;
                    Source {
                        panel: Panel {
                            center: [p.center[0], p.center[1], 2.0 * zg - p.center[2]],
                            eu: mirror(p.eu),
                            ev: mirror(p.ev),
                            en: mirror(p.en),
                            ..p
                        },
                        q: -s.q,
                    }
                })
                .collect();
            sources.extend(images);
        }
        let mut tree = PanelTree {
            sources,
            nodes: Vec::new(),
            tol,
        };
        if !tree.sources.is_empty() {
            let n = tree.sources.len();
            tree.build(0, n);
        }
        tree
    }

    /// Number of panels (images included).
    pub fn len(&self) -> usize {
        self.sources.len()
    }

    /// Whether there is no charged panel.
    pub fn is_empty(&self) -> bool {
        self.sources.is_empty()
    }

    /// Builds the node over sources[lo..hi] and its subtree; returns its index.
    fn build(&mut self, lo: usize, hi: usize) -> usize {
        let (bmin, bmax) = self.sources[lo..hi].iter().fold(
            ([f64::INFINITY; 3], [f64::NEG_INFINITY; 3]),
            |(mut a, mut b), s| {
                for i in 0..3 {
                    a[i] = a[i].min(s.panel.center[i]);
                    b[i] = b[i].max(s.panel.center[i]);
                }
                (a, b)
            },
        );
        let center = [
            0.5 * (bmin[0] + bmax[0]),
            0.5 * (bmin[1] + bmax[1]),
            0.5 * (bmin[2] + bmax[2]),
        ];
        let radius = self.sources[lo..hi]
            .iter()
            .map(|s| {
                let p = &s.panel;
                dist(p.center, center) + p.half_u.hypot(p.half_v)
            })
            .fold(0.0, f64::max);
        let me = self.nodes.len();
        self.nodes.push(Node {
            center,
            radius,
            lo,
            hi,
            children: None,
            moments: Vec::new(),
        });
        let moments = if hi - lo <= LEAF {
            leaf_moments(&self.sources[lo..hi], center)
        } else {
            let axis = (0..3)
                .max_by(|&a, &b| (bmax[a] - bmin[a]).total_cmp(&(bmax[b] - bmin[b])))
                .unwrap_or(0);
            let mid = lo + (hi - lo) / 2;
            self.sources[lo..hi].select_nth_unstable_by(mid - lo, |a, b| {
                a.panel.center[axis].total_cmp(&b.panel.center[axis])
            });
            let left = self.build(lo, mid);
            let right = self.build(mid, hi);
            self.nodes[me].children = Some([left, right]);
            let mut m = shift(&self.nodes[left].moments, self.nodes[left].center, center);
            let r = shift(&self.nodes[right].moments, self.nodes[right].center, center);
            for (a, b) in m.iter_mut().zip(r) {
                *a += b;
            }
            m
        };
        self.nodes[me].moments = moments;
        me
    }

    /// Field factors Σ q̃·∬(x − r′)/R³ dA′ [V/m] and potential Σ q̃·∬dA′/R [V]
    /// of every panel and image at `x` [m], within the module's bound.
    pub fn at(&self, x: [f64; 3]) -> ([f64; 3], f64) {
        self.at_with_stats(x).0
    }

    /// As [`PanelTree::at`], with what the evaluation did.
    pub fn at_with_stats(&self, x: [f64; 3]) -> (([f64; 3], f64), TreeStats) {
        let mut e = [0.0; 3];
        let mut v = 0.0;
        let mut stats = TreeStats::default();
        if self.nodes.is_empty() {
            return ((e, v), stats);
        }
        let mut a = [0.0; SLOTS];
        let mut stack = [0usize; 64];
        let mut top = 1;
        stack[0] = 0;
        while top > 0 {
            top -= 1;
            let node = &self.nodes[stack[top]];
            let d = [
                x[0] - node.center[0],
                x[1] - node.center[1],
                x[2] - node.center[2],
            ];
            let r2 = d[0] * d[0] + d[1] * d[1] + d[2] * d[2];
            let big_r = r2.sqrt();
            let panels = node.hi - node.lo;
            if let Some(p) = order_for(big_r, node.radius, self.tol)
                .filter(|&p| expansion_cost(p) < panels as f64 * PANEL_COST)
            {
                let (fe, fv) = expansion(d, r2, p, &node.moments, &mut a);
                v += fv;
                for i in 0..3 {
                    e[i] += fe[i];
                }
                stats.clusters += 1;
                continue;
            }
            match node.children {
                Some([l, r]) if top + 2 <= stack.len() => {
                    stack[top] = r;
                    stack[top + 1] = l;
                    top += 2;
                }
                _ => {
                    for s in &self.sources[node.lo..node.hi] {
                        let f: LocalField = s.panel.factors(x);
                        v += s.q * f.v;
                        for i in 0..3 {
                            e[i] += s.q * f.e[i];
                        }
                    }
                    stats.direct += node.hi - node.lo;
                }
            }
        }
        ((e, v), stats)
    }
}

/// Cost of one far panel (a 2 × 2 or 3 × 3 Gauss rule), in the units of
/// [`expansion_cost`]: measured, about 25 ns against 4 ns per coefficient.
const PANEL_COST: f64 = 2.0;

/// Cost of an expansion of order p: its coefficients up to p + 1 and the
/// moments up to p, one unit each.
fn expansion_cost(p: usize) -> f64 {
    let n = |q: usize| ((q + 1) * (q + 2) * (q + 3) / 6) as f64;
    n(p + 1) + n(p)
}

fn dist(a: [f64; 3], b: [f64; 3]) -> f64 {
    ((a[0] - b[0]).powi(2) + (a[1] - b[1]).powi(2) + (a[2] - b[2]).powi(2)).sqrt()
}

/// The smallest even order p ≤ MAX_ORDER whose error bounds (module doc)
/// are within `tol` of the cluster's magnitude scales at distance `big_r`,
/// or `None` (open the cluster).
fn order_for(big_r: f64, r: f64, tol: f64) -> Option<usize> {
    if r == 0.0 {
        return Some(0);
    }
    let rho = r / big_r;
    if rho >= 0.5 {
        return None;
    }
    let scale_v = 1.0 / (big_r + r);
    let scale_e = scale_v * scale_v;
    let mut pw = rho * rho * rho; // ρ^(p+1) for p = 2
    let mut p = 2;
    while p <= MAX_ORDER {
        let bv = pw / (big_r - r);
        let be = ((p as f64 + 2.0) * pw / (1.0 - rho) + pw * rho / (1.0 - rho).powi(2))
            / (big_r * big_r);
        if bv <= tol * scale_v && be <= tol * scale_e {
            return Some(p);
        }
        pw *= rho * rho;
        p += 2;
    }
    None
}

/// V and **E** of the expansion of order `p` at **d** = **x** − **c**
/// (`m` indexed like the flat indices, slot 0 unused).
#[inline]
fn expansion(d: [f64; 3], r2: f64, p: usize, m: &[f64], a: &mut [f64; SLOTS]) -> ([f64; 3], f64) {
    let ix = indices();
    let count = ix.upto[p + 1];
    a[0] = 0.0;
    a[1] = 1.0 / r2.sqrt();
    let inv_r2 = 1.0 / r2;
    for j in 2..count {
        let d1 = ix.down1[j];
        let d2 = ix.down2[j];
        let c = ix.coef[j];
        let s1 = d[0] * a[d1[0] as usize] + d[1] * a[d1[1] as usize] + d[2] * a[d1[2] as usize];
        let s2 = a[d2[0] as usize] + a[d2[1] as usize] + a[d2[2] as usize];
        a[j] = (c[0] * s1 - c[1] * s2) * inv_r2;
    }
    let mut v = 0.0;
    let mut e = [0.0; 3];
    for j in 1..ix.upto[p] {
        let mj = m[j];
        v += a[j] * mj;
        let up = ix.up[j];
        let f = ix.up_factor[j];
        e[0] += f[0] * a[up[0] as usize] * mj;
        e[1] += f[1] * a[up[1] as usize] * mj;
        e[2] += f[2] * a[up[2] as usize] * mj;
    }
    (e, v)
}

/// Gauss–Legendre nodes and weights on [−1, 1], GAUSS_POINTS of them.
const GL5: [(f64, f64); GAUSS_POINTS] = [
    (-0.906_179_845_938_664, 0.236_926_885_056_189_1),
    (-0.538_469_310_105_683_1, 0.478_628_670_499_366_5),
    (0.0, 0.568_888_888_888_888_9),
    (0.538_469_310_105_683_1, 0.478_628_670_499_366_5),
    (0.906_179_845_938_664, 0.236_926_885_056_189_1),
];

/// Moments m_k (|k| ≤ MAX_ORDER) about `c` of the panels in `sources`.
fn leaf_moments(sources: &[Source], c: [f64; 3]) -> Vec<f64> {
    let ix = indices();
    let count = ix.upto[MAX_ORDER];
    let mut m = vec![0.0; count];
    let mut pow = [[0.0; MAX_ORDER + 1]; 3];
    for s in sources {
        let p = &s.panel;
        let jac = p.half_u * p.half_v * s.q;
        for (ua, wa) in GL5 {
            for (vb, wb) in GL5 {
                let w = wa * wb * jac;
                for i in 0..3 {
                    let x = p.center[i] + ua * p.half_u * p.eu[i] + vb * p.half_v * p.ev[i] - c[i];
                    pow[i][0] = 1.0;
                    for n in 1..=MAX_ORDER {
                        pow[i][n] = pow[i][n - 1] * x;
                    }
                }
                for (mj, k) in m.iter_mut().zip(&ix.k).skip(1) {
                    *mj += w * pow[0][k[0]] * pow[1][k[1]] * pow[2][k[2]];
                }
            }
        }
    }
    m
}

/// Moments about `to` of moments `m` taken about `from` (exact binomial shift).
fn shift(m: &[f64], from: [f64; 3], to: [f64; 3]) -> Vec<f64> {
    let ix = indices();
    let count = ix.upto[MAX_ORDER];
    let d = [from[0] - to[0], from[1] - to[1], from[2] - to[2]];
    // t[i][n][l] = C(n, l)·d_i^(n − l).
    let mut t = [[[0.0; MAX_ORDER + 1]; MAX_ORDER + 1]; 3];
    for (i, ti) in t.iter_mut().enumerate() {
        for n in 0..=MAX_ORDER {
            let mut b = 1.0;
            for l in 0..=n {
                ti[n][l] = b * d[i].powi((n - l) as i32);
                b = b * (n - l) as f64 / (l + 1) as f64;
            }
        }
    }
    let mut out = vec![0.0; count];
    for j in 1..count {
        let k = ix.k[j];
        let mut s = 0.0;
        for l0 in 0..=k[0] {
            let c0 = t[0][k[0]][l0];
            for l1 in 0..=k[1] {
                let c1 = c0 * t[1][k[1]][l1];
                let base = (l0 * SIDE + l1) * SIDE;
                for l2 in 0..=k[2] {
                    s += c1 * t[2][k[2]][l2] * m[ix.flat[base + l2]];
                }
            }
        }
        out[j] = s;
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A pseudo-random generator (xorshift) so the tests need no crate.
    struct Rng(u64);
    impl Rng {
        fn next(&mut self) -> f64 {
            self.0 ^= self.0 << 13;
            self.0 ^= self.0 >> 7;
            self.0 ^= self.0 << 17;
            (self.0 >> 11) as f64 / (1u64 << 53) as f64
        }
    }

    fn random_panels(rng: &mut Rng, n: usize, center: [f64; 3], size: f64) -> Vec<Panel> {
        (0..n)
            .map(|_| {
                let a = rng.next() * std::f64::consts::TAU;
                let eu = [a.cos(), a.sin(), 0.0];
                let b = rng.next() * std::f64::consts::PI;
                let ev = [-a.sin() * b.cos(), a.cos() * b.cos(), b.sin()];
                let en = [
                    eu[1] * ev[2] - eu[2] * ev[1],
                    eu[2] * ev[0] - eu[0] * ev[2],
                    eu[0] * ev[1] - eu[1] * ev[0],
                ];
                Panel {
                    center: [
                        center[0] + size * (rng.next() - 0.5),
                        center[1] + size * (rng.next() - 0.5),
                        center[2] + size * (rng.next() - 0.5),
                    ],
                    eu,
                    ev,
                    en,
                    half_u: 0.01 + 0.03 * rng.next(),
                    half_v: 0.01 + 0.03 * rng.next(),
                }
            })
            .collect()
    }

    fn direct(sources: &[Source], x: [f64; 3]) -> ([f64; 3], f64, f64, f64) {
        let mut e = [0.0; 3];
        let mut v = 0.0;
        let mut se = 0.0;
        let mut sv = 0.0;
        for s in sources {
            let f = s.panel.factors(x);
            v += s.q * f.v;
            sv += (s.q * f.v).abs();
            se += s.q.abs() * f.e_norm();
            for i in 0..3 {
                e[i] += s.q * f.e[i];
            }
        }
        (e, v, se, sv)
    }

    /// The expansion of one cluster against the direct sum at many
    /// distances and orders: the error stays within the module's bounds
    /// (the Legendre remainder, Jackson §3.6), and falls with the order.
    #[test]
    fn expansion_error_is_within_its_bound() {
        let mut rng = Rng(0x9e37_79b9_7f4a_7c15);
        let panels = random_panels(&mut rng, 40, [0.0; 3], 0.4);
        let q: Vec<f64> = (0..40).map(|_| rng.next() - 0.3).collect();
        let tree = PanelTree::new(&panels, &q, None, DEFAULT_TOL);
        let root = &tree.nodes[0];
        let abs_q: f64 = tree
            .sources
            .iter()
            .map(|s| s.q.abs() * s.panel.area())
            .sum();
        let mut a = [0.0; SLOTS];
        for trial in 0..200 {
            let dir = {
                let t = [rng.next() - 0.5, rng.next() - 0.5, rng.next() - 0.5];
                let n = (t[0] * t[0] + t[1] * t[1] + t[2] * t[2]).sqrt();
                [t[0] / n, t[1] / n, t[2] / n]
            };
            let big_r = root.radius * (2.05 + 6.0 * rng.next());
            let x = [
                root.center[0] + big_r * dir[0],
                root.center[1] + big_r * dir[1],
                root.center[2] + big_r * dir[2],
            ];
            let (e0, v0, _, _) = direct(&tree.sources, x);
            let rho = root.radius / big_r;
            for p in (0..=MAX_ORDER).step_by(2) {
                let d = [
                    x[0] - root.center[0],
                    x[1] - root.center[1],
                    x[2] - root.center[2],
                ];
                let r2 = big_r * big_r;
                let (e, v) = expansion(d, r2, p, &root.moments, &mut a);
                let pw = rho.powi(p as i32 + 1);
                let bv = abs_q * pw / (big_r - root.radius);
                let be = abs_q
                    * ((p as f64 + 2.0) * pw / (1.0 - rho) + pw * rho / (1.0 - rho).powi(2))
                    / r2;
                let de = ((e[0] - e0[0]).powi(2) + (e[1] - e0[1]).powi(2) + (e[2] - e0[2]).powi(2))
                    .sqrt();
                // The panels' own far rules (1e-6 of each) sit under the comparison.
                let slack_v = 2e-6 * abs_q / (big_r - root.radius);
                let slack_e = 2e-6 * abs_q / (big_r - root.radius).powi(2);
                assert!(
                    (v - v0).abs() <= bv + slack_v,
                    "trial {trial}, p = {p}: |δV| {} > bound {bv}",
                    (v - v0).abs()
                );
                assert!(
                    de <= be + slack_e,
                    "trial {trial}, p = {p}: |δE| {de} > bound {be}"
                );
            }
        }
    }

    /// The tree at its default tolerance against the direct sum over panels
    /// and images spread like a line's rollers: the error is within 1e-7 of
    /// the sum of the contributions' magnitudes (plus the panels' own 1e-6
    /// rules, identical on both sides here), and far points use clusters.
    #[test]
    fn tree_matches_the_direct_sum() {
        let mut rng = Rng(12345);
        let mut panels = Vec::new();
        for r in 0..8 {
            panels.extend(random_panels(
                &mut rng,
                150,
                [0.8 * r as f64, 0.0, 1.0],
                0.3,
            ));
        }
        let q: Vec<f64> = panels.iter().map(|_| rng.next() - 0.6).collect();
        let tree = PanelTree::new(&panels, &q, Some(0.0), DEFAULT_TOL);
        assert_eq!(tree.len(), 2 * panels.len());
        let mut used_clusters = 0;
        for _ in 0..300 {
            let x = [
                -1.0 + 8.0 * rng.next(),
                -1.0 + 2.0 * rng.next(),
                0.05 + 2.0 * rng.next(),
            ];
            let ((e, v), stats) = tree.at_with_stats(x);
            let (e0, v0, se, sv) = direct(&tree.sources, x);
            used_clusters += stats.clusters;
            let de =
                ((e[0] - e0[0]).powi(2) + (e[1] - e0[1]).powi(2) + (e[2] - e0[2]).powi(2)).sqrt();
            assert!(
                de <= 1e-7 * se + 1e-12 * se,
                "|δE| {de} against Σ|E_j| {se}"
            );
            assert!(
                (v - v0).abs() <= 1e-7 * sv + 1e-12 * sv,
                "|δV| against Σ|V_j| {sv}"
            );
        }
        assert!(used_clusters > 300, "far points should use clusters");
    }

    /// The moments shift exactly: a cluster's moments about another centre
    /// equal those taken there directly.
    #[test]
    fn moment_shift_is_exact() {
        let mut rng = Rng(777);
        let panels = random_panels(&mut rng, 5, [0.1, 0.2, 0.3], 0.2);
        let srcs: Vec<Source> = panels
            .iter()
            .map(|p| Source { panel: *p, q: 1.5 })
            .collect();
        let a = leaf_moments(&srcs, [0.0, 0.0, 0.0]);
        let b = leaf_moments(&srcs, [0.3, -0.1, 0.2]);
        let shifted = shift(&a, [0.0, 0.0, 0.0], [0.3, -0.1, 0.2]);
        for (j, (x, y)) in shifted.iter().zip(&b).enumerate().skip(1) {
            assert!(
                (x - y).abs() <= 1e-12 * (1.0 + y.abs()),
                "moment {j}: {x} vs {y}"
            );
        }
    }
}
