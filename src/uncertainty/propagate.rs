//! The uncertainty stage's work (see the module above): the inputs' ranges
//! from the charge stage, the assessment runs with unit charges, and the
//! ranges of every finding and place of interest.

use super::{
    ConductorBounds, InputRange, PointBounds, RangeSource, ShareBounds, SpanBounds, Uncertainty,
};
use crate::assess::{
    Assessment, BoundBasis, Bounds, Finding, FindingNote, Share, ThresholdProfile,
    assess_with_conductors, judge,
};
use crate::charge::{ChargeProfile, charge_profile_with};
use crate::field::{ConductorResult, FieldError, FieldMap, PointField, Scene};
use crate::model::Line;
use crate::readings::ReadingsResult;
use crate::units::Dim;
use rayon::prelude::*;
use std::collections::HashMap;

/// Relative agreement [1] asked of two runs for a finding to count as
/// constant, vanishing, doubling or quadrupling: far above the solver's
/// 1e-9 and rounding, far below any change a rule could make.
const AGREE: f64 = 1e-6;

/// Bounds every finding of `assessment` and the field at every place of
/// interest over the inputs' ranges, re-judges the findings' verdicts on
/// their ranges (see [`crate::assess::judge`]) and re-sorts them. `charge`,
/// `points` and `assessment` are the nominal results of the same `scene`,
/// `line`, `profiles` and `readings`.
pub fn bound(
    scene: &Scene,
    line: &Line,
    profiles: &[ThresholdProfile],
    readings: &ReadingsResult,
    charge: &ChargeProfile,
    points: &FieldMap,
    assessment: &mut Assessment,
) -> Result<Uncertainty, FieldError> {
    let inputs = input_ranges(line, readings, charge);
    if inputs.is_empty() {
        return Ok(Uncertainty {
            inputs,
            points: points.points.iter().map(exact_point).collect(),
            ..Uncertainty::default()
        });
    }
    // Runs: no charge, twice the nominal charge, the nominal charge (for
    // the spans' meter readings and the conductors, which the assessment
    // does not keep), then each input alone at 1 C/m².
    let mut to_run = vec![
        scaled(charge, 0.0),
        scaled(charge, 2.0),
        scaled(charge, 1.0),
    ];
    for inp in &inputs {
        let mut unit = scaled(charge, 0.0);
        if let Some(g) = unit.segments.get_mut(inp.segment) {
            g.amplitude = 1.0;
        }
        to_run.push(unit);
    }
    let runs = to_run
        .par_iter()
        .map(|c| run(scene, line, profiles, c))
        .collect::<Result<Vec<_>, FieldError>>()?;
    let (zero, double, nominal, units) = (&runs[0], &runs[1], &runs[2], &runs[3..]);
    let unit_charges = &to_run[3..];

    for f in assessment.findings.iter_mut() {
        bound_finding(f, &inputs, zero, double, units);
    }
    let findings = std::mem::take(&mut assessment.findings);
    *assessment = Assessment {
        findings: Vec::new(),
        verdict: assessment.verdict,
        assumptions: std::mem::take(&mut assessment.assumptions),
    }
    .with_findings(findings);

    let point_bounds = points
        .points
        .iter()
        .enumerate()
        .map(|(i, p)| {
            // Per input: the field and potential per unit amplitude, the
            // no-charge run taken off, at the point (`None`) or of one span's
            // share (`Some(j)`).
            let per_unit = |share: Option<usize>| -> Vec<([f64; 3], f64)> {
                let pick = |run: &Run| -> ([f64; 3], f64) {
                    let Some(q) = run.points.points.get(i) else {
                        return ([0.0; 3], 0.0);
                    };
                    match share {
                        None => (q.e, q.v),
                        Some(j) => q
                            .contributions
                            .get(j)
                            .map_or(([0.0; 3], 0.0), |c| (c.e, c.v)),
                    }
                };
                let (e0, v0) = pick(zero);
                units
                    .iter()
                    .map(|u| {
                        let (e, v) = pick(u);
                        ([e[0] - e0[0], e[1] - e0[1], e[2] - e0[2]], v - v0)
                    })
                    .collect()
            };
            let (e, v, components) = field_range(p.e, p.v, &inputs, &per_unit(None));
            let spans = p
                .contributions
                .iter()
                .enumerate()
                .map(|(j, c)| {
                    let (e, v, components) = field_range(c.e, c.v, &inputs, &per_unit(Some(j)));
                    ShareBounds {
                        span: c.span.clone(),
                        e,
                        v,
                        components,
                    }
                })
                .collect();
            PointBounds {
                e,
                v,
                components,
                spans,
            }
        })
        .collect();
    let spans = line
        .path
        .spans
        .iter()
        .enumerate()
        .map(|(j, sp)| {
            let ends = |c: &ChargeProfile| c.ends_between(sp.s_start, sp.s_end);
            let (s0, s1) = ends(charge);
            let mut start = [s0, s0];
            let mut end = [s1, s1];
            let mut peak_spread = 0.0;
            for (inp, c) in inputs.iter().zip(unit_charges) {
                let (u0, u1) = ends(c);
                widen_signed(&mut start, inp, u0);
                widen_signed(&mut end, inp, u1);
                peak_spread += inp.deviation() * c.peak_between(sp.s_start, sp.s_end);
            }
            let peak = charge.peak_between(sp.s_start, sp.s_end);
            let meter = nominal.meters.get(j).copied().flatten().map(|m0| {
                let g0 = zero.meters.get(j).copied().flatten().unwrap_or(0.0);
                // Affine in the charge where conductors carry a given charge:
                // |h(e_k) − h(0)| ≤ g(e_k) + g(0).
                let spread: f64 = inputs
                    .iter()
                    .zip(units)
                    .map(|(inp, u)| {
                        inp.deviation() * (u.meters.get(j).copied().flatten().unwrap_or(0.0) + g0)
                    })
                    .sum();
                [(m0 - spread).max(0.0), m0 + spread]
            });
            SpanBounds {
                sigma_start: start,
                sigma_end: end,
                sigma_peak: [(peak - peak_spread).max(0.0), peak + peak_spread],
                meter,
            }
        })
        .collect();
    let conductors = nominal
        .conductors
        .iter()
        .enumerate()
        .map(|(i, c0)| {
            let base = zero.conductors.get(i);
            let mut charge_range = [c0.charge, c0.charge];
            let mut potential = [c0.potential, c0.potential];
            for (inp, u) in inputs.iter().zip(units) {
                if let (Some(cu), Some(b)) = (u.conductors.get(i), base) {
                    widen_signed(&mut charge_range, inp, cu.charge - b.charge);
                    widen_signed(&mut potential, inp, cu.potential - b.potential);
                }
            }
            let v2 = |r: [f64; 2]| {
                let hi = r[0].abs().max(r[1].abs());
                let lo = if r[0] <= 0.0 && r[1] >= 0.0 {
                    0.0
                } else {
                    r[0].abs().min(r[1].abs())
                };
                [lo * lo, hi * hi]
            };
            ConductorBounds {
                charge: charge_range,
                potential,
                spark_energy: c0.capacitance.map(|c| {
                    let [lo, hi] = v2(potential);
                    [0.5 * c * lo, 0.5 * c * hi]
                }),
            }
        })
        .collect();
    Ok(Uncertainty {
        runs: runs.len(),
        inputs,
        points: point_bounds,
        spans,
        conductors,
    })
}

/// Widens a signed range [lo, hi] of a quantity linear in the amplitudes
/// by one input: x_k [unit per C/m²] times its deviation interval.
fn widen_signed(r: &mut [f64; 2], inp: &InputRange, x: f64) {
    let (dl, dh) = (inp.low - inp.nominal, inp.high - inp.nominal);
    r[0] += (dl * x).min(dh * x);
    r[1] += (dl * x).max(dh * x);
}

/// The segments' ranges (module docs): fitted segments from the readings'
/// bounds, the others from the charge stage at every entry's σ ∓ u.
fn input_ranges(line: &Line, readings: &ReadingsResult, charge: &ChargeProfile) -> Vec<InputRange> {
    let active: Vec<bool> = {
        let mut a = vec![true; line.eliminators.len()];
        for st in &readings.eliminators {
            if let Some(slot) = a.get_mut(st.index) {
                *slot = st.active;
            }
        }
        a
    };
    let fits = &readings.segments;
    let overrides = |pick: &dyn Fn(&crate::readings::SegmentFit) -> f64| -> Vec<(usize, f64)> {
        fits.iter().map(|f| (f.index, pick(f))).collect()
    };
    let shifted = |sign: f64| {
        let mut l = line.clone();
        for e in &mut l.charge {
            e.sigma += sign * e.tolerance;
        }
        l
    };
    let (lo_line, hi_line) = (shifted(-1.0), shifted(1.0));
    let lo = charge_profile_with(&lo_line, &overrides(&|f| f.low), &active);
    let hi = charge_profile_with(&hi_line, &overrides(&|f| f.high), &active);
    // Which source moves which segment: each one alone at its upper end.
    let nominal_overrides = overrides(&|f| f.fitted);
    let moved_by = |profile: ChargeProfile| -> Vec<bool> {
        profile
            .segments
            .iter()
            .zip(&charge.segments)
            .map(|(a, b)| a.amplitude != b.amplitude)
            .collect()
    };
    let mut sources: Vec<Vec<RangeSource>> = vec![Vec::new(); charge.segments.len()];
    for (j, e) in line.charge.iter().enumerate() {
        if e.tolerance > 0.0 {
            let mut l = line.clone();
            if let Some(x) = l.charge.get_mut(j) {
                x.sigma += x.tolerance;
            }
            let moved = moved_by(charge_profile_with(&l, &nominal_overrides, &active));
            for (k, m) in moved.into_iter().enumerate() {
                if m && let Some(s) = sources.get_mut(k) {
                    s.push(RangeSource::Entry(j));
                }
            }
        }
    }
    for (m, f) in fits.iter().enumerate() {
        if f.high > f.low {
            let mut o = nominal_overrides.clone();
            if let Some(x) = o.get_mut(m) {
                x.1 = f.high;
            }
            let moved = moved_by(charge_profile_with(line, &o, &active));
            let on_it: Vec<usize> = readings
                .readings
                .iter()
                .enumerate()
                .filter(|(_, r)| charge.segment_at(r.s) == f.index)
                .map(|(i, _)| i)
                .collect();
            for (k, mv) in moved.into_iter().enumerate() {
                if mv && let Some(s) = sources.get_mut(k) {
                    s.extend(on_it.iter().map(|&i| RangeSource::Reading(i)));
                }
            }
        }
    }
    charge
        .segments
        .iter()
        .enumerate()
        .filter_map(|(k, g)| {
            let (a, b) = (lo.segments.get(k)?.amplitude, hi.segments.get(k)?.amplitude);
            let low = a.min(b).min(g.amplitude);
            let high = a.max(b).max(g.amplitude);
            (high > low).then(|| InputRange {
                segment: k,
                s_start: g.s_start,
                nominal: g.amplitude,
                low,
                high,
                sources: sources.get(k).cloned().unwrap_or_default(),
            })
        })
        .collect()
}

/// `charge` with every amplitude times `factor`.
fn scaled(charge: &ChargeProfile, factor: f64) -> ChargeProfile {
    let mut c = charge.clone();
    for g in &mut c.segments {
        g.amplitude *= factor;
    }
    c
}

/// The assessment (the rules of `assess_with_conductors`) and the field at
/// the places of interest for one charge, in the scene.
/// What one run gives.
struct Run {
    /// The assessment's findings.
    assessment: Assessment,
    /// The field at the places of interest.
    points: FieldMap,
    /// Each span's largest meter-equivalent reading at the default
    /// calibration distance [V], where a meter can be.
    meters: Vec<Option<f64>>,
    /// The conductors' results (empty without a conductors' solve).
    conductors: Vec<ConductorResult>,
}

fn run(
    scene: &Scene,
    line: &Line,
    profiles: &[ThresholdProfile],
    charge: &ChargeProfile,
) -> Result<Run, FieldError> {
    let web = scene.web(charge);
    let at: Vec<[f64; 3]> = line.points.iter().map(|p| p.at).collect();
    let points = web.solve(&at, true)?;
    let conductors = match scene.conductors() {
        Some(_) => Some(web.conductor_results()?),
        None => None,
    };
    let assessment =
        assess_with_conductors(line, charge, &web, &points, conductors.as_deref(), profiles)?;
    let meters =
        crate::assess::meter::every_span(line, &web, crate::assess::meter::DEFAULT_METER_DISTANCE)?
            .into_iter()
            .map(|m| m.map(|m| m.reading()))
            .collect();
    Ok(Run {
        assessment,
        points,
        meters,
        conductors: conductors.unwrap_or_default(),
    })
}

/// What a finding's range is taken on: its margin where it has a finite
/// positive limit (the margin stays a seminorm where the rule picks its
/// worst subject), else its value; and the factor back to the value.
fn measure(f: &Finding) -> (f64, f64) {
    if f.limit.is_finite() && f.limit > 0.0 {
        (f.margin, f.limit)
    } else {
        (f.value, 1.0)
    }
}

/// Identifies a finding across runs.
fn key(f: &Finding) -> String {
    format!("{}\u{1f}{}\u{1f}{:?}", f.profile, f.rule, f.subject)
}

/// The measure of each finding of `a` by key; a key met twice is ambiguous
/// (`None`).
fn by_key(a: &Assessment) -> HashMap<String, Option<f64>> {
    let mut m: HashMap<String, Option<f64>> = HashMap::new();
    for f in &a.findings {
        m.entry(key(f))
            .and_modify(|v| *v = None)
            .or_insert(Some(measure(f).0));
    }
    m
}

fn agree(x: f64, y: f64, scale: f64) -> bool {
    (x - y).abs() <= AGREE * scale.abs() + f64::MIN_POSITIVE
}

/// Sets `f.bounds` and `f.verdict` from the runs.
fn bound_finding(f: &mut Finding, inputs: &[InputRange], zero: &Run, double: &Run, units: &[Run]) {
    if f.bounds.basis == BoundBasis::ReadingsCheck {
        return;
    }
    if f.notes
        .iter()
        .any(|n| matches!(n, FindingNote::Onset { .. }))
    {
        f.bounds.basis = BoundBasis::DeviceState;
        return;
    }
    let k = key(f);
    let (m, scale) = measure(f);
    let look = |a: &Assessment| by_key(a).get(&k).copied().flatten();
    let (Some(m0), Some(m2)) = (look(&zero.assessment), look(&double.assessment)) else {
        return not_bounded(f);
    };
    let mut mu = Vec::with_capacity(units.len());
    for u in units {
        match look(&u.assessment) {
            Some(x) => mu.push(x),
            None => return not_bounded(f),
        }
    }
    let big = m
        .abs()
        .max(m2.abs())
        .max(mu.iter().fold(0.0, |a: f64, x| a.max(x.abs())));
    if agree(m0, m, big) && agree(m2, m, big) && mu.iter().all(|&x| agree(x, m, big)) {
        f.bounds = Bounds {
            basis: BoundBasis::ChargeIndependent,
            ..Bounds::exact(f.value)
        };
        return;
    }
    let energy = f.dim == Dim::Energy;
    let factor = if energy { 4.0 } else { 2.0 };
    if !(agree(m0, 0.0, big) && agree(m2, factor * m, big))
        || m < 0.0
        || mu.iter().any(|&x| x < 0.0)
    {
        return not_bounded(f);
    }
    // Work on g = m (a magnitude) or g = √m (an energy's |V|).
    let root = |x: f64| if energy { x.max(0.0).sqrt() } else { x };
    let g0 = root(m);
    let widths: Vec<f64> = inputs
        .iter()
        .zip(&mu)
        .map(|(inp, &x)| inp.deviation() * root(x))
        .collect();
    let spread: f64 = widths.iter().sum();
    let back = |g: f64| if energy { g * g } else { g };
    let (lo, hi) = (back((g0 - spread).max(0.0)), back(g0 + spread));
    let mut shares: Vec<Share> = widths
        .iter()
        .enumerate()
        .filter(|(_, w)| **w > 0.0)
        .map(|(i, &w)| Share {
            input: i,
            width: (back(g0 + w) - back(g0)) * scale,
        })
        .collect();
    shares.sort_by(|a, b| b.width.total_cmp(&a.width));
    f.bounds = Bounds {
        // The nominal value itself lies inside whatever rounding did.
        low: (lo * scale).min(f.value),
        high: (hi * scale).max(f.value),
        basis: if energy {
            BoundBasis::Quadratic
        } else {
            BoundBasis::Linear
        },
        shares,
    };
    f.verdict = judge(&f.bounds, f.warn, f.fail);
}

/// A finding the runs could not bound: open above.
fn not_bounded(f: &mut Finding) {
    f.bounds = Bounds {
        low: f.value.min(0.0),
        high: f64::INFINITY,
        basis: BoundBasis::NotBounded,
        shares: Vec::new(),
    };
    f.verdict = judge(&f.bounds, f.warn, f.fail);
}

fn exact_point(p: &PointField) -> PointBounds {
    let (e, v, components) = field_range(p.e, p.v, &[], &[]);
    PointBounds {
        e,
        v,
        components,
        spans: Vec::new(),
    }
}

/// The range of V, each component of **E** and |**E**| (module docs) from
/// the nominal field `e0` [V/m] and potential `v0` [V] and, per input, the
/// field and potential per unit amplitude with the no-charge run taken off
/// [V/m, V per C/m²]: (|**E**| range, V range, component ranges).
fn field_range(
    e0: [f64; 3],
    v0: f64,
    inputs: &[InputRange],
    per_unit: &[([f64; 3], f64)],
) -> ([f64; 2], [f64; 2], [[f64; 2]; 3]) {
    let mut v = [v0, v0];
    let mut components = e0.map(|x| [x, x]);
    let mut triangle = 0.0;
    for (inp, (e, vk)) in inputs.iter().zip(per_unit) {
        widen_signed(&mut v, inp, *vk);
        for (r, x) in components.iter_mut().zip(e) {
            widen_signed(r, inp, *x);
        }
        triangle += inp.deviation() * (e[0] * e[0] + e[1] * e[1] + e[2] * e[2]).sqrt();
    }
    let mag = (e0[0] * e0[0] + e0[1] * e0[1] + e0[2] * e0[2]).sqrt();
    let far = |r: [f64; 2]| r[0].abs().max(r[1].abs());
    let near = |r: [f64; 2]| {
        if r[0] <= 0.0 && r[1] >= 0.0 {
            0.0
        } else {
            r[0].abs().min(r[1].abs())
        }
    };
    let c = components;
    let box_hi = (far(c[0]).powi(2) + far(c[1]).powi(2) + far(c[2]).powi(2)).sqrt();
    let box_lo = (near(c[0]).powi(2) + near(c[1]).powi(2) + near(c[2]).powi(2)).sqrt();
    let e = [
        (mag - triangle).max(box_lo).max(0.0).min(mag),
        (mag + triangle).min(box_hi).max(mag),
    ];
    (e, v, components)
}
