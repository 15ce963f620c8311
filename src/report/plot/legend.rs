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
use super::frame::{Area, fit, tag, text};
use super::scene::{
    Earthing, diamond, earthing, earthing_name, kind_colour, point_kinds, roller_style, zone_colour,
};
use super::{PlotConductor, PlotPoint, PlotRoller, PlotZone, SideView, coord_ok};

#[derive(Debug, Clone, Copy)]
pub(super) enum Sym {
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
    /// A conductor beside the web: grounded or not, filled (side view) or edge only.
    Conductor(bool, bool),
}

/// Rows for what an x–z chart shows of the line: the web path (with the given symbol and
/// name), rollers by earthing, zones (`filled` as drawn), point kinds, devices and the floor.
pub(super) fn scene_legend(v: &SideView, web: (Sym, &str), filled: bool) -> Vec<(Sym, String)> {
    let mut items = Vec::new();
    if !v.spans.is_empty() || !v.arcs.is_empty() {
        items.push((web.0, web.1.to_string()));
    }
    items.extend(roller_legend(&v.rollers));
    items.extend(zone_legend(&v.zones, filled));
    items.extend(point_legend(&v.points));
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
/// that the equipment stays together near the top of a legend that may be cut short.
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

/// Draws legend rows from `at` downwards, stopping before `bottom`.
pub(super) fn legend(
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
