//! Second reading stage, the `conductors:` list: `RawConductor → Conductor`.
//!
//! Checks each entry's keys against its shape, resolves the shape to plain
//! 3-D geometry (a person becomes a vertical cylinder on the floor), and
//! refuses, with the entry's YAML path, a conductor below the ground plane,
//! one that meets the web, and one that overlaps a roller or another
//! conductor (the tests are described in `model/conductor.rs`). Ids are
//! checked against every other id of the line once those are known
//! ([`check_ids`]).

use super::{Ctx, keyword};
use crate::model::Web;
use crate::model::conductor::{
    Conductor, ConductorEarthing, ConductorKind, ConductorShape, PERPENDICULAR_TOLERANCE,
    PERSON_FEET_CAPACITANCE, PERSON_HEIGHT, PERSON_WIDTH, abs_cos, abs_sin, orthogonalised,
};
use crate::model::convex::{Vec3, norm, scale};
use crate::model::path::{Roller, WebPath};
use crate::model::raw::{RawAxis, RawConductor, RawLine, Scalar};
use crate::units::{Dim, format_quantity};

/// Why a conductor's earthing has no default, for the message when it is
/// missing.
const EARTHING_MISSING: &str = "missing: expected grounded | isolated (there is no safe default: taking it as grounded would hide the spark hazard of an isolated conductor, taking it as isolated would give a grounded one a floating potential)";

/// A person given `at: [x, y, z]` must have z on the floor to within this [m].
const FLOOR_TOLERANCE: f64 = 1e-3;

/// Validates every entry of `conductors:`; entries with a problem are left
/// out (the problem is in `ctx`).
pub(super) fn validate_conductors(
    ctx: &mut Ctx,
    raw: &RawLine,
    path: &WebPath,
    rollers: &[Roller],
    web: &Web,
    ground: Option<f64>,
) -> Vec<Conductor> {
    let mut out: Vec<Conductor> = Vec::new();
    for (i, c) in raw.conductors.iter().enumerate() {
        let p = format!("conductors[{i}]");
        let id = ctx.id(&c.id, &format!("{p}.id"));
        if let Some(id) = &id
            && out.iter().any(|o| &o.id == id)
        {
            ctx.err(
                format!("{p}.id"),
                format!("duplicate conductor id \"{id}\": every conductor needs its own id"),
            );
        }
        let kind = keyword(
            ctx,
            &c.shape,
            &format!("{p}.shape"),
            &["plate", "box", "cylinder", "person"],
        )
        .map(|k| match k {
            "plate" => ConductorKind::Plate,
            "box" => ConductorKind::Box,
            "cylinder" => ConductorKind::Cylinder,
            _ => ConductorKind::Person,
        });
        let earthing = earthing(ctx, c, &p, kind);
        let (Some(kind), Some(earthing)) = (kind, earthing) else {
            continue;
        };
        if !keys_fit(ctx, c, &p, kind) {
            continue;
        }
        let floor = ground.unwrap_or(0.0);
        let Some((shape, place)) = (match kind {
            ConductorKind::Plate => plate(ctx, c, &p),
            ConductorKind::Box => boxed(ctx, c, &p),
            ConductorKind::Cylinder => cylinder(ctx, c, &p),
            ConductorKind::Person => person(ctx, c, &p, floor),
        }) else {
            continue;
        };
        let Some(id) = id else { continue };
        let at = format!("{p}.{place}");
        if let Some((what, v)) = shape.size_out_of_range() {
            ctx.err(&at, size_message(what, v));
            continue;
        }
        if !clear_of_everything(ctx, &at, &id, &shape, path, rollers, &out, web, ground) {
            continue;
        }
        out.push(Conductor {
            id,
            kind,
            shape,
            earthing,
            yaml_path: p,
        });
    }
    out
}

/// The earthing with the isolated-only keys; `None` after a problem.
fn earthing(
    ctx: &mut Ctx,
    c: &RawConductor,
    p: &str,
    kind: Option<ConductorKind>,
) -> Option<ConductorEarthing> {
    let path = format!("{p}.earthing");
    let e = match &c.earthing {
        None => {
            ctx.err(&path, EARTHING_MISSING);
            None
        }
        Some(s) if s.as_str().trim().eq_ignore_ascii_case("insulating") => {
            ctx.err(
                &path,
                "expected grounded | isolated, got \"insulating\": an insulating part is not a conductor (leave it out; insulating rollers are listed under `rollers:`)",
            );
            None
        }
        Some(_) => keyword(ctx, &c.earthing, &path, &["grounded", "isolated"]),
    };
    let charge = c
        .charge
        .as_ref()
        .and_then(|v| ctx.qty(v, Dim::Charge, &format!("{p}.charge")));
    let cap = c.capacitance_to_ground.as_ref().and_then(|v| {
        let path = format!("{p}.capacitance_to_ground");
        let x = ctx.qty(v, Dim::Capacitance, &path)?;
        if x < 0.0 {
            ctx.err(
                path,
                format!(
                    "expected a capacitance of zero or more such as \"100 pF\", got {}",
                    format_quantity(x, Dim::Capacitance)
                ),
            );
            return None;
        }
        Some(x)
    });
    match e? {
        "grounded" => {
            let mut ok = true;
            for (given, key) in [
                (c.charge.is_some(), "charge"),
                (c.capacitance_to_ground.is_some(), "capacitance_to_ground"),
            ] {
                if given {
                    ctx.err(
                        format!("{p}.{key}"),
                        format!("`{key}:` belongs to isolated conductors (earthing: isolated): a grounded conductor is held at 0 V and its charge is what the solve gives; remove `{key}:` or make it isolated"),
                    );
                    ok = false;
                }
            }
            ok.then_some(ConductorEarthing::Grounded)
        }
        _ => {
            if (c.charge.is_some() && charge.is_none())
                || (c.capacitance_to_ground.is_some() && cap.is_none())
            {
                return None;
            }
            let defaulted = cap.is_none() && kind == Some(ConductorKind::Person);
            Some(ConductorEarthing::Isolated {
                charge: charge.unwrap_or(0.0),
                capacitance_to_ground: if defaulted {
                    Some(PERSON_FEET_CAPACITANCE)
                } else {
                    cap
                },
                capacitance_defaulted: defaulted,
            })
        }
    }
}

/// Refuses keys that belong to another shape; `true` when all fit.
fn keys_fit(ctx: &mut Ctx, c: &RawConductor, p: &str, kind: ConductorKind) -> bool {
    let given = [
        ("from", c.from.is_some()),
        ("to", c.to.is_some()),
        ("corner", c.corner.is_some()),
        ("edge1", c.edge1.is_some()),
        ("edge2", c.edge2.is_some()),
        ("center", c.center.is_some()),
        ("axis", c.axis.is_some()),
        ("radius", c.radius.is_some()),
        ("length", c.length.is_some()),
        ("at", c.at.is_some()),
        ("height", c.height.is_some()),
        ("width", c.width.is_some()),
    ];
    let own: &[&str] = match kind {
        ConductorKind::Plate => &["from", "to", "corner", "edge1", "edge2"],
        ConductorKind::Box => &["from", "to"],
        ConductorKind::Cylinder => &["center", "axis", "radius", "length"],
        ConductorKind::Person => &["at", "height", "width"],
    };
    let mut ok = true;
    for (key, present) in given {
        if present && !own.contains(&key) {
            ctx.err(
                format!("{p}.{key}"),
                format!(
                    "`{key}:` does not belong to shape {}: its keys are {}",
                    kind.text(),
                    own.join(", ")
                ),
            );
            ok = false;
        }
    }
    ok
}

/// `from`/`to` as [x, y, z] lengths.
fn corners(ctx: &mut Ctx, c: &RawConductor, p: &str) -> Option<(Vec3, Vec3)> {
    let from = ctx.lengths::<3>(
        &c.from,
        &format!("{p}.from"),
        "[x, y, z] such as [1.6 m, -0.8 m, 0.3 m]",
    );
    let to = ctx.lengths::<3>(
        &c.to,
        &format!("{p}.to"),
        "[x, y, z] such as [2.4 m, -0.8 m, 1.4 m]",
    );
    Some((from?, to?))
}

/// A plate from `from`/`to` (axis-aligned) or `corner`/`edge1`/`edge2`.
fn plate(ctx: &mut Ctx, c: &RawConductor, p: &str) -> Option<(ConductorShape, &'static str)> {
    let by_corners = c.from.is_some() || c.to.is_some();
    let by_edges = c.corner.is_some() || c.edge1.is_some() || c.edge2.is_some();
    match (by_corners, by_edges) {
        (true, true) => {
            ctx.err(
                p,
                "give either `from:`/`to:` (an axis-aligned plate) or `corner:`, `edge1:`, `edge2:`, not both",
            );
            None
        }
        (false, false) => {
            ctx.err(
                p,
                "missing: expected `from: [x, y, z]` and `to: [x, y, z]` for an axis-aligned plate, or `corner:`, `edge1:` and `edge2:`",
            );
            None
        }
        (true, false) => {
            let (from, to) = corners(ctx, c, p)?;
            let equal: Vec<usize> = (0..3)
                .filter(|&k| (from[k] - to[k]).abs() <= 1e-9)
                .collect();
            if equal.len() != 1 {
                ctx.err(
                    format!("{p}.to"),
                    if equal.is_empty() {
                        "an axis-aligned plate lies in a plane x, y or z = constant, so `from` and `to` must have exactly one coordinate equal; they differ in all three (for a solid give shape: box, for an inclined plate corner/edge1/edge2)".to_string()
                    } else {
                        format!(
                            "the plate has no area: `from` and `to` are equal in {} coordinates; exactly one may be equal (the plate's plane)",
                            equal.len()
                        )
                    },
                );
                return None;
            }
            let min = [0, 1, 2].map(|k| from[k].min(to[k]));
            let free: Vec<usize> = (0..3).filter(|k| *k != equal[0]).collect();
            let edge = |k: usize| {
                let mut e = [0.0; 3];
                e[k] = (to[k] - from[k]).abs();
                e
            };
            Some((
                ConductorShape::Plate {
                    origin: min,
                    e1: edge(free[0]),
                    e2: edge(free[1]),
                },
                "from",
            ))
        }
        (false, true) => {
            let corner = ctx.lengths::<3>(
                &c.corner,
                &format!("{p}.corner"),
                "[x, y, z] such as [1.6 m, -0.8 m, 0.3 m]",
            );
            let e1 = ctx.lengths::<3>(
                &c.edge1,
                &format!("{p}.edge1"),
                "an edge vector [x, y, z] such as [0.8 m, 0 m, 0 m]",
            );
            let e2 = ctx.lengths::<3>(
                &c.edge2,
                &format!("{p}.edge2"),
                "an edge vector [x, y, z] such as [0 m, 0 m, 1.1 m]",
            );
            let (corner, e1, e2) = (corner?, e1?, e2?);
            let mut ok = true;
            for (e, key) in [(e1, "edge1"), (e2, "edge2")] {
                if norm(e) < 1e-6 {
                    ctx.err(
                        format!("{p}.{key}"),
                        "the edge has zero length: expected a vector of at least 1 µm such as [0.8 m, 0 m, 0 m]",
                    );
                    ok = false;
                }
            }
            if !ok {
                return None;
            }
            if abs_sin(e1, e2) < 1e-9 {
                ctx.err(
                    format!("{p}.edge2"),
                    "edge1 and edge2 are parallel, so the plate has no area: expected two perpendicular edges",
                );
                return None;
            }
            let cos = abs_cos(e1, e2);
            if cos > PERPENDICULAR_TOLERANCE {
                ctx.err(
                    format!("{p}.edge2"),
                    format!(
                        "edge1 and edge2 are {:.2}° apart: a plate is a rectangle, so they must be perpendicular (within 0.06°)",
                        cos.clamp(-1.0, 1.0).acos().to_degrees()
                    ),
                );
                return None;
            }
            Some((
                ConductorShape::Plate {
                    origin: corner,
                    e1,
                    e2: orthogonalised(e1, e2),
                },
                "corner",
            ))
        }
    }
}

/// An axis-aligned box from `from`/`to`.
fn boxed(ctx: &mut Ctx, c: &RawConductor, p: &str) -> Option<(ConductorShape, &'static str)> {
    let (from, to) = corners(ctx, c, p)?;
    let min = [0, 1, 2].map(|k| from[k].min(to[k]));
    let max = [0, 1, 2].map(|k| from[k].max(to[k]));
    if (0..3).any(|k| max[k] - min[k] <= 1e-9) {
        ctx.err(
            format!("{p}.to"),
            "the box has no volume: `from` and `to` must differ in x, y and z (for a flat conductor give shape: plate)",
        );
        return None;
    }
    Some((ConductorShape::Box { min, max }, "from"))
}

/// A positive length, required or defaulted.
fn length(ctx: &mut Ctx, v: &Option<Scalar>, path: &str, default: Option<f64>) -> Option<f64> {
    let x = match (v, default) {
        (None, Some(d)) => return Some(d),
        (None, None) => ctx.req_qty(v, Dim::Length, path),
        (Some(s), _) => ctx.qty(s, Dim::Length, path),
    };
    ctx.positive(x, Dim::Length, path)
}

/// A cylinder from `center`, `axis`, `radius`, `length`.
fn cylinder(ctx: &mut Ctx, c: &RawConductor, p: &str) -> Option<(ConductorShape, &'static str)> {
    let center = ctx.lengths::<3>(
        &c.center,
        &format!("{p}.center"),
        "[x, y, z] such as [3.0 m, 0 m, 0.4 m]",
    );
    let axis = axis(ctx, &c.axis, &format!("{p}.axis"));
    let radius = length(ctx, &c.radius, &format!("{p}.radius"), None);
    let len = length(ctx, &c.length, &format!("{p}.length"), None);
    Some((
        ConductorShape::Cylinder {
            center: center?,
            axis: axis?,
            radius: radius?,
            length: len?,
        },
        "center",
    ))
}

/// `x`, `y`, `z` or a direction of three numbers (or lengths), as a unit
/// vector.
fn axis(ctx: &mut Ctx, v: &Option<RawAxis>, path: &str) -> Option<Vec3> {
    const FORM: &str = "x, y, z or a direction such as [0, 0, 1]";
    let Some(v) = v else {
        ctx.err(path, format!("missing: expected {FORM}"));
        return None;
    };
    let dir = match v {
        RawAxis::Name(s) => match s.as_str().trim().to_ascii_lowercase().as_str() {
            "x" => [1.0, 0.0, 0.0],
            "y" => [0.0, 1.0, 0.0],
            "z" => [0.0, 0.0, 1.0],
            other => {
                ctx.err(path, format!("expected {FORM}, got \"{other}\""));
                return None;
            }
        },
        RawAxis::Vector(list) => {
            if list.len() != 3 {
                ctx.err(
                    path,
                    format!("expected {FORM} (3 values), got {} value(s)", list.len()),
                );
                return None;
            }
            let mut d = [0.0; 3];
            for (k, s) in list.iter().enumerate() {
                let t = s.as_str();
                let x = crate::units::parse_quantity(t, Dim::Number)
                    .or_else(|_| crate::units::parse_quantity(t, Dim::Length));
                match x {
                    Ok(x) => d[k] = x,
                    Err(_) => {
                        ctx.err(
                            format!("{path}[{k}]"),
                            format!(
                                "expected a number (or a length) such as 1, got \"{}\"",
                                t.trim()
                            ),
                        );
                        return None;
                    }
                }
            }
            d
        }
    };
    let n = norm(dir);
    if n == 0.0 || !n.is_finite() {
        ctx.err(path, format!("the direction is zero: expected {FORM}"));
        return None;
    }
    Some(scale(dir, 1.0 / n))
}

/// A person standing at `at` = [x, y] on the floor at z = `floor` [m].
fn person(
    ctx: &mut Ctx,
    c: &RawConductor,
    p: &str,
    floor: f64,
) -> Option<(ConductorShape, &'static str)> {
    let path = format!("{p}.at");
    let xy = match &c.at {
        Some(list) if list.len() == 3 => {
            let xyz = ctx.lengths::<3>(&c.at, &path, "[x, y] on the floor")?;
            if (xyz[2] - floor).abs() > FLOOR_TOLERANCE {
                ctx.err(
                    &path,
                    format!(
                        "a person stands on the floor at z = {}, but z = {} was given: give `at: [x, y]` (the person's feet are on the floor: the ground plane, or z = 0 without one)",
                        format_quantity(floor, Dim::Length),
                        format_quantity(xyz[2], Dim::Length)
                    ),
                );
                return None;
            }
            [xyz[0], xyz[1]]
        }
        _ => ctx.lengths::<2>(&c.at, &path, "[x, y] on the floor such as [1.05 m, 1.35 m]")?,
    };
    let height = length(ctx, &c.height, &format!("{p}.height"), Some(PERSON_HEIGHT));
    let width = length(ctx, &c.width, &format!("{p}.width"), Some(PERSON_WIDTH));
    let (height, width) = (height?, width?);
    Some((
        ConductorShape::Cylinder {
            center: [xy[0], xy[1], floor + height / 2.0],
            axis: [0.0, 0.0, 1.0],
            radius: width / 2.0,
            length: height,
        },
        "at",
    ))
}

/// Refuses a conductor below the ground plane, meeting the web, or
/// overlapping a roller or an earlier conductor; `true` when clear.
#[allow(clippy::too_many_arguments)]
fn clear_of_everything(
    ctx: &mut Ctx,
    at: &str,
    id: &str,
    shape: &ConductorShape,
    path: &WebPath,
    rollers: &[Roller],
    earlier: &[Conductor],
    web: &Web,
    ground: Option<f64>,
) -> bool {
    let before = ctx.issues.len();
    if let Some(g) = ground {
        let low = shape.bounds().0[2];
        if low < g - 1e-9 {
            ctx.err(
                at,
                format!(
                    "conductor {id} reaches down to z = {}, below the ground plane at z = {}: raise it or lower ground_plane",
                    format_quantity(low, Dim::Length),
                    format_quantity(g, Dim::Length)
                ),
            );
        }
    }
    for span in &path.spans {
        if shape.meets_span(span, web.width) {
            ctx.err(
                at,
                format!(
                    "conductor {id} meets the web on span {}: a conductor must stand clear of the web; move it or check its size",
                    span.label()
                ),
            );
        }
    }
    for r in rollers {
        if shape.overlaps(&r.cylinder()) {
            ctx.err(
                at,
                format!(
                    "conductor {id} overlaps roller {} (radius {}, length {} centred on the web): move it or check its size",
                    r.id,
                    format_quantity(r.radius, Dim::Length),
                    format_quantity(r.length, Dim::Length)
                ),
            );
        }
    }
    for o in earlier {
        if shape.overlaps(&o.shape) {
            ctx.err(
                at,
                format!(
                    "conductor {id} overlaps conductor {} ({}): conductors may touch but not overlap; move one of them",
                    o.id, o.yaml_path
                ),
            );
        }
    }
    ctx.issues.len() == before
}

/// Refuses a conductor id that another part of the line already uses.
/// `others` holds each kind of id with its name (`"roller"`, `"point"`, …).
pub(super) fn check_ids(ctx: &mut Ctx, conductors: &[Conductor], others: &[(&str, Vec<&str>)]) {
    for c in conductors {
        for (what, ids) in others {
            if ids.contains(&c.id.as_str()) {
                ctx.err(
                    format!("{}.id", c.yaml_path),
                    format!(
                        "duplicate id \"{}\": a {what} has it too; conductors need ids distinct from rollers, path nodes, points, zones, readings and eliminators",
                        c.id
                    ),
                );
                break;
            }
        }
    }
}

/// Why a conductor's size is refused.
pub(super) fn size_message(what: &str, v: f64) -> String {
    format!(
        "its {what} is {}: a conductor's sizes lie between 10 µm and 1 km (the conductors' solve meshes every face)",
        crate::units::format_quantity(v, crate::units::Dim::Length)
    )
}
