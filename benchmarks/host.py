"""How fast this host is right now: nanoseconds per standard normal number drawn by
numpy's own generator (SFC64, blocks of 65,536, best of 5 rounds of 100 blocks), and the
load average. On this project's 2-core machine a quiet host gives about 7.4 ns; when
other tenants load the host the same loop takes 9-11 ns, and the time of every figure
measured alongside grows with it (more for code that moves much memory). The benchmark
sweep records it before and after. Run: python benchmarks/host.py
"""

from __future__ import annotations

import os
import sys
import time

import numpy as np

sys.path.insert(0, os.path.dirname(__file__))

from measure import load  # noqa: E402


def main() -> None:
    rng = np.random.Generator(np.random.SFC64(1))
    block = np.empty(1 << 16)
    best = float("inf")
    for _ in range(5):
        start = time.perf_counter()
        for _ in range(100):
            rng.standard_normal(out=block)
        best = min(best, (time.perf_counter() - start) / (100 * block.size))
    print(f"numpy standard normal (SFC64): {best * 1e9:.2f} ns per number; "
          f"load average {load()}")


if __name__ == "__main__":
    main()
