#!/usr/bin/env python3
"""Write the small DXF files under fixtures/dxf/ that the CLI tests use.

Each file exercises one behaviour (see fixtures/README.md). Standard library only;
deterministic output. Run: python3 scripts/make_test_fixtures.py
"""
import math
import os
import sys

OUT = sys.argv[1] if len(sys.argv) > 1 else os.path.join(os.path.dirname(__file__), "..", "fixtures", "dxf")


def pairs(*items):
    return "".join(f"{code}\n{value}\n" for code, value in items)


def dxf(entities, insunits=4, layers=(("0", 7, 0),)):
    """A minimal AC1009 drawing: HEADER, LAYER table, ENTITIES, EOF."""
    head = pairs((0, "SECTION"), (2, "HEADER"), (9, "$ACADVER"), (1, "AC1009"))
    if insunits is not None:
        head += pairs((9, "$INSUNITS"), (70, insunits))
    head += pairs((0, "ENDSEC"))
    tables = pairs((0, "SECTION"), (2, "TABLES"), (0, "TABLE"), (2, "LAYER"), (70, len(layers)))
    for name, color, flags in layers:
        tables += pairs((0, "LAYER"), (2, name), (70, flags), (62, color), (6, "CONTINUOUS"))
    tables += pairs((0, "ENDTAB"), (0, "ENDSEC"))
    ents = pairs((0, "SECTION"), (2, "ENTITIES")) + "".join(entities) + pairs((0, "ENDSEC"))
    return head + tables + ents + pairs((0, "EOF"))


def line(a, b, layer="0"):
    return pairs((0, "LINE"), (8, layer), (10, repr(a[0])), (20, repr(a[1])), (30, 0.0),
                 (11, repr(b[0])), (21, repr(b[1])), (31, 0.0))


def circle(c, r, layer="0"):
    return pairs((0, "CIRCLE"), (8, layer), (10, repr(c[0])), (20, repr(c[1])), (30, 0.0), (40, repr(r)))


def arc(c, r, a0, a1, layer="0"):
    return pairs((0, "ARC"), (8, layer), (10, repr(c[0])), (20, repr(c[1])), (30, 0.0), (40, repr(r)),
                 (50, repr(a0)), (51, repr(a1)))


def lwpoly(pts, closed=True, bulges=None, layer="0"):
    s = pairs((0, "LWPOLYLINE"), (8, layer), (90, len(pts)), (70, 1 if closed else 0))
    for i, (x, y) in enumerate(pts):
        s += pairs((10, repr(x)), (20, repr(y)))
        if bulges and bulges[i]:
            s += pairs((42, repr(bulges[i])))
    return s


def text(at, value, layer="0"):
    return pairs((0, "TEXT"), (8, layer), (10, repr(at[0])), (20, repr(at[1])), (30, 0.0), (40, 2.5), (1, value))


def rect_lines(x, y, w, h, layer="0"):
    p = [(x, y), (x + w, y), (x + w, y + h), (x, y + h)]
    return [line(p[i], p[(i + 1) % 4], layer) for i in range(4)]


def write(name, content):
    os.makedirs(OUT, exist_ok=True)
    with open(os.path.join(OUT, name), "w", newline="\n") as f:
        f.write(content)


# A tube Ø50 × 3 (two circles), millimetres.
write("tube.dxf", dxf([circle((0.0, 0.0), 25.0), circle((0.0, 0.0), 22.0)]))

# A 2 × 1 inch plate, $INSUNITS 1 (inch).
write("plate_inch.dxf", dxf([lwpoly([(0.0, 0.0), (2.0, 0.0), (2.0, 1.0), (0.0, 1.0)])], insunits=1))

# A 40 × 20 plate without $INSUNITS: millimetres assumed.
write("plate_unitless.dxf", dxf([lwpoly([(0.0, 0.0), (40.0, 0.0), (40.0, 20.0), (0.0, 20.0)])], insunits=None))

# Layers: the profile on PROFILE, a closed frame on TITLE, a text, and a circle on a layer that is off.
write("layers.dxf", dxf(
    [lwpoly([(0.0, 0.0), (30.0, 0.0), (30.0, 10.0), (0.0, 10.0)], layer="PROFILE")]
    + rect_lines(-100.0, -100.0, 300.0, 200.0, layer="TITLE")
    + [text((-90.0, -90.0), "HV-101 flat bar 30x10", layer="TITLE"), circle((50.0, 50.0), 5.0, layer="HIDDEN")],
    layers=(("0", 7, 0), ("PROFILE", 7, 0), ("TITLE", 7, 0), ("HIDDEN", -7, 0)),
))

# A rectangle of loose lines whose last edge stops 0.5 mm short: a broken loop.
write("open_chain.dxf", dxf([
    line((0.0, 0.0), (100.0, 0.0)),
    line((100.0, 0.0), (100.0, 50.0)),
    line((100.0, 50.0), (0.0, 50.0)),
    line((0.0, 50.0), (0.0, 0.5)),
]))

# A square of lines with a line leaving one corner: a branch.
write("branch.dxf", dxf(rect_lines(0.0, 0.0, 10.0, 10.0) + [line((10.0, 10.0), (20.0, 20.0))]))

# A bow-tie polyline: a self-intersecting loop.
write("self_intersection.dxf", dxf([lwpoly([(0.0, 0.0), (10.0, 10.0), (10.0, 0.0), (0.0, 10.0)])]))

# A tube whose outer circle is two arcs with 0.2 mm gaps, and an intact bore.
gap_deg = math.degrees(0.2 / 25.0)
write("tube_broken_outer.dxf", dxf([
    arc((0.0, 0.0), 25.0, 0.0, 180.0 - gap_deg),
    arc((0.0, 0.0), 25.0, 180.0, 360.0 - gap_deg),
    circle((0.0, 0.0), 22.0),
]))

# A good profile and, beside it, a broken one: one ok row and one error row.
write("one_good_one_broken.dxf", dxf(
    [circle((0.0, 0.0), 10.0)]
    + [line((100.0, 0.0), (120.0, 0.0)), line((120.0, 0.0), (120.0, 20.0)), line((120.0, 20.0), (100.3, 20.0))]
    + [line((100.0, 20.0), (100.0, 0.0))]
))

# Empty file, garbage, and a drawing cut off inside ENTITIES (no EOF).
write("empty.dxf", "")
write("garbage.dxf", "This is not a drawing.\nJust some text someone saved as .dxf\n")
full = dxf([circle((0.0, 0.0), 25.0), circle((0.0, 0.0), 22.0)])
write("truncated.dxf", full[: full.index("CIRCLE") + 30])
