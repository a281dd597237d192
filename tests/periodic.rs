//! Periodic bodies (`body.periodic`, `body.periodic_pairs`): node links shared by every field,
//! assembly that treats linked nodes as one node, and solutions of periodic problems against
//! closed forms. Rigid modes and input errors: `tests/periodic_input.rs`.
//!
//! Outside checks, each with its source beside it:
//! * a cosine profile decaying by pure diffusion on a periodic domain,
//!   `c = c0 + a exp(−D k² t) cos(k x)`, `k = 2π/L` (separation of variables; J. Crank, The
//!   Mathematics of Diffusion, 2nd ed., Oxford 1975, the Fourier-series solutions of chapter 4,
//!   from memory);
//! * a layer whose swelling strain varies only along x, periodic in x and y (no mean strain):
//!   `u_x' = (3λ+2μ)/(λ+2μ) e`, `σ_yy = σ_zz = −E e/(1−ν)`, `σ_xx = 0` for the swelling strain
//!   `e(x)` of zero mean (the laterally constrained layer of thermoelasticity; common practice,
//!   no source).

mod common;

use dilata_fem::dofs::DofMap;
use dilata_fem::{Assembler, AssemblyTarget, Constraints, FieldSpec, GeometryMode};
use dilata_linalg::Parallelism;
use dilata_material::elastic::Isotropic;
use dilata_mesh::generate::{rectangle, RectangleParams};
use dilata_mesh::periodic::{link_boundaries, BoundaryPair};
use dilata_mesh::{CellKind, Mesh};
use dilata_physics::elasticity::{mode_stiffness, ElasticityKernel};
use dilata_run::{build_dofs, nodal_field};

use common::periodic::{model, nodal_c, scenario, A, C0, D, L};

/// Decay of a cosine profile by pure diffusion (no swelling) on a rectangle periodic in x and y,
/// against `exp(−D k² t)` (source in the file header), on three meshes: the amplitude error
/// falls at the rate of the element (two for bilinear quads), and every pair of linked nodes
/// reads the same bits.
#[test]
fn a_cosine_profile_decays_at_the_fourier_rate() {
    let k = 2.0 * std::f64::consts::PI / L;
    let tau = 1.0 / (D * k * k);
    let mut errors = Vec::new();
    let mut off_mode = Vec::new();
    for n in [8, 16, 32] {
        let text = scenario(
            [n, 2],
            "quad4",
            r#"periodic = ["x", "y"]"#,
            0.0,
            &format!("duration = {tau:e}"),
            &format!(
                "[time]\nscheme = \"bdf2\"\nfixed_step = {:e}\n[output]\nfields = false",
                tau / 400.0
            ),
        );
        let model = model(&text);
        assert_eq!(model.links.n_linked(), (n + 1) + 3 - 1);
        let (summary, _dir) = common::run_in_tempdir(&model, 1).unwrap();
        let t = summary.final_time;
        assert!((t - tau).abs() < 1e-9 * tau, "t = {t}, tau = {tau}");
        let c = nodal_c(&model, &summary.final_solution);
        // Linked nodes carry the same bits: they read one DOF.
        for (node, master) in model.links.pairs() {
            assert_eq!(c[node].to_bits(), c[master].to_bits(), "node {node}");
        }
        // Amplitude by projection on cos(kx) over the nodes of one row (uniform spacing, the
        // discrete projection is exact for a cosine sampled on a full period).
        let row: Vec<usize> = (0..model.mesh.n_points())
            .filter(|&i| model.mesh.points[i][1] == 0.0 && model.mesh.points[i][0] < L * 0.999)
            .collect();
        assert_eq!(row.len(), n);
        let amp = 2.0 / n as f64
            * row
                .iter()
                .map(|&i| (c[i] - C0) * (k * model.mesh.points[i][0]).cos())
                .sum::<f64>();
        let exact = A * (-D * k * k * t).exp();
        let err = (amp - exact).abs() / exact;
        // What is left after removing the mode.
        let shape_err = row
            .iter()
            .map(|&i| (c[i] - C0 - amp * (k * model.mesh.points[i][0]).cos()).abs())
            .fold(0.0, f64::max);
        println!(
            "n = {n:2}: amplitude {amp:.6} vs exact {exact:.6}, relative error {err:.3e}, \
             off-mode residual {shape_err:.2e} mol/m^3"
        );
        errors.push(err);
        off_mode.push(shape_err);
    }
    let rates: Vec<f64> = errors.windows(2).map(|w| (w[0] / w[1]).log2()).collect();
    let off_rates: Vec<f64> = off_mode.windows(2).map(|w| (w[0] / w[1]).log2()).collect();
    println!("observed rates: amplitude {rates:?}, off-mode residual {off_rates:?}");
    // The discrete equations are nonlinear (μ = RT ln(c/c_ref) is a field of its own, the
    // mobility D c/RT varies), so the profile gains harmonics of order (k h)² a/c0; they must
    // vanish with h like the amplitude error.
    // Measured 1.80 on the coarse pair (n = 8 is not yet asymptotic) and 1.97 on the fine one.
    for r in &off_rates {
        assert!((1.6..2.4).contains(r), "off-mode residual rate {r}");
    }
    // Bilinear elements: the decay rate of a mode is off by O((k h)²), so the amplitude error
    // after one time constant falls fourfold per halving of h (rate 2); the time error of BDF2
    // with 400 steps per time constant is far below the finest spatial error.
    assert!(errors[2] < 5e-3, "finest error {}", errors[2]);
    for r in &rates {
        assert!((1.8..2.3).contains(r), "rate {r}");
    }
}

/// Swelling varying along x only, periodic in x and y: the displacement and the stresses of the
/// laterally constrained layer (source in the file header), with the rigid translations pinned
/// (no singular matrix) and the cell keeping its average shape. Two meshes: the nodal stress
/// (a projection, docs/theory.md §6) converges at its own rate.
#[test]
fn a_swelling_layer_periodic_in_x_and_y_has_the_constrained_layer_stress() {
    let omega = 3.0e-6;
    let (e_mod, nu) = (50.0e9, 0.25);
    let lambda = e_mod * nu / ((1.0 + nu) * (1.0 - 2.0 * nu));
    let mu = e_mod / (2.0 * (1.0 + nu));
    let k = 2.0 * std::f64::consts::PI / L;
    let mut stress_errors = Vec::new();
    for n in [16, 32] {
        let text = scenario(
            [n, 2],
            "quad9",
            r#"periodic = ["x", "y"]"#,
            omega,
            "duration = 1.0e-6",
            "[time]\nfixed_step = 1.0e-6\n[output]\nfields = false",
        );
        let model = model(&text);
        let (summary, _dir) = common::run_in_tempdir(&model, 1).unwrap();
        let (dofs, fields) = build_dofs(&model);
        let u = nodal_field(&model.mesh, &dofs, fields.u, &summary.final_solution);
        let c = nodal_field(&model.mesh, &dofs, fields.c, &summary.final_solution);
        // The concentration barely moves in 1 µs (D k² t = 4e-7); the swelling strain is taken
        // from the computed c, whose amplitude is measured as in the decay test.
        let row: Vec<usize> = (0..model.mesh.n_points())
            .filter(|&i| model.mesh.points[i][1] == 0.0 && model.mesh.points[i][0] < L * 0.999)
            .collect();
        let amp = 2.0 / row.len() as f64
            * row
                .iter()
                .map(|&i| (c[i] - C0) * (k * model.mesh.points[i][0]).cos())
                .sum::<f64>();
        let e_amp = omega / 3.0 * amp;
        let ux_amp = (3.0 * lambda + 2.0 * mu) / (lambda + 2.0 * mu) * e_amp / k;
        // Node 0 (the origin) is pinned; compare displacements relative to it.
        let mut worst: f64 = 0.0;
        let mut worst_y: f64 = 0.0;
        for i in 0..model.mesh.n_points() {
            let p = model.mesh.points[i];
            let exact = ux_amp * (k * p[0]).sin();
            worst = worst.max((u[2 * i] - u[0] - exact).abs());
            worst_y = worst_y.max((u[2 * i + 1] - u[1]).abs());
        }
        // Lateral stress: the peak nodal hydrostatic stress σ_h = (σ_yy + σ_zz)/3
        // = −2E e/(3(1−ν)), at the trough of e (x = L/2, a node of both meshes).
        let expected = 2.0 / 3.0 * e_mod / (1.0 - nu) * e_amp;
        let peak_h = summary.max_hydrostatic.0;
        let stress_err = (peak_h - expected).abs() / expected;
        println!(
            "n = {n}: u_x amplitude {ux_amp:.4e} m, largest error {:.2e} relative, largest u_y \
             {worst_y:.1e} m; peak hydrostatic stress {peak_h:.6e} Pa, expected {expected:.6e} \
             Pa ({stress_err:.2e} relative)",
            worst / ux_amp
        );
        // Quadratic elements, 16 or 32 per period: the nodal interpolation error of a sine is
        // of order (kh)³/…, measured 5e-5 at n = 16; 1e-3 leaves room without hiding a wrong
        // factor (a wrong stiffness combination is off by tens of percent).
        assert!(worst < 1e-3 * ux_amp, "{worst}");
        // No shear, no motion in y: u_y is round-off.
        assert!(worst_y < 1e-9 * ux_amp, "{worst_y}");
        stress_errors.push(stress_err);
    }
    // The nodal stress is the mean of the two cells' end-point derivatives, accurate to
    // O((kh)²) for quadratic cells: at most 2 % at 16 cells per period, falling about fourfold
    // per halving of h.
    assert!(stress_errors[0] < 2e-2, "{stress_errors:?}");
    assert!(
        stress_errors[1] < stress_errors[0] / 3.0,
        "stress error does not converge: {stress_errors:?}"
    );
}

/// A mesh large enough for seven assembly chunks (an odd number, so that the chunk holding the
/// top row and the one holding the bottom row, linked through y, would get one colour if the
/// colouring ignored the links).
fn chunked_mesh() -> Mesh {
    rectangle(&RectangleParams {
        origin: [0.0, 0.0],
        lengths: [1.0, 0.6],
        n_cells: [50, 36],
        kind: CellKind::Quad4,
    })
    .unwrap()
}

/// The colouring of a periodic mesh: no two chunks of one colour touch the same master node,
/// counting linked nodes as one (the property that keeps threads from writing one entry).
#[test]
fn the_colouring_counts_linked_nodes_as_one() {
    let mesh = chunked_mesh();
    // 1 800 cells in chunks of 28 (`chunk_cells`), which do not follow the rows of cells, so
    // that chunks meet across the periodic boundaries in many ways.
    let chunk = dilata_fem::assembly::chunk_cells(mesh.n_cells());
    assert_eq!((chunk, mesh.n_cells().div_ceil(chunk)), (28, 65));
    let links = link_boundaries(
        &mesh,
        &[
            BoundaryPair::new("left", "right"),
            BoundaryPair::new("bottom", "top"),
        ],
    )
    .unwrap();
    let dofs = DofMap::build_linked(&mesh, &[FieldSpec::scalar("c", 1)], &links).unwrap();
    let plain = DofMap::build(&mesh, &[FieldSpec::scalar("c", 1)]).unwrap();
    assert_eq!(
        dofs.n_dofs(),
        plain.n_dofs() - links.n_linked(),
        "one DOF per class of linked nodes"
    );
    let assembler = Assembler::build(&mesh, &dofs, Parallelism::Rayon { threads: 2 });
    // Pairs of chunks of one colour that touch the same master node.
    let conflicts = |assembler: &Assembler| {
        let mut owner = vec![usize::MAX; mesh.n_points()];
        let mut found = 0;
        for k in 0..assembler.n_colors() {
            owner.iter_mut().for_each(|o| *o = usize::MAX);
            for (q, chunk) in assembler.color_chunks(k).iter().enumerate() {
                for cell in chunk.clone() {
                    for &n in mesh.cell(cell).1 {
                        let m = links.master(n);
                        if owner[m] != usize::MAX && owner[m] != q {
                            found += 1;
                        }
                        owner[m] = q;
                    }
                }
            }
        }
        found
    };
    assert_eq!(
        conflicts(&assembler),
        0,
        "the linked colouring has conflicts"
    );
    // The colouring of the same mesh without links would let chunks of one colour write the
    // same linked DOF: the links do change the colouring.
    let plain_assembler = Assembler::build(&mesh, &plain, Parallelism::Sequential);
    let plain_conflicts = conflicts(&plain_assembler);
    println!(
        "colours: {} with links, {} without; the colouring without links has {plain_conflicts} conflicts through links",
        assembler.n_colors(),
        plain_assembler.n_colors()
    );
    assert!(plain_conflicts > 0);
}

/// Matrix and vector of a periodic elastic problem on 1 and 2 threads, bit for bit.
#[test]
fn periodic_assembly_is_identical_on_one_and_two_threads() {
    let mesh = chunked_mesh();
    let links = link_boundaries(
        &mesh,
        &[
            BoundaryPair::new("left", "right"),
            BoundaryPair::new("bottom", "top"),
        ],
    )
    .unwrap();
    let dofs = DofMap::build_linked(&mesh, &[FieldSpec::vector("u", 2, 1)], &links).unwrap();
    let u = dofs.field("u").unwrap();
    let x: Vec<f64> = (0..dofs.n_dofs())
        .map(|i| ((i as f64) * 0.7311).sin() * 1e-4)
        .collect();
    let stiffness = mode_stiffness(
        &Isotropic::new(10e9, 0.27).unwrap().stiffness(),
        GeometryMode::PlaneStrain,
    );
    let assemble = |parallelism| {
        let assembler = Assembler::build(&mesh, &dofs, parallelism);
        let mut matrix = assembler.build_matrix();
        let mut vector = vec![0.0; dofs.n_dofs()];
        let cons = Constraints::new(dofs.n_dofs());
        let kernel = ElasticityKernel {
            dofs: &dofs,
            field: u,
            mode: GeometryMode::PlaneStrain,
            stiffness,
            body_force: None,
            solution: &x,
        };
        assembler
            .assemble(
                &mesh,
                &dofs,
                &kernel,
                AssemblyTarget {
                    matrix: Some(&mut matrix),
                    vector: Some(&mut vector),
                    constraints: Some((&cons, &[])),
                },
            )
            .unwrap();
        (matrix, vector)
    };
    let (m1, v1) = assemble(Parallelism::Sequential);
    let bits = |v: &[f64]| v.iter().map(|x| x.to_bits()).collect::<Vec<_>>();
    for _ in 0..3 {
        let (m2, v2) = assemble(Parallelism::Rayon { threads: 2 });
        assert_eq!(bits(&m1.values), bits(&m2.values), "matrix");
        assert_eq!(bits(&v1), bits(&v2), "vector");
    }
    // The stiffness of a periodic body annihilates the translations (rows sum to zero per
    // component) and nothing else of the rigid motions: a check that the linked contributions
    // were summed into shared rows, not dropped.
    let n = dofs.n_dofs();
    let mut ones_x = vec![0.0; n];
    for node in dofs.field_nodes(u) {
        ones_x[dofs.node_dof(u, node, 0).unwrap()] = 1.0;
    }
    let mut y = vec![0.0; n];
    m1.mul_vec_into(&ones_x, &mut y);
    let scale = m1.values.iter().fold(0.0f64, |a, v| a.max(v.abs()));
    let worst = y.iter().fold(0.0f64, |a, v| a.max(v.abs()));
    assert!(
        worst < 1e-12 * scale,
        "K · (translation x) = {worst}, |K| {scale}"
    );
}

/// A periodic coupled run (swelling, diffusion, rigid translations pinned) writes the same
/// history and the same final state, bit for bit, on 1 and 2 threads.
#[test]
fn a_periodic_run_is_identical_on_one_and_two_threads() {
    let text = scenario(
        [56, 32],
        "quad4",
        r#"periodic = ["x", "y"]"#,
        3.0e-6,
        "duration = 5.0",
        "[time]\nfixed_step = 1.0\n[output]\nfields = false",
    );
    let model = model(&text);
    assert_eq!(model.mesh.n_cells(), 1792);
    let mut results = Vec::new();
    for threads in [1, 2] {
        let (summary, dir) = common::run_in_tempdir(&model, threads).unwrap();
        let history = std::fs::read_to_string(dir.path().join("history.csv")).unwrap();
        results.push((summary.final_solution, history));
    }
    let bits = |v: &[f64]| v.iter().map(|x| x.to_bits()).collect::<Vec<_>>();
    assert_eq!(bits(&results[0].0), bits(&results[1].0), "final state");
    assert_eq!(results[0].1, results[1].1, "history.csv");
    assert!(results[0].1.lines().count() >= 6);
}

/// A potential held on a boundary that crosses a periodic pair (the bottom of a rectangle
/// periodic in x: its two end nodes are one node). The problem is uniform in x, so the periodic
/// body must give the concentration of the same rectangle without links, whose closed sides
/// are mirror planes. Regression: the row exchange of a held potential must also act on the
/// cells of the linked side.
#[test]
fn a_held_potential_across_a_periodic_pair_matches_the_closed_body() {
    // μ = RT ln(1.2) above the reference: c tends to 1.2 c_ref at the bottom.
    let mu_hold = 8.314_462_618 * 298.15 * 1.2f64.ln();
    let run_c = |periodic: &str| {
        let text = scenario(
            [8, 4],
            "quad4",
            periodic,
            0.0,
            "duration = 2.0",
            &format!(
                "[[boundary]]\non = \"bottom\"\nmu = {mu_hold:?}\n[time]\nfixed_step = 0.5\n\
                 [output]\nfields = false"
            ),
        )
        .replace(
            &format!(
                "concentration = \"{C0:?} + {A:?} * cos({:?} * x)\"",
                2.0 * std::f64::consts::PI / L
            ),
            "concentration = 1000.0",
        );
        let model = model(&text);
        let (summary, _dir) = common::run_in_tempdir(&model, 1).unwrap();
        nodal_c(&model, &summary.final_solution)
    };
    let linked = run_c(r#"periodic = ["x"]"#);
    let closed = run_c("");
    let spread = closed.iter().fold(0.0f64, |a, v| a.max(v - C0));
    assert!(spread > 10.0, "the hold did not act: {spread}");
    let worst = linked
        .iter()
        .zip(&closed)
        .map(|(a, b)| (a - b).abs())
        .fold(0.0, f64::max);
    println!("largest difference {worst:.2e} mol/m^3 (concentration rise {spread:.1} mol/m^3)");
    assert!(worst < 1e-6 * spread, "{worst}");
}

/// A box periodic in x, y and z, one cell thick in y and z (each cell then holds a node and its
/// partner: one DOF twice in a cell), swelling along x: the run pins the three translations,
/// solves without a singular matrix, and gives the laterally constrained layer's displacement.
#[test]
fn a_box_periodic_in_three_directions_swells_as_a_constrained_layer() {
    let omega = 3.0e-6;
    let k = 2.0 * std::f64::consts::PI / L;
    let text = format!(
        r#"
[body]
geometry = "three_d"
shape = {{ kind = "box", size = [{L:e}, {h:e}, {h:e}], cells = [8, 1, 1], element = "hex20" }}
periodic = ["x", "y", "z"]
rigid_modes = "pin"

[[material]]
name = "host"
young_modulus = 50.0e9
poisson_ratio = 0.25
partial_molar_volume = {omega:e}
stress_free_concentration = {C0:e}
reference_concentration = {C0:e}
diffusivity = {D:e}

[initial]
concentration = "{C0:?} + {A:?} * cos({k:?} * x)"

[[stage]]
name = "hold"
duration = 1.0e-6

[time]
fixed_step = 1.0e-6

[output]
fields = false
"#,
        h = L / 8.0
    );
    let model = model(&text);
    let (summary, _dir) = common::run_in_tempdir(&model, 1).unwrap();
    let (dofs, fields) = build_dofs(&model);
    let u = nodal_field(&model.mesh, &dofs, fields.u, &summary.final_solution);
    let (e_mod, nu) = (50.0e9, 0.25);
    let lambda = e_mod * nu / ((1.0 + nu) * (1.0 - 2.0 * nu));
    let mu = e_mod / (2.0 * (1.0 + nu));
    // The concentration has not moved measurably in 1 µs (D k² t = 4e-7).
    let ux_amp = (3.0 * lambda + 2.0 * mu) / (lambda + 2.0 * mu) * omega / 3.0 * A / k;
    let mut worst: f64 = 0.0;
    let mut worst_yz: f64 = 0.0;
    for i in 0..model.mesh.n_points() {
        let p = model.mesh.points[i];
        worst = worst.max((u[3 * i] - u[0] - ux_amp * (k * p[0]).sin()).abs());
        worst_yz = worst_yz.max((u[3 * i + 1] - u[1]).abs().max((u[3 * i + 2] - u[2]).abs()));
    }
    println!(
        "box: u_x amplitude {ux_amp:.4e} m, largest error {:.2e} relative, largest u_y, u_z \
         {worst_yz:.1e} m",
        worst / ux_amp
    );
    // Hex20 with 8 cells per period (k h = 0.79): the element's nodal error is of order 1e-3
    // (measured 7.9e-4); 5e-3 still tells a wrong stiffness combination (tens of percent) apart.
    assert!(worst < 5e-3 * ux_amp, "{worst}");
    assert!(worst_yz < 1e-9 * ux_amp, "{worst_yz}");
}

/// Mixed orders on a periodic quadratic mesh (u quadratic, c and μ linear on Quad8): the
/// mid-edge nodes carry no c, linked or not, and the decay of the cosine profile runs; every
/// node of a linked class shows the same bits in every field.
#[test]
fn mixed_orders_on_a_periodic_quadratic_mesh() {
    let k = 2.0 * std::f64::consts::PI / L;
    let tau = 1.0 / (D * k * k);
    let text = scenario(
        [16, 2],
        "quad8",
        r#"periodic = ["x", "y"]"#,
        3.0e-6,
        &format!("duration = {:e}", tau / 4.0),
        &format!(
            "[orders]\nu = 2\nc = 1\nmu = 1\n[time]\nfixed_step = {:e}\n[output]\nfields = false",
            tau / 40.0
        ),
    );
    let model = model(&text);
    let (summary, _dir) = common::run_in_tempdir(&model, 1).unwrap();
    let (dofs, fields) = build_dofs(&model);
    let x = &summary.final_solution;
    let u = nodal_field(&model.mesh, &dofs, fields.u, x);
    let c = nodal_field(&model.mesh, &dofs, fields.c, x);
    let mu = nodal_field(&model.mesh, &dofs, fields.mu, x);
    let mut linked_mid_edge = 0;
    for (node, master) in model.links.pairs() {
        assert_eq!(
            dofs.node_dof(fields.c, node, 0).is_ok(),
            dofs.node_dof(fields.c, master, 0).is_ok()
        );
        if dofs.node_dof(fields.c, node, 0).is_err() {
            linked_mid_edge += 1;
        }
        for (name, v, nc) in [("u", &u, 2), ("c", &c, 1), ("mu", &mu, 1)] {
            for comp in 0..nc {
                assert_eq!(
                    v[node * nc + comp].to_bits(),
                    v[master * nc + comp].to_bits(),
                    "{name} at node {node} (master {master})"
                );
            }
        }
    }
    assert!(linked_mid_edge > 0);
    // The mode decays faster than by diffusion alone: with μ = RT ln(c/c_ref) − Ω σ_h and the
    // layer's σ_h = −2E Ω (c − c0)/(9(1−ν)), the flux D c/(RT) ∂μ/∂x linearised about c0 is
    // −D (1 + β) ∂c/∂x with β = 2 E Ω² c0 / (9 (1−ν) R T) (this model's equations with the
    // constrained-layer stress of the file header; common practice, no source).
    let (e_mod, nu, r_gas, temp) = (50.0e9, 0.25, 8.314_462_618, 298.15);
    let omega = 3.0e-6;
    let beta = 2.0 * e_mod * omega * omega * C0 / (9.0 * (1.0 - nu) * r_gas * temp);
    let row: Vec<usize> = (0..model.mesh.n_points())
        .filter(|&i| {
            let p = model.mesh.points[i];
            p[1] == 0.0 && p[0] < L * 0.999 && dofs.node_dof(fields.c, i, 0).is_ok()
        })
        .collect();
    assert_eq!(row.len(), 16);
    let amp = 2.0 / 16.0
        * row
            .iter()
            .map(|&i| (c[i] - C0) * (k * model.mesh.points[i][0]).cos())
            .sum::<f64>();
    let t = summary.final_time;
    let exact = A * (-(1.0 + beta) * t / tau).exp();
    let diffusion_only = A * (-t / tau).exp();
    let err = (amp - exact).abs() / exact;
    println!(
        "mixed orders: amplitude {amp:.4} vs {exact:.4} with stress-enhanced diffusion (beta = \
         {beta:.4}), {diffusion_only:.4} without; relative error {err:.2e}"
    );
    // Linear c on 16 cells: the decay test measured 1.28e-2 after one time constant, so about
    // 3e-3 after a quarter; 6e-3 separates the coupled rate from the uncoupled one (1.6e-2 away).
    assert!(err < 6e-3, "{amp} vs {exact}");
    assert!((amp - diffusion_only).abs() / diffusion_only > 1e-2);
}
