"""Campaign data at the edges (issue 17): every broken CSV, odd label and out-of-range
number is one ``error:`` line with exit 1, never a traceback."""

from __future__ import annotations

import json
import shutil
from pathlib import Path
from typing import Callable

import pytest

from conftest import MODELS

DEMO = MODELS / "vics-as-25a"
EMPTY = "expected a header row and data rows, found an empty table"


def _write(name: str, content: str | bytes) -> Callable[[Path], None]:
    def edit(folder: Path) -> None:
        target = folder / name
        if isinstance(content, bytes):
            target.write_bytes(content)
        else:
            target.write_text(content, encoding="utf-8")
    return edit


def _replace(old: str, new: str) -> Callable[[Path], None]:
    def edit(folder: Path) -> None:
        campaign = folder / "campaign.toml"
        campaign.write_text(campaign.read_text(encoding="utf-8").replace(old, new),
                            encoding="utf-8")
    return edit


CASES = {
    "runs_lone_newline": (_write("determinations.csv", "\n"), "determinations.csv: "
                          + EMPTY),
    "homogeneity_lone_newline": (_write("homogeneity.csv", "\n"), "homogeneity.csv: " + EMPTY),
    "runs_not_utf8": (_write("determinations.csv", b"\xff\xfe,a\n1,2\n"),
                      "determinations.csv:2: expected UTF-16 text, found the undecodable byte "
                      "0x0a; declare the file's encoding (encoding = \"utf-8\", \"utf-16\" or "
                      "\"windows-1252\")"),
    "homogeneity_open_quote": (_write("homogeneity.csv", 'unit,value\n"A,1\nA,2\nB,1\nB,2\n'),
                               "homogeneity.csv:5: expected 2 fields as in the header, found 1 "
                               "(decimal commas in a file separated by ',' split numbers in "
                               "two: separate the columns by ';' or tab)"),
    "digit_separator": (_write("homogeneity.csv", "unit,value\nA,9_9.9983\nA,99.99\nB,99.98\n"
                               "B,99.97\n"), "homogeneity.csv:2: column 'value': expected a "
                        "finite number with a decimal point, found '9_9.9983'"),
    "nan_comparison": (_replace("value = 99.978", "value = nan"), "campaign.toml:29: "
                       "[comparison] value: expected a finite number 'value', found nan"),
    "tiny_certificate_coverage": (_replace("[certificate]\nk = 2", "[certificate]\n"
                                           "coverage = 1e-300"),
                                  "campaign.toml:34: [certificate] coverage: expected a "
                                  "coverage probability in [1e-06, 1 - 1e-09] (limits: "
                                  "docs/limits.md), found 1e-300"),
    # the demo model whose charges come from records defines Q_pre; the runs table written
    # for the typed-in model sets it per run, which would be silently ignored
    "runs_column_names_a_definition": (
        _replace('model = "coulometric-purity.toml"',
                 'model = "coulometric-purity-records.toml"'),
        "campaign.toml:13: [characterization] runs: expected run columns named like inputs "
        "of the model in 'determinations.csv', found 'Q_pre', which the model defines "
        "(Q_pre = Q_pre_stop - Q_pre_ep): a run cannot set it, give the columns of its "
        "inputs"),
}


@pytest.mark.parametrize("name", sorted(CASES))
def test_broken_campaign_data_is_one_error_line(cli, tmp_path: Path, name: str) -> None:
    edit, message = CASES[name]
    folder = tmp_path / "batch"
    shutil.copytree(DEMO, folder)
    edit(folder)
    code, stdout, stderr = cli("certify", "--trials", "0", str(folder / "campaign.toml"))
    assert (code, stdout) == (1, "")
    assert stderr == f"error: {folder}/{message}\n"


def test_labels_differing_by_spaces_are_one_unit(cli, tmp_path: Path) -> None:
    folder = tmp_path / "batch"
    shutil.copytree(DEMO, folder)
    _write("homogeneity.csv", "unit,value\nA,99.98\n A ,99.99\nB,99.98\nB ,99.97\n")(folder)
    code, stdout, stderr = cli("certify", "--json", "--trials", "0",
                               str(folder / "campaign.toml"))
    assert code == 0, stderr
    homogeneity = json.loads(stdout)["homogeneity"]
    assert homogeneity["units"] == ["A", "B"] and homogeneity["counts"] == [2, 2]


def test_a_data_file_beyond_the_size_limit_is_refused_unread(cli, tmp_path: Path) -> None:
    folder = tmp_path / "batch"
    shutil.copytree(DEMO, folder)
    with open(folder / "stability.csv", "wb") as big:  # sparse: 65 MiB of nothing
        big.truncate(65 * 2 ** 20)
    code, stdout, stderr = cli("certify", "--trials", "0", str(folder / "campaign.toml"))
    assert (code, stdout) == (1, "")
    assert stderr.endswith("[stability] data: expected a data file of at most 64 MiB "
                           "(limits: docs/limits.md), found a larger file\n")
