"""Several measurands from shared inputs: joint Monte Carlo samples and every output.

Source for the expected correlation: the law of propagation for linear models (JCGM 102
6.2.1.3, U_y = J U_x J^T), computed by hand beside each check, and numpy's corrcoef.
Tolerance: five standard errors of a sample correlation, 5·(1 − ρ²)/sqrt(M).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from conftest import model

from budget.montecarlo import simulate

# y1 = a + b, y2 = a - b with u(a) = 1, u(b) = 0.5: cov = 1 - 0.25, var = 1.25 each, so
# r(y1, y2) = 0.75 / 1.25 = 0.60 (JCGM 102 6.2.1.3 by hand)
_SHARED = """
    title = "two measurands"
    [measurands.y1]
    equation = "a + b"
    [measurands.y2]
    equation = "a - b"
    [inputs.a]
    value = 3
    u = 1
    [inputs.b]
    value = 1
    distribution = "rectangular"
    u = 0.5
"""


@pytest.mark.parametrize("trials", [3_000, 50_000, 300_000])
@pytest.mark.parametrize("workers", [1, 2])
def test_samples_keep_their_joint_order(trials, workers):
    # issue 10 regression: at 50,000 trials the rows came back sorted one by one and
    # showed r = 0.84 instead of 0.60
    sim = simulate(model(_SHARED), trials=trials, seed=4, workers=workers)
    y1, y2 = (m.samples for m in sim.measurands)
    r = float(np.corrcoef(y1, y2)[0, 1])
    assert r == pytest.approx(0.60, abs=5 * (1 - 0.36) / math.sqrt(trials))
    assert sim.output_correlation[0][1] == pytest.approx(r, abs=1e-12)
    a_back = (y1 + y2) / 2  # each trial's own value of a: the rows still belong together
    assert np.std(a_back) == pytest.approx(1.0, rel=5 / math.sqrt(2 * trials))


def test_adaptive_samples_keep_their_joint_order():
    sim = simulate(model(_SHARED), adaptive=True, seed=4)
    y1, y2 = (m.samples for m in sim.measurands)
    m = y1.size
    assert float(np.corrcoef(y1, y2)[0, 1]) == pytest.approx(0.60, abs=5 * 0.64 / math.sqrt(m))
