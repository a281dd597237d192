//! Single-field static problems (scalar diffusion, linear elasticity) as discrete systems.
//!
//! This is the glue between the generic drivers of this crate and the kernels of
//! `dilata-physics`: it owns the DOF map, the assembler (pattern and colouring built once) and the
//! constraints, and implements [`DiscreteSystem`].

use std::sync::Arc;

use dilata_fem::dofs::DofMap;
use dilata_fem::{
    Assembler, AssemblyTarget, Constraints, FacetKernel, FieldHandle, GeometryMode, InvertedCell,
};
use dilata_linalg::{CsrMatrix, CsrPattern};
use dilata_material::elastic::Stiffness;
use dilata_mesh::{Facet, Mesh};
use dilata_physics::coupled::{RowSwap, SwappedRows};
use dilata_physics::elasticity::{ElasticityKernel, SurfaceLoad, SurfaceLoadKernel};
use dilata_physics::finite::FollowerPressureKernel;
use dilata_physics::poisson::{ExchangeKernel, FluxKernel, PoissonKernel};

use crate::newton::DiscreteSystem;

/// A scalar function of position.
pub type BoxScalarFn = Box<dyn Fn([f64; 3]) -> f64 + Sync + Send>;
/// A vector function of position.
pub type BoxVectorFn = Box<dyn Fn([f64; 3]) -> [f64; 3] + Sync + Send>;

/// Bulk physics of a single-field problem.
pub enum BulkLaw {
    /// `−div(k grad u) = s`.
    Diffusion {
        conductivity: f64,
        source: Option<BoxScalarFn>,
    },
    /// Linear elasticity with the mode's stiffness (see `mode_stiffness`) and a body force.
    Elasticity {
        stiffness: Box<Stiffness>,
        body_force: Option<BoxVectorFn>,
    },
}

/// A load on a set of boundary facets.
pub enum BoundaryLoad {
    /// Inward flux density (diffusion).
    Flux(BoxScalarFn),
    /// Traction vector (elasticity).
    Traction(BoxVectorFn),
    /// Pressure, positive into the body (elasticity).
    Pressure(f64),
    /// Exchange (Robin) condition: inward flux `rate · (outside − c)` of the scalar (the species
    /// in a coupled problem, `rate` in m/s and `outside` in mol/m³; the diffused quantity in a
    /// diffusion problem). Contributes to the tangent.
    Exchange { rate: f64, outside: f64 },
}

/// A single-field static problem on one mesh.
pub struct FieldProblem<'m> {
    pub mesh: &'m Mesh,
    pub dofs: DofMap,
    pub field: FieldHandle,
    pub mode: GeometryMode,
    pub assembler: Assembler,
    pub constraints: Constraints,
    pub law: BulkLaw,
    pub loads: Vec<(Vec<Facet>, BoundaryLoad)>,
    zero_increments: Vec<f64>,
}

impl<'m> FieldProblem<'m> {
    /// Assemble nothing yet: builds the pattern and colouring from `dofs`.
    pub fn new(
        mesh: &'m Mesh,
        dofs: DofMap,
        field: FieldHandle,
        mode: GeometryMode,
        law: BulkLaw,
        parallelism: dilata_fem::Parallelism,
    ) -> Self {
        let assembler = Assembler::build(mesh, &dofs, parallelism);
        let constraints = Constraints::new(dofs.n_dofs());
        FieldProblem {
            mesh,
            dofs,
            field,
            mode,
            assembler,
            constraints,
            law,
            loads: Vec::new(),
            zero_increments: Vec::new(),
        }
    }

    fn assemble(
        &mut self,
        x: &[f64],
        matrix: Option<&mut CsrMatrix>,
        residual: &mut [f64],
    ) -> Result<(), InvertedCell> {
        self.zero_increments.clear();
        self.zero_increments
            .resize(self.constraints.n_constrained(), 0.0);
        let mut target = AssemblyTarget {
            matrix,
            vector: Some(residual),
            constraints: Some((&self.constraints, &self.zero_increments)),
        };
        self.assembler.begin(&mut target);
        match &self.law {
            BulkLaw::Diffusion {
                conductivity,
                source,
            } => {
                let k = PoissonKernel {
                    dofs: &self.dofs,
                    field: self.field,
                    mode: self.mode,
                    conductivity: *conductivity,
                    source: source
                        .as_ref()
                        .map(|f| f.as_ref() as &(dyn Fn([f64; 3]) -> f64 + Sync)),
                    solution: x,
                };
                self.assembler
                    .add_cells(self.mesh, &self.dofs, &k, &mut target)?;
            }
            BulkLaw::Elasticity {
                stiffness,
                body_force,
            } => {
                let k = ElasticityKernel {
                    dofs: &self.dofs,
                    field: self.field,
                    mode: self.mode,
                    stiffness: **stiffness,
                    body_force: body_force
                        .as_ref()
                        .map(|f| f.as_ref() as &(dyn Fn([f64; 3]) -> [f64; 3] + Sync)),
                    solution: x,
                };
                self.assembler
                    .add_cells(self.mesh, &self.dofs, &k, &mut target)?;
            }
        }
        add_loads(
            &LoadContext {
                mesh: self.mesh,
                dofs: &self.dofs,
                assembler: &self.assembler,
                mode: self.mode,
                flux_field: self.field,
                displacement_field: self.field,
                solution: x,
                swap: None,
                finite: false,
            },
            &self.loads,
            &mut target,
        );
        self.assembler.finish(&mut target);
        Ok(())
    }
}

impl DiscreteSystem for FieldProblem<'_> {
    type Error = InvertedCell;

    fn n_dofs(&self) -> usize {
        self.dofs.n_dofs()
    }

    fn pattern(&self) -> Arc<CsrPattern> {
        self.assembler.pattern().clone()
    }

    fn impose_constraints(&self, x: &mut [f64]) {
        self.constraints.impose_into(x);
    }

    fn assemble_into(
        &mut self,
        x: &[f64],
        jacobian: &mut CsrMatrix,
        residual: &mut [f64],
    ) -> Result<(), InvertedCell> {
        self.assemble(x, Some(jacobian), residual)
    }

    fn residual_into(&mut self, x: &[f64], residual: &mut [f64]) -> Result<(), InvertedCell> {
        self.assemble(x, None, residual)
    }
}

/// Where boundary loads go: the field that receives species fluxes and the one that receives
/// tractions and pressure (the same field in a single-field problem), the current solution (read
/// by exchange conditions) and the row swap of a coupled problem with a prescribed potential.
pub(crate) struct LoadContext<'a> {
    pub mesh: &'a Mesh,
    pub dofs: &'a DofMap,
    pub assembler: &'a Assembler,
    pub mode: GeometryMode,
    pub flux_field: FieldHandle,
    pub displacement_field: FieldHandle,
    pub solution: &'a [f64],
    pub swap: Option<RowSwap<'a>>,
    /// Finite strain: pressures follow the deformed surface.
    pub finite: bool,
}

/// Add one facet kernel's contributions, through the row swap when there is one.
fn add_facet_kernel<K: FacetKernel<Error = std::convert::Infallible>>(
    ctx: &LoadContext<'_>,
    facets: &[Facet],
    kernel: K,
    target: &mut AssemblyTarget<'_>,
) {
    let result = match ctx.swap {
        Some(swap) => ctx.assembler.add_facets(
            ctx.mesh,
            ctx.dofs,
            facets,
            &SwappedRows {
                inner: kernel,
                swap,
            },
            target,
        ),
        None => ctx
            .assembler
            .add_facets(ctx.mesh, ctx.dofs, facets, &kernel, target),
    };
    match result {
        Ok(()) => {}
        Err(never) => match never {},
    }
}

/// Add every boundary load's facet contributions to `target`.
pub(crate) fn add_loads(
    ctx: &LoadContext<'_>,
    loads: &[(Vec<Facet>, BoundaryLoad)],
    target: &mut AssemblyTarget<'_>,
) {
    for (facets, load) in loads {
        match load {
            BoundaryLoad::Flux(f) => add_facet_kernel(
                ctx,
                facets,
                FluxKernel {
                    dofs: ctx.dofs,
                    field: ctx.flux_field,
                    mode: ctx.mode,
                    inward_flux: f.as_ref(),
                },
                target,
            ),
            BoundaryLoad::Exchange { rate, outside } => add_facet_kernel(
                ctx,
                facets,
                ExchangeKernel {
                    dofs: ctx.dofs,
                    field: ctx.flux_field,
                    mode: ctx.mode,
                    rate: *rate,
                    outside: *outside,
                    solution: ctx.solution,
                },
                target,
            ),
            BoundaryLoad::Traction(f) => add_facet_kernel(
                ctx,
                facets,
                SurfaceLoadKernel {
                    dofs: ctx.dofs,
                    field: ctx.displacement_field,
                    mode: ctx.mode,
                    load: SurfaceLoad::Traction(f.as_ref()),
                },
                target,
            ),
            BoundaryLoad::Pressure(p) if ctx.finite => add_facet_kernel(
                ctx,
                facets,
                FollowerPressureKernel {
                    dofs: ctx.dofs,
                    field: ctx.displacement_field,
                    mode: ctx.mode,
                    pressure: *p,
                    solution: ctx.solution,
                },
                target,
            ),
            BoundaryLoad::Pressure(p) => add_facet_kernel(
                ctx,
                facets,
                SurfaceLoadKernel {
                    dofs: ctx.dofs,
                    field: ctx.displacement_field,
                    mode: ctx.mode,
                    load: SurfaceLoad::Pressure(*p),
                },
                target,
            ),
        }
    }
}
