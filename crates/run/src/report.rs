//! What a run reports beyond the history: failure messages that name the cell, zone and
//! material involved, and `summary.json`.

use std::path::Path;

use dilata_io::json::Json;
use dilata_io::write_atomic;

use crate::driver::RunSummary;
use crate::model::Model;
use crate::RunError;

/// Add the zone and material of a cell named in a failure message.
pub(crate) fn explain_failure(model: &Model, message: &str) -> String {
    let Some(pos) = message.find("cell ") else {
        return message.to_string();
    };
    let digits: String = message[pos + 5..]
        .chars()
        .take_while(char::is_ascii_digit)
        .collect();
    let Ok(cell) = digits.parse::<usize>() else {
        return message.to_string();
    };
    if cell >= model.mesh.n_cells() {
        return message.to_string();
    }
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
        "{message} [cell {cell}: material '{material}', zones [{}], centroid ({:e}, {:e}, {:e})]",
        zones.join(", "),
        centroid[0],
        centroid[1],
        centroid[2]
    )
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
