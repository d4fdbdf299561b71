//! Flow of the stream along the chute: Roberts' continuum chute-flow model
//! with a constant equivalent friction, integrated along the path with an
//! adaptive Dormand-Prince 5(4) scheme, with impact, stall and lift-off
//! events; and the closed forms it is checked against.
//!
//! Geometry in SI numbers in the pulley-centre frame (see `path`). Owns no
//! state.

use crate::path::{ChutePath, PathPosition, Segment};
use crate::release::Release;
use packwright_api::prelude::*;

/// Speed on a concave circular chute by Roberts' closed form.
///
/// `v dv/d(theta) = g R (cos(theta) - mu_E sin(theta)) - mu_E v^2`, with
/// `theta` from the horizontal through the centre of curvature (0 at the
/// vertical wall, 90 deg at the bottom), has the solution
/// `v^2 = 2 g R / (1 + 4 mu_E^2) [(1 - 2 mu_E^2) sin(theta) + 3 mu_E cos(theta)] + K e^(-2 mu_E theta)`.
///
/// Source: A.W. Roberts, "Chute Performance and Design for Rapid Flow
/// Conditions", Chem. Eng. Technol. 26 (2003); the equation as in the
/// reference sheet section 2.4: DERIVED, matching Roberts' published form
/// from memory (M). Returns `None` where `v^2` would be negative (the
/// stream has stalled before `theta`).
pub fn roberts_arc_speed(
    v0: Velocity,
    theta0: Angle,
    theta: Angle,
    radius: Length,
    mu: f64,
    g: Acceleration,
) -> Option<Velocity> {
    let (v0, t0, t, r, g) = (v0.value, theta0.value, theta.value, radius.value, g.value);
    let f = |th: f64| {
        2.0 * g * r / (1.0 + 4.0 * mu * mu)
            * ((1.0 - 2.0 * mu * mu) * th.sin() + 3.0 * mu * th.cos())
    };
    let k = (v0 * v0 - f(t0)) * (2.0 * mu * t0).exp();
    let v2 = f(t) + k * (-2.0 * mu * t).exp();
    (v2 >= 0.0).then(|| si(v2.sqrt()))
}

/// Speed after sliding `length` down a straight chute inclined `slope`
/// below the horizontal: `v^2 = v_0^2 + 2 g L (sin(theta) - mu_E cos(theta))`.
///
/// Source: elementary sliding with constant friction, the limiting case of
/// Roberts' model (reference sheet section 2.3, FROM MEMORY (H)). Returns
/// `None` where the right side is negative (stalled before `length`).
pub fn straight_chute_speed(
    v0: Velocity,
    length: Length,
    slope: Angle,
    mu: f64,
    g: Acceleration,
) -> Option<Velocity> {
    let v2 = v0.value * v0.value
        + 2.0 * g.value * length.value * (slope.value.sin() - mu * slope.value.cos());
    (v2 >= 0.0).then(|| si(v2.sqrt()))
}

/// How an integration along one segment ended.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Stop {
    /// It reached the end of the interval.
    End,
    /// The speed fell to zero.
    Stall,
    /// The normal force on the surface fell to zero: the stream lifts off.
    LiftOff,
}

/// The accepted steps of an integration and how it ended.
#[derive(Debug, Clone, PartialEq)]
pub struct Integration {
    /// `(s, u)` at the start and after every accepted step.
    pub points: Vec<(f64, f64)>,
    /// Why it stopped.
    pub stop: Stop,
}

/// Integrates the scalar equation `du/ds = f(s, u)` from `s0` to `s1` with
/// the Dormand-Prince 5(4) pair, step size controlled so that the local
/// error estimate stays below `tol (1 + |u|)`. `event(s, u)` names a
/// condition that ends the integration (a stall, a lift-off); its location
/// is found by bisection on the step to 1e-10 of the interval. Steps are
/// at most `max_step`, so that the accepted points sample the solution.
///
/// Source of the coefficients: J.R. Dormand, P.J. Prince, J. Comput. Appl.
/// Math. 6 (1980) 19-26.
pub fn integrate(
    f: &dyn Fn(f64, f64) -> f64,
    event: &dyn Fn(f64, f64) -> Option<Stop>,
    s0: f64,
    s1: f64,
    u0: f64,
    tol: f64,
    max_step: f64,
) -> Integration {
    let mut points = vec![(s0, u0)];
    if let Some(stop) = event(s0, u0) {
        return Integration { points, stop };
    }
    let span = s1 - s0;
    let mut h = (span / 50.0).max(1e-9);
    let (mut s, mut u) = (s0, u0);
    let mut guard = 0;
    while s < s1 - 1e-12 * span.max(1.0) && guard < 1_000_000 {
        guard += 1;
        h = h.min(s1 - s).min(max_step);
        let (u5, err) = dopri_step(f, s, u, h);
        let scale = tol * (1.0 + u.abs());
        if err > scale && h > 1e-12 {
            h *= (0.9 * (scale / err).powf(0.2)).clamp(0.1, 0.9);
            continue;
        }
        if event(s + h, u5).is_some() {
            // Locate the event: the largest step that keeps the state valid.
            let (mut lo, mut hi) = (0.0, h);
            while hi - lo > 1e-10 * span.max(1e-3) {
                let mid = 0.5 * (lo + hi);
                if event(s + mid, dopri_step(f, s, u, mid).0).is_some() {
                    hi = mid;
                } else {
                    lo = mid;
                }
            }
            let u_hi = dopri_step(f, s, u, hi).0;
            let stop = event(s + hi, u_hi).unwrap_or(Stop::End);
            let u_end = if lo > 0.0 {
                dopri_step(f, s, u, lo).0
            } else {
                u
            };
            points.push((s + hi, if stop == Stop::Stall { 0.0 } else { u_end }));
            return Integration { points, stop };
        }
        s += h;
        u = u5;
        points.push((s, u));
        let grow = if err > 0.0 {
            (0.9 * (scale / err).powf(0.2)).clamp(0.2, 5.0)
        } else {
            5.0
        };
        h *= grow;
    }
    Integration {
        points,
        stop: Stop::End,
    }
}

/// One Dormand-Prince step: the fifth-order solution and the error estimate.
fn dopri_step(f: &dyn Fn(f64, f64) -> f64, s: f64, u: f64, h: f64) -> (f64, f64) {
    let k1 = f(s, u);
    let k2 = f(s + h / 5.0, u + h * (k1 / 5.0));
    let k3 = f(s + 0.3 * h, u + h * (3.0 / 40.0 * k1 + 9.0 / 40.0 * k2));
    let k4 = f(
        s + 0.8 * h,
        u + h * (44.0 / 45.0 * k1 - 56.0 / 15.0 * k2 + 32.0 / 9.0 * k3),
    );
    let k5 = f(
        s + 8.0 / 9.0 * h,
        u + h
            * (19372.0 / 6561.0 * k1 - 25360.0 / 2187.0 * k2 + 64448.0 / 6561.0 * k3
                - 212.0 / 729.0 * k4),
    );
    let k6 = f(
        s + h,
        u + h
            * (9017.0 / 3168.0 * k1 - 355.0 / 33.0 * k2
                + 46732.0 / 5247.0 * k3
                + 49.0 / 176.0 * k4
                - 5103.0 / 18656.0 * k5),
    );
    let u5 = u + h
        * (35.0 / 384.0 * k1 + 500.0 / 1113.0 * k3 + 125.0 / 192.0 * k4 - 2187.0 / 6784.0 * k5
            + 11.0 / 84.0 * k6);
    let k7 = f(s + h, u5);
    let u4 = u + h
        * (5179.0 / 57600.0 * k1 + 7571.0 / 16695.0 * k3 + 393.0 / 640.0 * k4
            - 92097.0 / 339200.0 * k5
            + 187.0 / 2100.0 * k6
            + k7 / 40.0);
    (u5, (u5 - u4).abs())
}

/// The equation of the stream on one segment, in `u = v^2 / 2` along the
/// distance `s`: `du/ds = -g t_y - mu_E (2 u kappa + g n_y)`, where `t` is
/// the path direction, `n` the unit normal from the surface into the
/// stream, `kappa` the curvature (positive when the surface is concave to
/// the stream) and `N = 2 u kappa + g n_y` the normal force per unit mass
/// (lift-off when it falls below zero). On a concave arc this is Roberts'
/// equation (see [`roberts_arc_speed`]); on a line, the straight-chute
/// formula.
struct SlideEquation {
    seg: Segment,
    side: f64,
    mu: f64,
    g: f64,
}

impl SlideEquation {
    fn normal(&self, s: f64) -> [f64; 2] {
        let t = self.seg.tangent(s);
        [-self.side * t[1], self.side * t[0]]
    }

    fn kappa(&self) -> f64 {
        self.side * self.seg.curvature_left()
    }

    fn normal_force(&self, s: f64, u: f64) -> f64 {
        2.0 * u * self.kappa() + self.g * self.normal(s)[1]
    }

    fn rate(&self, s: f64, u: f64) -> f64 {
        let t = self.seg.tangent(s);
        -self.g * t[1] - self.mu * self.normal_force(s, u)
    }
}

/// A point of the stream's speed profile along the chute.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ProfilePoint {
    /// Distance along the path from its start (m).
    pub distance: f64,
    /// Position (m).
    pub point: [f64; 2],
    /// Speed (m/s).
    pub speed: f64,
}

/// One impact of the stream on the chute (the first from the pulley, or a
/// later one after a lift-off or at a kink turning into the stream).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Impact {
    /// Where (m).
    pub point: [f64; 2],
    /// Where on the path.
    pub at: PathPosition,
    /// Speed of the stream arriving (m/s).
    pub speed: f64,
    /// Speed component normal to the surface, lost (m/s).
    pub normal_speed: f64,
    /// Angle between the arriving stream and the surface (rad).
    pub angle: f64,
    /// Speed kept along the surface after the impact (m/s).
    pub speed_after: f64,
    /// Whether the stream arrived pointing back up the path (it then starts
    /// from rest along the path).
    pub reversed: bool,
}

/// How the stream's passage through the chute ended.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Ending {
    /// It left the end of the path with this velocity (m/s).
    Exit {
        /// Exit point (m).
        point: [f64; 2],
        /// Exit velocity (m/s).
        velocity: [f64; 2],
    },
    /// It stopped on the path.
    Stall {
        /// Where (m).
        point: [f64; 2],
        /// Distance along the path (m).
        distance: f64,
    },
    /// It lifted off the path and did not meet it again.
    LeftChute {
        /// Where it lifted off (m).
        point: [f64; 2],
        /// Its velocity there (m/s).
        velocity: [f64; 2],
        /// Distance along the path (m).
        distance: f64,
    },
}

/// A free flight of the stream: sampled points (m).
pub type Flight = Vec<[f64; 2]>;

/// The stream's passage from the pulley to the end of the chute.
#[derive(Debug, Clone, PartialEq)]
pub struct Passage {
    /// Impacts in order; the first is the impact from the pulley.
    pub impacts: Vec<Impact>,
    /// Free flights in order; the first is from the release point.
    pub flights: Vec<Flight>,
    /// Speed along the path while the stream is on it.
    pub profile: Vec<ProfilePoint>,
    /// Lift-off points, with their distance along the path.
    pub lift_offs: Vec<([f64; 2], f64)>,
    /// How it ended.
    pub ending: Ending,
}

/// Why a passage could not be followed.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum PassageError {
    /// The trajectory from the pulley never meets the chute.
    NeverMeets,
}

/// Kinks smaller than this (rad) count as smooth joins.
const SMOOTH_JOIN: f64 = 0.5 * std::f64::consts::PI / 180.0;

fn flight_points(start: [f64; 2], v: [f64; 2], g: f64, t_end: f64) -> Flight {
    let n = 60;
    (0..=n)
        .map(|i| {
            let t = t_end * i as f64 / n as f64;
            [start[0] + v[0] * t, start[1] + v[1] * t - 0.5 * g * t * t]
        })
        .collect()
}

/// The impact of a stream arriving with `velocity` on the path at `at`:
/// the normal component is lost, the tangential one kept times `retention`
/// (the impact model; a stream pointing back up the path starts
/// from rest). Returns the impact and the side of the path the stream is
/// on (+1 left of the path's direction, -1 right).
fn impact(
    path: &ChutePath,
    point: [f64; 2],
    velocity: [f64; 2],
    at: PathPosition,
    retention: f64,
) -> (Impact, f64) {
    let seg = &path.segments[at.segment];
    let t = seg.tangent(at.along);
    let left = [-t[1], t[0]];
    let vt = velocity[0] * t[0] + velocity[1] * t[1];
    let vn = velocity[0] * left[0] + velocity[1] * left[1];
    // A stream crossing towards the right came from the left side.
    let side = if vn < 0.0 { 1.0 } else { -1.0 };
    let speed = velocity[0].hypot(velocity[1]);
    (
        Impact {
            point,
            at,
            speed,
            normal_speed: vn.abs(),
            angle: vn.abs().atan2(vt.abs()),
            speed_after: retention * vt.max(0.0),
            reversed: vt < 0.0,
        },
        side,
    )
}

/// Follows the stream from its release off the pulley: free flight to the
/// first impact, then along the chute by Roberts' model (constant
/// equivalent friction `mu`), through kinks (a kink turning into the stream
/// is another impact, one turning away is a lift-off), lift-offs and
/// re-impacts, to the end of the path, a stall, or a lift-off that does not
/// meet the path again.
pub fn follow_stream(
    path: &ChutePath,
    release: &Release,
    mu: f64,
    retention: f64,
    g: Acceleration,
) -> Result<Passage, PassageError> {
    let g = g.value;
    let s0 = release.state_at(si(0.0), si(g));
    let mut p = [s0[0], s0[1]];
    let mut v = [s0[2], s0[3]];
    let mut after: Option<PathPosition> = None;
    let mut passage = Passage {
        impacts: Vec::new(),
        flights: Vec::new(),
        profile: Vec::new(),
        lift_offs: Vec::new(),
        ending: Ending::Exit {
            point: p,
            velocity: v,
        },
    };
    for _ in 0..100 {
        // Free flight to the next crossing.
        let Some(hit) = path.first_crossing(p, v, g, after) else {
            if passage.impacts.is_empty() {
                return Err(PassageError::NeverMeets);
            }
            let floor = path.lowest() - 0.5;
            let t_floor = time_to_height(p, v, g, floor);
            passage.flights.push(flight_points(p, v, g, t_floor));
            let distance = after.map_or(0.0, |a| path.distance(a));
            passage.ending = Ending::LeftChute {
                point: p,
                velocity: v,
                distance,
            };
            return Ok(passage);
        };
        passage.flights.push(flight_points(p, v, g, hit.time));
        let (imp, side) = impact(path, hit.point, hit.velocity, hit.at, retention);
        passage.impacts.push(imp);
        // Slide along the path from the impact.
        let mut at = hit.at;
        let mut u = 0.5 * imp.speed_after * imp.speed_after;
        loop {
            let seg = path.segments[at.segment];
            let eq = SlideEquation { seg, side, mu, g };
            let base = path.distance(PathPosition {
                segment: at.segment,
                along: 0.0,
            });
            let event = |s: f64, u: f64| {
                if eq.normal_force(s, u) < -1e-9 {
                    Some(Stop::LiftOff)
                } else if u <= 0.0 && eq.rate(s, 0.0) <= 0.0 {
                    Some(Stop::Stall)
                } else {
                    None
                }
            };
            let run = integrate(
                &|s, u| eq.rate(s, u),
                &event,
                at.along,
                seg.length(),
                u,
                1e-11,
                seg.length() / 40.0,
            );
            for &(s, uu) in &run.points {
                passage.profile.push(ProfilePoint {
                    distance: base + s,
                    point: seg.point(s),
                    speed: (2.0 * uu.max(0.0)).sqrt(),
                });
            }
            let &(s_end, u_end) = run.points.last().expect("integration has a start");
            let speed = (2.0 * u_end.max(0.0)).sqrt();
            let t = seg.tangent(s_end);
            match run.stop {
                Stop::Stall => {
                    passage.ending = Ending::Stall {
                        point: seg.point(s_end),
                        distance: base + s_end,
                    };
                    return Ok(passage);
                }
                Stop::LiftOff => {
                    p = seg.point(s_end);
                    v = [speed * t[0], speed * t[1]];
                    after = Some(PathPosition {
                        segment: at.segment,
                        along: s_end,
                    });
                    passage.lift_offs.push((p, base + s_end));
                    break;
                }
                Stop::End => {}
            }
            if at.segment + 1 == path.segments.len() {
                passage.ending = Ending::Exit {
                    point: seg.point(s_end),
                    velocity: [speed * t[0], speed * t[1]],
                };
                return Ok(passage);
            }
            let next = path.segments[at.segment + 1];
            let t2 = next.tangent(0.0);
            let turn = (t[0] * t2[1] - t[1] * t2[0]).atan2(t[0] * t2[0] + t[1] * t2[1]);
            let next_at = PathPosition {
                segment: at.segment + 1,
                along: 0.0,
            };
            if turn.abs() < SMOOTH_JOIN {
                at = next_at;
                u = u_end.max(0.0);
            } else if turn * side > 0.0 {
                // The next segment turns into the stream: an impact at the kink.
                let (imp, _) = impact(
                    path,
                    next.point(0.0),
                    [speed * t[0], speed * t[1]],
                    next_at,
                    retention,
                );
                passage.impacts.push(imp);
                at = next_at;
                u = 0.5 * imp.speed_after * imp.speed_after;
            } else {
                // The next segment falls away from the stream: it flies off the edge.
                p = seg.point(s_end);
                v = [speed * t[0], speed * t[1]];
                after = Some(next_at);
                passage.lift_offs.push((p, base + s_end));
                break;
            }
        }
    }
    let distance = after.map_or(0.0, |a| path.distance(a));
    passage.ending = Ending::LeftChute {
        point: p,
        velocity: v,
        distance,
    };
    Ok(passage)
}

/// Time for a flight from `p` with velocity `v` to come down to height `y`.
fn time_to_height(p: [f64; 2], v: [f64; 2], g: f64, y: f64) -> f64 {
    // y = p_y + v_y t - g t^2 / 2, the later root.
    let disc = v[1] * v[1] + 2.0 * g * (p[1] - y).max(0.0);
    (v[1] + disc.sqrt()) / g
}

/// Components of the exit velocity `(v_x, v_y)` (elevation plane) relative
/// to a receiving belt at plan angle `plan` (0 in line with the feeding
/// belt, 90 deg across it) and slope `slope` (positive climbing):
/// `(along the belt, normal onto the belt surface, across the belt)`.
/// The normal component is positive towards the belt. Vector geometry,
/// DERIVED.
pub fn exit_components(velocity: [f64; 2], plan: Angle, slope: Angle) -> (f64, f64, f64) {
    let (p, b) = (plan.value, slope.value);
    let e = [p.cos() * b.cos(), b.sin(), p.sin() * b.cos()];
    let n = [-p.cos() * b.sin(), b.cos(), -p.sin() * b.sin()];
    let across = [-p.sin(), 0.0, p.cos()];
    let u = [velocity[0], velocity[1], 0.0];
    let d = |a: [f64; 3], b: [f64; 3]| a[0] * b[0] + a[1] * b[1] + a[2] * b[2];
    (d(u, e), -d(u, n), d(u, across))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::path::Segment;
    use packwright_api::Span;

    fn g() -> Acceleration {
        si(9.81) // the reference sheet's check values use g = 9.81 m/s²
    }

    fn deg(x: f64) -> Angle {
        si(x.to_radians())
    }

    fn path(segments: Vec<Segment>) -> ChutePath {
        let span = Span::new("t.yaml", 1, 1);
        ChutePath {
            spans: vec![span.clone(); segments.len()],
            segments,
            span,
        }
    }

    /// Slides along a path from its start at speed `v0`, material on `side`.
    fn slide(p: &ChutePath, v0: f64, side: f64, mu: f64) -> Vec<(f64, f64)> {
        let mut u = 0.5 * v0 * v0;
        let mut out = Vec::new();
        for seg in &p.segments {
            let eq = SlideEquation {
                seg: *seg,
                side,
                mu,
                g: 9.81,
            };
            let run = integrate(
                &|s, u| eq.rate(s, u),
                &|_, u| (u < 0.0).then_some(Stop::Stall),
                0.0,
                seg.length(),
                u,
                1e-11,
                0.05,
            );
            u = run.points.last().unwrap().1;
            out.extend(run.points);
        }
        out
    }

    // Roberts' closed form, reference sheet section 2.4 (DERIVED; Roberts'
    // form from memory, M): R = 2 m, mu_E = 0.5, v0 = 1 m/s, 0 -> 90 deg gives
    // 1.974838 m/s; frictionless 6.343501 m/s.
    #[test]
    fn roberts_closed_form_check_values() {
        let v = roberts_arc_speed(si(1.0), deg(0.0), deg(90.0), si(2.0), 0.5, g()).unwrap();
        assert!((v.value - 1.974838).abs() < 1e-6, "{}", v.value);
        let v = roberts_arc_speed(si(1.0), deg(0.0), deg(90.0), si(2.0), 0.0, g()).unwrap();
        assert!((v.value - 6.343501).abs() < 1e-6, "{}", v.value);
        // The frictionless limit is v^2 = v0^2 + 2 g R sin(theta) at every angle.
        for th in [10.0, 35.0, 60.0, 80.0] {
            let v = roberts_arc_speed(si(1.0), deg(0.0), deg(th), si(2.0), 0.0, g()).unwrap();
            let exact = (1.0 + 2.0 * 9.81 * 2.0 * th.to_radians().sin()).sqrt();
            assert!((v.value - exact).abs() < 1e-12);
        }
    }

    // The numerical integration on a concave arc against Roberts' closed form
    // (tight tolerance), the arc run from the vertical wall to the bottom:
    // centre (0, 0), angle 180 -> 270 deg counter-clockwise, stream inside.
    #[test]
    fn integration_matches_roberts_closed_form() {
        let arc = Segment::Arc {
            centre: [0.0, 0.0],
            radius: 2.0,
            from_angle: std::f64::consts::PI,
            to_angle: 1.5 * std::f64::consts::PI,
        };
        for (mu, expect) in [(0.5, Some(1.974838)), (0.0, Some(6.343501)), (0.3, None)] {
            let pts = slide(&path(vec![arc]), 1.0, 1.0, mu);
            let v_end = (2.0 * pts.last().unwrap().1).sqrt();
            if let Some(expect) = expect {
                assert!((v_end - expect).abs() < 1e-6, "mu {mu}: {v_end}");
            }
            for &(s, u) in &pts {
                let th = s / 2.0;
                let closed =
                    roberts_arc_speed(si(1.0), deg(0.0), si(th), si(2.0), mu, g()).unwrap();
                assert!(((2.0 * u).sqrt() - closed.value).abs() < 1e-8 * closed.value.max(1.0));
            }
        }
    }

    // The straight-chute formula, reference sheet section 2.3 (FROM MEMORY (H)):
    // v0 = 1 m/s, L = 3 m, 50 deg, mu_E = 0.5 gives 5.21269 m/s; and the
    // integration on a line reproduces it.
    #[test]
    fn straight_chute_check_value() {
        let v = straight_chute_speed(si(1.0), si(3.0), deg(50.0), 0.5, g()).unwrap();
        assert!((v.value - 5.21269).abs() / 5.21269 < 1e-5, "{}", v.value);
        let a = 50f64.to_radians();
        let line = Segment::Line {
            from: [0.0, 0.0],
            to: [3.0 * a.cos(), -3.0 * a.sin()],
        };
        // Material on top of the plate: the plate runs down-right, top is left.
        let pts = slide(&path(vec![line]), 1.0, 1.0, 0.5);
        assert!(((2.0 * pts.last().unwrap().1).sqrt() - v.value).abs() < 1e-9);
        assert!(straight_chute_speed(si(1.0), si(3.0), deg(20.0), 0.6, g()).is_none());
    }

    #[test]
    fn convex_arc_lifts_off_where_normal_force_vanishes() {
        // Over the top of a drum of radius 1 m, starting at the crown at
        // 1 m/s, frictionless: lift-off where cos(phi) = (v0^2 + 2gR)/(3gR).
        let arc = Segment::Arc {
            centre: [0.0, 0.0],
            radius: 1.0,
            from_angle: std::f64::consts::FRAC_PI_2,
            to_angle: 0.0,
        };
        let eq = SlideEquation {
            seg: arc,
            side: 1.0,
            mu: 0.0,
            g: 9.81,
        };
        let run = integrate(
            &|s, u| eq.rate(s, u),
            &|s, u| (eq.normal_force(s, u) < 0.0).then_some(Stop::LiftOff),
            0.0,
            arc.length(),
            0.5,
            1e-11,
            0.05,
        );
        assert_eq!(run.stop, Stop::LiftOff);
        let phi = run.points.last().unwrap().0;
        let expect = ((1.0 + 2.0 * 9.81) / (3.0 * 9.81f64)).acos();
        assert!((phi - expect).abs() < 1e-7, "{phi} {expect}");
    }

    #[test]
    fn shallow_plate_stalls_where_the_formula_says() {
        let a = 10f64.to_radians();
        let line = Segment::Line {
            from: [0.0, 0.0],
            to: [5.0 * a.cos(), -5.0 * a.sin()],
        };
        let eq = SlideEquation {
            seg: line,
            side: 1.0,
            mu: 0.6,
            g: 9.81,
        };
        let run = integrate(
            &|s, u| eq.rate(s, u),
            &|_, u| (u <= 0.0).then_some(Stop::Stall),
            0.0,
            5.0,
            0.5 * 2.0 * 2.0,
            1e-11,
            0.05,
        );
        assert_eq!(run.stop, Stop::Stall);
        let expect = 4.0 / (2.0 * 9.81 * (0.6 * a.cos() - a.sin()));
        assert!((run.points.last().unwrap().0 - expect).abs() < 1e-7);
    }

    #[test]
    fn exit_components_in_line_and_across() {
        let v = [3.0, -1.0];
        let (a, n, c) = exit_components(v, deg(0.0), deg(0.0));
        assert!((a - 3.0).abs() < 1e-12 && (n - 1.0).abs() < 1e-12 && c.abs() < 1e-12);
        let (a, n, c) = exit_components(v, deg(90.0), deg(0.0));
        assert!(a.abs() < 1e-12 && (n - 1.0).abs() < 1e-12 && (c + 3.0).abs() < 1e-12);
        // The three components always make up the whole speed.
        let (a, n, c) = exit_components(v, deg(30.0), deg(12.0));
        assert!((a * a + n * n + c * c - 10.0).abs() < 1e-12);
    }
}
