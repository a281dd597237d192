//! Single-block maps: axis-aligned boxes and annulus sectors.

use super::structured::{Block, NodeKey, Side};

/// Boundary names of the six faces of a box block, indexed by axis then side.
pub(super) type FaceNames = [[Option<&'static str>; 2]; 3];

/// An axis-aligned rectangle or box: `x = origin + u * lengths`.
pub(super) struct BoxBlock {
    pub(super) origin: [f64; 3],
    pub(super) lengths: [f64; 3],
    pub(super) n_cells: [usize; 3],
    pub(super) names: FaceNames,
}

impl Block for BoxBlock {
    fn n_cells(&self) -> [usize; 3] {
        self.n_cells
    }

    fn key(&self, h: [usize; 3]) -> NodeKey {
        [h[0] as i64, h[1] as i64, h[2] as i64, 0]
    }

    fn point(&self, u: [f64; 3]) -> [f64; 3] {
        [
            self.origin[0] + u[0] * self.lengths[0],
            self.origin[1] + u[1] * self.lengths[1],
            self.origin[2] + u[2] * self.lengths[2],
        ]
    }

    fn face_name(&self, axis: usize, side: Side) -> Option<&'static str> {
        self.names[axis][side_index(side)]
    }
}

/// Whether an annulus sector closes on itself.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub(super) enum Closure {
    /// A sector `0 <= θ <= angle < 2π` with `start` and `end` boundaries.
    Open,
    /// The full annulus: the nodes at `θ = 2π` are those at `θ = 0`.
    Closed,
}

/// A polar block: parameter 0 is radial, parameter 1 angular.
/// `r = r_in + u0 (r_out - r_in)`, `θ = u1 · angle`, `x = r cos θ`, `y = r sin θ`; the Jacobian
/// determinant `r (r_out - r_in) angle` is positive.
pub(super) struct AnnulusBlock {
    pub(super) inner_radius: f64,
    pub(super) outer_radius: f64,
    pub(super) angle: f64,
    pub(super) n_radial: usize,
    pub(super) n_angular: usize,
    pub(super) closure: Closure,
}

impl Block for AnnulusBlock {
    fn n_cells(&self) -> [usize; 3] {
        [self.n_radial, self.n_angular, 0]
    }

    fn key(&self, h: [usize; 3]) -> NodeKey {
        let angular = match self.closure {
            Closure::Open => h[1],
            Closure::Closed => h[1] % (2 * self.n_angular),
        };
        [h[0] as i64, angular as i64, 0, 0]
    }

    fn point(&self, u: [f64; 3]) -> [f64; 3] {
        let r = self.inner_radius + u[0] * (self.outer_radius - self.inner_radius);
        let theta = u[1] * self.angle;
        [r * theta.cos(), r * theta.sin(), 0.0]
    }

    fn face_name(&self, axis: usize, side: Side) -> Option<&'static str> {
        match (axis, side, self.closure) {
            (0, Side::Min, _) => Some("inner"),
            (0, Side::Max, _) => Some("outer"),
            (1, Side::Min, Closure::Open) => Some("start"),
            (1, Side::Max, Closure::Open) => Some("end"),
            _ => None,
        }
    }
}

/// Index 0 for [`Side::Min`], 1 for [`Side::Max`].
pub(super) fn side_index(side: Side) -> usize {
    match side {
        Side::Min => 0,
        Side::Max => 1,
    }
}
