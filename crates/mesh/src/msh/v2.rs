//! Sections of MSH format 2.2: `$Nodes` and `$Elements`, ASCII and binary.
//!
//! Layout (format documentation, "MSH file format version 2"; from memory):
//! * `$Nodes`: a text line with the node count, then per node `tag x y z` (binary: `int`
//!   tag and three `double`s).
//! * `$Elements`: a text line with the element count, then per element
//!   `tag type n-tags tag... node...` (ASCII); in binary, blocks of a header
//!   `type count n-tags` (three `int`s) followed by `count` records of `int`s
//!   `tag tag... node...`. The first of the tags is the physical group (0: none), the second the
//!   elementary entity; any further tags (partitions) are ignored.

use crate::cell::CellKind;
use crate::error::MeshError;
use crate::msh::build::{Owner, RawElement, RawMesh};
use crate::msh::cursor::{Cursor, Encoding};
use crate::msh::kinds::{kind_of_code, supported_codes};

/// Smallest size of one node record in bytes (a text line "1 0 0 0" or the binary record).
const MIN_NODE_BYTES: usize = 8;
/// Smallest size of one element record in bytes (a text line "1 15 0 1" or a binary record
/// of at least two `int`s).
const MIN_ELEMENT_BYTES: usize = 8;

/// Read the body of `$Nodes` (after its start line) up to and including `$EndNodes`.
pub(crate) fn read_nodes(cur: &mut Cursor<'_>, raw: &mut RawMesh) -> Result<(), MeshError> {
    cur.skip_space();
    let count_at = cur.offset();
    let count = cur.text_uint("the number of nodes")?;
    let cap = cur.checked_count(count, MIN_NODE_BYTES, count_at, "nodes")?;
    raw.node_tags.reserve(cap);
    raw.points.reserve(cap);
    match cur.encoding() {
        Encoding::Ascii => {
            for _ in 0..count {
                let tag = cur.text_uint("a node tag")?;
                let x = cur.text_real("the node's x coordinate")?;
                let y = cur.text_real("the node's y coordinate")?;
                let z = cur.text_real("the node's z coordinate")?;
                raw.node_tags.push(tag);
                raw.points.push([x, y, z]);
            }
        }
        Encoding::Binary => {
            cur.end_of_line("the binary node data")?;
            for _ in 0..count {
                let at = cur.offset();
                let tag = cur.bin_i32("a node tag")?;
                let tag = u64::try_from(tag)
                    .map_err(|_| cur.error_at(at, format!("node tag {tag} is negative")))?;
                let x = cur.real("the node's x coordinate")?;
                let y = cur.real("the node's y coordinate")?;
                let z = cur.real("the node's z coordinate")?;
                raw.node_tags.push(tag);
                raw.points.push([x, y, z]);
            }
        }
    }
    cur.expect_end("$EndNodes", &format!("the {count} nodes announced"))
}

/// The kind of a type code, or an error naming the code and the element.
fn kind_or_error(
    cur: &Cursor<'_>,
    at: usize,
    code: i64,
    element: &str,
) -> Result<CellKind, MeshError> {
    kind_of_code(code).ok_or_else(|| {
        cur.error_at(
            at,
            format!(
                "element type code {code} ({element}) is not supported; supported codes: {}",
                supported_codes()
            ),
        )
    })
}

/// Read the body of `$Elements` up to and including `$EndElements`.
pub(crate) fn read_elements(cur: &mut Cursor<'_>, raw: &mut RawMesh) -> Result<(), MeshError> {
    cur.skip_space();
    let count_at = cur.offset();
    let count = cur.text_uint("the number of elements")?;
    raw.elements
        .reserve(cur.checked_count(count, MIN_ELEMENT_BYTES, count_at, "elements")?);
    match cur.encoding() {
        Encoding::Ascii => {
            for _ in 0..count {
                cur.skip_space();
                let at = cur.offset();
                let tag = cur.text_uint("an element tag")?;
                cur.skip_space();
                let code_at = cur.offset();
                let code = cur.text_int("an element type code")?;
                let kind = kind_or_error(cur, code_at, code, &format!("element {tag}"))?;
                let n_tags = cur.text_uint("the number of element tags")?;
                let mut physical = 0;
                for i in 0..n_tags {
                    let t = cur.text_int("an element tag value")?;
                    if i == 0 {
                        physical = t;
                    }
                }
                let first_node = raw.element_nodes.len();
                for _ in 0..kind.n_nodes() {
                    raw.element_nodes
                        .push(cur.text_uint("a node tag of the element")?);
                }
                raw.elements.push(RawElement {
                    tag,
                    kind,
                    first_node,
                    owner: Owner::Physical(physical),
                    offset: at,
                });
            }
        }
        Encoding::Binary => {
            cur.end_of_line("the binary element data")?;
            let mut read: u64 = 0;
            while read < count {
                let header_at = cur.offset();
                let code = cur.bin_i32("an element block's type code")?;
                let n = cur.bin_i32("an element block's element count")?;
                let n_tags = cur.bin_i32("an element block's number of tags")?;
                let (Ok(n), Ok(n_tags)) = (u64::try_from(n), u64::try_from(n_tags)) else {
                    return Err(cur.error_at(
                        header_at,
                        format!("element block header has a negative count ({n} elements, {n_tags} tags)"),
                    ));
                };
                let first = cur
                    .peek_bin_i32()
                    .map_or("first element unreadable".to_string(), |t| {
                        format!("element {t}")
                    });
                let kind = kind_or_error(cur, header_at, i64::from(code), &first)?;
                read = read.saturating_add(n);
                if read > count {
                    return Err(cur.error_at(
                        header_at,
                        format!("element blocks hold more elements than the {count} announced"),
                    ));
                }
                for _ in 0..n {
                    let at = cur.offset();
                    let tag = cur.bin_i32("an element tag")?;
                    let tag = u64::try_from(tag)
                        .map_err(|_| cur.error_at(at, format!("element tag {tag} is negative")))?;
                    let mut physical = 0;
                    for i in 0..n_tags {
                        let t = cur.bin_i32("an element tag value")?;
                        if i == 0 {
                            physical = i64::from(t);
                        }
                    }
                    let first_node = raw.element_nodes.len();
                    for _ in 0..kind.n_nodes() {
                        let node_at = cur.offset();
                        let t = cur.bin_i32("a node tag of the element")?;
                        let t = u64::try_from(t).map_err(|_| {
                            cur.error_at(
                                node_at,
                                format!("element {tag} has negative node tag {t}"),
                            )
                        })?;
                        raw.element_nodes.push(t);
                    }
                    raw.elements.push(RawElement {
                        tag,
                        kind,
                        first_node,
                        owner: Owner::Physical(physical),
                        offset: at,
                    });
                }
            }
        }
    }
    cur.expect_end("$EndElements", &format!("the {count} elements announced"))
}
