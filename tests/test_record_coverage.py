"""The records' generator: the fits recover its true parameters within their uncertainties.

Records are drawn again with many seeds by ``models/generate_records.py`` (invented demo
data). For each quantity the 95 % interval x ± t₉₅(ν)·u(x) must contain the generator's
true value in about 95 % of the seeds. With N seeds the observed fraction has a binomial
standard deviation √(0.95·0.05/N); the test accepts 0.95 ± 3.5 of them (N = 200:
[0.896, 1.0]), so a correct method fails about once in 4000 runs, and an uncertainty too
small by a third (true coverage ≈ 0.80) fails every time.
"""

from __future__ import annotations

import importlib.util
import math

import numpy as np
from scipy.stats import t as student_t

from budget._records import charge, checked_series, drift, inflection, intersection
from conftest import MODELS

SEEDS = 200
_spec = importlib.util.spec_from_file_location("generate_records",
                                               MODELS / "generate_records.py")
assert _spec is not None and _spec.loader is not None
gen = importlib.util.module_from_spec(_spec)
_spec.loader.exec_module(gen)


def _covered(estimate: float, u: float, dof: float, truth: float) -> bool:
    k = 1.959963984540054 if math.isinf(dof) else float(student_t.ppf(0.975, dof))
    return abs(estimate - truth) <= k * u


def _assert_coverage(hits: int) -> None:
    print(f"coverage {hits / SEEDS:.3f}")
    sd = math.sqrt(0.95 * 0.05 / SEEDS)
    assert abs(hits / SEEDS - 0.95) <= 3.5 * sd, hits / SEEDS


def _series(x: np.ndarray, y: np.ndarray, name: str = "x"):
    return checked_series("generated.csv", x, y, np.arange(len(x)) + 2, name)


def test_post_titration_end_point_by_intersection_covers_the_truth():
    truth = gen.TRUE["d1-post"]["end_point"]
    hits = 0
    for seed in range(SEEDS):
        q, i = gen.post_titration(np.random.default_rng(seed))
        found = intersection(_series(q, i), (245.0, 300.0), (315.0, 375.0))
        hits += _covered(found.estimates[0], found.standard_uncertainties[0], found.dof,
                         truth)
    _assert_coverage(hits)


def test_pre_titration_end_point_by_inflection_covers_the_truth():
    # the cubic only approximates the sigmoid: its misfit enters s, so u(x) is on the safe
    # side (observed coverage about 0.99 with this window; wider windows inflate u more)
    p = gen.TRUE["d1-pre"]
    hits = 0
    for seed in range(SEEDS):
        q, e = gen.pre_titration(np.random.default_rng(seed))
        window = (p["end_point"] - 1.5, p["end_point"] + 1.5)  # centred, as in the model
        found = inflection(_series(q, e), window)
        hits += _covered(found.estimates[0], found.standard_uncertainties[0], found.dof,
                         p["end_point"])
    _assert_coverage(hits)


def test_drift_rate_covers_the_truth():
    truth = gen.TRUE["drift"]["rate"]
    hits = 0
    for seed in range(SEEDS):
        t, q = gen.drift_record(np.random.default_rng(seed))
        found = drift(_series(t, q, "t"), (0.0, 600.0), (800.0, 1400.0))
        hits += _covered(found.estimates[0], found.standard_uncertainties[0], found.dof,
                         truth)
    _assert_coverage(hits)


def _electrolysis_charge(seed: int) -> tuple[float, float]:
    """Q = trapezoid + rule correction − background + residual, with its u (GUM 5.1)."""
    p = gen.TRUE["cpc"]
    t, i = gen.electrolysis(np.random.default_rng(seed))
    result = charge(_series(t, i, "t"), None, "exponential", (600.0, 1000.0), True)
    g = np.array([-1.0, 1.0])
    background = result.background
    estimate = result.raw + result.rule_error + float(g @ background.estimates)
    variance = (p["noise"] ** 2 * float(np.sum(result.weights ** 2))
                + float(g @ background.covariance @ g) + result.rule_error ** 2 / 3.0)
    return estimate, math.sqrt(variance)


def test_electrolysis_charge_with_exponential_background_covers_the_truth():
    truth = gen.faradaic_charge()
    hits = 0
    for seed in range(SEEDS):
        estimate, u = _electrolysis_charge(seed)
        hits += _covered(estimate, u, math.inf, truth)  # ν > 700: the normal quantile
    _assert_coverage(hits)


def test_committed_records_are_the_generators_output():
    # the committed files are what `python models/generate_records.py` writes (fixed seed)
    import tempfile
    from pathlib import Path

    with tempfile.TemporaryDirectory() as folder:
        original = gen.HERE
        try:
            gen.HERE = Path(folder)
            gen.main()
            for path in Path(folder).rglob("*.csv"):
                committed = MODELS / path.relative_to(folder)
                assert committed.read_text(encoding="utf-8") == path.read_text(
                    encoding="utf-8"), committed
        finally:
            gen.HERE = original
