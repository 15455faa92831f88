"""Many lots through the Python API against the general-purpose ``uncertainties`` package
(issue 18, item 8), side by side in one process.

The EURACHEM A2 model (c = rep·m·P/(M·V), arithmetic only) for L lots whose sample mass
and titration volume differ: ``budget.lots.propagate_lots`` (model read once, all lots in
one pass) against ``uncertainties`` (one ``ufloat`` per input and lot, the same equation,
``std_dev``), and against ``propagate`` of a fresh model per lot. Prints the cost per lot,
min and median of the rounds, and the ratio. Run: python benchmarks/lots.py [lots] [rounds]
"""

from __future__ import annotations

import os
import platform
import statistics
import sys
import time
from dataclasses import replace
from pathlib import Path

import numpy as np

sys.path.insert(0, os.path.dirname(__file__))

from measure import load  # noqa: E402

from budget.lots import propagate_lots  # noqa: E402
from budget._model import load_model  # noqa: E402

MODEL = Path(__file__).resolve().parent.parent / "models" / "reference" / "eurachem-a2-naoh.toml"


def with_uncertainties(model, masses, volumes) -> float:  # type: ignore[no-untyped-def]
    from uncertainties import ufloat

    fixed = {i.name: (i.estimate, i.standard_uncertainty) for i in model.inputs}
    start = time.perf_counter()
    for m, v in zip(masses, volumes):
        x = {name: ufloat(*fixed[name]) for name in ("rep", "P_KHP", "M_KHP")}
        c = x["rep"] * ufloat(m, fixed["m_KHP"][1]) * x["P_KHP"] / (
            x["M_KHP"] * ufloat(v, fixed["V_T"][1]))
        c.std_dev  # noqa: B018  (the uncertainty is what is asked for)
    return time.perf_counter() - start


def with_lots(model, masses, volumes) -> float:  # type: ignore[no-untyped-def]
    start = time.perf_counter()
    propagate_lots(model, {"m_KHP": masses, "V_T": volumes})
    return time.perf_counter() - start


def main() -> None:
    lots = int(sys.argv[1]) if len(sys.argv) > 1 else 10_000
    rounds = int(sys.argv[2]) if len(sys.argv) > 2 else 5
    model = load_model(MODEL)
    rng = np.random.default_rng(1)
    masses = 0.3888 + 0.01 * rng.standard_normal(lots)
    volumes = 18.64 + 0.2 * rng.standard_normal(lots)
    with_lots(model, masses[:10], volumes[:10])  # warm up: compile
    ours, theirs = [], []
    for _ in range(rounds):
        ours.append(with_lots(model, masses, volumes))
        theirs.append(with_uncertainties(model, masses, volumes))
    per = [1e6 * t / lots for t in ours]
    per_u = [1e6 * t / lots for t in theirs]
    ratios = [a / b for a, b in zip(ours, theirs)]
    print(f"machine: {platform.platform()}, {os.cpu_count()} cores; load average {load()}")
    print(f"{lots:,} lots of EURACHEM A2, {rounds} rounds in turns")
    print(f"  budget.lots.propagate_lots: min {min(per):.2f} µs, median "
          f"{statistics.median(per):.2f} µs per lot")
    print(f"  uncertainties (ufloat):     min {min(per_u):.2f} µs, median "
          f"{statistics.median(per_u):.2f} µs per lot")
    print(f"  ratio budget / uncertainties: median of per-round ratios "
          f"{statistics.median(ratios):.3f}")
    from budget._gum import propagate

    start = time.perf_counter()
    for m in masses[:200]:
        inputs = tuple(replace(i, distribution=replace(i.distribution, estimate=float(m)))
                       if i.name == "m_KHP" else i for i in model.inputs)
        propagate(replace(model, inputs=inputs))
    print(f"  for scale, propagate of a fresh model per lot: "
          f"{1e6 * (time.perf_counter() - start) / 200:.0f} µs per lot")


if __name__ == "__main__":
    main()
