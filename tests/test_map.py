"""The wavelength map and the ``profiles map`` command.

Outside references named beside the checks:
- matplotlib.image.imread (matplotlib's PNG decoder) for the rendered file;
- pyproj.Transformer for the projected track coordinates the frame must hold;
- the demo survey's true values (demo_data/README.md): the coarse stretch of L08 from 100 to
  140 km, station steps of 5.5 to 5.9 km there, the fabric aliased to about 13.26 km;
- the sampling theorem (Shannon 1949): at a spacing of half the target wavelength or more the
  aliased power there is at least the true power, so no recommendation on the tolerance basis
  is that coarse; hence the 3 km stretch of tests/infill_survey.py is coarser than recommended
  at a 4 km target;
- the "over" operator of Porter and Duff (1984) for the colour of the translucent halo on white.
"""

from __future__ import annotations

import io
import json
import warnings
from pathlib import Path

import infill_survey
import matplotlib.colors
import matplotlib.image
import numpy as np
import pandas as pd
import pytest
from conftest import walk
from pyproj import Transformer

from profiles.cli import main
from profiles.errors import InputError
from profiles.figures import style
from profiles.figures.map import draw_map, map_crs_for, render, survey_centre
from profiles.geometry import build_segments
from profiles.infill import INFILL_COLUMNS, infill_stretches
from profiles.resample import resample
from profiles.spacing import WINDOW_BUDGET_COLUMNS
from profiles.survey import Survey
from profiles.windows import along_track_windows, track_paths

DEMO = Path(__file__).resolve().parents[1] / "demo_data" / "survey.csv"


def small_survey(start=(-30.0, -20.0)):
    """Three lines: a clean one, one with a coarse stretch, one with a short piece after a gap."""
    lines = {
        "A1": walk(*start, [(90, 320, 250.0)]),
        "B2": walk(start[0], start[1] + 0.3, [(80, 150, 250.0), (80, 8, 2500.0), (80, 150, 250.0)]),
        "C3": walk(start[0] + 0.2, start[1] - 0.4, [(20, 250, 250.0), (20, 1, 9000.0), (20, 30, 250.0)]),
    }
    names, lons, lats, values = [], [], [], []
    for name, (lon, lat) in lines.items():
        distance = 250.0 * np.arange(lon.size)
        names += [name] * lon.size
        lons.append(lon)
        lats.append(lat)
        wavelength = {"A1": 6e3, "B2": 9e3, "C3": 3.5e3}[name]
        noise = np.random.default_rng(1).normal(0, 5, lon.size)
        values.append(100 * np.cos(2 * np.pi * distance / wavelength) + noise)
    survey = Survey.from_arrays(line=np.array(names), lon=np.concatenate(lons), lat=np.concatenate(lats),
                                values={"depth_m": np.concatenate(values)})
    return build_segments(survey)


@pytest.fixture(scope="module")
def table():
    segments = small_survey()
    tracks = [resample(segment, "depth_m") for segment in segments]
    return along_track_windows(tracks, window=15e3, step=5e3, shortest_wavelength=3e3)


def test_png_decodes_with_its_size_and_coloured_track_pixels(table):
    png = render(draw_map(table, field="depth_m"), "png")
    image = matplotlib.image.imread(io.BytesIO(png), format="png")  # matplotlib's PNG decoder
    height, width = image.shape[:2]
    assert (width, height) == (round(style.FIGSIZE[0] * style.DPI), round(style.FIGSIZE[1] * style.DPI))
    rgb = image[..., :3]
    coloured = (np.ptp(rgb, axis=-1) > 0.15).sum()  # not grey: the channels differ
    assert coloured > 2000


def test_svg_is_written_and_reproducible(table):
    first = render(draw_map(table, field="depth_m"), "svg")
    second = render(draw_map(table, field="depth_m"), "svg")
    assert first.lstrip().startswith(b"<?xml") and b"<svg" in first[:2000]
    assert first == second


def test_renders_with_warnings_as_errors(table):
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        figure = draw_map(table, field="depth_m", title="test")
        render(figure, "png")
        render(figure, "svg")


def test_frame_holds_every_track_and_the_colour_bar_spans_the_wavelengths(table):
    # Reference: the tracks projected independently with pyproj.Transformer.
    figure = draw_map(table, field="depth_m")
    axes = figure.axes[0]
    crs = map_crs_for(np.concatenate([t.lon for t in table.tracks]),
                      np.concatenate([t.lat for t in table.tracks]))
    forward = Transformer.from_crs("EPSG:4326", crs, always_xy=True)
    x, y = forward.transform(np.concatenate([t.lon for t in table.tracks]),
                             np.concatenate([t.lat for t in table.tracks]))
    (x0, x1), (y0, y1) = axes.get_xlim(), axes.get_ylim()
    assert x0 < x.min() and x.max() < x1 and y0 < y.min() and y.max() < y1
    assert (x1 - x0) < 1.5 * (x.max() - x.min()) or (y1 - y0) < 1.5 * (y.max() - y.min())
    (coloured,) = [c for c in axes.collections if c.get_array() is not None]
    assert coloured.get_gid() == "track"
    km = table.dominant_wavelength / 1e3
    assert coloured.norm.vmin == pytest.approx(km.min()) and coloured.norm.vmax == pytest.approx(km.max())
    assert len(coloured.get_segments()) == len(table)
    colour_bar = figure.axes[1]
    assert colour_bar.get_ylabel() == "dominant wavelength (km)"
    texts = " ".join(t.get_text() for t in figure.texts)
    assert "aliasing audit, not for navigation" in texts.lower()
    assert "window 15 km" in texts and "step 5 km" in texts and "3 km" in texts and "0.05" in texts
    labels = [t.get_text() for t in axes.get_xticklabels()]
    assert labels and all(label.endswith(("W", "E")) for label in labels)
    assert {t.get_text() for t in axes.texts} >= {"A1", "B2", "C3", "N"}


def test_risky_windows_are_cased_and_insignificant_ones_faded(table):
    figure = draw_map(table, field="depth_m")
    axes = figure.axes[0]
    risky = int(table.aliasing_risk.sum())
    assert risky > 0
    casing = {c.get_gid(): c for c in axes.collections}
    # the black line and the white dashes over it, one piece per window at risk
    assert len(casing["risk-casing"].get_segments()) == len(casing["risk-dashes"].get_segments()) == risky
    coloured = next(c for c in axes.collections if c.get_array() is not None)
    alpha = np.asarray(coloured.get_alpha())
    np.testing.assert_array_equal(alpha < 1, ~table.red_noise_significant)


def test_nothing_is_drawn_across_a_gap(table):
    # C3 has a 9 km gap: its two segments are separate paths, and the short one has no window.
    figure = draw_map(table, field="depth_m")
    axes = figure.axes[0]
    (bare,) = [c for c in axes.collections if c.get_gid() == "no-window"]
    assert len(bare.get_segments()) == 1  # the short segment after the gap, in grey
    gap_start = table.tracks[-2].distance[-1]
    assert not np.any((table.start < gap_start + 9000.0) & (table.end > gap_start) & (table.line == "C3"))


def test_map_crs_option():
    segments = small_survey()
    tracks = [resample(segment, "depth_m") for segment in segments]
    windows = along_track_windows(tracks, window=15e3, step=5e3)
    figure = draw_map(windows, field="depth_m", map_crs="EPSG:32725")  # UTM 25S, metres
    assert "UTM zone 25S" in " ".join(t.get_text() for t in figure.texts)
    with pytest.raises(InputError, match="projected CRS in metres"):
        draw_map(windows, field="depth_m", map_crs="EPSG:4326")
    with pytest.raises(InputError, match="unknown CRS"):
        draw_map(windows, field="depth_m", map_crs="EPSG:99999999")


def test_survey_across_the_antimeridian_is_drawn_in_one_piece():
    # pitfalls M2: no plotted step longer than 5 x the median step for a track crossing 180.
    segments = small_survey(start=(179.6, -20.0))
    tracks = [resample(segment, "depth_m") for segment in segments]
    windows = along_track_windows(tracks, window=15e3, step=5e3)
    lon0, _ = survey_centre(np.concatenate([t.lon for t in tracks]), np.concatenate([t.lat for t in tracks]))
    assert abs(((lon0 - 180.0) + 180.0) % 360.0 - 180.0) < 1.0
    figure = draw_map(windows, field="depth_m")
    coloured = next(c for c in figure.axes[0].collections if c.get_array() is not None)
    steps = np.concatenate([np.hypot(*np.diff(s, axis=0).T) for s in coloured.get_segments()])
    assert steps.max() < 5 * np.median(steps)
    paths = track_paths(windows.tracks, windows.track, windows.start, windows.end)
    assert any(p[:, 0].max() > 180.0 for p in paths)  # the data really cross


# --- infill stretches on the map ----------------------------------------------------------------


@pytest.fixture(scope="module")
def budgeted():
    segments, windows, audit = infill_survey.build()
    return windows, infill_stretches(audit.budget, segments)


def test_infill_is_drawn_on_a_grey_halo_with_end_ticks(budgeted):
    windows, infill = budgeted
    assert len(infill) == 1
    figure = draw_map(windows, field="depth_m", infill=infill)
    axes = figure.axes[0]
    (halo,) = [c for c in axes.collections if c.get_gid() == "infill-halo"]
    (path,) = halo.get_segments()
    assert len(path) == 16  # through the 16 stations of the 3 km stretch (construction)
    ticks = [line for line in axes.lines if line.get_gid() == "infill-tick"]
    assert len(ticks) == 2
    # The halo lies under the track and its casing; the ticks over them.
    track = next(c for c in axes.collections if c.get_gid() == "track")
    assert halo.get_zorder() < track.get_zorder() < ticks[0].get_zorder()
    labels = [t.get_text() for t in figure.legends[0].get_texts()]
    assert "infill: spacing coarser than recommended" in labels
    caption = " ".join(t.get_text() for t in figure.texts)
    assert "alias tolerance 0.01" in caption and "at 4 km" in caption and "infill stretches" in caption


def test_infill_halo_pixels_in_the_png(budgeted):
    windows, infill = budgeted
    with_halo = matplotlib.image.imread(io.BytesIO(render(draw_map(windows, field="depth_m", infill=infill),
                                                          "png")), format="png")
    without = matplotlib.image.imread(io.BytesIO(render(draw_map(windows, field="depth_m"), "png")),
                                      format="png")
    assert with_halo.shape == without.shape
    # Porter and Duff's "over": the halo's grey at its opacity on white (tests/infill_survey.py).
    assert infill_survey.halo_pixels(with_halo) - infill_survey.halo_pixels(without) > 1000
    # In greyscale the halo still differs from the white ground and the graticule.
    colour = np.array(matplotlib.colors.to_rgb(style.INFILL_COLOUR))
    grey = style.INFILL_ALPHA * colour + 1.0 - style.INFILL_ALPHA
    graticule = np.array(matplotlib.colors.to_rgb(style.GRATICULE_COLOUR))
    assert abs(grey.mean() - graticule.mean()) > 0.05 and 1.0 - grey.mean() > 0.2


def test_caption_states_the_tolerance_even_without_infill():
    segments, windows, audit = infill_survey.build(lines=["K2"])
    infill = infill_stretches(audit.budget, segments)
    assert len(infill) == 0
    figure = draw_map(windows, field="depth_m", infill=infill)
    caption = " ".join(t.get_text() for t in figure.texts)
    assert "alias tolerance 0.01" in caption and "no infill stretch" in caption
    assert not [c for c in figure.axes[0].collections if c.get_gid() == "infill-halo"]
    labels = [t.get_text() for t in figure.legends[0].get_texts()]
    assert "infill: spacing coarser than recommended" not in labels


# --- the command --------------------------------------------------------------------------------


def test_map_command_budget_columns_and_infill_layer(capsys, tmp_path):
    import pyogrio

    survey = infill_survey.write(tmp_path / "coarse.csv")
    out = tmp_path / "map"
    status = main(["map", survey, "--field", "depth_m", "--window", "40km", "--step", "10km",
                   "--shortest-wavelength", "4km", "--alias-tolerance", "0.05", "--json", "--out", str(out)])
    stdout, _ = capsys.readouterr()
    assert status == 0
    document = json.loads(stdout)
    assert document["budget"] == {"field": "depth_m", "model": "power-law", "alias_tolerance": 0.05,
                                  "shortest_wavelength_km": 4.0}
    assert all(set(WINDOW_BUDGET_COLUMNS) <= set(w) for w in document["windows"])
    # Construction: K1 every 3 km from 50 to 95 km; Shannon: coarser than any recommendation at 4 km.
    (stretch,) = document["infill"]
    assert set(stretch) == set(INFILL_COLUMNS)
    assert (stretch["line"], round(stretch["start_km"]), round(stretch["end_km"])) == ("K1", 50, 95)
    assert stretch["recommended_spacing_km"] < 2.0 < stretch["spacing_km"]
    assert stretch["alias_contamination"] is None  # unbounded (not resolved), null in JSON
    assert any("more coarsely than recommended" in w for w in document["warnings"])
    table = pd.read_csv(out / "windows.csv")
    assert set(WINDOW_BUDGET_COLUMNS) <= set(table.columns)
    coarse = table[table["exceeds_recommendation"].astype(str) == "True"]
    assert len(coarse) == 1 and coarse["local_spacing_km"].iloc[0] == pytest.approx(3.0)
    layers = dict(pyogrio.list_layers(out / "profiles.gpkg"))
    assert layers["infill"] == "LineString"
    image = matplotlib.image.imread(out / "map.png")
    assert infill_survey.halo_pixels(image) > 1000
    # Without a target there is no budget: no columns, no infill layer.
    status = main(["map", survey, "--field", "depth_m", "--window", "40km", "--json", "--out",
                   str(out), "--overwrite"])
    document = json.loads(capsys.readouterr()[0])
    assert status == 0 and document["budget"] is None and document["infill"] is None
    assert not set(WINDOW_BUDGET_COLUMNS) & set(document["windows"][0])
    assert "infill" not in dict(pyogrio.list_layers(out / "profiles.gpkg"))




def test_map_command_on_the_demo_survey(capsys, tmp_path):
    out = tmp_path / "map"
    status = main(["map", str(DEMO), "--field", "depth_m", "--window", "40km", "--step", "10km",
                   "--shortest-wavelength", "4km", "--json", "--out", str(out)])
    stdout, _ = capsys.readouterr()
    assert status == 0
    document = json.loads(stdout)
    assert document["rows"] == {"read": 4960, "used": 4956, "merged": 1,
                                "dropped": {"coordinate out of range": 1, "missing coordinate": 2}}
    keys = {"line", "segment", "center_km", "lon", "lat", "dominant_wavelength_km", "variance_fraction",
            "fisher_p_value", "red_noise_significant", "local_spacing_km", "local_spacing_max_km",
            "local_nyquist_km", "aliasing_risk", "reasons"}
    windows = document["windows"]
    assert windows and keys <= set(windows[0])
    # demo_data/README.md: L08 keeps 8 stations from 100.012 to 139.930 km (steps 5.5-5.9 km).
    for window in windows:
        touches = window["line"] == "L08" and window["end_km"] > 100.012 and window["start_km"] < 139.930
        assert ("spacing" in window["reasons"]) == touches, window
        if touches:
            assert 5.5 < window["local_spacing_max_km"] < 5.94
    # The window inside the stretch sees the fabric folded to about 13.26 km (README).
    inside = [w for w in windows if w["line"] == "L08" and w["start_km"] >= 99.0 and w["end_km"] <= 141.0]
    assert inside and all({"rolloff", "near-nyquist"} <= set(w["reasons"]) for w in inside)
    assert all(abs(1 / w["dominant_wavelength_km"] - 1 / 13.26) < 1 / 40.0 for w in inside)
    # Its 5.7 km steps are more than half the 4 km target, so 4 km is not resolved there
    # (Shannon: contamination unbounded, null in JSON). They are coarser than recommended: a
    # recommendation is at most the larger of 2 km and half the wavelength where the signal meets
    # the station noise, which is shorter than the 10 km fabric standing 20 times above the 10 m
    # noise (200 m amplitude; demo README), so under 5 km.
    assert document["budget"]["shortest_wavelength_km"] == 4.0
    assert all(w["exceeds_recommendation"] and w["alias_contamination"] is None for w in inside)
    assert all(set(WINDOW_BUDGET_COLUMNS) <= set(w) for w in windows)
    assert any("at aliasing risk" in w for w in document["warnings"])
    for name in ("map.png", "map.svg", "profiles.gpkg", "windows.csv"):
        assert (out / name).stat().st_size > 0
    assert not list(out.glob(".*"))  # no temporary file left behind
    status = main(["map", str(DEMO), "--field", "depth_m", "--out", str(out), "--quiet"])
    _, stderr = capsys.readouterr()
    assert status == 2 and "exists; use --overwrite" in stderr


def test_map_command_bad_input_gives_one_line(capsys, tmp_path):
    for argv in (["--window", "40"], ["--alpha", "2"], ["--near-nyquist-factor", "0.5"],
                 ["--alias-tolerance", "1.5"],
                 ["--map-crs", "EPSG:4326", "--out", str(tmp_path / "x")]):
        try:
            status = main(["map", str(DEMO), "--field", "depth_m", *argv])
        except SystemExit as exit_:  # argparse refuses bad option values before the command runs
            status = exit_.code
        _, stderr = capsys.readouterr()
        lines = [line for line in stderr.splitlines() if line.strip() and "warning" not in line]
        assert status == 2 and len(lines) == 1 and lines[0].startswith("profiles: error: "), stderr
