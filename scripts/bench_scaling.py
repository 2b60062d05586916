#!/usr/bin/env python3
"""Write one DXF drawing of about N loose LINE segments for the scaling benchmark.

Usage: python3 scripts/bench_scaling.py N OUT.dxf [--seed S]

A grid of plates: each a square outline of 4 lines with a 12-sided hole, every edge a
separate LINE entity in shuffled order (so chaining must match endpoints through its index),
16 segments per plate. Deterministic for a given seed.
"""
import argparse
import math
import random


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("n", type=int)
    ap.add_argument("out")
    ap.add_argument("--seed", type=int, default=1)
    a = ap.parse_args()
    rng = random.Random(a.seed)
    plates = max(1, a.n // 16)
    side = math.ceil(math.sqrt(plates))
    lines = []
    for k in range(plates):
        x0, y0 = (k % side) * 30.0, (k // side) * 30.0
        sq = [(x0, y0), (x0 + 20, y0), (x0 + 20, y0 + 20), (x0, y0 + 20)]
        for i in range(4):
            lines.append((sq[i], sq[(i + 1) % 4]))
        c = (x0 + 10, y0 + 10)
        ring = [(c[0] + 5 * math.cos(2 * math.pi * j / 12), c[1] + 5 * math.sin(2 * math.pi * j / 12)) for j in range(12)]
        for j in range(12):
            lines.append((ring[j], ring[(j + 1) % 12]))
    rng.shuffle(lines)
    with open(a.out, "w") as f:
        f.write("0\nSECTION\n2\nHEADER\n9\n$INSUNITS\n70\n4\n0\nENDSEC\n0\nSECTION\n2\nENTITIES\n")
        for (p, q) in lines:
            f.write(f"0\nLINE\n8\nPROFILE\n10\n{p[0]:.6f}\n20\n{p[1]:.6f}\n11\n{q[0]:.6f}\n21\n{q[1]:.6f}\n")
        f.write("0\nENDSEC\n0\nEOF\n")
    print(f"{len(lines)} segments, {plates} plates -> {a.out}")


if __name__ == "__main__":
    main()
