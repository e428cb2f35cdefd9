// End-to-end test of the field-check mode, from file:// in headless Chromium
// and Firefox: the mode opens with its safety panel, computes as the user
// types, ranks the lost-phase signature first for readings a lost phase
// gives, draws each signature's ripple, and marks a bad field.  Any console
// error, page error or request other than dist/index.html itself (the page is
// one file) or data:/blob: fails.

import { test, before, after, describe } from "node:test";
import assert from "node:assert/strict";
import fs from "node:fs";
import path from "node:path";
import { pathToFileURL } from "node:url";
import { BROWSERS, openPage } from "./browsers.mjs";

const DIST = path.resolve(process.env.RECTIFIELD_DIST || "dist");
const INDEX = path.join(DIST, "index.html");
const INDEX_URL = pathToFileURL(INDEX).href;
const TIMEOUT = 45000;

for (const b of BROWSERS) {
  describe(`field check in ${b.name}`, { timeout: 180000 }, () => {
    let browser;
    let page;
    let profile;
    const problems = [];

    before(async () => {
      assert.ok(fs.existsSync(INDEX), `${INDEX} missing: run ./build.sh first`);
      ({ browser, page, profile } = await openPage(b, { prefix: "rectifield-field", viewport: { width: 800, height: 1280 }, timeout: TIMEOUT, problems })); // a 10-inch tablet, portrait
      page.on("request", (req) => {
        const url = req.url();
        const self = url === INDEX_URL || url.startsWith(INDEX_URL + "#");
        if (!(self || url.startsWith("data:") || url.startsWith("blob:"))) {
          problems.push(`network request: ${url}`);
        }
      });
      await page.goto(pathToFileURL(INDEX).href, { waitUntil: "load" });
      await page.waitForSelector('#results[data-state="current"]');
    });

    after(async () => {
      if (page) {
        fs.mkdirSync(path.resolve("tests/artifacts"), { recursive: true });
        await page
          .screenshot({ path: path.resolve(`tests/artifacts/field-${b.name}.png`), fullPage: true })
          .catch(() => {});
      }
      if (browser) await browser.close();
      if (profile) fs.rmSync(profile, { recursive: true, force: true });
    });

    const count = () => page.$eval("#fc-results", (e) => Number(e.getAttribute("data-computed")));
    async function typeInto(id, text) {
      await page.$eval(`#${id}`, (e) => {
        e.focus();
        e.select();
      });
      await page.keyboard.press("Backspace");
      if (text !== "") await page.type(`#${id}`, text);
    }
    async function waitComputed(n) {
      await page.waitForFunction(
        (k) => {
          const r = document.querySelector("#fc-results");
          return Number(r.getAttribute("data-computed")) > k && r.getAttribute("data-state") === "current";
        },
        {},
        n
      );
    }
    const visible = (sel) =>
      page.$eval(sel, (e) => {
        const r = e.getBoundingClientRect();
        return !e.closest("[hidden]") && getComputedStyle(e).display !== "none" && r.width > 0 && r.height > 0;
      });

    test("the mode opens with the safety panel; without a rating or load it asks for one", async () => {
      assert.equal(await visible("#field-mode"), false, "field mode hidden in design mode");
      await page.click('#mode-switch [data-mode="field"]');
      assert.equal(await visible("#fc-safety"), true);
      assert.equal(await visible("main.layout"), false, "the design form is out of the way");
      await page.waitForSelector('#field-mode[data-ready="1"]');
      const st = await page.$eval("#fc-results", (e) => e.getAttribute("data-state"));
      assert.equal(st, "invalid");
      const msg = await page.$eval("#f_rating_kw", (e) => e.closest(".fc-field").querySelector(".fc-msg").textContent);
      assert.match(msg, /rating/);
      // The page's labels, not the engine's JSON names (rating_kw, load_kw).
      assert.doesNotMatch(msg, /\b[a-z]+_[a-z_]+\b/, `JSON name in "${msg}"`);
      assert.match(msg, /“Drive rating”/);
      const mode = await page.$eval("#f_dc_mean", (e) => e.getAttribute("inputmode"));
      assert.equal(mode, "decimal");
    });

    test("rating and load: expected bus and band at the top, safety lines from the report", async () => {
      const n = await count();
      await typeInto("f_rating_kw", "15");
      await typeInto("f_load_kw", "10");
      await waitComputed(n);
      const noLoad = Number(await page.$eval('[data-fc="expected.no_load"] .fc-num', (e) => e.textContent));
      // No load: sqrt(2) x the line voltage less the diode drops (two in series, ~1 V each).
      const peak = Math.SQRT2 * 400;
      assert.ok(noLoad < peak && noLoad > peak - 5, `no-load bus ${noLoad} vs sqrt2*400 = ${peak.toFixed(1)}`);
      const atLoad = await page.$eval('[data-fc="expected.at_load"]', (e) => e.textContent);
      assert.match(atLoad, /band \d+ to \d+ V/);
      const safety = await page.$eval("#fc-safety", (e) => e.innerText);
      for (const re of [/discharge time/i, /rated for the voltage/i, /lock out and tag out/i, /qualified persons/i, /codes/i, /manual/i]) {
        assert.match(safety, re);
      }
      const cards = await page.$$eval("#fc-signatures .fc-sig", (l) => l.map((e) => e.getAttribute("data-sig")));
      assert.ok(cards.length >= 8, `signatures shown: ${cards.join(", ")}`);
      assert.ok(cards.includes("healthy") && cards.includes("lost_phase") && cards.includes("open_diode"));
    });

    test("readings of a lost phase rank the lost phase first, with distances and ripple plots", async () => {
      // The engine's own prediction for the lost phase at this load, rounded
      // as a meter would show it, typed in as the readings.
      const pred = await page.evaluate(() => {
        const inp = wasm_bindgen.field_example();
        inp.nameplate.rating_kw = 15;
        inp.nameplate.load_kw = 10;
        const r = wasm_bindgen.field_json(JSON.stringify(inp));
        return r.signatures.find((s) => s.id === "lost_phase").predicted;
      });
      assert.equal(Math.round(pred.ripple_dominant_hz), 100, "lost phase ripples at 2f");
      const r1 = (x) => (Math.round(x * 10) / 10).toFixed(1);
      const v = pred.terminal_v_ll_rms_v;
      const i = pred.line_i_rms_a;
      const n = await count();
      await typeInto("f_vll1", r1(v[0]));
      await typeInto("f_vll2", r1(v[1]));
      await typeInto("f_vll3", r1(v[2]));
      await typeInto("f_dc_mean", r1(pred.dc_mean_v));
      await typeInto("f_dc_ac", r1(pred.ripple_rms_v));
      await typeInto("f_ripple_hz", "100");
      await typeInto("f_i1", r1(i[0]));
      await typeInto("f_i2", r1(i[1]));
      await typeInto("f_i3", r1(i[2]));
      await waitComputed(n);
      const top = await page.$eval('#fc-signatures .fc-sig[data-rank="1"]', (e) => e.getAttribute("data-sig"));
      assert.equal(top, "lost_phase");
      const best = await page.$eval('[data-fc="best"]', (e) => e.innerText);
      assert.match(best, /lost phase/);
      assert.match(best, /distance \d/);
      const dists = await page.$$eval("#fc-signatures .fc-sig .fc-dist", (l) => l.map((e) => e.textContent));
      const nums = dists.map((t) => Number((/distance ([\d.]+)/.exec(t) || [])[1])).filter(Number.isFinite);
      assert.ok(nums.length >= 2, `distances: ${dists.join(" | ")}`);
      for (let k = 1; k < nums.length; k++) assert.ok(nums[k] >= nums[k - 1], `ranked by distance: ${nums.join(", ")}`);
      assert.ok(nums[0] < nums[1], "the lost phase fits better than the next");
      // The healthy signature is far away for these readings.
      const healthyDist = await page.$eval('.fc-sig[data-sig="healthy"] .fc-dist', (e) => Number(e.textContent.replace(/[^\d.]/g, "")));
      assert.ok(healthyDist > 3, `healthy distance ${healthyDist}`);
      // Each plotted signature: a canvas with some drawn (non-transparent) pixels.
      const inked = await page.$$eval(".fc-sig canvas.fc-wave", (cs) =>
        cs.map((c) => {
          const d = c.getContext("2d").getImageData(0, 0, c.width, c.height).data;
          let k = 0;
          for (let j = 3; j < d.length; j += 4) if (d[j] > 0) k++;
          return k;
        })
      );
      assert.ok(inked.length >= 8 && inked.every((k) => k > 50), `inked pixels per plot: ${inked.join(", ")}`);
      const lp = await page.$eval('.fc-sig[data-sig="lost_phase"] [data-fc="ripple_hz"]', (e) => e.textContent);
      assert.equal(lp, "100 Hz");
      const hz = await page.$eval('.fc-sig[data-sig="healthy"] [data-fc="ripple_hz"]', (e) => e.textContent);
      assert.equal(hz, "300 Hz", "healthy six-pulse ripple at 6f");
      assert.equal(await visible("#fc-safety"), true, "safety panel still shown");
      const summary = await page.$eval("#fc-summary", (e) => e.textContent);
      assert.ok(summary.length > 20, `verdict: ${summary}`);
      assert.doesNotMatch(summary, /\bcertain(ly)?\b(?! not)|definitely/i);
    });

    test("a bad entry is marked beside the field; the last results stay, marked out of date", async () => {
      await typeInto("f_dc_mean", "5x0");
      await page.waitForSelector('#fc-results[data-state="stale"]');
      const msg = await page.$eval("#f_dc_mean", (e) => e.closest(".fc-field").querySelector(".fc-msg").textContent);
      assert.match(msg, /number/i);
      assert.equal(await visible("#fc-stale"), true);
      assert.equal(await page.$eval('#fc-signatures .fc-sig[data-rank="1"]', (e) => e.getAttribute("data-sig")), "lost_phase");
      // Two of three currents is refused too.
      await typeInto("f_dc_mean", "503.4");
      await typeInto("f_i3", "");
      await page.waitForFunction(() => /all three/.test(document.querySelector("#f_i3").closest(".fc-field").textContent));
      assert.equal(await visible("#fc-safety"), true);
    });

    test("back to design mode hides the field check; no console error or request", async () => {
      await page.click('#mode-switch [data-mode="design"]');
      assert.equal(await visible("#field-mode"), false);
      assert.equal(await visible("main.layout"), true);
      assert.deepEqual(problems, []);
    });
  });
}
