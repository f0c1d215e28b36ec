"""``profiles report`` on the demo survey: sections, self-containment, summary.json, outputs.

Outside references named beside the checks:
- demo_data/README.md: the true values the demo survey was built from (row accounting, the
  fabric's true wavelength and strike, the gap, the coarse stretch, the density contrast),
  written by the generator from its model, not by the code under test;
- README.md, "Cautions": the cautions the report must carry word for word;
- the PNG specification (W3C/ISO 15948): signature and IHDR chunk, for the embedded images;
- pyogrio (GDAL) reading the GeoPackage back;
- the sampling theorem (Shannon 1949) and the construction of tests/infill_survey.py: its 3 km
  stretch is more than half the 4 km target, so it must be an infill candidate.
"""

from __future__ import annotations

import base64
import html.parser
import json
import re
import struct
import sys
from pathlib import Path

import infill_survey
import pytest

from profiles.cli import main
from profiles.report.build import TABLES
from profiles.report.summary import FIELD_KEYS, SUMMARY_KEYS

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "demo_data"
SECTIONS = ("summary", "rows", "audit", "map", "spectra", "comparison", "coherence", "warnings",
            "methods", "config", "cautions")


class Page(html.parser.HTMLParser):
    """Tags with their attributes, section ids in order, and the visible text."""

    def __init__(self, text: str):
        super().__init__()
        self.tags: list[tuple[str, dict]] = []
        self.sections: list[str] = []
        self.text_parts: list[str] = []
        self._skip = 0
        self.feed(text)

    def handle_starttag(self, tag, attrs):
        attributes = dict(attrs)
        self.tags.append((tag, attributes))
        if tag == "section":
            self.sections.append(attributes.get("id"))
        if tag in ("style", "script"):
            self._skip += 1

    def handle_endtag(self, tag):
        if tag in ("style", "script"):
            self._skip -= 1

    def handle_data(self, data):
        if not self._skip:
            self.text_parts.append(data)

    @property
    def text(self) -> str:
        return re.sub(r"\s+", " ", " ".join(self.text_parts))


def png_size(data: bytes) -> tuple[int, int]:
    """Width and height from a PNG's IHDR chunk (PNG specification, section 11.2.2)."""
    assert data[:8] == b"\x89PNG\r\n\x1a\n"
    assert data[12:16] == b"IHDR"
    return struct.unpack(">II", data[16:24])


def readme_cautions() -> list[str]:
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    block = text.split("## Cautions", 1)[1].split("\n## ", 1)[0]
    items = [re.sub(r"\s+", " ", item).strip() for item in block.split("\n- ")]
    return [item.lstrip("- ").strip() for item in items if item.strip()]


def demo_truth() -> dict:
    """Values the demo README states (tables of the generator)."""
    text = (DEMO / "README.md").read_text(encoding="utf-8")
    rows = re.search(r"\| data_rows \| used \| merged \| dropped \|\n\|[-|]+\|\n"
                     r"\| (\d+) \| (\d+) \| (\d+) \| (\d+) \|", text)
    wavelength = re.search(r"fabric wavelength L \(true, 2-D\) \| ([\d.]+) km", text)
    strike = re.search(r"fabric strike \(crests\) \| (\d+) deg", text)
    density = re.search(r"\| drho \| (\d+) kg/m\^3", text)
    gap = re.search(r"a gap of ([\d.]+) km", text)
    return {
        "rows": tuple(int(v) for v in rows.groups()),
        "wavelength_km": float(wavelength.group(1)),
        "strike_deg": float(strike.group(1)),
        "density_kg_m3": float(density.group(1)),
        "gap_km": float(gap.group(1)),
    }


@pytest.fixture(scope="module")
def demo(tmp_path_factory):
    out = tmp_path_factory.mktemp("report") / "out"
    status = main(["report", "--config", str(DEMO / "survey.toml"), "--out", str(out), "--quiet"])
    assert status == 0
    return out


@pytest.fixture(scope="module")
def page(demo):
    return Page((demo / "report.html").read_text(encoding="utf-8"))


@pytest.fixture(scope="module")
def summary(demo):
    return json.loads((demo / "summary.json").read_text(encoding="utf-8"))


def test_every_section_in_order(page):
    assert page.sections[0] == "summary"
    assert page.sections[-1] == "cautions"
    for key in SECTIONS:
        assert key in page.sections, key
    assert len(set(page.sections)) == len(page.sections)


def test_cautions_word_for_word_from_the_readme(page):
    cautions = readme_cautions()
    assert len(cautions) == 4
    for caution in cautions:
        assert caution in page.text, caution


def test_report_is_one_self_contained_file(demo, page):
    assert not [attrs for tag, attrs in page.tags if tag == "script"]
    assert [tag for tag, _ in page.tags].count("style") == 1
    images = [attrs for tag, attrs in page.tags if tag == "img"]
    assert len(images) >= 10  # 3 maps, 3 spectra, 3 fabric fits, 1 coherence
    for attrs in images:
        prefix = "data:image/png;base64,"
        assert attrs["src"].startswith(prefix)
        width, height = png_size(base64.b64decode(attrs["src"][len(prefix):]))
        assert width > 300 and height > 200
        assert attrs.get("alt")
    for _, attrs in page.tags:
        for name in ("src", "href"):
            value = attrs.get(name)
            if value is not None:
                assert value.startswith(("data:", "#")), value
    figures = sorted(p.name for p in (demo / "figures").glob("*.png"))
    assert len(figures) == len(images)


def test_summary_first_says_what_was_found(page):
    summary_text = page.text.split("Every data row of the input ends", 1)[0]  # the next section
    for words in ("What was found", "What needs attention", "Fabric fit", "density contrast",
                  "L08 from 100.0 to 139.9 km", "aliasing risk"):
        assert words in summary_text, words


def test_summary_json_has_the_documented_keys(summary):
    assert tuple(summary) == SUMMARY_KEYS
    assert set(summary["fields"]) == {"depth_m", "gravity_mgal", "magnetic_nt"}
    for entry in summary["fields"].values():
        assert tuple(entry) == FIELD_KEYS
    guide = (ROOT / "docs" / "user-guide.md").read_text(encoding="utf-8")
    for key in (*SUMMARY_KEYS, *FIELD_KEYS):
        assert f"`{key}`" in guide, f"summary.json key {key} is not documented in docs/user-guide.md"


def test_summary_against_the_demo_truth(summary):
    truth = demo_truth()
    rows = summary["rows"]
    assert (rows["read"], rows["used"], rows["merged"], sum(rows["dropped"].values())) == truth["rows"]
    # The fabric: true wavelength 10 km striking 020 (demo README), within three standard
    # errors of the fit or 5 % / 3 degrees, whichever is wider.
    fabric = summary["fields"]["depth_m"]["fabric"]
    assert abs(fabric["wavelength_km"] - truth["wavelength_km"]) <= max(3 * fabric["wavelength_err_km"], 0.5)
    assert abs(fabric["strike_deg"] - truth["strike_deg"]) <= max(3 * fabric["strike_err_deg"], 3.0)
    # The coarse stretch of L08 (demo README: 100 to 140 km, steps of 5.5 to 5.9 km).
    stretch = summary["fields"]["depth_m"]["risky_stretches"]
    assert [(s["line"], round(s["start_km"]), round(s["end_km"])) for s in stretch] == [("L08", 100, 140)]
    assert summary["fields"]["depth_m"]["segments_at_aliasing_risk"] == ["L08/1"]
    # The gap of L03 is named with its length.
    assert any(f"gap of {truth['gap_km']:.2f} km" in sentence for sentence in summary["attention"])
    # Gravity against depth: coherent around the fabric; the load model's density contrast
    # within three standard errors of the true 1670 kg/m^3 (oblique lines bias it low).
    coherence = summary["coherence"]
    assert any(lo <= 10.2 and hi >= 9.8 for lo, hi in coherence["coherent_bands_km"])
    error = coherence["density_contrast_err_kg_m3"]
    assert abs(coherence["density_contrast_kg_m3"] - truth["density_kg_m3"]) <= 3 * error


def test_every_warning_is_in_the_report_with_its_location(summary, page):
    assert summary["warnings"]
    for warning in summary["warnings"]:
        assert re.sub(r"\s+", " ", warning["message"]) in page.text
        if warning["where"]:
            assert warning["where"] in page.text
    spacing = [w for w in summary["warnings"] if "stretches have station spacing" in w["message"]]
    assert [w["where"] for w in spacing] == ["L08/1 100.0–139.9 km"] * 3
    infill = [w for w in summary["warnings"] if "more coarsely than recommended" in w["message"]]
    for warning in infill:  # the aliasing budget names its infill stretches (only L08 is coarse)
        assert warning["where"].startswith("L08/1 "), warning


def test_tables_and_geopackage_beside_the_report(demo, summary):
    import pandas as pd
    import pyogrio

    for name in TABLES:
        assert (demo / name).is_file(), name
        assert name in summary["outputs"]
    segments = pd.read_csv(demo / "segments.csv")
    assert set(segments["field"]) == {"depth_m", "gravity_mgal", "magnetic_nt"}
    assert len(segments) == 3 * 10
    stations = pd.read_csv(demo / "stations.csv")
    assert len(stations) == demo_truth()["rows"][0]
    layers = dict(pyogrio.list_layers(demo / "profiles.gpkg"))
    assert layers["stations"] == "Point"
    for field in ("depth_m", "gravity_mgal", "magnetic_nt"):
        assert layers[f"segments_{field}"] == "LineString"
        assert f"windows_{field}" in layers and f"warnings_{field}" in layers
        assert layers[f"infill_{field}"] == "LineString"  # every field has a target in survey.toml
    assert pyogrio.read_info(demo / "profiles.gpkg", layer="stations")["features"] == len(stations)
    from profiles.spacing import WINDOW_BUDGET_COLUMNS

    windows = pd.read_csv(demo / "windows.csv")
    assert set(WINDOW_BUDGET_COLUMNS) <= set(windows.columns)
    # demo README: L08's steps of 5.5-5.9 km from 100 to 140 km exceed half of the 4 km target
    # of depth_m (Shannon) and half the wavelength where the depth signal meets its 10 m noise
    # (shorter than the 10 km fabric of 200 m amplitude), the most any recommendation can be:
    # the window inside that stretch is coarser than recommended.
    inside = windows[(windows["field"] == "depth_m") & (windows["line"] == "L08")
                     & (windows["start_km"] >= 99.0) & (windows["end_km"] <= 141.0)]
    assert len(inside) and inside["exceeds_recommendation"].astype(str).eq("True").all()


def test_infill_stretch_in_the_report_its_map_and_geopackage(tmp_path):
    import matplotlib.image
    import pyogrio

    survey = infill_survey.write(tmp_path / "coarse.csv")
    out = tmp_path / "out"
    assert main(["report", survey, "--shortest-wavelength", "4km", "--out", str(out), "--quiet"]) == 0
    page = Page((out / "report.html").read_text(encoding="utf-8"))
    audit = page.text.split("Breaks (gaps and sharp turns)", 1)[0]
    # Construction: K1 every 3 km from 50 to 95 km, coarser than any recommendation at 4 km.
    assert "Infill candidates" in audit and "depth_m K1 1 50.000 95.000" in audit
    assert "Windows spaced more coarsely than recommended" in audit
    assert "coarser_than_recommended" in audit.replace("_ ", "_")
    summary = json.loads((out / "summary.json").read_text())
    (stretch,) = summary["fields"]["depth_m"]["infill"]
    assert (stretch["line"], round(stretch["start_km"]), round(stretch["end_km"])) == ("K1", 50, 95)
    assert any("Infill candidate: line K1 from 50.0 to 95.0 km" in s for s in summary["attention"])
    layers = dict(pyogrio.list_layers(out / "profiles.gpkg"))
    assert layers["infill_depth_m"] == "LineString"
    assert pyogrio.read_info(out / "profiles.gpkg", layer="infill_depth_m")["features"] == 1
    # The report's map draws the stretch on the halo (its colour, Porter-Duff "over" on white).
    image = matplotlib.image.imread(out / "figures" / "map_depth_m.png")
    assert infill_survey.halo_pixels(image) > 1000
    assert "infill stretch(es) spaced more coarsely than recommended" in page.text


def test_configuration_as_run_is_written_and_reads_back(demo):
    from profiles.config import load_config

    again = load_config(demo / "config.toml")
    original = load_config(DEMO / "survey.toml")
    assert again.inputs == original.inputs
    assert again.fields == original.fields
    assert (again.window, again.step) == (40000.0, 10000.0)
    assert again.coherence.load_depth is not None  # the run's mean depth, so reruns agree


def test_refuses_to_overwrite_without_the_option(demo, capsys):
    before = (demo / "report.html").read_bytes()
    status = main(["report", "--config", str(DEMO / "survey.toml"), "--out", str(demo)])
    captured = capsys.readouterr()
    assert status == 2
    assert "exists; use --overwrite" in captured.err and captured.err.count("\n") == 1
    assert (demo / "report.html").read_bytes() == before


def small_run_arguments(out: Path) -> list[str]:
    return ["report", str(DEMO / "survey.csv"), "--line", "L05", "--line", "L06", "--line", "L08",
            "--shortest-wavelength", "4km", "--out", str(out)]


def test_without_configuration_json_and_no_progress_off_a_terminal(tmp_path, capsys):
    out = tmp_path / "small"
    assert main([*small_run_arguments(out), "--json"]) == 0
    captured = capsys.readouterr()
    document = json.loads(captured.out)  # stdout holds one JSON document and nothing else
    assert document == json.loads((out / "summary.json").read_text())
    assert document["lines"] == ["L05", "L06", "L08"]
    assert set(document["fields"]) == {"depth_m", "gravity_mgal", "magnetic_nt"}
    # Three lines give too few independent estimates for a coherence (at least 8, see
    # profiles.cross): the report says so instead of failing.
    assert document["coherence"] is None
    assert any(w["step"] == "coherence" and "independent estimates" in w["message"]
               for w in document["warnings"])
    # stderr is not a terminal here: warnings only, no progress bar.
    assert "\r" not in captured.err
    assert all(line.startswith("profiles: warning: ") for line in captured.err.splitlines())
    # A second run (of one line, to be quick) replaces the outputs with --overwrite.
    again = ["report", str(DEMO / "survey.csv"), "--line", "L05", "--shortest-wavelength", "4km",
             "--out", str(out), "--overwrite", "--quiet"]
    assert main(again) == 0
    assert capsys.readouterr().err == ""
    assert json.loads((out / "summary.json").read_text())["lines"] == ["L05"]


def test_source_depth_where_asked(tmp_path):
    text = (DEMO / "survey.toml").read_text(encoding="utf-8")
    text = text.replace('inputs = ["survey.csv"]', f'inputs = ["{(DEMO / "survey.csv").as_posix()}"]\n'
                        'lines = ["L05", "L06"]')
    text = text.replace('anomaly = "magnetic"', 'anomaly = "magnetic"\nsource_depth = true')
    config = tmp_path / "survey.toml"
    config.write_text(text, encoding="utf-8")
    out = tmp_path / "out"
    assert main(["report", "--config", str(config), "--out", str(out), "--quiet"]) == 0
    page = Page((out / "report.html").read_text(encoding="utf-8"))
    assert "source-depth" in page.sections
    assert "Spector and Grant" in page.text
    summary = json.loads((out / "summary.json").read_text())
    depths = summary["fields"]["magnetic_nt"]["source_depth"]
    assert [(d["line"], d["segment"]) for d in depths] == [("L05", 1), ("L06", 1)]
    assert summary["fields"]["depth_m"]["source_depth"] is None


def test_progress_bar_only_on_a_terminal(monkeypatch):
    import io

    from profiles.progress import Steps, bars_wanted, progress

    class Terminal(io.StringIO):
        def isatty(self):
            return True

    terminal = Terminal()
    monkeypatch.setattr(sys, "stderr", terminal)
    assert bars_wanted() and not bars_wanted(quiet=True)
    assert list(progress(range(3), description="spectra of depth_m")) == [0, 1, 2]
    with Steps(2, description="report") as steps:
        steps.advance("reading")
        steps.advance("segments")
    assert "spectra of depth_m" in terminal.getvalue() and "report" in terminal.getvalue()

    quiet = Terminal()
    monkeypatch.setattr(sys, "stderr", quiet)
    assert list(progress(range(3), description="spectra", quiet=True)) == [0, 1, 2]
    assert quiet.getvalue() == ""

    pipe = io.StringIO()  # not a terminal
    monkeypatch.setattr(sys, "stderr", pipe)
    assert not bars_wanted()
    assert list(progress(range(3), description="spectra")) == [0, 1, 2]
    assert pipe.getvalue() == ""


def test_demo_refuses_before_writing_anything(tmp_path, capsys):
    report = tmp_path / "report"
    report.mkdir()
    (report / "report.html").write_text("an earlier report")
    assert main(["demo", "--out", str(tmp_path)]) == 2
    assert "report.html: exists; use --overwrite" in capsys.readouterr().err
    assert not (tmp_path / "survey").exists()
    assert (report / "report.html").read_text() == "an earlier report"
