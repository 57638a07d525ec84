"""Plane geometry on district polygons and well or building points in WGS 84 longitude/latitude.

Scenario geometries follow GeoJSON (RFC 7946): positions are ``[longitude, latitude]`` in degrees of WGS 84.
Lengths and areas use a local equirectangular approximation about the shape's own mean latitude
(x = R cos(lat0) lon, y = R lat, angles in radians, R the mean Earth radius). Over a city (tens of kilometres)
its error is far below the uncertainty of any heat-planning input; it is not meant for whole countries.

References
----------
H. Butler et al. (2016). The GeoJSON Format. RFC 7946, Internet Engineering Task Force.
J. P. Snyder (1987). Map Projections: A Working Manual. U.S. Geological Survey Professional Paper 1395
(equirectangular projection, chapter 12).
H. Moritz (2000). Geodetic Reference System 1980. Journal of Geodesy 74, 128-133 (mean Earth radius
R1 = 6 371 008.8 m).
"""

from __future__ import annotations

from typing import Any, Sequence

import numpy as np
import shapely
from shapely.geometry import shape as _shape_from_mapping
from shapely.validation import explain_validity

EARTH_RADIUS_M = 6_371_008.8
"""Mean Earth radius R1 of GRS 80 [m] (Moritz 2000)."""

POLYGON_TYPES = ("Polygon", "MultiPolygon")

PROJECTED_THRESHOLD = 1000.0
"""A coordinate larger than this in magnitude cannot be degrees; it looks like metres of a projected CRS."""


# ----------------------------------------------------------------------------- coordinates
def coordinate_problem(lon: float, lat: float) -> str | None:
    """Why ``(lon, lat)`` is not a plausible WGS 84 position, or None when it is.

    Parameters
    ----------
    lon, lat : float
        Longitude and latitude. [°]

    Returns
    -------
    str or None
        A message that says what looks wrong (projected coordinates, swapped axes, out of range).
    """
    lon = float(lon)
    lat = float(lat)
    if not (np.isfinite(lon) and np.isfinite(lat)):
        return f"coordinates must be finite numbers, got ({lon}, {lat})"
    if abs(lon) > PROJECTED_THRESHOLD or abs(lat) > PROJECTED_THRESHOLD:
        return (
            f"coordinates ({lon:.10g}, {lat:.10g}) look like a projected CRS (metres); "
            "they must be WGS 84 longitude/latitude in degrees (EPSG:4326): reproject them, or say which CRS "
            "they are in (the layer's own CRS, or [gis] crs = \"EPSG:NNNN\" in scenario.toml)"
        )
    if abs(lat) > 90 and abs(lon) <= 90 and abs(lat) <= 180:
        return (
            f"latitude {lat:g} is outside -90..90; longitude and latitude look swapped "
            "(the order is longitude first, then latitude)"
        )
    if abs(lon) > 180 or abs(lat) > 90:
        return f"coordinates ({lon:.10g}, {lat:.10g}) are outside WGS 84 (longitude -180..180, latitude -90..90)"
    return None


_NESTING = {
    "Polygon": "a Polygon's coordinates are a list of rings, each a list of [longitude, latitude] positions",
    "MultiPolygon": "a MultiPolygon's coordinates are a list of polygons, each a list of rings, each a list of "
    "[longitude, latitude] positions",
}


def _rings(coordinates: Any, kind: str) -> list:
    """The rings of a Polygon or MultiPolygon as lists of positions.

    Raises
    ------
    ValueError
        If the coordinates are not nested as ``kind`` requires.
    """
    polygons = [coordinates] if kind == "Polygon" else coordinates
    if not isinstance(polygons, (list, tuple)):
        raise ValueError(f"coordinates are not nested as GeoJSON requires: {_NESTING[kind]}")
    rings = []
    for polygon in polygons:
        if not isinstance(polygon, (list, tuple)):
            raise ValueError(f"coordinates are not nested as GeoJSON requires: {_NESTING[kind]}")
        for ring in polygon:
            # A ring is a list of positions, each itself a list: a bare number means a level is missing.
            if not isinstance(ring, (list, tuple)) or any(not isinstance(p, (list, tuple)) for p in ring):
                raise ValueError(f"coordinates are not nested as GeoJSON requires: {_NESTING[kind]}")
            rings.append(ring)
    return rings


def _position_problem(position: Any) -> str | None:
    if not isinstance(position, (list, tuple)) or len(position) < 2:
        return f"a position must be [longitude, latitude], got {_short(position)}"
    lon, lat = position[0], position[1]
    if isinstance(lon, bool) or isinstance(lat, bool) or not isinstance(lon, (int, float)) or not isinstance(
        lat, (int, float)
    ):
        return f"a position must hold two numbers [longitude, latitude], got {_short(position)}"
    return coordinate_problem(lon, lat)


def _short(value: Any, limit: int = 60) -> str:
    text = repr(value)
    return text if len(text) <= limit else text[: limit - 3] + "..."


def _ring_problem(number: int, ring: list) -> str | None:
    """A ring with too few positions or that does not end where it starts (RFC 7946, section 3.1.6)."""
    if len(ring) < 4:
        return (
            f"ring {number} has {len(ring)} positions; a ring needs at least 4 (three corners and the first "
            "position repeated at the end)"
        )
    if [float(v) for v in ring[0][:2]] != [float(v) for v in ring[-1][:2]]:
        return (
            f"ring {number} is not closed: its last position {_short(list(ring[-1]))} must repeat the first "
            f"position {_short(list(ring[0]))} (add it at the end)"
        )
    return None


# ----------------------------------------------------------------------------- polygons
def geometry_problems(geometry: Any) -> list[str]:
    """Everything wrong with a GeoJSON district geometry; an empty list when it is usable.

    Checks the type (Polygon or MultiPolygon), the nesting of the coordinates, that every position is a plausible
    WGS 84 longitude/latitude (with a hint when it looks projected), that every ring is closed with at least four
    positions (RFC 7946, section 3.1.6) and that the polygon is valid in the sense of the OGC Simple Features
    rules (no self-intersection).

    Parameters
    ----------
    geometry : dict
        A GeoJSON geometry object.
    """
    if geometry is None:
        return ["the feature has no geometry; each district needs a Polygon or MultiPolygon"]
    if not isinstance(geometry, dict):
        return [f"geometry must be a GeoJSON object, got {type(geometry).__name__}"]
    kind = geometry.get("type")
    if kind not in POLYGON_TYPES:
        return [f"geometry must be a Polygon or MultiPolygon, got {_short(kind)}; draw the district as an area"]
    try:
        rings = _rings(geometry.get("coordinates"), kind)
    except ValueError as error:
        return [str(error)]
    if not rings or not any(rings):
        return ["the geometry has no coordinates; draw the district outline"]
    for ring in rings:
        for position in ring:
            message = _position_problem(position)
            if message is not None:
                # One message per geometry is enough: a projected layer has thousands of such positions.
                return [message]
    for number, ring in enumerate(rings, start=1):
        message = _ring_problem(number, ring)
        if message is not None:
            return [message]
    try:
        polygon = _shape_from_mapping(geometry)
    except Exception as error:  # shapely raises several types for malformed rings
        return [f"the polygon cannot be built: {error}; fix it in a GIS (e.g. 'fix geometries')"]
    if polygon.is_empty:
        return ["the polygon is empty; draw the district outline"]
    if not polygon.is_valid:
        reason = explain_validity(polygon)
        hint = " (the outline crosses itself)" if "self-intersection" in reason.lower() else ""
        return [f"the polygon is not valid: {reason}{hint}; fix it in a GIS (e.g. 'fix geometries')"]
    return []


def to_shape(geometry: dict):
    """A shapely geometry from a GeoJSON geometry dict.

    Raises
    ------
    ValueError
        If ``geometry`` is not a usable Polygon or MultiPolygon.
    """
    problems = geometry_problems(geometry)
    if problems:
        raise ValueError(f"geometry: {problems[0]}")
    return _shape_from_mapping(geometry)


def _local_projection(lat0_deg: float):
    """Forward and inverse equirectangular maps about latitude ``lat0_deg`` (x east, y north, metres)."""
    scale_x = EARTH_RADIUS_M * np.cos(np.radians(lat0_deg)) * np.pi / 180.0
    scale_y = EARTH_RADIUS_M * np.pi / 180.0

    def forward(lon, lat):
        return np.asarray(lon) * scale_x, np.asarray(lat) * scale_y

    def inverse(x, y):
        return np.asarray(x) / scale_x, np.asarray(y) / scale_y

    return forward, inverse


def _projected(geometry: dict):
    polygon = to_shape(geometry)
    lat0 = float(np.mean(shapely.get_coordinates(polygon)[:, 1]))
    forward, inverse = _local_projection(lat0)
    projected = shapely.transform(polygon, lambda xy: np.column_stack(forward(xy[:, 0], xy[:, 1])))
    return projected, inverse


def area_km2(geometry: dict) -> float:
    """Area of a district polygon. [km²]

    Uses the local equirectangular approximation described in the module docstring.

    Parameters
    ----------
    geometry : dict
        GeoJSON Polygon or MultiPolygon in WGS 84.

    Raises
    ------
    ValueError
        If ``geometry`` is not a usable polygon.
    """
    projected, _ = _projected(geometry)
    return float(projected.area) / 1e6


def centroid_lon_lat(geometry: dict) -> tuple[float, float]:
    """Area centroid of a district polygon as ``(lon, lat)``. [°]

    Computed in the local equirectangular plane and mapped back, so that it is the centroid of the area a
    planner sees on a map of the city.

    Raises
    ------
    ValueError
        If ``geometry`` is not a usable polygon.
    """
    projected, inverse = _projected(geometry)
    centre = projected.centroid
    lon, lat = inverse(centre.x, centre.y)
    return float(lon), float(lat)


def contains(geometry: dict, lon: float, lat: float) -> bool:
    """Whether the point ``(lon, lat)`` lies inside the polygon or on its boundary."""
    return bool(shapely.intersects_xy(to_shape(geometry), float(lon), float(lat)))


def containing_index(shapes: Sequence[Any], lon, lat) -> np.ndarray:
    """Index of the first shape that contains each point, or -1 for points outside all of them.

    A point on a shared boundary goes to the first district in file order.

    Parameters
    ----------
    shapes : sequence of shapely geometries or None
        District shapes in file order; None entries (unusable polygons) contain nothing.
    lon, lat : array_like
        Point coordinates. [°]

    Returns
    -------
    numpy.ndarray of int
    """
    lon = np.atleast_1d(np.asarray(lon, dtype=float))
    lat = np.atleast_1d(np.asarray(lat, dtype=float))
    if lon.shape != lat.shape:
        raise ValueError(f"lon and lat must have the same shape, got {lon.shape} and {lat.shape}")
    found = np.full(lon.shape, -1, dtype=int)
    finite = np.isfinite(lon) & np.isfinite(lat)
    for index, polygon in enumerate(shapes):
        if polygon is None:
            continue
        shapely.prepare(polygon)
        todo = (found < 0) & finite
        if not todo.any():
            break
        inside = np.zeros(lon.shape, dtype=bool)
        inside[todo] = shapely.intersects_xy(polygon, lon[todo], lat[todo])
        found[inside] = index
    return found


def offset_lon_lat(lon, lat, distance_m, bearing_deg) -> tuple[np.ndarray, np.ndarray]:
    """Position reached from ``(lon, lat)`` by going ``distance_m`` towards ``bearing_deg``.

    Local equirectangular approximation: east offset d sin(bearing), north offset d cos(bearing), converted to
    degrees with the mean Earth radius. Good to well under a metre for the hundred-metre offsets of a doublet.

    Parameters
    ----------
    lon, lat : array_like
        Start position. [°]
    distance_m : array_like
        Distance to go, >= 0. [m]
    bearing_deg : array_like
        Direction, clockwise from north. [°]

    Returns
    -------
    tuple of numpy.ndarray
        Longitude and latitude of the end point. [°]

    Raises
    ------
    ValueError
        If ``distance_m`` is negative, or ``lat`` is at a pole.
    """
    lon = np.asarray(lon, dtype=float)
    lat = np.asarray(lat, dtype=float)
    distance_m = np.asarray(distance_m, dtype=float)
    bearing = np.radians(np.asarray(bearing_deg, dtype=float))
    if np.any(distance_m < 0):
        raise ValueError(f"distance_m must be >= 0, got {distance_m}")
    if np.any(np.abs(lat) >= 90):
        raise ValueError(f"lat must be strictly between -90 and 90, got {lat}")
    east = distance_m * np.sin(bearing)
    north = distance_m * np.cos(bearing)
    dlat = np.degrees(north / EARTH_RADIUS_M)
    dlon = np.degrees(east / (EARTH_RADIUS_M * np.cos(np.radians(lat))))
    return lon + dlon, lat + dlat
