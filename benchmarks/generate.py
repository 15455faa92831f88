"""Synthetic models for the benchmarks (shapes only; the numbers mean nothing).

``mean_of_determinations(n)``: the mean of n coulometric determinations of the invented
demo scenario with shared M, R_s, F and per determination U_i, t_i, m_i (3n + 3 inputs,
three of them exact or shared). ``product_model(n)``: a product of n inputs.
"""

from __future__ import annotations


def mean_of_determinations(n: int) -> str:
    terms = " + ".join(f"U_{i} * t_{i} / m_{i}" for i in range(n))
    lines = [f'title = "mean of {n} coulometric determinations (synthetic benchmark)"',
             "[measurands.w]", f'equation = "M * ({terms}) / (R_s * F * {n})"', 'unit = "%"',
             "[inputs.M]", 'formula = "C8H5KO4"',
             "[inputs.R_s]", "value = 10.000021", 'unit = "ohm"', "u = 0.00001",
             "[inputs.F]", 'constant = "F"']
    for i in range(n):
        lines += [f"[inputs.U_{i}]", f"value = {1.00004 + 1e-6 * (i % 7)}", 'unit = "V"',
                  "u = 1.5e-6",
                  f"[inputs.t_{i}]", f"value = {2476.785 + 0.01 * (i % 11)}", 'unit = "s"',
                  'distribution = "rectangular"', "half_width = 0.002",
                  f"[inputs.m_{i}]", f"value = {0.524652 + 1e-5 * (i % 5)}", 'unit = "g"',
                  "u = 0.000002"]
    return "\n".join(lines) + "\n"


def product_model(n: int) -> str:
    factors = " * ".join(f"x_{i}" for i in range(n))
    lines = [f'title = "product of {n} inputs (synthetic benchmark)"', "[measurands.y]",
             f'equation = "{factors}"']
    for i in range(n):
        lines += [f"[inputs.x_{i}]", f"value = {1.0 + 0.001 * i}", "u = 0.001"]
    return "\n".join(lines) + "\n"


def linear_model(n: int) -> str:
    """A model of n normal inputs for the Monte Carlo ratio benchmark."""
    terms = " + ".join(f"{1 + i % 3} * x_{i} / (1 + 0.01 * x_{(i + 1) % n})" for i in range(n))
    lines = ['title = "ten inputs (synthetic benchmark)"', "[measurands.y]",
             f'equation = "{terms}"']
    for i in range(n):
        lines += [f"[inputs.x_{i}]", f"value = {1.0 + 0.1 * i}", "u = 0.01"]
    return "\n".join(lines) + "\n"
