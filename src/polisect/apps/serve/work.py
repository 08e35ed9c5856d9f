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
#: The strokes of a page run, written into its folder as ``<stem>`` + this.
STROKES_SUFFIX = "_strokes.png"
#: Corrected preview grids of the strokes preview: this prefix + the phase count + ``.npy``.
CORRECTED_PREFIX = "strokes_corrected_"
#: Most stroke runs (row, first column, length, value) one request may carry.
MAX_STROKE_RUNS = 2_000_000
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


def warm() -> bool:
    """Nothing: a first task that makes the fork server import the numerical stack."""
    return True


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
    counts = _histogram(grey, bins, edges)
    suggested, note = None, None
    if hi > lo:
        try:
            suggested = int(segment.suggest_classes(grey))
        except InputError as exc:
            note = str(exc)
    else:
        note = (f"every pixel has the value {lo:g}: a uniform image has no phases to tell "
                "apart; choose another image")
    preview, step = _write_preview(path, grey, micro.cropped_bottom_px)
    return {"shape": list(micro.shape), "dtype": micro.dtype, "bit_depth": micro.bit_depth,
            "is_rgb": micro.is_rgb, "n_pages": micro.n_pages,
            "pixel_size_um": micro.pixel_size_um, "pixel_size_from": micro.pixel_size_from,
            "cropped_bottom_px": micro.cropped_bottom_px, "notes": list(micro.notes),
            "range": [lo, hi],
            "histogram": {"lo": edges[0], "hi": edges[1], "counts": counts.tolist()},
            "suggested_classes": suggested, "suggest_note": note,
            "label_values": labels, "crop": crop,
            "preview_shape": list(preview.shape), "preview_step": step,
            "preview_thresholds": _preview_thresholds(preview, suggested)}


def _write_preview(path: str, grey: np.ndarray, crop) -> tuple[np.ndarray, int]:
    """Write ``preview.f32`` and ``preview.json`` beside the upload; the preview and its step."""
    step = max(1, math.ceil(max(grey.shape) / PREVIEW_SIDE))
    preview = np.ascontiguousarray(grey[::step, ::step], dtype="<f4")
    folder = os.path.dirname(path)
    for name in os.listdir(folder):
        if name.startswith(CORRECTED_PREFIX):
            os.remove(os.path.join(folder, name))
    atomic_write(os.path.join(folder, PREVIEW), lambda tmp: preview.tofile(tmp))
    atomic_write_text(os.path.join(folder, PREVIEW_META),
                      json.dumps({"shape": list(preview.shape), "step": step,
                                  "image_shape": list(grey.shape), "crop": crop}))
    return preview, step


def quick_look(path: str) -> dict:
    """The first answer to an upload: the image read (so a damaged file is refused at
    once) and its preview written, every row kept — without the band detection, the
    histogram and the class suggestion of `inspect_upload`, which the page asks for next.
    A large image is thus on screen about as soon as it has arrived.

    Returns
    -------
    dict
        ``shape``, ``range`` [min, max], ``preview_shape``, ``preview_step`` and
        ``quick`` = ``True``.
    """
    micro, grey = _grey(path, 0)
    if micro.is_volume:
        return inspect_upload(path, "auto")
    preview, step = _write_preview(path, grey, 0)
    return {"shape": list(micro.shape), "range": [float(preview.min()), float(preview.max())],
            "preview_shape": list(preview.shape), "preview_step": step, "quick": True}


def _histogram(grey: np.ndarray, bins: int, edges: tuple[float, float]) -> np.ndarray:
    """Counts of *bins* equal bins over *edges*; integer images of up to 16 bits are
    counted with one pass of `numpy.bincount` (several times faster on large images)."""
    if np.issubdtype(grey.dtype, np.unsignedinteger) and grey.dtype.itemsize <= 2:
        per_level = np.bincount(grey.ravel())
        counts, _ = np.histogram(np.arange(per_level.size), bins=bins, range=edges,
                                 weights=per_level)
        return counts.astype(np.int64)
    counts, _ = np.histogram(grey, bins=bins, range=edges)
    return counts


def _preview_thresholds(preview: np.ndarray, classes) -> list[float] | None:
    """Multi-Otsu thresholds of the preview, for a first overlay while the full image's
    are computed (`auto_thresholds`); ``None`` when the preview has too few grey levels."""
    from skimage.filters import threshold_multiotsu

    n = classes if isinstance(classes, int) and 2 <= classes <= MAX_CLASSES else 3
    try:
        return [float(t) for t in threshold_multiotsu(preview, classes=n, nbins=64)]
    except ValueError:
        return None


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
    run. *min_feature_px* ``"auto"`` is the run's default,
    `polisect.segment.thresholds.default_min_feature_px` of the smoothing radius.
    """
    from ...segment.thresholds import default_min_feature_px, segment_grayscale

    with open(os.path.join(os.path.dirname(path), PREVIEW_META), encoding="utf-8") as f:
        meta = json.load(f)
    grey = np.fromfile(os.path.join(os.path.dirname(path), PREVIEW), dtype="<f4")
    grey = grey.reshape(meta["shape"])
    if not isinstance(thresholds, list):
        raise InputError("thresholds must be a list of grey levels")
    _check_page_settings(len(thresholds) + 1, denoise_px)
    if min_feature_px == "auto":
        min_feature_px = default_min_feature_px(denoise_px if denoise != "none" else 1.0)
    if not isinstance(min_feature_px, int) or isinstance(min_feature_px, bool) \
            or min_feature_px < 0:
        raise InputError(f"smallest feature {min_feature_px!r}: give a whole number of "
                         "pixels ≥ 0, or \"auto\"")
    scaled = int(round(min_feature_px / meta["step"] ** 2))
    seg = segment_grayscale(grey, method="thresholds", thresholds=thresholds, denoise=denoise,
                            denoise_px=denoise_px, min_feature_px=scaled)
    return seg.labels.astype(np.uint8).tobytes()


def strokes_array(strokes, shape) -> np.ndarray:
    """The page's strokes as an annotation image: 0 = not painted, v = phase label v − 1.

    Parameters
    ----------
    strokes : dict
        ``{"shape": [ny, nx], "runs": [row, first column, length, value, ...]}``: the
        painted pixels as runs along the rows, four whole numbers per run.
    shape : tuple of int
        The image's shape (after any cut information band); the strokes must have it.

    Returns
    -------
    ndarray of int32, shape *shape*

    Raises
    ------
    InputError
        Not this layout, another size than the image, runs outside the image, or values
        outside 1 … `MAX_CLASSES`.

    Examples
    --------
    >>> strokes_array({"shape": [2, 4], "runs": [0, 1, 2, 1, 1, 0, 1, 2]}, (2, 4)).tolist()
    [[0, 1, 1, 0], [2, 0, 0, 0]]
    """
    if not isinstance(strokes, dict) or not isinstance(strokes.get("runs"), list):
        raise InputError("the strokes must be {\"shape\": [rows, columns], \"runs\": [...]}; "
                         "paint on the image again")
    ny, nx = (int(v) for v in shape)
    given = strokes.get("shape")
    if given != [ny, nx]:
        raise InputError(f"the strokes are {given!r} pixels (rows, columns) but the image is "
                         f"[{ny}, {nx}]; they must be the same size — paint on this image "
                         "again")
    runs = strokes["runs"]
    if len(runs) % 4 or len(runs) > 4 * MAX_STROKE_RUNS:
        raise InputError("the strokes must hold whole runs of four numbers (row, column, "
                         f"length, phase), at most {MAX_STROKE_RUNS} runs")
    if not all(isinstance(v, int) and not isinstance(v, bool) for v in runs):
        raise InputError("the strokes must hold whole numbers only")
    try:
        r, c, n, v = np.asarray(runs, np.int64).reshape(-1, 4).T
    except OverflowError:
        raise InputError("the strokes hold a number too large for an image position") from None
    bad = (r < 0) | (r >= ny) | (c < 0) | (n < 1) | (c + n > nx) | (v < 1) | (v > MAX_CLASSES)
    if bad.any():
        k = int(np.flatnonzero(bad)[0])
        raise InputError(f"stroke run {k + 1} (row {r[k]}, column {c[k]}, length {n[k]}, phase "
                         f"{v[k]}) lies outside the {nx} × {ny} image or names no phase "
                         f"1 … {MAX_CLASSES}")
    out = np.zeros(ny * nx, np.int32)
    starts = r * nx + c
    index = np.repeat(starts - np.cumsum(n) + n, n) + np.arange(int(n.sum()))
    out[index] = np.repeat(v, n)
    return out.reshape(ny, nx)


def preview_meta(path: str) -> dict:
    """What `inspect_upload` recorded beside the preview.

    Parameters
    ----------
    path : str
        The upload.

    Returns
    -------
    dict
        ``shape`` and ``step`` of the preview, ``image_shape`` (after the band cut) and
        ``crop`` (the rows cut).

    Raises
    ------
    InputError
        When the upload has not been read yet.
    """
    try:
        with open(os.path.join(os.path.dirname(path), PREVIEW_META), encoding="utf-8") as f:
            return json.load(f)
    except OSError:
        raise InputError("the upload has not been read yet; drop the image again") from None


def _upload_grey(path: str):
    """The grey image of an upload as the page last inspected it (same band cut) and the
    preview's facts."""
    meta = preview_meta(path)
    micro, grey = _grey(path, meta.get("crop", 0))
    if micro.is_volume:
        raise InputError("strokes are painted on one section image, not a stack")
    return grey, meta


def _coarse(image: np.ndarray, step: int, reduce) -> np.ndarray:
    """*image* reduced over blocks of *step* × *step* pixels (edge blocks padded with the
    edge values), with the shape of ``image[::step, ::step]``."""
    if step == 1:
        return image
    ny, nx = image.shape
    pad = ((0, -ny % step), (0, -nx % step))
    blocks = np.pad(image, pad, mode="edge")
    blocks = blocks.reshape(blocks.shape[0] // step, step, blocks.shape[1] // step, step)
    return reduce(blocks, axis=(1, 3))


def strokes_prepare(path: str, phases) -> int:
    """Correct the preview grid for *phases* classes ahead of the first strokes (kept beside
    the upload, see `strokes_preview`), so that the first live map does not wait for it.

    Parameters
    ----------
    path : str
        The upload.
    phases : int
        The phases the page lists (2 … `MAX_CLASSES`).

    Returns
    -------
    int
        *phases*.
    """
    _check_page_settings(phases, 1)
    _corrected_grid(path, phases)
    return phases


def strokes_preview(path: str, strokes, phases=None) -> dict:
    """Train the random forest on the strokes and classify the page's preview.

    The image and the strokes are reduced to the preview's grid first (block means of the
    grey levels, kept in the image's type; a block is painted with the largest phase
    value painted in it), so the work is bounded by the preview's size whatever the
    image's. The grid is corrected as a run corrects an image (`correct_image` for the
    number of phases painted) once per upload and phase count, and kept beside the upload,
    so only the first stroke pays for it; the forest is then trained and applied to the
    corrected grid by `polisect.segment.make_phasemap_labels` (method ``"trained"``, no
    further correction). For an image no larger than the preview this is the run's
    segmentation up to the scale of the features (grey levels of the corrected image
    rather than fractions of white, which a forest's splits do not depend on); for a
    larger one the forest works at the preview's scale — a preview. The smallest feature
    kept is the run's default scaled by the step squared.

    Parameters
    ----------
    path : str
        The upload.
    strokes : dict
        As for `strokes_array`, on the image as inspected.
    phases : int, optional
        The phases the page lists: the grid is corrected for this many classes when at
        least as many are painted so far (the run corrects for the phases painted, which
        are all of them once every phase has strokes), so that the correction prepared by
        `strokes_prepare` serves from the first strokes on.

    Returns
    -------
    dict
        ``labels`` (base64 of one uint8 phase label per preview pixel, row by row),
        ``shape`` (the preview's), ``confidence_mean`` (mean probability of the class
        chosen), ``annotated_share`` (painted pixels over the image's pixels),
        ``phases`` (the phase labels painted), ``warnings``.

    References
    ----------
    .. [1] Breiman, L. (2001). Random forests. Mach. Learn. 45, 5-32.
    """
    import base64

    from ...read.config import SegmentConfig
    from ...segment import make_phasemap_labels
    from ...segment.thresholds import default_min_feature_px
    from ...segment.trained import PROBABILITY_SMOOTHING_PX

    meta = preview_meta(path)
    ann = strokes_array(strokes, meta["image_shape"])
    step = int(meta["step"])
    painted = _coarse(ann, step, np.max)
    painted_phases = np.unique(painted[painted > 0]).size
    if isinstance(phases, bool) or not isinstance(phases, int) \
            or not painted_phases <= phases <= MAX_CLASSES:
        phases = painted_phases
    coarse = _corrected_grid(path, phases) if painted_phases >= 2 else _coarse_grey(path)
    smallest = round(default_min_feature_px(PROBABILITY_SMOOTHING_PX) / step ** 2)
    config = SegmentConfig(method="trained", annotations="page", min_feature_px=smallest,
                           shading="none", stripes="none", speckle="none", scratches="none")
    seg = make_phasemap_labels(coarse, None, config, annotations=painted)
    return {"labels": base64.b64encode(seg.labels.astype(np.uint8).tobytes()).decode("ascii"),
            "shape": list(seg.labels.shape),
            "confidence_mean": seg.confidence_summary.mean,
            "annotated_share": float(np.count_nonzero(ann)) / ann.size,
            "phases": list(seg.segmenter.labels), "warnings": list(seg.warnings)}


def _coarse_grey(path: str) -> np.ndarray:
    """The upload's grey levels averaged over the preview's blocks, in the image's type."""
    grey, meta = _upload_grey(path)
    coarse = _coarse(grey, int(meta["step"]), np.mean)
    if np.issubdtype(grey.dtype, np.integer):
        coarse = np.rint(coarse).astype(grey.dtype)
    return coarse


def _corrected_grid(path: str, phases: int) -> np.ndarray:
    """`_coarse_grey` corrected for *phases* classes (`correct_image`, every step "auto"),
    kept in the upload's folder until the next inspection rewrites the preview."""
    from ...segment.correct import correct_image

    cache = os.path.join(os.path.dirname(path), f"{CORRECTED_PREFIX}{phases}.npy")
    try:
        return np.load(cache, allow_pickle=False)
    except (OSError, ValueError):
        pass
    image = correct_image(_coarse_grey(path), phases).image

    def write(tmp):
        with open(tmp, "wb") as f:
            np.save(f, image, allow_pickle=False)
    atomic_write(cache, write)
    return image


def strokes_model(path: str, strokes) -> str:
    """Train the segmenter on the full-resolution image and its strokes and save it in
    the upload's folder as ``<stem>_segmenter.npz`` — the file ``polisect train IMAGE
    --annotations STROKES --out MODEL.npz`` writes for the same strokes.

    Parameters
    ----------
    path, strokes
        As for `strokes_preview`.

    Returns
    -------
    str
        Path of the model file.

    References
    ----------
    .. [1] Breiman, L. (2001). Random forests. Mach. Learn. 45, 5-32.
    """
    from ...segment.trained import train_segmenter

    grey, _ = _upload_grey(path)
    ann = strokes_array(strokes, grey.shape)
    model = train_segmenter([grey], [ann], names=[os.path.basename(path)])
    stem = os.path.splitext(os.path.basename(path))[0]
    out = os.path.join(os.path.dirname(path), stem + "_segmenter.npz")
    model.save(out)
    return out


def strokes_png(strokes, shape) -> bytes:
    """The strokes as an 8-bit PNG annotation file (what ``[segment] annotations`` reads).

    Parameters
    ----------
    strokes : dict
        As for `strokes_array`.
    shape : tuple of int
        The image's shape (after any cut information band).

    Returns
    -------
    bytes
        The PNG file: 0 = not painted, v = phase label v − 1.
    """
    import imageio.v3 as iio

    return iio.imwrite("<bytes>", strokes_array(strokes, shape).astype(np.uint8),
                       extension=".png")


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
        strokes = cfg.segment.annotations
        files = {"report": out.report, "json": out.json, "csv": out.csv,
                 "phasemap": out.phasemap, "overlay": out.overlay,
                 "particles": out.particles_csv, "segmenter": out.segmenter,
                 "strokes": strokes if strokes and os.path.isfile(
                     os.path.join(folder, strokes)) else None}
        status.finish(state="done", stage="done",
                      outputs={k: os.path.basename(v) for k, v in files.items() if v})
