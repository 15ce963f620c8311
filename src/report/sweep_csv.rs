//! A sweep as CSV (`sweep.csv`): one row per value, the value in SI and in
//! the user's unit, then each profile's worst margin and verdict; the
//! header names every unit.
//!
//! Writer stage: formats a [`Sweep`]; computes nothing. Numbers are
//! written with every digit (Rust's shortest round-trip form); text cells
//! go through [`text_cell`] (no spreadsheet formulas).

use crate::report::csv::text_cell;
use crate::sweep::Sweep;

/// The unit in a header's brackets: `1` for a plain number or a fraction.
fn bracket(unit: &str) -> String {
    if unit.is_empty() {
        "[1]".to_string()
    } else {
        format!("[{unit}]")
    }
}

/// `sweep.csv`: header, then one row per value.
pub fn sweep_csv(s: &Sweep) -> String {
    let mut header = vec![
        format!("{} {}", s.path, bracket(s.si_unit())),
        format!("{} {}", s.path, bracket(&s.unit)),
    ];
    for p in &s.profiles {
        header.push(format!("{p} worst margin [1]"));
        header.push(format!("{p} verdict"));
    }
    let mut out: String = header
        .iter()
        .map(|h| text_cell(h))
        .collect::<Vec<_>>()
        .join(",");
    out.push('\n');
    for r in &s.rows {
        let mut cells = vec![format!("{:?}", r.si), format!("{:?}", r.value)];
        for (m, f) in r.margins.iter().zip(&r.fails) {
            cells.push(m.map_or(String::new(), |m| format!("{m:?}")));
            cells.push(if *f { "fail" } else { "pass" }.to_string());
        }
        out.push_str(&cells.join(","));
        out.push('\n');
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::sweep::{SceneUse, SweepRow};
    use crate::units::Dim;

    #[test]
    fn one_row_per_value_with_units_in_the_header() {
        let row = |x: f64, m: Option<f64>, f: bool| SweepRow {
            value: x,
            si: x / 60.0,
            margins: vec![m],
            fails: vec![f],
            exceeded: f,
        };
        let s = Sweep {
            title: "t".into(),
            path: "web.speed".into(),
            unit: "m/min".into(),
            dim: Dim::Speed,
            range: [60.0, 120.0],
            profiles: vec!["ex-zone-2".into()],
            rows: vec![row(60.0, Some(0.5), false), row(120.0, None, true)],
            crossings: Vec::new(),
            scene: SceneUse::Reused,
            scenes_built: 1,
            assessments: 2,
            warnings: Vec::new(),
        };
        assert_eq!(
            sweep_csv(&s),
            "web.speed [m/s],web.speed [m/min],ex-zone-2 worst margin [1],ex-zone-2 verdict\n\
             1.0,60.0,0.5,pass\n\
             2.0,120.0,,fail\n"
        );
    }
}
