"""Benchmark: ``profiles batch`` end to end and stage by stage, against bare library calls.

Targets (issue "Archive scale on Dask"), all measured in this run on a synthetic archive
(CSV files with the demo's columns line,time,lon,lat,depth_m):

- end to end within 2x of the bare stages. Every stage of a task has a bare lower bound:
  ``pandas.read_csv``; one ``pyproj.Geod.inv`` over all station pairs; ``numpy.interp`` onto
  the uniform grid with a batched ``numpy.fft.rfft``, power and argmax; the windows' batched
  ``rfft``; for the spacing audit's fall-off fit, a DPSS multitaper spectrum of every line
  (``scipy.signal.windows.dpss`` and one batched ``rfft``); for the writing,
  ``shapely.linestrings`` and ``pyarrow.parquet.write_table``. The ratio is printed against
  all six, against all six without scipy's DPSS eigensolver (which profiles replaces by a
  faster computation of the same tapers) and against the four the issue names;
- two workers at least 1.6x as fast as one worker on a 2-core machine;
- peak resident memory per worker that does not grow with the number of files (archives of
  1x, 2x and 4x the files).

Starting and closing the local cluster costs about 1.5 s whatever the archive (spawning the
worker processes, their first imports): the default archive (48 files, 4.3 million stations)
is large enough that this is a tenth of a one-worker run; on 16 files it is a quarter.

    python benchmarks/bench_batch.py       # 48 files x 10 lines x 10,000 points; memory 8/16/32 files
    python benchmarks/bench_batch.py --files 16 --repeat 3 --skip-memory   # smaller, quicker
    python benchmarks/bench_batch.py --files 4 --points 2000 --repeat 1 --skip-memory   # a quick look
    python benchmarks/bench_batch.py --memory-only
"""

from __future__ import annotations

import os

# One thread per process for the numerical libraries, as Dask's nanny sets for its workers
# (distributed.nanny.pre-spawn-environ), so that the stages timed in this process are timed as
# the workers run them, and the bare stages alike. Set before numpy is imported.
for _name in ("OMP_NUM_THREADS", "MKL_NUM_THREADS", "OPENBLAS_NUM_THREADS"):
    os.environ.setdefault(_name, "1")

import argparse  # noqa: E402
import sys  # noqa: E402
import tempfile  # noqa: E402
import time  # noqa: E402
import tracemalloc  # noqa: E402
from collections import defaultdict  # noqa: E402
from itertools import pairwise  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402
import pandas as pd  # noqa: E402
from bench_foundation import synthetic_lines  # noqa: E402
from pyproj import Geod  # noqa: E402

from profiles.batch import find_survey_files, run_batch  # noqa: E402
from profiles.batch_task import BatchOptions, analyse_file  # noqa: E402

STAGES = ("read", "segments", "spacing", "spectra", "windows", "write")
#: Bare lower bound of each stage.
BARE_OF = {"read": "read_csv", "segments": "Geod.inv", "spacing": "multitaper",
           "spectra": "interp + rfft", "windows": "windowed rfft", "write": "write_table"}
#: The bare stages the issue names (the reading of the text is added: every run must read it).
CORE = ("read_csv", "Geod.inv", "interp + rfft", "windowed rfft")
#: The windows of the batch with the default window (256 samples) and step (a quarter).
WINDOW, STRIDE = 256, 64


def make_archive(folder: Path, *, files: int, lines: int, points: int) -> list[Path]:
    """``files`` CSV files of ``lines`` lines of 80-100 % of ``points`` stations each (200-300 m
    steps; lines of different lengths, as in an archive, so that no two share a spectrum's
    tapers).

    The depth is red, as seafloor relief is (a spectrum falling off about as k^-2): a random
    walk of 10 m steps, plus a 25 km sinusoid of 100 m and 10 m of white noise (the floor).
    """
    folder.mkdir(parents=True, exist_ok=True)
    paths = []
    for number in range(files):
        codes, lon, lat, values = synthetic_lines(lines, points, seed=number)
        rng = np.random.default_rng(1000 + number)
        walk = rng.normal(0.0, 10.0, (lines, points)).cumsum(axis=1)
        keep = (np.arange(points) < rng.integers(int(0.8 * points), points + 1, lines)[:, None]).ravel()
        seconds = np.tile(np.arange(points) * 50, lines).astype("timedelta64[s]")
        stamp = (np.datetime64("2026-03-04T05:06:07") + seconds).astype(str)
        frame = pd.DataFrame({
            "line": np.char.add(f"F{number:03d}-L", codes.astype(str)),
            "time": np.char.add(stamp, "Z"),
            "lon": lon,
            "lat": lat,
            "depth_m": 3000.0 + 100.0 * values + walk.ravel(),
        })[keep]
        path = folder / f"file{number:03d}.csv"
        frame.to_csv(path, index=False, float_format="%.6f")
        paths.append(path)
    return paths


def tasks_for(paths, out: Path, options: BatchOptions) -> list[dict]:
    """The tasks run_batch would submit (for running them in this process)."""
    return [{"path": str(f.path), "file": f.relative, "id": f.id, "size": f.size, "mtime_ns": f.mtime_ns,
             "out": str(out), "options": options.to_json(), "options_key": options.key()}
            for f in find_survey_files(paths).files]


def in_process(paths, options: BatchOptions, repeat: int) -> dict[str, float]:
    """Seconds per stage of analysing every file in this process (best of ``repeat``)."""
    best = None
    for _ in range(repeat):
        with tempfile.TemporaryDirectory() as out:
            total = defaultdict(float)
            for task in tasks_for(paths, Path(out), options):
                record = analyse_file(task)
                assert record["status"] == "done", record["reason"]
                for stage, seconds in record["seconds"].items():
                    total[stage] += seconds
        if best is None or total["total"] < best["total"]:
            best = dict(total)
    return best


def traced_peaks(path: Path, options: BatchOptions) -> dict[str, float]:
    """Peak traced memory (MB, tracemalloc) during each stage of one file."""
    with tempfile.TemporaryDirectory() as out:
        (task,) = tasks_for([path], Path(out), options)
        tracemalloc.start()
        try:
            record = analyse_file(task)
        finally:
            tracemalloc.stop()
    return record["traced_peak_mb"]


def bare_file(path: Path, rounds: int = 1) -> dict[str, float]:
    """Seconds of the bare lower-bound stages on one file (each done ``rounds`` times).

    Beside the stages the issue names (``read_csv``, ``Geod.inv``, ``interp + rfft``,
    ``windowed rfft``), the two stages that have no counterpart there get the bare calls the
    same work cannot do without: ``multitaper`` (the spacing audit's fall-off fit needs one
    multitaper spectrum per line: ``scipy.signal.windows.dpss`` with NW = 4 and 7 tapers, and
    one batched ``rfft`` of the tapered differences, plus ``numpy.median`` of the steps) and
    ``write_table`` (both layers as Parquet: ``shapely.linestrings`` of every line and of
    every window's stretch of stations, ``shapely.to_wkb``, ``pyarrow.parquet.write_table``
    of the same numbers of rows and of float columns).
    """
    import pyarrow as pa
    import pyarrow.parquet as pq
    import shapely
    from numpy.lib.stride_tricks import sliding_window_view
    from scipy.signal.windows import dpss

    geod = Geod(ellps="WGS84")
    total = defaultdict(float)
    for _ in range(rounds):
        start = time.perf_counter()
        table = pd.read_csv(path, engine="c")
        total["read_csv"] += time.perf_counter() - start

        lon, lat = table["lon"].to_numpy(), table["lat"].to_numpy()
        values = table["depth_m"].to_numpy()
        codes = pd.factorize(table["line"])[0]
        start = time.perf_counter()
        _, _, step = geod.inv(lon[:-1], lat[:-1], lon[1:], lat[1:])
        total["Geod.inv"] += time.perf_counter() - start

        bounds = np.flatnonzero(np.concatenate([[True], codes[1:] != codes[:-1], [True]]))
        rows = list(pairwise(bounds))
        distance = np.cumsum(np.concatenate([[0.0], step]))
        start = time.perf_counter()
        uniform = []
        for first, stop in rows:
            grid = np.linspace(distance[first], distance[stop - 1], stop - first)
            uniform.append(np.interp(grid, distance[first:stop], values[first:stop]))
            spectrum = np.abs(np.fft.rfft(uniform[-1])) ** 2
            np.argmax(spectrum[1:])
        total["interp + rfft"] += time.perf_counter() - start

        start = time.perf_counter()
        for series in uniform:
            frames = sliding_window_view(series, WINDOW)[::STRIDE]
            power = np.abs(np.fft.rfft(frames, axis=-1)) ** 2
            np.argmax(power[:, 2:], axis=-1)
        total["windowed rfft"] += time.perf_counter() - start

        start = time.perf_counter()
        for (first, stop), series in zip(rows, uniform, strict=True):
            np.median(np.diff(distance[first:stop]))
            differences = np.diff(series)
            begin = time.perf_counter()
            tapers = dpss(differences.size, 4.0, 7)
            total["dpss"] += time.perf_counter() - begin  # part of "multitaper", also shown alone
            power = np.abs(np.fft.rfft(tapers * differences, axis=-1)) ** 2
            power.mean(axis=0)
        total["multitaper"] += time.perf_counter() - start

        start = time.perf_counter()
        coords = np.column_stack([lon, lat])
        index = np.concatenate([(first + np.arange(0, stop - first - WINDOW, STRIDE)[:, None]
                                 + np.arange(WINDOW + 1)).ravel() for first, stop in rows])
        paths = shapely.linestrings(coords[index], indices=np.arange(index.size) // (WINDOW + 1))
        tracks = shapely.linestrings(coords, indices=codes)
        with tempfile.TemporaryDirectory() as out:
            for name, geometry, columns in (("windows", paths, 23), ("segments", tracks, 37)):
                numbers = np.zeros(geometry.size)
                table = pa.table({**{f"c{i}": numbers for i in range(columns)},
                                  "geometry": shapely.to_wkb(geometry)})
                pq.write_table(table, Path(out) / f"{name}.parquet")
        total["write_table"] += time.perf_counter() - start
    return dict(total)


def bare(paths, repeat: int) -> dict[str, float]:
    """Seconds of the bare lower-bound stages over the same files (best of ``repeat``):
    every stage, ``total`` (all six), ``core`` (the issue's four) and ``without_dpss`` (all six
    but scipy's DPSS eigensolver, which profiles replaces by a faster computation of the same
    tapers: the total a bare pipeline would cost if the tapers were free)."""
    best = None
    for _ in range(repeat):
        total = defaultdict(float)
        for path in paths:
            for stage, seconds in bare_file(path).items():
                total[stage] += seconds
        total["total"] = sum(total[stage] for stage in BARE_OF.values())
        total["core"] = sum(total[name] for name in CORE)
        total["without_dpss"] = total["total"] - total["dpss"]
        if best is None or total["total"] < best["total"]:
            best = dict(total)
    return best


def bare_processes(paths, *, processes: int, rounds: int, repeat: int) -> float:
    """Wall seconds of the bare stages of every file (``rounds`` times each, one job per file)
    on a pool of ``processes`` processes (best of ``repeat``): what the machine gives two
    processes at the moment, against which the batch's two workers are judged."""
    from concurrent.futures import ProcessPoolExecutor
    from functools import partial

    job = partial(bare_file, rounds=rounds)
    best = float("inf")
    with ProcessPoolExecutor(processes) as pool:
        list(pool.map(job, paths[:processes]))  # start the processes, import, warm up
        for _ in range(repeat):
            start = time.perf_counter()
            list(pool.map(job, paths))
            best = min(best, time.perf_counter() - start)
    return best


def end_to_end(paths, options: BatchOptions, *, workers: int, repeat: int):
    """Wall seconds of run_batch on a local cluster (best of ``repeat``) and its records."""
    best, records = None, None
    for _ in range(repeat):
        with tempfile.TemporaryDirectory() as out:
            start = time.perf_counter()
            summary = run_batch(paths, out=out, options=options, workers=workers)
            seconds = time.perf_counter() - start
        assert summary.counts["done"] == len(paths), summary.failures
        if best is None or seconds < best:
            best, records = seconds, summary.files
    return best, records


def worker_peaks(records) -> list[float]:
    """Peak RSS (MB) of each worker process: the largest value any of its tasks reported."""
    peaks: dict[int, float] = {}
    for record in records:
        pid, peak = record["worker"]["pid"], record["worker"]["peak_rss_mb"]
        peaks[pid] = max(peaks.get(pid, 0.0), peak)
    return sorted(peaks.values())


def cluster_start_and_close() -> float:
    """Seconds to start and close the batch's local cluster of 2 workers
    (:func:`profiles.batch.dask_client`; part of every end-to-end run)."""
    from profiles.batch import dask_client

    start = time.perf_counter()
    with dask_client(workers=2, scheduler=None):
        pass
    return time.perf_counter() - start


def memory(every: list[Path], files: int, options: BatchOptions) -> None:
    """Peak RSS per worker (2 workers) for archives of 1x, 2x and 4x ``files`` files."""
    print()
    print("peak RSS per worker (2 workers) against the number of files:")
    for multiple in (1, 2, 4):
        subset = every[: multiple * files]
        seconds, records = end_to_end(subset, options, workers=2, repeat=1)
        print(f"  {len(subset):4d} files ({multiple}x): {seconds:7.2f} s, "
              f"worker peaks {[round(p) for p in worker_peaks(records)]} MB")


def rate(points: int, seconds: float) -> str:
    return f"{points / seconds / 1e6:8.3f} M/s" if seconds > 0 else "       - M/s"


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--files", type=int, default=48)
    parser.add_argument("--lines", type=int, default=10)
    parser.add_argument("--points", type=int, default=10_000, help="stations per line")
    parser.add_argument("--repeat", type=int, default=3, help="rounds (best of, and median of the ratios)")
    parser.add_argument("--skip-memory", action="store_true", help="leave out the 1x/2x/4x memory runs")
    parser.add_argument("--memory-only", action="store_true", help="only the 1x/2x/4x memory runs")
    parser.add_argument("--memory-files", type=int, default=8, help="files of the 1x memory run")
    args = parser.parse_args()
    options = BatchOptions(field="depth_m")

    with tempfile.TemporaryDirectory() as folder:
        every = make_archive(Path(folder) / "archive", files=max(args.files, 4 * args.memory_files),
                             lines=args.lines, points=args.points)
        paths = every[: args.files]
        points = sum(p.read_bytes().count(b"\n") - 1 for p in paths)  # stations (data rows)
        megabytes = sum(p.stat().st_size for p in paths) / 1e6
        print(f"archive: {args.files} files x {args.lines} lines x up to {args.points:,} points = "
              f"{points:,} points ({megabytes:.1f} MB of CSV); {os.cpu_count()} CPUs; best of {args.repeat}")

        if args.memory_only:
            memory(every, args.memory_files, options)
            return
        warm = make_archive(Path(folder) / "warm", files=1, lines=2, points=500)
        in_process(warm, options, 1)  # imports and caches, outside the timings
        peaks = traced_peaks(paths[0], options)
        startup = cluster_start_and_close()
        # The machine's speed drifts by 20 % and more over minutes (a shared host), so every
        # measurement is made once per round, the rounds one after another, and each ratio is
        # also given as the median of the ratios within a round.
        rounds = []
        for _ in range(args.repeat):
            ours, floor = in_process(paths, options, 1), bare(paths, 1)
            one, records_one = end_to_end(paths, options, workers=1, repeat=1)
            two, records_two = end_to_end(paths, options, workers=2, repeat=1)
            # Bare jobs about as long as one task, so that the pool sees the machine as the batch does.
            jobs = max(1, round(ours["total"] / floor["total"]))
            pool_one = bare_processes(paths, processes=1, rounds=jobs, repeat=1)
            pool_two = bare_processes(paths, processes=2, rounds=jobs, repeat=1)
            rounds.append({"ours": ours, "floor": floor, "one": one, "two": two, "records_one": records_one,
                           "records_two": records_two, "pool_one": pool_one, "pool_two": pool_two})
        ours = {stage: min(r["ours"][stage] for r in rounds) for stage in rounds[0]["ours"]}
        floor = {stage: min(r["floor"][stage] for r in rounds) for stage in rounds[0]["floor"]}
        best_one = min(rounds, key=lambda r: r["one"])
        best_two = min(rounds, key=lambda r: r["two"])
        one, records_one = best_one["one"], best_one["records_one"]
        two, records_two = best_two["two"], best_two["records_two"]

        def paired(numerator, denominator) -> str:
            values = [numerator(r) / denominator(r) for r in rounds]
            return f"{np.median(values):.2f} (rounds {', '.join(f'{v:.2f}' for v in values)})"

        print()
        print("stage (one process)   seconds     points/s   traced peak MB (1 file) | bare lower bound"
              "        seconds     points/s   ratio")
        for stage in STAGES:
            name = BARE_OF[stage]
            left = f"{stage:<20} {ours[stage]:8.3f} {rate(points, ours[stage])} {peaks[stage]:12.1f}"
            print(f"{left}             | {name:<20} {floor[name]:8.3f} {rate(points, floor[name])} "
                  f"{ours[stage] / floor[name]:7.1f}")
        for label, key in (("bare total", "total"), ("bare, no scipy DPSS", "without_dpss"),
                           ("bare, issue's stages", "core")):
            print(f"{'all stages':<20} {ours['total']:8.3f} {rate(points, ours['total'])} {'':12} "
                  f"            | {label:<20} {floor[key]:8.3f} {rate(points, floor[key])} "
                  f"{ours['total'] / floor[key]:7.1f}")
        print(f"(of the bare multitaper, scipy's DPSS eigensolver alone: {floor['dpss']:.3f} s)")

        print()
        print(f"local cluster start and close (2 workers): {startup:.2f} s")
        print(f"end to end, 1 worker : {one:8.3f} s {rate(points, one)}   ratio to bare total "
              f"{one / floor['total']:.2f} (target <= 2.0), to the bare total without scipy's DPSS "
              f"{one / floor['without_dpss']:.2f}, to the issue's bare stages {one / floor['core']:.1f}")
        to_total = paired(lambda r: r["one"], lambda r: r["floor"]["total"])
        to_rest = paired(lambda r: r["one"], lambda r: r["floor"]["without_dpss"])
        print(f"  paired within rounds: to bare total {to_total}; without scipy's DPSS {to_rest}")
        print(f"end to end, 2 workers: {two:8.3f} s {rate(points, two)}   ratio to bare total / 2 "
              f"{two / (floor['total'] / 2):.2f}, to the issue's bare stages / 2 "
              f"{two / (floor['core'] / 2):.1f}")
        print(f"end to end, 1 worker / all stages in one process: "
              f"{paired(lambda r: r['one'], lambda r: r['ours']['total'])} "
              f"(what Dask adds: cluster start, worker imports, tasks)")
        print(f"two workers / one worker: {paired(lambda r: r['one'], lambda r: r['two'])} (target >= 1.6 on "
              f"2 cores); the bare stages in two processes / one: "
              f"{paired(lambda r: r['pool_one'], lambda r: r['pool_two'])} (what the machine gives a second "
              f"process)")
        for workers, seconds, records in ((1, one, records_one), (2, two, records_two)):
            busy = sum(r["seconds"]["total"] for r in records)
            first = sum(max(r["seconds"]["total"] for r in records if r["worker"]["pid"] == pid)
                        for pid in {r["worker"]["pid"] for r in records})
            print(f"  {workers} worker(s): tasks busy {busy:.2f} s of {workers} x {seconds:.2f} s "
                  f"({busy / (workers * seconds):.0%}); slowest task per worker (the first, with "
                  f"the imports) {first / workers:.2f} s; peak RSS per worker "
                  f"{[round(p) for p in worker_peaks(records)]} MB")

        if not args.skip_memory:
            memory(every, args.memory_files, options)
    sys.stdout.flush()


if __name__ == "__main__":
    main()
