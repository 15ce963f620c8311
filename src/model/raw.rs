//! Serde mirror of the line description YAML (first of the two reading stages).
//!
//! Every struct refuses unknown keys, and every quantity is kept as the text the
//! user wrote ([`Scalar`]), so that the validation stage (`validate.rs`) can
//! report *all* problems with their YAML path and say what would be accepted.
//! Nothing here interprets units or checks values.

use serde::Deserialize;
use serde::de::{self, Deserializer, Visitor};
use std::fmt;

/// A YAML scalar kept as text: a string, a number or a boolean as written.
#[derive(Debug, Clone, PartialEq)]
pub struct Scalar(pub String);

impl Scalar {
    /// The text of the scalar.
    pub fn as_str(&self) -> &str {
        &self.0
    }
}

impl<'de> Deserialize<'de> for Scalar {
    fn deserialize<D: Deserializer<'de>>(deserializer: D) -> Result<Self, D::Error> {
        struct ScalarVisitor;
        impl Visitor<'_> for ScalarVisitor {
            type Value = Scalar;
            fn expecting(&self, f: &mut fmt::Formatter) -> fmt::Result {
                f.write_str("a single value such as \"120 mm\" (not a list or a mapping)")
            }
            fn visit_str<E: de::Error>(self, v: &str) -> Result<Scalar, E> {
                Ok(Scalar(v.to_string()))
            }
            fn visit_string<E: de::Error>(self, v: String) -> Result<Scalar, E> {
                Ok(Scalar(v))
            }
            fn visit_i64<E: de::Error>(self, v: i64) -> Result<Scalar, E> {
                Ok(Scalar(v.to_string()))
            }
            fn visit_u64<E: de::Error>(self, v: u64) -> Result<Scalar, E> {
                Ok(Scalar(v.to_string()))
            }
            fn visit_f64<E: de::Error>(self, v: f64) -> Result<Scalar, E> {
                Ok(Scalar(format!("{v:?}")))
            }
            fn visit_bool<E: de::Error>(self, v: bool) -> Result<Scalar, E> {
                Ok(Scalar(v.to_string()))
            }
            fn visit_unit<E: de::Error>(self) -> Result<Scalar, E> {
                Ok(Scalar(String::new()))
            }
        }
        // `deserialize_str` hands over the text as written (`0x10`, `0o17`,
        // `1_000`, `.inf` stay text), where `deserialize_any` would pass the
        // number YAML 1.1 makes of it; the units parser then judges it.
        deserializer.deserialize_str(ScalarVisitor)
    }
}

/// The whole line description as written.
#[derive(Debug, Clone, Deserialize, Default)]
#[serde(deny_unknown_fields)]
pub struct RawLine {
    /// Title, free text.
    pub line: Option<Scalar>,
    /// The web's properties.
    pub web: Option<RawWeb>,
    /// Height of a grounded plane, a length.
    pub ground_plane: Option<Scalar>,
    /// Rollers.
    #[serde(default)]
    pub rollers: Vec<RawRoller>,
    /// Path nodes in travel order.
    #[serde(default)]
    pub path: Vec<RawNode>,
    /// Shape of the density across the web.
    pub across_profile: Option<RawAcross>,
    /// Where the web gets its charge.
    #[serde(default)]
    pub charge: Vec<RawCharge>,
    /// Places of interest.
    #[serde(default)]
    pub points: Vec<RawPoint>,
    /// Hazardous areas.
    #[serde(default)]
    pub zones: Vec<RawZone>,
    /// Names of threshold profiles to apply.
    #[serde(default)]
    pub assess: Vec<Scalar>,
    /// Field-meter (or density) readings.
    #[serde(default)]
    pub readings: Vec<RawReading>,
    /// Defaults for every reading's meter.
    pub meter: Option<RawMeter>,
    /// Static eliminators.
    #[serde(default)]
    pub eliminators: Vec<RawEliminator>,
    /// Conductors other than rollers.
    #[serde(default)]
    pub conductors: Vec<RawConductor>,
}

/// `conductors[i]`: the keys of every shape; the validator checks which
/// belong to the shape given.
#[derive(Debug, Clone, Deserialize, Default)]
#[serde(deny_unknown_fields)]
pub struct RawConductor {
    /// Identifier.
    pub id: Option<Scalar>,
    /// plate | box | cylinder | person
    pub shape: Option<Scalar>,
    /// grounded | isolated
    pub earthing: Option<Scalar>,
    /// Net charge of an isolated conductor, a charge.
    pub charge: Option<Scalar>,
    /// Lumped capacitance to ground of an isolated conductor.
    pub capacitance_to_ground: Option<Scalar>,
    /// Plate or box: one corner `[x, y, z]`.
    pub from: Option<Vec<Scalar>>,
    /// Plate or box: the opposite corner `[x, y, z]`.
    pub to: Option<Vec<Scalar>>,
    /// Plate: a corner `[x, y, z]`.
    pub corner: Option<Vec<Scalar>>,
    /// Plate: the first edge vector `[x, y, z]` (lengths).
    pub edge1: Option<Vec<Scalar>>,
    /// Plate: the second edge vector `[x, y, z]` (lengths).
    pub edge2: Option<Vec<Scalar>>,
    /// Cylinder: centre `[x, y, z]`.
    pub center: Option<Vec<Scalar>>,
    /// Cylinder: `x`, `y`, `z` or a direction `[a, b, c]`.
    pub axis: Option<RawAxis>,
    /// Cylinder: a length.
    pub radius: Option<Scalar>,
    /// Cylinder: a length along the axis.
    pub length: Option<Scalar>,
    /// Person: `[x, y]` on the floor.
    pub at: Option<Vec<Scalar>>,
    /// Person: a length (default 1.75 m).
    pub height: Option<Scalar>,
    /// Person: a length (default 0.3 m).
    pub width: Option<Scalar>,
}

/// `conductors[i].axis`: a name (`x`, `y`, `z`) or a direction `[a, b, c]`.
#[derive(Debug, Clone, PartialEq)]
pub enum RawAxis {
    /// A single value such as `z`.
    Name(Scalar),
    /// A list of values such as `[0, 0, 1]`.
    Vector(Vec<Scalar>),
}

impl<'de> Deserialize<'de> for RawAxis {
    fn deserialize<D: Deserializer<'de>>(deserializer: D) -> Result<Self, D::Error> {
        struct AxisVisitor;
        impl<'de> Visitor<'de> for AxisVisitor {
            type Value = RawAxis;
            fn expecting(&self, f: &mut fmt::Formatter) -> fmt::Result {
                f.write_str("an axis such as `z` or a direction such as [0, 0, 1]")
            }
            fn visit_str<E: de::Error>(self, v: &str) -> Result<RawAxis, E> {
                Ok(RawAxis::Name(Scalar(v.to_string())))
            }
            fn visit_i64<E: de::Error>(self, v: i64) -> Result<RawAxis, E> {
                Ok(RawAxis::Name(Scalar(v.to_string())))
            }
            fn visit_u64<E: de::Error>(self, v: u64) -> Result<RawAxis, E> {
                Ok(RawAxis::Name(Scalar(v.to_string())))
            }
            fn visit_f64<E: de::Error>(self, v: f64) -> Result<RawAxis, E> {
                Ok(RawAxis::Name(Scalar(format!("{v:?}"))))
            }
            fn visit_bool<E: de::Error>(self, v: bool) -> Result<RawAxis, E> {
                Ok(RawAxis::Name(Scalar(v.to_string())))
            }
            fn visit_seq<A: de::SeqAccess<'de>>(self, mut seq: A) -> Result<RawAxis, A::Error> {
                let mut out = Vec::new();
                while let Some(x) = seq.next_element::<Scalar>()? {
                    out.push(x);
                }
                Ok(RawAxis::Vector(out))
            }
        }
        deserializer.deserialize_any(AxisVisitor)
    }
}

/// `eliminators[i]`
#[derive(Debug, Clone, Deserialize, Default)]
#[serde(deny_unknown_fields)]
pub struct RawEliminator {
    /// Identifier.
    pub id: Option<Scalar>,
    /// powered | passive
    pub kind: Option<Scalar>,
    /// Span name or `FROM-TO`.
    pub span: Option<Scalar>,
    /// Along the span: a percentage or a length from its start.
    pub position: Option<Scalar>,
    /// Bar to web, a length.
    pub distance: Option<Scalar>,
    /// above | below
    pub side: Option<Scalar>,
    /// Fraction of the arriving charge removed, a percentage.
    pub efficiency: Option<Scalar>,
    /// Powered: density left over (offset, signed); passive: the density it
    /// cannot go below.
    pub residual: Option<Scalar>,
    /// Passive: field at the tips below which it does not ionise.
    pub onset: Option<Scalar>,
    /// Powered: ion output per metre of bar (a current per length, in µA/m).
    pub ion_output: Option<Scalar>,
}

/// `readings[i]`
#[derive(Debug, Clone, Deserialize, Default)]
#[serde(deny_unknown_fields)]
pub struct RawReading {
    /// Optional identifier.
    pub id: Option<Scalar>,
    /// Span name or `FROM-TO`.
    pub span: Option<Scalar>,
    /// Along the span: a percentage or a length from its start.
    pub position: Option<Scalar>,
    /// Offset from the centreline, a length (default 0).
    pub across: Option<Scalar>,
    /// Meter face to web, a length.
    pub distance: Option<Scalar>,
    /// above | below
    pub side: Option<Scalar>,
    /// A field reading.
    pub reading: Option<Scalar>,
    /// A voltage reading of a meter calibrated at a distance.
    pub voltage: Option<Scalar>,
    /// The distance at which a voltage-reading meter is calibrated.
    pub calibrated_at: Option<Scalar>,
    /// A density measured directly.
    pub sigma: Option<Scalar>,
    /// Instrument identifier, free text.
    pub meter: Option<Scalar>,
    /// Date of the instrument's last calibration, `YYYY-MM-DD`.
    pub calibrated_on: Option<Scalar>,
    /// Relative humidity at measurement, a percentage.
    pub relative_humidity: Option<Scalar>,
    /// Web speed at measurement.
    pub speed: Option<Scalar>,
}

/// `meter:`
#[derive(Debug, Clone, Deserialize, Default)]
#[serde(deny_unknown_fields)]
pub struct RawMeter {
    /// A percentage of the reading.
    pub accuracy: Option<Scalar>,
    /// A field.
    pub offset: Option<Scalar>,
    /// A length.
    pub distance_tolerance: Option<Scalar>,
}

/// `web:`
#[derive(Debug, Clone, Deserialize, Default)]
#[serde(deny_unknown_fields)]
pub struct RawWeb {
    /// Free text.
    pub material: Option<Scalar>,
    /// A length.
    pub width: Option<Scalar>,
    /// A length.
    pub thickness: Option<Scalar>,
    /// A number.
    pub relative_permittivity: Option<Scalar>,
    /// A resistivity.
    pub volume_resistivity: Option<Scalar>,
    /// A surface resistivity (ohms per square).
    pub surface_resistivity: Option<Scalar>,
    /// A time.
    pub relaxation_time: Option<Scalar>,
    /// A speed.
    pub speed: Option<Scalar>,
    /// A field strength.
    pub breakdown_strength: Option<Scalar>,
}

/// `rollers[i]`
#[derive(Debug, Clone, Deserialize, Default)]
#[serde(deny_unknown_fields)]
pub struct RawRoller {
    /// Identifier.
    pub id: Option<Scalar>,
    /// `[x, z]` lengths.
    pub center: Option<Vec<Scalar>>,
    /// A length.
    pub diameter: Option<Scalar>,
    /// grounded | isolated | insulating
    pub earthing: Option<Scalar>,
    /// A length along the roller's axis (default: web width + 0.2 m).
    pub length: Option<Scalar>,
}

/// `path[i]`: either `point:` (with optional `id:`) or `roller:` with `wrap:`.
#[derive(Debug, Clone, Deserialize, Default)]
#[serde(deny_unknown_fields)]
pub struct RawNode {
    /// `[x, z]` lengths.
    pub point: Option<Vec<Scalar>>,
    /// Optional id of a point node.
    pub id: Option<Scalar>,
    /// Roller id.
    pub roller: Option<Scalar>,
    /// cw | ccw
    pub wrap: Option<Scalar>,
}

/// `across_profile:`
#[derive(Debug, Clone, Deserialize, Default)]
#[serde(deny_unknown_fields)]
pub struct RawAcross {
    /// uniform | edges | tilt | table
    pub shape: Option<Scalar>,
    /// The coefficient of `edges` and `tilt`.
    pub k: Option<Scalar>,
    /// `[[y, f], ...]` for `table`.
    pub table: Option<Vec<Vec<Scalar>>>,
}

/// `charge[i]`
#[derive(Debug, Clone, Deserialize, Default)]
#[serde(deny_unknown_fields)]
pub struct RawCharge {
    /// A node id or `start`.
    pub at: Option<Scalar>,
    /// Sets the centreline density leaving the node, optionally with a
    /// tolerance (`8 uC/m^2 ± 20 %`).
    pub sigma: Option<Scalar>,
    /// Adds to the centreline density leaving the node, optionally with a
    /// tolerance (`2.5 uC/m^2 ± 0.5 uC/m^2`).
    pub adds: Option<Scalar>,
}

/// `points[i]`
#[derive(Debug, Clone, Deserialize, Default)]
#[serde(deny_unknown_fields)]
pub struct RawPoint {
    /// Identifier.
    pub id: Option<Scalar>,
    /// meter | operator | electronics | probe
    pub kind: Option<Scalar>,
    /// `[x, y, z]` lengths.
    pub at: Option<Vec<Scalar>>,
    /// Body capacitance of an operator.
    pub capacitance: Option<Scalar>,
}

/// `zones[i]`
#[derive(Debug, Clone, Deserialize, Default)]
#[serde(deny_unknown_fields)]
pub struct RawZone {
    /// Identifier.
    pub id: Option<Scalar>,
    /// Free text.
    pub name: Option<Scalar>,
    /// 0 | 1 | 2
    pub zone: Option<Scalar>,
    /// IIA | IIB | IIC
    pub gas_group: Option<Scalar>,
    /// Lowest minimum ignition energy present, an energy.
    pub mie: Option<Scalar>,
    /// The box.
    #[serde(rename = "box")]
    pub bounds: Option<RawBox>,
}

/// `zones[i].box`
#[derive(Debug, Clone, Deserialize, Default)]
#[serde(deny_unknown_fields)]
pub struct RawBox {
    /// One corner `[x, y, z]`.
    pub from: Option<Vec<Scalar>>,
    /// The opposite corner `[x, y, z]`.
    pub to: Option<Vec<Scalar>>,
}
