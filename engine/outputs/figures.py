"""Figures and tables of one or several runs, as pure functions of :class:`engine.model.results.RunResult` objects.

The dashboard shows these figures and the exported report embeds the very same ones, so what a planner shares is
what they saw. Every function takes results (a dict ``run name -> RunResult`` where runs are compared), returns a
plotly ``go.Figure`` or a pandas DataFrame, and reads nothing else: no files, no session state.

Colours come from :mod:`engine.outputs.palette` (one hue per technology kind, colour-blind safe). Names that come from the
user (runs, districts, technologies) are HTML-escaped before they reach a figure, because plotly renders a subset of
HTML in legends, titles and axis labels. Tables keep the raw names; whoever renders a table as HTML escapes it
(see :func:`engine.outputs.report.html_report`).

Runs that did not solve (no tables) are left out of the figures and kept, with their status, in the tables.
"""

from __future__ import annotations

import html
from collections.abc import Mapping

import numpy as np
import pandas as pd
import plotly.graph_objects as go

from engine.outputs.palette import (
    COST_PART_COLORS,
    COST_PART_LABELS,
    DEMAND_LINE_DASH,
    FIGURE_TEMPLATE,
    RUN_LINE_DASHES,
    STORE_CHARGE_COLOR,
    TECHNOLOGY_KIND_COLORS,
    technology_colors,
)
from engine.model.results import COST_PARTS, RunResult
from engine.outputs.formats import format_number
from engine.outputs.labels import cost_case_label, objective_label, status_label

STACK_ORDER = (
    "groundwater_heat_pump",
    "air_heat_pump",
    "network_connection",
    "fuel_boiler",
    "electric_boiler",
    "heat_store",
    "chiller",
    "groundwater_cooling",
)
"""Order of technology kinds from the bottom of a stack up: the base-load kinds first, then the peak boilers."""

HOURS_PER_WEEK = 168
WEEKS_PER_YEAR = 52
_ZERO_KW = 1e-6
_FIGURE_TEMPLATE = FIGURE_TEMPLATE
FIGURE_CONFIG = {"displaylogo": False, "responsive": True}
"""Plotly config the dashboard and the report pass when showing a figure."""


# ---------------------------------------------------------------------------------------------------- helpers
MIN_FIGURE_PX = 200
"""No figure is drawn shorter than this."""


def figure_height(n_bars: int, bar_px: int = 28, extra_px: int = 160) -> int:
    """Height [px] of a bar chart: a fixed share per bar plus room for title, legend and axis, at least
    :data:`MIN_FIGURE_PX` (common practice: bars about 20 to 30 px)."""
    return max(MIN_FIGURE_PX + 100, int(extra_px + bar_px * max(int(n_bars), 1)))


def label_margin(longest_label_chars: int) -> int:
    """Left margin [px] that fits the longest category label (about 7 px a character at plotly's 12 px font)."""
    return int(min(420, max(60, 20 + 7 * int(longest_label_chars))))


def shared_y_range(figures) -> None:
    """Give figures shown side by side one y range (in place): stacked areas summed, lines by their values.

    Figures whose y axis titles differ (another unit) are left alone.
    """
    figures = [f for f in figures if f is not None and len(f.data)]
    if len(figures) < 2 or len({f.layout.yaxis.title.text for f in figures}) > 1:
        return
    low, high = 0.0, 0.0
    for fig in figures:
        stacks: dict[str, np.ndarray] = {}
        for trace in fig.data:
            y = np.asarray(trace.y if trace.y is not None else [], dtype=float)
            if not len(y):
                continue
            group = getattr(trace, "stackgroup", None)
            if group:
                stacks[group] = stacks.get(group, np.zeros_like(y)) + np.nan_to_num(y)
            else:
                low, high = min(low, float(np.nanmin(y))), max(high, float(np.nanmax(y)))
        for total in stacks.values():
            low, high = min(low, float(total.min())), max(high, float(total.max()))
    pad = 0.05 * (high - low or 1.0)
    for fig in figures:
        fig.update_yaxes(range=[low - (pad if low < 0 else 0.0), high + pad])


def escape(text) -> str:
    """``text`` made safe for plotly labels and HTML (``&``, ``<``, ``>`` and quotes become entities)."""
    return html.escape(str(text), quote=True)


def _solved(results: Mapping[str, RunResult]) -> dict[str, RunResult]:
    if not isinstance(results, Mapping):
        raise ValueError("results: expected a dict of run name -> RunResult")
    return {str(name): r for name, r in results.items() if r.tables.get("districts") is not None}


def technology_catalogue(technologies=None, results=()) -> pd.DataFrame:
    """technology_id, name, kind of every technology of ``technologies`` and of the results' supply tables.

    ``technologies`` may be a DataFrame (``Scenario.technologies``), a list of (technology_id, kind) pairs or
    None; a technology found only in a result takes its kind from the result and its id as its name.
    """
    rows: dict[str, dict] = {}
    if isinstance(technologies, pd.DataFrame):
        for rec in technologies.to_dict(orient="records"):
            tid = str(rec["technology_id"])
            name = rec.get("name")
            name = tid if name is None or (pd.api.types.is_scalar(name) and pd.isna(name)) or str(name) == "" else name
            rows[tid] = {"technology_id": tid, "name": str(name), "kind": str(rec.get("kind", ""))}
    elif technologies is not None:
        for item in technologies:
            tid, kind = str(item[0]), str(item[1])
            rows[tid] = {"technology_id": tid, "name": tid, "kind": kind}
    for result in results:
        supply = result.tables.get("supply")
        if supply is None or supply.empty:
            continue
        for tid, kind in supply[["technology_id", "kind"]].drop_duplicates().itertuples(index=False):
            rows.setdefault(str(tid), {"technology_id": str(tid), "name": str(tid), "kind": str(kind)})
    catalogue = pd.DataFrame(list(rows.values()), columns=["technology_id", "name", "kind"])
    rank = {k: i for i, k in enumerate(STACK_ORDER)}
    catalogue["_rank"] = catalogue["kind"].map(lambda k: rank.get(k, len(rank)))
    return catalogue.sort_values(["_rank", "technology_id"]).drop(columns="_rank").reset_index(drop=True)


def _scale(peak: float, unit: str) -> tuple[float, str]:
    """Divisor and unit label: kW below 10 MW, MW above (``unit`` is 'kW' or '€/a')."""
    if unit == "kW":
        return (1000.0, "MW") if peak >= 10_000 else (1.0, "kW")
    if peak >= 1e6:
        return 1e6, "M€/a"
    if peak >= 1e4:
        return 1e3, "k€/a"
    return 1.0, "€/a"


def _check_quantity(quantity: str) -> str:
    q = str(quantity).removesuffix("_kw")
    if q not in ("heat", "cooling"):
        raise ValueError(f"quantity must be 'heat' or 'cooling', got {quantity!r}")
    return q


def _district_label(result: RunResult, district_id) -> str:
    if district_id is None:
        return "whole city"
    table = result.tables["districts"]
    match = table[table["district_id"] == district_id]
    if match.empty:
        known = ", ".join(map(str, table["district_id"]))
        raise ValueError(f"district_id {district_id!r} is not a district of this run (known: {known})")
    return escape(match["name"].iloc[0])


def _empty_figure(title: str, text: str) -> go.Figure:
    fig = go.Figure()
    fig.update_layout(template=_FIGURE_TEMPLATE, title=title, height=MIN_FIGURE_PX + 100)
    fig.add_annotation(text=escape(text), showarrow=False, x=0.5, y=0.5, xref="paper", yref="paper")
    fig.update_xaxes(visible=False)
    fig.update_yaxes(visible=False)
    return fig


def _title(text: str, subtitle: str | None = None) -> dict:
    title = {"text": text, "x": 0.01, "xanchor": "left"}
    if subtitle:
        title["subtitle"] = {"text": subtitle}
    return title


def _hourly_parts(result: RunResult, catalogue: pd.DataFrame, district_id, quantity: str):
    """Hourly year split into stacked parts: list of (key, label, kind, values [kW], stackgroup)."""
    hourly = result.hourly(district_id, f"{quantity}_kw")
    demand = hourly["demand_kw"].to_numpy(float)
    unserved = hourly["unserved_kw"].to_numpy(float)
    names = dict(zip(catalogue["technology_id"], catalogue["name"]))
    kinds = dict(zip(catalogue["technology_id"], catalogue["kind"]))
    order = [t for t in catalogue["technology_id"] if t in hourly.columns]
    order += sorted(c for c in hourly.columns if c not in order and c not in ("demand_kw", "unserved_kw"))
    parts = []
    for tech in order:
        values = hourly[tech].to_numpy(float)
        label = escape(names.get(tech, tech))
        kind = kinds.get(tech, "")
        if kind == "heat_store":
            parts.append((tech, f"{label} (discharge)", kind, np.clip(values, 0.0, None), "supply"))
            parts.append((tech, f"{label} (charge)", kind, np.clip(values, None, 0.0), "charge"))
        else:
            parts.append((tech, label, kind, values, "supply"))
    parts.append(("unserved", "Unserved", "unserved", unserved, "supply"))
    parts = [p for p in parts if np.nanmax(np.abs(p[3]), initial=0.0) > _ZERO_KW]
    return parts, demand


# ---------------------------------------------------------------------------------------------------- load curve
def load_curve_figure(
    result: RunResult, technologies=None, district_id: str | None = None, week: int | None = None,
    quantity: str = "heat",
) -> go.Figure:
    """Hourly supply by technology, stacked, with demand as a dashed line.

    Parameters
    ----------
    result : RunResult
    technologies : DataFrame or list of (technology_id, kind), optional
        The catalogue, for names and colours.
    district_id : str, optional
        One district; None shows the whole city.
    week : int, optional
        1..52 shows that week hour by hour (hours ``168 (week - 1)`` to ``168 week - 1``); None shows the
        whole year as daily means of the hourly dispatch (one point a day keeps the figure light).
    quantity : {'heat', 'cooling'}

    Stores are shown with their discharge above zero and their charge below; unserved heat is stacked on top in
    its own colour, so the top of the stack meets the demand line whenever no store charges.
    """
    quantity = _check_quantity(quantity)
    if result.tables.get("districts") is None:
        return _empty_figure("Load curve", f"No result: {result.message or result.status}")
    if week is not None and (isinstance(week, bool) or not isinstance(week, (int, np.integer))
                             or not 1 <= int(week) <= WEEKS_PER_YEAR):
        raise ValueError(f"week must be a whole number from 1 to {WEEKS_PER_YEAR} or None, got {week!r}")
    where = _district_label(result, district_id)
    catalogue = technology_catalogue(technologies, [result])
    colors = technology_colors(catalogue)
    parts, demand = _hourly_parts(result, catalogue, district_id, quantity)
    n_hours = len(demand)
    typical = len(result.tables["steps"]) < n_hours
    rebuilt = " rebuilt from typical days" if typical else ""
    if week is None:
        days = np.arange(n_hours) // 24

        def shown(values):
            return pd.Series(values).groupby(days).mean().to_numpy()

        x = np.arange(1, days.max() + 2)
        x_title = "Day of the year"
        title = f"{quantity.capitalize()} supply by technology, {where}, whole year"
        subtitle = f"Daily means of the hourly dispatch{rebuilt}; stores: discharge above zero, charge below"
        hover_x = "day %{x}"
    else:
        start = (int(week) - 1) * HOURS_PER_WEEK
        window = slice(start, min(start + HOURS_PER_WEEK, n_hours))

        def shown(values):
            return np.asarray(values)[window]

        x = np.arange(n_hours)[window]
        x_title = "Hour of the year"
        title = f"{quantity.capitalize()} supply by technology, {where}, week {int(week)}"
        subtitle = f"Hourly dispatch{rebuilt}, hours {x[0]} to {x[-1]}; stores: discharge above zero, charge below"
        hover_x = "hour %{x}"
    shown_demand = shown(demand)
    divisor, unit = _scale(float(np.nanmax(shown_demand, initial=0.0)), "kW")
    fig = go.Figure()
    for key, label, kind, values, group in parts:
        window_values = shown(values)
        if np.nanmax(np.abs(window_values), initial=0.0) <= _ZERO_KW:
            continue  # idle in the shown period: kept out of the legend
        y = window_values / divisor
        color = colors.get(key, TECHNOLOGY_KIND_COLORS["unserved"] if key == "unserved" else "#5F5F5F")
        if group == "charge":
            color = STORE_CHARGE_COLOR
        fig.add_trace(
            go.Scatter(
                x=x, y=y, name=label, mode="lines", stackgroup=group, line={"width": 0.5, "color": color},
                fillcolor=color, legendgroup=key,
                hovertemplate=f"{label}: %{{y:,.2f}} {unit}<extra>{hover_x}</extra>",
            )
        )
    fig.add_trace(
        go.Scatter(
            x=x, y=shown_demand / divisor, name="Demand", mode="lines",
            line={"color": TECHNOLOGY_KIND_COLORS["demand"], "dash": DEMAND_LINE_DASH, "width": 2},
            hovertemplate=f"Demand: %{{y:,.2f}} {unit}<extra>{hover_x}</extra>",
        )
    )
    fig.update_layout(
        template=_FIGURE_TEMPLATE, title=_title(title, subtitle), height=500, hovermode="x unified",
        legend={"orientation": "h", "yanchor": "top", "y": -0.24, "x": 0},
        margin={"t": 90, "l": 70, "r": 20, "b": 60},
    )
    fig.update_xaxes(title_text=x_title)
    fig.update_yaxes(title_text=f"{quantity.capitalize()} [{unit}]", tickformat=",")
    return fig


# ---------------------------------------------------------------------------------------------------- duration
def load_duration_figure(
    results: Mapping[str, RunResult], district_id: str | None = None, quantity: str = "heat",
    technologies=None, top_n: int = 3,
) -> go.Figure:
    """Load duration curves: demand and the ``top_n`` largest technologies' output, sorted high to low.

    Each curve is sorted on its own (a duration curve of a technology says for how many hours of the year it
    runs at least at a given output; curves of different technologies are not stacked, because sorted dispatch
    does not add up hour by hour). With several runs their curves are overlaid, one line dash per run.
    """
    quantity = _check_quantity(quantity)
    solved = _solved(results)
    if not solved:
        return _empty_figure("Load duration", "No solved run to show")
    catalogue = technology_catalogue(technologies, solved.values())
    colors = technology_colors(catalogue)
    curves = []
    peak = 0.0
    for k, (run, result) in enumerate(solved.items()):
        parts, demand = _hourly_parts(result, catalogue, district_id, quantity)
        parts = [p for p in parts if p[4] == "supply" and p[2] not in ("heat_store", "unserved")]
        parts.sort(key=lambda p: -float(np.nansum(p[3])))
        curves.append((k, run, demand, parts[: max(int(top_n), 0)]))
        peak = max(peak, float(np.nanmax(demand, initial=0.0)))
    divisor, unit = _scale(peak, "kW")
    single = len(curves) == 1
    where = _district_label(next(iter(solved.values())), district_id)
    fig = go.Figure()
    for k, run, demand, parts in curves:
        run_label = escape(run)
        dash = RUN_LINE_DASHES[k % len(RUN_LINE_DASHES)]
        n = len(demand)
        keep = np.unique(np.r_[np.arange(0, n, max(1, n // 1000)), n - 1])
        hours = keep + 1
        for key, label, kind, values, _ in [("demand", "Demand", "demand", demand, "")] + parts:
            sorted_values = np.sort(np.nan_to_num(values))[::-1][keep] / divisor
            is_demand = key == "demand"
            name = label if single else f"{label} ({run_label})"
            fig.add_trace(
                go.Scatter(
                    x=hours, y=sorted_values, mode="lines", name=name,
                    legendgroup=run_label, legendgrouptitle_text=None if single else run_label,
                    line={
                        "color": colors.get(key, "#5F5F5F"),
                        "dash": (DEMAND_LINE_DASH if single else dash) if is_demand else ("solid" if single else dash),
                        "width": 2.5 if is_demand else 1.8,
                    },
                    hovertemplate=f"{name}: %{{y:,.2f}} {unit} for %{{x:,}} h<extra></extra>",
                )
            )
    subtitle = (
        f"Demand and the {int(top_n)} largest technologies, each sorted on its own"
        + ("" if single else "; one line dash per run")
    )
    fig.update_layout(
        template=_FIGURE_TEMPLATE, height=440,
        title=_title(f"Load duration of {quantity}, {where}", subtitle),
        legend={"orientation": "v", "groupclick": "toggleitem"},
        margin={"t": 90, "l": 70, "r": 20, "b": 50},
    )
    fig.update_xaxes(title_text="Hours of the year at or above this output [h]", tickformat=",")
    fig.update_yaxes(title_text=f"{quantity.capitalize()} [{unit}]", tickformat=",", rangemode="tozero")
    return fig


# ---------------------------------------------------------------------------------------------------- costs
def _unique_labels(names, ids) -> list[str]:
    names = [str(n) for n in names]
    counts = pd.Series(names).value_counts()
    return [escape(n if counts[n] == 1 else f"{n} ({i})") for n, i in zip(names, ids)]


def cost_breakdown_figure(results: Mapping[str, RunResult], by: str = "run") -> go.Figure:
    """Annual cost split into its parts, stacked bars.

    ``by='run'`` puts the runs side by side (one bar each, the whole city); ``by='district'`` shows one bar per
    district, grouped by run where there are several.
    """
    if by not in ("run", "district"):
        raise ValueError(f"by must be 'run' or 'district', got {by!r}")
    solved = _solved(results)
    if not solved:
        return _empty_figure("Annual cost", "No solved run to show")
    fig = go.Figure()
    if by == "run":
        totals = {run: r.cost_breakdown_eur_per_a() for run, r in solved.items()}
        divisor, unit = _scale(max(sum(t.values()) for t in totals.values()), "€/a")
        x = [escape(run) for run in solved]
        for part in COST_PARTS:
            y = [totals[run][part] / divisor for run in solved]
            fig.add_trace(go.Bar(x=x, y=y, name=COST_PART_LABELS[part], marker_color=COST_PART_COLORS[part],
                                 hovertemplate=f"{COST_PART_LABELS[part]}: %{{y:,.2f}} {unit}<extra>%{{x}}</extra>"))
        title = "Annual cost by part, whole city"
        x_title = "Run"
    else:
        first = next(iter(solved.values())).tables["districts"]
        labels = dict(zip(first["district_id"], _unique_labels(first["name"], first["district_id"])))
        frames = []
        for run, r in solved.items():
            table = r.tables["districts"].copy()
            table["run"] = run
            frames.append(table)
        table = pd.concat(frames, ignore_index=True)
        order = list(dict.fromkeys(list(first["district_id"]) + list(table["district_id"])))
        peak = float(table["total_cost_eur_per_a"].max())
        divisor, unit = _scale(peak, "€/a")
        table["_order"] = table["district_id"].map({d: i for i, d in enumerate(order)})
        table["_run_order"] = table["run"].map({run: k for k, run in enumerate(solved)})
        table = table.sort_values(["_order", "_run_order"], kind="stable")  # runs in the order given
        district_axis = [labels.get(d, escape(d)) for d in table["district_id"]]
        y = [district_axis, [escape(r) for r in table["run"]]] if len(solved) > 1 else district_axis
        for part in COST_PARTS:
            fig.add_trace(
                go.Bar(y=y, x=table[f"{part}_eur_per_a"].to_numpy(float) / divisor, name=COST_PART_LABELS[part],
                       marker_color=COST_PART_COLORS[part], orientation="h",
                       hovertemplate=f"{COST_PART_LABELS[part]}: %{{x:,.2f}} {unit}<extra>%{{y}}</extra>")
            )
        title = "Annual cost by part and district" + (", grouped by run" if len(solved) > 1 else "")
        longest = max(len(str(v)) for v in district_axis) + (
            max(len(str(r)) for r in table["run"]) + 2 if len(solved) > 1 else 0)
        fig.update_layout(
            template=_FIGURE_TEMPLATE, barmode="relative", title=_title(title),
            height=figure_height(len(table), bar_px=22 if len(solved) > 1 else 28, extra_px=170),
            legend={"orientation": "h", "yanchor": "bottom", "y": 1.0, "x": 0},
            margin={"t": 110, "l": label_margin(longest), "r": 20, "b": 50},
        )
        fig.update_yaxes(title_text=None, autorange="reversed")
        fig.update_xaxes(title_text=f"Annual cost [{unit}]", tickformat=",")
        return fig
    fig.update_layout(
        template=_FIGURE_TEMPLATE, barmode="relative", height=500, title=_title(title),
        legend={"orientation": "h", "yanchor": "bottom", "y": 1.0, "x": 0},
        margin={"t": 110, "l": 70, "r": 20, "b": 60},
    )
    fig.update_xaxes(title_text=x_title)
    fig.update_yaxes(title_text=f"Annual cost [{unit}]", tickformat=",")
    return fig


# ---------------------------------------------------------------------------------------------------- supply mix
def _mix_traces(fig: go.Figure, rows: list[tuple[str, dict, float]], catalogue: pd.DataFrame) -> None:
    """Horizontal stacked bars; ``rows`` are (label, heat by technology [MWh/a], unserved [MWh/a])."""
    colors = technology_colors(catalogue)
    labels = [r[0] for r in rows]
    for tech, name, kind in catalogue[["technology_id", "name", "kind"]].itertuples(index=False):
        if kind == "heat_store":
            continue
        values = [float(r[1].get(tech, 0.0)) for r in rows]
        if max((abs(v) for v in values), default=0.0) <= 1e-9:
            continue
        label = escape(name)
        fig.add_trace(go.Bar(y=labels, x=values, name=label, orientation="h", marker_color=colors[tech],
                             hovertemplate=f"{label}: %{{x:,.0f}} MWh/a<extra>%{{y}}</extra>"))
    unserved = [float(r[2]) for r in rows]
    if max(unserved, default=0.0) > 1e-9:
        fig.add_trace(go.Bar(y=labels, x=unserved, name="Unserved", orientation="h",
                             marker_color=TECHNOLOGY_KIND_COLORS["unserved"],
                             hovertemplate="Unserved: %{x:,.0f} MWh/a<extra>%{y}</extra>"))


def supply_mix_figure(results: Mapping[str, RunResult], technologies=None) -> go.Figure:
    """Annual heat by technology per run, stacked horizontal bars [MWh/a] (heat stores are left out)."""
    solved = _solved(results)
    if not solved:
        return _empty_figure("Heat supply mix", "No solved run to show")
    catalogue = technology_catalogue(technologies, solved.values())
    rows = [(escape(run), r.heat_by_technology_mwh_per_a(), r.unserved_heat_mwh_per_a) for run, r in solved.items()]
    fig = go.Figure()
    _mix_traces(fig, rows, catalogue)
    fig.update_layout(
        template=_FIGURE_TEMPLATE, barmode="relative", height=figure_height(len(rows), 45, 230),
        title=_title("Heat supply by technology", "Annual heat [MWh/a]; heat stores shift heat in time and are not shown"),
        legend={"orientation": "h", "yanchor": "top", "y": -0.12 if len(rows) > 3 else -0.3, "x": 0,
                "traceorder": "normal"},
        margin={"t": 90, "l": label_margin(max(len(r[0]) for r in rows)), "r": 20, "b": 50},
    )
    fig.update_xaxes(title_text="Heat [MWh/a]", tickformat=",")
    fig.update_yaxes(title_text="Run", autorange="reversed")
    return fig


def district_supply_figure(result: RunResult, technologies=None) -> go.Figure:
    """Annual heat by technology per district of one run, stacked horizontal bars [MWh/a]."""
    if result.tables.get("districts") is None:
        return _empty_figure("Heat supply by district", f"No result: {result.message or result.status}")
    catalogue = technology_catalogue(technologies, [result])
    table = result.tables["districts"].sort_values("heat_demand_mwh_per_a", ascending=False, kind="stable")
    labels = _unique_labels(table["name"], table["district_id"])
    rows = [
        (label, result.heat_by_technology_mwh_per_a(did), float(uns))
        for label, did, uns in zip(labels, table["district_id"], table["unserved_heat_mwh_per_a"])
    ]
    fig = go.Figure()
    _mix_traces(fig, rows, catalogue)
    fig.update_layout(
        template=_FIGURE_TEMPLATE, barmode="relative", height=figure_height(len(rows), 30, 200),
        title=_title("Heat supply by district and technology",
                     "Annual heat [MWh/a], districts by heat demand; heat stores are not shown"),
        legend={"orientation": "v", "x": 1.01, "xanchor": "left", "y": 1.0, "traceorder": "normal"},
        margin={"t": 90, "l": label_margin(max(len(r[0]) for r in rows)), "r": 20, "b": 50},
    )
    fig.update_xaxes(title_text="Heat [MWh/a]", tickformat=",")
    fig.update_yaxes(title_text=None, autorange="reversed")
    return fig


# ---------------------------------------------------------------------------------------------------- tables
def _heat_column(tech_label: str) -> str:
    return f"heat {tech_label} [MWh/a]"


def city_levelised_cost_eur_per_mwh(result: RunResult) -> float:
    """Total annual cost over the annual heat and cooling demand of the city [€/MWh].

    The same definition as the districts' ``levelised_cost_eur_per_mwh`` (cost over demand, unserved included).
    """
    table = result.tables.get("districts")
    if table is None or table.empty:
        return float("nan")
    demand = float(table["heat_demand_mwh_per_a"].sum() + table["cooling_demand_mwh_per_a"].sum())
    return float(table["total_cost_eur_per_a"].sum()) / demand if demand > 0 else float("nan")


def _technology_labels(technologies, results) -> dict[str, str]:
    if technologies is None:
        catalogue = technology_catalogue(None, results)
        return dict(zip(catalogue["technology_id"], catalogue["technology_id"]))
    catalogue = technology_catalogue(technologies, results)
    names = list(catalogue["name"])
    counts = pd.Series(names).value_counts()
    return {t: (n if counts[n] == 1 else f"{n} ({t})") for t, n in zip(catalogue["technology_id"], names)}


def kpi_table(results: Mapping[str, RunResult], technologies=None) -> pd.DataFrame:
    """One row per run: the city's key figures.

    Columns: run, status, cost case, objective (the last three in words), total cost [€/a], CO2 [t/a],
    heat demand [MWh/a], unserved heat [MWh/a], levelised cost [€/MWh] (city: total cost over heat and cooling demand), then
    ``heat <technology> [MWh/a]`` for every technology that supplies heat in some run (by id, or by name when the
    catalogue is given). Runs that did not solve keep their row with NaN figures.
    """
    if not isinstance(results, Mapping):
        raise ValueError("results: expected a dict of run name -> RunResult")
    solved = _solved(results)
    labels = _technology_labels(technologies, solved.values())
    heat = {run: r.heat_by_technology_mwh_per_a() for run, r in solved.items()}
    used = [t for t in labels if any(abs(h.get(t, 0.0)) > 1e-9 for h in heat.values())]
    rows = []
    for run, r in results.items():
        ok = str(run) in solved
        row = {
            "run": str(run),
            "status": status_label(r.status),
            "cost case": cost_case_label(r.cost_case),
            "objective": objective_label(r.objective),
            "total cost [€/a]": r.total_cost_eur_per_a if ok else float("nan"),
            "CO2 [t/a]": r.co2_t_per_a if ok else float("nan"),
            "heat demand [MWh/a]": r.heat_demand_mwh_per_a if ok else float("nan"),
            "unserved heat [MWh/a]": r.unserved_heat_mwh_per_a if ok else float("nan"),
            "levelised cost [€/MWh]": city_levelised_cost_eur_per_mwh(r) if ok else float("nan"),
        }
        for tech in used:
            row[_heat_column(labels[tech])] = heat[str(run)].get(tech, 0.0) if ok else float("nan")
        rows.append(row)
    columns = ["run", "status", "cost case", "objective", "total cost [€/a]", "CO2 [t/a]", "heat demand [MWh/a]",
               "unserved heat [MWh/a]", "levelised cost [€/MWh]"] + [_heat_column(labels[t]) for t in used]
    return pd.DataFrame(rows, columns=columns)


def main_supply_changes(result: RunResult, baseline_result: RunResult, technologies=None) -> pd.DataFrame:
    """Districts whose main supply (the technology giving them most heat) differs from the baseline.

    Columns: district_id, name, baseline main supply, main supply (technology ids, or names when the catalogue
    is given; 'unserved' or 'none' where no technology supplies heat). A district in only one of the two runs
    counts as changed, with '' on the other side.
    """
    columns = ["district_id", "name", "baseline main supply", "main supply"]
    if result.tables.get("districts") is None or baseline_result.tables.get("districts") is None:
        return pd.DataFrame(columns=columns)
    names = {}
    if technologies is not None:
        catalogue = technology_catalogue(technologies)
        names = dict(zip(catalogue["technology_id"], catalogue["name"]))
    base = baseline_result.tables["districts"].set_index("district_id")
    this = result.tables["districts"].set_index("district_id")
    rows = []
    for did in dict.fromkeys(list(base.index) + list(this.index)):
        before = str(base.at[did, "main_supply"]) if did in base.index else ""
        after = str(this.at[did, "main_supply"]) if did in this.index else ""
        if before != after:
            name = this.at[did, "name"] if did in this.index else base.at[did, "name"]
            rows.append([str(did), str(name), names.get(before, before), names.get(after, after)])
    return pd.DataFrame(rows, columns=columns)


def difference_table(results: Mapping[str, RunResult], baseline: str, technologies=None) -> pd.DataFrame:
    """Every other run against the ``baseline`` run.

    Columns: run, Δ total cost [€/a], Δ CO2 [t/a], Δ unserved heat [MWh/a], ``Δ heat <technology> [MWh/a]`` for
    every technology that supplies heat in some run, districts with changed main supply (a count) and changed
    districts (their names, comma separated). Positive means more than in the baseline.
    """
    if not isinstance(results, Mapping):
        raise ValueError("results: expected a dict of run name -> RunResult")
    if baseline not in results:
        known = ", ".join(map(str, results))
        raise ValueError(f"baseline {baseline!r} is not one of the runs ({known})")
    base = results[baseline]
    solved = _solved(results)
    labels = _technology_labels(technologies, solved.values())
    heat = {run: r.heat_by_technology_mwh_per_a() for run, r in solved.items()}
    used = [t for t in labels if any(abs(h.get(t, 0.0)) > 1e-9 for h in heat.values())]
    base_ok = str(baseline) in solved
    rows = []
    for run, r in results.items():
        if run == baseline:
            continue
        ok = base_ok and str(run) in solved
        nan = float("nan")
        row = {
            "run": str(run),
            "Δ total cost [€/a]": r.total_cost_eur_per_a - base.total_cost_eur_per_a if ok else nan,
            "Δ CO2 [t/a]": r.co2_t_per_a - base.co2_t_per_a if ok else nan,
            "Δ unserved heat [MWh/a]": r.unserved_heat_mwh_per_a - base.unserved_heat_mwh_per_a if ok else nan,
        }
        for tech in used:
            row["Δ " + _heat_column(labels[tech])] = (
                heat[str(run)].get(tech, 0.0) - heat[str(baseline)].get(tech, 0.0) if ok else nan
            )
        changes = main_supply_changes(r, base) if ok else pd.DataFrame(columns=["name"])
        row["districts with changed main supply"] = len(changes) if ok else pd.NA
        row["changed districts"] = ", ".join(changes["name"].astype(str))
        rows.append(row)
    columns = (["run", "Δ total cost [€/a]", "Δ CO2 [t/a]", "Δ unserved heat [MWh/a]"]
               + ["Δ " + _heat_column(labels[t]) for t in used]
               + ["districts with changed main supply", "changed districts"])
    table = pd.DataFrame(rows, columns=columns)
    table["districts with changed main supply"] = table["districts with changed main supply"].astype("Int64")
    return table


def format_value(value, column: str) -> str:
    """A table value as the report and the dashboard print it (:func:`engine.outputs.formats.format_number`).

    The decimals follow the unit in the header (costs per MWh with one decimal, amounts whole, with thousands
    separators), missing values as '–'.
    """
    return format_number(value, column)


def format_table(table: pd.DataFrame) -> pd.DataFrame:
    """``table`` with every value printed by :func:`format_value` (strings, for display only)."""
    return pd.DataFrame(
        {column: [format_value(v, column) for v in table[column].tolist()] for column in table.columns},
        index=table.index,
    )
