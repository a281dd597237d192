//! Small-strain elasticity kernels for every geometry mode, tractions and pressure, and stress
//! recovery.
//!
//! Strain in Voigt form `[xx, yy, zz, xy, yz, xz]` with engineering shears. In 2D the third
//! direction is out of plane: `ε_zz = 0` in plane strain, condensed away in plane stress, and the
//! hoop strain `u_r / r` in axisymmetry (x is r, y the axis).
//! Residual `r_a = ∫ B_aᵀ σ dV − ∫ N_a b dV − ∫ N_a t̄ dA`, tangent `K_ab = ∫ B_aᵀ C B_b dV`.

use dilata_fem::dofs::DofMap;
use dilata_fem::values::{space_kind, FacetValues};
use dilata_fem::{
    CellInput, CellKernel, FacetInput, FacetKernel, FieldHandle, GeometryMode, InvertedCell,
    LocalOutput,
};
use dilata_material::elastic::{condense_plane_stress, Stiffness, Voigt};

use crate::cellcache::{gradient_product_degree, stiffness_degree, CellValuesCache};
use crate::poisson::facet_values;

/// The stiffness a kernel should use in a geometry mode (plane stress condensed).
pub fn mode_stiffness(c: &Stiffness, mode: GeometryMode) -> Stiffness {
    match mode {
        GeometryMode::PlaneStress => condense_plane_stress(c).0,
        _ => *c,
    }
}

/// Strain-displacement rows of one node: `b[k][j]` = d ε_k / d u_j.
#[inline]
pub fn node_b(mode: GeometryMode, grad: [f64; 3], value: f64, radius: f64) -> [[f64; 3]; 6] {
    let [gx, gy, gz] = grad;
    match mode {
        GeometryMode::ThreeD => [
            [gx, 0.0, 0.0],
            [0.0, gy, 0.0],
            [0.0, 0.0, gz],
            [gy, gx, 0.0],
            [0.0, gz, gy],
            [gz, 0.0, gx],
        ],
        GeometryMode::PlaneStrain | GeometryMode::PlaneStress => [
            [gx, 0.0, 0.0],
            [0.0, gy, 0.0],
            [0.0; 3],
            [gy, gx, 0.0],
            [0.0; 3],
            [0.0; 3],
        ],
        GeometryMode::Axisymmetric => [
            [gx, 0.0, 0.0],
            [0.0, gy, 0.0],
            [value / radius, 0.0, 0.0],
            [gy, gx, 0.0],
            [0.0; 3],
            [0.0; 3],
        ],
    }
}

/// Strain at a point from nodal displacements `u` (ncomp per node, interleaved).
pub fn strain_at(
    mode: GeometryMode,
    grads: &[[f64; 3]],
    values: &[f64],
    radius: f64,
    u: &[f64],
    ncomp: usize,
) -> Voigt {
    let mut e = Voigt::zeros();
    for a in 0..grads.len() {
        let b = node_b(mode, grads[a], values[a], radius);
        for k in 0..6 {
            for j in 0..ncomp {
                e[k] += b[k][j] * u[a * ncomp + j];
            }
        }
    }
    e
}

/// A body force density as a function of position.
pub type VectorFn<'a> = &'a (dyn Fn([f64; 3]) -> [f64; 3] + Sync);

/// Cell kernel of linear elasticity.
pub struct ElasticityKernel<'a> {
    pub dofs: &'a DofMap,
    pub field: FieldHandle,
    pub mode: GeometryMode,
    /// Stiffness for the mode (use [`mode_stiffness`]).
    pub stiffness: Stiffness,
    pub body_force: Option<VectorFn<'a>>,
    pub solution: &'a [f64],
}

/// Scratch of the elasticity kernel.
pub struct ElasticityScratch {
    cache: CellValuesCache,
    u_local: Vec<f64>,
    cb: Vec<[[f64; 3]; 6]>,
}

impl CellKernel for ElasticityKernel<'_> {
    type Scratch = ElasticityScratch;
    type Error = InvertedCell;

    fn build_scratch(&self) -> ElasticityScratch {
        let degree = if self.body_force.is_none() && self.mode != GeometryMode::Axisymmetric {
            gradient_product_degree
        } else {
            stiffness_degree
        };
        ElasticityScratch {
            cache: CellValuesCache::new(self.mode, degree, vec![self.dofs.spec(self.field).order]),
            u_local: Vec::with_capacity(81),
            cb: Vec::with_capacity(27),
        }
    }

    fn cell_into(
        &self,
        input: &CellInput<'_>,
        s: &mut ElasticityScratch,
        out: LocalOutput<'_>,
    ) -> Result<(), InvertedCell> {
        let cv = s.cache.get(input.kind);
        cv.reinit(input.id, input.coords)?;
        let nc = self.dofs.spec(self.field).n_components;
        let range = self.dofs.local_range(self.field, input.kind);
        let n_loc = input.dofs.len();
        let sv = &cv.spaces[0];
        let nn = sv.n_nodes();
        let c = &self.stiffness;
        let LocalOutput {
            mut matrix,
            mut vector,
        } = out;
        s.u_local.clear();
        s.u_local
            .extend(input.dofs[range.clone()].iter().map(|&d| self.solution[d]));
        for q in 0..cv.n_points() {
            let w = cv.jxw[q];
            let g = sv.grads(q);
            let nv = sv.values(q);
            let r = cv.points[q][0];
            if let Some(ke) = matrix.as_deref_mut() {
                // CB_b = C B_b for every node b.
                s.cb.clear();
                for b in 0..nn {
                    let bb = node_b(self.mode, g[b], nv[b], r);
                    let mut cb = [[0.0; 3]; 6];
                    for k in 0..6 {
                        for l in 0..6 {
                            let ckl = c[(k, l)];
                            if ckl != 0.0 {
                                for j in 0..nc {
                                    cb[k][j] += ckl * bb[l][j];
                                }
                            }
                        }
                    }
                    s.cb.push(cb);
                }
                for a in 0..nn {
                    let ba = node_b(self.mode, g[a], nv[a], r);
                    for i in 0..nc {
                        let row = (range.start + a * nc + i) * n_loc + range.start;
                        for b in 0..nn {
                            let cb = &s.cb[b];
                            for j in 0..nc {
                                let mut v = 0.0;
                                for k in 0..6 {
                                    v += ba[k][i] * cb[k][j];
                                }
                                ke[row + b * nc + j] += v * w;
                            }
                        }
                    }
                }
            }
            if let Some(fe) = vector.as_deref_mut() {
                let eps = strain_at(self.mode, g, nv, r, &s.u_local, nc);
                let sigma = c * eps;
                let body = self.body_force.map_or([0.0; 3], |f| f(cv.points[q]));
                for a in 0..nn {
                    let ba = node_b(self.mode, g[a], nv[a], r);
                    for i in 0..nc {
                        let mut v = 0.0;
                        for k in 0..6 {
                            v += ba[k][i] * sigma[k];
                        }
                        fe[range.start + a * nc + i] += (v - nv[a] * body[i]) * w;
                    }
                }
            }
        }
        Ok(())
    }
}

/// Surface load on boundary facets.
#[derive(Clone, Copy)]
pub enum SurfaceLoad<'a> {
    /// Traction vector (force per area) as a function of position.
    Traction(VectorFn<'a>),
    /// Pressure (positive pushes into the body: `t̄ = −p n`).
    Pressure(f64),
}

/// Boundary kernel for tractions and pressure (adds `−∫ N_a t̄ dA` to the residual).
pub struct SurfaceLoadKernel<'a> {
    pub dofs: &'a DofMap,
    pub field: FieldHandle,
    pub mode: GeometryMode,
    pub load: SurfaceLoad<'a>,
}

impl FacetKernel for SurfaceLoadKernel<'_> {
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
        let nc = self.dofs.spec(self.field).n_components;
        let order = self.dofs.spec(self.field).order;
        let fk = input.facet_kind;
        let fsk = space_kind(fk, order).unwrap_or(fk.linear());
        let fv = facet_values(cache, fk, self.mode, fsk);
        fv.reinit(input.facet_coords);
        let range = self.dofs.local_range(self.field, input.cell.kind);
        for q in 0..fv.n_points() {
            let t = match self.load {
                SurfaceLoad::Traction(f) => f(fv.points[q]),
                SurfaceLoad::Pressure(p) => {
                    let n = fv.normals[q];
                    [-p * n[0], -p * n[1], -p * n[2]]
                }
            };
            let nv = fv.spaces[0].values_at(q);
            for (i, &val) in nv.iter().enumerate() {
                let local = input.local_nodes[i];
                for j in 0..nc {
                    fe[range.start + local * nc + j] -= val * t[j] * fv.jxw[q];
                }
            }
        }
        Ok(())
    }
}
