"""The HTML reports: every budget row present with the JSON document's numbers rounded as
GUM 7.2.6 says, no external resources, model text shown as text, and a real headless
Chromium rendering the page without console errors."""

from __future__ import annotations

import json
import re
import shutil
import struct
import subprocess
import zlib
from html.parser import HTMLParser
from pathlib import Path

import pytest

from budget._analysis import evaluate
from budget._formatting import format_pair
from budget._model import parse_model
from budget._report import render_report
from budget._typeset import name_text
from budget._unit_display import display_unit

from conftest import MODELS

DEMO = MODELS / "vics-as-25a" / "coulometric-purity.toml"


class _Rows(HTMLParser):
    """Collects the cells of the rows marked ``data-input``."""

    def __init__(self) -> None:
        super().__init__()
        self.rows: dict[str, list[str]] = {}
        self.current: str | None = None
        self.cell: list[str] | None = None
        self.tags: list[tuple[str, dict]] = []

    def handle_starttag(self, tag, attrs):
        attributes = dict(attrs)
        self.tags.append((tag, attributes))
        if tag == "tr" and "data-input" in attributes:
            self.current = attributes["data-input"]
            self.rows.setdefault(self.current, [])
        elif tag == "td" and self.current is not None:
            self.cell = []

    def handle_endtag(self, tag):
        if tag == "td" and self.cell is not None and self.current is not None:
            self.rows[self.current].append("".join(self.cell).strip())
            self.cell = None
        elif tag == "tr":
            self.current = None

    def handle_data(self, data):
        if self.cell is not None:
            self.cell.append(data)


@pytest.fixture(scope="module")
def demo(tmp_path_factory):
    folder = tmp_path_factory.mktemp("report")
    html = folder / "report.html"
    from click.testing import CliRunner

    from budget._cli import main

    runner = CliRunner()
    result = runner.invoke(main, ["run", str(DEMO), "--trials", "100000", "--html", str(html)])
    assert result.exit_code == 0, result.stderr
    document = json.loads(runner.invoke(main, ["run", str(DEMO), "--trials", "100000",
                                               "--json"]).stdout)
    return html, html.read_text(encoding="utf-8"), document


def test_every_input_row_with_the_json_numbers_rounded(demo):
    _, text, document = demo
    parser = _Rows()
    parser.feed(text)
    (w,) = document["measurands"]
    assert set(parser.rows) == {c["input"] for c in w["contributions"]}
    for c in w["contributions"]:
        cells = parser.rows[c["input"]]
        assert cells[0] == name_text(c["input"]).replace("_", "")  # typeset: ρ<sub>ref</sub>
        if c["u"] > 0:
            # GUM 7.2.6: u to two significant digits, the estimate to the same place
            assert (cells[1], cells[3]) == format_pair(c["estimate"], c["u"], 2)
        assert cells[2] == display_unit(c["unit"])
        assert cells[5] == c["type"]
    value, expanded = format_pair(w["value"], w["U"], 2)
    assert f"w = ({value} ± {expanded}) %" in text


def test_no_external_resources(demo):
    _, text, _ = demo
    parser = _Rows()
    parser.feed(text)
    for tag, attributes in parser.tags:
        assert tag not in ("script", "link", "img", "iframe", "object", "embed"), tag
        for name in ("src", "href"):
            assert name not in attributes, (tag, attributes)
    assert "@import" not in text and "url(" not in text
    assert "http://" not in text.replace('xmlns="http://www.w3.org/2000/svg"', "").replace(
        'xmlns="http://www.w3.org/1998/Math/MathML"', "")
    assert "https://" not in text


def test_report_shows_the_caution_provenance_and_mathml(demo):
    _, text, document = demo
    assert "ISO/IEC 17025, ISO 17034" in text
    assert document["model_sha256"] in text
    assert "iupac-2021-interval" in text
    assert text.count("<math ") >= 5
    assert "<svg" in text


def test_model_text_with_html_is_shown_as_text(tmp_path):
    model = parse_model("""
title = "<script>alert('x')</script> & <b>bold</b>"
description = "<img src=x onerror=alert(1)>"
[measurands.y]
equation = "a"
description = "<i>italic</i>"
[inputs.a]
value = 1
u = 0.1
source = "<a href='http://example.invalid'>link</a>"
""")
    text = render_report(evaluate(model, trials=0))
    assert "<script>alert" not in text and "<img src=x" not in text
    assert "&lt;script&gt;alert(&#39;x&#39;)&lt;/script&gt; &amp; &lt;b&gt;bold&lt;/b&gt;" in text
    assert "&lt;a href=&#39;http://example.invalid&#39;&gt;link&lt;/a&gt;" in text
    assert "<i>italic</i>" not in text


def test_report_is_written_atomically_and_only_where_asked(tmp_path, cli, monkeypatch):
    monkeypatch.chdir(tmp_path)
    target = tmp_path / "out.html"
    code, _, _ = cli("run", str(DEMO), "--trials", "0", "--html", str(target))
    assert code == 0
    assert sorted(p.name for p in tmp_path.iterdir()) == ["out.html"]
    code, _, stderr = cli("run", str(DEMO), "--trials", "0", "--html",
                          str(tmp_path / "missing" / "out.html"))
    assert code == 1
    assert stderr.startswith("error: ") and "expected an existing folder" in stderr


def test_certification_report(tmp_path, cli):
    target = tmp_path / "certificate.html"
    code, stdout, stderr = cli("certify", str(MODELS / "vics-as-25a" / "campaign.toml"),
                               "--trials", "20000", "--html", str(target))
    assert code == 0, stderr
    text = target.read_text(encoding="utf-8")
    for heading in ("Certified value", "Uncertainty components", "Characterization",
                    "Between-unit homogeneity", "Stability", "Comparison with independent",
                    "Characterization budget", "Provenance"):
        assert heading in text
    assert "ISO/IEC 17025, ISO 17034" in text
    assert text.count("<svg") >= 6
    assert "<script" not in text


# -- a real browser ------------------------------------------------------------------------

_CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")
_FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
          "--disable-background-networking", "--disable-component-update", "--disable-sync",
          "--enable-logging=stderr", "--v=0", "--window-size=1000,2400"]


def _render(page: Path, folder: Path) -> tuple[bytes, str]:
    shot = folder / "shot.png"
    done = subprocess.run([_CHROMIUM, *_FLAGS, f"--user-data-dir={folder / 'profile'}",
                           f"--screenshot={shot}", page.as_uri()], capture_output=True,
                          text=True, timeout=120, check=False)
    return shot.read_bytes(), done.stderr


def _console_errors(log: str) -> list[str]:
    return [line for line in log.splitlines()
            if "CONSOLE" in line and re.search(r"error|uncaught", line, re.I)]


def _pixels(png: bytes) -> bytes:
    """The decompressed image data of a PNG (filter bytes included)."""
    assert png[:8] == b"\x89PNG\r\n\x1a\n"
    data, position = b"", 8
    while position < len(png):
        length, kind = struct.unpack(">I4s", png[position:position + 8])
        if kind == b"IDAT":
            data += png[position + 8:position + 8 + length]
        position += 12 + length
    return zlib.decompress(data)


@pytest.mark.skipif(_CHROMIUM is None, reason="Chromium is not installed (.ci/run installs it)")
def test_chromium_renders_the_report(demo, tmp_path):
    html, _, _ = demo
    png, log = _render(html, tmp_path)
    assert _console_errors(log) == []
    pixels = _pixels(png)
    assert len(set(pixels)) > 50  # a blank page has a handful of byte values


@pytest.mark.skipif(_CHROMIUM is None, reason="Chromium is not installed (.ci/run installs it)")
def test_console_error_detection_works(tmp_path):
    # the control: a page with a script error must be caught by the same check
    page = tmp_path / "broken.html"
    page.write_text("<html><body><p>x</p><script>undefinedFunction();</script></body></html>")
    _, log = _render(page, tmp_path)
    assert _console_errors(log)


@pytest.mark.skipif(_CHROMIUM is None, reason="Chromium is not installed (.ci/run installs it)")
def test_report_prints_on_a4(demo, tmp_path):
    # the style sheet asks for A4 (@page size: A4): 595 x 842 points in the PDF
    html, _, _ = demo
    pdf = tmp_path / "report.pdf"
    subprocess.run([_CHROMIUM, *_FLAGS, f"--user-data-dir={tmp_path / 'profile'}",
                    "--no-pdf-header-footer", f"--print-to-pdf={pdf}", html.as_uri()],
                   capture_output=True, timeout=120, check=False)
    data = pdf.read_bytes()
    boxes = re.findall(rb"/MediaBox\s*\[\s*0\s+0\s+([\d.]+)\s+([\d.]+)\s*\]", data)
    assert boxes, "no page in the PDF"
    for width, height in boxes:
        assert (round(float(width)), round(float(height))) == (595, 842)
