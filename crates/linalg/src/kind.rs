//! Choosing a solver by name: the command-line face of the back-ends.
//!
//! Names (the default ordering of the direct solvers is nested dissection, the default
//! preconditioner of the Krylov solvers is Jacobi):
//!
//! | name | solver |
//! |---|---|
//! | `cholesky`, `cholesky-metis`, `cholesky-amd`, `cholesky-natural` | [`FaerCholesky`] |
//! | `ldlt`, `ldlt-metis`, `ldlt-amd`, `ldlt-natural` | [`FaerLdlt`] |
//! | `lu`, `lu-metis`, `lu-amd` (COLAMD), `lu-natural` | [`FaerLu`] |
//! | `cg`, `cg-none`, `cg-jacobi`, `cg-ilu0` | [`Cg`] |
//! | `bicgstab`, `bicgstab-none`, `bicgstab-jacobi`, `bicgstab-ilu0` | [`BiCgStab`] |
//! | `gmres`, `gmres-none`, `gmres-jacobi`, `gmres-ilu0` | [`Gmres`] |
//! | `symform`, `symform-metis`, `symform-amd`, `symform-natural` | [`SymmetricFormSolver`] (LU without a row transform) |

use crate::cholesky::FaerCholesky;
use crate::direct::DirectParams;
use crate::gmres::Gmres;
use crate::krylov::{BiCgStab, Cg, KrylovParams};
use crate::ldlt::FaerLdlt;
use crate::lu::FaerLu;
use crate::ordering::Ordering;
use crate::parallel::Parallelism;
use crate::precond::Preconditioner;
use crate::solver::LinearSolver;
use crate::symmetric_form::{SymmetricFormParams, SymmetricFormSolver};

/// A solver family with its main option.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum SolverKind {
    /// Sparse Cholesky (SPD).
    Cholesky(Ordering),
    /// Sparse symmetric indefinite LBLᵀ (intranodal Bunch–Kaufman).
    Ldlt(Ordering),
    /// Sparse LU with partial pivoting (general).
    Lu(Ordering),
    /// Preconditioned conjugate gradients (SPD).
    Cg(Preconditioner),
    /// Preconditioned BiCGStab (general).
    BiCgStab(Preconditioner),
    /// Restarted, right-preconditioned GMRES (general).
    Gmres(Preconditioner),
    /// GMRES preconditioned by the signed `LDLᵀ` of the symmetric part of a row-transformed
    /// matrix (coupled systems that provide a row transform; LU otherwise).
    SymmetricForm(Ordering),
}

impl SolverKind {
    /// Parse a command-line name (see the module table). Returns `None` for unknown names.
    pub fn from_name(name: &str) -> Option<Self> {
        let (family, option) = match name.split_once('-') {
            Some((f, o)) => (f, Some(o)),
            None => (name, None),
        };
        let ordering = || match option {
            None => Some(Ordering::default()),
            Some(o) => Ordering::from_name(o),
        };
        let preconditioner = || match option {
            None => Some(Preconditioner::default()),
            Some(o) => Preconditioner::from_name(o),
        };
        match family {
            "cholesky" => ordering().map(SolverKind::Cholesky),
            "ldlt" => ordering().map(SolverKind::Ldlt),
            "lu" => ordering().map(SolverKind::Lu),
            "cg" => preconditioner().map(SolverKind::Cg),
            "bicgstab" => preconditioner().map(SolverKind::BiCgStab),
            "gmres" => preconditioner().map(SolverKind::Gmres),
            "symform" => ordering().map(SolverKind::SymmetricForm),
            _ => None,
        }
    }

    /// The canonical name, accepted by [`SolverKind::from_name`] ("cholesky-metis", "cg-ilu0").
    pub fn name(self) -> String {
        match self {
            SolverKind::Cholesky(o) => format!("cholesky-{}", o.name()),
            SolverKind::Ldlt(o) => format!("ldlt-{}", o.name()),
            SolverKind::Lu(o) => format!("lu-{}", o.name()),
            SolverKind::Cg(p) => format!("cg-{}", p.name()),
            SolverKind::BiCgStab(p) => format!("bicgstab-{}", p.name()),
            SolverKind::Gmres(p) => format!("gmres-{}", p.name()),
            SolverKind::SymmetricForm(o) => format!("symform-{}", o.name()),
        }
    }

    /// Every kind, for help texts and tests.
    pub fn all() -> Vec<SolverKind> {
        let orderings = [Ordering::NestedDissection, Ordering::Amd, Ordering::Natural];
        let preconditioners = [
            Preconditioner::None,
            Preconditioner::Jacobi,
            Preconditioner::Ilu0,
        ];
        let mut kinds = Vec::new();
        for o in orderings {
            kinds.extend([
                SolverKind::Cholesky(o),
                SolverKind::Ldlt(o),
                SolverKind::Lu(o),
                SolverKind::SymmetricForm(o),
            ]);
        }
        for p in preconditioners {
            kinds.extend([
                SolverKind::Cg(p),
                SolverKind::BiCgStab(p),
                SolverKind::Gmres(p),
            ]);
        }
        kinds
    }
}

/// Settings shared by every solver [`build_solver_with`] makes.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct SolverConfig {
    /// Stopping and restart parameters of the Krylov solvers.
    pub krylov: KrylovParams,
    /// Threads for factorisations, solves and matrix–vector products.
    pub parallelism: Parallelism,
    /// Threads for the solve phase of the symmetric-form solver when they differ from
    /// `parallelism` (see `SymmetricFormParams::solve_parallelism`); None: the same.
    pub solve_parallelism: Option<Parallelism>,
    /// Let the symmetric-form solver stop its GMRES at the reduction an inexact Newton method
    /// asks for (see `SymmetricFormParams::follow_requested_reduction`). Default off.
    pub inexact_newton: bool,
}

/// Build a solver with default settings (sequential, [`KrylovParams::default`]).
pub fn build_solver(kind: SolverKind) -> Box<dyn LinearSolver> {
    build_solver_with(kind, SolverConfig::default())
}

/// Build a solver with explicit settings.
pub fn build_solver_with(kind: SolverKind, config: SolverConfig) -> Box<dyn LinearSolver> {
    let direct = |ordering| DirectParams {
        ordering,
        parallelism: config.parallelism,
    };
    match kind {
        SolverKind::Cholesky(o) => Box::new(FaerCholesky::new(direct(o))),
        SolverKind::Ldlt(o) => Box::new(FaerLdlt::new(direct(o))),
        SolverKind::Lu(o) => Box::new(FaerLu::new(direct(o))),
        SolverKind::Cg(p) => Box::new(Cg::new(p, config.krylov, config.parallelism)),
        SolverKind::BiCgStab(p) => Box::new(BiCgStab::new(p, config.krylov, config.parallelism)),
        SolverKind::Gmres(p) => Box::new(Gmres::new(p, config.krylov, config.parallelism)),
        SolverKind::SymmetricForm(ordering) => {
            Box::new(SymmetricFormSolver::new(SymmetricFormParams {
                ordering,
                parallelism: config.parallelism,
                solve_parallelism: config.solve_parallelism,
                follow_requested_reduction: config.inexact_newton,
                ..SymmetricFormParams::default()
            }))
        }
    }
}
