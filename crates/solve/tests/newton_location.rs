//! A non-finite residual names the first unknown where it appears, so that a driver can say
//! which node, field and cells are involved; a stalled iteration is reported as such.

use std::sync::Arc;

use dilata_linalg::{CsrMatrix, CsrPattern, DirectParams, FaerLu, LinearSolver, Ordering};
use dilata_solve::newton::{newton, newton_in_step, DiscreteSystem, NewtonError, NewtonParams};

#[derive(Debug, thiserror::Error)]
#[error("never")]
struct Never;

/// `r_i = x_i − 1`, except that unknown `bad` gets `sqrt(x − 2)`, NaN for x < 2.
struct Poisoned {
    pattern: Arc<CsrPattern>,
    bad: usize,
}

impl Poisoned {
    fn residual(&self, x: &[f64], r: &mut [f64]) {
        for i in 0..x.len() {
            r[i] = if i == self.bad {
                (x[i] - 2.0).sqrt()
            } else {
                x[i] - 1.0
            };
        }
    }
}

impl DiscreteSystem for Poisoned {
    type Error = Never;
    fn n_dofs(&self) -> usize {
        self.pattern.n_rows
    }
    fn pattern(&self) -> Arc<CsrPattern> {
        self.pattern.clone()
    }
    fn impose_constraints(&self, _x: &mut [f64]) {}
    fn assemble_into(&mut self, x: &[f64], j: &mut CsrMatrix, r: &mut [f64]) -> Result<(), Never> {
        j.values.iter_mut().for_each(|v| *v = 1.0);
        self.residual(x, r);
        Ok(())
    }
    fn residual_into(&mut self, x: &[f64], r: &mut [f64]) -> Result<(), Never> {
        self.residual(x, r);
        Ok(())
    }
}

#[test]
fn a_nan_residual_is_reported_with_its_unknown() {
    let n = 5;
    let mut sys = Poisoned {
        pattern: Arc::new(CsrPattern::from_rows(n, (0..n).map(|i| vec![i]).collect())),
        bad: 3,
    };
    let mut solver = FaerLu::new(DirectParams::with_ordering(Ordering::Natural));
    solver.analyze(&sys.pattern).unwrap();
    let mut x = vec![0.0; n];
    let err = newton(&mut sys, &mut solver, &mut x, &NewtonParams::default()).unwrap_err();
    match &err {
        NewtonError::NonFinite { iteration, dof } => {
            assert_eq!(*iteration, 0);
            assert_eq!(*dof, Some(3));
        }
        other => panic!("expected a non-finite residual, got {other}"),
    }
    assert!(err.to_string().contains("dof 3"), "{err}");
}

/// `r = x − 1` with the Jacobian's sign flipped: every correction points uphill, so no step
/// length decreases the residual.
struct Uphill {
    pattern: Arc<CsrPattern>,
}

impl DiscreteSystem for Uphill {
    type Error = Never;
    fn n_dofs(&self) -> usize {
        1
    }
    fn pattern(&self) -> Arc<CsrPattern> {
        self.pattern.clone()
    }
    fn impose_constraints(&self, _x: &mut [f64]) {}
    fn assemble_into(&mut self, x: &[f64], j: &mut CsrMatrix, r: &mut [f64]) -> Result<(), Never> {
        j.values[0] = -1.0;
        r[0] = x[0] - 1.0;
        Ok(())
    }
    fn residual_into(&mut self, x: &[f64], r: &mut [f64]) -> Result<(), Never> {
        r[0] = x[0] - 1.0;
        Ok(())
    }
}

#[test]
fn a_stalled_line_search_fails_a_time_step_at_once_and_a_static_solve_runs_on() {
    let params = NewtonParams {
        max_iterations: 6,
        ..NewtonParams::default()
    };
    let mut sys = Uphill {
        pattern: Arc::new(CsrPattern::from_rows(1, vec![vec![0]])),
    };
    let mut solver = FaerLu::new(DirectParams::with_ordering(Ordering::Natural));
    solver.analyze(&sys.pattern).unwrap();
    // In a time step: the first iteration finds no decrease down to 2^-8 and stops.
    let mut x = vec![0.0];
    match newton_in_step(&mut sys, &mut solver, &mut x, &params, None).unwrap_err() {
        NewtonError::Stalled {
            iteration, alpha, ..
        } => {
            assert_eq!(iteration, 1);
            assert_eq!(alpha, 2f64.powi(-(params.max_backtracks as i32)));
        }
        other => panic!("expected a stall, got {other}"),
    }
    // A static solve takes the shortest step and goes on to its iteration limit.
    let mut x = vec![0.0];
    match newton(&mut sys, &mut solver, &mut x, &params).unwrap_err() {
        NewtonError::NotConverged { iterations, .. } => assert_eq!(iterations, 6),
        other => panic!("expected no convergence, got {other}"),
    }
    assert!(x[0] < 0.0, "moved uphill by the shortest steps: {}", x[0]);
}
