//! The coupled deformation–diffusion problem as a transient discrete system.
//!
//! Owns the DOF map of the three fields (`u`, `c`, `μ`), the assembler, the constraints and the
//! point law; implements [`TransientSystem`] so that the generic integrator of
//! [`crate::time`] drives it.

use std::sync::Arc;

use dilata_fem::dofs::DofMap;
use dilata_fem::{Assembler, AssemblyTarget, Constraints, GeometryMode, Parallelism};
use dilata_linalg::{CsrMatrix, CsrPattern};
use dilata_mesh::{Facet, Mesh};
use dilata_physics::coupled::{CoupledError, CoupledFields, CoupledKernel, LawMap, RateTerm};

use crate::newton::DiscreteSystem;
use crate::problem::{add_loads, BoundaryLoad, BoxScalarFn, LoadContext};
use crate::time::TransientSystem;

/// A coupled problem on one mesh.
pub struct CoupledProblem<'m> {
    pub mesh: &'m Mesh,
    pub dofs: DofMap,
    pub fields: CoupledFields,
    pub mode: GeometryMode,
    pub assembler: Assembler,
    pub constraints: Constraints,
    /// Point law of every cell.
    pub laws: LawMap,
    /// Boundary loads: `Flux` acts on the concentration (inward species flux, mol/(m² s)),
    /// `Traction` and `Pressure` on the displacement.
    pub loads: Vec<(Vec<Facet>, BoundaryLoad)>,
    pub source: Option<BoxScalarFn>,
    time: f64,
    a0: f64,
    history: Vec<f64>,
    zero_increments: Vec<f64>,
}

impl<'m> CoupledProblem<'m> {
    /// Build the assembler (pattern, colouring) for `dofs`, which must hold the three fields.
    pub fn new(
        mesh: &'m Mesh,
        dofs: DofMap,
        fields: CoupledFields,
        mode: GeometryMode,
        laws: LawMap,
        parallelism: Parallelism,
    ) -> Self {
        let assembler = Assembler::build(mesh, &dofs, parallelism);
        let n = dofs.n_dofs();
        CoupledProblem {
            mesh,
            constraints: Constraints::new(n),
            dofs,
            fields,
            mode,
            assembler,
            laws,
            loads: Vec::new(),
            source: None,
            time: 0.0,
            a0: 0.0,
            history: vec![0.0; n],
            zero_increments: Vec::new(),
        }
    }

    /// Time of the step being solved.
    pub fn time(&self) -> f64 {
        self.time
    }

    fn assemble(
        &mut self,
        x: &[f64],
        matrix: Option<&mut CsrMatrix>,
        residual: &mut [f64],
    ) -> Result<(), CoupledError> {
        self.zero_increments.clear();
        self.zero_increments
            .resize(self.constraints.n_constrained(), 0.0);
        let mut target = AssemblyTarget {
            matrix,
            vector: Some(residual),
            constraints: Some((&self.constraints, &self.zero_increments)),
        };
        self.assembler.begin(&mut target);
        let kernel = CoupledKernel {
            dofs: &self.dofs,
            fields: self.fields,
            mode: self.mode,
            laws: &self.laws,
            rate: RateTerm {
                a0: self.a0,
                history: &self.history,
            },
            source: self
                .source
                .as_ref()
                .map(|f| f.as_ref() as &(dyn Fn([f64; 3]) -> f64 + Sync)),
            solution: x,
        };
        self.assembler
            .add_cells(self.mesh, &self.dofs, &kernel, &mut target)?;
        add_loads(
            &LoadContext {
                mesh: self.mesh,
                dofs: &self.dofs,
                assembler: &self.assembler,
                mode: self.mode,
                flux_field: self.fields.c,
                displacement_field: self.fields.u,
            },
            &self.loads,
            &mut target,
        );
        self.assembler.finish(&mut target);
        Ok(())
    }
}

impl DiscreteSystem for CoupledProblem<'_> {
    type Error = CoupledError;

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
    ) -> Result<(), CoupledError> {
        self.assemble(x, Some(jacobian), residual)
    }

    fn residual_into(&mut self, x: &[f64], residual: &mut [f64]) -> Result<(), CoupledError> {
        self.assemble(x, None, residual)
    }

    /// Floors of the step test: the body's size for displacements (a correction of 1e-12 of the
    /// body size is negligible), none for concentrations (they are positive and of their own
    /// scale), and `RT` for the potential when the chemical law has a temperature (potential
    /// differences matter on the scale of the thermal energy).
    fn block_scales(&self) -> Vec<f64> {
        let mut lo = [f64::INFINITY; 3];
        let mut hi = [f64::NEG_INFINITY; 3];
        for p in &self.mesh.points {
            for d in 0..3 {
                lo[d] = lo[d].min(p[d]);
                hi[d] = hi[d].max(p[d]);
            }
        }
        let size = (0..3).map(|d| (hi[d] - lo[d]).max(0.0)).fold(0.0, f64::max);
        let rt = dilata_material::chemical::GAS_CONSTANT * self.laws.max_temperature();
        vec![size, 0.0, rt]
    }

    fn blocks(&self) -> Vec<std::ops::Range<usize>> {
        [self.fields.u, self.fields.c, self.fields.mu]
            .iter()
            .map(|&f| self.dofs.field_range(f))
            .collect()
    }
}

impl TransientSystem for CoupledProblem<'_> {
    fn begin_step(&mut self, t_new: f64, a0: f64, history: &[f64]) {
        self.time = t_new;
        self.a0 = a0;
        self.history.copy_from_slice(history);
    }

    fn is_dynamic(&self, i: usize) -> bool {
        self.dofs.field_range(self.fields.c).contains(&i)
    }
}
