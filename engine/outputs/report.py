"""One self-contained HTML report of one or several runs, to share or archive.

The report holds the same figures and tables the dashboard shows (from :mod:`engine.outputs.figures` and
:mod:`engine.outputs.maps`), the assumptions each run was made under, and the cautions. It is one file that opens offline
in any browser: plotly.js's partial bundle of the traces the summary draws is embedded once, and the figures' data
once, both gzip-compressed and base64-encoded (about 0.6 MB for the demo city; the browser unpacks them with its own
``DecompressionStream`` and then draws the figures into their placeholders; :mod:`engine.outputs.htmlpack`); the maps are inline SVG drawn by
:func:`engine.outputs.maps.svg_district_map` (the folium map of the dashboard would load Leaflet from a CDN, and the
installed folium and branca do not ship it). No address outside the file is loaded when it opens.

Every text that comes from the user (scenario, run, district, technology and cost-case names, descriptions) is
HTML-escaped.
"""

from __future__ import annotations

import dataclasses
import datetime as _dt
from collections.abc import Mapping

import pandas as pd

from engine.outputs.figures import (
    FIGURE_CONFIG,
    cost_breakdown_figure,
    difference_table,
    district_supply_figure,
    escape,
    format_table,
    kpi_table,
    load_curve_figure,
    load_duration_figure,
    main_supply_changes,
    supply_mix_figure,
)
from engine import cautions
from engine.outputs.firmness import firmness_summary, firmness_table
from engine.outputs.htmlpack import FigureSet
from engine.outputs.labels import AQUIFER_LABELS, cost_case_label, objective_label, status_label, words
from engine.outputs.maps import shared_value_range, svg_district_map
from engine.outputs.plan_report import HeatPlan, heat_plan_chapter
from engine.model.results import RunResult

_STYLE = """
body { font-family: system-ui, -apple-system, "Segoe UI", Roboto, Arial, sans-serif; margin: 0; color: #1b1b1b;
       background: #fafafa; }
main { max-width: 1280px; margin: 0 auto; padding: 16px 28px 48px; background: #fff; }
h1 { font-size: 26px; margin: 12px 0 4px; }
h2 { font-size: 20px; margin: 32px 0 8px; border-bottom: 2px solid #0072B2; padding-bottom: 4px; }
h3 { font-size: 16px; margin: 20px 0 6px; }
p.meta { color: #555; margin: 0 0 12px; }
.caution { border-left: 6px solid #D55E00; background: #fff4ec; padding: 10px 14px; margin: 12px 0; }
.note { color: #555; font-size: 13px; }
table.data { border-collapse: collapse; font-size: 13px; margin: 6px 0 12px; }
table.data th, table.data td { border: 1px solid #d0d0d0; padding: 3px 8px; vertical-align: top; }
table.data th { background: #f0f4f8; text-align: left; }
table.data td.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
.scroll { overflow-x: auto; }
.figure { margin: 8px 0 18px; }
.maps { display: flex; flex-wrap: wrap; gap: 24px; }
.status-bad { color: #b00020; font-weight: bold; }
nav a { margin-right: 14px; }
"""


def _table_html(table: pd.DataFrame, numeric: set[str] | None = None) -> str:
    """``table`` (already formatted as strings) as an escaped HTML table."""
    if table.empty:
        return "<p class='note'>None.</p>"
    numeric = numeric or set()
    head = "".join(f"<th>{escape(c)}</th>" for c in table.columns)
    rows = []
    for values in table.itertuples(index=False):
        cells = "".join(
            f"<td class='num'>{escape(v)}</td>" if c in numeric else f"<td>{escape(v)}</td>"
            for c, v in zip(table.columns, values)
        )
        rows.append(f"<tr>{cells}</tr>")
    return f"<div class='scroll'><table class='data'><thead><tr>{head}</tr></thead><tbody>{''.join(rows)}</tbody></table></div>"


def _transposed_html(table: pd.DataFrame, corner: str) -> str:
    """A table with one row per run shown with one column per run (runs are few, figures many)."""
    if table.empty:
        return "<p class='note'>None.</p>"
    text = format_table(table)
    runs = list(text["run"])
    head = f"<th>{escape(corner)}</th>" + "".join(f"<th>{escape(r)}</th>" for r in runs)
    rows = []
    for column in table.columns:
        if column == "run":
            continue
        numeric = column in _numeric_columns(table)
        cls = " class='num'" if numeric else ""
        cells = "".join(f"<td{cls}>{escape(v)}</td>" for v in text[column])
        rows.append(f"<tr><th>{escape(column)}</th>{cells}</tr>")
    return f"<div class='scroll'><table class='data'><thead><tr>{head}</tr></thead><tbody>{''.join(rows)}</tbody></table></div>"


def _numeric_columns(table: pd.DataFrame) -> set[str]:
    return {c for c in table.columns if pd.api.types.is_numeric_dtype(table[c]) and not pd.api.types.is_bool_dtype(table[c])}


def _setting(result: RunResult, scenario, key: str, default=None):
    if key in result.settings:
        return result.settings[key]
    settings = getattr(scenario, "settings", None)
    return getattr(settings, key, default)


def _number(value, fmt: str) -> str:
    try:
        return fmt.format(float(value))
    except (TypeError, ValueError):
        return "–"


def assumptions_table(results: Mapping[str, RunResult], scenario) -> pd.DataFrame:
    """One row per run: the settings that decide its numbers, printed for people."""
    rows = []
    for run, r in results.items():
        cap = _setting(r, scenario, "co2_cap_t_per_a", 0.0) or 0.0
        days = int(_setting(r, scenario, "typical_days", 0) or 0)
        limit = _setting(r, scenario, "network_plant_limit_kw", 0.0) or 0.0
        rows.append({
            "run": str(run),
            "objective": objective_label(r.objective),
            "cost case": cost_case_label(r.cost_case),
            "CO2 cap [t/a]": _number(cap, "{:,.0f}") if float(cap) > 0 else "none",
            "time resolution": (f"{days} typical days" if days > 0 else
                                "full hourly year, capacities held from a plan" if (r.extras or {}).get("fixed_plan")
                                else "full hourly year"),
            "discount rate [%/a]": _number(100 * float(_setting(r, scenario, "discount_rate", float("nan"))), "{:.2f}"),
            "target year": str(_setting(r, scenario, "target_year", "–")),
            "reinjection window [°C]": (
                f"{_number(_setting(r, scenario, 'reinjection_min_temp_c'), '{:.1f}')} to "
                f"{_number(_setting(r, scenario, 'reinjection_max_temp_c'), '{:.1f}')}"
            ),
            "value of unserved heat [€/MWh]": _number(_setting(r, scenario, "value_of_unserved_heat_eur_per_mwh"), "{:,.0f}"),
            "network plant limit [kW]": _number(limit, "{:,.0f}") if float(limit) > 0 else "none",
            "heating base [°C]": _number(_setting(r, scenario, "heating_base_temp_c"), "{:.1f}"),
            "input fingerprint (SHA-256)": (r.input_hash or "")[:16],
        })
    return pd.DataFrame(rows)


def cost_case_table(results: Mapping[str, RunResult], scenario) -> pd.DataFrame:
    """One row per cost case used by the runs: its description, CO2 price, price factors and subsidies."""
    prices = getattr(scenario, "prices", None)
    cases = getattr(scenario, "cost_cases", {}) or {}
    rows = []
    for name in dict.fromkeys(r.cost_case for r in results.values()):
        case = cases.get(name)
        if case is None:
            rows.append({"cost case": cost_case_label(name), "description": "(not in this scenario)"})
            continue
        co2 = case.co2_eur_per_t if case.co2_eur_per_t is not None else getattr(prices, "co2_eur_per_t", None)
        rows.append({
            "cost case": cost_case_label(name),
            "description": case.description,
            "CO2 price [€/t]": _number(co2, "{:,.0f}"),
            "gas price": f"{_number(getattr(prices, 'gas_eur_per_mwh', None), '{:,.1f}')} €/MWh × {case.gas_price_factor:g}",
            "oil price": f"{_number(getattr(prices, 'oil_eur_per_mwh', None), '{:,.1f}')} €/MWh × {case.oil_price_factor:g}",
            "biomass price": f"{_number(getattr(prices, 'biomass_eur_per_mwh', None), '{:,.1f}')} €/MWh × {case.biomass_price_factor:g}",
            "electricity price factor": f"× {case.electricity_price_factor:g}",
            "network price factor": f"× {case.network_price_factor:g}",
            "investment subsidies": ", ".join(f"{k} {100 * float(v):.0f} %" for k, v in case.subsidy_share.items()) or "none",
            "investment factors": ", ".join(f"{k} × {float(v):g}" for k, v in case.investment_factor.items()) or "none",
        })
    return pd.DataFrame(rows)


def firmness_section(ranges, result: RunResult, technologies=None) -> str:
    """A run's near-optimal ranges (:func:`engine.studies.alternatives.run_firmness`) as an HTML section: the
    table, the least and most firm technologies and the caution."""
    names = ({} if technologies is None else
             dict(zip(technologies["technology_id"].astype(str), technologies["name"].astype(str))))
    table = firmness_table(ranges, result, names)
    full_year_run = not int((result.settings or {}).get("typical_days", 0) or 0)
    where = (f"solved on {ranges.typical_days} typical days" if ranges.typical_days
             else "solved over the full year")
    if ranges.typical_days and full_year_run:
        where += ", while this run is over the full year: they bracket the typical days' least-cost plan"
    return (f"<h4>How firm the technology split is (within +{ranges.slack_pct:g} % of the least cost)</h4>"
            "<p class='note'>The least and the most heat of each technology among the plans that cost at most "
            f"+{ranges.slack_pct:g} % more than the least-cost plan ({escape(where)}; near-optimal alternatives, "
            "docs/model.md section 8). A wide range marks a near-tie: the model leaves that figure open.</p>"
            + _table_html(format_table(table), _numeric_columns(table))
            + f"<p class='note'>{escape(firmness_summary(table, ranges.slack_pct))}</p>"
            + f"<p class='note'>{escape(cautions.FIRMNESS)}</p>")


def html_report(results: Mapping[str, RunResult], scenario, technologies=None, title: str | None = None,
                heat_plan: HeatPlan | None = None, firmness: Mapping | None = None) -> str:
    """The report as one HTML document (a string); write it to a ``.html`` file to share it.

    Parameters
    ----------
    results : dict of run name -> RunResult
        The first run is the baseline of the differences.
    scenario : Scenario
        Districts (for the maps), wells, technologies, prices and cost cases.
    technologies : DataFrame, optional
        Catalogue for names and colours; defaults to ``scenario.technologies``.
    title : str, optional
        Defaults to "Heat supply screening: <scenario name>".
    heat_plan : HeatPlan, optional
        A pathway and/or designation: the report gains a heat-plan chapter (:mod:`engine.outputs.plan_report`).
    firmness : dict of run name -> NearOptimalRanges, optional
        The runs' near-optimal ranges (:func:`engine.studies.alternatives.run_firmness`): each named run gains a
        section on how firm its technology split is (:func:`firmness_section`).
    """
    if not isinstance(results, Mapping) or not results:
        raise ValueError("results: expected a non-empty dict of run name -> RunResult")
    if technologies is None:
        technologies = getattr(scenario, "technologies", None)
    scenario_name = getattr(getattr(scenario, "settings", None), "name", "") or next(iter(results.values())).scenario_name
    title = title or f"Heat supply screening: {scenario_name}"
    runs = {str(k): v for k, v in results.items()}
    solved = {k: v for k, v in runs.items() if v.tables.get("districts") is not None}
    baseline = next(iter(runs))
    generated = _dt.datetime.now(_dt.timezone.utc).strftime("%Y-%m-%d %H:%M UTC")
    figures = FigureSet(FIGURE_CONFIG)
    _figure_html = figures.add

    body = [
        f"<h1>{escape(title)}</h1>",
        f"<p class='meta'>Scenario: {escape(scenario_name)} · {len(runs)} run(s) · generated {generated}</p>",
        f"<div class='caution'><b>Caution.</b> {escape(cautions.RESULTS)}</div>",
        "<nav>" + "".join(f"<a href='#{a}'>{t}</a>" for a, t in (
            ("overview", "Overview"), ("differences", "Differences"), ("costs", "Costs"), ("supply", "Supply"),
            ("runs", "Runs"), ("duration", "Load duration"))
            + ((("heatplan", "Heat plan"),) if heat_plan is not None and not heat_plan.empty else ())
            + (("assumptions", "Assumptions"), ("cautions", "Cautions"))) + "</nav>",
    ]

    kpi = kpi_table(runs, technologies)
    body += ["<h2 id='overview'>Key figures</h2>", _transposed_html(kpi, "figure")]
    bad = [(k, v) for k, v in runs.items() if k not in solved or not v.solved]
    for name, r in bad:
        body.append(f"<p class='status-bad'>Run {escape(name)}: {escape(status_label(r.status))}. "
                    f"{escape(r.message)}</p>")
    unserved = [k for k, v in solved.items() if v.unserved_heat_mwh_per_a > 0.5]
    if unserved:
        body.append("<p class='status-bad'>Unserved heat in: " + escape(", ".join(unserved))
                    + ". The allowed supply cannot meet the demand there; see the district tables.</p>")

    body.append("<h2 id='differences'>Differences against the baseline</h2>")
    if len(runs) > 1:
        diff = difference_table(runs, baseline, technologies)
        body += [f"<p class='note'>Baseline: {escape(baseline)}. Positive values are more than in the baseline.</p>",
                 _transposed_html(diff, "against the baseline")]
        for name, r in solved.items():
            if name == baseline or baseline not in solved:
                continue
            changes = main_supply_changes(r, solved[baseline], technologies)
            body += [f"<h3>Districts whose main supply changes: {escape(name)}</h3>",
                     _table_html(changes.drop(columns=["district_id"]).rename(columns={"name": "district"}))]
    else:
        body.append("<p class='note'>Only one run: nothing to compare.</p>")

    body.append("<h2 id='costs'>Annual cost</h2>")
    body.append(_figure_html(cost_breakdown_figure(solved, by="run")))
    body.append(_figure_html(cost_breakdown_figure(solved, by="district")))

    body.append("<h2 id='supply'>Heat supply</h2>")
    body.append(_figure_html(supply_mix_figure(solved, technologies)))

    body.append("<h2 id='runs'>Runs</h2>")
    change_range = (shared_value_range(scenario, [v for k, v in solved.items() if k != baseline],
                                       "change_total_cost", solved[baseline], technologies)
                    if baseline in solved else None)
    for name, r in runs.items():
        body.append(f"<h3>{escape(name)}</h3>")
        body.append(f"<p class='note'>Status: {escape(status_label(r.status))}. {escape(r.message)} Cost case: "
                    f"{escape(cost_case_label(r.cost_case))}; objective: {escape(objective_label(r.objective))}.</p>")
        if name not in solved:
            continue
        maps = [svg_district_map(scenario, r, "main_supply", technologies=technologies, width_px=600,
                                 title=f"Main heat supply, {name}")]
        if name != baseline and baseline in solved:
            maps.append(svg_district_map(scenario, r, "change_total_cost", baseline=solved[baseline],
                                         technologies=technologies, width_px=600, value_range=change_range,
                                         title=f"Change of annual cost against {baseline}"))
        body.append("<div class='maps'>" + "".join(maps) + "</div>")
        body.append("<p class='note'>Hover a district or a well for its figures.</p>")
        body.append(_figure_html(district_supply_figure(r, technologies)))
        body.append(_figure_html(load_curve_figure(r, technologies)))
        if (firmness or {}).get(name) is not None:
            body.append(firmness_section(firmness[name], r, technologies))

    body.append("<h2 id='duration'>Load duration</h2>")
    body.append(_figure_html(load_duration_figure(solved, technologies=technologies)))

    if heat_plan is not None and not heat_plan.empty:
        body.append(heat_plan_chapter(heat_plan, technologies, figures))

    body.append("<h2 id='assumptions'>Assumptions</h2>")
    body += ["<h3>Run settings</h3>", _table_html(assumptions_table(runs, scenario))]
    body += ["<h3>Cost cases</h3>", _table_html(cost_case_table(runs, scenario))]
    prices = getattr(scenario, "prices", None)
    if prices is not None:
        factors = getattr(prices, "co2_kg_per_mwh", {}) or {}
        fuel = pd.DataFrame({
            "fuel": ["gas", "oil", "biomass"],
            "price [€/MWh]": [_number(getattr(prices, f"{f}_eur_per_mwh", None), "{:,.1f}") for f in ("gas", "oil", "biomass")],
            "CO2 factor [kg/MWh]": [_number(factors.get(f), "{:,.1f}") for f in ("gas", "oil", "biomass")],
        })
        body += ["<h3>Fuel prices and CO2 factors of the scenario (before the cost case)</h3>", _table_html(fuel)]
        body.append(f"<p class='note'>Scenario CO2 price: {_number(prices.co2_eur_per_t, '{:,.0f}')} €/t. Hourly "
                    "electricity and network prices and CO2 factors come from the scenario's hourly series.</p>")
    aquifer = getattr(scenario, "aquifer", None)
    if aquifer is not None and dataclasses.is_dataclass(aquifer):
        rows = pd.DataFrame({"parameter": [AQUIFER_LABELS.get(f.name, words(f.name))
                                           for f in dataclasses.fields(aquifer)],
                             "value": [_number(getattr(aquifer, f.name), "{:,.4g}") for f in dataclasses.fields(aquifer)]})
        body += ["<h3>Aquifer (interference screening)</h3>", _table_html(rows)]

    body += [
        "<h2 id='cautions'>Cautions</h2>",
        f"<div class='caution'><p>{escape(cautions.RESULTS)}</p>"
        f"<p>{escape(cautions.WELLS)} Well heat, flows and reinjection temperatures come from a screening model, "
        "not from the numerical groundwater model a permit requires.</p>"
        "<p>Where typical days stand for the year, the hourly curves are rebuilt from them: the peaks of single "
        "days are smoothed out.</p>"
        "<p>Costs are annual: investments as annuities over the technologies' lifetimes at the run's discount "
        "rate, plus operation, energy and CO2.</p></div>",
    ]

    return (
        "<!DOCTYPE html><html lang='en'><head><meta charset='utf-8'>"
        "<meta name='viewport' content='width=device-width, initial-scale=1'>"
        f"<title>{escape(title)}</title><style>{_STYLE}</style></head>"
        f"<body><main>{''.join(body)}</main>{figures.scripts()}</body></html>"
    )
