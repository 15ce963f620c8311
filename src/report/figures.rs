//! Plot inputs assembled from the line, its charge and a computed field grid.
//!
//! Turns the checked model into the plain data the PNG writer draws; the
//! field grid itself is computed by the field stage (`field::side_view_grid`).

use crate::charge::ChargeProfile;
use crate::model::{Line, NodeKind};
use crate::report::plot::{
    ChargeCurve, FieldGrid, PlotArc, PlotLimit, PlotMarker, PlotPoint, PlotRoller, PlotSpan,
    PlotZone, SideView,
};

/// The side view of the line.
pub fn side_view(line: &Line, charge: &ChargeProfile) -> SideView {
    let spans = line
        .path
        .spans
        .iter()
        .map(|s| {
            let (sigma_start, sigma_end) = charge.ends_between(s.s_start, s.s_end);
            PlotSpan {
                name: s.name.clone(),
                start: s.start,
                end: s.end,
                sigma_start,
                sigma_end,
            }
        })
        .collect();
    let arcs = line
        .path
        .arcs
        .iter()
        .map(|a| {
            let r = &line.rollers[a.roller];
            PlotArc {
                center: r.center,
                radius: r.radius,
                start_angle: a.start_angle,
                sweep: a.sweep,
                sigma: charge.sigma_c(0.5 * (a.s_start + a.s_end)),
            }
        })
        .collect();
    SideView {
        title: line.title.clone(),
        rollers: line
            .rollers
            .iter()
            .map(|r| PlotRoller {
                id: r.id.clone(),
                center: r.center,
                radius: r.radius,
                earthing: r.earthing.text().to_string(),
            })
            .collect(),
        spans,
        arcs,
        zones: line
            .zones
            .iter()
            .map(|z| PlotZone {
                id: z.id.clone(),
                label: z.name.clone().unwrap_or_else(|| z.id.clone()),
                x: [z.min[0], z.max[0]],
                z: [z.min[2], z.max[2]],
                zone: z.zone,
            })
            .collect(),
        points: line
            .points
            .iter()
            .map(|p| PlotPoint {
                id: p.id.clone(),
                kind: p.kind.text().to_string(),
                x: p.at[0],
                y: p.at[1],
                z: p.at[2],
            })
            .collect(),
        markers: line
            .eliminators
            .iter()
            .map(|e| {
                let (at, _) = crate::model::geometry::meter_geometry(
                    &line.path.spans[e.span],
                    e.along,
                    0.0,
                    e.distance,
                    e.side,
                );
                PlotMarker {
                    id: e.id.clone(),
                    x: at[0],
                    z: at[2],
                    label: format!("{} ({})", e.id, e.kind.text()),
                }
            })
            .collect(),
        ground: line.ground_plane,
        // the side view stands for the web's width: points beside it are drawn apart
        plane: [-0.5 * line.web.width, 0.5 * line.web.width],
    }
}

/// The x and z ranges the field map covers: the line's extent plus a margin.
pub fn extent(line: &Line) -> ([f64; 2], [f64; 2]) {
    let mut x = [f64::INFINITY, f64::NEG_INFINITY];
    let mut z = [f64::INFINITY, f64::NEG_INFINITY];
    let mut take = |px: f64, pz: f64, r: f64| {
        x = [x[0].min(px - r), x[1].max(px + r)];
        z = [z[0].min(pz - r), z[1].max(pz + r)];
    };
    for s in &line.path.spans {
        take(s.start[0], s.start[1], 0.0);
        take(s.end[0], s.end[1], 0.0);
    }
    for r in &line.rollers {
        take(r.center[0], r.center[1], r.radius);
    }
    for p in &line.points {
        take(p.at[0], p.at[2], 0.0);
    }
    let m = 0.08 * (x[1] - x[0]).max(z[1] - z[0]).max(0.1);
    let mut zr = [z[0] - m, z[1] + m];
    if let Some(g) = line.ground_plane {
        zr[0] = g;
    }
    ([x[0] - m, x[1] + m], zr)
}

/// Height [px] of an equal-scale side-view picture `width` px wide covering
/// `x` × `z` [m]: the drawing area keeps 1 m in x equal to 1 m in z, plus
/// room for the title, axes and legend.
pub fn picture_height(x: [f64; 2], z: [f64; 2], width: u32) -> u32 {
    let plot_w = width.saturating_sub(330) as f64;
    let ratio = ((z[1] - z[0]) / (x[1] - x[0]).max(1e-9)).clamp(0.05, 3.0);
    ((plot_w * ratio).round() as u32 + 200).clamp(480, 1400)
}

/// The field grid for the map, with the lowest field limit in force.
pub fn field_grid(
    xs: Vec<f64>,
    zs: Vec<f64>,
    e_mag: Vec<f64>,
    y: f64,
    limit: Option<(f64, String)>,
) -> FieldGrid {
    FieldGrid {
        xs,
        zs,
        e_mag,
        y,
        limit,
    }
}

/// σc and the across-web peak sampled along the path, nodes marked.
pub fn charge_curve(line: &Line, charge: &ChargeProfile, limits: Vec<PlotLimit>) -> ChargeCurve {
    let total = line.path.total_length;
    let n = 600;
    let fmax = charge.across.max_abs();
    let mut s: Vec<f64> = (0..=n).map(|i| total * i as f64 / n as f64).collect();
    // Sample both sides of every jump.
    for g in &charge.segments {
        if g.s_start > 0.0 {
            s.push((g.s_start - 1e-9 * total.max(1.0)).max(0.0));
            s.push(g.s_start);
        }
    }
    s.sort_by(f64::total_cmp);
    let sigma_c: Vec<f64> = s.iter().map(|&x| charge.sigma_c(x)).collect();
    let sigma_peak = sigma_c.iter().map(|x| x * fmax).collect();
    let nodes = line
        .path
        .nodes
        .iter()
        .enumerate()
        .map(|(i, n)| {
            let label = n.id.clone().unwrap_or_else(|| match n.kind {
                NodeKind::Point(_) => format!("path[{i}]"),
                NodeKind::Roller { .. } => format!("path[{i}]"),
            });
            (line.path.departure_s[i], label)
        })
        .collect();
    let extra = if line.eliminators.is_empty() {
        Vec::new()
    } else {
        let bare = crate::charge::charge_without_eliminators(line);
        vec![(
            "σc without eliminators".to_string(),
            s.iter().map(|&x| bare.sigma_c(x)).collect(),
        )]
    };
    ChargeCurve {
        s,
        sigma_c,
        sigma_peak,
        nodes,
        limits,
        extra,
        markers: Vec::new(),
    }
}
