//! Scalar diffusion (Poisson) kernels: `−div(k grad u) = s` with boundary flux.
//!
//! Residual form: `r_a = ∫ k grad N_a · grad u dV − ∫ N_a s dV − ∫ N_a q̄ dA`, with `q̄` the
//! inward boundary flux. The tangent is `K_ab = ∫ k grad N_a · grad N_b dV`. The exchange
//! (Robin) condition `q̄ = rate · (outside − u)` has its own facet kernel with its tangent.

use dilata_fem::dofs::DofMap;
use dilata_fem::quadrature::rule_for;
use dilata_fem::values::{space_kind, FacetValues};
use dilata_fem::{
    CellInput, CellKernel, FacetInput, FacetKernel, FieldHandle, GeometryMode, InvertedCell,
    LocalOutput,
};

use crate::cellcache::{gradient_product_degree, stiffness_degree, CellValuesCache};

/// A source or flux density as a function of position.
pub type ScalarFn<'a> = &'a (dyn Fn([f64; 3]) -> f64 + Sync);

/// Cell kernel of the scalar diffusion problem.
pub struct PoissonKernel<'a> {
    pub dofs: &'a DofMap,
    pub field: FieldHandle,
    pub mode: GeometryMode,
    pub conductivity: f64,
    pub source: Option<ScalarFn<'a>>,
    /// Current solution (global vector); the residual is evaluated there.
    pub solution: &'a [f64],
}

impl CellKernel for PoissonKernel<'_> {
    type Scratch = CellValuesCache;
    type Error = InvertedCell;

    fn build_scratch(&self) -> CellValuesCache {
        let degree = if self.source.is_none() && self.mode != GeometryMode::Axisymmetric {
            gradient_product_degree
        } else {
            stiffness_degree
        };
        CellValuesCache::new(self.mode, degree, vec![self.dofs.spec(self.field).order])
    }

    fn cell_into(
        &self,
        input: &CellInput<'_>,
        cache: &mut CellValuesCache,
        out: LocalOutput<'_>,
    ) -> Result<(), InvertedCell> {
        let cv = cache.get(input.kind);
        cv.reinit(input.id, input.coords)?;
        let range = self.dofs.local_range(self.field, input.kind);
        let n_loc = input.dofs.len();
        let sv = &cv.spaces[0];
        let nn = sv.n_nodes();
        let LocalOutput {
            mut matrix,
            mut vector,
        } = out;
        for q in 0..cv.n_points() {
            let w = cv.jxw[q];
            let g = sv.grads(q);
            let nv = sv.values(q);
            if let Some(ke) = matrix.as_deref_mut() {
                let kw = self.conductivity * w;
                // The spatial dimension as a constant, so the dot products unroll.
                if cv.kind.dim() == 3 {
                    add_upper_gradient_product::<3>(ke, n_loc, range.start, g, kw);
                } else {
                    add_upper_gradient_product::<2>(ke, n_loc, range.start, g, kw);
                }
            }
            if let Some(fe) = vector.as_deref_mut() {
                let mut grad_u = [0.0; 3];
                for a in 0..nn {
                    let ua = self.solution[input.dofs[range.start + a]];
                    for d in 0..3 {
                        grad_u[d] += g[a][d] * ua;
                    }
                }
                let s = self.source.map_or(0.0, |f| f(cv.points[q]));
                for a in 0..nn {
                    let dot = g[a][0] * grad_u[0] + g[a][1] * grad_u[1] + g[a][2] * grad_u[2];
                    fe[range.start + a] += (self.conductivity * dot - nv[a] * s) * w;
                }
            }
        }
        if let Some(ke) = matrix {
            // The tangent is symmetric: the loop above filled its upper triangle (the buffer is
            // zero on entry, `LocalOutput`), mirror it.
            for a in 0..nn {
                for b in 0..a {
                    ke[(range.start + a) * n_loc + range.start + b] =
                        ke[(range.start + b) * n_loc + range.start + a];
                }
            }
        }
        Ok(())
    }
}

/// `ke[a][b] += kw · grad N_a · grad N_b` for `b ≥ a` (the upper triangle) over the block of
/// one field starting at local index `off`; gradients beyond the first `D` components are zero
/// (2D cells).
#[inline]
fn add_upper_gradient_product<const D: usize>(
    ke: &mut [f64],
    n_loc: usize,
    off: usize,
    g: &[[f64; 3]],
    kw: f64,
) {
    let nn = g.len();
    for a in 0..nn {
        let mut ga = [0.0; D];
        for d in 0..D {
            ga[d] = g[a][d] * kw;
        }
        let row = &mut ke[(off + a) * n_loc + off..(off + a) * n_loc + off + nn];
        for (kab, gb) in row[a..].iter_mut().zip(&g[a..]) {
            let mut dot = 0.0;
            for d in 0..D {
                dot += ga[d] * gb[d];
            }
            *kab += dot;
        }
    }
}

/// Boundary kernel: inward flux `q̄(x)` on facets (adds `−∫ N_a q̄ dA` to the residual).
pub struct FluxKernel<'a> {
    pub dofs: &'a DofMap,
    pub field: FieldHandle,
    pub mode: GeometryMode,
    pub inward_flux: ScalarFn<'a>,
}

impl FacetKernel for FluxKernel<'_> {
    type Scratch = Vec<FacetValues>;
    type Error = std::convert::Infallible;

    fn build_scratch(&self) -> Vec<FacetValues> {
        Vec::new()
    }

    fn facet_into(
        &self,
        input: &FacetInput<'_>,
        cache: &mut Vec<FacetValues>,
        out: LocalOutput<'_>,
    ) -> Result<(), Self::Error> {
        let Some(fe) = out.vector else { return Ok(()) };
        let order = self.dofs.spec(self.field).order;
        let fk = input.facet_kind;
        let fsk = space_kind(fk, order).unwrap_or(fk.linear());
        let fv = facet_values(cache, fk, self.mode, fsk);
        fv.reinit(input.facet_coords);
        let range = self.dofs.local_range(self.field, input.cell.kind);
        for q in 0..fv.n_points() {
            let flux = (self.inward_flux)(fv.points[q]);
            let nv = fv.spaces[0].values_at(q);
            for (i, &val) in nv.iter().enumerate() {
                // Facet node i is local cell node input.local_nodes[i].
                let local = input.local_nodes[i];
                fe[range.start + local] -= val * flux * fv.jxw[q];
            }
        }
        Ok(())
    }
}

/// Boundary kernel of an exchange (Robin) condition: inward flux `rate · (outside − u)` on
/// facets, with `rate` in m/s for a species (a film or surface-reaction coefficient) and
/// `outside` the value of the field outside the body.
///
/// Residual: `r_a −= ∫ N_a rate (outside − u) dA`; tangent: `K_ab += ∫ N_a rate N_b dA`.
pub struct ExchangeKernel<'a> {
    pub dofs: &'a DofMap,
    pub field: FieldHandle,
    pub mode: GeometryMode,
    pub rate: f64,
    pub outside: f64,
    /// Current solution (global vector); `u` on the facet is read from it.
    pub solution: &'a [f64],
}

impl FacetKernel for ExchangeKernel<'_> {
    type Scratch = Vec<FacetValues>;
    type Error = std::convert::Infallible;

    fn build_scratch(&self) -> Vec<FacetValues> {
        Vec::new()
    }

    fn facet_into(
        &self,
        input: &FacetInput<'_>,
        cache: &mut Vec<FacetValues>,
        out: LocalOutput<'_>,
    ) -> Result<(), Self::Error> {
        let order = self.dofs.spec(self.field).order;
        let fk = input.facet_kind;
        let fsk = space_kind(fk, order).unwrap_or(fk.linear());
        let fv = facet_values(cache, fk, self.mode, fsk);
        fv.reinit(input.facet_coords);
        let range = self.dofs.local_range(self.field, input.cell.kind);
        let n_loc = input.cell.dofs.len();
        let LocalOutput {
            mut matrix,
            mut vector,
        } = out;
        for q in 0..fv.n_points() {
            let nv = fv.spaces[0].values_at(q);
            let w = fv.jxw[q];
            let row = |i: usize| range.start + input.local_nodes[i];
            let u: f64 = nv
                .iter()
                .enumerate()
                .map(|(i, &v)| v * self.solution[input.cell.dofs[row(i)]])
                .sum();
            if let Some(fe) = vector.as_deref_mut() {
                let flux = self.rate * (self.outside - u);
                for (i, &v) in nv.iter().enumerate() {
                    fe[row(i)] -= v * flux * w;
                }
            }
            if let Some(ke) = matrix.as_deref_mut() {
                for (i, &vi) in nv.iter().enumerate() {
                    for (j, &vj) in nv.iter().enumerate() {
                        ke[row(i) * n_loc + row(j)] += vi * self.rate * vj * w;
                    }
                }
            }
        }
        Ok(())
    }
}

/// Cached facet values for one facet kind and space.
pub(crate) fn facet_values(
    cache: &mut Vec<FacetValues>,
    kind: dilata_mesh::CellKind,
    mode: GeometryMode,
    space: dilata_mesh::CellKind,
) -> &mut FacetValues {
    let pos = match cache.iter().position(|f| f.kind == kind) {
        Some(p) => p,
        None => {
            let degree = 2 * kind.order() + 2;
            cache.push(FacetValues::new(
                kind,
                mode,
                rule_for(kind.shape(), degree),
                &[space],
            ));
            cache.len() - 1
        }
    };
    &mut cache[pos]
}
