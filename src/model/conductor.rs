//! # Conductors beside the web: plates, boxes, cylinders, people and rollers
//!
//! Model stage: the checked conductors of a [`Line`](super::Line), resolved
//! to plain 3-D geometry for the boundary-element solve (field stage), and
//! the tests the validator uses to refuse impossible arrangements.
//!
//! ## Shapes
//! | shape | geometry | symbols |
//! | --- | --- | --- |
//! | plate | the rectangle **o** + a·**e**₁ + b·**e**₂, a, b ∈ [0, 1], **e**₁ ⊥ **e**₂ | **o**, **e**₁, **e**₂ [m] |
//! | box | the axis-aligned box **min** ≤ **p** ≤ **max** | [m] |
//! | cylinder | a solid right circular cylinder: \|(**p** − **c**)·**â**\| ≤ ℓ/2 and the distance from the axis ≤ r | **c** [m], **â** [1], r [m], ℓ [m] |
//!
//! A **person** standing at [x, y] on the floor (the ground plane, or z = 0
//! without one) is modelled as a vertical cylinder of diameter `width`
//! (default [`PERSON_WIDTH`]) and height `height` (default
//! [`PERSON_HEIGHT`]) whose base rests on the floor. A **roller** of radius r
//! and length ℓ centred at [x, z] in the side view is the cylinder with
//! centre [x, 0, z] and axis ŷ ([`Roller::cylinder`]).
//!
//! ## Tests used by the validator
//! - *point inside*: exact for each shape (a plate: within
//!   [`MIN_POINT_DISTANCE`] of it);
//! - *overlap* of two conductors, or of a conductor with a span of web: the
//!   exact convex-intersection test of [`super::convex`] on the support
//!   functions below (every shape here is convex). Two conductors may touch:
//!   each is first shrunk by [`TOUCH_TOLERANCE`]. A conductor may not touch
//!   the web at all.
//!
//! ## Reference
//! Geometry only; the person's default lumped capacitance is sourced at
//! [`PERSON_FEET_CAPACITANCE`].

use super::convex::{self, Convex, Vec3, add, cross, dot, norm, scale, sub};
use super::geometry::MIN_POINT_DISTANCE;
use super::path::{Earthing, Roller, Span};
use crate::units::{Coulombs, Farads, Meters};

/// Default height of a standing person [m] (an adult; stated in the README).
pub const PERSON_HEIGHT: Meters = 1.75;

/// Default width of a standing person [m]: the diameter of the cylinder that
/// models the body (shoulder width of an adult, rounded).
pub const PERSON_WIDTH: Meters = 0.3;

/// Default lumped capacitance between an isolated person's feet and the
/// floor [F], added to the capacitance of the body cylinder that the solve
/// computes. **An assumption**, derived as follows: the human body
/// capacitance is 100–300 pF (NFPA 77; ≈ 90 pF standing, ≈ 300 pF on a steel
/// plate, Japanese NIIS guidance, see FACTS.md), and the IEC 61000-4-2 body
/// model uses 150 pF. The default body cylinder (1.75 m × 0.3 m) has a
/// capacitance of roughly 50 pF on its own (slender-cylinder estimate
/// 2πε0·h / (ln(2h/r) − 1) ≈ 45 pF, a little more with the floor). Taking
/// 100 pF for the soles makes the total ≈ 150 pF, the IEC body model and
/// inside the NFPA 77 range; it also matches a sole estimate ε0·εr·A/t with
/// two soles of A ≈ 0.05 m², t ≈ 10 mm, εr ≈ 3 (≈ 130 pF, from memory of
/// typical shoes). Give `capacitance_to_ground` to override it.
pub const PERSON_FEET_CAPACITANCE: Farads = 100e-12;

/// Touching conductors are allowed; a penetration deeper than twice this
/// [m] is an overlap (each shape is shrunk by it before the test).
pub const TOUCH_TOLERANCE: Meters = 0.5e-3;

/// Plate edges count as perpendicular when |cos θ| is below this [1]; the
/// second edge is then made exactly perpendicular to the first.
pub const PERPENDICULAR_TOLERANCE: f64 = 1e-3;

/// How the user described a conductor.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ConductorKind {
    /// `shape: plate`.
    Plate,
    /// `shape: box`.
    Box,
    /// `shape: cylinder`.
    Cylinder,
    /// `shape: person` (resolved to a vertical cylinder on the floor).
    Person,
}

impl ConductorKind {
    /// The keyword used in the YAML.
    pub fn text(self) -> &'static str {
        match self {
            ConductorKind::Plate => "plate",
            ConductorKind::Box => "box",
            ConductorKind::Cylinder => "cylinder",
            ConductorKind::Person => "person",
        }
    }
}

/// A conductor's surface as plain 3-D geometry.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum ConductorShape {
    /// The rectangle `origin + a·e1 + b·e2`, a, b ∈ [0, 1]; `e1 ⊥ e2`, both
    /// non-zero [m]. Both faces are conducting.
    Plate {
        /// A corner [m].
        origin: Vec3,
        /// First edge [m].
        e1: Vec3,
        /// Second edge, perpendicular to the first [m].
        e2: Vec3,
    },
    /// An axis-aligned box, every side > 0 [m].
    Box {
        /// Lower corner [m].
        min: Vec3,
        /// Upper corner [m].
        max: Vec3,
    },
    /// A closed right circular cylinder (side and both end faces).
    Cylinder {
        /// Centre of the axis segment [m].
        center: Vec3,
        /// Axis direction, a unit vector [1].
        axis: Vec3,
        /// Radius [m].
        radius: Meters,
        /// Length along the axis [m].
        length: Meters,
    },
}

/// Smallest size of a conductor's face or radius [m] (10 µm): the
/// conductors' solve meshes every face, and finer features are below what it
/// resolves.
pub const MIN_CONDUCTOR_SIZE: Meters = 1e-5;

/// Largest size of a conductor's face or radius [m] (1 km): far beyond any
/// roller, frame or plate of a line; bounds the conductors' mesh.
pub const MAX_CONDUCTOR_SIZE: Meters = 1e3;

impl ConductorShape {
    /// The sizes the conductors' solve meshes, with their names: a plate's
    /// two edges, a box's three sides, a cylinder's radius and length [m].
    pub fn sizes(&self) -> Vec<(&'static str, Meters)> {
        let len = |v: Vec3| dot(v, v).sqrt();
        match *self {
            ConductorShape::Plate { e1, e2, .. } => {
                vec![("first edge", len(e1)), ("second edge", len(e2))]
            }
            ConductorShape::Box { min, max } => vec![
                ("side along x", max[0] - min[0]),
                ("side along y", max[1] - min[1]),
                ("side along z", max[2] - min[2]),
            ],
            ConductorShape::Cylinder { radius, length, .. } => {
                vec![("radius", radius), ("length", length)]
            }
        }
    }

    /// The first size outside [`MIN_CONDUCTOR_SIZE`]..=[`MAX_CONDUCTOR_SIZE`],
    /// with its name.
    pub fn size_out_of_range(&self) -> Option<(&'static str, Meters)> {
        self.sizes()
            .into_iter()
            .find(|&(_, v)| !(MIN_CONDUCTOR_SIZE..=MAX_CONDUCTOR_SIZE).contains(&v))
    }

    /// Whether `p` [m] lies inside the solid (faces included); for a plate,
    /// within [`MIN_POINT_DISTANCE`] of it.
    pub fn contains(&self, p: Vec3) -> bool {
        match *self {
            ConductorShape::Plate { origin, e1, e2 } => {
                let r = sub(p, origin);
                let (l1, l2) = (dot(e1, e1), dot(e2, e2));
                let a = (dot(r, e1) / l1).clamp(0.0, 1.0);
                let b = (dot(r, e2) / l2).clamp(0.0, 1.0);
                let q = add(origin, add(scale(e1, a), scale(e2, b)));
                norm(sub(p, q)) < MIN_POINT_DISTANCE
            }
            ConductorShape::Box { min, max } => (0..3).all(|k| p[k] >= min[k] && p[k] <= max[k]),
            ConductorShape::Cylinder {
                center,
                axis,
                radius,
                length,
            } => {
                let r = sub(p, center);
                let t = dot(r, axis);
                let radial = norm(sub(r, scale(axis, t)));
                t.abs() <= length / 2.0 && radial <= radius
            }
        }
    }

    /// The axis-aligned bounding box `(min, max)` [m].
    pub fn bounds(&self) -> (Vec3, Vec3) {
        let lo = [0, 1, 2].map(|k| {
            let mut d = [0.0; 3];
            d[k] = -1.0;
            self.support(d)[k]
        });
        let hi = [0, 1, 2].map(|k| {
            let mut d = [0.0; 3];
            d[k] = 1.0;
            self.support(d)[k]
        });
        (lo, hi)
    }

    /// The same shape made smaller by `by` [m] on every side that has
    /// thickness (a plate keeps its plane and loses `by` at its edges); a
    /// dimension smaller than 2·`by` shrinks to zero.
    pub fn shrunk(&self, by: Meters) -> ConductorShape {
        match *self {
            ConductorShape::Plate { origin, e1, e2 } => {
                let cut = |e: Vec3| {
                    let l = norm(e);
                    let k = (2.0 * by).min(l) / l;
                    (scale(e, 0.5 * k), scale(e, 1.0 - k))
                };
                let (o1, e1) = cut(e1);
                let (o2, e2) = cut(e2);
                ConductorShape::Plate {
                    origin: add(origin, add(o1, o2)),
                    e1,
                    e2,
                }
            }
            ConductorShape::Box { min, max } => {
                let mid = [0, 1, 2].map(|k| 0.5 * (min[k] + max[k]));
                ConductorShape::Box {
                    min: [0, 1, 2].map(|k| (min[k] + by).min(mid[k])),
                    max: [0, 1, 2].map(|k| (max[k] - by).max(mid[k])),
                }
            }
            ConductorShape::Cylinder {
                center,
                axis,
                radius,
                length,
            } => ConductorShape::Cylinder {
                center,
                axis,
                radius: (radius - by).max(0.0),
                length: (length - 2.0 * by).max(0.0),
            },
        }
    }

    /// Whether this shape and `other` overlap by more than touching
    /// (each is shrunk by [`TOUCH_TOLERANCE`] first).
    pub fn overlaps(&self, other: &ConductorShape) -> bool {
        convex::intersects(
            &self.shrunk(TOUCH_TOLERANCE),
            &other.shrunk(TOUCH_TOLERANCE),
        )
    }

    /// Whether the shape has a point in common with the charged rectangle of
    /// `span` (web width `width` [m]); touching counts.
    pub fn meets_span(&self, span: &Span, width: Meters) -> bool {
        convex::intersects(self, &span_rectangle(span, width))
    }
}

impl Convex for ConductorShape {
    fn support(&self, d: Vec3) -> Vec3 {
        match *self {
            ConductorShape::Plate { origin, e1, e2 } => {
                let mut p = origin;
                if dot(e1, d) > 0.0 {
                    p = add(p, e1);
                }
                if dot(e2, d) > 0.0 {
                    p = add(p, e2);
                }
                p
            }
            ConductorShape::Box { min, max } => {
                [0, 1, 2].map(|k| if d[k] >= 0.0 { max[k] } else { min[k] })
            }
            ConductorShape::Cylinder {
                center,
                axis,
                radius,
                length,
            } => {
                let t = dot(d, axis);
                let end = if t >= 0.0 {
                    0.5 * length
                } else {
                    -0.5 * length
                };
                // The part of d across the axis, projected twice: when d is
                // nearly along the axis one projection leaves a remainder
                // whose own axial part is not negligible.
                let radial = sub(d, scale(axis, t));
                let radial = sub(radial, scale(axis, dot(radial, axis)));
                let rn = norm(radial);
                let rim = if rn > 1e-9 * norm(d) {
                    scale(radial, radius / rn)
                } else {
                    // Along the axis: the centre of the end face will do.
                    [0.0; 3]
                };
                add(add(center, scale(axis, end)), rim)
            }
        }
    }

    fn interior_point(&self) -> Vec3 {
        match *self {
            ConductorShape::Plate { origin, e1, e2 } => add(origin, scale(add(e1, e2), 0.5)),
            ConductorShape::Box { min, max } => [0, 1, 2].map(|k| 0.5 * (min[k] + max[k])),
            ConductorShape::Cylinder { center, .. } => center,
        }
    }
}

/// The charged rectangle of a span as a plate: from its start, along the
/// span in x–z, and across the web over y ∈ [−w/2, w/2] [m].
pub fn span_rectangle(span: &Span, width: Meters) -> ConductorShape {
    let d = span.direction();
    ConductorShape::Plate {
        origin: [span.start[0], -width / 2.0, span.start[1]],
        e1: [d[0] * span.length, 0.0, d[1] * span.length],
        e2: [0.0, width, 0.0],
    }
}

/// How a conductor other than a roller is connected to earth.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum ConductorEarthing {
    /// Bonded to earth: held at 0 V.
    Grounded,
    /// Not bonded: floats at the potential its fixed net charge gives.
    Isolated {
        /// Net charge [C] (default 0 C).
        charge: Coulombs,
        /// Lumped capacitance to ground added to the solved one [F], when
        /// given (or defaulted, for a person).
        capacitance_to_ground: Option<Farads>,
        /// Whether `capacitance_to_ground` is the person default
        /// [`PERSON_FEET_CAPACITANCE`] rather than a given value.
        capacitance_defaulted: bool,
    },
}

impl ConductorEarthing {
    /// The keyword used in the YAML.
    pub fn text(&self) -> &'static str {
        match self {
            ConductorEarthing::Grounded => "grounded",
            ConductorEarthing::Isolated { .. } => "isolated",
        }
    }

    /// Whether the conductor is bonded to earth.
    pub fn is_grounded(&self) -> bool {
        matches!(self, ConductorEarthing::Grounded)
    }
}

/// A checked conductor of the `conductors:` list.
#[derive(Debug, Clone, PartialEq)]
pub struct Conductor {
    /// Identifier, unique among every id of the line.
    pub id: String,
    /// How it was described (a person is a cylinder of kind `Person`).
    pub kind: ConductorKind,
    /// Its geometry.
    pub shape: ConductorShape,
    /// Grounded or isolated.
    pub earthing: ConductorEarthing,
    /// YAML path of the entry (`conductors[2]`), for messages.
    pub yaml_path: String,
}

impl Roller {
    /// The roller as a conductor shape: centre [x, 0, z], axis ŷ, its radius
    /// and length, so that the solver treats rollers and other cylinders
    /// alike.
    pub fn cylinder(&self) -> ConductorShape {
        ConductorShape::Cylinder {
            center: [self.center[0], 0.0, self.center[1]],
            axis: [0.0, 1.0, 0.0],
            radius: self.radius,
            length: self.length,
        }
    }

    /// Whether the roller is a conductor (grounded or isolated; an
    /// insulating roller is not).
    pub fn is_conductor(&self) -> bool {
        self.earthing != Earthing::Insulating
    }
}

/// `e2` made exactly perpendicular to `e1` (Gram–Schmidt) [m].
pub(crate) fn orthogonalised(e1: Vec3, e2: Vec3) -> Vec3 {
    sub(e2, scale(e1, dot(e1, e2) / dot(e1, e1)))
}

/// |cos θ| between two non-zero vectors [1].
pub(crate) fn abs_cos(a: Vec3, b: Vec3) -> f64 {
    (dot(a, b) / (norm(a) * norm(b))).abs()
}

/// |a × b| / (|a|·|b|): zero for parallel vectors [1].
pub(crate) fn abs_sin(a: Vec3, b: Vec3) -> f64 {
    norm(cross(a, b)) / (norm(a) * norm(b))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn cyl(center: Vec3, axis: Vec3, radius: f64, length: f64) -> ConductorShape {
        let n = norm(axis);
        ConductorShape::Cylinder {
            center,
            axis: scale(axis, 1.0 / n),
            radius,
            length,
        }
    }

    #[test]
    fn containment_of_each_shape() {
        let b = ConductorShape::Box {
            min: [0.0, 0.0, 0.0],
            max: [1.0, 2.0, 3.0],
        };
        assert!(b.contains([1.0, 1.0, 1.0]));
        assert!(!b.contains([1.0 + 1e-9, 1.0, 1.0]));
        let c = cyl([0.0, 0.0, 1.0], [0.0, 0.0, 1.0], 0.2, 1.0);
        assert!(c.contains([0.19, 0.0, 1.49]));
        assert!(!c.contains([0.15, 0.15, 1.0])); // radial 0.212 > 0.2
        assert!(!c.contains([0.0, 0.0, 1.51]));
        let p = ConductorShape::Plate {
            origin: [0.0, 0.0, 0.0],
            e1: [1.0, 0.0, 0.0],
            e2: [0.0, 1.0, 0.0],
        };
        assert!(p.contains([0.5, 0.5, 0.0]));
        assert!(!p.contains([0.5, 0.5, 1e-3]));
        assert!(!p.contains([1.1, 0.5, 0.0]));
    }

    #[test]
    fn bounds_of_a_tilted_cylinder() {
        // Axis along x: extends ±ℓ/2 in x and ±r in y and z.
        let c = cyl([1.0, 2.0, 3.0], [1.0, 0.0, 0.0], 0.5, 4.0);
        let (lo, hi) = c.bounds();
        for (k, (l, h)) in [(-1.0, 3.0), (1.5, 2.5), (2.5, 3.5)]
            .into_iter()
            .enumerate()
        {
            assert!(
                (lo[k] - l).abs() < 1e-12 && (hi[k] - h).abs() < 1e-12,
                "{k}"
            );
        }
    }

    /// Two parallel cylinders overlap when their axes are closer than the
    /// sum of the radii (and their lengths overlap); exact either side of
    /// contact, beyond the touching tolerance.
    #[test]
    fn parallel_cylinders() {
        let a = cyl([0.0, 0.0, 1.0], [0.0, 1.0, 0.0], 0.1, 1.0);
        for (dx, expect) in [
            (0.19, true),
            (0.2, false),
            (0.2 - 0.5e-3, false),
            (0.198, true),
        ] {
            let b = cyl([dx, 0.3, 1.0], [0.0, 1.0, 0.0], 0.1, 1.0);
            assert_eq!(a.overlaps(&b), expect, "dx {dx}");
        }
        // Side by side along the axis: end faces 1 mm apart, then 1 mm deep.
        let b = cyl([0.0, 1.001, 1.0], [0.0, 1.0, 0.0], 0.1, 1.0);
        assert!(!a.overlaps(&b));
        let b = cyl([0.0, 0.999 - 1e-3, 1.0], [0.0, 1.0, 0.0], 0.1, 1.0);
        assert!(a.overlaps(&b));
    }

    /// A person (vertical cylinder) standing under a roller (axis ŷ): the
    /// cylinders are crossed; they meet when the head reaches the roller's
    /// underside.
    #[test]
    fn person_under_a_roller() {
        let roller = cyl([0.0, 0.0, 2.0], [0.0, 1.0, 0.0], 0.1, 1.4);
        for (h, expect) in [(1.85, false), (1.95, true)] {
            let person = cyl([0.05, 0.3, h / 2.0], [0.0, 0.0, 1.0], 0.15, h);
            assert_eq!(person.overlaps(&roller), expect, "height {h}");
        }
        // Beside the roller's end: no overlap even though the heights do.
        let person = cyl([0.0, 0.9, 1.0], [0.0, 0.0, 1.0], 0.15, 2.5);
        assert!(!person.overlaps(&roller));
    }

    /// A plate crossing a box, lying on its face, and beside it.
    #[test]
    fn plate_and_box() {
        let b = ConductorShape::Box {
            min: [0.0, 0.0, 0.0],
            max: [1.0, 1.0, 1.0],
        };
        let plate = |z: f64| ConductorShape::Plate {
            origin: [0.5, -1.0, z],
            e1: [2.0, 0.0, 0.0],
            e2: [0.0, 3.0, 0.0],
        };
        assert!(plate(0.5).overlaps(&b));
        assert!(!plate(1.0).overlaps(&b)); // lying on the top face: touching
        assert!(!plate(1.2).overlaps(&b));
        // An inclined plate through the box, and one whose bounding box
        // overlaps the box while the plate passes below its corner.
        let tilted = |x: f64, z: f64| ConductorShape::Plate {
            origin: [x, 0.5, z],
            e1: [1.0, 0.0, 1.0],
            e2: [0.0, 0.2, 0.0],
        };
        assert!(tilted(0.5, -0.2).overlaps(&b));
        assert!(!tilted(0.8, -0.5).overlaps(&b));
        let (lo, hi) = tilted(0.8, -0.5).bounds();
        assert!((0..3).all(|k| lo[k] < 1.0 && hi[k] > 0.0));
    }

    /// Reference for a vertical cylinder A (axis ẑ) and a cylinder B along
    /// ŷ, grown (`g` > 0) or shrunk (`g` < 0) by g: they meet when some x
    /// lies in both discs' x ranges with the y chord of A reaching B's y
    /// range and the z chord of B reaching A's z range (scanned over x).
    fn crossed_reference(a: (Vec3, f64, f64), b: (Vec3, f64, f64), g: f64) -> bool {
        let ((ca, ra, la), (cb, rb, lb)) = (a, b);
        let (ra, rb, la, lb) = (ra + g, rb + g, la + 2.0 * g, lb + 2.0 * g);
        if ra <= 0.0 || rb <= 0.0 || la <= 0.0 || lb <= 0.0 {
            return false;
        }
        let lo = (ca[0] - ra).max(cb[0] - rb);
        let hi = (ca[0] + ra).min(cb[0] + rb);
        let n = 4000;
        (0..=n).any(|i| {
            let x = lo + (hi - lo) * i as f64 / n as f64;
            if hi < lo {
                return false;
            }
            let hy = (ra * ra - (x - ca[0]).powi(2)).max(0.0).sqrt();
            let hz = (rb * rb - (x - cb[0]).powi(2)).max(0.0).sqrt();
            let y_ok = ca[1] - hy <= cb[1] + lb / 2.0 && cb[1] - lb / 2.0 <= ca[1] + hy;
            let z_ok = cb[2] - hz <= ca[2] + la / 2.0 && ca[2] - la / 2.0 <= cb[2] + hz;
            y_ok && z_ok
        })
    }

    proptest::proptest! {
        #![proptest_config(proptest::prelude::ProptestConfig::with_cases(400))]

        /// The convex test on crossed cylinders (a person and a roller)
        /// agrees with the scanned reference wherever the reference is
        /// clear by 1 mm either way.
        #[test]
        fn crossed_cylinders_agree_with_the_reference(
            xa in -0.5f64..0.5, ya in -0.5f64..0.5, za in 0.5f64..1.5,
            ra in 0.05f64..0.4, la in 0.2f64..2.0,
            rb in 0.05f64..0.4, lb in 0.2f64..2.0,
        ) {
            let a = ([xa, ya, za], ra, la);
            let b = ([0.0, 0.0, 1.0], rb, lb);
            let grown = crossed_reference(a, b, 1e-3);
            let shrunk = crossed_reference(a, b, -1e-3);
            proptest::prop_assume!(grown == shrunk);
            let ca = cyl(a.0, [0.0, 0.0, 1.0], ra, la);
            let cb = cyl(b.0, [0.0, 1.0, 0.0], rb, lb);
            proptest::prop_assert_eq!(convex::intersects(&ca, &cb), grown);
        }

        /// A point is inside a tilted cylinder or box exactly when the
        /// convex test says the point and the solid meet.
        #[test]
        fn containment_agrees_with_the_convex_test(
            p in proptest::array::uniform3(-1.5f64..1.5),
            axis in proptest::array::uniform3(-1.0f64..1.0),
            r in 0.1f64..0.8, l in 0.1f64..2.0,
        ) {
            proptest::prop_assume!(norm(axis) > 0.1);
            let c = cyl([0.1, -0.2, 0.3], axis, r, l);
            let b = ConductorShape::Box { min: [-0.5, -0.2, 0.0], max: [0.7, 0.4, 0.9] };
            for s in [c, b] {
                // Skip points within 1e-9 m of the surface.
                let near = s.shrunk(1e-9).contains(p) != s.contains(p)
                    || ConductorShape::contains(&grow(s, 1e-9), p) != s.contains(p);
                if !near {
                    proptest::prop_assert_eq!(convex::intersects(&s, &p), s.contains(p));
                }
            }
        }
    }

    fn grow(s: ConductorShape, by: f64) -> ConductorShape {
        match s {
            ConductorShape::Box { min, max } => ConductorShape::Box {
                min: min.map(|v| v - by),
                max: max.map(|v| v + by),
            },
            ConductorShape::Cylinder {
                center,
                axis,
                radius,
                length,
            } => ConductorShape::Cylinder {
                center,
                axis,
                radius: radius + by,
                length: length + 2.0 * by,
            },
            plate => plate,
        }
    }

    #[test]
    fn coplanar_plates() {
        let a = ConductorShape::Plate {
            origin: [0.0, 0.0, 1.0],
            e1: [1.0, 0.0, 0.0],
            e2: [0.0, 1.0, 0.0],
        };
        let b = |x: f64| ConductorShape::Plate {
            origin: [x, 0.2, 1.0],
            e1: [1.0, 0.0, 0.0],
            e2: [0.0, 0.5, 0.0],
        };
        assert!(a.overlaps(&b(0.5)));
        assert!(!a.overlaps(&b(1.5)));
        assert!(!a.overlaps(&b(-1.2)));
    }
}
