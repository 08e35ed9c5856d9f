"""Endpoint tests of `polisect serve`: uploads, limits, traversal, origin checks, bad input,
runs (concurrent, cancelled, crashed) and the run configuration the page writes.

The server runs in a thread of the test process on a free loopback port; its work runs in
child processes as in normal use. Images are rendered with `polisect.model3d.synth` (known phase
maps), so no sample file is needed.
"""

from __future__ import annotations

import http.client
import json
import os
import signal
import socket
import threading
import time

import numpy as np
import pytest
from hypothesis import given, strategies as st

from polisect.read.config import load_config
from polisect.core.errors import InputError
from polisect.read.image import write_tiff
from polisect.pipeline.analysis import analyze
from polisect.present.record import to_dict as json_form
from polisect.apps.serve.runconfig import run_config_toml
from polisect.apps.serve.server import is_loopback, serve
from polisect.apps.serve.uploads import safe_stem, sniff
from polisect.model3d.synth import checkerboard, render_sem, rsa_discs

NO_PROPS = {"properties": []}


def _section_labels(seed=3, shape=(192, 192)):
    """The true phase map of `_section`: pores 0, particles 1, matrix 2."""
    rng = np.random.default_rng(seed)
    particles = rsa_discs(shape, 0.25, 9.0, seed=rng).labels
    pores = rsa_discs(shape, 0.05, 4.0, seed=rng).labels
    labels = np.where(particles == 1, 1, 2)
    labels[(pores == 1) & (particles == 0)] = 0
    return labels


def _section(path, seed=3, shape=(192, 192), pixel_size_um=0.5, noise_sd=0.02):
    """A rendered three-phase section (pores dark, particles mid, matrix bright) as a TIFF."""
    img = render_sem(_section_labels(seed, shape), {0: 0.08, 1: 0.45, 2: 0.8},
                     noise_sd=noise_sd, seed=seed)
    write_tiff(path, img, pixel_size_um=pixel_size_um)
    return path


class Client:
    """Plain HTTP requests to the test server."""

    def __init__(self, server):
        self.server = server
        self.port = server.port
        self.app = server.app

    def request(self, method, path, body=b"", headers=None, page=True):
        conn = http.client.HTTPConnection("127.0.0.1", self.port, timeout=60)
        hdrs = {"X-Polisect": "1"} if page else {}
        hdrs.update(headers or {})
        if isinstance(body, (dict, list)):
            body = json.dumps(body).encode()
            hdrs.setdefault("Content-Type", "application/json")
        conn.request(method, path, body=body if method != "GET" else None, headers=hdrs)
        resp = conn.getresponse()
        data = resp.read()
        conn.close()
        return resp.status, dict(resp.getheaders()), data

    def json(self, method, path, body=b"", **kw):
        status, headers, data = self.request(method, path, body, **kw)
        return status, json.loads(data) if data else None

    def upload(self, path, name=None):
        with open(path, "rb") as f:
            data = f.read()
        return self.json("POST", "/api/uploads", data,
                         headers={"X-Filename": name or os.path.basename(path)})

    def run(self, upload_id, config, timeout=60):
        status, body = self.json("POST", "/api/runs", {"upload": upload_id, "config": config})
        assert status == 201, body
        return self.wait(body["id"], timeout)

    def wait(self, run_id, timeout=60, until=("done", "failed", "cancelled", "interrupted")):
        t0 = time.monotonic()
        while time.monotonic() - t0 < timeout:
            _, st = self.json("GET", f"/api/runs/{run_id}")
            if st["state"] in until:
                return st
            time.sleep(0.1)
        raise AssertionError(f"run {run_id} still {st['state']} after {timeout} s")


def _start(tmp_path, **kw):
    box = {}
    ready = threading.Event()

    def on_ready(server):
        box["server"] = server
        ready.set()

    thread = threading.Thread(target=serve, kwargs=dict(port=0, out_dir=str(tmp_path / "out"),
                                                        ready=on_ready, **kw), daemon=True)
    thread.start()
    assert ready.wait(60), "the server did not start"
    return box["server"], thread


@pytest.fixture(scope="module")
def served(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("serve")
    server, thread = _start(tmp, max_upload_mb=1.0, parallel_runs=2)
    yield Client(server), tmp
    server.shutdown()
    thread.join(30)


@pytest.fixture(scope="module")
def image(served):
    return _section(str(served[1] / "kfs_amc_b1_s1.tif"))


def _three_phases(**solve):
    return {"segment": {"method": "multi-otsu", "classes": 3, "denoise": "median"},
            "phase": [{"label": 0, "name": "pore", "material": "air"},
                      {"label": 1, "name": "SiC", "material": "silicon-carbide"},
                      {"label": 2, "material": "aluminium"}],
            "solve": solve or NO_PROPS}


# -- uploads ------------------------------------------------------------------------------

def test_info_lists_library_and_limit(served):
    """The page learns the material library and the upload limit from /api/info."""
    client, _ = served
    status, info = client.json("GET", "/api/info")
    assert status == 200
    assert info["max_upload_bytes"] == 10**6
    keys = {m["key"] for m in info["materials"]}
    assert {"alumina", "silicon-carbide", "air"} <= keys
    assert info["properties"] == ["conductivity", "elasticity", "expansion"]


def test_upload_reports_size_pixel_size_and_preview(served, image):
    """A TIFF with resolution tags: its shape, 0.5 µm pixels (written by write_tiff) and a
    3-class suggestion for a rendered three-phase section; the preview has the image's size."""
    client, _ = served
    status, facts = client.upload(image)
    assert status == 200, facts
    assert facts["shape"] == [192, 192]
    assert facts["pixel_size_um"] == pytest.approx(0.5)
    assert facts["pixel_size_from"] == "tiff-tags"
    assert facts["suggested_classes"] == 3
    assert sum(facts["histogram"]["counts"]) == 192 * 192
    status, _, raw = client.request("GET", f"/api/uploads/{facts['id']}/preview")
    assert status == 200 and len(raw) == 4 * 192 * 192


def test_type_is_taken_from_content_not_name(served, tmp_path):
    """A PNG named .tif is accepted and stored as .png; a text file named .tif is refused."""
    import imageio.v3 as iio

    client, _ = served
    png = tmp_path / "really_png.tif"
    iio.imwrite(png, (np.arange(64 * 64).reshape(64, 64) % 251).astype(np.uint8),
                extension=".png")
    status, facts = client.upload(str(png))
    assert status == 200, facts
    assert client.app.uploads.get(facts["id"]).path.endswith("really_png.png")
    text = tmp_path / "notes.tif"
    text.write_text("hello, this is not an image\n")
    status, body = client.upload(str(text))
    assert status == 400
    assert "text" in body["error"] and "not a TIFF, PNG, JPEG or BMP" in body["error"]


@pytest.mark.parametrize("case, expect", [
    ("empty", "empty (0 bytes)"),
    ("truncated", "truncated"),
    ("one_pixel", "too small"),
    ("nan", "NaN"),
])
def test_bad_images_get_a_clear_message(served, tmp_path, image, case, expect):
    """The foundation issue's bad files: each answered 400 with a message, server still up."""
    client, _ = served
    path = tmp_path / f"{case}.tif"
    if case == "empty":
        path.write_bytes(b"")
    elif case == "truncated":
        path.write_bytes(open(image, "rb").read()[:5000])
    elif case == "one_pixel":
        write_tiff(path, np.zeros((1, 1), np.uint8))
    else:
        data = np.ones((32, 32), np.float32)
        data[3, 4] = np.nan
        write_tiff(path, data)
    status, body = client.upload(str(path))
    assert status == 400, body
    assert expect in body["error"]
    assert str(tmp_path) not in body["error"] and client.app.uploads.root not in body["error"]
    assert client.json("GET", "/api/info")[0] == 200


def test_uniform_image_explains_itself(served, tmp_path):
    """A uniform image: no suggestion, a note why, and 3 classes are refused with a message."""
    client, _ = served
    path = tmp_path / "uniform.tif"
    write_tiff(path, np.full((40, 40), 120, np.uint8))
    status, facts = client.upload(str(path))
    assert status == 200
    assert facts["suggested_classes"] is None and "uniform" in facts["suggest_note"]
    status, body = client.json("POST", f"/api/uploads/{facts['id']}/thresholds",
                               {"classes": 3, "denoise": "median", "denoise_px": 1})
    assert status == 400 and "no contrast" in body["error"]


def test_upload_limit_refused_before_the_body(served):
    """Content-Length above the limit: 413 at once; nothing of the body is stored."""
    client, _ = served
    with socket.create_connection(("127.0.0.1", client.port), timeout=10) as s:
        s.sendall(b"POST /api/uploads HTTP/1.1\r\nHost: 127.0.0.1:%d\r\nX-Polisect: 1\r\n"
                  b"X-Filename: big.tif\r\nContent-Length: 50000000\r\n\r\nII*\x00"
                  % client.port)
        answer = _read_all(s)
    assert answer.startswith("HTTP/1.1 413")
    assert "more than this server's limit of 1 MB" in answer
    assert client.json("GET", "/api/info")[0] == 200


def test_upload_without_length_or_cut_short(served):
    """No Content-Length → 411; a body shorter than announced → 400, nothing kept."""
    client, _ = served
    with socket.create_connection(("127.0.0.1", client.port), timeout=10) as s:
        s.sendall(b"POST /api/uploads HTTP/1.1\r\nHost: 127.0.0.1:%d\r\nX-Polisect: 1\r\n"
                  b"Transfer-Encoding: chunked\r\n\r\n4\r\nII*\x00\r\n0\r\n\r\n" % client.port)
        assert _read_all(s).startswith("HTTP/1.1 411")
    before = set(os.listdir(client.app.uploads.root))
    with socket.create_connection(("127.0.0.1", client.port), timeout=10) as s:
        s.sendall(b"POST /api/uploads HTTP/1.1\r\nHost: 127.0.0.1:%d\r\nX-Polisect: 1\r\n"
                  b"Content-Length: 5000\r\n\r\nII*\x00" % client.port)
        s.shutdown(socket.SHUT_WR)
        answer = _read_all(s)
    assert answer.startswith("HTTP/1.1 400") and "stopped after 4 of 5000 bytes" in answer
    assert set(os.listdir(client.app.uploads.root)) == before


def _read_all(sock) -> str:
    chunks = []
    while True:
        block = sock.recv(65536)
        if not block:
            return b"".join(chunks).decode("utf-8", "replace")
        chunks.append(block)


# -- names, paths, origins ----------------------------------------------------------------

@given(st.text(max_size=200))
def test_safe_stem_is_always_a_plain_name(name):
    """Any name sent by a browser becomes ASCII letters, digits, _ and - only."""
    stem = safe_stem(name)
    assert stem and len(stem) <= 64
    assert all(c.isascii() and (c.isalnum() or c in "_-") for c in stem)


def test_sniff_signatures():
    """File signatures: TIFF (both byte orders, BigTIFF), PNG, JPEG, BMP (format specs)."""
    assert sniff(b"II*\x00....") == sniff(b"MM\x00*") == sniff(b"II+\x00") == ".tif"
    assert sniff(b"\x89PNG\r\n\x1a\n") == ".png"
    assert sniff(b"\xff\xd8\xff\xe0") == ".jpg"
    assert sniff(b"BM6\x00") == ".bmp"
    assert sniff(b"GIF89a") is None and sniff(b"") is None


def test_traversal_attempts_find_nothing(served, image):
    """Path tricks in the file name, the URL, the upload and run ids reach no file outside."""
    client, _ = served
    status, facts = client.upload(image, name="../../../etc/passwd.tif")
    assert status == 200
    stored = client.app.uploads.get(facts["id"]).path
    assert os.path.dirname(os.path.dirname(stored)) == client.app.uploads.root
    assert os.path.basename(stored) == "passwd.tif"
    for path in ("/static/../server.py", "/static/%2e%2e/server.py", "/../../etc/passwd",
                 "/api/runs/..%2F..%2Fetc/files/json", "/api/runs/../files/json",
                 "/api/uploads/..%2F..%2F/preview", "/api/runs/20260101-000000-x-abcd/files/json",
                 "/static/app.js/../../jobs.py"):
        status, _, body = client.request("GET", path)
        assert status in (400, 404), path
        assert b"import" not in body and b"root:" not in body
    status, body = client.json("POST", "/api/runs", {"upload": "../" + facts["id"],
                                                     "config": _three_phases()})
    assert status == 400 and "no such upload" in body["error"]


def test_cross_site_and_foreign_host_refused(served):
    """POST without the page's header or from another origin: 403; another Host: 421."""
    client, _ = served
    assert client.json("POST", "/api/runs", {}, page=False)[0] == 403
    status, _ = client.json("POST", "/api/runs", {},
                            headers={"Origin": "http://evil.example"})
    assert status == 403
    status, _ = client.json("GET", "/api/info", headers={"Host": "evil.example:80"})
    assert status == 421


def test_malformed_requests_do_not_hurt_the_server(served):
    """Bad JSON, NaN, a list, an oversized body, unknown paths and methods: clear errors."""
    client, _ = served
    cases = [("POST", "/api/runs", b"{not json", 400), ("POST", "/api/runs", b'{"a": NaN}', 400),
             ("POST", "/api/runs", b"[1, 2]", 400), ("POST", "/api/config", b" " * (2 << 20), 413),
             ("GET", "/api/nothing", b"", 404), ("PUT", "/api/runs", b"", 405),
             ("POST", "/api/info", b"{}", 405)]
    for method, path, body, expect in cases:
        status, _, data = client.request(method, path, body,
                                         headers={"Content-Type": "application/json"})
        assert status == expect, (method, path, data)
        assert "error" in json.loads(data)
    assert client.json("GET", "/api/info")[0] == 200


def test_security_headers(served):
    """The page forbids framing and foreign scripts; nothing is content-sniffed."""
    client, _ = served
    status, headers, body = client.request("GET", "/")
    assert status == 200 and b"polisect" in body
    assert "frame-ancestors 'none'" in headers["Content-Security-Policy"]
    assert headers["X-Content-Type-Options"] == "nosniff"


# -- bad settings -------------------------------------------------------------------------

@pytest.mark.parametrize("change, expect", [
    (lambda c: c["phase"][2].update(material="aluminum"), "did you mean aluminium"),
    (lambda c: c["phase"][2].update(material=None, conductivity=-3.0), "negative"),
    (lambda c: c["phase"][2].update(material=None, youngs_modulus=70, poisson_ratio=0.5,
                                    conductivity=200, expansion=2e-5), "Poisson's ratio"),
    (lambda c: c["image"].update(colour="blue"), "unknown key 'colour' in [image]"),
    (lambda c: c["segment"].update(classes="three"), "classes"),
    (lambda c: c["solve"].update(properties=["conductivity"]) or c["phase"][0].pop("material"),
     "has no conductivity"),
])
def test_bad_settings_named_before_the_run(served, image, change, expect):
    """Wrong materials, values or keys: 400 with the config reader's message, no run made."""
    client, _ = served
    _, facts = client.upload(image)
    config = {"image": {}, **_three_phases()}
    change(config)
    before = client.app.runs.list()
    status, body = client.json("POST", "/api/runs", {"upload": facts["id"], "config": config})
    assert status == 400, body
    assert expect in body["error"]
    assert len(client.app.runs.list()) == len(before)


def test_labels_missing_from_config_fail_the_run_with_a_message(served, image):
    """Four classes but three phases: the run fails with the pipeline's message."""
    client, _ = served
    _, facts = client.upload(image)
    config = _three_phases()
    config["segment"]["classes"] = 4
    st = client.run(facts["id"], config)
    assert st["state"] == "failed" and st["error_kind"] == "input"
    assert "no [[phase]] entry describes" in st["error"]


# -- runs ---------------------------------------------------------------------------------

def test_run_writes_what_analyze_writes(served, image):
    """The run's JSON equals `analyze` on the same image and config; every download works,
    and nothing but the listed kinds can be downloaded."""
    client, _ = served
    _, facts = client.upload(image)
    st = client.run(facts["id"], _three_phases())
    assert st["state"] == "done", st
    assert {"report", "json", "csv", "phasemap", "overlay"} <= set(st["outputs"])
    folder = client.app.runs.folder(st["id"])
    status, headers, raw = client.request("GET", f"/api/runs/{st['id']}/files/config")
    assert status == 200 and "attachment" in headers["Content-Disposition"]
    config_path = os.path.join(str(folder), "again.toml")
    with open(config_path, "wb") as f:
        f.write(raw)
    direct = json_form(analyze(image, load_config(config_path)).result)
    status, served_json = client.json("GET", f"/api/runs/{st['id']}/files/json")
    assert status == 200
    for a, b in zip(served_json["phases"], direct["phases"]):
        assert (a["name"], a["fraction"], a["fraction_ci95"]) == \
            (b["name"], b["fraction"], b["fraction_ci95"])
    for kind, magic in (("phasemap", b"II*\x00"), ("overlay", b"\x89PNG"), ("csv", b"path"),
                        ("report", b"<!DOCTYPE html>")):
        status, _, body = client.request("GET", f"/api/runs/{st['id']}/files/{kind}")
        assert status == 200 and body.startswith(magic), kind
    assert any(r["id"] == st["id"] for r in client.json("GET", "/api/runs")[1]["runs"])

    # only the listed kinds can be downloaded; a name in the status file cannot point out
    assert client.request("GET", f"/api/runs/{st['id']}/files/status")[0] == 404
    with open(os.path.join(folder, "status.json"), encoding="utf-8") as f:
        forged = json.load(f)
    forged["outputs"]["json"] = "../../../etc/passwd"
    with open(os.path.join(folder, "status.json"), "w", encoding="utf-8") as f:
        json.dump(forged, f)
    assert client.request("GET", f"/api/runs/{st['id']}/files/json")[0] == 404


def test_status_shows_live_solver_iterations(tmp_path):
    """While a property is solved the run's status carries the solver, load case,
    iteration and residual; the finished status drops them."""
    server, thread = _start(tmp_path, parallel_runs=1, max_upload_mb=10)
    client = Client(server)
    try:
        _, facts = client.upload(_section(str(tmp_path / "wide.tif"), shape=(640, 640)))
        config = _three_phases(properties=["conductivity"], tolerance=1e-10)
        run_id = client.json("POST", "/api/runs", {"upload": facts["id"], "config": config})[1]["id"]
        seen = []
        t0 = time.monotonic()
        while time.monotonic() - t0 < 120:
            _, st = client.json("GET", f"/api/runs/{run_id}")
            # the headline solve only: the error budget's solves use their own tolerances
            if "solver" in st and st.get("stage", "").startswith("solving"):
                seen.append(st["solver"])
            if st["state"] in ("done", "failed"):
                break
            time.sleep(0.05)
        assert st["state"] == "done", st
        assert "solver" not in st
        live = [s for s in seen if "iteration" in s]
        assert live, "no solver progress was seen during the run"
        assert all(s["method"] == "fft" and s["load_cases"] == 2 and s["tolerance"] == 1e-10
                   and s["iteration"] >= 1 and s["residual"] > 0 for s in live)
    finally:
        server.shutdown()
        thread.join(30)


def test_concurrent_runs_each_get_their_own_folder(served, image):
    """Three runs submitted at once from three threads (two workers): all finish, apart."""
    client, _ = served
    _, facts = client.upload(image)
    results = []

    def one(classes):
        config = _three_phases()
        if classes == 2:
            config["segment"]["classes"] = 2
            config["phase"] = config["phase"][1:]
            config["phase"][0]["label"], config["phase"][1]["label"] = 0, 1
        results.append((classes, client.run(facts["id"], config)))

    threads = [threading.Thread(target=one, args=(n,)) for n in (3, 2, 3)]
    for t in threads:
        t.start()
    for t in threads:
        t.join(120)
    assert len(results) == 3 and all(st["state"] == "done" for _, st in results)
    assert len({st["id"] for _, st in results}) == 3
    for classes, st in results:
        _, d = client.json("GET", f"/api/runs/{st['id']}/files/json")
        assert len(d["phases"]) == classes


def _slow_config():
    """Non-local means on a 1500² image: seconds of work, long enough to cancel."""
    return {"segment": {"method": "multi-otsu", "classes": 2, "denoise": "nl-means",
                        "denoise_px": 3},
            "phase": [{"label": 0, "material": "air"}, {"label": 1, "material": "alumina"}],
            "solve": NO_PROPS}


@pytest.fixture(scope="module")
def big_image(served):
    path = str(served[1] / "big.tif")
    write_tiff(path, render_sem(checkerboard((1500, 1500), 30), {0: 0.3, 1: 0.7}, seed=1))
    return path


def test_cancel_stops_a_running_and_a_queued_run(tmp_path, big_image):
    """One worker: cancel the queued second run, then the running first one; both stop."""
    server, thread = _start(tmp_path, parallel_runs=1, max_upload_mb=10)
    client = Client(server)
    try:
        _, facts = client.upload(big_image)
        ids = [client.json("POST", "/api/runs", {"upload": facts["id"],
                                                 "config": _slow_config()})[1]["id"]
               for _ in range(2)]
        running = client.wait(ids[0], until=("running",))
        assert client.json("POST", f"/api/runs/{ids[1]}/cancel", {})[1]["state"] == "cancelled"
        assert client.json("POST", f"/api/runs/{ids[0]}/cancel", {})[1]["state"] == "cancelled"
        assert not _alive(running["pid"])
        time.sleep(0.5)
        assert client.json("GET", f"/api/runs/{ids[1]}")[1]["state"] == "cancelled"
    finally:
        server.shutdown()
        thread.join(30)


def test_a_crashed_worker_is_reported(tmp_path, big_image):
    """A worker killed from outside: the run is marked failed with the exit code."""
    server, thread = _start(tmp_path, parallel_runs=1, max_upload_mb=10)
    client = Client(server)
    try:
        _, facts = client.upload(big_image)
        run_id = client.json("POST", "/api/runs", {"upload": facts["id"],
                                                   "config": _slow_config()})[1]["id"]
        running = client.wait(run_id, until=("running",))
        os.kill(running["pid"], signal.SIGKILL)
        st = client.wait(run_id)
        assert st["state"] == "failed" and "exit code -9" in st["error"]
    finally:
        server.shutdown()
        thread.join(30)


def _alive(pid):
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    with open(f"/proc/{pid}/stat") as f:
        return f.read().split()[2] != "Z"


def test_runs_are_listed_after_a_restart(tmp_path, image):
    """Past runs come back after a restart; one left running is marked interrupted."""
    server, thread = _start(tmp_path)
    client = Client(server)
    _, facts = client.upload(image)
    done = client.run(facts["id"], _three_phases())
    folder = client.app.runs.folder(done["id"])
    server.shutdown()
    thread.join(30)
    stale = os.path.join(os.path.dirname(folder), "20260101-000000-stale-abcd")
    os.makedirs(stale)
    with open(os.path.join(stale, "status.json"), "w", encoding="utf-8") as f:
        json.dump({"id": "20260101-000000-stale-abcd", "state": "running"}, f)
    server, thread = _start(tmp_path)
    try:
        runs = {r["id"]: r["state"] for r in Client(server).json("GET", "/api/runs")[1]["runs"]}
        assert runs == {done["id"]: "done", "20260101-000000-stale-abcd": "interrupted"}
    finally:
        server.shutdown()
        thread.join(30)


# -- the config the page writes, the address ----------------------------------------------

def test_page_settings_round_trip_through_toml(tmp_path):
    """The TOML written for the page reads back as the same configuration."""
    settings = {"image": {"kind": "grayscale", "crop_bottom_px": "auto", "pixel_size_um": 0.25},
                "segment": {"method": "thresholds", "thresholds": [61.5, 140.25],
                            "denoise": "none", "denoise_px": 1.0, "min_feature_px": 9},
                "phase": [{"label": 0, "name": "pore \"A\"", "material": "air", "particles": True},
                          {"label": 1, "name": "own", "conductivity": 3.5,
                           "youngs_modulus": 100, "poisson_ratio": 0.2, "expansion": 4e-6},
                          {"label": 2, "material": "mullite", "particles": None}],
                "solve": {"properties": ["conductivity"], "plane": "plane-stress"}}
    path = tmp_path / "config.toml"
    path.write_text(run_config_toml(settings, "s1.tif"), encoding="utf-8")
    cfg = load_config(path)
    assert cfg.image.crop_bottom_px == "auto" and cfg.image.pixel_size_um == 0.25
    assert cfg.segment.thresholds == (61.5, 140.25) and cfg.segment.min_feature_px == 9
    assert [p.name for p in cfg.phases] == ['pore "A"', "own", "mullite"]
    assert cfg.phases[0].particles is True and cfg.phases[2].particles is None
    assert cfg.phases[1].material.expansion == 4e-6
    assert cfg.solve.properties == ("conductivity",) and cfg.solve.plane == "plane-stress"


_plain = (st.booleans() | st.integers(-2**63, 2**63 - 1)
          | st.floats(allow_nan=False, allow_infinity=False) | st.text())
_tables = st.dictionaries(st.text(min_size=1), _plain | st.lists(_plain, max_size=4), max_size=5)


@given(st.dictionaries(st.text(min_size=1), _plain | _tables | st.lists(_tables, min_size=1,
                                                                         max_size=3),
                       max_size=5))
def test_toml_writer_round_trips(data):
    """Anything of the config's shape written by `toml_text` reads back equal with the
    standard library's TOML reader (TOML v1.0.0, Preston-Werner et al. 2021)."""
    from polisect.read.config import tomllib
    from polisect.apps.serve.runconfig import toml_text

    if any(0xD800 <= ord(c) <= 0xDFFF for c in repr(data)):
        return
    assert tomllib.loads(toml_text(data)) == data


def test_loopback_detection_and_warning(tmp_path, capsys):
    """Only loopback addresses count as private; another host prints the no-login warning."""
    assert is_loopback("127.0.0.1") and is_loopback("::1") and is_loopback("localhost")
    assert not is_loopback("0.0.0.0") and not is_loopback("192.168.1.10")
    box, ready = {}, threading.Event()
    thread = threading.Thread(target=serve, kwargs=dict(
        host="0.0.0.0", port=0, out_dir=str(tmp_path / "o"),
        ready=lambda s: (box.setdefault("s", s), ready.set())), daemon=True)
    thread.start()
    assert ready.wait(60)
    box["s"].shutdown()
    thread.join(30)
    assert "no login" in capsys.readouterr().err


def test_upload_store_forgets_the_oldest(tmp_path, image):
    """More uploads than the store keeps: the oldest go, the newest stay readable."""
    from polisect.apps.serve.uploads import UploadStore

    store = UploadStore(str(tmp_path / "up"), max_bytes=10**6, keep=2)
    size = os.path.getsize(image)
    held = []
    for _ in range(3):
        with open(image, "rb") as f:
            held.append(store.save(f, size, "s.tif").id)
    with pytest.raises(InputError, match="no longer on the server"):
        store.get(held[0])
    assert store.get(held[2]).size == size
    assert sorted(os.listdir(store.root)) == sorted(held[1:])


@pytest.mark.parametrize("body, expect", [
    ({"classes": 40, "denoise": "median", "denoise_px": 1}, "choose 2 to 8 classes"),
    ({"classes": 3, "denoise": "median", "denoise_px": 1e6}, "give 1 to 25 pixels"),
    ({"classes": 3, "denoise": "blur", "denoise_px": 1}, "denoise = 'blur' is not known"),
])
def test_preview_settings_are_bounded(served, image, body, expect):
    """The preview endpoints refuse settings the page never sends (no runaway work)."""
    client, _ = served
    _, facts = client.upload(image)
    status, answer = client.json("POST", f"/api/uploads/{facts['id']}/thresholds", body)
    assert status == 400 and expect in answer["error"]
    status, answer = client.json("POST", f"/api/uploads/{facts['id']}/labels",
                                 {"thresholds": list(range(1, 300)), "denoise": "none",
                                  "denoise_px": 1, "min_feature_px": 0})
    assert status == 400 and "choose 2 to 8 classes" in answer["error"]


def test_preview_of_a_small_image_is_the_segmentation(served, image):
    """An image smaller than the preview is not subsampled: the preview labels with the
    automatic thresholds are exactly `segment_grayscale` of the image, pixel for pixel."""
    from polisect.read.image import read_image
    from polisect.segment.thresholds import segment_grayscale

    client, _ = served
    _, facts = client.upload(image)
    assert facts["preview_step"] == 1
    _, th = client.json("POST", f"/api/uploads/{facts['id']}/thresholds",
                        {"crop": 0, "classes": 3, "denoise": "median", "denoise_px": 1})
    status, _, raw = client.request("POST", f"/api/uploads/{facts['id']}/labels",
                                    {"thresholds": th["thresholds"], "denoise": "median",
                                     "denoise_px": 1, "min_feature_px": 4})
    assert status == 200
    direct = segment_grayscale(read_image(image).data, classes=3, denoise="median",
                               denoise_px=1, min_feature_px=4)
    assert list(direct.thresholds) == th["thresholds"]
    np.testing.assert_array_equal(np.frombuffer(raw, np.uint8).reshape(192, 192), direct.labels)


def test_short_tasks_that_crash_or_overrun_are_stopped():
    """A child that dies is reported with its exit code; one that overruns is killed."""
    from polisect.apps.serve.jobs import TaskFailed, Tasks, process_context

    tasks = Tasks(process_context(), parallel=1, timeout_s=0.5)
    with pytest.raises(TaskFailed, match="exit code 3"):
        tasks.call(os._exit, 3, what="reading")
    with pytest.raises(InputError, match="took longer than 0 s"):
        tasks.call(time.sleep, 30, what="sleeping")
    assert tasks.call(sorted, [3, 1, 2]) == [1, 2, 3]


def test_label_image_is_recognised_and_used_as_is(served, tmp_path):
    """A label image: its values are offered as phases, and a run with kind = "labels" gives
    the exact pixel fractions (pixel counting, common practice — no source)."""
    client, _ = served
    labels = np.zeros((64, 96), np.uint8)
    labels[:, 24:48] = 3
    labels[40:, :] = 7
    path = tmp_path / "truth.tif"
    write_tiff(path, labels)
    status, facts = client.upload(str(path))
    assert status == 200 and facts["label_values"] == [0, 3, 7]
    config = {"image": {"kind": "labels", "crop_bottom_px": 0},
              "phase": [{"label": v, "name": f"grain-{v}", "material": "alumina"}
                        for v in (0, 3, 7)],
              "solve": NO_PROPS}
    st = client.run(facts["id"], config)
    assert st["state"] == "done", st
    _, d = client.json("GET", f"/api/runs/{st['id']}/files/json")
    expect = {v: np.count_nonzero(labels == v) / labels.size for v in (0, 3, 7)}
    assert {p["label"]: p["fraction"] for p in d["phases"]} == pytest.approx(expect, abs=1e-12)


# -- hardening (issue 17) -------------------------------------------------------------------

def _host_checks(server, capsys):
    client = Client(server)
    port = server.port
    assert client.json("GET", "/api/info", headers={"Host": "evil.example"})[0] == 421
    assert client.json("GET", "/api/info", headers={"Host": f"evil.example:{port}"})[0] == 421
    assert client.json("GET", "/api/info", headers={"Host": f"localhost:{port + 1}"})[0] == 421
    assert client.json("GET", "/api/info", headers={"Host": f"localhost:{port}"})[0] == 200
    status, _ = client.json("POST", "/api/runs", {}, headers={"Origin": "http://evil.example"})
    assert status == 403
    status, _ = client.json("POST", "/api/runs", {}, headers={"Origin": "null"})
    assert status == 403
    return client


def test_host_and_origin_checked_for_a_shorthand_loopback_address(tmp_path, capsys):
    """Issue 17 probe: `--host 127.1` warned falsely and then accepted any Host and a
    cross-site POST (DNS rebinding); now it is loopback, quiet, and checked."""
    assert is_loopback("127.1") and is_loopback("127.0.0.2") and not is_loopback("10.1")
    server, thread = _start(tmp_path, host="127.1")
    try:
        assert server.address == f"127.0.0.1:{server.port}" and not server.any_host
        _host_checks(server, capsys)
        assert "other machines" not in capsys.readouterr().err
    finally:
        server.shutdown()
        thread.join(30)


def test_host_checked_when_listening_on_every_address(tmp_path, capsys):
    """On 0.0.0.0 the warning is true and printed; a foreign Host is still refused, while
    an IP address or this machine's name is accepted (common practice, no source)."""
    server, thread = _start(tmp_path, host="0.0.0.0")
    try:
        client = _host_checks(server, capsys)
        for host in ("192.0.2.7", socket.gethostname()):
            status, _ = client.json("GET", "/api/info", headers={"Host": f"{host}:{server.port}"})
            assert status == 200, host
        assert "reachable from other machines" in capsys.readouterr().err
    finally:
        server.shutdown()
        thread.join(30)


def test_deep_or_huge_json_is_a_400(served):
    """Issue 17 probe: deeply nested JSON raised RecursionError → 500; a number beyond the
    float range became infinity."""
    client, _ = served
    for body in (b"[" * 100_000 + b"]" * 100_000, b'{"a":' * 40 + b"1" + b"}" * 40,
                 b'{"upload": 1e999}', b'{"upload": -1e400}'):
        status, _, data = client.request("POST", "/api/runs", body,
                                         headers={"Content-Type": "application/json"})
        assert status == 400 and "not valid JSON" in json.loads(data)["error"]
    status, _, data = client.request("POST", "/api/runs", b'{"a": "' + b"[" * 50 + b'"}',
                                     headers={"Content-Type": "application/json"})
    assert "not valid JSON" not in json.loads(data)["error"]   # brackets in a string count not


def test_a_burst_of_requests_is_queued_not_dropped(served):
    """Issue 17 probe: with a listen backlog of 5, 100 concurrent requests lost 72 %."""
    client, _ = served
    assert client.server.request_queue_size >= 128
    start, codes = threading.Barrier(100), []

    def one():
        start.wait()
        try:
            codes.append(client.json("POST", "/api/runs", {"upload": "none"})[0])
        except OSError as exc:
            codes.append(repr(exc))

    threads = [threading.Thread(target=one) for _ in range(100)]
    for t in threads:
        t.start()
    for t in threads:
        t.join(120)
    assert codes == [400] * 100


@pytest.mark.parametrize("argv, words", [
    (["--port", "99999"], "--port 99999"), (["--port", "-1"], "--port -1"),
    (["--max-upload-mb", "inf"], "--max-upload-mb inf"),
    (["--max-upload-mb", "nan"], "--max-upload-mb nan"), (["--jobs", "0"], "--jobs 0"),
    (["--host", "no-such-host.invalid"], "cannot listen"),
])
def test_bad_serve_arguments_exit_2(tmp_path, capsys, argv, words):
    """Issue 17 probe: `--port 99999` and `--max-upload-mb inf` gave tracebacks."""
    from polisect.apps.cli import main

    assert main(["serve", "--out", str(tmp_path / "o")] + argv) == 2
    err = capsys.readouterr().err
    assert words in err and "Traceback" not in err


def test_upload_over_the_pixel_limit_refused_before_decoding(tmp_path):
    """Issue 17 probe: an uploaded 33 MB TIFF took the page's worker to 9 GB; a compressed
    32768² TIFF is now refused from its header."""
    import tifffile

    path = tmp_path / "huge.tif"
    tiles = (np.zeros((4096, 4096), np.uint8) for _ in range(64))
    tifffile.imwrite(path, tiles, shape=(32768, 32768), dtype=np.uint8, tile=(4096, 4096),
                     compression="zlib")
    server, thread = _start(tmp_path, max_upload_mb=50.0)
    try:
        status, body = Client(server).upload(str(path))
        assert status == 400 and "pixels, more than" in body["error"], body
    finally:
        server.shutdown()
        thread.join(30)


def test_malformed_request_line_gets_plain_text(served):
    """Common practice (no source): the base server's own error answers carry no HTML."""
    client, _ = served
    with socket.create_connection(("127.0.0.1", client.port), timeout=30) as sock:
        sock.sendall(b"GET /<script> HTTP/1.1\r\n" + b"X-Many: <b>\r\n" * 101 + b"\r\n")
        answer = _read_all(sock)
    assert answer.startswith("HTTP/1.1 431") and "text/plain" in answer and "<" not in answer


# -- trained from strokes (issue 14) and the preview's defaults ----------------------------

def _strokes(labels, share=0.02, seed=0):
    """Single painted pixels on *share* of every phase's interior (value = label + 1), as the
    page sends them: runs of (row, column, length, value)."""
    from scipy import ndimage

    rng = np.random.default_rng(seed)
    painted = np.zeros(labels.shape, np.int32)
    for v in np.unique(labels):
        inner = np.flatnonzero(ndimage.binary_erosion(labels == v, iterations=2))
        pick = rng.choice(inner, max(20, int(share * (labels == v).sum())), replace=False)
        painted.ravel()[pick] = v + 1
    rows, cols = np.nonzero(painted)
    runs = np.stack([rows, cols, np.ones_like(rows), painted[rows, cols]], 1)
    return painted, {"shape": list(labels.shape), "runs": runs.ravel().tolist()}


def test_strokes_preview_is_the_trained_segmentation(served, image):
    """Strokes on 2 % of each phase: for an image no larger than the preview, the preview
    labels agree with `make_phasemap_labels` (method "trained", the run's call) on the same
    strokes at ≥ 99.9 % of the pixels (the preview's forest sees the corrected grey levels
    rather than fractions of white: the same splits up to rounding), pixel accuracy against
    the rendered truth ≥ 0.95 (common practice, no source), and the share painted and the
    mean confidence are reported."""
    import base64

    from polisect.read.config import SegmentConfig
    from polisect.read.image import read_image
    from polisect.segment import make_phasemap_labels

    client, _ = served
    _, facts = client.upload(image)
    truth = _section_labels()
    painted, strokes = _strokes(truth)
    status, answer = client.json("POST", f"/api/uploads/{facts['id']}/strokes",
                                 {"strokes": strokes})
    assert status == 200, answer
    labels = np.frombuffer(base64.b64decode(answer["labels"]), np.uint8).reshape(answer["shape"])
    direct = make_phasemap_labels(read_image(image).data, None,
                                  SegmentConfig(method="trained", annotations="x"),
                                  annotations=painted)
    assert (labels == direct.labels).mean() >= 0.999
    assert (labels == truth).mean() >= 0.95
    assert answer["annotated_share"] == pytest.approx(np.count_nonzero(painted) / truth.size)
    assert answer["confidence_mean"] == pytest.approx(direct.confidence_summary.mean, abs=0.01)
    assert answer["phases"] == [0, 1, 2]


@pytest.mark.parametrize("strokes, status, words", [
    (None, 400, "the strokes must be"),
    ({"shape": [100, 192], "runs": []}, 400, "must be the same size"),
    ({"shape": [192, 192], "runs": []}, 400, "mark 0 phase(s)"),
    ({"shape": [192, 192], "runs": [5, 5, 10, 1, 9, 9, 10, 1]}, 400, "mark 1 phase(s)"),
    ({"shape": [192, 192], "runs": [5, 185, 10, 1, 9, 9, 10, 2]}, 400, "outside"),
    ({"shape": [192, 192], "runs": [5, 5, 10, 0, 9, 9, 10, 2]}, 400, "names no phase"),
    ({"shape": [192, 192], "runs": [5, 5, 10, 12, 9, 9, 10, 2]}, 400, "names no phase"),
    ({"shape": [192, 192], "runs": [5, 5, 10]}, 400, "runs of four numbers"),
    ({"shape": [192, 192], "runs": [5, 5, 1.5, 1]}, 400, "whole numbers only"),
    ({"shape": [192, 192], "runs": [5, 5, 10 ** 30, 1]}, 400, "too large"),
])
def test_bad_strokes_get_a_message(served, image, strokes, status, words):
    """Strokes the page must refuse with words: none, one phase, another size, outside the
    image, no such phase, broken runs — for the preview, the model and a run."""
    client, _ = served
    _, facts = client.upload(image)
    for path in (f"/api/uploads/{facts['id']}/strokes", f"/api/uploads/{facts['id']}/model"):
        got, answer = client.json("POST", path, {"strokes": strokes})
        assert got == status and words in answer["error"], (path, answer)


def test_strokes_requests_are_bounded(served, image):
    """Nesting deeper than the server allows is refused as for every endpoint; a body
    larger than the strokes limit is refused before it is read (413)."""
    from polisect.apps.serve.server import MAX_STROKES_BYTES

    client, _ = served
    _, facts = client.upload(image)
    deep = b'{"strokes": ' + b"[" * 40 + b"]" * 40 + b"}"
    status, _, data = client.request("POST", f"/api/uploads/{facts['id']}/strokes", deep,
                                     headers={"Content-Type": "application/json"})
    assert status == 400 and "nested deeper" in json.loads(data)["error"]
    conn = socket.create_connection(("127.0.0.1", client.port), timeout=30)
    conn.sendall((f"POST /api/uploads/{facts['id']}/strokes HTTP/1.1\r\n"
                  f"Host: 127.0.0.1:{client.port}\r\nX-Polisect: 1\r\n"
                  f"Content-Length: {MAX_STROKES_BYTES + 1}\r\n\r\n").encode())
    answer = b""
    while chunk := conn.recv(65536):
        answer += chunk
    conn.close()
    assert answer.startswith(b"HTTP/1.1 413") and b"paint fewer" in answer


def test_saved_model_is_what_polisect_train_writes(served, image, tmp_path):
    """The page's model file equals, array for array, `polisect train` on the same image and
    strokes (deterministic: same features, labels, settings and seed) — common practice
    (no source); it loads without pickle and classifies the section (pixel accuracy
    ≥ 0.93 for the bare forest — common practice, no source)."""
    import imageio.v3 as iio

    from polisect.apps.cli import main
    from polisect.segment.trained import Segmenter

    client, _ = served
    _, facts = client.upload(image)
    truth = _section_labels()
    painted, strokes = _strokes(truth)
    status, headers, raw = client.request("POST", f"/api/uploads/{facts['id']}/model",
                                          {"strokes": strokes})
    assert status == 200 and raw.startswith(b"PK")
    assert 'filename="kfs_amc_b1_s1_segmenter.npz"' in headers["Content-Disposition"]
    page_model = tmp_path / "page.npz"
    page_model.write_bytes(raw)
    strokes_png = tmp_path / "strokes.png"
    iio.imwrite(strokes_png, painted.astype(np.uint8))
    assert main(["train", image, "--annotations", str(strokes_png), "--out",
                 str(tmp_path / "cli.npz")]) == 0
    a, b = Segmenter.load(page_model), Segmenter.load(tmp_path / "cli.npz")
    np.testing.assert_array_equal(a.features, b.features)
    np.testing.assert_array_equal(a.targets, b.targets)
    assert (a.labels, a.settings) == (b.labels, b.settings) == ((0, 1, 2), b.settings)
    labels, _ = a.predict(np.asarray(iio.imread(image)))
    assert (labels == truth).mean() >= 0.93   # the bare forest, before boundary refinement


def test_run_from_strokes_writes_strokes_and_segmenter(served, image):
    """A run submitted with strokes trains on them: the strokes file is in the run folder
    and named by the config, `<stem>_segmenter.npz` is written and downloadable, and the
    fractions are those of `analyze` with the run's config (same code path)."""
    import imageio.v3 as iio

    client, _ = served
    _, facts = client.upload(image)
    painted, strokes = _strokes(_section_labels())
    config = {**_three_phases(), "segment": {"method": "trained"}}
    status, body = client.json("POST", "/api/runs", {"upload": facts["id"], "config": config,
                                                     "strokes": strokes})
    assert status == 201, body
    st = client.wait(body["id"], 120)
    assert st["state"] == "done", st
    assert st["outputs"]["segmenter"] == "kfs_amc_b1_s1_segmenter.npz"
    assert st["outputs"]["strokes"] == "kfs_amc_b1_s1_strokes.png"
    folder = client.app.runs.folder(st["id"])
    np.testing.assert_array_equal(iio.imread(os.path.join(folder, "kfs_amc_b1_s1_strokes.png")),
                                  painted)
    with open(os.path.join(folder, "config.toml"), encoding="utf-8") as f:
        text = f.read()
    assert 'method = "trained"' in text and 'annotations = "kfs_amc_b1_s1_strokes.png"' in text
    for kind in ("segmenter", "strokes"):
        assert client.request("GET", f"/api/runs/{st['id']}/files/{kind}")[0] == 200
    direct = json_form(analyze(os.path.join(folder, "kfs_amc_b1_s1.tif"),
                               load_config(os.path.join(folder, "config.toml"))).result)
    _, served_json = client.json("GET", f"/api/runs/{st['id']}/files/json")
    assert [p["fraction"] for p in served_json["phases"]] == \
        [p["fraction"] for p in direct["phases"]]

    status, answer = client.json("POST", "/api/runs", {"upload": facts["id"],
                                                       "config": _three_phases(),
                                                       "strokes": strokes})
    assert status == 400 and "trained" in answer["error"]


def test_config_endpoint_writes_a_batch_config_for_a_model(served):
    """The page's batch config names the model file beside it and the batch command."""
    client, _ = served
    config = {**_three_phases(), "segment": {"method": "trained",
                                             "model": "kfs_segmenter.npz"}}
    status, _, raw = client.request("POST", "/api/config", {
        "config": config, "image": "kfs.tif",
        "command": "polisect batch FOLDER --config kfs_batch.toml"})
    assert status == 200
    text = raw.decode()
    assert 'model = "kfs_segmenter.npz"' in text
    assert "# Repeat the run with:  polisect batch FOLDER --config kfs_batch.toml" in text
    status, answer = client.json("POST", "/api/config", {"config": {"segment": {
        "method": "trained"}}, "image": "kfs.tif"})
    assert status == 400 and "needs either annotations" in answer["error"]


def test_preview_smallest_feature_defaults_to_the_runs(served, tmp_path):
    """Without a value the preview merges features smaller than the run's default,
    `default_min_feature_px` of the smoothing radius (13 px at radius 1, docs/configuration.md
    [segment] min_feature_px), not 0: on a noisy section the two previews differ and the
    default one equals an explicit 13 px."""
    from polisect.segment.thresholds import default_min_feature_px

    client, _ = served
    noisy = _section(str(tmp_path / "noisy.tif"), noise_sd=0.12)
    _, facts = client.upload(noisy)
    body = {"thresholds": [60.0, 160.0], "denoise": "median", "denoise_px": 1}
    got = {}
    for key, value in (("default", None), ("auto", "auto"), ("13", 13), ("0", 0)):
        request = dict(body) if value is None else {**body, "min_feature_px": value}
        status, _, raw = client.request("POST", f"/api/uploads/{facts['id']}/labels", request)
        assert status == 200
        got[key] = raw
    assert default_min_feature_px(1) == 13
    assert got["default"] == got["auto"] == got["13"] != got["0"]


def test_quick_upload_answers_with_the_preview_first(served, image, tmp_path):
    """Issue 18: the page uploads with ?quick=1 and gets the preview at once (no band
    detection, histogram or suggestion yet); /inspect then gives the full facts. A damaged
    file is refused by the quick answer already."""
    client, _ = served
    with open(image, "rb") as f:
        data = f.read()
    status, quick = client.json("POST", "/api/uploads?quick=1", data,
                                headers={"X-Filename": "kfs.tif"})
    assert status == 200 and quick["quick"] is True
    assert quick["preview_shape"] == [192, 192] and "histogram" not in quick
    assert quick["stem"] == "kfs"
    status, _, raw = client.request("GET", f"/api/uploads/{quick['id']}/preview")
    assert status == 200 and len(raw) == 4 * 192 * 192
    status, facts = client.json("POST", f"/api/uploads/{quick['id']}/inspect", {"crop": "auto"})
    assert status == 200 and facts["suggested_classes"] == 3
    status, answer = client.json("POST", "/api/uploads?quick=1", data[:4000],
                                 headers={"X-Filename": "cut.tif"})
    assert status == 400 and "cut.tif" in answer["error"]


def test_strokes_preview_of_a_larger_image_works_on_the_preview_grid(served, tmp_path):
    """An image larger than the preview (1000 × 800 px, step 2): the strokes are painted at
    full resolution, the labels come back on the preview's grid, and agree with the truth
    sampled on that grid at ≥ 0.85 of its pixels — a half-resolution preview; the run on
    the full image with the same interior strokes reaches 0.96, and both give the pores'
    partial-volume rims to the mid-grey phase (common practice, no source)."""
    import base64

    client, _ = served
    path = _section(str(tmp_path / "wide.tif"), seed=5, shape=(800, 1000))
    _, facts = client.upload(path)
    assert facts["preview_step"] == 2
    truth = _section_labels(5, (800, 1000))
    _, strokes = _strokes(truth, share=0.01)
    status, answer = client.json("POST", f"/api/uploads/{facts['id']}/strokes",
                                 {"strokes": strokes})
    assert status == 200, answer
    assert answer["shape"] == facts["preview_shape"] == [400, 500]
    labels = np.frombuffer(base64.b64decode(answer["labels"]), np.uint8).reshape(400, 500)
    assert (labels == truth[::2, ::2]).mean() >= 0.85


def test_strokes_preparation_is_bounded_and_serves_the_preview(served, image):
    """The page asks the server to correct the preview for the listed phases before the
    first strokes; a phase count the page never offers is refused, and the preview that
    follows (all phases painted) is the same with or without the preparation — common
    practice (no source)."""
    client, _ = served
    _, facts = client.upload(image)
    path = f"/api/uploads/{facts['id']}/strokes"
    status, answer = client.json("POST", path, {"prepare": True, "phases": 40})
    assert status == 400 and "choose 2 to 8 classes" in answer["error"]
    _, strokes = _strokes(_section_labels())
    _, cold = client.json("POST", path, {"strokes": strokes})
    _, facts = client.upload(image)
    path = f"/api/uploads/{facts['id']}/strokes"
    status, answer = client.json("POST", path, {"prepare": True, "phases": 3})
    assert status == 200 and answer == {"prepared": 3}
    status, warm = client.json("POST", path, {"strokes": strokes, "phases": 3})
    assert status == 200 and warm["labels"] == cold["labels"]
