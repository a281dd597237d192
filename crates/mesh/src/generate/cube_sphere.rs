//! Round domains without degenerate cells: a square (cube) core surrounded by one curved block
//! per core side (face), each block blending from the core side out to the circle (sphere).
//!
//! Write `c` for a point of the unit core `[lo, 1]^dim` (`lo = 0` for the first quadrant/octant,
//! `lo = -1` for the full domain). The block on core face `c_a = ±1` maps parameter
//! `(s, tangential c)` to `(1 - s) · inner(c) + s · R · c / |c|`, where `inner(c)` is `a · c` for
//! a flat core of half-size `a` or `r_in · c / |c|` for a spherical shell. Every node of a curved
//! block is keyed by its core-surface lattice point and its radial layer, so the blocks share the
//! nodes of their common faces, and layer 0 coincides with the core's surface nodes.
//!
//! Positivity: for the block on `c_0 = 1` the Jacobian determinant with respect to
//! `(s, c_1, …)` works out to `(R / |c| - a) · f^(dim-1)` with `f = (1 - s) a + s R / |c| > 0`
//! (derived for this module), so the flat-core blend is orientation-preserving whenever
//! `a < R / sqrt(dim)`; the spherical blend has `(R - r_in) / |c| · f^(dim-1) > 0` for any
//! `0 < r_in < R`. The other faces are the same map up to a rotation or reflection, and the
//! parameter direction is reversed on the `-1` faces so that orientation is kept. A graded radial
//! spacing replaces `s` by an increasing function of it, which keeps the sign.
//!
//! Rings can be stacked around one core (a solid of radius `a` inside a ring `a ≤ r ≤ R`): the
//! outer ring's radial layers are numbered on from the inner ring's (`layer_offset`), so both
//! name the nodes of their common sphere alike and the builder merges them.

use super::structured::{graded, Block, Builder, NodeKey, Side};
use crate::cell::CellKind;
use crate::mesh::Mesh;

/// Boundary names of the coordinate planes `x = 0`, `y = 0`, `z = 0`.
const SYMMETRY: [&str; 3] = ["symmetry_x", "symmetry_y", "symmetry_z"];

/// How much of the round domain is meshed.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub(super) enum Extent {
    /// The first quadrant (2D) or octant (3D); the coordinate planes are symmetry boundaries.
    FirstSector,
    /// The whole disc or ball.
    Full,
}

/// What lies inside the curved blocks.
#[derive(Clone, Copy, Debug, PartialEq)]
pub(super) enum Inner {
    /// A square (cube) core of the given half-size, meshed too; the domain is solid.
    Core { half_size: f64 },
    /// A circular (spherical) hole of the given radius, boundary `inner`.
    Sphere { radius: f64 },
}

/// Description of a cube-sphere mesh.
#[derive(Clone, Copy, Debug, PartialEq)]
pub(super) struct CubeSphere {
    pub(super) dim: usize,
    pub(super) extent: Extent,
    pub(super) inner: Inner,
    pub(super) outer_radius: f64,
    /// Cells along each edge of the core (or along each edge of a curved block's inner face).
    pub(super) n_tangential: usize,
    /// Cells from the inner face to the outer one.
    pub(super) n_radial: usize,
    /// Ratio of the outermost to the innermost radial cell size of the curved blocks (1:
    /// uniform; geometric sizes otherwise).
    pub(super) grading: f64,
    /// Radial layers (half steps) below this ring's first layer when several rings are stacked
    /// around one core: the node keys of layer 0 are then those of the last layer of the ring
    /// inside (0 for a single ring).
    pub(super) layer_offset: usize,
    /// Boundary names of the inner sphere (only for [`Inner::Sphere`]) and of the outer one;
    /// `None` where the face is inside a stacked mesh.
    pub(super) inner_name: Option<&'static str>,
    pub(super) outer_name: Option<&'static str>,
}

impl CubeSphere {
    /// A single ring (or a solid) with uniform radial cells and the default boundary names
    /// `inner` (for a spherical hole) and `outer`.
    pub(super) fn single(
        dim: usize,
        extent: Extent,
        inner: Inner,
        outer_radius: f64,
        n_tangential: usize,
        n_radial: usize,
    ) -> Self {
        CubeSphere {
            dim,
            extent,
            inner,
            outer_radius,
            n_tangential,
            n_radial,
            grading: 1.0,
            layer_offset: 0,
            inner_name: Some("inner"),
            outer_name: Some("outer"),
        }
    }
}

/// Which face of the core a curved block sits on.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum FaceSign {
    /// The face `c_axis = lo`, only used for the full domain (`lo = -1`).
    Minus,
    /// The face `c_axis = 1`.
    Plus,
}

impl CubeSphere {
    fn lower(&self) -> f64 {
        match self.extent {
            Extent::FirstSector => 0.0,
            Extent::Full => -1.0,
        }
    }

    /// Unit core coordinate of tangential parameter `u`.
    fn unit(&self, u: f64) -> f64 {
        let lo = self.lower();
        lo + (1.0 - lo) * u
    }

    /// Boundary name of the tangential block face at the low end of direction `axis`.
    fn low_face(&self, axis: usize) -> Option<&'static str> {
        match self.extent {
            Extent::FirstSector => Some(SYMMETRY[axis]),
            Extent::Full => None,
        }
    }
}

/// Build the mesh described by `spec` with cells of `kind` (already validated).
pub(super) fn build_cube_sphere(spec: &CubeSphere, kind: CellKind) -> Mesh {
    let mut builder = Builder::new(spec.dim, kind);
    add_cube_sphere(&mut builder, spec);
    builder.finish()
}

/// Add the blocks of `spec` to `builder` (rings stacked around one core share their interface
/// nodes through [`CubeSphere::layer_offset`]).
pub(super) fn add_cube_sphere(builder: &mut Builder, spec: &CubeSphere) {
    if let Inner::Core { half_size } = spec.inner {
        builder.add_block(&CoreBlock { spec, half_size });
    }
    let signs: &[FaceSign] = match spec.extent {
        Extent::FirstSector => &[FaceSign::Plus],
        Extent::Full => &[FaceSign::Minus, FaceSign::Plus],
    };
    for axis in 0..spec.dim {
        for &sign in signs {
            builder.add_block(&CurvedBlock { spec, axis, sign });
        }
    }
}

/// The square (cube) core, `x = a · c`.
struct CoreBlock<'a> {
    spec: &'a CubeSphere,
    half_size: f64,
}

impl Block for CoreBlock<'_> {
    fn n_cells(&self) -> [usize; 3] {
        let mut n = [0; 3];
        n[..self.spec.dim].fill(self.spec.n_tangential);
        n
    }

    fn key(&self, h: [usize; 3]) -> NodeKey {
        [h[0] as i64, h[1] as i64, h[2] as i64, 0]
    }

    fn point(&self, u: [f64; 3]) -> [f64; 3] {
        let mut x = [0.0; 3];
        for d in 0..self.spec.dim {
            x[d] = self.half_size * self.spec.unit(u[d]);
        }
        x
    }

    fn face_name(&self, axis: usize, side: Side) -> Option<&'static str> {
        match side {
            Side::Min => self.spec.low_face(axis),
            Side::Max => None,
        }
    }
}

/// The curved block on one face of the core. Its parameter directions follow the coordinate
/// axes, with direction `axis` radial (reversed on a `Minus` face).
struct CurvedBlock<'a> {
    spec: &'a CubeSphere,
    axis: usize,
    sign: FaceSign,
}

impl CurvedBlock<'_> {
    /// Radial parameter `s` (0 on the inner face, 1 on the outer) of parameter `u_axis`.
    fn radial(&self, u_axis: f64) -> f64 {
        let u = match self.sign {
            FaceSign::Plus => u_axis,
            FaceSign::Minus => 1.0 - u_axis,
        };
        graded(u, self.spec.n_radial, self.spec.grading)
    }
}

impl Block for CurvedBlock<'_> {
    fn n_cells(&self) -> [usize; 3] {
        let mut n = [0; 3];
        n[..self.spec.dim].fill(self.spec.n_tangential);
        n[self.axis] = self.spec.n_radial;
        n
    }

    fn key(&self, h: [usize; 3]) -> NodeKey {
        let core_last = 2 * self.spec.n_tangential;
        let radial_last = 2 * self.spec.n_radial;
        let mut key = [h[0] as i64, h[1] as i64, h[2] as i64, 0];
        let (surface, layer) = match self.sign {
            FaceSign::Plus => (core_last, h[self.axis]),
            FaceSign::Minus => (0, radial_last - h[self.axis]),
        };
        let layer = layer + self.spec.layer_offset;
        key[self.axis] = surface as i64;
        key[3] = layer as i64;
        key
    }

    fn point(&self, u: [f64; 3]) -> [f64; 3] {
        let dim = self.spec.dim;
        let mut c = [0.0; 3];
        for d in 0..dim {
            c[d] = self.spec.unit(u[d]);
        }
        c[self.axis] = match self.sign {
            FaceSign::Plus => 1.0,
            FaceSign::Minus => -1.0,
        };
        let norm = c.iter().map(|v| v * v).sum::<f64>().sqrt();
        let s = self.radial(u[self.axis]);
        let mut x = [0.0; 3];
        for d in 0..dim {
            let direction = c[d] / norm;
            let inner = match self.spec.inner {
                Inner::Core { half_size } => half_size * c[d],
                Inner::Sphere { radius } => radius * direction,
            };
            x[d] = (1.0 - s) * inner + s * (self.spec.outer_radius * direction);
        }
        x
    }

    fn face_name(&self, axis: usize, side: Side) -> Option<&'static str> {
        if axis == self.axis {
            let outer_side = match self.sign {
                FaceSign::Plus => Side::Max,
                FaceSign::Minus => Side::Min,
            };
            if side == outer_side {
                return self.spec.outer_name;
            }
            return match self.spec.inner {
                Inner::Core { .. } => None,
                Inner::Sphere { .. } => self.spec.inner_name,
            };
        }
        match side {
            Side::Min => self.spec.low_face(axis),
            Side::Max => None,
        }
    }
}
