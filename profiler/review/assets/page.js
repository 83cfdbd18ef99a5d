/* terrahop review page: map, filters, table, profile.  Plain JavaScript of our own, no libraries. */
(function () {
  "use strict";
  const D = JSON.parse(document.getElementById("review-data").textContent);
  const $ = (id) => document.getElementById(id);

  function decode(text, Type) {
    if (!text) return new Type(0);
    const bin = atob(text);
    const bytes = new Uint8Array(bin.length);
    for (let i = 0; i < bin.length; i++) bytes[i] = bin.charCodeAt(i);
    return new Type(bytes.buffer);
  }

  // ---- data -------------------------------------------------------------------------------------
  const VERDICTS = D.verdicts, COLOURS = D.colours, N = D.n_links;
  const siteNames = D.sites.names;
  const siteLon = decode(D.sites.lon, Float64Array), siteLat = decode(D.sites.lat, Float64Array);
  const linkA = decode(D.links.a, Int32Array), linkB = decode(D.links.b, Int32Array);
  const rank = decode(D.links.rank, Int32Array), verdict = decode(D.links.verdict, Uint8Array);
  const cols = {};
  for (const c of D.columns) { c.values = decode(c.data, Float32Array); cols[c.name] = c; }
  const problems = D.problems || {};
  // The decoded arrays are all that is needed: let the text (megabytes at 100,000 links) go, so it
  // is not carried through every later garbage collection.
  for (const c of D.columns) c.data = null;
  D.links = null; D.sites.lon = D.sites.lat = null;
  document.getElementById("review-data").textContent = "";

  // Web Mercator world units (0..1, y southwards): spherical Pseudo-Mercator (EPSG:3857, method EPSG:1024)
  // scaled to the unit square, as the XYZ tile scheme of web maps lays tiles out (common practice).
  function mercX(lon) { return (lon + 180) / 360; }
  function mercY(lat) {
    const l = Math.max(-85.05112878, Math.min(85.05112878, lat)) * Math.PI / 180;
    const s = Math.sin(l);
    return 0.5 - Math.log((1 + s) / (1 - s)) / (4 * Math.PI);
  }
  const sx = new Float64Array(siteLon.length), sy = new Float64Array(siteLon.length);
  for (let i = 0; i < sx.length; i++) { sx[i] = mercX(siteLon[i]); sy[i] = mercY(siteLat[i]); }
  const x1 = new Float64Array(N), y1 = new Float64Array(N), x2 = new Float64Array(N), y2 = new Float64Array(N);
  for (let i = 0; i < N; i++) {
    const a = linkA[i], b = linkB[i];
    x1[i] = sx[a]; y1[i] = sy[a]; y2[i] = sy[b];
    let dl = siteLon[b] - siteLon[a];  // across the antimeridian: the short way round
    x2[i] = sx[b] + (dl > 180 ? -1 : dl < -180 ? 1 : 0);
  }

  // ---- profiles ---------------------------------------------------------------------------------
  const P = D.profiles;
  const profileOf = new Map();
  let pBase = null, pGround = null, pClutter = null;
  if (P) {
    const links = decode(P.link, Int32Array);
    pBase = decode(P.base, Float32Array);
    pGround = decode(P.ground, Uint16Array);
    pClutter = P.clutter ? decode(P.clutter, Uint16Array) : null;
    for (let j = 0; j < links.length; j++) profileOf.set(links[j], j);
    P.link = P.base = P.ground = P.clutter = null;
  }

  // ---- filters ----------------------------------------------------------------------------------
  const verdictOn = VERDICTS.map(() => true);
  let shown = new Int32Array(0);         // indices of links passing the filters, in the table's order
  let shownByVerdict = [];               // per verdict, indices passing the filters (map drawing)
  let selected = -1;
  const lowerNames = siteNames.map((s) => s.toLowerCase());

  function numberOf(id) { const v = $(id).value.trim(); return v === "" ? NaN : Number(v); }

  function applyFilters() {
    const mLo = numberOf("margin-min"), mHi = numberOf("margin-max");
    const dLo = numberOf("dist-min"), dHi = numberOf("dist-max");
    const text = $("site-filter").value.trim().toLowerCase();
    const margin = cols.fade_margin_db.values, dist = cols.distance_km.values;
    let nameOk = null;
    if (text) { nameOk = new Uint8Array(siteNames.length); lowerNames.forEach((s, i) => { if (s.includes(text)) nameOk[i] = 1; }); }
    const out = new Int32Array(N);
    let n = 0;
    const hasM = !isNaN(mLo) || !isNaN(mHi), hasD = !isNaN(dLo) || !isNaN(dHi);
    for (let i = 0; i < N; i++) {
      const v = verdict[i];
      if (v >= VERDICTS.length || !verdictOn[v]) continue;
      if (hasM) { const m = margin[i]; if (!(m === m) || m < mLo || m > mHi) continue; }
      if (hasD) { const d = dist[i]; if (!(d === d) || d < dLo || d > dHi) continue; }
      if (nameOk && !nameOk[linkA[i]] && !nameOk[linkB[i]]) continue;
      out[n++] = i;
    }
    shown = sortIndices(out.slice(0, n));
    shownByVerdict = VERDICTS.map(() => []);
    for (let k = 0; k < n; k++) shownByVerdict[verdict[shown[k]]].push(shown[k]);
    shownByVerdict = shownByVerdict.map((a) => Int32Array.from(a));
    $("shown-count").textContent = n.toLocaleString("en-US").replace(/,/g, "\u2009");
    $("shown-count").dataset.n = String(n);
    renderTable(true);
    invalidate();
  }

  // ---- table ------------------------------------------------------------------------------------
  const TABLE = [
    { key: "rank", label: "#", num: true },
    { key: "site_a", label: "Site a" },
    { key: "site_b", label: "Site b" },
    { key: "verdict", label: "Verdict" },
  ].concat(D.table_columns.filter((c) => cols[c]).map((c) => ({ key: c, label: cols[c].short, num: true })));
  let sortKey = "rank", sortDir = 1;

  function sortIndices(idx) {
    const key = sortKey, dir = sortDir;
    let keyOf;
    if (key === "rank") keyOf = (i) => rank[i];
    else if (key === "verdict") keyOf = (i) => verdict[i];
    else if (key === "site_a") keyOf = (i) => lowerNames[linkA[i]];
    else if (key === "site_b") keyOf = (i) => lowerNames[linkB[i]];
    else { const v = cols[key].values; keyOf = (i) => v[i]; }
    const arr = Array.from(idx);
    if (key === "site_a" || key === "site_b") {
      arr.sort((p, q) => { const a = keyOf(p), b = keyOf(q); return (a < b ? -dir : a > b ? dir : rank[p] - rank[q]); });
    } else {
      arr.sort((p, q) => {
        const a = keyOf(p), b = keyOf(q);
        const an = a !== a, bn = b !== b;   // no value: always last
        if (an || bn) return an && bn ? rank[p] - rank[q] : an ? 1 : -1;
        return a === b ? rank[p] - rank[q] : (a - b) * dir;
      });
    }
    return Int32Array.from(arr);
  }

  function fmt(name, i) {
    const c = cols[name];
    const v = c.values[i];
    return v === v ? v.toFixed(c.digits) : "";
  }

  const thead = $("thead");
  for (const col of TABLE) {
    const s = document.createElement("span");
    const unit = cols[col.key] ? cols[col.key].unit : "";
    s.textContent = col.label;
    if (unit) { const u = document.createElement("small"); u.textContent = unit; s.appendChild(u); }
    s.dataset.key = col.key;
    if (col.num) s.className = "num";
    s.title = col.key === "rank" ? "Rank" : !cols[col.key] ? col.label : cols[col.key].label + (unit ? ", " + unit : "");
    s.addEventListener("click", () => {
      if (sortKey === col.key) sortDir = -sortDir; else { sortKey = col.key; sortDir = 1; }
      shown = sortIndices(shown);
      markSort();
      renderTable(true);
    });
    thead.appendChild(s);
  }
  function markSort() {
    for (const s of thead.children) s.setAttribute("aria-sort", s.dataset.key === sortKey ? (sortDir > 0 ? "ascending" : "descending") : "none");
  }
  markSort();

  const tbody = $("tbody"), trows = $("trows"), tspacer = $("tspacer");
  const ROW = 24;
  function chip(v) {
    const w = document.createElement("span");
    w.className = "chip";
    const dot = document.createElement("i");
    dot.style.background = COLOURS[v] || "#999";
    w.appendChild(dot);
    w.appendChild(document.createTextNode(VERDICTS[v] || "?"));
    return w;
  }
  function renderTable(reset) {
    if (reset) tbody.scrollTop = Math.min(tbody.scrollTop, Math.max(0, shown.length * ROW - tbody.clientHeight));
    tspacer.style.height = shown.length * ROW + "px";
    const first = Math.max(0, Math.floor(tbody.scrollTop / ROW) - 4);
    const last = Math.min(shown.length, first + Math.ceil(tbody.clientHeight / ROW) + 10);
    trows.style.transform = "translateY(" + first * ROW + "px)";
    const frag = document.createDocumentFragment();
    for (let k = first; k < last; k++) {
      const i = shown[k];
      const r = document.createElement("div");
      r.className = "trow" + (i === selected ? " selected" : "");
      r.dataset.link = String(i);
      for (const col of TABLE) {
        const s = document.createElement("span");
        if (col.num) s.className = "num";
        if (col.key === "rank") s.textContent = String(rank[i]);
        else if (col.key === "site_a") s.textContent = s.title = siteNames[linkA[i]];
        else if (col.key === "site_b") s.textContent = s.title = siteNames[linkB[i]];
        else if (col.key === "verdict") s.appendChild(chip(verdict[i]));
        else s.textContent = fmt(col.key, i);
        r.appendChild(s);
      }
      frag.appendChild(r);
    }
    trows.replaceChildren(frag);
  }
  tbody.addEventListener("scroll", () => renderTable(false), { passive: true });
  trows.addEventListener("click", (e) => {
    const r = e.target.closest(".trow");
    if (r) select(Number(r.dataset.link), true);
  });

  // ---- CSV --------------------------------------------------------------------------------------
  function csvText(s) { return /[",\n\r]/.test(s) ? '"' + s.replace(/"/g, '""') + '"' : s; }
  function saveCsv() {
    const names = D.columns.map((c) => c.name);
    const lines = [["rank", "site_a", "site_b", "verdict"].concat(names).join(",")];
    for (let k = 0; k < shown.length; k++) {
      const i = shown[k];
      const row = [String(rank[i]), csvText(siteNames[linkA[i]]), csvText(siteNames[linkB[i]]), VERDICTS[verdict[i]] || ""];
      for (const n of names) row.push(fmt(n, i));
      lines.push(row.join(","));
    }
    const blob = new Blob([lines.join("\r\n") + "\r\n"], { type: "text/csv" });
    const a = document.createElement("a");
    a.href = URL.createObjectURL(blob);
    a.download = D.csv_name;
    document.body.appendChild(a);
    a.click();
    setTimeout(() => { URL.revokeObjectURL(a.href); a.remove(); }, 1000);
  }

  // ---- map --------------------------------------------------------------------------------------
  // Canvases kept in main memory: moving the drawn picture each frame is then a plain copy, not a GPU round trip.
  const SOFT = { willReadFrequently: true };
  const canvas = $("map"), ctx = canvas.getContext("2d", SOFT);
  let cache = document.createElement("canvas"), cctx = cache.getContext("2d", SOFT);
  let dpr = window.devicePixelRatio || 1, W = 0, H = 0;   // W, H in CSS pixels
  const view = { cx: 0.5, cy: 0.5, z: 2 };                // centre in world units, zoom (256 * 2^z px per world)
  let cacheView = null, cacheMargin = 0, dirty = true, pending = false, idleTimer = 0, moving = false;
  let relief = null, labelled = false;
  if (D.relief) { relief = new Image(); relief.onload = invalidate; relief.src = D.relief.uri; }
  const tiles = new Map();

  function scale(v) { return 256 * Math.pow(2, (v || view).z); }
  function fitAll() {
    let xa = Infinity, xb = -Infinity, ya = Infinity, yb = -Infinity;
    for (let i = 0; i < sx.length; i++) { xa = Math.min(xa, sx[i]); xb = Math.max(xb, sx[i]); ya = Math.min(ya, sy[i]); yb = Math.max(yb, sy[i]); }
    for (let i = 0; i < N; i++) { xa = Math.min(xa, x2[i]); xb = Math.max(xb, x2[i]); }
    if (!isFinite(xa)) { xa = 0; xb = 1; ya = 0; yb = 1; }
    view.cx = (xa + xb) / 2; view.cy = (ya + yb) / 2;
    const span = Math.max((xb - xa) / Math.max(W - 40, 50), (yb - ya) / Math.max(H - 40, 50), 1e-9);
    view.z = Math.max(0, Math.min(22, Math.log2(1 / (256 * span))));
  }
  function resize() {
    const r = canvas.getBoundingClientRect();
    dpr = window.devicePixelRatio || 1;
    W = Math.max(1, Math.round(r.width)); H = Math.max(1, Math.round(r.height));
    canvas.width = Math.round(W * dpr); canvas.height = Math.round(H * dpr);
    invalidate();
  }

  // The map is drawn into a back canvas reaching half a view beyond each edge, a slice of links per frame
  // (so no frame waits for 100,000 lines), then swapped with the cache that frames show, moved and scaled.
  let back = document.createElement("canvas"), bctx = back.getContext("2d", SOFT), job = null;
  const SLICE = 2500, BUDGET_MS = 12, FIRST_BUDGET_MS = 250;  // the first picture may take longer frames: nothing moves yet

  function startScene() {
    cacheMargin = 0.5;
    const CW = W * (1 + 2 * cacheMargin), CH = H * (1 + 2 * cacheMargin);
    const bw = Math.round(CW * dpr), bh = Math.round(CH * dpr);
    if (back.width !== bw || back.height !== bh) { back.width = bw; back.height = bh; }  // a new size only when it changes
    // Size the other canvas too before anything is shown, so the first swap during a pan allocates nothing.
    if (!cacheView && (cache.width !== bw || cache.height !== bh)) { cache.width = bw; cache.height = bh; }
    const v = { cx: view.cx, cy: view.cy, z: view.z };
    const s = scale(v), ox = CW / 2 - v.cx * s, oy = CH / 2 - v.cy * s;
    const c = bctx;
    c.setTransform(dpr, 0, 0, dpr, 0, 0);
    c.fillStyle = "#e9ebe6"; c.fillRect(0, 0, CW, CH);
    if (D.tiles) drawTiles(c, v, s, ox, oy, CW, CH);
    if (relief && relief.complete && relief.naturalWidth) {
      const b = D.relief.bounds;
      c.globalAlpha = D.tiles ? 0.55 : 1;
      c.imageSmoothingEnabled = true;
      c.drawImage(relief, ox + b[0] * s, oy + b[1] * s, (b[2] - b[0]) * s, (b[3] - b[1]) * s);
      c.globalAlpha = 1;
    }
    // Thinner and lighter lines when many are drawn (level of detail by count).
    let total = 0;
    for (const a of shownByVerdict) total += a.length;
    const many = total > 20000, some = total > 3000;
    job = { view: v, s, ox, oy, CW, CH, v: VERDICTS.length - 1, k: 0,
            width: some ? 1 / dpr : 2, alpha: many ? 0.55 : some ? 0.75 : 0.95 };  // 1 device px: the fast hairline
  }

  // Draw links for about BUDGET_MS: one path per verdict colour and slice, culled to the back canvas.
  function stepScene() {
    const t0 = performance.now(), j = job, c = bctx, s = j.s, ox = j.ox, oy = j.oy, CW = j.CW, CH = j.CH;
    c.lineWidth = j.width; c.lineCap = "butt"; c.globalAlpha = j.alpha;
    while (j.v >= 0) {
      const idx = shownByVerdict[j.v];
      if (!idx || j.k >= idx.length) { j.v--; j.k = 0; continue; }
      const end = Math.min(idx.length, j.k + SLICE);
      c.strokeStyle = COLOURS[j.v];
      c.beginPath();
      for (let k = j.k; k < end; k++) {
        const i = idx[k];
        const ax = ox + x1[i] * s, ay = oy + y1[i] * s, bx = ox + x2[i] * s, by = oy + y2[i] * s;
        if ((ax < 0 && bx < 0) || (ax > CW && bx > CW) || (ay < 0 && by < 0) || (ay > CH && by > CH)) continue;
        c.moveTo(ax, ay); c.lineTo(bx, by);
      }
      c.stroke();
      flush(back);  // rasterise this slice now: a canvas defers drawing until it is used
      j.k = end;
      if (performance.now() - t0 > (cacheView ? BUDGET_MS : FIRST_BUDGET_MS)) { c.globalAlpha = 1; return false; }
    }
    c.globalAlpha = 1;
    drawSites(c, s, ox, oy, CW, CH);
    flush(back);
    [cache, back] = [back, cache];
    [cctx, bctx] = [bctx, cctx];
    cacheView = j.view;
    job = null;
    return true;
  }

  // Copying one pixel into a scratch canvas makes the browser draw what is pending on ``src``
  // (getImageData would too, but is refused once basemap tiles from another origin are on it).
  const scratch = document.createElement("canvas");
  scratch.width = scratch.height = 1;
  const sctx = scratch.getContext("2d", SOFT);
  function flush(src) { sctx.drawImage(src, 0, 0, 1, 1, 0, 0, 1, 1); }

  function drawSites(c, s, ox, oy, CW, CH) {
    // Sites: small rings, named when few are in view.
    const r = sx.length > 2000 ? 1.6 : 3.2;
    c.fillStyle = "#ffffff"; c.strokeStyle = "#1c2226"; c.lineWidth = 1;
    c.beginPath();
    let inView = [];
    labelled = false;
    for (let i = 0; i < sx.length; i++) {
      const px = ox + sx[i] * s, py = oy + sy[i] * s;
      if (px < -5 || py < -5 || px > CW + 5 || py > CH + 5) continue;
      c.moveTo(px + r, py); c.arc(px, py, r, 0, 2 * Math.PI);
      if (inView.length <= 60) inView.push(i);
    }
    c.fill(); c.stroke();
    if (inView.length <= 60) {
      labelled = true;
      c.font = "11px system-ui, sans-serif"; c.lineWidth = 3; c.strokeStyle = "rgba(255,255,255,0.9)"; c.fillStyle = "#1c2226";
      for (const i of inView) {
        const px = ox + sx[i] * s + 5, py = oy + sy[i] * s - 5;
        c.strokeText(siteNames[i], px, py); c.fillText(siteNames[i], px, py);
      }
    }
  }

  function drawTiles(c, v, s, ox, oy, CW, CH) {
    const tz = Math.max(0, Math.min(19, Math.round(v.z)));
    const n = Math.pow(2, tz), ts = s / n;
    const xa = Math.floor(-ox / ts), xb = Math.floor((CW - ox) / ts), ya = Math.max(0, Math.floor(-oy / ts)), yb = Math.min(n - 1, Math.floor((CH - oy) / ts));
    for (let ty = ya; ty <= yb; ty++) for (let tx = xa; tx <= xb; tx++) {
      const wx = ((tx % n) + n) % n, key = tz + "/" + wx + "/" + ty;
      let img = tiles.get(key);
      if (!img) {
        img = new Image();
        img.onload = invalidate;
        img.src = D.tiles.replace("{z}", tz).replace("{x}", wx).replace("{y}", ty);
        tiles.set(key, img);
        if (tiles.size > 600) tiles.delete(tiles.keys().next().value);
      }
      if (img.complete && img.naturalWidth) c.drawImage(img, ox + tx * ts, oy + ty * ts, ts + 0.5, ts + 0.5);
    }
  }

  // Show the cache under the current view (a pan or zoom in progress moves the drawn picture), then the selection.
  function blit() {
    ctx.setTransform(dpr, 0, 0, dpr, 0, 0);
    ctx.fillStyle = "#e9ebe6"; ctx.fillRect(0, 0, W, H);
    const k = Math.pow(2, view.z - cacheView.z), s = scale();
    const CW = W * (1 + 2 * cacheMargin), CH = H * (1 + 2 * cacheMargin);
    const cxs = W / 2 + (cacheView.cx - view.cx) * s, cys = H / 2 + (cacheView.cy - view.cy) * s;
    ctx.imageSmoothingEnabled = true;
    ctx.drawImage(cache, cxs - CW / 2 * k, cys - CH / 2 * k, CW * k, CH * k);
    if (selected >= 0) {
      const ox = W / 2 - view.cx * s, oy = H / 2 - view.cy * s;
      const ax = ox + x1[selected] * s, ay = oy + y1[selected] * s, bx = ox + x2[selected] * s, by = oy + y2[selected] * s;
      ctx.lineCap = "round";
      ctx.strokeStyle = "#1c2226"; ctx.lineWidth = 6; ctx.beginPath(); ctx.moveTo(ax, ay); ctx.lineTo(bx, by); ctx.stroke();
      ctx.strokeStyle = COLOURS[verdict[selected]]; ctx.lineWidth = 3; ctx.beginPath(); ctx.moveTo(ax, ay); ctx.lineTo(bx, by); ctx.stroke();
      ctx.font = "bold 12px system-ui, sans-serif"; ctx.lineWidth = 3; ctx.strokeStyle = "#fff"; ctx.fillStyle = "#1c2226";
      for (const [px, py, t] of [[ax, ay, "a" + (labelled ? "" : " " + siteNames[linkA[selected]])], [bx, by, "b" + (labelled ? "" : " " + siteNames[linkB[selected]])]]) {
        ctx.beginPath(); ctx.arc(px, py, 4.5, 0, 2 * Math.PI); ctx.fillStyle = "#fff"; ctx.fill(); ctx.lineWidth = 2; ctx.strokeStyle = "#1c2226"; ctx.stroke();
        ctx.lineWidth = 3; ctx.strokeStyle = "#fff"; ctx.fillStyle = "#1c2226";
        ctx.strokeText(t, px - 7 - ctx.measureText(t).width, py - 7); ctx.fillText(t, px - 7 - ctx.measureText(t).width, py - 7);
      }
    }
    drawScaleBar();
  }

  function frame() {
    pending = false;
    const t0 = performance.now();
    const target = job ? job.view : cacheView;
    const outside = target && (Math.abs(target.cx - view.cx) * scale() > W * cacheMargin * 0.9
      || Math.abs(target.cy - view.cy) * scale() > H * cacheMargin * 0.9);
    if (dirty || !target || (!moving && target.z !== view.z) || outside) {
      startScene(); dirty = false;
      if (cacheView) request();  // links from the next frame on: this one has set the canvas up
      else if (!stepScene()) request();
    } else if (job && !stepScene()) request();  // more links to draw next frame
    if (cacheView) blit();
    const t1 = performance.now();
    if (!window.__reviewFirstMap && cacheView) { window.__reviewFirstMap = t1; document.body.dataset.ready = "1"; }
    window.__reviewLastDraw = t1 - t0;
  }
  function request() { if (!pending) { pending = true; requestAnimationFrame(frame); } }
  function invalidate() { dirty = true; request(); }
  function settle() {  // redraw sharply once a pan or zoom has stopped
    clearTimeout(idleTimer);
    idleTimer = setTimeout(() => { moving = false; if (cacheView && (cacheView.z !== view.z || cacheView.cx !== view.cx || cacheView.cy !== view.cy)) invalidate(); }, 150);
  }

  function drawScaleBar() {
    // Ground metres per CSS pixel at the centre: the world is 2 pi x 6378137 m wide (EPSG:3857) and the
    // Mercator scale at latitude phi is 1/cos(phi) (spherical form, EPSG Guidance Note 7-2, method 1024).
    const lat = Math.atan(Math.sinh(Math.PI * (1 - 2 * view.cy)));
    const mpp = 2 * Math.PI * 6378137 * Math.cos(lat) / scale();
    const target = mpp * 110;
    const p = Math.pow(10, Math.floor(Math.log10(target)));
    const step = [5, 2, 1].map((m) => m * p).find((v) => v <= target) || p;
    $("scale-bar").style.width = step / mpp + "px";
    $("scale-label").textContent = step >= 1000 ? step / 1000 + " km" : step + " m";
  }

  // Pointer: drag to pan, wheel or buttons to zoom, click to pick a link.
  let drag = null;
  canvas.addEventListener("pointerdown", (e) => {
    drag = { x: e.clientX, y: e.clientY, cx: view.cx, cy: view.cy, moved: false };
    canvas.setPointerCapture(e.pointerId);
  });
  canvas.addEventListener("pointermove", (e) => {
    if (!drag) return;
    const dx = e.clientX - drag.x, dy = e.clientY - drag.y;
    if (!drag.moved && Math.hypot(dx, dy) < 4) return;
    drag.moved = true; moving = true;
    canvas.classList.add("dragging");
    view.cx = drag.cx - dx / scale(); view.cy = drag.cy - dy / scale();
    request();
  });
  canvas.addEventListener("pointerup", (e) => {
    if (!drag) return;
    const d = drag; drag = null;
    canvas.classList.remove("dragging");
    if (d.moved) { settle(); return; }
    const r = canvas.getBoundingClientRect();
    const hit = pick(e.clientX - r.left, e.clientY - r.top);
    if (hit >= 0) select(hit, false);
  });
  function zoomAt(px, py, dz) {
    const s0 = scale();
    const wx = view.cx + (px - W / 2) / s0, wy = view.cy + (py - H / 2) / s0;
    view.z = Math.max(0, Math.min(22, view.z + dz));
    const s1 = scale();
    view.cx = wx - (px - W / 2) / s1; view.cy = wy - (py - H / 2) / s1;
    moving = true; request(); settle();
  }
  canvas.addEventListener("wheel", (e) => {
    e.preventDefault();
    const r = canvas.getBoundingClientRect();
    zoomAt(e.clientX - r.left, e.clientY - r.top, -e.deltaY * (e.deltaMode ? 0.05 : 0.002));
  }, { passive: false });
  $("zoom-in").addEventListener("click", () => zoomAt(W / 2, H / 2, 1));
  $("zoom-out").addEventListener("click", () => zoomAt(W / 2, H / 2, -1));
  $("zoom-all").addEventListener("click", () => { fitAll(); invalidate(); });

  // The link nearest a screen point (within 6 px) among those shown; a linear pass over typed arrays.
  function pick(px, py) {
    const s = scale();
    const wx = view.cx + (px - W / 2) / s, wy = view.cy + (py - H / 2) / s;
    const tol = 6 / s, tol2 = tol * tol;
    let best = -1, bestD = tol2;
    for (let v = 0; v < shownByVerdict.length; v++) {
      const idx = shownByVerdict[v];
      for (let k = 0; k < idx.length; k++) {
        const i = idx[k];
        const ax = x1[i], ay = y1[i], bx = x2[i], by = y2[i];
        if ((wx < ax - tol && wx < bx - tol) || (wx > ax + tol && wx > bx + tol) || (wy < ay - tol && wy < by - tol) || (wy > ay + tol && wy > by + tol)) continue;
        const dx = bx - ax, dy = by - ay, l2 = dx * dx + dy * dy;
        let t = l2 > 0 ? ((wx - ax) * dx + (wy - ay) * dy) / l2 : 0;
        t = t < 0 ? 0 : t > 1 ? 1 : t;
        const ex = ax + t * dx - wx, ey = ay + t * dy - wy, d2 = ex * ex + ey * ey;
        if (d2 < bestD || (d2 === bestD && best >= 0 && rank[i] < rank[best])) { bestD = d2; best = i; }
      }
    }
    return best;
  }

  // ---- selection and details -------------------------------------------------------------------
  function select(i, fromTable) {
    selected = i;
    if (fromTable) {  // bring the link into view if it is not
      const s = scale();
      const mx = (x1[i] + x2[i]) / 2, my = (y1[i] + y2[i]) / 2;
      if (Math.abs(mx - view.cx) * s > W / 2 - 20 || Math.abs(my - view.cy) * s > H / 2 - 20) { view.cx = mx; view.cy = my; invalidate(); }
    } else {
      const k = shown.indexOf(i);
      if (k >= 0 && (k * ROW < tbody.scrollTop || (k + 1) * ROW > tbody.scrollTop + tbody.clientHeight)) tbody.scrollTop = Math.max(0, k * ROW - tbody.clientHeight / 2);
    }
    renderTable(false);
    showDetail(i);
    request();
  }

  function el(tag, cls, text) { const e = document.createElement(tag); if (cls) e.className = cls; if (text !== undefined) e.textContent = text; return e; }

  function showDetail(i) {
    const box = $("detail");
    box.replaceChildren();
    box.dataset.link = String(i);
    box.appendChild(el("h2", "", siteNames[linkA[i]] + " \u2192 " + siteNames[linkB[i]]));
    const sub = el("div", "sub");
    sub.appendChild(chip(verdict[i]));
    sub.appendChild(document.createTextNode("  \u00b7  rank " + rank[i]));
    box.appendChild(sub);
    const j = profileOf.get(i);
    if (j !== undefined && !problems[i]) {
      const cv = el("canvas"); cv.id = "profile"; box.appendChild(cv);
      const lg = el("div", "legend");
      const items = [["ground + earth bulge at k", D.palette.ground_edge], ["line of sight", D.palette.line], ["first Fresnel zone", D.palette.fresnel], ["surface at k worst", D.palette.worst_k], ["worst point", D.palette.worst_point]];
      if (pClutter) items.splice(1, 0, ["clutter (surface model)", D.palette.clutter]);
      for (const [t, c] of items) { const s = el("span", "", t); s.style.setProperty("--c", c); lg.appendChild(s); }
      box.appendChild(lg);
      requestAnimationFrame(() => drawProfile(cv, i, j));
    } else {
      box.appendChild(el("div", "note", problems[i] ? "Not profiled: " + problems[i] : D.no_profile_note));
    }
    const t = el("table", "numbers");
    for (const c of D.columns) {
      const tr = el("tr"); tr.dataset.col = c.name;
      tr.appendChild(el("td", "", c.label));
      tr.appendChild(el("td", "v", (fmt(c.name, i) || "\u2014") + (fmt(c.name, i) && c.unit ? " " + c.unit : "")));
      t.appendChild(tr);
    }
    box.appendChild(t);
  }

  function drawProfile(cv, i, j) {
    const r = cv.getBoundingClientRect();
    const w = Math.max(200, r.width), h = Math.max(120, r.height);
    cv.width = Math.round(w * dpr); cv.height = Math.round(h * dpr);
    const c = cv.getContext("2d");
    c.setTransform(dpr, 0, 0, dpr, 0, 0);
    const n = P.points, step = P.step_m, base = pBase[j];
    const L = cols.distance_km.values[i] * 1000;
    const k = cols.k ? cols.k.values[i] : 4 / 3, kw = cols.k_worst ? cols.k_worst.values[i] : NaN;
    const ha = cols.antenna_a_amsl_m ? cols.antenna_a_amsl_m.values[i] : NaN, hb = cols.antenna_b_amsl_m ? cols.antenna_b_amsl_m.values[i] : NaN;
    const lam = P.wavelength_m, R2 = 2 * D.earth_radius_m;
    const d = [], g = [], gs = [], gw = [], ln = [], f1 = [];
    for (let q = 0; q < n; q++) {
      const dq = L * q / (n - 1), d1 = dq, d2 = Math.max(L - dq, 0);
      const code = pGround[j * n + q];
      const ground = code === 65535 ? NaN : base + code * step;
      const cl = pClutter ? pClutter[j * n + q] * step : 0;
      const bulge = d1 * d2 / (R2 * k);                        // ITU-R P.526-15 s. 2 (effective earth radius k a)
      d.push(dq); g.push(ground + bulge); gs.push(ground + cl + bulge);
      gw.push(kw === kw ? ground + cl + d1 * d2 / (R2 * kw) : NaN);
      ln.push(ha + (hb - ha) * dq / L);
      f1.push(lam === lam && L > 0 ? Math.sqrt(lam * d1 * d2 / L) : 0);  // ITU-R P.526-15 eq. 2
    }
    let lo = Infinity, hi = -Infinity;
    for (let q = 0; q < n; q++) { if (g[q] === g[q]) lo = Math.min(lo, g[q]); for (const v of [gs[q], ln[q] + f1[q], gw[q]]) if (v === v) hi = Math.max(hi, v); }
    if (!isFinite(lo)) { lo = 0; hi = 1; }
    const pad = (hi - lo) * 0.08 + 1; lo -= pad; hi += pad;
    const ml = 44, mr = 8, mt = 8, mb = 22;
    const X = (v) => ml + (v / Math.max(L, 1)) * (w - ml - mr), Y = (v) => mt + (hi - v) / (hi - lo) * (h - mt - mb);
    c.font = "10px system-ui, sans-serif"; c.fillStyle = "#5b6670"; c.strokeStyle = "#e3e6e8"; c.lineWidth = 1;
    const yStep = niceStep((hi - lo) / 4);
    c.textAlign = "right"; c.textBaseline = "middle";
    for (let v = Math.ceil(lo / yStep) * yStep; v <= hi; v += yStep) { c.beginPath(); c.moveTo(ml, Y(v)); c.lineTo(w - mr, Y(v)); c.stroke(); c.fillText(String(Math.round(v)), ml - 4, Y(v)); }
    const xStep = niceStep(L / 1000 / 5) * 1000;
    c.textAlign = "center"; c.textBaseline = "top";
    for (let v = 0; v <= L + 1e-6; v += xStep) c.fillText(+(v / 1000).toFixed(3) + (v + xStep > L ? " km" : ""), X(v), h - mb + 5);
    c.save(); c.translate(10, mt + (h - mt - mb) / 2); c.rotate(-Math.PI / 2); c.textAlign = "center"; c.fillText("m", 0, 0); c.restore();
    // ground (with the earth bulge at the design k), then the clutter above it
    const poly = (ys, base2) => { c.beginPath(); c.moveTo(X(d[0]), Y(base2 ? base2[0] : lo)); for (let q = 0; q < n; q++) c.lineTo(X(d[q]), Y(ys[q])); c.lineTo(X(d[n - 1]), Y(base2 ? base2[n - 1] : lo)); if (base2) for (let q = n - 1; q >= 0; q--) c.lineTo(X(d[q]), Y(base2[q])); c.closePath(); };
    if (pClutter) { poly(gs, g); c.fillStyle = D.palette.clutter; c.globalAlpha = 0.7; c.fill(); c.globalAlpha = 1; }
    poly(g, null); c.fillStyle = D.palette.ground_fill; c.fill();
    c.strokeStyle = D.palette.ground_edge; c.lineWidth = 1.2; c.beginPath(); for (let q = 0; q < n; q++) c[q ? "lineTo" : "moveTo"](X(d[q]), Y(g[q])); c.stroke();
    if (kw === kw) { c.setLineDash([2, 3]); c.strokeStyle = D.palette.worst_k; c.beginPath(); for (let q = 0; q < n; q++) c[q ? "lineTo" : "moveTo"](X(d[q]), Y(gw[q])); c.stroke(); c.setLineDash([]); }
    // Fresnel zone around the line, the line, the masts
    c.fillStyle = D.palette.fresnel; c.globalAlpha = 0.18; c.beginPath();
    for (let q = 0; q < n; q++) c[q ? "lineTo" : "moveTo"](X(d[q]), Y(ln[q] + f1[q]));
    for (let q = n - 1; q >= 0; q--) c.lineTo(X(d[q]), Y(ln[q] - f1[q]));
    c.closePath(); c.fill(); c.globalAlpha = 1;
    c.strokeStyle = D.palette.fresnel; c.setLineDash([5, 3]); c.lineWidth = 1;
    for (const sgn of [1, -1]) { c.beginPath(); for (let q = 0; q < n; q++) c[q ? "lineTo" : "moveTo"](X(d[q]), Y(ln[q] + sgn * f1[q])); c.stroke(); }
    c.setLineDash([]);
    c.strokeStyle = D.palette.line; c.lineWidth = 1.6; c.beginPath(); c.moveTo(X(0), Y(ln[0])); c.lineTo(X(L), Y(ln[n - 1])); c.stroke();
    c.strokeStyle = "#1c2226"; c.lineWidth = 2;
    c.beginPath(); c.moveTo(X(0), Y(g[0])); c.lineTo(X(0), Y(ha)); c.moveTo(X(L), Y(g[n - 1])); c.lineTo(X(L), Y(hb)); c.stroke();
    // the worst point as the screening found it (distance and clearance from the result)
    const wd = cols.worst_point_km ? cols.worst_point_km.values[i] * 1000 : NaN, wc = cols.worst_clearance_m ? cols.worst_clearance_m.values[i] : NaN;
    if (wd === wd && wc === wc) {
      const px = X(wd), py = Y(ha + (hb - ha) * wd / L - wc);
      c.strokeStyle = D.palette.worst_point; c.lineWidth = 2.2;
      c.beginPath(); c.moveTo(px - 4, py - 4); c.lineTo(px + 4, py + 4); c.moveTo(px + 4, py - 4); c.lineTo(px - 4, py + 4); c.stroke();
      c.setLineDash([2, 2]); c.lineWidth = 1; c.beginPath(); c.moveTo(px, py); c.lineTo(px, Y(ha + (hb - ha) * wd / L)); c.stroke(); c.setLineDash([]);
    }
    cv.dataset.drawn = "1";
  }
  function niceStep(x) { const p = Math.pow(10, Math.floor(Math.log10(Math.max(x, 1e-9)))); for (const m of [1, 2, 5, 10]) if (m * p >= x) return m * p; return 10 * p; }

  // ---- side panel -------------------------------------------------------------------------------
  function buildSide() {
    $("file-name").textContent = D.source;
    $("total-count").textContent = N.toLocaleString("en-US").replace(/,/g, "\u2009");
    $("total-count").dataset.n = String(N);
    const counts = VERDICTS.map(() => 0);
    for (let i = 0; i < N; i++) if (verdict[i] < counts.length) counts[verdict[i]]++;
    const box = $("verdicts");
    VERDICTS.forEach((v, k) => {
      const l = el("label", "verdict-row");
      const cb = el("input"); cb.type = "checkbox"; cb.checked = true; cb.dataset.verdict = v;
      cb.addEventListener("change", () => { verdictOn[k] = cb.checked; applyFilters(); });
      const sw = el("span", "swatch"); sw.style.background = COLOURS[k];
      l.append(cb, sw, el("span", "", v), el("span", "n", String(counts[k])));
      box.appendChild(l);
    });
    let timer = 0;
    for (const id of ["margin-min", "margin-max", "dist-min", "dist-max", "site-filter"]) {
      $(id).addEventListener("input", () => { clearTimeout(timer); timer = setTimeout(applyFilters, 120); });
      $(id).addEventListener("change", applyFilters);
    }
    $("reset-filters").addEventListener("click", () => {
      for (const id of ["margin-min", "margin-max", "dist-min", "dist-max", "site-filter"]) $(id).value = "";
      for (const cb of box.querySelectorAll("input")) cb.checked = true;
      verdictOn.fill(true); applyFilters();
    });
    $("save-csv").addEventListener("click", saveCsv);
    const notes = $("notes");
    for (const t of D.notes) notes.appendChild(el("div", "note", t));
    if (!D.notes.length) notes.appendChild(el("div", "", "None."));
    if (D.tiles) $("attribution").textContent = "Basemap: " + D.tiles_host;
    const run = $("run");
    if (!D.run) { run.appendChild(el("div", "", "This result carries no run description.")); return; }
    const t = el("table");
    const add = (k, v) => { const tr = el("tr"); tr.append(el("td", "", k), el("td", "", v)); t.appendChild(tr); };
    const walk = (prefix, o) => {
      if (o !== null && typeof o === "object" && !Array.isArray(o)) { for (const k of Object.keys(o)) walk(prefix ? prefix + "." + k : k, o[k]); }
      else if (Array.isArray(o) && o.some((x) => x !== null && typeof x === "object")) o.forEach((x, n) => walk(prefix + "[" + (n + 1) + "]", x));
      else add(prefix, Array.isArray(o) ? o.join(", ") : String(o));
    };
    walk("", D.run);
    run.appendChild(t);
  }

  // A small face for tests and benchmarks: the view (world units) and a few actions.
  window.terrahopReview = {
    view: () => ({ cx: view.cx, cy: view.cy, z: view.z, width: W, height: H }),
    setView: (cx, cy, z) => { view.cx = cx; view.cy = cy; view.z = z; invalidate(); },
    pan: (dx, dy) => { moving = true; view.cx -= dx / scale(); view.cy -= dy / scale(); request(); settle(); },
    selected: () => selected,
    pickAt: (px, py) => pick(px, py),
    select: (i) => select(i, true),
    lastDrawMs: () => window.__reviewLastDraw,
    drawing: () => job !== null || dirty || pending,
    shown: () => shown.length,
  };

  buildSide();
  new ResizeObserver(() => { resize(); renderTable(false); }).observe($("mapbox"));
  const r0 = canvas.getBoundingClientRect();
  W = Math.max(1, Math.round(r0.width)); H = Math.max(1, Math.round(r0.height));
  fitAll();
  resize();
  applyFilters();
})();
