"""Archive scale: every survey file of an archive analysed on a Dask cluster, one task per file.

The client (this module) finds the files, decides which are already finished, submits one
task per remaining file (:func:`profiles.batch_task.analyse_file`) and collects the small
record each task returns; the tasks read, analyse and write on the workers. Only paths,
options dicts and those records travel; no GeoDataFrame, array of stations or pyproj object
crosses a process boundary.

Output folder
-------------
``segments/part-<id>.parquet`` and ``windows/part-<id>.parquet`` (GeoParquet, EPSG:4326, one
part per input file, written by the task that analysed it) and ``summary.json`` (the counts,
each file's record, the failures and the options), written by the client at the end.

File ids and resuming
---------------------
A file's id is its path relative to the archive root (the common folder of the folders given
and of the folders of the files given), with characters other than letters, digits, ``.``,
``_`` and ``-`` replaced by ``_``, followed by a 10-hex-digit BLAKE2b hash of that relative
path (so ``a b.csv`` and ``a_b.csv`` stay apart). The id is the same on every run with the
same PATHS, wherever the archive is mounted.

A file is finished when its segments part exists under its final name (the windows part is
written first, the segments part last) and the metadata inside that part records the same
options and the same file size and modification time as now. A finished file is skipped; a
file that changed since is analysed again; parts written with other options stop the run
(``--overwrite`` redoes everything). Every part goes to a temporary name in its folder and is
renamed into place (``os.replace``), so no part is ever half-written under its final name;
temporaries left by a killed run are removed when the next run starts. One batch at a time
may write into an output folder.
"""

from __future__ import annotations

import hashlib
import logging
import os
import re
import time
import uuid
from contextlib import contextmanager
from dataclasses import dataclass, field
from pathlib import Path

from .batch_task import (
    SEGMENTS,
    WINDOWS,
    BatchOptions,
    analyse_file,
    one_line,
    part_paths,
    read_part_attrs,
)
from .errors import InputError, OutputError
from .outputs import temporary_name
from .read import TEXT_SUFFIXES, VECTOR_SUFFIXES

SUMMARY = "summary.json"
#: Suffixes of the files a folder search picks up (``.json`` is left out: in a folder it is
#: more often metadata than a GeoJSON layer; name such files explicitly).
SEARCH_SUFFIXES = frozenset((TEXT_SUFFIXES | VECTOR_SUFFIXES) - {".json"})
#: Fate of each file in a run.
STATUSES = ("done", "failed", "skipped", "not run")


@dataclass(frozen=True)
class SurveyFile:
    """One file of an archive.

    Attributes
    ----------
    path : Path
        Absolute path.
    relative : str
        Path relative to the archive root, with ``/`` separators.
    id : str
        Stable id (see the module notes), used in the part names.
    size : int
        Size in bytes when found.
    mtime_ns : int
        Modification time (ns since 1970) when found.
    """

    path: Path
    relative: str
    id: str
    size: int
    mtime_ns: int


@dataclass(frozen=True)
class Archive:
    """The survey files of a batch.

    Attributes
    ----------
    root : Path
        Common folder of the PATHS; file ids are relative to it.
    files : tuple of SurveyFile
        In order of their relative paths.
    """

    root: Path
    files: tuple[SurveyFile, ...]


def file_id(relative: str) -> str:
    """The id of a file from its path relative to the archive root (see the module notes)."""
    readable = re.sub(r"[^A-Za-z0-9._-]+", "_", relative.replace("/", "__"))[-80:].strip("._") or "file"
    digest = hashlib.blake2b(relative.encode("utf-8"), digest_size=5).hexdigest()
    return f"{readable}-{digest}"


def find_survey_files(paths, *, exclude=()) -> Archive:
    """Survey files among ``paths``: files as given, folders searched recursively.

    A folder search takes files whose suffix is in :data:`SEARCH_SUFFIXES`, and leaves out
    hidden files and folders (names starting with ``.``) and everything under ``exclude``
    (the output folder). A file given twice counts once.

    Raises
    ------
    InputError
        A path that does not exist, or no survey file at all.
    """
    paths = [Path(p) for p in paths]
    if not paths:
        raise InputError("no survey file or folder given")
    excluded = {Path(e).resolve() for e in exclude}
    found: dict[Path, None] = {}
    bases = []
    for path in paths:
        if not path.exists():
            raise InputError(f"{path}: no such file or folder")
        resolved = path.resolve()
        if not resolved.is_dir():
            bases.append(resolved.parent)
            found.setdefault(resolved)
            continue
        bases.append(resolved)
        for folder, names, files in os.walk(resolved):
            names[:] = sorted(n for n in names if not n.startswith(".") and Path(folder, n) not in excluded)
            for name in sorted(files):
                candidate = Path(folder, name)
                if (
                    not name.startswith(".")
                    and candidate.suffix.lower() in SEARCH_SUFFIXES
                    and candidate.is_file()
                ):
                    found.setdefault(candidate)
    if not found:
        raise InputError(
            f"{', '.join(map(str, paths))}: no survey files found "
            f"(looked for {', '.join(sorted(SEARCH_SUFFIXES))})"
        )
    root = Path(os.path.commonpath(bases))
    files = []
    for path in found:
        relative = path.relative_to(root).as_posix()
        stat = path.stat()
        files.append(SurveyFile(path, relative, file_id(relative), stat.st_size, stat.st_mtime_ns))
    return Archive(root, tuple(sorted(files, key=lambda f: f.relative)))


@dataclass(frozen=True)
class BatchSummary:
    """What a batch did.

    Attributes
    ----------
    out : Path
        Output folder.
    root : Path
        Archive root.
    options : BatchOptions
    files : tuple of dict
        One JSON-ready record per file, in archive order (see
        :func:`profiles.batch_task.analyse_file`); ``status`` is one of :data:`STATUSES`.
    scheduler : str
        ``"local"`` for a local cluster, else the scheduler's address; ``"none"`` when every
        file was already finished.
    workers : int
        Workers of the cluster (0 when none was started).
    seconds : float
        Wall time of the run.
    interrupted : bool
        Whether the run was interrupted before every file was handled.
    warnings : tuple of str
        About the run itself (parts of files not in this run, ...); each file's own warnings
        are in its record.
    """

    out: Path
    root: Path
    options: BatchOptions
    files: tuple[dict, ...]
    scheduler: str
    workers: int
    seconds: float
    interrupted: bool = False
    warnings: tuple[str, ...] = field(default=())

    @property
    def counts(self) -> dict[str, int]:
        """Files in all and per status: ``files``, ``done``, ``failed``, ``skipped`` (and
        ``not_run`` after an interruption)."""
        counts = {"files": len(self.files)}
        for status in STATUSES:
            number = sum(1 for f in self.files if f["status"] == status)
            if status != "not run" or number:
                counts[status.replace(" ", "_")] = number
        return counts

    @property
    def failures(self) -> list[dict]:
        """``file``, ``reason`` and ``error_type`` of each failed file."""
        return [
            {"file": f["file"], "reason": f["reason"], "error_type": f["error_type"]}
            for f in self.files
            if f["status"] == "failed"
        ]

    @property
    def rows(self) -> dict:
        """Row accounting summed over the files done or skipped."""
        total = {"read": 0, "used": 0, "merged": 0, "dropped": {}}
        for record in self.files:
            rows = record.get("rows")
            if not rows:
                continue
            for key in ("read", "used", "merged"):
                total[key] += rows[key]
            for reason, count in rows["dropped"].items():
                total["dropped"][reason] = total["dropped"].get(reason, 0) + count
        total["dropped"] = dict(sorted(total["dropped"].items()))
        return total

    def to_json(self) -> dict:
        """The document written to ``summary.json``."""
        return {
            "counts": self.counts,
            "rows": self.rows,
            "failures": self.failures,
            "options": self.options.to_json(),
            "root": str(self.root),
            "out": str(self.out),
            "outputs": {name: f"{name}/part-<id>.parquet" for name in (SEGMENTS, WINDOWS)},
            "cluster": {"scheduler": self.scheduler, "workers": self.workers},
            "seconds": self.seconds,
            "interrupted": self.interrupted,
            "versions": _versions(),
            "warnings": list(self.warnings),
            "files": list(self.files),
        }

    def to_frame(self):
        """One row per file: file, id, status, reason, stations, segments, windows, seconds."""
        import pandas as pd

        return pd.DataFrame(
            [
                {
                    "file": f["file"],
                    "id": f["id"],
                    "status": f["status"],
                    "reason": f.get("reason"),
                    "stations": f.get("stations"),
                    "segments": f.get("segments"),
                    "windows": f.get("windows"),
                    "seconds": (f.get("seconds") or {}).get("total"),
                }
                for f in self.files
            ],
            columns=["file", "id", "status", "reason", "stations", "segments", "windows", "seconds"],
        )

    def __str__(self) -> str:
        counts = self.counts
        text = ", ".join(
            f"{name.replace('_', ' ')} {number}" for name, number in counts.items() if name != "files"
        )
        lines = [f"{counts['files']} files: {text} ({self.seconds:.1f} s; results in {self.out})"]
        lines += [f"failed: {f['file']}: {f['reason']}" for f in self.failures]
        if self.interrupted:
            lines.append("interrupted: run the same command again to finish")
        return "\n".join(lines)


def run_batch(
    paths,
    *,
    out: str | Path,
    options: BatchOptions,
    workers: int | None = None,
    scheduler: str | None = None,
    overwrite: bool = False,
    progress: bool = False,
) -> BatchSummary:
    """Analyse every survey file of ``paths`` into ``out``, one Dask task per file.

    Parameters
    ----------
    paths : sequence of path
        Survey files and folders to search (:func:`find_survey_files`).
    out : path
        Output folder (see the module notes).
    options : BatchOptions
        Applied to every file.
    workers : int, optional
        Workers of the local cluster (one thread each, in their own processes); the number
        of CPUs available by default, never more than the files to analyse.
    scheduler : str, optional
        Address of a running Dask scheduler (e.g. ``tcp://10.0.0.5:8786``) to use instead of a
        local cluster. Its workers need ``profiles`` installed and must see the same paths.
    overwrite : bool
        Analyse every file again, replacing its parts.
    progress : bool
        Show a progress bar over the files on stderr.

    Returns
    -------
    BatchSummary
        Also written to ``out/summary.json``.

    Raises
    ------
    InputError
        Bad paths or options, an unreachable scheduler.
    OutputError
        ``out`` holds results of other options (without ``overwrite``), or would overwrite an
        input file.
    """
    from .outputs import OutputFolder

    if workers is not None and scheduler is not None:
        raise InputError("give either --workers or --scheduler, not both")
    if workers is not None and workers < 1:
        raise InputError(f"--workers must be at least 1 (got {workers})")
    started = time.perf_counter()
    out = Path(out)
    archive = find_survey_files(paths, exclude=[out])
    _check_inputs(out, archive)
    folder = OutputFolder(out, [SUMMARY], inputs=[f.path for f in archive.files], overwrite=True)
    _check_summary(out, options, overwrite)
    _remove_temporaries(out)
    key = options.key()
    records, tasks, conflicts = {}, [], []
    for item in archive.files:
        state = None if overwrite else _finished(out, item, key)
        if state == "other options":
            conflicts.append(item.relative)
        elif state is not None:
            records[item.id] = {**state, "status": "skipped"}
        else:
            tasks.append(
                {
                    "path": str(item.path),
                    "file": item.relative,
                    "id": item.id,
                    "size": item.size,
                    "mtime_ns": item.mtime_ns,
                    "out": str(out.resolve()),
                    "options": options.to_json(),
                    "options_key": key,
                }
            )
    if conflicts:
        raise OutputError(
            f"{out}: holds results of {len(conflicts)} files analysed with other options "
            f"(e.g. {conflicts[0]}); use --overwrite to redo them, or another --out folder"
        )
    warnings = _orphans(out, archive)
    where, count, interrupted = "none", 0, False
    try:
        if tasks:
            with dask_client(workers=min(workers or _cpus(), len(tasks)), scheduler=scheduler) as client:
                where = scheduler or "local"
                count = len(client.scheduler_info().get("workers", {}))
                _collect(client, tasks, records, progress=progress)
    except KeyboardInterrupt:
        interrupted = True
        raise
    finally:
        files = tuple(
            records.get(f.id)
            or {"file": f.relative, "id": f.id, "status": "not run", "reason": None, "error_type": None}
            for f in archive.files
        )
        summary = BatchSummary(
            out,
            archive.root,
            options,
            files,
            where,
            count,
            time.perf_counter() - started,
            interrupted,
            tuple(warnings),
        )
        if interrupted or len(records) == len(archive.files):
            folder.json(SUMMARY, summary.to_json())
    return summary


def _collect(client, tasks: list[dict], records: dict, *, progress: bool) -> None:
    """Submit one task per file and gather the records as they complete."""
    from distributed import as_completed

    from .progress import progress as bar

    run = uuid.uuid4().hex[:8]
    futures = client.map(
        analyse_file, tasks, key=[f"profiles-batch-{run}-{t['id']}" for t in tasks], pure=False
    )
    owner = {future.key: task for future, task in zip(futures, tasks, strict=True)}
    pending = as_completed(futures)
    del futures  # each result is released as soon as it is gathered
    for future in bar(pending, description="files", total=len(tasks), quiet=not progress, unit="file"):
        task = owner.pop(future.key)
        try:
            records[task["id"]] = future.result()
        except Exception as error:  # the task itself never raises: the worker was lost
            records[task["id"]] = {
                "file": task["file"],
                "id": task["id"],
                "status": "failed",
                "reason": f"{type(error).__name__}: {one_line(error)}",
                "error_type": type(error).__name__,
                "unexpected": True,
            }


#: Settings of the local cluster's workers. Their statistical profiler (for the dashboard,
#: which the batch does not use) samples every thread's stack every 10 ms; glibc's
#: MALLOC_TRIM_THRESHOLD_, which Dask's nanny sets to 64 KiB by default, also fixes the mmap
#: threshold, so that every large temporary array is mapped and its pages faulted afresh; and
#: the worker's event loop wakes every 20 ms to time itself (admin tick), every 100 ms to
#: read its memory and every 500 ms for the dashboard's system monitor, each time taking the
#: interpreter lock from the thread that runs the task. Together they made the tasks 1.2-1.5x
#: slower in a worker than in a plain process (docs/performance.md). The ticks now come every
#: second (the memory limit is still enforced, a second later at most) and the system
#: monitor every 5 s. A worker holds one file at a time, so the memory the trim threshold
#: returns early is little (the benchmark shows the peak).
LOCAL_WORKER_CONFIG = {
    "distributed.worker.profile.enabled": False,
    "distributed.admin.tick.interval": "1s",
    "distributed.worker.memory.monitor-interval": "1s",
    "distributed.admin.system-monitor.interval": "5s",
    "distributed.nanny.pre-spawn-environ": {
        "OMP_NUM_THREADS": 1,
        "MKL_NUM_THREADS": 1,
        "OPENBLAS_NUM_THREADS": 1,
    },
}


#: Variables Dask's nannies put into the environment before they spawn a worker (by default,
#: ``distributed.nanny.pre-spawn-environ``), kept out of ours (:func:`dask_client`).
DASK_SPAWN_VARIABLES = ("MALLOC_TRIM_THRESHOLD_", "OMP_NUM_THREADS", "MKL_NUM_THREADS",
                        "OPENBLAS_NUM_THREADS")


@contextmanager
def dask_client(*, workers: int, scheduler: str | None):
    """A ``distributed.Client`` on a running scheduler, or on a local cluster of ``workers``
    single-threaded worker processes that is closed on the way out."""
    import dask
    from distributed import Client, LocalCluster

    if scheduler is not None:
        try:
            client = Client(scheduler, timeout="10s")
        except (OSError, TimeoutError, ValueError) as error:
            raise InputError(f"--scheduler {scheduler}: cannot connect ({one_line(error)})") from None
        try:
            yield client
        finally:
            client.close()
        return
    # ":0": the scheduler's HTTP server on any free port, so two clusters never clash.
    # Worker logs are silenced: a worker that loses the scheduler while the cluster closes
    # logs a traceback, and what goes wrong with a file is in its record anyway.
    spawned = LOCAL_WORKER_CONFIG["distributed.nanny.pre-spawn-environ"]
    before = {name: os.environ.get(name) for name in (*spawned, *DASK_SPAWN_VARIABLES)}
    try:
        with dask.config.set(LOCAL_WORKER_CONFIG):
            cluster = LocalCluster(
                n_workers=workers,
                threads_per_worker=1,
                processes=True,
                dashboard_address=":0",
                silence_logs=logging.CRITICAL,
            )
    finally:
        # A nanny writes its pre-spawn variables into this process's environment and leaves
        # them there, where the workers of any later cluster started from this process
        # inherit them: Dask's default MALLOC_TRIM_THRESHOLD_ from an earlier cluster made
        # these workers about 1.7x slower. Put back what was there before.
        for name, value in before.items():
            if value is None:
                os.environ.pop(name, None)
            else:
                os.environ[name] = value
    try:
        client = Client(cluster)
        try:
            yield client
        finally:
            client.close()
    finally:
        cluster.close()


def _finished(out: Path, item: SurveyFile, key: str):
    """The stored record of a finished file, ``"other options"``, or None (to analyse)."""
    segments, windows = part_paths(out, item.id)
    if not (segments.exists() and windows.exists()):
        return None
    attrs = read_part_attrs(segments)
    if attrs is None:
        return None
    if attrs.get("options_key") != key:
        return "other options"
    if (attrs.get("size"), attrs.get("mtime_ns")) != (item.size, item.mtime_ns):
        return None  # the file changed since: analyse it again
    return attrs["record"]


def _check_inputs(out: Path, archive: Archive) -> None:
    """Refuse an input file that lies where parts are written (it could be overwritten)."""
    parts = {(out / SEGMENTS).resolve(), (out / WINDOWS).resolve()}
    for item in archive.files:
        if item.path.parent in parts:
            raise OutputError(f"{item.path}: is in the output folder {out}; choose another --out folder")


def _check_summary(out: Path, options: BatchOptions, overwrite: bool) -> None:
    """Refuse to resume into a folder whose summary records other options."""
    import json

    path = out / SUMMARY
    if overwrite or not path.exists():
        return
    try:
        recorded = json.loads(path.read_text(encoding="utf-8"))["options"]
    except (OSError, ValueError, KeyError, TypeError):
        raise OutputError(
            f"{path}: exists and is not a batch summary; use --overwrite to replace it"
        ) from None
    if recorded != options.to_json():
        changed = sorted(
            k for k in set(recorded) | set(options.to_json()) if recorded.get(k) != options.to_json().get(k)
        )
        raise OutputError(
            f"{out}: holds a batch run with other options ({', '.join(changed)}); "
            f"use --overwrite to redo it, or another --out folder"
        )


def _remove_temporaries(out: Path) -> None:
    """Remove the temporary parts a killed run left behind."""
    for folder in (SEGMENTS, WINDOWS):
        for leftover in (out / folder).glob(temporary_name(Path("part-*.parquet")).name):
            leftover.unlink(missing_ok=True)


def _orphans(out: Path, archive: Archive) -> list[str]:
    """A warning about parts in ``out`` that belong to no file of this run."""
    known = {part_paths(out, f.id)[0].name for f in archive.files}
    others = [p.name for p in (out / SEGMENTS).glob("part-*.parquet") if p.name not in known]
    if not others:
        return []
    return [
        f"{out / SEGMENTS}: {len(others)} parts belong to no file of this run (e.g. {others[0]}); "
        f"remove them, or they are read with the rest"
    ]


def _cpus() -> int:
    try:
        return len(os.sched_getaffinity(0))
    except AttributeError:  # not on Linux
        return os.cpu_count() or 1


def _versions() -> dict:
    """Versions of the libraries the results depend on (provenance)."""
    from importlib.metadata import PackageNotFoundError, version

    found = {}
    for name in (
        "profiles",
        "numpy",
        "scipy",
        "pandas",
        "pyproj",
        "shapely",
        "geopandas",
        "pyarrow",
        "dask",
        "distributed",
    ):
        try:
            found[name] = version(name)
        except PackageNotFoundError:
            found[name] = None
    return found
