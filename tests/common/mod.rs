//! Shared helpers of the integration tests.
#![allow(dead_code)]

pub mod gel;
pub mod periodic;
pub mod sphere;
pub mod stress;

use std::collections::BTreeSet;

use dilata_linalg::{DirectParams, FaerCholesky, LinearSolver, Ordering};
use dilata_mesh::Mesh;
use dilata_solve::{newton, FieldProblem, NewtonParams};

/// Nodes on any named boundary of the mesh.
pub fn all_boundary_nodes(mesh: &Mesh) -> Vec<usize> {
    let mut set = BTreeSet::new();
    for name in mesh.boundaries.keys() {
        set.extend(mesh.boundary_nodes(name).unwrap());
    }
    set.into_iter().collect()
}

/// Move every node not on a boundary by a deterministic pseudo-random offset of at most
/// `amplitude × h` in each direction, then put the mid-edge nodes of quadratic cells back to
/// the midpoint of their edge's corners, so the cells stay valid while the mesh loses all
/// regularity.
pub fn distort(mesh: &mut Mesh, h: f64, amplitude: f64) {
    let fixed: BTreeSet<usize> = all_boundary_nodes(mesh).into_iter().collect();
    let mut state: u64 = 0x2545_f491_4f6c_dd1d;
    let mut next = || {
        // xorshift64*; deterministic, no dependency.
        state ^= state >> 12;
        state ^= state << 25;
        state ^= state >> 27;
        (state.wrapping_mul(0x2545_f491_4f6c_dd1d) >> 11) as f64 / (1u64 << 53) as f64 * 2.0 - 1.0
    };
    let dim = mesh.dim;
    for (n, p) in mesh.points.iter_mut().enumerate() {
        let shift: Vec<f64> = (0..dim).map(|_| next()).collect();
        if !fixed.contains(&n) {
            for d in 0..dim {
                p[d] += amplitude * h * shift[d];
            }
        }
    }
    // Quadratic nodes back onto straight edges and face/cell centres.
    let cells: Vec<(dilata_mesh::CellKind, Vec<usize>)> =
        mesh.cells().map(|(_, k, n)| (k, n.to_vec())).collect();
    for (kind, nodes) in &cells {
        if kind.order() < 2 {
            continue;
        }
        let x = |mesh: &Mesh, i: usize| mesh.points[nodes[i]];
        for &(a, b, m) in kind.edges() {
            let (pa, pb) = (x(mesh, a), x(mesh, b));
            mesh.points[nodes[m]] = [
                (pa[0] + pb[0]) / 2.0,
                (pa[1] + pb[1]) / 2.0,
                (pa[2] + pb[2]) / 2.0,
            ];
        }
        let centre_of = |mesh: &Mesh, idx: &[usize]| {
            let mut c = [0.0; 3];
            for &i in idx {
                let p = mesh.points[nodes[i]];
                for d in 0..3 {
                    c[d] += p[d] / idx.len() as f64;
                }
            }
            c
        };
        match kind {
            dilata_mesh::CellKind::Quad9 => mesh.points[nodes[8]] = centre_of(mesh, &[0, 1, 2, 3]),
            dilata_mesh::CellKind::Hex27 => {
                for (f, (_, face)) in dilata_mesh::CellKind::Hex8.facets().iter().enumerate() {
                    mesh.points[nodes[20 + f]] = centre_of(mesh, face);
                }
                mesh.points[nodes[26]] = centre_of(mesh, &[0, 1, 2, 3, 4, 5, 6, 7]);
            }
            _ => {}
        }
    }
}

/// Solve a (linear) field problem by Newton with a direct solver; returns the solution.
pub fn solve(problem: &mut FieldProblem<'_>) -> Vec<f64> {
    let mut solver = FaerCholesky::new(DirectParams::with_ordering(Ordering::Amd));
    solver.analyze(problem.assembler.pattern()).unwrap();
    let mut x = vec![0.0; problem.dofs.n_dofs()];
    let params = NewtonParams {
        abs_tol: 0.0,
        rel_tol: 1e-12,
        step_tol: 1e-12,
        max_iterations: 5,
        max_backtracks: 0,
    };
    newton(problem, &mut solver, &mut x, &params)
        .expect("a linear problem converges in one or two Newton iterations");
    x
}

/// Material numbers of a coupled dilute host (SI units).
pub struct DiluteHost {
    pub young: f64,
    pub poisson: f64,
    /// Partial molar volume Ω in m³/mol.
    pub omega: f64,
    pub diffusivity: f64,
    pub temperature: f64,
    /// Stress-free concentration, also the reference of the dilute potential.
    pub c_ref: f64,
}

/// The parts of the coupled dilute law of `host` (a caller may still change the stiffness,
/// e.g. condense it for plane stress, before `CoupledPointLaw::new`).
pub fn dilute_parts(host: &DiluteHost) -> dilata_material::coupled::CoupledLawParts {
    use dilata_material::chemical::{ChemicalLaw, IdealDiluteParams};
    use dilata_material::elastic::Isotropic;
    use dilata_material::mobility::{Diffusivity, DiluteMobilityParams, MobilityLaw};
    use dilata_material::stiffness::StiffnessLaw;
    use dilata_material::swelling::{IsotropicSwellingParams, SwellingLaw};
    dilata_material::coupled::CoupledLawParts {
        stiffness: StiffnessLaw::isotropic(Isotropic::new(host.young, host.poisson).unwrap()),
        swelling: SwellingLaw::isotropic(IsotropicSwellingParams {
            partial_molar_volume: host.omega,
            c_ref: host.c_ref,
        })
        .unwrap(),
        chemical: ChemicalLaw::ideal_dilute(IdealDiluteParams {
            mu0: 0.0,
            temperature: host.temperature,
            c_ref: host.c_ref,
        })
        .unwrap(),
        mobility: MobilityLaw::dilute(DiluteMobilityParams {
            diffusivity: Diffusivity::isotropic(host.diffusivity).unwrap(),
            temperature: host.temperature,
        })
        .unwrap(),
        gradient: dilata_material::gradient::GradientEnergy::none(),
    }
}

/// The coupled dilute law of `host`.
pub fn dilute_law(host: &DiluteHost) -> dilata_material::coupled::CoupledPointLaw {
    dilata_material::coupled::CoupledPointLaw::new(dilute_parts(host)).unwrap()
}

/// DOF map of the coupled fields: `u` of order `u_order`, linear `c` and `mu`.
pub fn coupled_dofs(
    mesh: &Mesh,
    u_order: usize,
) -> (
    dilata_fem::dofs::DofMap,
    dilata_physics::coupled::CoupledFields,
) {
    use dilata_fem::FieldSpec;
    let dofs = dilata_fem::dofs::DofMap::build(
        mesh,
        &[
            FieldSpec::vector("u", mesh.dim, u_order),
            FieldSpec::scalar("c", 1),
            FieldSpec::scalar("mu", 1),
        ],
    )
    .unwrap();
    let fields = dilata_physics::coupled::CoupledFields {
        u: dofs.field("u").unwrap(),
        c: dofs.field("c").unwrap(),
        mu: dofs.field("mu").unwrap(),
    };
    (dofs, fields)
}

/// Run `model` through the driver of `dilata run` (no progress output) into a fresh temporary
/// folder, on `threads` threads; the folder lives as long as the returned handle.
pub fn run_in_tempdir(
    model: &dilata_run::Model,
    threads: usize,
) -> Result<(dilata_run::RunSummary, tempfile::TempDir), dilata_run::RunError> {
    let dir = tempfile::tempdir().unwrap();
    let summary = dilata_run::run(
        model,
        &dilata_run::RunOptions {
            out: dir.path().to_path_buf(),
            threads: Some(threads),
        },
        &mut |_| {},
    )?;
    Ok((summary, dir))
}

/// Build a scenario given as text and run it (single thread); returns the model, the summary and
/// the results folder.
pub fn run_text(text: &str) -> (dilata_run::Model, dilata_run::RunSummary, tempfile::TempDir) {
    let model =
        dilata_run::build_model(text.to_string(), "test.toml", std::path::Path::new(".")).unwrap();
    let (summary, dir) = run_in_tempdir(&model, 1).unwrap();
    (model, summary, dir)
}

/// Rows of `history.csv` in `dir`, each a map from column name to text.
pub fn history(dir: &std::path::Path) -> Vec<std::collections::BTreeMap<String, String>> {
    let text = std::fs::read_to_string(dir.join("history.csv")).unwrap();
    let mut lines = text.lines();
    let header: Vec<String> = lines
        .next()
        .unwrap()
        .split(',')
        .map(str::to_string)
        .collect();
    lines
        .map(|l| {
            header
                .iter()
                .cloned()
                .zip(l.split(',').map(str::to_string))
                .collect()
        })
        .collect()
}

/// One column of history rows, parsed.
pub fn column(rows: &[std::collections::BTreeMap<String, String>], name: &str) -> Vec<f64> {
    rows.iter().map(|r| r[name].parse().unwrap()).collect()
}

/// Magnitudes of a coupled state: the body size (m), and the scale of the displacement (m), the
/// concentration (mol/m³) and the potential (J/mol) unknowns. [`smooth_state`] builds a state
/// of these magnitudes, and [`tangent_error`] sizes its difference steps and compares columns by
/// them (small strain: displacements of a thousandth of the body size or less; finite strain:
/// a tenth of it or more).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct StateScales {
    pub length: f64,
    pub u: f64,
    pub c: f64,
    pub mu: f64,
}

/// A smooth non-trivial state: displacements of magnitude `s.u` with gradients in every
/// direction that vary in space (bilinear terms), `c` around `s.c` (varying by about ±20 %),
/// `μ` of magnitude `s.mu` with gradients.
pub fn smooth_state(
    mesh: &Mesh,
    dofs: &dilata_fem::dofs::DofMap,
    fields: dilata_physics::coupled::CoupledFields,
    s: &StateScales,
) -> Vec<f64> {
    let mut x = vec![0.0; dofs.n_dofs()];
    for node in 0..mesh.n_points() {
        let p = mesh.points[node];
        let (sx, sy, sz) = (p[0] / s.length, p[1] / s.length, p[2] / s.length);
        for comp in 0..mesh.dim {
            x[dofs.node_dof(fields.u, node, comp).unwrap()] =
                s.u * ((comp as f64 + 1.0) * sx - 0.7 * sy + 0.3 * (sy + sz) * sx);
        }
        if let Ok(d) = dofs.node_dof(fields.c, node, 0) {
            x[d] = s.c * (1.0 + 0.2 * (sx - 0.5 * sy + 0.3 * sz));
        }
        if let Ok(d) = dofs.node_dof(fields.mu, node, 0) {
            x[d] = s.mu * (0.3 + sx * sy - sz);
        }
    }
    x
}

/// Worst difference between the local tangent written by `run(x, ..)` on cell 0 and central
/// differences of its local residual, with the location (row, column, tangent, difference).
///
/// The step of a column is `1e-6` times the scale of its unknown (`s.u`, `s.c` or `s.mu`).
/// Entries are compared as sensitivities to a relative change of each unknown (scaled by their
/// column's unknown scale), relative to the largest scaled entry of their row, since the
/// fields carry different units.
pub fn tangent_error(
    mesh: &Mesh,
    dofs: &dilata_fem::dofs::DofMap,
    fields: dilata_physics::coupled::CoupledFields,
    x: &[f64],
    s: &StateScales,
    run: impl Fn(&[f64], &dilata_fem::CellInput<'_>, dilata_fem::LocalOutput<'_>),
) -> (f64, (usize, usize, f64, f64)) {
    use dilata_fem::{CellInput, LocalOutput};
    let (kind, nodes) = mesh.cell(0);
    let coords: Vec<[f64; 3]> = nodes.iter().map(|&i| mesh.points[i]).collect();
    let cd = dofs.cell_dofs(0).to_vec();
    let m = cd.len();
    let mut ke = vec![0.0; m * m];
    let mut fe = vec![0.0; m];
    let input = CellInput {
        id: 0,
        kind,
        nodes,
        coords: &coords,
        dofs: &cd,
    };
    run(
        x,
        &input,
        LocalOutput {
            matrix: Some(&mut ke),
            vector: Some(&mut fe),
        },
    );
    let scale = |d: usize| {
        if dofs.field_range(fields.u).contains(&d) {
            s.u
        } else if dofs.field_range(fields.c).contains(&d) {
            s.c
        } else {
            s.mu
        }
    };
    let mut worst: f64 = 0.0;
    let mut at = (0, 0, 0.0, 0.0);
    for b in 0..m {
        let h = 1e-6 * scale(cd[b]);
        let eval = |delta: f64| {
            let mut xp = x.to_vec();
            xp[cd[b]] += delta;
            let mut f = vec![0.0; m];
            run(
                &xp,
                &input,
                LocalOutput {
                    matrix: None,
                    vector: Some(&mut f),
                },
            );
            f
        };
        let (fp, fm) = (eval(h), eval(-h));
        for a in 0..m {
            let fd = (fp[a] - fm[a]) / (2.0 * h);
            let row_scale = (0..m)
                .map(|bb| (ke[a * m + bb] * scale(cd[bb])).abs())
                .fold(0.0, f64::max)
                .max(1e-300);
            let e = (ke[a * m + b] - fd).abs() * scale(cd[b]) / row_scale;
            if e > worst {
                worst = e;
                at = (a, b, ke[a * m + b], fd);
            }
        }
    }
    (worst, at)
}
