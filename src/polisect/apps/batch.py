"""Folder batches: every image of a folder analysed in parallel, surviving bad files and kills.

`run_batch` finds the images under a folder (recursively), analyses each one in a local
process pool (or on a Dask distributed cluster) and writes, in the output folder:

* per image, the outputs of `polisect.apps.run.run_section` (written as a whole set), in
  ``sections/<relative folder>/``;
* ``manifest.json`` (atomic): for every input its content hash, the configuration hash,
  its status (``done`` / ``failed`` with a one-line reason) and its output paths;
* ``summary.csv`` (one row of headline numbers per image), ``failures.csv`` and
  ``index.html`` linking every report;
* ``measured.csv`` when the batch has measured values: each beside the batch mean of the
  computed values at its temperature (`polisect.apps.measured`). They come from the run
  configuration's ``[[measured]]`` and from a measured-values file next to the images
  (`polisect.read.config.MEASURED_FILE`, ``measured.toml``: it covers the images of its
  folder and subfolders, the nearest one winning; an entry of the configuration wins over
  the file's for the same property and temperature). The file is read before any image is
  analysed; a malformed one stops the batch with an error naming the file and the entry.

A corrupt or unreadable image is recorded as failed and the batch goes on. Killed at any
moment and run again with ``resume=True``, the batch redoes nothing that is done: an image
is skipped when the manifest says done, its content hash and the configuration hash are
unchanged and its outputs exist. A changed image or configuration is redone. An image
that failed on bad input (a corrupt file, a label without a phase) stays failed until it or
the configuration changes; one whose worker died or hit an internal error is tried again.
To spare reading every image again, the stored content hash is
reused while the file's size and modification time are unchanged (as version-control
tools do); any change to either makes the image be hashed again.

Examples
--------
>>> Grouping.parse(r"(?P<batch>lot\\d+)_").group("/data/lot12_s3.tif")
'lot12'
"""

from __future__ import annotations

import dataclasses
import datetime as _dt
import fnmatch
import hashlib
import html
import json
import math
import multiprocessing
import os
import re
import sys
import time
from concurrent.futures import ProcessPoolExecutor, as_completed
from concurrent.futures.process import BrokenProcessPool
from dataclasses import dataclass, field
from typing import Iterable, Iterator


from .. import __version__
from ..core.atomic import atomic_write_text
from ..read.config import MEASURED_FILE, Config, MeasuredValue, read_measured_file
from ..core.errors import InputError
from ..present.htmlkit import CAUTION_MANY_SECTION, grid, page
from ..present.units import column_words, number
from ..core.quantities import quantity_keys
from ..present.record import csv_text, headline, read_result
from .measured import batch_measured, computed_of, html_measured, measured_dict
from .run import run_section

MANIFEST = "manifest.json"
MANIFEST_SCHEMA = "polisect.batch-manifest/1"
SECTIONS_DIR = "sections"
LOCK = ".polisect-batch.lock"
UNMATCHED = "(unmatched)"


# ------------------------------------------------------------------------------ grouping

@dataclass(frozen=True)
class Grouping:
    """How images are assigned to batches: by folder, or by a regex on the file name.

    Attributes
    ----------
    regex : re.Pattern or None
        ``None``: by folder. Otherwise a pattern with a named group ``batch``, searched in
        the file name; images it does not match belong to the batch ``"(unmatched)"``.
    """

    regex: re.Pattern | None = None

    @classmethod
    def parse(cls, text: str | None) -> "Grouping":
        """``None`` or ``"folder"`` → by folder; anything else is a regular expression.

        Raises
        ------
        InputError
            When the regex does not compile or has no ``(?P<batch>...)`` group.
        """
        if text is None or text == "folder":
            return cls(None)
        try:
            regex = re.compile(text)
        except re.error as exc:
            raise InputError(f"--group-by {text!r} is not a valid regular expression ({exc}); "
                             "give folder or a regex with (?P<batch>...)") from None
        if "batch" not in regex.groupindex:
            raise InputError(f"--group-by {text!r} has no named group (?P<batch>...); e.g. "
                             "--group-by '(?P<batch>[A-Z]+\\d+)_' puts K12_s1.tif in batch K12")
        return cls(regex)

    def group(self, path: str, root: str | None = None) -> str:
        """The batch of an image.

        By folder: the image's folder relative to *root* (``a/b``), or *root*'s own name for
        images directly in it; without *root*, the name of the folder holding the image.
        """
        if self.regex is not None:
            m = self.regex.search(os.path.basename(path))
            return m.group("batch") if m and m.group("batch") else UNMATCHED
        if root is not None:
            rel = os.path.relpath(os.path.dirname(os.path.abspath(path)), os.path.abspath(root))
            if rel != ".":
                return rel.replace(os.sep, "/")
            return os.path.basename(os.path.normpath(os.path.abspath(root))) or "batch"
        return os.path.basename(os.path.dirname(os.path.abspath(path))) or "batch"


# ----------------------------------------------------------------------------- discovery

def discover(folder: str | os.PathLike, pattern: str = "*.tif", *,
             exclude: Iterable[str | os.PathLike] = ()) -> list[str]:
    """Image files under *folder*, recursively, as sorted POSIX paths relative to it.

    Parameters
    ----------
    folder : path
    pattern : str
        Shell pattern(s) on the file name, comma-separated, case-insensitive
        (``"*.tif,*.png"``).
    exclude : paths
        Folders not to enter (the batch's own output folder).

    Returns
    -------
    list of str
        Hidden files and folders (names starting with ``.``) are skipped.
    """
    folder = os.fspath(folder)
    if not os.path.isdir(folder):
        raise InputError(f"{folder}: not a folder; give the folder that holds the images")
    patterns = [p.strip().lower() for p in str(pattern).split(",") if p.strip()]
    if not patterns:
        raise InputError("--pattern is empty; give e.g. \"*.tif\"")
    skip = {os.path.realpath(os.fspath(e)) for e in exclude}
    found = []
    for root, dirs, files in os.walk(folder):
        dirs[:] = sorted(d for d in dirs if not d.startswith(".")
                         and os.path.realpath(os.path.join(root, d)) not in skip)
        for name in files:
            if name.startswith(".") or not any(fnmatch.fnmatchcase(name.lower(), p)
                                               for p in patterns):
                continue
            rel = os.path.relpath(os.path.join(root, name), folder)
            found.append(rel.replace(os.sep, "/"))
    return sorted(found)


def file_sha256(path: str | os.PathLike, chunk: int = 1 << 20) -> str:
    """SHA-256 of a file's content (hex)."""
    h = hashlib.sha256()
    with open(path, "rb") as f:
        while block := f.read(chunk):
            h.update(block)
    return h.hexdigest()


# ------------------------------------------------------------------------------ settings

@dataclass(frozen=True)
class Settings:
    """What every image of a batch is analysed with (sent to the workers)."""

    config: object
    pixel_size_um: float | None = None

    def sha256(self) -> str:
        """Hash of everything that changes the outputs (the config file's path excluded)."""
        cfg = dataclasses.replace(self.config, source="")
        text = json.dumps({"config": repr(cfg), "pixel_size_um": self.pixel_size_um},
                          sort_keys=True)
        return hashlib.sha256(text.encode("utf-8")).hexdigest()


@dataclass(frozen=True)
class Task:
    """One image to analyse."""

    rel: str
    path: str
    group: str
    sha256: str
    out_dir: str
    stem: str


def analyze_one(task: Task, settings: Settings) -> dict:
    """Analyse one image and write its outputs; never raises for a bad image.

    Returns
    -------
    dict
        ``status`` (``"done"`` / ``"failed"``), ``reason`` (one line, empty when done),
        ``retry`` (False when the input itself is bad: trying again cannot help),
        ``outputs`` (file paths), ``seconds``.
    """
    t0 = time.perf_counter()
    try:
        _, paths = run_section(task.path, settings.config, task.out_dir, stem=task.stem,
                               pixel_size_um=settings.pixel_size_um)
        outputs = paths.files()
        return {"status": "done", "reason": "", "retry": False, "outputs": outputs,
                "seconds": time.perf_counter() - t0}
    except InputError as exc:
        return {"status": "failed", "reason": one_line(str(exc)), "retry": False,
                "outputs": {}, "seconds": time.perf_counter() - t0}
    except MemoryError:
        reason = "out of memory while analysing this image; run it alone or with fewer --jobs"
    except Exception as exc:  # noqa: BLE001 - a bad image must not stop the batch
        reason = f"internal error {type(exc).__name__}: {exc}"
    return {"status": "failed", "reason": one_line(reason), "retry": True, "outputs": {},
            "seconds": time.perf_counter() - t0}


def one_line(text: str, limit: int = 300) -> str:
    """The first line of *text*, at most *limit* characters."""
    line = " ".join(str(text).strip().splitlines()[:1]) or "no reason given"
    return line if len(line) <= limit else line[:limit - 1] + "…"


# ------------------------------------------------------------------------------ manifest

def read_manifest(out: str | os.PathLike) -> dict | None:
    """The manifest of a batch output folder, or None when there is none."""
    path = os.path.join(os.fspath(out), MANIFEST)
    if not os.path.exists(path):
        return None
    try:
        with open(path, encoding="utf-8") as f:
            d = json.load(f)
    except (OSError, ValueError) as exc:
        raise InputError(f"{path}: unreadable batch manifest ({exc}); remove it to start "
                         "the batch afresh") from None
    if d.get("schema") != MANIFEST_SCHEMA:
        raise InputError(f"{path}: not a polisect batch manifest (schema "
                         f"{d.get('schema')!r}); use another --out folder")
    return d


def _write_manifest(out: str, manifest: dict) -> None:
    atomic_write_text(os.path.join(out, MANIFEST), json.dumps(manifest, indent=1) + "\n")


class _Lock:
    """One batch at a time per output folder: a lock file holding the process id and the
    process's start time, so that a lock left by a killed batch whose id was since given to
    another process is known to be stale."""

    def __init__(self, out: str):
        self.path = os.path.join(out, LOCK)

    def __enter__(self):
        for _ in range(2):
            try:
                fd = os.open(self.path, os.O_CREAT | os.O_EXCL | os.O_WRONLY)
            except FileExistsError:
                pid, started = self._holder()
                if pid is not None and _alive(pid) and started in (None, _start_time(pid)):
                    raise InputError(f"another polisect batch (process {pid}) is writing into "
                                     f"{os.path.dirname(self.path)}; wait for it or use another "
                                     f"--out folder (if no batch is running, delete the lock "
                                     f"file {self.path})") from None
                try:
                    os.unlink(self.path)
                except FileNotFoundError:
                    pass
                continue
            with os.fdopen(fd, "w") as f:
                f.write(f"{os.getpid()} {_start_time(os.getpid()) or ''}".strip())
            return self
        raise InputError(f"cannot take the lock file {self.path}; delete it if no batch is "
                         "running")

    def _holder(self) -> tuple[int | None, str | None]:
        """Process id and start time recorded in the lock (start time None if not recorded)."""
        try:
            with open(self.path) as f:
                parts = f.read().split()
            return (int(parts[0]) or None if parts else None), \
                (parts[1] if len(parts) > 1 else None)
        except (OSError, ValueError):
            return None, None

    def __exit__(self, *exc):
        try:
            os.unlink(self.path)
        except FileNotFoundError:
            pass


def _start_time(pid: int) -> str | None:
    """When process *pid* started, in clock ticks since boot (Linux ``/proc``); None where
    that cannot be read."""
    try:
        with open(f"/proc/{pid}/stat") as f:
            return f.read().rsplit(")", 1)[1].split()[19]
    except (OSError, IndexError):
        return None


def _alive(pid: int) -> bool:
    """Whether process *pid* runs (a killed process not yet reaped by its parent does not)."""
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    try:
        with open(f"/proc/{pid}/stat") as f:
            return f.read().rsplit(")", 1)[1].split()[0] != "Z"
    except (OSError, IndexError):
        return True


def _remove_stale_temporaries(out: str) -> int:
    """Delete the temporary files an atomic write leaves behind when killed (``.tmp-*``)."""
    removed = 0
    for root, _dirs, files in os.walk(out):
        for name in files:
            if name.startswith(".tmp-"):
                try:
                    os.unlink(os.path.join(root, name))
                    removed += 1
                except FileNotFoundError:
                    pass
    return removed


# ------------------------------------------------------------------------------ progress

class ProgressBar:
    """A progress bar on a stream: counts, failures, rate and time left.

    On a terminal the bar redraws in place; otherwise (a log file, CI) a line is printed
    at most every *interval* seconds and at the end.
    """

    def __init__(self, total: int, skipped: int = 0, stream=None, quiet: bool = False,
                 interval: float = 5.0):
        self.total, self.skipped = total, skipped
        self.stream = stream if stream is not None else sys.stderr
        self.quiet = quiet
        self.tty = bool(getattr(self.stream, "isatty", lambda: False)())
        self.interval = interval
        self.t0 = time.perf_counter()
        self.last = -math.inf
        self.done = self.failed = 0

    def update(self, status: str) -> None:
        if status == "done":
            self.done += 1
        else:
            self.failed += 1
        self.draw()

    def line(self) -> str:
        finished = self.done + self.failed
        todo = self.total - self.skipped
        elapsed = time.perf_counter() - self.t0
        width = 24
        filled = int(round(width * (self.skipped + finished) / max(self.total, 1)))
        bar = "█" * filled + "░" * (width - filled)
        parts = [f"[{bar}] {self.skipped + finished}/{self.total}"]
        if self.skipped:
            parts.append(f"{self.skipped} from before")
        parts.append(f"{self.failed} failed")
        if finished:
            rate = finished / elapsed
            left = (todo - finished) / rate if rate > 0 else math.inf
            parts.append(f"{rate:.2g} img/s")
            parts.append(f"{_clock(left)} left" if finished < todo else f"took {_clock(elapsed)}")
        return " · ".join(parts)

    def draw(self, final: bool = False) -> None:
        if self.quiet:
            return
        now = time.perf_counter()
        if self.tty:
            self.stream.write("\r" + self.line() + ("\n" if final else ""))
            self.stream.flush()
        elif final or now - self.last >= self.interval:
            self.stream.write(self.line() + "\n")
            self.stream.flush()
            self.last = now


def _clock(seconds: float) -> str:
    if not math.isfinite(seconds):
        return "?"
    s = int(round(seconds))
    if s >= 3600:
        return f"{s // 3600}:{s % 3600 // 60:02d}:{s % 60:02d}"
    return f"{s // 60}:{s % 60:02d}"


# ------------------------------------------------------------------------------ executors

def _worker_init(threads: int, parent: int) -> None:
    """Tie the worker's life to the batch process *parent* and limit its threads so that
    jobs × threads matches the cores."""
    _die_with(parent)
    for var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS",
                "POLISECT_THREADS"):
        os.environ[var] = str(threads)
    # numba's own limit is set through its API only: changing NUMBA_NUM_THREADS in the
    # environment after its thread pool started makes the next compilation fail.
    import numba

    numba.set_num_threads(min(threads, numba.config.NUMBA_NUM_THREADS))


PR_SET_PDEATHSIG = 1  # linux/prctl.h


def _die_with(parent: int, kernel: bool = True) -> None:
    """End this worker when the batch process ends, however it ends (killed included).

    On Linux the kernel sends SIGKILL when the worker's parent exits (``PR_SET_PDEATHSIG``):
    the parent is the forkserver, which exits when the batch process does. Elsewhere, and
    as a guard against the batch process ending before this ran, a daemon thread checks
    every 0.2 s that *parent* is still alive (the only guard when *kernel* is False).
    """
    import signal
    import threading

    if kernel and sys.platform.startswith("linux"):
        import ctypes

        try:
            ctypes.CDLL(None, use_errno=True).prctl(PR_SET_PDEATHSIG, int(signal.SIGKILL), 0, 0, 0)
        except (OSError, AttributeError):
            pass
    started = _start_time(parent)

    def watch():
        while _alive(parent) and _start_time(parent) == started:
            time.sleep(0.2)
        os._exit(1)

    threading.Thread(target=watch, name="polisect-parent-watch", daemon=True).start()


def _local_results(tasks: list[Task], settings: Settings, jobs: int, work=analyze_one
                   ) -> Iterator[tuple[Task, dict]]:
    """Run the tasks in a process pool; a worker that dies fails only the image it had.

    When a worker dies (a crash in a library, the kernel's out-of-memory killer), the pool
    is lost with every unfinished task. Those are then run one at a time in a fresh pool
    until the crash recurs, which names the image that causes it (recorded as failed);
    after that, or after ``jobs + 2`` images without a crash, the pool runs in parallel
    again. *work* is the function run per task (`analyze_one`).
    """
    threads = max(1, (os.cpu_count() or 1) // jobs)
    todo = list(tasks)
    careful = 0
    while todo:
        pool = worker_pool(1 if careful else jobs, threads)
        try:
            if careful:
                while todo and careful:
                    task = todo.pop(0)
                    try:
                        rec = pool.submit(work, task, settings).result()
                        careful -= 1
                    except BrokenProcessPool:
                        rec, careful = _died(task), 0
                    yield task, rec
                    if careful == 0:
                        break
                continue
            futures = [(pool.submit(work, t, settings), t) for t in todo]
            owner = dict(futures)
            yielded = set()
            try:
                for fut in as_completed(owner):
                    rec = fut.result()
                    yielded.add(owner[fut].rel)
                    yield owner[fut], rec
                todo = []
            except BrokenProcessPool:
                for fut, task in futures:
                    if task.rel not in yielded and fut.done() and fut.exception() is None:
                        yielded.add(task.rel)
                        yield task, fut.result()
                todo = [t for _, t in futures if t.rel not in yielded]
                careful = jobs + 2
        finally:
            pool.shutdown(wait=False, cancel_futures=True)


def worker_pool(jobs: int, threads: int):
    """A process pool of *jobs* workers with *threads* threads each. Where the platform has
    it, workers fork from a server process that imported the pipeline once
    (``forkserver``): later pools and restarted workers start warm. Elsewhere they are
    spawned afresh. Each worker dies with this process."""
    if "forkserver" in multiprocessing.get_all_start_methods():
        ctx = multiprocessing.get_context("forkserver")
        ctx.set_forkserver_preload(["polisect.apps.run"])
    else:
        ctx = multiprocessing.get_context("spawn")
    return ProcessPoolExecutor(max_workers=jobs, mp_context=ctx, initializer=_worker_init,
                               initargs=(threads, os.getpid()))


def _died(task: Task) -> dict:
    return {"status": "failed", "outputs": {}, "seconds": 0.0, "retry": True,
            "reason": "the worker process died while analysing this image (out of memory or "
                      "a crash in a library); run it alone with polisect analyze"}


def _dask_results(tasks: list[Task], settings: Settings, address
                  ) -> Iterator[tuple[Task, dict]]:
    """Run the tasks on a Dask distributed cluster (the images and the output folder must be
    on a file system every worker sees)."""
    try:
        from distributed import Client, as_completed
    except ImportError:
        raise InputError("--scheduler needs Dask distributed: pip install 'polisect[dask]'") \
            from None
    client = address if isinstance(address, Client) else None
    own = client is None
    if own:
        try:
            client = Client(address, timeout="20s")
        except (OSError, TimeoutError) as exc:
            raise InputError(f"cannot reach the Dask scheduler at {address} ({exc}); check "
                             "the address (tcp://host:8786) and that the scheduler runs") \
                from None
    try:
        futures = {}
        for t in tasks:
            fut = client.submit(analyze_one, t, settings, pure=False,
                                key=f"polisect-{hashlib.sha1(t.rel.encode()).hexdigest()[:12]}"
                                    f"-{t.sha256[:12]}")
            futures[fut.key] = (fut, t)
        for fut in as_completed([f for f, _ in futures.values()]):
            task = futures[fut.key][1]
            try:
                yield task, fut.result()
            except Exception as exc:  # noqa: BLE001 - a killed worker fails its image only
                yield task, {"status": "failed", "outputs": {}, "seconds": 0.0, "retry": True,
                             "reason": one_line(f"the Dask worker failed on this image: "
                                                f"{type(exc).__name__}: {exc}")}
    finally:
        if own:
            client.close()


# ------------------------------------------------------------------------------ the batch

@dataclass(frozen=True)
class BatchResult:
    """What a batch run did.

    Attributes
    ----------
    out : str
        Output folder.
    total, done, failed, skipped : int
        Images found; done (now or before); failed; not analysed again because a previous
        run finished them (resume: done, or failed on bad input).
    seconds : float
        Wall time of the run.
    analysis_seconds : float
        Sum of the per-image times measured inside the workers (this run).
    manifest, summary_csv, failures_csv, index_html : str
        Paths written.
    notes : tuple of str
        What the user should know about this run (temporary files a killed run left, images
        gone since the last run, names the --group-by regex does not match).
    measured : dict
        Batch → its measured values beside the batch means
        (`polisect.trust.measured.BatchMeasured`); empty without measured values.
    measured_csv : str or None
        Path of measured.csv, when written.
    """

    out: str
    total: int
    done: int
    failed: int
    skipped: int
    seconds: float
    analysis_seconds: float
    manifest: str
    summary_csv: str
    failures_csv: str
    index_html: str
    notes: tuple[str, ...] = field(default_factory=tuple)
    measured: dict = field(default_factory=dict)
    measured_csv: str | None = None


def run_batch(folder: str | os.PathLike, out: str | os.PathLike, *, config=None,
              pattern: str = "*.tif", jobs: int = 1, scheduler=None, resume: bool = False,
              group_by: str | None = None, pixel_size_um: float | None = None,
              quiet: bool = False,
              stream=None) -> BatchResult:
    """Analyse every image under *folder* into *out*.

    Parameters
    ----------
    folder : path
        Searched recursively for *pattern*.
    out : path
        Output folder (may lie inside *folder*; it is not searched).
    config : Config, optional
        The run configuration for every image (default: `polisect.read.config.Config()`).
    pattern : str
        File-name pattern(s), comma-separated, case-insensitive.
    jobs : int
        Worker processes of the local pool (ignored with *scheduler*).
    scheduler : str or distributed.Client, optional
        A Dask scheduler address (``tcp://host:8786``) or client: run there instead.
    resume : bool
        Keep what a previous run into *out* finished (see the module notes); without it
        every image is analysed again.
    group_by : str, optional
        ``"folder"`` (default) or a regex with ``(?P<batch>...)`` on the file name.
    pixel_size_um : float, optional
        Pixel size override for every image.
    quiet : bool
        No progress bar.
    stream : file, optional
        Where the progress bar goes (default stderr).

    Returns
    -------
    BatchResult

    Notes
    -----
    Local workers fork from a server process that imported the pipeline once (spawned
    afresh where the platform has no ``forkserver``); a script that calls `run_batch`
    must do so under ``if __name__ == "__main__":``, as multiprocessing requires.
    """
    t_start = time.perf_counter()
    folder, out = os.path.abspath(os.fspath(folder)), os.path.abspath(os.fspath(out))
    if not isinstance(jobs, int) or jobs < 1:
        raise InputError(f"--jobs {jobs!r}: give a whole number of worker processes ≥ 1")
    grouping = Grouping.parse(group_by)
    settings = Settings(config or Config(), pixel_size_um)
    config_sha = settings.sha256()
    rels = discover(folder, pattern, exclude=[out])
    if not rels:
        raise InputError(f"no files matching {pattern!r} under {folder}; check --pattern "
                         "(e.g. \"*.tif,*.png\") and the folder")
    os.makedirs(out, exist_ok=True)
    with _Lock(out):
        notes = []
        removed = _remove_stale_temporaries(out)
        if removed:
            notes.append(f"removed {removed} temporary file(s) a killed run had left")
        previous = read_manifest(out) if resume else None
        old = (previous or {}).get("entries", {})
        tasks, entries, skipped = _plan(folder, out, rels, grouping, config_sha, old)
        files = measured_files(folder, rels)
        for rel, entry in entries.items():
            entry.pop("measured_file", None)
            if files[0].get(rel):
                entry["measured_file"] = files[0][rel]
        gone = sorted(set(old) - set(rels))
        if gone:
            notes.append(f"{len(gone)} image(s) of the previous run are no longer in the folder "
                         "and left out of the tables")
        unmatched = sum(e["group"] == UNMATCHED for e in entries.values())
        if unmatched:
            notes.append(f"{unmatched} image name(s) do not match --group-by {group_by!r}: "
                         f"batch {UNMATCHED}")
        manifest = {"schema": MANIFEST_SCHEMA, "polisect_version": __version__,
                    "folder": folder, "pattern": pattern,
                    "group_by": group_by or "folder", "config_sha256": config_sha,
                    "config_source": getattr(settings.config, "source", ""),
                    "measured_files": files[1], "started": _now(), "entries": entries}
        _write_manifest(out, manifest)
        bar = ProgressBar(len(rels), skipped, stream=stream, quiet=quiet)
        bar.draw()
        analysis_s = 0.0
        last_write = time.perf_counter()
        results = (_dask_results(tasks, settings, scheduler) if scheduler is not None
                   else _local_results(tasks, settings, jobs)) if tasks else iter(())
        try:
            for task, rec in results:
                entry = entries[task.rel]
                entry.update(status=rec["status"], reason=rec["reason"], retry=rec["retry"],
                             seconds=rec["seconds"], finished=_now(),
                             outputs={k: os.path.relpath(v, out).replace(os.sep, "/")
                                      for k, v in rec["outputs"].items()})
                analysis_s += rec["seconds"]
                bar.update(rec["status"])
                if time.perf_counter() - last_write >= 1.0:
                    _write_manifest(out, manifest)
                    last_write = time.perf_counter()
        finally:
            manifest["finished"] = _now()
            _write_manifest(out, manifest)
        bar.draw(final=True)
        measured = measured_table(out, manifest)
        paths = write_tables(out, manifest, measured)
        measured_csv = write_measured_csv(out, measured)
    counts = _counts(entries)
    return BatchResult(out, len(rels), counts["done"], counts["failed"], skipped,
                       time.perf_counter() - t_start, analysis_s,
                       os.path.join(out, MANIFEST), *paths, notes=tuple(notes),
                       measured=measured, measured_csv=measured_csv)


def _plan(folder: str, out: str, rels: list[str], grouping: Grouping, config_sha: str,
          old: dict) -> tuple[list[Task], dict, int]:
    """The tasks to run, the manifest entries and the number of images kept from before."""
    stems = _stems(rels)
    tasks, entries, skipped = [], {}, 0
    for rel in rels:
        path = os.path.join(folder, *rel.split("/"))
        st = os.stat(path)
        prev = old.get(rel)
        same_stat = (prev is not None and prev.get("size") == st.st_size
                     and prev.get("mtime_ns") == st.st_mtime_ns)
        sha = prev["sha256"] if same_stat else file_sha256(path)
        group = grouping.group(path, folder)
        if prev and prev.get("sha256") == sha and prev.get("config_sha256") == config_sha \
                and (prev.get("status") == "done" and _outputs_ok(out, prev["outputs"])
                     or prev.get("status") == "failed" and prev.get("retry") is False):
            entries[rel] = {**prev, "group": group}
            skipped += 1
            continue
        sub = os.path.dirname(rel)
        out_dir = os.path.join(out, SECTIONS_DIR, *sub.split("/")) if sub \
            else os.path.join(out, SECTIONS_DIR)
        tasks.append(Task(rel, path, group, sha, out_dir, stems[rel]))
        entries[rel] = {"path": path, "group": group, "sha256": sha, "size": st.st_size,
                        "mtime_ns": st.st_mtime_ns, "config_sha256": config_sha,
                        "status": "pending", "reason": "", "outputs": {}}
    return tasks, entries, skipped


def _stems(rels: list[str]) -> dict[str, str]:
    """Output stem per image: the file stem, or the whole name when two share a stem."""
    by_key: dict[tuple[str, str], list[str]] = {}
    for rel in rels:
        folder, name = os.path.split(rel)
        by_key.setdefault((folder, os.path.splitext(name)[0]), []).append(rel)
    out = {}
    for (_folder, stem), members in by_key.items():
        for rel in members:
            out[rel] = stem if len(members) == 1 else os.path.basename(rel).replace(".", "_")
    return out


def _outputs_ok(out: str, outputs: dict) -> bool:
    """Every output file is there and the result JSON reads back."""
    if not outputs.get("json") or not all(os.path.exists(os.path.join(out, p))
                                          for p in outputs.values()):
        return False
    try:
        read_result(os.path.join(out, outputs["json"]))
    except (OSError, ValueError, InputError):
        return False
    return True


def _counts(entries: dict) -> dict:
    c = {"done": 0, "failed": 0, "pending": 0}
    for e in entries.values():
        c[e["status"]] = c.get(e["status"], 0) + 1
    return c


def _now() -> str:
    return _dt.datetime.now(_dt.timezone.utc).isoformat(timespec="seconds")


# ------------------------------------------------------------------------------ tables

def summary_rows(out: str, manifest: dict) -> tuple[list[dict], list[dict]]:
    """Rows of summary.csv (done images, headline numbers) and failures.csv, sorted by path."""
    rows, failures = [], []
    for rel in sorted(manifest["entries"]):
        e = manifest["entries"][rel]
        if e["status"] == "done":
            result = read_result(os.path.join(out, e["outputs"]["json"]))
            row = {"image": rel, "batch": e["group"], **headline(result)}
            if result.windows:
                row["window_verdict_enough"] = all(q.enough is not False
                                                   for q in result.windows.quantities.values())
            rows.append(row)
        else:
            failures.append({"image": rel, "batch": e["group"], "status": e["status"],
                             "reason": e["reason"] or "not finished (interrupted)"})
    return rows, failures


def measured_files(folder: str, rels: list[str]) -> tuple[dict, dict]:
    """The measured-values files of a batch folder: image → the file covering it (relative
    paths; the nearest `MEASURED_FILE` in its folder or a parent up to *folder*), and file →
    its entries as plain tables (read and checked by `read_measured_file`)."""
    found: dict[str, str | None] = {}
    covering, tables = {}, {}
    for rel in rels:
        parts = rel.split("/")[:-1]
        for depth in range(len(parts), -1, -1):
            sub = "/".join(parts[:depth])
            if sub not in found:
                name = f"{sub}/{MEASURED_FILE}" if sub else MEASURED_FILE
                found[sub] = name if os.path.isfile(os.path.join(folder, *name.split("/"))) \
                    else None
            if found[sub]:
                covering[rel] = found[sub]
                break
    for name in sorted(set(covering.values())):
        tables[name] = [dataclasses.asdict(m) for m in
                        read_measured_file(os.path.join(folder, *name.split("/")))]
    return covering, tables


def measured_of(manifest: dict | None) -> dict:
    """Image → the `MeasuredValue` entries of the measured-values file covering it, as a
    batch manifest records them (empty without a manifest or files)."""
    if not manifest:
        return {}
    tables = manifest.get("measured_files") or {}
    return {rel: tuple(MeasuredValue(**m) for m in tables.get(e.get("measured_file"), ()))
            for rel, e in manifest["entries"].items() if e.get("measured_file")}


def measured_table(out: str, manifest: dict) -> dict:
    """Batch → its measured values beside the batch means of the computed ones, from the
    done images' results and the measured-values files (`polisect.apps.measured`)."""
    batch_wide = measured_of(manifest)
    groups: dict[str, list] = {}
    for rel in sorted(manifest["entries"]):
        e = manifest["entries"][rel]
        if e["status"] == "done":
            result = read_result(os.path.join(out, e["outputs"]["json"]))
            groups.setdefault(e["group"], []).append(computed_of(result,
                                                                 batch_wide.get(rel, ())))
    return batch_measured(groups)


def write_measured_csv(out: str, measured: dict) -> str | None:
    """Write measured.csv (atomic) when there are measured values; return its path."""
    if not measured:
        return None
    path = os.path.join(out, "measured.csv")
    rows = [{"batch": b, **plain_row(measured_dict(m))} for b, ms in measured.items()
            for m in ms]
    atomic_write_text(path, csv_text(rows))
    return path


def plain_row(d: dict, prefix: str = "") -> dict:
    """A nested dict as one flat CSV row (``section_mean``, ``section_ci95``, …); an
    interval as ``low – high`` text."""
    out = {}
    for k, v in d.items():
        key = f"{prefix}{k}"
        if isinstance(v, dict):
            out.update(plain_row(v, f"{key}_"))
        elif isinstance(v, list):
            out[key] = " – ".join(f"{x:.6g}" for x in v)
        else:
            out[key] = "" if v is None else v
    return out


def write_tables(out: str, manifest: dict, measured: dict | None = None) -> tuple[str, str, str]:
    """Write summary.csv, failures.csv and index.html (atomic); return their paths."""
    rows, failures = summary_rows(out, manifest)
    summary = os.path.join(out, "summary.csv")
    fails = os.path.join(out, "failures.csv")
    index = os.path.join(out, "index.html")
    atomic_write_text(summary, csv_text(rows) if rows else "image,batch\n")
    atomic_write_text(fails, csv_text(failures) if failures else "image,batch,status,reason\n")
    atomic_write_text(index, index_html(manifest, rows, failures, measured))
    return summary, fails, index


def index_html(manifest: dict, rows: list[dict], failures: list[dict],
               measured: dict | None = None) -> str:
    """The batch's index page: every section with its headline numbers (in the units people
    read, `polisect.present.units`), each batch's mean, the measured values beside the batch
    means (*measured*, `measured_table`), and the report links."""
    entries = manifest["entries"]
    keys = list(dict.fromkeys(k for r in rows for k in quantity_keys(r)))
    words = {k: column_words(k) for k in keys}
    head = "".join(f"<th>{html.escape(_column(k))}</th>" for k in keys)
    groups = list(dict.fromkeys(r["batch"] for r in rows))
    parts = []
    for g in groups:
        body = []
        members = [r for r in rows if r["batch"] == g]
        for r in members:
            outs = entries[r["image"]]["outputs"]
            link = (f'<a href="{html.escape(outs["report"])}">{html.escape(r["image"])}</a>'
                    if outs.get("report") else html.escape(r["image"]))
            cells = "".join(f"<td>{number(r[k] * words[k][2])}</td>"
                            if isinstance(r.get(k), (int, float)) else "<td>–</td>"
                            for k in keys)
            body.append(f'<tr><td class="txt">{link}</td>{cells}<td><a href="'
                        f'{html.escape(outs["json"])}">json</a></td></tr>')
        if len(members) > 1:
            means = []
            for k in keys:
                vals = [r[k] for r in members if isinstance(r.get(k), (int, float))]
                means.append(f"<td><strong>{number(sum(vals) / len(vals) * words[k][2])}"
                             "</strong></td>" if vals else "<td>–</td>")
            body.append(f'<tr><td class="txt"><strong>mean of {len(members)}</strong></td>'
                        f"{''.join(means)}<td></td></tr>")
        parts.append(f"<section><h2>Batch {html.escape(g)}</h2><div class=\"tablewrap\">"
                     f"<table class=\"grid\"><thead><tr><th>Image</th>{head}<th></th></tr>"
                     f"</thead><tbody>{''.join(body)}</tbody></table></div></section>")
    parts.append(html_measured(measured or {}))
    if failures:
        parts.append('<section class="warn"><h2>Failed images</h2>'
                     + grid(("Image", "Reason"), [(f["image"], f["reason"]) for f in failures])
                     + "</section>")
    meta = (f"{len(rows)} done · {len(failures)} failed · folder "
            f"{html.escape(manifest['folder'])} · pattern {html.escape(manifest['pattern'])}")
    return page(f"Batch — {os.path.basename(manifest['folder'])}", meta,
                CAUTION_MANY_SECTION + '<section><p><a href="summary.csv">summary.csv</a> · '
                '<a href="failures.csv">failures.csv</a> · <a href="manifest.json">'
                "manifest.json</a> · compare the batches with <code>polisect compare "
                "THIS_FOLDER</code></p><p class=\"note\">Numbers in the units shown in each "
                "heading (expansion in 10⁻⁶/K; summary.csv keeps SI units, named in its column "
                "headers).</p></section>" + "".join(parts))


def _column(key: str) -> str:
    label, unit, _ = column_words(key)
    label = label[:1].upper() + label[1:]
    return f"{label} ({unit})" if unit else label
