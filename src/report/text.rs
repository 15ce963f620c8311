//! Aligned text tables for the terminal, values with SI prefixes.

use crate::field::PointField;
use crate::report::{PointRequest, SpanRow};
use crate::units::{Dim, format_quantity, format_si};

/// Lays out rows under a header with columns padded to their widest cell.
pub fn table(header: &[&str], rows: &[Vec<String>]) -> String {
    let n = header.len();
    let mut w: Vec<usize> = header.iter().map(|h| h.chars().count()).collect();
    for r in rows {
        for (i, c) in r.iter().enumerate().take(n) {
            w[i] = w[i].max(c.chars().count());
        }
    }
    let line = |cells: Vec<&str>| {
        let mut s = String::new();
        for (i, c) in cells.iter().enumerate() {
            let pad = w[i] - c.chars().count();
            if i > 0 {
                s.push_str("  ");
            }
            s.push_str(c);
            if i + 1 < n {
                s.push_str(&" ".repeat(pad));
            }
        }
        s.trim_end().to_string()
    };
    let mut out = line(header.to_vec());
    out.push('\n');
    out.push_str(&line(
        w.iter()
            .map(|&k| "-".repeat(k))
            .collect::<Vec<_>>()
            .iter()
            .map(|s| s.as_str())
            .collect(),
    ));
    for r in rows {
        out.push('\n');
        out.push_str(&line(r.iter().map(|s| s.as_str()).collect()));
    }
    out.push('\n');
    out
}

fn len(x: f64) -> String {
    format_quantity(x, Dim::Length)
}

/// The derived-spans table of `check` and `demo`.
pub fn spans_table(rows: &[SpanRow]) -> String {
    let body: Vec<Vec<String>> = rows
        .iter()
        .map(|r| {
            vec![
                r.name.clone(),
                r.from_to.clone(),
                format!("[{}, {}]", len(r.start[0]), len(r.start[1])),
                format!("[{}, {}]", len(r.end[0]), len(r.end[1])),
                len(r.length),
                format!("{:.1}°", r.angle_deg),
                format_quantity(r.sigma_start, Dim::SurfaceChargeDensity),
                format_quantity(r.sigma_end, Dim::SurfaceChargeDensity),
            ]
        })
        .collect();
    table(
        &[
            "span",
            "from → to",
            "start [x, z]",
            "end [x, z]",
            "length",
            "angle",
            "σ start",
            "σ end",
        ],
        &body,
    )
}

/// Header of the field table.
pub const FIELD_HEADER: [&str; 9] = ["id", "x", "y", "z", "Ex", "Ey", "Ez", "|E|", "V"];

/// One row of the field table.
pub fn field_cells(req: &PointRequest, f: &PointField) -> Vec<String> {
    vec![
        req.id.clone().unwrap_or_else(|| "-".into()),
        len(f.at[0]),
        len(f.at[1]),
        len(f.at[2]),
        format_si(f.e[0], "V/m"),
        format_si(f.e[1], "V/m"),
        format_si(f.e[2], "V/m"),
        format_si(f.e_magnitude(), "V/m"),
        format_si(f.v, "V"),
    ]
}

/// Per-span contributions at one point, largest |E| first.
pub fn contributions_table(f: &PointField) -> String {
    let mut c: Vec<_> = f.contributions.iter().collect();
    c.sort_by(|a, b| {
        let ma = a.e.iter().map(|x| x * x).sum::<f64>();
        let mb = b.e.iter().map(|x| x * x).sum::<f64>();
        mb.total_cmp(&ma)
    });
    let rows: Vec<Vec<String>> = c
        .iter()
        .map(|s| {
            let m = s.e.iter().map(|x| x * x).sum::<f64>().sqrt();
            vec![
                s.span.clone(),
                format_si(s.e[0], "V/m"),
                format_si(s.e[1], "V/m"),
                format_si(s.e[2], "V/m"),
                format_si(m, "V/m"),
                format_si(s.v, "V"),
            ]
        })
        .collect();
    table(&["span (+ image)", "Ex", "Ey", "Ez", "|E|", "V"], &rows)
}

/// The readings conversion table.
pub fn readings_table(r: &crate::readings::ReadingsResult) -> String {
    let sd = |x: f64| format_quantity(x, Dim::SurfaceChargeDensity);
    let rows: Vec<Vec<String>> = r
        .readings
        .iter()
        .map(|x| {
            let ratio = |n: Option<f64>| match n {
                Some(n) if x.sigma != 0.0 => format!("{} ({:.2}×)", sd(n), n / x.sigma),
                Some(n) => sd(n),
                None => "—".into(),
            };
            vec![
                x.id.clone(),
                x.span.clone(),
                len(x.position),
                len(x.distance),
                super::readings_text::as_entered(&x.record),
                super::notes::reading_value(&x.value),
                x.field
                    .map(|e| format_si(e, "V/m"))
                    .unwrap_or_else(|| "—".into()),
                sd(x.sigma),
                format!("{} … {}", sd(x.sigma_low), sd(x.sigma_high)),
                ratio(x.sigma_naive_isolated),
                ratio(x.sigma_naive_one_sided),
                if x.field.is_some() {
                    format_si(x.residual, "V/m")
                } else {
                    sd(x.residual)
                },
                match (x.warnings.is_empty(), x.reproduced()) {
                    (true, _) => "—".into(),
                    (false, true) => format!("{} warning(s)", x.warnings.len()),
                    (false, false) => {
                        format!("NOT REPRODUCED, {} warning(s)", x.warnings.len())
                    }
                },
            ]
        })
        .collect();
    let mut s = table(
        &[
            "reading",
            "span",
            "position",
            "distance",
            "as entered",
            "read",
            "E",
            "σ (geometry)",
            "σ bounds",
            "naive 2ε0E",
            "naive ε0E",
            "residual",
            "flags",
        ],
        &rows,
    );
    for x in &r.readings {
        for w in &x.warnings {
            s.push_str(&format!("  {}: {}\n", x.id, super::notes::reading_note(w)));
        }
    }
    s
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn table_pads_columns() {
        let t = table(&["a", "bb"], &[vec!["xyz".into(), "1".into()]]);
        assert_eq!(t, "a    bb\n---  --\nxyz  1\n");
    }
}
