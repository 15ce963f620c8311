//! The limit contour of the field map: the line |E| = E_lim through the field grid, found
//! by marching squares, drawn over the map with its label.
//!
//! Pipeline stage: report writers (PNG plots). Only interpolates between given node
//! values to place a line; no field is computed.
//!
//! ## Method
//! Marching squares on the node values $f = \ln(|E| / E_\mathrm{lim})$; the contour crosses the
//! cell edge from node a to node b at the fraction
//! $$ \lambda = \frac{f_a}{f_a - f_b} $$
//! (linear in $\ln|E|$). Saddle cells are resolved with the mean of the four corners.
//!
//! | symbol | meaning | unit |
//! | --- | --- | --- |
//! | \|E\| | field-strength magnitude at a node | V/m |
//! | E_lim | limit drawn as the contour | V/m |
//! | f | log ratio at a node | 1 |
//! | λ | crossing fraction along a cell edge | 1 |
//!
//! ## Reference
//! - W. E. Lorensen, H. E. Cline, "Marching cubes", *Computer Graphics* 21(4), 1987
//!   (the two-dimensional case is marching squares).

use anyhow::Result;
use plotters::style::text_anchor::{HPos, VPos};

use super::colour::{CONTOUR, INK, UNDERLAY};
use super::frame::{Area, F64Chart, non_empty};
use super::labels::Request;
use super::stroke::{PxMap, Segment, stroke};

/// Marching squares for |E| = `limit` on ln|E|; cells with a non-finite corner are skipped.
pub(super) fn contour(xs: &[f64], zs: &[f64], e: &[f64], limit: f64) -> Vec<Segment> {
    let (nx, nz) = (xs.len(), zs.len());
    let mut out = Vec::new();
    if nx < 2 || nz < 2 || e.len() != nx * nz {
        return out;
    }
    let f = |ix: usize, iz: usize| -> f64 {
        let v = e[iz * nx + ix];
        if v.is_finite() {
            (v.max(1e-300) / limit).ln()
        } else {
            f64::NAN
        }
    };
    for iz in 0..nz - 1 {
        for ix in 0..nx - 1 {
            // corners counter-clockwise from bottom-left
            let c = [
                (xs[ix], zs[iz], f(ix, iz)),
                (xs[ix + 1], zs[iz], f(ix + 1, iz)),
                (xs[ix + 1], zs[iz + 1], f(ix + 1, iz + 1)),
                (xs[ix], zs[iz + 1], f(ix, iz + 1)),
            ];
            if c.iter().any(|p| !p.2.is_finite()) {
                continue;
            }
            // edge k joins corner k and corner k+1
            let mut hits: Vec<(usize, (f64, f64))> = Vec::with_capacity(4);
            for k in 0..4 {
                let (a, b) = (c[k], c[(k + 1) % 4]);
                if (a.2 > 0.0) != (b.2 > 0.0) {
                    let lam = a.2 / (a.2 - b.2);
                    hits.push((k, (a.0 + (b.0 - a.0) * lam, a.1 + (b.1 - a.1) * lam)));
                }
            }
            match hits.len() {
                2 => out.push((hits[0].1, hits[1].1)),
                4 => {
                    let centre = c.iter().map(|p| p.2).sum::<f64>() / 4.0;
                    if (centre > 0.0) == (c[0].2 > 0.0) {
                        // corner 0 joins the centre: cut off corners 1 and 3
                        out.push((hits[0].1, hits[1].1));
                        out.push((hits[2].1, hits[3].1));
                    } else {
                        // cut off corners 0 and 2
                        out.push((hits[3].1, hits[0].1));
                        out.push((hits[1].1, hits[2].1));
                    }
                }
                _ => {}
            }
        }
    }
    out
}

pub(super) fn draw_contour(
    root: &Area<'_>,
    chart: &F64Chart<'_, '_>,
    segs: &[Segment],
) -> Result<()> {
    let map = PxMap::of(chart);
    let px: Vec<Segment> = segs
        .iter()
        .map(|(a, b)| (map.map(*a), map.map(*b)))
        .collect();
    stroke(root, &px, 2.6, |_| UNDERLAY)?;
    stroke(root, &px, 1.5, |_| CONTOUR)?;
    Ok(())
}

/// The contour's label, above its highest point first.
pub(super) fn contour_label(
    chart: &F64Chart<'_, '_>,
    segs: &[Segment],
    label: &str,
) -> Option<Request> {
    let top = segs
        .iter()
        .flat_map(|(a, b)| [*a, *b])
        .max_by(|p, q| p.1.total_cmp(&q.1))?;
    let (x, y) = chart.backend_coord(&top);
    Some(
        Request::new(non_empty(label, "limit"), INK, (x, y))
            .at((x, y - 8), HPos::Center, VPos::Bottom)
            .at((x, y + 8), HPos::Center, VPos::Top),
    )
}

#[cfg(test)]
mod tests {
    use super::super::testkit::grid;
    use super::*;

    // ---- helpers ---------------------------------------------------------------------------------

    #[test]
    fn contour_of_a_one_over_r_field_is_the_expected_circle() {
        // closed form: |E| = E0 r0 / r equals E0 on the circle r = r0 = 0.1 m. Linear
        // interpolation of ln|E| along a cell edge h = 13.75 mm errs by about h²/(8 r0),
        // i.e. 0.24 mm, so 1 mm is a safe bound.
        let g = grid(161, 161);
        let segs = contour(&g.xs, &g.zs, &g.e_mag, 1e5);
        // the circle (circumference 0.63 m) crosses at least 0.63 / (h √2) = 32 cells
        assert!(
            segs.len() >= 32,
            "closed curve of many segments: {}",
            segs.len()
        );
        for (a, b) in &segs {
            for p in [a, b] {
                let r = (p.0 - 1.0).hypot(p.1 - 1.0);
                assert!((r - 0.1).abs() < 1e-3, "contour point at r = {r}");
            }
        }
        assert!(
            contour(&g.xs, &g.zs, &g.e_mag, 1e12).is_empty(),
            "limit never reached"
        );
    }
}
