#!/usr/bin/env python3
"""Markdown tables from the results.jsonl written by bench/run_all.sh (standard library only).

Usage: table.py results.jsonl > table.md

Assembly: best stiffness-assembly throughput (DOFs/s) over the processes of one case, ours per
thread count and the peer's, with the ratios. Solvers: one row per process, with the time of
analysis + factorisation (or set-up) + solve and its ratio to each direct peer of the same case.
"""

import json
import sys
from collections import OrderedDict


def load(path):
    with open(path) as f:
        return [json.loads(line) for line in f if line.strip()]


def fmt(x, digits=3):
    if x is None:
        return "-"
    if isinstance(x, float):
        return f"{x:.{digits}g}"
    return str(x)


def main():
    records = [r for r in load(sys.argv[1]) if not r.get("failed")]
    cases = OrderedDict()
    for r in records:
        cases.setdefault((r["problem"], r["size"]), []).append(r)

    print("### Stiffness assembly (best of the runs of each case)\n")
    print("| problem | size | DOFs | ours 1 thr (DOFs/s) | ours 2 thr (DOFs/s) | 1→2 speed-up "
          "| peer (DOFs/s) | ours 1 thr / peer | ours best / peer |")
    print("|---|---|---|---|---|---|---|---|---|")
    for (problem, size), rs in cases.items():
        ours = [r for r in rs if r["impl"] == "dilata"]
        peer = [r for r in rs if r["impl"] != "dilata"]
        best = {}
        for r in ours:
            for t, s in zip(r["assembly_threads"], r["assembly_s"]):
                best[t] = min(best.get(t, float("inf")), s)
        n = (ours or peer)[0]["n_dofs"]
        t1 = best.get(1)
        t2 = best.get(2)
        peer_s = min((r["assembly_s"][0] for r in peer), default=None)
        rate = lambda s: n / s if s else None
        ratio1 = peer_s / t1 if (peer_s and t1) else None
        tbest = min(best.values()) if best else None
        ratiob = peer_s / tbest if (peer_s and tbest) else None
        print(f"| {problem} | {size} | {n} | {fmt(rate(t1))} | {fmt(rate(t2))} | "
              f"{fmt(t1 / t2 if (t1 and t2) else None)} | {fmt(rate(peer_s))} | "
              f"{fmt(ratio1)} | {fmt(ratiob)} |")

    print("\n### Linear solvers (one process each; solver threads as given)\n")
    print("| problem | size | impl | solver | n (peer: free DOFs) | analyse s | factor/set-up s | solve s "
          "| total s | nnz(L) | its | rel. residual | peak RSS MiB (time -v) | load before "
          "| peer total / ours total |")
    print("|---|---|---|---|---|---|---|---|---|---|---|---|---|---|---|")
    for (problem, size), rs in cases.items():
        direct_peers = [r for r in rs if r["impl"] != "dilata"
                        and (r["solver"] == "superlu" or r["solver"].startswith("cholmod"))]
        for r in rs:
            if r["solver"] == "none":
                continue
            total = r["analyze_s"] + r["factor_s"] + r["solve_s"]
            ratios = ""
            if r["impl"] == "dilata":
                ratios = ", ".join(
                    f"{p['solver']}: {fmt((p['analyze_s'] + p['factor_s'] + p['solve_s']) / total)}"
                    for p in direct_peers)
            n = r.get("n_free", r["n_dofs"])
            print(f"| {problem} | {size} | {r['impl']} | {r['solver']} | {n} | "
                  f"{fmt(r['analyze_s'])} | {fmt(r['factor_s'])} | {fmt(r['solve_s'])} | "
                  f"{fmt(total)} | {fmt(r['factor_nnz'] or None)} | {r['iterations']} | "
                  f"{r['rel_residual']:.1e} | {fmt(r['time_v_max_rss_mib'], 4)} | "
                  f"{r['loadavg_before']} | {ratios} |")


if __name__ == "__main__":
    main()
