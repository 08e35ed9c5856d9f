"""`polisect serve`: the drop-in page, served by the standard library's threading HTTP server.

Why the standard library: the page needs a dozen JSON endpoints, static files and one
streamed upload; `http.server.ThreadingHTTPServer` does that without adding a dependency
to a scientific package, and keeping the request handling in one short file makes
every check (size, type, names, origin) visible. Uploads arrive as the raw request body
(the file name in a header), so no multipart parser is needed.

Endpoints (all JSON unless said)::

    GET  /                               the page (static/index.html)
    GET  /static/app.js | style.css      the page's script and style
    GET  /api/info                       version, limits, material library, options
    POST /api/uploads                    body = the file; header X-Filename → image facts
                                         (?quick=1: only its size and preview, at once)
    POST /api/uploads/<id>/inspect       {"crop": "auto" | rows} → image facts again
    GET  /api/uploads/<id>/preview       the subsampled grey image, float32 little-endian
    POST /api/uploads/<id>/thresholds    {"crop", "classes", "denoise", "denoise_px"}
                                         → the multi-Otsu thresholds of the full image
    POST /api/uploads/<id>/labels        {"thresholds", "denoise", "denoise_px",
                                         "min_feature_px"} → the preview's labels, uint8
    POST /api/uploads/<id>/strokes       {"strokes", "phases"} → the random forest trained
                                         on the strokes: the preview's phase labels
                                         (base64), mean confidence, share of pixels painted;
                                         {"prepare": true, "phases"} corrects the preview
                                         grid ahead of the first strokes
    POST /api/uploads/<id>/model         {"strokes"} → the segmenter trained on the full
                                         image, as a .npz file (as `polisect train`)
    POST /api/config                     {"config", "image", "command"} → the TOML text
    POST /api/runs                       {"upload", "config", "strokes"} → {"id"}
    GET  /api/runs                       past and current runs, newest first
    GET  /api/runs/<id>                  a run's status and progress
    POST /api/runs/<id>/cancel           stop it
    GET  /api/runs/<id>/files/<kind>     report | json | csv | phasemap | overlay |
                                         particles | segmenter | strokes | config
                                         (?inline=1 to view)

Security: bound to loopback unless asked otherwise; whatever the bind address, the Host
header must name this server's port and an IP address or one of this machine's names (no
DNS rebinding); POSTs need the ``X-Polisect`` header and a same-origin ``Origin`` (no
cross-site requests); JSON bodies are bounded in size, depth and number range; every path
component is matched against a strict pattern, never joined as given; responses carry a
restrictive Content-Security-Policy; the listen queue holds bursts of 128 connections.
"""

from __future__ import annotations

import ipaddress
import json
import math
import os
import re
import shutil
import signal
import socket
import sys
import tempfile
import threading
import time
import traceback
import urllib.parse
from http.server import BaseHTTPRequestHandler, ThreadingHTTPServer
from importlib import resources

from ... import __version__
from ...core.errors import InputError
from ...present.htmlkit import PALETTE
from . import work
from .jobs import RunManager, TaskFailed, Tasks, process_context
from .runconfig import page_options, run_config_toml
from .uploads import UploadStore

MAX_JSON_BYTES = 1 << 20
#: Largest request carrying strokes (run-length encoded painted pixels).
MAX_STROKES_BYTES = 16 << 20
MAX_JSON_DEPTH = 32
MAX_UPLOAD_MB = 100_000
STATIC = {"/": ("index.html", "text/html; charset=utf-8"),
          "/static/app.js": ("app.js", "text/javascript; charset=utf-8"),
          "/static/style.css": ("style.css", "text/css; charset=utf-8")}
DOWNLOADS = {"report": "text/html; charset=utf-8", "json": "application/json",
             "csv": "text/csv; charset=utf-8", "phasemap": "image/tiff", "overlay": "image/png",
             "particles": "text/csv; charset=utf-8", "config": "application/toml",
             "segmenter": "application/octet-stream", "strokes": "image/png"}
PAGE_CSP = ("default-src 'self'; img-src 'self' data: blob:; frame-src 'self'; "
            "object-src 'none'; base-uri 'none'; form-action 'none'; frame-ancestors 'none'")
REPORT_CSP = ("default-src 'none'; img-src data:; style-src 'unsafe-inline'; "
              "frame-ancestors 'self'; sandbox")
_ROUTES = [
    ("GET", re.compile(r"/api/info"), "info"),
    ("POST", re.compile(r"/api/uploads"), "upload"),
    ("POST", re.compile(r"/api/uploads/([^/]+)/inspect"), "inspect"),
    ("GET", re.compile(r"/api/uploads/([^/]+)/preview"), "preview"),
    ("POST", re.compile(r"/api/uploads/([^/]+)/thresholds"), "thresholds"),
    ("POST", re.compile(r"/api/uploads/([^/]+)/labels"), "labels"),
    ("POST", re.compile(r"/api/uploads/([^/]+)/strokes"), "strokes"),
    ("POST", re.compile(r"/api/uploads/([^/]+)/model"), "model"),
    ("POST", re.compile(r"/api/config"), "config"),
    ("POST", re.compile(r"/api/runs"), "submit"),
    ("GET", re.compile(r"/api/runs"), "runs"),
    ("GET", re.compile(r"/api/runs/([^/]+)"), "run"),
    ("POST", re.compile(r"/api/runs/([^/]+)/cancel"), "cancel"),
    ("GET", re.compile(r"/api/runs/([^/]+)/files/([a-z]+)"), "download"),
]


class HttpError(Exception):
    """An error answered with *status* and a message for the page."""

    def __init__(self, status: int, message: str):
        super().__init__(message)
        self.status = status


class App:
    """The server's state: the upload store, the child tasks, the runs, the static files.

    Parameters
    ----------
    out_dir : str
        Where the runs are written.
    max_upload_bytes : int
        Largest upload accepted.
    parallel_runs : int
        Runs computed at the same time.
    """

    def __init__(self, out_dir: str, *, max_upload_bytes: int = 200 * 10**6,
                 parallel_runs: int = 1):
        ctx = process_context()
        self.uploads = UploadStore(tempfile.mkdtemp(prefix="polisect-serve-"), max_upload_bytes)
        self.tasks = Tasks(ctx)
        self.runs = RunManager(out_dir, ctx, parallel=parallel_runs)
        self.static = {route: (resources.files("polisect.apps.serve").joinpath("static", name)
                               .read_bytes(), ctype) for route, (name, ctype) in STATIC.items()}
        self.options = page_options()
        threading.Thread(target=self._warm, name="polisect-warm", daemon=True).start()

    def _warm(self) -> None:
        """Start the fork server now, so the first upload's preview does not wait for it
        to import the numerical stack (several seconds on a cold start)."""
        try:
            self.tasks.call(work.warm, what="starting the workers")
        except (InputError, TaskFailed, OSError, ValueError):
            pass  # the first real task starts it again and reports any failure

    def info(self) -> dict:
        return {"version": __version__, "max_upload_bytes": self.uploads.max_bytes,
                "out_dir": self.runs.out_dir, "palette": list(PALETTE), **self.options}

    def close(self) -> None:
        self.runs.close()
        self.uploads.close()


class Handler(BaseHTTPRequestHandler):
    """One request. Every answer is JSON ``{"error": message}`` on failure."""

    server_version = "polisect"
    sys_version = ""
    # the base class's answers to malformed request lines: plain text, never HTML
    error_content_type = "text/plain; charset=utf-8"
    error_message_format = "%(code)d %(message)s\n"
    protocol_version = "HTTP/1.1"
    timeout = 120

    @property
    def app(self) -> App:
        return self.server.app

    def do_GET(self):
        self._dispatch("GET")

    def do_POST(self):
        self._dispatch("POST")

    def do_PUT(self):
        self._dispatch("OTHER")

    do_DELETE = do_PATCH = do_PUT

    def _dispatch(self, method: str) -> None:
        self._unread = method != "GET"
        try:
            self._check_host()
            path = urllib.parse.urlsplit(self.path).path
            if method == "GET" and path in self.app.static:
                body, ctype = self.app.static[path]
                return self._send(200, body, ctype, csp=PAGE_CSP, cache=True)
            if method == "POST":
                self._check_origin()
            for verb, pattern, name in _ROUTES:
                m = pattern.fullmatch(path)
                if m and verb == method:
                    return getattr(self, "_" + name)(*m.groups())
            known = any(p.fullmatch(path) for _, p, _ in _ROUTES)
            raise HttpError(405 if known else 404,
                            "method not allowed here" if known else f"nothing at {path[:80]}")
        except HttpError as exc:
            self._error(exc.status, str(exc))
        except InputError as exc:
            self._error(400, str(exc))
        except TaskFailed as exc:
            self._error(422, str(exc))
        except (BrokenPipeError, ConnectionResetError):
            self.close_connection = True
        except Exception:  # noqa: BLE001 - the server must survive any request
            traceback.print_exc(file=sys.stderr)
            self._error(500, "internal error in the server (the traceback is in the terminal "
                             "that runs polisect serve); please report it")

    # -- checks -------------------------------------------------------------------------

    def _check_host(self) -> None:
        if not self.server.names_this(self.headers.get("Host") or ""):
            raise HttpError(421, "this server answers only to its own address "
                                 f"(http://{self.server.address})")

    def _check_origin(self) -> None:
        if self.headers.get("X-Polisect") != "1":
            raise HttpError(403, "requests that change anything must come from the polisect page")
        origin = self.headers.get("Origin")
        if origin is not None and origin.lower() != \
                f"http://{(self.headers.get('Host') or '').lower()}":
            raise HttpError(403, "cross-site request refused")

    def _body_length(self) -> int:
        if self.headers.get("Transfer-Encoding"):
            self.close_connection = True
            raise HttpError(411, "send the file with a Content-Length (no chunked transfer)")
        try:
            length = int(self.headers.get("Content-Length", ""))
        except ValueError:
            self.close_connection = True
            raise HttpError(411, "the request has no valid Content-Length")
        if length < 0:
            self.close_connection = True
            raise HttpError(400, "negative Content-Length")
        return length

    def _json_body(self, limit: int = MAX_JSON_BYTES) -> dict:
        length = self._body_length()
        if length > limit:
            self.close_connection = True
            raise HttpError(413, "request too large" + (
                "" if limit == MAX_JSON_BYTES else
                f" (more than {limit >> 20} MB of strokes); paint fewer or shorter strokes"))
        raw = self.rfile.read(length)
        self._unread = False
        try:
            text = raw.decode("utf-8") or "{}"
            if _depth(text) > MAX_JSON_DEPTH:
                raise ValueError(f"nested deeper than {MAX_JSON_DEPTH} levels")
            data = json.loads(text, parse_constant=_no_constant, parse_float=_finite)
        except (UnicodeDecodeError, ValueError, RecursionError) as exc:
            raise HttpError(400, f"the request is not valid JSON ({str(exc)[:200]})")
        if not isinstance(data, dict):
            raise HttpError(400, "the request must be a JSON object")
        return data

    # -- endpoints ----------------------------------------------------------------------

    def _info(self):
        self._json(self.app.info())

    def _upload(self):
        length = self._body_length()
        name = urllib.parse.unquote(self.headers.get("X-Filename", "") or "section")
        store = self.app.uploads
        if length > store.max_bytes:
            self.close_connection = True
            raise HttpError(413, f"{os.path.basename(name)[:120]}: "
                                 + store.limit_message(length))
        upload = store.save(self.rfile, length, name)
        self._unread = False
        quick = urllib.parse.parse_qs(urllib.parse.urlsplit(self.path).query).get("quick")
        self._json(self._inspect_upload(upload, "auto", fresh=True, quick=bool(quick)))

    def _inspect_upload(self, upload, crop, *, fresh: bool = False, quick: bool = False) -> dict:
        try:
            facts = (self._task(upload, work.quick_look, what=f"reading {upload.name}") if quick
                     else self._task(upload, work.inspect_upload, crop,
                                     what=f"reading {upload.name}"))
        except (InputError, TaskFailed):
            if fresh:
                self.app.uploads.discard(upload.id)
            raise
        return {"id": upload.id, "name": upload.name, "stem": upload.stem, "bytes": upload.size,
                **facts}

    def _inspect(self, upload_id):
        body = self._json_body()
        upload = self.app.uploads.get(upload_id)
        crop = body.get("crop", "auto")
        if not (crop == "auto" or (isinstance(crop, int) and not isinstance(crop, bool))):
            raise InputError("the information band is \"auto\" or a whole number of rows")
        self._json(self._inspect_upload(upload, crop))

    def _preview(self, upload_id):
        upload = self.app.uploads.get(upload_id)
        path = os.path.join(upload.folder, work.PREVIEW)
        if not os.path.isfile(path):
            raise HttpError(404, "no preview for this upload yet")
        with open(path, "rb") as f:
            self._send(200, f, "application/octet-stream")

    def _thresholds(self, upload_id):
        body = self._json_body()
        upload = self.app.uploads.get(upload_id)
        thresholds = self._task(upload, work.auto_thresholds, body.get("crop", 0),
                                body.get("classes"), body.get("denoise", "median"),
                                body.get("denoise_px", 1.0), what="finding the thresholds")
        self._json({"thresholds": thresholds})

    def _labels(self, upload_id):
        body = self._json_body()
        upload = self.app.uploads.get(upload_id)
        labels = self._task(upload, work.preview_labels, body.get("thresholds"),
                            body.get("denoise", "median"), body.get("denoise_px", 1.0),
                            body.get("min_feature_px", "auto"), what="segmenting the preview")
        self._send(200, labels, "application/octet-stream")

    def _strokes(self, upload_id):
        body = self._json_body(MAX_STROKES_BYTES)
        upload = self.app.uploads.get(upload_id)
        if body.get("prepare") is True:
            phases = self._task(upload, work.strokes_prepare, body.get("phases"),
                                what="preparing the image for strokes")
            return self._json({"prepared": phases})
        self._json(self._task(upload, work.strokes_preview, body.get("strokes"),
                              body.get("phases"), what="training on the strokes"))

    def _model(self, upload_id):
        body = self._json_body(MAX_STROKES_BYTES)
        upload = self.app.uploads.get(upload_id)
        path = self._task(upload, work.strokes_model, body.get("strokes"),
                          what="training the model on the full image")
        name = os.path.basename(path)
        with open(path, "rb") as f:
            self._send(200, f, DOWNLOADS["segmenter"],
                       disposition=f'attachment; filename="{name}"')

    def _config(self):
        body = self._json_body()
        image, command = body.get("image", "IMAGE"), body.get("command")
        if not isinstance(image, str) or not (command is None or isinstance(command, str)):
            raise InputError("image and command must be text")
        text = run_config_toml(body.get("config"), image[:200], command=command and command[:300])
        self._send(200, text.encode("utf-8"), "application/toml; charset=utf-8")

    def _task(self, upload, fn, *args, what: str):
        """``fn(upload.path, *args)`` in a child; messages name the file, not its path."""
        try:
            return self.app.tasks.call(fn, upload.path, *args, what=what)
        except (InputError, TaskFailed) as exc:
            raise type(exc)(str(exc).replace(upload.path, upload.name)) from None

    def _submit(self):
        body = self._json_body(MAX_STROKES_BYTES)
        upload = self.app.uploads.get(body.get("upload"))
        config, files = body.get("config"), {}
        if body.get("strokes") is not None:
            config, files = self._with_strokes(upload, config, body["strokes"])
        text = run_config_toml(config, os.path.basename(upload.path))
        run_id = self.app.runs.submit(upload.path, upload.stem, text, files=files)
        self._json({"id": run_id}, status=201)

    def _with_strokes(self, upload, config, strokes) -> tuple[dict, dict]:
        """A run config whose ``[segment]`` trains on *strokes*, and the strokes file."""
        segment = (config or {}).get("segment") if isinstance(config, dict) else None
        if not isinstance(segment, dict) or segment.get("method") != "trained":
            raise InputError("strokes are sent but [segment] method is not \"trained\"; "
                             "choose “trained from strokes” in step 2")
        meta = work.preview_meta(upload.path)
        name = upload.stem + work.STROKES_SUFFIX
        png = work.strokes_png(strokes, meta["image_shape"])
        segment = {k: v for k, v in segment.items() if k != "model"}
        return {**config, "segment": {**segment, "annotations": name}}, {name: png}

    def _runs(self):
        self._json({"runs": self.app.runs.list()})

    def _run(self, run_id):
        self._json({**self.app.runs.status(run_id), "server_time": time.time()})

    def _cancel(self, run_id):
        self._json_body()
        self._json(self.app.runs.cancel(run_id))

    def _download(self, run_id, kind):
        if kind not in DOWNLOADS:
            raise HttpError(404, f"no file of kind {kind[:20]!r}; one of {', '.join(DOWNLOADS)}")
        folder = self.app.runs.folder(run_id)
        status = self.app.runs.status(run_id)
        name = (status.get("outputs") or {}).get(kind)
        if kind == "config":
            name = work.CONFIG
        if not name or os.path.basename(name) != name or not os.path.isfile(
                os.path.join(folder, name)):
            raise HttpError(404, f"run {run_id} has no {kind} file"
                                 + ("" if status.get("state") == "done" else " (it is not done)"))
        inline = urllib.parse.parse_qs(urllib.parse.urlsplit(self.path).query).get("inline")
        disposition = None if inline else f'attachment; filename="{name}"'
        with open(os.path.join(folder, name), "rb") as f:
            self._send(200, f, DOWNLOADS[kind], disposition=disposition,
                       csp=REPORT_CSP if kind == "report" else "default-src 'none'; sandbox")

    # -- answers ------------------------------------------------------------------------

    def _json(self, data, status: int = 200) -> None:
        self._send(status, json.dumps(data, allow_nan=False).encode("utf-8"), "application/json")

    def _error(self, status: int, message: str) -> None:
        if self._unread:
            self.close_connection = True  # the rest of the body must not be read as a request
        try:
            self._json({"error": message}, status=status)
            if self._unread:
                self._linger()
        except (BrokenPipeError, ConnectionResetError):
            self.close_connection = True

    def _linger(self) -> None:
        """Close our side, then read and drop what the client still sends (for up to 2 s).

        Closing a socket with unread data makes the kernel reset the connection, and a
        reset can destroy the error message before the browser reads it.
        """
        try:
            self.connection.shutdown(socket.SHUT_WR)
            self.connection.settimeout(0.5)
            deadline = time.monotonic() + 2.0
            while time.monotonic() < deadline and self.connection.recv(1 << 16):
                pass
        except OSError:
            pass

    def _send(self, status, body, ctype: str, *, csp: str = "default-src 'none'",
              disposition: str | None = None, cache: bool = False) -> None:
        """Answer with *body*: bytes, or an open binary file streamed in blocks."""
        size = len(body) if isinstance(body, bytes) else os.fstat(body.fileno()).st_size
        self.send_response(status)
        self.send_header("Content-Type", ctype)
        self.send_header("Content-Length", str(size))
        self.send_header("X-Content-Type-Options", "nosniff")
        self.send_header("Referrer-Policy", "no-referrer")
        self.send_header("Cross-Origin-Resource-Policy", "same-origin")
        self.send_header("Content-Security-Policy", csp)
        self.send_header("Cache-Control", "no-cache" if cache else "no-store")
        if disposition:
            self.send_header("Content-Disposition", disposition)
        if self.close_connection:
            self.send_header("Connection", "close")
        self.end_headers()
        if isinstance(body, bytes):
            self.wfile.write(body)
        else:
            shutil.copyfileobj(body, self.wfile, 1 << 20)

    def log_message(self, format, *args):  # noqa: A002 - the base class's signature
        if self.server.verbose:
            super().log_message(format, *args)


def _no_constant(name):
    raise ValueError(f"{name} is not a number JSON allows")


def _finite(text: str) -> float:
    value = float(text)
    if not math.isfinite(value):
        raise ValueError(f"{text[:40]} is too large a number")
    return value


def _depth(text: str) -> int:
    """Deepest nesting of brackets in a JSON text (brackets inside strings ignored)."""
    depth = deepest = 0
    for token in re.finditer(r'"(?:\\.|[^"\\])*"|[\[{]|[\]}]', text):
        c = token.group()
        if c in "[{":
            depth += 1
            deepest = max(deepest, depth)
        elif c in "]}":
            depth -= 1
    return deepest


class Server(ThreadingHTTPServer):
    """The HTTP server with the `App` and the host names it answers to."""

    daemon_threads = True
    request_queue_size = 128  # the listen backlog: bursts of requests wait, not fail

    def __init__(self, app: App, host: str, port: int, *, verbose: bool = False):
        self.app = app
        self.verbose = verbose
        family = ipaddress.ip_address(host).version if _is_ip(host) else 4
        if family == 6:
            self.address_family = socket.AF_INET6
        super().__init__((host, port), Handler)
        self.port = self.server_address[1]
        bound = ipaddress.ip_address(self.server_address[0].split("%")[0])
        self.any_host = not is_loopback(str(bound))
        shown = f"[{bound}]" if bound.version == 6 else str(bound)
        self.address = f"{shown}:{self.port}"
        names = {"localhost", host.lower().strip("[]")}
        if self.any_host:
            names |= {socket.gethostname().lower(), socket.getfqdn().lower()}
        self.host_names = names

    def names_this(self, header: str) -> bool:
        """Whether a request's Host header names this server: its port, and an IP address
        (a browser sends one only when the user typed it, never for another site's page, so
        DNS rebinding cannot pass) or one of this machine's names."""
        m = re.fullmatch(r"(\[[0-9a-fA-F:.]+\]|[^:\[\]]+)(?::(\d{1,5}))?", header.strip())
        if not m or int(m.group(2) or 80) != self.port:
            return False
        name = m.group(1).strip("[]").lower()
        return _is_ip(name) or name in self.host_names


def _interrupt(signum, frame):
    signal.signal(signum, signal.SIG_IGN)  # once is enough: let the clean-up finish
    raise KeyboardInterrupt


def _is_ip(host: str) -> bool:
    try:
        ipaddress.ip_address(host)
    except ValueError:
        return False
    return True


def is_loopback(host: str) -> bool:
    """Whether *host* names this machine only (127.0.0.0/8, ::1, localhost), shorthand
    IPv4 forms such as ``127.1`` included."""
    if host.lower() == "localhost":
        return True
    if not _is_ip(host):
        try:
            host = socket.inet_ntoa(socket.inet_aton(host))
        except OSError:
            return False
    return ipaddress.ip_address(host).is_loopback


def serve(*, host: str = "127.0.0.1", port: int = 8765, out_dir: str = "polisect-runs",
          max_upload_mb: float = 200.0, parallel_runs: int = 1, open_browser: bool = False,
          verbose: bool = False, ready=None) -> None:
    """Run the page's server until interrupted.

    Parameters
    ----------
    host, port : str, int
        Address to bind; port 0 picks a free one.
    out_dir : str
        Folder the runs are written to.
    max_upload_mb : float
        Largest upload, megabytes (10⁶ bytes).
    parallel_runs : int
        Analysis runs computed at the same time.
    open_browser : bool
        Open the page in the default browser.
    verbose : bool
        Log every request to stderr.
    ready : callable, optional
        Called with the `Server` once it listens (tests use it).
    """
    if not (isinstance(port, int) and 0 <= port <= 65535):
        raise InputError(f"--port {port}: give a port from 0 to 65535 (0 = any free port)")
    if not 0 < max_upload_mb <= MAX_UPLOAD_MB:
        raise InputError(f"--max-upload-mb {max_upload_mb}: give a number of megabytes from "
                         f"0 to {MAX_UPLOAD_MB} (default 200)")
    if not (isinstance(parallel_runs, int) and 1 <= parallel_runs <= 64):
        raise InputError(f"--jobs {parallel_runs}: give a number of runs from 1 to 64")
    app = App(out_dir, max_upload_bytes=int(max_upload_mb * 10**6), parallel_runs=parallel_runs)
    try:
        server = Server(app, host, port, verbose=verbose)
    except (OSError, OverflowError, UnicodeError) as exc:
        app.close()
        reason = getattr(exc, "strerror", None) or str(exc)
        raise InputError(f"cannot listen on {host}:{port} ({reason}); choose another "
                         "--port or --host") from None
    url = f"http://{server.address}/"
    if server.any_host:
        print(f"polisect serve: WARNING: listening on {server.address}, reachable from other "
              "machines. "
              "The page has no login: anyone who can reach this address can upload images, "
              "start runs and read every result in the output folder.", file=sys.stderr)
    print(f"polisect serve: open {url}  (results go to {app.runs.out_dir}; Ctrl+C stops)",
          file=sys.stderr, flush=True)
    if open_browser:
        import webbrowser
        threading.Thread(target=webbrowser.open, args=(url,), daemon=True).start()
    if ready:
        ready(server)
    if threading.current_thread() is threading.main_thread():
        signal.signal(signal.SIGTERM, _interrupt)  # stop as on Ctrl+C: children, temp files
    try:
        server.serve_forever()
    except KeyboardInterrupt:
        print("polisect serve: stopping", file=sys.stderr)
    finally:
        server.server_close()
        app.close()
