"""One summary line per JSON record of fe_problems or peers.py read from stdin (other lines are
passed through): the solver phases, refinement steps, residual, entries of L and peak memory."""
import json
import sys

for line in sys.stdin:
    line = line.strip()
    if not line.startswith("{"):
        print(line)
        continue
    d = json.loads(line)
    total = d["analyze_s"] + d["factor_s"] + d["solve_s"]
    print(f"{d['solver']}: n {d['n_dofs']}, analyse {d['analyze_s']:.2f} s, "
          f"factor {d['factor_s']:.2f} s, solve {d['solve_s']:.2f} s, total {total:.2f} s, "
          f"steps {d.get('iterations', 0)}, residual {d['rel_residual']:.1e}, "
          f"entries of L {d['factor_nnz']}, peak RSS {d['peak_rss_mib']:.0f} MiB "
          f"(after assembly {d['peak_rss_after_assembly_mib']:.0f})")
