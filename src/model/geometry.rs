//! # Where things are relative to the web
//!
//! Geometry shared by the validator, the solver, the readings stage, the
//! assessment and the planner: the distance from a point to a span's charged
//! rectangle, the position and normal of a meter (or an eliminator's tips)
//! held at a distance from a span, and why a point cannot be evaluated (on
//! the web, inside a roller or another conductor, below the ground plane).
//!
//! A span runs from `start` [m] (side view, x–z) along the unit direction
//! **d** for its length L [m]; the charged rectangle is 0 ≤ u ≤ L,
//! |y| ≤ w/2 (w the web width [m]). For a point **p**, u = (**p** −
//! start)·**d**, h its offset along the span's normal, and the distance is
//! √(Δu² + Δy² + h²) with Δu, Δy the overshoots beyond the rectangle's edges.

use super::Side;
use super::conductor::{Conductor, ConductorKind};
use super::path::{Roller, Span, WebPath};
use crate::units::Meters;
use std::fmt;

/// Closest a place of interest may be to the web [m] (the solver's limit:
/// the field is discontinuous at a charged sheet).
pub const MIN_POINT_DISTANCE: Meters = 1e-6;

/// Points closer to a span than this are on the web [m]: [`MIN_POINT_DISTANCE`]
/// less 5·10⁻⁵ of it, so that a distance refused is below 1 µm also as
/// messages show it (4 significant digits: at most 0.9999 µm), and a point
/// typed at 1 µm is accepted whatever the rounding of its coordinates (a
/// point typed 1 µm above a span at z = 1.2 m computes at 0.99999999992 µm
/// in binary floating point; at coordinates within 10 km the rounding stays
/// below 10⁻¹¹ m, far inside the 50 pm margin).
const ON_WEB_BELOW: Meters = MIN_POINT_DISTANCE * (1.0 - 5e-5);

/// Whether a point `distance` [m] from a span's charged rectangle is on the
/// web: closer than [`MIN_POINT_DISTANCE`], less a margin of 50 pm for the
/// rounding of typed coordinates, so that a distance refused shows below
/// 1 µm to 4 significant digits. The one closeness rule of the validator,
/// the solver and the planner.
pub fn on_web(distance: Meters) -> bool {
    distance < ON_WEB_BELOW
}

/// A point's coordinates in a span's frame: along the span `u` [m], across
/// the web `y` [m] and along the span's normal `h` [m], with the distance to
/// the charged rectangle [m].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SpanFrame {
    /// Along the span from its start [m].
    pub u: Meters,
    /// Across the web [m].
    pub y: Meters,
    /// Along the normal (left of travel in the x–z plane) [m].
    pub h: Meters,
    /// Distance to the charged rectangle [m].
    pub distance: Meters,
}

/// The point `p` = [x, y, z] [m] in the frame of `span` of width `width` [m].
pub fn span_frame(span: &Span, width: Meters, p: [Meters; 3]) -> SpanFrame {
    let d = span.direction();
    let rel = [p[0] - span.start[0], p[2] - span.start[1]];
    let u = rel[0] * d[0] + rel[1] * d[1];
    let h = -rel[0] * d[1] + rel[1] * d[0];
    let du = if u < 0.0 {
        -u
    } else if u > span.length {
        u - span.length
    } else {
        0.0
    };
    let dy = (p[1].abs() - width / 2.0).max(0.0);
    SpanFrame {
        u,
        y: p[1],
        h,
        distance: (du * du + dy * dy + h * h).sqrt(),
    }
}

/// Distance from a 3-D point to the charged rectangle of a span [m].
pub fn distance_to_span(span: &Span, width: Meters, p: [Meters; 3]) -> Meters {
    span_frame(span, width, p).distance
}

/// Why a point cannot be evaluated.
#[derive(Debug, Clone, PartialEq)]
pub enum PointProblem {
    /// Below the ground plane.
    BelowGround {
        /// The point's height [m].
        z: Meters,
        /// The plane's height [m].
        ground: Meters,
    },
    /// Inside a roller.
    InsideRoller {
        /// The roller's id.
        roller: String,
    },
    /// Inside (for a plate: on) a conductor of the `conductors:` list.
    InsideConductor {
        /// The conductor's id.
        conductor: String,
        /// Its shape as described.
        kind: ConductorKind,
    },
    /// On (closer than [`MIN_POINT_DISTANCE`] to) a span, see [`on_web`].
    OnWeb {
        /// Distance to the span [m].
        distance: Meters,
        /// The span's label.
        span: String,
    },
}

impl fmt::Display for PointProblem {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            PointProblem::BelowGround { z, ground } => write!(
                f,
                "z = {} is below the ground plane at z = {}: the model has no field there",
                crate::units::format_quantity(*z, crate::units::Dim::Length),
                crate::units::format_quantity(*ground, crate::units::Dim::Length)
            ),
            PointProblem::InsideRoller { roller } => write!(
                f,
                "the point lies inside roller {roller} (a roller is as long as its `length:`, by default the web width + 0.2 m, centred on the web): move it outside"
            ),
            PointProblem::InsideConductor { conductor, kind } => match kind {
                ConductorKind::Plate => write!(
                    f,
                    "the point lies on plate {conductor} (closer than 1 µm): move it off the plate"
                ),
                ConductorKind::Person => write!(
                    f,
                    "the point lies inside person {conductor} (a vertical cylinder of the person's width and height): move it outside, or drop the point and let the person stand for it"
                ),
                _ => write!(
                    f,
                    "the point lies inside conductor {conductor} (a {}): move it outside",
                    kind.text()
                ),
            },
            PointProblem::OnWeb { distance, span } => write!(
                f,
                "the point is {} from span {span}, closer than 1 µm: it is on the web (the field is discontinuous at a charged sheet); move it at least 1 µm away",
                crate::units::format_quantity(*distance, crate::units::Dim::Length)
            ),
        }
    }
}

/// Why a point cannot be evaluated (on the web, inside a roller, below the
/// ground plane), or `None` when it can. Conductors of the `conductors:`
/// list are not looked at: use [`point_problem_in`] or
/// [`Line::point_problem`](super::Line::point_problem) for the whole line.
pub fn point_problem(
    path: &WebPath,
    rollers: &[Roller],
    width: Meters,
    ground: Option<Meters>,
    at: [Meters; 3],
) -> Option<PointProblem> {
    point_problem_in(path, rollers, &[], width, ground, at)
}

/// Why a point cannot be evaluated (below the ground plane, inside a roller,
/// inside a conductor, on the web: the first that applies), or `None` when
/// it can.
pub fn point_problem_in(
    path: &WebPath,
    rollers: &[Roller],
    conductors: &[Conductor],
    width: Meters,
    ground: Option<Meters>,
    at: [Meters; 3],
) -> Option<PointProblem> {
    if let Some(g) = ground
        && at[2] < g
    {
        return Some(PointProblem::BelowGround {
            z: at[2],
            ground: g,
        });
    }
    for r in rollers {
        let d = (at[0] - r.center[0]).hypot(at[2] - r.center[1]);
        if d < r.radius && at[1].abs() <= r.length / 2.0 {
            return Some(PointProblem::InsideRoller {
                roller: r.id.clone(),
            });
        }
    }
    for c in conductors {
        if c.shape.contains(at) {
            return Some(PointProblem::InsideConductor {
                conductor: c.id.clone(),
                kind: c.kind,
            });
        }
    }
    for s in &path.spans {
        let d = distance_to_span(s, width, at);
        if on_web(d) {
            return Some(PointProblem::OnWeb {
                distance: d,
                span: s.label(),
            });
        }
    }
    None
}

/// The position [m] of a meter held `distance` [m] from `span`, `along` [m]
/// from its start and `across` [m] from the centreline, on `side`, and the
/// unit normal from the web towards it.
pub fn meter_geometry(
    span: &Span,
    along: Meters,
    across: Meters,
    distance: Meters,
    side: Side,
) -> ([Meters; 3], [f64; 3]) {
    let d = span.direction();
    // Left normal of the travel direction in the x-z plane.
    let mut n = [-d[1], d[0]];
    let up = if n[1].abs() > 1e-12 {
        n[1] > 0.0
    } else {
        n[0] > 0.0
    };
    if !up {
        n = [-n[0], -n[1]];
    }
    if side == Side::Below {
        n = [-n[0], -n[1]];
    }
    let foot = [span.start[0] + along * d[0], span.start[1] + along * d[1]];
    (
        [foot[0] + distance * n[0], across, foot[1] + distance * n[1]],
        [n[0], 0.0, n[1]],
    )
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::units::{Dim, format_quantity};

    /// The rule and the message agree: a distance refused is shown below
    /// 1 µm, and a point typed at 1 µm is accepted whatever its rounding.
    #[test]
    fn on_web_agrees_with_the_distance_shown() {
        assert!(!on_web(MIN_POINT_DISTANCE));
        // 1.050001 − 1.05 in binary floating point.
        let typed = 1.050001_f64 - 1.05;
        assert!(typed < MIN_POINT_DISTANCE);
        assert!(!on_web(typed));
        let largest_refused = ON_WEB_BELOW * (1.0 - 1e-12);
        assert!(on_web(largest_refused));
        assert_eq!(format_quantity(largest_refused, Dim::Length), "0.9999 µm");
        assert!(on_web(0.0));
    }
}
