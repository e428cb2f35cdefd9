// Engineering notation for the page: reading what a user types into a field
// ("480", "2.2 mF", "2200u", "0.4 mH", "3 %", "1,5") and formatting numbers
// with SI prefixes for axes and figures.  A classic script (no modules: the page
// runs from file://); it defines globalThis.RectifieldUnits and is unit-tested
// by tests/e2e/units.test.mjs in Node.
"use strict";

(function (root) {
  const PREFIX = {
    p: 1e-12,
    n: 1e-9,
    u: 1e-6,
    "\u00b5": 1e-6, // micro sign
    "\u03bc": 1e-6, // Greek mu
    m: 1e-3,
    k: 1e3,
    M: 1e6,
    G: 1e9,
  };

  // Spellings of a unit, mapped to the one the page uses.
  const ALIAS = {
    V: "V",
    v: "V",
    A: "A",
    a: "A",
    Hz: "Hz",
    hz: "Hz",
    HZ: "Hz",
    F: "F",
    H: "H",
    W: "W",
    w: "W",
    VA: "VA",
    va: "VA",
    "\u03a9": "\u03a9", // Greek capital omega
    "\u2126": "\u03a9", // ohm sign
    ohm: "\u03a9",
    ohms: "\u03a9",
    Ohm: "\u03a9",
    Ohms: "\u03a9",
    R: "\u03a9",
    "%": "%",
    "\u00b0": "\u00b0",
    deg: "\u00b0",
    s: "s",
    sec: "s",
    h: "h",
    hours: "h",
    "K/W": "K/W",
    "\u00b0C": "\u00b0C",
    C: "\u00b0C",
    degC: "\u00b0C",
    pu: "pu",
  };

  const NUMBER = /^([+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)\s*(.*)$/;

  /**
   * Read a typed quantity.
   *   text   what the user typed
   *   spec   { unit: the unit shown beside the field ("mH", "µF", "%", ""),
   *            base: the unit of the value in the scenario ("H", "F", "%", ""),
   *            scale: value in `base` = shown number * scale (default 1),
   *            int: true when the value must be a whole number }
   * A bare number is in the shown unit; a prefix alone ("2200u") or a prefixed
   * unit ("2.2 mF") is read against the base unit.
   * Returns { value } (in the base unit) or { error }.
   */
  function parseQuantity(text, spec) {
    const s = spec || {};
    const scale = s.scale === undefined ? 1 : s.scale;
    const shown = s.unit || "";
    const base = ALIAS[s.base] || s.base || "";
    let t = String(text === undefined || text === null ? "" : text).trim();
    if (t === "") return { error: "enter a number" };
    // A decimal comma (a tablet set to a comma locale): one comma, no point.
    if (/^[+-]?\d*,\d+(?:[eE][+-]?\d+)?(?:\s*\D.*)?$/.test(t) && t.indexOf(".") < 0 && t.split(",").length === 2) {
      t = t.replace(",", ".");
    }
    const m = NUMBER.exec(t);
    if (!m) return { error: "not a number" };
    const num = Number(m[1]);
    if (!Number.isFinite(num)) return { error: "not a number" };
    const rest = m[2].trim();
    let value;
    if (rest === "" || (shown !== "" && rest === shown)) {
      value = num * scale;
    } else {
      const factor = unitFactor(rest, base, shown);
      if (factor.error) return factor;
      value = num * factor.factor;
    }
    value = Number(value.toPrecision(15)); // binary noise of the scaling (2200 µF -> 0.0022 F)
    if (!Number.isFinite(value)) return { error: "number out of range" };
    if (s.int && !Number.isInteger(value)) return { error: "must be a whole number" };
    return { value };
  }

  // The factor from a typed unit suffix to the base unit, or an error.
  function unitFactor(rest, base, shown) {
    const want = base === "" ? "no unit" : base;
    const hint = shown && shown !== base ? ` (use ${shown}${base ? " or " + base : ""})` : base ? ` (use ${base})` : "";
    if (ALIAS[rest] !== undefined) {
      if (ALIAS[rest] === base) return { factor: 1 };
      // a lone prefix letter that is also a unit spelling: m, k, M ... are prefixes
      if (!(rest in PREFIX)) return { error: `"${rest}" is not ${want}${hint}` };
    }
    if (rest in PREFIX) return { factor: PREFIX[rest] };
    const p = rest[0];
    if (p in PREFIX) {
      const u = rest.slice(p.length).trim();
      if (ALIAS[u] !== undefined && ALIAS[u] === base && base !== "%" && base !== "\u00b0" && base !== "\u00b0C") {
        return { factor: PREFIX[p] };
      }
    }
    return { error: `"${rest}" is not a unit for this field${hint}` };
  }

  const ENG = [
    [1e9, "G"],
    [1e6, "M"],
    [1e3, "k"],
    [1, ""],
    [1e-3, "m"],
    [1e-6, "\u00b5"],
    [1e-9, "n"],
    [1e-12, "p"],
  ];

  /** "2.2 mF", "480 V", "1.25 kA"; unit "" gives "2.2 m". sig significant digits. */
  function formatEng(x, unit, sig) {
    const u = unit || "";
    if (x === null || x === undefined || Number.isNaN(x)) return "\u2014";
    if (!Number.isFinite(x)) return (x > 0 ? "+\u221e" : "\u2212\u221e") + (u ? " " + u : "");
    if (x === 0) return "0" + (u ? " " + u : "");
    const a = Math.abs(x);
    let k = ENG.length - 1;
    for (let i = 0; i < ENG.length; i++) {
      if (a >= ENG[i][0] * 0.9999999) {
        k = i;
        break;
      }
    }
    let v = Number((x / ENG[k][0]).toPrecision(sig || 4));
    // rounding may carry to 1000 (999.96 -> 1000): move up one prefix
    if (Math.abs(v) >= 1000 && k > 0) {
      k -= 1;
      v = Number((x / ENG[k][0]).toPrecision(sig || 4));
    }
    const txt = String(v);
    const suffix = ENG[k][1] + u;
    return suffix ? `${txt} ${suffix}` : txt;
  }

  /** Number of a plain figure: sig significant digits, no exponent for everyday sizes. */
  function formatNum(x, sig) {
    if (x === null || x === undefined) return "\u2014";
    if (typeof x !== "number" || !Number.isFinite(x)) return String(x);
    if (x === 0) return "0";
    const a = Math.abs(x);
    if (a >= 1e5) return x.toFixed(0);
    if (a < 1e-4) return x.toExponential((sig || 5) - 1);
    return String(Number(x.toPrecision(sig || 5)));
  }

  const api = { parseQuantity, formatEng, formatNum, PREFIX };
  root.RectifieldUnits = api;
  if (typeof module === "object" && module && module.exports) module.exports = api;
})(typeof globalThis !== "undefined" ? globalThis : this);
