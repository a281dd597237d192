//! `dilata mesh FILE`: summary of a mesh file.

use std::path::Path;

use anyhow::Context;
use dilata_fem::quality::build_quality_report;
use dilata_mesh::Mesh;

use dilata_io::json::Json;

pub fn run(file: &Path, vtu: Option<&Path>, json: bool) -> anyhow::Result<()> {
    let mesh = dilata_mesh::msh::read_msh(file)?;
    mesh.validate_structure()
        .with_context(|| format!("{}", file.display()))?;
    let quality = build_quality_report(&mesh);
    if json {
        println!("{}", summary_json(&mesh, &quality).render());
    } else {
        print_summary(file, &mesh, &quality);
    }
    if !quality.bad_cells.is_empty() {
        anyhow::bail!(
            "{}: {}",
            file.display(),
            dilata_mesh::MeshError::BadCells {
                cells: quality.bad_cells.clone()
            }
        );
    }
    if let Some(out) = vtu {
        dilata_io::write_vtu(out, &mesh, &[], &[])
            .with_context(|| format!("writing {}", out.display()))?;
        if !json {
            println!("wrote {}", out.display());
        }
    }
    Ok(())
}

fn print_summary(file: &Path, mesh: &Mesh, q: &dilata_fem::quality::QualityReport) {
    println!("mesh {}", file.display());
    println!("  dimension   {}", mesh.dim);
    println!("  nodes       {}", mesh.n_points());
    println!("  cells       {}", mesh.n_cells());
    for (kind, n) in mesh.cell_counts() {
        println!("    {:<9} {n}", kind.name());
    }
    let list = |title: &str, items: Vec<(String, usize)>, unit: &str| {
        println!("  {title:<11} {}", items.len());
        for (name, n) in items {
            println!("    {name:<24} {n} {unit}");
        }
    };
    list(
        "regions",
        mesh.regions
            .iter()
            .map(|(k, v)| (k.clone(), v.len()))
            .collect(),
        "cells",
    );
    list(
        "boundaries",
        mesh.boundaries
            .iter()
            .map(|(k, v)| (k.clone(), v.len()))
            .collect(),
        "facets",
    );
    list(
        "node sets",
        mesh.node_sets
            .iter()
            .map(|(k, v)| (k.clone(), v.len()))
            .collect(),
        "nodes",
    );
    println!("  quality");
    println!(
        "    Jacobian ratio  min {:.4}  max {:.4}",
        q.min_jacobian_ratio, q.max_jacobian_ratio
    );
    println!(
        "    aspect ratio    min {:.4}  max {:.4}",
        q.min_aspect_ratio, q.max_aspect_ratio
    );
    println!("    inverted or degenerate cells: {}", q.bad_cells.len());
}

fn summary_json(mesh: &Mesh, q: &dilata_fem::quality::QualityReport) -> Json {
    let counts = |m: Vec<(String, usize)>| {
        Json::Obj(
            m.into_iter()
                .map(|(k, v)| (k, Json::Int(v as i64)))
                .collect(),
        )
    };
    Json::Obj(vec![
        ("nodes".into(), Json::Int(mesh.n_points() as i64)),
        ("dim".into(), Json::Int(mesh.dim as i64)),
        (
            "cells".into(),
            counts(
                mesh.cell_counts()
                    .into_iter()
                    .map(|(k, n)| (k.name().to_string(), n))
                    .collect(),
            ),
        ),
        (
            "regions".into(),
            counts(
                mesh.regions
                    .iter()
                    .map(|(k, v)| (k.clone(), v.len()))
                    .collect(),
            ),
        ),
        (
            "boundaries".into(),
            counts(
                mesh.boundaries
                    .iter()
                    .map(|(k, v)| (k.clone(), v.len()))
                    .collect(),
            ),
        ),
        (
            "node_sets".into(),
            counts(
                mesh.node_sets
                    .iter()
                    .map(|(k, v)| (k.clone(), v.len()))
                    .collect(),
            ),
        ),
        (
            "quality".into(),
            Json::Obj(vec![
                ("min_jacobian_ratio".into(), Json::Num(q.min_jacobian_ratio)),
                ("max_jacobian_ratio".into(), Json::Num(q.max_jacobian_ratio)),
                ("min_aspect_ratio".into(), Json::Num(q.min_aspect_ratio)),
                ("max_aspect_ratio".into(), Json::Num(q.max_aspect_ratio)),
                ("bad_cells".into(), Json::Int(q.bad_cells.len() as i64)),
            ]),
        ),
    ])
}
