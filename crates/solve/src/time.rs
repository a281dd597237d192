//! Implicit time integration with adaptive steps: backward Euler and variable-step BDF2.
//!
//! Generic over a [`TransientSystem`]: a discrete system whose residual uses the rate
//! approximation `ẋ ≈ a0 · x + h` handed to it by [`TransientSystem::begin_step`] (the
//! integrator owns the history; the system decides which unknowns carry a rate).
//!
//! Rate coefficients for a step `Δt_n` after a step `Δt_{n−1}`, with `ω = Δt_n / Δt_{n−1}`
//! (variable-step BDF2; Hairer & Wanner, Solving Ordinary Differential Equations II, section
//! III.5, from memory; re-derived here from the quadratic through the three points):
//!   `ẋ_{n+1} ≈ [(1+2ω)/(1+ω) x_{n+1} − (1+ω) x_n + ω²/(1+ω) x_{n−1}] / Δt_n`.
//! Backward Euler: `ẋ_{n+1} ≈ (x_{n+1} − x_n)/Δt_n`.
//!
//! Local error estimate (predictor–corrector difference, "Milne's device"; Gresho & Sani,
//! Incompressible Flow and the Finite Element Method, 2000, section 3.16, from memory): with a
//! predictor extrapolating the last k+1 solutions (k the order),
//!   `LTE ≈ Δt_n / (t_{n+1} − t_{n−k}) · (x_{n+1} − x_pred)`,
//! measured in the weighted RMS norm `sqrt(mean((e_i / (atol + rtol |x_i|))²))` over the
//! unknowns the system marks as dynamic. A step is accepted when that norm is at most 1; the next
//! step is `Δt · safety · norm^(−1/(k+1))`, limited by the growth and shrink bounds, by `Δt`
//! itself right after the estimate rejected a longer attempt of the same step, and by the
//! predictive factor of Gustafsson when the last accepted step has an estimate of the same
//! order (see `predictive_factor`).

use crate::newton::{
    newton_in_step, CorrectionTest, DiscreteSystem, NewtonError, NewtonInfo, NewtonParams,
};
use dilata_linalg::LinearSolver;

/// A discrete system with a time derivative.
pub trait TransientSystem: DiscreteSystem {
    /// Prepare the step ending at `t_new`: the residual must use `ẋ ≈ a0 · x + history` for
    /// the unknowns that carry a rate (and update time-dependent boundary values to `t_new`).
    fn begin_step(&mut self, t_new: f64, a0: f64, history: &[f64]);
    /// Whether unknown `i` carries a rate and enters the error estimate. Default: all.
    fn is_dynamic(&self, i: usize) -> bool {
        let _ = i;
        true
    }
    /// Whether a converged solution of a step is admissible (e.g. every nodal concentration
    /// inside the range of its law). An `Err` rejects the step, which is retried smaller; the
    /// message says where and why. Default: always admissible.
    fn check_solution(&self, x: &[f64]) -> Result<(), String> {
        let _ = x;
        Ok(())
    }
    /// Total free energy of state `x`, for [`EnergyControl`]. Default: none (the control is
    /// then inactive).
    fn free_energy(&self, x: &[f64]) -> Option<f64> {
        let _ = x;
        None
    }
}

/// Step control by the total free energy, for closed systems where it must not rise (phase
/// separation with zero-flux or periodic boundaries and constant loads): a step whose energy
/// exceeds the last accepted one by more than `allowance × |E|` is rejected and retried
/// smaller, and so is a step whose relative energy change exceeds `max_change` (when set).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct EnergyControl {
    /// Relative rise tolerated as round-off of the energy integral itself.
    pub allowance: f64,
    /// Largest relative change `|E_new − E_old| / |E_old|` of one step.
    pub max_change: Option<f64>,
}

/// Time-stepping scheme.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Scheme {
    /// First order, L-stable.
    BackwardEuler,
    /// Second order, variable step; the first step is taken with backward Euler.
    Bdf2,
}

impl Scheme {
    pub fn order(self) -> usize {
        match self {
            Scheme::BackwardEuler => 1,
            Scheme::Bdf2 => 2,
        }
    }
}

/// How the step size is chosen.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum StepSizing {
    /// Constant step (still cut after a failed Newton solve).
    Fixed { dt: f64 },
    /// Adaptive from the local error estimate.
    Adaptive(AdaptiveParams),
}

/// Parameters of adaptive step control.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct AdaptiveParams {
    pub dt_initial: f64,
    pub dt_min: f64,
    pub dt_max: f64,
    /// Relative tolerance of the local error.
    pub rtol: f64,
    /// Absolute tolerance of the local error (units of the unknowns).
    pub atol: f64,
    /// Safety factor applied to the predicted step (0.8–0.9 usual).
    pub safety: f64,
    /// Largest growth factor of one step to the next.
    pub max_growth: f64,
    /// Also bound the next step by Gustafsson's predictive factor (see `predictive_factor`).
    pub predictive: bool,
    /// Also let Newton stop when the error it leaves is at most this fraction of the local
    /// error tolerance ([`CorrectionTest`]; `None`: the residual test alone). The weights are
    /// those of the error estimate for the unknowns that carry a rate, and `1/(rtol · m_b)` for
    /// the others, `m_b` the largest magnitude of their block (`DiscreteSystem::blocks`) in
    /// the last accepted state or the block's scale, whichever is larger.
    pub newton_error_test: Option<f64>,
}

/// Parameters of the integrator.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct IntegratorParams {
    pub scheme: Scheme,
    pub sizing: StepSizing,
    pub newton: NewtonParams,
    /// Factor by which a step is cut after a failure (Newton, system error, error estimate).
    pub cut_factor: f64,
    /// Smallest step allowed; a step that must be cut below it stops the run.
    pub dt_min: f64,
    /// Free-energy step control (None: off).
    pub energy: Option<EnergyControl>,
}

/// The integrator's state; cloneable so a caller can checkpoint it.
#[derive(Clone, Debug, PartialEq)]
pub struct IntegratorState {
    pub t: f64,
    pub x: Vec<f64>,
    /// Earlier solutions, newest first, with the times they belong to.
    pub past: Vec<(f64, Vec<f64>)>,
    /// Step size proposed for the next step.
    pub dt_next: f64,
    pub n_accepted: usize,
    pub n_rejected: usize,
    /// The last accepted step's size and error estimate, for the predictive step control
    /// (None: not estimated, or the multistep history was restarted).
    pub last_error: Option<AcceptedError>,
}

/// Size, weighted local error norm and order of an accepted step.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct AcceptedError {
    pub dt: f64,
    pub error: f64,
    pub order: usize,
}

/// The step factor of Gustafsson's predictive controller, as in Hairer & Wanner (Solving
/// Ordinary Differential Equations II, 2nd ed., Springer 1996, sec. IV.8, from
/// memory): `safety · (Δt_n / Δt_acc) · (err_acc / err_n²)^(1/(k+1))`, from this step
/// (`Δt_n`, `err_n`) and the last accepted one, within the growth and shrink bounds. The
/// integrator takes the smaller of this and the classical factor, as that book's RADAU5 code
/// does: a rising error shortens the next step before it is rejected.
fn predictive_factor(a: &AdaptiveParams, last: AcceptedError, dt: f64, err: f64, k: f64) -> f64 {
    let err = err.max(1e-10);
    let ratio = last.error.max(1e-10) / (err * err);
    (a.safety * (dt / last.dt) * ratio.powf(1.0 / (k + 1.0))).clamp(0.2, a.max_growth)
}

/// The rate rule of one step: `ẋ_{n+1} ≈ a0 x_{n+1} + a1 x_n + a2 x_{n−1}` (`a2 = 0` for
/// backward Euler), with the coefficients of the module documentation.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct RateRule {
    pub a0: f64,
    pub a1: f64,
    pub a2: f64,
}

impl RateRule {
    /// Backward Euler for a step `dt` (no previous step), or variable-step BDF2 after a step
    /// `dt_prev`.
    pub fn for_step(dt: f64, dt_prev: Option<f64>) -> RateRule {
        match dt_prev {
            None => RateRule {
                a0: 1.0 / dt,
                a1: -1.0 / dt,
                a2: 0.0,
            },
            Some(prev) => {
                let w = dt / prev;
                RateRule {
                    a0: (1.0 + 2.0 * w) / ((1.0 + w) * dt),
                    a1: -(1.0 + w) / dt,
                    a2: w * w / ((1.0 + w) * dt),
                }
            }
        }
    }
}

/// What one accepted step did.
#[derive(Clone, Debug, PartialEq)]
pub struct StepReport {
    pub t: f64,
    pub dt: f64,
    /// The rate rule the step used.
    pub rate: RateRule,
    pub newton: NewtonInfo,
    /// Weighted local error norm (None when not estimated).
    pub error: Option<f64>,
    /// Rejected attempts before this step was accepted, with their causes.
    pub rejections: Vec<String>,
}

/// Why the integrator stopped.
#[derive(Debug, thiserror::Error)]
pub enum StepError {
    #[error(
        "step size {dt:e} at t = {t:e} is below the minimum {dt_min:e}; last failure: {cause}"
    )]
    StepTooSmall {
        t: f64,
        dt: f64,
        dt_min: f64,
        cause: String,
    },
}

/// Implicit integrator over a [`TransientSystem`].
pub struct Integrator {
    pub params: IntegratorParams,
    pub state: IntegratorState,
    /// Free energy of the last accepted state and its time (a cache of
    /// `TransientSystem::free_energy`, recomputed when absent, so not part of the state).
    energy: Option<(f64, f64)>,
}

impl Integrator {
    /// Start at time `t0` from `x0`.
    pub fn new(params: IntegratorParams, t0: f64, x0: Vec<f64>) -> Self {
        let dt = match params.sizing {
            StepSizing::Fixed { dt } => dt,
            StepSizing::Adaptive(a) => a.dt_initial,
        };
        assert!(dt > 0.0 && dt.is_finite(), "initial step must be positive");
        Integrator {
            params,
            state: IntegratorState {
                t: t0,
                x: x0,
                past: Vec::new(),
                dt_next: dt,
                n_accepted: 0,
                n_rejected: 0,
                last_error: None,
            },
            energy: None,
        }
    }

    /// Take one accepted step, ending no later than `t_stop` (hit exactly when it is within
    /// reach). On failure the state is left at the last accepted step.
    pub fn step<S: TransientSystem>(
        &mut self,
        system: &mut S,
        solver: &mut dyn LinearSolver,
        t_stop: f64,
    ) -> Result<StepReport, StepError> {
        let mut dt = self.state.dt_next;
        let mut rejections = Vec::new();
        let mut error_rejected = false;
        let n = self.state.x.len();
        let mut history = vec![0.0; n];
        let weights = match self.params.sizing {
            StepSizing::Adaptive(a) => a
                .newton_error_test
                .map(|c| (self.correction_weights(system, &a), c)),
            StepSizing::Fixed { .. } => None,
        };
        let test = weights.as_ref().map(|(w, c)| CorrectionTest {
            weights: w,
            coefficient: *c,
        });
        loop {
            // Land exactly on t_stop; avoid a sliver step just before it.
            let remaining = t_stop - self.state.t;
            if dt >= remaining || remaining - dt < 1e-3 * dt {
                dt = remaining;
            }
            let dt_min = match self.params.sizing {
                StepSizing::Adaptive(a) => a.dt_min.max(self.params.dt_min),
                StepSizing::Fixed { .. } => self.params.dt_min,
            };
            if dt < dt_min && dt < remaining {
                return Err(StepError::StepTooSmall {
                    t: self.state.t,
                    dt,
                    dt_min,
                    cause: rejections.last().cloned().unwrap_or_default(),
                });
            }
            let t_new = self.state.t + dt;
            let order = self.effective_order();
            let rule = self.rate_coefficients_into(dt, order, &mut history);
            system.begin_step(t_new, rule.a0, &history);
            let mut x = self.predict(dt, order);
            let attempt =
                newton_in_step(system, solver, &mut x, &self.params.newton, test.as_ref());
            let info = match attempt {
                Ok(info) => info,
                Err(e) => {
                    rejections.push(describe(&e));
                    self.state.n_rejected += 1;
                    dt *= self.params.cut_factor;
                    continue;
                }
            };
            if let Err(why) = system.check_solution(&x) {
                rejections.push(why);
                self.state.n_rejected += 1;
                dt *= self.params.cut_factor;
                continue;
            }
            // Error estimate and step proposal.
            let (error, dt_next) = match self.params.sizing {
                StepSizing::Fixed { dt: fixed } => (None, fixed),
                StepSizing::Adaptive(a) => match self.error_norm(system, &x, dt, order, &a) {
                    None => (None, (dt * a.max_growth.min(1.5)).min(a.dt_max)),
                    Some(err) => {
                        let k = order as f64;
                        let factor = (a.safety * err.max(1e-10).powf(-1.0 / (k + 1.0)))
                            .clamp(0.2, a.max_growth);
                        if err > 1.0 {
                            error_rejected = true;
                            rejections.push(format!("local error {err:.3} above tolerance"));
                            self.state.n_rejected += 1;
                            dt = (dt * factor.min(0.9)).max(0.0);
                            continue;
                        }
                        // No growth right after a step rejected by its error estimate
                        // (Hairer, Nørsett and Wanner, Solving ODEs I, 2nd ed., Springer 1993,
                        // sec. II.4, from memory): the estimate has just rejected a step at
                        // least `1/0.9` times this one. (A Newton failure says nothing about
                        // the error, and its cut is a guess.)
                        let mut factor = if error_rejected {
                            factor.min(1.0)
                        } else {
                            factor
                        };
                        // Predictive control (Gustafsson): where the error grew from the last
                        // accepted step to this one, expect it to go on growing.
                        let last = self
                            .state
                            .last_error
                            .filter(|l| a.predictive && l.order == order);
                        if let Some(last) = last {
                            let predictive = predictive_factor(&a, last, dt, err, k);
                            factor = factor.min(predictive);
                        }
                        (Some(err), (dt * factor).min(a.dt_max))
                    }
                },
            };
            // Free-energy control (after the error estimate, the cheaper test).
            let mut energy_after = None;
            if let Some(control) = self.params.energy {
                let e_old = match self.energy {
                    Some((t, e)) if t == self.state.t => Some(e),
                    _ => system.free_energy(&self.state.x),
                };
                if let (Some(e_new), Some(e_old)) = (system.free_energy(&x), e_old) {
                    let scale = e_old.abs().max(f64::MIN_POSITIVE);
                    let change = (e_new - e_old) / scale;
                    let verdict = if change > control.allowance {
                        Some(format!(
                            "free energy rose from {e_old:.9e} to {e_new:.9e} (relative {change:.2e})"
                        ))
                    } else {
                        control.max_change.and_then(|m| {
                            (change.abs() > m).then(|| {
                                format!(
                                    "free energy changed by {:.3e} relative, above the limit {m:e}",
                                    change.abs()
                                )
                            })
                        })
                    };
                    if let Some(why) = verdict {
                        rejections.push(why);
                        self.state.n_rejected += 1;
                        dt *= 0.5;
                        continue;
                    }
                    energy_after = Some(e_new);
                }
            }
            // Accept.
            let old_t = self.state.t;
            let old_x = std::mem::replace(&mut self.state.x, x);
            self.state.past.insert(0, (old_t, old_x));
            self.state.past.truncate(2);
            self.state.t = t_new;
            self.state.dt_next = dt_next;
            self.state.n_accepted += 1;
            self.state.last_error = error.map(|error| AcceptedError { dt, error, order });
            self.energy = energy_after.map(|e| (t_new, e));
            return Ok(StepReport {
                t: t_new,
                dt,
                rate: rule,
                newton: info,
                error,
                rejections,
            });
        }
    }

    /// Order used for the next step (BDF2 falls back to first order until it has history).
    fn effective_order(&self) -> usize {
        match self.params.scheme {
            Scheme::BackwardEuler => 1,
            Scheme::Bdf2 if !self.state.past.is_empty() => 2,
            Scheme::Bdf2 => 1,
        }
    }

    /// Fill `history` with `h` and return `a0` so that `ẋ ≈ a0 x + h`.
    fn rate_coefficients_into(&self, dt: f64, order: usize, history: &mut [f64]) -> RateRule {
        let x_n = &self.state.x;
        if order == 1 {
            for (h, &xn) in history.iter_mut().zip(x_n) {
                *h = -xn / dt;
            }
            return RateRule::for_step(dt, None);
        }
        let (t_prev, x_prev) = &self.state.past[0];
        let rule = RateRule::for_step(dt, Some(self.state.t - t_prev));
        for i in 0..history.len() {
            history[i] = rule.a1 * x_n[i] + rule.a2 * x_prev[i];
        }
        rule
    }

    /// Polynomial extrapolation of order `order` through the last solutions (the current one if
    /// there is no history).
    fn predict(&self, dt: f64, order: usize) -> Vec<f64> {
        let t1 = self.state.t + dt;
        let mut pts: Vec<(f64, &[f64])> = vec![(self.state.t, &self.state.x)];
        for (t, x) in self.state.past.iter().take(order) {
            pts.push((*t, x));
        }
        lagrange_extrapolate(&pts, t1)
    }

    /// Weights of the Newton correction test (see `AdaptiveParams::newton_error_test`).
    fn correction_weights<S: TransientSystem>(&self, system: &S, a: &AdaptiveParams) -> Vec<f64> {
        let x = &self.state.x;
        let mut w = vec![0.0; x.len()];
        for (b, scale) in system.blocks().into_iter().zip(system.block_scales()) {
            let m = x[b.clone()]
                .iter()
                .fold(0.0_f64, |m, v| m.max(v.abs()))
                .max(scale);
            // No relative tolerance, or a block that is zero: its unknowns are not measured.
            let algebraic = if m > 0.0 && a.rtol > 0.0 {
                1.0 / (a.rtol * m)
            } else {
                0.0
            };
            for i in b {
                w[i] = if system.is_dynamic(i) {
                    1.0 / (a.atol + a.rtol * x[i].abs())
                } else {
                    algebraic
                };
            }
        }
        w
    }

    /// Weighted local error norm, or None when there is not enough history for a predictor.
    fn error_norm<S: TransientSystem>(
        &self,
        system: &S,
        x: &[f64],
        dt: f64,
        order: usize,
        a: &AdaptiveParams,
    ) -> Option<f64> {
        if self.state.past.len() < order {
            return None;
        }
        let pred = self.predict(dt, order);
        let t_first = self.state.past[order - 1].0;
        let factor = dt / (self.state.t + dt - t_first);
        let mut sum = 0.0;
        let mut count = 0usize;
        for i in 0..x.len() {
            if system.is_dynamic(i) {
                let e = factor * (x[i] - pred[i]) / (a.atol + a.rtol * x[i].abs());
                sum += e * e;
                count += 1;
            }
        }
        Some(if count == 0 {
            0.0
        } else {
            (sum / count as f64).sqrt()
        })
    }
}

fn describe<E: std::error::Error>(e: &NewtonError<E>) -> String {
    e.to_string()
}

/// Value at `t` of the polynomial through the points `(t_k, x_k)` (Lagrange form).
fn lagrange_extrapolate(pts: &[(f64, &[f64])], t: f64) -> Vec<f64> {
    let n = pts[0].1.len();
    let mut out = vec![0.0; n];
    for (j, (tj, xj)) in pts.iter().enumerate() {
        let mut l = 1.0;
        for (m, (tm, _)) in pts.iter().enumerate() {
            if m != j {
                l *= (t - tm) / (tj - tm);
            }
        }
        for i in 0..n {
            out[i] += l * xj[i];
        }
    }
    out
}
