"""The survey: every input row as a station, with its status, and the row accounting.

Every input row ends in exactly one of three states:

``used``
    the station enters the analysis;
``merged``
    the station repeats the position of its predecessor on the same line; its values are
    averaged into that station (the reason names the row it was merged into);
``dropped``
    the row cannot be used; the reason says why (missing coordinate, non-numeric value, ...).

:class:`RowAccounting` counts them, and ``read == used + merged + dropped`` always holds.
The reasons a row is dropped while reading are listed in :mod:`profiles.stations`; merging and
the drops of segmentation in :mod:`profiles.geometry`; ``docs/input-handling.md`` has them all.
"""

from __future__ import annotations

from collections import Counter
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

USED, MERGED, DROPPED = "used", "merged", "dropped"

#: Columns every stations table has, in this order, before the field columns.
BASE_COLUMNS = ("source", "row", "line", "lon", "lat", "time", "status", "reason")


@dataclass(frozen=True)
class RowAccounting:
    """Counts of input rows by fate.

    Attributes
    ----------
    read : int
        Data rows read from the input (header excluded; blank lines included).
    used : int
        Rows that enter the analysis as stations.
    merged : int
        Rows merged into a neighbouring station at the same position.
    dropped : dict of str to int
        Rows dropped, counted by reason.
    """

    read: int
    used: int
    merged: int
    dropped: dict[str, int] = field(default_factory=dict)

    @property
    def n_dropped(self) -> int:
        """Total of dropped rows."""
        return sum(self.dropped.values())

    def check(self) -> None:
        """Raise ``AssertionError`` unless every row is accounted for exactly once."""
        total = self.used + self.merged + self.n_dropped
        assert total == self.read, f"row accounting does not add up: {total} != {self.read}"

    def to_json(self) -> dict:
        """The accounting as ``{read, used, merged, dropped{reason: count}}``."""
        return {
            "read": self.read,
            "used": self.used,
            "merged": self.merged,
            "dropped": dict(sorted(self.dropped.items())),
        }

    def __str__(self) -> str:
        parts = [
            f"rows read {self.read}",
            f"used {self.used}",
            f"merged {self.merged}",
            f"dropped {self.n_dropped}",
        ]
        text = ", ".join(parts)
        if self.dropped:
            reasons = "; ".join(f"{reason}: {count}" for reason, count in sorted(self.dropped.items()))
            text += f" ({reasons})"
        return text


@dataclass(frozen=True)
class Survey:
    """Stations of one or more survey files, every input row with its status.

    Attributes
    ----------
    stations : pandas.DataFrame
        One row per input row: ``source`` (file name), ``row`` (line number in the file, the
        header being line 1), ``line`` (survey line id), ``lon``, ``lat`` (degrees, longitude
        in [-180, 180)), ``time`` (seconds since 1970-01-01 UTC, NaN when absent), ``status``,
        ``reason``, then one float column per field. Stations of a line are in survey order
        (by time where a time column exists, else file order).
    fields : tuple of str
        Names of the measured fields (column names as in the input).
    sources : tuple of str
        The input files, in the order read.
    warnings : tuple of str
        Things the user should know about the reading (columns chosen, conversions made).
    """

    stations: pd.DataFrame
    fields: tuple[str, ...]
    sources: tuple[str, ...] = ()
    warnings: tuple[str, ...] = ()

    @property
    def accounting(self) -> RowAccounting:
        """Row accounting of this survey."""
        # Compared as stored (arrow strings): no conversion of the columns to Python strings.
        status = self.stations["status"]
        dropped = (status == DROPPED).to_numpy(dtype=bool)
        reasons = Counter(self.stations["reason"][dropped].tolist()) if dropped.any() else Counter()
        accounting = RowAccounting(
            read=len(self.stations),
            used=int((status == USED).to_numpy(dtype=bool).sum()),
            merged=int((status == MERGED).to_numpy(dtype=bool).sum()),
            dropped={str(k): int(v) for k, v in reasons.items()},
        )
        accounting.check()
        return accounting

    @property
    def used(self) -> pd.DataFrame:
        """The used stations only."""
        return self.stations[(self.stations["status"] == USED).to_numpy(dtype=bool)]

    @property
    def lines(self) -> tuple[str, ...]:
        """Line ids with at least one used station, in survey order."""
        return tuple(pd.unique(self.used["line"]))

    def with_status(self, index: np.ndarray, status: str, reasons) -> Survey:
        """Return a copy with the stations at ``index`` (positions) set to ``status``.

        ``reasons`` is one string or an array of strings, one per index.
        """
        stations = self.stations.copy()
        position = np.asarray(index, dtype=np.intp)
        stations.iloc[position, stations.columns.get_loc("status")] = status
        stations.iloc[position, stations.columns.get_loc("reason")] = reasons
        return Survey(stations, self.fields, self.sources, self.warnings)

    def with_warnings(self, *messages: str) -> Survey:
        """Return a copy with more warnings."""
        return Survey(self.stations, self.fields, self.sources, self.warnings + tuple(messages))

    def replace_values(self, index: np.ndarray, values: dict[str, np.ndarray]) -> Survey:
        """Return a copy with field values replaced at ``index`` (positions)."""
        stations = self.stations.copy()
        position = np.asarray(index, dtype=np.intp)
        for name, column in values.items():
            stations.iloc[position, stations.columns.get_loc(name)] = column
        return Survey(stations, self.fields, self.sources, self.warnings)

    @classmethod
    def from_arrays(
        cls,
        *,
        line: np.ndarray,
        lon: np.ndarray,
        lat: np.ndarray,
        values: dict[str, np.ndarray] | None = None,
        time: np.ndarray | None = None,
        source: str = "arrays",
    ) -> Survey:
        """Build a survey from arrays whose stations are all valid and in survey order.

        Coordinates are checked as a reader would check them; rows that fail are dropped with
        their reason. Longitudes in [0, 360) are accepted and normalised.
        """
        from .stations import assemble_stations  # the reader owns validation

        frame = {"line": np.asarray(line).astype(str), "lon": lon, "lat": lat}
        if time is not None:
            frame["time"] = time
        frame.update(values or {})
        table = pd.DataFrame(frame)
        return assemble_stations(
            table,
            source=source,
            rows=np.arange(2, len(table) + 2),
            fields=tuple(values or ()),
            has_time=time is not None,
        )
