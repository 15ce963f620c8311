//! The meter readings in words: the `readings` command's table (each
//! reading converted to charge density, with how the densities were fitted
//! and the naive rule beside, and with conductors each meter's screening
//! factor) and the warnings the conversion raised.
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
    s.push_str(&screening_line(r));
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
