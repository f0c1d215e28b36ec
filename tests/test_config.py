"""The survey configuration (profiles.config): the demo's file, round trips, and one-line errors.

The file format is TOML v1.0.0 (toml.io), read with the standard library's tomllib; the
expected values below are those written in demo_data/survey.toml, with lengths converted to
metres by the defined values of the units (1 km = 1000 m; common practice).
"""

from __future__ import annotations

import tomllib
from dataclasses import replace
from pathlib import Path

import pytest

from profiles.cli import main
from profiles.config import config_for_fields, load_config, parse_config
from profiles.errors import InputError

DEMO = Path(__file__).resolve().parents[1] / "demo_data"


def test_demo_configuration_reads_as_written():
    config = load_config(DEMO / "survey.toml")
    assert config.name == "MQ26-03 demo survey"
    assert config.inputs == (DEMO.resolve() / "survey.csv",)
    assert config.columns == {"line": "line", "time": "time", "lon": "lon", "lat": "lat"}
    assert config.field_names == ("depth_m", "gravity_mgal", "magnetic_nt")
    depth, gravity, magnetic = config.fields
    assert (depth.kind, depth.positive_down, depth.shortest_wavelength) == ("bathymetry", True, 4000.0)
    assert (gravity.kind, gravity.anomaly) == ("potential_field", "free_air")
    assert gravity.shortest_wavelength == 8000.0
    assert (magnetic.anomaly, magnetic.units, magnetic.shortest_wavelength) == ("magnetic", "nT", 10000.0)
    assert (config.window, config.step, config.alpha) == (40000.0, 10000.0, 0.05)
    assert config.spectrum_method == "multitaper"
    pair = config.coherence
    assert (pair.input, pair.output, pair.method, pair.block) == ("depth_m", "gravity_mgal", "welch", 40000.0)


def test_written_configuration_reads_back_to_the_same_values(tmp_path):
    config = load_config(DEMO / "survey.toml").with_changes(
        lines=("L01", "L05"), gap=("length", 3000.0), welch_block=20000.0, confidence=0.9, spacing=250.0,
        interpolation="cubic")
    changed = replace(config.fields[1], fabric_band=(5000.0, 40000.0), fabric_exclude=("L07",),
                      source_depth=True)
    config = config.with_changes(fields=(config.fields[0], changed, config.fields[2]))
    path = tmp_path / "again" / "config.toml"
    path.parent.mkdir()
    path.write_text(config.to_toml(relative_to=path.parent), encoding="utf-8")
    again = load_config(path)
    assert again.with_changes(source=config.source) == config
    # The inputs are written relative to the file, so the folder can move with its survey.
    assert tomllib.loads(path.read_text())["survey"]["inputs"][0].startswith("../")


def test_coherence_pair_defaults_to_bathymetry_against_free_air_gravity():
    document = tomllib.loads((DEMO / "survey.toml").read_text())
    del document["coherence"]
    config = parse_config(document, base=DEMO, source="demo")
    assert (config.coherence.input, config.coherence.output) == ("depth_m", "gravity_mgal")
    document["coherence"] = {"enabled": False}
    assert parse_config(document, base=DEMO, source="demo").coherence is None


def test_fields_from_column_names_without_a_file():
    config, warnings = config_for_fields(["a.csv"], ("depth_m", "faa_mgal", "mag_nt", "salinity"),
                                         shortest_wavelength=2000.0)
    kinds = {f.name: (f.kind, f.anomaly, f.positive_down) for f in config.fields}
    assert kinds == {
        "depth_m": ("bathymetry", None, True),
        "faa_mgal": ("potential_field", "free_air", False),
        "mag_nt": ("potential_field", "magnetic", False),
    }
    assert len(warnings) == 1 and "salinity" in warnings[0]
    assert config.coherence.input == "depth_m" and config.coherence.output == "faa_mgal"


BAD = [
    # (what to change in the demo document, words the message must hold)
    (lambda d: d.update(extra={}), ["extra", "unknown table"]),
    (lambda d: d["fields"]["depth_m"].update(knd="x"), ["[fields.depth_m] knd", "unknown key"]),
    (lambda d: d["fields"]["depth_m"].update(kind="sonar"), ["[fields.depth_m] kind", "bathymetry"]),
    (lambda d: d["fields"]["depth_m"].pop("kind"), ["[fields.depth_m] kind", "required"]),
    (lambda d: d["fields"]["depth_m"].update(shortest_wavelength="4"), ["shortest_wavelength", "no unit"]),
    (lambda d: d["fields"]["depth_m"].update(shortest_wavelength="4 parsecs"),
     ["shortest_wavelength", "unknown unit"]),
    (lambda d: d["fields"]["depth_m"].update(shortest_wavelength=4000), ["shortest_wavelength", "quotes"]),
    (lambda d: d["fields"]["depth_m"].update(longest_wavelength="2km"),
     ["longest_wavelength", "longer than shortest_wavelength"]),
    (lambda d: d["fields"]["depth_m"].update(source_depth=True), ["source_depth", "potential fields only"]),
    (lambda d: d["fields"]["gravity_mgal"].update(positive_down=True), ["positive_down", "bathymetry only"]),
    (lambda d: d["fields"]["gravity_mgal"].update(anomaly="isostatic"), ["anomaly", "free_air"]),
    (lambda d: d["fields"]["gravity_mgal"].update(fabric_band=["5km"]), ["fabric_band", "two lengths"]),
    (lambda d: d["significance"].update(alpha=1.5), ["[significance] alpha", "(0, 1)"]),
    (lambda d: d["significance"].update(alpha="0.05"), ["[significance] alpha", "number"]),
    (lambda d: d["spectrum"].update(method="wavelet"), ["[spectrum] method", "multitaper"]),
    # NW >= 1: with K = 2 NW - 1 tapers, NW < 1 leaves none (Percival and Walden 1993, from memory).
    (lambda d: d["spectrum"].update(nw=0.5), ["[spectrum] nw", "[1, 50]"]),
    (lambda d: d["spectrum"].update(confidence=1.0), ["[spectrum] confidence", "(0, 1)"]),
    (lambda d: d["spectrum"].update(spacing="250"), ["[spectrum] spacing", "no unit"]),
    (lambda d: d["spectrum"].update(interpolation="nearest"), ["[spectrum] interpolation", "cubic"]),
    (lambda d: d["windows"].update(step="50km"), ["step", "longer than the window"]),
    (lambda d: d["survey"].update(inputs=7), ["[survey] inputs", "list"]),
    (lambda d: d.setdefault("segments", {}).update(gap="0.5x"), ["gap", "greater than 1"]),
    (lambda d: d.setdefault("segments", {}).update(turn_angle=270), ["[segments] turn_angle", "180"]),
    (lambda d: d["coherence"].update(input="salinity"), ["[coherence] input", "salinity"]),
    (lambda d: d["coherence"].update(output="depth_m"), ["[coherence]", "same field"]),
    (lambda d: d["coherence"].update(method="periodogram"), ["[coherence] method", "welch"]),
    (lambda d: d.update(fields=[1]), ["fields", "table"]),
]


@pytest.mark.parametrize(("change", "words"), BAD)
def test_bad_values_give_one_line_naming_the_key(change, words):
    document = tomllib.loads((DEMO / "survey.toml").read_text())
    change(document)
    with pytest.raises(InputError) as caught:
        parse_config(document, base=DEMO, source="survey.toml")
    message = str(caught.value)
    assert "\n" not in message
    assert message.startswith("survey.toml: ")
    for word in words:
        assert word in message, (word, message)


def test_unreadable_files(tmp_path):
    with pytest.raises(InputError, match="no such configuration file"):
        load_config(tmp_path / "missing.toml")
    broken = tmp_path / "broken.toml"
    broken.write_text("[survey\nname = 1\n")
    with pytest.raises(InputError, match="not valid TOML"):
        load_config(broken)
    latin = tmp_path / "latin.toml"
    latin.write_bytes("[survey]\nname = \"Caf\xe9\"\n".encode("latin-1"))
    with pytest.raises(InputError, match="not UTF-8"):
        load_config(latin)


def test_command_line_reports_a_bad_configuration_in_one_line(tmp_path, capsys):
    bad = tmp_path / "survey.toml"
    bad.write_text((DEMO / "survey.toml").read_text().replace('window = "40km"', 'window = "40 furlongs"'))
    status = main(["report", "--config", str(bad), "--out", str(tmp_path / "out")])
    captured = capsys.readouterr()
    assert status == 2
    assert captured.err.count("\n") == 1
    assert captured.err.startswith("profiles: error: ") and "[windows] window" in captured.err
    assert not (tmp_path / "out").exists()
