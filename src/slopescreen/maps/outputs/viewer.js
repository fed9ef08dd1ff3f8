// slopescreen map page: pan, zoom, layers and values on a click, offline (no library).
"use strict";
(function () {
  const data = JSON.parse(document.getElementById("data").textContent);
  const canvas = document.getElementById("map");
  const ctx = canvas.getContext("2d");
  const view = { scale: 1, x: 0, y: 0 };
  const state = { layer: null, overlays: new Set(["zones"]), images: {}, values: null };
  const byId = Object.fromEntries(data.layers.map((l) => [l.id, l]));

  function image(src, what) {
    return new Promise((resolve, reject) => {
      const img = new Image();
      img.onload = () => resolve(img);
      img.onerror = () => reject(new Error("cannot show the image of " + what));
      img.src = src;
    });
  }

  async function unpack(grid) {
    const bytes = Uint8Array.from(atob(grid.b64), (c) => c.charCodeAt(0));
    const stream = new Blob([bytes]).stream().pipeThrough(new DecompressionStream("gzip"));
    const buffer = await new Response(stream).arrayBuffer();
    if (grid.kind === "f32") return new Float32Array(buffer);
    return grid.kind === "u16" ? new Uint16Array(buffer) : new Uint8Array(buffer);
  }

  async function unpackAll() {
    const out = { region: {}, scenarios: {} };
    for (const [k, g] of Object.entries(data.values.region)) out.region[k] = await unpack(g);
    for (const [name, grids] of Object.entries(data.values.scenarios)) {
      out.scenarios[name] = {};
      for (const [k, g] of Object.entries(grids)) out.scenarios[name][k] = await unpack(g);
    }
    return out;
  }

  function fit() {
    const w = canvas.clientWidth, h = canvas.clientHeight;
    canvas.width = w * devicePixelRatio;
    canvas.height = h * devicePixelRatio;
    view.scale = Math.min(w / data.view.cols, h / data.view.rows);
    view.x = (w - data.view.cols * view.scale) / 2;
    view.y = (h - data.view.rows * view.scale) / 2;
  }

  function draw() {
    ctx.setTransform(1, 0, 0, 1, 0, 0);
    ctx.fillStyle = "#ffffff";
    ctx.fillRect(0, 0, canvas.width, canvas.height);
    const s = view.scale * devicePixelRatio;
    ctx.setTransform(s, 0, 0, s, view.x * devicePixelRatio, view.y * devicePixelRatio);
    ctx.imageSmoothingEnabled = false;
    ctx.drawImage(state.images.base, 0, 0, data.view.cols, data.view.rows);
    const chosen = byId[state.layer];
    if (chosen) {
      ctx.globalAlpha = 0.82;
      ctx.drawImage(state.images[chosen.id], 0, 0, data.view.cols, data.view.rows);
      ctx.globalAlpha = 1;
    }
    for (const l of activeOverlays()) {
      ctx.drawImage(state.images[l.id], 0, 0, data.view.cols, data.view.rows);
    }
  }

  function activeOverlays() {
    return data.layers.filter((l) => l.overlay && l.scenario === state.scenario &&
      state.overlays.has(kindOf(l.id)));
  }

  function legendFor(layer) {
    const box = document.createElement("div");
    const head = document.createElement("h3");
    head.textContent = (layer.scenario ? layer.scenario + ": " : "") + layer.title;
    box.appendChild(head);
    for (const [colour, label] of layer.legend || []) {
      const row = document.createElement("div");
      row.className = "key";
      const sw = document.createElement("span");
      sw.className = "swatch";
      sw.style.background = colour;
      row.appendChild(sw);
      row.appendChild(document.createTextNode(label));
      box.appendChild(row);
    }
    if (layer.ramp) {
      const bar = document.createElement("div");
      bar.className = "ramp";
      bar.style.background = `linear-gradient(to right, ${layer.ramp.from}, ${layer.ramp.to})`;
      box.appendChild(bar);
      const ends = document.createElement("div");
      ends.className = "ends";
      ends.textContent = `${layer.ramp.low.toPrecision(3)} to ${layer.ramp.high.toPrecision(3)}` +
        (layer.ramp.log ? " (log scale), dark to pale" : ", dark to pale");
      box.appendChild(ends);
    }
    return box;
  }

  function showLegend() {
    const box = document.getElementById("legend");
    box.replaceChildren();
    const chosen = byId[state.layer];
    if (chosen) box.appendChild(legendFor(chosen));
    for (const l of activeOverlays()) box.appendChild(legendFor(l));
  }

  function choose(id) {
    state.layer = id;
    showLegend();
    draw();
  }

  function kindOf(id) {
    return id.split("/").pop();
  }

  function radio(l, group) {
    const label = document.createElement("label");
    const input = document.createElement("input");
    input.type = "radio";
    input.name = "layer";
    input.value = l.id;
    input.id = "layer-" + l.id;
    input.checked = l.id === state.layer;
    input.addEventListener("change", () => choose(l.id));
    label.appendChild(input);
    label.appendChild(document.createTextNode(" " + l.title));
    group.appendChild(label);
  }

  function showLayers() {
    // the chosen scenario's layers, then the region's own
    const group = document.getElementById("layer-list");
    group.replaceChildren();
    const main = data.layers.filter((l) => !l.overlay);
    for (const l of main.filter((x) => x.scenario === state.scenario)) radio(l, group);
    for (const l of main.filter((x) => !x.scenario)) radio(l, group);
  }

  function buildPanel() {
    const panel = document.getElementById("layers");
    const which = document.createElement("label");
    which.className = "scenario";
    which.textContent = "scenario ";
    const select = document.createElement("select");
    select.id = "scenario";
    for (const name of data.scenarios) select.add(new Option(name, name));
    which.appendChild(select);
    panel.appendChild(which);
    const group = document.createElement("fieldset");
    group.id = "layer-list";
    panel.appendChild(group);
    state.scenario = data.scenarios[0];
    state.layer = state.scenario + "/classes";
    select.addEventListener("change", () => {
      // the same kind of layer in the other scenario where it has one
      const kind = state.layer.includes("/") ? kindOf(state.layer) : null;
      state.scenario = select.value;
      const same = kind && byId[state.scenario + "/" + kind];
      if (kind) state.layer = same ? same.id : state.scenario + "/classes";
      showLayers();
      showLegend();
      draw();
      if (state.cell) showCell(...state.cell);
    });
    const extra = document.createElement("fieldset");
    const legend = document.createElement("legend");
    legend.textContent = "on top (the chosen scenario's)";
    extra.appendChild(legend);
    for (const [key, text] of [["zones", "low-margin zones"], ["runout", "run-out reach"]]) {
      const label = document.createElement("label");
      const input = document.createElement("input");
      input.type = "checkbox";
      input.id = "overlay-" + key;
      input.checked = state.overlays.has(key);
      input.addEventListener("change", () => {
        if (input.checked) state.overlays.add(key); else state.overlays.delete(key);
        showLegend();
        draw();
      });
      label.appendChild(input);
      label.appendChild(document.createTextNode(" " + text));
      extra.appendChild(label);
    }
    panel.appendChild(extra);
    showLayers();
  }

  function fmt(v, digits) {
    return Number.isFinite(v) ? v.toFixed(digits) : "no value";
  }

  function readout(clientX, clientY) {
    const rect = canvas.getBoundingClientRect();
    const vx = (clientX - rect.left - view.x) / view.scale;
    const vy = (clientY - rect.top - view.y) / view.scale;
    if (vx < 0 || vy < 0 || vx >= data.view.cols || vy >= data.view.rows) return;
    const row = Math.min(Math.floor(vy * data.grid.rows / data.view.rows), data.grid.rows - 1);
    const col = Math.min(Math.floor(vx * data.grid.cols / data.view.cols), data.grid.cols - 1);
    state.cell = [row, col];
    showCell(row, col);
  }

  function showCell(row, col) {
    // the values of the cell, in the chosen scenario (shown again when it changes)
    const v = data.values, step = v.step;
    const i = Math.floor(row / step) * v.cols + Math.floor(col / step);
    const r = Math.floor(row / step) * step, c = Math.floor(col / step) * step;
    const name = state.scenario;
    const s = state.values.scenarios[name] || {};
    const unit = state.values.region.unit[i];
    const cls = s.class ? s.class[i] : 0;
    const x = data.grid.x0 + (c + 0.5) * data.grid.dx, y = data.grid.y0 + (r + 0.5) * data.grid.dy;
    const lines = [
      ["scenario", name],
      ["cell", `row ${r}, column ${c} (x ${x.toFixed(2)}, y ${y.toFixed(2)}, ${data.grid.crs})`],
      ["FS", fmt(s.fs ? s.fs[i] : NaN, 3)],
      ["class", cls ? data.classNames[cls - 1] : "no result"],
      ["slope (deg)", fmt(state.values.region.slope[i], 1)],
      ["soil unit", unit ? data.units[unit - 1] : "none"],
      ["depth (m)", fmt(s.depth ? s.depth[i] : NaN, 2)],
      ["saturation m", fmt(s.saturation ? s.saturation[i] : NaN, 2)],
    ];
    if (s.probability) lines.push(["P(FS < 1)", fmt(s.probability[i], 3)]);
    const box = document.getElementById("readout");
    box.replaceChildren();
    const table = document.createElement("table");
    for (const [k, val] of lines) {
      const tr = table.insertRow();
      tr.insertCell().textContent = k;
      const td = tr.insertCell();
      td.textContent = val;
      td.dataset.key = k;
    }
    box.appendChild(table);
    const note = document.createElement("p");
    note.className = "meta";
    note.textContent = step > 1
      ? `Values are kept for one cell in ${step} each way: the one read is named above.`
      : "Values of the cell clicked.";
    box.appendChild(note);
  }

  function zoom(factor, cx, cy) {
    view.x = cx - (cx - view.x) * factor;
    view.y = cy - (cy - view.y) * factor;
    view.scale *= factor;
    draw();
  }

  function wire() {
    let down = null, moved = false;
    canvas.addEventListener("mousedown", (e) => { down = [e.clientX, e.clientY]; moved = false; });
    addEventListener("mousemove", (e) => {
      if (!down) return;
      const dx = e.clientX - down[0], dy = e.clientY - down[1];
      if (Math.abs(dx) + Math.abs(dy) > 3) moved = true;
      if (moved) { view.x += dx; view.y += dy; down = [e.clientX, e.clientY]; draw(); }
    });
    addEventListener("mouseup", () => { down = null; });
    canvas.addEventListener("click", (e) => { if (!moved) readout(e.clientX, e.clientY); });
    canvas.addEventListener("wheel", (e) => {
      e.preventDefault();
      const rect = canvas.getBoundingClientRect();
      zoom(e.deltaY < 0 ? 1.25 : 0.8, e.clientX - rect.left, e.clientY - rect.top);
    }, { passive: false });
    const mid = () => [canvas.clientWidth / 2, canvas.clientHeight / 2];
    document.getElementById("zin").addEventListener("click", () => zoom(1.5, ...mid()));
    document.getElementById("zout").addEventListener("click", () => zoom(1 / 1.5, ...mid()));
    document.getElementById("zfit").addEventListener("click", () => { fit(); draw(); });
    addEventListener("resize", () => { fit(); draw(); });
  }

  function pixelsDigest() {
    // the canvas as a PNG, hashed (FNV-1a): what the picture shows, compared across layers
    const png = canvas.toDataURL("image/png");
    let h = 2166136261;
    for (let k = 0; k < png.length; k++) h = Math.imul(h ^ png.charCodeAt(k), 16777619) >>> 0;
    return h;
  }

  function probe(spec) {
    // a self-check driven by the page's address (#probe=row,column): switch layers and
    // click a grid cell as a user would, and write what the page showed
    const [row, col] = spec.split(",").map(Number);
    const first = pixelsDigest();
    const radios = [...document.querySelectorAll("input[name=layer]")];
    const other = radios.find((r) => !r.checked);
    other.click();
    const second = pixelsDigest();
    const rect = canvas.getBoundingClientRect();
    const vx = (col + 0.5) * data.view.cols / data.grid.cols;
    const vy = (row + 0.5) * data.view.rows / data.grid.rows;
    // whole pixels, as a mouse gives them: the cell's centre to half a pixel
    const at = { clientX: Math.round(rect.left + view.x + vx * view.scale),
                 clientY: Math.round(rect.top + view.y + vy * view.scale), bubbles: true };
    canvas.dispatchEvent(new MouseEvent("mousedown", at));
    canvas.dispatchEvent(new MouseEvent("mouseup", at));
    canvas.dispatchEvent(new MouseEvent("click", at));
    const read = () => Object.fromEntries([...document.querySelectorAll("#readout td[data-key]")]
      .map((td) => [td.dataset.key, td.textContent]));
    const shown = read();
    const select = document.getElementById("scenario");
    select.value = data.scenarios[data.scenarios.length - 1];
    select.dispatchEvent(new Event("change"));
    const third = pixelsDigest();
    const out = document.getElementById("probe");
    out.textContent = JSON.stringify({ first, second, third, layers: radios.length,
                                       scenarios: select.options.length,
                                       switched: other.value, shown, after: read() });
    out.hidden = false;
  }

  async function start() {
    const all = [image(data.base, "the hillshade"), ...data.layers.map((l) => image(l.image, l.id))];
    const loaded = await Promise.all(all);
    state.images.base = loaded[0];
    data.layers.forEach((l, k) => { state.images[l.id] = loaded[k + 1]; });
    state.values = await unpackAll();
    buildPanel();
    wire();
    fit();
    showLegend();
    draw();
    const m = location.hash.match(/^#probe=(\d+,\d+)$/);
    if (m) probe(m[1]);
  }

  start().catch((err) => { console.error("map page: " + err); });
})();
