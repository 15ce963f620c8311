//! The equipment of the line on an x–z chart: the earthed floor, hazardous-area zones,
//! rollers by earthing state, devices such as eliminators, and evaluation points, each
//! with its label. Shared by the side view and the field map.
//!
//! Pipeline stage: report writers (PNG plots).

use std::collections::BTreeSet;
use std::f64::consts::TAU;

use anyhow::Result;
use plotters::element::DashedPathElement;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, VPos};

use super::colour::{GROUND_FILL, GROUND_INK, INK, MARKER, POINT_PALETTE};
use super::frame::{Area, F64Chart, fmt_num, non_empty};
use super::glyphs::measure;
use super::labels::{LABEL_FONT, Request};
use super::layout::PxBox;
use super::xz::{px_per_m, roller_ok};
use super::{PlotMarker, PlotPoint, PlotRoller, PlotZone, coord_ok};

pub(super) fn draw_ground(
    root: &Area<'_>,
    chart: &F64Chart<'_, '_>,
    ground: Option<f64>,
    fill: bool,
) -> Result<()> {
    let Some(g) = ground.filter(|g| coord_ok(*g)) else {
        return Ok(());
    };
    let (xr, zr) = (chart.x_range(), chart.y_range());
    if g < zr.start || g > zr.end {
        return Ok(());
    }
    let area = chart.plotting_area();
    if fill {
        area.draw(&Rectangle::new(
            [(xr.start, zr.start), (xr.end, g)],
            GROUND_FILL.filled(),
        ))?;
    }
    let (x0, y) = chart.backend_coord(&(xr.start, g));
    let (x1, yb) = chart.backend_coord(&(xr.end, zr.start));
    let depth = (yb - y).clamp(0, 12);
    if depth > 2 {
        let mut x = x0 + depth;
        while x <= x1 {
            root.draw(&PathElement::new(
                vec![(x, y), (x - depth, y + depth)],
                GROUND_INK.stroke_width(1),
            ))?;
            x += 10;
        }
    }
    area.draw(&PathElement::new(
        vec![(xr.start, g), (xr.end, g)],
        GROUND_INK.stroke_width(3),
    ))?;
    Ok(())
}

pub(super) fn zone_colour(zone: u8) -> RGBColor {
    match zone {
        0 | 20 => RGBColor(214, 48, 40),
        1 | 21 => RGBColor(238, 134, 24),
        2 | 22 => RGBColor(214, 178, 0),
        _ => RGBColor(130, 130, 140),
    }
}

fn zone_rect(zn: &PlotZone) -> Option<[(f64, f64); 2]> {
    let ok = zn.x.iter().chain(zn.z.iter()).all(|v| coord_ok(*v));
    ok.then(|| {
        [
            (zn.x[0].min(zn.x[1]), zn.z[0].min(zn.z[1])),
            (zn.x[0].max(zn.x[1]), zn.z[0].max(zn.z[1])),
        ]
    })
}

pub(super) fn draw_zones(chart: &F64Chart<'_, '_>, zones: &[PlotZone], filled: bool) -> Result<()> {
    let area = chart.plotting_area();
    for zn in zones {
        let Some(r) = zone_rect(zn) else { continue };
        let c = zone_colour(zn.zone);
        if filled {
            area.draw(&Rectangle::new(r, c.mix(0.13).filled()))?;
        }
        let outline = vec![r[0], (r[1].0, r[0].1), r[1], (r[0].0, r[1].1), r[0]];
        area.draw(&DashedPathElement::new(outline, 8, 5, c.stroke_width(2)))?;
    }
    Ok(())
}

/// Zone labels: inside a corner of the zone (top left first), else just above it.
pub(super) fn zone_labels(chart: &F64Chart<'_, '_>, zones: &[PlotZone]) -> Vec<Request> {
    let mut out = Vec::new();
    for zn in zones {
        let Some(r) = zone_rect(zn) else { continue };
        let (x0, y0) = chart.backend_coord(&(r[0].0, r[1].1));
        let (x1, y1) = chart.backend_coord(&(r[1].0, r[0].1));
        let label = format!("{} · zone {}", non_empty(&zn.label, &zn.id), zn.zone);
        let c = zone_colour(zn.zone);
        let dark = RGBColor(c.0 / 2 + 10, c.1 / 2 + 10, c.2 / 2 + 10);
        out.push(
            Request::new(&label, dark, (x0, y0))
                .at((x0 + 6, y0 + 6), HPos::Left, VPos::Top)
                .at((x1 - 6, y0 + 6), HPos::Right, VPos::Top)
                .at((x0 + 6, y1 - 6), HPos::Left, VPos::Bottom)
                .at((x1 - 6, y1 - 6), HPos::Right, VPos::Bottom)
                .at((x0, y0 - 4), HPos::Left, VPos::Bottom),
        );
    }
    out
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
pub(super) enum Earthing {
    Grounded,
    Isolated,
    Insulating,
    Unspecified,
}

pub(super) fn earthing(s: &str) -> Earthing {
    match s.trim().to_ascii_lowercase().as_str() {
        "grounded" | "earthed" => Earthing::Grounded,
        "isolated" => Earthing::Isolated,
        "insulating" => Earthing::Insulating,
        _ => Earthing::Unspecified,
    }
}

/// (fill, edge, edge width, dashed)
pub(super) fn roller_style(e: Earthing) -> (RGBColor, RGBColor, u32, bool) {
    match e {
        Earthing::Grounded => (RGBColor(70, 82, 96), RGBColor(24, 28, 34), 2, false),
        Earthing::Isolated => (RGBColor(255, 244, 230), RGBColor(214, 96, 14), 3, false),
        Earthing::Insulating => (RGBColor(236, 226, 194), RGBColor(146, 116, 58), 2, true),
        Earthing::Unspecified => (WHITE, RGBColor(120, 120, 120), 1, true),
    }
}

pub(super) fn earthing_name(e: Earthing) -> &'static str {
    match e {
        Earthing::Grounded => "roller, earthed",
        Earthing::Isolated => "roller, isolated conductor",
        Earthing::Insulating => "roller, insulating",
        Earthing::Unspecified => "roller, earthing unspecified",
    }
}

pub(super) fn draw_rollers(
    root: &Area<'_>,
    chart: &F64Chart<'_, '_>,
    rollers: &[PlotRoller],
) -> Result<()> {
    let scale = px_per_m(chart);
    let area = chart.plotting_area();
    for r in rollers.iter().filter(|r| roller_ok(r)) {
        let e = earthing(&r.earthing);
        let (fill, edge, w, dashed) = roller_style(e);
        let pr = r.radius * scale;
        let n = (pr * 0.8).clamp(24.0, 720.0) as usize;
        let pts: Vec<(f64, f64)> = (0..=n)
            .map(|k| {
                let t = TAU * k as f64 / n as f64;
                (
                    r.center[0] + r.radius * t.cos(),
                    r.center[1] + r.radius * t.sin(),
                )
            })
            .collect();
        area.draw(&Polygon::new(pts.clone(), fill.filled()))?;
        if dashed {
            area.draw(&DashedPathElement::new(pts, 5, 4, edge.stroke_width(w)))?;
        } else {
            area.draw(&PathElement::new(pts, edge.stroke_width(w)))?;
        }
        let c = chart.backend_coord(&(r.center[0], r.center[1]));
        if pr >= 6.0 {
            let dot = if e == Earthing::Grounded { WHITE } else { edge };
            root.draw(&Circle::new(c, 2, dot.filled()))?;
        }
    }
    Ok(())
}

/// Roller ids: inside the roller when it is large enough (fixed there), else beside it
/// (above right first); the outline of a small roller is kept clear where possible.
pub(super) fn roller_labels(
    chart: &F64Chart<'_, '_>,
    rollers: &[PlotRoller],
) -> (Vec<Request>, Vec<PxBox>) {
    let scale = px_per_m(chart);
    let (mut out, mut keep_clear) = (Vec::new(), Vec::new());
    for r in rollers.iter().filter(|r| roller_ok(r)) {
        let e = earthing(&r.earthing);
        let pr = r.radius * scale;
        let c = chart.backend_coord(&(r.center[0], r.center[1]));
        let on_dark = e == Earthing::Grounded;
        let (tw, _) = measure(&r.id, LABEL_FONT);
        if pr >= 16.0 && pr >= f64::from(tw) / 2.0 + 6.0 {
            let mut q = Request::new(&r.id, if on_dark { WHITE } else { INK }, c).at(
                (c.0, c.1 + 5),
                HPos::Center,
                VPos::Top,
            );
            q.boxed = false;
            q.fixed = true;
            out.push(q);
        } else {
            let p = pr.min(1e4) as i32;
            let off = (pr.min(1e4) * std::f64::consts::FRAC_1_SQRT_2) as i32;
            // the square inside the roller is kept clear (its labels sit off its corners)
            keep_clear.push([c.0 - off, c.1 - off, c.0 + off, c.1 + off]);
            out.push(
                Request::new(&r.id, INK, c)
                    .at((c.0 + off + 5, c.1 - off - 4), HPos::Left, VPos::Bottom)
                    .at((c.0 + off + 5, c.1 + off + 4), HPos::Left, VPos::Top)
                    .at((c.0 - off - 5, c.1 - off - 4), HPos::Right, VPos::Bottom)
                    .at((c.0 - off - 5, c.1 + off + 4), HPos::Right, VPos::Top)
                    .at((c.0, c.1 - p - 4), HPos::Center, VPos::Bottom)
                    .at((c.0, c.1 + p + 4), HPos::Center, VPos::Top),
            );
        }
    }
    (out, keep_clear)
}

/// Draws the devices as bars; returns their labels (under the bar first) and the bars'
/// boxes, to be kept clear.
pub(super) fn draw_markers(
    root: &Area<'_>,
    chart: &F64Chart<'_, '_>,
    markers: &[PlotMarker],
) -> Result<(Vec<Request>, Vec<PxBox>)> {
    let (mut out, mut keep_clear) = (Vec::new(), Vec::new());
    for m in markers {
        if !(coord_ok(m.x) && coord_ok(m.z)) {
            continue;
        }
        let (x, y) = chart.backend_coord(&(m.x, m.z));
        root.draw(&Rectangle::new(
            [(x - 12, y - 4), (x + 12, y + 4)],
            MARKER.filled(),
        ))?;
        root.draw(&Rectangle::new(
            [(x - 12, y - 4), (x + 12, y + 4)],
            INK.stroke_width(1),
        ))?;
        for k in [-6, 0, 6] {
            root.draw(&PathElement::new(
                vec![(x + k, y + 4), (x + k, y + 8)],
                INK.stroke_width(1),
            ))?;
        }
        keep_clear.push([x - 12, y - 4, x + 12, y + 8]);
        let dark = RGBColor(0, 84, 76);
        out.push(
            Request::new(non_empty(&m.label, &m.id), dark, (x, y))
                .at((x, y + 11), HPos::Center, VPos::Top)
                .at((x, y - 7), HPos::Center, VPos::Bottom)
                .at((x + 16, y), HPos::Left, VPos::Center)
                .at((x - 16, y), HPos::Right, VPos::Center),
        );
    }
    Ok((out, keep_clear))
}

pub(super) fn point_kinds(points: &[PlotPoint]) -> Vec<String> {
    let set: BTreeSet<&str> = points.iter().map(|p| p.kind.as_str()).collect();
    set.into_iter().take(16).map(str::to_string).collect()
}

pub(super) fn kind_colour(kinds: &[String], kind: &str) -> RGBColor {
    let i = kinds.iter().position(|k| k == kind).unwrap_or(kinds.len());
    POINT_PALETTE[i % POINT_PALETTE.len()]
}

pub(super) fn diamond(c: (i32, i32), r: i32) -> Vec<(i32, i32)> {
    vec![
        (c.0, c.1 - r),
        (c.0 + r, c.1),
        (c.0, c.1 + r),
        (c.0 - r, c.1),
    ]
}

/// Whether an across-web position `y` [m] lies in the plotted band `plane` [m] (a
/// non-finite `y` does not: such a point is never drawn as if on the web).
pub(super) fn on_plane(y: f64, plane: [f64; 2]) -> bool {
    let (lo, hi) = (plane[0].min(plane[1]), plane[0].max(plane[1]));
    y.is_finite() && y >= lo && y <= hi
}

/// The label of a point: its id, with its y when it is off the plotted plane.
pub(super) fn point_label(p: &PlotPoint, plane: [f64; 2]) -> String {
    if on_plane(p.y, plane) {
        p.id.clone()
    } else {
        format!("{} (y = {} m)", p.id, fmt_num(p.y))
    }
}

/// Draws the points, a filled diamond on the plotted plane `plane` and a hollow one off
/// it; returns their labels (above right first) and the diamonds' boxes.
pub(super) fn draw_points(
    root: &Area<'_>,
    chart: &F64Chart<'_, '_>,
    points: &[PlotPoint],
    plane: [f64; 2],
) -> Result<(Vec<Request>, Vec<PxBox>)> {
    let kinds = point_kinds(points);
    let (mut out, mut keep_clear) = (Vec::new(), Vec::new());
    for p in points {
        if !(coord_ok(p.x) && coord_ok(p.z)) {
            continue;
        }
        let c = chart.backend_coord(&(p.x, p.z));
        let colour = kind_colour(&kinds, &p.kind);
        root.draw(&Polygon::new(diamond(c, 8), WHITE.filled()))?;
        if on_plane(p.y, plane) {
            root.draw(&Polygon::new(diamond(c, 6), colour.filled()))?;
        } else {
            draw_hollow(root, c, colour)?;
        }
        keep_clear.push([c.0 - 8, c.1 - 8, c.0 + 8, c.1 + 8]);
        out.push(
            Request::new(&point_label(p, plane), colour, c)
                .at((c.0 + 11, c.1 - 6), HPos::Left, VPos::Bottom)
                .at((c.0 + 11, c.1 + 6), HPos::Left, VPos::Top)
                .at((c.0 - 11, c.1 - 6), HPos::Right, VPos::Bottom)
                .at((c.0 - 11, c.1 + 6), HPos::Right, VPos::Top)
                .at((c.0, c.1 - 11), HPos::Center, VPos::Bottom)
                .at((c.0, c.1 + 11), HPos::Center, VPos::Top),
        );
    }
    Ok((out, keep_clear))
}

/// A hollow diamond: the mark of a point off the plotted plane.
pub(super) fn draw_hollow(root: &Area<'_>, c: (i32, i32), colour: RGBColor) -> Result<()> {
    let mut d = diamond(c, 6);
    d.push(d[0]);
    root.draw(&PathElement::new(d, colour.stroke_width(2)))?;
    Ok(())
}
