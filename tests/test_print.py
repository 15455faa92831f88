"""The demo reports printed on A4 by a real headless Chromium: page count, how full each
page is, and no heading left alone at a page foot. Pages are rasterised by pdftoppm and
their text read by pdftotext (Debian's poppler-utils, installed by .ci/run like Chromium).

Bounds (docs/reports.md, "Print"): every page but the last is at least 78 % filled (no page
more than about a fifth empty), the budget report takes at most 7 pages and the
certification report at most 9."""

from __future__ import annotations

import html as html_text
import re
import shutil
import subprocess
from pathlib import Path

import pytest

from conftest import MODELS

DEMO = MODELS / "vics-as-25a"
_CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")
_POPPLER = shutil.which("pdftoppm") and shutil.which("pdfinfo") and shutil.which("pdftotext")
_FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
          "--disable-background-networking", "--disable-component-update", "--disable-sync",
          "--no-pdf-header-footer"]
_MARGIN_MM, _PAGE_MM = 14.0, 297.0   # @page { size: A4; margin: 14mm 12mm } in style.css
FILL = 0.78

pytestmark = pytest.mark.skipif(not (_CHROMIUM and _POPPLER),
                                reason="Chromium and poppler-utils are needed (.ci/run "
                                       "installs them)")


def _print(page: Path, folder: Path) -> Path:
    pdf = folder / (page.stem + ".pdf")
    subprocess.run([_CHROMIUM, *_FLAGS, f"--user-data-dir={folder / 'profile'}",
                    f"--print-to-pdf={pdf}", page.as_uri()], capture_output=True,
                   timeout=180, check=False)
    assert pdf.exists(), "Chromium wrote no PDF"
    return pdf


def page_count(pdf: Path) -> int:
    info = subprocess.run(["pdfinfo", str(pdf)], capture_output=True, text=True, check=True)
    return int(re.search(r"^Pages:\s+(\d+)", info.stdout, re.M).group(1))


def fills(pdf: Path, folder: Path) -> list[float]:
    """For each page, the share of the printable height down to its last inked row."""
    subprocess.run(["pdftoppm", "-r", "40", "-gray", str(pdf), str(folder / "page")],
                   check=True)
    out = []
    for image in sorted(folder.glob("page-*.pgm"), key=lambda p: int(p.stem.split("-")[1])):
        magic, size, _, pixels = image.read_bytes().split(b"\n", 3)
        assert magic == b"P5"
        width, height = map(int, size.split())
        inked = [row for row in range(height)
                 if min(pixels[row * width:(row + 1) * width]) < 200]
        top = _MARGIN_MM / _PAGE_MM * height
        out.append(((inked[-1] if inked else 0) - top) / (height - 2 * top))
    return out


def last_lines(pdf: Path) -> list[str]:
    text = subprocess.run(["pdftotext", "-layout", str(pdf), "-"], capture_output=True,
                          text=True, check=True).stdout
    return [next((line.strip() for line in reversed(page.splitlines()) if line.strip()), "")
            for page in text.split("\f") if page.strip()]


def headings(page: str) -> set[str]:
    page = re.sub(r'<span class="number">.*?</span>', "", page)
    found = re.findall(r"<h[23][^>]*>(.*?)</h[23]>", page, re.S)
    return {re.sub(r"\s+", " ", html_text.unescape(re.sub(r"<[^>]+>", "", h))).strip()
            for h in found}


@pytest.fixture(scope="module")
def printed(tmp_path_factory):
    from budget._analysis import evaluate
    from budget._campaign import load_campaign
    from budget._certification import certify
    from budget._model import load_model
    from budget._report import write_certification_report, write_report

    folder = tmp_path_factory.mktemp("print")
    budget_page, cert_page = folder / "budget.html", folder / "certificate.html"
    write_report(evaluate(load_model(DEMO / "coulometric-purity.toml"), trials=100_000,
                          seed=1), str(budget_page))
    write_certification_report(certify(load_campaign(DEMO / "campaign.toml"), trials=20_000,
                                       seed=1), str(cert_page))
    return {name: (page, _print(page, folder)) for name, page in
            (("budget", budget_page), ("certificate", cert_page))}


@pytest.mark.parametrize("name, most", [("budget", 7), ("certificate", 9)])
def test_a4_pages_are_filled(printed, tmp_path, name, most):
    _, pdf = printed[name]
    count = page_count(pdf)
    assert 2 <= count <= most
    shares = fills(pdf, tmp_path)
    assert len(shares) == count
    assert all(share >= FILL for share in shares[:-1]), [round(s, 2) for s in shares]


@pytest.mark.parametrize("name", ["budget", "certificate"])
def test_no_heading_is_left_alone_at_a_page_foot(printed, name):
    page, pdf = printed[name]
    titles = headings(page.read_text(encoding="utf-8"))
    assert len(titles) > 5
    feet = last_lines(pdf)[:-1]
    assert not [foot for foot in feet if re.sub(r"^\S+\s+", "", foot) in titles
                or foot in titles]


def test_the_printed_pages_carry_the_assessors_answer_and_the_safety_section(printed):
    text = {name: subprocess.run(["pdftotext", str(pdf), "-"], capture_output=True, text=True,
                                 check=True).stdout for name, (_, pdf) in printed.items()}
    assert "What dominates the uncertainty" in text["budget"] and "dominates:" in text["budget"]
    for heading in ("Intended use", "Instructions for handling and use",
                    "Health and safety information", "safety data sheet"):
        assert heading in text["certificate"]


def test_the_fill_measure_sees_a_half_empty_page(tmp_path):
    # the control: a page that forces a break after a short paragraph must fail the bound
    page = tmp_path / "half.html"
    page.write_text("<html lang='en'><head><style>@page { size: A4; margin: 14mm 12mm }"
                    "</style></head><body><p style='height:120mm;background:#000'></p>"
                    "<p style='break-before:page'>end</p></body></html>")
    shares = fills(_print(page, tmp_path), tmp_path)
    assert len(shares) == 2 and 0.40 < shares[0] < 0.52
