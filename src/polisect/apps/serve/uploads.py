"""Uploaded files: streamed to disk under a size limit, typed by content, safely named.

Nothing here trusts the browser: the name it sends is reduced to a plain ASCII stem, the
extension comes from the file's first bytes (TIFF, PNG, JPEG or BMP), and every upload
lives in its own folder under a random identifier, so no name can reach outside the
store.

Examples
--------
>>> safe_stem("../../etc/Schliff Probe ä 1.TIF")
'Schliff_Probe_a_1'
>>> sniff(b"\\x89PNG\\r\\n\\x1a\\n")
'.png'
"""

from __future__ import annotations

import os
import re
import secrets
import shutil
import threading
import unicodedata
from dataclasses import dataclass

from ...core.errors import InputError

#: File signatures of the image formats polisect reads, and the extension each one gets.
SIGNATURES = ((b"II*\x00", ".tif"), (b"MM\x00*", ".tif"), (b"II+\x00", ".tif"),
              (b"MM\x00+", ".tif"), (b"\x89PNG\r\n\x1a\n", ".png"), (b"\xff\xd8\xff", ".jpg"),
              (b"BM", ".bmp"))
UPLOAD_ID = re.compile(r"[0-9a-f]{16}")
_CHUNK = 1 << 20


def sniff(head: bytes) -> str | None:
    """The extension for a file starting with *head*, or ``None`` when it is no image we read."""
    for magic, ext in SIGNATURES:
        if head.startswith(magic):
            return ext
    return None


def safe_stem(name: str) -> str:
    """A file-name stem made of ASCII letters, digits, ``_`` and ``-`` only (≤ 64 characters).

    Folders in *name* (either slash) and its extension are dropped; accented letters lose
    their accents; anything else becomes ``_``. An empty result becomes ``"section"``.
    """
    base = re.split(r"[\\/]", str(name))[-1]
    stem, dot, _ = base.rpartition(".")
    stem = stem if dot else base
    ascii_ = unicodedata.normalize("NFKD", stem).encode("ascii", "ignore").decode("ascii")
    clean = re.sub(r"[^A-Za-z0-9_-]+", "_", ascii_).strip("_-")[:64].strip("_-")
    return clean or "section"


def describe_head(head: bytes) -> str:
    """How the start of an unknown file reads, for the error message."""
    try:
        text = head.decode("utf-8")
    except UnicodeDecodeError:
        return f"binary data starting with {head[:8]!r}"
    if all(ch.isprintable() or ch in "\r\n\t" for ch in text):
        shown = text[:24].replace("\n", " ").replace("\r", " ")
        return f"text (“{shown}…”)"
    return f"binary data starting with {head[:8]!r}"


@dataclass(frozen=True)
class Upload:
    """One stored upload."""

    id: str
    folder: str
    path: str
    name: str
    size: int

    @property
    def stem(self) -> str:
        return os.path.splitext(os.path.basename(self.path))[0]


class UploadStore:
    """Uploads in their own folders under *root*; the oldest go when more than *keep* are held
    or they take more than five times the upload limit.

    Parameters
    ----------
    root : str
        Folder for the uploads (created).
    max_bytes : int
        Largest upload accepted.
    keep : int
        Uploads kept at once.
    """

    def __init__(self, root: str, max_bytes: int, keep: int = 16):
        self.root = os.path.abspath(root)
        self.max_bytes = int(max_bytes)
        self.keep = keep
        self._lock = threading.Lock()
        self._held: dict[str, int] = {}
        os.makedirs(self.root, exist_ok=True)

    def limit_message(self, size: int) -> str:
        return (f"the file is {size / 1e6:.1f} MB, more than this server's limit of "
                f"{self.max_bytes / 1e6:.0f} MB; crop or compress it losslessly, or restart "
                "the server with a larger --max-upload-mb")

    def save(self, stream, length: int, name: str) -> Upload:
        """Read *length* bytes from *stream* into a new upload named after *name*.

        Raises
        ------
        InputError
            Empty or too large file, a file that is not a TIFF/PNG/JPEG/BMP image by its
            content, or a transfer that ended early.
        """
        shown = re.split(r"[\\/]", str(name))[-1][:120] or "the file"
        if length <= 0:
            raise InputError(f"{shown}: the file is empty (0 bytes); it was not written "
                             "completely — copy or export it again")
        if length > self.max_bytes:
            raise InputError(f"{shown}: " + self.limit_message(length))
        head = stream.read(min(length, _CHUNK))
        ext = sniff(head[:16])
        if ext is None:
            raise InputError(f"{shown}: the content is {describe_head(head[:32])}, not a TIFF, "
                             "PNG, JPEG or BMP image, whatever its name says; choose the "
                             "micrograph file itself")
        upload_id = secrets.token_hex(8)
        folder = os.path.join(self.root, upload_id)
        os.makedirs(folder)
        path = os.path.join(folder, safe_stem(name) + ext)
        try:
            received = self._copy(stream, head, length, path + ".part")
            if received < length:
                raise InputError(f"{shown}: the upload stopped after {received} of {length} "
                                 "bytes; drop the file again")
            os.replace(path + ".part", path)
        except BaseException:
            shutil.rmtree(folder, ignore_errors=True)
            raise
        self._remember(upload_id, length)
        return Upload(upload_id, folder, path, shown, length)

    @staticmethod
    def _copy(stream, head: bytes, length: int, path: str) -> int:
        received = len(head)
        with open(path, "wb") as f:
            f.write(head)
            while received < length:
                block = stream.read(min(_CHUNK, length - received))
                if not block:
                    break
                f.write(block)
                received += len(block)
        return received

    def _remember(self, upload_id: str, size: int) -> None:
        with self._lock:
            self._held[upload_id] = size
            while len(self._held) > 1 and (len(self._held) > self.keep
                                           or sum(self._held.values()) > 5 * self.max_bytes):
                oldest = next(iter(self._held))
                del self._held[oldest]
                shutil.rmtree(os.path.join(self.root, oldest), ignore_errors=True)

    def get(self, upload_id: str) -> Upload:
        """The upload with this identifier.

        Raises
        ------
        InputError
            When the identifier is malformed or the upload is gone.
        """
        if not isinstance(upload_id, str) or not UPLOAD_ID.fullmatch(upload_id):
            raise InputError("no such upload; drop the image again")
        folder = os.path.join(self.root, upload_id)
        images = [n for n in os.listdir(folder) if sniff_name(n)] if os.path.isdir(folder) else []
        if not images:
            raise InputError("the uploaded image is no longer on the server (it was replaced by "
                             "newer uploads or the server restarted); drop it again")
        path = os.path.join(folder, images[0])
        return Upload(upload_id, folder, path, images[0], os.path.getsize(path))

    def discard(self, upload_id: str) -> None:
        """Remove an upload (e.g. one that turned out unreadable)."""
        if UPLOAD_ID.fullmatch(upload_id):
            shutil.rmtree(os.path.join(self.root, upload_id), ignore_errors=True)
            with self._lock:
                self._held.pop(upload_id, None)

    def close(self) -> None:
        """Delete every upload and the store's folder."""
        shutil.rmtree(self.root, ignore_errors=True)


def sniff_name(name: str) -> bool:
    """Whether *name* is an image this store wrote (an extension from `SIGNATURES`)."""
    return name.endswith(tuple({ext for _, ext in SIGNATURES}))
