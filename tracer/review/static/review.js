// tracer review: the page. Plain JavaScript, no build step. The page keeps each photo's state
// (settings and hints, as the sidecar holds them) with its undo history, sends the whole state on
// every change, and draws what the server measured. Coordinates are image pixels (x right,
// y down) throughout: the SVG's viewBox is the part of the photo in view.
"use strict";

const TOKEN = new URLSearchParams(location.search).get("token") || "";
const SVGNS = "http://www.w3.org/2000/svg";
const MAIN_KEYS = ["A", "I1", "I2"];
const NAMES = {A: "area", I1: "major principal", I2: "minor principal", Ix: "about x", Iy: "about y",
               cx: "centroid x", cy: "centroid y", theta: "major axis angle"};
const FULL_AFTER_MS = 600;   // the full uncertainty once edits stop this long

const $ = (id) => document.getElementById(id);
const svg = $("canvas");
const overlay = $("overlay");

let photos = [];            // [{index, name, file, note}]
let current = null;         // the photo on the page: {index, info, state, history, future, result}
const kept = {};            // index -> photo record, so that switching keeps edits and history
let mode = "pan";
let view = {x: 0, y: 0, w: 1, h: 1};
let seq = 0, inflight = false, pending = null, fullTimer = null;
let draft = null;           // a boundary being dragged, before it is committed
let scalePts = [];          // the two scale points being placed
let poly = [];              // an outline or hole being drawn, point by point

// -- server ------------------------------------------------------------------------------------
function url(path, params = {}) {
  const q = new URLSearchParams({...params, token: TOKEN});
  return `${path}?${q}`;
}
async function api(path, body) {
  const opts = {headers: {"X-Tracer-Token": TOKEN}};
  if (body !== undefined) {
    opts.method = "POST";
    opts.headers["Content-Type"] = "application/json";
    opts.body = JSON.stringify(body);
  }
  const r = await fetch(path, opts);
  let doc = null;
  try { doc = await r.json(); } catch (e) { doc = {ok: false, error: `answer ${r.status} was not JSON`}; }
  doc.status = r.status;
  return doc;
}
function setStatus(text, cls) { const s = $("status"); s.textContent = text; s.className = cls || ""; }

// -- photos --------------------------------------------------------------------------------------
async function start() {
  photos = await api("api/photos");
  if (!Array.isArray(photos)) { setStatus(photos.error || "cannot list the photos", "error"); return; }
  const sel = $("photos");
  photos.forEach((p) => {
    const o = document.createElement("option");
    o.value = p.index; o.textContent = `${p.index + 1}/${photos.length} ${p.name}`;
    sel.appendChild(o);
  });
  $("nav").hidden = photos.length < 2;
  await openPhoto(0);
}

async function openPhoto(i) {
  if (!kept[i]) {
    const info = await api(`api/photos/${i}`);
    if (info.ok === false) { setStatus(info.error, "error"); return; }
    kept[i] = {index: i, info, state: info.state, history: [], future: [], result: null};
  }
  current = kept[i];
  $("photos").value = i;
  const info = current.info;
  const notes = [];
  if (info.note) notes.push(info.note);
  if (info.sidecar_error) notes.push(`${info.sidecar_error}. The page starts without the sidecar's settings; Save rewrites it.`);
  if (info.photo_error) notes.push(info.photo_error);
  $("banner").textContent = notes.join(" — ");
  $("banner").hidden = notes.length === 0;
  if (!info.image) { setStatus("this photo cannot be read", "error"); return; }
  const [W, H] = info.image;
  for (const id of ["base", "crop"]) {
    const im = $(id);
    im.setAttribute("x", -0.5); im.setAttribute("y", -0.5);
    im.setAttribute("width", W); im.setAttribute("height", H);
  }
  $("base").setAttribute("href", url(`api/photos/${i}/view.jpg`));
  $("crop").setAttribute("href", "");
  fitView();
  scalePts = pointsOfScale(current.state.scale);
  showSettings();
  remeasure();
}

// -- view: zoom and pan ---------------------------------------------------------------------------
function fitView() {
  const [W, H] = current.info.image;
  const r = svg.getBoundingClientRect();
  const s = Math.max(W / r.width, H / r.height);
  view = {w: r.width * s, h: r.height * s, x: 0, y: 0};
  view.x = (W - view.w) / 2; view.y = (H - view.h) / 2;
  applyView();
}
function applyView() {
  svg.setAttribute("viewBox", `${view.x} ${view.y} ${view.w} ${view.h}`);
  draw();
  scheduleCrop();
}
function pxPerScreen() { return view.w / svg.getBoundingClientRect().width; }
function toImage(ev) {
  const p = svg.createSVGPoint();
  p.x = ev.clientX; p.y = ev.clientY;
  const q = p.matrixTransform(svg.getScreenCTM().inverse());
  return [q.x, q.y];
}
function toScreen(x, y) {   // for tests and for positioning: image px -> client px
  const p = svg.createSVGPoint();
  p.x = x; p.y = y;
  const q = p.matrixTransform(svg.getScreenCTM());
  return [q.x, q.y];
}
let cropTimer = null;
function scheduleCrop() {
  clearTimeout(cropTimer);
  cropTimer = setTimeout(loadCrop, 250);
}
function loadCrop() {
  if (!current || !current.info.image) return;
  const [W, H] = current.info.image;
  const r = svg.getBoundingClientRect();
  const viewSide = 1600 / Math.max(W, H);           // the reduced view's scale
  const screen = r.width / view.w;                   // screen px per image px
  const crop = $("crop");
  if (screen <= viewSide * 1.1) { crop.setAttribute("href", ""); return; }
  const x0 = Math.max(0, view.x), y0 = Math.max(0, view.y);
  const x1 = Math.min(W, view.x + view.w), y1 = Math.min(H, view.y + view.h);
  if (x1 - x0 < 2 || y1 - y0 < 2) return;
  const side = Math.round(Math.max(r.width, r.height) * (window.devicePixelRatio || 1));
  const im = new Image();
  const src = url(`api/photos/${current.index}/crop.jpg`, {x0: Math.floor(x0), y0: Math.floor(y0),
                                                         x1: Math.ceil(x1), y1: Math.ceil(y1), side});
  im.onload = () => {
    crop.setAttribute("x", Math.floor(x0) - 0.5); crop.setAttribute("y", Math.floor(y0) - 0.5);
    crop.setAttribute("width", Math.ceil(x1) - Math.floor(x0)); crop.setAttribute("height", Math.ceil(y1) - Math.floor(y0));
    crop.setAttribute("href", src);
  };
  im.src = src;
}
svg.addEventListener("wheel", (ev) => {
  ev.preventDefault();
  const [x, y] = toImage(ev);
  const f = Math.exp(ev.deltaY * 0.0015);
  const w = Math.min(Math.max(view.w * f, 20), 40000);
  const k = w / view.w;
  view = {x: x - (x - view.x) * k, y: y - (y - view.y) * k, w, h: view.h * k};
  applyView();
}, {passive: false});

// -- drawing ------------------------------------------------------------------------------------
function el(name, attrs, parent = overlay) {
  const e = document.createElementNS(SVGNS, name);
  for (const [k, v] of Object.entries(attrs)) e.setAttribute(k, v);
  parent.appendChild(e);
  return e;
}
function path(rings) {
  return rings.map((r) => "M" + r.map((p) => `${p[0]},${p[1]}`).join("L") + "Z").join("");
}
function draw() {
  overlay.textContent = "";
  if (!current) return;
  const s = pxPerScreen();
  const st = current.state, res = current.result;
  if (res && res.ok) {
    if (!(mode === "edit" && (draft || st.trace))) {
      el("path", {d: path(res.rings), fill: "rgba(40,160,220,0.18)", stroke: "#16c0ff", "stroke-width": 1.6,
                  "vector-effect": "non-scaling-stroke", "fill-rule": "evenodd", id: "trace"});
    }
    for (const w of res.weak || []) el("polyline", {points: w.map((p) => p.join(",")).join(" "), fill: "none",
                                                    stroke: "#ff2d55", "stroke-width": 3, "stroke-dasharray": "5 3",
                                                    "vector-effect": "non-scaling-stroke", class: "weak"});
    for (const m of res.scale.marks) drawCross(m[0], m[1], 4 * s, "#ffd400");
    const rec = res.scale.record || {};
    const axes = rec.axis_px ? [rec.axis_px] : (rec.rulers || []).map((r) => r.axis_px).filter(Boolean);
    for (const a of axes) el("polyline", {points: a.map((p) => p.join(",")).join(" "), stroke: "#ffd400",
                                          "stroke-width": 2, fill: "none", "vector-effect": "non-scaling-stroke"});
  }
  const cands = (res && res.candidates) || [];
  cands.forEach((c, k) => {
    const [cx, cy] = c.centre, [w, h] = c.size;
    el("rect", {x: cx - w / 2, y: cy - h / 2, width: w, height: h, fill: "none", stroke: "#ff9f1c",
                "stroke-dasharray": "6 4", "stroke-width": 1.5, "vector-effect": "non-scaling-stroke"});
    const t = el("text", {x: cx - w / 2, y: cy - h / 2 - 4 * s, fill: "#ff9f1c", "font-size": 14 * s});
    t.textContent = `candidate ${k + 1}`;
  });
  if (st.box) {
    const [x0, y0, x1, y1] = st.box;
    el("rect", {x: x0, y: y0, width: x1 - x0, height: y1 - y0, fill: "none", stroke: "#ffffff",
                "stroke-dasharray": "8 4", "stroke-width": 1.5, "vector-effect": "non-scaling-stroke"});
  }
  for (const p of st.seed || []) el("circle", {cx: p[0], cy: p[1], r: 6 * s, fill: "#2ecc40", stroke: "#fff",
                                               "stroke-width": 1.5, "vector-effect": "non-scaling-stroke", class: "seed"});
  for (const p of st.outside || []) el("circle", {cx: p[0], cy: p[1], r: 6 * s, fill: "#ff4136", stroke: "#fff",
                                                  "stroke-width": 1.5, "vector-effect": "non-scaling-stroke", class: "outside"});
  if (scalePts.length) {
    if (scalePts.length === 2) el("line", {x1: scalePts[0][0], y1: scalePts[0][1], x2: scalePts[1][0], y2: scalePts[1][1],
                                           stroke: "#ff00e6", "stroke-width": 1.5, "vector-effect": "non-scaling-stroke"});
    scalePts.forEach((p, k) => el("circle", {cx: p[0], cy: p[1], r: 5 * s, fill: "none", stroke: "#ff00e6",
                                             "stroke-width": 2, "vector-effect": "non-scaling-stroke",
                                             class: "scalept", "data-k": k}));
  }
  const edited = draft || st.trace;
  if (edited) {
    el("path", {d: path([edited.points, ...(edited.holes || [])]), fill: "rgba(255,220,0,0.15)", stroke: "#ffdc00",
                "stroke-width": 1.6, "vector-effect": "non-scaling-stroke", "fill-rule": "evenodd", id: "edited"});
  }
  if (poly.length) {
    el("polyline", {points: poly.map((p) => p.join(",")).join(" "), fill: "none", stroke: "#ffdc00",
                    "stroke-width": 1.6, "stroke-dasharray": "4 3", "vector-effect": "non-scaling-stroke"});
    poly.forEach((p) => el("circle", {cx: p[0], cy: p[1], r: 3 * s, fill: "#ffdc00", stroke: "#333",
                                      "stroke-width": 1, "vector-effect": "non-scaling-stroke"}));
  }
  if (mode === "edit") {
    const rings = editRings();
    rings.forEach((ring, ri) => ring.forEach((p, vi) => el("circle", {
      cx: p[0], cy: p[1], r: 4 * s, fill: "#ffdc00", stroke: "#333", "stroke-width": 1,
      "vector-effect": "non-scaling-stroke", class: "vertex", "data-ring": ri, "data-v": vi})));
  }
}
function drawCross(x, y, r, colour) {
  el("path", {d: `M${x - r},${y}L${x + r},${y}M${x},${y - r}L${x},${y + r}`, stroke: colour, "stroke-width": 1.5,
              "vector-effect": "non-scaling-stroke"});
}

// -- the boundary by hand ------------------------------------------------------------------------
function editRings() {
  const t = draft || current.state.trace || (current.result && current.result.ok && current.result.editable);
  if (!t || !t.points || !t.points.length) return [];
  return [t.points, ...(t.holes || [])];
}
function editableCopy() {
  const rings = editRings();
  return {points: rings[0].map((p) => p.slice()), holes: rings.slice(1).map((r) => r.map((p) => p.slice()))};
}
function nearestVertex(x, y) {   // the vertex under the pointer (within 8 screen px), the nearest
  let best = null, dmin = 8 * pxPerScreen();
  editRings().forEach((ring, ri) => ring.forEach((p, vi) => {
    const d = Math.hypot(p[0] - x, p[1] - y);
    if (d < dmin) { dmin = d; best = [ri, vi]; }
  }));
  return best;
}
function withTrace(t) {     // a hand boundary carries how finely it was placed: a screen pixel at this zoom
  const placed = Math.max(0.5, Math.round(pxPerScreen() * 100) / 100);
  const before = (current.state.trace && current.state.trace.allowance_px) || 0;
  return {trace: {points: t.points, holes: t.holes || [], snap: $("snap").checked,
                  allowance_px: Math.max(placed, before)}};
}
function closePoly() {
  if (poly.length < 3) { setStatus("an outline needs at least three points"); return; }
  const ring = poly.map((p) => [Math.round(p[0] * 10) / 10, Math.round(p[1] * 10) / 10]);
  poly = [];
  if (mode === "hole") {
    const base = editRings().length ? editableCopy() : null;
    if (!base) { setStatus("draw or keep an outline first; a hole goes inside it"); return; }
    base.holes.push(ring);
    commit(withTrace(base));
  } else {
    commit(withTrace({points: ring, holes: []}));
  }
}
function nearestScalePoint(x, y) {
  let best = null, dmin = 8 * pxPerScreen();
  scalePts.forEach((p, k) => { const d = Math.hypot(p[0] - x, p[1] - y); if (d < dmin) { dmin = d; best = k; } });
  return best;
}
function solve(M, b) {     // Gaussian elimination with partial pivoting; null if singular
  const n = b.length, A = M.map((row, i) => [...row, b[i]]);
  for (let c = 0; c < n; c++) {
    let p = c;
    for (let r = c + 1; r < n; r++) if (Math.abs(A[r][c]) > Math.abs(A[p][c])) p = r;
    if (Math.abs(A[p][c]) < 1e-12) return null;
    [A[c], A[p]] = [A[p], A[c]];
    for (let r = c + 1; r < n; r++) {
      const f = A[r][c] / A[c][c];
      for (let k = c; k <= n; k++) A[r][k] -= f * A[c][k];
    }
  }
  const x = new Array(n).fill(0);
  for (let r = n - 1; r >= 0; r--) {
    let t = A[r][n];
    for (let k = r + 1; k < n; k++) t -= A[r][k] * x[k];
    x[r] = t / A[r][r];
  }
  return x;
}
function ellipseThrough(pts) {   // the ellipse through five rim points (a round rim seen at a slant), as a ring
  const mx = pts.reduce((a, p) => a + p[0], 0) / pts.length, my = pts.reduce((a, p) => a + p[1], 0) / pts.length;
  const sc = Math.sqrt(pts.reduce((a, p) => a + (p[0] - mx) ** 2 + (p[1] - my) ** 2, 0) / pts.length) || 1;
  const q = pts.map((p) => [(p[0] - mx) / sc, (p[1] - my) / sc]);
  // A u^2 + B uv + C v^2 + D u + E v = 1 through the five points
  const co = solve(q.map(([u, v]) => [u * u, u * v, v * v, u, v]), [1, 1, 1, 1, 1]);
  if (!co) return null;
  const [A, B, C, D, E] = co, F = -1;
  const det = 4 * A * C - B * B;
  if (det <= 0) return null;                       // not an ellipse
  const u0 = (B * E - 2 * C * D) / det, v0 = (B * D - 2 * A * E) / det;
  const F0 = F + (D * u0 + E * v0) / 2;
  const tr = (A + C) / 2, dif = Math.hypot((A - C) / 2, B / 2);
  const l1 = tr + dif, l2 = tr - dif;              // eigenvalues of [[A, B/2], [B/2, C]]
  if (-F0 / l1 <= 0 || -F0 / l2 <= 0) return null;
  const a1 = Math.sqrt(-F0 / l1), a2 = Math.sqrt(-F0 / l2);
  const phi = 0.5 * Math.atan2(B, A - C);          // the eigenvector of l1
  const e1 = [Math.cos(phi), Math.sin(phi)], e2 = [-Math.sin(phi), Math.cos(phi)];
  const big = Math.max(a1, a2) * sc;
  const n = Math.max(24, Math.ceil(Math.PI / Math.acos(1 - 0.05 / Math.max(big, 1))));
  const ring = [];
  for (let k = 0; k < n; k++) {
    const t = (2 * Math.PI * k) / n;
    const u = u0 + a1 * Math.cos(t) * e1[0] + a2 * Math.sin(t) * e2[0];
    const v = v0 + a1 * Math.cos(t) * e1[1] + a2 * Math.sin(t) * e2[1];
    ring.push([Math.round((mx + sc * u) * 100) / 100, Math.round((my + sc * v) * 100) / 100]);
  }
  return {ring, centre: [mx + sc * u0, my + sc * v0]};
}
function insideRing(ring, x, y) {
  let inside = false;
  for (let i = 0, j = ring.length - 1; i < ring.length; j = i++) {
    const [xi, yi] = ring[i], [xj, yj] = ring[j];
    if ((yi > y) !== (yj > y) && x < ((xj - xi) * (y - yi)) / (yj - yi) + xi) inside = !inside;
  }
  return inside;
}
function closeRim() {
  const e = ellipseThrough(poly);
  poly = [];
  if (!e) { setStatus("no ellipse passes through those points: click five points spread round the rim"); draw(); return; }
  const {ring, centre: [cx, cy]} = e;
  const t = current.state.trace;
  if (t && insideRing(t.points, cx, cy)) {
    commit(withTrace({points: t.points, holes: [...(t.holes || []), ring.reverse()]}));
  } else {
    commit(withTrace({points: ring, holes: []}));
  }
}
const PULL_SCREEN_PX = 60;
function pullWeights(ring, vi, reach) {   // 1 at vertex vi, falling smoothly to 0 at `reach` along the ring
  const n = ring.length, w = new Array(n).fill(0);
  w[vi] = 1;
  for (const dir of [1, -1]) {
    let arc = 0;
    for (let k = 1; k < n / 2; k++) {
      const a = ring[(vi + dir * (k - 1) + n) % n], b = ring[(vi + dir * k + n) % n];
      arc += Math.hypot(b[0] - a[0], b[1] - a[1]);
      if (arc >= reach) break;
      const t = arc / reach;
      w[(vi + dir * k + n) % n] = 0.5 * (1 + Math.cos(Math.PI * t));
    }
  }
  return w;
}
function ringOf(t, ri) { return ri === 0 ? t.points : t.holes[ri - 1]; }
function nearestSegment(t, x, y) {
  let best = null;
  [t.points, ...(t.holes || [])].forEach((ring, ri) => {
    for (let i = 0; i < ring.length; i++) {
      const a = ring[i], b = ring[(i + 1) % ring.length];
      const dx = b[0] - a[0], dy = b[1] - a[1];
      const L = dx * dx + dy * dy || 1;
      const u = Math.max(0, Math.min(1, ((x - a[0]) * dx + (y - a[1]) * dy) / L));
      const px = a[0] + u * dx, py = a[1] + u * dy;
      const d = Math.hypot(x - px, y - py);
      if (!best || d < best.d) best = {d, ri, i, p: [px, py]};
    }
  });
  return best;
}

// -- state and history ---------------------------------------------------------------------------
function clone(x) { return JSON.parse(JSON.stringify(x)); }
function commit(change) {
  current.history.push(clone(current.state));
  current.future = [];
  current.state = {...clone(current.state), ...change};
  showSettings();
  remeasure();
}
function step(from, to) {   // undo: from history to future; redo: the other way
  if (!from.length) return;
  to.push(clone(current.state));
  current.state = from.pop();
  scalePts = pointsOfScale(current.state.scale);
  draft = null;
  showSettings();
  remeasure();
}
function undo() { step(current.history, current.future); }
function redo() { step(current.future, current.history); }
const SCALE_KEYS = ["target", "scale", "ruler", "dpi"];
function withScale(key, value) {   // one scale reference at a time
  const c = {};
  for (const k of SCALE_KEYS) c[k] = null;
  if (key) c[key] = value;
  return c;
}
function pointsOfScale(text) {
  const m = /^\s*([-\d.]+),([-\d.]+),([-\d.]+),([-\d.]+)\s*=/.exec(text || "");
  return m ? [[+m[1], +m[2]], [+m[3], +m[4]]] : [];
}
function scaleText() {
  const len = $("length").value.trim();
  if (scalePts.length < 2 || !len) return null;
  const r = (v) => Math.round(v * 10) / 10;
  return `${r(scalePts[0][0])},${r(scalePts[0][1])},${r(scalePts[1][0])},${r(scalePts[1][1])}=${len}`;
}
function methodOf(st) {
  if (st.target) return "target";
  if (st.ruler) return "ruler";
  if (st.scale) return "scale";
  if (st.dpi) return "dpi";
  return "none";
}
function showSettings() {
  const st = current.state;
  const m = methodOf(st);
  $("method").value = m;
  for (const k of ["target", "ruler", "scale", "dpi"]) $(`m-${k}`).hidden = k !== m;
  $("target").value = st.target || "";
  $("pitch").value = st.pitch || "";
  $("dpi").value = st.dpi || "";
  $("known").value = st.known || "";
  const len = /=(.*)$/.exec(st.scale || "");
  if (len) $("length").value = len[1];
  $("bark").checked = !!st.under_bark;
  $("accept").checked = !!st.accept;
  if (st.trace) $("snap").checked = !!st.trace.snap;
  $("undo").disabled = !current.history.length;
  $("redo").disabled = !current.future.length;
  $("auto").disabled = !st.trace;
}

// -- measuring -------------------------------------------------------------------------------------
function remeasure() {
  pending = {full: false};
  clearTimeout(fullTimer);
  pump();
}
async function pump() {
  if (inflight || !pending || !current) return;
  const job = pending;
  pending = null;
  inflight = true;
  const mine = ++seq;
  const photo = current;
  setStatus(job.full ? "working out the full uncertainty…" : "measuring…", "busy");
  const t0 = performance.now();
  let res;
  try {
    res = await api(`api/photos/${photo.index}/measure`, {state: photo.state, full: job.full});
  } catch (e) {
    res = {ok: false, message: `the page lost the server (${e}); is tracer review still running?`};
  }
  inflight = false;
  if (photo === current && !pending) {
    photo.result = res.ok === false && res.error ? {ok: false, message: res.error, candidates: []} : res;
    photo.seconds = (performance.now() - t0) / 1000;
    show(photo);
    if (res.ok && !job.full) {
      fullTimer = setTimeout(() => { pending = {full: true}; pump(); }, FULL_AFTER_MS);
    } else {
      setStatus(res.ok ? `measured in ${photo.seconds.toFixed(2)} s` : "not measured", res.ok ? "" : "error");
    }
  }
  if (pending) pump();
}
function fmt(v, U) {
  if (v === null || v === undefined) return "–";
  if (U === null || U === undefined || !isFinite(U) || U <= 0) return v.toPrecision(4);
  const e = Math.floor(Math.log10(U)) - 1;          // U to two significant figures
  const q = Math.pow(10, e);
  const big = Math.abs(v) >= 1e5 || Math.abs(U) >= 1e5;
  if (big) {
    const p = Math.floor(Math.log10(Math.abs(v) || 1));
    const f = Math.pow(10, p);
    const d = Math.max(0, p - e);
    return `${(v / f).toFixed(d)}e${p} ± ${(U / f).toFixed(d)}e${p}`;
  }
  const d = Math.max(0, -e);
  return `${v.toFixed(d)} ± ${U.toFixed(d)}`;
}
let shownCount = 0;          // answers drawn so far (for tests and the browser benchmark)
function show(photo) {
  shownCount += 1;
  const res = photo.result;
  const body = $("numbers").querySelector("tbody");
  body.textContent = "";
  $("warnings").textContent = "";
  $("cands").textContent = "";
  const check = $("check");
  if (!res || !res.ok) {
    check.className = "review";
    check.textContent = res ? res.message : "";
    if (res && methodOf(photo.state) === "none" && !photo.state.known) {
      check.textContent = "No scale reference yet: choose one under Scale reference (the checkerboard's corners " +
        "and square size, a ruler in view, two points a known distance apart, or a scan's dpi).";
    }
    $("quick").textContent = "";
    $("scaleinfo").textContent = "";
  } else {
    for (const [k, e] of Object.entries(res.values)) {
      const tr = document.createElement("tr");
      if (MAIN_KEYS.includes(k)) tr.className = "main";
      tr.innerHTML = `<td>${k}</td><td class="v" data-key="${k}" data-value="${e.value}" data-u="${e.U}"></td><td>${e.unit}</td><td>${NAMES[k] || ""}</td>`;
      tr.querySelector(".v").textContent = fmt(e.value, e.U);
      body.appendChild(tr);
    }
    $("quick").textContent = res.full ? "(U = 2u, k = 2)" : "(U from a quick estimate; the full one follows)";
    const rec = res.scale.record || {};
    $("scaleinfo").textContent = `scale: ${res.scale.method}` + (rec.corners_found ? `, ${rec.corners_found} corners found` : "") +
      (rec.ticks_found ? `, ${rec.ticks_found} marks read` : "");
    const c = res.check;
    check.className = c.needs_review ? "review" : "fine";
    check.textContent = (res.hand_edited ? "boundary edited by hand. " : "") +
      `confidence ${c.confidence.toFixed(2)}: ` + (c.needs_review ? "needs review — " + c.reasons.join("; ") : "no review needed") +
      (c.needs_review && res.accepted ? " (accepted on this page)" : "");
    for (const w of res.warnings) {
      const li = document.createElement("li"); li.textContent = w; $("warnings").appendChild(li);
    }
  }
  ((res && res.candidates) || []).forEach((cd, k) => {
    const b = document.createElement("button");
    b.textContent = `take candidate ${k + 1} (at ${cd.centre[0].toFixed(0)}, ${cd.centre[1].toFixed(0)} px)`;
    b.onclick = () => commit({seed: [...(current.state.seed || []), cd.centre.map((v) => Math.round(v))]});
    $("cands").appendChild(b);
  });
  draw();
}

// -- pointer -----------------------------------------------------------------------------------------
let press = null;
svg.addEventListener("pointerdown", (ev) => {
  if (!current || !current.info.image) return;
  svg.focus();
  const [x, y] = toImage(ev);
  press = {x, y, cx: ev.clientX, cy: ev.clientY, moved: false, button: ev.button, view: {...view}};
  const near = mode === "edit" && ev.button === 0 ? nearestVertex(x, y) : null;
  if (near) {
    const [ri, vi] = near;
    if (ev.shiftKey) {
      const d = editableCopy();
      const ring = ringOf(d, ri);
      if (ring.length > 3) { ring.splice(vi, 1); draft = null; commit(withTrace(d)); }
      press = null;
      return;
    }
    draft = editableCopy();
    press.vertex = [ri, vi];
    // With Alt, a stretch is pulled: the vertices along the ring within PULL screen pixels of
    // this one (by arc length) follow it, less the farther they are (a smooth bump).
    const ring = ringOf(draft, ri);
    press.origin = ring.map((p) => p.slice());
    press.weights = ev.altKey ? pullWeights(ring, vi, PULL_SCREEN_PX * pxPerScreen()) : null;
  } else if (ev.button === 0 && mode === "scale" && nearestScalePoint(x, y) !== null) {
    press.scalept = nearestScalePoint(x, y);
  } else if (ev.button === 0 && mode === "box") {
    press.box = true;
  }
  svg.setPointerCapture(ev.pointerId);
});
svg.addEventListener("pointermove", (ev) => {
  if (!press) return;
  if (Math.hypot(ev.clientX - press.cx, ev.clientY - press.cy) > 3) press.moved = true;
  if (!press.moved) return;
  const [x, y] = toImage(ev);
  if (press.vertex) {
    const ring = ringOf(draft, press.vertex[0]);
    const [ox, oy] = press.origin[press.vertex[1]];
    if (press.weights) {
      press.origin.forEach((p, j) => { ring[j] = [p[0] + press.weights[j] * (x - ox), p[1] + press.weights[j] * (y - oy)]; });
    }
    ring[press.vertex[1]] = [x, y];
    draw();
  } else if (press.scalept !== undefined) {
    scalePts[press.scalept] = [x, y];
    draw();
  } else if (press.box) {
    press.rect = [Math.min(press.x, x), Math.min(press.y, y), Math.max(press.x, x), Math.max(press.y, y)];
    draw();
    const [x0, y0, x1, y1] = press.rect;
    el("rect", {x: x0, y: y0, width: x1 - x0, height: y1 - y0, fill: "none", stroke: "#fff", "stroke-width": 1.5,
                "vector-effect": "non-scaling-stroke"});
  } else {
    const k = press.view.w / svg.getBoundingClientRect().width;
    view = {...press.view, x: press.view.x - (ev.clientX - press.cx) * k, y: press.view.y - (ev.clientY - press.cy) * k};
    applyView();
  }
});
svg.addEventListener("pointerup", (ev) => {
  if (!press) return;
  const p = press;
  press = null;
  const [x, y] = toImage(ev);
  const r = (v) => Math.round(v * 10) / 10;
  if (p.vertex) {
    if (p.moved) { const d = draft; draft = null; commit(withTrace(d)); } else { draft = null; draw(); }
    return;
  }
  if (p.scalept !== undefined) {
    if (p.moved) commitScale();
    return;
  }
  if (p.box) {
    if (p.moved && p.rect && p.rect[2] - p.rect[0] > 2 && p.rect[3] - p.rect[1] > 2) commit({box: p.rect.map(r)});
    else draw();
    return;
  }
  if (p.moved || p.button !== 0) return;
  if (mode === "seed") commit({seed: [...(current.state.seed || []), [r(x), r(y)]]});
  else if (mode === "outside") commit({outside: [...(current.state.outside || []), [r(x), r(y)]]});
  else if (mode === "rim") {
    poly.push([x, y]);
    if (poly.length === 5) closeRim(); else draw();
  }
  else if (mode === "outline" || mode === "hole") {
    // A click on the first point closes the outline.
    if (poly.length >= 3 && Math.hypot(poly[0][0] - x, poly[0][1] - y) < 8 * pxPerScreen()) closePoly();
    else { poly.push([x, y]); draw(); }
  }
  else if (mode === "scale") {
    if (scalePts.length < 2) scalePts.push([x, y]);
    else {
      const k = Math.hypot(scalePts[0][0] - x, scalePts[0][1] - y) < Math.hypot(scalePts[1][0] - x, scalePts[1][1] - y) ? 0 : 1;
      scalePts[k] = [x, y];
    }
    draw();
    commitScale();
  }
});
svg.addEventListener("dblclick", (ev) => {
  if (mode === "outline" || mode === "hole") {
    // the double-click's two clicks each added a point: they are the same point
    if (poly.length > 1) poly.pop();
    closePoly();
    return;
  }
  if (mode !== "edit") return;
  const [x, y] = toImage(ev);
  const d = editableCopy();
  if (!d.points.length) return;
  const near = nearestSegment(d, x, y);
  if (!near || near.d > 12 * pxPerScreen()) return;
  ringOf(d, near.ri).splice(near.i + 1, 0, near.p);
  commit(withTrace(d));
});
function commitScale() {
  const text = scaleText();
  if (text) commit(withScale("scale", text));
  else { draw(); setStatus(scalePts.length < 2 ? "place the second scale point" : "type the distance between the two points"); }
}

// -- controls ------------------------------------------------------------------------------------
function setMode(m) {
  if (m !== mode) poly = [];
  mode = m;
  document.querySelectorAll("#tools [data-mode]").forEach((b) => b.classList.toggle("active", b.dataset.mode === m));
  svg.classList.toggle("pan", m === "pan");
  draw();
}
document.querySelectorAll("#tools [data-mode]").forEach((b) => { b.onclick = () => setMode(b.dataset.mode); });
$("undo").onclick = undo;
$("redo").onclick = redo;
$("clearhints").onclick = () => commit({seed: [], outside: [], box: null});
$("auto").onclick = () => { draft = null; commit({trace: null}); };
$("method").onchange = () => {
  const m = $("method").value;
  for (const k of ["target", "ruler", "scale", "dpi"]) $(`m-${k}`).hidden = k !== m;
  if (m === "ruler") commit({...withScale("ruler", "auto"), pitch: $("pitch").value.trim() || null});
  else if (m === "none") commit(withScale(null));
  else if (m === "target" && $("target").value.trim()) commit(withScale("target", $("target").value.trim()));
  else if (m === "dpi" && $("dpi").value.trim()) commit(withScale("dpi", Number($("dpi").value)));
  else if (m === "scale") { setMode("scale"); commitScale(); }
};
$("target").onchange = () => commit(withScale("target", $("target").value.trim() || null));
$("pitch").onchange = () => commit({pitch: $("pitch").value.trim() || null});
$("dpi").onchange = () => commit(withScale("dpi", $("dpi").value.trim() ? Number($("dpi").value) : null));
$("length").onchange = () => commitScale();
$("known").onchange = () => commit({known: $("known").value.trim() || null});
$("bark").onchange = () => commit({under_bark: $("bark").checked});
$("snap").onchange = () => { if (current.state.trace) commit({trace: {...current.state.trace, snap: $("snap").checked}}); };
$("accept").onchange = () => commit({accept: $("accept").checked});
$("photos").onchange = () => openPhoto(+$("photos").value);
$("prev").onclick = () => openPhoto((current.index - 1 + photos.length) % photos.length);
$("next").onclick = () => openPhoto((current.index + 1) % photos.length);
$("save").onclick = () => save(false);

async function save(force) {
  const photo = current;
  $("saved").textContent = "saving…";
  const res = await api(`api/photos/${photo.index}/save`, {state: photo.state, force});
  if (res.conflict) {
    if (confirm(res.message + "\n\nOverwrite it?")) return save(true);
    $("saved").textContent = "not saved: " + res.message;
    return;
  }
  if (!res.ok) { $("saved").textContent = "not saved: " + (res.error || res.message); $("saved").className = "error"; return; }
  $("saved").className = "";
  $("saved").textContent = [res.message, "wrote " + res.written.join(", "), res.after].filter(Boolean).join(" — ");
  if (res.measured && photo === current) { photo.result = res.measured; show(photo); }
  setStatus("saved");
}

document.addEventListener("keydown", (ev) => {
  if (ev.target.tagName === "INPUT" || ev.target.tagName === "SELECT") return;
  const k = ev.key.toLowerCase();
  if ((ev.ctrlKey || ev.metaKey) && k === "z") { ev.preventDefault(); ev.shiftKey ? redo() : undo(); return; }
  if (ev.ctrlKey || ev.metaKey) return;
  const modes = {m: "seed", g: "outside", b: "box", s: "scale", e: "edit", o: "outline", h: "hole", r: "rim",
                 escape: "pan"};
  if ((mode === "outline" || mode === "hole") && k === "enter") { closePoly(); return; }
  if ((mode === "outline" || mode === "hole") && k === "backspace") { ev.preventDefault(); poly.pop(); draw(); return; }
  if (modes[k]) setMode(modes[k]);
  else if (k === "z") undo();
  else if (k === "y") redo();
  else if (k === "f") fitView();
  else if (k === ",") $("prev").click();
  else if (k === ".") $("next").click();
});
window.addEventListener("resize", () => { if (current && current.info.image) applyView(); });

// What tests (and a curious person in the console) can ask of the page.
window.tracerReview = {
  toScreen,
  image: () => current && current.info.image,
  busy: () => inflight || !!pending || !!(current && current.result && current.result.ok && !current.result.full),
  state: () => current && clone(current.state),
  result: () => current && current.result,
  shown: () => shownCount,
  setMode,
};
start();
