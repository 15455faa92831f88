"""The vectorised ziggurat (budget/_ziggurat.py) against the published method and scipy.

Sources:
* Marsaglia, G. and Tsang, W. W. (2000), "The ziggurat method for generating random
  variables", Journal of Statistical Software 5(8): for 256 layers of the normal density,
  r = 3.6541528853610088 and v = 4.92867323399e-3 (the constants of its section 4; the
  same r is in numpy's own ziggurat source, ``ziggurat_nor_r``; both quoted from memory).
* The standard normal distribution function, tail and quantiles: scipy.stats.norm and
  scipy.stats.truncnorm (a general-purpose reference library).

The statistical checks use fixed seeds and 10^6-10^7 numbers, so they are deterministic;
each was seen to fail when a slow path of the method was broken on purpose (the wedge test
always accepting, the tail drawn without its rejection step, the tail's sign dropped).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from budget import _ziggurat as zig


def _normals(n: int, seed: int = 7, shape: tuple[int, ...] | None = None) -> np.ndarray:
    out = np.empty(shape or (n,))
    return zig.standard_normal(np.random.Generator(np.random.SFC64(seed)), out).reshape(-1)


def test_base_strip_matches_the_published_r_and_v():
    """r and v of the 256-layer normal ziggurat (Marsaglia and Tsang 2000)."""
    r = zig.layers()[0]
    assert r == pytest.approx(3.6541528853610088, rel=1e-14)
    assert zig._strip(r) == pytest.approx(4.92867323399e-3, rel=1e-11)


def test_every_layer_has_the_same_area():
    """The 255 rectangles x_i·(f(x_{i−1}) − f(x_i)) and the base strip all have area v
    (the method's defining property; f(x) = exp(−x²/2), f(x_0) = 1)."""
    r, _, _, heights, widths = zig.layers()
    v = zig._strip(r)
    xs = widths[1:] * 2.0**52
    areas = xs * (heights[:-1] - heights[1:])
    assert np.allclose(areas, v, rtol=1e-12, atol=0)
    assert widths[0] * 2.0**52 * math.exp(-0.5 * r * r) == pytest.approx(v, rel=1e-14)
    assert xs[-1] == pytest.approx(r, rel=1e-15)
    assert np.all(np.diff(xs) > 0)


def test_the_numbers_follow_the_standard_normal_distribution():
    """Kolmogorov–Smirnov against scipy's normal distribution function, 10^7 numbers; and
    the counts in 400 bins of equal probability (χ² test)."""
    x = _normals(10_000_000)
    assert stats.kstest(x, "norm").pvalue > 1e-3
    edges = stats.norm.ppf(np.linspace(0.0, 1.0, 401))
    counts = np.histogram(x, edges)[0]
    assert stats.chisquare(counts).pvalue > 1e-3
    assert abs(x.mean()) < 5 / math.sqrt(x.size)
    assert abs(x.var() - 1.0) < 5 * math.sqrt(2.0 / x.size)
    assert stats.kurtosis(x, fisher=False) == pytest.approx(3.0, abs=5 * math.sqrt(24 / x.size))


def test_the_wedges_hold_the_right_share_of_numbers():
    """Within each layer the points beyond the inner rectangle are accepted by the wedge
    test: the counts between x_{i−1} and x_i follow the normal probabilities of those
    intervals (χ² over the 255 intervals, 10^7 numbers)."""
    _, _, _, _, widths = zig.layers()
    xs = np.concatenate([[0.0], widths[1:] * 2.0**52, [np.inf]])
    x = np.abs(_normals(10_000_000, seed=11))
    counts = np.histogram(x, xs)[0]
    expected = x.size * 2 * np.diff(stats.norm.cdf(xs))
    assert stats.chisquare(counts, expected * counts.sum() / expected.sum()).pvalue > 1e-3


def test_the_tail_beyond_r():
    """The share of numbers beyond ±r is 2·Φ(−r) and, beyond r, they follow the normal
    distribution truncated at r (scipy.stats.truncnorm), both signs alike."""
    r = zig.layers()[0]
    x = _normals(20_000_000, seed=3)
    beyond = x[np.abs(x) > r]
    expected = x.size * 2 * stats.norm.sf(r)
    assert abs(beyond.size - expected) < 5 * math.sqrt(expected)
    assert stats.kstest(np.abs(beyond), stats.truncnorm(r, np.inf).cdf).pvalue > 1e-3
    assert abs((beyond > 0).mean() - 0.5) < 5 * 0.5 / math.sqrt(beyond.size)


def test_scaling_rows_and_the_layout_do_not_change_the_numbers(monkeypatch):
    """The same seed gives the same numbers whatever the shape and piece size; each row
    scaled and shifted is that row of the unscaled numbers times its scale plus its
    shift: to the last bit where a piece spans several rows, and to the rounding of the
    scaled layer widths where a piece lies within one row (its row's scale is taken into
    the widths, one pass fewer)."""
    plain = _normals(0, seed=5, shape=(3, 50_001))
    scale, shift = np.array([[2.0], [0.5], [3.0]]), np.array([[10.0], [-1.0], [0.0]])
    expected = plain.reshape(3, -1) * scale + shift
    several = zig.standard_normal(np.random.Generator(np.random.SFC64(5)),
                                  np.empty((3, 50_001)), scale, shift)
    # pieces of 2^17 numbers: rows 0-1 together (to the last bit), then row 2 alone
    assert np.array_equal(several[:2], expected[:2])
    assert not np.array_equal(several[2], expected[2])
    # a unit in the last place apart (binary64 unit roundoff 2⁻⁵³, IEEE 754), shift 10
    np.testing.assert_allclose(several[2], expected[2], rtol=1e-15, atol=1e-14)
    monkeypatch.setattr(zig, "_PIECE", 4096)
    assert np.array_equal(_normals(150_003, seed=5), plain)
    within = zig.standard_normal(np.random.Generator(np.random.SFC64(5)),
                                 np.empty((3, 50_001)), scale, shift)
    assert not np.array_equal(within, expected)  # the folded path was taken
    np.testing.assert_allclose(within, expected, rtol=1e-15, atol=1e-14)  # the same bound


def test_refuses_arrays_it_cannot_fill_in_place():
    rng = np.random.default_rng(1)
    with pytest.raises(ValueError, match="C-contiguous float64"):
        zig.standard_normal(rng, np.empty((4, 4))[:, ::2])
    with pytest.raises(ValueError, match="C-contiguous float64"):
        zig.standard_normal(rng, np.empty(4, dtype=np.float32))
    assert zig.standard_normal(rng, np.empty(0)).size == 0
