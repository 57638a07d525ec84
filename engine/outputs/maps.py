"""Maps of a scenario and its results: districts coloured by a measure, wells, reinjection links and plumes.

:func:`district_map` builds an interactive folium map for the dashboard. :func:`svg_district_map` draws the same
districts, colours and wells as plain inline SVG, which needs no script library and no tiles, so the exported
report opens offline (folium loads Leaflet from a CDN; the installed folium and branca do not ship it).

Both read the colours from :mod:`engine.outputs.palette` and the district figures from one helper,
:func:`district_values`, so the two maps agree. Every name that comes from the user (scenario, district, well,
technology) is HTML-escaped, and additionally ``$`` and the backtick, because folium puts popups and tooltips into
JavaScript template literals.

Well markers and plume outlines are screening estimates; permits and designs defer to the water authority and
licensed engineers. The legend says so.
"""

from __future__ import annotations

import base64
import functools
import html
import json
import math
from collections.abc import Mapping
from pathlib import Path

import numpy as np
import pandas as pd
from branca.element import MacroElement, Template

from engine.outputs.palette import (
    DIVERGING_SCALE,
    NO_DATA_COLOR,
    SEQUENTIAL_SCALE,
    WELL_COLOR,
    WELL_LIMIT_BINDS_COLOR,
    diverging_colors,
    scale_stops,
    sequential_colors,
    technology_colors,
)
from engine import cautions
from engine.model.results import RunResult

MEASURES = {
    "main_supply": ("Main heat supply", ""),
    "levelised_cost_eur_per_mwh": ("Levelised cost of heat", "€/MWh"),
    "co2_kg_per_mwh": ("CO2 per MWh of demand", "kg/MWh"),
    "change_total_cost": ("Change of annual cost against the baseline", "€/a"),
}
"""Measures a district map can show: key -> (legend title, unit)."""

PLUME_COLOR = "#000000"
_MIN_RADIUS_PX, _MAX_RADIUS_PX = 4.0, 16.0


def escape(text) -> str:
    """HTML-escape ``text``, and also ``$``, backtick and backslash, which matter inside JavaScript templates."""
    out = html.escape(str(text), quote=True)
    return out.replace("`", "&#96;").replace("$", "&#36;").replace("\\", "&#92;")


def _number(value, fmt: str = "{:,.0f}", unit: str = "") -> str:
    try:
        number = float(value)
    except (TypeError, ValueError):
        return "–"
    if not math.isfinite(number):
        return "–"
    text = fmt.format(number)
    return f"{text} {unit}".rstrip() if unit else text


def _truthy(value) -> bool:
    if value is None or value is pd.NA:
        return False
    if isinstance(value, str):
        return value.strip().lower() in ("true", "1", "yes")
    try:
        if isinstance(value, float) and math.isnan(value):
            return False
    except TypeError:
        pass
    return bool(value)


# ---------------------------------------------------------------------------------------------------- values
def _catalogue(scenario, technologies) -> pd.DataFrame:
    from engine.outputs.figures import technology_catalogue

    if technologies is None:
        technologies = getattr(scenario, "technologies", None)
    return technology_catalogue(technologies)


def district_values(scenario, result: RunResult | None = None, measure: str = "main_supply",
                    baseline: RunResult | None = None, technologies=None,
                    value_range: tuple[float, float] | None = None) -> tuple[pd.DataFrame, dict]:
    """District figures, colours and the legend of a map.

    ``value_range`` (low, high) fixes the colour scale of a numeric measure, so that maps shown side by side
    give one colour one value (:func:`shared_value_range`); by default the scale spans this map's values.

    Returns
    -------
    values : DataFrame
        district_id, name, geometry, value (the measure; a technology id for ``main_supply``), color, popup
        (escaped HTML with the district's figures).
    legend : dict
        ``{"title", "unit", "kind": "categorical" | "sequential" | "diverging" | "none", "entries": [(label,
        color)], "vmin", "vmax", "no_data": bool}``; labels are plain text (not yet escaped).
    """
    if measure not in MEASURES:
        raise ValueError(f"measure must be one of {', '.join(MEASURES)}, got {measure!r}")
    if measure == "change_total_cost" and baseline is None:
        raise ValueError("baseline: the measure 'change_total_cost' needs a baseline result")
    catalogue = _catalogue(scenario, technologies)
    names = dict(zip(catalogue["technology_id"], catalogue["name"]))
    colors = technology_colors(catalogue)
    districts = scenario.districts[["district_id", "name", "geometry"]].copy()
    districts["district_id"] = districts["district_id"].astype(str)
    title, unit = MEASURES[measure]
    solved = result is not None and result.tables.get("districts") is not None
    table = result.tables["districts"].set_index("district_id") if solved else None
    supply = result.tables.get("supply") if solved else None
    base_table = None
    if baseline is not None and baseline.tables.get("districts") is not None:
        base_table = baseline.tables["districts"].set_index("district_id")

    values = []
    for did in districts["district_id"]:
        if table is None or did not in table.index:
            values.append(np.nan if measure != "main_supply" else "")
            continue
        if measure == "main_supply":
            values.append(str(table.at[did, "main_supply"]))
        elif measure == "change_total_cost":
            if base_table is None or did not in base_table.index:
                values.append(np.nan)
            else:
                values.append(float(table.at[did, "total_cost_eur_per_a"]) - float(base_table.at[did, "total_cost_eur_per_a"]))
        else:
            values.append(float(table.at[did, measure]))
    districts["value"] = values

    legend = {"title": title, "unit": unit, "kind": "none", "entries": [], "vmin": None, "vmax": None,
              "no_data": False}
    if not solved:
        districts["color"] = NO_DATA_COLOR
        legend["no_data"] = True
    elif measure == "main_supply":
        districts["color"] = [colors.get(v, NO_DATA_COLOR) if v else NO_DATA_COLOR for v in districts["value"]]
        present = set(districts["value"])
        order = [t for t in catalogue["technology_id"] if t in present]
        order += sorted(v for v in present if v and v not in order)
        legend["kind"] = "categorical"
        legend["entries"] = [
            (names.get(v, "Unserved heat" if v == "unserved" else "No heat supply" if v == "none" else v),
             colors.get(v, NO_DATA_COLOR))
            for v in order
        ]
        legend["no_data"] = "" in present
    else:
        numbers = pd.to_numeric(districts["value"], errors="coerce").to_numpy(float)
        finite = numbers[np.isfinite(numbers)]
        legend["no_data"] = bool(len(finite) < len(numbers))
        if measure == "change_total_cost":
            limit = float(np.max(np.abs(finite))) if len(finite) else 0.0
            if value_range is not None:
                limit = max(abs(float(value_range[0])), abs(float(value_range[1])))
            limit = limit if limit > 0 else 1.0
            districts["color"] = diverging_colors(numbers, limit)
            legend.update(kind="diverging", vmin=-limit, vmax=limit)
        else:
            vmin = float(finite.min()) if len(finite) else 0.0
            vmax = float(finite.max()) if len(finite) else 1.0
            if value_range is not None:
                vmin, vmax = float(value_range[0]), float(value_range[1])
            districts["color"] = sequential_colors(numbers, vmin, vmax)
            legend.update(kind="sequential", vmin=vmin, vmax=vmax)

    districts["popup"] = [
        _district_popup(did, name, table, supply, base_table, names)
        for did, name in zip(districts["district_id"], districts["name"])
    ]
    return districts.reset_index(drop=True), legend


def shared_value_range(scenario, results, measure: str, baseline: RunResult | None = None,
                       technologies=None) -> tuple[float, float] | None:
    """One (low, high) colour scale over several runs' maps of a numeric measure; None for categories.

    ``results`` is an iterable of RunResult (or of (scenario, RunResult) pairs when the runs' districts differ).
    """
    if measure == "main_supply":
        return None
    low, high = math.inf, -math.inf
    for item in results:
        own, result = item if isinstance(item, tuple) else (scenario, item)
        if own is None or result is None or result.tables.get("districts") is None:
            continue
        values, _ = district_values(own, result, measure, baseline, technologies)
        numbers = pd.to_numeric(values["value"], errors="coerce").to_numpy(float)
        numbers = numbers[np.isfinite(numbers)]
        if len(numbers):
            low, high = min(low, float(numbers.min())), max(high, float(numbers.max()))
    if not math.isfinite(low):
        return None
    return (low, high)


def _district_popup(did, name, table, supply, base_table, names) -> str:
    lines = [f"<b>{escape(name)}</b> <span style='color:#666'>({escape(did)})</span>"]
    if table is None or did not in table.index:
        lines.append("<i>No result for this district.</i>")
        return "<br>".join(lines)
    row = table.loc[did]
    main = str(row["main_supply"])
    lines.append(f"Main supply: {escape(names.get(main, main))}")
    lines.append(f"Annual cost: {_number(row['total_cost_eur_per_a'], unit='€/a')}")
    if base_table is not None and did in base_table.index:
        delta = float(row["total_cost_eur_per_a"]) - float(base_table.at[did, "total_cost_eur_per_a"])
        lines.append(f"Change against the baseline: {_number(delta, '{:+,.0f}', '€/a')}")
    lines.append(f"Levelised cost: {_number(row['levelised_cost_eur_per_mwh'], '{:,.2f}', '€/MWh')}")
    lines.append(f"CO2: {_number(row['co2_t_per_a'], unit='t/a')} ({_number(row['co2_kg_per_mwh'], '{:,.1f}', 'kg/MWh')})")
    lines.append(f"Heat demand: {_number(row['heat_demand_mwh_per_a'], unit='MWh/a')}")
    if float(row.get("unserved_heat_mwh_per_a", 0.0) or 0.0) > 0.5:
        lines.append(f"<b>Unserved heat: {_number(row['unserved_heat_mwh_per_a'], unit='MWh/a')}</b>")
    if supply is not None and not supply.empty:
        heat = supply[supply["district_id"] == did].groupby("technology_id", sort=False)["heat_mwh_per_a"].sum()
        items = [f"<tr><td>{escape(names.get(t, t))}</td><td style='text-align:right'>{_number(v)}</td></tr>"
                 for t, v in heat.sort_values(ascending=False).items() if abs(float(v)) > 0.5]
        if items:
            lines.append("<table style='font-size:11px'><tr><th>Heat by technology</th><th>MWh/a</th></tr>"
                         + "".join(items) + "</table>")
    return "<br>".join(lines)


def well_values(scenario, result: RunResult | None = None) -> pd.DataFrame:
    """One row per well: position, reinjection position, annual heat, binding flags, marker radius, popup HTML."""
    wells = getattr(scenario, "wells", None)
    columns = ["well_id", "district_id", "lon", "lat", "reinjection_lon", "reinjection_lat", "heat_mwh_per_a",
               "binds", "radius_px", "popup"]
    if wells is None or len(wells) == 0:
        return pd.DataFrame(columns=columns)
    out = wells.copy()
    out["well_id"] = out["well_id"].astype(str)
    table = None
    if result is not None and result.tables.get("wells") is not None and not result.tables["wells"].empty:
        table = result.tables["wells"].copy()
        table["well_id"] = table["well_id"].astype(str)
        table = table.drop_duplicates("well_id").set_index("well_id")
    district_names = dict(zip(scenario.districts["district_id"].astype(str), scenario.districts["name"]))

    def pick(well_id, column):
        if table is None or well_id not in table.index or column not in table.columns:
            return np.nan
        return table.at[well_id, column]

    heat = np.array([pd.to_numeric(pick(w, "heat_mwh_per_a"), errors="coerce") for w in out["well_id"]], float)
    flow_binds = [_truthy(pick(w, "flow_limit_binds")) for w in out["well_id"]]
    volume_binds = [_truthy(pick(w, "volume_limit_binds")) for w in out["well_id"]]
    out["heat_mwh_per_a"] = heat
    out["binds"] = [a or b for a, b in zip(flow_binds, volume_binds)]
    peak = np.nanmax(heat) if np.isfinite(heat).any() else np.nan
    if np.isfinite(peak) and peak > 0:
        # marker area proportional to the annual heat
        share = np.sqrt(np.clip(np.nan_to_num(heat), 0.0, None) / peak)
        out["radius_px"] = _MIN_RADIUS_PX + (_MAX_RADIUS_PX - _MIN_RADIUS_PX) * share
    else:
        out["radius_px"] = 6.0
    popups = []
    for k, rec in enumerate(out.to_dict(orient="records")):
        wid = rec["well_id"]
        did = str(rec.get("district_id", ""))
        lines = [f"<b>Well {escape(wid)}</b>", f"District: {escape(district_names.get(did, did))}",
                 f"Permitted flow: {_number(rec.get('permit_flow_m3_per_h'), '{:,.1f}', 'm³/h')}"]
        if table is None or wid not in table.index:
            lines.append("<i>No result for this well.</i>")
        else:
            lines.append(f"Heat: {_number(heat[k], unit='MWh/a')}")
            cooling = pd.to_numeric(pick(wid, "cooling_mwh_per_a"), errors="coerce")
            if np.isfinite(cooling) and cooling > 0.5:
                lines.append(f"Cooling: {_number(cooling, unit='MWh/a')}")
            share = pd.to_numeric(pick(wid, "peak_flow_share"), errors="coerce")
            lines.append(f"Peak flow: {_number(100 * share, '{:,.0f}', '% of the permit')}")
            low = pd.to_numeric(pick(wid, "min_reinjection_temp_c"), errors="coerce")
            high = pd.to_numeric(pick(wid, "max_reinjection_temp_c"), errors="coerce")
            if np.isfinite(low) or np.isfinite(high):
                lines.append(f"Reinjection: {_number(low, '{:,.1f}')} to {_number(high, '{:,.1f}', '°C')}")
            status = []
            if flow_binds[k]:
                status.append("permitted flow binds")
            if volume_binds[k]:
                status.append("permitted annual volume binds")
            lines.append("Status: " + (", ".join(status) if status else "within the permit"))
        lines.append(f"<i style='color:#666'>{escape(cautions.WELL_POPUP)}</i>")
        popups.append("<br>".join(lines))
    out["popup"] = popups
    for column in ("reinjection_lon", "reinjection_lat"):
        if column not in out.columns:
            out[column] = np.nan
    return out[columns]


def _check_plumes(plume_polygons) -> list[dict]:
    if plume_polygons is None:
        return []
    checked = []
    for k, item in enumerate(plume_polygons):
        if not isinstance(item, Mapping) or "coordinates" not in item:
            raise ValueError(f"plume_polygons[{k}]: expected a dict with well_id, level_k and coordinates")
        ring = [(float(p[0]), float(p[1])) for p in item["coordinates"]]
        if len(ring) >= 3:
            checked.append({"well_id": str(item.get("well_id", "")), "level_k": item.get("level_k"), "ring": ring})
    return checked


# ---------------------------------------------------------------------------------------------------- legend
def legend_html(legend: dict, wells: bool = False, plumes: bool = False) -> str:
    """The legend as an HTML fragment (names escaped), shared by the folium and the SVG maps."""
    parts = [f"<div style='font-weight:bold;margin-bottom:4px'>{escape(legend['title'])}"
             + (f" [{escape(legend['unit'])}]" if legend.get("unit") else "") + "</div>"]
    swatch = ("<span style='display:inline-block;width:14px;height:12px;margin-right:6px;vertical-align:middle;"
              "border:1px solid #555;background:{}'></span>")
    if legend["kind"] == "categorical":
        for label, color in legend["entries"]:
            parts.append(f"<div>{swatch.format(color)}{escape(label)}</div>")
    elif legend["kind"] in ("sequential", "diverging"):
        scale = SEQUENTIAL_SCALE if legend["kind"] == "sequential" else DIVERGING_SCALE
        stops = ", ".join(scale_stops(scale))
        parts.append(f"<div style='width:180px;height:12px;border:1px solid #555;"
                     f"background:linear-gradient(to right, {stops})'></div>")
        fmt = "{:,.1f}" if legend["kind"] == "sequential" and abs(legend["vmax"] or 0) < 1e4 else "{:,.0f}"
        low, high = _number(legend["vmin"], fmt), _number(legend["vmax"], fmt)
        if legend["kind"] == "diverging":
            low, high = _number(legend["vmin"], "{:+,.0f}"), _number(legend["vmax"], "{:+,.0f}")
        parts.append(f"<div style='width:182px;display:flex;justify-content:space-between'>"
                     f"<span>{low}</span><span>{high}</span></div>")
        if legend["kind"] == "diverging":
            parts.append("<div style='color:#444'>blue: cheaper, red: dearer than the baseline</div>")
    if legend.get("no_data"):
        parts.append(f"<div>{swatch.format(NO_DATA_COLOR)}no result</div>")
    if wells:
        circle = ("<span style='display:inline-block;width:{0}px;height:{0}px;border-radius:50%;margin-right:6px;"
                  "vertical-align:middle;background:{1};border:{2}px solid {3}'></span>")
        parts.append("<div style='margin-top:6px;font-weight:bold'>Wells</div>")
        parts.append(f"<div>{circle.format(12, WELL_COLOR, 1, '#FFFFFF')}extraction well, area ∝ annual heat</div>")
        parts.append(f"<div>{circle.format(12, WELL_COLOR, 3, WELL_LIMIT_BINDS_COLOR)}a permit limit binds</div>")
        parts.append(f"<div>{circle.format(7, '#FFFFFF', 2, WELL_COLOR)}reinjection well</div>")
    if plumes:
        parts.append("<div><span style='display:inline-block;width:18px;margin-right:6px;vertical-align:middle;"
                     f"border-top:2px dashed {PLUME_COLOR}'></span>plume isotherm</div>")
    if wells or plumes:
        parts.append(f"<div style='margin-top:4px;color:#8a3b00;max-width:220px'>{escape(cautions.WELLS)}</div>")
    return "".join(parts)


def map_legend_html(scenario, result: RunResult | None = None, measure: str = "main_supply",
                    baseline: RunResult | None = None, technologies=None,
                    value_range: tuple[float, float] | None = None, wells: bool = True) -> str:
    """The legend of :func:`district_map` with the same arguments, as an HTML fragment to show beside the map."""
    _, legend = district_values(scenario, result, measure, baseline, technologies, value_range)
    return ("<div style='font:13px/1.45 sans-serif;border:1px solid #ccc;border-radius:4px;padding:6px 10px'>"
            + legend_html(legend, wells=wells and len(scenario.wells) > 0) + "</div>")


def _bounds(districts: pd.DataFrame, wells: pd.DataFrame) -> tuple[float, float, float, float]:
    lons, lats = [], []
    for geometry in districts["geometry"]:
        for lon, lat in _rings_points(geometry):
            lons.append(lon)
            lats.append(lat)
    if not lons and len(wells):
        lons, lats = list(wells["lon"].astype(float)), list(wells["lat"].astype(float))
    if not lons:
        return (-1.0, -1.0, 1.0, 1.0)
    return (min(lons), min(lats), max(lons), max(lats))


def _rings(geometry) -> list[list[list[tuple[float, float]]]]:
    """Polygons of a GeoJSON geometry, each a list of rings of (lon, lat)."""
    if not isinstance(geometry, Mapping):
        return []
    kind = geometry.get("type")
    coords = geometry.get("coordinates") or []
    if kind == "Polygon":
        polygons = [coords]
    elif kind == "MultiPolygon":
        polygons = coords
    else:
        return []
    return [[[(float(p[0]), float(p[1])) for p in ring] for ring in polygon] for polygon in polygons]


def _rings_points(geometry):
    for polygon in _rings(geometry):
        for ring in polygon:
            yield from ring


# ---------------------------------------------------------------------------------------------------- folium
LEAFLET_DIR = Path(__file__).resolve().parents[1] / "assets" / "leaflet"
"""Leaflet 1.9.4 (BSD 2-Clause licence, see LICENSE there), shipped so that maps draw without internet."""


@functools.lru_cache(maxsize=1)
def _leaflet_data_urls() -> tuple[str, str]:
    js = (LEAFLET_DIR / "leaflet.js").read_bytes()
    css = (LEAFLET_DIR / "leaflet.css").read_text(encoding="utf-8")
    # the stylesheet names its control icons by relative path; inline them so the data URL is self-contained
    for image in ("layers.png", "layers-2x.png", "marker-icon.png"):
        data = base64.b64encode((LEAFLET_DIR / "images" / image).read_bytes()).decode()
        css = css.replace(f"images/{image}", f"data:image/png;base64,{data}")
    return (
        "data:text/javascript;base64," + base64.b64encode(js).decode(),
        "data:text/css;base64," + base64.b64encode(css.encode()).decode(),
    )


# folium builds popup contents with jQuery's ``$(html)[0]``; this two-line stand-in does just that, so the map
# does not need jQuery from the internet.
_HTML_PARSER_JS = (
    "if (typeof window.$ === 'undefined') { window.$ = function (markup) {"
    " var t = document.createElement('template'); t.innerHTML = String(markup).trim();"
    " return [t.content.firstElementChild]; }; }"
)
_HTML_PARSER_URL = "data:text/javascript;base64," + base64.b64encode(_HTML_PARSER_JS.encode()).decode()


def use_bundled_leaflet(fmap) -> None:
    """Load Leaflet from the copy shipped with heatmosaic instead of content delivery networks.

    folium's default page pulls Leaflet, jQuery, Bootstrap and icon fonts from the internet; the district map
    needs only Leaflet, so the map gets exactly that, as data URLs, and works on a laptop with no connection.
    """
    js_url, css_url = _leaflet_data_urls()
    fmap.default_js = [("leaflet", js_url), ("html_parser", _HTML_PARSER_URL)]
    fmap.default_css = [("leaflet_css", css_url)]


def district_map(scenario, result: RunResult | None = None, measure: str = "main_supply",
                 baseline: RunResult | None = None, technologies=None, show_wells: bool = True,
                 plume_polygons=None, tiles: bool = False, legend_open: bool = True,
                 value_range: tuple[float, float] | None = None, extra_layers=(), legend_inside: bool = True):
    """Interactive map of the districts coloured by ``measure``, with wells and optional plume outlines.

    Parameters
    ----------
    scenario : Scenario
        Districts (GeoJSON polygons, WGS 84) and wells.
    result : RunResult, optional
        Without it the districts are drawn grey.
    measure : {'main_supply', 'levelised_cost_eur_per_mwh', 'co2_kg_per_mwh', 'change_total_cost'}
        Categorical technology colours, a cividis ramp, or a diverging ramp centred on 0 against ``baseline``.
    baseline : RunResult, optional
        Needed by ``change_total_cost``.
    technologies : DataFrame, optional
        Catalogue for names and colours; defaults to ``scenario.technologies``.
    show_wells : bool
        Extraction wells as circles (area proportional to annual heat, a vermillion outline where a permit limit
        binds), a thin line to the reinjection well and a small marker there.
    plume_polygons : list of dict, optional
        ``{"well_id", "level_k", "coordinates": [(lon, lat), ...]}``, drawn dashed in the layer "Plumes".
    tiles : bool
        False (default) draws no background, so the map works offline; True adds OpenStreetMap tiles.
    legend_open : bool
        Whether the legend starts unfolded.
    value_range : (float, float), optional
        A colour scale shared with other maps (:func:`shared_value_range`).
    legend_inside : bool
        False leaves the legend off the map, for a page that shows :func:`map_legend_html` beside it (small maps
        side by side, where a legend inside would cover the districts).
    extra_layers : iterable of folium layers
        Further layers (a permit status layer ...), added before the layer switch so that it lists them: a layer
        added after the switch leaves the switch pointing at a layer not yet created, and the map fails to draw.

    Returns
    -------
    folium.Map
    """
    import folium

    districts, legend = district_values(scenario, result, measure, baseline, technologies, value_range)
    wells = well_values(scenario, result) if show_wells else well_values(scenario, None).iloc[0:0]
    plumes = _check_plumes(plume_polygons)
    west, south, east, north = _bounds(districts, wells)
    fmap = folium.Map(location=[(south + north) / 2, (west + east) / 2], zoom_start=13, tiles=None, zoom_snap=0.25,
                      control_scale=True)
    use_bundled_leaflet(fmap)
    if tiles:
        folium.TileLayer("OpenStreetMap", name="Background map").add_to(fmap)
    layer = folium.FeatureGroup(name="Districts", show=True).add_to(fmap)
    for rec in districts.to_dict(orient="records"):
        if not isinstance(rec["geometry"], Mapping):
            continue
        color = rec["color"]
        shape = folium.GeoJson(
            {"type": "Feature", "geometry": rec["geometry"], "properties": {}},
            style_function=lambda _feature, c=color: {"fillColor": c, "color": "#333333", "weight": 1.2,
                                                      "fillOpacity": 0.72},
            highlight_function=lambda _feature: {"weight": 3, "color": "#000000"},
        )
        value = rec["value"]
        if measure == "main_supply":
            label = next((lbl for lbl, c in legend["entries"] if c == color), "")
        else:
            fmt = "{:+,.0f}" if measure == "change_total_cost" else "{:,.2f}"
            label = _number(value, fmt, legend["unit"])
        folium.Tooltip(f"{escape(rec['name'])}: {escape(label)}" if label else escape(rec["name"])).add_to(shape)
        folium.Popup(rec["popup"], max_width=340).add_to(shape)
        shape.add_to(layer)
    if len(wells):
        well_layer = folium.FeatureGroup(name="Wells", show=True).add_to(fmap)
        for rec in wells.to_dict(orient="records"):
            lon, lat = float(rec["lon"]), float(rec["lat"])
            rlon, rlat = rec["reinjection_lon"], rec["reinjection_lat"]
            if pd.notna(rlon) and pd.notna(rlat):
                folium.PolyLine([(lat, lon), (float(rlat), float(rlon))], color="#333333", weight=1.2,
                                dash_array="3 3", opacity=0.9).add_to(well_layer)
                folium.CircleMarker((float(rlat), float(rlon)), radius=3, color=WELL_COLOR, weight=2,
                                    fill=True, fill_color="#FFFFFF", fill_opacity=1.0,
                                    tooltip=folium.Tooltip(f"Reinjection well of {escape(rec['well_id'])}"),
                                    ).add_to(well_layer)
            binds = bool(rec["binds"])
            marker = folium.CircleMarker(
                (lat, lon), radius=float(rec["radius_px"]),
                color=WELL_LIMIT_BINDS_COLOR if binds else "#FFFFFF", weight=3 if binds else 1,
                fill=True, fill_color=WELL_COLOR, fill_opacity=0.85,
            )
            tip = f"Well {escape(rec['well_id'])}: {_number(rec['heat_mwh_per_a'], unit='MWh/a')}"
            folium.Tooltip(tip + (" (permit limit binds)" if binds else "")).add_to(marker)
            folium.Popup(rec["popup"], max_width=320).add_to(marker)
            marker.add_to(well_layer)
    if plumes:
        plume_layer = folium.FeatureGroup(name="Plumes", show=True).add_to(fmap)
        for item in plumes:
            level = _number(item["level_k"], "{:,.1f}", "K")
            folium.Polygon(
                [(lat, lon) for lon, lat in item["ring"]], color=PLUME_COLOR, weight=1.5, dash_array="6 4",
                fill=True, fill_color=PLUME_COLOR, fill_opacity=0.06,
                tooltip=folium.Tooltip(f"Plume of well {escape(item['well_id'])}: {escape(level)} isotherm "
                                       "(screening estimate)"),
            ).add_to(plume_layer)
    extra_layers = list(extra_layers)
    for extra in extra_layers:
        extra.add_to(fmap)
    if len(wells) or plumes or tiles or extra_layers:
        folium.LayerControl(collapsed=False).add_to(fmap)
    # room at the bottom right for a legend inside the map, so that it does not cover districts
    fmap.fit_bounds([[south, west], [north, east]],
                    padding_bottom_right=((250 if legend_open else 90) if legend_inside else 10, 10))
    if not legend_inside:
        return fmap

    add_folded_legend(fmap, legend_html(legend, wells=bool(len(wells)), plumes=bool(plumes)), legend_open)
    return fmap


_LEGEND_SCRIPT = """
        {% macro script(this, kwargs) %}
        (function() {
            var legend = L.control({position: 'bottomright'});
            legend.onAdd = function () {
                var div = L.DomUtil.create('div', 'heatmosaic-legend');
                div.style.cssText = 'background:rgba(255,255,255,0.93);padding:8px 10px;font:12px/1.45 sans-serif;'
                    + 'border:1px solid #999;border-radius:4px;max-width:{{ this.max_width }}px';
                div.innerHTML = '<details' + ({{ this.legend_open }} ? ' open' : '') + '>'
                    + '<summary style="cursor:pointer;font-weight:600">Legend</summary>'
                    + {{ this.legend_json }} + '</details>';
                L.DomEvent.disableClickPropagation(div);
                return div;
            };
            legend.addTo({{ this._parent.get_name() }});
        })();
        {% endmacro %}
        """


def add_folded_legend(fmap, html_text: str, legend_open: bool, max_width_px: int = 280) -> None:
    """Add ``html_text`` (already escaped) to ``fmap`` as a legend in the lower right corner that folds."""
    control = MacroElement()
    control._template = Template(_LEGEND_SCRIPT)
    control._template_str = _LEGEND_SCRIPT  # what branca rebuilds the template from in a copied or unpickled map
    control.legend_open = "true" if legend_open else "false"
    control.max_width = int(max_width_px)
    control.legend_json = json.dumps(html_text).replace("</", "<\\/")
    fmap.add_child(control)


# ---------------------------------------------------------------------------------------------------- SVG
def svg_district_map(scenario, result: RunResult | None = None, measure: str = "main_supply",
                     baseline: RunResult | None = None, technologies=None, show_wells: bool = True,
                     width_px: int = 720, title: str | None = None,
                     value_range: tuple[float, float] | None = None) -> str:
    """The districts, wells and legend of :func:`district_map` as one self-contained HTML fragment (inline SVG).

    ``value_range`` shares one colour scale among the maps of several runs (:func:`shared_value_range`).

    The projection is equirectangular about the map's mid latitude (longitudes shrunk by its cosine), which is
    true to shape at the size of a city. Hovering a district or well shows its figures (SVG ``<title>``).
    """
    districts, legend = district_values(scenario, result, measure, baseline, technologies, value_range)
    wells = well_values(scenario, result) if show_wells else well_values(scenario, None).iloc[0:0]
    west, south, east, north = _bounds(districts, wells)
    if len(wells):
        lons = np.r_[wells["lon"].astype(float), pd.to_numeric(wells["reinjection_lon"], errors="coerce").dropna()]
        lats = np.r_[wells["lat"].astype(float), pd.to_numeric(wells["reinjection_lat"], errors="coerce").dropna()]
        west, east = min(west, lons.min()), max(east, lons.max())
        south, north = min(south, lats.min()), max(north, lats.max())
    shrink = math.cos(math.radians((south + north) / 2))
    span_x = max((east - west) * shrink, 1e-9)
    span_y = max(north - south, 1e-9)
    pad = 12.0
    inner_w = float(width_px) - 2 * pad
    height_px = inner_w * span_y / span_x + 2 * pad
    factor = inner_w / span_x

    def xy(lon, lat):
        return pad + (lon - west) * shrink * factor, pad + (north - lat) * factor

    def plain(html_text: str) -> str:
        # tooltips of SVG <title> are plain text: drop the markup of the popup, keep its lines
        text = html_text.replace("<br>", "\n").replace("</tr>", "\n").replace("</td>", "  ")
        out, inside = [], False
        for ch in text:
            if ch == "<":
                inside = True
            elif ch == ">":
                inside = False
            elif not inside:
                out.append(ch)
        return "".join(out)

    shapes = []
    for rec in districts.to_dict(orient="records"):
        path = []
        for polygon in _rings(rec["geometry"]):
            for ring in polygon:
                pts = [xy(lon, lat) for lon, lat in ring]
                if len(pts) >= 3:
                    path.append("M" + " L".join(f"{x:.1f},{y:.1f}" for x, y in pts) + " Z")
        if path:
            shapes.append(f"<path d='{' '.join(path)}' fill='{rec['color']}' fill-opacity='0.8' stroke='#333' "
                          f"stroke-width='1' fill-rule='evenodd'><title>{plain(rec['popup'])}</title></path>")
    labels = []
    for rec in districts.to_dict(orient="records"):
        points = list(_rings_points(rec["geometry"]))
        if not points:
            continue
        # label at the mean of the outer ring: inside for the compact shapes of city districts
        outer = _rings(rec["geometry"])[0][0]
        x, y = xy(float(np.mean([p[0] for p in outer])), float(np.mean([p[1] for p in outer])))
        labels.append(f"<text x='{x:.1f}' y='{y:.1f}' text-anchor='middle' font-size='11' "
                      f"style='paint-order:stroke;stroke:#fff;stroke-width:3px' fill='#111'>{escape(rec['name'])}</text>")
    marks = []
    for rec in wells.to_dict(orient="records"):
        x, y = xy(float(rec["lon"]), float(rec["lat"]))
        rlon, rlat = rec["reinjection_lon"], rec["reinjection_lat"]
        if pd.notna(rlon) and pd.notna(rlat):
            rx, ry = xy(float(rlon), float(rlat))
            marks.append(f"<line x1='{x:.1f}' y1='{y:.1f}' x2='{rx:.1f}' y2='{ry:.1f}' stroke='#333' "
                         "stroke-width='1' stroke-dasharray='3 2'/>")
            marks.append(f"<circle cx='{rx:.1f}' cy='{ry:.1f}' r='2.5' fill='#fff' stroke='{WELL_COLOR}' "
                         f"stroke-width='1.5'><title>Reinjection well of {escape(rec['well_id'])}</title></circle>")
        binds = bool(rec["binds"])
        marks.append(f"<circle cx='{x:.1f}' cy='{y:.1f}' r='{float(rec['radius_px']) * 0.8:.1f}' fill='{WELL_COLOR}' "
                     f"fill-opacity='0.85' stroke='{WELL_LIMIT_BINDS_COLOR if binds else '#fff'}' "
                     f"stroke-width='{2.5 if binds else 1}'><title>{plain(rec['popup'])}</title></circle>")
    heading = f"<div style='font-weight:bold;margin:4px 0'>{escape(title)}</div>" if title else ""
    svg = (f"<svg width='{width_px:.0f}' height='{height_px:.0f}' "
           f"viewBox='0 0 {width_px:.0f} {height_px:.0f}' role='img' style='background:#f4f4f4;border:1px solid #ccc;font-family:sans-serif'>"
           + "".join(shapes) + "".join(marks) + "".join(labels) + "</svg>")
    legend_box = ("<div style='font:12px/1.45 sans-serif;padding:8px 10px;border:1px solid #ccc;"
                  "background:#fff;min-width:200px;max-width:260px'>"
                  + legend_html(legend, wells=bool(len(wells))) + "</div>")
    return (f"<div class='svg-map'>{heading}<div style='display:flex;gap:12px;align-items:flex-start;"
            f"flex-wrap:wrap'>{svg}{legend_box}</div></div>")
