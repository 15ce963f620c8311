//! Command-line interface: clap derive types only, no logic.
//!
//! The doc comments here become `--help`. `app.rs` turns these into checked
//! settings once; no other module sees clap.

use clap::{Parser, Subcommand, ValueEnum};
use std::path::PathBuf;

/// Predicts the electrostatic field and potential around a charged moving web
/// (film, paper, foil, nonwoven) from its charge and the line's geometry.
///
/// Estimates from a model are not measurements: follow the standards in force
/// at the site and the judgement of a competent person.
#[derive(Debug, Parser)]
#[command(name = "websigma", version, propagate_version = true)]
pub struct Cli {
    /// No progress bars (they are drawn on stderr only when it is a
    /// terminal, for work longer than about a second).
    #[arg(long, global = true)]
    pub quiet: bool,
    /// What to do.
    #[command(subcommand)]
    pub command: Command,
}

/// The subcommands.
#[derive(Debug, Subcommand)]
pub enum Command {
    /// Validate a line description and print the derived web spans.
    Check(CheckArgs),
    /// Field and potential at points (table, CSV or JSON).
    Field(FieldArgs),
    /// Full assessment against threshold profiles; writes a report folder.
    Assess(AssessArgs),
    /// Meter readings converted to surface charge density with the line's geometry.
    Readings(ReadingsArgs),
    /// Rank static-eliminator placements that bring the line within limits.
    Plan(PlanArgs),
    /// List the shipped threshold profiles, or show one with its sources.
    Profiles(ProfilesArgs),
    /// Run the built-in invented example line end to end and write its report.
    Demo(DemoArgs),
    /// Vary one input over a range and assess the line at each value: each
    /// profile's worst margin, where its verdict changes, a CSV and a plot.
    Sweep(SweepArgs),
}

/// `websigma sweep`
#[derive(Debug, clap::Args)]
pub struct SweepArgs {
    /// The line description (YAML).
    pub line: PathBuf,
    /// The input to vary and its range: "PATH=A..B UNIT", e.g.
    /// "web.speed=50..400 m/min" (the unit may follow as a separate word,
    /// and is left out for a plain number). PATH is a YAML path into the
    /// line description (web.speed, charge[0].sigma, readings[1].reading,
    /// points[2].at[2], ground_plane, ...) where the file has a number or a
    /// quantity; the unit must be of the same dimension.
    #[arg(
        long,
        required = true,
        num_args = 1..=2,
        value_names = ["PATH=A..B", "UNIT"],
        action = clap::ArgAction::Set
    )]
    pub vary: Vec<String>,
    /// Number of evenly spaced values from A to B, both included (2 to 201;
    /// each is a full assessment).
    #[arg(
        long,
        default_value_t = 11,
        value_name = "N",
        allow_negative_numbers = true
    )]
    pub steps: usize,
    /// Folder under which the sweep's folder is created.
    #[arg(long, value_name = "DIR", default_value = "reports")]
    pub out: PathBuf,
}

/// `websigma assess`
#[derive(Debug, clap::Args)]
pub struct AssessArgs {
    /// The line description (YAML).
    pub line: PathBuf,
    /// A threshold profile to apply besides the line's `assess:` list: a
    /// shipped name (see `websigma profiles`) or a YAML file. Repeatable.
    #[arg(long = "profile", value_name = "NAME|FILE")]
    pub profiles: Vec<String>,
    /// Folder under which the report folder is created.
    #[arg(long, value_name = "DIR", default_value = "reports")]
    pub out: PathBuf,
    /// Relative tolerance of the integration (1e-12 to 1e-2).
    #[arg(
        long,
        default_value_t = 1e-9,
        value_name = "TOL",
        allow_hyphen_values = true
    )]
    pub tolerance: f64,
    /// Panel size of the conductors' solve (grounded and isolated rollers,
    /// `conductors:`), e.g. "50 mm"; default 100 mm, coarsened if the line
    /// has too many conductors for it. "off": no conductors, only the
    /// ground plane screens (the free-space model).
    #[arg(long, value_name = "PANEL|off", allow_hyphen_values = true)]
    pub conductors: Option<String>,
    /// Points per side of the field map, 20 to 1000 (the map has N × N/2
    /// points).
    #[arg(
        long,
        default_value_t = 160,
        value_name = "N",
        allow_negative_numbers = true
    )]
    pub map_resolution: usize,
    /// When a limit fails, also plan the fewest powered bars, up to N (1 to
    /// 8), that pass, and add the plan to the report: the same search and
    /// answer as `websigma plan --max-bars N` with its defaults (candidates
    /// every 100 mm on both sides of the web, 40 mm from it).
    #[arg(long, value_name = "N", allow_negative_numbers = true)]
    pub plan: Option<usize>,
}

/// `websigma readings`
#[derive(Debug, clap::Args)]
pub struct ReadingsArgs {
    /// The line description (YAML).
    pub line: PathBuf,
    /// Output format.
    #[arg(long, value_enum, default_value_t = OutputFormat::Table)]
    pub format: OutputFormat,
    /// Relative tolerance of the integration (1e-12 to 1e-2).
    #[arg(
        long,
        default_value_t = 1e-9,
        value_name = "TOL",
        allow_hyphen_values = true
    )]
    pub tolerance: f64,
    /// Panel size of the conductors' solve (grounded and isolated rollers,
    /// `conductors:`), e.g. "50 mm"; default 100 mm, coarsened if the line
    /// has too many conductors for it. "off": no conductors, only the
    /// ground plane screens (the free-space model).
    #[arg(long, value_name = "PANEL|off", allow_hyphen_values = true)]
    pub conductors: Option<String>,
}

/// `websigma plan`
#[derive(Debug, clap::Args)]
pub struct PlanArgs {
    /// The line description (YAML).
    pub line: PathBuf,
    /// Place exactly this many bars, 1 to 8 (the search is combinatorial).
    #[arg(
        long,
        value_name = "N",
        conflicts_with = "max_bars",
        allow_negative_numbers = true
    )]
    pub bars: Option<usize>,
    /// Find the fewest bars, up to N (1 to 8), that pass.
    #[arg(
        long,
        value_name = "N",
        default_value_t = 3,
        allow_negative_numbers = true
    )]
    pub max_bars: usize,
    /// Kind of bar to place.
    #[arg(long, value_enum, default_value_t = BarKind::Powered)]
    pub kind: BarKind,
    /// Bar-to-web distance of the candidates (a positive length).
    #[arg(
        long,
        default_value = "40 mm",
        value_name = "LENGTH",
        allow_hyphen_values = true
    )]
    pub distance: String,
    /// Spacing of candidate positions along the spans (10 mm or more).
    #[arg(
        long,
        default_value = "100 mm",
        value_name = "LENGTH",
        allow_hyphen_values = true
    )]
    pub spacing: String,
    /// Only these spans, e.g. "S3,S5" or "R2-R3".
    #[arg(long, value_name = "SPANS")]
    pub spans: Option<String>,
    /// A YAML list of candidate positions (eliminator entries without ids),
    /// up to 5,000 entries and 1 MiB.
    #[arg(long, value_name = "FILE.yaml")]
    pub candidates: Option<PathBuf>,
    /// How many plans to list, 1 to 100.
    #[arg(
        long,
        default_value_t = 5,
        value_name = "K",
        allow_negative_numbers = true
    )]
    pub top: usize,
    /// Output format: table, csv (one row per bar of each plan) or json.
    #[arg(long, value_enum, default_value_t = OutputFormat::Table)]
    pub format: OutputFormat,
    /// Write a new line description with the best plan's bars added (the
    /// original is never modified; an existing file is not overwritten).
    #[arg(long, value_name = "OUT.yaml")]
    pub apply: Option<PathBuf>,
    /// Threshold profile to apply besides the line's `assess:` list. Repeatable.
    #[arg(long = "profile", value_name = "NAME|FILE")]
    pub profiles: Vec<String>,
    /// Relative tolerance of the integration (1e-12 to 1e-2).
    #[arg(
        long,
        default_value_t = 1e-6,
        value_name = "TOL",
        allow_hyphen_values = true
    )]
    pub tolerance: f64,
    /// Panel size of the conductors' solve (grounded and isolated rollers,
    /// `conductors:`), e.g. "50 mm"; default 100 mm, coarsened if the line
    /// has too many conductors for it. "off": no conductors, only the
    /// ground plane screens (the free-space model).
    #[arg(long, value_name = "PANEL|off", allow_hyphen_values = true)]
    pub conductors: Option<String>,
}

/// Kind of static eliminator.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum BarKind {
    /// A powered ionising bar.
    Powered,
    /// A passive device (tinsel, brush, cord).
    Passive,
}

/// `websigma profiles`
#[derive(Debug, clap::Args)]
pub struct ProfilesArgs {
    /// A profile to show in full.
    pub name: Option<String>,
}

/// `websigma check`
#[derive(Debug, clap::Args)]
pub struct CheckArgs {
    /// The line description (YAML).
    pub line: PathBuf,
    /// Panel size of the conductors' solve (grounded and isolated rollers,
    /// `conductors:`), e.g. "50 mm"; default 100 mm, coarsened if the line
    /// has too many conductors for it. "off": no conductors, only the
    /// ground plane screens (the free-space model).
    #[arg(long, value_name = "PANEL|off", allow_hyphen_values = true)]
    pub conductors: Option<String>,
}

/// `websigma field`
#[derive(Debug, clap::Args)]
pub struct FieldArgs {
    /// The line description (YAML).
    pub line: PathBuf,
    /// A point "X,Y,Z": metres, or lengths with units ("1.2 m,0,25 mm"). Repeatable.
    #[arg(long = "at", value_name = "X,Y,Z", allow_hyphen_values = true)]
    pub at: Vec<String>,
    /// A CSV file of points with header x,y,z (metres) and an optional id
    /// column: a regular file, rows of up to 64 KiB, quoted cells ("B, 2").
    #[arg(long, value_name = "FILE.csv", conflicts_with = "at")]
    pub points: Option<PathBuf>,
    /// With --points: evaluate the good rows and list the bad ones on
    /// stderr (by default any bad row stops the command, all listed).
    #[arg(long, requires = "points", conflicts_with = "at")]
    pub skip_bad_points: bool,
    /// Output format.
    #[arg(long, value_enum, default_value_t = OutputFormat::Table)]
    pub format: OutputFormat,
    /// Also give each span's contribution (the span and its ground-plane image).
    #[arg(long)]
    pub contributions: bool,
    /// Relative tolerance of the integration (1e-12 to 1e-2).
    #[arg(
        long,
        default_value_t = 1e-9,
        value_name = "TOL",
        allow_hyphen_values = true
    )]
    pub tolerance: f64,
    /// Panel size of the conductors' solve (grounded and isolated rollers,
    /// `conductors:`), e.g. "50 mm"; default 100 mm, coarsened if the line
    /// has too many conductors for it. "off": no conductors, only the
    /// ground plane screens (the free-space model).
    #[arg(long, value_name = "PANEL|off", allow_hyphen_values = true)]
    pub conductors: Option<String>,
}

/// `websigma demo`
#[derive(Debug, clap::Args)]
pub struct DemoArgs {
    /// Folder under which the report folder is created.
    #[arg(long, value_name = "DIR", default_value = "reports")]
    pub out: PathBuf,
}

/// How results are printed.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum OutputFormat {
    /// Aligned text table with SI prefixes.
    Table,
    /// Comma-separated values in SI units.
    Csv,
    /// JSON in SI units.
    Json,
}

#[cfg(test)]
mod tests {
    use super::*;
    use clap::CommandFactory;

    #[test]
    fn verify_cli() {
        Cli::command().debug_assert();
    }
}
