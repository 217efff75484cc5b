/* The section page of mapsection: map pane, line editing, section pane and checks.
   Everything comes from this server's /api; nothing is loaded from elsewhere. */
(function () {
  "use strict";

  const TOKEN = new URLSearchParams(location.search).get("token") || "";
  const SVGNS = "http://www.w3.org/2000/svg";
  const TESTS = ["topography", "restoration", "area_balance", "kinematics"];
  const TEST_NAMES = {topography: "topography", restoration: "restoration",
    area_balance: "area balance", kinematics: "kinematics"};
  const PAUSE_MS = 250; // a drag that pauses this long asks for the draft and checks

  const $ = (id) => document.getElementById(id);
  const state = {
    project: null, grids: null, sectionName: null, line: [], saved: {},
    drawing: false, drawPts: [], drag: null, ve: 1, lastQuick: null, lastDraft: null,
    shownSeq: 0, shownDraftSeq: 0, seq: 0, draftStale: false,
  };
  // Timings measured in the page (read by the browser test and the benchmark).
  const timings = window.__mapsectionTimings = {drag_step: [], drag_end: [], errors: 0};

  // --- talking to the server --------------------------------------------------------------
  function withToken(url) { return url + (url.includes("?") ? "&" : "?") + "token=" + encodeURIComponent(TOKEN); }

  async function api(path, body) {
    const opts = {headers: {"X-Token": TOKEN}};
    if (body !== undefined) {
      opts.method = "POST";
      opts.headers["Content-Type"] = "application/json";
      opts.body = JSON.stringify(body);
    }
    let res;
    try { res = await fetch(path, opts); }
    catch (e) { throw new Error("no answer from the server (is 'mapsection view' still running?)"); }
    const type = res.headers.get("content-type") || "";
    const data = type.includes("json") ? await res.json() : null;
    if (!res.ok) throw new Error((data && data.error) || ("request failed: HTTP " + res.status));
    return data;
  }

  function showMessage(text, kind) {
    const m = $("message");
    if (!text) { m.hidden = true; m.textContent = ""; return; }
    m.hidden = false; m.textContent = text;
    m.className = "message" + (kind === "info" ? " info" : "");
  }
  function busy(on, text) { const b = $("busy"); b.hidden = !on; b.textContent = text || "working…"; }

  // --- lon/lat <-> project CRS by bilinear interpolation of the server's exact grids -------
  function interp(g, u, v) {
    const n = state.grids.n;
    let fi = (u - g.x0) / g.dx, fj = (v - g.y0) / g.dy;
    let i = Math.min(Math.max(Math.floor(fi), 0), n - 2), j = Math.min(Math.max(Math.floor(fj), 0), n - 2);
    const s = fi - i, t = fj - j, k = j * n + i;
    const f = (a) => (1 - s) * (1 - t) * a[k] + s * (1 - t) * a[k + 1] + (1 - s) * t * a[k + n] + s * t * a[k + n + 1];
    return [f(g.a), f(g.b)];
  }
  const toXY = (ll) => interp(state.grids.lonlat_to_xy, ll.lng, ll.lat);
  function toLL(p) { const q = interp(state.grids.xy_to_lonlat, p[0], p[1]); return L.latLng(q[1], q[0]); }

  // --- the map -----------------------------------------------------------------------------
  let map, svgR, lineLayer, corridorLayer, handleLayer, othersLayer, symbols;

  function setupMap(info) {
    map = L.map("map", {zoomSnap: 0.25, zoomAnimation: false, doubleClickZoom: false,
      attributionControl: false, preferCanvas: true, maxZoom: 19});
    const e = info.extent_lonlat;
    map.fitBounds([[e[1], e[0]], [e[3], e[2]]]);
    svgR = L.svg({padding: 0.5});
    L.control.scale({imperial: false, position: "bottomright"}).addTo(map);
    const hs = info.hillshade;
    L.imageOverlay(withToken(hs.url), hs.bounds, {opacity: 1, interactive: false}).addTo(map);
    map.on("mousemove", (ev) => {
      const p = toXY(ev.latlng);
      $("coords").textContent = "x " + fmt(p[0]) + " m, y " + fmt(p[1]) + " m (" + (info.crs.code || info.crs.name) + ")";
    });
    corridorLayer = L.layerGroup().addTo(map);
    othersLayer = L.layerGroup().addTo(map);
    lineLayer = L.layerGroup().addTo(map);
    handleLayer = L.layerGroup().addTo(map);
    map.on("click", onMapClick);
    map.on("dblclick", (ev) => { if (state.drawing) { L.DomEvent.stop(ev); finishDrawing(); } });
    // While dragging, the pointer is over the handle it drags: listen on the document.
    document.addEventListener("mousemove", (e) => { if (state.drag) onDragMove({latlng: map.mouseEventToLatLng(e)}); });
    document.addEventListener("mouseup", onDragEnd);
    document.addEventListener("keydown", (ev) => {
      if (ev.key === "Enter" && state.drawing) finishDrawing();
      if (ev.key === "Escape" && state.drawing) cancelDrawing();
    });
  }

  function fmt(v) { return Math.round(v).toLocaleString("en-US").replace(/,/g, " "); }

  async function loadMapLayers() {
    const [units, faults, atts] = await Promise.all([
      api("/api/map/units"), api("/api/map/faults"), api("/api/map/attitudes")]);
    const canvas = L.canvas({padding: 0.3});
    L.geoJSON(units, {renderer: canvas, interactive: false, style: (f) => ({
      fillColor: f.properties.colour || "#cccccc", fillOpacity: 0.55, color: "#333", weight: 0.6, opacity: 0.7})
    }).addTo(map);
    L.geoJSON(faults, {renderer: canvas, interactive: false, style: () => ({color: "#000", weight: 2.4})}).addTo(map);
    symbols = new SymbolLayer(faults.features, atts.features);
    symbols.addTo(map);
    $("legend").setAttribute("data-units", String(units.features.length));
    return units.features.length;
  }

  /* Fault sense marks and strike-and-dip symbols (after FGDC-STD-013-2006), drawn on one canvas. */
  const SymbolLayer = L.Layer.extend({
    initialize: function (faults, atts) {
      this.faults = faults;
      this.atts = atts.map((f) => {
        const ll = L.latLng(f.geometry.coordinates[1], f.geometry.coordinates[0]);
        const xy = toXY(ll);
        return {ll: ll, xy: xy, p: f.properties};
      });
    },
    onAdd: function (m) {
      this._c = L.DomUtil.create("canvas", "leaflet-zoom-hide");
      this._c.style.pointerEvents = "none";
      m.getPanes().overlayPane.appendChild(this._c);
      m.on("moveend zoomend resize viewreset", this._draw, this);
      this._draw();
    },
    onRemove: function (m) { L.DomUtil.remove(this._c); m.off("moveend zoomend resize viewreset", this._draw, this); },
    _draw: function () {
      const m = this._map, size = m.getSize(), c = this._c, dpr = window.devicePixelRatio || 1;
      L.DomUtil.setPosition(c, m.containerPointToLayerPoint([0, 0]));
      c.width = size.x * dpr; c.height = size.y * dpr; c.style.width = size.x + "px"; c.style.height = size.y + "px";
      const g = c.getContext("2d");
      g.setTransform(dpr, 0, 0, dpr, 0, 0);
      g.clearRect(0, 0, size.x, size.y);
      const bounds = m.getBounds().pad(0.05);
      this._drawFaults(g, m);
      const vis = this.atts.filter((a) => bounds.contains(a.ll));
      // Dense data: one symbol per 22-pixel cell of the screen, so that symbols stay legible.
      const thin = vis.length > 1500, used = new Set();
      const labels = vis.length <= 400 && m.getZoom() >= 13.5;
      g.lineCap = "butt";
      for (const a of vis) {
        const p = m.latLngToContainerPoint(a.ll);
        if (thin) {
          const key = Math.floor(p.x / 22) + "," + Math.floor(p.y / 22);
          if (used.has(key)) continue;
          used.add(key);
        }
        this._attitude(g, m, a, p, labels);
      }
      this._c.setAttribute("data-symbols", String(thin ? used.size : vis.length));
    },
    // Screen direction of a map azimuth at a point (grid azimuth of the project CRS).
    _dir: function (m, xy, az, p) {
      const r = az * Math.PI / 180, d = 50;
      const q = m.latLngToContainerPoint(toLL([xy[0] + d * Math.sin(r), xy[1] + d * Math.cos(r)]));
      const dx = q.x - p.x, dy = q.y - p.y, n = Math.hypot(dx, dy) || 1;
      return [dx / n, dy / n];
    },
    _attitude: function (g, m, a, p, labels) {
      const s = a.p.strike, dip = a.p.dip;
      if (s === null || dip === null) return;
      const st = this._dir(m, a.xy, s, p), dd = this._dir(m, a.xy, s + 90, p);
      g.strokeStyle = "#111"; g.lineWidth = 1.6;
      const L1 = 9, T = 5;
      if (dip < 0.5) { // horizontal bedding: a cross in a circle
        g.beginPath(); g.arc(p.x, p.y, 5, 0, 2 * Math.PI);
        g.moveTo(p.x - 5, p.y); g.lineTo(p.x + 5, p.y); g.moveTo(p.x, p.y - 5); g.lineTo(p.x, p.y + 5); g.stroke();
        return;
      }
      g.beginPath();
      g.moveTo(p.x - st[0] * L1, p.y - st[1] * L1); g.lineTo(p.x + st[0] * L1, p.y + st[1] * L1);
      g.moveTo(p.x, p.y); g.lineTo(p.x + dd[0] * T, p.y + dd[1] * T);
      if (dip >= 89.5) { g.moveTo(p.x, p.y); g.lineTo(p.x - dd[0] * T, p.y - dd[1] * T); }
      g.stroke();
      if (a.p.overturned) { // overturned bedding: a hook on the dip tick
        g.beginPath(); g.arc(p.x + dd[0] * T + st[0] * 2.5, p.y + dd[1] * T + st[1] * 2.5, 2.5, 0, Math.PI); g.stroke();
      }
      if (labels && dip < 89.5) {
        g.font = "10px system-ui, sans-serif"; g.fillStyle = "#111"; g.textAlign = "center"; g.textBaseline = "middle";
        g.fillText(String(Math.round(dip)), p.x + dd[0] * (T + 8), p.y + dd[1] * (T + 8));
      }
    },
    _drawFaults: function (g, m) {
      for (const f of this.faults) {
        const kind = f.properties.kind, ddir = f.properties.dip_direction;
        if (!kind || ddir === null) continue;
        const geom = f.geometry, lines = geom.type === "LineString" ? [geom.coordinates] : geom.coordinates;
        for (const coords of lines) {
          const pts = coords.map((c) => m.latLngToContainerPoint(L.latLng(c[1], c[0])));
          const mid = coords[Math.floor(coords.length / 2)];
          const ll = L.latLng(mid[1], mid[0]), xy = toXY(ll), p0 = m.latLngToContainerPoint(ll);
          const down = this._dir(m, xy, ddir, p0); // toward the hanging wall
          let acc = 0;
          const every = kind === "normal" ? 60 : 22;
          g.fillStyle = "#000"; g.strokeStyle = "#000"; g.lineWidth = 1.5;
          for (let i = 1; i < pts.length; i++) {
            const a = pts[i - 1], b = pts[i], len = Math.hypot(b.x - a.x, b.y - a.y);
            if (len === 0) continue;
            const ux = (b.x - a.x) / len, uy = (b.y - a.y) / len;
            let nx = -uy, ny = ux;
            if (nx * down[0] + ny * down[1] < 0) { nx = -nx; ny = -ny; }
            let t = (every - acc);
            while (t <= len) {
              const x = a.x + ux * t, y = a.y + uy * t;
              if (kind === "normal") { // bar and ball on the downthrown side
                g.beginPath(); g.moveTo(x, y); g.lineTo(x + nx * 7, y + ny * 7); g.stroke();
                g.beginPath(); g.arc(x + nx * 9, y + ny * 9, 2.5, 0, 2 * Math.PI); g.fill();
              } else { // teeth on the upper plate
                g.beginPath(); g.moveTo(x - ux * 4, y - uy * 4); g.lineTo(x + nx * 6, y + ny * 6);
                g.lineTo(x + ux * 4, y + uy * 4); g.closePath(); g.fill();
              }
              t += every;
            }
            acc = (acc + len) % every;
          }
        }
      }
    },
  });

  // --- the section line on the map -----------------------------------------------------------
  function corridorPolygon(pts, w) {
    // Offset lines on both sides with mitred bends.
    const n = pts.length, left = [], right = [];
    for (let i = 0; i < n; i++) {
      const a = pts[Math.max(i - 1, 0)], b = pts[i], c = pts[Math.min(i + 1, n - 1)];
      let n1 = norm(i > 0 ? a : b, i > 0 ? b : c), n2 = norm(i < n - 1 ? b : a, i < n - 1 ? c : b);
      let mx = n1[0] + n2[0], my = n1[1] + n2[1];
      const ml = Math.hypot(mx, my) || 1; mx /= ml; my /= ml;
      const k = w / Math.max(mx * n1[0] + my * n1[1], 0.3);
      left.push([b[0] + mx * k, b[1] + my * k]); right.push([b[0] - mx * k, b[1] - my * k]);
    }
    return left.concat(right.reverse());
    function norm(p, q) { const dx = q[0] - p[0], dy = q[1] - p[1], l = Math.hypot(dx, dy) || 1; return [-dy / l, dx / l]; }
  }

  function spec() { return state.project.sections.find((s) => s.name === state.sectionName); }

  function drawLine() {
    lineLayer.clearLayers(); handleLayer.clearLayers(); corridorLayer.clearLayers();
    const pts = state.drawing ? state.drawPts : state.line;
    if (pts.length === 0) return;
    const lls = pts.map(toLL);
    if (!state.drawing && pts.length >= 2 && spec()) {
      L.polygon(corridorPolygon(pts, spec().corridor_m).map(toLL), {renderer: svgR, interactive: false,
        color: "#c7372f", weight: 0.8, opacity: 0.6, fillColor: "#c7372f", fillOpacity: 0.1, dashArray: "4 3"}).addTo(corridorLayer);
    }
    state.poly = L.polyline(lls, {renderer: svgR, color: "#c7372f", weight: 3.5, className: "section-line",
      bubblingMouseEvents: false}).addTo(lineLayer);
    if (state.drawing) return;
    state.poly.on("mousedown", (ev) => startDrag(ev, {kind: "line", start: toXY(ev.latlng), orig: state.line.map((p) => p.slice())}));
    lls.forEach((ll, i) => {
      const h = L.circleMarker(ll, {renderer: svgR, radius: 6, color: "#7a1510", weight: 2, fillColor: "#e8473e",
        fillOpacity: 1, bubblingMouseEvents: false, className: "vertex vertex-" + i}).addTo(handleLayer);
      h.on("mousedown", (ev) => startDrag(ev, {kind: "vertex", index: i}));
      h.on("contextmenu", (ev) => { L.DomEvent.stop(ev); deleteVertex(i); });
    });
    for (let i = 0; i + 1 < pts.length; i++) {
      const mid = [(pts[i][0] + pts[i + 1][0]) / 2, (pts[i][1] + pts[i + 1][1]) / 2];
      const h = L.circleMarker(toLL(mid), {renderer: svgR, radius: 4, color: "#7a1510", weight: 1, fillColor: "#fff",
        fillOpacity: 0.9, bubblingMouseEvents: false, className: "midpoint"}).addTo(handleLayer);
      h.on("mousedown", (ev) => {
        if (ev.originalEvent.button !== 0) return;
        state.line.splice(i + 1, 0, mid);
        drawLine();
        startDrag(ev, {kind: "vertex", index: i + 1});
      });
    }
  }

  function drawOthers() {
    othersLayer.clearLayers();
    for (const s of state.project.sections) {
      if (s.name === state.sectionName) continue;
      const pl = L.polyline(s.line.map(toLL), {renderer: svgR, color: "#444", weight: 2.5, dashArray: "7 5", opacity: 0.8});
      pl.bindTooltip("section " + s.name + " (click to select)", {sticky: true});
      pl.on("click", (ev) => { L.DomEvent.stop(ev); selectSection(s.name); });
      pl.addTo(othersLayer);
      L.marker(toLL(s.line[0]), {interactive: false, icon: L.divIcon({className: "vertex-tip", html: "<b>" + esc(s.name) + "</b>", iconSize: [30, 14], iconAnchor: [-4, 7]})}).addTo(othersLayer);
    }
  }

  function esc(t) { return String(t).replace(/[&<>"']/g, (c) => ({"&": "&amp;", "<": "&lt;", ">": "&gt;", "\"": "&quot;", "'": "&#39;"}[c])); }

  function selectSection(name) {
    state.sectionName = name;
    const s = spec();
    state.line = s.line.map((p) => p.slice());
    $("section-select").value = name;
    $("save-name").value = name;
    state.ve = s.ve || 1; $("ve").value = state.ve;
    drawOthers(); drawLine();
    requestSection(true, performance.now());
  }

  // --- drawing and dragging ------------------------------------------------------------------
  function onMapClick(ev) {
    if (!state.drawing) return;
    state.drawPts.push(toXY(ev.latlng));
    drawLine();
  }
  function startDrawing() {
    state.drawing = true; state.drawPts = [];
    $("map").classList.add("drawing"); $("btn-draw").classList.add("active"); $("btn-finish").hidden = false;
    showMessage("Click on the map to place the vertices of the new line; double-click, Enter or 'Finish line' ends it.", "info");
    drawLine();
  }
  function cancelDrawing() {
    state.drawing = false; $("map").classList.remove("drawing"); $("btn-draw").classList.remove("active");
    $("btn-finish").hidden = true; drawLine();
  }
  function finishDrawing() {
    // A double-click also gave two clicks on the last point: drop repeated vertices.
    const pts = [];
    for (const p of state.drawPts) {
      const q = pts[pts.length - 1];
      if (!q || Math.hypot(p[0] - q[0], p[1] - q[1]) > 1) pts.push(p);
    }
    if (pts.length < 2) { showMessage("A section line needs at least two vertices: click on the map to place them."); return; }
    state.line = pts;
    cancelDrawing();
    showMessage("");
    $("save-name").value = nextName();
    requestSection(true, performance.now());
  }
  function nextName() {
    const names = new Set(state.project.sections.map((s) => s.name));
    for (let i = 1; i < 1000; i++) { const n = state.sectionName + "-" + i; if (!names.has(n)) return n; }
    return state.sectionName + "-new";
  }

  function deleteVertex(i) {
    if (state.line.length <= 2) { showMessage("A section line keeps at least two vertices."); return; }
    state.line.splice(i, 1); drawLine(); requestSection(true, performance.now());
  }

  function startDrag(ev, what) {
    if (state.drawing) return;
    if (ev.originalEvent) { if (ev.originalEvent.button !== 0) return; L.DomEvent.stop(ev.originalEvent); }
    map.dragging.disable();
    state.drag = Object.assign({moved: false, timer: null}, what);
  }

  function onDragMove(ev) {
    const d = state.drag;
    if (!d) return;
    const t = performance.now();
    const p = toXY(ev.latlng);
    if (d.kind === "vertex") state.line[d.index] = p;
    else state.line = d.orig.map((q) => [q[0] + p[0] - d.start[0], q[1] + p[1] - d.start[1]]);
    d.moved = true;
    // Move the drawn line and handles without rebuilding them.
    state.poly.setLatLngs(state.line.map(toLL));
    const hs = handleLayer.getLayers(), n = state.line.length;
    state.line.forEach((q, i) => { if (d.kind !== "vertex" || i === d.index) hs[i].setLatLng(toLL(q)); });
    for (let i = 0; i + 1 < n && n + i < hs.length; i++) {
      const a = state.line[i], b = state.line[i + 1];
      hs[n + i].setLatLng(toLL([(a[0] + b[0]) / 2, (a[1] + b[1]) / 2]));
    }
    corridorLayer.clearLayers();
    requestSection(false, t);
    clearTimeout(d.timer);
    d.timer = setTimeout(() => { if (state.drag === d) requestSection(true, performance.now(), "pause"); }, PAUSE_MS);
  }

  function onDragEnd() {
    const d = state.drag;
    if (!d) return;
    state.drag = null;
    clearTimeout(d.timer);
    map.dragging.enable();
    drawLine();
    if (d.moved || d.kind === "vertex") requestSection(true, performance.now(), "end");
  }

  // --- requests: one in flight per kind, only the newest waiting, stale answers dropped --------
  const lanes = {quick: {busy: false, next: null}, draft: {busy: false, next: null}};

  function requestSection(withDraft, tEvent, why) {
    const item = {seq: ++state.seq, line: state.line.map((p) => p.slice()), section: state.sectionName,
      t: tEvent, why: why || (withDraft ? "click" : "step")};
    const draft = withDraft && $("show-draft").checked;
    if (draft) { state.draftStale = true; markChecksPending(); }
    else if (withDraft) { state.lastDraft = null; drawChecks(null, "draft and checks are switched off (tick 'draft and checks')"); }
    const lane = draft ? lanes.draft : lanes.quick;
    if (lane.busy) { lane.next = item; return; }
    send(lane, item, draft);
  }

  async function send(lane, item, draft) {
    lane.busy = true;
    try {
      const res = await api("/api/section", {line: item.line, section: item.section, draft: draft});
      if (item.seq < state.shownSeq) return; // a newer line is already drawn
      state.shownSeq = item.seq;
      state.lastQuick = res;
      if (draft) { state.lastDraft = res; state.shownDraftSeq = item.seq; state.draftStale = false; }
      else if (state.lastDraft) state.draftStale = true;
      drawSection();
      if (draft) drawChecks(res);
      else if (state.lastDraft && state.draftStale) markChecksPending();
      const dt = await afterPaint(item.t);
      if (draft && (item.why === "end" || item.why === "pause")) timings.drag_end.push(dt);
      if (!draft && item.why === "step") timings.drag_step.push(dt);
      if (!state.drag) showMessage(res.warnings && res.warnings.length ? "Note: " + res.warnings.join("; ") : "", "info");
    } catch (e) {
      timings.errors += 1;
      showMessage(e.message);
      // The last good section stays, dimmed, with the reason above the checks.
      if (item.seq >= state.shownSeq) {
        state.shownSeq = item.seq; $("section").classList.add("failed");
        $("section-info").textContent = "the last line that gave a section, dimmed";
      }
      if (draft) drawChecks(null, "no section for this line (see the message above)");
    } finally {
      lane.busy = false;
      if (lane.next) { const n = lane.next; lane.next = null; send(lane, n, draft); }
    }
  }

  function afterPaint(t0) {
    return new Promise((resolve) => requestAnimationFrame(() => resolve(performance.now() - t0)));
  }

  // --- the section pane ----------------------------------------------------------------------
  function el(name, attrs, parent) {
    const e = document.createElementNS(SVGNS, name);
    for (const k in attrs) e.setAttribute(k, attrs[k]);
    if (parent) parent.appendChild(e);
    return e;
  }

  function drawSection(error) {
    const svg = $("section"), wrap = $("section-wrap");
    svg.classList.remove("failed");
    const W = Math.max(wrap.clientWidth, 200);
    // The pane takes the height the section needs, up to what the side column leaves free.
    const side = $("side");
    let others = 0;
    for (const c of side.children) if (c !== wrap && !c.hidden) others += c.offsetHeight + 8;
    const Hmax = Math.max(side.clientHeight - others - 4, 180);
    while (svg.firstChild) svg.removeChild(svg.firstChild);
    const res = state.lastQuick;
    if (!res) {
      svg.setAttribute("viewBox", "0 0 " + W + " 120"); svg.style.height = "120px";
      const t = el("text", {x: 20, y: 30}, svg); t.textContent = error ? "No section: " + error : "Draw or choose a section line.";
      return;
    }
    const prof = res.profile, dips = res.dips, geo = res.geology;
    const length = res.line.length_m;
    const z = prof.elevation_m.filter((v) => v !== null);
    let zmax = z.length ? Math.max(...z) : 1000, zmin = z.length ? Math.min(...z) : 0;
    const dr = state.lastDraft && !error ? state.lastDraft : null;
    const sameLine = dr && dr.line.length_m === res.line.length_m && JSON.stringify(dr.line.vertices) === JSON.stringify(res.line.vertices);
    if (dr && dr.base_elevation_m !== null) zmin = Math.min(zmin, dr.base_elevation_m);
    else zmin = zmin - Math.max(0.15 * length, 500);
    zmax += Math.max(0.03 * length, 100);
    const ml = 52, mr = 14, mt = 16, mb = 30;
    const ve = state.ve;
    const Hneed = (zmax - zmin) * ve * (W - ml - mr) / length + mt + mb;
    const H = Math.max(Math.min(Hneed, Hmax), 160);
    svg.setAttribute("viewBox", "0 0 " + W + " " + H); svg.style.height = H + "px";
    const s = Math.min((W - ml - mr) / length, (H - mt - mb) / ((zmax - zmin) * ve));
    const sx = s, sy = s * ve;
    const X = (d) => ml + d * sx, Y = (e) => mt + (zmax - e) * sy;
    const clip = el("clipPath", {id: "sec-clip"}, el("defs", {}, svg));
    el("rect", {x: ml, y: mt, width: length * sx, height: (zmax - zmin) * sy}, clip);
    const body = el("g", {"clip-path": "url(#sec-clip)"}, svg);
    // Draft to depth (dimmed while the line has moved since it was drawn).
    if (dr) {
      const g = el("g", {class: "draft" + (state.draftStale || !sameLine ? " stale" : ""), "data-seq": state.shownDraftSeq}, body);
      for (const u of dr.units) for (const poly of u.polygons) {
        let d = "";
        for (const ring of poly) d += "M" + ring.map((p) => X(p[0]).toFixed(1) + "," + Y(p[1]).toFixed(1)).join("L") + "Z";
        el("path", {d: d, fill: u.colour || "#ddd", "fill-rule": "evenodd", stroke: "none", "fill-opacity": 0.85, class: "unit"}, g);
      }
      for (const h of dr.horizons) for (const part of h.parts) {
        el("polyline", {points: part.map((p) => X(p[0]).toFixed(1) + "," + Y(p[1]).toFixed(1)).join(" "),
          class: "horizon" + (h.above_ground ? " above" : "")}, g);
      }
      for (const f of dr.faults) for (const part of f.parts) {
        el("polyline", {points: part.map((p) => X(p[0]).toFixed(1) + "," + Y(p[1]).toFixed(1)).join(" "), class: "fault"}, g);
      }
    }
    // Surface geology: a coloured strip along the ground, contacts and mapped faults.
    const gq = el("g", {class: "surface"}, body);
    const elevAt = (d) => {
      const ds = prof.distance_m; let i = 0, j = ds.length - 1;
      if (d <= ds[0]) return prof.elevation_m[0];
      if (d >= ds[j]) return prof.elevation_m[j];
      while (j - i > 1) { const k = (i + j) >> 1; if (ds[k] <= d) i = k; else j = k; }
      const a = prof.elevation_m[i], b = prof.elevation_m[j];
      if (a === null || b === null) return null;
      return a + (b - a) * (d - ds[i]) / (ds[j] - ds[i]);
    };
    for (const iv of geo.intervals) {
      const pts = [];
      const ds = prof.distance_m;
      pts.push([iv.start_m, elevAt(iv.start_m)]);
      for (let i = 0; i < ds.length; i++) if (ds[i] > iv.start_m && ds[i] < iv.end_m) pts.push([ds[i], prof.elevation_m[i]]);
      pts.push([iv.end_m, elevAt(iv.end_m)]);
      const ok = pts.filter((p) => p[1] !== null);
      if (ok.length < 2) continue;
      el("polyline", {points: ok.map((p) => X(p[0]).toFixed(1) + "," + (Y(p[1]) - 4).toFixed(1)).join(" "),
        class: "geostrip", stroke: iv.colour || "#ccc"}, gq).appendChild(titleOf(iv.unit));
    }
    for (const c of geo.contacts) if (c.elevation_m !== null)
      el("line", {x1: X(c.distance_m), x2: X(c.distance_m), y1: Y(c.elevation_m) - 9, y2: Y(c.elevation_m) + 1, class: "contact"}, gq);
    for (const f of geo.faults) if (f.elevation_m !== null)
      el("line", {x1: X(f.distance_m), x2: X(f.distance_m), y1: Y(f.elevation_m) - 10, y2: Y(f.elevation_m) + 3, class: "mapfault"}, gq);
    // Ground profile, drawn in pieces across DEM gaps.
    let d = "", pen = false;
    for (let i = 0; i < prof.distance_m.length; i++) {
      const e = prof.elevation_m[i];
      if (e === null) { pen = false; continue; }
      d += (pen ? "L" : "M") + X(prof.distance_m[i]).toFixed(1) + "," + Y(e).toFixed(1); pen = true;
    }
    el("path", {d: d, class: "ground"}, body);
    // Apparent dips: ticks at the measured dip, steepened by the vertical exaggeration.
    const gd = el("g", {class: "dips"}, body);
    let lastLabel = -1e9;
    // Many dips (a large attitude set): one path for all ticks, no tooltips, for speed.
    const many = dips.distance_m.length > 300;
    let manyD = "";
    const seen = new Set();
    for (let i = 0; i < dips.distance_m.length; i++) {
      const dd = dips.distance_m[i], ee = dips.elevation_m[i], a = dips.apparent_dip[i];
      if (dd === null || ee === null || a === null) continue;
      const r = Math.atan(ve * Math.tan(a * Math.PI / 180)), hl = 9;
      const cx = X(dd), cy = Y(ee), ux = Math.cos(r) * hl, uy = Math.sin(r) * hl;
      if (many) {
        const key = Math.round(cx / 3) + "," + Math.round(cy / 3);
        if (seen.has(key)) continue;
        seen.add(key);
        manyD += "M" + (cx - ux).toFixed(1) + "," + (cy - uy).toFixed(1) + "L" + (cx + ux).toFixed(1) + "," + (cy + uy).toFixed(1); continue; }
      const t = el("line", {x1: cx - ux, y1: cy - uy, x2: cx + ux, y2: cy + uy, class: "dip" + (dips.poorly_constrained[i] ? " poor" : "")}, gd);
      t.appendChild(titleOf("attitude " + dips.id[i] + ": apparent dip " + Math.abs(a).toFixed(0) + "°"));
      if (cx - lastLabel >= 16) { lastLabel = cx; const tx = el("text", {x: cx, y: cy - 8, class: "diplabel", "text-anchor": "middle"}, gd); tx.textContent = Math.abs(a).toFixed(0); }
    }
    if (many) el("path", {d: manyD, class: "dip many"}, gd);
    drawAxes(svg, {length, zmin, zmax, X, Y, ml, mt, sx, sy});
    const info = length.toFixed(0) + " m long, VE " + ve + "×, " + dips.distance_m.length + " dips in the corridor, " +
      geo.intervals.length + " unit stretches" + (res.timing_ms ? " · server " + res.timing_ms.section + " ms" : "");
    $("section-info").textContent = info;
    $("section-title").textContent = "Section " + res.section + (isSaved() ? "" : " (moved, not saved)");
    svg.setAttribute("data-seq", String(state.shownSeq));
    svg.setAttribute("data-dips", String(dips.distance_m.length));
    svg.setAttribute("data-length", String(length));
    if (error) { const t = el("text", {x: ml + 6, y: mt + 14, fill: "#8a1c10"}, svg); t.textContent = "Last request failed: " + error; }
  }

  function titleOf(text) { const t = document.createElementNS(SVGNS, "title"); t.textContent = text; return t; }

  function niceStep(range, n) {
    const raw = range / n, p = Math.pow(10, Math.floor(Math.log10(raw))), f = raw / p;
    return (f < 1.5 ? 1 : f < 3.5 ? 2 : f < 7.5 ? 5 : 10) * p;
  }

  function drawAxes(svg, a) {
    const g = el("g", {class: "axis"}, svg);
    const x0 = a.X(0), x1 = a.X(a.length), y0 = a.Y(a.zmin), y1 = a.Y(a.zmax);
    el("rect", {x: x0, y: y1, width: x1 - x0, height: y0 - y1, fill: "none", stroke: "#999"}, g);
    const sd = niceStep(a.length, 8);
    for (let d = 0; d <= a.length + 1e-6; d += sd) {
      el("line", {x1: a.X(d), x2: a.X(d), y1: y0, y2: y0 + 4}, g);
      const t = el("text", {x: a.X(d), y: y0 + 14, "text-anchor": "middle"}, g);
      t.textContent = sd >= 1000 ? (d / 1000) + " km" : d.toFixed(0) + " m";
    }
    const se = niceStep(a.zmax - a.zmin, 6);
    for (let e = Math.ceil(a.zmin / se) * se; e <= a.zmax; e += se) {
      el("line", {x1: x0 - 4, x2: x0, y1: a.Y(e), y2: a.Y(e)}, g);
      const t = el("text", {x: x0 - 6, y: a.Y(e) + 3, "text-anchor": "end"}, g);
      t.textContent = e.toFixed(0);
    }
    const t = el("text", {x: 4, y: y1 - 5}, g); t.textContent = "elevation (m)";
    const u = el("text", {x: x1, y: y1 - 5, "text-anchor": "end"}, g); u.textContent = "VE " + state.ve + "×";
  }

  function isSaved() {
    const s = spec();
    return s && JSON.stringify(s.line.map((p) => p.map((v) => Math.round(v * 100) / 100))) ===
      JSON.stringify(state.line.map((p) => p.map((v) => Math.round(v * 100) / 100)));
  }

  // --- the checks ----------------------------------------------------------------------------
  function markChecksPending() {
    for (const row of document.querySelectorAll("#checks tbody tr")) {
      const v = row.querySelector(".verdict");
      // The line has moved: the old verdict no longer applies to it.
      if (v && !v.classList.contains("pending")) {
        v.classList.add("pending"); v.removeAttribute("data-status"); v.textContent = "checking…";
      }
    }
  }

  function drawChecks(res, error) {
    const tb = document.querySelector("#checks tbody");
    tb.innerHTML = "";
    const checks = res && res.checks;
    for (const t of TESTS) {
      const tr = document.createElement("tr");
      tr.setAttribute("data-test", t);
      let status = "not_tested", figs = "", reasons = [];
      if (checks && checks[t]) {
        status = checks[t].status; reasons = checks[t].reasons || [];
        figs = Object.entries(checks[t].figures || {}).filter((kv) => kv[1] !== null && kv[1] !== undefined)
          .map((kv) => figure(kv[0], kv[1])).join(", ");
      } else reasons = [error || "no draft"];
      const label = {pass: "pass", fail: "FAIL", not_tested: "not tested"}[status] || status;
      tr.innerHTML = "<td>" + TEST_NAMES[t] + "</td><td><span class=\"verdict " + status + "\" data-status=\"" + status + "\">" + label +
        "</span></td><td>" + esc(figs) + (reasons.length && status !== "pass" ? "<div class=\"reasons\">" + reasons.map(esc).join("<br>") + "</div>" : "") + "</td>";
      tb.appendChild(tr);
    }
    if (res && res.draft_error) showMessage("No draft for this line: " + res.draft_error);
    document.querySelector("#checks").setAttribute("data-seq", String(state.shownDraftSeq));
  }

  const FIGURES = {contact_rms_m: ["contact RMS", " m"], contact_threshold_m: ["threshold", " m"],
    unit_agreement: ["unit agreement", ""], dip_rms_deg: ["dip RMS", "°"], shortening_pct: ["shortening", " %"],
    shortening_m: ["shortening", " m"], line_length_mismatch_pct: ["line-length spread", " %"],
    worst_unit: ["worst unit", ""], worst_mismatch_pct: ["its area mismatch", " %"],
    depth_to_detachment_m: ["depth to detachment", " m"], inconsistencies: ["inconsistencies", ""],
    transport: ["transport", ""], fault_bend_folds: ["fault-bend folds compared", ""],
    worst_cutoff_mismatch_m: ["worst cutoff mismatch", " m"],
    fault_bend_fold_comparison: ["fault-bend fold comparison", ""]};
  function figure(key, v) {
    const f = FIGURES[key] || [key.replace(/_/g, " "), ""];
    return f[0] + " " + (typeof v === "number" ? String(+v.toFixed(2)) : v) + f[1];
  }

  // --- save and build ------------------------------------------------------------------------
  async function save() {
    const name = $("save-name").value.trim();
    if (!name) { showMessage("Type a name for the section to save."); return; }
    busy(true, "saving…");
    try {
      const res = await api("/api/save", {section: name, line: state.line, base: state.sectionName});
      state.project.sections = res.sections;
      fillSections();
      state.sectionName = name; $("section-select").value = name;
      drawOthers(); drawLine(); drawSection();
      showMessage("Saved section " + name + " in " + res.saved + " (the previous file is kept as " + res.backup + ").", "info");
    } catch (e) { showMessage("Not saved: " + e.message); }
    finally { busy(false); }
  }

  async function build() {
    if (!isSaved()) { showMessage("The line has moved since it was saved: save it first, then build (a build reads the project file)."); return; }
    busy(true, "building section " + state.sectionName + "…");
    try {
      const res = await api("/api/build", {section: state.sectionName, output: $("build-out").value});
      const m = $("message"); m.hidden = false; m.className = "message info";
      m.innerHTML = "Built section " + esc(res.section) + " into " + esc(res.folder) + " in " + res.seconds + " s: " + esc(res.summary) +
        ". <a target=\"_blank\" href=\"" + esc(withToken(res.report)) + "\">Open its report</a>";
    } catch (e) { showMessage("Build failed: " + e.message); }
    finally { busy(false); }
  }

  function fillSections() {
    const sel = $("section-select");
    sel.innerHTML = "";
    for (const s of state.project.sections) {
      const o = document.createElement("option"); o.value = s.name; o.textContent = s.name; sel.appendChild(o);
    }
  }

  function legend(info) {
    $("legend").innerHTML = info.column.map((u) => "<div><i style=\"background:" + esc(u.colour || "#ccc") + "\"></i>" + esc(u.unit) + "</div>").join("");
  }

  // --- start ---------------------------------------------------------------------------------
  async function start() {
    if (!TOKEN) { showMessage("This address has no token: open the address that 'mapsection view' printed."); return; }
    let info;
    try { info = await api("/api/project"); }
    catch (e) { showMessage("Cannot load the project: " + e.message); return; }
    state.project = info; state.grids = info.grids;
    $("project-title").textContent = info.title + " (" + info.file + ")";
    $("crs").textContent = info.crs.code ? info.crs.code + " " + info.crs.name : info.crs.name;
    $("caution").textContent = "Caution: " + info.caution;
    legend(info); fillSections(); setupMap(info);
    try { await loadMapLayers(); } catch (e) { showMessage("Map layers: " + e.message); }
    $("section-select").addEventListener("change", (ev) => selectSection(ev.target.value));
    $("btn-draw").addEventListener("click", () => (state.drawing ? cancelDrawing() : startDrawing()));
    $("btn-finish").addEventListener("click", finishDrawing);
    $("btn-reset").addEventListener("click", () => selectSection(state.sectionName));
    $("btn-save").addEventListener("click", save);
    $("btn-build").addEventListener("click", build);
    $("ve").addEventListener("input", (ev) => { const v = parseFloat(ev.target.value); if (v > 0) { state.ve = v; drawSection(); } });
    $("show-draft").addEventListener("change", () => requestSection(true, performance.now()));
    window.addEventListener("resize", () => drawSection());
    drawChecks(null, "waiting for the draft");
    selectSection(info.default_section);
    // For scripted use (tests): set the line in project coordinates, as if drawn.
    window.__mapsectionSetLine = (pts) => { state.line = pts.map((p) => p.slice()); drawLine(); requestSection(true, performance.now()); };
    document.body.setAttribute("data-ready", "1");
  }

  start();
})();
