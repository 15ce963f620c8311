//! Words for the core's typed notes: reading warnings, what opened a charge
//! segment, how the readings were fitted. The core returns these as data;
//! every writer (terminal, Markdown, HTML, CSV, JSON) takes its text from
//! here, so a note reads the same everywhere.

use crate::charge::{ChargeSegment, SegmentOrigin};
use crate::model::Line;
use crate::readings::{FitMethod, ROLLER_CLEARANCE, ReadingNote};
use crate::units::{Dim, format_quantity};

/// A reading's warning in words.
pub fn reading_note(n: &ReadingNote) -> String {
    match n {
        ReadingNote::NearRoller => format!(
            "the meter is within {ROLLER_CLEARANCE} meter distances of a roller the web touches: the grounded roller suppresses the reading — take readings mid-span"
        ),
        ReadingNote::AboveAirBreakdown { field } => format!(
            "the reading implies {}, at or above the 3 MV/m that air can hold: check the unit and the meter",
            format_quantity(*field, Dim::Field)
        ),
        ReadingNote::FarFromWeb => "the meter is farther from the web than a third of its width: the reading mostly measures the web's total charge, not its local density".to_string(),
        ReadingNote::AssumedCalibration => "a voltage reading without `calibrated_at:`: 25 mm (1 inch) assumed, the usual calibration — give the meter's calibrated distance".to_string(),
        ReadingNote::LargeResidual {
            residual,
            density,
            shared,
        } => {
            let why = if *shared {
                "inconsistent with the other readings on this stretch of web: the charge may vary across the web more than the profile says, or a charging point upstream is missing from `charge:`"
            } else {
                "the model cannot match it: check the meter position, the side, and the geometry near the meter"
            };
            format!(
                "residual {} is more than 3 times the reading's uncertainty: {why}",
                format_quantity(
                    *residual,
                    if *density {
                        Dim::SurfaceChargeDensity
                    } else {
                        Dim::Field
                    }
                )
            )
        }
    }
}

/// What opened a charge segment, in words.
pub fn segment_origin(line: &Line, g: &ChargeSegment) -> String {
    let base = match &g.origin {
        SegmentOrigin::PathStart => "start of path (uncharged until a charge entry)".to_string(),
        SegmentOrigin::CarriedIn => "carried in".to_string(),
        SegmentOrigin::Entry { entry } => line
            .charge
            .get(*entry)
            .map(|e| e.at.clone())
            .unwrap_or_default(),
        SegmentOrigin::Eliminator { eliminator, active } => match line.eliminators.get(*eliminator)
        {
            Some(e) => format!(
                "{} ({} eliminator{})",
                e.id,
                e.kind.text(),
                if *active { "" } else { ", not ionising" }
            ),
            None => String::new(),
        },
    };
    if g.from_readings {
        format!("{base} (from readings)")
    } else {
        base
    }
}

/// How the readings were fitted and bounded, in words.
pub fn fit_method(m: &FitMethod) -> String {
    format!(
        "weighted least squares over {} reading(s) for {} segment density(ies); bounds = the exact worst case of the reading errors (accuracy {} of the displayed reading + offset {}; the fit is linear in the readings) at every combination of meter distances moved by ± {}{}",
        m.readings,
        m.unknowns,
        format_quantity(m.accuracy, Dim::Percent),
        format_quantity(m.offset, Dim::Field),
        format_quantity(m.distance_tolerance, Dim::Length),
        " (one meter at a time beyond 8 meters)"
    )
}

/// A reading as entered, in words (`5 kV at 25 mm (assumed)`).
pub fn reading_value(v: &crate::model::ReadingValue) -> String {
    use crate::model::ReadingValue;
    match *v {
        ReadingValue::Field(e) => format_quantity(e, Dim::Field),
        ReadingValue::Voltage(volts, c) => format!(
            "{} at {}{}",
            format_quantity(volts, Dim::Voltage),
            format_quantity(
                c.unwrap_or(crate::readings::DEFAULT_CALIBRATION),
                Dim::Length
            ),
            if c.is_none() { " (assumed)" } else { "" }
        ),
        ReadingValue::Sigma(sg) => format_quantity(sg, Dim::SurfaceChargeDensity),
    }
}

/// A reading's warnings in words, joined with `; `.
pub fn reading_notes(notes: &[ReadingNote]) -> String {
    notes
        .iter()
        .map(reading_note)
        .collect::<Vec<_>>()
        .join("; ")
}
