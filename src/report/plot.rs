//! PNG plots of a web line: side view, field-strength map and charge along the web path.
//!
//! Writers only format. Every function here receives plain data in SI units and draws
//! it; nothing physical is computed. Units are converted for labels only
//! (C/m² → µC/m², V/m → kV/m; lengths stay in m).
//!
//! ## Colour scales
//! Charge density, diverging and symmetric about zero:
//! $$ t = \tfrac12 \left( 1 + \frac{\sigma}{\sigma_\mathrm{max}} \right) $$
//! Field strength, logarithmic:
//! $$ t = \frac{\log_{10}|E| - \log_{10}E_\mathrm{lo}}{\log_{10}E_\mathrm{hi} - \log_{10}E_\mathrm{lo}} $$
//! Both are clamped to \[0, 1\]; the colour is a piecewise-linear blend of fixed anchor colours.
//!
//! ## Limit contour
//! Marching squares on the node values $f = \ln(|E| / E_\mathrm{lim})$; the contour crosses the
//! cell edge from node a to node b at the fraction
//! $$ \lambda = \frac{f_a}{f_a - f_b} $$
//! (linear in $\ln|E|$). Saddle cells are resolved with the mean of the four corners.
//!
//! ## PNG encoding
//! 8-bit RGB, one IDAT chunk. Each row is filtered with Sub or Up (whichever leaves fewer
//! non-zero bytes), then compressed as one fixed-Huffman deflate block whose only
//! back-references are runs (distance 1). Checksums:
//! $$ \mathrm{CRC32}: \text{reflected polynomial } \mathtt{0xEDB88320} \text{ over chunk type and data} $$
//! $$ A = 1 + \sum_i d_i \bmod 65521, \quad B = \sum_i A_i \bmod 65521, \quad
//!    \mathrm{Adler32} = 65536\,B + A $$
//!
//! | symbol | meaning | unit |
//! | --- | --- | --- |
//! | σ | surface charge density | C/m² (labels: µC/m²) |
//! | σ_max | half-range of the charge colour bar | C/m² |
//! | \|E\| | field-strength magnitude | V/m (labels: kV/m) |
//! | E_lo, E_hi | ends of the field colour bar (whole decades) | V/m |
//! | E_lim | limit drawn as a contour | V/m |
//! | x, z | along-line and vertical coordinates | m |
//! | s | arc length along the web path | m |
//! | t | position on a colour scale | 1 |
//! | d_i | raw (filtered) image bytes | 1 |
//!
//! ## Assumptions
//! - The side view and field map are drawn to equal scale (1 m in x = 1 m in z).
//! - Field-grid values belong to the nodes; each cell spans from midpoint to midpoint.
//! - Non-finite values (and magnitudes above [`MAX_MAGNITUDE`] in the plotted unit)
//!   are left out of the picture, never fatal.
//!
//! ## Valid range
//! Width and height [`MIN_PIXELS`]..=[`MAX_PIXELS`] px. The field colour bar spans
//! 1 to 5 decades. Point kinds get six colours in turn; at most 16 kinds are listed.
//! Text is drawn with the bundled font only (no system fonts are read).
//!
//! ## Reference
//! - W3C / ISO/IEC 15948:2003, *Portable Network Graphics (PNG) Specification*, 2nd ed.
//! - P. Deutsch, J.-L. Gailly, RFC 1950 *ZLIB Compressed Data Format*; P. Deutsch,
//!   RFC 1951 *DEFLATE Compressed Data Format* (fixed Huffman codes, section 3.2.6).
//! - W. E. Lorensen, H. E. Cline, "Marching cubes", *Computer Graphics* 21(4), 1987
//!   (the two-dimensional case is marching squares).
//! - Font: DejaVu Sans, Bitstream Vera licence, see `assets/DejaVuSans-LICENSE.txt`.

use std::collections::{BTreeSet, HashMap};
use std::f64::consts::TAU;
use std::panic::{AssertUnwindSafe, catch_unwind};
use std::sync::OnceLock;

use anyhow::{Result, anyhow, ensure};
use plotters::coord::Shift;
use plotters::coord::types::RangedCoordf64;
use plotters::element::DashedPathElement;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};
use plotters::style::{FontDesc, FontStyle};

/// Smallest accepted image width or height [px].
pub const MIN_PIXELS: u32 = 320;
/// Largest accepted image width or height [px].
pub const MAX_PIXELS: u32 = 8192;
/// Values whose magnitude exceeds this, in the unit plotted (m, µC/m², kV/m), are skipped [1].
pub const MAX_MAGNITUDE: f64 = 1e12;

// ---------------------------------------------------------------------------------------------
// Input data
// ---------------------------------------------------------------------------------------------

/// A roller (idler, drum, nip roll) seen from the side.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct PlotRoller {
    /// Identifier printed on or beside the roller.
    pub id: String,
    /// Centre `[x, z]` [m].
    pub center: [f64; 2],
    /// Radius [m].
    pub radius: f64,
    /// Earthing state: `"grounded"`, `"isolated"` or `"insulating"`; anything else is
    /// drawn as "unspecified".
    pub earthing: String,
}

/// A free span of web, a straight line between two tangent points.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct PlotSpan {
    /// Span name (not drawn; kept for callers' bookkeeping).
    pub name: String,
    /// Start point `[x, z]` [m].
    pub start: [f64; 2],
    /// End point `[x, z]` [m].
    pub end: [f64; 2],
    /// Centreline charge density at the start [C/m²].
    pub sigma_start: f64,
    /// Centreline charge density at the end [C/m²]; colour is interpolated linearly.
    pub sigma_end: f64,
}

/// A wrap of web around a roller, a circular arc.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct PlotArc {
    /// Arc centre `[x, z]` [m].
    pub center: [f64; 2],
    /// Arc radius [m].
    pub radius: f64,
    /// Angle of the arc start, measured from +x towards +z [rad].
    pub start_angle: f64,
    /// Signed sweep, positive counter-clockwise (from +x towards +z) [rad].
    pub sweep: f64,
    /// Centreline charge density on the wrap [C/m²].
    pub sigma: f64,
}

/// A hazardous-area zone, an axis-aligned rectangle in the side view.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct PlotZone {
    /// Identifier, used when `label` is empty.
    pub id: String,
    /// Text drawn in the zone.
    pub label: String,
    /// x extent `[x_a, x_b]` in any order [m].
    pub x: [f64; 2],
    /// z extent `[z_a, z_b]` in any order [m].
    pub z: [f64; 2],
    /// Zone number (0, 1, 2 for gas, 20, 21, 22 for dust) [1].
    pub zone: u8,
}

/// An evaluation point (field meter, operator position, check point).
#[derive(Debug, Clone, PartialEq, Default)]
pub struct PlotPoint {
    /// Identifier printed beside the point.
    pub id: String,
    /// Kind of point; each distinct kind gets its own colour and legend entry.
    pub kind: String,
    /// Position along the line [m].
    pub x: f64,
    /// Height [m].
    pub z: f64,
}

/// A device on the line (for example a static eliminator), drawn as a small bar.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct PlotMarker {
    /// Identifier, printed when `label` is empty.
    pub id: String,
    /// Position along the line [m].
    pub x: f64,
    /// Height [m].
    pub z: f64,
    /// Text printed under the bar.
    pub label: String,
}

/// Everything drawn in the side view of the line (x along the line, z up).
#[derive(Debug, Clone, PartialEq, Default)]
pub struct SideView {
    /// Title printed above the plot.
    pub title: String,
    /// Rollers.
    pub rollers: Vec<PlotRoller>,
    /// Free spans of the web path.
    pub spans: Vec<PlotSpan>,
    /// Wraps of the web path around rollers.
    pub arcs: Vec<PlotArc>,
    /// Hazardous-area zones.
    pub zones: Vec<PlotZone>,
    /// Evaluation points.
    pub points: Vec<PlotPoint>,
    /// Devices such as eliminators.
    pub markers: Vec<PlotMarker>,
    /// Height of an earthed floor plane, if any [m].
    pub ground: Option<f64>,
}

/// Field strength sampled on a rectangular x–z grid at one across-web position.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct FieldGrid {
    /// Node x positions, strictly increasing [m].
    pub xs: Vec<f64>,
    /// Node z positions, strictly increasing [m].
    pub zs: Vec<f64>,
    /// Field magnitude, row-major `e_mag[iz * xs.len() + ix]`; NaN where not computed [V/m].
    pub e_mag: Vec<f64>,
    /// Across-web position of the slice [m].
    pub y: f64,
    /// Draw a contour at this magnitude [V/m] with this label.
    pub limit: Option<(f64, String)>,
}

/// Charge density along the web path against arc length.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct ChargeCurve {
    /// Arc length of the samples [m].
    pub s: Vec<f64>,
    /// Centreline charge density, one per `s` [C/m²].
    pub sigma_c: Vec<f64>,
    /// Across-web maximum charge density, one per `s`, or empty [C/m²].
    pub sigma_peak: Vec<f64>,
    /// Nodes along the path (rollers, devices): `(s [m], label)`, drawn as vertical ticks.
    pub nodes: Vec<(f64, String)>,
    /// Limits: `(σ [C/m²], label)`, drawn as horizontal lines.
    pub limits: Vec<(f64, String)>,
    /// More curves on the same `s` grid: `(name, σ [C/m²])`.
    pub extra: Vec<(String, Vec<f64>)>,
    /// Points with error bars: `(s [m], σ [C/m²], low [C/m²], high [C/m²], label)`.
    pub markers: Vec<(f64, f64, f64, f64, String)>,
}

// ---------------------------------------------------------------------------------------------
// Public entry points
// ---------------------------------------------------------------------------------------------

/// Side view of the line: rollers, web path coloured by charge density, zones, points,
/// markers and the floor, to equal scale. Returns PNG bytes.
pub fn side_view_png(v: &SideView, width: u32, height: u32) -> Result<Vec<u8>> {
    render(width, height, |root| {
        let title = non_empty(&v.title, "Web line");
        let (main, panel) = layout(
            root,
            &format!("{title}: side view"),
            "x along the line, z height, equal scale; web colour = centreline charge density σ",
        )?;
        let bounds = padded(side_bounds(v), v.ground);
        let mut chart = xz_chart(&main, bounds, v.ground.is_some_and(coord_ok))?;
        xz_mesh(&mut chart)?;
        draw_ground(root, &chart, v.ground, true)?;
        draw_zones(&chart, &v.zones, true)?;
        draw_rollers(root, &chart, &v.rollers)?;
        let smax = sigma_scale(v);
        draw_web(root, &chart, v, Some(smax))?;
        draw_markers(root, &chart, &v.markers)?;
        draw_points(root, &chart, &v.points)?;
        draw_zone_labels(root, &chart, &v.zones)?;
        draw_roller_labels(root, &chart, &v.rollers)?;
        if side_bounds(v).is_empty() {
            empty_note(
                root,
                &chart,
                "nothing to draw: no rollers, web path, zones or points",
            )?;
        }

        let (px, py, pw, ph) = panel_box(&panel);
        let cmap = |t: f64| sigma_colour(t);
        let m = smax * 1e6;
        let ticks: Vec<(f64, String)> = [-1.0, -0.5, 0.0, 0.5, 1.0]
            .iter()
            .map(|f| ((f + 1.0) / 2.0, fmt_num(f * m)))
            .collect();
        let bar_h = bar_height(ph);
        let bottom = colour_bar(root, (px, py), bar_h, "σ [µC/m²]", &cmap, &ticks, &[])?;
        let mut items = Vec::new();
        if !v.spans.is_empty() || !v.arcs.is_empty() {
            items.push((Sym::Gradient, "web path (colour = σ)".to_string()));
        }
        items.extend(roller_legend(&v.rollers));
        items.extend(zone_legend(&v.zones, true));
        items.extend(point_legend(&v.points));
        if !v.markers.is_empty() {
            items.push((Sym::Bar, "device / eliminator".to_string()));
        }
        if v.ground.is_some_and(coord_ok) {
            items.push((Sym::Ground, "earthed floor".to_string()));
        }
        legend(root, (px, bottom + 28), pw, py + ph, &items)
    })
}

/// Field-strength map |E| on a logarithmic colour scale (kV/m) with the web path, rollers,
/// zones, points and the limit contour drawn over it. Returns PNG bytes.
///
/// Fails when `e_mag.len() != xs.len() * zs.len()` or when `xs` / `zs` are not finite and
/// strictly increasing.
pub fn field_map_png(v: &SideView, g: &FieldGrid, width: u32, height: u32) -> Result<Vec<u8>> {
    let (nx, nz) = (g.xs.len(), g.zs.len());
    ensure!(
        nx.checked_mul(nz) == Some(g.e_mag.len()),
        "field grid: e_mag has {} values, expected xs.len() × zs.len() = {nx} × {nz}",
        g.e_mag.len()
    );
    ensure!(
        increasing(&g.xs),
        "field grid: xs must be finite and strictly increasing"
    );
    ensure!(
        increasing(&g.zs),
        "field grid: zs must be finite and strictly increasing"
    );
    render(width, height, |root| {
        let title = non_empty(&v.title, "Web line");
        let slice = if g.y.is_finite() {
            format!("slice at y = {} mm", fmt_num(g.y * 1e3))
        } else {
            "slice position unknown".to_string()
        };
        let (main, panel) = layout(
            root,
            &format!("{title}: electric field strength |E|"),
            &format!("{slice}; logarithmic colour scale; equal scale in x and z"),
        )?;
        let ex = cell_edges(&g.xs);
        let ez = cell_edges(&g.zs);
        let mut b = side_bounds(v);
        let bounds = if let (Some(x), Some(z)) = (ex.as_ref(), ez.as_ref()) {
            for (&xa, &za) in [x[0], x[x.len() - 1]]
                .iter()
                .zip([z[0], z[z.len() - 1]].iter())
            {
                b.add(xa, za);
            }
            b.add(x[0], z[z.len() - 1]);
            b.add(x[x.len() - 1], z[0]);
            let mut p = slightly_padded(b);
            if let Some(g) = v.ground.filter(|g| coord_ok(*g)) {
                p.z0 = p.z0.min(g - 0.04 * p.span());
            }
            p
        } else {
            padded(b, v.ground)
        };
        let mut chart = xz_chart(&main, bounds, v.ground.is_some_and(coord_ok))?;
        xz_mesh(&mut chart)?;

        let (llo, lhi) = log_range(&g.e_mag);
        let t_of = |e: f64| ((e.max(1e-300).log10() - llo) / (lhi - llo)).clamp(0.0, 1.0);
        let mut any_nan = false;
        if let (Some(x), Some(z)) = (ex.as_ref(), ez.as_ref()) {
            let area = chart.plotting_area();
            area.draw(&Rectangle::new(
                [(x[0], z[0]), (x[nx], z[nz])],
                NODATA.filled(),
            ))?;
            for iz in 0..nz {
                for ix in 0..nx {
                    let e = g.e_mag.get(iz * nx + ix).copied().unwrap_or(f64::NAN);
                    if !e.is_finite() {
                        any_nan = true;
                        continue;
                    }
                    let c = field_colour(t_of(e));
                    area.draw(&Rectangle::new(
                        [(x[ix], z[iz]), (x[ix + 1], z[iz + 1])],
                        c.filled(),
                    ))?;
                }
            }
        }
        draw_ground(root, &chart, v.ground, false)?;
        draw_zones(&chart, &v.zones, false)?;
        draw_rollers(root, &chart, &v.rollers)?;
        draw_web(root, &chart, v, None)?;
        let limit = g
            .limit
            .as_ref()
            .filter(|(e, _)| e.is_finite() && *e > 0.0 && *e / 1e3 <= MAX_MAGNITUDE);
        let mut contour_drawn = false;
        if let Some((e_lim, label)) = limit {
            let segs = contour(&g.xs, &g.zs, &g.e_mag, *e_lim);
            contour_drawn = !segs.is_empty();
            draw_contour(root, &chart, &segs, label)?;
        }
        draw_markers(root, &chart, &v.markers)?;
        draw_points(root, &chart, &v.points)?;
        draw_zone_labels(root, &chart, &v.zones)?;
        draw_roller_labels(root, &chart, &v.rollers)?;
        if !g.e_mag.iter().any(|e| e.is_finite()) {
            empty_note(root, &chart, "no field values to show")?;
        }

        let (px, py, pw, ph) = panel_box(&panel);
        let cmap = |t: f64| field_colour(t);
        let ticks = log_ticks(llo, lhi);
        let marks: Vec<(f64, String)> = limit
            .iter()
            .map(|(e, l)| (t_of(*e), l.clone()))
            .filter(|(t, _)| *t > 0.0 && *t < 1.0)
            .collect();
        let bar_h = bar_height(ph);
        let bottom = colour_bar(root, (px, py), bar_h, "|E| [kV/m]", &cmap, &ticks, &marks)?;
        let mut items = Vec::new();
        if let Some((e, l)) = limit {
            let text = format!("{} ({} kV/m)", non_empty(l, "limit"), fmt_num(e / 1e3));
            let text = if contour_drawn {
                text
            } else {
                format!("{text}: not reached")
            };
            items.push((Sym::Contour, text));
        }
        if !v.spans.is_empty() || !v.arcs.is_empty() {
            items.push((Sym::Tape, "web path".to_string()));
        }
        items.extend(roller_legend(&v.rollers));
        items.extend(zone_legend(&v.zones, false));
        items.extend(point_legend(&v.points));
        if !v.markers.is_empty() {
            items.push((Sym::Bar, "device / eliminator".to_string()));
        }
        if v.ground.is_some_and(coord_ok) {
            items.push((Sym::Ground, "earthed floor".to_string()));
        }
        if any_nan {
            items.push((Sym::Swatch(NODATA), "not computed".to_string()));
        }
        legend(root, (px, bottom + 28), pw, py + ph, &items)
    })
}

/// Charge density along the web path against arc length s: centreline, across-web peak,
/// extra curves, measured points with error bars, node ticks and limit lines.
/// Returns PNG bytes.
///
/// Fails when `sigma_c` or an extra curve does not have one value per `s`, or when
/// `sigma_peak` is neither empty nor of that length.
pub fn charge_png(c: &ChargeCurve, width: u32, height: u32) -> Result<Vec<u8>> {
    let n = c.s.len();
    ensure!(
        c.sigma_c.len() == n,
        "charge curve: sigma_c has {} values, s has {n}",
        c.sigma_c.len()
    );
    ensure!(
        c.sigma_peak.is_empty() || c.sigma_peak.len() == n,
        "charge curve: sigma_peak has {} values, s has {n} (give none or one per s)",
        c.sigma_peak.len()
    );
    for (name, ys) in &c.extra {
        ensure!(
            ys.len() == n,
            "charge curve: extra curve '{name}' has {} values, s has {n}",
            ys.len()
        );
    }
    render(width, height, |root| {
        let (main, panel) = layout(
            root,
            "Surface charge density along the web path",
            "σ against arc length s; vertical ticks mark nodes of the path",
        )?;
        let mu = |v: f64| v * 1e6;
        let mut sb = Range1::default();
        let mut yb = Range1::default();
        yb.add(0.0);
        c.s.iter().for_each(|&s| sb.add(s));
        c.nodes.iter().for_each(|(s, _)| sb.add(*s));
        for (s, v, lo, hi, _) in &c.markers {
            sb.add(*s);
            if val_ok(*s) {
                [*v, *lo, *hi].iter().for_each(|&y| yb.add(mu(y)));
            }
        }
        let curves = charge_curves(c);
        for (_, _, ys) in &curves {
            for (s, y) in c.s.iter().zip(ys.iter()) {
                if val_ok(*s) {
                    yb.add(mu(*y));
                }
            }
        }
        c.limits.iter().for_each(|(y, _)| yb.add(mu(*y)));
        let (s0, s1) = sb.padded(0.02, (0.0, 1.0));
        let (y0, y1) = yb.padded(0.08, (-1.0, 1.0));

        let mut builder = ChartBuilder::on(&main);
        builder
            .margin(12)
            .margin_top(60)
            .x_label_area_size(46)
            .y_label_area_size(76);
        let mut chart = builder.build_cartesian_2d(s0..s1, y0..y1)?;
        chart
            .configure_mesh()
            .x_desc("arc length s [m]")
            .y_desc("σ [µC/m²]")
            .label_style(mesh_font(14.0))
            .axis_desc_style(mesh_font(15.0))
            .bold_line_style(GRID)
            .light_line_style(LIGHT_GRID)
            .axis_style(MUTED)
            .x_label_formatter(&|v| fmt_num(*v))
            .y_label_formatter(&|v| fmt_num(*v))
            .draw()?;
        let area = chart.plotting_area();
        if 0.0 > y0 && 0.0 < y1 {
            area.draw(&PathElement::new(
                vec![(s0, 0.0), (s1, 0.0)],
                MUTED.stroke_width(1),
            ))?;
        }
        // nodes: vertical ticks, labels staggered above the plot
        let (_, top) = chart.backend_coord(&(s0, y1));
        let mut nodes: Vec<&(f64, String)> = c
            .nodes
            .iter()
            .filter(|(s, _)| val_ok(*s) && *s >= s0 && *s <= s1)
            .collect();
        nodes.sort_by(|a, b| a.0.total_cmp(&b.0));
        let style = text(13.0, INK);
        let mut row_end = [i32::MIN; 3];
        for (s, label) in nodes {
            area.draw(&DashedPathElement::new(
                vec![(*s, y0), (*s, y1)],
                4,
                4,
                NODE.stroke_width(1),
            ))?;
            let (x, _) = chart.backend_coord(&(*s, y1));
            let label = fit(root, label, &style, 160)?;
            let (tw, _) = text_size(root, &label, &style)?;
            let left = x - tw / 2;
            let row = (0..3)
                .find(|r| row_end[*r] + 6 < left)
                .unwrap_or_else(|| (0..3).min_by_key(|r| row_end[*r]).unwrap_or(0));
            row_end[row] = left + tw;
            let y_text = top - 6 - 17 * row as i32;
            root.draw(&PathElement::new(
                vec![(x, top), (x, y_text)],
                NODE.stroke_width(1),
            ))?;
            tag(
                root,
                &label,
                (x, y_text),
                HPos::Center,
                VPos::Bottom,
                &style,
                true,
            )?;
        }
        // limits
        for (y, label) in &c.limits {
            let y = mu(*y);
            if !val_ok(y) || y < y0 || y > y1 {
                continue;
            }
            area.draw(&DashedPathElement::new(
                vec![(s0, y), (s1, y)],
                10,
                6,
                LIMIT.stroke_width(2),
            ))?;
            let (x, py) = chart.backend_coord(&(s1, y));
            let text_l = format!("{} ({} µC/m²)", non_empty(label, "limit"), fmt_num(y));
            tag(
                root,
                &text_l,
                (x - 8, py - 4),
                HPos::Right,
                VPos::Bottom,
                &text(13.0, LIMIT),
                true,
            )?;
        }
        // curves, the first (centreline) on top
        let map = PxMap::of(&chart);
        for (_, (colour, width), ys) in curves.iter().rev() {
            for run in finite_runs(&c.s, ys, mu) {
                let px: Vec<(f64, f64)> = run.iter().map(|p| map.map(*p)).collect();
                stroke(root, &polyline(&px), f64::from(*width) / 2.0, |_| *colour)?;
            }
        }
        // measured points with error bars
        for (s, v, lo, hi, label) in &c.markers {
            let (v, lo, hi) = (mu(*v), mu(*lo), mu(*hi));
            if !val_ok(*s) || !val_ok(v) {
                continue;
            }
            if val_ok(lo) && val_ok(hi) {
                let a = chart.backend_coord(&(*s, lo));
                let b = chart.backend_coord(&(*s, hi));
                let st = INK.stroke_width(2);
                root.draw(&PathElement::new(vec![a, b], st))?;
                root.draw(&PathElement::new(vec![(a.0 - 5, a.1), (a.0 + 5, a.1)], st))?;
                root.draw(&PathElement::new(vec![(b.0 - 5, b.1), (b.0 + 5, b.1)], st))?;
            }
            let p = chart.backend_coord(&(*s, v));
            root.draw(&Circle::new(p, 5, MEASURED.filled()))?;
            root.draw(&Circle::new(p, 5, INK.stroke_width(1)))?;
            tag(
                root,
                label,
                (p.0 + 9, p.1),
                HPos::Left,
                VPos::Center,
                &text(13.0, INK),
                true,
            )?;
        }

        let drawable = curves
            .iter()
            .any(|(_, _, ys)| !finite_runs(&c.s, ys, mu).is_empty());
        if !drawable && c.markers.is_empty() {
            empty_note(root, &chart, "no charge density values to show")?;
        }

        let (px, py, pw, ph) = panel_box(&panel);
        let mut items: Vec<(Sym, String)> = curves
            .iter()
            .map(|(name, (colour, width), _)| (Sym::Line(*colour, *width), name.clone()))
            .collect();
        if !c.markers.is_empty() {
            items.push((Sym::Measured, "measured (error bar)".to_string()));
        }
        if !c.limits.is_empty() {
            items.push((Sym::Dashed(LIMIT), "limit".to_string()));
        }
        if !c.nodes.is_empty() {
            items.push((Sym::Dashed(NODE), "node of the path".to_string()));
        }
        legend(root, (px, py), pw, py + ph, &items)
    })
}

// ---------------------------------------------------------------------------------------------
// Rendering frame, fonts, layout
// ---------------------------------------------------------------------------------------------

type Area<'a> = DrawingArea<BitMapBackend<'a>, Shift>;
type F64Chart<'a, 'b> =
    ChartContext<'a, BitMapBackend<'b>, Cartesian2d<RangedCoordf64, RangedCoordf64>>;

static FONT_BYTES: &[u8] = include_bytes!("../../assets/DejaVuSans.ttf");
const FAMILY: &str = "sans-serif";

const INK: RGBColor = RGBColor(33, 37, 41);
const MUTED: RGBColor = RGBColor(105, 110, 118);
const GRID: RGBColor = RGBColor(222, 225, 230);
const LIGHT_GRID: RGBColor = RGBColor(243, 244, 246);
const NODATA: RGBColor = RGBColor(205, 205, 205);
const GROUND_FILL: RGBColor = RGBColor(238, 234, 226);
const GROUND_INK: RGBColor = RGBColor(92, 80, 64);
const UNDERLAY: RGBColor = RGBColor(28, 30, 34);
const MARKER: RGBColor = RGBColor(0, 122, 112);
const LIMIT: RGBColor = RGBColor(188, 28, 48);
const NODE: RGBColor = RGBColor(140, 145, 152);
const MEASURED: RGBColor = RGBColor(250, 250, 250);
const CONTOUR: RGBColor = RGBColor(255, 48, 168);
const POINT_PALETTE: [RGBColor; 6] = [
    RGBColor(118, 42, 168),
    RGBColor(0, 104, 55),
    RGBColor(170, 74, 0),
    RGBColor(196, 0, 120),
    RGBColor(0, 86, 168),
    RGBColor(84, 84, 84),
];
const CURVE_PALETTE: [RGBColor; 6] = [
    RGBColor(0, 140, 112),
    RGBColor(142, 56, 170),
    RGBColor(120, 120, 120),
    RGBColor(176, 140, 0),
    RGBColor(0, 150, 200),
    RGBColor(200, 80, 120),
];

/// Registers the bundled font once; plotters draws no text before that.
fn ensure_font() -> Result<()> {
    static REGISTERED: OnceLock<bool> = OnceLock::new();
    let ok = *REGISTERED.get_or_init(|| {
        plotters::style::register_font(FAMILY, FontStyle::Normal, FONT_BYTES).is_ok()
    });
    ensure!(ok, "the bundled DejaVu Sans font could not be loaded");
    Ok(())
}

/// Checks the size, draws into an RGB buffer and encodes it as PNG. A panic inside the
/// plotting library is turned into an error.
fn render<F>(width: u32, height: u32, draw: F) -> Result<Vec<u8>>
where
    F: FnOnce(&Area<'_>) -> Result<()>,
{
    ensure!(
        (MIN_PIXELS..=MAX_PIXELS).contains(&width) && (MIN_PIXELS..=MAX_PIXELS).contains(&height),
        "plot size {width} × {height} px is outside {MIN_PIXELS}..={MAX_PIXELS} px per side"
    );
    ensure_font()?;
    let len = (width as usize) * (height as usize) * 3;
    let mut buf = vec![255u8; len];
    let outcome = catch_unwind(AssertUnwindSafe(|| -> Result<()> {
        let root = BitMapBackend::with_buffer(&mut buf, (width, height)).into_drawing_area();
        // the buffer starts white, so no fill is needed
        draw(&root)?;
        root.present()?;
        Ok(())
    }));
    match outcome {
        Ok(r) => r?,
        Err(_) => return Err(anyhow!("the plotting library failed while drawing")),
    }
    encode_png(width, height, &buf)
}

/// Title block on top, a legend panel on the right; returns (plot area, panel).
fn layout<'a>(root: &Area<'a>, title: &str, subtitle: &str) -> Result<(Area<'a>, Area<'a>)> {
    let (w, _) = root.dim_in_pixel();
    let (head, body) = root.split_vertically(58);
    let (hx, hy) = head.get_base_pixel();
    let max_w = w.saturating_sub(40) as i32;
    let title_style = text(22.0, INK);
    let t = fit(root, title, &title_style, max_w)?;
    tag(
        root,
        &t,
        (hx + 18, hy + 10),
        HPos::Left,
        VPos::Top,
        &title_style,
        false,
    )?;
    let sub_style = text(14.0, MUTED);
    let s = fit(root, subtitle, &sub_style, max_w)?;
    tag(
        root,
        &s,
        (hx + 18, hy + 38),
        HPos::Left,
        VPos::Top,
        &sub_style,
        false,
    )?;
    let panel_w = ((w as f64) * 0.2).clamp(150.0, 270.0) as u32;
    let (main, panel) = body.split_horizontally(w.saturating_sub(panel_w));
    Ok((main, panel))
}

/// Usable box of the right panel: (x, y, width, height) in backend pixels.
fn panel_box(panel: &Area<'_>) -> (i32, i32, i32, i32) {
    let (x, y) = panel.get_base_pixel();
    let (w, h) = panel.dim_in_pixel();
    (x + 8, y + 12, w as i32 - 16, h as i32 - 24)
}

fn bar_height(panel_h: i32) -> i32 {
    ((panel_h as f64) * 0.36).clamp(60.0, 300.0) as i32
}

fn text(size: f64, colour: RGBColor) -> TextStyle<'static> {
    TextStyle {
        font: FontDesc::new(FontFamily::Name(FAMILY), size, FontStyle::Normal),
        color: colour.to_backend_color(),
        pos: Pos::new(HPos::Left, VPos::Top),
    }
}

fn mesh_font(size: f64) -> TextStyle<'static> {
    TextStyle {
        font: FontDesc::new(FontFamily::Name(FAMILY), size, FontStyle::Normal),
        color: INK.to_backend_color(),
        pos: Pos::default(),
    }
}

fn text_size(root: &Area<'_>, s: &str, style: &TextStyle<'_>) -> Result<(i32, i32)> {
    let (w, h) = root.estimate_text_size(s, style)?;
    Ok((w as i32, h as i32))
}

/// Shortens `s` with an ellipsis until it is at most `max_w` pixels wide.
fn fit(root: &Area<'_>, s: &str, style: &TextStyle<'_>, max_w: i32) -> Result<String> {
    if text_size(root, s, style)?.0 <= max_w {
        return Ok(s.to_string());
    }
    let mut chars: Vec<char> = s.chars().collect();
    while !chars.is_empty() {
        chars.pop();
        let t: String = chars.iter().collect::<String>() + "…";
        if text_size(root, &t, style)?.0 <= max_w {
            return Ok(t);
        }
    }
    Ok(String::new())
}

/// Draws text so that the side (`h`, `v`) of its box sits at pixel `at`, optionally on a
/// white box.
fn tag(
    root: &Area<'_>,
    s: &str,
    at: (i32, i32),
    h: HPos,
    v: VPos,
    style: &TextStyle<'_>,
    boxed: bool,
) -> Result<()> {
    if s.is_empty() {
        return Ok(());
    }
    let (tw, th) = text_size(root, s, style)?;
    let x0 = match h {
        HPos::Left => at.0,
        HPos::Center => at.0 - tw / 2,
        HPos::Right => at.0 - tw,
    };
    let y0 = match v {
        VPos::Top => at.1,
        VPos::Center => at.1 - th / 2,
        VPos::Bottom => at.1 - th,
    };
    if boxed {
        root.draw(&Rectangle::new(
            [(x0 - 3, y0 - 2), (x0 + tw + 3, y0 + th + 3)],
            WHITE.mix(0.85).filled(),
        ))?;
    }
    let style = style.pos(Pos::new(HPos::Left, VPos::Top));
    root.draw(&Text::new(s.to_string(), (x0, y0), style))?;
    Ok(())
}

/// A grey note in the middle of an empty plotting area.
fn empty_note(root: &Area<'_>, chart: &F64Chart<'_, '_>, note: &str) -> Result<()> {
    let (xr, yr) = (chart.x_range(), chart.y_range());
    let c = chart.backend_coord(&((xr.start + xr.end) / 2.0, (yr.start + yr.end) / 2.0));
    tag(
        root,
        note,
        c,
        HPos::Center,
        VPos::Center,
        &text(16.0, MUTED),
        true,
    )
}

fn non_empty<'s>(s: &'s str, fallback: &'s str) -> &'s str {
    if s.trim().is_empty() { fallback } else { s }
}

/// Formats a tick or label value: up to four decimals, exponent form outside 1e-3..1e5.
fn fmt_num(v: f64) -> String {
    if !v.is_finite() {
        return "n/a".to_string();
    }
    let a = v.abs();
    if a < 1e-12 {
        return "0".to_string();
    }
    if !(1e-3..1e5).contains(&a) {
        return format!("{v:.1e}").replace(".0e", "e");
    }
    let s = format!("{v:.4}");
    let s = s.trim_end_matches('0').trim_end_matches('.');
    if s == "-0" {
        "0".to_string()
    } else {
        s.to_string()
    }
}

// ---------------------------------------------------------------------------------------------
// Geometry helpers for the x–z views
// ---------------------------------------------------------------------------------------------

fn coord_ok(v: f64) -> bool {
    v.is_finite() && v.abs() <= MAX_MAGNITUDE
}

fn val_ok(v: f64) -> bool {
    coord_ok(v)
}

#[derive(Debug, Clone, Copy)]
struct Bounds {
    x0: f64,
    x1: f64,
    z0: f64,
    z1: f64,
}

impl Bounds {
    fn empty() -> Self {
        Bounds {
            x0: f64::INFINITY,
            x1: f64::NEG_INFINITY,
            z0: f64::INFINITY,
            z1: f64::NEG_INFINITY,
        }
    }
    fn add(&mut self, x: f64, z: f64) {
        if coord_ok(x) && coord_ok(z) {
            self.x0 = self.x0.min(x);
            self.x1 = self.x1.max(x);
            self.z0 = self.z0.min(z);
            self.z1 = self.z1.max(z);
        }
    }
    fn is_empty(&self) -> bool {
        !(self.x0 <= self.x1 && self.z0 <= self.z1)
    }
    fn span(&self) -> f64 {
        (self.x1 - self.x0).max(self.z1 - self.z0)
    }
}

fn roller_ok(r: &PlotRoller) -> bool {
    coord_ok(r.center[0]) && coord_ok(r.center[1]) && coord_ok(r.radius) && r.radius >= 0.0
}

fn arc_points(a: &PlotArc, n: usize) -> Vec<(f64, f64)> {
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
fn side_bounds(v: &SideView) -> Bounds {
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
fn padded(b: Bounds, ground: Option<f64>) -> Bounds {
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

fn slightly_padded(b: Bounds) -> Bounds {
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

fn xz_chart<'a, 'b>(area: &'a Area<'b>, b: Bounds, keep_bottom: bool) -> Result<F64Chart<'a, 'b>> {
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

fn xz_mesh(chart: &mut F64Chart<'_, '_>) -> Result<()> {
    chart
        .configure_mesh()
        .x_desc("x [m]")
        .y_desc("z [m]")
        .label_style(mesh_font(14.0))
        .axis_desc_style(mesh_font(15.0))
        .bold_line_style(GRID)
        .light_line_style(LIGHT_GRID)
        .axis_style(MUTED)
        .x_labels(12)
        .y_labels(8)
        .x_label_formatter(&|v| fmt_num(*v))
        .y_label_formatter(&|v| fmt_num(*v))
        .draw()?;
    Ok(())
}

/// Pixels per metre of an equal-aspect chart.
fn px_per_m(chart: &F64Chart<'_, '_>) -> f64 {
    let xr = chart.x_range();
    let (a, _) = chart.backend_coord(&(xr.start, 0.0));
    let (b, _) = chart.backend_coord(&(xr.end, 0.0));
    let d = xr.end - xr.start;
    if d > 0.0 { f64::from(b - a) / d } else { 1.0 }
}

fn draw_ground(
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

fn zone_colour(zone: u8) -> RGBColor {
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

fn draw_zones(chart: &F64Chart<'_, '_>, zones: &[PlotZone], filled: bool) -> Result<()> {
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

fn draw_zone_labels(root: &Area<'_>, chart: &F64Chart<'_, '_>, zones: &[PlotZone]) -> Result<()> {
    for zn in zones {
        let Some(r) = zone_rect(zn) else { continue };
        let (x, y) = chart.backend_coord(&(r[0].0, r[1].1));
        let label = format!("{} · zone {}", non_empty(&zn.label, &zn.id), zn.zone);
        let c = zone_colour(zn.zone);
        let dark = RGBColor(c.0 / 2 + 10, c.1 / 2 + 10, c.2 / 2 + 10);
        tag(
            root,
            &label,
            (x + 6, y + 6),
            HPos::Left,
            VPos::Top,
            &text(13.0, dark),
            true,
        )?;
    }
    Ok(())
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
enum Earthing {
    Grounded,
    Isolated,
    Insulating,
    Unspecified,
}

fn earthing(s: &str) -> Earthing {
    match s.trim().to_ascii_lowercase().as_str() {
        "grounded" | "earthed" => Earthing::Grounded,
        "isolated" => Earthing::Isolated,
        "insulating" => Earthing::Insulating,
        _ => Earthing::Unspecified,
    }
}

/// (fill, edge, edge width, dashed)
fn roller_style(e: Earthing) -> (RGBColor, RGBColor, u32, bool) {
    match e {
        Earthing::Grounded => (RGBColor(70, 82, 96), RGBColor(24, 28, 34), 2, false),
        Earthing::Isolated => (RGBColor(255, 244, 230), RGBColor(214, 96, 14), 3, false),
        Earthing::Insulating => (RGBColor(236, 226, 194), RGBColor(146, 116, 58), 2, true),
        Earthing::Unspecified => (WHITE, RGBColor(120, 120, 120), 1, true),
    }
}

fn earthing_name(e: Earthing) -> &'static str {
    match e {
        Earthing::Grounded => "roller, earthed",
        Earthing::Isolated => "roller, isolated conductor",
        Earthing::Insulating => "roller, insulating",
        Earthing::Unspecified => "roller, earthing unspecified",
    }
}

fn draw_rollers(root: &Area<'_>, chart: &F64Chart<'_, '_>, rollers: &[PlotRoller]) -> Result<()> {
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

/// Roller ids: inside the roller when it is large enough, else above to the right.
fn draw_roller_labels(
    root: &Area<'_>,
    chart: &F64Chart<'_, '_>,
    rollers: &[PlotRoller],
) -> Result<()> {
    let scale = px_per_m(chart);
    for r in rollers.iter().filter(|r| roller_ok(r)) {
        let e = earthing(&r.earthing);
        let pr = r.radius * scale;
        let c = chart.backend_coord(&(r.center[0], r.center[1]));
        let on_dark = e == Earthing::Grounded;
        let style = text(13.0, if on_dark { WHITE } else { INK });
        let (tw, _) = text_size(root, &r.id, &style)?;
        if pr >= 16.0 && pr >= f64::from(tw) / 2.0 + 6.0 {
            tag(
                root,
                &r.id,
                (c.0, c.1 + 5),
                HPos::Center,
                VPos::Top,
                &style,
                false,
            )?;
        } else {
            let off = (pr * std::f64::consts::FRAC_1_SQRT_2) as i32;
            tag(
                root,
                &r.id,
                (c.0 + off + 4, c.1 - off - 2),
                HPos::Left,
                VPos::Bottom,
                &text(13.0, INK),
                true,
            )?;
        }
    }
    Ok(())
}

/// The web path as strands of data points [m], each with the charge density of every
/// piece between consecutive points [C/m²].
/// Points of a piece of web path [m] and the charge density of each piece between them [C/m²].
type Strand = (Vec<(f64, f64)>, Vec<f64>);

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
fn draw_web(
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

/// Linear map from chart data to backend pixels, kept in floating point.
#[derive(Debug, Clone, Copy)]
struct PxMap {
    x0: f64,
    sx: f64,
    px0: f64,
    z0: f64,
    sz: f64,
    pz0: f64,
}

impl PxMap {
    fn of(chart: &F64Chart<'_, '_>) -> Self {
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
    fn map(&self, p: (f64, f64)) -> (f64, f64) {
        (
            self.px0 + (p.0 - self.x0) * self.sx,
            self.pz0 + (p.1 - self.z0) * self.sz,
        )
    }
}

/// Anti-aliased thick segments (capsules) of half-width `r` px, in backend pixels. Where
/// segments overlap, each pixel is drawn once with its best coverage, so joints stay clean.
/// Segment k gets `colour(k)`.
fn stroke(
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
fn polyline(pts: &[(f64, f64)]) -> Vec<Segment> {
    match pts.len() {
        0 => Vec::new(),
        1 => vec![(pts[0], pts[0])],
        _ => pts.windows(2).map(|w| (w[0], w[1])).collect(),
    }
}

fn draw_markers(root: &Area<'_>, chart: &F64Chart<'_, '_>, markers: &[PlotMarker]) -> Result<()> {
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
        let dark = RGBColor(0, 84, 76);
        tag(
            root,
            non_empty(&m.label, &m.id),
            (x, y + 11),
            HPos::Center,
            VPos::Top,
            &text(13.0, dark),
            true,
        )?;
    }
    Ok(())
}

fn point_kinds(points: &[PlotPoint]) -> Vec<String> {
    let set: BTreeSet<&str> = points.iter().map(|p| p.kind.as_str()).collect();
    set.into_iter().take(16).map(str::to_string).collect()
}

fn kind_colour(kinds: &[String], kind: &str) -> RGBColor {
    let i = kinds.iter().position(|k| k == kind).unwrap_or(kinds.len());
    POINT_PALETTE[i % POINT_PALETTE.len()]
}

fn diamond(c: (i32, i32), r: i32) -> Vec<(i32, i32)> {
    vec![
        (c.0, c.1 - r),
        (c.0 + r, c.1),
        (c.0, c.1 + r),
        (c.0 - r, c.1),
    ]
}

fn draw_points(root: &Area<'_>, chart: &F64Chart<'_, '_>, points: &[PlotPoint]) -> Result<()> {
    let kinds = point_kinds(points);
    for p in points {
        if !(coord_ok(p.x) && coord_ok(p.z)) {
            continue;
        }
        let c = chart.backend_coord(&(p.x, p.z));
        let colour = kind_colour(&kinds, &p.kind);
        root.draw(&Polygon::new(diamond(c, 8), WHITE.filled()))?;
        root.draw(&Polygon::new(diamond(c, 6), colour.filled()))?;
        tag(
            root,
            &p.id,
            (c.0 + 9, c.1 - 6),
            HPos::Left,
            VPos::Bottom,
            &text(13.0, colour),
            true,
        )?;
    }
    Ok(())
}

// ---------------------------------------------------------------------------------------------
// Colour scales, colour bar, legend
// ---------------------------------------------------------------------------------------------

fn blend(anchors: &[(f64, [u8; 3])], t: f64) -> RGBColor {
    let t = if t.is_finite() {
        t.clamp(0.0, 1.0)
    } else {
        0.5
    };
    for w in anchors.windows(2) {
        let ((t0, c0), (t1, c1)) = (w[0], w[1]);
        if t <= t1 {
            let f = if t1 > t0 { (t - t0) / (t1 - t0) } else { 0.0 };
            let mix =
                |a: u8, b: u8| (f64::from(a) + (f64::from(b) - f64::from(a)) * f).round() as u8;
            return RGBColor(mix(c0[0], c1[0]), mix(c0[1], c1[1]), mix(c0[2], c1[2]));
        }
    }
    let c = anchors.last().map_or([0, 0, 0], |a| a.1);
    RGBColor(c[0], c[1], c[2])
}

/// Diverging scale for charge density: blue (negative), warm grey (zero), red (positive).
fn sigma_colour(t: f64) -> RGBColor {
    blend(
        &[
            (0.0, [24, 52, 140]),
            (0.25, [84, 142, 206]),
            (0.5, [222, 220, 210]),
            (0.75, [236, 136, 64]),
            (1.0, [164, 20, 32]),
        ],
        t,
    )
}

/// Sequential scale for field strength: dark ink through teal and green to pale gold.
fn field_colour(t: f64) -> RGBColor {
    blend(
        &[
            (0.0, [16, 18, 46]),
            (0.2, [42, 48, 128]),
            (0.42, [24, 118, 156]),
            (0.62, [52, 168, 118]),
            (0.82, [214, 198, 62]),
            (1.0, [255, 246, 206]),
        ],
        t,
    )
}

/// Half-range of the charge colour bar [C/m²]: the largest |σ| rounded up to 1-1.5-2-2.5-3-4-5-6-8.
fn sigma_scale(v: &SideView) -> f64 {
    let m = v
        .spans
        .iter()
        .flat_map(|s| [s.sigma_start, s.sigma_end])
        .chain(v.arcs.iter().map(|a| a.sigma))
        .filter(|s| s.is_finite() && (s * 1e6).abs() <= MAX_MAGNITUDE)
        .fold(0.0_f64, |m, s| m.max(s.abs()));
    if m > 0.0 { nice_ceil(m) } else { 1e-6 }
}

fn nice_ceil(v: f64) -> f64 {
    let e = v.log10().floor();
    let p = 10f64.powf(e);
    let f = v / p;
    let n = [1.0, 1.5, 2.0, 2.5, 3.0, 4.0, 5.0, 6.0, 8.0, 10.0]
        .into_iter()
        .find(|n| f <= n * (1.0 + 1e-9))
        .unwrap_or(10.0);
    n * p
}

/// Whole-decade range of log10 |E| covering the positive finite values, 1 to 5 decades.
fn log_range(e: &[f64]) -> (f64, f64) {
    let pos = e
        .iter()
        .filter(|v| v.is_finite() && **v > 0.0 && **v / 1e3 <= MAX_MAGNITUDE);
    let (lo, hi) = pos.fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), v| {
        (lo.min(*v), hi.max(*v))
    });
    // only finite values were folded in, so lo > hi means "none"
    if lo > hi {
        return (3.0, 6.0);
    }
    let lhi = hi.log10().ceil();
    let llo = lo.log10().floor().max(lhi - 5.0);
    let llo = if llo >= lhi { lhi - 1.0 } else { llo };
    (llo, lhi)
}

/// Decade ticks in kV/m, with 2 and 5 between when the bar spans few decades.
fn log_ticks(llo: f64, lhi: f64) -> Vec<(f64, String)> {
    let span = lhi - llo;
    let mut out = Vec::new();
    let (a, b) = (llo.round() as i32, lhi.round() as i32);
    for k in a..=b {
        for m in [1.0, 2.0, 5.0] {
            if m > 1.0 && span > 2.5 {
                continue;
            }
            let l = f64::from(k) + f64::log10(m);
            if l < llo - 1e-9 || l > lhi + 1e-9 {
                continue;
            }
            out.push(((l - llo) / span, fmt_num(10f64.powf(l) / 1e3)));
        }
    }
    out
}

/// Vertical colour bar at `at` (backend px); returns the y of its lower edge.
fn colour_bar(
    root: &Area<'_>,
    at: (i32, i32),
    h: i32,
    title: &str,
    cmap: &dyn Fn(f64) -> RGBColor,
    ticks: &[(f64, String)],
    marks: &[(f64, String)],
) -> Result<i32> {
    let (x, y0) = (at.0 + 6, at.1);
    tag(
        root,
        title,
        (at.0, y0),
        HPos::Left,
        VPos::Top,
        &text(15.0, INK),
        false,
    )?;
    let (top, w) = (y0 + 28, 22);
    let bottom = top + h;
    for r in 0..=h {
        let t = 1.0 - f64::from(r) / f64::from(h.max(1));
        root.draw(&PathElement::new(
            vec![(x, top + r), (x + w, top + r)],
            cmap(t).stroke_width(1),
        ))?;
    }
    root.draw(&Rectangle::new(
        [(x - 1, top - 1), (x + w + 1, bottom + 1)],
        INK.stroke_width(1),
    ))?;
    let style = text(13.0, INK);
    for (t, label) in ticks {
        let yy = bottom - (t * f64::from(h)).round() as i32;
        root.draw(&PathElement::new(
            vec![(x + w, yy), (x + w + 5, yy)],
            INK.stroke_width(1),
        ))?;
        tag(
            root,
            label,
            (x + w + 9, yy),
            HPos::Left,
            VPos::Center,
            &style,
            false,
        )?;
    }
    for (t, _) in marks {
        let yy = bottom - (t * f64::from(h)).round() as i32;
        root.draw(&PathElement::new(
            vec![(x - 5, yy), (x + w + 5, yy)],
            UNDERLAY.stroke_width(4),
        ))?;
        root.draw(&PathElement::new(
            vec![(x - 4, yy), (x + w + 4, yy)],
            CONTOUR.stroke_width(2),
        ))?;
    }
    Ok(bottom)
}

#[derive(Debug, Clone, Copy)]
enum Sym {
    Gradient,
    Tape,
    Roller(Earthing),
    Zone(u8, bool),
    Point(RGBColor),
    Bar,
    Ground,
    Swatch(RGBColor),
    Contour,
    Line(RGBColor, u32),
    Dashed(RGBColor),
    Measured,
}

fn roller_legend(rollers: &[PlotRoller]) -> Vec<(Sym, String)> {
    let kinds: BTreeSet<Earthing> = rollers.iter().map(|r| earthing(&r.earthing)).collect();
    kinds
        .into_iter()
        .map(|e| (Sym::Roller(e), earthing_name(e).to_string()))
        .collect()
}

fn zone_legend(zones: &[PlotZone], filled: bool) -> Vec<(Sym, String)> {
    let nums: BTreeSet<u8> = zones.iter().map(|z| z.zone).collect();
    nums.into_iter()
        .map(|n| (Sym::Zone(n, filled), format!("hazardous area, zone {n}")))
        .collect()
}

fn point_legend(points: &[PlotPoint]) -> Vec<(Sym, String)> {
    let kinds = point_kinds(points);
    kinds
        .iter()
        .map(|k| {
            let name = if k.trim().is_empty() {
                "point".to_string()
            } else {
                format!("point: {k}")
            };
            (Sym::Point(kind_colour(&kinds, k)), name)
        })
        .collect()
}

/// Draws legend rows from `at` downwards, stopping before `bottom`.
fn legend(
    root: &Area<'_>,
    at: (i32, i32),
    w: i32,
    bottom: i32,
    items: &[(Sym, String)],
) -> Result<()> {
    if items.is_empty() {
        return Ok(());
    }
    let style = text(13.0, INK);
    let head = text(15.0, INK);
    tag(root, "Legend", at, HPos::Left, VPos::Top, &head, false)?;
    let mut y = at.1 + 26;
    for (i, (sym, label)) in items.iter().enumerate() {
        let rest = items.len() - i;
        if rest > 1 && y + 44 > bottom {
            let more = format!("… {rest} more entries");
            tag(
                root,
                &more,
                (at.0 + 44, y + 9),
                HPos::Left,
                VPos::Center,
                &text(13.0, MUTED),
                false,
            )?;
            break;
        }
        if y + 22 > bottom {
            break;
        }
        let yc = y + 9;
        let x = at.0 + 6;
        draw_symbol(root, *sym, (x, yc))?;
        let label = fit(root, label, &style, w - 46)?;
        tag(
            root,
            &label,
            (x + 38, yc),
            HPos::Left,
            VPos::Center,
            &style,
            false,
        )?;
        y += 22;
    }
    Ok(())
}

fn draw_symbol(root: &Area<'_>, sym: Sym, (x, yc): (i32, i32)) -> Result<()> {
    match sym {
        Sym::Gradient => {
            root.draw(&PathElement::new(
                vec![(x, yc), (x + 30, yc)],
                UNDERLAY.stroke_width(7),
            ))?;
            for k in 0..30 {
                let c = sigma_colour(f64::from(k) / 29.0);
                root.draw(&PathElement::new(
                    vec![(x + k, yc), (x + k + 1, yc)],
                    c.stroke_width(4),
                ))?;
            }
        }
        Sym::Tape => {
            root.draw(&PathElement::new(
                vec![(x, yc), (x + 30, yc)],
                UNDERLAY.stroke_width(6),
            ))?;
            root.draw(&PathElement::new(
                vec![(x, yc), (x + 30, yc)],
                WHITE.stroke_width(2),
            ))?;
        }
        Sym::Roller(e) => {
            let (fill, edge, w, _) = roller_style(e);
            root.draw(&Circle::new((x + 15, yc), 9, fill.filled()))?;
            root.draw(&Circle::new((x + 15, yc), 9, edge.stroke_width(w)))?;
        }
        Sym::Zone(n, filled) => {
            let c = zone_colour(n);
            let r = [(x, yc - 8), (x + 30, yc + 8)];
            if filled {
                root.draw(&Rectangle::new(r, c.mix(0.13).filled()))?;
            }
            root.draw(&Rectangle::new(r, c.stroke_width(2)))?;
        }
        Sym::Point(c) => {
            root.draw(&Polygon::new(diamond((x + 15, yc), 6), c.filled()))?;
        }
        Sym::Bar => {
            root.draw(&Rectangle::new(
                [(x + 3, yc - 4), (x + 27, yc + 4)],
                MARKER.filled(),
            ))?;
            root.draw(&Rectangle::new(
                [(x + 3, yc - 4), (x + 27, yc + 4)],
                INK.stroke_width(1),
            ))?;
        }
        Sym::Ground => {
            root.draw(&PathElement::new(
                vec![(x, yc - 3), (x + 30, yc - 3)],
                GROUND_INK.stroke_width(3),
            ))?;
            for k in (6..=30).step_by(6) {
                root.draw(&PathElement::new(
                    vec![(x + k, yc - 2), (x + k - 6, yc + 5)],
                    GROUND_INK.stroke_width(1),
                ))?;
            }
        }
        Sym::Swatch(c) => {
            root.draw(&Rectangle::new([(x, yc - 7), (x + 30, yc + 7)], c.filled()))?;
            root.draw(&Rectangle::new(
                [(x, yc - 7), (x + 30, yc + 7)],
                MUTED.stroke_width(1),
            ))?;
        }
        Sym::Contour => {
            root.draw(&PathElement::new(
                vec![(x, yc), (x + 30, yc)],
                UNDERLAY.stroke_width(5),
            ))?;
            root.draw(&PathElement::new(
                vec![(x, yc), (x + 30, yc)],
                CONTOUR.stroke_width(3),
            ))?;
        }
        Sym::Line(c, w) => {
            root.draw(&PathElement::new(
                vec![(x, yc), (x + 30, yc)],
                c.stroke_width(w),
            ))?;
        }
        Sym::Dashed(c) => {
            root.draw(&DashedPathElement::new(
                vec![(x, yc), (x + 30, yc)],
                6,
                4,
                c.stroke_width(2),
            ))?;
        }
        Sym::Measured => {
            let st = INK.stroke_width(2);
            root.draw(&PathElement::new(
                vec![(x + 15, yc - 8), (x + 15, yc + 8)],
                st,
            ))?;
            root.draw(&Circle::new((x + 15, yc), 5, MEASURED.filled()))?;
            root.draw(&Circle::new((x + 15, yc), 5, INK.stroke_width(1)))?;
        }
    }
    Ok(())
}

// ---------------------------------------------------------------------------------------------
// Field grid helpers: cell edges and the limit contour
// ---------------------------------------------------------------------------------------------

fn increasing(v: &[f64]) -> bool {
    v.iter().all(|x| coord_ok(*x)) && v.windows(2).all(|w| w[0] < w[1])
}

/// Cell boundaries (n + 1 values) halfway between nodes; None for an empty axis.
fn cell_edges(nodes: &[f64]) -> Option<Vec<f64>> {
    let n = nodes.len();
    match n {
        0 => None,
        1 => Some(vec![nodes[0] - 0.005, nodes[0] + 0.005]),
        _ => {
            let mut e = Vec::with_capacity(n + 1);
            e.push(nodes[0] - (nodes[1] - nodes[0]) / 2.0);
            e.extend(nodes.windows(2).map(|w| (w[0] + w[1]) / 2.0));
            e.push(nodes[n - 1] + (nodes[n - 1] - nodes[n - 2]) / 2.0);
            Some(e)
        }
    }
}

type Segment = ((f64, f64), (f64, f64));

/// Marching squares for |E| = `limit` on ln|E|; cells with a non-finite corner are skipped.
fn contour(xs: &[f64], zs: &[f64], e: &[f64], limit: f64) -> Vec<Segment> {
    let (nx, nz) = (xs.len(), zs.len());
    let mut out = Vec::new();
    if nx < 2 || nz < 2 || e.len() != nx * nz {
        return out;
    }
    let f = |ix: usize, iz: usize| -> f64 {
        let v = e[iz * nx + ix];
        if v.is_finite() {
            (v.max(1e-300) / limit).ln()
        } else {
            f64::NAN
        }
    };
    for iz in 0..nz - 1 {
        for ix in 0..nx - 1 {
            // corners counter-clockwise from bottom-left
            let c = [
                (xs[ix], zs[iz], f(ix, iz)),
                (xs[ix + 1], zs[iz], f(ix + 1, iz)),
                (xs[ix + 1], zs[iz + 1], f(ix + 1, iz + 1)),
                (xs[ix], zs[iz + 1], f(ix, iz + 1)),
            ];
            if c.iter().any(|p| !p.2.is_finite()) {
                continue;
            }
            // edge k joins corner k and corner k+1
            let mut hits: Vec<(usize, (f64, f64))> = Vec::with_capacity(4);
            for k in 0..4 {
                let (a, b) = (c[k], c[(k + 1) % 4]);
                if (a.2 > 0.0) != (b.2 > 0.0) {
                    let lam = a.2 / (a.2 - b.2);
                    hits.push((k, (a.0 + (b.0 - a.0) * lam, a.1 + (b.1 - a.1) * lam)));
                }
            }
            match hits.len() {
                2 => out.push((hits[0].1, hits[1].1)),
                4 => {
                    let centre = c.iter().map(|p| p.2).sum::<f64>() / 4.0;
                    if (centre > 0.0) == (c[0].2 > 0.0) {
                        // corner 0 joins the centre: cut off corners 1 and 3
                        out.push((hits[0].1, hits[1].1));
                        out.push((hits[2].1, hits[3].1));
                    } else {
                        // cut off corners 0 and 2
                        out.push((hits[3].1, hits[0].1));
                        out.push((hits[1].1, hits[2].1));
                    }
                }
                _ => {}
            }
        }
    }
    out
}

fn draw_contour(
    root: &Area<'_>,
    chart: &F64Chart<'_, '_>,
    segs: &[Segment],
    label: &str,
) -> Result<()> {
    let map = PxMap::of(chart);
    let px: Vec<Segment> = segs
        .iter()
        .map(|(a, b)| (map.map(*a), map.map(*b)))
        .collect();
    stroke(root, &px, 2.6, |_| UNDERLAY)?;
    stroke(root, &px, 1.5, |_| CONTOUR)?;
    // label at the highest point of the contour
    let top = segs
        .iter()
        .flat_map(|(a, b)| [*a, *b])
        .max_by(|p, q| p.1.total_cmp(&q.1));
    if let Some(p) = top {
        let (x, y) = chart.backend_coord(&p);
        tag(
            root,
            non_empty(label, "limit"),
            (x, y - 8),
            HPos::Center,
            VPos::Bottom,
            &text(13.0, INK),
            true,
        )?;
    }
    Ok(())
}

// ---------------------------------------------------------------------------------------------
// Charge plot helpers
// ---------------------------------------------------------------------------------------------

#[derive(Debug, Clone, Copy)]
struct Range1 {
    lo: f64,
    hi: f64,
}

impl Default for Range1 {
    fn default() -> Self {
        Range1 {
            lo: f64::INFINITY,
            hi: f64::NEG_INFINITY,
        }
    }
}

impl Range1 {
    fn add(&mut self, v: f64) {
        if val_ok(v) {
            self.lo = self.lo.min(v);
            self.hi = self.hi.max(v);
        }
    }
    /// Range widened by `frac` of its length on both sides; `fallback` when empty.
    fn padded(&self, frac: f64, fallback: (f64, f64)) -> (f64, f64) {
        // only finite values are added, so lo > hi means "empty"
        if self.lo > self.hi {
            return fallback;
        }
        let d = self.hi - self.lo;
        if d <= 0.0 {
            // a single value: centre the fallback's width on it
            let half = (fallback.1 - fallback.0) / 2.0;
            return (self.lo - half, self.lo + half);
        }
        (self.lo - frac * d, self.hi + frac * d)
    }
}

/// (legend name, (colour, width), values [C/m²]) of every curve to draw.
fn charge_curves(c: &ChargeCurve) -> Vec<(String, (RGBColor, u32), &[f64])> {
    let mut out: Vec<(String, (RGBColor, u32), &[f64])> = vec![(
        "σc, centreline".to_string(),
        (RGBColor(22, 78, 168), 3),
        &c.sigma_c,
    )];
    if !c.sigma_peak.is_empty() {
        out.push((
            "σ peak, across web".to_string(),
            (RGBColor(222, 96, 16), 2),
            &c.sigma_peak,
        ));
    }
    for (k, (name, ys)) in c.extra.iter().enumerate() {
        let colour = CURVE_PALETTE[k % CURVE_PALETTE.len()];
        out.push((non_empty(name, "curve").to_string(), (colour, 2), ys));
    }
    out
}

/// Splits (s, f(y)) into runs of consecutive drawable points.
fn finite_runs(s: &[f64], ys: &[f64], f: impl Fn(f64) -> f64) -> Vec<Vec<(f64, f64)>> {
    let mut runs = Vec::new();
    let mut cur = Vec::new();
    for (&x, &y) in s.iter().zip(ys.iter()) {
        let y = f(y);
        if val_ok(x) && val_ok(y) {
            cur.push((x, y));
        } else if !cur.is_empty() {
            runs.push(std::mem::take(&mut cur));
        }
    }
    if !cur.is_empty() {
        runs.push(cur);
    }
    runs
}

// ---------------------------------------------------------------------------------------------
// PNG encoder (RGB 8 bit, fixed-Huffman deflate with run-length matches)
// ---------------------------------------------------------------------------------------------

const PNG_SIGNATURE: [u8; 8] = [0x89, b'P', b'N', b'G', 0x0d, 0x0a, 0x1a, 0x0a];

const CRC_TABLE: [u32; 256] = {
    let mut t = [0u32; 256];
    let mut n = 0;
    while n < 256 {
        let mut c = n as u32;
        let mut k = 0;
        while k < 8 {
            c = if c & 1 != 0 {
                0xedb8_8320 ^ (c >> 1)
            } else {
                c >> 1
            };
            k += 1;
        }
        t[n] = c;
        n += 1;
    }
    t
};

fn crc32(parts: &[&[u8]]) -> u32 {
    let mut c = 0xffff_ffffu32;
    for p in parts {
        for &b in *p {
            c = CRC_TABLE[((c ^ u32::from(b)) & 0xff) as usize] ^ (c >> 8);
        }
    }
    c ^ 0xffff_ffff
}

fn adler32(data: &[u8]) -> u32 {
    let (mut a, mut b) = (1u32, 0u32);
    for chunk in data.chunks(5552) {
        for &d in chunk {
            a += u32::from(d);
            b += a;
        }
        a %= 65521;
        b %= 65521;
    }
    (b << 16) | a
}

struct BitWriter {
    out: Vec<u8>,
    acc: u64,
    n: u32,
}

impl BitWriter {
    /// Appends `count` bits of `bits`, least significant first.
    fn put(&mut self, bits: u32, count: u32) {
        self.acc |= u64::from(bits) << self.n;
        self.n += count;
        while self.n >= 8 {
            self.out.push((self.acc & 0xff) as u8);
            self.acc >>= 8;
            self.n -= 8;
        }
    }
    /// Appends a Huffman code, most significant bit first.
    fn put_code(&mut self, code: u32, len: u32) {
        let rev = code.reverse_bits() >> (32 - len);
        self.put(rev, len);
    }
    fn finish(mut self) -> Vec<u8> {
        if self.n > 0 {
            self.out.push((self.acc & 0xff) as u8);
        }
        self.out
    }
}

const LEN_BASE: [u16; 29] = [
    3, 4, 5, 6, 7, 8, 9, 10, 11, 13, 15, 17, 19, 23, 27, 31, 35, 43, 51, 59, 67, 83, 99, 115, 131,
    163, 195, 227, 258,
];
const LEN_EXTRA: [u8; 29] = [
    0, 0, 0, 0, 0, 0, 0, 0, 1, 1, 1, 1, 2, 2, 2, 2, 3, 3, 3, 3, 4, 4, 4, 4, 5, 5, 5, 5, 0,
];

/// Fixed literal/length code of RFC 1951 section 3.2.6.
fn put_litlen(w: &mut BitWriter, sym: u32) {
    match sym {
        0..=143 => w.put_code(0x30 + sym, 8),
        144..=255 => w.put_code(0x190 + sym - 144, 9),
        256..=279 => w.put_code(sym - 256, 7),
        _ => w.put_code(0xc0 + sym - 280, 8),
    }
}

/// One final fixed-Huffman block; repeats of the previous byte become (length, distance 1).
fn deflate_fixed(data: &[u8]) -> Vec<u8> {
    let mut w = BitWriter {
        out: Vec::with_capacity(data.len() / 8 + 64),
        acc: 0,
        n: 0,
    };
    w.put(1, 1); // BFINAL
    w.put(1, 2); // BTYPE = 01, fixed Huffman
    let n = data.len();
    let mut i = 0;
    while i < n {
        if i > 0 {
            let prev = data[i - 1];
            let end = n.min(i + 258);
            let mut j = i;
            while j < end && data[j] == prev {
                j += 1;
            }
            let run = j - i;
            if run >= 3 {
                let mut k = LEN_BASE.len() - 1;
                while usize::from(LEN_BASE[k]) > run {
                    k -= 1;
                }
                put_litlen(&mut w, 257 + k as u32);
                w.put(
                    (run - usize::from(LEN_BASE[k])) as u32,
                    u32::from(LEN_EXTRA[k]),
                );
                w.put_code(0, 5); // distance code 0 = distance 1
                i = j;
                continue;
            }
        }
        put_litlen(&mut w, u32::from(data[i]));
        i += 1;
    }
    put_litlen(&mut w, 256);
    w.finish()
}

fn png_chunk(out: &mut Vec<u8>, kind: &[u8; 4], data: &[u8]) -> Result<()> {
    let len = u32::try_from(data.len()).map_err(|_| anyhow!("PNG chunk too large"))?;
    out.extend_from_slice(&len.to_be_bytes());
    out.extend_from_slice(kind);
    out.extend_from_slice(data);
    out.extend_from_slice(&crc32(&[kind, data]).to_be_bytes());
    Ok(())
}

/// Encodes a tightly packed 8-bit RGB buffer as PNG.
fn encode_png(width: u32, height: u32, rgb: &[u8]) -> Result<Vec<u8>> {
    let stride = width as usize * 3;
    ensure!(
        stride > 0 && rgb.len() == stride * height as usize,
        "PNG encoder: buffer of {} bytes does not match {width} × {height} RGB",
        rgb.len()
    );
    let mut raw = Vec::with_capacity((stride + 1) * height as usize);
    let zero_row = vec![0u8; stride];
    let mut prev: &[u8] = &zero_row;
    let (mut sub, mut up) = (vec![0u8; stride], vec![0u8; stride]);
    for row in rgb.chunks_exact(stride) {
        if row == prev {
            // Up leaves only zeros
            raw.push(2);
            raw.extend_from_slice(&zero_row);
            continue;
        }
        let (mut nz_sub, mut nz_up) = (0usize, 0usize);
        for i in 0..stride {
            let left = if i >= 3 { row[i - 3] } else { 0 };
            let (s, u) = (row[i].wrapping_sub(left), row[i].wrapping_sub(prev[i]));
            sub[i] = s;
            up[i] = u;
            nz_sub += usize::from(s != 0);
            nz_up += usize::from(u != 0);
        }
        if nz_up < nz_sub {
            raw.push(2);
            raw.extend_from_slice(&up);
        } else {
            raw.push(1);
            raw.extend_from_slice(&sub);
        }
        prev = row;
    }
    let mut z = vec![0x78, 0x01];
    z.extend(deflate_fixed(&raw));
    z.extend_from_slice(&adler32(&raw).to_be_bytes());

    let mut ihdr = Vec::with_capacity(13);
    ihdr.extend_from_slice(&width.to_be_bytes());
    ihdr.extend_from_slice(&height.to_be_bytes());
    ihdr.extend_from_slice(&[8, 2, 0, 0, 0]); // 8 bit, RGB, deflate, adaptive filter, no interlace
    let mut png = PNG_SIGNATURE.to_vec();
    png_chunk(&mut png, b"IHDR", &ihdr)?;
    png_chunk(&mut png, b"IDAT", &z)?;
    png_chunk(&mut png, b"IEND", &[])?;
    Ok(png)
}

#[cfg(test)]
mod tests {
    use super::*;

    // ---- a small PNG reader, written from the PNG and deflate specifications ----------------

    struct Bits<'a> {
        d: &'a [u8],
        pos: usize,
    }

    impl Bits<'_> {
        fn bit(&mut self) -> Option<u32> {
            let byte = *self.d.get(self.pos / 8)?;
            let b = (byte >> (self.pos % 8)) & 1;
            self.pos += 1;
            Some(u32::from(b))
        }
        /// `n` bits, least significant first (extra bits, header fields).
        fn bits(&mut self, n: u32) -> Option<u32> {
            (0..n).try_fold(0, |acc, i| Some(acc | (self.bit()? << i)))
        }
        /// `n` more bits of a Huffman code, most significant first.
        fn code(&mut self, acc: u32, n: u32) -> Option<u32> {
            (0..n).try_fold(acc, |acc, _| Some((acc << 1) | self.bit()?))
        }
    }

    const DIST_BASE: [u32; 30] = [
        1, 2, 3, 4, 5, 7, 9, 13, 17, 25, 33, 49, 65, 97, 129, 193, 257, 385, 513, 769, 1025, 1537,
        2049, 3073, 4097, 6145, 8193, 12289, 16385, 24577,
    ];
    const DIST_EXTRA: [u32; 30] = [
        0, 0, 0, 0, 1, 1, 2, 2, 3, 3, 4, 4, 5, 5, 6, 6, 7, 7, 8, 8, 9, 9, 10, 10, 11, 11, 12, 12,
        13, 13,
    ];

    /// zlib stream with stored and fixed-Huffman blocks (RFC 1950, RFC 1951).
    fn inflate(z: &[u8]) -> Option<Vec<u8>> {
        if z.len() < 6 || (u32::from(z[0]) * 256 + u32::from(z[1])) % 31 != 0 || z[0] & 0x0f != 8 {
            return None;
        }
        let mut r = Bits { d: &z[2..], pos: 0 };
        let mut out: Vec<u8> = Vec::new();
        loop {
            let last = r.bit()?;
            match r.bits(2)? {
                0 => {
                    r.pos = r.pos.div_ceil(8) * 8;
                    let len = r.bits(16)? as usize;
                    let nlen = r.bits(16)? as usize;
                    if len != !nlen & 0xffff {
                        return None;
                    }
                    let start = r.pos / 8;
                    out.extend_from_slice(r.d.get(start..start + len)?);
                    r.pos += 8 * len;
                }
                1 => loop {
                    let c7 = r.code(0, 7)?;
                    let sym = if c7 <= 0x17 {
                        256 + c7
                    } else {
                        let c8 = r.code(c7, 1)?;
                        match c8 {
                            0x30..=0xbf => c8 - 0x30,
                            0xc0..=0xc7 => 280 + c8 - 0xc0,
                            _ => 144 + r.code(c8, 1)? - 0x190,
                        }
                    };
                    match sym {
                        0..=255 => out.push(sym as u8),
                        256 => break,
                        257..=285 => {
                            let k = (sym - 257) as usize;
                            let len = u32::from(LEN_BASE[k]) + r.bits(u32::from(LEN_EXTRA[k]))?;
                            let dc = r.code(0, 5)? as usize;
                            let dist = DIST_BASE.get(dc)? + r.bits(*DIST_EXTRA.get(dc)?)?;
                            let start = out.len().checked_sub(dist as usize)?;
                            for i in 0..len as usize {
                                out.push(out[start + i]);
                            }
                        }
                        _ => return None,
                    }
                },
                _ => return None,
            }
            if last == 1 {
                break;
            }
        }
        let end = r.pos.div_ceil(8) + 2;
        let want = u32::from_be_bytes(z.get(end..end + 4)?.try_into().ok()?);
        (adler32(&out) == want).then_some(out)
    }

    /// Checks signature, chunk CRCs and IHDR; returns (width, height, RGB bytes).
    fn decode(png: &[u8]) -> (u32, u32, Vec<u8>) {
        assert_eq!(&png[..8], &PNG_SIGNATURE, "PNG signature");
        let (mut i, mut w, mut h, mut idat) = (8, 0, 0, Vec::new());
        while i + 12 <= png.len() {
            let len = u32::from_be_bytes(png[i..i + 4].try_into().unwrap()) as usize;
            let kind = &png[i + 4..i + 8];
            let data = &png[i + 8..i + 8 + len];
            let crc = u32::from_be_bytes(png[i + 8 + len..i + 12 + len].try_into().unwrap());
            assert_eq!(crc32(&[kind, data]), crc, "CRC of chunk {kind:?}");
            match kind {
                b"IHDR" => {
                    w = u32::from_be_bytes(data[0..4].try_into().unwrap());
                    h = u32::from_be_bytes(data[4..8].try_into().unwrap());
                    assert_eq!(&data[8..13], &[8, 2, 0, 0, 0], "8-bit RGB, no interlace");
                }
                b"IDAT" => idat.extend_from_slice(data),
                _ => {}
            }
            i += 12 + len;
        }
        assert_eq!(i, png.len(), "chunks end exactly at IEND");
        let raw = inflate(&idat).expect("valid zlib stream");
        let stride = w as usize * 3;
        assert_eq!(raw.len(), (stride + 1) * h as usize, "raw size");
        let mut rgb = vec![0u8; stride * h as usize];
        let zero = vec![0u8; stride];
        for y in 0..h as usize {
            let filter = raw[y * (stride + 1)];
            let line = &raw[y * (stride + 1) + 1..(y + 1) * (stride + 1)];
            let (done, rest) = rgb.split_at_mut(y * stride);
            let prev = if y > 0 {
                &done[(y - 1) * stride..]
            } else {
                &zero[..]
            };
            let cur = &mut rest[..stride];
            for x in 0..stride {
                let a = if x >= 3 { cur[x - 3] } else { 0 };
                let b = prev[x];
                let c = if x >= 3 { prev[x - 3] } else { 0 };
                let pred = match filter {
                    0 => 0,
                    1 => a,
                    2 => b,
                    3 => ((u16::from(a) + u16::from(b)) / 2) as u8,
                    4 => {
                        let p = i16::from(a) + i16::from(b) - i16::from(c);
                        let pa = (p - i16::from(a)).abs();
                        let pb = (p - i16::from(b)).abs();
                        let pc = (p - i16::from(c)).abs();
                        if pa <= pb && pa <= pc {
                            a
                        } else if pb <= pc {
                            b
                        } else {
                            c
                        }
                    }
                    f => panic!("unknown filter {f}"),
                };
                cur[x] = line[x].wrapping_add(pred);
            }
        }
        (w, h, rgb)
    }

    /// Number of distinct RGB colours (a bit set over all 2^24 colours).
    fn colours(rgb: &[u8]) -> usize {
        let mut seen = vec![0u64; 1 << 18];
        let mut n = 0;
        for p in rgb.chunks_exact(3) {
            let c = (usize::from(p[0]) << 16) | (usize::from(p[1]) << 8) | usize::from(p[2]);
            let (word, bit) = (c >> 6, 1u64 << (c & 63));
            if seen[word] & bit == 0 {
                seen[word] |= bit;
                n += 1;
            }
        }
        n
    }

    fn has(rgb: &[u8], c: RGBColor) -> bool {
        rgb.chunks_exact(3).any(|p| p == [c.0, c.1, c.2])
    }

    /// Dark pixels in the title strip prove that the bundled font was registered and used.
    fn title_has_ink(w: u32, rgb: &[u8]) -> bool {
        let stride = w as usize * 3;
        rgb[..stride * 40]
            .chunks_exact(3)
            .filter(|p| p.iter().all(|&v| v < 90))
            .count()
            > 100
    }

    // ---- example data -------------------------------------------------------------------------

    fn view() -> SideView {
        let roller = |id: &str, x: f64, z: f64, r: f64, e: &str| PlotRoller {
            id: id.into(),
            center: [x, z],
            radius: r,
            earthing: e.into(),
        };
        SideView {
            title: "Test line".into(),
            rollers: vec![
                roller("A", 0.0, 1.0, 0.1, "grounded"),
                roller("B", 1.0, 1.5, 0.05, "isolated"),
                roller("C", 2.0, 1.0, 0.05, "insulating"),
            ],
            spans: vec![
                PlotSpan {
                    name: "a-b".into(),
                    start: [0.0, 1.1],
                    end: [1.0, 1.55],
                    sigma_start: -5e-6,
                    sigma_end: -4e-6,
                },
                PlotSpan {
                    name: "b-c".into(),
                    start: [1.03, 1.53],
                    end: [2.0, 1.05],
                    sigma_start: 3e-6,
                    sigma_end: 6e-6,
                },
            ],
            arcs: vec![PlotArc {
                center: [1.0, 1.5],
                radius: 0.05,
                start_angle: 2.0,
                sweep: -1.5,
                sigma: -4e-6,
            }],
            zones: vec![PlotZone {
                id: "Z".into(),
                label: "coater".into(),
                x: [1.2, 1.9],
                z: [0.3, 1.8],
                zone: 1,
            }],
            points: vec![
                PlotPoint {
                    id: "P1".into(),
                    kind: "meter".into(),
                    x: 0.5,
                    z: 1.0,
                },
                PlotPoint {
                    id: "P2".into(),
                    kind: "operator".into(),
                    x: 1.5,
                    z: 0.5,
                },
            ],
            markers: vec![PlotMarker {
                id: "E1".into(),
                x: 1.5,
                z: 1.4,
                label: String::new(),
            }],
            ground: Some(0.0),
        }
    }

    /// |E| = 1e5 V/m · (0.1 m / r) around (1, 1): the limit 1e5 V/m is the circle r = 0.1 m.
    fn grid(nx: usize, nz: usize) -> FieldGrid {
        let xs: Vec<f64> = (0..nx)
            .map(|i| 2.2 * i as f64 / (nx - 1) as f64 - 0.1)
            .collect();
        let zs: Vec<f64> = (0..nz).map(|i| 2.0 * i as f64 / (nz - 1) as f64).collect();
        let mut e = Vec::with_capacity(nx * nz);
        for &z in &zs {
            for &x in &xs {
                let r = (x - 1.0).hypot(z - 1.0);
                e.push(if r < 0.02 { f64::NAN } else { 1e5 * 0.1 / r });
            }
        }
        FieldGrid {
            xs,
            zs,
            e_mag: e,
            y: 0.0,
            limit: Some((1e5, "limit".into())),
        }
    }

    fn curve() -> ChargeCurve {
        let s: Vec<f64> = (0..50).map(|i| f64::from(i) * 0.1).collect();
        let sigma_c: Vec<f64> = s.iter().map(|x| (x - 2.0) * 2e-6).collect();
        let sigma_peak = sigma_c.iter().map(|v| v * 1.3).collect();
        let extra = vec![(
            "without devices".to_string(),
            s.iter().map(|x| x * 1e-6).collect(),
        )];
        ChargeCurve {
            s,
            sigma_c,
            sigma_peak,
            nodes: vec![
                (0.0, "A".into()),
                (1.0, "B".into()),
                (1.05, "E1".into()),
                (2.0, "C".into()),
            ],
            limits: vec![(8e-6, "alert".into())],
            extra,
            markers: vec![(1.5, -1e-6, -1.5e-6, -0.5e-6, "P1".into())],
        }
    }

    // ---- encoder -------------------------------------------------------------------------------

    #[test]
    fn checksums_match_published_check_values() {
        // CRC-32/ISO-HDLC check value for "123456789" (Williams' CRC catalogue): 0xCBF43926
        assert_eq!(crc32(&[b"123456789"]), 0xcbf4_3926);
        // Adler-32 of "Wikipedia" is 0x11E60398 (worked example of the RFC 1950 definition)
        assert_eq!(adler32(b"Wikipedia"), 0x11e6_0398);
        // empty input: A = 1, B = 0 by definition (RFC 1950 section 8)
        assert_eq!(adler32(b""), 1);
    }

    #[test]
    fn encoder_round_trips_noise_flat_and_stripes() {
        let (w, h) = (37u32, 23u32);
        let mut state = 0x9e37_79b9_7f4a_7c15u64;
        let noise: Vec<u8> = (0..w * h * 3)
            .map(|_| {
                state ^= state << 13;
                state ^= state >> 7;
                state ^= state << 17;
                (state >> 24) as u8
            })
            .collect();
        let flat = vec![200u8; (w * h * 3) as usize];
        let stripes: Vec<u8> = (0..w * h * 3)
            .map(|i| if (i / 3) % 7 < 3 { 10 } else { 250 })
            .collect();
        for img in [noise, flat, stripes] {
            let png = encode_png(w, h, &img).unwrap();
            let (dw, dh, rgb) = decode(&png);
            assert_eq!((dw, dh), (w, h));
            assert_eq!(rgb, img);
        }
        assert!(
            encode_png(w, h, &[0u8; 5]).is_err(),
            "wrong buffer length is an error"
        );
    }

    // ---- the three plots -----------------------------------------------------------------------

    #[test]
    fn side_view_is_a_drawn_png_of_the_requested_size() {
        let png = side_view_png(&view(), 1200, 700).unwrap();
        assert!(png.len() < 3_000_000, "size {} bytes", png.len());
        let (w, h, rgb) = decode(&png);
        assert_eq!((w, h), (1200, 700));
        assert!(colours(&rgb) > 50, "many colours: gradient, shapes, text");
        assert!(title_has_ink(w, &rgb), "title text drawn");
        // the colour bar shows both ends of the charge scale exactly
        assert!(has(&rgb, sigma_colour(0.0)) && has(&rgb, sigma_colour(1.0)));
        let (fill, _, _, _) = roller_style(Earthing::Grounded);
        assert!(has(&rgb, fill), "earthed roller fill");
    }

    #[test]
    fn field_map_is_a_drawn_png_with_contour() {
        let png = field_map_png(&view(), &grid(80, 60), 1200, 700).unwrap();
        assert!(png.len() < 3_000_000, "size {} bytes", png.len());
        let (w, h, rgb) = decode(&png);
        assert_eq!((w, h), (1200, 700));
        assert!(colours(&rgb) > 50);
        assert!(title_has_ink(w, &rgb));
        assert!(has(&rgb, CONTOUR), "limit contour drawn");
        assert!(has(&rgb, field_colour(1.0)), "top of the colour bar");
    }

    #[test]
    fn charge_plot_is_a_drawn_png_with_curves_and_limits() {
        let png = charge_png(&curve(), 1200, 700).unwrap();
        assert!(png.len() < 3_000_000, "size {} bytes", png.len());
        let (w, h, rgb) = decode(&png);
        assert_eq!((w, h), (1200, 700));
        assert!(colours(&rgb) > 20);
        assert!(title_has_ink(w, &rgb));
        assert!(has(&rgb, RGBColor(22, 78, 168)), "centreline curve");
        assert!(has(&rgb, LIMIT), "limit line");
    }

    #[test]
    fn empty_inputs_still_give_valid_pngs() {
        let v = SideView::default();
        for png in [
            side_view_png(&v, 640, 480).unwrap(),
            field_map_png(&v, &FieldGrid::default(), 640, 480).unwrap(),
            charge_png(&ChargeCurve::default(), 640, 480).unwrap(),
        ] {
            let (w, h, rgb) = decode(&png);
            assert_eq!((w, h), (640, 480));
            assert!(colours(&rgb) > 3, "axes and text at least");
            assert!(title_has_ink(w, &rgb));
        }
    }

    #[test]
    fn non_finite_and_extreme_values_do_not_panic() {
        let nan = f64::NAN;
        let mut v = view();
        v.rollers.push(PlotRoller {
            id: "bad".into(),
            center: [nan, 1.0],
            radius: -1.0,
            earthing: "?".into(),
        });
        v.rollers.push(PlotRoller {
            id: "huge".into(),
            center: [1e300, 0.0],
            radius: 1e300,
            earthing: "grounded".into(),
        });
        v.spans.push(PlotSpan {
            name: "n".into(),
            start: [nan; 2],
            end: [f64::INFINITY, 0.0],
            sigma_start: nan,
            sigma_end: nan,
        });
        v.spans.push(PlotSpan {
            name: "s".into(),
            start: [0.5, 0.5],
            end: [0.6, 0.6],
            sigma_start: nan,
            sigma_end: 1e300,
        });
        v.arcs.push(PlotArc {
            center: [1.0, 1.0],
            radius: 0.1,
            start_angle: nan,
            sweep: 1e9,
            sigma: f64::INFINITY,
        });
        v.arcs.push(PlotArc {
            center: [1.0, 1.0],
            radius: 0.1,
            start_angle: 0.0,
            sweep: 1e9,
            sigma: 0.0,
        });
        v.zones.push(PlotZone {
            id: "z".into(),
            label: String::new(),
            x: [2.0, 1.0],
            z: [nan, 1.0],
            zone: 99,
        });
        v.points.push(PlotPoint {
            id: "p".into(),
            kind: String::new(),
            x: nan,
            z: 0.0,
        });
        v.markers.push(PlotMarker {
            id: "m".into(),
            x: f64::NEG_INFINITY,
            z: 0.0,
            label: "m".into(),
        });
        v.ground = Some(nan);
        decode(&side_view_png(&v, 800, 500).unwrap());

        let mut g = grid(20, 10);
        g.e_mag.iter_mut().step_by(3).for_each(|e| *e = nan);
        g.e_mag[1] = f64::INFINITY;
        g.e_mag[2] = -5.0;
        g.e_mag[4] = 0.0;
        g.e_mag[5] = 1e300;
        g.y = nan;
        g.limit = Some((nan, "x".into()));
        decode(&field_map_png(&v, &g, 800, 500).unwrap());
        g.e_mag.iter_mut().for_each(|e| *e = nan);
        g.limit = Some((1e5, "x".into()));
        decode(&field_map_png(&SideView::default(), &g, 800, 500).unwrap());

        let mut c = curve();
        c.sigma_c[3] = nan;
        c.sigma_c[4] = f64::INFINITY;
        c.sigma_peak.iter_mut().for_each(|v| *v = nan);
        c.s[10] = nan;
        c.nodes.push((nan, "n".into()));
        c.limits.push((1e300, "far".into()));
        c.markers.push((nan, nan, nan, nan, String::new()));
        decode(&charge_png(&c, 800, 500).unwrap());
        let all_nan = ChargeCurve {
            s: vec![nan; 4],
            sigma_c: vec![nan; 4],
            ..ChargeCurve::default()
        };
        decode(&charge_png(&all_nan, 800, 500).unwrap());
        let one = ChargeCurve {
            s: vec![1.0],
            sigma_c: vec![2e-6],
            ..ChargeCurve::default()
        };
        decode(&charge_png(&one, 800, 500).unwrap());
    }

    #[test]
    fn bad_sizes_and_inconsistent_data_are_errors() {
        let v = view();
        assert!(side_view_png(&v, 0, 700).is_err());
        assert!(side_view_png(&v, 1200, MAX_PIXELS + 1).is_err());
        let mut g = grid(10, 8);
        g.e_mag.pop();
        assert!(field_map_png(&v, &g, 800, 500).is_err());
        let mut g = grid(10, 8);
        g.xs.swap(2, 3);
        assert!(field_map_png(&v, &g, 800, 500).is_err());
        let mut g = grid(10, 8);
        g.zs[0] = f64::NAN;
        assert!(field_map_png(&v, &g, 800, 500).is_err());
        let mut c = curve();
        c.sigma_c.pop();
        assert!(charge_png(&c, 800, 500).is_err());
        let mut c = curve();
        c.sigma_peak.pop();
        assert!(charge_png(&c, 800, 500).is_err());
        let mut c = curve();
        c.extra[0].1.push(0.0);
        assert!(charge_png(&c, 800, 500).is_err());
    }

    // ---- helpers ---------------------------------------------------------------------------------

    #[test]
    fn contour_of_a_one_over_r_field_is_the_expected_circle() {
        // closed form: |E| = E0 r0 / r equals E0 on the circle r = r0 = 0.1 m. Linear
        // interpolation of ln|E| along a cell edge h = 13.75 mm errs by about h²/(8 r0),
        // i.e. 0.24 mm, so 1 mm is a safe bound.
        let g = grid(161, 161);
        let segs = contour(&g.xs, &g.zs, &g.e_mag, 1e5);
        // the circle (circumference 0.63 m) crosses at least 0.63 / (h √2) = 32 cells
        assert!(
            segs.len() >= 32,
            "closed curve of many segments: {}",
            segs.len()
        );
        for (a, b) in &segs {
            for p in [a, b] {
                let r = (p.0 - 1.0).hypot(p.1 - 1.0);
                assert!((r - 0.1).abs() < 1e-3, "contour point at r = {r}");
            }
        }
        assert!(
            contour(&g.xs, &g.zs, &g.e_mag, 1e12).is_empty(),
            "limit never reached"
        );
    }

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

    #[test]
    fn log_scale_spans_whole_decades_and_ticks_are_in_kv_per_m() {
        assert_eq!(log_range(&[2e3, f64::NAN, 4e5, -1.0, 0.0]), (3.0, 6.0));
        assert_eq!(log_range(&[]), (3.0, 6.0));
        assert_eq!(log_range(&[1e-3, 1e6]), (1.0, 6.0), "at most five decades");
        assert_eq!(log_range(&[1e4, 1e4]), (3.0, 4.0), "at least one decade");
        let labels: Vec<String> = log_ticks(3.0, 6.0).into_iter().map(|t| t.1).collect();
        assert_eq!(labels, ["1", "10", "100", "1000"]);
        let t = log_ticks(4.0, 5.0);
        assert_eq!(
            t.iter().map(|t| t.1.as_str()).collect::<Vec<_>>(),
            ["10", "20", "50", "100"]
        );
        assert!((t[1].0 - 2f64.log10()).abs() < 1e-12);
    }

    #[test]
    fn numbers_and_colour_scales_format_sensibly() {
        assert_eq!(fmt_num(0.30000000000000004), "0.3");
        assert_eq!(fmt_num(-2.5), "-2.5");
        assert_eq!(fmt_num(1e-14), "0");
        assert_eq!(fmt_num(1e5), "1e5");
        assert_eq!(fmt_num(f64::NAN), "n/a");
        assert_eq!(nice_ceil(7.3e-6), 8e-6);
        assert_eq!(nice_ceil(1e-6), 1e-6);
        assert_eq!(
            sigma_colour(0.5),
            RGBColor(222, 220, 210),
            "zero charge is the neutral colour"
        );
        assert_eq!(sigma_colour(f64::NAN), sigma_colour(0.5));
        assert_eq!(field_colour(-3.0), field_colour(0.0), "clamped below");
    }
}
