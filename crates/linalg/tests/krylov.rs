//! Krylov back-ends and the solver factory.

mod problems;

use dilata_linalg::{
    build_solver, build_solver_with, BiCgStab, Cg, CsrMatrix, Gmres, KrylovParams, LinalgError,
    LinearSolver, Parallelism, Preconditioner, SolveInfo, SolverConfig, SolverKind,
};

use problems::{
    convection_diffusion_2d, laplacian_2d, laplacian_3d, manufactured_x, relative_error,
    relative_residual,
};

const PRECONDITIONERS: [Preconditioner; 3] = [
    Preconditioner::None,
    Preconditioner::Jacobi,
    Preconditioner::Ilu0,
];

fn params(rel_tol: f64) -> KrylovParams {
    KrylovParams {
        rel_tol,
        abs_tol: 0.0,
        max_iter: 5000,
        restart: 40,
    }
}

/// Solve with `x_true` manufactured; check the reported and the recomputed residual against
/// the tolerance, and the error against `x_true`: relative error <= cond(A) x relative residual
/// (Golub & Van Loan, Matrix Computations, 4th ed., sec. 2.6). For the grids used here
/// cond(A) < 1e3 (Laplacian: about (2(n+1)/π)², LeVeque 2007 sec. 3.4, from memory).
fn check(solver: &mut dyn LinearSolver, a: &CsrMatrix, rel_tol: f64) -> SolveInfo {
    solver.analyze(&a.pattern).expect("analyze");
    solver.factor(a).expect("factor");
    let x_true = manufactured_x(a.n_rows());
    let b = a.mul_vec(&x_true);
    let mut x = b.clone();
    let info = solver.solve_in_place(&mut x).expect("solve");
    let res = relative_residual(a, &x, &b);
    let reported = info.residual.expect("Krylov solvers report their residual");
    assert!(res <= rel_tol, "{}: residual {res:e}", solver.name());
    assert!(
        (reported - res).abs() <= 1e-3 * rel_tol,
        "{}: reported {reported:e} vs {res:e}",
        solver.name()
    );
    let err = relative_error(&x, &x_true);
    assert!(err <= 1e3 * rel_tol, "{}: error {err:e}", solver.name());
    info
}

#[test]
fn cg_solves_laplacians() {
    for a in [laplacian_2d(20, 15), laplacian_3d(10)] {
        for p in PRECONDITIONERS {
            let info = check(
                &mut Cg::new(p, params(1e-10), Parallelism::Sequential),
                &a,
                1e-10,
            );
            assert!(info.iterations > 0);
        }
    }
}

#[test]
fn ilu0_reduces_cg_iterations() {
    // ILU(0)/IC(0) roughly halves CG iterations on the 5-point Laplacian (common practice, no
    // source; Saad 2003, ch. 10 reports similar gains for ILU(0) on such problems, from memory).
    let a = laplacian_2d(30, 30);
    let iters = |p| {
        check(
            &mut Cg::new(p, params(1e-10), Parallelism::Sequential),
            &a,
            1e-10,
        )
        .iterations
    };
    let (none, ilu0) = (iters(Preconditioner::None), iters(Preconditioner::Ilu0));
    assert!(ilu0 < none, "ilu0 {ilu0} vs none {none}");
}

#[test]
fn bicgstab_and_gmres_solve_nonsymmetric() {
    let a = convection_diffusion_2d(25, 20, 0.7);
    assert!(a.asymmetry() > 0.1);
    for p in PRECONDITIONERS {
        check(
            &mut BiCgStab::new(p, params(1e-10), Parallelism::Sequential),
            &a,
            1e-10,
        );
        check(
            &mut Gmres::new(p, params(1e-10), Parallelism::Sequential),
            &a,
            1e-10,
        );
    }
    for a in [laplacian_2d(15, 15), laplacian_3d(8)] {
        check(
            &mut BiCgStab::new(Preconditioner::Ilu0, params(1e-10), Parallelism::Sequential),
            &a,
            1e-10,
        );
        check(
            &mut Gmres::new(
                Preconditioner::Jacobi,
                params(1e-10),
                Parallelism::Sequential,
            ),
            &a,
            1e-10,
        );
    }
}

#[test]
fn gmres_with_short_restart_still_converges() {
    let a = convection_diffusion_2d(20, 20, 0.5);
    let p = KrylovParams {
        restart: 5,
        ..params(1e-9)
    };
    let info = check(
        &mut Gmres::new(Preconditioner::Ilu0, p, Parallelism::Sequential),
        &a,
        1e-9,
    );
    assert!(info.iterations > 5, "must have restarted at least once");
}

#[test]
fn looser_tolerance_is_honoured_not_exceeded() {
    let a = laplacian_2d(25, 25);
    let loose = check(
        &mut Cg::new(
            Preconditioner::Jacobi,
            params(1e-4),
            Parallelism::Sequential,
        ),
        &a,
        1e-4,
    );
    let tight = check(
        &mut Cg::new(
            Preconditioner::Jacobi,
            params(1e-10),
            Parallelism::Sequential,
        ),
        &a,
        1e-10,
    );
    assert!(loose.iterations < tight.iterations);
    assert!(
        loose.residual.unwrap() > 1e-10,
        "a loose solve should stop early"
    );
}

#[test]
fn iteration_limit_gives_not_converged() {
    let a = laplacian_2d(30, 30);
    let p = KrylovParams {
        max_iter: 5,
        ..params(1e-12)
    };
    let mut solvers: Vec<Box<dyn LinearSolver>> = vec![
        Box::new(Cg::new(Preconditioner::Jacobi, p, Parallelism::Sequential)),
        Box::new(BiCgStab::new(
            Preconditioner::Jacobi,
            p,
            Parallelism::Sequential,
        )),
        Box::new(Gmres::new(
            Preconditioner::Jacobi,
            p,
            Parallelism::Sequential,
        )),
    ];
    for s in solvers.iter_mut() {
        s.analyze(&a.pattern).unwrap();
        s.factor(&a).unwrap();
        let mut x = vec![1.0; a.n_rows()];
        match s.solve_in_place(&mut x) {
            Err(LinalgError::NotConverged {
                iterations,
                residual,
            }) => {
                assert_eq!(iterations, 5, "{}", s.name());
                assert!(
                    residual > 1e-12 && residual.is_finite(),
                    "{}: {residual}",
                    s.name()
                );
            }
            other => panic!("{}: expected NotConverged, got {other:?}", s.name()),
        }
    }
}

#[test]
fn cg_rejects_negative_definite() {
    let mut a = laplacian_2d(8, 8);
    for v in a.values.iter_mut() {
        *v = -*v;
    }
    let mut s = Cg::new(Preconditioner::None, params(1e-10), Parallelism::Sequential);
    s.analyze(&a.pattern).unwrap();
    s.factor(&a).unwrap();
    let mut x = vec![1.0; a.n_rows()];
    assert!(matches!(
        s.solve_in_place(&mut x),
        Err(LinalgError::Singular { .. })
    ));
}

#[test]
fn ilu0_zero_pivot_is_singular() {
    let mut a = laplacian_2d(6, 6);
    let d = a.pattern.find(0, 0).unwrap();
    a.values[d] = 0.0;
    let mut s = Gmres::new(Preconditioner::Ilu0, params(1e-10), Parallelism::Sequential);
    s.analyze(&a.pattern).unwrap();
    assert!(matches!(
        s.factor(&a),
        Err(LinalgError::Singular { pivot: Some(0) })
    ));
}

#[test]
fn zero_rhs_gives_zero_solution() {
    let a = convection_diffusion_2d(10, 10, 0.3);
    for kind in [
        SolverKind::Cg(Preconditioner::Jacobi),
        SolverKind::BiCgStab(Preconditioner::Ilu0),
        SolverKind::Gmres(Preconditioner::None),
    ] {
        let mut s = build_solver(kind);
        s.analyze(&a.pattern).unwrap();
        s.factor(&a).unwrap();
        let mut x = vec![0.0; a.n_rows()];
        let info = s.solve_in_place(&mut x).unwrap();
        assert_eq!(info.iterations, 0);
        assert!(x.iter().all(|&v| v == 0.0));
    }
}

#[test]
fn threaded_matvec_gives_identical_iterates() {
    // 14³ = 2744 rows: above the threshold where the product is split across threads.
    let a = laplacian_3d(14);
    let solve = |parallelism| {
        let mut s = Cg::new(Preconditioner::Jacobi, params(1e-10), parallelism);
        s.analyze(&a.pattern).unwrap();
        s.factor(&a).unwrap();
        let mut x = a.mul_vec(&manufactured_x(a.n_rows()));
        let info = s.solve_in_place(&mut x).unwrap();
        (x, info.iterations)
    };
    let (x1, i1) = solve(Parallelism::Sequential);
    let (x2, i2) = solve(Parallelism::Rayon { threads: 2 });
    assert_eq!(i1, i2);
    assert!(x1.iter().zip(&x2).all(|(a, b)| a.to_bits() == b.to_bits()));
}

#[test]
fn names_round_trip_and_every_kind_solves_an_spd_system() {
    let a = laplacian_2d(12, 10);
    let config = SolverConfig {
        krylov: params(1e-10),
        parallelism: Parallelism::Sequential,
        solve_parallelism: None,
        inexact_newton: false,
    };
    for kind in SolverKind::all() {
        let name = kind.name();
        assert_eq!(SolverKind::from_name(&name), Some(kind), "{name}");
        let mut s = build_solver_with(kind, config);
        s.analyze(&a.pattern).unwrap();
        s.factor(&a).unwrap();
        let x_true = manufactured_x(a.n_rows());
        let b = a.mul_vec(&x_true);
        let mut x = b.clone();
        s.solve_in_place(&mut x).unwrap();
        let res = relative_residual(&a, &x, &b);
        assert!(res <= 1e-10, "{name} ({}): residual {res:e}", s.name());
    }
    assert_eq!(
        SolverKind::from_name("cholesky"),
        Some(SolverKind::Cholesky(
            dilata_linalg::Ordering::NestedDissection
        ))
    );
    assert_eq!(
        SolverKind::from_name("cg"),
        Some(SolverKind::Cg(Preconditioner::Jacobi))
    );
    assert_eq!(
        SolverKind::from_name("cg-ilu0"),
        Some(SolverKind::Cg(Preconditioner::Ilu0))
    );
    assert_eq!(
        SolverKind::from_name("lu-amd"),
        Some(SolverKind::Lu(dilata_linalg::Ordering::Amd))
    );
    assert_eq!(SolverKind::from_name("cg-metis"), None);
    assert_eq!(SolverKind::from_name("magic"), None);
}

#[test]
fn krylov_misuse_is_reported() {
    let a = laplacian_2d(5, 5);
    let mut s = Cg::new(Preconditioner::Ilu0, params(1e-10), Parallelism::Sequential);
    assert!(matches!(s.factor(&a), Err(LinalgError::Usage(_))));
    let mut x = vec![0.0; a.n_rows()];
    assert!(matches!(
        s.solve_in_place(&mut x),
        Err(LinalgError::Usage(_))
    ));
    s.analyze(&a.pattern).unwrap();
    let other = laplacian_2d(4, 6);
    assert!(matches!(s.factor(&other), Err(LinalgError::Usage(_))));
    s.factor(&a).unwrap();
    let mut short = vec![0.0; 3];
    assert!(matches!(
        s.solve_in_place(&mut short),
        Err(LinalgError::Usage(_))
    ));
}
