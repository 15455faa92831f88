"""How the edges of a budget are displayed: a share left over from floating-point
rounding of a zero contribution is shown as 0 (the JSON keeps the number)."""

from __future__ import annotations

import json
from pathlib import Path

from budget._formatting import SHARE_FLOOR, format_percent

# c(X2) = X3 - 0.3 at X3 = 0.1 + 0.2 is 5.55e-17 (binary rounding of 0.1 + 0.2, IEEE 754),
# so X2 carries a share of about 6.5e-32 % of u_c²: zero in any sense a chemist uses
TINY = """
title = "tiny share"
[measurands.y]
equation = "X1 + X2 * (X3 - 0.3)"
[inputs.X1]
value = 1
u = 0.1
[inputs.X2]
value = 2
u = 0.1
[inputs.X3]
value = 0.30000000000000004
u = 0.1
"""


def _tiny(tmp_path: Path) -> str:
    path = tmp_path / "tiny.toml"
    path.write_text(TINY, encoding="utf-8")
    return str(path)


def test_a_rounding_residue_share_is_shown_as_zero(cli, tmp_path: Path) -> None:
    path = _tiny(tmp_path)
    code, stdout, _ = cli("run", path, "--json", "--trials", "0")
    shares = {c["input"]: c["share"] for c in json.loads(stdout)["measurands"][0]
              ["contributions"]}
    assert 0 < shares["X2"] < 1e-28  # the JSON keeps the computed number
    code, stdout, _ = cli("run", path, "--trials", "0")
    (row,) = [line for line in stdout.splitlines() if line.startswith("X2 ")]
    assert row.rstrip().endswith(" 0") and "<" not in row
    html = tmp_path / "tiny.html"
    code, _, _ = cli("run", path, "--trials", "0", "--html", str(html))
    text = html.read_text(encoding="utf-8")
    assert code == 0 and "e-32" not in text and "e-31" not in text
    code, stdout, _ = cli("explain", path, "--trials", "0")
    assert "the others: X2 0 %" in stdout


def test_the_display_floor_keeps_small_real_shares() -> None:
    assert format_percent(SHARE_FLOOR / 2) == format_percent(-SHARE_FLOOR / 2) == "0"
    assert format_percent(2 * SHARE_FLOOR) == "< 0.1"
    assert format_percent(-0.05) == "-0.05"


def test_a_dimensionless_unit_is_shown_as_nothing(cli, tmp_path: Path) -> None:
    # TINY states no unit: y and every input are dimensionless (unit "1")
    path = _tiny(tmp_path)
    code, stdout, _ = cli("run", path, "--trials", "20000")
    lines = stdout.splitlines()
    assert lines[3] == "y = X1 + X2 * (X3 - 0.3)"  # no "[1]"
    (row,) = [line for line in lines if line.startswith("X1 ")]
    assert row.split()[:3] == ["X1", "1.00", "0.10"]  # the unit column is empty
    assert "y = (1.00 ± 0.44), k = 1.96" in stdout and " 1 " not in stdout
    assert all(line == line.rstrip() for line in lines)
    code, stdout, _ = cli("explain", path, "--trials", "0", "--target", "0.3")
    assert stdout.startswith("y = (1.00 ± 0.44)  (k = 1.96)")
    assert "for U = 0.30: u(X3) ≤ " in stdout
    html = tmp_path / "tiny.html"
    cli("run", path, "--trials", "20000", "--html", str(html))
    text = html.read_text(encoding="utf-8")
    assert "Budget of <var>y</var></h2>" in text and "<td>1</td>" not in text
    assert " / </th>" not in text and "()" not in text


def test_the_notebook_shows_a_dimensionless_unit_as_nothing(tmp_path: Path) -> None:
    from budget._analysis import evaluate
    from budget._model import load_model
    from budget._notebook import simulation_text

    result = evaluate(load_model(_tiny(tmp_path)), trials=20000)
    text = simulation_text(result.simulation.measurands[0])
    assert all(line == line.rstrip() and not line.endswith(" 1") for line in text.splitlines())
    assert "u = 0.224\n" in text  # u_c = √(0.1² + 0.2²) = 0.2236 [C]
