//! Labels on the x–z charts placed so that no two overlap: each label asks for a few
//! positions near what it names, in order of preference; the first free one is taken,
//! else positions on rings farther out, joined to the point by a thin leader line.
//!
//! Pipeline stage: report writers (PNG plots). Greedy, in the order the labels are given
//! (labels fixed in place first, then points, devices, rollers, conductors, zones and the
//! contour). A position is free when its box stays in the plotting area and overlaps no
//! label placed before; the first pass also keeps clear of the symbols (points, devices,
//! small rollers). If no ring position is free at all, the one overlapping least is
//! taken (only on charts too crowded to hold every label).

use anyhow::Result;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, VPos};

use super::colour::MUTED;
use super::frame::{Area, tag, text};
use super::glyphs::measure;
use super::layout::{PlacedLabel, PxBox, contains, overlap};

/// Size of label text [px].
pub(super) const LABEL_FONT: f64 = 13.0;

/// Distances of the ring positions from the anchor [px].
const RINGS: [i32; 10] = [14, 24, 38, 56, 80, 110, 150, 200, 260, 340];
/// Directions tried on each ring.
const DIRECTIONS: usize = 16;

/// A label to place.
#[derive(Debug, Clone)]
pub(super) struct Request {
    /// Text.
    pub(super) text: String,
    /// Text colour.
    pub(super) colour: RGBColor,
    /// The point it names [px].
    pub(super) anchor: (i32, i32),
    /// Preferred top-left corners of the text, best first [px].
    pub(super) near: Vec<(i32, i32)>,
    /// On a white box (false: drawn on its object, e.g. inside a large roller).
    pub(super) boxed: bool,
    /// Kept at its first position whatever else is there (placed before the others).
    pub(super) fixed: bool,
}

impl Request {
    pub(super) fn new(text: &str, colour: RGBColor, anchor: (i32, i32)) -> Self {
        Request {
            text: text.to_string(),
            colour,
            anchor,
            near: Vec::new(),
            boxed: true,
            fixed: false,
        }
    }
    /// Adds a preferred position: the text's box with its `h`, `v` side at `at`.
    pub(super) fn at(mut self, at: (i32, i32), h: HPos, v: VPos) -> Self {
        let (tw, th) = measure(&self.text, LABEL_FONT);
        let x = match h {
            HPos::Left => at.0,
            HPos::Center => at.0 - tw / 2,
            HPos::Right => at.0 - tw,
        };
        let y = match v {
            VPos::Top => at.1,
            VPos::Center => at.1 - th / 2,
            VPos::Bottom => at.1 - th,
        };
        self.near.push((x, y));
        self
    }
}

/// The box a label covers with its top-left text corner at `p`, white box included.
fn cover(p: (i32, i32), (tw, th): (i32, i32)) -> PxBox {
    [p.0 - 3, p.1 - 2, p.0 + tw + 3, p.1 + th + 3]
}

/// Positions on rings around `a` for a `size` text box, nearest first.
fn ring(a: (i32, i32), (tw, th): (i32, i32)) -> Vec<(i32, i32)> {
    let mut out = Vec::with_capacity(RINGS.len() * DIRECTIONS);
    for r in RINGS {
        for k in 0..DIRECTIONS {
            let t = std::f64::consts::TAU * k as f64 / DIRECTIONS as f64;
            let (c, s) = (t.cos(), -t.sin());
            let cx = f64::from(a.0) + f64::from(r) * c + c * f64::from(tw) / 2.0;
            let cy = f64::from(a.1) + f64::from(r) * s + s * f64::from(th) / 2.0;
            out.push((
                (cx - f64::from(tw) / 2.0).round() as i32,
                (cy - f64::from(th) / 2.0).round() as i32,
            ));
        }
    }
    out
}

fn overlap_area(a: PxBox, b: PxBox) -> i64 {
    let w = (a[2].min(b[2]) - a[0].max(b[0])).max(0);
    let h = (a[3].min(b[3]) - a[1].max(b[1])).max(0);
    i64::from(w) * i64::from(h)
}

/// A request with its placement and the top-left corner of its text [px].
pub(super) type Placement = (Request, PlacedLabel, (i32, i32));

/// Places `requests` inside `area` avoiding each other and, where possible, `obstacles`.
/// Returns each request with its placement, in the order given.
pub(super) fn place(requests: &[Request], area: PxBox, obstacles: &[PxBox]) -> Vec<Placement> {
    let mut order: Vec<usize> = (0..requests.len()).collect();
    order.sort_by_key(|&i| !requests[i].fixed);
    let mut placed: Vec<PxBox> = Vec::new();
    let mut out: Vec<Option<Placement>> = vec![None; requests.len()];
    for i in order {
        let r = &requests[i];
        let size = measure(&r.text, LABEL_FONT);
        let near = if r.near.is_empty() {
            vec![(r.anchor.0 + 8, r.anchor.1 - 6 - size.1)]
        } else {
            r.near.clone()
        };
        let (pos, moved) = if r.fixed {
            (near[0], false)
        } else {
            let cands: Vec<(i32, i32)> = near.iter().copied().chain(ring(r.anchor, size)).collect();
            let free = |p: &(i32, i32), clear: bool, inside: bool| {
                let b = cover(*p, size);
                let outside = inside && !contains(area, b);
                let on_label = placed.iter().any(|q| overlap(*q, b));
                let on_symbol = clear && obstacles.iter().any(|q| overlap(*q, b));
                !(outside || on_label || on_symbol)
            };
            let k = cands
                .iter()
                .position(|p| free(p, true, true))
                .or_else(|| cands.iter().position(|p| free(p, false, true)))
                .or_else(|| cands.iter().position(|p| free(p, false, false)))
                .unwrap_or_else(|| {
                    (0..cands.len())
                        .min_by_key(|&k| {
                            let b = cover(cands[k], size);
                            placed.iter().map(|q| overlap_area(*q, b)).sum::<i64>()
                        })
                        .unwrap_or(0)
                });
            (cands[k], k >= near.len())
        };
        let rect = cover(pos, size);
        placed.push(rect);
        out[i] = Some((
            r.clone(),
            PlacedLabel {
                text: r.text.clone(),
                anchor: r.anchor,
                rect,
                leader: moved,
            },
            pos,
        ));
    }
    out.into_iter().flatten().collect()
}

/// Places and draws the labels (leader lines first, then the text); returns what was
/// placed.
pub(super) fn draw_labels(
    root: &Area<'_>,
    requests: &[Request],
    area: PxBox,
    obstacles: &[PxBox],
) -> Result<Vec<PlacedLabel>> {
    let placed = place(requests, area, obstacles);
    for (_, p, _) in placed.iter().filter(|(_, p, _)| p.leader) {
        let (ax, ay) = p.anchor;
        let to = (
            ax.clamp(p.rect[0], p.rect[2]),
            ay.clamp(p.rect[1], p.rect[3]),
        );
        root.draw(&PathElement::new(vec![p.anchor, to], MUTED.stroke_width(1)))?;
    }
    for (r, _, pos) in &placed {
        tag(
            root,
            &r.text,
            *pos,
            HPos::Left,
            VPos::Top,
            &text(LABEL_FONT, r.colour),
            r.boxed,
        )?;
    }
    Ok(placed.into_iter().map(|(_, p, _)| p).collect())
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Twenty labels asked for at the same spot end up pairwise apart, inside the area,
    /// the first where it asked to be and the others joined by leaders.
    #[test]
    fn labels_at_one_spot_are_spread_without_overlap() {
        let area = [0, 0, 800, 600];
        let reqs: Vec<Request> = (0..20)
            .map(|k| {
                Request::new(&format!("P{k} label"), RGBColor(0, 0, 0), (400, 300)).at(
                    (411, 294),
                    HPos::Left,
                    VPos::Bottom,
                )
            })
            .collect();
        let placed = place(&reqs, area, &[[392, 292, 408, 308]]);
        assert_eq!(placed.len(), 20);
        for (i, (_, a, _)) in placed.iter().enumerate() {
            assert!(contains(area, a.rect), "{:?}", a.rect);
            assert!(
                !overlap(a.rect, [392, 292, 408, 308]),
                "clear of the symbol"
            );
            assert_eq!(a.leader, i > 0);
            for (_, b, _) in &placed[i + 1..] {
                assert!(!overlap(a.rect, b.rect), "{:?} and {:?}", a.rect, b.rect);
            }
        }
    }
}
