"""Tests of engine.outputs.report (the offline HTML report) and engine.outputs.export (xlsx and zip of CSVs)."""

from __future__ import annotations

import base64
import csv
import gzip
import io
import json
import re
import zipfile
from html.parser import HTMLParser

import numpy as np
import openpyxl
import pandas as pd
import pytest
from plotly.offline import get_plotlyjs_version

from engine.outputs.export import MAX_SHEET_NAME, tables_csv_zip, tables_xlsx
from engine.outputs.figures import format_value, kpi_table
from engine import cautions
from engine.outputs.htmlpack import (
    PLOTLY_JS_FILE,
    PLOTLY_JS_VERSION,
    bundle_trace_types,
    compact,
    pack,
    read_figures,
    read_plotly_js,
    unpack,
)
from engine.outputs.report import html_report
from engine.model.results import RunResult
from tests.offline_browser import offline_page
from test_figures import TECHNOLOGIES, synthetic_result, two_runs
from test_maps import result_with_wells, synthetic_scenario

EVIL_RUN = "<img src=x onerror=alert(1)>"


class _Resources(HTMLParser):
    """Collects every tag's attributes, the text of <style> elements and the text outside scripts."""

    def __init__(self):
        super().__init__(convert_charrefs=True)
        self.tags: list[tuple[str, dict]] = []
        self.styles: list[str] = []
        self._in_style = False

    def handle_starttag(self, tag, attrs):
        self.tags.append((tag, dict(attrs)))
        self._in_style = tag == "style"

    def handle_endtag(self, tag):
        if tag == "style":
            self._in_style = False

    def handle_data(self, data):
        if self._in_style:
            self.styles.append(data)


@pytest.fixture(scope="module")
def report():
    runs = {"reference": result_with_wells(), EVIL_RUN: result_with_wells(heat_pump_kw=(250.0, 300.0),
                                                                             cost_case="high_co2")}
    return runs, html_report(runs, synthetic_scenario(), TECHNOLOGIES, title="Plan <b>for</b> town")


def test_report_loads_nothing_from_outside(report):
    """No tag loads a resource by URL: no src/href/srcset/data on script, link, img, iframe, object, and no
    url()/@import in styles (HTML Living Standard: these are the attributes that fetch; a report that opens
    offline must carry everything inline)."""
    _, html = report
    parser = _Resources()
    parser.feed(html)
    fetching = []
    for tag, attrs in parser.tags:
        for name in ("src", "href", "srcset", "data", "poster", "action"):
            value = (attrs.get(name) or "").strip().lower()
            if value and not value.startswith("#"):
                fetching.append((tag, name, value))
    assert fetching == []
    assert not any("url(" in s or "@import" in s for s in parser.styles)
    scripts = [a for t, a in parser.tags if t == "script"]
    assert len(scripts) >= 3 and all("src" not in a for a in scripts)
    # the inline bundle is exactly the vendored plotly.js (gzip RFC 1952, base64 RFC 4648; decoded by the standard
    # library), and the figures are packed the same way
    assert read_plotly_js(html) == PLOTLY_JS_FILE.read_text(encoding="utf-8")
    assert read_figures(html)
    outside_bundle = re.sub(r"<script type='application/gzip;base64' id='[a-z-]+'>[A-Za-z0-9+/=]+</script>", "", html)
    for text in ('src="http', "src='http", 'href="http', "href='http", "src=http"):
        assert text not in outside_bundle


def test_report_embeds_plotly_once_and_every_figure(report):
    """plotly.js is inline exactly once; every figure has its placeholder and its packed specification."""
    runs, html = report
    assert html.count("id='heatmosaic-plotly'") == 1 and html.count("window.PlotlyConfig") == 1
    # cost by run, cost by district, supply mix, per run district supply + load curve, load duration
    figures = read_figures(html)
    assert len(figures) == 3 + 2 * len(runs) + 1
    for spec in figures:
        assert html.count(f"<div id='{spec['id']}' class='plotly-graph-div'") == 1
        assert spec["data"] and spec["config"]["displaylogo"] is False


def test_bundle_is_the_installed_plotlys_version_and_has_every_trace_type_the_summary_draws(report):
    """The vendored partial bundle is the plotly.js version the installed plotly writes figures for
    (``plotly.offline.get_plotlyjs_version``), its header says so, and every trace type of the summary's figures
    (with a heat-plan chapter: tests/test_plan_figures.py) is one it registers."""
    _, html = report
    assert get_plotlyjs_version() == PLOTLY_JS_VERSION
    assert f"* plotly.js (basic - minified) v{PLOTLY_JS_VERSION}\n" in PLOTLY_JS_FILE.read_text(encoding="utf-8")[:200]
    assert bundle_trace_types() == {"bar", "pie", "scatter"}  # the package's README lists these three
    emitted = {trace.get("type", "scatter") for spec in read_figures(html) for trace in spec["data"]}
    assert emitted and emitted <= bundle_trace_types()


def test_figure_numbers_keep_six_significant_digits():
    """compact() rounds to 6 significant digits (more than any hover label shows), keeps integers, text and
    missing values (None, as plotly's own JSON writes NaN) and reads numpy arrays; values checked by hand."""
    values = compact({"x": np.array([1234567.891, 0.000123456789, -2.5, np.nan]), "y": (3.0, "a"), "n": np.int64(4)})
    assert values == {"x": [1234570, 0.000123457, -2.5, None], "y": [3, "a"], "n": 4}
    assert json.loads(unpack(pack(b'{"a": 1}'))) == {"a": 1}
    assert gzip.decompress(base64.b64decode(pack(b"same"))) == b"same"  # RFC 1952 and RFC 4648 via the stdlib


def test_report_holds_every_runs_kpis_formatted_as_in_the_kpi_table(report):
    runs, html = report
    kpi = kpi_table(runs, TECHNOLOGIES)
    for _, row in kpi.iterrows():
        for column in ("total cost [€/a]", "CO2 [t/a]", "levelised cost [€/MWh]", "unserved heat [MWh/a]"):
            assert f">{format_value(row[column], column)}<" in html
    assert cautions.RESULTS in html
    assert "screening estimate" in html


def test_report_escapes_run_title_and_district_names(report):
    """User-supplied names appear only escaped (OWASP XSS prevention cheat sheet, rule 1, common practice)."""
    _, html = report
    assert EVIL_RUN not in html and "onerror=alert(1)>" not in html
    assert "&lt;img src=x onerror=alert(1)&gt;" in html
    assert "Plan &lt;b&gt;for&lt;/b&gt; town" in html and "Plan <b>for</b>" not in html
    assert "<script>alert(1)</script>" not in html
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in html


def test_report_states_the_assumptions(report):
    """Settings and cost-case parameters of each run are printed: objective, CO2 cap, typical days, discount
    rate, reinjection window, CO2 price of the case (values of the fixture and of synthetic_scenario)."""
    _, html = report
    for text in ("lowest cost", "2 typical days", ">5.00<", "4.5 to 20.0", ">250<", ">100<", "none"):
        assert text in html


def test_report_with_a_failed_run_says_so():
    runs = {"ok": synthetic_result(), "broken": RunResult(status="infeasible", message="The model has no <x>.")}
    html = html_report(runs, synthetic_scenario(), TECHNOLOGIES)
    assert "Run broken: no feasible plan. The model has no &lt;x&gt;." in html
    with pytest.raises(ValueError, match="results"):
        html_report({}, synthetic_scenario())


# -------------------------------------------------------------------------------------------------- export
def test_xlsx_has_a_sheet_per_table_with_the_run_column():
    """The workbook opens with openpyxl (the reference reader); sheet names fit Excel's 31-character limit
    (Microsoft Excel specifications and limits); each table sheet has a first column 'run' and the rows of
    both runs."""
    runs = two_runs()
    runs["a run with a rather long name: =SUM(A1)"] = synthetic_result(cost_case="x")
    book = openpyxl.load_workbook(io.BytesIO(tables_xlsx(runs)), read_only=True)
    expected = ["runs", "kpi", "districts", "supply", "wells", "dispatch", "demand", "well_steps", "steps", "day_map"]
    assert book.sheetnames == expected
    assert all(len(name) <= MAX_SHEET_NAME for name in book.sheetnames)
    rows = list(book["districts"].iter_rows(values_only=True))
    assert rows[0][:3] == ("run", "district_id", "name")
    assert len(rows) == 1 + 2 * len(runs)
    assert rows[-1][0] == "a run with a rather long name: =SUM(A1)"
    dispatch = list(book["dispatch"].iter_rows(values_only=True))
    assert len(dispatch) == 1 + sum(len(r.tables["dispatch"]) for r in runs.values())
    total = next(r for r in book["kpi"].iter_rows(values_only=True) if r[0] == "reference")
    header = next(book["kpi"].iter_rows(values_only=True))
    assert total[header.index("total cost [€/a]")] == pytest.approx(runs["reference"].total_cost_eur_per_a)


def test_xlsx_writes_text_as_text_and_nan_as_empty():
    """A name starting with '=' stays text (no formula is written); NaN becomes an empty cell (common practice
    against spreadsheet formula injection, OWASP 'CSV injection')."""
    result = synthetic_result(names=(("north", "=HYPERLINK(\"x\")"), ("south", "plain")))
    result.tables["districts"].loc[0, "co2_kg_per_mwh"] = np.nan
    book = openpyxl.load_workbook(io.BytesIO(tables_xlsx({"r": result})))
    sheet = book["districts"]
    header = [c.value for c in sheet[1]]
    name_cell = sheet.cell(row=2, column=header.index("name") + 1)
    assert name_cell.data_type == "s" and name_cell.value == "=HYPERLINK(\"x\")"
    assert sheet.cell(row=2, column=header.index("co2_kg_per_mwh") + 1).value is None


def test_csv_zip_round_trips():
    """Each CSV reads back with the csv module (RFC 4180) to the combined table: same rows, same numbers."""
    runs = two_runs()
    archive = zipfile.ZipFile(io.BytesIO(tables_csv_zip(runs)))
    assert {"runs.csv", "kpi.csv", "districts.csv", "dispatch.csv", "day_map.csv"} <= set(archive.namelist())
    rows = list(csv.DictReader(io.StringIO(archive.read("districts.csv").decode("utf-8"))))
    assert [r["run"] for r in rows] == ["reference", "reference", "more heat pumps", "more heat pumps"]
    assert rows[1]["name"] == "<script>alert(1)</script>"
    back = pd.read_csv(io.BytesIO(archive.read("districts.csv")))
    for k, run in enumerate(runs):
        expected = runs[run].tables["districts"]["total_cost_eur_per_a"].to_numpy()
        assert back["total_cost_eur_per_a"].to_numpy()[2 * k : 2 * k + 2] == pytest.approx(expected, rel=1e-12)


# -------------------------------------------------------------------------------------------------- engine output
@pytest.fixture(scope="module")
def solved_tiny_city():
    """The tiny fixture city solved by the engine under two cost cases (about 2 s)."""
    from pathlib import Path

    from engine.scenario import load_scenario
    from engine.model.solve import solve_scenario

    scenario = load_scenario(Path(__file__).parent / "fixtures" / "tiny_city")
    runs = {case: solve_scenario(scenario, cost_case=case) for case in ("reference", "high_co2")}
    assert all(r.solved for r in runs.values())
    return scenario, runs


def test_engine_output_load_curve_balances_and_report_builds(solved_tiny_city):
    """On real engine output: the stacked technologies of every week equal demand - unserved at every hour
    (heat balance, docs/model.md section 4, constraint 1), and the report, map and workbook build."""
    from engine.outputs.figures import load_curve_figure
    from engine.outputs.maps import district_map

    scenario, runs = solved_tiny_city
    result = runs["reference"]
    hourly = result.hourly()
    for week in (1, 26, 52):
        fig = load_curve_figure(result, scenario.technologies, week=week)
        hours = np.asarray(fig.data[0].x)
        unit = 1000.0 if "[MW]" in fig.layout.yaxis.title.text else 1.0
        supplied = sum(np.asarray(t.y, float) for t in fig.data if t.stackgroup and t.name != "Unserved")
        expected = (hourly["demand_kw"] - hourly["unserved_kw"]).to_numpy()[hours] / unit
        assert supplied == pytest.approx(expected, rel=1e-6, abs=1e-6)
    html = html_report(runs, scenario)
    for well_id in scenario.wells["well_id"]:
        assert f"Well {well_id}" in html
    assert "src=\"http" not in html  # base64 holds no quote: the packed blocks cannot hide one
    fmap = district_map(scenario, result, measure="change_total_cost", baseline=runs["high_co2"])
    assert "screening estimate" in fmap.get_root().render()
    book = openpyxl.load_workbook(io.BytesIO(tables_xlsx(runs)), read_only=True)
    assert "well_steps" in book.sheetnames


# ------------------------------------------------------------------------------------------------ in a browser
def draw_offline(html: str, path) -> dict:
    """Open ``html`` from a file in headless Chromium with every network request refused; wait until each figure
    placeholder holds a drawn plotly chart. Returns the page errors, the refused requests and each placeholder's
    drawn height [px]."""
    path.write_text(html, encoding="utf-8")
    with offline_page(path) as (page, errors, outside):
        placeholders = page.locator("div.plotly-graph-div").count()
        page.wait_for_function(
            "n => document.querySelectorAll('div.plotly-graph-div svg.main-svg').length >= n && "
            "Array.from(document.querySelectorAll('div.plotly-graph-div')).every(d => d.querySelector('.main-svg'))",
            arg=placeholders, timeout=30000)
        heights = page.evaluate("() => Array.from(document.querySelectorAll('div.plotly-graph-div'))"
                                ".map(d => d.querySelector('.main-svg').getBoundingClientRect().height)")
        traces = page.evaluate("() => Array.from(document.querySelectorAll('div.plotly-graph-div'))"
                               ".map(d => (d.data || []).length)")
    return {"errors": errors, "outside": outside, "heights": heights, "traces": traces}


@pytest.mark.slow
def test_summary_draws_every_figure_offline_in_chromium(report, tmp_path):
    """The summary opened from a file with nothing allowed out: plotly.js unpacks (WHATWG Compression Streams,
    gzip) and every packed figure is drawn into its placeholder with its traces and at least 200 px high
    (figures.MIN_FIGURE_PX), with no page error."""
    _, html = report
    seen = draw_offline(html, tmp_path / "summary.html")
    specs = read_figures(html)
    assert not seen["errors"], seen["errors"]
    assert not seen["outside"], seen["outside"]
    assert len(seen["heights"]) == len(specs)
    assert all(h >= 200 for h in seen["heights"]), seen["heights"]
    assert seen["traces"] == [len(spec["data"]) for spec in specs]


def test_report_shows_how_firm_a_runs_split_is():
    """A run given near-optimal ranges gains their section: each technology's heat in the run, the least and the
    most (here half and twice the run's heat: -50 % and +100 %, by construction), the least firm named, and the
    caution; a run without ranges gains none."""
    from engine.studies.alternatives import RANGE_COLUMNS, NearOptimalRanges

    runs = {"reference": result_with_wells(), "other": result_with_wells(cost_case="high_co2")}
    heat = {t: v for t, v in runs["reference"].heat_by_technology_mwh_per_a().items() if v > 1.0}
    demand = 2.0 * sum(heat.values())
    rows = [("city", t, "technology_share", v / demand, 0.5 * v / demand, 2.0 * v / demand, 0.2, "optimal")
            for t, v in heat.items()]
    ranges = NearOptimalRanges("reference", 0.2, pd.DataFrame(rows, columns=list(RANGE_COLUMNS)), demand, 12)
    html = html_report(runs, synthetic_scenario(), TECHNOLOGIES, firmness={"reference": ranges})
    assert html.count("How firm the technology split is (within +0.2 % of the least cost)") == 1
    assert "solved on 12 typical days" in html and cautions.FIRMNESS in html
    for value in heat.values():
        for figure in (value, 0.5 * value, 2.0 * value):
            assert format_value(figure, "least [MWh/a]") in html
    assert format_value(-50.0, "least against this run [%]") in html
    assert format_value(100.0, "most against this run [%]") in html
    assert "Least firm within +0.2 % of the least cost" in html
    assert "How firm" not in html_report(runs, synthetic_scenario(), TECHNOLOGIES)
