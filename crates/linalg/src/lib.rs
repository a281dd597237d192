//! # dilata-linalg
//!
//! Sparse matrices on shared CSR patterns, and the linear solvers behind one trait.
//! Knows nothing of meshes, elements or physics.
//!
//! Back-ends:
//! * [`FaerCholesky`] (SPD), [`FaerLdlt`] (symmetric indefinite) and [`FaerLu`] (general):
//!   sparse direct solvers from faer with a selectable fill-reducing [`Ordering`].
//! * [`Cg`] (SPD), [`BiCgStab`] and [`Gmres`] (general) with a [`Preconditioner`]
//!   (none, Jacobi, ILU(0)) and [`KrylovParams`].
//! * [`SolverKind`] and [`build_solver`]: pick one by its command-line name.
//!
//! ```
//! use std::sync::Arc;
//! use dilata_linalg::{CsrMatrix, CsrPattern, DirectParams, FaerCholesky, LinearSolver, Ordering};
//!
//! // 1D Laplacian with Dirichlet ends: tridiag(-1, 2, -1).
//! let n: usize = 5;
//! let rows = (0..n).map(|i| (i.saturating_sub(1)..(i + 2).min(n)).collect()).collect();
//! let pattern = Arc::new(CsrPattern::from_rows(n, rows));
//! let mut a = CsrMatrix::zeros(pattern.clone());
//! for i in 0..n {
//!     for &j in pattern.row(i) {
//!         let k = pattern.find(i, j).unwrap();
//!         a.values[k] = if i == j { 2.0 } else { -1.0 };
//!     }
//! }
//! let mut solver = FaerCholesky::new(DirectParams::with_ordering(Ordering::Amd));
//! solver.analyze(&pattern).unwrap();
//! solver.factor(&a).unwrap();
//! let mut x = vec![1.0; n];
//! solver.solve_in_place(&mut x).unwrap();
//! // The exact solution of -u'' = 1 on this grid is x_i = (i+1)(n-i)/2.
//! assert!((x[2] - 4.5).abs() < 1e-12);
//! ```

pub mod cholesky;
pub mod csr;
pub mod direct;
pub mod gmres;
pub mod kind;
pub mod krylov;
pub mod ldlt;
pub mod lu;
pub mod ordering;
pub mod parallel;
pub mod precond;
#[cfg(feature = "russell")]
pub mod russell;
pub mod solver;
pub mod symmetric_form;

pub use cholesky::FaerCholesky;
pub use csr::{CsrMatrix, CsrPattern};
pub use direct::{DirectParams, DirectStats};
pub use gmres::Gmres;
pub use kind::{build_solver, build_solver_with, SolverConfig, SolverKind};
pub use krylov::{BiCgStab, Cg, KrylovParams};
pub use ldlt::{FaerLdlt, LdltPivoting, SignedPivots};
pub use lu::FaerLu;
pub use ordering::{build_permutation, Ordering, Permutation};
pub use parallel::Parallelism;
pub use precond::Preconditioner;
#[cfg(feature = "russell")]
pub use russell::{RussellGenie, RussellSolver};
pub use solver::{LinalgError, LinearSolver, SolveInfo};
pub use symmetric_form::{
    RowTransform, SymmetricFormParams, SymmetricFormSolver, SymmetricFormStats,
};
