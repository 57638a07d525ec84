"""Tests of engine.outputs.palette and engine.outputs.figures on a small result built by hand.

:func:`synthetic_result` makes a two-district :class:`RunResult` with two typical days, four technologies (two fuel
boilers, an air-source heat pump, a heat store) and some unserved heat, whose tables obey the heat balance of
docs/model.md (section 4, constraint 1: outputs + store discharge - charge + unserved = demand). The
figures are then checked against numbers recomputed here from the same construction, not against the figure
itself.
"""

from __future__ import annotations

import colorsys
import itertools

import numpy as np
import pandas as pd
import pytest

from engine.outputs.figures import (
    cost_breakdown_figure,
    difference_table,
    district_supply_figure,
    format_table,
    format_value,
    kpi_table,
    load_curve_figure,
    load_duration_figure,
    main_supply_changes,
    supply_mix_figure,
)
from engine.outputs.palette import TECHNOLOGY_KIND_COLORS, technology_colors
from engine.model.results import COST_PARTS, RunResult

DISTRICTS = (("north", "North <b>Quarter</b>"), ("south", "<script>alert(1)</script>"))
TECHNOLOGIES = pd.DataFrame(
    {
        "technology_id": ["gas", "oil", "ahp", "store"],
        "name": ["Gas boiler", "Oil & co boiler", "Air heat pump", "Water store"],
        "kind": ["fuel_boiler", "fuel_boiler", "air_heat_pump", "heat_store"],
    }
)
DAYS = 365
# typical day 0 stands for the first 150 days (winter), day 1 for the rest
DAY_PERIOD = np.where(np.arange(DAYS) < 150, 0, 1)


def _step_demand_kw(district: int) -> np.ndarray:
    """Demand of the 48 steps (2 typical days x 24 h): winter day, then summer day."""
    hour = np.arange(24)
    shape = 1.0 + 0.3 * np.sin(2 * np.pi * (hour - 6) / 24)
    scale = (800.0, 300.0)[district]
    return np.r_[scale * shape, 0.35 * scale * shape]


def synthetic_dispatch(district: int, heat_pump_kw: float, oil_share: float):
    """(demand, {technology: heat}, unserved) per step [kW], balanced by construction."""
    demand = _step_demand_kw(district)
    store = np.zeros(48)
    store[[2, 3]] = -40.0  # charge at night
    store[[18, 19]] = 38.0  # discharge in the evening (less than charged: losses)
    unserved = np.zeros(48)
    if district == 1:
        unserved[12:15] = 25.0  # a short shortfall at the winter-day peak
    heat_pump = np.clip(np.minimum(heat_pump_kw, demand - np.clip(store, 0, None) - unserved), 0, None)
    rest = demand - heat_pump - store - unserved
    oil = oil_share * rest
    gas = rest - oil
    assert (gas >= -1e-9).all() and (oil >= -1e-9).all()
    return demand, {"gas": gas, "oil": oil, "ahp": heat_pump, "store": store}, unserved


def synthetic_result(heat_pump_kw=(250.0, 60.0), oil_share=(0.1, 0.6), cost_case="reference",
                     names=DISTRICTS) -> RunResult:
    """A solved two-district result with two typical days (weights: days per period)."""
    weight = np.r_[np.full(24, float((DAY_PERIOD == 0).sum())), np.full(24, float((DAY_PERIOD == 1).sum()))]
    steps = pd.DataFrame({"step": np.arange(48), "period": np.repeat([0, 1], 24),
                          "hour_of_day": np.tile(np.arange(24), 2), "weight_h": weight,
                          "year_hour": np.r_[np.arange(24), 150 * 24 + np.arange(24)]})
    day_map = pd.DataFrame({"day": np.arange(DAYS), "period": DAY_PERIOD})
    dispatch, demand_rows, supply_rows, district_rows = [], [], [], []
    kinds = dict(zip(TECHNOLOGIES["technology_id"], TECHNOLOGIES["kind"]))
    price = {"gas": 70.0, "oil": 90.0, "ahp": 40.0, "store": 0.0}
    for k, (did, name) in enumerate(names):
        demand, heat, unserved = synthetic_dispatch(k, heat_pump_kw[k], oil_share[k])
        for tech, values in heat.items():
            dispatch.append(pd.DataFrame({"step": np.arange(48), "district_id": did, "technology_id": tech,
                                          "well_id": "", "heat_kw": values, "cooling_kw": 0.0,
                                          "electricity_kw": values / 3 if tech == "ahp" else 0.0,
                                          "fuel_kw": values / 0.9 if tech in ("gas", "oil") else 0.0}))
            mwh = float((values * weight).sum() / 1000.0)
            parts = {"investment_eur_per_a": 1000.0 * (k + 1) * (tech == "ahp") + 200.0,
                     "fixed_om_eur_per_a": 50.0, "variable_om_eur_per_a": 2.0 * max(mwh, 0.0),
                     "energy_eur_per_a": price[tech] * max(mwh, 0.0), "co2_eur_per_a": 20.0 * mwh * (tech != "ahp"),
                     "unserved_eur_per_a": 0.0}
            supply_rows.append({"district_id": did, "technology_id": tech, "kind": kinds[tech], "well_id": "",
                                "existing_kw": 0.0, "new_kw": float(np.abs(values).max()),
                                "capacity_kw": float(np.abs(values).max()), "heat_mwh_per_a": mwh,
                                "cooling_mwh_per_a": 0.0, "electricity_mwh_per_a": 0.0, "fuel_mwh_per_a": 0.0,
                                "co2_t_per_a": 0.2 * mwh * (tech in ("gas", "oil")), **parts,
                                "share_of_demand": 0.0})
        demand_rows.append(pd.DataFrame({"step": np.arange(48), "district_id": did, "heat_demand_kw": demand,
                                         "cooling_demand_kw": 0.0, "unserved_heat_kw": unserved,
                                         "unserved_cooling_kw": 0.0, "marginal_cost_eur_per_mwh": 80.0}))
        supply = pd.DataFrame([r for r in supply_rows if r["district_id"] == did])
        sums = {f"{p}_eur_per_a": float(supply[f"{p}_eur_per_a"].sum()) for p in COST_PARTS}
        unserved_mwh = float((unserved * weight).sum() / 1000.0)
        sums["unserved_eur_per_a"] = 5000.0 * unserved_mwh
        heat_mwh = float((demand * weight).sum() / 1000.0)
        total = sum(sums.values())
        by_tech = supply[supply["kind"] != "heat_store"].set_index("technology_id")["heat_mwh_per_a"]
        district_rows.append({"district_id": did, "name": name, "heat_demand_mwh_per_a": heat_mwh,
                              "cooling_demand_mwh_per_a": 0.0, "unserved_heat_mwh_per_a": unserved_mwh,
                              "unserved_cooling_mwh_per_a": 0.0, **sums, "total_cost_eur_per_a": total,
                              "co2_t_per_a": float(supply["co2_t_per_a"].sum()),
                              "levelised_cost_eur_per_mwh": total / heat_mwh,
                              "co2_kg_per_mwh": 1000 * float(supply["co2_t_per_a"].sum()) / heat_mwh,
                              "main_supply": str(by_tech.idxmax())})
    wells = pd.DataFrame(columns=["well_id", "district_id", "heat_mwh_per_a", "flow_limit_binds",
                                  "volume_limit_binds"])
    tables = {"districts": pd.DataFrame(district_rows), "supply": pd.DataFrame(supply_rows),
              "dispatch": pd.concat(dispatch, ignore_index=True), "demand": pd.concat(demand_rows, ignore_index=True),
              "wells": wells, "well_steps": pd.DataFrame(columns=["step", "well_id"]), "steps": steps,
              "day_map": day_map}
    settings = {"name": "Synthetic town", "objective": "cost", "discount_rate": 0.05, "typical_days": 2,
                "co2_cap_t_per_a": 0.0, "reinjection_min_temp_c": 4.5, "reinjection_max_temp_c": 20.0,
                "value_of_unserved_heat_eur_per_mwh": 5000.0}
    return RunResult(status="optimal", message="Optimal solution found.", cost_case=cost_case,
                     scenario_name="Synthetic town", settings=settings, tables=tables, input_hash="abc123")


def two_runs() -> dict[str, RunResult]:
    """Reference and a run where the heat pump takes over the south district (its main supply changes)."""
    return {"reference": synthetic_result(),
            "more heat pumps": synthetic_result(heat_pump_kw=(250.0, 300.0), cost_case="high_co2")}


def _year_hour_values(values_by_step: np.ndarray) -> np.ndarray:
    """Hourly year of a 48-step series: each calendar day takes its typical day (common practice)."""
    return np.concatenate([values_by_step[24 * p : 24 * p + 24] for p in DAY_PERIOD])


def _stack(fig, group=None):
    traces = [t for t in fig.data if t.stackgroup and (group is None or t.stackgroup == group)]
    return traces, sum(np.asarray(t.y, float) for t in traces)


# -------------------------------------------------------------------------------------------------- palette
OKABE_ITO = {"#E69F00", "#56B4E9", "#009E73", "#F0E442", "#0072B2", "#D55E00", "#CC79A7", "#000000"}


def test_kind_colours_are_distinct_and_from_the_colour_universal_design_set():
    """Every kind, unserved and demand has its own colour; all but two are Okabe & Ito (2008) colours.

    Source: Okabe, M. and Ito, K. (2008), Color Universal Design; the eight hex values are quoted from memory.
    The two others (heat store light grey, groundwater cooling dark green) are the project's own additions.
    """
    colors = list(TECHNOLOGY_KIND_COLORS.values())
    assert len(set(colors)) == len(colors)
    assert len(set(colors) - OKABE_ITO) == 2


def _srgb_to_lab(rgb):
    rgb = np.asarray(rgb, float)
    lin = np.where(rgb <= 0.04045, rgb / 12.92, ((rgb + 0.055) / 1.055) ** 2.4)
    xyz = np.array([[0.4124, 0.3576, 0.1805], [0.2126, 0.7152, 0.0722], [0.0193, 0.1192, 0.9505]]) @ lin
    t = xyz / np.array([0.95047, 1.0, 1.08883])
    f = np.where(t > (6 / 29) ** 3, np.cbrt(t), t / (3 * (6 / 29) ** 2) + 4 / 29)
    return np.array([116 * f[1] - 16, 500 * (f[0] - f[1]), 200 * (f[1] - f[2])])


# Machado, Oliveira and Fernandes (2009), A physiologically-based model for simulation of color vision
# deficiency, IEEE TVCG 15(6), 1291-1298: matrices for severity 1.0 on linear RGB (values from memory).
DICHROMAT_MATRICES = {
    "protanopia": [[0.152286, 1.052583, -0.204868], [0.114503, 0.786281, 0.099216], [-0.003882, -0.048116, 1.051998]],
    "deuteranopia": [[0.367322, 0.860646, -0.227968], [0.280085, 0.672501, 0.047413], [-0.011820, 0.042940, 0.968881]],
    "tritanopia": [[1.255528, -0.076749, -0.178779], [-0.078411, 0.930809, 0.147602], [0.004733, 0.691367, 0.303900]],
}


@pytest.mark.parametrize("deficiency", sorted(DICHROMAT_MATRICES))
def test_kind_colours_stay_apart_for_dichromats(deficiency):
    """Under a simulated dichromacy every pair of kind colours stays at least 15 CIELAB ΔE*76 apart.

    Sources: Machado et al. (2009) simulation matrices (from memory, see above); sRGB transfer and CIELAB per
    IEC 61966-2-1 and CIE 15:2004 (D65 white). A ΔE of about 2.3 is a just-noticeable difference (Sharma 2003,
    Digital Color Imaging Handbook, from memory); 15 is a margin of our choosing for small legend swatches.
    """
    matrix = np.array(DICHROMAT_MATRICES[deficiency])
    labs = {}
    for kind, color in TECHNOLOGY_KIND_COLORS.items():
        rgb = np.array([int(color[i : i + 2], 16) / 255 for i in (1, 3, 5)])
        lin = np.where(rgb <= 0.04045, rgb / 12.92, ((rgb + 0.055) / 1.055) ** 2.4)
        sim = np.clip(matrix @ lin, 0, 1)
        back = np.where(sim <= 0.0031308, 12.92 * sim, 1.055 * sim ** (1 / 2.4) - 0.055)
        labs[kind] = _srgb_to_lab(back)
    worst = min(np.linalg.norm(labs[a] - labs[b]) for a, b in itertools.combinations(labs, 2))
    assert worst >= 15.0


def test_technology_colours_are_stable_and_shade_a_shared_kind():
    """Same catalogue in any row order -> same colours; a kind with several technologies -> shades of one hue,
    a kind with one technology -> the base colour (common practice for grouped categorical palettes)."""
    colors = technology_colors(TECHNOLOGIES)
    shuffled = technology_colors(TECHNOLOGIES.iloc[::-1].reset_index(drop=True))
    pairs = technology_colors(list(zip(TECHNOLOGIES["technology_id"], TECHNOLOGIES["kind"])))
    assert colors == shuffled == pairs
    assert colors["ahp"] == TECHNOLOGY_KIND_COLORS["air_heat_pump"]
    assert colors["gas"] != colors["oil"]
    hues = [colorsys.rgb_to_hls(*(int(colors[t][i : i + 2], 16) / 255 for i in (1, 3, 5)))[0] for t in ("gas", "oil")]
    base = colorsys.rgb_to_hls(*(int(TECHNOLOGY_KIND_COLORS["fuel_boiler"][i : i + 2], 16) / 255 for i in (1, 3, 5)))
    assert hues == pytest.approx([base[0]] * 2, abs=0.01)
    ids = [t for t in colors if t in set(TECHNOLOGIES["technology_id"])]
    assert len({colors[t] for t in ids}) == len(ids)


# -------------------------------------------------------------------------------------------------- load curve
def test_week_view_stack_equals_demand_minus_unserved_at_every_hour():
    """Sum of the technology areas (store discharge and charge included) = demand - unserved, hour by hour.

    Source: the heat balance, docs/model.md section 4, constraint 1; demand and unserved recomputed from the
    construction of the fixture, and the hours of week 3 mapped to their typical days by hand.
    """
    result = synthetic_result()
    fig = load_curve_figure(result, TECHNOLOGIES, week=3)
    hours = np.arange(2 * 168, 3 * 168)
    demand = _year_hour_values(_step_demand_kw(0) + _step_demand_kw(1))[hours]
    unserved = _year_hour_values(synthetic_dispatch(1, 60.0, 0.6)[2])[hours]
    assert unserved.max() > 0  # the week does contain a shortfall
    assert np.array_equal(np.asarray(fig.data[0].x), hours)
    techs = [t for t in fig.data if t.stackgroup and t.name != "Unserved"]
    supplied = sum(np.asarray(t.y, float) for t in techs)
    assert supplied == pytest.approx(demand - unserved, rel=1e-9)
    demand_line = next(t for t in fig.data if t.name == "Demand")
    assert np.asarray(demand_line.y, float) == pytest.approx(demand)
    assert demand_line.line.dash == "dash"
    unserved_trace = next(t for t in fig.data if t.name == "Unserved")
    assert np.asarray(unserved_trace.y, float) == pytest.approx(unserved)
    assert unserved_trace.line.color == TECHNOLOGY_KIND_COLORS["unserved"]


def test_year_view_is_daily_means_and_one_district():
    """Year view: one point per day, each the mean of the 24 hours of that day's typical day (common practice
    for resampling); the district view shows that district's demand only."""
    result = synthetic_result()
    fig = load_curve_figure(result, TECHNOLOGIES, district_id="south")
    demand_line = next(t for t in fig.data if t.name == "Demand")
    assert len(demand_line.x) == DAYS
    expected = np.array([_step_demand_kw(1)[24 * p : 24 * p + 24].mean() for p in DAY_PERIOD])
    assert np.asarray(demand_line.y, float) == pytest.approx(expected)
    _, stacked = _stack(fig)
    assert stacked == pytest.approx(expected)
    assert "Daily means" in fig.layout.title.subtitle.text
    assert "[kW]" in fig.layout.yaxis.title.text
    assert "&lt;script&gt;" in fig.layout.title.text and "<script>" not in fig.layout.title.text


def test_store_discharge_positive_charge_negative():
    """The store's charge is drawn below zero in its own stack, its discharge above (design decision)."""
    fig = load_curve_figure(synthetic_result(), TECHNOLOGIES, week=1)
    charge = next(t for t in fig.data if t.stackgroup == "charge")
    discharge = next(t for t in fig.data if t.name.endswith("(discharge)"))
    assert np.asarray(charge.y).max() <= 0 and np.asarray(charge.y).min() == pytest.approx(-80.0)  # 2 districts
    assert np.asarray(discharge.y).min() >= 0 and np.asarray(discharge.y).max() == pytest.approx(76.0)


def test_load_curve_rejects_bad_arguments():
    result = synthetic_result()
    with pytest.raises(ValueError, match="week"):
        load_curve_figure(result, TECHNOLOGIES, week=53)
    with pytest.raises(ValueError, match="district_id"):
        load_curve_figure(result, TECHNOLOGIES, district_id="nowhere")
    with pytest.raises(ValueError, match="quantity"):
        load_curve_figure(result, TECHNOLOGIES, quantity="steam")


# -------------------------------------------------------------------------------------------------- duration
def test_load_duration_demand_curve_is_sorted_year_for_each_run():
    """Demand duration curve: the hourly year sorted high to low; first point = peak, last = minimum
    (definition of a load duration curve, common practice). Two runs -> both runs' curves."""
    runs = two_runs()
    fig = load_duration_figure(runs, technologies=TECHNOLOGIES)
    demand_year = _year_hour_values(_step_demand_kw(0) + _step_demand_kw(1))
    for run in runs:
        trace = next(t for t in fig.data if t.name == f"Demand ({run})")
        y = np.asarray(trace.y, float)
        assert (np.diff(y) <= 1e-12).all()
        assert y[0] == pytest.approx(demand_year.max()) and y[-1] == pytest.approx(demand_year.min())
        assert trace.x[-1] == 8760
    single = load_duration_figure({"reference": runs["reference"]}, technologies=TECHNOLOGIES)
    names = [t.name for t in single.data]
    assert names[0] == "Demand" and "Gas boiler" in names and len(names) == 4
    assert "[h]" in single.layout.xaxis.title.text


# -------------------------------------------------------------------------------------------------- costs, mix
def test_cost_bars_add_up_to_the_total_cost():
    """Stacked cost parts per run = the run's total cost (sum of the parts, results.COST_PARTS)."""
    runs = two_runs()
    fig = cost_breakdown_figure(runs, by="run")
    assert fig.layout.yaxis.title.text.endswith("[k€/a]") or "€/a" in fig.layout.yaxis.title.text
    divisor = {"[€/a]": 1.0, "[k€/a]": 1e3, "[M€/a]": 1e6}[fig.layout.yaxis.title.text.split()[-1]]
    for k, run in enumerate(runs):
        total = sum(float(t.y[k]) for t in fig.data) * divisor
        assert total == pytest.approx(runs[run].tables["districts"]["total_cost_eur_per_a"].sum())
    grouped = cost_breakdown_figure(runs, by="district")
    districts, run_axis = grouped.data[0].y  # horizontal bars: district and run on the y axis
    assert grouped.data[0].orientation == "h"
    assert len(districts) == 4 and set(run_axis) == {"reference", "more heat pumps"}
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in districts
    with pytest.raises(ValueError, match="by"):
        cost_breakdown_figure(runs, by="technology")


def test_supply_mix_bars_equal_annual_heat_by_technology():
    """Supply-mix bar of a technology = its heat in the supply table [MWh/a]; heat stores left out, unserved
    shown (annual energy = sum of step power x step weight, common practice)."""
    runs = two_runs()
    fig = supply_mix_figure(runs, TECHNOLOGIES)
    names = {t.name: t for t in fig.data}
    assert "Water store" not in names and "Unserved" in names
    weight = runs["reference"].tables["steps"]["weight_h"].to_numpy()
    gas_mwh = sum((synthetic_dispatch(k, h, o)[1]["gas"] * weight).sum() / 1000 for k, h, o in
                  ((0, 250.0, 0.1), (1, 60.0, 0.6)))
    assert names["Gas boiler"].x[0] == pytest.approx(gas_mwh)
    assert names["Oil &amp; co boiler"].marker.color == technology_colors(TECHNOLOGIES)["oil"]
    per_district = district_supply_figure(runs["reference"], TECHNOLOGIES)
    assert list(per_district.data[0].y) == ["North &lt;b&gt;Quarter&lt;/b&gt;", "&lt;script&gt;alert(1)&lt;/script&gt;"]
    assert "MWh/a" in per_district.layout.xaxis.title.text


# -------------------------------------------------------------------------------------------------- tables
def test_kpi_table_figures():
    """Levelised cost (city) = total cost / (heat + cooling demand), the districts' definition in
    engine/extract.py; demand recomputed from the fixture's construction."""
    runs = two_runs()
    table = kpi_table(runs)
    assert list(table["run"]) == list(runs)
    weight = runs["reference"].tables["steps"]["weight_h"].to_numpy()
    demand_mwh = sum((_step_demand_kw(k) * weight).sum() / 1000 for k in (0, 1))
    row = table.iloc[0]
    assert row["heat demand [MWh/a]"] == pytest.approx(demand_mwh)
    assert row["levelised cost [€/MWh]"] == pytest.approx(row["total cost [€/a]"] / demand_mwh)
    assert row["unserved heat [MWh/a]"] == pytest.approx(3 * 25.0 * 150 / 1000)
    assert "heat gas [MWh/a]" in table.columns
    named = kpi_table(runs, TECHNOLOGIES)
    assert "heat Air heat pump [MWh/a]" in named.columns
    failed = RunResult(status="infeasible", message="no")
    with_failed = kpi_table({**runs, "broken": failed})
    assert with_failed.iloc[-1]["status"] == "no feasible plan" and np.isnan(with_failed.iloc[-1]["total cost [€/a]"])


def test_difference_table_and_main_supply_changes():
    """Δ = run - baseline; the south district moves from a fuel boiler to the heat pump (by construction)."""
    runs = two_runs()
    table = difference_table(runs, "reference")
    assert list(table["run"]) == ["more heat pumps"]
    row = table.iloc[0]
    assert row["Δ total cost [€/a]"] == pytest.approx(runs["more heat pumps"].total_cost_eur_per_a
                                                       - runs["reference"].total_cost_eur_per_a)
    assert row["Δ heat ahp [MWh/a]"] > 0 and row["Δ heat gas [MWh/a]"] < 0
    assert row["districts with changed main supply"] == 1
    assert row["changed districts"] == "<script>alert(1)</script>"
    changes = main_supply_changes(runs["more heat pumps"], runs["reference"], TECHNOLOGIES)
    assert changes.to_dict(orient="records") == [{"district_id": "south", "name": "<script>alert(1)</script>",
                                                  "baseline main supply": "Oil & co boiler",
                                                  "main supply": "Air heat pump"}]
    with pytest.raises(ValueError, match="baseline"):
        difference_table(runs, "missing")


def test_format_value():
    """Thousands separators, two decimals for per-MWh figures, a dash for missing values (common practice)."""
    assert format_value(28792096.6, "total cost [€/a]") == "28,792,097"
    assert format_value(82.5242, "levelised cost [€/MWh]") == "82.5"  # one decimal per €/MWh everywhere (engine/outputs/formats.py)
    assert format_value(float("nan"), "CO2 [t/a]") == "–"
    assert format_value(-0.2, "CO2 [t/a]") == "0"
    assert format_table(pd.DataFrame({"x [t/a]": [1234.4]})).iloc[0, 0] == "1,234"


def test_figure_template_is_plotly_white_for_the_traces_we_draw():
    """The figures' template is plotly's own ``plotly_white`` (the reference) for the layout and for the bar and
    scatter traces, the only trace types the figures draw; it leaves out the defaults of the other types."""
    import plotly.io as pio

    from engine.outputs.palette import FIGURE_TEMPLATE

    white = pio.templates["plotly_white"]
    assert FIGURE_TEMPLATE.layout.to_plotly_json() == white.layout.to_plotly_json()
    assert FIGURE_TEMPLATE.data.bar == white.data.bar and FIGURE_TEMPLATE.data.scatter == white.data.scatter
    assert not FIGURE_TEMPLATE.data.heatmap
