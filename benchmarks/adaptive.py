"""The adaptive procedure (JCGM 101 7.9) against a fixed run of the trials it needed
(issue 18, item 7), side by side in one process: the EURACHEM A2 model at --digits 3.

Prints the trials the adaptive run took, both times, wall and CPU (all threads; min and
median of the rounds), the median of the per-round ratios adaptive / fixed, then the
whole `budget run --adaptive --digits D --json` command in fresh processes (wall, CPU and
peak resident memory: the run keeps 10^7 values and streams the rest), and the load
average. Run:

    python benchmarks/adaptive.py [rounds] [digits]
"""

from __future__ import annotations

import os
import platform
import statistics
import sys
import time
from pathlib import Path

sys.path.insert(0, os.path.dirname(__file__))

from measure import command, load  # noqa: E402

from budget._gum import propagate  # noqa: E402
from budget._model import load_model  # noqa: E402
from budget._montecarlo import simulate  # noqa: E402

MODEL = Path(__file__).resolve().parent.parent / "models" / "reference" / "eurachem-a2-naoh.toml"


def main() -> None:
    rounds = int(sys.argv[1]) if len(sys.argv) > 1 else 3
    digits = int(sys.argv[2]) if len(sys.argv) > 2 else 3
    model = load_model(MODEL)
    budget = propagate(model)
    simulate(model, budget, trials=100_000, seed=1)  # warm up
    print(f"machine: {platform.platform()}, {os.cpu_count()} cores; load average {load()}")
    adaptive, fixed, trials = [], [], 0
    adaptive_cpu, fixed_cpu = [], []
    for _ in range(rounds):
        start, cpu = time.perf_counter(), time.process_time()
        result = simulate(model, budget, adaptive=True, digits=digits, seed=1)
        adaptive.append(time.perf_counter() - start)
        adaptive_cpu.append(time.process_time() - cpu)
        trials = result.trials
        start, cpu = time.perf_counter(), time.process_time()
        simulate(model, budget, trials=trials, digits=digits, seed=1)
        fixed.append(time.perf_counter() - start)
        fixed_cpu.append(time.process_time() - cpu)
    ratios = [a / f for a, f in zip(adaptive, fixed)]
    cpu_ratios = [a / f for a, f in zip(adaptive_cpu, fixed_cpu)]
    print(f"EURACHEM A2, --adaptive --digits {digits}: {trials:,} trials")
    for name, wall, cpu in (("adaptive", adaptive, adaptive_cpu),
                            ("fixed run of the same trials", fixed, fixed_cpu)):
        print(f"  {name}: wall min {min(wall):.2f} s, median {statistics.median(wall):.2f} s; "
              f"CPU min {min(cpu):.2f} s, median {statistics.median(cpu):.2f} s")
    print(f"  adaptive / fixed: median of per-round ratios, wall "
          f"{statistics.median(ratios):.2f}, CPU {statistics.median(cpu_ratios):.2f}")
    whole = command(["run", str(MODEL), "--adaptive", "--digits", str(digits), "--json"],
                    min(rounds, 3))
    print(f"  whole command, budget run --adaptive --digits {digits} --json: {whole.text()}")
    print(f"load average after: {load()}")


if __name__ == "__main__":
    main()
