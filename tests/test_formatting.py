"""Rounding for display (GUM 7.2.6): the uncertainty to two significant digits by default,
the estimate to the same decimal place; half-up in decimal arithmetic."""

from __future__ import annotations

import pytest

from budget._formatting import format_dof, format_pair, format_percent


@pytest.mark.parametrize("value, u, digits, expected", [
    # GUM 7.2.2 style: m_S = 100.021 47 g with u_c = 0.35 mg -> 100.021 47(35) g [M]
    (100.02147, 0.00035, 2, ("100.02147", "0.00035")),
    # JCGM 100 H.1: l = 50.000 838 mm, U = 93 nm -> (50.000 838 +/- 0.000 093) mm [M✓C]
    (50.000838, 0.000093, 2, ("50.000838", "0.000093")),
    # EURACHEM A1: 1002.7 mg/L with u = 0.864 -> one digit: 1002.7 +/- 0.9 [V]
    (1002.7, 0.864, 1, ("1002.7", "0.9")),
    # rounding that carries into a new digit: 0.0996 -> 0.10 (common practice)
    (1.23456, 0.0996, 2, ("1.23", "0.10")),
    # half-up in decimal, not binary: 0.0125 -> 0.013 (common practice)
    (7.0125, 0.0125, 2, ("7.013", "0.013")),
    # large numbers keep their magnitude
    (123456.0, 3456.0, 2, ("123500", "3500")),
])
def test_gum_7_2_6_rounding(value, u, digits, expected):
    assert format_pair(value, u, digits) == expected


def test_exact_values_are_not_rounded_to_an_uncertainty():
    assert format_pair(96485.33212331001, 0.0) == ("96485.33212", "0")


@pytest.mark.parametrize("dof, text", [(float("inf"), "∞"), (16.74, "16.7"), (24.0, "24"),
                                       (18512.1, "1.85e+04")])
def test_degrees_of_freedom(dof, text):
    assert format_dof(dof) == text


def test_percent_shares():
    assert format_percent(62.36) == "62.4"
    assert format_percent(0.04) == "< 0.1"
    assert format_percent(0.0) == "0"
