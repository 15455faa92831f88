"""How the cost of the linear budget grows with the number of inputs (issue 18, item 1).

For four shapes of model — a sum of n inputs in one expression, a product of n inputs,
the mean of n/3 coulometric determinations written as one equation, and the same mean
through 2n/3 definitions (w_i per determination, running sums S_i, a chain) — at about
10², 10³, 10⁴ and 10⁵ inputs:

  1. the whole command ``budget run MODEL --json --trials 0`` in fresh processes: wall
     and CPU time (min and median of several runs) and peak memory, then the growth
     exponent of the CPU time (min) between 10³ and 10⁵ inputs: log(t₂/t₁)/log(n₂/n₁) of
     the two ends, and the least-squares slope of log t on log n over 10³, 10⁴, 10⁵ (and
     between 10⁴ and 10⁵ alone, where the fixed costs of start-up weigh least);
  2. the engine alone (parse + GUM propagation from a file, CPU time in a fresh process,
     best of several), with the same two exponents;
  3. the 10⁴-input models with 10⁵ Monte Carlo trials (whole command; --no-monte-carlo
     leaves it out);
  4. 1000 inputs in one correlated block (499,500 pairs, positive definite), whole
     command with --trials 0: stated as one r for every pair and as the full 1000 × 1000
     matrix (as 499,500 [[correlations]] tables the file would be 27 MB, over the 16 MiB
     limit of a model file, docs/limits.md).

Run: python benchmarks/growth.py [repeats] [--no-monte-carlo]
(repeats: runs per figure below 10⁵ inputs, default 3; 10⁵ inputs run twice.)
"""

from __future__ import annotations

import math
import os
import platform
import subprocess
import sys
import tempfile
from pathlib import Path
from typing import Callable

sys.path.insert(0, os.path.dirname(__file__))

from generate import (correlated_block_stated, defined_mean,  # noqa: E402
                      mean_of_determinations, product_model, sum_model)
from measure import command, load  # noqa: E402

SIZES = (100, 1000, 10_000, 100_000)
SHAPES: dict[str, tuple[Callable[[int], str], Callable[[int], int]]] = {
    # name: (generator, its argument for about n inputs)
    "sum": (sum_model, lambda n: n),
    "product": (product_model, lambda n: n),
    "mean, one equation": (mean_of_determinations, lambda n: max(1, (n - 3) // 3)),
    "mean, definitions": (defined_mean, lambda n: max(1, (n - 3) // 3)),
}


_ENGINE = """
import sys, time
from budget._gum import propagate
from budget._model import load_model
start = time.process_time()
propagate(load_model(sys.argv[1]))
print(time.process_time() - start)
"""


def engine_seconds(path: Path, repeats: int) -> float:
    """Best CPU time of parse + propagation, each run in a fresh process."""
    best = math.inf
    for _ in range(repeats):
        done = subprocess.run([sys.executable, "-c", _ENGINE, str(path)],
                              capture_output=True, text=True, check=True)
        best = min(best, float(done.stdout.split()[-1]))
    return best


def exponents(times: dict[int, float]) -> str:
    """The two-point and the fitted growth exponent of ``times`` between 10³ and 10⁵."""
    two = math.log(times[100_000] / times[1000]) / math.log(100)
    x = [math.log(n) for n in (1000, 10_000, 100_000)]
    y = [math.log(times[n]) for n in (1000, 10_000, 100_000)]
    mean_x, mean_y = sum(x) / 3, sum(y) / 3
    slope = sum((a - mean_x) * (b - mean_y) for a, b in zip(x, y)) / sum(
        (a - mean_x) ** 2 for a in x)
    upper = math.log(times[100_000] / times[10_000]) / math.log(10)
    return f"{two:.2f} (ends), {slope:.2f} (fitted); 10^4..10^5 {upper:.2f}"


def whole_commands(folder: Path, repeats: int) -> dict[str, dict[int, float]]:
    cpu: dict[str, dict[int, float]] = {}
    print("\n1. whole command: budget run MODEL --json --trials 0")
    for shape, (generate, argument) in SHAPES.items():
        cpu[shape] = {}
        for n in SIZES:
            text = generate(argument(n))
            path = _path(folder, shape, n)
            path.write_text(text)
            runs = command(["run", str(path), "--json", "--trials", "0"],
                           repeats=2 if n >= 100_000 else repeats)
            inputs = text.count("[inputs.")
            print(f"   {shape:20s} {inputs:7d} inputs: {runs.text()}", flush=True)
            cpu[shape][n] = min(runs.cpu)
    print("   growth exponent of the CPU time (min), 10^3 .. 10^5 inputs:")
    for shape, times in cpu.items():
        print(f"   {shape:20s} {exponents(times)}")
    return cpu


def _path(folder: Path, shape: str, n: int) -> Path:
    return folder / f"{shape.replace(' ', '_').replace(',', '')}-{n}.toml"


def correlated_blocks(folder: Path, repeats: int) -> None:
    print("\n4. 1000 inputs in one correlated block (499,500 pairs), budget run MODEL "
          "--json --trials 0")
    forms = [("one r for every pair", correlated_block_stated(1000, form="r"), repeats),
             ("the full matrix", correlated_block_stated(1000, form="matrix"), repeats),
             ("r by distance, u each", correlated_block_stated(1000, form="distinct"),
              repeats)]
    for name, text, runs_wanted in forms:
        path = folder / f"block-{len(text)}.toml"
        path.write_text(text)
        runs = command(["run", str(path), "--json", "--trials", "0"], repeats=runs_wanted)
        print(f"   {name:22s} ({len(text) / 1e6:5.1f} MB): {runs.text()}", flush=True)


def main() -> None:
    words = [w for w in sys.argv[1:] if not w.startswith("--")]
    repeats = int(words[0]) if words else 3
    folder = Path(tempfile.mkdtemp(prefix="budget-growth-"))
    print(f"machine: {platform.platform()}, {os.cpu_count()} cores, Python "
          f"{platform.python_version()}; load average at start {load()}")
    whole_commands(folder, repeats)
    engine: dict[str, dict[int, float]] = {}
    print("\n2. engine alone (parse + propagation), CPU seconds, best of runs")
    print(f"   {'shape':20s} " + " ".join(f"{n:>9d}" for n in SIZES)
          + "   exponent 10^3..10^5")
    for shape in SHAPES:
        engine[shape] = {n: engine_seconds(_path(folder, shape, n),
                                           2 if n >= 100_000 else repeats) for n in SIZES}
        times = engine[shape]
        print(f"   {shape:20s} " + " ".join(f"{times[n]:9.3f}" for n in SIZES)
              + f"   {exponents(times)}", flush=True)
    if "--no-monte-carlo" not in sys.argv:
        print("\n3. about 10^4 inputs with 10^5 Monte Carlo trials (whole command)")
        for shape in SHAPES:
            path = _path(folder, shape, 10_000)
            runs = command(["run", str(path), "--json", "--trials", "100000"],
                           repeats=repeats)
            print(f"   {shape:20s}: {runs.text()}", flush=True)
    correlated_blocks(folder, repeats)
    print(f"\nload average at the end {load()}")


if __name__ == "__main__":
    main()
