//! Prescribed values on degrees of freedom (Dirichlet conditions), applied during scatter.
//!
//! A [`Constraints`] object lists constrained DOFs in named groups. Values live beside the DOF
//! list and can be changed between solves (a time table, a Newton increment) without rebuilding
//! the sparsity pattern, the colouring or the solver's symbolic analysis.
//!
//! Scatter semantics (see `assembly`): rows of constrained DOFs receive no element contribution;
//! columns of constrained DOFs are moved to the right-hand side with the prescribed value; finally
//! each constrained row becomes `d · x_i = d · g_i` with the fixed scale `d` (`diagonal`). The
//! matrix stays symmetric when the element matrices are.

use dilata_mesh::{Mesh, MeshError};

use crate::dofs::{DofError, DofMap, FieldHandle};

/// Index of a constraint group.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub struct GroupId(pub usize);

/// Errors while building constraints from named boundaries.
#[derive(Debug, thiserror::Error)]
pub enum ConstraintError {
    #[error(transparent)]
    Mesh(#[from] MeshError),
    #[error(transparent)]
    Dof(#[from] DofError),
}

#[derive(Clone, Debug)]
struct Group {
    label: String,
    /// Constraint slots of this group.
    slots: Vec<usize>,
}

/// Constrained DOFs with their values.
#[derive(Clone, Debug)]
pub struct Constraints {
    /// For each DOF, its constraint slot or `usize::MAX`.
    slot_of: Vec<usize>,
    dofs: Vec<usize>,
    values: Vec<f64>,
    groups: Vec<Group>,
    /// Scale `d` of the identity rows written for constrained DOFs.
    pub diagonal: f64,
}

impl Constraints {
    /// No constraints on a system of `n_dofs` unknowns.
    pub fn new(n_dofs: usize) -> Self {
        Constraints {
            slot_of: vec![usize::MAX; n_dofs],
            dofs: Vec::new(),
            values: Vec::new(),
            groups: Vec::new(),
            diagonal: 1.0,
        }
    }

    pub fn n_dofs(&self) -> usize {
        self.slot_of.len()
    }

    /// Number of constrained DOFs.
    pub fn n_constrained(&self) -> usize {
        self.dofs.len()
    }

    /// Constrain `dofs` to `value` as a group named `label`. A DOF already constrained by an
    /// earlier group moves to this one (the later condition wins).
    pub fn add_group(&mut self, label: &str, dofs: &[usize], value: f64) -> GroupId {
        let id = self.groups.len();
        let mut slots = Vec::with_capacity(dofs.len());
        for &d in dofs {
            assert!(d < self.slot_of.len(), "dof {d} out of range");
            let s = match self.slot_of[d] {
                usize::MAX => {
                    self.dofs.push(d);
                    self.values.push(value);
                    self.slot_of[d] = self.dofs.len() - 1;
                    self.dofs.len() - 1
                }
                s => {
                    for g in &mut self.groups {
                        g.slots.retain(|&x| x != s);
                    }
                    self.values[s] = value;
                    s
                }
            };
            slots.push(s);
        }
        self.groups.push(Group {
            label: label.to_string(),
            slots,
        });
        GroupId(id)
    }

    /// Constrain one component of a field on every node of a named boundary.
    pub fn add_boundary(
        &mut self,
        mesh: &Mesh,
        dofs: &DofMap,
        target: BoundaryTarget<'_>,
        value: f64,
    ) -> Result<GroupId, ConstraintError> {
        let list = boundary_dofs(mesh, dofs, &target)?;
        let label = format!(
            "{}[{}] on {}",
            dofs.spec(target.field).name,
            target.component,
            target.boundary
        );
        Ok(self.add_group(&label, &list, value))
    }

    /// Set the value of every DOF of a group.
    pub fn set_group_value(&mut self, group: GroupId, value: f64) {
        for &s in &self.groups[group.0].slots {
            self.values[s] = value;
        }
    }

    /// Set the values of a group DOF by DOF.
    pub fn set_group_values_with(&mut self, group: GroupId, mut f: impl FnMut(usize) -> f64) {
        for &s in &self.groups[group.0].slots {
            self.values[s] = f(self.dofs[s]);
        }
    }

    pub fn group_label(&self, group: GroupId) -> &str {
        &self.groups[group.0].label
    }

    /// DOFs of a group.
    pub fn group_dofs(&self, group: GroupId) -> Vec<usize> {
        self.groups[group.0]
            .slots
            .iter()
            .map(|&s| self.dofs[s])
            .collect()
    }

    /// Constraint slot of a DOF, if constrained.
    #[inline]
    pub fn slot(&self, dof: usize) -> Option<usize> {
        match self.slot_of[dof] {
            usize::MAX => None,
            s => Some(s),
        }
    }

    #[inline]
    pub fn is_constrained(&self, dof: usize) -> bool {
        self.slot_of[dof] != usize::MAX
    }

    /// Constrained DOFs in slot order.
    pub fn dofs(&self) -> &[usize] {
        &self.dofs
    }

    /// Prescribed values in slot order.
    pub fn values(&self) -> &[f64] {
        &self.values
    }

    /// Write the prescribed values into a solution vector.
    pub fn impose_into(&self, x: &mut [f64]) {
        for (&d, &v) in self.dofs.iter().zip(&self.values) {
            x[d] = v;
        }
    }

    /// Increments `g_i − x_i` that take `x` onto the prescribed values, in slot order (what a
    /// Newton step prescribes for its correction).
    pub fn increments(&self, x: &[f64]) -> Vec<f64> {
        self.dofs
            .iter()
            .zip(&self.values)
            .map(|(&d, &v)| v - x[d])
            .collect()
    }
}

/// A field component on a named boundary.
#[derive(Clone, Copy, Debug)]
pub struct BoundaryTarget<'a> {
    pub boundary: &'a str,
    pub field: FieldHandle,
    pub component: usize,
}

/// DOFs of one field component on the nodes of a named boundary that carry the field.
pub fn boundary_dofs(
    mesh: &Mesh,
    dofs: &DofMap,
    target: &BoundaryTarget<'_>,
) -> Result<Vec<usize>, ConstraintError> {
    let facets = mesh.boundary(target.boundary)?;
    let mut out = Vec::new();
    for &f in facets {
        let (cell_kind, nodes) = mesh.cell(f.cell);
        let sk = dofs.space_kind(target.field, cell_kind);
        let (_, local) = cell_kind.facets()[f.local as usize];
        for &l in local {
            // Only nodes within the field's space (corner nodes for a linear field).
            if l < sk.n_nodes() {
                out.push(dofs.node_dof(target.field, nodes[l], target.component)?);
            }
        }
    }
    out.sort_unstable();
    out.dedup();
    Ok(out)
}
