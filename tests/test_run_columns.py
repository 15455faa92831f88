"""Runs-table columns that name no input (issue: trust at the edges).

A column is an input's estimate per run when it is named like the input, and a label
otherwise (docs/campaign.md). A typo in an input's column name (``Q_psot`` for
``Q_post``) would make it a label and leave the model's typed-in estimate in force for
every run: a silent wrong result. Such near misses are refused unless declared labels.
"""

from __future__ import annotations

import json
import shutil
from pathlib import Path

from conftest import MODELS

DEMO = MODELS / "vics-as-25a"


def _batch(tmp_path: Path, *, declared: str = "") -> Path:
    folder = tmp_path / "batch"
    shutil.copytree(DEMO, folder)
    runs = folder / "determinations.csv"
    text = runs.read_text(encoding="utf-8")
    runs.write_text(text.replace("Q_pre,Q_post", "Q_pre,Q_psot", 1), encoding="utf-8")
    if declared:
        campaign = folder / "campaign.toml"
        campaign.write_text(campaign.read_text(encoding="utf-8").replace(
            'runs = "determinations.csv"', f'runs = "determinations.csv"\n{declared}', 1),
            encoding="utf-8")
    return folder / "campaign.toml"


def test_a_near_miss_of_an_input_name_is_one_error_line(cli, tmp_path: Path) -> None:
    path = _batch(tmp_path)
    code, stdout, stderr = cli("certify", "--trials", "0", str(path))
    assert (code, stdout) == (1, "")
    assert stderr == (
        f"error: {path}:13: [characterization] runs: expected the columns of "
        "'determinations.csv' to name inputs of the model or labels, found column "
        "'Q_psot', a near miss of 'Q_post' (did you mean 'Q_post'? a label so named must "
        "be listed in label_columns)\n")


def test_a_column_differing_in_case_only_is_a_near_miss(cli, tmp_path: Path) -> None:
    folder = tmp_path / "batch"
    shutil.copytree(DEMO, folder)
    runs = folder / "determinations.csv"
    runs.write_text(runs.read_text(encoding="utf-8").replace(",m_c,", ",M_C,", 1),
                    encoding="utf-8")
    code, _, stderr = cli("certify", "--trials", "0", str(folder / "campaign.toml"))
    assert code == 1 and "found column 'M_C', a near miss of 'm_c'" in stderr


def test_a_declared_label_is_read_as_a_label_and_listed(cli, tmp_path: Path) -> None:
    path = _batch(tmp_path, declared='label_columns = ["Q_psot"]')
    code, stdout, stderr = cli("certify", "--json", "--trials", "0", str(path))
    assert code == 0, stderr
    char = json.loads(stdout)["characterization"]
    assert char["label_columns"] == ["id", "unit", "date", "Q_psot"]
    assert "Q_post" not in char["run_inputs"] and "Q_pre" in char["run_inputs"]
    code, stdout, _ = cli("certify", "--trials", "0", str(path))
    assert "read as labels: id, unit, date, Q_psot" in stdout


def test_a_declared_label_that_is_no_column_is_refused(cli, tmp_path: Path) -> None:
    path = _batch(tmp_path, declared='label_columns = ["Q_psott"]')
    code, _, stderr = cli("certify", "--trials", "0", str(path))
    assert code == 1
    assert stderr.startswith(f"error: {path}:14: [characterization] label_columns: expected "
                             "a column of 'determinations.csv', found 'Q_psott' (did you "
                             "mean 'Q_psot'?)")


def test_the_demo_lists_its_label_columns(cli) -> None:
    code, stdout, stderr = cli("certify", "--trials", "0", str(DEMO / "campaign.toml"))
    assert code == 0, stderr
    assert "read as labels: id, unit, date\n" in stdout


def test_the_runs_of_a_further_method_are_checked_too(cli, tmp_path: Path) -> None:
    folder = tmp_path / "batch"
    shutil.copytree(DEMO, folder)
    runs = folder / "titrations.csv"
    runs.write_text(runs.read_text(encoding="utf-8").replace(",m_x,", ",m_X,", 1),
                    encoding="utf-8")
    path = folder / "campaign-methods.toml"
    code, _, stderr = cli("certify", "--trials", "0", str(path))
    assert code == 1 and "[method] runs: expected the columns of 'titrations.csv'" in stderr
    assert "found column 'm_X', a near miss of 'm_x'" in stderr
    text = path.read_text(encoding="utf-8")
    path.write_text(text.replace('runs = "titrations.csv"',
                                 'runs = "titrations.csv"\nlabel_columns = ["m_X"]', 1),
                    encoding="utf-8")
    code, _, stderr = cli("certify", "--trials", "0", str(path))
    assert code == 0 and "near miss" not in stderr, stderr
