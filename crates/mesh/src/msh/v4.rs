//! Sections of MSH format 4.1: `$Entities`, `$Nodes` and `$Elements`, ASCII and binary.
//!
//! Layout (format documentation, "MSH file format", version 4.1; from memory). Types in
//! parentheses are the binary encodings: `int` 4 bytes, `size_t` 8 bytes, `double` 8 bytes.
//! * `$Entities`: counts of points, curves, surfaces, volumes (`size_t`); per point
//!   `tag(int) x y z(double) nPhys(size_t) phys(int)...`; per curve, surface and volume
//!   `tag(int)` six bounding-box `double`s, `nPhys(size_t) phys(int)...`,
//!   `nBounding(size_t) boundingTag(int)...`.
//! * `$Nodes`: `nBlocks nNodes minTag maxTag` (`size_t`); per block
//!   `entityDim entityTag parametric(int) n(size_t)`, then `n` node tags (`size_t`), then `n`
//!   coordinate records `x y z` followed by `entityDim` parametric coordinates when
//!   `parametric` is 1.
//! * `$Elements`: `nBlocks nElements minTag maxTag` (`size_t`); per block
//!   `entityDim entityTag type(int) n(size_t)`, then `n` records `tag node...` (`size_t`).

use std::collections::HashMap;

use crate::error::MeshError;
use crate::msh::build::{DimTag, Owner, RawElement, RawMesh};
use crate::msh::cursor::{Cursor, Encoding};
use crate::msh::kinds::{kind_of_code, supported_codes};

/// Smallest size of one item in bytes (a one-digit number and a separator in ASCII); counts
/// that the remaining bytes cannot hold at this size are refused before allocating.
const MIN_ITEM_BYTES: usize = 2;

/// An entity dimension (0 to 3) read as an `int`.
fn entity_dim(cur: &mut Cursor<'_>, what: &str) -> Result<usize, MeshError> {
    cur.skip_if_ascii();
    let at = cur.offset();
    let d = cur.int(what)?;
    match usize::try_from(d) {
        Ok(d) if d <= 3 => Ok(d),
        _ => Err(cur.error_at(at, format!("expected {what} (0, 1, 2 or 3), found {d}"))),
    }
}

/// Read `$Entities` up to and including `$EndEntities`.
pub(crate) fn read_entities(cur: &mut Cursor<'_>, raw: &mut RawMesh) -> Result<(), MeshError> {
    const WHAT: [&str; 4] = ["points", "curves", "surfaces", "volumes"];
    let mut counts = [0u64; 4];
    for (c, what) in counts.iter_mut().zip(WHAT) {
        *c = cur.size(&format!("the number of {what}"))?;
    }
    let mut map: HashMap<DimTag, Vec<i64>> = HashMap::new();
    for (dim, &n) in counts.iter().enumerate() {
        for _ in 0..n {
            cur.skip_if_ascii();
            let at = cur.offset();
            let tag = cur.int("an entity tag")?;
            let n_box = if dim == 0 { 3 } else { 6 };
            for _ in 0..n_box {
                cur.real("an entity coordinate")?;
            }
            cur.skip_if_ascii();
            let n_phys_at = cur.offset();
            let n_phys = cur.size("the number of physical tags")?;
            let n_phys = cur.checked_count(n_phys, MIN_ITEM_BYTES, n_phys_at, "physical tags")?;
            let mut phys = Vec::with_capacity(n_phys);
            for _ in 0..n_phys {
                let p = cur.int("a physical tag")?;
                if p != 0 {
                    phys.push(p);
                }
            }
            if dim > 0 {
                let n_bounding = cur.size("the number of bounding entities")?;
                for _ in 0..n_bounding {
                    cur.int("a bounding entity tag")?;
                }
            }
            if map.insert((dim, tag), phys).is_some() {
                return Err(cur.error_at(
                    at,
                    format!("entity (dimension {dim}, tag {tag}) is listed twice"),
                ));
            }
        }
    }
    raw.entities = Some(map);
    cur.expect_end("$EndEntities", "the entities announced")
}

/// Read `$Nodes` up to and including `$EndNodes`.
pub(crate) fn read_nodes(cur: &mut Cursor<'_>, raw: &mut RawMesh) -> Result<(), MeshError> {
    let n_blocks = cur.size("the number of node blocks")?;
    cur.skip_if_ascii();
    let total_at = cur.offset();
    let total = cur.size("the number of nodes")?;
    cur.size("the smallest node tag")?;
    cur.size("the largest node tag")?;
    // A node is at least a tag and three coordinates.
    let cap = cur.checked_count(total, MIN_ITEM_BYTES * 4, total_at, "nodes")?;
    raw.node_tags.reserve(cap);
    raw.points.reserve(cap);
    let mut read: u64 = 0;
    for _ in 0..n_blocks {
        let dim = entity_dim(cur, "the entity dimension of a node block")?;
        cur.int("the entity tag of a node block")?;
        cur.skip_if_ascii();
        let param_at = cur.offset();
        let n_param = match cur.int("the parametric flag of a node block")? {
            0 => 0,
            1 => dim,
            p => {
                return Err(cur.error_at(
                    param_at,
                    format!("expected the parametric flag (0 or 1), found {p}"),
                ))
            }
        };
        let n = cur.size("the number of nodes in a block")?;
        read = read.saturating_add(n);
        if read > total {
            return Err(cur.error_at(
                total_at,
                format!("node blocks hold more nodes than the {total} announced"),
            ));
        }
        let first = raw.node_tags.len();
        for _ in 0..n {
            raw.node_tags.push(cur.size("a node tag")?);
        }
        for _ in first..raw.node_tags.len() {
            let x = cur.real("a node's x coordinate")?;
            let y = cur.real("a node's y coordinate")?;
            let z = cur.real("a node's z coordinate")?;
            for _ in 0..n_param {
                cur.real("a node's parametric coordinate")?;
            }
            raw.points.push([x, y, z]);
        }
    }
    if read != total {
        return Err(cur.error_at(
            total_at,
            format!("the header announces {total} nodes but the blocks hold {read}"),
        ));
    }
    cur.expect_end(
        "$EndNodes",
        &format!("the {n_blocks} node blocks announced"),
    )
}

/// Read `$Elements` up to and including `$EndElements`.
pub(crate) fn read_elements(cur: &mut Cursor<'_>, raw: &mut RawMesh) -> Result<(), MeshError> {
    let n_blocks = cur.size("the number of element blocks")?;
    cur.skip_if_ascii();
    let total_at = cur.offset();
    let total = cur.size("the number of elements")?;
    cur.size("the smallest element tag")?;
    cur.size("the largest element tag")?;
    // An element is at least a tag and one node.
    let cap = cur.checked_count(total, MIN_ITEM_BYTES * 2, total_at, "elements")?;
    raw.elements.reserve(cap);
    let mut read: u64 = 0;
    for _ in 0..n_blocks {
        let dim = entity_dim(cur, "the entity dimension of an element block")?;
        let entity = cur.int("the entity tag of an element block")?;
        cur.skip_if_ascii();
        let code_at = cur.offset();
        let code = cur.int("an element type code")?;
        let n = cur.size("the number of elements in a block")?;
        let Some(kind) = kind_of_code(code) else {
            let first = match cur.encoding() {
                Encoding::Ascii => cur.peek_text_uint(),
                Encoding::Binary => cur.peek_bin_u64(),
            };
            let element = first.map_or("first element unreadable".to_string(), |t| {
                format!("element {t}")
            });
            return Err(cur.error_at(
                code_at,
                format!(
                    "element type code {code} ({element}) is not supported; supported codes: {}",
                    supported_codes()
                ),
            ));
        };
        if kind.dim() != dim {
            return Err(cur.error_at(
                code_at,
                format!(
                    "{kind} elements (dimension {}) in a block of entity dimension {dim}",
                    kind.dim()
                ),
            ));
        }
        read = read.saturating_add(n);
        if read > total {
            return Err(cur.error_at(
                total_at,
                format!("element blocks hold more elements than the {total} announced"),
            ));
        }
        for _ in 0..n {
            cur.skip_if_ascii();
            let at = cur.offset();
            let tag = cur.size("an element tag")?;
            let first_node = raw.element_nodes.len();
            for _ in 0..kind.n_nodes() {
                raw.element_nodes
                    .push(cur.size("a node tag of the element")?);
            }
            raw.elements.push(RawElement {
                tag,
                kind,
                first_node,
                owner: Owner::Entity((dim, entity)),
                offset: at,
            });
        }
    }
    if read != total {
        return Err(cur.error_at(
            total_at,
            format!("the header announces {total} elements but the blocks hold {read}"),
        ));
    }
    cur.expect_end(
        "$EndElements",
        &format!("the {n_blocks} element blocks announced"),
    )
}
