//! Verification of the coupled deformation–diffusion problem against the series solution for
//! diffusion into a sphere through a constant inward surface flux (J. Crank, The Mathematics of
//! Diffusion, 2nd ed., 1975, section 6.3, from memory):
//!
//! θ(x, τ) = 3τ + x²/2 − 3/10 − (2/x) Σₙ sin(λₙ x) exp(−λₙ² τ) / (λₙ² sin λₙ),   tan λₙ = λₙ,
//!
//! with θ = (c − c₀)/(J R/D), x = r/R, τ = D t/R², and the mean of θ over the sphere equal to 3τ.
//!
//! The sphere is modelled axisymmetrically (x = r, y = z) on a quarter disc, which rotated about
//! the axis gives a half sphere. The partial molar volume is tiny (Ω = 1e-12 m³/mol) so that the
//! mechanics barely feed back into the diffusion: with E = 10 GPa and Δc ≈ 500 mol/m³ the
//! hydrostatic stress is at most of order E Ω Δc ≈ 5 Pa, and Ω σ_h ≈ 5e-12 J/mol against
//! R T ln(c/c_ref) ≈ 1e3 J/mol, i.e. a relative perturbation of the driving potential of order
//! 1e-14 — far below every tolerance below. The problem is then pure linear diffusion: the
//! dilute mobility M = D c/(RT) with μ = RT ln(c/c_ref) gives Fick's law J = −D grad c
//! (crates/material/src/mobility.rs), which is what the series describes.

mod common;

use std::time::Instant;

use common::sphere::{
    flux_theta as theta_series, node_at, outer_area, run_sphere, sphere_mesh, tan_root, SphereRun,
    Surface,
};
use dilata_fem::dofs::DofMap;
use dilata_fem::GeometryMode;
use dilata_material::coupled::CoupledPointLaw;
use dilata_mesh::{CellKind, Mesh};
use dilata_physics::coupled::CoupledFields;
use dilata_physics::norms::field_integral;

const E: f64 = 10e9;
const NU: f64 = 0.3;
/// Tiny partial molar volume: weak coupling, see the module comment.
const OMEGA: f64 = 1e-12;
const D: f64 = 1e-14;
const T: f64 = 298.15;
const RADIUS: f64 = 1e-6;
const C0: f64 = 1000.0;
/// Scale of the concentration rise, Δc = J R / D (half of c₀, so c stays well positive).
const DELTA_C: f64 = 0.5 * C0;
/// Inward flux J = D Δc / R in mol/(m² s).
const J: f64 = D * DELTA_C / RADIUS;
/// Final dimensionless time τ = D t / R².
const TAU_END: f64 = 0.1;

fn law() -> CoupledPointLaw {
    common::dilute_law(&common::DiluteHost {
        young: E,
        poisson: NU,
        omega: OMEGA,
        diffusivity: D,
        temperature: T,
        c_ref: C0,
    })
}

/// ∫ c dV with the kernels' cell quadrature (see `field_integral`).
fn amount(mesh: &Mesh, dofs: &DofMap, fields: CoupledFields, x: &[f64]) -> f64 {
    field_integral(mesh, dofs, fields.c, GeometryMode::Axisymmetric, x).unwrap()
}

struct Outcome {
    /// θ at the surface node (R, 0) and at the centre node (0, 0) at τ = TAU_END.
    theta_surface: f64,
    theta_centre: f64,
    /// Worst relative mismatch over all steps of (amount − amount₀) against J · area · t.
    balance_error: f64,
    /// Mean θ from the amount and the discrete volume, at τ = TAU_END.
    theta_mean: f64,
    /// Discrete area / discrete volume, against 3/R of the exact half sphere.
    area_over_volume: f64,
    /// Discrete volume / (2πR³/3) − 1.
    volume_error: f64,
}

fn run(n_cells: usize, n_steps: usize) -> Outcome {
    // Quarter disc of Quad8, u_r = 0 on the axis, u_z = 0 on the equatorial plane, the flux on
    // `outer`, uniform c = c₀ = c_ref initially (so μ = 0 and u = 0), fixed BDF2 steps; see
    // `common::sphere`.
    let t_end = TAU_END * RADIUS * RADIUS / D;
    let sphere = SphereRun {
        radius: RADIUS,
        n_cells,
        kind: CellKind::Quad8,
        law: law(),
        c0: C0,
        surface: Surface::Flux(J),
        dt: t_end / n_steps as f64,
        n_steps,
    };
    let mesh = sphere_mesh(&sphere);
    let centre = node_at(&mesh, 0.0, 0.0, RADIUS);
    let surface = node_at(&mesh, RADIUS, 0.0, RADIUS);
    let area = outer_area(&mesh);
    let mut m0 = f64::NAN;
    let mut balance_error: f64 = 0.0;
    let mut last = None;
    run_sphere(&mesh, &sphere, |st| {
        if st.step == 1 {
            // The initial amount: c₀ times the discrete volume.
            m0 = amount(st.mesh, st.dofs, st.fields, &vec![C0; st.x.len()]);
        }
        let gained = amount(st.mesh, st.dofs, st.fields, st.x) - m0;
        let inflow = J * area * st.t;
        balance_error = balance_error.max((gained - inflow).abs() / inflow);
        if st.step == n_steps {
            let c_dof = |node: usize| st.dofs.node_dof(st.fields.c, node, 0).unwrap();
            last = Some((
                st.x[c_dof(surface)],
                st.x[c_dof(centre)],
                amount(st.mesh, st.dofs, st.fields, st.x),
            ));
        }
    });
    let (c_surface, c_centre, m_end) = last.expect("the last step was observed");
    let volume = m0 / C0;
    Outcome {
        theta_surface: (c_surface - C0) / DELTA_C,
        theta_centre: (c_centre - C0) / DELTA_C,
        balance_error,
        theta_mean: (m_end / volume - C0) / DELTA_C,
        area_over_volume: area / volume,
        volume_error: volume / (2.0 * std::f64::consts::PI * RADIUS.powi(3) / 3.0) - 1.0,
    }
}

/// Constant inward flux into a sphere: mean, surface and centre concentrations at τ = 0.1
/// against Crank's series (section 6.3, from memory).
#[test]
fn sphere_with_constant_inward_flux_matches_crank_series() {
    let start = Instant::now();

    // The series itself. Roots of tan λ = λ: the first three against 4.493409, 7.725252,
    // 10.904122 (from memory).
    let roots: Vec<f64> = (1..=200).map(tan_root).collect();
    for (got, quoted) in roots.iter().zip([4.493409, 7.725252, 10.904122]) {
        assert!((got - quoted).abs() < 1e-6, "root {got} vs {quoted}");
    }
    // 200 terms: the omitted tail at τ = 0.1 is below exp(−(200π)²·0.1), i.e. nothing; the
    // terms at τ = 0.1 decay like exp(−n²π²/10), so 200 is far more than enough.
    let theta_surface_exact = theta_series(1.0, TAU_END, &roots);
    let theta_centre_exact = theta_series(0.0, TAU_END, &roots);
    // Self-consistency of the series at a time where the transient is negligible
    // (τ = 2: exp(−λ₁² τ) ≈ 3e-18): θ(x) = 3τ + x²/2 − 3/10 exactly (Crank, same section).
    for xx in [0.0, 0.5, 1.0] {
        let steady = 3.0 * 2.0 + 0.5 * xx * xx - 0.3;
        assert!((theta_series(xx, 2.0, &roots) - steady).abs() < 1e-12);
    }

    // Coarse and fine mesh (n = 4 and 8 cells per core side: h halves), 200 BDF2 steps each.
    // Time error: measured by hand with n = 6 at 100, 200 and 400 steps, θ changed by < 5e-6,
    // far below the spatial error, so the comparison below measures the mesh.
    let coarse = run(4, N_STEPS);
    let fine = run(8, N_STEPS);
    let elapsed = start.elapsed();
    for (name, o) in [("n = 4", &coarse), ("n = 8", &fine)] {
        eprintln!(
            "sphere flux, {name}, {N_STEPS} BDF2 steps to τ = {TAU_END}: θ_surface {:.6} (series \
             {:.6}), θ_centre {:.6} (series {:.6}), θ_mean − 3τ = {:.3e}, volume/(2πR³/3) − 1 = \
             {:.3e}, area/volume·R/3 − 1 = {:.3e}, worst mass balance error {:.3e}",
            o.theta_surface,
            theta_surface_exact,
            o.theta_centre,
            theta_centre_exact,
            o.theta_mean - 3.0 * TAU_END,
            o.volume_error,
            o.area_over_volume * RADIUS / 3.0 - 1.0,
            o.balance_error,
        );
    }
    eprintln!("sphere flux: both runs took {:.1} s", elapsed.as_secs_f64());

    // 1. Mass balance. The test functions of the mass equation sum to one, so the amount
    //    gained equals Δt × discrete inflow every step (for BDF2 too: a linearly growing
    //    amount satisfies the BDF2 formula exactly); Newton is converged to 1e-12 relative.
    //    Common practice, no source. Measured ≤ 5e-12; a flux applied twice or with the
    //    wrong sign gives an error of order one.
    for o in [&coarse, &fine] {
        assert!(
            o.balance_error < 1e-9,
            "amount gained differs from J · area · t by {:e} (relative)",
            o.balance_error
        );
    }
    //    The discrete half sphere: the volume integral with the 2πr weight against 2πR³/3
    //    (a missing 2π or r weight would be off by a factor), error from the quadratic arc
    //    only (measured −1.1e-6 relative at n = 8; 1e-5 allowed).
    assert!(
        fine.volume_error.abs() < 1e-5,
        "volume of the half sphere off by {:e} (relative)",
        fine.volume_error
    );
    //    Mean θ against Crank's 3τ (section 6.3, from memory). The discrete mean is
    //    3τ × (A_h R / 3V_h), exact up to the geometric error of the quadratic arc (≈ h⁴;
    //    measured 2.3e-7 at n = 8, 3.6e-6 at n = 4); 3e-6 allowed (1e-5 of 3τ). Without the
    //    r weight (a cylinder) the mean would be 2τ (from memory).
    assert!(
        (fine.theta_mean - 3.0 * TAU_END).abs() < 3e-6,
        "mean θ {} vs 3τ = {}",
        fine.theta_mean,
        3.0 * TAU_END
    );

    // 2. Surface and centre against the series. Linear c on quad8 geometry: nodal error
    //    O(h²). Measured errors in θ (units of J R/D = 500 mol/m³): surface 7.1e-4 (n = 4),
    //    1.8e-4 (n = 8); centre 5.9e-3 (n = 4), 1.6e-3 (n = 8) — the centre is the largest
    //    relative error because θ there is small (0.06).
    //    Tolerances at n = 8: surface 1e-3 (0.2 % of θ_surface = 0.487), centre 4e-3.
    //    Deliberate errors tried by hand (n = 8): flux doubled gave θ_surface 0.973, flux of
    //    the wrong sign −0.487, the kernel run in plane strain (no 2πr weight) 0.418 with
    //    θ_centre 0.026; each fails these checks and the mass balance above.
    let err = |got: f64, exact: f64| (got - exact).abs();
    let (es4, es8) = (
        err(coarse.theta_surface, theta_surface_exact),
        err(fine.theta_surface, theta_surface_exact),
    );
    let (ec4, ec8) = (
        err(coarse.theta_centre, theta_centre_exact),
        err(fine.theta_centre, theta_centre_exact),
    );
    assert!(
        es8 < 1e-3,
        "surface θ {} vs series {theta_surface_exact}",
        fine.theta_surface
    );
    assert!(
        ec8 < 4e-3,
        "centre θ {} vs series {theta_centre_exact}",
        fine.theta_centre
    );
    //    And the errors converge to zero at about the expected rate (observed order from
    //    n = 4 to n = 8; measured 1.95 surface, 1.87 centre; at least 1.5 required). A
    //    modelling error (e.g. a wrong factor) would leave an error that does not shrink.
    let order = |e_coarse: f64, e_fine: f64| (e_coarse / e_fine).log2();
    assert!(
        order(es4, es8) > 1.5,
        "surface error {es4:e} -> {es8:e}: observed order {}",
        order(es4, es8)
    );
    assert!(
        order(ec4, ec8) > 1.5,
        "centre error {ec4:e} -> {ec8:e}: observed order {}",
        order(ec4, ec8)
    );
}

/// Fixed BDF2 steps to τ = TAU_END (Δt = 0.05 s, Δτ = 5e-4).
const N_STEPS: usize = 200;
