// Rectifield field check: the mode for a technician at a drive with a meter.
// The readings go to the engine (wasm_bindgen.field_json), which returns the
// expected bus, the fault signatures ranked by distance from the readings,
// the verdict and the safety lines.  Text from the user or the engine is only
// ever set through textContent, never as HTML.
"use strict";

(function () {
  // One entry per input: id (test hook), path in the FieldInput, label, unit.
  // kind: "num" (optional number), "req" (number the engine always needs),
  // "check" (boolean); tri: one of three values of an array.
  const GROUPS = [
    {
      title: "Readings at the drive",
      fields: [
        { id: "f_vll1", path: "readings.v_ll_rms_v", tri: 0, label: "Line voltage L1-L2", unit: "V" },
        { id: "f_vll2", path: "readings.v_ll_rms_v", tri: 1, label: "Line voltage L2-L3", unit: "V" },
        { id: "f_vll3", path: "readings.v_ll_rms_v", tri: 2, label: "Line voltage L3-L1", unit: "V" },
        { id: "f_dc_mean", path: "readings.dc_bus_mean_v", label: "DC bus, meter on DC", unit: "V" },
        { id: "f_dc_ac", path: "readings.dc_bus_ac_rms_v", label: "DC bus, meter on AC (ripple)", unit: "V" },
        { id: "f_ripple_hz", path: "readings.ripple_hz", label: "Ripple frequency (meter Hz)", unit: "Hz" },
        { id: "f_i1", path: "readings.line_i_rms_a", tri: 0, label: "Line current L1", unit: "A" },
        { id: "f_i2", path: "readings.line_i_rms_a", tri: 1, label: "Line current L2", unit: "A" },
        { id: "f_i3", path: "readings.line_i_rms_a", tri: 2, label: "Line current L3", unit: "A" },
      ],
    },
    {
      title: "Nameplate and load",
      fields: [
        { id: "f_supply_v", path: "nameplate.supply_v_ll_rms_v", kind: "req", label: "Supply, nominal line-to-line", unit: "V" },
        { id: "f_supply_hz", path: "nameplate.supply_f_hz", kind: "req", label: "Supply frequency", unit: "Hz" },
        { id: "f_rating_kw", path: "nameplate.rating_kw", label: "Drive rating", unit: "kW" },
        { id: "f_rating_a", path: "nameplate.rating_a", label: "Drive rated current (if no kW)", unit: "A" },
        { id: "f_load_kw", path: "nameplate.load_kw", label: "Present load (drive display)", unit: "kW" },
        { id: "f_load_a", path: "nameplate.load_current_a", label: "Present line current (one clamp)", unit: "A" },
        { id: "f_reactor", path: "nameplate.line_reactor_z_pct", label: "Line reactor, if fitted", unit: "%" },
        { id: "f_choke", path: "nameplate.dc_choke_l_mh", label: "DC choke, if fitted", unit: "mH" },
        { id: "f_bus_c", path: "nameplate.bus_c_uf", label: "Bus capacitance, if known", unit: "µF" },
        { id: "f_precharge", path: "nameplate.precharge_fitted", kind: "check", label: "Precharge resistor fitted" },
        { id: "f_precharge_r", path: "nameplate.precharge_r_ohm", label: "Precharge resistor, if known", unit: "Ω" },
        { id: "f_source_z", path: "nameplate.source_z_pct", label: "Supply impedance, if known", unit: "%" },
      ],
    },
    {
      title: "Trip levels (drive manual)",
      fields: [
        { id: "f_uv", path: "trips.undervoltage_v", label: "Undervoltage trip", unit: "V DC" },
        { id: "f_ov", path: "trips.overvoltage_v", label: "Overvoltage trip", unit: "V DC" },
      ],
    },
    {
      title: "Meter accuracy: ± (% of reading + counts)",
      details: true,
      fields: [
        { id: "f_m_dc_pct", path: "meter.dc_v.pct", kind: "req", label: "DC volts: % of reading", unit: "%" },
        { id: "f_m_dc_dig", path: "meter.dc_v.digits", kind: "req", label: "DC volts: counts", unit: "" },
        { id: "f_m_dc_res", path: "meter.dc_v.resolution", kind: "req", label: "DC volts: one count", unit: "V" },
        { id: "f_m_ac_pct", path: "meter.ac_v.pct", kind: "req", label: "AC volts: % of reading", unit: "%" },
        { id: "f_m_ac_dig", path: "meter.ac_v.digits", kind: "req", label: "AC volts: counts", unit: "" },
        { id: "f_m_ac_res", path: "meter.ac_v.resolution", kind: "req", label: "AC volts: one count", unit: "V" },
        { id: "f_m_i_pct", path: "meter.current.pct", kind: "req", label: "Current: % of reading", unit: "%" },
        { id: "f_m_i_dig", path: "meter.current.digits", kind: "req", label: "Current: counts", unit: "" },
        { id: "f_m_i_res", path: "meter.current.resolution", kind: "req", label: "Current: one count", unit: "A" },
      ],
    },
  ];
  const FIELDS = [].concat(...GROUPS.map((g) => g.fields));
  // The engine names inputs by their JSON names (the CLI reads JSON); the page
  // shows its own labels instead: "rating_kw" -> "Drive rating".
  const PLAIN = new Map();
  for (const f of FIELDS) {
    const leaf = f.path.split(".").pop();
    if (PLAIN.has(leaf) || /^(pct|digits|resolution)$/.test(leaf)) continue;
    PLAIN.set(leaf, f.tri === undefined ? f.label : f.label.replace(/\s*L\d(-L\d)?$/, "s"));
  }
  const PLAIN_RE = new RegExp("\\b(?:[a-z_]+\\.)*(" + [...PLAIN.keys()].join("|") + ")\\b", "g");
  function plain(text) {
    return String(text).replace(PLAIN_RE, (_, k) => "“" + PLAIN.get(k) + "”");
  }
  const STORE_KEY = "rectifield.field";
  const DEBOUNCE_MS = 350;

  let example = null;
  let ready = false;
  let timer = 0;
  let computed = 0;
  let lastReport = null;

  const $ = (sel, root) => (root || document).querySelector(sel);
  function el(tag, attrs, text) {
    const e = document.createElement(tag);
    if (attrs) for (const k of Object.keys(attrs)) e.setAttribute(k, attrs[k]);
    if (text !== undefined && text !== null) e.textContent = String(text);
    return e;
  }

  function getPath(obj, path) {
    let o = obj;
    for (const k of path.split(".")) {
      if (o === null || o === undefined) return undefined;
      o = o[k];
    }
    return o;
  }
  function setPath(obj, path, v) {
    const ks = path.split(".");
    let o = obj;
    for (let i = 0; i < ks.length - 1; i++) {
      if (typeof o[ks[i]] !== "object" || o[ks[i]] === null) o[ks[i]] = {};
      o = o[ks[i]];
    }
    o[ks[ks.length - 1]] = v;
  }

  // "480", "480,5", " 1 234.5 " -> number; "" -> null; anything else -> NaN.
  function parseNum(text) {
    const t = String(text).trim().replace(/\s+/g, "").replace(",", ".");
    if (t === "") return null;
    if (!/^[-+]?(\d+\.?\d*|\.\d+)(e[-+]?\d+)?$/i.test(t)) return NaN;
    return Number(t);
  }

  function fmt(v, digits) {
    if (typeof v !== "number" || !Number.isFinite(v)) return "–";
    const d = digits === undefined ? (Math.abs(v) >= 100 ? 0 : Math.abs(v) >= 10 ? 1 : 2) : digits;
    return v.toFixed(d);
  }

  // ------------------------------------------------------------ the form

  function buildForm(host) {
    for (const g of GROUPS) {
      const box = g.details ? el("details", { class: "fc-group" }) : el("fieldset", { class: "fc-group" });
      box.appendChild(el(g.details ? "summary" : "legend", null, g.title));
      const grid = el("div", { class: "fc-grid" });
      for (const f of g.fields) {
        const wrap = el("div", { class: f.kind === "check" ? "fc-field fc-check" : "fc-field" });
        const input = el("input", { id: f.id, "data-path": f.path, autocomplete: "off" });
        if (f.kind === "check") {
          input.type = "checkbox";
          const lab = el("label", { for: f.id });
          lab.appendChild(input);
          lab.appendChild(document.createTextNode(" " + f.label));
          wrap.appendChild(lab);
        } else {
          input.type = "text";
          input.setAttribute("inputmode", "decimal");
          input.setAttribute("enterkeyhint", "next");
          wrap.appendChild(el("label", { for: f.id }, f.label));
          const entry = el("div", { class: "fc-entry" });
          entry.appendChild(input);
          entry.appendChild(el("span", { class: "fc-unit" }, f.unit));
          wrap.appendChild(entry);
        }
        wrap.appendChild(el("p", { class: "fc-msg", "aria-live": "polite" }));
        grid.appendChild(wrap);
      }
      box.appendChild(grid);
      host.appendChild(box);
    }
  }

  function fillForm(input, texts) {
    for (const f of FIELDS) {
      const e = document.getElementById(f.id);
      if (texts && Object.prototype.hasOwnProperty.call(texts, f.id)) {
        if (f.kind === "check") e.checked = !!texts[f.id];
        else e.value = String(texts[f.id]);
        continue;
      }
      let v = getPath(input, f.path);
      if (f.tri !== undefined) v = Array.isArray(v) ? v[f.tri] : null;
      if (f.kind === "check") e.checked = !!v;
      else e.value = typeof v === "number" ? String(v) : "";
    }
  }

  function formTexts() {
    const t = {};
    for (const f of FIELDS) {
      const e = document.getElementById(f.id);
      t[f.id] = f.kind === "check" ? e.checked : e.value;
    }
    return t;
  }

  function setMsg(f, text) {
    const e = document.getElementById(f.id);
    const m = e.closest(".fc-field").querySelector(".fc-msg");
    m.textContent = text ? plain(text) : "";
    e.setAttribute("aria-invalid", text ? "true" : "false");
    e.closest(".fc-field").classList.toggle("fc-bad", !!text);
  }

  // Build the FieldInput from the form; returns {input, bad} (bad: count of marked fields).
  function readForm() {
    const input = JSON.parse(JSON.stringify(example || {}));
    // Start from the example's structure with every optional value cleared.
    let bad = 0;
    const tris = {};
    for (const f of FIELDS) {
      setMsg(f, "");
      const e = document.getElementById(f.id);
      if (f.kind === "check") {
        setPath(input, f.path, e.checked);
        continue;
      }
      const v = parseNum(e.value);
      if (Number.isNaN(v)) {
        setMsg(f, "Not a number: type digits, e.g. 540 or 540.5");
        bad++;
        continue;
      }
      if (f.tri !== undefined) {
        (tris[f.path] = tris[f.path] || []).push({ f, v });
        continue;
      }
      if (v === null && f.kind === "req") {
        setMsg(f, "Needed");
        bad++;
        continue;
      }
      setPath(input, f.path, v);
    }
    for (const p of Object.keys(tris)) {
      const parts = tris[p];
      const given = parts.filter((x) => x.v !== null).length;
      if (given === 0) setPath(input, p, null);
      else if (given === 3) setPath(input, p, parts.map((x) => x.v));
      else {
        for (const x of parts) if (x.v === null) setMsg(x.f, "Enter all three, or leave all three empty");
        bad++;
      }
    }
    return { input, bad };
  }

  // ------------------------------------------------------------ compute

  function schedule() {
    clearTimeout(timer);
    timer = setTimeout(compute, DEBOUNCE_MS);
  }

  function setState(s) {
    const r = $("#fc-results");
    r.setAttribute("data-state", s);
    $("#fc-stale").hidden = !(s === "stale" && lastReport);
  }

  function compute() {
    if (!ready) return;
    save();
    const { input, bad } = readForm();
    const gen = $("#fc-error");
    gen.textContent = "";
    gen.hidden = true;
    if (bad > 0) {
      gen.textContent = "Complete or correct the marked field to see the expected bus.";
      gen.hidden = false;
      setState(lastReport ? "stale" : "invalid");
      return;
    }
    let report;
    try {
      report = wasm_bindgen.field_json(JSON.stringify(input));
    } catch (err) {
      const text = typeof err === "string" ? err : String((err && err.message) || err);
      const m = /^([A-Za-z0-9_.[\]]+):\s*(.*)$/s.exec(text);
      let marked = false;
      if (m) {
        const path = m[1].replace(/\[\d+\]/g, "");
        for (const f of FIELDS) {
          if (path === f.path || path.startsWith(f.path + ".")) {
            setMsg(f, m[2]);
            marked = true;
            if (f.tri === undefined) break;
          }
        }
      }
      gen.textContent = marked ? "Complete or correct the marked field to see the expected bus." : "The check could not run: " + plain(text);
      gen.hidden = false;
      setState(lastReport ? "stale" : "invalid");
      return;
    }
    lastReport = report;
    render(report);
    computed++;
    const r = $("#fc-results");
    r.setAttribute("data-computed", String(computed));
    setState("current");
  }

  // ------------------------------------------------------------ results

  function tile(key, label, value, unit, sub, cls) {
    const t = el("div", { class: "fc-tile" + (cls ? " " + cls : ""), "data-fc": key });
    t.appendChild(el("span", { class: "fc-tile-label" }, label));
    const v = el("span", { class: "fc-tile-value" });
    v.appendChild(el("span", { class: "fc-num" }, value));
    if (unit) v.appendChild(el("span", { class: "fc-tile-unit" }, " " + unit));
    t.appendChild(v);
    if (sub) t.appendChild(el("span", { class: "fc-tile-sub" }, sub));
    return t;
  }

  function band(b) {
    return Array.isArray(b) ? `band ${fmt(b[0], 0)} to ${fmt(b[1], 0)} V` : "";
  }

  function distText(d, s) {
    if (typeof d !== "number" || !Number.isFinite(d)) {
      // Computed but not ranked: the capacitance signatures without a ripple reading.
      if (s && s.predicted && !s.failed) return "not ranked (needs the bus read on AC)";
      return "no fit (not computed)";
    }
    return d.toFixed(2);
  }

  function render(r) {
    // Safety lines from the report (the panel is never hidden in this mode).
    const ul = $("#fc-safety-list");
    ul.textContent = "";
    for (const s of r.safety || []) ul.appendChild(el("li", null, s));

    const e = r.expected || {};
    const glance = $("#fc-glance");
    glance.textContent = "";
    glance.appendChild(tile("expected.at_load", "Bus expected at this load", fmt(e.at_load_v, 0), "V", band(e.at_load_band_v)));
    glance.appendChild(tile("expected.no_load", "Bus expected at no load", fmt(e.no_load_v, 0), "V", band(e.no_load_band_v)));
    const rank = (r.verdict && r.verdict.ranking) || [];
    const top = rank[0];
    if (top) {
      glance.appendChild(
        tile("best", "Best fit to the readings", top.title, "", `distance ${distText(top.distance)} (1 = within meter tolerance)`,
          r.verdict.healthy_fits ? "fc-good" : "fc-warn")
      );
    }
    const trips = [];
    if (e.undervoltage) trips.push(["undervoltage", "Undervoltage trip", e.undervoltage]);
    if (e.overvoltage) trips.push(["overvoltage", "Overvoltage trip", e.overvoltage]);
    for (const [k, label, m] of trips) {
      glance.appendChild(
        tile("trip." + k, label + ` at ${fmt(m.trip_v, 0)} V`, fmt(m.margin_v, 0), "V away",
          `${fmt(m.margin_pct, 1)} % · worst case ${fmt(m.margin_worst_v, 0)} V. ${m.note || ""}`,
          m.margin_worst_v < 0 ? "fc-warn" : "")
      );
    }

    const v = r.verdict || {};
    $("#fc-summary").textContent = v.summary || "";
    const next = $("#fc-next");
    next.textContent = "";
    for (const n of v.next || []) next.appendChild(el("li", null, n));
    const basis = $("#fc-basis");
    basis.textContent = `Supply taken as ${fmt(e.supply_v_ll_rms_v, 0)} V (${e.supply_basis || ""}); load ${fmt((e.load_p_w || 0) / 1000, 1)} kW (${e.load_basis || ""}).`;

    // Signatures, ranked.
    const byId = {};
    for (const s of r.signatures || []) byId[s.id] = s;
    const list = $("#fc-signatures");
    list.textContent = "";
    rank.forEach((rk, i) => {
      const s = byId[rk.id];
      if (s) list.appendChild(signatureCard(s, i + 1, rk.distance));
    });

    const notes = $("#fc-notes");
    notes.textContent = "";
    for (const w of r.warnings || []) notes.appendChild(el("li", { class: "fc-warning" }, w));
    for (const a of r.assumptions || []) notes.appendChild(el("li", null, plain(a)));
  }

  function signatureCard(s, rank, distance) {
    const card = el("li", { class: "fc-sig", "data-sig": s.id, "data-rank": String(rank) });
    const head = el("div", { class: "fc-sig-head" });
    head.appendChild(el("span", { class: "fc-rank" }, String(rank)));
    head.appendChild(el("span", { class: "fc-sig-title" }, s.title));
    head.appendChild(el("span", { class: "fc-dist", "data-fc": "distance" }, Number.isFinite(distance) ? "distance " + distText(distance) : distText(distance, s)));
    card.appendChild(head);
    if (s.failed) {
      card.appendChild(el("p", { class: "fc-sig-failed" }, "Not computed: " + s.failed));
      return card;
    }
    const p = s.predicted || {};
    const body = el("div", { class: "fc-sig-body" });
    const dl = el("dl", { class: "fc-figs" });
    const fig = (k, label, val) => {
      dl.appendChild(el("dt", null, label));
      dl.appendChild(el("dd", { "data-fc": k }, val));
    };
    fig("dc_mean", "DC mean", fmt(p.dc_mean_v, 1) + " V");
    fig("ripple_rms", "Ripple RMS", fmt(p.ripple_rms_v, 1) + " V");
    fig("ripple_hz", "Ripple frequency", fmt(p.ripple_dominant_hz, 0) + " Hz");
    fig("imbalance", "Line-current imbalance", fmt(p.current_imbalance_pct, 1) + " %");
    body.appendChild(dl);
    const cv = el("canvas", { class: "fc-wave", role: "img", "aria-label": `Bus ripple over one supply period, ${s.title}` });
    body.appendChild(cv);
    card.appendChild(body);
    card.appendChild(el("p", { class: "fc-advice" }, s.advice));
    requestAnimationFrame(() => drawWave(cv, p.ripple_wave_v || []));
    return card;
  }

  // A small plot of the bus ripple (the bus voltage less its mean) over one period.
  function drawWave(cv, ys) {
    const css = getComputedStyle(document.documentElement);
    const ink = css.getPropertyValue("--ink").trim() || "#000";
    const soft = css.getPropertyValue("--ink-soft").trim() || "#555";
    const line = css.getPropertyValue("--accent").trim() || "#1f5130";
    const rule = css.getPropertyValue("--grid").trim() || "#ddd";
    const w = cv.clientWidth || 240;
    const h = cv.clientHeight || 90;
    const dpr = window.devicePixelRatio || 1;
    cv.width = Math.round(w * dpr);
    cv.height = Math.round(h * dpr);
    const g = cv.getContext("2d");
    if (!g) return;
    g.setTransform(dpr, 0, 0, dpr, 0, 0);
    g.clearRect(0, 0, w, h);
    const pts = ys.filter((y) => Number.isFinite(y));
    if (pts.length < 2) return;
    let lo = Math.min(...pts);
    let hi = Math.max(...pts);
    const lim = Math.max(Math.abs(lo), Math.abs(hi), 1e-9);
    lo = -lim;
    hi = lim;
    const padL = 44;
    const padR = 6;
    const padT = 8;
    const padB = 16;
    const X = (i) => padL + (i / (ys.length - 1)) * (w - padL - padR);
    const Y = (y) => padT + ((hi - y) / (hi - lo)) * (h - padT - padB);
    g.strokeStyle = rule;
    g.lineWidth = 1;
    g.beginPath();
    g.moveTo(padL, Y(0));
    g.lineTo(w - padR, Y(0));
    g.stroke();
    g.fillStyle = soft;
    g.font = "11px system-ui, sans-serif";
    g.textAlign = "right";
    g.textBaseline = "middle";
    g.fillText("+" + fmt(lim, lim >= 10 ? 0 : 1) + " V", padL - 4, Y(hi));
    g.fillText("0", padL - 4, Y(0));
    g.fillText("−" + fmt(lim, lim >= 10 ? 0 : 1) + " V", padL - 4, Y(lo));
    g.textAlign = "left";
    g.textBaseline = "bottom";
    g.fillStyle = ink;
    g.fillText("one supply period", padL, h);
    g.strokeStyle = line;
    g.lineWidth = 2;
    g.beginPath();
    ys.forEach((y, i) => {
      if (!Number.isFinite(y)) return;
      if (i === 0) g.moveTo(X(i), Y(y));
      else g.lineTo(X(i), Y(y));
    });
    g.stroke();
  }

  // ------------------------------------------------------------ storage

  function save() {
    try {
      localStorage.setItem(STORE_KEY, JSON.stringify({ store_version: 1, fields: formTexts() }));
    } catch (_) {
      /* storage off: nothing kept */
    }
  }
  function load() {
    try {
      const raw = localStorage.getItem(STORE_KEY);
      if (!raw) return null;
      const rec = JSON.parse(raw);
      if (!rec || rec.store_version !== 1 || typeof rec.fields !== "object" || rec.fields === null) throw new Error("bad");
      const out = {};
      for (const f of FIELDS) {
        const v = rec.fields[f.id];
        if (f.kind === "check" ? typeof v === "boolean" : typeof v === "string") out[f.id] = v;
      }
      return out;
    } catch (_) {
      try {
        localStorage.removeItem(STORE_KEY);
      } catch (_e) {
        /* nothing */
      }
      return null;
    }
  }

  // ------------------------------------------------------------ mode switch

  function setMode(mode) {
    const field = mode === "field";
    document.documentElement.setAttribute("data-mode", field ? "field" : "design");
    $("#field-mode").hidden = !field;
    for (const b of document.querySelectorAll("#mode-switch [data-mode]")) {
      b.setAttribute("aria-pressed", String(b.getAttribute("data-mode") === mode));
    }
    if (field && lastReport) {
      // canvases drawn while hidden have no size: redraw
      render(lastReport);
    }
  }

  function wire() {
    const form = $("#fc-form");
    form.addEventListener("input", schedule);
    form.addEventListener("change", schedule);
    form.addEventListener("submit", (ev) => ev.preventDefault());
    $("#fc-reset").addEventListener("click", () => {
      // A new drive: the last drive's figures and verdict go, not only grey.
      lastReport = null;
      for (const id of ["#fc-glance", "#fc-summary", "#fc-next", "#fc-signatures"]) {
        const e = $(id);
        if (e) e.textContent = "";
      }
      fillForm(example, null);
      compute();
      const first = document.querySelector("#fc-form [aria-invalid='true']");
      if (first) first.scrollIntoView({ block: "center" });
    });
    $("#fc-clear-readings").addEventListener("click", () => {
      for (const f of GROUPS[0].fields) document.getElementById(f.id).value = "";
      compute();
    });
  }

  // Called by app.js once the engine is loaded.
  function start() {
    const host = $("#fc-inputs");
    if (!host || typeof wasm_bindgen.field_json !== "function") return;
    example = wasm_bindgen.field_example();
    buildForm(host);
    fillForm(example, load());
    wire();
    ready = true;
    $("#field-mode").setAttribute("data-ready", "1");
    compute();
  }

  // The mode buttons work before the engine is up (the safety panel shows at once).
  document.addEventListener("DOMContentLoaded", () => {
    for (const b of document.querySelectorAll("#mode-switch [data-mode]")) {
      b.addEventListener("click", () => setMode(b.getAttribute("data-mode")));
    }
  });

  globalThis.RectifieldField = { start, setMode, parseNum };
})();
