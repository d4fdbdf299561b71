//! The rope as a spring: metallic area, axial stiffness of the reeving, and
//! the closed-form peak forces of a load snatched on an elastic rope.
//!
//! Owns no state.

use packwright_api::prelude::*;

/// Metallic cross-section A_m = f π d² / 4 of a wire rope of nominal
/// diameter d and fill factor f (metallic area over circumscribed circle).
///
/// reference.md §4.6: the formula with A the metallic area is CONFIRMED; the
/// typical fill factors (6x36 IWRC about 0.58) are from memory (M).
pub fn metallic_area(diameter: Length, fill_factor: f64) -> Area {
    diameter * diameter * (fill_factor * std::f64::consts::PI / 4.0)
}

/// Axial stiffness at the hook of `falls` parallel parts of rope, each of
/// free length L, metallic area A_m and modulus E: k = n E A_m / L.
///
/// reference.md §4.5 and §4.6 (k = E A / L per part, CONFIRMED as
/// ΔL = W L / (E A_m)); parts in parallel add. Only the falls are counted:
/// the lead line to the drum, the sheaves and the crane structure add
/// compliance, so this k is an upper bound.
pub fn reeving_stiffness(
    falls: u64,
    modulus: Pressure,
    area: Area,
    fall_length: Length,
) -> Stiffness {
    modulus * area / fall_length * falls as f64
}

/// Static stretch of the reeving under the weight: δ = m g / k.
pub fn static_stretch(mass: Mass, gravity: Acceleration, stiffness: Stiffness) -> Length {
    mass * gravity / stiffness
}

/// Peak rope force when the rope already carries m g and its upper end
/// suddenly moves at v relative to the load (a grounded load lifted off at
/// full speed, or a moving load arrested): F = m g + v √(k m).
///
/// reference.md §4.5, DERIVED (energy: ½ m v² = ½ k Δx²), undamped.
pub fn liftoff_bound(
    mass: Mass,
    gravity: Acceleration,
    speed: Velocity,
    stiffness: Stiffness,
) -> Force {
    let impedance: MassRate = (stiffness * mass).sqrt();
    mass * gravity + speed * impedance
}

/// Peak rope force when the load falls freely through a slack height h and
/// is then caught by the rope: F = m g (1 + √(1 + 2 k h / (m g))).
///
/// reference.md §4.5, CONFIRMED (the standard impact-force equation of an
/// undamped harmonic-oscillator rope model).
pub fn slack_drop_force(
    mass: Mass,
    gravity: Acceleration,
    height: Length,
    stiffness: Stiffness,
) -> Force {
    let weight: Force = mass * gravity;
    let ratio = (stiffness * height / weight).value;
    weight * (1.0 + (1.0 + 2.0 * ratio).sqrt())
}

/// Undamped natural period of the load on the rope: T = 2π √(m / k).
pub fn natural_period(mass: Mass, stiffness: Stiffness) -> Time {
    let omega_sq = (stiffness / mass).value;
    si(2.0 * std::f64::consts::PI / omega_sq.sqrt())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn close(a: f64, b: f64, rel: f64) -> bool {
        (a - b).abs() <= rel * b.abs()
    }

    // reference.md §4.5 check case (DERIVED/CONFIRMED): d = 20 mm, f = 0.58,
    // E = 100 kN/mm², L = 10 m, one part; g = 9.81 m/s² as the sheet uses.
    fn check_case() -> (Mass, Acceleration, Stiffness) {
        let a = metallic_area(si(0.020), 0.58);
        let k = reeving_stiffness(1, si(100e9), a, si(10.0));
        (si(1000.0), si(9.81), k)
    }

    #[test]
    fn stiffness_and_stretch_of_the_check_case() {
        let a = metallic_area(si(0.020), 0.58);
        assert!(close(a.to_si(), 1.82212e-4, 1e-5));
        let (m, g, k) = check_case();
        assert!(close(k.to_si(), 1.822124e6, 1e-6));
        assert!(close(static_stretch(m, g, k).to_si(), 5.384e-3, 1e-4));
        // Four parts of the same rope are four times as stiff.
        let k4 = reeving_stiffness(4, si(100e9), a, si(10.0));
        assert!(close(k4.to_si(), 4.0 * k.to_si(), 1e-12));
    }

    // reference.md §4.5: h = 0.10 m → 70 400.8 N; v = 0.5 m/s → 31 153.2 N.
    #[test]
    fn closed_forms_of_the_check_case() {
        let (m, g, k) = check_case();
        assert!(close(
            slack_drop_force(m, g, si(0.1), k).to_si(),
            70_400.8,
            1e-5
        ));
        assert!(close(
            liftoff_bound(m, g, si(0.5), k).to_si(),
            31_153.2,
            1e-5
        ));
        // A load released onto a rope with no slack doubles the weight.
        assert!(close(
            slack_drop_force(m, g, si(0.0), k).to_si(),
            2.0 * 9810.0,
            1e-12
        ));
    }
}
