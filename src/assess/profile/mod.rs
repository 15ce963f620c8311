//! # Threshold profiles
//!
//! Reading stage of the assessment: `YAML text → RawProfile → ThresholdProfile`,
//! in the same two steps as the line description (`model/raw.rs` →
//! `model/validate.rs`). The raw structs refuse unknown keys and keep every
//! quantity as the text written; validation then checks every rule and
//! collects **all** problems with their YAML path
//! (`rules[2].warn: expected a surface charge density such as "1.7 uC/m^2", got "5 kV", …`).
//!
//! A profile is a list of rules. Each rule names one check, the subjects it
//! applies to (spans, points of a kind, rollers; optionally only those in or
//! near a hazardous zone of a given class and gas group), its limits with
//! units, the published source of the limits and how sure that source is.
//! No number is accepted without a `source:` and a `confidence:`.
//!
//! | check | subjects | limits, dimension |
//! | --- | --- | --- |
//! | `web_charge` | spans | `warn`/`fail`, surface charge density (C/m²) |
//! | `field_at_points` | points of a kind | `warn`/`fail`, field (V/m) |
//! | `body_voltage` | operator points | `warn`/`fail`, voltage (V) |
//! | `spark_energy` | operator points | `warn`/`fail` energy (J); `fail: zone_mie` |
//! | `electronics_separation` | electronics points | `near`/`far`: `{distance, voltage}` (m, V) |
//! | `isolated_conductor` | rollers, conductors | `warn`/`fail`, capacitance (F) |
//! | `propagating_brush` | spans | `warn`/`fail`, voltage (V) |
//! | `conductor_spark` | rollers, conductors | `warn`/`fail` energy (J); `fail: zone_mie` |
//! | `insulating_surface` | rollers | `warn`/`fail`, area in m² as a plain number |
//! | `gap_discharge` | spans | `fail: paschen` only (computed) |
//!
//! Subjects: `spans: all | in_zone`, `points: KIND` (with `in_zone: true`
//! to keep only points inside a matching zone), `rollers: all |
//! in_or_near_zone`, `conductors: all | in_or_near_zone` (the entries of
//! the line's `conductors:` list). `zone:` and `gas_group:` narrow the
//! zones of zone-bound subjects. The operator rules (`body_voltage`,
//! `spark_energy` on `points: operator`) also apply to the people of
//! `conductors:` when the rule is not zone-bound.
//!
//! Refused: an unknown check or key, a limit of the wrong dimension, a limit
//! that is not positive, `warn` above `fail`, a rule without limits, a missing
//! `source` or `confidence`, duplicate rule ids, subjects that do not suit the
//! check (e.g. `body_voltage` on meters), `zone_mie` or `paschen` on a check
//! that does not compute that limit.
//!
//! ## Reference
//! The profile format is this program's own; the limits it carries cite their
//! sources in the shipped files under `profiles/thresholds/`.

//!
//! ## Files
//! - `raw.rs`: the serde mirror of the YAML;
//! - `validate.rs`: raw → checked, every problem collected with its YAML path;
//! - `checked.rs`: the checked types ([`ThresholdProfile`], [`Rule`], …);
//! - `shipped.rs`: the built-in profiles, loading by name or file, the air limit.

mod checked;
mod raw;
mod shipped;
mod validate;

pub use checked::{
    Applies, Check, Confidence, Hazard, Rule, Separation, Subjects, ThresholdProfile, ZoneFilter,
};
pub use shipped::{
    AIR_LIMIT, MAX_PROFILE_BYTES, load_profile, load_profiles, shipped, with_air_limit,
};
pub use validate::parse_profile;
