#!/usr/bin/env python3
"""Write the demo drawings in fixtures/demo/.

Eight ASCII DXF drawings of profiles from Harrow Vale Extrusions, an invented extrusion
shop. Each drawing holds its profile(s) on layer PROFILE, plus the clutter of a real sheet
on other layers: a title frame of LINEs and TEXT on TITLE, dimensions on DIM, centre
lines on CENTER and notes as MTEXT on NOTES. All numbers are invented for the demo.

Usage: python3 scripts/make_demo.py [OUTDIR]      (default: fixtures/demo)

Standard library only. The output is deterministic: no timestamps, and the one random
perturbation (profile 3) uses a fixed seed. scripts/bench_gen.py reuses the writer and the
geometry helpers below, so both write the same DXF dialect.

Conventions, as in the DXF reference: a polyline vertex's bulge is tan(sweep/4) of the arc
to the next vertex, positive counter-clockwise; a loose ARC runs counter-clockwise from its
start angle to its end angle, in degrees.
"""

import math
import os
import random
import sys

SHOP = "HARROW VALE EXTRUSIONS"

# ---------------------------------------------------------------------------------------
# DXF writer
# ---------------------------------------------------------------------------------------


def fmt(v):
    """A group value as text: floats at full precision (repr), everything else as str."""
    if isinstance(v, float):
        return repr(v)
    return str(v)


class DxfWriter:
    """A minimal ASCII DXF file: HEADER, TABLES (LTYPE, LAYER), ENTITIES, EOF.

    `version` is "AC1015" (R2000: handles, subclass markers, LWPOLYLINE) or "AC1009" (R12:
    no handles, no subclass markers, old-style POLYLINE only). `insunits` None leaves
    $INSUNITS out (a unitless drawing). Group codes are right-aligned in three columns, as
    the common CAD programs write them.
    """

    def __init__(self, version="AC1015", insunits=4):
        assert version in ("AC1015", "AC1009")
        self.version = version
        self.insunits = insunits
        self.layers = {}  # name -> (colour, linetype), in insertion order
        self.body = []  # entity lines
        self.next_handle = 0x100  # entity handles; table handles are fixed below
        self.extmin = [math.inf, math.inf]
        self.extmax = [-math.inf, -math.inf]

    @property
    def r2000(self):
        return self.version == "AC1015"

    def layer(self, name, colour=7, linetype="CONTINUOUS"):
        self.layers.setdefault(name, (colour, linetype))

    def _grow(self, x, y, r=0.0):
        self.extmin[0] = min(self.extmin[0], x - r)
        self.extmin[1] = min(self.extmin[1], y - r)
        self.extmax[0] = max(self.extmax[0], x + r)
        self.extmax[1] = max(self.extmax[1], y + r)

    def _pairs(self, out, pairs):
        for code, value in pairs:
            out.append("%3d" % code)
            out.append(fmt(value))

    def _start(self, kind, layer, subclass):
        """Common head of an entity: type, handle, layer and subclass markers."""
        self.layer(layer)
        pairs = [(0, kind)]
        if self.r2000:
            pairs.append((5, "%X" % self.next_handle))
            self.next_handle += 1
            pairs.append((100, "AcDbEntity"))
        pairs.append((8, layer))
        if self.r2000 and subclass:
            pairs.append((100, subclass))
        return pairs

    def line(self, layer, p, q):
        pairs = self._start("LINE", layer, "AcDbLine")
        pairs += [(10, float(p[0])), (20, float(p[1])), (30, 0.0)]
        pairs += [(11, float(q[0])), (21, float(q[1])), (31, 0.0)]
        self._pairs(self.body, pairs)
        self._grow(*p)
        self._grow(*q)

    def circle(self, layer, c, r):
        pairs = self._start("CIRCLE", layer, "AcDbCircle")
        pairs += [(10, float(c[0])), (20, float(c[1])), (30, 0.0), (40, float(r))]
        self._pairs(self.body, pairs)
        self._grow(c[0], c[1], r)

    def arc(self, layer, c, r, start_deg, end_deg):
        """Counter-clockwise arc from `start_deg` to `end_deg` (DXF convention)."""
        pairs = self._start("ARC", layer, "AcDbCircle")
        pairs += [(10, float(c[0])), (20, float(c[1])), (30, 0.0), (40, float(r))]
        if self.r2000:
            pairs.append((100, "AcDbArc"))
        pairs += [(50, float(start_deg)), (51, float(end_deg))]
        self._pairs(self.body, pairs)
        self._grow(c[0], c[1], r)

    def lwpolyline(self, layer, verts, closed=True):
        """`verts` is a list of (x, y, bulge); bulge of vertex i belongs to the edge i -> i+1."""
        assert self.r2000, "LWPOLYLINE needs R2000"
        pairs = self._start("LWPOLYLINE", layer, "AcDbPolyline")
        pairs += [(90, len(verts)), (70, 1 if closed else 0), (43, 0.0)]
        for x, y, b in verts:
            pairs += [(10, float(x)), (20, float(y))]
            if b != 0.0:
                pairs.append((42, float(b)))
            self._grow(x, y)
        self._pairs(self.body, pairs)

    def polyline2d(self, layer, verts, closed=True):
        """Old-style 2-D POLYLINE with VERTEX entities and a SEQEND."""
        pairs = self._start("POLYLINE", layer, "AcDb2dPolyline")
        pairs += [(66, 1), (10, 0.0), (20, 0.0), (30, 0.0), (70, 1 if closed else 0)]
        self._pairs(self.body, pairs)
        for x, y, b in verts:
            pairs = self._start("VERTEX", layer, "AcDbVertex")
            if self.r2000:
                pairs.append((100, "AcDb2dVertex"))
            pairs += [(10, float(x)), (20, float(y)), (30, 0.0)]
            if b != 0.0:
                pairs.append((42, float(b)))
            self._pairs(self.body, pairs)
            self._grow(x, y)
        self._pairs(self.body, self._start("SEQEND", layer, None))

    def text(self, layer, p, height, s, rotation=0.0):
        pairs = self._start("TEXT", layer, "AcDbText")
        pairs += [(10, float(p[0])), (20, float(p[1])), (30, 0.0), (40, float(height)), (1, s)]
        if rotation:
            pairs.append((50, float(rotation)))
        if self.r2000:
            pairs.append((100, "AcDbText"))
        self._pairs(self.body, pairs)

    def mtext(self, layer, p, height, width, s):
        """Multi-line text; lines are separated by the MTEXT paragraph code \\P."""
        if not self.r2000:
            for i, part in enumerate(s.split("\\P")):
                self.text(layer, (p[0], p[1] - 1.6 * height * i), height, part)
            return
        pairs = self._start("MTEXT", layer, "AcDbMText")
        pairs += [(10, float(p[0])), (20, float(p[1])), (30, 0.0), (40, float(height))]
        pairs += [(41, float(width)), (71, 1), (72, 1), (1, s)]
        self._pairs(self.body, pairs)

    def to_string(self):
        out = []
        head = [(0, "SECTION"), (2, "HEADER"), (9, "$ACADVER"), (1, self.version)]
        if self.r2000:
            head += [(9, "$HANDSEED"), (5, "%X" % self.next_handle)]
        if self.insunits is not None:
            head += [(9, "$INSUNITS"), (70, self.insunits)]
        if self.extmin[0] <= self.extmax[0]:
            head += [(9, "$EXTMIN"), (10, self.extmin[0]), (20, self.extmin[1]), (30, 0.0)]
            head += [(9, "$EXTMAX"), (10, self.extmax[0]), (20, self.extmax[1]), (30, 0.0)]
        head += [(0, "ENDSEC")]
        self._pairs(out, head)

        tables = [(0, "SECTION"), (2, "TABLES")]
        linetypes = [("CONTINUOUS", "Solid line", []), ("CENTER", "Center ____ _ ____ _", [12.7, -2.54, 2.54, -2.54])]
        tables += self._table_head("LTYPE", 0x5, len(linetypes))
        for i, (name, desc, dashes) in enumerate(linetypes):
            tables += [(0, "LTYPE")]
            if self.r2000:
                tables += [(5, "%X" % (0x14 + i)), (100, "AcDbSymbolTableRecord"), (100, "AcDbLinetypeTableRecord")]
            tables += [(2, name), (70, 0), (3, desc), (72, 65), (73, len(dashes))]
            tables += [(40, float(sum(abs(d) for d in dashes)))]
            for d in dashes:
                tables += [(49, float(d))]
                if self.r2000:
                    tables += [(74, 0)]
        tables += [(0, "ENDTAB")]
        tables += self._table_head("LAYER", 0x2, len(self.layers) + 1)
        for i, (name, (colour, linetype)) in enumerate([("0", (7, "CONTINUOUS"))] + list(self.layers.items())):
            tables += [(0, "LAYER")]
            if self.r2000:
                tables += [(5, "%X" % (0x20 + i)), (100, "AcDbSymbolTableRecord"), (100, "AcDbLayerTableRecord")]
            tables += [(2, name), (70, 0), (62, colour), (6, linetype)]
        tables += [(0, "ENDTAB"), (0, "ENDSEC")]
        self._pairs(out, tables)

        self._pairs(out, [(0, "SECTION"), (2, "ENTITIES")])
        out += self.body
        self._pairs(out, [(0, "ENDSEC"), (0, "EOF")])
        return "\n".join(out) + "\n"

    def _table_head(self, name, handle, count):
        pairs = [(0, "TABLE"), (2, name)]
        if self.r2000:
            pairs += [(5, "%X" % handle), (100, "AcDbSymbolTable")]
        return pairs + [(70, count)]

    def save(self, path):
        with open(path, "w", encoding="ascii", newline="\n") as f:
            f.write(self.to_string())


# ---------------------------------------------------------------------------------------
# Geometry helpers
# ---------------------------------------------------------------------------------------


def fillet_polygon(points, radii):
    """Round the corners of a closed polygon.

    `points` are the sharp corners in order; `radii[i]` is the fillet radius at corner i (0
    keeps it sharp). Returns closed-polyline vertices (x, y, bulge). A fillet's sweep equals
    the turn at its corner, so its bulge is tan(turn/4), positive for a left turn.
    Consecutive tangent points that coincide (a fin tip made of two quarter rounds) are
    merged, keeping the bulge of the later arc.
    """
    n = len(points)
    if isinstance(radii, (int, float)):
        radii = [radii] * n
    # Tangent length of each fillet: r·tan(turn/2). Two fillets must fit on the edge between.
    tangent = []
    for i in range(n):
        p0, p1, p2 = points[i - 1], points[i], points[(i + 1) % n]
        d1 = unit(p1[0] - p0[0], p1[1] - p0[1])
        d2 = unit(p2[0] - p1[0], p2[1] - p1[1])
        turn = math.atan2(d1[0] * d2[1] - d1[1] * d2[0], d1[0] * d2[0] + d1[1] * d2[1])
        tangent.append(radii[i] * math.tan(abs(turn) / 2.0))
    for i in range(n):
        p1, p2 = points[i], points[(i + 1) % n]
        room = math.hypot(p2[0] - p1[0], p2[1] - p1[1])
        assert tangent[i] + tangent[(i + 1) % n] <= room + 1e-9, "fillets at %r and %r overlap" % (p1, p2)
    out = []
    for i in range(n):
        p0, p1, p2 = points[i - 1], points[i], points[(i + 1) % n]
        r = radii[i]
        d1 = unit(p1[0] - p0[0], p1[1] - p0[1])
        d2 = unit(p2[0] - p1[0], p2[1] - p1[1])
        turn = math.atan2(d1[0] * d2[1] - d1[1] * d2[0], d1[0] * d2[0] + d1[1] * d2[1])
        if r == 0 or abs(turn) < 1e-12:
            _push(out, (p1[0], p1[1], 0.0))
            continue
        t = tangent[i]
        a = (p1[0] - d1[0] * t, p1[1] - d1[1] * t)
        b = (p1[0] + d2[0] * t, p1[1] + d2[1] * t)
        _push(out, (a[0], a[1], math.tan(turn / 4.0)))
        _push(out, (b[0], b[1], 0.0))
    if len(out) > 1 and math.hypot(out[0][0] - out[-1][0], out[0][1] - out[-1][1]) < 1e-9:
        out.pop()
    # Check that tangent points of neighbouring fillets do not overlap.
    for i in range(len(out)):
        j = (i + 1) % len(out)
        assert math.hypot(out[j][0] - out[i][0], out[j][1] - out[i][1]) > 1e-9
    return out


def _push(out, v):
    if out and math.hypot(v[0] - out[-1][0], v[1] - out[-1][1]) < 1e-9:
        out[-1] = v
    else:
        out.append(v)


def unit(x, y):
    n = math.hypot(x, y)
    return (x / n, y / n)


def transform(verts, dx=0.0, dy=0.0, quarter_turns=0, mirror_x=False):
    """Move (x, y, bulge) vertices: mirror about x = 0, rotate by quarter turns, then shift.

    Quarter turns are done by swapping coordinates, so no rounding enters. A mirror
    reverses the sense of every arc, so bulges change sign.
    """
    out = []
    for x, y, b in verts:
        if mirror_x:
            x, b = -x, -b
        for _ in range(quarter_turns % 4):
            x, y = -y, x
        out.append((x + dx, y + dy, b))
    return out


def reverse(verts):
    """The same closed polyline, run the other way round (bulges move and change sign)."""
    n = len(verts)
    out = []
    for k in range(n):
        i = (n - k) % n  # vertices in reverse order, starting at vertex 0
        prev = (i - 1) % n  # the edge i-1 -> i becomes edge i -> i-1
        out.append((verts[i][0], verts[i][1], -verts[prev][2]))
    return out


def bulge_arc(p, q, b):
    """Centre, radius and DXF start/end angles (degrees, counter-clockwise) of a bulged edge."""
    cx, cy = (p[0] + q[0]) / 2.0, (p[1] + q[1]) / 2.0
    dx, dy = q[0] - p[0], q[1] - p[1]
    chord = math.hypot(dx, dy)
    # Offset of the centre from the chord midpoint, to the left of p -> q:
    # (chord/2)·cot(sweep/2) with sweep = 4·atan(b), i.e. (chord/2)·(1 - b²)/(2b).
    off = chord / 2.0 * (1.0 - b * b) / (2.0 * b)
    cx -= dy / chord * off
    cy += dx / chord * off
    r = chord / 2.0 * (1.0 + b * b) / (2.0 * abs(b))
    a_p = math.degrees(math.atan2(p[1] - cy, p[0] - cx)) % 360.0
    a_q = math.degrees(math.atan2(q[1] - cy, q[0] - cx)) % 360.0
    if b > 0:
        return (cx, cy), r, a_p, a_q
    return (cx, cy), r, a_q, a_p


def loose_entities(verts):
    """Split a closed (x, y, bulge) polyline into LINE and ARC records, in order."""
    out = []
    n = len(verts)
    for i in range(n):
        p, q, b = verts[i][:2], verts[(i + 1) % n][:2], verts[i][2]
        if b == 0.0:
            out.append(("LINE", p, q))
        else:
            c, r, a0, a1 = bulge_arc(p, q, b)
            out.append(("ARC", c, r, a0, a1))
    return out


def write_loose(dxf, layer, records):
    for rec in records:
        if rec[0] == "LINE":
            dxf.line(layer, rec[1], rec[2])
        else:
            dxf.arc(layer, rec[1], rec[2], rec[3], rec[4])


# ---------------------------------------------------------------------------------------
# Sheet clutter: title frame, dimensions, centre lines, notes
# ---------------------------------------------------------------------------------------


def sheet(dxf, bbox, part, title, material="ALLOY 6063-T6", scale="1:1"):
    """Frame and title block of LINEs and TEXT on layer TITLE around `bbox` (x0, y0, x1, y1).

    The frame is a closed rectangle of four LINEs, as on a real sheet: a reader that takes
    every layer would see it as one more closed loop, so the profile layer must be chosen.
    """
    dxf.layer("TITLE", 7)
    x0, y0, x1, y1 = bbox
    fx0, fy0 = x0 - 25.0, y0 - 55.0
    fx1, fy1 = max(x1 + 25.0, fx0 + 160.0), y1 + 25.0
    for p, q in [((fx0, fy0), (fx1, fy0)), ((fx1, fy0), (fx1, fy1)), ((fx1, fy1), (fx0, fy1)), ((fx0, fy1), (fx0, fy0))]:
        dxf.line("TITLE", p, q)
    # Title block: three rows at the bottom right, drawn as open lines inside the frame.
    tx0, ty1 = fx1 - 120.0, fy0 + 30.0
    dxf.line("TITLE", (tx0, fy0), (tx0, ty1))
    dxf.line("TITLE", (tx0, ty1), (fx1, ty1))
    dxf.line("TITLE", (tx0, fy0 + 20.0), (fx1, fy0 + 20.0))
    dxf.line("TITLE", (tx0, fy0 + 10.0), (fx1, fy0 + 10.0))
    dxf.line("TITLE", (tx0 + 60.0, fy0), (tx0 + 60.0, fy0 + 10.0))
    dxf.text("TITLE", (tx0 + 2.0, fy0 + 22.5), 3.5, SHOP)
    dxf.text("TITLE", (tx0 + 2.0, fy0 + 12.5), 3.5, "%s  %s" % (part, title))
    dxf.text("TITLE", (tx0 + 2.0, fy0 + 2.5), 2.5, material)
    dxf.text("TITLE", (tx0 + 62.0, fy0 + 2.5), 2.5, "SCALE %s  DIMS MM" % scale if dxf.insunits == 4 else "SCALE %s" % scale)


def dim_linear(dxf, p, q, offset, label=None):
    """A horizontal or vertical dimension drawn as plain lines and text on layer DIM."""
    dxf.layer("DIM", 3)
    horizontal = abs(q[1] - p[1]) < abs(q[0] - p[0])
    if horizontal:
        y = max(p[1], q[1]) + offset if offset > 0 else min(p[1], q[1]) + offset
        a, b = (p[0], y), (q[0], y)
        gap = 1.5 if offset > 0 else -1.5
        dxf.line("DIM", (p[0], p[1] + gap), (p[0], y + gap))
        dxf.line("DIM", (q[0], q[1] + gap), (q[0], y + gap))
        value = abs(q[0] - p[0])
        text_at, rot = ((p[0] + q[0]) / 2.0 - 3.0, y + 1.0), 0.0
    else:
        x = max(p[0], q[0]) + offset if offset > 0 else min(p[0], q[0]) + offset
        a, b = (x, p[1]), (x, q[1])
        gap = 1.5 if offset > 0 else -1.5
        dxf.line("DIM", (p[0] + gap, p[1]), (x + gap, p[1]))
        dxf.line("DIM", (q[0] + gap, q[1]), (x + gap, q[1]))
        value = abs(q[1] - p[1])
        text_at, rot = (x - 1.0, (p[1] + q[1]) / 2.0 - 3.0), 90.0
    dxf.line("DIM", a, b)
    for end in (a, b):  # architectural ticks
        dxf.line("DIM", (end[0] - 1.0, end[1] - 1.0), (end[0] + 1.0, end[1] + 1.0))
    dxf.text("DIM", text_at, 2.5, label or ("%g" % round(value, 2)), rot)


def centre_lines(dxf, c, half_w, half_h):
    """Two open crossing centre lines on layer CENTER, overshooting the part by 4 mm."""
    dxf.layer("CENTER", 1, "CENTER")
    dxf.line("CENTER", (c[0] - half_w - 4.0, c[1]), (c[0] + half_w + 4.0, c[1]))
    dxf.line("CENTER", (c[0], c[1] - half_h - 4.0), (c[0], c[1] + half_h + 4.0))


def new_drawing(version="AC1015", insunits=4):
    dxf = DxfWriter(version, insunits)
    dxf.layer("PROFILE", 4)
    return dxf


# ---------------------------------------------------------------------------------------
# The demo profiles
# ---------------------------------------------------------------------------------------


def frame_40x40():
    """HV-110: 40×40 slotted frame profile, one T-slot per side, centre bore, corner cavities."""
    dxf = new_drawing()
    # One side of the outline (the bottom face, run left to right) with its T-slot; the
    # other three sides are the same turned by quarter turns. Radius per corner.
    side = [
        ((-20.0, -20.0), 1.5),  # outer corner
        ((-4.1, -20.0), 0.4),  # slot mouth
        ((-4.1, -17.8), 0.3),  # underside of the lip
        ((-7.5, -17.8), 0.5),
        ((-7.5, -15.0), 0.5),  # slot wall, then a 45° flank to the slot floor
        ((-4.0, -11.5), 0.5),
        ((4.0, -11.5), 0.5),
        ((7.5, -15.0), 0.5),
        ((7.5, -17.8), 0.5),
        ((4.1, -17.8), 0.3),
        ((4.1, -20.0), 0.4),
    ]
    pts, radii = [], []
    for k in range(4):
        for (x, y), r in side:
            for _ in range(k):
                x, y = -y, x
            pts.append((x, y))
            radii.append(r)
    outline = fillet_polygon(pts, radii)
    dxf.lwpolyline("PROFILE", outline)
    dxf.circle("PROFILE", (0.0, 0.0), 3.4)  # core bore, tapping size for M8
    # Corner cavity (top right), its inner corner cut at 45° to leave an even diagonal web.
    cavity = fillet_polygon([(12.5, 10.0), (16.8, 10.0), (16.8, 16.8), (10.0, 16.8), (10.0, 12.5)], 0.8)
    for k in range(4):
        dxf.lwpolyline("PROFILE", transform(cavity, quarter_turns=k))
    centre_lines(dxf, (0.0, 0.0), 20.0, 20.0)
    dim_linear(dxf, (-20.0, -20.0), (20.0, -20.0), -8.0, "40")
    dim_linear(dxf, (20.0, -20.0), (20.0, 20.0), 8.0, "40")
    dim_linear(dxf, (-4.1, 20.0), (4.1, 20.0), 6.0, "8.2")
    dxf.layer("NOTES", 2)
    dxf.mtext("NOTES", (-20.0, -38.0), 2.5, 80.0, "SLOT 8 SERIES\\PCORE BORE %%c6.8 FOR M8 THREAD")
    sheet(dxf, (-20.0, -20.0, 20.0, 20.0), "HV-110", "FRAME PROFILE 40X40 SLOT 8")
    return dxf


def tube_50x3():
    """HV-152: round tube Ø50×3, two CIRCLEs, drawn away from the origin."""
    dxf = new_drawing()
    c = (120.0, 85.0)
    dxf.circle("PROFILE", c, 25.0)
    dxf.circle("PROFILE", c, 22.0)
    centre_lines(dxf, c, 25.0, 25.0)
    dim_linear(dxf, (c[0] - 25.0, c[1] - 25.0), (c[0] + 25.0, c[1] - 25.0), -8.0, "%%c50")
    dxf.layer("NOTES", 2)
    dxf.mtext("NOTES", (c[0] - 25.0, c[1] - 42.0), 2.5, 60.0, "WALL 3\\PTOL. EN 755-9")
    sheet(dxf, (c[0] - 25.0, c[1] - 25.0, c[0] + 25.0, c[1] + 25.0), "HV-152", "ROUND TUBE %%c50X3")
    return dxf


def angle_60x40x5():
    """HV-318: unequal angle 60×40×5, root fillet r6, toe rounds r2.5, as loose LINE/ARC.

    The entities come in a shuffled order, some LINEs run backwards, and every coordinate
    carries a rounding error of up to 1e-6 mm, as in drawings exported from real CAD
    sessions.
    """
    dxf = new_drawing()
    outline = fillet_polygon(
        [(0.0, 0.0), (60.0, 0.0), (60.0, 5.0), (5.0, 5.0), (5.0, 40.0), (0.0, 40.0)],
        [0.0, 0.0, 2.5, 6.0, 2.5, 0.0],
    )
    records = loose_entities(outline)
    rng = random.Random(318)
    rng.shuffle(records)

    def jitter(p):
        return (p[0] + rng.uniform(-1e-6, 1e-6), p[1] + rng.uniform(-1e-6, 1e-6))

    bent = []
    for rec in records:
        if rec[0] == "LINE":
            p, q = jitter(rec[1]), jitter(rec[2])
            if rng.random() < 0.5:
                p, q = q, p
            bent.append(("LINE", p, q))
        else:
            _, c, r, a0, a1 = rec
            bent.append(("ARC", jitter(c), r + rng.uniform(-1e-6, 1e-6), a0, a1))
    write_loose(dxf, "PROFILE", bent)
    dxf.layer("CENTER", 1, "CENTER")
    dxf.line("CENTER", (-4.0, 22.5), (64.0, 22.5))  # gauge line for the bolt holes, open
    dim_linear(dxf, (0.0, 0.0), (60.0, 0.0), -8.0)
    dim_linear(dxf, (0.0, 0.0), (0.0, 40.0), -8.0)
    dxf.text("DIM", (12.0, 12.0), 2.5, "R6")
    dxf.layer("NOTES", 2)
    dxf.mtext("NOTES", (0.0, -30.0), 2.5, 70.0, "TOE RADII R2.5\\PSHARP HEEL")
    sheet(dxf, (0.0, 0.0, 60.0, 40.0), "HV-318", "ANGLE 60X40X5")
    return dxf


def channel_80x40x4():
    """HV-204: channel 80×40×4, thickened inner corners with round screw ports."""
    dxf = new_drawing()
    pts = [
        (0.0, 0.0), (80.0, 0.0), (80.0, 40.0), (76.0, 40.0), (76.0, 15.0), (65.0, 4.0),
        (15.0, 4.0), (4.0, 15.0), (4.0, 40.0), (0.0, 40.0),
    ]
    radii = [1.0, 1.0, 0.5, 0.5, 2.0, 2.0, 2.0, 2.0, 0.5, 0.5]
    dxf.lwpolyline("PROFILE", fillet_polygon(pts, radii))
    dxf.circle("PROFILE", (74.0, 6.0), 2.1)  # screw port for a 4.8 mm self-tapping screw
    dxf.circle("PROFILE", (6.0, 6.0), 2.1)
    dxf.layer("CENTER", 1, "CENTER")
    dxf.line("CENTER", (40.0, -4.0), (40.0, 44.0))
    dim_linear(dxf, (0.0, 0.0), (80.0, 0.0), -8.0)
    dim_linear(dxf, (80.0, 0.0), (80.0, 40.0), 8.0)
    dxf.text("DIM", (60.0, 10.0), 2.5, "2X %%c4.2")
    dxf.layer("NOTES", 2)
    dxf.mtext("NOTES", (0.0, -30.0), 2.5, 80.0, "WALL 4\\PSCREW PORTS FOR ST4.8")
    sheet(dxf, (0.0, 0.0, 80.0, 40.0), "HV-204", "CHANNEL 80X40X4")
    return dxf


def heat_sink():
    """HV-731: finned heat sink, 100×6 base with 10 fins 2.5×30, one closed LWPOLYLINE."""
    dxf = new_drawing()
    base_w, base_t, fin_t, fin_h, n_fins, pitch = 100.0, 6.0, 2.5, 30.0, 10, 10.0
    pts, radii = [(0.0, 0.0), (base_w, 0.0), (base_w, base_t)], [1.0, 1.0, 0.5]
    for k in reversed(range(n_fins)):
        xc = pitch / 2.0 + k * pitch
        xr, xl = xc + fin_t / 2.0, xc - fin_t / 2.0
        # Root fillet r1, then a tip made of two quarter rounds of half the fin thickness.
        pts += [(xr, base_t), (xr, base_t + fin_h), (xl, base_t + fin_h), (xl, base_t)]
        radii += [1.0, fin_t / 2.0, fin_t / 2.0, 1.0]
    pts.append((0.0, base_t))
    radii.append(0.5)
    dxf.lwpolyline("PROFILE", fillet_polygon(pts, radii))
    dxf.layer("CENTER", 1, "CENTER")
    dxf.line("CENTER", (base_w / 2.0, -4.0), (base_w / 2.0, base_t + fin_h + 4.0))
    dim_linear(dxf, (0.0, 0.0), (base_w, 0.0), -8.0)
    dim_linear(dxf, (base_w, 0.0), (base_w, base_t + fin_h), 8.0)
    dxf.layer("NOTES", 2)
    dxf.mtext("NOTES", (0.0, -30.0), 2.5, 90.0, "10 FINS 2.5 THK, PITCH 10\\PFULL ROUND TIPS")
    sheet(dxf, (0.0, 0.0, base_w, base_t + fin_h), "HV-731", "HEAT SINK 100X36", "ALLOY 6060-T66")
    return dxf


def mullion():
    """HV-540: façade mullion 50×100, three cavities; outer as LINE/ARC, cavities as LWPOLYLINE."""
    dxf = new_drawing()
    # Outer wall with a 1 mm deep, 20 mm wide cover groove in the front face (y = 0).
    outer_pts = [
        (0.0, 0.0), (15.0, 0.0), (15.0, 1.0), (35.0, 1.0), (35.0, 0.0), (50.0, 0.0),
        (50.0, 100.0), (0.0, 100.0),
    ]
    outer = fillet_polygon(outer_pts, [2.0, 0.3, 0.3, 0.3, 0.3, 2.0, 2.0, 2.0])
    write_loose(dxf, "PROFILE", loose_entities(outer))
    cavities = [(3.0, 33.75), (36.25, 66.75), (69.25, 97.5)]  # webs 2.5 thick at y 35 and 68
    for i, (ya, yb) in enumerate(cavities):
        cav = fillet_polygon([(2.5, ya), (47.5, ya), (47.5, yb), (2.5, yb)], 1.5)
        if i == 1:
            cav = reverse(cav)  # drawn clockwise, as often happens; the tool must not care
        dxf.lwpolyline("PROFILE", cav)
    dxf.layer("CENTER", 1, "CENTER")
    dxf.line("CENTER", (25.0, -4.0), (25.0, 104.0))
    dim_linear(dxf, (0.0, 0.0), (50.0, 0.0), -8.0)
    dim_linear(dxf, (50.0, 0.0), (50.0, 100.0), 8.0)
    dxf.layer("NOTES", 2)
    dxf.mtext("NOTES", (60.0, 60.0), 2.5, 60.0, "WALLS 2.5, FRONT 3\\PWEBS 2.5\\PCOVER GROOVE 20X1")
    sheet(dxf, (0.0, 0.0, 50.0, 100.0), "HV-540", "MULLION 50X100")
    return dxf


def bar_sheet():
    """HV-901..904: stock sheet with three flat bars and a round bar, four profiles."""
    dxf = new_drawing()
    # HV-901 flat 20×3 as four LINEs (two reversed).
    x = 0.0
    dxf.line("PROFILE", (x, 0.0), (x + 20.0, 0.0))
    dxf.line("PROFILE", (x + 20.0, 3.0), (x + 20.0, 0.0))
    dxf.line("PROFILE", (x + 20.0, 3.0), (x, 3.0))
    dxf.line("PROFILE", (x, 0.0), (x, 3.0))
    dxf.text("DIM", (x, -6.0), 2.5, "HV-901 FLAT 20X3")
    # HV-902 flat 30×5, sharp corners, closed LWPOLYLINE.
    x = 35.0
    dxf.lwpolyline("PROFILE", [(x, 0.0, 0.0), (x + 30.0, 0.0, 0.0), (x + 30.0, 5.0, 0.0), (x, 5.0, 0.0)])
    dxf.text("DIM", (x, -6.0), 2.5, "HV-902 FLAT 30X5")
    # HV-903 flat 40×4 with r0.5 edges, closed LWPOLYLINE with bulges.
    x = 80.0
    bar = fillet_polygon([(x, 0.0), (x + 40.0, 0.0), (x + 40.0, 4.0), (x, 4.0)], 0.5)
    dxf.lwpolyline("PROFILE", bar)
    dxf.text("DIM", (x, -6.0), 2.5, "HV-903 FLAT 40X4 R0.5")
    # HV-904 round bar Ø12.
    c = (141.0, 6.0)
    dxf.circle("PROFILE", c, 6.0)
    dxf.text("DIM", (c[0] - 6.0, -6.0), 2.5, "HV-904 %%c12")
    centre_lines(dxf, c, 6.0, 6.0)
    dxf.layer("NOTES", 2)
    dxf.mtext("NOTES", (0.0, 25.0), 2.5, 120.0, "STOCK BARS, ALLOY 6082-T6\\PONE ROW PER BAR")
    sheet(dxf, (0.0, 0.0, 147.0, 12.0), "HV-901..904", "BAR STOCK", "ALLOY 6082-T6")
    return dxf


def rhs_r12():
    """HV-266: rectangular hollow section 60×30×2.5, r5 outside, r2.5 inside.

    Written as R12 with old-style POLYLINE/VERTEX/SEQEND and no $INSUNITS (a unitless
    drawing, which extruders' drawings almost always mean as millimetres).
    """
    dxf = new_drawing("AC1009", None)
    outer = fillet_polygon([(0.0, 0.0), (60.0, 0.0), (60.0, 30.0), (0.0, 30.0)], 5.0)
    inner = fillet_polygon([(2.5, 2.5), (57.5, 2.5), (57.5, 27.5), (2.5, 27.5)], 2.5)
    dxf.polyline2d("PROFILE", outer)
    dxf.polyline2d("PROFILE", reverse(inner))
    centre_lines(dxf, (30.0, 15.0), 30.0, 15.0)
    dim_linear(dxf, (0.0, 0.0), (60.0, 0.0), -8.0)
    dim_linear(dxf, (60.0, 0.0), (60.0, 30.0), 8.0)
    dxf.layer("NOTES", 2)
    dxf.mtext("NOTES", (0.0, -28.0), 2.5, 60.0, "WALL 2.5\\PR5 OUTSIDE, R2.5 INSIDE")
    sheet(dxf, (0.0, 0.0, 60.0, 30.0), "HV-266", "RHS 60X30X2.5")
    return dxf


DEMOS = [
    ("01_hv-110_frame-40x40.dxf", frame_40x40),
    ("02_hv-152_tube-50x3.dxf", tube_50x3),
    ("03_hv-318_angle-60x40x5.dxf", angle_60x40x5),
    ("04_hv-204_channel-80x40x4.dxf", channel_80x40x4),
    ("05_hv-731_heat-sink.dxf", heat_sink),
    ("06_hv-540_mullion.dxf", mullion),
    ("07_hv-901_bar-sheet.dxf", bar_sheet),
    ("08_hv-266_rhs-60x30-r12.dxf", rhs_r12),
]


def main(argv):
    if len(argv) > 2 or (len(argv) == 2 and argv[1] in ("-h", "--help")):
        print(__doc__.strip().splitlines()[0])
        print("usage: make_demo.py [OUTDIR]")
        return 0 if len(argv) == 2 else 2
    here = os.path.dirname(os.path.abspath(__file__))
    outdir = argv[1] if len(argv) == 2 else os.path.normpath(os.path.join(here, "..", "fixtures", "demo"))
    os.makedirs(outdir, exist_ok=True)
    for name, make in DEMOS:
        make().save(os.path.join(outdir, name))
        print(os.path.join(outdir, name))
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
