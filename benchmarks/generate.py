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
    for i in range(n):  # factors near 1, so that the product stays finite for any n
        lines += [f"[inputs.x_{i}]", f"value = {1.0 + 0.0001 * (i % 7 - 3)}", "u = 0.001"]
    return "\n".join(lines) + "\n"


def linear_model(n: int) -> str:
    """A model of n normal inputs for the Monte Carlo ratio benchmark."""
    terms = " + ".join(f"{1 + i % 3} * x_{i} / (1 + 0.01 * x_{(i + 1) % n})" for i in range(n))
    lines = ['title = "ten inputs (synthetic benchmark)"', "[measurands.y]",
             f'equation = "{terms}"']
    for i in range(n):
        lines += [f"[inputs.x_{i}]", f"value = {1.0 + 0.1 * i}", "u = 0.01"]
    return "\n".join(lines) + "\n"


def sum_model(n: int) -> str:
    """One expression: the sum of n inputs."""
    terms = " + ".join(f"x_{i}" for i in range(n))
    lines = [f'title = "sum of {n} inputs (synthetic benchmark)"', "[measurands.y]",
             f'equation = "{terms}"']
    for i in range(n):
        lines += [f"[inputs.x_{i}]", f"value = {1.0 + 0.001 * i}", "u = 0.001"]
    return "\n".join(lines) + "\n"


def defined_mean(n: int) -> str:
    """The mean of n determinations through definitions: w_i = M U_i t_i / (R F m_i),
    then running sums S_i = S_{i-1} + w_i (a chain of n definitions), y = S_n / n."""
    lines = [f'title = "mean of {n} determinations through definitions (benchmark)"',
             "[measurands.w]", f'equation = "S_{n - 1} / {n}"', 'unit = "%"',
             "[definitions]"]
    for i in range(n):
        lines.append(f'w_{i} = "M * U_{i} * t_{i} / (R_s * F * m_{i})"')
        lines.append(f'S_{i} = "{"w_0" if i == 0 else f"S_{i - 1} + w_{i}"}"')
    lines += ["[inputs.M]", 'formula = "C8H5KO4"',
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


def correlated_block(n: int, r: float = 0.3) -> str:
    """The sum of n inputs in one correlated block: every pair r (a full, positive
    definite matrix for 0 ≤ r < 1), stated as n(n-1)/2 [[correlations]] tables."""
    terms = " + ".join(f"x_{i}" for i in range(n))
    lines = [f'title = "{n} inputs in one correlated block (synthetic benchmark)"',
             "[measurands.y]", f'equation = "{terms}"']
    for i in range(n):
        lines += [f"[inputs.x_{i}]", f"value = {1.0 + 0.001 * i}", "u = 0.001"]
    for i in range(n):
        for j in range(i + 1, n):
            lines += ["[[correlations]]", f'between = ["x_{i}", "x_{j}"]', f"r = {r}"]
    return "\n".join(lines) + "\n"


def correlated_block_stated(n: int, r: float = 0.3, form: str = "matrix") -> str:
    """The sum of n inputs in one correlated block stated in one [[correlations]] table:
    ``form = "matrix"`` writes the full n × n matrix, ``"r"`` one r for every pair,
    ``"distinct"`` a full matrix whose r differs from one diagonal to the next, beside
    inputs whose u all differ (every pair's variance and share its own)."""
    terms = " + ".join(f"x_{i}" for i in range(n))
    lines = [f'title = "{n} inputs in one correlated block (synthetic benchmark)"',
             "[measurands.y]", f'equation = "{terms}"']
    for i in range(n):
        u = f"{0.001 * (1 + i / n)!r}" if form == "distinct" else "0.001"
        lines += [f"[inputs.x_{i}]", f"value = {1.0 + 0.001 * i}", f"u = {u}"]
    names = ", ".join(f'"x_{i}"' for i in range(n))
    lines += ["[[correlations]]", f"between = [{names}]"]
    if form == "r":
        lines.append(f"r = {r}")
    elif form == "distinct":  # r_ij = r·0.9999^|i-j| (positive definite, as any AR(1))
        rows = ", ".join("[" + ", ".join(
            "1.0" if i == j else f"{r * 0.9999 ** abs(i - j):.7g}"
            for j in range(n)) + "]" for i in range(n))
        lines.append(f"matrix = [{rows}]")
    else:
        rows = ", ".join("[" + ", ".join("1.0" if i == j else str(r) for j in range(n)) + "]"
                         for i in range(n))
        lines.append(f"matrix = [{rows}]")
    return "\n".join(lines) + "\n"
