"""budget certify-all and budget.batch: every campaign under a folder, on all cores.

The batch path must give, campaign by campaign, exactly what ``budget certify`` gives
(it runs the same certification), whatever the number of worker processes."""

from __future__ import annotations

import csv
import json
import shutil
from pathlib import Path

import pytest
from click.testing import CliRunner

from budget.batch import certify_folder, find_campaigns
from budget._campaign import load_campaign
from budget._certification import certify
from budget._cli import main

DEMO = Path(__file__).resolve().parent.parent / "models" / "vics-as-25a"


def _copies(root: Path, count: int) -> Path:
    for n in range(count):
        target = root / f"batch-{n}"
        shutil.copytree(DEMO, target, ignore=shutil.ignore_patterns("campaign-methods.toml"))
    return root


def test_only_campaign_files_are_found() -> None:
    found = {p.name for p in find_campaigns(DEMO)}
    assert found == {"campaign.toml", "campaign-methods.toml"}


def test_each_entry_is_what_certify_gives_on_one_or_two_workers(tmp_path: Path) -> None:
    root = _copies(tmp_path, 3)
    single = certify(load_campaign(DEMO / "campaign.toml"), trials=0)
    for workers in (1, 2):
        batch = certify_folder(root, trials=0, workers=workers)
        assert [e.path for e in batch.entries] == [f"batch-{n}/campaign.toml"
                                                    for n in range(3)]
        for entry in batch.entries:
            assert entry.error is None
            assert entry.certified_value == single.certified_value
            assert entry.expanded_uncertainty == single.expanded_uncertainty
            assert entry.coverage_factor == single.coverage_factor
            assert entry.date == max(single.run_dates).isoformat()


def test_a_broken_campaign_is_reported_and_the_others_go_on(tmp_path: Path) -> None:
    root = _copies(tmp_path, 2)
    (root / "batch-1" / "determinations.csv").write_text("nonsense\n")
    csv_file, html_file = tmp_path / "year.csv", tmp_path / "year.html"
    result = CliRunner().invoke(main, ["certify-all", str(root), "--json", "--csv",
                                       str(csv_file), "--html", str(html_file)])
    assert result.exit_code == 1
    document = json.loads(result.stdout)
    assert document["summary"]["campaigns"] == 2
    assert document["summary"]["certified"] == 1
    assert document["summary"]["failed"] == 1
    failed = [c for c in document["campaigns"] if c["error"]]
    assert failed[0]["campaign"] == "batch-1/campaign.toml"
    assert "determinations.csv" in failed[0]["error"]
    assert result.stderr.startswith("warning: batch-1/campaign.toml: not certified: ")
    with open(csv_file, newline="") as handle:
        rows = list(csv.DictReader(handle))
    assert [r["campaign"] for r in rows] == ["batch-0/campaign.toml",
                                             "batch-1/campaign.toml"]
    assert float(rows[0]["certified_value"]) == document["campaigns"][0]["certified_value"]
    page = html_file.read_text()
    assert "<svg" in page and "batch-1/campaign.toml" in page and "failed" in page


def test_the_terminal_summary_lists_every_campaign(tmp_path: Path) -> None:
    root = _copies(tmp_path, 2)
    result = CliRunner().invoke(main, ["certify-all", str(root), "--workers", "1"])
    assert result.exit_code == 0, result.stderr
    lines = result.stdout.splitlines()
    assert lines[0] == f"2 campaign(s) under {root}: 2 certified, 0 failed"
    assert sum("99.9866" in line and "0.0087" in line for line in lines) == 2


def test_a_folder_without_campaigns_is_one_clean_error(tmp_path: Path) -> None:
    result = CliRunner().invoke(main, ["certify-all", str(tmp_path)])
    assert result.exit_code == 1
    assert result.stderr == (f"error: {tmp_path}: expected at least one campaign file (a TOML "
                             "file with a [characterization] table), found none\n")
    assert result.stdout == ""


@pytest.mark.parametrize("what", ["missing", "file"])
def test_a_folder_that_is_not_one_is_refused(tmp_path: Path, what: str) -> None:
    target = tmp_path / "x"
    if what == "file":
        target.write_text("")
    result = CliRunner().invoke(main, ["certify-all", str(target)])
    assert result.exit_code == 1
    found = "a file" if what == "file" else "no such folder"
    assert result.stderr == f"error: {target}: expected a folder of campaign files, found " \
                            f"{found}\n"
