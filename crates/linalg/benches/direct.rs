//! Sparse direct solvers: METIS nested dissection against AMD on a 3D 7-point Laplacian with
//! 30³ = 27 000 unknowns (Cholesky), and on 20³ for LU. Run with
//! `cargo bench -p dilata-linalg --bench direct`; the fill of each ordering is printed first.

#[path = "../tests/problems/mod.rs"]
mod problems;

use std::hint::black_box;

use criterion::{criterion_group, criterion_main, BenchmarkId, Criterion};
use dilata_linalg::{
    build_permutation, CsrMatrix, DirectParams, FaerCholesky, FaerLu, LinearSolver, Ordering,
    Parallelism,
};

const ORDERINGS: [Ordering; 2] = [Ordering::NestedDissection, Ordering::Amd];

fn params(ordering: Ordering) -> DirectParams {
    DirectParams {
        ordering,
        parallelism: Parallelism::Sequential,
    }
}

fn report_fill(a: &CsrMatrix) {
    for ordering in ORDERINGS {
        let mut s = FaerCholesky::new(params(ordering));
        s.analyze(&a.pattern).expect("analyze");
        eprintln!(
            "n = {}, nnz(A) = {}, ordering {}: nnz(L) = {}",
            a.n_rows(),
            a.pattern.nnz(),
            ordering.name(),
            s.stats().factor_nnz
        );
    }
}

fn cholesky(c: &mut Criterion) {
    let a = problems::laplacian_3d(30);
    report_fill(&a);
    let mut group = c.benchmark_group("cholesky_lap3d_30");
    group.sample_size(10);
    for ordering in ORDERINGS {
        group.bench_with_input(
            BenchmarkId::new("analyze", ordering.name()),
            &ordering,
            |b, &o| {
                b.iter(|| {
                    let mut s = FaerCholesky::new(params(o));
                    s.analyze(black_box(&a.pattern)).expect("analyze");
                    s
                })
            },
        );
        let mut s = FaerCholesky::new(params(ordering));
        s.analyze(&a.pattern).expect("analyze");
        group.bench_function(BenchmarkId::new("factor", ordering.name()), |b| {
            b.iter(|| s.factor(black_box(&a)).expect("factor"))
        });
        let rhs = vec![1.0; a.n_rows()];
        group.bench_function(BenchmarkId::new("solve", ordering.name()), |b| {
            b.iter(|| {
                let mut x = rhs.clone();
                s.solve_in_place(&mut x).expect("solve");
                x
            })
        });
    }
    group.finish();
}

fn ordering(c: &mut Criterion) {
    let a = problems::laplacian_3d(30);
    let mut group = c.benchmark_group("ordering_lap3d_30");
    group.sample_size(10);
    for ordering in ORDERINGS {
        group.bench_function(ordering.name(), |b| {
            b.iter(|| build_permutation(black_box(&a.pattern), ordering).expect("ordering"))
        });
    }
    group.finish();
}

fn lu(c: &mut Criterion) {
    let a = problems::laplacian_3d(20);
    let mut group = c.benchmark_group("lu_lap3d_20");
    group.sample_size(10);
    for ordering in ORDERINGS {
        let mut s = FaerLu::new(params(ordering));
        s.analyze(&a.pattern).expect("analyze");
        group.bench_function(BenchmarkId::new("factor", s.name()), |b| {
            b.iter(|| s.factor(black_box(&a)).expect("factor"))
        });
    }
    group.finish();
}

criterion_group!(benches, ordering, cholesky, lu);
criterion_main!(benches);
