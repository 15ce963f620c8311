//! The report's pictures: side view, field map at y = 0 and charge along
//! the path, and the side view and charge of a planned line.
//!
//! Writer stage: assembles the plot inputs of [`figures`] (the field map's
//! grid is asked of the field stage) and has [`plot`] draw them as PNG.
//!
//! The `conductors:` entries are drawn too, seen from the side: each solid is
//! projected orthographically along y onto the x–z plane and drawn as the
//! convex hull of the projection (a plate edge-on is a line, a box a
//! rectangle, a cylinder across the web a circle, a vertical cylinder or a
//! person a rectangle; the hull is exact for plates and boxes, and exact to
//! the 1 − cos(π/72) ≈ 0.1 % of the radius that sampling each rim at 144
//! points leaves for cylinders). When the scene solved the conductors, the
//! field map's nodes inside one (at y = 0) are drawn as conductor: the field
//! there is zero.

use crate::assess::{Assessment, Subject, ThresholdProfile};
use crate::charge::ChargeProfile;
use crate::field::WebField;
use crate::model::convex::{Vec3, add, cross, norm, scale};
use crate::model::{ConductorShape, Line};
use crate::readings::ReadingsResult;
use crate::report::build::Plot;
use crate::report::{figures, plot};
use crate::units::Dim;
use anyhow::Result;

/// Width of every picture [px].
const WIDTH: u32 = 1400;
/// Height of the charge-along-path pictures [px].
const CURVE_HEIGHT: u32 = 700;

/// Points sampled on each rim of a cylinder for its outline.
const RIM_POINTS: usize = 144;

/// The side-view outline of a conductor: its solid projected on the x–z
/// plane (along y), as the convex hull in counter-clockwise order [m]; two
/// points when it is seen edge-on.
pub fn side_outline(shape: &ConductorShape) -> Vec<[f64; 2]> {
    let pts: Vec<Vec3> = match *shape {
        ConductorShape::Plate { origin, e1, e2 } => vec![
            origin,
            add(origin, e1),
            add(origin, e2),
            add(add(origin, e1), e2),
        ],
        ConductorShape::Box { min, max } => vec![
            [min[0], 0.0, min[2]],
            [max[0], 0.0, min[2]],
            [max[0], 0.0, max[2]],
            [min[0], 0.0, max[2]],
        ],
        ConductorShape::Cylinder {
            center,
            axis,
            radius,
            length,
        } => {
            let helper = if axis[0].abs() < 0.9 {
                [1.0, 0.0, 0.0]
            } else {
                [0.0, 0.0, 1.0]
            };
            let u = cross(axis, helper);
            let u = scale(u, 1.0 / norm(u));
            let v = cross(axis, u);
            let mut out = Vec::with_capacity(2 * RIM_POINTS);
            for end in [-0.5 * length, 0.5 * length] {
                let c = add(center, scale(axis, end));
                for k in 0..RIM_POINTS {
                    let t = std::f64::consts::TAU * k as f64 / RIM_POINTS as f64;
                    let r = add(scale(u, radius * t.cos()), scale(v, radius * t.sin()));
                    out.push(add(c, r));
                }
            }
            out
        }
    };
    hull(pts.iter().map(|p| [p[0], p[2]]).collect())
}

/// Convex hull of points in the plane (Andrew's monotone chain), counter-
/// clockwise, collinear points dropped; one or two points when degenerate.
fn hull(mut p: Vec<[f64; 2]>) -> Vec<[f64; 2]> {
    p.retain(|q| q[0].is_finite() && q[1].is_finite());
    p.sort_by(|a, b| a[0].total_cmp(&b[0]).then(a[1].total_cmp(&b[1])));
    p.dedup();
    if p.len() < 3 {
        return p;
    }
    let size = p
        .iter()
        .flat_map(|q| q.iter())
        .fold(0.0f64, |m, v| m.max(v.abs()));
    let eps = 1e-12 * size.max(1e-9) * size.max(1e-9);
    let turn = |o: [f64; 2], a: [f64; 2], b: [f64; 2]| {
        (a[0] - o[0]) * (b[1] - o[1]) - (a[1] - o[1]) * (b[0] - o[0])
    };
    let mut h: Vec<[f64; 2]> = Vec::with_capacity(2 * p.len());
    for pass in 0..2 {
        let start = h.len();
        let iter: Box<dyn Iterator<Item = &[f64; 2]>> = if pass == 0 {
            Box::new(p.iter())
        } else {
            Box::new(p.iter().rev())
        };
        for &q in iter {
            while h.len() >= start + 2 && turn(h[h.len() - 2], h[h.len() - 1], q) <= eps {
                h.pop();
            }
            h.push(q);
        }
        h.pop();
    }
    if h.len() < 2 {
        // Every point on one line: its two ends.
        return vec![p[0], p[p.len() - 1]];
    }
    h
}

/// The x and z ranges [m] widened to hold every conductor's outline with a
/// margin of 2 % of the larger range (the bottom stays on the ground plane
/// when there is one: nothing stands below the floor).
fn with_conductors(line: &Line, (mut x, mut z): ([f64; 2], [f64; 2])) -> ([f64; 2], [f64; 2]) {
    let pts: Vec<[f64; 2]> = line
        .conductors
        .iter()
        .flat_map(|c| side_outline(&c.shape))
        .collect();
    if pts.is_empty() {
        return (x, z);
    }
    let m = 0.02 * (x[1] - x[0]).max(z[1] - z[0]);
    for p in pts {
        x = [x[0].min(p[0] - m), x[1].max(p[0] + m)];
        let low = if line.ground_plane.is_some() {
            z[0]
        } else {
            z[0].min(p[1] - m)
        };
        z = [low, z[1].max(p[1] + m)];
    }
    (x, z)
}

/// The conductors of `line` as the pictures draw them; with `grid` (the
/// field map's node positions) and `in_field`, the nodes at y = 0 inside a
/// conductor are marked.
pub fn conductor_layer(
    line: &Line,
    in_field: bool,
    grid: Option<(&[f64], &[f64])>,
) -> plot::ConductorLayer {
    let conductors = line
        .conductors
        .iter()
        .map(|c| plot::PlotConductor {
            id: c.id.clone(),
            outline: side_outline(&c.shape),
            earthing: c.earthing.text().to_string(),
        })
        .collect();
    let inside = match grid {
        Some((xs, zs)) if in_field && !line.conductors.is_empty() => zs
            .iter()
            .flat_map(|&z| xs.iter().map(move |&x| [x, 0.0, z]))
            .map(|p| line.conductors.iter().any(|c| c.shape.contains(p)))
            .collect(),
        _ => Vec::new(),
    };
    plot::ConductorLayer {
        conductors,
        inside,
        in_field,
    }
}

/// The lowest |E| limit among the rules in force, for the map's contour.
fn lowest_field_limit(profiles: &[ThresholdProfile]) -> Option<(f64, String)> {
    profiles
        .iter()
        .flat_map(|p| p.rules.iter().map(move |r| (p, r)))
        .filter(|(_, r)| r.dim == Dim::Field)
        .filter_map(|(p, r)| {
            r.fail
                .or(r.warn)
                .map(|v| (v, format!("{}/{}", p.name, r.id)))
        })
        .min_by(|a, b| a.0.total_cmp(&b.0))
}

/// The charge-density failure limits the findings apply (the warning limit of a rule that
/// has no failure limit), one per profile rule, each with
/// the arc-length extents [m] of the spans it was applied to (a zone's limit covers the
/// zone's spans only), spans that meet merged into one extent.
pub fn charge_limits(line: &Line, assessment: &Assessment) -> Vec<plot::PlotLimit> {
    let mut out: Vec<plot::PlotLimit> = Vec::new();
    for f in &assessment.findings {
        if f.dim != Dim::SurfaceChargeDensity {
            continue;
        }
        // The failure limit, or the warning limit of a warn-only rule.
        let (v, kind) = match (f.fail, f.warn) {
            (Some(x), _) => (x, "fail"),
            (None, Some(w)) => (w, "warn"),
            (None, None) => continue,
        };
        let label = format!("{}/{} {kind}", f.profile, f.rule);
        let extent = match f.subject {
            Subject::Span(i) => line.path.spans.get(i).map(|s| [s.s_start, s.s_end]),
            _ => None,
        };
        let at = match out.iter().position(|l| l.label == label && l.sigma == v) {
            Some(k) => k,
            None => {
                out.push(plot::PlotLimit {
                    sigma: v,
                    label,
                    spans: Vec::new(),
                });
                out.len() - 1
            }
        };
        match extent {
            Some(e) => out[at].spans.push(e),
            // a finding not on one span: the limit holds along the whole path
            None => out[at].spans.push([0.0, line.path.total_length]),
        }
    }
    for l in &mut out {
        l.spans = merged(std::mem::take(&mut l.spans));
    }
    out
}

/// Intervals sorted and merged where they overlap or meet (within 1 nm) [m].
fn merged(mut v: Vec<[f64; 2]>) -> Vec<[f64; 2]> {
    v.sort_by(|a, b| a[0].total_cmp(&b[0]));
    let mut out: Vec<[f64; 2]> = Vec::with_capacity(v.len());
    for e in v {
        match out.last_mut() {
            Some(last) if e[0] <= last[1] + 1e-9 => last[1] = last[1].max(e[1]),
            _ => out.push(e),
        }
    }
    out
}

/// The three report pictures of a line: side view, field map at y = 0 and
/// charge along the path (the field map is computed here on an
/// `map_resolution`-wide grid).
#[allow(clippy::too_many_arguments)]
pub fn make_plots(
    line: &Line,
    charge: &ChargeProfile,
    readings: &ReadingsResult,
    model: &WebField<'_>,
    profiles: &[ThresholdProfile],
    assessment: &Assessment,
    map_resolution: usize,
) -> Result<Vec<Plot>> {
    // Figures.
    let side = figures::side_view(line, charge);
    let (xr, zr) = with_conductors(line, figures::extent(line));
    let nx = map_resolution.clamp(20, 1000);
    let nz = ((nx as f64) * (zr[1] - zr[0]) / (xr[1] - xr[0]))
        .round()
        .clamp(10.0, 1000.0) as usize;
    let (xs, zs, e) = model.side_view_grid(xr, zr, nx, nz, 0.0);
    // The scene solved conductors when the web's field reports any.
    let in_field = model.conductor_results().is_ok_and(|c| !c.is_empty());
    let layer = conductor_layer(line, in_field, Some((&xs, &zs)));
    let grid = figures::field_grid(xs, zs, e, 0.0, lowest_field_limit(profiles));
    let height = figures::picture_height(xr, zr, WIDTH);
    let sigma_limits = charge_limits(line, assessment);
    let mut curve = figures::charge_curve(line, charge, sigma_limits);
    curve.markers = readings
        .readings
        .iter()
        .map(|r| (r.s, r.sigma, r.sigma_low, r.sigma_high, r.id.clone()))
        .collect();
    Ok(vec![
        Plot {
            file: "side_view.png".into(),
            caption: "Side view: rollers, web path coloured by charge density, conductors, zones and points of interest".into(),
            png: plot::side_view_png(&side, &layer, WIDTH, height)?,
        },
        Plot {
            file: "field_map.png".into(),
            caption: if layer.inside.iter().any(|&i| i) {
                "Field strength |E| on the centreline plane y = 0 (logarithmic colour scale); conductors cut by the plane filled".into()
            } else {
                "Field strength |E| on the centreline plane y = 0 (logarithmic colour scale)".into()
            },
            png: plot::field_map_png(&side, &grid, &layer, WIDTH, height)?,
        },
        Plot {
            file: "charge_along_path.png".into(),
            caption: "Charge density along the web path, with the limits in force".into(),
            png: plot::charge_png(&curve, WIDTH, CURVE_HEIGHT)?,
        },
    ])
}

/// The pictures of a line with the planned bars placed: its side view and
/// its charge along the path (with the charge without eliminators beside).
pub fn planned_plots(placed: &Line, charge: &ChargeProfile) -> Result<Vec<Plot>> {
    let side = figures::side_view(placed, charge);
    let (xr, zr) = with_conductors(placed, figures::extent(placed));
    let height = figures::picture_height(xr, zr, WIDTH);
    let curve = figures::charge_curve(placed, charge, Vec::new());
    let layer = conductor_layer(placed, false, None);
    Ok(vec![
        Plot {
            file: "side_view_planned.png".into(),
            caption: "Side view with the best plan's bars".into(),
            png: plot::side_view_png(&side, &layer, WIDTH, height)?,
        },
        Plot {
            file: "charge_along_path_planned.png".into(),
            caption: "Charge density along the path with the best plan's bars, and without them"
                .into(),
            png: plot::charge_png(&curve, WIDTH, CURVE_HEIGHT)?,
        },
    ])
}

/// The sensitivity chart of the report's worst findings
/// ([`super::ranges::worst_ranged`]) to its uncertain inputs, or `None` when no finding
/// has a range.
pub fn sensitivity_plot(r: &super::build::Report) -> Result<Option<Plot>> {
    use super::ranges::{SENSITIVITY_ROWS, input_label, worst_ranged};
    let worst = worst_ranged(r, SENSITIVITY_ROWS);
    if worst.is_empty() {
        return Ok(None);
    }
    let inputs = &r.uncertainty.inputs;
    let chart = plot::SensitivityChart {
        inputs: inputs.iter().map(|i| input_label(r, i)).collect(),
        rows: worst
            .iter()
            .map(|f| plot::SensitivityRow {
                label: format!("{}/{} on {}", f.profile, f.rule, f.subject),
                margin: f.margin,
                range: [f.bounds.low / f.limit, f.bounds.high / f.limit],
                moves: (0..inputs.len())
                    .map(|k| {
                        f.bounds
                            .shares
                            .iter()
                            .find(|s| s.input == k)
                            .map_or(0.0, |s| s.width / f.limit)
                    })
                    .collect(),
            })
            .collect(),
    };
    let height = (180 + 70 * chart.rows.len() as u32).clamp(CURVE_HEIGHT, 1400);
    Ok(Some(Plot {
        file: "sensitivity.png".into(),
        caption: "Sensitivity of the worst findings: each uncertain input's move of the margin across its range, beside the finding's whole range".into(),
        png: plot::sensitivity_png(&chart, WIDTH, height)?,
    }))
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Twice the area of a polygon (shoelace) [m²].
    fn area(p: &[[f64; 2]]) -> f64 {
        let n = p.len();
        (0..n)
            .map(|i| {
                let (a, b) = (p[i], p[(i + 1) % n]);
                a[0] * b[1] - b[0] * a[1]
            })
            .sum::<f64>()
            / 2.0
    }

    fn near(a: f64, b: f64) -> bool {
        (a - b).abs() <= 1e-12
    }

    fn cylinder(center: Vec3, axis: Vec3, radius: f64, length: f64) -> ConductorShape {
        ConductorShape::Cylinder {
            center,
            axis,
            radius,
            length,
        }
    }

    #[test]
    fn a_plate_across_the_web_is_seen_edge_on_as_a_line() {
        // Upright in the plane x = 1.5, spanning y: its two z ends.
        let o = side_outline(&ConductorShape::Plate {
            origin: [1.5, -0.4, 1.3],
            e1: [0.0, 0.8, 0.0],
            e2: [0.0, 0.0, 0.3],
        });
        assert_eq!(o, vec![[1.5, 1.3], [1.5, 1.6]]);
        // Inclined 45° about y: still edge-on, from one end to the other.
        let o = side_outline(&ConductorShape::Plate {
            origin: [0.0, -0.5, 1.0],
            e1: [0.2, 0.0, 0.2],
            e2: [0.0, 1.0, 0.0],
        });
        assert_eq!(o, vec![[0.0, 1.0], [0.2, 1.2]]);
    }

    #[test]
    fn a_plate_beside_the_web_and_a_box_are_seen_face_on() {
        let plate = side_outline(&ConductorShape::Plate {
            origin: [1.6, -0.8, 0.3],
            e1: [0.8, 0.0, 0.0],
            e2: [0.0, 0.0, 1.1],
        });
        assert_eq!(plate.len(), 4);
        assert!(near(area(&plate), 0.8 * 1.1), "counter-clockwise, 0.88 m²");
        let b = side_outline(&ConductorShape::Box {
            min: [0.8, -0.3, 0.3],
            max: [1.2, 0.3, 0.7],
        });
        assert_eq!(b, vec![[0.8, 0.3], [1.2, 0.3], [1.2, 0.7], [0.8, 0.7]]);
    }

    /// A cylinder across the web (axis ŷ, like a roller) is a circle: every
    /// vertex at the radius, the area that of the inscribed 144-gon.
    #[test]
    fn a_cylinder_across_the_web_is_a_circle() {
        let (c, r) = ([0.4, 0.0, 1.4], 0.04);
        let o = side_outline(&cylinder(c, [0.0, 1.0, 0.0], r, 1.2));
        assert_eq!(o.len(), RIM_POINTS);
        for p in &o {
            assert!(near(
                ((p[0] - c[0]).powi(2) + (p[1] - c[2]).powi(2)).sqrt(),
                r
            ));
        }
        let n = RIM_POINTS as f64;
        let polygon = 0.5 * n * r * r * (std::f64::consts::TAU / n).sin();
        assert!((area(&o) - polygon).abs() <= 1e-12, "{}", area(&o));
    }

    /// A vertical cylinder (a person) is the rectangle 2r wide and ℓ high;
    /// one along x is the rectangle ℓ wide and 2r high.
    #[test]
    fn upright_and_lengthwise_cylinders_are_rectangles() {
        for (axis, w, h) in [([0.0, 0.0, 1.0], 0.3, 1.75), ([1.0, 0.0, 0.0], 1.75, 0.3)] {
            let o = side_outline(&cylinder([2.5, 0.3, 0.875], axis, 0.15, 1.75));
            let xs = o.iter().map(|p| p[0]);
            let zs = o.iter().map(|p| p[1]);
            let span = |v: &mut dyn Iterator<Item = f64>| {
                let (lo, hi) = v.fold((f64::MAX, f64::MIN), |(a, b), x| (a.min(x), b.max(x)));
                hi - lo
            };
            assert!(near(span(&mut xs.clone()), w) && near(span(&mut zs.clone()), h));
            assert!(
                (area(&o) - w * h).abs() <= 1e-9,
                "{} vs {}",
                area(&o),
                w * h
            );
        }
    }

    #[test]
    fn nodes_inside_a_box_at_y_0_are_marked_only_when_the_field_has_conductors() {
        let line = crate::model::parse_line(
            "web: {width: 1 m, thickness: 50 um, relative_permittivity: 3, relaxation_time: 1 s, speed: 1 m/s}\n\
             rollers:\n  - {id: A, center: [0 m, 1 m], diameter: 100 mm, earthing: grounded}\n  - {id: B, center: [2 m, 1 m], diameter: 100 mm, earthing: grounded}\n\
             path:\n  - {roller: A, wrap: cw}\n  - {roller: B, wrap: cw}\n\
             conductors:\n  - {id: BOX1, shape: box, earthing: grounded, from: [0.8 m, -0.3 m, 0.3 m], to: [1.2 m, 0.3 m, 0.7 m]}\n",
        )
        .unwrap();
        let xs = [0.5, 1.0, 1.5];
        let zs = [0.5, 1.0];
        let layer = conductor_layer(&line, true, Some((&xs, &zs)));
        assert_eq!(layer.inside, vec![false, true, false, false, false, false]);
        assert_eq!(layer.conductors[0].earthing, "grounded");
        assert!(
            conductor_layer(&line, false, Some((&xs, &zs)))
                .inside
                .is_empty()
        );
    }
}
