//! Diffusion-induced stresses and surface-concentration uptake of a sphere (axisymmetric quarter
//! disc, Quad8, u quadratic, c and μ linear, fixed BDF2 steps; setup in `common::sphere`).
//!
//! 1. Constant inward flux J, weak coupling (tiny Ω, as in `sphere_flux.rs`): the stresses
//!    follow from the concentration by the thermal analogy (Cheng & Verbrugge, J. Power Sources
//!    190 (2009) 453; Christensen & Newman, J. Solid State Electrochem. 10 (2006) 293; both from
//!    memory). With S = EΩΔc/(3(1−ν)), Δc = J R/D, θ = (c − c₀)/Δc and C̄ the mean of θ over
//!    the sphere: σ_r(0)/S = (2/3)[C̄(1) − θ(0)], σ_θ(1)/S = C̄(1) − θ(1); at τ = 0.1,
//!    0.160081 and −0.186762. The stresses scale with Ω, so the ratios σ/S are compared.
//! 2. Concentration held at c_s on the surface from t = 0: centre and interior concentration
//!    and uptake fraction against Crank's series (The Mathematics of Diffusion, 2nd ed., 1975,
//!    section 6.3, from memory) at τ = 0.05 and 0.2.

mod common;

use std::time::Instant;

use common::sphere::{
    flux_theta, node_at, run_sphere, sphere_mesh, surface_theta, surface_uptake, tan_root,
    SphereRun, Surface,
};
use common::stress::{coupled_stresses, Sampling};
use dilata_fem::GeometryMode;
use dilata_material::coupled::CoupledPointLaw;
use dilata_mesh::CellKind;
use dilata_physics::norms::field_integral;

const E: f64 = 10e9;
const NU: f64 = 0.3;
const D: f64 = 1e-14;
const T: f64 = 298.15;
const RADIUS: f64 = 1e-6;
const C0: f64 = 1000.0;

fn law(omega: f64) -> CoupledPointLaw {
    common::dilute_law(&common::DiluteHost {
        young: E,
        poisson: NU,
        omega,
        diffusivity: D,
        temperature: T,
        c_ref: C0,
    })
}

/// Observed order of convergence from the errors on two meshes, h halved: log2(coarse/fine).
fn order(coarse: f64, fine: f64) -> f64 {
    (coarse / fine).log2()
}

// ---------------------------------------------------------------------------------------------
// 1. Constant flux: stresses.

/// Tiny partial molar volume, as in `sphere_flux.rs`: E Ω² Δc ≈ 5e-12 J/mol against
/// RT ≈ 2.5e3 J/mol, so the stress does not feed back into the diffusion and the concentration
/// is that of pure linear diffusion (the analogy assumes exactly that). The displacements are
/// then of order 1e-16 m; to rule out an under-resolved Newton solve for u at that scale the
/// flux run was repeated by hand with Ω = 1e-10: every printed σ/S agreed in all 6 digits.
const OMEGA_WEAK: f64 = 1e-12;
/// Δc = J R / D.
const DELTA_C: f64 = 0.5 * C0;
const J: f64 = D * DELTA_C / RADIUS;
const TAU_FLUX: f64 = 0.1;
/// Fixed BDF2 steps to τ = 0.1 (Δτ = 5e-4, as in `sphere_flux.rs`, whose time error was
/// measured below 5e-6 in θ).
const N_STEPS_FLUX: usize = 200;

struct FluxOutcome {
    /// σ/S at the centre node: σ_rr and σ_zz (σ_θθ equals σ_rr on the axis).
    centre: [f64; 2],
    /// σ/S at the surface node (R, 0): radial σ_rr, meridional hoop σ_zz, azimuthal hoop σ_θθ.
    surface: [f64; 3],
    /// θ at the centre and surface nodes, and the mean θ, at τ = 0.1.
    theta_centre: f64,
    theta_surface: f64,
    theta_mean: f64,
    seconds: f64,
}

fn run_flux(n_cells: usize) -> FluxOutcome {
    let start = Instant::now();
    let t_end = TAU_FLUX * RADIUS * RADIUS / D;
    let run = SphereRun {
        radius: RADIUS,
        n_cells,
        kind: CellKind::Quad8,
        law: law(OMEGA_WEAK),
        c0: C0,
        surface: Surface::Flux(J),
        dt: t_end / N_STEPS_FLUX as f64,
        n_steps: N_STEPS_FLUX,
    };
    let mesh = sphere_mesh(&run);
    let centre = node_at(&mesh, 0.0, 0.0, RADIUS);
    let surface = node_at(&mesh, RADIUS, 0.0, RADIUS);
    let s_scale = E * OMEGA_WEAK * DELTA_C / (3.0 * (1.0 - NU));
    let mut out = None;
    run_sphere(&mesh, &run, |st| {
        if st.step != N_STEPS_FLUX {
            return;
        }
        let points = coupled_stresses(
            st.mesh,
            st.dofs,
            st.fields,
            GeometryMode::Axisymmetric,
            &run.law,
            st.x,
            Sampling::Nodes,
        );
        // Stress of every cell at a node, averaged over the cells that share it.
        let at_node = |node: usize| {
            let p = st.mesh.points[node];
            let hits: Vec<_> = points
                .iter()
                .filter(|q| {
                    (q.position[0] - p[0]).abs() < 1e-9 * RADIUS
                        && (q.position[1] - p[1]).abs() < 1e-9 * RADIUS
                })
                .collect();
            assert!(!hits.is_empty());
            let mut mean = [0.0; 3];
            for q in &hits {
                for (k, m) in mean.iter_mut().enumerate() {
                    *m += q.stress[k] / s_scale / hits.len() as f64;
                }
            }
            mean
        };
        let [c_rr, c_zz, _] = at_node(centre);
        let [s_rr, s_zz, s_tt] = at_node(surface);
        let c_dof = |node: usize| st.dofs.node_dof(st.fields.c, node, 0).unwrap();
        let volume = field_integral(
            st.mesh,
            st.dofs,
            st.fields.c,
            GeometryMode::Axisymmetric,
            &vec![1.0; st.x.len()],
        )
        .unwrap();
        let amount = field_integral(
            st.mesh,
            st.dofs,
            st.fields.c,
            GeometryMode::Axisymmetric,
            st.x,
        )
        .unwrap();
        out = Some(FluxOutcome {
            centre: [c_rr, c_zz],
            surface: [s_rr, s_zz, s_tt],
            theta_centre: (st.x[c_dof(centre)] - C0) / DELTA_C,
            theta_surface: (st.x[c_dof(surface)] - C0) / DELTA_C,
            theta_mean: (amount / volume - C0) / DELTA_C,
            seconds: 0.0,
        });
    });
    let mut out = out.expect("the last step was observed");
    out.seconds = start.elapsed().as_secs_f64();
    out
}

/// Constant inward flux, τ = 0.1: σ_r(0)/S and σ_θ(1)/S against the thermal analogy
/// (Cheng & Verbrugge 2009; Christensen & Newman 2006; from memory).
#[test]
fn sphere_with_constant_flux_has_thermal_analogy_stresses() {
    // The reference values from the series (Crank, section 6.3, from memory) and the analogy;
    // first against the published numbers (as restated in the project's references, from
    // Cheng & Verbrugge 2009, from memory): 0.160081 and −0.186762, to their 6 decimals.
    let roots: Vec<f64> = (1..=200).map(tan_root).collect();
    let mean = 3.0 * TAU_FLUX; // C̄(1) = 3τ exactly (Crank, same section).
    let sr0_exact = 2.0 / 3.0 * (mean - flux_theta(0.0, TAU_FLUX, &roots));
    let st1_exact = mean - flux_theta(1.0, TAU_FLUX, &roots);
    assert!(
        (sr0_exact - 0.160081).abs() < 1e-6,
        "σ_r(0)/S = {sr0_exact}"
    );
    assert!(
        (st1_exact + 0.186762).abs() < 1e-6,
        "σ_θ(1)/S = {st1_exact}"
    );

    let coarse = run_flux(4);
    let fine = run_flux(8);
    for (name, o) in [("n = 4", &coarse), ("n = 8", &fine)] {
        eprintln!(
            "flux sphere stresses, {name}, {N_STEPS_FLUX} BDF2 steps to τ = {TAU_FLUX} ({:.1} \
             s): centre σ_rr/S {:.6}, σ_zz/S {:.6} (exact {sr0_exact:.6}); surface σ_θθ/S \
             {:.6}, σ_zz/S {:.6} (exact {st1_exact:.6}), σ_rr/S {:.3e} (exact 0); θ centre \
             {:.6}, surface {:.6}, mean − 3τ {:.3e}",
            o.seconds,
            o.centre[0],
            o.centre[1],
            o.surface[2],
            o.surface[1],
            o.surface[0],
            o.theta_centre,
            o.theta_surface,
            o.theta_mean - mean,
        );
    }
    // Errors in σ/S. Tolerance at n = 8 chosen before any run: 5e-3 (3 % of σ_r(0), 2.7 % of
    // σ_θ(1)). Measured at n = 8: centre σ_rr 0.161249, σ_zz 0.161474 (errors 1.2e-3,
    // 1.4e-3); surface σ_θθ −0.186375, σ_zz −0.186357 (errors 3.9e-4, 4.1e-4); surface σ_rr
    // 3.8e-4. Reasoning: the concentration itself is off by 1.6e-3 (centre) and 1.8e-4
    // (surface) in θ at n = 8 (`sphere_flux.rs`), which enters σ/S with factor 2/3 and 1; the
    // stress at a cell node from quadratic u and linear c adds O(h²), about θ'' (h/R)²/8 ≈
    // 1e-3 for h = R/16. The radial stress at the free surface must vanish to the same
    // tolerance.
    let errors = |o: &FluxOutcome| {
        [
            (o.centre[0] - sr0_exact).abs(),
            (o.centre[1] - sr0_exact).abs(),
            (o.surface[2] - st1_exact).abs(),
            (o.surface[1] - st1_exact).abs(),
            o.surface[0].abs(),
        ]
    };
    let (ec, ef) = (errors(&coarse), errors(&fine));
    let names = [
        "centre σ_rr",
        "centre σ_zz",
        "surface σ_θθ",
        "surface σ_zz",
        "surface σ_rr",
    ];
    for (k, name) in names.iter().enumerate() {
        assert!(ef[k] < 5e-3, "{name}: error {:e} of S at n = 8", ef[k]);
    }
    // Convergence: the largest of the errors drops at an observed order above 1.5 (2
    // expected; measured 5.0e-3 -> 1.4e-3, order 1.85). An error in the analogy (a factor 3 in the swelling, a missing hoop strain)
    // would not shrink.
    let (wc, wf) = (
        ec.iter().copied().fold(0.0, f64::max),
        ef.iter().copied().fold(0.0, f64::max),
    );
    eprintln!(
        "flux sphere stresses: worst error {wc:.3e} (n = 4) -> {wf:.3e} (n = 8), order {:.2}",
        order(wc, wf)
    );
    assert!(
        order(wc, wf) > 1.5,
        "worst stress error {wc:e} -> {wf:e}: order {}",
        order(wc, wf)
    );
}

// ---------------------------------------------------------------------------------------------
// 2. Constant surface concentration: concentration and uptake.

/// Held surface concentration c_s (c₀ = 1000, so θ = (c − c₀)/500).
const C_SURFACE: f64 = 1500.0;
/// Comparison times τ = D t/R². The coupling is as in the flux case (Ω = OMEGA_WEAK): pure
/// linear diffusion, which Crank's series assumes.
const TAUS: [f64; 2] = [0.05, 0.2];
/// Δτ = 1e-3: 50 steps to τ = 0.05 and 200 to τ = 0.2. Time error: a run with Δτ = 5e-4
/// moved every compared value at n = 8 by at most 5.5e-5 (centre θ at τ = 0.05; uptake by
/// 2e-5), under 3 % of the spatial error, so the comparison measures the mesh.
const DTAU: f64 = 1e-3;
/// Interior comparison radius x = 7/8: a corner node of both meshes (the one next to the
/// surface on the coarse mesh), on the equator.
const X_INNER: f64 = 0.875;

struct SurfaceOutcome {
    /// Per τ in TAUS: θ at the centre, θ at x = 7/8, uptake fraction.
    theta_centre: [f64; 2],
    theta_inner: [f64; 2],
    uptake: [f64; 2],
    seconds: f64,
}

fn run_surface(n_cells: usize) -> SurfaceOutcome {
    let start = Instant::now();
    let dt = DTAU * RADIUS * RADIUS / D;
    let stops: Vec<usize> = TAUS.iter().map(|t| (t / DTAU).round() as usize).collect();
    let run = SphereRun {
        radius: RADIUS,
        n_cells,
        kind: CellKind::Quad8,
        law: law(OMEGA_WEAK),
        c0: C0,
        surface: Surface::Concentration(C_SURFACE),
        dt,
        n_steps: stops[1],
    };
    let mesh = sphere_mesh(&run);
    let centre = node_at(&mesh, 0.0, 0.0, RADIUS);
    let inner = node_at(&mesh, X_INNER * RADIUS, 0.0, RADIUS);
    let mut out = SurfaceOutcome {
        theta_centre: [f64::NAN; 2],
        theta_inner: [f64::NAN; 2],
        uptake: [f64::NAN; 2],
        seconds: 0.0,
    };
    let dc = C_SURFACE - C0;
    run_sphere(&mesh, &run, |st| {
        let Some(k) = stops.iter().position(|&s| s == st.step) else {
            return;
        };
        let c_dof = |node: usize| st.dofs.node_dof(st.fields.c, node, 0).unwrap();
        let volume = field_integral(
            st.mesh,
            st.dofs,
            st.fields.c,
            GeometryMode::Axisymmetric,
            &vec![1.0; st.x.len()],
        )
        .unwrap();
        let amount = field_integral(
            st.mesh,
            st.dofs,
            st.fields.c,
            GeometryMode::Axisymmetric,
            st.x,
        )
        .unwrap();
        out.theta_centre[k] = (st.x[c_dof(centre)] - C0) / dc;
        out.theta_inner[k] = (st.x[c_dof(inner)] - C0) / dc;
        // Uptake: amount gained over the final amount gained, (c_s − c₀) V, on the discrete
        // volume.
        out.uptake[k] = (amount - C0 * volume) / (dc * volume);
    });
    out.seconds = start.elapsed().as_secs_f64();
    out
}

/// Concentration held on the surface: θ at the centre and at x = 7/8 and the uptake fraction
/// at τ = 0.05 and 0.2 against Crank's series (section 6.3, from memory).
#[test]
fn sphere_with_constant_surface_concentration_matches_crank_series() {
    // Series with 200 terms: at τ = 0.05 the terms decay like exp(−n² · 0.49), so the tail is
    // far below round-off. Self-check of the two series against each other: the uptake is
    // 3 ∫₀¹ θ x² dx (definition of the mean over a sphere), by the midpoint rule on 20000
    // intervals (error ≈ 1e-9).
    let n_terms = 200;
    for &tau in &TAUS {
        let m = 20_000;
        let integral: f64 = (0..m)
            .map(|i| {
                let x = (i as f64 + 0.5) / m as f64;
                3.0 * surface_theta(x, tau, n_terms) * x * x / m as f64
            })
            .sum();
        let uptake = surface_uptake(tau, n_terms);
        assert!(
            (integral - uptake).abs() < 1e-6,
            "τ = {tau}: 3∫θx² = {integral} vs uptake series {uptake}"
        );
    }

    let coarse = run_surface(4);
    let fine = run_surface(8);
    let mut worst = [0.0_f64; 2];
    for (i, (name, o)) in [("n = 4", &coarse), ("n = 8", &fine)].iter().enumerate() {
        for (k, &tau) in TAUS.iter().enumerate() {
            let (tc, ti, up) = (
                surface_theta(0.0, tau, n_terms),
                surface_theta(X_INNER, tau, n_terms),
                surface_uptake(tau, n_terms),
            );
            eprintln!(
                "surface-concentration sphere, {name}, τ = {tau}: θ centre {:.6} (series \
                 {tc:.6}), θ(7/8) {:.6} (series {ti:.6}), uptake {:.6} (series {up:.6})",
                o.theta_centre[k], o.theta_inner[k], o.uptake[k]
            );
            let errs = [
                (o.theta_centre[k] - tc).abs(),
                (o.theta_inner[k] - ti).abs(),
                (o.uptake[k] - up).abs(),
            ];
            worst[i] = worst[i].max(errs.iter().copied().fold(0.0, f64::max));
            if i == 1 {
                // Tolerances at n = 8, chosen before any run: θ within 4e-3 at both points
                // (linear c, O(h²) with h = R/16 and θ'' ≈ 2.5 near x = 7/8 at τ = 0.05 gives
                // about 1e-3), uptake within 3e-3. Measured (n = 8): τ = 0.05 centre 1.7e-3,
                // θ(7/8) 2.3e-3, uptake 2.8e-3 (the closest to its tolerance: the discrete
                // uptake runs ahead of the series early on); τ = 0.2: 5.4e-4, 2.4e-4, 5.5e-4.
                assert!(errs[0] < 4e-3, "τ = {tau}: centre θ error {:e}", errs[0]);
                assert!(errs[1] < 4e-3, "τ = {tau}: θ(7/8) error {:e}", errs[1]);
                assert!(errs[2] < 3e-3, "τ = {tau}: uptake error {:e}", errs[2]);
            }
        }
        eprintln!("surface-concentration sphere, {name}: {:.1} s", o.seconds);
    }
    // The largest error over both points, the uptake and both times converges at an observed
    // order above 1.5 (2 expected; measured 1.02e-2 -> 2.76e-3, order 1.89).
    eprintln!(
        "surface-concentration sphere: worst error {:.3e} (n = 4) -> {:.3e} (n = 8), order {:.2}",
        worst[0],
        worst[1],
        order(worst[0], worst[1])
    );
    assert!(
        order(worst[0], worst[1]) > 1.5,
        "worst error {:e} -> {:e}",
        worst[0],
        worst[1]
    );
}
