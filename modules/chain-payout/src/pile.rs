//! Chain drawn off a resting pile, over a rim, falling to a lower landing:
//! the steady chain fountain of Biggins and Warner, Cayley's falling chain
//! and the start-up from rest integrated in time.
//!
//! Geometry: the pile surface is at z = 0, the rim (container edge, lip or
//! fairlead) at z = e >= 0 above it, the landing at z = −h. Links are picked
//! up from rest at the pile and come to rest again at the landing. Owns no
//! state.

use crate::ode::{integrate, Ending, Event, OdeError, Tolerance};
use packwright_api::prelude::*;

/// Cayley's acceleration of a chain drawn from a heap by its own hanging
/// part, generalised for a pile push `α`: `a = g / (3 − 2α)` (`g/3` for
/// `α = 0`).
///
/// Cayley (1857), FROM MEMORY (H) as the standard result (reference sheet
/// §3.1); the `α` form is DERIVED from `x ẍ + (1 − α) ẋ² = g x` with the
/// trial solution `v² = k g x`.
pub fn cayley_acceleration(alpha: f64, g: Acceleration) -> Acceleration {
    g / (3.0 - 2.0 * alpha)
}

/// Speed of the hanging part of a chain drawn from a heap with links picked
/// up inelastically, after it has grown from `x0` to `x`:
/// `v² = 2g/(3 − 2α) · (x^(3−2α) − x0^(3−2α)) / x^(2−2α)`;
/// for `α = 0` this is Cayley's `v² = (2g/3)(x³ − x0³)/x²`.
///
/// Cayley (1857), reference sheet §3.1, FROM MEMORY (H); the `α` form is
/// DERIVED (integrating factor `x^(2(1−α))`).
pub fn cayley_speed(x: Length, x0: Length, alpha: f64, g: Acceleration) -> Velocity {
    let n = 3.0 - 2.0 * alpha;
    let (x, x0) = (x.to_si(), x0.to_si());
    let v2 = 2.0 * g.to_si() / n * (x.powf(n) - x0.powf(n)) / x.powf(n - 1.0);
    si(v2.max(0.0).sqrt())
}

/// The capstan ratio `e^(μ θ)` of friction over a rim of wrap angle `θ`.
///
/// Euler–Eytelwein (capstan) equation, standard. For a moving chain it
/// applies to the effective tension `T − λ v²`, because the part `λ v²` of
/// the tension turns the links round the rim without pressing on it (the
/// centrifugal-tension correction used for belt drives).
pub fn capstan_ratio(mu: f64, wrap: Angle) -> f64 {
    (mu * wrap.to_si()).exp()
}

/// Steady fountain speed with the chain free of the rim:
/// `v² = g h / (1 − α − β)`, from `(1 − β) v² = g (h + h_2)` and
/// `h_2 = α v²/g`.
///
/// Biggins & Warner, Proc. R. Soc. A 470: 20130689 (2014); equations FROM
/// MEMORY (M) and re-DERIVED (reference sheet §3.2).
pub fn fountain_speed(drop: Length, alpha: f64, beta: f64, g: Acceleration) -> Velocity {
    let v2 = g.to_si() * drop.to_si() / (1.0 - alpha - beta);
    si(v2.sqrt())
}

/// Rise of the fountain's apex above the pile, `h_2 = α v² / g`
/// (Biggins & Warner 2014, reference sheet §3.2, FROM MEMORY (M), DERIVED).
pub fn fountain_rise(speed: Velocity, alpha: f64, g: Acceleration) -> Length {
    alpha * speed * speed / g
}

/// Whether the moving chain rides on the rim or arcs clear of it.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Regime {
    /// The chain arcs clear of the rim (a fountain); rim friction does not act.
    Free,
    /// The chain bears on the rim and rim friction acts.
    OnRim,
}

/// The chain and its path for the pile case.
#[derive(Debug, Clone, Copy)]
pub struct PileChain {
    /// Mass per length `λ`.
    pub lambda: LinearMassDensity,
    /// Drop `h` from the pile surface to the landing.
    pub drop: Length,
    /// Height `e` of the rim above the pile surface (0: at the pile surface).
    pub rim_height: Length,
    /// Pile push `α`: the pile supplies `α λ v²` to the link being lifted.
    pub alpha: f64,
    /// Landing push `β`: the tension at the landing is `β λ v²`.
    pub beta: f64,
    /// Capstan ratio `e^(μθ)` over the rim.
    pub capstan: f64,
    /// Gravity.
    pub g: Acceleration,
}

/// The steady running state.
#[derive(Debug, Clone, Copy)]
pub struct SteadyState {
    /// Steady speed `v`.
    pub speed: Velocity,
    /// Height of the chain's highest point above the pile surface.
    pub rise: Length,
    /// Whether the chain arcs free or rides on the rim.
    pub regime: Regime,
    /// Tension just above the pile, `(1 − α) λ v²`.
    pub pickup_tension: Force,
    /// Pile reaction on the link being lifted, `α λ v²`.
    pub pile_reaction: Force,
    /// Tension at the top of the falling leg (the largest in the chain).
    pub top_tension: Force,
    /// Tension where the chain meets the landing, `β λ v²`.
    pub landing_tension: Force,
    /// Power dissipated, `λ g h v`: all the potential energy released,
    /// since the chain starts and ends at rest.
    pub dissipated_power: Power,
}

/// Why no steady running state exists.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Stalls {
    /// The falling leg's weight per unit `λ g`, `e + h`.
    pub falling_leg: Length,
    /// The rim side's resisting length `e · e^(μθ)`.
    pub held_by_rim: Length,
}

/// The steady state of a chain drawn off a pile over a rim.
///
/// With the effective tension `S = T − λv²`: `S = −α λ v²` at the pile,
/// `S` grows by `λ g` per metre of rise, is multiplied by `e^(μθ)` over the
/// rim where it is positive (the chain presses on the rim) and is
/// `−(1 − β) λ v²` at the landing. Free of the rim this gives Biggins and
/// Warner's `v² = g h / (1 − α − β)`, `h_2 = α v²/g` (reference sheet §3.2,
/// FROM MEMORY (M), DERIVED). On the rim (`e >= α v²/g`) it gives
/// `v² (1 − β − α E) = g (h − e (E − 1))`, `E = e^(μθ)` (DERIVED here).
/// When `h <= e (E − 1)` the rim holds the chain and there is no running
/// state.
pub fn steady_state(p: &PileChain) -> Result<SteadyState, Stalls> {
    let (g, h, e) = (p.g.to_si(), p.drop.to_si(), p.rim_height.to_si());
    let (alpha, beta, big_e) = (p.alpha, p.beta, p.capstan);
    let lambda = p.lambda.to_si();
    let v_free = fountain_speed(p.drop, alpha, beta, p.g).to_si();
    let rise_free = alpha * v_free * v_free / g;
    let (v2, regime, rise) = if e <= rise_free || (e == 0.0) {
        (v_free * v_free, Regime::Free, rise_free)
    } else {
        let num = g * (h - e * (big_e - 1.0));
        if num <= 0.0 {
            return Err(Stalls {
                falling_leg: si(e + h),
                held_by_rim: si(e * big_e),
            });
        }
        // With e > α v_free²/g the on-rim branch has a positive slope, so
        // its root is unique and lies below g e / α (see the doc comment).
        let den = 1.0 - beta - alpha * big_e;
        (num / den, Regime::OnRim, e)
    };
    let v = v2.sqrt();
    let s_top = match regime {
        Regime::Free => 0.0,
        Regime::OnRim => big_e * (g * e - alpha * v2),
    };
    Ok(SteadyState {
        speed: si(v),
        rise: si(rise),
        regime,
        pickup_tension: si((1.0 - alpha) * lambda * v2),
        pile_reaction: si(alpha * lambda * v2),
        top_tension: si(lambda * (v2 + s_top)),
        landing_tension: si(beta * lambda * v2),
        dissipated_power: si(lambda * g * h * v),
    })
}

/// One instant of the start-up.
#[derive(Debug, Clone, Copy)]
pub struct Sample {
    /// Time from release.
    pub time: Time,
    /// Length drawn off the pile since release.
    pub paid_out: Length,
    /// Chain speed.
    pub speed: Velocity,
    /// Tension at the top of the falling leg (the largest in the chain).
    pub tension: Force,
}

/// How the start-up ended.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum StartEnding {
    /// The payout length has left the pile.
    PaidOut,
    /// The overhang is too short to pull the chain over the rim. (Once
    /// started the chain cannot stall: the falling leg only grows, and it
    /// already outweighed the rim side at rest.)
    DoesNotStart,
}

/// Energy account of the start-up, from release to its end.
#[derive(Debug, Clone, Copy)]
pub struct EnergyAccount {
    /// Potential energy released.
    pub potential: Energy,
    /// Kinetic energy of the moving chain at the end.
    pub kinetic: Energy,
    /// Dissipated picking links up from rest, `∫ (1/2 − α) λ v³ dt`.
    pub pickup: Energy,
    /// Dissipated by rim friction.
    pub rim: Energy,
    /// Dissipated at the landing, `∫ (1/2 − β) λ v³ dt`.
    pub landing: Energy,
}

/// The start-up from rest.
#[derive(Debug, Clone)]
pub struct StartUp {
    /// Every accepted integration step, first and last included.
    pub samples: Vec<Sample>,
    /// The instant the falling end reached the landing, if it did.
    pub landing: Option<Sample>,
    /// The last instant.
    pub end: Sample,
    /// How it ended.
    pub ending: StartEnding,
    /// Largest speed.
    pub max_speed: Velocity,
    /// Largest tension.
    pub max_tension: Force,
    /// Energy account at the end.
    pub energy: EnergyAccount,
    /// Whether the start was Cayley's singular one (no overhang, rim at the
    /// pile surface), begun on the exact small-length solution.
    pub singular_start: bool,
}

/// Per unit λ: acceleration, effective tension into and out of the rim.
fn accel(p: &PileChain, y: f64, landed: bool, v: f64) -> (f64, f64, f64) {
    let (g, e, big_e) = (p.g.to_si(), p.rim_height.to_si(), p.capstan);
    let s0 = -p.alpha * v * v;
    let s_tip = if landed {
        (p.beta - 1.0) * v * v
    } else {
        -v * v
    };
    if e > 0.0 && big_e > 1.0 {
        let a = (s_tip - big_e * s0 - big_e * g * e + g * y) / (y + big_e * e);
        let s_in = s0 + e * (g + a);
        if s_in > 0.0 {
            return (a, s_in, big_e * s_in);
        }
    }
    let a = (s_tip - s0 - g * e + g * y) / (y + e);
    let s_in = s0 + e * (g + a);
    (a, s_in, s_in)
}

/// Integrates the start-up from rest with the initial overhang `y0` (chain
/// hanging below the rim at release) until `payout` has left the pile.
///
/// The moving chain is the rising leg (length `e`) and the falling leg
/// (length `y`, growing until it reaches the landing at `y = e + h`). Along
/// it `λ a = ∂S/∂s − λ g ∂z/∂s`, so for the whole moving chain
/// `λ (e + y) dv/dt = λ g (y − e) − (1 − α) λ v² + T_tip − F_rim`, with
/// `T_tip = 0` at a free end and `β λ v²` on the landing; with `e = 0` and
/// no friction this is the equation of issue 5 and of Cayley (reference
/// sheet §3.1). Rim friction follows [`capstan_ratio`]. The singular start
/// (`y0 = 0`, `e = 0`) begins on the exact solution `v² = 2 g y/(3 − 2α)`.
pub fn start_up(
    p: &PileChain,
    overhang: Length,
    payout: Length,
    tol: &Tolerance,
) -> Result<StartUp, OdeError> {
    let (g, h, e) = (p.g.to_si(), p.drop.to_si(), p.rim_height.to_si());
    let lambda = p.lambda.to_si();
    let y_land = e + h;
    let y0 = overhang.to_si();
    let payout = payout.to_si();
    let (alpha, beta) = (p.alpha, p.beta);

    // Configuration: y falling-leg length and deposited length from q.
    let config = move |q: f64| {
        let total = y0 + q;
        if total >= y_land {
            (y_land, total - y_land)
        } else {
            (total, 0.0)
        }
    };
    // Potential energy released relative to the whole chain lying on the
    // pile (z = 0): rising leg from 0 to e, falling leg from e down to
    // e − y, deposit at −h.
    let released = move |q: f64| {
        let (y, dep) = config(q);
        lambda * g * (-e * e / 2.0 - (e * y - y * y / 2.0) + dep * h)
    };
    let pe_of = move |q: f64| released(q) - released(0.0);

    let sample = |t: f64, s: &[f64; 5], landed: bool| -> Sample {
        let (y, _) = config(s[0]);
        let (_, _, s_out) = accel(p, y, landed, s[1]);
        Sample {
            time: si(t),
            paid_out: si(s[0]),
            speed: si(s[1]),
            tension: si(lambda * (s[1] * s[1] + s_out.max(0.0))),
        }
    };

    // Initial state [q, v, D_pickup, D_rim, D_landing] (dissipation per λ).
    let mut t0 = 0.0;
    let mut state = [0.0; 5];
    let singular = y0 == 0.0 && e == 0.0;
    if singular {
        let a = g / (3.0 - 2.0 * alpha);
        let ys = 1e-9 * y_land.min(payout);
        state[0] = ys;
        state[1] = (2.0 * a * ys).sqrt();
        t0 = (2.0 * ys / a).sqrt();
        // PE released λ g ys²/2 minus KE λ a ys² all went to pickup.
        state[2] = g * ys * ys / 2.0 - a * ys * ys;
    } else {
        let (y, _) = config(0.0);
        let (a, _, _) = accel(p, y, y0 >= y_land, 0.0);
        if a <= 0.0 {
            let s = sample(0.0, &state, y0 >= y_land);
            return Ok(StartUp {
                samples: vec![s],
                landing: None,
                end: s,
                ending: StartEnding::DoesNotStart,
                max_speed: si(0.0),
                max_tension: s.tension,
                energy: EnergyAccount {
                    potential: si(0.0),
                    kinetic: si(0.0),
                    pickup: si(0.0),
                    rim: si(0.0),
                    landing: si(0.0),
                },
                singular_start: false,
            });
        }
    }

    let rhs = |landed: bool| {
        move |_t: f64, s: &[f64; 5]| -> [f64; 5] {
            let (y, _) = config(s[0]);
            let v = s[1];
            let (a, s_in, s_out) = accel(p, y, landed, v);
            let v3 = v * v * v;
            [
                v,
                a,
                (0.5 - alpha) * v3,
                (s_out - s_in) * v,
                if landed { (0.5 - beta) * v3 } else { 0.0 },
            ]
        }
    };
    let ev_land = |_t: f64, s: &[f64; 5]| y0 + s[0] - y_land;
    let ev_paid = |_t: f64, s: &[f64; 5]| s[0] - payout;

    let mut samples = Vec::new();
    let mut landing = None;
    let mut t = t0;
    let mut landed = y0 >= y_land;
    loop {
        let f = rhs(landed);
        let mut record = |tt: f64, s: &[f64; 5]| samples.push(sample(tt, s, landed));
        let events: Vec<Event<'_, 5>> = if landed {
            vec![&ev_paid]
        } else {
            vec![&ev_paid, &ev_land]
        };
        let (t1, s1, end) = integrate(&f, t, state, f64::MAX, &events, tol, &mut record)?;
        t = t1;
        state = s1;
        match end {
            Ending::Event(0) | Ending::EndTime => break,
            Ending::Event(_) => {
                landed = true;
                landing = Some(sample(t, &state, true));
                // The sample at the event was recorded by the integrator;
                // the next phase records the same instant again.
                samples.pop();
            }
        }
    }
    let end = sample(t, &state, landed);
    let max_speed = samples.iter().map(|s| s.speed).fold(si(0.0), max_q);
    let max_tension = samples.iter().map(|s| s.tension).fold(si(0.0), max_q);
    let (y, _) = config(state[0]);
    let energy = EnergyAccount {
        potential: si(pe_of(state[0])),
        kinetic: si(0.5 * lambda * (e + y) * state[1] * state[1]),
        pickup: si(lambda * state[2]),
        rim: si(lambda * state[3]),
        landing: si(lambda * state[4]),
    };
    Ok(StartUp {
        samples,
        landing,
        end,
        ending: StartEnding::PaidOut,
        max_speed,
        max_tension,
        energy,
        singular_start: singular,
    })
}

fn max_q<Q: SiQuantity>(a: Q, b: Q) -> Q {
    if b.to_si() > a.to_si() {
        b
    } else {
        a
    }
}

/// The first time after which the speed stays within `band` (a fraction)
/// of `steady`, interpolated linearly between samples; `None` if the
/// start-up ends outside the band.
pub fn time_to_steady(samples: &[Sample], steady: Velocity, band: f64) -> Option<Time> {
    let vs = steady.to_si();
    let inside = |s: &Sample| (s.speed.to_si() - vs).abs() <= band * vs;
    let last = samples.last()?;
    if !inside(last) {
        return None;
    }
    let i = samples.iter().rposition(|s| !inside(s));
    match i {
        None => Some(samples[0].time),
        Some(i) => {
            let (a, b) = (&samples[i], &samples[i + 1]);
            let (va, vb) = (a.speed.to_si(), b.speed.to_si());
            let target = if va < vs {
                vs * (1.0 - band)
            } else {
                vs * (1.0 + band)
            };
            let w = if vb != va {
                ((target - va) / (vb - va)).clamp(0.0, 1.0)
            } else {
                1.0
            };
            Some(a.time + w * (b.time - a.time))
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    fn chain(lambda: f64, h: f64, e: f64, alpha: f64, beta: f64, capstan: f64) -> PileChain {
        PileChain {
            lambda: si(lambda),
            drop: si(h),
            rim_height: si(e),
            alpha,
            beta,
            capstan,
            g: si(9.81),
        }
    }
    fn rel(a: f64, b: f64) -> f64 {
        (a - b).abs() / b.abs()
    }

    #[test]
    fn cayley_falling_chain_reproduced() {
        // Reference sheet §3.1 check (Cayley 1857, FROM MEMORY (H)):
        // λ = 10 kg/m, x = 2 m, x0 = 0, g = 9.81: v = 3.61663 m/s,
        // t = 1.10600 s, ΔPE = 196.2 J, KE = 130.8 J, lost = 65.4 J.
        let p = chain(10.0, 2.0, 0.0, 0.0, 0.0, 1.0);
        let run = start_up(&p, si(0.0), si(5.0), &Tolerance::default()).unwrap();
        assert!(run.singular_start);
        let land = run.landing.unwrap();
        assert!(rel(land.speed.to_si(), 3.61663) < 1e-5);
        assert!(rel(land.time.to_si(), 1.10600) < 1e-5);
        // Tight against the closed forms v² = 2 g x / 3 and x = g t²/6.
        assert!(rel(land.speed.to_si(), (2.0 * 9.81 * 2.0 / 3.0f64).sqrt()) < 1e-9);
        assert!(rel(land.time.to_si(), (6.0 * 2.0 / 9.81f64).sqrt()) < 1e-9);
        assert!(rel(cayley_acceleration(0.0, si(9.81)).to_si(), 9.81 / 3.0) < 1e-12);
        // The acceleration between any two samples before landing is g/3.
        let pre: Vec<_> = run
            .samples
            .iter()
            .filter(|s| s.time.to_si() < land.time.to_si() - 1e-9)
            .collect();
        let (a, b) = (pre[pre.len() / 3], pre[2 * pre.len() / 3]);
        let acc = (b.speed - a.speed).to_si() / (b.time - a.time).to_si();
        assert!(rel(acc, 9.81 / 3.0) < 1e-8);
    }

    #[test]
    fn cayley_energy_split_at_landing() {
        // Reference sheet §3.1 (FROM MEMORY (H)): ΔPE 196.2 J = KE 130.8 J +
        // 65.4 J lost at pickup, one third of ΔPE. The run is stopped at
        // landing by making the payout equal to the drop.
        let p = chain(10.0, 2.0, 0.0, 0.0, 0.0, 1.0);
        let run = start_up(&p, si(0.0), si(2.0), &Tolerance::default()).unwrap();
        assert_eq!(run.ending, StartEnding::PaidOut);
        let e = run.energy;
        assert!(rel(e.potential.to_si(), 196.2) < 1e-8);
        assert!(rel(e.kinetic.to_si(), 130.8) < 1e-7);
        assert!(rel(e.pickup.to_si(), 65.4) < 1e-7);
    }

    #[test]
    fn cayley_with_overhang() {
        // Reference sheet §3.1: x0 = 0.5 m, x = 2 m -> v = 3.58826 m/s
        // (inelastic pickup), closed form v² = (2g/3)(x³ − x0³)/x².
        let p = chain(10.0, 2.0, 0.0, 0.0, 0.0, 1.0);
        let run = start_up(&p, si(0.5), si(3.0), &Tolerance::default()).unwrap();
        assert!(!run.singular_start);
        let land = run.landing.unwrap();
        assert!(rel(land.speed.to_si(), 3.58826) < 1e-5);
        let closed = cayley_speed(si(2.0), si(0.5), 0.0, si(9.81)).to_si();
        assert!(rel(land.speed.to_si(), closed) < 1e-9);
    }

    #[test]
    fn pile_push_gives_g_over_three_minus_two_alpha() {
        // DERIVED generalisation of Cayley (issue 5): a = g/(3 − 2α),
        // v² = 2 g x/(3 − 2α); and with an overhang the α closed form.
        let alpha = 0.2;
        let p = chain(1.0, 3.0, 0.0, alpha, 0.1, 1.0);
        let run = start_up(&p, si(0.0), si(5.0), &Tolerance::default()).unwrap();
        let land = run.landing.unwrap();
        let a = 9.81 / (3.0 - 2.0 * alpha);
        assert!(rel(land.speed.to_si(), (2.0 * a * 3.0).sqrt()) < 1e-9);
        assert!(rel(land.time.to_si(), (2.0 * 3.0 / a).sqrt()) < 1e-9);
        let run = start_up(&p, si(0.7), si(5.0), &Tolerance::default()).unwrap();
        let closed = cayley_speed(si(3.0), si(0.7), alpha, si(9.81)).to_si();
        assert!(rel(run.landing.unwrap().speed.to_si(), closed) < 1e-9);
    }

    #[test]
    fn after_landing_the_speed_follows_the_tanh_closed_form() {
        // DERIVED: with e = 0 and no friction, once the chain lies on the
        // landing, dv/dt = k (v_s² − v²), k = (1 − α − β)/h, so
        // v = v_s tanh(k v_s (t − t_L) + atanh(v_L / v_s)).
        let (h, alpha, beta) = (1.5, 0.12, 0.15);
        let p = chain(2.0, h, 0.0, alpha, beta, 1.0);
        let tol = Tolerance {
            max_step: 0.002,
            ..Tolerance::default()
        };
        let run = start_up(&p, si(0.0), si(12.0), &tol).unwrap();
        let land = run.landing.unwrap();
        let vs = fountain_speed(si(h), alpha, beta, si(9.81)).to_si();
        let k = (1.0 - alpha - beta) / h;
        let vl = land.speed.to_si();
        let end = run.end;
        let dt = (end.time - land.time).to_si();
        let closed = vs * (k * vs * dt + (vl / vs).atanh()).tanh();
        assert!(rel(end.speed.to_si(), closed) < 1e-8);
        let steady = steady_state(&p).unwrap();
        assert!(rel(steady.speed.to_si(), vs) < 1e-12);
        let tts = time_to_steady(&run.samples, steady.speed, 0.01).unwrap();
        // Closed-form time to reach 0.99 v_s after landing.
        let t99 = ((0.99f64).atanh() - (vl / vs).atanh()) / (k * vs);
        assert!(((tts - land.time).to_si() - t99).abs() < 1e-3 * t99);
    }

    #[test]
    fn fountain_check_values() {
        // Reference sheet §3.2 check (Biggins & Warner 2014; FROM MEMORY (M),
        // DERIVED): h1 = 1.0 m, α = 0.1, β = 0.2, λ = 0.05 kg/m, g = 9.81:
        // h2 = 0.142857 m, v = 3.74357 m/s, T0 = 0.630643 N,
        // R_pot = 0.070071 N, T_f = 0.140143 N.
        let p = chain(0.05, 1.0, 0.0, 0.1, 0.2, 1.0);
        let s = steady_state(&p).unwrap();
        assert_eq!(s.regime, Regime::Free);
        assert!(rel(s.rise.to_si(), 0.142857) < 1e-5);
        assert!(rel(s.speed.to_si(), 3.74357) < 1e-5);
        assert!(rel(s.pickup_tension.to_si(), 0.630643) < 1e-5);
        assert!(rel(s.pile_reaction.to_si(), 0.070071) < 1e-4);
        assert!(rel(s.landing_tension.to_si(), 0.140143) < 1e-5);
        // Rise / drop = α / (1 − α − β).
        assert!(rel(s.rise.to_si() / 1.0, 0.1 / (1.0 - 0.1 - 0.2)) < 1e-12);
        // Apex tension λ v² is the largest.
        assert!(rel(s.top_tension.to_si(), 0.05 * s.speed.to_si().powi(2)) < 1e-12);
        // Classical case α = β = 0: h2 = 0, v = sqrt(g h1) = 3.1321 m/s.
        let c = steady_state(&chain(0.05, 1.0, 0.0, 0.0, 0.0, 1.0)).unwrap();
        assert_eq!(c.rise.to_si(), 0.0);
        assert!(rel(c.speed.to_si(), 3.1321) < 1e-4);
    }

    #[test]
    fn chain_on_the_rim_runs_up_to_its_steady_speed() {
        // The start-up, run long, settles on the on-rim steady speed
        // v² = g (h − e (E − 1)) / (1 − β − α E): two independent routes.
        let big_e = capstan_ratio(0.3, si(std::f64::consts::PI));
        let p = chain(5.0, 4.0, 0.6, 0.1, 0.1, big_e);
        let s = steady_state(&p).unwrap();
        assert_eq!(s.regime, Regime::OnRim);
        let v2 = 9.81 * (4.0 - 0.6 * (big_e - 1.0)) / (1.0 - 0.1 - 0.1 * big_e);
        assert!(rel(s.speed.to_si(), v2.sqrt()) < 1e-12);
        let run = start_up(&p, si(2.0), si(400.0), &Tolerance::default()).unwrap();
        assert_eq!(run.ending, StartEnding::PaidOut);
        assert!(rel(run.end.speed.to_si(), s.speed.to_si()) < 1e-7);
        assert!(rel(run.end.tension.to_si(), s.top_tension.to_si()) < 1e-6);
        assert!(run.energy.rim.to_si() > 0.0);
    }

    #[test]
    fn rim_friction_can_hold_the_chain() {
        let big_e = capstan_ratio(0.5, si(std::f64::consts::PI)); // 4.81
                                                                  // Rim 0.5 m above the pile: at rest the rim side resists like
                                                                  // e E = 2.405 m of hanging chain (capstan at v = 0).
        let p = chain(5.0, 3.0, 0.5, 0.0, 0.0, big_e);
        assert!(steady_state(&p).is_ok());
        let run = start_up(&p, si(2.3), si(10.0), &Tolerance::default()).unwrap();
        assert_eq!(run.ending, StartEnding::DoesNotStart);
        let run = start_up(&p, si(2.5), si(10.0), &Tolerance::default()).unwrap();
        assert_eq!(run.ending, StartEnding::PaidOut);
        // h = 1.5 m < e (E − 1) = 1.9 m: no running state, and even the full
        // falling leg (e + h = 2.0 m) cannot start it.
        let p = chain(5.0, 1.5, 0.5, 0.0, 0.0, big_e);
        let err = steady_state(&p).unwrap_err();
        assert!(err.falling_leg.to_si() < err.held_by_rim.to_si());
        let run = start_up(&p, si(2.0), si(10.0), &Tolerance::default()).unwrap();
        assert_eq!(run.ending, StartEnding::DoesNotStart);
    }

    proptest! {
        #[test]
        fn energy_is_accounted_for(
            h in 0.5f64..6.0, e in 0.0f64..0.8, alpha in 0.0f64..0.3, beta in 0.0f64..0.3,
            mu in 0.0f64..0.4, y0_frac in 0.0f64..1.5, payout in 1.0f64..20.0,
        ) {
            // Potential energy released = kinetic energy + energy dissipated
            // at pickup, on the rim and at the landing (DERIVED balance).
            let big_e = capstan_ratio(mu, si(std::f64::consts::PI));
            let p = chain(3.0, h, e, alpha, beta, big_e);
            let y0 = y0_frac * (e + h) + if e > 0.0 { e * big_e } else { 0.0 };
            let run = start_up(&p, si(y0), si(payout), &Tolerance::default()).unwrap();
            let a = run.energy;
            let out = a.kinetic + a.pickup + a.rim + a.landing;
            let scale = a.potential.to_si().abs().max(1e-9);
            prop_assert!((a.potential - out).to_si().abs() <= 1e-7 * scale,
                "{:?}", a);
            for s in &run.samples {
                prop_assert!(s.speed.to_si().is_finite() && s.tension.to_si().is_finite());
            }
        }
    }
}
