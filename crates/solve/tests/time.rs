//! Time integrators on a linear test ODE with a known solution.
//! Test problem (constructed, exact solution by substitution; common practice, no source):
//!   ẋ = −λ (x − sin t) + cos t,  x(0) = 1  ⇒  x(t) = sin t + e^{−λ t}.
//! Expected orders: backward Euler 1, BDF2 2 (Hairer & Wanner, Solving ODEs II, ch. III; from
//! memory).

use std::sync::Arc;

use dilata_linalg::{CsrMatrix, CsrPattern, DirectParams, FaerLu, LinearSolver, Ordering};
use dilata_solve::newton::{DiscreteSystem, NewtonParams};
use dilata_solve::time::{
    AdaptiveParams, EnergyControl, Integrator, IntegratorParams, Scheme, StepError, StepSizing,
    TransientSystem,
};

#[derive(Debug, thiserror::Error)]
#[error("refused: step too large ({0:e})")]
struct Refused(f64);

/// Uncoupled copies of the test equation with different λ.
struct Decay {
    lambdas: Vec<f64>,
    pattern: Arc<CsrPattern>,
    t: f64,
    a0: f64,
    history: Vec<f64>,
    /// Refuse (as a recoverable error) steps longer than this.
    max_dt: f64,
    last_t: f64,
    /// Free energy of a state, for the energy control (None: the system reports none).
    energy: Option<fn(&[f64]) -> f64>,
}

impl Decay {
    fn new(lambdas: Vec<f64>) -> Self {
        let n = lambdas.len();
        let pattern = Arc::new(CsrPattern::from_rows(n, (0..n).map(|i| vec![i]).collect()));
        Decay {
            lambdas,
            pattern,
            t: 0.0,
            a0: 0.0,
            history: vec![0.0; n],
            max_dt: f64::INFINITY,
            last_t: 0.0,
            energy: None,
        }
    }
    fn exact(&self, t: f64) -> Vec<f64> {
        self.lambdas
            .iter()
            .map(|l| t.sin() + (-l * t).exp())
            .collect()
    }
    fn residual(&self, x: &[f64], r: &mut [f64]) -> Result<(), Refused> {
        if self.t - self.last_t > self.max_dt {
            return Err(Refused(self.t - self.last_t));
        }
        for i in 0..x.len() {
            let l = self.lambdas[i];
            let rate = self.a0 * x[i] + self.history[i];
            r[i] = rate + l * (x[i] - self.t.sin()) - self.t.cos();
        }
        Ok(())
    }
}

impl DiscreteSystem for Decay {
    type Error = Refused;
    fn n_dofs(&self) -> usize {
        self.lambdas.len()
    }
    fn pattern(&self) -> Arc<CsrPattern> {
        self.pattern.clone()
    }
    fn impose_constraints(&self, _x: &mut [f64]) {}
    fn assemble_into(
        &mut self,
        x: &[f64],
        j: &mut CsrMatrix,
        r: &mut [f64],
    ) -> Result<(), Refused> {
        for i in 0..x.len() {
            j.values[i] = self.a0 + self.lambdas[i];
        }
        self.residual(x, r)
    }
    fn residual_into(&mut self, x: &[f64], r: &mut [f64]) -> Result<(), Refused> {
        self.residual(x, r)
    }
}

impl TransientSystem for Decay {
    fn begin_step(&mut self, t_new: f64, a0: f64, history: &[f64]) {
        self.t = t_new;
        self.a0 = a0;
        self.history.copy_from_slice(history);
    }
    fn free_energy(&self, x: &[f64]) -> Option<f64> {
        self.energy.map(|e| e(x))
    }
}

fn newton_params() -> NewtonParams {
    NewtonParams {
        abs_tol: 1e-13,
        rel_tol: 1e-12,
        step_tol: 1e-12,
        max_iterations: 6,
        max_backtracks: 0,
    }
}

fn solver_for(sys: &Decay) -> FaerLu {
    let mut s = FaerLu::new(DirectParams::with_ordering(Ordering::Natural));
    s.analyze(&sys.pattern).unwrap();
    s
}

fn integrate(
    scheme: Scheme,
    sizing: StepSizing,
    t_end: f64,
    sys: &mut Decay,
) -> (Integrator, Vec<f64>) {
    let mut solver = solver_for(sys);
    let params = IntegratorParams {
        scheme,
        sizing,
        newton: newton_params(),
        cut_factor: 0.25,
        dt_min: 1e-9,
        energy: None,
    };
    let mut integ = Integrator::new(params, 0.0, sys.exact(0.0));
    while integ.state.t < t_end {
        sys.last_t = integ.state.t;
        integ.step(sys, &mut solver, t_end).unwrap();
    }
    let err: Vec<f64> = integ
        .state
        .x
        .iter()
        .zip(sys.exact(t_end))
        .map(|(a, b)| (a - b).abs())
        .collect();
    (integ, err)
}

fn observed_order(scheme: Scheme) -> f64 {
    let mut errors = Vec::new();
    for n in [40, 80, 160] {
        let mut sys = Decay::new(vec![2.0, 0.5]);
        let (integ, err) = integrate(
            scheme,
            StepSizing::Fixed { dt: 1.0 / n as f64 },
            1.0,
            &mut sys,
        );
        assert_eq!(integ.state.t, 1.0, "end time hit exactly");
        assert_eq!(integ.state.n_accepted, n);
        errors.push(err.iter().cloned().fold(0.0, f64::max));
    }
    (errors[1] / errors[2]).log2()
}

#[test]
fn backward_euler_is_first_order() {
    let p = observed_order(Scheme::BackwardEuler);
    assert!((p - 1.0).abs() < 0.1, "order {p}");
}

#[test]
fn bdf2_is_second_order() {
    let p = observed_order(Scheme::Bdf2);
    assert!((p - 2.0).abs() < 0.1, "order {p}");
}

#[test]
fn adaptive_steps_meet_tolerance_and_hit_the_end_time() {
    for scheme in [Scheme::BackwardEuler, Scheme::Bdf2] {
        let mut sys = Decay::new(vec![20.0, 1.0]);
        let a = AdaptiveParams {
            dt_initial: 1e-4,
            dt_min: 1e-9,
            dt_max: 0.5,
            rtol: 1e-4,
            atol: 1e-6,
            safety: 0.9,
            max_growth: 2.0,
            predictive: true,
            newton_error_test: None,
        };
        let (integ, err) = integrate(scheme, StepSizing::Adaptive(a), 2.0, &mut sys);
        let worst = err.iter().cloned().fold(0.0, f64::max);
        eprintln!(
            "{scheme:?}: {} accepted, {} rejected, error {worst:e}",
            integ.state.n_accepted, integ.state.n_rejected
        );
        assert_eq!(integ.state.t, 2.0);
        // Global error is a modest multiple of the local tolerance.
        assert!(worst < 1e-2, "{scheme:?} error {worst:e}");
        // Step sizes adapt: far fewer steps than the initial step would need.
        assert!(
            integ.state.n_accepted < 2000,
            "{scheme:?}: {} steps",
            integ.state.n_accepted
        );
    }
}

#[test]
fn failed_steps_are_cut_and_retried_then_stop_below_minimum() {
    // The system refuses steps longer than 0.03: fixed 0.1 steps must be cut to 0.025.
    let mut sys = Decay::new(vec![1.0]);
    sys.max_dt = 0.03;
    let mut solver = solver_for(&sys);
    let params = IntegratorParams {
        scheme: Scheme::BackwardEuler,
        sizing: StepSizing::Fixed { dt: 0.1 },
        newton: newton_params(),
        cut_factor: 0.25,
        dt_min: 1e-3,
        energy: None,
    };
    let mut integ = Integrator::new(params, 0.0, sys.exact(0.0));
    sys.last_t = 0.0;
    let report = integ.step(&mut sys, &mut solver, 1.0).unwrap();
    assert!((report.dt - 0.025).abs() < 1e-15);
    assert_eq!(report.rejections.len(), 1);
    assert!(
        report.rejections[0].contains("refused"),
        "{:?}",
        report.rejections
    );
    // A system that refuses everything: the run stops with the cause and the state unchanged.
    sys.max_dt = 0.0;
    sys.last_t = integ.state.t;
    let before = integ.state.clone();
    match integ.step(&mut sys, &mut solver, 1.0) {
        Err(StepError::StepTooSmall { cause, .. }) => assert!(cause.contains("refused"), "{cause}"),
        other => panic!("expected StepTooSmall, got {other:?}"),
    }
    assert_eq!(integ.state.x, before.x);
    assert_eq!(integ.state.t, before.t);
}

fn adaptive() -> StepSizing {
    StepSizing::Adaptive(AdaptiveParams {
        dt_initial: 0.05,
        dt_min: 1e-6,
        dt_max: 0.5,
        rtol: 1e-4,
        atol: 1e-6,
        safety: 0.9,
        max_growth: 2.0,
        predictive: true,
        newton_error_test: None,
    })
}

/// With `x' = cos t − (x − sin t)`, `x(0) = 1`, the solution `sin t + e^{−t}` first rises
/// (`x' = cos t − e^{−t} > 0` for small t), so an "energy" `x²` must rise too: a control that
/// rejects every rise cannot take a step, and the run stops below the minimum step with the
/// energy rise named as the cause.
#[test]
fn energy_control_rejects_a_rise_and_names_it() {
    let mut sys = Decay::new(vec![1.0]);
    sys.energy = Some(|x: &[f64]| x[0] * x[0]);
    let mut solver = solver_for(&sys);
    let params = IntegratorParams {
        scheme: Scheme::BackwardEuler,
        sizing: adaptive(),
        newton: newton_params(),
        cut_factor: 0.25,
        dt_min: 1e-6,
        energy: Some(EnergyControl {
            allowance: 1e-12,
            max_change: None,
        }),
    };
    let mut integ = Integrator::new(params, 0.0, sys.exact(0.0));
    let err = integ.step(&mut sys, &mut solver, 1.0).unwrap_err();
    let StepError::StepTooSmall { cause, .. } = err;
    assert!(cause.contains("free energy rose"), "{cause}");
    assert_eq!(integ.state.t, 0.0);
    assert!(integ.state.n_rejected > 5);
}

/// A bound on the relative change of an "energy" `1 + x²` per step, for the forced decay with
/// solution `sin t + e^{−2t}`: every accepted step changes the energy by at most the bound, and
/// the bound (not the error estimate) caused rejections.
#[test]
fn energy_change_bound_limits_every_step() {
    let mut sys = Decay::new(vec![2.0]);
    sys.energy = Some(|x: &[f64]| 1.0 + x[0] * x[0]);
    let mut solver = solver_for(&sys);
    let params = IntegratorParams {
        scheme: Scheme::Bdf2,
        sizing: adaptive(),
        newton: newton_params(),
        cut_factor: 0.25,
        dt_min: 1e-9,
        energy: Some(EnergyControl {
            allowance: f64::INFINITY,
            max_change: Some(0.01),
        }),
    };
    let mut integ = Integrator::new(params, 0.0, sys.exact(0.0));
    let energy = |x: &[f64]| 1.0 + x[0] * x[0];
    let mut bound_rejections = 0;
    while integ.state.t < 3.0 {
        let e_old = energy(&integ.state.x);
        sys.last_t = integ.state.t;
        let report = integ.step(&mut sys, &mut solver, 3.0).unwrap();
        let e_new = energy(&integ.state.x);
        assert!(
            ((e_new - e_old) / e_old).abs() <= 0.01,
            "step to t = {}: energy {e_old} -> {e_new}",
            report.t
        );
        bound_rejections += report
            .rejections
            .iter()
            .filter(|c| c.contains("free energy changed"))
            .count();
    }
    assert!(bound_rejections > 0);
}

/// A step accepted after its error estimate rejected a longer one proposes no longer a next
/// step (Hairer, Nørsett and Wanner, Solving ODEs I, sec. II.4, from memory); one accepted
/// after a refused (Newton-failed) attempt may grow.
#[test]
fn no_growth_right_after_an_error_rejection() {
    let a = AdaptiveParams {
        dt_initial: 0.5,
        dt_min: 1e-9,
        dt_max: 10.0,
        rtol: 1e-4,
        atol: 1e-6,
        safety: 0.9,
        max_growth: 2.0,
        predictive: true,
        newton_error_test: None,
    };
    let params = |sizing| IntegratorParams {
        scheme: Scheme::Bdf2,
        sizing,
        newton: newton_params(),
        cut_factor: 0.25,
        dt_min: 1e-9,
        energy: None,
    };
    let mut sys = Decay::new(vec![1.0]);
    let mut solver = solver_for(&sys);
    let mut integ = Integrator::new(params(StepSizing::Adaptive(a)), 0.0, sys.exact(0.0));
    let mut seen = 0;
    let mut last: Option<(f64, f64)> = None;
    while integ.state.t < 20.0 {
        sys.last_t = integ.state.t;
        let report = integ.step(&mut sys, &mut solver, 20.0).unwrap();
        let err = report.error.unwrap_or(0.0);
        // Whether the predictive factor (if any) would also let the step grow.
        let predicted_growth = last.is_none_or(|(h, e): (f64, f64)| {
            0.9 * (report.dt / h) * (e / (err * err)).powf(1.0 / 3.0) > 1.0
        });
        if integ.state.n_accepted >= 2 {
            last = report.error.map(|e| (report.dt, e));
        }
        if report.rejections.iter().any(|r| r.contains("local error")) {
            seen += 1;
            assert!(
                integ.state.dt_next <= report.dt,
                "after an error rejection at t = {}: dt {} -> {}",
                report.t,
                report.dt,
                integ.state.dt_next
            );
        } else if err > 0.0
            && err < 0.5 * 0.9f64.powi(3)
            && predicted_growth
            && integ.state.dt_next < 10.0
        {
            // Without a rejection the same error would have let the step grow.
            assert!(integ.state.dt_next > report.dt);
        }
    }
    assert!(seen > 0, "no step was rejected by its error estimate");
    // A refused attempt (Newton failure) does not freeze the step: after the cut, the next
    // step grows again.
    let mut sys = Decay::new(vec![1.0]);
    sys.max_dt = 0.3;
    let mut integ = Integrator::new(params(StepSizing::Adaptive(a)), 0.0, sys.exact(0.0));
    sys.last_t = 0.0;
    let report = integ.step(&mut sys, &mut solver, 20.0).unwrap();
    assert!(report.rejections.iter().all(|r| r.contains("refused")));
    assert_eq!(report.rejections.len(), 1);
    assert!(
        integ.state.dt_next > report.dt,
        "{} -> {}",
        report.dt,
        integ.state.dt_next
    );
}

/// Gustafsson's predictive factor (Hairer & Wanner, Solving ODEs II, sec. IV.8, from memory)
/// bounds every step after one of the same order: `Δt_{n+1} ≤ 0.9 (Δt_n / Δt_{n−1})
/// (err_{n−1} / err_n²)^(1/3) Δt_n` for BDF2. On the test equation, whose error rises and
/// falls with `sin t`, it must reject no more attempts than the classical rule alone.
#[test]
fn the_predictive_factor_bounds_the_next_step() {
    let sizing = |predictive| {
        StepSizing::Adaptive(AdaptiveParams {
            dt_initial: 1e-3,
            dt_min: 1e-9,
            dt_max: 10.0,
            rtol: 1e-5,
            atol: 1e-7,
            safety: 0.9,
            max_growth: 2.0,
            predictive,
            newton_error_test: None,
        })
    };
    let mut counts = Vec::new();
    for predictive in [false, true] {
        let mut sys = Decay::new(vec![1.0, 0.2]);
        let mut solver = solver_for(&sys);
        let params = IntegratorParams {
            scheme: Scheme::Bdf2,
            sizing: sizing(predictive),
            newton: newton_params(),
            cut_factor: 0.25,
            dt_min: 1e-9,
            energy: None,
        };
        let mut integ = Integrator::new(params, 0.0, sys.exact(0.0));
        let mut previous: Option<(f64, f64)> = None;
        let mut binding = 0;
        while integ.state.t < 30.0 {
            sys.last_t = integ.state.t;
            let report = integ.step(&mut sys, &mut solver, 30.0).unwrap();
            // The first step (backward Euler, no history) has no estimate.
            let Some(err) = report.error else {
                previous = None;
                continue;
            };
            let classical = (0.9 * err.powf(-1.0 / 3.0)).clamp(0.2, 2.0);
            if let (Some((h, e)), true) = (previous, report.rejections.is_empty()) {
                let g = (0.9 * (report.dt / h) * (e / (err * err)).powf(1.0 / 3.0)).clamp(0.2, 2.0);
                let next = integ.state.dt_next;
                if integ.state.t < 30.0 && next < 10.0 {
                    if predictive {
                        assert!(
                            next <= report.dt * g * (1.0 + 1e-12),
                            "t = {}: {next} above the predictive bound {}",
                            report.t,
                            report.dt * g
                        );
                        binding += usize::from(g < classical);
                    } else {
                        assert!((next - report.dt * classical).abs() <= 1e-12 * next);
                    }
                }
            }
            previous = Some((report.dt, err));
        }
        eprintln!(
            "predictive {predictive}: {} accepted, {} rejected, predictive factor binding {binding} times",
            integ.state.n_accepted, integ.state.n_rejected
        );
        if predictive {
            assert!(binding > 0, "the predictive factor never bound the step");
        }
        counts.push(integ.state.n_rejected);
    }
    assert!(
        counts[1] < counts[0],
        "rejections: classical {}, predictive {}",
        counts[0],
        counts[1]
    );
}

/// Logistic growth `ẋ = k x (1 − x)` with an algebraic companion `y = x²` (a second block that
/// carries no rate), exact `x(t) = 1 / (1 + (1/x₀ − 1) e^{−k t})` (textbook solution, common
/// practice, no source).
struct Logistic {
    k: f64,
    pattern: Arc<CsrPattern>,
    t: f64,
    a0: f64,
    history: Vec<f64>,
}

impl Logistic {
    const X0: f64 = 0.01;
    fn new(k: f64) -> Self {
        Logistic {
            k,
            pattern: Arc::new(CsrPattern::from_rows(2, vec![vec![0, 1], vec![0, 1]])),
            t: 0.0,
            a0: 0.0,
            history: vec![0.0; 2],
        }
    }
    fn exact(&self, t: f64) -> f64 {
        1.0 / (1.0 + (1.0 / Self::X0 - 1.0) * (-self.k * t).exp())
    }
}

impl DiscreteSystem for Logistic {
    type Error = Refused;
    fn n_dofs(&self) -> usize {
        2
    }
    fn pattern(&self) -> Arc<CsrPattern> {
        self.pattern.clone()
    }
    fn impose_constraints(&self, _x: &mut [f64]) {}
    fn assemble_into(
        &mut self,
        x: &[f64],
        j: &mut CsrMatrix,
        r: &mut [f64],
    ) -> Result<(), Refused> {
        j.values
            .copy_from_slice(&[self.a0 - self.k * (1.0 - 2.0 * x[0]), 0.0, -2.0 * x[0], 1.0]);
        self.residual_into(x, r)
    }
    fn residual_into(&mut self, x: &[f64], r: &mut [f64]) -> Result<(), Refused> {
        r[0] = self.a0 * x[0] + self.history[0] - self.k * x[0] * (1.0 - x[0]);
        r[1] = x[1] - x[0] * x[0];
        Ok(())
    }
    fn blocks(&self) -> Vec<std::ops::Range<usize>> {
        vec![0..1, 1..2]
    }
}

impl TransientSystem for Logistic {
    fn begin_step(&mut self, t_new: f64, a0: f64, history: &[f64]) {
        self.t = t_new;
        self.a0 = a0;
        self.history.copy_from_slice(history);
    }
    fn is_dynamic(&self, i: usize) -> bool {
        i == 0
    }
}

/// The correction test (`AdaptiveParams::newton_error_test`) saves Newton iterations without
/// spending the time step's accuracy: the solution stays as close to the exact one as with
/// the residual test alone, and the algebraic unknown within a tenth of its tolerance of
/// `x²`. Measured when written: 31 steps either way, 80 → 60 iterations, the same largest
/// error 1.21e-2, algebraic defect 1.4e-8.
#[test]
fn the_newton_error_test_saves_iterations_within_the_step_tolerance() {
    let run = |test: Option<f64>| {
        let mut sys = Logistic::new(5.0);
        let mut solver = FaerLu::new(DirectParams::with_ordering(Ordering::Natural));
        solver.analyze(&sys.pattern).unwrap();
        let params = IntegratorParams {
            scheme: Scheme::Bdf2,
            sizing: StepSizing::Adaptive(AdaptiveParams {
                dt_initial: 1e-3,
                dt_min: 1e-9,
                dt_max: 1.0,
                rtol: 1e-2,
                atol: 1e-6,
                safety: 0.9,
                max_growth: 2.0,
                predictive: true,
                newton_error_test: test,
            }),
            newton: NewtonParams {
                max_iterations: 15,
                ..newton_params()
            },
            cut_factor: 0.25,
            dt_min: 1e-9,
            energy: None,
        };
        let x0 = Logistic::X0;
        let mut integ = Integrator::new(params, 0.0, vec![x0, x0 * x0]);
        let (mut iterations, mut worst, mut worst_algebraic) = (0, 0.0_f64, 0.0_f64);
        while integ.state.t < 4.0 {
            let report = integ.step(&mut sys, &mut solver, 4.0).unwrap();
            iterations += report.newton.iterations;
            let x = &integ.state.x;
            worst = worst.max((x[0] - sys.exact(report.t)).abs());
            worst_algebraic = worst_algebraic.max((x[1] - x[0] * x[0]).abs());
        }
        (integ.state.n_accepted, iterations, worst, worst_algebraic)
    };
    let (steps, plain, error, _) = run(None);
    let (steps_t, tested, error_t, algebraic_t) = run(Some(0.1));
    eprintln!(
        "residual test: {steps} steps, {plain} iterations, error {error:.3e}; \
         with the error test: {steps_t} steps, {tested} iterations, error {error_t:.3e}, \
         algebraic defect {algebraic_t:.3e}"
    );
    assert!(tested < plain, "{tested} vs {plain} iterations");
    assert!(error_t <= 1.2 * error, "{error_t:e} vs {error:e}");
    // The algebraic unknown within a tenth of its tolerance (rtol · max |y| ≤ 1e-2).
    assert!(algebraic_t <= 0.1 * 1e-2, "{algebraic_t:e}");
}
