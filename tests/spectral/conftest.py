"""Shared fixtures of the spectral tests."""

from __future__ import annotations

import numpy as np
import pytest


@pytest.fixture(scope="session")
def sunspots() -> np.ndarray:
    """statsmodels' yearly sunspot numbers 1700-2008 (309 values), shipped with the package."""
    from statsmodels.datasets import sunspots as dataset

    return dataset.load_pandas().data["SUNACTIVITY"].to_numpy(dtype=float)
