"""report.html of a toleranced trade: the "How sure is the margin" subsection, the basis line, the tornado.

The promises: when best.json has tolerances, the page shows the margin basis the search used and what
it means, the margin statistics, the toleranced terms and the sensitivity ranking with best.json's
values at the precision shown, a line saying the required margin applies to the chosen statistic (a
basis other than nominal), and the tornado as inline SVG; ``tradeopt report DIR`` re-renders the same
bytes; without tolerances none of it appears and the figures keep their numbers.

Reference values, by hand from the tolerances of the scenario below (moments of the uniform and normal
distributions, any probability reference, e.g. scipy.stats ``uniform`` and ``norm``; a gaussian term has
its tolerances at 3 sigma, tradeopt.physics.tolerances):
tx_power_dbw uniform on [-1.0, +0.5]: mean (0.5 - 1.0) / 2 = -0.25 dB, variance 1.5^2 / 12 = 0.1875 dB^2;
gt_dbk gaussian, A = 0.8, F = 0.3: mean (0.3 - 0.8) / 2 = -0.25 dB, variance (1.1 / 6)^2 = 0.033611 dB^2.
So mean = nominal - 0.5, sigma = sqrt(0.221111) = 0.470225, adverse = nominal - 1.8, favourable = nominal + 0.8;
sensitivity: tx_power_dbw swing 1.5 dB above gt_dbk 1.1 dB.
"""
from __future__ import annotations

import json
import math
import re
from html import unescape
from html.parser import HTMLParser
from pathlib import Path

import pytest

from tradeopt.cli import main
from tradeopt.inputs.scenario import load_scenario
from tradeopt.outputs import report_html as rh
from tradeopt.outputs.report import build_files
from tradeopt.outputs.writer import write_results
from tradeopt.trade.optimize import optimize

pytestmark = pytest.mark.slow  # each fixture runs a whole trade of the geostationary example (about 5 to 10 s)
ROOT = Path(__file__).resolve().parents[2]
EXAMPLE = ROOT / "examples" / "geostationary_link.toml"
TOLERANCES = """
[tolerances]
tx_power_dbw = { adverse_db = 1.0, favorable_db = 0.5, distribution = "uniform" }
gt_dbk = { adverse_db = 0.8, favorable_db = 0.3, distribution = "gaussian" }
"""
SIGMA_DB = math.sqrt(1.5**2 / 12 + (1.1 / 6) ** 2)
HEADING = "How sure is the margin"


class Rows(HTMLParser):
    """The page's table rows by their data attribute (``data-stat``, ``data-tolerance``, ``data-sensitivity``):
    the texts of the row's cells, its class; the figures (caption text, svg attributes); every element id."""

    def __init__(self, text: str):
        super().__init__(convert_charrefs=True)
        self.rows: dict[str, dict[str, dict]] = {}
        self.ids: list[str] = []
        self.figures: list[dict] = []
        self._row: dict | None = None
        self._cell: list[str] | None = None
        self._figure: dict | None = None
        self._caption: list[str] | None = None
        self.feed(text)
        self.close()

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if "id" in a:
            self.ids.append(a["id"])
        if tag == "tr":
            kind = next((k for k in ("data-stat", "data-tolerance", "data-sensitivity") if k in a), None)
            if kind:
                self._row = {"cells": [], "class": a.get("class", "")}
                self.rows.setdefault(kind, {})[a[kind]] = self._row
        elif tag in ("th", "td") and self._row is not None:
            self._cell = []
        elif tag == "figure":
            self._figure = {"svg": None, "caption": ""}
            self.figures.append(self._figure)
        elif tag == "svg" and self._figure is not None and self._figure["svg"] is None:
            self._figure["svg"] = a
        elif tag == "figcaption":
            self._caption = []

    def handle_endtag(self, tag):
        if tag in ("th", "td") and self._cell is not None and self._row is not None:
            self._row["cells"].append(" ".join("".join(self._cell).split()))
            self._cell = None
        elif tag == "tr":
            self._row = None
        elif tag == "figcaption" and self._figure is not None and self._caption is not None:
            self._figure["caption"] = " ".join("".join(self._caption).split())
            self._caption = None
        elif tag == "figure":
            self._figure = None

    def handle_data(self, data):
        if self._cell is not None:
            self._cell.append(data)
        if self._caption is not None:
            self._caption.append(data)


def _text(html: str) -> str:
    """The page's visible text, SVG and markup left out, whitespace folded."""
    html = re.sub(r"<svg.*?</svg>", " ", html, flags=re.S)
    html = re.sub(r"<style>.*?</style>", " ", html, flags=re.S)
    html = re.sub(r"</?(?:strong|span|code|a|em)\b[^>]*>", "", html)  # inline elements: no word break
    return " ".join(unescape(re.sub(r"<[^>]+>", " ", html)).split())


def _close(shown: str, value: float) -> bool:
    """A number on the page equals ``value`` at the precision shown."""
    decimals = len(shown.split(".")[1]) if "." in shown else 0
    return abs(float(shown.replace(",", "")) - value) <= 0.5 * 10**-decimals + 1e-9


def _scenario_file(folder: Path, *, tolerances: bool) -> Path:
    text = EXAMPLE.read_text(encoding="utf-8")
    if tolerances:
        line = "required_margin_db = 2.0"
        assert text.count(line) == 1
        text = text.replace(line, 'margin_basis = "mean-2sigma"\n' + line) + TOLERANCES
    path = folder / "geo.toml"
    path.write_text(text, encoding="utf-8")
    return path


def _run(folder: Path, *, tolerances: bool) -> tuple[dict, Path]:
    sc = load_scenario(_scenario_file(folder, tolerances=tolerances))
    files = build_files(optimize(sc), "results/geo", plots=False, report=True)
    return files, write_results(folder / "run", files)


@pytest.fixture(scope="module")
def toleranced(tmp_path_factory):
    return _run(tmp_path_factory.mktemp("tol"), tolerances=True)


@pytest.fixture(scope="module")
def plain(tmp_path_factory):
    return _run(tmp_path_factory.mktemp("plain"), tolerances=False)


def test_margin_statistics_shown_are_best_jsons_and_the_hand_computed_ones(toleranced):
    # Catches: a statistic taken from the wrong key, a stale or recomputed number that disagrees with best.json,
    # the 'above required' column against the wrong level, the basis row not marked, or a missing statistic.
    files, _ = toleranced
    best = json.loads(files["best.json"])
    st, required = best["margin_statistics"], best["inputs"]["required_margin_db"]
    assert best["margin_basis"] == "mean-2sigma" and required == 2.0
    rows = Rows(files["report.html"]).rows["data-stat"]
    assert list(rows) == ["nominal_db", "mean_db", "sigma_db", "mean_minus_2sigma_db", "mean_minus_3sigma_db",
                          "adverse_db", "favorable_db"]
    nominal = best["best"]["margin_db"]
    by_hand = {"nominal_db": nominal, "mean_db": nominal - 0.5, "sigma_db": SIGMA_DB,
               "mean_minus_2sigma_db": nominal - 0.5 - 2 * SIGMA_DB, "mean_minus_3sigma_db": nominal - 0.5 - 3 * SIGMA_DB,
               "adverse_db": nominal - 1.8, "favorable_db": nominal + 0.8}
    for key, row in rows.items():
        _, shown, over = row["cells"]
        assert _close(shown, st[key]), (key, shown)
        assert _close(shown, by_hand[key]), (key, shown)
        if key == "sigma_db":
            assert over == "\u2013"
        else:
            assert _close(over, st[key] - required), (key, over)
    assert rows["mean_minus_2sigma_db"]["class"] == "strong" and "(the basis)" in rows["mean_minus_2sigma_db"]["cells"][0]
    assert [k for k, r in rows.items() if r["class"] == "strong"] == ["mean_minus_2sigma_db"]


def test_basis_its_meaning_and_the_required_margin_line(toleranced):
    # Catches: the basis missing or unexplained, or no statement that the required margin applies to the chosen
    # statistic (a reader would compare the nominal margin of the budget tables with the required margin).
    files, _ = toleranced
    best = json.loads(files["best.json"])
    text = _text(files["report.html"])
    assert HEADING in text
    assert "Margin basis of the search: mean-2sigma: the required margin applies to the mean margin less two " \
           "standard deviations" in text
    line = (f"The required margin of 2 dB applies to the margin's mean-2sigma value "
            f"({best['margin_statistics']['mean_minus_2sigma_db']:.2f} dB for the recommended design; nominal "
            f"{best['margin_statistics']['nominal_db']:.2f} dB), not to the nominal margin the budget tables show.")
    assert text.count(line) == 2  # in the verdict at the top and under the margins of the recommendation
    verdict = files["report.html"].split('<div class="verdict', 1)[1].split("</div>", 1)[0]
    assert "applies to the margin&#39;s mean-2sigma value" in verdict


def test_toleranced_terms_and_sensitivity_ranking(toleranced):
    # Catches: a term's tolerances, distribution or moments shown from the wrong term, a variance rounded to
    # nothing, or the sensitivity ranking not in best.json's order (largest swing first).
    files, _ = toleranced
    best = json.loads(files["best.json"])
    rows = Rows(files["report.html"]).rows
    terms = rows["data-tolerance"]
    assert list(terms) == [t["term"] for t in best["tolerances"]] == ["tx_power_dbw", "gt_dbk"]
    expect = {"tx_power_dbw": (1.0, 0.5, "uniform", -0.25, 0.1875), "gt_dbk": (0.8, 0.3, "gaussian", -0.25, (1.1 / 6) ** 2)}
    for term, (a, f, dist, mean, var) in expect.items():
        name, shown_a, shown_f, shown_dist, shown_mean, shown_var = terms[term]["cells"]
        assert name == term and shown_dist == dist
        assert _close(shown_a, a) and _close(shown_f, f) and _close(shown_mean, mean) and _close(shown_var, var)
        assert float(shown_var) > 0
    sens = rows["data-sensitivity"]
    assert list(sens) == [r["term"] for r in best["sensitivity"]] == ["tx_power_dbw", "gt_dbk"]
    nominal = best["best"]["margin_db"]
    for (term, row), (lo, hi) in zip(sens.items(), [(nominal - 1.0, nominal + 0.5), (nominal - 0.8, nominal + 0.3)]):
        _, shown_lo, shown_hi, swing = row["cells"]
        assert _close(shown_lo, lo) and _close(shown_hi, hi) and _close(swing, hi - lo), term


def test_the_tornado_is_inline_svg_and_the_figures_are_renumbered(toleranced):
    # Catches: the tornado missing from the page or embedded as a raster or a link to tornado.png, an svg without
    # an accessible name, ids shared with another figure, or two figures with the same number.
    files, _ = toleranced
    page = Rows(files["report.html"])
    captions = [f["caption"] for f in page.figures]
    assert [re.match(r"Figure (\d+)\.", c).group(1) for c in captions] == ["1", "2", "3", "4", "5", "6"]
    (tornado,) = [f for f in page.figures if f["caption"].startswith("Figure 4. Tornado")]
    assert tornado["svg"]["role"] == "img" and "toleranced term" in tornado["svg"]["aria-label"]
    assert "tornado.png" not in files["report.html"] and "<img" not in files["report.html"]
    assert any(i.startswith("tradeopt-report-tornado-") for i in page.ids)
    assert len(page.ids) == len(set(page.ids))
    assert "Figure 5. Margin against elevation" in captions[4] and "Figure 6. Total atmospheric" in captions[5]


def test_report_command_re_renders_the_same_bytes(toleranced, capsys):
    # Catches: a subsection or tornado built from something other than the folder's files (the live trade, a
    # random id, the clock): 'tradeopt report DIR' would then write different bytes.
    files, folder = toleranced
    (folder / "report.html").write_text("stale", encoding="utf-8")
    assert main(["report", str(folder)]) == 0
    capsys.readouterr()
    assert (folder / "report.html").read_bytes() == files["report.html"].encode("utf-8")
    assert rh.report_html(rh.read_results_folder(folder)) == files["report.html"]


def test_the_page_reads_its_numbers_from_best_json(toleranced):
    # Catches: statistics recomputed from the tolerances or carried over from another render instead of read from
    # best.json (an archived folder would then show numbers it does not hold).
    files, _ = toleranced
    best = json.loads(files["best.json"])
    best["margin_statistics"] = {k: 7.1 if k != "sigma_db" else 0.4 for k in best["margin_statistics"]}
    best["sensitivity"][0]["swing_db"] = 9.9
    page = Rows(rh.report_html({**files, "best.json": json.dumps(best)}))
    shown = {k: tuple(r["cells"][1:]) for k, r in page.rows["data-stat"].items()}
    assert shown.pop("sigma_db") == ("0.40", "\u2013")
    assert set(shown.values()) == {("7.10", "5.10")}
    assert page.rows["data-sensitivity"]["tx_power_dbw"]["cells"][3] == "9.90"


def test_a_nominal_basis_says_the_tolerances_are_for_information_only(toleranced):
    # Catches: the 'applies to the chosen statistic' line shown for a nominal basis, where the search used the
    # nominal margin, or the basis row not following the basis.
    files, _ = toleranced
    best = json.loads(files["best.json"])
    best["margin_basis"] = "nominal"
    html = rh.report_html({**files, "best.json": json.dumps(best)})
    text = _text(html)
    assert HEADING in text and "Margin basis of the search: nominal:" in text and "for information only" in text
    assert "applies to the margin's" not in text
    rows = Rows(html).rows["data-stat"]
    assert [k for k, r in rows.items() if r["class"] == "strong"] == ["nominal_db"]


def test_without_tolerances_there_is_no_such_section(plain, toleranced):
    # Catches: the subsection, the basis line or a tornado shown with empty or stale numbers for a trade without
    # tolerances, or the figures renumbered when there is no tornado.
    for html in (plain[0]["report.html"],
                 rh.report_html({**toleranced[0], "best.json": json.dumps(
                     {k: v for k, v in json.loads(toleranced[0]["best.json"]).items()
                      if k not in ("margin_basis", "margin_statistics", "tolerances", "sensitivity")})})):
        text = _text(html)
        assert HEADING not in text and "margin basis" not in text.lower() and "applies to the margin's" not in text
        page = Rows(html)
        assert page.rows == {} and "tolerances" not in page.ids
        assert not any(i.startswith("tradeopt-report-tornado") for i in page.ids)
        assert [re.match(r"Figure (\d+)\.", f["caption"]).group(1) for f in page.figures] == ["1", "2", "3", "4", "5"]
        assert "Figure 4. Margin against elevation" in page.figures[3]["caption"]
    assert "margin_statistics" not in json.loads(plain[0]["best.json"])
