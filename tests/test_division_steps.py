"""The Monte Carlo path's division steps (``Program.evaluate(..., divide=True)``, see
``budget/_program.py``): a product holding a reciprocal used nowhere else, a·b·c⁻¹, runs
as one IEEE division (a·b)/c. Checked against numpy's own correctly rounded division
(IEEE 754 division is correctly rounded: a fact of the standard), and against the
reciprocal-then-product path to a few units in the last place. Synthetic inputs only."""

from __future__ import annotations

import numpy as np
import pytest

from budget._evaluation import compile_model
from budget._model import parse_model


def _program(equation: str, names: str = "x y z", extra: str = ""):
    lines = ['title = "t"', "[measurands.Y]", f'equation = "{equation}"']
    lines += [f"[inputs.{n}]\nvalue = {1.5 + i}\nu = 0.1" for i, n in enumerate(names.split())]
    return compile_model(parse_model("\n".join(lines) + "\n" + extra))


def _draws(count: int, size: int = 4096) -> list[np.ndarray]:
    rng = np.random.default_rng(7)
    return [rng.uniform(0.5, 3.0, size) for _ in range(count)]


def _kinds(steps) -> list[str]:
    return [kind for _, kind, _, _, _ in steps]


def test_a_quotient_is_numpys_division_to_the_last_bit():
    program = _program("x / y", "x y")
    x, y = _draws(2)
    (found,) = program.evaluate([x.copy(), y.copy()], divide=True)
    # source: numpy's division, correctly rounded as IEEE 754-2019 clause 5.4.1 requires
    # (the clause number from memory)
    assert np.array_equal(found, x / y)
    assert "pow" not in _kinds(program._divided_steps)
    assert "pow" in _kinds(program._steps)  # the linear budget's path keeps its steps


def test_a_product_over_a_sum_is_the_product_divided_once():
    program = _program("3 * x * z / (1 + 0.01 * y)")
    x, y, z = _draws(3)
    (found,) = program.evaluate([x.copy(), y.copy(), z.copy()], divide=True)
    # source: numpy's own operations in the same order (IEEE 754 correctly rounded)
    assert np.array_equal(found, (3.0 * x * z) / (1.0 + 0.01 * y))
    (before,) = program.evaluate([x.copy(), y.copy(), z.copy()])
    # one rounding apart: binary64's unit roundoff is 2⁻⁵³ ≈ 1.1e-16 (IEEE 754)
    assert np.allclose(found, before, rtol=4e-16, atol=0.0)
    assert len(program._divided_steps) == len(program._steps) - 1


def test_a_reciprocal_used_twice_is_computed_once_and_kept():
    program = _program("x * r + z * r", extra='[definitions]\nr = "1 / y"\n')
    x, y, z = _draws(3)
    (found,) = program.evaluate([x, y, z], divide=True)
    assert _kinds(program._divided_steps) == _kinds(program._steps)
    assert "pow" in _kinds(program._steps)
    # source: numpy's division; a few roundings apart (unit roundoff 2⁻⁵³, IEEE 754)
    assert np.allclose(found, x / y + z / y, rtol=1e-15, atol=0.0)


def test_a_bare_reciprocal_as_the_result_stays_a_power():
    program = _program("1 / y", "y")
    (y,) = _draws(1)
    (found,) = program.evaluate([y], divide=True)
    assert np.array_equal(found, 1.0 / y)  # source: numpy's division (IEEE 754)


def test_division_by_zero_gives_the_ieee_infinity_and_nan_without_a_warning():
    program = _program("x / y", "x y")
    x = np.array([1.0, -1.0, 0.0])
    y = np.zeros(3)
    with np.errstate(all="raise"):  # evaluate must not raise whatever the caller's state
        (found,) = program.evaluate([x, y], divide=True)
    # source: IEEE 754-2019 clause 7.3 (division by zero gives a signed infinity) and 7.2
    # (0/0 is invalid and gives NaN); clause numbers from memory
    assert found[0] == np.inf and found[1] == -np.inf and np.isnan(found[2])


@pytest.mark.parametrize("equation", ["x * y * z / (x + y)", "x / (y * z) / (x - 4)",
                                      "exp(x / y) / z", "(x / y) ** 2 * z"])
def test_other_shapes_agree_with_the_reciprocal_path(equation):
    program = _program(equation)
    values = _draws(3)
    (found,) = program.evaluate([v.copy() for v in values], divide=True)
    (before,) = program.evaluate([v.copy() for v in values])
    # a few roundings apart: binary64's unit roundoff is 2⁻⁵³ ≈ 1.1e-16 (IEEE 754)
    assert np.allclose(found, before, rtol=1e-15, atol=0.0)
    scalars = [float(v[0]) for v in values]  # and at scalar values
    assert np.isclose(program.evaluate(scalars, divide=True)[0], before[0], rtol=1e-15)


def test_inputs_passed_in_are_left_as_they_were():
    program = _program("x / y", "x y")
    x, y = _draws(2)
    kept = [x.copy(), y.copy()]
    program.evaluate([x, y], divide=True)
    assert np.array_equal(x, kept[0]) and np.array_equal(y, kept[1])
