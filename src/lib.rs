//! # websigma
//!
//! Predicts whether the charge on a moving web (film, paper, foil, nonwoven,
//! belts) is an electrostatic hazard, from the line's geometry and the charge
//! measured or assumed on it. The data flows one way, each arrow one public
//! function and each box one plain data type:
//!
//! ```text
//! YAML ─ model::parse_line ─▶ Line ─ field::Scene::new ─▶ Scene
//!      ─ readings::invert_readings ─▶ ChargeProfile ─ Scene::web(..).solve ─▶ FieldMap
//!      ─ assess::assess ─▶ Assessment ─ [plan::plan ─▶ Plan]
//!      ─ report::build::build_report ─▶ Report ─ writers ─▶ terminal / files
//! ```
//!
//! [`pipeline::analyse`] runs the chain from `Line` to `Assessment` in one
//! place, building the line's [`field::Scene`] once; every stage that needs a
//! field (readings, passive-bar onset, assessment, planner, field map)
//! borrows that scene.
//!
//! - [`model`]: the line description, its validation, the web path and the
//!   geometry shared by every stage;
//! - [`physics`]: physical constants and laws with their sources;
//! - [`charge`]: the surface charge density along the path (relaxation,
//!   eliminators);
//! - [`field`]: the scene and Coulomb integrals over every span, images in a
//!   ground plane;
//! - [`readings`]: field-meter readings to surface charge density;
//! - [`assess`]: threshold profiles and findings (numbers and typed notes);
//! - [`plan`]: static-eliminator placement;
//! - [`pipeline`]: the stages chained;
//! - [`sweep`]: one input varied over a range, the line assessed at each
//!   value and the changes of verdict refined;
//! - [`report`]: every word and picture a person sees; writers that only
//!   format;
//! - [`progress`]: long work announced to a sink the command line installs;
//! - [`safe_text`]: the characters refused in user text, and user text made
//!   safe to echo;
//! - [`units`]: SI inside, units parsed and formatted at the edges;
//! - [`read`]: input files read with bounded memory;
//! - [`yaml`]: the one place YAML is parsed.
//!
//! Estimates from a model are not measurements. They do not replace a
//! hazardous-area classification or the judgement of a competent person.

#![warn(missing_docs)]

pub mod app;
pub mod assess;
pub mod charge;
pub mod cli;
pub mod error;
pub mod field;
pub mod model;
pub mod physics;
pub mod pipeline;
pub mod plan;
pub mod points;
pub mod progress;
pub mod read;
pub mod readings;
pub mod report;
pub mod safe_text;
pub mod sweep;
pub mod uncertainty;
pub mod units;
pub mod yaml;

/// The built-in invented example line (`profiles/lines/demo.yaml`).
pub const DEMO_LINE: &str = include_str!("../profiles/lines/demo.yaml");

/// The safety cautions every output carries (DESIGN.md §9).
pub const CAUTIONS: &str = "Estimates from a model are not measurements. They do not replace a \
hazardous-area classification, an explosion-protection document, or the judgement of a competent \
person. Follow the standards and regulations in force at the site and the instructions of the \
equipment makers. Verify every threshold against the current edition of the cited standard. When \
in doubt, measure, ground, neutralise, and stop the line.";
