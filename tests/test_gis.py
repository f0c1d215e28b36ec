"""The GeoPackage of stations, segments, windows, warnings and infill stretches.

Outside references named beside the checks:
- geopandas / pyogrio (GDAL's GeoPackage driver) to read the file back: the OGC GeoPackage
  standard is what any GIS opens;
- for GeoParquet: shapely.to_wkb (GEOS's WKB writer, ISO flavour, as geopandas writes it) for
  the WKB of the lines, geopandas' GeoSeries.total_bounds for the bbox, and the file that
  geopandas.GeoDataFrame.to_parquet writes for the same frame, read back with geopandas and
  with pyarrow (GeoParquet 1.1.0 specification, https://geoparquet.org/releases/v1.1.0/);
- pyproj.CRS for EPSG:4326 and pyproj.Geod.geometry_length (Karney 2013) for line lengths;
- RFC 7946 section 3.1.9 (antimeridian cutting) for lines that cross +-180 degrees;
- the sampling theorem (Shannon 1949): at a spacing of half the target wavelength or more the
  aliased power there is at least the true power, so a 3 km stretch must be infill at 4 km
  (tests/infill_survey.py), and the construction of that survey (where its coarse stretch runs,
  its stations placed with pyproj.Geod.fwd).
"""

from __future__ import annotations

import geopandas
import infill_survey
import numpy as np
import pyogrio
import pytest
import shapely
from conftest import GEOD, walk
from pyproj import CRS

from profiles.geometry import build_segments
from profiles.gis import (
    LAYERS,
    _lines,
    geoparquet_table,
    paths_wkb,
    split_at_antimeridian,
    window_layer,
    window_lines,
    write_geopackage,
    write_geoparquet,
)
from profiles.infill import INFILL_COLUMNS
from profiles.outputs import OutputFolder
from profiles.resample import resample
from profiles.spacing import WINDOW_BUDGET_COLUMNS, audit_spacing
from profiles.survey import Survey
from profiles.windows import along_track_windows, track_paths


def build(start=(12.0, 55.0), bad_rows=True):
    lon1, lat1 = walk(*start, [(100, 200, 250.0), (100, 10, 2000.0), (100, 200, 250.0)])
    lon2, lat2 = walk(start[0], start[1] + 0.2, [(95, 240, 250.0)])
    lon = np.concatenate([lon1, lon2])
    lat = np.concatenate([lat1, lat2])
    line = np.array(["P1"] * lon1.size + ["P2"] * lon2.size)
    distance = np.concatenate([250.0 * np.arange(lon1.size), 250.0 * np.arange(lon2.size)])
    values = 50 * np.cos(2 * np.pi * distance / 4500.0) + np.random.default_rng(0).normal(0, 2, lon.size)
    if bad_rows:
        lat[[5, 300]] = np.nan  # no coordinate: empty geometry, dropped with a reason
    survey = Survey.from_arrays(line=line, lon=lon, lat=lat, values={"depth_m": values})
    segments = build_segments(survey)
    tracks = [resample(s, "depth_m") for s in segments]
    windows = along_track_windows(tracks, window=12e3, step=4e3, shortest_wavelength=2.5e3)
    audit = audit_spacing(segments, shortest_wavelength=2.5e3)
    return segments, audit, windows


@pytest.fixture(scope="module")
def written(tmp_path_factory):
    segments, audit, windows = build()
    path = tmp_path_factory.mktemp("gis") / "profiles.gpkg"
    write_geopackage(path, survey=segments.survey, segments=segments, audit=audit, windows=windows)
    return path, segments, audit, windows


def test_four_layers_in_epsg_4326_without_a_budget(written):
    path = written[0]
    names = [name for name, _ in pyogrio.list_layers(path)]  # GDAL's GeoPackage driver
    assert names == [name for name in LAYERS if name != "infill"]
    for name in names:
        frame = geopandas.read_file(path, layer=name)
        assert CRS.from_user_input(frame.crs) == CRS.from_epsg(4326)
    windows = geopandas.read_file(path, layer="windows")
    assert not set(WINDOW_BUDGET_COLUMNS) & set(windows.columns)  # no target budget, no columns


def test_stations_keep_every_row_with_status_and_reason(written):
    path, segments, _, _ = written
    stations = geopandas.read_file(path, layer="stations")
    survey = segments.survey
    assert len(stations) == len(survey.stations) == survey.accounting.read
    dropped = stations[stations["status"] == "dropped"]
    assert len(dropped) == 2 and set(dropped["reason"]) == {"missing coordinate"}
    assert dropped.geometry.is_empty.all()
    used = stations[stations["status"] == "used"]
    assert not used.geometry.is_empty.any()
    np.testing.assert_allclose(used.geometry.x, used["lon"])


def test_segments_carry_the_spacing_audit(written):
    path, segments, audit, _ = written
    layer = geopandas.read_file(path, layer="segments")
    assert len(layer) == len(segments) == len(audit.segments)
    assert set(audit.segments.columns) <= set(layer.columns)
    np.testing.assert_allclose(layer["spacing_max_km"], audit.segments["spacing_max_km"])
    # Geodesic length of each line (pyproj.Geod, Karney 2013) equals the segment length.
    lengths = np.array([GEOD.geometry_length(g) for g in layer.geometry]) / 1e3
    np.testing.assert_allclose(lengths, layer["length_km"], rtol=1e-6)


def test_windows_and_warnings(written):
    path, _, _, windows = written
    layer = geopandas.read_file(path, layer="windows")
    assert len(layer) == len(windows)
    frame = windows.to_frame()
    assert set(frame.columns) <= set(layer.columns)
    assert list(layer["reasons"]) == [",".join(r) for r in windows.reasons()]
    assert layer["aliasing_risk"].sum() == windows.aliasing_risk.sum() > 0
    # Each window's line runs along its extent: geodesic length = end - start.
    lengths = np.array([GEOD.geometry_length(g) for g in layer.geometry])
    np.testing.assert_allclose(lengths, windows.end - windows.start, rtol=1e-4)
    warnings = geopandas.read_file(path, layer="warnings")
    assert len(warnings) == sum(len(r) for r in windows.reasons())
    assert set(warnings["reason"]) <= {"spacing", "rolloff", "near-nyquist"}
    assert (warnings.geom_type == "Point").all()
    assert warnings["message"].str.contains("km").all()


def test_written_through_the_output_folder_atomically(tmp_path):
    segments, audit, windows = build(bad_rows=False)
    folder = OutputFolder(tmp_path / "out", ["profiles.gpkg"])
    folder.with_writer("profiles.gpkg", lambda p: write_geopackage(
        p, survey=segments.survey, segments=segments, audit=audit, windows=windows))
    assert [p.name for p in (tmp_path / "out").iterdir()] == ["profiles.gpkg"]


def test_antimeridian_cut():
    # RFC 7946 section 3.1.9: cut at the meridian; parts meet at +180 / -180.
    path = np.column_stack([np.linspace(179.5, 180.6, 12), np.linspace(0.0, 1.0, 12)])
    east, west = split_at_antimeridian(path)
    assert east[-1, 0] == 180.0 and west[0, 0] == -180.0 and east[-1, 1] == west[0, 1]
    assert np.all(np.abs(np.concatenate([east, west])[:, 0]) <= 180.0)
    # A vertex exactly on the meridian, and a path crossing westwards.
    parts = split_at_antimeridian(np.array([[179.9, 0.0], [180.0, 1.0], [180.1, 2.0]]))
    assert [p.shape[0] for p in parts] == [2, 2]
    parts = split_at_antimeridian(np.array([[-179.9, 0.0], [-180.1, 1.0]]))
    assert parts[0][-1, 0] == -180.0 and parts[1][0, 0] == 180.0
    (whole,) = split_at_antimeridian(np.array([[10.0, 0.0], [11.0, 1.0]]))
    np.testing.assert_array_equal(whole, [[10.0, 0.0], [11.0, 1.0]])


def test_layers_across_the_antimeridian(tmp_path):
    segments, audit, windows = build(start=(179.7, -16.0), bad_rows=False)
    path = write_geopackage(tmp_path / "p.gpkg", survey=segments.survey, segments=segments, audit=audit,
                            windows=windows)
    layer = geopandas.read_file(path, layer="windows")
    bounds = layer.geometry.bounds
    assert (bounds["minx"] >= -180.0).all() and (bounds["maxx"] <= 180.0).all()
    assert (layer.geom_type == "MultiLineString").all()
    # Cut lines keep their geodesic length (pyproj.Geod).
    lengths = np.array([GEOD.geometry_length(g) for g in layer.geometry])
    np.testing.assert_allclose(lengths, windows.end - windows.start, rtol=1e-4)
    crossing = [g for g in layer.geometry if len(g.geoms) == 2]
    assert crossing


# --- the aliasing budget: window columns and the infill layer -------------------------------------


@pytest.fixture(scope="module")
def budgeted(tmp_path_factory):
    segments, windows, audit = infill_survey.build()
    path = tmp_path_factory.mktemp("gis") / "profiles.gpkg"
    write_geopackage(path, survey=segments.survey, segments=segments, audit=audit, windows=windows)
    return path, segments, windows, audit


def test_infill_layer_holds_the_coarse_stretch_through_its_stations(budgeted):
    path, segments, _, audit = budgeted
    assert [name for name, _ in pyogrio.list_layers(path)] == list(LAYERS)  # GDAL's driver
    layers = dict(pyogrio.list_layers(path))
    assert layers["infill"] == "LineString"
    infill = geopandas.read_file(path, layer="infill")
    assert CRS.from_user_input(infill.crs) == CRS.from_epsg(4326)
    assert list(infill.columns[:-1]) == list(INFILL_COLUMNS)
    # Construction (tests/infill_survey.py): K1 is logged every 3 km from 50 to 95 km.
    (row,) = infill.itertuples()
    assert (row.line, row.segment) == ("K1", 1)
    assert row.start_km == pytest.approx(infill_survey.COARSE_START_KM, abs=1e-6)
    assert row.end_km == pytest.approx(infill_survey.COARSE_END_KM, abs=1e-6)
    assert row.spacing_km == pytest.approx(infill_survey.COARSE_SPACING_KM, abs=1e-6)
    assert row.n_stations == 16  # 15 steps of 3 km
    # Shannon 1949: any spacing under the tolerance is finer than half the target (2 km).
    assert row.recommended_spacing_km < infill_survey.TARGET_KM / 2 < row.spacing_km
    assert row.recommendation_basis == "tolerance"
    assert np.isinf(row.alias_contamination)  # 3 km > 4 km / 2: the target is not resolved there
    assert "3 km" in row.message and "not resolved" in row.message
    # The line runs through the stations of the stretch (placed with pyproj.Geod.fwd) ...
    (segment,) = [s for s in segments if s.line == "K1"]
    inside = (segment.distance >= 50e3 - 1.0) & (segment.distance <= 95e3 + 1.0)
    np.testing.assert_allclose(np.array(row.geometry.coords), np.column_stack(
        [segment.lon[inside], segment.lat[inside]]), atol=1e-9)
    # ... and is 45 km long on the ellipsoid (pyproj.Geod.geometry_length, Karney 2013).
    assert GEOD.geometry_length(row.geometry) == pytest.approx(45e3, rel=1e-6)
    # The budget's own infill table is what the layer holds.
    assert len(audit.budget.infill()) == 1


def test_windows_layer_carries_the_budget_columns(budgeted):
    path, _, windows, _ = budgeted
    layer = geopandas.read_file(path, layer="windows")
    assert set(WINDOW_BUDGET_COLUMNS) <= set(layer.columns)
    assert len(layer) == len(windows)
    exceeds = layer["exceeds_recommendation"].astype(bool).to_numpy()
    recommended = layer["recommended_spacing_km"].to_numpy()
    np.testing.assert_array_equal(exceeds, layer["local_spacing_km"].to_numpy() > recommended)
    # The one window lying wholly in the 3 km stretch (construction) is coarser than recommended.
    inside = (layer["line"] == "K1") & (layer["start_km"] >= 50.0 - 1e-6) & (layer["end_km"] <= 95.0 + 1e-6)
    assert inside.sum() == 1 and exceeds[inside.to_numpy()].all()
    assert exceeds.sum() == 1
    assert np.isfinite(layer.loc[~inside, "alias_contamination"]).all()


def test_infill_layer_is_written_empty_when_nothing_is_coarse(tmp_path):
    segments, windows, audit = infill_survey.build(lines=["K2"])  # logged every 250 m throughout
    path = write_geopackage(tmp_path / "p.gpkg", survey=segments.survey, segments=segments, audit=audit,
                            windows=windows)
    layers = dict(pyogrio.list_layers(path))
    assert layers["infill"] == "LineString"
    assert pyogrio.read_info(path, layer="infill")["features"] == 0
    infill = geopandas.read_file(path, layer="infill")
    assert set(INFILL_COLUMNS) <= set(infill.columns)
    assert CRS.from_user_input(infill.crs) == CRS.from_epsg(4326)


def one_line_at_a_time(paths):
    """The readable reference: each path cut with split_at_antimeridian, one geometry each."""
    lines = []
    for path in paths:
        parts = split_at_antimeridian(path)
        if len(parts) == 1:
            lines.append(shapely.linestrings(parts[0]))
        else:
            lines.append(shapely.multilinestrings([shapely.linestrings(p) for p in parts]))
    return lines


#: Paths on one sheet (also moved by whole turns, with repeated vertices and a negative zero),
#: crossing eastwards and westwards, touching the meridian and crossing it more than once.
PATHS = [
    np.array([[10.0, 0.0], [11.0, 1.0]]),
    np.array([[-0.0, -0.0], [1.0, 2.0], [1.0, 2.0], [3.0, 4.0]]),
    np.array([[190.0, 0.0], [191.0, 1.0], [191.0, 1.0]]),
    np.array([[540.0, 0.0], [541.0, 1.0]]),
    np.array([[179.9, 0.0], [180.0, 1.0], [180.1, 2.0]]),
    np.array([[-179.9, 0.0], [-180.1, 1.0]]),
    np.array([[179.0, 0.0], [181.0, 1.0], [179.0, 2.0], [-200.0, 3.0]]),
    np.array([[170.0, 5.0], [180.0, 5.0]]),
]


def test_lines_built_at_once_equal_one_line_at_a_time():
    # Reference: the per-path construction above (RFC 7946 section 3.1.9 cutting); shapely's
    # equals_exact with tolerance 0 and the same WKB.
    for line, reference in zip(_lines(PATHS), one_line_at_a_time(PATHS), strict=True):
        assert line.geom_type == reference.geom_type
        assert line.equals_exact(reference, 0.0)
        assert shapely.to_wkb(line) == shapely.to_wkb(reference)


@pytest.mark.parametrize("paths", [PATHS, PATHS[:4], PATHS[4:], []], ids=["all", "one sheet", "cut", "none"])
def test_lines_as_wkb_equal_shapely_to_wkb(paths):
    # Reference: shapely.to_wkb (GEOS's writer, ISO flavour, as geopandas writes GeoParquet) of
    # the lines cut one at a time; geometry types as shapely names them; the bbox as geopandas'
    # GeoSeries.total_bounds, absent without a line (GeoParquet 1.1.0, "bbox").
    column = paths_wkb(paths)
    reference = one_line_at_a_time(paths)
    assert len(column) == len(paths)
    assert column.wkb.to_pylist() == [shapely.to_wkb(line, flavor="iso") for line in reference]
    assert column.geometry_types == tuple(sorted({line.geom_type for line in reference}))
    if paths:
        assert column.bbox == tuple(geopandas.GeoSeries(reference).total_bounds.tolist())
    else:
        assert column.bbox is None


def assert_same_for_readers(ours, reference) -> None:
    """geopandas and pyarrow read the same from two GeoParquet files: frames (dtypes, values,
    WKB of the geometries), CRS, attrs; the Arrow schema with field and pandas metadata and the
    values; the 'geo' metadata (GeoParquet 1.1.0) but for the 'creator' entry geopandas adds."""
    import json

    import pandas as pd
    import pyarrow.parquet as pq

    got, expected = geopandas.read_parquet(ours), geopandas.read_parquet(reference)
    pd.testing.assert_frame_equal(got, expected, check_exact=True)
    assert got.crs == expected.crs and got.crs.to_epsg() == 4326
    assert got.attrs == expected.attrs
    assert list(got.geometry.to_wkb()) == list(expected.geometry.to_wkb())
    table, reference_table = pq.read_table(ours), pq.read_table(reference)
    assert table.schema.equals(reference_table.schema, check_metadata=False)
    for field in table.schema:
        assert field.metadata == reference_table.schema.field(field.name).metadata, field.name
    assert table.equals(reference_table)
    metadata, reference_metadata = dict(table.schema.metadata), dict(reference_table.schema.metadata)
    geo, reference_geo = json.loads(metadata.pop(b"geo")), json.loads(reference_metadata.pop(b"geo"))
    assert reference_geo.pop("creator")["library"] == "geopandas"
    assert geo == reference_geo
    assert metadata == reference_metadata  # pandas (dtypes) and PANDAS_ATTRS


@pytest.mark.parametrize("rows", [3, 0])
def test_geoparquet_reads_back_as_geopandas_writes_it(tmp_path, rows):
    # Reference: geopandas.GeoDataFrame.to_parquet of the same columns cast with pandas' astype,
    # the lines built in shapely, the same attrs; with and without rows (GeoParquet 1.1.0:
    # no bbox and no geometry type without a geometry). Every dtype, with missing values.
    import pandas as pd

    kinds = {"name": "string", "count": "int64", "maybe": "Int64", "flag": "boolean", "value": "float64"}
    columns = {"name": ["a", None, ""], "count": np.array([1, 2, 3]), "maybe": [4, None, 6],
               "flag": [True, None, False], "value": [1.5, np.nan, None]}
    columns = {name: values[:rows] for name, values in columns.items()}
    paths = [PATHS[0], PATHS[4], PATHS[3]][:rows]
    attrs = {"profiles": {"file": "a.csv", "record": {"rows": [1, 2]}}}
    ours = write_geoparquet(tmp_path / "ours.parquet", geoparquet_table(columns, kinds, paths_wkb(paths),
                                                                        attrs=attrs))
    frame = pd.DataFrame(columns).astype(kinds)
    lines = geopandas.GeoSeries(np.array(_lines(paths), dtype=object), index=frame.index, crs="EPSG:4326")
    reference = geopandas.GeoDataFrame(frame, geometry=lines)
    reference.attrs.update(attrs)
    reference.to_parquet(tmp_path / "reference.parquet", index=False)
    assert_same_for_readers(ours, tmp_path / "reference.parquet")
    assert geopandas.read_parquet(ours).attrs == attrs


@pytest.mark.parametrize("start", [(12.0, 55.0), (179.7, -16.0)])
def test_window_layer_equals_one_line_at_a_time(start):
    # The windows layer against the per-window construction, on tracks that do not cross the
    # antimeridian and tracks that do (pyproj.Geod.fwd walks, tests/conftest.py).
    _, audit, windows = build(start=start, bad_rows=False)
    layer = window_layer(windows, audit.budget)
    paths = track_paths(windows.tracks, windows.track, windows.start, windows.end)
    reference = one_line_at_a_time(paths)
    assert len(layer) == len(reference) == len(windows)
    for line, expected in zip(layer.geometry, reference, strict=True):
        assert line.geom_type == expected.geom_type and line.equals_exact(expected, 0.0)
    kinds = {g.geom_type for g in reference}
    assert kinds == ({"LineString", "MultiLineString"} if start[0] > 179 else {"LineString"})
    # The WKB of the GeoParquet parts: shapely.to_wkb of the same reference lines.
    assert window_lines(windows).wkb.to_pylist() == [shapely.to_wkb(g, flavor="iso") for g in reference]
