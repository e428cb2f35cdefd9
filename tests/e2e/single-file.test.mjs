// The single self-contained dist/rectifield.html, opened from file:// in
// headless Chromium and Firefox, must show the same figures as
// dist/index.html for the same input, and load nothing but itself.

import { test, before, after, describe } from "node:test";
import assert from "node:assert/strict";
import fs from "node:fs";
import os from "node:os";
import path from "node:path";
import { pathToFileURL } from "node:url";
import { BROWSERS } from "./browsers.mjs";

const DIST = path.resolve(process.env.RECTIFIELD_DIST || "dist");
const INDEX = path.join(DIST, "index.html");
const SINGLE = path.join(DIST, "rectifield.html");
const TIMEOUT = 60000;

for (const b of BROWSERS) {
  describe(`single file in ${b.name}`, { timeout: 240000 }, () => {
    let browser;
    let profile;
    before(async () => {
      assert.ok(fs.existsSync(SINGLE), `${SINGLE} missing: run ./build.sh first`);
      profile = fs.mkdtempSync(path.join(os.tmpdir(), `rectifield-single-${b.name}-`));
      browser = await b.launch(b.exe, profile);
    });
    after(async () => {
      if (browser) await browser.close();
      if (profile) fs.rmSync(profile, { recursive: true, force: true });
    });

    // Open a page, set the same input, return every shown figure.
    async function figures(file, allowed) {
      const page = await browser.newPage();
      page.setDefaultTimeout(TIMEOUT);
      await page.setViewport({ width: 1180, height: 900 });
      const problems = [];
      const requests = [];
      page.on("console", (m) => m.type() === "error" && problems.push(`console error: ${m.text()}`));
      page.on("pageerror", (e) => problems.push(`page error: ${e.message || e}`));
      page.on("request", (r) => {
        const u = r.url();
        requests.push(u);
        if (!(allowed(u) || u.startsWith("data:") || u.startsWith("blob:"))) problems.push(`request: ${u}`);
      });
      await page.goto(pathToFileURL(file).href, { waitUntil: "load" });
      await page.waitForSelector('#results[data-state="current"]');
      const n = await page.$eval("#results", (e) => Number(e.getAttribute("data-computed")));
      await page.$eval("#v_ll_rms_v", (e) => {
        e.focus();
        e.select();
      });
      await page.keyboard.press("Backspace");
      await page.type("#v_ll_rms_v", "480");
      await page.waitForFunction(
        (k) => {
          const r = document.querySelector("#results");
          return Number(r.getAttribute("data-computed")) > k && r.getAttribute("data-state") === "current";
        },
        {},
        n
      );
      const out = await page.$$eval("[data-out]", (l) => l.map((e) => [e.getAttribute("data-out"), e.textContent.trim()]));
      const version = await page.$eval("#version", (e) => e.textContent.trim());
      const single = await page.$eval("html", (e) => e.getAttribute("data-single-file"));
      const sw = await page.$eval("html", (e) => e.getAttribute("data-sw"));
      await page.close();
      return { out, version, problems, requests, single, sw };
    }

    test("computes the same figures as dist/index.html and loads nothing else", async () => {
      const a = await figures(INDEX, (u) => u.startsWith(pathToFileURL(DIST).href + "/"));
      const s = await figures(SINGLE, (u) => u === pathToFileURL(SINGLE).href);
      assert.deepEqual(a.problems, []);
      assert.deepEqual(s.problems, []);
      assert.equal(s.single, "1");
      assert.equal(a.sw, "off", "no service worker on file://");
      assert.equal(s.sw, "off");
      assert.equal(s.version, a.version);
      assert.ok(a.out.length > 20, `figures on the page: ${a.out.length}`);
      const vdo = a.out.find(([k]) => k === "textbook.vdo_v");
      assert.ok(vdo && Math.abs(Number(vdo[1]) - 1.3505 * 480) < 0.5, `Vdo shown: ${vdo && vdo[1]}`);
      assert.deepEqual(s.out, a.out);
      if (b.name === "chromium") {
        // Chromium reports file:// loads: the single file is one request, dist is many.
        assert.ok(a.requests.some((u) => u.endsWith("/app.js")));
        assert.deepEqual(s.requests.filter((u) => !u.startsWith("data:")), [pathToFileURL(SINGLE).href]);
      }
    });
  });
}
