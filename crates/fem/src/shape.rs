//! Lagrange shape functions of every cell kind on its reference cell.
//!
//! Node order is Dilata's (VTK) order as listed by [`CellKind::reference_nodes`]. Reference cells:
//! lines, quadrilaterals and hexahedra on `[-1, 1]^d`; triangles and tetrahedra on the unit simplex
//! with vertex 0 at the origin.
//!
//! * Tensor-product kinds (`Line2`, `Line3`, `Quad4`, `Quad9`, `Hex8`, `Hex27`) are products of
//!   1D Lagrange polynomials on the nodes `{-1, 1}` (linear) or `{-1, 1, 0}` (quadratic).
//! * Serendipity kinds (`Quad8`, `Hex20`) use the classical corner / mid-edge formulas (e.g.
//!   Zienkiewicz, Taylor & Zhu, "The Finite Element Method: Its Basis and Fundamentals", 6th ed.,
//!   2005, section 6.4; from memory). The unit tests check Kronecker property, partition of unity
//!   and quadratic completeness, which pin these functions down.
//! * Simplices use barycentric coordinates `L_0 = 1 - x - y (- z)`, `L_i = x_i`; quadratic kinds use
//!   `L_i (2 L_i - 1)` at corners and `4 L_a L_b` at the mid-edge node of edge `(a, b)`.
//!
//! [`eval_into`] never allocates; [`ShapeTable`] tabulates values and gradients once per
//! quadrature rule.

use dilata_mesh::CellKind;

/// Reference coordinate of a 1D node index: 0 → -1, 1 → +1, 2 → 0 (VTK line order).
const COORD_1D: [f64; 3] = [-1.0, 1.0, 0.0];

/// 1D node indices (into [`COORD_1D`]) of the nodes of a quadrilateral, in VTK order: corners,
/// mid-edge nodes of edges (0,1), (1,2), (2,3), (3,0), centre.
const QUAD_IDX: [[usize; 2]; 9] = [
    [0, 0],
    [1, 0],
    [1, 1],
    [0, 1],
    [2, 0],
    [1, 2],
    [2, 1],
    [0, 2],
    [2, 2],
];

/// 1D node indices of the nodes of a hexahedron, in VTK order: 8 corners, 12 mid-edge nodes (edges
/// as in [`CellKind::edges`]), 6 face centres (x-min, x-max, y-min, y-max, z-min, z-max), centre.
const HEX_IDX: [[usize; 3]; 27] = [
    [0, 0, 0],
    [1, 0, 0],
    [1, 1, 0],
    [0, 1, 0],
    [0, 0, 1],
    [1, 0, 1],
    [1, 1, 1],
    [0, 1, 1],
    [2, 0, 0],
    [1, 2, 0],
    [2, 1, 0],
    [0, 2, 0],
    [2, 0, 1],
    [1, 2, 1],
    [2, 1, 1],
    [0, 2, 1],
    [0, 0, 2],
    [1, 0, 2],
    [1, 1, 2],
    [0, 1, 2],
    [0, 2, 2],
    [1, 2, 2],
    [2, 0, 2],
    [2, 1, 2],
    [2, 2, 0],
    [2, 2, 1],
    [2, 2, 2],
];

/// Corner pairs of the mid-edge nodes of a quadratic triangle (nodes 3, 4, 5).
const TRI_EDGES: [(usize, usize); 3] = [(0, 1), (1, 2), (2, 0)];

/// Corner pairs of the mid-edge nodes of a quadratic tetrahedron (nodes 4..=9).
const TET_EDGES: [(usize, usize); 6] = [(0, 1), (1, 2), (2, 0), (0, 3), (1, 3), (2, 3)];

/// Polynomial order of a 1D Lagrange factor set.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Order1d {
    Linear,
    Quadratic,
}

/// Values and derivatives of the 1D Lagrange polynomials at `x`, indexed like [`COORD_1D`].
/// For linear order only indices 0 and 1 are meaningful.
#[inline]
fn lagrange_1d(order: Order1d, x: f64) -> ([f64; 3], [f64; 3]) {
    match order {
        Order1d::Linear => ([0.5 * (1.0 - x), 0.5 * (1.0 + x), 0.0], [-0.5, 0.5, 0.0]),
        Order1d::Quadratic => (
            [0.5 * x * (x - 1.0), 0.5 * x * (x + 1.0), 1.0 - x * x],
            [x - 0.5, x + 0.5, -2.0 * x],
        ),
    }
}

/// Values and reference gradients of the shape functions of `kind` at reference point `xi`.
///
/// `values.len() == kind.n_nodes()`, `grads.len() == kind.n_nodes()`; `grads[i][d]` is
/// `dN_i/dxi_d` for `d < kind.dim()` and zero for the other components.
///
/// # Panics
/// On [`CellKind::Point1`] (it has no shape functions) or on buffers of the wrong length; both are
/// programming errors.
pub fn eval_into(kind: CellKind, xi: [f64; 3], values: &mut [f64], grads: &mut [[f64; 3]]) {
    let n = kind.n_nodes();
    assert!(
        values.len() == n && grads.len() == n,
        "shape::eval_into({kind}): buffers have {} values and {} gradients, expected {n}",
        values.len(),
        grads.len()
    );
    match kind {
        CellKind::Point1 => panic!("shape::eval_into: point1 cells have no shape functions"),
        CellKind::Line2 => line(Order1d::Linear, xi, values, grads),
        CellKind::Line3 => line(Order1d::Quadratic, xi, values, grads),
        CellKind::Quad4 => quad_tensor(Order1d::Linear, xi, values, grads),
        CellKind::Quad9 => quad_tensor(Order1d::Quadratic, xi, values, grads),
        CellKind::Hex8 => hex_tensor(Order1d::Linear, xi, values, grads),
        CellKind::Hex27 => hex_tensor(Order1d::Quadratic, xi, values, grads),
        CellKind::Quad8 => quad8(xi, values, grads),
        CellKind::Hex20 => hex20(xi, values, grads),
        CellKind::Tri3 => simplex_linear::<3>(xi, values, grads),
        CellKind::Tet4 => simplex_linear::<4>(xi, values, grads),
        CellKind::Tri6 => simplex_quadratic::<3>(&TRI_EDGES, xi, values, grads),
        CellKind::Tet10 => simplex_quadratic::<4>(&TET_EDGES, xi, values, grads),
    }
}

fn line(order: Order1d, xi: [f64; 3], values: &mut [f64], grads: &mut [[f64; 3]]) {
    let (v, d) = lagrange_1d(order, xi[0]);
    for i in 0..values.len() {
        values[i] = v[i];
        grads[i] = [d[i], 0.0, 0.0];
    }
}

fn quad_tensor(order: Order1d, xi: [f64; 3], values: &mut [f64], grads: &mut [[f64; 3]]) {
    let (vx, dx) = lagrange_1d(order, xi[0]);
    let (vy, dy) = lagrange_1d(order, xi[1]);
    for (i, &[a, b]) in QUAD_IDX.iter().take(values.len()).enumerate() {
        values[i] = vx[a] * vy[b];
        grads[i] = [dx[a] * vy[b], vx[a] * dy[b], 0.0];
    }
}

fn hex_tensor(order: Order1d, xi: [f64; 3], values: &mut [f64], grads: &mut [[f64; 3]]) {
    let (vx, dx) = lagrange_1d(order, xi[0]);
    let (vy, dy) = lagrange_1d(order, xi[1]);
    let (vz, dz) = lagrange_1d(order, xi[2]);
    for (i, &[a, b, c]) in HEX_IDX.iter().take(values.len()).enumerate() {
        values[i] = vx[a] * vy[b] * vz[c];
        grads[i] = [
            dx[a] * vy[b] * vz[c],
            vx[a] * dy[b] * vz[c],
            vx[a] * vy[b] * dz[c],
        ];
    }
}

/// Eight-node serendipity quadrilateral.
fn quad8(xi: [f64; 3], values: &mut [f64], grads: &mut [[f64; 3]]) {
    let (x, y) = (xi[0], xi[1]);
    for (i, &[a, b]) in QUAD_IDX.iter().take(8).enumerate() {
        let (xa, ya) = (COORD_1D[a], COORD_1D[b]);
        if i < 4 {
            let (px, py) = (1.0 + x * xa, 1.0 + y * ya);
            let s = x * xa + y * ya - 1.0;
            values[i] = 0.25 * px * py * s;
            grads[i] = [
                0.25 * xa * py * (2.0 * x * xa + y * ya),
                0.25 * ya * px * (2.0 * y * ya + x * xa),
                0.0,
            ];
        } else if a == 2 {
            // Mid-edge node with xi_i = 0.
            let py = 1.0 + y * ya;
            values[i] = 0.5 * (1.0 - x * x) * py;
            grads[i] = [-x * py, 0.5 * (1.0 - x * x) * ya, 0.0];
        } else {
            // Mid-edge node with eta_i = 0.
            let px = 1.0 + x * xa;
            values[i] = 0.5 * px * (1.0 - y * y);
            grads[i] = [0.5 * xa * (1.0 - y * y), -y * px, 0.0];
        }
    }
}

/// Twenty-node serendipity hexahedron.
fn hex20(xi: [f64; 3], values: &mut [f64], grads: &mut [[f64; 3]]) {
    for (i, idx) in HEX_IDX.iter().take(20).enumerate() {
        let c = [COORD_1D[idx[0]], COORD_1D[idx[1]], COORD_1D[idx[2]]];
        // p[d] = 1 + xi_d c_d, the linear factor in direction d.
        let p = [1.0 + xi[0] * c[0], 1.0 + xi[1] * c[1], 1.0 + xi[2] * c[2]];
        if i < 8 {
            let s = xi[0] * c[0] + xi[1] * c[1] + xi[2] * c[2] - 2.0;
            values[i] = 0.125 * p[0] * p[1] * p[2] * s;
            grads[i] = [
                0.125 * c[0] * p[1] * p[2] * (s + p[0]),
                0.125 * c[1] * p[0] * p[2] * (s + p[1]),
                0.125 * c[2] * p[0] * p[1] * (s + p[2]),
            ];
        } else {
            // Mid-edge node: exactly one reference coordinate is zero; call it direction `e`.
            let e = idx.iter().position(|&k| k == 2).unwrap_or(0);
            let (f, g) = ((e + 1) % 3, (e + 2) % 3);
            let q = 1.0 - xi[e] * xi[e];
            values[i] = 0.25 * q * p[f] * p[g];
            let mut grad = [0.0; 3];
            grad[e] = -0.5 * xi[e] * p[f] * p[g];
            grad[f] = 0.25 * q * c[f] * p[g];
            grad[g] = 0.25 * q * p[f] * c[g];
            grads[i] = grad;
        }
    }
}

/// Barycentric coordinates of `xi` on the unit simplex with `N` vertices and their constant
/// gradients.
#[inline]
fn barycentric<const N: usize>(xi: [f64; 3]) -> ([f64; N], [[f64; 3]; N]) {
    let mut l = [0.0; N];
    let mut dl = [[0.0; 3]; N];
    let dim = N - 1;
    let mut l0 = 1.0;
    for d in 0..dim {
        l[d + 1] = xi[d];
        dl[d + 1][d] = 1.0;
        l0 -= xi[d];
        dl[0][d] = -1.0;
    }
    l[0] = l0;
    (l, dl)
}

fn simplex_linear<const N: usize>(xi: [f64; 3], values: &mut [f64], grads: &mut [[f64; 3]]) {
    let (l, dl) = barycentric::<N>(xi);
    values.copy_from_slice(&l);
    grads.copy_from_slice(&dl);
}

fn simplex_quadratic<const N: usize>(
    edges: &[(usize, usize)],
    xi: [f64; 3],
    values: &mut [f64],
    grads: &mut [[f64; 3]],
) {
    let (l, dl) = barycentric::<N>(xi);
    for i in 0..N {
        values[i] = l[i] * (2.0 * l[i] - 1.0);
        let f = 4.0 * l[i] - 1.0;
        grads[i] = [f * dl[i][0], f * dl[i][1], f * dl[i][2]];
    }
    for (k, &(a, b)) in edges.iter().enumerate() {
        let i = N + k;
        values[i] = 4.0 * l[a] * l[b];
        let mut g = [0.0; 3];
        for (d, gd) in g.iter_mut().enumerate() {
            *gd = 4.0 * (dl[a][d] * l[b] + l[a] * dl[b][d]);
        }
        grads[i] = g;
    }
}

/// Shape values and reference gradients tabulated at the points of a quadrature rule.
///
/// Storage is point-major: the entries of point `q` are `q * n_nodes .. (q + 1) * n_nodes`.
#[derive(Clone, Debug, PartialEq)]
pub struct ShapeTable {
    /// Cell kind the table belongs to.
    pub kind: CellKind,
    /// Number of shape functions (nodes) per point.
    pub n_nodes: usize,
    /// Number of tabulation points.
    pub n_points: usize,
    /// Shape values, `n_points * n_nodes`, point-major.
    pub values: Vec<f64>,
    /// Reference gradients, same layout as `values`.
    pub grads: Vec<[f64; 3]>,
}

impl ShapeTable {
    /// Tabulate the shape functions of `kind` at `points` (reference coordinates).
    ///
    /// # Panics
    /// On [`CellKind::Point1`].
    pub fn new(kind: CellKind, points: &[[f64; 3]]) -> Self {
        let n_nodes = kind.n_nodes();
        let n_points = points.len();
        let mut values = vec![0.0; n_nodes * n_points];
        let mut grads = vec![[0.0; 3]; n_nodes * n_points];
        for (q, &xi) in points.iter().enumerate() {
            let r = q * n_nodes..(q + 1) * n_nodes;
            eval_into(kind, xi, &mut values[r.clone()], &mut grads[r]);
        }
        ShapeTable {
            kind,
            n_nodes,
            n_points,
            values,
            grads,
        }
    }

    /// Shape values at tabulation point `q`.
    #[inline]
    pub fn values_at(&self, q: usize) -> &[f64] {
        &self.values[q * self.n_nodes..(q + 1) * self.n_nodes]
    }

    /// Reference gradients at tabulation point `q`.
    #[inline]
    pub fn grads_at(&self, q: usize) -> &[[f64; 3]] {
        &self.grads[q * self.n_nodes..(q + 1) * self.n_nodes]
    }
}
