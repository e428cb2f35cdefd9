// Benchmark of the engine compiled to WebAssembly, in headless Chromium
// (Debian's, driven by puppeteer-core), on dist/index.html opened from file://.
//
// Usage: node bench/wasm.mjs CONFIG.json  (written by bench/run)
// CONFIG: { dist, chromium, budget_ms, loads, scenarios: [{id, json}],
//           scaling: {json, h_max: [..], sweep: {path, from, to, points: [..]}} }
// Prints one JSON object on stdout.  Every figure is measured in the page with
// performance.now(); nothing is estimated.

import fs from "node:fs";
import os from "node:os";
import path from "node:path";
import { pathToFileURL } from "node:url";
import puppeteer from "puppeteer-core";

const cfg = JSON.parse(fs.readFileSync(process.argv[2], "utf8"));
const INDEX = pathToFileURL(path.join(path.resolve(cfg.dist), "index.html")).href;

// Installed before any page script: records, on the page's own clock (0 =
// navigation start), when #results first reports a finished computation
// (data-computed >= 1) and whether a data-out value was filled by then.
function firstResultProbe() {
  const mark = () => {
    const r = document.getElementById("results");
    if (!r || window.__benchFirstResultMs !== undefined) return;
    if (Number(r.getAttribute("data-computed") || "0") >= 1) {
      window.__benchFirstResultMs = performance.now();
      const outs = [...document.querySelectorAll("[data-out]")];
      window.__benchFilledOuts = outs.filter((e) => e.textContent.trim() !== "").length;
    }
  };
  new MutationObserver(mark).observe(document, {
    subtree: true,
    childList: true,
    attributes: true,
    attributeFilter: ["data-computed"],
  });
}

const profile = fs.mkdtempSync(path.join(os.tmpdir(), "rectifield-bench-"));
const browser = await puppeteer.launch({
  browser: "chrome",
  executablePath: cfg.chromium,
  headless: true,
  userDataDir: profile,
  protocolTimeout: 600000,
  args: [
    "--no-sandbox",
    "--disable-gpu",
    "--disable-quic",
    "--no-first-run",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
    "--enable-precise-memory-info",
    // Headless Chromium 156 preloads the address bar's pop-up (a browser page
    // of its own, "top-chrome WebUI") in a renderer per browser context, and
    // that renderer burns about a second of CPU as the context opens: on a
    // two-core machine it ran beside every fresh-context page load of the
    // first-result runs (measured 2026-12-03 with a trace: two such
    // renderers at 100 % of a core each through the whole load). It is the
    // browser's own window furniture, which a headless page never shows, not
    // our page's cost, so it is switched off.
    "--disable-features=PreloadTopChromeWebUI,WebUIOmniboxPopup,WebUIOmniboxFullPopup,WebUIOmniboxAimPopup",
  ],
});
const out = { chromium: await browser.version(), index: INDEX };
const errors = [];
try {
  // ---- time to the first result, fresh browser context each time (no cache)
  out.first_result_ms = [];
  for (let i = 0; i < cfg.loads; i++) {
    const ctx = await browser.createBrowserContext();
    const page = await ctx.newPage();
    page.on("pageerror", (e) => errors.push(String(e)));
    await page.evaluateOnNewDocument(firstResultProbe);
    await page.goto(INDEX, { waitUntil: "load" });
    await page.waitForFunction(() => window.__benchFirstResultMs !== undefined, { timeout: 60000 });
    const r = await page.evaluate(() => ({
      ms: window.__benchFirstResultMs,
      filled: window.__benchFilledOuts,
      dcl: performance.getEntriesByType("navigation")[0]?.domContentLoadedEventEnd ?? null,
    }));
    out.first_result_ms.push(r);
    await ctx.close();
  }

  // ---- engine timings in one page
  const page = await browser.newPage();
  page.on("pageerror", (e) => errors.push(String(e)));
  page.on("console", (m) => {
    if (m.type() === "error") errors.push(m.text());
  });
  await page.goto(INDEX, { waitUntil: "load" });
  await page.waitForFunction(
    () => Number(document.getElementById("results")?.getAttribute("data-computed") || "0") >= 1,
    { timeout: 60000 },
  );

  const timeAnalyze = (json, budgetMs, minReps, maxReps) =>
    page.evaluate(
      (json, budgetMs, minReps, maxReps) => {
        for (let i = 0; i < 2; i++) wasm_bindgen.analyze_json(json);
        const t = [];
        const t0 = performance.now();
        while (t.length < minReps || (t.length < maxReps && performance.now() - t0 < budgetMs)) {
          const a = performance.now();
          wasm_bindgen.analyze_json(json);
          t.push(performance.now() - a);
        }
        return t;
      },
      json,
      budgetMs,
      minReps,
      maxReps,
    );

  out.scenarios = [];
  for (const s of cfg.scenarios) {
    const a = await page.evaluate((json) => {
      const r = wasm_bindgen.analyze_json(json);
      const lc = r.results.line_currents[0];
      return { v_dc_avg_v: r.results.dc.v_avg_v, i_a_rms_a: lc.rms_a, i_a_thd_pct: lc.thd_pct };
    }, s.json);
    const samples = await timeAnalyze(s.json, cfg.budget_ms, 15, 400);
    out.scenarios.push({ id: s.id, figures: a, analyze_ms: samples });
  }

  const sc = cfg.scaling;
  out.h_max = [];
  for (const h of sc.h_max) {
    const j = JSON.parse(sc.json);
    j.analysis = { ...(j.analysis || {}), h_max: h };
    out.h_max.push({ h_max: h, analyze_ms: await timeAnalyze(JSON.stringify(j), cfg.budget_ms, 10, 200) });
  }
  out.sweep = [];
  // The page's sweep (app.js: runs of points spread over Web Workers, each
  // with its own engine instance).  Its first use makes the workers; that
  // start is timed on its own, before the timed sweeps.
  out.page_sweep_start = await page.evaluate(async (json, p, x) => {
    const a = performance.now();
    const r = await RectifieldSweep.run(json, p, [x]);
    return { ms: performance.now() - a, workers_made: r.workers, cores: navigator.hardwareConcurrency || null };
  }, sc.json, sc.sweep.path, sc.sweep.from);
  for (const n of sc.sweep.points) {
    const reps = n >= 1000 ? 1 : n >= 100 ? 3 : 5;
    const r = await page.evaluate(
      async (json, p, from, to, n, reps) => {
        // As the page runs a sweep: one SweepRun, each point from the last.
        const t = [];
        let failed = 0;
        for (let k = 0; k < reps; k++) {
          failed = 0;
          const a = performance.now();
          const run = new wasm_bindgen.SweepRun(json, p);
          for (let i = 0; i < n; i++) {
            const x = n === 1 ? from : from + ((to - from) * i) / (n - 1);
            const pt = run.point(x);
            if (!pt.summary) failed++;
          }
          run.free();
          t.push(performance.now() - a);
        }
        // The same points solved independently (sweep_point, cold starts).
        const ti = [];
        for (let k = 0; k < reps; k++) {
          const a = performance.now();
          for (let i = 0; i < n; i++) {
            const x = n === 1 ? from : from + ((to - from) * i) / (n - 1);
            wasm_bindgen.sweep_point(json, p, x);
          }
          ti.push(performance.now() - a);
        }
        // The page's sweep, as the Run button starts it (without the form).
        const tp = [];
        const work = [];
        let workers = 0;
        let pfailed = 0;
        for (let k = 0; k < Math.max(reps, 3); k++) {
          const xs = [];
          for (let i = 0; i < n; i++) xs.push(n === 1 ? from : from + ((to - from) * i) / (n - 1));
          const a = performance.now();
          const r = await RectifieldSweep.run(json, p, xs);
          tp.push(performance.now() - a);
          work.push(r.work_ms ?? null);
          workers = r.workers;
          pfailed = r.points.filter((q) => !q || !q.summary).length;
        }
        return { t, ti, failed, tp, work, workers, pfailed };
      },
      sc.json,
      sc.sweep.path,
      sc.sweep.from,
      sc.sweep.to,
      n,
      reps,
    );
    out.sweep.push({
      points: n,
      sweep_ms: r.t,
      independent_ms: r.ti,
      failed_points: r.failed,
      page_ms: r.tp,
      page_work_ms: r.work,
      page_workers: r.workers,
      page_failed_points: r.pfailed,
    });
  }
  out.memory = await page.evaluate(async () => {
    const w = await wasm_bindgen();
    const m = performance.memory || {};
    return {
      wasm_memory_bytes: w && w.memory ? w.memory.buffer.byteLength : null,
      js_heap_used_bytes: m.usedJSHeapSize ?? null,
      js_heap_total_bytes: m.totalJSHeapSize ?? null,
    };
  });
} finally {
  await browser.close();
  fs.rmSync(profile, { recursive: true, force: true });
}
out.page_errors = errors;
process.stdout.write(JSON.stringify(out) + "\n");
