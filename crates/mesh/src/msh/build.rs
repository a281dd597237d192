//! From the raw content of an MSH file (nodes, elements, physical groups) to a [`Mesh`].
//!
//! Rules (documented on [`crate::msh`]): the highest element dimension present is the mesh
//! dimension; elements of that dimension are the cells; physical groups of cells are regions,
//! groups of elements one dimension lower are boundaries (matched to cell facets), groups of
//! still lower dimension are node sets.

use std::collections::{BTreeMap, HashMap};

use crate::cell::CellKind;
use crate::error::MeshError;
use crate::mesh::{CellBlock, Facet, Mesh};
use crate::msh::cursor::Locator;
use crate::msh::kinds::Orderings;

/// Key of a physical group or of an entity: (dimension, tag).
pub(crate) type DimTag = (usize, i64);

/// Which physical groups an element belongs to, as the file says it.
#[derive(Clone, Copy, Debug)]
pub(crate) enum Owner {
    /// MSH 2.2: the first element tag is the physical group (0 means none).
    Physical(i64),
    /// MSH 4.1: the element's entity; its physical groups are listed in `$Entities`.
    Entity(DimTag),
}

/// One element as read, node tags in MSH order.
#[derive(Clone, Debug)]
pub(crate) struct RawElement {
    pub tag: u64,
    pub kind: CellKind,
    /// Index of the first node tag in [`RawMesh::element_nodes`].
    pub first_node: usize,
    pub owner: Owner,
    /// Byte offset of the element in the file, for error messages.
    pub offset: usize,
}

/// How repeated elements may appear in a file.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub(crate) enum Repeats {
    /// Only the same element tag repeated (MSH 4.1).
    SameTag,
    /// Also the same node list under another tag (MSH 2.2 lists an element once per group).
    SameTagOrSameNodes,
}

/// Everything read from the file that the mesh is built from.
pub(crate) struct RawMesh {
    pub repeats: Repeats,
    /// Names from `$PhysicalNames`.
    pub names: HashMap<DimTag, String>,
    /// Physical tags of each entity, from `$Entities` (MSH 4.1), if the section is present.
    pub entities: Option<HashMap<DimTag, Vec<i64>>>,
    pub node_tags: Vec<u64>,
    pub points: Vec<[f64; 3]>,
    /// Offset of the `$Nodes` section (for errors about nodes found while building).
    pub nodes_offset: Option<usize>,
    pub elements: Vec<RawElement>,
    pub element_nodes: Vec<u64>,
    /// Offset of the `$Elements` section.
    pub elements_offset: Option<usize>,
}

/// Name of a physical group without an entry in `$PhysicalNames`.
pub fn default_group_name(dim: usize, tag: i64) -> String {
    format!("group_{dim}_{tag}")
}

/// Largest |z| accepted in a 2D mesh, relative to the size of the point cloud.
const PLANAR_TOLERANCE: f64 = 1e-12;

/// A cell found while building: its block and index in the block.
#[derive(Clone, Copy)]
struct CellRef {
    block: usize,
    index: usize,
}

/// Sorted corner nodes of a facet, padded with `usize::MAX`.
type FacetKey = [usize; 4];

fn facet_key(corners: impl Iterator<Item = usize>) -> FacetKey {
    let mut key = [usize::MAX; 4];
    for (slot, n) in key.iter_mut().zip(corners) {
        *slot = n;
    }
    key.sort_unstable();
    key
}

struct Builder<'r, 'a> {
    raw: &'r RawMesh,
    locator: Locator<'a>,
    node_index: HashMap<u64, usize>,
    orderings: Orderings,
}

impl Builder<'_, '_> {
    fn error_at(&self, offset: usize, message: String) -> MeshError {
        self.locator.error(offset, "$Elements", message)
    }

    /// Node indices of an element in Dilata order.
    fn nodes_of(&self, el: &RawElement) -> Result<Vec<usize>, MeshError> {
        let n = el.kind.n_nodes();
        let tags = el
            .first_node
            .checked_add(n)
            .and_then(|end| self.raw.element_nodes.get(el.first_node..end));
        let Some(tags) = tags else {
            return Err(self.error_at(
                el.offset,
                format!("element {} has too few node tags", el.tag),
            ));
        };
        let mut msh = Vec::with_capacity(n);
        for t in tags {
            match self.node_index.get(t) {
                Some(&i) => msh.push(i),
                None => {
                    return Err(self.error_at(
                        el.offset,
                        format!(
                            "element {} refers to node {t}, which is not defined in $Nodes",
                            el.tag
                        ),
                    ))
                }
            }
        }
        let perm = self.orderings.of(el.kind);
        Ok(perm
            .iter()
            .map(|&p| msh.get(p).copied().unwrap_or(usize::MAX))
            .collect())
    }

    /// Physical tags of an element.
    fn groups_of(&self, el: &RawElement) -> Result<Vec<i64>, MeshError> {
        match el.owner {
            Owner::Physical(0) => Ok(Vec::new()),
            Owner::Physical(t) => Ok(vec![t]),
            Owner::Entity(key) => match &self.raw.entities {
                None => Ok(Vec::new()),
                Some(map) => match map.get(&key) {
                    Some(tags) => Ok(tags.clone()),
                    None => Err(self.error_at(
                        el.offset,
                        format!(
                            "element {} belongs to entity (dimension {}, tag {}), which is not listed in $Entities",
                            el.tag, key.0, key.1
                        ),
                    )),
                },
            },
        }
    }

    fn group_name(&self, dim: usize, tag: i64) -> String {
        self.raw
            .names
            .get(&(dim, tag))
            .cloned()
            .unwrap_or_else(|| default_group_name(dim, tag))
    }
}

/// Build the mesh; `locator` turns stored offsets into error locations.
pub(crate) fn build_mesh(raw: &RawMesh, locator: Locator<'_>) -> Result<Mesh, MeshError> {
    let end = locator_end(raw);
    let Some(nodes_offset) = raw.nodes_offset else {
        return Err(locator.error(end, "$Nodes", "the file has no $Nodes section".to_string()));
    };
    let Some(elements_offset) = raw.elements_offset else {
        return Err(locator.error(
            end,
            "$Elements",
            "the file has no $Elements section".to_string(),
        ));
    };
    let top = raw.elements.iter().map(|e| e.kind.dim()).max().unwrap_or(0);
    if top == 0 {
        return Err(locator.error(
            elements_offset,
            "$Elements",
            "the file has no elements of dimension 1, 2 or 3, so there are no cells".to_string(),
        ));
    }
    let mut node_index = HashMap::with_capacity(raw.node_tags.len());
    for (i, &t) in raw.node_tags.iter().enumerate() {
        if node_index.insert(t, i).is_some() {
            return Err(locator.error(
                nodes_offset,
                "$Nodes",
                format!("node tag {t} is defined more than once"),
            ));
        }
    }
    let b = Builder {
        raw,
        locator,
        node_index,
        orderings: Orderings::new(),
    };

    // Check repeated element tags once, for every dimension.
    let mut first_by_tag: HashMap<u64, usize> = HashMap::new();
    for (i, el) in raw.elements.iter().enumerate() {
        if let Some(&j) = first_by_tag.get(&el.tag) {
            let other = &raw.elements[j];
            let same = other.kind == el.kind && element_tags(raw, other) == element_tags(raw, el);
            if !same {
                return Err(b.error_at(
                    el.offset,
                    format!(
                        "element tag {} is used twice for different elements",
                        el.tag
                    ),
                ));
            }
        } else {
            first_by_tag.insert(el.tag, i);
        }
    }

    // Cells: blocks per kind in order of first appearance, cells in file order.
    let mut blocks: Vec<CellBlock> = Vec::new();
    let mut cell_of_tag: HashMap<u64, CellRef> = HashMap::new();
    let mut cell_of_nodes: HashMap<(CellKind, Vec<usize>), CellRef> = HashMap::new();
    let mut region_members: BTreeMap<i64, Vec<CellRef>> = BTreeMap::new();
    for el in raw.elements.iter().filter(|e| e.kind.dim() == top) {
        let nodes = b.nodes_of(el)?;
        let groups = b.groups_of(el)?;
        let mut found = cell_of_tag.get(&el.tag).copied();
        let sorted_key = if raw.repeats == Repeats::SameTagOrSameNodes {
            let mut s = nodes.clone();
            s.sort_unstable();
            Some((el.kind, s))
        } else {
            None
        };
        if found.is_none() {
            found = sorted_key
                .as_ref()
                .and_then(|k| cell_of_nodes.get(k).copied());
        }
        let cell = match found {
            Some(c) => c,
            None => {
                let block = match blocks.iter().position(|bl| bl.kind == el.kind) {
                    Some(p) => p,
                    None => {
                        blocks.push(CellBlock::new(el.kind));
                        blocks.len() - 1
                    }
                };
                let index = blocks[block].n_cells();
                blocks[block].connectivity.extend_from_slice(&nodes);
                let c = CellRef { block, index };
                if let Some(k) = sorted_key {
                    cell_of_nodes.insert(k, c);
                }
                c
            }
        };
        cell_of_tag.entry(el.tag).or_insert(cell);
        for g in groups {
            region_members.entry(g).or_default().push(cell);
        }
    }
    drop(cell_of_nodes);
    let mut block_start = Vec::with_capacity(blocks.len());
    let mut total = 0usize;
    for bl in &blocks {
        block_start.push(total);
        total += bl.n_cells();
    }
    let global = |c: CellRef| block_start[c.block] + c.index;

    let mut mesh = Mesh {
        dim: top,
        points: raw.points.clone(),
        blocks,
        ..Mesh::default()
    };
    for (tag, members) in region_members {
        let cells = mesh.regions.entry(b.group_name(top, tag)).or_default();
        cells.extend(members.into_iter().map(global));
    }

    // Facets of every cell, keyed by sorted corners; the first cell (by id) wins.
    let lower: Vec<&RawElement> = raw.elements.iter().filter(|e| e.kind.dim() < top).collect();
    let mut facet_of: HashMap<FacetKey, Facet> = HashMap::new();
    if lower.iter().any(|e| e.kind.dim() + 1 == top) {
        for (id, kind, nodes) in mesh.cells() {
            for (local, (fk, f)) in kind.facets().iter().enumerate() {
                let key = facet_key(f.iter().take(fk.n_corners()).map(|&i| nodes[i]));
                facet_of.entry(key).or_insert(Facet {
                    cell: id,
                    local: local as u8,
                });
            }
        }
    }
    for el in lower {
        let nodes = b.nodes_of(el)?;
        let groups = b.groups_of(el)?;
        if groups.is_empty() {
            continue;
        }
        let dim = el.kind.dim();
        if dim + 1 == top {
            let key = facet_key(nodes.iter().take(el.kind.n_corners()).copied());
            let Some(&facet) = facet_of.get(&key) else {
                return Err(b.error_at(
                    el.offset,
                    format!(
                        "{} element {} is not a facet of any {top}D cell",
                        el.kind, el.tag
                    ),
                ));
            };
            for g in groups {
                mesh.boundaries
                    .entry(b.group_name(dim, g))
                    .or_default()
                    .push(facet);
            }
        } else {
            for g in groups {
                mesh.node_sets
                    .entry(b.group_name(dim, g))
                    .or_default()
                    .extend(nodes.iter().copied());
            }
        }
    }
    for v in mesh.regions.values_mut().chain(mesh.node_sets.values_mut()) {
        v.sort_unstable();
        v.dedup();
    }
    for v in mesh.boundaries.values_mut() {
        v.sort_unstable();
        v.dedup();
    }
    if top == 2 {
        flatten_2d(&mut mesh.points, &raw.node_tags, &b.locator, nodes_offset)?;
    }
    Ok(mesh)
}

fn locator_end(raw: &RawMesh) -> usize {
    raw.elements_offset.or(raw.nodes_offset).unwrap_or(0)
}

fn element_tags<'r>(raw: &'r RawMesh, el: &RawElement) -> &'r [u64] {
    let end = el.first_node.saturating_add(el.kind.n_nodes());
    raw.element_nodes.get(el.first_node..end).unwrap_or(&[])
}

/// A 2D mesh must lie in the plane z = 0; set z exactly to zero within a round-off tolerance.
fn flatten_2d(
    points: &mut [[f64; 3]],
    tags: &[u64],
    locator: &Locator<'_>,
    offset: usize,
) -> Result<(), MeshError> {
    let size = points
        .iter()
        .flat_map(|p| p.iter())
        .fold(1.0_f64, |m, v| m.max(v.abs()));
    for (p, t) in points.iter_mut().zip(tags) {
        if p[2].abs() > PLANAR_TOLERANCE * size {
            return Err(locator.error(
                offset,
                "$Nodes",
                format!(
                    "the mesh is 2D but node {t} has z = {}; 2D meshes must lie in the plane z = 0",
                    p[2]
                ),
            ));
        }
        p[2] = 0.0;
    }
    Ok(())
}
