"""The aliasing budget laid onto the map outputs: infill stretches with their tracks, and the
budget's columns of the window table.

An **infill stretch** is a stretch of homogeneous spacing (:mod:`profiles.stretches`) whose
median station spacing exceeds the spacing the aliasing budget recommends for its segment
(:func:`profiles.spacing.alias_budget`): there the aliased power at the target wavelength
is above the tolerance, and denser stations would be needed. Its track is the polyline
through the segment's own stations from the stretch's first station to its last, never
interpolated and never across a gap (a stretch lies inside one segment).

Pure pandas and numpy: the GeoPackage layer (:func:`profiles.gis.infill_layer`) and the map
(:func:`profiles.figures.map.draw_map`) build their geometries from :attr:`InfillStretches.paths`.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np
import pandas as pd

from .stretches import stretches_text

if TYPE_CHECKING:
    from .geometry import Segment, Segments
    from .spacing import AliasBudget
    from .windows import WindowTable

#: Attributes of every infill stretch (the GeoPackage layer ``infill``, JSON ``infill``).
INFILL_COLUMNS = (
    "line",
    "segment",
    "stretch",
    "start_km",
    "end_km",
    "n_stations",
    "spacing_km",
    "recommended_spacing_km",
    "alias_contamination",
    "alias_contamination_low",
    "alias_contamination_high",
    "aliased_variance_fraction",
    "recommendation_basis",
    "message",
)

#: Distances (m) closer than this to a stretch's end count as its end station (km round trip).
_END_TOLERANCE = 1e-3


@dataclass(frozen=True)
class InfillStretches:
    """Stretches spaced more coarsely than the aliasing budget recommends, with their tracks.

    Attributes
    ----------
    field : str
        The field budgeted.
    model : str
        Fall-off form of the budget: ``"power-law"`` or ``"exponential"``.
    tolerance : float
        Largest acceptable aliased power at the target, a fraction of the true power there.
    shortest_wavelength : float
        The target wavelength L (m).
    table : pandas.DataFrame
        One row per infill stretch, columns :data:`INFILL_COLUMNS` (lengths in km);
        ``message`` says in words how coarse the stretch is.
    paths : tuple of ndarray
        One (k, 2) array of (lon, lat) in degrees per row of ``table``: the segment's stations
        from the stretch's start to its end, longitudes continuous along the track (they may
        leave [-180, 180) where it crosses the antimeridian).
    """

    field: str
    model: str
    tolerance: float
    shortest_wavelength: float
    table: pd.DataFrame
    paths: tuple[np.ndarray, ...]

    def __len__(self) -> int:
        return len(self.table)

    def to_frame(self) -> pd.DataFrame:
        """The infill stretches, columns :data:`INFILL_COLUMNS`."""
        return self.table.copy()

    def records(self) -> list[dict]:
        """The infill stretches as JSON-ready dicts (non-finite numbers as None)."""
        from .tables import records

        return records(self.table)

    def __str__(self) -> str:
        head = (
            f"{stretches_text(len(self))} of {self.field} spaced more coarsely than recommended for at most "
            f"{100 * self.tolerance:g} % aliased power at {self.shortest_wavelength / 1e3:g} km"
        )
        parts = [
            f"{row.line}/{row.segment} {row.start_km:.1f}-{row.end_km:.1f} km every {row.spacing_km:.3g} km "
            f"(recommended {row.recommended_spacing_km:.3g} km)"
            for row in self.table.itertuples()
        ]
        return head + (": " + "; ".join(parts) if parts else "")


def stretch_path(segment: Segment, start: float, end: float) -> np.ndarray:
    """Positions of a segment's stations from along-line distance ``start`` to ``end`` (m).

    Returns
    -------
    ndarray, shape (k, 2)
        (lon, lat) in degrees, longitudes unwrapped along the segment (continuous).
    """
    inside = (segment.distance >= start - _END_TOLERANCE) & (segment.distance <= end + _END_TOLERANCE)
    lon = np.unwrap(np.asarray(segment.lon, dtype=float), period=360.0)
    return np.column_stack([lon[inside], np.asarray(segment.lat, dtype=float)[inside]])


def _message(row, *, tolerance: float, wavelength: float) -> str:
    """One sentence: the stretch's spacing against the recommendation, and why it matters."""
    text = (
        f"stations every {row.spacing_km:.3g} km, coarser than the {row.recommended_spacing_km:.3g} km "
        f"recommended (basis: {row.recommendation_basis}) for at most {100 * tolerance:g} % aliased power at "
        f"{wavelength / 1e3:g} km"
    )
    value = float(row.alias_contamination)
    if np.isfinite(value):
        return text + f"; aliased power there {100 * value:.3g} % of the true power"
    if 2.0 * row.spacing_km * 1e3 > wavelength:
        return text + "; the target is not resolved at all (spacing over half its wavelength)"
    return text + "; the aliased power there is unbounded (fall-off too shallow)"


def infill_stretches(budget: AliasBudget | None, segments: Segments) -> InfillStretches | None:
    """The infill stretches of an aliasing budget, each with its track through the stations.

    Parameters
    ----------
    budget : AliasBudget or None
        From :func:`profiles.spacing.audit_spacing` (``audit.budget``) on ``segments``.
    segments : Segments
        The segments the budget was drawn up on.

    Returns
    -------
    InfillStretches or None
        None without a budget or without a target wavelength (no recommendation, so nothing
        can be coarser than it). Empty when no stretch exceeds its recommendation.
    """
    if budget is None or not budget.shortest_wavelength:
        return None
    coarse = budget.infill().reset_index(drop=True)
    by_key = {(segment.line, segment.number): segment for segment in segments}
    paths = tuple(
        stretch_path(by_key[(row.line, row.segment)], row.start_km * 1e3, row.end_km * 1e3)
        for row in coarse.itertuples()
    )
    table = coarse[[c for c in INFILL_COLUMNS if c != "message"]].copy()
    table["message"] = [
        _message(row, tolerance=budget.tolerance, wavelength=budget.shortest_wavelength)
        for row in coarse.itertuples()
    ]
    return InfillStretches(
        field=budget.field,
        model=budget.model,
        tolerance=budget.tolerance,
        shortest_wavelength=float(budget.shortest_wavelength),
        table=table.reset_index(drop=True),
        paths=paths,
    )


def window_frame(windows: WindowTable, budget: AliasBudget | None = None) -> pd.DataFrame:
    """The window table, with the budget's columns joined on when the budget has a target.

    ``windows.to_frame()`` (``reasons`` a list), then, with a budget drawn up for a target
    wavelength, :data:`profiles.spacing.WINDOW_BUDGET_COLUMNS` from
    :meth:`profiles.spacing.AliasBudget.for_windows` (each window budgeted at its local median
    station spacing with its segment's fall-off).
    """
    frame = windows.to_frame()
    if budget is None or not budget.shortest_wavelength:
        return frame
    return frame.join(budget.for_windows(frame))
