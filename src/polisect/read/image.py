"""Reading micrographs: TIFF (8/16/32-bit, float, RGB, stacks, resolution tags), PNG, JPEG, BMP.

`read_image` turns a file into a `Micrograph`: the pixel array with its pixel size and
where that came from, what was cut off, and notes on anything the reader decided.
Every problem with the file raises `polisect.core.errors.InputError` naming the file and
what to do about it.

Examples
--------
>>> import os, tempfile
>>> import numpy as np
>>> from polisect.read.image import read_image, write_tiff
>>> path = os.path.join(tempfile.mkdtemp(), "section.tif")
>>> write_tiff(path, np.full((16, 16), 100, np.uint8), pixel_size_um=0.5)
>>> m = read_image(path)
>>> m.pixel_size_um, m.pixel_size_from, m.shape
(0.5, 'tiff-tags', (16, 16))
"""

from __future__ import annotations

import dataclasses
import hashlib
import numbers
import os
import re
from dataclasses import dataclass

import numpy as np

from ..core.atomic import atomic_write
from ..core.errors import InputError
from ..core.memory import MAX_PIXELS, check_pixel_count

__all__ = ["Micrograph", "read_image", "read_stack", "check_slice_spacing", "to_grayscale",
           "find_info_band", "read_annotations", "write_tiff"]

#: Smallest image side accepted, pixels.
MIN_SIDE_PX = 2
#: TIFF resolutions in dots per inch that imaging software writes by default; they carry no
#: calibration and are ignored.
DEFAULT_DPI = (72.0, 96.0, 150.0, 300.0, 600.0)
#: An image with at most this many distinct grey levels (on a 64 × 64 sample) is taken as a
#: label or palette map, which carries no information band.
LABEL_LEVELS = 16
#: ITU-R BT.709 luma weights of R, G and B.
BT709 = (0.2126, 0.7152, 0.0722)

_MAGIC = {b"II*\x00": "TIFF", b"MM\x00*": "TIFF", b"II+\x00": "TIFF", b"MM\x00+": "TIFF",
          b"\x89PNG": "PNG", b"\xff\xd8\xff": "JPEG", b"BM": "BMP"}
_LENGTH_UM = {"micron": 1.0, "microns": 1.0, "um": 1.0, "µm": 1.0, "\u03bcm": 1.0,
              "\\u00b5m": 1.0, "nm": 1e-3, "nanometer": 1e-3, "mm": 1e3, "millimeter": 1e3}


@dataclass(frozen=True, eq=False)
class Micrograph:
    """A micrograph as read from a file.

    Attributes
    ----------
    data : ndarray
        Pixels: (ny, nx) grey, (ny, nx, 3) RGB, or (nz, ny, nx) for a volume.
    path : str or None
        The file read (``None`` for an array given directly).
    sha256 : str or None
        SHA-256 of the file's bytes.
    pixel_size_um : float or None
        Pixel edge, micrometres; ``None`` when unknown (results then in pixels).
    pixel_size_from : {'tiff-tags', 'config', 'command line', 'unknown'}
        Where the pixel size came from.
    cropped_bottom_px : int
        Rows cut from the bottom (an instrument information band).
    dtype : str
        NumPy dtype of *data* as stored in the file (e.g. ``'uint16'``).
    bit_depth : int
        Bits per sample of that dtype.
    is_rgb : bool
        Whether *data* has a colour axis last.
    n_pages : int
        Pages (planes) in the file; a volume uses all, an image the first.
    notes : tuple of str
        Decisions the reader took, for the report (e.g. what was cropped).
    """

    data: np.ndarray
    path: str | None
    sha256: str | None
    pixel_size_um: float | None
    pixel_size_from: str
    cropped_bottom_px: int
    dtype: str
    bit_depth: int
    is_rgb: bool
    n_pages: int
    notes: tuple[str, ...] = ()

    @property
    def shape(self) -> tuple[int, ...]:
        """Spatial shape: (ny, nx) or (nz, ny, nx), without the colour axis."""
        return self.data.shape[:-1] if self.is_rgb else self.data.shape

    @property
    def is_volume(self) -> bool:
        return len(self.shape) == 3


def read_image(path: str | os.PathLike, *, crop_bottom_px: int | str = "auto",
               pixel_size_um: float | None = None, pixel_size_from: str = "config",
               volume: bool = False) -> Micrograph:
    """Read a micrograph (or a stack of sections) from a file.

    The file type is found from the file's first bytes, not its name.

    Parameters
    ----------
    path : str or path-like
        TIFF (8/16/32-bit integer, float, RGB/RGBA, multi-page), PNG, JPEG or BMP.
    crop_bottom_px : int or 'auto'
        Rows to cut from the bottom (an instrument information band); ``'auto'`` (the
        default) detects such a band with `find_info_band`; 0 keeps every row.
    pixel_size_um : float, optional
        Pixel edge in micrometres given by the user.
    pixel_size_from : {'config', 'command line'}
        Where *pixel_size_um* came from. A value from the config is used when the file
        has no usable resolution tags; one from the command line overrides the tags. A
        note records any disagreement with the tags.
    volume : bool
        Read every page of a TIFF as a (nz, ny, nx) volume (cubic voxels assumed)
        instead of the first page only.

    Returns
    -------
    Micrograph

    Raises
    ------
    InputError
        Missing, empty, truncated or unreadable file; not an image; too small; NaN or
        infinite pixels; non-square pixels without a pixel size given; bad crop.

    Notes
    -----
    Pixel size from the tags: XResolution/YResolution in pixels per ResolutionUnit,
    inch (25 400 µm) or centimetre (10 000 µm) as TIFF 6.0 defines them (and the
    millimetre and micrometre units tifffile writes); with no unit, an ImageJ
    ``unit=micron`` (or um, nm, mm) in the image description. Resolutions of
    72, 96, 150, 300 or 600 dots per inch are software defaults, not calibrations, and
    are ignored. RGBA images lose their alpha channel; RGB images whose three channels
    are equal are read as grey.

    References
    ----------
    .. [1] Adobe Developers Association (1992). TIFF Revision 6.0, sections 8 (baseline
       fields XResolution, YResolution, ResolutionUnit).
    """
    path = os.fspath(path)
    kind = _check_file(path)
    notes: list[str] = []
    if kind == "TIFF":
        data, tag_size, n_pages, is_rgb = _read_tiff(path, volume, notes)
    else:
        if volume:
            raise InputError(f"{path}: a {kind} file holds one image, not a stack; give a "
                             "multi-page TIFF to analyse a volume")
        data, is_rgb = _read_imageio(path, kind, notes)
        tag_size, n_pages = None, 1
    data, is_rgb = _normalise(path, data, is_rgb, notes)
    stored = data.dtype
    cropped = _crop(path, data, is_rgb, crop_bottom_px, notes)
    if cropped:
        data = data[..., :-cropped, :, :] if is_rgb else data[..., :-cropped, :]
    size, source = _pixel_size(path, tag_size, pixel_size_um, pixel_size_from, notes)
    return Micrograph(data=data, path=path, sha256=_sha256(path), pixel_size_um=size,
                      pixel_size_from=source, cropped_bottom_px=cropped, dtype=str(stored),
                      bit_depth=stored.itemsize * 8, is_rgb=is_rgb, n_pages=n_pages,
                      notes=tuple(notes))


#: File name endings of slice images in a stack folder; other files there are ignored.
SLICE_SUFFIXES = (".tif", ".tiff", ".png", ".bmp", ".jpg", ".jpeg")
#: Largest relative difference between slice spacing and pixel size for cubic voxels.
CUBIC_TOLERANCE = 0.01


def read_stack(folder: str | os.PathLike, *, crop_bottom_px: int | str = "auto",
               pixel_size_um: float | None = None, pixel_size_from: str = "config",
               slice_spacing_um: float | None = None) -> Micrograph:
    """Read a folder of slice images as one (nz, ny, nx) volume.

    The slices are the files whose names end in .tif, .tiff, .png, .bmp, .jpg or .jpeg,
    in natural order of their names (``slice_2`` before ``slice_10``); each is read with
    `read_image` (so its type is found from its content) and must hold one image. Other
    files in the folder are ignored, with a note.

    Parameters
    ----------
    folder : str or path-like
        The folder of slices.
    crop_bottom_px, pixel_size_um, pixel_size_from
        As for `read_image`, applied to every slice.
    slice_spacing_um : float, optional
        Distance between slices; checked against the pixel size with
        `check_slice_spacing` (the solvers need cubic voxels).

    Returns
    -------
    Micrograph
        ``path`` is the folder, ``sha256`` the SHA-256 of the slices' SHA-256 digests in
        order, ``n_pages`` the number of slices.

    Raises
    ------
    InputError
        Not a folder; fewer than two slices; a slice unreadable, holding several pages, or
        differing from the first in shape, colour, bit depth or pixel size; non-cubic
        voxels.

    Examples
    --------
    >>> import os, tempfile
    >>> folder = tempfile.mkdtemp()
    >>> for k in range(3):
    ...     write_tiff(os.path.join(folder, f"z{k}.tif"), np.full((8, 8), k, np.uint8),
    ...                pixel_size_um=2.0)
    >>> m = read_stack(folder)
    >>> m.shape, m.pixel_size_um, m.n_pages
    ((3, 8, 8), 2.0, 3)
    """
    folder = os.fspath(folder)
    if not os.path.isdir(folder):
        raise InputError(f"{folder}: not a folder; --stack reads a folder of slice images "
                         "(give a multi-page TIFF without --stack)")
    names = sorted((n for n in os.listdir(folder) if not n.startswith(".")
                    and os.path.isfile(os.path.join(folder, n))), key=_natural)
    slices = [n for n in names if n.lower().endswith(SLICE_SUFFIXES)]
    ignored = [n for n in names if n not in slices]
    if len(slices) < 2:
        raise InputError(f"{folder}: holds {len(slices)} slice image(s); a stack needs at least "
                         f"two (files ending in {', '.join(SLICE_SUFFIXES)})")
    parts = [read_image(os.path.join(folder, n), crop_bottom_px=crop_bottom_px,
                        pixel_size_um=pixel_size_um, pixel_size_from=pixel_size_from)
             for n in slices]
    first = parts[0]
    for name, m in zip(slices, parts):
        if m.n_pages > 1:
            raise InputError(f"{os.path.join(folder, name)}: holds {m.n_pages} pages; every "
                             "file of a stack folder must hold one slice")
        if (m.data.shape, m.dtype, m.is_rgb) != (first.data.shape, first.dtype, first.is_rgb):
            raise InputError(f"{os.path.join(folder, name)}: {m.shape} {m.dtype}"
                             f"{' RGB' if m.is_rgb else ''} differs from the first slice "
                             f"({first.shape} {first.dtype}{' RGB' if first.is_rgb else ''}); "
                             "all slices must have the same size and pixel type")
        if m.pixel_size_um != first.pixel_size_um:
            raise InputError(f"{os.path.join(folder, name)}: pixel size {m.pixel_size_um} µm "
                             f"differs from the first slice's {first.pixel_size_um} µm; give "
                             "--pixel-size if the tags are wrong")
    notes = [f"{len(slices)} slices read from {folder} in name order"]
    notes += [n for n in first.notes if not n.startswith("pixel size unknown")]
    if ignored:
        notes.append(f"ignored {len(ignored)} file(s) that are not slice images: "
                     + ", ".join(ignored[:5]) + (" …" if len(ignored) > 5 else ""))
    check_pixel_count(sum(m.data.size for m in parts), first.data.itemsize, folder)
    digest = hashlib.sha256("".join(m.sha256 for m in parts).encode()).hexdigest()
    stack = Micrograph(data=np.stack([m.data for m in parts]), path=folder, sha256=digest,
                       pixel_size_um=first.pixel_size_um,
                       pixel_size_from=first.pixel_size_from,
                       cropped_bottom_px=first.cropped_bottom_px, dtype=first.dtype,
                       bit_depth=first.bit_depth, is_rgb=first.is_rgb, n_pages=len(slices),
                       notes=tuple(notes))
    return check_slice_spacing(stack, slice_spacing_um)


def check_slice_spacing(micrograph: Micrograph, slice_spacing_um: float | None) -> Micrograph:
    """Check that a volume's voxels are cubic: slice spacing equal to the pixel size.

    Parameters
    ----------
    micrograph : Micrograph
        A volume.
    slice_spacing_um : float or None
        Distance between slices, µm (``None``: taken equal to the pixel size).

    Returns
    -------
    Micrograph
        The same volume, with a note on the voxel size.

    Raises
    ------
    InputError
        When the spacing is not positive or differs from the pixel size by more than 1 %.
    """
    if slice_spacing_um is None:
        note = "cubic voxels assumed (slice spacing equal to the pixel size)"
    else:
        if isinstance(slice_spacing_um, bool) or not isinstance(slice_spacing_um, numbers.Real) \
                or not slice_spacing_um > 0:
            raise InputError(f"slice spacing {slice_spacing_um!r} µm must be a positive number")
        size = micrograph.pixel_size_um
        if size is None:
            note = (f"slice spacing {slice_spacing_um:g} µm given but the pixel size is unknown; "
                    "cubic voxels assumed")
        elif abs(slice_spacing_um - size) > CUBIC_TOLERANCE * size:
            raise InputError(f"{micrograph.path or 'volume'}: slices are {slice_spacing_um:g} µm "
                             f"apart but pixels are {size:g} µm wide; the 3D analysis needs "
                             "cubic voxels — resample the stack to equal spacing in x, y and z")
        else:
            note = f"voxels {size:g} µm, slice spacing {slice_spacing_um:g} µm (cubic)"
    return dataclasses.replace(micrograph, notes=micrograph.notes + (note,))


def _natural(name: str):
    """Sort key that orders embedded numbers by value (slice_2 before slice_10)."""
    return [int(t) if t.isdigit() else t.lower() for t in re.split(r"(\d+)", name)]


def _check_file(path: str) -> str:
    if not os.path.exists(path):
        raise InputError(f"{path}: no such file; check the path")
    if os.path.isdir(path):
        raise InputError(f"{path}: is a folder, not an image file")
    if os.path.getsize(path) == 0:
        raise InputError(f"{path}: the file is empty (0 bytes); it was not written completely "
                         "— copy or export it again")
    with open(path, "rb") as f:
        head = f.read(16)
    for magic, kind in _MAGIC.items():
        if head.startswith(magic):
            return kind
    what = "text" if _looks_like_text(head) else "not an image format polisect reads"
    named = os.path.splitext(path)[1].lower()
    raise InputError(f"{path}: the content is {what} (it starts with {head[:8]!r}), though "
                     f"the name ends in '{named}'; give a TIFF, PNG, JPEG or BMP image")


def _looks_like_text(head: bytes) -> bool:
    try:
        head.decode("utf-8")
    except UnicodeDecodeError:
        return False
    return all(32 <= b < 127 or b in (9, 10, 13) for b in head)


def _sha256(path: str) -> str:
    h = hashlib.sha256()
    with open(path, "rb") as f:
        for block in iter(lambda: f.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()


def _damaged(path: str, exc: Exception) -> InputError:
    return InputError(f"{path}: the image could not be decoded ({exc}); the file is truncated "
                      "or damaged — copy or export it again")


def _read_tiff(path, volume, notes):
    import tifffile

    size = os.path.getsize(path)
    try:
        with tifffile.TiffFile(path) as tif:
            pages = list(tif.pages)
            for page in pages:
                ends = [o + c for o, c in zip(page.dataoffsets, page.databytecounts)]
                if ends and max(ends) > size:
                    raise InputError(f"{path}: the TIFF is truncated (its image data reach byte "
                                     f"{max(ends)}, the file has {size}); copy or export it again")
            series = tif.series[0]
            page = series.pages[0]
            is_rgb = page.photometric == tifffile.PHOTOMETRIC.RGB
            tag_size = _tiff_pixel_size(path, page, tif.imagej_metadata, notes)
            n_pages = len(pages)
            first = series if volume else page
            samples = max(1, page.samplesperpixel)
            check_pixel_count(int(np.prod(first.shape)) // samples,
                              samples * np.dtype(first.dtype).itemsize, path)
            if volume:
                data = series.asarray()
                axes = series.axes
            else:
                data = page.asarray()
                axes = page.axes
    except InputError:
        raise
    except Exception as exc:  # tifffile reports damage with many exception types
        raise _damaged(path, exc) from exc
    if "S" in axes:
        data = np.moveaxis(data, axes.index("S"), -1)
        if not is_rgb:
            notes.append(f"the TIFF has {data.shape[-1]} samples per pixel; using the first")
            data = data[..., 0]
    spatial = data.ndim - (1 if is_rgb else 0)
    if volume:
        data = data.reshape((-1,) + data.shape[spatial - 2:])
        if data.shape[0] < 2:
            raise InputError(f"{path}: holds a single image, not a stack; analyse it as a 2D "
                             "section or give a multi-page TIFF")
    elif n_pages > 1:
        notes.append(f"the file has {n_pages} pages; using the first (read it as a volume for "
                     "a 3D analysis)")
    return data, tag_size, n_pages, is_rgb


def _tiff_pixel_size(path, page, imagej, notes):
    """Pixel edge in µm from the resolution tags, or None."""
    tags = page.tags
    if "XResolution" not in tags:
        return None
    xres, yres = (_ratio(tags[k].value) if k in tags else None
                  for k in ("XResolution", "YResolution"))
    yres = yres or xres
    unit = int(tags["ResolutionUnit"].value) if "ResolutionUnit" in tags else 2
    if not (xres and yres and xres > 0 and yres > 0):
        return None
    if unit == 1:
        name = str((imagej or {}).get("unit", "")).strip().lower()
        if name not in _LENGTH_UM:
            return None
        per_unit = _LENGTH_UM[name]
    elif unit == 2:
        if xres in DEFAULT_DPI and yres == xres:
            notes.append(f"the TIFF says {xres:g} dots per inch, a software default rather "
                         "than a calibration; ignored")
            return None
        per_unit = 25400.0
    else:
        per_unit = {3: 1e4, 4: 1e3, 5: 1.0}.get(unit)
        if per_unit is None:
            notes.append(f"unknown TIFF ResolutionUnit {unit}; resolution tags ignored")
            return None
    sx, sy = per_unit / xres, per_unit / yres
    if abs(sx - sy) > 0.01 * max(sx, sy):
        return (sx, sy)
    return sx


def _ratio(value):
    if isinstance(value, tuple):
        return value[0] / value[1] if value[1] else None
    return float(value)


def _read_imageio(path, kind, notes):
    import imageio.v3 as iio

    from PIL import Image

    Image.MAX_IMAGE_PIXELS = MAX_PIXELS  # the decoder's own guard: polisect's limit
    try:
        with Image.open(path) as im:  # reads the header only
            width, height, bands = im.width, im.height, len(im.getbands())
    except Image.DecompressionBombError:
        raise InputError(f"{path} has more than {MAX_PIXELS:,} pixels, the most polisect "
                         "reads; crop a region of interest or downsample it") from None
    except Exception as exc:  # the decoder plug-ins raise many exception types
        raise _damaged(path, exc) from exc
    check_pixel_count(width * height, bands * 2, path)
    try:
        data = np.asarray(iio.imread(path))
    except Exception as exc:  # the decoder plug-ins raise many exception types
        raise _damaged(path, exc) from exc
    if kind == "JPEG":
        notes.append("JPEG is lossy: compression blurs phase boundaries; prefer TIFF or PNG")
    notes.append(f"{kind} files carry no pixel calibration polisect reads")
    if data.ndim == 3 and data.shape[-1] == 2:
        notes.append("grey image with an alpha channel; alpha dropped")
        data = data[..., 0]
    return data, data.ndim == 3 and data.shape[-1] in (3, 4)


def _normalise(path, data, is_rgb, notes):
    """Check the pixels and bring colour to RGB, bool to uint8."""
    if data.dtype == bool:
        data = data.astype(np.uint8)
    if not (np.issubdtype(data.dtype, np.integer) or np.issubdtype(data.dtype, np.floating)):
        raise InputError(f"{path}: pixels of type {data.dtype} are not supported; give integer "
                         "or floating-point grey or RGB pixels")
    if is_rgb and data.shape[-1] == 4:
        full = np.iinfo(data.dtype).max if np.issubdtype(data.dtype, np.integer) else 1.0
        if np.any(data[..., 3] != full):
            notes.append("the alpha channel is not fully opaque; alpha ignored")
        data = data[..., :3]
    spatial = data.shape[:-1] if is_rgb else data.shape
    if len(spatial) not in (2, 3) or min(spatial) < MIN_SIDE_PX:
        dims = "×".join(str(n) for n in spatial)
        raise InputError(f"{path}: the image is {dims} pixels, too small to analyse; give an "
                         f"image at least {MIN_SIDE_PX} pixels in every direction (in practice "
                         "hundreds)")
    if np.issubdtype(data.dtype, np.floating):
        bad = ~np.isfinite(data)
        if bad.any():
            first = np.unravel_index(np.argmax(bad), bad.shape)
            raise InputError(f"{path}: {int(bad.sum())} pixels are NaN or infinite (the first at "
                             f"index {tuple(int(i) for i in first)}); replace them with real "
                             "values or export the image without masked pixels")
    if is_rgb and np.array_equal(data[..., 0], data[..., 1]) and np.array_equal(data[..., 0],
                                                                               data[..., 2]):
        notes.append("grey image stored as RGB; read as grey")
        data, is_rgb = data[..., 0], False
    return data, is_rgb


def _crop(path, data, is_rgb, crop_bottom_px, notes) -> int:
    ny = data.shape[-3] if is_rgb else data.shape[-2]
    if isinstance(crop_bottom_px, str):
        if crop_bottom_px != "auto":
            raise InputError(f"crop_bottom_px = {crop_bottom_px!r}: give a number of rows or "
                             "\"auto\"")
        first = data[0] if data.ndim - is_rgb == 3 else data
        rows = find_info_band(to_grayscale(first) if is_rgb else first)
        notes.append(f"cut an information band of {rows} rows at the bottom (auto-detected)"
                     if rows else "auto crop: no information band found at the bottom; "
                                  "nothing cut")
        return rows
    if isinstance(crop_bottom_px, bool) or not isinstance(crop_bottom_px, (int, np.integer)) \
            or crop_bottom_px < 0:
        raise InputError(f"crop_bottom_px = {crop_bottom_px!r}: give a whole number of rows "
                         "≥ 0 or \"auto\"")
    if ny - crop_bottom_px < MIN_SIDE_PX:
        raise InputError(f"{path}: crop_bottom_px = {crop_bottom_px} would leave "
                         f"{max(ny - crop_bottom_px, 0)} of the image's {ny} rows; give a "
                         "smaller crop")
    if crop_bottom_px:
        notes.append(f"cut {crop_bottom_px} rows at the bottom (as configured)")
    return int(crop_bottom_px)


def _pixel_size(path, tag_size, given, given_from, notes):
    if given is not None:
        if isinstance(given, bool) or not isinstance(given, numbers.Real) \
                or not np.isfinite(given) or given <= 0:
            raise InputError(f"pixel size {given!r} µm (from the {given_from}) must be a "
                             "positive number")
        given = float(given)
    if given is not None and (tag_size is None or given_from == "command line"):
        if isinstance(tag_size, float) and abs(tag_size - given) > 0.01 * given:
            notes.append(f"the TIFF tags say {tag_size:.6g} µm per pixel; using the "
                         f"{given:.6g} µm from the {given_from}")
        elif isinstance(tag_size, tuple):
            notes.append(f"the TIFF tags give non-square pixels ({tag_size[0]:.6g} × "
                         f"{tag_size[1]:.6g} µm); using the {given:.6g} µm from the {given_from}")
        return given, given_from
    if isinstance(tag_size, tuple):
        raise InputError(f"{path}: the TIFF tags give non-square pixels ({tag_size[0]:.6g} µm "
                         f"across, {tag_size[1]:.6g} µm down); resample the image to square "
                         "pixels, or give --pixel-size if the tags are wrong")
    if tag_size is not None:
        if given is not None and abs(tag_size - given) > 0.01 * given:
            notes.append(f"the TIFF tags say {tag_size:.6g} µm per pixel, the {given_from} "
                         f"{given:.6g} µm; using the tags (give --pixel-size to override them)")
        return tag_size, "tiff-tags"
    notes.append("pixel size unknown: sizes are in pixels; give pixel_size_um in [image] or "
                 "--pixel-size for micrometres")
    return None, "unknown"


def to_grayscale(image: np.ndarray) -> np.ndarray:
    """Luminance of an RGB(A) image, on the scale of the input; grey images pass unchanged.

    Parameters
    ----------
    image : ndarray, shape (..., 3) or (..., 4) for colour, else grey
        Colour axis last; an alpha channel is ignored.

    Returns
    -------
    ndarray of float64 for colour input (0–255 for 8-bit input, 0–65535 for 16-bit),
    the input itself for grey input.

    Notes
    -----
    Y = 0.2126 R + 0.7152 G + 0.0722 B, the ITU-R BT.709 luma weights applied to the
    stored (gamma-encoded) values, as ``skimage.color.rgb2gray`` does (its rounded
    weights 0.2125, 0.7154, 0.0721) but without rescaling to [0, 1], so that thresholds
    keep the units of the file.

    References
    ----------
    .. [1] ITU-R Recommendation BT.709-6 (2015). Parameter values for the HDTV standards
       for production and international programme exchange, item 3.2.

    Examples
    --------
    >>> import numpy as np
    >>> to_grayscale(np.array([[[255, 255, 255], [255, 0, 0]]], np.uint8)).round(2)
    array([[255.  ,  54.21]])
    """
    image = np.asarray(image)
    if image.ndim < 3 or image.shape[-1] not in (3, 4):
        return image
    return image[..., :3].astype(np.float64) @ np.array(BT709)


def find_info_band(image: np.ndarray, *, max_fraction: float = 0.4, min_rows: int = 3) -> int:
    """Height of an instrument information band at the bottom of a grey image (0 if none).

    A band row is one in which at least 40 % of the pixels lie within 2 % of the image's
    grey range of the band's background level (the median of the bottom row): a uniform
    band, or one with text and a scale bar on it. The band is the run of such rows up
    from the bottom edge, with up to three uniform separator lines above it. It is
    accepted when it is between *min_rows* and *max_fraction* of the height tall and the
    rows above look different (their median share of background-level pixels is at most
    half and at least 0.3 below the band's mean share). Images with at most `LABEL_LEVELS`
    distinct grey levels are label maps and have no band.

    Parameters
    ----------
    image : ndarray, shape (ny, nx)
        Grey image.
    max_fraction : float
        Tallest band accepted, as a fraction of the image height.
    min_rows : int
        Lowest band accepted, rows.

    Returns
    -------
    int
        Rows to cut.

    Examples
    --------
    >>> import numpy as np
    >>> rng = np.random.default_rng(0)
    >>> img = rng.integers(60, 200, (100, 80))
    >>> img[90:] = 5
    >>> img[93:96, 10:40] = 250
    >>> find_info_band(img)
    10
    """
    g = np.asarray(image, dtype=np.float64)
    span = float(g.max() - g.min())
    if span == 0 or np.unique(g[::max(1, g.shape[0] // 64), ::max(1, g.shape[1] // 64)]).size \
            <= LABEL_LEVELS:
        return 0
    tol = 0.02 * span
    level = np.median(g[-1])
    share = (np.abs(g - level) <= tol).mean(axis=1)
    ny = g.shape[0]
    run = 0
    while run < ny and share[ny - 1 - run] >= 0.4:
        run += 1
    if run < min_rows or run > max_fraction * ny:
        return 0
    above = share[: ny - run]
    if np.median(above) > 0.5 or share[ny - run:].mean() - np.median(above) < 0.3:
        return 0
    for _ in range(3):
        row = g[ny - 1 - run]
        if run + 1 > max_fraction * ny or np.ptp(row) > tol:
            break
        run += 1
    return run


def read_annotations(path: str | os.PathLike, micrograph: Micrograph) -> np.ndarray:
    """Read an annotation (strokes) image for a micrograph.

    The file holds whole numbers: 0 = not annotated, v = phase label v − 1. It has the
    size of the micrograph's file (the rows of a cut information band are then cut from
    it too) or of the micrograph as cut.

    Raises
    ------
    InputError
        Not a single-channel integer image, negative values, or another size.
    """
    ann = read_image(path, crop_bottom_px=0, pixel_size_um=1.0).data
    if ann.ndim != 2 or not np.issubdtype(ann.dtype, np.integer) or ann.min() < 0:
        raise InputError(f"{os.fspath(path)}: annotations must be a single-channel image of "
                         "whole numbers ≥ 0 (0 = not annotated, v = phase label v − 1), e.g. "
                         "an 8-bit PNG")
    ny, nx = micrograph.shape[-2:]
    cut = micrograph.cropped_bottom_px
    if ann.shape == (ny + cut, nx) and cut:
        ann = ann[:ny]
    if ann.shape != (ny, nx):
        raise InputError(f"{os.fspath(path)}: annotations of {ann.shape[1]} × {ann.shape[0]} px "
                         f"do not match the image ({nx} × {ny + cut} px); paint them on the "
                         "same image")
    return ann.astype(np.int32)


def write_tiff(path: str | os.PathLike, data: np.ndarray, *, pixel_size_um: float | None = None,
               unit: str = "centimeter", compress: bool = False) -> None:
    """Write an image as TIFF with resolution tags (atomically).

    Parameters
    ----------
    path : str or path-like
        Output file.
    data : ndarray
        Grey (ny, nx), RGB (ny, nx, 3) or stack (nz, ny, nx).
    pixel_size_um : float, optional
        Pixel edge, µm, written as XResolution/YResolution in pixels per *unit*.
    unit : {'centimeter', 'inch'}
        ResolutionUnit to write.
    compress : bool
        Deflate (zlib) compression, lossless.
    """
    import tifffile

    data = np.asarray(data)
    rgb = data.ndim == 3 and data.shape[-1] in (3, 4)
    kwargs = {"photometric": "rgb" if rgb else "minisblack", "metadata": None}
    if pixel_size_um is not None:
        per_um = {"centimeter": 1e4, "inch": 25400.0}[unit] / pixel_size_um
        kwargs.update(resolution=(per_um, per_um), resolutionunit=unit.upper())
    if compress:
        kwargs["compression"] = "zlib"
    atomic_write(path, lambda tmp: tifffile.imwrite(tmp, data, **kwargs))
