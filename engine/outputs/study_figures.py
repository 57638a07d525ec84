"""Figures of the studies: the cost-CO2 trade-off curve, its supply mix, and the tornado chart of a price sweep.

The studies (:mod:`engine.studies.tradeoff`, :mod:`engine.studies.sweep`) return tables; these functions draw them
as plotly figures for the dashboard and the report.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import plotly.graph_objects as go

from engine.outputs.labels import TRADEOFF_POINT_LABELS as KIND_LABELS
from engine.outputs.palette import technology_colors


def tradeoff_figure(table: pd.DataFrame, selected: int | None = None) -> go.Figure:
    """The trade-off curve: annual cost against CO2, one marker per point (plotly Figure).

    Each marker's ``customdata`` holds its point number, so a click selection names the point.
    """
    solved = table[table["status"] == "optimal"]
    labels = [KIND_LABELS.get(k, k) for k in solved["kind"]]
    fig = go.Figure(
        go.Scatter(
            x=solved["co2_t_per_a"],
            y=solved["total_cost_eur_per_a"] / 1e6,
            mode="lines+markers",
            marker=dict(size=[16 if p == selected else 11 for p in solved["point"]], color="#0072B2",
                        line=dict(width=[3 if p == selected else 0 for p in solved["point"]], color="#E69F00")),
            line=dict(color="#0072B2", width=2),
            customdata=np.column_stack([solved["point"], labels, solved["abatement_cost_eur_per_t"].fillna(0.0)]),
            hovertemplate="Point %{customdata[0]} (%{customdata[1]})<br>CO2 %{x:,.0f} t/a<br>"
            "cost %{y:,.2f} M€/a<br>abatement %{customdata[2]:,.0f} €/t<extra></extra>",
            name="trade-off",
        )
    )
    extreme = solved[solved["kind"] == "co2_optimal"]
    for co2, cost in zip(extreme["co2_t_per_a"], extreme["total_cost_eur_per_a"] / 1e6):
        fig.add_annotation(x=co2, y=cost, text="least CO2: the extreme end", showarrow=True, arrowhead=2,
                           ax=60, ay=-30, font=dict(size=12))
    fig.update_layout(
        xaxis_title="CO2 emissions [t/a]",
        yaxis_title="Total annual cost [M€/a]",
        height=420,
        margin=dict(l=10, r=10, t=30, b=40),
        showlegend=False,
        clickmode="event+select",
    )
    return fig


def tradeoff_mix_figure(table: pd.DataFrame, technologies: pd.DataFrame | None = None) -> go.Figure:
    """Heat supplied by each technology at every point of the curve, as stacked bars [GWh/a] (plotly Figure)."""
    colors = technology_colors(technologies) if technologies is not None else {}
    names = {}
    if technologies is not None:
        names = dict(zip(technologies["technology_id"].astype(str), technologies["name"].astype(str)))
    solved = table[table["status"] == "optimal"]
    x = [f"{p}: {KIND_LABELS.get(k, k)}" for p, k in zip(solved["point"], solved["kind"])]
    fig = go.Figure()
    for column in [c for c in solved.columns if c.startswith("heat_") and c.endswith("_mwh_per_a")]:
        tech = column[len("heat_"):-len("_mwh_per_a")]
        values = solved[column].to_numpy(float) / 1000.0
        if np.all(np.abs(values) < 1e-3):
            continue
        fig.add_trace(go.Bar(x=x, y=values, name=names.get(tech, tech), marker_color=colors.get(tech),
                             hovertemplate="%{x}<br>" + names.get(tech, tech) + ": %{y:,.1f} GWh/a<extra></extra>"))
    fig.update_layout(
        barmode="relative",
        yaxis_title="Heat supplied [GWh/a] (stores: net)",
        xaxis_title="Point of the trade-off curve",
        height=380,
        margin=dict(l=10, r=10, t=30, b=40),
        legend_title_text="Technology",
    )
    return fig


def tornado_figure(tornado: pd.DataFrame) -> go.Figure:
    """Horizontal bars of the change in total cost at each parameter's low and high value (plotly Figure).

    The largest swing is on top; the hover text gives the value and the number of districts whose main supply
    changes.
    """
    data = tornado.iloc[::-1]
    fig = go.Figure()
    for side, colour in (("low", "#3b7dd8"), ("high", "#d8703b")):
        value = data[f"{side}_value"]
        changed = data[f"districts_changed_{side}"]
        fig.add_trace(
            go.Bar(
                y=data["label"],
                x=data[f"delta_cost_{side}_eur_per_a"] / 1e6,
                orientation="h",
                name=f"{side} value",
                marker_color=colour,
                customdata=np.column_stack([value, changed]),
                hovertemplate="%{y} at %{customdata[0]:.3g}: %{x:+.2f} M€/a, "
                "main supply changes in %{customdata[1]} district(s)<extra></extra>",
                text=[f"{c} changed" if c else "" for c in changed],
                textposition="outside",
                cliponaxis=False,
            )
        )
    fig.update_layout(
        barmode="overlay",
        xaxis_title="Change in total annual cost against the reference [M€/a]",
        yaxis_title=None,
        legend_title_text="Parameter at its",
        height=max(300, 120 + 60 * len(data)),
        margin=dict(l=10, r=10, t=30, b=40),
    )
    fig.add_vline(x=0, line_color="#444", line_width=1)
    return fig
