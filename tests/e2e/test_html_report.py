"""The HTML report end to end: the demo and the digits CNN written by the command line, read back.

The pages are parsed with the standard library's HTML parser (tests/htmlcheck.py) and, when a
headless Chromium is installed, loaded in it offline (tests/browser.py). The digits reference is
scikit-learn's bundled 8 × 8 digits, the data the CNN was trained on (model_zoo/README.md).
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from browser import find_browser, open_page
from htmlcheck import read_page

from audit.cli import main
from audit.report.charts.changes import NU_CHANGES_TITLE, input_changes_title
from audit.report.charts.depth import DEPTH_TITLE
from audit.report.charts.indices import indices_title

SMALL = ["--points", "64", "--replicates", "2"]
ZOO = Path(__file__).resolve().parents[2] / "model_zoo"


@pytest.fixture(scope="module")
def demo(tmp_path_factory):
    where = tmp_path_factory.mktemp("demo")
    page, report = where / "demo.html", where / "demo.json"
    assert main(["demo", *SMALL, "--json", str(report), "--html", str(page), "--quiet"]) == 0
    return page, json.loads(report.read_text(encoding="utf-8"))


@pytest.fixture(scope="module")
def digits(tmp_path_factory):
    where = tmp_path_factory.mktemp("digits")
    page, report = where / "cnn.html", where / "cnn.json"
    argv = ["audit", str(ZOO / "digits_cnn.onnx"), "--inputs", str(ZOO / "digits_cnn.toml"), *SMALL, "--seed", "4"]
    assert main([*argv, "--json", str(report), "--html", str(page), "--quiet"]) == 0
    return page, json.loads(report.read_text(encoding="utf-8"))


def test_the_demo_page_holds_its_charts_and_nothing_from_outside(demo):
    page, report = demo
    parsed = read_page(page.read_text(encoding="utf-8"))
    assert not parsed.problems and not parsed.external and parsed.scripts == 0
    names = [o["name"] for o in report["outputs"]]
    assert parsed.titles() == [*(indices_title(n) for n in names), DEPTH_TITLE]  # a flat input: no heat map
    assert "not a safety validation" in parsed.text and "Terms used in this report" in parsed.text
    for o in report["outputs"]:
        assert o["name"] in parsed.text


def test_the_digits_page_draws_the_images_in_their_8_by_8_shape(digits):
    page, report = digits
    parsed = read_page(page.read_text(encoding="utf-8"))
    assert not parsed.problems and not parsed.external and parsed.scripts == 0
    maps = [c for c in parsed.charts if c["shape"]]
    assert [c["shape"] for c in maps] == ["8x8", "8x8"]
    assert "for all outputs together" in maps[0]["title"] and maps[1]["title"].endswith("per output")
    assert report["model"]["input"]["shape"] == [1, 8, 8]
    names = [o["name"] for o in report["outputs"]]
    assert len(names) == 10 and parsed.titles()[2:] == [*(indices_title(n) for n in names), DEPTH_TITLE]


def test_show_writes_the_same_page_from_the_json_report(digits, tmp_path):
    page, _ = digits
    again = tmp_path / "again.html"
    saved = tmp_path / "cnn.json"
    saved.write_text(json.dumps(json.loads((page.parent / "cnn.json").read_text())), encoding="utf-8")
    assert main(["show", str(saved), "--html", str(again), "--quiet"]) == 0
    assert read_page(again.read_text(encoding="utf-8")).titles() == read_page(page.read_text()).titles()


BROWSER = find_browser()
needs_browser = pytest.mark.skipif(BROWSER is None, reason="no headless Chromium installed (apt-get install chromium)")


@needs_browser
def test_a_browser_shows_the_demo_page_offline_without_console_errors(demo):
    visit = open_page(BROWSER, demo[0])
    assert visit.returncode == 0 and visit.screenshot.startswith(b"\x89PNG") and len(visit.screenshot) > 20_000
    assert visit.console == [] and visit.requests == []


@needs_browser
def test_the_browser_check_does_see_errors_and_requests(tmp_path):
    broken = tmp_path / "broken.html"
    broken.write_text('<!DOCTYPE html><p>x</p><img src="http://example.invalid/x.png">'
                      "<script>console.error('boom')</script>", encoding="utf-8")  # fmt: skip
    visit = open_page(BROWSER, broken, 400, 300)
    assert any("boom" in line for line in visit.console)
    assert visit.requests == ["http://example.invalid/x.png"]


@pytest.fixture(scope="module")
def comparison(tmp_path_factory):
    where = tmp_path_factory.mktemp("compare")
    page, report = where / "compare.html", where / "compare.json"
    argv = ["compare", str(ZOO / "greenhouse_v1.onnx"), str(ZOO / "greenhouse_v2.onnx"), "--inputs",
            str(ZOO / "greenhouse_v1.toml"), *SMALL, "--seed", "7", "--max-index-shift", "0.5"]  # fmt: skip
    assert main([*argv, "--json", str(report), "--html", str(page), "--quiet"]) == 0
    return page, json.loads(report.read_text(encoding="utf-8"))


@pytest.fixture(scope="module")
def advice(tmp_path_factory):
    where = tmp_path_factory.mktemp("advise")
    page, report = where / "advise.html", where / "advise.json"
    argv = ["advise", str(ZOO / "greenhouse_v1.onnx"), "--inputs", str(ZOO / "greenhouse_v1.toml"), *SMALL,
            "--seed", "7", "--top", "2", "--gain-points", "64,128,256"]  # fmt: skip
    assert main([*argv, "--json", str(report), "--html", str(page), "--quiet"]) == 0
    return page, json.loads(report.read_text(encoding="utf-8"))


def test_the_comparison_page_draws_nu_changes_then_each_output_that_moved(comparison):
    page, report = comparison
    parsed = read_page(page.read_text(encoding="utf-8"))
    assert not parsed.problems and not parsed.external and parsed.scripts == 0
    with_changes = [o["name"] for o in report["outputs"] if o.get("total_index_change")]
    assert with_changes  # the retrained surrogate moves some inputs at any seed
    assert parsed.titles() == [NU_CHANGES_TITLE, *(input_changes_title(n) for n in with_changes)]
    assert "not a safety validation" in parsed.text and "Kendall τ" in parsed.text


def test_the_advice_page_draws_pre_integration_gain_and_freezing_per_output(advice):
    page, report = advice
    parsed = read_page(page.read_text(encoding="utf-8"))
    assert not parsed.problems and not parsed.external and parsed.scripts == 0
    expected = []
    for o in report["outputs"]:
        if o["preintegrate"]:
            expected.append(f"Pre-integration of {o['name']}: mean dimension ν and variance before and after")
        if o["rqmc_gain"] and o["rqmc_gain"]["rows"]:
            expected.append(f"RQMC gain for {o['name']}: variance of the mean estimate against the number of points")
        if o["freeze_group"]:
            expected.append(f"in {o['name']}: measured error against its bound")
    titles = parsed.titles()
    assert len(titles) == len(expected) >= 2
    for title, want in zip(titles, expected, strict=True):
        assert title.startswith(want) or title.endswith(want)


@needs_browser
@pytest.mark.parametrize("which", ["comparison", "advice"])
def test_a_browser_shows_the_comparison_and_advice_pages_offline(which, request):
    page, _ = request.getfixturevalue(which)
    visit = open_page(BROWSER, page, 1200, 1600)
    assert visit.returncode == 0 and visit.screenshot.startswith(b"\x89PNG")
    assert visit.console == [] and visit.requests == []


@pytest.mark.parametrize("command", ["slopes", "simplify"])
def test_slopes_and_simplify_write_a_page_of_their_tables(command, tmp_path):
    """Every command that takes --html writes a self-contained page (these two: tables, no charts yet)."""
    page = tmp_path / f"{command}.html"
    argv = [command, str(ZOO / "greenhouse_v1.onnx"), "--inputs", str(ZOO / "greenhouse_v1.toml"), *SMALL]
    if command == "simplify":
        argv += ["--integrate", "vent_opening", "--out", str(tmp_path / "simple.onnx")]
    assert main([*argv, "--no-save", "--html", str(page), "--quiet"]) == 0
    parsed = read_page(page.read_text(encoding="utf-8"))
    assert not parsed.problems and not parsed.external and parsed.scripts == 0
    assert parsed.titles() == [] and "not a safety validation" in parsed.text
    assert "vent_opening" in parsed.text
