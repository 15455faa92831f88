"""Make the invented raw records of the demo scenario (fictional Velmora Institute).

Every record is drawn from stated "true" parameters (``TRUE``) plus Gaussian noise with a
fixed seed, so the committed CSV files can be made again bit for bit:

    python models/generate_records.py

The tests import this file to draw the same records with other seeds and check that the
fits recover the true parameters within their stated uncertainties (coverage).
All numbers are invented; they mean nothing outside the demo.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

SEED = 20250630
HERE = Path(__file__).resolve().parent

TRUE: dict[str, dict[str, float]] = {
    # constant-current titration D1 of VICS-AS-25A: voltage across the 10 Ω standard
    # resistor during the main titration, sampled every 0.5 s (noise 2 µV)
    "d1-main": {"U": 1.000048, "t_m": 2476.785, "step": 0.5, "noise": 2e-6},
    # pre-titration: indicator-electrode potential against generated charge, a sigmoid
    # with its inflection at the pre-titration end point (noise 0.3 mV)
    "d1-pre": {"end_point": 41.4, "E0": 150.0, "height": 120.0, "width": 1.5,
               "stop": 50.0, "step": 0.25, "noise": 0.3},
    # post-titration: amperometric indicator current against generated charge, two
    # straight branches meeting at the end point, slightly rounded there (noise 0.01 µA)
    "d1-post": {"end_point": 307.5, "base": 0.20, "slope_before": 0.0010,
                "slope_after": 0.045, "rounding": 1.5, "noise": 0.01},
    # controlled-potential electrolysis of K2Cr2O7: i = i0·exp(−t/τ) + i_b in mA, every
    # 0.5 s for 1000 s (noise 0.002 mA)
    "cpc": {"i0": 540.6, "tau": 110.0, "i_b": 0.021, "end": 1000.0, "step": 0.5,
            "noise": 0.002},
    # water titration cell: cumulative background (drift) charge in mC, every 10 s before
    # (0–600 s) and after (800–1400 s) the titration (noise 0.05 mC)
    "drift": {"rate": 0.0025, "before": 0.8, "after": 2.3, "noise": 0.05},
}


def main_titration(rng: np.random.Generator) -> tuple[np.ndarray, np.ndarray]:
    p = TRUE["d1-main"]
    t = np.append(np.arange(0.0, p["t_m"], p["step"]), p["t_m"])
    return t, p["U"] + rng.normal(0.0, p["noise"], t.size)


def pre_titration(rng: np.random.Generator) -> tuple[np.ndarray, np.ndarray]:
    p = TRUE["d1-pre"]
    q = np.arange(0.0, p["stop"] + p["step"] / 2, p["step"])
    e = p["E0"] + p["height"] * np.tanh((q - p["end_point"]) / p["width"])
    return q, e + rng.normal(0.0, p["noise"], q.size)


def post_titration(rng: np.random.Generator) -> tuple[np.ndarray, np.ndarray]:
    p = TRUE["d1-post"]
    q = np.arange(240.0, 381.0, 1.0)
    d = q - p["end_point"]
    w = p["rounding"]
    bend = (p["slope_after"] - p["slope_before"]) * w * np.logaddexp(0.0, d / w)
    i = p["base"] + p["slope_before"] * d + bend
    return q, i + rng.normal(0.0, p["noise"], q.size)


def electrolysis(rng: np.random.Generator) -> tuple[np.ndarray, np.ndarray]:
    p = TRUE["cpc"]
    t = np.arange(0.0, p["end"] + p["step"] / 2, p["step"])
    i = p["i0"] * np.exp(-t / p["tau"]) + p["i_b"]
    return t, i + rng.normal(0.0, p["noise"], t.size)


def drift_record(rng: np.random.Generator) -> tuple[np.ndarray, np.ndarray]:
    p = TRUE["drift"]
    t = np.concatenate([np.arange(0.0, 601.0, 10.0), np.arange(800.0, 1401.0, 10.0)])
    offset = np.where(t < 700.0, p["before"], p["after"])
    return t, offset + p["rate"] * t + rng.normal(0.0, p["noise"], t.size)


def faradaic_charge() -> float:
    """The true charge of the electrolysis in mC: ∫ i0·exp(−t/τ) dt from 0 to ∞."""
    p = TRUE["cpc"]
    return p["i0"] * p["tau"]


def main_charge() -> float:
    """The true ∫U dt of the main titration in V·s."""
    p = TRUE["d1-main"]
    return p["U"] * p["t_m"]


def _write(path: Path, header: str, columns: tuple[np.ndarray, np.ndarray], digits: int,
           comment: str) -> None:
    lines = [f"# {comment}", "# invented data, made by models/generate_records.py", header]
    x, y = columns
    lines += [f"{a:.10g},{b:.{digits}g}" for a, b in zip(x, y)]
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")


def main() -> None:
    rng = np.random.default_rng(SEED)
    demo, velmora = HERE / "vics-as-25a" / "records", HERE / "velmora" / "records"
    _write(demo / "d1-main.csv", "t [s],U [V]", main_titration(rng), 9,
           "VICS-AS-25A D1: voltage across the standard resistor, main titration")
    _write(demo / "d1-pre.csv", "Q [mC],E [mV]", pre_titration(rng), 6,
           "VICS-AS-25A D1: indicator potential during the pre-titration")
    _write(demo / "d1-post.csv", "Q [mC],i_ind [uA]", post_titration(rng), 5,
           "VICS-AS-25A D1: amperometric indicator current during the post-titration")
    _write(velmora / "cpc-k2cr2o7.csv", "t [s],i [mA]", electrolysis(rng), 7,
           "K2Cr2O7 candidate: current of the controlled-potential electrolysis")
    _write(velmora / "kf-drift.csv", "t [s],Q_d [mC]", drift_record(rng), 6,
           "water titration cell: cumulative background charge before and after")


if __name__ == "__main__":
    main()
