"""Outdoor air temperature from an EnergyPlus weather file (EPW).

The EPW format (U.S. Department of Energy, EnergyPlus "Auxiliary Programs", chapter "Weather Converter
Program", section "EnergyPlus Weather File (EPW) Data Dictionary") is plain comma-separated text:

* eight header lines, each starting with its keyword: ``LOCATION``, ``DESIGN CONDITIONS``,
  ``TYPICAL/EXTREME PERIODS``, ``GROUND TEMPERATURES``, ``HOLIDAYS/DAYLIGHT SAVINGS``, ``COMMENTS 1``,
  ``COMMENTS 2``, ``DATA PERIODS``. The LOCATION line holds city, state or province, country, data source,
  WMO station number, latitude [°N], longitude [°E], time zone [h from UTC] and elevation [m].
* then one line per hour: year, month, day, hour (1-24), minute, the data source and uncertainty flags, and
  then the fields, the first being the dry-bulb temperature [°C] (field 7, counting from 1). A line has 35
  fields in all.

The dry bulb's missing-value code is 99.9 (data dictionary: "missing value is 99.9"). A missing value here is
filled by linear interpolation in row order between its neighbours when the gap is at most
:data:`MAX_FILLED_GAP_H` hours (common practice in weather-data screening); a longer gap is refused.

Rows are used in the file's order, not sorted by date: a typical-year file takes each month from another year,
so its dates need not be in order. A year is 8760 rows, or 8784 for a leap year.

Problems name the file and the line of the file (the first header line is line 1), and say how to fix it.
"""

from __future__ import annotations

import csv
import io
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from engine.scenario.problems import Problem

EPW_FILE = "weather.epw"
HEADER_KEYWORDS = (
    "LOCATION",
    "DESIGN CONDITIONS",
    "TYPICAL/EXTREME PERIODS",
    "GROUND TEMPERATURES",
    "HOLIDAYS/DAYLIGHT SAVINGS",
    "COMMENTS 1",
    "COMMENTS 2",
    "DATA PERIODS",
)
HEADER_LINES = len(HEADER_KEYWORDS)
FIELDS_PER_ROW = 35
DRY_BULB_FIELD = 7
"""Field number of the dry-bulb temperature, counting from 1 (after year, month, day, hour, minute, flags)."""
DRY_BULB_MISSING = 99.9
"""The format's missing-value code for the dry-bulb temperature [°C]."""
DRY_BULB_RANGE_C = (-70.0, 70.0)
"""Valid dry-bulb range of the data dictionary (minimum -70, maximum 70 [°C])."""
HOURS_PER_YEAR = (8760, 8784)
MAX_FILLED_GAP_H = 6
"""Longest run of missing dry-bulb hours filled by interpolation [h] (common practice; longer gaps are refused)."""
MAX_REPORTED = 5


@dataclass(frozen=True)
class Location:
    """The LOCATION line of an EPW file."""

    city: str
    region: str
    country: str
    source: str
    wmo: str
    latitude_deg: float
    longitude_deg: float
    time_zone_h: float
    elevation_m: float

    def describe(self) -> str:
        """One line for the dashboard and the command line."""
        place = ", ".join(part for part in (self.city, self.region, self.country) if part and part != "-")
        return (
            f"{place or 'unnamed station'} (WMO {self.wmo or '-'}, {self.latitude_deg:.3f}° N, "
            f"{self.longitude_deg:.3f}° E, {self.elevation_m:g} m, UTC{self.time_zone_h:+g}; source {self.source or '-'})"
        )


@dataclass(frozen=True)
class Weather:
    """Hourly outdoor temperature of one EPW file, in the file's row order."""

    location: Location
    dry_bulb_c: np.ndarray
    years: np.ndarray
    months: np.ndarray
    days: np.ndarray
    hours: np.ndarray
    filled_hours: int

    @property
    def n_hours(self) -> int:
        return len(self.dry_bulb_c)


def _number(text: str) -> float:
    return float(text.strip())


def _location(fields: list[str], file: str, problems: list[Problem]) -> Location | None:
    if len(fields) < 10:
        problems.append(Problem(
            file, 1, "LOCATION",
            f"the LOCATION line has {len(fields)} fields; it needs 10 (LOCATION, city, state, country, source, WMO, "
            "latitude, longitude, time zone, elevation)",
        ))
        return None
    try:
        lat, lon, zone, elevation = (_number(v) for v in fields[6:10])
    except ValueError:
        problems.append(Problem(
            file, 1, "LOCATION",
            f"latitude, longitude, time zone and elevation must be numbers, got {', '.join(fields[6:10])!r}",
        ))
        return None
    if not (-90 <= lat <= 90 and -180 <= lon <= 180):
        problems.append(Problem(file, 1, "LOCATION", f"latitude {lat:g} / longitude {lon:g} are out of range"))
        return None
    strip = [v.strip() for v in fields[1:6]]
    return Location(*strip, latitude_deg=lat, longitude_deg=lon, time_zone_h=zone, elevation_m=elevation)


def _row_count_message(count: int) -> str:
    if count == 8759 or count == 8783:
        hint = "one hour is missing: add it (the file must cover the whole year)"
    elif count < 8760:
        hint = f"{8760 - count} hour(s) are missing: the file must cover the whole year"
    elif count < 8784:
        hint = f"{count - 8760} row(s) too many for a normal year, {8784 - count} too few for a leap year"
    elif count in (8760 * 2, 8760 * 4, 8784 * 2, 8784 * 4):
        hint = "this looks like sub-hourly data: use an hourly EPW file"
    else:
        hint = "one year only: delete the extra rows"
    return f"has {count} hourly data rows; a year needs 8760 rows (8784 in a leap year): {hint}"


def parse_epw(text: str, file: str = EPW_FILE) -> tuple[Weather | None, list[Problem]]:
    """Read the text of an EPW file.

    Parameters
    ----------
    text : str
        The whole file.
    file : str
        Name used in problems.

    Returns
    -------
    (Weather or None, list of Problem)
        The weather, or None and every problem found (header, row count, unparsable rows, long gaps).
    """
    problems: list[Problem] = []
    lines = text.splitlines()
    while lines and not lines[-1].strip():
        lines.pop()
    if len(lines) < HEADER_LINES:
        return None, [Problem(file, None, None, f"has {len(lines)} line(s); an EPW file starts with 8 header lines")]
    rows = list(csv.reader(io.StringIO("\n".join(lines))))
    for number, (keyword, fields) in enumerate(zip(HEADER_KEYWORDS, rows[:HEADER_LINES]), start=1):
        got = fields[0].strip().upper() if fields else ""
        if got != keyword:
            problems.append(Problem(
                file, number, None,
                f"header line {number} must start with {keyword}, got {got[:30]!r}; this is not an EPW weather file "
                "(or its header was edited)",
            ))
    if problems:
        return None, problems
    location = _location(rows[0], file, problems)
    data = rows[HEADER_LINES:]
    count = len(data)
    if count not in HOURS_PER_YEAR:
        problems.append(Problem(file, None, None, _row_count_message(count)))
    dates = np.zeros((count, 4), dtype=int)
    dry_bulb = np.full(count, np.nan)
    bad: list[int] = []
    for index, fields in enumerate(data):
        line = HEADER_LINES + index + 1
        why = None
        if len(fields) < DRY_BULB_FIELD:
            why = f"has {len(fields)} field(s); an EPW data row has {FIELDS_PER_ROW} (dry bulb is field 7)"
        else:
            try:
                dates[index] = [int(float(v)) for v in fields[:4]]
                value = _number(fields[DRY_BULB_FIELD - 1])
            except ValueError:
                why = (
                    f"cannot be read: year, month, day, hour and the dry bulb (field 7) must be numbers, got "
                    f"{', '.join(fields[:4])} and {fields[DRY_BULB_FIELD - 1]!r}"
                )
            else:
                if not np.isfinite(value):
                    why = f"the dry bulb (field 7) is {fields[DRY_BULB_FIELD - 1]!r}, not a number"
                elif value != DRY_BULB_MISSING and not (DRY_BULB_RANGE_C[0] <= value <= DRY_BULB_RANGE_C[1]):
                    why = (
                        f"the dry bulb (field 7) is {value:g} °C, outside {DRY_BULB_RANGE_C[0]:g}..{DRY_BULB_RANGE_C[1]:g}"
                        " °C (the missing-value code is 99.9)"
                    )
                else:
                    dry_bulb[index] = value
                    if not (1 <= dates[index, 1] <= 12 and 1 <= dates[index, 2] <= 31 and 1 <= dates[index, 3] <= 24):
                        why = (
                            f"month {dates[index, 1]}, day {dates[index, 2]}, hour {dates[index, 3]} is not a date "
                            "(EPW hours run 1-24)"
                        )
        if why is not None:
            bad.append(index)
            if len(bad) <= MAX_REPORTED:
                problems.append(Problem(file, line, "dry bulb" if "field 7" in why else None, why))
    if len(bad) > MAX_REPORTED:
        problems.append(Problem(
            file, None, None, f"{len(bad) - MAX_REPORTED} more data line(s) cannot be read (first lines listed above)"
        ))
    filled = 0
    if not bad and count:
        dry_bulb, filled = _fill_missing(dry_bulb, file, problems)
    if problems or location is None:
        return None, problems
    return Weather(location, dry_bulb, dates[:, 0], dates[:, 1], dates[:, 2], dates[:, 3], filled), []


def _fill_missing(values: np.ndarray, file: str, problems: list[Problem]) -> tuple[np.ndarray, int]:
    """Fill runs of the missing code up to :data:`MAX_FILLED_GAP_H` hours by linear interpolation in row order."""
    missing = values == DRY_BULB_MISSING
    if not missing.any():
        return values, 0
    if missing.all():
        problems.append(Problem(file, None, "dry bulb", "every dry-bulb value is the missing code 99.9"))
        return values, 0
    edges = np.diff(np.concatenate([[0], missing.astype(int), [0]]))
    starts, ends = np.flatnonzero(edges == 1), np.flatnonzero(edges == -1)
    long_runs = [(s, e) for s, e in zip(starts, ends) if e - s > MAX_FILLED_GAP_H]
    for s, e in long_runs[:MAX_REPORTED]:
        problems.append(Problem(
            file, HEADER_LINES + s + 1, "dry bulb",
            f"lines {HEADER_LINES + s + 1}-{HEADER_LINES + e} hold the missing code 99.9 for {e - s} hours in a row; "
            f"gaps up to {MAX_FILLED_GAP_H} h are interpolated, longer ones must be filled from another source",
        ))
    if long_runs:
        return values, 0
    index = np.arange(len(values))
    out = values.copy()
    out[missing] = np.interp(index[missing], index[~missing], values[~missing])
    return out, int(missing.sum())


def read_epw(path: str | Path, file: str | None = None) -> tuple[Weather | None, list[Problem]]:
    """Read an EPW file from disk; see :func:`parse_epw`."""
    path = Path(path)
    file = file or path.name
    try:
        raw = path.read_bytes()
    except OSError as error:
        return None, [Problem(file, None, None, f"cannot be read ({error.strerror or error})")]
    for encoding in ("utf-8-sig", "latin-1"):  # station names in older files are often Latin-1
        try:
            text = raw.decode(encoding)
            break
        except UnicodeDecodeError:
            continue
    return parse_epw(text, file)
