//! The sensitivity chart: for the worst findings, how far each uncertain input moves the
//! margin (value ÷ governing limit) across its range, beside the finding's whole range and
//! the limit at margin 1.
//!
//! Pipeline stage: report writers (PNG plots). Draws only: the moves and ranges come from
//! the uncertainty stage.

use anyhow::{Result, ensure};
use plotters::element::DashedPathElement;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, VPos};

use super::colour::{CURVE_PALETTE, INK, LIMIT, MUTED};
use super::frame::{draw_mesh, fit, layout, render, tag, text};
use super::legend::{Sym, draw_legend, plan};
use super::val_ok;

/// One finding of the chart.
#[derive(Debug, Clone, PartialEq)]
pub struct SensitivityRow {
    /// What it is (`electronics/field-at-item on EL1`).
    pub label: String,
    /// Nominal margin [1].
    pub margin: f64,
    /// Least and greatest margin over the inputs' ranges [1] (the greatest may be +∞: not
    /// bounded).
    pub range: [f64; 2],
    /// How far each input, alone, can move the margin from its nominal value [1], in the
    /// order of [`SensitivityChart::inputs`].
    pub moves: Vec<f64>,
}

/// The data of the sensitivity chart.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct SensitivityChart {
    /// The uncertain inputs' names.
    pub inputs: Vec<String>,
    /// The findings, worst first.
    pub rows: Vec<SensitivityRow>,
}

/// The sensitivity chart as PNG bytes: one band per finding with a grey bar over its whole
/// margin range, a bar per input centred on the nominal margin (± its move), a dot at the
/// nominal margin and a dashed line at margin 1×. Fails when a row's `moves` do not match
/// the inputs.
pub fn sensitivity_png(c: &SensitivityChart, width: u32, height: u32) -> Result<Vec<u8>> {
    for r in &c.rows {
        ensure!(
            r.moves.len() == c.inputs.len(),
            "sensitivity chart: '{}' has {} moves for {} inputs",
            r.label,
            r.moves.len(),
            c.inputs.len()
        );
    }
    let colour = |k: usize| CURVE_PALETTE[k % CURVE_PALETTE.len()];
    let mut items: Vec<(Sym, String)> = vec![(Sym::Line(MUTED, 8), "whole range".into())];
    items.extend(
        c.inputs
            .iter()
            .enumerate()
            .map(|(k, name)| (Sym::Line(colour(k), 6), format!("moved by {name}"))),
    );
    items.push((Sym::Dashed(LIMIT), "the limit (margin 1×)".into()));
    let legend = plan(&items, (width, height), false);
    render(width, height, |root| {
        let (main, _panel) = layout(
            root,
            "Sensitivity of the worst findings",
            "margin = value ÷ governing limit; bars: how far each input's range moves it",
            legend.panel_w,
        )?;
        // The margin axis: every finite end, the nominal values and 1.
        let mut lo: f64 = 1.0;
        let mut hi: f64 = 1.0;
        for r in &c.rows {
            for x in [r.margin, r.range[0], r.range[1]]
                .into_iter()
                .chain(r.moves.iter().flat_map(|m| [r.margin - m, r.margin + m]))
            {
                if val_ok(x) {
                    lo = lo.min(x);
                    hi = hi.max(x);
                }
            }
        }
        lo = lo.min(0.0);
        let pad = 0.05 * (hi - lo).max(1e-3);
        let (x0, x1) = (lo, hi + pad);
        let n = c.rows.len().max(1) as f64;
        let (main_w, _) = main.dim_in_pixel();
        let label_w = ((main_w as f64) * 0.38) as u32;
        let mut builder = ChartBuilder::on(&main);
        builder
            .margin(12)
            .margin_top(18)
            .x_label_area_size(46)
            .y_label_area_size(label_w);
        let mut chart = builder.build_cartesian_2d(x0..x1, 0.0..n)?;
        draw_mesh(&mut chart, "margin = value ÷ limit [1]", "", Some((8, 0)))?;
        let area = chart.plotting_area();
        let band = 1.0 / (c.inputs.len() as f64 + 2.0);
        let style = text(13.0, INK);
        for (i, r) in c.rows.iter().enumerate() {
            // Row i from the top.
            let top = n - i as f64;
            let y = |k: f64| top - band * (k + 1.0);
            let clamp = |x: f64| if val_ok(x) { x.clamp(x0, x1) } else { x1 };
            area.draw(&PathElement::new(
                vec![(clamp(r.range[0]), y(0.0)), (clamp(r.range[1]), y(0.0))],
                MUTED.stroke_width(8),
            ))?;
            for (k, m) in r.moves.iter().enumerate() {
                if !val_ok(*m) || *m <= 0.0 {
                    continue;
                }
                area.draw(&PathElement::new(
                    vec![
                        (clamp(r.margin - m), y(k as f64 + 1.0)),
                        (clamp(r.margin + m), y(k as f64 + 1.0)),
                    ],
                    colour(k).stroke_width(6),
                ))?;
            }
            if val_ok(r.margin) {
                area.draw(&Circle::new((r.margin, y(0.0)), 4, INK.filled()))?;
            }
            let (px, py) = chart.backend_coord(&(x0, top - 0.5));
            let label = fit(root, &r.label, &style, label_w as i32 - 16)?;
            tag(
                root,
                &label,
                (px - 8, py),
                HPos::Right,
                VPos::Center,
                &style,
                false,
            )?;
        }
        area.draw(&DashedPathElement::new(
            vec![(1.0, 0.0), (1.0, n)],
            8,
            5,
            LIMIT.stroke_width(2),
        ))?;
        draw_legend(root, &legend)?;
        Ok(())
    })
}

#[cfg(test)]
mod tests {
    use super::super::testkit::{decode, has, title_has_ink};
    use super::*;

    fn chart() -> SensitivityChart {
        SensitivityChart {
            inputs: vec!["σ on S1".into(), "σ on S5".into()],
            rows: vec![
                SensitivityRow {
                    label: "a/b on S4".into(),
                    margin: 1.2,
                    range: [1.1, 1.3],
                    moves: vec![0.1, 0.0],
                },
                SensitivityRow {
                    label: "c/d on OP".into(),
                    margin: 0.9,
                    range: [0.8, f64::INFINITY],
                    moves: vec![0.05, 0.07],
                },
            ],
        }
    }

    /// The picture decodes at the size asked, with a title, the limit line and
    /// each input's colour.
    #[test]
    fn draws_the_limit_and_every_input() {
        let png = sensitivity_png(&chart(), 900, 500).unwrap();
        let (w, h, rgb) = decode(&png);
        assert_eq!((w, h), (900, 500));
        assert!(title_has_ink(w, &rgb));
        assert!(has(&rgb, LIMIT));
        assert!(has(&rgb, CURVE_PALETTE[0]) && has(&rgb, CURVE_PALETTE[1]));
    }

    #[test]
    fn a_row_without_one_move_per_input_is_refused() {
        let mut c = chart();
        c.rows[0].moves.pop();
        let e = sensitivity_png(&c, 900, 500).unwrap_err().to_string();
        assert!(e.contains("1 moves for 2 inputs"), "{e}");
    }
}
