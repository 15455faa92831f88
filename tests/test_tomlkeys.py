"""One "unknown key" check for every TOML reader (budget/_tomlkeys.py): each reader refuses
a misspelt key with the same message form, ``<file>:<line>: [table] key: expected a key
among …, found '…' (did you mean '…'?)``, asserted whole here for the readers of the model
file and by form for every reader (campaigns, registers and records are asserted whole in
their own test modules)."""

from __future__ import annotations

import re
from pathlib import Path

import pytest

from budget._errors import BudgetError, Location
from budget._model import load_model, parse_model
from budget._tomlkeys import check_keys, unknown_key_message

HEAD = 'title = "t"\n[measurands.y]\nequation = "a + b + c"\n'
INPUTS = ('[inputs.a]\nvalue = 1.0\nu = 0.1\n[inputs.b]\nvalue = 2.0\nu = 0.1\n'
          '[inputs.c]\nvalue = 3.0\nu = 0.1\n')
FORM = re.compile(r"^[^:]+(:\d+)?: (\[[\w.]+\] )?\w+: expected a [\w -]+ among [\w, ]+, "
                  r"found '\w+'( \(did you mean '\w+'\?\))?$")

CASES = {
    "top level": ('titel = "x"\n' + HEAD + INPUTS,
                  "m.toml:1: titel: expected a top-level key among title, description, "
                  "measurands, definitions, inputs, correlations, estimated_together, "
                  "settings, fits, records, register, measured, found 'titel' (did you mean "
                  "'title'?)"),
    "input": (HEAD + INPUTS + 'sorce = "x"\n',
              "m.toml:13: [inputs.c] sorce: expected a key among value, unit, description, "
              "source, distribution, dof, reliability, u, expanded, k, level, half_width, "
              "beta, inexactness, lower, upper, observations, exact, formula, constant, "
              "certificate, stated, found 'sorce' (did you mean 'source'?)"),
    "settings": (HEAD + INPUTS + "[settings]\ncoverag = 0.95\n",
                 "m.toml:14: [settings] coverag: expected a key among coverage, trials, seed, "
                 "digits, atomic_weights, reported_interval, found 'coverag' (did you mean "
                 "'coverage'?)"),
    "measurand": (HEAD + 'units = "g"\n' + INPUTS,
                  "m.toml:4: [measurands.y] units: expected a key among equation, unit, "
                  "description, found 'units' (did you mean 'unit'?)"),
    "correlation pair": (HEAD + INPUTS + '[[correlations]]\nbetween = ["a", "b"]\nr = 0.5\n'
                         'rr = 1\n',
                         "m.toml:16: [correlations] rr: expected a key in correlation 1 among "
                         "between, r, found 'rr' (did you mean 'r'?)"),
    "correlation block": (HEAD + INPUTS + '[[correlations]]\nbetween = ["a", "b", "c"]\n'
                          'r = 0.5\nmatrx = 1\n',
                          "m.toml:16: [correlations] matrx: expected a key in correlation 1 "
                          "among between, r, matrix, found 'matrx' (did you mean 'matrix'?)"),
    "estimated together": (HEAD + INPUTS + '[[estimated_together]]\ninputs = ["a", "b"]\n'
                           'nots = "x"\n',
                           "m.toml:15: [estimated_together] nots: expected a key in set 1 "
                           "among inputs, note, found 'nots' (did you mean 'note'?)"),
}


def _message(text: str) -> str:
    with pytest.raises(BudgetError) as caught:
        parse_model(text, "m.toml")
    return str(caught.value)


@pytest.mark.parametrize("case", sorted(CASES))
def test_each_model_reader_words_the_unknown_key_alike(case: str) -> None:
    text, expected = CASES[case]
    found = _message(text)
    assert found == expected
    assert FORM.match(found), found


def test_a_chained_input_refuses_an_unknown_key_alike(tmp_path: Path) -> None:
    (tmp_path / "first.toml").write_text(HEAD + INPUTS, encoding="utf-8")
    (tmp_path / "second.toml").write_text(
        'title = "t2"\n[measurands.z]\nequation = "2 * y"\n[inputs.y]\n'
        'result_of = "first.toml"\nmeasurnd = "y"\n', encoding="utf-8")
    with pytest.raises(BudgetError) as caught:
        load_model(tmp_path / "second.toml")
    message = str(caught.value)
    assert message.startswith(f"{tmp_path / 'second.toml'}:6: [inputs.y] measurnd: expected a "
                              "key among value, unit, ")
    assert message.endswith(", result_of, measurand, shares, found 'measurnd' (did you mean "
                            "'measurand'?)")


def test_a_known_key_that_does_not_apply_to_a_chained_input_is_still_named(
        tmp_path: Path) -> None:
    (tmp_path / "first.toml").write_text(HEAD + INPUTS, encoding="utf-8")
    (tmp_path / "second.toml").write_text(
        'title = "t2"\n[measurands.z]\nequation = "2 * y"\n[inputs.y]\n'
        'result_of = "first.toml"\nu = 0.1\n', encoding="utf-8")
    with pytest.raises(BudgetError, match="'u' does not apply to an input that is the "
                                          "result of another model"):
        load_model(tmp_path / "second.toml")


def test_the_message_is_written_once() -> None:
    assert unknown_key_message("sede", ("seed", "trials")) == \
        "expected a key among seed, trials, found 'sede' (did you mean 'seed'?)"
    with pytest.raises(BudgetError) as caught:
        check_keys({"x": 1}, ("a", "b"),
                   lambda key: Location(file="f.toml", table="t", key=key), within="in set 2")
    assert str(caught.value) == "f.toml: [t] x: expected a key in set 2 among a, b, found 'x'"


def test_no_reader_words_its_own_unknown_key_check() -> None:
    root = Path(__file__).resolve().parent.parent / "budget"
    own = [f"{p.name}:{n}" for p in sorted(root.glob("*.py")) if p.name != "_tomlkeys.py"
           for n, line in enumerate(p.read_text(encoding="utf-8").splitlines(), 1)
           if "unknown key" in line or "unknown top-level" in line]
    assert not own, own
