"""Every code block of README.md and docs/*.md runs, so the documentation cannot rot.

How a block is run depends on its language:

* ``toml``: a complete model (parsed and propagated) or campaign (certified with the
  demo's data files); fragments are not allowed;
* ``python``: executed in a scratch folder holding a copy of ``models/``;
* ``sh``: each ``budget …`` command runs in process and must exit 0; ``pip install``,
  ``python -m pytest`` and ``python benchmarks/…`` are what CI itself runs, so they are
  only recognised here;
* ``text`` preceded by ``<!-- output of: COMMAND -->``: COMMAND runs and its standard
  output must equal the block;
* ``json`` preceded by ``<!-- shortened from: COMMAND -->``: every key and value shown
  must be in COMMAND's document (numbers to 1e-12 relative);
* ``csv`` preceded by ``<!-- file: PATH -->``: the block must be the first lines of the
  shipped data file PATH (relative to the repository).

Also: every JSON document validates against its schema in ``budget/schemas``.
"""

from __future__ import annotations

import json
import math
import re
import shlex
import shutil
from pathlib import Path
from typing import Any

import jsonschema
import pytest
from click.testing import CliRunner

from budget._cli import main
from budget._model import parse_model

ROOT = Path(__file__).resolve().parent.parent
PAGES = [ROOT / "README.md", *sorted((ROOT / "docs").glob("*.md"))]
_BLOCK = re.compile(r"(?:<!-- (?P<how>output of|shortened from|file): (?P<command>.*?) -->\n)?"
                    r"^```(?P<info>[^\n]*)\n(?P<body>.*?)^```", re.S | re.M)
_CI_ONLY = ("pip install", "python -m pytest", "python benchmarks/")


def _blocks() -> list[Any]:
    found = []
    for page in PAGES:
        text = page.read_text(encoding="utf-8")
        for match in _BLOCK.finditer(text):
            line = text.count("\n", 0, match.start("info")) + 1
            found.append(pytest.param(match, id=f"{page.name}:{line}"))
    return found


@pytest.fixture
def scratch(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    shutil.copytree(ROOT / "models", tmp_path / "models")
    monkeypatch.chdir(tmp_path)
    return tmp_path


def _budget(command: str) -> tuple[int, str, str]:
    words = shlex.split(command)
    assert words[0] == "budget", command
    result = CliRunner().invoke(main, words[1:], catch_exceptions=False)
    return result.exit_code, result.stdout, result.stderr


@pytest.mark.parametrize("match", _blocks())
def test_code_block_runs(match: re.Match[str], scratch: Path) -> None:
    info, body = match["info"].strip(), match["body"]
    if info == "toml":
        _toml(body, scratch)
    elif info == "python":
        exec(compile(body, "<doc>", "exec"), {"__name__": "__doc_block__"})
    elif info == "sh":
        _shell(body)
    elif info == "text" and match["how"] == "output of":
        code, stdout, _ = _budget(match["command"])
        assert code == 0
        assert stdout == body
    elif info == "json" and match["how"] == "shortened from":
        code, stdout, _ = _budget(match["command"])
        assert code == 0
        _assert_within(json.loads(body), json.loads(stdout), "")
    elif info == "csv" and match["how"] == "file":
        shipped = (ROOT / match["command"]).read_text(encoding="utf-8")
        assert shipped.startswith(body), match["command"]
    else:
        pytest.fail(f"a ```{info} block that the tests do not know how to run")


def _toml(body: str, scratch: Path) -> None:
    if "[characterization]" in body:
        from budget import certify, load_campaign

        folder = scratch / "models" / "vics-as-25a"
        (folder / "doc-campaign.toml").write_text(body, encoding="utf-8")
        certify(load_campaign(folder / "doc-campaign.toml"), trials=0)
    elif "[certificates." in body:
        from budget._errors import Location
        from budget._register import load_register

        (scratch / "register.toml").write_text(body, encoding="utf-8")
        assert load_register(scratch / "register.toml", Location(), "iupac-2021-interval")
    elif "[measurands." in body:
        from budget import propagate

        model = parse_model(body, "doc.toml")
        assert propagate(model).measurands
        assert not model.warnings, model.warnings
    else:
        pytest.fail("a TOML block must be a whole model or campaign, not a fragment")


def _shell(body: str) -> None:
    for line in body.splitlines():
        line = line.split(" #", 1)[0].strip()
        for command in filter(None, (part.strip() for part in line.split("&&"))):
            if command.startswith(_CI_ONLY):
                continue
            _one_command(command)


def _one_command(command: str) -> None:
    """``[NAME=value …] [cat FILE |] budget … [> FILE]``, run in process."""
    stdin = None
    if "|" in command:
        source, command = (part.strip() for part in command.split("|", 1))
        words = shlex.split(source)
        assert words[0] == "cat", source
        stdin = Path(words[1]).read_bytes()
    target = None
    if ">" in command:
        command, target = (part.strip() for part in command.split(">", 1))
    words = shlex.split(command)
    env = {}
    while "=" in words[0]:
        name, value = words.pop(0).split("=", 1)
        env[name] = value
    assert words[0] == "budget", command
    result = CliRunner().invoke(main, words[1:], input=stdin, env=env,
                                prog_name="budget", catch_exceptions=False)
    assert result.exit_code == 0, result.stderr
    if "_BUDGET_COMPLETE" in env:  # a shell-completion script
        assert "budget" in result.stdout and "complete" in result.stdout.lower()
    if target:
        Path(target).write_text(result.stdout, encoding="utf-8")


def _assert_within(shown: Any, real: Any, path: str) -> None:
    if isinstance(shown, dict):
        assert isinstance(real, dict), path
        for key, value in shown.items():
            assert key in real, f"{path}.{key} is not in the real document"
            _assert_within(value, real[key], f"{path}.{key}")
    elif isinstance(shown, list) and shown and isinstance(shown[0], dict):
        for item in shown:
            assert any(_within(item, candidate) for candidate in real), f"{path}: {item}"
    elif isinstance(shown, float):
        assert math.isclose(shown, real, rel_tol=1e-12), f"{path}: {shown} != {real}"
    else:
        assert shown == real, f"{path}: {shown!r} != {real!r}"


def _within(shown: Any, real: Any) -> bool:
    try:
        _assert_within(shown, real, "")
    except AssertionError:
        return False
    return True


@pytest.mark.parametrize(("command", "schema"), [
    ("budget run models/reference/eurachem-a2-naoh.toml --json --trials 20000", "result"),
    ("budget run models/reference/gum-h1-end-gauge.toml --json --trials 0", "result"),
    ("budget explain models/reference/eurachem-a2-naoh.toml --json --trials 20000",
     "explanation"),
    ("budget certify models/vics-as-25a/campaign.toml --json --trials 0", "certification"),
])
def test_json_documents_follow_their_schema(command: str, schema: str, scratch: Path) -> None:
    code, stdout, _ = _budget(command)
    assert code == 0
    document = json.loads(stdout)
    assert document["schema_version"] == "1"
    path = ROOT / "budget" / "schemas" / f"{schema}.schema.json"
    jsonschema.validate(document, json.loads(path.read_text(encoding="utf-8")))


def test_readme_links_stay_inside_the_repository() -> None:
    for page in PAGES:
        for target in re.findall(r"\]\(([^)#]+)", page.read_text(encoding="utf-8")):
            if target.startswith(("http://", "https://")):
                continue
            assert (page.parent / target).resolve().is_relative_to(ROOT), target
            assert (page.parent / target).exists(), f"{page.name}: {target}"
