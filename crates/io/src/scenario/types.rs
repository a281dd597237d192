//! The typed content of a scenario file. Field names are the TOML keys; every key, its unit and
//! its default is listed in `docs/scenario.md`. All quantities are SI.

use serde::Deserialize;

use super::limits::{generated_cells, MAX_GENERATED_CELLS};
use super::located::{Located, ScenarioError};

/// A whole scenario.
#[derive(Clone, Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Scenario {
    /// One line saying what is simulated (copied into the run summary).
    #[serde(default)]
    pub title: String,
    /// The body: geometry mode, mesh or generated shape, zones.
    pub body: Body,
    /// Interpolation orders of the three fields.
    #[serde(default)]
    pub orders: Orders,
    /// Materials, each on some zones (or on the whole body).
    pub material: Vec<Located<Material>>,
    /// Initial concentration (may be left out only when every material is a gel, whose initial
    /// solvent content follows from its reference stretch).
    pub initial: Option<Located<Initial>>,
    /// Boundary conditions that hold in every stage (supports, symmetry planes).
    #[serde(default)]
    pub boundary: Vec<Located<BoundarySpec>>,
    /// The loading program: stages run in order.
    pub stage: Vec<Located<Stage>>,
    /// Time stepping.
    #[serde(default)]
    pub time: TimeSpec,
    /// What to write.
    #[serde(default)]
    pub output: OutputSpec,
    /// Newton and linear-solver settings.
    #[serde(default)]
    pub solver: SolverSpec,
}

impl Scenario {
    /// Read a scenario from `text`; `file` is the name used in error messages. Syntax errors,
    /// unknown keys, wrong types and a generated body of absurd size (more than
    /// [`MAX_GENERATED_CELLS`] cells) are reported with line and column.
    pub fn parse(text: &str, file: &str) -> Result<Scenario, ScenarioError> {
        let scenario = toml::from_str::<Scenario>(text).map_err(|e| {
            let at = e.span().map_or(0, |s| s.start);
            ScenarioError::at(text, file, at, e.message().trim_end().to_string())
        })?;
        if let Some(shape) = &scenario.body.shape {
            let n = generated_cells(shape.get_ref());
            if n > MAX_GENERATED_CELLS {
                return Err(ScenarioError::at_span(
                    text,
                    file,
                    shape.span(),
                    format!(
                        "a generated body of {n} cells is larger than any run could hold; \
                         expected at most {MAX_GENERATED_CELLS} cells (check the 'cells' entry)"
                    ),
                ));
            }
        }
        Ok(scenario)
    }
}

/// Geometry mode of the model.
#[derive(Clone, Copy, Debug, Deserialize, PartialEq, Eq)]
#[serde(rename_all = "snake_case")]
pub enum Geometry {
    ThreeD,
    PlaneStrain,
    PlaneStress,
    Axisymmetric,
}

/// The body.
#[derive(Clone, Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Body {
    pub geometry: Geometry,
    /// An MSH mesh file (2.2 or 4.1), relative to the scenario file. Exclusive with `shape`.
    pub mesh: Option<Located<String>>,
    /// A generated shape. Exclusive with `mesh`.
    pub shape: Option<Located<Shape>>,
    /// Extra named zones: the cells whose centroid lies in a box.
    #[serde(default)]
    pub zone: Vec<Located<ZoneBox>>,
    /// What to do with rigid-body modes that the displacement conditions leave free.
    #[serde(default)]
    pub rigid_modes: RigidModes,
    /// `false`: no displacement field, no stress (pure diffusion or phase separation). The
    /// materials then give no elastic constants and no swelling.
    #[serde(default = "yes")]
    pub mechanics: bool,
    /// Kinematics: small strain (default) or finite strain (total Lagrangian).
    #[serde(default)]
    pub strain: Strain,
    /// Periodic directions of a generated rectangle or box ("x", "y", "z").
    pub periodic: Option<Located<Vec<Located<String>>>>,
    /// Periodic boundary pairs `[first, second]` of any mesh (second = first shifted).
    pub periodic_pairs: Option<Located<Vec<Located<[String; 2]>>>>,
}

/// Kinematics of the body.
#[derive(Clone, Copy, Debug, Default, Deserialize, PartialEq, Eq)]
#[serde(rename_all = "snake_case")]
pub enum Strain {
    /// Small strain: linear kinematics, stresses on the undeformed body.
    #[default]
    Small,
    /// Finite strain, total Lagrangian (docs/theory.md, "Finite strain").
    Finite,
}

/// Handling of rigid-body modes that no displacement condition removes.
#[derive(Clone, Copy, Debug, Default, Deserialize, PartialEq, Eq)]
#[serde(rename_all = "snake_case")]
pub enum RigidModes {
    /// Refuse to run and list the free modes (default).
    #[default]
    Refuse,
    /// Add a statically determinate set of point supports that removes exactly the free modes.
    Pin,
}

/// Element kinds a generated shape can be meshed with.
#[derive(Clone, Copy, Debug, Deserialize, PartialEq, Eq)]
#[serde(rename_all = "snake_case")]
pub enum Element {
    Tri3,
    Tri6,
    Quad4,
    Quad8,
    Quad9,
    Tet4,
    Tet10,
    Hex8,
    Hex20,
    Hex27,
}

/// A generated shape (the `kind` key selects which).
#[derive(Clone, Debug, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case", deny_unknown_fields)]
pub enum Shape {
    /// Rectangle `[0, size_x] × [0, size_y]` shifted by `origin`; boundaries left, right, bottom, top.
    Rectangle {
        size: [f64; 2],
        #[serde(default)]
        origin: [f64; 2],
        cells: [usize; 2],
        element: Element,
    },
    /// Box; boundaries left, right, bottom, top, back, front.
    Box {
        size: [f64; 3],
        #[serde(default)]
        origin: [f64; 3],
        cells: [usize; 3],
        element: Element,
    },
    /// Quarter disc centred at the origin; boundaries outer, symmetry_x (x = 0, also `axis`),
    /// symmetry_y (y = 0).
    QuarterDisc {
        radius: f64,
        cells: usize,
        element: Element,
    },
    /// Full disc; boundary outer.
    Disc {
        radius: f64,
        cells: usize,
        element: Element,
    },
    /// Annulus sector `0 ≤ θ ≤ angle_degrees`; boundaries inner, outer, start, end.
    AnnulusSector {
        inner_radius: f64,
        outer_radius: f64,
        angle_degrees: f64,
        cells: [usize; 2],
        element: Element,
    },
    /// Rectangle `[0, width] × [0, height]` without a quarter disc of `radius` at the origin
    /// (quarter plate with a central hole, or half plate with an edge notch); boundaries notch,
    /// bottom, right, top, left. `grading` > 1 refines towards the notch.
    NotchedPlate {
        width: f64,
        height: f64,
        radius: f64,
        cells: [usize; 2],
        #[serde(default = "one")]
        grading: f64,
        element: Element,
    },
    /// Ball octant; boundaries outer, symmetry_x, symmetry_y, symmetry_z.
    BallOctant {
        radius: f64,
        cells: usize,
        element: Element,
    },
    /// Quarter disc of `radius` with a concentric quarter-disc inclusion of `inclusion_radius`
    /// (`cells = [inclusion, matrix]`: the inclusion's resolution as for `quarter_disc`, cells
    /// across the matrix; `grading` > 1 refines the matrix towards the interface); zones
    /// inclusion and matrix; boundaries outer, symmetry_x (also `axis`), symmetry_y.
    InclusionQuarterDisc {
        inclusion_radius: f64,
        radius: f64,
        cells: [usize; 2],
        #[serde(default = "one")]
        grading: f64,
        element: Element,
    },
    /// Ball octant with a concentric spherical inclusion, as `inclusion_quarter_disc`;
    /// boundaries outer, symmetry_x, symmetry_y, symmetry_z.
    InclusionBallOctant {
        inclusion_radius: f64,
        radius: f64,
        cells: [usize; 2],
        #[serde(default = "one")]
        grading: f64,
        element: Element,
    },
    /// Spherical-shell octant; boundaries inner, outer, symmetry_x, symmetry_y, symmetry_z.
    ShellOctant {
        inner_radius: f64,
        outer_radius: f64,
        cells: [usize; 2],
        element: Element,
    },
}

/// A named zone: the cells whose centroid lies in `[min, max]` (2D bodies use the first two
/// coordinates).
#[derive(Clone, Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ZoneBox {
    pub name: String,
    pub min: Vec<f64>,
    pub max: Vec<f64>,
}

/// Interpolation orders (1 or 2; default: the mesh's own order for every field).
#[derive(Clone, Copy, Debug, Default, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Orders {
    pub u: Option<usize>,
    pub c: Option<usize>,
    pub mu: Option<usize>,
}

/// Chemical free-energy law.
#[derive(Clone, Copy, Debug, Default, Deserialize, PartialEq, Eq)]
#[serde(rename_all = "snake_case")]
pub enum FreeEnergy {
    /// `μ = μ0 + RT ln(c / c_ref)`.
    #[default]
    Dilute,
    /// Lattice gas with a maximum concentration and an optional regular-solution interaction.
    Lattice,
    /// Double well `W (c − c_a)² (c_b − c)²` (phase separation).
    DoubleWell,
    /// Polymer gel: neo-Hookean network plus Flory–Huggins mixing, molecular incompressibility
    /// (finite strain only).
    Gel,
}

/// The two plane-strain conventions for the swelling strain (docs/theory.md §11).
#[derive(Clone, Copy, Debug, Default, Deserialize, PartialEq, Eq)]
#[serde(rename_all = "snake_case")]
pub enum PlaneStrainSwelling {
    /// The swelling strain acts along x, y and z; with `ε_zz = 0` its `zz` part is held and
    /// produces `σ_zz` (a long body that would swell along its axis too).
    #[default]
    AllAxes,
    /// Only the in-plane part acts (`zz`, `yz`, `xz` entries dropped): a two-dimensional misfit.
    InPlane,
}

/// Mobility law (default: the one matching the free energy).
#[derive(Clone, Copy, Debug, Deserialize, PartialEq, Eq)]
#[serde(rename_all = "snake_case")]
pub enum MobilityKind {
    Dilute,
    Lattice,
    Constant,
}

/// A scalar or a 3×3 tensor given as rows.
#[derive(Clone, Debug, Deserialize)]
#[serde(untagged)]
pub enum ScalarOrTensor {
    Scalar(f64),
    Tensor([[f64; 3]; 3]),
}

/// A material.
#[derive(Clone, Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Material {
    pub name: String,
    /// Zones (mesh regions or `[[body.zone]]` names) this material fills; empty: every cell no
    /// other material claims.
    #[serde(default)]
    pub zones: Vec<Located<String>>,
    // Elasticity: (young_modulus, poisson_ratio) or (bulk_modulus, shear_modulus) or stiffness.
    pub young_modulus: Option<f64>,
    pub poisson_ratio: Option<f64>,
    pub bulk_modulus: Option<f64>,
    pub shear_modulus: Option<f64>,
    /// Full 6×6 stiffness in Voigt order xx, yy, zz, xy, yz, xz (engineering shear strains).
    pub stiffness: Option<[[f64; 6]; 6]>,
    /// Young's modulus at `c = max_concentration`: with it, E varies linearly from
    /// `young_modulus` at c = 0 to this value (isotropic, constant Poisson's ratio).
    pub young_modulus_full: Option<f64>,
    // Swelling.
    pub partial_molar_volume: Option<f64>,
    /// Swelling strain per unit concentration, Voigt xx, yy, zz, xy, yz, xz (tensor strains).
    pub expansion: Option<[f64; 6]>,
    #[serde(default)]
    pub stress_free_concentration: f64,
    /// Which swelling components act in plane strain (default: all three axes).
    #[serde(default)]
    pub plane_strain_swelling: PlaneStrainSwelling,
    // Chemistry.
    #[serde(default = "default_temperature")]
    pub temperature: f64,
    #[serde(default)]
    pub free_energy: FreeEnergy,
    #[serde(default)]
    pub standard_potential: f64,
    /// Reference concentration of the dilute law (μ = μ0 at c = reference).
    pub reference_concentration: Option<f64>,
    pub max_concentration: Option<f64>,
    #[serde(default)]
    pub interaction: f64,
    /// `W` of the double well.
    pub well_height: Option<f64>,
    /// `[c_a, c_b]` of the double well.
    pub well_concentrations: Option<[f64; 2]>,
    /// Molar volume of the solvent of a gel in m³/mol.
    pub solvent_molar_volume: Option<f64>,
    /// Flory–Huggins interaction parameter of a gel (dimensionless).
    pub chi: Option<f64>,
    /// Isotropic stretch of a gel's reference state from its dry state (> 1).
    pub reference_stretch: Option<f64>,
    /// Gradient-energy coefficient `κ` (scalar or tensor), none by default.
    pub gradient_energy: Option<ScalarOrTensor>,
    // Transport.
    pub mobility: Option<MobilityKind>,
    pub diffusivity: Option<ScalarOrTensor>,
    /// Constant mobility in mol²/(J m s) (scalar or tensor) when `mobility = "constant"`.
    pub constant_mobility: Option<ScalarOrTensor>,
    /// Volumetric source in mol/(m³ s), constant.
    #[serde(default)]
    pub source: f64,
}

fn one() -> f64 {
    1.0
}

fn default_temperature() -> f64 {
    298.15
}

/// Initial concentration.
#[derive(Clone, Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Initial {
    /// A number or a formula in x, y, z (e.g. `"1000 + 200*x/1e-3"`).
    pub concentration: Located<NumberOrFormula>,
    /// Per-zone overrides: zone name = number or formula.
    #[serde(default)]
    pub zones: std::collections::BTreeMap<String, Located<NumberOrFormula>>,
    /// Seeded random noise added to every node after the formulas.
    pub noise: Option<Located<Noise>>,
}

/// Uniform random noise in `[−amplitude, amplitude]`, reproducible for a seed.
#[derive(Clone, Copy, Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Noise {
    /// Half-width of the uniform distribution, in the units of the concentration.
    pub amplitude: f64,
    /// Seed of the generator (any non-negative integer).
    pub seed: u64,
}

/// A constant or a formula.
#[derive(Clone, Debug, Deserialize)]
#[serde(untagged)]
pub enum NumberOrFormula {
    Number(f64),
    Formula(String),
}

/// A boundary value: constant, or piecewise linear in the stage's own time.
#[derive(Clone, Debug, Deserialize)]
#[serde(untagged)]
pub enum Amount {
    Constant(f64),
    Table(TimeTable),
}

/// Piecewise-linear table in time since the start of the stage; held constant outside.
#[derive(Clone, Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct TimeTable {
    pub time: Vec<f64>,
    pub value: Vec<f64>,
}

/// Conditions on one named boundary. Species: at most one of `c`, `mu`, `inward_flux`,
/// `current_density`, `exchange_rate`. Displacement: any of `u_x`, `u_y`, `u_z`, `symmetry`,
/// `traction`, `pressure`.
#[derive(Clone, Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct BoundarySpec {
    pub on: Located<String>,
    pub u_x: Option<Amount>,
    pub u_y: Option<Amount>,
    pub u_z: Option<Amount>,
    /// Zero normal displacement on a boundary lying in a coordinate plane.
    pub symmetry: Option<bool>,
    /// Traction vector in Pa.
    pub traction: Option<Vec<Amount>>,
    /// Pressure in Pa, positive pushing into the body.
    pub pressure: Option<Amount>,
    /// Prescribed concentration, mol/m³.
    pub c: Option<Amount>,
    /// Prescribed chemical potential, J/mol.
    pub mu: Option<Amount>,
    /// Species flux into the body, mol/(m² s).
    pub inward_flux: Option<Amount>,
    /// Electric current density into the body, A/m² (converted with Faraday's constant).
    pub current_density: Option<Amount>,
    /// Charge number of the species for `current_density` (default 1).
    pub charge_number: Option<f64>,
    /// Exchange coefficient h in m/s: inward flux h (c_outside − c).
    pub exchange_rate: Option<f64>,
    /// Outside concentration of the exchange condition, mol/m³.
    pub outside_concentration: Option<Amount>,
}

/// One stage of the loading program.
#[derive(Clone, Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Stage {
    pub name: String,
    /// Length of the stage in s (with `stop`: the longest it may last).
    pub duration: f64,
    /// An event that ends the stage early.
    pub stop: Option<Located<StopRule>>,
    /// Conditions of this stage (in addition to the top-level `[[boundary]]` list).
    #[serde(default)]
    pub boundary: Vec<Located<BoundarySpec>>,
}

/// An event ending a stage.
#[derive(Clone, Debug, Deserialize)]
#[serde(tag = "when", rename_all = "snake_case", deny_unknown_fields)]
pub enum StopRule {
    /// Mean concentration of the body reaches `value` (from either side).
    MeanConcentration { value: f64 },
    /// Area-mean concentration on a boundary reaches `value`.
    BoundaryConcentration { on: String, value: f64 },
    /// Largest nodal hydrostatic stress exceeds `value` (Pa).
    PeakHydrostaticStress { value: f64 },
}

/// Time integration scheme.
#[derive(Clone, Copy, Debug, Default, Deserialize, PartialEq, Eq)]
#[serde(rename_all = "snake_case")]
pub enum SchemeName {
    BackwardEuler,
    #[default]
    Bdf2,
}

/// Time stepping.
#[derive(Clone, Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct TimeSpec {
    #[serde(default)]
    pub scheme: SchemeName,
    /// Fixed step in s; when absent, steps adapt to `tolerance`.
    pub fixed_step: Option<f64>,
    pub first_step: Option<f64>,
    pub min_step: Option<f64>,
    pub max_step: Option<f64>,
    /// Relative local-error tolerance of adaptive steps.
    #[serde(default = "default_tolerance")]
    pub tolerance: f64,
    /// Absolute local-error tolerance in mol/m³ (default: tolerance × largest initial |c|).
    pub absolute_tolerance: Option<f64>,
    /// Reject (and retry smaller) every step that raises the total free energy.
    #[serde(default)]
    pub reject_energy_rise: bool,
    /// Largest relative change of the total free energy in one step (retried smaller above).
    pub max_energy_change: Option<f64>,
}

fn default_tolerance() -> f64 {
    1e-3
}

impl Default for TimeSpec {
    fn default() -> Self {
        TimeSpec {
            scheme: SchemeName::default(),
            fixed_step: None,
            first_step: None,
            min_step: None,
            max_step: None,
            tolerance: default_tolerance(),
            absolute_tolerance: None,
            reject_energy_rise: false,
            max_energy_change: None,
        }
    }
}

/// What to write.
#[derive(Clone, Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct OutputSpec {
    /// Field snapshots every this many simulated seconds (plus t = 0 and every stage end).
    pub every: Option<f64>,
    /// Extra snapshot times in s.
    #[serde(default)]
    pub times: Vec<f64>,
    /// Write field snapshots at all (history.csv and the summary are always written).
    #[serde(default = "yes")]
    pub fields: bool,
    /// Write a checkpoint after the first step that passes every multiple of this many
    /// simulated seconds (none when absent). Steps do not land on these times.
    pub checkpoint_every: Option<f64>,
    /// Write a checkpoint when this many wall-clock seconds have passed since the last one
    /// (default [`DEFAULT_CHECKPOINT_WALL`]).
    pub checkpoint_wall: Option<f64>,
    /// Write the Newton residual norms of every accepted step to `run.log` (to see the
    /// convergence rate).
    #[serde(default)]
    pub newton_log: bool,
}

/// Default wall-clock interval between checkpoints in seconds: a crash costs at most ten
/// minutes of computing.
pub const DEFAULT_CHECKPOINT_WALL: f64 = 600.0;

fn yes() -> bool {
    true
}

impl Default for OutputSpec {
    fn default() -> Self {
        OutputSpec {
            every: None,
            times: Vec::new(),
            fields: true,
            checkpoint_every: None,
            checkpoint_wall: None,
            newton_log: false,
        }
    }
}

/// Linear solver choice.
#[derive(Clone, Copy, Debug, Default, Deserialize, PartialEq, Eq)]
#[serde(rename_all = "snake_case")]
pub enum LinearSolverName {
    /// GMRES preconditioned by a symmetric factorisation of the rearranged Jacobian, with the
    /// sparse LU as fallback (and the LU alone when c and mu have different orders).
    #[default]
    Symmetric,
    /// Sparse LU, fill-reducing ordering chosen by dimension (AMD in 2D, METIS in 3D).
    Direct,
    /// Restarted GMRES with ILU(0).
    Iterative,
}

/// Newton and linear-solver settings.
#[derive(Clone, Debug, Default, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SolverSpec {
    pub newton_tolerance: Option<f64>,
    pub max_iterations: Option<usize>,
    #[serde(default)]
    pub linear: LinearSolverName,
    /// Let GMRES stop at the reduction Newton needs (Eisenstat–Walker forcing) instead of
    /// always at its own tight tolerance; used by the `"symmetric"` solver only.
    #[serde(default)]
    pub inexact_newton: bool,
    /// Let Newton also stop when its remaining error, estimated from the contraction of its
    /// corrections, is below this fraction of the time step's error tolerance (adaptive steps
    /// only; absent: the residual test alone).
    pub newton_error_fraction: Option<f64>,
}
