#!/usr/bin/env bash
# Whole-process benchmark of Dilata against the scikit-fem/scipy peer, interleaved per case
# (ours, then the peer, same problem and size, one process per solver), each process under
# /usr/bin/time -v for its peak RSS. Not run in CI.
#
# Usage: bench/run_all.sh [SET] [OUT_DIR]
#   SET: small (default: 2D 251k, 3D 53k), asm (matched quadrature; CHOLMOD only: 2D 251k, 3D P1 53k; assembly only: Q1 27k),
#        medium (2D 1M, 3D 207k P1 and Q1), large (3D 585k),
#        or all.
#   OUT_DIR (default /tmp/dilata-bench): results.jsonl (one JSON line per process, with the
#        wrapper's max RSS and the load average before the run) and table.md.
# Environment: PEER_PYTHON (default /tmp/peer-venv/bin/python, see bench/peers.py for the
# requirements), FE_BIN (a prebuilt fe_problems executable: skip the build; FE_TREE describes
# it), SOLVER_THREADS (default 1, for both sides), PEER_INTORDER (default 4: the
# quadrature degree of the peer, to match the degree of Dilata's kernels).
set -euo pipefail

SET=${1:-small}
OUT=${2:-/tmp/dilata-bench}
PEER_PYTHON=${PEER_PYTHON:-/tmp/peer-venv/bin/python}
SOLVER_THREADS=${SOLVER_THREADS:-1}
PEER_INTORDER=${PEER_INTORDER:-4}
ROOT=$(cd "$(dirname "$0")/.." && pwd)
mkdir -p "$OUT"
RESULTS="$OUT/results.jsonl"

cd "$ROOT"
if [ -n "${FE_BIN:-}" ]; then
    # A prebuilt fe_problems executable (e.g. a copy kept while the tree does not compile).
    BIN=$FE_BIN
    TREE="prebuilt:${FE_TREE:-unknown}"
else
    cargo build --release --benches >&2
    BIN=$(cargo bench --bench fe_problems --no-run 2>&1 | sed -n 's/.*(\(target\/release\/deps\/fe_problems-[0-9a-f]*\)).*/\1/p' | tail -1)
    # What was measured: the commit and a hash of any uncommitted change to the crates.
    TREE="$(git rev-parse --short HEAD)+$(git diff HEAD -- crates Cargo.lock | sha1sum | cut -c1-8)"
fi
if [ -z "$BIN" ]; then
    echo "cannot locate the fe_problems bench executable" >&2
    exit 1
fi

# Single-threaded BLAS/OpenMP in the peer, the same solver thread count on both sides.
export OMP_NUM_THREADS=$SOLVER_THREADS OPENBLAS_NUM_THREADS=$SOLVER_THREADS MKL_NUM_THREADS=$SOLVER_THREADS

HAVE_CHOLMOD=0
if "$PEER_PYTHON" -c "import sksparse.cholmod" 2>/dev/null; then HAVE_CHOLMOD=1; fi

# run LABEL CMD...: run CMD under /usr/bin/time -v and append its JSON line with the wrapper's
# peak RSS, the load average before the run and the exit status.
run() {
    local label=$1
    shift
    local load
    load=$(cut -d' ' -f1-3 /proc/loadavg)
    local log="$OUT/time.log"
    local line status=0
    line=$(/usr/bin/time -v "$@" 2>"$log") || status=$?
    local rss_kib
    rss_kib=$(sed -n 's/.*Maximum resident set size (kbytes): \([0-9]*\).*/\1/p' "$log")
    if [ -z "$line" ]; then
        line="{\"impl\": \"$label\", \"failed\": true, \"cmd\": \"$*\"}"
    fi
    echo "$line" | python3 -c '
import json, sys
rec = json.loads(sys.stdin.readline())
rec["time_v_max_rss_mib"] = int(sys.argv[1] or 0) / 1024.0
rec["loadavg_before"] = sys.argv[2]
rec["exit_status"] = int(sys.argv[3])
rec["cmd"] = sys.argv[4]
rec["tree"] = sys.argv[5]
print(json.dumps(rec))' "${rss_kib:-0}" "$load" "$status" "$*" "$TREE" | tee -a "$RESULTS"
}

# case PROBLEM SIZE OURS_SOLVERS PEER_SOLVERS PEER_REPEAT [OURS_REPEAT [PEER_INTORDER]]
case_() {
    local problem=$1 size=$2 ours=$3 peers=$4 repeat=$5 ours_repeat=${6:-3}
    local intorder=${7:-$PEER_INTORDER}
    for s in $ours; do
        run dilata "$BIN" --problem "$problem" --size "$size" --threads 1,2 --repeat "$ours_repeat" \
            --solver "$s" --solver-threads "$SOLVER_THREADS"
    done
    for s in $peers; do
        if [[ $s == cholmod-* && $HAVE_CHOLMOD == 0 ]]; then continue; fi
        run scikit-fem "$PEER_PYTHON" bench/peers.py --problem "$problem" --size "$size" \
            --solver "$s" --repeat "$repeat" --intorder "$intorder"
    done
}

echo "# $(date -u +%FT%TZ) set=$SET nproc=$(getconf _NPROCESSORS_ONLN) load=$(cut -d' ' -f1-3 /proc/loadavg) cholmod=$HAVE_CHOLMOD tree=$TREE" >&2
if [[ $SET == small || $SET == all ]]; then
    case_ poisson2d-q1 500 "chol-amd chol-nd" "superlu cholmod-amd cholmod-metis amg-cg" 3
    case_ elast3d-p1 25 "chol-nd chol-amd cg-jacobi" "superlu cholmod-metis cholmod-amd amg-cg" 3
fi
if [[ $SET == asm || $SET == all ]]; then
    # Peer quadrature matched to the pure-stiffness rules (see medium below); CHOLMOD only.
    case_ poisson2d-q1 500 "chol-amd chol-nd" "cholmod-amd cholmod-metis" 3 3 2
    case_ elast3d-p1 25 "chol-nd chol-amd" "cholmod-metis cholmod-amd" 3 3 1
    case_ elast3d-q1 20 "none" "none" 2 3 2
fi
if [[ $SET == medium || $SET == all ]]; then
    # Peer quadrature as the pure-stiffness rules of the kernels since the change to
    # gradient_product_degree: 2x2 points on Quad4 (degree 2), 1 point on Tet4.
    case_ poisson2d-q1 1000 "chol-amd" "cholmod-amd amg-cg" 2 3 2
    # One peer process each in 3D: its elasticity assembly takes minutes at this size.
    case_ elast3d-p1 40 "chol-nd" "cholmod-metis" 1 3 1
    case_ elast3d-q1 40 "chol-nd" "" 1
fi
if [[ $SET == large || $SET == all ]]; then
    # The peer's basis tables alone would need ~14 GiB here; only ours runs.
    case_ elast3d-p1 57 "chol-nd" "" 1 1
fi
python3 bench/table.py "$RESULTS" > "$OUT/table.md"
cat "$OUT/table.md"
