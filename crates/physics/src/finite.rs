//! The coupled kernel in total-Lagrangian finite strain (docs/theory.md, "Finite strain"): the
//! same three fields and equations as [`crate::coupled`], written on the reference body,
//!
//! * momentum:  `R_u,(a,i) = ∫ P : δF_(a,i) dV₀`, `δF_(a,i)` the variation of `F` by a unit
//!   displacement of node `a` in direction `i`;
//! * mass:      `R_c,a = ∫ N_a (ċ − s) dV₀ − ∫ ∇₀N_a · J₀ dV₀`;
//! * potential: `R_μ,a = ∫ N_a π(F, c, μ) dV₀ − ∫ ∇₀N_a · κ ∇₀c dV₀`, with `π = μ − μ_local` for a
//!   host and `π = RT Ω (c_J(F) − c)` (the gel's incompressibility) for a gel,
//!
//! with `P`, `J₀`, `π` and every derivative from `dilata_material::finite`. The deformation
//! gradient of each geometry mode: in plane strain `F_zz = 1`; in axisymmetry (x is r, y the axis)
//! `F_θθ = 1 + u_r/R`, which the variation carries as `δF_θθ = N_a/R` for the radial direction.
//! Plane stress is not offered in finite strain. A quadrature point with `det F ≤ 0` (or outside
//! a law's range) is a recoverable error naming the cell and point: the step is cut.
//!
//! Boundary loads: a traction is a nominal (dead) load per reference area, as in small strain;
//! a pressure follows the deformed surface ([`FollowerPressureKernel`]).

use dilata_fem::dofs::DofMap;
use dilata_fem::values::{space_kind, FacetValues};
use dilata_fem::{CellInput, FacetInput, FacetKernel, FieldHandle, GeometryMode, LocalOutput};
use dilata_material::finite::{flat, FiniteInput};
use nalgebra::{Matrix3, SVector, Vector3};

use crate::coupled::{CoupledError, CoupledKernel, CoupledScratch};
use crate::poisson::facet_values;

/// `δF` of a unit displacement of one node in each direction (flattened by `flat`).
pub fn node_df(
    mode: GeometryMode,
    grad: [f64; 3],
    value: f64,
    radius: f64,
) -> [SVector<f64, 9>; 3] {
    let mut out = [SVector::<f64, 9>::zeros(); 3];
    let dim = match mode {
        GeometryMode::ThreeD => 3,
        _ => 2,
    };
    for (i, di) in out.iter_mut().enumerate().take(dim) {
        for k in 0..dim {
            di[flat(i, k)] = grad[k];
        }
    }
    if mode == GeometryMode::Axisymmetric {
        out[0][flat(2, 2)] = value / radius;
    }
    out
}

/// Deformation gradient `F = I + ∇₀u` at a point from nodal displacements `u` (`nc` per node,
/// interleaved). In axisymmetry `F_θθ = 1 + u_r/R` at radius `radius`; `axis_limit` replaces it
/// by its limit `1 + ∂u_r/∂R` (for nodes on the axis).
pub fn deformation_gradient(
    mode: GeometryMode,
    grads: &[[f64; 3]],
    values: &[f64],
    radius: f64,
    u: &[f64],
    nc: usize,
    axis_limit: bool,
) -> Matrix3<f64> {
    let mut f = Matrix3::identity();
    let dim = nc.min(3);
    for a in 0..grads.len() {
        for i in 0..dim {
            let ua = u[a * nc + i];
            for k in 0..dim {
                f[(i, k)] += ua * grads[a][k];
            }
        }
    }
    if mode == GeometryMode::Axisymmetric {
        if axis_limit {
            f[(2, 2)] = f[(0, 0)];
        } else {
            let ur: f64 = (0..values.len()).map(|a| values[a] * u[a * nc]).sum();
            f[(2, 2)] = 1.0 + ur / radius;
        }
    }
    f
}

/// The cell kernel of a finite-strain law map (called by `CoupledKernel::cell_into`).
pub(crate) fn finite_cell_into(
    k: &CoupledKernel<'_>,
    input: &CellInput<'_>,
    s: &mut CoupledScratch,
    out: LocalOutput<'_>,
) -> Result<(), CoupledError> {
    k.gather(input, s);
    let cv = s.cache.get(input.kind);
    cv.reinit(input.id, input.coords)?;
    let nc = k.dofs.spec(k.fields.u).n_components;
    let ru = k.dofs.local_range(k.fields.u, input.kind);
    let rc = k.dofs.local_range(k.fields.c, input.kind);
    let rm = k.dofs.local_range(k.fields.mu, input.kind);
    let n_loc = input.dofs.len();
    let (su, sc, sm) = (&cv.spaces[0], &cv.spaces[1], &cv.spaces[2]);
    let (nu, ncn, nmn) = (su.n_nodes(), sc.n_nodes(), sm.n_nodes());
    let LocalOutput {
        mut matrix,
        mut vector,
    } = out;
    let law = k.laws.finite_law(input.id);
    let has_gradient = law.has_gradient();
    let mut dfs: Vec<[SVector<f64, 9>; 3]> = Vec::with_capacity(nu);
    for q in 0..cv.n_points() {
        let w = cv.jxw[q];
        let r = cv.points[q][0];
        let (gu, vu) = (su.grads(q), su.values(q));
        let (gc, vc) = (sc.grads(q), sc.values(q));
        let (gm, vm) = (sm.grads(q), sm.values(q));
        let f = deformation_gradient(k.mode, gu, vu, r, &s.u, nc, false);
        let c: f64 = (0..ncn).map(|a| vc[a] * s.c[a]).sum();
        let c_dot: f64 = (0..ncn).map(|a| vc[a] * s.c_rate[a]).sum();
        let mu: f64 = (0..nmn).map(|a| vm[a] * s.mu[a]).sum();
        let mut grad_mu = Vector3::zeros();
        for a in 0..nmn {
            for d in 0..3 {
                grad_mu[d] += gm[a][d] * s.mu[a];
            }
        }
        let mut grad_c = Vector3::zeros();
        if has_gradient {
            for a in 0..ncn {
                for d in 0..3 {
                    grad_c[d] += gc[a][d] * s.c[a];
                }
            }
        }
        let p = law
            .evaluate(&FiniteInput {
                f,
                c,
                mu,
                grad_mu,
                grad_c,
            })
            .map_err(|source| CoupledError::Range {
                cell: input.id,
                point: q,
                source,
            })?;
        dfs.clear();
        dfs.extend((0..nu).map(|a| node_df(k.mode, gu[a], vu[a], r)));
        let p_flat = SVector::<f64, 9>::from_row_slice(p.stress.transpose().as_slice());
        if let Some(fe) = vector.as_deref_mut() {
            let body = k.body_force.map_or([0.0; 3], |bf| bf(cv.points[q]));
            for a in 0..nu {
                for i in 0..nc {
                    let v = p_flat.dot(&dfs[a][i]);
                    fe[ru.start + a * nc + i] += (v - vu[a] * body[i]) * w;
                }
            }
            let src = k.source.map_or(0.0, |sf| sf(cv.points[q]));
            for a in 0..ncn {
                let gj = gc[a][0] * p.flux[0] + gc[a][1] * p.flux[1] + gc[a][2] * p.flux[2];
                fe[rc.start + a] += (vc[a] * (c_dot - src) - gj) * w;
            }
            let g = k.potential_source.map_or(0.0, |gf| gf(cv.points[q]));
            let kg = p.kappa_grad_c;
            for a in 0..nmn {
                let gk = gm[a][0] * kg[0] + gm[a][1] * kg[1] + gm[a][2] * kg[2];
                fe[rm.start + a] += (vm[a] * (p.potential - g) - gk) * w;
            }
        }
        if let Some(ke) = matrix.as_deref_mut() {
            let at = |row: usize, col: usize| row * n_loc + col;
            let flat_of =
                |m: &Matrix3<f64>| SVector::<f64, 9>::from_row_slice(m.transpose().as_slice());
            let dp_dc = flat_of(&p.dstress_dc);
            let dp_dmu = flat_of(&p.dstress_dmu);
            let dpot_df = flat_of(&p.dpotential_df);
            let dflux_df = [
                flat_of(&p.dflux_df[0]),
                flat_of(&p.dflux_df[1]),
                flat_of(&p.dflux_df[2]),
            ];
            // Momentum rows.
            for a in 0..nu {
                for i in 0..nc {
                    let row = ru.start + a * nc + i;
                    let da = dfs[a][i];
                    let a_da = p.dstress_df.tr_mul(&da); // (δF_a : A) as a row, transposed
                    for b in 0..nu {
                        for j in 0..nc {
                            ke[at(row, ru.start + b * nc + j)] += a_da.dot(&dfs[b][j]) * w;
                        }
                    }
                    let vdc = da.dot(&dp_dc);
                    for b in 0..ncn {
                        ke[at(row, rc.start + b)] += vdc * vc[b] * w;
                    }
                    let vdm = da.dot(&dp_dmu);
                    if vdm != 0.0 {
                        for b in 0..nmn {
                            ke[at(row, rm.start + b)] += vdm * vm[b] * w;
                        }
                    }
                }
            }
            // Mass rows.
            for a in 0..ncn {
                let row = rc.start + a;
                let g = Vector3::new(gc[a][0], gc[a][1], gc[a][2]);
                let gdj_dc = g.dot(&p.dflux_dc);
                for b in 0..ncn {
                    ke[at(row, rc.start + b)] += (vc[a] * k.rate.a0 * vc[b] - gdj_dc * vc[b]) * w;
                }
                let gm_t = p.dflux_dgrad_mu.transpose() * g;
                for b in 0..nmn {
                    let v = -(gm_t[0] * gm[b][0] + gm_t[1] * gm[b][1] + gm_t[2] * gm[b][2]);
                    ke[at(row, rm.start + b)] += v * w;
                }
                // −∇N_a · ∂J₀/∂F : δF_b
                let g_df = dflux_df[0] * g[0] + dflux_df[1] * g[1] + dflux_df[2] * g[2];
                for b in 0..nu {
                    for j in 0..nc {
                        ke[at(row, ru.start + b * nc + j)] -= g_df.dot(&dfs[b][j]) * w;
                    }
                }
            }
            // Potential rows.
            for a in 0..nmn {
                let row = rm.start + a;
                for b in 0..nu {
                    for j in 0..nc {
                        ke[at(row, ru.start + b * nc + j)] += vm[a] * dpot_df.dot(&dfs[b][j]) * w;
                    }
                }
                for b in 0..ncn {
                    ke[at(row, rc.start + b)] += vm[a] * p.dpotential_dc * vc[b] * w;
                }
                if has_gradient {
                    let g = Vector3::new(gm[a][0], gm[a][1], gm[a][2]);
                    let gk = p.kappa.transpose() * g;
                    for b in 0..ncn {
                        let v = gk[0] * gc[b][0] + gk[1] * gc[b][1] + gk[2] * gc[b][2];
                        ke[at(row, rc.start + b)] -= v * w;
                    }
                }
                if p.dpotential_dmu != 0.0 {
                    for b in 0..nmn {
                        ke[at(row, rm.start + b)] += vm[a] * p.dpotential_dmu * vm[b] * w;
                    }
                }
            }
        }
    }
    Ok(())
}

/// Boundary kernel of a pressure `p` (positive into the body) that follows the deformed surface:
/// the residual of the displacement rows gains `∫ p N_a n da` over the current facet, with the
/// current area vector `n da` from the displaced facet nodes (2D: the rotated tangent
/// `(t_y, −t_x) dξ`, times `2π r` of the current radius in axisymmetry; 3D: `t₁ × t₂ dξ₁ dξ₂`),
/// and its tangent by the facet displacements (a non-symmetric load stiffness).
pub struct FollowerPressureKernel<'a> {
    pub dofs: &'a DofMap,
    pub field: FieldHandle,
    pub mode: GeometryMode,
    pub pressure: f64,
    pub solution: &'a [f64],
}

impl FacetKernel for FollowerPressureKernel<'_> {
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
        let nc = self.dofs.spec(self.field).n_components;
        let order = self.dofs.spec(self.field).order;
        let fk = input.facet_kind;
        let fsk = space_kind(fk, order).unwrap_or(fk.linear());
        let fv = facet_values(cache, fk, self.mode, fsk);
        let range = self.dofs.local_range(self.field, input.cell.kind);
        let n_loc = input.cell.dofs.len();
        let table = &fv.spaces[0];
        let nf = table.n_nodes;
        // Current positions of the facet's space nodes (vertex-first: a linear space on a
        // quadratic facet uses its first nodes).
        let x: Vec<[f64; 3]> = (0..nf)
            .map(|b| {
                let mut p = input.facet_coords[b];
                let local = input.local_nodes[b];
                for (j, pj) in p.iter_mut().enumerate().take(nc) {
                    *pj += self.solution[input.cell.dofs[range.start + local * nc + j]];
                }
                p
            })
            .collect();
        let fdim = fk.dim();
        let LocalOutput {
            mut matrix,
            mut vector,
        } = out;
        let p = self.pressure;
        let axi = self.mode == GeometryMode::Axisymmetric;
        for q in 0..fv.n_points() {
            let w = fv.rule.weights[q];
            let nv = table.values_at(q);
            let dn = table.grads_at(q);
            let mut t = [[0.0; 3]; 2];
            let mut pos = [0.0; 3];
            for b in 0..nf {
                for i in 0..3 {
                    pos[i] += nv[b] * x[b][i];
                    for (j, tj) in t.iter_mut().enumerate().take(fdim) {
                        tj[i] += x[b][i] * dn[b][j];
                    }
                }
            }
            let geo = FacetPoint {
                axi,
                fdim,
                t,
                radius: pos[0],
                values: nv,
                grads: dn,
            };
            let area = geo.area();
            for a in 0..nf {
                let row0 = range.start + input.local_nodes[a] * nc;
                if let Some(fe) = vector.as_deref_mut() {
                    for i in 0..nc {
                        fe[row0 + i] += p * nv[a] * area[i] * w;
                    }
                }
                if let Some(ke) = matrix.as_deref_mut() {
                    for b in 0..nf {
                        let col0 = range.start + input.local_nodes[b] * nc;
                        for j in 0..nc {
                            let d = geo.d_area(b, j);
                            for i in 0..nc {
                                ke[(row0 + i) * n_loc + col0 + j] += p * nv[a] * d[i] * w;
                            }
                        }
                    }
                }
            }
        }
        Ok(())
    }
}

/// The current geometry of a facet at one quadrature point.
struct FacetPoint<'a> {
    axi: bool,
    fdim: usize,
    /// Current tangents `∂x/∂ξ`.
    t: [[f64; 3]; 2],
    /// Current radius (axisymmetry).
    radius: f64,
    values: &'a [f64],
    grads: &'a [[f64; 3]],
}

impl FacetPoint<'_> {
    /// `2π r` in axisymmetry, else 1.
    fn ring(&self) -> f64 {
        if self.axi {
            2.0 * std::f64::consts::PI * self.radius
        } else {
            1.0
        }
    }

    /// Current area vector per unit reference parameter area.
    fn area(&self) -> [f64; 3] {
        let t = &self.t;
        if self.fdim == 1 {
            let s = self.ring();
            [t[0][1] * s, -t[0][0] * s, 0.0]
        } else {
            cross(t[0], t[1])
        }
    }

    /// Derivative of [`Self::area`] by the displacement of facet node `b` in direction `j`.
    fn d_area(&self, b: usize, j: usize) -> [f64; 3] {
        let t = &self.t;
        if self.fdim == 1 {
            let g = self.grads[b][0] * self.ring();
            let mut d = if j == 0 {
                [0.0, -g, 0.0]
            } else {
                [g, 0.0, 0.0]
            };
            // The current radius moves with the radial displacement.
            if self.axi && j == 0 {
                let dr = 2.0 * std::f64::consts::PI * self.values[b];
                d[0] += t[0][1] * dr;
                d[1] -= t[0][0] * dr;
            }
            d
        } else {
            let mut e1 = [0.0; 3];
            let mut e2 = [0.0; 3];
            e1[j] = self.grads[b][0];
            e2[j] = self.grads[b][1];
            let (u, v) = (cross(e1, t[1]), cross(t[0], e2));
            [u[0] + v[0], u[1] + v[1], u[2] + v[2]]
        }
    }
}

fn cross(a: [f64; 3], b: [f64; 3]) -> [f64; 3] {
    [
        a[1] * b[2] - a[2] * b[1],
        a[2] * b[0] - a[0] * b[2],
        a[0] * b[1] - a[1] * b[0],
    ]
}
