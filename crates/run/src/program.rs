//! The loading program: stages with their boundary conditions resolved against the mesh, time
//! tables, and the constraints and loads a stage puts on the coupled problem.

use dilata_fem::dofs::DofMap;
use dilata_fem::{BoundaryTarget, Constraints, GroupId};
use dilata_io::scenario::{Amount, BoundarySpec, Located, Scenario, Stage, StopRule};
use dilata_mesh::{Facet, Mesh};
use dilata_physics::coupled::CoupledFields;
use dilata_solve::coupled::BoundaryUpdate;
use dilata_solve::BoundaryLoad;

use crate::model::{check_amount, check_boundary_name, check_stop, Source, FARADAY};
use crate::RunError;

/// What a prescribed value acts on.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Target {
    /// Displacement component (0 = x or r, 1 = y or z in axisymmetry, 2 = z).
    U(usize),
    C,
    Mu,
}

/// One resolved boundary condition.
#[derive(Clone, Debug)]
pub enum ConditionKind {
    /// Dirichlet value.
    Value { target: Target, amount: Amount },
    /// Traction vector (one amount per component).
    Traction(Vec<Amount>),
    /// Pressure, positive into the body.
    Pressure(Amount),
    /// Inward species flux `scale · amount` (scale 1, or 1/(zF) for a current density).
    Flux { amount: Amount, scale: f64 },
    /// Inward flux `rate (outside − c)`.
    Exchange { rate: f64, outside: Amount },
}

/// A condition on a named boundary.
#[derive(Clone, Debug)]
pub struct Condition {
    pub boundary: String,
    pub kind: ConditionKind,
}

/// A stage ready to run.
#[derive(Clone, Debug)]
pub struct StagePlan {
    pub name: String,
    pub duration: f64,
    pub stop: Option<StopRule>,
    /// Top-level conditions followed by the stage's own.
    pub conditions: Vec<Condition>,
}

/// Value of an amount `t` seconds into its stage (tables: linear between entries, constant
/// outside them).
pub fn value_at(amount: &Amount, t: f64) -> f64 {
    match amount {
        Amount::Constant(v) => *v,
        Amount::Table(table) => {
            let (ts, vs) = (&table.time, &table.value);
            if t <= ts[0] {
                return vs[0];
            }
            let last = ts.len() - 1;
            if t >= ts[last] {
                return vs[last];
            }
            let i = ts.partition_point(|&x| x <= t) - 1;
            let s = (t - ts[i]) / (ts[i + 1] - ts[i]);
            vs[i] + s * (vs[i + 1] - vs[i])
        }
    }
}

/// Resolve a stage of the scenario.
pub(crate) fn build_stage(
    scenario: &Scenario,
    stage: &Located<Stage>,
    mesh: &Mesh,
    orders: [usize; 3],
    src: Source<'_>,
) -> Result<StagePlan, RunError> {
    let s = stage.get_ref();
    if !(s.duration > 0.0 && s.duration.is_finite()) {
        return Err(RunError::Scenario(src.error(
            stage.span(),
            format!(
                "stage '{}': duration = {} must be positive",
                s.name, s.duration
            ),
        )));
    }
    if let Some(rule) = &s.stop {
        check_stop(rule, mesh, scenario.body.mechanics, src)?;
    }
    let mut conditions = Vec::new();
    // (boundary, class) pairs already used, to refuse two conditions on one quantity.
    let mut used: Vec<(String, String, std::ops::Range<usize>)> = Vec::new();
    for spec in scenario.boundary.iter().chain(&s.boundary) {
        for (class, cond) in resolve(spec, mesh, orders, scenario.body.mechanics, src)? {
            let name = spec.get_ref().on.get_ref().clone();
            if let Some((_, _, first)) = used.iter().find(|(b, c, _)| *b == name && *c == class) {
                let (line, _) = dilata_io::scenario::line_column(src.text, first.start);
                return Err(RunError::Scenario(src.error(
                    spec.span(),
                    format!(
                        "stage '{}': boundary '{name}' already has a condition on {class} \
                         (line {line}); give one condition per quantity",
                        s.name
                    ),
                )));
            }
            used.push((name, class, spec.span()));
            conditions.push(cond);
        }
    }
    Ok(StagePlan {
        name: s.name.clone(),
        duration: s.duration,
        stop: s.stop.as_ref().map(|r| r.get_ref().clone()),
        conditions,
    })
}

/// The conditions of one `[[boundary]]` table, each with the quantity class it acts on.
fn resolve(
    spec: &Located<BoundarySpec>,
    mesh: &Mesh,
    orders: [usize; 3],
    mechanics: bool,
    src: Source<'_>,
) -> Result<Vec<(String, Condition)>, RunError> {
    let b = spec.get_ref();
    check_boundary_name(b, mesh, src)?;
    let span = spec.span();
    let name = b.on.get_ref().clone();
    let fail =
        |m: String| RunError::Scenario(src.error(span.clone(), format!("boundary '{name}': {m}")));
    if !mechanics {
        let mechanical = [
            ("u_x", b.u_x.is_some()),
            ("u_y", b.u_y.is_some()),
            ("u_z", b.u_z.is_some()),
            ("symmetry", b.symmetry.is_some()),
            ("traction", b.traction.is_some()),
            ("pressure", b.pressure.is_some()),
        ];
        let given = crate::model::given_keys(&mechanical);
        if !given.is_empty() {
            return Err(fail(format!(
                "{} need a displacement field, but body.mechanics = false",
                given.join(", ")
            )));
        }
    }
    let mut out = Vec::new();
    let mut push = |class: &str, kind: ConditionKind| {
        out.push((
            class.to_string(),
            Condition {
                boundary: name.clone(),
                kind,
            },
        ))
    };
    for (key, comp, value) in [("u_x", 0, &b.u_x), ("u_y", 1, &b.u_y), ("u_z", 2, &b.u_z)] {
        if let Some(a) = value {
            if comp >= mesh.dim {
                return Err(fail(format!(
                    "{key} does not exist in a {}D body",
                    mesh.dim
                )));
            }
            check_amount(a, key, span.clone(), src)?;
            push(
                key,
                ConditionKind::Value {
                    target: Target::U(comp),
                    amount: a.clone(),
                },
            );
        }
    }
    if b.symmetry == Some(true) {
        let comp = plane_normal(mesh, &name).ok_or_else(|| {
            fail(
                "symmetry needs a boundary lying in a coordinate plane (x, y or z constant)".into(),
            )
        })?;
        let key = ["u_x", "u_y", "u_z"][comp];
        push(
            key,
            ConditionKind::Value {
                target: Target::U(comp),
                amount: Amount::Constant(0.0),
            },
        );
    }
    if let Some(t) = &b.traction {
        if t.len() != mesh.dim {
            return Err(fail(format!(
                "traction needs {} components, got {}",
                mesh.dim,
                t.len()
            )));
        }
        for a in t {
            check_amount(a, "traction", span.clone(), src)?;
        }
        push("traction", ConditionKind::Traction(t.clone()));
    }
    if let Some(p) = &b.pressure {
        check_amount(p, "pressure", span.clone(), src)?;
        push("pressure", ConditionKind::Pressure(p.clone()));
    }
    let mut species = Vec::new();
    if let Some(a) = &b.c {
        check_amount(a, "c", span.clone(), src)?;
        species.push((
            "c",
            ConditionKind::Value {
                target: Target::C,
                amount: a.clone(),
            },
        ));
    }
    if let Some(a) = &b.mu {
        check_amount(a, "mu", span.clone(), src)?;
        if orders[1] != orders[2] {
            return Err(fail(format!(
                "a prescribed mu needs equal orders of c and mu (orders.c = {}, orders.mu = {})",
                orders[1], orders[2]
            )));
        }
        species.push((
            "mu",
            ConditionKind::Value {
                target: Target::Mu,
                amount: a.clone(),
            },
        ));
    }
    if let Some(a) = &b.inward_flux {
        check_amount(a, "inward_flux", span.clone(), src)?;
        species.push((
            "inward_flux",
            ConditionKind::Flux {
                amount: a.clone(),
                scale: 1.0,
            },
        ));
    }
    if let Some(a) = &b.current_density {
        check_amount(a, "current_density", span.clone(), src)?;
        let z = b.charge_number.unwrap_or(1.0);
        if !(z.is_finite() && z != 0.0) {
            return Err(fail(format!(
                "charge_number = {z} must be a non-zero number"
            )));
        }
        species.push((
            "current_density",
            ConditionKind::Flux {
                amount: a.clone(),
                scale: 1.0 / (z * FARADAY),
            },
        ));
    } else if b.charge_number.is_some() {
        return Err(fail(
            "charge_number is only used with current_density".into(),
        ));
    }
    match (b.exchange_rate, &b.outside_concentration) {
        (Some(h), Some(a)) => {
            if !(h > 0.0 && h.is_finite()) {
                return Err(fail(format!("exchange_rate = {h} must be positive (m/s)")));
            }
            check_amount(a, "outside_concentration", span.clone(), src)?;
            species.push((
                "exchange_rate",
                ConditionKind::Exchange {
                    rate: h,
                    outside: a.clone(),
                },
            ));
        }
        (None, None) => {}
        _ => {
            return Err(fail(
                "an exchange condition needs both exchange_rate and outside_concentration".into(),
            ))
        }
    }
    if species.len() > 1 {
        let keys: Vec<&str> = species.iter().map(|(k, _)| *k).collect();
        return Err(fail(format!(
            "give at most one species condition per boundary, found {}",
            keys.join(", ")
        )));
    }
    for (_, kind) in species {
        push("the species", kind);
    }
    if out.is_empty() {
        return Err(fail(
            "no condition given (see docs/scenario.md for the keys)".into(),
        ));
    }
    Ok(out)
}

/// The coordinate whose value is the same on every node of the boundary, if any.
fn plane_normal(mesh: &Mesh, boundary: &str) -> Option<usize> {
    let nodes = mesh.boundary_nodes(boundary).ok()?;
    let mut lo = [f64::INFINITY; 3];
    let mut hi = [f64::NEG_INFINITY; 3];
    for p in &mesh.points {
        for d in 0..3 {
            lo[d] = lo[d].min(p[d]);
            hi[d] = hi[d].max(p[d]);
        }
    }
    let size = (0..mesh.dim).map(|d| hi[d] - lo[d]).fold(0.0, f64::max);
    (0..mesh.dim).find(|&d| {
        let first = mesh.points[nodes[0]][d];
        nodes
            .iter()
            .all(|&n| (mesh.points[n][d] - first).abs() <= 1e-9 * size)
    })
}

/// What a stage puts on the coupled problem.
pub struct StageSetup {
    pub constraints: Constraints,
    pub loads: Vec<(Vec<Facet>, BoundaryLoad)>,
    pub update: BoundaryUpdate,
}

enum LoadTemplate {
    Traction(Vec<Amount>),
    Pressure(Amount),
    Flux(Amount, f64),
    Exchange(f64, Amount),
}

fn make_load(template: &LoadTemplate, t: f64) -> BoundaryLoad {
    match template {
        LoadTemplate::Traction(v) => {
            let mut tr = [0.0; 3];
            for (i, a) in v.iter().enumerate() {
                tr[i] = value_at(a, t);
            }
            BoundaryLoad::Traction(Box::new(move |_| tr))
        }
        LoadTemplate::Pressure(a) => BoundaryLoad::Pressure(value_at(a, t)),
        LoadTemplate::Flux(a, scale) => {
            let j = scale * value_at(a, t);
            BoundaryLoad::Flux(Box::new(move |_| j))
        }
        LoadTemplate::Exchange(rate, a) => BoundaryLoad::Exchange {
            rate: *rate,
            outside: value_at(a, t),
        },
    }
}

/// Constraints, loads and their time update for `plan`, which starts at time `t0`.
/// `pins` are extra point supports `(node, component)` (rigid-mode removal).
pub fn build_stage_setup(
    plan: &StagePlan,
    mesh: &Mesh,
    dofs: &DofMap,
    fields: CoupledFields,
    t0: f64,
    pins: &[(usize, usize)],
) -> StageSetup {
    let mut constraints = Constraints::new(dofs.n_dofs());
    let mut groups: Vec<(GroupId, Amount)> = Vec::new();
    let mut templates: Vec<(usize, LoadTemplate)> = Vec::new();
    let mut loads = Vec::new();
    for cond in &plan.conditions {
        match &cond.kind {
            ConditionKind::Value { target, amount } => {
                let (field, component) = match target {
                    Target::U(c) => (fields.u, *c),
                    Target::C => (fields.c, 0),
                    Target::Mu => (fields.mu, 0),
                };
                let g = constraints
                    .add_boundary(
                        mesh,
                        dofs,
                        BoundaryTarget {
                            boundary: &cond.boundary,
                            field,
                            component,
                        },
                        value_at(amount, 0.0),
                    )
                    .expect("boundary names and components were checked with the scenario");
                groups.push((g, amount.clone()));
            }
            other => {
                let facets = mesh
                    .boundary(&cond.boundary)
                    .expect("boundary names were checked with the scenario")
                    .to_vec();
                let template = match other {
                    ConditionKind::Traction(v) => LoadTemplate::Traction(v.clone()),
                    ConditionKind::Pressure(a) => LoadTemplate::Pressure(a.clone()),
                    ConditionKind::Flux { amount, scale } => {
                        LoadTemplate::Flux(amount.clone(), *scale)
                    }
                    ConditionKind::Exchange { rate, outside } => {
                        LoadTemplate::Exchange(*rate, outside.clone())
                    }
                    ConditionKind::Value { .. } => unreachable!("handled above"),
                };
                loads.push((facets, make_load(&template, 0.0)));
                templates.push((loads.len() - 1, template));
            }
        }
    }
    for &(node, comp) in pins {
        let dof = dofs
            .node_dof(fields.u, node, comp)
            .expect("pinned nodes carry displacement");
        constraints.add_group("rigid-mode pin", &[dof], 0.0);
    }
    let update: BoundaryUpdate = Box::new(move |t, loads, constraints| {
        let local = t - t0;
        for (g, amount) in &groups {
            constraints.set_group_value(*g, value_at(amount, local));
        }
        for (i, template) in &templates {
            loads[*i].1 = make_load(template, local);
        }
    });
    StageSetup {
        constraints,
        loads,
        update,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use dilata_io::scenario::TimeTable;

    #[test]
    fn tables_interpolate_and_hold_their_ends() {
        let a = Amount::Table(TimeTable {
            time: vec![0.0, 10.0, 20.0],
            value: vec![1.0, 3.0, -1.0],
        });
        assert_eq!(value_at(&a, -5.0), 1.0);
        assert_eq!(value_at(&a, 5.0), 2.0);
        assert_eq!(value_at(&a, 10.0), 3.0);
        assert_eq!(value_at(&a, 15.0), 1.0);
        assert_eq!(value_at(&a, 25.0), -1.0);
        assert_eq!(value_at(&Amount::Constant(4.5), 1e9), 4.5);
    }
}
