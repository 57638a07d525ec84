"""Thermal plume of a reinjection well: the analytic line-source model for screening well interference.

A reinjection well returns water that is colder (heating) or warmer (cooling) than the aquifer. Down-gradient it
leaves a thermal plume; where another doublet's extraction well sits in it, that well's source temperature
shifts. This module estimates the shift with the linear advective-dispersive heat transport model of a
continuous line source fully penetrating a confined, homogeneous aquifer of infinite extent in uniform flow
(Kinzelbach 1987; used for thermal plumes by Haehnlein et al. 2010 and compared with numerical models by
Pophillat et al. 2020).

Model and derivation
--------------------
Depth-averaged heat balance of the saturated aquifer for the temperature change ``T`` [K], with the flow along
``+x`` (``x`` along the flow, ``y`` across it, origin at the reinjection well)::

    C_a dT/dt + C_w q dT/dx = d/dx(L_L dT/dx) + d/dy(L_T dT/dy) + (C_w Q dT_inj / b) delta(x) delta(y)

``C_a`` and ``C_w`` are the volumetric heat capacities of the saturated aquifer and of water [J/(m³ K)], ``q``
the Darcy velocity [m/s], ``b`` the saturated thickness [m], ``Q dT_inj`` the product of injection rate
[m³/s] and injection temperature difference [K]. The thermal dispersion is conduction plus mechanical
dispersion, ``L_L = lambda_m + alpha_L C_w q`` (likewise ``L_T``). Dividing by ``C_a`` gives the thermal
velocity ``u = q C_w / C_a`` (the thermal front lags the water by the retardation ``C_a / (n C_w)``) and
``D_L = alpha_L u + lambda_m / C_a``, ``D_T = alpha_T u + lambda_m / C_a`` [m²/s].

With ``m = C_w Q dT_inj / (b C_a)`` the continuous source is the time integral of instantaneous Gaussian
puffs drifting at ``u``::

    T(x, y, t) = m / (4 pi sqrt(D_L D_T)) * int_0^t exp(-(x - u s)² / (4 D_L s) - y² / (4 D_T s)) ds / s

Expanding the square takes ``exp(x u / (2 D_L))`` out of the integral. With ``rho² = x²/D_L + y²/D_T``,
``beta = u rho / (2 sqrt(D_L))`` and the substitution ``s = s* e^v``, ``s* = rho sqrt(D_L) / u``, the
exponent becomes ``-beta cosh(v)``, so that::

    T(x, y, t) = m / (4 pi sqrt(D_L D_T)) exp(x u / (2 D_L)) int_{-inf}^{ln(t/s*)} exp(-beta cosh v) dv

which is the Hantush leaky-well function form ``W(0, beta) - W(u² t / (4 D_L), beta)``. As ``t -> inf``
the integral is ``2 K0(beta)`` (the integral representation of the modified Bessel function), giving the
steady state::

    T(x, y) = C_w Q dT_inj / (2 pi b C_a sqrt(D_L D_T)) * exp(x u / (2 D_L)) * K0(beta)

The same result follows directly from the steady equation: with ``T = exp(x u / (2 D_L)) phi`` and the
coordinates scaled by ``sqrt(D_L)``, ``sqrt(D_T)``, ``phi`` solves the modified Helmholtz equation whose
point-source solution is ``K0 / (2 pi)``. Far from the well (``beta >> 1``, no conduction) the asymptotic form
``K0(z) ~ sqrt(pi / (2 z)) e^-z`` recovers the published LAHM expression (Kinzelbach 1987, as written in
Pophillat et al. 2020) with its error function set to its large-time value 2.

Heat balance. Integrated across the flow the steady equation becomes one-dimensional; its bounded solution is
constant down-gradient, ``int T dy = m / u``, so the advective heat flux ``C_w q b int T dy`` equals the
injected ``C_w Q dT_inj`` at every distance down-gradient and the longitudinal dispersive flux there is zero
(the heat that disperses up-gradient returns). ``tests/test_plume.py`` checks this numerically.

Linearity. The plume shape does not depend on ``Q``: the well enters only as the source strength, so the
solution is linear in the product ``Q dT_inj``. This is also the model's main simplification near the well,
where the injected water really pushes the groundwater aside (see :func:`validity_notes`).

Numerics. The steady state uses the exponentially scaled ``k0e`` so that ``exp(x u / (2 D_L) - beta)`` is
evaluated with an exponent that is never positive. The transient integral uses the symmetry of
``cosh``: it equals ``k0e(beta) +/- int_0^|v_max| exp(-beta (cosh v - 1)) dv`` (times ``exp(-beta)``),
evaluated by Gauss-Legendre quadrature over a range cut where the integrand is below ``e^-50``. Without flow
(``q = 0``) the transient is the conduction line source ``m / (4 pi D) E1(r² / (4 D t))`` (``exp1``).

Near-well clipping. The line source is singular at the well (``K0`` grows like ``-ln``); no real temperature
change exceeds the injected one, so results are clipped to ``|T| <= |dT_inj|``. Within roughly the width of the
injected water's stream tube, ``Q / (b q)``, the model is not valid at all.

Screening only: homogeneous aquifer, uniform flow, no heat exchange with the confining layers, no hydraulic
effect of the wells. Results are screening estimates; a permit needs the numerical groundwater model the water
authority asks for, and decisions belong to licensed engineers and the local authority.

Applied to a well field (interference matrix, temperature shifts, isotherm outlines) in
:mod:`engine.physics.plume_field`; coordinates (local metric grid, flow frame) in :mod:`engine.physics.coords`.

References
----------
.. [1] Kinzelbach, W. (1987). Numerische Methoden zur Modellierung des Transports von Schadstoffen im
   Grundwasser. Oldenbourg, Munich.
.. [2] Haehnlein, S., Bayer, P. and Blum, P. (2010). International legal status of the use of shallow
   geothermal energy. Renewable and Sustainable Energy Reviews 14(9), 2611-2625.
.. [3] Pophillat, W., Attard, G., Bayer, P., Hecht-Mendez, J. and Blum, P. (2020). Analytical solutions for
   predicting thermal plumes of groundwater heat pump systems. Renewable Energy 147, 2696-2707.
.. [4] Hantush, M. S. and Jacob, C. E. (1955). Non-steady radial flow in an infinite leaky aquifer.
   Transactions, American Geophysical Union 36(1), 95-100.
.. [5] Carslaw, H. S. and Jaeger, J. C. (1959). Conduction of Heat in Solids, 2nd ed. Oxford University Press
   (continuous line source, section 10.4).
.. [6] Abramowitz, M. and Stegun, I. A. (1964). Handbook of Mathematical Functions. National Bureau of
   Standards (integral representation of K0, 9.6.24).
"""

from __future__ import annotations

import enum

import numpy as np
from scipy import special

from engine import cautions
from engine.physics.arguments import as_result, finite_array, finite_scalar


SECONDS_PER_DAY = 86_400.0

DEFAULT_THERMAL_CONDUCTIVITY_W_PER_M_K = 2.0
"""Thermal conductivity of a water-saturated sand or gravel aquifer [W/(m K)]; a typical handbook value,
quoted from memory (saturated unconsolidated sediments lie roughly between 1.5 and 2.5 W/(m K))."""

_QUADRATURE_NODES, _QUADRATURE_WEIGHTS = np.polynomial.legendre.leggauss(128)
_INTEGRAND_CUTOFF = 50.0  # the transient integrand is cut where it falls below exp(-50) of its peak
_CHUNK = 20_000  # points per quadrature block, to bound memory (points x nodes)


def _transport_coefficients(
    darcy_velocity_m_per_s,
    longitudinal_dispersivity_m,
    transverse_dispersivity_m,
    aquifer_heat_capacity_j_per_m3_k,
    water_heat_capacity_j_per_m3_k,
    thermal_conductivity_w_per_m_k,
):
    """Thermal velocity u [m/s] and dispersion coefficients D_L, D_T [m²/s], after checking the arguments."""
    q = finite_scalar(darcy_velocity_m_per_s, "darcy_velocity_m_per_s", minimum=0.0)
    alpha_l = finite_scalar(longitudinal_dispersivity_m, "longitudinal_dispersivity_m", minimum=0.0)
    alpha_t = finite_scalar(transverse_dispersivity_m, "transverse_dispersivity_m", minimum=0.0)
    c_a = finite_scalar(aquifer_heat_capacity_j_per_m3_k, "aquifer_heat_capacity_j_per_m3_k", minimum=0.0, strictly=True)
    c_w = finite_scalar(water_heat_capacity_j_per_m3_k, "water_heat_capacity_j_per_m3_k", minimum=0.0, strictly=True)
    lam = finite_scalar(thermal_conductivity_w_per_m_k, "thermal_conductivity_w_per_m_k", minimum=0.0)
    u = q * c_w / c_a
    d_l = alpha_l * u + lam / c_a
    d_t = alpha_t * u + lam / c_a
    if d_l <= 0.0:
        raise ValueError(
            "longitudinal_dispersivity_m and thermal_conductivity_w_per_m_k are both zero (or there is no flow): "
            "the longitudinal dispersion coefficient must be positive"
        )
    if d_t <= 0.0:
        raise ValueError(
            "transverse_dispersivity_m and thermal_conductivity_w_per_m_k are both zero (or there is no flow): "
            "the transverse dispersion coefficient must be positive"
        )
    return u, d_l, d_t, c_w / c_a


def _gauss_legendre(function, lower: np.ndarray, upper: np.ndarray, beta: np.ndarray) -> np.ndarray:
    """Integral of ``function(v, beta)`` from ``lower`` to ``upper`` (1-D arrays) by 128-node Gauss-Legendre."""
    total = np.empty_like(lower)
    for start in range(0, lower.size, _CHUNK):
        block = slice(start, start + _CHUNK)
        half = 0.5 * (upper[block] - lower[block])
        mid = 0.5 * (upper[block] + lower[block])
        nodes = mid[:, None] + half[:, None] * _QUADRATURE_NODES[None, :]
        values = function(nodes, beta[block][:, None])
        total[block] = half * (values @ _QUADRATURE_WEIGHTS)
    return total


def _scaled_cosh_integrand(v: np.ndarray, beta: np.ndarray) -> np.ndarray:
    # exp(-beta (cosh v - 1)), written with expm1-free cosh: cosh v - 1 = 2 sinh²(v/2) keeps precision near 0
    return np.exp(-2.0 * beta * np.sinh(0.5 * v) ** 2)


def _incomplete_cosh_integral_scaled(beta: np.ndarray, v_max: np.ndarray) -> np.ndarray:
    """``exp(beta) * int_{-inf}^{v_max} exp(-beta cosh v) dv`` for beta > 0 (1-D arrays).

    Equals ``2 k0e(beta)`` as ``v_max -> inf``. Uses the symmetry of cosh so that no large numbers cancel.
    """
    cut = np.arccosh(1.0 + _INTEGRAND_CUTOFF / beta)
    result = np.zeros_like(beta)
    ahead = v_max >= 0.0
    if np.any(ahead):
        upper = np.minimum(v_max[ahead], cut[ahead])
        half_integral = special.k0e(beta[ahead])
        partial = _gauss_legendre(_scaled_cosh_integrand, np.zeros_like(upper), upper, beta[ahead])
        # the part up to v_max never exceeds the half beyond 0; the cap removes rounding above the steady state
        result[ahead] = half_integral + np.minimum(partial, half_integral)
    behind = (~ahead) & (-v_max < cut)
    if np.any(behind):
        result[behind] = _gauss_legendre(_scaled_cosh_integrand, -v_max[behind], cut[behind], beta[behind])
    return result


# ----------------------------------------------------------------------------- plume physics
def unit_plume_response_s_per_m3(
    x_m,
    y_m,
    darcy_velocity_m_per_s,
    saturated_thickness_m,
    longitudinal_dispersivity_m,
    transverse_dispersivity_m,
    aquifer_heat_capacity_j_per_m3_k=2.8e6,
    water_heat_capacity_j_per_m3_k=4.18e6,
    thermal_conductivity_w_per_m_k=DEFAULT_THERMAL_CONDUCTIVITY_W_PER_M_K,
    time_s=None,
):
    """Temperature change per unit injected ``Q * dT_inj`` of a continuous line source, unclipped.

    The kernel of :func:`plume_temperature_change_k`: multiply by ``Q * dT_inj`` [m³/s K] to get kelvin. It is
    not clipped, so it is infinite at the well itself; see the module docstring for the formula.

    Parameters
    ----------
    x_m : float or array_like
        Distance along the groundwater flow from the reinjection well (negative up-gradient). [m]
    y_m : float or array_like
        Distance across the flow from the reinjection well. [m] Broadcast against ``x_m``.
    darcy_velocity_m_per_s : float
        Darcy velocity (specific discharge) of the undisturbed groundwater flow. [m/s] Must be positive for
        the steady state; zero is allowed for the transient (pure conduction).
    saturated_thickness_m : float
        Saturated thickness of the confined aquifer, fully penetrated by the well. [m]
    longitudinal_dispersivity_m, transverse_dispersivity_m : float
        Dispersivities along and across the flow. [m]
    aquifer_heat_capacity_j_per_m3_k : float, default 2.8e6
        Volumetric heat capacity of the saturated aquifer. [J/(m³ K)]
    water_heat_capacity_j_per_m3_k : float, default 4.18e6
        Volumetric heat capacity of water. [J/(m³ K)]
    thermal_conductivity_w_per_m_k : float, default 2.0
        Thermal conductivity of the saturated aquifer. [W/(m K)]
    time_s : None, float or array_like, optional
        Time since injection started. [s] None gives the steady state. Broadcast against ``x_m``, ``y_m``.

    Returns
    -------
    numpy.ndarray or float
        Temperature change per unit ``Q * dT_inj``. [K / (m³/s K)] = [s/m³]

    Raises
    ------
    ValueError
        Naming the first argument that is not finite, negative where it must not be, or inconsistent (no flow
        in steady state, zero dispersion).

    References
    ----------
    Kinzelbach (1987); Pophillat et al. (2020); Hantush and Jacob (1955); Carslaw and Jaeger (1959),
    full citations in the module docstring.
    """
    x = finite_array(x_m, "x_m")
    y = finite_array(y_m, "y_m")
    b = finite_scalar(saturated_thickness_m, "saturated_thickness_m", minimum=0.0, strictly=True)
    u, d_l, d_t, capacity_ratio = _transport_coefficients(
        darcy_velocity_m_per_s,
        longitudinal_dispersivity_m,
        transverse_dispersivity_m,
        aquifer_heat_capacity_j_per_m3_k,
        water_heat_capacity_j_per_m3_k,
        thermal_conductivity_w_per_m_k,
    )
    steady_coefficient = capacity_ratio / (2.0 * np.pi * b * np.sqrt(d_l * d_t))
    if time_s is None:
        if u <= 0.0:
            raise ValueError(
                "darcy_velocity_m_per_s must be positive for the steady state (time_s=None): without flow a "
                "2-D continuous source never settles; give time_s"
            )
        x, y = np.broadcast_arrays(x, y)
        rho = np.sqrt(x**2 / d_l + y**2 / d_t)  # [s^0.5]
        beta = u * rho / (2.0 * np.sqrt(d_l))
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            # x u / (2 D_L) <= beta always, so the exponent is never positive; k0e(0) = inf at the well
            response = steady_coefficient * np.exp(x * u / (2.0 * d_l) - beta) * special.k0e(beta)
        return as_result(np.where(beta == 0.0, np.inf, response))

    t = finite_array(time_s, "time_s")
    if np.any(t <= 0.0):
        raise ValueError(f"time_s must be positive; got {float(np.min(t)):g} s")
    x, y, t = np.broadcast_arrays(x, y, t)
    shape = x.shape
    x, y, t = x.ravel(), y.ravel(), t.ravel()
    rho = np.sqrt(x**2 / d_l + y**2 / d_t)
    response = np.full(x.shape, np.inf)
    away = rho > 0.0
    if u <= 0.0:
        # pure conduction, D_L = D_T: continuous line source of Carslaw and Jaeger, E1(r² / (4 D t))
        response[away] = 0.5 * steady_coefficient * special.exp1(rho[away] ** 2 / (4.0 * t[away]))
        return as_result(response.reshape(shape))
    beta = u * rho[away] / (2.0 * np.sqrt(d_l))
    centre_time = rho[away] * np.sqrt(d_l) / u  # time at which the puff integrand peaks [s]
    v_max = np.log(t[away] / centre_time)
    integral = _incomplete_cosh_integral_scaled(beta, v_max)
    with np.errstate(over="ignore", invalid="ignore"):
        response[away] = 0.5 * steady_coefficient * np.exp(x[away] * u / (2.0 * d_l) - beta) * integral
    return as_result(response.reshape(shape))


def plume_temperature_change_k(
    x_m,
    y_m,
    injection_rate_m3_per_s,
    injection_temp_change_k,
    darcy_velocity_m_per_s,
    saturated_thickness_m,
    longitudinal_dispersivity_m,
    transverse_dispersivity_m,
    aquifer_heat_capacity_j_per_m3_k=2.8e6,
    water_heat_capacity_j_per_m3_k=4.18e6,
    thermal_conductivity_w_per_m_k=DEFAULT_THERMAL_CONDUCTIVITY_W_PER_M_K,
    time_s=None,
):
    """Groundwater temperature change around a reinjection well (continuous line source, Kinzelbach 1987).

    Steady state::

        dT(x, y) = C_w Q dT_inj / (2 pi b C_a sqrt(D_L D_T)) exp(x u / (2 D_L)) K0(beta)

    with ``u = q C_w / C_a``, ``D_L = alpha_L u + lambda_m / C_a``, ``D_T = alpha_T u + lambda_m / C_a`` and
    ``beta = (u / (2 sqrt(D_L))) sqrt(x² / D_L + y² / D_T)``; the transient replaces ``2 K0`` by the
    incomplete (Hantush) integral, see the module docstring for the derivation.

    The model is singular at the well; the result is clipped so that ``|dT| <= |dT_inj|``. Within about
    ``Q / (b q)`` of the well, where the injected water displaces the groundwater, the line source is not a
    valid description (:func:`validity_notes`). Screening estimate only.

    Parameters
    ----------
    x_m : float or array_like
        Distance along the groundwater flow from the reinjection well (negative up-gradient). [m]
    y_m : float or array_like
        Distance across the flow. [m] Broadcast against ``x_m``.
    injection_rate_m3_per_s : float
        Reinjected volume flow. [m³/s] Not negative.
    injection_temp_change_k : float
        Reinjection temperature minus undisturbed groundwater temperature. [K] Negative for cold water
        (heating), positive for warm water (cooling).
    darcy_velocity_m_per_s : float
        Darcy velocity (specific discharge). [m/s]
    saturated_thickness_m : float
        Saturated thickness of the confined aquifer. [m]
    longitudinal_dispersivity_m, transverse_dispersivity_m : float
        Dispersivities along and across the flow. [m]
    aquifer_heat_capacity_j_per_m3_k : float, default 2.8e6
        Volumetric heat capacity of the saturated aquifer. [J/(m³ K)]
    water_heat_capacity_j_per_m3_k : float, default 4.18e6
        Volumetric heat capacity of water. [J/(m³ K)]
    thermal_conductivity_w_per_m_k : float, default 2.0
        Thermal conductivity of the saturated aquifer (typical handbook value, from memory). [W/(m K)]
    time_s : None, float or array_like, optional
        Time since continuous injection started. [s] None (default) gives the steady state.

    Returns
    -------
    numpy.ndarray or float
        Temperature change of the groundwater, same sign as ``injection_temp_change_k``. [K]

    Raises
    ------
    ValueError
        Naming the argument that is not finite, out of range or inconsistent.

    References
    ----------
    Kinzelbach (1987); Haehnlein et al. (2010); Pophillat et al. (2020), full citations in the module docstring.
    """
    rate = finite_scalar(injection_rate_m3_per_s, "injection_rate_m3_per_s", minimum=0.0)
    delta = finite_scalar(injection_temp_change_k, "injection_temp_change_k")
    response = np.asarray(
        unit_plume_response_s_per_m3(
            x_m,
            y_m,
            darcy_velocity_m_per_s,
            saturated_thickness_m,
            longitudinal_dispersivity_m,
            transverse_dispersivity_m,
            aquifer_heat_capacity_j_per_m3_k,
            water_heat_capacity_j_per_m3_k,
            thermal_conductivity_w_per_m_k,
            time_s,
        )
    )
    if rate == 0.0 or delta == 0.0:
        return as_result(np.zeros_like(response))
    magnitude = np.minimum(rate * abs(delta) * response, abs(delta))
    return as_result(np.sign(delta) * magnitude)


def plume_parameters_from_aquifer(aquifer, thermal_conductivity_w_per_m_k=DEFAULT_THERMAL_CONDUCTIVITY_W_PER_M_K):
    """Keyword arguments in SI units for the plume functions from an ``[aquifer]`` description.

    Parameters
    ----------
    aquifer : object
        Anything with the attributes of :class:`engine.scenario.inputs.Aquifer`: ``flow_direction_deg`` [°],
        ``darcy_velocity_m_per_d`` [m/d], ``saturated_thickness_m`` [m], ``longitudinal_dispersivity_m`` and
        ``transverse_dispersivity_m`` [m], ``aquifer_heat_capacity_mj_per_m3_k`` and
        ``water_heat_capacity_mj_per_m3_k`` [MJ/(m³ K)].
    thermal_conductivity_w_per_m_k : float, default 2.0
        Thermal conductivity of the saturated aquifer (not part of the scenario file). [W/(m K)]

    Returns
    -------
    dict
        ``flow_direction_deg``, ``darcy_velocity_m_per_s``, ``saturated_thickness_m``,
        ``longitudinal_dispersivity_m``, ``transverse_dispersivity_m``, ``aquifer_heat_capacity_j_per_m3_k``,
        ``water_heat_capacity_j_per_m3_k``, ``thermal_conductivity_w_per_m_k``: exactly the keywords of
        :func:`engine.physics.plume_field.interference_matrix_k_per_unit` and
        :func:`engine.physics.plume_field.isotherm_polygon_lonlat`.
    """
    return {
        "flow_direction_deg": float(aquifer.flow_direction_deg),
        "darcy_velocity_m_per_s": float(aquifer.darcy_velocity_m_per_d) / SECONDS_PER_DAY,
        "saturated_thickness_m": float(aquifer.saturated_thickness_m),
        "longitudinal_dispersivity_m": float(aquifer.longitudinal_dispersivity_m),
        "transverse_dispersivity_m": float(aquifer.transverse_dispersivity_m),
        "aquifer_heat_capacity_j_per_m3_k": float(aquifer.aquifer_heat_capacity_mj_per_m3_k) * 1e6,
        "water_heat_capacity_j_per_m3_k": float(aquifer.water_heat_capacity_mj_per_m3_k) * 1e6,
        "thermal_conductivity_w_per_m_k": float(thermal_conductivity_w_per_m_k),
    }


# ----------------------------------------------------------------------------- validity
class NoteCode(str, enum.Enum):
    """What a validity note of :func:`validity_notes` is about; code compares these, never the words."""

    CAUTION = "caution"
    """The screening caution (:data:`engine.cautions.PLUME`), always first."""
    CONDUCTION_ONLY = "conduction_only"
    """Flow too slow for the advective model at all."""
    SLOW_FLOW = "slow_flow"
    """Slow flow: the steady line source overstates the reach."""
    SLOW_SEEPAGE = "slow_seepage"
    """Seepage velocity below the range where the analytic model matches numerical ones."""
    NEAR_WELL_ZONE = "near_well_zone"
    """The zone around the reinjection well where the model is not valid."""
    POINT_IN_NEAR_ZONE = "point_in_near_zone"
    """The point of interest lies inside that zone."""
    POINT_IN_NEAR_FIELD = "point_in_near_field"
    """The point of interest is closer than ten longitudinal dispersivities."""
    FRONT_TRAVEL = "front_travel"
    """The steady state assumes a far longer operation than the thermal front needs to reach the point."""
    FRONT_NOT_ARRIVED = "front_not_arrived"
    """The thermal front has not reached the point of interest in the operating time."""
    STEADY_STATE = "steady_state"
    """What the steady state overstates."""
    ASSUMPTIONS = "assumptions"
    """The model's assumptions, always last."""


POINT_NOTES = frozenset({
    NoteCode.POINT_IN_NEAR_ZONE, NoteCode.POINT_IN_NEAR_FIELD, NoteCode.FRONT_TRAVEL, NoteCode.FRONT_NOT_ARRIVED,
})
"""Codes of the notes about one point of interest (a neighbour's well), as opposed to the aquifer as a whole."""


class ValidityNote(str):
    """The text of a validity note, with its :class:`NoteCode` as ``code``.

    A note is a ``str`` (shown, stored and written as JSON as its text); code that must tell notes apart reads
    ``note.code``.
    """

    code: NoteCode

    def __new__(cls, code: NoteCode, text: str) -> "ValidityNote":
        note = super().__new__(cls, text)
        note.code = NoteCode(code)
        return note

    def __getnewargs__(self):
        return (self.code, str(self))


def validity_notes(
    darcy_velocity_m_per_d,
    *,
    effective_porosity=None,
    injection_rate_m3_per_s=None,
    saturated_thickness_m=None,
    distance_m=None,
    time_s=None,
    longitudinal_dispersivity_m=None,
    aquifer_heat_capacity_j_per_m3_k=2.8e6,
    water_heat_capacity_j_per_m3_k=4.18e6,
):
    """Plain-language warnings on where the line-source plume model is not valid.

    The first note is always the screening caution. The velocity thresholds are rules of thumb quoted from
    memory: below a Darcy velocity of about 0.01 m/d heat moves mainly by conduction and a radial model or a
    numerical model is needed; up to about 0.1 m/d the steady line source (no vertical heat loss) overstates
    the plume's reach; Pophillat et al. (2020) compare the analytic models with numerical ones and find the
    advective line-source model reliable only for fairly fast flow (seepage velocity of the order of 1 m/d and
    above, a figure recalled from memory, not checked against the paper).

    Parameters
    ----------
    darcy_velocity_m_per_d : float
        Darcy velocity (specific discharge). [m/d] Not negative.
    effective_porosity : float, optional
        Effective porosity, to judge the seepage velocity. [-]
    injection_rate_m3_per_s : float, optional
        Reinjected volume flow. [m³/s]
    saturated_thickness_m : float, optional
        Saturated thickness. [m] With the injection rate, gives the near-well zone ``Q / (b q)``.
    distance_m : float, optional
        Distance from the reinjection well to the point of interest (e.g. a neighbour's extraction well). [m]
    time_s : float, optional
        Operating time the estimate is for; None means the steady state is used. [s]
    longitudinal_dispersivity_m : float, optional
        Longitudinal dispersivity. [m]
    aquifer_heat_capacity_j_per_m3_k, water_heat_capacity_j_per_m3_k : float
        Volumetric heat capacities, for the travel time of the thermal front. [J/(m³ K)]

    Returns
    -------
    list of ValidityNote
        Warnings, most important first: text (``str``) with a :class:`NoteCode` as ``code``.

    Raises
    ------
    ValueError
        Naming the argument that is not finite or out of range.

    References
    ----------
    Pophillat et al. (2020); Haehnlein et al. (2010), full citations in the module docstring.
    """
    q_per_day = finite_scalar(darcy_velocity_m_per_d, "darcy_velocity_m_per_d", minimum=0.0)
    c_a = finite_scalar(aquifer_heat_capacity_j_per_m3_k, "aquifer_heat_capacity_j_per_m3_k", minimum=0.0, strictly=True)
    c_w = finite_scalar(water_heat_capacity_j_per_m3_k, "water_heat_capacity_j_per_m3_k", minimum=0.0, strictly=True)
    notes = [ValidityNote(NoteCode.CAUTION, cautions.PLUME)]
    if q_per_day < 0.01:
        notes.append(ValidityNote(
            NoteCode.CONDUCTION_ONLY,
            f"Darcy velocity {q_per_day:g} m/d is below about 0.01 m/d (rule of thumb, from memory): heat spreads "
            "mainly by conduction around the well, the advective line-source model does not apply, and its "
            "steady state does not exist without flow. Use a radial or numerical model."
        ))
    elif q_per_day < 0.1:
        notes.append(ValidityNote(
            NoteCode.SLOW_FLOW,
            f"Darcy velocity {q_per_day:g} m/d is low (below about 0.1 m/d, rule of thumb, from memory): "
            "conduction matters and the steady line-source model, which has no heat loss to the confining layers, "
            "overstates how far the plume reaches (Pophillat et al. 2020 discuss the validity range)."
        ))
    if effective_porosity is not None:
        porosity = finite_scalar(effective_porosity, "effective_porosity", minimum=0.0, strictly=True)
        if porosity > 1.0:
            raise ValueError(f"effective_porosity must be at most 1; got {porosity:g}")
        seepage = q_per_day / porosity
        if seepage < 1.0:
            notes.append(ValidityNote(
                NoteCode.SLOW_SEEPAGE,
                f"Seepage velocity {seepage:.3g} m/d is below about 1 m/d; Pophillat et al. (2020) found the "
                "analytic line-source model to deviate from numerical models at slow flow (threshold recalled "
                "from memory)."
            ))
    near_zone_m = None
    if injection_rate_m3_per_s is not None and saturated_thickness_m is not None and q_per_day > 0.0:
        rate = finite_scalar(injection_rate_m3_per_s, "injection_rate_m3_per_s", minimum=0.0)
        thickness = finite_scalar(saturated_thickness_m, "saturated_thickness_m", minimum=0.0, strictly=True)
        near_zone_m = rate / (thickness * q_per_day / SECONDS_PER_DAY)
        notes.append(ValidityNote(
            NoteCode.NEAR_WELL_ZONE,
            f"Within about {near_zone_m:.0f} m of the reinjection well (the width Q/(b q) of the injected water's "
            "stream tube) the injected water pushes the groundwater aside; the line source ignores this and is "
            "not valid there. Values at the well are clipped to the injection temperature difference."
        ))
    if distance_m is not None:
        distance = finite_scalar(distance_m, "distance_m", minimum=0.0)
        if near_zone_m is not None and distance < near_zone_m:
            notes.append(ValidityNote(
                NoteCode.POINT_IN_NEAR_ZONE,
                f"The point of interest ({distance:.0f} m away) lies inside the near-well zone: treat the estimate "
                "as an order of magnitude at best."
            ))
        if longitudinal_dispersivity_m is not None:
            alpha_l = finite_scalar(longitudinal_dispersivity_m, "longitudinal_dispersivity_m", minimum=0.0)
            if alpha_l > 0.0 and distance < 10.0 * alpha_l:
                notes.append(ValidityNote(
                    NoteCode.POINT_IN_NEAR_FIELD,
                    f"The distance ({distance:.0f} m) is less than ten longitudinal dispersivities; dispersivities "
                    "depend on scale and the near field is poorly described by constant values (common practice)."
                ))
        thermal_velocity = q_per_day * c_w / c_a
        if thermal_velocity > 0.0:
            arrival_s = distance / thermal_velocity * SECONDS_PER_DAY
            if time_s is None:
                notes.append(ValidityNote(
                    NoteCode.FRONT_TRAVEL,
                    f"The steady state assumes continuous, constant injection for much longer than the thermal "
                    f"front needs to travel {distance:.0f} m (about {arrival_s / (365.25 * SECONDS_PER_DAY):.2g} "
                    "years); seasonal operation (heating in winter, cooling in summer) gives smaller plumes."
                ))
            else:
                operating = finite_scalar(time_s, "time_s", minimum=0.0, strictly=True)
                if operating < arrival_s:
                    notes.append(ValidityNote(
                        NoteCode.FRONT_NOT_ARRIVED,
                        f"After {operating / SECONDS_PER_DAY:.0f} days the thermal front has not yet reached "
                        f"{distance:.0f} m (it needs about {arrival_s / SECONDS_PER_DAY:.0f} days); the estimate "
                        "there is mostly dispersion ahead of the front and sensitive to the dispersivity."
                    ))
    if time_s is None:
        notes.append(ValidityNote(
            NoteCode.STEADY_STATE,
            "Steady state: the plume of years of continuous, constant injection with no heat loss to the layers "
            "above and below. Its isotherms can stretch for kilometres down-gradient and overstate real plumes, "
            "which seasonal operation and vertical heat exchange keep shorter; prefer the transient estimate for "
            "the operating period or use the annual net heat."
        ))
    notes.append(ValidityNote(
        NoteCode.ASSUMPTIONS,
        "Assumes a homogeneous confined aquifer of constant thickness, uniform flow in one direction, fully "
        "penetrating wells, constant injection, no heat exchange with the layers above and below, and no "
        "change of the flow field by pumping (the pull of extraction wells is ignored)."
    ))
    return notes
