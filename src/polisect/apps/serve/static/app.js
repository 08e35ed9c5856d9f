/* polisect serve — the page's behaviour. Plain JavaScript, no libraries, works offline.
 *
 * Steps: 1 upload an image → 2 choose classes and thresholds on its histogram (overlay
 * redrawn on a subsampled preview), or paint strokes per phase and let the server train a
 * random forest on them (preview redrawn after each stroke; model and batch config saved)
 * → 3 a material per phase → 4 what to compute → 5 run, watch progress, read the report.
 * Every text from the server is inserted as text, never as HTML.
 */
"use strict";
(() => {
  const $ = (id) => document.getElementById(id);
  const FINAL = ["done", "failed", "cancelled", "interrupted"];
  const MAP_MAX_HEIGHT = 640;
  const PROP_LABELS = {
    conductivity: "thermal conductivity",
    elasticity: "stiffness (E, ν, K, G)",
    expansion: "thermal expansion",
  };
  const OWN = [["conductivity", "k", "W/(m·K)", 1], ["youngs_modulus", "E", "GPa", 1],
               ["poisson_ratio", "ν", "–", 1], ["expansion", "α", "10⁻⁶/K", 1e-6]];

  const S = {
    info: null, up: null, grey: null, pw: 0, ph: 0, kind: "grayscale", classes: 3,
    auto: true, th: [], labels: null, labelsKey: "", rows: new Map(), dragging: -1,
    runId: null, pollTimer: null, seq: 0, uploadSeq: 0,
    // strokes: the painted phase of every image pixel (0 = none, v = phase label v − 1), the
    // strokes drawn (for undo), the brush, and the latest trained preview
    mode: "grey", ann: null, strokes: [], current: null, paintValue: 1, erasing: false,
    strokeLabels: null, strokeSeq: 0, training: false, trainAgain: false,
  };

  // ---------------------------------------------------------------- helpers
  async function api(path, opts = {}) {
    const headers = { "X-Polisect": "1" };
    let body;
    if (opts.json !== undefined) {
      headers["Content-Type"] = "application/json";
      body = JSON.stringify(opts.json);
    }
    const resp = await fetch(path, { method: body === undefined ? "GET" : "POST", headers, body });
    if (!resp.ok) {
      let message = `${resp.status} ${resp.statusText}`;
      try { message = (await resp.json()).error || message; } catch (e) { /* not JSON */ }
      throw new Error(message);
    }
    return opts.binary ? resp.arrayBuffer() : resp.json();
  }
  function show(el, text, kind = "error") { el.textContent = text; el.className = `msg ${kind}`; el.hidden = false; }
  function hide(el) { el.hidden = true; el.textContent = ""; }
  function el(tag, attrs = {}, ...kids) {
    const node = document.createElement(tag);
    for (const [k, v] of Object.entries(attrs)) {
      if (v === undefined || v === null || v === false) continue;
      if (k === "text") node.textContent = v;
      else if (k === "class") node.className = v;
      else node.setAttribute(k, v === true ? "" : v);
    }
    for (const kid of kids) if (kid !== null && kid !== undefined) node.append(kid);
    return node;
  }
  /** A number to *digits* significant digits, without trailing zeros. */
  function fmt(v, digits = 4) {
    if (v === null || v === undefined || Number.isNaN(v)) return "–";
    return String(Number(Number(v).toPrecision(digits)));
  }
  function fixed(v, digits = 4) { return (v === null || v === undefined) ? "–" : Number(v).toFixed(digits); }
  function debounce(fn, ms) {
    let t = null;
    return (...args) => { clearTimeout(t); t = setTimeout(() => fn(...args), ms); };
  }
  function colour(i) { const p = S.info.palette; return p[i % p.length]; }
  function rgb(hex) { return [1, 3, 5].map((i) => parseInt(hex.slice(i, i + 2), 16)); }
  function bytes(n) { return n >= 1e6 ? `${(n / 1e6).toFixed(1)} MB` : `${Math.max(1, Math.round(n / 1e3))} kB`; }

  // ---------------------------------------------------------------- start
  async function start() {
    try {
      S.info = await api("/api/info");
    } catch (e) {
      show($("image-msg"), `the server does not answer (${e.message}); is polisect serve running?`);
      return;
    }
    $("out-dir").textContent = S.info.out_dir;
    $("version").textContent = `· polisect ${S.info.version}`;
    $("limit").textContent = `${Math.round(S.info.max_upload_bytes / 1e6)} MB`;
    for (let n = 2; n <= S.info.max_classes; n++) $("classes").append(el("option", { value: n, text: n }));
    for (const p of S.info.properties) {
      $("props").append(el("label", { class: "check" },
        el("input", { type: "checkbox", value: p, checked: true }), ` ${PROP_LABELS[p] || p}`));
    }
    $("est3d").disabled = !S.info.estimate_3d;
    $("est3d-note").textContent = S.info.estimate_3d
      ? "Sets [solve] estimate_3d: statistically equivalent volumes built from this section, "
        + "solved in 3D (slow). The report shows the estimate when the pipeline computes it."
      : "Not available in this version of polisect.";
    wireImageStep();
    wireMapStep();
    $("run").addEventListener("click", submitRun);
    $("cancel").addEventListener("click", cancelRun);
    window.addEventListener("resize", debounce(() => {
      if (S.up && S.kind === "grayscale") { placeHandles(); drawHistogram(); }
      if (S.up) fitMap();
    }, 150));
    refreshRuns();
  }

  // ---------------------------------------------------------------- step 1: image
  function wireImageStep() {
    const drop = $("drop"), input = $("file");
    drop.addEventListener("click", () => input.click());
    drop.addEventListener("keydown", (e) => {
      if (e.key === "Enter" || e.key === " ") { e.preventDefault(); input.click(); }
    });
    input.addEventListener("change", () => { if (input.files.length) take(input.files, null); input.value = ""; });
    for (const t of ["dragenter", "dragover"]) {
      drop.addEventListener(t, (e) => { e.preventDefault(); drop.classList.add("over"); });
    }
    drop.addEventListener("dragleave", () => drop.classList.remove("over"));
    drop.addEventListener("drop", (e) => {
      e.preventDefault();
      drop.classList.remove("over");
      take(e.dataTransfer.files, e.dataTransfer.items);
    });
    window.addEventListener("dragover", (e) => e.preventDefault());
    window.addEventListener("drop", (e) => e.preventDefault());
    $("crop").addEventListener("change", () => {
      $("crop-rows").hidden = $("crop").value !== "rows";
      if ($("crop").value !== "rows") reinspect();
    });
    $("crop-rows").addEventListener("change", reinspect);
    for (const r of document.querySelectorAll("input[name=kind]")) r.addEventListener("change", setKind);
  }

  function take(files, items) {
    hide($("image-msg"));
    const entry = items && items[0] && items[0].webkitGetAsEntry ? items[0].webkitGetAsEntry() : null;
    if (entry && entry.isDirectory) {
      show($("image-msg"), `${entry.name}: is a folder; drop one image file`);
      return;
    }
    const file = files[0];
    if (!file) return;
    if (file.size > S.info.max_upload_bytes) {
      show($("image-msg"), `${file.name}: the file is ${bytes(file.size)}, more than this server's `
        + `limit of ${bytes(S.info.max_upload_bytes)}; crop or compress it losslessly, or restart `
        + "the server with a larger --max-upload-mb");
      return;
    }
    upload(file, files.length > 1 ? `${files.length} files dropped; using the first, ${file.name}` : null);
  }

  function upload(file, note) {
    const drop = $("drop"), bar = $("upload-bar");
    const xhr = new XMLHttpRequest();
    xhr.open("POST", "/api/uploads?quick=1");
    xhr.setRequestHeader("X-Polisect", "1");
    xhr.setRequestHeader("X-Filename", encodeURIComponent(file.name));
    xhr.setRequestHeader("Content-Type", "application/octet-stream");
    drop.classList.add("busy");
    drop.setAttribute("aria-busy", "true");
    bar.hidden = false;
    bar.firstElementChild.style.width = "0";
    xhr.upload.onprogress = (e) => {
      if (e.lengthComputable) bar.firstElementChild.style.width = `${(100 * e.loaded / e.total).toFixed(1)}%`;
    };
    const done = () => { drop.classList.remove("busy"); drop.removeAttribute("aria-busy"); bar.hidden = true; };
    xhr.onerror = () => {
      done();
      show($("image-msg"), `${file.name}: the upload failed (the connection closed); check that the `
        + "server still runs and try again");
    };
    xhr.onload = () => {
      done();
      let data = null;
      try { data = JSON.parse(xhr.responseText); } catch (e) { /* not JSON */ }
      if (xhr.status !== 200 || !data) {
        const still = S.up ? ` (the page still works with ${S.up.name})` : "";
        show($("image-msg"), ((data && data.error) || `${file.name}: the server answered ${xhr.status}`) + still);
        return;
      }
      firstLook(data, note).catch((e) => show($("image-msg"), e.message));
    };
    xhr.send(file);
  }

  /** The quick answer to an upload: draw the preview at once, then ask for the image's facts
   * (information band, histogram, suggested classes), which take longer on a large image. */
  async function firstLook(quick, note) {
    const seq = ++S.uploadSeq;
    const buf = await api(`/api/uploads/${quick.id}/preview`, { binary: true });
    if (seq !== S.uploadSeq) return;
    const [ph, pw] = quick.preview_shape;
    $("image-facts").hidden = false;
    $("f-name").textContent = quick.name;
    $("f-size").textContent = `${quick.shape[1]} × ${quick.shape[0]} px · ${bytes(quick.bytes)}`;
    $("f-type").textContent = "reading the image…";
    drawThumb(new Float32Array(buf), pw, ph, quick.range);
    const facts = await api(`/api/uploads/${quick.id}/inspect`, { json: { crop: "auto" } });
    if (seq === S.uploadSeq) await accept(facts, note);
  }

  async function accept(facts, note) {
    const cleared = S.up && S.up.id === facts.id && S.strokes.length > 0;
    S.up = facts;
    S.labels = null;
    S.auto = true;
    S.th = [];
    const buf = await api(`/api/uploads/${facts.id}/preview`, { binary: true });
    S.grey = new Float32Array(buf);
    [S.ph, S.pw] = facts.preview_shape;
    resetStrokes();
    brushLabel();
    if (cleared) {
      note = [note, "The image was read again (information band), so the strokes were cleared: paint them again."]
        .filter(Boolean).join(" ");
    }
    showFacts(facts, note);
    const labelsOk = Array.isArray(facts.label_values);
    if (facts.crop === 0) $("crop").value = "0";  // the server keeps every row of a label image
    $("kind-labels").disabled = !labelsOk;
    const kind = labelsOk ? "labels" : "grayscale";
    document.querySelector(`input[name=kind][value=${kind}]`).checked = true;
    $("batch-command").textContent = `polisect batch FOLDER --config ${facts.stem}_batch.toml`;
    S.classes = facts.suggested_classes && facts.suggested_classes >= 2 ? facts.suggested_classes : 3;
    for (const id of ["step-map", "step-phases", "step-compute"]) $(id).hidden = false;
    await setKind();
  }

  function showFacts(f, note) {
    $("image-facts").hidden = false;
    $("f-name").textContent = f.name;
    const [ny, nx] = f.shape;
    $("f-size").textContent = `${nx} × ${ny} px · ${bytes(f.bytes)}`;
    $("f-type").textContent = `${f.is_rgb ? "RGB, read as luminance" : "grey"} · ${f.dtype}`
      + (f.n_pages > 1 ? ` · page 1 of ${f.n_pages}` : "");
    const px = $("pixel-size");
    px.value = f.pixel_size_um === null ? "" : String(+f.pixel_size_um.toPrecision(6));
    px.dataset.fromFile = px.value;
    $("pixel-note").textContent = f.pixel_size_um === null
      ? "Not in the file. Enter it to get sizes in µm (otherwise in pixels)."
      : `Read from the ${f.pixel_size_from === "tiff-tags" ? "TIFF resolution tags" : f.pixel_size_from}; change it if the calibration is wrong.`;
    $("crop-note").textContent = f.cropped_bottom_px
      ? `${f.cropped_bottom_px} rows cut; the image analysed is ${nx} × ${ny} px.`
      : "Nothing cut.";
    const notes = $("image-notes");
    const said = /^(pixel size unknown|auto crop:|cut an information band)/;  // said above already
    notes.replaceChildren(...[note, ...f.notes.filter((n) => !said.test(n))].filter(Boolean)
      .map((n) => el("li", { text: n })));
    drawThumb(S.grey, S.pw, S.ph, greyRange());
  }

  async function reinspect() {
    if (!S.up) return;
    hide($("image-msg"));
    try {
      const facts = await api(`/api/uploads/${S.up.id}/inspect`, { json: { crop: cropValue() } });
      await accept(facts, null);
    } catch (e) {
      show($("image-msg"), e.message);
    }
  }

  function cropValue() {
    const v = $("crop").value;
    if (v === "auto") return "auto";
    if (v === "rows") return Math.max(0, parseInt($("crop-rows").value, 10) || 0);
    return 0;
  }

  function greyRange() { return [S.up.range[0], S.up.range[1] > S.up.range[0] ? S.up.range[1] : S.up.range[0] + 1]; }
  /** The histogram's axis (for integer images the bins are centred on the integers). */
  function histRange() { return [S.up.histogram.lo, S.up.histogram.hi]; }

  function drawThumb(grey, pw, ph, range) {
    const c = $("thumb");
    c.width = pw; c.height = ph;
    const ctx = c.getContext("2d");
    const img = ctx.createImageData(pw, ph);
    const lo = range[0], hi = range[1] > range[0] ? range[1] : range[0] + 1;
    for (let i = 0; i < grey.length; i++) {
      const g = 255 * (grey[i] - lo) / (hi - lo);
      img.data[4 * i] = img.data[4 * i + 1] = img.data[4 * i + 2] = g;
      img.data[4 * i + 3] = 255;
    }
    ctx.putImageData(img, 0, 0);
  }

  async function setKind() {
    S.kind = document.querySelector("input[name=kind]:checked").value;
    const grey = S.kind === "grayscale";
    $("mode-set").hidden = !grey;
    if (!grey) document.querySelector("input[name=mode][value=grey]").checked = true;
    showMode();
    $("label-summary").hidden = grey;
    hide($("map-msg"));
    if (grey) {
      $("classes").value = S.classes;
      const n = S.up.suggested_classes;
      $("suggested").textContent = n >= 2 ? `suggested: ${n}`
        : n === 1 ? "no clear phases in the histogram" : "no suggestion";
      if (S.up.suggest_note) show($("map-msg"), S.up.suggest_note);
      if (S.mode === "strokes") { prepareStrokes(); buildRows(); buildPalette(); drawOverlay(); return; }
      await autoThresholds();
    } else {
      S.labels = null;
      buildRows();
      drawOverlay();
      $("overlay-note").textContent = "Each value of the label image is one phase.";
      $("label-summary").textContent = `The image holds the values ${S.up.label_values.join(", ")}: `
        + "one phase each, used as they are (no thresholds). Give each a material in step 3.";
    }
  }

  // ---------------------------------------------------------------- step 2: phase map
  function wireMapStep() {
    $("classes").addEventListener("change", () => {
      S.classes = +$("classes").value;
      if (S.mode === "strokes") phasesChanged(); else autoThresholds();
    });
    for (const r of document.querySelectorAll("input[name=mode]")) r.addEventListener("change", setMode);
    wirePainting();
    $("auto-th").addEventListener("click", autoThresholds);
    $("denoise").addEventListener("change", segSettingsChanged);
    $("denoise-px").addEventListener("change", segSettingsChanged);
    $("min-feature").addEventListener("change", () => refreshLabels());
    $("alpha").addEventListener("input", drawOverlay);
  }

  function segSettings() {
    return {
      denoise: $("denoise").value,
      denoise_px: Number($("denoise-px").value) || 1,
      min_feature_px: $("min-feature").value.trim() === "" ? "auto"
        : Math.max(0, parseInt($("min-feature").value, 10) || 0),
    };
  }

  function segSettingsChanged() { if (S.auto) autoThresholds(); else refreshLabels(); }

  async function autoThresholds() {
    if (!S.up || S.kind !== "grayscale") return;
    const seq = ++S.seq;
    hide($("map-msg"));
    const first = S.up.preview_thresholds;
    if (S.th.length !== S.classes - 1 && first && first.length === S.classes - 1) {
      S.th = first.slice();  // a first look from the preview while the full image is worked on
      buildRows();
      thresholdsChanged(false);
    }
    $("th-mode").textContent = "Finding the thresholds on the full image…";
    const s = segSettings();
    try {
      const r = await api(`/api/uploads/${S.up.id}/thresholds`, {
        json: { crop: cropValue(), classes: S.classes, denoise: s.denoise, denoise_px: s.denoise_px },
      });
      if (seq !== S.seq) return;
      S.th = r.thresholds;
      S.auto = true;
    } catch (e) {
      if (seq !== S.seq) return;
      show($("map-msg"), e.message);
      S.th = evenThresholds(S.classes);
      S.auto = false;
    }
    buildRows();
    thresholdsChanged(false);
    refreshLabels();
  }

  function evenThresholds(n) {
    const [lo, hi] = greyRange();
    return Array.from({ length: n - 1 }, (_, i) => lo + (hi - lo) * (i + 1) / n);
  }

  function thresholdsChanged(byUser) {
    if (byUser) S.auto = false;
    $("th-mode").textContent = S.auto
      ? "Automatic: multi-Otsu thresholds of the full image; the run finds them the same way."
      : "Your thresholds: the run uses them as given (method = \"thresholds\").";
    placeHandles();
    drawHistogram();
    drawOverlay();
  }

  const refreshLabels = debounce(async () => {
    if (!S.up || S.kind !== "grayscale" || !S.th.length) return;
    const s = segSettings();
    const key = JSON.stringify([S.up.id, S.th, s]);
    try {
      const buf = await api(`/api/uploads/${S.up.id}/labels`, { json: { thresholds: S.th, ...s }, binary: true });
      S.labels = new Uint8Array(buf);
      S.labelsKey = key;
      hide($("map-msg"));
    } catch (e) {
      S.labels = null;
      show($("map-msg"), e.message);
    }
    drawOverlay();
  }, 250);

  function histX(v, w) { const [lo, hi] = histRange(); return (v - lo) / (hi - lo) * w; }

  function classOf(v) {
    let k = 0;
    while (k < S.th.length && v > S.th[k]) k++;
    return k;
  }

  function drawHistogram() {
    const c = $("hist"), dpr = window.devicePixelRatio || 1;
    const w = c.clientWidth, h = c.clientHeight;
    if (!w) return;
    c.width = Math.round(w * dpr); c.height = Math.round(h * dpr);
    const ctx = c.getContext("2d");
    ctx.scale(dpr, dpr);
    ctx.clearRect(0, 0, w, h);
    const counts = S.up.histogram.counts, n = counts.length;
    const top = Math.log1p(Math.max(...counts));
    const [lo, hi] = histRange();
    for (let i = 0; i < n; i++) {
      const centre = lo + (hi - lo) * (i + 0.5) / n;
      const bh = top > 0 ? (h - 18) * Math.log1p(counts[i]) / top : 0;
      ctx.fillStyle = colour(classOf(centre));
      ctx.globalAlpha = 0.85;
      ctx.fillRect(i * w / n, h - bh, Math.max(1, w / n - 0.5), bh);
    }
    ctx.globalAlpha = 1;
    $("hist-lo").textContent = fmt(lo, 5);
    $("hist-hi").textContent = fmt(hi, 5);
  }

  function placeHandles() {
    const box = $("handles"), inputs = $("th-inputs");
    if (box.children.length !== S.th.length) {
      box.replaceChildren();
      inputs.replaceChildren();
      S.th.forEach((_, i) => {
        const hnd = el("div", { class: "handle", role: "slider", tabindex: 0,
          "aria-label": `Threshold between class ${i} and class ${i + 1}` });
        wireHandle(hnd, i);
        box.append(hnd);
        const inp = el("input", { type: "number", step: "any", id: `th-${i}`,
          "aria-label": `Threshold ${i + 1}, grey level` });
        inp.addEventListener("change", () => setThreshold(i, Number(inp.value), true));
        const pair = el("label", { for: `th-${i}`, class: "pair", title: `between class ${i} and class ${i + 1}` },
          el("span", { class: "swatch" }), el("span", { class: "swatch" }));
        pair.children[0].style.background = colour(i);
        pair.children[1].style.background = colour(i + 1);
        inputs.append(el("span", { class: "th-field" }, pair, inp));
      });
    }
    const [lo, hi] = histRange();
    const w = $("hist-wrap").clientWidth;
    S.th.forEach((t, i) => {
      const hnd = box.children[i];
      hnd.style.left = `${histX(t, w)}px`;
      hnd.setAttribute("aria-valuemin", fmt(lo, 6));
      hnd.setAttribute("aria-valuemax", fmt(hi, 6));
      hnd.setAttribute("aria-valuenow", fmt(t, 6));
      hnd.setAttribute("aria-valuetext", `grey level ${fmt(t, 5)}`);
      const inp = $(`th-${i}`);
      if (document.activeElement !== inp) inp.value = fmt(t, 6);
    });
  }

  function setThreshold(i, v, final) {
    if (!Number.isFinite(v)) { placeHandles(); return; }
    const [lo, hi] = histRange();
    const gap = (hi - lo) / 1e4;
    const min = i > 0 ? S.th[i - 1] + gap : lo;
    const max = i < S.th.length - 1 ? S.th[i + 1] - gap : hi;
    S.th[i] = Math.min(max, Math.max(min, v));
    thresholdsChanged(true);
    if (final) refreshLabels();
  }

  function wireHandle(hnd, i) {
    const valueAt = (clientX) => {
      const r = $("hist-wrap").getBoundingClientRect();
      const [lo, hi] = histRange();
      return lo + (hi - lo) * (clientX - r.left) / r.width;
    };
    hnd.addEventListener("pointerdown", (e) => {
      e.preventDefault();
      hnd.setPointerCapture(e.pointerId);
      hnd.classList.add("dragging");
      hnd.focus();
      S.dragging = i;
    });
    hnd.addEventListener("pointermove", (e) => { if (S.dragging === i) setThreshold(i, valueAt(e.clientX), false); });
    const end = () => {
      if (S.dragging !== i) return;
      S.dragging = -1;
      hnd.classList.remove("dragging");
      refreshLabels();
    };
    hnd.addEventListener("pointerup", end);
    hnd.addEventListener("pointercancel", end);
    hnd.addEventListener("keydown", (e) => {
      const [lo, hi] = histRange();
      const bin = (hi - lo) / S.up.histogram.counts.length;
      const steps = { ArrowLeft: -1, ArrowDown: -1, ArrowRight: 1, ArrowUp: 1, PageDown: -10, PageUp: 10 };
      if (e.key in steps) setThreshold(i, S.th[i] + steps[e.key] * bin * (e.shiftKey ? 10 : 1), true);
      else if (e.key === "Home") setThreshold(i, lo, true);
      else if (e.key === "End") setThreshold(i, hi, true);
      else return;
      e.preventDefault();
    });
  }

  /** Class index of every preview pixel: the server's labels when current, else from the grey levels. */
  function previewClasses() {
    const n = S.grey.length;
    if (S.kind === "labels") {
      const index = new Map(S.up.label_values.map((v, i) => [v, i]));
      return Uint8Array.from(S.grey, (v) => index.get(Math.round(v)) ?? 0);
    }
    if (S.mode === "strokes") {
      $("overlay-note").textContent = S.strokeLabels
        ? (S.up.preview_step > 1
          ? `Phase map trained on your strokes, at 1/${S.up.preview_step} of the resolution; the run trains and classifies the full image.`
          : "Phase map from a classifier trained on your strokes; the run trains and classifies the same way.")
        : "Paint strokes on at least two phases to see the phase map.";
      return S.strokeLabels;
    }
    const s = segSettings();
    const current = S.labels && S.dragging < 0 && S.labelsKey === JSON.stringify([S.up.id, S.th, s]);
    $("overlay-note").textContent = current
      ? `Preview at 1/${S.up.preview_step} of the resolution, smoothing and clean-up applied; the run uses the full image.`
      : "Preview from the raw grey levels while you adjust…";
    if (current) return S.labels;
    const out = new Uint8Array(n);
    for (let i = 0; i < n; i++) out[i] = classOf(S.grey[i]);
    return out;
  }

  /** Show the map (and the strokes over it) as large as its column allows, at most
   * `MAP_MAX_HEIGHT` px high, without distorting it. */
  function fitMap() {
    const room = $("paint").parentElement.clientWidth;
    if (!room || !S.pw) return;
    const scale = Math.min(room / S.pw, MAP_MAX_HEIGHT / S.ph);
    for (const id of ["overlay", "strokes"]) {
      $(id).style.width = `${Math.floor(S.pw * scale)}px`;
      $(id).style.height = `${Math.floor(S.ph * scale)}px`;
    }
  }

  function drawOverlay() {
    if (!S.up) return;
    const c = $("overlay");
    c.width = S.pw; c.height = S.ph;
    fitMap();
    const ctx = c.getContext("2d");
    const img = ctx.createImageData(S.pw, S.ph);
    const cls = previewClasses();
    const a = cls ? $("alpha").value / 100 : 0;
    const cols = Array.from({ length: 9 }, (_, i) => rgb(colour(i)));
    const [lo, hi] = greyRange();
    const counts = new Array(cols.length).fill(0);
    for (let i = 0; i < S.grey.length; i++) {
      const k = cls ? cls[i] : 0;
      const g = 255 * (S.grey[i] - lo) / (hi - lo), col = cols[k] || cols[0];
      counts[k]++;
      img.data[4 * i] = (1 - a) * g + a * col[0];
      img.data[4 * i + 1] = (1 - a) * g + a * col[1];
      img.data[4 * i + 2] = (1 - a) * g + a * col[2];
      img.data[4 * i + 3] = 255;
    }
    ctx.putImageData(img, 0, 0);
    classList().forEach((label, k) => {
      const cell = document.querySelector(`#phase-rows tr[data-label="${label}"] .share`);
      if (cell) cell.textContent = cls ? `${(100 * counts[k] / cls.length).toFixed(1)} %` : "–";
    });
  }

  // ---------------------------------------------------------------- step 2b: strokes
  function setMode() {
    S.mode = document.querySelector("input[name=mode]:checked").value;
    showMode();
    hide($("map-msg"));
    if (S.mode === "strokes") {
      prepareStrokes();
      buildRows();
      buildPalette();
      sizeStrokeCanvas();
      drawStrokes();
      paintStatus();
    } else if (S.th.length !== S.classes - 1) {
      autoThresholds();
    } else {
      buildRows();
      thresholdsChanged(false);
    }
    drawOverlay();
  }

  function showMode() {
    const grey = S.kind === "grayscale", strokes = grey && S.mode === "strokes";
    $("class-controls").hidden = !grey;
    $("grey-controls").hidden = !grey || strokes;
    $("paint-controls").hidden = !strokes;
    $("strokes").hidden = !strokes;
    $("show-strokes-box").hidden = !strokes;
    $("auto-th").hidden = strokes;
    $("suggested").hidden = strokes;
    $("classes-label").textContent = strokes ? "Phases" : "Classes";
    $("map-grid").classList.toggle("painting", strokes);
  }

  function resetStrokes() {
    const [ny, nx] = S.up.shape;
    S.ann = new Uint8Array(ny * nx);
    S.strokes = [];
    S.current = null;
    S.strokeLabels = null;
    S.strokeSeq++;
    hide($("paint-msg"));
    $("save-model").disabled = $("save-batch").disabled = true;
    if (S.mode === "strokes") { sizeStrokeCanvas(); drawStrokes(); paintStatus(); }
  }

  /** The name of a phase as the page shows it: the name given, else the material, else its label. */
  function phaseName(label) {
    const st = rowState(label);
    return st.name || (!st.own && st.material) || `phase ${label}`;
  }

  function buildPalette() {
    if (!S.up || S.kind !== "grayscale") return;
    if (S.paintValue > S.classes) S.paintValue = 1;
    $("palette").replaceChildren(...classList().map((label, k) => {
      const sw = el("span", { class: "swatch", "aria-hidden": "true" });
      sw.style.background = colour(k);
      const b = el("button", { type: "button", "data-value": label + 1,
        "aria-pressed": !S.erasing && S.paintValue === label + 1 ? "true" : "false",
        title: `Paint ${phaseName(label)}` }, sw, phaseName(label));
      b.addEventListener("click", () => { S.paintValue = label + 1; S.erasing = false; buildPalette(); });
      return b;
    }));
    $("eraser").setAttribute("aria-pressed", S.erasing ? "true" : "false");
  }

  /** Let the server correct the preview for the listed phases while the user paints. */
  function prepareStrokes() {
    if (S.up && S.kind === "grayscale") {
      api(`/api/uploads/${S.up.id}/strokes`, { json: { prepare: true, phases: S.classes } })
        .catch(() => { /* the first training reports any problem */ });
    }
  }

  /** The phase count changed: strokes of phases that no longer exist are dropped. */
  function phasesChanged() {
    prepareStrokes();
    buildRows();
    const before = S.strokes.length;
    S.strokes = S.strokes.filter((st) => st.value <= S.classes);
    if (S.strokes.length !== before) {
      rasterise();
      show($("paint-msg"), `${before - S.strokes.length} stroke(s) of phases no longer listed were removed.`, "info");
    }
    buildPalette();
    drawStrokes();
    strokesChanged();
  }

  function wirePainting() {
    const c = $("strokes");
    $("brush").addEventListener("input", brushLabel);
    $("eraser").addEventListener("click", () => { S.erasing = !S.erasing; buildPalette(); });
    $("undo").addEventListener("click", () => {
      if (!S.strokes.length) return;
      S.strokes.pop();
      rasterise(); drawStrokes(); strokesChanged();
    });
    $("clear").addEventListener("click", () => {
      S.strokes = [];
      rasterise(); drawStrokes(); strokesChanged();
    });
    $("save-model").addEventListener("click", saveModel);
    $("save-batch").addEventListener("click", saveBatch);
    $("show-strokes").addEventListener("change", () => {
      c.style.opacity = $("show-strokes").checked ? "1" : "0";  // still paintable when hidden
    });
    c.addEventListener("pointerdown", (e) => {
      if (!S.up || e.button !== 0) return;
      e.preventDefault();
      c.setPointerCapture(e.pointerId);
      S.current = { value: S.erasing ? 0 : S.paintValue, radius: brushRadius(), points: [imagePoint(e)] };
      stampLine(S.current, S.current.points[0], S.current.points[0]);
      drawStrokes();
    });
    c.addEventListener("pointermove", (e) => {
      if (!S.current) return;
      const pts = S.current.points, p = imagePoint(e), q = pts[pts.length - 1];
      if (Math.hypot(p[0] - q[0], p[1] - q[1]) < 0.5) return;
      pts.push(p);
      stampLine(S.current, q, p);
      drawStrokes();
    });
    const end = () => {
      if (!S.current) return;
      S.strokes.push(S.current);
      S.current = null;
      strokesChanged();
    };
    c.addEventListener("pointerup", end);
    c.addEventListener("pointercancel", end);
    brushLabel();
  }

  function brushRadius() { return Math.max(0.5, Number($("brush").value) * S.up.preview_step / 2); }
  function brushLabel() {
    if (!S.up) { $("brush-size").textContent = ""; return; }
    const px = Math.round(2 * brushRadius());
    $("brush-size").textContent = S.up.preview_step > 1 ? `${px} image pixels wide` : `${px} px wide`;
  }

  /** Where a pointer event falls, in pixels of the image (column, row). */
  function imagePoint(e) {
    const r = $("strokes").getBoundingClientRect();
    const [ny, nx] = S.up.shape;
    return [Math.min(nx - 1, Math.max(0, (e.clientX - r.left) / r.width * nx)),
      Math.min(ny - 1, Math.max(0, (e.clientY - r.top) / r.height * ny))];
  }

  /** Paint a stroke's segment a → b into the annotation: discs of the brush radius. */
  function stampLine(stroke, a, b) {
    const [ny, nx] = S.up.shape, r = stroke.radius, r2 = r * r;
    const n = Math.max(1, Math.ceil(Math.hypot(b[0] - a[0], b[1] - a[1]) / Math.max(0.5, r / 2)));
    for (let i = 0; i <= n; i++) {
      const cx = a[0] + (b[0] - a[0]) * i / n, cy = a[1] + (b[1] - a[1]) * i / n;
      const y0 = Math.max(0, Math.ceil(cy - r)), y1 = Math.min(ny - 1, Math.floor(cy + r));
      for (let y = y0; y <= y1; y++) {
        const dx = Math.sqrt(Math.max(0, r2 - (y - cy) ** 2));
        const x0 = Math.max(0, Math.ceil(cx - dx)), x1 = Math.min(nx - 1, Math.floor(cx + dx));
        S.ann.fill(stroke.value, y * nx + x0, y * nx + x1 + 1);
      }
    }
  }

  function rasterise() {
    S.ann.fill(0);
    for (const st of S.strokes) {
      for (let i = 0; i < st.points.length; i++) stampLine(st, st.points[Math.max(0, i - 1)], st.points[i]);
    }
  }

  function sizeStrokeCanvas() {
    const c = $("strokes");
    if (c.width !== S.pw || c.height !== S.ph) { c.width = S.pw; c.height = S.ph; }
  }

  /** The strokes as the user sees them: the painted pixels of the annotation on the preview,
   * in the phase's colour with a white rim (so that a stroke shows over its own phase). */
  function drawStrokes() {
    if (!S.up || S.mode !== "strokes") return;
    sizeStrokeCanvas();
    const ctx = $("strokes").getContext("2d");
    const img = ctx.createImageData(S.pw, S.ph);
    const [, nx] = S.up.shape, step = S.up.preview_step, w = S.pw, h = S.ph;
    const cols = Array.from({ length: 9 }, (_, i) => rgb(colour(i)));
    const v = new Uint8Array(w * h);
    for (let y = 0; y < h; y++) for (let x = 0; x < w; x++) v[y * w + x] = S.ann[y * step * nx + x * step];
    for (let y = 0; y < h; y++) {
      for (let x = 0; x < w; x++) {
        const k = y * w + x, i = 4 * k;
        if (v[k]) {
          const col = cols[v[k] - 1];
          img.data[i] = col[0]; img.data[i + 1] = col[1]; img.data[i + 2] = col[2]; img.data[i + 3] = 255;
        } else if ((x > 0 && v[k - 1]) || (x < w - 1 && v[k + 1]) || (y > 0 && v[k - w]) || (y < h - 1 && v[k + w])) {
          img.data[i] = img.data[i + 1] = img.data[i + 2] = 255; img.data[i + 3] = 255;
        }
      }
    }
    ctx.putImageData(img, 0, 0);
  }

  /** Painted pixels per phase value. */
  function paintedCounts() {
    const counts = new Array(S.info.max_classes + 1).fill(0);
    for (let i = 0; i < S.ann.length; i++) counts[S.ann[i]]++;
    return counts;
  }

  /** Why the strokes cannot train a classifier yet, in plain words, or null. */
  function strokesProblem() {
    const counts = paintedCounts();
    const painted = classList().filter((label) => counts[label + 1] > 0);
    if (!painted.length) {
      return "No strokes yet: pick a phase above the image, then drag over places that clearly belong to it.";
    }
    if (painted.length < 2) {
      return `Only ${phaseName(painted[0])} is painted: paint strokes on at least one more phase, so `
        + "that the classifier can tell the phases apart.";
    }
    return null;
  }

  function paintStatus(extra) {
    const counts = paintedCounts();
    const share = 100 * (S.ann.length - counts[0]) / S.ann.length;
    $("paint-status").textContent = [`Painted: ${share.toFixed(2)} % of the pixels`, extra].filter(Boolean).join(" · ");
  }

  function strokesChanged() {
    S.strokeSeq++;
    const problem = strokesProblem();
    paintStatus();
    $("save-model").disabled = $("save-batch").disabled = Boolean(problem);
    if (problem) {
      S.strokeLabels = null;
      show($("paint-msg"), problem, "info");
      drawOverlay();
      return;
    }
    hide($("paint-msg"));
    hide($("run-msg"));
    trainSoon();
  }

  /** Strokes → RLE runs along the rows: [row, first column, length, value, ...]. */
  function encodeStrokes() {
    const [ny, nx] = S.up.shape, runs = [];
    for (let y = 0; y < ny; y++) {
      const o = y * nx;
      let x = 0;
      while (x < nx) {
        const v = S.ann[o + x];
        if (!v) { x++; continue; }
        let e = x + 1;
        while (e < nx && S.ann[o + e] === v) e++;
        runs.push(y, x, e - x, v);
        x = e;
      }
    }
    return { shape: [ny, nx], runs };
  }

  /** Train on the current strokes, at most one request at a time: strokes painted while the
   * server trains are sent together once it answers (the server's work stays bounded). */
  async function train() {
    if (!S.up || S.mode !== "strokes" || strokesProblem()) return;
    if (S.training) { S.trainAgain = true; return; }
    S.training = true;
    S.trainAgain = false;
    const seq = S.strokeSeq, upload = S.up.id;
    paintStatus("training the classifier…");
    try {
      const r = await api(`/api/uploads/${upload}/strokes`, { json: { strokes: encodeStrokes(), phases: S.classes } });
      if (seq === S.strokeSeq && upload === S.up.id) {
        S.strokeLabels = Uint8Array.from(atob(r.labels), (ch) => ch.charCodeAt(0));
        paintStatus(`mean confidence of the classifier: ${(100 * r.confidence_mean).toFixed(1)} %`);
        $("paint-status").dataset.confidence = r.confidence_mean;
        $("paint-status").dataset.share = r.annotated_share;
        if (r.warnings.length) show($("paint-msg"), r.warnings.join(" "), "info");
      }
    } catch (e) {
      if (seq === S.strokeSeq) {
        S.strokeLabels = null;
        paintStatus();
        show($("paint-msg"), e.message, "error");
      }
    } finally {
      S.training = false;
    }
    drawOverlay();
    if (S.trainAgain || seq !== S.strokeSeq) train();
  }
  const trainSoon = debounce(train, 300);

  /** Save *blob* as a file called *name* (through a temporary link). */
  function saveBlob(blob, name) {
    const url = URL.createObjectURL(blob);
    const a = el("a", { href: url, download: name, hidden: true });
    document.body.append(a);
    a.click();
    a.remove();
    setTimeout(() => URL.revokeObjectURL(url), 10000);
  }

  async function postForFile(path, json) {
    const resp = await fetch(path, { method: "POST", body: JSON.stringify(json),
      headers: { "X-Polisect": "1", "Content-Type": "application/json" } });
    if (!resp.ok) {
      let message = `${resp.status} ${resp.statusText}`;
      try { message = (await resp.json()).error || message; } catch (e) { /* not JSON */ }
      throw new Error(message);
    }
    return resp.blob();
  }

  async function saveModel() {
    const problem = strokesProblem();
    if (problem) { show($("paint-msg"), problem, "info"); return; }
    const btn = $("save-model");
    btn.disabled = true;
    paintStatus("training the model on the full image…");
    try {
      const blob = await postForFile(`/api/uploads/${S.up.id}/model`, { strokes: encodeStrokes() });
      saveBlob(blob, `${S.up.stem}_segmenter.npz`);
      paintStatus(`model saved as ${S.up.stem}_segmenter.npz`);
    } catch (e) {
      show($("paint-msg"), e.message, "error");
      paintStatus();
    } finally {
      btn.disabled = false;
    }
  }

  async function saveBatch() {
    const config = runConfig();
    config.segment = { method: "trained", model: `${S.up.stem}_segmenter.npz` };
    const problem = phaseProblem(config);
    if (problem) { show($("paint-msg"), problem, "info"); return; }
    try {
      const blob = await postForFile("/api/config", { config, image: S.up.name,
        command: `polisect batch FOLDER --config ${S.up.stem}_batch.toml` });
      saveBlob(blob, `${S.up.stem}_batch.toml`);
    } catch (e) {
      show($("paint-msg"), e.message, "error");
    }
  }

  // ---------------------------------------------------------------- step 3: phases
  function classList() {
    if (S.kind === "labels") return S.up.label_values.slice();
    return Array.from({ length: S.classes }, (_, i) => i);
  }

  function rowState(label) {
    if (!S.rows.has(label)) S.rows.set(label, { name: "", material: "", own: false, values: {}, particles: "auto" });
    return S.rows.get(label);
  }

  function buildRows() {
    const body = $("phase-rows");
    body.replaceChildren(...classList().map((label, k) => phaseRow(label, k)));
  }

  function phaseRow(label, k) {
    const st = rowState(label);
    const name = el("input", { type: "text", value: st.name, "aria-label": `Name of class ${label}`,
      placeholder: st.material && !st.own ? st.material : `phase-${label}` });
    name.addEventListener("input", () => { st.name = name.value.trim(); buildPalette(); });
    const particles = el("select", { "aria-label": `Particle statistics for class ${label}` },
      ...[["auto", "auto"], ["yes", "yes"], ["no", "no"]].map(([v, t]) =>
        el("option", { value: v, text: t, selected: st.particles === v })));
    particles.addEventListener("change", () => { st.particles = particles.value; });
    const swatch = el("span", { class: "swatch", "aria-hidden": "true" });
    swatch.style.background = colour(k);
    return el("tr", { "data-label": label },
      el("td", {}, swatch, String(label)),
      el("td", {}, name),
      el("td", {}, materialPicker(label, st, name)),
      el("td", {}, particles),
      el("td", { class: "num-col share", text: "–" }));
  }

  function materialPicker(label, st, nameInput) {
    const lib = S.info.materials;
    const listId = `mat-list-${label}`;
    const input = el("input", { type: "text", role: "combobox", "aria-autocomplete": "list",
      "aria-expanded": "false", "aria-controls": listId, autocomplete: "off",
      "aria-label": `Material of class ${label}`, placeholder: "type to search the library",
      value: st.own ? "own values" : st.material });
    const list = el("ul", { role: "listbox", id: listId, hidden: true, tabindex: -1 });
    const props = el("div", { class: "matprops" });
    const own = el("div", { class: "own-values", hidden: !st.own });
    for (const [key, sym, unit, scale] of OWN) {
      const inp = el("input", { type: "number", step: "any", value: st.values[key] ?? "",
        "aria-label": `${sym} of class ${label}, ${unit}` });
      inp.addEventListener("input", () => { st.values[key] = inp.value; });
      own.append(el("label", {}, `${sym} ${unit}`, inp));
      inp.dataset.scale = scale;
    }
    let active = -1, options = [];
    const describe = (m) => [["k", m.conductivity, ""], ["E", m.youngs_modulus, " GPa"],
      ["ν", m.poisson_ratio, ""], ["α", m.expansion === undefined ? undefined : m.expansion * 1e6, "·10⁻⁶/K"]]
      .filter(([, v]) => v !== undefined).map(([s, v, u]) => `${s} ${fmt(v, 3)}${u}`).join(" · ");
    const showProps = () => {
      const m = lib.find((x) => x.key === st.material);
      props.textContent = st.own ? "" : m ? describe(m)
        : st.material && list.hidden ? "not in the library: the run will say what is close" : "";
    };
    const close = () => {
      list.hidden = true;
      input.setAttribute("aria-expanded", "false");
      input.removeAttribute("aria-activedescendant");
      showProps();
    };
    const choose = (opt) => {
      if (opt.own) {
        st.own = true; st.material = ""; input.value = "own values";
      } else {
        st.own = false; st.material = opt.key; input.value = opt.key;
      }
      own.hidden = !st.own;
      nameInput.placeholder = st.own || !st.material ? `phase-${label}` : st.material;
      showProps();
      close();
      buildPalette();
    };
    const render = () => {
      const q = input.value.trim().toLowerCase();
      const rank = (m) => (!q || q === "own values" ? 0 : m.key.startsWith(q) ? 0 : m.key.includes(q) ? 1
        : m.description.toLowerCase().includes(q) ? 2 : 3);
      const hits = lib.map((m) => [rank(m), m]).filter(([r]) => r < 3)
        .sort((a, b) => a[0] - b[0]).map(([, m]) => m);
      options = [...hits, { own: true }];
      list.replaceChildren(...options.map((m, i) => el("li", {
        role: "option", id: `${listId}-${i}`, "aria-selected": i === active ? "true" : "false", class: m.own ? "own" : null,
      }, m.own ? "own values…" : m.key, m.own ? null : el("small", { text: m.description }))));
      [...list.children].forEach((li, i) => {
        li.addEventListener("mousedown", (e) => { e.preventDefault(); choose(options[i]); });
      });
      list.hidden = false;
      input.setAttribute("aria-expanded", "true");
      if (active >= 0) {
        input.setAttribute("aria-activedescendant", `${listId}-${active}`);
        list.children[active].scrollIntoView({ block: "nearest" });
      }
    };
    input.addEventListener("focus", () => { active = -1; render(); });
    input.addEventListener("input", () => {
      active = -1;
      st.own = false; own.hidden = true;
      st.material = input.value.trim().toLowerCase();
      showProps();
      render();
    });
    input.addEventListener("keydown", (e) => {
      if (e.key === "ArrowDown" || e.key === "ArrowUp") {
        e.preventDefault();
        const n = options.length;
        active = e.key === "ArrowDown" ? (active + 1) % n : (active - 1 + n) % n;
        render();
      } else if (e.key === "Enter" && !list.hidden && active >= 0) {
        e.preventDefault();
        choose(options[active]);
      } else if (e.key === "Escape") {
        close();
      }
    });
    input.addEventListener("blur", close);
    showProps();
    return el("div", { class: "combo" }, input, list, props, own);
  }

  // ---------------------------------------------------------------- step 4: run
  function runConfig() {
    const image = { kind: S.kind, crop_bottom_px: cropValue() };
    const px = $("pixel-size").value.trim();
    if (px !== "" && px !== $("pixel-size").dataset.fromFile) image.pixel_size_um = Number(px);
    const s = segSettings();
    const segment = S.kind !== "grayscale" ? undefined
      : S.mode === "strokes" ? { method: "trained" }
        : S.auto ? { method: "multi-otsu", classes: S.classes, ...s }
          : { method: "thresholds", thresholds: S.th.slice(), ...s };
    const phase = classList().map((label) => {
      const st = rowState(label);
      const p = { label };
      if (st.name) p.name = st.name;
      if (!st.own && st.material) p.material = st.material;
      if (st.particles !== "auto") p.particles = st.particles === "yes";
      if (st.own) {
        p.source = "own values entered in the page";
        for (const [key, , , scale] of OWN) {
          const raw = (st.values[key] ?? "").toString().trim();
          if (raw !== "") p[key] = Number(raw) * scale;
        }
      }
      return p;
    });
    const properties = [...document.querySelectorAll("#props input:checked")].map((i) => i.value);
    const solve = { properties, plane: $("plane").value };
    if ($("est3d").checked) solve.estimate_3d = true;
    if ($("verify").checked) solve.verify = true;
    const run = { image, segment, phase, solve };
    if ($("windows").checked) run.windows = { study: true };
    return run;
  }

  /** What the page can say before the server does: a phase without material while properties
   * are asked for, or two phases with the same name (the results list phases by name). */
  function phaseProblem(config) {
    const bare = config.phase.find((p) => !p.material && !OWN.some(([key]) => key in p));
    if (bare && config.solve.properties.length) {
      return `class ${bare.label} has no material: pick one from the library or enter own values `
        + "(or untick the effective properties to measure the fractions only)";
    }
    const seen = new Map();
    for (const p of config.phase) {
      const name = p.name || p.material || `phase-${p.label}`;
      if (seen.has(name)) {
        return `classes ${seen.get(name)} and ${p.label} are both called “${name}”: give them `
          + "different names (results are listed by phase name)";
      }
      seen.set(name, p.label);
    }
    return null;
  }

  async function submitRun() {
    hide($("run-msg"));
    if (!S.up) { show($("run-msg"), "drop an image first (step 1)"); return; }
    const config = runConfig();
    const problem = phaseProblem(config) || (S.mode === "strokes" ? strokesProblem() : null);
    if (problem) { show($("run-msg"), problem); return; }
    const btn = $("run");
    btn.disabled = true;
    try {
      const body = { upload: S.up.id, config };
      if (S.mode === "strokes") body.strokes = encodeStrokes();
      const r = await api("/api/runs", { json: body });
      await openRun(r.id);
      refreshRuns();
    } catch (e) {
      show($("run-msg"), e.message);
    } finally {
      btn.disabled = false;
    }
  }

  // ---------------------------------------------------------------- step 5: progress and result
  async function openRun(id) {
    clearTimeout(S.pollTimer);
    S.runId = id;
    $("step-result").hidden = false;
    $("result-title").textContent = "Run";
    $("run-folder").textContent = `${S.info.out_dir}/${id}`;
    $("result").hidden = true;
    hide($("result-msg"));
    $("log").replaceChildren();
    markCurrent();
    await poll(id, true);
    $("step-result").scrollIntoView({ behavior: "smooth", block: "start" });
  }

  async function poll(id, first) {
    if (id !== S.runId) return;
    let st;
    try {
      st = await api(`/api/runs/${id}`);
    } catch (e) {
      show($("result-msg"), e.message);
      return;
    }
    if (id !== S.runId) return;
    $("result-title").textContent = `Run: ${st.image}`;
    const final = FINAL.includes(st.state);
    $("progress").hidden = final && st.state === "done";
    $("state").textContent = st.state;
    $("state").className = `state ${st.state}`;
    $("stage").textContent = st.stage || "";
    showSolver(final ? null : st.solver);
    $("cancel").hidden = final;
    document.querySelector("#progress .bar").hidden = final;
    const end = st.finished || st.server_time;
    $("elapsed").textContent = st.started ? `${(end - st.started).toFixed(1)} s` : "";
    const log = st.log || [];
    $("log").replaceChildren(...log.slice(-12).map(([t, m]) => el("li", { text: `${t.toFixed(1).padStart(6)} s  ${m}` })));
    if (!final) {
      S.pollTimer = setTimeout(() => poll(id, false), 400);
      return;
    }
    refreshRuns();
    if (st.state === "done") {
      const box = $("step-result").getBoundingClientRect();
      const watching = box.top < window.innerHeight && box.bottom > 0;
      await showResult(id, st);
      if (!first && watching) $("step-result").scrollIntoView({ behavior: "smooth", block: "start" });
    }
    else if (st.error) show($("result-msg"), st.error);
    else if (st.state === "cancelled") show($("result-msg"), "Cancelled. The run folder keeps what was written so far.", "info");
    else if (st.state === "interrupted") show($("result-msg"), "The server stopped during this run; run it again.", "info");
  }

  function showSolver(sv) {
    const line = $("solver");
    line.hidden = !sv;
    if (!sv) return;
    const parts = [`${sv.method} solver`];
    if (sv.load_cases) parts.push(`load case ${sv.load_case} of ${sv.load_cases}` + (sv.name ? ` (${sv.name})` : ""));
    if (sv.iteration !== undefined) {
      parts.push(`iteration ${sv.iteration}`);
      parts.push(`residual ${sv.residual.toExponential(1)} (stops at ${sv.tolerance.toExponential(0)})`);
    }
    line.textContent = parts.join(" · ");
  }

  async function cancelRun() {
    if (!S.runId) return;
    try {
      await api(`/api/runs/${S.runId}/cancel`, { json: {} });
    } catch (e) {
      show($("result-msg"), e.message);
    }
    poll(S.runId, false);
  }

  const DOWNLOAD_LABELS = [["report", "Report", "HTML"], ["json", "Result", "JSON"], ["csv", "Headline numbers", "CSV"],
    ["phasemap", "Phase map", "TIFF"], ["config", "Run config", "TOML"], ["overlay", "Overlay", "PNG"],
    ["particles", "Particles", "CSV"], ["segmenter", "Segmenter model", "NPZ"],
    ["strokes", "Strokes", "PNG"]];

  async function showResult(id, st) {
    const d = await api(`/api/runs/${id}/files/json`);
    if (id !== S.runId) return;
    const base = `/api/runs/${encodeURIComponent(id)}/files`;
    const outputs = { ...st.outputs, config: "config.toml" };
    $("downloads").replaceChildren(...DOWNLOAD_LABELS.filter(([k]) => outputs[k]).map(([k, label, type]) =>
      el("a", { href: `${base}/${k}`, download: outputs[k], "data-kind": k }, label, el("small", { text: type }))));
    const head = el("thead", {}, el("tr", {}, ...["Phase", "Material", "Fraction", "95 % interval"].map((h) => el("th", { scope: "col", text: h }))));
    const rows = d.phases.map((p, k) => {
      const sw = el("span", { class: "swatch", "aria-hidden": "true" });
      sw.style.background = colour(k);
      return el("tr", { "data-label": p.label },
        el("td", {}, sw, p.name),
        el("td", { text: materialKeyOf(p) }),
        el("td", { class: "fraction", text: fixed(p.fraction) }),
        el("td", { class: "ci", text: `${fixed(p.fraction_ci95[0])} – ${fixed(p.fraction_ci95[1])}` }));
    });
    $("fractions").replaceChildren(head, el("tbody", {}, ...rows));
    $("effective").replaceChildren(effectiveTable(d.effective, d.bounds));
    $("particles").replaceChildren(...[particlesTable(d.particles)].filter(Boolean));
    $("warnings").replaceChildren(...(d.warnings || []).map((w) => el("li", { text: w })));
    $("repeat").textContent = `polisect analyze ${st.image} --config config.toml`;
    $("report").src = `${base}/report?inline=1`;
    $("result").hidden = false;
  }

  /** The library key of a phase's material when its source is a library entry, else the source. */
  function materialKeyOf(p) {
    const src = p.material.source || "";
    const m = S.info.materials.find((x) => x.description === src);
    return m ? m.key : src;
  }

  function solverText(facts) {
    if (!facts) return "";
    const ok = facts.converged === false ? " · NOT converged" : "";
    return `${facts.method || ""}${facts.iterations !== undefined ? ` · ${facts.iterations} it.` : ""}${ok}`;
  }

  function effectiveTable(eff, bounds) {
    if (!eff) {
      return el("p", { class: "hint", text: "No effective properties in this result: none was asked for, "
        + "or the phases have no materials." });
    }
    const rows = [];
    if (eff.conductivity) {
      const b = (bounds || {}).conductivity_W_mK;
      rows.push(["Conductivity", fmt(eff.conductivity.mean_W_mK), "W/(m·K)", "conductivity",
        solverText(eff.conductivity.solver),
        b && b.lower !== null && b.upper !== null ? `HS bounds ${fmt(b.lower)} – ${fmt(b.upper)}` : ""]);
    }
    if (eff.elasticity) {
      const e = eff.elasticity, how = solverText(e.solver);
      rows.push(["Young's modulus", fmt(e.youngs_modulus_GPa), "GPa", "youngs_modulus", how, ""],
        ["Poisson's ratio", fmt(e.poisson_ratio, 3), "–", "poisson_ratio", "", ""],
        ["Bulk modulus", fmt(e.bulk_modulus_GPa), "GPa", "bulk_modulus", "", ""],
        ["Shear modulus", fmt(e.shear_modulus_GPa), "GPa", "shear_modulus", "", ""]);
    }
    if (eff.expansion) {
      rows.push(["Thermal expansion", fmt(eff.expansion.mean_per_K * 1e6), "10⁻⁶/K", "expansion",
        solverText(eff.expansion.solver), ""]);
    }
    const table = el("table", { class: "grid" }, el("tbody", {}, ...rows.map(([n, v, u, key, how, b]) =>
      el("tr", { "data-key": key }, el("td", { text: n }), el("td", { class: "value", text: v }),
        el("td", { class: "unit", text: u }), el("td", { class: "how", text: [how, b].filter(Boolean).join(" · ") })))));
    return el("div", {}, table, eff.model ? el("p", { class: "hint", text: `Model: ${eff.model}.` }) : null);
  }

  function particlesTable(particles, units) {
    const entries = Object.entries(particles || {});
    if (!entries.length) return null;
    const head = el("thead", {}, el("tr", {}, ...["Particles of", "Count", "ECD d50", "per mm²"]
      .map((h) => el("th", { scope: "col", text: h }))));
    const body = el("tbody", {}, ...entries.map(([name, p]) => {
      const unit = p.units === "um" ? " µm" : " px";
      return el("tr", { "data-phase": name }, el("td", { text: name }), el("td", { text: String(p.count) }),
        el("td", { text: p.ecd_um && p.ecd_um.d50 !== undefined ? `${fmt(p.ecd_um.d50, 3)}${unit}` : "–" }),
        el("td", { text: p.count_per_mm2 ? fmt(p.count_per_mm2, 3) : "–" }));
    }));
    return el("div", {}, el("h3", { text: "Particles" }), el("table", { class: "grid" }, head, body));
  }

  // ---------------------------------------------------------------- runs list
  async function refreshRuns() {
    let runs;
    try {
      runs = (await api("/api/runs")).runs;
    } catch (e) {
      return;
    }
    const list = $("run-list");
    if (!runs.length) {
      list.replaceChildren(el("li", { class: "empty", text: "No runs yet." }));
      return;
    }
    list.replaceChildren(...runs.map((r) => {
      const when = r.created ? new Date(r.created * 1000).toLocaleString() : "";
      const b = el("button", { type: "button", "data-run": r.id },
        el("span", { class: "rname", text: r.image || r.id }),
        el("span", { class: `state ${r.state}`, text: r.state }),
        el("span", { class: "rwhen", text: when }));
      b.addEventListener("click", () => openRun(r.id));
      return el("li", {}, b);
    }));
    markCurrent();
    if (runs.some((r) => !FINAL.includes(r.state))) setTimeout(refreshRuns, 2000);
  }

  function markCurrent() {
    for (const b of document.querySelectorAll("#run-list button")) {
      b.setAttribute("aria-current", b.dataset.run === S.runId ? "true" : "false");
    }
  }

  start();
})();
