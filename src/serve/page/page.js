"use strict";
// mettle's page: picks a model, sends heats to this server's API
// (docs/serve.md) and draws what comes back. No library, nothing loaded
// from elsewhere.
(function () {
  const $ = (id) => document.getElementById(id);
  const token = new URLSearchParams(location.search).get("token");
  let models = [];
  let model = null;
  let lastRows = null; // {body, source} of the last estimate, for downloads
  const XLSX = "application/vnd.openxmlformats-officedocument.spreadsheetml.sheet";

  function esc(s) {
    return String(s).replace(/[&<>"']/g, (c) => ({ "&": "&amp;", "<": "&lt;", ">": "&gt;", '"': "&quot;", "'": "&#39;" }[c]));
  }
  // a number for reading: 4 significant figures at least (as the CLI's tables)
  function num(v) {
    if (v === null || v === undefined || !isFinite(v)) return String(v);
    const a = Math.abs(v);
    if (a !== 0 && (a < 1e-3 || a >= 1e7)) return v.toExponential(4);
    if (a >= 100) return v.toFixed(1);
    if (a >= 1) return v.toFixed(3);
    return v.toFixed(4);
  }
  // a value for a form field: short, exact enough
  function field(v) {
    if (v === null || v === undefined) return "";
    return String(Number(v.toPrecision(4)));
  }
  function pct(p) { return (100 * p).toFixed(1) + " %"; }
  // three significant figures, no trailing zeros (ranges, energies)
  function short(v) { return v === null || v === undefined ? "" : String(Number(Number(v).toPrecision(3))); }
  // round tick values: steps of 1, 2 or 5 times a power of ten
  function ticks(lo, hi, n) {
    const raw = (hi - lo) / n, mag = Math.pow(10, Math.floor(Math.log10(raw || 1))), r = raw / mag;
    const step = (r >= 7.5 ? 10 : r >= 3.5 ? 5 : r >= 1.5 ? 2 : 1) * mag;
    const dec = Math.max(0, -Math.floor(Math.log10(step)));
    const out = [];
    for (let v = Math.ceil(lo / step) * step; v <= hi + step * 1e-9; v += step) out.push({ v: v, text: v.toFixed(dec) });
    return out;
  }

  async function api(path, opts) {
    opts = opts || {};
    opts.headers = Object.assign({}, opts.headers || {});
    if (token) opts.headers["Authorization"] = "Bearer " + token;
    const r = await fetch(path, opts);
    const type = r.headers.get("content-type") || "";
    const body = type.startsWith("application/json") ? await r.json() : await r.text();
    if (!r.ok) {
      const msg = body && body.error ? body.error : String(body);
      throw new Error("HTTP " + r.status + ": " + msg);
    }
    return body;
  }
  function post(path, obj) {
    return api(path, { method: "POST", headers: { "Content-Type": "application/json" }, body: JSON.stringify(obj) });
  }
  // rows as a request: JSON ({row}, {csv, source}), or a workbook's bytes
  // ({workbook, source, sheet}) sent as they are with the query naming
  // the file and sheet; `extra` adds query pairs (format, require)
  function rowsRequest(path, rowsBody, extra) {
    const q = new URLSearchParams(extra || []);
    if (!rowsBody.workbook) {
      const s = q.toString();
      return [path + (s ? "?" + s : ""), { method: "POST", headers: { "Content-Type": "application/json" }, body: JSON.stringify(rowsBody) }];
    }
    q.append("source", rowsBody.source);
    if (rowsBody.sheet) q.append("sheet", rowsBody.sheet);
    return [path + "?" + q.toString(), { method: "POST", headers: { "Content-Type": XLSX }, body: rowsBody.workbook }];
  }
  function showError(e) {
    const box = $("error");
    box.textContent = e ? e.message : "";
    box.hidden = !e;
  }
  async function busy(f) {
    showError(null);
    $("busy").hidden = false;
    try { await f(); } catch (e) { showError(e); } finally { $("busy").hidden = true; }
  }

  // ---- model ----------------------------------------------------------
  function unitOf(name) {
    const t = model.targets.find((t) => t.name === name);
    return t && t.unit ? t.unit : "";
  }
  function showCard() {
    const m = model;
    const targets = m.targets.map((t) => "<code>" + esc(t.name) + "</code>" + (t.unit ? " [" + esc(t.unit) + "]" : "") +
      " " + short(t.min) + "–" + short(t.max)).join(", ");
    $("card").innerHTML =
      '<div><span class="k">targets</span> ' + targets + "</div>" +
      '<div><span class="k">trained on</span> ' + esc(m.training.data_file) + " (" + m.training.rows + " rows, data sha256 " +
      esc(m.training.data_sha256.slice(0, 12)) + "…) · <span class=\"k\">model file written</span> " + esc(m.file_written || "unknown") +
      ' · <span class="k">fingerprint</span> <code title="SHA-256 of the model file">' + esc(m.fingerprint.slice(0, 16)) + "</code>" +
      " · mettle " + esc(m.training.tool_version) + "</div>";
  }
  function buildForm() {
    const f = $("heat");
    f.innerHTML = "";
    for (const i of model.inputs) {
      const id = "in-" + i.name;
      const lab = document.createElement("label");
      lab.htmlFor = id;
      lab.textContent = i.name + (i.unit ? " [" + i.unit + "]" : "");
      const inp = document.createElement("input");
      inp.id = id; inp.name = i.name; inp.inputMode = "decimal"; inp.type = "text";
      inp.value = field(i.base !== null ? i.base : (i.min + i.max) / 2);
      inp.dataset.min = i.min; inp.dataset.max = i.max;
      inp.addEventListener("input", () => markRange(inp));
      const r = document.createElement("span");
      r.className = "range";
      r.textContent = "trained " + short(i.min) + " – " + short(i.max);
      f.append(lab, inp, r);
      markRange(inp);
    }
    const sw = $("sw-input");
    sw.innerHTML = model.inputs.map((i) => "<option>" + esc(i.name) + "</option>").join("");
    const st = $("sw-target");
    st.innerHTML = model.targets.map((t) => "<option>" + esc(t.name) + "</option>").join("");
    sweepRange();
    $("transition-box").hidden = !model.transition;
  }
  function markRange(inp) {
    const v = Number(inp.value);
    const out = inp.value.trim() !== "" && isFinite(v) && (v < Number(inp.dataset.min) || v > Number(inp.dataset.max));
    inp.classList.toggle("outside", out);
    inp.title = out ? "outside the trained range" : "";
  }
  function sweepRange() {
    const i = model.inputs.find((i) => i.name === $("sw-input").value);
    if (!i) return;
    // the trained range and a little beyond, on round values
    const pad = 0.15 * (i.max - i.min), t = ticks(i.min - pad, i.max + pad, 8), step = t.length > 1 ? t[1].v - t[0].v : 0;
    $("sw-from").value = short(Math.max(i.min >= 0 ? 0 : -Infinity, t[0].v - (t[0].v > i.min - pad ? step : 0)));
    $("sw-to").value = short(t[t.length - 1].v + (t[t.length - 1].v < i.max + pad ? step : 0));
  }
  function pickModel() {
    model = models.find((m) => m.id === $("model").value);
    showCard();
    buildForm();
    clearResults();
  }
  function clearResults() {
    for (const id of ["verdict", "result", "probabilities", "rows", "sweep", "transition"]) $(id).innerHTML = "";
    $("verdict").hidden = true;
    lastRows = null;
    $("download-csv").disabled = true;
    $("download-json").disabled = true;
    $("download-xlsx").disabled = true;
  }
  function heatRow() {
    const row = {};
    for (const inp of $("heat").querySelectorAll("input")) row[inp.name] = inp.value.trim();
    return row;
  }
  function requirements() {
    return $("require").value.split("\n").map((s) => s.trim()).filter((s) => s);
  }

  // ---- results --------------------------------------------------------
  // predict's JSON: "targets" (unit, interval kind, the distribution's
  // form) once, "rows" each with estimates keyed by target
  let targetHeads = {};
  function estimatesOf(r) {
    const e = {};
    for (const name of Object.keys(r.estimates)) e[name] = Object.assign({}, targetHeads[name] || {}, r.estimates[name]);
    return e;
  }
  function centre(e) { return e.interval_kind === "normal" ? e.mean : e.median; }
  // the verdict of a row of predict's JSON: a graded "domain" when the
  // server gives one, else in_domain
  function verdictOf(r) {
    if (typeof r.domain === "string") return r.domain;
    if (r.domain && typeof r.domain.level === "string") return r.domain.level;
    return r.in_domain ? "in" : "out";
  }
  function verdictClass(v) { return /^in/.test(v) ? "in" : (/out/.test(v) ? "out" : "caveat"); }
  function showVerdict(r) {
    const v = verdictOf(r);
    const box = $("verdict");
    const text = { in: "Inside the training domain", out: "OUTSIDE the training domain: an extrapolation, whatever its interval" }[verdictClass(v)] ||
      "Thin support (" + v + "): near the training data but with few close rows; usable, check the error bar";
    box.className = "verdict " + verdictClass(v);
    box.dataset.verdict = v;
    box.innerHTML = "<b>Domain: " + esc(text) + "</b>" +
      (r.notes && r.notes.length ? "<ul>" + r.notes.map((n) => "<li>" + esc(n) + "</li>").join("") + "</ul>" : "");
    box.hidden = false;
  }
  // one target's interval bar: the 95 % interval against the trained range
  // of the target, the centre, and the requirement's threshold if any
  function bar(name, e, reqs) {
    const t = model.targets.find((t) => t.name === name);
    const thr = reqs.filter((q) => q.target === name);
    let lo = Math.min(t.min, e.lo95, ...thr.map((q) => q.value));
    let hi = Math.max(t.max, e.hi95, ...thr.map((q) => q.value));
    const pad = 0.04 * (hi - lo || 1); lo -= pad; hi += pad;
    const W = 310, H = 46, x = (v) => 8 + (W - 16) * (v - lo) / (hi - lo);
    let s = '<svg width="' + W + '" height="' + H + '" role="img" aria-label="95 % interval of ' + esc(name) + '">';
    s += '<rect x="' + x(t.min) + '" y="14" width="' + (x(t.max) - x(t.min)) + '" height="14" fill="#eef1f5"/>';
    s += '<rect x="' + x(e.lo95) + '" y="14" width="' + Math.max(1, x(e.hi95) - x(e.lo95)) + '" height="14" fill="var(--band68)" rx="2"/>';
    s += '<line x1="' + x(centre(e)) + '" x2="' + x(centre(e)) + '" y1="10" y2="32" stroke="#12263f" stroke-width="2"/>';
    for (const q of thr) {
      const at = x(q.value), anchor = at < W * 0.25 ? "start" : at > W * 0.75 ? "end" : "middle";
      s += '<line x1="' + at + '" x2="' + at + '" y1="4" y2="38" stroke="var(--bad)" stroke-width="2" stroke-dasharray="4 2"/>';
      s += '<text x="' + at + '" y="46" text-anchor="' + anchor + '" fill="var(--bad)">required ' + esc(q.op + " " + short(q.value)) + "</text>";
    }
    s += '<text x="' + (x(e.lo95) - 2) + '" y="10" text-anchor="end">' + num(e.lo95) + "</text>";
    s += '<text x="' + (x(e.hi95) + 2) + '" y="10" text-anchor="start">' + num(e.hi95) + "</text>";
    return s + "</svg>";
  }
  function parsedRequirements() {
    return requirements().map((text) => {
      const m = text.match(/^\s*([A-Za-z0-9_.%-]+)\s*(>=|<=|≥|≤|>|<)\s*([-+0-9.eE]+)/);
      return m ? { text: text, target: m[1], op: m[2], value: Number(m[3]) } : null;
    }).filter((q) => q);
  }
  function showOne(r) {
    showVerdict(r);
    const reqs = parsedRequirements();
    const est = estimatesOf(r);
    $("result").innerHTML = Object.keys(est).map((name) => {
      const e = est[name];
      const u = e.unit ? " " + esc(e.unit) : "";
      return '<div class="target" data-target="' + esc(name) + '" data-centre="' + centre(e) + '" data-mean="' + e.mean +
        '" data-median="' + e.median + '" data-lo95="' + e.lo95 + '" data-hi95="' + e.hi95 + '" data-sd="' + e.sd + '">' +
        '<div class="name">' + esc(name) + "</div>" +
        '<div class="value">' + num(centre(e)) + "<small>" + u + " (" + (e.interval_kind === "normal" ? "mean" : "median") +
        ")</small></div>" +
        "<div>95 % interval " + num(e.lo95) + " … " + num(e.hi95) + u + "</div>" +
        '<div class="parts">sd ' + num(e.sd) + u + " = noise " + num(e.noise_sd) + " (test scatter) + model " + num(e.model_sd) +
        " (the model's own uncertainty)" + (e.interval_kind !== "normal" ? "; " + esc(e.interval_kind.replace("_", "-")) + " interval" : "") +
        "</div>" + bar(name, e, reqs) + "</div>";
    }).join("") + '<div class="legend full">Bars: the 95 % interval (blue) and the centre (dark tick) over the range of the target in the training data (grey); a dashed red line marks a typed requirement.</div>';
    $("rows").innerHTML = "";
  }
  function showMany(rows, source, clickable) {
    $("result").innerHTML = "";
    const n = rows.length, out = rows.filter((r) => verdictClass(verdictOf(r)) === "out").length;
    const box = $("verdict");
    box.className = "verdict " + (out ? "out" : "in");
    box.dataset.verdict = out ? "out" : "in";
    box.innerHTML = "<b>" + n + " rows from " + esc(source) + ": " + (out ? out + " outside the training domain" : "all inside the training domain") +
      "</b>" + (clickable ? '<div class="hint">Click a row to load it into the form.</div>' : "");
    box.hidden = false;
    const names = Object.keys(estimatesOf(rows[0]));
    const ids = rows.some((r) => r.id !== undefined);
    let h = '<div class="tablewrap"><table id="rows-table"><thead><tr><th>row</th>' + (ids ? '<th class="text">id</th>' : "");
    for (const t of names) h += "<th>" + esc(t) + "</th><th>95 % interval</th>";
    h += '<th class="text">domain</th></tr></thead><tbody>';
    rows.forEach((r, k) => {
      const est = estimatesOf(r);
      h += '<tr class="pick" data-index="' + k + '"><td>' + r.row + "</td>" + (ids ? '<td class="text id">' + esc(r.id || "") + "</td>" : "");
      for (const t of names) {
        const e = est[t];
        h += '<td data-target="' + esc(t) + '" data-centre="' + centre(e) + '">' + num(centre(e)) + "</td><td>" + num(e.lo95) + " … " + num(e.hi95) + "</td>";
      }
      const v = verdictOf(r);
      h += '<td class="text ' + verdictClass(v) + '">' + esc(v) + (r.notes.length ? ": " + esc(r.notes.join("; ")) : "") + "</td></tr>";
    });
    $("rows").innerHTML = h + "</tbody></table></div>";
  }
  async function showProbabilities(rowsBody) {
    const reqs = requirements();
    if (!reqs.length) { $("probabilities").innerHTML = ""; return; }
    const path = "/api/models/" + encodeURIComponent(model.id) + "/requirements";
    const out = rowsBody.workbook
      ? await api(...rowsRequest(path, rowsBody, reqs.map((r) => ["require", r])))
      : await post(path, Object.assign({ require: reqs }, rowsBody));
    let h = '<h3>Probability of meeting the requirements</h3><div class="tablewrap"><table id="prob-table"><thead><tr><th>row</th>';
    for (const q of reqs) h += "<th>" + esc(q) + "</th>";
    h += "<th>all</th></tr></thead><tbody>";
    for (const r of out.rows) {
      h += "<tr><td>" + r.row + "</td>";
      for (const q of r.requirements) h += '<td class="prob">' + pct(q.probability) + "</td>";
      h += '<td class="prob" data-joint="' + r.joint_probability + '">' + pct(r.joint_probability) + "</td></tr>";
    }
    $("probabilities").innerHTML = h + '</tbody></table></div><div class="hint">A requirement with @INPUT=VALUE is judged with those inputs replaced; "all" is the probability of meeting every requirement, the scatter of the targets correlated as on the training rows where the model holds a correlation.</div>';
  }
  async function estimate(rowsBody, source) {
    const path = "/api/models/" + encodeURIComponent(model.id) + "/predict";
    const res = await api(...rowsRequest(path, rowsBody));
    targetHeads = res.targets || {};
    const rows = res.rows;
    lastRows = { body: rowsBody, source: source };
    $("download-csv").disabled = false;
    $("download-json").disabled = false;
    $("download-xlsx").disabled = false;
    if (rows.length === 1 && rowsBody.row) showOne(rows[0]); else showMany(rows, source, !!rowsBody.csv);
    $("rows").onclick = (ev) => {
      const tr = ev.target.closest("tr.pick");
      if (tr && rowsBody.csv) loadRow(rowsBody.csv, Number(tr.dataset.index));
    };
    await showProbabilities(rowsBody);
  }
  // put row k of a pasted or uploaded table into the form
  function loadRow(text, k) {
    const lines = text.split(/\r?\n/).filter((l) => l.trim());
    const sep = lines[0].includes("\t") && !lines[0].includes(",") ? "\t" : ",";
    const head = lines[0].split(sep).map((s) => s.trim().replace(/^"|"$/g, ""));
    const cells = (lines[k + 1] || "").split(sep);
    for (const inp of $("heat").querySelectorAll("input")) {
      const j = head.indexOf(inp.name);
      if (j >= 0 && cells[j] !== undefined) { inp.value = cells[j].trim(); markRange(inp); }
    }
  }
  async function download(format) {
    if (!lastRows) return;
    const [path, opts] = rowsRequest("/api/models/" + encodeURIComponent(model.id) + "/predict", lastRows.body, [["format", format]]);
    if (token) opts.headers["Authorization"] = "Bearer " + token;
    const r = await fetch(path, opts);
    if (!r.ok) throw new Error("HTTP " + r.status + ": " + (await r.text()));
    const blob = await r.blob();
    const a = document.createElement("a");
    a.href = URL.createObjectURL(blob);
    a.download = model.id + "_estimates." + format;
    document.body.append(a);
    a.click();
    setTimeout(() => { URL.revokeObjectURL(a.href); a.remove(); }, 1000);
  }

  // ---- charts ---------------------------------------------------------
  // a curve with its 68 % and 95 % bands; stretches outside the domain
  // shaded; optional horizontal lines (energies) and a vertical marker
  function curveChart(c, k, opts) {
    const pts = c.points, W = 720, H = 300, L = 58, R = 14, T = 14, B = 40;
    const xs = pts.map((p) => p.x), b = pts.map((p) => p.bands[k]);
    const x0 = Math.min(...xs), x1 = Math.max(...xs);
    let y0 = Math.min(...b.map((v) => v.lo95)), y1 = Math.max(...b.map((v) => v.hi95));
    for (const l of opts.levels || []) { y0 = Math.min(y0, l); y1 = Math.max(y1, l); }
    const pad = 0.05 * (y1 - y0 || 1); y0 -= pad; y1 += pad;
    const X = (v) => L + (W - L - R) * (v - x0) / (x1 - x0 || 1), Y = (v) => T + (H - T - B) * (1 - (v - y0) / (y1 - y0));
    const area = (lo, hi) => "M" + pts.map((p, i) => X(xs[i]) + "," + Y(lo(b[i]))).join("L") + "L" +
      pts.map((p, i) => X(xs[pts.length - 1 - i]) + "," + Y(hi(b[pts.length - 1 - i]))).join("L") + "Z";
    let s = '<svg width="100%" viewBox="0 0 ' + W + " " + H + '" role="img" aria-label="' + esc(opts.title) + '">';
    // out-of-domain stretches
    for (let i = 0; i < pts.length; i++) {
      if (pts[i].in_domain) continue;
      const a = i > 0 ? (xs[i - 1] + xs[i]) / 2 : xs[i], z = i < pts.length - 1 ? (xs[i] + xs[i + 1]) / 2 : xs[i];
      s += '<rect class="ood" x="' + X(a) + '" y="' + T + '" width="' + Math.max(1, X(z) - X(a)) + '" height="' + (H - T - B) + '" fill="#f6d5d2" opacity="0.8"/>';
    }
    s += '<path d="' + area((v) => v.lo95, (v) => v.hi95) + '" fill="var(--band95)"/>';
    s += '<path d="' + area((v) => v.lo68, (v) => v.hi68) + '" fill="var(--band68)"/>';
    s += '<path d="M' + pts.map((p, i) => X(xs[i]) + "," + Y(b[i].centre)).join("L") + '" fill="none" stroke="#12263f" stroke-width="2"/>';
    for (const l of opts.levels || []) {
      s += '<line x1="' + L + '" x2="' + (W - R) + '" y1="' + Y(l) + '" y2="' + Y(l) + '" stroke="var(--bad)" stroke-dasharray="5 3"/>';
      s += '<text x="' + (W - R - 2) + '" y="' + (Y(l) - 3) + '" text-anchor="end" fill="var(--bad)">' + short(l) + "</text>";
    }
    if (opts.marker !== undefined && isFinite(opts.marker) && opts.marker >= x0 && opts.marker <= x1) {
      s += '<line x1="' + X(opts.marker) + '" x2="' + X(opts.marker) + '" y1="' + T + '" y2="' + (H - B) + '" stroke="#555" stroke-dasharray="2 3"/>';
      s += '<text x="' + (X(opts.marker) + 3) + '" y="' + (T + 10) + '">this heat</text>';
    }
    // axes with five ticks
    s += '<line x1="' + L + '" x2="' + (W - R) + '" y1="' + (H - B) + '" y2="' + (H - B) + '" stroke="#333"/>';
    s += '<line x1="' + L + '" x2="' + L + '" y1="' + T + '" y2="' + (H - B) + '" stroke="#333"/>';
    for (const t of ticks(x0, x1, 6)) {
      s += '<line x1="' + X(t.v) + '" x2="' + X(t.v) + '" y1="' + (H - B) + '" y2="' + (H - B + 4) + '" stroke="#333"/>';
      s += '<text x="' + X(t.v) + '" y="' + (H - B + 16) + '" text-anchor="middle">' + t.text + "</text>";
    }
    for (const t of ticks(y0, y1, 5)) {
      s += '<line x1="' + L + '" x2="' + (W - R) + '" y1="' + Y(t.v) + '" y2="' + Y(t.v) + '" stroke="#e3e7ec"/>';
      s += '<text x="' + (L - 4) + '" y="' + (Y(t.v) + 4) + '" text-anchor="end">' + t.text + "</text>";
    }
    s += '<text x="' + ((L + W - R) / 2) + '" y="' + (H - 6) + '" text-anchor="middle">' + esc(opts.xlabel) + "</text>";
    s += '<text transform="translate(12,' + ((T + H - B) / 2) + ') rotate(-90)" text-anchor="middle">' + esc(opts.ylabel) + "</text>";
    return s + "</svg>" + '<div class="legend">line: centre · dark band: 68 % · light band: 95 % · red shading: outside the training domain</div>';
  }
  async function doSweep() {
    const input = $("sw-input").value, k = model.targets.findIndex((t) => t.name === $("sw-target").value);
    const row = heatRow();
    const c = await post("/api/models/" + encodeURIComponent(model.id) + "/sweep",
      { row: row, input: input, from: Number($("sw-from").value), to: Number($("sw-to").value), steps: 61 });
    const inp = model.inputs.find((i) => i.name === input);
    const reqs = parsedRequirements().filter((q) => q.target === c.targets[k]);
    $("sweep").innerHTML = curveChart(c, k, {
      title: "sweep of " + input, xlabel: input + (inp && inp.unit ? " [" + inp.unit + "]" : ""),
      ylabel: c.targets[k] + (c.units[k] ? " [" + c.units[k] + "]" : ""), marker: Number(row[input]), levels: reqs.map((q) => q.value),
    }) + notesOf(c.base_notes);
  }
  function notesOf(n) { return n && n.length ? '<div class="hint">' + n.map(esc).join("<br>") + "</div>" : ""; }
  async function doTransition() {
    const tr = model.transition;
    const energies = $("tr-energies").value.split(",").map((s) => Number(s.trim())).filter((v) => isFinite(v) && v > 0);
    const t = await post("/api/models/" + encodeURIComponent(model.id) + "/transition",
      { row: heatRow(), temperature_input: tr.temperature_input, target: tr.target, energies: energies, require: $("tr-require").value.trim() || null });
    const k = t.curve.targets.indexOf(t.target);
    let h = curveChart(t.curve, k, { title: "transition curve", xlabel: tr.temperature_input + " [°C]", ylabel: t.target + " [J]", levels: energies });
    h += '<table id="crossings"><thead><tr><th>energy</th><th>centre curve</th><th>median</th><th>95 % interval</th><th>curves crossing</th></tr></thead><tbody>';
    const o = (v) => (v === null ? "not reached" : num(v) + " °C");
    for (const c of t.crossings) {
      h += "<tr><td>T" + short(c.energy) + "J</td><td>" + o(c.centre) + "</td><td>" + o(c.median) + "</td><td>" + o(c.lo95) + " … " + o(c.hi95) +
        "</td><td>" + pct(c.reached) + "</td></tr>";
    }
    h += "</tbody></table>";
    if (t.requirement) {
      h += '<div>Requirement ' + esc(t.requirement.requirement) + ': P(single test meets it) <span class="prob">' + pct(t.requirement.p_single_test) +
        '</span>, P(mean energy meets it) <span class="prob">' + pct(t.requirement.p_mean) + "</span></div>";
    }
    $("transition").innerHTML = h + notesOf(t.notes);
  }

  // ---- wiring ---------------------------------------------------------
  $("model").addEventListener("change", pickModel);
  $("sw-input").addEventListener("change", sweepRange);
  $("reset").addEventListener("click", buildForm);
  $("estimate").addEventListener("click", () => busy(() => estimate({ row: heatRow() }, "the form")));
  $("paste-go").addEventListener("click", () => busy(() => {
    const text = $("paste").value;
    if (!text.trim()) throw new Error("paste rows with a header row first");
    return estimate({ csv: text, source: "pasted rows" }, "pasted rows");
  }));
  $("file").addEventListener("change", () => busy(async () => {
    const f = $("file").files[0];
    if (!f) return;
    // a workbook goes to the server as it is (the server reads it as
    // `mettle predict --input FILE.xlsx` does); text is shown in the paste box
    if (/\.xlsx?$/i.test(f.name) || f.type === XLSX) {
      const sheet = $("sheet").value.trim();
      const label = f.name + (sheet ? ", sheet " + sheet : "");
      await estimate({ workbook: await f.arrayBuffer(), source: f.name, sheet: sheet }, label);
      return;
    }
    const text = await f.text();
    $("paste").value = text;
    await estimate({ csv: text, source: f.name }, f.name);
  }));
  $("download-csv").addEventListener("click", () => busy(() => download("csv")));
  $("download-json").addEventListener("click", () => busy(() => download("json")));
  $("download-xlsx").addEventListener("click", () => busy(() => download("xlsx")));
  $("sw-go").addEventListener("click", () => busy(doSweep));
  $("tr-go").addEventListener("click", () => busy(doTransition));
  busy(async () => {
    const r = await api("/api/models");
    models = r.models;
    $("model").innerHTML = models.map((m) => '<option value="' + esc(m.id) + '">' + esc(m.id) + "</option>").join("");
    pickModel();
    document.body.dataset.ready = "1";
  });
})();
