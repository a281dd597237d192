//! Regression tracking of the stiffness assembly: one Poisson Q1 assembly on a 300 × 300 unit
//! square (90 601 DOFs) and one P1 elasticity assembly on a 16³ unit cube of Tet4 (14 739 DOFs),
//! matrix only, on the calling thread and on a 2-thread pool. Run with
//! `cargo bench --bench assembly`. Whole-process comparisons against the peer live in
//! `benches/fe_problems.rs` and `bench/run_all.sh`.

use std::hint::black_box;

use criterion::{criterion_group, criterion_main, BenchmarkId, Criterion, Throughput};
use dilata_fem::dofs::DofMap;
use dilata_fem::{Assembler, AssemblyTarget, FieldSpec, GeometryMode, Parallelism};
use dilata_material::elastic::Isotropic;
use dilata_mesh::generate::{cuboid, rectangle, BoxParams, RectangleParams};
use dilata_mesh::CellKind;
use dilata_physics::elasticity::{mode_stiffness, ElasticityKernel};
use dilata_physics::poisson::PoissonKernel;

/// Cells per edge of the Poisson square.
const POISSON_CELLS: usize = 300;
/// Cells per edge of the elasticity cube.
const ELASTICITY_CELLS: usize = 16;

/// The thread settings compared: sequential and a 2-thread pool.
fn settings() -> [(&'static str, Parallelism); 2] {
    [
        ("seq", Parallelism::Sequential),
        ("rayon2", Parallelism::Rayon { threads: 2 }),
    ]
}

fn poisson_q1(c: &mut Criterion) {
    let mesh = rectangle(&RectangleParams {
        origin: [0.0, 0.0],
        lengths: [1.0, 1.0],
        n_cells: [POISSON_CELLS; 2],
        kind: CellKind::Quad4,
    })
    .expect("mesh");
    let dofs = DofMap::build(&mesh, &[FieldSpec::scalar("u", 1)]).expect("dofs");
    let field = dofs.field("u").expect("field");
    let zero = vec![0.0; dofs.n_dofs()];
    let kernel = PoissonKernel {
        dofs: &dofs,
        field,
        mode: GeometryMode::PlaneStrain,
        conductivity: 1.0,
        source: None,
        solution: &zero,
    };
    let mut group = c.benchmark_group("assembly_poisson_q1_300");
    group.sample_size(10);
    group.throughput(Throughput::Elements(dofs.n_dofs() as u64));
    for (name, par) in settings() {
        let assembler = Assembler::build(&mesh, &dofs, par);
        let mut k = assembler.build_matrix();
        group.bench_function(BenchmarkId::new("matrix", name), |b| {
            b.iter(|| {
                assembler
                    .assemble(
                        &mesh,
                        &dofs,
                        &kernel,
                        AssemblyTarget {
                            matrix: Some(black_box(&mut k)),
                            vector: None,
                            constraints: None,
                        },
                    )
                    .expect("assembly")
            })
        });
    }
    group.finish();
}

fn elasticity_p1(c: &mut Criterion) {
    let mesh = cuboid(&BoxParams {
        origin: [0.0; 3],
        lengths: [1.0; 3],
        n_cells: [ELASTICITY_CELLS; 3],
        kind: CellKind::Tet4,
    })
    .expect("mesh");
    let dofs = DofMap::build(&mesh, &[FieldSpec::vector("u", 3, 1)]).expect("dofs");
    let field = dofs.field("u").expect("field");
    let zero = vec![0.0; dofs.n_dofs()];
    let law = Isotropic::new(1.0, 0.3).expect("moduli");
    let kernel = ElasticityKernel {
        dofs: &dofs,
        field,
        mode: GeometryMode::ThreeD,
        stiffness: mode_stiffness(&law.stiffness(), GeometryMode::ThreeD),
        body_force: None,
        solution: &zero,
    };
    let mut group = c.benchmark_group("assembly_elast3d_p1_16");
    group.sample_size(10);
    group.throughput(Throughput::Elements(dofs.n_dofs() as u64));
    for (name, par) in settings() {
        let assembler = Assembler::build(&mesh, &dofs, par);
        let mut k = assembler.build_matrix();
        group.bench_function(BenchmarkId::new("matrix", name), |b| {
            b.iter(|| {
                assembler
                    .assemble(
                        &mesh,
                        &dofs,
                        &kernel,
                        AssemblyTarget {
                            matrix: Some(black_box(&mut k)),
                            vector: None,
                            constraints: None,
                        },
                    )
                    .expect("assembly")
            })
        });
    }
    group.finish();
}

criterion_group!(benches, poisson_q1, elasticity_p1);
criterion_main!(benches);
