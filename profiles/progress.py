"""Progress bars for long steps, on stderr, only where someone watches.

A bar (tqdm) is drawn when stderr is a terminal and the user did not ask for ``--quiet``;
otherwise nothing is written at all, so logs, pipes and ``--json`` output stay clean.
"""

from __future__ import annotations

import sys
from collections.abc import Iterable, Iterator
from typing import TypeVar

Item = TypeVar("Item")


def bars_wanted(*, quiet: bool = False, stream=None) -> bool:
    """Whether progress bars are drawn: not quiet, and the stream (stderr) is a terminal."""
    stream = sys.stderr if stream is None else stream
    if quiet:
        return False
    try:
        return bool(stream.isatty())
    except (AttributeError, ValueError):  # closed or replaced streams
        return False


def progress(
    items: Iterable[Item],
    *,
    description: str,
    total: int | None = None,
    quiet: bool = False,
    unit: str = "segment",
) -> Iterator[Item]:
    """Iterate over ``items``, with a bar on stderr when :func:`bars_wanted`.

    Parameters
    ----------
    items : iterable
        What to iterate over.
    description : str
        Words in front of the bar, e.g. ``"spectra of depth_m"``.
    total : int, optional
        Number of items (``len(items)`` when it has one).
    quiet : bool
        No bar, whatever the stream.
    unit : str
        What one item is, for the rate shown.
    """
    if not bars_wanted(quiet=quiet):
        yield from items
        return
    from tqdm import tqdm

    if total is None and hasattr(items, "__len__"):
        total = len(items)
    with tqdm(
        items,
        desc=description,
        total=total,
        unit=unit,
        file=sys.stderr,
        leave=False,
        dynamic_ncols=True,
    ) as bar:
        yield from bar


class Steps:
    """A bar over the named steps of a job (reading, spectra, windows, ...).

    Use as a context manager; call :meth:`advance` with the name of each step as it ends.
    Draws nothing unless :func:`bars_wanted`.
    """

    def __init__(self, total: int, *, description: str, quiet: bool = False):
        self._bar = None
        if bars_wanted(quiet=quiet):
            from tqdm import tqdm

            self._bar = tqdm(total=total, desc=description, unit="step", file=sys.stderr,
                             leave=False, dynamic_ncols=True)

    def advance(self, name: str) -> None:
        """Count the step ``name`` as done and show its name."""
        if self._bar is not None:
            self._bar.set_postfix_str(name, refresh=False)
            self._bar.update(1)

    def __enter__(self) -> Steps:
        return self

    def __exit__(self, *exc) -> None:
        if self._bar is not None:
            self._bar.close()
