#!/usr/bin/env python3
"""What it costs this machine to touch memory for the first time, in 2 MiB and 4 KiB pages.

Usage: python3 scripts/fresh_memory.py [MIB] [PAUSE] [ROUNDS]   (defaults 64, 4, 3)

Each round maps MIB MiB of fresh anonymous memory twice, once advised for transparent huge
pages (MADV_HUGEPAGE) and once not (MADV_NOHUGEPAGE), writes one byte per 4 KiB page, and
prints the time per MiB; before each mapping it waits PAUSE seconds (0: back to back). On a
virtual machine whose host takes freed memory back after a while, the first figures after a
pause are the cost of memory the host must back again; back to back, the pages just freed
come back. The Python loop itself costs about 0.05 ms per MiB. Linux, Python 3.8 or later.
See DEVELOPERS.md, "Performance notes" (huge pages and cold memory).
"""

import mmap
import sys
import time


def ms_per_mib(mib, huge):
    size = mib << 20
    m = mmap.mmap(-1, size, flags=mmap.MAP_PRIVATE | mmap.MAP_ANONYMOUS)
    m.madvise(mmap.MADV_HUGEPAGE if huge else mmap.MADV_NOHUGEPAGE)
    start = time.perf_counter()
    for offset in range(0, size, 4096):
        m[offset] = 1
    elapsed = time.perf_counter() - start
    m.close()
    return elapsed * 1e3 / mib


def main():
    args = [float(a) for a in sys.argv[1:]]
    mib, pause, rounds = (args + [64, 4, 3][len(args):])[:3]
    try:
        with open("/sys/kernel/mm/transparent_hugepage/enabled") as f:
            print("transparent huge pages:", f.read().strip())
    except OSError:
        print("transparent huge pages: no setting found")
    for _ in range(int(rounds)):
        figures = []
        for huge in (True, False):
            time.sleep(pause)
            figures.append(ms_per_mib(int(mib), huge))
        print("2 MiB pages %.3f ms per MiB, 4 KiB pages %.3f ms per MiB" % tuple(figures))


if __name__ == "__main__":
    main()
