//! The report's pictures: side view, field map at y = 0 and charge along
//! the path, and the side view and charge of a planned line.
//!
//! Writer stage: assembles the plot inputs of [`figures`] (the field map's
//! grid is asked of the field stage) and has [`plot`] draw them as PNG.

use crate::assess::{Assessment, ThresholdProfile};
use crate::charge::ChargeProfile;
use crate::field::WebField;
use crate::model::Line;
use crate::readings::ReadingsResult;
use crate::report::build::Plot;
use crate::report::{figures, plot};
use crate::units::Dim;
use anyhow::Result;

/// Width of every picture [px].
const WIDTH: u32 = 1400;
/// Height of the charge-along-path pictures [px].
const CURVE_HEIGHT: u32 = 700;

/// The lowest |E| limit among the rules in force, for the map's contour.
fn lowest_field_limit(profiles: &[ThresholdProfile]) -> Option<(f64, String)> {
    profiles
        .iter()
        .flat_map(|p| p.rules.iter().map(move |r| (p, r)))
        .filter(|(_, r)| r.dim == Dim::Field)
        .filter_map(|(p, r)| {
            r.fail
                .or(r.warn)
                .map(|v| (v, format!("{}/{}", p.name, r.id)))
        })
        .min_by(|a, b| a.0.total_cmp(&b.0))
}

/// The largest |σ| on the path, across-web peak included [C/m²].
fn curve_peak(charge: &ChargeProfile, line: &Line) -> f64 {
    charge
        .pieces_between(0.0, line.path.total_length)
        .iter()
        .map(|p| p.2.abs())
        .fold(0.0, f64::max)
        * charge.across.max_abs()
}

/// The three report pictures of a line: side view, field map at y = 0 and
/// charge along the path (the field map is computed here on an
/// `map_resolution`-wide grid).
#[allow(clippy::too_many_arguments)]
pub fn make_plots(
    line: &Line,
    charge: &ChargeProfile,
    readings: &ReadingsResult,
    model: &WebField<'_>,
    profiles: &[ThresholdProfile],
    assessment: &Assessment,
    map_resolution: usize,
) -> Result<Vec<Plot>> {
    // Figures.
    let side = figures::side_view(line, charge);
    let (xr, zr) = figures::extent(line);
    let nx = map_resolution.clamp(20, 1000);
    let nz = ((nx as f64) * (zr[1] - zr[0]) / (xr[1] - xr[0]))
        .round()
        .clamp(10.0, 1000.0) as usize;
    let (xs, zs, e) = model.side_view_grid(xr, zr, nx, nz, 0.0);
    let grid = figures::field_grid(xs, zs, e, 0.0, lowest_field_limit(profiles));
    let height = figures::picture_height(xr, zr, WIDTH);
    // Charge limits that apply somewhere on this line (from the findings),
    // without those so far above the charge that they would flatten the plot.
    let peak = curve_peak(charge, line);
    let mut sigma_limits: Vec<(f64, String)> = Vec::new();
    for f in &assessment.findings {
        if f.dim != Dim::SurfaceChargeDensity {
            continue;
        }
        let label = format!("{}/{} fail", f.profile, f.rule);
        if let Some(v) = f.fail
            && !sigma_limits.iter().any(|(_, l)| l == &label)
            && (v <= 3.0 * peak || sigma_limits.is_empty())
        {
            sigma_limits.push((v, label));
        }
    }
    let mut curve = figures::charge_curve(line, charge, sigma_limits);
    curve.markers = readings
        .readings
        .iter()
        .map(|r| (r.s, r.sigma, r.sigma_low, r.sigma_high, r.id.clone()))
        .collect();
    Ok(vec![
        Plot {
            file: "side_view.png".into(),
            caption: "Side view: rollers, web path coloured by charge density, zones and points of interest".into(),
            png: plot::side_view_png(&side, WIDTH, height)?,
        },
        Plot {
            file: "field_map.png".into(),
            caption: "Field strength |E| on the centreline plane y = 0 (logarithmic colour scale)".into(),
            png: plot::field_map_png(&side, &grid, WIDTH, height)?,
        },
        Plot {
            file: "charge_along_path.png".into(),
            caption: "Charge density along the web path, with the limits in force".into(),
            png: plot::charge_png(&curve, WIDTH, CURVE_HEIGHT)?,
        },
    ])
}

/// The pictures of a line with the planned bars placed: its side view and
/// its charge along the path (with the charge without eliminators beside).
pub fn planned_plots(placed: &Line, charge: &ChargeProfile) -> Result<Vec<Plot>> {
    let side = figures::side_view(placed, charge);
    let (xr, zr) = figures::extent(placed);
    let height = figures::picture_height(xr, zr, WIDTH);
    let curve = figures::charge_curve(placed, charge, Vec::new());
    Ok(vec![
        Plot {
            file: "side_view_planned.png".into(),
            caption: "Side view with the best plan's bars".into(),
            png: plot::side_view_png(&side, WIDTH, height)?,
        },
        Plot {
            file: "charge_along_path_planned.png".into(),
            caption: "Charge density along the path with the best plan's bars, and without them"
                .into(),
            png: plot::charge_png(&curve, WIDTH, CURVE_HEIGHT)?,
        },
    ])
}
