//! The coupled small-strain deformation–diffusion kernel with displacement `u`, concentration
//! `c` and chemical potential `μ` as fields (the mixed formulation of docs/theory.md):
//!
//! * momentum:  `R_u,a = ∫ B_aᵀ σ(ε, c) dV`
//! * mass:      `R_c,a = ∫ N_a (ċ − s) dV − ∫ grad N_a · J dV`, `J = −M(c) grad μ`
//! * potential: `R_μ,a = ∫ N_a (μ − μ_local(ε, c)) dV − ∫ grad N_a · κ grad c dV`
//!   (the gradient-energy term of phase separation; absent when `κ = 0`)
//!
//! with the rate `ċ ≈ a0 c + h` supplied by the time integrator.
//!
//! For verification by manufactured solutions the kernel takes two optional data terms, both off
//! (`None`) in every physical model: a body force `b` in the momentum equation (`R_u,a` gains
//! `− ∫ N_a b dV`) and a potential source `g` in the potential equation (`R_μ,a = ∫ N_a (μ −
//! μ_local − g) dV`). They depend on position only, so they leave the tangent unchanged. The point law (stress, local
//! potential, flux and all their derivatives) comes from `dilata_material::coupled`; a
//! concentration outside the law's range is returned as a recoverable error naming the cell.
//! Boundary terms (tractions, inward species flux) are separate facet kernels.
//!
//! ## Prescribed chemical potential: the row swap
//!
//! Constraints replace the *row* of a constrained DOF by an identity. Where `μ` is prescribed,
//! the equation to give up is the mass balance (the species flux through that node is the unknown
//! reaction), while the potential equation must stay (it then fixes `c` there). [`SwappedRows`]
//! wraps any cell or facet kernel and, at every node flagged in a [`RowSwap`], exchanges the
//! node's `c`-row and `μ`-row of the local residual and tangent: the potential equation then sits
//! in the kept `c`-row and the mass equation (with its facet fluxes) in the dropped `μ`-row. This
//! needs the same interpolation order for `c` and `μ` (the same local node numbering).

use dilata_fem::dofs::DofMap;
use dilata_fem::values::SpaceValues;
use dilata_fem::{
    CellInput, CellKernel, FacetInput, FacetKernel, FieldHandle, GeometryMode, InvertedCell,
    LocalOutput,
};
use dilata_material::coupled::{CoupledPointLaw, PointInput, UnstrainedOutput};
use dilata_material::elastic::Voigt;
use dilata_material::error::RangeError;
use dilata_material::finite::FiniteLaw;
use dilata_mesh::CellKind;
use nalgebra::Vector3;

use crate::cellcache::{stiffness_degree, CellValuesCache};
use crate::elasticity::{node_b, VectorFn};
use crate::poisson::ScalarFn;

/// Handles of the three fields of the coupled problem.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct CoupledFields {
    pub u: FieldHandle,
    pub c: FieldHandle,
    pub mu: FieldHandle,
}

/// Rate approximation `ċ ≈ a0 · c + history` at the current step.
#[derive(Clone, Copy, Debug)]
pub struct RateTerm<'a> {
    pub a0: f64,
    /// Global vector; only its concentration entries are read.
    pub history: &'a [f64],
}

/// Why a coupled cell could not be evaluated (both recoverable by cutting the step).
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
pub enum CoupledError {
    #[error(transparent)]
    Inverted(#[from] InvertedCell),
    #[error("cell {cell}, quadrature point {point}: {source}")]
    Range {
        cell: usize,
        point: usize,
        #[source]
        source: RangeError,
    },
}

/// The point law of every cell: one law per material and the material of each cell. All laws
/// of a map share one kinematics: small-strain laws ([`LawMap::new`]) or finite-strain laws
/// ([`LawMap::finite`], total Lagrangian, see [`crate::finite`]).
#[derive(Clone, Debug, PartialEq)]
pub struct LawMap {
    laws: Vec<CoupledPointLaw>,
    finite: Vec<FiniteLaw>,
    law_of_cell: Vec<u32>,
}

impl LawMap {
    /// One law for all `n_cells` cells.
    pub fn uniform(law: CoupledPointLaw, n_cells: usize) -> Self {
        LawMap {
            laws: vec![law],
            finite: Vec::new(),
            law_of_cell: vec![0; n_cells],
        }
    }

    /// Several laws; `law_of_cell[i]` indexes `laws` for cell `i`.
    ///
    /// # Panics
    /// If `laws` is empty or an index is out of range (a bug of the caller, who validates
    /// region names before building the map).
    pub fn new(laws: Vec<CoupledPointLaw>, law_of_cell: Vec<u32>) -> Self {
        assert!(!laws.is_empty(), "a law map needs at least one law");
        assert!(
            law_of_cell.iter().all(|&i| (i as usize) < laws.len()),
            "law index out of range"
        );
        LawMap {
            laws,
            finite: Vec::new(),
            law_of_cell,
        }
    }

    /// Finite-strain laws; `law_of_cell[i]` indexes `laws` for cell `i`.
    ///
    /// # Panics
    /// As [`Self::new`].
    pub fn finite(laws: Vec<FiniteLaw>, law_of_cell: Vec<u32>) -> Self {
        assert!(!laws.is_empty(), "a law map needs at least one law");
        assert!(
            law_of_cell.iter().all(|&i| (i as usize) < laws.len()),
            "law index out of range"
        );
        LawMap {
            laws: Vec::new(),
            finite: laws,
            law_of_cell,
        }
    }

    /// Whether the laws are finite-strain laws.
    pub fn is_finite(&self) -> bool {
        !self.finite.is_empty()
    }

    /// The small-strain law of cell `cell`.
    ///
    /// # Panics
    /// For a finite-strain map (callers branch on [`Self::is_finite`] first).
    #[inline]
    pub fn law(&self, cell: usize) -> &CoupledPointLaw {
        assert!(
            !self.is_finite(),
            "small-strain law asked of a finite-strain law map"
        );
        &self.laws[self.law_of_cell[cell] as usize]
    }

    /// The finite-strain law of cell `cell`.
    ///
    /// # Panics
    /// For a small-strain map.
    pub fn finite_law(&self, cell: usize) -> &FiniteLaw {
        assert!(
            self.is_finite(),
            "finite-strain law asked of a small-strain law map"
        );
        &self.finite[self.law_of_cell[cell] as usize]
    }

    /// All small-strain laws, in the order given (empty for a finite-strain map).
    pub fn laws(&self) -> &[CoupledPointLaw] {
        &self.laws
    }

    /// All finite-strain laws, in the order given (empty for a small-strain map).
    pub fn finite_laws(&self) -> &[FiniteLaw] {
        &self.finite
    }

    /// Index into [`Self::laws`] (or [`Self::finite_laws`]) of every cell.
    pub fn law_of_cell(&self) -> &[u32] {
        &self.law_of_cell
    }

    /// Whether every chemical energy is convex in `c` (the potential row of a finite-strain
    /// law is not of the small-strain form; reported as not convex).
    pub fn all_convex(&self) -> bool {
        !self.is_finite() && self.laws.iter().all(|l| l.parts().chemical.is_convex())
    }

    /// Whether the mechanical part of the small-strain tangent is the same in every state: the
    /// laws are small-strain laws with a stiffness that does not depend on the concentration.
    /// The swelling strain is linear in `c`, so `dσ/dε = C`, `dσ/dc = −C β` and
    /// `dμ/dε = −C β` are then constants of each cell's law (`dilata_material::swelling::
    /// mechanics`), and so are the kernel's `(u, u)`, `(u, c)` and `(μ, u)` blocks and the
    /// `(μ, μ)` mass block: [`TangentPart`].
    pub fn constant_mechanical_tangent(&self) -> bool {
        !self.is_finite() && self.laws.iter().all(|l| l.parts().stiffness.is_constant())
    }

    /// Largest scale of chemical-potential differences over the chemical laws, in J/mol
    /// (`RT` for the laws with a temperature; see `ChemicalLaw::potential_scale`).
    pub fn potential_scale(&self) -> f64 {
        self.laws
            .iter()
            .map(|l| l.parts().chemical.potential_scale())
            .chain(self.finite.iter().map(|l| l.potential_scale()))
            .fold(0.0, f64::max)
    }
}

/// Cell kernel of the coupled problem.
pub struct CoupledKernel<'a> {
    pub dofs: &'a DofMap,
    pub fields: CoupledFields,
    pub mode: GeometryMode,
    pub laws: &'a LawMap,
    pub rate: RateTerm<'a>,
    /// Volumetric source `s` in mol/(m³ s).
    pub source: Option<ScalarFn<'a>>,
    /// Body force density `b` in N/m³ (momentum residual `− ∫ N_a b dV`). Manufactured-solution
    /// term: `None` in physical models.
    pub body_force: Option<VectorFn<'a>>,
    /// Potential source `g` in J/mol (potential residual `∫ N_a (μ − μ_local − g) dV`).
    /// Manufactured-solution term: `None` in physical models.
    pub potential_source: Option<ScalarFn<'a>>,
    pub solution: &'a [f64],
    /// Which blocks of the tangent the kernel writes (the residual is always whole).
    pub tangent: TangentPart,
}

/// The blocks of the small-strain tangent a [`CoupledKernel`] writes.
///
/// Every local entry belongs to one of two sets: the *state-independent* blocks, `(u, u)`
/// `B_aᵀ C B_b`, `(u, c)` `B_aᵀ (dσ/dc) N_b`, `(μ, u)` `−N_a (dμ/dε) B_b` and the `(μ, μ)` mass
/// `N_a N_b`, and the *state-dependent* ones, the mass rows `(c, c)`, `(c, μ)` (rate, mobility
/// and its derivative) and `(μ, c)` (`dμ/dc`, gradient energy). When
/// [`LawMap::constant_mechanical_tangent`] holds, the first set is the same at every state, so a
/// caller may assemble it once ([`TangentPart::StateIndependent`]) and add the second set of
/// every later Jacobian to a copy of it ([`TangentPart::StateDependent`]). Each local entry
/// is computed exactly as in [`TangentPart::Whole`] and lands in one of the two sets only, so
/// the sum of the two assemblies is the whole Jacobian to the bit (the other set contributes
/// exact zeros to it; `dilata-solve`'s coupled problem tests this).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Default)]
pub enum TangentPart {
    /// Every block.
    #[default]
    Whole,
    /// The state-independent blocks only (meaningful with a constant mechanical tangent).
    StateIndependent,
    /// The state-dependent blocks only.
    StateDependent,
}

/// Scratch of the coupled kernel.
pub struct CoupledScratch {
    pub(crate) cache: CellValuesCache,
    pub(crate) local: LocalValues,
    /// Per displacement node at the current point: `B_b`, `C B_b` and `(∂μ/∂ε) B_b`
    /// (small strain, tangent only).
    pub(crate) b: Vec<[[f64; 3]; 6]>,
    pub(crate) cb: Vec<[[f64; 3]; 6]>,
    pub(crate) mub: Vec<[f64; 3]>,
}

/// The field values of one cell, gathered by `CoupledKernel::gather`.
#[derive(Default)]
pub(crate) struct LocalValues {
    pub u: Vec<f64>,
    pub c: Vec<f64>,
    pub c_rate: Vec<f64>,
    pub mu: Vec<f64>,
    /// Finite strain: `δF` of every displacement node at the current point (reused buffer).
    pub df: Vec<[nalgebra::SVector<f64, 9>; 3]>,
}

/// The scalar fields at one quadrature point.
pub(crate) struct ScalarsAt {
    pub c: f64,
    pub c_dot: f64,
    pub mu: f64,
    pub grad_mu: Vector3<f64>,
    /// Zero unless asked for (a law with a gradient energy).
    pub grad_c: Vector3<f64>,
}

impl LocalValues {
    /// `c`, `ċ`, `μ`, `grad μ` and (when `with_grad_c`) `grad c` at point `q` of the `c` and `μ`
    /// spaces, from the values gathered into the scratch.
    pub(crate) fn scalars_at(
        &self,
        sc: &SpaceValues,
        sm: &SpaceValues,
        q: usize,
        with_grad_c: bool,
    ) -> ScalarsAt {
        let (gc, vc) = (sc.grads(q), sc.values(q));
        let (gm, vm) = (sm.grads(q), sm.values(q));
        self.scalars_from(vc, gc, vm, gm, with_grad_c)
    }

    /// [`Self::scalars_at`] from the two spaces' values and gradients at the point.
    #[inline(always)]
    pub(crate) fn scalars_from(
        &self,
        vc: &[f64],
        gc: &[[f64; 3]],
        vm: &[f64],
        gm: &[[f64; 3]],
        with_grad_c: bool,
    ) -> ScalarsAt {
        let c: f64 = vc.iter().zip(&self.c).map(|(n, v)| n * v).sum();
        let c_dot: f64 = vc.iter().zip(&self.c_rate).map(|(n, v)| n * v).sum();
        let mu: f64 = vm.iter().zip(&self.mu).map(|(n, v)| n * v).sum();
        let mut grad_mu = Vector3::zeros();
        for (g, v) in gm.iter().zip(&self.mu) {
            for d in 0..3 {
                grad_mu[d] += g[d] * v;
            }
        }
        let mut grad_c = Vector3::zeros();
        if with_grad_c {
            for (g, v) in gc.iter().zip(&self.c) {
                for d in 0..3 {
                    grad_c[d] += g[d] * v;
                }
            }
        }
        ScalarsAt {
            c,
            c_dot,
            mu,
            grad_mu,
            grad_c,
        }
    }
}

/// The flux and gradient-energy terms a point law gives the scalar rows.
pub(crate) struct ScalarTerms {
    pub flux: Vector3<f64>,
    pub dflux_dc: Vector3<f64>,
    pub dflux_dgrad_mu: nalgebra::Matrix3<f64>,
    pub kappa_grad_c: Vector3<f64>,
    pub kappa: nalgebra::Matrix3<f64>,
}

/// Where the scalar rows of one cell go, and the point they are integrated at: the `c`
/// space's values and gradients and the `μ` space's gradients there (slices of a constant
/// length where the caller knows it, so that the loops below unroll).
pub(crate) struct ScalarRows<'s> {
    pub vc: &'s [f64],
    pub gc: &'s [[f64; 3]],
    pub gm: &'s [[f64; 3]],
    pub w: f64,
    pub rc: std::ops::Range<usize>,
    pub rm: std::ops::Range<usize>,
    pub n_loc: usize,
    pub a0: f64,
}

impl ScalarRows<'_> {
    /// Residual of the mass rows `N_a (ċ − s) − grad N_a · J` and the gradient part
    /// `− grad N_a · κ grad c` of the potential rows (the caller adds `N_a π`).
    #[inline(always)]
    pub(crate) fn residual(&self, fe: &mut [f64], t: &ScalarTerms, c_dot: f64, src: f64) {
        let (gc, vc, gm) = (self.gc, self.vc, self.gm);
        for a in 0..vc.len() {
            let gj = gc[a][0] * t.flux[0] + gc[a][1] * t.flux[1] + gc[a][2] * t.flux[2];
            fe[self.rc.start + a] += (vc[a] * (c_dot - src) - gj) * self.w;
        }
        let kg = t.kappa_grad_c;
        for a in 0..gm.len() {
            let gk = gm[a][0] * kg[0] + gm[a][1] * kg[1] + gm[a][2] * kg[2];
            fe[self.rm.start + a] -= gk * self.w;
        }
    }

    /// Tangent of the mass rows by `c` and `μ`, and of the gradient part of the potential rows
    /// by `c` (when `with_gradient`).
    #[inline(always)]
    pub(crate) fn tangent(&self, ke: &mut [f64], t: &ScalarTerms, with_gradient: bool) {
        let at = |row: usize, col: usize| row * self.n_loc + col;
        let (gc, vc, gm) = (self.gc, self.vc, self.gm);
        let w = self.w;
        for a in 0..vc.len() {
            let row = &mut ke[at(self.rc.start + a, 0)..at(self.rc.start + a + 1, 0)];
            let g = Vector3::new(gc[a][0], gc[a][1], gc[a][2]);
            let gdj_dc = g.dot(&t.dflux_dc);
            let va0 = vc[a] * self.a0;
            let cols = &mut row[self.rc.start..self.rc.start + vc.len()];
            for (k, &vb) in cols.iter_mut().zip(vc) {
                *k += (va0 * vb - gdj_dc * vb) * w;
            }
            // −grad N_a · dJ/d(grad μ) · grad N_b
            let gm_t = t.dflux_dgrad_mu.transpose() * g;
            let cols = &mut row[self.rm.start..self.rm.start + gm.len()];
            for (k, gb) in cols.iter_mut().zip(gm) {
                let v = -(gm_t[0] * gb[0] + gm_t[1] * gb[1] + gm_t[2] * gb[2]);
                *k += v * w;
            }
        }
        if with_gradient {
            // −grad N_a · κ · grad N_b
            for a in 0..gm.len() {
                let row = self.rm.start + a;
                let g = Vector3::new(gm[a][0], gm[a][1], gm[a][2]);
                let gk = t.kappa.transpose() * g;
                for b in 0..vc.len() {
                    let v = gk[0] * gc[b][0] + gk[1] * gc[b][1] + gk[2] * gc[b][2];
                    ke[at(row, self.rc.start + b)] -= v * w;
                }
            }
        }
    }
}

impl CoupledKernel<'_> {
    /// The ranges of `u`, `c` and `μ` in the local DOF vector of a cell of `kind`.
    pub(crate) fn local_ranges(&self, kind: CellKind) -> [std::ops::Range<usize>; 3] {
        [self.fields.u, self.fields.c, self.fields.mu].map(|f| self.dofs.local_range(f, kind))
    }

    /// Copy the cell's `u`, `c`, rate `a0 c + h` and `μ` values into the scratch (`ranges`
    /// from [`Self::local_ranges`]).
    pub(crate) fn gather(
        &self,
        input: &CellInput<'_>,
        ranges: &[std::ops::Range<usize>; 3],
        s: &mut CoupledScratch,
    ) {
        let [ru, rc, rm] = ranges.clone();
        // A generic function, not a closure taking `&dyn Fn`: one indirect call per DOF was a
        // visible part of a residual pass.
        fn gather(dofs: &[usize], into: &mut Vec<f64>, f: impl Fn(usize) -> f64) {
            into.clear();
            into.extend(dofs.iter().map(|&d| f(d)));
        }
        let l = &mut s.local;
        let (x, rate) = (self.solution, &self.rate);
        gather(&input.dofs[ru], &mut l.u, |d| x[d]);
        gather(&input.dofs[rc.clone()], &mut l.c, |d| x[d]);
        gather(&input.dofs[rc], &mut l.c_rate, |d| {
            rate.a0 * x[d] + rate.history[d]
        });
        gather(&input.dofs[rm], &mut l.mu, |d| x[d]);
    }
}

impl CellKernel for CoupledKernel<'_> {
    type Scratch = CoupledScratch;
    type Error = CoupledError;

    /// The state-dependent blocks ([`TangentPart::StateDependent`]) lie in the `c` and `μ`
    /// rows and columns, which follow each other in the local numbering (`u`, `c`, `μ`).
    fn matrix_support(&self, kind: CellKind) -> Option<std::ops::Range<usize>> {
        if self.tangent != TangentPart::StateDependent {
            return None;
        }
        let [_, rc, rm] = self.local_ranges(kind);
        (rc.end == rm.start).then_some(rc.start..rm.end)
    }

    fn build_scratch(&self) -> CoupledScratch {
        let orders = [self.fields.u, self.fields.c, self.fields.mu]
            .iter()
            .map(|&f| self.dofs.spec(f).order)
            .collect();
        CoupledScratch {
            cache: CellValuesCache::new(self.mode, stiffness_degree, orders),
            local: LocalValues::default(),
            b: Vec::with_capacity(27),
            cb: Vec::with_capacity(27),
            mub: Vec::with_capacity(27),
        }
    }

    fn cell_into(
        &self,
        input: &CellInput<'_>,
        s: &mut CoupledScratch,
        out: LocalOutput<'_>,
    ) -> Result<(), CoupledError> {
        if self.laws.is_finite() {
            debug_assert_eq!(
                self.tangent,
                TangentPart::Whole,
                "finite strain has no state-independent tangent blocks"
            );
            return crate::finite::finite_cell_into(self, input, s, out);
        }
        // The point loop with the displacement components and the Voigt rows that can be
        // nonzero as constants (all six in 3D; xx, yy, zz (hoop) and xy in 2D; no mechanics in
        // a run whose `u` field has no components), so that its small loops unroll. The
        // arithmetic and its order are the same for every instance.
        // The structural zeros of `B` (`StrainRows`) are skipped; they contributed exact zeros.
        // The scalar spaces' node count as a constant too when `c` and `μ` share it and it is
        // that of a common cell (tri3, quad4 and tet4, quad8 and hex8, quad9); 0: any.
        let ns = match (
            self.dofs.space_kind(self.fields.c, input.kind).n_nodes(),
            self.dofs.space_kind(self.fields.mu, input.kind).n_nodes(),
        ) {
            (n, m) if n == m && matches!(n, 3 | 4 | 8 | 9) => n,
            _ => 0,
        };
        macro_rules! by_nodes {
            ($nc:literal, $nk:literal, $rows:ty) => {
                match ns {
                    3 => self.cell_points::<$nc, $nk, $rows, 3>(input, s, out),
                    4 => self.cell_points::<$nc, $nk, $rows, 4>(input, s, out),
                    8 => self.cell_points::<$nc, $nk, $rows, 8>(input, s, out),
                    9 => self.cell_points::<$nc, $nk, $rows, 9>(input, s, out),
                    _ => self.cell_points::<$nc, $nk, $rows, 0>(input, s, out),
                }
            };
        }
        match (self.dofs.spec(self.fields.u).n_components, self.mode) {
            (0, _) => by_nodes!(0, 0, PlaneRows),
            (3, GeometryMode::ThreeD) => by_nodes!(3, 6, SolidRows),
            (2, GeometryMode::PlaneStrain | GeometryMode::PlaneStress) => {
                by_nodes!(2, 4, PlaneRows)
            }
            (2, GeometryMode::Axisymmetric) => by_nodes!(2, 4, AxisymmetricRows),
            (nc, mode) => unreachable!("{nc} displacement components in mode {mode:?}"),
        }
    }
}

impl CoupledKernel<'_> {
    /// [`CellKernel::cell_into`] of the small-strain kernel with `NC` displacement components,
    /// `NK` Voigt rows that can be nonzero (`NC = 0`: no mechanics) and the nonzero rows of
    /// `B` per component from `P`. Sums run over those rows in increasing order: the products
    /// left out are exact zeros, so the sums are the ones over all rows.
    #[inline(always)]
    fn cell_points<const NC: usize, const NK: usize, P: StrainRows, const NS: usize>(
        &self,
        input: &CellInput<'_>,
        s: &mut CoupledScratch,
        out: LocalOutput<'_>,
    ) -> Result<(), CoupledError> {
        let ranges = self.local_ranges(input.kind);
        self.gather(input, &ranges, s);
        let [ru, rc, rm] = ranges;
        let CoupledScratch {
            cache,
            local,
            b: b_all,
            cb: cb_all,
            mub: mub_all,
        } = s;
        let s = &*local;
        let cv = cache.get(input.kind);
        cv.reinit(input.id, input.coords)?;
        let n_loc = input.dofs.len();
        let (su, sc, sm) = (&cv.spaces[0], &cv.spaces[1], &cv.spaces[2]);
        let (ncn, nmn) = if NS > 0 {
            (NS, NS)
        } else {
            (sc.n_nodes(), sm.n_nodes())
        };
        debug_assert_eq!((ncn, nmn), (sc.n_nodes(), sm.n_nodes()));
        // Displacement nodes with unknowns (none in a run without mechanics).
        let nu_m = if NC == 0 { 0 } else { su.n_nodes() };
        let LocalOutput {
            mut matrix,
            mut vector,
        } = out;
        let law = self.laws.law(input.id);
        let has_gradient = !law.parts().gradient.is_zero();
        let (fixed_blocks, varying_blocks) = match self.tangent {
            TangentPart::Whole => (true, true),
            TangentPart::StateIndependent => (true, false),
            TangentPart::StateDependent => (false, true),
        };
        for q in 0..cv.n_points() {
            let w = cv.jxw[q];
            let r = cv.points[q][0];
            let (gu, vu) = (su.grads(q), su.values(q));
            // The scalar spaces' values and gradients, of length `NS` when it is not 0.
            let (vc, gc, vm, gm) = (sc.values(q), sc.grads(q), sm.values(q), sm.grads(q));
            let (vc, gc, vm, gm) = if NS > 0 {
                (&vc[..NS], &gc[..NS], &vm[..NS], &gm[..NS])
            } else {
                (vc, gc, vm, gm)
            };
            let mut strain = Voigt::zeros();
            for a in 0..nu_m {
                let b = node_b(self.mode, gu[a], vu[a], r);
                for j in 0..NC {
                    for &k in P::ROWS[j] {
                        strain[k] += b[k][j] * s.u[a * NC + j];
                    }
                }
            }
            let at_q = s.scalars_from(vc, gc, vm, gm, has_gradient);
            let range = |source| CoupledError::Range {
                cell: input.id,
                point: q,
                source,
            };
            // Without displacement unknowns the strain is zero: the reduced evaluation.
            let (sp, p) = if NC == 0 {
                let sp = law
                    .evaluate_unstrained(at_q.c, at_q.grad_mu, at_q.grad_c)
                    .map_err(range)?;
                (sp, None)
            } else {
                let p = law
                    .evaluate(&PointInput {
                        strain,
                        c: at_q.c,
                        grad_mu: at_q.grad_mu,
                        grad_c: at_q.grad_c,
                    })
                    .map_err(range)?;
                (UnstrainedOutput::from(&p), Some(p))
            };
            let rows = ScalarRows {
                vc,
                gc,
                gm,
                w,
                rc: rc.clone(),
                rm: rm.clone(),
                n_loc,
                a0: self.rate.a0,
            };
            let terms = ScalarTerms {
                flux: sp.flux,
                dflux_dc: sp.dflux_dc,
                dflux_dgrad_mu: sp.dflux_dgrad_mu,
                kappa_grad_c: sp.kappa_grad_c,
                kappa: sp.kappa,
            };
            if let Some(fe) = vector.as_deref_mut() {
                if let Some(p) = p.as_ref() {
                    let body = self.body_force.map_or([0.0; 3], |f| f(cv.points[q]));
                    for a in 0..nu_m {
                        let ba = node_b(self.mode, gu[a], vu[a], r);
                        for i in 0..NC {
                            let mut v = 0.0;
                            for &k in P::ROWS[i] {
                                v += ba[k][i] * p.stress[k];
                            }
                            fe[ru.start + a * NC + i] += (v - vu[a] * body[i]) * w;
                        }
                    }
                }
                let src = self.source.map_or(0.0, |f| f(cv.points[q]));
                rows.residual(fe, &terms, at_q.c_dot, src);
                let g = self.potential_source.map_or(0.0, |f| f(cv.points[q]));
                for a in 0..nmn {
                    fe[rm.start + a] += vm[a] * (at_q.mu - sp.mu_local - g) * w;
                }
            }
            if let Some(ke) = matrix.as_deref_mut() {
                let at = |row: usize, col: usize| row * n_loc + col;
                if let Some(p) = p.as_ref().filter(|_| fixed_blocks) {
                    // B_b, C B_b and (∂μ/∂ε) B_b once per node and point.
                    b_all.clear();
                    cb_all.clear();
                    mub_all.clear();
                    for b in 0..nu_m {
                        let bb = node_b(self.mode, gu[b], vu[b], r);
                        let mut cb = [[0.0; 3]; 6];
                        let mut mub = [0.0; 3];
                        for k in 0..NK {
                            for j in 0..NC {
                                for &l in P::ROWS[j] {
                                    cb[k][j] += p.dstress_dstrain[(k, l)] * bb[l][j];
                                }
                            }
                        }
                        for j in 0..NC {
                            for &k in P::ROWS[j] {
                                mub[j] += p.dmu_dstrain[k] * bb[k][j];
                            }
                        }
                        b_all.push(bb);
                        cb_all.push(cb);
                        mub_all.push(mub);
                    }
                    // Momentum rows: the symmetric B_aᵀ C B_b (upper block triangle here,
                    // mirrored after the last point) and the coupling to c.
                    add_upper_momentum::<NC, P>(ke, n_loc, ru.start, b_all, cb_all, w);
                    for (a, ba) in b_all.iter().enumerate() {
                        for i in 0..NC {
                            let row = ru.start + a * NC + i;
                            let mut bdc = 0.0;
                            for &k in P::ROWS[i] {
                                bdc += ba[k][i] * p.dstress_dc[k];
                            }
                            let cols = &mut ke[at(row, rc.start)..at(row, rc.start + ncn)];
                            for (k, &vb) in cols.iter_mut().zip(vc) {
                                *k += bdc * vb * w;
                            }
                        }
                    }
                }
                // Mass rows, and the gradient part of the potential rows.
                if varying_blocks {
                    rows.tangent(ke, &terms, has_gradient);
                }
                // Potential rows.
                // (Row slices, with the products in the order of the formulas.)
                for a in 0..nmn {
                    let row = &mut ke[at(rm.start + a, 0)..at(rm.start + a + 1, 0)];
                    let va = vm[a];
                    if NC > 0 && fixed_blocks {
                        let cols = &mut row[ru.start..ru.start + mub_all.len() * NC];
                        for (k, mub) in cols.chunks_exact_mut(NC).zip(mub_all.iter()) {
                            for j in 0..NC {
                                k[j] -= va * mub[j] * w;
                            }
                        }
                    }
                    if varying_blocks {
                        let vd = va * sp.dmu_dc;
                        for (k, &vb) in row[rc.start..rc.start + ncn].iter_mut().zip(vc) {
                            *k -= vd * vb * w;
                        }
                    }
                    if fixed_blocks {
                        for (k, &vb) in row[rm.start..rm.start + nmn].iter_mut().zip(vm) {
                            *k += va * vb * w;
                        }
                    }
                }
            }
        }
        if let Some(ke) = matrix.filter(|_| fixed_blocks) {
            // The lower block triangle of the momentum block from its upper one (the buffer is
            // zero on entry, `LocalOutput`, and nothing else writes there).
            for a in 0..nu_m {
                for i in 0..NC {
                    let row = ru.start + a * NC + i;
                    for b in 0..a {
                        for j in 0..NC {
                            let col = ru.start + b * NC + j;
                            ke[row * n_loc + col] = ke[col * n_loc + row];
                        }
                    }
                }
            }
        }
        Ok(())
    }
}

/// The Voigt rows in which column `i` of a node's strain–displacement matrix `B`
/// (`elasticity::node_b`) can be nonzero, per geometry mode.
pub(crate) trait StrainRows {
    const ROWS: [&'static [usize]; 3];
}

/// 3D: `ε_xx, ε_yy, ε_zz, γ_xy, γ_yz, γ_xz`.
pub(crate) struct SolidRows;
impl StrainRows for SolidRows {
    const ROWS: [&'static [usize]; 3] = [&[0, 3, 5], &[1, 3, 4], &[2, 4, 5]];
}

/// Plane strain and plane stress: `ε_xx, ε_yy, γ_xy` (the `ε_zz` row of `B` is zero).
pub(crate) struct PlaneRows;
impl StrainRows for PlaneRows {
    const ROWS: [&'static [usize]; 3] = [&[0, 3], &[1, 3], &[]];
}

/// Axisymmetric: `ε_rr, ε_zz, ε_θθ = u_r / r, γ_rz`.
pub(crate) struct AxisymmetricRows;
impl StrainRows for AxisymmetricRows {
    const ROWS: [&'static [usize]; 3] = [&[0, 2, 3], &[1, 3], &[]];
}

/// `ke[(a,i),(b,j)] += w Σ_k B_a[k][i] (C B_b)[k][j]` for the node pairs `b ≥ a` of the
/// displacement block starting at local index `start` (`NC` components per node; `k` over the
/// rows where `B_a[·][i]` can be nonzero, from `P`).
#[inline]
fn add_upper_momentum<const NC: usize, P: StrainRows>(
    ke: &mut [f64],
    n_loc: usize,
    start: usize,
    b_all: &[[[f64; 3]; 6]],
    cb_all: &[[[f64; 3]; 6]],
    w: f64,
) {
    let nu = b_all.len();
    for a in 0..nu {
        for i in 0..NC {
            let rows = P::ROWS[i];
            let mut bai = [0.0; 6];
            for &k in rows {
                bai[k] = b_all[a][k][i] * w;
            }
            let row = (start + a * NC + i) * n_loc + start;
            let out = &mut ke[row + a * NC..row + nu * NC];
            for (blk, cb) in out.chunks_exact_mut(NC).zip(&cb_all[a..]) {
                for j in 0..NC {
                    let mut v = 0.0;
                    for &k in rows {
                        v += bai[k] * cb[k][j];
                    }
                    blk[j] += v;
                }
            }
        }
    }
}

/// Nodes whose mass and potential rows are exchanged (see the module documentation).
#[derive(Clone, Copy, Debug)]
pub struct RowSwap<'a> {
    pub dofs: &'a DofMap,
    pub fields: CoupledFields,
    /// One flag per mesh node: `true` where the node's `μ` DOF is constrained.
    pub swapped: &'a [bool],
}

impl RowSwap<'_> {
    /// Exchange the `c`- and `μ`-rows of the flagged nodes of a cell in its local output.
    ///
    /// # Panics
    /// If `c` and `μ` have different interpolation orders (checked by the problem before any
    /// assembly; reaching it here is a programmer error).
    pub fn apply_into(&self, cell: &CellInput<'_>, out: LocalOutput<'_>) {
        let rc = self.dofs.local_range(self.fields.c, cell.kind);
        let rm = self.dofs.local_range(self.fields.mu, cell.kind);
        assert_eq!(
            rc.len(),
            rm.len(),
            "the row swap of a prescribed potential needs equal orders of c and mu"
        );
        let n = cell.dofs.len();
        let LocalOutput {
            mut matrix,
            mut vector,
        } = out;
        for a in 0..rc.len() {
            if !self.swapped[cell.nodes[a]] {
                continue;
            }
            let (i, j) = (rc.start + a, rm.start + a);
            if let Some(fe) = vector.as_deref_mut() {
                fe.swap(i, j);
            }
            if let Some(ke) = matrix.as_deref_mut() {
                for col in 0..n {
                    ke.swap(i * n + col, j * n + col);
                }
            }
        }
    }
}

/// A cell or facet kernel whose output goes through a [`RowSwap`].
pub struct SwappedRows<'a, K> {
    pub inner: K,
    pub swap: RowSwap<'a>,
}

impl<K: CellKernel> CellKernel for SwappedRows<'_, K> {
    type Scratch = K::Scratch;
    type Error = K::Error;

    /// The inner kernel's when it holds the `c` and `μ` rows the swap exchanges; else none.
    fn matrix_support(&self, kind: CellKind) -> Option<std::ops::Range<usize>> {
        let support = self.inner.matrix_support(kind)?;
        let rc = self.swap.dofs.local_range(self.swap.fields.c, kind);
        let rm = self.swap.dofs.local_range(self.swap.fields.mu, kind);
        let holds = |r: &std::ops::Range<usize>| support.start <= r.start && r.end <= support.end;
        (holds(&rc) && holds(&rm)).then_some(support)
    }

    fn build_scratch(&self) -> K::Scratch {
        self.inner.build_scratch()
    }

    fn cell_into(
        &self,
        input: &CellInput<'_>,
        scratch: &mut K::Scratch,
        mut out: LocalOutput<'_>,
    ) -> Result<(), K::Error> {
        self.inner.cell_into(
            input,
            scratch,
            LocalOutput {
                matrix: out.matrix.as_deref_mut(),
                vector: out.vector.as_deref_mut(),
            },
        )?;
        self.swap.apply_into(input, out);
        Ok(())
    }
}

impl<K: FacetKernel> FacetKernel for SwappedRows<'_, K> {
    type Scratch = K::Scratch;
    type Error = K::Error;

    fn build_scratch(&self) -> K::Scratch {
        self.inner.build_scratch()
    }

    fn facet_into(
        &self,
        input: &FacetInput<'_>,
        scratch: &mut K::Scratch,
        mut out: LocalOutput<'_>,
    ) -> Result<(), K::Error> {
        self.inner.facet_into(
            input,
            scratch,
            LocalOutput {
                matrix: out.matrix.as_deref_mut(),
                vector: out.vector.as_deref_mut(),
            },
        )?;
        self.swap.apply_into(&input.cell, out);
        Ok(())
    }
}
