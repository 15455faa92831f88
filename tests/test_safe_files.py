"""Safe files (issue 17): reports never overwrite the run's own files, never go through a
link or onto a device, keep an existing file's mode and leave no temporary file behind;
campaign paths stay inside the campaign's folder unless allowed."""

from __future__ import annotations

import errno
import os
import shutil
from pathlib import Path

import pytest

from budget import _output as output
from budget._errors import BudgetError, InputError
from budget._output import write_atomic

from conftest import MODELS

NAOH = MODELS / "reference" / "eurachem-a2-naoh.toml"
DEMO = MODELS / "vics-as-25a"


@pytest.fixture
def model_copy(tmp_path: Path) -> Path:
    target = tmp_path / "naoh.toml"
    shutil.copy(NAOH, target)
    return target


def test_report_onto_the_model_file_is_refused(cli, model_copy: Path) -> None:
    before = model_copy.read_bytes()
    code, stdout, stderr = cli("run", "--trials", "0", "--html", str(model_copy),
                               str(model_copy))
    assert (code, stdout) == (1, "")
    assert stderr == (f"error: {model_copy}: expected an output file other than the files "
                      "of the run, found the model file itself\n")
    assert model_copy.read_bytes() == before


@pytest.mark.parametrize("name", ["campaign.toml", "homogeneity.csv", "determinations.csv",
                                  "coulometric-purity.toml"])
def test_certificate_onto_a_file_of_the_run_is_refused(cli, tmp_path: Path, name: str) -> None:
    folder = tmp_path / "batch"
    shutil.copytree(DEMO, folder)
    target = folder / name
    before = target.read_bytes()
    code, stdout, stderr = cli("certify", "--trials", "0", "--html", str(target),
                               str(folder / "campaign.toml"))
    assert (code, stdout) == (1, "")
    assert stderr.startswith(f"error: {target}: expected an output file other than the "
                             "files of the run, found the ")
    assert target.read_bytes() == before


def test_symbolic_link_and_special_files_are_refused(cli, tmp_path: Path) -> None:
    real = tmp_path / "real.html"
    real.write_text("keep")
    link = tmp_path / "link.html"
    link.symlink_to(real)
    fifo = tmp_path / "fifo.html"
    os.mkfifo(fifo)
    cases = {link: "a symbolic link (outputs are never written through links)",
             tmp_path: "a directory", Path("/dev/null"): "a character device",
             fifo: "a FIFO"}
    for target, kind in cases.items():
        code, stdout, stderr = cli("run", "--trials", "0", "--html", str(target), str(NAOH))
        assert (code, stdout) == (1, "")
        assert stderr == (f"error: {target}: expected a regular file or a new name for the "
                          f"output, found {kind}\n")
    assert real.read_text() == "keep"


def test_existing_mode_is_kept(tmp_path: Path) -> None:
    target = tmp_path / "report.html"
    target.write_text("old")
    target.chmod(0o640)
    write_atomic(target, "new")
    assert target.read_text() == "new" and target.stat().st_mode & 0o777 == 0o640


def test_no_temporary_file_on_a_failed_write(tmp_path: Path, monkeypatch) -> None:
    def full(descriptor: int, mode: int) -> None:
        raise OSError(errno.ENOSPC, "No space left on device")

    monkeypatch.setattr(output.os, "chmod", full)
    with pytest.raises(InputError) as caught:
        write_atomic(tmp_path / "r.html", "x")
    assert str(caught.value) == (f"{tmp_path / 'r.html'}: expected a writable output file, "
                                 "found No space left on device")
    assert os.listdir(tmp_path) == []


def test_stale_temporary_files_of_dead_runs_are_removed(tmp_path: Path) -> None:
    stale = tmp_path / ".r.html.999999999.abc.tmp"  # no process has this id
    stale.write_text("half")
    other = tmp_path / ".other.html.999999999.abc.tmp"
    other.write_text("not ours")
    write_atomic(tmp_path / "r.html", "x")
    assert sorted(os.listdir(tmp_path)) == [".other.html.999999999.abc.tmp", "r.html"]


def test_over_long_file_name_is_an_error(cli) -> None:
    target = f"/tmp/{'x' * 300}.html"
    code, stdout, stderr = cli("run", "--trials", "0", "--html", target, str(NAOH))
    assert (code, stdout) == (1, "")
    assert stderr == f"error: {target}: expected a writable output file, found File name too long\n"


def test_read_only_folder_is_an_error(cli, tmp_path: Path) -> None:
    folder = tmp_path / "locked"
    folder.mkdir()
    folder.chmod(0o500)
    try:
        if os.access(folder, os.W_OK):
            pytest.skip("running as a user who can write anywhere")
        code, _, stderr = cli("run", "--trials", "0", "--html", str(folder / "r.html"),
                              str(NAOH))
        assert code == 1 and stderr.endswith("found Permission denied\n")
    finally:
        folder.chmod(0o700)


def _campaign_with(tmp_path: Path, key: str, value: str) -> Path:
    folder = tmp_path / "batch"
    shutil.copytree(DEMO, folder)
    campaign = folder / "campaign.toml"
    text = campaign.read_text(encoding="utf-8")
    old = {"runs": 'runs = "determinations.csv"', "data": 'data = "homogeneity.csv"'}[key]
    campaign.write_text(text.replace(old, old.split("=")[0] + f'= "{value}"'),
                        encoding="utf-8")
    return campaign


@pytest.mark.parametrize("value", ["../outside.csv", "/etc/passwd", "link.csv"])
def test_campaign_paths_stay_inside_the_folder(cli, tmp_path: Path, value: str) -> None:
    (tmp_path / "outside.csv").write_text("unit,value\nsecret line,1\n", encoding="utf-8")
    campaign = _campaign_with(tmp_path, "data", value)
    (campaign.parent / "link.csv").symlink_to(tmp_path / "outside.csv")
    code, stdout, stderr = cli("certify", "--trials", "0", str(campaign))
    assert (code, stdout) == (1, "")
    assert stderr.endswith(f"[homogeneity] data: expected a path inside the campaign's "
                           f"folder, found '{value}', which leads outside it (allowed only "
                           "when paths outside the folder are allowed: --allow-outside-folder)\n")
    assert "secret" not in stderr and "root:x:" not in stderr


def test_the_option_allows_leaving_the_folder(cli, tmp_path: Path) -> None:
    shutil.copy(DEMO / "homogeneity.csv", tmp_path / "shared-homogeneity.csv")
    campaign = _campaign_with(tmp_path, "data", "../shared-homogeneity.csv")
    code, _, stderr = cli("certify", "--trials", "0", "--allow-outside-folder", str(campaign))
    assert code == 0, stderr


def test_errors_never_echo_a_file_outside_the_run(tmp_path: Path) -> None:
    from budget._campaign import load_campaign

    campaign = _campaign_with(tmp_path, "runs", "/etc/passwd")
    with pytest.raises(BudgetError) as caught:
        load_campaign(campaign)
    assert "root:x:" not in str(caught.value) and "/bin/" not in str(caught.value)


def test_the_demo_copies_of_shared_models_match_their_originals() -> None:
    # campaigns name copies in their own folders (campaign paths are confined)
    pairs = [(DEMO / "water-coulometric-iodine.toml",
              MODELS / "velmora" / "water-coulometric-iodine.toml"),
             (MODELS / "vics-as-25a-lab-files" / "coulometric-purity.toml",
              DEMO / "coulometric-purity.toml"),
             (MODELS / "vics-as-25a-lab-files" / "calibrations.toml",
              DEMO / "calibrations.toml")]
    for copy, original in pairs:
        assert copy.read_bytes() == original.read_bytes()


@pytest.mark.parametrize("option", ["--csv", "--xlsx", "--html"])
def test_exports_onto_the_model_file_are_refused(cli, model_copy: Path, option: str) -> None:
    before = model_copy.read_bytes()
    code, stdout, stderr = cli("run", "--trials", "0", option, str(model_copy),
                               str(model_copy))
    assert (code, stdout) == (1, "")
    assert stderr == (f"error: {model_copy}: expected an output file other than the files "
                      "of the run, found the model file itself\n")
    assert model_copy.read_bytes() == before


def test_exports_onto_a_device_are_refused_before_the_work(cli) -> None:
    code, stdout, stderr = cli("run", "--csv", "/dev/full", str(NAOH))
    assert (code, stdout) == (1, "")
    assert stderr == ("error: /dev/full: expected a regular file or a new name for the "
                      "output, found a character device\n")


def test_certify_all_never_overwrites_a_campaign(cli, tmp_path: Path) -> None:
    folder = tmp_path / "year"
    shutil.copytree(DEMO, folder / "batch-1")
    target = folder / "batch-1" / "campaign.toml"
    before = target.read_bytes()
    code, stdout, stderr = cli("certify-all", str(folder), "--trials", "0", "--csv",
                               str(target))
    assert (code, stdout) == (1, "")
    assert stderr == (f"error: {target}: expected an output file other than the files of "
                      "the run, found the campaign file itself\n")
    assert target.read_bytes() == before
