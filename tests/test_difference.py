"""``budget compare``: two budgets whose difference is known by construction.

The models are linear, y = a + 2·b + c (inputs in their own units), so every variance term
is (c_i u_i)² with c = 1, 2, 1 written down by hand (GUM 5.1.2, eq. (10)), and the change
of u_c² must equal the sum of the changes of the terms (an identity, checked to 1e-12).
Values are invented.
"""

from __future__ import annotations

import json
import math

import pytest

from budget._difference import compare, load_side
from budget._difference_view import difference_document, render_difference

A = """
# budget A (invented)
title = "compare test A"

[measurands.y]
equation = "a + 2 * b + c"
unit = "g"

[inputs.a]
value = 1.0
unit = "g"
u = 0.010

[inputs.b]
value = 2.0
unit = "g"
u = 0.020

[inputs.c]
value = 0.5
unit = "g"
distribution = "rectangular"
half_width = 0.03
"""

# B: u(b) doubled, a's value changed, c removed, d added
B = A.replace("compare test A", "compare test B").replace(
    "value = 2.0\nunit = \"g\"\nu = 0.020", "value = 2.0\nunit = \"g\"\nu = 0.040").replace(
    "[inputs.a]\nvalue = 1.0", "[inputs.a]\nvalue = 1.1").replace(
    "a + 2 * b + c", "a + 2 * b + d").replace("[inputs.c]", "[inputs.d]")


@pytest.fixture()
def pair(tmp_path):
    (tmp_path / "a.toml").write_text(A)
    (tmp_path / "b.toml").write_text(B)
    return tmp_path / "a.toml", tmp_path / "b.toml"


def test_the_decomposition_adds_up_to_the_change_of_uc2(pair):
    diff = compare(load_side(pair[0]), load_side(pair[1]))
    (y,) = diff.measurands
    # by hand: u_A² = 0.01² + (2·0.02)² + 0.03²/3; u_B² = 0.01² + (2·0.04)² + 0.03²/3
    u2a = 0.01 ** 2 + (2 * 0.02) ** 2 + 0.03 ** 2 / 3
    u2b = 0.01 ** 2 + (2 * 0.04) ** 2 + 0.03 ** 2 / 3
    assert y.before.combined_uncertainty ** 2 == pytest.approx(u2a, rel=1e-12)
    assert y.after.combined_uncertainty ** 2 == pytest.approx(u2b, rel=1e-12)
    assert math.fsum(c.variance_change for c in y.inputs) + y.correlation_change + \
        y.higher_order_change == pytest.approx(u2b - u2a, rel=1e-12)
    by_name = {c.input: c for c in y.inputs}
    assert by_name["b"].variance_change == pytest.approx(4 * (0.04 ** 2 - 0.02 ** 2), rel=1e-12)
    assert by_name["b"].from_uncertainty == pytest.approx(by_name["b"].variance_change, rel=1e-12)
    assert by_name["b"].from_sensitivity == 0.0
    assert by_name["b"].what == ("u 0.02 → 0.04 g (× 2)",)
    assert by_name["a"].what == ("value 1 → 1.1 g",)
    assert by_name["a"].variance_change == 0.0
    assert by_name["c"].status == "removed" and by_name["d"].status == "added"
    assert by_name["c"].variance_change == pytest.approx(-0.03 ** 2 / 3, rel=1e-12)
    assert y.inputs[0].input == "b"  # the largest change first


def test_the_first_lines_answer_why_U_changed(pair, cli):
    code, stdout, stderr = cli("compare", str(pair[0]), str(pair[1]))
    assert code == 0, stderr
    lines = stdout.splitlines()
    assert lines[0] == f"A: {pair[0]}"
    assert lines[3] == "y: U 0.088 → 0.16 g (+84 %); u_c 0.045 → 0.082 g (+84 %); k 1.96 → 1.96"
    assert lines[4] == "  u_c² changed by +0.0048 g²; the largest causes:"
    assert lines[5] == "    +0.0048 g² (100 % of the change): b: u 0.02 → 0.04 g (× 2)"
    assert lines[6] == "    -0.0003 g² (-6 % of the change): c removed"
    assert lines[7] == "    +0.0003 g² (6 % of the change): d added"


def test_a_saved_result_compares_like_its_model(pair, cli, tmp_path):
    code, stdout, _ = cli("run", str(pair[0]), "--json", "--trials", "0")
    saved = tmp_path / "a.json"
    saved.write_text(stdout)
    diff = compare(load_side(saved), load_side(pair[0]))
    (y,) = diff.measurands
    assert y.variance_change == 0.0
    assert all(c.status == "unchanged" for c in y.inputs)
    assert "both come from the same model file (same SHA-256)" in diff.notes


def test_settings_that_differ_are_named(pair, tmp_path):
    other = tmp_path / "c.toml"
    other.write_text(A + "\n[settings]\ncoverage = 0.99\nseed = 7\n")
    diff = compare(load_side(pair[0]), load_side(other))
    assert diff.notes[:2] == ("coverage: 0.95 → 0.99", "seed: 20260601 → 7")
    (y,) = diff.measurands
    # k from 1.96 to 2.576 with u_c unchanged: all of the change of U comes through k
    assert y.expanded_change_from_uncertainty == 0.0
    assert y.expanded_change_from_coverage_factor == pytest.approx(
        y.after.expanded_uncertainty - y.before.expanded_uncertainty, rel=1e-12)


def test_json_and_html_outputs(pair, cli, tmp_path):
    page = tmp_path / "diff.html"
    code, stdout, stderr = cli("compare", str(pair[0]), str(pair[1]), "--json", "--html",
                               str(page))
    assert code == 0, stderr
    document = json.loads(stdout)
    (y,) = document["measurands"]
    assert y["variance_change"] == pytest.approx(
        math.fsum(i["variance_change"] for i in y["inputs"]), rel=1e-12)
    assert y["causes"][0].endswith("b: u 0.02 → 0.04 g (× 2)")
    text = page.read_text()
    assert "Why the uncertainty of y changed" in text
    assert "must be reviewed" in text or "reviewed and approved" in text


def test_measurands_in_another_unit_are_converted(pair, tmp_path):
    other = tmp_path / "mg.toml"
    other.write_text(A.replace('unit = "g"\n\n[inputs.a]', 'unit = "mg"\n\n[inputs.a]'))
    diff = compare(load_side(pair[0]), load_side(other))
    (y,) = diff.measurands
    assert y.variance_change == pytest.approx(0.0, abs=1e-15)
    assert y.after.unit == "g"


@pytest.mark.parametrize("content, message", [
    ("{", "error: {path}: expected a JSON result document, found Expecting property name "
          "enclosed in double quotes: line 1 column 2 (char 1)"),
    ('{"title": "x"}', "error: {path}: expected a JSON result document (schema "
                       "result.schema.json), found a JSON document without 'measurands'"),
    ("[1, 2]", "error: {path}: expected a JSON result document, found another JSON value"),
])
def test_bad_saved_results_are_errors(pair, cli, tmp_path, content, message):
    bad = tmp_path / "bad.json"
    bad.write_text(content)
    code, stdout, stderr = cli("compare", str(bad), str(pair[0]))
    assert code == 1 and stdout == ""
    assert stderr == message.format(path=bad) + "\n"


def test_render_lists_every_input(pair):
    text = render_difference(compare(load_side(pair[0]), load_side(pair[1])))
    table = text[text.index("Inputs of y"):]
    for name in "abcd":
        assert f"\n{name} " in table
    assert difference_document(compare(load_side(pair[0]), load_side(pair[1])))[
        "schema_version"]


def test_the_public_entry_point_gives_what_the_command_prints(pair, cli):
    """budget.compare_budgets is the Python form of ``budget compare A B``."""
    import budget

    diff = budget.compare_budgets(pair[0], pair[1])
    assert isinstance(diff, budget.Difference)
    code, stdout, _ = cli("compare", str(pair[0]), str(pair[1]), "--json")
    assert code == 0
    assert json.loads(stdout) == json.loads(json.dumps(diff.to_dict()))
    assert diff.summary().splitlines()[3] == \
        "y: U 0.088 → 0.16 g (+84 %); u_c 0.045 → 0.082 g (+84 %); k 1.96 → 1.96"
    frame = diff.to_frame()
    assert list(frame.index.get_level_values("input"))[:1] == ["b"]
    assert "variance_change" in frame.columns
    with pytest.raises(KeyError, match="did you mean 'y'"):
        diff.measurand("Y")
