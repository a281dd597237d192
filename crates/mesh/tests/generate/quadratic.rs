//! Checks of quadratic geometry that need the quadratic map, not only the corners: tensor-product
//! Lagrange interpolation (Quad9, Hex27) written out here, since the mesh crate has no shape
//! functions.

use std::f64::consts::{FRAC_PI_2, PI, TAU};

use super::{
    annulus_sector, ball_octant, cuboid, det, disc, norm, quarter_disc, rectangle, shell_octant,
    sub, AnnulusParams, BallParams, BoxParams, CellKind, DiscParams, Mesh, Point, RectangleParams,
    ShellParams,
};

/// Quadratic Lagrange polynomial on `[-1, 1]` with nodes `-1, 0, 1` that is 1 at `node`, and its
/// derivative, at `t` (common practice, no source).
fn lagrange(node: f64, t: f64) -> (f64, f64) {
    if node < -0.5 {
        (0.5 * t * (t - 1.0), t - 0.5)
    } else if node > 0.5 {
        (0.5 * t * (t + 1.0), t + 0.5)
    } else {
        (1.0 - t * t, -2.0 * t)
    }
}

/// Determinant of the Jacobian of the tensor-product quadratic map of a Quad9 or Hex27 cell with
/// node positions `x`, at reference point `xi`. Node `a` interpolates at reference coordinate
/// `reference[a]`, so the map follows whatever node order `CellKind::reference_nodes` states.
fn jacobian(dim: usize, reference: &[Point], x: &[Point], xi: Point) -> f64 {
    let mut jac = [[0.0; 3]; 3];
    for (a, node) in reference.iter().enumerate() {
        for d in 0..dim {
            let mut dn = 1.0;
            for e in 0..dim {
                let (value, slope) = lagrange(node[e], xi[e]);
                dn *= if e == d { slope } else { value };
            }
            for (k, row) in jac.iter_mut().enumerate() {
                row[d] += x[a][k] * dn;
            }
        }
    }
    if dim == 2 {
        jac[0][0] * jac[1][1] - jac[0][1] * jac[1][0]
    } else {
        let col = |d: usize| [jac[0][d], jac[1][d], jac[2][d]];
        det(col(0), col(1), col(2))
    }
}

/// Tensor grid of `points` per direction over `[-1, 1]^dim`, with weights (unit for a sampling
/// grid).
fn grid(dim: usize, points: &[(f64, f64)]) -> Vec<(Point, f64)> {
    let mut out = vec![([0.0; 3], 1.0)];
    for d in 0..dim {
        out = out
            .into_iter()
            .flat_map(|(p, w)| {
                points.iter().map(move |&(t, v)| {
                    let mut q = p;
                    q[d] = t;
                    (q, w * v)
                })
            })
            .collect();
    }
    out
}

/// 3-point Gauss–Legendre rule: nodes 0, ±sqrt(3/5), weights 8/9, 5/9 (exact to degree 5;
/// common practice, no source). The Jacobian determinant of a Quad9 or Hex27 map has degree at
/// most 5 in each variable, so the area/volume below is exact for the quadratic cell.
fn gauss3() -> [(f64, f64); 3] {
    let t = (0.6_f64).sqrt();
    [(-t, 5.0 / 9.0), (0.0, 8.0 / 9.0), (t, 5.0 / 9.0)]
}

fn quadratic_measure(mesh: &Mesh) -> f64 {
    let rule = grid(mesh.dim, &gauss3());
    let mut total = 0.0;
    for (id, kind, _) in mesh.cells() {
        let reference = kind.reference_nodes();
        let x = mesh.cell_coords(id);
        total += rule
            .iter()
            .map(|(xi, w)| w * jacobian(mesh.dim, &reference, &x, *xi))
            .sum::<f64>();
    }
    total
}

/// Sample meshes of every generator with the full-Lagrange kind of its dimension.
fn lagrange_meshes() -> Vec<(&'static str, Mesh)> {
    let q = CellKind::Quad9;
    let h = CellKind::Hex27;
    let ring = |angle, n_angular| AnnulusParams {
        inner_radius: 0.3,
        outer_radius: 1.0,
        angle,
        n_radial: 1,
        n_angular,
        kind: q,
    };
    let shell = |n_radial, n_angular| ShellParams {
        inner_radius: 0.5,
        outer_radius: 1.0,
        n_radial,
        n_angular,
        kind: h,
    };
    let rect = RectangleParams {
        origin: [0.0; 2],
        lengths: [1.0, 2.0],
        n_cells: [2, 1],
        kind: q,
    };
    let block = BoxParams {
        origin: [0.0; 3],
        lengths: [1.0, 2.0, 3.0],
        n_cells: [1, 2, 1],
        kind: h,
    };
    vec![
        ("rectangle", rectangle(&rect).unwrap()),
        ("box", cuboid(&block).unwrap()),
        (
            "quarter disc 1",
            quarter_disc(&DiscParams {
                radius: 1.0,
                n_cells: 1,
                kind: q,
            })
            .unwrap(),
        ),
        (
            "quarter disc 3",
            quarter_disc(&DiscParams {
                radius: 1.0,
                n_cells: 3,
                kind: q,
            })
            .unwrap(),
        ),
        (
            "disc 1",
            disc(&DiscParams {
                radius: 1.0,
                n_cells: 1,
                kind: q,
            })
            .unwrap(),
        ),
        (
            "quarter annulus, one cell",
            annulus_sector(&ring(FRAC_PI_2, 1)).unwrap(),
        ),
        (
            "full annulus, four cells",
            annulus_sector(&ring(TAU, 4)).unwrap(),
        ),
        (
            "ball octant 1",
            ball_octant(&BallParams {
                radius: 1.0,
                n_cells: 1,
                kind: h,
            })
            .unwrap(),
        ),
        (
            "ball octant 2",
            ball_octant(&BallParams {
                radius: 1.0,
                n_cells: 2,
                kind: h,
            })
            .unwrap(),
        ),
        ("shell octant 1x1", shell_octant(&shell(1, 1)).unwrap()),
        ("shell octant 2x3", shell_octant(&shell(2, 3)).unwrap()),
    ]
}

/// The quadratic map of every cell has a positive Jacobian determinant on a 5^dim grid of
/// reference points (corners, mid-edges, quarter points, centre). This samples, it does not prove.
#[test]
fn quadratic_cells_have_positive_jacobian_on_a_sample_grid() {
    let samples: Vec<(f64, f64)> = [-1.0, -0.5, 0.0, 0.5, 1.0]
        .iter()
        .map(|&t| (t, 1.0))
        .collect();
    for (label, mesh) in lagrange_meshes() {
        let points = grid(mesh.dim, &samples);
        for (id, kind, _) in mesh.cells() {
            let reference = kind.reference_nodes();
            let x = mesh.cell_coords(id);
            for (xi, _) in &points {
                let j = jacobian(mesh.dim, &reference, &x, *xi);
                assert!(j > 0.0, "{label}: cell {id} has det J = {j} at {xi:?}");
            }
        }
    }
}

/// Serendipity cells are the Lagrange cells without their centre (and face-centre) nodes: same
/// cells in the same order, first 8 (20) nodes at the same places.
#[test]
fn serendipity_cells_match_lagrange_cells() {
    let pairs: Vec<(Mesh, Mesh)> = vec![
        (
            quarter_disc(&DiscParams {
                radius: 1.0,
                n_cells: 2,
                kind: CellKind::Quad8,
            })
            .unwrap(),
            quarter_disc(&DiscParams {
                radius: 1.0,
                n_cells: 2,
                kind: CellKind::Quad9,
            })
            .unwrap(),
        ),
        (
            disc(&DiscParams {
                radius: 1.0,
                n_cells: 1,
                kind: CellKind::Quad8,
            })
            .unwrap(),
            disc(&DiscParams {
                radius: 1.0,
                n_cells: 1,
                kind: CellKind::Quad9,
            })
            .unwrap(),
        ),
        (
            ball_octant(&BallParams {
                radius: 1.0,
                n_cells: 2,
                kind: CellKind::Hex20,
            })
            .unwrap(),
            ball_octant(&BallParams {
                radius: 1.0,
                n_cells: 2,
                kind: CellKind::Hex27,
            })
            .unwrap(),
        ),
    ];
    for (serendipity, lagrange) in pairs {
        assert_eq!(serendipity.n_cells(), lagrange.n_cells());
        for (id, kind, _) in serendipity.cells() {
            let a = serendipity.cell_coords(id);
            let b = lagrange.cell_coords(id);
            for (i, p) in a.iter().enumerate() {
                assert!(norm(sub(*p, b[i])) < 1e-14, "{kind} cell {id} node {i}");
            }
        }
    }
}

/// With nodes on the curved boundary and quadratic interpolation between them, the boundary is
/// approximated to O(h³) pointwise and the signed errors largely cancel along each edge, so the
/// area/volume error is expected to fall like h⁴ (a ratio near 16 per halving; from memory, the
/// usual isoparametric geometry estimate; the printed ratios are what was observed).
#[test]
fn quadratic_geometry_converges_faster_than_linear() {
    let q = CellKind::Quad9;
    let h = CellKind::Hex27;
    let r: f64 = 1.3;
    type Measure = Box<dyn Fn(usize) -> f64>;
    let cases: Vec<(&str, f64, Measure, usize)> = vec![
        (
            "quarter disc",
            PI * r * r / 4.0,
            Box::new(move |n| {
                quadratic_measure(
                    &quarter_disc(&DiscParams {
                        radius: r,
                        n_cells: n,
                        kind: q,
                    })
                    .unwrap(),
                )
            }),
            2,
        ),
        (
            "disc",
            PI * r * r,
            Box::new(move |n| {
                quadratic_measure(
                    &disc(&DiscParams {
                        radius: r,
                        n_cells: n,
                        kind: q,
                    })
                    .unwrap(),
                )
            }),
            2,
        ),
        (
            "quarter annulus",
            PI * (4.0 - 1.0) / 4.0,
            Box::new(move |n| {
                let p = AnnulusParams {
                    inner_radius: 1.0,
                    outer_radius: 2.0,
                    angle: FRAC_PI_2,
                    n_radial: n,
                    n_angular: n,
                    kind: q,
                };
                quadratic_measure(&annulus_sector(&p).unwrap())
            }),
            2,
        ),
        (
            "ball octant",
            PI * r.powi(3) / 6.0,
            Box::new(move |n| {
                quadratic_measure(
                    &ball_octant(&BallParams {
                        radius: r,
                        n_cells: n,
                        kind: h,
                    })
                    .unwrap(),
                )
            }),
            2,
        ),
        (
            "shell octant",
            PI * (r.powi(3) - 0.125) / 6.0,
            Box::new(move |n| {
                let p = ShellParams {
                    inner_radius: 0.5,
                    outer_radius: r,
                    n_radial: n,
                    n_angular: n,
                    kind: h,
                };
                quadratic_measure(&shell_octant(&p).unwrap())
            }),
            2,
        ),
    ];
    for (label, exact, measure, n) in cases {
        let coarse = (measure(n) - exact).abs();
        let fine = (measure(2 * n) - exact).abs();
        let ratio = coarse / fine;
        println!("{label} (quadratic): error {coarse:.3e} -> {fine:.3e}, ratio {ratio:.2}");
        assert!(
            fine < 1e-4 * exact,
            "{label}: relative error {} too large",
            fine / exact
        );
        assert!(
            ratio > 12.0,
            "{label}: error ratio {ratio}, expected about 16"
        );
    }
}
