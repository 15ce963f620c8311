//! STUB
#![allow(missing_docs)]
pub struct PlotRoller {
    pub id: String,
    pub center: [f64; 2],
    pub radius: f64,
    pub earthing: String,
}
pub struct PlotSpan {
    pub name: String,
    pub start: [f64; 2],
    pub end: [f64; 2],
    pub sigma_start: f64,
    pub sigma_end: f64,
}
pub struct PlotArc {
    pub center: [f64; 2],
    pub radius: f64,
    pub start_angle: f64,
    pub sweep: f64,
    pub sigma: f64,
}
pub struct PlotZone {
    pub id: String,
    pub label: String,
    pub x: [f64; 2],
    pub z: [f64; 2],
    pub zone: u8,
}
pub struct PlotPoint {
    pub id: String,
    pub kind: String,
    pub x: f64,
    pub z: f64,
}
pub struct PlotMarker {
    pub id: String,
    pub x: f64,
    pub z: f64,
    pub label: String,
}
pub struct SideView {
    pub title: String,
    pub rollers: Vec<PlotRoller>,
    pub spans: Vec<PlotSpan>,
    pub arcs: Vec<PlotArc>,
    pub zones: Vec<PlotZone>,
    pub points: Vec<PlotPoint>,
    pub markers: Vec<PlotMarker>,
    pub ground: Option<f64>,
}
pub struct FieldGrid {
    pub xs: Vec<f64>,
    pub zs: Vec<f64>,
    pub e_mag: Vec<f64>,
    pub y: f64,
    pub limit: Option<(f64, String)>,
}
pub struct ChargeCurve {
    pub s: Vec<f64>,
    pub sigma_c: Vec<f64>,
    pub sigma_peak: Vec<f64>,
    pub nodes: Vec<(f64, String)>,
    pub limits: Vec<(f64, String)>,
    pub extra: Vec<(String, Vec<f64>)>,
    pub markers: Vec<(f64, f64, f64, f64, String)>,
}
pub fn side_view_png(_v: &SideView, _w: u32, _h: u32) -> anyhow::Result<Vec<u8>> {
    Ok(vec![])
}
pub fn field_map_png(_v: &SideView, _g: &FieldGrid, _w: u32, _h: u32) -> anyhow::Result<Vec<u8>> {
    Ok(vec![])
}
pub fn charge_png(_c: &ChargeCurve, _w: u32, _h: u32) -> anyhow::Result<Vec<u8>> {
    Ok(vec![])
}
