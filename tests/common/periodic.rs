//! Shared scenario of the periodic-body tests (`tests/periodic.rs`, `tests/periodic_input.rs`).

use std::path::Path;

use dilata_run::{build_dofs, build_model, nodal_field};

/// Side of the periodic cell, m.
pub const L: f64 = 1.0e-6;
/// Diffusivity, m²/s.
pub const D: f64 = 1.0e-14;
pub const C0: f64 = 1000.0;
pub const A: f64 = 200.0;

/// A plane-strain rectangle `L × L/4`, periodic as `periodic` says, dilute host with the given
/// swelling, initial `c0 + a cos(2π x / L)`.
pub fn scenario(
    cells: [usize; 2],
    element: &str,
    periodic: &str,
    omega: f64,
    time: &str,
    extra: &str,
) -> String {
    format!(
        r#"
[body]
geometry = "plane_strain"
shape = {{ kind = "rectangle", size = [{L:e}, {ly:e}], cells = [{nx}, {ny}], element = "{element}" }}
{periodic}
rigid_modes = "pin"

[[material]]
name = "host"
young_modulus = 50.0e9
poisson_ratio = 0.25
partial_molar_volume = {omega:e}
stress_free_concentration = {C0:e}
reference_concentration = {C0:e}
diffusivity = {D:e}

[initial]
concentration = "{C0:?} + {A:?} * cos({k:?} * x)"

{extra}

[[stage]]
name = "relax"
{time}
"#,
        ly = L / 4.0,
        k = 2.0 * std::f64::consts::PI / L,
        nx = cells[0],
        ny = cells[1],
    )
}

pub fn model(text: &str) -> dilata_run::Model {
    build_model(text.to_string(), "periodic.toml", Path::new(".")).unwrap()
}

pub fn scenario_error(text: &str) -> String {
    match build_model(text.to_string(), "periodic.toml", Path::new(".")) {
        Ok(_) => panic!("the scenario was accepted"),
        Err(e) => e.to_string(),
    }
}

/// Concentration (from the DOF vector) at every mesh node, through the DOF map.
pub fn nodal_c(model: &dilata_run::Model, x: &[f64]) -> Vec<f64> {
    let (dofs, fields) = build_dofs(model);
    nodal_field(&model.mesh, &dofs, fields.c, x)
}
