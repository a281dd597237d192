//! Mesh generators for simple shapes: rectangles, boxes, discs, annuli, ball and shell octants,
//! and a quarter disc or ball octant with a concentric inclusion.
//!
//! Every generator takes a parameter struct and returns a [`Mesh`] with one cell block, the region
//! `domain` (all cells) and named boundaries, or [`MeshError::Generator`] saying which parameter
//! is wrong and what was expected. Cells use the Dilata (VTK) node order of [`CellKind`], are
//! positively oriented, and quadratic nodes are placed on the smooth map of the shape, so mid-edge
//! nodes of curved boundaries lie on the circle or sphere. Nodes shared by neighbouring cells are
//! merged exactly by construction (integer lattice keys, no coordinate tolerance).
//!
//! ```
//! use dilata_mesh::generate::{quarter_disc, rectangle, DiscParams, RectangleParams};
//! use dilata_mesh::CellKind;
//!
//! let plate = rectangle(&RectangleParams {
//!     origin: [0.0, 0.0],
//!     lengths: [2.0, 1.0],
//!     n_cells: [4, 2],
//!     kind: CellKind::Quad4,
//! })?;
//! assert_eq!((plate.n_points(), plate.n_cells()), (15, 8));
//! assert_eq!(plate.boundary("left")?.len(), 2);
//!
//! let particle = quarter_disc(&DiscParams { radius: 1.0, n_cells: 2, kind: CellKind::Quad9 })?;
//! assert_eq!(particle.n_cells(), 12);
//! assert_eq!(particle.boundary("axis")?, particle.boundary("symmetry_x")?);
//! # Ok::<(), dilata_mesh::MeshError>(())
//! ```

mod blocks;
mod cube_sphere;
mod plate;
mod structured;

use std::f64::consts::{FRAC_PI_2, TAU};

use crate::cell::CellKind;
use crate::error::MeshError;
use crate::mesh::Mesh;

use blocks::{AnnulusBlock, BoxBlock, Closure};
use cube_sphere::{add_cube_sphere, build_cube_sphere, CubeSphere, Extent, Inner};
use structured::Builder;

/// Half-size of the square core of [`quarter_disc`] and [`disc`] as a fraction of the radius.
/// The core-to-arc blend is orientation-preserving for fractions below `1/sqrt(2)`.
pub const DISC_CORE_FRACTION: f64 = 0.5;

/// Half-size of the cube core of [`ball_octant`] as a fraction of the radius. The core-to-sphere
/// blend is orientation-preserving for fractions below `1/sqrt(3)`; 0.4 keeps the cells near the
/// core's outer corner from becoming flat.
pub const BALL_CORE_FRACTION: f64 = 0.4;

/// Largest angle one cell of [`annulus_sector`] may span (a quarter turn).
pub const MAX_CELL_ANGLE: f64 = FRAC_PI_2;

/// Parameters of [`rectangle`].
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct RectangleParams {
    /// Corner with the smallest coordinates.
    pub origin: [f64; 2],
    /// Side lengths along x and y (positive).
    pub lengths: [f64; 2],
    /// Number of cells along x and y (at least 1; triangles split each of these squares in two).
    pub n_cells: [usize; 2],
    /// Tri3, Tri6, Quad4, Quad8 or Quad9.
    pub kind: CellKind,
}

/// Parameters of [`cuboid`].
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct BoxParams {
    /// Corner with the smallest coordinates.
    pub origin: [f64; 3],
    /// Edge lengths along x, y and z (positive).
    pub lengths: [f64; 3],
    /// Number of cells along x, y and z (at least 1; tetrahedra split each of these cubes in 6).
    pub n_cells: [usize; 3],
    /// Tet4, Tet10, Hex8, Hex20 or Hex27.
    pub kind: CellKind,
}

/// Parameters of [`quarter_disc`] and [`disc`].
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct DiscParams {
    /// Radius (positive); the disc is centred at the origin.
    pub radius: f64,
    /// Resolution: cells along each side of the core of a quarter disc and radially from the core
    /// to the arc (at least 1). A quarter disc has `3 n²` cells, a full disc `12 n²`.
    pub n_cells: usize,
    /// Quad4, Quad8 or Quad9.
    pub kind: CellKind,
}

/// Parameters of [`annulus_sector`].
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct AnnulusParams {
    /// Inner radius, `0 < inner_radius < outer_radius`.
    pub inner_radius: f64,
    /// Outer radius.
    pub outer_radius: f64,
    /// Opening angle in radians, `0 < angle <= 2π`; the sector spans `0 <= θ <= angle`.
    pub angle: f64,
    /// Cells across the wall (at least 1).
    pub n_radial: usize,
    /// Cells around the sector (at least 1, and at most [`MAX_CELL_ANGLE`] per cell).
    pub n_angular: usize,
    /// Quad4, Quad8 or Quad9.
    pub kind: CellKind,
}

/// Parameters of [`notched_plate`].
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct NotchedPlateParams {
    /// Extent along x (positive, larger than the radius).
    pub width: f64,
    /// Extent along y (positive, larger than the radius).
    pub height: f64,
    /// Radius of the quarter-circle cut at the origin.
    pub radius: f64,
    /// Cells from the arc to the straight edges (at least 1).
    pub n_radial: usize,
    /// Cells along the arc in each of the two blocks (at least 1).
    pub n_angular: usize,
    /// Ratio of the outermost to the innermost radial cell size (1 uniform; above 1 refines
    /// towards the arc).
    pub grading: f64,
    /// Quad4, Quad8 or Quad9.
    pub kind: CellKind,
}

/// Parameters of [`ball_octant`].
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct BallParams {
    /// Radius (positive); the ball is centred at the origin.
    pub radius: f64,
    /// Resolution: cells along each edge of the cube core and radially from the core to the
    /// sphere (at least 1). The octant has `4 n³` cells.
    pub n_cells: usize,
    /// Hex8, Hex20 or Hex27.
    pub kind: CellKind,
}

/// Parameters of [`shell_octant`].
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct ShellParams {
    /// Inner radius, `0 < inner_radius < outer_radius`.
    pub inner_radius: f64,
    /// Outer radius.
    pub outer_radius: f64,
    /// Cells across the wall (at least 1).
    pub n_radial: usize,
    /// Cells along each edge of each of the three patches that tile the octant of the sphere
    /// (at least 1). The shell has `3 n_angular² n_radial` cells.
    pub n_angular: usize,
    /// Hex8, Hex20 or Hex27.
    pub kind: CellKind,
}

/// Parameters of [`inclusion_quarter_disc`] and [`inclusion_ball_octant`]: a round inclusion of
/// radius `inclusion_radius` centred at the origin inside a concentric matrix of radius `radius`.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct InclusionParams {
    /// Radius of the inclusion, `0 < inclusion_radius < radius`.
    pub inclusion_radius: f64,
    /// Outer radius of the matrix.
    pub radius: f64,
    /// Resolution of the inclusion, as `n_cells` of [`quarter_disc`] (or [`ball_octant`]):
    /// cells along each side of its core and radially from the core to the interface (at
    /// least 1). It also sets the cells around the matrix (`n_cells` per curved block).
    pub n_inclusion: usize,
    /// Cells across the matrix from the interface to the outer surface (at least 1).
    pub n_matrix: usize,
    /// Ratio of the outermost to the innermost radial cell size in the matrix (1 uniform; above
    /// 1 refines towards the interface).
    pub grading: f64,
    /// Quad4, Quad8 or Quad9 for the quarter disc; Hex8, Hex20 or Hex27 for the octant.
    pub kind: CellKind,
}

const PLANAR_KINDS: [CellKind; 5] = [
    CellKind::Tri3,
    CellKind::Tri6,
    CellKind::Quad4,
    CellKind::Quad8,
    CellKind::Quad9,
];
const SOLID_KINDS: [CellKind; 5] = [
    CellKind::Tet4,
    CellKind::Tet10,
    CellKind::Hex8,
    CellKind::Hex20,
    CellKind::Hex27,
];
const QUAD_KINDS: [CellKind; 3] = [CellKind::Quad4, CellKind::Quad8, CellKind::Quad9];
const HEX_KINDS: [CellKind; 3] = [CellKind::Hex8, CellKind::Hex20, CellKind::Hex27];

/// Structured mesh of the rectangle `origin + [0, lengths[0]] × [0, lengths[1]]`.
///
/// Boundaries `left` (x min), `right` (x max), `bottom` (y min), `top` (y max). Triangles split
/// every square along the diagonal from its lower-left to its upper-right corner.
pub fn rectangle(params: &RectangleParams) -> Result<Mesh, MeshError> {
    const WHAT: &str = "rectangle";
    check_kind(WHAT, params.kind, &PLANAR_KINDS)?;
    for d in 0..2 {
        check_finite(WHAT, &format!("origin[{d}]"), params.origin[d])?;
        check_positive(WHAT, &format!("lengths[{d}]"), params.lengths[d])?;
        check_count(WHAT, &format!("n_cells[{d}]"), params.n_cells[d])?;
    }
    check_size(WHAT, &params.n_cells)?;
    let block = BoxBlock {
        origin: [params.origin[0], params.origin[1], 0.0],
        lengths: [params.lengths[0], params.lengths[1], 0.0],
        n_cells: [params.n_cells[0], params.n_cells[1], 0],
        names: [
            [Some("left"), Some("right")],
            [Some("bottom"), Some("top")],
            [None, None],
        ],
    };
    let mut builder = Builder::new(2, params.kind);
    builder.add_block(&block);
    Ok(builder.finish())
}

/// Structured mesh of the box `origin + [0, lengths[0]] × [0, lengths[1]] × [0, lengths[2]]`.
///
/// Boundaries `left`/`right` (x min/max), `bottom`/`top` (y), `back`/`front` (z). Tetrahedra
/// split every cube into six around its diagonal from the smallest to the largest corner, which
/// is conforming between neighbouring cubes.
pub fn cuboid(params: &BoxParams) -> Result<Mesh, MeshError> {
    const WHAT: &str = "box";
    check_kind(WHAT, params.kind, &SOLID_KINDS)?;
    for d in 0..3 {
        check_finite(WHAT, &format!("origin[{d}]"), params.origin[d])?;
        check_positive(WHAT, &format!("lengths[{d}]"), params.lengths[d])?;
        check_count(WHAT, &format!("n_cells[{d}]"), params.n_cells[d])?;
    }
    check_size(WHAT, &params.n_cells)?;
    let block = BoxBlock {
        origin: params.origin,
        lengths: params.lengths,
        n_cells: params.n_cells,
        names: [
            [Some("left"), Some("right")],
            [Some("bottom"), Some("top")],
            [Some("back"), Some("front")],
        ],
    };
    let mut builder = Builder::new(3, params.kind);
    builder.add_block(&block);
    Ok(builder.finish())
}

/// Quarter of the disc of radius `R` centred at the origin, in the first quadrant, meshed with a
/// square core `[0, a]²` (`a = DISC_CORE_FRACTION · R`) and two curved blocks out to the arc.
///
/// Boundaries `outer` (the arc), `symmetry_x` (the edge on x = 0), `symmetry_y` (the edge on
/// y = 0) and `axis`, the same facets as `symmetry_x`: in an r–z axisymmetric model x is the
/// radius and this edge is the axis of revolution.
pub fn quarter_disc(params: &DiscParams) -> Result<Mesh, MeshError> {
    let spec = disc_spec("quarter disc", params, Extent::FirstSector)?;
    let mut mesh = build_cube_sphere(&spec, params.kind);
    let axis = mesh
        .boundaries
        .get("symmetry_x")
        .cloned()
        .unwrap_or_default();
    mesh.boundaries.insert("axis".to_string(), axis);
    Ok(mesh)
}

/// Full disc of radius `R` centred at the origin: a square core `[-a, a]²` with `2n` cells per
/// side (`a = DISC_CORE_FRACTION · R`) and four curved blocks of `2n × n` cells. Boundary `outer`.
pub fn disc(params: &DiscParams) -> Result<Mesh, MeshError> {
    let spec = disc_spec("disc", params, Extent::Full)?;
    Ok(build_cube_sphere(&spec, params.kind))
}

/// Annulus sector `inner_radius <= r <= outer_radius`, `0 <= θ <= angle`, centred at the origin,
/// in polar cells (radial lines and circular arcs).
///
/// Boundaries `inner`, `outer`, and for `angle < 2π` also `start` (θ = 0) and `end`
/// (θ = angle). An angle of 2π (to a relative 1e-12) gives the full annulus, whose seam at θ = 0
/// shares its nodes; it has no `start` or `end`. Each cell may span at most [`MAX_CELL_ANGLE`].
pub fn annulus_sector(params: &AnnulusParams) -> Result<Mesh, MeshError> {
    const WHAT: &str = "annulus sector";
    check_kind(WHAT, params.kind, &QUAD_KINDS)?;
    check_radii(WHAT, params.inner_radius, params.outer_radius)?;
    check_count(WHAT, "n_radial", params.n_radial)?;
    check_count(WHAT, "n_angular", params.n_angular)?;
    let angle = params.angle;
    if !(angle.is_finite() && angle > 0.0 && angle <= TAU * (1.0 + 1e-12)) {
        return Err(MeshError::Generator(format!(
            "{WHAT}: angle must be in radians with 0 < angle <= 2π, got {angle}"
        )));
    }
    let (closure, angle) = if angle >= TAU * (1.0 - 1e-12) {
        (Closure::Closed, TAU)
    } else {
        (Closure::Open, angle)
    };
    if angle / params.n_angular as f64 > MAX_CELL_ANGLE * (1.0 + 1e-12) {
        return Err(MeshError::Generator(format!(
            "{WHAT}: each cell may span at most a quarter turn; an angle of {angle} needs n_angular >= {}, got {}",
            (angle / MAX_CELL_ANGLE * (1.0 - 1e-12)).ceil(),
            params.n_angular
        )));
    }
    check_size(WHAT, &[params.n_radial, params.n_angular])?;
    let block = AnnulusBlock {
        inner_radius: params.inner_radius,
        outer_radius: params.outer_radius,
        angle,
        n_radial: params.n_radial,
        n_angular: params.n_angular,
        closure,
    };
    let mut builder = Builder::new(2, params.kind);
    builder.add_block(&block);
    Ok(builder.finish())
}

/// The rectangle `[0, width] × [0, height]` without the quarter disc of radius `radius` at the
/// origin, in two mapped quad blocks split along the ray to the corner `(width, height)`.
///
/// It is the quarter model of a plate with a central circular hole (symmetry on `left` and
/// `bottom`) or the half model of a plate with a semicircular edge notch (symmetry on `bottom`,
/// `left` free). Boundaries `notch` (the arc), `bottom` (y = 0), `right` (x = width), `top`
/// (y = height), `left` (x = 0). Nodes of the arc, mid-side nodes included, lie on the circle.
pub fn notched_plate(params: &NotchedPlateParams) -> Result<Mesh, MeshError> {
    const WHAT: &str = "notched plate";
    check_kind(WHAT, params.kind, &QUAD_KINDS)?;
    check_positive(WHAT, "width", params.width)?;
    check_positive(WHAT, "height", params.height)?;
    check_positive(WHAT, "radius", params.radius)?;
    if params.radius >= params.width.min(params.height) {
        return Err(MeshError::Generator(format!(
            "{WHAT}: the radius {} must be smaller than the width {} and the height {}",
            params.radius, params.width, params.height
        )));
    }
    check_count(WHAT, "n_radial", params.n_radial)?;
    check_count(WHAT, "n_angular", params.n_angular)?;
    if !(params.grading.is_finite() && params.grading > 0.0) {
        return Err(MeshError::Generator(format!(
            "{WHAT}: grading must be a positive number, got {}",
            params.grading
        )));
    }
    check_size(WHAT, &[params.n_radial, 2 * params.n_angular])?;
    let mut builder = Builder::new(2, params.kind);
    for upper in [false, true] {
        builder.add_block(&plate::NotchBlock {
            width: params.width,
            height: params.height,
            radius: params.radius,
            n_radial: params.n_radial,
            n_angular: params.n_angular,
            angular_offset: if upper { 2 * params.n_angular } else { 0 },
            upper,
            grading: params.grading,
        });
    }
    Ok(builder.finish())
}

/// Octant `x, y, z >= 0` of the ball of radius `R` centred at the origin: a cube core `[0, a]³`
/// (`a = BALL_CORE_FRACTION · R`) and three curved blocks out to the sphere.
///
/// Boundaries `outer` (the sphere), `symmetry_x` (the plane x = 0), `symmetry_y`, `symmetry_z`.
pub fn ball_octant(params: &BallParams) -> Result<Mesh, MeshError> {
    const WHAT: &str = "ball octant";
    check_kind(WHAT, params.kind, &HEX_KINDS)?;
    check_positive(WHAT, "radius", params.radius)?;
    check_count(WHAT, "n_cells", params.n_cells)?;
    check_size(WHAT, &[params.n_cells; 3])?;
    let spec = CubeSphere::single(
        3,
        Extent::FirstSector,
        Inner::Core {
            half_size: BALL_CORE_FRACTION * params.radius,
        },
        params.radius,
        params.n_cells,
        params.n_cells,
    );
    Ok(build_cube_sphere(&spec, params.kind))
}

/// Octant `x, y, z >= 0` of the spherical shell `inner_radius <= |x| <= outer_radius`: three
/// blocks, each the radial extrusion of one third of the octant of the sphere (the central
/// projection of one face of a cube).
///
/// Boundaries `inner`, `outer`, `symmetry_x` (the plane x = 0), `symmetry_y`, `symmetry_z`.
pub fn shell_octant(params: &ShellParams) -> Result<Mesh, MeshError> {
    const WHAT: &str = "shell octant";
    check_kind(WHAT, params.kind, &HEX_KINDS)?;
    check_radii(WHAT, params.inner_radius, params.outer_radius)?;
    check_count(WHAT, "n_radial", params.n_radial)?;
    check_count(WHAT, "n_angular", params.n_angular)?;
    check_size(WHAT, &[params.n_angular, params.n_angular, params.n_radial])?;
    let spec = CubeSphere::single(
        3,
        Extent::FirstSector,
        Inner::Sphere {
            radius: params.inner_radius,
        },
        params.outer_radius,
        params.n_angular,
        params.n_radial,
    );
    Ok(build_cube_sphere(&spec, params.kind))
}

/// Quarter disc of radius `R` with a concentric quarter-disc inclusion of radius `a`: the mesh of
/// [`quarter_disc`] of radius `a` (core half-size `DISC_CORE_FRACTION · a`), surrounded by a
/// ring `a ≤ r ≤ R` of two curved blocks whose cells follow the radial lines of the inclusion's
/// blocks, graded by `grading`. Element edges lie on the circle `r = a` (quadratic mid-edge
/// nodes too), so the inclusion is exactly the union of its cells.
///
/// Regions `inclusion` (`r ≤ a`, `3 n²` cells, numbered first), `matrix` (`2 n m` cells) and
/// `domain`; boundaries `outer` (the arc `r = R`), `symmetry_x` (x = 0, also named `axis` for an
/// r–z axisymmetric model, where the inclusion is a sphere), `symmetry_y` (y = 0). The interface
/// is not a boundary.
pub fn inclusion_quarter_disc(params: &InclusionParams) -> Result<Mesh, MeshError> {
    let mut mesh = inclusion_mesh("inclusion quarter disc", 2, params)?;
    let axis = mesh
        .boundaries
        .get("symmetry_x")
        .cloned()
        .unwrap_or_default();
    mesh.boundaries.insert("axis".to_string(), axis);
    Ok(mesh)
}

/// Octant of the ball of radius `R` with a concentric spherical inclusion of radius `a`: the mesh
/// of [`ball_octant`] of radius `a`, surrounded by a shell `a ≤ |x| ≤ R` of three curved blocks,
/// graded by `grading`; element faces lie on the sphere `|x| = a`.
///
/// Regions `inclusion` (`4 n³` cells, numbered first), `matrix` (`3 n² m` cells) and `domain`;
/// boundaries `outer`, `symmetry_x`, `symmetry_y`, `symmetry_z`.
pub fn inclusion_ball_octant(params: &InclusionParams) -> Result<Mesh, MeshError> {
    inclusion_mesh("inclusion ball octant", 3, params)
}

fn inclusion_mesh(what: &str, dim: usize, params: &InclusionParams) -> Result<Mesh, MeshError> {
    let (kinds, core_fraction) = if dim == 2 {
        (&QUAD_KINDS, DISC_CORE_FRACTION)
    } else {
        (&HEX_KINDS, BALL_CORE_FRACTION)
    };
    check_kind(what, params.kind, kinds)?;
    check_positive(what, "inclusion_radius", params.inclusion_radius)?;
    check_positive(what, "radius", params.radius)?;
    if params.inclusion_radius >= params.radius {
        return Err(MeshError::Generator(format!(
            "{what}: inclusion_radius must be smaller than radius, got inclusion_radius {} and radius {}",
            params.inclusion_radius, params.radius
        )));
    }
    check_count(what, "n_inclusion", params.n_inclusion)?;
    check_count(what, "n_matrix", params.n_matrix)?;
    if !(params.grading.is_finite() && params.grading > 0.0) {
        return Err(MeshError::Generator(format!(
            "{what}: grading must be a positive number, got {}",
            params.grading
        )));
    }
    let n = params.n_inclusion;
    check_size(what, &vec![n; dim])?;
    let mut ring_cells = vec![n; dim - 1];
    ring_cells.push(params.n_matrix);
    check_size(what, &ring_cells)?;
    let inclusion = CubeSphere {
        outer_name: None,
        ..CubeSphere::single(
            dim,
            Extent::FirstSector,
            Inner::Core {
                half_size: core_fraction * params.inclusion_radius,
            },
            params.inclusion_radius,
            n,
            n,
        )
    };
    let matrix = CubeSphere {
        grading: params.grading,
        layer_offset: 2 * n,
        inner_name: None,
        ..CubeSphere::single(
            dim,
            Extent::FirstSector,
            Inner::Sphere {
                radius: params.inclusion_radius,
            },
            params.radius,
            n,
            params.n_matrix,
        )
    };
    let mut builder = Builder::new(dim, params.kind);
    add_cube_sphere(&mut builder, &inclusion);
    let n_inclusion = builder.n_cells();
    add_cube_sphere(&mut builder, &matrix);
    let mut mesh = builder.finish();
    let n_cells = mesh.n_cells();
    mesh.regions
        .insert("inclusion".to_string(), (0..n_inclusion).collect());
    mesh.regions
        .insert("matrix".to_string(), (n_inclusion..n_cells).collect());
    Ok(mesh)
}

/// Validated cube-sphere description of a quarter or full disc.
fn disc_spec(what: &str, params: &DiscParams, extent: Extent) -> Result<CubeSphere, MeshError> {
    check_kind(what, params.kind, &QUAD_KINDS)?;
    check_positive(what, "radius", params.radius)?;
    check_count(what, "n_cells", params.n_cells)?;
    let n_tangential = match extent {
        Extent::FirstSector => Some(params.n_cells),
        Extent::Full => params.n_cells.checked_mul(2),
    };
    let n_tangential = n_tangential.ok_or_else(|| too_large(what))?;
    check_size(what, &[n_tangential, n_tangential])?;
    Ok(CubeSphere::single(
        2,
        extent,
        Inner::Core {
            half_size: DISC_CORE_FRACTION * params.radius,
        },
        params.radius,
        n_tangential,
        params.n_cells,
    ))
}

fn check_kind(what: &str, kind: CellKind, allowed: &[CellKind]) -> Result<(), MeshError> {
    if allowed.contains(&kind) {
        return Ok(());
    }
    let names: Vec<&str> = allowed.iter().map(|k| k.name()).collect();
    Err(MeshError::Generator(format!(
        "{what}: cell kind {kind} is not available; expected one of {}",
        names.join(", ")
    )))
}

fn check_finite(what: &str, name: &str, value: f64) -> Result<(), MeshError> {
    if value.is_finite() {
        return Ok(());
    }
    Err(MeshError::Generator(format!(
        "{what}: {name} must be a finite number, got {value}"
    )))
}

fn check_positive(what: &str, name: &str, value: f64) -> Result<(), MeshError> {
    if value.is_finite() && value > 0.0 {
        return Ok(());
    }
    Err(MeshError::Generator(format!(
        "{what}: {name} must be a finite positive number, got {value}"
    )))
}

fn check_count(what: &str, name: &str, value: usize) -> Result<(), MeshError> {
    if value >= 1 {
        return Ok(());
    }
    Err(MeshError::Generator(format!(
        "{what}: {name} must be at least 1, got {value}"
    )))
}

fn check_radii(what: &str, inner: f64, outer: f64) -> Result<(), MeshError> {
    check_positive(what, "inner_radius", inner)?;
    check_positive(what, "outer_radius", outer)?;
    if inner < outer {
        return Ok(());
    }
    Err(MeshError::Generator(format!(
        "{what}: inner_radius must be smaller than outer_radius, got inner_radius {inner} and outer_radius {outer}"
    )))
}

/// Largest number of lattice nodes (half steps) a generator accepts per block. Far above what
/// fits in memory; it keeps the index arithmetic free of overflow.
const MAX_LATTICE_NODES: usize = 1 << 40;

/// The half-step lattice of `n_cells` must stay countable (guards index arithmetic overflow).
fn check_size(what: &str, n_cells: &[usize]) -> Result<(), MeshError> {
    let mut total: usize = 1;
    for &n in n_cells {
        let along = n.checked_mul(2).and_then(|m| m.checked_add(1));
        total = along
            .and_then(|m| total.checked_mul(m))
            .ok_or_else(|| too_large(what))?;
    }
    if total > MAX_LATTICE_NODES {
        return Err(too_large(what));
    }
    Ok(())
}

fn too_large(what: &str) -> MeshError {
    MeshError::Generator(format!(
        "{what}: too many cells requested; expected at most {MAX_LATTICE_NODES} lattice nodes per block"
    ))
}
