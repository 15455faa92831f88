"""Full Monte Carlo (draws, evaluation, both intervals, validation) against the bare
single-core draws of the same random numbers with numpy's default generator.

4 x 10^6 trials of a model with 10 normal inputs. Prints both times, wall and CPU (all
threads), min and median, their ratios (the target of issue 18 is a wall ratio of at most
0.55 on a 2-core machine), the process's peak resident memory and the load average. Run:

    python benchmarks/montecarlo_ratio.py [trials] [repeats]
"""

from __future__ import annotations

import os
import resource
import statistics
import sys
import time

import numpy as np

sys.path.insert(0, os.path.dirname(__file__))

from generate import linear_model  # noqa: E402
from measure import load  # noqa: E402

from budget._gum import propagate  # noqa: E402
from budget._model import parse_model  # noqa: E402
from budget._montecarlo import simulate  # noqa: E402


def bare_draws(trials: int, inputs: int) -> tuple[float, float]:
    rng = np.random.default_rng(1)
    start, cpu = time.perf_counter(), time.process_time()
    for _ in range(inputs):
        rng.standard_normal(trials)
    return time.perf_counter() - start, time.process_time() - cpu


def full_monte_carlo(model, budget, trials: int) -> tuple[float, float]:
    start, cpu = time.perf_counter(), time.process_time()
    simulate(model, budget, trials=trials, seed=1)
    return time.perf_counter() - start, time.process_time() - cpu


def line(name: str, runs: list[tuple[float, float]]) -> str:
    wall, cpu = [r[0] for r in runs], [r[1] for r in runs]
    return (f"{name}: wall min {min(wall):.3f} s, median {statistics.median(wall):.3f} s; "
            f"CPU min {min(cpu):.3f} s, median {statistics.median(cpu):.3f} s")


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
    ratios = [f[0] / b[0] for f, b in zip(full, bare)]
    cpu_ratios = [f[1] / b[1] for f, b in zip(full, bare)]
    print(f"machine: {os.cpu_count()} cores, numpy {np.__version__}; load average {load()}")
    print(f"trials: {trials:,}; inputs: 10 (normal); {repeats} rounds in turns")
    print(line("bare single-core draws (default_rng, standard_normal)", bare))
    print(line("full Monte Carlo (draws, evaluation, intervals, validation)", full))
    print(f"ratio full / bare, wall: per round min {min(ratios):.2f}, median "
          f"{statistics.median(ratios):.2f}, max {max(ratios):.2f}")
    print(f"ratio full / bare, CPU (all threads; the wall ratio on two idle cores is about "
          f"half of it): per round min {min(cpu_ratios):.2f}, median "
          f"{statistics.median(cpu_ratios):.2f}")
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(f"peak resident memory of this process: {peak:.0f} MB")


if __name__ == "__main__":
    main()
