//! # Sweeps: how far a line is from its limits as one input varies
//!
//! One numeric input of the line description (a YAML path, see [`path`])
//! takes N evenly spaced values from A to B ([`vary`]); at each the line is
//! validated and assessed exactly as `assess` assesses it — the same
//! profiles, solver settings and conductors, through
//! [`crate::pipeline::evaluate`]. For each profile in force the sweep keeps
//! the worst margin at each value,
//!
//! $$ m_p(x) = \max_{f \in F_p(x)} \frac{v_f}{L_f}, $$
//!
//! with F_p(x) the profile's findings at x, v_f a finding's value and L_f
//! its governing limit (the failure limit, else the warning limit), and the
//! profile's verdict there: failing when any of its findings fails.
//!
//! | symbol | meaning | unit |
//! | --- | --- | --- |
//! | x | the varied value | the user's unit (SI beside it) |
//! | m_p | worst margin of profile p | 1 (above 1: a limit exceeded) |
//! | v_f, L_f | a finding's value and governing limit | the rule's unit |
//!
//! ## Crossings
//! Where a profile's verdict differs between neighbouring values x_i and
//! x_{i+1}, the crossing is refined by bisection: the line is assessed at
//! the midpoint of the bracket and the half whose ends still differ is
//! kept, until the bracket is narrower than [`CROSSING_TOLERANCE`] of the
//! sweep's range |B − A| (about 20 halvings; at most [`MAX_HALVINGS`]).
//! The crossing reported is the middle of the last bracket, within half
//! its width of where the verdict changes (bisection of a function with
//! one change of sign in the bracket; with several changes inside one step
//! it finds one of them).
//!
//! ## One scene or one per value
//! The field model's charge-independent part, the [`Scene`], depends on
//! the web path, the rollers, the conductors, the ground plane and the web
//! width (what [`Scene::new`] reads). [`scene_change`] compares those of
//! two lines: when the varied input leaves them alike (a speed, a density,
//! a reading, a place of interest) one scene serves every value, else a
//! scene is built for each line whose geometry differs from the one before.
//!
//! The sweep returns numbers and typed notes; the words are the writers'
//! (`report::sweep_text`, `report::sweep_csv`, `report::plot::sweep`).

pub mod path;
pub mod vary;

use crate::assess::{Assessment, ThresholdProfile, Verdict};
use crate::field::Scene;
use crate::model::{Issue, Line};
use crate::pipeline::{PipelineError, Settings};
use crate::progress::{Task, Tracker};
use crate::units::Dim;
use std::sync::Arc;
pub use vary::{Varied, VaryError, VarySpec, parse_vary};

/// A crossing is refined until its bracket is narrower than this fraction
/// of the sweep's range |B − A| [1].
pub const CROSSING_TOLERANCE: f64 = 1e-6;

/// Most halvings of one crossing's bracket (20 halve a step of the widest
/// sweep, 2 values, to below 1e-6 of its range; the cap only guards
/// against a bracket that cannot shrink in floating point).
pub const MAX_HALVINGS: usize = 40;

/// What the scene of a line is built from, as [`Scene::new`] reads it.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SceneInput {
    /// The web width (the spans' extent across the machine).
    WebWidth,
    /// The ground plane (every span's image).
    GroundPlane,
    /// The rollers (position, size, earthing: the conductors' solve).
    Rollers,
    /// The conductors besides the rollers.
    Conductors,
    /// The web path (the spans' frames and the wraps).
    Path,
}

/// The first input of the scene in which `a` and `b` differ, or `None`
/// when one scene serves both.
pub fn scene_change(a: &Line, b: &Line) -> Option<SceneInput> {
    if a.web.width != b.web.width {
        Some(SceneInput::WebWidth)
    } else if a.ground_plane != b.ground_plane {
        Some(SceneInput::GroundPlane)
    } else if a.rollers != b.rollers {
        Some(SceneInput::Rollers)
    } else if a.conductors != b.conductors {
        Some(SceneInput::Conductors)
    } else if a.path != b.path {
        Some(SceneInput::Path)
    } else {
        None
    }
}

/// How the sweep used scenes.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SceneUse {
    /// One scene for every value: the geometry does not depend on the input.
    Reused,
    /// A scene per value: the input changes this part of the scene.
    Rebuilt(SceneInput),
}

/// One value of the sweep.
#[derive(Debug, Clone, PartialEq)]
pub struct SweepRow {
    /// The value, in the user's unit.
    pub value: f64,
    /// The value in SI [SI unit of [`Sweep::dim`]].
    pub si: f64,
    /// Per profile (in [`Sweep::profiles`] order): the worst margin [1],
    /// `None` when the profile has no finding at this value.
    pub margins: Vec<Option<f64>>,
    /// Per profile: whether any of its findings fails.
    pub fails: Vec<bool>,
    /// Whether any finding of the assessment fails (a limit exceeded).
    pub exceeded: bool,
}

/// A change of a profile's verdict between two neighbouring values.
#[derive(Debug, Clone, PartialEq)]
pub struct Crossing {
    /// Index into [`Sweep::profiles`].
    pub profile: usize,
    /// Where the verdict changes, in the user's unit (the middle of
    /// `bracket`).
    pub value: f64,
    /// The same in SI.
    pub si: f64,
    /// The last bracket `[low, high]` (low < high), user's unit: the
    /// verdict at each end is the one below and above.
    pub bracket: [f64; 2],
    /// Whether the profile fails below the crossing (and passes above).
    pub fails_below: bool,
}

/// A warning of the line at some value that the line as written does not
/// have.
#[derive(Debug, Clone, PartialEq)]
pub struct SweepWarning {
    /// The first value (user's unit) at which it appears.
    pub value: f64,
    /// The validator's warning.
    pub issue: Issue,
}

/// A whole sweep, numbers only.
#[derive(Debug, Clone, PartialEq)]
pub struct Sweep {
    /// The line's title.
    pub title: String,
    /// The path varied.
    pub path: String,
    /// The user's unit (empty for a plain number).
    pub unit: String,
    /// The dimension of the value.
    pub dim: Dim,
    /// The range `[A, B]` as asked, user's unit.
    pub range: [f64; 2],
    /// The profiles in force, then any other group of findings (the
    /// readings' fit, the eliminators' checks) met at some value.
    pub profiles: Vec<Arc<str>>,
    /// One row per value, in sweep order.
    pub rows: Vec<SweepRow>,
    /// Crossings, by profile, then by value.
    pub crossings: Vec<Crossing>,
    /// One scene or one per value.
    pub scene: SceneUse,
    /// Scenes built.
    pub scenes_built: usize,
    /// Assessments made (values and bisection midpoints).
    pub assessments: usize,
    /// Warnings that appear at some values only.
    pub warnings: Vec<SweepWarning>,
}

impl Sweep {
    /// Whether a limit is exceeded at any value swept.
    pub fn exceeded(&self) -> bool {
        self.rows.iter().any(|r| r.exceeded)
    }

    /// The SI unit of the value (empty for a plain number or a fraction).
    pub fn si_unit(&self) -> &'static str {
        self.dim.si_unit()
    }
}

/// Why a sweep stopped.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum SweepError {
    /// The input or a line at some value.
    #[error(transparent)]
    Vary(#[from] VaryError),
    /// The analysis failed at a value.
    #[error("at {path} = {value}: {source}")]
    Pipeline {
        /// The path.
        path: String,
        /// The value with its unit.
        value: String,
        /// What failed.
        source: Box<PipelineError>,
    },
}

/// A verdict that counts as failing (every verdict above a warning).
fn failing(v: Verdict) -> bool {
    v > Verdict::Warn
}

/// Worst margin and failing state of each profile in `names` in `a`.
fn per_profile(a: &Assessment, names: &[Arc<str>]) -> (Vec<Option<f64>>, Vec<bool>) {
    names
        .iter()
        .map(|n| {
            let mut worst: Option<f64> = None;
            let mut fails = false;
            for f in a.findings.iter().filter(|f| f.profile == *n) {
                if !f.margin.is_nan() {
                    worst = Some(worst.map_or(f.margin, |w: f64| w.max(f.margin)));
                }
                fails |= failing(f.verdict);
            }
            (worst, fails)
        })
        .unzip()
}

/// The scene of the last line assessed, rebuilt when the geometry changes.
struct Scenes {
    line: Line,
    scene: Scene,
    built: usize,
}

impl Scenes {
    fn new(line: &Line, settings: &Settings) -> Result<Scenes, PipelineError> {
        Ok(Scenes {
            line: line.clone(),
            scene: Scene::new(line, settings.solver)?,
            built: 1,
        })
    }

    /// A scene for `line`: the last one when the geometry is alike.
    fn get(&mut self, line: &Line, settings: &Settings) -> Result<&Scene, PipelineError> {
        if scene_change(&self.line, line).is_some() {
            self.scene = Scene::new(line, settings.solver)?;
            self.line = line.clone();
            self.built += 1;
        }
        Ok(&self.scene)
    }
}

/// The evaluation of one value: validated line, scene, assessment.
struct Assessor<'a> {
    varied: &'a Varied,
    profiles: &'a [ThresholdProfile],
    settings: &'a Settings,
    scenes: Option<Scenes>,
    count: usize,
}

impl Assessor<'_> {
    fn line(&self, x: f64) -> Result<Line, SweepError> {
        Ok(self.varied.line_at(x)?)
    }

    fn assess(&mut self, line: &Line, x: f64) -> Result<Assessment, SweepError> {
        let at = |source: PipelineError| SweepError::Pipeline {
            path: self.varied.path(),
            value: value_text(x, self.varied.unit()),
            source: Box::new(source),
        };
        let scene = match &mut self.scenes {
            Some(s) => s.get(line, self.settings).map_err(at)?,
            None => {
                let s = self
                    .scenes
                    .insert(Scenes::new(line, self.settings).map_err(at)?);
                &s.scene
            }
        };
        self.count += 1;
        let e = crate::pipeline::evaluate(scene, line, self.profiles).map_err(at)?;
        Ok(e.assessment)
    }

    fn scenes_built(&self) -> usize {
        self.scenes.as_ref().map_or(0, |s| s.built)
    }
}

/// `x` with its unit, for messages.
fn value_text(x: f64, unit: &str) -> String {
    if unit.is_empty() {
        format!("{x}")
    } else {
        format!("{x} {unit}")
    }
}

/// Sweeps `varied` over its values: every line validated first, then each
/// assessed with `profiles` (the line's `assess:` list with the air limit,
/// as `assess` loads them) and `settings`, then every change of a
/// profile's verdict refined by bisection.
pub fn sweep(
    varied: &Varied,
    profiles: &[ThresholdProfile],
    settings: &Settings,
) -> Result<Sweep, SweepError> {
    let values = varied.values();
    // Every value's line is valid before any solve.
    let lines = values
        .iter()
        .map(|&x| varied.line_at(x))
        .collect::<Result<Vec<_>, _>>()?;
    let scene = lines
        .iter()
        .skip(1)
        .find_map(|l| scene_change(&lines[0], l))
        .map_or(SceneUse::Reused, SceneUse::Rebuilt);
    let mut names: Vec<Arc<str>> = profiles.iter().map(|p| p.name.clone()).collect();
    let mut assessor = Assessor {
        varied,
        profiles,
        settings,
        scenes: None,
        count: 0,
    };

    let mut assessments = Vec::with_capacity(values.len());
    {
        let mut progress = None;
        for (k, (line, &x)) in lines.iter().zip(&values).enumerate() {
            let rebuild = assessor
                .scenes
                .as_ref()
                .is_none_or(|s| scene_change(&s.line, line).is_some());
            if rebuild {
                // The scene announces its own work (the conductors'
                // factorisation); the sweep's bar comes back after it.
                progress = None;
            }
            let a = assessor.assess(line, x)?;
            let t = progress.get_or_insert_with(|| {
                let t = Tracker::new(Task::Sweep, values.len() as u64);
                t.advance(k as u64);
                t
            });
            t.advance(1);
            for f in &a.findings {
                if !names.contains(&f.profile) {
                    names.push(f.profile.clone());
                }
            }
            assessments.push(a);
        }
    }

    let mut rows = Vec::with_capacity(values.len());
    for (a, &x) in assessments.iter().zip(&values) {
        let (margins, fails) = per_profile(a, &names);
        rows.push(SweepRow {
            value: x,
            si: varied.si(x)?,
            margins,
            fails,
            exceeded: failing(a.verdict),
        });
    }

    let written = varied.line_as_written()?;
    let mut warnings: Vec<SweepWarning> = Vec::new();
    for (line, &x) in lines.iter().zip(&values) {
        for w in &line.warnings {
            if !written.warnings.contains(w) && !warnings.iter().any(|s| s.issue == *w) {
                warnings.push(SweepWarning {
                    value: x,
                    issue: w.clone(),
                });
            }
        }
    }

    let crossings = crossings(&mut assessor, &rows, &names)?;
    Ok(Sweep {
        title: lines[0].title.clone(),
        path: varied.path(),
        unit: varied.unit().to_string(),
        dim: varied.dim(),
        range: varied.range(),
        profiles: names,
        rows,
        crossings,
        scene,
        scenes_built: assessor.scenes_built(),
        assessments: assessor.count,
        warnings,
    })
}

/// Every change of a profile's verdict between neighbouring rows, refined
/// by bisection (midpoints assessed once for every profile).
fn crossings(
    assessor: &mut Assessor<'_>,
    rows: &[SweepRow],
    names: &[Arc<str>],
) -> Result<Vec<Crossing>, SweepError> {
    let [a, b] = assessor.varied.range();
    let tolerance = CROSSING_TOLERANCE * (b - a).abs();
    let brackets: Vec<(usize, usize)> = (0..names.len())
        .flat_map(|p| {
            rows.windows(2)
                .enumerate()
                .filter(move |(_, w)| w[0].fails[p] != w[1].fails[p])
                .map(move |(i, _)| (p, i))
        })
        .collect();
    // A step is 1/(N − 1) of the range: log2(1/((N − 1)·tolerance)) halvings.
    let halvings = (1.0 / ((rows.len().max(2) - 1) as f64 * CROSSING_TOLERANCE))
        .log2()
        .ceil()
        .max(1.0) as u64;
    let progress = (!brackets.is_empty())
        .then(|| Tracker::new(Task::Crossings, brackets.len() as u64 * halvings));
    // Midpoints already assessed: (value, failing per profile).
    let mut memo: Vec<(f64, Vec<bool>)> = Vec::new();
    let mut out = Vec::with_capacity(brackets.len());
    for (p, i) in brackets {
        let (r0, r1) = (&rows[i], &rows[i + 1]);
        // Ordered by value: `lo` below, `hi` above.
        let ((mut lo, fails_lo), (mut hi, _)) = if r0.value < r1.value {
            ((r0.value, r0.fails[p]), (r1.value, r1.fails[p]))
        } else {
            ((r1.value, r1.fails[p]), (r0.value, r0.fails[p]))
        };
        let mut n = 0;
        while hi - lo > tolerance && n < MAX_HALVINGS {
            let mid = 0.5 * (lo + hi);
            if mid <= lo || mid >= hi {
                break;
            }
            let fails = match memo.iter().find(|(x, _)| *x == mid) {
                Some((_, f)) => f[p],
                None => {
                    let line = assessor.line(mid)?;
                    let a = assessor.assess(&line, mid)?;
                    let f = per_profile(&a, names).1;
                    let here = f[p];
                    memo.push((mid, f));
                    here
                }
            };
            if fails == fails_lo {
                lo = mid;
            } else {
                hi = mid;
            }
            n += 1;
            if let Some(t) = &progress {
                t.advance(1);
            }
        }
        let value = 0.5 * (lo + hi);
        out.push(Crossing {
            profile: p,
            value,
            si: assessor.varied.si(value)?,
            bracket: [lo, hi],
            fails_below: fails_lo,
        });
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::parse_line;

    const LINE: &str = r#"
line: Scene test line
web:
  width: 1.0 m
  thickness: 50 um
  relative_permittivity: 3
  relaxation_time: 100 s
  speed: 1 m/s
ground_plane: 0 m
rollers:
  - {id: A, center: [1 m, 1 m], diameter: 100 mm, earthing: grounded}
path:
  - point: [0 m, 1.05 m]
  - {roller: A, wrap: cw}
  - point: [2 m, 0.5 m]
charge:
  - at: start
    sigma: 5 uC/m^2
points:
  - {id: M, kind: meter, at: [0.5 m, 0 m, 1.2 m]}
readings:
  - {span: S1, position: 50 %, distance: 25 mm, side: above, reading: 40 kV/m}
eliminators:
  - {id: E1, kind: powered, span: S2, position: 50 %, distance: 40 mm, side: above}
"#;

    fn change(spec: &str, x: f64) -> Option<SceneInput> {
        let v = Varied::new(LINE, parse_vary(spec, None).unwrap(), 2).unwrap();
        let base = parse_line(LINE).unwrap();
        scene_change(&base, &v.line_at(x).unwrap())
    }

    #[test]
    fn inputs_that_leave_the_geometry_share_one_scene() {
        assert_eq!(change("web.speed=1..2 m/s", 2.0), None);
        assert_eq!(change("charge[0].sigma=1..2 uC/m^2", 2.0), None);
        assert_eq!(change("web.relaxation_time=1..2 s", 2.0), None);
        assert_eq!(change("readings[0].distance=20..30 mm", 30.0), None);
        assert_eq!(change("readings[0].reading=20..30 kV/m", 30.0), None);
        assert_eq!(change("eliminators[0].distance=20..30 mm", 30.0), None);
        // The scene reads no place of interest: the field there is asked of it.
        assert_eq!(change("points[0].at[2]=1.1..1.3 m", 1.3), None);
        // The same value written otherwise is the same line.
        assert_eq!(change("web.width=1..2 m", 1.0), None);
    }

    #[test]
    fn inputs_that_move_the_geometry_rebuild_the_scene() {
        assert_eq!(change("web.width=1..2 m", 1.5), Some(SceneInput::WebWidth));
        assert_eq!(
            change("ground_plane=0..0.2 m", 0.1),
            Some(SceneInput::GroundPlane)
        );
        assert_eq!(
            change("rollers[0].diameter=100..150 mm", 150.0),
            Some(SceneInput::Rollers)
        );
        assert_eq!(
            change("path[0].point[1]=1.05..1.2 m", 1.2),
            Some(SceneInput::Path)
        );
    }

    /// The decision agrees with what the scene is built from: lines the
    /// function calls alike give scenes with the same field at a point.
    #[test]
    fn alike_lines_give_the_same_field_in_their_own_scenes() {
        let settings = crate::field::SolverSettings::default();
        let base = parse_line(LINE).unwrap();
        let v = Varied::new(LINE, parse_vary("web.speed=1..3 m/s", None).unwrap(), 2).unwrap();
        let other = v.line_at(3.0).unwrap();
        assert_eq!(scene_change(&base, &other), None);
        let charge = crate::readings::invert_readings(&base, &Scene::new(&base, settings).unwrap())
            .unwrap()
            .charge;
        let at = [[0.5, 0.0, 1.2]];
        let e1 = Scene::new(&base, settings)
            .unwrap()
            .web(&charge)
            .solve(&at, false)
            .unwrap();
        let e2 = Scene::new(&other, settings)
            .unwrap()
            .web(&charge)
            .solve(&at, false)
            .unwrap();
        assert_eq!(e1.points[0].e, e2.points[0].e);
    }

    #[test]
    fn per_profile_takes_the_worst_margin_and_any_failure() {
        let base = parse_line(LINE).unwrap();
        let profiles = crate::assess::load_profiles(&["ex-zone-2".to_string()], &[], "t").unwrap();
        let a = crate::pipeline::analyse(&base, &profiles, &Settings::default())
            .unwrap()
            .evaluation
            .assessment;
        let names: Vec<Arc<str>> = profiles.iter().map(|p| p.name.clone()).collect();
        let (m, f) = per_profile(&a, &names);
        for (k, n) in names.iter().enumerate() {
            let of: Vec<_> = a.findings.iter().filter(|x| x.profile == *n).collect();
            let worst = of
                .iter()
                .map(|x| x.margin)
                .fold(f64::NEG_INFINITY, f64::max);
            assert_eq!(m[k], (!of.is_empty()).then_some(worst), "{n}");
            assert_eq!(f[k], of.iter().any(|x| x.verdict > Verdict::Warn), "{n}");
        }
    }
}
