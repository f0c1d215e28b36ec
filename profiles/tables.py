"""Tables for people and for machines: JSON-ready records and aligned text."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd


def clean(value):
    """A JSON-ready Python value: numpy scalars to Python, non-finite floats to ``None``."""
    if isinstance(value, np.generic):
        value = value.item()
    if isinstance(value, float) and not math.isfinite(value):
        return None
    if isinstance(value, dict):
        return {str(k): clean(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [clean(v) for v in value]
    if isinstance(value, np.ndarray):
        return [clean(v) for v in value.tolist()]
    return value


def records(frame: pd.DataFrame) -> list[dict]:
    """Rows of a DataFrame as JSON-ready dicts."""
    return [clean(record) for record in frame.to_dict(orient="records")]


def text_table(frame: pd.DataFrame, *, digits: int = 3) -> str:
    """An aligned plain-text table, floats rounded to ``digits`` decimals, NaN shown as ``-``."""
    if frame.empty:
        return "(none)"
    shown = frame.copy()
    for column in shown.columns:
        series = shown[column]
        if pd.api.types.is_float_dtype(series):
            shown[column] = [("-" if not np.isfinite(v) else f"{v:.{digits}f}") for v in series]
        elif series.dtype == object:
            shown[column] = [
                "-" if v is None else ("yes" if v is True else "no" if v is False else str(v)) for v in series
            ]
        elif pd.api.types.is_bool_dtype(series):
            shown[column] = np.where(series, "yes", "no")
    return shown.to_string(index=False)
