// Rectifield page: reads the fields, builds a scenario (the format of
// src/scenario.rs), asks the engine (WebAssembly) for the analysis, shows it.
//
// Rules kept here: nothing the user types is ever inserted as HTML (textContent
// only); no network; the last good results stay on screen, marked out of date,
// while an input is invalid.
//
// Adding a results section: append an entry to SECTIONS below.
"use strict";

(function () {
  const DEBOUNCE_MS = 150;
  const $ = (sel, root) => (root || document).querySelector(sel);
  const $$ = (sel, root) => Array.from((root || document).querySelectorAll(sel));

  // ------------------------------------------------------------ formatting

  const RAD_TO_DEG = 180 / Math.PI;

  function fmt(x, sig) {
    if (x === null || x === undefined) return "—";
    if (typeof x !== "number" || !Number.isFinite(x)) return String(x);
    if (x === 0) return "0";
    const a = Math.abs(x);
    if (a >= 1e5) return x.toFixed(0);
    if (a < 1e-4) return x.toExponential((sig || 5) - 1);
    return x.toPrecision(sig || 5);
  }

  function get(obj, path) {
    let cur = obj;
    for (const key of path.split(".")) {
      if (cur === null || cur === undefined) return undefined;
      cur = cur[key];
    }
    return cur;
  }

  function el(tag, attrs, text) {
    const e = document.createElement(tag);
    if (attrs) for (const [k, v] of Object.entries(attrs)) e.setAttribute(k, v);
    if (text !== undefined) e.textContent = text;
    return e;
  }

  // ------------------------------------------------------------ results

  // A row: [label, path in the analysis object, unit, scale (display = value * scale)].
  function table(rows, a) {
    const t = el("table", { class: "figures" });
    const body = el("tbody");
    for (const [label, path, unit, scale] of rows) {
      const raw = get(a, path);
      if (raw === undefined) continue; // a field this engine build does not report
      const v = typeof raw === "number" ? raw * (scale || 1) : raw;
      const tr = el("tr");
      tr.appendChild(el("th", { scope: "row" }, label));
      tr.appendChild(el("td", { class: "num", "data-out": path }, fmt(v)));
      tr.appendChild(el("td", { class: "unit" }, unit || ""));
      body.appendChild(tr);
    }
    t.appendChild(body);
    return t;
  }

  function list(items, cls) {
    const ul = el("ul", { class: cls });
    for (const s of items) ul.appendChild(el("li", null, String(s)));
    return ul;
  }

  const SECTIONS = [
    {
      id: "warnings",
      title: "Warnings",
      when: (a) => Array.isArray(a.warnings) && a.warnings.length > 0,
      build: (a) => list(a.warnings, "warnings"),
    },
    {
      id: "dc",
      title: "DC output — textbook closed forms",
      note: (a) =>
        "Ripple-free DC current assumed: Id = " + fmt(a.textbook_i_d_a) + " A.",
      build: (a) =>
        table(
          [
            ["Vdo, ideal no-load DC voltage", "textbook.vdo_v", "V"],
            ["Vdo·cos α", "textbook.vd_alpha_v", "V"],
            ["Commutation drop", "textbook.commutation_drop_v", "V"],
            ["Vd, DC voltage at Id", "textbook.vd_v", "V"],
            ["Overlap angle μ", "textbook.overlap_rad", "°", RAD_TO_DEG],
            ["Pdo = Vdo·Id", "textbook.pdo_w", "kW", 1e-3],
          ],
          a
        ),
    },
    {
      id: "line",
      title: "Line current and power factor — textbook",
      build: (a) =>
        table(
          [
            ["Line current, RMS", "textbook.line_rms_a", "A"],
            ["Line current, fundamental RMS", "textbook.line_fundamental_a", "A"],
            ["THD of the line current", "textbook.thd_pct", "%"],
            ["Displacement factor", "textbook.displacement_factor", ""],
            ["Distortion factor", "textbook.distortion_factor", ""],
            ["Power factor", "textbook.power_factor", ""],
            ["Supply apparent power", "textbook.supply_va", "kVA", 1e-3],
            ["Supply VA / Pdo", "textbook.va_per_pdo", ""],
          ],
          a
        ),
    },
    {
      id: "device",
      title: "Device stress, per device — textbook",
      build: (a) =>
        table(
          [
            ["Average current", "textbook.device_avg_a", "A"],
            ["RMS current", "textbook.device_rms_a", "A"],
            ["Peak current", "textbook.device_peak_a", "A"],
            ["Peak inverse voltage (PIV)", "textbook.device_piv_v", "V"],
          ],
          a
        ),
    },
    {
      id: "harmonics",
      title: "Line-current harmonics — textbook",
      when: (a) => a.textbook && Array.isArray(a.textbook.harmonics),
      build: (a) => {
        const t = el("table", { class: "harmonics", "data-out": "textbook.harmonics" });
        const head = el("thead");
        const hr = el("tr");
        for (const h of ["Order h", "% of fundamental", "RMS, A"]) hr.appendChild(el("th", { scope: "col" }, h));
        head.appendChild(hr);
        t.appendChild(head);
        const body = el("tbody");
        for (const h of a.textbook.harmonics) {
          const tr = el("tr");
          tr.appendChild(el("td", { class: "num" }, String(h.order)));
          tr.appendChild(el("td", { class: "num" }, fmt(h.pct_of_fundamental, 4)));
          tr.appendChild(el("td", { class: "num" }, fmt(h.rms_a, 4)));
          body.appendChild(tr);
        }
        t.appendChild(body);
        return t;
      },
    },
    {
      id: "source",
      title: "Source as seen by the bridge",
      build: (a) =>
        table(
          [
            ["Source resistance per phase", "derived.r_source_ohm", "mΩ", 1e3],
            ["Source inductance per phase", "derived.l_source_h", "µH", 1e6],
            ["Reactor resistance per phase", "derived.r_reactor_ohm", "mΩ", 1e3],
            ["Reactor inductance per phase", "derived.l_reactor_h", "µH", 1e6],
            ["Short-circuit current at the PCC", "derived.i_sc_a", "kA", 1e-3],
            ["Short-circuit power at the PCC", "derived.s_sc_va", "MVA", 1e-6],
            ["Rated power", "derived.rated_power_w", "kW", 1e-3],
            ["Rated line current", "derived.rated_current_a", "A"],
          ],
          a
        ),
    },
    {
      id: "assumptions",
      title: "What the textbook figures assume",
      when: (a) => a.textbook && Array.isArray(a.textbook.assumptions),
      build: (a) => list(a.textbook.assumptions, "assumptions"),
    },
  ];

  function render(a) {
    const host = $("#sections");
    const frag = document.createDocumentFragment();
    for (const s of SECTIONS) {
      if (s.when && !s.when(a)) continue;
      const sec = el("section", { class: "card", id: "out-" + s.id });
      sec.appendChild(el("h2", null, s.title));
      if (s.note) sec.appendChild(el("p", { class: "note" }, s.note(a)));
      sec.appendChild(s.build(a));
      frag.appendChild(sec);
    }
    host.replaceChildren(frag);
  }

  // ------------------------------------------------------------ inputs

  function variantValue(path) {
    const sel = $(`select[data-variant="${path}"]`) || $(`select[data-path="${path}"]`);
    return sel ? sel.value : undefined;
  }

  function updateVisibility() {
    for (const g of $$("[data-when]")) {
      const [path, values] = g.getAttribute("data-when").split("=");
      g.hidden = !values.split("|").includes(variantValue(path));
    }
  }

  function activeInputs() {
    return $$("#inputs [data-path], #inputs [data-variant]").filter((e) => !e.closest("[hidden]"));
  }

  // serde's view of a partial scenario: missing fields take the default, and a
  // variant object (one with "kind") or an array is replaced whole.
  function mergeScenario(def, over) {
    if (over === null || typeof over !== "object" || Array.isArray(over)) return over;
    if ("kind" in over || def === null || typeof def !== "object") return over;
    const out = Object.assign({}, def);
    for (const [k, v] of Object.entries(over)) out[k] = mergeScenario(def[k], v);
    return out;
  }

  function setPath(obj, path, value) {
    const keys = path.split(".");
    let cur = obj;
    for (const k of keys.slice(0, -1)) {
      if (typeof cur[k] !== "object" || cur[k] === null) cur[k] = {};
      cur = cur[k];
    }
    cur[keys[keys.length - 1]] = value;
  }

  // "1,5" is accepted as 1.5 (tablets set to a comma locale); nothing else is guessed.
  function parseNumber(text) {
    let t = text.trim();
    if (t === "") return { error: "enter a number" };
    if (/^[+-]?\d*,\d+$/.test(t)) t = t.replace(",", ".");
    if (!/^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/.test(t)) return { error: "not a number" };
    return { value: Number(t) };
  }

  function scaleOf(input) {
    return Number(input.getAttribute("data-scale") || "1");
  }

  // The scenario the form edits: the default, or the last case opened.  Fields
  // the page has no input for (background harmonics, imbalance, ...) come from
  // here unchanged; a variant (an object with "kind") is rebuilt from the form.
  let base = {};

  function buildScenario() {
    const scenario = JSON.parse(JSON.stringify(base));
    const errors = [];
    for (const e of activeInputs()) {
      const variant = e.getAttribute("data-variant");
      if (variant) {
        setPath(scenario, variant, { kind: e.value });
        continue;
      }
      const path = e.getAttribute("data-path");
      if (e.tagName === "SELECT" || e.getAttribute("data-type") === "text") {
        setPath(scenario, path, e.value);
        continue;
      }
      const p = parseNumber(e.value);
      if (p.error) {
        errors.push({ input: e, message: p.error });
        continue;
      }
      // Round away the binary noise of the unit scaling (e.g. 2200 µF -> 2.2e-3 F).
      setPath(scenario, path, Number((p.value * scaleOf(e)).toPrecision(15)));
    }
    return { scenario, errors };
  }

  function fieldMsg(input) {
    const field = input.closest(".field");
    return field ? $(".msg", field) : null;
  }

  function clearMessages() {
    for (const e of activeInputs()) e.removeAttribute("aria-invalid");
    for (const m of $$("#inputs .msg")) m.textContent = "";
  }

  function markInvalid(input, message) {
    input.setAttribute("aria-invalid", "true");
    const m = fieldMsg(input);
    if (m) m.textContent = message;
  }

  // The engine throws "field.path: reason"; put the reason beside that field.
  function showEngineError(text) {
    const msg = String(text);
    const i = msg.indexOf(": ");
    const path = i > 0 ? msg.slice(0, i) : "";
    const reason = i > 0 ? msg.slice(i + 2) : msg;
    const inputs = activeInputs();
    const target =
      inputs.find((e) => e.getAttribute("data-path") === path) ||
      inputs.find((e) => e.getAttribute("data-variant") && path.startsWith(e.getAttribute("data-variant")));
    if (target) markInvalid(target, reason);
    else $("#input-error").textContent = msg;
  }

  // ------------------------------------------------------------ compute loop

  const results = () => $("#results");
  let computed = 0;

  function setStale(stale) {
    const r = results();
    if (computed === 0) {
      r.setAttribute("data-state", stale ? "invalid" : "loading");
    } else {
      r.setAttribute("data-state", stale ? "stale" : "current");
    }
    r.classList.toggle("stale", stale && computed > 0);
    $("#stale-note").hidden = !(stale && computed > 0);
  }

  function compute() {
    clearMessages();
    const { scenario, errors } = buildScenario();
    if (errors.length) {
      for (const { input, message } of errors) markInvalid(input, message);
      setStale(true);
      return;
    }
    let analysis;
    try {
      analysis = wasm_bindgen.analyze_json(JSON.stringify(scenario));
    } catch (err) {
      showEngineError(err);
      setStale(true);
      return;
    }
    render(analysis);
    computed += 1;
    results().setAttribute("data-computed", String(computed));
    setStale(false);
  }

  let timer = 0;
  function schedule() {
    clearTimeout(timer);
    timer = setTimeout(compute, DEBOUNCE_MS);
  }

  function fillDefaults(def) {
    for (const sel of $$("select[data-variant]")) {
      const kind = get(def, sel.getAttribute("data-variant") + ".kind");
      if (kind !== undefined) sel.value = kind;
    }
    for (const sel of $$("select[data-path]")) {
      const v = get(def, sel.getAttribute("data-path"));
      if (v !== undefined) sel.value = v;
    }
    updateVisibility();
    for (const input of $$("#inputs input[data-path]")) {
      // Inside a group that belongs to a variant not chosen in the default
      // scenario, the default has no value: take the field's own data-default.
      const group = input.closest("[data-when]");
      const whenPath = group ? group.getAttribute("data-when").split("=")[0] : "";
      const ofVariant = group && $(`select[data-variant="${whenPath}"]`);
      const v = ofVariant && group.hidden ? undefined : get(def, input.getAttribute("data-path"));
      if (input.getAttribute("data-type") === "text") {
        input.value = typeof v === "string" ? v : "";
      } else if (typeof v === "number") {
        input.value = String(Number((v / scaleOf(input)).toPrecision(12)));
      } else if (input.hasAttribute("data-default")) {
        input.value = input.getAttribute("data-default");
      } else {
        input.value = "0";
      }
    }
  }

  function saveCase() {
    const msg = $("#case-msg");
    const { scenario, errors } = buildScenario();
    if (errors.length) {
      msg.textContent = "Correct the marked fields first.";
      return;
    }
    msg.textContent = "";
    const blob = new Blob([JSON.stringify(scenario, null, 2) + "\n"], { type: "application/json" });
    const a = document.createElement("a");
    const stem = (scenario.name || "case").replace(/[^A-Za-z0-9._-]+/g, "-").replace(/^-+|-+$/g, "");
    a.download = (stem || "case") + ".rectifield.json";
    a.href = URL.createObjectURL(blob);
    document.body.appendChild(a);
    a.click();
    a.remove();
    setTimeout(() => URL.revokeObjectURL(a.href), 10000);
  }

  function openCase(file) {
    const msg = $("#case-msg");
    const reader = new FileReader();
    reader.onload = () => {
      const text = String(reader.result);
      try {
        wasm_bindgen.analyze_json(text); // the engine's own check, with field paths
      } catch (err) {
        msg.textContent = file.name + ": " + String(err);
        return;
      }
      base = mergeScenario(wasm_bindgen.default_scenario(), JSON.parse(text));
      fillDefaults(base);
      msg.textContent = "Opened " + file.name + ".";
      compute();
    };
    reader.onerror = () => {
      msg.textContent = file.name + ": could not be read.";
    };
    reader.readAsText(file);
  }

  function base64ToBytes(b64) {
    const bin = atob(b64);
    const out = new Uint8Array(bin.length);
    for (let i = 0; i < bin.length; i++) out[i] = bin.charCodeAt(i);
    return out;
  }

  async function start() {
    updateVisibility();
    // Async init: Chromium refuses synchronous compiles of large modules.
    await wasm_bindgen({ module_or_path: base64ToBytes(RECTIFIELD_WASM_BASE64) });
    $("#version").textContent = wasm_bindgen.version();
    base = wasm_bindgen.default_scenario();
    fillDefaults(base);
    const form = $("#inputs");
    $("#save_case").addEventListener("click", saveCase);
    $("#open_case").addEventListener("change", (ev) => {
      const f = ev.target.files && ev.target.files[0];
      if (f) openCase(f);
      ev.target.value = "";
    });
    form.addEventListener("input", (ev) => {
      if (ev.target.tagName === "SELECT" || ev.target.hasAttribute("data-ignore")) return;
      schedule();
    });
    form.addEventListener("change", (ev) => {
      if (ev.target.tagName !== "SELECT") return;
      updateVisibility();
      clearTimeout(timer);
      compute();
    });
    form.addEventListener("submit", (ev) => ev.preventDefault());
    compute();
  }

  start().catch((err) => {
    const f = $("#fatal");
    f.hidden = false;
    f.textContent = "The calculator could not start: " + String(err && err.message ? err.message : err);
    console.error("Rectifield failed to start:", err);
  });
})();
