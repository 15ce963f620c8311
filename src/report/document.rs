//! The report laid out once as sections of blocks, for every markup writer.
//!
//! Markdown and HTML render the same [`Section`]s, so the two reports carry
//! the same content by construction. Values are formatted here with SI
//! prefixes; nothing is computed.

use crate::assess::Verdict;
use crate::report::build::{FindingRow, Report, charge_entry_text, len_text, node_texts};
use crate::units::{Dim, format_quantity, format_si};

/// A piece of content.
#[derive(Debug, Clone, PartialEq)]
pub enum Block {
    /// A paragraph of text.
    Para(String),
    /// A bulleted list.
    List(Vec<String>),
    /// A table with a header row.
    Table {
        /// Column titles.
        header: Vec<String>,
        /// Rows of cells.
        rows: Vec<Vec<String>>,
    },
    /// An image file with its caption.
    Image {
        /// File name in the report folder.
        file: String,
        /// Caption.
        caption: String,
    },
    /// The overall verdict.
    Verdict(Verdict, String),
    /// Highlighted safety text.
    Caution(String),
    /// Lines left blank to be filled in by hand.
    SignOff(Vec<String>),
}

/// A titled section.
#[derive(Debug, Clone, PartialEq)]
pub struct Section {
    /// Heading.
    pub title: String,
    /// Content.
    pub blocks: Vec<Block>,
}

fn sec(title: &str, blocks: Vec<Block>) -> Section {
    Section {
        title: title.to_string(),
        blocks,
    }
}

fn table(header: &[&str], rows: Vec<Vec<String>>) -> Block {
    Block::Table {
        header: header.iter().map(|s| s.to_string()).collect(),
        rows,
    }
}

fn q(x: f64, d: Dim) -> String {
    format_quantity(x, d)
}

fn verdict_cell(v: Verdict) -> String {
    match v {
        Verdict::Fail => "FAIL".into(),
        Verdict::Uncertain => "UNCERTAIN".into(),
        Verdict::Warn => "WARN".into(),
        Verdict::Pass => "pass".into(),
    }
}

pub use super::finding_text::margin_text;
use super::finding_text::{against_text, hazard_title, limit_text, value_text};

/// Failing and warning findings listed per class of harm in the summary.
const SUMMARY_PER_CLASS: usize = 6;

fn eliminator_table(r: &Report) -> Block {
    let sd = |x: f64| format_quantity(x, Dim::SurfaceChargeDensity);
    table(
        &[
            "eliminator",
            "kind",
            "span",
            "position",
            "distance",
            "side",
            "η",
            "residual",
            "σ in",
            "σ out",
            "ionising",
        ],
        r.line
            .eliminators
            .iter()
            .enumerate()
            .map(|(i, e)| {
                let st = r.eliminators.iter().find(|s| s.index == i);
                vec![
                    e.id.clone(),
                    e.kind.text().to_string(),
                    r.line.path.spans[e.span].label(),
                    len_text(e.along),
                    len_text(e.distance),
                    e.side.text().to_string(),
                    format_quantity(e.efficiency, Dim::Percent),
                    sd(e.residual),
                    st.map(|s| sd(s.sigma_in)).unwrap_or_default(),
                    st.map(|s| sd(s.sigma_out)).unwrap_or_default(),
                    match (st, e.onset) {
                        (Some(s), Some(on)) => format!(
                            "{} (tips {} / onset {})",
                            if s.active { "yes" } else { "no" },
                            format_si(s.tip_field.unwrap_or(0.0), "V/m"),
                            format_si(on, "V/m")
                        ),
                        _ => "yes (powered)".into(),
                    },
                ]
            })
            .collect(),
    )
}

/// The conductors' results and the accuracy estimate of their solve.
fn conductor_blocks(r: &Report) -> Vec<Block> {
    let opt = |v: Option<f64>, d: Dim| v.map(|x| q(x, d)).unwrap_or_else(|| "—".into());
    use super::ranges::ranged;
    let rows = r
        .conductors
        .iter()
        .enumerate()
        .map(|(i, c)| {
            let b = r.uncertainty.conductors.get(i);
            vec![
                c.id.clone(),
                if c.grounded { "grounded" } else { "isolated" }.to_string(),
                ranged(c.charge, b.map(|b| b.charge), Dim::Charge),
                ranged(c.potential, b.map(|b| b.potential), Dim::Voltage),
                opt(c.capacitance, Dim::Capacitance),
                c.spark_energy
                    .map(|w| ranged(w, b.and_then(|b| b.spark_energy), Dim::Energy))
                    .unwrap_or_else(|| "—".into()),
                c.panels.to_string(),
            ]
        })
        .collect();
    let mut blocks = vec![
        Block::Para("The charge the web induces on each conductor (boundary-element solve on flat panels of constant density; the grounded plane by images). A grounded conductor's charge is the induced charge; an isolated conductor floats at the potential shown, its net charge fixed (an isolated roller's includes the charge the web carries on its wraps; where a lumped capacitance to ground is given, as for a person's feet, the charge shown is the one on the conductor's surface and the lumped capacitance holds the rest, C_l·V), with its capacitance to ground (the other isolated conductors floating; a person's lumped feet-to-floor capacitance included) and the energy ½CV² a spark to ground can release.".into()),
        table(
            &["conductor", "earthing", "charge", "potential", "C to ground", "½CV²", "panels"],
            rows,
        ),
    ];
    if let Some(a) = &r.conductor_accuracy {
        blocks.push(Block::Para(format!(
            "Accuracy estimate: solved again on {} panels of {} (against {} of {}), the potential at the {} places of interest changes by at most {} ({:.2} % of the largest |V| there) and the field by {} ({:.2} % of the largest |E|){}. For constant-density panels the error of the finer solve is about a third of that change.",
            a.coarse_panels,
            len_text(a.coarse_panel_size),
            a.panels,
            len_text(a.panel_size),
            a.points,
            q(a.potential_change, Dim::Voltage),
            100.0 * a.potential_relative,
            q(a.field_change, Dim::Field),
            100.0 * a.field_relative,
            if a.capacitance_relative > 0.0 {
                format!(
                    "; the capacitances to ground by at most {:.2} %",
                    100.0 * a.capacitance_relative
                )
            } else {
                String::new()
            }
        )));
    }
    if r.conductor_accuracy.as_ref().is_some_and(|a| a.doubtful()) {
        blocks.push(Block::Para(format!(
            "⚠ The conductors' solve changes by more than {:.0} % between the two meshes at the places of interest: its numbers are not reliable there. Rerun with a smaller panel size (`--conductors`).",
            100.0 * crate::field::ConductorAccuracy::DOUBTFUL
        )));
    }
    blocks
}

fn reading_table(r: &Report) -> Block {
    let sd = |x: f64| format_quantity(x, Dim::SurfaceChargeDensity);
    let ratio = |n: Option<f64>, g: f64| match n {
        Some(n) if g != 0.0 => format!("{} ({:.2}×)", sd(n), n / g),
        Some(n) => sd(n),
        None => "—".into(),
    };
    table(
        &[
            "reading",
            "span",
            "position",
            "distance",
            "as entered",
            "read",
            "σ (geometry)",
            "σ bounds",
            "naive 2ε0E",
            "naive ε0E",
            "charge entries predict",
            "fitted charge gives",
            "residual (tolerance)",
            "flags",
        ],
        r.readings
            .iter()
            .map(|x| {
                vec![
                    x.id.clone(),
                    x.span.clone(),
                    len_text(x.position),
                    len_text(x.distance),
                    super::readings_text::as_entered(&x.record),
                    super::notes::reading_value(&x.value),
                    sd(x.sigma),
                    format!("{} … {}", sd(x.sigma_low), sd(x.sigma_high)),
                    ratio(x.sigma_naive_isolated, x.sigma),
                    ratio(x.sigma_naive_one_sided, x.sigma),
                    sd(x.sigma_model),
                    // What the final profile gives at the meter face: n̂·E,
                    // or the density for a density reading.
                    match x.model_field {
                        Some(f) => format_quantity(f, Dim::Field),
                        None => sd(x.sigma),
                    },
                    {
                        let q = |v: f64| match x.field {
                            Some(_) => format_quantity(v, Dim::Field),
                            None => sd(v),
                        };
                        format!(
                            "{} ({}){}",
                            q(x.residual),
                            q(x.uncertainty),
                            if x.reproduced() {
                                ""
                            } else {
                                " NOT REPRODUCED"
                            }
                        )
                    },
                    if x.warnings.is_empty() {
                        "—".into()
                    } else {
                        super::notes::reading_notes(&x.warnings)
                    },
                ]
            })
            .collect(),
    )
}

/// The instrument and conditions recorded with the readings (a table when
/// any reading gives them), then what the recorded humidity says about the
/// relaxation time.
fn reading_record_blocks(r: &Report) -> Vec<Block> {
    use super::readings_text::{has_conditions, humidity_note, record_cells};
    let mut blocks = Vec::new();
    if r.readings.iter().any(|x| has_conditions(&x.record)) {
        blocks.push(Block::Para(
            "Recorded with the readings (instrument and conditions of the measurement):".into(),
        ));
        blocks.push(table(
            &[
                "reading",
                "meter",
                "calibrated on",
                "relative humidity",
                "web speed",
            ],
            r.readings
                .iter()
                .map(|x| {
                    let mut row = vec![x.id.clone()];
                    row.extend(record_cells(&x.record));
                    row
                })
                .collect(),
        ));
    }
    blocks.push(Block::Para(humidity_note(
        &r.readings,
        Some(&q(r.line.web.relaxation_time, Dim::Time)),
    )));
    blocks
}

/// One row per rule that gave a finding: `profile/rule` and what it checks.
fn rules_checked(r: &Report) -> Vec<Vec<String>> {
    let mut rows: Vec<Vec<String>> = Vec::new();
    for f in &r.findings {
        let id = format!("{}/{}", f.profile, f.rule);
        if !rows.iter().any(|row| row[0] == id) {
            rows.push(vec![id, f.check.clone()]);
        }
    }
    rows.sort();
    rows
}

/// Lays out the whole report.
pub fn layout(r: &Report) -> Vec<Section> {
    let line = &r.line;
    let mut out = Vec::new();
    out.push(sec(
        "Report",
        vec![table(
            &["item", "value"],
            vec![
                vec!["line".into(), r.meta.title.clone()],
                vec!["report id".into(), r.meta.report_id.clone()],
                vec!["date (UTC)".into(), r.meta.created_utc.clone()],
                vec!["tool".into(), format!("websigma {}", r.meta.tool_version)],
                vec!["line description".into(), r.meta.line_file.clone()],
                vec!["its SHA-256".into(), r.meta.line_sha256.clone()],
            ],
        )],
    ));
    out.push(sec(
        "Scope",
        vec![Block::Para(format!(
            "Electrostatic assessment of the moving web on {}: the field and potential that the charge on its {} free spans produces at {} places of interest, checked against {} threshold profile(s) ({}) for {} hazardous zone(s). The assessment covers the charged web only; see Limitations.",
            line.title,
            line.path.spans.len(),
            line.points.len(),
            r.profiles.len(),
            r.profiles.iter().map(|p| p.name.as_str()).collect::<Vec<_>>().join(", "),
            line.zones.len()
        ))],
    ));
    let mut summary = vec![Block::Verdict(
        r.verdict,
        format!(
            "{} finding(s): {} fail, {} uncertain (counted as failing), {} warn, {} pass.",
            r.findings.len(),
            r.counts[3],
            r.counts[2],
            r.counts[1],
            r.counts[0]
        ),
    )];
    // Failures and warnings by class of harm (ignition in zones first),
    // then verdict, then margin: the order the findings already have within
    // a verdict.
    for h in crate::assess::Hazard::ALL {
        let mut of: Vec<&FindingRow> = r
            .findings
            .iter()
            .filter(|f| f.hazard == h && f.verdict != Verdict::Pass)
            .collect();
        if of.is_empty() {
            continue;
        }
        of.sort_by(|a, b| {
            b.verdict
                .cmp(&a.verdict)
                .then(b.margin.total_cmp(&a.margin))
        });
        let shown = SUMMARY_PER_CLASS.min(of.len());
        let mut items: Vec<String> = of[..shown]
            .iter()
            .map(|f| {
                format!(
                    "{} — {} on {}: {}",
                    verdict_cell(f.verdict),
                    f.check,
                    f.subject,
                    against_text(*f)
                )
            })
            .collect();
        if of.len() > shown {
            items.push(format!("and {} more in Findings", of.len() - shown));
        }
        summary.push(Block::Para(format!("{}:", hazard_title(h))));
        summary.push(Block::List(items));
    }
    let settle = super::ranges::settle_items(r);
    if !settle.is_empty() {
        summary.push(Block::Para(
            "Uncertain findings (counted as failing) and the inputs whose tolerance decides them:"
                .into(),
        ));
        summary.push(Block::List(settle));
    }
    out.push(sec("Summary", summary));

    let mut method = vec![
        Block::Para(format!(
            "The web is modelled as a thin sheet carrying the surface charge density σ(s, y) = σc(s)·f(y) along its path, with relaxation σc(s) = A·exp(−(s − s0)/(v·τ)) between charging points (τ = {}, v·τ = {}). The field and potential at each point are Coulomb integrals over every free span, superposed, {}. Uniform spans use the closed form of a charged rectangle; others integrate across the web exactly and along it with double-exponential quadrature, split at the foot of the perpendicular, with the error estimate checked against the tolerance.",
            q(line.web.relaxation_time, Dim::Time),
            if line.web.decay_length().is_finite() {
                len_text(line.web.decay_length())
            } else {
                "infinite".into()
            },
            match line.ground_plane {
                Some(g) => format!(
                    "with the image of every span in the grounded plane z = {} (potentials relative to it)",
                    len_text(g)
                ),
                None =>
                    "with potentials relative to zero at infinity (no ground plane given)".into(),
            } + if r.conductors.is_empty() {
                ""
            } else {
                ", plus the field of the charge the web induces on the line's conductors (a boundary-element solve: see Conductors)"
            }
        )),
        Block::Para(format!(
            "Solver accuracy: relative tolerance {:e} on V and |E| for points from 0.1 mm to 100 m from the web (checked in the test suite against closed forms and an independent integration).",
            r.rel_tol
        )),
        Block::Para("Assumptions:".into()),
        Block::List(r.assumptions.clone()),
    ];
    if !r.warnings.is_empty() {
        method.push(Block::Para(
            "Warnings raised while reading the input:".into(),
        ));
        method.push(Block::List(r.warnings.clone()));
    }
    out.push(sec("Method", method));

    let w = &line.web;
    let mut web_rows = vec![
        vec![
            "material".into(),
            w.material.clone().unwrap_or_else(|| "not given".into()),
        ],
        vec!["width".into(), len_text(w.width)],
        vec!["thickness".into(), len_text(w.thickness)],
        vec![
            "relative permittivity εr".into(),
            format!("{}", w.relative_permittivity),
        ],
    ];
    if let Some(rs) = w.surface_resistivity {
        web_rows.push(vec![
            "surface resistivity R_s".into(),
            q(rs, Dim::SurfaceResistivity),
        ]);
    }
    if let Some(rho) = w.volume_resistivity {
        web_rows.push(vec![
            if w.surface_resistivity.is_some() {
                "volume resistivity ρ = R_s·t (conduction through the bulk assumed)".into()
            } else {
                "volume resistivity ρ".into()
            },
            q(rho, Dim::Resistivity),
        ]);
    }
    web_rows.push(vec![
        "relaxation time τ".into(),
        q(w.relaxation_time, Dim::Time),
    ]);
    web_rows.push(vec![
        "speed".into(),
        format!(
            "{} ({})",
            q(w.speed, Dim::Speed),
            format_si(w.speed * 60.0, "m/min")
        ),
    ]);
    if let Some(b) = w.breakdown_strength {
        web_rows.push(vec!["breakdown strength".into(), format_si(b, "V/m")]);
    }
    web_rows.push(vec![
        "across-web profile".into(),
        super::notes::across_shape(&line.across),
    ]);
    web_rows.push(vec![
        "ground plane".into(),
        line.ground_plane
            .map(len_text)
            .unwrap_or_else(|| "none".into()),
    ]);
    let rollers = line
        .rollers
        .iter()
        .map(|ro| {
            vec![
                ro.id.clone(),
                format!("[{}, {}]", len_text(ro.center[0]), len_text(ro.center[1])),
                len_text(2.0 * ro.radius),
                ro.earthing.text().to_string(),
            ]
        })
        .collect();
    let charge = charge_entry_text(line)
        .into_iter()
        .map(|(at, mode, s)| vec![at, mode, q(s, Dim::SurfaceChargeDensity)])
        .collect();
    let points = line
        .points
        .iter()
        .map(|p| {
            vec![
                p.id.clone(),
                p.kind.text().to_string(),
                format!(
                    "[{}, {}, {}]",
                    len_text(p.at[0]),
                    len_text(p.at[1]),
                    len_text(p.at[2])
                ),
                p.capacitance
                    .map(|c| q(c, Dim::Capacitance))
                    .unwrap_or_else(|| "—".into()),
            ]
        })
        .collect();
    let zones = line
        .zones
        .iter()
        .map(|z| {
            vec![
                z.id.clone(),
                z.name.clone().unwrap_or_default(),
                format!("{}", z.zone),
                z.gas_group.text().to_string(),
                q(z.mie, Dim::Energy),
                format!(
                    "[{}, {}, {}]",
                    len_text(z.min[0]),
                    len_text(z.min[1]),
                    len_text(z.min[2])
                ),
                format!(
                    "[{}, {}, {}]",
                    len_text(z.max[0]),
                    len_text(z.max[1]),
                    len_text(z.max[2])
                ),
            ]
        })
        .collect();
    let profiles = r
        .profiles
        .iter()
        .map(|p| {
            vec![
                p.name.clone(),
                p.title.clone(),
                format!("{}", p.rules),
                p.origin.clone(),
            ]
        })
        .collect();
    let mut inputs = {
        vec![
            Block::Para("Web and line:".into()),
            table(&["property", "value"], web_rows),
            Block::Para("Rollers:".into()),
            table(
                &["roller", "centre [x, z]", "diameter", "earthing"],
                rollers,
            ),
            Block::Para("Path, in travel order:".into()),
            Block::List(node_texts(line)),
            Block::Para("Charge entries (centreline density leaving the node):".into()),
            table(&["at", "mode", "σ"], charge),
            Block::Para("Places of interest:".into()),
            table(&["id", "kind", "at [x, y, z]", "capacitance"], points),
            Block::Para("Hazardous zones:".into()),
            table(
                &["id", "name", "zone", "gas group", "MIE", "from", "to"],
                zones,
            ),
        ]
    };
    inputs.push(Block::Para(if r.readings.is_empty() {
        "Meter readings: none — the charge is as the charge entries state.".to_string()
    } else {
        format!(
            "Meter readings converted to surface charge density with the line's geometry (all spans and images), beside the infinite-sheet rule; σ is the density at the meter's foot, {}:",
            r.reading_method
        )
    }));
    if !r.readings.is_empty() {
        inputs.push(reading_table(r));
    }
    inputs.extend(reading_record_blocks(r));
    inputs.push(Block::Para(if line.eliminators.is_empty() {
        "Static eliminators: none.".to_string()
    } else {
        "Static eliminators (models: powered σ′ = σ·(1 − η) + offset; passive σ′ = max(|σ|·(1 − η), residual) while the field at its tips reaches the onset — K. Robinson, PFFC; J. A. McInally 1977; the passive onset default is from memory, verify):".to_string()
    }));
    if !line.eliminators.is_empty() {
        inputs.push(eliminator_table(r));
    }
    inputs.push(Block::Para("Threshold profiles in force:".into()));
    inputs.push(table(&["profile", "title", "rules", "origin"], profiles));
    out.push(sec("Inputs", inputs));

    use super::ranges::{ranged, ranged_si};
    let span_rows = r
        .spans
        .iter()
        .enumerate()
        .map(|(j, s)| {
            let b = r.uncertainty.spans.get(j);
            vec![
                s.label.clone(),
                s.row.from_to.clone(),
                len_text(s.row.length),
                format!("{:.1}°", s.row.angle_deg),
                ranged(
                    s.row.sigma_start,
                    b.map(|b| b.sigma_start),
                    Dim::SurfaceChargeDensity,
                ),
                ranged(
                    s.row.sigma_end,
                    b.map(|b| b.sigma_end),
                    Dim::SurfaceChargeDensity,
                ),
                ranged(
                    s.sigma_peak,
                    b.map(|b| b.sigma_peak),
                    Dim::SurfaceChargeDensity,
                ),
                s.meter
                    .map(|m| {
                        format!(
                            "{} at {}",
                            ranged(m.reading(), b.and_then(|b| b.meter), Dim::Voltage),
                            super::finding_text::meter_distance_text(m.distance)
                        )
                    })
                    .unwrap_or_else(|| "—".into()),
                if s.zones.is_empty() {
                    "—".into()
                } else {
                    s.zones.join(", ")
                },
            ]
        })
        .collect();
    let point_rows = r
        .points
        .iter()
        .enumerate()
        .map(|(i, p)| {
            let b = r.uncertainty.points.get(i);
            vec![
                p.point.id.clone(),
                p.point.kind.text().to_string(),
                ranged_si(p.e_magnitude, b.map(|b| b.e), "V/m"),
                format!(
                    "[{}, {}, {}]",
                    ranged_si(p.e[0], b.map(|b| b.components[0]), "V/m"),
                    ranged_si(p.e[1], b.map(|b| b.components[1]), "V/m"),
                    ranged_si(p.e[2], b.map(|b| b.components[2]), "V/m")
                ),
                ranged_si(p.v, b.map(|b| b.v), "V"),
                if p.zones.is_empty() {
                    "—".into()
                } else {
                    p.zones.join(", ")
                },
            ]
        })
        .collect();
    out.push(sec(
        "Results",
        vec![
            Block::Para(
                "Per span (σ is the centreline density; the peak includes the across-web profile; ranges over the inputs' tolerances in brackets, see Uncertainty):"
                    .into(),
            ),
            table(
                &[
                    "span",
                    "from → to",
                    "length",
                    "angle",
                    "σ start",
                    "σ end",
                    "|σ| peak",
                    "meter reading (worst)",
                    "zones",
                ],
                span_rows,
            ),
            Block::Para("Per point:".into()),
            table(
                &["point", "kind", "|E|", "E [x, y, z]", "V", "zones"],
                point_rows,
            ),
        ],
    ));
    if !r.conductors.is_empty() {
        out.push(sec("Conductors", conductor_blocks(r)));
    }

    let finding_rows = r
        .findings
        .iter()
        .map(|f| {
            let conf = if f.confidence.needs_verification() {
                format!("{} ⚠ VERIFY", f.confidence.text())
            } else {
                f.confidence.text().to_string()
            };
            vec![
                verdict_cell(f.verdict),
                f.hazard.key().to_string(),
                format!("{}/{}", f.profile, f.rule),
                f.subject.clone(),
                value_text(f),
                limit_text(f),
                margin_text(f.margin),
                f.note.clone(),
                r.references
                    .iter()
                    .position(|x| x == &f.source)
                    .map(|i| format!("[{}]", i + 1))
                    .unwrap_or_else(|| f.source.clone()),
                conf,
            ]
        })
        .collect();
    out.push(sec(
        "Findings",
        vec![
            Block::Para("Findings by verdict, then class of harm (ignition in hazardous zones, shock, electronics, equipment), then margin. Values and limits to three significant digits (results.json and results.csv keep full precision); a meter rule's value and limits are what a field meter would read at its calibration distance (\"2.8 kV at 1 in\"). Each value is followed, in brackets, by its range over the inputs' tolerances (see Uncertainty); the verdict is judged on the whole range, UNCERTAIN where it straddles the failure limit. Margin = value ÷ governing limit (the failure limit where the rule has one): above 1× the limit is reached. Sources are numbered as in the References section. Limits marked VERIFY are recalled, not read in the source: check them against the current edition before relying on them.".into()),
            table(
                &["verdict", "hazard", "rule", "subject", "value", "limits", "margin", "note", "source", "confidence"],
                finding_rows,
            ),
            Block::Para("What each rule checks:".into()),
            table(&["rule", "checks"], rules_checked(r)),
        ],
    ));

    out.push(sec("Uncertainty", super::ranges::uncertainty_blocks(r)));

    let mut contrib = Vec::new();
    if r.contributions.is_empty() {
        contrib.push(Block::Para("No point finding to break down.".into()));
    }
    for (id, parts) in &r.contributions {
        contrib.push(Block::Para(format!(
            "At {id} (largest |E| first; each span together with its ground-plane image; ranges over the inputs' tolerances in brackets):"
        )));
        let shares = r
            .points
            .iter()
            .position(|p| &p.point.id == id)
            .and_then(|i| r.uncertainty.points.get(i))
            .map(|b| b.spans.as_slice())
            .unwrap_or_default();
        contrib.push(table(
            &["span", "|E|", "E [x, y, z]", "V"],
            parts
                .iter()
                .map(|c| {
                    let m = (c.e[0] * c.e[0] + c.e[1] * c.e[1] + c.e[2] * c.e[2]).sqrt();
                    let b = shares.iter().find(|s| s.span == c.span);
                    vec![
                        c.span.clone(),
                        super::ranges::ranged_si(m, b.map(|b| b.e), "V/m"),
                        format!(
                            "[{}, {}, {}]",
                            super::ranges::ranged_si(c.e[0], b.map(|b| b.components[0]), "V/m"),
                            super::ranges::ranged_si(c.e[1], b.map(|b| b.components[1]), "V/m"),
                            super::ranges::ranged_si(c.e[2], b.map(|b| b.components[2]), "V/m")
                        ),
                        super::ranges::ranged_si(c.v, b.map(|b| b.v), "V"),
                    ]
                })
                .collect(),
        ));
    }
    out.push(sec("Span contributions at the worst points", contrib));

    out.push(sec(
        "Plots",
        r.plots
            .iter()
            .filter(|p| !p.file.contains("planned"))
            .map(|p| Block::Image {
                file: p.file.clone(),
                caption: p.caption.clone(),
            })
            .collect(),
    ));
    out.push(sec(
        "Recommendations",
        vec![Block::List(r.recommendations.clone())],
    ));
    if let Some(p) = &r.plan {
        let mut blocks = vec![
            Block::Para(format!(
                "{}. {} {}",
                p.summary,
                p.settings,
                super::plan_words::RANKING
            )),
            table(
                &["plan", "bars", "fail", "warn", "pass", "worst margin"],
                p.options
                    .iter()
                    .enumerate()
                    .map(|(i, (bars, c, m))| {
                        vec![
                            format!("{}", i + 1),
                            bars.clone(),
                            format!("{}", c[2]),
                            format!("{}", c[1]),
                            format!("{}", c[0]),
                            margin_text(*m),
                        ]
                    })
                    .collect(),
            ),
        ];
        if !p.refused.is_empty() {
            blocks.push(Block::Para(format!(
                "{} candidate position(s) left out for their clearance from grounded conductors:",
                p.refused.len()
            )));
            blocks.push(Block::List(p.refused.clone()));
        }
        if let Some((intro, blockers, leaves)) = &p.dead_end {
            blocks.push(Block::Para(intro.clone()));
            blocks.push(Block::List(blockers.clone()));
            if !leaves.is_empty() {
                blocks.push(Block::Para("The best partial plan leaves failing:".into()));
                blocks.push(Block::List(leaves.clone()));
            }
        }
        blocks.push(Block::Para(
            "The best plan, findings that warn or fail without it:".into(),
        ));
        blocks.push(table(
            &["rule", "subject", "before", "after"],
            p.before_after
                .iter()
                .map(|(a, b, c, d)| vec![a.clone(), b.clone(), c.clone(), d.clone()])
                .collect(),
        ));
        for pl in r.plots.iter().filter(|p| p.file.contains("planned")) {
            blocks.push(Block::Image {
                file: pl.file.clone(),
                caption: pl.caption.clone(),
            });
        }
        out.push(sec("Eliminator plan", blocks));
    }
    out.push(sec("Limitations", vec![Block::List(r.limitations.clone())]));
    out.push(sec(
        "Cautions",
        vec![Block::Caution(crate::CAUTIONS.to_string())],
    ));
    out.push(sec(
        "References",
        vec![Block::List(
            r.references
                .iter()
                .enumerate()
                .map(|(i, x)| format!("[{}] {x}", i + 1))
                .collect(),
        )],
    ));
    out.push(sec(
        "Sign-off",
        vec![Block::SignOff(vec![
            "Prepared by:".into(),
            "Checked by:".into(),
            "Date:".into(),
        ])],
    ));
    out
}
