//! Test support for the plot modules: example inputs (a small line, a 1/r field grid, a
//! charge curve), a PNG decoder over the `png` crate and pixel checks on decoded pictures.
//!
//! Pipeline stage: report writers (PNG plots), tests only.

use plotters::prelude::RGBColor;

use super::{
    ChargeCurve, ConductorLayer, FieldGrid, PlotArc, PlotConductor, PlotLimit, PlotMarker,
    PlotPoint, PlotRoller, PlotSpan, PlotZone, SideView,
};

/// Decodes a PNG with the `png` crate and checks that it is 8-bit RGB; returns
/// (width, height, RGB bytes).
pub(super) fn decode(png: &[u8]) -> (u32, u32, Vec<u8>) {
    let mut reader = png::Decoder::new(std::io::Cursor::new(png))
        .read_info()
        .expect("valid PNG header");
    let size = reader.output_buffer_size().expect("picture fits in memory");
    let mut rgb = vec![0u8; size];
    let info = reader.next_frame(&mut rgb).expect("valid PNG data");
    assert_eq!(
        (info.color_type, info.bit_depth),
        (png::ColorType::Rgb, png::BitDepth::Eight),
        "8-bit RGB"
    );
    rgb.truncate(info.buffer_size());
    (info.width, info.height, rgb)
}

/// Number of distinct RGB colours (a bit set over all 2^24 colours).
pub(super) fn colours(rgb: &[u8]) -> usize {
    let mut seen = vec![0u64; 1 << 18];
    let mut n = 0;
    for p in rgb.chunks_exact(3) {
        let c = (usize::from(p[0]) << 16) | (usize::from(p[1]) << 8) | usize::from(p[2]);
        let (word, bit) = (c >> 6, 1u64 << (c & 63));
        if seen[word] & bit == 0 {
            seen[word] |= bit;
            n += 1;
        }
    }
    n
}

pub(super) fn has(rgb: &[u8], c: RGBColor) -> bool {
    rgb.chunks_exact(3).any(|p| p == [c.0, c.1, c.2])
}

/// Dark pixels in the title strip prove that the bundled font was registered and used.
pub(super) fn title_has_ink(w: u32, rgb: &[u8]) -> bool {
    let stride = w as usize * 3;
    rgb[..stride * 40]
        .chunks_exact(3)
        .filter(|p| p.iter().all(|&v| v < 90))
        .count()
        > 100
}

pub(super) fn view() -> SideView {
    let roller = |id: &str, x: f64, z: f64, r: f64, e: &str| PlotRoller {
        id: id.into(),
        center: [x, z],
        radius: r,
        earthing: e.into(),
    };
    SideView {
        title: "Test line".into(),
        rollers: vec![
            roller("A", 0.0, 1.0, 0.1, "grounded"),
            roller("B", 1.0, 1.5, 0.05, "isolated"),
            roller("C", 2.0, 1.0, 0.05, "insulating"),
        ],
        spans: vec![
            PlotSpan {
                name: "a-b".into(),
                start: [0.0, 1.1],
                end: [1.0, 1.55],
                sigma_start: -5e-6,
                sigma_end: -4e-6,
            },
            PlotSpan {
                name: "b-c".into(),
                start: [1.03, 1.53],
                end: [2.0, 1.05],
                sigma_start: 3e-6,
                sigma_end: 6e-6,
            },
        ],
        arcs: vec![PlotArc {
            center: [1.0, 1.5],
            radius: 0.05,
            start_angle: 2.0,
            sweep: -1.5,
            sigma: -4e-6,
        }],
        zones: vec![PlotZone {
            id: "Z".into(),
            label: "coater".into(),
            x: [1.2, 1.9],
            z: [0.3, 1.8],
            zone: 1,
        }],
        points: vec![
            PlotPoint {
                id: "P1".into(),
                kind: "meter".into(),
                x: 0.5,
                y: 0.0,
                z: 1.0,
            },
            PlotPoint {
                id: "P2".into(),
                kind: "operator".into(),
                x: 1.5,
                y: 1.1,
                z: 0.5,
            },
        ],
        markers: vec![PlotMarker {
            id: "E1".into(),
            x: 1.5,
            z: 1.4,
            label: String::new(),
        }],
        ground: Some(0.0),
        plane: [-0.5, 0.5],
    }
}

/// |E| = 1e5 V/m · (0.1 m / r) around (1, 1): the limit 1e5 V/m is the circle r = 0.1 m.
pub(super) fn grid(nx: usize, nz: usize) -> FieldGrid {
    let xs: Vec<f64> = (0..nx)
        .map(|i| 2.2 * i as f64 / (nx - 1) as f64 - 0.1)
        .collect();
    let zs: Vec<f64> = (0..nz).map(|i| 2.0 * i as f64 / (nz - 1) as f64).collect();
    let mut e = Vec::with_capacity(nx * nz);
    for &z in &zs {
        for &x in &xs {
            let r = (x - 1.0).hypot(z - 1.0);
            e.push(if r < 0.02 { f64::NAN } else { 1e5 * 0.1 / r });
        }
    }
    FieldGrid {
        xs,
        zs,
        e_mag: e,
        y: 0.0,
        limit: Some((1e5, "limit".into())),
    }
}

pub(super) fn curve() -> ChargeCurve {
    let s: Vec<f64> = (0..50).map(|i| f64::from(i) * 0.1).collect();
    let sigma_c: Vec<f64> = s.iter().map(|x| (x - 2.0) * 2e-6).collect();
    let sigma_peak = sigma_c.iter().map(|v| v * 1.3).collect();
    let extra = vec![(
        "without devices".to_string(),
        s.iter().map(|x| x * 1e-6).collect(),
    )];
    ChargeCurve {
        s,
        sigma_c,
        sigma_peak,
        nodes: vec![
            (0.0, "A".into()),
            (1.0, "B".into()),
            (1.05, "E1".into()),
            (2.0, "C".into()),
        ],
        limits: vec![PlotLimit {
            sigma: 8e-6,
            label: "alert".into(),
            spans: vec![[0.5, 1.5], [2.0, 3.0]],
        }],
        extra,
        markers: vec![(1.5, -1e-6, -1.5e-6, -0.5e-6, "P1".into())],
    }
}

/// A crowded invented line: rollers of every earthing state close together, zones of
/// every number, points of many kinds (some beside the web) bunched round one roller,
/// devices, conductors of both earthings and a floor.
pub(super) fn crowded() -> (SideView, ConductorLayer) {
    let mut v = view();
    let states = ["grounded", "isolated", "insulating", "unknown"];
    for k in 0..12 {
        let x = 0.25 * f64::from(k);
        v.rollers.push(PlotRoller {
            id: format!("R{k}"),
            center: [x, 1.2 + 0.1 * f64::from(k % 3)],
            radius: 0.03,
            earthing: states[k as usize % 4].into(),
        });
    }
    for (k, n) in [0u8, 1, 2, 20, 21, 22, 7].into_iter().enumerate() {
        let x = 0.3 * k as f64;
        v.zones.push(PlotZone {
            id: format!("Z{k}"),
            label: format!("invented process area {k}"),
            x: [x, x + 0.5],
            z: [0.9, 1.6],
            zone: n,
        });
    }
    let kinds = [
        "meter",
        "operator",
        "electronics",
        "probe",
        "sensor",
        "nozzle",
        "hand",
        "check",
    ];
    for k in 0..16 {
        v.points.push(PlotPoint {
            id: format!("Q{k}"),
            kind: kinds[k % kinds.len()].into(),
            x: 1.0 + 0.02 * k as f64,
            y: if k % 3 == 0 { 1.1 } else { 0.0 },
            z: 1.3 + 0.015 * k as f64,
        });
    }
    for k in 0..4 {
        v.markers.push(PlotMarker {
            id: format!("E{k}"),
            x: 1.05 + 0.03 * f64::from(k),
            z: 1.35,
            label: format!("E{k} (bar)"),
        });
    }
    let layer = ConductorLayer {
        conductors: vec![
            PlotConductor {
                id: "frame plate".into(),
                outline: vec![[1.0, 0.2], [1.3, 0.2], [1.3, 1.4], [1.0, 1.4]],
                earthing: "grounded".into(),
            },
            PlotConductor {
                id: "cart".into(),
                outline: vec![[1.1, 0.3], [1.5, 0.3], [1.5, 1.3], [1.1, 1.3]],
                earthing: "isolated".into(),
            },
        ],
        inside: Vec::new(),
        in_field: false,
    };
    (v, layer)
}
