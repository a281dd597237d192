//! russell_sparse's solvers behind the [`LinearSolver`] trait (Cargo feature `russell`, with
//! `umfpack` or `mumps` for the system libraries): comparison back-ends for the benchmarks,
//! never needed to build or test Dilata.
//!
//! russell_sparse analyses and factorises in one call (`preprocess`), so `analyze` only records
//! the pattern and every `factor` redoes the symbolic analysis; the matrix is passed whole
//! (both triangles, `Sym::No`).

use russell_lab::Vector;
use russell_sparse::prelude::{CooMatrix, Genie, LinSolver, Sym};

use crate::csr::{CsrMatrix, CsrPattern};
use crate::direct::{check_finite, check_rhs_len, AnalysedPattern};
use crate::solver::{LinalgError, LinearSolver, SolveInfo};

/// Which russell_sparse solver.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum RussellGenie {
    /// Its pure-Rust direct solver.
    Direct,
    /// UMFPACK (SuiteSparse), feature `umfpack`.
    #[cfg(feature = "umfpack")]
    Umfpack,
    /// MUMPS (sequential), feature `mumps`.
    #[cfg(feature = "mumps")]
    Mumps,
}

impl RussellGenie {
    fn genie(self) -> Genie {
        match self {
            RussellGenie::Direct => Genie::Direct,
            #[cfg(feature = "umfpack")]
            RussellGenie::Umfpack => Genie::Umfpack,
            #[cfg(feature = "mumps")]
            RussellGenie::Mumps => Genie::Mumps,
        }
    }

    fn name(self) -> &'static str {
        match self {
            RussellGenie::Direct => "russell-direct",
            #[cfg(feature = "umfpack")]
            RussellGenie::Umfpack => "russell-umfpack",
            #[cfg(feature = "mumps")]
            RussellGenie::Mumps => "russell-mumps",
        }
    }
}

/// A russell_sparse solver (see the module documentation).
pub struct RussellSolver {
    genie: RussellGenie,
    pattern: Option<AnalysedPattern>,
    solver: Option<LinSolver<'static>>,
}

impl RussellSolver {
    pub fn new(genie: RussellGenie) -> Self {
        RussellSolver {
            genie,
            pattern: None,
            solver: None,
        }
    }
}

fn backend(e: impl std::fmt::Display) -> LinalgError {
    LinalgError::Backend(format!("russell_sparse: {e}"))
}

impl LinearSolver for RussellSolver {
    fn analyze(&mut self, pattern: &CsrPattern) -> Result<(), LinalgError> {
        self.pattern = Some(AnalysedPattern::new(pattern)?);
        self.solver = None;
        Ok(())
    }

    fn factor(&mut self, matrix: &CsrMatrix) -> Result<(), LinalgError> {
        self.solver = None;
        let analysed = self
            .pattern
            .as_ref()
            .ok_or_else(crate::cholesky::missing_analysis)?;
        analysed.check(matrix)?;
        let p = matrix.pattern.as_ref();
        let mut coo =
            CooMatrix::new(p.n_rows, p.n_cols, p.nnz().max(1), Sym::No).map_err(backend)?;
        for i in 0..p.n_rows {
            for k in p.row_ptr[i]..p.row_ptr[i + 1] {
                coo.put(i, p.col_idx[k], matrix.values[k])
                    .map_err(backend)?;
            }
        }
        let mut solver = LinSolver::new(self.genie.genie()).map_err(backend)?;
        solver.actual.preprocess(&coo, None).map_err(backend)?;
        self.solver = Some(solver);
        Ok(())
    }

    fn solve_in_place(&mut self, rhs: &mut [f64]) -> Result<SolveInfo, LinalgError> {
        let n = self
            .pattern
            .as_ref()
            .ok_or_else(crate::cholesky::missing_factor)?
            .n();
        let solver = self
            .solver
            .as_mut()
            .ok_or_else(crate::cholesky::missing_factor)?;
        check_rhs_len(n, rhs)?;
        let b = Vector::from(&rhs.to_vec());
        let mut x = Vector::new(n);
        solver.actual.solve(&mut x, &b, false).map_err(backend)?;
        rhs.copy_from_slice(x.as_data());
        check_finite(rhs)?;
        Ok(SolveInfo {
            iterations: 0,
            residual: None,
        })
    }

    fn name(&self) -> String {
        self.genie.name().to_string()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A small SPD tridiagonal system with a known solution (common practice, no source).
    #[test]
    fn every_enabled_russell_solver_solves_a_tridiagonal_system() {
        let n: usize = 50;
        let rows: Vec<Vec<usize>> = (0..n)
            .map(|i| (i.saturating_sub(1)..(i + 2).min(n)).collect())
            .collect();
        let pattern = std::sync::Arc::new(CsrPattern::from_rows(n, rows));
        let mut a = CsrMatrix::zeros(pattern.clone());
        for i in 0..n {
            for k in pattern.row_ptr[i]..pattern.row_ptr[i + 1] {
                a.values[k] = if pattern.col_idx[k] == i { 4.0 } else { -1.0 };
            }
        }
        let x_true: Vec<f64> = (0..n).map(|i| 1.0 + i as f64 / n as f64).collect();
        let b = a.mul_vec(&x_true);
        let mut genies = vec![RussellGenie::Direct];
        #[cfg(feature = "umfpack")]
        genies.push(RussellGenie::Umfpack);
        #[cfg(feature = "mumps")]
        genies.push(RussellGenie::Mumps);
        for genie in genies {
            let mut s = RussellSolver::new(genie);
            s.analyze(&pattern).unwrap();
            s.factor(&a).unwrap();
            let mut x = b.clone();
            s.solve_in_place(&mut x).unwrap();
            let err = x
                .iter()
                .zip(&x_true)
                .map(|(p, q)| (p - q).abs())
                .fold(0.0, f64::max);
            assert!(err < 1e-12, "{}: error {err:e}", s.name());
        }
    }
}
