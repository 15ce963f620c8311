//! The planner's line and its YAML (plan stage): the line the planner works
//! on (meter readings turned into charge entries) and a new line
//! description with the planned bars written into the user's own text.
//!
//! Rewriting is line-based: the blocks that change (`eliminators:`, and
//! with readings `readings:`, `meter:` and `charge:`) are kept as comments
//! and written anew at the end, so the user's layout and comments survive
//! and the original file is never touched.

use super::{Candidate, PlanError, apply};
use crate::field::Scene;
use crate::model::{ChargeMode, EliminatorKind, Line};

/// The line the planner works on: where meter readings determine segment
/// densities, they become charge entries (a `sigma:` where the segment was
/// set, else an `adds:` of what the fit adds to the density carried in), and
/// the readings are dropped — they were taken without the planned bars.
/// Without readings the line is returned unchanged.
pub fn planning_line(line: &Line, scene: &Scene) -> Result<Line, PlanError> {
    if line.readings.is_empty() {
        return Ok(line.clone());
    }
    let r = crate::readings::invert_readings(line, scene)?;
    let mut out = line.clone();
    out.readings.clear();
    for fit in &r.segments {
        let k = fit.index;
        let s_k = fit.s_start;
        let was_set = k == 0
            || line
                .charge
                .iter()
                .any(|e| e.s == s_k && e.mode == ChargeMode::Set)
            || line.eliminators.iter().any(|e| e.s == s_k);
        let carried = r.charge.arriving(k);
        let at = line
            .charge
            .iter()
            .find(|e| e.s == s_k)
            .map(|e| e.at.clone())
            .unwrap_or_else(|| "start".to_string());
        out.charge.retain(|e| e.s != s_k);
        out.charge.push(crate::model::ChargeEntry {
            at: format!("{at} (fitted to readings)"),
            s: s_k,
            mode: if was_set {
                ChargeMode::Set
            } else {
                ChargeMode::Add
            },
            sigma: if was_set {
                fit.fitted
            } else {
                fit.fitted - carried
            },
            // The fitted density's uncertainty comes from the readings.
            tolerance: 0.0,
            yaml_path: String::new(),
        });
    }
    out.charge.sort_by(|a, b| a.s.total_cmp(&b.s));
    Ok(out)
}

/// Comments out a top-level YAML block (`key:` and the lines under it).
fn comment_out_block(lines: &mut [String], key: &str, why: &str) -> bool {
    let Some(start) = lines
        .iter()
        .position(|l| l.trim_end() == format!("{key}:") || l.starts_with(&format!("{key}: ")))
    else {
        return false;
    };
    lines[start] = format!("# {why}\n# {}", lines[start]);
    for l in lines.iter_mut().skip(start + 1) {
        let top =
            !l.is_empty() && !l.starts_with(' ') && !l.starts_with('#') && !l.starts_with('-');
        if top {
            break;
        }
        if !l.trim().is_empty() {
            *l = format!("# {l}");
        }
    }
    true
}

/// Significant digits of the densities, efficiencies and fields written
/// (σ from readings carries a meter accuracy of a few per cent at best;
/// four digits keep the file's findings within 1e-4 of the planner's).
const SIGNIFICANT: i32 = 4;

/// `v` rounded to `n` significant digits, written without exponent and
/// without trailing zeros: `3.142`, `12350`, `0.0004567`, `0`.
fn significant(v: f64, n: i32) -> String {
    if v == 0.0 || !v.is_finite() {
        return "0".into();
    }
    let magnitude = v.abs().log10().floor() as i32;
    let shift = n - 1 - magnitude;
    let scale = 10f64.powi(shift);
    let rounded = (v * scale).round() / scale;
    let decimals = shift.max(0) as usize;
    trim_zeros(format!("{rounded:.decimals$}"))
}

/// `1.2500` → `1.25`, `3.000` → `3`, `-0` → `0`.
fn trim_zeros(mut s: String) -> String {
    if s.contains('.') {
        while s.ends_with('0') {
            s.pop();
        }
        if s.ends_with('.') {
            s.pop();
        }
    }
    if s == "-0" { "0".into() } else { s }
}

/// A length [m] in millimetres, to the micrometre at most: `950 mm`,
/// `12.5 mm` (what the user typed survives; planned values are rounded to
/// the millimetre before).
fn mm(x: f64) -> String {
    format!("{} mm", trim_zeros(format!("{:.3}", x * 1e3)))
}

/// `x` [m] rounded to the whole millimetre (the planner's grid and a bar's
/// mounting are no finer).
fn round_mm(x: f64) -> f64 {
    (x * 1e3).round() / 1e3
}

/// The comment that opens the new file: what it is, how its values are
/// rounded and, with readings, why they were replaced by fitted charge.
fn header(added: usize, readings: bool) -> String {
    let mut h = format!(
        "# Written by `websigma plan --apply`: the line description it was given, with\n\
         # the best plan's {added} eliminator bar(s) added (marked \"added by websigma plan\"\n\
         # under `eliminators:` at the end). Planned positions and distances are\n\
         # rounded to the millimetre, densities and efficiencies to {SIGNIFICANT}\n\
         # significant digits.\n"
    );
    if readings {
        h.push_str(
            "# The meter readings were taken without these bars, so they cannot describe\n\
             # the charge with the bars in place. The densities fitted to them (all readings\n\
             # together, with the line's geometry) are written as `charge:` entries at the\n\
             # end, so that the bars act on the measured charge; the original `readings:`,\n\
             # `meter:` and `charge:` blocks are kept below as comments.\n",
        );
    }
    h.push_str("#\n");
    h
}

/// A new line description: the original text with the bars added to its
/// `eliminators:` list (created when absent), under a header comment saying
/// what was done. Where the line has meter readings, they were taken without
/// the planned bars: their fitted densities are written as charge entries
/// and the original `charge:` and `readings:` blocks are kept as comments,
/// so assessing the new file gives the planner's findings (to the rounding
/// of the values written: planned positions and distances to the
/// millimetre, densities to [`SIGNIFICANT`] digits). The text ends with a
/// newline. The original file is not touched.
pub fn apply_to_yaml(
    text: &str,
    line: &Line,
    bars: &[Candidate],
    scene: &Scene,
) -> Result<String, PlanError> {
    let planning = planning_line(line, scene)?;
    let rounded: Vec<Candidate> = bars
        .iter()
        .map(|b| Candidate {
            along: round_mm(b.along),
            distance: round_mm(b.distance),
            ..b.clone()
        })
        .collect();
    let placed = apply(&planning, &rounded);
    let sig = |v: f64| significant(v, SIGNIFICANT);
    // Every eliminator, the existing ones and the new ones, in block style.
    let items: String = placed
        .eliminators
        .iter()
        .map(|e| {
            let added = !line.eliminators.iter().any(|o| o.id == e.id);
            let mut fields = format!(
                "id: {}, kind: {}, span: {}, position: {}, distance: {}, side: {}, efficiency: {} %, residual: {} uC/m^2",
                e.id,
                e.kind.text(),
                line.path.spans[e.span].name,
                mm(e.along),
                mm(e.distance),
                e.side.text(),
                sig(e.efficiency * 100.0),
                sig(e.residual * 1e6)
            );
            if let Some(on) = e.onset {
                fields.push_str(&format!(", onset: {} kV/m", sig(on * 1e-3)));
            }
            if e.kind == EliminatorKind::Powered {
                fields.push_str(&format!(", ion_output: {} uA/m", sig(e.ion_output * 1e6)));
            }
            format!("  - {{{fields}}}{}\n", if added { "   # added by websigma plan" } else { "" })
        })
        .collect();
    let mut lines: Vec<String> = text.lines().map(str::to_string).collect();
    let mut tail = String::new();
    if !line.readings.is_empty() {
        comment_out_block(
            &mut lines,
            "readings",
            "readings taken without the planned bars; converted to the charge entries below by websigma plan",
        );
        comment_out_block(&mut lines, "meter", "meter accuracy of the readings above");
        comment_out_block(
            &mut lines,
            "charge",
            "charge entries before the readings were fitted (see the new `charge:` below)",
        );
        tail.push_str("charge:   # fitted to the meter readings by websigma plan\n");
        for c in &planning.charge {
            let at = c.at.trim_end_matches(" (fitted to readings)");
            let key = match c.mode {
                ChargeMode::Set => "sigma",
                ChargeMode::Add => "adds",
            };
            // An entry kept from the user's file keeps its tolerance.
            let tolerance = if c.tolerance > 0.0 {
                format!(" ± {} uC/m^2", sig(c.tolerance * 1e6))
            } else {
                String::new()
            };
            tail.push_str(&format!(
                "  - at: {at}\n    {key}: {} uC/m^2{tolerance}\n",
                sig(c.sigma * 1e6)
            ));
        }
    }
    comment_out_block(
        &mut lines,
        "eliminators",
        "eliminators as given; the full list, with the planned bars, is below",
    );
    tail.push_str("eliminators:\n");
    tail.push_str(&items);
    let mut out = header(bars.len(), !line.readings.is_empty());
    out.push_str(&lines.join("\n"));
    out.push('\n');
    out.push_str(&tail);
    if !out.ends_with('\n') {
        out.push('\n');
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn significant_digits_without_float_noise() {
        assert_eq!(significant(1.23456789, 4), "1.235");
        assert_eq!(significant(0.30000000000000004, 4), "0.3");
        assert_eq!(significant(12345.0, 4), "12350");
        assert_eq!(significant(-0.000456789, 3), "-0.000457");
        assert_eq!(significant(95.00000000000001, 4), "95");
        assert_eq!(significant(0.0, 4), "0");
        assert_eq!(significant(9.99996, 4), "10");
    }

    #[test]
    fn lengths_in_millimetres() {
        assert_eq!(mm(round_mm(0.30000000000000004)), "300 mm");
        assert_eq!(mm(round_mm(1.23456)), "1235 mm");
        assert_eq!(mm(0.0125), "12.5 mm");
        assert_eq!(mm(0.04), "40 mm");
    }

    #[test]
    fn header_says_why_readings_were_replaced_only_when_they_were() {
        let with = header(2, true);
        assert!(with.contains("2 eliminator bar(s)"), "{with}");
        assert!(
            with.contains("readings were taken without these bars"),
            "{with}"
        );
        let without = header(1, false);
        assert!(!without.contains("readings"), "{without}");
        for h in [with, without] {
            assert!(h.lines().all(|l| l.starts_with('#')), "{h}");
            assert!(h.ends_with('\n'));
        }
    }
}
