//! # Field and potential of a patch with a non-uniform density
//!
//! Field stage, middle layer: integrates Coulomb's law over one charged patch
//! of a span (a rectangle in the span's frame) whose density decays along the
//! span and varies across it. The paths, in the order tried:
//!
//! - far from the patch (≥ 3 half-diagonals from its centre, L ≤ λ) a tensor
//!   Gauss rule [`super::far::far_field`] takes both directions at once, with
//!   fewer points the farther the point (7–12 per direction), when its
//!   estimate (the change from one point fewer per direction) meets the
//!   targets, judged against lower bounds on the error scales that cost no
//!   transcendental function;
//! - the closed-form moments of [`super::moments`]: the decay replaced by a
//!   polynomial with a rigorous remainder bound, every monomial integrated
//!   exactly over each rectangle of the patch; it answers only when its
//!   claimed bound (truncation plus rounding) meets the targets, i.e. off the
//!   plane of the patch (h ≠ 0), for L ≤ 3λ, at most six across-web pieces,
//!   and not so far away that its recurrences lose the digits needed;
//! - the fast path of [`super::kronrod`] (a short fixed plan of Gauss–Kronrod
//!   rules in the substituted variable of point 1 below, 15–124 evaluations at
//!   1 m–0.5 mm from a metre-size patch), the across-web direction done
//!   exactly by [`super::kernels::inner_across`] and the along-span one
//!   numerically;
//! - where that path cannot vouch for its result (its error estimate misses
//!   the target, a point in the plane beside an end, a density falling by
//!   more than e⁵⁰ over the patch) the double-exponential rule of the
//!   `quadrature` crate described below, which is also the reference the
//!   other paths are tested against.
//!
//! All are held to the same targets (see *Tolerance*). A uniform patch takes
//! the closed form [`super::kernels::uniform_rectangle`] instead.
//!
//! Speed: the target of issue 13 is ≤ 1 µs per span-point, about 10× the
//! uniform closed form. A quadrature in the along-span variable cannot reach
//! it near the sheet: after the substitution below the integrand is analytic
//! in a strip of half-width π/2 around an interval of length ≈ 2 ln(L/c), so
//! any rule needs a few points per unit length (≈ 30–60 evaluations of the
//! across-web integrals at 0.5 mm). The moments need about as many
//! logarithms and arc tangents as the uniform closed form per across-web
//! piece plus O(d) arithmetic per moment (see `benches/solver.rs`, part 2, for
//! the measured cost).
//!
//! The patch is u′ ∈ [0, L], y′ ∈ [y_lo, y_hi], h′ = 0, carrying
//!
//! $$ σ(u', y') = A\,e^{-u'/λ} f(y'), $$
//!
//! f piecewise quadratic ([`QuadPiece`]). At P = (u, y, h), with a = u′ − u,
//!
//! $$ \{V, E_u, E_y, E_h\}(P) = \frac{A}{4πε_0}\int_{-u}^{L-u} e^{-(u+a)/λ}
//!    \{g_1,\; -a\,g_3,\; g_y,\; h\,g_3\}(a)\,da, $$
//!
//! g₁ = ∫f/R dy′, g₃ = ∫f/R³ dy′, g_y = ∫f·(y − y′)/R³ dy′ in closed form
//! ([`super::kernels::AcrossIntegrals`]). Close to the sheet the integrand is a
//! peak of width ≈ c = √(h² + δy²) at the foot of the perpendicular, a = 0
//! (δy: distance of y outside [y_lo, y_hi], 0 inside; if c = 0, P lies in the
//! plane beside an end and c is its distance to that end). Hence:
//!
//! 1. **Substitution** a = c·sinh τ, da = √(a² + c²) dτ. The integrand's
//!    complex singularities (a = ±i√(h² + (y′−y)²)) all move to Im τ = ±π/2:
//!    the peak becomes a smooth bump of unit width. Each interval is written
//!    from an anchor a₀ (the foot, or the patch end nearer to it) as
//!    a = a₀ cosh s + √(a₀² + c²) sinh s, s = τ − τ₀, so that a short patch far
//!    from the foot loses no precision to large τ.
//! 2. **Split at the foot** when it lies inside (0, L) and the τ range exceeds
//!    [`SPLIT_SPAN`] (the peak is narrower than about a third of the patch);
//!    otherwise one interval, as the substituted integrand is smooth there.
//! 3. **Double-exponential rule** on each τ interval (≤ 385 abscissae). The
//!    rule is deterministic: the 4-vector of integrands is computed at each
//!    abscissa (a whole level at a time, which lets the CPU overlap the
//!    evaluations), recorded in call order, and replayed for the other
//!    components, which compute new points only if they need more levels.
//!    Four components cost about one.
//! 4. **Error estimate** δ = |I_N − I_N′|, the change over the last level
//!    (N′ = (N+1)/2), for N ≥ 49. The crate reports δ² instead of δ when the
//!    last two changes look quadratically convergent; measured on these
//!    integrands that under-estimated the error up to 20-fold, so every
//!    integrand is multiplied by 2⁵⁰⁰ inside the rule (undone exactly after),
//!    which keeps that test from firing. δ bounds the error of the finer
//!    result with a wide margin (the DE error falls like exp(−cN/ln N)); 49
//!    points are required because the 13→25 change can vanish by accident.
//!    The estimate is floored at [`ROUNDOFF`] × (interval × max|integrand|).
//! 5. **Bisection**: a component missing its target on an interval is redone
//!    on both halves (in τ, the target halved) up to [`MAX_DEPTH`] times. If
//!    the summed estimate still exceeds the target the result is
//!    [`KernelError::NotConverged`] — never a number.
//!
//! ## Tolerance
//!
//! σ may change sign (tilt profiles), so a target relative to the result is
//! ill-posed (the result may be ≈ 0). The targets are absolute,
//!
//! $$ τ_V = r·s·S_V, \qquad τ_E = r·s·S_E \text{ (each of } E_u, E_y, E_h), $$
//!
//! with r = `rel_tol`, s = [`SAFETY`], and S_V, S_E the closed-form |V| and
//! |E| at P of the uniform rectangle covering the patch with density
//! max|σ| = |A|·max|f| ([`error_scale`], about 100 ns). For a density of one
//! sign that does not decay much over the patch, S_V ≈ |V| and S_E ≈ |E|, so
//! the error is below r·|V| and r·|E|. For a strongly decaying or
//! sign-changing density it is r times the field the largest density would
//! make — the right measure when spans are superposed. Below r ≈ 1e-11
//! rounding limits points within ~10 µm of metre-size patches (a 1e-13 target
//! may then give `NotConverged`).
//!
//! | symbol | meaning | unit |
//! | --- | --- | --- |
//! | A | amplitude of the density (σ at u′ = 0 where f = 1) | C/m² |
//! | λ | decay length along the span (∞: no decay) | m |
//! | L | patch length along the span | m |
//! | f | across-web shape (piecewise quadratic) | 1 |
//! | u, y, h | field point in the patch frame | m |
//! | a | u′ − u | m |
//! | c | substitution scale √(h² + δy²) | m |
//! | τ, s | substitution variables, a = c·sinh τ, s = τ − τ₀ | 1 |
//! | ε₀ | vacuum permittivity | F/m |
//! | S_V, S_E | error scales | V, V/m |
//! | N | abscissae used by the rule | 1 |
//!
//! The fast path's estimate is described in [`super::kronrod`], the moment
//! path's bound in [`super::moments`]; measured against this rule at 1e-12
//! over 2000 sampled patches and points (tests/fast_path.rs) the error of
//! the fast paths together was at most 2e-2 of the target, and the moment
//! path's error at most 0.87 of its claimed bound (plus the reference's own
//! target) at tolerances 1e-9–1e-3.
//!
//! Assumptions: thin sheet in free space. Valid range: patch lengths and
//! widths 1 mm–20 m, points up to ~100 m away and at least 1 µm from the
//! patch (closer than [`MIN_DISTANCE`] is refused), any λ > 0. Cost at
//! `rel_tol` = 1e-9 for a 1.25 m × 1 m patch with a one-piece profile
//! (double-exponential rule; release build, one core, ≈ 70 ns per evaluation): about 100
//! evaluations (≈ 6 µs) at 1 m, 200 (≈ 15 µs) at 25 mm, 300 (≈ 21 µs) at
//! 0.5 mm; a 3-piece table about 1.7× that; 1e-6 needs 50–225 evaluations.
//! No heap allocation (about 15 kB of stack).
//!
//! ## Reference
//! Coulomb's law: D. J. Griffiths, *Introduction to Electrodynamics*, 4th ed.,
//! §2.1. Double-exponential rule: H. Takahasi & M. Mori, "Double exponential
//! formulas for numerical integration", *Publ. RIMS Kyoto Univ.* 9 (1974)
//! 721–741 (as implemented in the `quadrature` crate, after J. D. Cook); its
//! exp(−cN/ln N) error: M. Sugihara, "Optimality of the double exponential
//! formula", *Numer. Math.* 75 (1997) 379–395. The sinh substitution for
//! nearly singular integrands: D. Elliott & P. R. Johnston, "Error analysis
//! for a sinh transformation used in evaluating nearly singular boundary
//! element integrals", *J. Comput. Appl. Math.* 203 (2007) 103–124.

use super::far;
use super::kernels::{
    COULOMB, LocalField, QuadPiece, asinh_difference, inner_across, rectangle_geometry,
    uniform_rectangle,
};
use super::kronrod::{self, FastSum, Span};
use super::moments::{self, MomentBound};
use quadrature::double_exponential;
use std::cell::{Cell, RefCell};
use std::fmt;
use std::sync::OnceLock;

/// Safety factor s between `rel_tol` and the quadrature's targets (see the header). With
/// the conservative estimate δ, s = 0.5 leaves the analytic tests at `rel_tol` = 1e-9 a
/// margin of > 100 (worst measured error 6e-12 relative even at s = 1).
pub const SAFETY: f64 = 0.5;
/// The u′ range is split at the foot of the perpendicular when its τ range exceeds this,
/// i.e. when the peak there (width ≈ c) is narrower than about a third of the patch.
pub const SPLIT_SPAN: f64 = 3.0;
/// Most bisections of a τ interval before giving up (at most 2⁷ sub-intervals).
pub const MAX_DEPTH: u32 = 7;
/// Points closer than this to the patch are refused [m] (callers keep 1 µm).
pub const MIN_DISTANCE: f64 = 1e-9;
/// Floor of an interval's error estimate relative to (interval × max|integrand|), 32 ×
/// machine epsilon: the closed-form integrand itself is only about this accurate.
pub const ROUNDOFF: f64 = 32.0 * f64::EPSILON;
/// Relative mismatch allowed between consecutive pieces' ends (table round-off).
const PIECE_GAP: f64 = 1e-9;
/// Most integrand evaluations in one call of the double-exponential rule.
const DE_CAP: usize = 385;

/// A charged patch: σ = A·exp(−u′/λ)·f(y′) on u′ ∈ [0, L], y′ ∈ [first y_lo, last y_hi].
#[derive(Debug, Clone, PartialEq)]
pub struct Patch {
    /// Length L along the span [m].
    pub len: f64,
    /// Amplitude A [C/m²].
    pub amplitude: f64,
    /// Decay length λ [m] (`f64::INFINITY`: no decay).
    pub decay_length: f64,
    /// Across-web shape f, contiguous pieces in increasing y.
    pub across: Vec<QuadPiece>,
}

impl Patch {
    /// Checks that the patch is usable: L > 0, finite A, λ > 0, contiguous finite pieces.
    pub fn validate(&self) -> Result<(), KernelError> {
        let bad = |reason: String| Err(KernelError::InvalidPatch { reason });
        if !(self.len.is_finite() && self.len > 0.0) {
            return bad(format!(
                "length must be positive and finite, got {:e} m",
                self.len
            ));
        }
        if !self.amplitude.is_finite() {
            return bad(format!(
                "amplitude must be finite, got {:e} C/m^2",
                self.amplitude
            ));
        }
        if self.decay_length.is_nan() || self.decay_length <= 0.0 {
            return bad(format!(
                "decay length must be positive (or infinite for no decay), got {:e} m",
                self.decay_length
            ));
        }
        let (Some(first), Some(last)) = (self.across.first(), self.across.last()) else {
            return bad("the across-web profile has no pieces; give at least one".into());
        };
        let width = last.y_hi - first.y_lo;
        for (i, pc) in self.across.iter().enumerate() {
            let finite =
                pc.y_lo.is_finite() && pc.y_hi.is_finite() && pc.c.iter().all(|c| c.is_finite());
            if !finite || pc.y_hi <= pc.y_lo {
                return bad(format!(
                    "across-web piece {i} must have finite coefficients and y_lo < y_hi, got {pc:?}"
                ));
            }
            if i > 0 {
                let prev = self.across[i - 1].y_hi;
                if (pc.y_lo - prev).abs() > PIECE_GAP * width {
                    return bad(format!(
                        "across-web piece {i} starts at {:e} m but piece {} ends at {prev:e} m; pieces must be contiguous and sorted",
                        pc.y_lo,
                        i - 1
                    ));
                }
            }
        }
        Ok(())
    }

    /// Largest |f| over the pieces [1].
    pub fn max_abs_shape(&self) -> f64 {
        self.across
            .iter()
            .map(QuadPiece::max_abs)
            .fold(0.0, f64::max)
    }

    /// Across-web extent [y_lo, y_hi] [m] (`[0, 0]` without pieces).
    pub fn y_range(&self) -> [f64; 2] {
        match (self.across.first(), self.across.last()) {
            (Some(a), Some(b)) => [a.y_lo, b.y_hi],
            _ => [0.0; 2],
        }
    }
}

/// One of the four integrated quantities.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Component {
    /// Potential V.
    V,
    /// Field along the span, E_u.
    Eu,
    /// Field across the web, E_y.
    Ey,
    /// Field normal to the patch, E_h.
    Eh,
}

impl Component {
    const ALL: [Component; 4] = [Component::V, Component::Eu, Component::Ey, Component::Eh];

    /// SI unit of the component.
    pub fn unit(self) -> &'static str {
        match self {
            Component::V => "V",
            _ => "V/m",
        }
    }
}

impl fmt::Display for Component {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            Component::V => "potential V",
            Component::Eu => "field E_u",
            Component::Ey => "field E_y",
            Component::Eh => "field E_h",
        })
    }
}

/// Why a patch's field could not be computed.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum KernelError {
    /// The quadrature did not reach its target.
    #[error(
        "the integration of the {component} did not converge: estimated error {achieved:.3e} {unit} is above the target {target:.3e} {unit}; loosen the relative tolerance (1e-6 to 1e-10 is usual) or move the point farther from the web",
        unit = component.unit()
    )]
    NotConverged {
        /// The component that missed its target.
        component: Component,
        /// Its summed error estimate [V or V/m].
        achieved: f64,
        /// The target it was held to [V or V/m].
        target: f64,
    },
    /// The relative tolerance is not a positive number below 1.
    #[error("relative tolerance must be a number in (0, 1), got {rel_tol:e}; use e.g. 1e-9")]
    InvalidTolerance {
        /// The tolerance given.
        rel_tol: f64,
    },
    /// The patch description is unusable.
    #[error("invalid charged patch: {reason}")]
    InvalidPatch {
        /// What is wrong and what is expected.
        reason: String,
    },
    /// The field point is not finite or lies on the patch.
    #[error("field point [{:e}, {:e}, {:e}] m (patch frame) {reason}", p[0], p[1], p[2])]
    InvalidPoint {
        /// The point [m].
        p: [f64; 3],
        /// What is wrong.
        reason: String,
    },
    /// The integrand was not finite somewhere (should not happen for valid input).
    #[error(
        "the integrand of the {component} was not finite at some point; the point is probably too close to the patch edge: move it at least 1 µm away"
    )]
    NonFinite {
        /// The component concerned.
        component: Component,
    },
}

/// Work done by one numerical evaluation.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct FieldStats {
    /// Evaluations of the across-web integrals (4-vectors).
    pub evaluations: u32,
    /// τ intervals integrated (2 or 1 without bisection).
    pub intervals: u32,
}

/// True if the patch is uniform: no decay (λ = ∞ or L/λ < 1e-13) and a single piece with c₁ = c₂ = 0.
pub fn patch_is_uniform(patch: &Patch) -> bool {
    let no_decay = patch.decay_length.is_infinite() || patch.len / patch.decay_length < 1e-13;
    no_decay
        && patch.across.len() == 1
        && patch.across[0].c[1] == 0.0
        && patch.across[0].c[2] == 0.0
}

/// The error scales [S_V [V], S_E [V/m]] at `p`: |V| and |E| of the uniform rectangle covering
/// the patch with density max|σ| (see the header).
pub fn error_scale(patch: &Patch, p: [f64; 3]) -> [f64; 2] {
    let [y_lo, y_hi] = patch.y_range();
    let g = rectangle_geometry(0.0, patch.len, y_lo, y_hi, p);
    let k = (patch.amplitude * COULOMB).abs() * patch.max_abs_shape();
    [k * g.v.abs(), k * g.e_norm()]
}

/// V [V] and E [V/m] of `patch` at `p = [u, y, h]` [m] (patch frame). The estimated error is at
/// most `rel_tol` × [`SAFETY`] × S_V for V and × S_E for each E component ([`error_scale`]);
/// otherwise the result is [`KernelError::NotConverged`]. Uses the closed form when
/// [`patch_is_uniform`], else the far-field rule, the closed-form moments
/// ([`super::moments`]) or the fast path ([`super::kronrod`]), the first that vouches for its
/// result, else the double-exponential rule.
pub fn patch_field(patch: &Patch, p: [f64; 3], rel_tol: f64) -> Result<LocalField, KernelError> {
    check(patch, p, rel_tol)?;
    if patch_is_uniform(patch) {
        let [y_lo, y_hi] = patch.y_range();
        let sigma = patch.amplitude * patch.across[0].c[0];
        return Ok(uniform_rectangle(0.0, patch.len, y_lo, y_hi, sigma, p));
    }
    if let Some((f, _, _)) = fast_paths(patch, p, rel_tol)? {
        return Ok(f);
    }
    numerical(patch, p, rel_tol, de_sequence()).map(|(f, _)| f)
}

/// As [`patch_field`] but always by the double-exponential rule, even for a uniform patch
/// (the reference, for tests).
pub fn patch_field_numerical(
    patch: &Patch,
    p: [f64; 3],
    rel_tol: f64,
) -> Result<LocalField, KernelError> {
    patch_field_with_stats(patch, p, rel_tol).map(|(f, _)| f)
}

/// As [`patch_field_numerical`], also returning the work done.
pub fn patch_field_with_stats(
    patch: &Patch,
    p: [f64; 3],
    rel_tol: f64,
) -> Result<(LocalField, FieldStats), KernelError> {
    check(patch, p, rel_tol)?;
    numerical(patch, p, rel_tol, de_sequence())
}

fn check(patch: &Patch, p: [f64; 3], rel_tol: f64) -> Result<(), KernelError> {
    if !(rel_tol > 0.0 && rel_tol < 1.0) {
        return Err(KernelError::InvalidTolerance { rel_tol });
    }
    patch.validate()?;
    if !p.iter().all(|x| x.is_finite()) {
        return Err(KernelError::InvalidPoint {
            p,
            reason: "is not finite".into(),
        });
    }
    let [y_lo, y_hi] = patch.y_range();
    let du = (-p[0]).max(p[0] - patch.len).max(0.0);
    let dy = (y_lo - p[1]).max(p[1] - y_hi).max(0.0);
    let dist = (du * du + dy * dy + p[2] * p[2]).sqrt();
    if dist < MIN_DISTANCE {
        return Err(KernelError::InvalidPoint {
            p,
            reason: format!(
                "is {dist:.1e} m from the charged patch, i.e. on it; keep points at least 1 µm away"
            ),
        });
    }
    Ok(())
}

/// The integrand in τ of the four components, each divided by its error scale.
pub(super) struct Integrand<'a> {
    pieces: &'a [QuadPiece],
    u: f64,
    y: f64,
    h: f64,
    inv_lambda: f64,
    inv_norm: [f64; 4],
    /// Anchor a₀ of the current interval and ρ₀ = √(a₀² + c²): a = a₀·cosh s + ρ₀·sinh s.
    pub(super) a0: f64,
    pub(super) rho0: f64,
}

impl Integrand<'_> {
    #[inline]
    pub(super) fn eval(&self, s: f64) -> [f64; 4] {
        // a = c·sinh(τ₀ + s) written from the anchor, so that a short interval far from the
        // foot keeps full precision; sinh s and cosh s − 1 from expm1 (accurate near 0).
        let em = s.exp_m1();
        let ie = 1.0 / (1.0 + em);
        let sh = 0.5 * em * (1.0 + ie);
        let chm1 = 0.5 * em * em * ie;
        let a = self.a0 + (self.a0 * chm1 + self.rho0 * sh);
        // da/ds = a₀ sinh s + ρ₀ cosh s = √(a² + c²).
        let mut w = self.a0 * sh + self.rho0 * (1.0 + chm1);
        if self.inv_lambda != 0.0 {
            w *= (-(self.u + a) * self.inv_lambda).exp();
        }
        let g = inner_across(self.pieces, a, self.y, self.h).components(a, self.h);
        [
            w * g[0] * self.inv_norm[0],
            w * g[1] * self.inv_norm[1],
            w * g[2] * self.inv_norm[2],
            w * g[3] * self.inv_norm[3],
        ]
    }
}

/// Work state of one numerical evaluation: the integrand, the record of the current
/// interval's abscissae and 4-vectors in call order, and the running sums.
struct Driver<'a> {
    f: Integrand<'a>,
    /// The rule's abscissae on [−1, 1] in call order (empty if unknown: no batching).
    seq: &'static [f64],
    /// Current interval: τ = c·s + d.
    c: Cell<f64>,
    d: Cell<f64>,
    /// τ of each recorded call, in call order.
    taus: [Cell<f64>; DE_CAP],
    /// The 4 components at each recorded call.
    vals: [[Cell<f64>; DE_CAP]; 4],
    len: Cell<usize>,
    cursor: Cell<usize>,
    evaluations: Cell<u32>,
    /// First component found non-finite, if any.
    non_finite: Cell<Option<usize>>,
    sum: [f64; 4],
    err: [f64; 4],
    intervals: u32,
}

/// Power of two (2⁵⁰⁰) by which integrands are multiplied inside the rule (exactly undone
/// after). The crate reports δ² instead of δ when ln δ_k / ln δ_(k−1) is near 2, which is
/// optimistic; with values ~10¹⁵⁰ that ratio is ≈ 1, so its estimate is always the plain
/// difference δ of the last two levels.
const LIFT: f64 = 3.273_390_607_896_142e150;

/// Fewest abscissae whose result is accepted (levels 25 → 49): the difference between the
/// 13- and 25-point results sometimes vanishes by accident.
const MIN_POINTS: usize = 49;

/// Number of abscissae the rule has used after each of its levels.
const LEVEL_ENDS: [usize; 7] = [7, 13, 25, 49, 97, 193, 385];

/// The rule's abscissae on [−1, 1] in the order it asks for them, found once by a dry run
/// (a run on [−1, 1] that never meets its target sees τ = s exactly). Empty if the crate does
/// not behave as expected, which only disables batching.
fn de_sequence() -> &'static [f64] {
    static SEQ: OnceLock<Vec<f64>> = OnceLock::new();
    SEQ.get_or_init(|| {
        let rec = RefCell::new(Vec::with_capacity(DE_CAP));
        let out = double_exponential::integrate(
            |x| {
                rec.borrow_mut().push(x);
                2.0 + (7.3 * x).sin()
            },
            -1.0,
            1.0,
            -1.0,
        );
        let seq = rec.into_inner();
        if seq.len() == DE_CAP && out.num_function_evaluations as usize == DE_CAP {
            seq
        } else {
            Vec::new()
        }
    })
}

/// Order in which the components are integrated: the most peaked first.
const ORDER: [usize; 4] = [3, 0, 1, 2];

impl Driver<'_> {
    /// Component `k` at `tau`, times `scale`: replayed if the rule asks for the recorded
    /// abscissa at this position of its sequence, else computed (with the rest of its level).
    #[inline]
    fn value(&self, tau: f64, k: usize, scale: f64) -> f64 {
        let i = self.cursor.get();
        self.cursor.set(i + 1);
        if i >= self.len.get() {
            self.fill_level(i);
        }
        let len = self.len.get();
        if i < len && self.taus[i].get() == tau {
            return self.vals[k][i].get() * scale;
        }
        // No batching (unknown sequence) or an unexpected abscissa: compute it alone.
        let v = self.eval(tau);
        if i == len && i < DE_CAP {
            self.taus[i].set(tau);
            for (vk, x) in self.vals.iter().zip(v) {
                vk[i].set(x);
            }
            self.len.set(len + 1);
        }
        v[k] * scale
    }

    #[inline]
    fn eval(&self, tau: f64) -> [f64; 4] {
        let v = self.f.eval(tau);
        self.evaluations.set(self.evaluations.get() + 1);
        if self.non_finite.get().is_none() {
            self.non_finite.set(v.iter().position(|x| !x.is_finite()));
        }
        v
    }

    /// Records the integrand at every abscissa of the level that contains call `i`: the rule
    /// always asks for a whole level, and independent evaluations in one loop run about twice
    /// as fast as one at a time.
    fn fill_level(&self, i: usize) {
        let len = self.len.get();
        if i != len || self.seq.len() != DE_CAP {
            return;
        }
        let end = LEVEL_ENDS
            .iter()
            .copied()
            .find(|&e| e > i)
            .unwrap_or(DE_CAP);
        let (c, d) = (self.c.get(), self.d.get());
        for j in len..end {
            let tau = c * self.seq[j] + d;
            let v = self.eval(tau);
            self.taus[j].set(tau);
            for (vk, x) in self.vals.iter().zip(v) {
                vk[j].set(x);
            }
        }
        self.len.set(end);
    }

    /// max|component k| over the recorded points, for the rounding floor of its estimate.
    fn magnitude(&self, k: usize) -> f64 {
        self.vals[k][..self.len.get()]
            .iter()
            .map(|v| v.get().abs())
            .fold(0.0, f64::max)
    }

    /// Runs the rule on component `k` over [ta, tb] for absolute target `target`; returns
    /// the integral and its error estimate: δ = |I_N − I_N′| over the last level (N ≥ 49),
    /// floored at [`ROUNDOFF`] × (tb − ta) × max|component|.
    fn run(&self, k: usize, ta: f64, tb: f64, target: f64) -> (f64, f64) {
        // The crate stops when its estimate is below a quarter of what it is given.
        let integrate = |t: f64| {
            self.cursor.set(0);
            double_exponential::integrate(|x| self.value(x, k, LIFT), ta, tb, 4.0 * t * LIFT)
        };
        let mut out = integrate(target);
        let mut floor = ROUNDOFF * self.magnitude(k) * (tb - ta);
        if (out.num_function_evaluations as usize) < MIN_POINTS {
            // Stopped at 25 points: the change from 13 points is not trusted; go on until
            // the next level changes less than this one did (or reaches rounding).
            out = integrate(target.min((0.5 * out.error_estimate / LIFT).max(floor)));
            floor = ROUNDOFF * self.magnitude(k) * (tb - ta);
        }
        (out.integral / LIFT, (out.error_estimate / LIFT).max(floor))
    }

    /// Integrates the components in `need` over [ta, tb], bisecting where a target is missed.
    fn interval(&mut self, ta: f64, tb: f64, target: f64, need: [bool; 4], depth: u32) {
        self.intervals += 1;
        // Compute the rule's first level (same abscissae, same order) in one batch.
        self.c.set(0.5 * (tb - ta));
        self.d.set(0.5 * (ta + tb));
        self.len.set(0);
        self.fill_level(0);
        let mut refine = [false; 4];
        for &k in &ORDER {
            if !need[k] {
                continue;
            }
            let (val, est) = self.run(k, ta, tb, target);
            if est <= target || depth >= MAX_DEPTH {
                self.sum[k] += val;
                self.err[k] += est;
            } else {
                refine[k] = true;
            }
        }
        if refine.iter().any(|&r| r) {
            let tm = 0.5 * (ta + tb);
            self.interval(ta, tm, 0.5 * target, refine, depth + 1);
            self.interval(tm, tb, 0.5 * target, refine, depth + 1);
        }
    }
}

/// What both numerical paths need: the error scales (in units of A/(4πε₀)), the τ intervals
/// with their anchors, and whether the substitution scale c is a distance to an end (c = 0).
struct Setup {
    nv: f64,
    ne: f64,
    c: f64,
    c_is_end: bool,
    spans: [Span; 2],
    n_spans: usize,
}

/// Error scales and τ intervals of `patch` at `p` (module header, points 1–2); `None` for a
/// zero density.
fn prepare(patch: &Patch, p: [f64; 3]) -> Result<Option<Setup>, KernelError> {
    let [u, y, h] = p;
    let [y_lo, y_hi] = patch.y_range();
    let fmax = patch.max_abs_shape();
    if patch.amplitude == 0.0 || fmax == 0.0 {
        return Ok(None);
    }
    // Error scales in units of A/(4πε₀).
    let g = rectangle_geometry(0.0, patch.len, y_lo, y_hi, p);
    let nv = fmax * g.v.abs();
    let ne = fmax * g.e_norm();
    if !(nv > 0.0 && ne > 0.0 && nv.is_finite() && ne.is_finite()) {
        return Err(KernelError::InvalidPoint {
            p,
            reason: "gives no finite error scale; keep points at least 1 µm from the patch".into(),
        });
    }
    let a_lo = -u;
    let a_hi = patch.len - u;
    let dy = (y_lo - y).max(y - y_hi).max(0.0);
    let mut c = (h * h + dy * dy).sqrt();
    let c_is_end = c == 0.0;
    if c_is_end {
        c = a_lo.abs().min(a_hi.abs());
    }
    let c2 = c * c;
    let none = Span {
        a0: 0.0,
        rho0: c,
        s_lo: 0.0,
        s_hi: 0.0,
    };
    let mut spans = [none; 2];
    let n_spans;
    let (rho_lo, rho_hi) = ((a_lo * a_lo + c2).sqrt(), (a_hi * a_hi + c2).sqrt());
    if a_lo < 0.0 && a_hi > 0.0 {
        // Foot inside: anchor at the foot, a = c·sinh s.
        let (slo, shi) = ((a_lo / c).asinh(), (a_hi / c).asinh());
        if shi - slo > SPLIT_SPAN {
            spans[0].s_lo = slo;
            spans[1].s_hi = shi;
            n_spans = 2;
        } else {
            (spans[0].s_lo, spans[0].s_hi) = (slo, shi);
            n_spans = 1;
        }
    } else {
        // Foot outside: anchor at the end nearer to it; the s range is a stable asinh difference.
        let span = asinh_difference(a_lo, a_hi, c2, rho_lo, rho_hi);
        spans[0] = if a_lo >= 0.0 {
            Span {
                a0: a_lo,
                rho0: rho_lo,
                s_lo: 0.0,
                s_hi: span,
            }
        } else {
            Span {
                a0: a_hi,
                rho0: rho_hi,
                s_lo: -span,
                s_hi: 0.0,
            }
        };
        n_spans = 1;
    }
    Ok(Some(Setup {
        nv,
        ne,
        c,
        c_is_end,
        spans,
        n_spans,
    }))
}

/// The integrand of `patch` at `p` for setup `st` (anchor at the foot until a span sets it).
fn integrand<'a>(patch: &'a Patch, p: [f64; 3], st: &Setup) -> Integrand<'a> {
    Integrand {
        pieces: &patch.across,
        u: p[0],
        y: p[1],
        h: p[2],
        inv_lambda: 1.0 / patch.decay_length,
        inv_norm: [1.0 / st.nv, 1.0 / st.ne, 1.0 / st.ne, 1.0 / st.ne],
        a0: 0.0,
        rho0: st.c,
    }
}

/// Scales the normalised sums back to V and E, or the error if an estimate misses `eps`.
fn finish(
    patch: &Patch,
    st: &Setup,
    sum: [f64; 4],
    err: [f64; 4],
    eps: f64,
) -> Result<LocalField, KernelError> {
    let k = patch.amplitude * COULOMB;
    let norm = [st.nv, st.ne, st.ne, st.ne];
    for (i, comp) in Component::ALL.iter().enumerate() {
        if err[i].is_nan() || err[i] > eps {
            let s = k.abs() * norm[i];
            return Err(KernelError::NotConverged {
                component: *comp,
                achieved: err[i] * s,
                target: eps * s,
            });
        }
    }
    Ok(LocalField {
        v: k * st.nv * sum[0],
        e: [k * st.ne * sum[1], k * st.ne * sum[2], k * st.ne * sum[3]],
    })
}

/// The fast path ([`super::kronrod`]): `Ok(None)` when it cannot vouch for a result (the
/// caller then runs the double-exponential rule).
fn fast(
    patch: &Patch,
    p: [f64; 3],
    rel_tol: f64,
    st: &Setup,
) -> Result<Option<(LocalField, FastSum)>, KernelError> {
    if st.c_is_end {
        return Ok(None);
    }
    let eps = rel_tol * SAFETY;
    let mut f = integrand(patch, p, st);
    let Some(out) = kronrod::integrate(
        &mut f,
        &st.spans[..st.n_spans],
        patch.len / patch.decay_length,
        eps,
    ) else {
        return Ok(None);
    };
    Ok(Some((finish(patch, st, out.sum, out.err, eps)?, out)))
}

/// The fast paths, far then near: the far-field tensor rule ([`super::far::far_field`]) where
/// it applies and its estimate meets the targets, else the closed-form moments
/// ([`super::moments`]) where their bound meets the targets, else the Gauss–Kronrod plan
/// ([`super::kronrod`]); with the estimated errors [V, V/m ×3] and the across-web evaluations
/// (0 for the tensor rule and the moments). `Ok(None)` when none vouches for a result.
fn fast_paths(
    patch: &Patch,
    p: [f64; 3],
    rel_tol: f64,
) -> Result<Option<(LocalField, [f64; 4], u32)>, KernelError> {
    let eps = rel_tol * SAFETY;
    if let Some(far) = far::far_field(patch, p, eps) {
        let ([sv, se], est) = (far.scale, far.estimate);
        if est[0] <= eps * sv && est[1..].iter().all(|e| *e <= eps * se) {
            return Ok(Some((far.field, est, 0)));
        }
    }
    if let Some((f, b)) = moments::moment_field(patch, p, rel_tol) {
        return Ok(Some((f, b.claimed, 0)));
    }
    let Some(st) = prepare(patch, p)? else {
        return Ok(Some((LocalField::default(), [0.0; 4], 0)));
    };
    let k = (patch.amplitude * COULOMB).abs();
    Ok(fast(patch, p, rel_tol, &st)?.map(|(f, s)| {
        let e = [
            s.err[0] * k * st.nv,
            s.err[1] * k * st.ne,
            s.err[2] * k * st.ne,
            s.err[3] * k * st.ne,
        ];
        (f, e, s.evaluations)
    }))
}

/// As [`patch_field`] for a non-uniform patch, by the closed-form moments of
/// [`super::moments`] only: the field and the claimed error bounds, or `None` where that path
/// does not apply or cannot meet the targets (for tests and benchmarks).
pub fn patch_field_moments(
    patch: &Patch,
    p: [f64; 3],
    rel_tol: f64,
) -> Result<Option<(LocalField, MomentBound)>, KernelError> {
    check(patch, p, rel_tol)?;
    Ok(moments::moment_field(patch, p, rel_tol))
}

/// As [`patch_field`] for a non-uniform patch, by the fast paths only (far-field tensor rule,
/// closed-form moments, Gauss–Kronrod plan): the field, its estimated errors [V, V/m ×3] and
/// the across-web evaluations (0 for the tensor rule and the moments), or `None` where none
/// vouches for its result (for tests and benchmarks).
pub fn patch_field_fast(
    patch: &Patch,
    p: [f64; 3],
    rel_tol: f64,
) -> Result<Option<(LocalField, [f64; 4], u32)>, KernelError> {
    check(patch, p, rel_tol)?;
    fast_paths(patch, p, rel_tol)
}

/// The double-exponential path; `seq` is the rule's abscissa sequence ([`de_sequence`]), or
/// empty to evaluate one abscissa at a time.
fn numerical(
    patch: &Patch,
    p: [f64; 3],
    rel_tol: f64,
    seq: &'static [f64],
) -> Result<(LocalField, FieldStats), KernelError> {
    let Some(st) = prepare(patch, p)? else {
        return Ok((LocalField::default(), FieldStats::default()));
    };
    let mut d = Driver {
        f: integrand(patch, p, &st),
        seq,
        c: Cell::new(0.0),
        d: Cell::new(0.0),
        taus: [const { Cell::new(0.0) }; DE_CAP],
        vals: [const { [const { Cell::new(0.0) }; DE_CAP] }; 4],
        len: Cell::new(0),
        cursor: Cell::new(0),
        evaluations: Cell::new(0),
        non_finite: Cell::new(None),
        sum: [0.0; 4],
        err: [0.0; 4],
        intervals: 0,
    };
    let eps = rel_tol * SAFETY;
    let all = [true; 4];
    let share = if st.n_spans == 2 { 0.5 * eps } else { eps };
    for sp in &st.spans[..st.n_spans] {
        (d.f.a0, d.f.rho0) = (sp.a0, sp.rho0);
        d.interval(sp.s_lo, sp.s_hi, share, all, 0);
    }
    if let Some(i) = d.non_finite.get() {
        return Err(KernelError::NonFinite {
            component: Component::ALL[i],
        });
    }
    let field = finish(patch, &st, d.sum, d.err, eps)?;
    let stats = FieldStats {
        evaluations: d.evaluations.get(),
        intervals: d.intervals,
    };
    Ok((field, stats))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn tilt_patch() -> Patch {
        Patch {
            len: 1.25,
            amplitude: 1e-6,
            decay_length: 0.4,
            across: vec![QuadPiece {
                y_lo: -0.5,
                y_hi: 0.5,
                c: [1.0, 3.0, 0.0],
            }],
        }
    }

    #[test]
    fn the_rule_sequence_is_found() {
        // The crate's rule: 385 abscissae on [−1, 1], the first one the midpoint, then ±x pairs.
        let seq = de_sequence();
        assert_eq!(seq.len(), DE_CAP);
        assert_eq!(seq[0], 0.0);
        assert!(seq.iter().all(|x| x.abs() < 1.0));
        assert_eq!(seq[1], -seq[2]);
    }

    #[test]
    fn batched_and_single_evaluation_agree_exactly() {
        // Batching only changes when the integrand is computed, not what the rule sees.
        let pt = tilt_patch();
        for p in [
            [0.6, 0.1, 5e-4],
            [1.4, 0.7, 0.02],
            [-0.1, 0.2, 0.0],
            [0.3, -0.6, 1.0],
        ] {
            let (a, sa) = numerical(&pt, p, 1e-9, de_sequence()).unwrap();
            let (b, sb) = numerical(&pt, p, 1e-9, &[]).unwrap();
            assert_eq!(a, b, "{p:?}");
            assert_eq!(sa, sb);
        }
    }

    #[test]
    fn replay_costs_about_one_component() {
        // Four components from one set of abscissae: each interval's evaluations never exceed
        // the rule's cap, i.e. no component is integrated independently.
        let pt = tilt_patch();
        for p in [[0.6, 0.1, 5e-4], [0.3, -0.6, 1.0]] {
            let (_, st) = patch_field_with_stats(&pt, p, 1e-9).unwrap();
            assert!(st.evaluations <= st.intervals * DE_CAP as u32, "{st:?}");
        }
    }

    #[test]
    fn lifted_estimate_is_the_plain_difference() {
        // With the lift the crate's estimate is δ = |I_25 − I_13| itself, never δ². I_13 is
        // found by replaying the first 13 values and zeros after them: the 25-point level then
        // only halves the step, giving I_13/2.
        let f = |x: f64| (3.0 * x).exp() / (1.0 + x * x);
        let out = double_exponential::integrate(|x| f(x) * LIFT, 0.0, 1.0, f64::MAX);
        assert_eq!(out.num_function_evaluations, 25);
        let calls = Cell::new(0);
        let half = double_exponential::integrate(
            |x| {
                calls.set(calls.get() + 1);
                if calls.get() <= 13 { f(x) } else { 0.0 }
            },
            0.0,
            1.0,
            f64::MAX,
        );
        let delta = (out.integral / LIFT - 2.0 * half.integral).abs();
        assert!(
            (out.error_estimate / LIFT - delta).abs() <= 1e-12 * delta,
            "{out:?} {delta:e}"
        );
    }

    #[test]
    fn messages_say_how_to_fix() {
        let e = KernelError::NotConverged {
            component: Component::Eh,
            achieved: 2e-3,
            target: 1e-3,
        };
        let m = e.to_string();
        assert!(
            m.contains("field E_h") && m.contains("V/m") && m.contains("loosen"),
            "{m}"
        );
        let e = KernelError::InvalidTolerance { rel_tol: 0.0 };
        assert!(e.to_string().contains("e.g. 1e-9"));
    }
}
