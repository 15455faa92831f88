"""A constant given as a list or a table is an error with its location, not a traceback
(found while fuzzing the fit and record tables; the statement reader is shared)."""

from __future__ import annotations

import pytest


@pytest.mark.parametrize("value, shown", [("[1]", "a list"), ("{a = 1}", "a table")])
def test_constant_that_is_not_a_name(value, shown, tmp_path, cli):
    path = tmp_path / "m.toml"
    path.write_text(f'title = "t"\n[measurands.y]\nequation = "a"\n[inputs.a]\n'
                    f"constant = {value}\n", encoding="utf-8")
    code, stdout, stderr = cli("check", str(path))
    assert (code, stdout) == (1, "")
    assert stderr == (f"error: {path}:5: [inputs.a] constant: expected a built-in constant, "
                      f"one of e, N_A, k_B, h, c, F, R, found {shown}\n")
