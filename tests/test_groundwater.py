"""Tests of engine.studies.permits: well power and volume against IAPWS-95, and the permit screening flags.

Water properties come from the ``iapws`` package (IAPWS-95, Wagner and Pruss 2002, J. Phys. Chem. Ref. Data 31,
387-535) at the groundwater temperature and 0.101325 MPa. The screening rules (a flow at 100 % of the permit is at
the limit, more is a breach; the 4.5-20 °C reinjection window) are common practice, not from a published source.
"""

from __future__ import annotations

import dataclasses
import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

sys.path.insert(0, str(Path(__file__).parent))

import scenario_factory as f  # noqa: E402
from engine.physics import coords  # noqa: E402
from engine.physics import plume  # noqa: E402
from engine.outputs.groundwater_maps import STATUS_COLORS, groundwater_map_figure, well_year_figure  # noqa: E402
from engine.studies.permits import (  # noqa: E402
    add_well_status,
    net_injection,
    screen_wells,
    screening_display_table,
    well_year_profiles,
)
from engine.scenario.inputs import Aquifer, Prices, Settings  # noqa: E402
from engine.model.solve import solve_scenario  # noqa: E402

import iapws

ATMOSPHERIC_PRESSURE_MPA = 0.101325
LAT = 50.005
LON0 = 10.005


def _lon(east_m: float) -> float:
    return float(coords.local_m_to_lonlat(east_m, 0.0, LON0, LAT)[0])


def line_of_doublets(heat_kw=(400.0, 400.0), spacing_m=300.0, amplitude_k=0.0, permit_m3_per_h=20.0,
                     typical_days=4, annual_volume_m3=np.inf):
    """Two districts, one doublet each, on one line along an eastward groundwater flow.

    Doublet ``wa`` reinjects 100 m east of its extraction; ``wb`` extracts ``spacing_m`` further east, in
    ``wa``'s plume. Constant heat demand at 35 °C supply; the groundwater heat pump beats gas, so each well
    runs as hard as its permit lets it.
    """
    techs = f.technologies(
        dict(technology_id="gas", kind="fuel_boiler", carrier="gas", efficiency=0.9, investment_eur_per_kw=100.0),
        dict(technology_id="gw_hp", kind="groundwater_heat_pump", carrier="electricity", cop_quality_grade=0.5,
             investment_eur_per_kw=200.0),
    )
    names = ("A", "B")
    districts = [
        f.district(d, k, supply_temp_c=35.0, heat_demand_mwh_per_a=h * 8.76)
        for k, (d, h) in enumerate(zip(names, heat_kw))
    ]
    demand = pd.DataFrame({d: np.full(8760, float(h)) for d, h in zip(names, heat_kw)})
    common = dict(permit_flow_m3_per_h=permit_m3_per_h, groundwater_temp_amplitude_k=amplitude_k,
                  coldest_day_of_year=40, lat=LAT, reinjection_lat=LAT, permit_annual_volume_m3=annual_volume_m3)
    wells = [
        f.well("wa", "A", lon=_lon(0.0), reinjection_lon=_lon(100.0), **common),
        f.well("wb", "B", lon=_lon(100.0 + spacing_m), reinjection_lon=_lon(200.0 + spacing_m), **common),
    ]
    scenario = f.scenario(
        districts, techs, f.hourly(outdoor_temp_c=5.0, electricity=150.0), wells=wells,
        heat_demand_hourly_kw=demand, settings=Settings(typical_days=typical_days),
        prices=Prices(gas_eur_per_mwh=80.0, co2_eur_per_t=100.0),
    )
    scenario.aquifer = Aquifer(flow_direction_deg=90.0, darcy_velocity_m_per_d=1.0, saturated_thickness_m=18.0)
    return scenario


@pytest.fixture(scope="module")
def seasonal_case():
    """Both wells at their permitted flow all year; groundwater swings +-1.5 K over the seasons."""
    scenario = line_of_doublets(amplitude_k=1.5, typical_days=0)
    result = solve_scenario(scenario)
    assert result.solved, result.message
    return scenario, result


@pytest.fixture(scope="module")
def light_case():
    """Small demand: the wells run far below their permit."""
    scenario = line_of_doublets(heat_kw=(30.0, 30.0), permit_m3_per_h=40.0)
    result = solve_scenario(scenario)
    assert result.solved, result.message
    return scenario, result


def _iapws_property(temps_c, name: str) -> np.ndarray:
    """IAPWS-95 property (``cp`` [kJ/(kg K)] or ``rho`` [kg/m³]) at 0.101325 MPa for many temperatures.

    ``iapws`` takes about 10 ms per state, so the property is evaluated on a 0.1 K grid over the range and
    interpolated linearly; over 0.1 K the curvature of c_p and rho leaves a relative error below 1e-7.
    """
    temps = np.asarray(temps_c, dtype=float)
    grid = np.arange(temps.min() - 0.1, temps.max() + 0.2, 0.1)
    values = [getattr(iapws.IAPWS95(T=t + 273.15, P=ATMOSPHERIC_PRESSURE_MPA), name) for t in grid]
    return np.interp(temps, grid, values)


def _cp_kj_per_kg_k(temp_c: float) -> float:
    return iapws.IAPWS95(T=temp_c + 273.15, P=ATMOSPHERIC_PRESSURE_MPA).cp


def _rho_kg_per_m3(temp_c: float) -> float:
    return iapws.IAPWS95(T=temp_c + 273.15, P=ATMOSPHERIC_PRESSURE_MPA).rho


def test_extracted_power_is_mass_flow_times_cp_times_spread(seasonal_case):
    """P = m_dot c_p dT (docs/model.md section 2) with c_p from IAPWS-95 (``iapws``) at the groundwater temperature.

    Every heating step of the solved run: flow_kg_s * c_p(T_gw) * (T_gw - T_reinjection) == extracted_kw. The
    engine's c_p is a fit to IAPWS-95, hence the relative tolerance of 2e-4.
    """
    _, result = seasonal_case
    steps = result.tables["well_steps"]
    heating = steps[(steps["extracted_kw"] > 1.0) & (steps["rejected_kw"] == 0.0)]
    assert len(heating) > 50
    cp = _iapws_property(heating["groundwater_temp_c"], "cp")
    spread = heating["groundwater_temp_c"] - heating["reinjection_temp_c"]
    power_kw = heating["flow_kg_s"] * cp * spread
    np.testing.assert_allclose(power_kw.to_numpy(), heating["extracted_kw"].to_numpy(), rtol=2e-4)


def test_annual_volume_uses_iapws_density(seasonal_case):
    """Annual volume = sum over steps of weight_h * 3600 * m_dot / rho(T_gw), rho from IAPWS-95 (``iapws``)."""
    scenario, result = seasonal_case
    steps = result.tables["well_steps"].merge(result.tables["steps"][["step", "weight_h"]], on="step")
    screening = screen_wells(result, scenario).set_index("well_id")
    for well_id, rows in steps.groupby("well_id"):
        rho = _iapws_property(rows["groundwater_temp_c"], "rho")
        volume = float((rows["weight_h"] * 3600.0 * rows["flow_kg_s"] / rho).sum())
        assert screening.loc[well_id, "annual_volume_m3"] == pytest.approx(volume, rel=2e-4)


def test_net_injection_carries_the_net_heat_exchanged(seasonal_case):
    """C_w * Q_mean * dT_mean * 8760 h = heat rejected minus heat extracted (energy balance of the doublet).

    C_w = rho c_p of water from IAPWS-95 (``iapws``) at the mean groundwater temperature (11 °C); the seasonal
    swing of +-1.5 K changes rho c_p by well under 0.1 %.
    """
    scenario, result = seasonal_case
    injection = net_injection(result).set_index("well_id")
    screening = screen_wells(result, scenario).set_index("well_id")
    c_w = _rho_kg_per_m3(11.0) * _cp_kj_per_kg_k(11.0) * 1e3  # J/(m³ K)
    hours = float(result.tables["steps"]["weight_h"].sum())
    for well_id in ("wa", "wb"):
        strength = injection.loc[well_id, "source_strength_m3_k_per_s"]
        net_mwh = c_w * strength * hours * 3600.0 / 3.6e9
        balance = screening.loc[well_id, "aquifer_heat_balance_mwh_per_a"]
        assert balance < 0.0  # heating only: the aquifer loses heat
        assert net_mwh == pytest.approx(balance, rel=1e-3)


def test_flow_at_the_permit_is_at_limit(seasonal_case):
    """A well at 100 % of its permitted flow is flagged ``at_limit`` and names the flow limit (common practice)."""
    scenario, result = seasonal_case
    screening = screen_wells(result, scenario).set_index("well_id")
    assert screening["peak_flow_share"].min() == pytest.approx(1.0, abs=1e-4)
    assert (screening["status"] == "at_limit").all()
    assert screening["binding_limits"].str.contains("permitted flow").all()
    assert (screening["hours_at_flow_limit"] > 0).all()


def test_lowered_permit_after_solving_is_a_breach(seasonal_case):
    """Lowering the permit below the flow the run uses turns the well into a ``breach`` (common practice)."""
    scenario, result = seasonal_case
    edited = scenario.copy()
    edited.wells.loc[edited.wells["well_id"] == "wb", "permit_flow_m3_per_h"] = 15.0
    screening = screen_wells(result, edited).set_index("well_id")
    assert screening.loc["wb", "status"] == "breach"
    assert "permitted flow exceeded" in screening.loc["wb", "binding_limits"]
    # 20 m³/h against a permit of 15 m³/h
    assert screening.loc["wb", "peak_flow_share"] == pytest.approx(20.0 / 15.0, rel=1e-3)
    assert screening.loc["wa", "status"] == "at_limit"


def test_annual_volume_above_a_new_annual_permit_is_a_breach(seasonal_case):
    """An annual volume permit set below the run's volume is a ``breach`` (common practice)."""
    scenario, result = seasonal_case
    volume = screen_wells(result, scenario).set_index("well_id").loc["wa", "annual_volume_m3"]
    edited = scenario.copy()
    edited.wells.loc[edited.wells["well_id"] == "wa", "permit_annual_volume_m3"] = 0.8 * volume
    row = screen_wells(result, edited).set_index("well_id").loc["wa"]
    assert row["status"] == "breach"
    assert row["annual_volume_share"] == pytest.approx(1.25, rel=1e-6)
    assert "annual volume" in row["binding_limits"]


def test_narrower_window_is_a_breach_and_says_when(seasonal_case):
    """Raising the window's lower edge above the coldest reinjection is a breach, dated to the cold season.

    The groundwater is coldest on day 40 (mid-February), so the coldest reinjected water falls in winter.
    """
    scenario, result = seasonal_case
    row = screen_wells(result, scenario).set_index("well_id").loc["wa"]
    coldest = row["min_reinjection_temp_c"]
    raised = screen_wells(result, scenario, reinjection_min_temp_c=coldest + 0.5).set_index("well_id").loc["wa"]
    assert raised["status"] == "breach"
    assert "reinjection below" in raised["binding_limits"]
    assert "winter" in raised["binding_limits"]


def test_shifted_source_temperature_can_breach_the_window(seasonal_case):
    """A what-if source shift of -2 K moves every reinjection temperature down by 2 K (same spread)."""
    scenario, result = seasonal_case
    before = screen_wells(result, scenario).set_index("well_id")
    after = screen_wells(result, scenario, source_temp_shift_k={"wb": -2.0}).set_index("well_id")
    assert after.loc["wb", "min_reinjection_temp_c"] == pytest.approx(before.loc["wb", "min_reinjection_temp_c"] - 2.0)
    assert after.loc["wb", "source_temp_shift_k"] == -2.0
    # 5.8 °C - 2 K lies below the 4.5 °C floor
    assert after.loc["wb", "status"] == "breach"
    assert after.loc["wa", "status"] == before.loc["wa", "status"]


def test_well_far_below_its_permit_is_ok(light_case):
    """30 kW of heat needs a fraction of a 40 m³/h permit and reinjects ~4 K below 11 °C: status ``ok``."""
    scenario, result = light_case
    screening = screen_wells(result, scenario)
    assert (screening["status"] == "ok").all()
    assert (screening["peak_flow_share"] < 0.5).all()
    assert (screening["binding_limits"] == "none").all()


def test_year_profiles_keep_the_weighted_means(seasonal_case):
    """Rebuilt to 8760 hours, the plain mean of the flow share equals the step-weighted mean of the model steps.

    Each model step's weight is the number of calendar hours it stands for (typical-day aggregation).
    """
    _, result = seasonal_case
    profiles = well_year_profiles(result)
    steps = result.tables["well_steps"].merge(result.tables["steps"][["step", "weight_h"]], on="step")
    for well_id, rows in steps.groupby("well_id"):
        year = profiles[profiles["well_id"] == well_id]
        assert len(year) == 8760
        weighted = float((rows["flow_share"] * rows["weight_h"]).sum() / rows["weight_h"].sum())
        assert year["flow_share"].mean() == pytest.approx(weighted, rel=1e-9)
        weighted_t = float((rows["reinjection_temp_c"] * rows["weight_h"]).sum() / rows["weight_h"].sum())
        assert year["reinjection_temp_c"].mean() == pytest.approx(weighted_t, rel=1e-9)


def test_add_well_status_gives_status_and_zero_shift_in_summary(seasonal_case):
    """Without the interference check the summary's wells carry a status and a source shift of 0 K."""
    scenario, result = seasonal_case
    copy = dataclasses.replace(result, tables=dict(result.tables), extras={})
    add_well_status(copy, scenario)
    wells = copy.summary()["wells"]
    assert {w["well_id"] for w in wells} == {"wa", "wb"}
    assert all(w["status"] == "at_limit" for w in wells)
    assert all(w["source_temp_shift_k"] == 0.0 for w in wells)


def test_screening_refuses_an_unsolved_run(seasonal_case):
    """A run without tables gives a ValueError naming what is missing, not a KeyError."""
    scenario, result = seasonal_case
    empty = dataclasses.replace(result, status="infeasible", tables={})
    with pytest.raises(ValueError, match="well_steps"):
        screen_wells(empty, scenario)
    with pytest.raises(ValueError, match="reinjection_max_temp_c"):
        screen_wells(result, scenario, reinjection_min_temp_c=10.0, reinjection_max_temp_c=8.0)


def test_year_figure_shows_the_daily_extremes(seasonal_case):
    """The flow panel shows each day's highest hourly flow share, in % (one point a day)."""
    scenario, result = seasonal_case
    profiles = well_year_profiles(result, scenario, well_ids=["wb"])
    figure = well_year_figure(profiles, "wb", 4.5, 20.0)
    flow = next(trace for trace in figure.data if trace.name == "flow share")
    daily_max = profiles.groupby(profiles["hour"] // 24)["flow_share"].max().to_numpy()
    np.testing.assert_allclose(np.asarray(flow.y), 100.0 * daily_max)
    with pytest.raises(ValueError, match="well_id"):
        well_year_figure(profiles, "nope", 4.5, 20.0)


def test_map_figure_is_to_scale_and_coloured_by_status(seasonal_case):
    """Equirectangular map: one degree of latitude is drawn 1/cos(latitude) times one degree of longitude
    (Snyder 1987, Map Projections: A Working Manual, ch. 12); wells take their status colour."""
    scenario, result = seasonal_case
    screening = screen_wells(result, scenario)
    ring = [(LON0, LAT), (LON0 + 0.001, LAT), (LON0 + 0.001, LAT + 0.001), (LON0, LAT)]
    figure = groundwater_map_figure(scenario, screening, [{"well_id": "wa", "level_k": 1.0, "coordinates": ring}])
    lats = [c[1] for d in scenario.districts["geometry"] for c in d["coordinates"][0]]
    lats += list(scenario.wells["lat"]) + list(scenario.wells["reinjection_lat"])
    mid = (min(lats) + max(lats)) / 2
    assert figure.layout.yaxis.scaleratio == pytest.approx(1.0 / np.cos(np.radians(mid)))
    extraction = [t for t in figure.data if t.name and t.name.startswith("extraction well")]
    assert [t.marker.color for t in extraction] == [STATUS_COLORS["at_limit"]]
    assert sum(1 for t in figure.data if t.name and "isotherm" in t.name) == 1
    shown = screening_display_table(screening)
    assert list(shown["status"]) == ["at a limit", "at a limit"]
    assert shown["peak flow [% of permit]"].to_list() == pytest.approx([100.0, 100.0], abs=0.05)
