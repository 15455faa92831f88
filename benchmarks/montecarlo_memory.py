"""Peak memory of long Monte Carlo runs of the demo model (issue 18, item 3: 10^8 trials
in at most 400 MB), each a whole `budget run --json` command in a fresh process.

Runs above 10^7 values are streamed (budget/_streaming.py): moments, a histogram and the
tails only. Prints wall and CPU time (min and median) and the peak resident memory of the
whole command (Python start-up included), with the load average. Run:

    python benchmarks/montecarlo_memory.py [repeats] [trials ...]
"""

from __future__ import annotations

import os
import platform
import sys
from pathlib import Path

sys.path.insert(0, os.path.dirname(__file__))

from measure import command, load  # noqa: E402

DEMO = Path(__file__).resolve().parent.parent / "models" / "vics-as-25a" / "coulometric-purity.toml"


def main() -> None:
    repeats = int(sys.argv[1]) if len(sys.argv) > 1 else 2
    sizes = [int(a) for a in sys.argv[2:]] or [10_000_000, 100_000_000]
    print(f"machine: {platform.platform()}, {os.cpu_count()} cores; load average {load()}")
    print(f"model: {DEMO.relative_to(DEMO.parents[2])}; {repeats} runs each")
    for trials in sizes:
        runs = command(["run", str(DEMO), "--json", "--trials", str(trials)], repeats)
        print(f"  --trials {trials:>11,}: {runs.text()}")
    print(f"load average after: {load()}")


if __name__ == "__main__":
    main()
