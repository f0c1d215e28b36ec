"""Row accounting of the reader on the demo survey against the demo's README.

The README's counts and bad rows come from the generator, which places each bad row itself
(independent of the reader). Every row must be used, merged or dropped, and the numbers must
agree with what the generator wrote.
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest

from profiles.geometry import build_segments
from profiles.read import read_survey

DEMO = Path(__file__).resolve().parents[1] / "demo_data"
FIELDS = ("depth_m", "gravity_mgal", "magnetic_nt")


def readme_counts() -> dict:
    text = (DEMO / "README.md").read_text(encoding="utf-8")
    match = re.search(r"\| (\d+) \| (\d+) \| (\d+) \| (\d+) \|\n", text.split("## Row accounting")[1])
    read, used, merged, dropped = map(int, match.groups())
    bad = {int(m.group(1)): m.group(2) for m in
           re.finditer(r"^\| (\d+) \| L\d+ \| [^|]+ \| (dropped|merged) \|$", text, re.M)}
    return {"read": read, "used": used, "merged": merged, "dropped": dropped, "bad": bad}


@pytest.fixture(scope="module")
def segmented():
    return build_segments(read_survey(DEMO / "survey.csv", fields=FIELDS))


def test_counts_match_the_readme(segmented):
    expected = readme_counts()
    accounting = segmented.survey.accounting
    accounting.check()  # read == used + merged + dropped
    assert (accounting.read, accounting.used, accounting.merged, accounting.n_dropped) == (
        expected["read"], expected["used"], expected["merged"], expected["dropped"])


def test_each_bad_row_has_the_readme_status(segmented):
    expected = readme_counts()["bad"]
    stations = segmented.survey.stations.set_index("row")
    assert expected, "README lists its bad rows"
    for row, status in expected.items():
        assert stations.loc[row, "status"] == status, (row, stations.loc[row, "reason"])
    others = stations.drop(index=list(expected))
    assert (others["status"] == "used").all()


def test_without_gravity_the_non_numeric_gravity_row_is_kept(segmented):
    # A command that does not analyse gravity keeps the station (README, Row accounting).
    survey = build_segments(read_survey(DEMO / "survey.csv", fields=("depth_m",))).survey
    assert survey.accounting.used == segmented.survey.accounting.used + 1
