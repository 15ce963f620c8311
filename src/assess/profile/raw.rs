//! Serde mirror of a threshold profile file (reading stage of the
//! assessment, step one: `YAML text → RawProfile`). Unknown keys are refused
//! and every value is kept as the text written; `validate.rs` checks them.

use crate::model::raw::Scalar;
use serde::Deserialize;
use serde::de;
use std::fmt;

/// A scalar or a list of scalars (`zone: 1` or `zone: [0, 1]`).
#[derive(Debug, Clone)]
pub(super) enum RawList {
    One(Scalar),
    Many(Vec<Scalar>),
}

impl<'de> Deserialize<'de> for RawList {
    /// A list is read element by element as [`Scalar`]s (their text as
    /// written); a single value as a scalar. (Not `#[serde(untagged)]`: its
    /// buffering would hand numbers, not their text, to the scalar.)
    fn deserialize<D: de::Deserializer<'de>>(deserializer: D) -> Result<Self, D::Error> {
        struct ListVisitor;
        impl<'de> de::Visitor<'de> for ListVisitor {
            type Value = RawList;
            fn expecting(&self, f: &mut fmt::Formatter) -> fmt::Result {
                f.write_str("a value or a list of values")
            }
            fn visit_seq<A: de::SeqAccess<'de>>(self, mut seq: A) -> Result<RawList, A::Error> {
                let mut out = Vec::new();
                while let Some(x) = seq.next_element::<Scalar>()? {
                    out.push(x);
                }
                Ok(RawList::Many(out))
            }
            fn visit_str<E: de::Error>(self, v: &str) -> Result<RawList, E> {
                Ok(RawList::One(Scalar(v.to_string())))
            }
            fn visit_i64<E: de::Error>(self, v: i64) -> Result<RawList, E> {
                Ok(RawList::One(Scalar(v.to_string())))
            }
            fn visit_u64<E: de::Error>(self, v: u64) -> Result<RawList, E> {
                Ok(RawList::One(Scalar(v.to_string())))
            }
            fn visit_f64<E: de::Error>(self, v: f64) -> Result<RawList, E> {
                Ok(RawList::One(Scalar(format!("{v:?}"))))
            }
            fn visit_bool<E: de::Error>(self, v: bool) -> Result<RawList, E> {
                Ok(RawList::One(Scalar(v.to_string())))
            }
        }
        deserializer.deserialize_any(ListVisitor)
    }
}

impl RawList {
    pub(super) fn items(&self) -> Vec<&Scalar> {
        match self {
            RawList::One(s) => vec![s],
            RawList::Many(v) => v.iter().collect(),
        }
    }
}

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub(super) struct RawProfile {
    pub(super) name: Option<Scalar>,
    pub(super) title: Option<Scalar>,
    pub(super) description: Option<Scalar>,
    pub(super) rules: Option<Vec<RawRule>>,
}

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub(super) struct RawRule {
    pub(super) id: Option<Scalar>,
    pub(super) check: Option<Scalar>,
    pub(super) what: Option<Scalar>,
    pub(super) applies: Option<RawApplies>,
    pub(super) warn: Option<Scalar>,
    pub(super) fail: Option<Scalar>,
    pub(super) near: Option<RawSeparation>,
    pub(super) far: Option<RawSeparation>,
    pub(super) source: Option<Scalar>,
    pub(super) confidence: Option<Scalar>,
    pub(super) note: Option<Scalar>,
}

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub(super) struct RawApplies {
    pub(super) spans: Option<Scalar>,
    pub(super) points: Option<Scalar>,
    pub(super) rollers: Option<Scalar>,
    pub(super) conductors: Option<Scalar>,
    pub(super) in_zone: Option<Scalar>,
    pub(super) zone: Option<RawList>,
    pub(super) gas_group: Option<RawList>,
}

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub(super) struct RawSeparation {
    pub(super) distance: Option<Scalar>,
    pub(super) voltage: Option<Scalar>,
}
