//! The side-view chart: rollers, web path coloured by charge density, zones, points, devices,
//! conductors and the floor, to equal scale, with the charge colour bar and a legend.
//!
//! Pipeline stage: report writers (PNG plots). Draws only; the scene pieces come from
//! `scene` and `web`, the frame from `frame`.

use anyhow::Result;

use super::colour::{colour_bar, sigma_colour, sigma_scale};
use super::conductors::{draw_conductor_labels, draw_conductors, with_conductors};
use super::frame::{bar_height, empty_note, fmt_num, layout, non_empty, panel_box, render};
use super::legend::{Sym, after_rollers, conductor_legend, legend, scene_legend};
use super::scene::{
    draw_ground, draw_markers, draw_points, draw_roller_labels, draw_rollers, draw_zone_labels,
    draw_zones,
};
use super::web::draw_web;
use super::xz::{padded, side_bounds, xz_chart, xz_mesh};
use super::{ConductorLayer, SideView, coord_ok};

/// Side view of the line: rollers, web path coloured by charge density, zones, points,
/// markers, the floor and the conductors of `c` (outlines only; its grid mask is for the
/// field map), to equal scale. Returns PNG bytes.
pub fn side_view_png(v: &SideView, c: &ConductorLayer, width: u32, height: u32) -> Result<Vec<u8>> {
    render(width, height, |root| {
        let title = non_empty(&v.title, "Web line");
        let (main, panel) = layout(
            root,
            &format!("{title}: side view"),
            "x along the line, z height, equal scale; web colour = centreline charge density σ",
        )?;
        let seen = with_conductors(side_bounds(v), &c.conductors);
        let bounds = padded(seen, v.ground);
        let mut chart = xz_chart(&main, bounds, v.ground.is_some_and(coord_ok))?;
        xz_mesh(&mut chart)?;
        draw_ground(root, &chart, v.ground, true)?;
        draw_zones(&chart, &v.zones, true)?;
        draw_conductors(root, &chart, &c.conductors, true)?;
        draw_rollers(root, &chart, &v.rollers)?;
        let smax = sigma_scale(v);
        draw_web(root, &chart, v, Some(smax))?;
        draw_markers(root, &chart, &v.markers)?;
        draw_points(root, &chart, &v.points)?;
        draw_zone_labels(root, &chart, &v.zones)?;
        draw_roller_labels(root, &chart, &v.rollers)?;
        draw_conductor_labels(root, &chart, &c.conductors)?;
        if seen.is_empty() {
            empty_note(
                root,
                &chart,
                "nothing to draw: no rollers, web path, zones, points or conductors",
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
        let mut items = scene_legend(v, (Sym::Gradient, "web path (colour = σ)"), true);
        after_rollers(&mut items, conductor_legend(&c.conductors, true, ""));
        legend(root, (px, bottom + 28), pw, py + ph, &items)
    })
}

#[cfg(test)]
mod tests {
    use super::super::scene::{Earthing, roller_style};
    use super::super::testkit::{colours, decode, has, title_has_ink, view};
    use super::*;

    #[test]
    fn side_view_is_a_drawn_png_of_the_requested_size() {
        let png = side_view_png(&view(), &ConductorLayer::default(), 1200, 700).unwrap();
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
}
