"""Integral and background fit sharing readings: their covariance against a Monte Carlo.

When the integration window of a current–time record and the window the background (or
the exponential tail) is fitted to share readings, the raw integral Q_int and the
background parts Q_bg, Q_res are functions of the same readings. budget gives them the
correlation of the two linear(ised) functions of the readings (GUM 5.2 applied to the
readings, JCGM 102 for the vector form). The reference here is independent of budget:
the record is simulated many times from its noise model, the integral is taken with
scipy.integrate.trapezoid and the background fitted with numpy (constant: the mean) or
scipy.optimize.curve_fit (exponential), and the empirical correlations and the standard
deviation of Q_int − Q_bg + Q_res are compared with what budget reports. Tolerances are
five standard errors of the Monte Carlo estimates: (1 − r²)/√N for a correlation,
u/√(2(N − 1)) for a standard deviation (normal theory).

The record given to budget is one draw whose noise is scaled so that the background
fit's residual standard deviation s is exactly the σ of the noise model: budget's Type A
uncertainties are then those of the model the Monte Carlo draws from (a single draw's s
would scatter by about 1/√(2ν) around σ).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.integrate import trapezoid
from scipy.optimize import curve_fit

from budget._gum import propagate
from budget._model import load_model

_MODEL = """title = "overlap"
[measurands.q]
equation = "{equation}"
unit = "mA*s"

[records.Q]
kind = "charge"
file = "record.csv"
x = "t"
y = "i"
background = "{background}"
background_window = [{low}, {high}]
current_u = {sigma!r}
"""


def _budget(tmp_path, t, i, background, window, sigma, equation):
    lines = "".join(f"{a!r},{b!r}\n" for a, b in zip(t.tolist(), i.tolist()))
    (tmp_path / "record.csv").write_text("t [s],i [mA]\n" + lines, encoding="utf-8")
    path = tmp_path / "m.toml"
    path.write_text(_MODEL.format(equation=equation, background=background, low=window[0],
                                  high=window[1], sigma=sigma), encoding="utf-8")
    model = load_model(str(path))
    return model, propagate(model).measurand("q").combined_uncertainty


def _r(model, a, b):
    return next(r for x, y, r in model.correlations if {x, y} == {a, b})


def _scaled_to(sigma, residual_sd, truth, noise):
    """truth + c·noise with c chosen so that the fit's residual s equals σ."""
    scale = 1.0
    for _ in range(4):  # exact at once for a linear fit; converges fast for the decay
        scale *= sigma / residual_sd(truth + scale * noise)
    return truth + scale * noise


def _agrees(value, reference, standard_error):
    return abs(value - reference) <= 5.0 * standard_error


@pytest.mark.parametrize("background", ["constant", "line"])
def test_fitted_background_in_the_integration_window_against_monte_carlo(tmp_path,
                                                                        background):
    # the whole record is integrated and its second half is the background window (a
    # constant: the mean, ν = n − 1; a line: numpy least squares, ν = n − 2, integrated
    # over the window by hand). For the constant the shared readings make
    # r(Q_int, Q_bg) ≈ √(n_bg/n) ≈ 0.71, and ignoring it would make u(Q_int − Q_bg) about
    # √3 times too large
    t = np.arange(0.0, 100.5, 1.0)
    truth = np.where(t < 40.0, 2.0, 0.0) + 0.05 + 2e-4 * t
    sigma, tail, trials = 0.01, t >= 50.0, 20_000
    degree = {"constant": 0, "line": 1}[background]
    design = np.vander(t[tail], degree + 1, increasing=True)
    rng = np.random.default_rng(11)

    def residual_sd(i):
        residual = i[tail] - design @ np.linalg.lstsq(design, i[tail], rcond=None)[0]
        return float(np.sqrt(residual @ residual / (tail.sum() - degree - 1)))

    record = _scaled_to(sigma, residual_sd, truth, rng.normal(0.0, sigma, t.size))
    model, u = _budget(tmp_path, t, record, background, (50, 100), sigma, "Q_int - Q_bg")
    noisy = truth + rng.normal(0.0, sigma, (trials, t.size))
    q_int = trapezoid(noisy, t, axis=1)
    coefficients = np.linalg.lstsq(design, noisy[:, tail].T, rcond=None)[0]
    integrals = np.array([100.0, 100.0 ** 2 / 2])[:degree + 1]  # ∫ t^k dt over 0–100 s
    q_bg = integrals @ coefficients
    r_mc = float(np.corrcoef(q_int, q_bg)[0, 1])
    r = _r(model, "Q_int", "Q_bg")
    assert _agrees(r, r_mc, (1 - r_mc ** 2) / math.sqrt(trials)), (r, r_mc)
    u_mc = float(np.std(q_int - q_bg, ddof=1))
    se = u_mc / math.sqrt(2 * (trials - 1))
    assert _agrees(u, u_mc, se), (u, u_mc)
    u_int, u_bg = (model.input(n).standard_uncertainty for n in ("Q_int", "Q_bg"))
    assert not _agrees(math.hypot(u_int, u_bg), u_mc, se)  # independence would fail
    assert [s.inputs for s in model.estimated_together] == [("Q_int", "Q_bg")]
    assert model.estimated_together[0].dof == tail.sum() - degree - 1  # the fit's ν


def _decay(x, amplitude, tau, offset):
    return amplitude * np.exp(-(x - 40.0) / tau) + offset


def test_exponential_tail_in_the_integration_window_against_monte_carlo(tmp_path):
    # controlled-potential coulometry: i = i0·exp(−t/τ) + i_b, integrated over 0–200 s, the
    # decay with its offset fitted to 40–200 s; background i_b·200 s, residual i_end·τ
    # (r(Q_int, Q_bg) ≈ 0.6: ignoring it would overstate u by about half)
    t = np.arange(0.0, 200.5, 1.0)
    truth = 5.0 * np.exp(-t / 20.0) + 0.05
    sigma, tail, trials = 0.004, t >= 40.0, 8_000
    start = [5.0 * math.exp(-2.0), 20.0, 0.05]
    rng = np.random.default_rng(12)

    def fitted(i):
        return curve_fit(_decay, t[tail], i[tail], p0=start)[0]

    def residual_sd(i):
        return float(np.sqrt(np.sum((i[tail] - _decay(t[tail], *fitted(i))) ** 2)
                             / (tail.sum() - 3)))

    record = _scaled_to(sigma, residual_sd, truth, rng.normal(0.0, sigma, t.size))
    model, u = _budget(tmp_path, t, record, "exponential", (40, 200), sigma,
                       "Q_int - Q_bg + Q_res")
    draws = np.empty((trials, 3))
    for k in range(trials):
        noisy = truth + rng.normal(0.0, sigma, t.size)
        amplitude, tau, offset = fitted(noisy)
        draws[k] = (trapezoid(noisy, t), offset * 200.0,
                    amplitude * math.exp(-160.0 / tau) * tau)
    r_mc = np.corrcoef(draws.T)
    for (a, b), (i, j) in {("Q_int", "Q_bg"): (0, 1), ("Q_int", "Q_res"): (0, 2),
                           ("Q_bg", "Q_res"): (1, 2)}.items():
        r = _r(model, a, b)
        assert _agrees(r, r_mc[i, j], (1 - r_mc[i, j] ** 2) / math.sqrt(trials)), \
            (a, b, r, r_mc[i, j])
    charge = draws[:, 0] - draws[:, 1] + draws[:, 2]
    u_mc = float(np.std(charge, ddof=1))
    se = u_mc / math.sqrt(2 * (trials - 1))
    assert _agrees(u, u_mc, se), (u, u_mc)
    # the same budget with the shared readings ignored (r(Q_int, ·) = 0) would not agree
    u_int = model.input("Q_int").standard_uncertainty
    cross = sum(sign * _r(model, "Q_int", n) * u_int * model.input(n).standard_uncertainty
                for sign, n in ((-1, "Q_bg"), (1, "Q_res")))
    assert not _agrees(math.sqrt(u ** 2 - 2 * cross), u_mc, se)
    assert model.estimated_together[0].inputs == ("Q_int", "Q_bg", "Q_res")


def test_windows_that_share_no_reading_stay_independent(tmp_path):
    t = np.arange(0.0, 100.5, 1.0)
    i = np.where(t < 40.0, 2.0, 0.0) + 0.05 + 0.01 * np.sin(3.0 * t)
    (tmp_path / "record.csv").write_text(
        "t [s],i [mA]\n" + "".join(f"{a!r},{b!r}\n" for a, b in zip(t.tolist(), i.tolist())),
        encoding="utf-8")
    path = tmp_path / "m.toml"
    path.write_text(_MODEL.format(equation="Q", background="constant", low=60, high=100,
                                  sigma=0.01) + "window = [0, 59]\n", encoding="utf-8")
    model = load_model(str(path))
    assert model.correlations == () and model.estimated_together == ()
    assert model.input("Q_int").dof == math.inf


def test_dichromate_example_integral_and_background_are_correlated():
    # models/velmora/controlled-potential-dichromate-record.toml: the whole record (0 to
    # 1000 s) is integrated and the decay fitted to 600–1000 s, 801 shared readings.
    # Check value: r(Q_int, Q_bg) ≈ 0.22 from the weights alone (the correlation of the
    # trapezoid weights with the linearised fit's influence on i_b) [C: computed, checked
    # against the Monte Carlo of the test above for the same method]; ignoring it
    # overstated u(Q_int − Q_bg + Q_res) by about 4 %
    model = load_model("models/velmora/controlled-potential-dichromate-record.toml")
    assert _r(model, "Q_int", "Q_bg") == pytest.approx(0.223, abs=0.005)
    assert abs(_r(model, "Q_int", "Q_res")) < 0.01
    u = {n: model.input(n).standard_uncertainty for n in ("Q_int", "Q_bg", "Q_res")}
    part = -u["Q_bg"] * _r(model, "Q_int", "Q_bg") + u["Q_res"] * _r(model, "Q_int",
                                                                      "Q_res")
    bg_res = u["Q_bg"] ** 2 + u["Q_res"] ** 2 - 2 * _r(model, "Q_bg", "Q_res") \
        * u["Q_bg"] * u["Q_res"]
    together = math.sqrt(u["Q_int"] ** 2 + bg_res + 2 * u["Q_int"] * part)
    apart = math.sqrt(u["Q_int"] ** 2 + bg_res)
    assert 1 - together / apart == pytest.approx(0.043, abs=0.005)
    assert not model.warnings


def test_integral_without_current_u_warns_when_the_background_fit_shows_scatter(tmp_path):
    t = np.arange(0.0, 100.5, 1.0)
    i = np.where(t < 40.0, 2.0, 0.0) + 0.05 + 0.01 * np.sin(3.0 * t)
    (tmp_path / "record.csv").write_text(
        "t [s],i [mA]\n" + "".join(f"{a!r},{b!r}\n" for a, b in zip(t.tolist(), i.tolist())),
        encoding="utf-8")
    path = tmp_path / "m.toml"
    text = _MODEL.format(equation="Q", background="constant", low=50, high=100, sigma=0.01)
    path.write_text(text.replace("current_u = 0.01\n", ""), encoding="utf-8")
    model = load_model(str(path))
    s = float(np.std(i[t >= 50], ddof=1))
    assert model.warnings == (
        f"[records.Q]: no current_u, so the integrated readings are taken as exact, yet the "
        f"readings of the background fit scatter by s = {s:.3g} mA; state current_u (the "
        "standard uncertainty of each reading)",)
    assert model.input("Q_int").distribution.name == "exact"
    assert model.correlations == ()
