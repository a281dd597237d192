//! Two-block map of a rectangle with a quarter-circle cut out at its corner: the quarter model
//! of a plate with a central hole, or (with other boundary conditions) the half model of a plate
//! with a semicircular edge notch.

use super::structured::{graded, Block, NodeKey, Side};

/// One of the two blocks, split by the ray from the origin to the far corner `(W, H)`.
/// Parameter 0 runs from the arc (u0 = 0) to the straight edge; parameter 1 runs
/// counter-clockwise in angle. The lower block meets `x = W`, the upper one `y = H`.
pub(super) struct NotchBlock {
    pub(super) width: f64,
    pub(super) height: f64,
    pub(super) radius: f64,
    pub(super) n_radial: usize,
    /// Cells along the arc in this block.
    pub(super) n_angular: usize,
    /// Lattice offset of this block's first angular line (twice the cells before it).
    pub(super) angular_offset: usize,
    pub(super) upper: bool,
    /// Grading: ratio of the last to the first radial cell size (1: uniform).
    pub(super) grading: f64,
}

impl NotchBlock {
    fn split_angle(&self) -> f64 {
        self.height.atan2(self.width)
    }

    /// Geometric cell sizes from the arc outwards (see [`graded`]).
    fn radial(&self, u: f64) -> f64 {
        graded(u, self.n_radial, self.grading)
    }
}

impl Block for NotchBlock {
    fn n_cells(&self) -> [usize; 3] {
        [self.n_radial, self.n_angular, 0]
    }

    fn key(&self, h: [usize; 3]) -> NodeKey {
        [h[0] as i64, (h[1] + self.angular_offset) as i64, 0, 0]
    }

    fn point(&self, u: [f64; 3]) -> [f64; 3] {
        let split = self.split_angle();
        let theta = if self.upper {
            split + u[1] * (std::f64::consts::FRAC_PI_2 - split)
        } else {
            u[1] * split
        };
        let (s, c) = theta.sin_cos();
        let arc = [self.radius * c, self.radius * s];
        let edge = if self.upper {
            // On y = H: x = H cos/sin.
            [self.height * c / s, self.height]
        } else {
            [self.width, self.width * s / c]
        };
        let t = self.radial(u[0]);
        [
            arc[0] + t * (edge[0] - arc[0]),
            arc[1] + t * (edge[1] - arc[1]),
            0.0,
        ]
    }

    fn face_name(&self, axis: usize, side: Side) -> Option<&'static str> {
        match (axis, side, self.upper) {
            (0, Side::Min, _) => Some("notch"),
            (0, Side::Max, false) => Some("right"),
            (0, Side::Max, true) => Some("top"),
            (1, Side::Min, false) => Some("bottom"),
            (1, Side::Max, true) => Some("left"),
            _ => None,
        }
    }
}
