"""Command-line conventions: any output encoding, '-' for standard input, --quiet,
--strict, and the demo folder."""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest
from click.testing import CliRunner

from budget._cli import main
from budget._console import encodable
from conftest import MODELS

A2 = str(MODELS / "reference" / "eurachem-a2-naoh.toml")
CAMPAIGN = str(MODELS / "vics-as-25a" / "campaign.toml")


def test_symbols_fall_back_to_ascii_spellings() -> None:
    assert encodable("ν_eff = ∞   δ = 5e-07   ███▌", "cp1252") == \
        "nu_eff = inf   delta = 5e-07   ###+"
    assert encodable("(99.9866 ± 0.0087) %, u·c², 20 °C", "cp1252") == \
        "(99.9866 ± 0.0087) %, u·c², 20 °C"  # cp1252 has these
    assert encodable("± ² ·", "ascii") == "+/- ^2 *"
    assert encodable("ν ∞", "utf-8") == "ν ∞"
    assert encodable("☃", "cp1252") == "\\u2603"  # no spelling: escaped, never lost
    assert encodable("ν", "no-such-codec") == "nu"


@pytest.mark.parametrize("args", [
    ["run", A2, "--trials", "20000"],
    ["explain", A2, "--trials", "20000"],
    ["certify", CAMPAIGN, "--trials", "0"],
    ["check", A2],
])
def test_a_cp1252_redirected_stdout_prints_without_a_traceback(args: list[str],
                                                               tmp_path: Path) -> None:
    # a Windows console or a file redirected under a cp1252 locale (PYTHONIOENCODING sets
    # the encoding of the real standard streams; stdout is a file here, not a terminal)
    env = {**os.environ, "PYTHONIOENCODING": "cp1252"}
    with open(tmp_path / "out.txt", "wb") as out:
        done = subprocess.run([sys.executable, "-m", "budget", *args], stdout=out, cwd=tmp_path,
                              stderr=subprocess.PIPE, env=env, timeout=120)
    stderr = done.stderr.decode("cp1252")
    assert done.returncode == 0, stderr
    assert "Traceback" not in stderr
    text = (tmp_path / "out.txt").read_bytes().decode("cp1252")
    assert text.strip()
    if args[0] == "run":
        assert "nu_eff = inf" in text and "#" in text


def test_in_process_ascii_stream() -> None:
    runner = CliRunner(charset="ascii")
    result = runner.invoke(main, ["run", A2, "--trials", "0"], catch_exceptions=False)
    assert result.exit_code == 0
    assert "nu_eff = inf" in result.stdout and "+/-" in result.stdout


def test_dash_reads_the_model_from_standard_input(cli) -> None:
    text = Path(A2).read_bytes()
    runner = CliRunner()
    checked = runner.invoke(main, ["check", "-"], input=text, catch_exceptions=False)
    assert checked.exit_code == 0
    assert checked.stdout.startswith("ok: <stdin>: 5 inputs")
    piped = runner.invoke(main, ["run", "-", "--json", "--trials", "0"], input=text,
                          catch_exceptions=False)
    _, stdout, _ = cli("run", A2, "--json", "--trials", "0")
    assert json.loads(piped.stdout)["measurands"] == json.loads(stdout)["measurands"]
    bad = runner.invoke(main, ["check", "-"], input=b'title = "t"\n[measurands.y]\n')
    assert bad.exit_code == 1
    assert bad.stderr.startswith("error: <stdin>")


def test_quiet_prints_only_errors_and_asked_for_json(cli) -> None:
    code, stdout, stderr = cli("run", A2, "--trials", "20000", "--quiet")
    assert (code, stdout, stderr) == (0, "", "")  # the warning (not validated) is silent
    code, stdout, stderr = cli("-q", "run", A2, "--trials", "20000", "--json")
    assert code == 0 and stderr == ""
    assert json.loads(stdout)["warnings"]  # still in the document
    code, stdout, stderr = cli("check", str(MODELS / "nowhere.toml"), "-q")
    assert code == 1 and stderr.startswith("error: ")


def test_strict_exits_3_when_monte_carlo_does_not_validate(cli) -> None:
    code, stdout, stderr = cli("run", A2, "--trials", "20000", "--strict")
    assert code == 3 and stdout == ""
    assert "Monte Carlo does not validate" in stderr
    assert stderr.rstrip().endswith("error: --strict: 1 warning; no output written")
    code, _, _ = cli("run", A2, "--trials", "0", "--strict")
    assert code == 0


def test_demo_copies_the_models_and_they_run(cli, tmp_path: Path) -> None:
    code, stdout, stderr = cli("demo", str(tmp_path / "start"))
    assert code == 0, stderr
    assert stdout.startswith("copied ")
    copied = {p.relative_to(tmp_path / "start").as_posix()
              for p in (tmp_path / "start").rglob("*") if p.is_file()}
    shipped = {p.relative_to(MODELS).as_posix() for p in MODELS.rglob("*")
               if p.is_file() and p.suffix in (".toml", ".csv", ".xlsx")}
    assert copied == shipped
    code, _, stderr = cli("certify", str(tmp_path / "start" / "vics-as-25a" / "campaign.toml"),
                          "--trials", "0")
    assert code == 0, stderr
    code, stdout, stderr = cli("demo", str(tmp_path / "start"))
    assert code == 1 and stdout == ""
    assert stderr.startswith(f"error: {tmp_path / 'start'}: expected a folder without the "
                             "demo files, found ")
