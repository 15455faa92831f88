"""About 10^4 inputs with 10^5 Monte Carlo trials (issue 18, item 1: at most 5 s, draws
proportional to inputs x trials, in bounded memory), each a whole `budget run --json
--trials 100000` command in a fresh process, beside the generator's own limit here.

The limit is the bare cost of the same number of standard normal draws (inputs with an
uncertainty x trials) over numpy's SFC64 generator (the one the engine uses) on two
threads, each filling a reused buffer: no model, no evaluation, no statistics; with
numpy's own normals, and with the engine's ziggurat (budget/_ziggurat.py) on its numpy
path and compiled (budget/_compiled_draws.py, which a run of this size uses; the same
numbers). Prints
wall and CPU (min and median), peak resident memory of the whole command, the load
average. Run:

    python benchmarks/montecarlo_inputs.py [repeats] [trials]
"""

from __future__ import annotations

import os
import platform
import statistics
import sys
import tempfile
import time
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

import numpy as np

sys.path.insert(0, os.path.dirname(__file__))

from generate import defined_mean, mean_of_determinations, product_model, sum_model  # noqa: E402
from measure import command, load  # noqa: E402

import budget._ziggurat as ziggurat  # noqa: E402
from budget._ziggurat import standard_normal  # noqa: E402

SHAPES = {
    "sum of 10^4 inputs": sum_model(10_000),
    "product of 10^4 inputs": product_model(10_000),
    "mean of 3332 determinations, one equation": mean_of_determinations(3332),
    "the same mean through definitions": defined_mean(3332),
}


def bare_draws(numbers: int, threads: int = 2, way: str = "numpy"
               ) -> tuple[float, float]:
    """Wall and CPU seconds for ``numbers`` SFC64 standard normals on ``threads``:
    numpy's own (``way`` "numpy"), the engine's ziggurat in numpy ("vectorised") or
    compiled ("compiled")."""
    chunk = 1 << 20
    vectorised = way != "numpy"
    ziggurat.use_compiled(way == "compiled")

    def work(seed: int) -> None:
        rng = np.random.Generator(np.random.SFC64(seed))
        buffer = np.empty(chunk)
        for _ in range(numbers // threads // chunk):
            if vectorised:
                standard_normal(rng, buffer)
            else:
                rng.standard_normal(out=buffer)

    start, cpu = time.perf_counter(), time.process_time()
    with ThreadPoolExecutor(threads) as pool:
        list(pool.map(work, range(threads)))
    return time.perf_counter() - start, time.process_time() - cpu


def main() -> None:
    repeats = int(sys.argv[1]) if len(sys.argv) > 1 else 3
    trials = int(sys.argv[2]) if len(sys.argv) > 2 else 100_000
    folder = Path(tempfile.mkdtemp(prefix="budget-mc-inputs-"))
    print(f"machine: {platform.platform()}, {os.cpu_count()} cores; load average {load()}")
    print(f"whole command: budget run MODEL --json --trials {trials:,}; {repeats} runs each")
    for name, text in SHAPES.items():
        path = folder / f"{name.split()[0]}-{len(name)}.toml"
        path.write_text(text)
        drawn = text.count("\nu = ") + text.count("half_width")
        runs = command(["run", str(path), "--json", "--trials", str(trials)], repeats)
        print(f"  {name} ({drawn:,} inputs drawn, {drawn * trials:.2e} numbers)")
        print(f"    whole command:        {runs.text()}")
        for way, label in (("numpy", "numpy's normals"), ("vectorised", "ziggurat in numpy"),
                           ("compiled", "ziggurat compiled")):
            bare = [bare_draws(drawn * trials, way=way) for _ in range(repeats)]
            walls, cpus = [b[0] for b in bare], [b[1] for b in bare]
            print(f"    bare SFC64 draws, {label} (2 threads): wall min {min(walls):.2f} s, "
                  f"median {statistics.median(walls):.2f} s; CPU min {min(cpus):.2f} s, "
                  f"median {statistics.median(cpus):.2f} s")
    print(f"load average after: {load()}")


if __name__ == "__main__":
    main()
