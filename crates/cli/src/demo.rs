//! `dilata demo`: the built-in demonstration.
//!
//! Scenario (invented): a thick-walled steel tube, bore radius 10 mm and outer radius 20 mm,
//! holds a fluid at 50 MPa. A quarter of the cross-section is modelled in plane strain with
//! symmetry conditions on the two cut faces. The bore hoop stress is compared with the Lamé
//! solution `σ_θ(a) = p (a² + b²)/(b² − a²)` (Timoshenko & Goodier, Theory of Elasticity,
//! thick-walled cylinder; from memory).

use std::path::Path;
use std::time::Instant;

use anyhow::Context;
use dilata_fem::dofs::DofMap;
use dilata_fem::quality::check_cells;
use dilata_fem::{BoundaryTarget, FieldSpec, GeometryMode};
use dilata_io::{FieldData, FieldKind, PvdWriter};
use dilata_linalg::{DirectParams, FaerCholesky, LinearSolver, Ordering, Parallelism};
use dilata_material::elastic::{hydrostatic, max_principal, von_mises, Isotropic};
use dilata_mesh::generate::{annulus_sector, AnnulusParams};
use dilata_mesh::CellKind;
use dilata_physics::elasticity::mode_stiffness;
use dilata_physics::recovery::{recover_nodal_stress, StressRecovery};
use dilata_solve::{newton, BoundaryLoad, BulkLaw, FieldProblem, NewtonParams};

use crate::json::Json;

const BORE: f64 = 0.010;
const OUTER: f64 = 0.020;
const PRESSURE: f64 = 50e6;
const YOUNG: f64 = 200e9;
const POISSON: f64 = 0.3;

pub fn run(out: &Path, threads: Option<usize>, refine: usize) -> anyhow::Result<()> {
    anyhow::ensure!(
        (1..=64).contains(&refine),
        "--refine must be between 1 and 64, got {refine}"
    );
    std::fs::create_dir_all(out)
        .with_context(|| format!("cannot create results directory {}", out.display()))?;
    let parallelism = match threads {
        Some(0) => anyhow::bail!("--threads must be at least 1"),
        Some(1) => Parallelism::Sequential,
        Some(n) => Parallelism::Rayon { threads: n },
        None => Parallelism::Rayon { threads: 0 },
    };
    let t0 = Instant::now();
    let mesh = annulus_sector(&AnnulusParams {
        inner_radius: BORE,
        outer_radius: OUTER,
        angle: std::f64::consts::FRAC_PI_2,
        n_radial: 4 * refine,
        n_angular: 8 * refine,
        kind: CellKind::Quad9,
    })?;
    check_cells(&mesh)?;
    let mode = GeometryMode::PlaneStrain;
    let dofs = DofMap::build(&mesh, &[FieldSpec::vector("u", 2, 2)])?;
    let u = dofs.field("u")?;
    let law = Isotropic::new(YOUNG, POISSON)?;
    let stiffness = mode_stiffness(&law.stiffness(), mode);
    let mut problem = FieldProblem::new(
        &mesh,
        dofs,
        u,
        mode,
        BulkLaw::Elasticity {
            stiffness: Box::new(stiffness),
            body_force: None,
        },
        parallelism,
    );
    // Symmetry: no normal displacement on the cut faces (θ = 0 is y = 0; θ = π/2 is x = 0).
    problem.constraints.add_boundary(
        &mesh,
        &problem.dofs,
        BoundaryTarget {
            boundary: "start",
            field: u,
            component: 1,
        },
        0.0,
    )?;
    problem.constraints.add_boundary(
        &mesh,
        &problem.dofs,
        BoundaryTarget {
            boundary: "end",
            field: u,
            component: 0,
        },
        0.0,
    )?;
    problem.loads.push((
        mesh.boundary("inner")?.to_vec(),
        BoundaryLoad::Pressure(PRESSURE),
    ));
    let n_dofs = problem.dofs.n_dofs();

    let mut solver = FaerCholesky::new(DirectParams {
        ordering: Ordering::Amd,
        parallelism,
    });
    solver.analyze(problem.assembler.pattern())?;
    let mut x = vec![0.0; n_dofs];
    let info = newton(&mut problem, &mut solver, &mut x, &NewtonParams::default())?;
    let solve_time = t0.elapsed();

    let stress = recover_nodal_stress(
        &mesh,
        &StressRecovery {
            dofs: &problem.dofs,
            field: u,
            mode,
            stiffness: &stiffness,
            solution: &x,
        },
    )?;
    let mut disp = vec![0.0; 3 * mesh.n_points()];
    for n in 0..mesh.n_points() {
        for c in 0..2 {
            disp[3 * n + c] = x[problem.dofs.node_dof(u, n, c)?];
        }
    }
    let tensor: Vec<f64> = stress
        .iter()
        .flat_map(|s| s.iter().copied().collect::<Vec<_>>())
        .collect();
    let sh: Vec<f64> = stress.iter().map(hydrostatic).collect();
    let vm: Vec<f64> = stress.iter().map(von_mises).collect();
    let mp: Vec<f64> = stress.iter().map(max_principal).collect();

    // Bore hoop stress from the recovered nodal stress.
    let lame = PRESSURE * (BORE * BORE + OUTER * OUTER) / (OUTER * OUTER - BORE * BORE);
    let mut worst: f64 = 0.0;
    let mut mean = 0.0;
    let bore_nodes = mesh.boundary_nodes("inner")?;
    for &n in &bore_nodes {
        let [px, py, _] = mesh.points[n];
        let th = py.atan2(px);
        let (s, c) = th.sin_cos();
        let st = &stress[n];
        let hoop = st[0] * s * s + st[1] * c * c - 2.0 * st[3] * s * c;
        mean += hoop / bore_nodes.len() as f64;
        worst = worst.max((hoop - lame).abs() / lame);
    }

    let point_data = vec![
        FieldData::new("u", FieldKind::Vector, disp),
        FieldData::new("stress", FieldKind::SymTensor, tensor),
        FieldData::new("hydrostatic_stress", FieldKind::Scalar, sh),
        FieldData::new("von_mises_stress", FieldKind::Scalar, vm),
        FieldData::new("max_principal_stress", FieldKind::Scalar, mp),
    ];
    let vtu = out.join("tube.vtu");
    dilata_io::write_vtu(&vtu, &mesh, &point_data, &[])?;
    let mut pvd = PvdWriter::new(&out.join("tube.pvd"));
    pvd.add(0.0, "tube.vtu");
    pvd.write()?;
    write_expectations(out, &mesh, &point_data)?;

    println!("dilata demo: pressurised thick-walled tube (plane strain, quarter section, quad9)");
    println!(
        "  mesh        {} nodes, {} cells, {} DOFs",
        mesh.n_points(),
        mesh.n_cells(),
        n_dofs
    );
    println!(
        "  Newton      iterations: {}, residual {:.3e} -> {:.3e}",
        info.iterations,
        info.residual_norms[0],
        info.residual_norms.last().copied().unwrap_or(f64::NAN)
    );
    println!(
        "  wall time   {:.3} s (mesh, assembly, solve)",
        solve_time.as_secs_f64()
    );
    println!("  bore hoop stress  {:.6e} Pa (mean over bore nodes)", mean);
    println!("  Lamé solution     {:.6e} Pa", lame);
    println!(
        "  largest relative difference at a bore node: {:.3e}",
        worst
    );
    println!(
        "  wrote {} and {}",
        vtu.display(),
        out.join("tube.pvd").display()
    );
    println!("Results inform design; they do not certify it. Validate against experiments and applicable codes.");
    Ok(())
}

/// Expectations for an independent reader (CI's VTK check): counts and one value per array.
fn write_expectations(
    out: &Path,
    mesh: &dilata_mesh::Mesh,
    point_data: &[FieldData],
) -> anyhow::Result<()> {
    let mut arrays = Vec::new();
    let probe = mesh.n_points() / 2;
    for f in point_data {
        let nc = match f.kind {
            FieldKind::Scalar => 1,
            FieldKind::Vector => 3,
            FieldKind::SymTensor => 6,
        };
        let idx = probe * nc;
        arrays.push(Json::Obj(vec![
            ("association".into(), Json::Str("point".into())),
            ("name".into(), Json::Str(f.name.clone())),
            ("components".into(), Json::Int(nc as i64)),
            (
                "values".into(),
                Json::Arr(vec![Json::Arr(vec![
                    Json::Int(idx as i64),
                    Json::Num(f.values[idx]),
                ])]),
            ),
        ]));
    }
    let cells: Vec<(String, Json)> = mesh
        .cell_counts()
        .into_iter()
        .map(|(k, n)| (k.name().to_string(), Json::Int(n as i64)))
        .collect();
    let doc = Json::Obj(vec![
        ("points".into(), Json::Int(mesh.n_points() as i64)),
        ("cells".into(), Json::Int(mesh.n_cells() as i64)),
        ("cell_type_counts".into(), Json::Obj(cells)),
        ("arrays".into(), Json::Arr(arrays)),
    ]);
    dilata_io::write_atomic(&out.join("tube.expect.json"), doc.render().as_bytes())?;
    Ok(())
}
