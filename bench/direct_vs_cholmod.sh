#!/usr/bin/env bash
# Direct solvers side by side, one process each, one solver thread on both sides: faer Cholesky
# in double precision, the same factored in single precision with refinement ("-mixed"), then
# CHOLMOD through scikit-sparse on the same problem (bench/peers.py, with --factor-nnz). Prints
# one summary line per process. Not run in CI; peer environment as in docs/performance.md
# ("How to reproduce").
#
# Usage: bench/direct_vs_cholmod.sh PROBLEM SIZE ORDERING [REPEATS]
#   PROBLEM: poisson2d-q1 | elast3d-p1 | elast3d-q1; ORDERING: nd | amd
# Environment: FE_BIN (a prebuilt fe_problems executable; default: build it), PEER_PYTHON
# (default /tmp/peer-venv/bin/python), PEER_INTORDER (default: 1 for elast3d-p1, else 2).
set -euo pipefail
problem=$1 size=$2 ordering=$3 repeats=${4:-1}
cd "$(dirname "$0")/.."
peer=${PEER_PYTHON:-/tmp/peer-venv/bin/python}
if [ "$problem" = elast3d-p1 ]; then intorder=${PEER_INTORDER:-1}; else intorder=${PEER_INTORDER:-2}; fi
case $ordering in nd) peer_solver=cholmod-metis ;; amd) peer_solver=cholmod-amd ;; *) echo "ordering: nd or amd" >&2; exit 2 ;; esac
bin=${FE_BIN:-}
if [ -z "$bin" ]; then
    bin=$(cargo bench --bench fe_problems --no-run 2>&1 | sed -n 's/.*(\(target\/release\/deps\/fe_problems-[0-9a-f]*\)).*/\1/p' | tail -1)
fi
export OMP_NUM_THREADS=1 OPENBLAS_NUM_THREADS=1 MKL_NUM_THREADS=1
summary="python3 bench/solver_line.py"
for _ in $(seq "$repeats"); do
    for solver in "chol-$ordering" "chol-$ordering-mixed"; do
        echo "load $(cut -d' ' -f1 /proc/loadavg)"
        "$bin" --problem "$problem" --size "$size" --threads 1 --solver "$solver" \
            --solver-threads 1 --repeat 1 | $summary
    done
    echo "load $(cut -d' ' -f1 /proc/loadavg)"
    "$peer" bench/peers.py --problem "$problem" --size "$size" --solver "$peer_solver" \
        --intorder "$intorder" --repeat 1 --factor-nnz | $summary
done
