"""District, well and building layers from desktop GIS files, reprojected to WGS 84 longitude/latitude.

A planner's layers come in the national projected coordinate system and in the formats desktop GIS writes:

* GeoJSON (``.geojson``), with or without the legacy top-level ``crs`` member (the 2008 GeoJSON specification;
  RFC 7946 dropped it, but desktop GIS still writes it when a layer is exported in its own system);
* GeoPackage (``.gpkg``, OGC 12-128r18), one layer;
* a zipped ESRI Shapefile (``.zip`` holding one ``.shp`` with its ``.shx``, ``.dbf`` and ``.prj``).

Reading is done by GDAL through pyogrio (:func:`pyogrio.raw.read`); no file format is parsed here. Every
coordinate system that pyproj knows is reprojected to WGS 84 with ``pyproj.Transformer.from_crs(source,
"EPSG:4326", always_xy=True)``, so that positions come out as ``[longitude, latitude]`` whatever axis order the
source CRS defines.

A coordinate system is never guessed. The rules, in order:

1. The layer declares a CRS (the ``crs`` member, the GeoPackage's spatial reference, the Shapefile's ``.prj``):
   it is used. A declared CRS that pyproj does not know is refused.
2. The layer declares none, and the caller gives a fallback (``[gis] crs`` in scenario.toml or ``--crs`` of
   ``python -m engine init``): the fallback is used, except for a GeoJSON file whose coordinates are plausible
   longitude/latitude, which is WGS 84 as RFC 7946 says.
3. Neither: coordinates that are plausible longitude/latitude (|x| <= 180, |y| <= 90) are taken as WGS 84, and
   the layer says so in its notes; anything else is refused with a message that asks for the CRS.

GDAL reports every GeoJSON file without a ``crs`` member as WGS 84 (RFC 7946); such a file whose coordinates are
plainly metres therefore counts as "declares none" (rule 2 or 3), never as degrees.

Problems are :class:`~engine.scenario.problems.Problem` records naming the file, the feature (first = 1) and
the field, with a fix. This module screens layers for planning; it does not replace a surveyor's check of a
coordinate transformation.

References
----------
H. Butler et al. (2008). The GeoJSON Format Specification, revision 1.0 (the ``crs`` member, section 3).
H. Butler et al. (2016). The GeoJSON Format. RFC 7946, IETF (WGS 84 longitude/latitude, no ``crs`` member).
IOGP (2019). Geomatics Guidance Note 7, part 2: Coordinate Conversions and Transformations including Formulas.
IOGP Publication 373-7-2.
"""

from __future__ import annotations

import json
import math
import zipfile
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pyogrio
import pyogrio.raw
import pyproj
import shapely
from pyproj.exceptions import CRSError
from shapely.geometry import mapping

from engine.scenario.problems import Problem

WGS84 = "EPSG:4326"
LAYER_SUFFIXES = (".geojson", ".gpkg", ".zip")
ZIPPED_LAYER_MAX_BYTES = 300 * 2**20
"""Largest unpacked size of a zipped Shapefile, the total limit of a scenario zip (engine.storage.safezip). [bytes]"""
"""File endings read as GIS layers (``.json`` is accepted as GeoJSON as well)."""

POLYGON_TYPES = ("Polygon", "MultiPolygon")
POINT_TYPES = ("Point",)
KINDS = {"polygon": POLYGON_TYPES, "point": POINT_TYPES, "point_or_polygon": POINT_TYPES + POLYGON_TYPES}

_GEOD = pyproj.Geod(ellps="WGS84")


@dataclass
class Layer:
    """A layer read and reprojected to WGS 84.

    ``properties[i]`` and ``geometries[i]`` belong to feature ``rows[i]`` (first feature = 1). Geometries are
    GeoJSON mappings in WGS 84 longitude/latitude, 2D; properties hold Python values (``None`` for null).
    """

    file: str
    crs: str
    fields: list[str]
    properties: list[dict[str, Any]]
    geometries: list[dict]
    rows: list[int]
    notes: list[str] = field(default_factory=list)
    source_is_wgs84: bool = False
    """True when the coordinates were WGS 84 longitude/latitude already (nothing was reprojected)."""

    def __len__(self) -> int:
        return len(self.rows)

    @property
    def geometry_types(self) -> set[str]:
        return {g["type"] for g in self.geometries}

    def features(self) -> list[dict]:
        """The layer as GeoJSON Feature objects (WGS 84), in file order."""
        return [
            {"type": "Feature", "properties": dict(p), "geometry": g}
            for p, g in zip(self.properties, self.geometries)
        ]

    def areas_m2(self) -> np.ndarray:
        """Geodesic area of each polygon on the WGS 84 ellipsoid [m²] (0 for points), by :class:`pyproj.Geod`."""
        return np.array(
            [abs(_GEOD.geometry_area_perimeter(shapely.geometry.shape(g))[0]) for g in self.geometries], dtype=float
        )

    def lon_lat(self) -> tuple[np.ndarray, np.ndarray]:
        """Position of each feature [°]: the point itself, or a point inside the polygon (for footprints)."""
        points = [shapely.geometry.shape(g) for g in self.geometries]
        inner = [p if p.geom_type == "Point" else p.representative_point() for p in points]
        return np.array([p.x for p in inner], dtype=float), np.array([p.y for p in inner], dtype=float)


# ============================================================================= coordinate systems
def parse_crs(text: Any) -> tuple[pyproj.CRS | None, str | None]:
    """A CRS from what a user wrote (``EPSG:25832``, ``urn:ogc:def:crs:EPSG::25832``, WKT, PROJ string).

    Returns
    -------
    (pyproj.CRS or None, str or None)
        The CRS, or None and a sentence saying why it is refused.
    """
    if not isinstance(text, str) or not text.strip():
        return None, f"a coordinate system is written as text such as \"EPSG:25832\", got {text!r}"
    try:
        crs = pyproj.CRS.from_user_input(text.strip())
    except CRSError:
        return None, (
            f"pyproj does not know the coordinate system {text.strip()!r}; write it as an EPSG code such as "
            "\"EPSG:25832\" (ETRS89 / UTM zone 32N), as the layer's properties in the GIS show it"
        )
    if not (crs.is_geographic or crs.is_projected):
        return None, f"{text.strip()!r} is a {crs.type_name}; a layer needs a projected or geographic 2D system"
    return crs, None


def crs_label(crs: pyproj.CRS) -> str:
    """``EPSG:25832 (ETRS89 / UTM zone 32N)``, or the CRS name when it has no EPSG code."""
    code = crs.to_epsg(min_confidence=70)
    return f"EPSG:{code} ({crs.name})" if code else crs.name


def is_wgs84(crs: pyproj.CRS) -> bool:
    """True for WGS 84 longitude/latitude in either axis order (EPSG:4326 or OGC:CRS84)."""
    if not crs.is_geographic:
        return False
    return crs.to_epsg(min_confidence=70) == 4326 or crs.equals(pyproj.CRS.from_user_input("OGC:CRS84"))


def transformer_to_wgs84(crs: pyproj.CRS) -> pyproj.Transformer:
    """Transformer from ``crs`` to WGS 84 with x = longitude, y = latitude (``always_xy=True``)."""
    return pyproj.Transformer.from_crs(crs, WGS84, always_xy=True)


def to_wgs84(x, y, crs: pyproj.CRS) -> tuple[np.ndarray, np.ndarray]:
    """Reproject positions ``(x, y)`` given in ``crs`` (easting/northing or lon/lat) to WGS 84 lon/lat [°].

    Positions the transformation cannot reach come back as ``inf``.
    """
    lon, lat = transformer_to_wgs84(crs).transform(np.asarray(x, dtype=float), np.asarray(y, dtype=float))
    return np.asarray(lon, dtype=float), np.asarray(lat, dtype=float)


def plausible_lon_lat(x, y) -> bool:
    """Whether every finite position could be longitude/latitude in degrees (|x| <= 180, |y| <= 90)."""
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    finite = np.isfinite(x) & np.isfinite(y)
    return bool(np.all(np.abs(x[finite]) <= 180.0) and np.all(np.abs(y[finite]) <= 90.0))


def _ask_for_crs(file: str, x: np.ndarray, y: np.ndarray, declared: str) -> str:
    finite = np.isfinite(x) & np.isfinite(y)
    example = f" (first position {x[finite][0]:.10g}, {y[finite][0]:.10g})" if finite.any() else ""
    return (
        f"{declared}, but its coordinates{example} are plainly not longitude/latitude in degrees; they look like "
        "metres of a projected system. Say which one: export the layer with its coordinate system (GeoPackage, "
        "or a Shapefile with its .prj), or declare it once in scenario.toml as [gis] crs = \"EPSG:NNNN\" "
        "(for example EPSG:25832 for ETRS89 / UTM zone 32N)"
    )


# ============================================================================= opening a layer
def geojson_crs_member(path: Path) -> tuple[bool, Any]:
    """Whether a GeoJSON file has a top-level ``crs`` member, and its value.

    GDAL reads the member itself but silently falls back to WGS 84 when it does not know the system, so the
    declaration is looked at here to refuse an unknown one instead of reading metres as degrees.
    """
    try:
        with path.open("rb") as handle:
            data = json.load(handle)
    except (ValueError, RecursionError, OSError):
        return False, None
    if isinstance(data, dict) and "crs" in data:
        return True, data["crs"]
    return False, None


def _crs_member_text(member: Any) -> str | None:
    if isinstance(member, dict):
        properties = member.get("properties")
        if isinstance(properties, dict):
            for key in ("name", "code"):
                if key in properties:
                    value = properties[key]
                    if member.get("type") == "EPSG" or key == "code":
                        return f"EPSG:{value}"
                    return str(value)
    if isinstance(member, str):
        return member
    return None


def _dataset(path: Path, file: str, problems: list[Problem]) -> str | None:
    """The GDAL name of the one layer in ``path`` (a zipped Shapefile opens through ``/vsizip/``)."""
    suffix = path.suffix.lower()
    if suffix == ".zip":
        try:
            with zipfile.ZipFile(path) as archive:
                infos = archive.infolist()
                names = [n for n in archive.namelist() if n.lower().endswith(".shp") and not n.startswith("__MACOSX")]
            unpacked = sum(info.file_size for info in infos)
            if unpacked > ZIPPED_LAYER_MAX_BYTES or any(
                info.file_size > 2**20 and info.file_size > 100 * max(info.compress_size, 1) for info in infos
            ):
                problems.append(Problem(
                    file, None, None,
                    f"would unpack to {unpacked / 2**20:,.0f} MiB or is compressed more than 100 times (a zip bomb); "
                    f"a zipped Shapefile may unpack to at most {ZIPPED_LAYER_MAX_BYTES // 2**20} MiB",
                ))
                return None
        except (zipfile.BadZipFile, OSError) as error:
            problems.append(Problem(file, None, None, f"is not a readable zip archive ({error}); zip the Shapefile again"))
            return None
        if len(names) != 1:
            found = "no .shp file" if not names else f"{len(names)} .shp files ({', '.join(sorted(names)[:4])})"
            problems.append(Problem(
                file, None, None,
                f"holds {found}; a zipped layer must hold exactly one Shapefile (.shp with its .shx, .dbf and .prj)",
            ))
            return None
        return f"/vsizip/{path.resolve()}/{names[0]}"
    return str(path)


def _read_raw(dataset: str, file: str, problems: list[Problem]):
    try:
        layers = pyogrio.list_layers(dataset)
    except Exception as error:  # GDAL's own error types differ by driver; the message is what matters
        problems.append(Problem(
            file, None, None,
            f"could not be opened as a GIS layer ({_first_line(error)}); export it again as GeoPackage, GeoJSON "
            "or a zipped Shapefile",
        ))
        return None
    if len(layers) != 1:
        names = ", ".join(str(name) for name, _ in layers[:6])
        problems.append(Problem(
            file, None, None,
            f"holds {len(layers)} layers ({names}); keep one layer per file (save the others as files of their own)",
        ))
        return None
    try:
        return pyogrio.raw.read(dataset)
    except Exception as error:
        problems.append(Problem(file, None, None, f"could not be read ({_first_line(error)}); export it again"))
        return None


def _first_line(error: Exception) -> str:
    return str(error).strip().splitlines()[0] if str(error).strip() else type(error).__name__


def _python_value(value: Any) -> Any:
    if value is None:
        return None
    if isinstance(value, (float, np.floating)):
        return None if math.isnan(float(value)) else float(value)
    if isinstance(value, (np.integer,)):
        return int(value)
    if isinstance(value, (np.bool_,)):
        return bool(value)
    if isinstance(value, bytes):
        return value.decode("utf-8", errors="replace")
    if isinstance(value, str):
        return value
    return str(value)


def _typed(value: Any, kind: str) -> Any:
    if value is None or not isinstance(value, float):
        return value
    if kind == "bool":
        return bool(value)
    if kind.startswith("int") and value.is_integer():
        return int(value)
    return value


def _source_crs(
    path: Path, file: str, declared: str | None, fallback: str | None, xs: np.ndarray, ys: np.ndarray,
    problems: list[Problem], notes: list[str],
) -> pyproj.CRS | None:
    """The CRS the coordinates are in, by the rules of the module docstring; None after a problem."""
    suffix = path.suffix.lower()
    has_member = False
    if suffix in (".geojson", ".json"):
        has_member, member = geojson_crs_member(path)
        if has_member:
            text = _crs_member_text(member)
            crs, why = parse_crs(text) if text else (None, f"the crs member {json.dumps(member)[:80]} names no system")
            if crs is None:
                problems.append(Problem(file, None, "crs", f"{why}; fix the crs member or export the layer again"))
                return None
            declared_crs = crs
        else:
            declared_crs = None  # GDAL's WGS 84 for a GeoJSON without the member is a default, not a declaration
    elif declared:
        declared_crs, why = parse_crs(declared)
        if declared_crs is None:
            problems.append(Problem(file, None, "crs", f"the layer's own coordinate system: {why}"))
            return None
    else:
        declared_crs = None

    if declared_crs is not None:
        if declared_crs.is_geographic and not plausible_lon_lat(xs, ys):
            problems.append(Problem(
                file, None, "crs", _ask_for_crs(file, xs, ys, f"declares the geographic system {crs_label(declared_crs)}")
            ))
            return None
        return declared_crs
    if has_member is False and suffix in (".geojson", ".json") and plausible_lon_lat(xs, ys):
        # RFC 7946: a GeoJSON file without the member is WGS 84; the scenario's CRS is for files in metres
        notes.append(f"{file}: no crs member and longitude/latitude coordinates: read as WGS 84 (RFC 7946)")
        return pyproj.CRS.from_user_input(WGS84)
    if fallback:
        crs, why = parse_crs(fallback)
        if crs is None:
            problems.append(Problem(file, None, "crs", f"the declared [gis] crs: {why}"))
            return None
        notes.append(f"{file}: declares no coordinate system; read in {crs_label(crs)} as declared for the scenario")
        return crs
    if plausible_lon_lat(xs, ys):
        notes.append(f"{file}: declares no coordinate system; its coordinates look like longitude/latitude and are "
                     "read as WGS 84 (EPSG:4326)")
        return pyproj.CRS.from_user_input(WGS84)
    problems.append(Problem(file, None, "crs", _ask_for_crs(file, xs, ys, "declares no coordinate system")))
    return None


def read_layer(
    path: str | Path, kind: str = "polygon", fallback_crs: str | None = None, file: str | None = None
) -> tuple[Layer | None, list[Problem]]:
    """Read one vector layer and reproject it to WGS 84.

    Parameters
    ----------
    path : str or pathlib.Path
        A ``.geojson``/``.json``, ``.gpkg`` or ``.zip`` (zipped Shapefile) file holding one layer.
    kind : {"polygon", "point", "point_or_polygon"}
        Geometry types allowed: polygons (Polygon and MultiPolygon may mix), points, or either (but all features
        of one type family: a layer mixing points and polygons is refused).
    fallback_crs : str, optional
        CRS of a layer that declares none (``[gis] crs`` of scenario.toml).
    file : str, optional
        Name to use in problems (defaults to the file name).

    Returns
    -------
    (Layer or None, list of Problem)
        The layer when nothing is wrong with it, else None and every problem found.
    """
    if kind not in KINDS:
        raise ValueError(f"kind must be one of {sorted(KINDS)}, got {kind!r}")
    path = Path(path)
    file = file or path.name
    problems: list[Problem] = []
    if not path.is_file():
        return None, [Problem(file, None, None, "does not exist or is not a file")]
    dataset = _dataset(path, file, problems)
    if dataset is None:
        return None, problems
    raw = _read_raw(dataset, file, problems)
    if raw is None:
        return None, problems
    meta, _fids, wkb, field_data = raw
    names = [str(name) for name in meta["fields"]]
    count = len(wkb)
    if count == 0:
        return None, [Problem(file, None, None, "holds no features")]

    shapes = np.array([None if blob is None else shapely.from_wkb(blob) for blob in wkb], dtype=object)
    allowed = KINDS[kind]
    families: dict[str, list[int]] = {}
    for index, shape in enumerate(shapes):
        number = index + 1
        if shape is None or shape.is_empty:
            problems.append(Problem(file, number, "geometry", "has no geometry; draw it or delete the feature"))
            continue
        family = "point" if shape.geom_type in POINT_TYPES else "polygon" if shape.geom_type in POLYGON_TYPES else shape.geom_type
        families.setdefault(family, []).append(number)
        if shape.geom_type not in allowed:
            problems.append(Problem(
                file, number, "geometry",
                f"is a {shape.geom_type}; this layer needs {' or '.join(allowed)} features",
            ))
    if len(families) > 1:
        parts = "; ".join(f"{fam}: {len(rows)} (first feature {rows[0]})" for fam, rows in sorted(families.items()))
        problems.append(Problem(
            file, None, "geometry",
            f"mixes geometry types ({parts}); one layer holds one type: save districts as polygons, wells as points",
        ))
    if problems:
        return None, problems

    shapes = shapely.force_2d(shapes)
    coords = shapely.get_coordinates(shapes)
    notes: list[str] = []
    crs = _source_crs(path, file, meta.get("crs"), fallback_crs, coords[:, 0], coords[:, 1], problems, notes)
    if crs is None:
        return None, problems
    if not is_wgs84(crs):
        transformer = transformer_to_wgs84(crs)

        def reproject(xy: np.ndarray) -> np.ndarray:
            lon, lat = transformer.transform(xy[:, 0], xy[:, 1])
            return np.column_stack([lon, lat])

        shapes = shapely.transform(shapes, reproject)
    for index, shape in enumerate(shapes):
        xy = shapely.get_coordinates(shape)
        if not np.all(np.isfinite(xy)) or not plausible_lon_lat(xy[:, 0], xy[:, 1]):
            problems.append(Problem(
                file, index + 1, "geometry",
                f"lies outside the area where {crs_label(crs)} can be reprojected to WGS 84; check that this is the "
                "layer's coordinate system",
            ))
    if problems:
        return None, problems
    # A boolean or integer field with nulls comes back as floats (1.0, NaN): give back the field's own type
    kinds = [str(kind) for kind in meta.get("dtypes", ["object"] * len(names))]
    properties = [
        {name: _typed(_python_value(field_data[j][i]), kinds[j]) for j, name in enumerate(names)} for i in range(count)
    ]
    layer = Layer(
        file=file,
        crs=crs_label(crs),
        fields=names,
        properties=properties,
        geometries=[_plain_mapping(shape) for shape in shapes],
        rows=list(range(1, count + 1)),
        notes=notes,
        source_is_wgs84=is_wgs84(crs),
    )
    return layer, []


def _plain_mapping(shape) -> dict:
    """GeoJSON mapping with lists (not tuples), so it compares and hashes like a geometry read from JSON."""
    geo = mapping(shape)
    return json.loads(json.dumps({"type": geo["type"], "coordinates": geo["coordinates"]}))


# ============================================================================= checks on fields
def check_id_field(layer: Layer, id_field: str, what: str = "feature") -> list[Problem]:
    """The id field exists, has no blank and no repeated value; problems name the feature and the field."""
    if id_field not in layer.fields:
        fields = ", ".join(layer.fields) or "none"
        return [Problem(
            layer.file, None, id_field,
            f"the layer has no field '{id_field}' (its fields: {fields}); add it in the GIS, or name the field "
            "that holds the ids",
        )]
    problems: list[Problem] = []
    seen: dict[str, int] = {}
    for row, props in zip(layer.rows, layer.properties):
        value = props.get(id_field)
        text = "" if value is None else (f"{value:g}" if isinstance(value, float) else str(value)).strip()
        if not text:
            problems.append(Problem(layer.file, row, id_field, f"is blank; every {what} needs an id"))
        elif text in seen:
            problems.append(Problem(
                layer.file, row, id_field,
                f"'{text}' repeats the id of feature {seen[text]}; ids must be unique: rename one of them",
            ))
        else:
            seen[text] = row
    return problems


def id_text(value: Any) -> str:
    """An id field value as text (an integer id read as 3.0 becomes ``3``)."""
    if value is None:
        return ""
    if isinstance(value, float) and value.is_integer():
        return str(int(value))
    return str(value).strip()


def find_layer(folder: str | Path, stem: str) -> list[Path]:
    """The layer files for ``stem`` in ``folder`` (``districts.geojson``, ``districts.gpkg``, ``districts.zip``)."""
    folder = Path(folder)
    return [folder / f"{stem}{suffix}" for suffix in LAYER_SUFFIXES if (folder / f"{stem}{suffix}").is_file()]
