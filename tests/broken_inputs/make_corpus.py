"""Broken scenario folders: one kind of damage per folder, each derived from the tiny city.

Every :class:`Case` names a class of damage (the families a planner's files really suffer from: missing columns,
unit slips, encodings, projected coordinates ...), a function that damages a fresh copy of the tiny city
(``tests/fixtures/tiny_city``), and what the validator must say about it: for each expected problem the file,
row and column as :class:`engine.scenario.problems.Problem` names them, words that say what is wrong and words that hint
at the fix. A case without expected problems is a valid variant (Windows line endings, a byte-order mark, a leap
year ...) that must load and solve.

The folders are generated on the fly (the tests build each one in a temporary folder); nothing of the output is
committed, because every damage, encodings and a file above the size limit included, can be written from code.
Run ``python tests/broken_inputs/make_corpus.py FOLDER`` to write every case as ``FOLDER/<case name>/`` for a
look by hand, or ``python tests/broken_inputs/make_corpus.py --list`` for the table of cases.

To keep the tests fast, the copy leaves out the two optional hourly series (``heat_demand_hourly.csv`` and
``groundwater_temp_hourly.csv``, a year of rows each) unless a case damages them or needs them to be whole.
"""

from __future__ import annotations

import csv
import io
import json
import shutil
import sys
from dataclasses import dataclass
from pathlib import Path
from typing import Callable

HERE = Path(__file__).resolve().parent
TINY = HERE.parent / "fixtures" / "tiny_city"
SERIES_FILES = ("heat_demand_hourly.csv", "groundwater_temp_hourly.csv")
"""Optional year-long files left out of the copy unless a case keeps them."""

SIZE_LIMIT_BYTES = 200 * 1024 * 1024
"""The reader's MAX_FILE_BYTES (engine/scenario/tables.py); the huge-file case writes a sparse file just above it."""


@dataclass(frozen=True)
class Expect:
    """One problem the validator must report.

    ``row`` and ``column`` as :class:`engine.scenario.problems.Problem` holds them (None where the problem concerns the
    whole file or column); ``what`` are words that say what is wrong, ``hint`` words that point at the fix. All
    words are matched case-insensitively against the message.
    """

    file: str
    row: int | None
    column: str | None
    what: tuple[str, ...]
    hint: tuple[str, ...]


@dataclass(frozen=True)
class Case:
    """One damaged scenario folder."""

    name: str
    kind: str
    damage: Callable[[Path], None]
    expect: tuple[Expect, ...] = ()
    keep: tuple[str, ...] = ()
    """Optional series files to keep in the copy (see the module docstring)."""
    note: str = ""

    @property
    def valid(self) -> bool:
        return not self.expect


def expect(file, row, column, what, hint) -> Expect:
    as_tuple = lambda words: (words,) if isinstance(words, str) else tuple(words)  # noqa: E731
    return Expect(file, row, column, as_tuple(what), as_tuple(hint))


# ============================================================================= editing helpers
def read_records(path: Path) -> list[list[str]]:
    with path.open(encoding="utf-8", newline="") as handle:
        return list(csv.reader(handle))


def write_records(path: Path, records: list[list[str]]) -> None:
    buffer = io.StringIO()
    csv.writer(buffer, lineterminator="\n").writerows(records)
    path.write_text(buffer.getvalue(), encoding="utf-8", newline="")


def set_cell(file: str, row: int, column: str, value: str) -> Callable[[Path], None]:
    """Set one cell, the row counted as a spreadsheet shows it (header = row 1)."""

    def damage(folder: Path) -> None:
        records = read_records(folder / file)
        records[row - 1][records[0].index(column)] = value
        write_records(folder / file, records)

    return damage


def map_column(file: str, column: str, change: Callable[[str], str]) -> Callable[[Path], None]:
    """Apply ``change`` to every data cell of a column."""

    def damage(folder: Path) -> None:
        records = read_records(folder / file)
        position = records[0].index(column)
        for record in records[1:]:
            record[position] = change(record[position])
        write_records(folder / file, records)

    return damage


def drop_column(file: str, column: str) -> Callable[[Path], None]:
    def damage(folder: Path) -> None:
        records = read_records(folder / file)
        position = records[0].index(column)
        write_records(folder / file, [r[:position] + r[position + 1 :] for r in records])

    return damage


def add_column(file: str, column: str, value: str) -> Callable[[Path], None]:
    def damage(folder: Path) -> None:
        records = read_records(folder / file)
        write_records(folder / file, [records[0] + [column]] + [r + [value] for r in records[1:]])

    return damage


def rename_column(file: str, old: str, new: str) -> Callable[[Path], None]:
    def damage(folder: Path) -> None:
        records = read_records(folder / file)
        records[0][records[0].index(old)] = new
        write_records(folder / file, records)

    return damage


def edit_lines(file: str, change: Callable[[list[str]], list[str]]) -> Callable[[Path], None]:
    """Rewrite a text file line by line (``change`` gets and returns the lines without line ends)."""

    def damage(folder: Path) -> None:
        lines = (folder / file).read_text(encoding="utf-8").splitlines()
        (folder / file).write_text("\n".join(change(lines)) + "\n", encoding="utf-8", newline="")

    return damage


def replace_text(file: str, old: str, new: str) -> Callable[[Path], None]:
    def damage(folder: Path) -> None:
        text = (folder / file).read_text(encoding="utf-8")
        if old not in text:
            raise ValueError(f"{file}: {old!r} not found")
        (folder / file).write_text(text.replace(old, new, 1), encoding="utf-8", newline="")

    return damage


def write_bytes(file: str, data: bytes | Callable[[bytes], bytes]) -> Callable[[Path], None]:
    def damage(folder: Path) -> None:
        path = folder / file
        path.write_bytes(data(path.read_bytes()) if callable(data) else data)

    return damage


def reencode(file: str, encoding: str, change: Callable[[str], str] = lambda text: text) -> Callable[[Path], None]:
    """Save a file in another encoding (after an optional change of its text)."""

    def damage(folder: Path) -> None:
        path = folder / file
        path.write_bytes(change(path.read_text(encoding="utf-8")).encode(encoding))

    return damage


def edit_geojson(change: Callable[[dict], None]) -> Callable[[Path], None]:
    def damage(folder: Path) -> None:
        path = folder / "districts.geojson"
        data = json.loads(path.read_text(encoding="utf-8"))
        change(data)
        path.write_text(json.dumps(data, indent=1) + "\n", encoding="utf-8")

    return damage


def set_property(feature: int, key: str, value) -> Callable[[Path], None]:
    """Set a property of feature number ``feature`` (first = 1)."""

    def change(data: dict) -> None:
        data["features"][feature - 1]["properties"][key] = value

    return edit_geojson(change)


def set_ring(feature: int, ring: list) -> Callable[[Path], None]:
    def change(data: dict) -> None:
        data["features"][feature - 1]["geometry"] = {"type": "Polygon", "coordinates": [ring]}

    return edit_geojson(change)


def both(*damages: Callable[[Path], None]) -> Callable[[Path], None]:
    def damage(folder: Path) -> None:
        for one in damages:
            one(folder)

    return damage


def every_file(change: Callable[[Path], None]) -> Callable[[Path], None]:
    def damage(folder: Path) -> None:
        for path in sorted(folder.iterdir()):
            change(path)

    return damage


def sparse_file(file: str, size: int) -> Callable[[Path], None]:
    """Replace a file by a sparse one of ``size`` bytes (no disk blocks are written on common file systems)."""

    def damage(folder: Path) -> None:
        path = folder / file
        with path.open("wb") as handle:
            handle.truncate(size)

    return damage


def _extend_to_leap_year(lines: list[str]) -> list[str]:
    """Add 24 hours (8760 .. 8783) by repeating the last day's values."""
    extra = [",".join([str(8760 + h)] + lines[-24 + h].split(",")[1:]) for h in range(24)]
    return lines + extra


def _timestamps(lines: list[str]) -> list[str]:
    """Replace the hour column by ISO 8601 timestamps with a time zone, as a data logger exports them."""
    out = ["timestamp" + lines[0][len("hour") :]]
    for hour, line in enumerate(lines[1:]):
        day, clock = divmod(hour, 24)
        stamp = f"2023-{1 + day // 31:02d}-{1 + day % 31:02d}T{clock:02d}:00:00+01:00"
        out.append(stamp + line[line.index(",") :])
    return out


# Ring of old_town (feature 1) and a few broken variants, WGS 84 degrees.
OLD_TOWN_RING = [[11.0, 48.0], [11.01, 48.0], [11.01, 48.01], [11.0, 48.01], [11.0, 48.0]]
BOW_TIE = [[11.0, 48.0], [11.01, 48.01], [11.01, 48.0], [11.0, 48.01], [11.0, 48.0]]


def _utm(lon: float, lat: float) -> list[float]:
    """A rough UTM-zone-32N-like position in metres (only its size matters to the reader)."""
    return [round(500000 + (lon - 9.0) * 74_000, 1), round(lat * 111_200, 1)]


def _projected_districts(data: dict) -> None:
    data["crs"] = {"type": "name", "properties": {"name": "urn:ogc:def:crs:EPSG::25832"}}
    for feature in data["features"]:
        feature["geometry"]["coordinates"] = [[_utm(*p) for p in ring] for ring in feature["geometry"]["coordinates"]]


def _swap_point(file: str, row: int) -> Callable[[Path], None]:
    def damage(folder: Path) -> None:
        records = read_records(folder / file)
        lon, lat = records[0].index("lon"), records[0].index("lat")
        record = records[row - 1]
        record[lon], record[lat] = record[lat], record[lon]
        write_records(folder / file, records)

    return damage


def _crlf(path: Path) -> None:
    path.write_bytes(path.read_bytes().replace(b"\n", b"\r\n"))


def _trailing_blank_lines(path: Path) -> None:
    if path.suffix in (".csv", ".toml", ".geojson"):
        path.write_bytes(path.read_bytes() + b"\n\n\n")


def _bom(path: Path) -> None:
    path.write_bytes(b"\xef\xbb\xbf" + path.read_bytes())


# ============================================================================= the cases
T, W, B, H, D = "technologies.csv", "wells.csv", "buildings.csv", "hourly.csv", "districts.geojson"
S, C, DT = "scenario.toml", "cost_cases.toml", "district_technologies.csv"
HD, GT = "heat_demand_hourly.csv", "groundwater_temp_hourly.csv"

CASES: tuple[Case, ...] = (
    # ------------------------------------------------------------------ missing and extra columns
    Case("missing_column_technologies", "missing or extra columns", drop_column(T, "investment_eur_per_kw"),
         (expect(T, None, "investment_eur_per_kw", "required column is missing", "add"),)),
    Case("missing_column_hourly", "missing or extra columns", drop_column(H, "grid_co2_kg_per_mwh"),
         (expect(H, None, "grid_co2_kg_per_mwh", "required column is missing", "add"),)),
    Case("missing_property_districts", "missing or extra columns",
         edit_geojson(lambda d: [f["properties"].pop("supply_temp_c") for f in d["features"]]),
         (expect(D, 1, "supply_temp_c", "missing", "required"), expect(D, 2, "supply_temp_c", "missing", "required"))),
    Case("extra_column_buildings", "missing or extra columns", add_column(B, "comment", "x"),
         (expect(B, 1, "comment", "unknown column", "note"),)),
    Case("column_with_unit_in_kwh", "missing or extra columns",
         rename_column(B, "heat_demand_mwh_per_a", "heat_demand_kwh_per_a"),
         (expect(B, 1, "heat_demand_kwh_per_a", "unknown column", "heat_demand_mwh_per_a"),
          expect(B, None, "heat_demand_mwh_per_a", "required column is missing", "heat_demand_kwh_per_a"))),
    Case("header_in_capitals", "missing or extra columns", rename_column(W, "well_id", "Well_ID"),
         (expect(W, 1, "Well_ID", "unknown column", "did you mean 'well_id'"),
          expect(W, None, "well_id", "required column is missing", "'Well_ID'"))),
    Case("values_without_header", "missing or extra columns",
         edit_lines(W, lambda ls: [ls[0] + ","] + [line + ",x" for line in ls[1:]]),
         (expect(W, 1, None, "no header", "note"),)),
    Case("duplicate_column", "missing or extra columns",
         edit_lines(HD, lambda ls: [ls[0] + ",riverside"] + [line + ",1" for line in ls[1:]]),
         (expect(HD, 1, "riverside", "appears twice", "delete"),), keep=(HD,)),
    # ------------------------------------------------------------------ wrong types
    Case("text_in_number_column", "wrong types", set_cell(T, 3, "lifetime_a", "twenty"),
         (expect(T, 3, "lifetime_a", "'twenty'", "must be a number"),)),
    Case("number_with_unit_text", "wrong types", set_property(1, "heat_demand_mwh_per_a", "20000 MWh"),
         (expect(D, 1, "heat_demand_mwh_per_a", "'20000 MWh'", "without the unit"),)),
    Case("quoted_number_in_toml", "wrong types", replace_text(S, "typical_days = 4", 'typical_days = "4"'),
         (expect(S, 6, "run.typical_days", "'4'", "quotes"),)),
    Case("number_for_bool", "wrong types", set_property(1, "network_available", 2),
         (expect(D, 1, "network_available", "'2'", "true or false"),)),
    Case("list_for_number", "wrong types", set_property(2, "supply_temp_c", [45, 35]),
         (expect(D, 2, "supply_temp_c", "[45, 35]", "must be a number"),)),
    Case("fraction_for_integer", "wrong types", set_cell(W, 2, "coldest_day_of_year", "60.5"),
         (expect(W, 2, "coldest_day_of_year", "60.5", "whole number"),)),
    # ------------------------------------------------------------------ units off by 1000
    Case("district_demand_in_kwh", "units off by 1000",
         edit_geojson(lambda d: [f["properties"].update(heat_demand_mwh_per_a=f["properties"]["heat_demand_mwh_per_a"]
                                                         * 1000) for f in d["features"]]),
         (expect(D, 1, "heat_demand_mwh_per_a", "more than 10 TWh/a", "kWh instead of MWh"),
          expect(D, 2, "heat_demand_mwh_per_a", "per km²", "kWh instead of MWh"))),
    Case("building_demand_in_kwh", "units off by 1000",
         map_column(B, "heat_demand_mwh_per_a", lambda v: f"{float(v) * 1000:g}"),
         (expect(B, 3, "heat_demand_mwh_per_a", "200 GWh/a", "kWh instead of MWh"),)),
    Case("hourly_demand_in_w", "units off by 1000", map_column(HD, "riverside", lambda v: f"{float(v) * 1000:g}"),
         (expect(HD, None, "riverside", "MWh", "W instead of kW"),), keep=(HD,)),
    Case("connection_limit_in_w", "units off by 1000", set_property(1, "network_connection_limit_kw", 3_000_000),
         (expect(D, 1, "network_connection_limit_kw", "3e+06 kW", "W instead of kW"),)),
    Case("existing_capacity_in_w", "units off by 1000", set_cell(DT, 2, "existing_kw", "5000000"),
         (expect(DT, 2, "existing_kw", "5e+06 kW", "W instead of kW"),)),
    Case("well_permit_in_l_per_h", "units off by 1000", set_cell(W, 3, "permit_flow_m3_per_h", "25000"),
         (expect(W, 3, "permit_flow_m3_per_h", "25000 m³/h", "litres per hour"),)),
    Case("fuel_price_in_eur_per_kwh", "units off by 1000", replace_text(S, "oil_eur_per_mwh = 75.0",
                                                                          "oil_eur_per_mwh = 0.075"),
         (expect(S, 17, "prices.oil_eur_per_mwh", "implausibly low", "EUR/kWh instead of EUR/MWh"),)),
    Case("electricity_price_in_eur_per_kwh", "units off by 1000",
         map_column(H, "electricity_price_eur_per_mwh", lambda v: f"{float(v) / 1000:.5f}"),
         (expect(H, None, "electricity_price_eur_per_mwh", "below 1 EUR/MWh", "EUR/kWh instead of EUR/MWh"),)),
    Case("outdoor_temp_in_kelvin", "units off by 1000",
         map_column(H, "outdoor_temp_c", lambda v: f"{float(v) + 273.15:.2f}"),
         (expect(H, 2, "outdoor_temp_c", "<= 60", "kelvin"),),
         note="not a factor of 1000 but the same kind of slip: kelvin in a °C column"),
    Case("subsidy_in_percent", "units off by 1000", replace_text(C, "gw_hp = 0.4", "gw_hp = 40"),
         (expect(C, 11, "cases.high_co2.subsidy_share.gw_hp", "<= 1", "share"),),
         note="a percentage in a share column, off by 100"),
    # ------------------------------------------------------------------ NaN and infinity
    Case("nan_literal", "NaN and infinity", set_cell(H, 10, "outdoor_temp_c", "nan"),
         (expect(H, 10, "outdoor_temp_c", "'nan'", "must be a number"),)),
    Case("nan_in_geojson", "NaN and infinity", replace_text(D, '"supply_temp_c": 45.0', '"supply_temp_c": NaN'),
         (expect(D, 2, "supply_temp_c", "nan", "must be"),)),
    Case("inf_literal", "NaN and infinity", set_cell(W, 3, "design_spread_k", "inf"),
         (expect(W, 3, "design_spread_k", "'inf'", "finite number"),)),
    Case("minus_infinity", "NaN and infinity", set_cell(T, 2, "variable_om_eur_per_mwh", "-Infinity"),
         (expect(T, 2, "variable_om_eur_per_mwh", "'-Infinity'", "finite number"),)),
    Case("overflowing_number", "NaN and infinity", set_cell(T, 4, "investment_eur_per_kw", "1e999"),
         (expect(T, 4, "investment_eur_per_kw", "'1e999'", "finite number"),)),
    Case("overflow_in_geojson", "NaN and infinity",
         replace_text(D, '"heat_demand_mwh_per_a": 8000.0', '"heat_demand_mwh_per_a": 1e999'),
         (expect(D, 2, "heat_demand_mwh_per_a", "inf", "finite number"),)),
    Case("nan_in_toml", "NaN and infinity", replace_text(S, "discount_rate = 0.05", "discount_rate = nan"),
         (expect(S, 5, "run.discount_rate", "nan", "finite number"),)),
    # ------------------------------------------------------------------ negative or absurd values
    Case("negative_cooling_demand", "negative or absurd values", set_property(2, "cooling_demand_mwh_per_a", -500),
         (expect(D, 2, "cooling_demand_mwh_per_a", "-500", ">= 0"),)),
    Case("negative_building_demand", "negative or absurd values", set_cell(B, 5, "heat_demand_mwh_per_a", "-64.5"),
         (expect(B, 5, "heat_demand_mwh_per_a", "-64.5", ">= 0"),)),
    Case("absurd_building_demand", "negative or absurd values", set_cell(B, 2, "heat_demand_mwh_per_a", "1e9"),
         (expect(B, 2, "heat_demand_mwh_per_a", "200 GWh/a", "kWh instead of MWh"),)),
    Case("absurd_supply_temperature", "negative or absurd values", set_property(1, "supply_temp_c", 700),
         (expect(D, 1, "supply_temp_c", "700", "<= 130"),)),
    Case("negative_network_price", "negative or absurd values", set_cell(H, 30, "network_price_eur_per_mwh", "-75"),
         (expect(H, 30, "network_price_eur_per_mwh", "-75", ">= 0"),)),
    Case("absurd_investment", "negative or absurd values", set_cell(T, 4, "investment_eur_per_kw", "1.2e9"),
         (expect(T, 4, "investment_eur_per_kw", "<= 100000", "check the unit"),)),
    Case("absurd_lifetime", "negative or absurd values", set_cell(T, 2, "lifetime_a", "0.02"),
         (expect(T, 2, "lifetime_a", "implausibly small", "in years"),)),
    Case("tiny_store_efficiency", "negative or absurd values", set_cell(T, 6, "store_efficiency", "1e-300"),
         (expect(T, 6, "store_efficiency", "implausibly small", "as a share"),)),
    Case("absurd_co2_price", "negative or absurd values", replace_text(S, "co2_eur_per_t = 100.0",
                                                                         "co2_eur_per_t = 1e17"),
         (expect(S, 19, "prices.co2_eur_per_t", "<= 10000", "check the unit"),)),
    Case("zero_demand_district", "negative or absurd values",
         edit_geojson(lambda d: d["features"][1]["properties"].update(heat_demand_mwh_per_a=0.0,
                                                                       cooling_demand_mwh_per_a=0.0)),
         note="valid: a district whose only demand comes from its buildings"),
    # ------------------------------------------------------------------ hourly series
    Case("hour_gap", "hourly series", edit_lines(H, lambda ls: ls[:101] + ls[102:]),
         (expect(H, None, None, "8759 hourly rows", "8760"), expect(H, 102, "hour", "hour 100 is missing", "0, 1, 2"))),
    Case("hour_duplicate", "hourly series", edit_lines(H, lambda ls: ls[:52] + ls[51:]),
         (expect(H, None, None, "8761 hourly rows", "8760"), expect(H, 53, "hour", "repeats", "0, 1, 2"))),
    Case("hours_8759", "hourly series", edit_lines(H, lambda ls: ls[:-1]),
         (expect(H, None, None, "8759 hourly rows", "last"),)),
    Case("hours_start_at_1", "hourly series", map_column(H, "hour", lambda v: str(int(v) + 1)),
         (expect(H, 2, "hour", "expected 0", "start at 0"),)),
    Case("half_hourly", "hourly series", edit_lines(H, lambda ls: [ls[0]] + [
        f"{i}," + ls[1 + i // 2].split(",", 1)[1] for i in range(2 * (len(ls) - 1))]),
         (expect(H, None, None, "17520 hourly rows", "average"),)),
    Case("leap_year_8784", "hourly series", both(edit_lines(H, _extend_to_leap_year),
                                                 edit_lines(HD, _extend_to_leap_year),
                                                 edit_lines(GT, _extend_to_leap_year)),
         keep=SERIES_FILES, note="valid: a leap year loads and solves"),
    Case("timestamp_column", "hourly series", edit_lines(H, _timestamps),
         (expect(H, 1, "timestamp", "time stamps", "hour 0"),)),
    Case("timestamps_in_hour_column", "hourly series",
         edit_lines(H, lambda ls: ["hour" + line[len("timestamp"):] if k == 0 else line
                                   for k, line in enumerate(_timestamps(ls))]),
         (expect(H, 2, "hour", "2023-01-01T00:00:00+01:00", "0 to n-1"),)),
    Case("series_rows_short", "hourly series", edit_lines(GT, lambda ls: ls[:-24]),
         (expect(GT, None, None, "8736 hourly rows", "8760"),), keep=(GT,)),
    # ------------------------------------------------------------------ duplicate ids
    Case("duplicate_well_id", "duplicate ids", set_cell(W, 4, "well_id", "w2"),
         (expect(W, 4, "well_id", "duplicate", "first at row 3"),)),
    Case("duplicate_district_id", "duplicate ids", set_property(2, "district_id", "old_town"),
         (expect(D, 2, "district_id", "duplicate", "first at feature 1"),)),
    Case("property_twice", "duplicate ids",
         replace_text(D, '"supply_temp_c": 45.0', '"supply_temp_c": 45.0,\n    "supply_temp_c": 145.0'),
         (expect(D, 2, "supply_temp_c", "more than once", "keep one"),)),
    Case("duplicate_technology_row", "duplicate ids", edit_lines(T, lambda ls: ls + [ls[3]]),
         (expect(T, 8, "technology_id", "duplicate", "first at row 4"),)),
    Case("blank_id", "duplicate ids", set_cell(B, 3, "building_id", ""),
         (expect(B, 3, "building_id", "blank", "required"),)),
    Case("id_in_wrong_case", "duplicate ids", set_cell(DT, 3, "district_id", "Old_Town"),
         (expect(DT, 3, "district_id", "unknown district 'Old_Town'", "did you mean 'old_town'"),)),
    # ------------------------------------------------------------------ binding of wells and buildings
    Case("well_unknown_district", "well and building binding", set_cell(W, 3, "district_id", "river_side"),
         (expect(W, 3, "district_id", "unknown district", "did you mean 'riverside'"),)),
    Case("well_outside_every_district", "well and building binding", set_cell(W, 2, "lon", "10.95"),
         (expect(W, 2, "district_id", "outside every district", "name its district"),)),
    Case("well_lon_lat_swapped", "well and building binding", _swap_point(W, 4),
         (expect(W, 4, "district_id", "outside every district", "swapped"),)),
    Case("building_lon_lat_swapped", "well and building binding", _swap_point(B, 3),
         (expect(B, 3, None, "outside every district", "swapped"),)),
    # ------------------------------------------------------------------ polygons
    Case("self_intersecting_polygon", "polygons", set_ring(1, BOW_TIE),
         (expect(D, 1, "geometry", "self-intersection", "crosses itself"),)),
    Case("unclosed_ring", "polygons", set_ring(1, OLD_TOWN_RING[:-1]),
         (expect(D, 1, "geometry", "not closed", "repeat the first position"),)),
    Case("too_few_points", "polygons", set_ring(2, [[11.01, 48.0], [11.02, 48.0], [11.01, 48.0]]),
         (expect(D, 2, "geometry", "3 positions", "at least 4"),)),
    Case("flat_coordinates", "polygons",
         edit_geojson(lambda d: d["features"][0]["geometry"].update(coordinates=OLD_TOWN_RING)),
         (expect(D, 1, "geometry", "not nested", "list of rings"),)),
    Case("zero_area_polygon", "polygons",
         set_ring(1, [[11.0, 48.0], [11.01, 48.0], [11.005, 48.0], [11.0, 48.0]]),
         (expect(D, 1, "geometry", "not valid", "fix"),)),
    # ------------------------------------------------------------------ coordinate systems
    Case("projected_districts", "coordinate systems", edit_geojson(_projected_districts),
         (expect(D, None, "crs", "EPSG::25832", "reproject"), expect(D, 1, "geometry", "projected", "EPSG:4326"),
          expect(D, 2, "geometry", "projected", "EPSG:4326"))),
    Case("projected_wells", "coordinate systems",
         both(map_column(W, "lon", lambda v: f"{_utm(float(v), 48.0)[0]:.1f}"),
              map_column(W, "lat", lambda v: f"{_utm(11.0, float(v))[1]:.1f}")),
         (expect(W, 2, "lon", "projected", "EPSG:4326"), expect(W, 4, "lon", "projected", "EPSG:4326"))),
    Case("latitude_beyond_90", "coordinate systems", set_cell(B, 2, "lat", "148.002"),
         (expect(B, 2, "lat", "outside -90..90", "swapped"),)),
    # ------------------------------------------------------------------ encodings
    Case("latin1_umlaut", "encodings",
         reencode(B, "latin-1", lambda t: t.replace("town hall", "Rathaus Müllerstraße")),
         (expect(B, 2, None, ("not UTF-8", "column 'note'"), "save the file as UTF-8"),)),
    Case("utf16_with_bom", "encodings", reencode(T, "utf-16"),
         (expect(T, 1, None, "UTF-16", "save the file as UTF-8"),)),
    Case("cp1252_geojson", "encodings", reencode(D, "cp1252", lambda t: t.replace("Old town", "Altstadt Süd")),
         (expect(D, None, None, "not UTF-8", "save the file as UTF-8"),)),
    Case("spreadsheet_workbook_as_csv", "encodings",
         write_bytes(W, b"PK\x03\x04\x14\x00\x06\x00\x08\x00\x00\x00!\x00\xff\xfe[Content_Types].xml"),
         (expect(W, None, None, "workbook", "CSV UTF-8"),)),
    Case("bom_everywhere", "encodings", every_file(_bom), note="valid: a UTF-8 byte-order mark is allowed"),
    # ------------------------------------------------------------------ empty files
    Case("empty_technologies", "empty files", write_bytes(T, b""), (expect(T, None, None, "is empty", "header"),)),
    Case("empty_districts", "empty files", write_bytes(D, b""),
         (expect(D, None, None, "is empty", "FeatureCollection"),)),
    Case("blank_scenario_toml", "empty files", write_bytes(S, b"\n  \n"),
         (expect(S, None, None, "is empty", "[run]"),)),
    Case("header_only_technologies", "empty files", edit_lines(T, lambda ls: ls[:1]),
         (expect(T, None, None, "lists no technology", "add"),)),
    Case("header_only_hourly", "empty files", edit_lines(H, lambda ls: ls[:1]),
         (expect(H, None, None, "0 hourly rows", "8760"),)),
    Case("no_features", "empty files", edit_geojson(lambda d: d.update(features=[])),
         (expect(D, None, "features", "no features", "polygon"),)),
    Case("header_only_wells", "empty files", edit_lines(W, lambda ls: ls[:1]),
         note="valid: a wells file with a header and no doublet means no wells"),
    # ------------------------------------------------------------------ huge files
    Case("file_above_size_limit", "huge files", sparse_file(B, SIZE_LIMIT_BYTES + 1024 * 1024),
         (expect(B, None, None, "larger than the 200 MB limit", "aggregate"),),
         note="a sparse file just above the real limit: nothing is written to disk, nothing is read"),
    # ------------------------------------------------------------------ syntax
    Case("geojson_not_json", "syntax", write_bytes(D, lambda data: data[: len(data) // 2]),
         (expect(D, None, None, "not valid JSON", "GeoJSON"),)),
    Case("geojson_is_xml", "syntax", write_bytes(D, b'<?xml version="1.0"?>\n<kml><Document/></kml>\n'),
         (expect(D, None, None, "not valid JSON", "KML"),)),
    Case("toml_syntax_error", "syntax", replace_text(S, "[prices]", "[prices"),
         (expect(S, 15, None, "TOML syntax error", "docs/input_format.md"),)),
    Case("toml_unquoted_text", "syntax", replace_text(S, 'objective = "cost"', "objective = cost"),
         (expect(S, 4, None, "TOML syntax error", "quotes"),)),
    Case("semicolon_separator", "syntax", edit_lines(T, lambda ls: [line.replace(",", ";") for line in ls]),
         (expect(T, 1, None, "';'", "commas"),)),
    Case("semicolon_and_decimal_comma", "syntax",
         edit_lines(W, lambda ls: [line.replace(",", ";").replace("11.", "11,").replace("48.", "48,") for line in ls]),
         (expect(W, 1, None, "';'", "'.' decimals"),)),
    Case("decimal_comma", "syntax", edit_lines(W, lambda ls: ls[:2] + [ls[2].replace("10.5", "10,5")] + ls[3:]),
         (expect(W, 3, None, "13 cells", "decimal mark"),)),
    Case("tab_separator", "syntax", edit_lines(B, lambda ls: [line.replace(",", "\t") for line in ls]),
         (expect(B, 1, None, "tabs", "commas"),)),
    Case("quote_inside_cell", "syntax", set_cell(B, 3, "note", 'the "old" school'),
         note="valid: a quote written as the CSV rules want it (doubled, in a quoted cell) stays in the cell"),
    Case("unclosed_quote", "syntax", write_bytes(B, lambda data: data.replace(b"12,\n", b'12,"unfinished\n')),
         (expect(B, 3, "note", "not closed", "close or remove the quote"),),
         note="without the check the rows after the quote vanish into one cell"),
    Case("unclosed_quote_in_year", "syntax", write_bytes(H, lambda data: data.replace(b"\n5,", b'\n"5,', 1)),
         (expect(H, 7, None, "field larger than field limit", "quote"),)),
    Case("title_row_above_header", "syntax", write_bytes(B, lambda data: b"Buildings of Tiny city\n" + data),
         (expect(B, 1, None, "holds one cell", "delete any title rows"),)),
    Case("blank_lines_above_header", "line endings", write_bytes(W, lambda data: b"\n\n" + data),
         note="valid: blank lines above the header are skipped like those below it"),
    Case("nul_byte", "syntax", write_bytes(B, lambda data: data.replace(b"b3,", b"b3\x00,")),
         (expect(B, 4, None, "NUL", "UTF-8"),)),
    Case("windows_line_endings", "line endings", every_file(_crlf), note="valid: CR LF line ends load"),
    Case("trailing_empty_lines", "line endings", every_file(_trailing_blank_lines),
         note="valid: blank lines at the end are skipped"),
    # ------------------------------------------------------------------ cost cases
    Case("cost_case_unknown_key", "cost cases", replace_text(C, "co2_eur_per_t = 250.0", "co2_price = 250.0"),
         (expect(C, 6, "cases.high_co2.co2_price", "unknown key", "known keys"),)),
    Case("cost_case_subsidy_above_1", "cost cases", replace_text(C, "gw_hp = 0.4", "gw_hp = 1.5"),
         (expect(C, 11, "cases.high_co2.subsidy_share.gw_hp", "<= 1", "share"),)),
    Case("cost_case_singular_table", "cost cases", replace_text(C, "[cases.reference]", "[case.reference]"),
         (expect(C, 1, "case", "unknown key", "[cases.<name>]"),)),
    Case("cost_case_negative_factor", "cost cases", replace_text(C, "air_hp = 0.9", "air_hp = -0.9"),
         (expect(C, 14, "cases.high_co2.investment_factor.air_hp", "-0.9", ">= 0"),)),
    # ------------------------------------------------------------------ district_technologies
    Case("existing_above_potential", "district technologies", set_cell(DT, 3, "existing_kw", "2500"),
         (expect(DT, 3, "existing_kw", "above the potential", "raise potential_kw"),)),
    Case("unknown_technology_typo", "district technologies", set_cell(DT, 2, "technology_id", "gas_boiller"),
         (expect(DT, 2, "technology_id", "unknown technology", "did you mean 'gas_boiler'"),)),
    Case("negative_potential", "district technologies", set_cell(DT, 3, "potential_kw", "-10"),
         (expect(DT, 3, "potential_kw", "-10", ">= 0"),)),
)
"""Every case of the corpus, grouped by kind of damage."""


# ============================================================================= writing folders
def build(case: Case, folder: Path) -> Path:
    """Write the damaged copy of the tiny city for ``case`` into ``folder`` (created) and return it."""
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    for path in sorted(TINY.iterdir()):
        if path.name in SERIES_FILES and path.name not in case.keep:
            continue
        shutil.copyfile(path, folder / path.name)
    case.damage(folder)
    return folder


def case_named(name: str) -> Case:
    for case in CASES:
        if case.name == name:
            return case
    raise KeyError(name)


def write_all(out: Path) -> list[Path]:
    """Every case as ``out/<case name>/``."""
    return [build(case, Path(out) / case.name) for case in CASES]


def _table() -> str:
    lines = [f"{'case':34} {'kind':28} expected"]
    for case in CASES:
        wanted = "valid" if case.valid else "; ".join(f"{e.file}:{e.row}:{e.column}" for e in case.expect)
        lines.append(f"{case.name:34} {case.kind:28} {wanted}")
    return "\n".join(lines)


if __name__ == "__main__":
    if len(sys.argv) != 2:
        sys.exit("usage: python tests/broken_inputs/make_corpus.py FOLDER | --list")
    if sys.argv[1] == "--list":
        print(_table())
    else:
        for written in write_all(Path(sys.argv[1])):
            print(written)
        print(f"{len(CASES)} cases written (the huge file is sparse: it takes almost no disk space)")
