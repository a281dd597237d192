//! Verification of the coupled point law through its public entry point: every tangent block
//! against central differences of the outputs, energies against their derivatives, Fick's law
//! under uniform stress and the stress-modified equilibrium concentration.

use dilata_material::chemical::{
    ChemicalLaw, DoubleWellParams, IdealDiluteParams, LatticeGasParams, GAS_CONSTANT,
};
use dilata_material::coupled::{
    CoupledLawParts, CoupledPointLaw, PointInput, PointOutput, UnstrainedOutput,
};
use dilata_material::elastic::{hydrostatic, Isotropic, Voigt};
use dilata_material::error::{ParameterError, RangeError, RangeLaw};
use dilata_material::gradient::GradientEnergy;
use dilata_material::mobility::{
    Diffusivity, DiluteMobilityParams, LatticeGasMobilityParams, MobilityLaw,
};
use dilata_material::stiffness::{LinearYoungParams, StiffnessLaw};
use dilata_material::swelling::{IsotropicSwellingParams, SwellingLaw, TensorSwellingParams};
use nalgebra::{Matrix3, Vector3};

// Demo-scale numbers of a manganese-oxide-like host (order of magnitude only, from memory).
const T: f64 = 298.15;
const C_MAX: f64 = 2.37e4;
const OMEGA: f64 = 3.5e-6;
const E: f64 = 10e9;
const NU: f64 = 0.3;

#[derive(Clone, Copy, Debug)]
enum Chem {
    Dilute,
    Lattice,
    DoubleWell,
}

#[derive(Clone, Copy, Debug)]
enum Swell {
    Isotropic,
    Tensor,
}

#[derive(Clone, Copy, Debug)]
enum Stiff {
    Constant,
    LinearYoung,
}

#[derive(Clone, Copy, Debug)]
enum Mob {
    Matching,
    Constant,
}

fn anisotropic_d() -> Diffusivity {
    Diffusivity::tensor(Matrix3::new(
        7e-15, 1e-15, 0.0, 1e-15, 3e-15, 5e-16, 0.0, 5e-16, 2e-15,
    ))
    .unwrap()
}

fn law(chem: Chem, swell: Swell, stiff: Stiff, mob: Mob) -> CoupledPointLaw {
    let chemical = match chem {
        Chem::Dilute => ChemicalLaw::ideal_dilute(IdealDiluteParams {
            mu0: -2.0e3,
            temperature: T,
            c_ref: 1.0e3,
        }),
        Chem::Lattice => ChemicalLaw::lattice_gas(LatticeGasParams {
            mu0: 1.0e3,
            temperature: T,
            c_max: C_MAX,
            interaction: 1.2e3,
        }),
        // Wells at 2000 and 16000 mol/m³, potentials of order W Δc³ ≈ 1 kJ/mol.
        Chem::DoubleWell => ChemicalLaw::double_well(DoubleWellParams {
            height: 3.6e-10,
            c_a: 2.0e3,
            c_b: 1.6e4,
        }),
    }
    .unwrap();
    let mobility = match (mob, chem) {
        (Mob::Constant, _) => MobilityLaw::constant(Matrix3::new(
            2e-18, 0.0, 1e-19, 0.0, 1e-18, 0.0, 1e-19, 0.0, 3e-18,
        )),
        (Mob::Matching, Chem::Dilute | Chem::DoubleWell) => {
            MobilityLaw::dilute(DiluteMobilityParams {
                diffusivity: anisotropic_d(),
                temperature: T,
            })
        }
        (Mob::Matching, Chem::Lattice) => MobilityLaw::lattice_gas(LatticeGasMobilityParams {
            diffusivity: anisotropic_d(),
            temperature: T,
            c_max: C_MAX,
        }),
    }
    .unwrap();
    let swelling = match swell {
        Swell::Isotropic => SwellingLaw::isotropic(IsotropicSwellingParams {
            partial_molar_volume: OMEGA,
            c_ref: 0.0,
        }),
        Swell::Tensor => SwellingLaw::tensor(TensorSwellingParams {
            expansion: Voigt::new(2.0e-6, 0.5e-6, 1.0e-6, 0.4e-6, -0.2e-6, 0.3e-6),
            c_ref: 500.0,
        }),
    }
    .unwrap();
    let stiffness = match stiff {
        Stiff::Constant => StiffnessLaw::isotropic(Isotropic::new(E, NU).unwrap()),
        Stiff::LinearYoung => StiffnessLaw::linear_young(LinearYoungParams {
            young_at_zero: E,
            young_at_max: 0.5 * E,
            poisson: NU,
            c_max: C_MAX,
        })
        .unwrap(),
    };
    CoupledPointLaw::new(CoupledLawParts {
        stiffness,
        swelling,
        chemical,
        mobility,
        // An anisotropic gradient energy in every case (J·m⁵/mol², invented scale).
        gradient: GradientEnergy::tensor(Matrix3::new(
            3e-18, 1e-18, 0.0, 1e-18, 2e-18, 4e-19, 0.0, 4e-19, 1e-18,
        ))
        .unwrap(),
    })
    .unwrap()
}

fn input(c: f64) -> PointInput {
    PointInput {
        strain: Voigt::new(1.2e-3, -4.0e-4, 7.0e-4, 3.0e-4, -2.0e-4, 5.0e-4),
        c,
        grad_mu: Vector3::new(2.0e5, -7.0e4, 3.0e4),
        grad_c: Vector3::new(3.0e8, -1.0e8, 2.0e8),
    }
}

/// `|fd − an|_max ≤ 1e-6 |an|_max` over a block (relative to the block's largest entry).
fn assert_block(name: &str, fd: &[f64], an: &[f64], case: &str) {
    let scale = an.iter().fold(0.0f64, |m, v| m.max(v.abs()));
    let err = fd
        .iter()
        .zip(an)
        .fold(0.0f64, |m, (a, b)| m.max((a - b).abs()));
    assert!(
        err <= 1e-6 * scale,
        "{case}: {name}: max error {err:e} vs scale {scale:e}\nfd {fd:?}\nan {an:?}"
    );
}

fn eval(law: &CoupledPointLaw, i: &PointInput) -> PointOutput {
    law.evaluate(i).unwrap()
}

/// The same law with its stiffness condensed for plane stress.
fn plane_stress(law: &CoupledPointLaw) -> CoupledPointLaw {
    let mut parts = *law.parts();
    parts.stiffness = parts.stiffness.plane_stress();
    CoupledPointLaw::new(parts).unwrap()
}

/// Every tangent block of `evaluate` against central differences of its outputs, and the
/// stress and local potential against central differences of the total free energy, for both
/// chemical laws, isotropic and tensor swelling, constant and concentration-dependent
/// stiffness, concentration-dependent and constant mobility, 3D and plane stress (DEVELOPERS.md,
/// adding a law; common practice, no source).
#[test]
fn every_tangent_block_matches_central_differences() {
    let chems = [Chem::Dilute, Chem::Lattice, Chem::DoubleWell];
    let swells = [Swell::Isotropic, Swell::Tensor];
    let stiffs = [Stiff::Constant, Stiff::LinearYoung];
    let mobs = [Mob::Matching, Mob::Constant];
    let mut n_cases = 0;
    for chem in chems {
        for swell in swells {
            for stiff in stiffs {
                for mob in mobs {
                    for c in [3.0e3, 1.4e4] {
                        let full = law(chem, swell, stiff, mob);
                        let case = format!("{chem:?}/{swell:?}/{stiff:?}/{mob:?}/c={c}");
                        check_case(&full, c, &case);
                        check_case(&plane_stress(&full), c, &format!("{case}/plane stress"));
                        n_cases += 2;
                    }
                }
            }
        }
    }
    assert_eq!(n_cases, 96);
}

/// Plane stress through the condensed stiffness equals the 3D law at the out-of-plane strain
/// that makes σ_zz = 0: same in-plane stress, potential and energy; the concentration
/// tangents equal the 3D ones after eliminating ε_zz (static condensation, common practice,
/// no source).
#[test]
fn plane_stress_equals_3d_with_free_out_of_plane_strain() {
    for chem in [Chem::Dilute, Chem::Lattice] {
        for swell in [Swell::Isotropic, Swell::Tensor] {
            for stiff in [Stiff::Constant, Stiff::LinearYoung] {
                let full = law(chem, swell, stiff, Mob::Matching);
                let plane = plane_stress(&full);
                let case = format!("{chem:?}/{swell:?}/{stiff:?}");
                let c = 9.0e3;
                let mut i = input(c);
                i.strain[2] = 0.0;
                let p = eval(&plane, &i);
                assert_eq!(p.stress[2], 0.0, "{case}");
                // σ_zz is affine in ε_zz with slope C_zz: one Newton step solves σ_zz = 0.
                let trial = eval(&full, &i);
                i.strain[2] -= trial.stress[2] / trial.dstress_dstrain[(2, 2)];
                let f = eval(&full, &i);
                let scale = f.stress.amax();
                assert!(f.stress[2].abs() < 1e-9 * scale, "{case}");
                assert!((f.stress - p.stress).amax() < 1e-9 * scale, "{case}");
                assert!(
                    (f.mu_local - p.mu_local).abs() < 1e-9 * f.mu_local.abs(),
                    "{case}"
                );
                assert!((f.elastic_energy - p.elastic_energy).abs() < 1e-9 * f.elastic_energy);
                let czz = f.dstress_dstrain[(2, 2)];
                let dmu_dc = f.dmu_dc - f.dmu_dstrain[2] * f.dstress_dc[2] / czz;
                assert!((dmu_dc - p.dmu_dc).abs() < 1e-9 * p.dmu_dc.abs(), "{case}");
                for k in [0, 1, 3, 4, 5] {
                    let ds = f.dstress_dc[k] - f.dstress_dstrain[(k, 2)] * f.dstress_dc[2] / czz;
                    assert!(
                        (ds - p.dstress_dc[k]).abs() < 1e-9 * p.dstress_dc.amax(),
                        "{case}"
                    );
                }
            }
        }
    }
}

fn check_case(law: &CoupledPointLaw, c: f64, case: &str) {
    let base = input(c);
    let out = eval(law, &base);
    let psi = |o: &PointOutput| o.elastic_energy + o.chemical_energy + o.gradient_energy;

    // Concentration derivatives.
    let hc = 1e-4 * c;
    let up = eval(law, &PointInput { c: c + hc, ..base });
    let dn = eval(law, &PointInput { c: c - hc, ..base });
    let d = |f: fn(&PointOutput) -> f64| (f(&up) - f(&dn)) / (2.0 * hc);
    assert_block(
        "mu_local = dpsi/dc",
        &[(psi(&up) - psi(&dn)) / (2.0 * hc)],
        &[out.mu_local],
        case,
    );
    assert_block("dmu/dc", &[d(|o| o.mu_local)], &[out.dmu_dc], case);
    let fd_ds_dc = (up.stress - dn.stress) / (2.0 * hc);
    assert_block(
        "dstress/dc",
        fd_ds_dc.as_slice(),
        out.dstress_dc.as_slice(),
        case,
    );
    let fd_dj_dc = (up.flux - dn.flux) / (2.0 * hc);
    assert_block(
        "dflux/dc",
        fd_dj_dc.as_slice(),
        out.dflux_dc.as_slice(),
        case,
    );

    // Strain derivatives, column by column.
    let he = 1e-7;
    let mut fd_ds_de = [0.0; 36];
    let mut fd_dmu_de = [0.0; 6];
    let mut fd_psi_de = [0.0; 6];
    for k in 0..6 {
        let mut p = base;
        p.strain[k] += he;
        let mut q = base;
        q.strain[k] -= he;
        let (op, oq) = (eval(law, &p), eval(law, &q));
        let col = (op.stress - oq.stress) / (2.0 * he);
        fd_ds_de[6 * k..6 * k + 6].copy_from_slice(col.as_slice());
        fd_dmu_de[k] = (op.mu_local - oq.mu_local) / (2.0 * he);
        fd_psi_de[k] = (psi(&op) - psi(&oq)) / (2.0 * he);
        // The flux does not depend on strain.
        assert_eq!(op.flux, out.flux, "{case}: flux depends on strain");
    }
    assert_block(
        "stress = dpsi/deps",
        &fd_psi_de,
        out.stress.as_slice(),
        case,
    );
    assert_block(
        "dstress/deps",
        &fd_ds_de,
        out.dstress_dstrain.as_slice(),
        case,
    );
    assert_block("dmu/deps", &fd_dmu_de, out.dmu_dstrain.as_slice(), case);

    // Potential-gradient derivatives (column-major, like nalgebra's storage).
    let hg = 1.0;
    let mut fd_dj_dg = [0.0; 9];
    for k in 0..3 {
        let mut p = base;
        p.grad_mu[k] += hg;
        let mut q = base;
        q.grad_mu[k] -= hg;
        let col = (eval(law, &p).flux - eval(law, &q).flux) / (2.0 * hg);
        fd_dj_dg[3 * k..3 * k + 3].copy_from_slice(col.as_slice());
        // Stress and potential do not depend on grad μ.
        assert_eq!(eval(law, &p).stress, out.stress, "{case}");
        assert_eq!(eval(law, &p).mu_local, out.mu_local, "{case}");
    }
    assert_block(
        "dflux/dgrad_mu",
        &fd_dj_dg,
        out.dflux_dgrad_mu.as_slice(),
        case,
    );
    assert_eq!(out.dflux_dgrad_mu, -out.mobility, "{case}");

    // Concentration-gradient derivatives: κ grad c = dψ/d(grad c), κ = d(κ grad c)/d(grad c).
    let hgc = 1e2;
    let mut fd_dk_dg = [0.0; 9];
    let mut fd_psi_dg = [0.0; 3];
    for k in 0..3 {
        let mut p = base;
        p.grad_c[k] += hgc;
        let mut q = base;
        q.grad_c[k] -= hgc;
        let (op, oq) = (eval(law, &p), eval(law, &q));
        let col = (op.kappa_grad_c - oq.kappa_grad_c) / (2.0 * hgc);
        fd_dk_dg[3 * k..3 * k + 3].copy_from_slice(col.as_slice());
        // The other energies do not depend on grad c (asserted), so difference the gradient
        // energy alone: the total is 10⁷ times larger and would drown the difference.
        fd_psi_dg[k] = (op.gradient_energy - oq.gradient_energy) / (2.0 * hgc);
        assert_eq!(
            (op.elastic_energy, op.chemical_energy),
            (out.elastic_energy, out.chemical_energy),
            "{case}"
        );
        assert_eq!(op.mu_local, out.mu_local, "{case}");
        assert_eq!(op.stress, out.stress, "{case}");
    }
    assert_block(
        "kappa grad c = dpsi/dgrad_c",
        &fd_psi_dg,
        out.kappa_grad_c.as_slice(),
        case,
    );
    assert_block("kappa", &fd_dk_dg, out.kappa.as_slice(), case);
}

/// Strain that produces the stress `stress` at concentration `c` for this law, built from the
/// law's own outputs: `ε = C⁻¹ σ + ε_c(c)`, with `ε_c(c)` read as the strain at which σ = 0.
fn strain_for_stress(law: &CoupledPointLaw, stress: &Voigt, c: f64) -> Voigt {
    let zero = eval(
        law,
        &PointInput {
            strain: Voigt::zeros(),
            c,
            grad_mu: Vector3::zeros(),
            grad_c: Default::default(),
        },
    );
    let compliance = zero.dstress_dstrain.try_inverse().unwrap();
    // σ(0) = −C ε_c, so ε_c = −C⁻¹ σ(0).
    compliance * (stress - zero.stress)
}

/// With M = D c/RT and the dilute μ (and with the lattice-gas mobility and ideal lattice gas),
/// `−M grad μ = −D grad c` when the stress is uniform (docs/theory.md conventions). The
/// concentration varies linearly in space, the strain is chosen point by point so that the
/// stress is the same everywhere, and grad μ is the central difference of the law's own μ_local.
#[test]
fn flux_is_fick_under_uniform_stress() {
    let grad_c = Vector3::new(4.0e6, -1.5e6, 2.5e6); // mol/m⁴
    let stress = Voigt::new(8.0e7, -3.0e7, 2.0e7, 1.0e7, 0.0, -5.0e6); // Pa
    let ideal_lattice = {
        let l = law(Chem::Lattice, Swell::Tensor, Stiff::Constant, Mob::Matching);
        let mut parts = *l.parts();
        parts.chemical = ChemicalLaw::lattice_gas(LatticeGasParams {
            mu0: 1.0e3,
            temperature: T,
            c_max: C_MAX,
            interaction: 0.0,
        })
        .unwrap();
        CoupledPointLaw::new(parts).unwrap()
    };
    let laws = [
        law(
            Chem::Dilute,
            Swell::Isotropic,
            Stiff::Constant,
            Mob::Matching,
        ),
        law(Chem::Dilute, Swell::Tensor, Stiff::Constant, Mob::Matching),
        ideal_lattice,
    ];
    let c0 = 8.0e3;
    let h = 1e-6; // m, so that h·grad c is 5e-4 of c and the O(h²) error stays below 1e-7
    for law in laws {
        let mu_at = |x: Vector3<f64>| {
            let c = c0 + grad_c.dot(&x);
            let strain = strain_for_stress(&law, &stress, c);
            let o = eval(
                &law,
                &PointInput {
                    strain,
                    c,
                    grad_mu: Vector3::zeros(),
                    grad_c: Default::default(),
                },
            );
            assert!((o.stress - stress).amax() < 1e-6 * stress.amax());
            o.mu_local
        };
        let mut grad_mu = Vector3::zeros();
        for k in 0..3 {
            let e = Vector3::ith(k, h);
            grad_mu[k] = (mu_at(e) - mu_at(-e)) / (2.0 * h);
        }
        let strain = strain_for_stress(&law, &stress, c0);
        let j = eval(
            &law,
            &PointInput {
                strain,
                c: c0,
                grad_mu,
                grad_c: Default::default(),
            },
        )
        .flux;
        let fick = -(anisotropic_d().matrix() * grad_c);
        assert!(
            (j - fick).amax() < 1e-6 * fick.amax(),
            "J = {j:?}, Fick {fick:?}"
        );
    }
}

/// Uniform μ under a hydrostatic stress: dilute `c = c0 exp(Ω σ_h/RT)`, lattice gas
/// `θ/(1−θ) = θ0/(1−θ0) exp(Ω σ_h/RT)` (Sofronis & McMeeking, J. Mech. Phys. Solids 37 (1989)
/// 317; Larché & Cahn, Acta Metall. 33 (1985) 331; both from memory). Tension draws solute in.
#[test]
fn equilibrium_concentration_under_hydrostatic_stress() {
    let rt = GAS_CONSTANT * T;
    let c0 = 5.0e3;
    for sigma_h in [2.0e8, -1.5e8] {
        let stress = Voigt::new(sigma_h, sigma_h, sigma_h, 0.0, 0.0, 0.0);
        let factor = (OMEGA * sigma_h / rt).exp();
        let dilute = law(
            Chem::Dilute,
            Swell::Isotropic,
            Stiff::Constant,
            Mob::Matching,
        );
        let lattice = {
            let l = law(
                Chem::Lattice,
                Swell::Isotropic,
                Stiff::Constant,
                Mob::Matching,
            );
            let mut parts = *l.parts();
            parts.chemical = ChemicalLaw::lattice_gas(LatticeGasParams {
                mu0: 0.0,
                temperature: T,
                c_max: C_MAX,
                interaction: 0.0,
            })
            .unwrap();
            CoupledPointLaw::new(parts).unwrap()
        };
        let odds0 = c0 / (C_MAX - c0);
        let c_lattice = C_MAX * odds0 * factor / (1.0 + odds0 * factor);
        for (law, c) in [(dilute, c0 * factor), (lattice, c_lattice)] {
            let free = eval(
                &law,
                &PointInput {
                    strain: strain_for_stress(&law, &Voigt::zeros(), c0),
                    c: c0,
                    grad_mu: Vector3::zeros(),
                    grad_c: Default::default(),
                },
            );
            let stressed = eval(
                &law,
                &PointInput {
                    strain: strain_for_stress(&law, &stress, c),
                    c,
                    grad_mu: Vector3::zeros(),
                    grad_c: Default::default(),
                },
            );
            assert!((hydrostatic(&stressed.stress) - sigma_h).abs() < 1e-6 * sigma_h.abs());
            assert!((stressed.mu_mech + OMEGA * sigma_h).abs() < 1e-9 * OMEGA * sigma_h.abs());
            assert!((stressed.mu_local - free.mu_local).abs() < 1e-9 * rt);
            assert_eq!(c > c0, sigma_h > 0.0);
        }
    }
}

/// Out-of-range states are recoverable typed errors, bad combinations are refused at
/// construction.
#[test]
fn errors_are_typed() {
    let dilute = law(
        Chem::Dilute,
        Swell::Isotropic,
        Stiff::Constant,
        Mob::Matching,
    );
    match dilute.evaluate(&input(-1.0)) {
        Err(RangeError::OutOfRange {
            law: RangeLaw::IdealDilute,
            ..
        }) => {}
        other => panic!("expected OutOfRange, got {other:?}"),
    }
    let lattice = law(
        Chem::Lattice,
        Swell::Tensor,
        Stiff::LinearYoung,
        Mob::Matching,
    );
    match lattice.evaluate(&input(C_MAX)) {
        Err(RangeError::OutOfRange {
            law: RangeLaw::LatticeGas,
            upper,
            ..
        }) => {
            assert_eq!(upper, C_MAX)
        }
        other => panic!("expected OutOfRange, got {other:?}"),
    }
    let mut bad = input(1.0e3);
    bad.strain[4] = f64::NAN;
    assert!(matches!(
        dilute.evaluate(&bad),
        Err(RangeError::NonFinite { .. })
    ));
    let mut bad = input(1.0e3);
    bad.grad_mu[0] = f64::INFINITY;
    assert!(matches!(
        dilute.evaluate(&bad),
        Err(RangeError::NonFinite { .. })
    ));
    assert!(matches!(
        dilute.evaluate(&input(f64::NAN)),
        Err(RangeError::NonFinite { .. })
    ));

    let mut parts = *dilute.parts();
    parts.mobility = MobilityLaw::dilute(DiluteMobilityParams {
        diffusivity: anisotropic_d(),
        temperature: T + 10.0,
    })
    .unwrap();
    assert!(matches!(
        CoupledPointLaw::new(parts),
        Err(ParameterError::TemperatureMismatch { .. })
    ));
}

/// The reduced evaluation of a body without displacement unknowns gives `evaluate`'s values at
/// zero strain, bit for bit, with and without swelling (with swelling it is `evaluate`), and
/// the same range errors, the stiffness law's included.
#[test]
fn unstrained_evaluation_is_the_full_one_at_zero_strain() {
    let no_swelling = SwellingLaw::isotropic(IsotropicSwellingParams {
        partial_molar_volume: 0.0,
        c_ref: 0.0,
    })
    .unwrap();
    let grad_mu = Vector3::new(120.0, -35.0, 8.0);
    let grad_c = Vector3::new(3.0e8, 1.0e8, -2.0e8);
    for chem in [Chem::Dilute, Chem::Lattice, Chem::DoubleWell] {
        for stiff in [Stiff::Constant, Stiff::LinearYoung] {
            for mob in [Mob::Matching, Mob::Constant] {
                let swelling_law = law(chem, Swell::Tensor, stiff, mob);
                let mut parts = *swelling_law.parts();
                parts.swelling = no_swelling;
                parts.gradient = GradientEnergy::isotropic(2.0e-12).unwrap();
                let plain = CoupledPointLaw::new(parts).unwrap();
                for l in [&swelling_law, &plain] {
                    for c in [800.0, 6.0e3, 1.5e4] {
                        let full = l
                            .evaluate(&PointInput {
                                strain: Voigt::zeros(),
                                c,
                                grad_mu,
                                grad_c,
                            })
                            .unwrap();
                        let reduced = l.evaluate_unstrained(c, grad_mu, grad_c).unwrap();
                        assert_eq!(reduced, UnstrainedOutput::from(&full), "{chem:?} {c}");
                    }
                }
                // Out of range: the same error (the linear stiffness turns negative beyond
                // c = 2 c_max; the dilute laws refuse c < 0).
                for c in [-5.0, 3.0 * C_MAX, f64::NAN] {
                    let full = plain.evaluate(&PointInput {
                        strain: Voigt::zeros(),
                        c,
                        grad_mu,
                        grad_c,
                    });
                    let reduced = plain.evaluate_unstrained(c, grad_mu, grad_c);
                    assert_eq!(reduced.is_err(), full.is_err(), "{chem:?} {stiff:?} {c}");
                    if let (Err(a), Err(b)) = (reduced, full) {
                        assert_eq!(a.to_string(), b.to_string());
                    }
                }
            }
        }
    }
}
