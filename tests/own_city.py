"""A planner's own city for the opening tests: the demo city rewritten as a GeoPackage or projected GeoJSON
districts layer plus an EPW weather file, the forms of docs/input_format.md ("Your own city").

The districts are reprojected with pyproj to ETRS89 / UTM zone 32N (EPSG:25832) and written through pyogrio
(GDAL); the weather file carries the demo's outdoor temperatures in the EPW layout of tests/layer_files.py
(U.S. DOE, EnergyPlus "Weather Converter Program", EPW data dictionary). hourly.csv drops its outdoor_temp_c
column, so the reader takes the dry bulb from weather.epw.
"""

from __future__ import annotations

import io
import json
import zipfile
from pathlib import Path

import numpy as np
import pandas as pd
import pyogrio.raw
import pyproj
import shapely
from shapely.geometry import shape
from shapely.ops import transform

from engine.scenario.folder import DEMO_DIR
from engine.storage.store import read_scenario_files
from layer_files import epw_text

PROJECTED = "EPSG:25832"


def _projected_shapes(features):
    to_utm = pyproj.Transformer.from_crs("EPSG:4326", PROJECTED, always_xy=True)
    return [transform(to_utm.transform, shape(f["geometry"])) for f in features]


def own_city_files(form: str = "gpkg", workdir: Path | None = None) -> dict[str, bytes]:
    """The demo city's files with the districts as ``districts.gpkg`` (``form="gpkg"``) or as a GeoJSON in
    EPSG:25832 with a ``crs`` member (``form="geojson"``), and ``weather.epw`` instead of outdoor_temp_c."""
    files = read_scenario_files(DEMO_DIR)
    collection = json.loads(files.pop("districts.geojson"))
    features = collection["features"]
    shapes = _projected_shapes(features)
    if form == "gpkg":
        assert workdir is not None, "a GeoPackage is written to a file first"
        names = list(features[0]["properties"])
        fields = []
        for name in names:
            values = [f["properties"][name] for f in features]
            if all(isinstance(v, bool) for v in values):
                fields.append(np.array(values, dtype=bool))
            elif all(isinstance(v, str) for v in values):
                fields.append(np.array(values, dtype=object))
            else:
                fields.append(np.array(values, dtype=float))
        path = Path(workdir) / "districts.gpkg"
        path.unlink(missing_ok=True)
        pyogrio.raw.write(
            str(path), np.array(shapely.to_wkb(shapes), dtype=object), fields, fields=names,
            geometry_type="MultiPolygon" if any(s.geom_type == "MultiPolygon" for s in shapes) else "Polygon",
            crs=PROJECTED, driver="GPKG",
        )
        files["districts.gpkg"] = path.read_bytes()
    else:
        projected = {
            "type": "FeatureCollection",
            "crs": {"type": "name", "properties": {"name": "urn:ogc:def:crs:EPSG::25832"}},
            "features": [
                {"type": "Feature", "properties": f["properties"], "geometry": shapely.geometry.mapping(s)}
                for f, s in zip(features, shapes)
            ],
        }
        files["districts.geojson"] = json.dumps(projected).encode()
    hourly = pd.read_csv(io.BytesIO(files["hourly.csv"]), dtype=str, keep_default_na=False)
    temps = hourly["outdoor_temp_c"].astype(float).to_numpy()
    files["hourly.csv"] = hourly.drop(columns=["outdoor_temp_c"]).to_csv(index=False).encode()
    files["weather.epw"] = epw_text(2019, np.round(temps, 1)).encode()
    return files


def folder_zip(files: dict[str, bytes], folder: str | None = "my_city") -> bytes:
    """A zip of ``files`` as a file manager writes it: in one folder ``folder`` (None: at the top)."""
    buffer = io.BytesIO()
    with zipfile.ZipFile(buffer, "w", zipfile.ZIP_DEFLATED) as archive:
        for name, content in files.items():
            archive.writestr(f"{folder}/{name}" if folder else name, content)
    return buffer.getvalue()
