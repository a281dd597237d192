//! The two kinds of failure a pointwise law can report (DEVELOPERS.md, error handling).
//!
//! * [`ParameterError`]: bad data, returned by the checked constructors. A law that was built
//!   successfully has admissible parameters.
//! * [`RangeError`]: recoverable numerical trouble, returned by `evaluate` when the state lies
//!   outside the range where the law is defined (for instance `c ≤ 0` for the ideal dilute
//!   solution). A time stepper catches it, cuts the step and retries. Laws never return NaN and
//!   never panic on such input.

use crate::elastic::ElasticError;

/// Invalid parameters given to a checked constructor.
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
pub enum ParameterError {
    /// A parameter that must be strictly positive and finite was not.
    #[error("{name} must be positive and finite, got {value}")]
    NotPositive { name: &'static str, value: f64 },
    /// A parameter that may take any sign was NaN or infinite.
    #[error("{name} must be finite, got {value}")]
    NotFinite { name: &'static str, value: f64 },
    /// A tensor that must be symmetric was not (relative asymmetry given).
    #[error("{name} must be symmetric, relative asymmetry {asymmetry:e}")]
    NotSymmetric { name: &'static str, asymmetry: f64 },
    /// A tensor that must be positive semi-definite had a negative eigenvalue.
    #[error("{name} must be positive semi-definite, smallest eigenvalue {min_eigenvalue:e}")]
    NotPositiveSemiDefinite {
        name: &'static str,
        min_eigenvalue: f64,
    },
    /// The chemical law and the mobility were given different temperatures, so `M grad mu`
    /// would no longer reduce to Fick's law.
    #[error("chemical law at T = {chemical} K but mobility at T = {mobility} K")]
    TemperatureMismatch { chemical: f64, mobility: f64 },
    /// A combination the law does not support.
    #[error("{0}")]
    Unsupported(&'static str),
    /// Invalid elastic constants.
    #[error(transparent)]
    Elastic(#[from] ElasticError),
}

/// Which law refused a state.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum RangeLaw {
    /// Ideal dilute chemical potential, defined for `c > 0` (open interval).
    IdealDilute,
    /// Lattice-gas chemical potential, defined for `0 < c < c_max` (open interval).
    LatticeGas,
    /// Dilute mobility `D c/(RT)`, positive semi-definite for `c ≥ 0` (closed).
    DiluteMobility,
    /// Lattice-gas mobility `D c (1 − c/c_max)/(RT)`, positive semi-definite for
    /// `0 ≤ c ≤ c_max` (closed).
    LatticeGasMobility,
    /// Concentration-dependent Young's modulus, which must stay positive (open interval).
    ConcentrationStiffness,
    /// The input itself: strain, concentration and potential gradient must be finite.
    Input,
    /// Finite-strain kinematics: the volume ratio `J = det F` must stay positive.
    Kinematics,
    /// Flory–Huggins mixing of a gel, defined while the gel is swollen beyond its dry volume
    /// (`J_dry > 1`).
    GelMixing,
    /// Swelling part of a large-volume-change host, `J_s = 1 + Ω (c − c_ref) > 0`.
    HostSwelling,
}

impl std::fmt::Display for RangeLaw {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        let s = match self {
            RangeLaw::IdealDilute => "ideal dilute chemical potential",
            RangeLaw::LatticeGas => "lattice-gas chemical potential",
            RangeLaw::DiluteMobility => "dilute mobility",
            RangeLaw::LatticeGasMobility => "lattice-gas mobility",
            RangeLaw::ConcentrationStiffness => "concentration-dependent stiffness",
            RangeLaw::Input => "point input",
            RangeLaw::Kinematics => "finite-strain kinematics",
            RangeLaw::GelMixing => "gel mixing energy",
            RangeLaw::HostSwelling => "host swelling",
        };
        f.write_str(s)
    }
}

/// A state outside the admissible range of a law: recoverable, the caller may cut its step.
#[derive(Clone, Copy, Debug, PartialEq, thiserror::Error)]
pub enum RangeError {
    /// Concentration `c` (mol/m³) outside the interval `[lower, upper]` (open or closed
    /// depending on the law, see [`RangeLaw`]) where `law` is defined.
    #[error(
        "{law}: concentration {c} mol/m³ outside its admissible range (bounds {lower}, {upper})"
    )]
    OutOfRange {
        law: RangeLaw,
        c: f64,
        lower: f64,
        upper: f64,
    },
    /// A volume ratio at or below the lowest value where `law` is defined (an inverted or
    /// collapsed point).
    #[error("{law}: volume ratio {ratio} at or below its bound {lower}")]
    VolumeRatio {
        law: RangeLaw,
        ratio: f64,
        lower: f64,
    },
    /// A NaN or infinite input.
    #[error("{law}: non-finite {quantity}")]
    NonFinite {
        law: RangeLaw,
        quantity: &'static str,
    },
}

/// Check that `value` is positive and finite.
pub(crate) fn positive(name: &'static str, value: f64) -> Result<f64, ParameterError> {
    if value > 0.0 && value.is_finite() {
        Ok(value)
    } else {
        Err(ParameterError::NotPositive { name, value })
    }
}

/// Check that `value` is finite.
pub(crate) fn finite(name: &'static str, value: f64) -> Result<f64, ParameterError> {
    if value.is_finite() {
        Ok(value)
    } else {
        Err(ParameterError::NotFinite { name, value })
    }
}
