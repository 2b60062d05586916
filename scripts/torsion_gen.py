#!/usr/bin/env python3
"""Drawings for the torsion benchmark (scripts/bench_torsion.sh): the cases issue 6 names.

Usage: python3 scripts/torsion_gen.py OUTDIR [--seed S]

Writes, all in millimetres on layer PROFILE:
  heavy-NN.dxf  a profile of about 2000 boundary segments with 10 holes: a wavy gear-like
                outline of 2000 segments (closed polyline, a third of them with small
                bulges) around 10 holes (circles and rounded rectangles) on a ring;
  tube.dxf      a simple tube, 60 mm outside, 4 mm wall (two CIRCLEs).
The outline and holes come from bench_gen.py's generator, so they never cross. The same
seed gives the same bytes.
"""

import argparse
import math
import os
import random
import sys

sys.dont_write_bytecode = True
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from bench_gen import hole, outline  # noqa: E402
from make_demo import DxfWriter  # noqa: E402


def heavy(seed, index, path):
    rng = random.Random("sectio-torsion:%d:%d" % (seed, index))
    dxf = DxfWriter("AC1015", 4)
    dxf.layer("PROFILE", 4)
    pts, r_min = outline(rng, 2000)
    verts = [(x, y, rng.uniform(0.02, 0.12) * rng.choice((-1.0, 1.0)) if rng.random() < 0.33 else 0.0) for x, y in pts]
    dxf.lwpolyline("PROFILE", verts)
    ring, n = 0.55 * r_min, 10
    room = min(0.2 * r_min, 0.4 * ring * math.sin(math.pi / n))
    for k in range(n):
        t = 2.0 * math.pi * k / n
        c = (ring * math.cos(t), ring * math.sin(t))
        h = hole(rng, c, rng.uniform(0.6, 1.0) * room)
        if h[0] == "circle":
            dxf.circle("PROFILE", h[1], h[2])
        else:
            dxf.lwpolyline("PROFILE", h[1])
    dxf.save(path)


def tube(path):
    dxf = DxfWriter("AC1015", 4)
    dxf.layer("PROFILE", 4)
    dxf.circle("PROFILE", (0.0, 0.0), 30.0)
    dxf.circle("PROFILE", (0.0, 0.0), 26.0)
    dxf.save(path)


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("outdir")
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--heavy", type=int, default=10, help="number of heavy profiles")
    a = ap.parse_args()
    os.makedirs(a.outdir, exist_ok=True)
    for i in range(a.heavy):
        heavy(a.seed, i, os.path.join(a.outdir, "heavy-%02d.dxf" % i))
    tube(os.path.join(a.outdir, "tube.dxf"))


if __name__ == "__main__":
    main()
