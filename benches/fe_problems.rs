//! Whole-process benchmark of the finite-element core on the problems of `bench/peers.py`.
//!
//! Builds one problem, times each phase separately and prints one JSON line on stdout:
//! mesh generation, DOF map, pattern + colouring (`Assembler::build`), one stiffness assembly
//! per requested thread count (best of `--repeat`, matrix only, no source or body force, no
//! constraints: the same work as the peer's `asm` of the bilinear form), the assembly of the constrained system (matrix + right-hand side), then
//! the linear solver's symbolic analysis, numeric factorisation (or preconditioner set-up) and
//! solve, with the relative residual of the solution. Peak resident memory (VmHWM) is read from
//! `/proc/self/status` after the assembly and at the end; `bench/run_all.sh` also wraps the
//! process in `/usr/bin/time -v`.
//!
//! ```text
//! cargo bench --bench fe_problems -- --problem elast3d-p1 --size 25 --threads 1,2 \
//!     --solver chol-nd --solver-threads 1
//! ```
//!
//! Problems (`--size` is the number of cells per edge):
//! * `poisson2d-q1`: unit square, Quad4, `-Δu = 1`, `u = 0` on the whole boundary
//!   (size 1000: 1 002 001 DOFs).
//! * `elast3d-p1`: unit cube, Tet4 (six per cube), E = 1, ν = 0.3, face x = 0 clamped, body
//!   force (0, 0, -1) (sizes 25, 40, 57: 52 728, 206 763, 585 336 DOFs).
//! * `elast3d-q1`: the same on Hex8 (size 40: 206 763 DOFs).
//!
//! Solvers: `chol-nd`, `chol-amd` (faer Cholesky with METIS nested dissection or AMD),
//! `chol-nd-mixed`, `chol-amd-mixed` (the same factored in single precision, each solve refined
//! in double precision to LAPACK's backward-error test; `iterations` = refinement steps),
//! `cg-jacobi`, `cg-ilu0` (conjugate gradients, relative tolerance 1e-8), `none`; with the
//! Cargo features of the same names, `russell-direct` (feature `russell`), `umfpack`, `mumps`
//! (russell_sparse's back-ends; analysis and factorisation are one call there, timed as the
//! factorisation).

use std::time::Instant;

use dilata_fem::dofs::DofMap;
use dilata_fem::{
    Assembler, AssemblyTarget, CellKernel, Constraints, FieldHandle, FieldSpec, GeometryMode,
    InvertedCell,
};
use dilata_linalg::{
    Cg, CsrMatrix, DirectParams, FaerCholesky, KrylovParams, LinearSolver, Ordering, Parallelism,
    Preconditioner,
};
use dilata_material::elastic::{Isotropic, Stiffness};
use dilata_mesh::generate::{cuboid, rectangle, BoxParams, RectangleParams};
use dilata_mesh::{CellKind, Mesh};
use dilata_physics::elasticity::{mode_stiffness, ElasticityKernel, VectorFn};
use dilata_physics::poisson::{PoissonKernel, ScalarFn};

/// The benchmark problems (shared with `bench/peers.py`).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Problem {
    Poisson2dQ1,
    Elast3dP1,
    Elast3dQ1,
}

impl Problem {
    fn from_name(name: &str) -> Option<Self> {
        match name {
            "poisson2d-q1" => Some(Problem::Poisson2dQ1),
            "elast3d-p1" => Some(Problem::Elast3dP1),
            "elast3d-q1" => Some(Problem::Elast3dQ1),
            _ => None,
        }
    }

    fn name(self) -> &'static str {
        match self {
            Problem::Poisson2dQ1 => "poisson2d-q1",
            Problem::Elast3dP1 => "elast3d-p1",
            Problem::Elast3dQ1 => "elast3d-q1",
        }
    }

    fn cell_kind(self) -> CellKind {
        match self {
            Problem::Poisson2dQ1 => CellKind::Quad4,
            Problem::Elast3dP1 => CellKind::Tet4,
            Problem::Elast3dQ1 => CellKind::Hex8,
        }
    }

    fn mode(self) -> GeometryMode {
        match self {
            // The mode only matters for vector fields; a 2D scalar problem uses a planar mode.
            Problem::Poisson2dQ1 => GeometryMode::PlaneStrain,
            Problem::Elast3dP1 | Problem::Elast3dQ1 => GeometryMode::ThreeD,
        }
    }
}

/// Linear solver choices.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum SolverChoice {
    /// Sparse Cholesky; `true`: factored in single precision with refinement.
    Cholesky(Ordering, bool),
    Cg(Preconditioner),
    /// A russell_sparse solver (Cargo features `russell`, `umfpack`, `mumps`).
    #[cfg(feature = "russell")]
    Russell(dilata_linalg::RussellGenie),
    None,
}

impl SolverChoice {
    fn from_name(name: &str) -> Option<Self> {
        match name {
            "chol-nd" => Some(SolverChoice::Cholesky(Ordering::NestedDissection, false)),
            "chol-amd" => Some(SolverChoice::Cholesky(Ordering::Amd, false)),
            "chol-nd-mixed" => Some(SolverChoice::Cholesky(Ordering::NestedDissection, true)),
            "chol-amd-mixed" => Some(SolverChoice::Cholesky(Ordering::Amd, true)),
            "cg-jacobi" => Some(SolverChoice::Cg(Preconditioner::Jacobi)),
            "cg-ilu0" => Some(SolverChoice::Cg(Preconditioner::Ilu0)),
            "none" => Some(SolverChoice::None),
            #[cfg(feature = "russell")]
            "russell-direct" => Some(SolverChoice::Russell(dilata_linalg::RussellGenie::Direct)),
            #[cfg(feature = "umfpack")]
            "umfpack" => Some(SolverChoice::Russell(dilata_linalg::RussellGenie::Umfpack)),
            #[cfg(feature = "mumps")]
            "mumps" => Some(SolverChoice::Russell(dilata_linalg::RussellGenie::Mumps)),
            _ => None,
        }
    }
}

/// Command-line options.
#[derive(Clone, Debug)]
struct Options {
    problem: Problem,
    /// Cells per edge.
    size: usize,
    /// Thread counts to time the stiffness assembly with (1 runs sequentially).
    threads: Vec<usize>,
    /// Repetitions of each timed assembly (the best is reported).
    repeat: usize,
    solver: SolverChoice,
    /// Threads of the linear solver (1: sequential).
    solver_threads: usize,
}

fn usage() -> ! {
    eprintln!(
        "usage: fe_problems --problem poisson2d-q1|elast3d-p1|elast3d-q1 --size N \
         [--threads 1,2] [--repeat 3] [--solver chol-nd|chol-amd|chol-nd-mixed|chol-amd-mixed|cg-jacobi|cg-ilu0|none] \
         [--solver-threads 1]"
    );
    std::process::exit(2)
}

fn parse_options() -> Options {
    let mut problem = None;
    let mut size = None;
    let mut threads = vec![1, 2];
    let mut repeat = 3;
    let mut solver = SolverChoice::Cholesky(Ordering::NestedDissection, false);
    let mut solver_threads = 1;
    let mut args = std::env::args().skip(1);
    while let Some(arg) = args.next() {
        // `cargo bench` appends `--bench` to the arguments of every bench target.
        if arg == "--bench" {
            continue;
        }
        let value = args.next().unwrap_or_else(|| usage());
        match arg.as_str() {
            "--problem" => problem = Some(Problem::from_name(&value).unwrap_or_else(|| usage())),
            "--size" => size = Some(value.parse().unwrap_or_else(|_| usage())),
            "--threads" => {
                threads = value
                    .split(',')
                    .map(|t| t.parse().unwrap_or_else(|_| usage()))
                    .collect()
            }
            "--repeat" => repeat = value.parse().unwrap_or_else(|_| usage()),
            "--solver" => solver = SolverChoice::from_name(&value).unwrap_or_else(|| usage()),
            "--solver-threads" => solver_threads = value.parse().unwrap_or_else(|_| usage()),
            _ => usage(),
        }
    }
    Options {
        problem: problem.unwrap_or_else(|| usage()),
        size: size.unwrap_or_else(|| usage()),
        threads,
        repeat: repeat.max(1),
        solver,
        solver_threads,
    }
}

/// `Sequential` for one thread, a private pool otherwise.
fn parallelism(threads: usize) -> Parallelism {
    if threads <= 1 {
        Parallelism::Sequential
    } else {
        Parallelism::Rayon { threads }
    }
}

/// Peak resident set size of this process so far, in MiB (VmHWM), or -1 if unavailable.
fn peak_rss_mib() -> f64 {
    std::fs::read_to_string("/proc/self/status")
        .ok()
        .and_then(|s| {
            s.lines()
                .find(|l| l.starts_with("VmHWM:"))
                .and_then(|l| l.split_whitespace().nth(1))
                .and_then(|kb| kb.parse::<f64>().ok())
        })
        .map_or(-1.0, |kb| kb / 1024.0)
}

/// Seconds taken by `f`, with its result.
fn timed<T>(f: impl FnOnce() -> T) -> (f64, T) {
    let t0 = Instant::now();
    let out = f();
    (t0.elapsed().as_secs_f64(), out)
}

fn build_mesh(problem: Problem, n: usize) -> Mesh {
    let kind = problem.cell_kind();
    let mesh = if kind.dim() == 2 {
        rectangle(&RectangleParams {
            origin: [0.0, 0.0],
            lengths: [1.0, 1.0],
            n_cells: [n, n],
            kind,
        })
    } else {
        cuboid(&BoxParams {
            origin: [0.0; 3],
            lengths: [1.0; 3],
            n_cells: [n, n, n],
            kind,
        })
    };
    mesh.expect("benchmark mesh parameters are valid")
}

/// Constrained DOFs: all four sides (Poisson) or every component on `left` (elasticity).
fn build_constraints(
    problem: Problem,
    mesh: &Mesh,
    dofs: &DofMap,
    field: FieldHandle,
) -> Constraints {
    let mut cons = Constraints::new(dofs.n_dofs());
    let (sides, components): (&[&str], usize) = match problem {
        Problem::Poisson2dQ1 => (&["left", "right", "bottom", "top"], 1),
        Problem::Elast3dP1 | Problem::Elast3dQ1 => (&["left"], 3),
    };
    for side in sides {
        for component in 0..components {
            cons.add_boundary(
                mesh,
                dofs,
                dilata_fem::BoundaryTarget {
                    boundary: side,
                    field,
                    component,
                },
                0.0,
            )
            .expect("boundary exists");
        }
    }
    cons
}

/// Both kernels of the benchmark, behind one enum so the timing code is written once.
/// (The size difference of the variants does not matter for the one value a run builds.)
#[allow(clippy::large_enum_variant)]
enum Kernel<'a> {
    Poisson(PoissonKernel<'a>),
    Elasticity(ElasticityKernel<'a>),
}

impl Kernel<'_> {
    fn assemble(
        &self,
        assembler: &Assembler,
        mesh: &Mesh,
        dofs: &DofMap,
        target: AssemblyTarget<'_>,
    ) -> Result<(), InvertedCell> {
        fn run<K: CellKernel<Error = InvertedCell>>(
            k: &K,
            assembler: &Assembler,
            mesh: &Mesh,
            dofs: &DofMap,
            target: AssemblyTarget<'_>,
        ) -> Result<(), InvertedCell> {
            assembler.assemble(mesh, dofs, k, target)
        }
        match self {
            Kernel::Poisson(k) => run(k, assembler, mesh, dofs, target),
            Kernel::Elasticity(k) => run(k, assembler, mesh, dofs, target),
        }
    }
}

/// What [`make_kernel`] builds.
#[derive(Clone, Copy)]
struct KernelParams<'a> {
    problem: Problem,
    dofs: &'a DofMap,
    field: FieldHandle,
    /// Elastic stiffness for the problem's mode (unused by Poisson).
    stiffness: Stiffness,
    /// Current solution (zero: the problems are linear).
    solution: &'a [f64],
    /// Include the source (Poisson) or body force (elasticity).
    with_load: bool,
}

/// The cell kernel of a problem.
fn make_kernel<'a>(p: &KernelParams<'a>) -> Kernel<'a> {
    match p.problem {
        Problem::Poisson2dQ1 => Kernel::Poisson(PoissonKernel {
            dofs: p.dofs,
            field: p.field,
            mode: p.problem.mode(),
            conductivity: 1.0,
            source: p.with_load.then_some(&unit_source as ScalarFn<'a>),
            solution: p.solution,
        }),
        Problem::Elast3dP1 | Problem::Elast3dQ1 => Kernel::Elasticity(ElasticityKernel {
            dofs: p.dofs,
            field: p.field,
            mode: p.problem.mode(),
            stiffness: p.stiffness,
            body_force: p.with_load.then_some(&downward_force as VectorFn<'a>),
            solution: p.solution,
        }),
    }
}

fn unit_source(_: [f64; 3]) -> f64 {
    1.0
}

fn downward_force(_: [f64; 3]) -> [f64; 3] {
    [0.0, 0.0, -1.0]
}

/// Timings and sizes of one solver run.
#[derive(Debug, Default)]
struct SolverReport {
    name: String,
    analyze_s: f64,
    factor_s: f64,
    solve_s: f64,
    factor_nnz: usize,
    iterations: usize,
    residual: f64,
}

/// Time analysis, factorisation and solve of `a x = b` with `solver`.
fn run_phases<S: LinearSolver>(solver: &mut S, a: &CsrMatrix, b: &[f64]) -> SolverReport {
    let (analyze_s, r) = timed(|| solver.analyze(&a.pattern));
    r.expect("symbolic analysis");
    let (factor_s, r) = timed(|| solver.factor(a));
    r.expect("numeric factorisation");
    let mut x = b.to_vec();
    let (solve_s, info) = timed(|| solver.solve_in_place(&mut x));
    let info = info.expect("solve");
    let ax = a.mul_vec(&x);
    let rnorm = ax
        .iter()
        .zip(b)
        .map(|(p, q)| (p - q) * (p - q))
        .sum::<f64>()
        .sqrt();
    let bnorm = b.iter().map(|v| v * v).sum::<f64>().sqrt();
    SolverReport {
        name: solver.name(),
        analyze_s,
        factor_s,
        solve_s,
        factor_nnz: 0,
        iterations: info.iterations,
        residual: rnorm / bnorm,
    }
}

fn run_solver(choice: SolverChoice, threads: usize, a: &CsrMatrix, b: &[f64]) -> SolverReport {
    let par = parallelism(threads);
    match choice {
        SolverChoice::Cholesky(ordering, mixed) => {
            let mut solver = FaerCholesky::new(DirectParams {
                ordering,
                parallelism: par,
            });
            solver.set_single_precision_factor(mixed);
            let mut report = run_phases(&mut solver, a, b);
            report.factor_nnz = solver.stats().factor_nnz;
            report
        }
        SolverChoice::Cg(pre) => {
            let params = KrylovParams {
                rel_tol: 1e-8,
                max_iter: 20_000,
                ..KrylovParams::default()
            };
            run_phases(&mut Cg::new(pre, params, par), a, b)
        }
        #[cfg(feature = "russell")]
        SolverChoice::Russell(genie) => {
            run_phases(&mut dilata_linalg::RussellSolver::new(genie), a, b)
        }
        SolverChoice::None => SolverReport {
            name: "none".into(),
            ..SolverReport::default()
        },
    }
}

fn main() {
    let opts = parse_options();
    let problem = opts.problem;
    let (mesh_s, mesh) = timed(|| build_mesh(problem, opts.size));
    let kind = problem.cell_kind();
    let n_comp = if kind.dim() == 3 { 3 } else { 1 };
    let spec = if n_comp == 1 {
        FieldSpec::scalar("u", 1)
    } else {
        FieldSpec::vector("u", n_comp, 1)
    };
    let (dofmap_s, dofs) = timed(|| DofMap::build(&mesh, &[spec]).expect("DOF map"));
    let field = dofs.field("u").expect("field u");
    let n_dofs = dofs.n_dofs();

    let law = Isotropic::new(1.0, 0.3).expect("valid moduli");
    let stiffness = mode_stiffness(&law.stiffness(), problem.mode());
    let zero = vec![0.0; n_dofs];
    // The timed assembly is the stiffness alone (no source or body force), the same bilinear
    // form as the peer's `asm`; kernels may pick a cheaper rule for a pure stiffness.
    let kernel_params = KernelParams {
        problem,
        dofs: &dofs,
        field,
        stiffness,
        solution: &zero,
        with_load: false,
    };
    let kernel = make_kernel(&kernel_params);

    // Pattern + colouring, and one stiffness assembly (best of `repeat`) per thread count.
    let mut build_s = Vec::new();
    let mut assembly_s = Vec::new();
    let mut nnz = 0;
    let mut n_colors = 0;
    let mut last: Option<(Assembler, CsrMatrix)> = None;
    for &t in &opts.threads {
        let (bs, assembler) = timed(|| Assembler::build(&mesh, &dofs, parallelism(t)));
        nnz = assembler.pattern().nnz();
        n_colors = assembler.n_colors();
        let mut k = assembler.build_matrix();
        let mut best = f64::INFINITY;
        for _ in 0..opts.repeat {
            let (s, r) = timed(|| {
                kernel.assemble(
                    &assembler,
                    &mesh,
                    &dofs,
                    AssemblyTarget {
                        matrix: Some(&mut k),
                        vector: None,
                        constraints: None,
                    },
                )
            });
            r.expect("no inverted cells");
            best = best.min(s);
        }
        build_s.push(bs);
        assembly_s.push(best);
        last = Some((assembler, k));
    }
    let (assembler, mut a) = last.expect("at least one thread count");

    // The constrained system: matrix and right-hand side with the Dirichlet rows eliminated.
    let (cons_s, cons) = timed(|| build_constraints(problem, &mesh, &dofs, field));
    let values = vec![0.0; cons.n_constrained()];
    let mut b = vec![0.0; n_dofs];
    let kernel = make_kernel(&KernelParams {
        with_load: true,
        ..kernel_params
    });
    let (system_s, r) = timed(|| {
        kernel.assemble(
            &assembler,
            &mesh,
            &dofs,
            AssemblyTarget {
                matrix: Some(&mut a),
                vector: Some(&mut b),
                constraints: Some((&cons, &values)),
            },
        )
    });
    r.expect("no inverted cells");
    // The residual vector is r(0) = -f; the system to solve is K x = f.
    b.iter_mut().for_each(|v| *v = -*v);
    let rss_after_assembly = peak_rss_mib();

    let report = run_solver(opts.solver, opts.solver_threads, &a, &b);
    let factor_nnz = report.factor_nnz;
    let rss_end = peak_rss_mib();

    let list = |v: &[f64]| {
        v.iter()
            .map(|x| format!("{x:.6}"))
            .collect::<Vec<_>>()
            .join(", ")
    };
    let threads = opts
        .threads
        .iter()
        .map(|t| t.to_string())
        .collect::<Vec<_>>()
        .join(", ");
    let rates = assembly_s
        .iter()
        .map(|s| format!("{:.0}", n_dofs as f64 / s))
        .collect::<Vec<_>>()
        .join(", ");
    println!(
        "{{\"impl\": \"dilata\", \"problem\": \"{}\", \"size\": {}, \"n_cells\": {}, \
         \"n_dofs\": {}, \"n_constrained\": {}, \"nnz\": {}, \"n_colors\": {}, \
         \"mesh_s\": {:.6}, \"dofmap_s\": {:.6}, \"assembler_build_s\": [{}], \
         \"assembly_threads\": [{}], \"assembly_s\": [{}], \"assembly_dofs_per_s\": [{}], \
         \"constraints_s\": {:.6}, \"system_assembly_s\": {:.6}, \"solver\": \"{}\", \
         \"solver_threads\": {}, \"analyze_s\": {:.6}, \"factor_s\": {:.6}, \"solve_s\": {:.6}, \
         \"factor_nnz\": {}, \"iterations\": {}, \"rel_residual\": {:.3e}, \
         \"peak_rss_after_assembly_mib\": {:.1}, \"peak_rss_mib\": {:.1}}}",
        problem.name(),
        opts.size,
        mesh.n_cells(),
        n_dofs,
        cons.n_constrained(),
        nnz,
        n_colors,
        mesh_s,
        dofmap_s,
        list(&build_s),
        threads,
        list(&assembly_s),
        rates,
        cons_s,
        system_s,
        report.name,
        opts.solver_threads,
        report.analyze_s,
        report.factor_s,
        report.solve_s,
        factor_nnz,
        report.iterations,
        report.residual,
        rss_after_assembly,
        rss_end,
    );
}
