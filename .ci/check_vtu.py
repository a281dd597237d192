#!/usr/bin/env python3
"""Validate a VTK XML unstructured-grid file (.vtu) with the reference reader of the `vtk` package.

Usage:
    check_vtu.py FILE.vtu [--points N] [--cells M]
                 [--cell-type-counts '{"tet10": 12}']
                 [--array 'ASSOC:NAME:COMPONENTS[:INDEX:VALUE]' ...]
                 [--file-attr KEY=VALUE ...]
                 [--cell-points 'CELL:N0,N1,...' ...]
                 [--expect-json FILE]

The file is read by vtkXMLUnstructuredGridReader in a child process (this same script run with
`--child`), so that a crash, hang or error message inside VTK becomes one clear failure line here
instead of killing or blocking the caller. VTK errors and warnings raised while reading are caught
by an observer and count as failures.

Checks, one output line each ("OK ..." or "FAIL ..."):
  * the file could be read, without VTK errors or warnings;
  * number of points and number of cells;
  * cell-type counts (keys are Dilata cell names such as "tet10", or numeric VTK type ids);
    every cell type present in the file must be listed, with its count;
  * for every expected array: it exists, its number of components, and optionally the value at a
    flat index (tuple * components + component), to 1e-12 relative tolerance
    (|got - want| <= 1e-12 * max(|got|, |want|), so zero must be exactly zero);
  * every point array in the file has N tuples and every cell array M tuples;
  * optionally, the point ids of given cells, in order (this checks the node ordering);
  * attributes of the root VTKFile element (e.g. header_type=UInt64,
    compressor=vtkZLibDataCompressor), read from the XML text.

ASSOC is "point" (point data), "cell" (cell data) or "coords" (the point coordinates; NAME is then
ignored, write e.g. "coords:Points:3:4:1.5").

Expectation file (--expect-json), so that a program can write its expectations next to its output.
All keys are optional; command-line options add to (and for points/cells override) the file:
    {
      "points": 9,
      "cells": 1,
      "cell_type_counts": {"quad9": 1},
      "file_attributes": {"type": "UnstructuredGrid", "header_type": "UInt64"},
      "cell_points": [[0, [0, 2, 12, 10, 1, 7, 11, 5, 6]]],
      "arrays": [
        {"association": "point", "name": "u", "components": 3,
         "values": [[0, 0.5], [4, -1.25]]},
        {"association": "cell", "name": "region", "components": 1, "values": [[0, 0]]}
      ]
    }
"values" lists [flat index, expected value] pairs; JSON numbers printed with round-trip precision
(e.g. Rust's `{:e}` or Python's repr) make the comparison exact in practice.

Exit status: 0 when every check passes, 1 when any check fails, 2 for a usage error.
Sources: VTK file formats documentation (XML UnstructuredGrid); cell type ids from vtkCellType.h,
taken here from the `vtk` package's own constants.
"""

import argparse
import json
import os
import subprocess
import sys
import xml.etree.ElementTree as ET

CHILD_TIMEOUT_S = 120
REL_TOL = 1e-12

# Dilata cell names -> VTK constant names (vtkCellType.h); ids are looked up in the vtk package.
CELL_NAMES = {
    "point1": "VTK_VERTEX",
    "line2": "VTK_LINE",
    "line3": "VTK_QUADRATIC_EDGE",
    "tri3": "VTK_TRIANGLE",
    "tri6": "VTK_QUADRATIC_TRIANGLE",
    "quad4": "VTK_QUAD",
    "quad8": "VTK_QUADRATIC_QUAD",
    "quad9": "VTK_BIQUADRATIC_QUAD",
    "tet4": "VTK_TETRA",
    "tet10": "VTK_QUADRATIC_TETRA",
    "hex8": "VTK_HEXAHEDRON",
    "hex20": "VTK_QUADRATIC_HEXAHEDRON",
    "hex27": "VTK_TRIQUADRATIC_HEXAHEDRON",
}


# --------------------------------------------------------------------------------------------
# Child: read the file with VTK and report a JSON summary on stdout.
# --------------------------------------------------------------------------------------------


def child_main(path):
    """Read PATH with vtkXMLUnstructuredGridReader; requests (JSON on stdin) name the values and
    cells to return: {"values": [[assoc, name, flat_index], ...], "cells": [cell_index, ...]}."""
    requests = json.load(sys.stdin)
    import vtk  # imported only in the child

    # Route every VTK error and warning (from the reader and from its internal XML parser) into a
    # string instead of a console window or stderr, so that they can be reported as failures.
    output = vtk.vtkStringOutputWindow()
    vtk.vtkOutputWindow.SetInstance(output)
    vtk.vtkObject.GlobalWarningDisplayOn()
    reader = vtk.vtkXMLUnstructuredGridReader()
    reader.SetFileName(path)
    summary = {"can_read": bool(reader.CanReadFile(path))}
    if not summary["can_read"]:
        json.dump(summary, sys.stdout)
        return
    reader.Update()
    grid = reader.GetOutput()
    text = output.GetOutput().strip()
    summary["vtk_messages"] = [line for line in text.splitlines() if line.strip()]
    summary["error_code"] = reader.GetErrorCode()
    summary["points"] = grid.GetNumberOfPoints()
    summary["cells"] = grid.GetNumberOfCells()
    type_counts = {}
    for i in range(grid.GetNumberOfCells()):
        t = grid.GetCellType(i)
        type_counts[t] = type_counts.get(t, 0) + 1
    summary["cell_type_counts"] = {str(k): v for k, v in sorted(type_counts.items())}
    summary["cell_type_ids"] = {name: getattr(vtk, const) for name, const in CELL_NAMES.items()}

    def arrays_of(data):
        out = {}
        for i in range(data.GetNumberOfArrays()):
            a = data.GetAbstractArray(i)
            out[a.GetName()] = a
        return out

    point_arrays = arrays_of(grid.GetPointData())
    cell_arrays = arrays_of(grid.GetCellData())
    coords = grid.GetPoints().GetData() if grid.GetPoints() is not None else None

    def describe(arrays):
        return {
            name: {
                "components": a.GetNumberOfComponents(),
                "tuples": a.GetNumberOfTuples(),
                "type": a.GetDataTypeAsString(),
            }
            for name, a in arrays.items()
        }

    summary["point_arrays"] = describe(point_arrays)
    summary["cell_arrays"] = describe(cell_arrays)
    if coords is not None:
        summary["coords"] = {
            "components": coords.GetNumberOfComponents(),
            "tuples": coords.GetNumberOfTuples(),
            "type": coords.GetDataTypeAsString(),
        }
    values = []
    for assoc, name, index in requests["values"]:
        table = {"point": point_arrays, "cell": cell_arrays}
        a = coords if assoc == "coords" else table.get(assoc, {}).get(name)
        if a is None or index < 0 or index >= a.GetNumberOfValues():
            values.append(None)
        else:
            values.append(float(a.GetVariantValue(index).ToDouble()))
    summary["values"] = values
    cell_points = []
    for c in requests["cells"]:
        if 0 <= c < grid.GetNumberOfCells():
            ids = vtk.vtkIdList()
            grid.GetCellPoints(c, ids)
            cell_points.append([ids.GetId(k) for k in range(ids.GetNumberOfIds())])
        else:
            cell_points.append(None)
    summary["cell_points"] = cell_points
    json.dump(summary, sys.stdout)


# --------------------------------------------------------------------------------------------
# Parent: gather expectations, run the child, compare.
# --------------------------------------------------------------------------------------------


class Report:
    """Prints one line per check and remembers whether any failed."""

    def __init__(self):
        self.failed = 0
        self.passed = 0

    def check(self, ok, what):
        print(("OK   " if ok else "FAIL ") + what)
        if ok:
            self.passed += 1
        else:
            self.failed += 1
        return ok


def parse_array_spec(spec):
    """'ASSOC:NAME:COMPONENTS[:INDEX:VALUE]' -> expectation dict."""
    parts = spec.split(":")
    if len(parts) not in (3, 5):
        raise ValueError(f"--array '{spec}': expected ASSOC:NAME:COMPONENTS[:INDEX:VALUE]")
    assoc, name, comps = parts[0], parts[1], int(parts[2])
    if assoc not in ("point", "cell", "coords"):
        raise ValueError(f"--array '{spec}': association must be point, cell or coords")
    values = [[int(parts[3]), float(parts[4])]] if len(parts) == 5 else []
    return {"association": assoc, "name": name, "components": comps, "values": values}


def load_expectations(args):
    exp = {"points": None, "cells": None, "cell_type_counts": None, "file_attributes": {}, "arrays": [], "cell_points": []}
    if args.expect_json:
        with open(args.expect_json, encoding="utf-8") as f:
            data = json.load(f)
        unknown = set(data) - set(exp)
        if unknown:
            raise ValueError(f"{args.expect_json}: unknown keys {sorted(unknown)}")
        for key in ("points", "cells", "cell_type_counts"):
            if key in data:
                exp[key] = data[key]
        exp["file_attributes"].update(data.get("file_attributes", {}))
        exp["arrays"].extend(data.get("arrays", []))
        exp["cell_points"].extend(data.get("cell_points", []))
    if args.points is not None:
        exp["points"] = args.points
    if args.cells is not None:
        exp["cells"] = args.cells
    if args.cell_type_counts is not None:
        exp["cell_type_counts"] = json.loads(args.cell_type_counts)
    for attr in args.file_attr:
        key, sep, value = attr.partition("=")
        if not sep:
            raise ValueError(f"--file-attr '{attr}': expected KEY=VALUE")
        exp["file_attributes"][key] = value
    for spec in args.array:
        exp["arrays"].append(parse_array_spec(spec))
    for spec in args.cell_points:
        cell, sep, ids = spec.partition(":")
        if not sep:
            raise ValueError(f"--cell-points '{spec}': expected CELL:N0,N1,...")
        exp["cell_points"].append([int(cell), [int(i) for i in ids.split(",")]])
    if exp["points"] is None or exp["cells"] is None:
        raise ValueError("the number of points and cells must be given (options or --expect-json)")
    return exp


def read_root_attributes(path):
    """Attributes of the root element, read without loading the (possibly large) data."""
    for _event, elem in ET.iterparse(path, events=("start",)):
        return dict(elem.attrib)
    return {}


def close_enough(got, want):
    return abs(got - want) <= REL_TOL * max(abs(got), abs(want))


def run_checks(path, exp, report):
    if not report.check(os.path.isfile(path), f"file exists: {path}"):
        return
    try:
        attrs = read_root_attributes(path)
        report.check(True, "XML root element parses: " + " ".join(f'{k}="{v}"' for k, v in attrs.items()))
    except ET.ParseError as e:
        report.check(False, f"XML root element parses: {e}")
        attrs = {}
    for key, want in sorted(exp["file_attributes"].items()):
        got = attrs.get(key)
        report.check(got == want, f"VTKFile attribute {key}: {got!r} (expected {want!r})")

    requests = []
    for a in exp["arrays"]:
        for index, _value in a.get("values", []):
            requests.append([a["association"], a["name"], int(index)])
    try:
        proc = subprocess.run(
            [sys.executable, os.path.abspath(__file__), "--child", path],
            input=json.dumps({"values": requests, "cells": [int(c) for c, _ in exp["cell_points"]]}),
            capture_output=True,
            text=True,
            timeout=CHILD_TIMEOUT_S,
            check=False,
        )
    except subprocess.TimeoutExpired:
        report.check(False, f"VTK reader finished within {CHILD_TIMEOUT_S} s")
        return
    if proc.returncode != 0:
        tail = (proc.stderr.strip().splitlines() or ["(no message)"])[-1]
        report.check(False, f"VTK reader process exited with status {proc.returncode}: {tail}")
        return
    s = json.loads(proc.stdout)
    if not report.check(s["can_read"], "vtkXMLUnstructuredGridReader accepts the file"):
        return
    msgs = s["vtk_messages"]
    first = f"; first: {' '.join(m.strip() for m in msgs[:2])}" if msgs else ""
    report.check(not msgs, f"no VTK errors or warnings while reading ({len(msgs)} message lines{first})")
    report.check(s["error_code"] == 0, f"reader error code: {s['error_code']} (expected 0)")
    report.check(s["points"] == exp["points"], f"points: {s['points']} (expected {exp['points']})")
    report.check(s["cells"] == exp["cells"], f"cells: {s['cells']} (expected {exp['cells']})")

    if exp["cell_type_counts"] is not None:
        ids = s["cell_type_ids"]
        want = {}
        for key, count in exp["cell_type_counts"].items():
            vtk_id = ids[key] if key in ids else int(key)
            want[str(vtk_id)] = count
        got = s["cell_type_counts"]
        names = {str(v): k for k, v in ids.items()}
        for t in sorted(set(want) | set(got), key=int):
            label = f"{names.get(t, '?')} (VTK type {t})"
            report.check(got.get(t, 0) == want.get(t, 0), f"cells of {label}: {got.get(t, 0)} (expected {want.get(t, 0)})")

    tables = {"point": s["point_arrays"], "cell": s["cell_arrays"]}
    value_iter = iter(s["values"])
    for a in exp["arrays"]:
        assoc, name, comps = a["association"], a["name"], a["components"]
        label = f"{assoc} array '{name}'" if assoc != "coords" else "point coordinates"
        info = s.get("coords") if assoc == "coords" else tables.get(assoc, {}).get(name)
        values = a.get("values", [])
        if not report.check(info is not None, f"{label} present"):
            for _ in values:
                next(value_iter)
            continue
        report.check(info["components"] == comps, f"{label} components: {info['components']} (expected {comps}), type {info['type']}")
        for (index, want), got in zip(values, [next(value_iter) for _ in values]):
            ok = got is not None and close_enough(got, float(want))
            report.check(ok, f"{label} value[{index}]: {got!r} (expected {float(want)!r})")

    for (cell, want), got in zip(exp["cell_points"], s["cell_points"]):
        report.check(got == list(want), f"point ids of cell {cell}: {got} (expected {list(want)})")

    for assoc, n in (("point", s["points"]), ("cell", s["cells"])):
        for name, info in sorted(tables[assoc].items()):
            report.check(info["tuples"] == n, f"{assoc} array '{name}' tuples: {info['tuples']} (expected {n})")
    if "coords" in s:
        report.check(s["coords"]["tuples"] == s["points"], f"point coordinates tuples: {s['coords']['tuples']} (expected {s['points']})")


def main(argv):
    if len(argv) == 3 and argv[1] == "--child":
        child_main(argv[2])
        return 0
    p = argparse.ArgumentParser(description="Validate a .vtu file with the vtk package's reader.")
    p.add_argument("file")
    p.add_argument("--points", type=int)
    p.add_argument("--cells", type=int)
    p.add_argument("--cell-type-counts", help='JSON object, e.g. \'{"tet10": 12}\'')
    p.add_argument("--array", action="append", default=[], help="ASSOC:NAME:COMPONENTS[:INDEX:VALUE]")
    p.add_argument("--file-attr", action="append", default=[], help="KEY=VALUE on the VTKFile element")
    p.add_argument("--cell-points", action="append", default=[], help="CELL:N0,N1,... point ids of a cell")
    p.add_argument("--expect-json", help="JSON file of expectations (format in the script header)")
    args = p.parse_args(argv[1:])
    try:
        exp = load_expectations(args)
    except (ValueError, OSError, json.JSONDecodeError) as e:
        print(f"usage error: {e}", file=sys.stderr)
        return 2
    report = Report()
    run_checks(args.file, exp, report)
    print(f"{report.passed} passed, {report.failed} failed")
    return 1 if report.failed else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
