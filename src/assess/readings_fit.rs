//! # Built-in check that the fitted charge reproduces the meter readings
//!
//! Applied whenever the line has readings: for every reading, the residual
//! r − r̂ between the reading and what the final charge profile gives at
//! the meter (n̂·E at its face, or the density there for a density
//! reading; see `readings`) against the reading's tolerance
//! u = a·|r| + e0 (the meter's accuracy a and zero offset e0, or ε0·e0 for
//! a density reading):
//!
//! $$ \text{value} = |r - \hat r| / u, \qquad \text{fail at } 1. $$
//!
//! A fit that does not reproduce a reading within its tolerance is an
//! error: the charge the assessment uses is then not the charge the meters
//! saw (a reading in a passive device's onset gap, readings that disagree
//! by more than their tolerances, a geometry that misses something).
//!
//! | symbol | meaning | unit |
//! | --- | --- | --- |
//! | r, r̂ | reading, and what the fitted charge gives there | V/m or C/m² |
//! | u | tolerance of the reading | same |
//!
//! ## Reference
//! Weighted least squares and residuals: Å. Björck, *Numerical Methods for
//! Least Squares Problems* (SIAM, 1996), ch. 1; the tolerance is the
//! meter's stated accuracy (the line's `meter:`).

use super::{Assessment, Confidence, Finding, FindingNote, Hazard, Subject, Verdict};
use crate::model::Line;
use crate::readings::ReadingsResult;
use std::sync::{Arc, LazyLock};

/// Name under which these findings are listed.
pub const PROFILE: &str = "readings";

static PROFILE_NAME: LazyLock<Arc<str>> = LazyLock::new(|| PROFILE.into());
static RULE: LazyLock<Arc<str>> = LazyLock::new(|| "reproduced".into());
static CHECK: LazyLock<Arc<str>> = LazyLock::new(|| {
    "the charge fitted to the meter readings gives each reading back within the meter's tolerance"
        .into()
});
static SOURCE: LazyLock<Arc<str>> = LazyLock::new(|| {
    "the meter's stated accuracy (line `meter:`); weighted least squares, Å. Björck 1996".into()
});

/// One finding per reading: value = |r − r̂|/u, failing at 1 (also when
/// the residual is not a number).
pub fn reading_fit_findings(line: &Line, r: &ReadingsResult) -> Vec<Finding> {
    r.readings
        .iter()
        .enumerate()
        .filter_map(|(i, x)| {
            let span = line.readings.get(i)?.span;
            let value = if x.uncertainty > 0.0 {
                x.residual.abs() / x.uncertainty
            } else if x.residual == 0.0 {
                0.0
            } else {
                f64::INFINITY
            };
            let verdict = if x.reproduced() {
                Verdict::Pass
            } else {
                Verdict::Fail
            };
            Some(Finding {
                profile: PROFILE_NAME.clone(),
                rule: RULE.clone(),
                check: CHECK.clone(),
                hazard: Hazard::Equipment,
                subject: Subject::Span(span),
                value,
                meter: None,
                ratio: Some("|r − r̂|/u"),
                per_inch: false,
                dim: crate::units::Dim::Number,
                limit: 1.0,
                warn: None,
                fail: Some(1.0),
                margin: value,
                verdict,
                bounds: super::Bounds {
                    basis: super::BoundBasis::ReadingsCheck,
                    ..super::Bounds::exact(value)
                },
                source: SOURCE.clone(),
                confidence: Confidence::Derived,
                notes: vec![FindingNote::ReadingFit {
                    reading: i,
                    residual: x.residual,
                    tolerance: x.uncertainty,
                    density: x.field.is_none(),
                }],
                contributions: Vec::new(),
            })
        })
        .collect()
}

impl Assessment {
    /// The assessment with `extra` findings added, sorted and judged as
    /// [`super::assess_with_conductors`] sorts and judges its own.
    pub fn with_findings(mut self, extra: Vec<Finding>) -> Assessment {
        self.findings.extend(extra);
        self.findings.sort_by(|a, b| {
            b.verdict
                .cmp(&a.verdict)
                .then(a.hazard.cmp(&b.hazard))
                .then(b.margin.total_cmp(&a.margin))
        });
        self.verdict = self
            .findings
            .iter()
            .map(|f| f.verdict)
            .max()
            .unwrap_or(Verdict::Pass);
        self
    }
}
