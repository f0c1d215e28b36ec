"""profiles: along-track spectral analysis and station-spacing audit for survey profiles."""

__version__ = "0.1.0"
