// Rectifield page: builds the form from FORM, reads it into a scenario (the
// format of src/scenario.rs), asks the engine (WebAssembly) for the analysis,
// shows the figures at a glance, the schematic, the plots and the tables.
//
// Rules kept here: nothing the user types is ever inserted as HTML (textContent
// only); no network; the last good results stay on screen, marked out of date,
// while an input is invalid; the text of every field is kept as typed.
//
// Adding an input: add it to FORM.  Adding a results table: append to SECTIONS.
"use strict";

(function () {
  const DEBOUNCE_MS = 200;
  const STORE_KEY = "rectifield.session";
  const STORE_VERSION = 1; // version of the stored session record (the scenario has its own)
  const THEME_KEY = "rectifield.theme";
  const MAX_FILE_BYTES = 1 << 20; // as src/scenario.rs MAX_FILE_BYTES
  const $ = (sel, root) => (root || document).querySelector(sel);
  const $$ = (sel, root) => Array.from((root || document).querySelectorAll(sel));
  const Units = globalThis.RectifieldUnits;
  const fmt = (x, sig) => Units.formatNum(x, sig);
  const RAD_TO_DEG = 180 / Math.PI;

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
    if (attrs) for (const [k, v] of Object.entries(attrs)) if (v !== undefined && v !== null && v !== false) e.setAttribute(k, v === true ? "" : v);
    if (text !== undefined && text !== null) e.textContent = text;
    return e;
  }

  // ------------------------------------------------------------ the form

  // A field: {id, path, label, unit (shown), base (scenario unit), scale, def
  // (value when its variant group was not in the scenario), int, hint, type
  // ("text", "textarea", "bool", "device", "harm"), optional (shown only when
  // the engine's default scenario has the path)}.  A select: {id, variant |
  // path, label, options}.  A group: {when: "path=value|value", fields}.  A
  // fold: {fold: "title", fields} (a collapsible part).
  const THY = "bridge.kind=six_pulse_thyristor|three_pulse_thyristor";
  const FORM = [
    {
      legend: "Case",
      id: "fs-case",
      fields: [
        { id: "case_name", path: "name", label: "Name", type: "text" },
        { id: "case_notes", path: "notes", label: "Notes", type: "textarea" },
      ],
    },
    {
      legend: "Supply",
      id: "fs-supply",
      fields: [
        { id: "v_ll_rms_v", path: "supply.v_ll_rms_v", label: "Line-to-line voltage (RMS)", unit: "V", base: "V" },
        { id: "f_hz", path: "supply.f_hz", label: "Frequency", unit: "Hz", base: "Hz" },
        {
          fold: "Unbalance, lost phase, background harmonics",
          id: "fold-unbalance",
          fields: [
            { id: "mag_a", path: "supply.phase_magnitude_pu.0", label: "Phase a magnitude", unit: "%", base: "pu", scale: 0.01, hint: "of nominal" },
            { id: "mag_b", path: "supply.phase_magnitude_pu.1", label: "Phase b magnitude", unit: "%", base: "pu", scale: 0.01 },
            { id: "mag_c", path: "supply.phase_magnitude_pu.2", label: "Phase c magnitude", unit: "%", base: "pu", scale: 0.01 },
            { id: "ang_a", path: "supply.phase_angle_offset_deg.0", label: "Phase a angle offset", unit: "°", base: "°" },
            { id: "ang_b", path: "supply.phase_angle_offset_deg.1", label: "Phase b angle offset", unit: "°", base: "°" },
            { id: "ang_c", path: "supply.phase_angle_offset_deg.2", label: "Phase c angle offset", unit: "°", base: "°" },
            { id: "open_a", path: "supply.phase_open.0", label: "Phase a lost (open)", type: "bool" },
            { id: "open_b", path: "supply.phase_open.1", label: "Phase b lost (open)", type: "bool" },
            { id: "open_c", path: "supply.phase_open.2", label: "Phase c lost (open)", type: "bool" },
            { id: "h5_pct", harm: 5, part: "magnitude_pct", label: "Background 5th harmonic", unit: "%", base: "%", hint: "of the phase voltage" },
            { id: "h5_deg", harm: 5, part: "phase_deg", label: "5th harmonic phase", unit: "°", base: "°" },
            { id: "h7_pct", harm: 7, part: "magnitude_pct", label: "Background 7th harmonic", unit: "%", base: "%" },
            { id: "h7_deg", harm: 7, part: "phase_deg", label: "7th harmonic phase", unit: "°", base: "°" },
          ],
        },
      ],
    },
    {
      legend: "Source & line reactor",
      id: "fs-source",
      fields: [
        {
          id: "source_kind",
          variant: "source.impedance",
          label: "Source impedance given as",
          options: [
            ["short_circuit_mva", "Short-circuit power at the PCC and X/R"],
            ["short_circuit_ka", "Short-circuit current at the PCC and X/R"],
            ["transformer", "Supply transformer: kVA, %Z, X/R"],
            ["direct", "R and L per phase"],
          ],
        },
        {
          when: "source.impedance=short_circuit_mva",
          fields: [
            { id: "imp_mva_s_sc_mva", path: "source.impedance.s_sc_mva", label: "Short-circuit power", unit: "MVA", base: "VA", scale: 1e6, storeScale: 1e6, def: "10" },
            { id: "imp_mva_x_over_r", path: "source.impedance.x_over_r", label: "X/R", unit: "", base: "", def: "8" },
          ],
        },
        {
          when: "source.impedance=short_circuit_ka",
          fields: [
            { id: "imp_ka_i_sc_ka", path: "source.impedance.i_sc_ka", label: "Short-circuit current", unit: "kA", base: "A", scale: 1e3, storeScale: 1e3, def: "15" },
            { id: "imp_ka_x_over_r", path: "source.impedance.x_over_r", label: "X/R", unit: "", base: "", def: "8" },
          ],
        },
        {
          when: "source.impedance=transformer",
          fields: [
            { id: "imp_tx_s_kva", path: "source.impedance.s_kva", label: "Transformer rating", unit: "kVA", base: "VA", scale: 1e3, storeScale: 1e3, def: "630" },
            { id: "imp_tx_z_pct", path: "source.impedance.z_pct", label: "Impedance on its rating", unit: "%", base: "%", def: "6" },
            { id: "imp_tx_x_over_r", path: "source.impedance.x_over_r", label: "X/R", unit: "", base: "", def: "6" },
          ],
        },
        {
          when: "source.impedance=direct",
          fields: [
            { id: "imp_direct_r_ohm", path: "source.impedance.r_ohm", label: "Resistance per phase", unit: "mΩ", base: "Ω", scale: 1e-3, def: "2" },
            { id: "imp_direct_l_h", path: "source.impedance.l_h", label: "Inductance per phase", unit: "mH", base: "H", scale: 1e-3, def: "0.05" },
          ],
        },
        {
          id: "reactor_kind",
          variant: "source.reactor",
          label: "Line reactor",
          options: [
            ["none", "None"],
            ["percent", "Impedance in % of the load rating"],
            ["henry", "Inductance per phase"],
          ],
        },
        {
          when: "source.reactor=percent",
          fields: [
            { id: "reactor_pct_z_pct", path: "source.reactor.z_pct", label: "Reactor impedance", unit: "%", base: "%", def: "3" },
            { id: "reactor_pct_x_over_r", path: "source.reactor.x_over_r", label: "Reactor X/R", unit: "", base: "", def: "30" },
          ],
        },
        {
          when: "source.reactor=henry",
          fields: [
            { id: "reactor_h_l_h", path: "source.reactor.l_h", label: "Reactor inductance per phase", unit: "mH", base: "H", scale: 1e-3, def: "0.3" },
            { id: "reactor_h_r_ohm", path: "source.reactor.r_ohm", label: "Reactor resistance per phase", unit: "mΩ", base: "Ω", scale: 1e-3, def: "3" },
          ],
        },
      ],
    },
    {
      legend: "Bridge",
      id: "fs-bridge",
      fields: [
        {
          id: "bridge_kind",
          path: "bridge.kind",
          label: "Bridge",
          options: [
            ["six_pulse_diode", "Six-pulse, diodes"],
            ["six_pulse_thyristor", "Six-pulse, thyristors"],
            ["three_pulse_diode", "Three-pulse (midpoint), diodes"],
            ["three_pulse_thyristor", "Three-pulse (midpoint), thyristors"],
            ["twelve_pulse_series", "Twelve-pulse, outputs in series"],
            ["twelve_pulse_parallel", "Twelve-pulse, outputs in parallel"],
          ],
        },
        {
          when: THY,
          fields: [
            { id: "alpha_deg", path: "bridge.alpha_deg", label: "Firing angle α", unit: "°", base: "°", hint: "from the natural commutation point" },
            { id: "gate_width_deg", path: "bridge.gate_width_deg", label: "Gate pulse width", unit: "°", base: "°", hint: "a thyristor not yet carrying current when its pulse ends turns off; six-pulse bridges need over 60°" },
          ],
        },
        {
          when: "bridge.kind=twelve_pulse_parallel",
          fields: [{ id: "interphase_l_h", path: "bridge.interphase_l_h", label: "Interphase reactor", unit: "mH", base: "H", scale: 1e-3 }],
        },
        { id: "v_threshold_v", path: "bridge.v_threshold_v", label: "Device threshold voltage", unit: "V", base: "V", hint: "0 = ideal" },
        { id: "r_slope_ohm", path: "bridge.r_slope_ohm", label: "Device slope resistance", unit: "mΩ", base: "Ω", scale: 1e-3, hint: "0 = ideal" },
        { id: "open_device", path: "bridge.open_device", label: "Open device (a fault)", type: "device" },
      ],
    },
    {
      legend: "DC side & load",
      id: "fs-dc",
      fields: [
        { id: "choke_l_h", path: "dc.choke_l_h", label: "DC choke", unit: "mH", base: "H", scale: 1e-3, hint: "0 = none" },
        { id: "choke_r_ohm", path: "dc.choke_r_ohm", label: "DC choke resistance", unit: "mΩ", base: "Ω", scale: 1e-3 },
        { id: "cap_f", path: "dc.cap_f", label: "Bus capacitance", unit: "µF", base: "F", scale: 1e-6, hint: "0 = none" },
        { id: "cap_esr_ohm", path: "dc.cap_esr_ohm", label: "Capacitor ESR", unit: "mΩ", base: "Ω", scale: 1e-3 },
        { id: "bleed_r_ohm", path: "dc.bleed_r_ohm", label: "Bleed resistor", unit: "kΩ", base: "Ω", scale: 1e3, hint: "0 = none" },
        {
          id: "load_kind",
          variant: "dc.load",
          label: "Load",
          options: [
            ["constant_power", "Constant power (an inverter)"],
            ["resistor", "Resistor"],
            ["rle", "Resistor, inductor and back-EMF"],
            ["constant_current", "Constant current"],
          ],
        },
        { when: "dc.load=constant_power", fields: [{ id: "load_p_w", path: "dc.load.p_w", label: "Load power", unit: "kW", base: "W", scale: 1e3, def: "45" }] },
        { when: "dc.load=resistor", fields: [{ id: "load_r_r_ohm", path: "dc.load.r_ohm", label: "Load resistance", unit: "Ω", base: "Ω", def: "6.5" }] },
        {
          when: "dc.load=rle",
          fields: [
            { id: "load_rle_r_ohm", path: "dc.load.r_ohm", label: "Load resistance", unit: "Ω", base: "Ω", def: "1.2" },
            { id: "load_rle_l_h", path: "dc.load.l_h", label: "Load inductance", unit: "mH", base: "H", scale: 1e-3, def: "20" },
            { id: "load_rle_e_v", path: "dc.load.e_v", label: "Back-EMF", unit: "V", base: "V", def: "400" },
          ],
        },
        { when: "dc.load=constant_current", fields: [{ id: "load_i_a", path: "dc.load.i_a", label: "Load current", unit: "A", base: "A", def: "80" }] },
        {
          fold: "Power-up and precharge",
          id: "fold-precharge",
          fields: [
            { id: "transient_cycles", path: "analysis.transient_cycles", label: "Power-up transient", unit: "cycles", base: "", int: true, hint: "0 = not computed" },
            { id: "precharge_r_ohm", path: "dc.precharge_r_ohm", label: "Precharge resistor", unit: "Ω", base: "Ω", hint: "0 = none" },
            { id: "precharge_bypass_s", path: "dc.precharge_bypass_s", label: "Bypass after", unit: "ms", base: "s", scale: 1e-3, hint: "0 = by voltage only" },
            { id: "precharge_bypass_pu", path: "dc.precharge_bypass_pu", label: "Bypass at bus voltage", unit: "%", base: "pu", scale: 0.01, hint: "of the peak line voltage; 0 = by time only" },
            { id: "precharge_stuck", path: "dc.precharge_stuck", label: "Bypass failed (resistor left in circuit)", type: "bool" },
          ],
        },
        {
          fold: "Capacitor thermal data",
          id: "fold-thermal",
          fields: [
            { id: "cap_rth_k_per_w", path: "dc.cap_rth_k_per_w", label: "Thermal resistance, core to ambient", unit: "K/W", base: "K/W", hint: "of the whole bank: one can's value over the number of cans in parallel" },
            { id: "cap_rated_life_h", path: "dc.cap_rated_life_h", label: "Rated life", unit: "h", base: "h" },
            { id: "cap_rated_temp_c", path: "dc.cap_rated_temp_c", label: "Rated temperature", unit: "°C", base: "°C" },
            { id: "ambient_c", path: "dc.ambient_c", label: "Ambient temperature", unit: "°C", base: "°C" },
          ],
        },
      ],
    },
    {
      legend: "Rating, grid & analysis",
      id: "fs-analysis",
      fields: [
        { id: "rated_power_w", path: "analysis.rated_power_w", label: "Rated load power", unit: "kW", base: "W", scale: 1e3, hint: "0 = from the load" },
        { id: "demand_current_a", path: "analysis.demand_current_a", label: "Maximum demand current IL", unit: "A", base: "A", hint: "for TDD; 0 = the rated current, rated power / (√3 × line voltage)" },
        { id: "converters_at_pcc", path: "compliance.converters_at_pcc", label: "Identical converters at the PCC", unit: "", base: "", int: true, optional: true },
        { id: "h_max", path: "analysis.h_max", label: "Highest harmonic order", unit: "", base: "", int: true },
        { id: "grid_points", path: "analysis.grid_points", label: "Samples per period", unit: "", base: "", int: true },
      ],
    },
  ];

  const DEVICE_NAMES = {
    six: ["a+", "b+", "c+", "a−", "b−", "c−"],
    three: ["a", "b", "c"],
    twelve: ["a1+", "b1+", "c1+", "a1−", "b1−", "c1−", "a2+", "b2+", "c2+", "a2−", "b2−", "c2−"],
  };
  function familyOf(kind) {
    return String(kind).startsWith("six") ? "six" : String(kind).startsWith("three") ? "three" : "twelve";
  }

  const fieldsById = new Map();

  function makeField(f) {
    fieldsById.set(f.id, f);
    const wrap = el("div", { class: "field" + (f.type === "bool" ? " check" : "") + (f.type === "textarea" ? " wide" : "") });
    const msgId = f.id + "-msg";
    const hintId = f.hint ? f.id + "-hint" : undefined;
    const described = [hintId, msgId].filter(Boolean).join(" ");
    if (f.type === "bool") {
      const lab = el("label", { class: "check", for: f.id });
      const input = el("input", { type: "checkbox", id: f.id, "data-path": f.path, "data-type": "bool", "aria-describedby": described });
      lab.appendChild(input);
      lab.appendChild(el("span", null, f.label));
      wrap.appendChild(lab);
    } else {
      wrap.appendChild(el("label", { for: f.id }, f.label));
      if (f.hint) wrap.appendChild(el("span", { class: "hint", id: hintId }, f.hint));
      let input;
      if (f.options || f.type === "device") {
        input = el("select", { id: f.id, "aria-describedby": described });
        if (f.variant) input.setAttribute("data-variant", f.variant);
        else input.setAttribute("data-path", f.path);
        if (f.type === "device") input.setAttribute("data-type", "device");
        else input.setAttribute("data-type", "text");
        for (const [v, t] of f.options || [["", "None"]]) input.appendChild(el("option", { value: v }, t));
        wrap.appendChild(input);
      } else if (f.type === "text" || f.type === "textarea") {
        input = el(f.type === "textarea" ? "textarea" : "input", {
          id: f.id,
          class: "text",
          "data-path": f.path,
          "data-type": "text",
          maxlength: f.type === "textarea" ? "4000" : "200",
          rows: f.type === "textarea" ? "2" : undefined,
          "aria-describedby": described,
        });
        wrap.appendChild(input);
      } else {
        const entry = el("div", { class: "entry" });
        input = el("input", {
          id: f.id,
          inputmode: "decimal",
          enterkeyhint: "next",
          autocomplete: "off",
          spellcheck: "false",
          "data-path": f.path,
          "data-harm": f.harm,
          "aria-describedby": described,
        });
        entry.appendChild(input);
        entry.appendChild(el("span", { class: "unit", "aria-hidden": "true" }, f.unit || ""));
        wrap.appendChild(entry);
        if (f.unit) input.setAttribute("aria-label", `${f.label}, in ${f.unit}`);
      }
    }
    wrap.appendChild(el("p", { class: "msg", id: msgId, "aria-live": "polite" }));
    return wrap;
  }

  function buildItems(host, items) {
    for (const it of items) {
      if (it.when) {
        const g = el("div", { class: "group", "data-when": it.when });
        buildItems(g, it.fields);
        host.appendChild(g);
      } else if (it.fold) {
        const d = el("details", { class: "fold", id: it.id });
        d.appendChild(el("summary", null, it.fold));
        const inner = el("div", { class: "fold-body" });
        buildItems(inner, it.fields);
        d.appendChild(inner);
        host.appendChild(d);
      } else {
        host.appendChild(makeField(it));
      }
    }
  }

  function buildForm(defaults) {
    const form = $("#inputs");
    const caseTools = $("#case-tools");
    for (const fs of FORM) {
      const f = el("fieldset", { id: fs.id });
      f.appendChild(el("legend", null, fs.legend));
      buildItems(f, fs.fields);
      if (fs.id === "fs-case") f.appendChild(caseTools);
      form.appendChild(f);
    }
    form.appendChild(el("p", { id: "input-error", class: "msg general", role: "alert" }));
    // Fields the engine build does not know (its default scenario lacks the
    // path) are left out rather than sent and refused.
    for (const f of fieldsById.values()) {
      if (f.optional && get(defaults, f.path) === undefined) {
        const n = $("#" + f.id).closest(".field");
        n.remove();
        fieldsById.delete(f.id);
      }
    }
  }

  // ------------------------------------------------------------ form <-> scenario

  function variantValue(path) {
    const sel = $(`select[data-variant="${path}"]`) || $(`select[data-path="${path}"]`);
    return sel ? sel.value : undefined;
  }

  function updateVisibility() {
    for (const g of $$("[data-when]")) {
      const [path, values] = g.getAttribute("data-when").split("=");
      g.hidden = !values.split("|").includes(variantValue(path));
    }
    // The open-device choices follow the bridge.
    const sel = $("#open_device");
    if (sel) {
      const fam = familyOf(variantValue("bridge.kind"));
      if (sel.getAttribute("data-family") !== fam) {
        const keep = sel.value;
        sel.replaceChildren(el("option", { value: "" }, "None"));
        DEVICE_NAMES[fam].forEach((n, i) => sel.appendChild(el("option", { value: String(i) }, "Device " + n)));
        sel.value = Number(keep) < DEVICE_NAMES[fam].length ? keep : "";
        sel.setAttribute("data-family", fam);
      }
    }
  }

  function activeInputs() {
    return $$("#inputs [data-path], #inputs [data-variant], #inputs [data-harm]").filter((e) => !e.closest("[hidden]"));
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

  function specOf(input) {
    return fieldsById.get(input.id) || {};
  }

  // The scenario the form edits: the default, an example, a case opened or a
  // shared link.  Fields the page has no input for are kept from it; a variant
  // (an object with "kind") is rebuilt from the form.
  let base = {};
  let defaults = {};

  function buildScenario() {
    const scenario = JSON.parse(JSON.stringify(base));
    const errors = [];
    const harm = {};
    for (const e of activeInputs()) {
      const variant = e.getAttribute("data-variant");
      if (variant) {
        setPath(scenario, variant, { kind: e.value });
        continue;
      }
      const type = e.getAttribute("data-type");
      const path = e.getAttribute("data-path");
      if (type === "bool") {
        setPath(scenario, path, e.checked);
        continue;
      }
      if (type === "device") {
        setPath(scenario, path, e.value === "" ? null : Number(e.value));
        continue;
      }
      if (type === "text") {
        setPath(scenario, path, e.value);
        continue;
      }
      const spec = specOf(e);
      const p = Units.parseQuantity(e.value, spec);
      if (p.error) {
        errors.push({ input: e, message: p.error });
        continue;
      }
      if (spec.harm) {
        harm[spec.harm] = harm[spec.harm] || {};
        harm[spec.harm][spec.part] = p.value;
        continue;
      }
      setPath(scenario, path, spec.storeScale ? Number((p.value / spec.storeScale).toPrecision(15)) : p.value);
    }
    // Background 5th and 7th from the form; other orders kept from the case.
    if (Object.keys(harm).length) {
      const list = (get(scenario, "supply.harmonics") || []).filter((h) => !(h.order in harm));
      for (const [order, h] of Object.entries(harm)) {
        if ((h.magnitude_pct || 0) !== 0) list.push({ order: Number(order), magnitude_pct: h.magnitude_pct, phase_deg: h.phase_deg || 0 });
      }
      list.sort((a, b) => a.order - b.order);
      setPath(scenario, "supply.harmonics", list);
    }
    return { scenario, errors };
  }

  function showValue(input, v) {
    const spec = specOf(input);
    input.value = String(Number(((v * (spec.storeScale || 1)) / (spec.scale || 1)).toPrecision(12)));
  }

  function fillForm(sc) {
    for (const sel of $$("select[data-variant]")) {
      const kind = get(sc, sel.getAttribute("data-variant") + ".kind");
      if (kind !== undefined) sel.value = kind;
    }
    const kindSel = $("#bridge_kind");
    if (get(sc, "bridge.kind") !== undefined) kindSel.value = get(sc, "bridge.kind");
    updateVisibility();
    const harms = get(sc, "supply.harmonics") || [];
    for (const input of $$("#inputs [data-path], #inputs [data-harm]")) {
      if (input.tagName === "SELECT" && input.getAttribute("data-type") !== "device") continue;
      const spec = specOf(input);
      const type = input.getAttribute("data-type");
      if (spec.harm) {
        const h = harms.find((x) => x.order === spec.harm);
        showValue(input, h ? h[spec.part] : 0);
        continue;
      }
      // Inside a variant's group that the scenario did not choose there is no
      // value: take the field's own default.
      const group = input.closest("[data-when]");
      const ofVariant = group && $(`select[data-variant="${group.getAttribute("data-when").split("=")[0]}"]`);
      const v = ofVariant && group.hidden ? undefined : get(sc, input.getAttribute("data-path"));
      if (type === "text") input.value = typeof v === "string" ? v : "";
      else if (type === "bool") input.checked = v === true;
      else if (type === "device") input.value = typeof v === "number" ? String(v) : "";
      else if (typeof v === "number") showValue(input, v);
      else if (spec.def !== undefined) input.value = spec.def;
      else input.value = "0";
    }
  }

  function fieldMsg(input) {
    return $("#" + CSS.escape(input.id) + "-msg");
  }

  function clearMessages() {
    for (const e of $$("#inputs [aria-invalid]")) e.removeAttribute("aria-invalid");
    for (const m of $$("#inputs .msg")) if (m.id !== "case-msg") m.textContent = "";
  }

  function markInvalid(input, message) {
    input.setAttribute("aria-invalid", "true");
    const m = fieldMsg(input);
    if (m) m.textContent = message;
    const fold = input.closest("details");
    if (fold) fold.open = true; // never hide a marked field
  }

  // The engine throws "field.path: reason": the field's input (or null) and
  // the reason.
  function engineErrorField(text, scenario) {
    const msg = String(text);
    const i = msg.indexOf(": ");
    const path = (i > 0 ? msg.slice(0, i) : "").replace(/\[(\d+)\]/g, ".$1");
    const reason = i > 0 ? msg.slice(i + 2) : msg;
    const inputs = activeInputs();
    let target = inputs.find((e) => e.getAttribute("data-path") === path);
    if (!target) {
      const m = /^supply\.harmonics\.(\d+)\.(\w+)/.exec(path);
      const h = m && scenario && get(scenario, `supply.harmonics.${m[1]}`);
      if (h) target = inputs.find((e) => specOf(e).harm === h.order && specOf(e).part === m[2]);
    }
    if (!target) {
      // the longest field path that the error path starts with, or the variant
      target = inputs
        .filter((e) => {
          const p = e.getAttribute("data-path") || e.getAttribute("data-variant");
          return p && path.startsWith(p);
        })
        .sort((a, b) => (b.getAttribute("data-path") || "").length - (a.getAttribute("data-path") || "").length)[0];
    }
    return { target: target || null, reason };
  }

  // Put the engine's reason beside its field.
  function showEngineError(text, scenario) {
    const { target, reason } = engineErrorField(text, scenario);
    if (target) markInvalid(target, inFieldUnits(reason, specOf(target)));
    else $("#input-error").textContent = String(text);
  }

  // The engine's error as a sentence for the user: the field's label, and the
  // refused value in the field's unit ("Bus capacitance: -1000 µF is out of
  // range: ..."), as the form says it beside the field.
  function engineErrorText(text, scenario) {
    const { target, reason } = engineErrorField(text, scenario);
    if (!target) return String(text);
    const f = specOf(target);
    return (f.label || target.id) + ": " + inFieldUnits(reason, f);
  }

  // The engine states the value it refused in SI ("-0.001 is out of range");
  // beside a field shown in mH, kW or µF say it as typed ("-1 mH is out of
  // range").  The range that follows keeps the engine's own units.
  function inFieldUnits(reason, spec) {
    if (!spec || !spec.scale || spec.scale === 1 || !spec.unit) return reason;
    const m = /^(-?\d+(?:\.\d+)?(?:e[-+]?\d+)?)(\s+[A-Za-z]+)?(?= is )/.exec(reason);
    if (!m) return reason;
    const typed = Number(m[1]) / spec.scale;
    return fmt(typed) + " " + spec.unit + reason.slice(m[0].length);
  }

  // ------------------------------------------------------------ results: tables

  // A row: [label, path in the analysis object, unit, scale (display = value * scale)].
  function table(rows, a, cls) {
    const t = el("table", { class: "figures " + (cls || "") });
    const body = el("tbody");
    for (const [label, path, unit, scale] of rows) {
      const raw = get(a, path);
      if (raw === undefined || raw === null) continue;
      const v = typeof raw === "number" ? raw * (scale || 1) : raw;
      const tr = el("tr");
      tr.appendChild(el("th", { scope: "row" }, label));
      tr.appendChild(el("td", { class: typeof raw === "number" ? "num" : "txt", "data-out": path }, typeof v === "number" ? fmt(v) : String(v)));
      tr.appendChild(el("td", { class: "unit" }, unit || ""));
      body.appendChild(tr);
    }
    t.appendChild(body);
    return t;
  }

  // A table with a header: cols [title, fn(row) -> text, class].
  function grid(rows, cols, attrs) {
    const t = el("table", Object.assign({ class: "grid" }, attrs || {}));
    const head = el("thead");
    const hr = el("tr");
    for (const [h] of cols) hr.appendChild(el("th", { scope: "col" }, h));
    head.appendChild(hr);
    t.appendChild(head);
    const body = el("tbody");
    for (const r of rows) {
      const tr = el("tr");
      for (const [, f, cls] of cols) {
        const v = f(r);
        const td = el("td", { class: cls || (typeof v === "number" ? "num" : "txt") }, typeof v === "number" ? fmt(v, 4) : v === undefined || v === null ? "—" : String(v));
        tr.appendChild(td);
      }
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

  function frag(...nodes) {
    const d = el("div");
    for (const n of nodes) if (n) d.appendChild(typeof n === "string" ? el("p", { class: "note" }, n) : n);
    return d;
  }

  const VERDICT = {
    pass: ["✓", "Pass"],
    fail: ["✗", "Fail"],
    incomplete: ["…", "Incomplete"],
    not_applicable: ["–", "Not applicable"],
  };
  function verdictBadge(v, path) {
    const [sym, word] = VERDICT[v] || ["?", String(v)];
    const s = el("span", { class: "verdict v-" + v, "data-out": path });
    s.appendChild(el("span", { "aria-hidden": "true" }, sym + " "));
    s.appendChild(document.createTextNode(word));
    return s;
  }

  // IEEE 519's pulse-number allowance: whether the characteristic limits are
  // raised, and if not, the non-characteristic orders above a quarter of
  // their limits that keep it off (the engine lists them).
  function pulseAllowanceLine(i) {
    const pa = i.pulse_allowance;
    const orders = pa.orders.filter((h) => i.current.some((k) => k.order === h));
    const head = `Pulse number ${pa.pulse_number}: limits of the characteristic orders (${orders.map((h) => "h" + h).join(", ")}) × ${fmt(pa.multiplier, 4)}`;
    let text;
    if (pa.applied) {
      text = `${head}: applied (every non-characteristic order is within 25 % of its limit).`;
    } else {
      const byOrder = new Map(i.current.filter((k) => typeof k.order === "number").map((k) => [k.order, k]));
      const blocking = (pa.blocking_orders || []).map((h) => {
        const k = byOrder.get(h);
        return k ? `h${h} ${fmt(k.value, 3)} % of IL > ${fmt(0.25 * k.limit, 3)} % (25 % of ${fmt(k.limit, 3)} %)` : `h${h}`;
      });
      text = `${head}: not applied, because ${blocking.length ? "these non-characteristic orders exceed 25 % of their limits: " + blocking.join("; ") : "non-characteristic orders exceed 25 % of their limits"}. The table's limits are the unraised ones.`;
    }
    return el("p", { class: "note strong", "data-out": "compliance.ieee519.pulse_allowance", "data-applied": String(pa.applied) }, text);
  }

  function checksTable(checks, path) {
    return grid(
      checks,
      [
        ["Check", (c) => c.name],
        ["Value", (c) => c.value],
        ["Limit", (c) => c.limit],
        ["Unit", (c) => c.unit],
        ["Worst phase", (c) => c.phase],
        ["Result", (c) => (c.pass ? "✓ pass" : "✗ FAIL"), "verdict-cell"],
      ],
      { "data-out": path }
    );
  }

  const SECTIONS = [
    {
      id: "warnings",
      title: "Warnings",
      when: (a) => allWarnings(a).length > 0,
      build: (a) => list(allWarnings(a), "warnings"),
    },
    {
      id: "exact-dc",
      title: "DC bus (simulated)",
      when: (a) => a.results,
      build: (a) =>
        table(
          [
            ["Average voltage", "results.dc.v_avg_v", "V"],
            ["RMS voltage", "results.dc.v_rms_v", "V"],
            ["Minimum voltage", "results.dc.v_min_v", "V"],
            ["Maximum voltage", "results.dc.v_max_v", "V"],
            ["Ripple, peak to peak", "results.dc.ripple_pp_v", "V"],
            ["Ripple, RMS", "results.dc.ripple_rms_v", "V"],
            ["Ripple factor (ripple RMS / average)", "results.dc.ripple_factor", "%", 100],
            ["Dominant ripple frequency", "results.dc.ripple_dominant_hz", "Hz"],
            ["Average current", "results.dc.i_avg_a", "A"],
            ["RMS current", "results.dc.i_rms_a", "A"],
            ["Conduction", "results.dc.conduction", ""],
            ["Overlap angle μ", "results.dc.overlap_deg", "°"],
            ["Extinction angle γ = 180° − α − μ (inverting)", "results.dc.extinction_deg", "°"],
            ["Load power", "results.dc.p_load_w", "kW", 1e-3],
            ["Power balance error", "results.power_balance_error", ""],
          ],
          a
        ),
    },
    {
      id: "exact-line",
      title: "Line currents and power (simulated)",
      when: (a) => a.results,
      build: (a) =>
        frag(
          grid(a.results.line_currents, [
            ["Phase", (r) => r.phase],
            ["RMS, A", (r) => r.rms_a],
            ["Fundamental, A", (r) => r.fundamental_a],
            ["THD, %", (r) => r.thd_pct],
            ["TDD, %", (r) => r.tdd_pct],
          ]),
          grid((a.results.power || []).concat(a.results.total ? [a.results.total] : []), [
            ["Phase", (r) => r.phase],
            ["P, kW", (r) => r.p_w / 1e3],
            ["S, kVA", (r) => r.s_va / 1e3],
            ["Q1, kvar", (r) => r.q1_var / 1e3],
            ["D, kVA", (r) => r.d_va / 1e3],
            ["Power factor", (r) => r.power_factor],
            ["Displacement factor", (r) => r.displacement_factor],
            ["Distortion factor", (r) => r.distortion_factor],
          ]),
          "Demand current IL used for TDD: " + fmt(a.results.demand_current_a) + " A."
        ),
    },
    {
      id: "exact-harmonics",
      title: "Line-current harmonics (simulated)",
      when: (a) => a.results && a.results.line_currents.length,
      build: (a) => {
        const lc = a.results.line_currents;
        const orders = lc[0].rows.map((r) => r.order).filter((h) => lc.some((p) => (p.rows.find((r) => r.order === h) || {}).pct_of_fundamental >= 0.05));
        const cell = (p, h, k) => ((lc[p] && lc[p].rows.find((r) => r.order === h)) || {})[k];
        const cols = [["Order h", (h) => String(h)]];
        lc.forEach((p, i) => {
          cols.push([`Phase ${p.phase}, A`, (h) => cell(i, h, "rms")]);
          cols.push([`Phase ${p.phase}, %`, (h) => cell(i, h, "pct_of_fundamental")]);
        });
        return frag(grid(orders, cols, { "data-out": "results.line_currents" }), "Orders below 0.05 % of the fundamental on every phase are left out.");
      },
    },
    {
      id: "ratings",
      title: "Device and component ratings",
      when: (a) => a.results && a.results.ratings,
      build: (a) =>
        frag(
          grid(a.results.ratings.devices, [
            ["Device", (d) => d.name],
            ["Avg, A", (d) => d.i_avg_a],
            ["RMS, A", (d) => d.i_rms_a],
            ["Peak, A", (d) => d.i_peak_a],
            ["Reverse peak, V", (d) => d.v_reverse_peak_v],
            ["Forward blocking peak, V", (d) => d.v_forward_block_peak_v],
            ["Conduction loss, W", (d) => d.conduction_loss_w],
            ["State", (d) => (d.open ? "OPEN (fault)" : "working")],
          ]),
          table(
            [
              ["Worst device voltage", "results.ratings.worst_device_voltage_v", "V"],
              ["Suggested voltage class", "results.ratings.suggested_voltage_class_v", "V"],
              ["Class / peak line voltage", "results.ratings.voltage_class_margin", ""],
              ["Class / worst device voltage", "results.ratings.voltage_class_over_worst", ""],
              ["Total conduction loss", "results.ratings.total_conduction_loss_w", "W"],
              ["Line reactor current, RMS", "results.ratings.reactor_i_rms_a", "A"],
              ["Line reactor current, peak", "results.ratings.reactor_i_peak_a", "A"],
              ["DC choke current, RMS", "results.ratings.choke_i_rms_a", "A"],
              ["DC choke current, peak", "results.ratings.choke_i_peak_a", "A"],
              ["Transformer rating needed", "results.ratings.transformer_va", "kVA", 1e-3],
              ["Utilisation factor", "results.ratings.utilisation_factor", ""],
            ],
            a
          ),
          a.results.ratings.voltage_class_note
        ),
    },
    {
      id: "capacitor",
      title: "Bus capacitor",
      when: (a) => a.results && a.results.ratings && a.results.ratings.capacitor,
      build: (a) =>
        frag(
          table(
            [
              ["Ripple current, RMS", "results.ratings.capacitor.i_rms_a", "A"],
              ["ESR loss", "results.ratings.capacitor.esr_loss_w", "W"],
              ["Temperature rise", "results.ratings.capacitor.temp_rise_k", "K"],
              ["Core temperature", "results.ratings.capacitor.core_temp_c", "°C"],
              ["Life estimate", "results.ratings.capacitor.life_estimate_h", "h"],
            ],
            a
          ),
          a.results.ratings.capacitor.note
        ),
    },
    {
      id: "compare",
      title: "Textbook beside exact",
      when: (a) => a.results && a.results.comparisons && a.results.comparisons.length,
      build: (a) =>
        grid(
          a.results.comparisons,
          [
            ["Quantity", (c) => c.quantity],
            ["Unit", (c) => c.unit],
            ["Textbook", (c) => c.textbook],
            ["Exact", (c) => c.exact],
            ["Difference, %", (c) => c.diff_pct],
            ["The textbook figure assumes", (c) => c.assumption, "txt assumption"],
          ],
          { "data-out": "results.comparisons" }
        ),
    },
    {
      id: "compliance",
      title: "Grid compliance at the PCC",
      when: (a) => a.compliance,
      build: (a) => {
        const c = a.compliance;
        const d = el("div");
        const head = el("p", { class: "verdict-line" });
        head.appendChild(document.createTextNode("Overall: "));
        head.appendChild(verdictBadge(c.verdict, "compliance.verdict"));
        d.appendChild(head);
        d.appendChild(el("p", { class: "note strong" }, c.governing_note));
        if (c.from_memory) d.appendChild(list(c.from_memory_notes, "warnings"));
        const i = c.ieee519;
        d.appendChild(el("h3", null, i.edition));
        const p = el("p");
        p.appendChild(document.createTextNode("Current: "));
        p.appendChild(verdictBadge(i.current_verdict, "compliance.ieee519.current_verdict"));
        p.appendChild(document.createTextNode("  Voltage: "));
        p.appendChild(verdictBadge(i.voltage_verdict, "compliance.ieee519.voltage_verdict"));
        d.appendChild(p);
        d.appendChild(
          table(
            [
              ["Short-circuit current Isc", "compliance.ieee519.i_sc_a", "A"],
              ["Maximum demand current IL", "compliance.ieee519.i_l_a", "A"],
              ["Isc / IL", "compliance.ieee519.isc_over_il", ""],
              ["Row used", "compliance.ieee519.row", ""],
              ["Current table", "compliance.ieee519.current_table", ""],
              ["Voltage table", "compliance.ieee519.voltage_table", ""],
            ],
            a
          )
        );
        if (i.pulse_allowance) d.appendChild(pulseAllowanceLine(i));
        const interesting = (list_) => list_.filter((k) => !k.pass || k.order === null || k.order === undefined || k.value >= 0.1 * k.limit);
        d.appendChild(checksTable(interesting(i.current), "compliance.ieee519.current"));
        d.appendChild(el("p", { class: "note" }, "Harmonics below a tenth of their limit (and passing) are left out of this table; the spectrum plot shows them all."));
        d.appendChild(checksTable(interesting(i.voltage), "compliance.ieee519.voltage"));
        d.appendChild(list(i.notes.concat([i.row_convention, i.voltage_method], i.pulse_allowance ? [i.pulse_allowance.wording] : []), "notes"));
        const e = c.iec61000_3_12;
        d.appendChild(el("h3", null, e.edition));
        const q = el("p");
        q.appendChild(verdictBadge(e.verdict, "compliance.iec61000_3_12.verdict"));
        d.appendChild(q);
        d.appendChild(list(e.conditions, "notes"));
        if (e.checks.length) d.appendChild(checksTable(e.checks, "compliance.iec61000_3_12.checks"));
        d.appendChild(list(c.notes.concat([c.aggregation_method]), "notes"));
        return d;
      },
    },
    {
      id: "dc",
      title: "DC output — textbook closed forms",
      note: (a) => "Ripple-free DC current assumed: Id = " + fmt(a.textbook_i_d_a) + " A.",
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
      build: (a) =>
        grid(
          a.textbook.harmonics,
          [
            ["Order h", (h) => String(h.order)],
            ["% of fundamental", (h) => h.pct_of_fundamental],
            ["RMS, A", (h) => h.rms_a],
          ],
          { class: "grid harmonics", "data-out": "textbook.harmonics" }
        ),
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

  function allWarnings(a) {
    const w = (a.warnings || []).slice();
    if (a.sim && a.sim.warnings) for (const x of a.sim.warnings) if (!w.includes(x)) w.push(x);
    return w;
  }

  // The figures a user checks first (computed here from the analysis; each has
  // data-out="glance.<name>").
  function glanceOf(a) {
    const r = a.results;
    if (!r) return null;
    const devs = (r.ratings && r.ratings.devices) || [];
    const worstLine = r.line_currents.reduce((m, p) => (p.rms_a > m.rms_a ? p : m), r.line_currents[0] || { rms_a: NaN, phase: "?" });
    // The phases the worst THD and TDD belong to (either may differ from the
    // phase with the largest RMS current).
    const phaseOfMax = (key, value) => {
      const p = r.line_currents.find((c) => c[key] === value);
      return p ? p.phase : "?";
    };
    return {
      v_dc_avg_v: r.dc.v_avg_v,
      ripple_pp_v: r.dc.ripple_pp_v,
      ripple_hz: r.dc.ripple_dominant_hz,
      i_line_rms_a: worstLine.rms_a,
      i_line_phase: worstLine.phase,
      thd_max_pct: r.thd_max_pct,
      thd_phase: phaseOfMax("thd_pct", r.thd_max_pct),
      tdd_max_pct: r.tdd_max_pct,
      tdd_phase: phaseOfMax("tdd_pct", r.tdd_max_pct),
      power_factor: r.total ? r.total.power_factor : NaN,
      displacement_factor: r.total ? r.total.displacement_factor : NaN,
      device_v_peak_v: r.ratings ? r.ratings.worst_device_voltage_v : NaN,
      device_i_peak_a: devs.reduce((m, d) => Math.max(m, d.i_peak_a), 0),
      voltage_class_v: r.ratings ? r.ratings.suggested_voltage_class_v : NaN,
      verdict: a.compliance ? a.compliance.verdict : null,
    };
  }

  function renderGlance(a) {
    const host = $("#glance");
    const g = glanceOf(a);
    host.replaceChildren();
    if (!g) {
      host.appendChild(el("p", { class: "note" }, "The exact simulation did not run for this case; see the warnings. The textbook figures are below."));
      return;
    }
    const tile = (label, key, value, unit, sub) => {
      const t = el("div", { class: "tile" });
      t.appendChild(el("span", { class: "tile-label" }, label));
      const v = el("span", { class: "tile-value" });
      v.appendChild(el("span", { "data-out": "glance." + key }, fmt(value, 4)));
      if (unit) v.appendChild(el("span", { class: "tile-unit" }, " " + unit));
      t.appendChild(v);
      if (sub) t.appendChild(el("span", { class: "tile-sub" }, sub));
      host.appendChild(t);
    };
    tile("DC bus, average", "v_dc_avg_v", g.v_dc_avg_v, "V");
    tile("DC ripple, peak to peak", "ripple_pp_v", g.ripple_pp_v, "V", fmt(g.ripple_hz, 4) + " Hz dominant");
    tile("Line current, RMS", "i_line_rms_a", g.i_line_rms_a, "A", "worst phase: " + g.i_line_phase);
    tile("THD of line current", "thd_max_pct", g.thd_max_pct, "%", `phase ${g.thd_phase}; TDD ${fmt(g.tdd_max_pct, 3)} % (phase ${g.tdd_phase})`);
    tile("Power factor", "power_factor", g.power_factor, "", "displacement " + fmt(g.displacement_factor, 3));
    tile("Worst device voltage", "device_v_peak_v", g.device_v_peak_v, "V", "peak current " + fmt(g.device_i_peak_a, 4) + " A; class " + fmt(g.voltage_class_v) + " V suggested");
    if (g.verdict) {
      const t = el("div", { class: "tile grid-tile v-" + g.verdict });
      t.appendChild(el("span", { class: "tile-label" }, "Grid limits (IEEE 519, IEC 61000-3-12)"));
      const v = el("span", { class: "tile-value" });
      v.appendChild(verdictBadge(g.verdict, "glance.verdict"));
      t.appendChild(v);
      t.appendChild(el("span", { class: "tile-sub" }, "an indication; details below"));
      host.appendChild(t);
    }
    // The warnings, where the eye is: the first in full, the count, a link to all.
    const w = allWarnings(a);
    if (w.length) {
      const p = el("p", { class: "glance-warn", "data-out": "glance.warnings" }, "⚠ " + w[0] + " ");
      p.appendChild(el("a", { href: "#out-warnings" }, w.length > 1 ? `all ${w.length} warnings below` : "under Warnings below"));
      host.appendChild(p);
    }
  }

  function renderSections(a) {
    const host = $("#sections");
    const f = document.createDocumentFragment();
    for (const s of SECTIONS) {
      if (s.when && !s.when(a)) continue;
      const sec = el("section", { class: "card", id: "out-" + s.id });
      sec.appendChild(el("h2", null, s.title));
      if (s.note) sec.appendChild(el("p", { class: "note" }, s.note(a)));
      sec.appendChild(s.build(a));
      f.appendChild(sec);
    }
    host.replaceChildren(f);
  }

  // The inputs as typed: [{id, label, value, unit}] (the printed report's
  // table, the base case named in a sweep's CSV).
  function inputRows() {
    return activeInputs().map((e) => {
      const f = specOf(e);
      let value;
      if (e.tagName === "SELECT") value = e.options[e.selectedIndex] ? e.options[e.selectedIndex].textContent : e.value;
      else if (e.type === "checkbox") value = e.checked ? "yes" : "no";
      else value = e.value;
      return { id: e.id, label: f.label || e.id, value, unit: f.unit || "" };
    });
  }

  // The inputs as a table, for the printed report.
  function renderPrintInputs() {
    const body = el("tbody");
    for (const r of inputRows()) {
      const tr = el("tr");
      tr.appendChild(el("th", { scope: "row" }, r.label));
      tr.appendChild(el("td", null, r.value));
      tr.appendChild(el("td", { class: "unit" }, r.unit));
      body.appendChild(tr);
    }
    const t = el("table", { class: "figures" });
    t.appendChild(body);
    $("#print-inputs").replaceChildren(t);
    $("#print-date").textContent = new Date().toISOString().slice(0, 16).replace("T", " ");
  }

  // ------------------------------------------------------------ plots

  const PLOT = globalThis.RectifieldPlot;
  const plots = {}; // tab id -> plot
  let analysis = null;
  let analysedLoadKind = null; // dc.load.kind of the scenario behind `analysis`
  let waves = null; // {t, sig: [Float64Array]}
  let activeTab = "waves";

  function colors() {
    const dark = document.documentElement.getAttribute("data-theme") === "dark";
    return dark
      ? { a: "#6cb4ff", b: "#ffa45c", c: "#d7a6ff", dc: "#5fd39a", dc2: "#3fc9c9", i: "#ff7b8a", load: "#e0c060", cap: "#ff8fd0", other: ["#9ecbff", "#ffc98f", "#c7b3ff", "#9be2b8", "#ffb3c0", "#e7d38c"] }
      : { a: "#0b5cad", b: "#c2410c", c: "#7e22ce", dc: "#047857", dc2: "#0e7490", i: "#b91c1c", load: "#8a5a00", cap: "#be185d", other: ["#1d4ed8", "#b45309", "#6d28d9", "#15803d", "#be123c", "#4d7c0f"] };
  }

  const TRACE_GROUPS = [
    ["phase_v", "Supply phase voltages"],
    ["pcc_v", "PCC phase voltages"],
    ["line_i", "Line currents"],
    ["v_dc", "DC bus voltage"],
    ["v_bridge", "Bridge output voltage"],
    ["i_dc", "DC current (bridge)"],
    ["i_load", "Load current"],
    ["i_choke", "Choke current"],
    ["i_cap", "Capacitor current"],
    ["dev_i", "Device currents"],
    ["dev_v", "Device voltages"],
    ["secondary_i", "Secondary currents"],
  ];
  const traceOn = new Set(["line_i", "v_dc", "phase_v"]);

  function traceIndexes(roles, key) {
    if (!roles) return [];
    if (key === "dev_i") return (roles.devices || []).map((d) => d[0]);
    if (key === "dev_v") return (roles.devices || []).map((d) => d[1]);
    const r = roles[key];
    if (r === undefined || r === null) return [];
    return Array.isArray(r) ? r : [r];
  }

  function buildTraceChooser() {
    const host = $("#trace-choice");
    host.replaceChildren();
    const roles = analysis && analysis.sim && analysis.sim.roles;
    for (const [key, label] of TRACE_GROUPS) {
      if (!traceIndexes(roles, key).length) continue;
      const lab = el("label", { class: "check chip" });
      const cb = el("input", { type: "checkbox", value: key });
      cb.checked = traceOn.has(key);
      cb.addEventListener("change", () => {
        if (cb.checked) traceOn.add(key);
        else traceOn.delete(key);
        renderTab("waves");
      });
      lab.appendChild(cb);
      lab.appendChild(el("span", null, label));
      host.appendChild(lab);
    }
  }

  function renderWaves() {
    const host = $("#plot-waves");
    if (!analysis || !analysis.sim || !waves) {
      host.replaceChildren(el("p", { class: "note" }, "No simulated waveforms for this case."));
      return;
    }
    const sim = analysis.sim;
    const col = colors();
    const periods = Number($("#periods").value) || 2;
    const n = waves.t.length;
    const T = sim.period_s;
    // repeat the periodic steady state: `periods` periods (the last grid point is t = T)
    const total = (n - 1) * periods + 1;
    const t = new Float64Array(total);
    for (let k = 0; k < total; k++) t[k] = waves.t[k % (n - 1)] + Math.floor(k / (n - 1)) * T;
    t[total - 1] = T * periods;
    const tile = (src) => {
      const o = new Float64Array(total);
      for (let k = 0; k < total; k++) o[k] = src[k === total - 1 ? n - 1 : k % (n - 1)];
      return o;
    };
    const series = [];
    const phaseColor = (name) => (/a/.test(name.replace(/^[iv]_?(pcc_)?/, "")[0] || "") ? col.a : /^[iv]_(pcc_)?b/.test(name) ? col.b : /^[iv]_(pcc_)?c/.test(name) ? col.c : col.a);
    let k = 0;
    for (const [key] of TRACE_GROUPS) {
      if (!traceOn.has(key)) continue;
      for (const idx of traceIndexes(sim.roles, key)) {
        const s = sim.signals[idx];
        const isV = s.unit === "V";
        let color;
        if (["phase_v", "pcc_v", "line_i", "secondary_i"].includes(key)) color = phaseColor(s.name);
        else if (key === "v_dc") color = col.dc;
        else if (key === "v_bridge") color = col.dc2;
        else if (key === "i_dc") color = col.i;
        else if (key === "i_load") color = col.load;
        else if (key === "i_cap") color = col.cap;
        else color = col.other[k++ % col.other.length];
        series.push({
          label: s.name,
          unit: s.unit,
          scale: isV ? "V" : "A",
          values: tile(waves.sig[idx]),
          color,
          dash: key === "pcc_v" ? [2, 3] : isV && key !== "v_dc" ? [7, 4] : undefined,
          width: key === "v_dc" || key === "line_i" ? 2.25 : 1.5,
        });
      }
    }
    if (!series.length) {
      host.replaceChildren(el("p", { class: "note" }, "Choose at least one trace above."));
      return;
    }
    plots.waves = PLOT.create(host, {
      title: "Waveforms (periodic steady state)",
      name: "rectifield-waveforms",
      x: { label: "time", unit: "s", values: t },
      series,
      height: 340,
      yLabels: { V: "voltage (V)", A: "current (A)" },
    });
  }

  function renderSpectrum() {
    const host = $("#plot-spectrum");
    const basis = $("#spectrum-basis").value;
    const a = analysis;
    if (!a || !a.results) {
      host.replaceChildren(el("p", { class: "note" }, "No simulated spectrum for this case."));
      return;
    }
    const col = colors();
    let orders = [];
    let vals = [];
    let lims = null;
    let unit = "%";
    let limitLabel = "";
    const lc = a.results.line_currents;
    if (basis === "ieee" || basis === "iec") {
      const c = a.compliance;
      const checks = c ? (basis === "ieee" ? c.ieee519.current : c.iec61000_3_12.checks) : [];
      const hs = checks.filter((k) => typeof k.order === "number" && k.order >= 2);
      if (!hs.length) {
        host.replaceChildren(el("p", { class: "note" }, basis === "iec" ? "IEC 61000-3-12 does not apply to this case (see the compliance table)." : "No compliance assessment for this case."));
        return;
      }
      orders = hs.map((k) => k.order);
      vals = hs.map((k) => k.value);
      lims = hs.map((k) => k.limit);
      unit = hs[0].unit;
      limitLabel = basis === "ieee" ? "IEEE 519 limit" : "IEC 61000-3-12 limit";
    } else {
      const maxOrder = lc[0] ? lc[0].rows[lc[0].rows.length - 1].order : 0;
      for (let h = 2; h <= maxOrder; h++) {
        orders.push(h);
        let m = 0;
        for (const p of lc) {
          const r = p.rows.find((x) => x.order === h);
          if (r) m = Math.max(m, basis === "amps" ? r.rms : r.pct_of_fundamental);
        }
        vals.push(m);
      }
      unit = basis === "amps" ? "A" : "% of I1";
      if (a.compliance && basis === "pct") {
        // The IEEE 519 limits are in % of IL: redrawn in % of the fundamental.
        const il = a.compliance.ieee519.i_l_a;
        const i1 = Math.max(...lc.map((p) => p.fundamental_a));
        const byOrder = new Map(a.compliance.ieee519.current.filter((k) => typeof k.order === "number").map((k) => [k.order, k.limit]));
        lims = orders.map((h) => (byOrder.has(h) ? (byOrder.get(h) * il) / i1 : null));
        limitLabel = "IEEE 519 limit (as % of I1)";
      }
    }
    const series = [{ label: "worst phase", unit: unit === "A" ? "A" : "%", scale: "y", values: vals, color: col.a, bars: true }];
    if (lims) series.push({ label: limitLabel, unit: "%", scale: "y", values: lims, color: col.i, width: 2.5, limitTicks: true });
    plots.spectrum = PLOT.create(host, {
      title: "Line-current spectrum",
      name: "rectifield-spectrum",
      x: { label: "harmonic order h", unit: "", values: orders },
      series,
      height: 320,
      xIsOrder: true,
      yMin0: true,
      yLabels: { y: unit },
    });
  }

  function renderTransient() {
    const host = $("#plot-transient");
    const figs = $("#transient-figures");
    figs.replaceChildren();
    const tr = analysis && analysis.sim && analysis.sim.transient;
    if (!tr) {
      const p = el("p", { class: "note" }, "The power-up transient is computed when “Power-up transient” (DC side → Power-up and precharge) is above 0 cycles. ");
      const b = el("button", { type: "button", id: "transient-on" }, "Compute 3 cycles");
      b.addEventListener("click", () => {
        $("#fold-precharge").open = true;
        $("#transient_cycles").value = "3";
        clearTimeout(timer);
        compute();
      });
      p.appendChild(b);
      host.replaceChildren(p);
      return;
    }
    figs.appendChild(
      table(
        [
          ["Peak line current, whole power-up", "sim.transient.inrush_peak_a", "A"],
          ["… through the precharge resistor", "sim.transient.precharge_peak_a", "A"],
          ["… after the bypass closed", "sim.transient.bypass_surge_a", "A"],
          ["Highest bus voltage", "sim.transient.v_dc_peak_v", "V"],
          ["Bus charge time", "sim.transient.charge_time_s", "ms", 1e3],
          ["Precharge bypass at", "sim.transient.bypass_at_s", "ms", 1e3],
        ],
        analysis
      )
    );
    if (analysedLoadKind === "constant_power") {
      figs.appendChild(
        el(
          "p",
          { class: "note", id: "transient-cpl-note" },
          analysis.sim.transient.inverter_held_off
            ? "The drive's inverter is held off (no load) until the precharge bypass closes; from then on it draws its power, shown as its equivalent resistance at the steady bus voltage."
            : "The constant-power load is shown as its equivalent resistance at the steady bus voltage throughout the power-up (no precharge circuit: the load is on from the start)."
        )
      );
    }
    const col = colors();
    plots.transient = PLOT.create(host, {
      title: "Power-up transient",
      name: "rectifield-power-up",
      x: { label: "time", unit: "s", values: tr.t_s },
      series: [
        { label: "v_dc", unit: "V", scale: "V", values: tr.v_dc, color: col.dc, width: 2.25 },
        { label: "i_a", unit: "A", scale: "A", values: tr.i_a, color: col.a },
        { label: "i_b", unit: "A", scale: "A", values: tr.i_b, color: col.b },
        { label: "i_c", unit: "A", scale: "A", values: tr.i_c, color: col.c },
      ],
      height: 320,
      yLabels: { V: "voltage (V)", A: "current (A)" },
    });
  }

  function renderTab(id) {
    if (plots[id]) {
      plots[id].destroy();
      delete plots[id];
    }
    if (id === "waves") renderWaves();
    else if (id === "spectrum") renderSpectrum();
    else if (id === "transient") renderTransient();
    else if (id === "sweep") renderSweepPlot();
  }

  function showTab(id) {
    activeTab = id;
    for (const b of $$("#plot-tabs [role=tab]")) {
      const on = b.getAttribute("data-tab") === id;
      b.setAttribute("aria-selected", on ? "true" : "false");
      b.tabIndex = on ? 0 : -1;
    }
    for (const p of $$(".tabpanel")) p.hidden = p.id !== "panel-" + id;
    renderTab(id);
  }

  function renderPlots() {
    buildTraceChooser();
    for (const id of Object.keys(plots)) {
      plots[id].destroy();
      delete plots[id];
    }
    renderTab(activeTab);
  }

  // ------------------------------------------------------------ sweeps

  const SUMMARY = {
    v_dc_avg_v: ["DC bus average", "V"],
    v_dc_ripple_pp_v: ["DC ripple, peak to peak", "V"],
    v_dc_ripple_rms_v: ["DC ripple, RMS", "V"],
    ripple_dominant_hz: ["Dominant ripple frequency", "Hz"],
    i_dc_avg_a: ["DC current average", "A"],
    i_line_rms_a: ["Line current RMS", "A"],
    i_line_fundamental_a: ["Line current, fundamental", "A"],
    thd_max_pct: ["THD, worst phase", "%"],
    tdd_max_pct: ["TDD, worst phase", "%"],
    power_factor: ["Power factor", ""],
    displacement_factor: ["Displacement factor", ""],
    p_in_w: ["Input power", "W"],
    p_dc_w: ["DC power", "W"],
    overlap_deg: ["Overlap angle", "°"],
    device_i_peak_a: ["Device peak current", "A"],
    device_i_rms_a: ["Device RMS current", "A"],
    device_v_peak_v: ["Device peak voltage", "V"],
    cap_i_rms_a: ["Capacitor ripple current RMS", "A"],
    textbook_v_dc_v: ["DC voltage, textbook", "V"],
    v_dc_min_v: ["DC bus, lowest", "V"],
    device_i_avg_a: ["Device average current", "A"],
    h5_max_pct: ["5th harmonic, worst phase", "%"],
    h7_max_pct: ["7th harmonic, worst phase", "%"],
    cap_core_temp_c: ["Capacitor core temperature", "°C"],
    cap_life_h: ["Capacitor life estimate", "h"],
  };
  // {path, label, unit (plotted, SI), st, xs, points, running, cancel, key,
  // state ("done" | "cancelled"), stale, info, inputs, shownUnit, shownScale, slug}
  let sweep = null;

  // JSON with the keys in order, so that the same scenario reads the same.
  function canonical(v) {
    if (Array.isArray(v)) return "[" + v.map(canonical).join(",") + "]";
    if (v && typeof v === "object") {
      return "{" + Object.keys(v).sort().map((k) => JSON.stringify(k) + ":" + canonical(v[k])).join(",") + "}";
    }
    return JSON.stringify(v === undefined ? null : v);
  }

  // What a sweep's figures depend on: the scenario as the engine's sweep
  // takes it (src/sweep.rs, base_scenario: no power-up transient, no fix
  // search), without the case's name and notes, and without the varied field
  // (every point sets it) -- except in a sweep of the load when the rating
  // is taken from the load: the base case's load then sets the rating every
  // point keeps.
  function sweepKey(scenario, path) {
    const s = JSON.parse(JSON.stringify(scenario));
    delete s.name;
    delete s.notes;
    if (s.analysis) s.analysis.transient_cycles = 0;
    if (s.compliance) s.compliance.search_fixes = false;
    const ratingFromLoad = path.startsWith("dc.load.") && !(get(s, "analysis.rated_power_w") > 0);
    if (!ratingFromLoad) setPath(s, path, null);
    return canonical(s);
  }

  // A sweep shown for inputs other than the form's is marked out of date (on
  // screen: a note and the plot greyed; in print: left out, with a note),
  // and current again when the inputs are back to the sweep's.  Called by
  // compute() on every change of the form and at the end of a sweep.
  function checkSweep(scenario, errors) {
    if (!sweep || sweep.running) return;
    // a field the page cannot read: the form no longer says what the sweep
    // was run for (the varied field excepted: every point sets it)
    const unread = errors.some((e) => e.input.id !== sweep.field);
    const stale = unread || sweepKey(scenario, sweep.path) !== sweep.key;
    sweep.stale = stale;
    $("#panel-sweep").setAttribute("data-state", stale ? "stale" : sweep.state);
    $("#sweep-stale").hidden = !stale;
    $("#sweep-stale-print").textContent = stale
      ? "This sweep was computed for other inputs than those listed in this report, so its plot is left out. Run it again to include it."
      : "";
  }

  // An ASCII file-name part from a label: "Bus capacitance" -> "bus-capacitance".
  function slug(text) {
    const t = String(text)
      .normalize("NFKD")
      .replace(/[\u0300-\u036f]/g, "")
      .toLowerCase()
      .replace(/[^a-z0-9]+/g, "-")
      .replace(/^-+|-+$/g, "");
    return t || "field";
  }

  // The CSV's first lines: what was varied and the base case it was varied on.
  function sweepComments(ylabel, yunit) {
    const ver = ($("#version") || {}).textContent || "";
    const name = sweep.inputs.find((r) => r.id === "case_name");
    const notes = sweep.inputs.find((r) => r.id === "case_notes");
    // (the varied field is the first column; a sweep computes no power-up)
    const skip = new Set(["case_name", "case_notes", "transient_cycles", sweep.field]);
    const others = sweep.inputs.filter((r) => !skip.has(r.id));
    const lines = [
      `Rectifield ${ver} sweep, computed ${sweep.when}. Varied: ${sweep.info}. Plotted: ${ylabel}${yunit ? " (" + yunit + ")" : ""}.`,
      `Base case${name && name.value ? ' "' + name.value + '"' : ""}: ` + others.map((r) => `${r.label} = ${r.value}${r.unit ? " " + r.unit : ""}`).join("; "),
    ];
    if (notes && notes.value.trim()) lines.push("Notes: " + notes.value.trim());
    return lines;
  }

  // (The precharge bypass's time and level act only on the power-up
  // transient, which a sweep point does not compute: left out.)
  function sweepableFields() {
    return activeInputs().filter(
      (e) =>
        e.getAttribute("inputmode") === "decimal" &&
        !specOf(e).harm &&
        !/\.\d+$/.test(e.getAttribute("data-path")) &&
        !/^dc\.precharge_bypass_/.test(e.getAttribute("data-path")) &&
        !specOf(e).int,
    );
  }

  function fillSweepChoices() {
    const sel = $("#sweep-field");
    const keep = sel.value;
    sel.replaceChildren();
    for (const e of sweepableFields()) {
      const f = specOf(e);
      sel.appendChild(el("option", { value: e.id }, f.label + (f.unit ? ` (${f.unit})` : "")));
    }
    if ([...sel.options].some((o) => o.value === keep)) sel.value = keep;
    const ys = $("#sweep-y");
    if (!ys.options.length) {
      let fields = Object.keys(SUMMARY);
      try {
        fields = wasm_bindgen.summary_fields();
      } catch (_) {
        /* older engine: the page's own list */
      }
      for (const k of fields) ys.appendChild(el("option", { value: k }, (SUMMARY[k] || [k])[0] + ((SUMMARY[k] || [])[1] ? ` (${SUMMARY[k][1]})` : "")));
    }
  }

  // ---- the sweep's points, computed off the page's thread
  //
  // A sweep is split into contiguous runs of points, one per Web Worker, each
  // worker with its own instance of the engine (the compiled module is shared,
  // so a worker starts in a few milliseconds and runs the code the page has
  // already warmed).  Within a run each point starts from the previous one, as
  // in one long run; a run's first point starts cold, as a single analysis
  // does, so the figures agree with the one-run sweep within the solver's
  // tolerances (DEVELOPERS.md, "Warm starts").  A worker is made from a
  // blob: URL holding the wasm-bindgen glue (the text of its inline script)
  // and sweepWorkerMain; where that cannot be done (a browser without
  // workers, the page's scripts not inline) the sweep runs on the page's
  // thread, as before.
  let engineModule = null; // the compiled engine (WebAssembly.Module), set at start
  const pool = { workers: [], broken: false, starting: null };
  const MAX_WORKERS = 4;

  // The worker's own code: its text is put in the worker after the glue.
  function sweepWorkerMain() {
    let ready = null;
    self.onmessage = async (ev) => {
      const m = ev.data;
      if (m.type === "init") {
        ready = wasm_bindgen({ module_or_path: m.module });
        try {
          await ready;
          try {
            wasm_bindgen.install_panic_hook();
          } catch (_) {
            /* an engine without the hook */
          }
          self.postMessage({ type: "ready" });
        } catch (err) {
          self.postMessage({ type: "failed", error: String(err) });
        }
        return;
      }
      if (m.type !== "run") return;
      await ready;
      const t0 = performance.now();
      let run = null;
      try {
        run = new wasm_bindgen.SweepRun(m.json, m.path);
      } catch (_) {
        run = null; // each point below then reports the error
      }
      let trapped = false;
      // points go back in batches, about every 30 ms (a message per point
      // kept the page's thread busy for a few per cent of the sweep)
      let batch = [];
      let sent = t0;
      for (let k = 0; k < m.xs.length; k++) {
        let p;
        try {
          p = run ? run.point(m.xs[k]) : wasm_bindgen.sweep_point(m.json, m.path, m.xs[k]);
        } catch (err) {
          // a string is the engine's error; anything else (a trap) leaves the
          // instance unusable, so the page retires this worker afterwards
          if (typeof err !== "string") trapped = true;
          p = { x: m.xs[k], summary: null, error: String(err) };
        }
        batch.push(p);
        const now = performance.now();
        if (now - sent > 30 || k === m.xs.length - 1) {
          self.postMessage({ type: "points", id: m.id, i: m.start + k + 1 - batch.length, ps: batch });
          batch = [];
          sent = now;
        }
      }
      try {
        if (run) run.free();
      } catch (_) {
        trapped = true;
      }
      self.postMessage({ type: "done", id: m.id, trapped, ms: performance.now() - t0 });
    };
  }

  function glueText() {
    for (const sc of document.scripts) {
      const t = sc.text;
      if (t && t.startsWith("/* rectifield_glue.js */")) return t;
    }
    return null;
  }

  function newWorker(url) {
    return new Promise((resolve) => {
      let w;
      try {
        w = new Worker(url);
      } catch (_) {
        resolve(null);
        return;
      }
      const fail = () => {
        w.terminate();
        resolve(null);
      };
      const limit = setTimeout(fail, 10000);
      w.onerror = () => {
        clearTimeout(limit);
        fail();
      };
      w.onmessage = (ev) => {
        clearTimeout(limit);
        w.onerror = null;
        w.onmessage = null;
        if (ev.data && ev.data.type === "ready") resolve(w);
        else fail();
      };
      w.postMessage({ type: "init", module: engineModule });
    });
  }

  // Workers for the next sweep (made once, kept; a cancel retires them).
  // Resolves to an empty list where workers cannot be had.
  function workers() {
    if (pool.broken) return Promise.resolve([]);
    if (pool.workers.length) return Promise.resolve(pool.workers);
    if (pool.starting) return pool.starting;
    pool.starting = (async () => {
      const glue = glueText();
      if (!glue || !engineModule || typeof Worker !== "function" || typeof URL.createObjectURL !== "function") {
        pool.broken = true;
        return [];
      }
      const url = URL.createObjectURL(new Blob([glue, "\n;(", sweepWorkerMain.toString(), ")();\n"], { type: "text/javascript" }));
      const n = Math.max(1, Math.min(MAX_WORKERS, navigator.hardwareConcurrency || 2));
      const made = (await Promise.all(Array.from({ length: n }, () => newWorker(url)))).filter(Boolean);
      URL.revokeObjectURL(url);
      if (!made.length) pool.broken = true;
      pool.workers = made;
      return made;
    })();
    return pool.starting.finally(() => {
      pool.starting = null;
    });
  }

  function retireWorkers() {
    for (const w of pool.workers) w.terminate();
    pool.workers = [];
  }

  let sweepId = 0;

  // The points of one sweep: `json` the scenario, `path` the field, `xs` its
  // values.  `onPoint(i, p)` gets each point as it comes (in any order);
  // `cancelled()` is asked between points.  Resolves to {points (by index, a
  // hole where a cancel left one), workers (0: the page's thread)}.
  async function sweepPoints(json, path, xs, onPoint, cancelled) {
    const points = new Array(xs.length);
    const ws = (await workers()).slice(0, Math.max(1, Math.floor(xs.length / 8)));
    if (!ws.length) {
      // On the page's thread: one run, giving the page a frame (progress,
      // Cancel) about every 40 ms of work, not after every point (a timer
      // yield costs about 4 ms in every browser).
      let run = null;
      try {
        run = new wasm_bindgen.SweepRun(json, path);
      } catch (err) {
        run = null; // each point below then reports the error
      }
      let slice = performance.now();
      for (let i = 0; i < xs.length && !cancelled(); i++) {
        let p;
        try {
          p = run ? run.point(xs[i]) : wasm_bindgen.sweep_point(json, path, xs[i]);
        } catch (err) {
          p = { x: xs[i], summary: null, error: String(err) };
        }
        points[i] = p;
        onPoint(i, p);
        if (performance.now() - slice > 40) {
          await new Promise((r) => setTimeout(r, 0));
          slice = performance.now();
        }
      }
      if (run) run.free();
      return { points, workers: 0 };
    }
    const id = ++sweepId;
    // Runs of points, handed to whichever worker is free: the cost of a
    // point varies along a sweep (a light load takes more periods), so equal
    // shares per worker left one idle while the other finished.  Three runs
    // per worker: each run's first point is a cold start, about twice a warm
    // point.
    const nRuns = Math.min(xs.length, ws.length * 3);
    const per = Math.ceil(xs.length / nRuns);
    const runs = [];
    for (let lo = 0; lo < xs.length; lo += per) runs.push([lo, Math.min(xs.length, lo + per)]);
    return new Promise((resolve) => {
      let next = 0;
      let busy = 0;
      let over = false;
      let retire = false;
      const dead = new Set();
      let workMs = 0; // the workers' time in their runs, summed
      const finish = () => {
        if (over) return;
        over = true;
        clearInterval(watch);
        for (const w of ws) {
          w.onmessage = null;
          w.onerror = null;
        }
        if (retire || dead.size) retireWorkers();
        resolve({ points, workers: ws.length, work_ms: workMs });
      };
      // A worker that trapped or stopped gets no more work; runs no worker
      // is left for are reported as failed points.
      const settle = () => {
        if (busy > 0) return;
        if (!cancelled()) {
          for (let i = 0; i < xs.length; i++) {
            if (!points[i]) {
              points[i] = { x: xs[i], summary: null, error: "the engine stopped before this point" };
              onPoint(i, points[i]);
            }
          }
        }
        finish();
      };
      // A cancel retires the workers at once (a worker cannot be asked
      // between its points); the next sweep makes new ones.
      const watch = setInterval(() => {
        if (!cancelled()) return;
        retire = true;
        finish();
      }, 50);
      const give = (w) => {
        if (over) return;
        if (dead.has(w) || next >= runs.length || cancelled()) {
          settle();
          return;
        }
        const [lo, hi] = runs[next++];
        busy += 1;
        w.onmessage = (ev) => {
          const m = ev.data;
          if (!m || m.id !== id || over) return;
          if (m.type === "points") {
            m.ps.forEach((p, k) => {
              points[m.i + k] = p;
              onPoint(m.i + k, p);
            });
          } else if (m.type === "done") {
            busy -= 1;
            workMs += m.ms || 0;
            // a trap leaves an instance unusable
            if (m.trapped) dead.add(w);
            give(w);
          }
        };
        w.onerror = () => {
          // a worker lost mid-run: its points are reported as failed
          for (let i = lo; i < hi; i++) {
            if (!points[i]) {
              points[i] = { x: xs[i], summary: null, error: "the worker computing this point stopped" };
              onPoint(i, points[i]);
            }
          }
          busy -= 1;
          dead.add(w);
          give(w);
        };
        w.postMessage({ type: "run", id, json, path, start: lo, xs: xs.slice(lo, hi) });
      };
      ws.forEach(give);
    });
  }

  // For the benchmark (bench/wasm.mjs): the page's sweep without its form.
  globalThis.RectifieldSweep = {
    run: (json, path, xs) => sweepPoints(json, path, xs, () => {}, () => false),
  };

  async function runSweep() {
    const msg = $("#sweep-msg");
    if (sweep && sweep.running) return;
    const input = $("#" + CSS.escape($("#sweep-field").value));
    if (!input) {
      msg.textContent = "Choose a field to vary.";
      return;
    }
    const f = specOf(input);
    const from = Units.parseQuantity($("#sweep-from").value, f);
    const to = Units.parseQuantity($("#sweep-to").value, f);
    const n = Units.parseQuantity($("#sweep-n").value, { int: true });
    if (from.error || to.error || n.error || n.value < 2 || n.value > 2000) {
      msg.textContent = from.error ? "From: " + from.error : to.error ? "To: " + to.error : "Points: a whole number from 2 to 2000.";
      return;
    }
    const { scenario, errors } = buildScenario();
    if (errors.length) {
      msg.textContent = "Correct the marked fields first.";
      return;
    }
    const json = JSON.stringify(scenario);
    const path = input.getAttribute("data-path");
    const xs = [];
    const st = f.storeScale || 1; // the scenario holds this field in MVA, kA or kVA
    // Equal ratios (a capacitance or an inductance across decades): both
    // ends above zero; the ends exact, as the CLI's FROM:TO:N:log.
    const log = $("#sweep-steps").value === "log";
    if (log && !(from.value > 0 && to.value > 0)) {
      msg.textContent = "Steps in equal ratios need From and To above zero.";
      return;
    }
    for (let i = 0; i < n.value; i++) {
      const t = i / (n.value - 1);
      const v = !log ? from.value + (to.value - from.value) * t : i === 0 ? from.value : i === n.value - 1 ? to.value : from.value * Math.exp(Math.log(to.value / from.value) * t);
      xs.push(v / st);
    }
    const shownScale = f.scale || 1;
    const inUnit = (v) => fmt(Number((v / shownScale).toPrecision(12)), 12);
    sweep = {
      path,
      field: input.id,
      label: f.label,
      unit: f.base || "",
      shownUnit: f.unit || "",
      shownScale,
      slug: slug(f.label),
      st,
      xs,
      points: [],
      running: true,
      cancel: false,
      key: sweepKey(scenario, path),
      state: "running",
      stale: false,
      inputs: inputRows(),
      when: new Date().toISOString().slice(0, 16).replace("T", " "),
      range: `${f.label} from ${inUnit(from.value)} to ${inUnit(to.value)}${f.unit ? " " + f.unit : ""}, ${xs.length} points${log ? " in equal ratios" : ""}`,
    };
    sweep.info = sweep.range;
    $("#sweep-stale").hidden = true;
    $("#sweep-stale-print").textContent = "";
    $("#sweep-info").textContent = "";
    const prog = $("#sweep-progress");
    prog.max = xs.length;
    prog.value = 0;
    prog.hidden = false;
    $("#sweep-cancel").disabled = false;
    $("#sweep-run").disabled = true;
    $("#panel-sweep").setAttribute("data-state", "running");
    msg.textContent = "Running…";
    let got = 0;
    let shown = 0;
    const sofar = new Array(xs.length);
    const show = () => {
      shown = performance.now();
      prog.value = got;
      msg.textContent = `Point ${got} of ${xs.length}`;
      sweep.points = sofar.filter(Boolean); // what a plot drawn meanwhile shows
    };
    const run = await sweepPoints(
      json,
      path,
      xs,
      (i, p) => {
        got += 1;
        sofar[i] = p;
        if (performance.now() - shown > 40) show();
      },
      () => sweep.cancel,
    );
    sweep.points = run.points.filter(Boolean);
    // a failed point's reason as the form says it: the field's label, the
    // refused value in the field's unit
    for (const p of sweep.points) if (!p.summary) p.reason = engineErrorText(p.error || "not computed", scenario);
    const failed = sweep.points.filter((p) => !p.summary).length;
    // computed points the engine warned about (a model change, an unstable
    // periodic solution): counted here, each point's warnings in the CSV
    const warned = sweep.points.filter((p) => p.summary && p.warnings && p.warnings.length);
    sweep.running = false;
    $("#sweep-cancel").disabled = true;
    $("#sweep-run").disabled = false;
    prog.hidden = true;
    const cancelled = sweep.cancel && sweep.points.length < xs.length;
    sweep.state = cancelled ? "cancelled" : "done";
    $("#panel-sweep").setAttribute("data-state", sweep.state);
    msg.textContent =
      (cancelled ? `Cancelled after ${sweep.points.length} of ${xs.length} points.` : `Done: ${xs.length} points.`) +
      (failed ? ` ${failed} point(s) could not be computed (${(sweep.points.find((p) => !p.summary) || {}).reason || ""}).` : "") +
      (warned.length ? ` ${warned.length} point(s) carry a warning (first, at ${fmt((warned[0].x * sweep.st) / sweep.shownScale, 4)} ${sweep.shownUnit}: ${warned[0].warnings[0]}); all are in the CSV.` : "");
    sweep.info =
      sweep.range +
      (cancelled ? ` (cancelled after ${sweep.points.length})` : "") +
      (failed ? `; ${failed} could not be computed` : "");
    $("#sweep-info").textContent = "Varied: " + sweep.info + ".";
    // inputs changed while it ran: out of date at once
    const now = buildScenario();
    checkSweep(now.scenario, now.errors);
    renderTab("sweep");
  }

  function renderSweepPlot() {
    const host = $("#plot-sweep");
    if (!sweep || !sweep.points.length) {
      host.replaceChildren(el("p", { class: "note" }, "Choose a field, its range and the result to plot, then Run."));
      return;
    }
    const yk = $("#sweep-y").value;
    const [ylabel, yunit] = SUMMARY[yk] || [yk, ""];
    const pts = sweep.points;
    plots.sweep = PLOT.create(host, {
      title: `Sweep of ${sweep.label}`,
      name: "rectifield-sweep-" + sweep.slug,
      // plotted in SI (the axis writes the prefixes); the CSV in the field's unit
      x: { label: sweep.label, unit: sweep.unit, values: pts.map((p) => p.x * sweep.st), csv: { unit: sweep.shownUnit, scale: sweep.shownScale } },
      series: [{ label: ylabel, unit: yunit, scale: "y", values: pts.map((p) => (p.summary ? p.summary[yk] : null)), color: colors().a, width: 2.25, markers: true }],
      height: 320,
      yLabels: { y: ylabel + (yunit ? ` (${yunit})` : "") },
      csv: {
        digits: 12,
        comments: sweepComments(ylabel, yunit),
        notes: {
          label: "Error or warnings",
          values: pts.map((p) => (p.summary ? (p.warnings || []).join(" | ") : p.reason || p.error || "not computed")),
        },
      },
    });
  }

  // ------------------------------------------------------------ compute loop

  const results = () => $("#results");
  let computed = 0;

  function setStale(stale) {
    const r = results();
    r.setAttribute("data-state", computed === 0 ? (stale ? "invalid" : "loading") : stale ? "stale" : "current");
    r.classList.toggle("stale", stale && computed > 0);
    $("#stale-note").hidden = !(stale && computed > 0);
  }

  function engineFailed(err) {
    let panic = null;
    try {
      panic = wasm_bindgen.last_panic();
    } catch (_) {
      panic = null;
    }
    const box = $("#engine-failure");
    box.hidden = false;
    $("#engine-failure-text").textContent =
      "The calculator's engine failed on this case" +
      (panic ? ": " + panic : err && err.message ? ": " + err.message : "") +
      ". Your inputs are kept. Change a value to try again, or save the case to report it.";
  }

  function compute() {
    clearMessages();
    const { scenario, errors } = buildScenario();
    checkSweep(scenario, errors);
    saveSession(scenario);
    renderSchematic(scenario);
    if (errors.length) {
      for (const { input, message } of errors) markInvalid(input, message);
      setStale(true);
      return;
    }
    let a;
    try {
      a = wasm_bindgen.analyze_json(JSON.stringify(scenario));
    } catch (err) {
      if (typeof err === "string") showEngineError(err, scenario);
      else engineFailed(err);
      setStale(true);
      return;
    }
    $("#engine-failure").hidden = true;
    analysis = a;
    analysedLoadKind = scenario.dc && scenario.dc.load ? scenario.dc.load.kind : null;
    try {
      const flat = wasm_bindgen.waveforms();
      const n = a.sim ? flat.length / (a.sim.signals.length + 1) : 0;
      waves = n > 0 && Number.isInteger(n) ? { t: flat.subarray(0, n), sig: a.sim.signals.map((_, i) => flat.subarray((i + 1) * n, (i + 2) * n)) } : null;
    } catch (err) {
      waves = null;
    }
    a.glance = glanceOf(a);
    renderGlance(a);
    renderSections(a);
    renderPlots();
    fillSweepChoices();
    renderPrintInputs();
    computed += 1;
    results().setAttribute("data-computed", String(computed));
    setStale(false);
  }

  let timer = 0;
  function schedule() {
    clearTimeout(timer);
    timer = setTimeout(compute, DEBOUNCE_MS);
  }

  // ------------------------------------------------------------ schematic

  function renderSchematic(scenario) {
    try {
      globalThis.RectifieldSchematic.draw($("#schematic"), scenario);
    } catch (err) {
      $("#schematic").replaceChildren(el("p", { class: "note" }, "The schematic could not be drawn."));
    }
  }

  // ------------------------------------------------------------ cases: files, links, storage

  function caseMsg(text) {
    $("#case-msg").textContent = text;
  }

  // Check a scenario text with the engine (field paths in the reason) and open it.
  function openScenarioText(text, from) {
    if (text.length > MAX_FILE_BYTES) {
      caseMsg(`${from}: larger than 1 MB; a scenario is a few kB. Nothing was changed.`);
      return false;
    }
    let parsed;
    try {
      parsed = wasm_bindgen.parse_scenario(text);
    } catch (err) {
      caseMsg(`${from}: ${typeof err === "string" ? err : "could not be read"}. Nothing was changed.`);
      return false;
    }
    base = mergeScenario(defaults, parsed);
    fillForm(base);
    clearTimeout(timer);
    compute();
    return true;
  }

  function saveCase() {
    const { scenario, errors } = buildScenario();
    if (errors.length) {
      caseMsg("Correct the marked fields first.");
      return;
    }
    caseMsg("");
    const blob = new Blob([JSON.stringify(scenario, null, 2) + "\n"], { type: "application/json" });
    const stem = (scenario.name || "case").replace(/[^A-Za-z0-9._-]+/g, "-").replace(/^-+|-+$/g, "");
    PLOT.download((stem || "case") + ".rectifield.json", blob);
  }

  function openCase(file) {
    if (file.size > MAX_FILE_BYTES) {
      caseMsg(`${file.name}: larger than 1 MB; a scenario is a few kB. Nothing was changed.`);
      return;
    }
    const reader = new FileReader();
    reader.onload = () => {
      if (openScenarioText(String(reader.result), file.name)) caseMsg("Opened " + file.name + ".");
    };
    reader.onerror = () => caseMsg(file.name + ": could not be read.");
    reader.readAsText(file);
  }

  function toBase64Url(text) {
    const bytes = new TextEncoder().encode(text);
    let bin = "";
    for (let i = 0; i < bytes.length; i += 0x8000) bin += String.fromCharCode.apply(null, bytes.subarray(i, i + 0x8000));
    return btoa(bin).replace(/\+/g, "-").replace(/\//g, "_").replace(/=+$/, "");
  }
  function fromBase64Url(s) {
    const bin = atob(s.replace(/-/g, "+").replace(/_/g, "/"));
    const bytes = new Uint8Array(bin.length);
    for (let i = 0; i < bin.length; i++) bytes[i] = bin.charCodeAt(i);
    return new TextDecoder("utf-8", { fatal: true }).decode(bytes);
  }

  function shareLink() {
    const { scenario, errors } = buildScenario();
    if (errors.length) {
      caseMsg("Correct the marked fields first.");
      return;
    }
    const url = location.href.split("#")[0] + "#scenario=" + toBase64Url(JSON.stringify(scenario));
    const box = $("#share-link");
    box.value = url;
    $("#share-row").hidden = false;
    box.focus();
    box.select();
    const done = () => caseMsg("Link made: it holds the whole case. Copy it from the box.");
    try {
      if (navigator.clipboard && navigator.clipboard.writeText) {
        navigator.clipboard.writeText(url).then(() => caseMsg("Link copied: it holds the whole case."), done);
      } else done();
    } catch (_) {
      done();
    }
  }

  function scenarioFromHash() {
    const h = location.hash || "";
    const m = /^#scenario=([A-Za-z0-9_-]*)$/.exec(h);
    if (!h) return null;
    if (!m) return { error: "the link's case is not in a form this page reads" };
    if (m[1].length > MAX_FILE_BYTES * 1.4) return { error: "the link's case is larger than 1 MB" };
    try {
      return { text: fromBase64Url(m[1]) };
    } catch (_) {
      return { error: "the link's case is damaged (not valid base64 text)" };
    }
  }

  function storage() {
    try {
      return globalThis.localStorage || null;
    } catch (_) {
      return null; // storage disabled for file:// pages in some setups
    }
  }

  let restoring = true;
  function saveSession(scenario) {
    if (restoring) return;
    const st = storage();
    if (!st) return;
    const fields = {};
    for (const e of $$("#inputs [data-path], #inputs [data-harm]")) {
      if (e.type === "checkbox" || e.tagName === "SELECT") continue;
      fields[e.id] = e.value;
    }
    try {
      st.setItem(STORE_KEY, JSON.stringify({ store_version: STORE_VERSION, saved_at: new Date().toISOString(), scenario, fields }));
    } catch (_) {
      /* full or refused: the session is simply not kept */
    }
  }

  // The last session: {scenario, fields} or a notice.
  function loadSession() {
    const st = storage();
    if (!st) return null;
    let raw;
    try {
      raw = st.getItem(STORE_KEY);
    } catch (_) {
      return null;
    }
    if (raw === null) return null;
    const bad = (why) => {
      try {
        st.removeItem(STORE_KEY);
      } catch (_) {
        /* ignore */
      }
      return { notice: `The last session kept in this browser could not be used (${why}) and was ignored; the default case is shown.` };
    };
    if (raw.length > 4 * MAX_FILE_BYTES) return bad("too large");
    let rec;
    try {
      rec = JSON.parse(raw);
    } catch (_) {
      return bad("damaged");
    }
    if (!rec || typeof rec !== "object" || rec.store_version !== STORE_VERSION || typeof rec.scenario !== "object") return bad("an unknown format");
    let parsed;
    try {
      parsed = wasm_bindgen.parse_scenario(JSON.stringify(rec.scenario));
    } catch (err) {
      return bad(String(err));
    }
    const fields = rec.fields && typeof rec.fields === "object" ? rec.fields : {};
    return { scenario: parsed, fields };
  }

  // ------------------------------------------------------------ theme, print

  function setTheme(t) {
    document.documentElement.setAttribute("data-theme", t);
    const b = $("#theme");
    b.setAttribute("aria-pressed", t === "dark" ? "true" : "false");
    b.textContent = t === "dark" ? "Light theme" : "Dark theme";
    try {
      globalThis.localStorage.setItem(THEME_KEY, t);
    } catch (_) {
      /* not kept */
    }
    if (analysis) renderPlots();
  }

  function beforePrint() {
    renderPrintInputs();
    // every plot that has data, drawn for the page width
    for (const p of $$(".tabpanel")) p.classList.add("print-show");
    for (const id of ["waves", "spectrum", "transient"]) {
      if (plots[id]) {
        plots[id].destroy();
        delete plots[id];
      }
    }
    const keep = activeTab;
    for (const p of $$(".tabpanel")) p.hidden = false;
    renderWaves();
    renderSpectrum();
    renderTransient();
    if (sweep && sweep.points.length) renderSweepPlot();
    activeTab = keep;
  }
  function afterPrint() {
    for (const p of $$(".tabpanel")) p.classList.remove("print-show");
    showTab(activeTab);
  }

  // ------------------------------------------------------------ start

  function base64ToBytes(b64) {
    // native decoder where the browser has one (Chromium 140, Firefox 133 on)
    if (typeof Uint8Array.fromBase64 === "function") return Uint8Array.fromBase64(b64);
    const bin = atob(b64);
    const out = new Uint8Array(bin.length);
    for (let i = 0; i < bin.length; i++) out[i] = bin.charCodeAt(i);
    return out;
  }

  // The engine ships gzipped (rectifield_wasm.js, see build.sh): inflate it
  // with the browser's own DecompressionStream (no network involved).
  async function engineBytes() {
    const gz = base64ToBytes(RECTIFIELD_WASM_GZIP_BASE64);
    const wasm = new Blob([gz]).stream().pipeThrough(new DecompressionStream("gzip"));
    return new Uint8Array(await new Response(wasm).arrayBuffer());
  }

  async function start() {
    let theme = "light";
    try {
      theme = globalThis.localStorage.getItem(THEME_KEY) === "dark" ? "dark" : "light";
    } catch (_) {
      /* default */
    }
    document.documentElement.setAttribute("data-theme", theme);
    // Async init: Chromium refuses synchronous compiles of large modules.
    engineModule = await WebAssembly.compile(await engineBytes());
    await wasm_bindgen({ module_or_path: engineModule });
    try {
      wasm_bindgen.install_panic_hook();
    } catch (_) {
      /* an engine without the hook */
    }
    $("#version").textContent = wasm_bindgen.version();
    $("#print-version").textContent = wasm_bindgen.version();
    defaults = wasm_bindgen.default_scenario();
    buildForm(defaults);
    base = defaults;

    // examples
    const exSel = $("#examples");
    let exList = [];
    try {
      exList = wasm_bindgen.examples();
    } catch (_) {
      exList = [];
    }
    for (const ex of exList) exSel.appendChild(el("option", { value: ex.id }, ex.scenario.name || ex.id));
    exSel.addEventListener("change", () => {
      const ex = exList.find((x) => x.id === exSel.value);
      if (!ex) return;
      if (openScenarioText(JSON.stringify(ex.scenario), ex.scenario.name || ex.id)) caseMsg("Example opened: " + (ex.scenario.name || ex.id) + ".");
      exSel.value = "";
    });

    // where the case comes from: a shared link, else the last session, else the default
    let notice = "";
    let fieldTexts = null;
    const fromHash = scenarioFromHash();
    if (fromHash && fromHash.text !== undefined) {
      try {
        base = mergeScenario(defaults, wasm_bindgen.parse_scenario(fromHash.text));
        notice = "Opened the case from the link.";
      } catch (err) {
        notice = `The link's case could not be opened (${String(err)}).`;
      }
    } else {
      if (fromHash && fromHash.error) notice = `The link could not be opened: ${fromHash.error}.`;
      const sess = loadSession();
      if (sess && sess.scenario) {
        base = mergeScenario(defaults, sess.scenario);
        fieldTexts = sess.fields;
        notice = notice || "Your last session was restored.";
      } else if (sess && sess.notice) {
        notice = notice ? notice + " " + sess.notice : sess.notice;
      }
    }
    fillForm(base);
    if (fieldTexts) {
      // the text as typed, even where it was not valid yet
      for (const [id, text] of Object.entries(fieldTexts)) {
        const e = document.getElementById(id);
        if (e && typeof text === "string" && fieldsById.has(id) && e.tagName !== "SELECT" && e.type !== "checkbox") e.value = text.slice(0, 4000);
      }
    }
    if (notice) caseMsg(notice);

    const form = $("#inputs");
    $("#save_case").addEventListener("click", saveCase);
    $("#share_case").addEventListener("click", shareLink);
    $("#print_report").addEventListener("click", () => window.print());
    $("#new_case").addEventListener("click", () => {
      base = defaults;
      fillForm(base);
      caseMsg("Default case.");
      clearTimeout(timer);
      compute();
    });
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
      if (ev.target.tagName !== "SELECT" && ev.target.type !== "checkbox") return;
      if (ev.target.hasAttribute("data-ignore")) return;
      updateVisibility();
      clearTimeout(timer);
      compute();
    });
    form.addEventListener("submit", (ev) => ev.preventDefault());
    // Enter moves to the next field (the keypad's "next").
    form.addEventListener("keydown", (ev) => {
      if (ev.key !== "Enter" || ev.target.tagName !== "INPUT") return;
      ev.preventDefault();
      const all = $$("#inputs input, #inputs select, #inputs textarea").filter((e) => e.offsetParent !== null);
      const i = all.indexOf(ev.target);
      if (i >= 0 && all[i + 1]) all[i + 1].focus();
    });

    // plot tabs (arrow keys move between tabs)
    for (const b of $$("#plot-tabs [role=tab]")) {
      b.addEventListener("click", () => showTab(b.getAttribute("data-tab")));
      b.addEventListener("keydown", (ev) => {
        const tabs = $$("#plot-tabs [role=tab]");
        const i = tabs.indexOf(b);
        if (ev.key === "ArrowRight" || ev.key === "ArrowLeft") {
          const j = (i + (ev.key === "ArrowRight" ? 1 : tabs.length - 1)) % tabs.length;
          tabs[j].focus();
          showTab(tabs[j].getAttribute("data-tab"));
          ev.preventDefault();
        }
      });
    }
    $("#periods").addEventListener("change", () => renderTab("waves"));
    $("#spectrum-basis").addEventListener("change", () => renderTab("spectrum"));
    $("#sweep-run").addEventListener("click", () => runSweep());
    $("#sweep-cancel").addEventListener("click", () => {
      if (sweep) sweep.cancel = true;
    });
    $("#sweep-y").addEventListener("change", () => renderTab("sweep"));
    $("#sweep-field").addEventListener("change", () => {
      const e = $("#" + CSS.escape($("#sweep-field").value));
      if (!e) return;
      const f = specOf(e);
      $$(".sweep-unit").forEach((u) => (u.textContent = f.unit || ""));
      const v = Units.parseQuantity(e.value, f);
      if (!v.error) {
        const shown = v.value / (f.scale || 1);
        $("#sweep-n").value = $("#sweep-n").value || "11";
        $("#sweep-from").value = String(Number((shown * 0.5).toPrecision(6)));
        $("#sweep-to").value = String(Number((shown * 1.5 || 1).toPrecision(6)));
      }
    });
    $("#theme").addEventListener("click", () => setTheme(document.documentElement.getAttribute("data-theme") === "dark" ? "light" : "dark"));
    setTheme(theme);
    window.addEventListener("beforeprint", beforePrint);
    window.addEventListener("afterprint", afterPrint);

    restoring = false;
    compute();
    // The field check (a mode the page never opens in) is built after the
    // first design result is on screen, so that it does not delay it.
    let fieldStarted = false;
    const startField = () => {
      if (fieldStarted || !globalThis.RectifieldField) return;
      fieldStarted = true;
      try {
        globalThis.RectifieldField.start();
      } catch (err) {
        console.warn("field check not started:", err);
      }
    };
    // after the next frame is painted; the timeout covers a page opened in
    // a background tab, where frames wait
    requestAnimationFrame(() => setTimeout(startField, 0));
    setTimeout(startField, 400);
    fillSweepChoices();
    $("#sweep-field").dispatchEvent(new Event("change"));
  }

  start().catch((err) => {
    const f = $("#fatal");
    f.hidden = false;
    f.textContent = "The calculator could not start: " + String(err && err.message ? err.message : err);
    console.error("Rectifield failed to start:", err);
  });
})();
