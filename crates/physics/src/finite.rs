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
use nalgebra::{Matrix3, SVector};

use crate::coupled::{CoupledError, CoupledKernel, CoupledScratch, ScalarRows, ScalarTerms};
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
    let ranges = k.local_ranges(input.kind);
    k.gather(input, &ranges, s);
    let [ru, rc, rm] = ranges;
    let CoupledScratch { cache, local, .. } = s;
    let cv = cache.get(input.kind);
    cv.reinit(input.id, input.coords)?;
    let nc = k.dofs.spec(k.fields.u).n_components;
    let n_loc = input.dofs.len();
    let (su, sc, sm) = (&cv.spaces[0], &cv.spaces[1], &cv.spaces[2]);
    let (nu, ncn, nmn) = (su.n_nodes(), sc.n_nodes(), sm.n_nodes());
    let LocalOutput {
        mut matrix,
        mut vector,
    } = out;
    let law = k.laws.finite_law(input.id);
    let has_gradient = law.has_gradient();
    let mut dfs = std::mem::take(&mut local.df);
    for q in 0..cv.n_points() {
        let w = cv.jxw[q];
        let r = cv.points[q][0];
        let (gu, vu) = (su.grads(q), su.values(q));
        let vc = sc.values(q);
        let vm = sm.values(q);
        let f = deformation_gradient(k.mode, gu, vu, r, &local.u, nc, false);
        let at_q = local.scalars_at(sc, sm, q, has_gradient);
        let p = law
            .evaluate(&FiniteInput {
                f,
                c: at_q.c,
                mu: at_q.mu,
                grad_mu: at_q.grad_mu,
                grad_c: at_q.grad_c,
            })
            .map_err(|source| CoupledError::Range {
                cell: input.id,
                point: q,
                source,
            })?;
        dfs.clear();
        dfs.extend((0..nu).map(|a| node_df(k.mode, gu[a], vu[a], r)));
        let p_flat = SVector::<f64, 9>::from_row_slice(p.stress.transpose().as_slice());
        let rows = ScalarRows {
            vc,
            gc: sc.grads(q),
            gm: sm.grads(q),
            w,
            rc: rc.clone(),
            rm: rm.clone(),
            n_loc,
            a0: k.rate.a0,
        };
        let terms = ScalarTerms {
            flux: p.flux,
            dflux_dc: p.dflux_dc,
            dflux_dgrad_mu: p.dflux_dgrad_mu,
            kappa_grad_c: p.kappa_grad_c,
            kappa: p.kappa,
        };
        if let Some(fe) = vector.as_deref_mut() {
            let body = k.body_force.map_or([0.0; 3], |bf| bf(cv.points[q]));
            for a in 0..nu {
                for i in 0..nc {
                    let v = p_flat.dot(&dfs[a][i]);
                    fe[ru.start + a * nc + i] += (v - vu[a] * body[i]) * w;
                }
            }
            let src = k.source.map_or(0.0, |sf| sf(cv.points[q]));
            rows.residual(fe, &terms, at_q.c_dot, src);
            let g = k.potential_source.map_or(0.0, |gf| gf(cv.points[q]));
            for a in 0..nmn {
                fe[rm.start + a] += vm[a] * (p.potential - g) * w;
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
            // Mass rows by c and μ, and the gradient part of the potential rows.
            rows.tangent(ke, &terms, has_gradient);
            // Mass rows by u: −∇N_a · ∂J₀/∂F : δF_b.
            let gc = sc.grads(q);
            for a in 0..ncn {
                let row = rc.start + a;
                let g = gc[a];
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
                if p.dpotential_dmu != 0.0 {
                    for b in 0..nmn {
                        ke[at(row, rm.start + b)] += vm[a] * p.dpotential_dmu * vm[b] * w;
                    }
                }
            }
        }
    }
    local.df = dfs;
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
    /// Facet values per facet kind, and the current positions of one facet's nodes.
    type Scratch = (Vec<FacetValues>, Vec<[f64; 3]>);
    type Error = std::convert::Infallible;

    fn build_scratch(&self) -> Self::Scratch {
        (Vec::new(), Vec::new())
    }

    fn facet_into(
        &self,
        input: &FacetInput<'_>,
        (cache, x): &mut Self::Scratch,
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
        x.clear();
        x.extend((0..nf).map(|b| {
            let mut p = input.facet_coords[b];
            let local = input.local_nodes[b];
            for (j, pj) in p.iter_mut().enumerate().take(nc) {
                *pj += self.solution[input.cell.dofs[range.start + local * nc + j]];
            }
            p
        }));
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
