//! The physics of a loading point, as plain functions of `uom` quantities.
//!
//! Owns no state. Each function names its formula and source and how sure
//! that source is, with the labels of the shared reference sheet (CONFIRMED,
//! FROM MEMORY, DERIVED). The module wrapper in `lib.rs` only maps inputs and
//! outputs onto these functions.

use packwright_api::prelude::*;

/// Gravity in m/s² as ISO 5048 and DIN 22101 calculate with it (9.81 m/s²).
///
/// Source: ISO 5048:1989 and DIN 22101:2011 list g = 9.81 m/s² among their
/// symbols, FROM MEMORY (M). It differs from standard gravity (9.80665 m/s²)
/// by 0.035 %, far below the uncertainty of any friction coefficient; it is
/// used so that results match hand calculations done to those standards.
pub const ISO_5048_GRAVITY: f64 = 9.81;

/// [`ISO_5048_GRAVITY`] as a typed acceleration.
pub fn iso_gravity() -> Acceleration {
    si(ISO_5048_GRAVITY)
}

/// Force the belt applies to bring the feed from `v0` to belt speed `v`:
/// the momentum flux `F = ṁ (v − v0)`.
///
/// This is ISO 5048:1989 clause 4 F_bA, "inertial and frictional resistance
/// in the acceleration area" (FROM MEMORY, M–H), and CEMA's accelerating
/// tension T_am (CEMA, *Belt Conveyors for Bulk Materials*, 7th ed., ch. 6,
/// FROM MEMORY, H), which is the same term in US units. The momentum balance
/// itself is CONFIRMED (Halliday & Resnick, *Physics*; Symon, *Mechanics*,
/// 3rd ed.). Negative when `v0 > v`: the material pushes the belt forward.
pub fn acceleration_force(m_dot: MassRate, v: Velocity, v0: Velocity) -> Force {
    m_dot * (v - v0)
}

/// Power the drive delivers to the feed: `P = F v = ṁ v (v − v0)`.
///
/// Same sources as [`acceleration_force`] (CONFIRMED for v0 = 0, DERIVED for
/// the general case). Negative when the belt brakes the material.
pub fn acceleration_power(m_dot: MassRate, v: Velocity, v0: Velocity) -> Power {
    acceleration_force(m_dot, v, v0) * v
}

/// Rate at which the feed gains kinetic energy in the belt direction:
/// `½ ṁ (v² − v0²)`.
///
/// Elementary mechanics (Symon, *Mechanics*, 3rd ed.), CONFIRMED for v0 = 0,
/// DERIVED in general. Negative when the belt brakes the material.
pub fn kinetic_power(m_dot: MassRate, v: Velocity, v0: Velocity) -> Power {
    m_dot * (v * v - v0 * v0) * 0.5
}

/// Power lost to slip friction between feed and belt: `½ ṁ (v − v0)²`.
///
/// It is [`acceleration_power`] minus [`kinetic_power`], never negative: with
/// v0 = 0 exactly half of the drive's work is lost (Halliday & Resnick,
/// *Physics*, CONFIRMED), and it is lost in braking too (DERIVED).
pub fn dissipated_power(m_dot: MassRate, v: Velocity, v0: Velocity) -> Power {
    let slip = v - v0;
    m_dot * slip * slip * 0.5
}

/// Rate at which the material's speed approaches belt speed while it slips,
/// in m/s² along the belt. Positive means the material reaches belt speed.
///
/// Speeding up (`v0 <= v`): friction drives the material forward and the
/// slope holds it back, `a = g (μ1 cos δ − sin δ)`. Braking (`v0 > v`):
/// friction and a climbing slope both slow it, `a = g (μ1 cos δ + sin δ)`.
/// ISO 5048:1989 gives `g μ1` for a horizontal belt (FROM MEMORY, M–H); the
/// slope terms are a block sliding on an incline (DERIVED). `slope` is
/// positive when the belt climbs in its direction of travel.
pub fn approach_acceleration(
    g: Acceleration,
    mu1: f64,
    slope: Angle,
    v: Velocity,
    v0: Velocity,
) -> Acceleration {
    let along = slope.sin();
    let friction = slope.cos() * mu1;
    if v0 <= v {
        g * (friction - along)
    } else {
        g * (friction + along)
    }
}

/// Whether friction can bring the feed to belt speed and then carry it
/// without sliding back or running ahead: `μ1 cos δ > |sin δ|`.
///
/// DERIVED (block on an incline). On a climbing belt this is the condition
/// `μ1 cos δ > sin δ` for the feed to be accelerated at all; on a falling
/// belt it is the condition for the feed not to slide down faster than the
/// belt. It implies [`approach_acceleration`] is positive in both cases.
pub fn can_be_carried(mu1: f64, slope: Angle) -> bool {
    mu1 * slope.cos().to_si() > slope.sin().to_si().abs()
}

/// Distance along the belt over which the feed slips before it moves at
/// belt speed: `l_b = |v² − v0²| / (2 a)`, with `a` from
/// [`approach_acceleration`]. `None` when `a <= 0` (belt speed is never
/// reached).
///
/// ISO 5048:1989 minimum acceleration length l_b,min = (v² − v0²)/(2 g μ1)
/// for a horizontal belt (FROM MEMORY, M–H); the slope and the braking case
/// come from the same kinematics (DERIVED).
pub fn acceleration_length(v: Velocity, v0: Velocity, a: Acceleration) -> Option<Length> {
    if a.to_si() <= 0.0 {
        return None;
    }
    Some((v * v - v0 * v0).abs() / (a * 2.0))
}

/// Mean speed of the material over the acceleration length, `(v + v0)/2`,
/// as ISO 5048:1989 takes it for the stream height in the skirt friction
/// term (FROM MEMORY, M–H); it is the time-mean speed of a feed under
/// constant acceleration.
pub fn mean_slip_speed(v: Velocity, v0: Velocity) -> Velocity {
    (v + v0) * 0.5
}

/// Friction between the material and the skirt plates over the
/// acceleration length:
/// `F_f = μ2 ṁ² g l_b / (ρ v_mean² b1²)`, with `v_mean` from
/// [`mean_slip_speed`].
///
/// ISO 5048:1989 clause 4 (written there with I_v = ṁ/ρ as
/// `μ2 I_v² ρ g l_b / (((v + v0)/2)² b1²)`), FROM MEMORY (M–H). It is a
/// lateral pressure ρ g h on a stream of height h = I_v / (b1 v_mean), acting
/// over both skirts of height h (DERIVED). The slope's reduction of that
/// pressure (cos δ) is left out, which errs high.
pub fn skirt_friction(
    mu2: f64,
    m_dot: MassRate,
    rho: MassDensity,
    g: Acceleration,
    l_b: Length,
    v_mean: Velocity,
    b1: Length,
) -> Force {
    m_dot * m_dot * g * l_b * mu2 / (rho * v_mean * v_mean * b1 * b1)
}

/// Mean force of the feed on the impact idlers from its speed normal to the
/// belt: `F_i = ṁ v_n`, the normal momentum flux destroyed at landing.
///
/// Elementary momentum balance (DERIVED). A steady-flow mean only: single
/// lumps give far higher peaks.
pub fn impact_force(m_dot: MassRate, v_normal: Velocity) -> Force {
    m_dot * v_normal
}

/// Speed of the material at distance `s` from the feed point:
/// `v(s)² = v0² ± 2 a s` until it reaches belt speed `v`, then `v`.
///
/// Constant-acceleration kinematics (DERIVED); `a` is the positive
/// [`approach_acceleration`]; the sign follows whether the belt speeds the
/// feed up or brakes it.
pub fn speed_at(s: Length, v: Velocity, v0: Velocity, a: Acceleration) -> Velocity {
    let Some(l_b) = acceleration_length(v, v0, a) else {
        return v0;
    };
    if s >= l_b {
        return v;
    }
    let two_a_s = a * s * 2.0;
    let squared = if v0 <= v {
        v0 * v0 + two_a_s
    } else {
        v0 * v0 - two_a_s
    };
    // Before l_b the square stays above min(v, v0)² >= 0; the clamp only
    // guards against rounding so that no NaN can come out.
    let squared_si = squared.value.max(0.0);
    si(squared_si.sqrt())
}
