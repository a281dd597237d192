//! What a run reports beyond the history: stop rules in words and their watched quantity,
//! failure messages that name the cell, zone and material involved, and `summary.json`.

use std::path::Path;

use dilata_io::json::Json;
use dilata_io::scenario::StopRule;
use dilata_io::write_atomic;
use dilata_physics::coupled_post::{boundary_mean, BoundaryField};
use dilata_solve::coupled::CoupledProblem;

use crate::driver::{build_dofs, RunSummary};
use crate::model::Model;
use crate::record::HistoryRow;
use crate::RunError;

/// Add where a failure happened: the material, zones and centroid of a cell named in the
/// message ("cell N"), or, for an unknown named by its index ("dof N", a non-finite residual),
/// its field, node, position and the cells around it.
pub(crate) fn explain_failure(model: &Model, message: &str) -> String {
    if let Some(cell) = number_after(message, "cell ").filter(|&c| c < model.mesh.n_cells()) {
        return format!("{message} [{}]", describe_cell(model, cell));
    }
    // A DOF named by Newton ("dof N") or by the linear solver (a zero, infinite or NaN row or
    // column of the tangent: "pivot Some(N)", an index of the original unknowns).
    let dof = number_after(message, "dof ").or_else(|| number_after(message, "pivot Some("));
    if let Some(dof) = dof {
        if let Some(place) = describe_dof(model, dof) {
            return format!("{message} [{place}]");
        }
    }
    message.to_string()
}

/// The number right after the first `key` in `message`.
fn number_after(message: &str, key: &str) -> Option<usize> {
    let pos = message.find(key)?;
    let digits: String = message[pos + key.len()..]
        .chars()
        .take_while(char::is_ascii_digit)
        .collect();
    digits.parse().ok()
}

/// "cell N: material 'm', zones [a, b], centroid (x, y, z)".
fn describe_cell(model: &Model, cell: usize) -> String {
    let zones: Vec<&str> = model
        .mesh
        .regions
        .iter()
        .filter(|(_, cells)| cells.binary_search(&cell).is_ok())
        .map(|(name, _)| name.as_str())
        .collect();
    let material = &model.material_names[model.laws.law_of_cell()[cell] as usize];
    let centroid = {
        let nodes = model.mesh.cell(cell).1;
        let mut c = [0.0; 3];
        for &n in nodes {
            for d in 0..3 {
                c[d] += model.mesh.points[n][d] / nodes.len() as f64;
            }
        }
        c
    };
    format!(
        "cell {cell}: material '{material}', zones [{}], centroid ({:e}, {:e}, {:e})",
        zones.join(", "),
        centroid[0],
        centroid[1],
        centroid[2]
    )
}

/// "dof N: c at node K (x, y, z), in cells M (material 'm', zones [..]), .." for an unknown of the run's
/// DOF map (rebuilt: it is a function of the model), or None for an index out of range.
fn describe_dof(model: &Model, dof: usize) -> Option<String> {
    let (dofs, fields) = build_dofs(model);
    let named = [("u", fields.u), ("c", fields.c), ("mu", fields.mu)];
    let (name, node, component) = named.iter().find_map(|&(name, field)| {
        let n_components = dofs.spec(field).n_components;
        dofs.field_nodes(field).into_iter().find_map(|node| {
            (0..n_components)
                .find(|&k| dofs.node_dof(field, node, k).ok() == Some(dof))
                .map(|k| (name, node, k))
        })
    })?;
    let p = model.mesh.points[node];
    let what = if name == "u" {
        format!("u_{}", ["x", "y", "z"][component])
    } else {
        name.to_string()
    };
    let around: Vec<String> = model
        .mesh
        .cells()
        .filter(|(_, _, nodes)| nodes.contains(&node))
        .map(|(id, _, _)| {
            let zones: Vec<&str> = model
                .mesh
                .regions
                .iter()
                .filter(|(_, cells)| cells.binary_search(&id).is_ok())
                .map(|(name, _)| name.as_str())
                .collect();
            let material = &model.material_names[model.laws.law_of_cell()[id] as usize];
            format!("{id} (material '{material}', zones [{}])", zones.join(", "))
        })
        .collect();
    let mut text = format!(
        "dof {dof}: {what} at node {node} ({:e}, {:e}, {:e})",
        p[0], p[1], p[2]
    );
    if !around.is_empty() {
        text.push_str(&format!(", in cells {}", around.join(", ")));
    }
    Some(text)
}

pub(crate) fn write_summary(path: &Path, model: &Model, s: &RunSummary) -> Result<(), RunError> {
    let text = |v: &str| Json::Str(v.to_string());
    let count = |n: usize| Json::Int(n as i64);
    let stages = s
        .stages
        .iter()
        .map(|o| {
            Json::Obj(vec![
                ("name".into(), text(&o.name)),
                ("start_s".into(), Json::Num(o.start)),
                ("end_s".into(), Json::Num(o.end)),
                ("ended_by".into(), text(&o.reason)),
            ])
        })
        .collect();
    let r = &s.final_row;
    let entries: Vec<(&str, Json)> = vec![
        ("program", text("dilata")),
        ("version", text(env!("CARGO_PKG_VERSION"))),
        ("title", text(&model.scenario.title)),
        ("scenario", text(&model.file)),
        ("dofs", count(s.n_dofs)),
        ("steps", count(s.steps)),
        ("rejected_attempts", count(s.rejected)),
        ("snapshots", count(s.snapshots)),
        ("final_time_s", Json::Num(s.final_time)),
        ("final_amount_mol", Json::Num(r.amount)),
        ("final_c_mean", Json::Num(r.c_mean)),
        ("final_c_min", Json::Num(r.c_min)),
        ("final_c_max", Json::Num(r.c_max)),
        ("final_balance_error_mol", Json::Num(r.balance_error)),
        ("max_hydrostatic_stress_pa", Json::Num(s.max_hydrostatic.0)),
        (
            "max_hydrostatic_stress_time_s",
            Json::Num(s.max_hydrostatic.1),
        ),
        ("max_principal_stress_pa", Json::Num(s.max_principal.0)),
        ("max_principal_stress_time_s", Json::Num(s.max_principal.1)),
        ("stages", Json::Arr(stages)),
        (
            "caution",
            text(
                "Simulation results inform design; they do not certify it. Validate against \
                 experiments and applicable codes and standards.",
            ),
        ),
    ];
    let doc = Json::Obj(
        entries
            .into_iter()
            .map(|(k, v)| (k.to_string(), v))
            .collect(),
    );
    write_atomic(path, doc.render().as_bytes())?;
    Ok(())
}

/// The value a stop rule waits for.
pub fn stop_target(rule: &StopRule) -> f64 {
    match rule {
        StopRule::MeanConcentration { value }
        | StopRule::BoundaryConcentration { value, .. }
        | StopRule::PeakHydrostaticStress { value } => *value,
    }
}

/// The quantity a stop rule watches, in words ("mean concentration on 'outer'").
pub fn describe_stop(rule: &StopRule) -> String {
    match rule {
        StopRule::MeanConcentration { .. } => "mean concentration".into(),
        StopRule::BoundaryConcentration { on, .. } => format!("mean concentration on '{on}'"),
        StopRule::PeakHydrostaticStress { .. } => "peak hydrostatic stress".into(),
    }
}

/// The current value of the quantity a stop rule watches.
pub(crate) fn stop_quantity(
    rule: &StopRule,
    model: &Model,
    problem: &CoupledProblem<'_>,
    x: &[f64],
    row: &HistoryRow,
) -> Result<f64, RunError> {
    Ok(match rule {
        StopRule::MeanConcentration { .. } => row.c_mean,
        StopRule::PeakHydrostaticStress { .. } => row.peak_hydrostatic,
        StopRule::BoundaryConcentration { on, .. } => boundary_mean(
            &model.mesh,
            &BoundaryField {
                dofs: &problem.dofs,
                field: problem.fields.c,
                component: 0,
                mode: model.mode,
                solution: x,
            },
            model.mesh.boundary(on).expect("checked with the scenario"),
        )
        .map_err(|e| RunError::Numerical(format!("stop rule on '{on}': {e}")))?,
    })
}
