"""Tests of engine.outputs.plan_figures and the heat-plan chapter of the HTML summary.

The pathway figures are checked against the tables of the :class:`PathwayResult` they draw (each bar and line
equals the summary or capacity table it comes from) and, on a hand-checkable one-district city, against the plan
worked out by hand. The designation map is checked on a hand-made designation with one district per grade.
"""

from __future__ import annotations

import re

import numpy as np
import pandas as pd
import pytest

import scenario_factory as f
from engine.outputs.palette import technology_colors
from engine.outputs.plan_figures import (
    AREA_COLORS,
    GRADE_OPACITY,
    co2_path_figure,
    designation_legend_html,
    designation_map,
    designation_table,
    designation_values,
    plan_capacity_figure,
    plan_cost_figure,
    plan_heat_figure,
    svg_designation_map,
)
from engine.outputs.htmlpack import bundle_trace_types, read_figures
from engine.outputs.plan_report import HeatPlan
from engine.outputs.report import html_report
from engine.scenario.folder import load_scenario
from engine.scenario.folder import DEMO_DIR
from engine.scenario.inputs import Prices, Settings
from engine.scenario.pathway_inputs import CITY_COLUMNS, PathwayInputs
from engine.studies.designation import GRADE_NAMES, Designation, GradeThresholds
from engine.studies.pathway import solve_pathway

TYPICAL_DAYS = 2


@pytest.fixture(scope="module")
def demo():
    scenario = load_scenario(DEMO_DIR)
    pathway = solve_pathway(scenario, typical_days=TYPICAL_DAYS, workers=1)
    assert pathway.solved, pathway.message
    return scenario, pathway


def _by_name(fig):
    return {t.name: t for t in fig.data}


def test_capacity_bars_equal_the_capacity_table(demo):
    """Per technology and year, the solid plus the hatched bar is the capacity of capacity.csv and the hatched
    part its new build (MW = kW / 1000); heat stores (kWh) and cooling plant are left out, colours from the
    palette."""
    scenario, pathway = demo
    fig = plan_capacity_figure(pathway, scenario.technologies)
    traces = _by_name(fig)
    names = dict(zip(scenario.technologies["technology_id"], scenario.technologies["name"]))
    kinds = dict(zip(scenario.technologies["technology_id"], scenario.technologies["kind"]))
    colors = technology_colors(scenario.technologies)
    cap = pathway.capacity.groupby(["year", "technology_id"])[["capacity_kw", "new_kw"]].sum()
    years = [str(y) for y in pathway.years]
    checked = 0
    for tech in cap.index.get_level_values(1).unique():
        if kinds[tech] in ("heat_store", "chiller", "groundwater_cooling"):
            assert names[tech] not in traces
            continue
        total = np.array([cap["capacity_kw"].get((y, tech), 0.0) for y in pathway.years]) / 1000
        if total.max() <= 1e-6:
            continue
        solid, built = traces[names[tech]], traces[f"{names[tech]}, built"]
        assert list(solid.x) == years
        assert np.asarray(solid.y) + np.asarray(built.y) == pytest.approx(total, abs=1e-9)
        new = np.array([cap["new_kw"].get((y, tech), 0.0) for y in pathway.years]) / 1000
        assert np.asarray(built.y) == pytest.approx(np.minimum(new, total), abs=1e-9)
        assert solid.marker.color == colors[tech] == built.marker.color
        checked += 1
    assert checked >= 5
    assert fig.layout.height >= 200


def test_heat_bars_and_demand_equal_the_summary(demo):
    """Heat per technology and year is the summary's heat_<t>_mwh_per_a column (GWh = MWh / 1000); the demand
    marker is heat_demand_mwh_per_a; the bars add up to the demand less unserved heat (each year's heat balance,
    issue 13's acceptance rule)."""
    scenario, pathway = demo
    fig = plan_heat_figure(pathway, scenario.technologies)
    traces = _by_name(fig)
    names = dict(zip(scenario.technologies["technology_id"], scenario.technologies["name"]))
    summary = pathway.summary
    stacked = np.zeros(len(summary))
    for column in summary.columns:
        tech = column[len("heat_"):-len("_mwh_per_a")]
        if not column.startswith("heat_") or column == "heat_demand_mwh_per_a" or tech == "heat_store":
            continue
        values = summary[column].to_numpy(float) / 1000
        if np.abs(values).max() <= 1e-6:
            continue
        assert np.asarray(traces[names[tech]].y) == pytest.approx(values)
        stacked += np.asarray(traces[names[tech]].y)
    demand = summary["heat_demand_mwh_per_a"].to_numpy(float) / 1000
    assert np.asarray(traces["Heat demand"].y) == pytest.approx(demand)
    store = summary.get("heat_heat_store_mwh_per_a", pd.Series(0.0, index=summary.index)).to_numpy(float) / 1000
    unserved = summary["unserved_heat_mwh_per_a"].to_numpy(float) / 1000
    assert stacked + store + unserved == pytest.approx(demand, rel=1e-6)


def test_co2_line_and_caps_and_costs_equal_the_summary(demo):
    """The CO2 line is co2_t_per_a, the cap markers the caps of pathway.csv (demo: 80 000, 55 000, 32 000 t/a,
    demo_data/pathway.csv), and the CO2 stays within each cap; the annual cost parts add up to
    total_cost_eur_per_a and the investment bars are investment_eur (M€)."""
    _, pathway = demo
    co2 = _by_name(co2_path_figure(pathway))
    assert np.asarray(co2["CO2 of the plan"].y) == pytest.approx(pathway.summary["co2_t_per_a"].to_numpy(float))
    assert list(co2["CO2 cap"].y) == [80000.0, 55000.0, 32000.0]
    assert all(c <= cap * (1 + 1e-6) for c, cap in zip(co2["CO2 of the plan"].y, co2["CO2 cap"].y))
    cost = plan_cost_figure(pathway)
    parts = [t for t in cost.data if t.name != "Investment (overnight)"]
    assert {t.name for t in parts} <= {"Investment (annuity)", "Fixed O&M", "Variable O&M", "Energy", "CO2",
                                       "Unserved heat"}
    assert np.sum([np.asarray(t.y) for t in parts], axis=0) == pytest.approx(
        pathway.summary["total_cost_eur_per_a"].to_numpy(float) / 1e6, rel=1e-9)
    invest = _by_name(cost)["Investment (overnight)"]
    assert np.asarray(invest.y) == pytest.approx(pathway.summary["investment_eur"].to_numpy(float) / 1e6)
    assert min(co2_path_figure(pathway).layout.height, cost.layout.height) >= 200


def test_capacity_figure_shows_a_retired_boiler_rebuilt_by_hand():
    """One district, flat 1 MW demand, a gas boiler retired in 2035 and an electric boiler that never pays at
    200 EUR/MWh against gas at 100 EUR/MWh (hand: the cheapest plan rebuilds 1 MW of gas in 2035). The figure
    shows 1 MW of gas standing in both years, none of it built in 2030 and all of it in 2035."""
    techs = f.technologies(
        dict(technology_id="gas", kind="fuel_boiler", carrier="gas", efficiency=1.0, name="Gas boiler"),
        dict(technology_id="eboiler", kind="electric_boiler", carrier="electricity", efficiency=1.0,
             investment_eur_per_kw=500.0, lifetime_a=20.0, name="Electric boiler"),
    )
    scenario = f.scenario(
        [f.district("d1", heat_demand_mwh_per_a=8760.0)], techs, f.hourly(electricity=200.0, grid_co2=0.0),
        existing={("d1", "gas"): 1000.0}, potential={("d1", "gas"): 1000.0},
        heat_demand_hourly_kw=pd.DataFrame({"d1": np.full(8760, 1000.0)}),
        settings=Settings(typical_days=0, discount_rate=0.05), prices=Prices(gas_eur_per_mwh=100.0, co2_eur_per_t=0.0),
    )
    city = pd.DataFrame(np.nan, index=pd.Index([2030, 2035], name="year"), columns=list(CITY_COLUMNS))
    inputs = PathwayInputs([2030, 2035], 2030, 5, city, pd.DataFrame(columns=["year", "district_id",
                                                                               "heat_demand_factor"]))
    inputs.retirement_year[("d1", "gas")] = 2035
    pathway = solve_pathway(scenario, inputs)
    assert pathway.solved, pathway.message
    traces = _by_name(plan_capacity_figure(pathway, techs))
    assert list(traces["Gas boiler"].y) == pytest.approx([1.0, 0.0], abs=1e-6)
    assert list(traces["Gas boiler, built"].y) == pytest.approx([0.0, 1.0], abs=1e-6)
    assert "Electric boiler" not in traces
    heat = _by_name(plan_heat_figure(pathway, techs))
    assert list(heat["Gas boiler"].y) == pytest.approx([8.76, 8.76], rel=1e-6)  # 1 MW x 8760 h = 8.76 GWh


def test_unsolved_pathway_gives_a_figure_with_the_message():
    """A failed pathway draws a figure saying so instead of raising."""
    class Failed:
        solved, message, summary = False, "Year 2040: the CO2 cap of 10 t/a cannot be met", pd.DataFrame()

    fig = co2_path_figure(Failed())
    assert "2040" in fig.layout.annotations[0].text


# ------------------------------------------------------------------------------------------------ designation
def _graded_city():
    districts = [f.district(f"d{g}", k=g, name=f"District <{g}>") for g in (1, 2, 3, 4)]
    techs = f.technologies(dict(technology_id="gas", kind="fuel_boiler", carrier="gas", efficiency=1.0))
    scenario = f.scenario(districts, techs, f.hourly())
    areas = ["heat_network", "individual_heat_pumps", "under_review", "under_review"]
    table = pd.DataFrame({
        "district_id": [f"d{g}" for g in (1, 2, 3, 4)], "supply_area": areas, "grade": [1, 2, 3, 4],
        "win_share": [1.0, 0.8, 0.6, 0.2], "lcoh_margin_eur_per_mwh": [float("inf"), 4.0, 1.0, -2.0],
        "network_share_min": [0.7, 0.0, 0.0, 0.0], "network_share_max": [1.0, 0.2, 0.0, 0.0],
        "candidate": ["heat_network", "individual_heat_pumps", "other_individual", "other_individual"],
        "grade_name": [GRADE_NAMES[g] for g in (1, 2, 3, 4)], "points": [5, 3, 1, 0], "wins": [""] * 4,
        "explanation": [f"explained {g}" for g in (1, 2, 3, 4)],
    })
    ranges = pd.DataFrame({"scope": ["district", "district"], "subject": ["d1", "d2"],
                           "quantity": ["network_share", "network_share"], "optimum": [0.9, 0.1],
                           "minimum": [0.7, 0.0], "maximum": [1.0, 0.2], "slack_pct": [5.0, 5.0],
                           "status": ["optimal", "optimal"]})
    winners = pd.DataFrame({"reference": areas}, index=table["district_id"])
    return scenario, Designation(table, ["reference"], GradeThresholds(), ranges, winners, {})


def test_grade_channel_gives_four_distinct_opacities_and_area_colours():
    """Grades 1 to 4 map to four distinct fill opacities, falling with the grade; the area gives the colour
    (Okabe & Ito 2008 values: reddish purple #CC79A7, blue #0072B2); under review has a dashed outline."""
    scenario, designation = _graded_city()
    values = designation_values(scenario, designation).set_index("district_id")
    opacities = [values.at[f"d{g}", "opacity"] for g in (1, 2, 3, 4)]
    assert len(set(opacities)) == 4 and opacities == sorted(opacities, reverse=True)
    assert opacities == [GRADE_OPACITY[g] for g in (1, 2, 3, 4)]
    assert values.at["d1", "color"] == "#CC79A7" and values.at["d2", "color"] == "#0072B2"
    assert values.at["d3", "color"] == AREA_COLORS["under_review"]
    assert list(values["dashed"]) == [False, False, True, True]


def test_svg_map_and_legend_explain_both_channels_and_escape_names():
    """The SVG map draws each district with its area colour and grade opacity and names it escaped with its
    grade; the legend names every area present and every grade in words; the map is at least 200 px."""
    scenario, designation = _graded_city()
    svg = svg_designation_map(scenario, designation, width_px=480, title="Designation")
    for g in (1, 2, 3, 4):
        assert f"fill-opacity='{GRADE_OPACITY[g]}'" in svg
        assert f"District &lt;{g}&gt; · {g}" in svg
        assert GRADE_NAMES[g] in svg
    assert "<4>" not in svg
    width, height = map(float, re.search(r"<svg width='(\d+)' height='(\d+)'", svg).groups())
    assert width >= 200 and height >= 200
    legend = designation_legend_html(["heat_network", "under_review"])
    assert "Heat network" in legend and "Under review" in legend and "Individual heat pumps" not in legend
    assert "colour" in legend and "opacity" in legend
    with pytest.raises(ValueError, match="width_px"):
        svg_designation_map(scenario, designation, width_px=100)


def test_folium_map_renders_offline_with_the_legend():
    """The folium map renders, loads no script from the internet and carries the legend of both channels; a
    name with a template-literal placeholder is escaped (folium puts tooltips into JavaScript templates)."""
    scenario, designation = _graded_city()
    scenario.districts.loc[0, "name"] = "Quarter `${document.cookie}`"
    page = designation_map(scenario, designation).get_root().render()
    assert "${document.cookie}" not in page and "Quarter &#96;&#36;{document.cookie}&#96;" in page
    assert "Supply area (colour) and grade (opacity)" in page
    assert not re.search(r"<script[^>]+src=['\"]https?://", page)


def test_designation_table_reads_for_people():
    """Names instead of ids, grades in words, the margin 'no other supply possible' where it is infinite, and
    the network range only where the network reaches the district."""
    scenario, designation = _graded_city()
    table = designation_table(designation, scenario)
    assert list(table["District"]) == [f"District <{g}>" for g in (1, 2, 3, 4)]
    assert table.loc[0, "Grade"] == "1: very likely suitable"
    assert table.loc[0, "Margin [EUR/MWh]"] == "no other supply possible"
    assert table.loc[0, "Network share range"] == "70 to 100 %"
    assert table.loc[3, "Network share range"] == "network does not reach it"
    assert table.loc[2, "Supply area"] == "Under review (other individual supply)"
    assert table.loc[1, "How the grade came about"] == "explained 2"


# ------------------------------------------------------------------------------------------------ report chapter
def test_report_has_the_heat_plan_chapter_only_when_given(demo):
    """With a heat plan the HTML summary carries the chapter (heading, caution, figures, map, table); without
    one it has no trace of it."""
    scenario, pathway = demo
    run = pathway.year_results[pathway.years[-1]]
    plain = html_report({"2040": run}, scenario)
    assert "id='heatplan'" not in plain and "Heat plan</a>" not in plain
    graded_scenario, designation = _graded_city()
    with_plan = html_report({"2040": run}, scenario, heat_plan=HeatPlan(scenario, pathway, None))
    assert "id='heatplan'" in with_plan and "Heat plan</a>" in with_plan
    titles = " ".join(spec["layout"].get("title", {}).get("text", "") for spec in read_figures(with_plan))
    assert "CO2 path against the caps" in titles and "planning proposals" in with_plan
    # every trace type of the chapter's figures is in the summary's plotly.js bundle (engine/outputs/assets)
    emitted = {trace.get("type", "scatter") for spec in read_figures(with_plan) for trace in spec["data"]}
    assert emitted and emitted <= bundle_trace_types()
    only_areas = html_report({"2040": run}, scenario, heat_plan=HeatPlan(graded_scenario, None, designation, "2040"))
    assert "id='heatplan'" in only_areas and "Supply areas and their grades (2040)" in only_areas
    assert "District &lt;3&gt;" in only_areas and "CO2 path against the caps" not in str(read_figures(only_areas))
    assert "id='heatplan'" not in html_report({"2040": run}, scenario, heat_plan=HeatPlan(scenario))


@pytest.mark.slow
def test_summary_with_the_heat_plan_draws_every_figure_offline_in_chromium(demo, tmp_path):
    """The summary with a pathway chapter, opened in Chromium with nothing allowed out: every figure, the
    chapter's too, is drawn (tests/test_report.draw_offline)."""
    from test_report import draw_offline

    scenario, pathway = demo
    run = pathway.year_results[pathway.years[-1]]
    html = html_report({"2040": run}, scenario, heat_plan=HeatPlan(scenario, pathway, None))
    seen = draw_offline(html, tmp_path / "summary.html")
    assert not seen["errors"] and not seen["outside"], seen
    assert len(seen["heights"]) == len(read_figures(html)) >= 8
    assert all(h >= 200 for h in seen["heights"]), seen["heights"]
