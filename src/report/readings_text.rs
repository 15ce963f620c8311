//! The meter readings in words: the `readings` command's table (each
//! reading converted to charge density, with how the densities were fitted
//! and the naive rule beside) and the warnings the conversion raised.
//!
//! Writer stage: formats a [`ReadingsResult`]; computes nothing.

use crate::readings::ReadingsResult;
use crate::report::{notes, text};

/// The readings table followed by the fit method and the naive rule.
pub fn readings_text(r: &ReadingsResult) -> String {
    let mut s = text::readings_table(r);
    s.push_str(&format!(
        "\nσ is the density at the meter's foot from all readings together ({}).\n",
        r.method.as_ref().map(notes::fit_method).unwrap_or_default()
    ));
    s.push_str("naive: σ = 2·ε0·E (isolated sheet) and ε0·E (all field on one side), the infinite-sheet rule (Gauss's law)\n");
    s
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
