//! Physical quantities at the edges of the program: parse text with units into
//! SI values, and format SI values back into text with SI prefixes.
//!
//! Everything inside websigma is SI (m, s, C, V, F). Text such as `"25 mm"`,
//! `"250 m/min"` or `"1.7 uC/m^2"` is turned into an SI `f64` by
//! [`parse_quantity`] as soon as it is read, and an SI value is turned back into
//! readable text by [`format_quantity`] / [`format_si`] only when it is shown.
//!
//! ## Formula
//!
//! A quantity written as a number $x$ followed by a unit $u$ has the SI value
//!
//! $$ q_\mathrm{SI} = x \cdot \frac{a_u}{b_u} $$
//!
//! and is shown as $q_\mathrm{SI} = m \cdot 10^{k}$ with the prefix of exponent
//! $k$ (a multiple of 3 for SI prefixes) chosen so that $1 \le |m| < 1000$, and
//! $m$ rounded to 4 significant digits.
//!
//! | symbol | meaning | unit |
//! | --- | --- | --- |
//! | $x$ | the number as written | the written unit |
//! | $a_u / b_u$ | exact conversion factor of unit $u$ to SI, kept as a ratio so that e.g. `mm` divides by 1000 | SI unit / written unit |
//! | $q_\mathrm{SI}$ | value used inside the program | SI unit of the dimension |
//! | $m$, $k$ | mantissa and decimal exponent of the shown prefix | 1 |
//!
//! ## Accepted units
//!
//! Unit symbols are case-sensitive (`m` milli, `M` mega). `u`, `µ` (U+00B5) and
//! `μ` (U+03BC) all mean micro; `^2` and `²` are the same; `Ω` and `ohm` are
//! the same; between `ohm` and `m`/`cm` a space, `·`, `⋅`, `*`, `.` or nothing
//! is accepted. The space between number and unit is optional.
//!
//! | dimension | SI | accepted units |
//! | --- | --- | --- |
//! | length | m | `m`, `cm`, `mm`, `um`/`µm`/`μm`, `in`/`inch`/`inches` (0.0254 m), `mil`/`mils` (0.001 in = 25.4 µm), `ft` (0.3048 m) |
//! | speed | m/s | `m/s`, `mm/s`, `m/min`, `ft/min` or `fpm` (0.3048 m / 60 s), `ft/s` |
//! | surface charge density | C/m² | `C/m^2`, `mC/m^2`, `uC/m^2`, `nC/m^2`, `pC/m^2`, `uC/cm^2`, `nC/cm^2`, `pC/cm^2` |
//! | field strength | V/m | `V/m`, `kV/m`, `MV/m`, `V/mm`, `kV/mm`, `V/cm`, `kV/cm`, `V/in`, `kV/in`, `V/inch`, `kV/inch`, `V/mil`, `kV/mil` (dielectric strengths) |
//! | voltage | V | `mV`, `V`, `kV`, `MV` |
//! | capacitance | F | `pF`, `nF`, `uF`, `F` |
//! | charge | C | `pC`, `nC`, `uC`, `mC`, `C` |
//! | resistivity | Ω·m | `ohm m`, `ohm cm`, `Ω·m`, `Ω·cm`, ... |
//! | surface resistivity | Ω (per square) | `ohm/sq`, `ohm/square`, `Ω/sq`, `Ω/□` |
//! | energy | J | `nJ`, `uJ`, `mJ`, `J` |
//! | time | s | `ms`, `s`, `min`, `h` |
//! | percentage | 1 | `%` (`"95 %"` is 0.95) |
//! | number | 1 | no unit |
//!
//! A bare `0` (or `0.0`, `-0`, `0e3`) is zero in every dimension. Any other
//! bare number for a dimensioned quantity is refused because its unit is
//! missing ([`parse_quantity_or`] lets a caller supply a unit for bare numbers).
//!
//! ## Tolerances
//!
//! [`parse_with_tolerance`] also reads a value with a tolerance in the same
//! text, `x ± t` (`±` or `+-`, spaces optional): `"8 uC/m^2 ± 20 %"` (a
//! fraction p of |x|, 0 % to 100 %) or `"8 uC/m^2 ± 1.6 uC/m^2"` (a
//! half-width t ≥ 0 in any unit of x's dimension). The half-width is
//! δ = p·|x| or δ = t ([`Tolerance::half_width`]). Every other parser refuses
//! a `±` ([`ParseQuantityError::ToleranceNotAccepted`]).
//!
//! ## Assumptions and valid range
//!
//! - Numbers are decimal or scientific (`1e15`, `4e-6`, `-2.5`, `+3`, `.5`).
//!   `NaN` and infinities are refused.
//! - SI results must satisfy $10^{-300} \le |q_\mathrm{SI}| \le 10^{300}$ or be
//!   exactly zero; outside that range the value is refused as too large or too
//!   small, so that no downstream arithmetic starts from an overflowed or
//!   subnormal number.
//! - Shown values carry 4 significant digits (relative rounding error at most
//!   $5 \cdot 10^{-4}$); formatted text parses back with the same dimension.
//! - Prefixes are shown only where the parser accepts them back (e.g. no `km`);
//!   values beyond the prefixed range are shown in scientific notation in the
//!   SI unit (`"1e15 Ω·m"`). Resistivity is always shown in Ω·m.
//!
//! ## Reference
//!
//! - BIPM, *The International System of Units (SI)*, 9th edition (2019):
//!   unit symbols and prefixes p, n, µ, m, k, M, G.
//! - NIST Special Publication 811 (2008), *Guide for the Use of the
//!   International System of Units*, appendix B: 1 in = 0.0254 m and
//!   1 ft = 0.3048 m exactly.
//! - CODATA 2018 recommended values (Tiesinga et al., Rev. Mod. Phys. 93,
//!   025010 (2021)): vacuum electric permittivity ε0.

use std::fmt::Write as _;

/// A length [m].
pub type Meters = f64;
/// A time [s].
pub type Seconds = f64;
/// An electric potential or potential difference [V].
pub type Volts = f64;
/// An electric field strength [V/m].
pub type VoltsPerMeter = f64;
/// A surface charge density [C/m²].
pub type CoulombsPerSquareMeter = f64;
/// A speed [m/s].
pub type MetersPerSecond = f64;
/// A capacitance [F].
pub type Farads = f64;
/// An electric charge [C].
pub type Coulombs = f64;
/// A volume resistivity [Ω·m].
pub type OhmMeters = f64;
/// An energy [J].
pub type Joules = f64;

/// Vacuum permittivity [F/m], CODATA 2018.
pub const EPS0: f64 = 8.8541878128e-12;

/// Largest accepted magnitude of a parsed SI value [SI unit of the dimension].
const MAX_MAGNITUDE: f64 = 1e300;
/// Smallest accepted non-zero magnitude of a parsed SI value [SI unit of the dimension].
const MIN_MAGNITUDE: f64 = 1e-300;
/// Longest part of the input echoed back in an error message [characters].
const ECHO_LIMIT: usize = 60;

/// The physical dimension a piece of text is expected to have.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Dim {
    /// A length [m].
    Length,
    /// A speed [m/s].
    Speed,
    /// A surface charge density [C/m²].
    SurfaceChargeDensity,
    /// An electric field strength [V/m].
    Field,
    /// A voltage [V].
    Voltage,
    /// A capacitance [F].
    Capacitance,
    /// An electric charge [C].
    Charge,
    /// A volume resistivity [Ω·m].
    Resistivity,
    /// A surface resistivity [Ω] (ohms per square, Ω/□).
    SurfaceResistivity,
    /// An energy [J].
    Energy,
    /// A time [s].
    Time,
    /// A percentage, stored as a fraction [1] (`"95 %"` is 0.95).
    Percent,
    /// An area [m²] (a chargeable insulating surface).
    Area,
    /// A plain number without unit [1].
    Number,
}

/// All dimensions, in the order used to name a wrongly dimensioned unit.
const ALL_DIMS: [Dim; 14] = [
    Dim::Length,
    Dim::Speed,
    Dim::SurfaceChargeDensity,
    Dim::Field,
    Dim::Voltage,
    Dim::Capacitance,
    Dim::Charge,
    Dim::Resistivity,
    Dim::SurfaceResistivity,
    Dim::Energy,
    Dim::Time,
    Dim::Percent,
    Dim::Area,
    Dim::Number,
];

impl Dim {
    /// Every dimension, in the order used to name a wrongly dimensioned unit.
    pub fn all() -> &'static [Dim] {
        &ALL_DIMS
    }

    /// The dimension's name with its article, for messages: `"a length"`.
    pub fn name(self) -> &'static str {
        match self {
            Dim::Length => "a length",
            Dim::Speed => "a speed",
            Dim::SurfaceChargeDensity => "a surface charge density",
            Dim::Field => "a field strength",
            Dim::Voltage => "a voltage",
            Dim::Capacitance => "a capacitance",
            Dim::Charge => "a charge",
            Dim::Resistivity => "a resistivity",
            Dim::SurfaceResistivity => "a surface resistivity",
            Dim::Energy => "an energy",
            Dim::Time => "a time",
            Dim::Percent => "a percentage",
            Dim::Area => "an area",
            Dim::Number => "a number",
        }
    }

    /// A typical value as a user would write it: `"120 mm"`.
    pub fn example(self) -> &'static str {
        match self {
            Dim::Length => "120 mm",
            Dim::Speed => "250 m/min",
            Dim::SurfaceChargeDensity => "1.7 uC/m^2",
            Dim::Field => "48 kV/m",
            Dim::Voltage => "5 kV",
            Dim::Capacitance => "150 pF",
            Dim::Charge => "5 nC",
            Dim::Resistivity => "1e15 ohm m",
            Dim::SurfaceResistivity => "1e12 ohm/sq",
            Dim::Energy => "0.24 mJ",
            Dim::Time => "400 s",
            Dim::Percent => "95 %",
            Dim::Area => "50 cm^2",
            Dim::Number => "2.2",
        }
    }

    /// The SI unit symbol of values of this dimension inside the program:
    /// `"m"`; empty for [`Dim::Percent`] (a fraction) and [`Dim::Number`].
    pub fn si_unit(self) -> &'static str {
        match self {
            Dim::Length => "m",
            Dim::Speed => "m/s",
            Dim::SurfaceChargeDensity => "C/m²",
            Dim::Field => "V/m",
            Dim::Voltage => "V",
            Dim::Capacitance => "F",
            Dim::Charge => "C",
            Dim::Resistivity => "Ω·m",
            Dim::SurfaceResistivity => "Ω/sq",
            Dim::Energy => "J",
            Dim::Time => "s",
            Dim::Area => "m²",
            Dim::Percent | Dim::Number => "",
        }
    }

    /// The accepted unit symbols as a comma-separated list, for messages and
    /// help texts: `"m, cm, mm, um, µm, in"`.
    pub fn accepted_units(self) -> &'static str {
        match self {
            Dim::Length => "m, cm, mm, um, µm, in, inch, mil, ft",
            Dim::Speed => "m/s, mm/s, m/min, ft/min, fpm, ft/s",
            Dim::SurfaceChargeDensity => {
                "C/m^2, mC/m^2, uC/m^2, µC/m^2, nC/m^2, pC/m^2, uC/cm^2, nC/cm^2, pC/cm^2, \
                 with ^2 or ²"
            }
            Dim::Field => {
                "V/m, kV/m, MV/m, V/mm, kV/mm, V/cm, kV/cm, V/in, kV/in, V/inch, kV/inch, V/mil, kV/mil"
            }
            Dim::Voltage => "mV, V, kV, MV",
            Dim::Capacitance => "pF, nF, uF, µF, F",
            Dim::Charge => "pC, nC, uC, µC, mC, C",
            Dim::Resistivity => "ohm m, ohm cm, Ω·m, Ω·cm",
            Dim::SurfaceResistivity => "ohm/sq, ohm/square, Ω/sq, Ω/□",
            Dim::Energy => "nJ, uJ, µJ, mJ, J",
            Dim::Time => "ms, s, min, h",
            Dim::Percent => "%",
            Dim::Area => "m^2, cm^2, mm^2, in^2, with ^2 or ²",
            Dim::Number => "none",
        }
    }

    /// Units the parser accepts, in normalised spelling (see [`normalise_unit`]).
    fn unit_table(self) -> &'static [UnitDef] {
        match self {
            Dim::Length => LENGTH_UNITS,
            Dim::Speed => SPEED_UNITS,
            Dim::SurfaceChargeDensity => SCD_UNITS,
            Dim::Field => FIELD_UNITS,
            Dim::Voltage => VOLTAGE_UNITS,
            Dim::Capacitance => CAPACITANCE_UNITS,
            Dim::Charge => CHARGE_UNITS,
            Dim::Resistivity => RESISTIVITY_UNITS,
            Dim::SurfaceResistivity => SURFACE_RESISTIVITY_UNITS,
            Dim::Energy => ENERGY_UNITS,
            Dim::Time => TIME_UNITS,
            Dim::Percent => PERCENT_UNITS,
            Dim::Area => AREA_UNITS,
            Dim::Number => &[],
        }
    }

    /// Units used for display, as (decimal exponent, symbol), ascending. Each
    /// symbol is accepted back by the parser. The entry with exponent 0 is the
    /// SI unit (for [`Dim::Percent`] the values are first multiplied by 100).
    fn display_units(self) -> &'static [(i32, &'static str)] {
        match self {
            Dim::Length => &[(-6, "µm"), (-3, "mm"), (0, "m")],
            Dim::Speed => &[(-3, "mm/s"), (0, "m/s")],
            Dim::SurfaceChargeDensity => &[
                (-12, "pC/m²"),
                (-9, "nC/m²"),
                (-6, "µC/m²"),
                (-3, "mC/m²"),
                (0, "C/m²"),
            ],
            Dim::Field => &[(0, "V/m"), (3, "kV/m"), (6, "MV/m")],
            Dim::Voltage => &[(-3, "mV"), (0, "V"), (3, "kV"), (6, "MV")],
            Dim::Capacitance => &[(-12, "pF"), (-9, "nF"), (-6, "µF"), (0, "F")],
            Dim::Charge => &[(-12, "pC"), (-9, "nC"), (-6, "µC"), (-3, "mC"), (0, "C")],
            Dim::Resistivity => &[(0, "Ω·m")],
            Dim::SurfaceResistivity => &[(0, "Ω/sq")],
            Dim::Energy => &[(-9, "nJ"), (-6, "µJ"), (-3, "mJ"), (0, "J")],
            Dim::Time => &[(-3, "ms"), (0, "s")],
            Dim::Percent => &[(0, "%")],
            // cm² is 1e-4 m²: 50 cm² shows as "50 cm²", 1.2 m² as "1.2 m²".
            Dim::Area => &[(-6, "mm²"), (-4, "cm²"), (0, "m²")],
            Dim::Number => &[(0, "")],
        }
    }
}

/// One accepted unit: SI value = number · `mul` / `div`.
struct UnitDef {
    /// Normalised symbol.
    sym: &'static str,
    /// Multiplier to SI [SI unit / unit].
    mul: f64,
    /// Divisor to SI [unit / SI unit]; dividing by an exact power of ten keeps
    /// e.g. `"25 mm"` exactly the double nearest to 0.025.
    div: f64,
}

/// Shorthand for a table entry.
const fn u(sym: &'static str, mul: f64, div: f64) -> UnitDef {
    UnitDef { sym, mul, div }
}

/// The inch [m], exact by definition (NIST SP 811, appendix B).
const INCH: f64 = 0.0254;
/// The foot [m], exact by definition (NIST SP 811, appendix B).
const FOOT: f64 = 0.3048;

const LENGTH_UNITS: &[UnitDef] = &[
    u("m", 1.0, 1.0),
    u("cm", 1.0, 1e2),
    u("mm", 1.0, 1e3),
    u("um", 1.0, 1e6),
    u("in", INCH, 1.0),
    u("inch", INCH, 1.0),
    u("inches", INCH, 1.0),
    u("mil", INCH, 1e3),
    u("mils", INCH, 1e3),
    u("ft", FOOT, 1.0),
];
const SPEED_UNITS: &[UnitDef] = &[
    u("m/s", 1.0, 1.0),
    u("mm/s", 1.0, 1e3),
    u("m/min", 1.0, 60.0),
    u("ft/min", FOOT, 60.0),
    u("fpm", FOOT, 60.0),
    u("ft/s", FOOT, 1.0),
];
const SCD_UNITS: &[UnitDef] = &[
    u("C/m^2", 1.0, 1.0),
    u("mC/m^2", 1.0, 1e3),
    u("uC/m^2", 1.0, 1e6),
    u("nC/m^2", 1.0, 1e9),
    u("pC/m^2", 1.0, 1e12),
    // 1 cm² = 1e-4 m², so x C/cm² = x·1e4 C/m².
    u("uC/cm^2", 1.0, 1e2),
    u("nC/cm^2", 1.0, 1e5),
    u("pC/cm^2", 1.0, 1e8),
];
const AREA_UNITS: &[UnitDef] = &[
    u("m^2", 1.0, 1.0),
    u("cm^2", 1.0, 1e4),
    u("mm^2", 1.0, 1e6),
    // The square inch, exact: (0.0254 m)² (NIST SP 811, appendix B).
    u("in^2", INCH * INCH, 1.0),
];
const FIELD_UNITS: &[UnitDef] = &[
    u("V/m", 1.0, 1.0),
    u("kV/m", 1e3, 1.0),
    u("MV/m", 1e6, 1.0),
    u("V/mm", 1e3, 1.0),
    u("kV/mm", 1e6, 1.0),
    u("V/cm", 1e2, 1.0),
    u("kV/cm", 1e5, 1.0),
    u("V/in", 1.0, INCH),
    u("kV/in", 1e3, INCH),
    u("V/inch", 1.0, INCH),
    u("kV/inch", 1e3, INCH),
    u("V/mil", 1e3, INCH),
    u("kV/mil", 1e6, INCH),
];
const VOLTAGE_UNITS: &[UnitDef] = &[
    u("mV", 1.0, 1e3),
    u("V", 1.0, 1.0),
    u("kV", 1e3, 1.0),
    u("MV", 1e6, 1.0),
];
const CAPACITANCE_UNITS: &[UnitDef] = &[
    u("F", 1.0, 1.0),
    u("uF", 1.0, 1e6),
    u("nF", 1.0, 1e9),
    u("pF", 1.0, 1e12),
];
const CHARGE_UNITS: &[UnitDef] = &[
    u("C", 1.0, 1.0),
    u("mC", 1.0, 1e3),
    u("uC", 1.0, 1e6),
    u("nC", 1.0, 1e9),
    u("pC", 1.0, 1e12),
];
const RESISTIVITY_UNITS: &[UnitDef] = &[
    u("ohm*m", 1.0, 1.0),
    u("ohmm", 1.0, 1.0),
    u("ohm*cm", 1.0, 1e2),
    u("ohmcm", 1.0, 1e2),
];
/// Ohms per square: the resistance of any square of a sheet between
/// opposite edges (IEC 61340-2-3), dimensionally Ω.
const SURFACE_RESISTIVITY_UNITS: &[UnitDef] = &[
    u("ohm/sq", 1.0, 1.0),
    u("ohm/square", 1.0, 1.0),
    u("ohm/\u{25a1}", 1.0, 1.0),
    u("ohms/sq", 1.0, 1.0),
];
const ENERGY_UNITS: &[UnitDef] = &[
    u("J", 1.0, 1.0),
    u("mJ", 1.0, 1e3),
    u("uJ", 1.0, 1e6),
    u("nJ", 1.0, 1e9),
];
const TIME_UNITS: &[UnitDef] = &[
    u("s", 1.0, 1.0),
    u("ms", 1.0, 1e3),
    u("min", 60.0, 1.0),
    u("h", 3600.0, 1.0),
];
const PERCENT_UNITS: &[UnitDef] = &[u("%", 1.0, 100.0)];

/// Why a piece of text is not a valid quantity of the expected dimension.
///
/// Every message is lower case without a trailing period, echoes the input
/// (shortened if very long) and says what would have been accepted.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum ParseQuantityError {
    /// The text is empty or only whitespace.
    #[error("expected {} such as \"{}\", got an empty value", .dim.name(), .dim.example())]
    Empty {
        /// The expected dimension.
        dim: Dim,
    },
    /// The text does not start with a number.
    #[error(
        "expected {} such as \"{}\", got {} (it does not start with a number)",
        .dim.name(), .dim.example(), echo(.input)
    )]
    NotANumber {
        /// The trimmed input.
        input: String,
        /// The expected dimension.
        dim: Dim,
    },
    /// The number is written in hexadecimal, octal or binary (`0x10`,
    /// `0o17`, `0b101`), or with digit separators (`1_000`), which YAML 1.1
    /// readers would take as other numbers than the digits shown.
    #[error(
        "{} is not a decimal number (hexadecimal, octal and binary forms such as 0x10, and digit separators such as 1_000, are not accepted): expected {} such as \"{}\"",
        echo(.input), .dim.name(), .dim.example()
    )]
    NotDecimal {
        /// The trimmed input.
        input: String,
        /// The expected dimension.
        dim: Dim,
    },
    /// The number is `NaN` or an infinity.
    #[error(
        "{} is not a finite number: expected {} such as \"{}\"",
        echo(.input), .dim.name(), .dim.example()
    )]
    NotFinite {
        /// The trimmed input.
        input: String,
        /// The expected dimension.
        dim: Dim,
    },
    /// The value exceeds 1e300 in SI units, or the number overflows.
    #[error(
        "{} is too large: expected {} of at most {} in magnitude",
        echo(.input), .dim.name(), limit_text("1e300", *.dim)
    )]
    TooLarge {
        /// The trimmed input.
        input: String,
        /// The expected dimension.
        dim: Dim,
    },
    /// The value is non-zero but below 1e-300 in SI units.
    #[error(
        "{} is too small: expected {} of zero or at least {} in magnitude",
        echo(.input), .dim.name(), limit_text("1e-300", *.dim)
    )]
    TooSmall {
        /// The trimmed input.
        input: String,
        /// The expected dimension.
        dim: Dim,
    },
    /// A non-zero bare number was given for a dimensioned quantity.
    #[error(
        "expected {} such as \"{}\", got {} ({})",
        .dim.name(), .dim.example(), echo(.input), missing_unit_hint(*.dim)
    )]
    MissingUnit {
        /// The trimmed input.
        input: String,
        /// The expected dimension.
        dim: Dim,
    },
    /// The unit belongs to another dimension.
    #[error(
        "expected {} such as \"{}\", got {}, which is {} (units: {})",
        .dim.name(), .dim.example(), echo(.input), .got.name(), .dim.accepted_units()
    )]
    WrongDimension {
        /// The trimmed input.
        input: String,
        /// The expected dimension.
        dim: Dim,
        /// The dimension the given unit belongs to.
        got: Dim,
    },
    /// The unit is not known at all.
    #[error(
        "expected {} such as \"{}\", got {} (unknown unit {}; units: {})",
        .dim.name(), .dim.example(), echo(.input), echo(.unit), .dim.accepted_units()
    )]
    UnknownUnit {
        /// The trimmed input.
        input: String,
        /// The expected dimension.
        dim: Dim,
        /// The unit part of the input, as written.
        unit: String,
    },
    /// A unit was given where a plain number is expected.
    #[error(
        "expected {} such as \"{}\", got {} (a plain number takes no unit)",
        .dim.name(), .dim.example(), echo(.input)
    )]
    UnexpectedUnit {
        /// The trimmed input.
        input: String,
        /// The expected dimension.
        dim: Dim,
    },
    /// A tolerance (`±` or `+-`) was written where only a single value is
    /// accepted ([`parse_quantity`], [`parse_quantity_or`]).
    #[error(
        "{} carries a tolerance (±), which only the densities of `charge:` entries (`sigma:`, `adds:`) accept: expected {} such as \"{}\" alone",
        echo(.input), .dim.name(), .dim.example()
    )]
    ToleranceNotAccepted {
        /// The trimmed input.
        input: String,
        /// The expected dimension.
        dim: Dim,
    },
    /// A value with a tolerance ([`parse_with_tolerance`]) whose `±` part
    /// is wrong; the value before the `±` was read.
    #[error(
        "{}: {}; expected {} with a tolerance after ±, relative in % or absolute in a unit of the same dimension, such as {}",
        echo(.input), tolerance_problem_text(.problem, .tolerance, *.dim), .dim.name(), tolerance_examples(*.dim)
    )]
    BadTolerance {
        /// The trimmed input.
        input: String,
        /// The expected dimension.
        dim: Dim,
        /// The part after the `±`, trimmed (empty if none).
        tolerance: String,
        /// What is wrong with it.
        problem: ToleranceProblem,
    },
}

/// What is wrong with the tolerance part of a value such as
/// `"8 uC/m^2 ± 20 %"` ([`ParseQuantityError::BadTolerance`]).
#[derive(Debug, Clone, PartialEq)]
pub enum ToleranceProblem {
    /// More than one `±` (or `+-`) sign.
    TwoSigns,
    /// Nothing before the `±`.
    NoValue,
    /// Nothing after the `±`.
    NoTolerance,
    /// The tolerance does not start with a decimal number.
    NotANumber,
    /// The tolerance is `NaN` or infinite.
    NotFinite,
    /// The tolerance is beyond 1e300 (or non-zero below 1e-300) in SI units.
    OutOfRange,
    /// The tolerance is below zero.
    Negative,
    /// The tolerance is a non-zero number without unit.
    MissingUnit,
    /// The tolerance's unit is not known at all (the unit as written).
    UnknownUnit(String),
    /// The tolerance's unit belongs to another dimension than the value's.
    WrongDimension(Dim),
    /// The tolerance carries a unit where the value is a plain number.
    UnexpectedUnit,
    /// A relative tolerance over 100 %: the range would cross zero. Holds
    /// the same range written with an absolute tolerance, for the message
    /// (`"8 uC/m^2 ± 12 µC/m²"`).
    OverHundredPercent(String),
}

/// The middle of a [`ParseQuantityError::BadTolerance`] message: what is
/// wrong with the tolerance `tolerance` of a value of dimension `dim`.
fn tolerance_problem_text(problem: &ToleranceProblem, tolerance: &str, dim: Dim) -> String {
    let tol = echo(tolerance);
    match problem {
        ToleranceProblem::TwoSigns => "more than one ± (or +-) sign".to_owned(),
        ToleranceProblem::NoValue => "nothing before the ±".to_owned(),
        ToleranceProblem::NoTolerance => "nothing after the ±".to_owned(),
        ToleranceProblem::NotANumber => {
            format!("the tolerance {tol} does not start with a decimal number")
        }
        ToleranceProblem::NotFinite => format!("the tolerance {tol} is not a finite number"),
        ToleranceProblem::OutOfRange => format!(
            "the tolerance {tol} is out of range (zero, or 1e-300 to 1e300 {})",
            dim.si_unit()
        ),
        ToleranceProblem::Negative => {
            format!("the tolerance {tol} is negative: a tolerance is a half-width, zero or more")
        }
        ToleranceProblem::MissingUnit => format!(
            "the tolerance {tol} has no unit: add % for a relative tolerance or a unit of {} ({})",
            dim.name(),
            dim.accepted_units()
        ),
        ToleranceProblem::UnknownUnit(unit) => format!(
            "the tolerance {tol} has an unknown unit {} (units: %, {})",
            echo(unit),
            dim.accepted_units()
        ),
        ToleranceProblem::WrongDimension(got) => format!(
            "the tolerance {tol} is {}, not a percentage or {}",
            got.name(),
            dim.name()
        ),
        ToleranceProblem::UnexpectedUnit => format!(
            "the tolerance {tol} has a unit, which a plain number does not take (% is accepted)"
        ),
        ToleranceProblem::OverHundredPercent(absolute) => format!(
            "the relative tolerance {tol} is over 100 %, so the range would cross zero: write such a range as an absolute tolerance, here {}",
            echo(absolute)
        ),
    }
}

/// Values with a tolerance as a user would write them, relative and
/// absolute: `"8 uC/m^2 ± 20 %" or "8 uC/m^2 ± 1.6 uC/m^2"`.
fn tolerance_examples(dim: Dim) -> String {
    if dim == Dim::SurfaceChargeDensity {
        return "\"8 uC/m^2 ± 20 %\" or \"8 uC/m^2 ± 1.6 uC/m^2\"".to_owned();
    }
    let ex = dim.example();
    match parse_impl(ex, dim, None) {
        Ok(v) if dim != Dim::Percent => format!(
            "\"{ex} ± 20 %\" or \"{ex} ± {}\"",
            format_quantity(0.2 * v.abs(), dim)
        ),
        _ => format!("\"{ex} ± 20 %\""),
    }
}

/// Quote text for a message, shortened to [`ECHO_LIMIT`] characters.
fn echo(text: &str) -> String {
    if text.chars().count() <= ECHO_LIMIT {
        format!("{text:?}")
    } else {
        let short: String = text.chars().take(ECHO_LIMIT).collect();
        format!("{:?}", format!("{short}…"))
    }
}

/// `"1e300 m"`, or `"1e300"` for dimensions without SI unit symbol.
fn limit_text(limit: &str, dim: Dim) -> String {
    match dim.si_unit() {
        "" => limit.to_owned(),
        unit => format!("{limit} {unit}"),
    }
}

/// The parenthesised hint of a missing-unit message.
fn missing_unit_hint(dim: Dim) -> String {
    match dim {
        Dim::Percent => "a unit is missing: add %".to_owned(),
        _ => format!("a unit is missing; units: {}", dim.accepted_units()),
    }
}

/// A number split off the start of the input.
struct Leading<'a> {
    /// The parsed number; may be infinite or zero after overflow/underflow.
    value: f64,
    /// Whether any digit of the mantissa is non-zero.
    nonzero_digits: bool,
    /// The rest of the input after the number, trimmed.
    rest: &'a str,
}

/// Split a decimal or scientific number off the start of `s` (already
/// trimmed). `None` if `s` does not start with one.
fn split_number(s: &str) -> Option<Leading<'_>> {
    let bytes = s.as_bytes();
    let mut i = 0;
    if matches!(bytes.first(), Some(b'+' | b'-')) {
        i += 1;
    }
    let mut digits = 0usize;
    let mut nonzero_digits = false;
    while let Some(&b) = bytes.get(i) {
        if b.is_ascii_digit() {
            digits += 1;
            nonzero_digits |= b != b'0';
            i += 1;
        } else {
            break;
        }
    }
    if bytes.get(i) == Some(&b'.') {
        i += 1;
        while let Some(&b) = bytes.get(i) {
            if b.is_ascii_digit() {
                digits += 1;
                nonzero_digits |= b != b'0';
                i += 1;
            } else {
                break;
            }
        }
    }
    if digits == 0 {
        return None;
    }
    // An exponent only counts if at least one digit follows `e[+-]`.
    if matches!(bytes.get(i), Some(b'e' | b'E')) {
        let mut j = i + 1;
        if matches!(bytes.get(j), Some(b'+' | b'-')) {
            j += 1;
        }
        let start = j;
        while bytes.get(j).is_some_and(u8::is_ascii_digit) {
            j += 1;
        }
        if j > start {
            i = j;
        }
    }
    // `i` only ever advanced over ASCII bytes, so it is a char boundary.
    let (number, rest) = s.split_at_checked(i)?;
    let value = number.parse::<f64>().ok()?;
    Some(Leading {
        value,
        nonzero_digits,
        rest: rest.trim(),
    })
}

/// Whether `s` is spelled like `NaN`, `inf` or `infinity` (with optional sign),
/// optionally followed by a unit.
fn is_non_finite_word(s: &str) -> bool {
    let unsigned = s.strip_prefix(['+', '-']).unwrap_or(s);
    // YAML's spellings: `.nan`, `.inf`, `-.Inf`.
    let unsigned = unsigned.strip_prefix('.').unwrap_or(unsigned);
    let word: String = unsigned
        .chars()
        .take_while(char::is_ascii_alphabetic)
        .collect::<String>()
        .to_ascii_lowercase();
    matches!(word.as_str(), "nan" | "inf" | "infinity")
}

/// Bring a unit as written into the spelling of the unit tables: micro signs
/// become `u`, `²` becomes `^2`, `Ω`/`Ohm` become `ohm`, the product
/// separators `·`, `⋅`, `*`, `.` become `*`, whitespace next to `/`, `^` or a
/// separator is dropped, and any other inner whitespace becomes `*`.
fn normalise_unit(unit: &str) -> String {
    let mut mapped = String::with_capacity(unit.len() + 4);
    for c in unit.chars() {
        match c {
            '\u{b5}' | '\u{3bc}' => mapped.push('u'),
            '\u{b2}' => mapped.push_str("^2"),
            '\u{3a9}' | '\u{2126}' => mapped.push_str("ohm"),
            '\u{b7}' | '\u{22c5}' | '*' | '.' => mapped.push('*'),
            c if c.is_whitespace() => mapped.push(' '),
            c => mapped.push(c),
        }
    }
    if let Some(tail) = mapped.strip_prefix("Ohm") {
        mapped = format!("ohm{tail}");
    }
    let chars: Vec<char> = mapped.chars().collect();
    let mut out = String::with_capacity(mapped.len());
    let mut i = 0;
    while let Some(&c) = chars.get(i) {
        if c == ' ' {
            let mut j = i;
            while chars.get(j) == Some(&' ') {
                j += 1;
            }
            let glue = |x: Option<char>| matches!(x, Some('/' | '^' | '*'));
            if !glue(out.chars().last()) && !glue(chars.get(j).copied()) && j < chars.len() {
                out.push('*');
            }
            i = j;
        } else {
            out.push(c);
            i += 1;
        }
    }
    out
}

/// Find a normalised unit symbol in a dimension's table.
fn lookup(dim: Dim, normalised: &str) -> Option<&'static UnitDef> {
    dim.unit_table().iter().find(|d| d.sym == normalised)
}

/// Check the range of an SI result.
fn checked(value: f64, input: &str, dim: Dim) -> Result<f64, ParseQuantityError> {
    if value.is_nan() {
        Err(ParseQuantityError::NotFinite {
            input: input.to_owned(),
            dim,
        })
    } else if value.abs() > MAX_MAGNITUDE {
        Err(ParseQuantityError::TooLarge {
            input: input.to_owned(),
            dim,
        })
    } else if value != 0.0 && value.abs() < MIN_MAGNITUDE {
        Err(ParseQuantityError::TooSmall {
            input: input.to_owned(),
            dim,
        })
    } else {
        Ok(value)
    }
}

/// Shared parser; `bare_unit_factor` is applied to non-zero bare numbers when
/// given, otherwise they are refused (except for [`Dim::Number`]).
fn parse_impl(
    input: &str,
    dim: Dim,
    bare_unit_factor: Option<f64>,
) -> Result<f64, ParseQuantityError> {
    let text = input.trim();
    if text.is_empty() {
        return Err(ParseQuantityError::Empty { dim });
    }
    let owned = || text.to_owned();
    if !tolerance_signs(text).is_empty() {
        return Err(ParseQuantityError::ToleranceNotAccepted {
            input: owned(),
            dim,
        });
    }
    if is_non_finite_word(text) {
        return Err(ParseQuantityError::NotFinite {
            input: owned(),
            dim,
        });
    }
    if is_non_decimal(text) {
        return Err(ParseQuantityError::NotDecimal {
            input: owned(),
            dim,
        });
    }
    let Some(lead) = split_number(text) else {
        return Err(ParseQuantityError::NotANumber {
            input: owned(),
            dim,
        });
    };
    if lead.value.is_infinite() {
        return Err(ParseQuantityError::TooLarge {
            input: owned(),
            dim,
        });
    }
    if lead.nonzero_digits && lead.value == 0.0 {
        return Err(ParseQuantityError::TooSmall {
            input: owned(),
            dim,
        });
    }

    if lead.rest.is_empty() {
        if !lead.nonzero_digits {
            // Zero is zero in every unit; also turns "-0" into +0.
            return Ok(0.0);
        }
        return match (bare_unit_factor, dim) {
            (Some(factor), _) => checked(lead.value * factor, text, dim),
            (None, Dim::Number) => checked(lead.value, text, dim),
            (None, _) => Err(ParseQuantityError::MissingUnit {
                input: owned(),
                dim,
            }),
        };
    }

    if dim == Dim::Number {
        return Err(ParseQuantityError::UnexpectedUnit {
            input: owned(),
            dim,
        });
    }
    let normalised = normalise_unit(lead.rest);
    let Some(def) = lookup(dim, &normalised) else {
        let other = ALL_DIMS
            .into_iter()
            .find(|&d| lookup(d, &normalised).is_some());
        return Err(match other {
            Some(got) => ParseQuantityError::WrongDimension {
                input: owned(),
                dim,
                got,
            },
            None => ParseQuantityError::UnknownUnit {
                input: owned(),
                dim,
                unit: lead.rest.to_owned(),
            },
        });
    };
    if !lead.nonzero_digits {
        return Ok(0.0);
    }
    checked(lead.value * def.mul / def.div, text, dim)
}

/// Whether `text` begins with a number written other than in decimal
/// digits: a `0x`/`0o`/`0b` prefix (after an optional sign) or a `_` digit
/// separator inside the leading number.
fn is_non_decimal(text: &str) -> bool {
    let t = text.trim_start_matches(['+', '-']);
    let b = t.as_bytes();
    if b.len() >= 2 && b[0] == b'0' && matches!(b[1], b'x' | b'X' | b'o' | b'O' | b'b' | b'B') {
        return true;
    }
    let lead: &str = t
        .split(|c: char| !(c.is_ascii_digit() || c == '_' || c == '.'))
        .next()
        .unwrap_or("");
    lead.contains('_')
}

/// Parse text such as `"25 mm"` as a quantity of dimension `dim` and return its
/// SI value ([m], [m/s], [C/m²], [V/m], [V], [F], [C], [Ω·m], [J], [s], a fraction
/// for percentages, or the plain number).
///
/// See the [module documentation](crate::units) for the accepted units. A bare
/// zero is accepted for every dimension; other bare numbers need a unit unless
/// `dim` is [`Dim::Number`].
///
/// # Errors
///
/// A [`ParseQuantityError`] saying what was expected and what was got: empty
/// text, no leading number, `NaN`/infinity, a result beyond 1e300 or non-zero
/// below 1e-300 in SI units, a missing, unknown or wrongly dimensioned unit, or
/// a unit on a plain number.
///
/// # Examples
///
/// ```
/// use websigma::units::{parse_quantity, Dim};
///
/// assert_eq!(parse_quantity("25 mm", Dim::Length), Ok(0.025));
/// assert_eq!(parse_quantity("1 in", Dim::Length), Ok(0.0254));
/// assert_eq!(parse_quantity("95 %", Dim::Percent), Ok(0.95));
/// assert_eq!(parse_quantity("0", Dim::Voltage), Ok(0.0));
/// let sigma = parse_quantity("1.7 µC/m²", Dim::SurfaceChargeDensity).unwrap();
/// assert!((sigma - 1.7e-6).abs() < 1e-18);
///
/// let err = parse_quantity("120 kV", Dim::Length).unwrap_err();
/// assert_eq!(
///     err.to_string(),
///     "expected a length such as \"120 mm\", got \"120 kV\", which is a voltage \
///      (units: m, cm, mm, um, µm, in, inch, mil, ft)"
/// );
/// ```
pub fn parse_quantity(input: &str, dim: Dim) -> Result<f64, ParseQuantityError> {
    parse_impl(input, dim, None)
}

/// Like [`parse_quantity`], but a bare number is also accepted and multiplied
/// by `bare_unit_factor` [SI unit per bare unit] — e.g. `0.001` to read bare
/// numbers as millimetres. Applies to every dimension, [`Dim::Number`]
/// included. A bare zero stays zero whatever the factor.
///
/// # Errors
///
/// As [`parse_quantity`], except that a bare number is not a missing unit; the
/// scaled bare number must still lie within the accepted range.
///
/// # Examples
///
/// ```
/// use websigma::units::{parse_quantity_or, Dim};
///
/// assert_eq!(parse_quantity_or("25", Dim::Length, 1e-3), Ok(0.025));
/// assert_eq!(parse_quantity_or("1.2 m", Dim::Length, 1e-3), Ok(1.2));
/// ```
pub fn parse_quantity_or(
    input: &str,
    dim: Dim,
    bare_unit_factor: f64,
) -> Result<f64, ParseQuantityError> {
    parse_impl(input, dim, Some(bare_unit_factor))
}

/// The tolerance written after a value, as [`parse_with_tolerance`] reads it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Tolerance {
    /// A fraction of the value's magnitude [1]: `± 20 %` is `Relative(0.2)`;
    /// from 0 to 1.
    Relative(f64),
    /// A half-width in the SI unit of the value's dimension (e.g. [C/m²]):
    /// `± 500 nC/m^2` is `Absolute(5e-7)`; zero or more.
    Absolute(f64),
}

impl Tolerance {
    /// The absolute half-width δ of the range `nominal ± δ` [SI unit of the
    /// value's dimension]:
    ///
    /// $$ \delta = p \cdot |x| \ \text{(relative)}, \qquad \delta = t \ \text{(absolute)} $$
    ///
    /// with $x$ the nominal value [SI unit], $p$ the fraction [1] and $t$ the
    /// absolute half-width [SI unit]. Never negative for the values
    /// [`parse_with_tolerance`] returns.
    ///
    /// ```
    /// use websigma::units::Tolerance;
    /// assert!((Tolerance::Relative(0.2).half_width(-8e-6) - 1.6e-6).abs() < 1e-18);
    /// assert_eq!(Tolerance::Absolute(5e-7).half_width(8e-6), 5e-7);
    /// ```
    pub fn half_width(self, nominal: f64) -> f64 {
        match self {
            Tolerance::Relative(p) => p * nominal.abs(),
            Tolerance::Absolute(t) => t,
        }
    }
}

/// Byte ranges of the tolerance signs in `text`: `±` (U+00B1) and its ASCII
/// spelling `+-`.
fn tolerance_signs(text: &str) -> Vec<(usize, usize)> {
    let mut out = Vec::new();
    let mut chars = text.char_indices().peekable();
    while let Some((i, c)) = chars.next() {
        if c == '\u{b1}' {
            out.push((i, i + c.len_utf8()));
        } else if c == '+' && chars.peek().is_some_and(|&(_, n)| n == '-') {
            chars.next();
            out.push((i, i + 2));
        }
    }
    out
}

/// Parse a value of dimension `dim` that may carry a tolerance in the same
/// text: `"8 uC/m^2 ± 20 %"` (relative: a percentage of the value's
/// magnitude), `"2.5 uC/m^2 ± 500 nC/m^2"` (absolute: any accepted unit of
/// the same dimension), with `+-` accepted for `±` and the spaces around it
/// optional. Returns the value's SI value, as [`parse_quantity`] gives it,
/// and the tolerance if one is written ([`Tolerance::half_width`] turns it
/// into an absolute half-width). Without a `±` this is [`parse_quantity`].
///
/// A relative tolerance lies in 0 % to 100 %: above 100 % the range
/// `x ± δ` would cross zero, which is to be written as an absolute
/// tolerance. An absolute tolerance is zero or more, with no upper bound.
/// For [`Dim::Percent`] values a `%` tolerance is read as relative.
///
/// # Errors
///
/// The errors of [`parse_quantity`] for the value before the `±` (echoing
/// that part), and [`ParseQuantityError::BadTolerance`] for more than one
/// `±`, an empty side, or a tolerance that is negative, non-finite, out of
/// range, without unit, of another dimension, or relative above 100 %; its
/// message names the problem and shows what would be accepted.
///
/// # Examples
///
/// ```
/// use websigma::units::{parse_with_tolerance, Dim, Tolerance};
///
/// let d = Dim::SurfaceChargeDensity;
/// let (sigma, tol) = parse_with_tolerance("8 uC/m^2 ± 20 %", d).unwrap();
/// assert!((sigma - 8e-6).abs() < 1e-18);
/// assert_eq!(tol, Some(Tolerance::Relative(0.2)));
/// let (_, tol) = parse_with_tolerance("2.5 uC/m^2 +- 500 nC/m^2", d).unwrap();
/// assert!(matches!(tol, Some(Tolerance::Absolute(t)) if (t - 5e-7).abs() < 1e-19));
/// assert_eq!(parse_with_tolerance("8 uC/m^2", d).unwrap().1, None);
/// assert!(parse_with_tolerance("8 uC/m^2 ± 3 kV", d).is_err());
/// ```
pub fn parse_with_tolerance(
    input: &str,
    dim: Dim,
) -> Result<(f64, Option<Tolerance>), ParseQuantityError> {
    let text = input.trim();
    let signs = tolerance_signs(text);
    let Some(&(start, end)) = signs.first() else {
        return parse_impl(text, dim, None).map(|x| (x, None));
    };
    let bad = |tolerance: &str, problem| ParseQuantityError::BadTolerance {
        input: text.to_owned(),
        dim,
        tolerance: tolerance.trim().to_owned(),
        problem,
    };
    let (value_text, tol_text) = (
        text.get(..start).unwrap_or("").trim(),
        text.get(end..).unwrap_or("").trim(),
    );
    if signs.len() > 1 {
        return Err(bad(tol_text, ToleranceProblem::TwoSigns));
    }
    if value_text.is_empty() {
        return Err(bad(tol_text, ToleranceProblem::NoValue));
    }
    if tol_text.is_empty() {
        return Err(bad(tol_text, ToleranceProblem::NoTolerance));
    }
    let value = parse_impl(value_text, dim, None)?;
    let relative = tol_text.ends_with('%');
    let tol_dim = if relative { Dim::Percent } else { dim };
    let t = parse_impl(tol_text, tol_dim, None).map_err(|e| {
        bad(
            tol_text,
            match e {
                ParseQuantityError::NotFinite { .. } => ToleranceProblem::NotFinite,
                ParseQuantityError::TooLarge { .. } | ParseQuantityError::TooSmall { .. } => {
                    ToleranceProblem::OutOfRange
                }
                ParseQuantityError::MissingUnit { .. } => ToleranceProblem::MissingUnit,
                ParseQuantityError::WrongDimension { got, .. } => {
                    ToleranceProblem::WrongDimension(got)
                }
                ParseQuantityError::UnknownUnit { unit, .. } => ToleranceProblem::UnknownUnit(unit),
                ParseQuantityError::UnexpectedUnit { .. } => ToleranceProblem::UnexpectedUnit,
                ParseQuantityError::Empty { .. }
                | ParseQuantityError::NotANumber { .. }
                | ParseQuantityError::NotDecimal { .. }
                | ParseQuantityError::ToleranceNotAccepted { .. }
                | ParseQuantityError::BadTolerance { .. } => ToleranceProblem::NotANumber,
            },
        )
    })?;
    if t < 0.0 {
        return Err(bad(tol_text, ToleranceProblem::Negative));
    }
    if !relative {
        return Ok((value, Some(Tolerance::Absolute(t))));
    }
    if t > 1.0 {
        let absolute = format!("{value_text} ± {}", format_quantity(t * value.abs(), dim));
        return Err(bad(
            tol_text,
            ToleranceProblem::OverHundredPercent(absolute),
        ));
    }
    Ok((value, Some(Tolerance::Relative(t))))
}

/// A point or a position `[x, y, z]` (or `[x, z]`) for messages: every
/// coordinate a length as [`format_quantity`] shows it (4 significant
/// digits, SI prefix).
///
/// ```
/// use websigma::units::format_point;
/// assert_eq!(format_point(&[1.5, 0.0, 0.025]), "[1.5 m, 0 m, 25 mm]");
/// ```
pub fn format_point(p: &[f64]) -> String {
    let parts: Vec<String> = p.iter().map(|&x| format_quantity(x, Dim::Length)).collect();
    format!("[{}]", parts.join(", "))
}

/// Format an SI value of dimension `dim` for people: 4 significant digits,
/// trailing zeros dropped, with the SI prefix that keeps the number between 1
/// and 1000 where the parser accepts that prefix back, otherwise scientific
/// notation in the SI unit. Resistivity is always shown in Ω·m, percentages
/// as `%` (0.95 is `"95 %"`), plain numbers without unit.
///
/// Zero is `"0 m"` (sign dropped), negative values keep their sign, and
/// non-finite values come out as `"NaN m"`, `"inf m"`, `"-inf m"`. The output
/// parses back with [`parse_quantity`] and the same `dim` (for finite values
/// within the accepted range) to within 5e-4 relative.
///
/// # Examples
///
/// ```
/// use websigma::units::{format_quantity, Dim};
///
/// assert_eq!(format_quantity(0.025, Dim::Length), "25 mm");
/// assert_eq!(format_quantity(1.7e-6, Dim::SurfaceChargeDensity), "1.7 µC/m²");
/// assert_eq!(format_quantity(48_000.0, Dim::Field), "48 kV/m");
/// assert_eq!(format_quantity(0.95, Dim::Percent), "95 %");
/// assert_eq!(format_quantity(1e15, Dim::Resistivity), "1e15 Ω·m");
/// assert_eq!(format_quantity(-2.5e-3, Dim::Voltage), "-2.5 mV");
/// assert_eq!(format_quantity(0.0, Dim::Length), "0 m");
/// assert_eq!(format_quantity(2.2, Dim::Number), "2.2");
/// ```
pub fn format_quantity(value: f64, dim: Dim) -> String {
    format_quantity_sig(value, dim, 4)
}

/// Format a value of `dim` like [`format_quantity`] with `sig` significant
/// digits (1 to 17): the precision of summaries and tables, where the data
/// support two or three digits (JSON and CSV keep full precision).
///
/// ```
/// use websigma::units::{format_quantity_sig, Dim};
///
/// assert_eq!(format_quantity_sig(56_110.0, Dim::Voltage, 3), "56.1 kV");
/// assert_eq!(format_quantity_sig(1.977e-6, Dim::SurfaceChargeDensity, 3), "1.98 µC/m²");
/// assert_eq!(format_quantity_sig(0.005, Dim::Area, 3), "50 cm²");
/// assert_eq!(format_quantity_sig(13.27e-3, Dim::Energy, 2), "13 mJ");
/// ```
pub fn format_quantity_sig(value: f64, dim: Dim, sig: usize) -> String {
    let shown = if dim == Dim::Percent {
        value * 100.0
    } else {
        value
    };
    let base = match dim {
        Dim::Percent => "%",
        _ => dim.si_unit(),
    };
    format_with(shown, dim.display_units(), base, sig)
}

/// Format `value` (in `unit`) with 4 significant digits and an SI prefix from p to
/// G chosen so that the number lies between 1 and 1000 (up to 9999 with the
/// largest prefix, G); beyond that range, scientific notation without prefix. An empty unit or `%` gets no prefix.
///
/// # Examples
///
/// ```
/// use websigma::units::format_si;
///
/// assert_eq!(format_si(48_000.0, "V/m"), "48 kV/m");
/// assert_eq!(format_si(1.5e-10, "F"), "150 pF");
/// assert_eq!(format_si(3.2e12, "Ω·m"), "3200 GΩ·m");
/// assert_eq!(format_si(3.2e13, "Ω·m"), "3.2e13 Ω·m");
/// ```
pub fn format_si(value: f64, unit: &str) -> String {
    format_si_sig(value, unit, 4)
}

/// [`format_si`] with `sig` significant digits (1 to 17).
///
/// ```
/// use websigma::units::format_si_sig;
///
/// assert_eq!(format_si_sig(65_960.0, "V/m", 3), "66 kV/m");
/// assert_eq!(format_si_sig(78_740.0, "V/m", 3), "78.7 kV/m");
/// ```
pub fn format_si_sig(value: f64, unit: &str, sig: usize) -> String {
    const PREFIXES: [(i32, &str); 8] = [
        (-12, "p"),
        (-9, "n"),
        (-6, "µ"),
        (-3, "m"),
        (0, ""),
        (3, "k"),
        (6, "M"),
        (9, "G"),
    ];
    if unit.is_empty() || unit == "%" {
        return format_with(value, &[(0, unit)], unit, sig);
    }
    let owned: Vec<(i32, String)> = PREFIXES
        .iter()
        .map(|&(k, p)| (k, format!("{p}{unit}")))
        .collect();
    let units: Vec<(i32, &str)> = owned.iter().map(|(k, s)| (*k, s.as_str())).collect();
    format_with(value, &units, unit, sig)
}

/// Join a number and a unit symbol with one space (none if the unit is empty).
fn with_unit(number: &str, unit: &str) -> String {
    if unit.is_empty() {
        number.to_owned()
    } else {
        format!("{number} {unit}")
    }
}

/// Core of the formatters. `units` holds (decimal exponent, symbol) in
/// ascending order of exponent; `base` is the symbol of exponent 0.
fn format_with(value: f64, units: &[(i32, &str)], base: &str, sig: usize) -> String {
    if value.is_nan() {
        return with_unit("NaN", base);
    }
    if value.is_infinite() {
        return with_unit(if value > 0.0 { "inf" } else { "-inf" }, base);
    }
    if value == 0.0 {
        return with_unit("0", base);
    }
    // Round to `sig` significant digits in decimal: "d.ddde±x", exact digits.
    let sci = format!("{:.*e}", sig.clamp(1, 17) - 1, value.abs());
    let (mantissa, exponent) = sci.split_once('e').unwrap_or((sci.as_str(), "0"));
    let exponent: i32 = exponent.parse().unwrap_or(0);
    let digits: String = mantissa.chars().filter(char::is_ascii_digit).collect();
    let sign = if value < 0.0 { "-" } else { "" };

    let chosen = units.iter().rev().find(|&&(k, _)| k <= exponent);
    let plain = match (chosen, units.first()) {
        // Within a prefix's range: up to 4 digits before the point.
        (Some(&(k, sym)), _) if exponent - k <= 3 => Some((exponent - k, sym)),
        // Slightly below the smallest unit: "0.05 µm", "0.005 Ω·m".
        (None, Some(&(k, sym))) if exponent - k >= -2 => Some((exponent - k, sym)),
        _ => None,
    };
    let mut out = String::from(sign);
    match plain {
        Some((shift, sym)) => {
            out.push_str(&place_point(&digits, shift + 1));
            with_unit(&out, sym)
        }
        None => {
            out.push_str(&place_point(&digits, 1));
            // Writing to a String cannot fail.
            let _ = write!(out, "e{exponent}");
            with_unit(&out, base)
        }
    }
}

/// Put a decimal point after `int_digits` digits of `digits` (padding with
/// zeros on either side as needed), then drop trailing fractional zeros.
fn place_point(digits: &str, int_digits: i32) -> String {
    let len = digits.len() as i32;
    let mut s = if int_digits <= 0 {
        let zeros = "0".repeat(int_digits.unsigned_abs() as usize);
        format!("0.{zeros}{digits}")
    } else if int_digits >= len {
        let zeros = "0".repeat((int_digits - len) as usize);
        format!("{digits}{zeros}")
    } else {
        let (int, frac) = digits.split_at(int_digits as usize);
        format!("{int}.{frac}")
    };
    if s.contains('.') {
        let trimmed = s.trim_end_matches('0').trim_end_matches('.').len();
        s.truncate(trimmed);
    }
    s
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;
    use proptest::prelude::*;

    /// Relative tolerance for conversions whose factor is exact in decimal;
    /// the only error is floating-point rounding (a few ulp).
    const REL: f64 = 1e-14;

    fn p(input: &str, dim: Dim) -> f64 {
        match parse_quantity(input, dim) {
            Ok(v) => v,
            Err(e) => panic!("{input:?} as {dim:?} failed: {e}"),
        }
    }

    fn msg(input: &str, dim: Dim) -> String {
        match parse_quantity(input, dim) {
            Ok(v) => panic!("{input:?} as {dim:?} unexpectedly gave {v}"),
            Err(e) => e.to_string(),
        }
    }

    #[test]
    fn eps0_is_codata_2018() {
        // CODATA 2018: eps0 = 8.854 187 8128(13) e-12 F/m.
        assert_eq!(EPS0, 8.854_187_812_8e-12);
    }

    // Expected values below are hand-computed from the unit definitions
    // (SI prefixes, BIPM SI Brochure 2019; inch and foot, NIST SP 811).

    #[test]
    fn length_units() {
        assert_eq!(p("1 m", Dim::Length), 1.0);
        assert_relative_eq!(p("12 cm", Dim::Length), 0.12, max_relative = REL);
        assert_relative_eq!(p("25 mm", Dim::Length), 0.025, max_relative = REL);
        assert_relative_eq!(p("30 um", Dim::Length), 30e-6, max_relative = REL);
        assert_relative_eq!(p("30 µm", Dim::Length), 30e-6, max_relative = REL);
        assert_relative_eq!(p("30 μm", Dim::Length), 30e-6, max_relative = REL);
        // 1 in = 0.0254 m exactly (NIST SP 811): the same double.
        assert_eq!(p("1 in", Dim::Length), 0.0254);
        assert_relative_eq!(p("10 in", Dim::Length), 0.254, max_relative = REL);
    }

    #[test]
    fn speed_units() {
        assert_eq!(p("2 m/s", Dim::Speed), 2.0);
        assert_relative_eq!(p("500 mm/s", Dim::Speed), 0.5, max_relative = REL);
        // 250 m / 60 s = 4.1666... m/s
        assert_relative_eq!(
            p("250 m/min", Dim::Speed),
            4.166_666_666_666_667,
            max_relative = REL
        );
        // 1000 ft/min = 1000 * 0.3048 m / 60 s = 5.08 m/s
        assert_relative_eq!(p("1000 ft/min", Dim::Speed), 5.08, max_relative = REL);
        assert_relative_eq!(p("1000 fpm", Dim::Speed), 5.08, max_relative = REL);
        assert_relative_eq!(p("10 ft/s", Dim::Speed), 3.048, max_relative = REL);
    }

    /// Areas: 1 cm² = 1e-4 m², 1 mm² = 1e-6 m² (SI prefixes squared, BIPM SI
    /// Brochure 2019), 1 in² = 6.4516e-4 m² exactly (NIST SP 811, appendix
    /// B); shown in cm² below 1 m² as the area limits of IEC TS 60079-32-1
    /// are written.
    #[test]
    fn area_units() {
        assert_eq!(p("1 m^2", Dim::Area), 1.0);
        assert_relative_eq!(p("50 cm^2", Dim::Area), 0.005, max_relative = REL);
        assert_relative_eq!(p("50 cm²", Dim::Area), 0.005, max_relative = REL);
        assert_relative_eq!(p("400 mm^2", Dim::Area), 4e-4, max_relative = REL);
        assert_relative_eq!(p("1 in^2", Dim::Area), 6.4516e-4, max_relative = REL);
        assert_eq!(format_quantity(0.005, Dim::Area), "50 cm²");
        assert_eq!(format_quantity(4e-4, Dim::Area), "4 cm²");
        assert_eq!(format_quantity(1.2, Dim::Area), "1.2 m²");
        assert!(msg("0.005", Dim::Area).contains("cm^2"));
    }

    /// Surface resistivity in ohms per square (IEC 61340-2-3), however written.
    #[test]
    fn surface_resistivity_units() {
        for t in [
            "1e12 ohm/sq",
            "1e12 Ω/sq",
            "1e12 ohm/square",
            "1e12 Ω/□",
            "1e12 Ohms/sq",
        ] {
            assert_eq!(p(t, Dim::SurfaceResistivity), 1e12, "{t}");
        }
        assert_eq!(format_quantity(1e12, Dim::SurfaceResistivity), "1e12 Ω/sq");
    }

    /// The units practitioners type (issue 10): the inch and the foot are
    /// exact by definition, the mil is 0.001 in (NIST SP 811, appendix B).
    #[test]
    fn inch_mil_and_foot_units() {
        assert_relative_eq!(p("1 inch", Dim::Length), 0.0254, max_relative = REL);
        assert_relative_eq!(p("2 inches", Dim::Length), 0.0508, max_relative = REL);
        // A 0.92 mil film is 23.368 µm.
        assert_relative_eq!(p("0.92 mil", Dim::Length), 23.368e-6, max_relative = REL);
        assert_relative_eq!(p("2 mils", Dim::Length), 50.8e-6, max_relative = REL);
        assert_relative_eq!(p("4 ft", Dim::Length), 1.2192, max_relative = REL);
        // "5 kV at 1 inch" as a field: 5000 V / 0.0254 m = 196.85 kV/m.
        assert_relative_eq!(
            p("5 kV/inch", Dim::Field),
            196_850.393_700_787_4,
            max_relative = REL
        );
        // A PET dielectric strength of 5000 V/mil is 196.85 kV/mm.
        assert_relative_eq!(
            p("5000 V/mil", Dim::Field),
            1.968_503_937_007_874e8,
            max_relative = REL
        );
        assert_relative_eq!(
            p("5 kV/mil", Dim::Field),
            1.968_503_937_007_874e8,
            max_relative = REL
        );
    }

    #[test]
    fn surface_charge_density_units() {
        let d = Dim::SurfaceChargeDensity;
        assert_eq!(p("1 C/m^2", d), 1.0);
        assert_eq!(p("1 C/m²", d), 1.0);
        assert_relative_eq!(p("2 mC/m^2", d), 2e-3, max_relative = REL);
        assert_relative_eq!(p("1.7 uC/m^2", d), 1.7e-6, max_relative = REL);
        assert_relative_eq!(p("1.7 µC/m^2", d), 1.7e-6, max_relative = REL);
        assert_relative_eq!(p("1.7 μC/m²", d), 1.7e-6, max_relative = REL);
        assert_relative_eq!(p("1.7 uC/m²", d), 1.7e-6, max_relative = REL);
        assert_relative_eq!(p("300 nC/m^2", d), 3e-7, max_relative = REL);
        assert_relative_eq!(p("300 nC/m²", d), 3e-7, max_relative = REL);
        assert_relative_eq!(p("50 pC/m^2", d), 5e-11, max_relative = REL);
        assert_relative_eq!(p("50 pC/m²", d), 5e-11, max_relative = REL);
        // 1 cm² = 1e-4 m²: 0.2 nC/cm² = 0.2e-9 / 1e-4 = 2e-6 C/m²
        assert_relative_eq!(p("0.2 nC/cm^2", d), 2e-6, max_relative = REL);
        assert_relative_eq!(p("0.2 nC/cm²", d), 2e-6, max_relative = REL);
        assert_relative_eq!(p("3 pC/cm^2", d), 3e-8, max_relative = REL);
        assert_relative_eq!(p("3 pC/cm²", d), 3e-8, max_relative = REL);
        assert_relative_eq!(p("0.01 uC/cm^2", d), 1e-4, max_relative = REL);
        assert_relative_eq!(p("0.01 µC/cm²", d), 1e-4, max_relative = REL);
    }

    #[test]
    fn field_units() {
        let d = Dim::Field;
        assert_eq!(p("100 V/m", d), 100.0);
        assert_eq!(p("48 kV/m", d), 48_000.0);
        assert_eq!(p("3 MV/m", d), 3e6);
        assert_eq!(p("5 V/mm", d), 5_000.0);
        assert_eq!(p("200 kV/mm", d), 2e8);
        assert_eq!(p("7 V/cm", d), 700.0);
        assert_eq!(p("30 kV/cm", d), 3e6);
        // 1 kV / 0.0254 m = 39370.0787401... V/m
        assert_relative_eq!(p("1 kV/in", d), 39_370.078_740_157_48, max_relative = REL);
        assert_relative_eq!(p("1 V/in", d), 39.370_078_740_157_48, max_relative = REL);
    }

    #[test]
    fn voltage_units() {
        assert_eq!(p("5 kV", Dim::Voltage), 5_000.0);
        assert_eq!(p("12 V", Dim::Voltage), 12.0);
        assert_eq!(p("1.5 MV", Dim::Voltage), 1.5e6);
        assert_relative_eq!(p("250 mV", Dim::Voltage), 0.25, max_relative = REL);
    }

    #[test]
    fn capacitance_units() {
        assert_eq!(p("1 F", Dim::Capacitance), 1.0);
        assert_relative_eq!(p("2 uF", Dim::Capacitance), 2e-6, max_relative = REL);
        assert_relative_eq!(p("2 µF", Dim::Capacitance), 2e-6, max_relative = REL);
        assert_relative_eq!(p("10 nF", Dim::Capacitance), 1e-8, max_relative = REL);
        assert_relative_eq!(p("150 pF", Dim::Capacitance), 1.5e-10, max_relative = REL);
    }

    #[test]
    fn charge_units() {
        assert_eq!(p("1 C", Dim::Charge), 1.0);
        assert_relative_eq!(p("5 nC", Dim::Charge), 5e-9, max_relative = REL);
        assert_relative_eq!(p("-2 µC", Dim::Charge), -2e-6, max_relative = REL);
        assert_relative_eq!(p("2 uC", Dim::Charge), 2e-6, max_relative = REL);
        assert_relative_eq!(p("30 pC", Dim::Charge), 3e-11, max_relative = REL);
        assert_relative_eq!(p("0.1 mC", Dim::Charge), 1e-4, max_relative = REL);
        assert_eq!(p("0 nC", Dim::Charge), 0.0);
        assert_eq!(format_quantity(5e-9, Dim::Charge), "5 nC");
        // A charge is not a surface charge density, and the other way round.
        assert!(msg("5 nC", Dim::SurfaceChargeDensity).contains("which is a charge"));
        assert!(msg("5 nC/m^2", Dim::Charge).contains("which is a surface charge density"));
        assert!(msg("5 pF", Dim::Charge).contains("which is a capacitance"));
    }

    #[test]
    fn resistivity_spellings() {
        for s in [
            "1e15 ohm m",
            "1e15 ohm·m",
            "1e15 ohm*m",
            "1e15 ohm.m",
            "1e15 ohm⋅m",
            "1e15 ohmm",
            "1e15 Ω m",
            "1e15 Ω·m",
            "1e15 Ωm",
            "1e15 Ω·m",
            "1e15 Ohm m",
            "1e15ohm  m",
            "1e15 ohm * m",
        ] {
            assert_eq!(p(s, Dim::Resistivity), 1e15, "{s}");
        }
        // 1 Ω·cm = 0.01 Ω·m
        for s in ["1e17 ohm cm", "1e17 Ω·cm", "1e17 Ωcm", "1e17 ohm.cm"] {
            assert_relative_eq!(p(s, Dim::Resistivity), 1e15, max_relative = REL);
        }
    }

    #[test]
    fn energy_units() {
        assert_eq!(p("2 J", Dim::Energy), 2.0);
        assert_relative_eq!(p("0.24 mJ", Dim::Energy), 2.4e-4, max_relative = REL);
        assert_relative_eq!(p("25 uJ", Dim::Energy), 2.5e-5, max_relative = REL);
        assert_relative_eq!(p("25 µJ", Dim::Energy), 2.5e-5, max_relative = REL);
        assert_relative_eq!(p("200 nJ", Dim::Energy), 2e-7, max_relative = REL);
    }

    #[test]
    fn time_units() {
        assert_eq!(p("400 s", Dim::Time), 400.0);
        assert_relative_eq!(p("20 ms", Dim::Time), 0.02, max_relative = REL);
        assert_eq!(p("2.5 min", Dim::Time), 150.0);
        assert_eq!(p("1.5 h", Dim::Time), 5400.0);
    }

    #[test]
    fn percent_and_number() {
        assert_eq!(p("95 %", Dim::Percent), 0.95);
        assert_eq!(p("95%", Dim::Percent), 0.95);
        assert_eq!(p("2.2", Dim::Number), 2.2);
        assert_eq!(p("-3", Dim::Number), -3.0);
    }

    #[test]
    fn number_syntax() {
        assert_eq!(p("25mm", Dim::Length), 0.025);
        assert_eq!(p("  25   mm  ", Dim::Length), 0.025);
        assert_eq!(p("-2.5 m", Dim::Length), -2.5);
        assert_eq!(p("+3 m", Dim::Length), 3.0);
        assert_eq!(p(".5 m", Dim::Length), 0.5);
        assert_eq!(p("5. m", Dim::Length), 5.0);
        assert_relative_eq!(p("4e-6 m", Dim::Length), 4e-6, max_relative = REL);
        assert_relative_eq!(p("4E-6m", Dim::Length), 4e-6, max_relative = REL);
        assert_eq!(p("1e+3 V", Dim::Voltage), 1000.0);
        assert_eq!(p("1e15", Dim::Number), 1e15);
        assert_eq!(p("48 kV / m", Dim::Field), 48_000.0);
        assert_eq!(p("1 C/m ^2", Dim::SurfaceChargeDensity), 1.0);
    }

    #[test]
    fn bare_zero_is_zero_in_every_dimension() {
        for dim in ALL_DIMS {
            for z in ["0", "0.0", "-0", "+0.000", "0e7", ".0"] {
                let v = p(z, dim);
                assert_eq!(v, 0.0);
                assert!(v.is_sign_positive(), "{z} as {dim:?}");
            }
        }
        assert_eq!(p("0 kV", Dim::Voltage), 0.0);
        assert!(parse_quantity("0 kV", Dim::Length).is_err());
    }

    #[test]
    fn bare_numbers_are_refused_for_dimensioned_quantities() {
        for dim in ALL_DIMS {
            let r = parse_quantity("1.5", dim);
            if dim == Dim::Number {
                assert_eq!(r, Ok(1.5));
            } else {
                assert!(
                    matches!(r, Err(ParseQuantityError::MissingUnit { .. })),
                    "{dim:?}: {r:?}"
                );
            }
        }
    }

    #[test]
    fn parse_quantity_or_scales_bare_numbers_only() {
        assert_relative_eq!(
            parse_quantity_or("1.2", Dim::Length, 1e-3).unwrap_or(f64::NAN),
            1.2e-3,
            max_relative = REL
        );
        assert_eq!(parse_quantity_or("25 mm", Dim::Length, 1.0), Ok(0.025));
        assert_eq!(parse_quantity_or("0", Dim::Length, 7.0), Ok(0.0));
        assert_eq!(parse_quantity_or("3", Dim::Number, 2.0), Ok(6.0));
        assert_relative_eq!(
            parse_quantity_or("95", Dim::Percent, 0.01).unwrap_or(f64::NAN),
            0.95,
            max_relative = REL
        );
        assert!(matches!(
            parse_quantity_or("1e200", Dim::Length, 1e200),
            Err(ParseQuantityError::TooLarge { .. })
        ));
        assert!(matches!(
            parse_quantity_or("1", Dim::Length, f64::NAN),
            Err(ParseQuantityError::NotFinite { .. })
        ));
        assert!(matches!(
            parse_quantity_or("120 kV", Dim::Length, 1.0),
            Err(ParseQuantityError::WrongDimension { .. })
        ));
    }

    #[test]
    fn message_missing_unit() {
        assert_eq!(
            msg("120", Dim::Length),
            "expected a length such as \"120 mm\", got \"120\" \
             (a unit is missing; units: m, cm, mm, um, µm, in, inch, mil, ft)"
        );
        assert_eq!(
            msg("95", Dim::Percent),
            "expected a percentage such as \"95 %\", got \"95\" (a unit is missing: add %)"
        );
    }

    #[test]
    fn message_wrong_dimension() {
        assert_eq!(
            msg("120 kV", Dim::Length),
            "expected a length such as \"120 mm\", got \"120 kV\", which is a voltage \
             (units: m, cm, mm, um, µm, in, inch, mil, ft)"
        );
        assert_eq!(
            msg("5 mm", Dim::Field),
            "expected a field strength such as \"48 kV/m\", got \"5 mm\", which is a length \
             (units: V/m, kV/m, MV/m, V/mm, kV/mm, V/cm, kV/cm, V/in, kV/in, V/inch, kV/inch, V/mil, kV/mil)"
        );
        assert_eq!(
            parse_quantity("95 %", Dim::Time),
            Err(ParseQuantityError::WrongDimension {
                input: "95 %".into(),
                dim: Dim::Time,
                got: Dim::Percent
            })
        );
    }

    #[test]
    fn message_unknown_unit_and_case() {
        assert_eq!(
            msg("3 furlong", Dim::Length),
            "expected a length such as \"120 mm\", got \"3 furlong\" \
             (unknown unit \"furlong\"; units: m, cm, mm, um, µm, in, inch, mil, ft)"
        );
        // Prefixes are case-sensitive: "MM" is not "mm", "kv" is not "kV".
        assert!(matches!(
            parse_quantity("3 MM", Dim::Length),
            Err(ParseQuantityError::UnknownUnit { .. })
        ));
        assert!(parse_quantity("5 kv", Dim::Voltage).is_err());
        assert!(parse_quantity("5 km", Dim::Length).is_err());
        assert!(parse_quantity("25 m m", Dim::Length).is_err());
    }

    #[test]
    fn message_nan_inf() {
        assert_eq!(
            msg("NaN", Dim::Length),
            "\"NaN\" is not a finite number: expected a length such as \"120 mm\""
        );
        for s in ["nan m", "inf", "-inf V", "+Infinity", "INF kV/m"] {
            assert!(
                matches!(
                    parse_quantity(s, Dim::Field),
                    Err(ParseQuantityError::NotFinite { .. })
                ),
                "{s}"
            );
        }
    }

    #[test]
    fn message_empty_and_not_a_number() {
        assert_eq!(
            msg("", Dim::Length),
            "expected a length such as \"120 mm\", got an empty value"
        );
        assert_eq!(
            msg("   \t", Dim::Voltage),
            "expected a voltage such as \"5 kV\", got an empty value"
        );
        assert_eq!(
            msg("mm", Dim::Length),
            "expected a length such as \"120 mm\", got \"mm\" (it does not start with a number)"
        );
        for s in [".", "-", "+.", "e5 m", "1,5mm"] {
            assert!(parse_quantity(s, Dim::Length).is_err(), "{s}");
        }
    }

    #[test]
    fn message_overflow_and_underflow() {
        assert_eq!(
            msg("1e400 m", Dim::Length),
            "\"1e400 m\" is too large: expected a length of at most 1e300 m in magnitude"
        );
        // 1e299 MV/m = 1e305 V/m: the number is finite, the SI value too large.
        assert_eq!(
            msg("1e299 MV/m", Dim::Field),
            "\"1e299 MV/m\" is too large: expected a field strength of at most 1e300 V/m in magnitude"
        );
        assert_eq!(
            msg("1e-299 pF", Dim::Capacitance),
            "\"1e-299 pF\" is too small: expected a capacitance of zero or at least 1e-300 F in magnitude"
        );
        assert!(matches!(
            parse_quantity("1e-400 m", Dim::Length),
            Err(ParseQuantityError::TooSmall { .. })
        ));
        assert!(matches!(
            parse_quantity("-1e301", Dim::Number),
            Err(ParseQuantityError::TooLarge { .. })
        ));
        assert_eq!(p("1e300 m", Dim::Length), 1e300);
    }

    #[test]
    fn message_unit_on_plain_number() {
        assert_eq!(
            msg("2.2 mm", Dim::Number),
            "expected a number such as \"2.2\", got \"2.2 mm\" (a plain number takes no unit)"
        );
    }

    #[test]
    fn long_input_is_shortened_in_messages() {
        let long = format!("1 {}", "x".repeat(500));
        let m = msg(&long, Dim::Length);
        assert!(m.len() < 300, "{m}");
        assert!(m.contains('…'));
    }

    #[test]
    fn format_examples() {
        assert_eq!(format_quantity(0.025, Dim::Length), "25 mm");
        assert_eq!(format_quantity(1.25, Dim::Length), "1.25 m");
        assert_eq!(format_quantity(30e-6, Dim::Length), "30 µm");
        assert_eq!(format_quantity(1200.0, Dim::Length), "1200 m");
        assert_eq!(format_quantity(12_000.0, Dim::Length), "1.2e4 m");
        assert_eq!(format_quantity(5e-8, Dim::Length), "0.05 µm");
        assert_eq!(format_quantity(5e-10, Dim::Length), "5e-10 m");
        assert_eq!(
            format_quantity(1.7e-6, Dim::SurfaceChargeDensity),
            "1.7 µC/m²"
        );
        assert_eq!(format_quantity(48_000.0, Dim::Field), "48 kV/m");
        assert_eq!(format_quantity(2e8, Dim::Field), "200 MV/m");
        assert_eq!(format_quantity(5_000.0, Dim::Voltage), "5 kV");
        assert_eq!(format_quantity(1.5e-10, Dim::Capacitance), "150 pF");
        assert_eq!(format_quantity(0.01, Dim::Capacitance), "1e-2 F");
        assert_eq!(format_quantity(1e15, Dim::Resistivity), "1e15 Ω·m");
        assert_eq!(format_quantity(250.0, Dim::Resistivity), "250 Ω·m");
        assert_eq!(format_quantity(2.4e-4, Dim::Energy), "240 µJ");
        assert_eq!(format_quantity(400.0, Dim::Time), "400 s");
        assert_eq!(format_quantity(4.166_666_7, Dim::Speed), "4.167 m/s");
        assert_eq!(format_quantity(0.95, Dim::Percent), "95 %");
        assert_eq!(format_quantity(1.0, Dim::Percent), "100 %");
        assert_eq!(format_quantity(2.2, Dim::Number), "2.2");
        assert_eq!(format_quantity(1.5e7, Dim::Number), "1.5e7");
    }

    #[test]
    fn format_rounding_sign_zero_nonfinite() {
        // 4 significant digits, carry into the next prefix.
        assert_eq!(format_quantity(0.123_456, Dim::Length), "123.5 mm");
        assert_eq!(format_quantity(0.999_96, Dim::Length), "1 m");
        assert_eq!(format_quantity(999.96, Dim::Voltage), "1 kV");
        assert_eq!(format_quantity(-2.5e-3, Dim::Voltage), "-2.5 mV");
        assert_eq!(format_quantity(-0.0, Dim::Length), "0 m");
        assert_eq!(format_quantity(0.0, Dim::Percent), "0 %");
        assert_eq!(format_quantity(0.0, Dim::Number), "0");
        assert_eq!(format_quantity(f64::NAN, Dim::Field), "NaN V/m");
        assert_eq!(format_quantity(f64::INFINITY, Dim::Voltage), "inf V");
        assert_eq!(format_quantity(f64::NEG_INFINITY, Dim::Number), "-inf");
        assert_eq!(
            format_quantity(f64::MIN_POSITIVE / 4.0, Dim::Length),
            "5.563e-309 m"
        );
        assert_eq!(format_quantity(f64::MAX, Dim::Length), "1.798e308 m");
    }

    #[test]
    fn format_si_prefixes() {
        assert_eq!(format_si(48_000.0, "V/m"), "48 kV/m");
        assert_eq!(format_si(1.5e-10, "F"), "150 pF");
        assert_eq!(format_si(2.5e9, "Ω·m"), "2.5 GΩ·m");
        assert_eq!(format_si(3.2e12, "Ω·m"), "3200 GΩ·m");
        assert_eq!(format_si(3.2e13, "Ω·m"), "3.2e13 Ω·m");
        assert_eq!(format_si(1e-6, "C/m²"), "1 µC/m²");
        assert_eq!(format_si(1e-14, "C"), "0.01 pC");
        assert_eq!(format_si(1e-15, "C"), "1e-15 C");
        assert_eq!(format_si(0.95, ""), "0.95");
        assert_eq!(format_si(95.0, "%"), "95 %");
        assert_eq!(format_si(0.0, "V"), "0 V");
    }

    #[test]
    fn dim_texts() {
        for dim in ALL_DIMS {
            // Every example parses as its own dimension and no other.
            assert!(parse_quantity(dim.example(), dim).is_ok(), "{dim:?}");
            assert!(dim.name().starts_with("a ") || dim.name().starts_with("an "));
        }
        assert_eq!(Dim::SurfaceChargeDensity.si_unit(), "C/m²");
        assert_eq!(Dim::Energy.name(), "an energy");
    }

    fn pt(input: &str) -> (f64, Option<Tolerance>) {
        match parse_with_tolerance(input, Dim::SurfaceChargeDensity) {
            Ok(v) => v,
            Err(e) => panic!("{input:?} failed: {e}"),
        }
    }

    fn tol_problem(input: &str) -> ToleranceProblem {
        match parse_with_tolerance(input, Dim::SurfaceChargeDensity) {
            Err(ParseQuantityError::BadTolerance { problem, .. }) => problem,
            other => panic!("{input:?} gave {other:?}"),
        }
    }

    /// Both spellings of ±, with and without spaces, give the same value and
    /// tolerance: 8 µC/m² = 8e-6 C/m², 20 % = 0.2.
    #[test]
    fn tolerance_relative_both_spellings_spaces_optional() {
        for s in [
            "8 uC/m^2 ± 20 %",
            "8 uC/m^2 +- 20 %",
            "8 uC/m^2±20%",
            "8uC/m^2+-20 %",
            "  8 µC/m² ±   20%  ",
        ] {
            let (v, t) = pt(s);
            assert_relative_eq!(v, 8e-6, max_relative = REL);
            assert_eq!(t, Some(Tolerance::Relative(0.2)), "{s}");
        }
        // The half-width is 20 % of |σ| whatever the sign: 1.6 µC/m².
        let (v, t) = pt("-8 uC/m^2 ± 20 %");
        assert_relative_eq!(v, -8e-6, max_relative = REL);
        let hw = t.map_or(f64::NAN, |t| t.half_width(v));
        assert_relative_eq!(hw, 1.6e-6, max_relative = REL);
        // 100 % is the widest relative tolerance (the range touches zero).
        assert_eq!(pt("8 uC/m^2 ± 100 %").1, Some(Tolerance::Relative(1.0)));
        assert_eq!(pt("8 uC/m^2 ± 0 %").1, Some(Tolerance::Relative(0.0)));
    }

    /// Absolute tolerances in any unit of the same dimension:
    /// 500 nC/m² = 0.5 µC/m² = 0.05 nC/cm² = 5e-7 C/m².
    #[test]
    fn tolerance_absolute_any_unit_of_the_dimension() {
        for s in [
            "2.5 uC/m^2 ± 0.5 uC/m^2",
            "2.5 uC/m^2 ± 500 nC/m^2",
            "2.5 uC/m^2 +- 500 nC/m²",
            "2.5 uC/m^2±0.05 nC/cm^2",
            "2.5 uC/m^2 ± 5e-7 C/m^2",
        ] {
            let (v, t) = pt(s);
            assert_relative_eq!(v, 2.5e-6, max_relative = REL);
            match t {
                Some(Tolerance::Absolute(a)) => assert_relative_eq!(a, 5e-7, max_relative = REL),
                other => panic!("{s}: {other:?}"),
            }
            assert_relative_eq!(
                t.map_or(f64::NAN, |t| t.half_width(v)),
                5e-7,
                max_relative = REL
            );
        }
        // A bare zero is zero in every unit; the range may cross zero.
        assert_eq!(pt("2 uC/m^2 ± 0").1, Some(Tolerance::Absolute(0.0)));
        let (_, t) = pt("1 uC/m^2 ± 3 uC/m^2");
        assert!(matches!(t, Some(Tolerance::Absolute(a)) if (a - 3e-6).abs() < 1e-18));
        // The parser is general: a length with a tolerance in inches.
        let r = parse_with_tolerance("120 mm ± 1 in", Dim::Length);
        assert_eq!(r, Ok((0.12, Some(Tolerance::Absolute(0.0254)))));
    }

    #[test]
    fn tolerance_absent_is_plain_parse() {
        assert_eq!(pt("8 uC/m^2"), (8e-6, None));
        assert_eq!(
            parse_with_tolerance("8 kV", Dim::SurfaceChargeDensity),
            parse_quantity("8 kV", Dim::SurfaceChargeDensity).map(|x| (x, None))
        );
    }

    #[test]
    fn tolerance_problems_are_named() {
        use ToleranceProblem as P;
        assert_eq!(tol_problem("8 uC/m^2 ± -20 %"), P::Negative);
        assert_eq!(tol_problem("8 uC/m^2 ± -1 uC/m^2"), P::Negative);
        assert_eq!(tol_problem("8 uC/m^2 ± NaN %"), P::NotFinite);
        assert_eq!(tol_problem("8 uC/m^2 ± inf uC/m^2"), P::NotFinite);
        assert_eq!(tol_problem("8 uC/m^2 ± 1e400 %"), P::OutOfRange);
        assert_eq!(
            tol_problem("8 uC/m^2 ± 3 kV"),
            P::WrongDimension(Dim::Voltage)
        );
        assert_eq!(
            tol_problem("8 uC/m^2 ± 2 mm"),
            P::WrongDimension(Dim::Length)
        );
        assert_eq!(tol_problem("8 uC/m^2 ± 20 % ± 1 uC/m^2"), P::TwoSigns);
        assert_eq!(tol_problem("8 uC/m^2 ± +- 20 %"), P::TwoSigns);
        assert_eq!(tol_problem("± 20 %"), P::NoValue);
        assert_eq!(tol_problem("8 uC/m^2 ±"), P::NoTolerance);
        assert_eq!(tol_problem("8 uC/m^2 +-   "), P::NoTolerance);
        assert_eq!(tol_problem("8 uC/m^2 ± 20"), P::MissingUnit);
        assert_eq!(tol_problem("8 uC/m^2 ± abc"), P::NotANumber);
        assert_eq!(
            tol_problem("8 uC/m^2 ± 2 furlong"),
            P::UnknownUnit("furlong".into())
        );
        // 150 % of 8 µC/m² is 12 µC/m²: the message offers that instead.
        assert_eq!(
            tol_problem("8 uC/m^2 ± 150 %"),
            P::OverHundredPercent("8 uC/m^2 ± 12 µC/m²".into())
        );
        // The value before ± is judged as by parse_quantity.
        assert!(matches!(
            parse_with_tolerance("8 kV ± 20 %", Dim::SurfaceChargeDensity),
            Err(ParseQuantityError::WrongDimension {
                got: Dim::Voltage,
                ..
            })
        ));
    }

    #[test]
    fn tolerance_messages_say_what_is_accepted() {
        let m = |s: &str| match parse_with_tolerance(s, Dim::SurfaceChargeDensity) {
            Ok(v) => panic!("{s:?} unexpectedly gave {v:?}"),
            Err(e) => e.to_string(),
        };
        assert_eq!(
            m("8 uC/m^2 ± 3 kV"),
            "\"8 uC/m^2 ± 3 kV\": the tolerance \"3 kV\" is a voltage, not a percentage or a \
             surface charge density; expected a surface charge density with a tolerance after ±, \
             relative in % or absolute in a unit of the same dimension, such as \
             \"8 uC/m^2 ± 20 %\" or \"8 uC/m^2 ± 1.6 uC/m^2\""
        );
        let over = m("8 uC/m^2 ± 150 %");
        assert!(over.contains("over 100 %"), "{over}");
        assert!(
            over.contains("absolute tolerance, here \"8 uC/m^2 ± 12 µC/m²\""),
            "{over}"
        );
        assert!(m("8 uC/m^2 ± ± 2 %").contains("more than one ±"));
        assert!(m("8 uC/m^2 ±").contains("nothing after the ±"));
        assert!(m("+- 2 %").contains("nothing before the ±"));
        assert!(m("8 uC/m^2 ± -2 %").contains("is negative"));
        // Another dimension's examples are built from its own example.
        let len = parse_with_tolerance("120 mm ± 2 kV", Dim::Length)
            .map_err(|e| e.to_string())
            .err()
            .unwrap_or_default();
        assert!(
            len.ends_with("such as \"120 mm ± 20 %\" or \"120 mm ± 24 mm\""),
            "{len}"
        );
    }

    /// Every parser but `parse_with_tolerance` refuses a ± and says where
    /// one is accepted.
    #[test]
    fn plain_parsers_refuse_tolerances() {
        for s in ["120 mm ± 2 mm", "120 mm +- 2 mm", "120mm±2%", "±2 mm"] {
            assert!(
                matches!(
                    parse_quantity(s, Dim::Length),
                    Err(ParseQuantityError::ToleranceNotAccepted { .. })
                ),
                "{s}"
            );
            assert!(parse_quantity_or(s, Dim::Length, 1e-3).is_err(), "{s}");
        }
        assert_eq!(
            msg("48 kV/m ± 5 %", Dim::Field),
            "\"48 kV/m ± 5 %\" carries a tolerance (±), which only the densities of `charge:` \
             entries (`sigma:`, `adds:`) accept: expected a field strength such as \"48 kV/m\" alone"
        );
    }

    fn dim_strategy() -> impl Strategy<Value = Dim> {
        proptest::sample::select(ALL_DIMS.to_vec())
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(2000))]

        #[test]
        fn parse_never_panics(s in any::<String>(), dim in dim_strategy()) {
            if let Ok(v) = parse_quantity(&s, dim) {
                prop_assert!(v.is_finite() && v.abs() <= MAX_MAGNITUDE);
            }
            let _ = parse_quantity_or(&s, dim, 1e-3);
        }

        #[test]
        fn parse_never_panics_on_unit_like_text(
            s in "[-+ .0-9eE]{0,8}[ a-zA-Z%µμ²^/·*.Ω⋅\t]{0,10}",
            dim in dim_strategy(),
        ) {
            if let Ok(v) = parse_quantity(&s, dim) {
                prop_assert!(v.is_finite() && v.abs() <= MAX_MAGNITUDE);
            }
        }

        #[test]
        fn parse_with_tolerance_never_panics(
            s in "[-+ .0-9eE]{0,6}[ a-zA-Z%µ²^/]{0,6}(±|\\+-|\\+|-| )?[-+ .0-9eE]{0,6}[ a-zA-Z%µ²^/±]{0,8}",
            dim in dim_strategy(),
        ) {
            if let Ok((v, t)) = parse_with_tolerance(&s, dim) {
                prop_assert!(v.is_finite() && v.abs() <= MAX_MAGNITUDE);
                if let Some(t) = t {
                    let hw = t.half_width(v);
                    prop_assert!(hw.is_finite() && hw >= 0.0, "{s:?}: {t:?}");
                }
            }
        }

        #[test]
        fn parse_with_tolerance_never_panics_on_any_text(s in any::<String>(), dim in dim_strategy()) {
            let _ = parse_with_tolerance(&s, dim).map_err(|e| e.to_string());
        }

        #[test]
        fn format_then_parse_round_trips(
            mantissa in 1.0f64..10.0,
            exponent in -280i32..280,
            negative in any::<bool>(),
            dim in dim_strategy(),
        ) {
            let sign = if negative { -1.0 } else { 1.0 };
            let value = sign * mantissa * 10f64.powi(exponent);
            let text = format_quantity(value, dim);
            let back = parse_quantity(&text, dim);
            prop_assert!(back.is_ok(), "{value} -> {text:?} -> {back:?}");
            let back = back.unwrap_or(f64::NAN);
            // 4 significant digits: relative rounding error at most 5e-4.
            prop_assert!(
                ((back - value) / value).abs() <= 1e-3,
                "{value} -> {text:?} -> {back}"
            );
        }
    }
}
