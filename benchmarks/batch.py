"""A year of batches: ``budget certify-all`` over n copies of the demo campaign
(issue 18, item 5).

Copies the demo campaign (model, register, data files) into n sub-folders and times the
whole command ``budget certify-all FOLDER --json --trials 0`` for n = 25, 100, 250 on
all cores, and for 250 on one worker process, so the table shows how the cost grows with
the number of campaigns and what the second core gives. Min and median of runs.

Run: python benchmarks/batch.py [repeats]
"""

from __future__ import annotations

import os
import platform
import shutil
import sys
import tempfile
from pathlib import Path

sys.path.insert(0, os.path.dirname(__file__))

from measure import command, load  # noqa: E402

DEMO = Path(__file__).resolve().parent.parent / "models" / "vics-as-25a"
_SKIP = {"campaign-methods.toml"}  # a second campaign in the demo folder (needs ../velmora)


def year(folder: Path, count: int) -> Path:
    """``count`` copies of the demo campaign, one sub-folder each."""
    root = folder / f"year-{count}"
    for n in range(count):
        target = root / f"batch-{n:03d}"
        target.mkdir(parents=True)
        for item in DEMO.iterdir():
            if item.is_file() and item.name not in _SKIP:
                shutil.copy(item, target / item.name)
            elif item.is_dir():
                shutil.copytree(item, target / item.name)
    return root


def main() -> None:
    repeats = int(sys.argv[1]) if len(sys.argv) > 1 else 3
    folder = Path(tempfile.mkdtemp(prefix="budget-batch-"))
    print(f"machine: {platform.platform()}, {os.cpu_count()} cores, Python "
          f"{platform.python_version()}; load average at start {load()}")
    print("budget certify-all FOLDER --json --trials 0 (whole command)")
    for count in (25, 100, 250):
        root = year(folder, count)
        runs = command(["certify-all", str(root), "--json", "--trials", "0"], repeats)
        print(f"  {count:4d} campaigns, all cores: {runs.text()}; "
              f"{min(runs.wall) / count * 1e3:.0f} ms per campaign (wall, min)", flush=True)
    runs = command(["certify-all", str(folder / "year-250"), "--json", "--trials", "0",
                    "--workers", "1"], repeats)
    print(f"   250 campaigns, 1 worker:  {runs.text()}")
    print(f"load average at the end {load()}")


if __name__ == "__main__":
    main()
