//! The meter readings in words: the `readings` command's table (each
//! reading converted to charge density, with how the densities were fitted
//! and the naive rule beside, and with conductors each meter's screening
//! factor) and the warnings the conversion raised; also the words for a
//! reading as it was recorded (as typed, with its instrument and
//! conditions), which the report's inputs use too.
//!
//! Writer stage: formats a [`ReadingsResult`]; computes nothing.

use crate::model::ReadingRecord;
use crate::readings::{ReadingsResult, humidity_range};
use crate::report::{notes, text};
use crate::units::{Dim, format_quantity, format_si};

/// A reading as typed: `1.8 kV/in at 1 in` (value and meter distance); a
/// voltage reading with its calibration distance, `5 kV (calibrated at
/// 1 in) at 30 mm`.
pub fn as_entered(r: &ReadingRecord) -> String {
    match &r.calibrated_at_text {
        Some(c) => format!(
            "{} (calibrated at {c}) at {}",
            r.value_text, r.distance_text
        ),
        None => format!("{} at {}", r.value_text, r.distance_text),
    }
}

/// The web speed at measurement: `4.17 m/s (250 m/min)`.
pub fn speed_text(v: f64) -> String {
    format!(
        "{} ({})",
        format_quantity(v, Dim::Speed),
        format_si(v * 60.0, "m/min")
    )
}

/// The instrument and conditions recorded with a reading, as cells:
/// meter, calibrated on, relative humidity, web speed (`—` where not given).
pub fn record_cells(r: &ReadingRecord) -> [String; 4] {
    let dash = || "—".to_string();
    [
        r.meter.clone().unwrap_or_else(dash),
        r.calibrated_on
            .map(|d| d.format("%Y-%m-%d").to_string())
            .unwrap_or_else(dash),
        r.relative_humidity
            .map(|h| format_quantity(h, Dim::Percent))
            .unwrap_or_else(dash),
        r.speed.map(speed_text).unwrap_or_else(dash),
    ]
}

/// Whether a reading records its instrument or conditions.
pub fn has_conditions(r: &ReadingRecord) -> bool {
    r.meter.is_some()
        || r.calibrated_on.is_some()
        || r.relative_humidity.is_some()
        || r.speed.is_some()
}

/// What the humidity recorded with the readings says about the relaxation
/// time `tau` (given, as a formatted time, by the caller that knows it).
pub fn humidity_note(r: &[crate::readings::ReadingResult], tau: Option<&str>) -> String {
    let tau = tau.map(|t| format!(" τ = {t}")).unwrap_or_default();
    match humidity_range(r) {
        None => format!(
            "No reading gives `relative_humidity:`, so the relaxation time{tau} was not checked against the humidity at measurement (the resistivity of many webs falls steeply as the air gets more humid)."
        ),
        Some([lo, hi]) => format!(
            "Relative humidity at measurement: {}. The relaxation time{tau} is the one the line gives; check that it holds at that humidity (the resistivity of many webs falls steeply as the air gets more humid).",
            if lo == hi {
                format_quantity(lo, Dim::Percent)
            } else {
                format!(
                    "{} to {}",
                    format_quantity(lo, Dim::Percent),
                    format_quantity(hi, Dim::Percent)
                )
            }
        ),
    }
}

/// The readings table followed by the fit method and the naive rule.
pub fn readings_text(r: &ReadingsResult) -> String {
    let mut s = text::readings_table(r);
    s.push_str(&format!(
        "\nσ is the density at the meter's foot from all readings together ({}).\n",
        r.method.as_ref().map(notes::fit_method).unwrap_or_default()
    ));
    s.push_str("naive: σ = 2·ε0·E (isolated sheet) and ε0·E (all field on one side), the infinite-sheet rule (Gauss's law)\n");
    s.push_str(&screening_line(r));
    s.push_str(&conditions_lines(r));
    s.push_str(&humidity_note(&r.readings, None));
    s.push('\n');
    s
}

/// The instrument and conditions recorded with each reading that gives
/// them: `recorded: R1: meter FM-2, calibrated on 2024-03-18, RH 45 %, web
/// at 4.17 m/s (250 m/min)`; empty when none does.
fn conditions_lines(r: &ReadingsResult) -> String {
    let mut s = String::new();
    for x in r.readings.iter().filter(|x| has_conditions(&x.record)) {
        let [meter, cal, rh, speed] = record_cells(&x.record);
        let mut parts = Vec::new();
        if x.record.meter.is_some() {
            parts.push(format!("meter {meter}"));
        }
        if x.record.calibrated_on.is_some() {
            parts.push(format!("calibrated on {cal}"));
        }
        if x.record.relative_humidity.is_some() {
            parts.push(format!("RH {rh}"));
        }
        if x.record.speed.is_some() {
            parts.push(format!("web at {speed}"));
        }
        s.push_str(&format!("recorded: {}: {}\n", x.id, parts.join(", ")));
    }
    s
}

/// With conductors: each meter's screening factor, and that σ includes it;
/// empty without conductors.
fn screening_line(r: &ReadingsResult) -> String {
    let factors: Vec<String> = r
        .readings
        .iter()
        .filter_map(|x| {
            x.screening
                .map(|k| format!("{} {}", x.id, notes::screening_factor(k)))
        })
        .collect();
    if factors.is_empty() {
        return String::new();
    }
    format!(
        "conductors: each meter reads this multiple of the field of the web's charge alone (the rest is the charge induced on the conductors; σ above includes it): {}\n",
        factors.join(", ")
    )
}

/// One line per warning raised while converting a reading:
/// `reading ID: what`.
pub fn reading_warnings(r: &ReadingsResult) -> Vec<String> {
    r.readings
        .iter()
        .flat_map(|x| {
            x.warnings
                .iter()
                .map(move |w| format!("reading {}: {}", x.id, notes::reading_note(w)))
        })
        .collect()
}
