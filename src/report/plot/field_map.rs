//! The field-strength chart: |E| on a logarithmic colour scale over the x–z plane, with
//! the web path, rollers, conductors, zones, points and the limit contour drawn over it.
//!
//! Pipeline stage: report writers (PNG plots). Draws only. Grid values belong to the
//! nodes; each cell is filled from midpoint to midpoint between nodes. Cells whose node
//! the caller marks as inside a conductor are filled in [`INSIDE`] instead of by |E| (the
//! field inside a conductor is zero) and left out of the colour scale.

use anyhow::{Result, ensure};
use plotters::prelude::*;

use super::colour::{NODATA, colour_bar, field_colour, log_range, log_ticks};
use super::conductors::{conductor_labels, draw_conductors, with_conductors};
use super::contour::{contour, contour_label, draw_contour};
use super::frame::{empty_note, fmt_num, layout, non_empty, panel_box, plot_box, render};
use super::labels::draw_labels;
use super::layout::Layout;
use super::legend::{Sym, after_rollers, conductor_legend, draw_legend, plan, scene_legend};
use super::scene::{
    draw_ground, draw_markers, draw_points, draw_rollers, draw_zones, roller_labels, zone_labels,
};
use super::web::draw_web;
use super::xz::{padded, side_bounds, slightly_padded, xz_chart, xz_mesh};
use super::{ConductorLayer, FieldGrid, MAX_MAGNITUDE, PLANE_TOLERANCE, SideView, coord_ok};

/// Fill of the cells inside a conductor.
const INSIDE: RGBColor = RGBColor(96, 104, 116);

/// Field-strength map |E| on a logarithmic colour scale (kV/m) with the web path, rollers,
/// conductors (outlines; cells marked inside one are filled as conductor), zones, points
/// and the limit contour drawn over it. Returns PNG bytes.
///
/// Fails when `e_mag.len() != xs.len() * zs.len()`, when `c.inside` is neither empty nor
/// as long as `e_mag`, or when `xs` / `zs` are not finite and strictly increasing.
pub fn field_map_png(
    v: &SideView,
    g: &FieldGrid,
    c: &ConductorLayer,
    width: u32,
    height: u32,
) -> Result<Vec<u8>> {
    Ok(field_map(v, g, c, width, height)?.0)
}

/// What [`field_map_png`] draws: legend entries, labels placed. Draws the picture to
/// find out; fails as [`field_map_png`] does.
pub fn field_map_layout(
    v: &SideView,
    g: &FieldGrid,
    c: &ConductorLayer,
    width: u32,
    height: u32,
) -> Result<Layout> {
    Ok(field_map(v, g, c, width, height)?.1)
}

fn field_map(
    v: &SideView,
    g: &FieldGrid,
    c: &ConductorLayer,
    width: u32,
    height: u32,
) -> Result<(Vec<u8>, Layout)> {
    let (nx, nz) = (g.xs.len(), g.zs.len());
    ensure!(
        nx.checked_mul(nz) == Some(g.e_mag.len()),
        "field grid: e_mag has {} values, expected xs.len() × zs.len() = {nx} × {nz}",
        g.e_mag.len()
    );
    ensure!(
        c.inside.is_empty() || c.inside.len() == g.e_mag.len(),
        "conductor layer: inside has {} values, expected none or one per field value ({})",
        c.inside.len(),
        g.e_mag.len()
    );
    let inside = |k: usize| c.inside.get(k).copied().unwrap_or(false);
    ensure!(
        increasing(&g.xs),
        "field grid: xs must be finite and strictly increasing"
    );
    ensure!(
        increasing(&g.zs),
        "field grid: zs must be finite and strictly increasing"
    );
    // the slice: points farther from it than the tolerance are drawn hollow
    let plane = [g.y - PLANE_TOLERANCE, g.y + PLANE_TOLERANCE];
    let limit = g
        .limit
        .as_ref()
        .filter(|(e, _)| e.is_finite() && *e > 0.0 && *e / 1e3 <= MAX_MAGNITUDE);
    let segs = limit.map(|(e_lim, _)| contour(&g.xs, &g.zs, &g.e_mag, *e_lim));
    let any_inside = nx > 0 && nz > 0 && c.inside.iter().any(|&i| i);
    let any_nan = (0..g.e_mag.len()).any(|k| !inside(k) && !g.e_mag[k].is_finite());
    let mut items = Vec::new();
    if let Some((e, l)) = limit {
        // Three significant digits, as the findings show the limit.
        let text = format!(
            "{} ({})",
            non_empty(l, "limit"),
            crate::units::format_quantity_sig(*e, crate::units::Dim::Field, 3)
        );
        let drawn = segs.as_ref().is_some_and(|s| !s.is_empty());
        let text = if drawn {
            text
        } else {
            format!("{text}: not reached")
        };
        items.push((Sym::Contour, text));
    }
    items.extend(scene_legend(v, (Sym::Tape, "web path"), false, plane));
    let note = if c.in_field { "" } else { " (not solved)" };
    let mut rows = conductor_legend(&c.conductors, false, note);
    if any_inside {
        rows.push((
            Sym::Swatch(INSIDE),
            "inside a conductor (|E| = 0)".to_string(),
        ));
    }
    after_rollers(&mut items, rows);
    if any_nan {
        items.push((Sym::Swatch(NODATA), "not computed".to_string()));
    }
    let plan = plan(&items, (width, height), true);
    let mut out = Layout {
        size: (width, height),
        legend_columns: plan.columns as u32,
        ..Layout::default()
    };
    let png = render(width, height, |root| {
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
            plan.panel_w,
        )?;
        let ex = cell_edges(&g.xs);
        let ez = cell_edges(&g.zs);
        let mut b = with_conductors(side_bounds(v), &c.conductors);
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

        let outside: Vec<f64> = (0..g.e_mag.len())
            .filter(|&k| !inside(k))
            .map(|k| g.e_mag[k])
            .collect();
        let (llo, lhi) = log_range(&outside);
        let t_of = |e: f64| ((e.max(1e-300).log10() - llo) / (lhi - llo)).clamp(0.0, 1.0);
        if let (Some(x), Some(z)) = (ex.as_ref(), ez.as_ref()) {
            let area = chart.plotting_area();
            area.draw(&Rectangle::new(
                [(x[0], z[0]), (x[nx], z[nz])],
                NODATA.filled(),
            ))?;
            for iz in 0..nz {
                for ix in 0..nx {
                    let k = iz * nx + ix;
                    if inside(k) {
                        area.draw(&Rectangle::new(
                            [(x[ix], z[iz]), (x[ix + 1], z[iz + 1])],
                            INSIDE.filled(),
                        ))?;
                        continue;
                    }
                    let e = g.e_mag.get(k).copied().unwrap_or(f64::NAN);
                    if !e.is_finite() {
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
        draw_conductors(root, &chart, &c.conductors, false)?;
        draw_rollers(root, &chart, &v.rollers)?;
        draw_web(root, &chart, v, None)?;
        let mut contour_req = None;
        if let (Some(segs), Some((_, label))) = (segs.as_ref(), limit) {
            draw_contour(root, &chart, segs)?;
            contour_req = contour_label(&chart, segs, label);
        }
        let (mls, mut clear) = draw_markers(root, &chart, &v.markers)?;
        let (mut reqs, pclear) = draw_points(root, &chart, &v.points, plane)?;
        let (rls, rclear) = roller_labels(&chart, &v.rollers);
        reqs.extend(mls);
        reqs.extend(rls);
        reqs.extend(conductor_labels(&chart, &c.conductors));
        reqs.extend(zone_labels(&chart, &v.zones));
        reqs.extend(contour_req);
        clear.extend(pclear);
        clear.extend(rclear);
        out.plot_area = plot_box(&chart);
        out.labels = draw_labels(root, &reqs, out.plot_area, &clear)?;
        if !g.e_mag.iter().any(|e| e.is_finite()) {
            empty_note(root, &chart, "no field values to show")?;
        }

        let (px, py, _, _) = panel_box(&panel);
        let cmap = |t: f64| field_colour(t);
        let ticks = log_ticks(llo, lhi);
        let marks: Vec<(f64, String)> = limit
            .iter()
            .map(|(e, l)| (t_of(*e), l.clone()))
            .filter(|(t, _)| *t > 0.0 && *t < 1.0)
            .collect();
        colour_bar(
            root,
            (px, py),
            plan.bar_h,
            "|E| [kV/m]",
            &cmap,
            &ticks,
            &marks,
        )?;
        out.legend = draw_legend(root, &plan)?;
        Ok(())
    })?;
    Ok((png, out))
}

pub(super) fn increasing(v: &[f64]) -> bool {
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

#[cfg(test)]
mod tests {
    use super::super::colour::CONTOUR;
    use super::super::testkit::{colours, decode, grid, has, title_has_ink, view};
    use super::*;

    #[test]
    fn field_map_is_a_drawn_png_with_contour() {
        let png = field_map_png(
            &view(),
            &grid(80, 60),
            &ConductorLayer::default(),
            1200,
            700,
        )
        .unwrap();
        assert!(png.len() < 3_000_000, "size {} bytes", png.len());
        let (w, h, rgb) = decode(&png);
        assert_eq!((w, h), (1200, 700));
        assert!(colours(&rgb) > 50);
        assert!(title_has_ink(w, &rgb));
        assert!(has(&rgb, CONTOUR), "limit contour drawn");
        assert!(has(&rgb, field_colour(1.0)), "top of the colour bar");
    }
}
