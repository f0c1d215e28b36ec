"""Benchmark: along-track windows against a bare batched FFT of the same windows.

Target (windows issue): all windows of one 10^6-sample segment (window 1,024 samples, step
256, about 3,900 windows) within 3x the time of a bare batched real FFT of the same windows
(``sliding_window_view`` then ``numpy.fft.rfft`` along the last axis), both measured in this
run. The script also times the parts, so that a ratio above the target shows where the time
goes. Every function is timed in every round, the rounds interleaved, and the best round of
each is kept (a busy spell of a shared machine then hits all of them alike).

Every numerical library runs one thread per process, as in ``bench_batch.py`` and in the Dask
workers: the bare ``rfft`` is single-threaded, and on a busy two-core machine the thread pools
of numpy's and scipy's BLAS (the matrix-vector sums and the rank-1 line removal of the
transform's finishing pass) can spin against each other and slow those calls many times over.

    python benchmarks/bench_windows.py
    python benchmarks/bench_windows.py --samples 200000 --repeat 5
    python benchmarks/bench_windows.py --detrend mean   # mean removed instead of a line
"""

from __future__ import annotations

import os

for _name in ("OMP_NUM_THREADS", "MKL_NUM_THREADS", "OPENBLAS_NUM_THREADS"):
    os.environ.setdefault(_name, "1")

import argparse  # noqa: E402
import time  # noqa: E402

import numpy as np  # noqa: E402
from numpy.lib.stride_tricks import sliding_window_view  # noqa: E402

from profiles.resample import UniformSegment  # noqa: E402
from profiles.spectral.harmonics import detrended_harmonics  # noqa: E402
from profiles.windows import _local_steps, _rolloff_band, along_track_windows  # noqa: E402


def synthetic_segment(samples: int, spacing: float, seed: int = 0) -> UniformSegment:
    """A resampled segment over irregular stations (steps 200-300 m, about one per sample):
    a 10 km fabric, a random walk (red background) and white noise."""
    rng = np.random.default_rng(seed)
    length = (samples - 1) * spacing
    station = np.concatenate([[0.0], np.cumsum(rng.uniform(200.0, 300.0, int(length / 200.0) + 10))])
    station = station[station < length]
    station = np.append(station, length)
    distance = spacing * np.arange(samples)
    values = (200.0 * np.cos(2 * np.pi * distance / 10_000.0) + np.cumsum(rng.normal(0.0, 1.0, samples))
              + rng.normal(0.0, 10.0, samples))
    return UniformSegment(
        line="BENCH", number=1, field="depth_m", start=0.0, spacing=spacing, values=values,
        lon=np.linspace(-20.0, 0.0, samples), lat=np.zeros(samples), station_distance=station,
        interpolation="linear", lowpassed=False,
    )


def timings(functions: dict, repeat: int) -> dict:
    """Seconds per call of every function, ``repeat`` rounds, the functions interleaved in
    each round so that a busy spell of a shared machine hits them alike."""
    times = {name: [] for name in functions}
    for _ in range(repeat):
        for name, function in functions.items():
            start = time.perf_counter()
            function()
            times[name].append(time.perf_counter() - start)
    return {name: np.array(values) for name, values in times.items()}


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--samples", type=int, default=1_000_000)
    parser.add_argument("--window", type=int, default=1024, help="window length in samples")
    parser.add_argument("--step", type=int, default=256, help="step in samples")
    parser.add_argument("--repeat", type=int, default=15)
    parser.add_argument("--detrend", choices=("linear", "mean"), default="linear")
    args = parser.parse_args()
    spacing = 250.0
    track = synthetic_segment(args.samples, spacing)
    frames = sliding_window_view(track.values, args.window)[:: args.step]
    count = frames.shape[0]

    def bare():
        np.fft.rfft(frames, axis=-1)

    def ours():
        along_track_windows(track, window=args.window * spacing, step=args.step * spacing,
                            shortest_wavelength=4000.0, detrend=args.detrend)

    # Parts, for the record: the windows' own stages on the same windows.
    start = track.start + spacing * args.step * np.arange(count)
    end = start + (args.window - 1) * spacing
    median, _ = _local_steps(track.station_distance, start, end)
    band = _rolloff_band(args.window, np.full(count, spacing), 2.0 * median)
    parts = {
        "local station spacing, median and maximum (ranges.range_median_and_maximum)": lambda: _local_steps(
            track.station_distance, start, end),
        "transform, line, per-window sums (spectral.harmonics.detrended_harmonics)":
            lambda: detrended_harmonics(frames, detrend=args.detrend, peak_from=2, band=band,
                                        keep_power=False),
    }
    functions = {"bare": bare, "ours": ours, **parts}
    for function in functions.values():  # imports and caches (scipy, the centred-index transform)
        function()
    times = timings(functions, args.repeat)
    t_bare, t_ours = times["bare"].min(), times["ours"].min()
    print(f"segment: {args.samples:,} samples; {count:,} windows of {args.window} samples, step {args.step}, "
          f"detrend {args.detrend}; best of {args.repeat} interleaved rounds")
    print(f"bare rfft of the windows:   {1e3 * t_bare:8.2f} ms")
    print(f"profiles windows:           {1e3 * t_ours:8.2f} ms")
    for name in parts:
        t_part = times[name].min()
        print(f"  {name}: {1e3 * t_part:.2f} ms ({t_part / t_bare:.2f} x bare)")
    rounds = times["ours"] / times["bare"]
    print(f"ratio: {t_ours / t_bare:.2f}  (median of paired rounds {np.median(rounds):.2f}; target <= 3.0)")


if __name__ == "__main__":
    main()
