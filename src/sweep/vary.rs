//! # The varied input: `PATH=A..B UNIT`, checked against the line description
//!
//! [`parse_vary`] reads what `--vary` gives: a YAML path, two numbers and
//! the unit they are written in (`web.speed=50..400 m/min`; the unit may
//! also come glued, `50..400m/min`, or as a separate word). [`Varied::new`]
//! checks it against the line description's text: the path exists, the
//! value there is a number or a quantity, the unit has that quantity's
//! dimension (the units module decides both), the ends differ and the
//! number of steps is in range. [`Varied::line_at`] then gives the line
//! with the value x written at the path as the text `"{x} {UNIT}"` (full
//! precision), read and validated as any line description is
//! ([`crate::model::parse_line`]); a value at which the line is not valid
//! is an error that names the value and carries the validator's message.
//!
//! The values swept are evenly spaced, A + (B − A)·i/(N − 1) for
//! i = 0 … N − 1, the last exactly B. They are kept in the user's unit (the
//! sweep's axis); the SI value of each is what the units module makes of
//! its text.

use super::path::{PathError, YamlPath, get_at, kind, set_at};
use crate::model::{Line, ValidationError, parse_line};
use crate::units::{Dim, ParseQuantityError, parse_quantity};
use crate::yaml::YamlError;
use serde_yaml::Value;

/// Fewest and most values a sweep takes (each is a full assessment).
pub const STEPS: std::ops::RangeInclusive<usize> = 2..=201;

/// What `--vary` asks for, read but not yet checked against a line.
#[derive(Debug, Clone, PartialEq)]
pub struct VarySpec {
    /// Where the value is in the line description.
    pub path: YamlPath,
    /// First value, in `unit`.
    pub from: f64,
    /// Last value, in `unit`.
    pub to: f64,
    /// The unit A and B are written in (empty for a plain number).
    pub unit: String,
}

/// Why a sweep cannot be made as asked.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum VaryError {
    /// `--vary` is not of the form `PATH=A..B UNIT`.
    #[error(
        "--vary \"{spec}\": {why}; expected PATH=A..B UNIT such as \"web.speed=50..400 m/min\" or \"charge[0].sigma=2..12 uC/m^2\" (no unit for a plain number)"
    )]
    Spec {
        /// The text as given.
        spec: String,
        /// What is wrong.
        why: String,
    },
    /// A bad path, or one that does not exist in the line description.
    #[error("--vary: {0}")]
    Path(#[from] PathError),
    /// The value at the path is not a number or a quantity.
    #[error(
        "--vary: {path} is {found} in the line description, not a number or a quantity: sweep a numeric input such as web.speed, charge[0].sigma or readings[0].distance"
    )]
    NotNumeric {
        /// The path.
        path: String,
        /// What is there.
        found: String,
    },
    /// The unit is not one of the value's dimension.
    #[error(
        "--vary: {path} is {} (\"{written}\" in the line description), but {}: {}",
        .expected.name(),
        unit_words(.unit, *.unit_is),
        accepted(*.expected)
    )]
    WrongUnit {
        /// The path.
        path: String,
        /// The unit given.
        unit: String,
        /// The dimension of that unit, when it has one.
        unit_is: Option<Dim>,
        /// The dimension of the value in the file.
        expected: Dim,
        /// The value as written in the file.
        written: String,
    },
    /// A and B are equal.
    #[error("--vary: the range {from}..{from} is empty: give two different ends A..B")]
    SameEnds {
        /// The value given twice.
        from: f64,
    },
    /// `--steps` out of range.
    #[error(
        "--steps must be between {} and {}, got {n}: each value is a full assessment",
        STEPS.start(),
        STEPS.end()
    )]
    Steps {
        /// The number given.
        n: usize,
    },
    /// An end of the range is not a quantity the program accepts.
    #[error("--vary: {path} = \"{text}\": {source}")]
    Quantity {
        /// The path.
        path: String,
        /// The value's text.
        text: String,
        /// Why the units module refuses it (boxed: the error is large).
        source: Box<ParseQuantityError>,
    },
    /// The line description is not valid at a value of the sweep.
    #[error("at {path} = {value} the line description is not valid: {source}")]
    Invalid {
        /// The path.
        path: String,
        /// The value with its unit, as written into the line.
        value: String,
        /// The validator's message.
        source: ValidationError,
    },
    /// The line description could not be read or written as a YAML tree.
    #[error("the line description as a YAML tree: {0}")]
    Yaml(#[from] YamlError),
}

/// What the unit given is, for messages.
fn unit_words(unit: &str, dim: Option<Dim>) -> String {
    match dim {
        _ if unit.is_empty() => "A and B have no unit".to_string(),
        Some(d) => format!("\"{unit}\" is a unit of {}", d.name()),
        None => format!("\"{unit}\" is not a unit of it"),
    }
}

/// What units a value of `dim` takes, for messages.
fn accepted(dim: Dim) -> String {
    if dim == Dim::Number {
        "give A and B as plain numbers, without a unit".to_string()
    } else {
        format!("give A and B in one of {}", dim.accepted_units())
    }
}

/// Reads `--vary`: `spec` is `PATH=A..B` with the unit glued or after a
/// space, or `unit` gives it as a separate word.
pub fn parse_vary(spec: &str, unit: Option<&str>) -> Result<VarySpec, VaryError> {
    let bad = |why: &str| VaryError::Spec {
        spec: spec.to_string(),
        why: why.to_string(),
    };
    let (path, range) = spec
        .split_once('=')
        .ok_or_else(|| bad("no = between the path and the range"))?;
    let path = YamlPath::parse(path.trim())?;
    let (a, rest) = range
        .split_once("..")
        .ok_or_else(|| bad("no .. between the two ends of the range"))?;
    let number = |t: &str, which: &str| -> Result<f64, VaryError> {
        let x: f64 = t
            .trim()
            .parse()
            .map_err(|_| bad(&format!("{which} \"{}\" is not a number", t.trim())))?;
        if x.is_finite() {
            Ok(x)
        } else {
            Err(bad(&format!(
                "{which} \"{}\" is not a finite number",
                t.trim()
            )))
        }
    };
    let from = number(a, "A")?;
    let rest = rest.trim();
    // The longest leading number is B; what follows is a glued unit.
    let split = rest
        .char_indices()
        .map(|(i, _)| i)
        .chain([rest.len()])
        .rev()
        .find(|&i| i > 0 && rest[..i].parse::<f64>().is_ok())
        .ok_or_else(|| {
            if rest.is_empty() {
                bad("no end value after ..")
            } else {
                bad(&format!("B in \"{rest}\" is not a number"))
            }
        })?;
    let to = number(&rest[..split], "B")?;
    let glued = rest[split..].trim();
    let unit = match (glued.is_empty(), unit.map(str::trim)) {
        (true, None) => String::new(),
        (true, Some(u)) => u.to_string(),
        (false, None) => glued.to_string(),
        (false, Some(u)) => {
            return Err(bad(&format!(
                "two units, \"{glued}\" and \"{u}\": give the unit once"
            )));
        }
    };
    if from == to {
        return Err(VaryError::SameEnds { from });
    }
    Ok(VarySpec {
        path,
        from,
        to,
        unit,
    })
}

/// A sweep's input checked against one line description.
#[derive(Debug, Clone)]
pub struct Varied {
    doc: Value,
    spec: VarySpec,
    dim: Dim,
    written: String,
    steps: usize,
}

impl Varied {
    /// Checks `spec` and `steps` against the line description `text`.
    pub fn new(text: &str, spec: VarySpec, steps: usize) -> Result<Varied, VaryError> {
        if !STEPS.contains(&steps) {
            return Err(VaryError::Steps { n: steps });
        }
        if spec.from == spec.to {
            return Err(VaryError::SameEnds { from: spec.from });
        }
        let doc = crate::yaml::value_tree(text)?;
        let path = spec.path.to_string();
        let written = match get_at(&doc, &spec.path)? {
            Value::String(s) => s,
            Value::Number(n) => n.to_string(),
            Value::Bool(b) => {
                return Err(VaryError::NotNumeric {
                    path,
                    found: format!("\"{b}\""),
                });
            }
            other => {
                return Err(VaryError::NotNumeric {
                    path,
                    found: kind(&other),
                });
            }
        };
        let in_file: Vec<Dim> = Dim::all()
            .iter()
            .copied()
            .filter(|&d| parse_quantity(&written, d).is_ok())
            .collect();
        if in_file.is_empty() {
            return Err(VaryError::NotNumeric {
                path,
                found: format!("\"{written}\""),
            });
        }
        let one = quantity_text(1.0, &spec.unit);
        let Some(dim) = in_file
            .iter()
            .copied()
            .find(|&d| parse_quantity(&one, d).is_ok())
        else {
            return Err(VaryError::WrongUnit {
                path,
                unit: spec.unit.clone(),
                unit_is: Dim::all()
                    .iter()
                    .copied()
                    .find(|&d| parse_quantity(&one, d).is_ok()),
                expected: in_file[0],
                written,
            });
        };
        let v = Varied {
            doc,
            spec,
            dim,
            written,
            steps,
        };
        // Both ends are quantities the units module accepts.
        v.si(v.spec.from)?;
        v.si(v.spec.to)?;
        Ok(v)
    }

    /// The path varied, as text.
    pub fn path(&self) -> String {
        self.spec.path.to_string()
    }

    /// The unit of the values (empty for a plain number).
    pub fn unit(&self) -> &str {
        &self.spec.unit
    }

    /// The dimension of the value.
    pub fn dim(&self) -> Dim {
        self.dim
    }

    /// The value as the line description writes it.
    pub fn written(&self) -> &str {
        &self.written
    }

    /// The ends of the range `[A, B]`, in the user's unit.
    pub fn range(&self) -> [f64; 2] {
        [self.spec.from, self.spec.to]
    }

    /// The values swept, in the user's unit: A + (B − A)·i/(N − 1), the
    /// last exactly B.
    pub fn values(&self) -> Vec<f64> {
        let n = self.steps;
        let (a, b) = (self.spec.from, self.spec.to);
        (0..n)
            .map(|i| {
                if i + 1 == n {
                    b
                } else {
                    a + (b - a) * i as f64 / (n - 1) as f64
                }
            })
            .collect()
    }

    /// The SI value of `x` [SI unit of [`Self::dim`]].
    pub fn si(&self, x: f64) -> Result<f64, VaryError> {
        let text = quantity_text(x, &self.spec.unit);
        parse_quantity(&text, self.dim).map_err(|source| VaryError::Quantity {
            path: self.path(),
            text,
            source: Box::new(source),
        })
    }

    /// The line as its description writes it (read back from the tree).
    pub fn line_as_written(&self) -> Result<Line, VaryError> {
        let yaml = crate::yaml::to_text(&self.doc)?;
        parse_line(&yaml).map_err(|source| VaryError::Invalid {
            path: self.path(),
            value: self.written.clone(),
            source,
        })
    }

    /// The line with `x` (in the user's unit) at the path, validated.
    pub fn line_at(&self, x: f64) -> Result<Line, VaryError> {
        let mut doc = self.doc.clone();
        let text = quantity_text(x, &self.spec.unit);
        set_at(&mut doc, &self.spec.path, Value::String(text.clone()))?;
        let yaml = crate::yaml::to_text(&doc)?;
        parse_line(&yaml).map_err(|source| VaryError::Invalid {
            path: self.path(),
            value: text,
            source,
        })
    }
}

/// `x` with its unit as written into the line: every digit that tells the
/// f64 apart (Rust's shortest round-trip form).
fn quantity_text(x: f64, unit: &str) -> String {
    if unit.is_empty() {
        format!("{x:?}")
    } else {
        format!("{x:?} {unit}")
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const LINE: &str = r#"
line: Vary test line
web:
  width: 1.0 m
  thickness: 50 um
  relative_permittivity: 3
  relaxation_time: 100 s
  speed: 1 m/s
  material: PET
path:
  - point: [0 m, 1 m]
  - point: [2 m, 1 m]
charge:
  - at: start
    sigma: 5 uC/m^2
"#;

    fn spec(s: &str) -> VarySpec {
        parse_vary(s, None).unwrap()
    }

    #[test]
    fn the_spec_reads_the_range_and_the_unit_in_every_form() {
        for (s, unit) in [
            ("web.speed=50..400 m/min", None),
            ("web.speed=50..400m/min", None),
            ("web.speed=50..400", Some("m/min")),
            (" web.speed = 50 .. 400  m/min", None),
        ] {
            let v = parse_vary(s, unit).unwrap();
            assert_eq!(
                (v.from, v.to, v.unit.as_str()),
                (50.0, 400.0, "m/min"),
                "{s}"
            );
            assert_eq!(v.path.to_string(), "web.speed");
        }
        let v = spec("charge[0].sigma=-2e-1..1.5e1 uC/m^2");
        assert_eq!((v.from, v.to), (-0.2, 15.0));
        let v = spec("web.relative_permittivity=2..4");
        assert_eq!(v.unit, "");
    }

    #[test]
    fn bad_specs_say_what_is_wrong() {
        for (s, unit, why) in [
            ("web.speed", None, "no ="),
            ("web.speed=50", None, "no .."),
            ("web.speed=x..4 m/s", None, "A \"x\" is not a number"),
            ("web.speed=1..", None, "no end value"),
            ("web.speed=1..m/s", None, "not a number"),
            ("web.speed=inf..4 m/s", None, "not a finite number"),
            ("web.speed=1..NaN", None, "not a finite number"),
            ("web.speed=1..2 m/s", Some("m/min"), "two units"),
        ] {
            let e = parse_vary(s, unit).unwrap_err().to_string();
            assert!(e.contains(why), "{s}: {e}");
        }
        assert!(matches!(
            parse_vary("web.speed=3..3 m/s", None),
            Err(VaryError::SameEnds { .. })
        ));
        assert!(matches!(
            parse_vary("web..speed=3..4 m/s", None),
            Err(VaryError::Path(_))
        ));
    }

    #[test]
    fn checks_against_the_line_and_the_values_swept() {
        let v = Varied::new(LINE, spec("web.speed=0.5..2 m/s"), 4).unwrap();
        assert_eq!(v.dim(), Dim::Speed);
        assert_eq!(v.values(), vec![0.5, 1.0, 1.5, 2.0]);
        let line = v.line_at(1.5).unwrap();
        assert_eq!(line.web.speed, 1.5);
        // A unit of the same dimension converts to SI.
        let v = Varied::new(LINE, spec("web.speed=60..120 m/min"), 2).unwrap();
        assert!((v.line_at(90.0).unwrap().web.speed - 1.5).abs() < 1e-12);
        assert!((v.si(90.0).unwrap() - 1.5).abs() < 1e-12);
        // A plain number.
        let v = Varied::new(LINE, spec("web.relative_permittivity=2..4"), 3).unwrap();
        assert_eq!(v.dim(), Dim::Number);
        assert_eq!(v.line_at(2.5).unwrap().web.relative_permittivity, 2.5);
        // A coordinate in a list.
        let v = Varied::new(LINE, spec("path[1].point[1]=1..2 m"), 3).unwrap();
        assert_eq!(v.line_at(1.5).unwrap().path.spans[0].end, [2.0, 1.5]);
    }

    #[test]
    fn refusals_name_the_place_and_what_is_accepted() {
        let err =
            |s: &str, steps: usize| Varied::new(LINE, spec(s), steps).unwrap_err().to_string();
        let e = err("web.speed=1..2 kV", 5);
        assert!(
            e.contains("web.speed is a speed (\"1 m/s\" in the line description), but \"kV\" is a unit of a voltage: give A and B in one of m/s, mm/s, m/min"),
            "{e}"
        );
        let e = err("web.speed=1..2", 5);
        assert!(
            e.contains("but A and B have no unit: give A and B in one of m/s"),
            "{e}"
        );
        let e = err("web.speed=1..2 furlongs", 5);
        assert!(e.contains("\"furlongs\" is not a unit of it"), "{e}");
        let e = err("web.relative_permittivity=1..2 m", 5);
        assert!(
            e.contains(
                "\"m\" is a unit of a length: give A and B as plain numbers, without a unit"
            ),
            "{e}"
        );
        let e = err("web.material=1..2", 5);
        assert!(e.contains("web.material is \"PET\""), "{e}");
        assert!(e.contains("not a number or a quantity"), "{e}");
        let e = err("web=1..2", 5);
        assert!(e.contains("web is a mapping"), "{e}");
        let e = err("web.sped=1..2 m/s", 5);
        assert!(e.contains("web has no key \"sped\"; its keys are width, thickness, relative_permittivity, relaxation_time, speed, material"), "{e}");
        for n in [0, 1, 202] {
            assert!(err("web.speed=1..2 m/s", n).contains("--steps must be between 2 and 201"));
        }
        let e = err("web.speed=1..1e305 m/s", 5);
        assert!(e.contains("too large"), "{e}");
        // A value at which the line is not valid names the value and the problem.
        let v = Varied::new(LINE, spec("web.thickness=-50..50 um"), 3).unwrap();
        let e = v.line_at(-50.0).unwrap_err().to_string();
        assert!(
            e.starts_with("at web.thickness = -50.0 um the line description is not valid:"),
            "{e}"
        );
        assert!(e.contains("web.thickness"), "{e}");
    }
}
