"""Correlated Student-t inputs against bare draws (issue 18, item 7), in turns in one
process: 10 inputs with t distributions (ν = 8), correlated in pairs (r = 0.5), 10⁶
trials of the full Monte Carlo, against numpy's default generator drawing the same count
of standard normals on one core. Run: python benchmarks/correlated_t.py [trials] [rounds]
"""

from __future__ import annotations

import os
import statistics
import sys
import time

import numpy as np

sys.path.insert(0, os.path.dirname(__file__))

from measure import load  # noqa: E402

from budget._model import parse_model  # noqa: E402
from budget._montecarlo import simulate  # noqa: E402


def text(n: int) -> str:
    lines = ['title = "correlated t (benchmark)"', "[measurands.y]",
             'equation = "' + " + ".join(f"x_{i}" for i in range(n)) + '"']
    for i in range(n):
        lines += [f"[inputs.x_{i}]", f"value = {1 + i}", 'distribution = "student_t"',
                  "u = 0.01", "dof = 8"]
    for i in range(0, n, 2):
        lines += ["[[correlations]]", f'between = ["x_{i}", "x_{i + 1}"]', "r = 0.5"]
    return "\n".join(lines) + "\n"


def main() -> None:
    trials = int(sys.argv[1]) if len(sys.argv) > 1 else 1_000_000
    rounds = int(sys.argv[2]) if len(sys.argv) > 2 else 5
    model = parse_model(text(10))
    simulate(model, trials=100_000)  # warm up
    full, bare = [], []
    for _ in range(rounds):
        start = time.perf_counter()
        simulate(model, trials=trials, seed=2)
        full.append(time.perf_counter() - start)
        rng = np.random.default_rng(1)
        start = time.perf_counter()
        for _ in range(10):
            rng.standard_normal(trials)
        bare.append(time.perf_counter() - start)
    ratios = [f / b for f, b in zip(full, bare)]
    print(f"load average {load()}; {trials:,} trials, 10 correlated t inputs, {rounds} rounds")
    print(f"  full Monte Carlo: min {min(full):.3f} s; bare normal draws: min {min(bare):.3f} s")
    print(f"  ratio per round: min {min(ratios):.2f}, median {statistics.median(ratios):.2f}")


if __name__ == "__main__":
    main()
