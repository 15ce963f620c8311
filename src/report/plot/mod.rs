//! PNG plots of a web line: side view, field-strength map, charge along the web path, the
//! sensitivity of the worst findings to the uncertain inputs and the worst margins of a
//! sweep.
//!
//! Pipeline stage: report writers (`Report → writers`). Writers only format: every function
//! here receives plain data in SI units and draws it; nothing physical is computed. Units are
//! converted for labels only (C/m² → µC/m², V/m → kV/m; lengths stay in m).
//!
//! This file holds the plain-data inputs and the entry points; the drawing is split by
//! concern:
//!
//! | module | concern |
//! | --- | --- |
//! | `side_view`, `field_map`, `charge`, `sensitivity`, `sweep` | one chart each |
//! | `frame` | image frame: size check, font, title block, legend panel, text placement |
//! | `encode` | PNG encoding of the drawn RGB buffer |
//! | `xz` | extent and equal-scale chart of the x–z views |
//! | `scene` | floor, zones, rollers, devices and points on an x–z chart |
//! | `conductors` | conductors beside the web (plates, boxes, cylinders, people) on an x–z chart |
//! | `web` | the web path, sampled and coloured by charge density |
//! | `stroke` | anti-aliased thick polylines in pixel space |
//! | `colour` | palette, colour scales and colour bar |
//! | `legend` | legend rows, their layout (wrapped, in columns) and symbols |
//! | `labels` | labels on the x–z charts placed without overlap |
//! | `layout` | what a drawn plot holds (legend, labels, limits), for checks |
//! | `glyphs` | text set with the font's advances and kerning |
//! | `contour` | the limit contour (marching squares) |
//!
//! | symbol | meaning | unit |
//! | --- | --- | --- |
//! | σ | surface charge density | C/m² (labels: µC/m²) |
//! | \|E\| | field-strength magnitude | V/m (labels: kV/m) |
//! | E_lim | limit drawn as a contour | V/m |
//! | x, z | along-line and vertical coordinates | m |
//! | s | arc length along the web path | m |
//!
//! ## Assumptions
//! - The side view and field map are drawn to equal scale (1 m in x = 1 m in z).
//! - Field-grid values belong to the nodes; each cell spans from midpoint to midpoint.
//! - Conductors are drawn as given: outlines already projected on the x–z plane (the caller
//!   projects the 3-D shapes); the field map fills the grid cells the caller marks as inside
//!   a conductor instead of colouring them by |E|.
//! - A point is on the plotted plane when its across-web y is inside `SideView::plane`
//!   (side view) or within [`PLANE_TOLERANCE`] of the slice (field map); others are drawn
//!   hollow and labelled with their y, never as if on the web.
//! - Non-finite values (and magnitudes above [`MAX_MAGNITUDE`] in the plotted unit)
//!   are left out of the picture, never fatal.
//!
//! ## Valid range
//! Width and height [`MIN_PIXELS`]..=[`MAX_PIXELS`] px. The field colour bar spans
//! 1 to 5 decades. Point kinds get six colours in turn; at most 16 kinds are listed.
//! The legend keeps every entry whole: labels wrap and the panel takes up to four columns.
//! Text is drawn with the bundled font only (no system fonts are read).

mod charge;
mod colour;
mod conductors;
mod contour;
mod encode;
mod field_map;
mod frame;
mod glyphs;
mod labels;
mod layout;
mod legend;
mod scene;
mod sensitivity;
mod side_view;
mod stroke;
mod sweep;
#[cfg(test)]
mod testkit;
mod web;
mod xz;

pub use charge::{charge_layout, charge_png};
pub use field_map::{field_map_layout, field_map_png};
pub use layout::{Layout, LegendEntry, LimitSegment, PlacedLabel, PxBox, contains, overlap};
pub use sensitivity::{SensitivityChart, SensitivityRow, sensitivity_png};
pub use side_view::{side_view_layout, side_view_png};
pub use sweep::sweep_png;

/// Smallest accepted image width or height [px].
pub const MIN_PIXELS: u32 = 320;
/// Largest accepted image width or height [px].
pub const MAX_PIXELS: u32 = 8192;
/// Values whose magnitude exceeds this, in the unit plotted (m, µC/m², kV/m), are skipped [1].
pub const MAX_MAGNITUDE: f64 = 1e12;
/// A point within this distance of the field map's slice is on it [m].
pub const PLANE_TOLERANCE: f64 = 1e-3;
/// A charge limit at most this many times the largest |σ| plotted sets the scale; one
/// farther out is named in the margin so that it does not flatten the curves [1].
pub const LIMIT_SCALE: f64 = 2.5;

/// A roller (idler, drum, nip roll) seen from the side.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct PlotRoller {
    /// Identifier printed on or beside the roller.
    pub id: String,
    /// Centre `[x, z]` [m].
    pub center: [f64; 2],
    /// Radius [m].
    pub radius: f64,
    /// Earthing state: `"grounded"`, `"isolated"` or `"insulating"`; anything else is
    /// drawn as "unspecified".
    pub earthing: String,
}

/// A free span of web, a straight line between two tangent points.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct PlotSpan {
    /// Span name (not drawn; kept for callers' bookkeeping).
    pub name: String,
    /// Start point `[x, z]` [m].
    pub start: [f64; 2],
    /// End point `[x, z]` [m].
    pub end: [f64; 2],
    /// Centreline charge density at the start [C/m²].
    pub sigma_start: f64,
    /// Centreline charge density at the end [C/m²]; colour is interpolated linearly.
    pub sigma_end: f64,
}

/// A wrap of web around a roller, a circular arc.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct PlotArc {
    /// Arc centre `[x, z]` [m].
    pub center: [f64; 2],
    /// Arc radius [m].
    pub radius: f64,
    /// Angle of the arc start, measured from +x towards +z [rad].
    pub start_angle: f64,
    /// Signed sweep, positive counter-clockwise (from +x towards +z) [rad].
    pub sweep: f64,
    /// Centreline charge density on the wrap [C/m²].
    pub sigma: f64,
}

/// A hazardous-area zone, an axis-aligned rectangle in the side view.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct PlotZone {
    /// Identifier, used when `label` is empty.
    pub id: String,
    /// Text drawn in the zone.
    pub label: String,
    /// x extent `[x_a, x_b]` in any order [m].
    pub x: [f64; 2],
    /// z extent `[z_a, z_b]` in any order [m].
    pub z: [f64; 2],
    /// Zone number (0, 1, 2 for gas, 20, 21, 22 for dust) [1].
    pub zone: u8,
}

/// An evaluation point (field meter, operator position, check point).
#[derive(Debug, Clone, PartialEq, Default)]
pub struct PlotPoint {
    /// Identifier printed beside the point.
    pub id: String,
    /// Kind of point; each distinct kind gets its own colour and legend entry.
    pub kind: String,
    /// Position along the line [m].
    pub x: f64,
    /// Across-web position [m]: outside the plotted plane the point is drawn hollow and
    /// labelled with it.
    pub y: f64,
    /// Height [m].
    pub z: f64,
}

/// A device on the line (for example a static eliminator), drawn as a small bar.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct PlotMarker {
    /// Identifier, printed when `label` is empty.
    pub id: String,
    /// Position along the line [m].
    pub x: f64,
    /// Height [m].
    pub z: f64,
    /// Text printed under the bar.
    pub label: String,
}

/// A conductor beside the web (plate, box, cylinder, person) seen from the side: its outline
/// projected on the x–z plane.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct PlotConductor {
    /// Identifier printed beside the outline.
    pub id: String,
    /// Outline `[x, z]` [m], a convex polygon in order (closed by the drawing); two points
    /// are a plate seen edge-on, drawn as a thick line.
    pub outline: Vec<[f64; 2]>,
    /// Earthing state: `"grounded"` or `"isolated"`; anything else is drawn as isolated.
    pub earthing: String,
}

/// The conductors beside the web, as the side view and the field map draw them.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct ConductorLayer {
    /// Outlines of the conductors.
    pub conductors: Vec<PlotConductor>,
    /// Field-map nodes inside a conductor, laid out like [`FieldGrid::e_mag`]; drawn in the
    /// conductor colour instead of by |E|. Empty: none marked.
    pub inside: Vec<bool>,
    /// Whether the field includes the charge induced on the conductors (the field map's
    /// legend says when it does not).
    pub in_field: bool,
}

/// Everything drawn in the side view of the line (x along the line, z up).
#[derive(Debug, Clone, PartialEq, Default)]
pub struct SideView {
    /// Title printed above the plot.
    pub title: String,
    /// Rollers.
    pub rollers: Vec<PlotRoller>,
    /// Free spans of the web path.
    pub spans: Vec<PlotSpan>,
    /// Wraps of the web path around rollers.
    pub arcs: Vec<PlotArc>,
    /// Hazardous-area zones.
    pub zones: Vec<PlotZone>,
    /// Evaluation points.
    pub points: Vec<PlotPoint>,
    /// Devices such as eliminators.
    pub markers: Vec<PlotMarker>,
    /// Height of an earthed floor plane, if any [m].
    pub ground: Option<f64>,
    /// Across-web band `[y_a, y_b]` [m] the side view stands for (the web's width):
    /// points whose y is outside are drawn hollow and labelled with their y. The field
    /// map uses its slice instead (within [`PLANE_TOLERANCE`] of `FieldGrid::y`).
    pub plane: [f64; 2],
}

/// Field strength sampled on a rectangular x–z grid at one across-web position.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct FieldGrid {
    /// Node x positions, strictly increasing [m].
    pub xs: Vec<f64>,
    /// Node z positions, strictly increasing [m].
    pub zs: Vec<f64>,
    /// Field magnitude, row-major `e_mag[iz * xs.len() + ix]`; NaN where not computed [V/m].
    pub e_mag: Vec<f64>,
    /// Across-web position of the slice [m].
    pub y: f64,
    /// Draw a contour at this magnitude [V/m] with this label.
    pub limit: Option<(f64, String)>,
}

/// A charge-density limit of the charge chart.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct PlotLimit {
    /// The limit [C/m²].
    pub sigma: f64,
    /// Its name.
    pub label: String,
    /// Arc-length extents `[s_a, s_b]` [m] where it applies (the spans of a zone); empty:
    /// the whole path.
    pub spans: Vec<[f64; 2]>,
}

/// Charge density along the web path against arc length.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct ChargeCurve {
    /// Arc length of the samples [m].
    pub s: Vec<f64>,
    /// Centreline charge density, one per `s` [C/m²].
    pub sigma_c: Vec<f64>,
    /// Across-web maximum charge density, one per `s`, or empty [C/m²].
    pub sigma_peak: Vec<f64>,
    /// Nodes along the path (rollers, devices): `(s [m], label)`, drawn as vertical ticks.
    pub nodes: Vec<(f64, String)>,
    /// Limits, drawn as horizontal lines over the spans they apply to; a limit more than
    /// [`LIMIT_SCALE`] times the largest |σ| plotted is named in the margin instead.
    pub limits: Vec<PlotLimit>,
    /// More curves on the same `s` grid: `(name, σ [C/m²])`.
    pub extra: Vec<(String, Vec<f64>)>,
    /// Points with error bars: `(s [m], σ [C/m²], low [C/m²], high [C/m²], label)`.
    pub markers: Vec<(f64, f64, f64, f64, String)>,
}

/// A coordinate or value that can be plotted: finite and at most [`MAX_MAGNITUDE`] in size.
fn coord_ok(v: f64) -> bool {
    v.is_finite() && v.abs() <= MAX_MAGNITUDE
}

/// A plotted value (s, σ in µC/m²) under the same rule as a coordinate.
fn val_ok(v: f64) -> bool {
    coord_ok(v)
}

#[cfg(test)]
mod tests {
    use super::testkit::{colours, curve, decode, grid, title_has_ink, view};
    use super::*;

    #[test]
    fn empty_inputs_still_give_valid_pngs() {
        let v = SideView::default();
        for png in [
            side_view_png(&v, &ConductorLayer::default(), 640, 480).unwrap(),
            field_map_png(
                &v,
                &FieldGrid::default(),
                &ConductorLayer::default(),
                640,
                480,
            )
            .unwrap(),
            charge_png(&ChargeCurve::default(), 640, 480).unwrap(),
        ] {
            let (w, h, rgb) = decode(&png);
            assert_eq!((w, h), (640, 480));
            assert!(colours(&rgb) > 3, "axes and text at least");
            assert!(title_has_ink(w, &rgb));
        }
    }

    #[test]
    fn non_finite_and_extreme_values_do_not_panic() {
        let nan = f64::NAN;
        let mut v = view();
        v.rollers.push(PlotRoller {
            id: "bad".into(),
            center: [nan, 1.0],
            radius: -1.0,
            earthing: "?".into(),
        });
        v.rollers.push(PlotRoller {
            id: "huge".into(),
            center: [1e300, 0.0],
            radius: 1e300,
            earthing: "grounded".into(),
        });
        v.spans.push(PlotSpan {
            name: "n".into(),
            start: [nan; 2],
            end: [f64::INFINITY, 0.0],
            sigma_start: nan,
            sigma_end: nan,
        });
        v.spans.push(PlotSpan {
            name: "s".into(),
            start: [0.5, 0.5],
            end: [0.6, 0.6],
            sigma_start: nan,
            sigma_end: 1e300,
        });
        v.arcs.push(PlotArc {
            center: [1.0, 1.0],
            radius: 0.1,
            start_angle: nan,
            sweep: 1e9,
            sigma: f64::INFINITY,
        });
        v.arcs.push(PlotArc {
            center: [1.0, 1.0],
            radius: 0.1,
            start_angle: 0.0,
            sweep: 1e9,
            sigma: 0.0,
        });
        v.zones.push(PlotZone {
            id: "z".into(),
            label: String::new(),
            x: [2.0, 1.0],
            z: [nan, 1.0],
            zone: 99,
        });
        v.points.push(PlotPoint {
            id: "p".into(),
            kind: String::new(),
            x: nan,
            y: nan,
            z: 0.0,
        });
        v.markers.push(PlotMarker {
            id: "m".into(),
            x: f64::NEG_INFINITY,
            z: 0.0,
            label: "m".into(),
        });
        v.ground = Some(nan);
        decode(&side_view_png(&v, &bad_layer(), 800, 500).unwrap());

        let mut g = grid(20, 10);
        g.e_mag.iter_mut().step_by(3).for_each(|e| *e = nan);
        g.e_mag[1] = f64::INFINITY;
        g.e_mag[2] = -5.0;
        g.e_mag[4] = 0.0;
        g.e_mag[5] = 1e300;
        g.y = nan;
        g.limit = Some((nan, "x".into()));
        decode(&field_map_png(&v, &g, &bad_layer(), 800, 500).unwrap());
        g.e_mag.iter_mut().for_each(|e| *e = nan);
        g.limit = Some((1e5, "x".into()));
        decode(
            &field_map_png(
                &SideView::default(),
                &g,
                &ConductorLayer::default(),
                800,
                500,
            )
            .unwrap(),
        );

        let mut c = curve();
        c.sigma_c[3] = nan;
        c.sigma_c[4] = f64::INFINITY;
        c.sigma_peak.iter_mut().for_each(|v| *v = nan);
        c.s[10] = nan;
        c.nodes.push((nan, "n".into()));
        c.limits.push(PlotLimit {
            sigma: 1e300,
            label: "far".into(),
            spans: vec![[f64::NAN, 1e300]],
        });
        c.markers.push((nan, nan, nan, nan, String::new()));
        decode(&charge_png(&c, 800, 500).unwrap());
        let all_nan = ChargeCurve {
            s: vec![nan; 4],
            sigma_c: vec![nan; 4],
            ..ChargeCurve::default()
        };
        decode(&charge_png(&all_nan, 800, 500).unwrap());
        let one = ChargeCurve {
            s: vec![1.0],
            sigma_c: vec![2e-6],
            ..ChargeCurve::default()
        };
        decode(&charge_png(&one, 800, 500).unwrap());
    }

    /// Conductors with non-finite, huge, empty and degenerate outlines.
    fn bad_layer() -> ConductorLayer {
        let nan = f64::NAN;
        let c = |id: &str, outline: Vec<[f64; 2]>, e: &str| PlotConductor {
            id: id.into(),
            outline,
            earthing: e.into(),
        };
        ConductorLayer {
            conductors: vec![
                c("nan", vec![[nan, 0.0], [1.0, 1.0], [0.5, 2.0]], "grounded"),
                c("huge", vec![[-1e300, 0.0], [1e300, 1.0]], "isolated"),
                c("empty", Vec::new(), "grounded"),
                c("dot", vec![[0.5, 0.5]], "?"),
                c("same", vec![[0.5, 0.5], [0.5, 0.5], [0.5, 0.5]], "grounded"),
            ],
            inside: Vec::new(),
            in_field: true,
        }
    }

    #[test]
    fn bad_sizes_and_inconsistent_data_are_errors() {
        let v = view();
        assert!(side_view_png(&v, &ConductorLayer::default(), 0, 700).is_err());
        assert!(side_view_png(&v, &ConductorLayer::default(), 1200, MAX_PIXELS + 1).is_err());
        let mut g = grid(10, 8);
        g.e_mag.pop();
        assert!(field_map_png(&v, &g, &ConductorLayer::default(), 800, 500).is_err());
        let mut g = grid(10, 8);
        g.xs.swap(2, 3);
        assert!(field_map_png(&v, &g, &ConductorLayer::default(), 800, 500).is_err());
        let mut g = grid(10, 8);
        g.zs[0] = f64::NAN;
        assert!(field_map_png(&v, &g, &ConductorLayer::default(), 800, 500).is_err());
        let g = grid(10, 8);
        let short = ConductorLayer {
            inside: vec![false; 79],
            ..ConductorLayer::default()
        };
        assert!(field_map_png(&v, &g, &short, 800, 500).is_err());
        let mut c = curve();
        c.sigma_c.pop();
        assert!(charge_png(&c, 800, 500).is_err());
        let mut c = curve();
        c.sigma_peak.pop();
        assert!(charge_png(&c, 800, 500).is_err());
        let mut c = curve();
        c.extra[0].1.push(0.0);
        assert!(charge_png(&c, 800, 500).is_err());
    }
}
