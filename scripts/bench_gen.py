#!/usr/bin/env python3
"""Generate synthetic profile drawings for the throughput benchmark.

Usage: python3 scripts/bench_gen.py N OUTDIR [--seed S] [--kind typical|heavy|catalog]

Writes OUTDIR/bench-00000.dxf ... in the same ASCII DXF dialect as the demo drawings
(scripts/make_demo.py supplies the writer). Each drawing is typical of a real sheet: one
profile on layer PROFILE, whose outer outline is a wavy star- or gear-like loop of 50-2000
segments around a random point, drawn either as a closed polyline with bulges or as a chain of
loose LINEs and ARCs (sometimes shuffled, reversed or off by CAD rounding), with 0-12 holes
(CIRCLEs and closed polylines) on a ring well inside it, plus a title frame and text on TITLE,
dimensions on DIM, centre lines on CENTER and notes on NOTES. About one file in ten is R12
with old-style POLYLINEs and no $INSUNITS.

The outline is star-shaped about its centre: its vertices run round in strictly increasing
angle, its radius never drops below 0.65 of the nominal one, and its edges are never steeper
than about 40° to the tangent, so small bulges (|bulge| <= 0.12) cannot make it cross itself.
The holes stay within 0.75 of the smallest outline radius and apart from each other, so
nothing crosses. The same N and seed give the same bytes; file i depends only on (seed, i).
At N = 2000 the files total about 77 MB (about 38 KB each).

--kind heavy: each drawing holds one detailed profile whose outline has 50 000 segments
(a fine gear-like loop, as a polyline or loose entities) with its holes and the same clutter.
--kind catalog: each drawing is a catalog sheet of 200 typical profiles (50-400 outline
segments each) in a 20 x 10 grid, each with its holes, centre lines and a label.
The last line printed gives the totals: files, profiles, segments (outline and hole
segments, a circle counting as one) and bytes.
"""

import argparse
import math
import os
import random
import sys

sys.dont_write_bytecode = True  # no __pycache__ beside the scripts
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from make_demo import (  # noqa: E402  (the writer lives beside this script)
    DxfWriter,
    centre_lines,
    dim_linear,
    fillet_polygon,
    loose_entities,
    reverse,
    sheet,
    write_loose,
)

MIN_SEGMENTS, MAX_SEGMENTS = 50, 2000
# Outline segment counts are 50·40^(u^SKEW) for u uniform in [0, 1): most sheets are
# simple, a few are fine gear-like outlines. SKEW sets the mean file size (see the doc).
SKEW = 2.5


def outline(rng, n):
    """Vertices (x, y) of a closed wavy loop of n vertices around the origin, and its
    smallest radius."""
    r0 = 10.0 ** rng.uniform(math.log10(15.0), math.log10(150.0))
    k1 = rng.randint(2, 12)
    a1 = rng.uniform(0.0, min(0.25, 0.5 / k1))
    waves = [(k1, a1, rng.uniform(0.0, 2.0 * math.pi))]
    if n >= 120 and rng.random() < 0.6:  # gear-like ripple, at least 10 vertices per tooth
        k2 = rng.randint(12, min(60, n // 10))
        a2 = rng.uniform(0.0, min(0.1, 0.3 / k2))
        waves.append((k2, a2, rng.uniform(0.0, 2.0 * math.pi)))
    pts = []
    for j in range(n):
        t = 2.0 * math.pi * (j + rng.uniform(-0.3, 0.3)) / n
        r = r0 * (1.0 + sum(a * math.sin(k * t + phi) for k, a, phi in waves))
        pts.append((r * math.cos(t), r * math.sin(t)))
    r_min = r0 * (1.0 - sum(a for _, a, _ in waves))
    return pts, r_min


def hole_shapes(rng, r_min):
    """Closed loops, each ("circle", c, r) or ("poly", verts), that do not touch."""
    holes = []
    n_holes = rng.randint(0, 12)
    if n_holes and rng.random() < 0.4:  # a core hole in the middle
        holes.append(hole(rng, (0.0, 0.0), rng.uniform(0.08, 0.25) * r_min))
        n_holes -= 1
    if n_holes:
        ring = 0.55 * r_min
        room = 0.2 * r_min if n_holes == 1 else min(0.2 * r_min, 0.4 * ring * math.sin(math.pi / n_holes))
        start = rng.uniform(0.0, 2.0 * math.pi)
        for h in range(n_holes):
            t = start + 2.0 * math.pi * h / n_holes
            c = (ring * math.cos(t), ring * math.sin(t))
            holes.append(hole(rng, c, rng.uniform(0.4, 1.0) * room))
    return holes


def hole(rng, c, room):
    """One hole that fits in the circle of radius `room` about c."""
    kind = rng.random()
    if kind < 0.5:
        return ("circle", c, room)
    if kind < 0.8:  # rounded rectangle, half-diagonal within room
        hw = room * rng.uniform(0.3, 0.7)
        hh = math.sqrt(room * room - hw * hw) * 0.95
        # Sharp corners or fillets of a realistic size (not micrometres).
        r = 0.0 if rng.random() < 0.25 else min(hw, hh) * rng.uniform(0.15, 0.6)
        pts = [(c[0] - hw, c[1] - hh), (c[0] + hw, c[1] - hh), (c[0] + hw, c[1] + hh), (c[0] - hw, c[1] + hh)]
        verts = fillet_polygon(pts, r)
    else:  # wavy polygon
        m = rng.randint(8, 64)
        k = rng.randint(2, max(2, m // 8))
        base = room / 1.15
        verts = []
        for j in range(m):
            t = 2.0 * math.pi * j / m
            r = base * (1.0 + 0.15 * math.sin(k * t))
            verts.append((c[0] + r * math.cos(t), c[1] + r * math.sin(t), 0.0))
    if rng.random() < 0.5:
        verts = reverse(verts)
    return ("poly", verts)


def segment_count(rng):
    u = rng.random()
    return min(MAX_SEGMENTS, int(MIN_SEGMENTS * (MAX_SEGMENTS / MIN_SEGMENTS) ** (u**SKEW)))


def shifted(verts, dx, dy):
    return [(x + dx, y + dy, b) for x, y, b in verts]


def drawing(seed, index, kind="typical"):
    """One drawing and its count of profile segments."""
    rng = random.Random("sectio-bench:%s%d:%d" % ("" if kind == "typical" else kind + ":", seed, index))
    r12 = rng.random() < 0.1
    dxf = DxfWriter("AC1009", None) if r12 else DxfWriter("AC1015", 4)
    dxf.layer("PROFILE", 4)
    if kind == "catalog":
        return catalog_sheet(rng, dxf, r12, index)
    cx, cy = rng.uniform(0.0, 3000.0), rng.uniform(0.0, 3000.0)
    n = HEAVY_SEGMENTS if kind == "heavy" else segment_count(rng)
    bbox, r_max, segments = profile(rng, dxf, r12, (cx, cy), n)
    clutter(rng, dxf, (cx, cy), r_max, bbox, index, n)
    return dxf, segments


HEAVY_SEGMENTS = 50000


def profile(rng, dxf, r12, centre, n):
    """Write one profile with an outline of n segments and its holes about `centre`; return
    its box, its largest radius and its number of segments."""
    cx, cy = centre
    pts, r_min = outline(rng, n)
    segments = n
    p_arc = rng.uniform(0.1, 0.6)
    verts = [(x + cx, y + cy, rng.uniform(0.02, 0.12) * rng.choice((-1.0, 1.0)) if rng.random() < p_arc else 0.0) for x, y in pts]
    if rng.random() < 0.6:
        if r12:
            dxf.polyline2d("PROFILE", verts)
        else:
            dxf.lwpolyline("PROFILE", verts)
    else:
        records = loose_entities(verts)
        if rng.random() < 0.3:
            rng.shuffle(records)
        fuzz = 1e-6 if rng.random() < 0.3 else 0.0
        for rec in records:
            if rec[0] == "LINE":
                p, q = rec[1], rec[2]
                if fuzz:
                    p = (p[0] + rng.uniform(-fuzz, fuzz), p[1] + rng.uniform(-fuzz, fuzz))
                    q = (q[0] + rng.uniform(-fuzz, fuzz), q[1] + rng.uniform(-fuzz, fuzz))
                if rng.random() < 0.2:
                    p, q = q, p
                dxf.line("PROFILE", p, q)
            else:
                write_loose(dxf, "PROFILE", [rec])

    for h in hole_shapes(rng, r_min):
        if h[0] == "circle":
            dxf.circle("PROFILE", (h[1][0] + cx, h[1][1] + cy), h[2])
            segments += 1
        else:
            segments += len(h[1])
            if r12:
                dxf.polyline2d("PROFILE", shifted(h[1], cx, cy))
            else:
                dxf.lwpolyline("PROFILE", shifted(h[1], cx, cy))
    r_max = max(math.hypot(x, y) for x, y in pts)
    return (cx - r_max, cy - r_max, cx + r_max, cy + r_max), r_max, segments


def clutter(rng, dxf, centre, r_max, bbox, index, n):
    """Centre lines, dimensions, notes and a title frame, roughly as much as a real sheet
    carries."""
    centre_lines(dxf, centre, r_max, r_max)
    dim_linear(dxf, (bbox[0], bbox[1]), (bbox[2], bbox[1]), -8.0)
    dim_linear(dxf, (bbox[2], bbox[1]), (bbox[2], bbox[3]), 8.0)
    dxf.layer("NOTES", 2)
    for k in range(rng.randint(2, 10)):
        dxf.text("NOTES", (bbox[0] + 5.0 * k, bbox[3] + 12.0 + 4.0 * k), 2.5, "NOTE %d: DEBURR ALL EDGES, BREAK CORNERS 0.2" % (k + 1))
    dxf.mtext("NOTES", (bbox[0], bbox[1] - 20.0), 2.5, 80.0, "BENCH SHEET %05d\\PSEGMENTS %d\\PTOLERANCES PER SHOP STANDARD" % (index, n))
    sheet(dxf, bbox, "HV-B%05d" % index, "BENCH PROFILE")


CATALOG_COLUMNS, CATALOG_ROWS = 20, 10


def catalog_sheet(rng, dxf, r12, index):
    """A catalog sheet: 200 profiles of 50-400 outline segments in a grid, each with centre
    lines and a label, one title frame round them all."""
    pitch = 500.0
    segments = 0
    dxf.layer("NOTES", 2)
    for k in range(CATALOG_COLUMNS * CATALOG_ROWS):
        c = ((k % CATALOG_COLUMNS) * pitch, (k // CATALOG_COLUMNS) * pitch)
        n = min(400, int(50 * 8 ** (rng.random() ** 2.0)))
        # outline() draws radii up to 150 mm x 1.35 (its waves): 500 mm apart stays clear.
        bbox, r, s = profile(rng, dxf, r12, c, n)
        segments += s
        centre_lines(dxf, c, r, r)
        dxf.text("NOTES", (bbox[0], bbox[1] - 12.0), 5.0, "PROFILE %05d-%03d" % (index, k))
    all_box = (-pitch / 2, -pitch / 2, (CATALOG_COLUMNS - 0.5) * pitch, (CATALOG_ROWS - 0.5) * pitch)
    sheet(dxf, all_box, "HV-C%05d" % index, "BENCH CATALOG SHEET")
    return dxf, segments


def main():
    ap = argparse.ArgumentParser(description="Generate synthetic profile drawings for the benchmark.")
    ap.add_argument("n", type=int, help="number of drawings")
    ap.add_argument("outdir", help="output folder (created if missing)")
    ap.add_argument("--seed", type=int, default=1, help="random seed (default 1)")
    ap.add_argument("--kind", choices=("typical", "heavy", "catalog"), default="typical", help="what each drawing holds (default typical)")
    args = ap.parse_args()
    os.makedirs(args.outdir, exist_ok=True)
    total = segments = 0
    per_file = CATALOG_COLUMNS * CATALOG_ROWS if args.kind == "catalog" else 1
    for i in range(args.n):
        dxf, s = drawing(args.seed, i, args.kind)
        text = dxf.to_string()
        with open(os.path.join(args.outdir, "bench-%05d.dxf" % i), "w", encoding="ascii", newline="\n") as f:
            f.write(text)
        total += len(text)
        segments += s
    print("wrote %d files, %.1f MB (%d bytes) to %s" % (args.n, total / 1e6, total, args.outdir))
    print("totals: files=%d profiles=%d segments=%d bytes=%d" % (args.n, args.n * per_file, segments, total))
    return 0


if __name__ == "__main__":
    sys.exit(main())
