// Unit tests of the page's engineering-notation reader and formatter
// (www/units.js), run in Node by the e2e stage of ./build.sh test.
import { test } from "node:test";
import assert from "node:assert/strict";
import { createRequire } from "node:module";

const require = createRequire(import.meta.url);
const { parseQuantity: q, formatEng } = require("../../www/units.js");

const CAP = { unit: "\u00b5F", base: "F", scale: 1e-6 };
const IND = { unit: "mH", base: "H", scale: 1e-3 };
const VOLT = { unit: "V", base: "V" };
const PCT = { unit: "%", base: "%" };

test("a bare number is in the unit shown beside the field", () => {
  assert.deepEqual(q("480", VOLT), { value: 480 });
  assert.deepEqual(q("2200", CAP), { value: 0.0022 });
  assert.deepEqual(q("0.4", IND), { value: 0.0004 });
  assert.deepEqual(q("  -12.5e1 ", VOLT), { value: -125 });
  assert.deepEqual(q(".5", VOLT), { value: 0.5 });
});

test("prefixes and units are read against the scenario unit", () => {
  assert.deepEqual(q("2.2 mF", CAP), { value: 0.0022 });
  assert.deepEqual(q("2200u", CAP), { value: 0.0022 });
  assert.deepEqual(q("2200\u00b5F", CAP), { value: 0.0022 });
  assert.deepEqual(q("2200 \u03bcF", CAP), { value: 0.0022 });
  assert.deepEqual(q("0.4 mH", IND), { value: 0.0004 });
  assert.deepEqual(q("400uH", IND), { value: 0.0004 });
  assert.deepEqual(q("400 \u00b5H", IND), { value: 0.0004 });
  assert.deepEqual(q("480 V", VOLT), { value: 480 });
  assert.deepEqual(q("0.69 kV", VOLT), { value: 690 });
  assert.deepEqual(q("3 %", PCT), { value: 3 });
  assert.deepEqual(q("3%", PCT), { value: 3 });
  assert.deepEqual(q("45 kW", { unit: "kW", base: "W", scale: 1e3 }), { value: 45000 });
  assert.deepEqual(q("45", { unit: "kW", base: "W", scale: 1e3 }), { value: 45000 });
  assert.deepEqual(q("20 m\u03a9", { unit: "m\u03a9", base: "\u03a9", scale: 1e-3 }), { value: 0.02 });
  assert.deepEqual(q("20 mohm", { unit: "m\u03a9", base: "\u03a9", scale: 1e-3 }), { value: 0.02 });
  assert.deepEqual(q("6.5 ohm", { unit: "\u03a9", base: "\u03a9" }), { value: 6.5 });
  assert.deepEqual(q("60 Hz", { unit: "Hz", base: "Hz" }), { value: 60 });
  assert.deepEqual(q("10 MVA", { unit: "MVA", base: "VA", scale: 1e6 }), { value: 1e7 });
  assert.deepEqual(q("500 kVA", { unit: "MVA", base: "VA", scale: 1e6 }), { value: 5e5 });
  assert.deepEqual(q("30\u00b0", { unit: "\u00b0", base: "\u00b0" }), { value: 30 });
  assert.deepEqual(q("30 deg", { unit: "\u00b0", base: "\u00b0" }), { value: 30 });
  assert.deepEqual(q("10k", { unit: "", base: "" }), { value: 10000 });
});

test("a decimal comma is accepted, nothing else is guessed", () => {
  assert.deepEqual(q("1,5", VOLT), { value: 1.5 });
  assert.deepEqual(q("2,2 mF", CAP), { value: 0.0022 });
  assert.ok(q("1,000,5", VOLT).error, "thousands separators are not guessed");
});

test("bad text gives a reason, never a value", () => {
  assert.match(q("", VOLT).error, /enter a number/);
  assert.match(q("abc", VOLT).error, /not a number/);
  assert.match(q("6x0", VOLT).error, /not a unit/);
  assert.match(q("2.2 mH", CAP).error, /not F|not a unit/);
  assert.match(q("3 Hz", PCT).error, /not/);
  assert.match(q("3 m%", PCT).error, /not a unit/);
  assert.match(q("<b>1</b>", VOLT).error, /not a number/);
  assert.match(q("1e999", VOLT).error, /number/);
  assert.match(q("2.5", { unit: "", base: "", int: true }).error, /whole/);
  assert.deepEqual(q("3", { unit: "", base: "", int: true }), { value: 3 });
});

test("engineering formatting picks the prefix", () => {
  assert.equal(formatEng(0.0022, "F"), "2.2 mF");
  assert.equal(formatEng(480, "V"), "480 V");
  assert.equal(formatEng(1250, "A"), "1.25 kA");
  assert.equal(formatEng(-0.000047, "H"), "-47 \u00b5H");
  assert.equal(formatEng(0, "V"), "0 V");
  assert.equal(formatEng(999.96, "V"), "1 kV");
  assert.equal(formatEng(12e-9, "s"), "12 ns");
  assert.equal(formatEng(2500, ""), "2.5 k");
});
