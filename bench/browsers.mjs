// The page's sweep and one analysis in each browser the e2e tests drive
// (Debian's Chromium and Firefox ESR, the launch settings of
// tests/e2e/browsers.mjs), on dist/index.html from file://.  A side
// measurement beside bench/wasm.mjs (which times Chromium only, in full):
// the drive front end at full load (tests/ngspice/scenarios/drive_reactor_full.json),
// its load swept from 7.5 to 75 kW as the bench's scaling runs do.
//
// Usage: node bench/browsers.mjs [chromium|firefox ...]   (after ./build.sh)
// Prints one JSON line per browser; every figure is performance.now() in the
// page (Firefox coarsens it to 1 ms, Chromium to 0.1 ms, hence the analysis
// timed in batches of 20 calls).

import fs from "node:fs";
import os from "node:os";
import path from "node:path";
import { fileURLToPath, pathToFileURL } from "node:url";
import { BROWSERS } from "../tests/e2e/browsers.mjs";

const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), "..");
const INDEX = pathToFileURL(path.join(ROOT, "dist", "index.html")).href;
const JSON_TEXT = fs.readFileSync(path.join(ROOT, "tests/ngspice/scenarios/drive_reactor_full.json"), "utf8");
const names = process.argv.length > 2 ? process.argv.slice(2) : BROWSERS.map((b) => b.name);

for (const name of names) {
  const b = BROWSERS.find((x) => x.name === name);
  if (!b) throw new Error(`unknown browser ${name}`);
  const profile = fs.mkdtempSync(path.join(os.tmpdir(), "rectifield-bench-"));
  const browser = await b.launch(b.exe, profile);
  try {
    const page = await browser.newPage();
    await page.goto(INDEX);
    await page.waitForFunction(() => document.getElementById("results")?.dataset.computed === "1", { timeout: 120000 });
    const r = await page.evaluate(async (json) => {
      const out = { browser: navigator.userAgent, cores: navigator.hardwareConcurrency || null };
      for (let i = 0; i < 20; i++) wasm_bindgen.analyze_json(json);
      // Batches of 20 calls, per call: the timers are too coarse for one.
      const ta = [];
      for (let k = 0; k < 9; k++) {
        const a = performance.now();
        for (let i = 0; i < 20; i++) wasm_bindgen.analyze_json(json);
        ta.push((performance.now() - a) / 20);
      }
      ta.sort((x, y) => x - y);
      out.analyze_ms_per_call = { median: ta[4], min: ta[0], max: ta[8], batches: 9, calls_per_batch: 20 };
      const from = 7500, to = 75000;
      for (const n of [200, 1000]) {
        const xs = [];
        for (let i = 0; i < n; i++) xs.push(from + ((to - from) * i) / (n - 1));
        // The page's sweep, as the Run button starts it; the first call of a
        // page also makes the workers.
        const page_ms = [];
        let r = null;
        for (let k = 0; k < 3; k++) {
          const a = performance.now();
          r = await RectifieldSweep.run(json, "dc.load.p_w", xs);
          page_ms.push(Math.round(performance.now() - a));
        }
        // One SweepRun on the page's thread, for the cost of the split.
        const a = performance.now();
        const run = new wasm_bindgen.SweepRun(json, "dc.load.p_w");
        let failed = 0;
        for (const x of xs) if (!run.point(x).summary) failed++;
        run.free();
        out[`sweep_${n}`] = {
          page_ms,
          workers: r.workers,
          page_failed: r.points.filter((q) => !q || !q.summary).length,
          one_instance_ms: Math.round(performance.now() - a),
          one_instance_failed: failed,
        };
      }
      return out;
    }, JSON_TEXT);
    console.log(JSON.stringify({ name, load_avg_1min: os.loadavg()[0], ...r }));
  } finally {
    await browser.close();
    fs.rmSync(profile, { recursive: true, force: true });
  }
}
