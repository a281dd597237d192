//! Jacobian-based mesh quality: affine, distorted, inverted and degenerate cells.
//!
//! Expected values follow from the definitions in `quality.rs` (Jacobian `J = sum x_i ⊗ dN_i`,
//! ratio `min det / max |det|`, aspect ratio longest / shortest corner edge) and elementary
//! geometry. The quarter-point fact used below — moving the mid-edge node of a quadratic edge
//! to a quarter of its length makes the Jacobian vanish at the adjacent corner, and closer makes
//! it negative — is from Barsoum, "On the use of isoparametric finite elements in linear fracture
//! mechanics", IJNME 10 (1976) 25–37 (from memory); it is also re-derived in the test comment.

use dilata_fem::quality::{build_quality_report, cell_quality, check_cells};
use dilata_mesh::{CellBlock, CellKind, Mesh, MeshError};

fn kinds() -> impl Iterator<Item = CellKind> {
    CellKind::ALL.into_iter().filter(|&k| k != CellKind::Point1)
}

/// A one-cell mesh whose node `i` sits at `map(reference node i)`.
fn one_cell(kind: CellKind, map: impl Fn([f64; 3]) -> [f64; 3]) -> Mesh {
    let points: Vec<[f64; 3]> = kind.reference_nodes().into_iter().map(map).collect();
    Mesh {
        dim: kind.dim(),
        blocks: vec![CellBlock {
            kind,
            connectivity: (0..points.len()).collect(),
        }],
        points,
        ..Default::default()
    }
}

/// An affine map with positive determinant, restricted to the first `dim` components.
fn affine(dim: usize) -> impl Fn([f64; 3]) -> [f64; 3] {
    move |p| {
        let a = [[1.5, 0.4, -0.2], [-0.3, 2.0, 0.1], [0.2, 0.3, 0.8]];
        let mut y = [0.0; 3];
        for r in 0..dim {
            y[r] = 3.0 + r as f64;
            for c in 0..dim {
                y[r] += a[r][c] * p[c];
            }
        }
        y
    }
}

/// A smooth non-affine map close to the identity.
fn warp(dim: usize) -> impl Fn([f64; 3]) -> [f64; 3] {
    move |p| match dim {
        1 => [p[0] + 0.2 * p[0] * p[0], 0.0, 0.0],
        2 => [p[0] + 0.15 * p[0] * p[1], p[1] + 0.1 * p[0] * p[0], 0.0],
        _ => [
            p[0] + 0.15 * p[0] * p[1],
            p[1] + 0.1 * p[1] * p[2],
            p[2] + 0.1 * p[0] * p[2],
        ],
    }
}

#[test]
fn affine_cells_have_ratio_one_for_every_kind() {
    for kind in kinds() {
        let mesh = one_cell(kind, affine(kind.dim()));
        let q = cell_quality(&mesh, 0);
        assert!(
            (q.jacobian_ratio() - 1.0).abs() < 1e-12,
            "{kind}: ratio {}",
            q.jacobian_ratio()
        );
        assert!(q.min_det > 0.0);
        let report = check_cells(&mesh).unwrap_or_else(|e| panic!("{kind}: {e}"));
        assert_eq!(report.n_cells, 1);
        assert!(report.bad_cells.is_empty());
        assert!((report.min_jacobian_ratio - 1.0).abs() < 1e-12);
    }
}

#[test]
fn warped_cells_are_valid_with_ratio_below_one() {
    for kind in kinds() {
        let mesh = one_cell(kind, warp(kind.dim()));
        let ratio = cell_quality(&mesh, 0).jacobian_ratio();
        if matches!(kind, CellKind::Line2 | CellKind::Tri3 | CellKind::Tet4) {
            // Two-node lines and linear simplices are always affine.
            assert!((ratio - 1.0).abs() < 1e-12, "{kind}: ratio {ratio}");
        } else {
            assert!(ratio > 0.0 && ratio < 0.999, "{kind}: ratio {ratio}");
        }
        assert!(
            check_cells(&mesh).is_ok(),
            "{kind}: warped cell reported bad"
        );
    }
}

#[test]
fn swapping_two_corners_makes_every_kind_bad() {
    for kind in kinds() {
        let mut mesh = one_cell(kind, affine(kind.dim()));
        mesh.blocks[0].connectivity.swap(0, 1);
        let q = cell_quality(&mesh, 0);
        assert!(q.min_det < 0.0, "{kind}: min det {} after swap", q.min_det);
        assert!(q.jacobian_ratio() < 0.0);
        match check_cells(&mesh) {
            Err(MeshError::BadCells { cells }) => assert_eq!(cells, vec![0], "{kind}"),
            other => panic!("{kind}: expected BadCells, got {other:?}"),
        }
    }
}

#[test]
fn reversed_linear_simplex_has_ratio_minus_one() {
    let mut mesh = one_cell(CellKind::Tet4, affine(3));
    mesh.blocks[0].connectivity.swap(1, 2);
    let q = cell_quality(&mesh, 0);
    assert!(
        (q.jacobian_ratio() + 1.0).abs() < 1e-12,
        "ratio {}",
        q.jacobian_ratio()
    );
}

/// Three unit squares in a row; the middle one has nodes 1 and 2 swapped (a bow-tie).
fn strip_with_bad_middle() -> Mesh {
    let points = vec![
        [0.0, 0.0, 0.0],
        [1.0, 0.0, 0.0],
        [2.0, 0.0, 0.0],
        [3.0, 0.0, 0.0],
        [0.0, 1.0, 0.0],
        [1.0, 1.0, 0.0],
        [2.0, 1.0, 0.0],
        [3.0, 1.0, 0.0],
    ];
    let connectivity = vec![0, 1, 5, 4, 1, 6, 2, 5, 2, 3, 7, 6];
    Mesh {
        dim: 2,
        points,
        blocks: vec![CellBlock {
            kind: CellKind::Quad4,
            connectivity,
        }],
        ..Default::default()
    }
}

#[test]
fn bad_cell_id_is_reported_and_listed_in_the_message() {
    let mesh = strip_with_bad_middle();
    let report = build_quality_report(&mesh);
    assert_eq!(report.n_cells, 3);
    assert_eq!(report.bad_cells, vec![1]);
    assert!(report.min_jacobian_ratio < 0.0);
    assert!((report.max_jacobian_ratio - 1.0).abs() < 1e-12);
    let err = check_cells(&mesh).unwrap_err();
    match &err {
        MeshError::BadCells { cells } => assert_eq!(cells, &vec![1]),
        other => panic!("expected BadCells, got {other:?}"),
    }
    let msg = err.to_string();
    assert!(
        msg.contains("ids: 1"),
        "message does not list the id: {msg}"
    );
}

#[test]
fn cell_ids_are_global_across_blocks() {
    // Block 0: two triangles; block 1: two quads, the second with a zero-length (collapsed) side.
    let points = vec![
        [0.0, 0.0, 0.0],
        [1.0, 0.0, 0.0],
        [1.0, 1.0, 0.0],
        [0.0, 1.0, 0.0],
        [2.0, 0.0, 0.0],
        [2.0, 1.0, 0.0],
        [3.0, 0.0, 0.0],
    ];
    let mesh = Mesh {
        dim: 2,
        points,
        blocks: vec![
            CellBlock {
                kind: CellKind::Tri3,
                connectivity: vec![0, 1, 2, 0, 2, 3],
            },
            CellBlock {
                kind: CellKind::Quad4,
                connectivity: vec![1, 4, 5, 2, 4, 6, 6, 5],
            },
        ],
        ..Default::default()
    };
    let report = build_quality_report(&mesh);
    assert_eq!(report.n_cells, 4);
    assert_eq!(report.bad_cells, vec![3]);
    assert_eq!(report.max_aspect_ratio, f64::INFINITY);
    match check_cells(&mesh) {
        Err(MeshError::BadCells { cells }) => assert_eq!(cells, vec![3]),
        other => panic!("expected BadCells, got {other:?}"),
    }
}

#[test]
fn degenerate_triangle_is_bad() {
    // Three collinear points: zero area everywhere.
    let mesh = Mesh {
        dim: 2,
        points: vec![[0.0, 0.0, 0.0], [1.0, 1.0, 0.0], [2.0, 2.0, 0.0]],
        blocks: vec![CellBlock {
            kind: CellKind::Tri3,
            connectivity: vec![0, 1, 2],
        }],
        ..Default::default()
    };
    assert_eq!(build_quality_report(&mesh).bad_cells, vec![0]);
    // A nearly flat but genuine sliver (height 1e-3 of its length) is still valid.
    let mesh = Mesh {
        points: vec![[0.0, 0.0, 0.0], [1.0, 0.0, 0.0], [0.5, 1e-3, 0.0]],
        ..mesh
    };
    assert!(check_cells(&mesh).is_ok());
}

/// Tri6 with the mid-edge node of edge (0, 1) moved to `(m, 0)`: along that edge
/// `x(t) = t (2t - 1) + 4 t (1 - t) m`, so `dx/dt(0) = 4m - 1`, negative for `m < 1/4`.
fn tri6_with_mid_node(m: f64) -> Mesh {
    let mut mesh = one_cell(CellKind::Tri6, |p| p);
    mesh.points[3] = [m, 0.0, 0.0];
    mesh
}

#[test]
fn quadratic_cell_inverted_near_corner_is_bad() {
    let q = cell_quality(&tri6_with_mid_node(0.15), 0);
    assert!(q.min_det < 0.0 && q.max_det > 0.0, "{q:?}");
    assert_eq!(
        build_quality_report(&tri6_with_mid_node(0.15)).bad_cells,
        vec![0]
    );
    let ratio = cell_quality(&tri6_with_mid_node(0.35), 0).jacobian_ratio();
    assert!(ratio > 0.0 && ratio < 1.0, "ratio {ratio}");
    assert!(check_cells(&tri6_with_mid_node(0.35)).is_ok());
}

#[test]
fn aspect_ratio_of_rectangle_and_right_triangle() {
    let rect = one_cell(CellKind::Quad4, |p| [2.0 * p[0], 0.5 * p[1], 0.0]);
    let q = cell_quality(&rect, 0);
    assert!((q.aspect_ratio - 4.0).abs() < 1e-14, "{q:?}");
    // Quad4 on [-1,1]^2 scaled by (2, 0.5): det J = 2 * 0.5 = 1 everywhere.
    assert!((q.min_det - 1.0).abs() < 1e-14 && (q.max_det - 1.0).abs() < 1e-14);
    let tri = one_cell(CellKind::Tri3, |p| p);
    let q = cell_quality(&tri, 0);
    assert!((q.aspect_ratio - 2f64.sqrt()).abs() < 1e-14, "{q:?}");
    let report = build_quality_report(&tri);
    assert_eq!(report.min_aspect_ratio, report.max_aspect_ratio);
}

#[test]
fn empty_mesh_has_neutral_report() {
    let mesh = Mesh {
        dim: 3,
        ..Default::default()
    };
    let report = check_cells(&mesh).expect("empty mesh is fine");
    assert_eq!(report.n_cells, 0);
    assert_eq!(report.min_jacobian_ratio, 1.0);
    assert!(report.bad_cells.is_empty());
}

#[test]
fn non_finite_coordinates_make_a_cell_bad() {
    let mut mesh = one_cell(CellKind::Hex8, affine(3));
    mesh.points[6][1] = f64::NAN;
    assert_eq!(build_quality_report(&mesh).bad_cells, vec![0]);
    assert!(check_cells(&mesh).is_err());
}

/// A line cell in a 2D mesh has no signed determinant; its length density |dx/dxi| is used.
#[test]
fn lower_dimensional_cells_use_the_measure_density() {
    let mesh = Mesh {
        dim: 2,
        points: vec![[1.0, 1.0, 0.0], [4.0, 5.0, 0.0], [1.0, 1.0, 0.0]],
        blocks: vec![CellBlock {
            kind: CellKind::Line2,
            connectivity: vec![0, 1, 1, 0, 0, 2],
        }],
        ..Default::default()
    };
    // Length 5 on the reference interval of length 2: density 2.5, in either direction.
    for cell in 0..2 {
        let q = cell_quality(&mesh, cell);
        assert!(
            (q.min_det - 2.5).abs() < 1e-14 && (q.max_det - 2.5).abs() < 1e-14,
            "{q:?}"
        );
    }
    // The zero-length line is degenerate.
    assert_eq!(build_quality_report(&mesh).bad_cells, vec![2]);
}

#[test]
fn report_agrees_with_cell_quality() {
    let mut mesh = one_cell(CellKind::Hex27, warp(3));
    let n = mesh.points.len();
    // Second cell: the same hex shifted, sharing no nodes.
    let shifted: Vec<[f64; 3]> = mesh
        .points
        .iter()
        .map(|p| [p[0] + 5.0, 2.0 * p[1], p[2]])
        .collect();
    mesh.points.extend(shifted);
    mesh.blocks[0].connectivity.extend(n..2 * n);
    let report = build_quality_report(&mesh);
    let ratios: Vec<f64> = (0..2)
        .map(|c| cell_quality(&mesh, c).jacobian_ratio())
        .collect();
    let aspects: Vec<f64> = (0..2)
        .map(|c| cell_quality(&mesh, c).aspect_ratio)
        .collect();
    assert_eq!(report.min_jacobian_ratio, ratios[0].min(ratios[1]));
    assert_eq!(report.max_jacobian_ratio, ratios[0].max(ratios[1]));
    assert_eq!(report.min_aspect_ratio, aspects[0].min(aspects[1]));
    assert_eq!(report.max_aspect_ratio, aspects[0].max(aspects[1]));
    assert!(report.bad_cells.is_empty());
}
