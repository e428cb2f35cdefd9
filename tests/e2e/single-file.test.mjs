// dist/index.html is the single self-contained page: the folder and the file
// that travels alone are the same page.  Checked here:
//  * dist/ holds that one page and the installed copy's files, nothing else,
//    and the engine exactly once;
//  * the file copied alone into an empty folder, under another name (as it
//    arrives on a tablet by e-mail), opens from file:// in headless Chromium
//    and Firefox, computes, shows the same figures as dist/index.html, and
//    loads nothing but itself.

import { test, before, after, describe } from "node:test";
import assert from "node:assert/strict";
import fs from "node:fs";
import os from "node:os";
import path from "node:path";
import { pathToFileURL } from "node:url";
import { BROWSERS } from "./browsers.mjs";

const DIST = path.resolve(process.env.RECTIFIELD_DIST || "dist");
const INDEX = path.join(DIST, "index.html");
const TIMEOUT = 60000;
const K6 = (3 * Math.SQRT2) / Math.PI; // Vdo = 1.3505 V_LL, six-pulse bridge (the page test names the source)

function filesOf(dir, rel = "") {
  const out = [];
  for (const e of fs.readdirSync(path.join(dir, rel), { withFileTypes: true })) {
    const r = rel ? `${rel}/${e.name}` : e.name;
    if (e.isDirectory()) out.push(...filesOf(dir, r));
    else out.push(r);
  }
  return out.sort();
}

describe("dist layout", () => {
  test("one self-contained page, the installed copy's files, and the engine once", () => {
    assert.ok(fs.existsSync(INDEX), `${INDEX} missing: run ./build.sh first`);
    const man = JSON.parse(fs.readFileSync(path.join(DIST, "manifest.webmanifest"), "utf8"));
    const want = ["index.html", "manifest.webmanifest", "sw.js", ...man.icons.map((i) => i.src)].sort();
    assert.deepEqual(filesOf(DIST), want, "dist/ holds exactly the page, sw.js, the manifest and its icons");
    const html = fs.readFileSync(INDEX, "utf8");
    assert.match(html, /<html data-single-file="1"/);
    const refs = [...html.matchAll(/<(?:script|link|img)\b[^>]*\b(?:src|href)="(?!data:|#)([^"]*)"/g)].map((m) => m[1]);
    assert.deepEqual(refs, [], "index.html references no sibling file");
    // Each script the staged page had is inlined once (tools/dist-extras.mjs marks each).
    for (const f of ["rectifield_wasm.js", "rectifield_glue.js", "vendor/uPlot.iife.min.js", "app.js", "pwa.js"]) {
      assert.equal(html.split(`<script>/* ${f} */`).length - 1, 1, `${f} inlined once`);
    }
    assert.match(html, /uPlot \(embedded above\), its licence:[\s\S]*Permission is hereby granted/);
    let engines = 0;
    for (const f of filesOf(DIST)) {
      engines += fs.readFileSync(path.join(DIST, f), "latin1").match(/RECTIFIELD_WASM_GZIP_BASE64\s*=\s*"/g)?.length ?? 0;
    }
    assert.equal(engines, 1, "the engine is shipped once in dist/");
  });
});

for (const b of BROWSERS) {
  describe(`the page alone in ${b.name}`, { timeout: 240000 }, () => {
    let browser;
    let profile;
    let lone; // an empty folder holding only a copy of dist/index.html
    let LONE;
    before(async () => {
      assert.ok(fs.existsSync(INDEX), `${INDEX} missing: run ./build.sh first`);
      lone = fs.mkdtempSync(path.join(os.tmpdir(), `rectifield-lone-${b.name}-`));
      LONE = path.join(lone, "Rectifield from e-mail.html");
      fs.copyFileSync(INDEX, LONE);
      profile = fs.mkdtempSync(path.join(os.tmpdir(), `rectifield-single-${b.name}-`));
      browser = await b.launch(b.exe, profile);
    });
    after(async () => {
      if (browser) await browser.close();
      if (profile) fs.rmSync(profile, { recursive: true, force: true });
      if (lone) fs.rmSync(lone, { recursive: true, force: true });
    });

    // Open a page, set the same input, return every shown figure.
    async function figures(file) {
      const self = pathToFileURL(file).href;
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
        if (!(u === self || u.startsWith("data:") || u.startsWith("blob:"))) problems.push(`request: ${u}`);
      });
      await page.goto(self, { waitUntil: "load" });
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
      const manifest = await page.$$eval('link[rel="manifest"]', (l) => l.length);
      await page.close();
      return { out, version, problems, requests, single, sw, manifest, self };
    }

    test("a copy of dist/index.html alone in a folder computes what dist/index.html does, and loads nothing else", async () => {
      assert.deepEqual(fs.readdirSync(lone), [path.basename(LONE)], "nothing beside the copy");
      const a = await figures(INDEX);
      const s = await figures(LONE);
      assert.deepEqual(a.problems, []);
      assert.deepEqual(s.problems, []);
      assert.equal(s.single, "1");
      assert.equal(a.sw, "off", "no service worker on file://");
      assert.equal(s.sw, "off");
      assert.equal(s.manifest, 0, "no manifest link on file://");
      assert.match(s.version, /^\d+\.\d+\.\d+/);
      assert.equal(s.version, a.version);
      assert.ok(s.out.length > 20, `figures on the page: ${s.out.length}`);
      const vdo = s.out.find(([k]) => k === "textbook.vdo_v");
      assert.ok(vdo && Math.abs(Number(vdo[1]) - K6 * 480) < 0.5, `Vdo shown: ${vdo && vdo[1]}`);
      assert.deepEqual(s.out, a.out);
      if (b.name === "chromium") {
        // Chromium reports file:// loads (Firefox's WebDriver BiDi does not): the
        // page is one request, its own file.
        assert.deepEqual(s.requests.filter((u) => !u.startsWith("data:") && !u.startsWith("blob:")), [s.self]);
        assert.deepEqual(a.requests.filter((u) => !u.startsWith("data:") && !u.startsWith("blob:")), [a.self]);
      }
    });
  });
}
