"""The plume model applied to a well field: interference between doublets and isotherm outlines on a map.

:func:`interference_matrix_k_per_unit` gives the temperature change at every extraction well per unit of
``Q dT_inj`` at every reinjection well, :func:`extraction_temperature_shift_k` the shifts for given rates and
temperature differences, :func:`isotherm_polygon_lonlat` the outline of one temperature change around a
reinjection well. The model, its assumptions and its limits are those of :mod:`engine.physics.plume`; screening
estimates only (:data:`engine.cautions.PLUME`).
"""

from __future__ import annotations

import numpy as np

from engine.physics.arguments import finite_array, finite_scalar
from engine.physics.coords import check_latitude, from_flow_frame, local_m_to_lonlat, lonlat_to_local_m, to_flow_frame
from engine.physics.plume import DEFAULT_THERMAL_CONDUCTIVITY_W_PER_M_K, unit_plume_response_s_per_m3

_MAX_ISOTHERM_RADIUS_M = 1.0e7

def interference_matrix_k_per_unit(
    reinjection_lon,
    reinjection_lat,
    extraction_lon,
    extraction_lat,
    flow_direction_deg,
    darcy_velocity_m_per_s,
    saturated_thickness_m,
    longitudinal_dispersivity_m,
    transverse_dispersivity_m,
    aquifer_heat_capacity_j_per_m3_k=2.8e6,
    water_heat_capacity_j_per_m3_k=4.18e6,
    thermal_conductivity_w_per_m_k=DEFAULT_THERMAL_CONDUCTIVITY_W_PER_M_K,
    time_s=None,
):
    """Temperature change at every extraction well per unit ``Q * dT_inj`` at every reinjection well.

    Entry ``[i, j]`` is the plume response of reinjection well ``i`` at extraction well ``j``
    (:func:`unit_plume_response_s_per_m3`). Because the line-source model is linear in ``Q * dT_inj``, the
    temperature shift at extraction well ``j`` is ``sum_i M[i, j] Q_i dT_i``; use
    :func:`extraction_temperature_shift_k`, which also applies the near-well clipping. The diagonal is each
    doublet's own recirculation (its reinjection plume at its own extraction well); the model ignores the
    drawdown cone of the extraction well, which in reality pulls water towards it, so a diagonal entry is
    a crude indicator only (usually near zero, as extraction wells sit up-gradient). Entries are not clipped
    and are infinite where a reinjection and an extraction well coincide. Screening estimate only.

    Parameters
    ----------
    reinjection_lon, reinjection_lat : array_like, shape (n,)
        Reinjection well positions. [° WGS 84]
    extraction_lon, extraction_lat : array_like, shape (n,)
        Extraction well positions of the same n doublets. [° WGS 84]
    flow_direction_deg : float
        Direction the groundwater flows TO, clockwise from north. [°]
    darcy_velocity_m_per_s, saturated_thickness_m, longitudinal_dispersivity_m, transverse_dispersivity_m,
    aquifer_heat_capacity_j_per_m3_k, water_heat_capacity_j_per_m3_k, thermal_conductivity_w_per_m_k, time_s
        As in :func:`plume_temperature_change_k`. [m/s], [m], [m], [m], [J/(m³ K)], [J/(m³ K)], [W/(m K)], [s]

    Returns
    -------
    numpy.ndarray, shape (n, n)
        ``M[i, j]``, temperature change at extraction well j per unit ``Q * dT_inj`` at reinjection well i.
        [K / (m³/s K)] = [s/m³]

    Raises
    ------
    ValueError
        If the position arrays differ in length or hold non-finite values, or an aquifer argument is bad.

    References
    ----------
    Kinzelbach (1987); Pophillat et al. (2020), full citations in the module docstring.
    """
    positions = {
        "reinjection_lon": reinjection_lon,
        "reinjection_lat": reinjection_lat,
        "extraction_lon": extraction_lon,
        "extraction_lat": extraction_lat,
    }
    arrays = {name: np.atleast_1d(finite_array(value, name)) for name, value in positions.items()}
    for name, array in arrays.items():
        if array.ndim != 1:
            raise ValueError(f"{name} must be one-dimensional; got shape {array.shape}")
    sizes = {name: array.size for name, array in arrays.items()}
    if len(set(sizes.values())) != 1:
        raise ValueError(f"reinjection and extraction positions must have the same length; got {sizes}")
    check_latitude(arrays["reinjection_lat"], "reinjection_lat")
    check_latitude(arrays["extraction_lat"], "extraction_lat")
    if sizes["reinjection_lon"] == 0:
        return np.zeros((0, 0))
    lon0 = float(np.mean(np.concatenate([arrays["reinjection_lon"], arrays["extraction_lon"]])))
    lat0 = float(np.mean(np.concatenate([arrays["reinjection_lat"], arrays["extraction_lat"]])))
    source_east, source_north = lonlat_to_local_m(arrays["reinjection_lon"], arrays["reinjection_lat"], lon0, lat0)
    target_east, target_north = lonlat_to_local_m(arrays["extraction_lon"], arrays["extraction_lat"], lon0, lat0)
    x_along, y_across = to_flow_frame(
        target_east[None, :] - source_east[:, None], target_north[None, :] - source_north[:, None], flow_direction_deg
    )
    return np.asarray(
        unit_plume_response_s_per_m3(
            x_along,
            y_across,
            darcy_velocity_m_per_s,
            saturated_thickness_m,
            longitudinal_dispersivity_m,
            transverse_dispersivity_m,
            aquifer_heat_capacity_j_per_m3_k,
            water_heat_capacity_j_per_m3_k,
            thermal_conductivity_w_per_m_k,
            time_s,
        ),
        dtype=float,
    ).reshape(x_along.shape)


def extraction_temperature_shift_k(interference_matrix, injection_rate_m3_per_s, injection_temp_change_k):
    """Temperature shift at each extraction well from all reinjection plumes (superposition with clipping).

    ``shift_j = sum_i clip(M[i, j] Q_i dT_i)``, each term clipped to ``|dT_i|`` (the near-well clipping of
    :func:`plume_temperature_change_k`) and the sum clipped to the range spanned by zero and the injected
    temperature differences, which no mixture of the injected waters can leave.

    Parameters
    ----------
    interference_matrix : array_like, shape (n, n)
        From :func:`interference_matrix_k_per_unit`. [K / (m³/s K)]
    injection_rate_m3_per_s : array_like, shape (n,)
        Reinjected volume flow of each doublet. [m³/s] Not negative.
    injection_temp_change_k : array_like, shape (n,)
        Reinjection minus undisturbed groundwater temperature of each doublet. [K] Negative for heating.

    Returns
    -------
    numpy.ndarray, shape (n,)
        Temperature change of the water reaching each extraction well. [K]

    Raises
    ------
    ValueError
        If the shapes do not match, a rate is negative or a value is not finite (NaN; the matrix may hold +inf).
    """
    matrix = np.asarray(interference_matrix, dtype=float)
    rate = np.atleast_1d(finite_array(injection_rate_m3_per_s, "injection_rate_m3_per_s"))
    delta = np.atleast_1d(finite_array(injection_temp_change_k, "injection_temp_change_k"))
    if matrix.ndim != 2 or matrix.shape[0] != matrix.shape[1]:
        raise ValueError(f"interference_matrix must be square; got shape {matrix.shape}")
    if np.any(np.isnan(matrix)) or np.any(matrix < 0.0):
        raise ValueError("interference_matrix must hold non-negative numbers (NaN or negative found)")
    n = matrix.shape[0]
    if rate.shape != (n,):
        raise ValueError(f"injection_rate_m3_per_s must have {n} values; got shape {rate.shape}")
    if delta.shape != (n,):
        raise ValueError(f"injection_temp_change_k must have {n} values; got shape {delta.shape}")
    if np.any(rate < 0.0):
        raise ValueError(f"injection_rate_m3_per_s must not be negative; got {float(np.min(rate)):g}")
    strength = rate * np.abs(delta)
    with np.errstate(invalid="ignore"):
        magnitude = np.where(strength[:, None] > 0.0, matrix * strength[:, None], 0.0)
    terms = np.sign(delta)[:, None] * np.minimum(magnitude, np.abs(delta)[:, None])
    shift = terms.sum(axis=0)
    return np.clip(shift, min(0.0, float(delta.min(initial=0.0))), max(0.0, float(delta.max(initial=0.0))))


# ----------------------------------------------------------------------------- isotherms
def _ray_radius_bisect(evaluate, directions: np.ndarray, level: float, lower: np.ndarray, upper: np.ndarray):
    """Radius on each ray where ``evaluate`` crosses ``level``, by bisection in log radius.

    Expects ``evaluate(lower) >= level > evaluate(upper)`` on every ray.
    """
    log_lo, log_hi = np.log(lower), np.log(upper)
    for _ in range(60):
        log_mid = 0.5 * (log_lo + log_hi)
        inside = evaluate(np.exp(log_mid)[:, None] * directions) >= level
        log_lo = np.where(inside, log_mid, log_lo)
        log_hi = np.where(inside, log_hi, log_mid)
    return np.exp(0.5 * (log_lo + log_hi))


def _isotherm_radii(evaluate_steady, evaluate, directions: np.ndarray, level: float, transient: bool) -> np.ndarray:
    """Outermost radius of the level on each ray (directions: (k, 2) unit vectors in the flow frame)."""
    count = directions.shape[0]
    lower = np.ones(count)
    upper = np.ones(count)
    # bracket the steady crossing: the steady plume decreases strictly along every ray from the well
    for _ in range(80):
        too_far = evaluate_steady(lower[:, None] * directions) < level
        if not np.any(too_far):
            break
        lower = np.where(too_far, lower / 4.0, lower)
    for _ in range(80):
        reached = evaluate_steady(upper[:, None] * directions) >= level
        if not np.any(reached):
            break
        if np.any(upper[reached] > _MAX_ISOTHERM_RADIUS_M):
            raise ValueError(
                "level_k: the isotherm reaches beyond 10 000 km, far outside where the model means anything; "
                "check darcy_velocity_m_per_s and the injection figures"
            )
        upper = np.where(reached, upper * 4.0, upper)
    upper = np.maximum(upper, lower * 1.0001)
    steady_radius = _ray_radius_bisect(evaluate_steady, directions, level, lower, upper)
    if not transient:
        return steady_radius
    # the transient plume lies inside the steady one (its integrand is positive, its range shorter);
    # sample each ray and bisect after the outermost sample at or above the level
    fractions = np.geomspace(1e-6, 1.0, 240)
    radii = steady_radius[:, None] * fractions[None, :]
    values = evaluate(radii[:, :, None] * directions[:, None, :])
    above = values >= level
    has_crossing = above.any(axis=1)
    last = np.where(has_crossing, above.shape[1] - 1 - np.argmax(above[:, ::-1], axis=1), 0)
    result = np.zeros(count)
    ray = np.flatnonzero(has_crossing)
    if ray.size == 0:
        return result
    inner = radii[ray, last[ray]]
    outer = np.where(last[ray] + 1 < radii.shape[1], radii[ray, np.minimum(last[ray] + 1, radii.shape[1] - 1)], inner)
    done = last[ray] + 1 >= radii.shape[1]
    bisected = _ray_radius_bisect(evaluate, directions[ray], level, inner, np.maximum(outer, inner * 1.0001))
    result[ray] = np.where(done, inner, bisected)
    return result


def isotherm_polygon_lonlat(
    level_k,
    reinjection_lon,
    reinjection_lat,
    injection_rate_m3_per_s,
    injection_temp_change_k,
    flow_direction_deg,
    darcy_velocity_m_per_s,
    saturated_thickness_m,
    longitudinal_dispersivity_m,
    transverse_dispersivity_m,
    aquifer_heat_capacity_j_per_m3_k=2.8e6,
    water_heat_capacity_j_per_m3_k=4.18e6,
    thermal_conductivity_w_per_m_k=DEFAULT_THERMAL_CONDUCTIVITY_W_PER_M_K,
    time_s=None,
    ray_count=181,
):
    """Outline of the area where a plume changes the groundwater temperature by at least ``level_k``.

    Rays are cast from the reinjection well and the crossing ``|dT| = level_k`` is found on each by bisection.
    The steady plume strictly decreases along every ray from the well (``d ln dT / dr = u cos(a) / (2 D_L) -
    k K1(k r) / K0(k r) < 0`` since ``K1 > K0``), so it is star-shaped and the rays find its exact outline.
    The transient plume is sampled along each ray and the outermost crossing taken. A first pass with evenly
    spaced rays measures the plume's elongation; a second pass spaces the rays evenly in a frame stretched by
    that elongation, so that a long narrow plume gets rays along its sides and tip too.

    Parameters
    ----------
    level_k : float
        Isotherm, as a magnitude of temperature change. [K] Positive.
    reinjection_lon, reinjection_lat : float
        Reinjection well. [° WGS 84]
    injection_rate_m3_per_s, injection_temp_change_k, darcy_velocity_m_per_s, saturated_thickness_m,
    longitudinal_dispersivity_m, transverse_dispersivity_m, aquifer_heat_capacity_j_per_m3_k,
    water_heat_capacity_j_per_m3_k, thermal_conductivity_w_per_m_k, time_s
        As in :func:`plume_temperature_change_k`.
    flow_direction_deg : float
        Direction the groundwater flows TO, clockwise from north. [°]
    ray_count : int, default 181
        Number of rays (and vertices). At least 8.

    Returns
    -------
    list of tuple of float
        ``[(lon, lat), ...]`` [° WGS 84], a closed ring (the first vertex repeated at the end, as GeoJSON
        wants), counter-clockwise seen from above. Empty when the level is never reached: no injection, or
        ``level_k >= |injection_temp_change_k|``, which only the clipped, invalid zone at the well could reach.
        Also empty for a transient so early that the isotherm is smaller than a millionth of the steady one.

    Raises
    ------
    ValueError
        Naming the argument that is not finite or out of range.

    References
    ----------
    Kinzelbach (1987); Pophillat et al. (2020), full citations in the module docstring.
    """
    level = finite_scalar(level_k, "level_k", minimum=0.0, strictly=True)
    lon0 = finite_scalar(reinjection_lon, "reinjection_lon")
    lat0 = finite_scalar(reinjection_lat, "reinjection_lat")
    rate = finite_scalar(injection_rate_m3_per_s, "injection_rate_m3_per_s", minimum=0.0)
    delta = finite_scalar(injection_temp_change_k, "injection_temp_change_k")
    direction = finite_scalar(flow_direction_deg, "flow_direction_deg")
    try:
        rays = int(ray_count)
    except (TypeError, ValueError):
        raise ValueError(f"ray_count must be an integer; got {ray_count!r}") from None
    if rays < 8:
        raise ValueError(f"ray_count must be at least 8; got {rays}")
    if time_s is not None:
        time_s = finite_scalar(time_s, "time_s", minimum=0.0, strictly=True)
    aquifer = dict(
        darcy_velocity_m_per_s=darcy_velocity_m_per_s,
        saturated_thickness_m=saturated_thickness_m,
        longitudinal_dispersivity_m=longitudinal_dispersivity_m,
        transverse_dispersivity_m=transverse_dispersivity_m,
        aquifer_heat_capacity_j_per_m3_k=aquifer_heat_capacity_j_per_m3_k,
        water_heat_capacity_j_per_m3_k=water_heat_capacity_j_per_m3_k,
        thermal_conductivity_w_per_m_k=thermal_conductivity_w_per_m_k,
    )
    # validate the aquifer once (raises with the argument's name), also when nothing is injected
    unit_plume_response_s_per_m3(1.0, 0.0, **aquifer, time_s=time_s)
    strength = rate * abs(delta)
    if strength == 0.0 or level >= abs(delta):
        return []

    def evaluate(points: np.ndarray, time=time_s) -> np.ndarray:
        response = unit_plume_response_s_per_m3(points[..., 0], points[..., 1], **aquifer, time_s=time)
        return strength * np.asarray(response)

    if float(darcy_velocity_m_per_s) > 0.0:
        transient = time_s is not None

        def evaluate_steady(points: np.ndarray) -> np.ndarray:
            return evaluate(points, None)

    else:
        # no flow: only the transient exists (the check above raised otherwise); it is the conduction line
        # source E1(r² / (4 D t)), which decreases along every ray, so it brackets itself
        transient = False
        evaluate_steady = evaluate

    def outline(angles: np.ndarray, stretch: float) -> np.ndarray:
        directions = np.column_stack([np.cos(angles), np.sin(angles) / stretch])
        directions /= np.linalg.norm(directions, axis=1)[:, None]
        radii = _isotherm_radii(evaluate_steady, evaluate, directions, level, transient)
        return radii[:, None] * directions

    angles = np.linspace(0.0, 2.0 * np.pi, rays, endpoint=False)
    first = outline(angles, 1.0)
    length = np.ptp(first[:, 0])
    width = np.ptp(first[:, 1])
    stretch = float(np.clip(length / width, 1.0, 1e3)) if width > 0.0 else 1.0
    points = outline(angles, stretch) if stretch > 1.05 else first
    if not np.any(np.linalg.norm(points, axis=1) > 0.0):
        return []
    east, north = from_flow_frame(points[:, 0], points[:, 1], direction)
    lon, lat = local_m_to_lonlat(east, north, lon0, lat0)
    ring = list(zip(np.atleast_1d(lon).tolist(), np.atleast_1d(lat).tolist()))
    if _signed_area(np.atleast_1d(east), np.atleast_1d(north)) < 0.0:
        ring.reverse()
    ring.append(ring[0])
    return ring


def _signed_area(x: np.ndarray, y: np.ndarray) -> float:
    """Shoelace area of a polygon given by its vertices (positive when counter-clockwise)."""
    return 0.5 * float(np.sum(x * np.roll(y, -1) - np.roll(x, -1) * y))
