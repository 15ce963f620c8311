//! Serde mirror of a threshold profile file (reading stage of the
//! assessment, step one: `YAML text → RawProfile`). Unknown keys are refused
//! and every value is kept as the text written; `validate.rs` checks them.

use crate::model::raw::Scalar;
use serde::Deserialize;

/// A scalar or a list of scalars (`zone: 1` or `zone: [0, 1]`).
#[derive(Debug, Clone, Deserialize)]
#[serde(untagged)]
pub(super) enum RawList {
    One(Scalar),
    Many(Vec<Scalar>),
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
