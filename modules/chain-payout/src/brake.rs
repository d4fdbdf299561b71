//! Chain with an end load paid out through a braked wheel: an anchor let go
//! from a windlass, a counterweight chain, a load lowered on chain.
//!
//! The wheel is at the top; the paid-out length `x` hangs vertically below
//! it with the end mass `M` on it; links come from the locker. With links
//! picked up from rest in the locker, `d/dt[(M + λx) v] = W(x) − F_b − F_D`,
//! so `(M + λx) dv/dt = W(x) − λ v² − F_b − F_D` (reference sheet §3.4,
//! DERIVED, not a published formula). Owns no state.

use crate::ode::{integrate, Ending, Event, OdeError, Tolerance};
use packwright_api::prelude::*;

/// The chain, its end load and the brake.
#[derive(Debug, Clone, Copy)]
pub struct BrakedChain {
    /// Chain mass per length `λ`.
    pub lambda: LinearMassDensity,
    /// End mass `M` (anchor, counterweight, load).
    pub end_mass: Mass,
    /// Weight fraction left in water, `1 − ρ_w/ρ_s` (1 in air).
    pub submerged_factor: f64,
    /// Length below the wheel that is in air before the water starts (the
    /// whole run is in air when `submerged_factor` is 1).
    pub freeboard: Length,
    /// Brake force at the chain while the brake slips.
    pub brake_force: Force,
    /// When the brake is applied: at a paid-out length or at a chain speed.
    pub brake_at: BrakePoint,
    /// Whether links are picked up from rest in the locker (costing `λ v²`).
    pub locker_pickup: bool,
    /// Quadratic drag factor `c` in `F_D = c v²` (`½ ρ C_D A`).
    pub drag_factor: LinearMassDensity,
    /// Paid-out length at which the run ends: the end load reaches the sea
    /// bed (or landing) or the chain's bitter end reaches the wheel.
    pub end_length: Length,
    /// Gravity.
    pub g: Acceleration,
}

/// When the brake is applied during the let-go.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum BrakePoint {
    /// Once this length has been paid out (0: on from the start).
    Length(Length),
    /// At the first instant the chain speed reaches this speed (0: on from
    /// the start). If the free run never gets that fast the brake is never
    /// applied.
    Speed(Velocity),
}

impl BrakePoint {
    /// Whether the brake is on from the release.
    pub fn from_start(&self) -> bool {
        match self {
            BrakePoint::Length(x) => x.to_si() <= 0.0,
            BrakePoint::Speed(v) => v.to_si() <= 0.0,
        }
    }
}

/// The weight of the end mass and of the hanging chain at paid-out length
/// `x`, submerged below the freeboard:
/// `W = g [M k_M + λ (min(x, f) + k max(0, x − f))]`, `k_M = k` once
/// `x > f`. Archimedes; the end mass is taken as steel like the chain.
pub fn hanging_weight(c: &BrakedChain, x: Length) -> Force {
    let (x, f, k) = (x.to_si(), c.freeboard.to_si(), c.submerged_factor);
    let anchor = c.end_mass.to_si() * if x > f { k } else { 1.0 };
    let chain = c.lambda.to_si() * (x.min(f) + k * (x - f).max(0.0));
    si(c.g.to_si() * (anchor + chain))
}

/// Potential energy released (including the buoyancy potential) while the
/// paid-out length goes from 0 to `x`: `∫₀ˣ W dx'`, in closed form.
pub fn weight_work(c: &BrakedChain, x: Length) -> Energy {
    let (x, f, k) = (x.to_si(), c.freeboard.to_si(), c.submerged_factor);
    let m = c.end_mass.to_si();
    let lambda = c.lambda.to_si();
    let (air, wet) = (x.min(f), (x - f).max(0.0));
    let anchor = m * (air + k * wet);
    let chain_air = if x <= f {
        x * x / 2.0
    } else {
        f * f / 2.0 + f * (x - f)
    };
    let chain = lambda * (chain_air + k * wet * wet / 2.0);
    si(c.g.to_si() * (anchor + chain))
}

/// How a braked run ended.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum BrakeEnding {
    /// The brake stopped the chain.
    Stopped,
    /// The end load reached the sea bed or the bitter end reached the wheel
    /// while the chain was still running.
    ReachedEnd,
    /// The brake, applied from the start, holds the end load: nothing moves.
    HeldFromStart,
}

/// One instant of the run.
#[derive(Debug, Clone, Copy)]
pub struct BrakeSample {
    /// Time from release.
    pub time: Time,
    /// Paid-out length.
    pub paid_out: Length,
    /// Chain speed.
    pub speed: Velocity,
    /// Chain tension on the outboard side of the wheel, `F_b + λ v²`.
    pub tension: Force,
    /// Brake force acting.
    pub brake: Force,
}

/// The result of a braked run.
#[derive(Debug, Clone)]
pub struct BrakeRun {
    /// Every accepted integration step.
    pub samples: Vec<BrakeSample>,
    /// How it ended.
    pub ending: BrakeEnding,
    /// The instant the brake was applied, if it was before the end.
    pub applied: Option<BrakeSample>,
    /// The last instant (stop, or the end of the chain or drop).
    pub end: BrakeSample,
    /// Largest speed.
    pub max_speed: Velocity,
    /// Largest outboard chain tension, the static hold after a stop included.
    pub peak_tension: Force,
    /// Largest load on the brake: the slipping force, or the static hold.
    pub peak_brake_load: Force,
    /// Energy absorbed by the brake, `∫ F_b v dt`.
    pub brake_energy: Energy,
    /// Energy dissipated picking links up in the locker, `∫ ½ λ v³ dt`.
    pub pickup_energy: Energy,
    /// Energy dissipated by drag, `∫ c v³ dt`.
    pub drag_energy: Energy,
    /// Energy supplied to bring links to speed when they are not picked up
    /// from rest (the feed), `∫ ½ λ v³ dt`.
    pub feed_energy: Energy,
    /// Potential energy released.
    pub potential: Energy,
    /// Kinetic energy at the end, `½ (M + λ x) v²`.
    pub kinetic: Energy,
}

/// Integrates the let-go: free run to `brake_at`, then the brake slips at
/// `brake_force` until the chain stops or the run reaches `end_length`.
///
/// The application point is a terminal event of the integration (paid-out
/// length, or chain speed rising through the set speed), located by regula
/// falsi on the integrator's own step, so the state at application carries
/// the integration accuracy and no interpolation error.
pub fn let_go(c: &BrakedChain, tol: &Tolerance) -> Result<BrakeRun, OdeError> {
    let lambda = c.lambda.to_si();
    let m = c.end_mass.to_si();
    let fb = c.brake_force.to_si();
    let x_end = c.end_length.to_si();
    let cd = c.drag_factor.to_si();
    let pickup = if c.locker_pickup { 1.0 } else { 0.0 };
    let weight = |x: f64| hanging_weight(c, si(x)).to_si();

    // State: [x, v, E_brake, E_pickup, E_drag, E_feed].
    let rhs = |braking: bool| {
        move |_t: f64, s: &[f64; 6]| -> [f64; 6] {
            let (x, v) = (s[0], s[1]);
            let f = if braking { fb } else { 0.0 };
            let a = (weight(x) - pickup * lambda * v * v - f - cd * v * v) / (m + lambda * x);
            let v3 = v * v * v;
            [
                v,
                a,
                f * v,
                pickup * 0.5 * lambda * v3,
                cd * v3,
                (1.0 - pickup) * 0.5 * lambda * v3,
            ]
        }
    };
    let sample = |t: f64, s: &[f64; 6], braking: bool| -> BrakeSample {
        let f = if braking { fb } else { 0.0 };
        BrakeSample {
            time: si(t),
            paid_out: si(s[0]),
            speed: si(s[1]),
            tension: si(f + pickup * lambda * s[1] * s[1]),
            brake: si(f),
        }
    };
    let point = c.brake_at;
    let ev_apply = move |_t: f64, s: &[f64; 6]| match point {
        BrakePoint::Length(x_a) => s[0] - x_a.to_si(),
        BrakePoint::Speed(v_a) => s[1] - v_a.to_si(),
    };
    let ev_end = |_t: f64, s: &[f64; 6]| s[0] - x_end;
    let ev_stop = |_t: f64, s: &[f64; 6]| -s[1];

    let mut samples = Vec::new();
    let mut state = [0.0; 6];
    let mut t = 0.0;
    let mut applied = None;
    let mut ending = BrakeEnding::ReachedEnd;
    let braking_from_start = c.brake_at.from_start();
    if braking_from_start && fb >= weight(0.0) {
        let s = sample(0.0, &state, true);
        samples.push(s);
        ending = BrakeEnding::HeldFromStart;
        applied = Some(s);
    } else {
        let mut braking = braking_from_start;
        if braking {
            applied = Some(sample(0.0, &state, true));
        }
        loop {
            let f = rhs(braking);
            let mut record = |tt: f64, s: &[f64; 6]| samples.push(sample(tt, s, braking));
            let events: Vec<Event<'_, 6>> = if braking {
                vec![&ev_end, &ev_stop]
            } else {
                vec![&ev_end, &ev_apply]
            };
            let (t1, s1, end) = integrate(&f, t, state, f64::MAX, &events, tol, &mut record)?;
            t = t1;
            state = s1;
            match (braking, end) {
                (_, Ending::Event(0)) | (_, Ending::EndTime) => break,
                (true, Ending::Event(_)) => {
                    // The event is located to round-off; the chain is at rest.
                    state[1] = 0.0;
                    if let Some(last) = samples.last_mut() {
                        *last = sample(t, &state, true);
                    }
                    ending = BrakeEnding::Stopped;
                    break;
                }
                (false, Ending::Event(_)) => {
                    braking = true;
                    let s = sample(t, &state, true);
                    applied = Some(s);
                    samples.push(s);
                }
            }
        }
    }
    let braking_at_end = applied.is_some();
    let end = sample(t, &state, braking_at_end);
    let max_speed = samples.iter().map(|s| s.speed.to_si()).fold(0.0, f64::max);
    let mut peak_tension = samples
        .iter()
        .map(|s| s.tension.to_si())
        .fold(0.0, f64::max);
    let mut peak_brake = samples.iter().map(|s| s.brake.to_si()).fold(0.0, f64::max);
    if ending != BrakeEnding::ReachedEnd {
        // Once stopped the brake holds the hanging weight statically.
        let hold = weight(state[0]);
        peak_tension = peak_tension.max(hold);
        peak_brake = if ending == BrakeEnding::HeldFromStart {
            hold
        } else {
            peak_brake.max(hold)
        };
    }
    let x = state[0];
    Ok(BrakeRun {
        samples,
        ending,
        applied,
        end,
        max_speed: si(max_speed),
        peak_tension: si(peak_tension),
        peak_brake_load: si(peak_brake),
        brake_energy: si(state[2]),
        pickup_energy: si(state[3]),
        drag_energy: si(state[4]),
        feed_energy: si(state[5]),
        potential: weight_work(c, si(x)),
        kinetic: si(0.5 * (m + lambda * x) * state[1] * state[1]),
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    fn in_air(fb: f64, brake_at: f64, pickup: bool, end: f64) -> BrakedChain {
        BrakedChain {
            lambda: si(50.0),
            end_mass: si(1000.0),
            submerged_factor: 1.0,
            freeboard: si(0.0),
            brake_force: si(fb),
            brake_at: BrakePoint::Length(si(brake_at)),
            locker_pickup: pickup,
            drag_factor: si(0.0),
            end_length: si(end),
            g: si(9.81),
        }
    }
    fn rel(a: f64, b: f64) -> f64 {
        (a - b).abs() / b.abs()
    }

    #[test]
    fn braked_let_go_matches_the_hand_calculation() {
        // Hand calculation (DERIVED from the momentum equation of reference
        // sheet §3.4), in air, no drag, links picked up from rest:
        //   M = 1000 kg, λ = 50 kg/m, g = 9.81 m/s², brake applied at 10 m.
        // With m = M + λx and u = v²/2, (M + λx) v dv/dx = m g − λ v² − F_b
        // becomes d(m² u)/dx = m (m g − F_b), so with dm = λ dx:
        //   free run:  m² u = g (m³ − M³) / (3 λ)
        //   at 10 m:   m_a = 1500 kg,
        //              u_a = 9.81 × (1500³ − 1000³) / (3 × 50 × 1500²)
        //                  = 9.81 × 2.375e9 / 3.375e8 = 69.0333 m²/s²
        //              v_a = sqrt(2 × 69.0333) = 11.7503 m/s
        //   braking:   m² u = [g (m³ − m_a³)/3 − F_b (m² − m_a²)/2]/λ + m_a² u_a
        //   choose the stop at 20 m (m_s = 2000 kg, u = 0):
        //     F_b = 2 g (m_s³ − M³) / (3 (m_s² − m_a²))
        //         = 2 × 9.81 × 7e9 / (3 × 1.75e6) = 26 160 N
        //   stopping length 20 − 10 = 10 m; brake energy 26 160 × 10 = 261.6 kJ
        //   potential released = g (M x + λ x²/2) = 9.81 × (20 000 + 10 000)
        //                      = 294.3 kJ, so pickup loss = 294.3 − 261.6 = 32.7 kJ
        //   peak chain tension at the wheel = F_b + λ v_a² = 26 160 + 50 × 138.0667
        //                                   = 33 063.3 N (at the brake's application)
        //   static hold after the stop = 2000 × 9.81 = 19 620 N < F_b.
        let c = in_air(26_160.0, 10.0, true, 100.0);
        let run = let_go(&c, &Tolerance::default()).unwrap();
        assert_eq!(run.ending, BrakeEnding::Stopped);
        let applied = run.applied.unwrap();
        assert!(
            rel(
                applied.speed.to_si(),
                (2.0 * 9.81 * 2.375e9 / 3.375e8_f64).sqrt()
            ) < 1e-8
        );
        assert!(rel(run.end.paid_out.to_si(), 20.0) < 1e-8);
        assert!(rel(run.brake_energy.to_si(), 261_600.0) < 1e-8);
        assert!(rel(run.potential.to_si(), 294_300.0) < 1e-8);
        assert!(rel(run.pickup_energy.to_si(), 32_700.0) < 1e-6);
        assert!(
            rel(
                run.peak_tension.to_si(),
                26_160.0 + 50.0 * 2.0 * 9.81 * 2.375e9 / 3.375e8
            ) < 1e-8
        );
        assert!(rel(run.peak_brake_load.to_si(), 26_160.0) < 1e-12);
    }

    #[test]
    fn brake_applied_at_a_speed_matches_the_hand_calculation() {
        // Hand calculation (DERIVED from the momentum equation of reference
        // sheet §3.4), in air, no drag, links not picked up from rest, so
        // (M + λx) dv/dt = (M + λx) g − F_b:
        //   free run:  dv/dt = g, a free fall whatever M and λ;
        //   set speed v_b = 9.81 m/s with g = 9.81 m/s²:
        //     reached after t_b = v_b / g = 1 s,
        //     at x_b = v_b² / (2 g) = 96.2361 / 19.62 = 4.905 m.
        //   braking:   v dv/dx = g − F_b / (M + λx), so with u = v²/2
        //     u = v_b²/2 + g (x − x_b) − (F_b/λ) ln[(M + λx)/(M + λx_b)]
        //   M = 1000 kg, λ = 50 kg/m; choose the stop 10 m after x_b:
        //     m_b = 1000 + 50 × 4.905 = 1245.25 kg,
        //     m_s = 1000 + 50 × 14.905 = 1745.25 kg,
        //     ln(m_s/m_b) = ln(1.4015258) = 0.3375615,
        //     F_b = λ (v_b²/2 + g × 10) / ln(m_s/m_b)
        //         = 50 × (48.11805 + 98.1) / 0.3375615 = 21 657.987 N
        //   brake energy = F_b × 10 m = 216.580 kJ.
        let fb = 50.0 * (9.81f64 * 9.81 / 2.0 + 98.1) / (1745.25f64 / 1245.25).ln();
        assert!((fb - 21_657.987).abs() < 1e-3);
        let c = BrakedChain {
            brake_at: BrakePoint::Speed(si(9.81)),
            ..in_air(fb, 0.0, false, 100.0)
        };
        let run = let_go(&c, &Tolerance::default()).unwrap();
        assert_eq!(run.ending, BrakeEnding::Stopped);
        let a = run.applied.unwrap();
        assert!(rel(a.speed.to_si(), 9.81) < 1e-10);
        assert!(rel(a.time.to_si(), 1.0) < 1e-9);
        assert!(rel(a.paid_out.to_si(), 4.905) < 1e-9);
        assert!(rel(run.end.paid_out.to_si(), 14.905) < 1e-8);
        assert!(rel(run.brake_energy.to_si(), fb * 10.0) < 1e-7);
        assert!(rel(run.peak_brake_load.to_si(), fb) < 1e-12);
        // Without pickup the wheel-side tension is the brake force alone.
        assert!(rel(run.peak_tension.to_si(), fb) < 1e-12);
    }

    #[test]
    fn a_speed_that_is_never_reached_leaves_the_brake_off() {
        // Drag c v² bounds the free-run speed: without pickup the terminal
        // speed is sqrt((M + λx) g / c) = sqrt(1500 × 9.81 / 1000) = 3.836
        // m/s at most over the 10 m run (DERIVED), below the set 5 m/s.
        let c = BrakedChain {
            brake_at: BrakePoint::Speed(si(5.0)),
            drag_factor: si(1000.0),
            ..in_air(50_000.0, 0.0, false, 10.0)
        };
        let run = let_go(&c, &Tolerance::default()).unwrap();
        assert_eq!(run.ending, BrakeEnding::ReachedEnd);
        assert!(run.applied.is_none());
        assert!(run.max_speed.to_si() < (1500.0f64 * 9.81 / 1000.0).sqrt());
        assert_eq!(run.brake_energy.to_si(), 0.0);
    }

    #[test]
    fn the_speed_form_and_the_length_form_agree() {
        // The let-go is deterministic: braking at the length where the speed
        // form applied the brake must give the same run afterwards.
        let base = BrakedChain {
            submerged_factor: 1.0 - 1025.0 / 7850.0,
            freeboard: si(4.0),
            drag_factor: si(30.0),
            ..in_air(40_000.0, 0.0, true, 80.0)
        };
        let by_speed = BrakedChain {
            brake_at: BrakePoint::Speed(si(8.0)),
            ..base
        };
        let run_v = let_go(&by_speed, &Tolerance::default()).unwrap();
        let a = run_v.applied.unwrap();
        assert!(rel(a.speed.to_si(), 8.0) < 1e-10);
        let by_length = BrakedChain {
            brake_at: BrakePoint::Length(a.paid_out),
            ..base
        };
        let run_x = let_go(&by_length, &Tolerance::default()).unwrap();
        assert_eq!(run_v.ending, BrakeEnding::Stopped);
        assert_eq!(run_x.ending, BrakeEnding::Stopped);
        assert!(rel(run_x.applied.unwrap().speed.to_si(), 8.0) < 1e-8);
        assert!(rel(run_x.end.paid_out.to_si(), run_v.end.paid_out.to_si()) < 1e-8);
        assert!(rel(run_x.brake_energy.to_si(), run_v.brake_energy.to_si()) < 1e-8);
    }

    #[test]
    fn free_fall_without_pickup_is_the_upper_bound() {
        // Reference sheet §3.4 check: free-fall speed after 10 m (no drag,
        // no pickup) = 14.007 m/s with g = 9.81; the pickup term lowers it
        // toward Cayley's g/3 behaviour (DERIVED, closed form above with
        // F_b = 0: v² = 2 g (m³ − M³)/(3 λ m²)).
        let c = in_air(0.0, 100.0, false, 10.0);
        let run = let_go(&c, &Tolerance::default()).unwrap();
        assert_eq!(run.ending, BrakeEnding::ReachedEnd);
        assert!(rel(run.end.speed.to_si(), 14.007) < 1e-4);
        let c = in_air(0.0, 100.0, true, 10.0);
        let run = let_go(&c, &Tolerance::default()).unwrap();
        let m = 1500.0f64;
        let v2 = 2.0 * 9.81 * (m.powi(3) - 1e9) / (3.0 * 50.0 * m * m);
        assert!(rel(run.end.speed.to_si(), v2.sqrt()) < 1e-9);
        assert!(run.end.speed.to_si() < 14.007);
    }

    #[test]
    fn a_weak_brake_does_not_stop_the_chain() {
        // F_b = 15 kN is less than the 19.6 kN hanging weight at 20 m: the
        // chain still runs when the 40 m end is reached.
        let c = in_air(15_000.0, 10.0, true, 40.0);
        let run = let_go(&c, &Tolerance::default()).unwrap();
        assert_eq!(run.ending, BrakeEnding::ReachedEnd);
        assert!(run.end.speed.to_si() > 0.0);
        assert!(rel(run.end.paid_out.to_si(), 40.0) < 1e-9);
    }

    #[test]
    fn a_brake_on_from_the_start_may_hold_the_load() {
        let c = in_air(10_000.0, 0.0, true, 40.0);
        let run = let_go(&c, &Tolerance::default()).unwrap();
        assert_eq!(run.ending, BrakeEnding::HeldFromStart);
        assert!(rel(run.peak_brake_load.to_si(), 9810.0) < 1e-12);
        assert_eq!(run.end.paid_out.to_si(), 0.0);
    }

    #[test]
    fn submerged_weight_uses_buoyancy() {
        // Archimedes: steel 7850 kg/m³ in sea water 1025 kg/m³ keeps
        // 1 − 1025/7850 = 0.869427 of its weight.
        let k = 1.0 - 1025.0 / 7850.0;
        let c = BrakedChain {
            submerged_factor: k,
            freeboard: si(5.0),
            ..in_air(0.0, 100.0, true, 30.0)
        };
        let w = hanging_weight(&c, si(15.0)).to_si();
        let expect = 9.81 * (1000.0 * k + 50.0 * (5.0 + k * 10.0));
        assert!(rel(w, expect) < 1e-12);
        assert!(rel(hanging_weight(&c, si(4.0)).to_si(), 9.81 * (1000.0 + 200.0)) < 1e-12);
    }

    proptest! {
        #[test]
        fn energy_is_accounted_for(
            fb in 0.0f64..60_000.0, brake_at in 0.0f64..30.0, pickup in any::<bool>(),
            wet in any::<bool>(), freeboard in 0.0f64..10.0, drag in 0.0f64..40.0,
            end in 5.0f64..80.0, by_speed in any::<bool>(), brake_speed in 0.0f64..15.0,
        ) {
            // Potential released + feed = kinetic + brake + pickup + drag
            // (DERIVED balance of the equation of motion).
            let c = BrakedChain {
                submerged_factor: if wet { 1.0 - 1025.0 / 7850.0 } else { 1.0 },
                freeboard: si(freeboard),
                drag_factor: si(drag),
                brake_at: if by_speed {
                    BrakePoint::Speed(si(brake_speed))
                } else {
                    BrakePoint::Length(si(brake_at))
                },
                ..in_air(fb, brake_at, pickup, end)
            };
            let run = let_go(&c, &Tolerance::default()).unwrap();
            let input = run.potential + run.feed_energy;
            let out = run.kinetic + run.brake_energy + run.pickup_energy + run.drag_energy;
            let scale = input.to_si().abs().max(1.0);
            prop_assert!((input - out).to_si().abs() <= 1e-7 * scale);
            prop_assert!(run.peak_tension.to_si().is_finite());
            // The speed form applies the brake on the set speed.
            if let (true, Some(a)) = (by_speed && brake_speed > 0.0, run.applied) {
                prop_assert!((a.speed.to_si() - brake_speed).abs() <= 1e-9 * brake_speed.max(1.0));
            }
        }
    }
}
