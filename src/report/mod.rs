//! Writers: turn computed results into text. No physics in here.
//!
//! Last stage of the pipeline. Each writer only formats what the earlier
//! stages computed: [`text`] aligned tables with SI prefixes for the
//! terminal, [`csv`] and [`json`] in SI units for other programs. The field
//! writers work row by row so that very long point lists stream.

pub mod assessment_text;
pub mod build;
pub mod csv;
pub mod document;
pub mod field_out;
pub mod figures;
pub mod finding_text;
pub mod folder;
pub mod html;
pub mod json;
pub mod markdown;
pub mod new_file;
pub mod notes;
pub mod pictures;
pub mod plan_json;
pub mod plan_text;
pub mod plan_words;
pub mod plot;
pub mod profiles_text;
pub mod progress_bar;
pub mod ranges;
pub mod readings_text;
pub mod summary;
pub mod sweep_csv;
pub mod sweep_text;
pub mod table;
pub mod text;
pub mod unfinished;

/// A writer turns the report into the bytes of one file.
pub trait Writer {
    /// The file's contents.
    fn render(&self, r: &build::Report) -> anyhow::Result<Vec<u8>>;
}

use crate::charge::ChargeProfile;
use crate::model::Line;
use crate::units::Meters;

/// One row of the derived-spans table, computed once for every writer.
#[derive(Debug, Clone, PartialEq)]
pub struct SpanRow {
    /// `S3`.
    pub name: String,
    /// `R2 → R3` (node ids, or `path[i]`).
    pub from_to: String,
    /// Start `[x, z]` [m].
    pub start: [Meters; 2],
    /// End `[x, z]` [m].
    pub end: [Meters; 2],
    /// Length [m].
    pub length: Meters,
    /// Direction of travel above +x [degrees].
    pub angle_deg: f64,
    /// Centreline density at the start [C/m²].
    pub sigma_start: f64,
    /// Centreline density at the end [C/m²].
    pub sigma_end: f64,
}

/// The spans of a line with the density at their ends.
pub fn span_rows(line: &Line, charge: &ChargeProfile) -> Vec<SpanRow> {
    let node_name = |i: usize| {
        line.path.nodes[i]
            .id
            .clone()
            .unwrap_or_else(|| format!("path[{i}]"))
    };
    line.path
        .spans
        .iter()
        .map(|s| {
            let (sigma_start, sigma_end) = charge.ends_between(s.s_start, s.s_end);
            SpanRow {
                name: s.name.clone(),
                from_to: format!("{} → {}", node_name(s.from_node), node_name(s.to_node)),
                start: s.start,
                end: s.end,
                length: s.length,
                angle_deg: s.angle().to_degrees(),
                sigma_start,
                sigma_end,
            }
        })
        .collect()
}

/// A point to evaluate, with its optional id.
#[derive(Debug, Clone, PartialEq)]
pub struct PointRequest {
    /// Identifier (from the CSV or the line's points), if any.
    pub id: Option<String>,
    /// Position [m].
    pub at: [Meters; 3],
}
