"""Files the GIS, weather and init tests write: layers through pyogrio (GDAL) and EPW text in the published layout.

EPW layout: U.S. DOE, EnergyPlus Auxiliary Programs, "Weather Converter Program", EPW data dictionary (eight
header lines, LOCATION first; 35 fields per hourly line, dry bulb in field 7). The station is invented.
"""

from __future__ import annotations

import calendar
import json
import zipfile
from pathlib import Path

import numpy as np
import pyogrio.raw
import shapely
from shapely.geometry import Polygon

from engine.scenario import epw


def square_utm(x0: float, y0: float, size: float = 500.0) -> Polygon:
    return Polygon([(x0, y0), (x0 + size, y0), (x0 + size, y0 + size), (x0, y0 + size)])


def write_geojson(path: Path, shapes, props, crs_name: str | None = None) -> Path:
    data = {
        "type": "FeatureCollection",
        "features": [
            {"type": "Feature", "properties": p, "geometry": shapely.geometry.mapping(s)} for s, p in zip(shapes, props)
        ],
    }
    if crs_name is not None:
        data["crs"] = {"type": "name", "properties": {"name": crs_name}}
    path.write_text(json.dumps(data))
    return path


def write_layer(path: Path, shapes, props, crs: str | None, driver: str) -> Path:
    names = list(props[0])
    fields = [np.array([p[n] for p in props], dtype=object if isinstance(props[0][n], str) else float) for n in names]
    kinds = {s.geom_type for s in shapes}
    geometry_type = "Point" if kinds == {"Point"} else "MultiPolygon" if "MultiPolygon" in kinds else "Polygon"
    pyogrio.raw.write(
        str(path), np.array(shapely.to_wkb(list(shapes)), dtype=object), fields, fields=names,
        geometry_type=geometry_type, crs=crs, driver=driver,
    )
    return path


def zip_shapefile(folder: Path, stem: str, shapes, props, crs: str | None) -> Path:
    shp = write_layer(folder / f"{stem}.shp", shapes, props, crs, "ESRI Shapefile")
    archive = folder / f"{stem}.zip"
    with zipfile.ZipFile(archive, "w") as z:
        for part in folder.glob(f"{stem}.*"):
            if part.suffix != ".zip":
                z.write(part, part.name)
    for part in folder.glob(f"{stem}.*"):
        if part.suffix != ".zip":
            part.unlink()
    assert not shp.exists()
    return archive



HEADER = [
    "LOCATION,Examplestadt,XX,Nowhere,invented test station,999999,48.14,11.58,1.0,520.0",
    "DESIGN CONDITIONS,0",
    "TYPICAL/EXTREME PERIODS,0",
    "GROUND TEMPERATURES,0",
    "HOLIDAYS/DAYLIGHT SAVINGS,No,0,0,0",
    "COMMENTS 1,written by the test",
    "COMMENTS 2,",
    "DATA PERIODS,1,1,Data,Sunday, 1/ 1,12/31",
]
FLAGS = "A7A7A7A7*0?9?9?9?9?9?9?9A7A7A7A7A7A7*0E8*0*0"
# Fields 8-35 after the dry bulb, in the data dictionary's order (dew point ... liquid precipitation quantity).
REST = "-5.0,86,99100,0,1415,265,0,0,0,0,0,0,0,270,2.1,10,10,16.1,300,9,999999999,6,0.0680,0,88,0.160,0.0,1.0"


def temperatures(n: int) -> np.ndarray:
    hours = np.arange(n)
    return np.round(8.0 - 10.0 * np.cos(2 * np.pi * hours / n) + 4.0 * np.sin(2 * np.pi * hours / 24), 1)


def epw_text(year: int = 2019, temps: np.ndarray | None = None, drop: int = 0, years_by_month=None) -> str:
    days = 366 if calendar.isleap(year) else 365
    n = days * 24
    temps = temperatures(n) if temps is None else temps
    lines = list(HEADER)
    index = 0
    for month in range(1, 13):
        row_year = years_by_month[month - 1] if years_by_month else year
        for day in range(1, calendar.monthrange(year, month)[1] + 1):
            for hour in range(1, 25):
                lines.append(f"{row_year},{month},{day},{hour},60,{FLAGS},{temps[index]:.1f},{REST}")
                index += 1
    assert index == n and len(lines[-1].split(",")) == epw.FIELDS_PER_ROW
    if drop:
        lines = lines[:-drop]
    return "\n".join(lines) + "\n"


