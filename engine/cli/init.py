"""``python -m engine init NEW_DIR --districts LAYER ...``: the argument parsing of :mod:`engine.scenario.init_folder`.

:func:`add_init_parser` adds the sub-command and :func:`cmd_init` runs it (both registered in
:mod:`engine.cli`). Exit codes as the rest of the command line: 0 written and valid, 2 input problems (printed,
no traceback).
"""

from __future__ import annotations

import argparse
import sys

from engine.cli.common import EXIT_INPUT, EXIT_OK
from engine.scenario.init_folder import init_scenario_folder


def add_init_parser(sub) -> argparse.ArgumentParser:
    """Add the ``init`` sub-command to ``sub`` (the result of ``ArgumentParser.add_subparsers``)."""
    p = sub.add_parser(
        "init",
        help="start a scenario folder for your own city from GIS layers and a weather file",
        description="Write a complete scenario folder from a districts layer (GeoJSON, GeoPackage or zipped "
        "Shapefile, any CRS), an optional buildings layer and an optional EPW weather file; technologies, "
        "prices and cost cases come from the template. Prints every default it assumed.",
    )
    p.add_argument("new_dir", help="folder to create (must not exist or be empty)")
    p.add_argument("--districts", required=True, help="districts layer: .geojson, .gpkg or zipped Shapefile (.zip)")
    p.add_argument("--id-field", default=None, help="field with the district id (default: district_id or id)")
    p.add_argument("--name-field", default=None, help="field with the display name (default: name)")
    p.add_argument("--demand-field", default=None, help="field with annual heat demand [MWh/a]")
    p.add_argument("--crs", default=None, help="CRS of layers that declare none, e.g. EPSG:25832")
    p.add_argument("--weather", default=None, help="EnergyPlus weather file (.epw) for the outdoor temperature")
    p.add_argument("--buildings", default=None, help="buildings layer (points or footprints)")
    p.add_argument("--template", default="demo", help="scenario folder to copy settings and technologies from")
    p.add_argument("--name", default=None, help="run name in scenario.toml (default: the folder name)")
    return p


def cmd_init(args) -> int:
    result = init_scenario_folder(
        args.new_dir,
        args.districts,
        id_field=args.id_field,
        name_field=args.name_field,
        demand_field=args.demand_field,
        crs=args.crs,
        weather=args.weather,
        buildings=args.buildings,
        template=args.template,
        name=args.name,
    )
    if result.assumptions:
        print("Assumed:")
        for note in result.assumptions:
            print(f"  - {note}")
    if result.problems:
        where = f"{result.folder} was written but" if result.written else "Nothing was written:"
        print(f"{where} {len(result.problems)} problem(s) remain:", file=sys.stderr)
        for problem in result.problems:
            print(f"  {problem}", file=sys.stderr)
        return EXIT_INPUT
    print(f"Wrote {result.folder}; it validates. Next: python -m engine solve {result.folder}")
    return EXIT_OK
