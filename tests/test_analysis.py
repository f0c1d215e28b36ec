"""analyse_segment reuses the harmonic variances for the red-noise test: it must give exactly
what the spectral core's one-call red_noise_test gives (Gilman, Fuglister and Mitchell 1963
AR(1) test, as checked in tests/spectral/test_significance.py)."""

import numpy as np
import pytest
from conftest import walk

from profiles.analysis import analyse_segment, resample_field
from profiles.geometry import build_segments
from profiles.spectral.significance import red_noise_test
from profiles.survey import Survey


def test_red_noise_matches_the_one_call_test():
    lon, lat = walk(20.0, -30.0, [(70, 500, 200.0)])
    rng = np.random.default_rng(11)
    depth = 4000.0 + np.cumsum(rng.normal(0, 3, lon.size)) + 30 * np.sin(np.arange(lon.size) / 8)
    survey = Survey.from_arrays(line=np.array(["R"] * lon.size), lon=lon, lat=lat,
                                values={"depth_m": depth})
    (segment, uniform), = resample_field(build_segments(survey), "depth_m")[0]
    result = analyse_segment(segment, uniform)
    reference = red_noise_test(uniform.values, spacing=uniform.spacing)
    assert result.red_noise.lag1 == pytest.approx(reference.lag1, rel=1e-12)  # same to rounding
    np.testing.assert_array_equal(result.red_noise.significant, reference.significant)
    np.testing.assert_allclose(result.red_noise.threshold, reference.threshold, rtol=1e-12)
    row = result.summary()
    assert row["n_red_significant"] == int(reference.significant.sum())
