//! # The pipeline in one place
//!
//! `Line → Scene → ChargeProfile (readings fitted) → FieldMap → Assessment
//! → Uncertainty` (every finding's range over the inputs' tolerances).
//! [`analyse`] builds the line's [`Scene`] once and runs every stage through
//! it; [`evaluate`] runs the stages in a scene already built, for variants
//! of the line that share its geometry (the planner's placements). The
//! commands `assess` and `demo`, the planner's re-assessment and the tests
//! all go through here, so a new physical effect enters in one place: the
//! scene.

use crate::assess::{Assessment, ThresholdProfile, assess_with_conductors};
use crate::charge::ChargeProfile;
use crate::field::{FieldError, FieldMap, Scene, SolverSettings};
use crate::model::Line;
use crate::readings::{ReadingsError, ReadingsResult, invert_readings};
use crate::uncertainty::Uncertainty;

/// Checked settings of a whole analysis.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Settings {
    /// Field solver settings.
    pub solver: SolverSettings,
}

impl Settings {
    /// Settings with these solver settings.
    pub fn new(solver: SolverSettings) -> Self {
        Settings { solver }
    }
}

/// Why an analysis failed.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum PipelineError {
    /// The field could not be computed.
    #[error(transparent)]
    Field(#[from] FieldError),
    /// The meter readings could not be converted.
    #[error("converting the meter readings: {0}")]
    Readings(#[from] ReadingsError),
}

/// What the stages give for one line in one scene.
#[derive(Debug, Clone, PartialEq)]
pub struct Evaluation {
    /// The readings converted, the eliminators' states and the charge.
    pub readings: ReadingsResult,
    /// The charge along the path the rest of the pipeline uses (the
    /// readings' fit applied).
    pub charge: ChargeProfile,
    /// Field and potential at every place of interest, with per-span
    /// contributions, in `line.points` order.
    pub points: FieldMap,
    /// Findings against every rule in force, each with its range over the
    /// uncertain inputs once [`analyse`] has bounded them.
    pub assessment: Assessment,
    /// The uncertain inputs and the ranges at the places of interest
    /// (empty from [`evaluate`], which leaves every range a point).
    pub uncertainty: Uncertainty,
}

/// A line's scene and its evaluation.
#[derive(Debug)]
pub struct Analysis {
    /// The charge-independent field model, for further questions (field
    /// map, planner).
    pub scene: Scene,
    /// The stages' results.
    pub evaluation: Evaluation,
}

/// Builds the line's scene once and runs every stage through it.
pub fn analyse(
    line: &Line,
    profiles: &[ThresholdProfile],
    settings: &Settings,
) -> Result<Analysis, PipelineError> {
    let scene = Scene::new(line, settings.solver)?;
    let mut evaluation = evaluate(&scene, line, profiles)?;
    evaluation.uncertainty = crate::uncertainty::bound(
        &scene,
        line,
        profiles,
        &evaluation.readings,
        &evaluation.charge,
        &evaluation.points,
        &mut evaluation.assessment,
    )?;
    Ok(Analysis { scene, evaluation })
}

/// Runs the stages for `line` in `scene` (built from `line` or from a line
/// with the same geometry).
pub fn evaluate(
    scene: &Scene,
    line: &Line,
    profiles: &[ThresholdProfile],
) -> Result<Evaluation, PipelineError> {
    let readings = invert_readings(line, scene)?;
    let charge = readings.charge.clone();
    let web = scene.web(&charge);
    let at: Vec<[f64; 3]> = line.points.iter().map(|p| p.at).collect();
    let points = web.solve(&at, true)?;
    // The conductors' results enter the assessment only when the scene
    // solves conductors; otherwise it keeps its analytic fallbacks.
    let conductors = match scene.conductors() {
        Some(_) => Some(web.conductor_results()?),
        None => None,
    };
    let assessment = assess_with_conductors(
        line,
        &charge,
        &web,
        &points,
        conductors.as_deref(),
        profiles,
    )?
    // The readings' own checks: every reading reproduced by the fitted
    // charge, every passive device's onset.
    .with_findings(
        crate::assess::readings_fit::reading_fit_findings(line, &readings)
            .into_iter()
            .chain(crate::assess::eliminators::onset_findings(
                line,
                &readings.eliminators,
            ))
            .collect(),
    );
    Ok(Evaluation {
        readings,
        charge,
        points,
        assessment,
        uncertainty: Uncertainty::default(),
    })
}
