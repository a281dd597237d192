#!/usr/bin/env python3
"""Cross-check Dilata's MSH reader against meshio, an independent reader.

Usage:
    check_msh.py DILATA FILE.msh...        compare `DILATA mesh FILE --json` with meshio
    check_msh.py --meshio-only FILE.msh... print what meshio says (no Dilata binary needed)

`dilata mesh FILE --json` prints one JSON object; the keys used here are
    {"nodes": N, "dim": d, "cells": {"tet10": n, ...},
     "regions": {"name": n_cells}, "boundaries": {"name": n_facets},
     "node_sets": {"name": n_nodes}}
(other keys are ignored).

The same file read with meshio gives the expected values:
* node count: meshio's points;
* cells per kind of the top dimension, each distinct cell counted once (MSH 2.2 files may list
  an element once per physical group, and meshio keeps every copy);
* physical group names: meshio's field_data names, plus `group_<dim>_<tag>` for physical tags
  that carry cells but have no name (Dilata's documented default name);
* per group, by its dimension: top dimension -> region size (distinct cells), one below ->
  boundary size (distinct facet elements), lower -> node-set size (distinct nodes).
It also checks that the sample files hold higher-order nodes where meshio (which converts to
the VTK ordering) expects them: mid-edge nodes at edge midpoints, face and body centres at
corner means.

One line per check; exit status 1 on any mismatch.
"""

import json
import subprocess
import sys

import meshio
import numpy as np

# meshio cell type names -> Dilata kind names (meshio's documented type names, common
# practice, no source beyond meshio itself).
KIND = {
    "vertex": "point1", "line": "line2", "line3": "line3", "triangle": "tri3",
    "triangle6": "tri6", "quad": "quad4", "quad8": "quad8", "quad9": "quad9",
    "tetra": "tet4", "tetra10": "tet10", "hexahedron": "hex8", "hexahedron20": "hex20",
    "hexahedron27": "hex27",
}
DIM = {"point1": 0, "line2": 1, "line3": 1, "tri3": 2, "tri6": 2, "quad4": 2, "quad8": 2,
       "quad9": 2, "tet4": 3, "tet10": 3, "hex8": 3, "hex20": 3, "hex27": 3}

# VTK node ordering of quadratic cells: mid-edge nodes as corner pairs, in node order after
# the corners (VTK file format documentation, quadratic cell types; from memory).
VTK_EDGES = {
    "line3": [(0, 1)],
    "tri6": [(0, 1), (1, 2), (2, 0)],
    "quad8": [(0, 1), (1, 2), (2, 3), (3, 0)],
    "quad9": [(0, 1), (1, 2), (2, 3), (3, 0)],
    "tet10": [(0, 1), (1, 2), (2, 0), (0, 3), (1, 3), (2, 3)],
    "hex20": [(0, 1), (1, 2), (2, 3), (3, 0), (4, 5), (5, 6), (6, 7), (7, 4), (0, 4), (1, 5),
              (2, 6), (3, 7)],
    "hex27": [(0, 1), (1, 2), (2, 3), (3, 0), (4, 5), (5, 6), (6, 7), (7, 4), (0, 4), (1, 5),
              (2, 6), (3, 7)],
}
# VTK triquadratic hexahedron face centres: x-min, x-max, y-min, y-max, z-min, z-max (VTK
# documentation of vtkTriQuadraticHexahedron; from memory), then the body centre.
VTK_HEX27_FACES = [(0, 3, 7, 4), (1, 2, 6, 5), (0, 1, 5, 4), (3, 2, 6, 7), (0, 1, 2, 3),
                   (4, 5, 6, 7)]
N_CORNERS = {"line3": 2, "tri6": 3, "quad8": 4, "quad9": 4, "tet10": 4, "hex20": 8, "hex27": 8}


class Report:
    def __init__(self):
        self.failures = 0

    def check(self, file, what, ours, theirs):
        ok = ours == theirs
        self.failures += 0 if ok else 1
        print(f"{'ok  ' if ok else 'FAIL'} {file}: {what}: dilata={ours} meshio={theirs}")

    def note(self, file, what, ok, detail):
        self.failures += 0 if ok else 1
        print(f"{'ok  ' if ok else 'FAIL'} {file}: {what}: {detail}")


def physical_key(mesh):
    """The cell_data key meshio uses for MSH physical tags (it ends in ':physical')."""
    return next((k for k in mesh.cell_data if k.endswith(":physical")), None)


def expected_from_meshio(path):
    """What Dilata should report for `path`, derived from meshio's reading."""
    m = meshio.read(path)
    blocks = [(KIND[b.type], np.asarray(b.data)) for b in m.cells]
    top = max(DIM[k] for k, _ in blocks)
    cells = {}
    seen = set()
    for kind, data in blocks:
        if DIM[kind] != top:
            continue
        for row in data:
            key = (kind, frozenset(int(v) for v in row))
            if key not in seen:
                seen.add(key)
                cells[kind] = cells.get(kind, 0) + 1

    # Members of each group: (dimension, list of (block index, row index)).
    groups = {}
    named = {}
    for name, value in m.field_data.items():
        tag, dim = int(value[0]), int(value[1])
        named[(dim, tag)] = name
        groups[name] = (dim, [])
    phys_key = physical_key(m)
    phys = m.cell_data.get(phys_key) if phys_key else None
    if phys is not None and len(phys) != len(blocks):
        phys = None
        print(f"note {path}: physical tags not aligned with cell blocks; unnamed groups not derived")
    by_sets = any(name in m.cell_sets for name in m.field_data)
    for k, (kind, data) in enumerate(blocks):
        dim = DIM[kind]
        if by_sets:
            for name in m.field_data:
                rows = m.cell_sets.get(name, [None] * len(blocks))[k]
                if rows is not None:
                    groups[name][1].extend((k, int(i)) for i in rows)
        if phys is not None:
            for i, tag in enumerate(np.asarray(phys[k]).tolist()):
                if tag == 0:
                    continue
                name = named.get((dim, tag))
                if name is None:
                    name = f"group_{dim}_{tag}"
                    groups.setdefault(name, (dim, []))
                elif by_sets:
                    continue
                groups[name][1].append((k, i))

    regions, boundaries, node_sets = {}, {}, {}
    for name, (dim, members) in groups.items():
        if not members and name in m.field_data:
            # A named group without elements: Dilata has nothing to attach it to.
            continue
        distinct = {(blocks[k][0], frozenset(int(v) for v in blocks[k][1][i])) for k, i in members}
        if dim == top:
            regions[name] = len(distinct)
        elif dim == top - 1:
            boundaries[name] = len(distinct)
        else:
            node_sets[name] = len(set().union(*(s for _, s in distinct)) if distinct else set())
    return m, {"nodes": len(m.points), "dim": top, "cells": cells, "regions": regions,
               "boundaries": boundaries, "node_sets": node_sets}


def check_orderings(report, path, m):
    """Higher-order nodes of the file, as meshio converted them, sit where VTK expects."""
    worst = 0.0
    for b in m.cells:
        kind = KIND[b.type]
        if kind not in VTK_EDGES:
            continue
        x = m.points[np.asarray(b.data)]
        nc = N_CORNERS[kind]
        for j, (a, c) in enumerate(VTK_EDGES[kind]):
            worst = max(worst, float(np.abs(x[:, nc + j] - (x[:, a] + x[:, c]) / 2).max()))
        if kind == "quad9":
            worst = max(worst, float(np.abs(x[:, 8] - x[:, :4].mean(axis=1)).max()))
        if kind == "hex27":
            for j, face in enumerate(VTK_HEX27_FACES):
                worst = max(worst, float(np.abs(x[:, 20 + j] - x[:, list(face)].mean(axis=1)).max()))
            worst = max(worst, float(np.abs(x[:, 26] - x[:, :8].mean(axis=1)).max()))
    report.note(path, "higher-order nodes at VTK positions (meshio's conversion)", worst < 1e-12,
                f"largest distance {worst:g}")


def main(argv):
    if len(argv) < 2:
        print(__doc__)
        return 2
    meshio_only = argv[0] == "--meshio-only"
    dilata = None if meshio_only else argv[0]
    report = Report()
    for path in argv[1:]:
        m, want = expected_from_meshio(path)
        check_orderings(report, path, m)
        if meshio_only:
            print(f"meshio {path}: {json.dumps(want, sort_keys=True)}")
            continue
        run = subprocess.run([dilata, "mesh", path, "--json"], capture_output=True, text=True)
        if run.returncode != 0:
            report.note(path, "dilata mesh --json", False,
                        f"exit status {run.returncode}: {run.stderr.strip()}")
            continue
        try:
            got = json.loads(run.stdout)
        except json.JSONDecodeError as e:
            report.note(path, "dilata mesh --json output", False, f"not JSON ({e})")
            continue
        report.check(path, "node count", got.get("nodes"), want["nodes"])
        report.check(path, "dimension", got.get("dim"), want["dim"])
        report.check(path, "cells per kind", dict(sorted(got.get("cells", {}).items())),
                     dict(sorted(want["cells"].items())))
        ours = set(got.get("regions", {})) | set(got.get("boundaries", {})) | set(got.get("node_sets", {}))
        theirs = set(want["regions"]) | set(want["boundaries"]) | set(want["node_sets"])
        report.check(path, "physical group names", sorted(ours), sorted(theirs))
        for section, unit in [("regions", "cells"), ("boundaries", "facets"), ("node_sets", "nodes")]:
            for name in sorted(set(got.get(section, {})) | set(want[section])):
                report.check(path, f"{section} '{name}' ({unit})", got.get(section, {}).get(name),
                             want[section].get(name))
    print(f"{report.failures} mismatch(es)")
    return 1 if report.failures else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
