//! Test matrices built here: finite-difference Laplacians and a convection–diffusion operator.
//!
//! Standard second-order stencils on a uniform grid with the Dirichlet boundary values
//! eliminated (common practice, no source; e.g. LeVeque, Finite Difference Methods for Ordinary
//! and Partial Differential Equations, SIAM 2007, ch. 3, from memory). Scaled by h² so the
//! diagonal is 4 (2D) or 6 (3D).

#![allow(dead_code)]

use std::sync::Arc;

use dilata_linalg::{CsrMatrix, CsrPattern};

/// Build a matrix from a function giving the stencil of every row as `(column, value)` pairs.
pub fn from_stencil(n: usize, stencil: impl Fn(usize) -> Vec<(usize, f64)>) -> CsrMatrix {
    let entries: Vec<Vec<(usize, f64)>> = (0..n).map(&stencil).collect();
    let rows = entries
        .iter()
        .map(|r| r.iter().map(|&(j, _)| j).collect())
        .collect();
    let pattern = Arc::new(CsrPattern::from_rows(n, rows));
    let mut a = CsrMatrix::zeros(pattern.clone());
    for (i, row) in entries.iter().enumerate() {
        for &(j, v) in row {
            let k = pattern.find(i, j).expect("entry in pattern");
            a.values[k] += v;
        }
    }
    a
}

/// 2D 5-point Laplacian on an `nx` x `ny` grid of interior nodes, Dirichlet boundary.
pub fn laplacian_2d(nx: usize, ny: usize) -> CsrMatrix {
    convection_diffusion_2d(nx, ny, 0.0)
}

/// 2D convection–diffusion `-Δu + β ∂u/∂x` with central differences; `c = β h / 2` is the cell
/// Péclet number. Nonsymmetric for `c != 0`, diagonally dominant for `|c| <= 1`.
pub fn convection_diffusion_2d(nx: usize, ny: usize, c: f64) -> CsrMatrix {
    let id = |i: usize, j: usize| i + nx * j;
    from_stencil(nx * ny, |r| {
        let (i, j) = (r % nx, r / nx);
        let mut s = vec![(r, 4.0)];
        if i > 0 {
            s.push((id(i - 1, j), -1.0 - c));
        }
        if i + 1 < nx {
            s.push((id(i + 1, j), -1.0 + c));
        }
        if j > 0 {
            s.push((id(i, j - 1), -1.0));
        }
        if j + 1 < ny {
            s.push((id(i, j + 1), -1.0));
        }
        s
    })
}

/// 3D 7-point Laplacian on an `n`³ grid of interior nodes, Dirichlet boundary.
pub fn laplacian_3d(n: usize) -> CsrMatrix {
    let id = |i: usize, j: usize, k: usize| i + n * (j + n * k);
    from_stencil(n * n * n, |r| {
        let (i, j, k) = (r % n, (r / n) % n, r / (n * n));
        let mut s = vec![(r, 6.0)];
        if i > 0 {
            s.push((id(i - 1, j, k), -1.0));
        }
        if i + 1 < n {
            s.push((id(i + 1, j, k), -1.0));
        }
        if j > 0 {
            s.push((id(i, j - 1, k), -1.0));
        }
        if j + 1 < n {
            s.push((id(i, j + 1, k), -1.0));
        }
        if k > 0 {
            s.push((id(i, j, k - 1), -1.0));
        }
        if k + 1 < n {
            s.push((id(i, j, k + 1), -1.0));
        }
        s
    })
}

/// 2D pure-Neumann Laplacian (graph Laplacian of the grid): symmetric positive semi-definite,
/// singular with the constant vector in its kernel.
pub fn neumann_laplacian_2d(nx: usize, ny: usize) -> CsrMatrix {
    let id = |i: usize, j: usize| i + nx * j;
    from_stencil(nx * ny, |r| {
        let (i, j) = (r % nx, r / nx);
        let mut nb = Vec::new();
        if i > 0 {
            nb.push(id(i - 1, j));
        }
        if i + 1 < nx {
            nb.push(id(i + 1, j));
        }
        if j > 0 {
            nb.push(id(i, j - 1));
        }
        if j + 1 < ny {
            nb.push(id(i, j + 1));
        }
        let mut s = vec![(r, nb.len() as f64)];
        s.extend(nb.into_iter().map(|c| (c, -1.0)));
        s
    })
}

/// Set every stored value of row `row` to zero (pattern unchanged): numerically singular.
pub fn zero_row(a: &CsrMatrix, row: usize) -> CsrMatrix {
    let mut z = a.clone();
    let p = &a.pattern;
    for k in p.row_ptr[row]..p.row_ptr[row + 1] {
        z.values[k] = 0.0;
    }
    z
}

/// Zero row and column `k` (pattern unchanged): a singular symmetric matrix.
pub fn zero_row_and_column(a: &CsrMatrix, k: usize) -> CsrMatrix {
    let mut z = zero_row(a, k);
    for i in 0..a.n_rows() {
        if let Some(pos) = a.pattern.find(i, k) {
            z.values[pos] = 0.0;
        }
    }
    z
}

/// A smooth, non-trivial manufactured solution.
pub fn manufactured_x(n: usize) -> Vec<f64> {
    (0..n)
        .map(|i| (0.37 * i as f64).sin() + 0.5 + (i % 7) as f64 * 0.1)
        .collect()
}

/// Euclidean norm.
pub fn norm(x: &[f64]) -> f64 {
    x.iter().map(|v| v * v).sum::<f64>().sqrt()
}

/// `|b - A x| / |b|`.
pub fn relative_residual(a: &CsrMatrix, x: &[f64], b: &[f64]) -> f64 {
    let ax = a.mul_vec(x);
    let r: Vec<f64> = b.iter().zip(&ax).map(|(bi, axi)| bi - axi).collect();
    norm(&r) / norm(b)
}

/// `|x - y| / |y|`.
pub fn relative_error(x: &[f64], y: &[f64]) -> f64 {
    let d: Vec<f64> = x.iter().zip(y).map(|(a, b)| a - b).collect();
    norm(&d) / norm(y)
}
