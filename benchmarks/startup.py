"""Start-up of whole commands on the demo (issue 18, item 6): ``python -c pass``,
``budget --help``, ``budget check`` and ``budget run --trials 0`` of the demo model, and
``budget certify --trials 0`` of the demo campaign; wall and CPU time, min and median of
fresh processes. Run: python benchmarks/startup.py [repeats]
"""

from __future__ import annotations

import os
import statistics
import subprocess
import sys
import time
from pathlib import Path

sys.path.insert(0, os.path.dirname(__file__))

from measure import command, load  # noqa: E402

DEMO = Path(__file__).resolve().parent.parent / "models" / "vics-as-25a"


def main() -> None:
    repeats = int(sys.argv[1]) if len(sys.argv) > 1 else 7
    print(f"load average {load()}; {repeats} fresh processes each")
    bare = []
    for _ in range(repeats):
        start = time.perf_counter()
        subprocess.run([sys.executable, "-c", "pass"], check=True)
        bare.append(time.perf_counter() - start)
    print(f"  python -c pass:        wall min {min(bare):.2f} s, median "
          f"{statistics.median(bare):.2f} s")
    for label, args in (("budget --help", ["--help"]),
                        ("check demo model", ["check", str(DEMO / "coulometric-purity.toml")]),
                        ("run demo --trials 0", ["run", str(DEMO / "coulometric-purity.toml"),
                                                 "--trials", "0"]),
                        ("certify demo --trials 0", ["certify", str(DEMO / "campaign.toml"),
                                                     "--trials", "0"])):
        print(f"  {label:22s} {command(args, repeats).text()}", flush=True)


if __name__ == "__main__":
    main()
