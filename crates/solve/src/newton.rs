//! Newton's method with backtracking line search, generic over a discrete system.

use std::sync::Arc;

use dilata_linalg::{CsrMatrix, CsrPattern, LinalgError, LinearSolver};

/// A discrete nonlinear system `R(x) = 0` with a Jacobian on a fixed pattern.
///
/// Constrained DOFs are handled by the system: [`DiscreteSystem::impose_constraints`] writes the
/// prescribed values into `x`, after which the residual and Jacobian rows of constrained DOFs
/// must describe a zero correction (identity row, zero residual).
pub trait DiscreteSystem {
    type Error: std::error::Error + Send + Sync + 'static;
    fn n_dofs(&self) -> usize;
    fn pattern(&self) -> Arc<CsrPattern>;
    fn impose_constraints(&self, x: &mut [f64]);
    /// Residual and Jacobian at `x`.
    fn assemble_into(
        &mut self,
        x: &[f64],
        jacobian: &mut CsrMatrix,
        residual: &mut [f64],
    ) -> Result<(), Self::Error>;
    /// Residual only (used by the line search).
    fn residual_into(&mut self, x: &[f64], residual: &mut [f64]) -> Result<(), Self::Error>;
}

/// Newton parameters.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct NewtonParams {
    /// Converged when `|R| <= abs_tol` ...
    pub abs_tol: f64,
    /// ... or `|R| <= rel_tol · |R_0|` (with `|R_0|` the first residual norm) ...
    pub rel_tol: f64,
    /// ... and the correction satisfies `|δx| <= step_tol · (1 + |x|)` (both as max norms).
    pub step_tol: f64,
    pub max_iterations: usize,
    /// Maximum number of step halvings in the backtracking line search (0 disables it).
    pub max_backtracks: usize,
}

impl Default for NewtonParams {
    fn default() -> Self {
        NewtonParams {
            abs_tol: 1e-10,
            rel_tol: 1e-10,
            step_tol: 1e-10,
            max_iterations: 25,
            max_backtracks: 8,
        }
    }
}

/// What a converged Newton solve did.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct NewtonInfo {
    pub iterations: usize,
    /// Residual norm (max norm) before each iteration and at the end.
    pub residual_norms: Vec<f64>,
    pub backtracks: usize,
}

/// Why Newton failed. All variants are recoverable by a caller that can cut a time step.
#[derive(Debug, thiserror::Error)]
pub enum NewtonError<E: std::error::Error + 'static> {
    #[error("Newton did not converge in {iterations} iterations (residual {residual:e})")]
    NotConverged { iterations: usize, residual: f64 },
    #[error("non-finite residual at iteration {iteration}")]
    NonFinite { iteration: usize },
    #[error("linear solve failed: {0}")]
    Linear(#[from] LinalgError),
    #[error(transparent)]
    System(E),
}

fn max_norm(v: &[f64]) -> f64 {
    v.iter().fold(
        0.0_f64,
        |m, x| if x.is_nan() { f64::NAN } else { m.max(x.abs()) },
    )
}

/// Solve `R(x) = 0` starting from `x`. The solver must have been analysed on the system's pattern
/// (its symbolic analysis is reused for every iteration).
pub fn newton<S: DiscreteSystem>(
    system: &mut S,
    solver: &mut dyn LinearSolver,
    x: &mut [f64],
    params: &NewtonParams,
) -> Result<NewtonInfo, NewtonError<S::Error>> {
    let n = system.n_dofs();
    assert_eq!(x.len(), n);
    system.impose_constraints(x);
    let mut jac = CsrMatrix::zeros(system.pattern());
    let mut res = vec![0.0; n];
    let mut trial = vec![0.0; n];
    let mut info = NewtonInfo::default();
    let mut r0 = None;
    for it in 0..=params.max_iterations {
        system
            .assemble_into(x, &mut jac, &mut res)
            .map_err(NewtonError::System)?;
        let rn = max_norm(&res);
        if !rn.is_finite() {
            return Err(NewtonError::NonFinite { iteration: it });
        }
        info.residual_norms.push(rn);
        let r0v = *r0.get_or_insert(rn);
        let small_residual = rn <= params.abs_tol || rn <= params.rel_tol * r0v;
        if it == params.max_iterations {
            if small_residual {
                return Ok(info);
            }
            return Err(NewtonError::NotConverged {
                iterations: it,
                residual: rn,
            });
        }
        solver.factor(&jac)?;
        let mut dx: Vec<f64> = res.iter().map(|r| -r).collect();
        solver.solve_in_place(&mut dx)?;
        let dn = max_norm(&dx);
        if !dn.is_finite() {
            return Err(NewtonError::NonFinite { iteration: it });
        }
        // Backtracking on the residual norm.
        let mut alpha = 1.0;
        let mut accepted = false;
        for k in 0..=params.max_backtracks {
            for i in 0..n {
                trial[i] = x[i] + alpha * dx[i];
            }
            if params.max_backtracks == 0 {
                accepted = true;
                break;
            }
            system
                .residual_into(&trial, &mut res)
                .map_err(NewtonError::System)?;
            let tn = max_norm(&res);
            if tn.is_finite() && (tn <= (1.0 - 1e-4 * alpha) * rn || tn <= params.abs_tol) {
                accepted = true;
                info.backtracks += k;
                break;
            }
            alpha *= 0.5;
        }
        if !accepted {
            // Take the full step anyway; convergence is judged by the next residual.
            for i in 0..n {
                trial[i] = x[i] + dx[i];
            }
        }
        x.copy_from_slice(&trial);
        info.iterations = it + 1;
        let xn = max_norm(x);
        if small_residual && dn <= params.step_tol * (1.0 + xn) {
            system
                .residual_into(x, &mut res)
                .map_err(NewtonError::System)?;
            info.residual_norms.push(max_norm(&res));
            return Ok(info);
        }
    }
    unreachable!("loop returns")
}
