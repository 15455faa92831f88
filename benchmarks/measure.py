"""Shared helpers of the benchmarks: whole commands in fresh processes, min and median.

Each run of ``command`` starts a new Python process that runs the ``budget`` command line
in process and reports, at exit, its CPU time (user + system, its worker processes
included) and peak resident memory (the largest of the process and its workers). Wall
time is measured from outside (Python start-up included). On a shared machine the wall
time varies with the load; the CPU time varies much less, so both are printed.
"""

from __future__ import annotations

import os
import statistics
import subprocess
import sys
import time
from dataclasses import dataclass

# Whole commands are timed as a user runs them: with the compiled bytecode of budget and its
# libraries in place (written by the first run, or by pip at install). An environment that
# forbids writing it (PYTHONDONTWRITEBYTECODE, as some sandboxes set) makes every process
# compile budget's sources again, 0.1-0.2 s here; the benchmarks' child processes run
# without it.
os.environ.pop("PYTHONDONTWRITEBYTECODE", None)

_CHILD = """
import os, resource, sys
sys.argv = ["budget"] + sys.argv[1:]
from budget._cli import main
code = 0
try:
    main()
except SystemExit as stop:
    code = stop.code
usage = resource.getrusage(resource.RUSAGE_SELF)
children = resource.getrusage(resource.RUSAGE_CHILDREN)  # worker processes, if any
cpu = usage.ru_utime + usage.ru_stime + children.ru_utime + children.ru_stime
sys.stderr.write(f"\\nMEASURED {max(usage.ru_maxrss, children.ru_maxrss)} {cpu}\\n")
sys.stderr.flush()
os._exit(code or 0)
"""


@dataclass(frozen=True)
class Runs:
    wall: list[float]
    cpu: list[float]
    peak_mb: float

    def text(self) -> str:
        return (f"wall min {min(self.wall):6.2f} s, median {statistics.median(self.wall):6.2f}"
                f" s; CPU min {min(self.cpu):6.2f} s, median {statistics.median(self.cpu):6.2f}"
                f" s; peak {self.peak_mb:5.0f} MB")


def command(args: list[str], repeats: int = 3) -> Runs:
    """Run ``budget ARGS`` ``repeats`` times in fresh processes."""
    walls, cpus, peak = [], [], 0.0
    for _ in range(repeats):
        start = time.perf_counter()
        done = subprocess.run([sys.executable, "-c", _CHILD, *args], stdout=subprocess.DEVNULL,
                              stderr=subprocess.PIPE, text=True, check=False)
        walls.append(time.perf_counter() - start)
        if done.returncode != 0 or "MEASURED " not in done.stderr:
            raise SystemExit(f"budget {' '.join(args)} failed: {done.stderr[-2000:]}")
        kilobytes, cpu = done.stderr.rsplit("MEASURED ", 1)[1].split()[:2]
        cpus.append(float(cpu))
        peak = max(peak, int(kilobytes) / 1024)
    return Runs(walls, cpus, peak)


def load() -> str:
    """The machine's load average, to print beside the figures."""
    try:
        with open("/proc/loadavg") as handle:
            return " ".join(handle.read().split()[:3])
    except OSError:
        return "unknown"
