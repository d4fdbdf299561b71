//! Numbers as people read them: a value in the project's display units
//! with four significant figures. The terminal tables and the package both
//! use this, so a number reads the same in both. Owns no state.

use packwright_api::units::{find_unit, format_significant, si_to_unit};
use packwright_api::{Dimension, Measure, OutputSpec, UnitSystem};

/// Significant figures shown to people.
pub const DISPLAY_FIGURES: usize = 4;

/// The display unit for an output in a unit system.
pub fn output_unit(spec: &OutputSpec, system: UnitSystem) -> &str {
    match system {
        UnitSystem::Si => &spec.si_unit,
        UnitSystem::Us => &spec.us_unit,
    }
}

/// A value converted to `unit` and formatted; the unit symbol printed
/// alongside (empty for a plain number).
pub fn in_unit(value_si: f64, dimension: Dimension, unit: &str) -> (String, String) {
    let (x, unit) = match si_to_unit(value_si, dimension, unit) {
        Some(x) => (x, unit),
        None => (value_si, dimension.si_unit()),
    };
    let shown = if unit == "1" {
        String::new()
    } else {
        pretty_unit(unit)
    };
    (format_significant(x, DISPLAY_FIGURES), shown)
}

/// A measure in the default display unit of its dimension.
pub fn measure(m: &Measure, system: UnitSystem) -> (String, String) {
    in_unit(
        m.value,
        m.dimension,
        m.dimension.default_display_unit(system),
    )
}

/// A measure shown as an output of `spec`.
pub fn output(m: &Measure, spec: Option<&OutputSpec>, system: UnitSystem) -> (String, String) {
    match spec {
        Some(spec) if find_unit(output_unit(spec, system)).is_some() => {
            in_unit(m.value, m.dimension, output_unit(spec, system))
        }
        _ => measure(m, system),
    }
}

/// A unit symbol as typeset: powers as superscripts, degrees as °.
pub fn pretty_unit(unit: &str) -> String {
    match unit {
        "deg" => "°".into(),
        "1" => String::new(),
        _ => unit
            .replace("m2", "m²")
            .replace("m3", "m³")
            .replace("s2", "s²")
            .replace("ft2", "ft²")
            .replace("ft3", "ft³")
            .replace("*", "·"),
    }
}

/// `value unit` in one string, for terminals.
pub fn joined((value, unit): (String, String)) -> String {
    if unit.is_empty() {
        value
    } else if unit == "°" {
        format!("{value}{unit}")
    } else {
        format!("{value} {unit}")
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn shows_in_display_units() {
        let m = Measure {
            value: 2250.0,
            dimension: Dimension::Force,
        };
        assert_eq!(joined(measure(&m, UnitSystem::Si)), "2.250 kN");
        assert_eq!(joined(measure(&m, UnitSystem::Us)), "505.8 lbf");
        let a = Measure {
            value: std::f64::consts::FRAC_PI_4,
            dimension: Dimension::Angle,
        };
        assert_eq!(joined(measure(&a, UnitSystem::Si)), "45.00°");
        let d = Measure {
            value: 2400.0,
            dimension: Dimension::Density,
        };
        assert_eq!(joined(measure(&d, UnitSystem::Si)), "2400 kg/m³");
    }
}
