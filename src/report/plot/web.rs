//! The web path on an x–z chart: free spans and wraps sampled at a few pixels, drawn on a
//! dark underlay and coloured by charge density (side view) or as a light tape (field map).
//!
//! Pipeline stage: report writers (PNG plots).

use std::f64::consts::TAU;

use anyhow::Result;
use plotters::prelude::*;

use super::colour::{NODATA, UNDERLAY, sigma_colour};
use super::frame::{Area, F64Chart};
use super::stroke::{PxMap, Segment, polyline, stroke};
use super::xz::arc_points;
use super::{SideView, coord_ok};

/// Points of a piece of web path [m] and the charge density of each piece between them [C/m²].
type Strand = (Vec<(f64, f64)>, Vec<f64>);

/// The web path as strands sampled about every five pixels (`m_per_px` metres per pixel).
fn web_strands(v: &SideView, m_per_px: f64) -> Vec<Strand> {
    let step = (5.0 * m_per_px).max(1e-12);
    let mut out = Vec::new();
    for s in &v.spans {
        let (a, b) = ((s.start[0], s.start[1]), (s.end[0], s.end[1]));
        if ![a.0, a.1, b.0, b.1].iter().all(|v| coord_ok(*v)) {
            continue;
        }
        let len = (b.0 - a.0).hypot(b.1 - a.1);
        let n = (len / step).ceil().clamp(1.0, 2000.0) as usize;
        let pts = (0..=n)
            .map(|k| {
                let f = k as f64 / n as f64;
                (a.0 + (b.0 - a.0) * f, a.1 + (b.1 - a.1) * f)
            })
            .collect();
        let sig = (0..n)
            .map(|k| {
                let f = (k as f64 + 0.5) / n as f64;
                s.sigma_start + (s.sigma_end - s.sigma_start) * f
            })
            .collect();
        out.push((pts, sig));
    }
    for a in &v.arcs {
        let len = a.radius.abs() * a.sweep.abs().min(TAU);
        let n = if len.is_finite() {
            (len / step).ceil().clamp(2.0, 2000.0) as usize
        } else {
            2
        };
        let pts = arc_points(a, n);
        if pts.len() >= 2 {
            let sig = vec![a.sigma; pts.len() - 1];
            out.push((pts, sig));
        }
    }
    out
}

/// Web path: coloured by σ on a dark underlay (`Some(σ_max)`), or as a light tape (`None`).
pub(super) fn draw_web(
    root: &Area<'_>,
    chart: &F64Chart<'_, '_>,
    v: &SideView,
    sigma_max: Option<f64>,
) -> Result<()> {
    let map = PxMap::of(chart);
    let strands = web_strands(v, 1.0 / map.sx.abs().max(1e-12));
    let (under, over) = if sigma_max.is_some() {
        (3.5, 2.2)
    } else {
        (3.0, 1.3)
    };
    let px: Vec<Vec<(f64, f64)>> = strands
        .iter()
        .map(|(pts, _)| pts.iter().map(|p| map.map(*p)).collect())
        .collect();
    let all: Vec<Segment> = px.iter().flat_map(|p| polyline(p)).collect();
    stroke(root, &all, under, |_| UNDERLAY)?;
    for (p, (_, sig)) in px.iter().zip(strands.iter()) {
        stroke(root, &polyline(p), over, |k| {
            let s = sig.get(k).copied().unwrap_or(f64::NAN);
            match sigma_max {
                Some(m) if s.is_finite() => sigma_colour(0.5 * (1.0 + s / m)),
                Some(_) => NODATA,
                None => WHITE,
            }
        })?;
    }
    Ok(())
}
