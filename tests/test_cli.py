"""The command line in process: exit codes, stdout and stderr separately, the JSON
document of shared/spec/cli.md."""

from __future__ import annotations

import json
import math

import pytest

from conftest import MODELS

H1 = str(MODELS / "reference" / "gum-h1-end-gauge.toml")
DEMO = str(MODELS / "vics-as-25a" / "coulometric-purity.toml")


def test_run_json_document_has_the_contract_keys(cli):
    code, stdout, stderr = cli("run", DEMO, "--json", "--trials", "50000")
    assert code == 0
    document = json.loads(stdout)
    assert {"title", "model_sha256", "coverage", "seed", "measurands", "output_correlation",
            "warnings"} <= set(document)
    (w,) = document["measurands"]
    assert {"name", "unit", "value", "u", "dof", "k", "U", "interval", "contributions",
            "monte_carlo"} <= set(w)
    assert w["unit"] == "%"
    assert w["interval"] == pytest.approx([w["value"] - w["U"], w["value"] + w["U"]])
    contribution = {c["input"]: c for c in w["contributions"]}
    assert set(contribution) == {"U_m", "R_s", "t_m", "Q_pre", "Q_post", "Q_bl", "eta", "m_c",
                                 "rho_ref", "rho_s", "t_air", "p_air", "h_air", "d_rho_a",
                                 "M", "z", "F"}
    m = contribution["M"]
    assert {"input", "estimate", "unit", "u", "distribution", "type", "dof", "sensitivity",
            "contribution", "share"} == set(m)
    assert m["dof"] is None and m["type"] == "B"
    assert m["contribution"] == pytest.approx(abs(m["sensitivity"]) * m["u"])
    assert m["share"] == pytest.approx(100 * m["contribution"] ** 2 / w["u"] ** 2)
    mc = w["monte_carlo"]
    assert mc["trials"] == 50000
    assert {"tolerance", "d_low", "d_high", "validated"} == set(mc["validation"])
    assert document["output_correlation"] == {"w": {"w": 1.0}}
    assert [f"warning: {line}" for line in document["warnings"]] == stderr.splitlines()
    assert document["atomic_weights"] == "iupac-2021-interval"
    assert "ISO/IEC 17025" in document["caution"]


def test_model_digest_is_of_the_file_bytes(cli):
    import hashlib
    from pathlib import Path

    code, stdout, _ = cli("run", H1, "--json", "--trials", "0")
    assert json.loads(stdout)["model_sha256"] == hashlib.sha256(
        Path(H1).read_bytes()).hexdigest()


def test_trials_zero_has_no_monte_carlo(cli):
    code, stdout, stderr = cli("run", H1, "--json", "--trials", "0")
    assert code == 0
    (m,) = json.loads(stdout)["measurands"]
    assert "monte_carlo" not in m
    assert m["dof"] == pytest.approx(16.74, abs=0.01)


def test_coverage_and_digits_flags(cli):
    code, stdout, _ = cli("run", H1, "--json", "--trials", "0", "--coverage", "0.95")
    (m,) = json.loads(stdout)["measurands"]
    # t95(16) = 2.120 (JCGM 100 Table G.2 [C])
    assert m["k"] == pytest.approx(2.120, abs=0.0005)
    code, stdout, _ = cli("run", H1, "--trials", "0", "--digits", "3")
    assert "u_c = 0.0000317 mm" in stdout


def test_second_order_flag(cli):
    code, stdout, _ = cli("run", H1, "--json", "--trials", "0", "--second-order")
    (m,) = json.loads(stdout)["measurands"]
    assert m["u"] * 1e6 == pytest.approx(33.8, abs=0.05)
    assert m["second_order_variance"] > 0


def test_same_seed_same_json(cli):
    first = cli("run", H1, "--json", "--trials", "70000", "--seed", "5")[1]
    second = cli("run", H1, "--json", "--trials", "70000", "--seed", "5")[1]
    strip = lambda text: {k: v for k, v in json.loads(text).items() if k != "provenance"}  # noqa
    assert strip(first) == strip(second)
    third = cli("run", H1, "--json", "--trials", "70000", "--seed", "6")[1]
    assert strip(first) != strip(third)


def test_table_output(cli):
    code, stdout, stderr = cli("run", DEMO, "--trials", "20000")
    assert code == 0
    assert max(len(line) for line in stdout.splitlines()) <= 100
    assert "w = (99.9866 ± 0.0052) %, k = 1.96, coverage probability 95 %" in stdout
    assert "20,000 trials" in stdout


def test_several_measurands_report_their_correlation(cli, tmp_path):
    model = tmp_path / "two.toml"
    model.write_text("""
title = "two"
[measurands.s]
equation = "a + b"
[measurands.d]
equation = "a - b"
[inputs.a]
value = 1
u = 1
[inputs.b]
value = 2
u = 2
""")
    code, stdout, _ = cli("run", str(model), "--json", "--trials", "0")
    document = json.loads(stdout)
    # corr(a + b, a - b) = (1 - 4)/(sqrt 5 sqrt 5) = -0.6; cov = 1 - 4 = -3 [C]
    assert document["output_correlation"]["s"]["d"] == pytest.approx(-0.6)
    assert document["output_covariance_gum"]["s"]["d"] == pytest.approx(-3.0)
    assert document["output_covariance_gum"]["s"]["s"] == pytest.approx(5.0)
    code, stdout, _ = cli("run", str(model), "--trials", "0")
    assert "output correlation (GUM)" in stdout


def test_help_lists_the_commands(cli):
    code, stdout, _ = cli("--help")
    assert code == 0
    for command in ("run", "check", "certify"):
        assert command in stdout


def test_python_module_entry_point():
    import subprocess
    import sys

    done = subprocess.run([sys.executable, "-m", "budget", "check", H1], capture_output=True,
                          text=True, check=False)
    assert done.returncode == 0 and done.stdout.startswith("ok: ")


def test_the_process_ends_at_once_with_all_its_output_and_status(cli, tmp_path):
    """``budget`` (``console``) ends a command that kept its model with ``os._exit``: the
    output is the in-process runner's to the byte, warnings reach standard error, and
    every status (0, 1 for an error, 3 for --strict with warnings) is Python's own."""
    import subprocess
    import sys

    def process(*args):
        return subprocess.run([sys.executable, "-m", "budget", *args], capture_output=True,
                              text=True, check=False, cwd=tmp_path)

    for args in (("run", DEMO, "--json", "--trials", "2000", "--seed", "7"),
                 ("run", H1, "--trials", "0"), ("check", DEMO)):
        done = process(*args)
        code, stdout, stderr = cli(*args)
        assert (done.returncode, done.stdout, done.stderr) == (code, stdout, stderr), args
        assert code == 0 and stdout
    warned = tmp_path / "warned.toml"
    warned.write_text('title = "t"\n[measurands.y]\nequation = "a + b"\n'
                      '[inputs.a]\nvalue = 1.0\nu = 0.1\n'
                      '[inputs.b]\nvalue = 2.0\nu = 0.1\n[inputs.c]\nvalue = 3.0\nu = 0.1\n')
    done = process("run", str(warned), "--trials", "0")
    assert done.returncode == 0 and "warning: input 'c' appears in no measurand" in done.stderr
    assert process("run", str(warned), "--trials", "0", "--strict").returncode == 3
    missing = process("run", str(tmp_path / "missing.toml"))
    assert missing.returncode == 1 and missing.stderr.startswith("error: ")


def test_json_numbers_are_plain(cli):
    code, stdout, _ = cli("run", DEMO, "--json", "--trials", "0")
    assert "NaN" not in stdout and "Infinity" not in stdout
    assert all(math.isfinite(c["sensitivity"]) for c in
               json.loads(stdout)["measurands"][0]["contributions"])


def test_adaptive_flag(cli):
    # JCGM 101 7.9 through the command line: whole batches of 65,536 trials
    code, stdout, stderr = cli("run", H1, "--json", "--adaptive")
    assert code == 0, stderr
    mc = json.loads(stdout)["measurands"][0]["monte_carlo"]
    assert mc["trials"] % 65536 == 0 and mc["trials"] >= 2 * 65536
    assert json.loads(stdout)["provenance"]["adaptive"] is True


def test_progress_is_shown_on_a_terminal_only_after_a_second(monkeypatch, capsys):
    from budget import _cli as module

    monkeypatch.setattr(module.sys.stderr, "isatty", lambda: True, raising=False)
    progress = module._Progress(True)
    progress(10, 100)
    assert capsys.readouterr().err == ""  # too early
    progress.start -= 2.0
    progress(50, 100)
    progress.close()
    err = capsys.readouterr().err
    assert "Monte Carlo  60.0 % of 100 trials" in err  # 10 + 50 trials reported
    assert module._Progress(False).enabled is False  # --json: never


def test_public_api_names_resolve():
    import budget

    for name in budget.__all__:
        assert getattr(budget, name) is not None
    campaign = budget.load_campaign(MODELS / "vics-as-25a" / "campaign.toml")
    cert = budget.certify(campaign, trials=0)
    assert budget.certification_document(cert)["U"] == pytest.approx(cert.expanded_uncertainty)
