"""Work in child processes: short tasks with a time limit, and analysis runs with a queue.

The web server's request threads never compute. A short task (reading an upload,
finding thresholds) runs in a fresh child process and is killed when it overruns; an
analysis run gets its own process too, so that it can be cancelled at any moment and a
decoder or solver that crashes takes only its own process down. Children come from a
fork server that has imported the numerical stack once, so starting one is cheap.

Each run lives in a folder of the output directory (see `RunManager`); its
``status.json`` (written by the child, see `polisect.apps.serve.work`) is the only channel
between the run and the server, which is why runs survive a closed browser and are
listed again after a restart.
"""

from __future__ import annotations

import json
import multiprocessing
import os
import re
import secrets
import shutil
import threading
import time
from collections import deque

from ...core.atomic import atomic_write_text
from ...core.errors import InputError
from . import work

RUN_ID = re.compile(r"\d{8}-\d{6}-[A-Za-z0-9_-]{1,64}-[0-9a-f]{4}")
FINAL = ("done", "failed", "cancelled", "interrupted")
_PRELOAD = ["numpy", "scipy.ndimage", "skimage.filters", "polisect.apps.run",
            "polisect.apps.serve.work"]


def process_context():
    """The multiprocessing context for children: a fork server where there is one.

    Forking a multi-threaded server directly is unsafe; the fork server is a clean
    single-threaded process that has imported the numerical modules once.
    """
    if "forkserver" in multiprocessing.get_all_start_methods():
        ctx = multiprocessing.get_context("forkserver")
        ctx.set_forkserver_preload(_PRELOAD)
        return ctx
    return multiprocessing.get_context("spawn")


class TaskFailed(RuntimeError):
    """A child task crashed or raised something other than `InputError`."""


class Tasks:
    """Short tasks, each in its own child process, at most *parallel* at a time."""

    def __init__(self, ctx, parallel: int = 2, timeout_s: float = 300.0):
        self.ctx = ctx
        self.timeout_s = timeout_s
        self._slots = threading.BoundedSemaphore(parallel)

    def call(self, fn, *args, what: str = "the task"):
        """Run ``fn(*args)`` in a child and return its result.

        Raises
        ------
        InputError
            Raised by *fn* (passed through with its message), or *fn* overran the limit.
        TaskFailed
            The child crashed or *fn* raised another exception.
        """
        with self._slots:
            receive, send = self.ctx.Pipe(duplex=False)
            proc = self.ctx.Process(target=work.child_call, args=(send, fn, args), daemon=True)
            proc.start()
            send.close()
            answered = receive.poll(self.timeout_s)
            try:
                if not answered:
                    raise InputError(f"{what} took longer than {self.timeout_s:.0f} s and was "
                                     "stopped; try a smaller image")
                kind, payload = receive.recv()
            except EOFError:
                proc.join(5)
                raise TaskFailed(f"{what} stopped unexpectedly (exit code {proc.exitcode}); "
                                 "the file may be damaged in a way the decoder cannot handle")
            finally:
                receive.close()
                _stop(proc, grace_s=5 if answered else 0)
        if kind == "input":
            raise InputError(payload)
        if kind == "error":
            raise TaskFailed(payload)
        return payload


def _stop(proc, grace_s: float) -> None:
    proc.join(grace_s)
    if proc.is_alive():
        proc.terminate()
        proc.join(2)
    if proc.is_alive():
        proc.kill()
        proc.join()


def read_status(folder: str) -> dict | None:
    """A run's ``status.json`` as a dict, or ``None`` when it cannot be read."""
    try:
        with open(os.path.join(folder, work.STATUS), encoding="utf-8") as f:
            return json.load(f)
    except (OSError, ValueError):
        return None


def write_status(folder: str, status: dict) -> None:
    atomic_write_text(os.path.join(folder, work.STATUS), json.dumps(status, indent=1))


class RunManager:
    """Analysis runs: one folder and one child process each, at most *parallel* at once.

    A run folder ``<out>/<run id>/`` holds the image, ``config.toml``, ``status.json`` and,
    when the run is done, the files `polisect.apps.run.write_outputs` writes — the same
    files ``polisect analyze IMAGE --config config.toml --out <folder>`` writes.

    Parameters
    ----------
    out_dir : str
        The output folder.
    ctx : multiprocessing context
    parallel : int
        Runs computed at the same time; more wait in a queue.
    """

    def __init__(self, out_dir: str, ctx, parallel: int = 1):
        self.out_dir = os.path.abspath(out_dir)
        self.ctx = ctx
        self.parallel = max(1, int(parallel))
        os.makedirs(self.out_dir, exist_ok=True)
        self._lock = threading.Lock()
        self._queue: deque[str] = deque()
        self._running: dict[str, object] = {}
        self._stop = threading.Event()
        self._mark_interrupted()
        self._thread = threading.Thread(target=self._loop, name="polisect-runs", daemon=True)
        self._thread.start()

    def _mark_interrupted(self) -> None:
        for run_id in self._ids():
            folder = os.path.join(self.out_dir, run_id)
            status = read_status(folder)
            if status and status.get("state") not in FINAL:
                status.update(state="interrupted", stage="the server stopped during this run",
                              finished=time.time())
                write_status(folder, status)

    def submit(self, image_path: str, stem: str, toml_text: str, *,
               files: dict[str, bytes] | None = None) -> str:
        """Create a run folder for *image_path* and queue the run; returns the run id.

        *files* (name → content) are written into the folder beside the config (the
        strokes a trained run reads); names are plain file names."""
        run_id = f"{time.strftime('%Y%m%d-%H%M%S')}-{stem}-{secrets.token_hex(2)}"
        folder = os.path.join(self.out_dir, run_id)
        os.makedirs(folder)
        image = os.path.join(folder, os.path.basename(image_path))
        shutil.copyfile(image_path, image)
        for name, content in (files or {}).items():
            if os.path.basename(name) != name or name in (work.CONFIG, work.STATUS):
                raise InputError(f"{name[:80]!r} cannot be written into a run folder")
            with open(os.path.join(folder, name), "wb") as f:
                f.write(content)
        atomic_write_text(os.path.join(folder, work.CONFIG), toml_text)
        write_status(folder, {"id": run_id, "state": "queued", "stage": "waiting for a free worker",
                              "image": os.path.basename(image), "stem": stem,
                              "created": time.time(), "log": [], "outputs": {}})
        with self._lock:
            self._queue.append(run_id)
        return run_id

    def folder(self, run_id: str) -> str:
        """The folder of a run.

        Raises
        ------
        InputError
            When *run_id* is malformed or no such run exists.
        """
        if not isinstance(run_id, str) or not RUN_ID.fullmatch(run_id):
            raise InputError("no such run")
        folder = os.path.join(self.out_dir, run_id)
        if not os.path.isfile(os.path.join(folder, work.STATUS)):
            raise InputError(f"no run {run_id} in {self.out_dir}")
        return folder

    def status(self, run_id: str) -> dict:
        status = read_status(self.folder(run_id))
        if status is None:
            raise InputError(f"the status of run {run_id} cannot be read")
        return status

    def cancel(self, run_id: str) -> dict:
        """Stop a queued or running run; a finished one is left as it is."""
        folder = self.folder(run_id)
        with self._lock:
            queued = run_id in self._queue
            if queued:
                self._queue.remove(run_id)
            proc = self._running.pop(run_id, None)
        if proc is not None:
            _stop(proc, grace_s=0)
        status = read_status(folder) or {"id": run_id}
        if queued or status.get("state") not in FINAL:
            status.update(state="cancelled", stage="cancelled", finished=time.time())
            write_status(folder, status)
        return status

    def list(self) -> list[dict]:
        """Every run in the output folder, newest first (without the progress log)."""
        out = []
        for run_id in sorted(self._ids(), reverse=True):
            status = read_status(os.path.join(self.out_dir, run_id))
            if status:
                status.pop("log", None)
                out.append(status)
        return out

    def _ids(self) -> list[str]:
        try:
            names = os.listdir(self.out_dir)
        except OSError:
            return []
        return [n for n in names if RUN_ID.fullmatch(n)
                and os.path.isfile(os.path.join(self.out_dir, n, work.STATUS))]

    def _loop(self) -> None:
        while not self._stop.wait(0.1):
            self._reap()
            self._start_queued()

    def _reap(self) -> None:
        with self._lock:
            ended = [(i, p) for i, p in self._running.items() if not p.is_alive()]
            for run_id, _ in ended:
                del self._running[run_id]
        for run_id, proc in ended:
            proc.join()
            folder = os.path.join(self.out_dir, run_id)
            status = read_status(folder) or {"id": run_id}
            if status.get("state") not in FINAL:
                status.update(state="failed", error_kind="internal", finished=time.time(),
                              error=f"the worker process stopped unexpectedly (exit code "
                                    f"{proc.exitcode}); the image may be too large for the "
                                    "memory, or this is a bug worth reporting")
                write_status(folder, status)

    def _start_queued(self) -> None:
        with self._lock:
            while self._queue and len(self._running) < self.parallel:
                run_id = self._queue.popleft()
                proc = self.ctx.Process(target=work.run_analysis,
                                        args=(os.path.join(self.out_dir, run_id),),
                                        name=f"polisect-run-{run_id}")
                proc.start()
                self._running[run_id] = proc

    def close(self) -> None:
        """Stop the scheduler and every running child (their runs become 'interrupted')."""
        self._stop.set()
        self._thread.join()
        with self._lock:
            running, self._running = dict(self._running), {}
            self._queue.clear()
        for proc in running.values():
            _stop(proc, grace_s=0)
        self._mark_interrupted()
