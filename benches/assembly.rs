//! Regression tracking of the stiffness assembly: one Poisson Q1 assembly on a 300 × 300 unit
//! square (90 601 DOFs) and one P1 elasticity assembly on a 16³ unit cube of Tet4 (14 739 DOFs),
//! matrix only; and the coupled deformation–diffusion kernel on the mesh of the charging-particle
//! benchmark (axisymmetric quarter disc of quad8, quadratic `u`, `c` and `μ`, 21 316 DOFs, a
//! lattice-gas host) and on the spinodal benchmark's (200 × 200 quad4, linear `c` and `μ`, no
//! mechanics, 80 802 DOFs), Jacobian with residual and residual alone; each on the calling
//! thread and on a 2-thread pool. Run with
//! `cargo bench --bench assembly`. Whole-process comparisons against the peer live in
//! `benches/fe_problems.rs` and `bench/run_all.sh`.

use std::hint::black_box;

use criterion::{criterion_group, criterion_main, BenchmarkId, Criterion, Throughput};
use dilata_fem::dofs::DofMap;
use dilata_fem::{Assembler, AssemblyTarget, CellKernel, FieldSpec, GeometryMode, Parallelism};
use dilata_linalg::CsrMatrix;
use dilata_material::elastic::Isotropic;
use dilata_mesh::generate::{
    cuboid, quarter_disc, rectangle, BoxParams, DiscParams, RectangleParams,
};
use dilata_mesh::{CellKind, Mesh};
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

/// One assembly of `kernel` into the given targets (no constraints).
fn assemble_once<K: CellKernel>(
    assembler: &Assembler,
    mesh: &Mesh,
    dofs: &DofMap,
    kernel: &K,
    matrix: Option<&mut CsrMatrix>,
    vector: Option<&mut [f64]>,
) where
    K::Error: std::fmt::Debug,
{
    assembler
        .assemble(
            mesh,
            dofs,
            kernel,
            AssemblyTarget {
                matrix: matrix.map(black_box),
                vector: vector.map(black_box),
                constraints: None,
            },
        )
        .expect("assembly")
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
            b.iter(|| assemble_once(&assembler, &mesh, &dofs, &kernel, Some(&mut k), None))
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
            b.iter(|| assemble_once(&assembler, &mesh, &dofs, &kernel, Some(&mut k), None))
        });
    }
    group.finish();
}

/// The coupled kernel of the charging-particle benchmark (bench/scenarios/particle_axisym.toml:
/// its mesh and material; a state with gradients in every field).
fn coupled_axisym(c: &mut Criterion) {
    use dilata_material::chemical::{ChemicalLaw, LatticeGasParams};
    use dilata_material::coupled::{CoupledLawParts, CoupledPointLaw};
    use dilata_material::mobility::{Diffusivity, LatticeGasMobilityParams, MobilityLaw};
    use dilata_material::stiffness::StiffnessLaw;
    use dilata_material::swelling::{IsotropicSwellingParams, SwellingLaw};
    use dilata_physics::coupled::LawMap;

    let radius = 5e-6;
    let mesh = quarter_disc(&DiscParams {
        radius,
        n_cells: 24,
        kind: CellKind::Quad8,
    })
    .expect("mesh");
    let (dofs, fields) = coupled_dofs(&mesh, 2, 2);
    let (c_max, temperature) = (2.4e4, 298.15);
    let law = CoupledPointLaw::new(CoupledLawParts {
        stiffness: StiffnessLaw::isotropic(Isotropic::new(80e9, 0.3).expect("moduli")),
        swelling: SwellingLaw::isotropic(IsotropicSwellingParams {
            partial_molar_volume: 3e-6,
            c_ref: 1200.0,
        })
        .expect("swelling"),
        chemical: ChemicalLaw::lattice_gas(LatticeGasParams {
            mu0: 0.0,
            temperature,
            c_max,
            interaction: 0.0,
        })
        .expect("chemical"),
        mobility: MobilityLaw::lattice_gas(LatticeGasMobilityParams {
            diffusivity: Diffusivity::isotropic(1e-14).expect("diffusivity"),
            temperature,
            c_max,
        })
        .expect("mobility"),
        gradient: dilata_material::gradient::GradientEnergy::none(),
    })
    .expect("law");
    let laws = LawMap::uniform(law, mesh.n_cells());
    let mut x = vec![0.0; dofs.n_dofs()];
    for (node, p) in mesh.points.iter().enumerate() {
        let (s, t) = (p[0] / radius, p[1] / radius);
        for comp in 0..2 {
            x[dofs.node_dof(fields.u, node, comp).expect("u")] = 1e-9 * (s + 0.3 * t * comp as f64);
        }
        x[dofs.node_dof(fields.c, node, 0).expect("c")] = 1200.0 * (1.0 + s * s + 0.5 * t);
        x[dofs.node_dof(fields.mu, node, 0).expect("mu")] = 1e3 * (s - t * t);
    }
    let kernel = Coupled {
        mesh: &mesh,
        dofs: &dofs,
        mode: GeometryMode::Axisymmetric,
        laws: &laws,
        x: &x,
    };
    coupled_group(c, "assembly_coupled_axisym_quad8", &kernel);
}

/// DOF map of `u` (`u_components`, 0 without mechanics), `c` and `μ`, all of one order.
fn coupled_dofs(
    mesh: &Mesh,
    u_components: usize,
    order: usize,
) -> (DofMap, dilata_physics::coupled::CoupledFields) {
    let dofs = DofMap::build(
        mesh,
        &[
            FieldSpec::vector("u", u_components, order),
            FieldSpec::scalar("c", order),
            FieldSpec::scalar("mu", order),
        ],
    )
    .expect("dofs");
    let fields = dilata_physics::coupled::CoupledFields {
        u: dofs.field("u").expect("u"),
        c: dofs.field("c").expect("c"),
        mu: dofs.field("mu").expect("mu"),
    };
    (dofs, fields)
}

/// A coupled problem at one state: the kernel is built around `x` with the rate term
/// `a0 = 0.1`, history `−x/10`.
struct Coupled<'a> {
    mesh: &'a Mesh,
    dofs: &'a DofMap,
    mode: GeometryMode,
    laws: &'a dilata_physics::coupled::LawMap,
    x: &'a [f64],
}

/// Jacobian-with-residual and residual-only passes of a coupled kernel, 1 and 2 threads.
fn coupled_group(c: &mut Criterion, name: &str, problem: &Coupled<'_>) {
    use dilata_physics::coupled::{CoupledKernel, RateTerm, TangentPart};
    let Coupled {
        mesh,
        dofs,
        mode,
        laws,
        x,
    } = *problem;
    let history: Vec<f64> = x.iter().map(|v| -v / 10.0).collect();
    let kernel = CoupledKernel {
        dofs,
        fields: dilata_physics::coupled::CoupledFields {
            u: dofs.field("u").expect("u"),
            c: dofs.field("c").expect("c"),
            mu: dofs.field("mu").expect("mu"),
        },
        mode,
        laws,
        rate: RateTerm {
            a0: 0.1,
            history: &history,
        },
        source: None,
        body_force: None,
        potential_source: None,
        solution: x,
        tangent: TangentPart::Whole,
    };
    let kernel = &kernel;
    let mut group = c.benchmark_group(name);
    group.sample_size(20);
    group.throughput(Throughput::Elements(dofs.n_dofs() as u64));
    for (name, par) in settings() {
        let assembler = Assembler::build(mesh, dofs, par);
        let mut k = assembler.build_matrix();
        let mut r = vec![0.0; dofs.n_dofs()];
        group.bench_function(BenchmarkId::new("jacobian", name), |b| {
            b.iter(|| assemble_once(&assembler, mesh, dofs, kernel, Some(&mut k), Some(&mut r)))
        });
        group.bench_function(BenchmarkId::new("residual", name), |b| {
            b.iter(|| assemble_once(&assembler, mesh, dofs, kernel, None, Some(&mut r)))
        });
    }
    group.finish();
}

/// The coupled kernel without mechanics on the spinodal benchmark's mesh and law (200 × 200
/// quad4, linear `c` and `μ`, 80 802 DOFs; double well, gradient energy, constant mobility), at
/// a state with gradients in both fields.
fn coupled_spinodal(c: &mut Criterion) {
    use dilata_material::chemical::{ChemicalLaw, DoubleWellParams};
    use dilata_material::coupled::{CoupledLawParts, CoupledPointLaw};
    use dilata_material::gradient::GradientEnergy;
    use dilata_material::mobility::MobilityLaw;
    use dilata_material::stiffness::StiffnessLaw;
    use dilata_material::swelling::{IsotropicSwellingParams, SwellingLaw};
    use dilata_physics::coupled::LawMap;

    let mesh = rectangle(&RectangleParams {
        origin: [0.0, 0.0],
        lengths: [200.0, 200.0],
        n_cells: [200, 200],
        kind: CellKind::Quad4,
    })
    .expect("mesh");
    let (dofs, fields) = coupled_dofs(&mesh, 0, 1);
    // As `dilata run` builds a law without mechanics (crates/run/src/model.rs).
    let law = CoupledPointLaw::new(CoupledLawParts {
        stiffness: StiffnessLaw::isotropic(Isotropic::new(1.0, 0.0).expect("moduli")),
        swelling: SwellingLaw::isotropic(IsotropicSwellingParams {
            partial_molar_volume: 0.0,
            c_ref: 0.0,
        })
        .expect("swelling"),
        chemical: ChemicalLaw::double_well(DoubleWellParams {
            height: 5.0,
            c_a: 0.3,
            c_b: 0.7,
        })
        .expect("chemical"),
        mobility: MobilityLaw::constant(nalgebra::Matrix3::identity() * 5.0).expect("mobility"),
        gradient: GradientEnergy::isotropic(2.0).expect("gradient"),
    })
    .expect("law");
    let laws = LawMap::uniform(law, mesh.n_cells());
    let mut x = vec![0.0; dofs.n_dofs()];
    for (node, p) in mesh.points.iter().enumerate() {
        x[dofs.node_dof(fields.c, node, 0).expect("c")] =
            0.5 + 0.01 * (0.105 * p[0]).cos() * (0.11 * p[1]).cos();
        x[dofs.node_dof(fields.mu, node, 0).expect("mu")] = 0.1 * (0.05 * p[0]).sin();
    }
    let kernel = Coupled {
        mesh: &mesh,
        dofs: &dofs,
        mode: GeometryMode::PlaneStrain,
        laws: &laws,
        x: &x,
    };
    coupled_group(c, "assembly_coupled_spinodal_quad4", &kernel);
}

criterion_group!(
    benches,
    poisson_q1,
    elasticity_p1,
    coupled_axisym,
    coupled_spinodal
);
criterion_main!(benches);
