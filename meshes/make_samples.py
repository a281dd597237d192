#!/usr/bin/env python3
"""Write the small MSH sample files in this directory, byte by byte, from structured grids.

Standard library only; run `python3 meshes/make_samples.py` from the repository root (or
anywhere: files are written next to this script). The output is deterministic.

The layout of each section follows the MSH format specification, versions 2.2 and 4.1
(format documentation, "MSH file format"; written from memory of the specification, and
cross-checked by .ci/check_msh.py, which reads every file with an independent reader).
"""

import os
import struct

HERE = os.path.dirname(os.path.abspath(__file__))

# Element type codes (MSH specification, element types).
CODE = {"point": 15, "line2": 1, "line3": 8, "tri3": 2, "tri6": 9, "quad4": 3, "quad8": 16,
        "quad9": 10, "tet4": 4, "tet10": 11, "hex8": 5, "hex20": 17, "hex27": 12}
DIM = {"point": 0, "line2": 1, "line3": 1, "tri3": 2, "tri6": 2, "quad4": 2, "quad8": 2,
       "quad9": 2, "tet4": 3, "tet10": 3, "hex8": 3, "hex20": 3, "hex27": 3}

# MSH node ordering of the higher-order nodes, after the corners (MSH specification, node
# ordering; from memory): mid-edge nodes as corner pairs, face centres as corner sets.
MSH_EDGES = {
    "line": [(0, 1)],
    "tri": [(0, 1), (1, 2), (2, 0)],
    "quad": [(0, 1), (1, 2), (2, 3), (3, 0)],
    "tet": [(0, 1), (1, 2), (2, 0), (0, 3), (2, 3), (1, 3)],
    "hex": [(0, 1), (0, 3), (0, 4), (1, 2), (1, 5), (2, 3), (2, 6), (3, 7), (4, 5), (4, 7),
            (5, 6), (6, 7)],
}
MSH_HEX_FACES = [(0, 1, 2, 3), (0, 1, 5, 4), (0, 3, 7, 4), (1, 2, 6, 5), (2, 3, 7, 6),
                 (4, 5, 6, 7)]


class Grid:
    """Points on an integer lattice; coordinates are lattice indices times `step`.

    Lattice points are doubled so that every midpoint of two lattice points is again one.
    """

    def __init__(self, step, tag_of=None):
        self.step = step
        self.index = {}      # doubled integer coords -> node tag
        self.order = []      # node tags in file order
        self.coords = {}     # node tag -> (x, y, z)
        self.tag_of = tag_of or (lambda k: k + 1)

    def node(self, p):
        """Tag of the node at doubled lattice point p (created on first use)."""
        if p not in self.index:
            tag = self.tag_of(len(self.order))
            self.index[p] = tag
            self.order.append(tag)
            self.coords[tag] = tuple(c * self.step / 2.0 for c in p)
        return self.index[p]


def mid(*pts):
    n = len(pts)
    s = [sum(p[i] for p in pts) for i in range(3)]
    assert all(v % n == 0 for v in s), pts
    return tuple(v // n for v in s)


def high_order(shape, corners, kind):
    """Lattice points of an element in MSH order: corners, mid-edge nodes, centres."""
    pts = list(corners)
    if kind in ("line3", "tri6", "quad8", "quad9", "tet10", "hex20", "hex27"):
        pts += [mid(corners[a], corners[b]) for a, b in MSH_EDGES[shape]]
    if kind == "quad9":
        pts.append(mid(*corners))
    if kind == "hex27":
        pts += [mid(*(corners[i] for i in f)) for f in MSH_HEX_FACES]
        pts.append(mid(*corners))
    return pts


class Model:
    """Elements with their physical groups; written as MSH 2.2 or 4.1."""

    def __init__(self, grid):
        self.grid = grid
        self.elements = []   # (kind, lattice points, entity tag)
        self.entities = {}   # (dim, entity tag) -> list of physical tags
        self.names = []      # (dim, physical tag, name)
        self.repeat = []     # 2.2 only: (element index, physical tag, new element tag or None)
        self.comment = None

    def add(self, kind, pts, entity):
        self.elements.append((kind, pts, entity))
        return len(self.elements) - 1

    def node_tags(self, pts):
        return [self.grid.node(p) for p in pts]

    def finish(self):
        """Create every node, in element order, before writing."""
        self.tags = [self.node_tags(pts) for _, pts, _ in self.elements]

    # ---------------------------------------------------------------- MSH 2.2
    def write22(self, binary):
        g = self.grid
        out = bytearray()
        out += b"$MeshFormat\n2.2 %d 8\n" % (1 if binary else 0)
        if binary:
            out += struct.pack("<i", 1) + b"\n"
        out += b"$EndMeshFormat\n"
        self._names(out)
        self._comment(out)
        out += b"$Nodes\n%d\n" % len(g.order)
        for t in g.order:
            x, y, z = g.coords[t]
            if binary:
                out += struct.pack("<iddd", t, x, y, z)
            else:
                out += b"%d %r %r %r\n" % (t, x, y, z)
        if binary:
            out += b"\n"
        out += b"$EndNodes\n"
        rows = []   # (element tag, kind, physical, entity, node tags)
        for i, (kind, _, ent) in enumerate(self.elements):
            phys = self.entities.get((DIM[kind], ent), [])
            rows.append((i + 1, kind, phys[0] if phys else 0, ent, self.tags[i]))
        for i, phys, new_tag in self.repeat:
            kind, _, ent = self.elements[i]
            rows.append((new_tag or i + 1, kind, phys, ent, self.tags[i]))
        out += b"$Elements\n%d\n" % len(rows)
        for tag, kind, phys, ent, nodes in rows:
            if binary:
                out += struct.pack("<iii", CODE[kind], 1, 2)
                out += struct.pack("<%di" % (3 + len(nodes)), tag, phys, ent, *nodes)
            else:
                out += b"%d %d 2 %d %d %s\n" % (tag, CODE[kind], phys, ent,
                                                 b" ".join(b"%d" % n for n in nodes))
        if binary:
            out += b"\n"
        out += b"$EndElements\n"
        return bytes(out)

    # ---------------------------------------------------------------- MSH 4.1
    def write41(self, binary):
        g = self.grid
        out = bytearray()
        out += b"$MeshFormat\n4.1 %d 8\n" % (1 if binary else 0)
        if binary:
            out += struct.pack("<i", 1) + b"\n"
        out += b"$EndMeshFormat\n"
        self._names(out)
        self._comment(out)

        def size(*v):
            return struct.pack("<%dQ" % len(v), *v) if binary else b" ".join(b"%d" % x for x in v)

        def ints(*v):
            return struct.pack("<%di" % len(v), *v) if binary else b" ".join(b"%d" % x for x in v)

        def reals(*v):
            return struct.pack("<%dd" % len(v), *v) if binary else b" ".join(b"%r" % x for x in v)

        sep = b"" if binary else b" "
        nl = b"" if binary else b"\n"
        ents = sorted({(DIM[k], e) for k, _, e in self.elements})
        out += b"$Entities\n"
        out += size(*[sum(1 for d, _ in ents if d == dim) for dim in range(4)]) + nl
        for dim, ent in ents:
            phys = self.entities.get((dim, ent), [])
            box = (0.0, 0.0, 0.0) if dim == 0 else (0.0, 0.0, 0.0, 1.0, 1.0, 1.0)
            rec = ints(ent) + sep + reals(*box) + sep + size(len(phys))
            if phys:
                rec += sep + ints(*phys)
            if dim > 0:
                rec += sep + size(0)
            out += rec + nl
        if binary:
            out += b"\n"
        out += b"$EndEntities\n"

        # Nodes in two blocks: the first half on the first top-dimension entity, the rest on
        # the first entity of the next lower dimension that has elements.
        top = max(d for d, _ in ents)
        first_top = next(e for d, e in ents if d == top)
        lower = [(d, e) for d, e in ents if d < top]
        half = len(g.order) // 2 if lower else len(g.order)
        blocks = [((top, first_top), g.order[:half])]
        if lower:
            blocks.append((lower[-1], g.order[half:]))
        tags = g.order
        out += b"$Nodes\n" + size(len(blocks), len(tags), min(tags), max(tags)) + nl
        for (dim, ent), part in blocks:
            out += ints(dim, ent, 0) + sep + size(len(part)) + nl
            for t in part:
                out += size(t) + nl
            for t in part:
                out += reals(*g.coords[t]) + nl
        if binary:
            out += b"\n"
        out += b"$EndNodes\n"

        groups = []  # ((dim, entity, kind), [element index])
        for i, (kind, _, ent) in enumerate(self.elements):
            key = (DIM[kind], ent, kind)
            if groups and groups[-1][0] == key:
                groups[-1][1].append(i)
            else:
                groups.append((key, [i]))
        n = len(self.elements)
        out += b"$Elements\n" + size(len(groups), n, 1, n) + nl
        for (dim, ent, kind), members in groups:
            out += ints(dim, ent, CODE[kind]) + sep + size(len(members)) + nl
            for i in members:
                out += size(i + 1, *self.tags[i]) + nl
        if binary:
            out += b"\n"
        out += b"$EndElements\n"
        return bytes(out)

    def _names(self, out):
        if self.names:
            out += b"$PhysicalNames\n%d\n" % len(self.names)
            for dim, tag, name in self.names:
                out += b'%d %d "%s"\n' % (dim, tag, name.encode())
            out += b"$EndPhysicalNames\n"

    def _comment(self, out):
        if self.comment:
            out += b"$Comments\n" + self.comment.encode() + b"\n$EndComments\n"


def scrambled(k):
    """Sparse, unordered node tags: a permutation of 0..96 stretched by 3, plus 5."""
    return 5 + 3 * ((k * 37) % 97)


# ------------------------------------------------------------------------ meshes
def tri3_plate(tag_of):
    """[0,2]x[0,1], 4x2 squares cut into two triangles each; boundary lines and a corner."""
    m = Model(Grid(0.5, tag_of))
    nx, ny = 4, 2
    P = lambda i, j: (2 * i, 2 * j, 0)
    for j in range(ny):
        for i in range(nx):
            a, b, c, d = P(i, j), P(i + 1, j), P(i + 1, j + 1), P(i, j + 1)
            m.add("tri3", [a, b, c], 1)
            m.add("tri3", [a, c, d], 1)
    for i in range(nx):
        m.add("line2", [P(i, 0), P(i + 1, 0)], 1)          # bottom
        m.add("line2", [P(i + 1, ny), P(i, ny)], 3)        # top
    for j in range(ny):
        m.add("line2", [P(0, j + 1), P(0, j)], 4)          # left
        m.add("line2", [P(nx, j), P(nx, j + 1)], 2)        # right
    m.add("point", [P(0, 0)], 1)
    m.entities = {(2, 1): [10], (1, 1): [1], (1, 2): [2], (1, 3): [3], (1, 4): [4], (0, 1): [20]}
    m.names = [(0, 20, "origin"), (1, 1, "bottom"), (1, 2, "right"), (1, 3, "top"),
               (1, 4, "left"), (2, 10, "plate")]
    return m


def quad_strip(kind, tag_of):
    """[0,2]x[0,1] as two quadratic quadrilaterals, line3 edges on bottom and top."""
    m = Model(Grid(1.0, tag_of))
    P = lambda i, j: (2 * i, 2 * j, 0)
    for i in range(2):
        corners = [P(i, 0), P(i + 1, 0), P(i + 1, 1), P(i, 1)]
        m.add(kind, high_order("quad", corners, kind), 1)
    for i in range(2):
        m.add("line3", high_order("line", [P(i, 0), P(i + 1, 0)], "line3"), 1)
        m.add("line3", high_order("line", [P(i + 1, 1), P(i, 1)], "line3"), 2)
    m.entities = {(2, 1): [5], (1, 1): [6], (1, 2): [7]}
    m.names = [(1, 6, "bottom"), (1, 7, "top"), (2, 5, "sheet")]
    return m


def signed_volume(p):
    a, b, c, d = p
    u = [b[i] - a[i] for i in range(3)]
    v = [c[i] - a[i] for i in range(3)]
    w = [d[i] - a[i] for i in range(3)]
    return (u[0] * (v[1] * w[2] - v[2] * w[1]) - u[1] * (v[0] * w[2] - v[2] * w[0])
            + u[2] * (v[0] * w[1] - v[1] * w[0]))


def tet_block(nx, tag_of):
    """nx unit cubes along x, each cut into six tet10 around its main diagonal."""
    m = Model(Grid(1.0, tag_of))
    P = lambda i, j, k: (2 * i, 2 * j, 2 * k)
    paths = [(0, 1, 2), (0, 2, 1), (1, 0, 2), (1, 2, 0), (2, 0, 1), (2, 1, 0)]
    faces = []
    for c in range(nx):
        for path in paths:
            pts = [[c, 0, 0]]
            for axis in path:
                q = list(pts[-1])
                q[axis] += 1
                pts.append(q)
            corners = [P(*q) for q in pts]
            if signed_volume(corners) < 0:
                corners[1], corners[2] = corners[2], corners[1]
            m.add("tet10", high_order("tet", corners, "tet10"), 1)
            for f in [(0, 1, 2), (0, 1, 3), (0, 2, 3), (1, 2, 3)]:
                faces.append([corners[i] for i in f])
    # Boundary triangles: faces lying in x = 0, x = 2 nx, z = 0 or z = 2.
    for f in faces:
        for axis, value, ent in [(0, 0, 1), (0, 2 * nx, 2), (2, 0, 3), (2, 2, 4)]:
            if all(p[axis] == value for p in f):
                m.add("tri6", high_order("tri", f, "tri6"), ent)
    m.add("line3", high_order("line", [P(0, 0, 0), P(0, 1, 0)], "line3"), 1)
    m.entities = {(3, 1): [1], (2, 1): [11], (2, 2): [12], (2, 3): [13], (2, 4): [13],
                  (1, 1): [30]}
    m.names = [(1, 30, "hinge"), (2, 11, "xmin"), (2, 12, "xmax"), (2, 13, "floor_and_roof"),
               (3, 1, "solid")]
    return m


def hex_block(kind, nx, ny, nz, tag_of):
    """nx x ny x nz unit hexahedra of the given kind, faces at x = 0 and x = nx."""
    m = Model(Grid(1.0, tag_of))
    P = lambda i, j, k: (2 * i, 2 * j, 2 * k)
    face_kind = {"hex8": "quad4", "hex20": "quad8", "hex27": "quad9"}[kind]
    for k in range(nz):
        for j in range(ny):
            for i in range(nx):
                c = [P(i, j, k), P(i + 1, j, k), P(i + 1, j + 1, k), P(i, j + 1, k),
                     P(i, j, k + 1), P(i + 1, j, k + 1), P(i + 1, j + 1, k + 1), P(i, j + 1, k + 1)]
                m.add(kind, high_order("hex", c, kind), 1)
    for k in range(nz):
        for j in range(ny):
            left = [P(0, j, k), P(0, j, k + 1), P(0, j + 1, k + 1), P(0, j + 1, k)]
            right = [P(nx, j, k), P(nx, j + 1, k), P(nx, j + 1, k + 1), P(nx, j, k + 1)]
            m.add(face_kind, high_order("quad", left, face_kind), 1)
            m.add(face_kind, high_order("quad", right, face_kind), 2)
    m.entities = {(3, 1): [1], (2, 1): [2], (2, 2): [3]}
    m.names = [(2, 2, "left"), (2, 3, "right"), (3, 1, "bar")]
    return m


def hex8_repeats():
    """2x2x1 hex8 with bottom faces; some elements listed again under a second group."""
    m = Model(Grid(1.0, scrambled))
    P = lambda i, j, k: (2 * i, 2 * j, 2 * k)
    for j in range(2):
        for i in range(2):
            c = [P(i, j, 0), P(i + 1, j, 0), P(i + 1, j + 1, 0), P(i, j + 1, 0),
                 P(i, j, 1), P(i + 1, j, 1), P(i + 1, j + 1, 1), P(i, j + 1, 1)]
            m.add("hex8", c, 1)
    for j in range(2):
        for i in range(2):
            m.add("quad4", [P(i, j, 0), P(i, j + 1, 0), P(i + 1, j + 1, 0), P(i + 1, j, 0)], 1)
    m.add("quad4", [P(0, 0, 1), P(1, 0, 1), P(1, 1, 1), P(0, 1, 1)], 2)
    m.entities = {(3, 1): [1], (2, 1): [3], (2, 2): [7]}
    # Element 1 again (same tag) and element 2 again (new tag 102) in "core"; bottom face
    # element 5 again (new tag 105) in "clamp".
    m.repeat = [(0, 2, None), (1, 2, 102), (4, 4, 105)]
    m.names = [(2, 3, "bottom"), (2, 4, "clamp"), (3, 1, "body"), (3, 2, "core")]
    m.comment = "hex8 sample: group 7 (dimension 2) has no name on purpose"
    return m


def main():
    files = {}
    m = tri3_plate(scrambled); m.finish()
    files["tri3_v22_ascii.msh"] = m.write22(binary=False)
    files["tri3_v41_ascii.msh"] = m.write41(binary=False)
    files["tri3_v41_binary.msh"] = m.write41(binary=True)
    m = quad_strip("quad9", scrambled); m.finish()
    files["quad9_v41_ascii.msh"] = m.write41(binary=False)
    m = quad_strip("quad8", None); m.finish()
    files["quad8_v22_binary.msh"] = m.write22(binary=True)
    m = tet_block(1, scrambled); m.finish()
    files["tet10_v41_ascii.msh"] = m.write41(binary=False)
    m = tet_block(2, None); m.finish()
    files["tet10_v22_binary.msh"] = m.write22(binary=True)
    m = hex8_repeats(); m.finish()
    files["hex8_v22_ascii_repeats.msh"] = m.write22(binary=False)
    m = hex_block("hex27", 2, 1, 1, scrambled); m.finish()
    files["hex27_v41_binary.msh"] = m.write41(binary=True)
    m = hex_block("hex20", 1, 1, 2, scrambled); m.comment = "hex20 sample"; m.finish()
    files["hex20_v41_ascii.msh"] = m.write41(binary=False)
    for name, data in files.items():
        with open(os.path.join(HERE, name), "wb") as f:
            f.write(data)
        print(f"{name}: {len(data)} bytes")


if __name__ == "__main__":
    main()
