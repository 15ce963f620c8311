//! Conductors beside the web (plates, boxes, cylinders, people) on an x–z chart: each
//! outline as given (already projected on the x–z plane), grounded ones filled dark and
//! hatched, isolated ones pale with an orange edge — the styles of grounded and isolated
//! rollers — a plate seen edge-on as a thick line, and each id beside its outline. Shared
//! by the side view and the field map (which draws the outlines without fill, over |E|).
//!
//! Pipeline stage: report writers (PNG plots). Draws only.

use anyhow::Result;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, VPos};

use super::frame::{Area, F64Chart};
use super::labels::Request;
use super::xz::Bounds;
use super::{PlotConductor, coord_ok};

/// Spacing of the hatch lines of a grounded conductor [px].
const HATCH_PX: i32 = 9;

/// Below this area [px²] an outline is drawn as a line (a plate seen edge-on).
const EDGE_ON_PX2: f64 = 4.0;

/// Whether a conductor is drawn as grounded (anything but `"grounded"` / `"earthed"` is
/// drawn as isolated, the cautious reading).
pub(super) fn is_grounded(c: &PlotConductor) -> bool {
    matches!(
        c.earthing.trim().to_ascii_lowercase().as_str(),
        "grounded" | "earthed"
    )
}

/// How a conductor is drawn.
pub(super) struct Style {
    /// Fill colour and its opacity.
    pub(super) fill: (RGBColor, f64),
    /// Edge colour.
    pub(super) edge: RGBColor,
    /// Edge width [px].
    pub(super) width: u32,
    /// Hatched (grounded).
    pub(super) hatch: bool,
}

pub(super) fn style(grounded: bool) -> Style {
    if grounded {
        Style {
            fill: (RGBColor(70, 82, 96), 0.30),
            edge: RGBColor(24, 28, 34),
            width: 2,
            hatch: true,
        }
    } else {
        Style {
            fill: (RGBColor(255, 226, 190), 0.55),
            edge: RGBColor(214, 96, 14),
            width: 3,
            hatch: false,
        }
    }
}

/// The outline in data coordinates when every point can be drawn and it has at least two
/// distinct points.
fn outline(c: &PlotConductor) -> Option<Vec<(f64, f64)>> {
    if c.outline.len() < 2 || !c.outline.iter().all(|p| coord_ok(p[0]) && coord_ok(p[1])) {
        return None;
    }
    let first = c.outline[0];
    c.outline
        .iter()
        .any(|p| *p != first)
        .then(|| c.outline.iter().map(|p| (p[0], p[1])).collect())
}

/// Twice the signed area of a pixel polygon [px²].
fn area2(px: &[(i32, i32)]) -> f64 {
    let n = px.len();
    (0..n)
        .map(|i| {
            let (a, b) = (px[i], px[(i + 1) % n]);
            f64::from(a.0) * f64::from(b.1) - f64::from(b.0) * f64::from(a.1)
        })
        .sum()
}

/// The two points of `px` farthest apart (the line an edge-on plate is drawn as).
fn farthest_pair(px: &[(i32, i32)]) -> [(i32, i32); 2] {
    let d2 = |a: (i32, i32), b: (i32, i32)| {
        let (dx, dy) = (i64::from(a.0 - b.0), i64::from(a.1 - b.1));
        dx * dx + dy * dy
    };
    let mut best = [px[0], px[0]];
    for (i, &a) in px.iter().enumerate() {
        for &b in &px[i + 1..] {
            if d2(a, b) > d2(best[0], best[1]) {
                best = [a, b];
            }
        }
    }
    best
}

/// The part of the line x − y = k (pixel coordinates, 45° down to the right) inside the
/// convex pixel polygon `px`, if any.
fn hatch_segment(px: &[(i32, i32)], k: f64) -> Option<((i32, i32), (i32, i32))> {
    let f = |p: (i32, i32)| f64::from(p.0) - f64::from(p.1) - k;
    let n = px.len();
    let mut hits: Vec<(f64, f64)> = Vec::new();
    for i in 0..n {
        let (a, b) = (px[i], px[(i + 1) % n]);
        let (fa, fb) = (f(a), f(b));
        if (fa <= 0.0 && fb >= 0.0) || (fa >= 0.0 && fb <= 0.0) {
            let t = if fa == fb { 0.0 } else { fa / (fa - fb) };
            hits.push((
                f64::from(a.0) + t * f64::from(b.0 - a.0),
                f64::from(a.1) + t * f64::from(b.1 - a.1),
            ));
        }
    }
    let lo = hits.iter().copied().min_by(|p, q| p.1.total_cmp(&q.1))?;
    let hi = hits.iter().copied().max_by(|p, q| p.1.total_cmp(&q.1))?;
    let r = |p: (f64, f64)| (p.0.round() as i32, p.1.round() as i32);
    (hi.1 - lo.1 >= 1.0).then(|| (r(lo), r(hi)))
}

/// Draws every conductor's outline; `filled` adds the fill and, for grounded ones, the
/// hatch (the side view), without it only the edge (the field map, over |E|).
pub(super) fn draw_conductors(
    root: &Area<'_>,
    chart: &F64Chart<'_, '_>,
    conductors: &[PlotConductor],
    filled: bool,
) -> Result<()> {
    let area = chart.plotting_area();
    for c in conductors {
        let Some(pts) = outline(c) else { continue };
        let st = style(is_grounded(c));
        let px: Vec<(i32, i32)> = pts.iter().map(|p| chart.backend_coord(p)).collect();
        if px.len() == 2 || area2(&px).abs() < 2.0 * EDGE_ON_PX2 {
            let [a, b] = farthest_pair(&px);
            root.draw(&PathElement::new(
                vec![a, b],
                st.edge.stroke_width(st.width + 3),
            ))?;
            continue;
        }
        if filled {
            area.draw(&Polygon::new(
                pts.clone(),
                st.fill.0.mix(st.fill.1).filled(),
            ))?;
            if st.hatch {
                let ks = px.iter().map(|p| p.0 - p.1);
                let (k0, k1) = (ks.clone().min().unwrap_or(0), ks.max().unwrap_or(0));
                let mut k = k0 - k0.rem_euclid(HATCH_PX) + HATCH_PX;
                while k < k1 {
                    if let Some((a, b)) = hatch_segment(&px, f64::from(k)) {
                        root.draw(&PathElement::new(vec![a, b], st.edge.stroke_width(1)))?;
                    }
                    k += HATCH_PX;
                }
            }
        }
        let mut closed = px.clone();
        closed.push(px[0]);
        root.draw(&PathElement::new(closed, st.edge.stroke_width(st.width)))?;
    }
    Ok(())
}

/// Each conductor's id: above the top of its outline first, else below or at a corner.
pub(super) fn conductor_labels(
    chart: &F64Chart<'_, '_>,
    conductors: &[PlotConductor],
) -> Vec<Request> {
    let mut out = Vec::new();
    for c in conductors {
        let Some(pts) = outline(c) else { continue };
        let px: Vec<(i32, i32)> = pts.iter().map(|p| chart.backend_coord(p)).collect();
        let top = px.iter().map(|p| p.1).min().unwrap_or(0);
        let bottom = px.iter().map(|p| p.1).max().unwrap_or(0);
        let (x0, x1) = px
            .iter()
            .fold((i32::MAX, i32::MIN), |(a, b), p| (a.min(p.0), b.max(p.0)));
        let ink = if is_grounded(c) {
            RGBColor(24, 28, 34)
        } else {
            RGBColor(170, 70, 8)
        };
        let cx = x0 / 2 + x1 / 2;
        out.push(
            Request::new(&c.id, ink, (cx, top))
                .at((cx, top - 4), HPos::Center, VPos::Bottom)
                .at((x0, top - 4), HPos::Left, VPos::Bottom)
                .at((x1, top - 4), HPos::Right, VPos::Bottom)
                .at((cx, bottom + 4), HPos::Center, VPos::Top),
        );
    }
    out
}

/// `b` widened to hold every drawable conductor outline.
pub(super) fn with_conductors(mut b: Bounds, conductors: &[PlotConductor]) -> Bounds {
    for pts in conductors.iter().filter_map(outline) {
        for (x, z) in pts {
            b.add(x, z);
        }
    }
    b
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn hatch_lines_stay_inside_a_square() {
        let sq = [(0, 0), (100, 0), (100, 100), (0, 100)];
        // x − y = 0 is the diagonal from (0, 0) to (100, 100).
        let (a, b) = hatch_segment(&sq, 0.0).unwrap();
        assert_eq!((a, b), ((0, 0), (100, 100)));
        // x − y = 50 runs from (50, 0) to (100, 50).
        let (a, b) = hatch_segment(&sq, 50.0).unwrap();
        assert_eq!((a, b), ((50, 0), (100, 50)));
        assert!(hatch_segment(&sq, 150.0).is_none());
    }

    #[test]
    fn an_edge_on_outline_is_a_line_between_its_ends() {
        let px = [(10, 10), (10, 60), (10, 20), (10, 40)];
        assert_eq!(area2(&px), 0.0);
        let pair = farthest_pair(&px);
        assert!(pair.contains(&(10, 10)) && pair.contains(&(10, 60)));
    }
}
