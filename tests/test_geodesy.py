"""Along-track distance against published geodesic worked examples.

Values and sources are those of ../shared/references.md section 2; each check names its source.
Tolerance 1 mm in distance, as the published values are given to 1 mm.
"""

from __future__ import annotations

import numpy as np
import pytest

from profiles.geometry import along_track_distance, geodesic_steps


def dms(degrees: float, minutes: float = 0.0, seconds: float = 0.0) -> float:
    sign = -1.0 if degrees < 0 or (degrees == 0 and (minutes < 0 or seconds < 0)) else 1.0
    return sign * (abs(degrees) + abs(minutes) / 60.0 + abs(seconds) / 3600.0)


# Vincenty (1975), Survey Review 23(176), 88-93, test lines a-e (point 1 at longitude 0).
# (ellipsoid, phi1, phi2, delta-lambda, published s in m, published alpha1)
VINCENTY_LINES = [
    ("bessel", dms(55, 45), dms(-33, -26), dms(108, 13), 14_110_526.170, dms(96, 36, 8.79960)),
    ("intl", dms(37, 19, 54.95367), dms(26, 7, 42.83946), dms(41, 28, 35.50729), 4_085_966.703,
     dms(95, 27, 59.63089)),
    ("intl", dms(35, 16, 11.24862), dms(67, 22, 14.77638), dms(137, 47, 28.31435), 8_084_823.839,
     dms(15, 44, 23.74850)),
    ("intl", dms(1), dms(0, -59, -53.83076), dms(179, 17, 48.02997), 19_960_000.000, dms(89)),
    ("intl", dms(1), dms(1, 1, 15.18952), dms(179, 46, 17.84244), 19_780_006.558,
     dms(4, 59, 59.99995)),
]


@pytest.mark.parametrize("ellipsoid, lat1, lat2, dlon, distance, azimuth", VINCENTY_LINES)
def test_vincenty_1975_lines(ellipsoid, lat1, lat2, dlon, distance, azimuth):
    # Source: Vincenty (1975) table of test lines; published to 1 mm.
    length, forward = geodesic_steps([0.0, dlon], [lat1, lat2], ellipsoid=ellipsoid)
    assert length[0] == pytest.approx(distance, abs=1e-3)
    if distance < 19_900_000:  # line d is nearly antipodal; its published alpha1 is rounded
        assert forward[0] == pytest.approx(azimuth, abs=1e-6 / 3600 * 100)


def test_flinders_peak_to_buninyong_grs80():
    # Source: ICSM Geocentric Datum of Australia Technical Manual, Vincenty inverse worked
    # example (GRS80): 54 972.271 m, forward azimuth 306 deg 52' 05.37".
    lon = [dms(144, 25, 29.52440), dms(143, 55, 35.38390)]
    lat = [dms(-37, -57, -3.72030), dms(-37, -39, -10.15610)]
    length, forward = geodesic_steps(lon, lat, ellipsoid="GRS80")
    assert length[0] == pytest.approx(54_972.271, abs=1e-3)
    assert np.mod(forward[0], 360) == pytest.approx(dms(306, 52, 5.37), abs=0.01 / 3600)


def test_karney_2013_short_inverse():
    # Source: Karney (2013) J. Geodesy 87, 43-55, Table 3: s12 = 4.944208 m.
    length, _ = geodesic_steps([0.0, 0.00005], [-30.12345, -30.12344])
    assert length[0] == pytest.approx(4.944208, abs=1e-6)


def test_karney_2013_nearly_antipodal():
    # Source: Karney (2013) Tables 4-5: s12 = 19 989 832.827610 m, alpha1 = 161.89052473633 deg.
    # Vincenty's iteration fails to converge here; the geodesic must not.
    length, forward = geodesic_steps([0.0, 179.8], [-30.0, 29.9])
    assert length[0] == pytest.approx(19_989_832.827610, abs=1e-3)
    assert forward[0] == pytest.approx(161.89052473633, abs=1e-9)


def test_equator_degree_and_meridian_quadrant():
    # Source: analytic, a * pi / 180 on WGS84 (a = 6 378 137 m) = 111 319.490793 m.
    assert along_track_distance([0.0, 1.0], [0.0, 0.0])[-1] == pytest.approx(111_319.490793, abs=1e-3)
    # Source: NIMA TR8350.2 derived constants: WGS84 meridian quadrant 10 001 965.7293 m.
    lat = np.linspace(0.0, 90.0, 91)
    assert along_track_distance(np.zeros(91), lat)[-1] == pytest.approx(10_001_965.7293, abs=1e-3)


def test_antimeridian_crossing_is_short():
    # Common practice (pitfalls G2): 179.5E to 179.5W at 0.01 deg steps on the equator is one
    # degree of longitude, 111.319 km, not a trip round the world; same in 0..360 form.
    lon = np.round(np.arange(179.5, 180.5 + 1e-9, 0.01), 10)
    wrapped = np.where(lon > 180, lon - 360, lon)
    total = along_track_distance(wrapped, np.zeros(lon.size))[-1]
    assert total == pytest.approx(111_319.490793, abs=1e-2)
    assert along_track_distance(lon, np.zeros(lon.size))[-1] == pytest.approx(total, abs=1e-6)


def test_distance_near_pole():
    # Source: meridian arc, NIMA TR8350.2 quadrant: from 89 N over the pole to 89 N on the
    # opposite meridian is twice the arc from 89 to 90 degrees.
    quarter = along_track_distance([0.0, 0.0], [89.0, 90.0])[-1]
    across = along_track_distance([0.0, 180.0], [89.0, 89.0])[-1]
    assert across == pytest.approx(2 * quarter, abs=1e-3)
