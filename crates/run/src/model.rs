//! From a parsed scenario to a checked model: mesh, zones, materials, initial state and the
//! resolved loading program. Every check that can be made before computing is made here, and
//! every failure names the file, line and column of the value at fault.

use std::collections::BTreeMap;
use std::ops::Range;
use std::path::{Path, PathBuf};

use dilata_fem::GeometryMode;
use dilata_io::scenario::{
    Amount, BoundarySpec, Element, FreeEnergy, Geometry, Located, Material, MobilityKind, Noise,
    NumberOrFormula, PlaneStrainSwelling, ScalarOrTensor, Scenario, ScenarioError, Shape, StopRule,
    Strain,
};
use dilata_material::chemical::{
    ChemicalLaw, DoubleWellParams, IdealDiluteParams, LatticeGasParams,
};
use dilata_material::coupled::{CoupledLawParts, CoupledPointLaw};
use dilata_material::elastic::{Isotropic, Stiffness, Voigt};
use dilata_material::finite::{FiniteLaw, GelLaw, GelParams, HostLaw, HostParams};
use dilata_material::gradient::GradientEnergy;
use dilata_material::mobility::{
    Diffusivity, DiluteMobilityParams, LatticeGasMobilityParams, MobilityLaw,
};
use dilata_material::stiffness::{LinearYoungParams, StiffnessLaw};
use dilata_material::swelling::{IsotropicSwellingParams, SwellingLaw, TensorSwellingParams};
use dilata_mesh::generate::{
    annulus_sector, ball_octant, cuboid, disc, inclusion_ball_octant, inclusion_quarter_disc,
    notched_plate, quarter_disc, rectangle, shell_octant, AnnulusParams, BallParams, BoxParams,
    DiscParams, InclusionParams, NotchedPlateParams, RectangleParams, ShellParams,
};
use dilata_mesh::{CellKind, Mesh};
use dilata_physics::coupled::LawMap;
use nalgebra::Matrix3;

use crate::formula::Formula;
use crate::program::{build_stage, StagePlan};
use crate::RunError;

/// Faraday's constant in C/mol (exact in the 2019 SI; CODATA 2018, from memory).
pub const FARADAY: f64 = 96_485.332_123_310_02;

/// A checked scenario, ready to run.
pub struct Model {
    pub scenario: Scenario,
    /// Scenario text (copied into the results).
    pub text: String,
    /// The scenario file as named by the user.
    pub file: String,
    pub mesh: Mesh,
    pub mode: GeometryMode,
    /// Interpolation orders of u, c and μ.
    pub orders: [usize; 3],
    /// Periodic node links (empty unless the body is periodic).
    pub links: dilata_mesh::periodic::NodeLinks,
    pub laws: LawMap,
    pub material_names: Vec<String>,
    /// Initial concentration at every mesh node.
    pub initial_c: Vec<f64>,
    /// Volumetric source in mol/(m³ s) (the same in every material).
    pub source: f64,
    pub stages: Vec<StagePlan>,
}

/// Where scenario errors point: the text and the file name.
#[derive(Clone, Copy)]
pub(crate) struct Source<'a> {
    pub text: &'a str,
    pub file: &'a str,
}

impl Source<'_> {
    pub fn error(&self, span: Range<usize>, message: impl Into<String>) -> ScenarioError {
        ScenarioError::at_span(self.text, self.file, span, message)
    }
}

/// Read and check a scenario file.
pub fn load_model(path: &Path) -> Result<Model, RunError> {
    let text = std::fs::read_to_string(path).map_err(|source| RunError::Read {
        path: path.to_path_buf(),
        source,
    })?;
    let file = path.display().to_string();
    let base = path.parent().map(Path::to_path_buf).unwrap_or_default();
    build_model(text, &file, &base)
}

/// Check a scenario given as text; `file` names it in messages and `base` resolves relative
/// mesh paths.
pub fn build_model(text: String, file: &str, base: &Path) -> Result<Model, RunError> {
    let scenario = Scenario::parse(&text, file)?;
    let src = Source { text: &text, file };
    let mode = match scenario.body.geometry {
        Geometry::ThreeD => GeometryMode::ThreeD,
        Geometry::PlaneStrain => GeometryMode::PlaneStrain,
        Geometry::PlaneStress => GeometryMode::PlaneStress,
        Geometry::Axisymmetric => GeometryMode::Axisymmetric,
    };
    let mut mesh = build_mesh(&scenario, src, base)?;
    let want_dim = if mode == GeometryMode::ThreeD { 3 } else { 2 };
    if mesh.dim != want_dim {
        return Err(RunError::Scenario(src.error(
            0..0,
            format!(
                "the body is {}D but geometry = {:?} needs a {}D mesh",
                mesh.dim, scenario.body.geometry, want_dim
            ),
        )));
    }
    dilata_fem::quality::check_cells(&mesh)?;
    if mode == GeometryMode::Axisymmetric {
        if let Some(p) = mesh.points.iter().find(|p| p[0] < -1e-12) {
            return Err(RunError::Scenario(src.error(
                0..0,
                format!(
                    "axisymmetric bodies must lie in x = r >= 0; found a node at x = {:e}",
                    p[0]
                ),
            )));
        }
    }
    if scenario.body.strain == Strain::Finite {
        check_finite_body(&scenario, src)?;
    }
    add_zones(&scenario, &mut mesh, src)?;
    let links = crate::periodic::build_links(&scenario, &mesh, mode, src)?;
    let orders = build_orders(&scenario, &mesh, src)?;
    let (laws, material_names) = build_laws(&scenario, &mesh, mode, src)?;
    let initial_c = build_initial(&scenario, &mesh, &laws, src)?;
    let source = scenario.material[0].get_ref().source;
    for m in &scenario.material {
        let s = m.get_ref().source;
        if !s.is_finite() || s != source {
            return Err(RunError::Scenario(src.error(
                m.span(),
                format!(
                    "material '{}': source = {s}; a volumetric source must be finite and the                      same in every material (this version applies one source to the whole body)",
                    m.get_ref().name
                ),
            )));
        }
    }
    let mut stages = Vec::new();
    for stage in &scenario.stage {
        stages.push(build_stage(&scenario, stage, &mesh, orders, src)?);
    }
    if stages.is_empty() {
        return Err(RunError::Scenario(src.error(
            0..0,
            "the loading program is empty: add at least one [[stage]]",
        )));
    }
    check_time(&scenario, src)?;
    let file = file.to_string();
    Ok(Model {
        scenario,
        text,
        file,
        mesh,
        mode,
        orders,
        links,
        laws,
        material_names,
        initial_c,
        source,
        stages,
    })
}

/// What finite strain does not (yet) combine with, refused before any computation.
fn check_finite_body(scenario: &Scenario, src: Source<'_>) -> Result<(), RunError> {
    let body = &scenario.body;
    if !body.mechanics {
        return Err(RunError::Scenario(src.error(
            0..0,
            "body.strain = \"finite\" needs body.mechanics = true (finite strain is about the \
             deformation)",
        )));
    }
    if let Some(p) = &body.periodic {
        return Err(RunError::Scenario(src.error(
            p.span(),
            "periodic bodies are small-strain only in this version (body.strain = \"finite\")",
        )));
    }
    if let Some(p) = &body.periodic_pairs {
        return Err(RunError::Scenario(src.error(
            p.span(),
            "periodic bodies are small-strain only in this version (body.strain = \"finite\")",
        )));
    }
    Ok(())
}

fn element_kind(e: Element) -> CellKind {
    match e {
        Element::Tri3 => CellKind::Tri3,
        Element::Tri6 => CellKind::Tri6,
        Element::Quad4 => CellKind::Quad4,
        Element::Quad8 => CellKind::Quad8,
        Element::Quad9 => CellKind::Quad9,
        Element::Tet4 => CellKind::Tet4,
        Element::Tet10 => CellKind::Tet10,
        Element::Hex8 => CellKind::Hex8,
        Element::Hex20 => CellKind::Hex20,
        Element::Hex27 => CellKind::Hex27,
    }
}

fn build_mesh(scenario: &Scenario, src: Source<'_>, base: &Path) -> Result<Mesh, RunError> {
    let body = &scenario.body;
    match (&body.mesh, &body.shape) {
        (Some(m), None) => {
            let path: PathBuf = base.join(m.get_ref());
            dilata_mesh::msh::read_msh(&path).map_err(RunError::Mesh)
        }
        (None, Some(shape)) => {
            let generated = match shape.get_ref() {
                Shape::Rectangle {
                    size,
                    origin,
                    cells,
                    element,
                } => rectangle(&RectangleParams {
                    origin: *origin,
                    lengths: *size,
                    n_cells: *cells,
                    kind: element_kind(*element),
                }),
                Shape::Box {
                    size,
                    origin,
                    cells,
                    element,
                } => cuboid(&BoxParams {
                    origin: *origin,
                    lengths: *size,
                    n_cells: *cells,
                    kind: element_kind(*element),
                }),
                Shape::QuarterDisc {
                    radius,
                    cells,
                    element,
                } => quarter_disc(&DiscParams {
                    radius: *radius,
                    n_cells: *cells,
                    kind: element_kind(*element),
                }),
                Shape::Disc {
                    radius,
                    cells,
                    element,
                } => disc(&DiscParams {
                    radius: *radius,
                    n_cells: *cells,
                    kind: element_kind(*element),
                }),
                Shape::AnnulusSector {
                    inner_radius,
                    outer_radius,
                    angle_degrees,
                    cells,
                    element,
                } => annulus_sector(&AnnulusParams {
                    inner_radius: *inner_radius,
                    outer_radius: *outer_radius,
                    angle: angle_degrees.to_radians(),
                    n_radial: cells[0],
                    n_angular: cells[1],
                    kind: element_kind(*element),
                }),
                Shape::NotchedPlate {
                    width,
                    height,
                    radius,
                    cells,
                    grading,
                    element,
                } => notched_plate(&NotchedPlateParams {
                    width: *width,
                    height: *height,
                    radius: *radius,
                    n_radial: cells[0],
                    n_angular: cells[1],
                    grading: *grading,
                    kind: element_kind(*element),
                }),
                Shape::BallOctant {
                    radius,
                    cells,
                    element,
                } => ball_octant(&BallParams {
                    radius: *radius,
                    n_cells: *cells,
                    kind: element_kind(*element),
                }),
                Shape::InclusionQuarterDisc {
                    inclusion_radius,
                    radius,
                    cells,
                    grading,
                    element,
                } => inclusion_quarter_disc(&InclusionParams {
                    inclusion_radius: *inclusion_radius,
                    radius: *radius,
                    n_inclusion: cells[0],
                    n_matrix: cells[1],
                    grading: *grading,
                    kind: element_kind(*element),
                }),
                Shape::InclusionBallOctant {
                    inclusion_radius,
                    radius,
                    cells,
                    grading,
                    element,
                } => inclusion_ball_octant(&InclusionParams {
                    inclusion_radius: *inclusion_radius,
                    radius: *radius,
                    n_inclusion: cells[0],
                    n_matrix: cells[1],
                    grading: *grading,
                    kind: element_kind(*element),
                }),
                Shape::ShellOctant {
                    inner_radius,
                    outer_radius,
                    cells,
                    element,
                } => shell_octant(&ShellParams {
                    inner_radius: *inner_radius,
                    outer_radius: *outer_radius,
                    n_radial: cells[0],
                    n_angular: cells[1],
                    kind: element_kind(*element),
                }),
            };
            generated.map_err(|e| RunError::Scenario(src.error(shape.span(), e.to_string())))
        }
        (Some(m), Some(_)) => Err(RunError::Scenario(
            src.error(m.span(), "give either body.mesh or body.shape, not both"),
        )),
        (None, None) => Err(RunError::Scenario(src.error(
            0..0,
            "the body needs a mesh file (body.mesh) or a generated shape (body.shape)",
        ))),
    }
}

fn add_zones(scenario: &Scenario, mesh: &mut Mesh, src: Source<'_>) -> Result<(), RunError> {
    for zone in &scenario.body.zone {
        let z = zone.get_ref();
        if z.min.len() != mesh.dim || z.max.len() != mesh.dim {
            return Err(RunError::Scenario(src.error(
                zone.span(),
                format!(
                    "zone '{}': min and max need {} coordinates each",
                    z.name, mesh.dim
                ),
            )));
        }
        if mesh.regions.contains_key(&z.name) {
            return Err(RunError::Scenario(src.error(
                zone.span(),
                format!("zone '{}' is already a region of the mesh", z.name),
            )));
        }
        let mut cells = Vec::new();
        for (id, _, nodes) in mesh.cells() {
            let mut centroid = [0.0; 3];
            for &n in nodes {
                for d in 0..3 {
                    centroid[d] += mesh.points[n][d] / nodes.len() as f64;
                }
            }
            if (0..mesh.dim).all(|d| centroid[d] >= z.min[d] && centroid[d] <= z.max[d]) {
                cells.push(id);
            }
        }
        if cells.is_empty() {
            return Err(RunError::Scenario(src.error(
                zone.span(),
                format!("zone '{}' contains no cell centroid", z.name),
            )));
        }
        mesh.regions.insert(z.name.clone(), cells);
    }
    Ok(())
}

fn build_orders(scenario: &Scenario, mesh: &Mesh, src: Source<'_>) -> Result<[usize; 3], RunError> {
    let mesh_order = mesh
        .blocks
        .iter()
        .map(|b| b.kind.order())
        .max()
        .unwrap_or(1);
    let o = scenario.orders;
    // A gel's incompressibility makes μ act as the pressure of a mixed u–p problem: it needs a
    // stable pair (Taylor–Hood: u one order above c and μ), hence quadratic cells.
    let gel = scenario.body.strain == Strain::Finite
        && scenario
            .material
            .iter()
            .any(|m| m.get_ref().free_energy == FreeEnergy::Gel);
    let scalar_default = if gel { 1 } else { mesh_order };
    let orders = [
        o.u.unwrap_or(mesh_order),
        o.c.unwrap_or(scalar_default),
        o.mu.unwrap_or(scalar_default),
    ];
    if gel && orders[0] <= orders[2].max(orders[1]) {
        return Err(RunError::Scenario(src.error(
            0..0,
            format!(
                "a gel needs u of a higher order than c and mu (its incompressibility makes mu a \
                 pressure; equal orders are unstable): got orders u {}, c {}, mu {}; use \
                 quadratic cells (e.g. quad8, quad9, tet10, hex20, hex27) with the default \
                 orders u 2, c 1, mu 1",
                orders[0], orders[1], orders[2]
            ),
        )));
    }
    for (name, order) in ["u", "c", "mu"].iter().zip(orders) {
        if order == 0 || order > mesh_order {
            return Err(RunError::Scenario(src.error(
                0..0,
                format!(
                    "orders.{name} = {order}: must be between 1 and the mesh order {mesh_order}"
                ),
            )));
        }
    }
    Ok(orders)
}

/// The keys of `(key, given)` pairs that are given, in order.
pub(crate) fn given_keys(pairs: &[(&'static str, bool)]) -> Vec<&'static str> {
    pairs
        .iter()
        .filter(|(_, set)| *set)
        .map(|(k, _)| *k)
        .collect()
}

fn tensor(v: &ScalarOrTensor) -> Matrix3<f64> {
    match v {
        ScalarOrTensor::Scalar(s) => Matrix3::identity() * *s,
        ScalarOrTensor::Tensor(rows) => Matrix3::from_fn(|i, j| rows[i][j]),
    }
}

/// Stiffness and swelling of a material (body with mechanics).
fn mechanical_laws(
    mat: &Material,
    mode: GeometryMode,
    fail: &dyn Fn(String) -> RunError,
) -> Result<(StiffnessLaw, SwellingLaw), RunError> {
    let param = |e: &dyn std::fmt::Display| fail(e.to_string());
    // Elasticity.
    let stiffness = match (
        mat.young_modulus,
        mat.poisson_ratio,
        mat.bulk_modulus,
        mat.shear_modulus,
        &mat.stiffness,
    ) {
        (Some(e), Some(nu), None, None, None) => match mat.young_modulus_full {
            None => StiffnessLaw::isotropic(Isotropic::new(e, nu).map_err(|e| param(&e))?),
            Some(e1) => {
                let c_max = mat.max_concentration.ok_or_else(|| {
                    fail("young_modulus_full needs max_concentration (where E reaches it)".into())
                })?;
                StiffnessLaw::linear_young(LinearYoungParams {
                    young_at_zero: e,
                    young_at_max: e1,
                    poisson: nu,
                    c_max,
                })
                .map_err(|e| param(&e))?
            }
        },
        (None, None, Some(k), Some(g), None) => {
            StiffnessLaw::isotropic(Isotropic::from_bulk_shear(k, g).map_err(|e| param(&e))?)
        }
        (None, None, None, None, Some(rows)) => {
            StiffnessLaw::constant(Stiffness::from_fn(|i, j| rows[i][j])).map_err(|e| param(&e))?
        }
        _ => {
            return Err(fail(
                "give elasticity as young_modulus and poisson_ratio, or bulk_modulus and \
                 shear_modulus, or a 6x6 stiffness (exactly one of these)"
                    .into(),
            ))
        }
    };
    if mat.young_modulus_full.is_some() && mat.young_modulus.is_none() {
        return Err(fail(
            "young_modulus_full needs young_modulus and poisson_ratio".into(),
        ));
    }
    let stiffness = if mode == GeometryMode::PlaneStress {
        stiffness.plane_stress()
    } else {
        stiffness
    };
    // Swelling.
    let c_ref = mat.stress_free_concentration;
    let swelling = match (mat.partial_molar_volume, &mat.expansion) {
        (Some(omega), None) => SwellingLaw::isotropic(IsotropicSwellingParams {
            partial_molar_volume: omega,
            c_ref,
        }),
        (None, Some(e)) => SwellingLaw::tensor(TensorSwellingParams {
            // The file gives tensor components; the law takes engineering shears.
            expansion: Voigt::from_column_slice(&[
                e[0],
                e[1],
                e[2],
                2.0 * e[3],
                2.0 * e[4],
                2.0 * e[5],
            ]),
            c_ref,
        }),
        _ => {
            return Err(fail(
                "give swelling as partial_molar_volume or as expansion (exactly one; \
                 partial_molar_volume = 0 for a host that does not swell)"
                    .into(),
            ))
        }
    }
    .map_err(|e| param(&e))?;
    let swelling = match (mat.plane_strain_swelling, mode) {
        (PlaneStrainSwelling::AllAxes, _) => swelling,
        (PlaneStrainSwelling::InPlane, GeometryMode::PlaneStrain) => swelling.in_plane_only(),
        (PlaneStrainSwelling::InPlane, _) => {
            return Err(fail(
                "plane_strain_swelling = \"in_plane\" is a plane-strain option; it needs \
                 geometry = \"plane_strain\" (in plane stress the swelling in z is free anyway, \
                 and in 3D and axisymmetry z is a real direction)"
                    .into(),
            ))
        }
    };
    Ok((stiffness, swelling))
}

/// The point law of one material table.
fn build_law(
    m: &Located<Material>,
    mode: GeometryMode,
    mechanics: bool,
    src: Source<'_>,
) -> Result<CoupledPointLaw, RunError> {
    let span = m.span();
    let mat = m.get_ref();
    let fail = |msg: String| {
        RunError::Scenario(src.error(span.clone(), format!("material '{}': {msg}", mat.name)))
    };
    let param = |e: &dyn std::fmt::Display| fail(e.to_string());
    if mat.free_energy == FreeEnergy::Gel {
        return Err(fail(
            "free_energy = \"gel\" needs body.strain = \"finite\" (a gel swells far beyond \
             small strain)"
                .into(),
        ));
    }
    let (stiffness, swelling) = if mechanics {
        mechanical_laws(mat, mode, &fail)?
    } else {
        let mechanical = [
            ("young_modulus", mat.young_modulus.is_some()),
            ("poisson_ratio", mat.poisson_ratio.is_some()),
            ("bulk_modulus", mat.bulk_modulus.is_some()),
            ("shear_modulus", mat.shear_modulus.is_some()),
            ("stiffness", mat.stiffness.is_some()),
            ("young_modulus_full", mat.young_modulus_full.is_some()),
            ("partial_molar_volume", mat.partial_molar_volume.is_some()),
            ("expansion", mat.expansion.is_some()),
            (
                "plane_strain_swelling",
                mat.plane_strain_swelling != PlaneStrainSwelling::AllAxes,
            ),
        ];
        let given = given_keys(&mechanical);
        if !given.is_empty() {
            return Err(fail(format!(
                "{} have no effect with body.mechanics = false; remove them",
                given.join(", ")
            )));
        }
        // No displacement field: the strain is identically zero, and without swelling the
        // stress and its potential vanish whatever the stiffness (a unit one is used).
        (
            StiffnessLaw::isotropic(Isotropic::new(1.0, 0.0).map_err(|e| param(&e))?),
            SwellingLaw::isotropic(IsotropicSwellingParams {
                partial_molar_volume: 0.0,
                c_ref: 0.0,
            })
            .map_err(|e| param(&e))?,
        )
    };
    // Chemistry.
    let temperature = mat.temperature;
    let gel_keys = [
        ("solvent_molar_volume", mat.solvent_molar_volume.is_some()),
        ("chi", mat.chi.is_some()),
        ("reference_stretch", mat.reference_stretch.is_some()),
    ];
    let given = given_keys(&gel_keys);
    if !given.is_empty() {
        return Err(fail(format!(
            "{} belong to free_energy = \"gel\"; remove them",
            given.join(", ")
        )));
    }
    let chemical = match mat.free_energy {
        FreeEnergy::Gel => unreachable!("refused above"),
        FreeEnergy::Dilute => {
            if mat.interaction != 0.0 {
                return Err(fail("interaction needs free_energy = \"lattice\"".into()));
            }
            ChemicalLaw::ideal_dilute(IdealDiluteParams {
                mu0: mat.standard_potential,
                temperature,
                c_ref: mat.reference_concentration.ok_or_else(|| {
                    fail("free_energy = \"dilute\" needs reference_concentration (mol/m^3, where mu = standard_potential)".into())
                })?,
            })
        }
        FreeEnergy::Lattice => ChemicalLaw::lattice_gas(LatticeGasParams {
            mu0: mat.standard_potential,
            temperature,
            c_max: mat
                .max_concentration
                .ok_or_else(|| fail("free_energy = \"lattice\" needs max_concentration".into()))?,
            interaction: mat.interaction,
        }),
        FreeEnergy::DoubleWell => {
            if mat.interaction != 0.0 {
                return Err(fail("interaction needs free_energy = \"lattice\"".into()));
            }
            let [c_a, c_b] = mat.well_concentrations.ok_or_else(|| {
                fail("free_energy = \"double_well\" needs well_concentrations = [c_a, c_b]".into())
            })?;
            ChemicalLaw::double_well(DoubleWellParams {
                height: mat.well_height.ok_or_else(|| {
                    fail("free_energy = \"double_well\" needs well_height".into())
                })?,
                c_a,
                c_b,
            })
        }
    }
    .map_err(|e| param(&e))?;
    if mat.free_energy != FreeEnergy::DoubleWell
        && (mat.well_height.is_some() || mat.well_concentrations.is_some())
    {
        return Err(fail(
            "well_height and well_concentrations need free_energy = \"double_well\"".into(),
        ));
    }
    let gradient = match &mat.gradient_energy {
        None => Ok(GradientEnergy::none()),
        Some(ScalarOrTensor::Scalar(k)) => GradientEnergy::isotropic(*k),
        Some(t) => GradientEnergy::tensor(tensor(t)),
    }
    .map_err(|e| param(&e))?;
    // Transport.
    let kind = mat.mobility.unwrap_or(match mat.free_energy {
        FreeEnergy::Dilute => MobilityKind::Dilute,
        FreeEnergy::Lattice => MobilityKind::Lattice,
        FreeEnergy::DoubleWell => MobilityKind::Constant,
        FreeEnergy::Gel => unreachable!("refused above"),
    });
    let diffusivity = || -> Result<Diffusivity, RunError> {
        let d = mat
            .diffusivity
            .as_ref()
            .ok_or_else(|| fail(format!("mobility {kind:?} needs diffusivity (m^2/s)")))?;
        match d {
            ScalarOrTensor::Scalar(s) => Diffusivity::isotropic(*s),
            t => Diffusivity::tensor(tensor(t)),
        }
        .map_err(|e| param(&e))
    };
    let mobility = match kind {
        MobilityKind::Dilute => MobilityLaw::dilute(DiluteMobilityParams {
            diffusivity: diffusivity()?,
            temperature,
        }),
        MobilityKind::Lattice => MobilityLaw::lattice_gas(LatticeGasMobilityParams {
            diffusivity: diffusivity()?,
            temperature,
            c_max: mat
                .max_concentration
                .ok_or_else(|| fail("mobility = \"lattice\" needs max_concentration".into()))?,
        }),
        MobilityKind::Constant => {
            MobilityLaw::constant(tensor(mat.constant_mobility.as_ref().ok_or_else(|| {
                fail("mobility = \"constant\" needs constant_mobility".into())
            })?))
        }
    }
    .map_err(|e| param(&e))?;
    CoupledPointLaw::new(CoupledLawParts {
        stiffness,
        swelling,
        chemical,
        mobility,
        gradient,
    })
    .map_err(|e| param(&e))
}

fn build_laws(
    scenario: &Scenario,
    mesh: &Mesh,
    mode: GeometryMode,
    src: Source<'_>,
) -> Result<(LawMap, Vec<String>), RunError> {
    if scenario.material.is_empty() {
        return Err(RunError::Scenario(src.error(0..0, "no [[material]] given")));
    }
    let n_cells = mesh.n_cells();
    let mut owner = vec![u32::MAX; n_cells];
    let mut laws = Vec::new();
    let mut names = Vec::new();
    let mut fill_rest = None;
    let finite = scenario.body.strain == Strain::Finite;
    let mut finite_laws = Vec::new();
    for (i, m) in scenario.material.iter().enumerate() {
        if finite {
            finite_laws.push(build_finite_law(m, mode, src)?);
        } else {
            laws.push(build_law(m, mode, scenario.body.mechanics, src)?);
        }
        names.push(m.get_ref().name.clone());
        if m.get_ref().zones.is_empty() {
            if fill_rest.is_some() {
                return Err(RunError::Scenario(src.error(
                    m.span(),
                    "only one material may omit `zones` (it fills the cells no other material claims)",
                )));
            }
            fill_rest = Some(i);
            continue;
        }
        for zone in &m.get_ref().zones {
            let cells = mesh.regions.get(zone.get_ref()).ok_or_else(|| {
                RunError::Scenario(src.error(
                    zone.span(),
                    format!(
                        "unknown zone '{}'; the zones are: {}",
                        zone.get_ref(),
                        list(mesh.regions.keys())
                    ),
                ))
            })?;
            for &c in cells {
                if owner[c] != u32::MAX && owner[c] != i as u32 {
                    return Err(RunError::Scenario(src.error(
                        zone.span(),
                        format!(
                            "cell {c} of zone '{}' is already given material '{}'",
                            zone.get_ref(),
                            names[owner[c] as usize]
                        ),
                    )));
                }
                owner[c] = i as u32;
            }
        }
    }
    for (c, o) in owner.iter_mut().enumerate() {
        if *o == u32::MAX {
            match fill_rest {
                Some(i) => *o = i as u32,
                None => {
                    return Err(RunError::Scenario(src.error(
                        0..0,
                        format!(
                            "cell {c} has no material: list its zone in a material's `zones`, \
                             or leave `zones` out of one material so that it fills the rest"
                        ),
                    )))
                }
            }
        }
    }
    if finite {
        return Ok((LawMap::finite(finite_laws, owner), names));
    }
    Ok((LawMap::new(laws, owner), names))
}

/// The finite-strain law of a material: a gel (`free_energy = "gel"`) or a large-volume-change
/// host built from the usual keys (isotropic elasticity, partial molar volume, chemical law,
/// isotropic mobility).
fn build_finite_law(
    m: &Located<Material>,
    mode: GeometryMode,
    src: Source<'_>,
) -> Result<FiniteLaw, RunError> {
    let span = m.span();
    let mat = m.get_ref();
    let fail = |msg: String| {
        RunError::Scenario(src.error(span.clone(), format!("material '{}': {msg}", mat.name)))
    };
    let param = |e: &dyn std::fmt::Display| fail(e.to_string());
    let not_here = |keys: &[(&'static str, bool)], why: &str| -> Result<(), RunError> {
        let given = given_keys(keys);
        if given.is_empty() {
            Ok(())
        } else {
            Err(fail(format!("{} {why}; remove them", given.join(", "))))
        }
    };
    not_here(
        &[
            ("stiffness", mat.stiffness.is_some()),
            ("young_modulus_full", mat.young_modulus_full.is_some()),
            ("expansion", mat.expansion.is_some()),
            (
                "plane_strain_swelling",
                mat.plane_strain_swelling != PlaneStrainSwelling::AllAxes,
            ),
        ],
        "are not available in finite strain (isotropic elasticity and swelling only)",
    )?;
    if mode == GeometryMode::PlaneStress {
        return Err(fail(
            "finite strain is offered in 3D, plane strain and axisymmetry, not plane stress".into(),
        ));
    }
    if mat.free_energy == FreeEnergy::Gel {
        not_here(
            &[
                ("young_modulus", mat.young_modulus.is_some()),
                ("poisson_ratio", mat.poisson_ratio.is_some()),
                ("bulk_modulus", mat.bulk_modulus.is_some()),
                ("partial_molar_volume", mat.partial_molar_volume.is_some()),
                (
                    "stress_free_concentration",
                    mat.stress_free_concentration != 0.0,
                ),
                ("standard_potential", mat.standard_potential != 0.0),
                (
                    "reference_concentration",
                    mat.reference_concentration.is_some(),
                ),
                ("max_concentration", mat.max_concentration.is_some()),
                ("interaction", mat.interaction != 0.0),
                ("well_height", mat.well_height.is_some()),
                ("well_concentrations", mat.well_concentrations.is_some()),
                ("gradient_energy", mat.gradient_energy.is_some()),
                ("mobility", mat.mobility.is_some()),
                ("constant_mobility", mat.constant_mobility.is_some()),
            ],
            "do not apply to free_energy = \"gel\" (its keys: shear_modulus, \
             solvent_molar_volume, chi, temperature, diffusivity, reference_stretch)",
        )?;
        let need = |v: Option<f64>, key: &str, what: &str| {
            v.ok_or_else(|| fail(format!("free_energy = \"gel\" needs {key} ({what})")))
        };
        let diffusivity = match &mat.diffusivity {
            Some(ScalarOrTensor::Scalar(d)) => *d,
            Some(ScalarOrTensor::Tensor(_)) => {
                return Err(fail(
                    "a gel takes a scalar diffusivity (its solvent diffuses isotropically)".into(),
                ))
            }
            None => {
                return Err(fail(
                    "free_energy = \"gel\" needs diffusivity (m^2/s)".into(),
                ))
            }
        };
        let law = GelLaw::new(GelParams {
            shear_modulus: need(
                mat.shear_modulus,
                "shear_modulus",
                "Pa, N k T of the network",
            )?,
            solvent_molar_volume: need(
                mat.solvent_molar_volume,
                "solvent_molar_volume",
                "m^3/mol",
            )?,
            chi: need(mat.chi, "chi", "Flory-Huggins parameter")?,
            temperature: mat.temperature,
            diffusivity,
            reference_stretch: need(
                mat.reference_stretch,
                "reference_stretch",
                "isotropic stretch of the starting state from dry, > 1",
            )?,
        })
        .map_err(|e| param(&e))?;
        return Ok(FiniteLaw::Gel(law));
    }
    // Host: the small-strain reading of the material gives its chemical law, mobility and
    // gradient energy (and checks their keys); elasticity and swelling are read again here.
    let small = build_law(m, mode, true, src)?;
    let elastic = match (
        mat.young_modulus,
        mat.poisson_ratio,
        mat.bulk_modulus,
        mat.shear_modulus,
    ) {
        (Some(e), Some(nu), None, None) => Isotropic::new(e, nu),
        (None, None, Some(k), Some(g)) => Isotropic::from_bulk_shear(k, g),
        _ => unreachable!("checked by build_law"),
    }
    .map_err(|e| param(&e))?;
    let omega = mat.partial_molar_volume.ok_or_else(|| {
        fail("finite strain needs partial_molar_volume (the swelling volume per mol)".into())
    })?;
    let parts = small.parts();
    let law = HostLaw::new(HostParams {
        elastic,
        partial_molar_volume: omega,
        c_ref: mat.stress_free_concentration,
        chemical: parts.chemical,
        mobility: parts.mobility,
        gradient: parts.gradient,
    })
    .map_err(|e| param(&e))?;
    Ok(FiniteLaw::Host(law))
}

/// Comma-separated list of names for messages.
pub(crate) fn list<'a>(names: impl Iterator<Item = &'a String>) -> String {
    let v: Vec<&str> = names.map(String::as_str).collect();
    if v.is_empty() {
        "(none)".to_string()
    } else {
        v.join(", ")
    }
}

/// The SplitMix64 generator (Steele, Lea & Flood, "Fast splittable pseudorandom number
/// generators", OOPSLA 2014; constants as published there, from memory): small, fast, and its
/// sequence for a seed is fixed by this code alone, so initial noise is reproducible across
/// platforms and versions of any dependency.
struct SplitMix64(u64);

impl SplitMix64 {
    fn new(seed: u64) -> Self {
        SplitMix64(seed)
    }

    fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9e37_79b9_7f4a_7c15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
        z ^ (z >> 31)
    }

    /// Uniform in `[0, 1)` from the top 53 bits.
    fn next_unit(&mut self) -> f64 {
        (self.next_u64() >> 11) as f64 * (1.0 / (1u64 << 53) as f64)
    }
}

/// The initial concentration: from `[initial]`, or for a body of gels from their reference
/// stretch (`GelLaw::reference_concentration`), where `[initial]` must be left out.
fn build_initial(
    scenario: &Scenario,
    mesh: &Mesh,
    laws: &LawMap,
    src: Source<'_>,
) -> Result<Vec<f64>, RunError> {
    let gel_of = |law: &FiniteLaw| match law {
        FiniteLaw::Gel(g) => Some(g.reference_concentration()),
        FiniteLaw::Host(_) => None,
    };
    let gels: Vec<Option<f64>> = laws.finite_laws().iter().map(gel_of).collect();
    let any_gel = gels.iter().any(Option::is_some);
    let Some(init) = &scenario.initial else {
        if gels.is_empty() || !gels.iter().all(Option::is_some) {
            return Err(RunError::Scenario(src.error(
                0..0,
                "no [initial] table: give [initial] concentration = ... (mol/m^3)",
            )));
        }
        // Every node takes the reference content of the gels around it, which must agree.
        let mut c = vec![f64::NAN; mesh.n_points()];
        for (cell, _, nodes) in mesh.cells() {
            let value = gels[laws.law_of_cell()[cell] as usize].expect("all gels");
            for &n in nodes {
                if c[n].is_nan() {
                    c[n] = value;
                } else if (c[n] - value).abs() > 1e-12 * value.abs() {
                    return Err(RunError::Scenario(src.error(
                        0..0,
                        format!(
                            "gels of different reference_stretch meet at node {n}: their \
                             reference states differ there (give all gels one reference_stretch)"
                        ),
                    )));
                }
            }
        }
        // Nodes in no cell carry no unknowns of consequence.
        c.iter_mut().filter(|v| v.is_nan()).for_each(|v| *v = 0.0);
        return Ok(c);
    };
    if any_gel {
        return Err(RunError::Scenario(src.error(
            init.span(),
            "a gel starts from its reference state, whose solvent content follows from \
             reference_stretch; remove [initial]",
        )));
    }
    let init = init.get_ref();
    let eval_all = |value: &Located<NumberOrFormula>,
                    nodes: &mut dyn Iterator<Item = usize>,
                    out: &mut [f64]|
     -> Result<(), RunError> {
        match value.get_ref() {
            NumberOrFormula::Number(v) => {
                for n in nodes {
                    out[n] = *v;
                }
            }
            NumberOrFormula::Formula(text) => {
                let f = Formula::parse(text)
                    .map_err(|m| RunError::Scenario(src.error(value.span(), m)))?;
                for n in nodes {
                    out[n] = f
                        .eval(mesh.points[n])
                        .map_err(|m| RunError::Scenario(src.error(value.span(), m)))?;
                }
            }
        }
        Ok(())
    };
    let mut c = vec![0.0; mesh.n_points()];
    eval_all(&init.concentration, &mut (0..mesh.n_points()), &mut c)?;
    for (zone, value) in &init.zones {
        let cells = mesh.regions.get(zone).ok_or_else(|| {
            RunError::Scenario(src.error(
                value.span(),
                format!(
                    "unknown zone '{zone}'; the zones are: {}",
                    list(mesh.regions.keys())
                ),
            ))
        })?;
        let mut nodes: Vec<usize> = cells
            .iter()
            .flat_map(|&cell| mesh.cell(cell).1.iter().copied())
            .collect();
        nodes.sort_unstable();
        nodes.dedup();
        eval_all(value, &mut nodes.into_iter(), &mut c)?;
    }
    if let Some(noise) = &init.noise {
        let Noise { amplitude, seed } = *noise.get_ref();
        if !(amplitude >= 0.0 && amplitude.is_finite()) {
            return Err(RunError::Scenario(src.error(
                noise.span(),
                format!("initial.noise: amplitude = {amplitude} must be a non-negative number"),
            )));
        }
        let mut rng = SplitMix64::new(seed);
        for v in &mut c {
            *v += amplitude * (2.0 * rng.next_unit() - 1.0);
        }
    }
    if let Some(n) = c.iter().position(|v| !v.is_finite()) {
        return Err(RunError::Scenario(src.error(
            init.concentration.span(),
            format!("the initial concentration is not finite at node {n}"),
        )));
    }
    Ok(c)
}

fn check_time(scenario: &Scenario, src: Source<'_>) -> Result<(), RunError> {
    let t = &scenario.time;
    let positive = [
        ("time.fixed_step", t.fixed_step),
        ("time.first_step", t.first_step),
        ("time.min_step", t.min_step),
        ("time.max_step", t.max_step),
        ("time.tolerance", Some(t.tolerance)),
        ("time.absolute_tolerance", t.absolute_tolerance),
        ("time.max_energy_change", t.max_energy_change),
        ("output.every", scenario.output.every),
        ("output.checkpoint_every", scenario.output.checkpoint_every),
        ("output.checkpoint_wall", scenario.output.checkpoint_wall),
        ("solver.newton_tolerance", scenario.solver.newton_tolerance),
        (
            "solver.newton_error_fraction",
            scenario.solver.newton_error_fraction,
        ),
    ];
    for (key, value) in positive {
        if let Some(v) = value {
            if !(v > 0.0 && v.is_finite()) {
                return Err(RunError::Scenario(src.error(
                    find_key(src.text, key),
                    format!("{key} = {v}: must be a positive number"),
                )));
            }
        }
    }
    if let Some(v) = scenario.solver.newton_error_fraction {
        let key = "solver.newton_error_fraction";
        if v > 1.0 {
            return Err(RunError::Scenario(src.error(
                find_key(src.text, key),
                format!(
                    "{key} = {v}: must be at most 1 (a fraction of the step's error tolerance)"
                ),
            )));
        }
        if t.fixed_step.is_some() {
            return Err(RunError::Scenario(src.error(
                find_key(src.text, key),
                format!(
                    "{key} needs adaptive steps (its unit is the step's error tolerance), \
                     but time.fixed_step is set"
                ),
            )));
        }
    }
    Ok(())
}

/// Span of the last component of a dotted key in the text (best effort, for messages about
/// values that carry no span of their own).
pub(crate) fn find_key(text: &str, dotted: &str) -> Range<usize> {
    let key = dotted.rsplit('.').next().unwrap_or(dotted);
    let mut offset = 0;
    for line in text.split_inclusive('\n') {
        let trimmed = line.trim_start();
        if let Some(rest) = trimmed.strip_prefix(key) {
            if rest.trim_start().starts_with('=') {
                let start = offset + (line.len() - trimmed.len());
                return start..start + key.len();
            }
        }
        offset += line.len();
    }
    0..0
}

/// Check one amount (constant or table) for finiteness and table shape.
pub(crate) fn check_amount(
    amount: &Amount,
    what: &str,
    span: Range<usize>,
    src: Source<'_>,
) -> Result<(), RunError> {
    let bad = |m: String| RunError::Scenario(src.error(span.clone(), format!("{what}: {m}")));
    match amount {
        Amount::Constant(v) if !v.is_finite() => Err(bad(format!("{v} is not a finite number"))),
        Amount::Constant(_) => Ok(()),
        Amount::Table(t) => {
            if t.time.is_empty() || t.time.len() != t.value.len() {
                return Err(bad(format!(
                    "a time table needs as many values as times, at least one ({} times, {} values)",
                    t.time.len(),
                    t.value.len()
                )));
            }
            if t.time
                .windows(2)
                .any(|w| w[1].partial_cmp(&w[0]) != Some(std::cmp::Ordering::Greater))
            {
                return Err(bad("table times must increase strictly".into()));
            }
            if t.time.iter().chain(&t.value).any(|v| !v.is_finite()) {
                return Err(bad("table entries must be finite".into()));
            }
            Ok(())
        }
    }
}

/// The boundary spec's name, checked against the mesh.
pub(crate) fn check_boundary_name(
    spec: &BoundarySpec,
    mesh: &Mesh,
    src: Source<'_>,
) -> Result<(), RunError> {
    if !mesh.boundaries.contains_key(spec.on.get_ref()) {
        return Err(RunError::Scenario(src.error(
            spec.on.span(),
            format!(
                "unknown boundary '{}'; the boundaries are: {}",
                spec.on.get_ref(),
                list(mesh.boundaries.keys())
            ),
        )));
    }
    Ok(())
}

/// Check a stop rule's boundary name.
pub(crate) fn check_stop(
    rule: &Located<StopRule>,
    mesh: &Mesh,
    mechanics: bool,
    src: Source<'_>,
) -> Result<(), RunError> {
    if !mechanics && matches!(rule.get_ref(), StopRule::PeakHydrostaticStress { .. }) {
        return Err(RunError::Scenario(src.error(
            rule.span(),
            "a stop rule on the hydrostatic stress needs body.mechanics = true",
        )));
    }
    if let StopRule::BoundaryConcentration { on, .. } = rule.get_ref() {
        if !mesh.boundaries.contains_key(on) {
            return Err(RunError::Scenario(src.error(
                rule.span(),
                format!(
                    "unknown boundary '{on}' in stop rule; the boundaries are: {}",
                    list(mesh.boundaries.keys())
                ),
            )));
        }
    }
    Ok(())
}

/// Number of cells of each material, by material name (for descriptions of a model).
pub fn material_table(model: &Model) -> BTreeMap<String, usize> {
    let mut counts = BTreeMap::new();
    for &i in model.laws.law_of_cell() {
        *counts
            .entry(model.material_names[i as usize].clone())
            .or_insert(0) += 1;
    }
    counts
}

#[cfg(test)]
mod tests {
    use super::SplitMix64;
    use rand_xoshiro::rand_core::{RngCore, SeedableRng};

    /// The initial-noise generator is SplitMix64 bit for bit: its sequence equals the one of
    /// the general-purpose implementation in the `rand_xoshiro` crate (0.6) for several seeds,
    /// and the unit draws lie in [0, 1).
    #[test]
    fn noise_generator_matches_reference_splitmix64() {
        for seed in [0u64, 1, 42, 0x1234_5678_9abc_def0, u64::MAX] {
            let mut ours = SplitMix64::new(seed);
            let mut reference = rand_xoshiro::SplitMix64::seed_from_u64(seed);
            for _ in 0..1000 {
                assert_eq!(ours.next_u64(), reference.next_u64(), "seed {seed}");
            }
            let mut unit = SplitMix64::new(seed);
            assert!((0..1000)
                .map(|_| unit.next_unit())
                .all(|u| (0.0..1.0).contains(&u)));
        }
    }
}
