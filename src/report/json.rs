//! Minimal JSON output helpers (numbers in SI units, strings escaped).
//!
//! Hand-written so that long point lists can be streamed item by item.

use crate::field::PointField;
use crate::report::PointRequest;

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
