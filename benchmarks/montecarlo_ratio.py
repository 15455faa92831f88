"""Full Monte Carlo (draws, evaluation, both intervals, validation) against the bare
single-core draws of the same random numbers with numpy's default generator.

4 x 10^6 trials of a model with 10 normal inputs. Prints both times and their ratio
(the target of issue 3 is a ratio of at most 1.0 on a 2-core machine). Run:

    python benchmarks/montecarlo_ratio.py [trials] [repeats]
"""

from __future__ import annotations

import os
import statistics
import sys
import time

import numpy as np

sys.path.insert(0, os.path.dirname(__file__))

from generate import linear_model  # noqa: E402

from budget.gum import propagate  # noqa: E402
from budget.model import parse_model  # noqa: E402
from budget.montecarlo import simulate  # noqa: E402


def bare_draws(trials: int, inputs: int) -> float:
    rng = np.random.default_rng(1)
    start = time.perf_counter()
    for _ in range(inputs):
        rng.standard_normal(trials)
    return time.perf_counter() - start


def full_monte_carlo(model, budget, trials: int) -> float:
    start = time.perf_counter()
    simulate(model, budget, trials=trials, seed=1)
    return time.perf_counter() - start


def main() -> None:
    trials = int(sys.argv[1]) if len(sys.argv) > 1 else 4_000_000
    repeats = int(sys.argv[2]) if len(sys.argv) > 2 else 5
    model = parse_model(linear_model(10))
    budget = propagate(model)
    full_monte_carlo(model, budget, 100_000)  # warm up: compile, threads, imports
    bare, full = [], []
    for _ in range(repeats):  # in turns, so that a change of load touches both alike
        bare.append(bare_draws(trials, 10))
        full.append(full_monte_carlo(model, budget, trials))
    ratios = [f / b for f, b in zip(full, bare)]
    print(f"machine: {os.cpu_count()} cores, numpy {np.__version__}")
    print(f"trials: {trials:,}; inputs: 10 (normal); {repeats} rounds in turns")
    print(f"bare single-core draws (default_rng, standard_normal): min {min(bare):.3f} s, "
          f"median {statistics.median(bare):.3f} s")
    print(f"full Monte Carlo (draws, evaluation, intervals, validation): min {min(full):.3f} s,"
          f" median {statistics.median(full):.3f} s")
    print(f"ratio full / bare: min of the times {min(full) / min(bare):.2f}; per round: min "
          f"{min(ratios):.2f}, median {statistics.median(ratios):.2f}, max {max(ratios):.2f}")


if __name__ == "__main__":
    main()
