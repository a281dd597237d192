//! Per-generator tests; the shared checks live in the parent module.

use std::f64::consts::{FRAC_PI_2, PI, TAU};

use super::{
    annulus_sector, assert_same_corners, ball_octant, check_mesh, corner_measure, cuboid, disc,
    inclusion_ball_octant, inclusion_quarter_disc, norm, notched_plate, per_axis, plane,
    quarter_disc, rectangle, shell_octant, sphere, sub, total_measure, AnnulusParams, BallParams,
    BoxParams, CellKind, DiscParams, Expect, InclusionParams, Mesh, MeshError, NotchedPlateParams,
    Point, RectangleParams, Shape, ShellParams,
};

const PLANAR: [CellKind; 5] = [
    CellKind::Tri3,
    CellKind::Tri6,
    CellKind::Quad4,
    CellKind::Quad8,
    CellKind::Quad9,
];
const SOLID: [CellKind; 5] = [
    CellKind::Tet4,
    CellKind::Tet10,
    CellKind::Hex8,
    CellKind::Hex20,
    CellKind::Hex27,
];
const QUADS: [CellKind; 3] = [CellKind::Quad4, CellKind::Quad8, CellKind::Quad9];
const HEXES: [CellKind; 3] = [CellKind::Hex8, CellKind::Hex20, CellKind::Hex27];

/// Node count of a quadrilateral or hexahedral mesh of `kind` from the count of its full
/// half-step lattice (`n_lattice`, what Quad9/Hex27 have), its cells and its boundary facets:
/// Quad8 drops one centre per cell; Hex20 drops cell centres and one centre per distinct face,
/// and a hex mesh has `(6 n_cells + n_boundary_faces) / 2` distinct faces (each interior face
/// is shared by two cells; counting argument, no source).
fn serendipity_count(
    kind: CellKind,
    n_lattice: usize,
    n_cells: usize,
    n_boundary_facets: usize,
) -> usize {
    match kind {
        CellKind::Quad8 => n_lattice - n_cells,
        CellKind::Hex20 => n_lattice - n_cells - (6 * n_cells + n_boundary_facets) / 2,
        _ => n_lattice,
    }
}

/// For an affine block the node at reference coordinate ξ is the affine image of ξ, which pins
/// the node order (VTK order, including Quad9 centre 8 and Hex27 face centres 20..25 in facet
/// order) to `CellKind::reference_nodes`.
fn assert_affine_node_placement(mesh: &Mesh) {
    for (id, kind, _) in mesh.cells() {
        let x = mesh.cell_coords(id);
        let reference = kind.reference_nodes();
        for (node, xi) in reference.iter().enumerate() {
            let expected: Point = match kind.shape() {
                Shape::Triangle | Shape::Tetrahedron => {
                    let mut p = x[0];
                    for i in 0..mesh.dim {
                        let e = sub(x[i + 1], x[0]);
                        for d in 0..3 {
                            p[d] += xi[i] * e[d];
                        }
                    }
                    p
                }
                _ => {
                    // Cells of a box are axis-aligned: corner 0 is the smallest, the opposite
                    // corner (2 for a quadrilateral, 6 for a hexahedron) the largest.
                    let far = if mesh.dim == 2 { x[2] } else { x[6] };
                    let mut p = [0.0; 3];
                    for d in 0..3 {
                        p[d] = x[0][d] + (xi[d] + 1.0) / 2.0 * (far[d] - x[0][d]);
                    }
                    p
                }
            };
            assert!(
                norm(sub(x[node], expected)) < 1e-12,
                "{kind} cell {id} node {node}: {:?} vs {expected:?}",
                x[node]
            );
        }
    }
}

/// Rectangle: counts, boundaries, exact area, node order (every kind).
#[test]
fn rectangle_every_kind() {
    let (nx, ny) = (3, 2);
    for kind in PLANAR {
        let params = RectangleParams {
            origin: [-1.0, 0.5],
            lengths: [2.0, 3.0],
            n_cells: [nx, ny],
            kind,
        };
        let mesh = rectangle(&params).unwrap();
        let n_quads = nx * ny;
        let n_cells = if kind.shape() == Shape::Triangle {
            2 * n_quads
        } else {
            n_quads
        };
        let n_lattice = per_axis(nx, kind) * per_axis(ny, kind);
        let expect = Expect {
            kind,
            n_points: serendipity_count(kind, n_lattice, n_cells, 0),
            n_cells,
            scale: 3.0,
            boundaries: vec![
                plane("left", ny, 0, -1.0, -1.0),
                plane("right", ny, 0, 1.0, 1.0),
                plane("bottom", nx, 1, 0.5, -1.0),
                plane("top", nx, 1, 3.5, 1.0),
            ],
            aliases: vec![],
        };
        check_mesh(&mesh, &expect);
        assert_affine_node_placement(&mesh);
        // Area of the rectangle, 2 × 3 (exact up to rounding).
        assert!((total_measure(&mesh) - 6.0).abs() < 1e-12, "{kind}");
    }
}

/// Box: counts, boundaries, exact volume, node order (every kind).
#[test]
fn cuboid_every_kind() {
    let [nx, ny, nz] = [2, 1, 3];
    for kind in SOLID {
        let params = BoxParams {
            origin: [0.0, -2.0, 1.0],
            lengths: [1.0, 2.0, 0.5],
            n_cells: [nx, ny, nz],
            kind,
        };
        let mesh = cuboid(&params).unwrap();
        let n_hexes = nx * ny * nz;
        let per_face = if kind.shape() == Shape::Tetrahedron {
            2
        } else {
            1
        };
        let n_cells = if kind.shape() == Shape::Tetrahedron {
            6 * n_hexes
        } else {
            n_hexes
        };
        let n_lattice = per_axis(nx, kind) * per_axis(ny, kind) * per_axis(nz, kind);
        let n_boundary = 2 * (nx * ny + ny * nz + nx * nz);
        let expect = Expect {
            kind,
            n_points: serendipity_count(kind, n_lattice, n_cells, n_boundary),
            n_cells,
            scale: 2.0,
            boundaries: vec![
                plane("left", per_face * ny * nz, 0, 0.0, -1.0),
                plane("right", per_face * ny * nz, 0, 1.0, 1.0),
                plane("bottom", per_face * nx * nz, 1, -2.0, -1.0),
                plane("top", per_face * nx * nz, 1, 0.0, 1.0),
                plane("back", per_face * nx * ny, 2, 1.0, -1.0),
                plane("front", per_face * nx * ny, 2, 1.5, 1.0),
            ],
            aliases: vec![],
        };
        check_mesh(&mesh, &expect);
        assert_affine_node_placement(&mesh);
        // Volume 1 × 2 × 0.5.
        assert!((total_measure(&mesh) - 1.0).abs() < 1e-12, "{kind}");
    }
}

fn quarter_disc_expect(kind: CellKind, n: usize, radius: f64) -> Expect {
    let n_cells = 3 * n * n;
    // Core (L+1)² nodes plus L layers of 2L+1 nodes, L = n (corners) or 2n (half steps).
    let l = per_axis(n, kind) - 1;
    let n_lattice = (l + 1) * (l + 1) + l * (2 * l + 1);
    Expect {
        kind,
        n_points: serendipity_count(kind, n_lattice, n_cells, 0),
        n_cells,
        scale: radius,
        boundaries: vec![
            sphere("outer", 2 * n, radius, 1.0),
            plane("symmetry_x", 2 * n, 0, 0.0, -1.0),
            plane("symmetry_y", 2 * n, 1, 0.0, -1.0),
            plane("axis", 2 * n, 0, 0.0, -1.0),
        ],
        aliases: vec![("axis", "symmetry_x")],
    }
}

#[test]
fn quarter_disc_every_kind() {
    for n in [1, 3] {
        for kind in QUADS {
            let mesh = quarter_disc(&DiscParams {
                radius: 2.0,
                n_cells: n,
                kind,
            })
            .unwrap();
            check_mesh(&mesh, &quarter_disc_expect(kind, n, 2.0));
        }
    }
}

#[test]
fn disc_every_kind() {
    for n in [1, 2] {
        for kind in QUADS {
            let mesh = disc(&DiscParams {
                radius: 0.5,
                n_cells: n,
                kind,
            })
            .unwrap();
            let n_cells = 12 * n * n;
            // Core (2L+1)² nodes plus L layers of 8L nodes, L = n or 2n.
            let l = per_axis(n, kind) - 1;
            let n_lattice = (2 * l + 1) * (2 * l + 1) + l * 8 * l;
            let expect = Expect {
                kind,
                n_points: serendipity_count(kind, n_lattice, n_cells, 0),
                n_cells,
                scale: 0.5,
                boundaries: vec![sphere("outer", 8 * n, 0.5, 1.0)],
                aliases: vec![],
            };
            check_mesh(&mesh, &expect);
        }
    }
}

/// Open sectors (including the quarter annulus of the Lamé problem) and the full annulus.
#[test]
fn annulus_every_kind() {
    let cases = [
        (FRAC_PI_2, 2, 3),
        (0.75 * PI, 1, 2),
        (TAU, 2, 6),
        (2.0 * PI, 1, 4),
    ];
    for (angle, n_radial, n_angular) in cases {
        for kind in QUADS {
            let params = AnnulusParams {
                inner_radius: 1.0,
                outer_radius: 3.0,
                angle,
                n_radial,
                n_angular,
                kind,
            };
            let mesh = annulus_sector(&params).unwrap();
            let closed = angle == TAU;
            let n_cells = n_radial * n_angular;
            let radial_nodes = per_axis(n_radial, kind);
            let angular_nodes = per_axis(n_angular, kind) - usize::from(closed);
            let mut boundaries = vec![
                sphere("inner", n_angular, 1.0, -1.0),
                sphere("outer", n_angular, 3.0, 1.0),
            ];
            if !closed {
                boundaries.push(plane("start", n_radial, 1, 0.0, -1.0));
                let (s, c) = angle.sin_cos();
                boundaries.push(super::BoundaryCheck {
                    name: "end",
                    n_facets: n_radial,
                    // Distance from the line θ = angle; outward normal (sin, -cos) · (-1).
                    residual: Box::new(move |p| p[0] * s - p[1] * c),
                    outward: Box::new(move |_| [-s, c, 0.0]),
                });
            }
            let expect = Expect {
                kind,
                n_points: serendipity_count(kind, radial_nodes * angular_nodes, n_cells, 0),
                n_cells,
                scale: 3.0,
                boundaries,
                aliases: vec![],
            };
            check_mesh(&mesh, &expect);
        }
    }
}

/// Plate with a quarter-circle notch: both blocks, shared seam, every straight edge and the arc,
/// graded and uniform, and its area against `W H − π a²/4` (exact geometry).
#[test]
fn notched_plate_every_kind() {
    for (grading, n_radial, n_angular) in [(1.0, 2, 3), (4.0, 5, 2)] {
        for kind in QUADS {
            let (w, h, a) = (3.0, 2.0, 0.5);
            let mesh = notched_plate(&NotchedPlateParams {
                width: w,
                height: h,
                radius: a,
                n_radial,
                n_angular,
                grading,
                kind,
            })
            .unwrap();
            let n_cells = 2 * n_radial * n_angular;
            let lattice = per_axis(n_radial, kind) * per_axis(2 * n_angular, kind);
            let expect = Expect {
                kind,
                n_points: serendipity_count(kind, lattice, n_cells, 0),
                n_cells,
                scale: w,
                boundaries: vec![
                    sphere("notch", 2 * n_angular, a, -1.0),
                    plane("bottom", n_radial, 1, 0.0, -1.0),
                    plane("left", n_radial, 0, 0.0, -1.0),
                    plane("right", n_angular, 0, w, 1.0),
                    plane("top", n_angular, 1, h, 1.0),
                ],
                aliases: vec![],
            };
            check_mesh(&mesh, &expect);
            if kind != CellKind::Quad4 {
                // Quadratic arcs: the area error is that of a parabola through three points
                // of the circle, small but not round-off.
                let exact = w * h - PI * a * a / 4.0;
                let area = total_measure(&mesh);
                assert!(
                    (area - exact).abs() < 2e-3 * exact,
                    "{kind}: {area} vs {exact}"
                );
            }
        }
    }
    assert!(notched_plate(&NotchedPlateParams {
        width: 1.0,
        height: 1.0,
        radius: 1.0,
        n_radial: 1,
        n_angular: 1,
        grading: 1.0,
        kind: CellKind::Quad4,
    })
    .is_err());
}

fn ball_expect(kind: CellKind, n: usize, radius: f64) -> Expect {
    let n_cells = 4 * n * n * n;
    // Core (L+1)³ nodes plus L layers of (L+1)³ - L³ nodes.
    let l = per_axis(n, kind) - 1;
    let n_lattice = (l + 1).pow(3) + l * ((l + 1).pow(3) - l.pow(3));
    let n_boundary = 12 * n * n;
    Expect {
        kind,
        n_points: serendipity_count(kind, n_lattice, n_cells, n_boundary),
        n_cells,
        scale: radius,
        boundaries: vec![
            sphere("outer", 3 * n * n, radius, 1.0),
            plane("symmetry_x", 3 * n * n, 0, 0.0, -1.0),
            plane("symmetry_y", 3 * n * n, 1, 0.0, -1.0),
            plane("symmetry_z", 3 * n * n, 2, 0.0, -1.0),
        ],
        aliases: vec![],
    }
}

#[test]
fn ball_octant_every_kind() {
    for n in [1, 2] {
        for kind in HEXES {
            let mesh = ball_octant(&BallParams {
                radius: 1.5,
                n_cells: n,
                kind,
            })
            .unwrap();
            check_mesh(&mesh, &ball_expect(kind, n, 1.5));
        }
    }
}

fn shell_expect(kind: CellKind, n_radial: usize, n_angular: usize, radii: [f64; 2]) -> Expect {
    let n_cells = 3 * n_angular * n_angular * n_radial;
    // Radial layers times the nodes of the octant surface, 3L² + 3L + 1.
    let l = per_axis(n_angular, kind) - 1;
    let n_lattice = per_axis(n_radial, kind) * (3 * l * l + 3 * l + 1);
    let n_boundary = 6 * n_angular * n_angular + 6 * n_angular * n_radial;
    Expect {
        kind,
        n_points: serendipity_count(kind, n_lattice, n_cells, n_boundary),
        n_cells,
        scale: radii[1],
        boundaries: vec![
            sphere("inner", 3 * n_angular * n_angular, radii[0], -1.0),
            sphere("outer", 3 * n_angular * n_angular, radii[1], 1.0),
            plane("symmetry_x", 2 * n_angular * n_radial, 0, 0.0, -1.0),
            plane("symmetry_y", 2 * n_angular * n_radial, 1, 0.0, -1.0),
            plane("symmetry_z", 2 * n_angular * n_radial, 2, 0.0, -1.0),
        ],
        aliases: vec![],
    }
}

#[test]
fn shell_octant_every_kind() {
    for (n_radial, n_angular) in [(1, 1), (2, 3)] {
        for kind in HEXES {
            let params = ShellParams {
                inner_radius: 0.8,
                outer_radius: 1.0,
                n_radial,
                n_angular,
                kind,
            };
            let mesh = shell_octant(&params).unwrap();
            check_mesh(&mesh, &shell_expect(kind, n_radial, n_angular, [0.8, 1.0]));
        }
    }
}

/// The corners of every quadratic mesh are the nodes of the linear mesh with the same parameters.
#[test]
fn quadratic_meshes_share_the_linear_corners() {
    let triangles = RectangleParams {
        origin: [0.0; 2],
        lengths: [1.0; 2],
        n_cells: [2, 3],
        kind: CellKind::Tri3,
    };
    let tri3 = rectangle(&triangles).unwrap();
    let tri6 = rectangle(&RectangleParams {
        kind: CellKind::Tri6,
        ..triangles
    })
    .unwrap();
    assert_same_corners(&tri6, &tri3, 1.0);
    let linear = quarter_disc(&DiscParams {
        radius: 1.0,
        n_cells: 2,
        kind: CellKind::Quad4,
    })
    .unwrap();
    let whole = disc(&DiscParams {
        radius: 1.0,
        n_cells: 2,
        kind: CellKind::Quad4,
    })
    .unwrap();
    let ring = AnnulusParams {
        inner_radius: 0.5,
        outer_radius: 1.0,
        angle: TAU,
        n_radial: 2,
        n_angular: 5,
        kind: CellKind::Quad4,
    };
    let ring_linear = annulus_sector(&ring).unwrap();
    for kind in [CellKind::Quad8, CellKind::Quad9] {
        assert_same_corners(
            &quarter_disc(&DiscParams {
                radius: 1.0,
                n_cells: 2,
                kind,
            })
            .unwrap(),
            &linear,
            1.0,
        );
        assert_same_corners(
            &disc(&DiscParams {
                radius: 1.0,
                n_cells: 2,
                kind,
            })
            .unwrap(),
            &whole,
            1.0,
        );
        assert_same_corners(
            &annulus_sector(&AnnulusParams { kind, ..ring }).unwrap(),
            &ring_linear,
            1.0,
        );
    }
    let ball = ball_octant(&BallParams {
        radius: 1.0,
        n_cells: 2,
        kind: CellKind::Hex8,
    })
    .unwrap();
    let shell = ShellParams {
        inner_radius: 0.5,
        outer_radius: 1.0,
        n_radial: 2,
        n_angular: 2,
        kind: CellKind::Hex8,
    };
    let shell_linear = shell_octant(&shell).unwrap();
    for kind in [CellKind::Hex20, CellKind::Hex27] {
        assert_same_corners(
            &ball_octant(&BallParams {
                radius: 1.0,
                n_cells: 2,
                kind,
            })
            .unwrap(),
            &ball,
            1.0,
        );
        assert_same_corners(
            &shell_octant(&ShellParams { kind, ..shell }).unwrap(),
            &shell_linear,
            1.0,
        );
    }
    let tets = cuboid(&BoxParams {
        origin: [0.0; 3],
        lengths: [1.0; 3],
        n_cells: [2, 1, 2],
        kind: CellKind::Tet4,
    });
    let tet10 = cuboid(&BoxParams {
        origin: [0.0; 3],
        lengths: [1.0; 3],
        n_cells: [2, 1, 2],
        kind: CellKind::Tet10,
    });
    assert_same_corners(&tet10.unwrap(), &tets.unwrap(), 1.0);
}

/// Area/volume error of the linear (corner) mesh of a curved domain at resolution `n` and `2n`.
/// Straight edges (bilinear faces) between nodes on the circle (sphere) cut off segments whose
/// total is O(h²) (chord–arc geometry: a segment of angle α has area R²(α − sin α)/2 ≈ R²α³/12
/// and there are O(1/α) of them), so the error should drop by about 4 per halving of h.
fn assert_second_order(label: &str, exact: f64, measure: impl Fn(usize) -> f64, n: usize) {
    let coarse = (measure(n) - exact).abs();
    let fine = (measure(2 * n) - exact).abs();
    let ratio = coarse / fine;
    println!("{label}: error {coarse:.3e} -> {fine:.3e}, ratio {ratio:.3}");
    assert!(
        fine < 0.02 * exact,
        "{label}: relative error {} too large",
        fine / exact
    );
    assert!(
        (3.4..=4.6).contains(&ratio),
        "{label}: error ratio {ratio} not near 4"
    );
}

#[test]
fn curved_domains_converge_in_area_and_volume() {
    let r: f64 = 1.3;
    let quarter = |n| {
        total_measure(
            &quarter_disc(&DiscParams {
                radius: r,
                n_cells: n,
                kind: CellKind::Quad4,
            })
            .unwrap(),
        )
    };
    assert_second_order("quarter disc", PI * r * r / 4.0, quarter, 4);
    let full = |n| {
        total_measure(
            &disc(&DiscParams {
                radius: r,
                n_cells: n,
                kind: CellKind::Quad4,
            })
            .unwrap(),
        )
    };
    assert_second_order("disc", PI * r * r, full, 4);
    let lame = |n| {
        let p = AnnulusParams {
            inner_radius: 1.0,
            outer_radius: 2.0,
            angle: FRAC_PI_2,
            n_radial: n,
            n_angular: n,
            kind: CellKind::Quad4,
        };
        total_measure(&annulus_sector(&p).unwrap())
    };
    assert_second_order("quarter annulus", PI * (4.0 - 1.0) / 4.0, lame, 4);
    let ball = |n| {
        total_measure(
            &ball_octant(&BallParams {
                radius: r,
                n_cells: n,
                kind: CellKind::Hex8,
            })
            .unwrap(),
        )
    };
    // Octant of a ball: (1/8)(4/3)πR³.
    assert_second_order("ball octant", PI * r.powi(3) / 6.0, ball, 3);
    let shell = |n| {
        let p = ShellParams {
            inner_radius: 0.5,
            outer_radius: r,
            n_radial: n,
            n_angular: n,
            kind: CellKind::Hex8,
        };
        total_measure(&shell_octant(&p).unwrap())
    };
    assert_second_order("shell octant", PI * (r.powi(3) - 0.125) / 6.0, shell, 3);
}

fn generator_message(result: Result<Mesh, MeshError>) -> String {
    match result {
        Err(MeshError::Generator(message)) => message,
        Err(other) => panic!("expected a generator error, got {other}"),
        Ok(_) => panic!("expected a generator error, got a mesh"),
    }
}

#[test]
fn bad_parameters_are_typed_errors_saying_what_was_expected() {
    let rect = RectangleParams {
        origin: [0.0; 2],
        lengths: [1.0; 2],
        n_cells: [1, 1],
        kind: CellKind::Quad4,
    };
    let m = generator_message(rectangle(&RectangleParams {
        kind: CellKind::Hex8,
        ..rect
    }));
    assert!(
        m.contains("hex8") && m.contains("expected one of tri3, tri6, quad4, quad8, quad9"),
        "{m}"
    );
    let m = generator_message(rectangle(&RectangleParams {
        lengths: [1.0, -2.0],
        ..rect
    }));
    assert!(
        m.contains("lengths[1] must be a finite positive number, got -2"),
        "{m}"
    );
    let m = generator_message(rectangle(&RectangleParams {
        n_cells: [0, 1],
        ..rect
    }));
    assert!(m.contains("n_cells[0] must be at least 1"), "{m}");
    let m = generator_message(rectangle(&RectangleParams {
        origin: [f64::NAN, 0.0],
        ..rect
    }));
    assert!(m.contains("origin[0] must be a finite number"), "{m}");
    let m = generator_message(rectangle(&RectangleParams {
        n_cells: [usize::MAX / 2, 3],
        ..rect
    }));
    assert!(m.contains("too many cells"), "{m}");

    let cube = BoxParams {
        origin: [0.0; 3],
        lengths: [1.0; 3],
        n_cells: [1; 3],
        kind: CellKind::Quad4,
    };
    let m = generator_message(cuboid(&cube));
    assert!(
        m.contains("expected one of tet4, tet10, hex8, hex20, hex27"),
        "{m}"
    );
    let m = generator_message(cuboid(&BoxParams {
        lengths: [1.0, 1.0, f64::INFINITY],
        kind: CellKind::Hex8,
        ..cube
    }));
    assert!(
        m.contains("lengths[2] must be a finite positive number"),
        "{m}"
    );

    let round = DiscParams {
        radius: 1.0,
        n_cells: 1,
        kind: CellKind::Tri3,
    };
    assert!(generator_message(quarter_disc(&round)).contains("expected one of quad4, quad8, quad9"));
    let m = generator_message(disc(&DiscParams {
        radius: 0.0,
        kind: CellKind::Quad4,
        ..round
    }));
    assert!(
        m.contains("radius must be a finite positive number, got 0"),
        "{m}"
    );
    let m = generator_message(quarter_disc(&DiscParams {
        n_cells: 0,
        kind: CellKind::Quad9,
        ..round
    }));
    assert!(m.contains("n_cells must be at least 1"), "{m}");

    let ring = AnnulusParams {
        inner_radius: 2.0,
        outer_radius: 1.0,
        angle: 1.0,
        n_radial: 1,
        n_angular: 1,
        kind: CellKind::Quad4,
    };
    let m = generator_message(annulus_sector(&ring));
    assert!(
        m.contains("inner_radius must be smaller than outer_radius"),
        "{m}"
    );
    let ring = AnnulusParams {
        inner_radius: 0.5,
        ..ring
    };
    let m = generator_message(annulus_sector(&AnnulusParams { angle: 7.0, ..ring }));
    assert!(m.contains("0 < angle <= 2π, got 7"), "{m}");
    let m = generator_message(annulus_sector(&AnnulusParams {
        angle: -1.0,
        ..ring
    }));
    assert!(m.contains("0 < angle <= 2π"), "{m}");
    let m = generator_message(annulus_sector(&AnnulusParams {
        angle: TAU,
        n_angular: 3,
        ..ring
    }));
    assert!(
        m.contains("at most a quarter turn") && m.contains("n_angular >= 4, got 3"),
        "{m}"
    );
    let m = generator_message(annulus_sector(&AnnulusParams {
        inner_radius: 0.0,
        ..ring
    }));
    assert!(
        m.contains("inner_radius must be a finite positive number"),
        "{m}"
    );

    let ball = BallParams {
        radius: -1.0,
        n_cells: 1,
        kind: CellKind::Hex27,
    };
    assert!(
        generator_message(ball_octant(&ball)).contains("radius must be a finite positive number")
    );
    let m = generator_message(ball_octant(&BallParams {
        radius: 1.0,
        kind: CellKind::Tet4,
        ..ball
    }));
    assert!(m.contains("expected one of hex8, hex20, hex27"), "{m}");

    let shell = ShellParams {
        inner_radius: 1.0,
        outer_radius: 1.0,
        n_radial: 1,
        n_angular: 1,
        kind: CellKind::Hex8,
    };
    assert!(generator_message(shell_octant(&shell))
        .contains("inner_radius must be smaller than outer_radius"));
    let m = generator_message(shell_octant(&ShellParams {
        outer_radius: 2.0,
        n_angular: 0,
        ..shell
    }));
    assert!(m.contains("n_angular must be at least 1"), "{m}");
}

fn inclusion_params(n: usize, m: usize, kind: CellKind) -> InclusionParams {
    InclusionParams {
        inclusion_radius: 0.4,
        radius: 2.0,
        n_inclusion: n,
        n_matrix: m,
        grading: 3.0,
        kind,
    }
}

/// Checks shared by both inclusion meshes: the regions split the cells, the inclusion cells lie
/// in `r ≤ a` and the matrix cells in `r ≥ a`, and every node shared by the two regions (mid-edge
/// and face nodes included) lies on the sphere `r = a`; at least one layer of such nodes exists.
fn check_inclusion_regions(mesh: &Mesh, a: f64, n_inclusion_cells: usize) {
    let inclusion = mesh.region("inclusion").unwrap();
    let matrix = mesh.region("matrix").unwrap();
    assert_eq!(
        inclusion,
        (0..n_inclusion_cells).collect::<Vec<_>>().as_slice()
    );
    assert_eq!(
        matrix,
        (n_inclusion_cells..mesh.n_cells())
            .collect::<Vec<_>>()
            .as_slice()
    );
    let mut side = vec![0u8; mesh.n_points()];
    for (id, _, nodes) in mesh.cells() {
        let inside = id < n_inclusion_cells;
        for &n in nodes {
            let r = norm(mesh.points[n]);
            if inside {
                assert!(
                    r <= a * (1.0 + 1e-12),
                    "inclusion cell {id} reaches r = {r}"
                );
                side[n] |= 1;
            } else {
                assert!(r >= a * (1.0 - 1e-12), "matrix cell {id} reaches r = {r}");
                side[n] |= 2;
            }
        }
    }
    let shared: Vec<usize> = (0..mesh.n_points()).filter(|&n| side[n] == 3).collect();
    assert!(!shared.is_empty());
    for n in shared {
        let r = norm(mesh.points[n]);
        assert!((r - a).abs() <= 1e-12 * a, "interface node {n} at r = {r}");
    }
}

#[test]
fn inclusion_quarter_disc_every_kind() {
    for (n, m) in [(1, 1), (2, 3)] {
        for kind in QUADS {
            let p = inclusion_params(n, m, kind);
            let mesh = inclusion_quarter_disc(&p).unwrap();
            let n_cells = 3 * n * n + 2 * n * m;
            let l = per_axis(n, kind) - 1;
            let lm = per_axis(m, kind) - 1;
            let n_lattice = (l + 1) * (l + 1) + l * (2 * l + 1) + lm * (2 * l + 1);
            let expect = Expect {
                kind,
                n_points: serendipity_count(kind, n_lattice, n_cells, 0),
                n_cells,
                scale: p.radius,
                boundaries: vec![
                    sphere("outer", 2 * n, p.radius, 1.0),
                    plane("symmetry_x", 2 * n + m, 0, 0.0, -1.0),
                    plane("symmetry_y", 2 * n + m, 1, 0.0, -1.0),
                    plane("axis", 2 * n + m, 0, 0.0, -1.0),
                ],
                aliases: vec![("axis", "symmetry_x")],
            };
            check_mesh(&mesh, &expect);
            check_inclusion_regions(&mesh, p.inclusion_radius, 3 * n * n);
        }
    }
}

#[test]
fn inclusion_ball_octant_every_kind() {
    for (n, m) in [(1, 1), (2, 2)] {
        for kind in HEXES {
            let p = inclusion_params(n, m, kind);
            let mesh = inclusion_ball_octant(&p).unwrap();
            let n_cells = 4 * n * n * n + 3 * n * n * m;
            let l = per_axis(n, kind) - 1;
            let lm = per_axis(m, kind) - 1;
            let surface = (l + 1).pow(3) - l.pow(3);
            let n_lattice = (l + 1).pow(3) + (l + lm) * surface;
            let n_sym = 3 * n * n + 2 * n * m;
            let n_boundary = 3 * n * n + 3 * n_sym;
            let expect = Expect {
                kind,
                n_points: serendipity_count(kind, n_lattice, n_cells, n_boundary),
                n_cells,
                scale: p.radius,
                boundaries: vec![
                    sphere("outer", 3 * n * n, p.radius, 1.0),
                    plane("symmetry_x", n_sym, 0, 0.0, -1.0),
                    plane("symmetry_y", n_sym, 1, 0.0, -1.0),
                    plane("symmetry_z", n_sym, 2, 0.0, -1.0),
                ],
                aliases: vec![],
            };
            check_mesh(&mesh, &expect);
            check_inclusion_regions(&mesh, p.inclusion_radius, 4 * n * n * n);
        }
    }
}

/// Measure of one region from the cell corners (multilinear cells).
fn region_measure(mesh: &Mesh, region: &str) -> f64 {
    mesh.region(region)
        .unwrap()
        .iter()
        .map(|&id| corner_measure(mesh.dim, mesh.cell(id).0, &mesh.cell_coords(id)))
        .sum()
}

/// The inclusion and matrix areas (volumes) converge at second order to πa²/4 and
/// π(R² − a²)/4 (octant: (π/6)a³ and (π/6)(R³ − a³)), as for the other curved generators
/// (chord–arc geometry, see `assert_second_order`); the graded matrix cells grow outwards.
#[test]
fn inclusion_regions_converge_in_area_and_volume() {
    let disc = |region: &'static str| {
        move |k: usize| {
            let p = inclusion_params(k, k, CellKind::Quad4);
            region_measure(&inclusion_quarter_disc(&p).unwrap(), region)
        }
    };
    let (a, r) = (0.4_f64, 2.0_f64);
    assert_second_order("inclusion disc", PI * a * a / 4.0, disc("inclusion"), 4);
    assert_second_order("matrix ring", PI * (r * r - a * a) / 4.0, disc("matrix"), 4);
    let ball = |region: &'static str| {
        move |k: usize| {
            let p = inclusion_params(k, k, CellKind::Hex8);
            region_measure(&inclusion_ball_octant(&p).unwrap(), region)
        }
    };
    assert_second_order("inclusion ball", PI * a.powi(3) / 6.0, ball("inclusion"), 3);
    assert_second_order(
        "matrix shell",
        PI * (r.powi(3) - a.powi(3)) / 6.0,
        ball("matrix"),
        3,
    );
    // Grading 3: along the x axis the last matrix cell is 3 times as long as the first.
    let mesh = inclusion_quarter_disc(&inclusion_params(2, 5, CellKind::Quad4)).unwrap();
    let mut xs: Vec<f64> = mesh
        .points
        .iter()
        .filter(|p| p[1] == 0.0 && p[0] >= a * (1.0 - 1e-12))
        .map(|p| p[0])
        .collect();
    xs.sort_by(|u, v| u.partial_cmp(v).unwrap());
    assert_eq!(xs.len(), 6);
    let first = xs[1] - xs[0];
    let last = xs[5] - xs[4];
    assert!((last / first - 3.0).abs() < 1e-9, "{}", last / first);
}

#[test]
fn inclusion_parameters_are_checked() {
    let good = inclusion_params(2, 2, CellKind::Quad8);
    let m = generator_message(inclusion_quarter_disc(&InclusionParams {
        inclusion_radius: 2.0,
        ..good
    }));
    assert!(
        m.contains("inclusion_radius must be smaller than radius"),
        "{m}"
    );
    let m = generator_message(inclusion_quarter_disc(&InclusionParams {
        grading: 0.0,
        ..good
    }));
    assert!(m.contains("grading"), "{m}");
    let m = generator_message(inclusion_quarter_disc(&InclusionParams {
        n_matrix: 0,
        ..good
    }));
    assert!(m.contains("n_matrix must be at least 1"), "{m}");
    let m = generator_message(inclusion_ball_octant(&good));
    assert!(m.contains("cell kind quad8 is not available"), "{m}");
    let m = generator_message(inclusion_quarter_disc(&InclusionParams {
        n_inclusion: usize::MAX / 2,
        ..good
    }));
    assert!(m.contains("too many cells"), "{m}");
}
