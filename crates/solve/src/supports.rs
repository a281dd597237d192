//! Rigid-body modes of the displacement field: which of them the constraints leave free, and a
//! statically determinate set of point supports that removes exactly those.
//!
//! A body loaded only by self-equilibrated actions (swelling with no external load, say) needs
//! no supports physically, but its stiffness matrix is singular along the rigid-body modes the
//! boundary conditions leave free. [`pin_rigid_modes`] adds the fewest point supports that make
//! it regular: one per free mode, at nodes where they are independent. Such a set is statically
//! determinate: its reactions follow from overall equilibrium alone, and since the loads do no
//! work on any free rigid mode the reactions are zero. The computed stress and strain are then
//! those of the free body; only a rigid motion of it (the one the supports choose) is fixed.
//!
//! Modes per geometry mode: 3D has three translations and three rotations; plane strain and
//! plane stress two translations and the rotation about z; an axisymmetric (r–z) model only the
//! translation along the axis (a radial translation or a rotation about another axis would
//! break the symmetry, and rotation about the axis is torsion, outside the model).
//!
//! Periodicity: nodes linked by the DOF map (`DofMap::build_linked`) share their displacement,
//! so a mode that moves a linked node differently from its master is not a motion the
//! discrete body can make. Such modes count as stopped, like those stopped by a constraint: a
//! rectangle periodic in x keeps the two translations (the rotation would move the two ends of
//! the period apart), and a box periodic in x, y and z keeps only its three translations.

use dilata_fem::dofs::DofMap;
use dilata_fem::{Constraints, FieldHandle, GeometryMode};
use dilata_mesh::Mesh;

/// A rigid-body mode of the displacement field.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum RigidMode {
    /// Translation along a coordinate axis of the mesh (0 = x, 1 = y, 2 = z).
    Translation(usize),
    /// Rotation about an axis parallel to a coordinate axis (0 = x, 1 = y, 2 = z).
    Rotation(usize),
    /// Axisymmetric model: translation along the axis of revolution (the mesh's y, the z of
    /// the r–z section).
    AxialTranslation,
}

impl std::fmt::Display for RigidMode {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        const AXES: [&str; 3] = ["x", "y", "z"];
        match self {
            RigidMode::Translation(a) => write!(f, "translation {}", AXES[*a]),
            RigidMode::Rotation(a) => write!(f, "rotation about {}", AXES[*a]),
            RigidMode::AxialTranslation => write!(f, "translation z (along the axis)"),
        }
    }
}

/// The displacement field of a body whose rigid-body modes are examined.
#[derive(Clone, Copy, Debug)]
pub struct RigidBody<'a> {
    /// The mesh.
    pub mesh: &'a Mesh,
    /// DOF map holding the displacement field.
    pub dofs: &'a DofMap,
    /// The displacement field (a vector field with one component per space dimension).
    pub u_field: FieldHandle,
    /// Geometry mode of the problem.
    pub mode: GeometryMode,
}

/// [`pin_rigid_modes`] could not find independent point supports for every free mode (only
/// possible when the nodes that are still free of constraints are degenerate, e.g. collinear).
#[derive(Clone, Debug, PartialEq, Eq, thiserror::Error)]
#[error("could not pin the free rigid-body modes ({free}): independent point supports were found for only {placed} of them")]
pub struct UnpinnedModes {
    /// The modes that were free, readable.
    pub free: String,
    /// How many supports were placed before giving up (none of them was added).
    pub placed: usize,
}

/// Label of the group [`pin_rigid_modes`] adds to the constraints.
pub const PIN_GROUP_LABEL: &str = "rigid-mode point supports";

/// The rigid-body modes of `body.mode` that the constrained DOFs of `constraints` do not
/// remove, in the order translations (x, y, z), then rotations (x, y, z).
///
/// The modes are restricted to the constrained displacement DOFs; the free modes form the null
/// space of that restriction (see the tolerance below). The list names one canonical mode per
/// dimension of that null space: free rotations first (a free rotation about a point other than
/// the centroid is still listed as the rotation about its axis), then translations, which are
/// exactly the axes along which no displacement component is constrained.
///
/// # Panics
/// If the displacement field does not have one component per space dimension of the mode.
pub fn rigid_modes_left(body: &RigidBody<'_>, constraints: &Constraints) -> Vec<RigidMode> {
    let frame = Frame::build(body);
    let free = frame.free_space(body, constraints);
    frame.label(&free)
}

/// Add point supports (prescribed zero displacement components) that remove exactly the
/// rigid-body modes `constraints` leave free, as one group labelled [`PIN_GROUP_LABEL`], and
/// return them as `(node, component)` pairs. Nothing is added when no mode is free.
///
/// Choice (deterministic): node A is the displacement node farthest from the centroid (lowest
/// index on ties), node B the node farthest from A, node C (needed in 3D) the node farthest from
/// the line AB; at each of A, B, C in turn the unconstrained components are taken in order of
/// how strongly they block the modes still free, as long as they block one. So A is fixed in
/// every component a free translation needs, B in the components that stop rotation, C in the
/// one that stops rotation about AB. The number of supports equals the number of free modes, and
/// the supports are independent on them: the set is statically determinate, and under loads
/// that do no work on the free modes (swelling alone) the supports carry no reaction and leave
/// the stress unchanged.
///
/// # Errors
/// [`UnpinnedModes`] if no independent set is found at A, B, C or, failing those, at any node
/// (degenerate geometry); the constraints are then unchanged.
///
/// # Panics
/// As [`rigid_modes_left`].
pub fn pin_rigid_modes(
    body: &RigidBody<'_>,
    constraints: &mut Constraints,
) -> Result<Vec<(usize, usize)>, UnpinnedModes> {
    let frame = Frame::build(body);
    let free = frame.free_space(body, constraints);
    if free.n_free == 0 {
        return Ok(Vec::new());
    }
    let nodes = body.dofs.field_nodes(body.u_field);
    if nodes.is_empty() {
        return Err(UnpinnedModes {
            free: "all (the displacement field has no nodes)".to_string(),
            placed: 0,
        });
    }
    let a = farthest(&nodes, body.mesh, |x| dist2(x, frame.centre));
    let pa = body.mesh.points[a];
    let b = farthest(&nodes, body.mesh, |x| dist2(x, pa));
    let pb = body.mesh.points[b];
    let c = farthest(&nodes, body.mesh, |x| dist2_to_line(x, pa, pb));
    let mut picker = Picker::new(&free);
    for node in [a, b, c] {
        picker.take_node(&frame, body, constraints, node, BLOCKING_TOLERANCE);
    }
    if picker.chosen.len() < free.n_free {
        // Fallback for degenerate cases (A, B or C already constrained): any node, in order.
        for &node in &nodes {
            picker.take_node(&frame, body, constraints, node, BLOCKING_TOLERANCE);
        }
    }
    if picker.chosen.len() < free.n_free {
        return Err(UnpinnedModes {
            free: frame
                .label(&free)
                .iter()
                .map(ToString::to_string)
                .collect::<Vec<_>>()
                .join(", "),
            placed: picker.chosen.len(),
        });
    }
    let dofs: Vec<usize> = picker
        .chosen
        .iter()
        .map(|&(n, k)| dof_of(body, n, k))
        .collect();
    constraints.add_group(PIN_GROUP_LABEL, &dofs, 0.0);
    Ok(picker.chosen)
}

/// Null-space test. Mode columns are scaled so that a translation moves every node by 1 and a
/// rotation moves a node by its distance from the centroid divided by the body size L (the
/// largest such distance), so every column is O(1) whatever the units of the mesh. `G = AᵀA`
/// (A: the modes at the constrained DOFs) has eigenvalue `σ²` for each singular value `σ` of A;
/// a direction is free when `σ² <= NULL_TOLERANCE · σ_max²`, i.e. when the constraints stop it
/// less than 1e-6 times as strongly as the best-stopped direction (with a single constrained
/// node, `σ_max` is of order one: a rotation stopped only through a lever arm under about
/// 1e-6 L counts as free). Round-off in G's eigenvalues is about `1e-16 σ_max²`, four orders
/// below the threshold, so exact zeros are never taken for stopped directions.
const NULL_TOLERANCE: f64 = 1e-12;

/// Independence test of orthonormalised rows (entries of order one): a residual below this is
/// round-off, not a new direction (common practice, no source).
const ROW_TOLERANCE: f64 = 1e-6;

/// A support is placed only if it blocks the free modes with at least this strength (the
/// residual of its row, on the scaled modes): a lever arm of at least 1e-3 L.
const BLOCKING_TOLERANCE: f64 = 1e-3;

/// Canonical modes of a geometry mode.
fn canonical_modes(mode: GeometryMode) -> &'static [RigidMode] {
    use RigidMode::{AxialTranslation, Rotation, Translation};
    match mode {
        GeometryMode::ThreeD => &[
            Translation(0),
            Translation(1),
            Translation(2),
            Rotation(0),
            Rotation(1),
            Rotation(2),
        ],
        GeometryMode::PlaneStrain | GeometryMode::PlaneStress => {
            &[Translation(0), Translation(1), Rotation(2)]
        }
        GeometryMode::Axisymmetric => &[AxialTranslation],
    }
}

/// Centroid and size of the body, and its canonical modes.
struct Frame {
    centre: [f64; 3],
    size: f64,
    modes: &'static [RigidMode],
}

/// Orthonormal basis of the free modes: `basis[j][i]` is entry `j` (canonical mode `j`) of basis
/// vector `i < n_free`.
struct FreeSpace {
    basis: [[f64; 6]; 6],
    n_free: usize,
}

impl Frame {
    fn build(body: &RigidBody<'_>) -> Self {
        let nc = body.dofs.spec(body.u_field).n_components;
        assert_eq!(
            nc,
            body.mode.space_dim(),
            "the displacement field has {nc} components, the {} mode needs {}",
            body.mode.name(),
            body.mode.space_dim()
        );
        let nodes = body.dofs.field_nodes(body.u_field);
        let mut centre = [0.0; 3];
        for &n in &nodes {
            for d in 0..3 {
                centre[d] += body.mesh.points[n][d];
            }
        }
        let count = nodes.len().max(1) as f64;
        centre.iter_mut().for_each(|v| *v /= count);
        let size = nodes
            .iter()
            .map(|&n| dist2(body.mesh.points[n], centre).sqrt())
            .fold(0.0, f64::max);
        Frame {
            centre,
            size: if size > 0.0 { size } else { 1.0 },
            modes: canonical_modes(body.mode),
        }
    }

    /// Value of canonical mode `j` at point `x`, displacement component `k`.
    fn value(&self, j: usize, x: [f64; 3], k: usize) -> f64 {
        match self.modes[j] {
            RigidMode::Translation(a) => f64::from(u8::from(a == k)),
            RigidMode::AxialTranslation => f64::from(u8::from(k == 1)),
            RigidMode::Rotation(a) => {
                let r: [f64; 3] = std::array::from_fn(|d| (x[d] - self.centre[d]) / self.size);
                // (e_a × r)_k
                let (b, c) = ((a + 1) % 3, (a + 2) % 3);
                if k == b {
                    -r[c]
                } else if k == c {
                    r[b]
                } else {
                    0.0
                }
            }
        }
    }

    /// Null space of the modes restricted to the constrained displacement DOFs and to the
    /// differences between linked nodes and their masters (periodicity).
    fn free_space(&self, body: &RigidBody<'_>, constraints: &Constraints) -> FreeSpace {
        let m = self.modes.len();
        let nc = body.mode.space_dim();
        let mut gram = [[0.0; 6]; 6];
        let mut row = [0.0; 6];
        let mut add = |row: &[f64; 6]| {
            for i in 0..m {
                for j in 0..m {
                    gram[i][j] += row[i] * row[j];
                }
            }
        };
        for node in body.dofs.field_nodes(body.u_field) {
            let x = body.mesh.points[node];
            for k in 0..nc {
                if !constraints.is_constrained(dof_of(body, node, k)) {
                    continue;
                }
                for j in 0..m {
                    row[j] = self.value(j, x, k);
                }
                add(&row);
            }
        }
        for (node, master) in body.dofs.links().pairs() {
            if body.dofs.node_dof(body.u_field, node, 0).is_err() {
                continue;
            }
            let (x, y) = (body.mesh.points[node], body.mesh.points[master]);
            for k in 0..nc {
                for j in 0..m {
                    row[j] = self.value(j, x, k) - self.value(j, y, k);
                }
                add(&row);
            }
        }
        let (values, vectors) = symmetric_eigen(gram, m);
        let largest = values[..m].iter().copied().fold(0.0, f64::max);
        let mut basis = [[0.0; 6]; 6];
        let mut n_free = 0;
        for i in 0..m {
            if values[i] <= NULL_TOLERANCE * largest {
                for j in 0..m {
                    basis[j][n_free] = vectors[j][i];
                }
                n_free += 1;
            }
        }
        FreeSpace { basis, n_free }
    }

    /// One canonical mode per free dimension: rotations first, then translations, each taken if
    /// its coordinate on the free space is independent of those already taken; returned in
    /// canonical order.
    fn label(&self, free: &FreeSpace) -> Vec<RigidMode> {
        let m = self.modes.len();
        let is_rotation = |j: usize| matches!(self.modes[j], RigidMode::Rotation(_));
        let order = (0..m)
            .filter(|&j| is_rotation(j))
            .chain((0..m).filter(|&j| !is_rotation(j)));
        let mut rows = RowBasis::default();
        let mut taken = Vec::new();
        for j in order {
            if rows.len() == free.n_free {
                break;
            }
            if rows.try_add(&free.basis[j], free.n_free, ROW_TOLERANCE) {
                taken.push(j);
            }
        }
        taken.sort_unstable();
        taken.into_iter().map(|j| self.modes[j]).collect()
    }
}

/// Greedy choice of point supports on the free space.
struct Picker<'f> {
    free: &'f FreeSpace,
    rows: RowBasis,
    chosen: Vec<(usize, usize)>,
}

impl<'f> Picker<'f> {
    fn new(free: &'f FreeSpace) -> Self {
        Picker {
            free,
            rows: RowBasis::default(),
            chosen: Vec::new(),
        }
    }

    /// Take the components of `node` that block the free modes, strongest first.
    fn take_node(
        &mut self,
        frame: &Frame,
        body: &RigidBody<'_>,
        constraints: &Constraints,
        node: usize,
        tolerance: f64,
    ) {
        let nc = body.mode.space_dim();
        let x = body.mesh.points[node];
        while self.chosen.len() < self.free.n_free {
            let mut best: Option<(f64, usize, [f64; 6])> = None;
            for k in 0..nc {
                if self.chosen.contains(&(node, k))
                    || constraints.is_constrained(dof_of(body, node, k))
                {
                    continue;
                }
                // Displacement of component k at the node under each free basis mode.
                let mut row = [0.0; 6];
                for i in 0..self.free.n_free {
                    row[i] = (0..frame.modes.len())
                        .map(|j| frame.value(j, x, k) * self.free.basis[j][i])
                        .sum();
                }
                let strength = self.rows.residual(&row, self.free.n_free);
                if strength > tolerance && best.is_none_or(|(s, _, _)| strength > s) {
                    best = Some((strength, k, row));
                }
            }
            let Some((_, k, row)) = best else { break };
            self.rows.try_add(&row, self.free.n_free, 0.0);
            self.chosen.push((node, k));
        }
    }
}

/// Orthonormal rows (Gram–Schmidt) of length at most 6.
#[derive(Default)]
struct RowBasis {
    rows: Vec<[f64; 6]>,
}

impl RowBasis {
    fn len(&self) -> usize {
        self.rows.len()
    }

    /// Part of `row` (first `n` entries) orthogonal to the basis.
    fn orthogonal_part(&self, row: &[f64; 6], n: usize) -> [f64; 6] {
        let mut r = *row;
        // Two passes of classical Gram–Schmidt (stable enough for six entries).
        for _ in 0..2 {
            for b in &self.rows {
                let dot: f64 = (0..n).map(|i| r[i] * b[i]).sum();
                for i in 0..n {
                    r[i] -= dot * b[i];
                }
            }
        }
        r
    }

    /// Norm of the part of `row` orthogonal to the basis.
    fn residual(&self, row: &[f64; 6], n: usize) -> f64 {
        let r = self.orthogonal_part(row, n);
        (0..n).map(|i| r[i] * r[i]).sum::<f64>().sqrt()
    }

    /// Add `row` if its orthogonal part is longer than `tolerance`.
    fn try_add(&mut self, row: &[f64; 6], n: usize, tolerance: f64) -> bool {
        let mut r = self.orthogonal_part(row, n);
        let norm = (0..n).map(|i| r[i] * r[i]).sum::<f64>().sqrt();
        if norm <= tolerance || norm == 0.0 {
            return false;
        }
        r.iter_mut().for_each(|v| *v /= norm);
        self.rows.push(r);
        true
    }
}

fn dof_of(body: &RigidBody<'_>, node: usize, component: usize) -> usize {
    body.dofs
        .node_dof(body.u_field, node, component)
        .expect("node taken from the field's own node list")
}

/// Node of `nodes` maximising `key` (the first one on ties).
fn farthest(nodes: &[usize], mesh: &Mesh, key: impl Fn([f64; 3]) -> f64) -> usize {
    let mut best = (f64::NEG_INFINITY, nodes[0]);
    for &n in nodes {
        let k = key(mesh.points[n]);
        if k > best.0 {
            best = (k, n);
        }
    }
    best.1
}

fn dist2(a: [f64; 3], b: [f64; 3]) -> f64 {
    (0..3).map(|d| (a[d] - b[d]).powi(2)).sum()
}

/// Squared distance of `x` from the line through `a` and `b` (from `a` if they coincide).
fn dist2_to_line(x: [f64; 3], a: [f64; 3], b: [f64; 3]) -> f64 {
    let t: [f64; 3] = std::array::from_fn(|d| b[d] - a[d]);
    let r: [f64; 3] = std::array::from_fn(|d| x[d] - a[d]);
    let tt: f64 = t.iter().map(|v| v * v).sum();
    let rr: f64 = r.iter().map(|v| v * v).sum();
    if tt == 0.0 {
        return rr;
    }
    let rt: f64 = (0..3).map(|d| r[d] * t[d]).sum();
    (rr - rt * rt / tt).max(0.0)
}

/// Eigenvalues and eigenvectors (columns: `vectors[j][i]` is entry `j` of vector `i`) of the
/// leading `n × n` block of a symmetric matrix, by cyclic Jacobi rotations (Golub & Van Loan,
/// Matrix Computations, 4th ed., section 8.5, from memory). Plenty for `n <= 6`.
fn symmetric_eigen(mut a: [[f64; 6]; 6], n: usize) -> ([f64; 6], [[f64; 6]; 6]) {
    let mut v = [[0.0; 6]; 6];
    for (i, row) in v.iter_mut().enumerate() {
        row[i] = 1.0;
    }
    for _sweep in 0..64 {
        let mut off = 0.0;
        let mut total = 0.0;
        for p in 0..n {
            total += a[p][p] * a[p][p];
            for q in p + 1..n {
                off += a[p][q] * a[p][q];
            }
        }
        if off <= 1e-34 * (total + 2.0 * off) {
            break;
        }
        for p in 0..n {
            for q in p + 1..n {
                if a[p][q] == 0.0 {
                    continue;
                }
                let theta = (a[q][q] - a[p][p]) / (2.0 * a[p][q]);
                let t = theta.signum() / (theta.abs() + (theta * theta + 1.0).sqrt());
                let c = 1.0 / (t * t + 1.0).sqrt();
                let s = t * c;
                for k in 0..n {
                    let (kp, kq) = (a[k][p], a[k][q]);
                    a[k][p] = c * kp - s * kq;
                    a[k][q] = s * kp + c * kq;
                }
                for k in 0..n {
                    let (pk, qk) = (a[p][k], a[q][k]);
                    a[p][k] = c * pk - s * qk;
                    a[q][k] = s * pk + c * qk;
                }
                for row in v.iter_mut().take(n) {
                    let (kp, kq) = (row[p], row[q]);
                    row[p] = c * kp - s * kq;
                    row[q] = s * kp + c * kq;
                }
            }
        }
    }
    let mut values = [0.0; 6];
    for i in 0..n {
        values[i] = a[i][i];
    }
    (values, v)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The decomposition reproduces the matrix and its eigenvectors are orthonormal.
    #[test]
    fn jacobi_reconstructs_a_symmetric_matrix() {
        let mut a = [[0.0; 6]; 6];
        for i in 0..5 {
            for j in 0..5 {
                a[i][j] = 1.0 / (1.0 + i as f64 + j as f64) + if i == j { 0.5 } else { 0.0 };
            }
        }
        a[4][4] = 0.0;
        a[0][4] = 0.0;
        a[4][0] = 0.0;
        let (l, v) = symmetric_eigen(a, 5);
        for i in 0..5 {
            for j in 0..5 {
                let back: f64 = (0..5).map(|k| v[i][k] * l[k] * v[j][k]).sum();
                assert!(
                    (back - a[i][j]).abs() < 1e-13,
                    "({i},{j}): {back} vs {}",
                    a[i][j]
                );
                let dot: f64 = (0..5).map(|k| v[k][i] * v[k][j]).sum();
                let id = if i == j { 1.0 } else { 0.0 };
                assert!((dot - id).abs() < 1e-13);
            }
        }
    }

    #[test]
    fn distance_to_line() {
        let d = dist2_to_line([1.0, 2.0, 0.0], [0.0; 3], [3.0, 0.0, 0.0]);
        assert!((d - 4.0).abs() < 1e-15);
        assert_eq!(dist2_to_line([1.0, 1.0, 0.0], [0.0; 3], [0.0; 3]), 2.0);
    }

    #[test]
    fn readable_names() {
        assert_eq!(RigidMode::Translation(1).to_string(), "translation y");
        assert_eq!(RigidMode::Rotation(2).to_string(), "rotation about z");
    }
}
