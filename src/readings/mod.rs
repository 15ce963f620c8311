//! # Meter readings to surface charge density
//!
//! Between the model and the field stages: `(Line, readings) → ChargeProfile`.
//! A field meter held at distance d from a span reads the component of the
//! field along the span's normal, which depends on the distance, the web's
//! width, the other spans and the ground plane — not only on the density
//! under the meter. Since the field is linear in the densities,
//!
//! $$ r_m = \sum_k A_k\, G_{km}, \qquad G_{km} = \hat n_m\cdot\mathbf E_k(\mathbf r_m), $$
//!
//! where A_k is the starting density of charge segment k and G_km the field
//! that segment k with A_k = 1 C/m² (and its relaxation and across-web
//! shape) produces at meter m along the meter's normal n̂_m (the unit vector
//! from the web to the meter: a positively charged web reads positive). A
//! segment holding readings takes its A from them, overriding the `charge`
//! entry that opens it; the densities downstream follow by relaxation and
//! the entries (`adds:` carries the fitted density on), so every A_k is an
//! affine function of the unknowns x_j and so is every reading:
//! r = b + M x. The unknowns are found together by weighted linear least
//! squares, each reading weighted by its uncertainty
//! u_m = a·|r_m| + e0 (meter accuracy a, zero offset e0):
//!
//! $$ \hat x = (M^T W M)^{-1} M^T W (r - b), \qquad W = \mathrm{diag}(u_m^{-2}). $$
//!
//! Uncertainty: x̂ is linear in the readings, x̂ = P (r − b), so a box of
//! reading errors |δr_m| ≤ u_m gives the exact bounds |δx_j| ≤ Σ_m |P_jm| u_m.
//! The distance tolerance enters through P and b: the fit is solved again
//! with the meters at every combination of ± their tolerance (the field
//! falls monotonically with distance, so the extremes lie at the corners),
//! and the bounds are the extremes over those corners of x̂ ± Σ|P|u. The naive infinite-sheet values
//! σ = 2ε0·E (isolated sheet) and σ = ε0·E (all field on one side, Gauss's
//! law) are shown beside the result.
//!
//! ## Passive devices: the self-consistent fit
//!
//! A passive device (tinsel, brush) leaves, for the centreline density σ
//! arriving,
//!
//! $$ σ' = \operatorname{sign}σ\,\min\big(|σ|,\ \max(|σ|(1-η),\ σ_{res})\big) $$
//!
//! when the field at its tips, |E_tip|, reaches its onset E_on, and σ′ = σ
//! otherwise (J. A. McInally, IEEE Trans. Ind. Appl. IA-13(3), 1977; K.
//! Robinson, PFFC). E_tip comes from the charge as it arrives (upstream
//! devices applied, this one and later passive ones not), so it too depends
//! on x. When such a device lies downstream of a fitted segment, every
//! amplitude downstream of it, and so every reading whose meter sees that
//! charge, is a piecewise-affine function of x, discontinuous where a
//! device switches on: the linear rows above no longer hold for all x.
//!
//! Each passive device is in one of five *regimes*: off; on with
//! |σ| ≤ σ_res (σ′ = σ); on at its floor (σ′ = ±σ_res); on proportional
//! (σ′ = σ(1 − η)); powered bars are affine always. With every regime R
//! fixed, the response is affine, so A(x) = A0(R) + Σ_j x_j T_j(R) holds
//! *exactly* (A0 = A(0), T_j = A(e_j) − A(0) built in regime R), and the
//! rows r = b(R) + M(R) x are exact on the set X_R of x whose own regimes
//! are R. The fit (semi-smooth Newton on the regimes):
//!
//! 1. R_0 = the regimes at the charge entries' own prediction;
//! 2. x_i = the weighted least-squares solution of the rows of R_i;
//! 3. R_{i+1} = the regimes at x_i (tip fields and arriving densities from
//!    the nonlinear model built from x_i); if R_{i+1} = R_i, stop;
//! 4. stop also on a regime seen before (a cycle) or after
//!    [`fit::MAX_ITERATIONS`] solves.
//!
//! **What is proven.** At a stop in step 3, x lies in X_R and the exact
//! model coincides with the affine one there, so the residuals at x are
//! those of the exact model and x minimises the weighted squared residual
//! over X_R (the quadratic's minimiser lies in X_R). When the readings
//! determine as many densities as there are readings and the affine system
//! is solvable, the residuals are zero: x reproduces every reading, the
//! global optimum. The iteration visits finitely many regimes (5 per
//! device), and the cycle check makes it stop. **What is checked.** That
//! the stop was in step 3 ([`FitMethod::self_consistent`]) and, in every
//! case, each reading against the final profile (below).
//!
//! **Fallback** (a cycle, or the cap): with one reading and one unknown,
//! h(x) = r̂(x) − r is continuous on every interval where no device switches
//! on or off (with the activity fixed every σ′(σ) above is continuous and
//! nondecreasing, so every amplitude A_k(x) is too; h is then monotone when
//! the meter's own segment outweighs the others — checked by the residual,
//! not proven). Two
//! visited points with h of opposite signs bracket either a root of h or a
//! switch of a device; bisection to adjacent doubles returns it (by the
//! intermediate value theorem, a root if h is continuous on the bracket).
//! A root is then polished by one solve in its regime. A switch leaves a
//! residual: no x reproduces the reading (an *onset gap*: at the density
//! where the device starts to ionise the reading jumps). Otherwise the
//! visited point with the least exact weighted squared residual is kept.
//!
//! **Residuals.** Every residual is the reading minus what the final
//! profile gives at the meter: n̂·E of `scene.web(final charge)` at the
//! meter face (the field `field --at` gives there), or the final density
//! for a density reading. A reading with |residual| > u_m is *not
//! reproduced* ([`ReadingNote::NotReproduced`]); the assessment fails it.
//! For several readings on one segment this flags readings farther than
//! their tolerance from the weighted fit (two equal-tolerance readings:
//! exactly when their tolerance intervals, mapped through the model, do not
//! overlap).
//!
//! **Bounds** are those of the affine model of the final regime (the box
//! |δr_m| ≤ u_m through P, at every distance corner): exact while the
//! reading errors keep every device in its regime; an error that moves a
//! device across its onset or its floor is not covered.
//!
//! Conductors: when the scene holds them, G_km includes the charge that
//! segment k induces on them, so the fit already accounts for their
//! screening. Each field reading also reports the screening factor
//! k_m = n̂_m·E_k(r_m) / n̂_m·(E_k − E_k,ind)(r_m) for a unit density on its
//! own segment (E_k,ind the field of the induced charge): the reading is
//! k_m times what the web's charge alone would give. Without conductors no
//! factor is given and the near-roller warning says only that the roller
//! suppresses the reading.
//!
//! | symbol | meaning | unit |
//! | --- | --- | --- |
//! | r_m | reading m as a field (a voltage reading ÷ its calibrated distance) | V/m |
//! | A_k, x_j | starting density of segment k; the unknown ones | C/m² |
//! | G_km | normal field at meter m per unit A_k | V/m per C/m² |
//! | u_m | reading uncertainty | V/m |
//! | k_m | screening factor of meter m | 1 |
//! | σ, σ′ | density arriving at and leaving a device | C/m² |
//! | η, σ_res | a device's efficiency, residual density | 1, C/m² |
//! | E_tip, E_on | field at a passive device's tips, its onset | V/m |
//! | R, X_R | regimes of every device; the x where they hold | —, C/m² |
//! | ε0 | vacuum permittivity | F/m |
//!
//! Assumptions: the meter reads the undisturbed field at its sensing point
//! (the meter body does not perturb it); the density across the web has the
//! shape the line gives; a meter reads the net charge of both faces.
//!
//! ## Reference
//! Least squares: Å. Björck, *Numerical Methods for Least Squares Problems*
//! (SIAM, 1996), ch. 1. Regime iteration for piecewise-affine equations:
//! the active-set / semi-smooth Newton idea (J. Nocedal, S. J. Wright,
//! *Numerical Optimization*, 2nd ed., Springer 2006, ch. 16 — the chapter
//! from memory); bisection: the intermediate value theorem. Passive devices: J. A.
//! McInally 1977 (above). Infinite-sheet rule: Gauss's law (FACTS.md). Field
//! meter practice (reading ÷ calibrated distance, mid-span readings): K.
//! Robinson, PFFC "Static Beat" 2010 and 2019; NFPA 77 (2000) 5.4.

mod fit;

use crate::charge::{ChargeProfile, SegmentOrigin, charge_profile_with};
use crate::field::{FieldError, Scene, WebField};
use crate::model::geometry::meter_geometry;
use crate::model::{Line, NodeKind, Reading, ReadingRecord, ReadingValue};
use crate::physics::AIR_BREAKDOWN_FIELD;
use crate::units::{EPS0, Meters, VoltsPerMeter};

pub use crate::model::DEFAULT_CALIBRATION;

/// Up to this many meters, the bounds try every combination of meter
/// distances at ± the tolerance (2^M solves); beyond, one meter at a time.
pub const MAX_CORNER_METERS: usize = 8;

/// Readings closer to a roller node than this many meter distances are
/// warned about (common practice: take readings mid-span).
pub const ROLLER_CLEARANCE: f64 = 3.0;

/// The lowest and highest relative humidity [1] the readings record, or
/// `None` when no reading gives one (the relaxation time was then not
/// checked against the humidity at measurement).
pub fn humidity_range(readings: &[ReadingResult]) -> Option<[f64; 2]> {
    readings
        .iter()
        .filter_map(|r| r.record.relative_humidity)
        .fold(None, |acc, h| match acc {
            None => Some([h, h]),
            Some([lo, hi]) => Some([lo.min(h), hi.max(h)]),
        })
}

/// What one reading gives.
#[derive(Debug, Clone, PartialEq)]
pub struct ReadingResult {
    /// Identifier.
    pub id: String,
    /// Span label.
    pub span: String,
    /// Distance along the span from its start [m].
    pub position: Meters,
    /// Arc length of the meter's foot on the path [m].
    pub s: Meters,
    /// Meter face to web [m].
    pub distance: Meters,
    /// Meter face: the point where the reading applies [m].
    pub at: [Meters; 3],
    /// Unit normal n̂ from the web towards the meter [1]; a field reading
    /// is n̂·E at `at`.
    pub normal: [f64; 3],
    /// The reading as entered (field, voltage with its calibration, or density).
    pub value: ReadingValue,
    /// The reading as entered, SI (V/m, V or C/m²).
    pub reading: f64,
    /// What was recorded with the reading: the texts as typed (value and
    /// distance), the instrument and the conditions of the measurement.
    pub record: ReadingRecord,
    /// The field the reading implies [V/m]; `None` for a density reading.
    pub field: Option<f64>,
    /// n̂·E at `at` of the final charge profile (the fitted densities, every
    /// passive device's response applied), the same field `field --at`
    /// gives there [V/m]; `None` for a density reading (the final
    /// profile's density there is `sigma`).
    pub model_field: Option<f64>,
    /// Geometry-aware density at the meter's foot [C/m²].
    pub sigma: f64,
    /// Lower bound [C/m²].
    pub sigma_low: f64,
    /// Upper bound [C/m²].
    pub sigma_high: f64,
    /// What the `charge` entries alone predict there [C/m²].
    pub sigma_model: f64,
    /// 2ε0·E [C/m²].
    pub sigma_naive_isolated: Option<f64>,
    /// ε0·E [C/m²].
    pub sigma_naive_one_sided: Option<f64>,
    /// Reading minus what the final charge profile gives at the meter
    /// (`model_field`, or `sigma` for a density reading), in the reading's
    /// unit (V/m, or C/m² for a density reading).
    pub residual: f64,
    /// The residual's uncertainty scale u (same unit).
    pub uncertainty: f64,
    /// With conductors in the scene: the meter's normal field for a unit
    /// density on its own charge segment with the charge induced on the
    /// conductors, divided by the same without it (the web's own part) [1].
    /// Below 1 the conductors suppress the reading by that factor (at or
    /// below 0 their field outweighs the web's own: the meter reads zero or
    /// the opposite sign); the conversion to σ already includes it. `None` without conductors, for a
    /// density reading, or where the web's own part vanishes.
    pub screening: Option<f64>,
    /// Problems and flags.
    pub warnings: Vec<ReadingNote>,
}

impl ReadingResult {
    /// Whether the final profile reproduces the reading within its
    /// tolerance: |residual| ≤ u.
    pub fn reproduced(&self) -> bool {
        self.residual.abs() <= self.uncertainty
    }
}

/// A problem or flag of one reading.
#[derive(Debug, Clone, PartialEq)]
pub enum ReadingNote {
    /// The meter is within [`ROLLER_CLEARANCE`] meter distances of a roller
    /// the web touches, which suppresses the reading.
    NearRoller {
        /// With conductors in the scene: the meter's [`ReadingResult::screening`]
        /// factor (below 1: the reading is suppressed by that factor);
        /// `None` without conductors.
        suppression: Option<f64>,
    },
    /// The implied field [V/m] is at or above what air can hold.
    AboveAirBreakdown {
        /// The implied field [V/m].
        field: VoltsPerMeter,
    },
    /// The meter is farther from the web than a third of its width.
    FarFromWeb,
    /// A voltage reading without `calibrated_at:` (25 mm assumed).
    AssumedCalibration,
    /// The residual exceeds 3 times the reading's uncertainty.
    LargeResidual {
        /// Reading minus prediction, in the reading's unit (V/m, or C/m²
        /// for a density reading).
        residual: f64,
        /// Whether the reading is a density (C/m²) rather than a field.
        density: bool,
        /// Whether other readings share the segment (so they disagree).
        shared: bool,
    },
    /// The final profile does not reproduce the reading within its
    /// tolerance u: |residual| > u (an error-level finding of the
    /// assessment).
    NotReproduced {
        /// Reading minus what the final profile gives, in the reading's
        /// unit (V/m, or C/m² for a density reading).
        residual: f64,
        /// The reading's tolerance u (same unit).
        tolerance: f64,
        /// Whether the reading is a density (C/m²) rather than a field.
        density: bool,
        /// Whether other readings share the segment.
        shared: bool,
    },
}

/// How the fit and its bounds were computed.
#[derive(Debug, Clone, PartialEq)]
pub struct FitMethod {
    /// Readings used.
    pub readings: usize,
    /// Segment densities fitted.
    pub unknowns: usize,
    /// Meter accuracy, a fraction of the displayed reading.
    pub accuracy: f64,
    /// Meter zero offset [V/m].
    pub offset: VoltsPerMeter,
    /// Meter distance tolerance [m].
    pub distance_tolerance: Meters,
    /// More meters than [`MAX_CORNER_METERS`]: distances moved one meter
    /// at a time instead of at every corner.
    pub one_at_a_time: bool,
    /// Passive devices on the line (their response makes the fit
    /// nonlinear).
    pub passive: usize,
    /// Affine solves the regime iteration made.
    pub iterations: usize,
    /// Whether the regime of every passive device at the fitted densities
    /// is the one they were solved in (the fit is then exact for the
    /// nonlinear model).
    pub self_consistent: bool,
}

/// A charge segment whose starting density the readings determine.
#[derive(Debug, Clone, PartialEq)]
pub struct SegmentFit {
    /// Segment index.
    pub index: usize,
    /// What opens it.
    pub origin: SegmentOrigin,
    /// Arc length of its start [m].
    pub s_start: Meters,
    /// What the charge entries predict [C/m²].
    pub predicted: f64,
    /// What the readings give [C/m²].
    pub fitted: f64,
    /// Lower bound [C/m²].
    pub low: f64,
    /// Upper bound [C/m²].
    pub high: f64,
    /// Number of readings on it.
    pub readings: usize,
}

/// The readings converted, and the charge profile that results.
#[derive(Debug, Clone, PartialEq)]
pub struct ReadingsResult {
    /// The charge along the path with the fitted densities.
    pub charge: ChargeProfile,
    /// One entry per reading, in input order.
    pub readings: Vec<ReadingResult>,
    /// One entry per fitted segment.
    pub segments: Vec<SegmentFit>,
    /// How the fit and its bounds were computed (`None` without readings).
    pub method: Option<FitMethod>,
    /// What every eliminator does.
    pub eliminators: Vec<EliminatorState>,
}

/// Errors of the inversion.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum ReadingsError {
    /// The field could not be computed at a meter.
    #[error("computing the field at a meter: {0}")]
    Field(#[from] FieldError),
    /// The readings do not determine the densities.
    #[error(
        "the readings do not determine the charge of the segment starting {s_start:.3} m along the path: add a reading over that stretch of web"
    )]
    Singular {
        /// Arc length where the segment starts [m].
        s_start: Meters,
    },
}

/// The field the reading implies [V/m], and whether the calibration was assumed.
fn implied_field(r: &Reading) -> (Option<f64>, bool) {
    match r.value {
        ReadingValue::Field(e) => (Some(e), false),
        ReadingValue::Voltage(v, Some(cal)) => (Some(v / cal), false),
        ReadingValue::Voltage(v, None) => (Some(v / DEFAULT_CALIBRATION), true),
        ReadingValue::Sigma(_) => (None, false),
    }
}

/// A unit-amplitude profile of segment k alone.
fn unit_profile(base: &ChargeProfile, k: usize) -> ChargeProfile {
    let mut p = base.clone();
    for (i, g) in p.segments.iter_mut().enumerate() {
        g.amplitude = if i == k { 1.0 } else { 0.0 };
    }
    p
}

/// What an eliminator does on this line.
#[derive(Debug, Clone, PartialEq)]
pub struct EliminatorState {
    /// Index into `line.eliminators`.
    pub index: usize,
    /// Centreline density arriving [C/m²].
    pub sigma_in: f64,
    /// Centreline density leaving [C/m²].
    pub sigma_out: f64,
    /// Passive: |E| at the tips from the charge arriving there [V/m].
    pub tip_field: Option<f64>,
    /// Whether it ionises (always for powered bars).
    pub active: bool,
}

/// Decides, in path order, whether each passive device ionises: the field
/// at its tips, computed from the charge as it arrives there (upstream
/// devices applied, this and later passive devices not), must reach its
/// onset. Returns the activity flags and the tip fields.
pub fn passive_activity(
    line: &Line,
    overrides: &[(usize, f64)],
    scene: &Scene,
) -> Result<(Vec<bool>, Vec<Option<f64>>), FieldError> {
    use crate::model::EliminatorKind;
    let n = line.eliminators.len();
    let mut active: Vec<bool> = line
        .eliminators
        .iter()
        .map(|e| e.kind == EliminatorKind::Powered)
        .collect();
    let mut tips = vec![None; n];
    for i in 0..n {
        let e = &line.eliminators[i];
        if e.kind != EliminatorKind::Passive {
            continue;
        }
        let profile = charge_profile_with(line, overrides, &active);
        let model = scene.web(&profile);
        let (tip, _) = meter_geometry(&line.path.spans[e.span], e.along, 0.0, e.distance, e.side);
        let f = model.at(tip, false)?.e_magnitude();
        tips[i] = Some(f);
        active[i] = f >= e.onset.unwrap_or(f64::INFINITY);
    }
    Ok((active, tips))
}

/// The density arriving at and leaving every eliminator.
fn eliminator_states(
    line: &Line,
    charge: &ChargeProfile,
    active: &[bool],
    tips: &[Option<f64>],
) -> Vec<EliminatorState> {
    line.eliminators
        .iter()
        .enumerate()
        .map(|(i, e)| {
            let k = charge.segment_at(e.s);
            EliminatorState {
                index: i,
                sigma_in: charge.arriving(k),
                sigma_out: charge.segments[k].amplitude,
                tip_field: tips.get(i).copied().flatten(),
                active: active.get(i).copied().unwrap_or(true),
            }
        })
        .collect()
}

/// Name of the contribution that [`WebField::at`] gives for the charge
/// induced on the conductors.
const INDUCED: &str = "conductors";

/// The screening factor at a meter: the normal field with the induced
/// charge, n̂·E, over the web's own part, n̂·(E − E_induced) [1]; `None`
/// without an induced contribution or when the web's own part is zero.
fn screening_factor(f: &crate::field::PointField, n: [f64; 3]) -> Option<f64> {
    let normal = |e: [f64; 3]| e[0] * n[0] + e[1] * n[1] + e[2] * n[2];
    let induced = f.contributions.iter().find(|c| c.name == INDUCED)?;
    let total = normal(f.e);
    let web = total - normal(induced.e);
    (web.abs() > 0.0 && total.is_finite()).then(|| total / web)
}

/// Converts the line's readings; without readings the model's charge is
/// returned (with the passive devices' activity decided by the solver) and
/// an empty table.
pub fn invert_readings(line: &Line, scene: &Scene) -> Result<ReadingsResult, ReadingsError> {
    let (active0, tips0) = passive_activity(line, &[], scene)?;
    let model = charge_profile_with(line, &[], &active0);
    if line.readings.is_empty() {
        let eliminators = eliminator_states(line, &model, &active0, &tips0);
        return Ok(ReadingsResult {
            charge: model,
            readings: Vec::new(),
            segments: Vec::new(),
            method: None,
            eliminators,
        });
    }
    let mut unknowns: Vec<usize> = line
        .readings
        .iter()
        .map(|r| model.segment_at(line.path.spans[r.span].s_start + r.along))
        .collect();
    unknowns.sort_unstable();
    unknowns.dedup();
    let n = unknowns.len();
    let d0: Vec<f64> = line.readings.iter().map(|r| r.distance).collect();
    let tol = line.meter.distance_tolerance;
    let moved = |d: f64, sign: f64| {
        if d + sign * tol > 0.0 {
            d + sign * tol
        } else {
            0.5 * d
        }
    };
    // Distance sets: every combination of ± tolerance per meter (up to
    // MAX_CORNER_METERS meters), else one meter at a time.
    let m = d0.len();
    let mut sets: Vec<Vec<f64>> = Vec::new();
    if tol > 0.0 {
        if m <= MAX_CORNER_METERS {
            for mask in 0..(1usize << m) {
                sets.push(
                    (0..m)
                        .map(|i| moved(d0[i], if mask >> i & 1 == 1 { 1.0 } else { -1.0 }))
                        .collect(),
                );
            }
        } else {
            for i in 0..m {
                for sign in [1.0, -1.0] {
                    let mut d = d0.clone();
                    d[i] = moved(d0[i], sign);
                    sets.push(d);
                }
            }
        }
    }
    let singular = |k: usize| ReadingsError::Singular {
        s_start: model.segments[k].s_start,
    };
    // The unit-density field of every segment, charged once (with
    // conductors, each is a back-substitution) and reused at every set of
    // meter distances and by the forward model.
    // Each carries the web's own charge only; the isolated conductors'
    // given charges are the fixed part, counted once (not once per segment).
    let units: Vec<ChargeProfile> = (0..model.segments.len())
        .map(|k| unit_profile(&model, k))
        .collect();
    // One profile per call (measured faster on the demo's first run than
    // all of them in one call).
    let models: Vec<WebField<'_>> = units
        .iter()
        .flat_map(|u| scene.webs_linear(std::slice::from_ref(u)))
        .collect();
    let fixed = scene.given_part();
    let problem = fit::Problem::new(line, &unknowns, &models, fixed.as_ref(), &model)?;
    let probes = problem.probes(&d0)?;
    // Start in the regimes of the charge entries' own prediction.
    let x_model: Vec<f64> = unknowns
        .iter()
        .map(|&k| model.segments[k].amplitude)
        .collect();
    let start = problem.state(&x_model).regimes;
    let result = problem
        .fit(&probes, start)
        .ok_or_else(|| singular(unknowns[0]))?;
    let x = result.x.clone();
    let regimes = result.state.regimes.clone();
    // Bounds in the final regime: the exact box of reading errors
    // |δr_m| ≤ u_m mapped through P, at the nominal distances and at every
    // corner of the distance tolerance.
    let mut lo = x.clone();
    let mut hi = x.clone();
    for (i, d) in std::iter::once(&d0).chain(&sets).enumerate() {
        let pr = if i == 0 {
            probes.clone()
        } else {
            problem.probes(d)?
        };
        let rr = problem.rows(&pr, &regimes);
        let Some((xd, pd)) = fit::solve(&rr, n) else {
            continue;
        };
        for j in 0..n {
            let dx: f64 = pd[j].iter().zip(&rr).map(|(pj, r)| pj.abs() * r.u).sum();
            lo[j] = lo[j].min(xd[j] - dx);
            hi[j] = hi[j].max(xd[j] + dx);
        }
    }
    let overrides: Vec<(usize, f64)> = unknowns.iter().copied().zip(x.iter().copied()).collect();
    let active = result.state.active.clone();
    let tips = result.state.tips.clone();
    let charge = charge_profile_with(line, &overrides, &active);
    // What the final profile gives at every meter: the same field as
    // `field --at` there.
    let web = scene.web(&charge);

    let segments = unknowns
        .iter()
        .enumerate()
        .map(|(j, &k)| SegmentFit {
            index: k,
            origin: model.segments[k].origin.clone(),
            s_start: model.segments[k].s_start,
            predicted: model.segments[k].amplitude,
            fitted: x[j],
            low: lo[j],
            high: hi[j],
            readings: line
                .readings
                .iter()
                .filter(|r| model.segment_at(line.path.spans[r.span].s_start + r.along) == k)
                .count(),
        })
        .collect::<Vec<_>>();

    let mut results = Vec::with_capacity(line.readings.len());
    for (i, r) in line.readings.iter().enumerate() {
        let span = &line.path.spans[r.span];
        let s = span.s_start + r.along;
        let k = model.segment_at(s);
        let j = unknowns.iter().position(|&u| u == k).unwrap_or(0);
        let shape = crate::charge::decay(s - model.segments[k].s_start, model.decay_length)
            * model.across.f(r.across);
        let (b1, b2) = (lo[j] * shape, hi[j] * shape);
        let (field, assumed_cal) = implied_field(r);
        let reading = match r.value {
            ReadingValue::Field(e) => e,
            ReadingValue::Voltage(v, _) => v,
            ReadingValue::Sigma(sg) => sg,
        };
        let (at, normal) = meter_geometry(span, r.along, r.across, r.distance, r.side);
        let sigma = charge.sigma(s, r.across);
        let model_field = match field {
            Some(_) => {
                let e = web.at(at, false)?.e;
                Some(e[0] * normal[0] + e[1] * normal[1] + e[2] * normal[2])
            }
            None => None,
        };
        let residual = match (field, model_field) {
            (Some(e), Some(f)) => e - f,
            _ => reading - sigma,
        };
        let uncertainty = probes
            .iter()
            .find(|p| p.reading == i)
            .map(|p| p.u)
            .unwrap_or(0.0);
        let mut warnings = Vec::new();
        let near = |node: usize| matches!(line.path.nodes[node].kind, NodeKind::Roller { .. });
        let clearance = ROLLER_CLEARANCE * r.distance;
        let screening = match (field, scene.conductors()) {
            (Some(_), Some(_)) => screening_factor(&models[k].at(at, true)?, normal),
            _ => None,
        };
        if (r.along < clearance && near(span.from_node))
            || (span.length - r.along < clearance && near(span.to_node))
        {
            warnings.push(ReadingNote::NearRoller {
                suppression: screening,
            });
        }
        if let Some(e) = field
            && e.abs() >= AIR_BREAKDOWN_FIELD
        {
            warnings.push(ReadingNote::AboveAirBreakdown { field: e });
        }
        if r.distance > line.web.width / 3.0 {
            warnings.push(ReadingNote::FarFromWeb);
        }
        if assumed_cal {
            warnings.push(ReadingNote::AssumedCalibration);
        }
        let others = segments.get(j).map(|g| g.readings).unwrap_or(1);
        if uncertainty > 0.0 && residual.abs() > 3.0 * uncertainty {
            warnings.push(ReadingNote::LargeResidual {
                residual,
                density: field.is_none(),
                shared: others > 1,
            });
        }
        if residual.abs().is_nan() || residual.abs() > uncertainty {
            warnings.push(ReadingNote::NotReproduced {
                residual,
                tolerance: uncertainty,
                density: field.is_none(),
                shared: others > 1,
            });
        }
        results.push(ReadingResult {
            id: r.id.clone(),
            span: span.label(),
            position: r.along,
            s,
            distance: r.distance,
            at,
            normal,
            value: r.value,
            reading,
            record: r.record.clone(),
            field,
            model_field,
            sigma,
            sigma_low: b1.min(b2),
            sigma_high: b1.max(b2),
            sigma_model: model.sigma(s, r.across),
            sigma_naive_isolated: field.map(|e| 2.0 * EPS0 * e),
            sigma_naive_one_sided: field.map(|e| EPS0 * e),
            residual,
            uncertainty,
            screening,
            warnings,
        });
    }
    let eliminators = eliminator_states(line, &charge, &active, &tips);
    let passive = line
        .eliminators
        .iter()
        .filter(|e| e.kind == crate::model::EliminatorKind::Passive)
        .count();
    Ok(ReadingsResult {
        eliminators,
        charge,
        readings: results,
        segments,
        method: Some(FitMethod {
            readings: line.readings.len(),
            unknowns: n,
            accuracy: line.meter.accuracy,
            offset: line.meter.offset,
            distance_tolerance: tol,
            one_at_a_time: m > MAX_CORNER_METERS,
            passive,
            iterations: result.iterations,
            self_consistent: result.self_consistent,
        }),
    })
}
