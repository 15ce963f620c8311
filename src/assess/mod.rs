//! # Assessment against threshold profiles
//!
//! Fourth stage of the pipeline: `(Line, ChargeProfile, FieldMap) →
//! Assessment`. Each rule of each threshold profile in force is applied to
//! the subjects it concerns (spans, points of a kind, rollers, zones) and
//! gives a [`Finding`]: the value, the limit, the margin (value ÷ limit), a
//! verdict, and the published source of the limit with its confidence.

pub mod profile;

pub use profile::{Confidence, ThresholdProfile};

use crate::field::SpanContribution;
use crate::units::Dim;
use std::fmt;

/// Outcome of one rule for one subject; ordered pass < warn < fail.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum Verdict {
    /// Below every limit.
    Pass,
    /// At or above the warning limit, below the failure limit.
    Warn,
    /// At or above the failure limit.
    Fail,
}

impl Verdict {
    /// `pass`, `warn` or `fail`.
    pub fn text(self) -> &'static str {
        match self {
            Verdict::Pass => "pass",
            Verdict::Warn => "warn",
            Verdict::Fail => "fail",
        }
    }
}

impl fmt::Display for Verdict {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.text())
    }
}

/// What a finding is about.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SubjectKind {
    /// A span of the web.
    Span,
    /// A place of interest.
    Point,
    /// A roller.
    Roller,
    /// The web as a whole (material properties).
    Web,
}

/// One rule applied to one subject.
#[derive(Debug, Clone, PartialEq)]
pub struct Finding {
    /// Name of the profile the rule belongs to.
    pub profile: String,
    /// Rule id.
    pub rule: String,
    /// What the rule checks, in words.
    pub check: String,
    /// What kind of subject.
    pub subject_kind: SubjectKind,
    /// The subject's label (`S6 (R5-R6)`, `OP1`, `R6`).
    pub subject: String,
    /// The value found, SI [unit of `dim`].
    pub value: f64,
    /// Dimension of value and limits, for formatting.
    pub dim: Dim,
    /// The governing limit: the failure limit if the rule has one, else the
    /// warning limit, SI.
    pub limit: f64,
    /// Warning limit, SI.
    pub warn: Option<f64>,
    /// Failure limit, SI.
    pub fail: Option<f64>,
    /// value ÷ limit [1]: above 1 the governing limit is exceeded.
    pub margin: f64,
    /// The verdict.
    pub verdict: Verdict,
    /// Where the limit comes from.
    pub source: String,
    /// How sure the source is.
    pub confidence: Confidence,
    /// Context in words (zone, distance, assumption used).
    pub note: String,
    /// For point findings: each span's share of the field and potential
    /// there, largest |E| first.
    pub contributions: Vec<SpanContribution>,
}

/// All findings of an assessment, worst first.
#[derive(Debug, Clone, PartialEq)]
pub struct Assessment {
    /// Findings sorted by verdict (fail first), then by margin (largest first).
    pub findings: Vec<Finding>,
    /// The worst verdict.
    pub verdict: Verdict,
    /// Assumptions the rules used (e.g. the default body capacitance).
    pub assumptions: Vec<String>,
}
/// STUB
pub fn assess(
    _line: &crate::model::Line,
    _charge: &crate::charge::ChargeProfile,
    _model: &crate::field::FieldModel,
    _points: &crate::field::FieldMap,
    _profiles: &[ThresholdProfile],
) -> Result<Assessment, crate::field::FieldError> {
    Ok(Assessment {
        findings: vec![],
        verdict: Verdict::Pass,
        assumptions: vec![],
    })
}
/// STUB
pub fn with_air_limit(p: Vec<ThresholdProfile>) -> Vec<ThresholdProfile> {
    p
}
