//! Words for the core's typed notes: reading warnings, what opened a charge
//! segment, how the readings were fitted. The core returns these as data;
//! every writer (terminal, Markdown, HTML, CSV, JSON) takes its text from
//! here, so a note reads the same everywhere.

use crate::charge::{ChargeSegment, SegmentOrigin};
use crate::model::Line;
use crate::readings::{FitMethod, ROLLER_CLEARANCE, ReadingNote};
use crate::report::finding_text::meter_distance_text;
use crate::units::{Dim, format_quantity_sig};

/// Numbers in notes read to three significant digits, as the findings'
/// values (results.json keeps full precision).
fn format_quantity(x: f64, d: Dim) -> String {
    format_quantity_sig(x, d, 3)
}

/// A reading's warning in words.
pub fn reading_note(n: &ReadingNote) -> String {
    match n {
        ReadingNote::NearRoller { suppression: None } => format!(
            "the meter is within {ROLLER_CLEARANCE} meter distances of a roller the web touches: the grounded roller suppresses the reading — take readings mid-span"
        ),
        ReadingNote::NearRoller {
            suppression: Some(k),
        } => near_roller_screened(*k),
        ReadingNote::AboveAirBreakdown { field } => format!(
            "the reading implies {}, at or above the 3 MV/m that air can hold: check the unit and the meter",
            format_quantity(*field, Dim::Field)
        ),
        ReadingNote::FarFromWeb => "the meter is farther from the web than a third of its width: the reading mostly measures the web's total charge, not its local density".to_string(),
        ReadingNote::AssumedCalibration => "a voltage reading without `calibrated_at:`: 25 mm (1 inch) assumed, the usual calibration — give the meter's calibrated distance".to_string(),
        ReadingNote::LargeResidual {
            residual,
            density,
            shared,
        } => {
            let why = if *shared {
                "inconsistent with the other readings on this stretch of web: the charge may vary across the web more than the profile says, or a charging point upstream is missing from `charge:`"
            } else {
                "the model cannot match it: check the meter position, the side, and the geometry near the meter"
            };
            format!(
                "residual {} is more than 3 times the reading's uncertainty: {why}",
                format_quantity(
                    *residual,
                    if *density {
                        Dim::SurfaceChargeDensity
                    } else {
                        Dim::Field
                    }
                )
            )
        }
        ReadingNote::NotReproduced {
            residual,
            tolerance,
            density,
            shared,
        } => {
            let d = if *density {
                Dim::SurfaceChargeDensity
            } else {
                Dim::Field
            };
            let why = if *shared {
                "the readings on this stretch of web disagree by more than their tolerances, or the model misses something between them"
            } else {
                "no charge at this meter's segment gives this reading (a passive device may switch on at its onset in between): check the reading, the meter position and the devices downstream"
            };
            format!(
                "NOT REPRODUCED: the fitted charge gives a residual of {} at this meter, more than the reading's tolerance {}: {why}",
                format_quantity(*residual, d),
                format_quantity(*tolerance, d)
            )
        }
    }
}

/// The near-roller warning when the scene has conductors: by how much
/// their induced charge suppresses the reading (`k` = with ÷ without).
fn near_roller_screened(k: f64) -> String {
    format!(
        "the meter is within {ROLLER_CLEARANCE} meter distances of a roller the web touches: the charge induced on the conductors makes it read {} the field of the web's charge alone ({}) — σ above includes this screening, but a reading mid-span depends less on the geometry",
        screening_factor(k),
        screening_change(k)
    )
}

/// A screening factor as a multiplier: `0.62×`.
pub fn screening_factor(k: f64) -> String {
    format!("{k:.2}×")
}

/// A screening factor as a change: `suppressed by 38 %`, `raised by 5 %`,
/// or, at or below zero, the induced charge outweighing the web's own field.
fn screening_change(k: f64) -> String {
    let pct = (1.0 - k) * 100.0;
    if k <= 0.0 {
        "the induced charge outweighs the web's own field: the meter reads zero or the opposite sign".to_string()
    } else if pct >= 0.0 {
        format!("suppressed by {pct:.0} %")
    } else {
        format!("raised by {:.0} %", -pct)
    }
}

/// A candidate bar position the planner refused, in words:
/// `powered S2 at 500 mm, above, 40 mm from the web: 35 mm from grounded
/// plate F1, closer than the 120 mm clearance (3 bar distances)`.
pub fn candidate_refusal(line: &Line, r: &crate::plan::Refused) -> String {
    use crate::plan::{CONDUCTOR_CLEARANCE, Refusal};
    let why = match r.reason {
        Refusal::NearConductor {
            conductor,
            distance,
            clearance,
        } => format!(
            "{} from grounded {} {}, closer than the {} clearance ({CONDUCTOR_CLEARANCE} bar distances, as kept from rollers the web touches)",
            format_quantity(distance, Dim::Length),
            conductor.kind(line),
            conductor.id(line),
            format_quantity(clearance, Dim::Length)
        ),
    };
    format!(
        "{}: {why}",
        super::plan_words::candidate_text(&r.candidate, line)
    )
}

/// What opened a charge segment, in words.
pub fn segment_origin(line: &Line, g: &ChargeSegment) -> String {
    let base = match &g.origin {
        SegmentOrigin::PathStart => "start of path (uncharged until a charge entry)".to_string(),
        SegmentOrigin::CarriedIn => "carried in".to_string(),
        SegmentOrigin::Entry { entry } => line
            .charge
            .get(*entry)
            .map(|e| e.at.clone())
            .unwrap_or_default(),
        SegmentOrigin::Eliminator { eliminator, active } => match line.eliminators.get(*eliminator)
        {
            Some(e) => format!(
                "{} ({} eliminator{})",
                e.id,
                e.kind.text(),
                if *active { "" } else { ", not ionising" }
            ),
            None => String::new(),
        },
    };
    if g.from_readings {
        format!("{base} (from readings)")
    } else {
        base
    }
}

/// How the readings were fitted and bounded, in words.
pub fn fit_method(m: &FitMethod) -> String {
    format!(
        "weighted least squares over {} reading(s) for {} segment density(ies); bounds = the exact worst case of the reading errors (accuracy {} of the displayed reading + offset {}; the fit is linear in the readings) at every combination of meter distances moved by ± {}{}",
        m.readings,
        m.unknowns,
        format_quantity(m.accuracy, Dim::Percent),
        format_quantity(m.offset, Dim::Field),
        format_quantity(m.distance_tolerance, Dim::Length),
        " (one meter at a time beyond 8 meters)",
    ) + &passive_fit(m)
}

/// With passive devices: how their piecewise response entered the fit;
/// empty without them.
fn passive_fit(m: &FitMethod) -> String {
    if m.passive == 0 {
        return String::new();
    }
    if m.self_consistent {
        format!(
            "; {} passive device(s): each device's regime (off, on and passing |σ| ≤ residual, on at its floor, on proportional) fixed and solved exactly, until the regimes at the fitted densities are the ones solved in ({} solve(s)); bounds in that regime",
            m.passive, m.iterations
        )
    } else {
        format!(
            "; {} passive device(s): NO self-consistent fit: the regimes do not settle after {} solve(s) (a device switches at its onset between the solutions); the closest fit is shown and its residuals are from the final profile",
            m.passive, m.iterations
        )
    }
}

/// A reading as entered, in words (`5 kV at 25 mm (assumed)`).
pub fn reading_value(v: &crate::model::ReadingValue) -> String {
    use crate::model::ReadingValue;
    match *v {
        ReadingValue::Field(e) => format_quantity(e, Dim::Field),
        ReadingValue::Voltage(volts, c) => format!(
            "{} at {}{}",
            format_quantity(volts, Dim::Voltage),
            format_quantity(
                c.unwrap_or(crate::readings::DEFAULT_CALIBRATION),
                Dim::Length
            ),
            if c.is_none() { " (assumed)" } else { "" }
        ),
        ReadingValue::Sigma(sg) => format_quantity(sg, Dim::SurfaceChargeDensity),
    }
}

/// A reading's warnings in words, joined with `; `.
pub fn reading_notes(notes: &[ReadingNote]) -> String {
    notes
        .iter()
        .map(reading_note)
        .collect::<Vec<_>>()
        .join("; ")
}

/// What a finding is about, in words (`S6 (R5-R6)`, `OP1`, `E1 (powered on S3 (R2-R3))`).
pub fn subject_label(line: &Line, s: &crate::assess::Subject) -> String {
    use crate::assess::Subject;
    let bar = |i: usize| line.eliminators.get(i);
    match *s {
        Subject::Span(i) => line
            .path
            .spans
            .get(i)
            .map(|s| s.label())
            .unwrap_or_default(),
        Subject::Point(i) => line.points.get(i).map(|p| p.id.clone()).unwrap_or_default(),
        Subject::Roller(i) => line
            .rollers
            .get(i)
            .map(|r| r.id.clone())
            .unwrap_or_default(),
        Subject::Web => "web".to_string(),
        Subject::Eliminator(i) => bar(i)
            .map(|e| {
                format!(
                    "{} ({} on {})",
                    e.id,
                    e.kind.text(),
                    line.path.spans[e.span].label()
                )
            })
            .unwrap_or_default(),
        Subject::EliminatorPair(i, j) => match (bar(i), bar(j)) {
            (Some(a), Some(b)) => format!("{} and {}", a.id, b.id),
            _ => String::new(),
        },
        Subject::Conductor(i) => line
            .conductors
            .get(i)
            .map(|c| format!("{} ({})", c.id, c.kind.text()))
            .unwrap_or_default(),
    }
}

fn zone_label(line: &Line, z: usize) -> String {
    line.zones.get(z).map(|z| z.label()).unwrap_or_default()
}

/// One note of a finding, in words.
pub fn finding_note(line: &Line, n: &crate::assess::FindingNote) -> String {
    use crate::assess::FindingNote;
    use crate::units::format_si;
    let len = |v: f64| format_quantity(v, Dim::Length);
    match n {
        FindingNote::InZones(zones) => format!(
            "in {}",
            zones
                .iter()
                .map(|&z| zone_label(line, z))
                .collect::<Vec<_>>()
                .join(", ")
        ),
        FindingNote::ZoneParts(parts) => format!(
            "judged on the part inside the zone only: {} along the span",
            parts
                .iter()
                .map(|&(a, b)| format!("{} to {}", len(a), len(b)))
                .collect::<Vec<_>>()
                .join(" and ")
        ),
        FindingNote::Capacitance {
            assumed: true, ..
        } => "C = 150 pF (IEC 61000-4-2 body model)".to_string(),
        FindingNote::Capacitance { capacitance, .. } => {
            format!("C = {}", format_quantity(*capacitance, Dim::Capacitance))
        }
        FindingNote::BodyPotential(v) => format!("|V| = {}", format_quantity(*v, Dim::Voltage)),
        FindingNote::FailAtZoneMie { zone, mie } => format!(
            "fail at the MIE of {} = {}",
            zone_label(line, *zone),
            format_quantity(*mie, Dim::Energy)
        ),
        FindingNote::Separation {
            span,
            distance,
            allowed,
            within,
        } => format!(
            "span {} at {} from the item: a meter may read up to {} within {}",
            line.path.spans.get(*span).map(|s| s.label()).unwrap_or_default(),
            len(*distance),
            format_quantity_sig(*allowed, Dim::Voltage, 3),
            len(*within)
        ),
        FindingNote::Meter(m) => format!(
            "a meter {} {} the web on span {}, {} along it and {} across, would see E = {} and read {} at {}",
            meter_distance_text(m.distance),
            m.side.text(),
            line.path.spans.get(m.span).map(|s| s.label()).unwrap_or_default(),
            len(m.along),
            len(m.across),
            format_quantity_sig(m.field.abs(), Dim::Field, 3),
            format_quantity_sig(m.reading(), Dim::Voltage, 3),
            meter_distance_text(m.distance)
        ),
        FindingNote::WebPotential(v) => format!(
            "the web itself is at {} there (information: the rule compares what a meter reads)",
            format_quantity_sig(*v, Dim::Voltage, 3)
        ),
        FindingNote::NearZones(near) => near
            .iter()
            .map(|&(z, d)| {
                if d == 0.0 {
                    format!("in {}", zone_label(line, z))
                } else {
                    format!("{} from {}", len(d), zone_label(line, z))
                }
            })
            .collect::<Vec<_>>()
            .join(", "),
        FindingNote::Roller(c) => format!(
            "analytic estimate (no conductors' solve): {}",
            roller_capacitance_words(c)
        ),
        FindingNote::RollerAnalytic(c) => format!(
            "the analytic estimate would give {}: {}",
            format_quantity(c.capacitance, Dim::Capacitance),
            roller_capacitance_words(c)
        ),
        FindingNote::Solved(sc) => {
            let lumped = match sc.lumped {
                Some(l) => format!(
                    " (the solved body {} + lumped {} to ground{})",
                    format_quantity(sc.capacitance - l, Dim::Capacitance),
                    format_quantity(l, Dim::Capacitance),
                    if sc.lumped_assumed {
                        ", the assumed feet-to-floor default"
                    } else {
                        ", as given"
                    }
                ),
                None => String::new(),
            };
            format!(
                "from the conductors' boundary-element solve ({} panels): floating potential V = {}, C = {}{lumped}, ½CV² = {}",
                sc.panels,
                format_quantity(sc.potential, Dim::Voltage),
                format_quantity(sc.capacitance, Dim::Capacitance),
                format_quantity(
                    0.5 * sc.capacitance * sc.potential * sc.potential,
                    Dim::Energy
                )
            )
        }
        FindingNote::Earthed => {
            "earthed (grounded): held at 0 V, so no shock and no spark (value 0)".to_string()
        }
        FindingNote::Person => {
            "a person of `conductors:`: potential and capacitance of the body from the solve (body cylinder + feet to floor), not a point in the air".to_string()
        }
        FindingNote::InsulatingArea { radius, length } => {
            let area = 2.0 * std::f64::consts::PI * radius * length;
            format!(
                "A = 2πrL = 2π × {} × {} = {}, the whole roller surface taken as chargeable",
                len(*radius),
                len(*length),
                format_quantity_sig(area, Dim::Area, 3)
            )
        }
        FindingNote::Gap(g) => {
            use crate::assess::gap::{GAP_MAX, GAP_MIN};
            let first = match g.first_gap {
                Some(x) => format!(
                    "at this density the gap first breaks down at g = {}: gap discharges must occur as the web leaves the roller",
                    len(x)
                ),
                None => format!(
                    "no gap from {} to {} breaks down at this density",
                    len(GAP_MIN),
                    len(GAP_MAX)
                ),
            };
            format!(
                "limit = the lowest σ_B = ε0·V_B(g)/(g + t/εr) over g = {} to {}, reached at g = {} (t = {}, εr = {}; Paschen's law, air at 1 atm); {first}",
                len(GAP_MIN),
                len(GAP_MAX),
                len(g.lowest_at),
                len(g.thickness),
                g.eps_r
            )
        }
        FindingNote::BreakdownVoltage {
            thickness,
            strength,
        } => format!(
            "U_b = {} × {}",
            len(*thickness),
            format_quantity(*strength, Dim::Field)
        ),
        FindingNote::NoBreakdownStrength => "breakdown_strength not given: the breakdown voltage is unknown and taken at the warning limit — propagating brush discharges cannot be ruled out (give the web's dielectric strength to assess it)".to_string(),
        FindingNote::WebCurrent {
            current,
            sigma_in,
            speed,
            output,
        } => format!(
            "web current {}/m ({} at {}), bar output {}/m",
            format_si(*current, "A"),
            format_quantity(*sigma_in, Dim::SurfaceChargeDensity),
            format_quantity(*speed, Dim::Speed),
            format_si(*output, "A")
        ),
        FindingNote::RollerClearance {
            clearance,
            distance,
        } => format!(
            "{} from the roller, bar {} from the web",
            len(*clearance),
            len(*distance)
        ),
        FindingNote::BarOffset { offset, distance } => {
            format!("offset {}, distance {}", len(*offset), len(*distance))
        }
        FindingNote::ZoneApproval { zone } => format!(
            "in {} — a caution, not a computed risk",
            zone_label(line, *zone)
        ),
        FindingNote::Rule(n) => n.to_string(),
        FindingNote::Onset {
            eliminator,
            active,
            tip_field,
            onset,
            sigma_in,
            distance,
        } => {
            let id = line
                .eliminators
                .get(*eliminator)
                .map(|e| e.id.as_str())
                .unwrap_or("the device");
            let field = |v: f64| format_quantity(v, Dim::Field);
            let pct = |v: f64| format_quantity(v, Dim::Percent);
            if *active {
                format!(
                    "{id} ionises at {}: tip field {} is {} of its onset {}",
                    len(*distance),
                    field(*tip_field),
                    pct(tip_field / onset),
                    field(*onset)
                )
            } else {
                format!(
                    "{id} does not ionise at {}: it neutralises nothing; tip field {} is {} of its onset {}; it would ionise with about {:.2}× the charge arriving ({} instead of {}; the field scales with the charge)",
                    len(*distance),
                    field(*tip_field),
                    pct(tip_field / onset),
                    field(*onset),
                    onset / tip_field,
                    format_quantity(sigma_in * onset / tip_field, Dim::SurfaceChargeDensity),
                    format_quantity(*sigma_in, Dim::SurfaceChargeDensity)
                )
            }
        }
        FindingNote::ReadingFit {
            reading,
            residual,
            tolerance,
            density,
        } => {
            let id = line
                .readings
                .get(*reading)
                .map(|r| r.id.as_str())
                .unwrap_or("the reading");
            let d = if *density {
                Dim::SurfaceChargeDensity
            } else {
                Dim::Field
            };
            if residual.abs() <= *tolerance {
                format!(
                    "{id}: the fitted charge gives it back to {} (tolerance {})",
                    format_quantity(*residual, d),
                    format_quantity(*tolerance, d)
                )
            } else {
                format!(
                    "{id} is NOT reproduced: the fitted charge leaves a residual of {} against the reading's tolerance {} — the charge assessed is not the charge the meter saw (check the reading, the meter position, readings that disagree, or a passive device switching at its onset)",
                    format_quantity(*residual, d),
                    format_quantity(*tolerance, d)
                )
            }
        }
    }
}

/// An analytic roller capacitance estimate in words.
fn roller_capacitance_words(c: &crate::assess::RollerCapacitance) -> String {
    use crate::assess::HeightBasis;
    let len = |v: f64| format_quantity(v, Dim::Length);
    let how = match c.basis {
        HeightBasis::AboveGroundPlane => "above the ground plane",
        HeightBasis::TouchesGroundPlane => {
            "assumed: the roller reaches the ground plane, so its height above it was replaced by"
        }
        HeightBasis::AboveZero => "above z = 0 (no ground plane given)",
        HeightBasis::NoGround => {
            "assumed: no ground plane and the axis is not above z = 0, so the height is"
        }
    };
    format!(
        "r = {}, L = {}, h = {} {how}; C = 2πε0·L/arcosh(h/r)",
        len(c.radius),
        len(c.length),
        len(c.height)
    )
}

/// A finding's notes in words, joined with `; `.
pub fn finding_notes(line: &Line, f: &crate::assess::Finding) -> String {
    f.notes
        .iter()
        .map(|n| finding_note(line, n))
        .collect::<Vec<_>>()
        .join("; ")
}

/// A modelling assumption a rule used, in words.
pub fn assumption(a: crate::assess::Assumption) -> &'static str {
    use crate::assess::Assumption;
    match a {
        Assumption::InsulatedOperator => {
            "operators are assumed insulated from earth (insulating floor or footwear) and charged to the potential of their position"
        }
        Assumption::BodyCapacitance => {
            "operator capacitance 150 pF (IEC 61000-4-2 body model) where not given"
        }
        Assumption::WebCharge => {
            "the largest |σ| on a span is taken at the start of each charge piece on it (relaxation only lowers it), times the largest |f(y)| across the web"
        }
        Assumption::RollerCapacitance => {
            "an isolated roller's capacitance is that of a cylinder over a grounded plane, C = 2πε0·L/arcosh(h/r), L = web width + 0.2 m; without a ground plane h is the axis height above z = 0 (1 m where that is not above the radius)"
        }
        Assumption::NearZone => {
            "a roller or conductor counts as near a zone when its bounding box is within 0.5 m of the zone's box"
        }
        Assumption::ConductorsSolved => {
            "isolated conductors' capacitance to ground, floating potential and spark energy ½CV² come from the conductors' boundary-element solve with the web's charge; a person's capacitance is the body cylinder's plus the lumped feet-to-floor capacitance (100 pF unless given)"
        }
        Assumption::ConductorsNotSolved => {
            "conductors are not solved (run with --conductors): isolated rollers' capacitance is the analytic estimate, and the spark energy of isolated conductors, the 10 pF rule for `conductors:` entries and the shock rules for people of `conductors:` are not assessed"
        }
        Assumption::GapNotChecked => {
            "conductors are not solved (run with --conductors): gap discharges where the web leaves a grounded roller are not checked"
        }
        Assumption::GapVoltage => {
            "the gap opening where the web leaves a grounded roller is a charged sheet over a grounded plane (g ≪ web width, uniform field, air at 1 atm), V_g = σ(g + t/εr)/ε0, broken down by Paschen's law for gaps of 5 µm to 10 mm; σ is the largest |σ| across the web at the start of the span"
        }
        Assumption::InsulatingArea => {
            "an insulating roller's whole surface 2πrL counts as its chargeable area"
        }
        Assumption::WebPotential => {
            "the web potential near an electronics item (shown for information) is the largest |V| at 9 places on each span around its point nearest to the item, 10 µm off the web"
        }
        Assumption::MeterReading => {
            "a field meter reads E_n·d at its calibration distance d (1 in unless the rule says otherwise), with the field the model gives where its face would be, undisturbed by the meter; a span's reading is the largest at 9 stations along it (2d clear of its ends), 3 across and both sides; near an electronics item, at 9 places around the span's point nearest the item, on its side"
        }
    }
}

/// The across-web shape in words, such as `edges, f = 1 + k(2y/w)², k = 0.6`.
pub fn across_shape(a: &crate::model::AcrossProfile) -> String {
    use crate::model::AcrossShape;
    match &a.shape {
        AcrossShape::Uniform => "uniform (f = 1)".into(),
        AcrossShape::Edges(k) => format!("edges, f = 1 + k(2y/w)², k = {k}"),
        AcrossShape::Tilt(k) => format!("tilt, f = 1 + k(2y/w), k = {k}"),
        AcrossShape::Table(t) => format!("table of {} points, piecewise linear", t.len()),
    }
}
