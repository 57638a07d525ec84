"""Figures and a map layer of the groundwater screening: one doublet over the year, the city's doublets with their
permit status and plume isotherms, and status rings for the folium district map.

The data come from :mod:`engine.studies.permits` (screening, year profiles) and :mod:`engine.studies.interference`
(plume outlines). Everything drawn is a screening estimate; the permit rests on the water authority's procedure and
on licensed engineers.
"""

from __future__ import annotations

import math
from html import escape

import folium
import numpy as np
import pandas as pd
import plotly.graph_objects as go
from plotly.subplots import make_subplots

from engine.outputs.palette import FIGURE_TEMPLATE
from engine.scenario.inputs import Scenario
from engine.studies.permits import STATUS_LABELS, STATUSES

STATUS_COLORS = {"ok": "#009E73", "at_limit": "#E69F00", "breach": "#D55E00"}
"""Status colours: bluish green, orange and vermillion of the Okabe and Ito (2008) colour-blind-safe palette."""


def well_year_figure(profiles: pd.DataFrame, well_id: str, reinjection_min_temp_c: float,
                     reinjection_max_temp_c: float, title: str | None = None) -> go.Figure:
    """Flow share and reinjection temperature of one doublet over the year (plotly, two stacked panels).

    One point a day keeps the figure light and keeps what a permit looks at: the day's highest flow share
    [% of the permit] and the day's lowest and highest reinjection temperature [°C], with the day's mean
    source (groundwater) temperature and the reinjection window as dashed lines.

    Parameters
    ----------
    profiles : pandas.DataFrame
        From :func:`engine.studies.permits.well_year_profiles`.
    well_id : str
        The doublet to draw.
    reinjection_min_temp_c, reinjection_max_temp_c : float
        Reinjection window. [°C]
    title : str, optional
        Figure title; by default names the doublet.

    Returns
    -------
    plotly.graph_objects.Figure

    Raises
    ------
    ValueError
        If ``well_id`` is not in ``profiles``.
    """
    rows = profiles[profiles["well_id"] == well_id]
    if rows.empty:
        known = ", ".join(sorted(map(str, pd.unique(profiles["well_id"]))))
        raise ValueError(f"well_id {well_id!r} is not in the profiles (known: {known})")
    day = rows["hour"].to_numpy() // 24 + 1
    daily = rows.assign(day=day).groupby("day").agg(
        share_max=("flow_share", "max"),
        reinjection_min=("reinjection_temp_c", "min"),
        reinjection_max=("reinjection_temp_c", "max"),
        source_mean=("groundwater_temp_c", "mean"),
    )
    fig = make_subplots(rows=2, cols=1, shared_xaxes=True, vertical_spacing=0.09,
                        subplot_titles=("Highest flow of the day [% of the permitted flow]",
                                        "Reinjection temperature, lowest and highest of the day [°C]"))
    x = daily.index.to_numpy()
    fig.add_trace(go.Scatter(x=x, y=100.0 * daily["share_max"], mode="lines", name="flow share",
                             line=dict(color="#0072B2", width=1.6),
                             hovertemplate="day %{x}: %{y:.0f} % of the permit<extra></extra>"), row=1, col=1)
    fig.add_hline(y=100.0, line=dict(color="#D55E00", dash="dash", width=1.2), row=1, col=1,
                  annotation_text="permitted flow", annotation_position="top left")
    fig.add_trace(go.Scatter(x=x, y=daily["source_mean"], mode="lines", name="source (groundwater)",
                             line=dict(color="#000000", width=1.0, dash="dot"),
                             hovertemplate="day %{x}: source %{y:.2f} °C<extra></extra>"), row=2, col=1)
    fig.add_trace(go.Scatter(x=x, y=daily["reinjection_min"], mode="lines", name="reinjection, lowest",
                             line=dict(color="#56B4E9", width=1.6),
                             hovertemplate="day %{x}: lowest %{y:.2f} °C<extra></extra>"), row=2, col=1)
    fig.add_trace(go.Scatter(x=x, y=daily["reinjection_max"], mode="lines", name="reinjection, highest",
                             line=dict(color="#CC79A7", width=1.6),
                             hovertemplate="day %{x}: highest %{y:.2f} °C<extra></extra>"), row=2, col=1)
    for level, text in ((reinjection_min_temp_c, "window, lower edge"), (reinjection_max_temp_c, "window, upper edge")):
        fig.add_hline(y=float(level), line=dict(color="#D55E00", dash="dash", width=1.2), row=2, col=1,
                      annotation_text=f"{text} {float(level):g} °C", annotation_position="bottom left")
    fig.update_layout(
        template=FIGURE_TEMPLATE, height=520, margin=dict(l=60, r=20, t=80, b=50),
        title={"text": title or f"Doublet {well_id} over the year", "x": 0.01, "xanchor": "left"},
        legend=dict(orientation="h", y=-0.14, x=0.0), hovermode="x unified",
    )
    fig.update_yaxes(title_text="%", rangemode="tozero", row=1, col=1)
    fig.update_yaxes(title_text="°C", row=2, col=1)
    fig.update_xaxes(title_text="day of the year", range=[1, int(x.max())], row=2, col=1)
    return fig


def _outer_rings(geometry) -> list[list[tuple[float, float]]]:
    """Outer rings of a GeoJSON Polygon or MultiPolygon as lists of (lon, lat)."""
    if not isinstance(geometry, dict):
        return []
    if geometry.get("type") == "Polygon":
        polygons = [geometry.get("coordinates") or []]
    elif geometry.get("type") == "MultiPolygon":
        polygons = geometry.get("coordinates") or []
    else:
        return []
    return [[(float(p[0]), float(p[1])) for p in polygon[0]] for polygon in polygons if polygon]


def groundwater_map_figure(scenario: Scenario, screening: pd.DataFrame, plume_polygons=None,
                           title: str | None = None, height_px: int = 640, focus_well_ids=None) -> go.Figure:
    """Map of the districts, every doublet's two wells in their status colour and the plume isotherms (plotly).

    Needs no map library from the internet. Longitude and latitude are drawn to scale about the map's mid
    latitude (equirectangular, as :func:`engine.physics.coords.lonlat_to_local_m`): true to shape at the size of a city.
    Extraction wells are filled circles (area proportional to the annual heat), reinjection wells open
    circles, joined by a thin line; isotherms are dashed (cold plumes blue, warm plumes purple).

    Parameters
    ----------
    scenario : Scenario
        Districts (GeoJSON, WGS 84) and wells.
    screening : pandas.DataFrame
        From :func:`engine.studies.permits.screen_wells`: status, binding limits and heat per doublet.
    plume_polygons : list of dict, optional
        ``{"well_id", "level_k", "coordinates": [(lon, lat), ...]}`` and optionally ``"sign"`` (-1 cold, +1 warm).
    title : str, optional
    height_px : int, default 640
    focus_well_ids : list of str, optional
        Zoom to these doublets (their wells and plumes, with a margin); the whole city by default.

    Returns
    -------
    plotly.graph_objects.Figure
    """
    fig = go.Figure()
    lons, lats = [], []
    for k, row in enumerate(scenario.districts.itertuples(index=False)):
        for ring in _outer_rings(row.geometry):
            x, y = zip(*ring)
            lons += x
            lats += y
            fig.add_trace(go.Scatter(
                x=x, y=y, mode="lines", fill="toself", fillcolor="rgba(196,196,196,0.35)",
                line=dict(color="#888888", width=1), name="districts", legendgroup="districts",
                showlegend=k == 0, hoverinfo="text", text=str(row.name),
            ))
    wells = scenario.wells.set_index("well_id")
    screened = screening.set_index("well_id")
    ids = [w for w in screened.index if w in wells.index]
    lons += list(wells["lon"].astype(float)) + list(wells["reinjection_lon"].astype(float))
    lats += list(wells["lat"].astype(float)) + list(wells["reinjection_lat"].astype(float))

    shown_levels = set()
    for item in plume_polygons or []:
        ring = [(float(a), float(b)) for a, b in item["coordinates"]]
        if len(ring) < 3:
            continue
        warm = float(item.get("sign", -1) or -1) > 0
        level = float(item.get("level_k", float("nan")))
        key = (warm, level)
        color = "#CC79A7" if warm else "#0072B2"
        x, y = zip(*ring)
        fig.add_trace(go.Scatter(
            x=x, y=y, mode="lines", fill="toself",
            fillcolor="rgba(204,121,167,0.08)" if warm else "rgba(0,114,178,0.08)",
            line=dict(color=color, width=1.3, dash="dash" if level < 2 else "dot"),
            name=f"{'warm' if warm else 'cold'} plume, {level:g} K isotherm", legendgroup=f"plume{key}",
            showlegend=key not in shown_levels, hoverinfo="text",
            text=f"plume of {item.get('well_id', '')}: {level:g} K isotherm (screening estimate)",
        ))
        shown_levels.add(key)

    link_x, link_y = [], []
    for w in ids:
        link_x += [float(wells.loc[w, "lon"]), float(wells.loc[w, "reinjection_lon"]), None]
        link_y += [float(wells.loc[w, "lat"]), float(wells.loc[w, "reinjection_lat"]), None]
    fig.add_trace(go.Scatter(x=link_x, y=link_y, mode="lines", line=dict(color="#333333", width=1),
                             hoverinfo="skip", showlegend=False))
    heat = pd.to_numeric(screened["heat_mwh_per_a"], errors="coerce").reindex(ids).fillna(0.0).to_numpy(float)
    peak = float(heat.max()) if len(heat) and heat.max() > 0 else 1.0
    sizes = 9.0 + 17.0 * np.sqrt(np.clip(heat, 0.0, None) / peak)
    for status in STATUSES:
        pick = [k for k, w in enumerate(ids) if screened.loc[w, "status"] == status]
        if not pick:
            continue
        sel = [ids[k] for k in pick]
        hover = [
            f"<b>{w}</b> ({STATUS_LABELS[status]})<br>{screened.loc[w, 'binding_limits']}<br>"
            f"heat {heat[k]:,.0f} MWh/a · peak flow {100 * float(screened.loc[w, 'peak_flow_share']):.0f} % of permit"
            f"<br>source shift {float(screened.loc[w, 'source_temp_shift_k']):+.2f} K"
            for k, w in zip(pick, sel)
        ]
        fig.add_trace(go.Scatter(
            x=wells.loc[sel, "lon"].astype(float), y=wells.loc[sel, "lat"].astype(float), mode="markers",
            marker=dict(size=sizes[pick], color=STATUS_COLORS[status], line=dict(color="#FFFFFF", width=1)),
            name=f"extraction well, {STATUS_LABELS[status]}", hoverinfo="text", text=hover,
        ))
        fig.add_trace(go.Scatter(
            x=wells.loc[sel, "reinjection_lon"].astype(float), y=wells.loc[sel, "reinjection_lat"].astype(float),
            mode="markers", marker=dict(size=8, symbol="circle-open", color=STATUS_COLORS[status],
                                        line=dict(width=2)),
            name=f"reinjection well, {STATUS_LABELS[status]}", hoverinfo="text",
            text=[f"reinjection well of {w}" for w in sel],
        ))
    mid_lat = (min(lats) + max(lats)) / 2 if lats else 0.0
    focus = [w for w in (focus_well_ids or []) if w in wells.index]
    if focus:
        fx = list(wells.loc[focus, "lon"].astype(float)) + list(wells.loc[focus, "reinjection_lon"].astype(float))
        fy = list(wells.loc[focus, "lat"].astype(float)) + list(wells.loc[focus, "reinjection_lat"].astype(float))
        for item in plume_polygons or []:
            if str(item.get("well_id")) in focus:
                fx += [float(p[0]) for p in item["coordinates"]]
                fy += [float(p[1]) for p in item["coordinates"]]
        pad_x = max(0.25 * (max(fx) - min(fx)), 0.002)
        pad_y = max(0.25 * (max(fy) - min(fy)), 0.002 * math.cos(math.radians(mid_lat)))
        fig.update_xaxes(range=[min(fx) - pad_x, max(fx) + pad_x])
        fig.update_yaxes(range=[min(fy) - pad_y, max(fy) + pad_y])
    fig.update_layout(
        template=FIGURE_TEMPLATE, height=height_px, margin=dict(l=10, r=10, t=50, b=10),
        title={"text": title or "Doublets, permit status and plume isotherms", "x": 0.01, "xanchor": "left"},
        legend=dict(orientation="v", x=1.0, xanchor="right", y=1.0, bgcolor="rgba(255,255,255,0.85)"),
        hovermode="closest",
    )
    fig.update_xaxes(visible=False)
    fig.update_yaxes(visible=False, scaleanchor="x", scaleratio=1.0 / math.cos(math.radians(mid_lat)))
    if lons:
        # a scale bar of a round length, about a fifth of the view, at its lower left corner
        x0, x1 = (fx_range := (fig.layout.xaxis.range or (min(lons), max(lons))))[0], fx_range[1]
        y0 = (fig.layout.yaxis.range or (min(lats), max(lats)))[0]
        metres_per_degree = 6_371_008.8 * math.pi / 180.0 * math.cos(math.radians(mid_lat))
        width_m = (x1 - x0) * metres_per_degree
        length = min((c * 10**e for e in range(0, 6) for c in (1, 2, 5)), key=lambda v: abs(v - width_m / 5))
        start = x0 + 0.03 * (x1 - x0)
        end = start + length / metres_per_degree
        fig.add_trace(go.Scatter(x=[start, end], y=[y0, y0], mode="lines+text", line=dict(color="#000000", width=3),
                                 text=["", f"{length:,.0f} m".replace(",", " ")], textposition="top left",
                                 hoverinfo="skip", showlegend=False))
    return fig


def well_status_layer(scenario: Scenario, screening: pd.DataFrame, name: str = "Permit status"):
    """A folium layer with a ring in the status colour around both wells of every screened doublet.

    Add it to a map from :func:`engine.outputs.maps.district_map` (``layer.add_to(fmap)``); the ring's tooltip gives the
    status and the binding limits.
    """
    layer = folium.FeatureGroup(name=name, show=True)
    wells = scenario.wells.set_index("well_id")
    for row in screening.itertuples(index=False):
        if row.well_id not in wells.index:
            continue
        well = wells.loc[row.well_id]
        color = STATUS_COLORS.get(row.status, "#777777")
        text = (f"{escape(str(row.well_id))}: {escape(STATUS_LABELS.get(row.status, row.status))}"
                f" ({escape(str(row.binding_limits))}). Screening estimate.")
        points = [(float(well["lat"]), float(well["lon"]), 15)]
        if pd.notna(well.get("reinjection_lat")) and pd.notna(well.get("reinjection_lon")):
            points.append((float(well["reinjection_lat"]), float(well["reinjection_lon"]), 8))
        for lat, lon, radius in points:
            folium.CircleMarker((lat, lon), radius=radius, color=color, weight=3, fill=False,
                                tooltip=folium.Tooltip(text)).add_to(layer)
    return layer
