//! A small adaptive Runge–Kutta integrator with terminal events, written
//! here so that the crate depends on the contract only.
//!
//! Dormand–Prince 5(4) (Dormand & Prince, J. Comp. Appl. Math. 6, 1980): the
//! fifth-order solution is propagated, the embedded fourth-order one gives
//! the local error estimate that controls the step. Terminal events are
//! located by regula falsi (Illinois variant) on the length of a single step
//! taken from the start of the step in which the event function changed
//! sign, so the state returned at an event carries the integrator's own
//! accuracy. Owns no state beyond one call.

/// Accuracy and effort limits for [`integrate`].
#[derive(Debug, Clone, Copy)]
pub struct Tolerance {
    /// Relative error allowed per step.
    pub rel: f64,
    /// Absolute error allowed per step, in the units of each state component.
    pub abs: f64,
    /// Largest step allowed (bounds the spacing of recorded points).
    pub max_step: f64,
    /// Number of accepted steps after which the integration gives up.
    pub max_steps: usize,
}

impl Default for Tolerance {
    fn default() -> Self {
        Tolerance {
            rel: 1e-10,
            abs: 1e-10,
            max_step: f64::INFINITY,
            max_steps: 500_000,
        }
    }
}

/// How an integration ended.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Ending {
    /// Event number `k` of the list passed in fired (its function reached zero
    /// from below).
    Event(usize),
    /// The end time was reached without an event.
    EndTime,
}

/// Why an integration failed.
#[derive(Debug, Clone, PartialEq)]
pub enum OdeError {
    /// The state or its rate became NaN or infinite.
    NotFinite {
        /// The time at which it happened.
        t: f64,
    },
    /// The step size fell below what floating point can resolve.
    StepTooSmall {
        /// The time at which it happened.
        t: f64,
    },
    /// More than `max_steps` steps were needed.
    TooManySteps {
        /// The time reached.
        t: f64,
    },
}

impl std::fmt::Display for OdeError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            OdeError::NotFinite { t } => {
                write!(f, "the state became non-finite at t = {t:.6} s")
            }
            OdeError::StepTooSmall { t } => {
                write!(f, "the step size collapsed at t = {t:.6} s")
            }
            OdeError::TooManySteps { t } => {
                write!(f, "too many integration steps (stopped at t = {t:.6} s)")
            }
        }
    }
}

/// A terminal event function `g(t, y)`: the integration stops where it
/// rises through zero.
pub type Event<'a, const N: usize> = &'a dyn Fn(f64, &[f64; N]) -> f64;

// Dormand–Prince 5(4) tableau.
const C2: f64 = 1.0 / 5.0;
const C3: f64 = 3.0 / 10.0;
const C4: f64 = 4.0 / 5.0;
const C5: f64 = 8.0 / 9.0;
const A21: f64 = 1.0 / 5.0;
const A31: f64 = 3.0 / 40.0;
const A32: f64 = 9.0 / 40.0;
const A41: f64 = 44.0 / 45.0;
const A42: f64 = -56.0 / 15.0;
const A43: f64 = 32.0 / 9.0;
const A51: f64 = 19372.0 / 6561.0;
const A52: f64 = -25360.0 / 2187.0;
const A53: f64 = 64448.0 / 6561.0;
const A54: f64 = -212.0 / 729.0;
const A61: f64 = 9017.0 / 3168.0;
const A62: f64 = -355.0 / 33.0;
const A63: f64 = 46732.0 / 5247.0;
const A64: f64 = 49.0 / 176.0;
const A65: f64 = -5103.0 / 18656.0;
const B1: f64 = 35.0 / 384.0;
const B3: f64 = 500.0 / 1113.0;
const B4: f64 = 125.0 / 192.0;
const B5: f64 = -2187.0 / 6784.0;
const B6: f64 = 11.0 / 84.0;
// Fifth-order weights minus fourth-order weights (the error estimate).
const E1: f64 = 71.0 / 57600.0;
const E3: f64 = -71.0 / 16695.0;
const E4: f64 = 71.0 / 1920.0;
const E5: f64 = -17253.0 / 339200.0;
const E6: f64 = 22.0 / 525.0;
const E7: f64 = -1.0 / 40.0;

fn combine<const N: usize>(y: &[f64; N], h: f64, terms: &[(f64, &[f64; N])]) -> [f64; N] {
    let mut out = *y;
    for (i, o) in out.iter_mut().enumerate() {
        let mut s = 0.0;
        for (w, k) in terms {
            s += w * k[i];
        }
        *o += h * s;
    }
    out
}

/// One Dormand–Prince step: the fifth-order state and the error estimate.
fn step<const N: usize>(
    f: &dyn Fn(f64, &[f64; N]) -> [f64; N],
    t: f64,
    y: &[f64; N],
    k1: &[f64; N],
    h: f64,
) -> ([f64; N], [f64; N], [f64; N]) {
    let k2 = f(t + C2 * h, &combine(y, h, &[(A21, k1)]));
    let k3 = f(t + C3 * h, &combine(y, h, &[(A31, k1), (A32, &k2)]));
    let k4 = f(
        t + C4 * h,
        &combine(y, h, &[(A41, k1), (A42, &k2), (A43, &k3)]),
    );
    let k5 = f(
        t + C5 * h,
        &combine(y, h, &[(A51, k1), (A52, &k2), (A53, &k3), (A54, &k4)]),
    );
    let k6 = f(
        t + h,
        &combine(
            y,
            h,
            &[(A61, k1), (A62, &k2), (A63, &k3), (A64, &k4), (A65, &k5)],
        ),
    );
    let y5 = combine(
        y,
        h,
        &[(B1, k1), (B3, &k3), (B4, &k4), (B5, &k5), (B6, &k6)],
    );
    let k7 = f(t + h, &y5);
    let mut err = [0.0; N];
    for i in 0..N {
        err[i] = h * (E1 * k1[i] + E3 * k3[i] + E4 * k4[i] + E5 * k5[i] + E6 * k6[i] + E7 * k7[i]);
    }
    (y5, err, k7)
}

fn finite<const N: usize>(y: &[f64; N]) -> bool {
    y.iter().all(|x| x.is_finite())
}

/// Integrates `dy/dt = f(t, y)` from `(t0, y0)` until an event fires or
/// `t_end` is reached, calling `record` at the start and after every
/// accepted step (and at the final point).
///
/// Returns the final time, state and how it ended. An event fires when its
/// function goes from below zero to zero or above within a step; an event
/// whose function is not below zero at the start is armed only once it has
/// been below zero.
pub fn integrate<const N: usize>(
    f: &dyn Fn(f64, &[f64; N]) -> [f64; N],
    t0: f64,
    y0: [f64; N],
    t_end: f64,
    events: &[Event<'_, N>],
    tol: &Tolerance,
    record: &mut dyn FnMut(f64, &[f64; N]),
) -> Result<(f64, [f64; N], Ending), OdeError> {
    let mut t = t0;
    let mut y = y0;
    let mut k1 = f(t, &y);
    if !finite(&y) || !finite(&k1) {
        return Err(OdeError::NotFinite { t });
    }
    record(t, &y);
    let mut g_prev: Vec<f64> = events.iter().map(|g| g(t, &y)).collect();
    // A first step from the scale of the rates, kept modest: the controller
    // enlarges it quickly where the solution is smooth.
    let scale = y
        .iter()
        .zip(k1.iter())
        .map(|(yi, ki)| ki.abs() / (tol.abs + tol.rel * yi.abs()))
        .fold(0.0_f64, f64::max);
    let mut h = if scale > 0.0 {
        (1e-3 / scale.powf(0.2)).min(1e-3 * (t_end - t0).abs().max(1e-6))
    } else {
        1e-6
    }
    .min(tol.max_step)
    .max(1e-12);
    let mut steps = 0usize;
    loop {
        if t >= t_end {
            record(t, &y);
            return Ok((t, y, Ending::EndTime));
        }
        if steps >= tol.max_steps {
            return Err(OdeError::TooManySteps { t });
        }
        let h_try = h.min(t_end - t).min(tol.max_step);
        if h_try <= 1e-14 * t.abs().max(1.0) {
            return Err(OdeError::StepTooSmall { t });
        }
        let (y_new, err, k7) = step(f, t, &y, &k1, h_try);
        let mut norm = 0.0_f64;
        for i in 0..N {
            let sc = tol.abs + tol.rel * y[i].abs().max(y_new[i].abs());
            norm = norm.max((err[i] / sc).abs());
        }
        if !norm.is_finite() || !finite(&y_new) {
            h = h_try * 0.25;
            continue;
        }
        if norm > 1.0 {
            h = h_try * (0.9 * norm.powf(-0.2)).max(0.2);
            continue;
        }
        steps += 1;
        let t_new = t + h_try;
        // Terminal events: find the first that fired in this step.
        let mut fired: Option<(usize, f64)> = None;
        for (k, g) in events.iter().enumerate() {
            let g1 = g(t_new, &y_new);
            if g_prev[k] < 0.0 && g1 >= 0.0 {
                let s = locate(f, t, &y, &k1, h_try, g_prev[k], g1, *g);
                if fired.is_none_or(|(_, s0)| s < s0) {
                    fired = Some((k, s));
                }
            }
        }
        if let Some((k, s)) = fired {
            let (y_ev, _, _) = step(f, t, &y, &k1, s);
            if !finite(&y_ev) {
                return Err(OdeError::NotFinite { t: t + s });
            }
            record(t + s, &y_ev);
            return Ok((t + s, y_ev, Ending::Event(k)));
        }
        for (k, g) in events.iter().enumerate() {
            g_prev[k] = g(t_new, &y_new);
        }
        t = t_new;
        y = y_new;
        k1 = k7;
        if !finite(&k1) {
            return Err(OdeError::NotFinite { t });
        }
        record(t, &y);
        let grow = if norm == 0.0 {
            5.0
        } else {
            (0.9 * norm.powf(-0.2)).clamp(0.2, 5.0)
        };
        h = h_try * grow;
    }
}

/// The step length `s` in `(0, h]` at which `g` reaches zero, by the
/// Illinois variant of regula falsi on single steps from the step start.
#[allow(clippy::too_many_arguments)]
fn locate<const N: usize>(
    f: &dyn Fn(f64, &[f64; N]) -> [f64; N],
    t: f64,
    y: &[f64; N],
    k1: &[f64; N],
    h: f64,
    g0: f64,
    g1: f64,
    g: Event<'_, N>,
) -> f64 {
    let (mut a, mut fa) = (0.0, g0);
    let (mut b, mut fb) = (h, g1);
    let mut side = 0i8;
    for _ in 0..100 {
        if fb == 0.0 || (b - a).abs() <= 1e-15 * (t.abs() + h) {
            break;
        }
        let c = (a * fb - b * fa) / (fb - fa);
        let (yc, _, _) = step(f, t, y, k1, c);
        let fc = g(t + c, &yc);
        if fc >= 0.0 {
            b = c;
            fb = fc;
            if side == 1 {
                fa *= 0.5;
            }
            side = 1;
        } else {
            a = c;
            fa = fc;
            if side == -1 {
                fb *= 0.5;
            }
            side = -1;
        }
        if fc.abs() <= 1e-13 * (1.0 + g0.abs().max(g1.abs())) {
            return c;
        }
    }
    b
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn exponential_decay_is_integrated_to_the_tolerance() {
        // dy/dt = -y, y(0) = 1: y(t) = exp(-t) (exact, elementary).
        let f = |_t: f64, y: &[f64; 1]| [-y[0]];
        let (t, y, end) = integrate(
            &f,
            0.0,
            [1.0],
            5.0,
            &[],
            &Tolerance::default(),
            &mut |_, _| {},
        )
        .unwrap();
        assert_eq!(end, Ending::EndTime);
        assert!((t - 5.0).abs() < 1e-12);
        assert!((y[0] - (-5.0f64).exp()).abs() < 1e-9);
    }

    #[test]
    fn an_event_is_located_on_the_solution() {
        // Free fall from rest, y = [height fallen, speed]: y0 = g t^2 / 2
        // reaches 10 m at t = sqrt(20 / g) (exact, elementary).
        let g = 9.81;
        let f = |_t: f64, y: &[f64; 2]| [y[1], g];
        let ev = |_t: f64, y: &[f64; 2]| y[0] - 10.0;
        let (t, y, end) = integrate(
            &f,
            0.0,
            [0.0, 0.0],
            100.0,
            &[&ev],
            &Tolerance::default(),
            &mut |_, _| {},
        )
        .unwrap();
        assert_eq!(end, Ending::Event(0));
        assert!((t - (20.0 / g).sqrt()).abs() < 1e-10);
        assert!((y[0] - 10.0).abs() < 1e-9);
        assert!((y[1] - (2.0 * g * 10.0).sqrt()).abs() < 1e-9);
    }

    #[test]
    fn a_blow_up_is_reported_not_returned() {
        // dy/dt = y^2, y(0) = 1 blows up at t = 1.
        let f = |_t: f64, y: &[f64; 1]| [y[0] * y[0]];
        let r = integrate(
            &f,
            0.0,
            [1.0],
            2.0,
            &[],
            &Tolerance {
                max_steps: 10_000,
                ..Tolerance::default()
            },
            &mut |_, _| {},
        );
        assert!(r.is_err());
    }
}
