//! The rope-and-mass model: a load of mass m hanging on a massless elastic
//! rope (spring k, viscous damper c = 2 ζ √(k m), no compression) whose upper
//! end, the hook drive, follows a prescribed motion. The load may rest on
//! rigid ground, lift off when the rope force reaches its weight, fly free
//! when the rope goes slack, and land again. A two-degree variant puts the
//! hook block, as a second mass, between a drive spring (driven by the
//! prescribed motor motion) and the rope; both masses are integrated.
//!
//! The airborne motion is integrated with an adaptive Dormand–Prince 5(4)
//! Runge–Kutta scheme written here (no dependency). Every non-smooth point
//! is treated as an event and located by bisection on the step size, so
//! that no step straddles it: rope engaging or going slack, the load
//! landing, the end of the drive ramp (a step limit). Force peaks are
//! located the same way (dF/dt changing sign), so the peak is not limited
//! by the output sampling.
//!
//! Owns no state; works in SI numbers internally and takes and returns uom
//! quantities at its public boundary.

use packwright_api::prelude::*;

/// Lift-off of a grounded load by a hook drive that accelerates uniformly
/// from rest to `hook_speed` over `ramp_time` (zero: instantly).
#[derive(Debug, Clone, Copy)]
pub struct LiftOff {
    /// Hoisted mass m.
    pub mass: Mass,
    /// Rope stiffness at the hook k.
    pub stiffness: Stiffness,
    /// Damping ratio ζ of the rope-load mode (fraction of critical).
    pub damping_ratio: f64,
    /// Gravity g.
    pub gravity: Acceleration,
    /// Final hook speed v.
    pub hook_speed: Velocity,
    /// Time t_r for the drive to reach v.
    pub ramp_time: Time,
    /// Slack the hook takes up before the rope tightens.
    pub slack: Length,
}

/// A load falling freely through `drop_height` and caught by the rope, the
/// rope's upper end held still.
#[derive(Debug, Clone, Copy)]
pub struct FreeDrop {
    /// Mass m.
    pub mass: Mass,
    /// Rope stiffness k.
    pub stiffness: Stiffness,
    /// Damping ratio ζ.
    pub damping_ratio: f64,
    /// Gravity g.
    pub gravity: Acceleration,
    /// Free-fall height h before the rope engages.
    pub drop_height: Length,
}

/// One sampled instant of a history, in SI numbers.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Sample {
    /// Time since the drive started (s).
    pub time: f64,
    /// Rope force (N).
    pub force: f64,
    /// Load height above its start (m).
    pub load_height: f64,
    /// Hook travel since the start (m).
    pub hook_travel: f64,
}

/// The result of a simulation.
#[derive(Debug, Clone)]
pub struct History {
    /// Largest rope force found.
    pub peak_force: Force,
    /// When it occurred.
    pub peak_time: Time,
    /// First lift-off, for a grounded start.
    pub liftoff_time: Option<Time>,
    /// Samples at regular times plus every located event and peak, in time order.
    pub samples: Vec<Sample>,
}

/// Why a simulation stopped without an answer.
#[derive(Debug, Clone, PartialEq)]
pub enum SimError {
    /// The step size fell below what the time scale allows.
    StepTooSmall {
        /// When.
        time: f64,
    },
    /// More steps than the budget allows (a very long ramp on a very stiff rope).
    TooManySteps,
    /// The load never leaves the ground (no hook speed).
    NoLiftOff,
}

impl std::fmt::Display for SimError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            SimError::StepTooSmall { time } => {
                write!(f, "the integrator's step size collapsed at t = {time:.6} s")
            }
            SimError::TooManySteps => write!(
                f,
                "the ramp is too long for the rope's natural period to integrate in the step budget"
            ),
            SimError::NoLiftOff => write!(f, "the hook never lifts the load off the ground"),
        }
    }
}

const OUTPUT_POINTS: usize = 400;
const MAX_STEPS: usize = 2_000_000;
const MAX_EVENTS: usize = 100_000;
const RTOL: f64 = 1e-10;

/// Simulates the lift-off of a grounded load and the oscillation after it,
/// until five natural periods after both lift-off and the end of the ramp.
pub fn simulate_liftoff(p: &LiftOff) -> Result<History, SimError> {
    let model = Model::new(
        p.mass.to_si(),
        p.stiffness.to_si(),
        p.damping_ratio,
        p.gravity.to_si(),
        p.hook_speed.to_si(),
        p.ramp_time.to_si(),
        p.slack.to_si(),
        true,
    );
    let t_lo = model
        .liftoff_after(0.0, f64::INFINITY)
        .ok_or(SimError::NoLiftOff)?;
    let t_end = t_lo.max(model.tr) + 5.0 * model.period();
    model.run(t_end, true)
}

/// Simulates a load dropping through a slack height onto the rope, until two
/// natural periods after the rope engages.
pub fn simulate_free_drop(p: &FreeDrop) -> Result<History, SimError> {
    let model = Model::new(
        p.mass.to_si(),
        p.stiffness.to_si(),
        p.damping_ratio,
        p.gravity.to_si(),
        0.0,
        0.0,
        p.drop_height.to_si(),
        false,
    );
    let t_fall = (2.0 * model.s / model.g).sqrt();
    let t_end = t_fall + 2.0 * model.period();
    model.run(t_end, false)
}

/// The model in SI numbers. The load height y is measured up from its start;
/// the rope's stretch is e = x_h(t) − y − s.
struct Model {
    m: f64,
    k: f64,
    c: f64,
    g: f64,
    v: f64,
    tr: f64,
    s: f64,
    ground: bool,
    /// Length scale for tolerances.
    len: f64,
}

type State = [f64; 2];

impl Model {
    #[allow(clippy::too_many_arguments)]
    fn new(m: f64, k: f64, zeta: f64, g: f64, v: f64, tr: f64, s: f64, ground: bool) -> Model {
        let omega = (k / m).sqrt();
        let len = (m * g / k).max(s).max(v / omega).max(1e-9);
        Model {
            m,
            k,
            c: 2.0 * zeta * (k * m).sqrt(),
            g,
            v,
            tr,
            s,
            ground,
            len,
        }
    }

    fn omega(&self) -> f64 {
        (self.k / self.m).sqrt()
    }

    fn period(&self) -> f64 {
        2.0 * std::f64::consts::PI / self.omega()
    }

    /// Hook travel, speed and acceleration at time t.
    fn hook(&self, t: f64) -> (f64, f64, f64) {
        if t <= 0.0 {
            (0.0, 0.0, 0.0)
        } else if t < self.tr {
            let a = self.v / self.tr;
            (0.5 * a * t * t, a * t, a)
        } else {
            (self.v * (t - 0.5 * self.tr), self.v, 0.0)
        }
    }

    /// Stretch and its rate.
    fn stretch(&self, t: f64, st: &State) -> (f64, f64) {
        let (x, vh, _) = self.hook(t);
        (x - st[0] - self.s, vh - st[1])
    }

    /// Spring-plus-damper force before the no-compression clamp.
    fn raw_force(&self, t: f64, st: &State) -> f64 {
        let (e, de) = self.stretch(t, st);
        self.k * e + self.c * de
    }

    /// Positive when the rope pulls, zero or negative when it is slack; a
    /// continuous function whose zero is the kink of the force law.
    fn taut_measure(&self, t: f64, st: &State) -> f64 {
        let (e, de) = self.stretch(t, st);
        self.k * e + (self.c * de).min(0.0)
    }

    fn force(&self, t: f64, st: &State) -> f64 {
        if self.taut_measure(t, st) > 0.0 {
            self.raw_force(t, st).max(0.0)
        } else {
            0.0
        }
    }

    fn rhs(&self, t: f64, st: &State) -> State {
        [st[1], self.force(t, st) / self.m - self.g]
    }

    /// dF/dt while taut: k e' + c e''.
    fn force_rate(&self, t: f64, st: &State) -> f64 {
        let (_, de) = self.stretch(t, st);
        let (_, _, ah) = self.hook(t);
        let dd = self.rhs(t, st);
        self.k * de + self.c * (ah - dd[1])
    }

    /// Rope force with the load held on the ground.
    fn grounded_force(&self, t: f64) -> f64 {
        self.force(t, &[0.0, 0.0])
    }

    /// The first time at or after `from`, and before `until`, when the rope
    /// force on the grounded load reaches its weight. The grounded force
    /// never decreases with time (hook travel and speed never decrease), so
    /// a bracket found by doubling is refined by bisection.
    fn liftoff_after(&self, from: f64, until: f64) -> Option<f64> {
        let w = self.m * self.g;
        if self.grounded_force(from) >= w {
            return Some(from);
        }
        if self.v <= 0.0 {
            return None;
        }
        let mut lo = from;
        let mut dt = self.period() / 20.0;
        let mut hi = from + dt;
        let horizon = from + 1e6 * (self.period() + self.tr + self.s / self.v);
        while self.grounded_force(hi) < w {
            lo = hi;
            dt *= 2.0;
            hi += dt;
            if hi > horizon || lo >= until {
                return None;
            }
        }
        for _ in 0..200 {
            let mid = 0.5 * (lo + hi);
            if mid <= lo || mid >= hi {
                break;
            }
            if self.grounded_force(mid) >= w {
                hi = mid;
            } else {
                lo = mid;
            }
        }
        (hi < until).then_some(hi)
    }

    /// One Dormand–Prince 5(4) step; returns the fifth-order state and the
    /// scaled error norm (≤ 1 means the step meets the tolerance).
    fn dp_step(&self, t: f64, y: &State, h: f64) -> (State, f64) {
        let scale = [self.len, self.len * self.omega()];
        dp45(&|tt, yy| self.rhs(tt, yy), t, y, h, &scale)
    }

    /// Bisects for the smallest step τ in (0, h] at which `event(t + τ,
    /// state)` is true, given that it is false at τ = 0 and true at τ = h.
    fn locate(&self, t: f64, y: &State, h: f64, event: &dyn Fn(f64, &State) -> bool) -> f64 {
        let (mut lo, mut hi) = (0.0, h);
        for _ in 0..100 {
            let mid = 0.5 * (lo + hi);
            if mid <= lo || mid >= hi {
                break;
            }
            let (ym, _) = self.dp_step(t, y, mid);
            if event(t + mid, &ym) {
                hi = mid;
            } else {
                lo = mid;
            }
        }
        hi
    }

    fn sample(&self, t: f64, st: &State) -> Sample {
        Sample {
            time: t,
            force: self.force(t, st),
            load_height: st[0],
            hook_travel: self.hook(t).0,
        }
    }

    fn run(&self, t_end: f64, start_grounded: bool) -> Result<History, SimError> {
        let dt_out = t_end / OUTPUT_POINTS as f64;
        let h_max = (self.period() / 40.0).min(dt_out);
        let h_min = 1e-14 * t_end.max(1e-9);
        // The airborne part needs at least this many steps; say so at once
        // rather than after minutes of stepping (an absurd ramp time).
        let airborne_from = if start_grounded {
            self.liftoff_after(0.0, t_end).unwrap_or(t_end)
        } else {
            0.0
        };
        if (t_end - airborne_from) / h_max > MAX_STEPS as f64 {
            return Err(SimError::TooManySteps);
        }
        let mut t = 0.0;
        let mut st: State = [0.0, 0.0];
        let mut grounded = start_grounded;
        let mut liftoff = None;
        let mut samples = vec![self.sample(0.0, &st)];
        let mut next_out = dt_out;
        let mut peak = (self.force(0.0, &st), 0.0);
        let mut h = h_max / 8.0;
        let mut steps = 0usize;
        let mut events = 0usize;
        let out_index = |time: f64| (time / dt_out + 1e-9).floor() as usize;

        while t < t_end * (1.0 - 1e-12) {
            if grounded {
                let t_next = self.liftoff_after(t, t_end);
                let stop = t_next.unwrap_or(t_end);
                while next_out < stop {
                    samples.push(self.sample(next_out, &[0.0, 0.0]));
                    peak_update(&mut peak, self.grounded_force(next_out), next_out);
                    next_out = (out_index(next_out) + 1) as f64 * dt_out;
                }
                match t_next {
                    Some(t_lo) => {
                        t = t_lo;
                        st = [0.0, 0.0];
                        grounded = false;
                        liftoff.get_or_insert(t_lo);
                        samples.push(self.sample(t, &st));
                        peak_update(&mut peak, self.force(t, &st), t);
                        h = h_max / 8.0;
                        events += 1;
                        if events > MAX_EVENTS {
                            return Err(SimError::TooManySteps);
                        }
                    }
                    None => {
                        t = t_end;
                    }
                }
                continue;
            }

            steps += 1;
            if steps > MAX_STEPS {
                return Err(SimError::TooManySteps);
            }
            let mut step = h.min(h_max).min(t_end - t);
            if next_out > t {
                step = step.min(next_out - t);
            }
            if t < self.tr {
                step = step.min(self.tr - t);
            }
            let (y1, err) = self.dp_step(t, &st, step);
            if err > 1.0 {
                h = step * (0.9 * err.powf(-0.2)).max(0.2);
                if h < h_min {
                    return Err(SimError::StepTooSmall { time: t });
                }
                continue;
            }
            let grow = if err > 0.0 {
                (0.9 * err.powf(-0.2)).min(5.0)
            } else {
                5.0
            };

            // Kinks inside the step: the rope engaging or going slack, the
            // load landing. The step is cut at the first one.
            let taut0 = self.taut_measure(t, &st) > 0.0;
            let kink = |tt: f64, yy: &State| -> bool {
                (self.taut_measure(tt, yy) > 0.0) != taut0
                    || (self.ground && yy[0] < -1e-12 * self.len && yy[1] < 0.0)
            };
            let (step, y1, kinked) = if kink(t + step, &y1) {
                let tau = self.locate(t, &st, step, &kink);
                (tau, self.dp_step(t, &st, tau).0, true)
            } else {
                (step, y1, false)
            };

            // A force peak inside the (possibly cut) step.
            if taut0 && self.force_rate(t, &st) > 0.0 && self.force_rate(t + step, &y1) <= 0.0 {
                let falling = |tt: f64, yy: &State| self.force_rate(tt, yy) <= 0.0;
                let tau = self.locate(t, &st, step, &falling);
                let (yp, _) = self.dp_step(t, &st, tau);
                let fp = self.force(t + tau, &yp);
                peak_update(&mut peak, fp, t + tau);
                if tau < step {
                    samples.push(self.sample(t + tau, &yp));
                }
            }

            t += step;
            st = y1;
            peak_update(&mut peak, self.force(t, &st), t);
            if kinked {
                events += 1;
                if events > MAX_EVENTS {
                    return Err(SimError::TooManySteps);
                }
                if self.ground && st[0] < 0.0 {
                    st = [0.0, 0.0];
                    grounded = true;
                }
                samples.push(self.sample(t, &st));
                h = h_max / 8.0;
            } else {
                h = step * grow;
            }
            if t >= next_out * (1.0 - 1e-12) {
                if !kinked {
                    samples.push(self.sample(t, &st));
                }
                next_out = (out_index(t) + 1) as f64 * dt_out;
            }
        }
        samples.sort_by(|a, b| a.time.total_cmp(&b.time));
        samples.dedup_by(|a, b| a.time == b.time);
        Ok(History {
            peak_force: si(peak.0),
            peak_time: si(peak.1),
            liftoff_time: liftoff.map(si),
            samples,
        })
    }
}

/// Lift-off in the two-degree model: the motor's prescribed motion (the
/// ramp of `base`) drives the hook of mass m_h through a drive spring k_d,
/// and the hook lifts the load through the rope spring of `base`.
#[derive(Debug, Clone, Copy)]
pub struct TwoMassLiftOff {
    /// The load, rope, damping, gravity, drive ramp and slack; the ramp is
    /// now the motor's motion, not the hook's.
    pub base: LiftOff,
    /// Hook mass m_h between the drive spring and the rope.
    pub hook_mass: Mass,
    /// Drive spring k_d between the motor and the hook.
    pub drive_stiffness: Stiffness,
}

/// Simulates the two-degree lift-off (hook and load both integrated) until
/// five periods of the slower mode and five of the faster after both the
/// quasi-static lift-off and the end of the ramp. The hook starts at rest,
/// hanging in equilibrium on the drive spring; the drive spring is damped
/// with the same damping ratio as the rope, on the hook mass.
pub fn simulate_two_mass_liftoff(p: &TwoMassLiftOff) -> Result<History, SimError> {
    let b = &p.base;
    let model = TwoMass {
        m: b.mass.to_si(),
        k: b.stiffness.to_si(),
        c: 2.0 * b.damping_ratio * (b.stiffness.to_si() * b.mass.to_si()).sqrt(),
        mh: p.hook_mass.to_si(),
        kd: p.drive_stiffness.to_si(),
        cd: 2.0 * b.damping_ratio * (p.drive_stiffness.to_si() * p.hook_mass.to_si()).sqrt(),
        g: b.gravity.to_si(),
        v: b.hook_speed.to_si(),
        tr: b.ramp_time.to_si(),
        s: b.slack.to_si(),
    };
    if model.v <= 0.0 {
        return Err(SimError::NoLiftOff);
    }
    let (w_lo, w_hi) = model.omegas();
    let two_pi = 2.0 * std::f64::consts::PI;
    // Motor travel to carry the weight quasi-statically: slack plus the
    // stretch of both springs under m g.
    let travel = model.s + model.m * model.g * (1.0 / model.k + 1.0 / model.kd);
    let t_qs = if model.tr > 0.0 && travel <= 0.5 * model.v * model.tr {
        (2.0 * travel * model.tr / model.v).sqrt()
    } else {
        travel / model.v + 0.5 * model.tr
    };
    let t_end = t_qs.max(model.tr) + 5.0 * two_pi / w_lo + 5.0 * two_pi / w_hi;
    model.run(t_end, w_lo, w_hi)
}

/// The two-degree model in SI numbers. State [u, u', y, y']: hook and load
/// displacements up from their start; rope stretch e = u − y − s.
struct TwoMass {
    m: f64,
    k: f64,
    c: f64,
    mh: f64,
    kd: f64,
    cd: f64,
    g: f64,
    v: f64,
    tr: f64,
    s: f64,
}

type State4 = [f64; 4];

impl TwoMass {
    /// Undamped natural frequencies of the airborne system (fixed motor):
    /// m_h m ω⁴ − (m (k_d + k) + m_h k) ω² + k_d k = 0.
    fn omegas(&self) -> (f64, f64) {
        let a = self.mh * self.m;
        let b = self.m * (self.kd + self.k) + self.mh * self.k;
        let c0 = self.kd * self.k;
        let disc = (b * b - 4.0 * a * c0).max(0.0);
        let hi2 = (b + disc.sqrt()) / (2.0 * a);
        let lo2 = c0 / (a * hi2);
        (lo2.sqrt(), hi2.sqrt())
    }

    /// Motor travel, speed and acceleration at time t.
    fn motor(&self, t: f64) -> (f64, f64, f64) {
        if t <= 0.0 {
            (0.0, 0.0, 0.0)
        } else if t < self.tr {
            let a = self.v / self.tr;
            (0.5 * a * t * t, a * t, a)
        } else {
            (self.v * (t - 0.5 * self.tr), self.v, 0.0)
        }
    }

    fn stretch(&self, st: &State4) -> (f64, f64) {
        (st[0] - st[2] - self.s, st[1] - st[3])
    }

    fn taut_measure(&self, st: &State4) -> f64 {
        let (e, de) = self.stretch(st);
        self.k * e + (self.c * de).min(0.0)
    }

    fn force(&self, st: &State4) -> f64 {
        if self.taut_measure(st) > 0.0 {
            let (e, de) = self.stretch(st);
            (self.k * e + self.c * de).max(0.0)
        } else {
            0.0
        }
    }

    /// Drive-spring force on the hook beyond the preload m_h g that holds
    /// it at the start.
    fn drive_force(&self, t: f64, st: &State4) -> f64 {
        let (x, vx, _) = self.motor(t);
        self.kd * (x - st[0]) + self.cd * (vx - st[1])
    }

    fn rhs(&self, t: f64, st: &State4, grounded: bool) -> State4 {
        let f = self.force(st);
        let uh = (self.drive_force(t, st) - f) / self.mh;
        if grounded {
            [st[1], uh, 0.0, 0.0]
        } else {
            [st[1], uh, st[3], f / self.m - self.g]
        }
    }

    /// dF/dt while taut: k e' + c e''.
    fn force_rate(&self, t: f64, st: &State4, grounded: bool) -> f64 {
        let (_, de) = self.stretch(st);
        let d = self.rhs(t, st, grounded);
        self.k * de + self.c * (d[1] - d[3])
    }

    fn sample(&self, t: f64, st: &State4) -> Sample {
        Sample {
            time: t,
            force: self.force(st),
            load_height: st[2],
            hook_travel: st[0],
        }
    }

    fn run(&self, t_end: f64, w_lo: f64, w_hi: f64) -> Result<History, SimError> {
        let two_pi = 2.0 * std::f64::consts::PI;
        let dt_out = t_end / OUTPUT_POINTS as f64;
        let h_max = (two_pi / w_hi / 40.0).min(dt_out);
        let h_min = 1e-14 * t_end.max(1e-9);
        if t_end / h_max > MAX_STEPS as f64 {
            return Err(SimError::TooManySteps);
        }
        let len = (self.m * self.g / self.k)
            .max(self.s)
            .max(self.v / w_lo)
            .max(1e-9);
        let scale = [len, len * w_hi, len, len * w_hi];
        let w = self.m * self.g;
        let mut t = 0.0;
        let mut st: State4 = [0.0; 4];
        let mut grounded = true;
        let mut liftoff = None;
        let mut samples = vec![self.sample(0.0, &st)];
        let mut next_out = dt_out;
        let mut peak = (0.0, 0.0);
        let mut h = h_max / 8.0;
        let mut steps = 0usize;
        let mut events = 0usize;
        let out_index = |time: f64| (time / dt_out + 1e-9).floor() as usize;

        while t < t_end * (1.0 - 1e-12) {
            steps += 1;
            if steps > MAX_STEPS {
                return Err(SimError::TooManySteps);
            }
            let mut step = h.min(h_max).min(t_end - t);
            if next_out > t {
                step = step.min(next_out - t);
            }
            if t < self.tr {
                step = step.min(self.tr - t);
            }
            let g0 = grounded;
            let rhs = |tt: f64, yy: &State4| self.rhs(tt, yy, g0);
            let (y1, err) = dp45(&rhs, t, &st, step, &scale);
            if err > 1.0 {
                h = step * (0.9 * err.powf(-0.2)).max(0.2);
                if h < h_min {
                    return Err(SimError::StepTooSmall { time: t });
                }
                continue;
            }
            let grow = if err > 0.0 {
                (0.9 * err.powf(-0.2)).min(5.0)
            } else {
                5.0
            };

            // Kinks: the rope engaging or going slack, the rope force on
            // the grounded load reaching its weight, the load landing.
            let taut0 = self.taut_measure(&st) > 0.0;
            let kink = |_: f64, yy: &State4| -> bool {
                (self.taut_measure(yy) > 0.0) != taut0
                    || (g0 && self.force(yy) >= w)
                    || (!g0 && yy[2] < -1e-12 * len && yy[3] < 0.0)
            };
            let (step, y1, kinked) = if kink(t + step, &y1) {
                let (mut lo, mut hi) = (0.0, step);
                for _ in 0..100 {
                    let mid = 0.5 * (lo + hi);
                    if mid <= lo || mid >= hi {
                        break;
                    }
                    if kink(t + mid, &dp45(&rhs, t, &st, mid, &scale).0) {
                        hi = mid;
                    } else {
                        lo = mid;
                    }
                }
                (hi, dp45(&rhs, t, &st, hi, &scale).0, true)
            } else {
                (step, y1, false)
            };

            // A force peak inside the (possibly cut) step.
            if taut0
                && self.force_rate(t, &st, g0) > 0.0
                && self.force_rate(t + step, &y1, g0) <= 0.0
            {
                let (mut lo, mut hi) = (0.0, step);
                for _ in 0..100 {
                    let mid = 0.5 * (lo + hi);
                    if mid <= lo || mid >= hi {
                        break;
                    }
                    let ym = dp45(&rhs, t, &st, mid, &scale).0;
                    if self.force_rate(t + mid, &ym, g0) <= 0.0 {
                        hi = mid;
                    } else {
                        lo = mid;
                    }
                }
                let yp = dp45(&rhs, t, &st, hi, &scale).0;
                peak_update(&mut peak, self.force(&yp), t + hi);
                if hi < step {
                    samples.push(self.sample(t + hi, &yp));
                }
            }

            t += step;
            st = y1;
            peak_update(&mut peak, self.force(&st), t);
            if kinked {
                events += 1;
                if events > MAX_EVENTS {
                    return Err(SimError::TooManySteps);
                }
                if g0 && self.force(&st) >= w {
                    grounded = false;
                    liftoff.get_or_insert(t);
                } else if !g0 && st[2] < 0.0 {
                    st[2] = 0.0;
                    st[3] = 0.0;
                    grounded = true;
                }
                samples.push(self.sample(t, &st));
                h = h_max / 8.0;
            } else {
                h = step * grow;
            }
            if t >= next_out * (1.0 - 1e-12) {
                if !kinked {
                    samples.push(self.sample(t, &st));
                }
                next_out = (out_index(t) + 1) as f64 * dt_out;
            }
        }
        if liftoff.is_none() {
            return Err(SimError::NoLiftOff);
        }
        samples.sort_by(|a, b| a.time.total_cmp(&b.time));
        samples.dedup_by(|a, b| a.time == b.time);
        Ok(History {
            peak_force: si(peak.0),
            peak_time: si(peak.1),
            liftoff_time: liftoff.map(si),
            samples,
        })
    }
}

/// One Dormand–Prince 5(4) step of `rhs` from (t, y) over h; returns the
/// fifth-order state and the error norm scaled by `scale` and the relative
/// tolerance (≤ 1 means the step meets the tolerance). Dormand and Prince,
/// J. Comput. Appl. Math. 6 (1980), the classical tableau.
fn dp45<const N: usize>(
    rhs: &dyn Fn(f64, &[f64; N]) -> [f64; N],
    t: f64,
    y: &[f64; N],
    h: f64,
    scale: &[f64; N],
) -> ([f64; N], f64) {
    const C: [f64; 7] = [0.0, 0.2, 0.3, 0.8, 8.0 / 9.0, 1.0, 1.0];
    const A: [[f64; 6]; 7] = [
        [0.0; 6],
        [0.2, 0.0, 0.0, 0.0, 0.0, 0.0],
        [3.0 / 40.0, 9.0 / 40.0, 0.0, 0.0, 0.0, 0.0],
        [44.0 / 45.0, -56.0 / 15.0, 32.0 / 9.0, 0.0, 0.0, 0.0],
        [
            19372.0 / 6561.0,
            -25360.0 / 2187.0,
            64448.0 / 6561.0,
            -212.0 / 729.0,
            0.0,
            0.0,
        ],
        [
            9017.0 / 3168.0,
            -355.0 / 33.0,
            46732.0 / 5247.0,
            49.0 / 176.0,
            -5103.0 / 18656.0,
            0.0,
        ],
        [
            35.0 / 384.0,
            0.0,
            500.0 / 1113.0,
            125.0 / 192.0,
            -2187.0 / 6784.0,
            11.0 / 84.0,
        ],
    ];
    const B5: [f64; 7] = [
        35.0 / 384.0,
        0.0,
        500.0 / 1113.0,
        125.0 / 192.0,
        -2187.0 / 6784.0,
        11.0 / 84.0,
        0.0,
    ];
    const B4: [f64; 7] = [
        5179.0 / 57600.0,
        0.0,
        7571.0 / 16695.0,
        393.0 / 640.0,
        -92097.0 / 339200.0,
        187.0 / 2100.0,
        1.0 / 40.0,
    ];
    let mut k = [[0.0; N]; 7];
    for i in 0..7 {
        let mut yi = *y;
        for (j, kj) in k.iter().enumerate().take(i) {
            for d in 0..N {
                yi[d] += h * A[i][j] * kj[d];
            }
        }
        k[i] = rhs(t + C[i] * h, &yi);
    }
    let mut y5 = *y;
    let mut err = [0.0; N];
    for (i, ki) in k.iter().enumerate() {
        for d in 0..N {
            y5[d] += h * B5[i] * ki[d];
            err[d] += h * (B5[i] - B4[i]) * ki[d];
        }
    }
    let norm = (0..N)
        .map(|d| err[d].abs() / (RTOL * (scale[d] + y5[d].abs().max(y[d].abs()))))
        .fold(0.0, f64::max);
    (y5, norm)
}

fn peak_update(peak: &mut (f64, f64), force: f64, time: f64) {
    if force > peak.0 {
        *peak = (force, time);
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::rope;
    use proptest::prelude::{prop_oneof, Just};

    fn close(a: f64, b: f64, rel: f64) -> bool {
        (a - b).abs() <= rel * b.abs()
    }

    // reference.md §4.5 check case: m = 1000 kg, k = 1.822124e6 N/m, with
    // g = 9.81 m/s² as the sheet uses.
    fn check_mass() -> Mass {
        si(1000.0)
    }
    fn check_k() -> Stiffness {
        si(1.822124e6)
    }
    fn g981() -> Acceleration {
        si(9.81)
    }

    fn liftoff(v: f64, tr: f64, zeta: f64, slack: f64) -> LiftOff {
        LiftOff {
            mass: check_mass(),
            stiffness: check_k(),
            damping_ratio: zeta,
            gravity: g981(),
            hook_speed: si(v),
            ramp_time: si(tr),
            slack: si(slack),
        }
    }

    // Lift-off at full speed with an instantaneous ramp, undamped:
    // F = m g + v √(k m) (reference.md §4.5, DERIVED) → 31 153.2 N at 0.5 m/s.
    #[test]
    fn instantaneous_liftoff_matches_the_closed_form() {
        let h = simulate_liftoff(&liftoff(0.5, 0.0, 0.0, 0.0)).unwrap();
        let closed = rope::liftoff_bound(check_mass(), g981(), si(0.5), check_k());
        assert!(close(h.peak_force.to_si(), closed.to_si(), 1e-6));
        assert!(close(h.peak_force.to_si(), 31_153.2, 1e-5));
        // Lift-off when the hook has stretched the rope by m g / k.
        let t_lo = h.liftoff_time.unwrap().to_si();
        assert!(close(t_lo, 9810.0 / 1.822124e6 / 0.5, 1e-9));
        // The peak comes a quarter period after lift-off.
        let quarter = rope::natural_period(check_mass(), check_k()).to_si() / 4.0;
        assert!(close(h.peak_time.to_si() - t_lo, quarter, 1e-6));
    }

    // A ramp that ends before the rope carries the weight is still a
    // lift-off at full speed: the same closed form.
    #[test]
    fn ramp_ending_before_liftoff_gives_the_full_speed_bound() {
        // The hook travels v t_r / 2 = 2.5 mm < 5.38 mm during the ramp.
        let h = simulate_liftoff(&liftoff(0.5, 0.01, 0.0, 0.0)).unwrap();
        assert!(close(h.peak_force.to_si(), 31_153.2, 1e-5));
        // Slack taken up at full speed behaves the same.
        let h = simulate_liftoff(&liftoff(0.5, 0.2, 0.0, 0.2)).unwrap();
        assert!(close(h.peak_force.to_si(), 31_153.2, 1e-5));
    }

    // Free drop through h = 0.1 m onto the rope (reference.md §4.5,
    // CONFIRMED): F = m g (1 + √(1 + 2 k h / (m g))) = 70 400.8 N.
    #[test]
    fn free_drop_matches_the_closed_form() {
        let p = FreeDrop {
            mass: check_mass(),
            stiffness: check_k(),
            damping_ratio: 0.0,
            gravity: g981(),
            drop_height: si(0.1),
        };
        let h = simulate_free_drop(&p).unwrap();
        let closed = rope::slack_drop_force(check_mass(), g981(), si(0.1), check_k());
        assert!(close(h.peak_force.to_si(), closed.to_si(), 1e-6));
        assert!(close(h.peak_force.to_si(), 70_400.8, 1e-5));
        // Sudden application with no slack: twice the weight.
        let h = simulate_free_drop(&FreeDrop {
            drop_height: si(0.0),
            ..p
        })
        .unwrap();
        assert!(close(h.peak_force.to_si(), 2.0 * 9810.0, 1e-6));
    }

    // With a uniform ramp the load's quasi-static force m (g + a) is reached
    // and the oscillation about it stays within the bound derived for a
    // constant hook acceleration a = v / t_r after lift-off:
    // u_max = a/ω² + √((a/ω²)² + (v_lo/ω)²), v_lo = √(2 a δ) (DERIVED here).
    #[test]
    fn long_ramp_stays_within_the_constant_acceleration_bound() {
        let (v, tr) = (0.5, 2.0);
        let h = simulate_liftoff(&liftoff(v, tr, 0.0, 0.0)).unwrap();
        let (m, k, g) = (1000.0, 1.822124e6, 9.81);
        let (w2, a, delta) = (k / m, v / tr, m * g / k);
        let p = a / w2;
        let q2 = 2.0 * a * delta / w2;
        let bound = m * g + k * (p + (p * p + q2).sqrt());
        assert!(h.peak_force.to_si() <= bound * (1.0 + 1e-9));
        // The peak reached during the ramp is this bound (the ramp lasts many periods).
        assert!(close(h.peak_force.to_si(), bound, 1e-6));
    }

    // Damping lowers the peak; the time history is ordered and finite.
    #[test]
    fn damping_lowers_the_peak_and_history_is_clean() {
        let undamped = simulate_liftoff(&liftoff(0.5, 0.0, 0.0, 0.0)).unwrap();
        let damped = simulate_liftoff(&liftoff(0.5, 0.0, 0.05, 0.0)).unwrap();
        assert!(damped.peak_force < undamped.peak_force);
        for w in damped.samples.windows(2) {
            assert!(w[0].time < w[1].time);
        }
        assert!(damped
            .samples
            .iter()
            .all(|s| s.force.is_finite() && s.force >= 0.0));
    }

    // A snatch of more than twice the weight throws the load: the rope goes
    // slack and re-engages; the simulation must get through the kinks.
    #[test]
    fn violent_liftoff_with_slack_rope_runs_through() {
        let h = simulate_liftoff(&liftoff(1.5, 0.0, 0.0, 0.0)).unwrap();
        let closed = rope::liftoff_bound(check_mass(), g981(), si(1.5), check_k());
        assert!(close(h.peak_force.to_si(), closed.to_si(), 1e-6));
        assert!(h.samples.iter().any(|s| s.force == 0.0 && s.time > 0.05));
    }

    // With damping the property holds only nearly: the damper force c v_h
    // at lift-off depends on the hook speed then, so a ramp that ends close
    // to lift-off can raise the peak slightly (a scan at v = 1 m/s, ζ = 0.05
    // found about 0.1 % for ramps of 6 to 14 ms on this rope). The property
    // is therefore tested without damping, where it is exact.
    proptest::proptest! {
        #![proptest_config(proptest::prelude::ProptestConfig::with_cases(32))]
        // A longer drive ramp never raises the model's peak force.
        #[test]
        fn longer_ramp_gives_lower_or_equal_peak(
            v in 0.05f64..1.0,
            tr in 0.0f64..1.5,
            extra in 0.0f64..1.5,
            slack in prop_oneof![Just(0.0f64), 0.0f64..0.05],
        ) {
            let short = simulate_liftoff(&liftoff(v, tr, 0.0, slack)).unwrap();
            let long = simulate_liftoff(&liftoff(v, tr + extra, 0.0, slack)).unwrap();
            proptest::prop_assert!(
                long.peak_force.to_si() <= short.peak_force.to_si() * (1.0 + 1e-9),
                "ramp {} s: {} N, ramp {} s: {} N", tr, short.peak_force.to_si(),
                tr + extra, long.peak_force.to_si()
            );
        }
    }

    // Damping never raises the peak above the undamped one for the same ramp.
    #[test]
    fn damping_never_raises_the_peak_for_a_given_ramp() {
        for tr in [0.0, 0.005, 0.01, 0.05, 0.3] {
            let undamped = simulate_liftoff(&liftoff(1.0, tr, 0.0, 0.0)).unwrap();
            let damped = simulate_liftoff(&liftoff(1.0, tr, 0.05, 0.0)).unwrap();
            assert!(damped.peak_force <= undamped.peak_force, "ramp {tr}");
        }
    }
    // Two-degree model: a very stiff drive spring and a small hook mass
    // converge to the prescribed-drive (single-mass) model, and undamped
    // lift-off at full speed stays within F = m g + v √(k m)
    // (reference.md §4.5, DERIVED) by a small tolerance in that limit.
    fn two_mass(base: LiftOff, mh: f64, kd_over_k: f64) -> History {
        simulate_two_mass_liftoff(&TwoMassLiftOff {
            base,
            hook_mass: si(mh),
            drive_stiffness: si(kd_over_k * base.stiffness.to_si()),
        })
        .unwrap()
    }

    #[test]
    fn stiff_drive_converges_to_the_single_mass_model() {
        for (v, tr, zeta) in [(0.5, 0.0, 0.0), (0.5, 0.3, 0.0), (0.5, 0.0, 0.05)] {
            let one = simulate_liftoff(&liftoff(v, tr, zeta, 0.0)).unwrap();
            let coarse = two_mass(liftoff(v, tr, zeta, 0.0), 10.0, 100.0);
            let fine = two_mass(liftoff(v, tr, zeta, 0.0), 1.0, 1000.0);
            let f1 = one.peak_force.to_si();
            let e_coarse = (coarse.peak_force.to_si() - f1).abs() / f1;
            let e_fine = (fine.peak_force.to_si() - f1).abs() / f1;
            assert!(e_fine < 2e-3, "v {v}, ramp {tr}, ζ {zeta}: {e_fine}");
            assert!(e_fine < e_coarse, "{e_fine} vs {e_coarse}");
            // Lift-off when the drive has also stretched its own spring.
            let t1 = one.liftoff_time.unwrap().to_si();
            let t2 = fine.liftoff_time.unwrap().to_si();
            assert!((t2 - t1).abs() < 0.02 * t1 + 1e-3, "{t1} vs {t2}");
        }
    }

    #[test]
    fn undamped_two_mass_peak_stays_within_the_full_speed_bound() {
        let closed = rope::liftoff_bound(check_mass(), g981(), si(0.5), check_k()).to_si();
        for (mh, ratio) in [(1.0, 1000.0), (5.0, 300.0)] {
            for tr in [0.0, 0.01, 0.2] {
                let h = two_mass(liftoff(0.5, tr, 0.0, 0.0), mh, ratio);
                assert!(
                    h.peak_force.to_si() <= closed * (1.0 + 2e-3),
                    "m_h {mh}, k_d/k {ratio}, ramp {tr}: {} N against {closed} N",
                    h.peak_force.to_si()
                );
            }
        }
        // A soft drive spring lowers the peak well below the bound: the
        // series stiffness k k_d / (k + k_d) is what the load feels.
        let soft = two_mass(liftoff(0.5, 0.0, 0.0, 0.0), 10.0, 1.0);
        assert!(soft.peak_force.to_si() < 0.9 * closed);
    }
}
