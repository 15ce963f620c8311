//! Colours of the plots: the fixed palette, the charge and field colour scales and the
//! vertical colour bar that explains them.
//!
//! Pipeline stage: report writers (PNG plots).
//!
//! ## Colour scales
//! Charge density, diverging and symmetric about zero:
//! $$ t = \tfrac12 \left( 1 + \frac{\sigma}{\sigma_\mathrm{max}} \right) $$
//! Field strength, logarithmic:
//! $$ t = \frac{\log_{10}|E| - \log_{10}E_\mathrm{lo}}{\log_{10}E_\mathrm{hi} - \log_{10}E_\mathrm{lo}} $$
//! Both are clamped to \[0, 1\]; the colour is a piecewise-linear blend of fixed anchor colours.
//!
//! | symbol | meaning | unit |
//! | --- | --- | --- |
//! | σ | surface charge density | C/m² (labels: µC/m²) |
//! | σ_max | half-range of the charge colour bar | C/m² |
//! | \|E\| | field-strength magnitude | V/m (labels: kV/m) |
//! | E_lo, E_hi | ends of the field colour bar (whole decades) | V/m |
//! | t | position on a colour scale | 1 |

use anyhow::Result;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, VPos};

use super::frame::{Area, fmt_num, tag, text};
use super::{MAX_MAGNITUDE, SideView};

pub(super) const INK: RGBColor = RGBColor(33, 37, 41);
pub(super) const MUTED: RGBColor = RGBColor(105, 110, 118);
pub(super) const GRID: RGBColor = RGBColor(222, 225, 230);
pub(super) const LIGHT_GRID: RGBColor = RGBColor(243, 244, 246);
pub(super) const NODATA: RGBColor = RGBColor(205, 205, 205);
pub(super) const GROUND_FILL: RGBColor = RGBColor(238, 234, 226);
pub(super) const GROUND_INK: RGBColor = RGBColor(92, 80, 64);
pub(super) const UNDERLAY: RGBColor = RGBColor(28, 30, 34);
pub(super) const MARKER: RGBColor = RGBColor(0, 122, 112);
pub(super) const LIMIT: RGBColor = RGBColor(188, 28, 48);
pub(super) const NODE: RGBColor = RGBColor(140, 145, 152);
pub(super) const MEASURED: RGBColor = RGBColor(250, 250, 250);
pub(super) const CONTOUR: RGBColor = RGBColor(255, 48, 168);
pub(super) const POINT_PALETTE: [RGBColor; 6] = [
    RGBColor(118, 42, 168),
    RGBColor(0, 104, 55),
    RGBColor(170, 74, 0),
    RGBColor(196, 0, 120),
    RGBColor(0, 86, 168),
    RGBColor(84, 84, 84),
];
pub(super) const CURVE_PALETTE: [RGBColor; 6] = [
    RGBColor(0, 140, 112),
    RGBColor(142, 56, 170),
    RGBColor(120, 120, 120),
    RGBColor(176, 140, 0),
    RGBColor(0, 150, 200),
    RGBColor(200, 80, 120),
];

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
pub(super) fn sigma_colour(t: f64) -> RGBColor {
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
pub(super) fn field_colour(t: f64) -> RGBColor {
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
pub(super) fn sigma_scale(v: &SideView) -> f64 {
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
pub(super) fn log_range(e: &[f64]) -> (f64, f64) {
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
pub(super) fn log_ticks(llo: f64, lhi: f64) -> Vec<(f64, String)> {
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
pub(super) fn colour_bar(
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

#[cfg(test)]
mod tests {
    use super::super::frame::fmt_num;
    use super::*;

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
