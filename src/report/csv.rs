//! CSV output of field results: one row per point, SI units named in the header.

use crate::field::PointField;
use crate::report::PointRequest;

/// The header row; with contributions, four columns per span name.
pub fn field_header(span_names: &[String], contributions: bool) -> String {
    let mut h =
        String::from("id,x_m,y_m,z_m,Ex_V_per_m,Ey_V_per_m,Ez_V_per_m,E_magnitude_V_per_m,V_V");
    if contributions {
        for n in span_names {
            h.push_str(&format!(
                ",{n}_Ex_V_per_m,{n}_Ey_V_per_m,{n}_Ez_V_per_m,{n}_V_V"
            ));
        }
    }
    h
}

/// Quotes a CSV field when needed.
pub fn field_text(s: &str) -> String {
    if s.contains([',', '"', '\n', '\r']) {
        format!("\"{}\"", s.replace('"', "\"\""))
    } else {
        s.to_string()
    }
}

/// One data row.
pub fn field_row(req: &PointRequest, f: &PointField) -> String {
    let mut r = format!(
        "{},{:?},{:?},{:?},{:?},{:?},{:?},{:?},{:?}",
        field_text(req.id.as_deref().unwrap_or("")),
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
