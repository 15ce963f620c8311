//! How a finding's numbers read in tables and summaries: the value and its
//! limits to three significant digits with their unit (a meter rule's in
//! the meter's terms, "4.5 kV at 1 in"; a ratio with what it is), and the
//! margin without ever printing 0.00×. JSON and CSV keep full precision.
//!
//! Writer stage: formats numbers the assessment computed.

use crate::assess::{Finding, Verdict};
use crate::report::build::FindingRow;
use crate::units::{Dim, Meters, format_quantity_sig};

/// The numbers of a finding that its texts need, from a [`Finding`] or a
/// report's [`FindingRow`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Shown {
    /// The value, SI.
    pub value: f64,
    /// Its dimension.
    pub dim: Dim,
    /// A meter rule's calibration distance [m].
    pub meter: Option<Meters>,
    /// What a dimensionless value is.
    pub ratio: Option<&'static str>,
    /// A field shown per inch.
    pub per_inch: bool,
    /// Warning limit, SI.
    pub warn: Option<f64>,
    /// Failure limit, SI.
    pub fail: Option<f64>,
    /// Governing limit, SI.
    pub limit: f64,
    /// The verdict.
    pub verdict: Verdict,
    /// The value's range over the uncertain inputs, SI (low, high).
    pub range: (f64, f64),
}

impl From<&Finding> for Shown {
    fn from(f: &Finding) -> Self {
        Shown {
            value: f.value,
            dim: f.dim,
            meter: f.meter,
            ratio: f.ratio,
            per_inch: f.per_inch,
            warn: f.warn,
            fail: f.fail,
            limit: f.limit,
            verdict: f.verdict,
            range: (f.bounds.low, f.bounds.high),
        }
    }
}

impl From<&FindingRow> for Shown {
    fn from(f: &FindingRow) -> Self {
        Shown {
            value: f.value,
            dim: f.dim,
            meter: f.meter,
            ratio: f.ratio,
            per_inch: f.per_inch,
            warn: f.warn,
            fail: f.fail,
            limit: f.limit,
            verdict: f.verdict,
            range: (f.bounds.low, f.bounds.high),
        }
    }
}

/// Significant digits of values and limits in tables and summaries: what
/// the data support (readings of ±5 %, a model within a few per cent).
pub const SIG: usize = 3;

/// One inch [m] (NIST SP 811, exact).
const INCH: Meters = 0.0254;

/// A meter's calibration distance as its source writes it: whole inches as
/// `1 in`, otherwise in mm.
pub fn meter_distance_text(d: Meters) -> String {
    let inches = d / INCH;
    if inches >= 0.5 && (inches - inches.round()).abs() < 1e-9 {
        format!("{} in", inches.round() as i64)
    } else {
        format_quantity_sig(d, Dim::Length, SIG)
    }
}

/// A number of the finding's dimension with its unit, the meter distance
/// or the ratio it is.
fn quantity(f: &Shown, x: f64) -> String {
    if f.per_inch && f.dim == Dim::Field {
        // V/m × 0.0254 m/in = V/in; the SI value beside it.
        return format!(
            "{}/in ({})",
            format_quantity_sig(x * INCH, Dim::Voltage, SIG),
            format_quantity_sig(x, f.dim, SIG)
        );
    }
    let base = format_quantity_sig(x, f.dim, SIG);
    match (f.meter, f.ratio, f.dim) {
        (Some(d), _, _) => format!("{base} at {}", meter_distance_text(d)),
        (None, Some(r), _) => format!("{base} ({r})"),
        (None, None, Dim::Number) => format!("{base} (dimensionless)"),
        _ => base,
    }
}

/// A number of the finding's dimension with its unit only (no meter
/// distance or ratio): for the ends of a range.
fn bare(f: &Shown, x: f64) -> String {
    if f.per_inch && f.dim == Dim::Field {
        return format!("{}/in", format_quantity_sig(x * INCH, Dim::Voltage, SIG));
    }
    format_quantity_sig(x, f.dim, SIG)
}

/// The value's range over the uncertain inputs, `12.1 kV to 13.7 kV`, or
/// `None` when it is a single value.
pub fn range_text(f: impl Into<Shown>) -> Option<String> {
    let f = f.into();
    let (lo, hi) = f.range;
    if hi.is_infinite() {
        return Some(format!("{} or more (not bounded above)", bare(&f, lo)));
    }
    (lo != hi).then(|| format!("{} to {}", bare(&f, lo), bare(&f, hi)))
}

/// The value found: `1.98 µC/m²`, `4.5 kV at 1 in`, `0.42 (5·I′/I_ion)`,
/// with its range when the inputs' tolerances give one:
/// `12.9 kV (12.1 kV to 13.7 kV)`.
pub fn value_text(f: impl Into<Shown>) -> String {
    let f = f.into();
    match range_text(f) {
        Some(r) => format!("{} ({r})", quantity(&f, f.value)),
        None => quantity(&f, f.value),
    }
}

/// The limits of the finding: `fail 10 µC/m²`, `warn 1 µC/m², fail
/// 1.7 µC/m²`, `fail 5 kV at 1 in`.
pub fn limit_text(f: impl Into<Shown>) -> String {
    let f = &f.into();
    match (f.warn, f.fail) {
        (Some(w), Some(x)) => format!("warn {}, fail {}", quantity(f, w), quantity(f, x)),
        (Some(w), None) => format!("warn {}", quantity(f, w)),
        (None, Some(x)) => format!("fail {}", quantity(f, x)),
        (None, None) => format!("limit {}", quantity(f, f.limit)),
    }
}

/// The limit the verdict is about: the failure limit for a failure, the
/// warning limit for a warning, else the governing limit (`10 µC/m²`).
pub fn crossed_limit_text(f: impl Into<Shown>) -> String {
    let f = &f.into();
    let x = match f.verdict {
        Verdict::Warn => f.warn.unwrap_or(f.limit),
        _ => f.limit,
    };
    quantity(f, x)
}

/// The value against the limit its verdict is about, in words:
/// `1.98 µC/m² against warn 1 µC/m² (1.98× the warning limit)`; for an
/// uncertain finding, its range across the failure limit.
pub fn against_text(f: impl Into<Shown>) -> String {
    let f = &f.into();
    if f.verdict == Verdict::Uncertain {
        return format!(
            "{} ranges from {} across the failure limit {}",
            quantity(f, f.value),
            range_text(*f).unwrap_or_default(),
            quantity(f, f.limit)
        );
    }
    let (word, x) = match (f.verdict, f.warn) {
        (Verdict::Warn, Some(w)) => ("warning", w),
        _ if f.fail.is_some() => ("failure", f.limit),
        _ if f.warn.is_some() => ("warning", f.limit),
        _ => ("", f.limit),
    };
    let ratio = if x > 0.0 { f.value / x } else { 0.0 };
    let tail = if word.is_empty() {
        format!("{} the limit", margin_text(ratio))
    } else {
        format!("{} the {word} limit", margin_text(ratio))
    };
    format!(
        "{} against {} ({tail})",
        quantity(f, f.value),
        quantity(f, x)
    )
}

/// The heading of a class of harm in summaries.
pub fn hazard_title(h: crate::assess::Hazard) -> &'static str {
    use crate::assess::Hazard;
    match h {
        Hazard::Ignition => "Ignition in hazardous zones",
        Hazard::Shock => "Shock to people",
        Hazard::Electronics => "Electronics",
        Hazard::Equipment => "Equipment and product",
    }
}

/// The margin value ÷ governing limit as `28×`, `1.16×`, `0.047×`;
/// `< 0.001×` below that, never `0.00×`.
pub fn margin_text(m: f64) -> String {
    if !m.is_finite() {
        return format!("{m}×");
    }
    if m == 0.0 {
        return "0×".into();
    }
    if m.abs() < 1e-3 {
        return "< 0.001×".into();
    }
    if m >= 100.0 {
        return format!("{m:.0}×");
    }
    // Three significant digits from 1×, two below.
    let sig: i32 = if m >= 1.0 { SIG as i32 } else { 2 };
    let decimals = (sig - 1 - m.abs().log10().floor() as i32).max(0) as usize;
    format!("{m:.decimals$}×")
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn margins_never_print_zero_hundredths() {
        assert_eq!(margin_text(28.05), "28.1×");
        assert_eq!(margin_text(1.163), "1.16×");
        assert_eq!(margin_text(0.47), "0.47×");
        assert_eq!(margin_text(0.003557), "0.0036×");
        assert_eq!(margin_text(0.0004), "< 0.001×");
        assert_eq!(margin_text(1097.2), "1097×");
        assert_eq!(margin_text(0.0), "0×");
        for m in [1e-9, 1e-4, 0.001, 0.004, 0.0049, 0.009, 0.05] {
            assert!(!margin_text(m).starts_with("0.00×"), "{m}");
            assert_ne!(margin_text(m), "0×", "{m}");
        }
    }

    /// A field limit written per inch reads per inch, the SI value beside
    /// it: 2000 V/in = 78 740 V/m (1 in = 0.0254 m, NIST SP 811).
    #[test]
    fn a_per_inch_field_reads_per_inch() {
        let f = Shown {
            value: 65_500.0,
            dim: Dim::Field,
            meter: None,
            ratio: None,
            per_inch: true,
            warn: None,
            fail: Some(2000.0 / INCH),
            limit: 2000.0 / INCH,
            verdict: Verdict::Pass,
            range: (65_500.0, 65_500.0),
        };
        assert_eq!(value_text(f), "1.66 kV/in (65.5 kV/m)");
        assert_eq!(limit_text(f), "fail 2 kV/in (78.7 kV/m)");
    }

    /// A range reads after the value, its ends in the value's own terms; an
    /// uncertain finding says it straddles the failure limit.
    #[test]
    fn ranges_read_after_the_value() {
        let f = Shown {
            value: 9_000.0,
            dim: Dim::Voltage,
            meter: None,
            ratio: None,
            per_inch: false,
            warn: Some(2_000.0),
            fail: Some(10_000.0),
            limit: 10_000.0,
            verdict: Verdict::Uncertain,
            range: (7_200.0, 10_800.0),
        };
        assert_eq!(value_text(f), "9 kV (7.2 kV to 10.8 kV)");
        assert_eq!(
            against_text(f),
            "9 kV ranges from 7.2 kV to 10.8 kV across the failure limit 10 kV"
        );
        let open = Shown {
            range: (7_200.0, f64::INFINITY),
            ..f
        };
        assert_eq!(
            range_text(open).as_deref(),
            Some("7.2 kV or more (not bounded above)")
        );
    }

    #[test]
    fn meter_distances_read_in_inches_when_they_are() {
        assert_eq!(meter_distance_text(0.0254), "1 in");
        assert_eq!(meter_distance_text(0.0508), "2 in");
        assert_eq!(meter_distance_text(0.025), "25 mm");
        assert_eq!(meter_distance_text(0.1), "100 mm");
    }
}
