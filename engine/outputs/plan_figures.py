"""Figures, tables and maps of a heat plan: the pathway over the milestone years and the supply-area designation.

Pure functions of :class:`engine.studies.pathway.PathwayResult` and :class:`engine.studies.designation.Designation`
(and the scenario, for names and district shapes); the dashboard's "Heat plan" page and the HTML summary's heat-plan
chapter show the very same figures. Technology colours come from :mod:`engine.outputs.palette`.

The designation map uses two visual channels: the fill colour names the supply area (Okabe & Ito colours, the same
hues the technologies of that area have elsewhere; "under review" is a neutral grey with a dashed outline), and the
fill opacity the grade (1 most opaque, 4 faintest). The grade is also written on the map, so it reads without
telling opacities apart. Okabe, M. and Ito, K. (2008), Color Universal Design (see :mod:`engine.outputs.palette`).
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import plotly.graph_objects as go
from plotly.subplots import make_subplots

from engine import cautions
from engine.outputs.figures import _empty_figure, _title, escape, technology_catalogue
from engine.outputs.maps import _bounds, _rings, _rings_points, add_folded_legend, use_bundled_leaflet
from engine.outputs.maps import escape as map_escape
from engine.outputs.palette import (
    BLUE,
    COST_PART_COLORS,
    COST_PART_LABELS,
    FIGURE_TEMPLATE,
    ORANGE,
    REDDISH_PURPLE,
    TECHNOLOGY_KIND_COLORS,
    technology_colors,
)
from engine.model.results import COST_PARTS
from engine.scenario.kinds import COOLING_KINDS

_TEMPLATE = FIGURE_TEMPLATE
AREA_LABELS = {
    "heat_network": "Heat network",
    "individual_heat_pumps": "Individual heat pumps",
    "other_individual": "Other individual supply",
    "under_review": "Under review",
}
AREA_COLORS = {
    "heat_network": REDDISH_PURPLE,
    "individual_heat_pumps": BLUE,
    "other_individual": ORANGE,
    "under_review": "#7F7F7F",
}
"""Fill of each supply area: the Okabe-Ito hue of its technologies (network connection, groundwater heat pump,
fuel boiler); a neutral grey, with a dashed outline, for districts whose evidence carries no designation."""
GRADE_OPACITY = {1: 0.92, 2: 0.66, 3: 0.40, 4: 0.16}
"""Fill opacity of each grade: the second visual channel of the designation map."""
GRADE_LABELS = {1: "very likely suitable", 2: "likely suitable", 3: "likely unsuitable", 4: "very likely unsuitable"}
_NOT_SHOWN_KINDS = ("heat_store",) + COOLING_KINDS


def _years(pathway) -> list[str]:
    return [str(int(y)) for y in pathway.years]


def _no_pathway(pathway, title: str):
    if pathway is None or not getattr(pathway, "solved", False) or pathway.summary.empty:
        text = "No solved pathway" + (f": {pathway.message}" if pathway is not None and pathway.message else "")
        return _empty_figure(title, text)
    return None


def _heat_catalogue(pathway, technologies) -> pd.DataFrame:
    catalogue = technology_catalogue(technologies, pathway.year_results.values())
    return catalogue[~catalogue["kind"].isin(_NOT_SHOWN_KINDS)].reset_index(drop=True)


# ---------------------------------------------------------------------------------------------------- pathway
def capacity_by_year(pathway, technologies=None) -> pd.DataFrame:
    """Capacity standing and built per milestone year and heat technology [kW] (stores and cooling left out)."""
    catalogue = _heat_catalogue(pathway, technologies)
    cap = pathway.capacity
    cap = cap[cap["technology_id"].isin(catalogue["technology_id"])]
    return cap.groupby(["year", "technology_id"], as_index=False)[["capacity_kw", "new_kw", "retired_kw"]].sum()


def plan_capacity_figure(pathway, technologies=None) -> go.Figure:
    """Heat capacity by technology per milestone year, stacked bars [MW]; the part built in that year hatched."""
    title = "Heat capacity by technology"
    empty = _no_pathway(pathway, title)
    if empty is not None:
        return empty
    catalogue = _heat_catalogue(pathway, technologies)
    colors = technology_colors(catalogue)
    table = capacity_by_year(pathway, catalogue).set_index(["year", "technology_id"])
    years = [int(y) for y in pathway.years]
    x = [str(y) for y in years]
    fig = go.Figure()
    for tech, name in zip(catalogue["technology_id"], catalogue["name"]):
        total = np.array([float(table["capacity_kw"].get((y, tech), 0.0)) for y in years]) / 1000.0
        new = np.array([float(table["new_kw"].get((y, tech), 0.0)) for y in years]) / 1000.0
        if total.max(initial=0.0) <= 1e-6:
            continue
        new = np.minimum(new, total)
        label = escape(name)
        fig.add_trace(go.Bar(x=x, y=total - new, name=label, legendgroup=tech, marker_color=colors[tech],
                             customdata=np.c_[total, new],
                             hovertemplate=f"{label}: %{{customdata[0]:,.2f}} MW, of which built in %{{x}}: "
                                           "%{customdata[1]:,.2f} MW<extra></extra>"))
        fig.add_trace(go.Bar(x=x, y=new, name=f"{label}, built", legendgroup=tech, showlegend=False,
                             marker={"color": colors[tech], "pattern": {"shape": "/", "fgcolor": "#FFFFFF",
                                                                         "solidity": 0.35}},
                             hovertemplate=f"{label}, built in %{{x}}: %{{y:,.2f}} MW<extra></extra>"))
    fig.add_trace(go.Bar(x=[x[0]], y=[0.0], name="hatched: built in that year", marker={
        "color": "#9A9A9A", "pattern": {"shape": "/", "fgcolor": "#FFFFFF", "solidity": 0.35}},
        hoverinfo="skip"))
    fig.update_layout(template=_TEMPLATE, barmode="stack", height=440,
                      title=_title(title, "Standing in each milestone year [MW]; heat stores and cooling plant "
                                          "not shown"),
                      legend={"orientation": "v", "x": 1.01, "xanchor": "left", "y": 1.0, "traceorder": "normal"},
                      margin={"t": 80, "l": 70, "r": 20, "b": 50})
    fig.update_xaxes(title_text="Milestone year", type="category")
    fig.update_yaxes(title_text="Capacity [MW]", tickformat=",")
    return fig


def heat_by_year(pathway) -> pd.DataFrame:
    """Heat per milestone year and technology [MWh/a] from the pathway summary (stores left out)."""
    summary = pathway.summary.set_index("year")
    columns = [c for c in summary.columns if c.startswith("heat_") and c.endswith("_mwh_per_a")
               and c != "heat_demand_mwh_per_a"]
    out = summary[columns].rename(columns=lambda c: c[len("heat_"):-len("_mwh_per_a")])
    return out


def plan_heat_figure(pathway, technologies=None) -> go.Figure:
    """Annual heat by technology per milestone year, stacked bars [GWh/a], with the demand as a marker."""
    title = "Heat by technology"
    empty = _no_pathway(pathway, title)
    if empty is not None:
        return empty
    catalogue = _heat_catalogue(pathway, technologies)
    colors = technology_colors(catalogue)
    heat = heat_by_year(pathway)
    x = _years(pathway)
    fig = go.Figure()
    for tech, name in zip(catalogue["technology_id"], catalogue["name"]):
        if tech not in heat.columns or heat[tech].abs().max() <= 1e-6:
            continue
        label = escape(name)
        fig.add_trace(go.Bar(x=x, y=heat[tech].to_numpy(float) / 1000.0, name=label, marker_color=colors[tech],
                             hovertemplate=f"{label}: %{{y:,.1f}} GWh/a<extra>%{{x}}</extra>"))
    summary = pathway.summary
    unserved = summary["unserved_heat_mwh_per_a"].to_numpy(float)
    if unserved.max(initial=0.0) > 0.5:
        fig.add_trace(go.Bar(x=x, y=unserved / 1000.0, name="Unserved heat",
                             marker_color=TECHNOLOGY_KIND_COLORS["unserved"],
                             hovertemplate="Unserved: %{y:,.1f} GWh/a<extra>%{x}</extra>"))
    fig.add_trace(go.Scatter(x=x, y=summary["heat_demand_mwh_per_a"].to_numpy(float) / 1000.0, name="Heat demand",
                             mode="markers", marker={"symbol": "line-ew-open", "size": 40, "line": {"width": 3},
                                                     "color": TECHNOLOGY_KIND_COLORS["demand"]},
                             hovertemplate="Heat demand: %{y:,.1f} GWh/a<extra>%{x}</extra>"))
    fig.update_layout(template=_TEMPLATE, barmode="stack", height=440,
                      title=_title(title, "Annual heat in each milestone year [GWh/a]; heat stores not shown"),
                      legend={"orientation": "v", "x": 1.01, "xanchor": "left", "y": 1.0, "traceorder": "normal"},
                      margin={"t": 80, "l": 70, "r": 20, "b": 50})
    fig.update_xaxes(title_text="Milestone year", type="category")
    fig.update_yaxes(title_text="Heat [GWh/a]", tickformat=",")
    return fig


def co2_path_figure(pathway) -> go.Figure:
    """The city's CO2 per milestone year [t/a] as a line, the CO2 caps of the years that have one as markers."""
    title = "CO2 path against the caps"
    empty = _no_pathway(pathway, title)
    if empty is not None:
        return empty
    x = _years(pathway)
    co2 = pathway.summary["co2_t_per_a"].to_numpy(float)
    fig = go.Figure()
    fig.add_trace(go.Scatter(x=x, y=co2, name="CO2 of the plan", mode="lines+markers",
                             line={"color": BLUE, "width": 3}, marker={"size": 9},
                             hovertemplate="CO2: %{y:,.0f} t/a<extra>%{x}</extra>"))
    caps = [(str(int(y)), float(c)) for y, c in sorted(pathway.co2_caps.items())]
    if caps:
        fig.add_trace(go.Scatter(x=[c[0] for c in caps], y=[c[1] for c in caps], name="CO2 cap", mode="markers",
                                 marker={"symbol": "line-ew-open", "size": 44, "color": "#D55E00",
                                         "line": {"width": 4, "color": "#D55E00"}},
                                 hovertemplate="Cap: %{y:,.0f} t/a<extra>%{x}</extra>"))
    subtitle = "City-wide CO2 [t/a]" + ("; orange marks: the cap of each year" if caps else "; no year has a CO2 cap")
    fig.update_layout(template=_TEMPLATE, height=400, title=_title(title, subtitle),
                      legend={"orientation": "h", "yanchor": "top", "y": -0.18, "x": 0},
                      margin={"t": 80, "l": 70, "r": 20, "b": 60})
    fig.update_xaxes(title_text="Milestone year", type="category")
    fig.update_yaxes(title_text="CO2 [t/a]", tickformat=",", rangemode="tozero")
    return fig


def plan_cost_figure(pathway) -> go.Figure:
    """Left: annual cost per milestone year by part [M€/a]; right: overnight investment of its builds [M€]."""
    title = "Annual cost and investment per period"
    empty = _no_pathway(pathway, title)
    if empty is not None:
        return empty
    x = _years(pathway)
    fig = make_subplots(rows=1, cols=2, subplot_titles=("Annual cost", "Investment built in the year"),
                        horizontal_spacing=0.14)
    parts = {part: [pathway.year_results[y].cost_breakdown_eur_per_a()[part] / 1e6 for y in pathway.years]
             for part in COST_PARTS}
    for part, values in parts.items():
        if max(abs(v) for v in values) <= 1e-9:
            continue
        fig.add_trace(go.Bar(x=x, y=values, name=COST_PART_LABELS[part], marker_color=COST_PART_COLORS[part],
                             hovertemplate=f"{COST_PART_LABELS[part]}: %{{y:,.2f}} M€/a<extra>%{{x}}</extra>"),
                      row=1, col=1)
    fig.add_trace(go.Bar(x=x, y=pathway.summary["investment_eur"].to_numpy(float) / 1e6, name="Investment (overnight)",
                         marker_color="#56B4E9", marker_line={"color": BLUE, "width": 1.5},
                         hovertemplate="Investment: %{y:,.2f} M€<extra>%{x}</extra>"), row=1, col=2)
    pv = pathway.present_value_eur
    subtitle = (f"Present value at {pathway.base_year}: {pv / 1e6:,.1f} M€, net of remaining value"
                if math.isfinite(pv) else None)
    fig.update_layout(template=_TEMPLATE, barmode="relative", height=460, title=_title(title, subtitle),
                      legend={"orientation": "h", "yanchor": "top", "y": -0.12, "x": 0},
                      margin={"t": 110, "l": 70, "r": 20, "b": 40})
    fig.update_xaxes(type="category")
    fig.update_yaxes(tickformat=",")
    fig.update_yaxes(title_text="Annual cost [M€/a]", row=1, col=1)
    fig.update_yaxes(title_text="Investment [M€]", row=1, col=2)
    return fig


# ---------------------------------------------------------------------------------------------------- designation
def _ranges(designation) -> set:
    r = designation.ranges
    return set(r.loc[r["quantity"] == "network_share", "subject"]) if len(r) else set()


def _margin_text(value) -> str:
    value = float(value)
    if math.isinf(value):
        return "no other supply possible"
    return f"{value:,.1f}"


def designation_table(designation, scenario) -> pd.DataFrame:
    """One row per district, for reading: name, supply area and grade in words, win share, margin, network range
    and how the grade came about (the columns are labelled for people)."""
    names = dict(zip(scenario.districts["district_id"].astype(str), scenario.districts["name"]))
    reached = _ranges(designation)
    rows = []
    for rec in designation.table.to_dict(orient="records"):
        did = str(rec["district_id"])
        grade = int(rec["grade"])
        candidate = str(rec.get("candidate", rec["supply_area"]))
        area = AREA_LABELS.get(rec["supply_area"], rec["supply_area"])
        if rec["supply_area"] == "under_review":
            area += f" ({AREA_LABELS.get(candidate, candidate.replace('_', ' ')).lower()})"
        network = (f"{100 * rec['network_share_min']:.0f} to {100 * rec['network_share_max']:.0f} %" if did in reached
                   else "network does not reach it")
        rows.append({
            "District": names.get(did, did),
            "Supply area": area,
            "Grade": f"{grade}: {GRADE_LABELS.get(grade, '')}",
            "Win share": float(rec["win_share"]),
            "Margin [EUR/MWh]": _margin_text(rec["lcoh_margin_eur_per_mwh"]),
            "Network share range": network,
            "How the grade came about": str(rec.get("explanation", "")),
        })
    return pd.DataFrame(rows)


def designation_values(scenario, designation) -> pd.DataFrame:
    """district_id, name, geometry, area, grade, color, opacity, dashed, label and tip (plain text) per district."""
    table = designation.table.set_index(designation.table["district_id"].astype(str))
    reading = designation_table(designation, scenario).set_index(designation.table["district_id"].astype(str))
    out = scenario.districts[["district_id", "name", "geometry"]].copy()
    out["district_id"] = out["district_id"].astype(str)
    areas, grades, tips = [], [], []
    for did, name in zip(out["district_id"], out["name"]):
        if did not in table.index:
            areas.append(None)
            grades.append(None)
            tips.append(f"{name}: no designation")
            continue
        areas.append(str(table.at[did, "supply_area"]))
        grades.append(int(table.at[did, "grade"]))
        row = reading.loc[did]
        tips.append(f"{name}\n{row['Supply area']}, grade {row['Grade']}\nwin share {row['Win share']:.2f}, "
                    f"margin {row['Margin [EUR/MWh]']} EUR/MWh\nnetwork share: {row['Network share range']}")
    out["area"] = areas
    out["grade"] = grades
    out["color"] = [AREA_COLORS.get(a, "#DDDDDD") for a in areas]
    out["opacity"] = [GRADE_OPACITY.get(g, 0.3) for g in grades]
    out["dashed"] = [a == "under_review" for a in areas]
    out["label"] = [f"{n} · {g}" if g else str(n) for n, g in zip(out["name"], grades)]
    out["tip"] = tips
    return out.reset_index(drop=True)


def designation_legend_html(areas) -> str:
    """Legend of both channels: one row per supply area (colour) and one column per grade (opacity)."""
    areas = [a for a in AREA_LABELS if a in set(areas)] or list(AREA_LABELS)
    head = ("<tr><td></td>" + "".join(f"<td style='text-align:center;font-weight:bold'>{g}</td>" for g in GRADE_OPACITY)
            + "</tr>")
    rows = []
    for area in areas:
        red, green, blue = (int(AREA_COLORS[area][i:i + 2], 16) for i in (1, 3, 5))
        border = "dashed" if area == "under_review" else "solid"
        cells = "".join(
            f"<td style='padding:1px 2px'><span style='display:inline-block;width:22px;height:14px;"
            f"border:1px {border} #333;background:rgba({red},{green},{blue},{o})'></span></td>"
            for o in GRADE_OPACITY.values())
        rows.append(f"<tr><td style='padding-right:6px'>{map_escape(AREA_LABELS[area])}</td>{cells}</tr>")
    grades = "<br>".join(f"<b>{g}</b> {map_escape(t)}" for g, t in GRADE_LABELS.items())
    return ("<div style='font-weight:bold;margin-bottom:4px'>Supply area (colour) and grade (opacity)</div>"
            f"<table style='border-collapse:collapse;font-size:12px'>{head}{''.join(rows)}</table>"
            f"<div style='margin-top:4px'>Grade of the area's supply:<br>{grades}</div>"
            "<div style='margin-top:4px;color:#444'>The grade is also written after the district's name (Name · 2). "
            "Dashed outline: under review, the evidence carries no designation.</div>"
            f"<div style='margin-top:4px;color:#8a3b00;max-width:240px'>{map_escape(cautions.HEAT_PLAN_SHORT)}</div>")


def _centre(geometry):
    outer = _rings(geometry)[0][0]
    return float(np.mean([p[0] for p in outer])), float(np.mean([p[1] for p in outer]))


def designation_map(scenario, designation, legend_open: bool = True, legend: bool = True):
    """Interactive folium map of the designation (drawn like :func:`engine.outputs.maps.district_map`, offline).

    ``legend=False`` leaves the legend off the map, for a page that shows :func:`designation_legend_html` beside it.
    """
    import folium  # imported here as in engine.outputs.maps: only the dashboard's map needs folium

    values = designation_values(scenario, designation)
    west, south, east, north = _bounds(values, pd.DataFrame(columns=["lon", "lat"]))
    fmap = folium.Map(location=[(south + north) / 2, (west + east) / 2], zoom_start=13, tiles=None, zoom_snap=0.25,
                      control_scale=True)
    use_bundled_leaflet(fmap)
    for rec in values.to_dict(orient="records"):
        if not _rings(rec["geometry"]):
            continue
        style = {"fillColor": rec["color"], "color": "#333333", "weight": 2 if rec["dashed"] else 1.2,
                 "fillOpacity": rec["opacity"], "dashArray": "6 4" if rec["dashed"] else None}
        shape = folium.GeoJson({"type": "Feature", "geometry": rec["geometry"], "properties": {}},
                               style_function=lambda _f, s=style: s,
                               highlight_function=lambda _f: {"weight": 3, "color": "#000000"})
        tip = map_escape(rec["tip"]).replace("\n", "<br>")
        folium.Tooltip(tip).add_to(shape)
        shape.add_to(fmap)
        lon, lat = _centre(rec["geometry"])
        folium.Marker((lat, lon), icon=folium.DivIcon(
            icon_size=(160, 18), icon_anchor=(80, 9),
            html="<div style='font:12px sans-serif;text-align:center;color:#111;"
                 "text-shadow:0 0 3px #fff,0 0 3px #fff'>"
                 f"{map_escape(rec['label'])}</div>")).add_to(fmap)
    fmap.fit_bounds([[south, west], [north, east]])
    if not legend:
        return fmap
    add_folded_legend(fmap, designation_legend_html(values["area"].dropna()), legend_open, max_width_px=300)
    return fmap


def svg_designation_map(scenario, designation, width_px: int = 640, title: str | None = None) -> str:
    """The designation map as one self-contained HTML fragment (inline SVG and legend), for the report."""
    if width_px < 200:
        raise ValueError(f"width_px must be at least 200, got {width_px}")
    values = designation_values(scenario, designation)
    west, south, east, north = _bounds(values, pd.DataFrame(columns=["lon", "lat"]))
    shrink = math.cos(math.radians((south + north) / 2))
    span_x, span_y = max((east - west) * shrink, 1e-9), max(north - south, 1e-9)
    pad = 12.0
    factor = (width_px - 2 * pad) / span_x
    height_px = max(200.0, (width_px - 2 * pad) * span_y / span_x + 2 * pad)

    def xy(lon, lat):
        return pad + (lon - west) * shrink * factor, pad + (north - lat) * factor

    shapes, labels = [], []
    for rec in values.to_dict(orient="records"):
        path = []
        for polygon in _rings(rec["geometry"]):
            for ring in polygon:
                pts = [xy(lon, lat) for lon, lat in ring]
                if len(pts) >= 3:
                    path.append("M" + " L".join(f"{x:.1f},{y:.1f}" for x, y in pts) + " Z")
        if not path:
            continue
        dash = " stroke-dasharray='6 4' stroke-width='2'" if rec["dashed"] else " stroke-width='1'"
        shapes.append(f"<path d='{' '.join(path)}' fill='{rec['color']}' fill-opacity='{rec['opacity']}' "
                      f"stroke='#333'{dash} fill-rule='evenodd'><title>{map_escape(rec['tip'])}</title></path>")
        if list(_rings_points(rec["geometry"])):
            x, y = xy(*_centre(rec["geometry"]))
            labels.append(f"<text x='{x:.1f}' y='{y:.1f}' text-anchor='middle' font-size='11' "
                          f"style='paint-order:stroke;stroke:#fff;stroke-width:3px' fill='#111'>"
                          f"{map_escape(rec['label'])}</text>")
    heading = f"<div style='font-weight:bold;margin:4px 0'>{map_escape(title)}</div>" if title else ""
    svg = (f"<svg width='{width_px:.0f}' height='{height_px:.0f}' viewBox='0 0 {width_px:.0f} {height_px:.0f}' "
           "role='img' style='background:#f4f4f4;border:1px solid #ccc;font-family:sans-serif'>"
           + "".join(shapes) + "".join(labels) + "</svg>")
    legend = ("<div style='font:12px/1.45 sans-serif;padding:8px 10px;border:1px solid #ccc;background:#fff;"
              "max-width:300px'>" + designation_legend_html(values["area"].dropna()) + "</div>")
    return (f"<div class='svg-map'>{heading}<div style='display:flex;gap:12px;align-items:flex-start;"
            f"flex-wrap:wrap'>{svg}{legend}</div></div>")
