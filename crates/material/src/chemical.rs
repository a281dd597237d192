//! Chemical free-energy laws `ψ_chem(c)` per unit volume, with the chemical potential
//! `μ_chem = dψ_chem/dc` and its derivative `dμ_chem/dc`.
//!
//! Units: concentration `c` in mol/m³, `ψ_chem` in J/m³, `μ_chem` in J/mol, `dμ_chem/dc` in
//! J·m³/mol², temperature in K.
//!
//! * Ideal dilute solution: `μ_chem = μ0 + RT ln(c/c_ref)`, from
//!   `ψ = μ0 c + RT c (ln(c/c_ref) − 1)`, defined for `c > 0`.
//! * Lattice gas with regular-solution interaction, `θ = c/c_max`:
//!   `μ_chem = μ0 + RT ln(θ/(1−θ)) + Ω_int (1 − 2θ)`, from
//!   `ψ = μ0 c + RT c_max (θ ln θ + (1−θ) ln(1−θ)) + Ω_int c_max θ(1−θ)`, defined for
//!   `0 < c < c_max`. With `Ω_int > 2RT` the energy is non-convex between two spinodal
//!   concentrations and the solution separates into two phases (with a gradient energy, see
//!   [`crate::gradient`]).
//! * Double well `ψ = W (c − c_a)² (c_b − c)²` with minima at the two phase concentrations
//!   `c_a < c_b`: `μ_chem = 2W (c − c_a)(c_b − c)(c_a + c_b − 2c)`, defined for every finite
//!   `c`. It has no temperature; its potentials are on the scale `W (c_b − c_a)³`.
//!
//! Both forms follow the conventions of docs/theory.md (dilute: Sofronis & McMeeking, J. Mech.
//! Phys. Solids 37 (1989) 317; lattice gas: Larché & Cahn, Acta Metall. 33 (1985) 331; both
//! from memory). The regular-solution term is the textbook one (Porter & Easterling, Phase
//! Transformations in Metals and Alloys, ch. 1; from memory). Outside its range a law returns a
//! [`RangeError`], never NaN.

use crate::error::{finite, positive, ParameterError, RangeError, RangeLaw};

/// Molar gas constant R in J/(mol·K): CODATA 2018 recommended value, exact since the 2019 SI
/// redefinition as the product of the exact Avogadro and Boltzmann constants (Tiesinga, Mohr,
/// Newell & Taylor, "CODATA recommended values of the fundamental physical constants: 2018",
/// Rev. Mod. Phys. 93 (2021) 025010; from memory).
pub const GAS_CONSTANT: f64 = 8.314462618;

/// Parameters of the double well (plain data; check with [`DoubleWell::new`]).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct DoubleWellParams {
    /// Barrier height coefficient `W` in J·m⁹/mol⁴ (> 0): the barrier between the wells is
    /// `W (c_b − c_a)⁴ / 16` in J/m³.
    pub height: f64,
    /// Concentration of the first well `c_a` in mol/m³.
    pub c_a: f64,
    /// Concentration of the second well `c_b > c_a` in mol/m³.
    pub c_b: f64,
}

/// Double-well free energy `ψ = W (c − c_a)² (c_b − c)²`. Built only through [`Self::new`].
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct DoubleWell {
    params: DoubleWellParams,
}

impl DoubleWell {
    /// Checked constructor: `W > 0`, finite well concentrations with `c_a < c_b`.
    pub fn new(params: DoubleWellParams) -> Result<Self, ParameterError> {
        positive("well height", params.height)?;
        finite("c_a", params.c_a)?;
        finite("c_b", params.c_b)?;
        positive("c_b - c_a", params.c_b - params.c_a)?;
        Ok(DoubleWell { params })
    }

    /// The parameters.
    pub fn params(&self) -> &DoubleWellParams {
        &self.params
    }

    /// `ψ`, `μ_chem = dψ/dc` and `dμ_chem/dc` at `c` (any finite `c`).
    pub fn evaluate(&self, c: f64) -> Result<ChemicalState, RangeError> {
        let p = &self.params;
        let (a, b) = (c - p.c_a, p.c_b - c);
        Ok(ChemicalState {
            free_energy: p.height * a * a * b * b,
            mu: 2.0 * p.height * a * b * (b - a),
            dmu_dc: 2.0 * p.height * (a * a - 4.0 * a * b + b * b),
        })
    }
}

/// Value of a chemical law at one concentration.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct ChemicalState {
    /// Free energy density `ψ_chem` in J/m³.
    pub free_energy: f64,
    /// Chemical potential `μ_chem = dψ_chem/dc` in J/mol.
    pub mu: f64,
    /// `dμ_chem/dc` in J·m³/mol².
    pub dmu_dc: f64,
}

/// Parameters of the ideal dilute solution (plain data; check with [`IdealDilute::new`]).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct IdealDiluteParams {
    /// Reference potential `μ0` in J/mol (any finite value).
    pub mu0: f64,
    /// Absolute temperature T in K (> 0).
    pub temperature: f64,
    /// Reference concentration `c_ref` in mol/m³ (> 0), where `μ_chem = μ0`.
    pub c_ref: f64,
}

/// Ideal dilute solution, `μ_chem = μ0 + RT ln(c/c_ref)`. Built only through [`Self::new`].
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct IdealDilute {
    params: IdealDiluteParams,
}

impl IdealDilute {
    /// Checked constructor.
    pub fn new(params: IdealDiluteParams) -> Result<Self, ParameterError> {
        finite("mu0", params.mu0)?;
        positive("temperature", params.temperature)?;
        positive("c_ref", params.c_ref)?;
        Ok(IdealDilute { params })
    }

    /// The checked parameters.
    pub fn params(&self) -> &IdealDiluteParams {
        &self.params
    }

    /// ψ, μ and dμ/dc at `c` (mol/m³); `c` must lie in `(0, ∞)`.
    pub fn evaluate(&self, c: f64) -> Result<ChemicalState, RangeError> {
        if !(c > 0.0 && c.is_finite()) {
            return Err(RangeError::OutOfRange {
                law: RangeLaw::IdealDilute,
                c,
                lower: 0.0,
                upper: f64::INFINITY,
            });
        }
        let p = &self.params;
        let rt = GAS_CONSTANT * p.temperature;
        let log = (c / p.c_ref).ln();
        Ok(ChemicalState {
            free_energy: p.mu0 * c + rt * c * (log - 1.0),
            mu: p.mu0 + rt * log,
            dmu_dc: rt / c,
        })
    }
}

/// Parameters of the lattice gas (plain data; check with [`LatticeGas::new`]).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct LatticeGasParams {
    /// Reference potential `μ0` in J/mol (any finite value); `μ_chem = μ0` at `θ = 1/2`.
    pub mu0: f64,
    /// Absolute temperature T in K (> 0).
    pub temperature: f64,
    /// Site concentration `c_max` in mol/m³ (> 0).
    pub c_max: f64,
    /// Regular-solution interaction `Ω_int` in J/mol (any finite value; 0 for the ideal lattice
    /// gas; above `2RT` the law is non-convex and phase-separates).
    pub interaction: f64,
}

/// Lattice gas with regular-solution interaction. Built only through [`Self::new`].
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct LatticeGas {
    params: LatticeGasParams,
}

impl LatticeGas {
    /// Checked constructor.
    pub fn new(params: LatticeGasParams) -> Result<Self, ParameterError> {
        finite("mu0", params.mu0)?;
        positive("temperature", params.temperature)?;
        positive("c_max", params.c_max)?;
        finite("interaction", params.interaction)?;
        Ok(LatticeGas { params })
    }

    /// The checked parameters.
    pub fn params(&self) -> &LatticeGasParams {
        &self.params
    }

    /// ψ, μ and dμ/dc at `c` (mol/m³); `c` must lie in `(0, c_max)`.
    pub fn evaluate(&self, c: f64) -> Result<ChemicalState, RangeError> {
        let p = &self.params;
        if !(c > 0.0 && c < p.c_max) {
            return Err(RangeError::OutOfRange {
                law: RangeLaw::LatticeGas,
                c,
                lower: 0.0,
                upper: p.c_max,
            });
        }
        let rt = GAS_CONSTANT * p.temperature;
        let theta = c / p.c_max;
        // ln(1 − θ) through ln_1p keeps accuracy for small θ.
        let (ln_t, ln_1mt) = (theta.ln(), (-theta).ln_1p());
        let mixing = theta * ln_t + (1.0 - theta) * ln_1mt;
        Ok(ChemicalState {
            free_energy: p.mu0 * c
                + rt * p.c_max * mixing
                + p.interaction * p.c_max * theta * (1.0 - theta),
            mu: p.mu0 + rt * (ln_t - ln_1mt) + p.interaction * (1.0 - 2.0 * theta),
            dmu_dc: (rt / (theta * (1.0 - theta)) - 2.0 * p.interaction) / p.c_max,
        })
    }
}

/// A chemical free-energy law. Each variant holds a checked law.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum ChemicalLaw {
    /// Ideal dilute solution.
    IdealDilute(IdealDilute),
    /// Lattice gas with optional regular-solution interaction.
    LatticeGas(LatticeGas),
    /// Double well.
    DoubleWell(DoubleWell),
}

impl ChemicalLaw {
    /// Checked ideal dilute solution.
    pub fn ideal_dilute(params: IdealDiluteParams) -> Result<Self, ParameterError> {
        IdealDilute::new(params).map(ChemicalLaw::IdealDilute)
    }

    /// Checked lattice gas.
    pub fn lattice_gas(params: LatticeGasParams) -> Result<Self, ParameterError> {
        LatticeGas::new(params).map(ChemicalLaw::LatticeGas)
    }

    /// Checked double well.
    pub fn double_well(params: DoubleWellParams) -> Result<Self, ParameterError> {
        DoubleWell::new(params).map(ChemicalLaw::DoubleWell)
    }

    /// Temperature in K, `None` for the double well (which has none).
    pub fn temperature(&self) -> Option<f64> {
        match self {
            ChemicalLaw::IdealDilute(l) => Some(l.params.temperature),
            ChemicalLaw::LatticeGas(l) => Some(l.params.temperature),
            ChemicalLaw::DoubleWell(_) => None,
        }
    }

    /// Whether `ψ_chem` is convex over its whole range: the ideal dilute law always, the lattice
    /// gas when `Ω_int ≤ 2RT` (its smallest `dμ/dc · c_max` is `4RT − 2Ω_int`, at θ = ½), the
    /// double well never.
    pub fn is_convex(&self) -> bool {
        match self {
            ChemicalLaw::IdealDilute(_) => true,
            ChemicalLaw::LatticeGas(l) => {
                l.params.interaction <= 2.0 * GAS_CONSTANT * l.params.temperature
            }
            ChemicalLaw::DoubleWell(_) => false,
        }
    }

    /// The scale of chemical-potential differences in J/mol: `RT` for the laws with a
    /// temperature, `W (c_b − c_a)³` for the double well (the order of its potential between
    /// the wells).
    pub fn potential_scale(&self) -> f64 {
        match self {
            ChemicalLaw::IdealDilute(l) => GAS_CONSTANT * l.params.temperature,
            ChemicalLaw::LatticeGas(l) => GAS_CONSTANT * l.params.temperature,
            ChemicalLaw::DoubleWell(l) => {
                let p = &l.params;
                p.height * (p.c_b - p.c_a).powi(3)
            }
        }
    }

    /// ψ_chem, μ_chem and dμ_chem/dc at `c` (mol/m³), or a recoverable [`RangeError`].
    #[inline(always)]
    pub fn evaluate(&self, c: f64) -> Result<ChemicalState, RangeError> {
        match self {
            ChemicalLaw::IdealDilute(l) => l.evaluate(c),
            ChemicalLaw::LatticeGas(l) => l.evaluate(c),
            ChemicalLaw::DoubleWell(l) => l.evaluate(c),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::{
        ChemicalLaw, DoubleWellParams, IdealDiluteParams, LatticeGasParams, RangeError, RangeLaw,
        GAS_CONSTANT,
    };

    fn dilute() -> ChemicalLaw {
        ChemicalLaw::ideal_dilute(IdealDiluteParams {
            mu0: -1.5e4,
            temperature: 300.0,
            c_ref: 1.0e3,
        })
        .unwrap()
    }

    fn lattice(interaction: f64) -> ChemicalLaw {
        ChemicalLaw::lattice_gas(LatticeGasParams {
            mu0: 2.0e3,
            temperature: 300.0,
            c_max: 2.37e4,
            interaction,
        })
        .unwrap()
    }

    /// Central difference of `f` at `x` with step `h`.
    fn central(f: impl Fn(f64) -> f64, x: f64, h: f64) -> f64 {
        (f(x + h) - f(x - h)) / (2.0 * h)
    }

    /// ψ' = μ and μ' = dμ/dc by central finite differences (common practice, no source).
    #[test]
    fn potential_is_derivative_of_free_energy() {
        let cases = [
            (dilute(), vec![1.0_f64, 50.0, 1.0e3, 2.0e4]),
            (lattice(0.0), vec![100.0, 5.0e3, 1.2e4, 2.3e4]),
            (lattice(8.0e3), vec![100.0, 5.0e3, 1.2e4, 2.3e4]),
        ];
        for (law, cs) in cases {
            for c in cs {
                let h = 1e-5 * c.min(2.37e4 - c).max(1.0);
                let s = law.evaluate(c).unwrap();
                let psi = |x: f64| law.evaluate(x).unwrap().free_energy;
                let mu = |x: f64| law.evaluate(x).unwrap().mu;
                let d_psi = central(psi, c, h);
                let d_mu = central(mu, c, h);
                // ψ is of order μ c: compare against the scale of its terms, not μ alone.
                let scale = s.mu.abs() + GAS_CONSTANT * 300.0;
                assert!(
                    (d_psi - s.mu).abs() < 1e-6 * scale,
                    "c={c}: {d_psi} vs {}",
                    s.mu
                );
                assert!(
                    (d_mu - s.dmu_dc).abs() < 1e-6 * s.dmu_dc.abs(),
                    "c={c}: {d_mu} vs {}",
                    s.dmu_dc
                );
            }
        }
    }

    fn double_well() -> ChemicalLaw {
        ChemicalLaw::double_well(DoubleWellParams {
            height: 5.0,
            c_a: 0.3,
            c_b: 0.7,
        })
        .unwrap()
    }

    /// Double well: μ = dψ/dc and dμ/dc by central differences, inside, between and outside
    /// the wells; zero potential at both minima and at the midpoint (the maximum) by symmetry;
    /// spinodal points where dμ/dc = 0 at c = (c_a + c_b)/2 ± (c_b − c_a)/(2√3) (roots of
    /// u² − 4uv + v² = 0; algebra, no source).
    #[test]
    fn double_well_derivatives_and_special_points() {
        let law = double_well();
        for c in [-0.4, 0.1, 0.3, 0.42, 0.5, 0.61, 0.7, 1.3] {
            let s = law.evaluate(c).unwrap();
            let h = 1e-5;
            let d_psi = central(|x| law.evaluate(x).unwrap().free_energy, c, h);
            let d_mu = central(|x| law.evaluate(x).unwrap().mu, c, h);
            assert!((d_psi - s.mu).abs() < 1e-9 * (1.0 + s.mu.abs()), "c={c}");
            assert!(
                (d_mu - s.dmu_dc).abs() < 1e-8 * (1.0 + s.dmu_dc.abs()),
                "c={c}"
            );
        }
        for c in [0.3, 0.5, 0.7] {
            assert!(law.evaluate(c).unwrap().mu.abs() < 1e-15);
        }
        assert_eq!(law.evaluate(0.3).unwrap().free_energy, 0.0);
        // Barrier W (c_b − c_a)⁴ / 16 at the midpoint.
        let barrier = law.evaluate(0.5).unwrap().free_energy;
        assert!((barrier - 5.0 * 0.4f64.powi(4) / 16.0).abs() < 1e-15);
        let spinodal = 0.2 / 3f64.sqrt();
        for c in [0.5 - spinodal, 0.5 + spinodal] {
            assert!(law.evaluate(c).unwrap().dmu_dc.abs() < 1e-13);
        }
        assert_eq!(law.temperature(), None);
        assert!((law.potential_scale() - 5.0 * 0.4f64.powi(3)).abs() < 1e-15);
    }

    #[test]
    fn double_well_rejects_bad_parameters() {
        let bad = |height, c_a, c_b| {
            ChemicalLaw::double_well(DoubleWellParams { height, c_a, c_b }).is_err()
        };
        assert!(bad(0.0, 0.3, 0.7));
        assert!(bad(5.0, 0.7, 0.3));
        assert!(bad(5.0, 0.5, 0.5));
        assert!(bad(5.0, f64::NAN, 0.7));
    }

    /// Dilute: μ = μ0 at c_ref, and a tenfold rise in c adds RT ln 10 (definition).
    #[test]
    fn dilute_reference_point_and_decade() {
        let law = dilute();
        let rt = GAS_CONSTANT * 300.0;
        assert!((law.evaluate(1.0e3).unwrap().mu + 1.5e4).abs() < 1e-9);
        let d = law.evaluate(1.0e4).unwrap().mu - law.evaluate(1.0e3).unwrap().mu;
        assert!((d - rt * 10f64.ln()).abs() < 1e-9 * rt);
    }

    /// Lattice gas: μ = μ0 at θ = 1/2 by symmetry; for θ ≪ 1 it tends to the dilute law with
    /// c_ref = c_max (Larché & Cahn 1985 dilute limit, from memory); the regular solution has
    /// its critical point at Ω_int = 2RT, θ = 1/2, where dμ/dc = 0 (Porter & Easterling, ch. 1,
    /// from memory).
    #[test]
    fn lattice_gas_limits_and_critical_point() {
        let rt = GAS_CONSTANT * 300.0;
        let ideal = lattice(0.0);
        assert!((ideal.evaluate(2.37e4 / 2.0).unwrap().mu - 2.0e3).abs() < 1e-9);
        let c: f64 = 1e-6 * 2.37e4;
        let dilute_limit = 2.0e3 + rt * (c / 2.37e4).ln();
        assert!((ideal.evaluate(c).unwrap().mu - dilute_limit).abs() < 2e-6 * rt);
        let critical = lattice(2.0 * rt);
        let s = critical.evaluate(2.37e4 / 2.0).unwrap();
        assert!(s.dmu_dc.abs() < 1e-12 * rt / 2.37e4);
        // Slightly below the critical interaction the law is still convex, above it is not.
        assert!(lattice(1.9 * rt).evaluate(1.185e4).unwrap().dmu_dc > 0.0);
        assert!(lattice(2.1 * rt).evaluate(1.185e4).unwrap().dmu_dc < 0.0);
    }

    /// Evaluating outside the admissible range is a recoverable error with the bounds, never NaN.
    #[test]
    fn out_of_range_is_a_typed_error() {
        for c in [0.0, -1.0, f64::NAN, f64::INFINITY] {
            match dilute().evaluate(c) {
                Err(RangeError::OutOfRange { law, lower, .. }) => {
                    assert_eq!(law, RangeLaw::IdealDilute);
                    assert_eq!(lower, 0.0);
                }
                other => panic!("c = {c}: expected OutOfRange, got {other:?}"),
            }
        }
        for c in [0.0, -3.0, 2.37e4, 3.0e4, f64::NAN] {
            match lattice(1.0e3).evaluate(c) {
                Err(RangeError::OutOfRange { law, upper, .. }) => {
                    assert_eq!(law, RangeLaw::LatticeGas);
                    assert_eq!(upper, 2.37e4);
                }
                other => panic!("c = {c}: expected OutOfRange, got {other:?}"),
            }
        }
        // Just inside the bounds the values are finite.
        let s = lattice(1.0e3).evaluate(2.37e4 * (1.0 - 1e-12)).unwrap();
        assert!(s.mu.is_finite() && s.dmu_dc.is_finite() && s.free_energy.is_finite());
    }

    #[test]
    fn bad_parameters_are_refused() {
        let ok = IdealDiluteParams {
            mu0: 0.0,
            temperature: 300.0,
            c_ref: 1.0,
        };
        assert!(ChemicalLaw::ideal_dilute(IdealDiluteParams {
            temperature: 0.0,
            ..ok
        })
        .is_err());
        assert!(ChemicalLaw::ideal_dilute(IdealDiluteParams { c_ref: -1.0, ..ok }).is_err());
        assert!(ChemicalLaw::ideal_dilute(IdealDiluteParams {
            mu0: f64::NAN,
            ..ok
        })
        .is_err());
        let lg = LatticeGasParams {
            mu0: 0.0,
            temperature: 300.0,
            c_max: 1.0,
            interaction: 0.0,
        };
        assert!(ChemicalLaw::lattice_gas(lg).is_ok());
        assert!(ChemicalLaw::lattice_gas(LatticeGasParams { c_max: 0.0, ..lg }).is_err());
        assert!(ChemicalLaw::lattice_gas(LatticeGasParams {
            interaction: f64::INFINITY,
            ..lg
        })
        .is_err());
    }
}
