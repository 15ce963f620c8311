//! The charge chart: charge density against arc length along the web path — centreline,
//! across-web peak, extra curves, measured points with error bars, node ticks and limits.
//!
//! Pipeline stage: report writers (PNG plots). Draws only; σ is converted to µC/m² for the
//! axis.

use anyhow::{Result, ensure};
use plotters::element::DashedPathElement;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, VPos};

use super::colour::{CURVE_PALETTE, INK, LIMIT, MEASURED, MUTED, NODE};
use super::frame::{
    draw_mesh, empty_note, fmt_num, label_above, layout, non_empty, render, tag, text,
};
use super::layout::{Layout, LimitSegment};
use super::legend::{Sym, draw_legend, plan};
use super::stroke::{PxMap, polyline, stroke};
use super::{ChargeCurve, LIMIT_SCALE, PlotLimit, val_ok};

/// Charge density along the web path against arc length s: centreline, across-web peak,
/// extra curves, measured points with error bars, node ticks and limit lines.
/// Returns PNG bytes.
///
/// Fails when `sigma_c` or an extra curve does not have one value per `s`, or when
/// `sigma_peak` is neither empty nor of that length.
pub fn charge_png(c: &ChargeCurve, width: u32, height: u32) -> Result<Vec<u8>> {
    Ok(charge(c, width, height)?.0)
}

/// What [`charge_png`] draws: the limit lines and their extents, the σ range of the
/// axis, the limits named in the margin, the legend. Draws the picture to find out; fails
/// as [`charge_png`] does.
pub fn charge_layout(c: &ChargeCurve, width: u32, height: u32) -> Result<Layout> {
    Ok(charge(c, width, height)?.1)
}

/// The limits of `c` split by the scale rule: those at most [`LIMIT_SCALE`] times
/// `data_max` [µC/m²] from zero (all of them when there is no data) are drawn, the others
/// named in the margin: `(drawn, notes)`.
fn split_limits(c: &ChargeCurve, data_max: f64) -> (Vec<&PlotLimit>, Vec<String>) {
    let mut drawn = Vec::new();
    let mut notes = Vec::new();
    for l in &c.limits {
        let y = l.sigma * 1e6;
        if !val_ok(y) {
            continue;
        }
        if data_max <= 0.0 || y.abs() <= LIMIT_SCALE * data_max {
            drawn.push(l);
        } else {
            let side = if y > 0.0 { "above" } else { "below" };
            notes.push(format!(
                "{} {} µC/m² {side} the scale",
                non_empty(&l.label, "limit"),
                fmt_num(y)
            ));
        }
    }
    (drawn, notes)
}

/// The arc-length extents [m] a limit is drawn over inside `[s0, s1]`: its spans, or
/// `whole` when it names none.
fn limit_extents(l: &PlotLimit, whole: (f64, f64), (s0, s1): (f64, f64)) -> Vec<[f64; 2]> {
    if l.spans.is_empty() {
        return vec![[whole.0.max(s0), whole.1.min(s1)]];
    }
    l.spans
        .iter()
        .filter(|e| val_ok(e[0]) && val_ok(e[1]))
        .map(|e| [e[0].min(e[1]).max(s0), e[0].max(e[1]).min(s1)])
        .filter(|e| e[0] < e[1])
        .collect()
}

fn charge(c: &ChargeCurve, width: u32, height: u32) -> Result<(Vec<u8>, Layout)> {
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
    let mu = |v: f64| v * 1e6;
    let curves = charge_curves(c);
    // the data: every curve and measured point [µC/m²]
    let mut data = Range1::default();
    let mut sdata = Range1::default();
    for (_, _, ys) in &curves {
        for (s, y) in c.s.iter().zip(ys.iter()) {
            if val_ok(*s) && val_ok(mu(*y)) {
                data.add(mu(*y));
                sdata.add(*s);
            }
        }
    }
    for (s, v, lo, hi, _) in &c.markers {
        if val_ok(*s) {
            [*v, *lo, *hi].iter().for_each(|&y| data.add(mu(y)));
        }
    }
    let data_max = if data.lo > data.hi {
        0.0
    } else {
        data.lo.abs().max(data.hi.abs())
    };
    let (drawn, notes) = split_limits(c, data_max);
    let mut items: Vec<(Sym, String)> = curves
        .iter()
        .map(|(name, (colour, width), _)| (Sym::Line(*colour, *width), name.clone()))
        .collect();
    if !c.markers.is_empty() {
        items.push((Sym::Measured, "measured (error bar)".to_string()));
    }
    if !drawn.is_empty() {
        items.push((
            Sym::Dashed(LIMIT),
            "limit, over the spans it applies to".to_string(),
        ));
    }
    for note in &notes {
        items.push((Sym::OffScale(LIMIT), note.clone()));
    }
    if !c.nodes.is_empty() {
        items.push((Sym::Dashed(NODE), "node of the path".to_string()));
    }
    let plan = plan(&items, (width, height), false);
    let mut out = Layout {
        size: (width, height),
        legend_columns: plan.columns as u32,
        off_scale: notes.clone(),
        ..Layout::default()
    };
    let png = render(width, height, |root| {
        let (main, panel) = layout(
            root,
            "Surface charge density along the web path",
            "σ against arc length s; vertical ticks mark nodes of the path",
            plan.panel_w,
        )?;
        let mut sb = Range1::default();
        let mut yb = data;
        yb.add(0.0);
        c.s.iter().for_each(|&s| sb.add(s));
        c.nodes.iter().for_each(|(s, _)| sb.add(*s));
        for (s, v, lo, hi, _) in &c.markers {
            sb.add(*s);
            if val_ok(*s) {
                [*v, *lo, *hi].iter().for_each(|&y| yb.add(mu(y)));
            }
        }
        drawn.iter().for_each(|l| yb.add(mu(l.sigma)));
        let (s0, s1) = sb.padded(0.02, (0.0, 1.0));
        let (y0, y1) = yb.padded(0.08, (-1.0, 1.0));
        out.sigma_range = [y0 * 1e-6, y1 * 1e-6];
        let whole = if sdata.lo > sdata.hi {
            (s0, s1)
        } else {
            (sdata.lo, sdata.hi)
        };

        let mut builder = ChartBuilder::on(&main);
        builder
            .margin(12)
            .margin_top(60)
            .x_label_area_size(46)
            .y_label_area_size(76);
        let mut chart = builder.build_cartesian_2d(s0..s1, y0..y1)?;
        draw_mesh(&mut chart, "arc length s [m]", "σ [µC/m²]", None)?;
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
            label_above(root, label, (x, top), (&style, &style), NODE, &mut row_end)?;
        }
        // limits, each over the spans it applies to, labelled at its rightmost end
        for l in &drawn {
            let y = mu(l.sigma);
            if y < y0 || y > y1 {
                continue;
            }
            let extents = limit_extents(l, whole, (s0, s1));
            for e in &extents {
                area.draw(&DashedPathElement::new(
                    vec![(e[0], y), (e[1], y)],
                    10,
                    6,
                    LIMIT.stroke_width(2),
                ))?;
                out.limit_segments.push(LimitSegment {
                    label: l.label.clone(),
                    sigma: l.sigma,
                    s: *e,
                });
            }
            let Some(last) = extents.last() else { continue };
            let (x, py) = chart.backend_coord(&(last[1], y));
            // Three significant digits, as the findings show the limit.
            let text_l = format!(
                "{} ({})",
                non_empty(&l.label, "limit"),
                crate::units::format_quantity_sig(
                    y * 1e-6,
                    crate::units::Dim::SurfaceChargeDensity,
                    3
                )
            );
            tag(
                root,
                &text_l,
                (x - 4, py - 4),
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

        let _ = panel;
        out.legend = draw_legend(root, &plan)?;
        Ok(())
    })?;
    Ok((png, out))
}

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

#[cfg(test)]
mod tests {
    use super::super::testkit::{colours, curve, decode, has, title_has_ink};
    use super::*;

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

    /// A zone's limit is drawn over the zone's spans only; a limit far above the data (the
    /// air-breakdown density, 53.1 µC/m², over data of 5 µC/m²) is named in the margin and
    /// leaves the scale to the data; one near the data sets it.
    #[test]
    fn limits_cover_their_spans_and_far_ones_are_named_in_the_margin() {
        let s: Vec<f64> = (0..=120).map(|i| f64::from(i) * 0.1).collect();
        let sigma_c: Vec<f64> = s.iter().map(|x| 5e-6 * (1.0 - x / 24.0)).collect();
        let limit = |sigma: f64, label: &str, spans: Vec<[f64; 2]>| PlotLimit {
            sigma,
            label: label.into(),
            spans,
        };
        let c = ChargeCurve {
            s,
            sigma_c,
            limits: vec![
                limit(1.7e-6, "zone 1", vec![[2.0, 3.0], [5.5, 6.25]]),
                limit(10e-6, "zone 2", vec![[4.0, 8.0]]),
                limit(53.1e-6, "air breakdown", Vec::new()),
            ],
            ..ChargeCurve::default()
        };
        let l = charge_layout(&c, 1200, 700).unwrap();
        let extents = |name: &str| -> Vec<[f64; 2]> {
            l.limit_segments
                .iter()
                .filter(|g| g.label == name)
                .map(|g| g.s)
                .collect()
        };
        assert_eq!(extents("zone 1"), vec![[2.0, 3.0], [5.5, 6.25]]);
        assert_eq!(extents("zone 2"), vec![[4.0, 8.0]]);
        assert!(extents("air breakdown").is_empty());
        assert_eq!(
            l.off_scale,
            vec!["air breakdown 53.1 µC/m² above the scale"]
        );
        assert!(l.legend.iter().any(|e| e.label == l.off_scale[0]));
        // 10 µC/m² is within 2.5 × 5 µC/m²: on the scale, which stays near the data
        let top = l.sigma_range[1];
        assert!((10e-6..=3.0 * 5e-6).contains(&top), "{top}");

        // without the zone 2 limit the scale follows the data alone (5 µC/m² + 8 %)
        let mut c2 = c.clone();
        c2.limits.remove(1);
        let top = charge_layout(&c2, 1200, 700).unwrap().sigma_range[1];
        assert!(top < 1.2 * 5e-6 && top > 5e-6, "{top}");
        // a limit for the whole path spans the data
        c2.limits[0].spans.clear();
        let l2 = charge_layout(&c2, 1200, 700).unwrap();
        assert_eq!(l2.limit_segments[0].s, [0.0, 12.0]);
    }
}
