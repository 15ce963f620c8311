//! The line summary in words: what `check` and `demo` print about a line
//! before any assessment.
//!
//! Writer stage: formats the checked line and its charge profile; computes
//! nothing.

use crate::charge::ChargeProfile;
use crate::model::{ChargeMode, Line};
use crate::readings::ReadingsResult;
use crate::report::{span_rows, text};
use crate::units::{Dim, format_quantity, format_si};

/// The line, its web, charge relaxation, path, charge entries, eliminators
/// and readings, one fact a line.
pub fn summary(line: &Line, charge: &ChargeProfile) -> String {
    let w = &line.web;
    let mut s = format!("line: {}\n", line.title);
    s.push_str(&format!(
        "web: {}, width {}, thickness {}, εr {}, speed {} ({})\n",
        w.material.as_deref().unwrap_or("material not given"),
        format_quantity(w.width, Dim::Length),
        format_quantity(w.thickness, Dim::Length),
        w.relative_permittivity,
        format_quantity(w.speed, Dim::Speed),
        format_si(w.speed * 60.0, "m/min"),
    ));
    let lambda = w.decay_length();
    s.push_str(&format!(
        "charge relaxation: τ = {}{}, decay length v·τ = {}\n",
        format_quantity(w.relaxation_time, Dim::Time),
        match (w.surface_resistivity, w.volume_resistivity) {
            (Some(rs), Some(rho)) => format!(
                " (ε0·εr·ρ, with ρ = R_s·t = {} from the surface resistivity {} and the thickness: conduction through the bulk assumed)",
                format_quantity(rho, Dim::Resistivity),
                format_quantity(rs, Dim::SurfaceResistivity)
            ),
            (None, Some(_)) => " (ε0·εr·ρ)".into(),
            _ => " (given)".into(),
        },
        if lambda.is_finite() {
            format_quantity(lambda, Dim::Length)
        } else {
            "infinite".into()
        }
    ));
    s.push_str(&format!(
        "across the web: {}\n",
        super::notes::across_shape(&charge.across)
    ));
    match line.ground_plane {
        Some(g) => s.push_str(&format!(
            "ground plane: z = {} (potentials relative to it)\n",
            format_quantity(g, Dim::Length)
        )),
        None => s.push_str("ground plane: none (potentials relative to zero at infinity)\n"),
    }
    let defaulted: Vec<&str> = line
        .rollers
        .iter()
        .filter(|r| r.length_defaulted)
        .map(|r| r.id.as_str())
        .collect();
    if !defaulted.is_empty() {
        s.push_str(&format!(
            "roller length: web width + 0.2 m = {} (not given) for {}\n",
            format_quantity(
                line.web.width + crate::model::path::ROLLER_LENGTH_MARGIN,
                Dim::Length
            ),
            defaulted.join(", ")
        ));
    }
    for c in &line.conductors {
        s.push_str(&conductor_summary(c));
    }
    s.push_str(&format!(
        "path: {} nodes, {} spans, {} wrap arcs, {} long\n",
        line.path.nodes.len(),
        line.path.spans.len(),
        line.path.arcs.len(),
        format_quantity(line.path.total_length, Dim::Length)
    ));
    if line.charge.is_empty() {
        s.push_str("charge: no entries — the web is uncharged\n");
    }
    for c in &line.charge {
        s.push_str(&format!(
            "charge: {} {}{} leaving {}\n",
            match c.mode {
                ChargeMode::Set => "sets",
                ChargeMode::Add => "adds",
            },
            format_quantity(c.sigma, Dim::SurfaceChargeDensity),
            if c.tolerance > 0.0 {
                format!(
                    " ± {}",
                    format_quantity(c.tolerance, Dim::SurfaceChargeDensity)
                )
            } else {
                String::new()
            },
            c.at
        ));
    }
    for e in &line.eliminators {
        s.push_str(&format!(
            "eliminator: {} {} on {} at {}, {} {}, η {}{}\n",
            e.id,
            e.kind.text(),
            line.path.spans[e.span].label(),
            format_quantity(e.along, Dim::Length),
            format_quantity(e.distance, Dim::Length),
            e.side.text(),
            format_quantity(e.efficiency, Dim::Percent),
            match e.onset {
                Some(on) => format!(", onset {}", format_si(on, "V/m")),
                None => String::new(),
            }
        ));
    }
    if !line.readings.is_empty() {
        s.push_str(&format!(
            "readings: {} (the segments they fall on take their density from them; see `websigma readings`)\n",
            line.readings.len()
        ));
    }
    s
}

/// A list of assumptions under the heading `assumptions:`.
pub fn assumptions_list(list: &[&str]) -> String {
    let mut s = String::from("assumptions:\n");
    for a in list {
        s.push_str(&format!("  - {a}\n"));
    }
    s
}

/// The summary followed by the derived-spans table.
pub fn overview(line: &Line, charge: &ChargeProfile) -> String {
    let mut s = summary(line, charge);
    s.push('\n');
    s.push_str(&text::spans_table(&span_rows(line, charge)));
    s
}

/// What `check` prints: the overview, the points checked, the assumptions
/// and the verdict on the file `file`.
pub fn check_text(
    line: &Line,
    charge: &ChargeProfile,
    file: &str,
    assumptions: &[&str],
    conductors: &[crate::field::ConductorResult],
) -> String {
    let mut s = overview(line, charge);
    s.push_str(&format!(
        "\npoints of interest: {} checked\n",
        line.points.len()
    ));
    s.push_str(&assumptions_list(assumptions));
    if !conductors.is_empty() {
        s.push_str(&super::field_out::conductors_table(conductors));
    }
    s.push_str(&format!(
        "\nvalid: {} ({} warning{})\n",
        file,
        line.warnings.len(),
        if line.warnings.len() == 1 { "" } else { "s" }
    ));
    s
}

/// What `demo` prints before its assessment: the overview and the meter
/// readings converted.
pub fn demo_text(line: &Line, charge: &ChargeProfile, readings: &ReadingsResult) -> String {
    let mut s = String::from("websigma demo — an invented example line, not a real plant\n\n");
    s.push_str(&overview(line, charge));
    if !readings.readings.is_empty() {
        s.push_str("\nmeter readings converted with the line's geometry (beside the infinite-sheet rule):\n");
        s.push_str(&text::readings_table(readings));
    }
    s
}

/// One conductor in words: its shape, size and earthing.
fn conductor_summary(c: &crate::model::Conductor) -> String {
    use crate::model::{ConductorEarthing, ConductorKind, ConductorShape};
    let len = |x: f64| format_quantity(x, Dim::Length);
    let norm = |v: [f64; 3]| (v[0] * v[0] + v[1] * v[1] + v[2] * v[2]).sqrt();
    let shape = match (c.kind, c.shape) {
        (
            ConductorKind::Person,
            ConductorShape::Cylinder {
                center,
                radius,
                length,
                ..
            },
        ) => format!(
            "person at [{}, {}], a vertical cylinder {} high and {} wide on the floor",
            len(center[0]),
            len(center[1]),
            len(length),
            len(2.0 * radius)
        ),
        (_, ConductorShape::Plate { origin, e1, e2 }) => format!(
            "plate {} × {} from [{}, {}, {}]",
            len(norm(e1)),
            len(norm(e2)),
            len(origin[0]),
            len(origin[1]),
            len(origin[2])
        ),
        (_, ConductorShape::Box { min, max }) => format!(
            "box {} × {} × {}",
            len(max[0] - min[0]),
            len(max[1] - min[1]),
            len(max[2] - min[2])
        ),
        (_, ConductorShape::Cylinder { radius, length, .. }) => format!(
            "cylinder {} long, {} in diameter",
            len(length),
            len(2.0 * radius)
        ),
    };
    let earthing = match c.earthing {
        ConductorEarthing::Grounded => "grounded".to_string(),
        ConductorEarthing::Isolated {
            charge,
            capacitance_to_ground,
            capacitance_defaulted,
        } => format!(
            "isolated, net charge {}{}",
            format_quantity(charge, Dim::Charge),
            match capacitance_to_ground {
                Some(cg) if capacitance_defaulted => format!(
                    ", {} feet-to-floor (assumed default)",
                    format_quantity(cg, Dim::Capacitance)
                ),
                Some(cg) => format!(
                    ", {} lumped to ground",
                    format_quantity(cg, Dim::Capacitance)
                ),
                None => String::new(),
            }
        ),
    };
    format!("conductor: {} {shape}, {earthing}\n", c.id)
}
