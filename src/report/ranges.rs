//! The ranges over the inputs' tolerances as the report shows them: a value
//! with its range, the uncertain inputs and what sets them, which inputs
//! would settle each uncertain finding, and the sensitivity of the worst
//! findings to each input.
//!
//! Writer stage: formats the uncertainty stage's numbers
//! ([`crate::uncertainty`]); computes nothing but shares of a width.

use crate::assess::{BoundBasis, Verdict};
use crate::report::build::{FindingRow, Report};
use crate::report::document::Block;
use crate::report::finding_text::{against_text, margin_text};
use crate::uncertainty::{InputRange, RangeSource};
use crate::units::{Dim, format_quantity, format_quantity_sig, format_si};

/// Findings in the sensitivity table (the worst by their greatest margin).
pub const SENSITIVITY_ROWS: usize = 8;

/// `x` with its range when there is one: `12.9 kV (12.1 kV to 13.7 kV)`.
pub fn ranged(x: f64, range: Option<[f64; 2]>, dim: Dim) -> String {
    let one = |v: f64| format_quantity(v, dim);
    match range {
        Some([lo, hi]) if lo != hi => format!("{} ({} to {})", one(x), one(lo), one(hi)),
        _ => one(x),
    }
}

/// As [`ranged`] with an SI unit symbol (`V/m`) instead of a dimension.
pub fn ranged_si(x: f64, range: Option<[f64; 2]>, unit: &str) -> String {
    match range {
        Some([lo, hi]) if lo != hi => format!(
            "{} ({} to {})",
            format_si(x, unit),
            format_si(lo, unit),
            format_si(hi, unit)
        ),
        _ => format_si(x, unit),
    }
}

/// The input in words: `σ leaving 3.42 m (start of S5 (R4-R5))`.
pub fn input_label(r: &Report, input: &InputRange) -> String {
    let s = input.s_start;
    let on = r
        .line
        .path
        .spans
        .iter()
        .find(|sp| s >= sp.s_start - 1e-9 && s < sp.s_end)
        .map(|sp| format!(" on {}", sp.label()))
        .unwrap_or_default();
    format!("σ from {}{on}", format_quantity_sig(s, Dim::Length, 4))
}

/// What sets an input's range, in words: `readings MR2, MR3`, `charge[1]
/// (± 500 nC/m²)`.
pub fn sources_text(r: &Report, input: &InputRange) -> String {
    let mut readings = Vec::new();
    let mut entries = Vec::new();
    for s in &input.sources {
        match *s {
            RangeSource::Reading(k) => {
                if let Some(x) = r.line.readings.get(k)
                    && !readings.contains(&x.id)
                {
                    readings.push(x.id.clone());
                }
            }
            RangeSource::Entry(k) => {
                if let Some(e) = r.line.charge.get(k) {
                    let t = format!(
                        "the charge entry at {} (± {})",
                        e.at,
                        format_quantity_sig(e.tolerance, Dim::SurfaceChargeDensity, 3)
                    );
                    if !entries.contains(&t) {
                        entries.push(t);
                    }
                }
            }
        }
    }
    let mut parts = Vec::new();
    if !readings.is_empty() {
        let word = if readings.len() == 1 {
            "reading"
        } else {
            "readings"
        };
        parts.push(format!("{word} {}", readings.join(", ")));
    }
    parts.extend(entries);
    if parts.is_empty() {
        "—".into()
    } else {
        parts.join("; ")
    }
}

/// For each uncertain finding: its range across the failure limit and the
/// inputs that make most of its width, with what sets them.
pub fn settle_items(r: &Report) -> Vec<String> {
    r.findings
        .iter()
        .filter(|f| f.verdict == Verdict::Uncertain)
        .map(|f| {
            let total: f64 = f.bounds.shares.iter().map(|s| s.width).sum();
            let head = format!("{} on {}: {}", f.check, f.subject, against_text(f));
            if f.bounds.basis == BoundBasis::NotBounded || total <= 0.0 {
                return format!(
                    "{head}; its range could not be bounded from the charge (see Uncertainty): assess it by hand"
                );
            }
            let parts: Vec<String> = f
                .bounds
                .shares
                .iter()
                .take(2)
                .filter(|s| s.width >= 0.01 * total)
                .filter_map(|s| {
                    let input = r.uncertainty.inputs.get(s.input)?;
                    Some(format!(
                        "{:.0} % from {} (set by {})",
                        100.0 * s.width / total,
                        input_label(r, input),
                        sources_text(r, input)
                    ))
                })
                .collect();
            if parts.is_empty() {
                return format!("{head}; see Uncertainty for the inputs that set its range");
            }
            format!(
                "{head}; its width comes {}: measure those more tightly (or add a reading on that stretch) to settle it",
                parts.join(", ")
            )
        })
        .collect()
}

/// The worst findings by their greatest margin (ties by nominal margin),
/// at most `n`, among those whose range is not a point.
pub fn worst_ranged(r: &Report, n: usize) -> Vec<&FindingRow> {
    let top = |f: &FindingRow| {
        if f.limit.is_finite() && f.limit > 0.0 {
            f.bounds.high / f.limit
        } else {
            f.margin
        }
    };
    let mut v: Vec<&FindingRow> = r
        .findings
        .iter()
        .filter(|f| !f.bounds.shares.is_empty() && f.limit.is_finite() && f.limit > 0.0)
        .collect();
    v.sort_by(|a, b| {
        top(b)
            .total_cmp(&top(a))
            .then(b.margin.total_cmp(&a.margin))
    });
    v.truncate(n);
    v
}

/// The section on ranges: method, inputs, sensitivity of the worst
/// findings.
pub fn uncertainty_blocks(r: &Report) -> Vec<Block> {
    let u = &r.uncertainty;
    let mut blocks = vec![Block::Para(
        "Every result is given with its range over the uncertain inputs: the meter readings' tolerances (accuracy and offset of the meter, and its distance tolerance, which the readings conversion turns into bounds on each fitted charge segment) and the tolerances written on the charge entries. Field, potential, meter readings and densities are linear in the segments' charge, so each result's range comes from one run per uncertain segment: a signed quantity exactly, a magnitude (|E|, |V|, a meter reading, a peak density) by the triangle inequality over the segments (on the safe side; exact when a single segment carries all the charge), an energy ½CV² from the range of |V|. Segments are taken one by one (a box), every eliminator keeps the state the fit found, and the conductors' discretisation error (see Conductors) is not included. A finding whose range lies wholly below its failure limit passes, wholly at or above it fails; one whose range straddles the limit is UNCERTAIN and counted as failing for the exit code.".into(),
    )];
    if u.inputs.is_empty() {
        blocks.push(Block::Para(
            "No input of this line carries a tolerance (no meter readings, no tolerance on a charge entry): every range is a single value.".into(),
        ));
        return blocks;
    }
    blocks.push(Block::Para(format!(
        "Uncertain inputs ({} runs of the field and the rules in the line's scene):",
        u.runs
    )));
    blocks.push(Block::Table {
        header: ["input", "σ", "range", "set by"]
            .iter()
            .map(|s| s.to_string())
            .collect(),
        rows: u
            .inputs
            .iter()
            .map(|i| {
                vec![
                    input_label(r, i),
                    format_quantity_sig(i.nominal, Dim::SurfaceChargeDensity, 3),
                    format!(
                        "{} to {}",
                        format_quantity_sig(i.low, Dim::SurfaceChargeDensity, 3),
                        format_quantity_sig(i.high, Dim::SurfaceChargeDensity, 3)
                    ),
                    sources_text(r, i),
                ]
            })
            .collect(),
    });
    let worst = worst_ranged(r, SENSITIVITY_ROWS);
    if !worst.is_empty() {
        blocks.push(Block::Para(
            "Sensitivity of the worst findings: how far each input's range can move the margin (value ÷ governing limit) from its nominal value, by itself.".into(),
        ));
        let mut header = vec!["finding".to_string(), "margin (range)".to_string()];
        header.extend(u.inputs.iter().map(|i| input_label(r, i)));
        let rows = worst
            .iter()
            .map(|f| {
                let mut row = vec![
                    format!("{}/{} on {}", f.profile, f.rule, f.subject),
                    format!(
                        "{} ({} to {})",
                        margin_text(f.margin),
                        margin_text(f.bounds.low / f.limit),
                        if f.bounds.high.is_finite() {
                            margin_text(f.bounds.high / f.limit)
                        } else {
                            "not bounded".into()
                        }
                    ),
                ];
                row.extend((0..u.inputs.len()).map(|k| {
                    f.bounds
                        .shares
                        .iter()
                        .find(|s| s.input == k)
                        .map(|s| format!("± {}", margin_text(s.width / f.limit)))
                        .unwrap_or_else(|| "—".into())
                }));
                row
            })
            .collect();
        blocks.push(Block::Table { header, rows });
    }
    let open: Vec<String> = r
        .findings
        .iter()
        .filter(|f| f.bounds.basis == BoundBasis::NotBounded)
        .map(|f| format!("{}/{} on {}", f.profile, f.rule, f.subject))
        .collect();
    if !open.is_empty() {
        blocks.push(Block::Para(
            "Not bounded from the charge (the value is neither constant nor proportional to the charge, e.g. a conductor with a given net charge): their range is open above, so their verdict is uncertain unless the value already fails; judge them by hand:".into(),
        ));
        blocks.push(Block::List(open));
    }
    blocks
}
