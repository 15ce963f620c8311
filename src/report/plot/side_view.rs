//! The side-view chart: rollers, web path coloured by charge density, zones, points, devices,
//! conductors and the floor, to equal scale, with the charge colour bar and a legend.
//!
//! Pipeline stage: report writers (PNG plots). Draws only; the scene pieces come from
//! `scene` and `web`, the frame from `frame`.

use anyhow::Result;

use super::colour::{colour_bar, sigma_colour, sigma_scale};
use super::conductors::{conductor_labels, draw_conductors, with_conductors};
use super::frame::{empty_note, fmt_num, layout, non_empty, panel_box, plot_box, render};
use super::labels::draw_labels;
use super::layout::Layout;
use super::legend::{Sym, after_rollers, conductor_legend, draw_legend, plan, scene_legend};
use super::scene::{
    draw_ground, draw_markers, draw_points, draw_rollers, draw_zones, roller_labels, zone_labels,
};
use super::web::draw_web;
use super::xz::{padded, side_bounds, xz_chart, xz_mesh};
use super::{ConductorLayer, SideView, coord_ok};

/// Side view of the line: rollers, web path coloured by charge density, zones, points,
/// markers, the floor and the conductors of `c` (outlines only; its grid mask is for the
/// field map), to equal scale. Returns PNG bytes.
pub fn side_view_png(v: &SideView, c: &ConductorLayer, width: u32, height: u32) -> Result<Vec<u8>> {
    Ok(side_view(v, c, width, height)?.0)
}

/// What [`side_view_png`] draws: legend entries, labels placed. Draws the picture to
/// find out.
pub fn side_view_layout(
    v: &SideView,
    c: &ConductorLayer,
    width: u32,
    height: u32,
) -> Result<Layout> {
    Ok(side_view(v, c, width, height)?.1)
}

fn side_view(
    v: &SideView,
    c: &ConductorLayer,
    width: u32,
    height: u32,
) -> Result<(Vec<u8>, Layout)> {
    let mut items = scene_legend(v, (Sym::Gradient, "web path (colour = σ)"), true, v.plane);
    after_rollers(&mut items, conductor_legend(&c.conductors, true, ""));
    let plan = plan(&items, (width, height), true);
    let mut out = Layout {
        size: (width, height),
        legend_columns: plan.columns as u32,
        ..Layout::default()
    };
    let png = render(width, height, |root| {
        let title = non_empty(&v.title, "Web line");
        let (main, panel) = layout(
            root,
            &format!("{title}: side view"),
            "x along the line, z height, equal scale; web colour = centreline charge density σ",
            plan.panel_w,
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
        let (mut reqs, mut clear) = draw_markers(root, &chart, &v.markers)?;
        let (pts, pclear) = draw_points(root, &chart, &v.points, v.plane)?;
        let (rls, rclear) = roller_labels(&chart, &v.rollers);
        reqs.splice(0..0, pts);
        reqs.extend(rls);
        reqs.extend(conductor_labels(&chart, &c.conductors));
        reqs.extend(zone_labels(&chart, &v.zones));
        clear.extend(pclear);
        clear.extend(rclear);
        out.plot_area = plot_box(&chart);
        out.labels = draw_labels(root, &reqs, out.plot_area, &clear)?;
        if seen.is_empty() {
            empty_note(
                root,
                &chart,
                "nothing to draw: no rollers, web path, zones, points or conductors",
            )?;
        }

        let (px, py, _, _) = panel_box(&panel);
        let cmap = |t: f64| sigma_colour(t);
        let m = smax * 1e6;
        let ticks: Vec<(f64, String)> = [-1.0, -0.5, 0.0, 0.5, 1.0]
            .iter()
            .map(|f| ((f + 1.0) / 2.0, fmt_num(f * m)))
            .collect();
        colour_bar(root, (px, py), plan.bar_h, "σ [µC/m²]", &cmap, &ticks, &[])?;
        out.legend = draw_legend(root, &plan)?;
        Ok(())
    })?;
    Ok((png, out))
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

#[cfg(test)]
mod layout_tests {
    use super::super::layout::{contains, overlap};
    use super::super::testkit::{crowded, grid, view};
    use super::super::{FieldGrid, PlotPoint, field_map_layout};
    use super::*;

    /// Every legend entry is drawn whole (its lines put back together give the label),
    /// each line inside the box of its row, the rows apart and inside the picture.
    fn legend_whole(l: &Layout, expected: &[String]) {
        let labels: Vec<&str> = l.legend.iter().map(|e| e.label.as_str()).collect();
        assert_eq!(
            labels,
            expected.iter().map(String::as_str).collect::<Vec<_>>()
        );
        let image = [0, 0, l.size.0 as i32, l.size.1 as i32];
        for (i, e) in l.legend.iter().enumerate() {
            let squeeze = |s: &str| s.split_whitespace().collect::<String>();
            assert_eq!(
                squeeze(&e.lines.concat()),
                squeeze(&e.label),
                "{:?}",
                e.lines
            );
            assert_eq!(e.lines.len(), e.text.len());
            for (line, b) in e.lines.iter().zip(&e.text) {
                assert!(!line.contains('…'), "nothing cut: {line}");
                assert!(contains(e.room, *b), "{line:?} {b:?} in {:?}", e.room);
            }
            assert!(contains(image, e.room), "{:?} inside the picture", e.room);
            for f in &l.legend[i + 1..] {
                assert!(!overlap(e.room, f.room), "{} / {}", e.label, f.label);
            }
        }
    }

    fn labels_apart(l: &Layout) {
        assert!(!l.labels.is_empty());
        for (i, a) in l.labels.iter().enumerate() {
            for b in &l.labels[i + 1..] {
                assert!(
                    !overlap(a.rect, b.rect),
                    "{:?} {:?} overlaps {:?} {:?}",
                    a.text,
                    a.rect,
                    b.text,
                    b.rect
                );
            }
        }
    }

    #[test]
    fn a_crowded_legend_keeps_every_entry_whole_with_its_unit() {
        let (v, c) = crowded();
        let l = side_view_layout(&v, &c, 1400, 480).unwrap();
        let mut expected =
            scene_legend(&v, (Sym::Gradient, "web path (colour = σ)"), true, v.plane);
        after_rollers(&mut expected, conductor_legend(&c.conductors, true, ""));
        let expected: Vec<String> = expected.into_iter().map(|(_, s)| s).collect();
        // 4 earthing states, 7 zone numbers, 8 point kinds (+ hollow), bars, floor, 2 conductors
        assert!(expected.len() >= 24, "{}", expected.len());
        legend_whole(&l, &expected);
        assert!(
            l.legend_columns >= 2,
            "more columns for {} rows",
            expected.len()
        );

        // a long contour name with its unit is wrapped, not cut
        let mut g = grid(40, 30);
        g.limit = Some((
            78_740.2,
            "electronics/field-at-item, invented long rule name".into(),
        ));
        let fl = field_map_layout(&v, &g, &c, 1400, 480).unwrap();
        let first = &fl.legend[0];
        assert!(first.lines.len() >= 2, "{:?}", first.lines);
        assert!(
            first.lines.last().unwrap().ends_with("kV/m)"),
            "{:?}",
            first.lines
        );
        assert!(first.label.ends_with("(78.7 kV/m)"), "{}", first.label);
        for e in &fl.legend {
            for (line, b) in e.lines.iter().zip(&e.text) {
                assert!(contains(e.room, *b), "{line:?}");
            }
        }
    }

    #[test]
    fn labels_are_apart_on_a_crowded_line_in_both_views() {
        let (v, c) = crowded();
        let l = side_view_layout(&v, &c, 1400, 700).unwrap();
        // every roller, point, device, conductor and zone is labelled
        let n = v.rollers.len() + v.points.len() + v.markers.len() + v.zones.len() + 2;
        assert_eq!(l.labels.len(), n);
        labels_apart(&l);
        assert!(l.labels.iter().any(|p| p.leader), "some labels moved away");
        for p in &l.labels {
            assert!(contains(l.plot_area, p.rect), "{} inside the chart", p.text);
        }
        let fl = field_map_layout(&v, &grid(60, 40), &c, 1400, 700).unwrap();
        assert_eq!(fl.labels.len(), n + 1, "and the contour");
        labels_apart(&fl);
    }

    #[test]
    fn points_off_the_plane_are_hollow_and_labelled_with_their_y() {
        let mut v = view();
        // P3 is over the web (|y| < 0.5 m) but off the field map's slice at y = 0
        v.points.push(PlotPoint {
            id: "P3".into(),
            kind: "meter".into(),
            x: 0.2,
            y: 0.3,
            z: 1.4,
        });
        let c = ConductorLayer::default();
        let texts =
            |l: &Layout| -> Vec<String> { l.labels.iter().map(|p| p.text.clone()).collect() };
        let hollow = |l: &Layout| {
            l.legend
                .iter()
                .any(|e| e.label.starts_with("hollow: point off"))
        };
        let side = side_view_layout(&v, &c, 1200, 700).unwrap();
        let t = texts(&side);
        assert!(t.contains(&"P2 (y = 1.1 m)".to_string()), "{t:?}");
        assert!(t.contains(&"P1".to_string()) && t.contains(&"P3".to_string()));
        assert!(hollow(&side));
        let map = field_map_layout(&v, &grid(30, 20), &c, 1200, 700).unwrap();
        let t = texts(&map);
        assert!(t.contains(&"P2 (y = 1.1 m)".to_string()), "{t:?}");
        assert!(t.contains(&"P3 (y = 0.3 m)".to_string()), "{t:?}");
        assert!(t.contains(&"P1".to_string()));
        assert!(hollow(&map));
        // all on the plane: no hollow entry
        v.points.retain(|p| p.y == 0.0);
        let g = FieldGrid {
            y: 0.0,
            ..grid(30, 20)
        };
        assert!(!hollow(&field_map_layout(&v, &g, &c, 1200, 700).unwrap()));
        assert!(!hollow(&side_view_layout(&v, &c, 1200, 700).unwrap()));
    }
}
