//! # Field maps by boxes: near sources at every point, far ones interpolated
//!
//! Field stage, used by [`super::WebField::side_view_grid`]: the field **E**
//! on a regular grid in a plane y = y₀ is a sum over many sources (the
//! spans' patches and the conductors' panels, with their ground-plane
//! images). Summing every source at every grid point costs
//! (points × sources); this module cuts that by sorting the grid into a tree
//! of rectangular boxes and, per box, splitting the sources still to be
//! summed into
//!
//! - **far** ones, at least [`FAR_RATIO`] × the box's larger half-side from
//!   the box (3-D distance from the box to the source's extent): their
//!   summed field is smooth (harmonic, analytic) over the box, so it is
//!   computed at the (n+1)² tensor Chebyshev points of the box
//!   (n = [`DEGREE`]) and interpolated to the box's grid points;
//! - **near** ones, handed down to the box's two halves, where they may be
//!   far, and summed directly at every grid point of a box too small to
//!   split (fewer than [`INTERPOLATE_MIN`] points).
//!
//! A point's field is then the direct sum of its leaf's near sources plus
//! the interpolants of every box above it. A box only interpolates when its
//! grid points outnumber its Chebyshev points enough to pay.
//!
//! ## Interpolation and its error
//!
//! In box coordinates s, t ∈ [−1, 1] the far field of a box is replaced by
//!
//! $$ p(s, t) = \sum_{a=0}^{n}\sum_{b=0}^{n} c_{ab}\,T_a(s)\,T_b(t), \qquad
//!    c_{ab} = \frac{(2-δ_{a0})(2-δ_{b0})}{(n+1)^2} \sum_{j,k} f(s_j, t_k)\,T_a(s_j)\,T_b(t_k), $$
//!
//! s_j = cos(π(2j+1)/(2n+2)) the Chebyshev points of the first kind (each
//! component of **E** separately). For a function analytic inside the
//! Bernstein ellipse of parameter ρ the coefficients fall like ρ^(−a−b), and
//! the interpolation error is at most about twice the sum of the dropped
//! coefficients (L. N. Trefethen, *Approximation Theory and Approximation
//! Practice*, SIAM 2013, Theorems 8.1–8.2 in one variable; the tensor case
//! follows direction by direction). A source at distance d ≥ κ·h from a box
//! of half-side h (κ = [`FAR_RATIO`] = 3) leaves the field analytic inside
//! the Bernstein ellipse of ρ ≥ κ + √(κ² + 1) ≈ 6.2 along each direction
//! (the worst place is straight off the box's face, out of the map plane;
//! beyond an end in the plane ρ ≥ κ + 1 + √((κ + 1)² − 1) ≈ 7.9), so the
//! dropped coefficients are about ρ^(−n−1) ≈ 2e-9 of the largest.
//!
//! The estimate used is a posteriori: e = 2·Σ |c_ab| over max(a, b) ≥ n − 1
//! (the last two orders kept, which bound the dropped ones for a geometric
//! decay of ratio ≤ 1/2; an accidental zero in one order is covered by the
//! other). A box whose estimate for a component exceeds [`REL_TOL`] × S,
//! S the largest Σ|**E**ᵢ| of its far sources over its Chebyshev points
//! (the same measure as the treecode's, [`super::tree`]), does not
//! interpolate: its far sources are handed down as near ones (so the box
//! costs more, never a wrong number). Each level adds at most that error,
//! and a point lies under a few interpolating boxes. Where the far sources'
//! fields cancel, S is much larger than their sum, so the error relative to
//! |**E**| at a point can be larger than 1e-7: measured on the demo's
//! 400 × 300 map, at most 9e-7 of |**E**| at the point and 3e-10 of the
//! map's largest |**E**| (`benches/scaling.rs`, part 1); the tests hold the
//! demo's map to 1e-6 of |**E**| at each point plus 1e-9 of the largest.
//!
//! | symbol | meaning | unit |
//! | --- | --- | --- |
//! | **E** | field of the sources summed | V/m |
//! | s, t | box coordinates (x and z mapped onto [−1, 1]) | 1 |
//! | T_a | Chebyshev polynomial of degree a | 1 |
//! | c_ab | Chebyshev coefficients (per component of **E**) | V/m |
//! | n | interpolation degree, [`DEGREE`] | 1 |
//! | h, d | box half-side, source distance from the box | m |
//! | S | largest Σ\|**E**ᵢ\| of a box's far sources at its Chebyshev points | V/m |
//! | κ, ρ | distance ratio, Bernstein ellipse parameter | 1 |
//!
//! Assumptions: every source's field is analytic outside its extent (true
//! for charged rectangles and their images); sources report a distance
//! that is never more than their true distance from the box.
//!
//! ## Reference
//! Chebyshev interpolation: L. N. Trefethen, *Approximation Theory and
//! Approximation Practice*, SIAM 2013, chapters 3, 4 and 8. The near/far
//! split with interpolation on the target side: the interpolation-based fast
//! multipole idea of W. Fong & E. Darve, "The black-box fast multipole
//! method", *J. Comput. Phys.* 228 (2009) 8712–8725 (here only on the target
//! side, with direct sums on the source side).

use std::f64::consts::PI;

/// Interpolation degree n per direction ((n+1)² = 121 Chebyshev points per box).
pub const DEGREE: usize = 10;
/// Chebyshev points per direction.
const NODES: usize = DEGREE + 1;
/// A source is far from a box when its distance from the box is at least this
/// many times the box's larger half-side.
pub const FAR_RATIO: f64 = 3.0;
/// Largest estimated interpolation error accepted, relative to the largest Σ|**E**ᵢ| of
/// the far sources at the box's Chebyshev points (the sum of their fields' magnitudes).
pub const REL_TOL: f64 = 1e-7;
/// A box interpolates only with at least this many grid points (about twice its
/// Chebyshev points, so the interpolation pays).
pub const INTERPOLATE_MIN: usize = 2 * NODES * NODES;

/// A rectangle of the map plane: x ∈ [x0, x1], z ∈ [z0, z1] at across position y [m].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MapRect {
    /// x range [m].
    pub x: [f64; 2],
    /// z range [m].
    pub z: [f64; 2],
    /// Across position y of the plane [m].
    pub y: f64,
}

impl MapRect {
    /// The larger half-side [m].
    fn half_side(&self) -> f64 {
        0.5 * (self.x[1] - self.x[0]).max(self.z[1] - self.z[0])
    }

    /// Distance from a point to the rectangle (3-D) [m].
    pub fn distance_to(&self, p: [f64; 3]) -> f64 {
        let dx = (self.x[0] - p[0]).max(p[0] - self.x[1]).max(0.0);
        let dz = (self.z[0] - p[2]).max(p[2] - self.z[1]).max(0.0);
        let dy = p[1] - self.y;
        (dx * dx + dy * dy + dz * dz).sqrt()
    }
}

/// What a field map sums: sources with an extent, summed in any subset.
pub trait MapSources: Sync {
    /// Number of sources.
    fn count(&self) -> usize;
    /// A lower bound of the distance from source `i` to rectangle `r` [m].
    fn distance(&self, i: usize, r: &MapRect) -> f64;
    /// **E** at `p` of the sources `which` [V/m], or `None` if it cannot be
    /// computed there (on a source, or an integral that did not converge);
    /// with `scale`, also adds Σ|**E**ᵢ| over those sources to it [V/m].
    fn field(&self, p: [f64; 3], which: &[usize], scale: Option<&mut f64>) -> Option<[f64; 3]>;
}

/// Work done by [`map_field`], for the benches and tests.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct MapStats {
    /// Source-point evaluations at grid points.
    pub direct: u64,
    /// Source-point evaluations at Chebyshev points.
    pub at_nodes: u64,
    /// Boxes that interpolated.
    pub boxes: u64,
    /// Boxes whose interpolation estimate missed [`REL_TOL`] (sources handed down).
    pub refused: u64,
    /// Source-point evaluations at the Chebyshev points of refused boxes.
    pub wasted: u64,
}

impl MapStats {
    fn add(self, o: MapStats) -> MapStats {
        MapStats {
            direct: self.direct + o.direct,
            at_nodes: self.at_nodes + o.at_nodes,
            boxes: self.boxes + o.boxes,
            refused: self.refused + o.refused,
            wasted: self.wasted + o.wasted,
        }
    }
}

/// One box's interpolant: the rectangle and the coefficients c_ab per component.
struct Interpolant {
    rect: MapRect,
    coef: [[[f64; NODES]; NODES]; 3],
}

impl Interpolant {
    /// Value at (x, z) inside the rectangle.
    fn at(&self, x: f64, z: f64) -> [f64; 3] {
        let ts = chebyshev_values(to_unit(x, self.rect.x));
        let tt = chebyshev_values(to_unit(z, self.rect.z));
        let mut out = [0.0; 3];
        for (o, c) in out.iter_mut().zip(&self.coef) {
            let mut sum = 0.0;
            for (row, ta) in c.iter().zip(&ts) {
                let mut inner = 0.0;
                for (cab, tb) in row.iter().zip(&tt) {
                    inner += cab * tb;
                }
                sum += ta * inner;
            }
            *o = sum;
        }
        out
    }
}

/// x mapped from [a, b] onto [−1, 1].
fn to_unit(x: f64, r: [f64; 2]) -> f64 {
    if r[1] > r[0] {
        ((2.0 * x - r[0] - r[1]) / (r[1] - r[0])).clamp(-1.0, 1.0)
    } else {
        0.0
    }
}

/// T_0(s) … T_n(s) by the three-term recurrence.
fn chebyshev_values(s: f64) -> [f64; NODES] {
    let mut t = [0.0; NODES];
    t[0] = 1.0;
    if NODES > 1 {
        t[1] = s;
    }
    for k in 2..NODES {
        t[k] = 2.0 * s * t[k - 1] - t[k - 2];
    }
    t
}

/// The Chebyshev points of the first kind on [−1, 1].
fn nodes() -> [f64; NODES] {
    let mut s = [0.0; NODES];
    for (j, sj) in s.iter_mut().enumerate() {
        *sj = (PI * (2 * j + 1) as f64 / (2 * NODES) as f64).cos();
    }
    s
}

/// Coefficients from values at the tensor Chebyshev points (`values[j][k]` at (s_j, t_k)),
/// and the error estimate of the header.
fn coefficients(values: &[[f64; NODES]; NODES]) -> ([[f64; NODES]; NODES], f64) {
    let s = nodes();
    // m[a][j] = (2 − δ_a0)/(n+1) · T_a(s_j)
    let mut m = [[0.0; NODES]; NODES];
    for (j, &sj) in s.iter().enumerate() {
        let t = chebyshev_values(sj);
        for a in 0..NODES {
            let w = if a == 0 { 1.0 } else { 2.0 };
            m[a][j] = w * t[a] / NODES as f64;
        }
    }
    // half[a][k] = Σ_j m[a][j] values[j][k]
    let mut half = [[0.0; NODES]; NODES];
    for a in 0..NODES {
        for (j, row) in values.iter().enumerate() {
            let w = m[a][j];
            for k in 0..NODES {
                half[a][k] += w * row[k];
            }
        }
    }
    let mut c = [[0.0; NODES]; NODES];
    for a in 0..NODES {
        for b in 0..NODES {
            c[a][b] = (0..NODES).map(|k| m[b][k] * half[a][k]).sum();
        }
    }
    let mut tail = 0.0;
    for (a, row) in c.iter().enumerate() {
        for (b, cab) in row.iter().enumerate() {
            if a.max(b) + 1 >= DEGREE {
                tail += cab.abs();
            }
        }
    }
    (c, 2.0 * tail)
}

/// A rectangle of grid indices [i0, i1) × [k0, k1).
#[derive(Debug, Clone, Copy)]
struct Cells {
    i: [usize; 2],
    k: [usize; 2],
}

impl Cells {
    fn len(&self) -> usize {
        (self.i[1] - self.i[0]) * (self.k[1] - self.k[0])
    }
}

/// The grid and the sources of one map.
struct Map<'a, S: MapSources> {
    xs: &'a [f64],
    zs: &'a [f64],
    y: f64,
    sources: &'a S,
    tick: &'a (dyn Fn(usize) + Sync),
}

/// **E** at every grid point (x = `xs[i]`, z = `zs[k]`, at y), row-major by z
/// (`out[k * xs.len() + i]`); `None` where a source cannot be evaluated
/// there. `tick(n)` is called as n more points are done. Grid coordinates
/// must be increasing.
pub fn map_field<S: MapSources>(
    xs: &[f64],
    zs: &[f64],
    y: f64,
    sources: &S,
    tick: &(dyn Fn(usize) + Sync),
) -> (Vec<Option<[f64; 3]>>, MapStats) {
    let map = Map {
        xs,
        zs,
        y,
        sources,
        tick,
    };
    let all: Vec<usize> = (0..sources.count()).collect();
    let cells = Cells {
        i: [0, xs.len()],
        k: [0, zs.len()],
    };
    let mut out = vec![None; xs.len() * zs.len()];
    if xs.is_empty() || zs.is_empty() {
        return (out, MapStats::default());
    }
    let (pieces, stats) = map.walk(cells, &all, &[]);
    for (c, vals) in pieces {
        let mut it = vals.into_iter();
        for k in c.k[0]..c.k[1] {
            for i in c.i[0]..c.i[1] {
                out[k * xs.len() + i] = it.next().flatten();
            }
        }
    }
    (out, stats)
}

type Pieces = Vec<(Cells, Vec<Option<[f64; 3]>>)>;

impl<S: MapSources> Map<'_, S> {
    fn rect(&self, c: Cells) -> MapRect {
        MapRect {
            x: [self.xs[c.i[0]], self.xs[c.i[1] - 1]],
            z: [self.zs[c.k[0]], self.zs[c.k[1] - 1]],
            y: self.y,
        }
    }

    /// Values of the box `c` given the sources still to sum and the interpolants above it.
    fn walk(&self, c: Cells, near: &[usize], above: &[&Interpolant]) -> (Pieces, MapStats) {
        let rect = self.rect(c);
        let mut stats = MapStats::default();
        let mut near = near.to_vec();
        let own;
        if c.len() >= INTERPOLATE_MIN {
            let h = rect.half_side();
            let (far, close): (Vec<usize>, Vec<usize>) = near
                .iter()
                .partition(|&&j| self.sources.distance(j, &rect) >= FAR_RATIO * h);
            if !far.is_empty() {
                stats.at_nodes += (far.len() * NODES * NODES) as u64;
                match self.interpolate(rect, &far) {
                    Some(p) => {
                        own = p;
                        stats.boxes += 1;
                        near = close;
                        return self.split_or_sum(c, &near, above, Some(&own), stats);
                    }
                    None => {
                        stats.refused += 1;
                        stats.wasted += (far.len() * NODES * NODES) as u64;
                    }
                }
            }
        }
        self.split_or_sum(c, &near, above, None, stats)
    }

    fn split_or_sum(
        &self,
        c: Cells,
        near: &[usize],
        above: &[&Interpolant],
        own: Option<&Interpolant>,
        mut stats: MapStats,
    ) -> (Pieces, MapStats) {
        let mut chain: Vec<&Interpolant> = above.to_vec();
        chain.extend(own);
        if c.len() < INTERPOLATE_MIN || near.is_empty() {
            stats.direct += (c.len() * near.len()) as u64;
            return (vec![(c, self.direct(c, near, &chain))], stats);
        }
        let (a, b) = self.halves(c);
        let ((pa, sa), (pb, sb)) =
            rayon::join(|| self.walk(a, near, &chain), || self.walk(b, near, &chain));
        let mut pieces = pa;
        pieces.extend(pb);
        (pieces, stats.add(sa).add(sb))
    }

    /// The two halves of a box, split across its physically longer side.
    fn halves(&self, c: Cells) -> (Cells, Cells) {
        let r = self.rect(c);
        let wide = r.x[1] - r.x[0] >= r.z[1] - r.z[0];
        if (wide && c.i[1] - c.i[0] > 1) || c.k[1] - c.k[0] <= 1 {
            let m = (c.i[0] + c.i[1]) / 2;
            (
                Cells {
                    i: [c.i[0], m],
                    ..c
                },
                Cells {
                    i: [m, c.i[1]],
                    ..c
                },
            )
        } else {
            let m = (c.k[0] + c.k[1]) / 2;
            (
                Cells {
                    k: [c.k[0], m],
                    ..c
                },
                Cells {
                    k: [m, c.k[1]],
                    ..c
                },
            )
        }
    }

    /// The far sources' field at the box's Chebyshev points, interpolated; `None` if an
    /// evaluation fails or the error estimate misses [`REL_TOL`].
    fn interpolate(&self, rect: MapRect, far: &[usize]) -> Option<Interpolant> {
        let s = nodes();
        let mid = |r: [f64; 2], u: f64| 0.5 * (r[0] + r[1]) + 0.5 * (r[1] - r[0]) * u;
        let mut values = [[[0.0; NODES]; NODES]; 3];
        let mut largest = 0.0_f64;
        for (j, &sj) in s.iter().enumerate() {
            for (k, &tk) in s.iter().enumerate() {
                let p = [mid(rect.x, sj), rect.y, mid(rect.z, tk)];
                let mut sum = 0.0;
                let e = self.sources.field(p, far, Some(&mut sum))?;
                largest = largest.max(sum);
                for (v, ek) in values.iter_mut().zip(e) {
                    v[j][k] = ek;
                }
            }
        }
        let mut coef = [[[0.0; NODES]; NODES]; 3];
        for (cf, v) in coef.iter_mut().zip(&values) {
            let (c, estimate) = coefficients(v);
            if estimate.is_nan() || estimate > REL_TOL * largest {
                return None;
            }
            *cf = c;
        }
        Some(Interpolant { rect, coef })
    }

    /// Direct sums at the box's grid points plus the interpolants above.
    fn direct(&self, c: Cells, near: &[usize], chain: &[&Interpolant]) -> Vec<Option<[f64; 3]>> {
        let mut out = Vec::with_capacity(c.len());
        for k in c.k[0]..c.k[1] {
            for i in c.i[0]..c.i[1] {
                let (x, z) = (self.xs[i], self.zs[k]);
                let mut e = if near.is_empty() {
                    Some([0.0; 3])
                } else {
                    self.sources.field([x, self.y, z], near, None)
                };
                if let Some(e) = e.as_mut() {
                    for p in chain {
                        let add = p.at(x, z);
                        for (ek, ak) in e.iter_mut().zip(add) {
                            *ek += ak;
                        }
                    }
                }
                out.push(e);
            }
        }
        (self.tick)(c.len());
        out
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Unit point charges (field k·q·(p − c)/|p − c|³ with k·q = 1) as sources.
    struct Charges(Vec<[f64; 3]>);

    impl MapSources for Charges {
        fn count(&self) -> usize {
            self.0.len()
        }
        fn distance(&self, i: usize, r: &MapRect) -> f64 {
            r.distance_to(self.0[i])
        }
        fn field(
            &self,
            p: [f64; 3],
            which: &[usize],
            mut scale: Option<&mut f64>,
        ) -> Option<[f64; 3]> {
            let mut e = [0.0; 3];
            for &j in which {
                let c = self.0[j];
                let d = [p[0] - c[0], p[1] - c[1], p[2] - c[2]];
                let r2 = d[0] * d[0] + d[1] * d[1] + d[2] * d[2];
                if r2 == 0.0 {
                    return None;
                }
                let k = 1.0 / (r2 * r2.sqrt());
                if let Some(s) = scale.as_deref_mut() {
                    *s += 1.0 / r2;
                }
                for (ek, dk) in e.iter_mut().zip(d) {
                    *ek += k * dk;
                }
            }
            Some(e)
        }
    }

    fn grid(n: usize, a: f64, b: f64) -> Vec<f64> {
        (0..n)
            .map(|i| a + (b - a) * i as f64 / (n - 1) as f64)
            .collect()
    }

    #[test]
    fn chebyshev_interpolation_reproduces_a_polynomial() {
        // f(s, t) = 1 + 2s − 3t² + s³t on the nodes: coefficients exact, estimate ~0.
        let s = nodes();
        let mut v = [[0.0; NODES]; NODES];
        for (j, &sj) in s.iter().enumerate() {
            for (k, &tk) in s.iter().enumerate() {
                v[j][k] = 1.0 + 2.0 * sj - 3.0 * tk * tk + sj.powi(3) * tk;
            }
        }
        let (c, est) = coefficients(&v);
        assert!(est < 1e-13, "estimate {est}");
        let p = Interpolant {
            rect: MapRect {
                x: [-1.0, 1.0],
                z: [-1.0, 1.0],
                y: 0.0,
            },
            coef: [c, c, c],
        };
        let (x, z): (f64, f64) = (0.3, -0.7);
        let want = 1.0 + 2.0 * x - 3.0 * z * z + x.powi(3) * z;
        assert!((p.at(x, z)[0] - want).abs() < 1e-13);
    }

    #[test]
    fn boxes_agree_with_the_direct_sum_and_do_less_work() {
        // 300 charges scattered over a band inside the map; 200 × 120 grid.
        let mut state = 0x2545_f491_4f6c_dd1d_u64;
        let mut next = || {
            state ^= state << 13;
            state ^= state >> 7;
            state ^= state << 17;
            (state >> 11) as f64 / (1u64 << 53) as f64
        };
        let charges: Vec<[f64; 3]> = (0..300)
            .map(|_| [4.0 * next(), 0.3 * (next() - 0.5), 0.8 + 0.4 * next()])
            .collect();
        let src = Charges(charges);
        let xs = grid(200, -0.5, 4.5);
        let zs = grid(120, 0.0, 3.0);
        let (boxed, stats) = map_field(&xs, &zs, 0.0, &src, &|_| {});
        let all: Vec<usize> = (0..src.count()).collect();
        let mut largest = 0.0_f64;
        let mut worst = 0.0_f64;
        let mut errs = Vec::new();
        for (n, b) in boxed.iter().enumerate() {
            let p = [xs[n % xs.len()], 0.0, zs[n / xs.len()]];
            let d = src.field(p, &all, None).expect("off the charges");
            let b = b.expect("map value");
            let m = (d[0] * d[0] + d[1] * d[1] + d[2] * d[2]).sqrt();
            largest = largest.max(m);
            let diff =
                ((b[0] - d[0]).powi(2) + (b[1] - d[1]).powi(2) + (b[2] - d[2]).powi(2)).sqrt();
            worst = worst.max(diff / m);
            errs.push(diff);
        }
        let map_err = errs.iter().fold(0.0_f64, |a, &b| a.max(b)) / largest;
        assert!(
            worst < 1e-6,
            "worst error relative to |E| at the point {worst:e}"
        );
        assert!(
            map_err < 1e-7,
            "worst error relative to the map's largest {map_err:e}"
        );
        let full = (xs.len() * zs.len() * src.count()) as u64;
        assert!(stats.boxes > 0, "{stats:?}");
        assert!(
            stats.direct + stats.at_nodes < full / 2,
            "work {stats:?} against {full}"
        );
    }

    #[test]
    fn a_point_on_a_source_gives_none_there_only() {
        let src = Charges(vec![[1.0, 0.0, 1.0]]);
        let xs = grid(21, 0.0, 2.0);
        let zs = grid(21, 0.0, 2.0);
        let (vals, _) = map_field(&xs, &zs, 0.0, &src, &|_| {});
        let missing: Vec<usize> = (0..vals.len()).filter(|&n| vals[n].is_none()).collect();
        assert_eq!(missing, vec![10 * 21 + 10]);
    }
}
