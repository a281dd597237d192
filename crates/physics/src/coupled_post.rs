//! Derived quantities of the coupled deformation–diffusion problem, for output and histories:
//! nodal stress and flux, nodal stress invariants, volume integrals (volume, amount of species,
//! elastic and chemical energy) and area-weighted means over boundary facets.
//!
//! Everything is evaluated with the coupled point law of each cell ([`LawMap`]), exactly as the
//! coupled kernel does: the strain of the geometry mode (`ε_zz = 0` in plane strain and plane
//! stress, where a plane-stress law carries the condensed stiffness and returns `σ_zz = 0`; hoop
//! strain `u_r / r` in axisymmetry), the interpolated concentration and the gradient of the
//! potential field. The swelling eigenstrain therefore enters the stress.
//!
//! ```no_run
//! # use dilata_mesh::Mesh;
//! # use dilata_fem::{dofs::DofMap, GeometryMode};
//! # use dilata_physics::coupled::{CoupledFields, LawMap};
//! use dilata_physics::coupled_post::{
//!     build_nodal_invariants, coupled_integrals, recover_coupled_nodal, CoupledPost,
//! };
//! # fn demo(mesh: &Mesh, dofs: &DofMap, fields: CoupledFields, laws: &LawMap, x: &[f64])
//! # -> Result<(), Box<dyn std::error::Error>> {
//! let post = CoupledPost { dofs, fields, mode: GeometryMode::ThreeD, laws, solution: x };
//! let nodal = recover_coupled_nodal(mesh, &post)?;
//! let invariants = build_nodal_invariants(&nodal.stress);
//! let totals = coupled_integrals(mesh, &post)?;
//! println!("{} {}", invariants.von_mises[0], totals.amount);
//! # Ok(()) }
//! ```

use dilata_fem::assembly::Assembler;
use dilata_fem::dofs::DofMap;
use dilata_fem::values::space_kind;
use dilata_fem::{CellValues, FieldHandle, GeometryMode};
use dilata_material::coupled::{PointInput, PointOutput};
use dilata_material::elastic::{hydrostatic, max_principal, von_mises, Voigt};
use dilata_mesh::{Facet, Mesh};
use nalgebra::{Matrix3, Vector3};

use crate::cellcache::{stiffness_degree, CellValuesCache};
use crate::coupled::{CoupledError, CoupledFields, LawMap};
use crate::elasticity::strain_at;
use crate::finite::deformation_gradient;
use crate::poisson::facet_values;
use crate::recovery::{cell_size, nodal_strain, nodal_values};
use dilata_material::finite::{
    cauchy_voigt, principal_stretches, FiniteInput, FiniteLaw, FiniteOutput,
};

/// The state of a coupled problem to post-process.
#[derive(Clone, Copy, Debug)]
pub struct CoupledPost<'a> {
    /// DOF map holding the three fields.
    pub dofs: &'a DofMap,
    /// Handles of `u`, `c` and `μ` in `dofs`.
    pub fields: CoupledFields,
    /// Geometry mode of the problem.
    pub mode: GeometryMode,
    /// Point law of every cell (the one the problem was solved with).
    pub laws: &'a LawMap,
    /// Global solution vector.
    pub solution: &'a [f64],
}

/// Nodal values of the coupled problem, one entry per mesh node.
#[derive(Clone, Debug, PartialEq)]
pub struct CoupledNodal {
    /// Cauchy stress in Pa (Voigt `[xx, yy, zz, xy, yz, xz]`).
    pub stress: Vec<Voigt>,
    /// Species flux `J = −M grad μ` in mol/(m² s) (in finite strain the nominal flux, per
    /// reference area).
    pub flux: Vec<[f64; 3]>,
    /// Finite-strain quantities (`None` for a small-strain law map).
    pub finite: Option<FiniteNodal>,
}

/// Nodal values that only finite strain has, one entry per mesh node.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct FiniteNodal {
    /// Nominal (first Piola–Kirchhoff) stress in Pa, rows `[xx, xy, xz, yx, yy, yz, zx, zy, zz]`.
    pub nominal_stress: Vec<[f64; 9]>,
    /// Deformation gradient `F` from the reference state, rows `[xx, xy, xz, yx, …, zz]`.
    pub deformation_gradient: Vec<[f64; 9]>,
    /// Principal stretches relative to the reference state, largest first.
    pub stretches: Vec<[f64; 3]>,
    /// Volume ratio to the stress-free, species-free state (`FiniteOutput::swelling_ratio`).
    pub swelling_ratio: Vec<f64>,
}

/// Scalar invariants of nodal stresses, one entry per node.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct NodalInvariants {
    /// Hydrostatic stress `tr σ / 3` in Pa.
    pub hydrostatic: Vec<f64>,
    /// von Mises equivalent stress in Pa.
    pub von_mises: Vec<f64>,
    /// Largest principal stress in Pa.
    pub max_principal: Vec<f64>,
}

/// Volume integrals of the coupled state (with the `2πr` weight in axisymmetry, so they are
/// totals over the body of revolution; per unit thickness in plane strain and plane stress).
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct CoupledIntegrals {
    /// `∫ dV` in m³.
    pub volume: f64,
    /// Amount of species `∫ c dV` in mol.
    pub amount: f64,
    /// Elastic energy `∫ ½(ε − ε_c):C:(ε − ε_c) dV` in J.
    pub elastic_energy: f64,
    /// Chemical free energy `∫ ψ_chem(c) dV` in J.
    pub chemical_energy: f64,
    /// Gradient energy `∫ ½ grad c · κ grad c dV` in J.
    pub gradient_energy: f64,
    /// `∫ |grad c| dV` in mol/m (per unit thickness in 2D: mol/m²): across a diffuse interface
    /// it integrates to the jump of c times the interface area, so divided by the jump it
    /// measures the interface area (length in 2D).
    pub gradient_norm: f64,
    /// Volume where `c` exceeds its mean `amount / volume` (quadrature points counted), in m³.
    pub volume_above_mean: f64,
    /// Deformed volume `∫ det F dV₀` in m³ (finite strain; equal to `volume` in small strain).
    pub deformed_volume: f64,
}

/// Nodal stress and flux by the projection of [`crate::recovery`]: every cell evaluates the
/// coupled point law at its own nodes (strain from its displacement gradients, concentration and
/// potential gradient interpolated in the cell), and a node's value is the unweighted mean over
/// the cells sharing it. On the axis of an axisymmetric model the hoop strain takes its limit
/// `∂u_r/∂r`. Nodes in no cell get zeros.
///
/// Errors: an inverted cell, or a concentration outside the range of the law at a cell node
/// ([`CoupledError::Range`], whose `point` is then the local node index).
pub fn recover_coupled_nodal(
    mesh: &Mesh,
    post: &CoupledPost<'_>,
) -> Result<CoupledNodal, CoupledError> {
    recover_coupled_nodal_on(mesh, post, PostThreads::Calling)
}

/// [`recover_coupled_nodal`] with its cell loop on `threads`: the same bits for any choice (the
/// cell-node values are added to their nodes in cell order either way).
pub fn recover_coupled_nodal_on(
    mesh: &Mesh,
    post: &CoupledPost<'_>,
    threads: PostThreads<'_>,
) -> Result<CoupledNodal, CoupledError> {
    let n = mesh.n_points();
    let mut stress = vec![Voigt::zeros(); n];
    let mut flux = vec![[0.0; 3]; n];
    let mut count = vec![0u32; n];
    let mut finite = post.laws.is_finite().then(|| FiniteNodal {
        nominal_stress: vec![[0.0; 9]; n],
        deformation_gradient: vec![[0.0; 9]; n],
        stretches: vec![[0.0; 3]; n],
        swelling_ratio: vec![0.0; n],
    });
    let chunks = threads.map_cells(mesh.n_cells(), |cells| node_terms(mesh, post, cells));
    for chunk in chunks {
        let (terms, finite_terms) = chunk?;
        for (k, t) in terms.iter().enumerate() {
            stress[t.node] += t.stress;
            for d in 0..3 {
                flux[t.node][d] += t.flux[d];
            }
            if let Some(fin) = finite.as_mut() {
                let ft = &finite_terms[k];
                for i in 0..9 {
                    fin.nominal_stress[t.node][i] += ft.nominal_stress[i];
                    fin.deformation_gradient[t.node][i] += ft.deformation_gradient[i];
                }
                for d in 0..3 {
                    fin.stretches[t.node][d] += ft.stretches[d];
                }
                fin.swelling_ratio[t.node] += ft.swelling_ratio;
            }
            count[t.node] += 1;
        }
    }
    for ((s, f), &k) in stress.iter_mut().zip(&mut flux).zip(&count) {
        if k > 0 {
            let inv = 1.0 / k as f64;
            *s *= inv;
            for v in f.iter_mut() {
                *v *= inv;
            }
        }
    }
    if let Some(fin) = finite.as_mut() {
        for (node, &k) in count.iter().enumerate() {
            if k > 0 {
                let inv = 1.0 / k as f64;
                fin.nominal_stress[node].iter_mut().for_each(|v| *v *= inv);
                fin.deformation_gradient[node]
                    .iter_mut()
                    .for_each(|v| *v *= inv);
                fin.stretches[node].iter_mut().for_each(|v| *v *= inv);
                fin.swelling_ratio[node] *= inv;
            }
        }
    }
    for (node, master) in post.dofs.links().pairs() {
        stress[node] = stress[master];
        flux[node] = flux[master];
        if let Some(fin) = finite.as_mut() {
            fin.nominal_stress[node] = fin.nominal_stress[master];
            fin.deformation_gradient[node] = fin.deformation_gradient[master];
            fin.stretches[node] = fin.stretches[master];
            fin.swelling_ratio[node] = fin.swelling_ratio[master];
        }
    }
    Ok(CoupledNodal {
        stress,
        flux,
        finite,
    })
}

/// The value one cell gives one of its nodes in the nodal recovery.
struct NodeTerms {
    /// The node (its periodic master).
    node: usize,
    stress: Voigt,
    flux: [f64; 3],
}

/// The finite-strain values one cell gives one of its nodes (row for row with [`NodeTerms`]).
struct FiniteNodeTerms {
    nominal_stress: [f64; 9],
    deformation_gradient: [f64; 9],
    stretches: [f64; 3],
    swelling_ratio: f64,
}

/// The cell-node values of the nodal recovery over `cells`, in cell and node order (the
/// finite-strain ones empty for a small-strain law map).
fn node_terms(
    mesh: &Mesh,
    post: &CoupledPost<'_>,
    cells: std::ops::Range<usize>,
) -> Result<(Vec<NodeTerms>, Vec<FiniteNodeTerms>), CoupledError> {
    let orders = field_orders(post);
    let nc = post.dofs.spec(post.fields.u).n_components;
    let mut cache: Vec<CellValues> = Vec::new();
    let mut local = LocalFields::default();
    let mut coords = Vec::new();
    let mut terms = Vec::new();
    let mut finite_terms = Vec::new();
    for id in cells {
        let (kind, nodes) = mesh.cell(id);
        let pos = match cache.iter().position(|c| c.kind == kind) {
            Some(p) => p,
            None => {
                cache.push(nodal_values(kind, post.mode, &orders));
                cache.len() - 1
            }
        };
        let cv = &mut cache[pos];
        coords.clear();
        coords.extend(nodes.iter().map(|&p| mesh.points[p]));
        cv.reinit(id, &coords)?;
        local.gather(post, id, kind);
        let size = cell_size(&coords);
        if post.laws.is_finite() {
            let law = post.laws.finite_law(id);
            for (q, &node) in nodes.iter().enumerate() {
                let r = cv.points[q][0];
                let axis = post.mode == GeometryMode::Axisymmetric && r.abs() < 1e-12 * size;
                let FinitePoint { f, out, .. } =
                    local.finite_at(law, post.mode, cv, (id, q), nc, axis)?;
                let mut ft = FiniteNodeTerms {
                    nominal_stress: [0.0; 9],
                    deformation_gradient: [0.0; 9],
                    stretches: principal_stretches(&f),
                    swelling_ratio: out.swelling_ratio,
                };
                for i in 0..3 {
                    for k in 0..3 {
                        ft.nominal_stress[3 * i + k] = out.stress[(i, k)];
                        ft.deformation_gradient[3 * i + k] = f[(i, k)];
                    }
                }
                terms.push(NodeTerms {
                    node: post.dofs.master_node(node),
                    stress: cauchy_voigt(&out.stress, &f),
                    flux: [out.flux[0], out.flux[1], out.flux[2]],
                });
                finite_terms.push(ft);
            }
            continue;
        }
        let law = post.laws.law(id);
        for (q, &node) in nodes.iter().enumerate() {
            let strain = nodal_strain(
                post.mode,
                &cv.spaces[0],
                q,
                cv.points[q][0],
                size,
                &local.u,
                nc,
            );
            let (c, grad_mu, grad_c) = local.scalars_at(cv, q);
            let out = law
                .evaluate(&PointInput {
                    strain,
                    c,
                    grad_mu,
                    grad_c,
                })
                .map_err(|source| CoupledError::Range {
                    cell: id,
                    point: q,
                    source,
                })?;
            // Periodic links: a linked node and its master are one node, averaged together.
            terms.push(NodeTerms {
                node: post.dofs.master_node(node),
                stress: out.stress,
                flux: [out.flux[0], out.flux[1], out.flux[2]],
            });
        }
    }
    Ok((terms, finite_terms))
}

/// Hydrostatic, von Mises and largest principal stress of every entry of `stress`.
pub fn build_nodal_invariants(stress: &[Voigt]) -> NodalInvariants {
    NodalInvariants {
        hydrostatic: stress.iter().map(hydrostatic).collect(),
        von_mises: stress.iter().map(von_mises).collect(),
        max_principal: stress.iter().map(max_principal).collect(),
    }
}

/// Where the cell loops of [`coupled_integrals_on`] and [`recover_coupled_nodal_on`] run.
#[derive(Clone, Copy)]
pub enum PostThreads<'a> {
    /// On the calling thread.
    Calling,
    /// On the threads of an assembler ([`Assembler::map_chunks`]), in chunks of
    /// [`POST_CHUNK_CELLS`] cells whose results are combined in cell order: the same bits as
    /// [`PostThreads::Calling`].
    Assembler(&'a Assembler),
}

/// Cells per chunk of a threaded post-processing loop ([`PostThreads::Assembler`]).
pub const POST_CHUNK_CELLS: usize = 256;

impl PostThreads<'_> {
    /// `f` over chunks of the cells `0..n`, results in cell order.
    fn map_cells<T: Send>(
        self,
        n: usize,
        f: impl Fn(std::ops::Range<usize>) -> T + Sync + Send,
    ) -> Vec<T> {
        match self {
            PostThreads::Calling => vec![f(0..n)],
            PostThreads::Assembler(a) => a.map_chunks(n, POST_CHUNK_CELLS, f),
        }
    }
}

/// Volume, amount of species, elastic, chemical and gradient energy, `∫|grad c|` and the volume
/// above the mean concentration, integrated with the quadrature of the
/// coupled kernel ([`stiffness_degree`], weight `2πr` in axisymmetry), so that the amount agrees
/// to round-off with the discrete mass balance of the solver.
///
/// Errors: an inverted cell, or a concentration outside the range of the law at a quadrature
/// point.
pub fn coupled_integrals(
    mesh: &Mesh,
    post: &CoupledPost<'_>,
) -> Result<CoupledIntegrals, CoupledError> {
    coupled_integrals_on(mesh, post, PostThreads::Calling)
}

/// [`coupled_integrals`] with its cell loop on `threads`: the same bits for any choice (the
/// point contributions are summed in cell and point order either way).
pub fn coupled_integrals_on(
    mesh: &Mesh,
    post: &CoupledPost<'_>,
    threads: PostThreads<'_>,
) -> Result<CoupledIntegrals, CoupledError> {
    let chunks = threads.map_cells(mesh.n_cells(), |cells| point_terms(mesh, post, cells));
    let mut sums = CoupledIntegrals::default();
    // Concentration and weight of every quadrature point, for the volume above the mean.
    let mut point_c: Vec<(f64, f64)> = Vec::new();
    for chunk in chunks {
        for t in chunk? {
            sums.volume += t.w;
            sums.deformed_volume += t.deformed_volume;
            sums.amount += t.c * t.w;
            sums.elastic_energy += t.elastic_energy;
            sums.chemical_energy += t.chemical_energy;
            sums.gradient_energy += t.gradient_energy;
            sums.gradient_norm += t.gradient_norm;
            point_c.push((t.c, t.w));
        }
    }
    // The volume where c exceeds its mean, from the point values kept above.
    let mean = if sums.volume > 0.0 {
        sums.amount / sums.volume
    } else {
        0.0
    };
    sums.volume_above_mean = point_c
        .iter()
        .filter(|(c, _)| *c > mean)
        .fold(0.0, |sum, (_, w)| sum + w);
    Ok(sums)
}

/// What one quadrature point adds to the integrals (products with its weight `w` taken).
struct PointTerms {
    w: f64,
    c: f64,
    deformed_volume: f64,
    elastic_energy: f64,
    chemical_energy: f64,
    gradient_energy: f64,
    gradient_norm: f64,
}

/// The point terms of the integrals over `cells`, in cell and point order.
fn point_terms(
    mesh: &Mesh,
    post: &CoupledPost<'_>,
    cells: std::ops::Range<usize>,
) -> Result<Vec<PointTerms>, CoupledError> {
    let mut cache = CellValuesCache::new(post.mode, stiffness_degree, field_orders(post).to_vec());
    let nc = post.dofs.spec(post.fields.u).n_components;
    let mut local = LocalFields::default();
    let mut coords = Vec::new();
    let mut terms = Vec::new();
    for id in cells {
        let (kind, nodes) = mesh.cell(id);
        let cv = cache.get(kind);
        coords.clear();
        coords.extend(nodes.iter().map(|&p| mesh.points[p]));
        cv.reinit(id, &coords)?;
        local.gather(post, id, kind);
        if post.laws.is_finite() {
            let law = post.laws.finite_law(id);
            for q in 0..cv.n_points() {
                let w = cv.jxw[q];
                let FinitePoint { f, out, c, grad_c } =
                    local.finite_at(law, post.mode, cv, (id, q), nc, false)?;
                terms.push(PointTerms {
                    w,
                    c,
                    deformed_volume: f.determinant() * w,
                    elastic_energy: out.elastic_energy * w,
                    chemical_energy: out.chemical_energy * w,
                    gradient_energy: out.gradient_energy * w,
                    gradient_norm: grad_c.norm() * w,
                });
            }
            continue;
        }
        let law = post.laws.law(id);
        for q in 0..cv.n_points() {
            let w = cv.jxw[q];
            let (c, grad_mu, grad_c) = local.scalars_at(cv, q);
            let range = |source| CoupledError::Range {
                cell: id,
                point: q,
                source,
            };
            // Elastic, chemical and gradient energy densities.
            let energies = if nc == 0 {
                // No displacement unknowns: the reduced law (the same values).
                let out = law.evaluate_unstrained(c, grad_mu, grad_c).map_err(range)?;
                [out.elastic_energy, out.chemical_energy, out.gradient_energy]
            } else {
                let su = &cv.spaces[0];
                // Quadrature points are interior: r > 0 in axisymmetry.
                let strain = strain_at(
                    post.mode,
                    su.grads(q),
                    su.values(q),
                    cv.points[q][0],
                    &local.u,
                    nc,
                );
                let out: PointOutput = law
                    .evaluate(&PointInput {
                        strain,
                        c,
                        grad_mu,
                        grad_c,
                    })
                    .map_err(range)?;
                [out.elastic_energy, out.chemical_energy, out.gradient_energy]
            };
            terms.push(PointTerms {
                w,
                c,
                deformed_volume: w,
                elastic_energy: energies[0] * w,
                chemical_energy: energies[1] * w,
                gradient_energy: energies[2] * w,
                gradient_norm: grad_c.norm() * w,
            });
        }
    }
    Ok(terms)
}

/// One component of a field, to be averaged over boundary facets by [`boundary_mean`].
#[derive(Clone, Copy, Debug)]
pub struct BoundaryField<'a> {
    /// DOF map holding the field.
    pub dofs: &'a DofMap,
    /// The field.
    pub field: FieldHandle,
    /// Component of the field (0 for a scalar).
    pub component: usize,
    /// Geometry mode (the facet weight is `2πr dA` in axisymmetry).
    pub mode: GeometryMode,
    /// Global solution vector.
    pub solution: &'a [f64],
}

/// The facets given to [`boundary_mean`] have no area: the set is empty, or every facet lies on
/// the axis of an axisymmetric model (weight `2πr = 0`).
#[derive(Clone, Copy, Debug, PartialEq, Eq, thiserror::Error)]
#[error("boundary mean over {n_facets} facet(s): their total area is zero (expected a non-empty set of facets off the axis of revolution)")]
pub struct ZeroArea {
    /// Number of facets given.
    pub n_facets: usize,
}

/// Area-weighted mean `∫ v dA / ∫ dA` of one field component over boundary facets (e.g. a
/// named boundary `mesh.boundary("outer")?`), with the field's facet interpolation and a facet
/// rule of degree `2p + 2` (`p` the facet's geometric order), as the boundary-flux kernels use.
/// In axisymmetry both integrals carry `2πr`, so the mean is over the surface of revolution.
///
/// # Panics
/// If a facet names a cell or local facet that is not in the mesh, or `component` is not a
/// component of the field (bugs of the caller).
pub fn boundary_mean(
    mesh: &Mesh,
    field: &BoundaryField<'_>,
    facets: &[Facet],
) -> Result<f64, ZeroArea> {
    let spec = field.dofs.spec(field.field);
    assert!(
        field.component < spec.n_components,
        "component {} of field '{}' with {} component(s)",
        field.component,
        spec.name,
        spec.n_components
    );
    let mut cache = Vec::new();
    let mut coords = Vec::new();
    let (mut integral, mut area) = (0.0, 0.0);
    for &facet in facets {
        let (cell_kind, nodes) = mesh.cell(facet.cell);
        let (fk, local_nodes) = cell_kind.facets()[facet.local as usize];
        let fsk = space_kind(fk, spec.order).unwrap_or(fk.linear());
        let fv = facet_values(&mut cache, fk, field.mode, fsk);
        coords.clear();
        coords.extend(local_nodes.iter().map(|&l| mesh.points[nodes[l]]));
        fv.reinit(&coords);
        let cell_dofs =
            &field.dofs.cell_dofs(facet.cell)[field.dofs.local_range(field.field, cell_kind)];
        for q in 0..fv.n_points() {
            let nv = fv.spaces[0].values_at(q);
            // Facet node i is cell node local_nodes[i]; the field's space uses the first nodes.
            let v: f64 = nv
                .iter()
                .zip(local_nodes)
                .map(|(&n, &l)| {
                    n * field.solution[cell_dofs[l * spec.n_components + field.component]]
                })
                .sum();
            integral += v * fv.jxw[q];
            area += fv.jxw[q];
        }
    }
    if area > 0.0 {
        Ok(integral / area)
    } else {
        Err(ZeroArea {
            n_facets: facets.len(),
        })
    }
}

/// Interpolation orders of `u`, `c`, `μ` (the order of the spaces in the cell values).
fn field_orders(post: &CoupledPost<'_>) -> [usize; 3] {
    let f = post.fields;
    [f.u, f.c, f.mu].map(|h| post.dofs.spec(h).order)
}

/// A finite-strain law evaluated at one point of a cell.
struct FinitePoint {
    f: Matrix3<f64>,
    out: FiniteOutput,
    c: f64,
    grad_c: Vector3<f64>,
}

/// Local values of the three fields on one cell (reused between cells).
#[derive(Default)]
struct LocalFields {
    u: Vec<f64>,
    c: Vec<f64>,
    mu: Vec<f64>,
}

impl LocalFields {
    fn gather(&mut self, post: &CoupledPost<'_>, cell: usize, kind: dilata_mesh::CellKind) {
        let dofs = post.dofs.cell_dofs(cell);
        let fill = |into: &mut Vec<f64>, f: FieldHandle| {
            into.clear();
            into.extend(
                dofs[post.dofs.local_range(f, kind)]
                    .iter()
                    .map(|&d| post.solution[d]),
            );
        };
        fill(&mut self.u, post.fields.u);
        fill(&mut self.c, post.fields.c);
        fill(&mut self.mu, post.fields.mu);
    }

    /// The deformation gradient at point `q` of `cv` (its axis limit when `axis`), the finite
    /// law's output there, and the concentration and its gradient; a state outside the law's
    /// range is the error of cell `cell`, point `q` (`at = (cell, q)`).
    fn finite_at(
        &self,
        law: &FiniteLaw,
        mode: GeometryMode,
        cv: &CellValues,
        (cell, q): (usize, usize),
        nc: usize,
        axis: bool,
    ) -> Result<FinitePoint, CoupledError> {
        let su = &cv.spaces[0];
        let f = deformation_gradient(
            mode,
            su.grads(q),
            su.values(q),
            cv.points[q][0],
            &self.u,
            nc,
            axis,
        );
        let (c, grad_mu, grad_c) = self.scalars_at(cv, q);
        let out = law
            .evaluate(&FiniteInput {
                f,
                c,
                mu: self.mu_at(cv, q),
                grad_mu,
                grad_c,
            })
            .map_err(|source| CoupledError::Range {
                cell,
                point: q,
                source,
            })?;
        Ok(FinitePoint { f, out, c, grad_c })
    }

    /// Potential at point `q` of `cv` (spaces `[u, c, μ]`).
    fn mu_at(&self, cv: &CellValues, q: usize) -> f64 {
        let vm = cv.spaces[2].values(q);
        vm.iter().zip(&self.mu).map(|(n, m)| n * m).sum()
    }

    /// Concentration, potential gradient and concentration gradient at point `q` of `cv`
    /// (spaces `[u, c, μ]`).
    fn scalars_at(&self, cv: &CellValues, q: usize) -> (f64, Vector3<f64>, Vector3<f64>) {
        let vc = cv.spaces[1].values(q);
        let c: f64 = vc.iter().zip(&self.c).map(|(n, c)| n * c).sum();
        let mut grad_c = Vector3::zeros();
        for (g, &v) in cv.spaces[1].grads(q).iter().zip(&self.c) {
            for d in 0..3 {
                grad_c[d] += g[d] * v;
            }
        }
        let gm = cv.spaces[2].grads(q);
        let mut grad_mu = Vector3::zeros();
        for (g, &m) in gm.iter().zip(&self.mu) {
            for d in 0..3 {
                grad_mu[d] += g[d] * m;
            }
        }
        (c, grad_mu, grad_c)
    }
}
