"""GIS layers: reading with pyogrio, reprojection with pyproj, and the refusals of engine.scenario.gis.

Reference coordinates:

* IOGP Geomatics Guidance Note 7-2 (publication 373-7-2), Transverse Mercator worked example: OSGB 1936 /
  British National Grid (EPSG:27700), latitude 50°30'00" N, longitude 00°30'00" E on OSGB 1936 gives
  easting 577 274.99 m, northing 69 740.49 m.
* J. P. Snyder (1987), Map Projections: A Working Manual, USGS Professional Paper 1395, ellipsoidal Transverse
  Mercator example (Clarke 1866, UTM zone 18): latitude 40.5° N, longitude 73.5° W gives x = 127 106.5 m,
  y = 4 484 124.4 m, i.e. UTM easting 627 106.5 m with the 500 km false easting.

Both values are quoted from those publications (from memory of their worked examples; the checks against
pyproj below agree to their printed precision, which is what makes the quotation trustworthy).
"""

from __future__ import annotations

import zipfile

import numpy as np
import pyproj
import pytest
import shapely
from shapely.geometry import Point, Polygon

from engine.scenario import gis
from layer_files import square_utm, write_geojson, write_layer, zip_shapefile

GN72_LON_LAT = (0.5, 50.5)
GN72_EN = (577274.99, 69740.49)
SNYDER_LON_LAT = (-73.5, 40.5)
SNYDER_EN = (627106.5, 4484124.4)


# ----------------------------------------------------------------------------- published reference coordinates
def test_pyproj_reproduces_guidance_note_7_2_transverse_mercator_example():
    """IOGP GN 7-2 TM example (OSGB 1936 / British National Grid): 50°30'N 0°30'E -> E 577274.99, N 69740.49."""
    forward = pyproj.Transformer.from_crs("EPSG:4277", "EPSG:27700", always_xy=True)
    e, n = forward.transform(*GN72_LON_LAT)
    assert e == pytest.approx(GN72_EN[0], abs=0.01) and n == pytest.approx(GN72_EN[1], abs=0.01)


def test_pyproj_reproduces_snyder_utm_example():
    """Snyder (1987) ellipsoidal TM example, Clarke 1866 UTM zone 18: 40.5°N 73.5°W -> 627106.5, 4484124.4 m."""
    forward = pyproj.Transformer.from_crs("EPSG:4267", "EPSG:26718", always_xy=True)
    e, n = forward.transform(*SNYDER_LON_LAT)
    assert e == pytest.approx(SNYDER_EN[0], abs=0.1) and n == pytest.approx(SNYDER_EN[1], abs=0.1)


@pytest.mark.parametrize(
    "crs, geographic, en, lon_lat, tol_deg",
    [("EPSG:27700", "EPSG:4277", GN72_EN, GN72_LON_LAT, 1e-6), ("EPSG:26718", "EPSG:4267", SNYDER_EN, SNYDER_LON_LAT, 2e-6)],
)
def test_reader_reprojects_published_points_like_a_second_pipeline(tmp_path, crs, geographic, en, lon_lat, tol_deg):
    """A point layer in the published projected system comes out where the published geographic coordinates go.

    Second pipeline: the published latitude/longitude on the source datum (GN 7-2 / Snyder), taken to WGS 84
    by pyproj's geographic-to-geographic transformation. The two agree to the published rounding (0.01 m and
    0.1 m, i.e. below 1e-6 and 2e-6 degrees).
    """
    path = write_geojson(tmp_path / "wells.geojson", [Point(*en)], [{"well_id": "p"}], f"urn:ogc:def:crs:{crs.replace(':', '::')}")
    layer, problems = gis.read_layer(path, kind="point")
    assert problems == [] and layer.crs.startswith(crs)
    lon, lat = pyproj.Transformer.from_crs(geographic, "EPSG:4326", always_xy=True).transform(*lon_lat)
    x, y = layer.geometries[0]["coordinates"]
    assert x == pytest.approx(lon, abs=tol_deg) and y == pytest.approx(lat, abs=tol_deg)


def districts(n=3, x0=690_000.0, y0=5_335_000.0):
    shapes = [square_utm(x0 + 600 * k, y0) for k in range(n)]
    props = [{"code": f"d{k}", "label": f"District {k}", "mwh": 1000.0 * (k + 1)} for k in range(n)]
    return shapes, props


def utm32_reference(shape: Polygon) -> np.ndarray:
    """ETRS89 / UTM 32N to lon/lat by an explicit PROJ pipeline (inverse UTM on GRS 80), independent of EPSG codes."""
    pipe = pyproj.Transformer.from_pipeline(
        "+proj=pipeline +step +inv +proj=utm +zone=32 +ellps=GRS80 +step +proj=unitconvert +xy_in=rad +xy_out=deg"
    )
    xy = shapely.get_coordinates(shape)
    return np.column_stack(pipe.transform(xy[:, 0], xy[:, 1]))


@pytest.mark.parametrize("form", ["geojson_crs_member", "gpkg", "zipped_shapefile", "geojson_fallback"])
def test_every_format_gives_the_same_wgs84_polygons(tmp_path, form):
    """GeoJSON with the crs member, GeoPackage, zipped Shapefile (.prj) and a GeoJSON without CRS but with the
    scenario's declared CRS all give the polygons of an explicit inverse-UTM pipeline (ETRS89 = WGS 84 at this
    screening level, as PROJ's EPSG:25832 -> EPSG:4326 null transformation does)."""
    shapes, props = districts()
    fallback = None
    if form == "geojson_crs_member":
        path = write_geojson(tmp_path / "districts.geojson", shapes, props, "urn:ogc:def:crs:EPSG::25832")
    elif form == "gpkg":
        path = write_layer(tmp_path / "districts.gpkg", shapes, props, "EPSG:25832", "GPKG")
    elif form == "zipped_shapefile":
        path = zip_shapefile(tmp_path, "districts", shapes, props, "EPSG:25832")
    else:
        path = write_geojson(tmp_path / "districts.geojson", shapes, props)
        fallback = "EPSG:25832"
    layer, problems = gis.read_layer(path, kind="polygon", fallback_crs=fallback)
    assert problems == []
    assert [p["code"] for p in layer.properties] == ["d0", "d1", "d2"]
    assert [p["mwh"] for p in layer.properties] == [1000.0, 2000.0, 3000.0]
    for shape, geo in zip(shapes, layer.geometries):
        # A Shapefile stores outer rings clockwise: compare the normalised rings, not the vertex order.
        got = shapely.normalize(shapely.geometry.shape(geo))
        expected = shapely.normalize(Polygon(utm32_reference(shape)))
        assert np.allclose(shapely.get_coordinates(got), shapely.get_coordinates(expected), atol=1e-9, rtol=0)
    # Geodesic area on the ellipsoid is the planar UTM area divided by the squared scale factor (about 0.9997^2
    # here): within 0.2 % of 250 000 m² (the grid scale of UTM within a zone is 0.9996..1.0004, common practice).
    assert np.allclose(layer.areas_m2(), 250_000.0, rtol=2e-3)


def test_wgs84_geojson_without_crs_is_read_as_is(tmp_path):
    shape = Polygon([(11.0, 48.0), (11.01, 48.0), (11.01, 48.01), (11.0, 48.01)])
    path = write_geojson(tmp_path / "districts.geojson", [shape], [{"district_id": "a"}])
    layer, problems = gis.read_layer(path)
    assert problems == [] and layer.geometries[0]["coordinates"][0][0] == [11.0, 48.0]
    assert "WGS 84" in layer.notes[0]


# ----------------------------------------------------------------------------- refusals
def only(problems):
    assert len(problems) == 1, problems
    return problems[0]


def test_metres_without_crs_ask_for_the_crs(tmp_path):
    shapes, props = districts()
    path = write_geojson(tmp_path / "districts.geojson", shapes, props)
    layer, problems = gis.read_layer(path)
    problem = only(problems)
    assert layer is None and problem.file == "districts.geojson" and problem.column == "crs"
    assert "not longitude/latitude" in problem.message and "[gis] crs" in problem.message


@pytest.mark.filterwarnings("ignore:'crs' was not provided")
def test_shapefile_without_prj_in_metres_is_refused(tmp_path):
    shapes, props = districts()
    path = zip_shapefile(tmp_path, "districts", shapes, props, None)
    problem = only(gis.read_layer(path)[1])
    assert problem.file == "districts.zip" and "declares no coordinate system" in problem.message


def test_unknown_crs_member_is_refused_not_read_as_degrees(tmp_path):
    """GDAL falls back to WGS 84 for a crs member it cannot resolve; the reader refuses it instead."""
    shapes, props = districts()
    path = write_geojson(tmp_path / "districts.geojson", shapes, props, "EPSG:999999")
    problem = only(gis.read_layer(path)[1])
    assert problem.column == "crs" and "pyproj does not know" in problem.message and "EPSG:999999" in problem.message


def test_unknown_fallback_crs_is_refused(tmp_path):
    shapes, props = districts()
    path = write_geojson(tmp_path / "districts.geojson", shapes, props)
    problem = only(gis.read_layer(path, fallback_crs="EPSG:25833x")[1])
    assert "[gis] crs" in problem.message and "EPSG:25833x" in problem.message


def test_mixed_geometry_types_are_refused_with_the_first_feature_of_each(tmp_path):
    shapes, props = districts()
    shapes[1] = Point(690_700.0, 5_335_100.0)
    path = write_geojson(tmp_path / "districts.geojson", shapes, props, "EPSG:25832")
    layer, problems = gis.read_layer(path, kind="point_or_polygon")
    problem = only(problems)
    assert problem.column == "geometry" and "mixes geometry types" in problem.message
    assert "point: 1 (first feature 2)" in problem.message and "polygon: 2 (first feature 1)" in problem.message


def test_points_in_a_polygon_layer_name_the_feature(tmp_path):
    shapes, props = districts()
    shapes[2] = Point(690_700.0, 5_335_100.0)
    problems = gis.read_layer(write_geojson(tmp_path / "d.geojson", shapes, props, "EPSG:25832"), kind="polygon")[1]
    assert any(p.row == 3 and "is a Point" in p.message for p in problems)


def test_zip_with_two_shapefiles_is_refused(tmp_path):
    shapes, props = districts()
    a = zip_shapefile(tmp_path, "a", shapes, props, "EPSG:25832")
    b = zip_shapefile(tmp_path, "b", shapes, props, "EPSG:25832")
    both = tmp_path / "districts.zip"
    with zipfile.ZipFile(both, "w") as out:
        for archive in (a, b):
            with zipfile.ZipFile(archive) as z:
                for name in z.namelist():
                    out.writestr(name, z.read(name))
    problem = only(gis.read_layer(both)[1])
    assert "2 .shp files" in problem.message


def test_id_field_missing_blank_and_duplicate(tmp_path):
    shapes, props = districts(4)
    props[2]["code"] = "d0"
    props[3]["code"] = ""
    layer, problems = gis.read_layer(write_geojson(tmp_path / "districts.geojson", shapes, props, "EPSG:25832"))
    assert problems == []
    missing = only(gis.check_id_field(layer, "district_id"))
    assert missing.column == "district_id" and "fields: code, label, mwh" in missing.message
    found = gis.check_id_field(layer, "code")
    assert [(p.row, p.column) for p in found] == [(3, "code"), (4, "code")]
    assert "repeats the id of feature 1" in found[0].message and "blank" in found[1].message
    assert str(found[0]).startswith("districts.geojson, feature 3, property code:")


def test_problem_places_read_as_feature_and_field_for_gpkg(tmp_path):
    shapes, props = districts(2)
    props[1]["code"] = "d0"
    layer, _ = gis.read_layer(write_layer(tmp_path / "districts.gpkg", shapes, props, "EPSG:25832", "GPKG"))
    assert str(only(gis.check_id_field(layer, "code"))).startswith("districts.gpkg, feature 2, field code:")


def test_not_a_layer_is_refused_without_traceback(tmp_path):
    path = tmp_path / "districts.gpkg"
    path.write_bytes(b"this is not a geopackage")
    problem = only(gis.read_layer(path)[1])
    assert problem.file == "districts.gpkg" and "could not be opened" in problem.message


def test_parse_crs_accepts_common_spellings_and_refuses_others():
    """EPSG code, OGC URN and PROJ string name the same system (pyproj is the reference)."""
    reference = pyproj.CRS.from_epsg(25832)
    for text in ("EPSG:25832", "urn:ogc:def:crs:EPSG::25832", "epsg:25832"):
        crs, why = gis.parse_crs(text)
        assert why is None and crs.equals(reference)
    assert gis.parse_crs("EPSG:0")[0] is None
    assert gis.parse_crs("")[0] is None
    assert gis.crs_label(reference) == "EPSG:25832 (ETRS89 / UTM zone 32N)"


def test_scenario_crs_does_not_turn_a_wgs84_geojson_into_metres(tmp_path):
    """RFC 7946: a GeoJSON file without the crs member is WGS 84; the scenario's declared CRS applies only to a
    file whose coordinates are plainly not degrees."""
    shape = Polygon([(11.0, 48.0), (11.01, 48.0), (11.01, 48.01), (11.0, 48.01)])
    path = write_geojson(tmp_path / "districts.geojson", [shape], [{"district_id": "a"}])
    layer, problems = gis.read_layer(path, fallback_crs="EPSG:25832")
    assert problems == [] and layer.crs.startswith("EPSG:4326")
    assert layer.geometries[0]["coordinates"][0][1] == [11.01, 48.0]


def test_boolean_and_integer_fields_with_nulls_keep_their_type(tmp_path):
    """GDAL gives a boolean or integer field with nulls back as floats; the layer returns true/false and 3."""
    shapes = [Point(11.0, 48.0), Point(11.1, 48.1)]
    props = [{"flag": True, "count": 3}, {"flag": None, "count": None}]
    layer, problems = gis.read_layer(write_geojson(tmp_path / "wells.geojson", shapes, props), kind="point")
    assert problems == []
    assert layer.properties == [{"flag": True, "count": 3}, {"flag": None, "count": None}]
