//! The coupled small-strain deformation–diffusion law at one point: one pure function from
//! (strain, c, grad μ) to stress, local chemical potential, flux, every tangent block Newton
//! needs and the energies.
//!
//! Free energy per unit volume `ψ(ε, c) = ψ_chem(c) + ½(ε − ε_c(c)):C(c):(ε − ε_c(c))`
//! (docs/theory.md, coupled model), local potential `μ_local = ∂ψ/∂c =
//! μ_chem + μ_mech`, flux `J = −M(c) grad μ`. In the weak form of docs/theory.md the potential
//! equation enforces `μ = μ_local` and the mass equation uses `−J`.
//!
//! ```
//! use dilata_material::chemical::{ChemicalLaw, IdealDiluteParams};
//! use dilata_material::coupled::{CoupledLawParts, CoupledPointLaw, PointInput};
//! use dilata_material::elastic::{hydrostatic, Isotropic, Voigt};
//! use dilata_material::gradient::GradientEnergy;
//! use dilata_material::mobility::{DiluteMobilityParams, Diffusivity, MobilityLaw};
//! use dilata_material::stiffness::StiffnessLaw;
//! use dilata_material::swelling::{IsotropicSwellingParams, SwellingLaw};
//! use nalgebra::Vector3;
//!
//! let law = CoupledPointLaw::new(CoupledLawParts {
//!     stiffness: StiffnessLaw::isotropic(Isotropic::new(10e9, 0.3)?),
//!     swelling: SwellingLaw::isotropic(IsotropicSwellingParams {
//!         partial_molar_volume: 3.5e-6, // m³/mol
//!         c_ref: 0.0,
//!     })?,
//!     chemical: ChemicalLaw::ideal_dilute(IdealDiluteParams {
//!         mu0: 0.0,
//!         temperature: 298.15,
//!         c_ref: 1.0e3,
//!     })?,
//!     mobility: MobilityLaw::dilute(DiluteMobilityParams {
//!         diffusivity: Diffusivity::isotropic(7e-15)?,
//!         temperature: 298.15,
//!     })?,
//!     gradient: GradientEnergy::none(),
//! })?;
//! // Clamped (zero total strain) at c = 1000 mol/m³: the host is in compression and the
//! // compression raises the potential by −Ω σ_h > 0.
//! let out = law.evaluate(&PointInput {
//!     strain: Voigt::zeros(),
//!     c: 1.0e3,
//!     grad_mu: Vector3::zeros(),
//!     grad_c: Vector3::zeros(),
//! })?;
//! assert!(hydrostatic(&out.stress) < 0.0);
//! assert!((out.mu_mech + 3.5e-6 * hydrostatic(&out.stress)).abs() < 1e-9);
//! // A concentration the dilute law cannot take is a recoverable error, not NaN.
//! assert!(law
//!     .evaluate(&PointInput {
//!         strain: Voigt::zeros(),
//!         c: -1.0,
//!         grad_mu: Vector3::zeros(),
//!         grad_c: Vector3::zeros(),
//!     })
//!     .is_err());
//! # Ok::<(), Box<dyn std::error::Error>>(())
//! ```

use nalgebra::{Matrix3, Vector3};

use crate::chemical::ChemicalLaw;
use crate::elastic::{Stiffness, Voigt};
use crate::error::{ParameterError, RangeError, RangeLaw};
use crate::gradient::GradientEnergy;
use crate::mobility::MobilityLaw;
use crate::stiffness::StiffnessLaw;
use crate::swelling::{mechanics, SwellingLaw};

/// The four laws a coupled point law is made of (plain data; check with
/// [`CoupledPointLaw::new`]).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct CoupledLawParts {
    /// Elastic stiffness, possibly concentration dependent.
    pub stiffness: StiffnessLaw,
    /// Swelling strain.
    pub swelling: SwellingLaw,
    /// Chemical free energy.
    pub chemical: ChemicalLaw,
    /// Mobility.
    pub mobility: MobilityLaw,
    /// Gradient energy `½ grad c · κ grad c` ([`GradientEnergy::none`] without interfaces).
    pub gradient: GradientEnergy,
}

/// Coupled small-strain deformation–diffusion law. Built by [`Self::new`].
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct CoupledPointLaw {
    parts: CoupledLawParts,
}

/// State at one point.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct PointInput {
    /// Total small strain (Voigt `[xx, yy, zz, xy, yz, xz]`, engineering shears).
    pub strain: Voigt,
    /// Concentration in mol/m³.
    pub c: f64,
    /// Gradient of the chemical potential field in J/(mol·m).
    pub grad_mu: Vector3<f64>,
    /// Gradient of the concentration field in mol/m⁴ (read only with a gradient energy).
    pub grad_c: Vector3<f64>,
}

/// Everything the coupled law gives at one point.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct PointOutput {
    /// Cauchy stress σ in Pa (Voigt).
    pub stress: Voigt,
    /// Local chemical potential `μ_local = ∂ψ/∂c = μ_chem + μ_mech` in J/mol.
    pub mu_local: f64,
    /// Chemical part `μ_chem` in J/mol.
    pub mu_chem: f64,
    /// Mechanical part `μ_mech` in J/mol (`−Ω σ_h` for isotropic swelling and constant
    /// stiffness).
    pub mu_mech: f64,
    /// Flux `J = −M grad μ` in mol/(m²·s).
    pub flux: Vector3<f64>,
    /// Mobility `M` in mol²/(J·m·s).
    pub mobility: Matrix3<f64>,
    /// `dσ/dε` in Pa.
    pub dstress_dstrain: Stiffness,
    /// `dσ/dc` in Pa·m³/mol.
    pub dstress_dc: Voigt,
    /// `dμ_local/dε` in J/mol (per unit Voigt strain; equals `dσ/dc`).
    pub dmu_dstrain: Voigt,
    /// `dμ_local/dc` in J·m³/mol².
    pub dmu_dc: f64,
    /// `dJ/d(grad μ) = −M` in mol²/(J·m·s).
    pub dflux_dgrad_mu: Matrix3<f64>,
    /// `dJ/dc = −(dM/dc) grad μ` in m/s.
    pub dflux_dc: Vector3<f64>,
    /// Elastic energy `½(ε − ε_c):C:(ε − ε_c)` in J/m³.
    pub elastic_energy: f64,
    /// Chemical free energy `ψ_chem(c)` in J/m³.
    pub chemical_energy: f64,
    /// `κ grad c` in J·m/mol (the potential equation tests it with `grad w`).
    pub kappa_grad_c: Vector3<f64>,
    /// `κ`, the derivative of `κ grad c` by `grad c`.
    pub kappa: Matrix3<f64>,
    /// Gradient energy `½ grad c · κ grad c` in J/m³.
    pub gradient_energy: f64,
}

/// What [`CoupledPointLaw::evaluate_unstrained`] gives: the parts of [`PointOutput`] that a
/// body without displacement unknowns uses (same names, same values).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct UnstrainedOutput {
    pub mu_local: f64,
    pub dmu_dc: f64,
    pub flux: Vector3<f64>,
    pub dflux_dgrad_mu: Matrix3<f64>,
    pub dflux_dc: Vector3<f64>,
    pub kappa_grad_c: Vector3<f64>,
    pub kappa: Matrix3<f64>,
    pub elastic_energy: f64,
    pub chemical_energy: f64,
    pub gradient_energy: f64,
}

impl From<&PointOutput> for UnstrainedOutput {
    fn from(p: &PointOutput) -> Self {
        UnstrainedOutput {
            mu_local: p.mu_local,
            dmu_dc: p.dmu_dc,
            flux: p.flux,
            dflux_dgrad_mu: p.dflux_dgrad_mu,
            dflux_dc: p.dflux_dc,
            kappa_grad_c: p.kappa_grad_c,
            kappa: p.kappa,
            elastic_energy: p.elastic_energy,
            chemical_energy: p.chemical_energy,
            gradient_energy: p.gradient_energy,
        }
    }
}

/// The non-finite input error of [`CoupledPointLaw::evaluate`] (checked in this order:
/// concentration, strain when there is one, potential gradient, concentration gradient).
#[inline(always)]
fn check_inputs(
    c: f64,
    strain: Option<&Voigt>,
    grad_mu: &Vector3<f64>,
    grad_c: &Vector3<f64>,
) -> Result<(), RangeError> {
    let non_finite = |quantity| {
        Err(RangeError::NonFinite {
            law: RangeLaw::Input,
            quantity,
        })
    };
    if !c.is_finite() {
        return non_finite("concentration");
    }
    if strain.is_some_and(|e| !e.iter().all(|v| v.is_finite())) {
        return non_finite("strain");
    }
    if !grad_mu.iter().all(|v| v.is_finite()) {
        return non_finite("potential gradient");
    }
    if !grad_c.iter().all(|v| v.is_finite()) {
        return non_finite("concentration gradient");
    }
    Ok(())
}

/// Relative tolerance on equal temperatures (common practice, no source).
const TEMPERATURE_TOLERANCE: f64 = 1e-12;

impl CoupledPointLaw {
    /// Checked assembly of the four laws: a mobility that carries a temperature must use the
    /// chemical law's temperature, else `−M grad μ` no longer reduces to Fick's law.
    pub fn new(parts: CoupledLawParts) -> Result<Self, ParameterError> {
        if let (Some(chemical), Some(mobility)) =
            (parts.chemical.temperature(), parts.mobility.temperature())
        {
            if (chemical - mobility).abs() > TEMPERATURE_TOLERANCE * chemical {
                return Err(ParameterError::TemperatureMismatch { chemical, mobility });
            }
        }
        Ok(CoupledPointLaw { parts })
    }

    /// The four laws.
    pub fn parts(&self) -> &CoupledLawParts {
        &self.parts
    }

    /// [`Self::evaluate`] at zero strain, reduced to what the mass and potential rows and the
    /// energy integrals of a body without displacement unknowns use. Without swelling the
    /// stress vanishes there and the potential is the chemical one, so the elastic parts are
    /// not formed (a phase-field run without mechanics evaluates this at every point of every
    /// assembly); with swelling it is `evaluate` itself. The values are those of `evaluate` (a
    /// zero elastic part is added to the potential and its derivative as `evaluate` adds it).
    #[inline(always)]
    pub fn evaluate_unstrained(
        &self,
        c: f64,
        grad_mu: Vector3<f64>,
        grad_c: Vector3<f64>,
    ) -> Result<UnstrainedOutput, RangeError> {
        if self.parts.swelling.expansion().iter().any(|v| *v != 0.0) {
            return self
                .evaluate(&PointInput {
                    strain: Voigt::zeros(),
                    c,
                    grad_mu,
                    grad_c,
                })
                .map(|p| UnstrainedOutput::from(&p));
        }
        check_inputs(c, None, &grad_mu, &grad_c)?;
        let chem = self.parts.chemical.evaluate(c)?;
        let mob = self.parts.mobility.evaluate(c)?;
        // `evaluate` checks the stiffness law's range too.
        self.parts.stiffness.check(c)?;
        Ok(UnstrainedOutput {
            mu_local: chem.mu + 0.0,
            dmu_dc: chem.dmu_dc + 0.0,
            flux: -(mob.mobility * grad_mu),
            dflux_dgrad_mu: -mob.mobility,
            dflux_dc: -(mob.dmobility_dc * grad_mu),
            kappa_grad_c: self.parts.gradient.matrix() * grad_c,
            kappa: *self.parts.gradient.matrix(),
            // No strain and no swelling: `evaluate`'s elastic energy is exactly zero.
            elastic_energy: 0.0,
            chemical_energy: chem.free_energy,
            gradient_energy: self.parts.gradient.energy(&grad_c),
        })
    }

    /// Evaluate at one point. Non-finite input, or a concentration outside the range of any of
    /// the laws, gives a recoverable [`RangeError`].
    #[inline]
    pub fn evaluate(&self, input: &PointInput) -> Result<PointOutput, RangeError> {
        check_inputs(input.c, Some(&input.strain), &input.grad_mu, &input.grad_c)?;
        let c = input.c;
        let chem = self.parts.chemical.evaluate(c)?;
        let mob = self.parts.mobility.evaluate(c)?;
        let stiff = self.parts.stiffness.evaluate(c)?;
        let swell = self.parts.swelling.evaluate(c);
        let mech = mechanics(&stiff, &swell, &input.strain);
        Ok(PointOutput {
            stress: mech.stress,
            mu_local: chem.mu + mech.mu,
            mu_chem: chem.mu,
            mu_mech: mech.mu,
            flux: -(mob.mobility * input.grad_mu),
            mobility: mob.mobility,
            dstress_dstrain: mech.dstress_dstrain,
            dstress_dc: mech.dstress_dc,
            dmu_dstrain: mech.dmu_dstrain,
            dmu_dc: chem.dmu_dc + mech.dmu_dc,
            dflux_dgrad_mu: -mob.mobility,
            dflux_dc: -(mob.dmobility_dc * input.grad_mu),
            elastic_energy: mech.energy,
            chemical_energy: chem.free_energy,
            kappa_grad_c: self.parts.gradient.matrix() * input.grad_c,
            kappa: *self.parts.gradient.matrix(),
            gradient_energy: self.parts.gradient.energy(&input.grad_c),
        })
    }
}
