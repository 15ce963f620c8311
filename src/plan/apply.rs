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

/// A new line description: the original text with the bars added to its
/// `eliminators:` list (created when absent). Where the line has meter
/// readings, they were taken without the planned bars: their fitted
/// densities are written as charge entries and the original `charge:` and
/// `readings:` blocks are kept as comments, so assessing the new file gives
/// exactly the planner's findings. The original file is not touched.
pub fn apply_to_yaml(
    text: &str,
    line: &Line,
    bars: &[Candidate],
    scene: &Scene,
) -> Result<String, PlanError> {
    let planning = planning_line(line, scene)?;
    let placed = apply(&planning, bars);
    // Every eliminator, the existing ones and the new ones, in block style.
    let items: String = placed
        .eliminators
        .iter()
        .map(|e| {
            let added = !line.eliminators.iter().any(|o| o.id == e.id);
            let mut fields = format!(
                "id: {}, kind: {}, span: {}, position: {:?} m, distance: {:?} m, side: {}, efficiency: {:?} %, residual: {:?} uC/m^2",
                e.id,
                e.kind.text(),
                line.path.spans[e.span].name,
                e.along,
                e.distance,
                e.side.text(),
                e.efficiency * 100.0,
                e.residual * 1e6
            );
            if let Some(on) = e.onset {
                fields.push_str(&format!(", onset: {on:?} V/m"));
            }
            if e.kind == EliminatorKind::Powered {
                fields.push_str(&format!(", ion_output: {:?} uA/m", e.ion_output * 1e6));
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
            tail.push_str(&format!(
                "  - at: {at}\n    {key}: {:?} uC/m^2\n",
                c.sigma * 1e6
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
    let mut out = lines.join("\n");
    out.push('\n');
    out.push_str(&tail);
    Ok(out)
}
