"""The set-up map: districts coloured by heat-density class, existing wells and candidate doublets.

Heat density [MWh/(ha a)] is the annual heat demand over the district's land area
(:func:`engine.outputs.screening.district_screening`, :func:`engine.physics.typology.heat_density_mwh_per_ha_a`);
the classes and their source line are :data:`engine.physics.typology.HEAT_DENSITY_CLASSES` and
:data:`~engine.physics.typology.HEAT_DENSITY_SOURCE`. Colours are the cividis classes of
:func:`engine.outputs.palette.class_colors` (colour-blind safe). The classes are screening thresholds: whether a
network suits a district needs a feasibility study.
"""

from __future__ import annotations

import math
from collections.abc import Mapping

import numpy as np
import pandas as pd

from engine import cautions
from engine.outputs.maps import _bounds, _number, add_folded_legend, escape, use_bundled_leaflet
from engine.outputs.palette import NO_DATA_COLOR, ORANGE, WELL_COLOR, class_colors
from engine.outputs.screening import district_screening
from engine.physics import typology
from engine.physics.typology import HEAT_DENSITY_CLASSES, HEAT_DENSITY_SOURCE, LINEAR_DENSITY_CLASSES

DENSITY_UNIT = "MWh/(ha a)"
LINEAR_UNIT = "MWh/(m a)"
LINEAR_SOURCE = "0.5 from memory (German KfW network programme minimum), 1.5 common practice."


def density_class_colors() -> list[str]:
    """One colour per class of :data:`HEAT_DENSITY_CLASSES`, lowest class first."""
    return class_colors(len(HEAT_DENSITY_CLASSES))


def district_density(scenario, heat_demand_mwh_per_a=None) -> pd.DataFrame:
    """Per district: district_id, name, heat_demand_mwh_per_a, land_area_ha, heat_density_mwh_per_ha_a,
    heat_density_class (its label), class_index (-1 without a value) and color.

    ``heat_demand_mwh_per_a`` (one value per district, in the order of ``scenario.districts``) replaces the
    scenario's demand, so that the map follows the district editor before the files are written.
    """
    table = district_screening(scenario)
    if heat_demand_mwh_per_a is not None:
        demand = np.asarray(heat_demand_mwh_per_a, dtype=float)
        area_m2 = table["land_area_ha"].to_numpy(float) * 10_000.0
        table = typology.screening_table(list(table["district_id"]), demand, area_m2,
                                         table["street_length_m"].to_numpy(float))
    density = table["heat_density_mwh_per_ha_a"].to_numpy(float)
    index = np.full(len(table), -1)
    for k, c in enumerate(HEAT_DENSITY_CLASSES):
        index[(density >= c.low) & (density < c.high)] = k
    colors = density_class_colors()
    table["class_index"] = index
    table["color"] = [colors[k] if k >= 0 else NO_DATA_COLOR for k in index]
    linear = table["linear_heat_density_mwh_per_m_a"].to_numpy(float)
    linear_index = np.full(len(table), -1)
    for k, c in enumerate(LINEAR_DENSITY_CLASSES):
        linear_index[(linear >= c.low) & (linear < c.high)] = k
    linear_colors = class_colors(len(LINEAR_DENSITY_CLASSES))
    table["linear_color"] = [linear_colors[k] if k >= 0 else NO_DATA_COLOR for k in linear_index]
    table.insert(1, "name", list(scenario.districts["name"].astype(str)))
    return table[["district_id", "name", "heat_demand_mwh_per_a", "land_area_ha", "heat_density_mwh_per_ha_a",
                  "heat_density_class", "class_index", "color", "street_length_m",
                  "linear_heat_density_mwh_per_m_a", "linear_heat_density_class", "linear_color"]]


def density_legend_html(candidates: bool = False, linear: bool = False) -> str:
    """The legend: one swatch per class with its bounds [MWh/(ha a)], the wells, and the source line; with
    ``linear`` also the linear heat-density classes [MWh/(m a)] of the layer "Linear heat density"."""
    swatch = ("<span style='display:inline-block;width:14px;height:12px;margin-right:6px;vertical-align:middle;"
              "border:1px solid #555;background:{}'></span>")
    circle = ("<span style='display:inline-block;width:11px;height:11px;border-radius:50%;margin-right:6px;"
              "vertical-align:middle;background:{};border:2px solid {}'></span>")
    parts = [f"<div style='font-weight:bold;margin-bottom:4px'>Heat density [{escape(DENSITY_UNIT)}]</div>"]
    for c, color in zip(HEAT_DENSITY_CLASSES, density_class_colors()):
        parts.append(f"<div>{swatch.format(color)}{escape(c.label)}</div>")
    if linear:
        parts.append(f"<div style='font-weight:bold;margin:6px 0 4px'>Linear heat density [{escape(LINEAR_UNIT)}] "
                     "(layer off at first)</div>")
        for c, color in zip(LINEAR_DENSITY_CLASSES, class_colors(len(LINEAR_DENSITY_CLASSES))):
            parts.append(f"<div>{swatch.format(color)}{escape(c.label)}</div>")
        parts.append(f"<div style='color:#444;max-width:250px'>{escape(LINEAR_SOURCE)}</div>")
    parts.append(f"<div>{circle.format(WELL_COLOR, '#FFFFFF')}existing well doublet</div>")
    if candidates:
        parts.append(f"<div>{circle.format(ORANGE, WELL_COLOR)}proposed doublet</div>")
    parts.append(f"<div style='margin-top:4px;color:#444;max-width:250px'>{escape(HEAT_DENSITY_SOURCE)}</div>")
    parts.append(f"<div style='margin-top:2px;color:#8a3b00;max-width:250px'>{escape(cautions.WELLS)}</div>")
    return "".join(parts)


def proposed_doublets_layer(candidates: pd.DataFrame):
    """The candidate doublets (rows with ``well_id``, ``lon``, ``lat``) as the layer "Proposed doublets"; rows
    without a usable position are left out."""
    import folium

    layer = folium.FeatureGroup(name="Proposed doublets", show=True)
    for rec in candidates.to_dict(orient="records"):
        try:
            lat, lon = float(rec["lat"]), float(rec["lon"])
        except (TypeError, ValueError):
            continue
        if not (np.isfinite(lat) and np.isfinite(lon)):
            continue
        folium.CircleMarker((lat, lon), radius=7, color=WELL_COLOR, weight=2, fill=True, fill_color=ORANGE,
                            fill_opacity=1.0,
                            tooltip=folium.Tooltip(f"Proposed doublet {escape(rec.get('well_id', ''))}")
                            ).add_to(layer)
    return layer


def view_of_bounds(bounds, width_px: float, height_px: float, tile_px: int = 256) -> tuple[list[float], float]:
    """Centre [lat, lon] and the largest Web Mercator zoom (in steps of 0.25) at which ``bounds`` (west, south,
    east, north in degrees) fit ``width_px`` x ``height_px``: at zoom z the world is ``tile_px * 2**z`` pixels
    wide (the Web Mercator tiling scheme, EPSG:3857)."""
    west, south, east, north = (float(v) for v in bounds)

    def mercator_y(lat):
        return math.log(math.tan(math.pi / 4 + math.radians(lat) / 2))

    lon_share = max(east - west, 1e-9) / 360.0
    y_share = max(mercator_y(north) - mercator_y(south), 1e-9) / (2 * math.pi)
    zoom = min(math.log2(max(width_px, 50) / (tile_px * lon_share)), math.log2(max(height_px, 50) / (tile_px * y_share)))
    zoom = max(1.0, min(18.0, math.floor(zoom * 4) / 4))
    return [(south + north) / 2, (west + east) / 2], zoom


def setup_view(scenario, width_px: int = 900, height_px: int = 520, legend_px: int = 270) -> tuple[list, float]:
    """Centre [lat, lon] and zoom of :func:`setup_map`: the districts fit the part of the map left of the legend."""
    bounds = _bounds(scenario.districts, scenario.wells)
    center, zoom = view_of_bounds(bounds, width_px - legend_px, height_px - 40)
    center[1] += legend_px / 2 * 360.0 / (256 * 2**zoom)
    return center, zoom


def _class_layer(fmap, name: str, show: bool, scenario, records: list[dict], color_key: str, value_key: str,
                 fmt: str, unit: str, class_key: str, missing: str) -> None:
    """One layer of district polygons filled with ``record[color_key]``, the value and its class in the tooltip."""
    import folium

    layer = folium.FeatureGroup(name=name, show=show).add_to(fmap)
    for geometry, rec in zip(scenario.districts["geometry"], records):
        if not isinstance(geometry, Mapping):
            continue
        shape = folium.GeoJson(
            {"type": "Feature", "geometry": geometry, "properties": {}},
            style_function=lambda _f, c=rec[color_key]: {"fillColor": c, "color": "#333333", "weight": 1.2,
                                                         "fillOpacity": 0.7},
        )
        tip = f"{escape(rec['name'])}: {_number(rec[value_key], fmt, unit)} ({escape(rec[class_key] or missing)})"
        folium.Tooltip(tip).add_to(shape)
        shape.add_to(layer)


def setup_map(scenario, heat_demand_mwh_per_a=None, candidates: pd.DataFrame | None = None,
              legend_open: bool = True, width_px: int = 900, height_px: int = 520):
    """A folium map for the set-up page: districts coloured by heat-density class (layer "Heat density"),
    existing extraction wells (layer "Wells") and candidate doublets (layer "Proposed doublets": rows with
    ``well_id``, ``lon``, ``lat``; a page that updates them without redrawing the map passes
    :func:`proposed_doublets_layer` to streamlit-folium instead). A click anywhere reaches the page
    (streamlit-folium's ``last_clicked``)."""
    import folium

    table = district_density(scenario, heat_demand_mwh_per_a)
    wells = scenario.wells
    center, zoom = setup_view(scenario, width_px, height_px)
    # a fixed view rather than fit_bounds: streamlit-folium redraws the map in a frame that may still have no
    # size, and fit_bounds then zooms out to the whole world
    fmap = folium.Map(location=center, zoom_start=zoom, tiles=None, zoom_snap=0.25, control_scale=True)
    use_bundled_leaflet(fmap)
    records = table.to_dict(orient="records")
    _class_layer(fmap, "Heat density", True, scenario, records, "color", "heat_density_mwh_per_ha_a", "{:,.0f}",
                 DENSITY_UNIT, "heat_density_class", "no area")
    has_lengths = bool(np.isfinite(table["linear_heat_density_mwh_per_m_a"].to_numpy(float)).any())
    if has_lengths:  # only where street lengths are given (districts' street_length_m)
        _class_layer(fmap, "Linear heat density", False, scenario, records, "linear_color",
                     "linear_heat_density_mwh_per_m_a", "{:,.2f}", LINEAR_UNIT, "linear_heat_density_class",
                     "no street length given")
    if len(wells):
        well_layer = folium.FeatureGroup(name="Wells", show=True).add_to(fmap)
        for rec in wells.to_dict(orient="records"):
            folium.CircleMarker((float(rec["lat"]), float(rec["lon"])), radius=5, color="#FFFFFF", weight=1,
                                fill=True, fill_color=WELL_COLOR, fill_opacity=0.9,
                                tooltip=folium.Tooltip(f"Well {escape(rec['well_id'])}")).add_to(well_layer)
    if candidates is not None and len(candidates):
        proposed_doublets_layer(candidates).add_to(fmap)
    # top left, under the zoom buttons: the legend (bottom right) grows with the linear classes and would cover it
    folium.LayerControl(collapsed=False, position="topleft").add_to(fmap)
    add_folded_legend(fmap, density_legend_html(True, linear=has_lengths), legend_open, max_width_px=290)
    return fmap
