//! The linear-solver trait shared by every back-end.
//!
//! Life cycle: [`LinearSolver::analyze`] once per sparsity pattern (ordering, symbolic
//! factorisation), then [`LinearSolver::factor`] for every new set of values on that pattern
//! (every Newton iteration, every time step), then any number of [`LinearSolver::solve_in_place`].

use thiserror::Error;

use crate::csr::{CsrMatrix, CsrPattern};
use crate::symmetric_form::RowTransform;

/// Errors of the linear solvers. A singular or non-convergent system is recoverable numerical
/// trouble for the caller (a time stepper may cut its step); misuse is a bug and panics.
#[derive(Debug, Error)]
pub enum LinalgError {
    #[error("matrix is singular or not positive definite (pivot {pivot:?})")]
    Singular { pivot: Option<usize> },
    #[error("iterative solver did not converge in {iterations} iterations (relative residual {residual:e})")]
    NotConverged { iterations: usize, residual: f64 },
    #[error("solver back-end failure: {0}")]
    Backend(String),
    #[error("{0}")]
    Usage(String),
}

/// What a solve did.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct SolveInfo {
    /// Iterations (0 for direct solvers).
    pub iterations: usize,
    /// Final relative residual `|b - Ax| / |b|` where the solver measured it.
    pub residual: Option<f64>,
}

/// A sparse linear solver. Matrices are passed with both triangles stored, even to symmetric
/// solvers, which read the triangle they need.
pub trait LinearSolver: Send {
    /// Symbolic analysis for a pattern; must be called before `factor`, and again only when the
    /// pattern changes.
    fn analyze(&mut self, pattern: &CsrPattern) -> Result<(), LinalgError>;
    /// Numeric factorisation (or preconditioner set-up) for new values on the analysed pattern.
    fn factor(&mut self, matrix: &CsrMatrix) -> Result<(), LinalgError>;
    /// Solve `A x = b`; on entry `rhs` holds `b`, on exit `x`.
    fn solve_in_place(&mut self, rhs: &mut [f64]) -> Result<SolveInfo, LinalgError>;
    /// A row rearrangement that makes the next matrices nearly symmetric (see
    /// [`crate::symmetric_form`]), given before `factor`. Solvers that cannot use it ignore it
    /// (the default); an inconsistent transform is a usage error.
    fn set_row_transform(&mut self, _transform: RowTransform) -> Result<(), LinalgError> {
        Ok(())
    }
    /// The relative reduction of the residual `|b - Ax| / |b|` that the next solves need, as
    /// an inexact Newton method asks for it (its forcing term); `None` asks for the solver's own
    /// tolerance again. Iterative solvers may stop there instead of at their own, tighter,
    /// tolerance, never earlier; direct solvers solve exactly and ignore it (the default).
    fn set_requested_reduction(&mut self, _reduction: Option<f64>) {}
    /// Whether [`LinearSolver::set_requested_reduction`] can make the solves looser than the
    /// solver's own tolerance (false for the direct solvers: the default).
    fn follows_requested_reduction(&self) -> bool {
        false
    }
    /// A short human-readable name ("faer-cholesky/metis").
    fn name(&self) -> String;
    /// One line on what the solver did so far (factorisations, iterations, fallbacks), for run
    /// logs; `None` where there is nothing beyond the name to say (the default).
    fn activity(&self) -> Option<String> {
        None
    }
    /// Numbers a solver carries from one factorisation to the next that change its results
    /// (the LU's warm-started equilibration scales), so that a checkpoint can save them and a
    /// resumed run solve to the same bits. Default: nothing carried.
    fn carried_state(&self) -> Vec<f64> {
        Vec::new()
    }
    /// Restore what [`LinearSolver::carried_state`] returned, after `analyze` on the same
    /// pattern. Default: nothing carried, the state is ignored.
    fn restore_carried_state(&mut self, state: &[f64]) -> Result<(), LinalgError> {
        let _ = state;
        Ok(())
    }
}
