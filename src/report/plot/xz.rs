//! Geometry of the x–z views (side view and field map): the extent of everything drawn,
//! padding, and a chart whose axes have one scale (1 m in x = 1 m in z).
//!
//! Pipeline stage: report writers (PNG plots).

use std::f64::consts::TAU;

use anyhow::Result;
use plotters::prelude::*;

use super::frame::{Area, F64Chart, draw_mesh};
use super::{PlotArc, PlotRoller, SideView, coord_ok};

#[derive(Debug, Clone, Copy)]
pub(super) struct Bounds {
    pub(super) x0: f64,
    pub(super) x1: f64,
    pub(super) z0: f64,
    pub(super) z1: f64,
}

impl Bounds {
    pub(super) fn empty() -> Self {
        Bounds {
            x0: f64::INFINITY,
            x1: f64::NEG_INFINITY,
            z0: f64::INFINITY,
            z1: f64::NEG_INFINITY,
        }
    }
    pub(super) fn add(&mut self, x: f64, z: f64) {
        if coord_ok(x) && coord_ok(z) {
            self.x0 = self.x0.min(x);
            self.x1 = self.x1.max(x);
            self.z0 = self.z0.min(z);
            self.z1 = self.z1.max(z);
        }
    }
    pub(super) fn is_empty(&self) -> bool {
        !(self.x0 <= self.x1 && self.z0 <= self.z1)
    }
    pub(super) fn span(&self) -> f64 {
        (self.x1 - self.x0).max(self.z1 - self.z0)
    }
}

pub(super) fn roller_ok(r: &PlotRoller) -> bool {
    coord_ok(r.center[0]) && coord_ok(r.center[1]) && coord_ok(r.radius) && r.radius >= 0.0
}

pub(super) fn arc_points(a: &PlotArc, n: usize) -> Vec<(f64, f64)> {
    if !(coord_ok(a.center[0])
        && coord_ok(a.center[1])
        && coord_ok(a.radius)
        && a.start_angle.is_finite()
        && a.sweep.is_finite())
    {
        return Vec::new();
    }
    let sweep = a.sweep.clamp(-TAU, TAU);
    let n = n.max(2);
    (0..=n)
        .map(|k| {
            let t = a.start_angle + sweep * k as f64 / n as f64;
            (
                a.center[0] + a.radius * t.cos(),
                a.center[1] + a.radius * t.sin(),
            )
        })
        .collect()
}

/// Extent of everything in the side view, unpadded.
pub(super) fn side_bounds(v: &SideView) -> Bounds {
    let mut b = Bounds::empty();
    for r in v.rollers.iter().filter(|r| roller_ok(r)) {
        b.add(r.center[0] - r.radius, r.center[1] - r.radius);
        b.add(r.center[0] + r.radius, r.center[1] + r.radius);
    }
    for s in &v.spans {
        b.add(s.start[0], s.start[1]);
        b.add(s.end[0], s.end[1]);
    }
    for a in &v.arcs {
        for (x, z) in arc_points(a, 32) {
            b.add(x, z);
        }
    }
    for zn in &v.zones {
        b.add(zn.x[0], zn.z[0]);
        b.add(zn.x[1], zn.z[1]);
    }
    for p in &v.points {
        b.add(p.x, p.z);
    }
    for m in &v.markers {
        b.add(m.x, m.z);
    }
    if let Some(g) = v.ground.filter(|g| coord_ok(*g)) {
        if b.is_empty() {
            b.add(0.0, g);
            b.add(1.0, g);
        } else {
            b.add(b.x0, g);
        }
    }
    b
}

/// Generous padding for the side view; leaves room under the floor for its hatching.
pub(super) fn padded(b: Bounds, ground: Option<f64>) -> Bounds {
    if b.is_empty() {
        return Bounds {
            x0: 0.0,
            x1: 1.0,
            z0: 0.0,
            z1: 1.0,
        };
    }
    let pad = 0.08 * b.span().max(1e-3);
    let mut p = Bounds {
        x0: b.x0 - pad,
        x1: b.x1 + pad,
        z0: b.z0 - pad,
        z1: b.z1 + pad,
    };
    if let Some(g) = ground.filter(|g| coord_ok(*g)) {
        p.z0 = p.z0.min(g - pad);
    }
    p
}

pub(super) fn slightly_padded(b: Bounds) -> Bounds {
    if b.is_empty() {
        return padded(b, None);
    }
    let pad = 0.01 * b.span().max(1e-3);
    Bounds {
        x0: b.x0 - pad,
        x1: b.x1 + pad,
        z0: b.z0 - pad,
        z1: b.z1 + pad,
    }
}

/// Widens `b` so that one metre has the same length in pixels on both axes. With
/// `keep_bottom` the lower edge stays put (a floor stays at the bottom) and all extra
/// height goes on top.
fn equal_aspect(b: Bounds, pw: u32, ph: u32, keep_bottom: bool) -> Bounds {
    let (pw, ph) = (pw.max(1) as f64, ph.max(1) as f64);
    let m_per_px = ((b.x1 - b.x0) / pw).max((b.z1 - b.z0) / ph).max(1e-9);
    let (cx, cz) = ((b.x0 + b.x1) / 2.0, (b.z0 + b.z1) / 2.0);
    let z0 = if keep_bottom {
        b.z0
    } else {
        cz - m_per_px * ph / 2.0
    };
    Bounds {
        x0: cx - m_per_px * pw / 2.0,
        x1: cx + m_per_px * pw / 2.0,
        z0,
        z1: z0 + m_per_px * ph,
    }
}

pub(super) fn xz_chart<'a, 'b>(
    area: &'a Area<'b>,
    b: Bounds,
    keep_bottom: bool,
) -> Result<F64Chart<'a, 'b>> {
    let mut builder = ChartBuilder::on(area);
    builder
        .margin(12)
        .x_label_area_size(46)
        .y_label_area_size(70);
    let (pw, ph) = builder
        .build_cartesian_2d(0.0..1.0, 0.0..1.0)?
        .plotting_area()
        .dim_in_pixel();
    let e = equal_aspect(b, pw, ph, keep_bottom);
    Ok(builder.build_cartesian_2d(e.x0..e.x1, e.z0..e.z1)?)
}

pub(super) fn xz_mesh(chart: &mut F64Chart<'_, '_>) -> Result<()> {
    draw_mesh(chart, "x [m]", "z [m]", Some((12, 8)))
}

/// Pixels per metre of an equal-aspect chart.
pub(super) fn px_per_m(chart: &F64Chart<'_, '_>) -> f64 {
    let xr = chart.x_range();
    let (a, _) = chart.backend_coord(&(xr.start, 0.0));
    let (b, _) = chart.backend_coord(&(xr.end, 0.0));
    let d = xr.end - xr.start;
    if d > 0.0 { f64::from(b - a) / d } else { 1.0 }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn equal_aspect_keeps_one_scale_and_contains_the_data() {
        let b = Bounds {
            x0: -1.0,
            x1: 4.0,
            z0: 0.0,
            z1: 1.0,
        };
        for keep in [false, true] {
            let e = equal_aspect(b, 900, 500, keep);
            let (sx, sz) = ((e.x1 - e.x0) / 900.0, (e.z1 - e.z0) / 500.0);
            assert!((sx - sz).abs() <= 1e-12 * sx, "{sx} m/px vs {sz} m/px");
            assert!(e.x0 <= b.x0 && e.x1 >= b.x1 && e.z0 <= b.z0 && e.z1 >= b.z1);
            if keep {
                assert_eq!(e.z0, b.z0);
            }
        }
    }
}
