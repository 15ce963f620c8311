//! Threshold profiles as the `profiles` command shows them: the list of
//! shipped profiles, and one profile's rules with their sources.
//!
//! Writer stage: formats [`ThresholdProfile`]s; computes nothing.

use crate::assess::ThresholdProfile;
use crate::report::finding_text::meter_distance_text;
use crate::report::text;
use crate::units::format_quantity;

/// One row per profile: name, title and number of rules, then how to show
/// and apply one.
pub fn profile_list(profiles: &[ThresholdProfile]) -> String {
    let rows: Vec<Vec<String>> = profiles
        .iter()
        .map(|p| {
            vec![
                p.name.to_string(),
                p.title.clone(),
                format!("{}", p.rules.len()),
            ]
        })
        .collect();
    let mut s = text::table(&["profile", "title", "rules"], &rows);
    s.push_str("\nshow one with `websigma profiles NAME`; apply with `assess: [NAME]` in the line or `--profile NAME|FILE`\n");
    s
}

/// A profile's name, title and description, its rules with their limits
/// and confidence, and each rule's source and note.
pub fn profile_text(p: &ThresholdProfile) -> String {
    let mut s = format!("{} — {}\n{}\n\n", p.name, p.title, p.description);
    let limit = |v: Option<f64>, r: &crate::assess::Rule| {
        v.map(|w| match r.meter_distance {
            Some(d) => format!(
                "{} at {}",
                format_quantity(w, r.dim),
                meter_distance_text(d)
            ),
            None => format_quantity(w, r.dim),
        })
        .unwrap_or_else(|| "—".into())
    };
    let separation = |r: &crate::assess::Rule| {
        let at = r
            .meter_distance
            .map(meter_distance_text)
            .unwrap_or_default();
        [r.near, r.far]
            .iter()
            .flatten()
            .map(|s| {
                format!(
                    "{} at {at} within {}",
                    format_quantity(s.voltage, r.dim),
                    format_quantity(s.distance, crate::units::Dim::Length)
                )
            })
            .collect::<Vec<_>>()
            .join("; ")
    };
    let rows: Vec<Vec<String>> = p
        .rules
        .iter()
        .map(|r| {
            vec![
                r.id.to_string(),
                r.what.to_string(),
                limit(r.warn, r),
                if r.fail_is_zone_mie {
                    "zone MIE".to_string()
                } else if r.fail_is_paschen {
                    "Paschen".to_string()
                } else if r.near.is_some() {
                    separation(r)
                } else {
                    limit(r.fail, r)
                },
                r.confidence.text().to_string(),
            ]
        })
        .collect();
    s.push_str(&text::table(
        &["rule", "checks", "warn", "fail", "confidence"],
        &rows,
    ));
    s.push_str("\nsources:\n");
    for r in &p.rules {
        s.push_str(&format!("  {}: {}\n", r.id, r.source));
        if let Some(n) = &r.note {
            s.push_str(&format!("    note: {n}\n"));
        }
    }
    s
}
