"""Tests of engine.physics.plume (with plume_field and coords), the line-source thermal plume model of a reinjection well.

The aquifer used throughout is the default of docs/input_format.md ([aquifer]: Darcy velocity 0.5 m/d, 15 m
saturated thickness, dispersivities 5 m and 0.5 m) with a doublet of 10 L/s reinjected 4 K colder.
"""

from __future__ import annotations

import math
import pickle

import numpy as np
import pytest
import shapely
from scipy import integrate, special

from engine import cautions
from engine.physics import coords, plume, plume_field
from engine.scenario.inputs import Aquifer

DAY = 86_400.0
DARCY = 0.5 / DAY  # [m/s]
THICKNESS = 15.0
ALPHA_L = 5.0
ALPHA_T = 0.5
C_AQUIFER = 2.8e6
C_WATER = 4.18e6
LAMBDA = 2.0
RATE = 0.01  # [m³/s]
DELTA = -4.0  # [K]

AQUIFER = dict(
    darcy_velocity_m_per_s=DARCY,
    saturated_thickness_m=THICKNESS,
    longitudinal_dispersivity_m=ALPHA_L,
    transverse_dispersivity_m=ALPHA_T,
)
THERMAL_VELOCITY = DARCY * C_WATER / C_AQUIFER
D_L = ALPHA_L * THERMAL_VELOCITY + LAMBDA / C_AQUIFER
D_T = ALPHA_T * THERMAL_VELOCITY + LAMBDA / C_AQUIFER


def change(x, y, rate=RATE, delta=DELTA, time_s=None, **overrides):
    return plume.plume_temperature_change_k(x, y, rate, delta, **{**AQUIFER, **overrides}, time_s=time_s)


def response(x, y, time_s=None, **overrides):
    return plume.unit_plume_response_s_per_m3(x, y, **{**AQUIFER, **overrides}, time_s=time_s)


def haversine_m(lon1, lat1, lon2, lat2):
    """Great-circle distance on the mean-radius sphere (Sinnott 1984, 'Virtues of the Haversine', Sky and
    Telescope 68(2), 159)."""
    p1, p2 = math.radians(lat1), math.radians(lat2)
    dp, dl = p2 - p1, math.radians(lon2 - lon1)
    h = math.sin(dp / 2) ** 2 + math.cos(p1) * math.cos(p2) * math.sin(dl / 2) ** 2
    return 2 * coords.EARTH_RADIUS_M * math.asin(math.sqrt(h))


# ----------------------------------------------------------------------------- basic properties
@pytest.mark.parametrize("time_s", [None, 200 * DAY])
def test_zero_injection_gives_zero_change(time_s):
    """No injected flow or no temperature difference injects no heat, so nothing changes (energy balance,
    common practice); also at the well itself, where the kernel is infinite."""
    x, y = np.meshgrid(np.linspace(-50, 500, 23), np.linspace(-40, 40, 9))
    assert np.all(change(x, y, rate=0.0, time_s=time_s) == 0.0)
    assert np.all(change(x, y, delta=0.0, time_s=time_s) == 0.0)
    assert change(0.0, 0.0, rate=0.0, time_s=time_s) == 0.0


@pytest.mark.parametrize("time_s", [None, 10 * 365 * DAY])
def test_far_up_gradient_change_is_negligible(time_s):
    """500 m against the flow the change is below 1e-3 of the injected difference: heat can only disperse
    up-gradient, where the solution decays like exp(-u |x| / D_L) (Kinzelbach 1987)."""
    y = np.linspace(-50, 50, 11)
    assert np.all(np.abs(change(-500.0, y, time_s=time_s)) < 1e-3 * abs(DELTA))


@pytest.mark.parametrize("time_s", [None, 30 * DAY, 3 * 365 * DAY])
def test_change_never_exceeds_injected_difference(time_s):
    """|dT| <= |dT_inj| everywhere, the well included: a mixture of injected and native water cannot be more
    extreme than the injected water (maximum principle, common practice); the clipping reaches the bound."""
    x, y = np.meshgrid(np.linspace(-100, 3000, 125), np.linspace(-200, 200, 81))
    values = change(x, y, time_s=time_s)
    assert np.all(np.abs(values) <= abs(DELTA))
    assert np.all(np.sign(values[values != 0.0]) == np.sign(DELTA))
    assert change(0.0, 0.0, time_s=time_s) == DELTA


def test_symmetric_across_the_flow():
    """The plume is symmetric about the flow axis (the governing equation is even in y; Kinzelbach 1987)."""
    x, y = np.meshgrid(np.linspace(-30, 800, 40), np.linspace(0.5, 60, 25))
    assert np.array_equal(change(x, y), change(x, -y))
    assert np.array_equal(change(x, y, time_s=90 * DAY), change(x, -y, time_s=90 * DAY))


def test_linear_in_rate_times_temperature_difference():
    """The line source enters only as its strength Q dT_inj, so the plume scales with that product and not
    with Q alone (Kinzelbach 1987); checked outside the clipped zone near the well."""
    x = np.array([400.0, 800.0, 1500.0])
    y = np.array([30.0, 60.0, 120.0])
    base = change(x, y, rate=0.002, delta=-1.0)
    assert np.all(np.abs(base) < 0.5)  # well below the clip, so the model is linear here
    assert np.allclose(change(x, y, rate=0.004, delta=-0.5), base, rtol=1e-12)
    assert np.allclose(change(x, y, rate=0.006, delta=-1.0), 3 * base, rtol=1e-12)
    assert np.allclose(change(x, y, rate=0.002, delta=1.0), -base, rtol=1e-12)


# ----------------------------------------------------------------------------- heat balance
@pytest.mark.parametrize("conductivity", [LAMBDA, 0.0])
@pytest.mark.parametrize("distance_m", [2.0, 10.0, 50.0, 200.0, 1000.0])
def test_advective_flux_down_gradient_equals_injected_heat(distance_m, conductivity):
    """Energy balance at steady state: C_w q b int dT dy = C_w Q dT_inj at every cross-section down-gradient.

    Integrating the steady equation across the flow leaves a 1-D problem whose bounded solution is constant
    down-gradient, so the longitudinal dispersive flux there is exactly zero (derivation in the module
    docstring) and the check holds at any distance, not only far away. Tolerance 1e-6 (far tighter than the
    2 % a screening model would need), limited only by the quadrature; measured about 1e-14.
    """
    def integrand(y):
        return response(distance_m, y, thermal_conductivity_w_per_m_k=conductivity)

    half, _ = integrate.quad(integrand, 0.0, np.inf, limit=500, epsabs=0.0, epsrel=1e-11)
    advective_heat = C_WATER * DARCY * THICKNESS * 2.0 * half  # per unit Q dT_inj
    assert advective_heat == pytest.approx(C_WATER, rel=1e-6)


@pytest.mark.parametrize("distance_m", [50.0, 200.0, 1000.0])
def test_heat_balance_of_a_physical_plume(distance_m):
    """The same balance for a real doublet (1 L/s, 1 K colder) where the clipping does not act: the heat the
    groundwater carries past the section, C_w q b int dT dy, equals the rejected C_w Q dT_inj within 1e-6."""
    rate, delta = 0.001, -1.0
    assert abs(change(distance_m, 0.0, rate=rate, delta=delta)) < abs(delta)
    half, _ = integrate.quad(
        lambda y: change(distance_m, y, rate=rate, delta=delta), 0.0, np.inf, limit=500, epsabs=0.0, epsrel=1e-11
    )
    carried_w = C_WATER * DARCY * THICKNESS * 2.0 * half
    assert carried_w == pytest.approx(C_WATER * rate * delta, rel=1e-6)


@pytest.mark.parametrize("distance_m", [-5.0, -20.0, -60.0])
def test_heat_dispersed_up_gradient_follows_the_one_dimensional_solution(distance_m):
    """Up-gradient, the cross-section integral follows the 1-D steady advection-dispersion solution
    int dT dy = (Q dT_inj C_w / (b C_a u)) exp(u x / D_L) for x < 0 (textbook 1-D solution, e.g. Bear 1972,
    Dynamics of Fluids in Porous Media, Elsevier)."""
    half, _ = integrate.quad(lambda y: response(distance_m, y), 0.0, np.inf, limit=500, epsabs=0.0, epsrel=1e-11)
    expected = C_WATER / (THICKNESS * C_AQUIFER * THERMAL_VELOCITY) * math.exp(THERMAL_VELOCITY * distance_m / D_L)
    assert 2.0 * half == pytest.approx(expected, rel=1e-6)


# ----------------------------------------------------------------------------- transient
def test_transient_approaches_steady_state():
    """For times long against the travel time x/u the transient tends to the steady state, since the
    incomplete Hantush integral tends to 2 K0 (Hantush and Jacob 1955; Abramowitz and Stegun 9.6.24)."""
    x = np.array([10.0, 100.0, 300.0, 50.0])
    y = np.array([0.0, 5.0, 20.0, -10.0])
    late = response(x, y, time_s=1e3 * 300.0 / THERMAL_VELOCITY)
    assert np.allclose(late, response(x, y), rtol=1e-3)


def test_transient_is_zero_far_ahead_of_the_thermal_front():
    """Early on, 500 m down-gradient is far ahead of the thermal front (u t = 50 m), so nothing has arrived
    yet (common practice; the puffs have not drifted that far)."""
    early = 50.0 / THERMAL_VELOCITY
    y = np.linspace(-30, 30, 7)
    assert np.all(np.abs(change(500.0, y, time_s=early)) < 1e-6 * abs(DELTA))


def test_transient_grows_with_time():
    """With continuous injection the change at a point only grows (the time integrand is positive; common
    practice), and it stays below the steady state."""
    times = np.geomspace(5 * DAY, 50 * 365 * DAY, 30)
    values = response(150.0, 10.0, time_s=times)
    assert np.all(np.diff(values) >= 0.0)
    assert np.all(values <= response(150.0, 10.0))


@pytest.mark.parametrize(
    "x, y, days",
    [(100.0, 0.0, 100.0), (100.0, 10.0, 1000.0), (-20.0, 3.0, 50.0), (500.0, 30.0, 3000.0), (1.0, 0.1, 1.0),
     (2000.0, 0.0, 1e5)],
)
def test_transient_matches_direct_integration_of_moving_point_sources(x, y, days):
    """The transient equals the time integral of instantaneous 2-D Gaussian sources drifting at u (superposition,
    Carslaw and Jaeger 1959), integrated here by scipy.integrate.quad as reference (rel. 1e-8)."""
    t = days * DAY

    def puff(s):
        return math.exp(-((x - THERMAL_VELOCITY * s) ** 2) / (4 * D_L * s) - y**2 / (4 * D_T * s)) / s

    peak = abs(x) / THERMAL_VELOCITY
    integral, _ = integrate.quad(
        puff, 0.0, t, points=[peak] if 0.0 < peak < t else None, limit=500, epsabs=0.0, epsrel=1e-12
    )
    expected = C_WATER / (THICKNESS * C_AQUIFER) / (4 * math.pi * math.sqrt(D_L * D_T)) * integral
    assert response(x, y, time_s=t) == pytest.approx(expected, rel=1e-8)


@pytest.mark.parametrize("r_m, days", [(1.0, 10.0), (5.0, 100.0), (20.0, 365.0)])
def test_no_flow_transient_is_the_conduction_line_source(r_m, days):
    """Without groundwater flow, dT = (C_w Q dT_inj / b) / (4 pi lambda) E1(r² C_a / (4 lambda t)), the
    continuous line source in an infinite solid (Carslaw and Jaeger 1959, section 10.4)."""
    t = days * DAY
    value = change(r_m * 0.6, r_m * 0.8, rate=1e-4, delta=2.0, time_s=t, darcy_velocity_m_per_s=0.0)
    expected = C_WATER * 1e-4 * 2.0 / THICKNESS / (4 * math.pi * LAMBDA) * special.exp1(
        r_m**2 * C_AQUIFER / (4 * LAMBDA * t)
    )
    assert value == pytest.approx(expected, rel=1e-12)


# ----------------------------------------------------------------------------- published LAHM form
def lahm_k(x, y, time_s=None, porosity=0.2):
    """LAHM of Kinzelbach (1987) as published in Pophillat et al. (2020), per unit Q dT_inj:
    dT = 1 / (4 n b v sqrt(pi alpha_T)) exp((x - r) / (2 alpha_L)) r^-1/2
         erfc((r - v t / R) / (2 sqrt(alpha_L v t / R)))
    with r = sqrt(x² + y² alpha_L / alpha_T), seepage velocity v = q / n, R = C_a / (n C_w); transcribed from
    the secondary literature, not checked against the paper itself. It neglects conduction."""
    r = np.sqrt(x**2 + y**2 * ALPHA_L / ALPHA_T)
    seepage = DARCY / porosity
    retardation = C_AQUIFER / (porosity * C_WATER)
    if time_s is None:
        front = 2.0
    else:
        front_travel = seepage * time_s / retardation
        front = special.erfc((r - front_travel) / (2 * np.sqrt(ALPHA_L * front_travel)))
    scale = 4 * porosity * THICKNESS * seepage * np.sqrt(np.pi * ALPHA_T)
    return np.exp((x - r) / (2 * ALPHA_L)) / np.sqrt(r) * front / scale


@pytest.mark.parametrize("x, y", [(50.0, 0.0), (200.0, 0.0), (200.0, 5.0), (500.0, 10.0), (1000.0, 20.0)])
def test_steady_state_far_field_matches_published_lahm(x, y):
    """Far from the well, K0(z) ~ sqrt(pi / 2z) e^-z (1 - 1/(8z)) turns the steady line source into the LAHM
    with its erfc at 2 (Pophillat et al. 2020); without conduction the two differ by about alpha_L / (4 r),
    so the tolerance is alpha_L / (2 r)."""
    r = math.sqrt(x**2 + y**2 * ALPHA_L / ALPHA_T)
    ours = response(x, y, thermal_conductivity_w_per_m_k=0.0)
    assert ours == pytest.approx(lahm_k(x, y), rel=ALPHA_L / (2 * r))


@pytest.mark.parametrize("x, y, fronts", [(200.0, 0.0, 1.0), (200.0, 0.0, 2.0), (500.0, 5.0, 1.0), (1000.0, 0.0, 1.5)])
def test_transient_near_and_behind_the_front_matches_published_lahm(x, y, fronts):
    """At and behind the thermal front (u t >= r) the exact transient agrees with the LAHM erfc approximation
    (Kinzelbach 1987, as in Pophillat et al. 2020) within 2 %; measured 0.1-0.6 %."""
    r = math.sqrt(x**2 + y**2 * ALPHA_L / ALPHA_T)
    t = fronts * r / THERMAL_VELOCITY
    ours = response(x, y, time_s=t, thermal_conductivity_w_per_m_k=0.0)
    assert ours == pytest.approx(lahm_k(x, y, t), rel=0.02)


# ----------------------------------------------------------------------------- coordinates
def test_flow_to_the_east_puts_an_eastern_point_down_gradient():
    """Flow direction is a bearing, clockwise from north (common practice): flowing east (90°), a point 100 m
    east is 100 m down-gradient and on the axis; a point north lies to the left (y > 0)."""
    x, y = coords.to_flow_frame(100.0, 0.0, 90.0)
    assert x == pytest.approx(100.0)
    assert abs(y) < 1e-9
    x, y = coords.to_flow_frame(0.0, 30.0, 90.0)
    assert abs(x) < 1e-9 and y == pytest.approx(30.0)


@pytest.mark.parametrize("bearing, east, north", [(0.0, 0.0, 1.0), (180.0, 0.0, -1.0), (270.0, -1.0, 0.0),
                                                   (45.0, math.sqrt(0.5), math.sqrt(0.5))])
def test_a_point_along_the_flow_bearing_is_on_the_axis(bearing, east, north):
    """A point at distance d along the bearing has x = d, y = 0 (bearing clockwise from north, common
    practice), and the inverse rotation returns the offsets."""
    x, y = coords.to_flow_frame(250.0 * east, 250.0 * north, bearing)
    assert x == pytest.approx(250.0) and abs(y) < 1e-9
    back_east, back_north = coords.from_flow_frame(x, y, bearing)
    assert back_east == pytest.approx(250.0 * east, abs=1e-9)
    assert back_north == pytest.approx(250.0 * north, abs=1e-9)


def test_local_metres_agree_with_great_circle_distance():
    """Over 2 km the equirectangular offsets give the haversine great-circle distance within 1e-4 (Snyder 1987;
    Sinnott 1984), and the inverse returns the position."""
    lon0, lat0 = 11.57, 48.14
    lon, lat = 11.59, 48.15
    x, y = coords.lonlat_to_local_m(lon, lat, lon0, lat0)
    assert math.hypot(x, y) == pytest.approx(haversine_m(lon0, lat0, lon, lat), rel=1e-4)
    back_lon, back_lat = coords.local_m_to_lonlat(x, y, lon0, lat0)
    assert back_lon == pytest.approx(lon, abs=1e-12) and back_lat == pytest.approx(lat, abs=1e-12)


# ----------------------------------------------------------------------------- doublets
def two_doublets():
    """Doublet A: extraction 100 m up-gradient of its reinjection; doublet B's extraction 300 m down-gradient
    and 20 m to the side of A's reinjection; flow to the east."""
    lon0, lat0 = 11.0, 48.0
    east = np.array([0.0, 500.0])  # reinjection wells A, B
    north = np.array([0.0, 100.0])
    extraction_east = np.array([-100.0, 300.0])
    extraction_north = np.array([0.0, 20.0])
    rein = coords.local_m_to_lonlat(east, north, lon0, lat0)
    extr = coords.local_m_to_lonlat(extraction_east, extraction_north, lon0, lat0)
    return rein, extr


def test_interference_matrix_entries_are_plume_responses_at_the_neighbours():
    """Entry [i, j] is the plume of reinjection i at extraction j (definition); the offsets are checked
    against the great-circle distance (Sinnott 1984) and the up-gradient entries are negligible."""
    (rein_lon, rein_lat), (extr_lon, extr_lat) = two_doublets()
    matrix = plume_field.interference_matrix_k_per_unit(rein_lon, rein_lat, extr_lon, extr_lat, 90.0, **AQUIFER)
    assert matrix.shape == (2, 2)
    distance = haversine_m(rein_lon[0], rein_lat[0], extr_lon[1], extr_lat[1])
    assert distance == pytest.approx(math.hypot(300.0, 20.0), rel=1e-4)
    assert matrix[0, 1] == pytest.approx(response(300.0, 20.0), rel=1e-3)
    # A's own extraction is 100 m up-gradient of its reinjection; B's reinjection is down-gradient of A's well
    assert matrix[0, 0] < 1e-3 * matrix[0, 1]
    assert matrix[1, 0] < 1e-3 * matrix[0, 1]


def test_extraction_shift_superposes_and_clips():
    """Shifts add up over sources (linearity, Kinzelbach 1987) and each source is clipped to its own injected
    difference; the total never leaves the range of the injected differences (maximum principle, common
    practice)."""
    (rein_lon, rein_lat), (extr_lon, extr_lat) = two_doublets()
    matrix = plume_field.interference_matrix_k_per_unit(rein_lon, rein_lat, extr_lon, extr_lat, 90.0, **AQUIFER)
    rates = np.array([0.002, 0.003])
    deltas = np.array([-0.5, 1.0])
    shift = plume_field.extraction_temperature_shift_k(matrix, rates, deltas)
    assert shift[1] == pytest.approx(matrix[0, 1] * 0.002 * -0.5 + matrix[1, 1] * 0.003 * 1.0, rel=1e-12)
    # a well on top of a reinjection well sees at most the injected difference
    on_top = np.array([[np.inf, 0.0], [0.0, np.inf]])
    assert np.array_equal(plume_field.extraction_temperature_shift_k(on_top, rates, deltas), deltas)
    strong = plume_field.extraction_temperature_shift_k(np.full((2, 2), 1e6), np.array([1.0, 1.0]), np.array([-3.0, -2.0]))
    assert np.all(strong >= -3.0)


def test_parameters_from_the_scenario_aquifer_feed_the_matrix():
    """The [aquifer] section is in m/d and MJ/(m³ K); the converted keywords call the matrix directly
    (1 d = 86 400 s, 1 MJ = 1e6 J)."""
    params = plume.plume_parameters_from_aquifer(Aquifer())
    assert params["darcy_velocity_m_per_s"] == pytest.approx(0.5 / 86_400.0)
    assert params["aquifer_heat_capacity_j_per_m3_k"] == pytest.approx(2.8e6)
    (rein_lon, rein_lat), (extr_lon, extr_lat) = two_doublets()
    matrix = plume_field.interference_matrix_k_per_unit(rein_lon, rein_lat, extr_lon, extr_lat, **params)
    assert matrix[0, 1] == pytest.approx(response(300.0, 20.0), rel=1e-3)


# ----------------------------------------------------------------------------- isotherms
def ring_in_flow_frame(ring, lon0, lat0, bearing):
    lon, lat = np.array(ring).T
    east, north = coords.lonlat_to_local_m(lon, lat, lon0, lat0)
    return coords.to_flow_frame(east, north, bearing)


@pytest.mark.parametrize("time_s", [None, 365 * DAY])
def test_isotherm_points_lie_on_the_level_and_nest(time_s):
    """Every vertex of the isotherm evaluates to the level (rel. 1e-6, bisection); a higher level gives a
    smaller polygon inside the lower one; the ring is closed and a valid polygon (shapely as reference)."""
    lon0, lat0, bearing = 11.0, 48.0, 120.0
    rings = {}
    for level in (1.0, 2.5):
        ring = plume_field.isotherm_polygon_lonlat(level, lon0, lat0, RATE, DELTA, bearing, **AQUIFER, time_s=time_s)
        assert len(ring) > 100 and ring[0] == ring[-1]
        x, y = ring_in_flow_frame(ring[:-1], lon0, lat0, bearing)
        assert np.allclose(np.abs(change(x, y, time_s=time_s)), level, rtol=1e-6)
        rings[level] = ring
    low = shapely.Polygon(rings[1.0])
    high = shapely.Polygon(rings[2.5])
    assert low.is_valid and high.is_valid
    assert high.area < low.area
    x, y = ring_in_flow_frame(rings[2.5][:-1], lon0, lat0, bearing)
    assert np.all(np.abs(change(x, y, time_s=time_s)) > 1.0)  # the high ring lies where the low level is exceeded


def test_isotherm_points_down_gradient():
    """The plume leaves the well in the flow direction (advection, Kinzelbach 1987): with flow to the south
    the far tip of the 1 K isotherm is south of the well."""
    ring = plume_field.isotherm_polygon_lonlat(1.0, 11.0, 48.0, RATE, DELTA, 180.0, **AQUIFER, time_s=365 * DAY)
    lats = np.array(ring)[:, 1]
    assert 48.0 - lats.min() > 10 * (lats.max() - 48.0)


def test_isotherm_empty_when_level_never_reached():
    """No injection, or a level at or above the injected difference (reached only in the clipped zone at the
    well), gives no polygon (definition)."""
    assert plume_field.isotherm_polygon_lonlat(0.5, 11.0, 48.0, 0.0, DELTA, 90.0, **AQUIFER) == []
    assert plume_field.isotherm_polygon_lonlat(0.5, 11.0, 48.0, RATE, 0.0, 90.0, **AQUIFER) == []
    assert plume_field.isotherm_polygon_lonlat(4.0, 11.0, 48.0, RATE, DELTA, 90.0, **AQUIFER) == []


# ----------------------------------------------------------------------------- validity and input checks
def test_validity_notes_warn_about_slow_flow_and_the_near_well_zone():
    """Slow flow is conduction-dominated (thresholds from memory, discussed by Pophillat et al. 2020); the
    near-well zone is the width Q / (b q) of the injected water's stream tube (mass balance: 0.01 m³/s over
    15 m at 0.5 m/d is 115 m)."""
    slow = plume.validity_notes(0.005)
    assert slow[0] == cautions.PLUME and slow[0].code is plume.NoteCode.CAUTION
    assert any("conduction" in note for note in slow)
    assert [note.code for note in slow if "conduction" in note] == [plume.NoteCode.CONDUCTION_ONLY]
    fast = plume.validity_notes(0.5, injection_rate_m3_per_s=RATE, saturated_thickness_m=THICKNESS, distance_m=80.0)
    assert not any("conduction" in note and "below about 0.01" in note for note in fast)
    assert any("115 m" in note for note in fast)
    assert any("inside the near-well zone" in note for note in fast)
    codes = [note.code for note in fast]
    assert plume.NoteCode.CONDUCTION_ONLY not in codes
    assert plume.NoteCode.NEAR_WELL_ZONE in codes and plume.NoteCode.POINT_IN_NEAR_ZONE in codes
    assert codes[-1] is plume.NoteCode.ASSUMPTIONS
    # a note survives a process boundary with its code (the interference check runs on worker processes)
    assert [note.code for note in pickle.loads(pickle.dumps(fast))] == codes


def test_validity_notes_for_an_early_time():
    """Before the thermal front (travel time x / u, u = q C_w / C_a) reaches a point the notes say so: 300 m at
    0.5 m/d Darcy velocity takes about 300 / (0.5 * 4.18 / 2.8) = 402 days."""
    notes = plume.validity_notes(0.5, distance_m=300.0, time_s=100 * DAY)
    assert any("402 days" in note for note in notes)
    assert [note.code for note in notes if "402 days" in note] == [plume.NoteCode.FRONT_NOT_ARRIVED]


@pytest.mark.parametrize(
    "call, name",
    [
        (lambda: change(10.0, 0.0, saturated_thickness_m=-1.0), "saturated_thickness_m"),
        (lambda: change(10.0, 0.0, darcy_velocity_m_per_s=0.0), "darcy_velocity_m_per_s"),
        (lambda: change(10.0, 0.0, time_s=-5.0), "time_s"),
        (lambda: change(float("nan"), 0.0), "x_m"),
        (lambda: change(10.0, 0.0, rate=-0.01), "injection_rate_m3_per_s"),
        (lambda: change(10.0, 0.0, longitudinal_dispersivity_m=0.0, thermal_conductivity_w_per_m_k=0.0),
         "longitudinal_dispersivity_m"),
        (lambda: coords.lonlat_to_local_m(11.0, 95.0, 11.0, 48.0), "lat"),
        (lambda: plume.validity_notes(-1.0), "darcy_velocity_m_per_d"),
        (lambda: plume_field.isotherm_polygon_lonlat(-1.0, 11.0, 48.0, RATE, DELTA, 90.0, **AQUIFER), "level_k"),
    ],
)
def test_bad_arguments_raise_value_error_naming_them(call, name):
    """Bad input raises ValueError naming the argument (project rule)."""
    with pytest.raises(ValueError, match=name):
        call()
