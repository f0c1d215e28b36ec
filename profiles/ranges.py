"""Statistics of many ranges of one array: counts, reductions, order statistics and medians.

Range i is ``values[lo_i:hi_i]`` (lo_i < hi_i). The along-track windows ask for the median and
the maximum of the station steps under each window, thousands of ranges that overlap several
times over; nothing here loops over ranges in Python, and each value is read a few times in
all, however much the ranges overlap.

Pieces
------
The distinct ends of all ranges (lo and hi together) cut the array into *pieces* inside which
no range begins or ends, so every range is a run of whole pieces. A count or an exact reduction
(``maximum``) of every piece is one ``reduceat`` over the array; a range's count is then the
difference of two running totals over the pieces (integers: exact), and its reduction that of
its run of pieces (a few per range). :func:`range_pieces` finds them once for all the
statistics of the same ranges.

Medians
-------
:func:`range_median` is exactly ``numpy.median`` of every range (the mean of the two middle
values of an even count, as numpy forms it). Copying every range whole to partition it would
touch each value as many times as ranges overlap it; instead:

1. a band [low, high] of values is placed from a sample of the ranges: the lowest and highest
   of their values a few ranks either side of their middle, found exactly;
2. one pass over the values, by chunks of whole pieces that stay in cache, counts per piece
   the values at or above ``low`` and those inside the band (``reduceat`` of comparisons),
   takes the pieces' maxima when asked, and keeps the band's values in position order; each
   range's count below the band then comes from the pieces;
3. the values inside the band are split into a few bins by value (of equal width, or, for a
   band of separate clusters, fine bins merged into bins of about equal counts) and counted
   per piece and bin, so that each range's running count over the bins shows which bin holds
   its middle values and their rank within that bin;
4. the band's values are grouped by bin, in position order within a bin, so that a range's
   values in one bin are a contiguous stretch of that grouping (a handful of values), and the
   middle values are picked from the sorted stretch;
5. the few ranges whose middle values fall outside the band are done whole (:func:`range_select`).

Every step counts or selects exactly, so the result is the same number ``numpy.median`` gives
(tested against it for many kinds of values: ties, constant runs, several orders of magnitude,
negative values, a few huge steps among regular ones, two clusters far apart, subnormal
numbers). Few ranges, or ranges that barely overlap, are selected whole. Values must be
finite (NaN has no rank).
"""

from __future__ import annotations

import numpy as np

__all__ = [
    "range_count",
    "range_median",
    "range_median_and_maximum",
    "range_pieces",
    "range_reduce",
    "range_select",
    "reduce_runs",
]

#: Largest matrix (cells) :func:`range_select` builds at once; more rows are done in blocks.
_SELECT_CELLS = 1 << 23
#: Ranges sampled to place the band of :func:`range_median`.
_BAND_SAMPLES = 32
#: The band reaches count // _BAND_MARGIN ranks (at least 2) either side of a sampled middle.
_BAND_MARGIN = 32
#: Values of a range wanted per bin of the band (it sets the number of bins).
_PER_BIN = 12
#: Most bins of the band (their numbers fit in int8, which numpy sorts by radix).
_MAX_BINS = 127
#: Fine bins of equal width per bin of :func:`range_median`'s band.
_FINE_BINS = 16
#: Below this many cells in all ranges per value of the array, ranges are selected whole.
_WHOLE_CELLS_PER_VALUE = 2


def range_pieces(lo: np.ndarray, hi: np.ndarray, size: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The pieces the ends of the ranges cut ``range(size)`` into.

    Returns ``(starts, first, stop)``: the sorted distinct range ends below ``size`` (where
    the pieces start; the last piece runs to ``size``), and for range i the index of its first
    piece and of the piece after its last (``starts.size`` when it runs to the end).
    """
    ends = np.sort(np.concatenate([lo, hi]))
    keep = np.empty(ends.size, dtype=bool)
    keep[:1] = True
    np.not_equal(ends[1:], ends[:-1], out=keep[1:])
    keep &= ends < size
    starts = ends[keep]
    return starts, np.searchsorted(starts, lo), np.searchsorted(starts, hi)


def _piece_totals(flags: np.ndarray, starts: np.ndarray) -> np.ndarray:
    """Running count of true ``flags`` at each piece start, and at the end (length pieces + 1);
    ``flags`` may have more axes (one count per column)."""
    totals = np.zeros((starts.size + 1, *flags.shape[1:]), dtype=np.int64)
    if starts.size:
        np.cumsum(np.add.reduceat(flags.view(np.uint8), starts, axis=0, dtype=np.int32), axis=0,
                  out=totals[1:])
    return totals


def range_count(flags: np.ndarray, lo: np.ndarray, hi: np.ndarray, *, pieces=None) -> np.ndarray:
    """Number of true ``flags[lo_i:hi_i]`` for every i, each flag read once.

    ``flags`` may have more axes (one count per column then, shape (lo.size, ...)). One
    ``add.reduceat`` counts every piece, and a running total over the pieces gives each
    range's count as the difference of two totals (integers: exact).
    """
    starts, first, stop = pieces if pieces is not None else range_pieces(lo, hi, flags.shape[0])
    totals = _piece_totals(flags, starts)
    return totals[stop] - totals[first]


def range_reduce(ufunc: np.ufunc, values: np.ndarray, lo: np.ndarray, hi: np.ndarray, *,
                 pieces=None) -> np.ndarray:
    """``ufunc.reduce(values[lo_i:hi_i])`` for every i (lo_i < hi_i), each value read once.

    One ``reduceat`` reduces every piece, and each range is then the reduction of its run of
    pieces (:func:`reduce_runs`), a few per range however much the ranges overlap. For an
    exact reduction such as ``maximum`` the result is the same number as reducing the range
    directly.
    """
    starts, first, stop = pieces if pieces is not None else range_pieces(lo, hi, values.size)
    return reduce_runs(ufunc, ufunc.reduceat(values, starts), first, stop)


def reduce_runs(ufunc: np.ufunc, values: np.ndarray, lo: np.ndarray, hi: np.ndarray) -> np.ndarray:
    """``ufunc.reduce(values[lo_i:hi_i])`` for every i (lo_i < hi_i), in one ``reduceat``.

    The bounds are interleaved, so the even results are the ranges wanted. A range that ends
    at the end of ``values`` is cut one short (``reduceat`` needs indices inside the array)
    and its last value put back afterwards.
    """
    size = values.size
    at_end = hi >= size
    bounds = np.column_stack([lo, np.minimum(hi, size - 1)]).ravel()
    result = ufunc.reduceat(values, bounds)[::2]
    # reduceat gives values[lo] alone where lo == size - 1: already complete.
    put_back = at_end & (lo < size - 1)
    result[put_back] = ufunc(result[put_back], values[size - 1])
    return result


def range_select(values: np.ndarray, lo: np.ndarray, hi: np.ndarray, rank: np.ndarray,
                 *, following: bool = False):
    """The ``rank_i``-th smallest (from 0) of ``values[lo_i:hi_i]`` for every i, no loop.

    Each range is copied into a row of one matrix, shifted so that the value wanted has the
    same column in every row: cells before a range hold -inf, cells after it +inf. One
    ``partition`` at that column then gives every value wanted, and with ``following`` also
    the next larger one (the smallest right of that column; +inf if the range has no more).
    Above ``_SELECT_CELLS`` cells the rows are split into two blocks (recursively), each
    with its own width.
    """
    from numpy.lib.stride_tricks import sliding_window_view

    if lo.size == 0:
        return (np.zeros(0), np.zeros(0)) if following else np.zeros(0)
    count = hi - lo
    column = int(rank.max())
    lead = column - rank  # -inf cells before each range
    stop = lead + count  # +inf cells from here
    width = int(stop.max()) + 1
    if count.size > 1 and count.size * width > _SELECT_CELLS:
        half = count.size // 2
        parts = (range_select(values, lo[:half], hi[:half], rank[:half], following=following),
                 range_select(values, lo[half:], hi[half:], rank[half:], following=following))
        if following:
            return tuple(np.concatenate(pair) for pair in zip(*parts, strict=True))
        return np.concatenate(parts)
    first = lo - lead
    cells = np.arange(width)
    if first.min() >= 0 and first.max() + width <= values.size:
        matrix = sliding_window_view(values, width)[first]
    else:  # rows that reach past either end read clipped indices there (cells masked below)
        matrix = np.take(values, first[:, None] + cells, mode="clip")
    head = int(lead.max())
    if head:  # (copyto with where: a boolean index would gather the cells first)
        np.copyto(matrix[:, :head], -np.inf, where=cells[:head] < lead[:, None])
    tail = int(stop.min())
    np.copyto(matrix[:, tail:], np.inf, where=cells[tail:] >= stop[:, None])
    matrix.partition(column, axis=1)
    if following:
        return matrix[:, column].copy(), matrix[:, column + 1 :].min(axis=1)
    return matrix[:, column].copy()


def range_median(values: np.ndarray, lo: np.ndarray, hi: np.ndarray, *, pieces=None) -> np.ndarray:
    """Median of ``values[lo_i:hi_i]`` for every i (lo_i < hi_i), exactly as ``numpy.median``.

    See the module notes for the method. ``pieces``: :func:`range_pieces` of the same ranges,
    when already at hand.
    """
    return _range_statistics(values, lo, hi, pieces, maximum=False)[0]


def range_median_and_maximum(values: np.ndarray, lo: np.ndarray, hi: np.ndarray, *,
                             pieces=None) -> tuple[np.ndarray, np.ndarray]:
    """:func:`range_median` and ``range_reduce(numpy.maximum, ...)`` of the same ranges, the
    maxima of the pieces taken in the same pass over ``values`` as the medians' counts."""
    return _range_statistics(values, lo, hi, pieces, maximum=True)


def _range_statistics(values, lo, hi, pieces, *, maximum: bool):
    """Medians of the ranges and, with ``maximum``, their maxima (else None)."""
    lo = np.asarray(lo, dtype=np.int64)
    hi = np.asarray(hi, dtype=np.int64)
    if lo.size == 0:
        return np.zeros(0), np.zeros(0)
    count = hi - lo
    rank = (count - 1) // 2  # the lower middle value; the upper one is rank + 1 when even
    if pieces is None:
        pieces = range_pieces(lo, hi, values.size)
    if lo.size <= _BAND_SAMPLES or count.sum() <= _WHOLE_CELLS_PER_VALUE * values.size:
        lower, upper = range_select(values, lo, hi, rank, following=True)
        largest = range_reduce(np.maximum, values, lo, hi, pieces=pieces) if maximum else None
    else:
        lower, upper, largest = _middle_values(values, lo, hi, rank, pieces, maximum=maximum)
    return np.where(count % 2 == 0, 0.5 * (lower + upper), lower), largest


#: Values classified at a time in :func:`_classified`, so that each chunk stays in cache.
_CLASSIFY_CHUNK = 1 << 18


def _classified(values, starts, low, high, *, maximum: bool):
    """One pass over ``values`` by chunks of whole pieces: per piece, the count of values
    >= low, the count of values in [low, high] and (with ``maximum``) the largest value; and
    the values in [low, high] in position order (values before the first piece belong to no
    range and are left out). Counts are running totals over the pieces (length pieces + 1)."""
    cuts = np.searchsorted(starts, np.arange(int(starts[0]), values.size, _CLASSIFY_CHUNK))
    cuts = np.unique(np.append(cuts, starts.size))  # whole pieces per chunk, the first from 0
    not_below = np.zeros(starts.size + 1, dtype=np.int64)
    in_band = np.zeros(starts.size + 1, dtype=np.int64)
    largest = np.empty(starts.size) if maximum else None
    inner = []
    # Counts in 16 bits where no piece is that long (a narrower sum is a cheaper one).
    lengths = np.diff(np.append(starts, values.size))
    kind = np.uint16 if lengths.max() < 1 << 16 else np.int64
    for first, stop in zip(cuts[:-1].tolist(), cuts[1:].tolist(), strict=True):
        begin = int(starts[first])
        chunk = values[begin : int(starts[stop]) if stop < starts.size else values.size]
        offsets = starts[first:stop] - begin
        at_least = chunk >= low
        band = chunk <= high
        band &= at_least
        not_below[first + 1 : stop + 1] = np.add.reduceat(at_least.view(np.uint8), offsets, dtype=kind)
        in_band[first + 1 : stop + 1] = np.add.reduceat(band.view(np.uint8), offsets, dtype=kind)
        if maximum:
            largest[first:stop] = np.maximum.reduceat(chunk, offsets)
        inner.append(np.compress(band, chunk))
    np.cumsum(not_below, out=not_below)
    np.cumsum(in_band, out=in_band)
    return not_below, in_band, np.concatenate(inner), largest


def _middle_values(values, lo, hi, rank, pieces, *, maximum: bool):
    """The rank-th and (rank + 1)-th smallest values of every range (+inf where there is no
    (rank + 1)-th), by the band and its bins (module notes, steps 1-5), and with ``maximum``
    the largest value of every range."""
    starts, first, stop = pieces
    count = hi - lo
    # 1. The band, from the sampled ranges' values a few ranks either side of their middle.
    sample = np.linspace(0, lo.size - 1, _BAND_SAMPLES).round().astype(np.int64)  # distinct
    margin = np.maximum(2, count[sample] // _BAND_MARGIN)
    low_rank = np.maximum(rank[sample] - margin, 0)
    high_rank = np.minimum(rank[sample] + 1 + margin, count[sample] - 1)
    rows = _sorted_rows(values, lo[sample], count[sample])
    low = rows[np.arange(sample.size), low_rank].min()
    high = rows[np.arange(sample.size), high_rank].max()
    # 2. The count below the band per range, and the wanted rank counted from the band's
    # bottom; the band's values in position order, and where each piece's begin among them.
    not_below, bounds, inner, largest = _classified(values, starts, low, high, maximum=maximum)
    local = rank - (count - (not_below[stop] - not_below[first]))
    in_range = bounds[stop] - bounds[first]
    inside = (local >= 0) & (local + 1 < in_range)  # both middle values in the band
    lower = np.empty(lo.size)
    upper = np.empty(lo.size)
    good = np.flatnonzero(inside)
    if good.size and high == low:  # one value throughout the band (regular stations)
        lower[good] = upper[good] = low
    elif good.size:
        lower[good], upper[good] = _middle_in_bins(inner, bounds, first[good], stop[good], local[good],
                                                   low=low, high=high, per_range=float(np.mean(in_range)))
    bad = np.flatnonzero(~inside)
    if bad.size:
        lower[bad], upper[bad] = range_select(values, lo[bad], hi[bad], rank[bad], following=True)
    if maximum:
        largest = reduce_runs(np.maximum, largest, first, stop)
    return lower, upper, largest


def _middle_in_bins(inner, bounds, first, stop, local, *, low, high, per_range):
    """The local-th and (local + 1)-th smallest band values of every range (steps 3-4).

    ``inner``: the band's values (low <= value <= high, low < high) in position order; piece p
    holds ``inner[bounds[p]:bounds[p + 1]]``; a range is the run of pieces first..stop - 1;
    ``per_range``: the ranges' mean count of band values.
    """
    pieces = bounds.size - 1
    bins = int(np.clip(np.ceil(per_range / _PER_BIN), 1, _MAX_BINS))
    which_bin = _value_bins(inner, low, high, bins)
    cell = np.repeat(np.arange(0, pieces * bins, bins), np.diff(bounds))
    cell += which_bin
    per_piece = np.zeros((pieces + 1, bins), dtype=np.int64)
    np.cumsum(np.bincount(cell, minlength=pieces * bins).reshape(pieces, bins), axis=0, out=per_piece[1:])
    counts = per_piece[stop]
    counts -= per_piece[first]
    running = np.cumsum(counts, axis=1)
    # 4. The band grouped by bin (position order within a bin, as argsort is stable), so that
    # a range's values in bin b start at group_start[b] + (its pieces' earlier count in b).
    grouped = inner[np.argsort(which_bin, kind="stable")]
    group_start = np.zeros(bins, dtype=np.int64)
    np.cumsum(per_piece[-1, :-1], out=group_start[1:])
    index = np.arange(first.size)
    picked = []
    for wanted in (local, local + 1):
        b = (running <= wanted[:, None]).sum(axis=1)  # the bin holding the wanted value
        here = counts[index, b]
        rank = wanted - (running[index, b] - here)
        start = group_start[b] + per_piece[first, b]
        picked.append((b, start, here, rank))
    (b, start, here, rank), (b_next, start_next, here_next, _) = picked
    lower, upper = _select_stretches(grouped, start, here, rank)
    later = np.flatnonzero(b_next != b)  # the next value is the smallest of a later bin
    if later.size:
        upper[later] = _select_stretches(grouped, start_next[later], here_next[later],
                                         np.zeros(later.size, dtype=np.int64))[0]
    return lower, upper


def _value_bins(values: np.ndarray, low: float, high: float, bins: int) -> np.ndarray:
    """Bin numbers 0..bins - 1 (int8) of values in [low, high], nondecreasing in value.

    Bins of equal width, unless they hold very unequal counts (a band of two clusters, from
    stretches of different spacing): then fine bins of equal width merged into bins of
    about equal counts, so that every bin still holds a few values per range (step 3).
    """
    with np.errstate(over="ignore"):
        scale = _FINE_BINS * bins / (high - low)
    if not np.isfinite(scale):  # a band too narrow or too wide for the division: one bin
        return np.zeros(values.size, dtype=np.int8)
    fine = ((values - low) * scale).astype(np.int32)
    np.minimum(fine, _FINE_BINS * bins - 1, out=fine)
    per_fine = np.bincount(fine, minlength=_FINE_BINS * bins)
    if per_fine.reshape(bins, _FINE_BINS).sum(axis=1).max() <= 2 * values.size // bins:
        return (fine // _FINE_BINS).astype(np.int8)  # equal widths hold about equal counts
    below = np.cumsum(per_fine) - per_fine  # values in the lower fine bins
    return (below * bins // values.size).astype(np.int8)[fine]


def _select_stretches(values, first, count, rank):
    """The rank-th and (rank + 1)-th smallest of every ``values[first_i : first_i + count_i]``
    (+inf where there is no (rank + 1)-th), from each stretch sorted in a row of a matrix.

    Stretches of very unequal length are sorted in groups of similar length, so that the
    matrix is not as wide as the longest stretch throughout.
    """
    lower = np.empty(first.size)
    upper = np.empty(first.size)
    if int(count.max()) * count.size > 4 * int(count.sum()) + 65536:
        groups = np.array_split(np.argsort(count, kind="stable"), 8)
    else:
        groups = [slice(None)]
    for group in groups:
        rows = _sorted_rows(values, first[group], count[group])
        index = np.arange(rows.shape[0])
        lower[group] = rows[index, rank[group]]
        upper[group] = rows[index, np.minimum(rank[group] + 1, rows.shape[1] - 1)]
        upper[group] = np.where(rank[group] + 1 < count[group], upper[group], np.inf)
    return lower, upper


def _sorted_rows(values: np.ndarray, first: np.ndarray, count: np.ndarray) -> np.ndarray:
    """``values[first_i : first_i + count_i]`` sorted, one row each, +inf after the count."""
    from numpy.lib.stride_tricks import sliding_window_view

    width = max(int(count.max()), 1)
    cells = np.arange(width)
    fits = first + width <= values.size
    if fits.all():
        matrix = sliding_window_view(values, width)[first]  # whole rows copied at once
    else:  # rows that reach past the end read clipped indices there (cells masked below)
        matrix = np.take(values, first[:, None] + cells, mode="clip")
        matrix[fits] = sliding_window_view(values, width)[first[fits]]
    np.copyto(matrix, np.inf, where=cells >= count[:, None])
    matrix.sort(axis=1)
    return matrix
