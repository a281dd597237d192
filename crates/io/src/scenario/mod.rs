//! The scenario file: one TOML document describing a body, its materials, a loading program and
//! what to record (reference: `docs/scenario.md`).
//!
//! This module only reads the file into typed, spanned data and reports syntax errors, unknown
//! keys, wrong types and a generated body of absurd size ([`MAX_GENERATED_CELLS`]) with file, line
//! and column ([`ScenarioError`]). Checks that need the mesh
//! (boundary and zone names) or the physics (parameter ranges) belong to the driver, which uses
//! the spans kept here ([`Located`]) to report where the offending value was written.
//!
//! ```
//! use dilata_io::scenario::Scenario;
//!
//! let text = r#"
//! title = "slab"
//! [body]
//! geometry = "plane_strain"
//! shape = { kind = "rectangle", size = [1e-3, 1e-4], cells = [10, 2], element = "quad4" }
//! [[material]]
//! name = "host"
//! young_modulus = 10e9
//! poisson_ratio = 0.3
//! partial_molar_volume = 3e-6
//! diffusivity = 1e-12
//! [initial]
//! concentration = 100.0
//! [[stage]]
//! name = "soak"
//! duration = 10.0
//! [[stage.boundary]]
//! on = "left"
//! c = 200.0
//! "#;
//! let scenario = Scenario::parse(text, "slab.toml").unwrap();
//! assert_eq!(scenario.stage.len(), 1);
//! let err = Scenario::parse("title = 1", "bad.toml").unwrap_err();
//! assert!(err.to_string().starts_with("bad.toml:1:9"), "{err}");
//! ```

mod limits;
mod located;
mod types;

pub use limits::{generated_cells, MAX_GENERATED_CELLS};
pub use located::{line_column, Located, ScenarioError};
pub use types::{
    Amount, Body, BoundarySpec, Element, FreeEnergy, Geometry, Initial, LinearSolverName, Material,
    MobilityKind, Noise, NumberOrFormula, Orders, OutputSpec, PlaneStrainSwelling, RigidModes,
    ScalarOrTensor, Scenario, SchemeName, Shape, SolverSpec, Stage, StopRule, Strain, TimeSpec,
    TimeTable, ZoneBox, DEFAULT_CHECKPOINT_WALL,
};
