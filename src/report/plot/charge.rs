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
    draw_mesh, empty_note, fit, fmt_num, layout, non_empty, panel_box, render, tag, text, text_size,
};
use super::legend::{Sym, legend};
use super::stroke::{PxMap, polyline, stroke};
use super::{ChargeCurve, val_ok};

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
}
