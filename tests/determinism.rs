//! Serial and multi-threaded assembly give identical bits (acceptance: "the result independent
//! of thread count to the last bit"). Common practice, no source: the colouring guarantees that
//! every entry receives its contributions in the same order whatever the thread count.

use dilata_fem::dofs::DofMap;
use dilata_fem::{Assembler, AssemblyTarget, Constraints, FieldSpec, GeometryMode};
use dilata_linalg::Parallelism;
use dilata_material::elastic::Isotropic;
use dilata_mesh::generate::{ball_octant, rectangle, BallParams, RectangleParams};
use dilata_mesh::{CellKind, Mesh};
use dilata_physics::elasticity::{mode_stiffness, ElasticityKernel};

fn assemble(
    mesh: &Mesh,
    mode: GeometryMode,
    parallelism: Parallelism,
) -> (Vec<f64>, Vec<f64>, usize) {
    assemble_with(mesh, mode, parallelism, true).0
}

/// Matrix, vector and colour count; whether the assembler had its entry table (after dropping
/// it when `keep_table` is false).
fn assemble_with(
    mesh: &Mesh,
    mode: GeometryMode,
    parallelism: Parallelism,
    keep_table: bool,
) -> ((Vec<f64>, Vec<f64>, usize), bool) {
    let kind = mesh.blocks[0].kind;
    let dofs = DofMap::build(mesh, &[FieldSpec::vector("u", mesh.dim, kind.order())]).unwrap();
    let u = dofs.field("u").unwrap();
    // A non-trivial state so that the residual is not zero.
    let x: Vec<f64> = (0..dofs.n_dofs())
        .map(|i| ((i as f64) * 0.7311).sin() * 1e-4)
        .collect();
    let stiffness = mode_stiffness(&Isotropic::new(10e9, 0.27).unwrap().stiffness(), mode);
    let mut assembler = Assembler::build(mesh, &dofs, parallelism);
    if !keep_table {
        assembler.drop_entry_table();
    }
    let mut matrix = assembler.build_matrix();
    let mut vector = vec![0.0; dofs.n_dofs()];
    // Some constrained DOFs, to exercise the elimination path too.
    let mut cons = Constraints::new(dofs.n_dofs());
    let fixed: Vec<usize> = (0..dofs.n_dofs()).step_by(97).collect();
    cons.add_group("some", &fixed, 1e-5);
    let values = cons.values().to_vec();
    let kernel = ElasticityKernel {
        dofs: &dofs,
        field: u,
        mode,
        stiffness,
        body_force: None,
        solution: &x,
    };
    assembler
        .assemble(
            mesh,
            &dofs,
            &kernel,
            AssemblyTarget {
                matrix: Some(&mut matrix),
                vector: Some(&mut vector),
                constraints: Some((&cons, &values)),
            },
        )
        .unwrap();
    (
        (matrix.values, vector, assembler.n_colors()),
        assembler.has_entry_table(),
    )
}

fn bits(v: &[f64]) -> Vec<u64> {
    v.iter().map(|x| x.to_bits()).collect()
}

fn cases() -> Vec<(Mesh, GeometryMode)> {
    vec![
        (
            rectangle(&RectangleParams {
                origin: [0.0, 0.0],
                lengths: [2.0, 1.0],
                n_cells: [40, 20],
                kind: CellKind::Tri6,
            })
            .unwrap(),
            GeometryMode::PlaneStrain,
        ),
        (
            rectangle(&RectangleParams {
                origin: [0.1, 0.0],
                lengths: [1.0, 1.0],
                n_cells: [30, 30],
                kind: CellKind::Quad4,
            })
            .unwrap(),
            GeometryMode::Axisymmetric,
        ),
        (
            ball_octant(&BallParams {
                radius: 1.0,
                n_cells: 6,
                kind: CellKind::Hex20,
            })
            .unwrap(),
            GeometryMode::ThreeD,
        ),
    ]
}

#[test]
fn serial_and_parallel_assembly_agree_bit_for_bit() {
    let cases = cases();
    for (mesh, mode) in &cases {
        let (m1, v1, colors) = assemble(mesh, *mode, Parallelism::Sequential);
        for threads in [2, 3] {
            let (m2, v2, _) = assemble(mesh, *mode, Parallelism::Rayon { threads });
            assert_eq!(
                bits(&m1),
                bits(&m2),
                "matrix differs with {threads} threads ({mode:?})"
            );
            assert_eq!(
                bits(&v1),
                bits(&v2),
                "vector differs with {threads} threads ({mode:?})"
            );
        }
        // Several colours of chunks: the parallel path really ran concurrent tasks.
        assert!(colors > 1, "only {colors} colour(s)");
        assert!(v1.iter().any(|&x| x != 0.0));
    }
}

/// The scatter through the per-cell entry table writes the same bits as the scatter that
/// searches each CSR row (every entry gets its additions in the same order), with constrained
/// DOFs too; the table exists for the cells with at least 8 DOFs (Tri6, Quad4 and Hex20
/// vectors here). Common practice, no source.
#[test]
fn entry_table_scatter_is_the_searching_scatter() {
    let mut with_table = 0;
    for (mesh, mode) in &cases() {
        for par in [Parallelism::Sequential, Parallelism::Rayon { threads: 2 }] {
            let ((m1, v1, _), table) = assemble_with(mesh, *mode, par, true);
            let ((m2, v2, _), dropped) = assemble_with(mesh, *mode, par, false);
            assert!(!dropped);
            let n_loc = mesh.blocks[0].kind.n_nodes() * mesh.dim;
            assert_eq!(table, n_loc >= 8, "{:?}", mesh.blocks[0].kind);
            with_table += usize::from(table);
            assert_eq!(bits(&m1), bits(&m2), "matrix ({mode:?}, {par:?})");
            assert_eq!(bits(&v1), bits(&v2), "vector ({mode:?}, {par:?})");
        }
    }
    assert_eq!(
        with_table, 6,
        "three meshes with the table, two thread settings each"
    );
}
