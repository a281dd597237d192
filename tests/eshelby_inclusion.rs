//! Misfitting round inclusions in a concentric matrix (same elastic constants in both phases):
//! a circular inclusion in plane strain, with both plane-strain swelling conventions, and a
//! spherical inclusion modelled axisymmetrically (r–z) and as a 3D octant. The misfit is a
//! uniform dilatational swelling strain ε* = ΩΔc/3 of the inclusion, produced through the coupled
//! law (concentration held, u and μ solved as in the initial equilibrium of a run), and the
//! stresses σ_rr, σ_θθ (and σ_zz in plane strain) are compared with the closed form inside and
//! outside the inclusion, away from the interface.
//!
//! Closed form (derived in this file from Lamé's radial displacement forms `u = A r + B/r` of
//! the thick-walled cylinder and `u = A ρ + B/ρ²` of the thick spherical shell, Timoshenko &
//! Goodier, Theory of Elasticity, 3rd ed., 1970, from memory): inside `u = A r`,
//! outside `u = C r + D/r` (cylinder) or `u = C ρ + D/ρ²` (sphere), continuity of `u` and of the
//! radial traction at r = a and a free outer surface r = R. Its limit R → ∞ is Eshelby's
//! solution (J. D. Eshelby, Proc. R. Soc. A 241 (1957) 376; uniform strain inside `S ε*` with the
//! Eshelby tensor of a circular cylinder or a sphere as given in T. Mura, Micromechanics of
//! Defects in Solids, 2nd ed., 1987, §11, from memory), which `closed_forms_reduce_to_eshelby`
//! checks: the two routes are independent, so their agreement checks both.
//!
//! Two ways to make the misfit:
//! * sharp: two materials, the inclusion with stress-free concentration c₀ − Δc and the matrix
//!   with c₀, and c = c₀ everywhere: the misfit jumps exactly at the interface (the element
//!   edges follow r = a);
//! * nodal (what `[initial.zones]` of a scenario does): one material with stress-free c₀ and
//!   c = c₀ + Δc on every node of an inclusion cell. The interface nodes then carry Δc, and the
//!   linear concentration spreads part of the misfit over the first matrix layer. Because the
//!   spread is radially symmetric, the field outside it and in the uniform core is that of a
//!   sharp inclusion of the same total misfit (the core strain of a radially symmetric misfit
//!   depends only on the core value, by superposition of concentric discs or balls), i.e. of
//!   the radius `a_eff` with `ε* V(a_eff) = ∫ ε* dV`; the test compares with that radius and
//!   prints how far the sharp radius would be off.
//!
//! Error measure at every sample point (cell quadrature points at least two element layers from
//! the interface on both sides): `|σ_h − σ| / max(|σ|, 0.05 |σ_in|)` per component, with
//! `σ_in` the radial stress inside the inclusion: relative to the local exact value, with a
//! floor of 5 % of the inclusion stress where the exact component nearly vanishes (σ_rr at the
//! free outer surface, σ_zz outside in plane strain). Bound: 2 % (issue acceptance 5).

mod common;

use std::f64::consts::PI;

use common::stress::{coupled_stresses, spherical, PointStress, Sampling};
use dilata_fem::dofs::DofMap;
use dilata_fem::{BoundaryTarget, GeometryMode};
use dilata_linalg::{DirectParams, FaerLu, LinearSolver, Ordering, Parallelism};
use dilata_material::coupled::CoupledPointLaw;
use dilata_material::elastic::{voigt_to_tensor, Isotropic};
use dilata_mesh::generate::{inclusion_ball_octant, inclusion_quarter_disc, InclusionParams};
use dilata_mesh::{CellKind, Mesh};
use dilata_physics::coupled::{CoupledFields, LawMap};
use dilata_physics::norms::field_integral;
use dilata_solve::coupled::CoupledProblem;
use dilata_solve::{newton, NewtonParams, TransientSystem};

const E: f64 = 10e9;
const NU: f64 = 0.3;
const OMEGA: f64 = 3e-6;
const C0: f64 = 2000.0;
const DC: f64 = 1000.0;
/// ε* = Ω Δc / 3.
const EPS: f64 = OMEGA * DC / 3.0;
const A: f64 = 1e-6;
/// Error bound of issue acceptance 5.
const BOUND: f64 = 0.02;

fn lame() -> (f64, f64) {
    let m = Isotropic::new(E, NU).unwrap();
    (m.lambda(), m.shear())
}

/// Plane-strain misfitting cylinder of radius `a` in a concentric free cylinder of radius
/// `r_out` (`r_out = ∞` allowed): misfit `ε*` in plane and `ε*_z` along z, `ε_zz = 0`.
struct Cylinder {
    a: f64,
    eps: f64,
    eps_z: f64,
    /// u = A r inside, u = C r + D/r outside.
    coef_a: f64,
    coef_c: f64,
    coef_d: f64,
}

impl Cylinder {
    fn new(a: f64, r_out: f64, eps: f64, eps_z: f64) -> Self {
        let (l, g) = lame();
        // Traction continuity with A = C + D/a² gives D independently of C:
        // 2(λ+G)(C + D/a² − ε*) − λ ε*_z = 2(λ+G) C − 2G D/a².
        let coef_d = a * a * (2.0 * (l + g) * eps + l * eps_z) / (2.0 * (l + 2.0 * g));
        // Free surface: 2(λ+G) C − 2G D/R² = 0.
        let coef_c = g * coef_d / ((l + g) * r_out * r_out);
        Cylinder {
            a,
            eps,
            eps_z,
            coef_a: coef_c + coef_d / (a * a),
            coef_c,
            coef_d,
        }
    }

    /// [σ_rr, σ_θθ, σ_zz] at radius r.
    fn stress(&self, r: f64) -> [f64; 3] {
        let (l, g) = lame();
        if r < self.a {
            let e = self.coef_a - self.eps;
            let s = 2.0 * (l + g) * e - l * self.eps_z;
            [s, s, 2.0 * l * e - (l + 2.0 * g) * self.eps_z]
        } else {
            let (c, d) = (self.coef_c, self.coef_d / (r * r));
            [
                2.0 * (l + g) * c - 2.0 * g * d,
                2.0 * (l + g) * c + 2.0 * g * d,
                2.0 * l * c,
            ]
        }
    }
}

/// Misfitting sphere of radius `a` in a concentric free sphere of radius `r_out`.
struct Sphere {
    a: f64,
    eps: f64,
    /// u = A ρ inside, u = C ρ + D/ρ² outside.
    coef_a: f64,
    coef_c: f64,
    coef_d: f64,
}

impl Sphere {
    fn new(a: f64, r_out: f64, eps: f64) -> Self {
        let (l, g) = lame();
        let k3 = 3.0 * l + 2.0 * g;
        // 3K(C + D/a³ − ε*) = 3K C − 4G D/a³, and 3K C − 4G D/R³ = 0.
        let coef_d = k3 * eps * a.powi(3) / (k3 + 4.0 * g);
        let coef_c = 4.0 * g * coef_d / (k3 * r_out.powi(3));
        Sphere {
            a,
            eps,
            coef_a: coef_c + coef_d / a.powi(3),
            coef_c,
            coef_d,
        }
    }

    /// [σ_ρρ, σ_θθ (= σ_φφ)] at radius ρ.
    fn stress(&self, rho: f64) -> [f64; 2] {
        let (l, g) = lame();
        let k3 = 3.0 * l + 2.0 * g;
        if rho < self.a {
            let s = k3 * (self.coef_a - self.eps);
            [s, s]
        } else {
            let d = self.coef_d / rho.powi(3);
            [
                k3 * self.coef_c - 4.0 * g * d,
                k3 * self.coef_c + 2.0 * g * d,
            ]
        }
    }
}

/// The finite-matrix closed forms tend to Eshelby's infinite-matrix solution (Eshelby 1957;
/// interior strain `S ε*` with the Eshelby tensor of Mura 1987, §11, from memory):
/// circular cylinder in plane strain, `S_1111 = (5 − 4ν)/(8(1 − ν))`,
/// `S_1122 = (4ν − 1)/(8(1 − ν))`, `S_1133 = ν/(2(1 − ν))`; sphere, `S_1111 = (7 − 5ν)/(15(1 − ν))`,
/// `S_1122 = (5ν − 1)/(15(1 − ν))`. Outside, the stress decays as `1/r²` (`σ_θθ = −σ_rr`) and
/// `1/ρ³` (`σ_θθ = −σ_ρρ/2`).
#[test]
fn closed_forms_reduce_to_eshelby() {
    let far = 1e4 * A;
    let (l, g) = lame();
    let s1111 = (5.0 - 4.0 * NU) / (8.0 * (1.0 - NU));
    let s1122 = (4.0 * NU - 1.0) / (8.0 * (1.0 - NU));
    let s1133 = NU / (2.0 * (1.0 - NU));
    for eps_z in [EPS, 0.0] {
        let cyl = Cylinder::new(A, far, EPS, eps_z);
        let strain = (s1111 + s1122) * EPS + s1133 * eps_z;
        assert!((cyl.coef_a - strain).abs() < 1e-7 * EPS, "{eps_z}");
        // σ inside from the Eshelby strain, by Hooke's law with the misfit removed.
        let e = strain - EPS;
        let inside = 2.0 * (l + g) * e - l * eps_z;
        let s = cyl.stress(0.5 * A);
        assert!((s[0] - inside).abs() < 1e-6 * inside.abs());
        // In closed form: −E ε*/(2(1 − ν)) for the full misfit, −E ε*/(2(1 − ν²)) in plane.
        let textbook = if eps_z == 0.0 {
            -E * EPS / (2.0 * (1.0 - NU * NU))
        } else {
            -E * EPS / (2.0 * (1.0 - NU))
        };
        assert!((s[0] - textbook).abs() < 1e-6 * textbook.abs());
        let out = cyl.stress(3.0 * A);
        assert!((out[0] + out[1]).abs() < 1e-6 * out[0].abs());
        assert!((out[0] * 9.0 - cyl.stress(A)[0]).abs() < 1e-6 * out[0].abs() * 9.0);
    }
    let sph = Sphere::new(A, far, EPS);
    let s1111 = (7.0 - 5.0 * NU) / (15.0 * (1.0 - NU));
    let s1122 = (5.0 * NU - 1.0) / (15.0 * (1.0 - NU));
    assert!((sph.coef_a - (s1111 + 2.0 * s1122) * EPS).abs() < 1e-7 * EPS);
    let inside = sph.stress(0.5 * A)[0];
    let textbook = -2.0 * E * EPS / (3.0 * (1.0 - NU));
    assert!((inside - textbook).abs() < 1e-6 * textbook.abs());
    let out = sph.stress(2.0 * A);
    assert!((out[1] + out[0] / 2.0).abs() < 1e-6 * out[0].abs());
}

/// How the inclusion's misfit is made (see the module documentation).
#[derive(Clone, Copy, Debug, PartialEq)]
enum Misfit {
    Sharp,
    Nodal,
}

struct Setup {
    mesh: Mesh,
    mode: GeometryMode,
    in_plane: bool,
    misfit: Misfit,
    /// Outer radius.
    radius: f64,
    /// Radial size of the inclusion's outermost and the matrix's first two cell layers:
    /// the band `a − 2 h_in < r < a + h_out_2` is left out of the comparison.
    h_in: f64,
    h_out_2: f64,
}

/// Law with stress-free concentration `c_ref` (dilute chemistry with reference C0; the mobility
/// plays no part: the concentration is held).
fn law(c_ref: f64, in_plane: bool) -> CoupledPointLaw {
    let mut parts = common::dilute_parts(&common::DiluteHost {
        young: E,
        poisson: NU,
        omega: OMEGA,
        diffusivity: 1e-14,
        temperature: 298.15,
        c_ref: C0,
    });
    parts.swelling = dilata_material::swelling::SwellingLaw::isotropic(
        dilata_material::swelling::IsotropicSwellingParams {
            partial_molar_volume: OMEGA,
            c_ref,
        },
    )
    .unwrap();
    if in_plane {
        parts.swelling = parts.swelling.in_plane_only();
    }
    CoupledPointLaw::new(parts).unwrap()
}

/// The solved state and the stresses at the sample points, each with the radius of its point.
struct Solved {
    samples: Vec<PointStress>,
    /// Misfit volume `∫ (c − c_ref) dV` divided by Δc (plane strain: per unit thickness).
    misfit_measure: f64,
    seconds: f64,
}

fn solve(s: &Setup) -> Solved {
    let start = std::time::Instant::now();
    let mesh = &s.mesh;
    let (dofs, fields) = common::coupled_dofs(mesh, 2);
    let inclusion = mesh.region("inclusion").unwrap().to_vec();
    let n_cells = mesh.n_cells();
    let matrix_law = law(C0, s.in_plane);
    let inclusion_law = law(C0 - DC, s.in_plane);
    let laws = match s.misfit {
        Misfit::Sharp => {
            let mut owner = vec![0u32; n_cells];
            for &c in &inclusion {
                owner[c] = 1;
            }
            LawMap::new(vec![matrix_law, inclusion_law], owner)
        }
        Misfit::Nodal => LawMap::uniform(matrix_law, n_cells),
    };
    let mut problem =
        CoupledProblem::new(mesh, dofs, fields, s.mode, laws, Parallelism::Sequential);
    let supports: &[(&str, usize)] = match s.mode {
        GeometryMode::ThreeD => &[("symmetry_x", 0), ("symmetry_y", 1), ("symmetry_z", 2)],
        _ => &[("symmetry_x", 0), ("symmetry_y", 1)],
    };
    for &(boundary, component) in supports {
        problem
            .constraints
            .add_boundary(
                mesh,
                &problem.dofs,
                BoundaryTarget {
                    boundary,
                    field: fields.u,
                    component,
                },
                0.0,
            )
            .unwrap();
    }
    // The concentration: C0 everywhere, plus DC on the nodes of inclusion cells for the nodal
    // misfit; all of it held, as in the initial equilibrium of a run.
    let n = problem.dofs.n_dofs();
    let mut x = vec![0.0; n];
    let mut raised = vec![false; mesh.n_points()];
    if s.misfit == Misfit::Nodal {
        for &c in &inclusion {
            for &node in mesh.cell(c).1 {
                raised[node] = true;
            }
        }
    }
    for node in problem.dofs.field_nodes(fields.c) {
        let d = problem.dofs.node_dof(fields.c, node, 0).unwrap();
        x[d] = if raised[node] { C0 + DC } else { C0 };
    }
    let c_dofs: Vec<usize> = problem.dofs.field_range(fields.c).collect();
    let group = problem.constraints.add_group("held c", &c_dofs, 0.0);
    let held = x.clone();
    problem
        .constraints
        .set_group_values_with(group, |d| held[d]);
    problem.begin_step(0.0, 0.0, &vec![0.0; n]);
    let mut solver = FaerLu::new(DirectParams::with_ordering(Ordering::Amd));
    solver.analyze(problem.assembler.pattern()).unwrap();
    let params = NewtonParams {
        abs_tol: 0.0,
        rel_tol: 1e-12,
        step_tol: 1e-14,
        max_iterations: 6,
        max_backtracks: 0,
    };
    newton(&mut problem, &mut solver, &mut x, &params).unwrap();

    let samples = sample_stresses(mesh, &problem.dofs, fields, s.mode, &problem.laws, &x);
    let misfit_measure = match s.misfit {
        Misfit::Nodal => misfit_measure(mesh, &problem.dofs, fields, s.mode, &x),
        // The held c is C0 everywhere: the misfit comes from the stress-free concentrations.
        Misfit::Sharp => f64::NAN,
    };
    Solved {
        samples,
        misfit_measure,
        seconds: start.elapsed().as_secs_f64(),
    }
}

/// Stress at the quadrature points (degree 4) of every cell, each with its cell's own law.
fn sample_stresses(
    mesh: &Mesh,
    dofs: &DofMap,
    fields: CoupledFields,
    mode: GeometryMode,
    laws: &LawMap,
    x: &[f64],
) -> Vec<PointStress> {
    let sampling = Sampling::Quadrature { degree: 4 };
    let mut samples = Vec::new();
    for (i, l) in laws.laws().iter().enumerate() {
        let all = coupled_stresses(mesh, dofs, fields, mode, l, x, sampling);
        samples.extend(
            all.into_iter()
                .filter(|p| laws.law_of_cell()[p.cell] as usize == i),
        );
    }
    samples
}

/// `∫ (c − C0) dV / Δc` (per unit thickness in plane strain, the half ball in axisymmetry).
fn misfit_measure(
    mesh: &Mesh,
    dofs: &DofMap,
    fields: CoupledFields,
    mode: GeometryMode,
    x: &[f64],
) -> f64 {
    let total = field_integral(mesh, dofs, fields.c, mode, x).unwrap();
    let mut uniform = vec![0.0; x.len()];
    for d in dofs.field_range(fields.c) {
        uniform[d] = C0;
    }
    let base = field_integral(mesh, dofs, fields.c, mode, &uniform).unwrap();
    (total - base) / DC
}

/// Worst error (module documentation) of each compared component, inside and outside, and
/// (printed only) in the band left out next to the interface.
#[derive(Debug, Default)]
struct Worst {
    inside: Vec<f64>,
    outside: Vec<f64>,
    band: Vec<f64>,
    n_inside: usize,
    n_outside: usize,
}

fn raise(slot: &mut Vec<f64>, errors: Vec<f64>) {
    if slot.is_empty() {
        *slot = errors;
    } else {
        for (w, e) in slot.iter_mut().zip(errors) {
            *w = w.max(e);
        }
    }
}

fn compare(
    s: &Setup,
    samples: &[PointStress],
    a: f64,
    exact: &dyn Fn(f64) -> Vec<f64>,
    computed: &dyn Fn(&PointStress) -> Vec<f64>,
) -> Worst {
    let scale = exact(0.0)[0].abs();
    let mut worst = Worst::default();
    for p in samples {
        let rho = p.position.iter().map(|v| v * v).sum::<f64>().sqrt();
        let inside = rho < A;
        let in_band = (inside && rho > A - 2.0 * s.h_in) || (!inside && rho < A + s.h_out_2);
        // The exact solution of radius `a` (a_eff for the nodal misfit) on the same side of
        // the mesh's interface.
        let r_exact = if inside {
            rho.min(0.999 * a)
        } else {
            rho.max(1.001 * a)
        };
        let want = exact(r_exact);
        let got = computed(p);
        let errors: Vec<f64> = want
            .iter()
            .zip(&got)
            .map(|(w, g)| (g - w).abs() / w.abs().max(0.05 * scale))
            .collect();
        if in_band {
            raise(&mut worst.band, errors);
        } else if inside {
            worst.n_inside += 1;
            raise(&mut worst.inside, errors);
        } else {
            worst.n_outside += 1;
            raise(&mut worst.outside, errors);
        }
    }
    worst
}

/// Polar components [σ_rr, σ_θθ, σ_zz] of a plane stress state at `p`.
fn polar(p: &PointStress) -> Vec<f64> {
    let s = voigt_to_tensor(&p.stress);
    let r = p.position[0].hypot(p.position[1]);
    let n = [p.position[0] / r, p.position[1] / r];
    let t = [-n[1], n[0]];
    let f = |a: [f64; 2], b: [f64; 2]| {
        let mut v = 0.0;
        for i in 0..2 {
            for j in 0..2 {
                v += a[i] * s[(i, j)] * b[j];
            }
        }
        v
    };
    vec![f(n, n), f(t, t), s[(2, 2)]]
}

/// Radial and the two hoop components of a 3D or axisymmetric stress at `p`.
fn spherical_components(p: &PointStress, mode: GeometryMode) -> Vec<f64> {
    let s = spherical(&p.stress, p.position, mode);
    vec![s.radial, s.hoop[0], s.hoop[1]]
}

/// Inclusion mesh: inclusion resolution `n`, `m` matrix layers with the given grading; also
/// the radial sizes of the cell layers next to the interface.
fn setup(
    mode: GeometryMode,
    in_plane: bool,
    misfit: Misfit,
    radius: f64,
    [n, m]: [usize; 2],
    grading: f64,
) -> Setup {
    let (kind, core) = if mode == GeometryMode::ThreeD {
        (CellKind::Hex20, dilata_mesh::generate::BALL_CORE_FRACTION)
    } else {
        (CellKind::Quad8, dilata_mesh::generate::DISC_CORE_FRACTION)
    };
    let params = InclusionParams {
        inclusion_radius: A,
        radius,
        n_inclusion: n,
        n_matrix: m,
        grading,
        kind,
    };
    let mesh = if mode == GeometryMode::ThreeD {
        inclusion_ball_octant(&params).unwrap()
    } else {
        inclusion_quarter_disc(&params).unwrap()
    };
    // Inside: the thickest last layer is on the axes, (a − core)/n. Outside: geometric
    // sizes h1, h1 q with q = grading^(1/(m − 1)) (the generator's spacing).
    let h_in = (1.0 - core) * A / n as f64;
    let q = grading.powf(1.0 / (m as f64 - 1.0));
    let h1 = (radius - A) * (q - 1.0) / (q.powf(m as f64) - 1.0);
    Setup {
        mesh,
        mode,
        in_plane,
        misfit,
        radius,
        h_in,
        h_out_2: h1 * (1.0 + q),
    }
}

fn report(label: &str, w: &Worst, names: &[&str], seconds: f64) {
    let show = |v: &[f64]| {
        names
            .iter()
            .zip(v)
            .map(|(n, e)| format!("{n} {:.3} %", 100.0 * e))
            .collect::<Vec<_>>()
            .join(", ")
    };
    println!(
        "{label}: inside ({} points) {}; outside ({} points) {}; [not checked: within two \
         layers of the interface {}]; {seconds:.1} s",
        w.n_inside,
        show(&w.inside),
        w.n_outside,
        show(&w.outside),
        show(&w.band)
    );
}

fn assert_within(label: &str, w: &Worst) {
    assert!(
        w.n_inside > 50 && w.n_outside > 50,
        "{label}: too few points"
    );
    for e in w.inside.iter().chain(&w.outside) {
        assert!(*e < BOUND, "{label}: error {e} above {BOUND}");
    }
}

const PLANE_CELLS: [usize; 2] = [8, 24];
const PLANE_GRADING: f64 = 20.0;

/// Circular inclusion, plane strain, radius ratio 1:10, both swelling conventions.
#[test]
fn circular_inclusion_plane_strain() {
    for in_plane in [false, true] {
        let s = setup(
            GeometryMode::PlaneStrain,
            in_plane,
            Misfit::Sharp,
            10.0 * A,
            PLANE_CELLS,
            PLANE_GRADING,
        );
        let solved = solve(&s);
        let eps_z = if in_plane { 0.0 } else { EPS };
        let exact = Cylinder::new(A, s.radius, EPS, eps_z);
        let w = compare(
            &s,
            &solved.samples,
            A,
            &|r| exact.stress(r).to_vec(),
            &polar,
        );
        let label = if in_plane {
            "plane strain, in-plane misfit"
        } else {
            "plane strain, misfit on all axes"
        };
        report(label, &w, &["σ_rr", "σ_θθ", "σ_zz"], solved.seconds);
        assert_within(label, &w);
    }
}

/// Spherical inclusion, axisymmetric r–z model, radius ratio 1:10.
#[test]
fn spherical_inclusion_axisymmetric() {
    let s = setup(
        GeometryMode::Axisymmetric,
        false,
        Misfit::Sharp,
        10.0 * A,
        PLANE_CELLS,
        PLANE_GRADING,
    );
    let solved = solve(&s);
    let exact = Sphere::new(A, s.radius, EPS);
    let w = compare(
        &s,
        &solved.samples,
        A,
        &|r| {
            let [rr, tt] = exact.stress(r);
            vec![rr, tt, tt]
        },
        &|p| spherical_components(p, GeometryMode::Axisymmetric),
    );
    let label = "sphere, axisymmetric";
    report(label, &w, &["σ_ρρ", "σ_ψψ", "σ_φφ"], solved.seconds);
    assert_within(label, &w);
}

/// Spherical inclusion as a 3D octant (Hex20), radius ratio 1:6, coarser.
#[test]
fn spherical_inclusion_octant() {
    let s = setup(
        GeometryMode::ThreeD,
        false,
        Misfit::Sharp,
        6.0 * A,
        [4, 8],
        8.0,
    );
    let solved = solve(&s);
    let exact = Sphere::new(A, s.radius, EPS);
    let w = compare(
        &s,
        &solved.samples,
        A,
        &|r| {
            let [rr, tt] = exact.stress(r);
            vec![rr, tt, tt]
        },
        &|p| spherical_components(p, GeometryMode::ThreeD),
    );
    let label = "sphere, 3D octant";
    report(label, &w, &["σ_ρρ", "σ_t1", "σ_t2"], solved.seconds);
    assert_within(label, &w);
}

/// The nodal misfit of `[initial.zones]`: against the closed form of the equal-strength radius
/// a_eff (module documentation), within the same bound; the sharp radius a is printed for
/// comparison (it misses the outside field by about the misfit carried by the first matrix
/// layer).
#[test]
fn nodal_misfit_matches_equal_strength_radius() {
    // Plane strain, misfit on all axes.
    let s = setup(
        GeometryMode::PlaneStrain,
        false,
        Misfit::Nodal,
        10.0 * A,
        PLANE_CELLS,
        PLANE_GRADING,
    );
    let solved = solve(&s);
    // Quarter disc: ∫ ε*/ε* dA = π a_eff²/4.
    let a_eff = (4.0 * solved.misfit_measure / PI).sqrt();
    println!("plane strain, nodal misfit: a_eff / a = {:.5}", a_eff / A);
    assert!(a_eff > A && a_eff < A + s.h_out_2);
    for (label, a) in [("a_eff", a_eff), ("a", A)] {
        let exact = Cylinder::new(a, s.radius, EPS, EPS);
        let w = compare(
            &s,
            &solved.samples,
            a,
            &|r| exact.stress(r).to_vec(),
            &polar,
        );
        let label = format!("plane strain, nodal misfit, closed form of radius {label}");
        report(&label, &w, &["σ_rr", "σ_θθ", "σ_zz"], solved.seconds);
        if a == a_eff {
            assert_within(&label, &w);
        }
    }
    // Axisymmetric sphere: the r–z quarter disc is half a ball, ∫ dV = (2/3)π a_eff³.
    let s = setup(
        GeometryMode::Axisymmetric,
        false,
        Misfit::Nodal,
        10.0 * A,
        PLANE_CELLS,
        PLANE_GRADING,
    );
    let solved = solve(&s);
    let a_eff = (1.5 * solved.misfit_measure / PI).cbrt();
    println!("sphere, nodal misfit: a_eff / a = {:.5}", a_eff / A);
    assert!(a_eff > A && a_eff < A + s.h_out_2);
    for (label, a) in [("a_eff", a_eff), ("a", A)] {
        let exact = Sphere::new(a, s.radius, EPS);
        let w = compare(
            &s,
            &solved.samples,
            a,
            &|r| {
                let [rr, tt] = exact.stress(r);
                vec![rr, tt, tt]
            },
            &|p| spherical_components(p, GeometryMode::Axisymmetric),
        );
        let label = format!("sphere, nodal misfit, closed form of radius {label}");
        report(&label, &w, &["σ_ρρ", "σ_ψψ", "σ_φφ"], solved.seconds);
        if a == a_eff {
            assert_within(&label, &w);
        }
    }
}

/// The same check through the scenario path a user takes: the `inclusion_quarter_disc` shape,
/// its `inclusion` zone raised by `[initial.zones]` (the nodal misfit), symmetry supports, a
/// negligible diffusivity (diffusion length √(D t) ≈ 3e-13 m after the one 1 s step, against
/// a = 1e-6 m) and the state after that step, against the closed form of a_eff. Here c is
/// quadratic (the orders default to the mesh's), so the spread misfit falls from Δc to 0 over
/// half of the first matrix layer and overshoots below 0 in the other half: a_eff/a is about
/// 1 + h1/(6a) instead of the 1 + h1/(2a) of linear c in the test above.
#[test]
fn scenario_with_inclusion_zone() {
    let text = format!(
        r#"title = "misfitting inclusion"
[body]
geometry = "plane_strain"
shape = {{ kind = "inclusion_quarter_disc", inclusion_radius = {A:e}, radius = {r:e}, cells = [{n}, {m}], grading = {PLANE_GRADING:?}, element = "quad8" }}

[[material]]
name = "host"
young_modulus = {E:e}
poisson_ratio = {NU}
partial_molar_volume = {OMEGA:e}
stress_free_concentration = {C0:e}
reference_concentration = {C0:e}
diffusivity = 1e-25

[initial]
concentration = {C0:e}
[initial.zones]
inclusion = {c_in:e}

[[boundary]]
on = "symmetry_x"
symmetry = true

[[boundary]]
on = "symmetry_y"
symmetry = true

[[stage]]
name = "hold"
duration = 1.0

[time]
fixed_step = 1.0

[output]
fields = false
"#,
        r = 10.0 * A,
        n = PLANE_CELLS[0],
        m = PLANE_CELLS[1],
        c_in = C0 + DC,
    );
    let model = dilata_run::build_model(text, "inclusion.toml", std::path::Path::new(".")).unwrap();
    let (summary, _dir) = common::run_in_tempdir(&model, 1).unwrap();
    let (dofs, fields) = dilata_run::build_dofs(&model);
    let x = &summary.final_solution;
    let s = setup(
        GeometryMode::PlaneStrain,
        false,
        Misfit::Nodal,
        10.0 * A,
        PLANE_CELLS,
        PLANE_GRADING,
    );
    assert_eq!(s.mesh.points, model.mesh.points);
    let samples = sample_stresses(&model.mesh, &dofs, fields, model.mode, &model.laws, x);
    let a_eff = (4.0 * misfit_measure(&model.mesh, &dofs, fields, model.mode, x) / PI).sqrt();
    println!("scenario, nodal misfit: a_eff / a = {:.5}", a_eff / A);
    assert!(a_eff > A && a_eff < A + s.h_out_2);
    let exact = Cylinder::new(a_eff, s.radius, EPS, EPS);
    let w = compare(&s, &samples, a_eff, &|r| exact.stress(r).to_vec(), &polar);
    let label = "scenario, plane strain, nodal misfit (a_eff)";
    report(label, &w, &["σ_rr", "σ_θθ", "σ_zz"], 0.0);
    assert_within(label, &w);
}

/// The worst errors of `circular_inclusion_plane_strain` and `spherical_inclusion_axisymmetric`
/// come from the discretisation: on the mesh with half the cells in each direction (cells
/// [4, 12], same grading) they are larger by a factor that shows convergence (quadratic u:
/// stresses of order h², a factor near 4 expected; at least 2 asked, i.e. order > 1; common
/// practice, no source).
#[test]
fn errors_shrink_under_refinement() {
    for mode in [GeometryMode::PlaneStrain, GeometryMode::Axisymmetric] {
        let worst = |cells: [usize; 2]| {
            let s = setup(mode, false, Misfit::Sharp, 10.0 * A, cells, PLANE_GRADING);
            let solved = solve(&s);
            let w = if mode == GeometryMode::PlaneStrain {
                let exact = Cylinder::new(A, s.radius, EPS, EPS);
                compare(
                    &s,
                    &solved.samples,
                    A,
                    &|r| exact.stress(r).to_vec(),
                    &polar,
                )
            } else {
                let exact = Sphere::new(A, s.radius, EPS);
                compare(
                    &s,
                    &solved.samples,
                    A,
                    &|r| {
                        let [rr, tt] = exact.stress(r);
                        vec![rr, tt, tt]
                    },
                    &|p| spherical_components(p, mode),
                )
            };
            // The radial and hoop stresses outside, where the largest errors are.
            w.outside[0].max(w.outside[1])
        };
        let coarse = worst([4, 12]);
        let fine = worst(PLANE_CELLS);
        println!(
            "{mode:?}: worst outside σ_rr/σ_θθ error {:.3} % -> {:.3} %, ratio {:.2}",
            100.0 * coarse,
            100.0 * fine,
            coarse / fine
        );
        assert!(coarse / fine > 2.0, "{mode:?}: {coarse} -> {fine}");
    }
}
