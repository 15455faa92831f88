"""Speed and memory of the whole command, measured in fresh processes.

Prints, for this machine:
  1. the linear budget (`budget run --json --trials 0`) of the mean of n coulometric
     determinations, 3n + 3 inputs, for n = 33 ... 1000 (about 100 ... 3000 inputs);
  2. the 903-input model: --trials 0, and 10^5 Monte Carlo trials;
  3. `budget --help` (start-up);
  4. the demo model with 10^6 trials and the HTML report;
  5. the demo model with 10^7 trials: time and peak memory.
Each figure is the best of a few runs (wall time of the whole process, Python start-up
included). Run: python benchmarks/scale.py
"""

from __future__ import annotations

import os
import platform
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, os.path.dirname(__file__))

from generate import mean_of_determinations, product_model  # noqa: E402

ROOT = Path(__file__).resolve().parent.parent
DEMO = ROOT / "models" / "vics-as-25a" / "coulometric-purity.toml"


_CHILD = """
import resource, sys
sys.argv = ["budget"] + sys.argv[1:]
from budget._cli import main
try:
    main()
except SystemExit as stop:
    code = stop.code
sys.stderr.write(f"\\nMAXRSS {resource.getrusage(resource.RUSAGE_SELF).ru_maxrss}\\n")
sys.exit(code)
"""


def run(args: list[str], repeats: int = 3) -> tuple[float, float]:
    """Best wall time (s) and the largest peak resident memory (MB) of fresh processes."""
    best, peak = float("inf"), 0.0
    for _ in range(repeats):
        start = time.perf_counter()
        done = subprocess.run([sys.executable, "-c", _CHILD, *args], capture_output=True,
                              text=True, check=False)
        elapsed = time.perf_counter() - start
        if done.returncode != 0:
            raise SystemExit(f"budget {' '.join(args)} failed: {done.stderr}")
        best = min(best, elapsed)
        kilobytes = int(done.stderr.rsplit("MAXRSS ", 1)[1].split()[0])
        peak = max(peak, kilobytes / 1024)
    return best, peak


def main() -> None:
    folder = Path(tempfile.mkdtemp(prefix="budget-bench-"))
    print(f"machine: {platform.platform()}, {os.cpu_count()} cores, Python "
          f"{platform.python_version()}")
    print("\n1. linear budget, budget run --json --trials 0 (mean of n determinations)")
    print("   inputs   seconds")
    for n in (33, 100, 200, 300, 500, 1000):
        path = folder / f"mean{n}.toml"
        path.write_text(mean_of_determinations(n))
        seconds, _ = run([ "run", str(path), "--json", "--trials", "0"], repeats=2)
        print(f"   {3 * n + 3:6d}   {seconds:7.2f}")
    print("   the engine alone (parse + GUM propagation, in process, best of 3):")
    from budget._gum import propagate
    from budget._model import parse_model

    for n in (33, 100, 200, 300, 500, 1000):
        text = mean_of_determinations(n)
        best = float("inf")
        for _ in range(3):
            start = time.perf_counter()
            propagate(parse_model(text))
            best = min(best, time.perf_counter() - start)
        print(f"   {3 * n + 3:6d}   {best:7.3f}   ({1e3 * best / (3 * n + 3):.2f} ms per input)")
    product = folder / "product200.toml"
    product.write_text(product_model(200))
    seconds, _ = run(["run", str(product), "--json", "--trials", "0"], repeats=2)
    print(f"   product of 200 inputs: {seconds:.2f} s")

    big = folder / "mean300.toml"
    print("\n2. 903-input model (300 determinations)")
    seconds, memory = run(["run", str(big), "--json", "--trials", "0"])
    print(f"   --trials 0:        {seconds:.2f} s, peak {memory:.0f} MB")
    seconds, memory = run(["run", str(big), "--json", "--trials", "100000"])
    print(f"   --trials 100000:   {seconds:.2f} s, peak {memory:.0f} MB")

    print("\n3. start-up")
    command = shutil.which("budget")
    if command:
        times = []
        for _ in range(5):
            start = time.perf_counter()
            subprocess.run([command, "--help"], capture_output=True, check=True)
            times.append(time.perf_counter() - start)
        print(f"   budget --help:     {min(times):.2f} s (the installed command)")
    else:
        seconds, _ = run(["--help"], repeats=5)
        print(f"   budget --help:     {seconds:.2f} s (python -c, command not installed)")

    print("\n4. demo model, 10^6 trials and the HTML report")
    html = folder / "demo.html"
    seconds, memory = run(["run", str(DEMO), "--trials", "1000000", "--html", str(html)])
    print(f"   run --html:        {seconds:.2f} s, peak {memory:.0f} MB")

    print("\n5. demo model, 10^7 trials")
    seconds, memory = run(["run", str(DEMO), "--json", "--trials", "10000000"], repeats=1)
    print(f"   run --json:        {seconds:.2f} s, peak {memory:.0f} MB")


if __name__ == "__main__":
    main()
