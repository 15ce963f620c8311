//! # The potential of a charged patch far from it, by a fixed Gauss rule
//!
//! Field stage, conductor part: the right-hand side of the conductors'
//! solve is the web's potential at every collocation point, and most of
//! those points are far from most patches of web. There the integrand of
//! [`super::integrate`] is smooth over the whole patch, and a fixed tensor
//! Gauss–Legendre rule replaces the adaptive double-exponential one at a
//! tenth of the cost or less.
//!
//! For a patch σ(u′, y′) = A·e^{−u′/λ}·f(y′) on u′ ∈ [0, L] (f piecewise
//! quadratic on its pieces [y_k, y_{k+1}]) and a point P = (u, y, h),
//!
//! $$ V(P) = \frac{A}{4πε_0} \sum_k \sum_{i,j=1}^{n} w_i w_j\,
//!    \frac{L}{2}\frac{y_{k+1}-y_k}{2}\,
//!    \frac{e^{-u_i/λ} f(y_j)}{\sqrt{(u-u_i)^2 + (y-y_j)^2 + h^2}}, $$
//!
//! with the n = [`FAR_ORDER`] Gauss–Legendre nodes and weights mapped to
//! [0, L] and to each piece. It is used only when the point is at least
//! [`FAR_RATIO`] half-diagonals of the patch from its centre and the patch
//! is at most one decay length long (L ≤ λ): then 1/R and e^{−u′/λ} are
//! analytic on a neighbourhood of the patch, f is a polynomial of degree 2
//! on each piece, and the tensor rule's error falls like ρ^{−2n} with ρ the
//! ratio of distance to half-size (Davis & Rabinowitz, *Methods of Numerical
//! Integration*, 2nd ed., §2.7). Measured against the adaptive rule at
//! 1e-12 in this module's tests: at most 3e-10 of the error scale S_V of
//! [`super::integrate::error_scale`] for the edges, tilt and three-piece
//! table profiles at the switching distance, in every direction (asserted:
//! 1e-8), far below the panels' own discretisation error (about 1e-3).
//! Elsewhere the caller uses the adaptive rule.
//!
//! | symbol | meaning | unit |
//! | --- | --- | --- |
//! | A, λ, L | amplitude, decay length, patch length | C/m², m, m |
//! | f, y_k | across-web shape and its piece ends | 1, m |
//! | u, y, h | point in the patch frame | m |
//! | w_i, u_i, y_j | Gauss weights and nodes | 1, m, m |

use super::integrate::Patch;
use super::kernels::COULOMB;

/// Points of the Gauss–Legendre rule in each direction.
pub const FAR_ORDER: usize = 8;
/// Least distance from the patch centre, in half-diagonals of the patch.
pub const FAR_RATIO: f64 = 2.0;

/// Gauss–Legendre nodes on [−1, 1] for n = 8 (Abramowitz & Stegun, Table 25.4).
const NODES: [f64; FAR_ORDER] = [
    -0.960_289_856_497_536_2,
    -0.796_666_477_413_626_7,
    -0.525_532_409_916_329,
    -0.183_434_642_495_649_8,
    0.183_434_642_495_649_8,
    0.525_532_409_916_329,
    0.796_666_477_413_626_7,
    0.960_289_856_497_536_2,
];
/// The matching weights.
const WEIGHTS: [f64; FAR_ORDER] = [
    0.101_228_536_290_376_26,
    0.222_381_034_453_374_47,
    0.313_706_645_877_887_3,
    0.362_683_783_378_362,
    0.362_683_783_378_362,
    0.313_706_645_877_887_3,
    0.222_381_034_453_374_47,
    0.101_228_536_290_376_26,
];

/// V [V] of `patch` at `p = [u, y, h]` [m] (patch frame) by the fixed rule,
/// or `None` when the point is too near or the patch too long for it.
pub fn far_potential(patch: &Patch, p: [f64; 3]) -> Option<f64> {
    let [y_lo, y_hi] = patch.y_range();
    let (l, w) = (patch.len, y_hi - y_lo);
    // A NaN length or decay length fails this test too.
    if patch.len.partial_cmp(&patch.decay_length) != Some(std::cmp::Ordering::Less)
        && patch.len != patch.decay_length
    {
        return None;
    }
    let half_diag = 0.5 * (l * l + w * w).sqrt();
    let (du, dy) = (p[0] - 0.5 * l, p[1] - 0.5 * (y_lo + y_hi));
    if du * du + dy * dy + p[2] * p[2] < (FAR_RATIO * half_diag).powi(2) {
        return None;
    }
    let decays = patch.decay_length.is_finite();
    let mut along = [(0.0, 0.0); FAR_ORDER];
    for (a, (x, wt)) in along.iter_mut().zip(NODES.iter().zip(WEIGHTS)) {
        let u = 0.5 * l * (1.0 + x);
        let d = if decays {
            (-u / patch.decay_length).exp()
        } else {
            1.0
        };
        *a = (p[0] - u, 0.5 * l * wt * d);
    }
    let h2 = p[2] * p[2];
    let mut sum = 0.0;
    for piece in &patch.across {
        let half = 0.5 * (piece.y_hi - piece.y_lo);
        let mid = 0.5 * (piece.y_hi + piece.y_lo);
        for (x, wt) in NODES.iter().zip(WEIGHTS) {
            let yj = mid + half * x;
            let fy = piece.value(yj) * wt * half;
            let ry = p[1] - yj;
            let ry2 = ry * ry + h2;
            let mut inner = 0.0;
            for &(ru, wu) in &along {
                inner += wu / (ru * ru + ry2).sqrt();
            }
            sum += fy * inner;
        }
    }
    Some(COULOMB * patch.amplitude * sum)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::field::integrate::{error_scale, patch_field};
    use crate::field::kernels::QuadPiece;
    use std::f64::consts::PI;

    fn patches() -> Vec<Patch> {
        let edges = QuadPiece {
            y_lo: -0.6,
            y_hi: 0.6,
            c: [1.0, 0.0, 0.6 / 0.36],
        };
        let tilt = QuadPiece {
            y_lo: -0.5,
            y_hi: 0.5,
            c: [0.2, 2.0, 0.0],
        };
        let table = vec![
            QuadPiece {
                y_lo: -0.6,
                y_hi: -0.2,
                c: [1.0, 0.5, 0.0],
            },
            QuadPiece {
                y_lo: -0.2,
                y_hi: 0.2,
                c: [0.9, 0.0, 0.0],
            },
            QuadPiece {
                y_lo: 0.2,
                y_hi: 0.6,
                c: [1.0, -0.5, 0.3],
            },
        ];
        let mut out = Vec::new();
        for (len, lambda) in [(1.0, 1.0), (0.25, 14.0), (0.8, f64::INFINITY)] {
            for across in [vec![edges], vec![tilt], table.clone()] {
                out.push(Patch {
                    len,
                    amplitude: 2e-6,
                    decay_length: lambda,
                    across,
                });
            }
        }
        out
    }

    /// The fixed rule against the adaptive one at 1e-12 on spheres at the
    /// switching distance and twice it, in 200 directions: the difference
    /// is below 1e-8 of the error scale S_V (the adaptive rule's own
    /// tolerance measure), for every profile (measured: 3e-10).
    #[test]
    fn far_rule_matches_the_adaptive_rule() {
        for patch in patches() {
            let [y_lo, y_hi] = patch.y_range();
            let (l, w) = (patch.len, y_hi - y_lo);
            let hd = 0.5 * (l * l + w * w).sqrt();
            let c = [0.5 * l, 0.5 * (y_lo + y_hi), 0.0];
            for scale in [1.0 + 1e-9, 2.0] {
                let r = FAR_RATIO * hd * scale;
                let mut worst = 0.0_f64;
                for i in 0..10 {
                    for j in 0..20 {
                        let th = PI * (i as f64 + 0.5) / 10.0;
                        let ph = 2.0 * PI * j as f64 / 20.0;
                        let p = [
                            c[0] + r * th.sin() * ph.cos(),
                            c[1] + r * th.sin() * ph.sin(),
                            c[2] + r * th.cos(),
                        ];
                        let far = far_potential(&patch, p).expect("far enough");
                        let exact = patch_field(&patch, p, 1e-12).unwrap().v;
                        let s = error_scale(&patch, p)[0];
                        worst = worst.max((far - exact).abs() / s);
                    }
                }
                assert!(worst < 1e-8, "{patch:?} at {scale}: {worst:e}");
            }
        }
    }

    /// Too near, or a patch longer than its decay length: no answer.
    #[test]
    fn near_points_and_fast_decay_are_left_to_the_adaptive_rule() {
        let mut p = patches().remove(0);
        assert!(far_potential(&p, [0.5, 0.0, 0.3]).is_none());
        assert!(far_potential(&p, [0.5, 0.0, 10.0]).is_some());
        p.decay_length = 0.5;
        assert!(far_potential(&p, [0.5, 0.0, 10.0]).is_none());
    }
}
