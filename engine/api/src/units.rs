//! Physical dimensions, the table of units an engineer may type, and the
//! parser that turns `"1800 t/h"` into an SI value with its dimension.
//!
//! Owns no state. Every factor converts the unit to the SI coherent unit of
//! its dimension; the exact definitions used are named beside the constants.

use std::fmt;

/// The physical dimension of an input or output.
///
/// Each dimension has one SI coherent unit, the unit every value is stored
/// in inside packwright and written in result files.
#[derive(
    Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, serde::Serialize, serde::Deserialize,
)]
#[serde(rename_all = "snake_case")]
pub enum Dimension {
    /// A pure number (friction coefficient, ratio, factor).
    Dimensionless,
    /// Length, m.
    Length,
    /// Area, m².
    Area,
    /// Mass, kg.
    Mass,
    /// Time, s.
    Time,
    /// Velocity, m/s.
    Velocity,
    /// Acceleration, m/s².
    Acceleration,
    /// Force, N.
    Force,
    /// Power, W.
    Power,
    /// Energy, J.
    Energy,
    /// Mass flow rate, kg/s.
    MassRate,
    /// Volume flow rate, m³/s.
    VolumeRate,
    /// Mass density, kg/m³.
    Density,
    /// Mass per unit length (chain, rope, cable), kg/m.
    LinearDensity,
    /// Force per unit length: a line load or a spring stiffness, N/m.
    ForcePerLength,
    /// Pressure or stress (also an elastic modulus), Pa.
    Pressure,
    /// Plane angle, rad.
    Angle,
}

impl Dimension {
    /// Every dimension, in declaration order.
    pub const ALL: [Dimension; 17] = [
        Dimension::Dimensionless,
        Dimension::Length,
        Dimension::Area,
        Dimension::Mass,
        Dimension::Time,
        Dimension::Velocity,
        Dimension::Acceleration,
        Dimension::Force,
        Dimension::Power,
        Dimension::Energy,
        Dimension::MassRate,
        Dimension::VolumeRate,
        Dimension::Density,
        Dimension::LinearDensity,
        Dimension::ForcePerLength,
        Dimension::Pressure,
        Dimension::Angle,
    ];

    /// The name used in messages, schemas and the wire format (`mass_rate`).
    pub fn key(self) -> &'static str {
        match self {
            Dimension::Dimensionless => "dimensionless",
            Dimension::Length => "length",
            Dimension::Area => "area",
            Dimension::Mass => "mass",
            Dimension::Time => "time",
            Dimension::Velocity => "velocity",
            Dimension::Acceleration => "acceleration",
            Dimension::Force => "force",
            Dimension::Power => "power",
            Dimension::Energy => "energy",
            Dimension::MassRate => "mass_rate",
            Dimension::VolumeRate => "volume_rate",
            Dimension::Density => "density",
            Dimension::LinearDensity => "linear_density",
            Dimension::ForcePerLength => "force_per_length",
            Dimension::Pressure => "pressure",
            Dimension::Angle => "angle",
        }
    }

    /// Looks a dimension up by its [`key`](Self::key).
    pub fn from_key(key: &str) -> Option<Dimension> {
        Dimension::ALL.into_iter().find(|d| d.key() == key)
    }

    /// A plain-words name for messages ("mass flow rate").
    pub fn describe(self) -> &'static str {
        match self {
            Dimension::Dimensionless => "a plain number",
            Dimension::Length => "a length",
            Dimension::Area => "an area",
            Dimension::Mass => "a mass",
            Dimension::Time => "a time",
            Dimension::Velocity => "a speed",
            Dimension::Acceleration => "an acceleration",
            Dimension::Force => "a force",
            Dimension::Power => "a power",
            Dimension::Energy => "an energy",
            Dimension::MassRate => "a mass flow rate",
            Dimension::VolumeRate => "a volume flow rate",
            Dimension::Density => "a density",
            Dimension::LinearDensity => "a mass per length",
            Dimension::ForcePerLength => "a force per length (or stiffness)",
            Dimension::Pressure => "a pressure or stress",
            Dimension::Angle => "an angle",
        }
    }

    /// The SI coherent unit symbol that values of this dimension are stored in.
    pub fn si_unit(self) -> &'static str {
        match self {
            Dimension::Dimensionless => "1",
            Dimension::Length => "m",
            Dimension::Area => "m2",
            Dimension::Mass => "kg",
            Dimension::Time => "s",
            Dimension::Velocity => "m/s",
            Dimension::Acceleration => "m/s2",
            Dimension::Force => "N",
            Dimension::Power => "W",
            Dimension::Energy => "J",
            Dimension::MassRate => "kg/s",
            Dimension::VolumeRate => "m3/s",
            Dimension::Density => "kg/m3",
            Dimension::LinearDensity => "kg/m",
            Dimension::ForcePerLength => "N/m",
            Dimension::Pressure => "Pa",
            Dimension::Angle => "rad",
        }
    }

    /// A typical input an engineer would type, used in error hints.
    pub fn example(self) -> &'static str {
        match self {
            Dimension::Dimensionless => "0.6",
            Dimension::Length => "1.2 m",
            Dimension::Area => "0.15 m2",
            Dimension::Mass => "2500 kg",
            Dimension::Time => "1.5 s",
            Dimension::Velocity => "4.5 m/s",
            Dimension::Acceleration => "0.3 m/s2",
            Dimension::Force => "12 kN",
            Dimension::Power => "75 kW",
            Dimension::Energy => "20 kJ",
            Dimension::MassRate => "1800 t/h",
            Dimension::VolumeRate => "0.5 m3/s",
            Dimension::Density => "1600 kg/m3",
            Dimension::LinearDensity => "55 kg/m",
            Dimension::ForcePerLength => "180 N/m",
            Dimension::Pressure => "100 GPa",
            Dimension::Angle => "35 deg",
        }
    }

    /// The unit a result of this dimension is shown in when no output
    /// declares its own, for the given unit system.
    pub fn default_display_unit(self, system: UnitSystem) -> &'static str {
        use Dimension as D;
        match system {
            UnitSystem::Si => match self {
                D::Dimensionless => "1",
                D::Length => "m",
                D::Area => "m2",
                D::Mass => "kg",
                D::Time => "s",
                D::Velocity => "m/s",
                D::Acceleration => "m/s2",
                D::Force => "kN",
                D::Power => "kW",
                D::Energy => "kJ",
                D::MassRate => "t/h",
                D::VolumeRate => "m3/s",
                D::Density => "kg/m3",
                D::LinearDensity => "kg/m",
                D::ForcePerLength => "kN/m",
                D::Pressure => "MPa",
                D::Angle => "deg",
            },
            UnitSystem::Us => match self {
                D::Dimensionless => "1",
                D::Length => "ft",
                D::Area => "ft2",
                D::Mass => "lb",
                D::Time => "s",
                D::Velocity => "fpm",
                D::Acceleration => "ft/s2",
                D::Force => "lbf",
                D::Power => "hp",
                D::Energy => "ft*lbf",
                D::MassRate => "stph",
                D::VolumeRate => "ft3/s",
                D::Density => "lb/ft3",
                D::LinearDensity => "lb/ft",
                D::ForcePerLength => "lbf/ft",
                D::Pressure => "psi",
                D::Angle => "deg",
            },
        }
    }
}

impl fmt::Display for Dimension {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.key())
    }
}

/// The unit system a project displays its results in.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, serde::Serialize, serde::Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum UnitSystem {
    /// SI units (kN, kW, t/h, m/s).
    #[default]
    Si,
    /// US customary units (lbf, hp, stph, fpm), as CEMA uses them.
    Us,
}

// Exact definitions. The international yard and pound (1959 agreement, as in
// NIST Handbook 44 Appendix C and NIST SP 811 Appendix B): 1 ft = 0.3048 m,
// 1 lb = 0.45359237 kg. Standard gravity gn = 9.80665 m/s² (3rd CGPM, 1901),
// so 1 lbf = 0.45359237 × 9.80665 N = 4.4482216152605 N. The short ton is
// 2000 lb = 907.18474 kg. The mechanical horsepower is 550 ft·lbf/s
// = 745.69987158227022 W.
/// One foot in metres (exact).
pub const FOOT: f64 = 0.3048;
/// One inch in metres (exact).
pub const INCH: f64 = 0.0254;
/// One avoirdupois pound in kilograms (exact).
pub const POUND: f64 = 0.453_592_37;
/// Standard acceleration of gravity in m/s² (exact, by definition).
pub const STANDARD_GRAVITY: f64 = 9.806_65;
/// One pound-force in newtons (exact: pound × standard gravity).
pub const POUND_FORCE: f64 = POUND * STANDARD_GRAVITY;
/// One short ton (2000 lb) in kilograms (exact).
pub const SHORT_TON: f64 = 2000.0 * POUND;
/// One mechanical horsepower (550 ft·lbf/s) in watts (exact).
pub const HORSEPOWER: f64 = 550.0 * FOOT * POUND_FORCE;

/// One entry of the unit table: every spelling of a unit, its dimension and
/// its factor to the SI coherent unit.
#[derive(Debug, Clone, Copy)]
pub struct Unit {
    /// Accepted spellings; the first is the one packwright prints.
    pub symbols: &'static [&'static str],
    /// What the unit measures.
    pub dimension: Dimension,
    /// Multiply a value in this unit by `factor` to get the SI coherent value.
    pub factor: f64,
}

const DEG: f64 = std::f64::consts::PI / 180.0;

macro_rules! units {
    ($( [$($sym:literal),+] $dim:ident $factor:expr; )*) => {
        /// The table of every unit packwright understands.
        pub const UNITS: &[Unit] = &[
            $( Unit { symbols: &[$($sym),+], dimension: Dimension::$dim, factor: $factor }, )*
        ];
    };
}

units! {
    ["1"] Dimensionless 1.0;
    ["%", "percent"] Dimensionless 0.01;
    // Length
    ["m"] Length 1.0;
    ["mm"] Length 1e-3;
    ["cm"] Length 1e-2;
    ["km"] Length 1e3;
    ["ft", "feet", "foot"] Length FOOT;
    ["in", "inch", "inches"] Length INCH;
    ["yd"] Length 3.0 * FOOT;
    // Area
    ["m2", "m^2", "m²"] Area 1.0;
    ["mm2", "mm^2", "mm²"] Area 1e-6;
    ["cm2", "cm^2", "cm²"] Area 1e-4;
    ["ft2", "ft^2", "ft²", "sq ft"] Area FOOT * FOOT;
    ["in2", "in^2", "in²", "sq in"] Area INCH * INCH;
    // Mass
    ["kg"] Mass 1.0;
    ["g"] Mass 1e-3;
    ["t", "tonne"] Mass 1e3;
    ["lb", "lbm", "lbs"] Mass POUND;
    ["short ton", "ston"] Mass SHORT_TON;
    // Time
    ["s", "sec"] Time 1.0;
    ["ms"] Time 1e-3;
    ["min"] Time 60.0;
    ["h", "hr"] Time 3600.0;
    // Velocity
    ["m/s"] Velocity 1.0;
    ["m/min"] Velocity 1.0 / 60.0;
    ["km/h"] Velocity 1.0 / 3.6;
    ["mm/s"] Velocity 1e-3;
    ["ft/s", "fps"] Velocity FOOT;
    ["ft/min", "fpm"] Velocity FOOT / 60.0;
    ["kn", "knot", "knots"] Velocity 1852.0 / 3600.0;
    // Acceleration
    ["m/s2", "m/s^2", "m/s²"] Acceleration 1.0;
    ["ft/s2", "ft/s^2", "ft/s²"] Acceleration FOOT;
    ["g0", "gn"] Acceleration STANDARD_GRAVITY;
    // Force
    ["N"] Force 1.0;
    ["kN"] Force 1e3;
    ["MN"] Force 1e6;
    ["lbf"] Force POUND_FORCE;
    ["kip", "kips"] Force 1000.0 * POUND_FORCE;
    ["kgf"] Force STANDARD_GRAVITY;
    ["tf"] Force 1000.0 * STANDARD_GRAVITY;
    // Power
    ["W"] Power 1.0;
    ["kW"] Power 1e3;
    ["MW"] Power 1e6;
    ["hp"] Power HORSEPOWER;
    // Energy
    ["J"] Energy 1.0;
    ["kJ"] Energy 1e3;
    ["MJ"] Energy 1e6;
    ["kWh"] Energy 3.6e6;
    ["ft*lbf", "ft.lbf", "ft-lbf", "ft lbf"] Energy FOOT * POUND_FORCE;
    // Mass rate
    ["kg/s"] MassRate 1.0;
    ["t/h", "tph", "mtph"] MassRate 1000.0 / 3600.0;
    ["kg/h"] MassRate 1.0 / 3600.0;
    ["kg/min"] MassRate 1.0 / 60.0;
    ["stph", "st/h"] MassRate SHORT_TON / 3600.0;
    ["lb/s"] MassRate POUND;
    ["lb/min"] MassRate POUND / 60.0;
    ["lb/h"] MassRate POUND / 3600.0;
    // Volume rate
    ["m3/s", "m^3/s", "m³/s"] VolumeRate 1.0;
    ["m3/h", "m^3/h", "m³/h"] VolumeRate 1.0 / 3600.0;
    ["ft3/s", "ft^3/s", "cfs"] VolumeRate FOOT * FOOT * FOOT;
    ["ft3/h", "ft^3/h"] VolumeRate FOOT * FOOT * FOOT / 3600.0;
    // Density
    ["kg/m3", "kg/m^3", "kg/m³"] Density 1.0;
    ["t/m3", "t/m^3", "t/m³"] Density 1000.0;
    ["g/cm3", "g/cm^3", "g/cm³"] Density 1000.0;
    ["lb/ft3", "lb/ft^3", "pcf"] Density POUND / (FOOT * FOOT * FOOT);
    // Mass per length
    ["kg/m"] LinearDensity 1.0;
    ["lb/ft"] LinearDensity POUND / FOOT;
    // Force per length (line load, stiffness)
    ["N/m"] ForcePerLength 1.0;
    ["kN/m"] ForcePerLength 1e3;
    ["MN/m"] ForcePerLength 1e6;
    ["N/mm"] ForcePerLength 1e3;
    ["kN/mm"] ForcePerLength 1e6;
    ["lbf/ft"] ForcePerLength POUND_FORCE / FOOT;
    ["lbf/in"] ForcePerLength POUND_FORCE / INCH;
    // Pressure, stress, modulus
    ["Pa"] Pressure 1.0;
    ["kPa"] Pressure 1e3;
    ["MPa", "N/mm2", "N/mm^2", "N/mm²"] Pressure 1e6;
    ["GPa", "kN/mm2", "kN/mm^2", "kN/mm²"] Pressure 1e9;
    ["bar"] Pressure 1e5;
    ["psi"] Pressure POUND_FORCE / (INCH * INCH);
    ["ksi"] Pressure 1000.0 * POUND_FORCE / (INCH * INCH);
    // Angle
    ["rad"] Angle 1.0;
    ["deg", "°", "degree", "degrees"] Angle DEG;
}

/// Looks a unit up by any of its spellings (exact, case-sensitive: `MN` and
/// `mN` are different units, so no case folding is done).
pub fn find_unit(symbol: &str) -> Option<&'static Unit> {
    UNITS.iter().find(|u| u.symbols.contains(&symbol))
}

/// The accepted spellings of units of a dimension, primary spelling first.
pub fn units_of(dimension: Dimension) -> Vec<&'static str> {
    UNITS
        .iter()
        .filter(|u| u.dimension == dimension)
        .map(|u| u.symbols[0])
        .collect()
}

/// Converts an SI coherent value to the named unit.
///
/// Returns `None` when the unit is unknown or of another dimension.
pub fn si_to_unit(value_si: f64, dimension: Dimension, unit: &str) -> Option<f64> {
    let unit = find_unit(unit)?;
    (unit.dimension == dimension).then(|| value_si / unit.factor)
}

/// A parsed quantity: a finite value in SI coherent units and its dimension.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Quantity {
    /// The value in the SI coherent unit of `dimension`.
    pub value_si: f64,
    /// What the value measures.
    pub dimension: Dimension,
}

/// Why a quantity string did not parse.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum QuantityError {
    /// Nothing but white space.
    Empty,
    /// The leading number is missing or not a number.
    BadNumber(String),
    /// The number is NaN or infinite.
    NotFinite(String),
    /// A number without a unit where a unit is needed.
    MissingUnit,
    /// A unit that the table does not know.
    UnknownUnit(String),
    /// A unit of another dimension than the one expected.
    WrongDimension {
        /// The unit found.
        unit: String,
        /// Its dimension.
        found: Dimension,
    },
}

impl fmt::Display for QuantityError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            QuantityError::Empty => write!(f, "the value is empty"),
            QuantityError::BadNumber(s) => write!(f, "`{s}` does not start with a number"),
            QuantityError::NotFinite(s) => write!(f, "`{s}` is not a finite number"),
            QuantityError::MissingUnit => write!(f, "the number has no unit"),
            QuantityError::UnknownUnit(u) => write!(f, "unknown unit `{u}`"),
            QuantityError::WrongDimension { unit, found } => {
                write!(f, "`{unit}` is a unit of {}", found.describe())
            }
        }
    }
}

impl std::error::Error for QuantityError {}

/// The length in bytes of the longest prefix of `text` that Rust's `f64`
/// parser accepts (0 if none): a sign, then `inf`, `infinity` or `nan` in
/// any case, or digits with an optional fraction and exponent.
///
/// One pass over the text: trying every prefix with `str::parse` takes time
/// quadratic in the length, and one long value in an item file then kept
/// `check` busy for minutes.
fn float_prefix_len(text: &str) -> usize {
    let b = text.as_bytes();
    let start = usize::from(matches!(b.first(), Some(b'+' | b'-')));
    for word in ["infinity", "inf", "nan"] {
        let end = start + word.len();
        if b.len() >= end && b[start..end].eq_ignore_ascii_case(word.as_bytes()) {
            return end;
        }
    }
    let digits_from = |mut j: usize| {
        while j < b.len() && b[j].is_ascii_digit() {
            j += 1;
        }
        j
    };
    let mut end = digits_from(start);
    let mut any_digit = end > start;
    if b.get(end) == Some(&b'.') {
        let fraction_end = digits_from(end + 1);
        any_digit |= fraction_end > end + 1;
        end = fraction_end;
    }
    if !any_digit {
        return 0;
    }
    if matches!(b.get(end), Some(b'e' | b'E')) {
        let sign = usize::from(matches!(b.get(end + 1), Some(b'+' | b'-')));
        let exponent_end = digits_from(end + 1 + sign);
        if exponent_end > end + 1 + sign {
            end = exponent_end;
        }
    }
    end
}

/// Splits `"4.5 m/s"` into the number and the unit text.
fn split_number(text: &str) -> Result<(f64, &str), QuantityError> {
    let text = text.trim();
    if text.is_empty() {
        return Err(QuantityError::Empty);
    }
    // The longest prefix that is a float literal is the number; Rust's float
    // grammar accepts "1e3", "-0.5", ".5", "inf" and "NaN".
    let end = float_prefix_len(text);
    if end == 0 {
        return Err(QuantityError::BadNumber(text.to_string()));
    }
    let number: f64 = text[..end]
        .parse()
        .map_err(|_| QuantityError::BadNumber(text.to_string()))?;
    // "1e" followed by a unit like "1 m" is fine; reject "12abc" where the
    // unit is glued onto letters that might be a mistyped exponent.
    if !number.is_finite() {
        return Err(QuantityError::NotFinite(text.to_string()));
    }
    Ok((number, text[end..].trim()))
}

/// Parses a quantity string such as `"1800 t/h"`, `"35 deg"` or `"4.5 m/s"`.
///
/// The number comes first, then the unit, with or without a space. A bare
/// number parses as dimensionless.
pub fn parse_quantity(text: &str) -> Result<Quantity, QuantityError> {
    let (number, unit_text) = split_number(text)?;
    if unit_text.is_empty() {
        return Ok(Quantity {
            value_si: number,
            dimension: Dimension::Dimensionless,
        });
    }
    let unit = find_unit(unit_text).ok_or_else(|| QuantityError::UnknownUnit(unit_text.into()))?;
    let value_si = number * unit.factor;
    if !value_si.is_finite() {
        return Err(QuantityError::NotFinite(text.to_string()));
    }
    Ok(Quantity {
        value_si,
        dimension: unit.dimension,
    })
}

/// Parses a quantity and insists on a dimension.
///
/// A bare number is [`QuantityError::MissingUnit`] unless the expected
/// dimension is dimensionless.
pub fn parse_expecting(text: &str, expected: Dimension) -> Result<Quantity, QuantityError> {
    let (number, unit_text) = split_number(text)?;
    if unit_text.is_empty() {
        return if expected == Dimension::Dimensionless {
            Ok(Quantity {
                value_si: number,
                dimension: expected,
            })
        } else {
            Err(QuantityError::MissingUnit)
        };
    }
    let q = parse_quantity(text)?;
    if q.dimension != expected {
        return Err(QuantityError::WrongDimension {
            unit: unit_text.to_string(),
            found: q.dimension,
        });
    }
    Ok(q)
}

/// The number of significant digits in a plain decimal text.
fn significant_digits(text: &str) -> usize {
    text.chars()
        .filter(char::is_ascii_digit)
        .skip_while(|&c| c == '0')
        .count()
}

/// Formats a number with `sig` significant figures in plain decimal
/// notation, switching to exponent notation only for very large or very
/// small magnitudes. Deterministic: the same value always prints the same.
pub fn format_significant(value: f64, sig: usize) -> String {
    if value == 0.0 {
        return if sig > 1 {
            format!("0.{}", "0".repeat(sig - 1))
        } else {
            "0".into()
        };
    }
    if !value.is_finite() {
        return format!("{value}");
    }
    let magnitude = value.abs().log10().floor() as i32;
    if !(-4..=12).contains(&magnitude) {
        return format!("{:.*e}", sig.saturating_sub(1), value);
    }
    // Rounding can carry into a new digit (9.99996 to four figures is
    // 10.000, one figure too many), and log10 can land just below a power of
    // ten: either way the text has one significant digit too many, so one
    // decimal fewer gives the right text.
    let decimals = (sig as i32 - 1 - magnitude).max(0) as usize;
    let mut text = format!("{value:.decimals$}");
    if decimals > 0 && significant_digits(&text) > sig {
        text = format!("{value:.prec$}", prec = decimals - 1);
    }
    if text.starts_with('-') && text[1..].chars().all(|c| c == '0' || c == '.') {
        text[1..].to_string()
    } else {
        text
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn si(text: &str) -> f64 {
        parse_quantity(text).unwrap().value_si
    }

    fn close(a: f64, b: f64) -> bool {
        (a - b).abs() <= 1e-12 * b.abs().max(1e-300)
    }

    // Exact definitions: NIST SP 811 (2008) Appendix B.8 and B.9, NIST
    // Handbook 44 Appendix C: international foot 0.3048 m, pound 0.45359237
    // kg, lbf = lb × 9.80665 m/s², short ton = 2000 lb, hp = 550 ft·lbf/s.
    #[test]
    // The horsepower is written to the digits its definition gives.
    #[allow(clippy::excessive_precision)]
    fn us_customary_definitions_are_exact() {
        assert!(close(si("1 ft"), 0.3048));
        assert!(close(si("1 in"), 0.0254));
        assert!(close(si("1 lbf"), 4.448_221_615_260_5));
        assert!(close(si("1 short ton"), 907.184_74));
        assert!(close(si("1 hp"), 745.699_871_582_270_22));
        assert!(close(si("1 stph"), 907.184_74 / 3600.0));
        assert!(close(si("1 fpm"), 0.3048 / 60.0));
        assert!(close(si("1 ft/s"), 0.3048));
        assert!(close(si("1 lb/ft3"), 0.453_592_37 / 0.3048f64.powi(3)));
        assert!(close(si("1 lb/ft"), 0.453_592_37 / 0.3048));
        assert!(close(si("1 psi"), 4.448_221_615_260_5 / 0.0254f64.powi(2)));
    }

    #[test]
    fn si_units_and_trade_units() {
        assert!(close(si("1800 t/h"), 500.0));
        assert!(close(si("4.5 m/s"), 4.5));
        assert!(close(si("90 m/min"), 1.5));
        assert!(close(si("650 mm"), 0.65));
        assert!(close(si("12 kN"), 12_000.0));
        assert!(close(si("75 kW"), 75_000.0));
        assert!(close(si("55 kg/m"), 55.0));
        assert!(close(si("180 N/m"), 180.0));
        assert!(close(si("2400 kg/m3"), 2400.0));
        assert!(close(si("180 deg"), std::f64::consts::PI));
        assert!(close(si("0.5 rad"), 0.5));
        assert!(close(si("100 kN/mm2"), 1e11));
        assert!(close(si("1e3 N"), 1000.0));
        assert!(close(si("-15deg"), -15.0 * DEG));
    }

    #[test]
    fn every_unit_in_the_table_parses_to_its_own_dimension() {
        for unit in UNITS {
            for symbol in unit.symbols {
                let q = parse_quantity(&format!("2 {symbol}")).unwrap();
                assert_eq!(q.dimension, unit.dimension, "{symbol}");
                assert!(close(q.value_si, 2.0 * unit.factor), "{symbol}");
            }
        }
    }

    #[test]
    fn no_spelling_is_listed_twice() {
        let mut seen = std::collections::BTreeSet::new();
        for unit in UNITS {
            for symbol in unit.symbols {
                assert!(seen.insert(*symbol), "{symbol} appears twice");
            }
        }
    }

    #[test]
    fn default_display_units_exist_with_their_dimension() {
        for d in Dimension::ALL {
            for system in [UnitSystem::Si, UnitSystem::Us] {
                let u = d.default_display_unit(system);
                assert_eq!(find_unit(u).map(|u| u.dimension), Some(d), "{u}");
            }
            assert_eq!(find_unit(d.si_unit()).map(|u| u.factor), Some(1.0));
            assert_eq!(parse_expecting(d.example(), d).map(|q| q.dimension), Ok(d));
        }
    }

    #[test]
    fn errors_say_what_is_wrong() {
        assert_eq!(
            parse_expecting("4.5", Dimension::Velocity),
            Err(QuantityError::MissingUnit)
        );
        assert_eq!(
            parse_expecting("4.5 furlongs", Dimension::Velocity),
            Err(QuantityError::UnknownUnit("furlongs".into()))
        );
        assert_eq!(
            parse_expecting("4.5 kg", Dimension::Velocity),
            Err(QuantityError::WrongDimension {
                unit: "kg".into(),
                found: Dimension::Mass
            })
        );
        assert!(matches!(
            parse_quantity("fast"),
            Err(QuantityError::BadNumber(_))
        ));
        assert!(matches!(
            parse_quantity("NaN m"),
            Err(QuantityError::NotFinite(_))
        ));
        assert!(matches!(
            parse_quantity("inf m"),
            Err(QuantityError::NotFinite(_))
        ));
        assert!(matches!(
            parse_quantity("1e308 km"),
            Err(QuantityError::NotFinite(_))
        ));
        assert_eq!(parse_quantity("  "), Err(QuantityError::Empty));
        assert_eq!(
            parse_expecting("0.6", Dimension::Dimensionless).map(|q| q.value_si),
            Ok(0.6)
        );
    }

    #[test]
    fn significant_figures() {
        assert_eq!(format_significant(2250.0, 6), "2250.00");
        assert_eq!(format_significant(1.35916, 4), "1.359");
        assert_eq!(format_significant(9.99996, 4), "10.00");
        assert_eq!(format_significant(-0.0000001, 3), "-1.00e-7");
        assert_eq!(format_significant(0.0, 3), "0.00");
        assert_eq!(format_significant(-0.0004, 1), "-0.0004");
        assert_eq!(format_significant(123456.0, 3), "123456");
        assert_eq!(format_significant(1.0e13, 3), "1.00e13");
    }

    proptest::proptest! {
        #[test]
        fn parsing_never_panics(s in "\\PC*") {
            let _ = parse_quantity(&s);
        }

        #[test]
        fn value_round_trips_through_any_unit(x in -1e6f64..1e6, idx in 0usize..UNITS.len()) {
            let unit = &UNITS[idx];
            let text = format!("{x} {}", unit.symbols[0]);
            let q = parse_quantity(&text).unwrap();
            let back = si_to_unit(q.value_si, unit.dimension, unit.symbols[0]).unwrap();
            proptest::prop_assert!((back - x).abs() <= 1e-9 * x.abs().max(1.0));
        }

        /// Every spelling, not only the first, with any spacing.
        #[test]
        fn every_spelling_round_trips(
            x in -1e6f64..1e6,
            idx in 0usize..UNITS.len(),
            which in 0usize..8,
            space in "[ ]{0,3}",
        ) {
            let unit = &UNITS[idx];
            let symbol = unit.symbols[which % unit.symbols.len()];
            // A unit that starts with a digit ("1") would join the number.
            let space = if symbol.starts_with(|c: char| c.is_ascii_digit()) { " " } else { &space };
            let q = parse_expecting(&format!("{x}{space}{symbol}"), unit.dimension).unwrap();
            proptest::prop_assert_eq!(q.dimension, unit.dimension);
            let back = si_to_unit(q.value_si, unit.dimension, symbol).unwrap();
            proptest::prop_assert!((back - x).abs() <= 1e-9 * x.abs().max(1.0));
        }

        /// A number with a unit of another dimension is always refused, and
        /// says which dimension the unit has.
        #[test]
        fn wrong_dimension_is_always_rejected(
            x in -1e6f64..1e6,
            idx in 0usize..UNITS.len(),
            which in 0usize..8,
            expected in 0usize..Dimension::ALL.len(),
        ) {
            let unit = &UNITS[idx];
            let expected = Dimension::ALL[expected];
            proptest::prop_assume!(unit.dimension != expected);
            let symbol = unit.symbols[which % unit.symbols.len()];
            let result = parse_expecting(&format!("{x} {symbol}"), expected);
            proptest::prop_assert_eq!(
                result,
                Err(QuantityError::WrongDimension { unit: symbol.to_string(), found: unit.dimension })
            );
        }

        /// `parse_expecting` never panics and agrees with `parse_quantity`.
        #[test]
        fn expecting_agrees_with_plain_parsing(s in "\\PC*", expected in 0usize..Dimension::ALL.len()) {
            let expected = Dimension::ALL[expected];
            match (parse_expecting(&s, expected), parse_quantity(&s)) {
                (Ok(e), Ok(q)) => proptest::prop_assert_eq!(e, q),
                (Ok(_), Err(_)) => proptest::prop_assert!(false, "only expecting accepted {:?}", s),
                (Err(_), Ok(q)) => proptest::prop_assert!(q.dimension != expected),
                (Err(_), Err(_)) => {}
            }
        }

        /// The one-pass number scanner finds the same number as trying
        /// every prefix with `str::parse` (the way it was first written).
        #[test]
        fn number_scanner_matches_trying_every_prefix(s in "[-+0-9.eEinfatyINFATY x]{0,14}") {
            let text = s.trim();
            let by_prefix = text
                .char_indices()
                .map(|(i, c)| i + c.len_utf8())
                .rfind(|&i| text[..i].trim().parse::<f64>().is_ok());
            let scanned = float_prefix_len(text);
            match by_prefix {
                None => proptest::prop_assert_eq!(scanned, 0, "{:?}", text),
                Some(end) => {
                    proptest::prop_assert_eq!(text[..end].trim(), &text[..scanned], "{:?}", text);
                }
            }
        }
    }

    #[test]
    fn a_long_value_parses_in_linear_time() {
        // Trying every prefix took minutes on 800 000 characters.
        let long = format!("1.{}{}", "1".repeat(400_000), "x".repeat(400_000));
        assert!(matches!(
            parse_quantity(&long),
            Err(QuantityError::UnknownUnit(u)) if u.len() == 400_000
        ));
    }
}
