"""EPW weather files against the published layout.

Source: U.S. DOE, EnergyPlus Auxiliary Programs, "Weather Converter Program", section "EnergyPlus Weather File
(EPW) Data Dictionary": eight header lines (LOCATION first), then one line per hour with 35 fields: year, month,
day, hour (1-24), minute, data source and uncertainty flags, dry-bulb temperature [°C] (field 7), dew point,
relative humidity, pressure, radiation, illuminance, wind, sky cover, visibility, ceiling, weather codes,
precipitable water, aerosol optical depth, snow, albedo and liquid precipitation. The dry bulb's missing code is
99.9. The test writes such a file itself (an invented station) and checks what is read from it.
"""

from __future__ import annotations


import numpy as np
import pytest

from engine.scenario import epw
from layer_files import FLAGS, epw_text, temperatures

def test_normal_year_reads_the_dry_bulb_in_row_order():
    """8760 rows; the dry bulb is field 7; the LOCATION line gives station, latitude, longitude, zone, elevation."""
    temps = temperatures(8760)
    weather, problems = epw.parse_epw(epw_text(2019, temps))
    assert problems == []
    assert weather.n_hours == 8760
    np.testing.assert_array_equal(weather.dry_bulb_c, temps)
    loc = weather.location
    assert (loc.city, loc.country, loc.wmo) == ("Examplestadt", "Nowhere", "999999")
    assert (loc.latitude_deg, loc.longitude_deg, loc.time_zone_h, loc.elevation_m) == (48.14, 11.58, 1.0, 520.0)
    assert "Examplestadt" in loc.describe() and "48.140° N" in loc.describe()
    assert weather.hours[0] == 1 and weather.hours[23] == 24  # EPW hours run 1-24


def test_leap_year_file_has_8784_rows():
    weather, problems = epw.parse_epw(epw_text(2020))
    assert problems == [] and weather.n_hours == 8784
    feb29 = (weather.months == 2) & (weather.days == 29)
    assert feb29.sum() == 24


def test_typical_year_rows_from_other_years_keep_file_order():
    """A typical-year file takes each month from another year; rows are used as they come, not sorted by date."""
    years = [2005, 1998, 2011, 2003, 2016, 1999, 2007, 2012, 2001, 2014, 2009, 1996]
    temps = temperatures(8760)
    weather, problems = epw.parse_epw(epw_text(2019, temps, years_by_month=years))
    assert problems == []
    np.testing.assert_array_equal(weather.dry_bulb_c, temps)
    assert weather.years[0] == 2005 and weather.years[-1] == 1996


def test_8759_rows_are_refused_with_the_count():
    weather, problems = epw.parse_epw(epw_text(2019, drop=1), "weather.epw")
    assert weather is None and len(problems) == 1
    assert "has 8759 hourly data rows" in problems[0].message and "one hour is missing" in problems[0].message
    assert str(problems[0]).startswith("weather.epw: ")


def test_missing_code_99_9_is_interpolated_between_neighbours():
    """Missing code 99.9 (data dictionary); a 3-hour gap is filled linearly in row order (common practice)."""
    temps = temperatures(8760)
    temps[100:103] = 99.9
    weather, problems = epw.parse_epw(epw_text(2019, temps))
    assert problems == [] and weather.filled_hours == 3
    before, after = temps[99], temps[103]
    np.testing.assert_allclose(weather.dry_bulb_c[100:103], before + (after - before) * np.array([1, 2, 3]) / 4)


def test_long_run_of_missing_code_is_refused_with_its_lines():
    temps = temperatures(8760)
    temps[200:230] = 99.9
    weather, problems = epw.parse_epw(epw_text(2019, temps))
    assert weather is None and len(problems) == 1
    # data row 200 (0-based) is line 8 + 200 + 1 of the file
    assert problems[0].row == 209 and "30 hours in a row" in problems[0].message
    assert str(problems[0]).startswith("weather.epw, line 209, field dry bulb:")


def test_unparsable_and_out_of_range_rows_name_their_line():
    lines = epw_text(2019).splitlines()
    lines[8 + 10] = lines[8 + 10].replace(f"{FLAGS},", f"{FLAGS},warm,", 1)  # field 7 becomes text
    fields = lines[8 + 20].split(",")
    fields[6] = "85.0"
    lines[8 + 20] = ",".join(fields)
    lines[8 + 30] = "2019,1,2"
    weather, problems = epw.parse_epw("\n".join(lines))
    assert weather is None
    rows = {p.row: p.message for p in problems}
    assert "must be numbers" in rows[19] and "'warm'" in rows[19]
    assert "85 °C" in rows[29]
    assert "has 3 field(s)" in rows[39]


def test_not_an_epw_file_is_refused_at_the_first_header_line():
    weather, problems = epw.parse_epw("hour,outdoor_temp_c\n0,1.0\n" * 5)
    assert weather is None and problems[0].row == 1 and "must start with LOCATION" in problems[0].message


def test_read_epw_from_disk_with_latin1_station_name(tmp_path):
    text = epw_text(2019).replace("Examplestadt", "Münsterdorf")
    path = tmp_path / "weather.epw"
    path.write_bytes(text.encode("latin-1"))
    weather, problems = epw.read_epw(path)
    assert problems == [] and weather.location.city == "Münsterdorf"


@pytest.mark.parametrize("count, words", [(8761, "too many"), (4380, "missing"), (17520, "sub-hourly")])
def test_row_count_messages(count, words):
    assert words in epw._row_count_message(count)
