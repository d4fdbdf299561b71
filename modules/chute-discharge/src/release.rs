//! Discharge off the head pulley by the CEMA trajectory method: where a
//! layer of the stream leaves the pulley, in which direction, and the free
//! parabola it then flies (air drag neglected).
//!
//! Coordinates: head-pulley centre at the origin, x horizontal in the
//! direction of belt travel, y up, metres. Owns no state.

use packwright_api::prelude::*;

/// Where and how a layer of the stream leaves the head pulley.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Release {
    /// The discharge ratio `V^2 / (g r)` at the layer's radius.
    pub ratio: f64,
    /// Whether the layer leaves at the belt's tangent point (else it rides
    /// round the pulley to where `cos(theta) = V^2 / (g r)`).
    pub at_tangent: bool,
    /// Angular position of the release point from top dead centre, positive
    /// in the direction of belt travel (negative: before TDC, a climbing belt).
    pub position_angle: Angle,
    /// Direction of the layer's velocity at release, above the horizontal.
    pub launch_angle: Angle,
    /// Release point, x.
    pub x: Length,
    /// Release point, y.
    pub y: Length,
    /// Speed of the layer at release.
    pub speed: Velocity,
}

/// The CEMA release condition for a layer at radius `radius` moving at
/// `speed` over a pulley whose approach belt has slope `belt_slope`
/// (positive climbing):
/// if `V^2/(g r) >= cos(alpha)` the layer leaves at the tangent point with
/// launch angle `gamma = alpha`; otherwise it stays on the pulley to the
/// angle `theta` past top dead centre where `cos(theta) = V^2/(g r)` and
/// leaves with `gamma = -theta`.
///
/// Source: CEMA "Belt Conveyors for Bulk Materials", trajectory chapter, as
/// paraphrased in the reference sheet section 2.2: CONFIRMED for declined
/// belts, FROM MEMORY (H) for horizontal and inclined belts (the same normal
/// force balance, `g cos(theta)` against `V^2 / r`).
pub fn cema_release(
    speed: Velocity,
    radius: Length,
    belt_slope: Angle,
    g: Acceleration,
) -> Release {
    let (v, r, alpha) = (speed.value, radius.value, belt_slope.value);
    let ratio = v * v / (g.value * r);
    let at_tangent = ratio >= alpha.cos();
    // `0.0 - x` rather than `-x`, so that a level belt reports +0, not -0.
    let phi = if at_tangent {
        0.0 - alpha
    } else {
        ratio.acos()
    };
    Release {
        ratio,
        at_tangent,
        position_angle: si(phi),
        launch_angle: si(0.0 - phi),
        x: si(r * phi.sin()),
        y: si(r * phi.cos()),
        speed,
    }
}

impl Release {
    /// The point and velocity of the free parabola `time` after release:
    /// `x = x_0 + V cos(gamma) t`, `y = y_0 + V sin(gamma) t - g t^2 / 2`
    /// (CEMA; air drag neglected). SI values `(x, y, v_x, v_y)`.
    pub fn state_at(&self, time: Time, g: Acceleration) -> [f64; 4] {
        let (t, v, gam, g) = (
            time.value,
            self.speed.value,
            self.launch_angle.value,
            g.value,
        );
        [
            self.x.value + v * gam.cos() * t,
            self.y.value + v * gam.sin() * t - 0.5 * g * t * t,
            v * gam.cos(),
            v * gam.sin() - g * t,
        ]
    }
}

/// The CEMA trajectory in explicit form, height relative to the release
/// point at horizontal distance `x` from it:
/// `y = x tan(gamma) - g x^2 / (2 V^2 cos^2(gamma))` (reference sheet
/// section 2.2, FROM MEMORY (H); elementary projectile motion).
pub fn trajectory_height(speed: Velocity, launch: Angle, x: Length, g: Acceleration) -> Length {
    let (v, gam, x, g) = (speed.value, launch.value, x.value, g.value);
    let c = gam.cos();
    si(x * gam.tan() - g * x * x / (2.0 * v * v * c * c))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn g() -> Acceleration {
        si(9.81) // the reference sheet's check values use g = 9.81 m/s²
    }

    fn deg(x: f64) -> Angle {
        si(x.to_radians())
    }

    fn rel(a: f64, b: f64) -> f64 {
        ((a - b) / b).abs()
    }

    /// x after a vertical drop `drop` below the release point.
    fn x_at_drop(r: &Release, drop: f64) -> f64 {
        let (mut lo, mut hi) = (0.0, 10.0);
        for _ in 0..200 {
            let mid = 0.5 * (lo + hi);
            let s = r.state_at(si(mid), g());
            if s[1] - r.y.value > -drop {
                lo = mid;
            } else {
                hi = mid;
            }
        }
        r.state_at(si(lo), g())[0] - r.x.value
    }

    // CEMA release condition, reference sheet section 2.2 checks (R = 0.615 m).
    #[test]
    fn cema_release_check_values() {
        // V = 4 m/s: ratio 2.65201 > 1, leaves at TDC; after a 1 m drop
        // t = 0.45152 s and x = 1.80609 m (horizontal belt, FROM MEMORY (H)).
        let r = cema_release(si(4.0), si(0.615), deg(0.0), g());
        assert!(rel(r.ratio, 2.65201) < 1e-5);
        assert!(r.at_tangent && r.position_angle.value.abs() < 1e-15);
        assert!(rel(x_at_drop(&r, 1.0), 1.80609) < 1e-4);
        let t = (2.0 * 1.0 / 9.81f64).sqrt();
        assert!(rel(t, 0.45152) < 1e-4);
        // Belt inclined 15 deg: x where y = -1 m is 2.19932 m (FROM MEMORY (H)).
        let r = cema_release(si(4.0), si(0.615), deg(15.0), g());
        assert!(r.at_tangent && rel(r.launch_angle.value, 15f64.to_radians()) < 1e-12);
        assert!(
            rel(x_at_drop(&r, 1.0), 2.19932) < 1e-4,
            "{}",
            x_at_drop(&r, 1.0)
        );
        // V = 1.5 m/s: ratio 0.372940, rides to 68.103 deg past TDC.
        let r = cema_release(si(1.5), si(0.615), deg(0.0), g());
        assert!(rel(r.ratio, 0.372940) < 1e-5);
        assert!(!r.at_tangent);
        assert!((r.position_angle.value.to_degrees() - 68.103).abs() < 1e-3);
        // Declined 10 deg, V = 2.3 m/s: 0.87680 < cos 10 deg, leaves at 28.74 deg
        // (CONFIRMED for declined belts).
        let r = cema_release(si(2.3), si(0.615), deg(-10.0), g());
        assert!(rel(r.ratio, 0.87680) < 1e-4);
        assert!(!r.at_tangent);
        assert!((r.position_angle.value.to_degrees() - 28.74).abs() < 5e-3);
        // A declined belt fast enough leaves at its tangent point, ahead of TDC.
        let r = cema_release(si(4.0), si(0.615), deg(-10.0), g());
        assert!(r.at_tangent && rel(r.position_angle.value, 10f64.to_radians()) < 1e-12);
    }

    // Reference sheet section 2.2: V = 1.5 m/s released at 68.103 deg past TDC,
    // y(x = 0.2 m) in the explicit trajectory form.
    #[test]
    fn explicit_trajectory_matches_time_form() {
        let r = cema_release(si(1.5), si(0.615), deg(0.0), g());
        let y = trajectory_height(r.speed, r.launch_angle, si(0.2), g());
        let t = 0.2 / (1.5 * r.launch_angle.value.cos());
        let s = r.state_at(si(t), g());
        assert!((s[1] - r.y.value - y.value).abs() < 1e-12);
        // Reference sheet section 2.2 check: y(0.2 m) = -1.12455 m (FROM MEMORY (H)).
        assert!(rel(y.value, -1.12455) < 1e-5, "{}", y.value);
    }
}
