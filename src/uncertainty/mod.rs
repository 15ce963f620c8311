//! # Uncertainty: the range of every result over the box of uncertain inputs
//!
//! Fifth stage of the pipeline, after the assessment: every finding and
//! every place of interest gets the least and greatest value its quantity
//! takes when the uncertain inputs range over their tolerances.
//!
//! ## Inputs
//! The uncertain inputs are the starting amplitudes A_k of the charge
//! segments (see `crate::charge`). Each gets a range [A_k⁻, A_k⁺]:
//!
//! - a segment set by meter readings: the readings stage's bounds (the
//!   exact box of reading errors, every corner of the meter-distance
//!   tolerance; `crate::readings`);
//! - the others: the charge stage run with every `charge:` entry at σ − u
//!   and at σ + u (u its tolerance) and every fitted segment at its lower and
//!   upper bound. Each amplitude is non-decreasing in each of these (decay
//!   factors are positive; a powered bar's σ′ = (1 − η)σ + σ_off and a
//!   passive device's response are non-decreasing in σ, with every device's
//!   state held as the fit found it), so the two runs bound it.
//!
//! Ranges are taken segment by segment (a box): correlations between
//! segments (one entry feeding several downstream segments) are dropped,
//! which can only widen the results' ranges.
//!
//! ## Propagation
//! Field, potential and conductor potentials are linear in the amplitudes,
//! **E**(a) = Σ_k a_k **E**_k. With a = a₀ + Δ, Δ_k ∈ [A_k⁻ − a₀_k, A_k⁺ − a₀_k]
//! and d_k = max |Δ_k|:
//!
//! - a signed component or potential x = Σ a_k x_k: exactly
//!   x₀ + Σ_k [min, max](Δ_k x_k) (the extremes of a linear function over a
//!   box are at its corners, one input at a time);
//! - a magnitude g (|**E**|, |V|, a meter reading, a density, the larger of
//!   several such: a seminorm of a): g₀ − Σ_k d_k g(e_k) ≤ g ≤ g₀ + Σ_k
//!   d_k g(e_k) (triangle inequality; exact when the one charged segment is
//!   the one uncertain input, on the safe side otherwise), floored at 0;
//!   for |**E**| also the componentwise box, whichever is tighter;
//! - an energy ½CV²: the bounds of |V| squared (monotone).
//!
//! g(e_k) is the assessment run with segment k alone at unit amplitude
//! (each run reuses the scene: one more web field, one more conductors'
//! right-hand side). Which rule of the three applies to a finding is read
//! from the finding itself: a value equal in runs with no charge, the
//! nominal charge, twice the nominal charge and every unit charge does not
//! depend on the charge; otherwise it must vanish without charge and
//! double (a magnitude) or quadruple (an energy) with twice the charge, or
//! it is marked not bounded (open above, so an uncertain verdict).
//! A finding with limits is bounded through its margin (value ÷ limit),
//! which stays a seminorm where the rule picks its worst subject.
//!
//! | symbol | meaning | unit |
//! | --- | --- | --- |
//! | A_k, a₀_k, Δ_k, d_k | segment amplitude, nominal, deviation, largest deviation | C/m² |
//! | u | an entry's tolerance | C/m² |
//! | g, g(e_k) | a magnitude and its value for segment k at 1 C/m² | its unit, per C/m² |

mod propagate;

pub use propagate::bound;

use crate::units::Meters;

/// What makes a segment's amplitude uncertain.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum RangeSource {
    /// A meter reading (index into `line.readings`) on a fitted segment.
    Reading(usize),
    /// A `charge:` entry with a tolerance (index into `line.charge`).
    Entry(usize),
}

/// One uncertain input: a charge segment's starting amplitude.
#[derive(Debug, Clone, PartialEq)]
pub struct InputRange {
    /// Index into the charge profile's segments.
    pub segment: usize,
    /// Arc length of its start [m].
    pub s_start: Meters,
    /// Nominal amplitude [C/m²].
    pub nominal: f64,
    /// Least amplitude [C/m²].
    pub low: f64,
    /// Greatest amplitude [C/m²].
    pub high: f64,
    /// The readings and entries whose tolerances move it.
    pub sources: Vec<RangeSource>,
}

impl InputRange {
    /// The largest deviation from the nominal amplitude [C/m²].
    pub fn deviation(&self) -> f64 {
        (self.high - self.nominal)
            .max(self.nominal - self.low)
            .max(0.0)
    }
}

/// The range of one span's share of the field and potential at a place of
/// interest (the span with its ground-plane image).
#[derive(Debug, Clone, PartialEq)]
pub struct ShareBounds {
    /// The span's label, as in the nominal contributions.
    pub span: String,
    /// Least and greatest |**E**| of the share [V/m].
    pub e: [f64; 2],
    /// Least and greatest V of the share [V].
    pub v: [f64; 2],
    /// Least and greatest of each component of the share's **E** [V/m].
    pub components: [[f64; 2]; 3],
}

/// The range of the field and potential at one place of interest.
#[derive(Debug, Clone, PartialEq)]
pub struct PointBounds {
    /// Least and greatest |**E**| [V/m].
    pub e: [f64; 2],
    /// Least and greatest V [V].
    pub v: [f64; 2],
    /// Least and greatest of each component of **E** [V/m].
    pub components: [[f64; 2]; 3],
    /// Each span's share, in the nominal contributions' order (span order).
    pub spans: Vec<ShareBounds>,
}

/// The ranges of a span's results.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SpanBounds {
    /// Least and greatest σc just after the span's start [C/m²].
    pub sigma_start: [f64; 2],
    /// Least and greatest σc just before its end [C/m²].
    pub sigma_end: [f64; 2],
    /// Least and greatest of its largest |σc| [C/m²].
    pub sigma_peak: [f64; 2],
    /// Least and greatest of its largest meter-equivalent reading at the
    /// default calibration distance [V], where a meter can be.
    pub meter: Option<[f64; 2]>,
}

/// The ranges of a conductor's results.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ConductorBounds {
    /// Net charge [C].
    pub charge: [f64; 2],
    /// Potential [V].
    pub potential: [f64; 2],
    /// Spark energy ½CV² [J] (isolated conductors).
    pub spark_energy: Option<[f64; 2]>,
}

/// What the uncertainty stage found.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Uncertainty {
    /// The uncertain inputs (segments whose range is not a point), in path
    /// order; findings' [`crate::assess::Share`]s index into it.
    pub inputs: Vec<InputRange>,
    /// One entry per place of interest, in `line.points` order (empty when
    /// the stage did not run).
    pub points: Vec<PointBounds>,
    /// One entry per span, in path order (empty when the stage did not
    /// run or nothing is uncertain).
    pub spans: Vec<SpanBounds>,
    /// One entry per conductor of the conductors' results, in their order
    /// (empty as for `spans`).
    pub conductors: Vec<ConductorBounds>,
    /// Runs made: one per uncertain input, with no charge, with twice the
    /// nominal charge and with the nominal charge.
    pub runs: usize,
}
