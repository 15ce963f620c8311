//! The sweep chart: each profile's worst margin against the varied value, the limit
//! (margin 1) as a dashed line, and the crossings found by bisection as vertical lines
//! labelled with their value.
//!
//! Pipeline stage: report writers (PNG plots). Draws a [`Sweep`] as computed; the values
//! stay in the user's unit on the x axis, margins are ratios (value ÷ limit) [1].

use anyhow::Result;
use plotters::element::DashedPathElement;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, VPos};

use super::colour::{CURVE_PALETTE, INK, LIMIT, MUTED};
use super::frame::{draw_mesh, empty_note, fmt_num, label_above, layout, render, tag, text};
use super::legend::{Sym, draw_legend, plan};
use super::stroke::{PxMap, polyline, stroke};
use super::val_ok;
use crate::sweep::Sweep;

/// A value of a curve: (value, worst margin [1], whether the profile fails there).
type Dot = (f64, f64, bool);

/// Colour of the k-th profile's curve.
fn curve_colour(k: usize) -> RGBColor {
    const FIRST: [RGBColor; 2] = [RGBColor(22, 78, 168), RGBColor(222, 96, 16)];
    if k < FIRST.len() {
        FIRST[k]
    } else {
        CURVE_PALETTE[(k - FIRST.len()) % CURVE_PALETTE.len()]
    }
}

/// The x-axis title: the path and the unit of its values.
fn x_title(s: &Sweep) -> String {
    if s.unit.is_empty() {
        s.path.clone()
    } else {
        format!("{} [{}]", s.path, s.unit)
    }
}

/// A value with the sweep's unit, for labels.
fn with_unit(v: f64, unit: &str) -> String {
    if unit.is_empty() {
        fmt_num(v)
    } else {
        format!("{} {unit}", fmt_num(v))
    }
}

/// Worst margin of every profile against the varied value, with the limit (margin 1) and
/// the crossings. Returns PNG bytes.
pub fn sweep_png(s: &Sweep, width: u32, height: u32) -> Result<Vec<u8>> {
    // Per profile: (value, worst margin, fails there), where it has findings.
    let curves: Vec<(usize, Vec<Dot>)> = (0..s.profiles.len())
        .map(|p| {
            let pts = s
                .rows
                .iter()
                .filter_map(|r| {
                    let m = r.margins.get(p).copied().flatten()?;
                    Some((r.value, m, r.fails.get(p).copied().unwrap_or(false)))
                })
                .filter(|(x, m, _)| val_ok(*x) && val_ok(*m))
                .collect();
            (p, pts)
        })
        .collect();
    let mut items: Vec<(Sym, String)> = curves
        .iter()
        .map(|(p, pts)| {
            let name = s.profiles[*p].to_string();
            let label = if pts.is_empty() {
                format!("{name} (no findings)")
            } else {
                name
            };
            (Sym::Line(curve_colour(*p), 3), label)
        })
        .collect();
    items.push((
        Sym::Dashed(LIMIT),
        "limit: margin 1 (value = limit)".to_string(),
    ));
    items.push((
        Sym::Dot(INK, true),
        "the profile fails at this value".to_string(),
    ));
    items.push((
        Sym::Dot(INK, false),
        "the profile passes at this value".to_string(),
    ));
    if !s.crossings.is_empty() {
        items.push((
            Sym::Dashed(MUTED),
            "verdict changes (refined by bisection), in the profile's colour".to_string(),
        ));
    }
    let plan = plan(&items, (width, height), false);
    render(width, height, |root| {
        let subtitle = format!(
            "{}; value ÷ limit of each profile's worst finding, above 1 a limit is exceeded",
            s.title
        );
        let (main, _panel) = layout(
            root,
            &format!("Worst margin against {}", s.path),
            &subtitle,
            plan.panel_w,
        )?;
        let (mut x0, mut x1) = (s.range[0].min(s.range[1]), s.range[0].max(s.range[1]));
        if !(val_ok(x0) && val_ok(x1)) || x1 <= x0 {
            (x0, x1) = (0.0, 1.0);
        }
        let pad = 0.02 * (x1 - x0);
        let (x0, x1) = (x0 - pad, x1 + pad);
        let top = curves
            .iter()
            .flat_map(|(_, pts)| pts.iter().map(|p| p.1))
            .fold(1.0_f64, f64::max);
        let (y0, y1) = (0.0, (top * 1.1).max(1.25));

        let mut builder = ChartBuilder::on(&main);
        builder
            .margin(12)
            .margin_top(60)
            .x_label_area_size(46)
            .y_label_area_size(76);
        let mut chart = builder.build_cartesian_2d(x0..x1, y0..y1)?;
        draw_mesh(
            &mut chart,
            &x_title(s),
            "worst margin, value ÷ limit [1]",
            None,
        )?;
        let area = chart.plotting_area();
        area.draw(&DashedPathElement::new(
            vec![(x0, 1.0), (x1, 1.0)],
            10,
            6,
            LIMIT.stroke_width(2),
        ))?;
        let (lx, ly) = chart.backend_coord(&(x1, 1.0));
        tag(
            root,
            "limit",
            (lx - 4, ly - 4),
            HPos::Right,
            VPos::Bottom,
            &text(13.0, LIMIT),
            true,
        )?;

        // crossings: a vertical line in the profile's colour, the value above the plot
        let (_, plot_top) = chart.backend_coord(&(x0, y1));
        let style = text(13.0, INK);
        let mut row_end = [i32::MIN; 3];
        let mut marks: Vec<_> = s.crossings.iter().filter(|c| val_ok(c.value)).collect();
        marks.sort_by(|a, b| a.value.total_cmp(&b.value));
        for c in marks {
            let colour = curve_colour(c.profile);
            area.draw(&DashedPathElement::new(
                vec![(c.value, y0), (c.value, y1)],
                6,
                4,
                colour.stroke_width(2),
            ))?;
            let (x, _) = chart.backend_coord(&(c.value, y1));
            label_above(
                root,
                &with_unit(c.value, &s.unit),
                (x, plot_top),
                (&style, &text(13.0, colour)),
                colour,
                &mut row_end,
            )?;
        }

        // curves, the first profile on top, with a dot at every value swept
        let map = PxMap::of(&chart);
        for (p, pts) in curves.iter().rev() {
            if pts.is_empty() {
                continue;
            }
            let colour = curve_colour(*p);
            let mut sorted = pts.clone();
            sorted.sort_by(|a, b| a.0.total_cmp(&b.0));
            let clipped: Vec<Dot> = sorted.iter().map(|&(x, m, f)| (x, m.min(y1), f)).collect();
            let px: Vec<(f64, f64)> = clipped.iter().map(|q| map.map((q.0, q.1))).collect();
            stroke(root, &polyline(&px), 1.5, |_| colour)?;
            for &(x, m, fails) in &clipped {
                let c = chart.backend_coord(&(x, m));
                if fails {
                    root.draw(&Circle::new(c, 5, colour.filled()))?;
                } else {
                    root.draw(&Circle::new(c, 5, WHITE.filled()))?;
                    root.draw(&Circle::new(c, 5, colour.stroke_width(2)))?;
                }
            }
        }
        if curves.iter().all(|(_, pts)| pts.is_empty()) {
            empty_note(root, &chart, "no findings at any value swept")?;
        }
        draw_legend(root, &plan)?;
        Ok(())
    })
}

#[cfg(test)]
mod tests {
    use super::super::testkit::{colours, decode, has, title_has_ink};
    use super::*;
    use crate::sweep::{Crossing, SceneUse, SweepRow};
    use crate::units::Dim;

    fn sweep() -> Sweep {
        let rows = (0..11)
            .map(|i| {
                let x = 50.0 + 35.0 * f64::from(i);
                let m = x / 200.0;
                SweepRow {
                    value: x,
                    si: x / 60.0,
                    margins: vec![Some(m), Some(0.4), None],
                    fails: vec![m >= 1.0, false, false],
                    exceeded: m >= 1.0,
                }
            })
            .collect();
        Sweep {
            title: "Test line".into(),
            path: "web.speed".into(),
            unit: "m/min".into(),
            dim: Dim::Speed,
            range: [50.0, 400.0],
            profiles: vec!["ex-zone-2".into(), "air-limit".into(), "readings".into()],
            rows,
            crossings: vec![Crossing {
                profile: 0,
                value: 200.0,
                si: 200.0 / 60.0,
                bracket: [199.9999, 200.0001],
                fails_below: false,
            }],
            scene: SceneUse::Reused,
            scenes_built: 1,
            assessments: 30,
            warnings: Vec::new(),
        }
    }

    #[test]
    fn the_chart_draws_curves_the_limit_and_the_crossing() {
        let png = sweep_png(&sweep(), 1400, 700).unwrap();
        let (w, h, rgb) = decode(&png);
        assert_eq!((w, h), (1400, 700));
        assert!(colours(&rgb) > 20);
        assert!(title_has_ink(w, &rgb));
        assert!(has(&rgb, curve_colour(0)), "first profile's curve");
        assert!(has(&rgb, curve_colour(1)), "second profile's curve");
        assert!(has(&rgb, LIMIT), "limit line");
    }

    #[test]
    fn odd_values_still_give_a_picture() {
        let mut s = sweep();
        s.rows[3].margins[0] = Some(f64::NAN);
        s.rows[4].margins[0] = Some(1e300);
        s.rows.iter_mut().for_each(|r| r.margins[1] = None);
        s.range = [400.0, 50.0];
        s.crossings[0].value = f64::INFINITY;
        decode(&sweep_png(&s, 800, 500).unwrap());
        s.rows.iter_mut().for_each(|r| r.margins = vec![None; 3]);
        s.range = [f64::NAN, 1.0];
        decode(&sweep_png(&s, 800, 500).unwrap());
    }
}
