//! What a drawn plot holds, in image pixels and plotted units: the legend entries with
//! the box each label has, the labels placed on the chart, and for the charge chart the
//! limit lines drawn, the σ range shown and the limits named in the margin instead.
//!
//! Pipeline stage: report writers (PNG plots). Filled while drawing, so that it is
//! exactly what the picture shows; returned by the `*_layout` functions for checks.
//!
//! Pixel boxes are `[x0, y0, x1, y1]` with x to the right and y down, x0 ≤ x1, y0 ≤ y1;
//! two boxes that only touch along an edge do not overlap.

/// A box in image pixels `[x0, y0, x1, y1]`, x right, y down.
pub type PxBox = [i32; 4];

/// Whether two pixel boxes share any area (touching edges do not count).
pub fn overlap(a: PxBox, b: PxBox) -> bool {
    a[0] < b[2] && b[0] < a[2] && a[1] < b[3] && b[1] < a[3]
}

/// Whether `inner` lies inside `outer` (edges may coincide).
pub fn contains(outer: PxBox, inner: PxBox) -> bool {
    inner[0] >= outer[0] && inner[1] >= outer[1] && inner[2] <= outer[2] && inner[3] <= outer[3]
}

/// One legend entry as drawn.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct LegendEntry {
    /// The full label.
    pub label: String,
    /// The label as drawn, one string per line (wrapped at spaces).
    pub lines: Vec<String>,
    /// The ink box of each line [px].
    pub text: Vec<PxBox>,
    /// The box the label has in its row [px]: every line's box lies inside it.
    pub room: PxBox,
}

/// A label placed on the chart.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct PlacedLabel {
    /// Text drawn.
    pub text: String,
    /// The point the label belongs to [px].
    pub anchor: (i32, i32),
    /// The label's box, white background included [px].
    pub rect: PxBox,
    /// Whether a leader line joins the label to its anchor (moved away from it).
    pub leader: bool,
}

/// A limit line of the charge chart as drawn.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct LimitSegment {
    /// The limit's label.
    pub label: String,
    /// Its value [C/m²].
    pub sigma: f64,
    /// Arc-length extent of the line [m].
    pub s: [f64; 2],
}

/// What one plot shows.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Layout {
    /// Picture size [px].
    pub size: (u32, u32),
    /// The plotting area of the chart [px].
    pub plot_area: PxBox,
    /// Legend entries in order.
    pub legend: Vec<LegendEntry>,
    /// Columns of the legend.
    pub legend_columns: u32,
    /// Labels placed on the chart (points, rollers, devices, zones, conductors, contour).
    pub labels: Vec<PlacedLabel>,
    /// Charge chart: limit lines drawn.
    pub limit_segments: Vec<LimitSegment>,
    /// Charge chart: the σ range of the vertical axis [C/m²].
    pub sigma_range: [f64; 2],
    /// Charge chart: limits left off the scale, as named in the margin.
    pub off_scale: Vec<String>,
}
