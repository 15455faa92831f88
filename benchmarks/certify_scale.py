"""Certification at scale (issue 18, item 4): the demo campaign with 10⁴ characterization
runs, 100 units × 5 replicates of homogeneity and 200 stability points (rows drawn around
the demo's own rows; the numbers mean nothing), as the whole command
``budget certify CAMPAIGN --json`` with --trials 0 and with 10⁶ trials. The per-run
values are evaluated by the compiled model on whole columns (one program over all rows).
Run: python benchmarks/certify_scale.py [repeats]
"""

from __future__ import annotations

import csv
import os
import shutil
import sys
import tempfile
from pathlib import Path

import numpy as np

sys.path.insert(0, os.path.dirname(__file__))

from measure import command, load  # noqa: E402

DEMO = Path(__file__).resolve().parent.parent / "models" / "vics-as-25a"


def rows(path: Path) -> tuple[list[str], list[list[str]]]:
    with open(path, newline="") as handle:
        table = list(csv.reader(handle))
    return table[0], table[1:]


def write(path: Path, header: list[str], body: list[list[object]]) -> None:
    with open(path, "w", newline="") as handle:
        writer = csv.writer(handle)
        writer.writerow(header)
        writer.writerows(body)


def campaign(folder: Path, runs: int, units: int, replicates: int, points: int) -> Path:
    for item in DEMO.iterdir():
        if item.is_file():
            shutil.copy(item, folder / item.name)
        else:
            shutil.copytree(item, folder / item.name)
    rng = np.random.default_rng(7)
    header, demo = rows(DEMO / "determinations.csv")
    body = []
    for n in range(runs):
        row = list(demo[n % len(demo)])
        row[0], row[1] = f"D{n + 1}", f"U-{n % units:03d}"
        mass = header.index("m_c")
        row[mass] = f"{float(row[mass]) * (1 + 1e-4 * rng.standard_normal()):.6f}"
        body.append(row)
    write(folder / "determinations.csv", header, body)
    write(folder / "homogeneity.csv", ["unit", "replicate", "value"],
          [[f"U-{u:03d}", r + 1, f"{99.986 + 0.004 * rng.standard_normal():.4f}"]
           for u in range(units) for r in range(replicates)])
    write(folder / "stability.csv", ["time", "replicate", "value"],
          [[t * 24 // points * 1, r + 1, f"{99.986 + 0.003 * rng.standard_normal():.4f}"]
           for t in range(points // 2) for r in range(2)])
    return folder / "campaign.toml"


def main() -> None:
    repeats = int(sys.argv[1]) if len(sys.argv) > 1 else 3
    folder = Path(tempfile.mkdtemp(prefix="budget-certify-"))
    path = campaign(folder, 10_000, 100, 5, 200)
    print(f"load average {load()}; 10,000 runs, 100 units x 5 replicates, 200 stability "
          "points")
    for trials in ("0", "1000000"):
        runs = command(["certify", str(path), "--json", "--trials", trials], repeats)
        print(f"  --trials {trials:>7s}: {runs.text()}", flush=True)


if __name__ == "__main__":
    main()
