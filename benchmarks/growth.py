"""How the cost of the linear budget grows with the number of inputs (issue 18, item 1).

For four shapes of model — a sum of n inputs in one expression, a product of n inputs,
the mean of n/3 coulometric determinations written as one equation, and the same mean
through 2n/3 definitions (w_i per determination, running sums S_i, a chain) — at about
10², 10³, 10⁴ and 10⁵ inputs:

  1. the whole command ``budget run MODEL --json --trials 0`` in fresh processes: wall
     and CPU time (min and median of several runs) and peak memory;
  2. the engine alone (parse + GUM propagation from a file, CPU time in a fresh process,
     best of several), and the growth exponent log(t₂/t₁)/log(n₂/n₁) between 10³ and 10⁵;
  3. the 10⁴-input models with 10⁵ Monte Carlo trials (whole command).

Run: python benchmarks/growth.py [repeats]   (about ten minutes on a quiet 2-core machine)
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

from generate import defined_mean, mean_of_determinations, product_model, sum_model  # noqa: E402
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
from budget.gum import propagate
from budget.model import load_model
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


def main() -> None:
    repeats = int(sys.argv[1]) if len(sys.argv) > 1 else 3
    folder = Path(tempfile.mkdtemp(prefix="budget-growth-"))
    print(f"machine: {platform.platform()}, {os.cpu_count()} cores, Python "
          f"{platform.python_version()}; load average at start {load()}")
    engine: dict[str, dict[int, float]] = {}
    print("\n1. whole command: budget run MODEL --json --trials 0")
    for shape, (generate, argument) in SHAPES.items():
        engine[shape] = {}
        for n in SIZES:
            text = generate(argument(n))
            path = folder / f"{shape.replace(' ', '_').replace(',', '')}-{n}.toml"
            path.write_text(text)
            runs = command(["run", str(path), "--json", "--trials", "0"],
                           repeats=1 if n >= 100_000 else repeats)
            inputs = text.count("[inputs.")
            print(f"   {shape:20s} {inputs:7d} inputs: {runs.text()}", flush=True)
            engine[shape][n] = engine_seconds(path, 1 if n >= 100_000 else repeats)
    print("\n2. engine alone (parse + propagation), CPU seconds, best of runs")
    print(f"   {'shape':20s} " + " ".join(f"{n:>9d}" for n in SIZES)
          + "   exponent 10^3..10^5")
    for shape, times in engine.items():
        exponent = math.log(times[100_000] / times[1000]) / math.log(100)
        print(f"   {shape:20s} " + " ".join(f"{times[n]:9.3f}" for n in SIZES)
              + f"   {exponent:.2f}")
    print("\n3. about 10^4 inputs with 10^5 Monte Carlo trials (whole command)")
    for shape in SHAPES:
        path = folder / f"{shape.replace(' ', '_').replace(',', '')}-10000.toml"
        runs = command(["run", str(path), "--json", "--trials", "100000"], repeats=repeats)
        print(f"   {shape:20s}: {runs.text()}", flush=True)
    print(f"\nload average at the end {load()}")


if __name__ == "__main__":
    main()
