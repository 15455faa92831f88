"""Accessibility of the reports (WCAG 2.1 level AA): contrast of every text colour of the
style sheet against the backgrounds it is drawn on (success criterion 1.4.3, ≥ 4.5:1,
relative luminance and contrast ratio as WCAG 2.1 defines them), a text alternative for
every chart and formula (1.1.1), the document language (3.1.1), table headers (1.3.1)."""

from __future__ import annotations

import re
from importlib import resources

import pytest

from budget._analysis import evaluate
from budget._campaign import load_campaign
from budget._certification import certify
from budget._model import load_model
from budget._report import render_certification_report, render_report

from conftest import MODELS

DEMO = MODELS / "vics-as-25a"


def luminance(colour: str) -> float:
    """WCAG 2.1 relative luminance of #rrggbb."""
    channels = [int(colour[i:i + 2], 16) / 255 for i in (1, 3, 5)]
    linear = [c / 12.92 if c <= 0.04045 else ((c + 0.055) / 1.055) ** 2.4 for c in channels]
    return 0.2126 * linear[0] + 0.7152 * linear[1] + 0.0722 * linear[2]


def contrast(a: str, b: str) -> float:
    high, low = sorted((luminance(a), luminance(b)), reverse=True)
    return (high + 0.05) / (low + 0.05)


def _expand(colour: str) -> str:
    colour = colour.lower()
    return "#" + "".join(c * 2 for c in colour[1:]) if len(colour) == 4 else colour


def text_pairs(css: str) -> list[tuple[str, str, str]]:
    """(selector, text colour, background) for every text colour of a style sheet."""
    variables = dict(re.findall(r"--([\w-]+)\s*:\s*(#[0-9a-fA-F]{3,6})", css))

    def resolve(value: str) -> str | None:
        value = value.strip()
        found = re.search(r"var\(--([\w-]+)\)", value)
        if found:
            return _expand(variables[found.group(1)])
        found = re.search(r"#[0-9a-fA-F]{6}\b|#[0-9a-fA-F]{3}\b", value)
        return _expand(found.group(0)) if found else None

    rules = []
    for selector, body in re.findall(r"([^{}]+)\{([^{}]*)\}", re.sub(r"/\*.*?\*/", "", css,
                                                                       flags=re.S)):
        declarations = dict((k.strip(), v) for k, v in
                            (d.split(":", 1) for d in body.split(";") if ":" in d))
        colour = resolve(declarations["color"]) if "color" in declarations else None
        background = next((resolve(declarations[k]) for k in ("background",
                                                                "background-color")
                           if k in declarations), None)
        rules.append((selector.strip(), colour, background))
    coloured = [(s, c) for s, c, _ in rules if c is not None]
    pairs = []
    containers = set()
    for selector, colour, background in rules:
        if colour is not None or background is None or selector == "html":
            continue
        # a variant such as .verdict.good colours the ground of .verdict's own text
        owner = [(s, c) for s, c in coloured if selector.startswith(s) and s != selector]
        if owner:
            pairs += [(selector, c, background) for _, c in owner]
        else:
            containers.add(background)
    variants = {s for s, _, _ in pairs}
    for selector, colour, background in rules:
        if colour is None or any(v.startswith(selector) for v in variants):
            continue
        for ground in ([background] if background else sorted(containers)):
            pairs.append((selector, colour, ground))
    return pairs


def test_contrast_is_computed_as_wcag_says():
    # WCAG 2.1: black on white is 21:1; #777777 on white is about 4.48:1 (fails AA)
    assert contrast("#000000", "#ffffff") == pytest.approx(21.0)
    assert contrast("#777777", "#ffffff") == pytest.approx(4.48, abs=0.01)
    bad = ":root { --pale: #999999; } body { background: #ffffff; } p { color: var(--pale); }"
    assert [round(contrast(c, b), 2) for _, c, b in text_pairs(bad)] == [2.85]


def test_every_text_colour_of_the_style_sheet_has_aa_contrast():
    css = resources.files("budget.templates").joinpath("style.css").read_text(
        encoding="utf-8")
    pairs = text_pairs(css)
    assert len(pairs) >= 10
    weak = [(s, c, b, round(contrast(c, b), 2)) for s, c, b in pairs if contrast(c, b) < 4.5]
    assert weak == []


@pytest.fixture(scope="module")
def pages():
    result = evaluate(load_model(DEMO / "coulometric-purity.toml"), trials=5000, seed=1)
    cert = certify(load_campaign(DEMO / "campaign.toml"), trials=5000, seed=1)
    return [render_report(result), render_certification_report(cert)]


def test_language_charts_formulas_and_tables(pages):
    for text in pages:
        assert '<html lang="en">' in text
        charts = re.findall(r"<svg[^>]*>(?:<title>[^<]+</title>)?", text)
        assert charts
        for chart in charts:
            assert 'role="img"' in chart and 'aria-label="' in chart and "<title>" in chart
        formulas = re.findall(r"<math[^>]*>", text)
        assert formulas
        assert all('alttext="' in m for m in formulas), [m for m in formulas
                                                         if "alttext" not in m][:3]
        for table in re.findall(r"<table.*?</table>", text, re.S):
            assert "<th" in table
