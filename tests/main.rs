//! The one integration-test binary: every test module is compiled here.
//!
//! - `analytic`: the field solver against closed forms and published results;
//! - `fast_path`: the fast patch integrals (moments, Gauss–Kronrod) against the reference rule;
//! - `bem`: the conductor solve against published capacitances and image solutions;
//! - `clusters`: the conductors' charge summed by clusters in maps and point lists;
//! - `assess`: threshold profiles and the rules applied to small lines;
//! - `assess_conductors`: the assessment with the conductors' solve;
//! - `reports`: writer snapshots, the HTML, PNGs, folders, `assess` exit codes;
//! - `solver`: path-level physics (superposition, images, symmetry);
//! - `geometry`: web path tangents and arc lengths through the public API;
//! - `validation`: bad input refused with a located message;
//! - `cli`: the binary end to end;
//! - `pipeline`: one scene per command, the demo unchanged by reshaping;
//! - `conductor_views`: conductors in the planner, the meter warnings and the side view;
//! - `inputs`: likely wrong wrap directions, readings as recorded, the planned
//!   line's rounding, the plan as CSV, point files with bad rows, tolerances
//!   on `charge:` entries;
//! - `plots`: the demo's pictures on what they draw (legend, labels, limits);
//! - `findings_terms`: findings in their sources' terms, units, order;
//! - `mutations`: mutated demo lines through `check` and `assess`;
//! - `hardening_outputs`: reports that cannot be forged, `plan --apply` whole
//!   or not at all, CSV cells that are no formulas, report ids and leftovers.
//! - `readings_nonlinear`: the readings fit with a passive device between the
//!   charge and the meters (self-consistent, its onset gap, the onset check);
//! - `hardening_reads`: inputs read with bounded memory (devices, pipes, long
//!   rows, oversize lists), point files as CSV, the 1 µm rule, bounded flags.
//! - `plan_agree`: one planner, one answer (`assess --plan`, `demo`, `plan`),
//!   side variants as one plan, the ranking, a dead end explained.
//! - `uncertainty`: ranges over the inputs' tolerances against brute force over the corners of
//!   the input box, random inputs inside it, the uncertain verdict and its exit code;
//! - `sweep`: one input varied (the YAML path setter, the scene's reuse,
//!   a crossing against its analytic value, the outputs, bad `--vary` forms).

mod analytic;
mod assess;
mod assess_conductors;
mod bem;
mod bem_published;
mod cli;
mod clusters;
mod conductor_views;
mod conductors;
mod eliminators;
mod fast_path;
mod findings_terms;
mod geometry;
mod hardening_outputs;
mod hardening_reads;
mod inputs;
mod map_boxes;
mod mutations;
mod pipeline;
mod plan;
mod plan_agree;
mod plots;
mod readings;
mod readings_nonlinear;
mod reports;
mod solver;
mod sweep;
mod uncertainty;
mod util;
mod validation;
