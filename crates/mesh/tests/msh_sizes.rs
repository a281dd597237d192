//! The size sanity check of the MSH reader: a count in a section header that the rest of the
//! file cannot hold is refused, with its location, before anything is allocated for it.

use dilata_mesh::msh::parse_msh;
use dilata_mesh::{Location, MeshError};

fn sample_bytes(name: &str) -> Vec<u8> {
    let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("../../meshes")
        .join(name);
    std::fs::read(path).unwrap()
}

fn parse_error(bytes: &[u8]) -> (Location, String, String) {
    match parse_msh(bytes, "sizes.msh") {
        Err(MeshError::Parse {
            location,
            section,
            message,
            ..
        }) => (location, section, message),
        other => panic!("expected a parse error, got {other:?}"),
    }
}

const V22_HEAD: &str = "$MeshFormat\n2.2 0 8\n$EndMeshFormat\n";

#[test]
fn absurd_node_and_element_counts_are_refused_where_they_are_written() {
    let nodes = format!("{V22_HEAD}$Nodes\n123456789012345\n1 0 0 0\n$EndNodes\n");
    let (at, section, message) = parse_error(nodes.as_bytes());
    assert_eq!(at, Location::Line { line: 5, column: 1 });
    assert_eq!(section, "$Nodes");
    assert!(
        message.contains("announces 123456789012345 nodes") && message.contains("room for at most"),
        "{message}"
    );

    let elements = format!(
        "{V22_HEAD}$Nodes\n3\n1 0 0 0\n2 1 0 0\n3 0 1 0\n$EndNodes\n\
         $Elements\n  18446744073709551615\n1 2 0 1 2 3\n$EndElements\n"
    );
    let (at, section, message) = parse_error(elements.as_bytes());
    assert_eq!(
        at,
        Location::Line {
            line: 11,
            column: 3
        }
    );
    assert_eq!(section, "$Elements");
    assert!(
        message.contains("announces 18446744073709551615 elements"),
        "{message}"
    );

    // Format 4.1: the total in the block header.
    let v41 = "$MeshFormat\n4.1 0 8\n$EndMeshFormat\n$Nodes\n1 99999999999 1 3\n";
    let (at, _, message) = parse_error(v41.as_bytes());
    assert_eq!(at, Location::Line { line: 5, column: 3 });
    assert!(message.contains("announces 99999999999 nodes"), "{message}");
}

#[test]
fn an_absurd_count_in_a_binary_header_is_refused_at_its_byte() {
    let mut bytes = sample_bytes("tri3_v41_binary.msh");
    let start = bytes
        .windows(7)
        .position(|w| w == b"$Nodes\n")
        .expect("$Nodes")
        + 7;
    // numEntityBlocks (size_t), then numNodes (size_t): make the latter 2^40.
    let at = start + 8;
    bytes[at..at + 8].copy_from_slice(&(1_u64 << 40).to_le_bytes());
    let (location, _, message) = parse_error(&bytes);
    assert_eq!(location, Location::Byte(at));
    assert!(
        message.contains("announces 1099511627776 nodes"),
        "{message}"
    );
}

#[test]
fn counts_that_fit_are_still_read() {
    // The check only refuses counts the bytes cannot hold: every sample still reads.
    for name in [
        "tri3_v22_ascii.msh",
        "tri3_v41_ascii.msh",
        "tri3_v41_binary.msh",
        "quad8_v22_binary.msh",
        "tet10_v22_binary.msh",
        "hex27_v41_binary.msh",
    ] {
        parse_msh(&sample_bytes(name), name).unwrap_or_else(|e| panic!("{name}: {e}"));
    }
}
