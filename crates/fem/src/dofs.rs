//! Fields and the degree-of-freedom map.
//!
//! A field is scalar or vector-valued, with its own interpolation order on the shared mesh:
//! order 1 uses the corner nodes of every cell (linear shape functions), order 2 uses all nodes of
//! a quadratic mesh. DOFs are numbered field by field; within a field node by node, components
//! interleaved: `dof = offset(field) + slot(node) * n_components + component`.
//!
//! On a cell the local DOF vector is laid out field by field, then node by node (in the space
//! kind's node order), then component: see [`DofMap::local_range`].
//!
//! Periodicity: [`DofMap::build_linked`] takes [`NodeLinks`] (from
//! `dilata_mesh::periodic::link_boundaries`) and gives every linked node the DOFs of its master,
//! for every field. Slots exist only for masters (`field_nodes` lists masters), `node_dof` of a
//! linked node returns its master's DOF, and a cell touching a linked node lists the master's
//! DOFs, so assembly sums the contributions of both sides and any solution is periodic by
//! construction.

use dilata_mesh::periodic::NodeLinks;
use dilata_mesh::{CellKind, Mesh};

use crate::values::space_kind;

/// Description of one field.
#[derive(Clone, Debug, PartialEq)]
pub struct FieldSpec {
    pub name: String,
    /// 1 for a scalar, the space dimension for a vector field; 0 for a field that is switched
    /// off (it keeps its handle and local node numbering but has no DOFs, so kernels written
    /// for it loop over no components).
    pub n_components: usize,
    /// Interpolation order: 1 (linear) or 2 (quadratic, needs a quadratic mesh).
    pub order: usize,
}

impl FieldSpec {
    pub fn scalar(name: &str, order: usize) -> Self {
        FieldSpec {
            name: name.to_string(),
            n_components: 1,
            order,
        }
    }

    pub fn vector(name: &str, n_components: usize, order: usize) -> Self {
        FieldSpec {
            name: name.to_string(),
            n_components,
            order,
        }
    }
}

/// Typed handle to a field of a [`DofMap`].
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub struct FieldHandle(pub usize);

/// Why a DOF map cannot be built.
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
pub enum DofError {
    #[error("field '{field}' asks for order {order}, but the mesh has {kind} cells (order {mesh_order})")]
    OrderUnavailable {
        field: String,
        order: usize,
        kind: CellKind,
        mesh_order: usize,
    },
    #[error("unknown field '{0}'")]
    UnknownField(String),
    #[error(
        "field '{field}' has no DOF at node {node} (the node is not used by its interpolation)"
    )]
    NodeNotInField { field: String, node: usize },
    #[error(
        "field '{field}': node {node} is linked to node {master}, but only one of them carries \
         the field (a corner node linked to a mid-edge node: the periodic boundaries are not \
         meshed alike)"
    )]
    LinkAcrossSpaces {
        field: String,
        node: usize,
        master: usize,
    },
}

#[derive(Clone, Debug)]
struct FieldInfo {
    spec: FieldSpec,
    offset: usize,
    /// Slot of each mesh node in this field, `usize::MAX` where the field has no DOF.
    slot: Vec<usize>,
    n_slots: usize,
}

/// Degree-of-freedom map for a set of fields on one mesh.
#[derive(Clone, Debug)]
pub struct DofMap {
    fields: Vec<FieldInfo>,
    n_dofs: usize,
    /// Concatenated local DOFs of every cell.
    cell_dofs: Vec<usize>,
    cell_ptr: Vec<usize>,
    cell_kinds: Vec<CellKind>,
    /// Linked nodes share their master's DOFs (empty: no links).
    links: NodeLinks,
}

impl DofMap {
    /// Build the DOF map of `fields` on `mesh`.
    pub fn build(mesh: &Mesh, fields: &[FieldSpec]) -> Result<Self, DofError> {
        Self::build_linked(mesh, fields, &NodeLinks::none())
    }

    /// Build the DOF map of `fields` on `mesh`, every linked node sharing the DOFs of its master
    /// (see the module documentation).
    ///
    /// # Panics
    /// If `links` was built for another mesh (a different node count).
    pub fn build_linked(
        mesh: &Mesh,
        fields: &[FieldSpec],
        links: &NodeLinks,
    ) -> Result<Self, DofError> {
        let n_points = mesh.n_points();
        links.assert_fits(n_points);
        let mut infos = Vec::with_capacity(fields.len());
        let mut offset = 0;
        for spec in fields {
            let mut slot = vec![usize::MAX; n_points];
            let mut n_slots = 0;
            // Nodes in order of first appearance... numbered by node index for locality.
            let mut used = vec![false; n_points];
            for (_, kind, nodes) in mesh.cells() {
                let sk =
                    space_kind(kind, spec.order).ok_or_else(|| DofError::OrderUnavailable {
                        field: spec.name.clone(),
                        order: spec.order,
                        kind,
                        mesh_order: kind.order(),
                    })?;
                for &n in &nodes[..sk.n_nodes()] {
                    used[n] = true;
                }
            }
            for (node, master) in links.pairs() {
                if used[node] != used[master] {
                    return Err(DofError::LinkAcrossSpaces {
                        field: spec.name.clone(),
                        node,
                        master,
                    });
                }
            }
            // Slots for masters only, in node order (so slot order follows master order).
            for (n, u) in used.iter().enumerate() {
                if *u && links.master(n) == n {
                    slot[n] = n_slots;
                    n_slots += 1;
                }
            }
            for (node, master) in links.pairs() {
                slot[node] = slot[master];
            }
            infos.push(FieldInfo {
                spec: spec.clone(),
                offset,
                slot,
                n_slots,
            });
            offset += n_slots * spec.n_components;
        }
        let mut cell_dofs = Vec::new();
        let mut cell_ptr = vec![0];
        let mut cell_kinds = Vec::with_capacity(mesh.n_cells());
        for (_, kind, nodes) in mesh.cells() {
            for f in &infos {
                let sk = space_kind(kind, f.spec.order).expect("checked above");
                for &n in &nodes[..sk.n_nodes()] {
                    for c in 0..f.spec.n_components {
                        cell_dofs.push(f.offset + f.slot[n] * f.spec.n_components + c);
                    }
                }
            }
            cell_ptr.push(cell_dofs.len());
            cell_kinds.push(kind);
        }
        Ok(DofMap {
            fields: infos,
            n_dofs: offset,
            cell_dofs,
            cell_ptr,
            cell_kinds,
            links: links.clone(),
        })
    }

    /// The node links the map was built with (empty for [`DofMap::build`]).
    pub fn links(&self) -> &NodeLinks {
        &self.links
    }

    /// Master of a mesh node: the node whose DOFs it uses (itself when not linked).
    #[inline]
    pub fn master_node(&self, node: usize) -> usize {
        self.links.master(node)
    }

    pub fn n_dofs(&self) -> usize {
        self.n_dofs
    }

    pub fn n_fields(&self) -> usize {
        self.fields.len()
    }

    pub fn n_cells(&self) -> usize {
        self.cell_kinds.len()
    }

    /// Handle of a field by name.
    pub fn field(&self, name: &str) -> Result<FieldHandle, DofError> {
        self.fields
            .iter()
            .position(|f| f.spec.name == name)
            .map(FieldHandle)
            .ok_or_else(|| DofError::UnknownField(name.to_string()))
    }

    pub fn spec(&self, f: FieldHandle) -> &FieldSpec {
        &self.fields[f.0].spec
    }

    /// Global DOF range of a field.
    pub fn field_range(&self, f: FieldHandle) -> std::ops::Range<usize> {
        let info = &self.fields[f.0];
        info.offset..info.offset + info.n_slots * info.spec.n_components
    }

    /// Number of nodes carrying the field.
    pub fn n_field_nodes(&self, f: FieldHandle) -> usize {
        self.fields[f.0].n_slots
    }

    /// Global DOF of `component` of field `f` at mesh node `node` (its master's for a linked
    /// node).
    pub fn node_dof(
        &self,
        f: FieldHandle,
        node: usize,
        component: usize,
    ) -> Result<usize, DofError> {
        let info = &self.fields[f.0];
        assert!(
            component < info.spec.n_components,
            "component {component} of field '{}'",
            info.spec.name
        );
        match info.slot.get(node) {
            Some(&s) if s != usize::MAX => Ok(info.offset + s * info.spec.n_components + component),
            _ => Err(DofError::NodeNotInField {
                field: info.spec.name.clone(),
                node,
            }),
        }
    }

    /// Mesh nodes carrying the field, with their slot order (masters only when nodes are
    /// linked: one node per slot).
    pub fn field_nodes(&self, f: FieldHandle) -> Vec<usize> {
        let info = &self.fields[f.0];
        let mut nodes = vec![0; info.n_slots];
        for (n, &s) in info.slot.iter().enumerate() {
            if s != usize::MAX && self.links.master(n) == n {
                nodes[s] = n;
            }
        }
        nodes
    }

    /// Local DOFs of a cell (all fields).
    #[inline]
    pub fn cell_dofs(&self, cell: usize) -> &[usize] {
        &self.cell_dofs[self.cell_ptr[cell]..self.cell_ptr[cell + 1]]
    }

    /// Kind of the interpolation space of field `f` on cells of `mesh_kind`.
    pub fn space_kind(&self, f: FieldHandle, mesh_kind: CellKind) -> CellKind {
        space_kind(mesh_kind, self.fields[f.0].spec.order).expect("validated at build")
    }

    /// Range of field `f` inside the local DOF vector of a cell of `mesh_kind`.
    pub fn local_range(&self, f: FieldHandle, mesh_kind: CellKind) -> std::ops::Range<usize> {
        let mut start = 0;
        for (i, info) in self.fields.iter().enumerate() {
            let len = space_kind(mesh_kind, info.spec.order)
                .expect("validated")
                .n_nodes()
                * info.spec.n_components;
            if i == f.0 {
                return start..start + len;
            }
            start += len;
        }
        unreachable!("field handle out of range")
    }

    /// Largest local DOF count over all cells.
    pub fn max_cell_dofs(&self) -> usize {
        self.cell_ptr
            .windows(2)
            .map(|w| w[1] - w[0])
            .max()
            .unwrap_or(0)
    }

    /// Interpolation space kinds of every field on cells of `mesh_kind`, in field order.
    pub fn space_kinds(&self, mesh_kind: CellKind) -> Vec<CellKind> {
        self.fields
            .iter()
            .map(|f| space_kind(mesh_kind, f.spec.order).expect("validated"))
            .collect()
    }
}
