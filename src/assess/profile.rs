//! TEMPORARY STUB (replaced by the real profile reader)
#![allow(missing_docs)]
use crate::units::Dim;
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Confidence {
    Confirmed,
    Derived,
    CommonPractice,
    FromMemory,
}
impl Confidence {
    pub fn text(self) -> &'static str {
        match self {
            Confidence::Confirmed => "confirmed",
            Confidence::Derived => "derived",
            Confidence::CommonPractice => "common practice",
            Confidence::FromMemory => "from memory — verify against the current edition",
        }
    }
    pub fn needs_verification(self) -> bool {
        self == Confidence::FromMemory
    }
}
#[derive(Debug, Clone, PartialEq)]
pub struct Rule {
    pub id: String,
    pub what: String,
    pub warn: Option<f64>,
    pub fail: Option<f64>,
    pub dim: Dim,
    pub source: String,
    pub confidence: Confidence,
    pub note: Option<String>,
}
#[derive(Debug, Clone, PartialEq)]
pub struct ThresholdProfile {
    pub name: String,
    pub title: String,
    pub description: String,
    pub rules: Vec<Rule>,
    pub origin: String,
    pub text: String,
}
pub fn load_profile(_name_or_path: &str) -> anyhow::Result<ThresholdProfile> {
    anyhow::bail!("stub")
}
pub fn shipped() -> Vec<(&'static str, &'static str)> {
    vec![]
}
