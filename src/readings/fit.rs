//! # The self-consistent fit of the readings
//!
//! Solves for the densities x the readings determine when the line's
//! passive devices make the readings a nonlinear function of x (see the
//! parent module for the method, the convergence argument and the
//! symbols). Here: the readings as linear functionals of the segment
//! amplitudes ([`Probe`]), the nonlinear forward model ([`Problem::state`]),
//! the affine model of one regime ([`Problem::rows`]), the weighted least
//! squares solve ([`solve`]), the regime iteration and its fallback
//! ([`Problem::fit`]).

use crate::charge::{ChargeProfile, Regime, charge_profile_arrivals, charge_profile_in_regimes};
use crate::field::{FieldError, WebField};
use crate::model::geometry::meter_geometry;
use crate::model::{EliminatorKind, Line, ReadingValue};
use crate::units::EPS0;

/// The regime iteration stops after this many affine solves.
pub const MAX_ITERATIONS: usize = 32;

/// The bisection fallback halves its bracket at most this many times
/// (enough to reach adjacent doubles from any finite bracket).
pub const MAX_BISECTIONS: usize = 2100;

/// One reading as an affine functional of the segment amplitudes A_k
/// [C/m²]: the predicted reading is c_0 + Σ_k c_k·A_k, with c_0 what the
/// isolated conductors' given charges alone put there.
#[derive(Debug, Clone)]
pub struct Probe {
    /// Index into `line.readings`.
    pub reading: usize,
    /// c_k: the normal field at the meter per unit A_k [V/m per C/m²], or
    /// for a density reading the decay and across-web shape on its own
    /// segment (0 elsewhere) [1].
    pub coeffs: Vec<f64>,
    /// c_0: the normal field at the meter of the isolated conductors' given
    /// charges, with no charge on the web [V/m] (0 for a density reading
    /// and without charged conductors).
    pub offset: f64,
    /// The reading r_m (V/m, or C/m² for a density reading).
    pub r: f64,
    /// Its uncertainty u_m (same unit).
    pub u: f64,
}

impl Probe {
    /// c_0 + Σ_k c_k·A_k for the amplitudes `a` [C/m²].
    pub fn predict(&self, a: &[f64]) -> f64 {
        self.offset + self.linear(a)
    }

    /// Σ_k c_k·A_k, the part that scales with the amplitudes `a` [C/m²].
    pub fn linear(&self, a: &[f64]) -> f64 {
        self.coeffs.iter().zip(a).map(|(c, a)| c * a).sum()
    }
}

/// One row of the least squares: r_m ≈ b_m + Σ_j M_mj x_j.
pub struct Row {
    /// Unknown-independent part b_m.
    pub b: f64,
    /// Coefficients M_mj.
    pub m: Vec<f64>,
    /// The reading r_m.
    pub r: f64,
    /// Uncertainty u_m.
    pub u: f64,
}

/// The nonlinear forward model at one x: what every passive device does.
#[derive(Debug, Clone, PartialEq)]
pub struct State {
    /// Whether each eliminator ionises (powered bars always).
    pub active: Vec<bool>,
    /// Passive devices: |E| at the tips from the charge arriving [V/m].
    pub tips: Vec<Option<f64>>,
    /// The regime of every eliminator.
    pub regimes: Vec<Regime>,
    /// Segment amplitudes A_k [C/m²] of the profile built from x.
    pub amplitudes: Vec<f64>,
}

/// What the fit gives.
#[derive(Debug, Clone, PartialEq)]
pub struct Fit {
    /// The fitted densities x_j [C/m²].
    pub x: Vec<f64>,
    /// The forward model at x.
    pub state: State,
    /// Affine solves made (regime iteration and fallback).
    pub iterations: usize,
    /// Whether the regime at x is the one x was solved in, so x is the
    /// weighted least-squares solution of the exact (nonlinear) model
    /// within that regime.
    pub self_consistent: bool,
}

/// At a passive device's tips: the field per unit A_k for every segment k
/// [V/m per C/m²], and the fixed part's field [V/m].
type TipFields = (Vec<[f64; 3]>, [f64; 3]);

/// The line, its fitted segments and the unit fields the fit needs.
pub struct Problem<'a> {
    /// The line.
    pub line: &'a Line,
    /// Segment indices of the unknowns.
    pub unknowns: &'a [usize],
    /// The field of every segment at unit amplitude, the web's own charge
    /// only ([`crate::field::Scene::webs_linear`]).
    pub models: &'a [WebField<'a>],
    /// The field of the isolated conductors' given charges alone
    /// ([`crate::field::Scene::given_part`]), added once to every predicted
    /// field (`None` when they carry none).
    pub fixed: Option<&'a WebField<'a>>,
    /// The segment structure (amplitudes unused).
    pub base: &'a ChargeProfile,
    /// Per eliminator, passive only: the field at its tips per unit A_k,
    /// for every segment k [V/m per C/m²], and the fixed part's field
    /// there [V/m].
    tip_fields: Vec<Option<TipFields>>,
}

impl<'a> Problem<'a> {
    /// Prepares the problem: the field every unit segment gives at every
    /// passive device's tips.
    pub fn new(
        line: &'a Line,
        unknowns: &'a [usize],
        models: &'a [WebField<'a>],
        fixed: Option<&'a WebField<'a>>,
        base: &'a ChargeProfile,
    ) -> Result<Self, FieldError> {
        let mut tip_fields = Vec::with_capacity(line.eliminators.len());
        for e in &line.eliminators {
            if e.kind != EliminatorKind::Passive {
                tip_fields.push(None);
                continue;
            }
            let (tip, _) =
                meter_geometry(&line.path.spans[e.span], e.along, 0.0, e.distance, e.side);
            let mut per = Vec::with_capacity(models.len());
            for m in models {
                per.push(m.at(tip, false)?.e);
            }
            let f0 = match fixed {
                Some(f) => f.at(tip, false)?.e,
                None => [0.0; 3],
            };
            tip_fields.push(Some((per, f0)));
        }
        Ok(Problem {
            line,
            unknowns,
            models,
            fixed,
            base,
            tip_fields,
        })
    }

    fn overrides(&self, x: &[f64]) -> Vec<(usize, f64)> {
        self.unknowns
            .iter()
            .copied()
            .zip(x.iter().copied())
            .collect()
    }

    /// The forward model at x: in path order each passive device ionises
    /// when |E| at its tips, from the charge arriving (upstream devices
    /// applied, this and later passive devices not), reaches its onset;
    /// then the profile with every device's response and each device's
    /// regime for the density arriving.
    pub fn state(&self, x: &[f64]) -> State {
        let line = self.line;
        let ov = self.overrides(x);
        let mut active: Vec<bool> = line
            .eliminators
            .iter()
            .map(|e| e.kind == EliminatorKind::Powered)
            .collect();
        let mut tips = vec![None; line.eliminators.len()];
        for (i, e) in line.eliminators.iter().enumerate() {
            let Some(Some((per, f0))) = self.tip_fields.get(i) else {
                continue;
            };
            let (p, _) = charge_profile_arrivals(line, &ov, &active);
            let mut f = *f0;
            for (g, ek) in p.segments.iter().zip(per) {
                for (fc, ec) in f.iter_mut().zip(ek) {
                    *fc += g.amplitude * ec;
                }
            }
            let t = (f[0] * f[0] + f[1] * f[1] + f[2] * f[2]).sqrt();
            tips[i] = Some(t);
            active[i] = t >= e.onset.unwrap_or(f64::INFINITY);
        }
        let (p, arriving) = charge_profile_arrivals(line, &ov, &active);
        let regimes = line
            .eliminators
            .iter()
            .zip(arriving.iter().zip(&active))
            .map(|(e, (&s, &on))| Regime::of(e, s, on))
            .collect();
        State {
            active,
            tips,
            regimes,
            amplitudes: p.segments.iter().map(|g| g.amplitude).collect(),
        }
    }

    /// The readings with the meters at `distances` [m], as functionals of
    /// the amplitudes.
    pub fn probes(&self, distances: &[f64]) -> Result<Vec<Probe>, FieldError> {
        let line = self.line;
        let meter = line.meter;
        let mut out = Vec::with_capacity(line.readings.len());
        for (i, r) in line.readings.iter().enumerate() {
            let span = &line.path.spans[r.span];
            let s = span.s_start + r.along;
            let field = match r.value {
                ReadingValue::Field(e) => Some(e),
                ReadingValue::Voltage(v, Some(cal)) => Some(v / cal),
                ReadingValue::Voltage(v, None) => Some(v / super::DEFAULT_CALIBRATION),
                ReadingValue::Sigma(_) => None,
            };
            match (field, r.value) {
                (Some(e), _) => {
                    let d = distances.get(i).copied().unwrap_or(r.distance);
                    let (at, n) = meter_geometry(span, r.along, r.across, d, r.side);
                    let normal = |e: [f64; 3]| e[0] * n[0] + e[1] * n[1] + e[2] * n[2];
                    let mut coeffs = Vec::with_capacity(self.models.len());
                    for model in self.models {
                        coeffs.push(normal(model.at(at, false)?.e));
                    }
                    let offset = match self.fixed {
                        Some(f) => normal(f.at(at, false)?.e),
                        None => 0.0,
                    };
                    out.push(Probe {
                        reading: i,
                        coeffs,
                        offset,
                        r: e,
                        u: meter.accuracy * e.abs() + meter.offset,
                    });
                }
                (None, ReadingValue::Sigma(sig)) => {
                    let k = self.base.segment_at(s);
                    let mut coeffs = vec![0.0; self.base.segments.len()];
                    coeffs[k] = crate::charge::decay(
                        s - self.base.segments[k].s_start,
                        self.base.decay_length,
                    ) * self.base.across.f(r.across);
                    out.push(Probe {
                        reading: i,
                        coeffs,
                        offset: 0.0,
                        r: sig,
                        u: meter.accuracy * sig.abs() + EPS0 * meter.offset,
                    });
                }
                (None, _) => {}
            }
        }
        Ok(out)
    }

    /// The amplitudes with every eliminator held in `regimes` [C/m²].
    fn amplitudes_in(&self, regimes: &[Regime], x: &[f64]) -> Vec<f64> {
        charge_profile_in_regimes(self.line, &self.overrides(x), regimes)
            .0
            .segments
            .iter()
            .map(|g| g.amplitude)
            .collect()
    }

    /// The exact affine model of one regime: A(x) = A0 + Σ_j x_j T_j with
    /// A0 = A(0) and T_j = A(e_j) − A(0) (exact, since every response is
    /// affine in a fixed regime and the imposed densities enter linearly),
    /// and the rows b_m = c_0 + c_m·A0, M_mj = c_m·T_j (the fixed part c_0
    /// counted once, in b_m).
    pub fn rows(&self, probes: &[Probe], regimes: &[Regime]) -> Vec<Row> {
        let n = self.unknowns.len();
        let a0 = self.amplitudes_in(regimes, &vec![0.0; n]);
        let t: Vec<Vec<f64>> = (0..n)
            .map(|j| {
                let e: Vec<f64> = (0..n).map(|i| if i == j { 1.0 } else { 0.0 }).collect();
                self.amplitudes_in(regimes, &e)
                    .iter()
                    .zip(&a0)
                    .map(|(a, b)| a - b)
                    .collect()
            })
            .collect();
        probes
            .iter()
            .map(|p| Row {
                b: p.predict(&a0),
                m: t.iter().map(|tj| p.linear(tj)).collect(),
                r: p.r,
                u: p.u,
            })
            .collect()
    }

    /// Φ(x) = Σ_m ((r_m − r̂_m(x))/u_m)² of the exact forward model [1].
    fn objective(&self, probes: &[Probe], x: &[f64]) -> f64 {
        let a = self.state(x).amplitudes;
        probes
            .iter()
            .map(|p| ((p.r - p.predict(&a)) / p.u).powi(2))
            .sum()
    }

    /// The self-consistent fit, starting in the regimes `start`; `None`
    /// when the readings do not determine the unknowns in that regime.
    pub fn fit(&self, probes: &[Probe], start: Vec<Regime>) -> Option<Fit> {
        let n = self.unknowns.len();
        let mut regimes = start;
        let mut visited: Vec<(Vec<Regime>, Vec<f64>)> = Vec::new();
        let mut iterations = 0;
        while iterations < MAX_ITERATIONS {
            let rows = self.rows(probes, &regimes);
            let x = match solve(&rows, n) {
                Some((x, _)) => x,
                None if visited.is_empty() => return None,
                None => break,
            };
            iterations += 1;
            let state = self.state(&x);
            if state.regimes == regimes {
                return Some(Fit {
                    x,
                    state,
                    iterations,
                    self_consistent: true,
                });
            }
            visited.push((regimes, x));
            if visited.iter().any(|(r, _)| *r == state.regimes) {
                break; // a cycle: the regime iteration cannot settle.
            }
            regimes = state.regimes;
        }
        // Fallback. One reading, one unknown: bisect r̂(x) − r over a
        // bracket of the points visited.
        let mut candidates: Vec<Vec<f64>> = visited.into_iter().map(|(_, x)| x).collect();
        if let ([p], 1) = (probes, n)
            && let Some(x) = self.bisect(p, &candidates)
        {
            // Polish: the affine solve in the regime found there.
            let regimes = self.state(&[x]).regimes;
            iterations += 1;
            if let Some((xr, _)) = solve(&self.rows(probes, &regimes), n) {
                let state = self.state(&xr);
                if state.regimes == regimes {
                    return Some(Fit {
                        x: xr,
                        state,
                        iterations,
                        self_consistent: true,
                    });
                }
            }
            candidates.push(vec![x]);
        }
        // Otherwise the point visited with the smallest exact Φ.
        let x = candidates
            .into_iter()
            .map(|x| (self.objective(probes, &x), x))
            .min_by(|a, b| a.0.total_cmp(&b.0))
            .map(|(_, x)| x)?;
        let state = self.state(&x);
        Some(Fit {
            x,
            state,
            iterations,
            self_consistent: false,
        })
    }

    /// Bisection of h(x) = r̂(x) − r between two of `points` where h has
    /// opposite signs (the closest such pair); returns the end of the final
    /// bracket with the smaller |h|, or `None` without a sign change.
    fn bisect(&self, p: &Probe, points: &[Vec<f64>]) -> Option<f64> {
        let h = |x: f64| p.predict(&self.state(&[x]).amplitudes) - p.r;
        let pts: Vec<(f64, f64)> = points
            .iter()
            .filter_map(|x| x.first().copied())
            .map(|x| (x, h(x)))
            .filter(|(x, v)| x.is_finite() && v.is_finite())
            .collect();
        let mut best: Option<((f64, f64), (f64, f64))> = None;
        for (i, a) in pts.iter().enumerate() {
            for b in &pts[i + 1..] {
                if a.1 * b.1 < 0.0
                    && best.is_none_or(|(c, d)| (a.0 - b.0).abs() < (c.0 - d.0).abs())
                {
                    best = Some((*a, *b));
                }
            }
        }
        let (mut a, mut b) = best?;
        for _ in 0..MAX_BISECTIONS {
            let mid = 0.5 * (a.0 + b.0);
            if mid == a.0 || mid == b.0 {
                break;
            }
            let hm = h(mid);
            if hm == 0.0 {
                return Some(mid);
            }
            if hm * a.1 < 0.0 {
                b = (mid, hm);
            } else {
                a = (mid, hm);
            }
        }
        Some(if a.1.abs() <= b.1.abs() { a.0 } else { b.0 })
    }
}

/// Solves the weighted normal equations; returns x̂ and
/// P = (MᵀWM)⁻¹MᵀW, W = diag(u_m⁻²).
pub fn solve(rows: &[Row], n: usize) -> Option<(Vec<f64>, Vec<Vec<f64>>)> {
    let mut a = vec![vec![0.0; n]; n];
    for r in rows {
        let w = 1.0 / (r.u * r.u);
        for (ai, mi) in a.iter_mut().zip(&r.m) {
            for (aij, mj) in ai.iter_mut().zip(&r.m) {
                *aij += w * mi * mj;
            }
        }
    }
    let inv = invert(a)?;
    let p: Vec<Vec<f64>> = (0..n)
        .map(|i| {
            rows.iter()
                .map(|r| (0..n).map(|j| inv[i][j] * r.m[j]).sum::<f64>() / (r.u * r.u))
                .collect()
        })
        .collect();
    let x = (0..n)
        .map(|i| {
            rows.iter()
                .zip(&p[i])
                .map(|(r, pij)| pij * (r.r - r.b))
                .sum()
        })
        .collect();
    Some((x, p))
}

/// Gauss–Jordan inversion with partial pivoting; `None` when singular.
fn invert(mut a: Vec<Vec<f64>>) -> Option<Vec<Vec<f64>>> {
    let n = a.len();
    let scale = a.iter().flatten().fold(0.0f64, |m, v| m.max(v.abs()));
    let mut inv: Vec<Vec<f64>> = (0..n)
        .map(|i| (0..n).map(|j| if i == j { 1.0 } else { 0.0 }).collect())
        .collect();
    for c in 0..n {
        let p = (c..n).max_by(|&i, &j| a[i][c].abs().total_cmp(&a[j][c].abs()))?;
        if a[p][c].abs().is_nan() || a[p][c].abs() <= 1e-14 * scale {
            return None;
        }
        a.swap(c, p);
        inv.swap(c, p);
        let d = a[c][c];
        for j in 0..n {
            a[c][j] /= d;
            inv[c][j] /= d;
        }
        for i in 0..n {
            if i != c {
                let f = a[i][c];
                if f != 0.0 {
                    for j in 0..n {
                        a[i][j] -= f * a[c][j];
                        inv[i][j] -= f * inv[c][j];
                    }
                }
            }
        }
    }
    Some(inv)
}
