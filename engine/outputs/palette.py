"""Colours of heatmosaic: one hue per technology kind, used by every figure, map and report.

The base colours are the eight colours of the Colour Universal Design palette, chosen so that they stay apart for
readers with the common forms of colour-vision deficiency (protanopia, deuteranopia, tritanopia), plus a light
grey of our own for heat stores (a store shifts heat in time and is not a source; a light grey stays apart from
the reddish purple of the network under deuteranopia, where a mid grey does not). Where several
technologies share a kind (gas, oil and pellet boilers are all ``fuel_boiler``), they get darker and lighter
shades of the kind's hue, so that the kind still reads at a glance. Technologies of one kind are ordered by their
id, so a catalogue always gives the same colours, whichever runs, districts or weeks a figure shows.

Continuous map measures use the cividis ramp (sequential, made for colour-vision deficiency) and changes against a
baseline use the ColorBrewer RdBu diverging ramp (blue = cheaper, red = dearer), which ColorBrewer marks as
colour-blind safe. Both are taken from :mod:`plotly.colors`, so the values are not retyped here.

References
----------
.. [1] Okabe, M. and Ito, K. (2008). Color Universal Design (CUD): How to make figures and presentations that are
   friendly to colorblind people. J*Fly, Data Depository for Drosophila Researchers.
   https://jfly.uni-koeln.de/color/ (address from memory; the colour values are the published ones).
.. [2] Nuñez, J. R., Anderton, C. R. and Renslow, R. S. (2018). Optimizing colormaps with consideration for color
   vision deficiency to enable accurate interpretation of scientific data. PLOS ONE 13(7): e0199239.
.. [3] Harrower, M. and Brewer, C. A. (2003). ColorBrewer.org: An online tool for selecting colour schemes for
   maps. The Cartographic Journal 40(1), 27-37.
"""

from __future__ import annotations

import colorsys
from collections.abc import Iterable

import numpy as np
import pandas as pd
from plotly.colors import diverging, sample_colorscale, sequential

# Okabe & Ito (2008) colours, by their published names.
BLACK = "#000000"
ORANGE = "#E69F00"
SKY_BLUE = "#56B4E9"
BLUISH_GREEN = "#009E73"
YELLOW = "#F0E442"
BLUE = "#0072B2"
VERMILLION = "#D55E00"
REDDISH_PURPLE = "#CC79A7"
LIGHT_GREY = "#C4C4C4"
DARK_GREEN = "#005A46"
"""A darker shade of bluish green, so that the two cooling kinds differ in lightness as well as in hue."""

TECHNOLOGY_KIND_COLORS: dict[str, str] = {
    "fuel_boiler": ORANGE,
    "electric_boiler": YELLOW,
    "air_heat_pump": SKY_BLUE,
    "groundwater_heat_pump": BLUE,
    "network_connection": REDDISH_PURPLE,
    "heat_store": LIGHT_GREY,
    "chiller": BLUISH_GREEN,
    "groundwater_cooling": DARK_GREEN,
    "unserved": VERMILLION,
    "demand": BLACK,
}
"""One colour per technology kind, plus ``unserved`` (heat the supply cannot meet) and ``demand`` (the line)."""

OTHER_KIND_COLOR = "#5F5F5F"
STORE_CHARGE_COLOR = "#6A6A6A"
"""Heat store charging (below zero in load curves): dark grey against the light grey of discharging, told apart
by lightness alone, which every form of colour-vision deficiency keeps."""
"""For a kind this module does not know (a catalogue from a newer version)."""

NO_DATA_COLOR = "#DDDDDD"
"""Fill of a district without a value (no result, or a measure that is undefined there)."""

DEMAND_LINE_DASH = "dash"
"""Plotly dash of the demand line: demand is the only dashed black line of a load curve."""

RUN_LINE_DASHES = ("solid", "dot", "dashdot", "longdash", "longdashdot")
"""Dashes that tell runs apart where several are overlaid in one figure."""

COST_PART_COLORS: dict[str, str] = {
    "investment": BLUE,
    "fixed_om": SKY_BLUE,
    "variable_om": BLUISH_GREEN,
    "energy": ORANGE,
    "co2": REDDISH_PURPLE,
    "unserved": VERMILLION,
}
"""Colours of the parts of the annual cost (unserved keeps the colour it has in the load curves)."""

COST_PART_LABELS: dict[str, str] = {
    "investment": "Investment (annuity)",
    "fixed_om": "Fixed O&M",
    "variable_om": "Variable O&M",
    "energy": "Energy",
    "co2": "CO2",
    "unserved": "Unserved heat",
}

WELL_COLOR = "#1A1A1A"
"""Fill of a well marker: near black with a white rim, so that it stands out on every district fill."""

WELL_LIMIT_BINDS_COLOR = VERMILLION
"""Outline of a well marker whose permitted flow or annual volume binds."""

SEQUENTIAL_SCALE = tuple(sequential.Cividis)
DIVERGING_SCALE = tuple(reversed(diverging.RdBu))
"""Blue for negative (a saving), red for positive (a higher cost)."""


def _hex(rgb: tuple[float, float, float]) -> str:
    return "#{:02X}{:02X}{:02X}".format(*(int(round(255 * min(max(c, 0.0), 1.0))) for c in rgb))


def _rgb(color: str) -> tuple[float, float, float]:
    text = color.strip()
    if text.startswith("#") and len(text) == 7:
        return tuple(int(text[i : i + 2], 16) / 255.0 for i in (1, 3, 5))
    if text.startswith("rgb(") and text.endswith(")"):
        parts = [float(p) for p in text[4:-1].split(",")]
        return tuple(p / 255.0 for p in parts[:3])
    raise ValueError(f"color: expected '#RRGGBB' or 'rgb(r, g, b)', got {color!r}")


def to_hex(color: str) -> str:
    """A colour written '#RRGGBB' or 'rgb(r, g, b)' as '#RRGGBB'."""
    return _hex(_rgb(color))


def shades(base: str, n: int) -> list[str]:
    """``n`` shades of the hue of ``base``, dark to light; ``[base]`` for ``n == 1``.

    The hue and saturation stay; the lightness (HLS) is spread evenly over a band around the base colour's,
    kept inside 0.22..0.80 so that no shade turns black or white.
    """
    if n < 1:
        raise ValueError(f"n must be at least 1, got {n}")
    if n == 1:
        return [to_hex(base)]
    h, lightness, s = colorsys.rgb_to_hls(*_rgb(base))
    low, high = max(0.22, lightness - 0.22), min(0.80, lightness + 0.22)
    return [_hex(colorsys.hls_to_rgb(h, float(v), s)) for v in np.linspace(low, high, n)]


def kind_color(kind: str) -> str:
    """Base colour of a technology kind (or of ``unserved`` / ``demand``)."""
    return TECHNOLOGY_KIND_COLORS.get(str(kind), OTHER_KIND_COLOR)


def _pairs(technologies) -> list[tuple[str, str]]:
    if technologies is None:
        return []
    if isinstance(technologies, pd.DataFrame):
        missing = [c for c in ("technology_id", "kind") if c not in technologies.columns]
        if missing:
            raise ValueError(f"technologies: missing column(s) {', '.join(missing)}")
        return [(str(t), str(k)) for t, k in zip(technologies["technology_id"], technologies["kind"])]
    pairs = []
    for item in technologies:
        if isinstance(item, Iterable) and not isinstance(item, str) and len(item) == 2:
            pairs.append((str(item[0]), str(item[1])))
        else:
            raise ValueError(f"technologies: expected (technology_id, kind) pairs, got {item!r}")
    return pairs


def technology_colors(technologies) -> dict[str, str]:
    """Colour of every technology of a catalogue.

    Parameters
    ----------
    technologies : DataFrame or iterable of (technology_id, kind)
        The catalogue (a DataFrame with columns ``technology_id`` and ``kind``, such as
        ``Scenario.technologies``), or pairs.

    Returns
    -------
    dict
        technology_id -> '#RRGGBB'. A kind with one technology gives it the kind's base colour; a kind with
        several gives them shades of that hue, ordered by technology id. The keys ``unserved`` and ``demand`` are
        always present (with their own colours), unless a technology uses that id.
    """
    by_kind: dict[str, list[str]] = {}
    seen = set()
    for tech, kind in _pairs(technologies):
        if tech in seen:
            continue
        seen.add(tech)
        by_kind.setdefault(kind, []).append(tech)
    colors: dict[str, str] = {}
    for kind, techs in by_kind.items():
        for tech, color in zip(sorted(techs), shades(kind_color(kind), len(techs))):
            colors[tech] = color
    for special in ("unserved", "demand"):
        colors.setdefault(special, TECHNOLOGY_KIND_COLORS[special])
    colors.setdefault("none", NO_DATA_COLOR)
    return colors


def sequential_colors(values, vmin: float, vmax: float) -> list[str]:
    """Cividis colours of ``values`` on the range ``vmin``..``vmax``; NaN gives :data:`NO_DATA_COLOR`."""
    return _sample(SEQUENTIAL_SCALE, values, vmin, vmax)


def class_colors(n: int) -> list[str]:
    """``n`` colours for ordered classes, low to high: the cividis ramp sampled at the middle of ``n`` equal
    steps (cividis is readable with colour-vision deficiency: Nuñez, Anderton, Renslow 2018, PLoS ONE 13(7))."""
    if n < 1:
        raise ValueError(f"n must be at least 1, got {n}")
    return [to_hex(c) for c in sample_colorscale(list(SEQUENTIAL_SCALE), ((np.arange(n) + 0.5) / n).tolist())]


def diverging_colors(values, limit: float) -> list[str]:
    """RdBu colours of ``values`` on -``limit``..``limit`` (0 is the neutral middle); NaN gives no-data grey."""
    limit = abs(float(limit))
    return _sample(DIVERGING_SCALE, values, -limit, limit)


def _sample(scale, values, vmin: float, vmax: float) -> list[str]:
    array = np.asarray(values, dtype=float).ravel()
    span = float(vmax) - float(vmin)
    if not np.isfinite(span) or span <= 0:
        position = np.full(array.shape, 0.5)
    else:
        position = np.clip((array - float(vmin)) / span, 0.0, 1.0)
    out = [NO_DATA_COLOR] * len(array)
    finite = np.flatnonzero(np.isfinite(array))
    if len(finite):
        sampled = sample_colorscale(list(scale), position[finite].tolist())
        for i, color in zip(finite, sampled):
            out[i] = to_hex(color)
    return out


def scale_stops(scale, n: int = 7) -> list[str]:
    """``n`` evenly spaced colours of a ramp, for a legend gradient."""
    return [to_hex(c) for c in sample_colorscale(list(scale), np.linspace(0.0, 1.0, n).tolist())]


def _figure_template():
    """plotly's ``plotly_white`` template cut down to its layout and the defaults of the two trace types our
    figures draw (bar and scatter). Figures look the same as with the whole template, which also carries the
    defaults of some twenty other trace types: copying those into every figure took most of a figure's build time
    (about 35 ms of 45) and a fifth of its JSON."""
    import plotly.graph_objects as go  # here, not at the top: the colour tables above need no plotly figures
    import plotly.io as pio

    white = pio.templates["plotly_white"]
    return go.layout.Template(layout=white.layout, data={"bar": white.data.bar, "scatter": white.data.scatter})


FIGURE_TEMPLATE = _figure_template()
"""The plotly template of every figure (:func:`_figure_template`)."""
