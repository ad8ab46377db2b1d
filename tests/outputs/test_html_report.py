"""Tests of report.html (tradeopt.outputs.report_html): what the page promises, read back from the page.

The promises (issue #10, README "report.html"): the page parses; its ten sections are there with
their headings; every number of the budget tables equals best.json at the precision shown; the
best design's IDs, each required site and the cautions appear; nothing outside the page is
referenced; text from the scenario is escaped; the same files give the same bytes, whether the page
is built by ``optimize`` or re-rendered from the folder; an archived folder without the newer
best.json keys still renders.
"""
from __future__ import annotations

import dataclasses
import json
import re
from html.parser import HTMLParser
from pathlib import Path

import pytest

from tradeopt.inputs.scenario import load_scenario, scenario_from_dict
from tradeopt.outputs import report_html as rh
from tradeopt.outputs.report import CAUTIONS, build_files
from tradeopt.outputs.writer import write_results
from tradeopt.trade.optimize import optimize

# The shared fixtures run a trade and draw five SVG figures (about 6 s): every test here that uses them is slow.
HOSTILE = "<script>alert(1)</script><b>x</b>"

# An invented quick scenario: fixed range (no propagation), three bands, two sites; the S band is given a
# 1 MHz limit so that it has no feasible design (its closest miss must be shown). Markup in the
# scenario's name, description and a site's name must come out as text.
SCENARIO = {
    "scenario": {"name": "html-check " + HOSTILE, "description": "Invented check. " + HOSTILE,
                 "availability_percent": 99.5, "required_margin_db": 3.0, "bands": ["S-DOWN", "X-DOWN", "KA-DOWN"]},
    "orbit": {"range_m": 2.0e6},
    "requirement": {"rate_bps": 50e6},
    "spacecraft": {"max_comm_mass_kg": 12.0, "max_dc_power_w": 200.0},
    "options": {"modcods": ["DVBS2-QPSK-12", "DVBS2-8PSK-23", "DVBS2-16APSK-34"], "dish_curve_step_m": 0.5},
    "bandwidth_limits_hz": {"S-DOWN": 1e6},
    "sites": [{"id": "vellum-cove", "name": "Vellum Cove " + HOSTILE, "latitude_deg": 41.0, "longitude_deg": 2.0,
               "altitude_m": 100.0, "min_elevation_deg": 10.0},
              {"id": "tarn-ridge", "name": "Tarn Ridge", "latitude_deg": 61.0, "longitude_deg": 10.0,
               "altitude_m": 300.0, "min_elevation_deg": 15.0}],
}
VOID = {"area", "base", "br", "col", "embed", "hr", "img", "input", "link", "meta", "source", "track", "wbr"}


class Page(HTMLParser):
    """A strict reading of the page: every element closed in order, with its attributes and text kept."""

    def __init__(self, text: str):
        super().__init__(convert_charrefs=True)
        self.stack: list[str] = []
        self.elements: list[tuple[str, dict, tuple[str, ...]]] = []  # (tag, attributes, open ancestors)
        self.text_by_element: dict[int, list[str]] = {}
        self.open_index: list[int] = []
        self.texts: list[str] = []
        self.comments = 0
        self.feed(text)
        self.close()
        assert self.stack == [], f"unclosed elements: {self.stack}"

    def handle_starttag(self, tag, attrs):
        self.elements.append((tag, dict(attrs), tuple(self.stack)))
        if tag not in VOID:
            self.stack.append(tag)
            self.open_index.append(len(self.elements) - 1)

    def handle_startendtag(self, tag, attrs):
        self.elements.append((tag, dict(attrs), tuple(self.stack)))

    def handle_endtag(self, tag):
        if tag in VOID:
            return
        assert self.stack and self.stack[-1] == tag, f"</{tag}> closes {self.stack[-1:]}"
        self.stack.pop()
        self.open_index.pop()

    def handle_data(self, data):
        self.texts.append(data)
        for i in self.open_index:
            self.text_by_element.setdefault(i, []).append(data)

    def handle_comment(self, data):
        self.comments += 1

    def text_of(self, index: int) -> str:
        return "".join(self.text_by_element.get(index, [])).strip()

    def find(self, tag: str, **attrs) -> list[int]:
        return [i for i, (t, a, _) in enumerate(self.elements)
                if t == tag and all(a.get(k) == v for k, v in attrs.items())]

    def descendants(self, index: int) -> list[tuple[str, dict]]:
        depth = len(self.elements[index][2])
        out = []
        for tag, attrs, ancestors in self.elements[index + 1:]:
            if len(ancestors) <= depth:
                break
            out.append((tag, attrs))
        return out

    @property
    def text(self) -> str:
        return " ".join(" ".join(self.texts).split())


@pytest.fixture(scope="module")
def trade():
    return optimize(scenario_from_dict(SCENARIO, file="html-check.toml"))


@pytest.fixture(scope="module")
def files(trade):
    return build_files(trade, "results/html-check", plots=False, report=True)


@pytest.fixture(scope="module")
def page(files):
    return Page(files["report.html"])


@pytest.fixture(scope="module")
def best(files):
    return json.loads(files["best.json"])


@pytest.mark.slow
def test_the_page_parses_and_has_its_ten_sections_in_order(page, files):
    # Catches: a template edit that leaves an element unclosed or misnested (Page asserts it), a section
    # dropped or reordered, or a heading structure with several h1 or a section without its h2.
    assert files["report.html"].startswith("<!DOCTYPE html>\n<html lang=\"en\">")
    assert len(page.find("h1")) == 1
    sections = [a["id"] for t, a, _ in page.elements if t == "section"]
    assert sections == [sid for sid, _ in rh.SECTION_TITLES]
    for sid, title in rh.SECTION_TITLES:
        (h2,) = page.find("h2", id=f"h-{sid}")
        assert page.text_of(h2) == title
        assert "section" in page.elements[h2][2]


@pytest.mark.slow
def test_every_budget_number_equals_best_json_at_the_precision_shown(page, best):
    # Catches: a budget cell taken from the wrong site or term, a unit scale applied twice or not at all,
    # or rounding to fewer decimals than shown (the page would then disagree with best.json).
    by_site = best["budgets_by_site"]
    assert set(by_site) == {"vellum-cove", "tarn-ridge"}
    cells = 0
    for row in page.find("tr"):
        _, attrs, _ = page.elements[row]
        if "data-term" not in attrs:
            continue
        term, scale = attrs["data-term"], float(attrs["data-scale"])
        for i in range(row + 1, len(page.elements)):
            tag, a, ancestors = page.elements[i]
            if tag == "tr":
                break
            if tag != "td" or "data-site" not in a:
                continue
            shown = page.text_of(i)
            value = by_site[a["data-site"]][term]
            if value is None:
                assert shown == "n/a"
                continue
            decimals = len(shown.split(".")[1]) if "." in shown else 0
            assert abs(float(shown.replace(",", "")) - value / scale) <= 0.5 * 10 ** -decimals + 1e-9, (term, shown)
            cells += 1
    assert cells >= 2 * 30  # every term at both sites


@pytest.mark.slow
def test_the_best_design_each_required_site_and_the_cautions_appear(page, trade):
    # Catches: a recommendation section that loses an ID of the best design, a required site left out of
    # the margin or budget tables, or cautions missing from the page (they are part of every output).
    text = page.text
    b = trade.best
    for design_id in b.ids:
        assert design_id in text
    site_headers = {a.get("data-site") for t, a, _ in page.elements if t == "th" and "data-site" in a}
    assert site_headers == {s.id for s in trade.scenario.sites if s.required}
    for caution in CAUTIONS:
        assert " ".join(caution.split()) in text
    assert "none feasible" in text and "S-DOWN" in text  # the band with no feasible design, with its closest miss
    assert "bandwidth over by" in text


@pytest.mark.slow
def test_nothing_outside_the_page_is_referenced(page, files):
    # Catches: a template or figure that links a stylesheet, font, script or image from the network (the
    # page must read offline), or any script at all (the page reads fully without one).
    for tag, attrs, _ in page.elements:
        assert tag not in ("script", "link", "iframe", "object", "embed", "img"), tag
        for key in ("src", "href", "xlink:href", "action", "data"):
            value = (attrs.get(key) or "").strip().lower()
            assert not value.startswith(("http:", "https:", "//", "ftp:")), (tag, key, value)
            if key == "href" and value:
                assert value.startswith("#"), value
    style = "".join(re.findall(r"<style>(.*?)</style>", files["report.html"], flags=re.S))
    assert "@import" not in style and "url(" not in style


@pytest.mark.slow
def test_markup_from_the_scenario_is_shown_as_text(page, files):
    # Catches: autoescaping switched off or bypassed (a `|safe` or Markup on scenario text): the script
    # would run and the <b> would render.
    raw = files["report.html"]
    assert "<script>alert(1)</script>" not in raw and "<b>x</b>" not in raw
    assert "&lt;script&gt;alert(1)&lt;/script&gt;&lt;b&gt;x&lt;/b&gt;" in raw
    assert HOSTILE in page.text  # read back as text: the description, the name and the site's name
    assert page.text.count(HOSTILE) >= 3
    assert not page.find("b")


@pytest.mark.slow
def test_figures_are_inline_svg_with_captions_and_text_alternatives(page):
    # Catches: a figure without a caption or an accessible name, or svg ids shared between figures (two
    # inline figures with the same marker or clip-path id draw each other's shapes).
    figures = page.find("figure")
    assert len(figures) == 5  # bands, dish curve, Pareto front, margin, attenuation
    for f in figures:
        inner = page.descendants(f)
        tags = [t for t, _ in inner]
        assert "svg" in tags and "figcaption" in tags
        svg = dict(inner)["svg"]
        assert svg["role"] == "img" and len(svg["aria-label"]) > 40
    ids = [a["id"] for _, a, _ in page.elements if "id" in a]
    assert len(ids) == len(set(ids))
    for table in page.find("table"):
        after = page.elements[table + 1:]
        assert any(t == "th" for t, _, _ in after[:200])  # header cells
        assert after[0][0] == "caption"


@pytest.mark.slow
def test_print_stylesheet_keeps_rows_and_figures_whole():
    # Catches: a print stylesheet lost from the template (the browser's print to PDF would cut table rows
    # and figures and drop the repeated table headers and page numbers).
    template = (Path(rh.__file__).parent / "templates" / "report.html.j2").read_text(encoding="utf-8")
    style = template.split("@media print", 1)[1]
    assert "@page" in template and "counter(page)" in template
    assert re.search(r"tr,[^{]*figure[^{]*\{[^}]*break-inside: avoid", style)
    assert "thead { display: table-header-group; }" in style


@pytest.mark.slow
def test_the_same_files_give_the_same_bytes_and_the_folder_re_renders_them(files, tmp_path):
    # Catches: a time stamp, a random SVG id or a set order in the page (two renders would differ), or a
    # page that needs the live trade (re-rendering from the written folder would then differ or fail).
    again = rh.report_html({k: v for k, v in files.items() if k != "report.html"})
    assert again == files["report.html"]
    folder = write_results(tmp_path / "run", files)
    assert rh.report_html(rh.read_results_folder(folder)) == files["report.html"]


@pytest.mark.slow
def test_an_archived_folder_without_the_newer_best_json_keys_still_renders(files):
    # Catches: a page that fails on a results folder written before best.json held the scenario's inputs,
    # the closest misses by band and the best design of each band.
    best = json.loads(files["best.json"])
    for key in ("inputs", "closest_by_band", "best_by_band"):
        best.pop(key)
    old = {k: v for k, v in files.items() if k not in ("report.html", "designs.csv")}
    old["best.json"] = json.dumps(best)
    page = Page(rh.report_html(old))
    assert "not recorded" in page.text
    assert "too large to keep every design" in page.text  # no designs.csv: no counts by constraint


@pytest.mark.slow
def test_a_trade_with_no_feasible_design_still_gives_a_page(trade):
    # Catches: a page that assumes a best design (budget, dish choice, runner-up) and fails when nothing closes.
    res = optimize(dataclasses.replace(trade.scenario, max_comm_mass_kg=0.01))
    assert res.best is None
    page = Page(build_files(res, "x", plots=False, report=True)["report.html"])
    assert "No design keeps every constraint." in page.text
    assert "No budget: no design is feasible." in page.text
    assert "mass over by" in page.text


@pytest.mark.slow
def test_default_scenario_page_is_under_5_mib_and_complete(tmp_path):
    # Catches: a figure that embeds every design point by point or a raster at print resolution (the
    # page would grow past 5 MiB), and sections that stay empty on the full default scenario (demand,
    # contacts, volume, storage, ground network).
    res = optimize(load_scenario(None))
    files = build_files(res, "results/cinder-lark", plots=False, report=True)
    html = files["report.html"]
    assert len(html.encode("utf-8")) < 5 * 2**20
    page = Page(html)
    text = page.text
    for words in ("Data demand, step by step", "all sites (union)", "Storage fits.", "Cheapest ground network",
                  "a variable rate", "Designs rejected, by band"):
        assert words in text, words
    for site in res.scenario.sites:
        assert site.id in text
    # The default scenario has a warning (its 7-day contact window against the ground-track cycle):
    # the verdict at the top says so and links to it. Catches: a warning only at the foot of the page,
    # under a verdict that reads as unqualified.
    verdict = page.find("div", **{"class": "verdict verdict-success"})
    assert len(verdict) == 1
    assert ("a", {"href": "#warnings"}) in page.descendants(verdict[0])
    assert len(page.find("h3", id="warnings")) == 1
    assert "the rate is sized on 76.0 min/day" in text


def test_each_constraint_sentence_is_counted_under_its_own_constraint():
    # Catches: a constraint whose reason sentence in designs.csv no longer starts with the words the report
    # counts it by (its rejections would be counted under "other"), or a new constraint without a column.
    from tradeopt.trade.constraints import CONSTRAINTS

    import pandas as pd

    reasons = []
    for c in CONSTRAINTS:
        reasons.append(c.reason.format(value="1", limit="2", excess="3", where="required at site-a"))
    designs = pd.DataFrame({"band_id": ["B"] * (len(reasons) + 1), "reason": [*reasons, "feasible"]})
    counts = rh.rejection_counts(designs)
    (row,) = counts["rows"]
    assert row["feasible"] == 1 and row["total"] == len(reasons) + 1
    assert [k for k, _ in counts["columns"]] == [c.name for c in CONSTRAINTS]
    assert all(row[c.name] == 1 for c in CONSTRAINTS)


def test_the_template_ships_in_the_package_data():
    # Catches: a template that is not matched by pyproject's package-data globs (an installed tradeopt
    # would then fail to write report.html).
    import fnmatch
    import tomllib

    root = Path(rh.__file__).resolve().parents[2]
    globs = tomllib.loads((root / "pyproject.toml").read_text(encoding="utf-8"))["tool"]["setuptools"]["package-data"]
    templates = sorted((Path(rh.__file__).parent / "templates").iterdir())
    assert templates
    for path in templates:
        rel = path.relative_to(root / "tradeopt").as_posix()
        assert any(fnmatch.fnmatch(rel, g) for g in globs["tradeopt"]), rel


def test_rates_and_bandwidths_are_shown_with_a_prefix_that_fits():
    # Catches: a deep-space rate shown as "0.002 Mbit/s" or an occupied bandwidth as "0.003432 MHz" (the
    # page would hide the figure the reviewer needs in leading zeros).
    assert rh._rate(2000.0) == "2 kbit/s"
    assert rh._rate(580384868.5) == "580.4 Mbit/s"
    assert rh._rate(150.0) == "150 bit/s"
    assert rh._hz(3432.0) == "3.432 kHz"
    assert rh._hz(1.5e9) == "1.5 GHz"
