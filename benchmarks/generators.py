"""Which of numpy's bit generators draws normal numbers fastest here (issue 18, item 3).

Side by side in one process, in turns (so that a change of machine load touches all
alike): each generator fills the same preallocated array with standard normal numbers,
block by block as the Monte Carlo engine draws them (65,536 per call), and the uniform
doubles behind them. Prints min and median over the rounds and the ratio to PCG64, the
default of ``numpy.random.default_rng``. Then other ways to normal numbers over SFC64,
against SFC64's own double-precision normals (numpy's one-at-a-time ziggurat), in turns:
the ziggurat vectorised in numpy (budget/_ziggurat.py, the engine's way since it was
measured here), the same numbers by the compiled loop (budget/_compiled_draws.py, numba,
which runs of 10^8 numbers load), and two set aside (README, Performance): SFC64's
single-precision normals (numpy's float32 ziggurat) and the polar method (Marsaglia)
vectorised in numpy. Last, the vectorised ziggurat's piece size (budget._ziggurat._PIECE)
on one and two threads (small pieces stay in the cache but take the interpreter lock more
often), and the compiled loop on one and two threads.

Run: python benchmarks/generators.py [numbers] [rounds]
"""

from __future__ import annotations

import os
import platform
import statistics
import sys
import time

import numpy as np

sys.path.insert(0, os.path.dirname(__file__))

from measure import load  # noqa: E402

import budget._ziggurat as ziggurat  # noqa: E402
from budget._ziggurat import standard_normal  # noqa: E402

GENERATORS = ("PCG64", "PCG64DXSM", "SFC64", "Philox", "MT19937")
BLOCK = 1 << 16


def one_round(name: str, numbers: int, kind: str) -> float:
    rng = np.random.Generator(getattr(np.random, name)(np.random.SeedSequence(1)))
    out = np.empty(BLOCK)
    start = time.perf_counter()
    for _ in range(numbers // BLOCK):
        if kind == "normal":
            rng.standard_normal(out=out)
        else:
            rng.random(out=out)
    return time.perf_counter() - start


def polar(rng: np.random.Generator, out: np.ndarray) -> None:
    """Fill ``out`` (even length) with normals by the polar method, vectorised."""
    half, filled = out.size // 2, 0
    while filled < half:
        need = half - filled
        pairs = rng.random((2, int(need * 1.2732395 + 4 * need ** 0.5 + 16)))
        pairs *= 2.0
        pairs -= 1.0
        u, v = pairs
        s = u * u + v * v
        ok = (s < 1.0) & (s > 0.0)
        s, u, v = s[ok][:need], u[ok][:need], v[ok][:need]
        factor = np.sqrt(-2.0 * np.log(s) / s)
        np.multiply(u, factor, out=out[filled:filled + s.size])
        np.multiply(v, factor, out=out[half + filled:half + filled + s.size])
        filled += s.size


def other_way(kind: str, numbers: int) -> float:
    rng = np.random.Generator(np.random.SFC64(np.random.SeedSequence(1)))
    out = np.empty(BLOCK, dtype=np.float32 if kind == "single" else np.float64)
    start = time.perf_counter()
    for _ in range(numbers // BLOCK):
        if kind == "polar":
            polar(rng, out)
        elif kind in ("vectorised", "compiled"):
            ziggurat.use_compiled(kind == "compiled")
            standard_normal(rng, out)
        else:
            rng.standard_normal(out=out, dtype=out.dtype)
    return time.perf_counter() - start


def main() -> None:
    numbers = int(sys.argv[1]) if len(sys.argv) > 1 else 40_000_000
    rounds = int(sys.argv[2]) if len(sys.argv) > 2 else 7
    print(f"machine: {platform.platform()}, {os.cpu_count()} cores, numpy {np.__version__};"
          f" load average {load()}")
    print(f"{numbers:,} numbers per round, {rounds} rounds, generators in turns")
    for kind in ("normal", "uniform"):
        times: dict[str, list[float]] = {name: [] for name in GENERATORS}
        for _ in range(rounds):
            for name in GENERATORS:
                times[name].append(one_round(name, numbers, kind))
        base = min(times["PCG64"])
        print(f"\n{kind} doubles: generator   min s   median s   min / PCG64 min"
              "   median of per-round ratios")
        for name in GENERATORS:
            ratios = [t / p for t, p in zip(times[name], times["PCG64"])]
            print(f"  {name:10s} {min(times[name]):8.3f} {statistics.median(times[name]):9.3f}"
                  f" {min(times[name]) / base:12.2f} {statistics.median(ratios):18.2f}")
    ways: dict[str, list[float]] = {"double": [], "vectorised": [], "compiled": [],
                                    "single": [], "polar": []}
    for _ in range(rounds):
        for kind, found in ways.items():
            found.append(other_way(kind, numbers))
    print("\nSFC64 normals, other ways: min s   median s   min / double min")
    for kind, found in ways.items():
        print(f"  {kind:10s} {min(found):8.3f} {statistics.median(found):9.3f}"
              f" {min(found) / min(ways['double']):12.2f}")
    pieces(numbers, rounds)


def pieces(numbers: int, rounds: int) -> None:
    """Wall time of ``numbers`` vectorised-ziggurat normals per thread, blocks of 10 rows
    × 65,536 as the engine fills them, by piece size, on one and two threads."""
    from concurrent.futures import ThreadPoolExecutor

    def work(seed: int) -> None:
        rng = np.random.Generator(np.random.SFC64(seed))
        block = np.empty((10, BLOCK))
        for _ in range(max(1, numbers // block.size)):
            standard_normal(rng, block)

    def one_and_two() -> tuple[float, float]:
        """Min seconds over the rounds on one thread and on two, in turns."""
        found: dict[int, list[float]] = {1: [], 2: []}
        for _ in range(rounds):
            for threads in (1, 2):
                start = time.perf_counter()
                with ThreadPoolExecutor(threads) as pool:
                    list(pool.map(work, range(threads)))
                found[threads].append(time.perf_counter() - start)
        return min(found[1]), min(found[2])

    chosen = ziggurat._PIECE
    ziggurat.use_compiled(False)
    print("\nvectorised ziggurat by piece size (numbers per thread; min s of the rounds):"
          "\n  piece     1 thread   2 threads   speed-up")
    for piece in (1 << 14, 1 << 15, 1 << 16, 1 << 17, 1 << 18):
        ziggurat._PIECE = piece
        one, two = one_and_two()
        mark = "  (chosen)" if piece == chosen else ""
        print(f"  {piece:7d} {one:10.3f} {two:11.3f} {2 * one / two:10.2f}{mark}")
    ziggurat._PIECE = chosen
    ziggurat.use_compiled(True)
    one, two = one_and_two()
    print(f"  compiled {one:10.3f} {two:11.3f} {2 * one / two:10.2f}")

if __name__ == "__main__":
    main()
