//! Minimal JSON output helpers (numbers in SI units, strings escaped).
//!
//! Hand-written so that long point lists can be streamed item by item.

use crate::field::PointField;
use crate::report::PointRequest;
use crate::report::build::Report;

/// A JSON number: shortest round-trip text; `null` for NaN or infinity.
pub fn num(x: f64) -> String {
    if x.is_finite() {
        let s = format!("{x:?}");
        s
    } else {
        "null".to_string()
    }
}

/// A JSON string literal with escapes.
pub fn string(s: &str) -> String {
    let mut out = String::with_capacity(s.len() + 2);
    out.push('"');
    for c in s.chars() {
        match c {
            '"' => out.push_str("\\\""),
            '\\' => out.push_str("\\\\"),
            '\n' => out.push_str("\\n"),
            '\r' => out.push_str("\\r"),
            '\t' => out.push_str("\\t"),
            c if (c as u32) < 0x20 => out.push_str(&format!("\\u{:04x}", c as u32)),
            c => out.push(c),
        }
    }
    out.push('"');
    out
}

/// `[a, b, c]`
pub fn array(xs: &[f64]) -> String {
    let parts: Vec<String> = xs.iter().map(|&x| num(x)).collect();
    format!("[{}]", parts.join(", "))
}

/// Opening of the field document.
pub const FIELD_OPEN: &str = "{\"points\": [\n";
/// Closing of the field document.
pub const FIELD_CLOSE: &str = "\n]}\n";

/// One point object of the `field` JSON document.
pub fn field_point(req: &PointRequest, f: &PointField) -> String {
    let mut s = String::from("  {");
    if let Some(id) = &req.id {
        s.push_str(&format!("\"id\": {}, ", string(id)));
    }
    s.push_str(&format!(
        "\"at\": {}, \"E\": {}, \"E_magnitude\": {}, \"V\": {}",
        array(&f.at),
        array(&f.e),
        num(f.e_magnitude()),
        num(f.v)
    ));
    if !f.contributions.is_empty() {
        let parts: Vec<String> = f
            .contributions
            .iter()
            .map(|c| {
                format!(
                    "{{\"span\": {}, \"E\": {}, \"V\": {}}}",
                    string(&c.name),
                    array(&c.e),
                    num(c.v)
                )
            })
            .collect();
        s.push_str(&format!(", \"contributions\": [{}]", parts.join(", ")));
    }
    s.push('}');
    s
}

/// `results.json`: verdict, findings, points and spans in SI units.
pub fn results_json(r: &Report) -> String {
    let mut s = String::from("{\n");
    s.push_str(&format!(
        "  \"report_id\": {},\n",
        string(&r.meta.report_id)
    ));
    s.push_str(&format!("  \"line\": {},\n", string(&r.meta.title)));
    s.push_str(&format!(
        "  \"created_utc\": {},\n",
        string(&r.meta.created_utc)
    ));
    s.push_str(&format!(
        "  \"tool_version\": {},\n",
        string(&r.meta.tool_version)
    ));
    s.push_str(&format!("  \"verdict\": {},\n", string(r.verdict.text())));
    let worst = r.findings.iter().map(|f| f.margin).fold(0.0, f64::max);
    s.push_str(&format!("  \"worst_margin\": {},\n", num(worst)));
    s.push_str(&format!("  \"uncertain\": {},\n", r.counts[2]));
    s.push_str("  \"inputs\": [\n");
    let items: Vec<String> = r
        .uncertainty
        .inputs
        .iter()
        .map(|i| {
            let sources: Vec<String> = i
                .sources
                .iter()
                .map(|src| match *src {
                    crate::uncertainty::RangeSource::Reading(k) => format!(
                        "{{\"reading\": {}}}",
                        string(r.line.readings.get(k).map_or("", |x| x.id.as_str()))
                    ),
                    crate::uncertainty::RangeSource::Entry(k) => format!(
                        "{{\"charge_entry\": {}}}",
                        string(r.line.charge.get(k).map_or("", |x| x.yaml_path.as_str()))
                    ),
                })
                .collect();
            format!(
                "    {{\"segment\": {}, \"s_start\": {}, \"sigma\": {}, \"low\": {}, \"high\": {}, \"set_by\": [{}]}}",
                i.segment,
                num(i.s_start),
                num(i.nominal),
                num(i.low),
                num(i.high),
                sources.join(", ")
            )
        })
        .collect();
    s.push_str(&items.join(",\n"));
    s.push_str("\n  ],\n");
    s.push_str("  \"findings\": [\n");
    let items: Vec<String> = r
        .findings
        .iter()
        .map(|f| {
            format!(
                "    {{\"rule\": {}, \"profile\": {}, \"hazard\": {}, \"check\": {}, \"subject\": {}, \"value\": {}, \"low\": {}, \"high\": {}, \"bound\": {}, \"shares\": [{}], \"unit\": {}, \"meter_distance\": {}, \"ratio\": {}, \"limit\": {}, \"warn\": {}, \"fail\": {}, \"margin\": {}, \"verdict\": {}, \"source\": {}, \"confidence\": {}, \"note\": {}}}",
                string(&f.rule),
                string(&f.profile),
                string(f.hazard.key()),
                string(&f.check),
                string(&f.subject),
                num(f.value),
                num(f.bounds.low),
                num(f.bounds.high),
                string(f.bounds.basis.key()),
                f.bounds
                    .shares
                    .iter()
                    .map(|x| format!("{{\"input\": {}, \"width\": {}}}", x.input, num(x.width)))
                    .collect::<Vec<_>>()
                    .join(", "),
                string(if f.ratio.is_some() { "1" } else { f.dim.si_unit() }),
                f.meter.map(num).unwrap_or_else(|| "null".into()),
                f.ratio.map(string).unwrap_or_else(|| "null".into()),
                num(f.limit),
                f.warn.map(num).unwrap_or_else(|| "null".into()),
                f.fail.map(num).unwrap_or_else(|| "null".into()),
                num(f.margin),
                string(f.verdict.text()),
                string(&f.source),
                string(f.confidence.text()),
                string(&f.note)
            )
        })
        .collect();
    s.push_str(&items.join(",\n"));
    s.push_str("\n  ],\n  \"points\": [\n");
    let items: Vec<String> = r
        .points
        .iter()
        .enumerate()
        .map(|(i, p)| {
            let range = r
                .uncertainty
                .points
                .get(i)
                .map(|b| {
                    format!(
                        ", \"E_magnitude_low\": {}, \"E_magnitude_high\": {}, \"V_low\": {}, \"V_high\": {}, \"E_low\": {}, \"E_high\": {}",
                        num(b.e[0]),
                        num(b.e[1]),
                        num(b.v[0]),
                        num(b.v[1]),
                        array(&b.components.map(|c| c[0])),
                        array(&b.components.map(|c| c[1]))
                    )
                })
                .unwrap_or_default();
            format!(
                "    {{\"id\": {}, \"kind\": {}, \"at\": {}, \"E\": {}, \"E_magnitude\": {}, \"V\": {}{range}}}",
                string(&p.point.id),
                string(p.point.kind.text()),
                array(&p.point.at),
                array(&p.e),
                num(p.e_magnitude),
                num(p.v)
            )
        })
        .collect();
    s.push_str(&items.join(",\n"));
    s.push_str("\n  ],\n  \"spans\": [\n");
    let items: Vec<String> = r
        .spans
        .iter()
        .enumerate()
        .map(|(j, sp)| {
            let range = r
                .uncertainty
                .spans
                .get(j)
                .map(|b| {
                    format!(
                        ", \"sigma_start_low\": {}, \"sigma_start_high\": {}, \"sigma_end_low\": {}, \"sigma_end_high\": {}, \"sigma_peak_low\": {}, \"sigma_peak_high\": {}{}",
                        num(b.sigma_start[0]),
                        num(b.sigma_start[1]),
                        num(b.sigma_end[0]),
                        num(b.sigma_end[1]),
                        num(b.sigma_peak[0]),
                        num(b.sigma_peak[1]),
                        b.meter
                            .map(|m| format!(
                                ", \"meter_reading_low\": {}, \"meter_reading_high\": {}",
                                num(m[0]),
                                num(m[1])
                            ))
                            .unwrap_or_default()
                    )
                })
                .unwrap_or_default();
            format!(
                "    {{\"id\": {}, \"label\": {}, \"sigma_start\": {}, \"sigma_end\": {}, \"sigma_peak\": {}, \"length\": {}{}{range}}}",
                string(&sp.row.name),
                string(&sp.label),
                num(sp.row.sigma_start),
                num(sp.row.sigma_end),
                num(sp.sigma_peak),
                num(sp.row.length),
                // Only where computed (assess and demo), as information.
                sp.meter
                    .map(|m| format!(
                        ", \"meter_reading\": {}, \"meter_distance\": {}, \"meter_at\": [{}, {}, {}]",
                        num(m.reading()),
                        num(m.distance),
                        num(m.at[0]),
                        num(m.at[1]),
                        num(m.at[2])
                    ))
                    .unwrap_or_default()
            )
        })
        .collect();
    s.push_str(&items.join(",\n"));
    s.push_str("\n  ],\n  \"readings\": [\n");
    let items: Vec<String> = r
        .readings
        .iter()
        .map(|x| format!("    {}", reading_object(x)))
        .collect();
    s.push_str(&items.join(",\n"));
    s.push_str("\n  ]");
    // Only with the conductors' solve (a free-space run has no such key).
    if !r.conductors.is_empty() {
        let opt = |v: Option<f64>| v.map(num).unwrap_or_else(|| "null".into());
        let items: Vec<String> = r
            .conductors
            .iter()
            .enumerate()
            .map(|(i, c)| {
                let range = r
                    .uncertainty
                    .conductors
                    .get(i)
                    .map(|b| {
                        format!(
                            ", \"charge_low\": {}, \"charge_high\": {}, \"potential_low\": {}, \"potential_high\": {}{}",
                            num(b.charge[0]),
                            num(b.charge[1]),
                            num(b.potential[0]),
                            num(b.potential[1]),
                            b.spark_energy
                                .map(|w| format!(
                                    ", \"spark_energy_low\": {}, \"spark_energy_high\": {}",
                                    num(w[0]),
                                    num(w[1])
                                ))
                                .unwrap_or_default()
                        )
                    })
                    .unwrap_or_default();
                format!(
                    "    {{\"id\": {}, \"grounded\": {}, \"charge\": {}, \"potential\": {}, \"capacitance_to_ground\": {}, \"spark_energy\": {}, \"panels\": {}{range}}}",
                    string(&c.id),
                    c.grounded,
                    num(c.charge),
                    num(c.potential),
                    opt(c.capacitance),
                    opt(c.spark_energy),
                    c.panels
                )
            })
            .collect();
        s.push_str(",\n  \"conductors\": [\n");
        s.push_str(&items.join(",\n"));
        s.push_str("\n  ]");
        if let Some(a) = &r.conductor_accuracy {
            s.push_str(&format!(
                ",\n  \"conductor_accuracy\": {{\"panel_size\": {}, \"panels\": {}, \"coarse_panel_size\": {}, \"coarse_panels\": {}, \"potential_change\": {}, \"potential_relative\": {}, \"field_change\": {}, \"field_relative\": {}, \"capacitance_relative\": {}, \"points\": {}}}",
                num(a.panel_size),
                a.panels,
                num(a.coarse_panel_size),
                a.coarse_panels,
                num(a.potential_change),
                num(a.potential_relative),
                num(a.field_change),
                num(a.field_relative),
                num(a.capacitance_relative),
                a.points
            ));
        }
    }
    s.push_str("\n}\n");
    s
}

/// One reading as a JSON object (SI units).
pub fn reading_object(x: &crate::readings::ReadingResult) -> String {
    let opt = |v: Option<f64>| v.map(num).unwrap_or_else(|| "null".into());
    let warnings: Vec<String> = x
        .warnings
        .iter()
        .map(|w| string(&super::notes::reading_note(w)))
        .collect();
    format!(
        "{{\"id\": {}, \"span\": {}, \"position\": {}, \"distance\": {}, \"reading\": {}, \"field\": {}, \"sigma\": {}, \"sigma_low\": {}, \"sigma_high\": {}, \"sigma_naive_isolated\": {}, \"sigma_naive_one_sided\": {}, \"sigma_model\": {}, \"residual\": {}, \"tolerance\": {}, \"reproduced\": {}{}, \"at\": [{}, {}, {}], \"normal\": [{}, {}, {}]{}, \"recorded\": {}, \"warnings\": [{}]}}",
        string(&x.id),
        string(&x.span),
        num(x.position),
        num(x.distance),
        num(x.reading),
        opt(x.field),
        num(x.sigma),
        num(x.sigma_low),
        num(x.sigma_high),
        opt(x.sigma_naive_isolated),
        opt(x.sigma_naive_one_sided),
        num(x.sigma_model),
        num(x.residual),
        num(x.uncertainty),
        x.reproduced(),
        // Only with the conductors' solve: what the meter reads ÷ the
        // field of the web's charge alone there.
        x.screening
            .map(|k| format!(", \"screening\": {}", num(k)))
            .unwrap_or_default(),
        num(x.at[0]),
        num(x.at[1]),
        num(x.at[2]),
        // + 0.0: a zero component reads 0, not -0.
        num(x.normal[0] + 0.0),
        num(x.normal[1] + 0.0),
        num(x.normal[2] + 0.0),
        // What the final profile gives at the meter: n̂·E [V/m] for a
        // field reading, the density [C/m²] for a density reading.
        match x.model_field {
            Some(f) => format!(", \"model_field\": {}", num(f)),
            None => format!(", \"model_sigma\": {}", num(x.sigma)),
        },
        recorded_object(&x.record),
        warnings.join(", ")
    )
}

/// What was recorded with a reading: the texts as typed and the optional
/// instrument and conditions (SI: humidity as a fraction, speed in m/s).
fn recorded_object(r: &crate::model::ReadingRecord) -> String {
    let text = |v: Option<&str>| v.map(string).unwrap_or_else(|| "null".into());
    let opt = |v: Option<f64>| v.map(num).unwrap_or_else(|| "null".into());
    format!(
        "{{\"value\": {}, \"distance\": {}, \"calibrated_at\": {}, \"meter\": {}, \"calibrated_on\": {}, \"relative_humidity\": {}, \"speed\": {}}}",
        string(&r.value_text),
        string(&r.distance_text),
        text(r.calibrated_at_text.as_deref()),
        text(r.meter.as_deref()),
        r.calibrated_on
            .map(|d| string(&d.format("%Y-%m-%d").to_string()))
            .unwrap_or_else(|| "null".into()),
        opt(r.relative_humidity),
        opt(r.speed)
    )
}

/// `websigma readings --format json`.
pub fn readings_json(r: &crate::readings::ReadingsResult) -> String {
    let items: Vec<String> = r
        .readings
        .iter()
        .map(|x| format!("  {}", reading_object(x)))
        .collect();
    format!("{{\"readings\": [\n{}\n]}}\n", items.join(",\n"))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn numbers_and_strings() {
        assert_eq!(num(1e-7), "1e-7");
        assert_eq!(num(0.5), "0.5");
        assert_eq!(num(f64::NAN), "null");
        assert_eq!(string("a\"b\\c\n"), "\"a\\\"b\\\\c\\n\"");
    }
}
