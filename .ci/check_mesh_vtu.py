#!/usr/bin/env python3
"""For every mesh file given: `dilata mesh FILE --json` gives the counts, `dilata mesh FILE --vtu`
writes the mesh, and check_vtu.py reads that file with VTK's own XML reader and checks point,
cell and cell-type counts and the region array. Files with quadratic cells must be among them.

Usage: check_mesh_vtu.py DILATA WORKDIR MESH...
"""

import json
import os
import subprocess
import sys

QUADRATIC = {"line3", "tri6", "quad8", "quad9", "tet10", "hex20", "hex27"}


def main():
    if len(sys.argv) < 4:
        print(__doc__)
        return 2
    dilata, work, meshes = sys.argv[1], sys.argv[2], sys.argv[3:]
    here = os.path.dirname(os.path.abspath(__file__))
    failed = 0
    saw_quadratic = False
    for m in meshes:
        summary = json.loads(subprocess.run([dilata, "mesh", m, "--json"], check=True, capture_output=True, text=True).stdout)
        out = os.path.join(work, os.path.basename(m) + ".vtu")
        subprocess.run([dilata, "mesh", m, "--vtu", out], check=True, capture_output=True)
        cells = summary["cells"]
        saw_quadratic |= any(k in QUADRATIC for k in cells)
        cmd = [
            sys.executable, os.path.join(here, "check_vtu.py"), out,
            "--points", str(summary["nodes"]),
            "--cells", str(sum(cells.values())),
            "--cell-type-counts", json.dumps(cells),
            "--array", "cell:region:1",
        ]
        r = subprocess.run(cmd, capture_output=True, text=True)
        sys.stdout.write(f"--- {m}\n{r.stdout}")
        if r.returncode != 0:
            sys.stdout.write(r.stderr)
            failed += 1
    if not saw_quadratic:
        print("FAIL no quadratic-cell mesh among the inputs")
        failed += 1
    print(f"{len(meshes) - failed} passed, {failed} failed")
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
