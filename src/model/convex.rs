//! # Do two convex shapes meet? (Gilbert–Johnson–Keerthi test)
//!
//! Model stage, used by the validator to refuse conductors that overlap each
//! other or the web. Every shape the line description knows (a box, a
//! cylinder, a rectangle such as a plate or a span of web, a point) is convex
//! and described by its *support function*
//!
//! $$ s_A(\mathbf d) = \arg\max_{\mathbf p \in A} \mathbf p \cdot \mathbf d . $$
//!
//! Two convex sets A and B intersect exactly when the origin lies in their
//! Minkowski difference A − B, whose support function is
//! s_A(**d**) − s_B(−**d**). The algorithm grows a simplex (point, segment,
//! triangle, tetrahedron) of support points of A − B towards the origin; it
//! stops with "apart" as soon as a support point fails to pass the origin in
//! the search direction **d** (then the plane normal to **d** separates A and
//! B: exact, no tolerance), and with "meet" when the simplex encloses the
//! origin or the origin lies on it (touching counts as meeting).
//!
//! | symbol | meaning | unit |
//! | --- | --- | --- |
//! | **d** | search direction | 1 (any length) |
//! | s_A(**d**) | support point of A | m |
//!
//! Assumptions: both shapes are closed, bounded and convex. The loop is
//! capped at [`MAX_ITERATIONS`]; reaching the cap (only possible when the
//! shapes touch to within rounding) is answered "meet", so that a doubtful
//! case is refused rather than passed. Callers that want touching shapes to
//! pass shrink them first (see `ConductorShape::shrunk`).
//!
//! ## Reference
//! E. G. Gilbert, D. W. Johnson, S. S. Keerthi, "A fast procedure for
//! computing the distance between complex objects in three-dimensional
//! space", IEEE J. Robotics and Automation 4(2), 193–203 (1988); the
//! boolean form with the simplex cases below is the common textbook variant
//! (e.g. C. Ericson, *Real-Time Collision Detection*, 2005, ch. 9).

/// A 3-D vector or point [m].
pub type Vec3 = [f64; 3];

/// Most simplex updates tried before answering "meet".
pub const MAX_ITERATIONS: usize = 100;

/// A bounded convex set given by its support function.
pub trait Convex {
    /// A point of the set farthest along `d` (any length, non-zero) [m].
    fn support(&self, d: Vec3) -> Vec3;
    /// Any point inside the set (used to start the search) [m].
    fn interior_point(&self) -> Vec3;
}

/// A single point [m], as a convex set.
impl Convex for Vec3 {
    fn support(&self, _d: Vec3) -> Vec3 {
        *self
    }
    fn interior_point(&self) -> Vec3 {
        *self
    }
}

pub(crate) fn sub(a: Vec3, b: Vec3) -> Vec3 {
    [a[0] - b[0], a[1] - b[1], a[2] - b[2]]
}
pub(crate) fn add(a: Vec3, b: Vec3) -> Vec3 {
    [a[0] + b[0], a[1] + b[1], a[2] + b[2]]
}
pub(crate) fn scale(a: Vec3, k: f64) -> Vec3 {
    [a[0] * k, a[1] * k, a[2] * k]
}
pub(crate) fn dot(a: Vec3, b: Vec3) -> f64 {
    a[0] * b[0] + a[1] * b[1] + a[2] * b[2]
}
pub(crate) fn cross(a: Vec3, b: Vec3) -> Vec3 {
    [
        a[1] * b[2] - a[2] * b[1],
        a[2] * b[0] - a[0] * b[2],
        a[0] * b[1] - a[1] * b[0],
    ]
}
pub(crate) fn norm(a: Vec3) -> f64 {
    dot(a, a).sqrt()
}
fn neg(a: Vec3) -> Vec3 {
    [-a[0], -a[1], -a[2]]
}
/// (a × b) × c.
fn triple(a: Vec3, b: Vec3, c: Vec3) -> Vec3 {
    cross(cross(a, b), c)
}

/// Support point of the Minkowski difference A − B along `d` [m].
fn support_diff(a: &dyn Convex, b: &dyn Convex, d: Vec3) -> Vec3 {
    sub(a.support(d), b.support(neg(d)))
}

/// Whether the convex sets `a` and `b` have a point in common (touching
/// counts).
pub fn intersects(a: &dyn Convex, b: &dyn Convex) -> bool {
    let mut d = sub(b.interior_point(), a.interior_point());
    if norm(d) == 0.0 {
        d = [1.0, 0.0, 0.0];
    }
    let first = support_diff(a, b, d);
    let mut simplex: Vec<Vec3> = vec![first];
    d = neg(first);
    for _ in 0..MAX_ITERATIONS {
        // Scale-aware zero test: the origin is (numerically) on the simplex.
        if norm(d) <= 1e-14 * (1.0 + norm(first)) {
            return true;
        }
        let p = support_diff(a, b, d);
        if dot(p, d) < 0.0 {
            return false;
        }
        simplex.push(p);
        if next_simplex(&mut simplex, &mut d) {
            return true;
        }
    }
    true
}

/// Reduces the simplex to the feature nearest the origin and sets the next
/// search direction towards the origin; `true` when the origin is enclosed.
/// The newest point is last.
fn next_simplex(s: &mut Vec<Vec3>, d: &mut Vec3) -> bool {
    match s.len() {
        2 => {
            let (b, a) = (s[0], s[1]);
            let ab = sub(b, a);
            let ao = neg(a);
            if dot(ab, ao) > 0.0 {
                *d = triple(ab, ao, ab);
                if norm(*d) == 0.0 {
                    // The origin lies on the segment.
                    return true;
                }
            } else {
                *s = vec![a];
                *d = ao;
            }
            false
        }
        3 => {
            let (c, b, a) = (s[0], s[1], s[2]);
            triangle(s, d, a, b, c)
        }
        4 => {
            let (dd, c, b, a) = (s[0], s[1], s[2], s[3]);
            let ao = neg(a);
            let abc = cross(sub(b, a), sub(c, a));
            let acd = cross(sub(c, a), sub(dd, a));
            let adb = cross(sub(dd, a), sub(b, a));
            // Orient each face normal away from the opposite vertex.
            let out = |n: Vec3, opposite: Vec3| {
                if dot(n, sub(opposite, a)) > 0.0 {
                    neg(n)
                } else {
                    n
                }
            };
            let (abc, acd, adb) = (out(abc, dd), out(acd, b), out(adb, c));
            if dot(abc, ao) > 0.0 {
                *s = vec![c, b, a];
                return triangle(s, d, a, b, c);
            }
            if dot(acd, ao) > 0.0 {
                *s = vec![dd, c, a];
                return triangle(s, d, a, c, dd);
            }
            if dot(adb, ao) > 0.0 {
                *s = vec![b, dd, a];
                return triangle(s, d, a, dd, b);
            }
            true
        }
        _ => {
            // One point (or none): search towards the origin from it.
            if let Some(&a) = s.last() {
                *d = neg(a);
            }
            false
        }
    }
}

/// The triangle case, `a` newest; leaves in `s` the feature nearest the
/// origin (newest last) and in `d` the direction towards it.
fn triangle(s: &mut Vec<Vec3>, d: &mut Vec3, a: Vec3, b: Vec3, c: Vec3) -> bool {
    let ab = sub(b, a);
    let ac = sub(c, a);
    let ao = neg(a);
    let abc = cross(ab, ac);
    if dot(cross(abc, ac), ao) > 0.0 {
        if dot(ac, ao) > 0.0 {
            *s = vec![c, a];
            *d = triple(ac, ao, ac);
        } else {
            return edge_ab(s, d, a, b);
        }
    } else if dot(cross(ab, abc), ao) > 0.0 {
        return edge_ab(s, d, a, b);
    } else {
        let side = dot(abc, ao);
        if side > 0.0 {
            *s = vec![c, b, a];
            *d = abc;
        } else if side < 0.0 {
            *s = vec![b, c, a];
            *d = neg(abc);
        } else {
            // The origin lies in the triangle's plane, inside it.
            return true;
        }
    }
    norm(*d) == 0.0
}

fn edge_ab(s: &mut Vec<Vec3>, d: &mut Vec3, a: Vec3, b: Vec3) -> bool {
    let ab = sub(b, a);
    let ao = neg(a);
    if dot(ab, ao) > 0.0 {
        *s = vec![b, a];
        *d = triple(ab, ao, ab);
    } else {
        *s = vec![a];
        *d = ao;
    }
    norm(*d) == 0.0
}

#[cfg(test)]
mod tests {
    use super::*;

    /// An axis-aligned box [m].
    struct Aabb(Vec3, Vec3);
    impl Convex for Aabb {
        fn support(&self, d: Vec3) -> Vec3 {
            [0, 1, 2].map(|k| if d[k] >= 0.0 { self.1[k] } else { self.0[k] })
        }
        fn interior_point(&self) -> Vec3 {
            [0, 1, 2].map(|k| 0.5 * (self.0[k] + self.1[k]))
        }
    }
    /// A ball (centre, radius) [m].
    struct Ball(Vec3, f64);
    impl Convex for Ball {
        fn support(&self, d: Vec3) -> Vec3 {
            add(self.0, scale(d, self.1 / norm(d)))
        }
        fn interior_point(&self) -> Vec3 {
            self.0
        }
    }

    fn boxes_overlap(a: &Aabb, b: &Aabb) -> bool {
        (0..3).all(|k| a.0[k] <= b.1[k] && b.0[k] <= a.1[k])
    }

    /// Box pairs on a grid of offsets: GJK agrees with the interval test
    /// (exact for axis-aligned boxes) in every case, touching included.
    #[test]
    fn agrees_with_the_box_interval_test() {
        let a = Aabb([0.0, 0.0, 0.0], [1.0, 2.0, 0.5]);
        let steps = [-2.5, -1.5, -1.0, -0.4, 0.0, 0.3, 0.5, 1.0, 1.7, 2.0, 2.2];
        let mut n = 0;
        for &dx in &steps {
            for &dy in &steps {
                for &dz in &steps {
                    let b = Aabb([dx, dy, dz], [dx + 0.5, dy + 0.25, dz + 0.75]);
                    assert_eq!(
                        intersects(&a, &b),
                        boxes_overlap(&a, &b),
                        "offset [{dx}, {dy}, {dz}]"
                    );
                    n += 1;
                }
            }
        }
        assert_eq!(n, 1331);
    }

    /// Two balls meet when their centres are at most r1 + r2 apart; checked
    /// 1e-9 either side of contact in several directions.
    #[test]
    fn agrees_with_the_ball_distance_test() {
        for dir in [[1.0, 0.0, 0.0], [0.3, -0.4, 0.866], [-0.6, 0.64, -0.48]] {
            let u = scale(dir, 1.0 / norm(dir));
            for (gap, meet) in [(1e-9, false), (-1e-9, true), (0.5, false), (-0.5, true)] {
                let a = Ball([0.2, 0.1, -0.3], 0.4);
                let b = Ball(add(a.0, scale(u, 0.4 + 0.25 + gap)), 0.25);
                assert_eq!(intersects(&a, &b), meet, "dir {dir:?}, gap {gap}");
            }
        }
    }

    #[test]
    fn a_point_is_inside_or_outside() {
        let a = Aabb([0.0, 0.0, 0.0], [1.0, 1.0, 1.0]);
        assert!(intersects(&a, &[0.5, 0.5, 0.5]));
        assert!(intersects(&a, &[1.0, 0.5, 0.5]));
        assert!(!intersects(&a, &[1.0 + 1e-9, 0.5, 0.5]));
        assert!(!intersects(&a, &[-0.1, 2.0, 0.5]));
    }
}
