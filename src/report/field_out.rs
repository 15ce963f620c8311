//! The rows of the `field` command: an aligned table, CSV or JSON, written
//! chunk by chunk so that very long point lists stream.
//!
//! Writer stage: formats each point's field and potential with the
//! [`text`], [`csv`] and [`json`] helpers; computes nothing.

use crate::field::PointField;
use crate::report::summary::assumptions_list;
use crate::report::{PointRequest, csv, json, text};

/// The format of the `field` command's output.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum FieldFormat {
    /// Aligned text table with SI prefixes.
    Table,
    /// Comma-separated values in SI units.
    Csv,
    /// JSON in SI units.
    Json,
}

/// Formats results in the chosen format, one row per point; call
/// [`header`](Self::header), then [`rows`](Self::rows) per chunk, then
/// [`footer`](Self::footer).
pub struct FieldWriter {
    format: FieldFormat,
    first: bool,
    contributions: bool,
    /// The modelling assumptions listed under the table.
    assumptions: &'static [&'static str],
}

impl FieldWriter {
    /// A writer for rows in `format`, with each span's share when
    /// `contributions` is set.
    pub fn new(format: FieldFormat, contributions: bool) -> Self {
        FieldWriter {
            format,
            first: true,
            contributions,
            assumptions: crate::field::ASSUMPTIONS,
        }
    }

    /// The same writer listing these assumptions under the table.
    pub fn with_assumptions(self, assumptions: &'static [&'static str]) -> Self {
        FieldWriter {
            assumptions,
            ..self
        }
    }

    /// What comes before the first row; `spans` names the CSV's
    /// contribution columns.
    pub fn header(&self, spans: &[String]) -> String {
        match self.format {
            FieldFormat::Table => String::new(),
            FieldFormat::Csv => format!("{}\n", csv::field_header(spans, self.contributions)),
            FieldFormat::Json => json::FIELD_OPEN.to_string(),
        }
    }
    /// The rows of one chunk of points and their results.
    pub fn rows(&mut self, reqs: &[PointRequest], res: &[PointField]) -> String {
        let mut s = String::new();
        match self.format {
            FieldFormat::Table => {
                let cells: Vec<Vec<String>> = reqs
                    .iter()
                    .zip(res)
                    .map(|(q, f)| text::field_cells(q, f))
                    .collect();
                let t = text::table(&text::FIELD_HEADER, &cells);
                // The header is repeated per chunk only for very long lists.
                s.push_str(if self.first {
                    &t
                } else {
                    t.split_once('\n')
                        .and_then(|x| x.1.split_once('\n'))
                        .map(|x| x.1)
                        .unwrap_or("")
                });
                if self.contributions {
                    for (q, f) in reqs.iter().zip(res) {
                        s.push_str(&format!(
                            "\ncontributions at {}:\n{}",
                            q.id.clone().unwrap_or_else(|| format!(
                                "[{}, {}, {}] m",
                                f.at[0], f.at[1], f.at[2]
                            )),
                            text::contributions_table(f)
                        ));
                    }
                }
            }
            FieldFormat::Csv => {
                for (q, f) in reqs.iter().zip(res) {
                    s.push_str(&csv::field_row(q, f));
                    s.push('\n');
                }
            }
            FieldFormat::Json => {
                for (q, f) in reqs.iter().zip(res) {
                    if !self.first {
                        s.push_str(",\n");
                    }
                    self.first = false;
                    s.push_str(&json::field_point(q, f));
                }
            }
        }
        self.first = false;
        s
    }
    /// What comes after the last row: the closing of the JSON document, or
    /// the modelling assumptions under the table.
    pub fn footer(&self) -> String {
        match self.format {
            FieldFormat::Table => format!("\n{}", assumptions_list(self.assumptions)),
            FieldFormat::Csv => String::new(),
            FieldFormat::Json => json::FIELD_CLOSE.to_string(),
        }
    }
}

/// The conductors' results as a table: induced charge on grounded ones,
/// floating potential, capacitance and spark energy of isolated ones.
pub fn conductors_table(rows: &[crate::field::ConductorResult]) -> String {
    use crate::units::{Dim, format_quantity};
    let opt = |v: Option<f64>, d: Dim| {
        v.map(|x| format_quantity(x, d))
            .unwrap_or_else(|| "—".into())
    };
    let cells: Vec<Vec<String>> = rows
        .iter()
        .map(|c| {
            vec![
                c.id.clone(),
                if c.grounded { "grounded" } else { "isolated" }.to_string(),
                format_quantity(c.charge, Dim::Charge),
                format_quantity(c.potential, Dim::Voltage),
                opt(c.capacitance, Dim::Capacitance),
                opt(c.spark_energy, Dim::Energy),
                c.panels.to_string(),
            ]
        })
        .collect();
    let mut s = String::from(
        "\nconductors (charge induced by the web, boundary-element solve; charge on the surface: a lumped capacitance to ground, as for a person's feet, holds C_l·V more):\n",
    );
    s.push_str(&super::text::table(
        &[
            "conductor",
            "earthing",
            "charge",
            "potential",
            "C to ground",
            "½CV²",
            "panels",
        ],
        &cells,
    ));
    s
}

/// One paragraph on the conductors' accuracy estimate.
pub fn accuracy_text(a: &crate::field::ConductorAccuracy) -> String {
    use crate::units::{Dim, format_quantity};
    let mut s = format!(
        "accuracy estimate (the same solve on {} panels of {} against {} of {}): at these {} point(s) the potential changes by at most {} ({:.2} % of the largest |V|) and the field by {} ({:.2} % of the largest |E|)",
        a.coarse_panels,
        format_quantity(a.coarse_panel_size, Dim::Length),
        a.panels,
        format_quantity(a.panel_size, Dim::Length),
        a.points,
        format_quantity(a.potential_change, Dim::Voltage),
        100.0 * a.potential_relative,
        format_quantity(a.field_change, Dim::Field),
        100.0 * a.field_relative,
    );
    if a.capacitance_relative > 0.0 {
        s.push_str(&format!(
            "; capacitances to ground by at most {:.2} %",
            100.0 * a.capacitance_relative
        ));
    }
    s.push_str(": the error of the finer solve is smaller (about a third of the change for constant-density panels)\n");
    s
}

/// The warning for a solve that cannot vouch for its numbers at the points
/// (stderr), or `None`.
pub fn accuracy_warning(a: &crate::field::ConductorAccuracy) -> Option<String> {
    use crate::units::{Dim, format_quantity};
    a.doubtful().then(|| {
        format!(
            "the conductors' solve changes by more than {:.0} % at these points between panels of {} and {}: its numbers are not reliable there; rerun with --conductors and a panel size below {}",
            100.0 * crate::field::ConductorAccuracy::DOUBTFUL,
            format_quantity(a.panel_size, Dim::Length),
            format_quantity(a.coarse_panel_size, Dim::Length),
            format_quantity(0.5 * a.panel_size, Dim::Length)
        )
    })
}
