"""Coordinates for the plume model: a local metric grid around a point, and the frame of the groundwater flow.

Longitude/latitude become metres east/north of a reference point by the equirectangular projection (Snyder 1987,
chapter 12), true to shape at the size of a city; offsets rotate into the flow frame (x along the flow, y to its
left) in which :mod:`engine.physics.plume` writes its solution.

References
----------
.. [1] Snyder, J. P. (1987). Map Projections: A Working Manual. U.S. Geological Survey Professional Paper 1395
   (equirectangular projection, chapter 12).
"""

from __future__ import annotations

import numpy as np

from engine.physics.arguments import as_result, finite_array, finite_scalar

EARTH_RADIUS_M = 6_371_008.8
"""Mean Earth radius R1 of GRS 80 [m] (Moritz 2000, Journal of Geodesy 74, 128-133)."""


def to_flow_frame(dx_east_m, dy_north_m, flow_direction_deg):
    """Rotate east/north offsets from a well into the flow frame (x along the flow, y across it).

    Parameters
    ----------
    dx_east_m, dy_north_m : float or array_like
        Offset of the points from the well, east and north. [m]
    flow_direction_deg : float
        Direction the groundwater flows TO, clockwise from north (90 = flowing east). [°]

    Returns
    -------
    tuple of numpy.ndarray
        ``(x_along_m, y_across_m)``: distance down-gradient and distance to the left of the flow. [m]

    Raises
    ------
    ValueError
        If an argument is not finite.
    """
    dx = finite_array(dx_east_m, "dx_east_m")
    dy = finite_array(dy_north_m, "dy_north_m")
    angle = np.radians(finite_scalar(flow_direction_deg, "flow_direction_deg"))
    # unit vector of the flow in (east, north) is (sin a, cos a); the left normal is (-cos a, sin a)
    x_along = dx * np.sin(angle) + dy * np.cos(angle)
    y_across = -dx * np.cos(angle) + dy * np.sin(angle)
    return as_result(x_along), as_result(y_across)


def from_flow_frame(x_along_m, y_across_m, flow_direction_deg):
    """Inverse of :func:`to_flow_frame`: flow-frame coordinates back to east/north offsets.

    Parameters
    ----------
    x_along_m, y_across_m : float or array_like
        Distance down-gradient and to the left of the flow. [m]
    flow_direction_deg : float
        Direction the groundwater flows TO, clockwise from north. [°]

    Returns
    -------
    tuple of numpy.ndarray
        ``(dx_east_m, dy_north_m)``. [m]
    """
    x = finite_array(x_along_m, "x_along_m")
    y = finite_array(y_across_m, "y_across_m")
    angle = np.radians(finite_scalar(flow_direction_deg, "flow_direction_deg"))
    dx_east = x * np.sin(angle) - y * np.cos(angle)
    dy_north = x * np.cos(angle) + y * np.sin(angle)
    return as_result(dx_east), as_result(dy_north)


def check_latitude(lat: np.ndarray, name: str) -> None:
    """ValueError naming ``name`` when a latitude lies outside [-90, 90] degrees."""
    if np.any(np.abs(lat) > 90.0):
        raise ValueError(f"{name} must lie between -90 and 90 degrees; got {float(np.max(np.abs(lat))):g}")


def lonlat_to_local_m(lon, lat, lon0, lat0):
    """WGS 84 longitude/latitude to local east/north metres about a reference point (equirectangular).

    ``x = R cos(lat0) (lon - lon0)``, ``y = R (lat - lat0)`` with angles in radians and R the mean Earth
    radius. Over a few kilometres, the scale of well interference, the error is far below a metre per
    kilometre; it is not meant for distances of hundreds of kilometres.

    Parameters
    ----------
    lon, lat : float or array_like
        Position. [° WGS 84]
    lon0, lat0 : float
        Reference point (origin of the local frame). [° WGS 84]

    Returns
    -------
    tuple of numpy.ndarray
        ``(x_east_m, y_north_m)``. [m]

    References
    ----------
    Snyder (1987), Map Projections: A Working Manual, chapter 12.
    """
    lon = finite_array(lon, "lon")
    lat = finite_array(lat, "lat")
    lon0 = finite_scalar(lon0, "lon0")
    lat0 = finite_scalar(lat0, "lat0")
    check_latitude(lat, "lat")
    if abs(lat0) >= 89.0:
        raise ValueError(f"lat0 must lie within 89 degrees of the equator for a local frame; got {lat0:g}")
    dlon = (lon - lon0 + 180.0) % 360.0 - 180.0  # across the antimeridian as well
    x_east = EARTH_RADIUS_M * np.cos(np.radians(lat0)) * np.radians(dlon)
    y_north = EARTH_RADIUS_M * np.radians(lat - lat0)
    return as_result(x_east), as_result(y_north)


def local_m_to_lonlat(x_east, y_north, lon0, lat0):
    """Inverse of :func:`lonlat_to_local_m`: local east/north metres to WGS 84 longitude/latitude.

    Parameters
    ----------
    x_east, y_north : float or array_like
        Offset from the reference point. [m]
    lon0, lat0 : float
        Reference point. [° WGS 84]

    Returns
    -------
    tuple of numpy.ndarray
        ``(lon, lat)``. [° WGS 84]

    References
    ----------
    Snyder (1987), Map Projections: A Working Manual, chapter 12.
    """
    x = finite_array(x_east, "x_east")
    y = finite_array(y_north, "y_north")
    lon0 = finite_scalar(lon0, "lon0")
    lat0 = finite_scalar(lat0, "lat0")
    if abs(lat0) >= 89.0:
        raise ValueError(f"lat0 must lie within 89 degrees of the equator for a local frame; got {lat0:g}")
    lon = lon0 + np.degrees(x / (EARTH_RADIUS_M * np.cos(np.radians(lat0))))
    lat = lat0 + np.degrees(y / EARTH_RADIUS_M)
    return as_result(lon), as_result(lat)
