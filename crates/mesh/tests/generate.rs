//! Tests of the mesh generators: counts, orientation, boundaries, geometry and parameter checks.
//!
//! The mesh crate has no shape functions, so orientation is checked from corner positions and
//! areas/volumes from corners with multilinear interpolation written out here.

use std::collections::{BTreeSet, HashMap};

use dilata_mesh::generate::{
    annulus_sector, ball_octant, cuboid, disc, inclusion_ball_octant, inclusion_quarter_disc,
    notched_plate, quarter_disc, rectangle, shell_octant, AnnulusParams, BallParams, BoxParams,
    DiscParams, InclusionParams, NotchedPlateParams, RectangleParams, ShellParams,
};
use dilata_mesh::{CellKind, Facet, Mesh, MeshError, Shape};

type Point = [f64; 3];

fn sub(a: Point, b: Point) -> Point {
    [a[0] - b[0], a[1] - b[1], a[2] - b[2]]
}

fn dot(a: Point, b: Point) -> f64 {
    a[0] * b[0] + a[1] * b[1] + a[2] * b[2]
}

fn cross(a: Point, b: Point) -> Point {
    [
        a[1] * b[2] - a[2] * b[1],
        a[2] * b[0] - a[0] * b[2],
        a[0] * b[1] - a[1] * b[0],
    ]
}

fn norm(a: Point) -> f64 {
    dot(a, a).sqrt()
}

fn det(a: Point, b: Point, c: Point) -> f64 {
    dot(a, cross(b, c))
}

/// Expected properties of one named boundary.
struct BoundaryCheck {
    name: &'static str,
    n_facets: usize,
    /// Signed distance-like residual that must vanish on the boundary.
    residual: Box<dyn Fn(Point) -> f64>,
    /// A direction the outward normal at a point must have a positive component along.
    outward: Box<dyn Fn(Point) -> Point>,
}

fn plane(name: &'static str, n_facets: usize, axis: usize, value: f64, sign: f64) -> BoundaryCheck {
    let mut direction = [0.0; 3];
    direction[axis] = sign;
    BoundaryCheck {
        name,
        n_facets,
        residual: Box::new(move |p| p[axis] - value),
        outward: Box::new(move |_| direction),
    }
}

fn sphere(name: &'static str, n_facets: usize, radius: f64, sign: f64) -> BoundaryCheck {
    BoundaryCheck {
        name,
        n_facets,
        residual: Box::new(move |p| norm(p) - radius),
        outward: Box::new(move |p| [sign * p[0], sign * p[1], sign * p[2]]),
    }
}

/// Expected properties of a whole generated mesh.
struct Expect {
    kind: CellKind,
    n_points: usize,
    n_cells: usize,
    /// Length scale for absolute tolerances.
    scale: f64,
    boundaries: Vec<BoundaryCheck>,
    /// Pairs (alias, original) of boundaries that must hold the same facets.
    aliases: Vec<(&'static str, &'static str)>,
}

/// Corner node indices of local facet `local` of a cell of `kind`, sorted (identifies a facet).
fn facet_key(kind: CellKind, nodes: &[usize], local: usize) -> Vec<usize> {
    let (fk, f) = kind.facets()[local];
    let mut key: Vec<usize> = f[..fk.n_corners()].iter().map(|&i| nodes[i]).collect();
    key.sort_unstable();
    key
}

/// Smallest corner Jacobian determinant of a cell, from corner positions only: for quadrilaterals
/// and hexahedra, the determinant of the edges leaving each corner in the +ξ directions (the
/// multilinear map's Jacobian at that corner); for simplices the edge determinant at vertex 0.
/// Positive at every corner of a multilinear cell is the usual validity test (common practice,
/// no source).
fn min_corner_jacobian(dim: usize, kind: CellKind, x: &[Point]) -> f64 {
    let linear = kind.linear();
    match linear.shape() {
        Shape::Triangle | Shape::Tetrahedron => {
            let e: Vec<Point> = (1..=dim).map(|i| sub(x[i], x[0])).collect();
            if dim == 2 {
                e[0][0] * e[1][1] - e[0][1] * e[1][0]
            } else {
                det(e[0], e[1], e[2])
            }
        }
        _ => {
            let xi = linear.reference_nodes();
            let mut min = f64::INFINITY;
            for i in 0..linear.n_nodes() {
                let mut e = [[0.0; 3]; 3];
                for (d, ed) in e.iter_mut().enumerate().take(dim) {
                    let j = (0..linear.n_nodes())
                        .find(|&j| (0..dim).all(|k| (xi[j][k] == xi[i][k]) != (k == d)))
                        .expect("neighbour corner");
                    let sign = (xi[j][d] - xi[i][d]).signum();
                    let v = sub(x[j], x[i]);
                    *ed = [sign * v[0], sign * v[1], sign * v[2]];
                }
                let j = if dim == 2 {
                    e[0][0] * e[1][1] - e[0][1] * e[1][0]
                } else {
                    det(e[0], e[1], e[2])
                };
                min = min.min(j);
            }
            min
        }
    }
}

/// Area (2D) or volume (3D) of a cell from its corners: exact for the linear cell with those
/// corners. Quadrilaterals by the shoelace formula, hexahedra by 2×2×2 Gauss–Legendre on the
/// trilinear Jacobian (a 2-point rule is exact for the degree-2-per-variable determinant;
/// common practice, no source).
fn corner_measure(dim: usize, kind: CellKind, x: &[Point]) -> f64 {
    let linear = kind.linear();
    match linear.shape() {
        Shape::Triangle => 0.5 * min_corner_jacobian(dim, kind, x),
        Shape::Tetrahedron => min_corner_jacobian(dim, kind, x) / 6.0,
        Shape::Quadrilateral => {
            0.5 * (0..4)
                .map(|i| x[i][0] * x[(i + 1) % 4][1] - x[(i + 1) % 4][0] * x[i][1])
                .sum::<f64>()
        }
        _ => {
            let xi = linear.reference_nodes();
            let g = 1.0 / 3.0_f64.sqrt();
            let mut volume = 0.0;
            for a in [-g, g] {
                for b in [-g, g] {
                    for c in [-g, g] {
                        let q = [a, b, c];
                        let mut jac = [[0.0; 3]; 3];
                        for n in 0..8 {
                            for d in 0..3 {
                                let mut dn = xi[n][d] / 8.0;
                                for e in (0..3).filter(|&e| e != d) {
                                    dn *= 1.0 + xi[n][e] * q[e];
                                }
                                for (k, row) in jac.iter_mut().enumerate() {
                                    row[d] += x[n][k] * dn;
                                }
                            }
                        }
                        let cols = |d: usize| [jac[0][d], jac[1][d], jac[2][d]];
                        volume += det(cols(0), cols(1), cols(2));
                    }
                }
            }
            volume
        }
    }
}

fn total_measure(mesh: &Mesh) -> f64 {
    mesh.cells()
        .map(|(id, kind, _)| corner_measure(mesh.dim, kind, &mesh.cell_coords(id)))
        .sum()
}

/// Outward normal (unnormalised) of a facet from its corner positions.
fn facet_normal(dim: usize, fk: CellKind, x: &[Point]) -> Point {
    if dim == 2 {
        let t = sub(x[1], x[0]);
        [t[1], -t[0], 0.0]
    } else if fk.shape() == Shape::Triangle {
        cross(sub(x[1], x[0]), sub(x[2], x[0]))
    } else {
        cross(sub(x[2], x[0]), sub(x[3], x[1]))
    }
}

/// Every property listed in the module docs that does not depend on the particular shape.
fn check_mesh(mesh: &Mesh, expect: &Expect) {
    let kind = expect.kind;
    let label = format!("{kind}");
    mesh.validate_structure().unwrap();
    assert_eq!(mesh.dim, kind.dim(), "{label}");
    assert_eq!(mesh.blocks.len(), 1, "{label}");
    assert_eq!(mesh.blocks[0].kind, kind, "{label}");
    assert_eq!(mesh.n_points(), expect.n_points, "{label}: node count");
    assert_eq!(mesh.n_cells(), expect.n_cells, "{label}: cell count");
    let all: Vec<usize> = (0..mesh.n_cells()).collect();
    assert_eq!(mesh.region("domain").unwrap(), all.as_slice(), "{label}");
    if mesh.dim == 2 {
        assert!(
            mesh.points.iter().all(|p| p[2] == 0.0),
            "{label}: z must be 0 in 2D"
        );
    }

    // Every node is used by some cell.
    let mut used = vec![false; mesh.n_points()];
    for (_, _, nodes) in mesh.cells() {
        nodes.iter().for_each(|&n| used[n] = true);
    }
    assert!(used.iter().all(|&u| u), "{label}: unused nodes");

    // No two nodes at the same place (common practice, no source): sort, compare neighbours.
    let mut sorted = mesh.points.clone();
    sorted.sort_by(|a, b| a.partial_cmp(b).unwrap());
    let tol = 1e-9 * expect.scale;
    for w in sorted.windows(2) {
        assert!(
            norm(sub(w[0], w[1])) > tol,
            "{label}: duplicate node at {:?}",
            w[0]
        );
    }
    // Sorting by x only catches exact-x duplicates; a full pairwise check on small meshes.
    if mesh.n_points() <= 3000 {
        for i in 0..mesh.n_points() {
            for j in i + 1..mesh.n_points() {
                assert!(
                    norm(sub(mesh.points[i], mesh.points[j])) > tol,
                    "{label}: nodes {i} and {j} coincide"
                );
            }
        }
    }

    // Positive orientation at every corner.
    for (id, k, _) in mesh.cells() {
        let j = min_corner_jacobian(mesh.dim, k, &mesh.cell_coords(id));
        assert!(j > 0.0, "{label}: cell {id} has corner Jacobian {j}");
    }

    // Exterior facets: those of exactly one cell.
    let mut count: HashMap<Vec<usize>, usize> = HashMap::new();
    for (_, k, nodes) in mesh.cells() {
        for local in 0..k.n_facets() {
            *count.entry(facet_key(k, nodes, local)).or_insert(0) += 1;
        }
    }
    assert!(
        count.values().all(|&c| c <= 2),
        "{label}: facet shared by more than two cells"
    );
    let exterior: BTreeSet<Vec<usize>> = count
        .iter()
        .filter(|(_, &c)| c == 1)
        .map(|(k, _)| k.clone())
        .collect();

    let names: BTreeSet<&str> = mesh.boundaries.keys().map(String::as_str).collect();
    let expected_names: BTreeSet<&str> = expect.boundaries.iter().map(|b| b.name).collect();
    assert_eq!(names, expected_names, "{label}: boundary names");
    for &(alias, original) in &expect.aliases {
        assert_eq!(
            mesh.boundary(alias).unwrap(),
            mesh.boundary(original).unwrap(),
            "{label}: {alias}"
        );
    }

    let mut covered: BTreeSet<Vec<usize>> = BTreeSet::new();
    for check in &expect.boundaries {
        let facets = mesh.boundary(check.name).unwrap();
        assert_eq!(
            facets.len(),
            check.n_facets,
            "{label}: facets on {}",
            check.name
        );
        let mut sorted: Vec<Facet> = facets.to_vec();
        sorted.sort_unstable();
        sorted.dedup();
        assert_eq!(
            sorted.as_slice(),
            facets,
            "{label}: {} not sorted and unique",
            check.name
        );
        let is_alias = expect.aliases.iter().any(|&(a, _)| a == check.name);
        for &f in facets {
            let (k, nodes) = mesh.cell(f.cell);
            let key = facet_key(k, nodes, f.local as usize);
            assert!(
                exterior.contains(&key),
                "{label}: {} facet {f:?} is interior",
                check.name
            );
            if !is_alias {
                assert!(
                    covered.insert(key),
                    "{label}: facet {f:?} of {} is on two boundaries",
                    check.name
                );
            }
            let (fk, fnodes) = mesh.facet_nodes(f);
            let x: Vec<Point> = fnodes.iter().map(|&n| mesh.points[n]).collect();
            for p in &x {
                let r = (check.residual)(*p);
                assert!(
                    r.abs() <= 1e-12 * expect.scale,
                    "{label}: node {p:?} off {} by {r}",
                    check.name
                );
            }
            let n_corners = fk.n_corners();
            let mut centre = [0.0; 3];
            for p in &x[..n_corners] {
                for d in 0..3 {
                    centre[d] += p[d] / n_corners as f64;
                }
            }
            let normal = facet_normal(mesh.dim, fk, &x);
            let along = dot(normal, (check.outward)(centre));
            assert!(
                along > 0.0,
                "{label}: normal of {} facet {f:?} points inward",
                check.name
            );
        }
    }
    assert_eq!(
        covered, exterior,
        "{label}: some exterior facets belong to no boundary"
    );

    // Quadratic nodes sit near the middle of what they belong to. For an arc of at most a quarter
    // turn the sagitta is at most tan(π/8)/2 ≈ 0.21 of the chord (circle geometry).
    if kind.order() == 2 {
        for (id, k, _) in mesh.cells() {
            let x = mesh.cell_coords(id);
            for &(a, b, m) in k.edges() {
                let chord = norm(sub(x[b], x[a]));
                let middle = [
                    (x[a][0] + x[b][0]) / 2.0,
                    (x[a][1] + x[b][1]) / 2.0,
                    (x[a][2] + x[b][2]) / 2.0,
                ];
                assert!(
                    norm(sub(x[m], middle)) <= 0.25 * chord,
                    "{label}: cell {id} mid-edge node {m}"
                );
            }
        }
    }
}

/// Sorted corner positions of a mesh's cells (each corner once).
fn corner_points(mesh: &Mesh) -> Vec<Point> {
    let mut ids: Vec<usize> = mesh
        .cells()
        .flat_map(|(_, k, nodes)| nodes[..k.n_corners()].to_vec())
        .collect();
    ids.sort_unstable();
    ids.dedup();
    let mut points: Vec<Point> = ids.into_iter().map(|i| mesh.points[i]).collect();
    points.sort_by(|a, b| a.partial_cmp(b).unwrap());
    points
}

/// The corners of a quadratic mesh are exactly the nodes of the linear mesh of the same
/// generator and parameters (both come from one lattice).
fn assert_same_corners(quadratic: &Mesh, linear: &Mesh, scale: f64) {
    let a = corner_points(quadratic);
    let b = corner_points(linear);
    assert_eq!(a.len(), b.len());
    assert_eq!(b.len(), linear.n_points());
    for (p, q) in a.iter().zip(&b) {
        assert!(norm(sub(*p, *q)) <= 1e-13 * scale, "{p:?} vs {q:?}");
    }
}

/// Lattice node counts: `(2n+1)` per direction for quadratic, `(n+1)` for linear kinds.
fn per_axis(n: usize, kind: CellKind) -> usize {
    if kind.order() == 2 {
        2 * n + 1
    } else {
        n + 1
    }
}

#[path = "generate/shapes.rs"]
mod shapes;

#[path = "generate/quadratic.rs"]
mod quadratic;
