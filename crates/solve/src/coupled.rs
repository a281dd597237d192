//! The coupled deformation–diffusion problem as a transient discrete system.
//!
//! Owns the DOF map of the three fields (`u`, `c`, `μ`), the assembler, the constraints and the
//! point law; implements [`TransientSystem`] so that the generic integrator of
//! [`crate::time`] drives it.
//!
//! Boundary data may depend on time through [`CoupledProblem::boundary_update`], called at the
//! start of every attempted step. A prescribed potential (a constraint on `μ`) replaces the mass
//! equation at its nodes, not the potential equation (see `dilata_physics::coupled`, "the row
//! swap"); [`CoupledProblem::mass_rates`] reports the discrete mass balance of a solved step.

use std::sync::Arc;

use dilata_fem::dofs::DofMap;
use dilata_fem::{Assembler, AssemblyTarget, Constraints, GeometryMode, Parallelism};
use dilata_linalg::{CsrMatrix, CsrPattern, RowTransform};
use dilata_mesh::{Facet, Mesh};
use dilata_physics::coupled::{
    CoupledError, CoupledFields, CoupledKernel, LawMap, RateTerm, RowSwap, SwappedRows, TangentPart,
};
use dilata_physics::coupled_post::{
    coupled_integrals_on, recover_coupled_nodal_on, CoupledPost, PostThreads,
};
use dilata_physics::norms::field_integral;
use dilata_physics::poisson::PoissonKernel;

use crate::newton::DiscreteSystem;
use crate::problem::{add_loads, BoundaryLoad, LoadContext};
use crate::time::TransientSystem;

/// Callback that updates boundary data to the end time of a step: called with that time, the
/// boundary loads and the constraints (change values with `Constraints::set_group_value` and
/// friends, or replace loads whose magnitude depends on time).
pub type BoundaryUpdate =
    Box<dyn FnMut(f64, &mut [(Vec<Facet>, BoundaryLoad)], &mut Constraints) + Send>;

/// A volumetric source density `s(x, t)` in mol/(m³ s).
pub type BoxTimedScalarFn = Box<dyn Fn([f64; 3], f64) -> f64 + Sync + Send>;

/// A vector field of position and time, `b(x, t)` (e.g. a body force density in N/m³).
pub type BoxTimedVectorFn = Box<dyn Fn([f64; 3], f64) -> [f64; 3] + Sync + Send>;

/// Why a coupled problem cannot be solved as set up (a bug of the input).
#[derive(Clone, Debug, PartialEq, Eq, thiserror::Error)]
pub enum CoupledSetupError {
    #[error(
        "the chemical potential is prescribed at {n_nodes} node(s) (first: mesh node \
         {first_node}); this needs c and mu of the same interpolation order, got c of order \
         {c_order} and mu of order {mu_order}"
    )]
    PotentialNeedsEqualOrders {
        n_nodes: usize,
        first_node: usize,
        c_order: usize,
        mu_order: usize,
    },
    #[error(
        "the chemical potential is prescribed at mesh node {node}, which the problem's sparse \
         pattern was not built for (CoupledProblem::with_sparse_coupling: list every node where \
         some stage prescribes mu)"
    )]
    PotentialNotDeclared { node: usize },
    #[error(
        "finite-strain laws couple every field: they need the full pattern \
         (CoupledProblem::new)"
    )]
    SparseCouplingNeedsSmallStrain,
}

/// Discrete mass balance of the current step (mol/s, per unit thickness in plane modes, over the
/// full revolution in axisymmetry), from [`CoupledProblem::mass_rates`].
///
/// `amount_rate = supplied + reaction + imbalance` holds to round-off by construction (the test
/// functions of the mass equation sum to one).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct MassRates {
    /// `∫ (a0 c + h) dV`: the integrator's rate of the total amount.
    pub amount_rate: f64,
    /// `∫ s dV` plus the inward facet fluxes and exchange fluxes.
    pub supplied: f64,
    /// Inflow through the nodes whose mass equation is replaced by a constraint (prescribed `c`
    /// or prescribed `μ`): the reaction of the prescribed values.
    pub reaction: f64,
    /// Sum of the mass-equation residual over the nodes where it is enforced: zero for an exact
    /// solve, a measure of how well Newton satisfied the discrete balance.
    pub imbalance: f64,
}

/// A coupled problem on one mesh.
pub struct CoupledProblem<'m> {
    pub mesh: &'m Mesh,
    pub dofs: DofMap,
    pub fields: CoupledFields,
    pub mode: GeometryMode,
    pub assembler: Assembler,
    /// Prescribed values. Constraining `μ` at a node drops that node's mass equation (the row
    /// swap); the driver may replace the whole object between stages.
    pub constraints: Constraints,
    /// Point law of every cell.
    pub laws: LawMap,
    /// Boundary loads: `Flux` and `Exchange` act on the concentration (inward species flux,
    /// mol/(m² s)), `Traction` and `Pressure` on the displacement.
    pub loads: Vec<(Vec<Facet>, BoundaryLoad)>,
    /// Volumetric source `s(x, t)`, evaluated at the end time of the step.
    pub source: Option<BoxTimedScalarFn>,
    /// Body force `b(x, t)` in N/m³ in the momentum equation (residual `− ∫ N_a b dV`),
    /// evaluated at the end time of the step. For manufactured-solution verification only:
    /// `None` (the default) in physical models. Does not change the tangent.
    pub body_force: Option<BoxTimedVectorFn>,
    /// Source `g(x, t)` in J/mol in the potential equation (`∫ w (μ − μ_local − g) dV`),
    /// evaluated at the end time of the step. For manufactured-solution verification only:
    /// `None` (the default) in physical models. Does not change the tangent.
    pub potential_source: Option<BoxTimedScalarFn>,
    /// Called by `begin_step(t_new, ..)` before anything else, for every attempted step
    /// (including retried, cut steps), so that time tables are evaluated at `t_new`.
    pub boundary_update: Option<BoundaryUpdate>,
    /// Let Newton keep a factorised Jacobian while the residual falls fast (chord steps; see
    /// `DiscreteSystem::reuse_jacobian`). Default false.
    pub reuse_jacobian: bool,
    time: f64,
    a0: f64,
    history: Vec<f64>,
    zero_increments: Vec<f64>,
    /// Per mesh node: whether its `μ` DOF is constrained (rows swapped).
    swapped: Vec<bool>,
    n_swapped: usize,
    /// Wall time spent in Newton's residual and Jacobian assemblies so far.
    assembly_seconds: f64,
    /// Assemble the Jacobian's state-independent blocks once per set of constraints and add
    /// only the state-dependent ones at every Jacobian, when the laws have a constant
    /// mechanical tangent (`LawMap::constant_mechanical_tangent`; `TangentPart`). The matrix is
    /// the same to the bit either way. Default true; false assembles every block every time.
    pub reuse_fixed_tangent: bool,
    fixed_tangent: Option<FixedTangent>,
    fixed_tangent_used: bool,
    fixed_tangent_assemblies: usize,
    /// With a sparse pattern ([`Self::with_sparse_coupling`]), per master node: whether its `c`
    /// rows hold `u` columns, i.e. whether `μ` may be prescribed there.
    potential_nodes: Option<Vec<bool>>,
}

/// The state-independent blocks of the Jacobian (cells only, with the constraints' scatter and
/// the row swap, no loads, no constraint diagonal), and what they were assembled for.
struct FixedTangent {
    values: Vec<f64>,
    pattern: Arc<CsrPattern>,
    laws: LawMap,
    mode: GeometryMode,
    /// The constrained DOFs of the constrained assembly; `None`: assembled without constraints.
    constrained: Option<Vec<usize>>,
    swapped: Vec<bool>,
}

impl<'m> CoupledProblem<'m> {
    /// The post-processing view of state `solution` (this problem's DOFs, fields, mode and
    /// laws).
    pub fn post<'s>(&'s self, solution: &'s [f64]) -> CoupledPost<'s> {
        CoupledPost {
            dofs: &self.dofs,
            fields: self.fields,
            mode: self.mode,
            laws: &self.laws,
            solution,
        }
    }

    /// Wall time spent so far in the residual and Jacobian assemblies that Newton asked for
    /// (`DiscreteSystem::assemble_into` and `residual_into`; post-processing passes are not
    /// counted).
    pub fn assembly_seconds(&self) -> f64 {
        self.assembly_seconds
    }

    /// Whether the last Jacobian was assembled from the stored state-independent blocks
    /// ([`Self::reuse_fixed_tangent`]).
    pub fn used_fixed_tangent(&self) -> bool {
        self.fixed_tangent_used
    }

    /// How many times the state-independent blocks were assembled so far (once per set of
    /// constraints and laws while [`Self::reuse_fixed_tangent`] applies).
    pub fn fixed_tangent_assemblies(&self) -> usize {
        self.fixed_tangent_assemblies
    }

    /// Build the assembler (pattern, colouring) for `dofs`, which must hold the three fields.
    pub fn new(
        mesh: &'m Mesh,
        dofs: DofMap,
        fields: CoupledFields,
        mode: GeometryMode,
        laws: LawMap,
        parallelism: Parallelism,
    ) -> Self {
        Self::build(mesh, dofs, fields, mode, laws, parallelism, None)
    }

    /// [`Self::new`] with a sparser pattern for small-strain laws, without the blocks the
    /// kernel never fills: no `μ` columns in the displacement rows, and `u` columns in the
    /// concentration rows only at the nodes flagged in `potential_nodes` (one flag per mesh
    /// node): where some stage may prescribe `μ`, the row swap moves the potential equation,
    /// which has `u` columns, into the `c` rows. The Jacobian's other entries and all results
    /// are the same; the matrix holds about a quarter fewer entries with quadratic `u`, `c`
    /// and `μ` (the charging particle: 0.98 M instead of 1.31 M). [`Self::check_setup`]
    /// refuses a prescribed `μ` at a node not flagged. With finite-strain laws, whose mass and
    /// momentum rows depend on every field, this is [`Self::new`].
    pub fn with_sparse_coupling(
        mesh: &'m Mesh,
        dofs: DofMap,
        fields: CoupledFields,
        mode: GeometryMode,
        laws: LawMap,
        parallelism: Parallelism,
        potential_nodes: &[bool],
    ) -> Self {
        assert_eq!(
            potential_nodes.len(),
            mesh.n_points(),
            "one flag per mesh node"
        );
        let sparse = (!laws.is_finite()).then_some(potential_nodes);
        Self::build(mesh, dofs, fields, mode, laws, parallelism, sparse)
    }

    fn build(
        mesh: &'m Mesh,
        dofs: DofMap,
        fields: CoupledFields,
        mode: GeometryMode,
        laws: LawMap,
        parallelism: Parallelism,
        potential_nodes: Option<&[bool]>,
    ) -> Self {
        let potential_nodes = potential_nodes.map(|flags| {
            // Periodic links: a linked node shares its master's rows.
            let mut on_master = vec![false; flags.len()];
            for (node, &flag) in flags.iter().enumerate() {
                on_master[dofs.master_node(node)] |= flag;
            }
            on_master
        });
        let assembler = match &potential_nodes {
            None => Assembler::build(mesh, &dofs, parallelism),
            Some(on_master) => Assembler::build_coupled(mesh, &dofs, parallelism, |f, node, g| {
                if f == fields.u {
                    g != fields.mu
                } else if f == fields.c {
                    g != fields.u || on_master[node]
                } else {
                    true
                }
            }),
        };
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
            body_force: None,
            potential_source: None,
            boundary_update: None,
            reuse_jacobian: false,
            time: 0.0,
            a0: 0.0,
            history: vec![0.0; n],
            zero_increments: Vec::new(),
            swapped: vec![false; mesh.n_points()],
            n_swapped: 0,
            assembly_seconds: 0.0,
            reuse_fixed_tangent: true,
            fixed_tangent: None,
            fixed_tangent_used: false,
            fixed_tangent_assemblies: 0,
            potential_nodes,
        }
    }

    /// Time of the step being solved.
    pub fn time(&self) -> f64 {
        self.time
    }

    /// Check that the current constraints can be solved: a prescribed potential needs `c` and
    /// `μ` of the same order. A driver calls this after setting or replacing the constraints;
    /// assembling with such constraints unchecked panics (a programmer error).
    pub fn check_setup(&self) -> Result<(), CoupledSetupError> {
        if let Some(allowed) = &self.potential_nodes {
            if self.laws.is_finite() {
                return Err(CoupledSetupError::SparseCouplingNeedsSmallStrain);
            }
            let undeclared = self
                .dofs
                .field_nodes(self.fields.mu)
                .into_iter()
                .find(|&n| self.mu_constrained(n) && !allowed[self.dofs.master_node(n)]);
            if let Some(node) = undeclared {
                return Err(CoupledSetupError::PotentialNotDeclared { node });
            }
        }
        let (c_order, mu_order) = (
            self.dofs.spec(self.fields.c).order,
            self.dofs.spec(self.fields.mu).order,
        );
        if c_order == mu_order {
            return Ok(());
        }
        let nodes: Vec<usize> = self
            .dofs
            .field_nodes(self.fields.mu)
            .into_iter()
            .filter(|&n| self.mu_constrained(n))
            .collect();
        match nodes.first() {
            None => Ok(()),
            Some(&first_node) => Err(CoupledSetupError::PotentialNeedsEqualOrders {
                n_nodes: nodes.len(),
                first_node,
                c_order,
                mu_order,
            }),
        }
    }

    fn mu_constrained(&self, node: usize) -> bool {
        let d = self
            .dofs
            .node_dof(self.fields.mu, node, 0)
            .expect("node carries mu");
        self.constraints.is_constrained(d)
    }

    /// Recompute the per-node swap flags from the constraints (cheap; done every assembly since
    /// the constraints are a public field).
    fn refresh_swap(&mut self) {
        assert!(
            self.potential_nodes.is_none() || !self.laws.is_finite(),
            "finite-strain laws on a sparse coupled pattern"
        );
        self.swapped.iter_mut().for_each(|s| *s = false);
        self.n_swapped = 0;
        for node in self.dofs.field_nodes(self.fields.mu) {
            if self.mu_constrained(node) {
                self.swapped[node] = true;
                self.n_swapped += 1;
            }
        }
        // Periodic links: a linked node shares its master's rows, so it swaps with it.
        for (node, master) in self.dofs.links().pairs() {
            self.swapped[node] = self.swapped[master];
        }
        if self.n_swapped > 0 {
            if let Err(e) = self.check_setup() {
                panic!("coupled problem assembled without check_setup: {e}");
            }
        }
    }

    /// Assemble the residual and/or the tangent at `x`, with the constraints' scatter when
    /// `constrained`, and with the row swap where `μ` is constrained.
    fn assemble(
        &mut self,
        x: &[f64],
        matrix: Option<&mut CsrMatrix>,
        residual: Option<&mut [f64]>,
        constrained: bool,
    ) -> Result<(), CoupledError> {
        self.refresh_swap();
        self.zero_increments.clear();
        self.zero_increments
            .resize(self.constraints.n_constrained(), 0.0);
        let reusable = self.reuse_fixed_tangent && self.laws.constant_mechanical_tangent();
        if !reusable {
            self.fixed_tangent = None;
        }
        let split = reusable && matrix.is_some();
        if split {
            self.refresh_fixed_tangent(x, constrained)?;
        }
        let mut target = AssemblyTarget {
            matrix,
            vector: residual,
            constraints: constrained.then_some((&self.constraints, &self.zero_increments[..])),
        };
        if target.matrix.is_some() {
            self.fixed_tangent_used = split;
        }
        let part = if split {
            let fixed = self.fixed_tangent.as_ref().expect("refreshed above");
            self.assembler.begin_from(&mut target, &fixed.values);
            TangentPart::StateDependent
        } else {
            self.assembler.begin(&mut target);
            TangentPart::Whole
        };
        self.add_cell_terms(x, part, &mut target)?;
        let swap = self.row_swap();
        add_loads(
            &LoadContext {
                mesh: self.mesh,
                dofs: &self.dofs,
                assembler: &self.assembler,
                mode: self.mode,
                flux_field: self.fields.c,
                displacement_field: self.fields.u,
                solution: x,
                swap,
                finite: self.laws.is_finite(),
            },
            &self.loads,
            &mut target,
        );
        self.assembler.finish(&mut target);
        Ok(())
    }

    /// The row swap of the nodes with a prescribed potential, if any (after `refresh_swap`).
    fn row_swap(&self) -> Option<RowSwap<'_>> {
        (self.n_swapped > 0).then_some(RowSwap {
            dofs: &self.dofs,
            fields: self.fields,
            swapped: &self.swapped,
        })
    }

    /// Add the cells' residual and the `part` of their tangent at `x` to `target` (through the
    /// row swap where `μ` is prescribed).
    fn add_cell_terms(
        &self,
        x: &[f64],
        part: TangentPart,
        target: &mut AssemblyTarget<'_>,
    ) -> Result<(), CoupledError> {
        let t = self.time;
        let timed = self.source.as_ref();
        let source = move |p: [f64; 3]| timed.map_or(0.0, |f| f(p, t));
        let timed_body = self.body_force.as_ref();
        let body_force = move |p: [f64; 3]| timed_body.map_or([0.0; 3], |f| f(p, t));
        let timed_g = self.potential_source.as_ref();
        let potential_source = move |p: [f64; 3]| timed_g.map_or(0.0, |f| f(p, t));
        let kernel = CoupledKernel {
            dofs: &self.dofs,
            fields: self.fields,
            mode: self.mode,
            laws: &self.laws,
            rate: RateTerm {
                a0: self.a0,
                history: &self.history,
            },
            source: self.source.as_ref().map(|_| &source as _),
            body_force: self.body_force.as_ref().map(|_| &body_force as _),
            potential_source: self
                .potential_source
                .as_ref()
                .map(|_| &potential_source as _),
            solution: x,
            tangent: part,
        };
        match self.row_swap() {
            Some(swap) => self.assembler.add_cells(
                self.mesh,
                &self.dofs,
                &SwappedRows {
                    inner: kernel,
                    swap,
                },
                target,
            ),
            None => self
                .assembler
                .add_cells(self.mesh, &self.dofs, &kernel, target),
        }
    }

    /// Make `fixed_tangent` hold the state-independent blocks for the current laws, geometry
    /// mode, constraints (when `constrained`) and row swap, assembling them at `x` (any state:
    /// they do not depend on it) when any of these changed.
    fn refresh_fixed_tangent(&mut self, x: &[f64], constrained: bool) -> Result<(), CoupledError> {
        let pattern = self.assembler.pattern();
        let constrained_dofs = constrained.then(|| self.constraints.dofs());
        let current = self.fixed_tangent.as_ref().is_some_and(|f| {
            Arc::ptr_eq(&f.pattern, pattern)
                && f.mode == self.mode
                && f.constrained.as_deref() == constrained_dofs
                && f.swapped == self.swapped
                && f.laws == self.laws
        });
        if current {
            return Ok(());
        }
        let mut values = self
            .fixed_tangent
            .take()
            .map(|f| f.values)
            .unwrap_or_default();
        values.clear();
        values.resize(pattern.nnz(), 0.0);
        let mut fixed = CsrMatrix {
            pattern: pattern.clone(),
            values,
        };
        let mut target = AssemblyTarget {
            matrix: Some(&mut fixed),
            vector: None,
            constraints: constrained.then_some((&self.constraints, &self.zero_increments[..])),
        };
        self.add_cell_terms(x, TangentPart::StateIndependent, &mut target)?;
        self.fixed_tangent_assemblies += 1;
        self.fixed_tangent = Some(FixedTangent {
            values: fixed.values,
            pattern: fixed.pattern,
            laws: self.laws.clone(),
            mode: self.mode,
            constrained: constrained_dofs.map(<[usize]>::to_vec),
            swapped: self.swapped.clone(),
        });
        Ok(())
    }

    /// Mass balance of the current step at the solution `x`: call after `begin_step` and a
    /// converged Newton solve of that step (e.g. right after `Integrator::step` with the
    /// integrator's new state).
    ///
    /// * `amount_rate = ∫ (a0 c + h) dV`, the rate of the total amount with the integrator's
    ///   rate term (for backward Euler: the amount change over the step divided by `Δt`);
    /// * `supplied = ∫ s dV + Σ` inward facet fluxes and exchange fluxes;
    /// * `reaction`: the mass-equation residual, assembled without constraints, summed over the
    ///   nodes whose mass equation a constraint replaces (prescribed `c` or prescribed `μ`):
    ///   the inflow the prescribed values draw;
    /// * `imbalance`: the same sum over the nodes where the mass equation is enforced.
    ///
    /// The residual of node `a`'s mass equation is `∫ N_a ċ dV + ∫ ∇N_a · M∇μ dV − ∫ N_a s dV −
    /// ∫ N_a j̄ dA`; since `Σ_a N_a = 1` the sum over all nodes is `amount_rate − supplied`, so
    /// `amount_rate = supplied + reaction + imbalance` holds to round-off. All integrals use the
    /// kernels' quadrature.
    pub fn mass_rates(&mut self, x: &[f64]) -> Result<MassRates, CoupledError> {
        let n = self.dofs.n_dofs();
        let mut r = vec![0.0; n];
        self.assemble(x, None, Some(&mut r), false)?;
        let (fc, fm) = (self.fields.c, self.fields.mu);
        let (mut reaction, mut imbalance) = (0.0, 0.0);
        for node in self.dofs.field_nodes(fc) {
            let dc = self.dofs.node_dof(fc, node, 0).expect("node carries c");
            let (row, dropped) = if self.swapped[node] {
                let dm = self.dofs.node_dof(fm, node, 0).expect("swap implies mu");
                (dm, true)
            } else {
                (dc, self.constraints.is_constrained(dc))
            };
            if dropped {
                reaction += r[row];
            } else {
                imbalance += r[row];
            }
        }
        // Rate of the amount.
        let rate: Vec<f64> = (0..n).map(|i| self.a0 * x[i] + self.history[i]).collect();
        let amount_rate = field_integral(self.mesh, &self.dofs, fc, self.mode, &rate)?;
        // Supply: the loads and the source alone, summed over the mass rows.
        let mut v = vec![0.0; n];
        let mut target = AssemblyTarget {
            matrix: None,
            vector: Some(&mut v),
            constraints: None,
        };
        self.assembler.begin(&mut target);
        if let Some(f) = self.source.as_ref() {
            let t = self.time;
            let source = move |p: [f64; 3]| f(p, t);
            let kernel = PoissonKernel {
                dofs: &self.dofs,
                field: fc,
                mode: self.mode,
                conductivity: 0.0,
                source: Some(&source),
                solution: x,
            };
            self.assembler
                .add_cells(self.mesh, &self.dofs, &kernel, &mut target)?;
        }
        add_loads(
            &LoadContext {
                mesh: self.mesh,
                dofs: &self.dofs,
                assembler: &self.assembler,
                mode: self.mode,
                flux_field: fc,
                displacement_field: self.fields.u,
                solution: x,
                swap: None,
                finite: self.laws.is_finite(),
            },
            &self.loads,
            &mut target,
        );
        let supplied = -self.dofs.field_range(fc).map(|i| v[i]).sum::<f64>();
        Ok(MassRates {
            amount_rate,
            supplied,
            reaction,
            imbalance,
        })
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
        let start = std::time::Instant::now();
        let result = self.assemble(x, Some(jacobian), Some(residual), true);
        self.assembly_seconds += start.elapsed().as_secs_f64();
        result
    }

    fn residual_into(&mut self, x: &[f64], residual: &mut [f64]) -> Result<(), CoupledError> {
        let start = std::time::Instant::now();
        let result = self.assemble(x, None, Some(residual), true);
        self.assembly_seconds += start.elapsed().as_secs_f64();
        result
    }

    /// The matrix alone: the residual at `x` is already in `residual`.
    fn jacobian_into(
        &mut self,
        x: &[f64],
        jacobian: &mut CsrMatrix,
        _residual: &mut [f64],
    ) -> Result<(), CoupledError> {
        let start = std::time::Instant::now();
        let result = self.assemble(x, Some(jacobian), None, true);
        self.assembly_seconds += start.elapsed().as_secs_f64();
        result
    }

    /// Floors of the step test: the body's size for displacements (a correction of 1e-12 of the
    /// body size is negligible), none for concentrations (they are positive and of their own
    /// scale), and the chemical laws' potential scale for the potential (`RT` when they have a
    /// temperature: potential differences matter on the scale of the thermal energy).
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
        vec![size, 0.0, self.laws.potential_scale()]
    }

    fn reuse_jacobian(&self) -> bool {
        self.reuse_jacobian
    }

    /// The rearrangement that makes the Jacobian symmetric up to the terms of a concentration-
    /// dependent mobility and of exchange boundaries (docs/theory.md, "Symmetric form of the
    /// coupled Jacobian"). At a node without prescribed values, the mass row (tested with `N`,
    /// `∂/∂c ≈ a0 M`) moves to the `μ` position scaled by `−1/a0` and the potential row to the
    /// `c` position scaled by `−1`: the potential block of the result is then `−K/a0` (negative
    /// semidefinite), the `(u, c)` block the Hessian of the free energy (positive definite for a
    /// supported body and a convex chemical energy), and the `c`–`μ` blocks `−M` on both sides.
    /// Where `μ` is prescribed the rows are already swapped (see `RowSwap`); where `c` is, the
    /// potential row stays in place (that node's rows are not symmetric). Rows of prescribed
    /// values are identities. `None` when `c` and `μ` have different orders.
    fn row_transform(&self) -> Option<RowTransform> {
        let (fc, fm) = (self.fields.c, self.fields.mu);
        // Finite strain: the potential row of a gel is a constraint on the deformation and the
        // mobility depends on it; the rearrangement gives no symmetric matrix.
        if self.dofs.spec(fc).order != self.dofs.spec(fm).order || self.laws.is_finite() {
            return None;
        }
        let n = self.dofs.n_dofs();
        let mut target: Vec<usize> = (0..n).collect();
        let mut scale = vec![1.0; n];
        let mut signs = vec![1i8; n];
        // A non-convex chemical energy makes the (c, c) block of the symmetric form indefinite:
        // its pivots have no sign known in advance.
        let c_sign = if self.laws.all_convex() { 1 } else { 0 };
        for d in self.dofs.field_range(fc) {
            signs[d] = c_sign;
        }
        let mass_scale = if self.a0 > 0.0 { -1.0 / self.a0 } else { -1.0 };
        for node in self.dofs.field_nodes(fc) {
            let dc = self.dofs.node_dof(fc, node, 0).expect("node carries c");
            let dm = self
                .dofs
                .node_dof(fm, node, 0)
                .expect("equal orders: node carries mu");
            let c_fixed = self.constraints.is_constrained(dc);
            let mu_fixed = self.constraints.is_constrained(dm);
            match (c_fixed, mu_fixed) {
                (true, true) => {}
                // Swapped at assembly: the potential equation sits in the c row.
                (false, true) => scale[dc] = -1.0,
                (true, false) => {
                    scale[dm] = -1.0;
                    signs[dm] = -1;
                }
                (false, false) => {
                    target[dc] = dm;
                    scale[dc] = mass_scale;
                    target[dm] = dc;
                    scale[dm] = -1.0;
                    signs[dm] = -1;
                }
            }
        }
        Some(RowTransform {
            target,
            scale,
            signs,
        })
    }

    fn blocks(&self) -> Vec<std::ops::Range<usize>> {
        [self.fields.u, self.fields.c, self.fields.mu]
            .iter()
            .map(|&f| self.dofs.field_range(f))
            .collect()
    }
}

impl TransientSystem for CoupledProblem<'_> {
    /// Runs [`CoupledProblem::boundary_update`] at `t_new` first, then stores the rate term.
    fn begin_step(&mut self, t_new: f64, a0: f64, history: &[f64]) {
        if let Some(update) = self.boundary_update.as_mut() {
            update(t_new, &mut self.loads, &mut self.constraints);
        }
        self.time = t_new;
        self.a0 = a0;
        self.history.copy_from_slice(history);
    }

    fn is_dynamic(&self, i: usize) -> bool {
        self.dofs.field_range(self.fields.c).contains(&i)
    }

    /// Elastic + chemical + gradient energy of the body (`coupled_integrals`); `None` when a
    /// quadrature point is outside its law's range (the step is then rejected elsewhere).
    fn free_energy(&self, x: &[f64]) -> Option<f64> {
        coupled_integrals_on(
            self.mesh,
            &self.post(x),
            PostThreads::Assembler(&self.assembler),
        )
        .ok()
        .map(|i| i.elastic_energy + i.chemical_energy + i.gradient_energy)
    }

    /// Every nodal concentration must lie in the range of the chemical and mobility laws of
    /// every cell it belongs to (in finite strain: `FiniteLaw::check_concentration`): the kernel only sees quadrature points, where an oscillating
    /// field can still look admissible while a node has left the range.
    fn check_solution(&self, x: &[f64]) -> Result<(), String> {
        if self.laws.is_finite() {
            for (cell, kind, _) in self.mesh.cells() {
                let law = self.laws.finite_law(cell);
                let range = self.dofs.local_range(self.fields.c, kind);
                for &d in &self.dofs.cell_dofs(cell)[range] {
                    if let Err(e) = law.check_concentration(x[d]) {
                        return Err(format!("cell {cell}, nodal concentration: {e}"));
                    }
                }
            }
            // The results are reported at the nodes, where the deformation gradient of each
            // cell is extrapolated from its quadrature points: a state the law cannot take there
            // (a node of a drying gel below its dry volume, an inverted corner) is refused too.
            let threads = PostThreads::Assembler(&self.assembler);
            return match recover_coupled_nodal_on(self.mesh, &self.post(x), threads) {
                Ok(_) => Ok(()),
                Err(CoupledError::Range {
                    cell,
                    point,
                    source,
                }) => Err(format!("cell {cell}, at its local node {point}: {source}")),
                Err(e) => Err(format!("at the nodes: {e}")),
            };
        }
        for (cell, kind, _) in self.mesh.cells() {
            let law = self.laws.law(cell).parts();
            let range = self.dofs.local_range(self.fields.c, kind);
            for &d in &self.dofs.cell_dofs(cell)[range] {
                let c = x[d];
                let verdict = law
                    .chemical
                    .evaluate(c)
                    .map(|_| ())
                    .and_then(|()| law.mobility.evaluate(c).map(|_| ()));
                if let Err(e) = verdict {
                    return Err(format!("cell {cell}, nodal concentration: {e}"));
                }
            }
        }
        Ok(())
    }
}
