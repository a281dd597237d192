#!/usr/bin/env python3
"""Peer benchmark: the problems of benches/fe_problems.rs in scikit-fem + scipy/CHOLMOD/pyamg.

Prints one JSON line with the same fields as `cargo bench --bench fe_problems`.

Requirements (not run in CI; see docs/performance.md):
    python3 -m venv /tmp/peer-venv
    /tmp/peer-venv/bin/pip install scikit-fem scipy numpy pyamg
    # optional, CHOLMOD (needs Debian's libsuitesparse-dev and a scikit-sparse version that
    # builds against it; 0.5.0 does not build against SuiteSparse 5.12):
    /tmp/peer-venv/bin/pip install scikit-sparse

Usage:
    peers.py --problem poisson2d-q1|elast3d-p1|elast3d-q1 --size N \
        [--solver superlu|cholmod-metis|cholmod-amd|amg-cg|none] [--repeat 3] [--intorder 4]

The problems are the same as ours: unit square of Quad4 with -Δu = 1 and u = 0 on the whole
boundary; unit cube of Tet4 (six per cube) or Hex8 with E = 1, ν = 0.3, face x = 0 clamped and
body force (0, 0, -1). Quadrature degree 4 by default on every cell (what Dilata's kernels used
for linear elements at commit 5915b44), so both sides integrate with the same number of points
per cell (9 on Quad4, 27 on Hex8; Tet4: 14 points in Dilata, 11 in scikit-fem's degree-4 rule);
`--intorder` sets another degree when the kernels change. `quad_points` is printed.
"""

import argparse
import json
import os
import resource
import sys
import time

import numpy as np
import scipy
import scipy.sparse.linalg as spla
import skfem
from skfem import (Basis, BilinearForm, ElementHex1, ElementQuad1, ElementTetP1,
                   ElementVector, LinearForm, MeshHex, MeshQuad, MeshTet, asm, condense)
from skfem.helpers import dot, grad
from skfem.models.elasticity import lame_parameters, linear_elasticity

QUADRATURE_DEGREE = 4
YOUNG = 1.0
POISSON = 0.3


def peak_rss_mib():
    """Peak resident set size of this process so far (ru_maxrss is in KiB on Linux)."""
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0


def timed(f):
    t0 = time.perf_counter()
    out = f()
    return time.perf_counter() - t0, out


@BilinearForm
def laplace(u, v, _):
    return dot(grad(u), grad(v))


@LinearForm
def unit_source(v, _):
    return 1.0 * v


@LinearForm
def downward_force(v, _):
    return -1.0 * v.value[2]


def build_mesh(problem, n):
    x = np.linspace(0.0, 1.0, n + 1)
    if problem == "poisson2d-q1":
        return MeshQuad.init_tensor(x, x)
    if problem == "elast3d-p1":
        return MeshTet.init_tensor(x, x, x)
    return MeshHex.init_tensor(x, x, x)


def build_basis(problem, mesh, intorder):
    if problem == "poisson2d-q1":
        element = ElementQuad1()
    elif problem == "elast3d-p1":
        element = ElementVector(ElementTetP1())
    else:
        element = ElementVector(ElementHex1())
    return Basis(mesh, element, intorder=intorder)


def stiffness_form(problem):
    if problem == "poisson2d-q1":
        return laplace
    return linear_elasticity(*lame_parameters(YOUNG, POISSON))


def rigid_body_modes(basis, free):
    """Six rigid-body modes of a 3D vector field, restricted to the free DOFs (pyamg's B)."""
    dofs = basis.nodal_dofs  # (3, n_nodes)
    p = basis.mesh.p
    n = basis.N
    modes = np.zeros((n, 6))
    for c in range(3):
        modes[dofs[c], c] = 1.0
    # Rotations about x, y, z: (0, -z, y), (z, 0, -x), (-y, x, 0).
    modes[dofs[1], 3], modes[dofs[2], 3] = -p[2], p[1]
    modes[dofs[0], 4], modes[dofs[2], 4] = p[2], -p[0]
    modes[dofs[0], 5], modes[dofs[1], 5] = -p[1], p[0]
    return modes[free]


def run_solver(name, a, b, basis, free, problem):
    """Time analysis, factorisation and solve; returns a dict of the common fields."""
    out = {"solver": name, "analyze_s": 0.0, "factor_s": 0.0, "solve_s": 0.0,
           "factor_nnz": 0, "iterations": 0}
    if name == "none":
        out["rel_residual"] = 0.0
        return out
    if name == "superlu":
        # scipy's spsolve path: SuperLU with COLAMD; analysis and factorisation are one call.
        csc = a.tocsc()
        out["factor_s"], lu = timed(lambda: spla.splu(csc))
        out["solve_s"], x = timed(lambda: lu.solve(b))
        out["factor_nnz"] = int(lu.nnz)
    elif name.startswith("cholmod"):
        from sksparse.cholmod import analyze
        ordering = name.split("-", 1)[1]
        csc = a.tocsc()
        out["analyze_s"], factor = timed(
            lambda: analyze(csc, mode="supernodal", ordering_method=ordering))
        out["factor_s"], _ = timed(lambda: factor.cholesky_inplace(csc))
        out["solve_s"], x = timed(lambda: factor(b))
        out["_factor"] = factor
    elif name == "amg-cg":
        import pyamg
        near_null = None if problem == "poisson2d-q1" else rigid_body_modes(basis, free)
        out["factor_s"], ml = timed(lambda: pyamg.smoothed_aggregation_solver(
            a.tocsr(), B=near_null, symmetry="symmetric"))
        residuals = []
        out["solve_s"], x = timed(lambda: ml.solve(b, tol=1e-8, accel="cg",
                                                   residuals=residuals, maxiter=2000))
        out["iterations"] = max(len(residuals) - 1, 0)
    else:
        raise SystemExit(f"unknown solver {name}")
    out["rel_residual"] = float(np.linalg.norm(a @ x - b) / np.linalg.norm(b))
    return out


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--problem", required=True,
                        choices=["poisson2d-q1", "elast3d-p1", "elast3d-q1"])
    parser.add_argument("--size", type=int, required=True, help="cells per edge")
    parser.add_argument("--solver", default="superlu",
                        choices=["superlu", "cholmod-metis", "cholmod-amd", "amg-cg", "none"])
    parser.add_argument("--intorder", type=int, default=QUADRATURE_DEGREE,
                        help="quadrature degree (match the kernels being compared)")
    parser.add_argument("--repeat", type=int, default=3,
                        help="repetitions of the stiffness assembly (best reported)")
    parser.add_argument("--factor-nnz", action="store_true",
                        help="CHOLMOD: after the peak memory is recorded, extract L to count "
                             "its stored entries (a copy of L: slow and memory-hungry)")
    args = parser.parse_args()
    problem = args.problem

    mesh_s, mesh = timed(lambda: build_mesh(problem, args.size))
    basis_s, basis = timed(lambda: build_basis(problem, mesh, args.intorder))
    form = stiffness_form(problem)
    best = float("inf")
    k = None
    for _ in range(max(args.repeat, 1)):
        k = None
        s, k = timed(lambda: asm(form, basis))
        best = min(best, s)

    def constrained_system():
        if problem == "poisson2d-q1":
            f = asm(unit_source, basis)
            fixed = basis.get_dofs().all()
        else:
            f = asm(downward_force, basis)
            fixed = basis.get_dofs(lambda x: np.isclose(x[0], 0.0)).all()
        a, b, _, free = condense(k, f, D=fixed)
        return a, b, fixed, free

    system_s, (a, b, fixed, free) = timed(constrained_system)
    rss_after_assembly = peak_rss_mib()
    report = run_solver(args.solver, a, b, basis, free, problem)
    n_dofs = basis.N
    record = {
        "impl": "scikit-fem",
        "versions": {"python": sys.version.split()[0], "skfem": skfem.__version__,
                     "scipy": scipy.__version__, "numpy": np.__version__,
                     # The BLAS behind CHOLMOD (Debian alternatives: reference or OpenBLAS).
                     "system_blas": os.path.realpath("/usr/lib/x86_64-linux-gnu/libblas.so.3")},
        "problem": problem,
        "size": args.size,
        "n_cells": int(mesh.t.shape[1]),
        "n_dofs": int(n_dofs),
        "n_constrained": int(len(fixed)),
        "n_free": int(len(free)),
        "nnz": int(k.nnz),
        "quad_points": int(basis.X.shape[1]),
        "intorder": args.intorder,
        "mesh_s": mesh_s,
        "dofmap_s": basis_s,
        "assembler_build_s": [0.0],
        "assembly_threads": [1],
        "assembly_s": [best],
        "assembly_dofs_per_s": [round(n_dofs / best)],
        "constraints_s": 0.0,
        "system_assembly_s": system_s,
        "solver_threads": 1,
        **report,
        "peak_rss_after_assembly_mib": rss_after_assembly,
        "peak_rss_mib": peak_rss_mib(),
    }
    factor = record.pop("_factor", None)
    if factor is not None and args.factor_nnz:
        # Lower triangle with the diagonal, as faer's len_val counts it.
        record["factor_nnz"] = int(factor.L().nnz)
    print(json.dumps(record))


if __name__ == "__main__":
    main()
