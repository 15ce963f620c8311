//! Anti-aliased thick lines in pixel space, for the web path, the limit contour and the
//! charge curves, and the floating-point map from chart data to pixels they are drawn with.
//!
//! Pipeline stage: report writers (PNG plots). Each pixel is drawn once with its best
//! coverage, so joints between segments stay clean.

use std::collections::HashMap;

use anyhow::Result;
use plotters::prelude::*;

use super::frame::{Area, F64Chart};

pub(super) type Segment = ((f64, f64), (f64, f64));

/// Linear map from chart data to backend pixels, kept in floating point.
#[derive(Debug, Clone, Copy)]
pub(super) struct PxMap {
    pub(super) x0: f64,
    pub(super) sx: f64,
    pub(super) px0: f64,
    pub(super) z0: f64,
    pub(super) sz: f64,
    pub(super) pz0: f64,
}

impl PxMap {
    pub(super) fn of(chart: &F64Chart<'_, '_>) -> Self {
        let (xr, zr) = (chart.x_range(), chart.y_range());
        let a = chart.backend_coord(&(xr.start, zr.start));
        let b = chart.backend_coord(&(xr.end, zr.end));
        let scale = |p0: i32, p1: i32, d: f64| {
            if d > 0.0 { f64::from(p1 - p0) / d } else { 0.0 }
        };
        PxMap {
            x0: xr.start,
            sx: scale(a.0, b.0, xr.end - xr.start),
            px0: f64::from(a.0),
            z0: zr.start,
            sz: scale(a.1, b.1, zr.end - zr.start),
            pz0: f64::from(a.1),
        }
    }
    pub(super) fn map(&self, p: (f64, f64)) -> (f64, f64) {
        (
            self.px0 + (p.0 - self.x0) * self.sx,
            self.pz0 + (p.1 - self.z0) * self.sz,
        )
    }
}

/// Anti-aliased thick segments (capsules) of half-width `r` px, in backend pixels. Where
/// segments overlap, each pixel is drawn once with its best coverage, so joints stay clean.
/// Segment k gets `colour(k)`.
pub(super) fn stroke(
    root: &Area<'_>,
    segs: &[Segment],
    r: f64,
    colour: impl Fn(usize) -> RGBColor,
) -> Result<()> {
    let (w, h) = root.dim_in_pixel();
    let (wmax, hmax) = (f64::from(w) - 1.0, f64::from(h) - 1.0);
    let mut cover: HashMap<(i32, i32), (f64, usize)> = HashMap::new();
    for (k, (a, b)) in segs.iter().enumerate() {
        if ![a.0, a.1, b.0, b.1].iter().all(|v| v.is_finite()) {
            continue;
        }
        let x0 = (a.0.min(b.0) - r - 1.0).floor().max(0.0);
        let x1 = (a.0.max(b.0) + r + 1.0).ceil().min(wmax);
        let y0 = (a.1.min(b.1) - r - 1.0).floor().max(0.0);
        let y1 = (a.1.max(b.1) + r + 1.0).ceil().min(hmax);
        if x0 > x1 || y0 > y1 {
            continue;
        }
        let (dx, dy) = (b.0 - a.0, b.1 - a.1);
        let l2 = dx * dx + dy * dy;
        for y in y0 as i32..=y1 as i32 {
            for x in x0 as i32..=x1 as i32 {
                let (px, py) = (f64::from(x), f64::from(y));
                let t = if l2 > 0.0 {
                    (((px - a.0) * dx + (py - a.1) * dy) / l2).clamp(0.0, 1.0)
                } else {
                    0.0
                };
                let d = (px - a.0 - t * dx).hypot(py - a.1 - t * dy);
                let c = (r + 0.5 - d).clamp(0.0, 1.0);
                if c > 0.0 {
                    let e = cover.entry((x, y)).or_insert((0.0, k));
                    if c > e.0 {
                        *e = (c, k);
                    }
                }
            }
        }
    }
    for ((x, y), (c, k)) in cover {
        root.draw_pixel((x, y), &colour(k).mix(c))?;
    }
    Ok(())
}

/// Consecutive pairs of a polyline as segments.
pub(super) fn polyline(pts: &[(f64, f64)]) -> Vec<Segment> {
    match pts.len() {
        0 => Vec::new(),
        1 => vec![(pts[0], pts[0])],
        _ => pts.windows(2).map(|w| (w[0], w[1])).collect(),
    }
}
