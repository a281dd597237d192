//! Periodic bodies: the scenario's `body.periodic` (directions of a generated rectangle or box)
//! or `body.periodic_pairs` (boundary pairs of any mesh) turned into node links, and the check
//! that no boundary of a periodic pair takes another condition.

use dilata_fem::GeometryMode;
use dilata_io::scenario::{Located, Scenario, Shape};
use dilata_mesh::periodic::{link_boundaries, BoundaryPair, NodeLinks};
use dilata_mesh::Mesh;

use crate::model::{list, Source};
use crate::RunError;

/// Boundary pairs of the generated rectangle and box, by direction.
const AXIS_PAIRS: [(&str, &str, &str); 3] = [
    ("x", "left", "right"),
    ("y", "bottom", "top"),
    ("z", "back", "front"),
];

/// Node links of the body (none if it is not periodic), after checking the keys and that no
/// boundary condition names a boundary of a periodic pair.
pub(crate) fn build_links(
    scenario: &Scenario,
    mesh: &Mesh,
    mode: GeometryMode,
    src: Source<'_>,
) -> Result<NodeLinks, RunError> {
    let body = &scenario.body;
    let fail = |span: std::ops::Range<usize>, m: String| RunError::Scenario(src.error(span, m));
    let (pairs, span) = match (&body.periodic, &body.periodic_pairs) {
        (None, None) => return Ok(NodeLinks::none()),
        (Some(_), Some(p)) => {
            return Err(fail(
                p.span(),
                "give body.periodic (directions of a generated rectangle or box) or \
                 body.periodic_pairs (boundary pairs), not both"
                    .into(),
            ))
        }
        (Some(axes), None) => (axis_pairs(scenario, axes, src)?, axes.span()),
        (None, Some(p)) => (named_pairs(mesh, p, src)?, p.span()),
    };
    let links = link_boundaries(mesh, &pairs).map_err(|e| fail(span.clone(), e.to_string()))?;
    if mode == GeometryMode::Axisymmetric {
        if let Some(s) = links.shifts().iter().find(|s| s[0] != 0.0) {
            return Err(fail(
                span,
                format!(
                    "an axisymmetric body can be periodic only along its axis (y); this pair \
                     is shifted by {:e} in the radius x",
                    s[0]
                ),
            ));
        }
    }
    // A corner node linked to a mid-edge node would leave a linear field without a DOF there.
    let mut corner = vec![false; mesh.n_points()];
    for (_, kind, nodes) in mesh.cells() {
        for &n in &nodes[..kind.linear().n_nodes()] {
            corner[n] = true;
        }
    }
    if let Some((n, m)) = links.pairs().find(|&(n, m)| corner[n] != corner[m]) {
        return Err(fail(
            span,
            format!(
                "node {n} is linked to node {m}, but one is a cell corner and the other is not: \
                 the periodic boundaries are not meshed alike"
            ),
        ));
    }
    let periodic: Vec<&str> = pairs
        .iter()
        .flat_map(|p| [p.first.as_str(), p.second.as_str()])
        .collect();
    let stages = scenario.stage.iter().flat_map(|s| &s.get_ref().boundary);
    for spec in scenario.boundary.iter().chain(stages) {
        let on = &spec.get_ref().on;
        if periodic.contains(&on.get_ref().as_str()) {
            let (line, _) = dilata_io::scenario::line_column(src.text, span.start);
            return Err(fail(
                on.span(),
                format!(
                    "boundary '{}' belongs to a periodic pair (line {line}); a periodic \
                     boundary takes no other condition (its values are those of its partner)",
                    on.get_ref()
                ),
            ));
        }
    }
    Ok(links)
}

/// `body.periodic = ["x", ...]` on a generated rectangle or box.
fn axis_pairs(
    scenario: &Scenario,
    axes: &Located<Vec<Located<String>>>,
    src: Source<'_>,
) -> Result<Vec<BoundaryPair>, RunError> {
    let fail = |span: std::ops::Range<usize>, m: String| RunError::Scenario(src.error(span, m));
    let dim = match scenario.body.shape.as_ref().map(|s| s.get_ref()) {
        Some(Shape::Rectangle { .. }) => 2,
        Some(Shape::Box { .. }) => 3,
        _ => {
            return Err(fail(
                axes.span(),
                "body.periodic needs a generated rectangle or box (body.shape kind = \
                 \"rectangle\" or \"box\"); for a mesh file or another shape name the boundary \
                 pairs with body.periodic_pairs"
                    .into(),
            ))
        }
    };
    if axes.get_ref().is_empty() {
        return Err(fail(
            axes.span(),
            "body.periodic is empty: list the periodic directions".into(),
        ));
    }
    let mut pairs = Vec::new();
    let mut seen = Vec::new();
    for a in axes.get_ref() {
        let name = a.get_ref().as_str();
        let valid = &AXIS_PAIRS[..dim];
        let Some(&(_, first, second)) = valid.iter().find(|(n, _, _)| *n == name) else {
            let names: Vec<&str> = valid.iter().map(|(n, _, _)| *n).collect();
            return Err(fail(
                a.span(),
                format!(
                    "unknown periodic direction '{name}'; a {dim}D body can be periodic in: {}",
                    names.join(", ")
                ),
            ));
        };
        if seen.contains(&name) {
            return Err(fail(a.span(), format!("direction '{name}' listed twice")));
        }
        seen.push(name);
        pairs.push(BoundaryPair::new(first, second));
    }
    Ok(pairs)
}

/// `body.periodic_pairs = [["first", "second"], ...]`, names checked against the mesh.
fn named_pairs(
    mesh: &Mesh,
    pairs: &Located<Vec<Located<[String; 2]>>>,
    src: Source<'_>,
) -> Result<Vec<BoundaryPair>, RunError> {
    let fail = |span: std::ops::Range<usize>, m: String| RunError::Scenario(src.error(span, m));
    if pairs.get_ref().is_empty() {
        return Err(fail(
            pairs.span(),
            "body.periodic_pairs is empty: list pairs of boundary names".into(),
        ));
    }
    let mut out: Vec<BoundaryPair> = Vec::new();
    for p in pairs.get_ref() {
        let [first, second] = p.get_ref();
        for name in [first, second] {
            if !mesh.boundaries.contains_key(name) {
                return Err(fail(
                    p.span(),
                    format!(
                        "unknown boundary '{name}' in body.periodic_pairs; the boundaries are: {}",
                        list(mesh.boundaries.keys())
                    ),
                ));
            }
            if out.iter().any(|q| q.first == *name || q.second == *name) {
                return Err(fail(
                    p.span(),
                    format!("boundary '{name}' is already in a periodic pair"),
                ));
            }
        }
        if first == second {
            return Err(fail(
                p.span(),
                format!("a periodic pair needs two boundaries; '{first}' is given twice"),
            ));
        }
        out.push(BoundaryPair::new(first, second));
    }
    Ok(out)
}
