//! The legend in the right panel: one row per kind of thing drawn, each with a small symbol
//! that repeats its style in the chart.
//!
//! Pipeline stage: report writers (PNG plots).

use std::collections::BTreeSet;

use anyhow::Result;
use plotters::element::DashedPathElement;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, VPos};

use super::colour::{CONTOUR, GROUND_INK, INK, MARKER, MEASURED, MUTED, UNDERLAY, sigma_colour};
use super::conductors::{is_grounded, style as conductor_style};
use super::frame::{Area, bar_height, tag, text};
use super::glyphs::measure;
use super::layout::LegendEntry;
use super::scene::{
    Earthing, diamond, draw_hollow, earthing, earthing_name, kind_colour, on_plane, point_kinds,
    roller_style, zone_colour,
};
use super::{PlotConductor, PlotPoint, PlotRoller, PlotZone, SideView, coord_ok};

#[derive(Debug, Clone, Copy)]
pub(super) enum Sym {
    Gradient,
    Tape,
    Roller(Earthing),
    Zone(u8, bool),
    Point(RGBColor),
    /// A point off the plotted plane.
    Hollow(RGBColor),
    Bar,
    Ground,
    Swatch(RGBColor),
    Contour,
    Line(RGBColor, u32),
    Dashed(RGBColor),
    Measured,
    /// A limit above (or below) the scale, named in the margin.
    OffScale(RGBColor),
    /// A conductor beside the web: grounded or not, filled (side view) or edge only.
    Conductor(bool, bool),
    /// A round dot, filled or open (a sweep's values).
    Dot(RGBColor, bool),
}

/// Rows for what an x–z chart shows of the line: the web path (with the given symbol and
/// name), rollers by earthing, zones (`filled` as drawn), point kinds, devices and the floor.
/// `plane` is the across-web band drawn as on the plane [m] (points outside are hollow).
pub(super) fn scene_legend(
    v: &SideView,
    web: (Sym, &str),
    filled: bool,
    plane: [f64; 2],
) -> Vec<(Sym, String)> {
    let mut items = Vec::new();
    if !v.spans.is_empty() || !v.arcs.is_empty() {
        items.push((web.0, web.1.to_string()));
    }
    items.extend(roller_legend(&v.rollers));
    items.extend(zone_legend(&v.zones, filled));
    items.extend(point_legend(&v.points));
    if v.points.iter().any(|p| !on_plane(p.y, plane)) {
        items.push((
            Sym::Hollow(INK),
            "hollow: point off the plotted plane (its y in the label)".to_string(),
        ));
    }
    if !v.markers.is_empty() {
        items.push((Sym::Bar, "device / eliminator".to_string()));
    }
    if v.ground.is_some_and(coord_ok) {
        items.push((Sym::Ground, "earthed floor".to_string()));
    }
    items
}

/// Rows for the conductors beside the web, by earthing; `filled` as drawn, `note` appended
/// to each label (the field map says when the field leaves them out).
pub(super) fn conductor_legend(
    conductors: &[PlotConductor],
    filled: bool,
    note: &str,
) -> Vec<(Sym, String)> {
    let kinds: BTreeSet<bool> = conductors.iter().map(is_grounded).collect();
    kinds
        .into_iter()
        .rev()
        .map(|g| {
            let name = if g {
                "conductor, earthed"
            } else {
                "conductor, isolated"
            };
            (Sym::Conductor(g, filled), format!("{name}{note}"))
        })
        .collect()
}

/// `rows` inserted after the roller rows of `items` (or at the end without rollers), so
/// that the equipment stays together near the top of the legend.
pub(super) fn after_rollers(items: &mut Vec<(Sym, String)>, rows: Vec<(Sym, String)>) {
    let at = items
        .iter()
        .rposition(|(s, _)| matches!(s, Sym::Roller(_)))
        .map_or(items.len(), |i| i + 1);
    items.splice(at..at, rows);
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

/// Size of the legend text [px].
const LEGEND_FONT: f64 = 13.0;
/// Pitch of the lines of one wrapped label [px].
const LINE_PITCH: i32 = 16;
/// Smallest height of a legend row [px].
const ROW_MIN: i32 = 22;
/// Width of the symbol column, before the label [px].
const SYMBOL_W: i32 = 38;
/// Gap between legend columns [px].
const COLUMN_GAP: i32 = 12;
/// Height of the "Legend" heading [px].
const HEAD_H: i32 = 26;
/// Smallest colour bar height [px].
const BAR_MIN: i32 = 60;
/// Most legend columns tried before rows are let run past the panel.
const MAX_COLUMNS: i32 = 4;

/// One legend row as laid out, in image pixels.
#[derive(Debug, Clone)]
pub(super) struct Row {
    pub(super) sym: Sym,
    /// The full label.
    pub(super) label: String,
    /// The label broken into lines that each fit `room`.
    pub(super) lines: Vec<String>,
    /// Top-left corner of the row.
    pub(super) at: (i32, i32),
    /// Box the label text must stay in: `[x0, y0, x1, y1]`.
    pub(super) room: [i32; 4],
}

/// Where the legend panel, its colour bar and its rows go.
#[derive(Debug, Clone)]
pub(super) struct Plan {
    /// Width of the right panel [px].
    pub(super) panel_w: u32,
    /// Height of the colour bar [px]; 0 without one.
    pub(super) bar_h: i32,
    /// Columns used.
    pub(super) columns: i32,
    /// Rows in order.
    pub(super) rows: Vec<Row>,
    /// Whether every row lies inside the panel.
    pub(super) fits: bool,
}

/// Lays the legend out for a `size` picture: the right panel is one column wide (a fifth
/// of the width, 150..=270 px) when every row fits under the colour bar (`bar`), else the
/// colour bar is made shorter, then the panel gets more columns (up to [`MAX_COLUMNS`],
/// each adding 0.6 of the one-column width, at most half the picture); labels wider than a column are wrapped at spaces (a word wider than a
/// column is broken between characters). Every entry is kept, whole.
pub(super) fn plan(items: &[(Sym, String)], size: (u32, u32), bar: bool) -> Plan {
    let (w, h) = (size.0 as i32, size.1 as i32);
    let base = ((w as f64) * 0.2).clamp(150.0, 270.0) as i32;
    let py = 58 + 12;
    let bottom = h - 12;
    let bar_full = bar_height(h - 58 - 24);
    let bars: Vec<i32> = if bar {
        vec![bar_full, BAR_MIN.min(bar_full)]
    } else {
        vec![0]
    };
    let mut last = None;
    for columns in 1..=MAX_COLUMNS {
        for &bar_h in &bars {
            // each further column adds 0.6 of the one-column width (labels wrap)
            let panel_w = (base + (columns - 1) * base * 3 / 5).min(w / 2).max(base);
            let p = place_rows(items, w - panel_w, panel_w, py, bottom, bar, bar_h, columns);
            if p.fits {
                return p;
            }
            last = Some(p);
        }
    }
    last.unwrap_or_else(|| place_rows(items, w - base, base, py, bottom, bar, bar_full, 1))
}

#[allow(clippy::too_many_arguments)]
fn place_rows(
    items: &[(Sym, String)],
    panel_x: i32,
    panel_w: i32,
    py: i32,
    bottom: i32,
    bar: bool,
    bar_h: i32,
    columns: i32,
) -> Plan {
    let px = panel_x + 8;
    let usable = panel_w - 16;
    let col_w = (usable - COLUMN_GAP * (columns - 1)) / columns;
    let first_top = if bar { py + 28 + bar_h + 28 } else { py } + HEAD_H;
    let mut rows = Vec::with_capacity(items.len());
    let mut fits = true;
    let (mut col, mut y) = (0, first_top);
    for (sym, label) in items {
        let text_x = SYMBOL_W + 6;
        let lines = wrap(label, LEGEND_FONT, col_w - text_x);
        let rh = (LINE_PITCH * lines.len() as i32 + 6).max(ROW_MIN);
        if y + rh > bottom && y > col_top(col, first_top, py) && col + 1 < columns {
            col += 1;
            y = col_top(col, first_top, py);
        }
        if y + rh > bottom {
            fits = false;
        }
        let x = px + col * (col_w + COLUMN_GAP);
        rows.push(Row {
            sym: *sym,
            label: label.clone(),
            lines,
            at: (x, y),
            room: [x + text_x, y, x + col_w, y + rh],
        });
        y += rh;
    }
    Plan {
        panel_w: panel_w as u32,
        bar_h: if bar { bar_h } else { 0 },
        columns,
        rows,
        fits,
    }
}

/// Top of the rows of column `col`: under the heading in the first column, under the
/// height of the heading at the top of the panel in the others.
fn col_top(col: i32, first_top: i32, py: i32) -> i32 {
    if col == 0 { first_top } else { py + HEAD_H }
}

/// `s` broken into lines at most `room` px wide at `size`: at spaces, and between
/// characters inside a word that is wider than `room` on its own. No character is lost.
pub(super) fn wrap(s: &str, size: f64, room: i32) -> Vec<String> {
    let width = |t: &str| measure(t, size).0;
    let mut lines: Vec<String> = Vec::new();
    let mut cur = String::new();
    for word in s.split(' ').filter(|w| !w.is_empty()) {
        let joined = if cur.is_empty() {
            word.to_string()
        } else {
            format!("{cur} {word}")
        };
        if width(&joined) <= room {
            cur = joined;
            continue;
        }
        if !cur.is_empty() {
            lines.push(std::mem::take(&mut cur));
        }
        // the word alone, broken between characters while too wide
        for c in word.chars() {
            let mut t = cur.clone();
            t.push(c);
            if width(&t) > room && !cur.is_empty() {
                lines.push(std::mem::replace(&mut cur, c.to_string()));
            } else {
                cur = t;
            }
        }
    }
    if !cur.is_empty() || lines.is_empty() {
        lines.push(cur);
    }
    lines
}

/// Draws the legend of `plan`; returns what was drawn (label lines and the box of each).
pub(super) fn draw_legend(root: &Area<'_>, plan: &Plan) -> Result<Vec<LegendEntry>> {
    let mut out = Vec::with_capacity(plan.rows.len());
    let Some(first) = plan.rows.first() else {
        return Ok(out);
    };
    let style = text(LEGEND_FONT, INK);
    let head = text(15.0, INK);
    tag(
        root,
        "Legend",
        (first.at.0, first.at.1 - HEAD_H),
        HPos::Left,
        VPos::Top,
        &head,
        false,
    )?;
    for row in &plan.rows {
        let yc = row.at.1 + 9;
        draw_symbol(root, row.sym, (row.at.0 + 6, yc))?;
        let mut boxes = Vec::with_capacity(row.lines.len());
        for (i, line) in row.lines.iter().enumerate() {
            let y = yc + LINE_PITCH * i as i32;
            let (tw, th) = measure(line, LEGEND_FONT);
            let x0 = row.room[0];
            tag(root, line, (x0, y), HPos::Left, VPos::Center, &style, false)?;
            boxes.push([x0, y - th / 2, x0 + tw, y - th / 2 + th]);
        }
        out.push(LegendEntry {
            label: row.label.clone(),
            lines: row.lines.clone(),
            text: boxes,
            room: row.room,
        });
    }
    Ok(out)
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
        Sym::Hollow(c) => {
            draw_hollow(root, (x + 15, yc), c)?;
        }
        Sym::OffScale(c) => {
            root.draw(&DashedPathElement::new(
                vec![(x, yc + 4), (x + 30, yc + 4)],
                6,
                4,
                c.stroke_width(2),
            ))?;
            root.draw(&PathElement::new(
                vec![(x + 15, yc + 1), (x + 15, yc - 8)],
                c.stroke_width(2),
            ))?;
            root.draw(&Polygon::new(
                vec![(x + 10, yc - 4), (x + 15, yc - 10), (x + 20, yc - 4)],
                c.filled(),
            ))?;
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
        Sym::Conductor(grounded, filled) => {
            let st = conductor_style(grounded);
            let r = [(x + 2, yc - 8), (x + 28, yc + 8)];
            if filled {
                root.draw(&Rectangle::new(r, st.fill.0.mix(st.fill.1).filled()))?;
                if st.hatch {
                    for k in [-6, 2, 10, 18] {
                        let (a, b) = ((x + 2 + k).max(x + 2), (x + 2 + k + 16).min(x + 28));
                        root.draw(&PathElement::new(
                            vec![(a, yc - 8 + (a - x - 2 - k)), (b, yc - 8 + (b - x - 2 - k))],
                            st.edge.stroke_width(1),
                        ))?;
                    }
                }
            }
            root.draw(&Rectangle::new(r, st.edge.stroke_width(st.width)))?;
        }
        Sym::Dot(c, filled) => {
            if filled {
                root.draw(&Circle::new((x + 15, yc), 5, c.filled()))?;
            } else {
                root.draw(&Circle::new((x + 15, yc), 5, WHITE.filled()))?;
                root.draw(&Circle::new((x + 15, yc), 5, c.stroke_width(2)))?;
            }
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
