//! Size sanity limit of a scenario, checked when it is read: a generated body far larger than
//! any run could hold is refused before a single node is allocated (a `cells` entry with a few
//! digits too many would otherwise ask the mesh generator for more memory than the machine has).

use super::types::{Element, Shape};

/// Largest number of cells a generated shape may have. Far above what a run can solve (a direct
/// factorisation of the coupled system outgrows memory long before), low enough that building
/// the mesh itself fits in a few gigabytes.
pub const MAX_GENERATED_CELLS: u128 = 10_000_000;

/// Number of cells the generator makes for `shape` (in `u128`, so that no count overflows).
/// The counts follow the generators' documentation (`dilata_mesh::generate`): triangles split
/// each square of a rectangle in 2, tetrahedra each cube of a box in 6; a quarter disc has
/// `3 n²` cells, a full disc `12 n²`, a notched plate `2 n_radial n_angular`, a ball octant
/// `4 n³`, a shell octant `3 n_angular² n_radial`, an inclusion quarter disc `3 n² + 2 n m` and
/// an inclusion ball octant `4 n³ + 3 n² m` (`cells = [n, m]`).
pub fn generated_cells(shape: &Shape) -> u128 {
    let n = |v: usize| v as u128;
    let split = |e: &Element| match e {
        Element::Tri3 | Element::Tri6 => 2,
        Element::Tet4 | Element::Tet10 => 6,
        _ => 1,
    };
    let factors: Vec<u128> = match shape {
        Shape::Rectangle { cells, element, .. } => vec![n(cells[0]), n(cells[1]), split(element)],
        Shape::Box { cells, element, .. } => {
            vec![n(cells[0]), n(cells[1]), n(cells[2]), split(element)]
        }
        Shape::QuarterDisc { cells, .. } => vec![3, n(*cells), n(*cells)],
        Shape::Disc { cells, .. } => vec![12, n(*cells), n(*cells)],
        Shape::AnnulusSector { cells, .. } => vec![n(cells[0]), n(cells[1])],
        Shape::NotchedPlate { cells, .. } => vec![2, n(cells[0]), n(cells[1])],
        Shape::BallOctant { cells, .. } => vec![4, n(*cells), n(*cells), n(*cells)],
        Shape::ShellOctant { cells, .. } => vec![3, n(cells[1]), n(cells[1]), n(cells[0])],
        // 3 n² + 2 n m = n (3 n + 2 m) and 4 n³ + 3 n² m = n² (4 n + 3 m).
        Shape::InclusionQuarterDisc { cells, .. } => {
            let [c, m] = cells.map(n);
            vec![c, c.saturating_mul(3).saturating_add(m.saturating_mul(2))]
        }
        Shape::InclusionBallOctant { cells, .. } => {
            let [c, m] = cells.map(n);
            vec![
                c,
                c,
                c.saturating_mul(4).saturating_add(m.saturating_mul(3)),
            ]
        }
    };
    // Saturating: several counts near 2^64 would overflow even u128.
    factors.iter().fold(1, |p: u128, f| p.saturating_mul(*f))
}
