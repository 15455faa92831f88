"""A budget whose charge comes from a 10⁵-point current record, against the same budget typed in.

Issue 13's target: fitting a record of 10⁵ points and using it in a budget with 10⁶ Monte
Carlo trials takes at most twice as long as the same budget with the inputs typed in.

The record is the controlled-potential electrolysis of the Velmora demo
(models/velmora/controlled-potential-dichromate-record.toml) sampled every 10 ms for 1000 s
(100,001 readings; the exponential decay is fitted to the 40,001 readings of the tail).
The typed-in budget is written from the loaded model itself: every generated input becomes
an [inputs.NAME] table with the same estimate, uncertainty, distribution and ν, the
fitted set an [[estimated_together]] set with its correlation, and the record's
definition a definition, so both runs evaluate the same equations on the same inputs.

Each command (``budget run MODEL --trials 1000000 --json``) runs in a fresh process;
the figure is the best of ``--repeat`` wall times, the two commands taking turns (the
machine is shared).

    python benchmarks/records_ratio.py [--repeat 5]
"""

from __future__ import annotations

import argparse
import math
import os
import re
import subprocess
import sys
import tempfile
import time
from pathlib import Path
from typing import Any

import numpy as np

ROOT = Path(__file__).resolve().parent.parent
os.environ.pop("PYTHONDONTWRITEBYTECODE", None)  # as a user runs it: bytecode in place (measure.py)
MODEL = ROOT / "models" / "velmora" / "controlled-potential-dichromate-record.toml"


def write_record(folder: Path, points: int = 100_001) -> None:
    rng = np.random.default_rng(13)
    t = np.linspace(0.0, 1000.0, points)
    i = 540.6 * np.exp(-t / 110.0) + 0.021 + rng.normal(0.0, 0.002, points)
    lines = ["t [s],i [mA]"] + [f"{a:.10g},{b:.7g}" for a, b in zip(t, i)]
    (folder / "records").mkdir(exist_ok=True)
    (folder / "records" / "cpc-k2cr2o7.csv").write_text("\n".join(lines) + "\n")


def typed_in(model_path: Path) -> str:
    """The same model with every generated input typed in (TOML text)."""
    from budget._model import load_model

    model = load_model(model_path)
    text = re.sub(r"^\[records\.[^\]]+\]\n(?:(?!\[).*\n)*", "", model_path.read_text(),
                  flags=re.M)
    made = {i.name for i in model.inputs if i.source.startswith("record ")}
    names = {view.table.split(".", 1)[1] for view in model.records}
    lines = [f'{d.name} = "{d.text}"' for d in model.definitions if d.name in names]
    text = text.replace("[definitions]\n", "[definitions]\n" + "".join(
        line + "\n" for line in lines), 1)
    tables = [_table(item) for item in model.inputs if item.name in made]
    tables += [f'[[correlations]]\nbetween = ["{a}", "{b}"]\nr = {r!r}'
               for a, b, r in model.correlations]
    tables += ["[[estimated_together]]\ninputs = [" + ", ".join(f'"{n}"' for n in s.inputs)
               + "]" for s in model.estimated_together]
    return text.rstrip() + "\n\n" + "\n\n".join(tables) + "\n"


def _table(item: Any) -> str:
    lines = [f"[inputs.{item.name}]", f"value = {item.estimate!r}", f'unit = "{item.unit}"']
    if item.standard_uncertainty == 0:
        lines.append("exact = true")
    elif item.distribution.name == "rectangular":
        lines += ['distribution = "rectangular"',
                  f"half_width = {item.distribution.half_width!r}"]
    else:
        lines.append(f"u = {item.standard_uncertainty!r}")
        if math.isfinite(item.dof):
            lines.append(f"dof = {item.dof!r}")
    return "\n".join(lines)


def one_run(model: Path) -> float:
    start = time.perf_counter()
    subprocess.run([sys.executable, "-m", "budget", "run", str(model), "--trials", "1000000",
                    "--json"], check=True, stdout=subprocess.DEVNULL)
    return time.perf_counter() - start


def best_times(first: Path, second: Path, repeat: int) -> tuple[float, float]:
    """Best wall times of the two commands, run alternately so that load hits both alike."""
    times: tuple[list[float], list[float]] = ([], [])
    for _ in range(repeat):
        times[0].append(one_run(first))
        times[1].append(one_run(second))
    import statistics

    print(f"medians: from the record {statistics.median(times[0]):.2f} s, typed in "
          f"{statistics.median(times[1]):.2f} s")
    return min(times[0]), min(times[1])


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=5)
    repeat = parser.parse_args().repeat
    with tempfile.TemporaryDirectory() as scratch:
        folder = Path(scratch)
        write_record(folder)
        from_record = folder / "from-record.toml"
        from_record.write_text(MODEL.read_text(encoding="utf-8"), encoding="utf-8")
        typed = folder / "typed-in.toml"
        typed.write_text(typed_in(from_record), encoding="utf-8")
        started = time.perf_counter()
        from budget._model import load_model

        load_model(from_record)
        parse = time.perf_counter() - started
        record_time, typed_time = best_times(from_record, typed, repeat)
    print("record: 100,001 readings (exponential fit to 40,001); 10^6 Monte Carlo trials")
    print(f"reading the record, fitting it and building the model, in process: {parse:.2f} s")
    print(f"budget run, charge from the record: {record_time:.2f} s (best of {repeat})")
    print(f"budget run, the same inputs typed in: {typed_time:.2f} s (best of {repeat})")
    print(f"ratio: {record_time / typed_time:.2f} (target <= 2)")


if __name__ == "__main__":
    main()
