//! # dilata-solve
//!
//! Solution drivers, generic over the [`newton::DiscreteSystem`] trait and the linear-solver
//! trait; they never see physics types. Newton's method with line search lives here; time
//! integration and loading programs join it as the coupled problems arrive.

pub mod coupled;

pub use coupled::{
    BoundaryUpdate, BoxTimedScalarFn, BoxTimedVectorFn, CoupledProblem, CoupledSetupError,
    MassRates,
};
pub mod newton;

pub use newton::{
    newton, newton_in_step, CorrectionTest, DiscreteSystem, NewtonError, NewtonInfo, NewtonParams,
};
pub mod problem;

pub use problem::{BoundaryLoad, BulkLaw, FieldProblem};
pub mod supports;
pub mod time;

pub use time::{
    AdaptiveParams, EnergyControl, Integrator, IntegratorParams, RateRule, Scheme, StepError,
    StepReport, StepSizing, TransientSystem,
};
