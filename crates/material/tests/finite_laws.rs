//! Finite-strain point laws: every tangent against central differences of its own value, the
//! stress and potential against differences of the free energy, objectivity, the stress-free
//! reference state of a gel, and the small-strain limit of the host law.

use dilata_material::chemical::{ChemicalLaw, IdealDiluteParams, LatticeGasParams};
use dilata_material::coupled::{CoupledLawParts, CoupledPointLaw, PointInput};
use dilata_material::elastic::{Isotropic, Voigt};
use dilata_material::finite::{
    cauchy_voigt, flat, principal_stretches, FiniteInput, FiniteLaw, FiniteOutput, GelLaw,
    GelParams, HostLaw, HostParams,
};
use dilata_material::gradient::GradientEnergy;
use dilata_material::mobility::{
    Diffusivity, DiluteMobilityParams, LatticeGasMobilityParams, MobilityLaw,
};
use dilata_material::stiffness::StiffnessLaw;
use dilata_material::swelling::{IsotropicSwellingParams, SwellingLaw};
use nalgebra::{Matrix3, Vector3};

fn gel(chi: f64, l0: f64) -> GelLaw {
    GelLaw::new(GelParams {
        shear_modulus: 4.1e5,
        solvent_molar_volume: 1.8e-5,
        chi,
        temperature: 298.15,
        diffusivity: 1e-9,
        reference_stretch: l0,
    })
    .unwrap()
}

fn host_lattice() -> HostLaw {
    let t = 300.0;
    HostLaw::new(HostParams {
        elastic: Isotropic::new(80e9, 0.22).unwrap(),
        partial_molar_volume: 9e-6,
        c_ref: 0.0,
        chemical: ChemicalLaw::lattice_gas(LatticeGasParams {
            mu0: 0.0,
            temperature: t,
            c_max: 3e5,
            interaction: 4000.0,
        })
        .unwrap(),
        mobility: MobilityLaw::lattice_gas(LatticeGasMobilityParams {
            diffusivity: Diffusivity::isotropic(1e-15).unwrap(),
            temperature: t,
            c_max: 3e5,
        })
        .unwrap(),
        gradient: GradientEnergy::none(),
    })
    .unwrap()
}

/// A general deformation gradient (stretch, shear, rotation), J ≈ 1.3.
fn general_f() -> Matrix3<f64> {
    Matrix3::new(1.12, 0.08, -0.05, -0.04, 1.05, 0.11, 0.07, -0.02, 1.09)
}

fn input(f: Matrix3<f64>, c: f64, mu: f64) -> FiniteInput {
    FiniteInput {
        f,
        c,
        mu,
        grad_mu: Vector3::new(120.0, -80.0, 45.0),
        grad_c: Vector3::new(3.0, 1.0, -2.0),
    }
}

fn rel(a: f64, b: f64, scale: f64) -> f64 {
    (a - b).abs() / scale
}

/// Check every block of the tangent of `law` at `x` against central differences.
fn check_tangents(law: &FiniteLaw, x: &FiniteInput, tol: f64) {
    let out = law.evaluate(x).unwrap();
    let t_scale = out.dstress_df.amax();
    let h_f = 1e-6;
    for j in 0..3 {
        for l in 0..3 {
            let (mut xp, mut xm) = (*x, *x);
            xp.f[(j, l)] += h_f;
            xm.f[(j, l)] -= h_f;
            let (op, om) = (law.evaluate(&xp).unwrap(), law.evaluate(&xm).unwrap());
            let d_stress = (op.stress - om.stress) / (2.0 * h_f);
            for i in 0..3 {
                for k in 0..3 {
                    let an = out.dstress_df[(flat(i, k), flat(j, l))];
                    let e = rel(an, d_stress[(i, k)], t_scale);
                    assert!(
                        e < tol,
                        "dP[{i}{k}]/dF[{j}{l}]: {an} vs {}",
                        d_stress[(i, k)]
                    );
                }
            }
            let d_pot = (op.potential - om.potential) / (2.0 * h_f);
            let p_scale = out.dpotential_df.amax().max(1e-30);
            assert!(
                rel(out.dpotential_df[(j, l)], d_pot, p_scale) < tol,
                "dpot/dF[{j}{l}]: {} vs {d_pot}",
                out.dpotential_df[(j, l)]
            );
            let q_scale = out.dflux_df.iter().map(|m| m.amax()).fold(1e-300, f64::max);
            for k in 0..3 {
                let d_flux = (op.flux[k] - om.flux[k]) / (2.0 * h_f);
                assert!(
                    rel(out.dflux_df[k][(j, l)], d_flux, q_scale) < tol,
                    "dJ[{k}]/dF[{j}{l}]: {} vs {d_flux}",
                    out.dflux_df[k][(j, l)]
                );
            }
        }
    }
    // Concentration.
    let h_c = 1e-6 * x.c.abs().max(1.0);
    let (mut xp, mut xm) = (*x, *x);
    xp.c += h_c;
    xm.c -= h_c;
    let (op, om) = (law.evaluate(&xp).unwrap(), law.evaluate(&xm).unwrap());
    let ds = (op.stress - om.stress) / (2.0 * h_c);
    let sc = out.dstress_dc.amax().max(1e-30);
    assert!((out.dstress_dc - ds).amax() / sc < tol, "dP/dc");
    let dp = (op.potential - om.potential) / (2.0 * h_c);
    assert!(
        rel(out.dpotential_dc, dp, out.dpotential_dc.abs()) < tol,
        "dpot/dc"
    );
    let dj = (op.flux - om.flux) / (2.0 * h_c);
    let jc = out.dflux_dc.amax().max(1e-300);
    assert!(
        (out.dflux_dc - dj).amax() / jc < tol || jc == 1e-300,
        "dJ/dc"
    );
    // Potential.
    let h_m = 1e-3;
    let (mut xp, mut xm) = (*x, *x);
    xp.mu += h_m;
    xm.mu -= h_m;
    let (op, om) = (law.evaluate(&xp).unwrap(), law.evaluate(&xm).unwrap());
    let ds = (op.stress - om.stress) / (2.0 * h_m);
    assert!(
        (out.dstress_dmu - ds).amax() <= tol * out.dstress_dmu.amax().max(1e-30),
        "dP/dmu"
    );
    let dp = (op.potential - om.potential) / (2.0 * h_m);
    assert!((out.dpotential_dmu - dp).abs() < tol, "dpot/dmu");
    // Potential gradient: the flux is linear in it.
    for d in 0..3 {
        let (mut xp, mut xm) = (*x, *x);
        xp.grad_mu[d] += 1.0;
        xm.grad_mu[d] -= 1.0;
        let (op, om) = (law.evaluate(&xp).unwrap(), law.evaluate(&xm).unwrap());
        let dj = (op.flux - om.flux) / 2.0;
        let m = out.dflux_dgrad_mu.amax();
        for k in 0..3 {
            assert!(
                rel(out.dflux_dgrad_mu[(k, d)], dj[k], m) < tol,
                "dJ/dgrad mu"
            );
        }
    }
}

// Acceptance item 4 of the finite-strain issue: consistent tangents of every finite-strain law
// against central finite differences (common practice, no source).
#[test]
fn gel_tangents_match_finite_differences() {
    for (chi, l0) in [(0.1, 2.0), (0.6, 1.4), (0.3, 3.5)] {
        let law = FiniteLaw::Gel(gel(chi, l0));
        let g = gel(chi, l0);
        let x = input(general_f(), g.reference_concentration(), -35.0);
        check_tangents(&law, &x, 2e-6);
    }
}

#[test]
fn host_tangents_match_finite_differences() {
    let law = FiniteLaw::Host(host_lattice());
    // Half filled: J_s = 1 + 9e-6 · 1.5e5 = 2.35.
    let x = input(general_f() * 1.3, 1.5e5, 2000.0);
    check_tangents(&law, &x, 2e-6);
}

/// Free energy per reference volume with the gel's Legendre term, `e + χ_mix − μ c_J`.
fn gel_legendre(law: &GelLaw, x: &FiniteInput) -> f64 {
    let o = law.evaluate(x).unwrap();
    o.elastic_energy + o.chemical_energy - x.mu * o.concentration
}

// The nominal stress is the derivative of the free energy (hyperelasticity, Hong et al. 2008,
// eq. 2.9 with the Legendre transform), and the host's local potential is ∂ψ/∂c.
#[test]
fn stress_and_potential_derive_from_the_free_energy() {
    let h = 1e-7;
    let gl = gel(0.4, 2.2);
    let x = input(general_f(), 0.0, -20.0);
    let out = gl.evaluate(&x).unwrap();
    for j in 0..3 {
        for l in 0..3 {
            let (mut xp, mut xm) = (x, x);
            xp.f[(j, l)] += h;
            xm.f[(j, l)] -= h;
            let d = (gel_legendre(&gl, &xp) - gel_legendre(&gl, &xm)) / (2.0 * h);
            assert!(
                rel(out.stress[(j, l)], d, out.stress.amax()) < 1e-6,
                "gel P[{j}{l}] {} vs dW/dF {d}",
                out.stress[(j, l)]
            );
        }
    }
    let host = host_lattice();
    let x = input(general_f() * 1.3, 1.5e5, 2000.0);
    let out = host.evaluate(&x).unwrap();
    let energy = |x: &FiniteInput| {
        let o = host.evaluate(x).unwrap();
        o.elastic_energy + o.chemical_energy
    };
    for j in 0..3 {
        for l in 0..3 {
            let (mut xp, mut xm) = (x, x);
            xp.f[(j, l)] += h;
            xm.f[(j, l)] -= h;
            let d = (energy(&xp) - energy(&xm)) / (2.0 * h);
            assert!(rel(out.stress[(j, l)], d, out.stress.amax()) < 1e-6);
        }
    }
    let hc = 1e-3;
    let (mut xp, mut xm) = (x, x);
    xp.c += hc;
    xm.c -= hc;
    let mu_local = x.mu - out.potential;
    let d = (energy(&xp) - energy(&xm)) / (2.0 * hc);
    assert!(rel(mu_local, d, mu_local.abs()) < 1e-6, "{mu_local} vs {d}");
}

/// Rotation by 90° about an axis through (1, 1, 1)/√3 followed by nothing else.
fn rotation_90() -> Matrix3<f64> {
    let n = Vector3::new(1.0, 1.0, 1.0).normalize();
    nalgebra::Rotation3::from_axis_angle(
        &nalgebra::Unit::new_normalize(n),
        std::f64::consts::FRAC_PI_2,
    )
    .into_inner()
}

// Acceptance item 3 of the finite-strain issue (objectivity): P(QF) = Q P(F), the local potential
// and the energies unchanged, for a rigid rotation of 90° (material frame indifference, common
// practice; e.g. Holzapfel, Nonlinear Solid Mechanics, 2000, §6.2).
#[test]
fn rotation_changes_neither_energy_nor_potential() {
    let q = rotation_90();
    let laws = [
        FiniteLaw::Gel(gel(0.3, 2.0)),
        FiniteLaw::Host(host_lattice()),
    ];
    let xs = [
        input(general_f(), 2e4, -10.0),
        input(general_f() * 1.3, 1.5e5, 2000.0),
    ];
    for (law, x) in laws.iter().zip(xs) {
        let a = law.evaluate(&x).unwrap();
        let mut xr = x;
        xr.f = q * x.f;
        let b = law.evaluate(&xr).unwrap();
        assert!((b.stress - q * a.stress).amax() < 1e-10 * a.stress.amax());
        assert!((b.potential - a.potential).abs() < 1e-9 * a.potential.abs().max(1.0));
        assert!((b.elastic_energy - a.elastic_energy).abs() < 1e-9 * a.elastic_energy.abs());
        assert!((b.chemical_energy - a.chemical_energy).abs() < 1e-9 * a.chemical_energy.abs());
        // The reference flux does not see the rotation.
        assert!((b.flux - a.flux).amax() < 1e-10 * a.flux.amax());
        // Cauchy stress rotates with the body.
        let sa = cauchy_voigt(&a.stress, &x.f);
        let sb = cauchy_voigt(&b.stress, &xr.f);
        let ta = dilata_material::elastic::voigt_to_tensor(&sa);
        let tb = dilata_material::elastic::voigt_to_tensor(&sb);
        assert!((tb - q * ta * q.transpose()).amax() < 1e-9 * ta.amax());
    }
    // A pure rotation of the reference state: no stress, the reference potential.
    let g = gel(0.3, 2.0);
    let mu0 = g.free_swelling_potential(2.0);
    let out = g
        .evaluate(&FiniteInput {
            f: q,
            c: g.reference_concentration(),
            mu: mu0,
            grad_mu: Vector3::zeros(),
            grad_c: Vector3::zeros(),
        })
        .unwrap();
    assert!(out.stress.amax() < 1e-9 * 4.1e5, "{}", out.stress);
    assert!(out.potential.abs() < 1e-9 * g.rt());
    let st = principal_stretches(&q);
    assert!(st.iter().all(|s| (s - 1.0).abs() < 1e-14));
}

// Free swelling of a gel (Hong, Zhao, Zhou & Suo, J. Mech. Phys. Solids 56 (2008) 1779,
// eq. 3.3): at the potential of free swelling at stretch λ the isotropic state λ I (from dry)
// carries no stress.
#[test]
fn free_swelling_state_is_stress_free() {
    for (chi, l0, lam) in [(0.1, 2.0, 2.7), (0.5, 1.6, 1.9), (0.9, 1.2, 1.35)] {
        let g = gel(chi, l0);
        let mu = g.free_swelling_potential(lam);
        let out = g
            .evaluate(&FiniteInput {
                f: Matrix3::identity() * (lam / l0),
                c: 0.0,
                mu,
                grad_mu: Vector3::zeros(),
                grad_c: Vector3::zeros(),
            })
            .unwrap();
        assert!(out.stress.amax() < 1e-9 * 4.1e5, "χ {chi}: {}", out.stress);
        assert!((out.swelling_ratio - lam.powi(3)).abs() < 1e-12 * lam.powi(3));
    }
}

// Small-strain limit: for F = I + ε with small ε and a concentration near c_ref, the host law
// matches the small-strain law of the coupled model (stress and local potential) to second
// order in the strain (the multiplicative split linearises to ε − ε_c, common practice).
#[test]
fn host_reduces_to_the_small_strain_law() {
    let t = 298.15;
    let iso = Isotropic::new(10e9, 0.3).unwrap();
    let omega = 3.5e-6;
    let chem = ChemicalLaw::ideal_dilute(IdealDiluteParams {
        mu0: 0.0,
        temperature: t,
        c_ref: 1e3,
    })
    .unwrap();
    let mob = MobilityLaw::dilute(DiluteMobilityParams {
        diffusivity: Diffusivity::isotropic(7e-15).unwrap(),
        temperature: t,
    })
    .unwrap();
    let host = HostLaw::new(HostParams {
        elastic: iso,
        partial_molar_volume: omega,
        c_ref: 0.0,
        chemical: chem,
        mobility: mob,
        gradient: GradientEnergy::none(),
    })
    .unwrap();
    let small = CoupledPointLaw::new(CoupledLawParts {
        stiffness: StiffnessLaw::isotropic(iso),
        swelling: SwellingLaw::isotropic(IsotropicSwellingParams {
            partial_molar_volume: omega,
            c_ref: 0.0,
        })
        .unwrap(),
        chemical: chem,
        mobility: mob,
        gradient: GradientEnergy::none(),
    })
    .unwrap();
    let shape = Matrix3::new(1.0, 0.3, -0.2, 0.3, -0.5, 0.1, -0.2, 0.1, 0.7);
    let mut last = f64::INFINITY;
    for k in 0..3 {
        let e = 1e-3 / 10f64.powi(k);
        let c = e / omega; // swelling strain of the order of the strain
        let eps = shape * e;
        let f = Matrix3::identity() + eps;
        let fin = host
            .evaluate(&FiniteInput {
                f,
                c,
                mu: 0.0,
                grad_mu: Vector3::zeros(),
                grad_c: Vector3::zeros(),
            })
            .unwrap();
        let sm = small
            .evaluate(&PointInput {
                strain: Voigt::from_column_slice(&[
                    eps[(0, 0)],
                    eps[(1, 1)],
                    eps[(2, 2)],
                    2.0 * eps[(0, 1)],
                    2.0 * eps[(1, 2)],
                    2.0 * eps[(0, 2)],
                ]),
                c,
                grad_mu: Vector3::zeros(),
                grad_c: Vector3::zeros(),
            })
            .unwrap();
        let sigma = cauchy_voigt(&fin.stress, &f);
        let scale = sm.stress.amax();
        let err = (sigma - sm.stress).amax() / scale;
        let mu_fin = -fin.potential; // μ = 0: potential = −μ_local
        let mu_err = (mu_fin - sm.mu_local).abs() / sm.mu_mech.abs();
        // Relative error of order ε: falls tenfold with each tenfold smaller strain.
        assert!(
            err < 5.0 * e && mu_err < 5.0 * e,
            "ε {e}: stress {err}, μ {mu_err}"
        );
        assert!(err < last / 5.0, "error does not fall with the strain");
        last = err;
    }
}

#[test]
fn host_refuses_an_anisotropic_mobility() {
    let mut p = *host_lattice().params();
    p.mobility = MobilityLaw::dilute(DiluteMobilityParams {
        diffusivity: Diffusivity::tensor(Matrix3::from_diagonal(&Vector3::new(
            1e-15, 2e-15, 1e-15,
        )))
        .unwrap(),
        temperature: 300.0,
    })
    .unwrap();
    assert!(HostLaw::new(p).is_err());
}

#[test]
fn gel_below_its_dry_volume_and_inverted_points_are_range_errors() {
    let g = FiniteLaw::Gel(gel(0.3, 1.5));
    let shrink = input(Matrix3::identity() * 0.6, 0.0, 0.0);
    assert!(g.evaluate(&shrink).is_err());
    let inverted = input(
        Matrix3::from_diagonal(&Vector3::new(1.0, 1.0, -0.5)),
        0.0,
        0.0,
    );
    let e = g.evaluate(&inverted).unwrap_err();
    assert!(e.to_string().contains("volume ratio"), "{e}");
    let h = FiniteLaw::Host(host_lattice());
    assert!(h.evaluate(&input(general_f(), -2e5, 0.0)).is_err());
    let ok: Result<FiniteOutput, _> = h.evaluate(&input(general_f(), 1e5, 0.0));
    assert!(ok.is_ok());
}
