//! The bridge between packwright's stored values (an SI number and a
//! [`Dimension`]) and `uom` quantities, so that inside a module every
//! physical value is typed and a dimension error does not compile.
//!
//! Owns no state.

use crate::units::Dimension;
use uom::si::f64 as q;

/// N/m (kg·s⁻²) as a line load or a spring stiffness. uom's own quantity of
/// this dimension, `SurfaceTension`, carries a special kind, so `Force /
/// Length` would not convert into it; this alias has the ordinary kind, so
/// `k: Stiffness = E * A / L` compiles.
pub type ForcePerLength =
    uom::si::Quantity<uom::si::ISQ<Z0, P1, N2, Z0, Z0, Z0, Z0>, uom::si::SI<f64>, f64>;
/// Spring stiffness of a rope, chain or structure (N/m).
pub type Stiffness = ForcePerLength;

use uom::typenum::{N2, P1, Z0};

pub use q::{
    Acceleration, Angle, Area, Energy, Force, Length, LinearMassDensity, Mass, MassDensity,
    MassRate, Power, Pressure, Ratio, Time, Velocity, VolumeRate,
};

/// A `uom` quantity that packwright can read from inputs and write to outputs.
pub trait SiQuantity: Copy {
    /// The packwright dimension this type carries.
    const DIMENSION: Dimension;
    /// Builds the quantity from a value in SI coherent units.
    fn from_si(value: f64) -> Self;
    /// The value in SI coherent units.
    fn to_si(&self) -> f64;
}

macro_rules! si_quantity {
    ($($ty:ty => $dim:ident, $unit:path;)*) => {
        $(
            impl SiQuantity for $ty {
                const DIMENSION: Dimension = Dimension::$dim;
                fn from_si(value: f64) -> Self {
                    <$ty>::new::<$unit>(value)
                }
                fn to_si(&self) -> f64 {
                    self.get::<$unit>()
                }
            }
        )*
    };
}

si_quantity! {
    Ratio => Dimensionless, uom::si::ratio::ratio;
    Length => Length, uom::si::length::meter;
    Area => Area, uom::si::area::square_meter;
    Mass => Mass, uom::si::mass::kilogram;
    Time => Time, uom::si::time::second;
    Velocity => Velocity, uom::si::velocity::meter_per_second;
    Acceleration => Acceleration, uom::si::acceleration::meter_per_second_squared;
    Force => Force, uom::si::force::newton;
    Power => Power, uom::si::power::watt;
    Energy => Energy, uom::si::energy::joule;
    MassRate => MassRate, uom::si::mass_rate::kilogram_per_second;
    VolumeRate => VolumeRate, uom::si::volume_rate::cubic_meter_per_second;
    MassDensity => Density, uom::si::mass_density::kilogram_per_cubic_meter;
    LinearMassDensity => LinearDensity, uom::si::linear_mass_density::kilogram_per_meter;
    Pressure => Pressure, uom::si::pressure::pascal;
    Angle => Angle, uom::si::angle::radian;
}

impl SiQuantity for ForcePerLength {
    const DIMENSION: Dimension = Dimension::ForcePerLength;
    fn from_si(value: f64) -> Self {
        // uom stores every quantity in SI base units, so the SI value is the
        // stored value.
        uom::si::Quantity {
            dimension: std::marker::PhantomData,
            units: std::marker::PhantomData,
            value,
        }
    }
    fn to_si(&self) -> f64 {
        self.value
    }
}

/// Standard gravity as a typed acceleration (9.80665 m/s², exact by the 3rd
/// CGPM, 1901).
pub fn standard_gravity() -> Acceleration {
    Acceleration::from_si(crate::units::STANDARD_GRAVITY)
}

/// A typed value from its SI number (shorthand for [`SiQuantity::from_si`]).
pub fn si<Q: SiQuantity>(value: f64) -> Q {
    Q::from_si(value)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn typed_arithmetic_keeps_dimensions() {
        let m_dot: MassRate = si(500.0);
        let v: Velocity = si(4.0);
        let f: Force = m_dot * v;
        assert_eq!(f.to_si(), 2000.0);
        let p: Power = f * v;
        assert_eq!(p.to_si(), 8000.0);
        let k: Stiffness = f / si::<Length>(0.5);
        assert_eq!(k.to_si(), 4000.0);
        assert_eq!(
            <Stiffness as SiQuantity>::DIMENSION,
            Dimension::ForcePerLength
        );
    }
}
