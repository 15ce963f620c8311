//! CSV writers, SI units named in the header: field results (one row per
//! point), the report's tables, the readings conversion (with each reading
//! as entered and its record) and the plan (one row per bar of each plan).

use crate::field::PointField;
use crate::report::PointRequest;
use crate::report::build::Report;

/// The header row; with contributions, four columns per span name.
pub fn field_header(span_names: &[String], contributions: bool) -> String {
    let mut h =
        String::from("id,x_m,y_m,z_m,Ex_V_per_m,Ey_V_per_m,Ez_V_per_m,E_magnitude_V_per_m,V_V");
    if contributions {
        for n in span_names {
            for quantity in ["Ex_V_per_m", "Ey_V_per_m", "Ez_V_per_m", "V_V"] {
                h.push(',');
                h.push_str(&text_cell(&format!("{n}_{quantity}")));
            }
        }
    }
    h
}

/// A CSV cell holding text (ids, names, notes, labels, sources — anything
/// that may come from a line description, a profile or a point file).
///
/// Text beginning with `=`, `+`, `-`, `@`, a tab or a carriage return would
/// be read as a formula by a spreadsheet (CSV or formula injection): it is
/// written with a single quote in front and the cell quoted, as OWASP's
/// guidance recommends (OWASP, CSV Injection), so `=1+1` becomes `"'=1+1"`.
/// Other text is quoted when it holds a comma, a quote or a line break
/// (RFC 4180 §2). Numbers are not written through this function: a negative
/// value we compute stays a number.
pub fn text_cell(s: &str) -> String {
    if s.starts_with(['=', '+', '-', '@', '\t', '\r']) {
        format!("\"'{}\"", s.replace('"', "\"\""))
    } else if s.contains([',', '"', '\n', '\r']) {
        format!("\"{}\"", s.replace('"', "\"\""))
    } else {
        s.to_string()
    }
}

/// A number cell: shortest round-trip text; empty for NaN or an open
/// bound (infinity).
fn number_cell(x: f64) -> String {
    if x.is_finite() {
        format!("{x:?}")
    } else {
        String::new()
    }
}

/// One data row.
pub fn field_row(req: &PointRequest, f: &PointField) -> String {
    let mut r = format!(
        "{},{:?},{:?},{:?},{:?},{:?},{:?},{:?},{:?}",
        text_cell(req.id.as_deref().unwrap_or("")),
        f.at[0],
        f.at[1],
        f.at[2],
        f.e[0],
        f.e[1],
        f.e[2],
        f.e_magnitude(),
        f.v
    );
    for c in &f.contributions {
        r.push_str(&format!(
            ",{:?},{:?},{:?},{:?}",
            c.e[0], c.e[1], c.e[2], c.v
        ));
    }
    r
}

/// `results.csv`: one row per finding.
pub fn findings_csv(r: &Report) -> String {
    let mut s = String::from(
        "verdict,hazard,profile,rule,subject,check,value,unit,meter_distance_m,ratio,warn,fail,limit,margin,source,confidence,note,low,high,bound\n",
    );
    let opt = |x: Option<f64>| x.map(|v| format!("{v:?}")).unwrap_or_default();
    for f in &r.findings {
        s.push_str(&format!(
            "{},{},{},{},{},{},{:?},{},{},{},{},{},{:?},{:?},{},{},{},{},{},{}\n",
            f.verdict.text(),
            f.hazard.key(),
            text_cell(&f.profile),
            text_cell(&f.rule),
            text_cell(&f.subject),
            text_cell(&f.check),
            f.value,
            text_cell(if f.ratio.is_some() {
                "1"
            } else {
                f.dim.si_unit()
            }),
            opt(f.meter),
            text_cell(f.ratio.unwrap_or_default()),
            opt(f.warn),
            opt(f.fail),
            f.limit,
            f.margin,
            text_cell(&f.source),
            text_cell(f.confidence.text()),
            text_cell(&f.note),
            number_cell(f.bounds.low),
            number_cell(f.bounds.high),
            f.bounds.basis.key()
        ));
    }
    s
}

/// `points.csv`: one row per place of interest.
pub fn points_csv(r: &Report) -> String {
    let mut s = String::from(
        "id,kind,x_m,y_m,z_m,Ex_V_per_m,Ey_V_per_m,Ez_V_per_m,E_magnitude_V_per_m,V_V,zones,E_magnitude_low_V_per_m,E_magnitude_high_V_per_m,V_low_V,V_high_V\n",
    );
    for (i, p) in r.points.iter().enumerate() {
        let (e, v) = match r.uncertainty.points.get(i) {
            Some(b) => (b.e, b.v),
            None => ([p.e_magnitude; 2], [p.v; 2]),
        };
        s.push_str(&format!(
            "{},{},{:?},{:?},{:?},{:?},{:?},{:?},{:?},{:?},{},{:?},{:?},{:?},{:?}\n",
            text_cell(&p.point.id),
            p.point.kind.text(),
            p.point.at[0],
            p.point.at[1],
            p.point.at[2],
            p.e[0],
            p.e[1],
            p.e[2],
            p.e_magnitude,
            p.v,
            text_cell(&p.zones.join(" ")),
            e[0],
            e[1],
            v[0],
            v[1]
        ));
    }
    s
}

/// `spans.csv`: one row per span.
pub fn spans_csv(r: &Report) -> String {
    let mut s = String::from(
        "id,label,from_to,length_m,angle_deg,sigma_start_C_per_m2,sigma_end_C_per_m2,sigma_peak_C_per_m2,meter_reading_V,meter_distance_m,zones,sigma_peak_low_C_per_m2,sigma_peak_high_C_per_m2,meter_reading_low_V,meter_reading_high_V\n",
    );
    for (j, sp) in r.spans.iter().enumerate() {
        let b = r.uncertainty.spans.get(j);
        let peak = b.map_or([sp.sigma_peak; 2], |b| b.sigma_peak);
        let meter = match (b.and_then(|b| b.meter), sp.meter) {
            (Some(m), _) => [format!("{:?}", m[0]), format!("{:?}", m[1])],
            (None, Some(m)) => [format!("{:?}", m.reading()), format!("{:?}", m.reading())],
            (None, None) => [String::new(), String::new()],
        };
        let (reading, distance) = match sp.meter {
            Some(m) => (format!("{:?}", m.reading()), format!("{:?}", m.distance)),
            None => (String::new(), String::new()),
        };
        s.push_str(&format!(
            "{},{},{},{:?},{:?},{:?},{:?},{:?},{reading},{distance},{},{:?},{:?},{},{}\n",
            text_cell(&sp.row.name),
            text_cell(&sp.label),
            text_cell(&sp.row.from_to),
            sp.row.length,
            sp.row.angle_deg,
            sp.row.sigma_start,
            sp.row.sigma_end,
            sp.sigma_peak,
            text_cell(&sp.zones.join(" ")),
            peak[0],
            peak[1],
            meter[0],
            meter[1]
        ));
    }
    s
}

/// The `plan` command's CSV: one row per bar of each plan listed (best
/// first), the plan's findings repeated on each of its rows; SI units named
/// in the header (efficiency and the worst margin as plain ratios).
pub fn plan_csv(plan: &crate::plan::Plan, line: &crate::model::Line) -> String {
    let mut s = String::from(
        "plan,bars,fail,warn,pass,worst_margin,bar,kind,span,span_label,position_m,side,distance_m,efficiency\n",
    );
    for (rank, o) in plan.options.iter().enumerate() {
        let [pass, warn, fail] = o.counts;
        let lead = format!(
            "{},{},{fail},{warn},{pass},{:?}",
            rank + 1,
            o.bars.len(),
            o.worst_margin
        );
        if o.bars.is_empty() {
            s.push_str(&format!("{lead},,,,,,,,\n"));
        }
        for (k, &b) in o.bars.iter().enumerate() {
            let c = &plan.candidates[b];
            let sides = o.sides.get(k).map_or(c.side.text().to_string(), |s| {
                super::plan_words::sides_text(s)
            });
            let span = &line.path.spans[c.span];
            s.push_str(&format!(
                "{lead},{},{},{},{},{:?},{},{:?},{:?}\n",
                k + 1,
                c.kind.text(),
                text_cell(&span.name),
                text_cell(&span.label()),
                c.along,
                sides,
                c.distance,
                c.efficiency
            ));
        }
    }
    s
}

/// The readings conversion as CSV, SI units.
pub fn readings_csv(readings: &[crate::readings::ReadingResult]) -> String {
    let mut s = String::from(
        "id,span,position_m,distance_m,reading_SI,field_V_per_m,sigma_C_per_m2,sigma_low_C_per_m2,sigma_high_C_per_m2,sigma_naive_isolated_C_per_m2,sigma_naive_one_sided_C_per_m2,sigma_model_C_per_m2,residual_SI,tolerance_SI,reproduced,at_x_m,at_y_m,at_z_m,normal_x,normal_y,normal_z,model_field_V_per_m,warnings,as_entered,meter,calibrated_on,relative_humidity_fraction,speed_m_per_s\n",
    );
    let opt = |x: Option<f64>| x.map(|v| format!("{v:?}")).unwrap_or_default();
    for x in readings {
        s.push_str(&format!(
            "{},{},{:?},{:?},{:?},{},{:?},{:?},{:?},{},{},{:?},{:?},{:?},{},{:?},{:?},{:?},{:?},{:?},{:?},{},{},{},{},{},{},{}\n",
            text_cell(&x.id),
            text_cell(&x.span),
            x.position,
            x.distance,
            x.reading,
            opt(x.field),
            x.sigma,
            x.sigma_low,
            x.sigma_high,
            opt(x.sigma_naive_isolated),
            opt(x.sigma_naive_one_sided),
            x.sigma_model,
            x.residual,
            x.uncertainty,
            x.reproduced(),
            x.at[0],
            x.at[1],
            x.at[2],
            x.normal[0],
            x.normal[1],
            x.normal[2],
            opt(x.model_field),
            text_cell(&super::notes::reading_notes(&x.warnings)),
            text_cell(&super::readings_text::as_entered(&x.record)),
            text_cell(x.record.meter.as_deref().unwrap_or("")),
            x.record
                .calibrated_on
                .map(|d| d.format("%Y-%m-%d").to_string())
                .unwrap_or_default(),
            opt(x.record.relative_humidity),
            opt(x.record.speed)
        ));
    }
    s
}
