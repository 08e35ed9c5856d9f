"""What the page's child processes compute: reading an upload, thresholds, a whole run.

These functions run in child processes started by `polisect.apps.serve.jobs`, never in the
server's request threads. A run reports through its folder's ``status.json`` (state,
current stage, a log of the progress messages the pipeline sends, output files), which
is rewritten atomically at most five times a second.
"""

from __future__ import annotations

import json
import math
import os
import sys
import threading
import time
import traceback

import numpy as np

from ...core.atomic import atomic_write, atomic_write_text
from ...core.errors import InputError

STATUS = "status.json"
CONFIG = "config.toml"
PREVIEW = "preview.f32"
PREVIEW_META = "preview.json"
#: Longest side of the preview the page draws (pixels); larger images are subsampled.
PREVIEW_SIDE = 640
HIST_BINS = 256
#: An integer image with at most this many distinct values may be a label image.
MAX_LABELS = 8
#: Most classes the page offers (as `polisect.read.config` allows).
MAX_CLASSES = 8
#: Largest smoothing radius for the page's previews, pixels.
MAX_SMOOTH_PX = 25
_LOG_LINES = 400


def child_call(send, fn, args) -> None:
    """Run ``fn(*args)`` and send ``(kind, payload)`` through the pipe *send*."""
    try:
        answer = ("ok", fn(*args))
    except InputError as exc:
        answer = ("input", str(exc))
    except MemoryError:
        answer = ("input", "the image does not fit into this computer's memory; crop it or "
                           "give a smaller section")
    except Exception as exc:  # noqa: BLE001 - reported to the server as an internal failure
        traceback.print_exc(file=sys.stderr)
        answer = ("error", f"internal error while working on the image ({type(exc).__name__}: "
                           f"{exc}); please report it")
    send.send(answer)
    send.close()


def _grey(path: str, crop):
    from ...read.image import read_image, to_grayscale

    micro = read_image(path, crop_bottom_px=crop)
    return micro, (to_grayscale(micro.data) if micro.is_rgb else micro.data)


def inspect_upload(path: str, crop) -> dict:
    """Facts about an uploaded image for the page, and its preview beside it.

    Writes ``preview.f32`` (the grey image subsampled to at most `PREVIEW_SIDE` pixels a
    side, float32 little-endian, row by row) into the upload's folder.

    Returns
    -------
    dict
        ``shape``, ``dtype``, ``bit_depth``, ``is_rgb``, ``n_pages``, ``pixel_size_um``,
        ``pixel_size_from``, ``cropped_bottom_px``, ``notes``, ``range`` [min, max],
        ``histogram`` {``lo``, ``hi``, ``counts``} (256 bins, or one per grey level for an
        integer image with fewer levels), ``suggested_classes`` (or ``None``
        with ``suggest_note``), ``label_values`` (the distinct values when the image
        could be a label image, else ``None``), ``crop`` (the crop used: ``"auto"`` is
        not applied to a label image), ``preview_shape``, ``preview_step``.
    """
    from ...segment import thresholds as segment

    micro, grey = _grey(path, 0 if crop == "auto" else crop)
    labels = _label_values(grey, micro.is_rgb)
    if crop == "auto" and labels is None:
        micro, grey = _grey(path, "auto")
    elif crop == "auto":
        crop = 0  # a label image has no information band; a uniform bottom is a phase
    lo, hi = float(grey.min()), float(grey.max())
    edges = (lo, hi if hi > lo else lo + 1)
    bins = HIST_BINS
    if np.issubdtype(grey.dtype, np.integer) and hi - lo < HIST_BINS:
        bins, edges = int(hi - lo) + 1, (lo - 0.5, hi + 0.5)  # one bin per grey level
    counts, _ = np.histogram(grey, bins=bins, range=edges)
    suggested, note = None, None
    if hi > lo:
        try:
            suggested = int(segment.suggest_classes(grey))
        except InputError as exc:
            note = str(exc)
    else:
        note = (f"every pixel has the value {lo:g}: a uniform image has no phases to tell "
                "apart; choose another image")
    step = max(1, math.ceil(max(grey.shape) / PREVIEW_SIDE))
    preview = np.ascontiguousarray(grey[::step, ::step], dtype="<f4")
    folder = os.path.dirname(path)
    atomic_write(os.path.join(folder, PREVIEW), lambda tmp: preview.tofile(tmp))
    atomic_write_text(os.path.join(folder, PREVIEW_META),
                      json.dumps({"shape": list(preview.shape), "step": step}))
    return {"shape": list(micro.shape), "dtype": micro.dtype, "bit_depth": micro.bit_depth,
            "is_rgb": micro.is_rgb, "n_pages": micro.n_pages,
            "pixel_size_um": micro.pixel_size_um, "pixel_size_from": micro.pixel_size_from,
            "cropped_bottom_px": micro.cropped_bottom_px, "notes": list(micro.notes),
            "range": [lo, hi],
            "histogram": {"lo": edges[0], "hi": edges[1], "counts": counts.tolist()},
            "suggested_classes": suggested, "suggest_note": note,
            "label_values": labels, "crop": crop,
            "preview_shape": list(preview.shape), "preview_step": step}


def _label_values(grey: np.ndarray, is_rgb: bool) -> list[int] | None:
    if is_rgb or not np.issubdtype(grey.dtype, np.integer) or grey.min() < 0:
        return None
    if grey.max() >= 1 << 16:
        return None
    present = np.flatnonzero(np.bincount(grey.ravel()))
    return present.tolist() if len(present) <= MAX_LABELS else None


def _check_page_settings(classes, denoise_px) -> None:
    """The page offers 2 to `MAX_CLASSES` classes and smoothing radii up to `MAX_SMOOTH_PX`."""
    if isinstance(classes, bool) or not isinstance(classes, int) \
            or not 2 <= classes <= MAX_CLASSES:
        raise InputError(f"classes = {classes!r}: choose 2 to {MAX_CLASSES} classes")
    if isinstance(denoise_px, bool) or not isinstance(denoise_px, (int, float)) \
            or not 1 <= denoise_px <= MAX_SMOOTH_PX:
        raise InputError(f"smoothing radius {denoise_px!r} px: give 1 to {MAX_SMOOTH_PX} pixels")


def auto_thresholds(path: str, crop, classes, denoise, denoise_px) -> list[float]:
    """The multi-Otsu thresholds a run with these settings finds on the full image."""
    from ...segment.thresholds import segment_grayscale

    _check_page_settings(classes, denoise_px)
    _, grey = _grey(path, crop)
    seg = segment_grayscale(grey, method="multi-otsu", classes=classes, denoise=denoise,
                            denoise_px=denoise_px)
    return list(seg.thresholds)


def preview_labels(path: str, thresholds, denoise, denoise_px, min_feature_px) -> bytes:
    """The preview segmented with the run's settings: one uint8 label per preview pixel.

    The preview is a subsample of the image, so smoothing acts on coarser pixels and the
    smallest feature kept is scaled by the subsampling step squared: a preview, not the
    run.
    """
    from ...segment.thresholds import segment_grayscale

    with open(os.path.join(os.path.dirname(path), PREVIEW_META), encoding="utf-8") as f:
        meta = json.load(f)
    grey = np.fromfile(os.path.join(os.path.dirname(path), PREVIEW), dtype="<f4")
    grey = grey.reshape(meta["shape"])
    if not isinstance(thresholds, list):
        raise InputError("thresholds must be a list of grey levels")
    _check_page_settings(len(thresholds) + 1, denoise_px)
    if not isinstance(min_feature_px, int) or isinstance(min_feature_px, bool) \
            or min_feature_px < 0:
        raise InputError(f"smallest feature {min_feature_px!r}: give a whole number of "
                         "pixels ≥ 0")
    scaled = int(round(min_feature_px / meta["step"] ** 2))
    seg = segment_grayscale(grey, method="thresholds", thresholds=thresholds, denoise=denoise,
                            denoise_px=denoise_px, min_feature_px=scaled)
    return seg.labels.astype(np.uint8).tobytes()


class StatusFile:
    """A run's ``status.json``, kept in memory and flushed by a background thread."""

    def __init__(self, folder: str):
        self.path = os.path.join(folder, STATUS)
        with open(self.path, encoding="utf-8") as f:
            self.data = json.load(f)
        self._lock = threading.Lock()
        self._dirty = False
        self._t0 = time.time()
        self._done = threading.Event()
        self._flusher = threading.Thread(target=self._flush_loop, daemon=True)

    def start(self) -> None:
        self.update(state="running", stage="starting", started=self._t0, pid=os.getpid())
        self.flush()
        self._flusher.start()

    def progress(self, message: str) -> None:
        """The pipeline's progress callback: the latest message becomes the stage (and
        the solver line of the previous stage is dropped)."""
        with self._lock:
            self.data.pop("solver", None)
            log = self.data.setdefault("log", [])
            log.append([round(time.time() - self._t0, 2), str(message)])
            del log[:-_LOG_LINES]
            self.data["stage"] = str(message)
            self._dirty = True

    def solver(self, facts: dict) -> None:
        """The solvers' observer (`polisect.properties.solve.progress`): the current load case,
        iteration and residual become ``status["solver"]``; a new load case clears it."""
        keep = ("load_case", "load_cases", "name", "method", "tolerance", "iteration",
                "residual")
        with self._lock:
            self.data["solver"] = {k: facts[k] for k in keep if k in facts}
            self._dirty = True

    def update(self, **values) -> None:
        with self._lock:
            self.data.update(values)
            self._dirty = True

    def finish(self, **values) -> None:
        """Record the end of the run; a finished run has no live solver line."""
        self._done.set()
        if self._flusher.is_alive():
            self._flusher.join()
        with self._lock:
            self.data.pop("solver", None)
        self.update(finished=time.time(), **values)
        self.flush()

    def flush(self) -> None:
        with self._lock:
            text = json.dumps(self.data, indent=1)
            self._dirty = False
        atomic_write_text(self.path, text)

    def _flush_loop(self) -> None:
        while not self._done.wait(0.2):
            if self._dirty:
                self.flush()


def run_analysis(folder: str) -> None:
    """Analyse the image of a run folder with its ``config.toml``; write outputs and status.

    Runs exactly what ``polisect analyze IMAGE --config config.toml --out FOLDER`` runs.
    """
    from ...properties.solve import progress as solver_progress
    from ...read.config import load_config
    from ..run import run_section

    status = StatusFile(folder)
    status.start()
    try:
        cfg = load_config(os.path.join(folder, CONFIG))
        with solver_progress.observe(status.solver):
            _, out = run_section(os.path.join(folder, status.data["image"]), cfg, folder,
                                 progress=status.progress)
    except InputError as exc:
        status.finish(state="failed", error_kind="input", stage="stopped: bad input",
                      error=str(exc).replace(folder + os.sep, ""))
    except MemoryError:
        status.finish(state="failed", error_kind="input", stage="stopped: out of memory",
                      error="the analysis needs more memory than this computer has; crop the "
                            "image or compute fewer properties")
    except Exception as exc:  # noqa: BLE001 - recorded in the run's status, shown in the page
        traceback.print_exc(file=sys.stderr)
        status.finish(state="failed", error_kind="internal", stage="stopped: internal error",
                      error=f"internal error ({type(exc).__name__}: {exc}); please report it "
                            "with the traceback printed by polisect serve")
    else:
        files = {"report": out.report, "json": out.json, "csv": out.csv,
                 "phasemap": out.phasemap, "overlay": out.overlay,
                 "particles": out.particles_csv}
        status.finish(state="done", stage="done",
                      outputs={k: os.path.basename(v) for k, v in files.items() if v})
