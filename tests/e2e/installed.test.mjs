// The installable copy (issue #11): dist/ served on 127.0.0.1 by a small
// static server started here, in headless Chromium.  The served page is the
// same self-contained dist/index.html that works alone from file://; served,
// it registers the service worker, which installs and caches every file of
// the build (the page, the manifest, the icons); with the browser offline and
// the server refusing every request, a reload still loads the page and
// computes; a second build with a change is reported by the page, and after
// the user accepts it the new version runs.  Any console error fails.

import { test, before, after, describe } from "node:test";
import assert from "node:assert/strict";
import fs from "node:fs";
import os from "node:os";
import path from "node:path";
import http from "node:http";
import { execFileSync } from "node:child_process";
import { BROWSERS } from "./browsers.mjs";

const DIST = path.resolve(process.env.RECTIFIELD_DIST || "dist");
const TIMEOUT = 60000;
const TYPES = {
  ".html": "text/html; charset=utf-8",
  ".js": "text/javascript; charset=utf-8",
  ".css": "text/css; charset=utf-8",
  ".svg": "image/svg+xml",
  ".png": "image/png",
  ".webmanifest": "application/manifest+json",
};

function buildOf(dir) {
  const m = /const BUILD = "([0-9a-f]+)";/.exec(fs.readFileSync(path.join(dir, "sw.js"), "utf8"));
  assert.ok(m, "sw.js carries a build id");
  const files = JSON.parse(/const FILES = (\[.*\]);/.exec(fs.readFileSync(path.join(dir, "sw.js"), "utf8"))[1]);
  return { id: m[1], files };
}

describe("installed copy in chromium (served on 127.0.0.1)", { timeout: 300000 }, () => {
  const chromium = BROWSERS.find((x) => x.name === "chromium");
  let root; // a copy of dist, changed for the second build
  let server;
  let origin;
  let refuse = false;
  const refused = [];
  const served = []; // every path the server answered
  let browser;
  let profile;
  let page;
  const problems = [];

  before(async () => {
    assert.ok(fs.existsSync(path.join(DIST, "sw.js")), "dist/sw.js missing: run ./build.sh first");
    root = fs.mkdtempSync(path.join(os.tmpdir(), "rectifield-served-"));
    fs.cpSync(DIST, root, { recursive: true });
    server = http.createServer((req, res) => {
      const url = new URL(req.url, "http://x");
      if (refuse) {
        refused.push(url.pathname);
        req.socket.destroy();
        return;
      }
      served.push(url.pathname);
      let rel = decodeURIComponent(url.pathname).replace(/^\/+/, "");
      if (rel === "" || rel.endsWith("/")) rel += "index.html";
      const file = path.join(root, rel);
      if (!file.startsWith(root) || !fs.existsSync(file) || fs.statSync(file).isDirectory()) {
        res.writeHead(404).end("not found");
        return;
      }
      res.writeHead(200, { "Content-Type": TYPES[path.extname(file)] || "application/octet-stream", "Cache-Control": "no-cache" });
      res.end(fs.readFileSync(file));
    });
    await new Promise((ok) => server.listen(0, "127.0.0.1", ok));
    origin = `http://127.0.0.1:${server.address().port}`;
    profile = fs.mkdtempSync(path.join(os.tmpdir(), "rectifield-sw-chromium-"));
    browser = await chromium.launch(chromium.exe, profile);
    page = await browser.newPage();
    page.setDefaultTimeout(TIMEOUT);
    page.on("console", (m) => m.type() === "error" && problems.push(`console error: ${m.text()}`));
    page.on("pageerror", (e) => problems.push(`page error: ${e.message || e}`));
    page.on("request", (r) => {
      const u = r.url();
      if (!(u.startsWith(origin + "/") || u.startsWith("data:") || u.startsWith("blob:"))) problems.push(`request: ${u}`);
    });
  });

  after(async () => {
    if (browser) await browser.close();
    if (server) server.close();
    if (profile) fs.rmSync(profile, { recursive: true, force: true });
    if (root) fs.rmSync(root, { recursive: true, force: true });
  });

  async function loaded() {
    await page.waitForSelector('#results[data-state="current"]');
  }
  async function recomputes(text) {
    const n = await page.$eval("#results", (e) => Number(e.getAttribute("data-computed")));
    await page.$eval("#v_ll_rms_v", (e) => {
      e.focus();
      e.select();
    });
    await page.keyboard.press("Backspace");
    await page.type("#v_ll_rms_v", text);
    await page.waitForFunction(
      (k) => {
        const r = document.querySelector("#results");
        return Number(r.getAttribute("data-computed")) > k && r.getAttribute("data-state") === "current";
      },
      {},
      n
    );
    return Number(await page.$eval('[data-out="textbook.vdo_v"]', (e) => e.textContent));
  }
  const cached = () =>
    page.evaluate(async () => {
      const keys = await caches.keys();
      const out = {};
      for (const k of keys) {
        const c = await caches.open(k);
        out[k] = (await c.keys()).map((r) => new URL(r.url).pathname);
      }
      return out;
    });

  test("the service worker installs and caches every file of the build", async () => {
    const b1 = buildOf(root);
    await page.goto(origin + "/index.html", { waitUntil: "load" });
    await loaded();
    await page.waitForSelector('html[data-sw="ready"]');
    assert.equal(await page.$eval("html", (e) => e.getAttribute("data-single-file")), "1", "the served page is the single file");
    const manifest = await page.$eval('link[rel="manifest"]', (e) => e.href);
    assert.equal(manifest, origin + "/manifest.webmanifest");
    const c = await cached();
    assert.deepEqual(Object.keys(c), [`rectifield-${b1.id}`]);
    const want = b1.files.map((f) => "/" + f.replace(/^\.\//, "")).sort();
    assert.deepEqual(c[`rectifield-${b1.id}`].slice().sort(), want);
    // The whole build: the page, the manifest and its icons (and "/" for the folder URL).
    const man = JSON.parse(fs.readFileSync(path.join(root, "manifest.webmanifest"), "utf8"));
    assert.deepEqual(want, ["/", "/index.html", "/manifest.webmanifest", ...man.icons.map((ic) => "/" + ic.src)].sort());
    // The browser reads the manifest without errors and finds the page installable.
    const cdp = await page.createCDPSession();
    const am = await cdp.send("Page.getAppManifest");
    assert.equal(am.url, origin + "/manifest.webmanifest");
    assert.deepEqual(am.errors, [], "manifest parse errors");
    const inst = await cdp.send("Page.getInstallabilityErrors");
    assert.deepEqual(inst.installabilityErrors, [], "installability errors");
    await cdp.detach();
    // Nothing but the build's files and sw.js was asked of the server.
    for (const p of served) assert.ok(p === "/sw.js" || want.includes(p), `served ${p}, not in the build`);
    await page.reload({ waitUntil: "load" });
    await loaded();
    assert.equal(await page.evaluate(() => !!navigator.serviceWorker.controller), true, "the page is served by the worker");
  });

  test("offline (browser offline, server refusing every request): reload loads and computes", async () => {
    refuse = true;
    await page.setOfflineMode(true);
    await page.reload({ waitUntil: "load" });
    await loaded();
    const vdo = await recomputes("415");
    assert.ok(Math.abs(vdo - 1.3505 * 415) < 0.5, `Vdo ${vdo}`);
    await page.click('#mode-switch [data-mode="field"]');
    await page.waitForSelector('#field-mode[data-ready="1"]');
    assert.deepEqual(refused, [], "no request reached the server while offline");
    assert.deepEqual(problems, []);
    await page.click('#mode-switch [data-mode="design"]');
  });

  test("a second build with a change: the page reports the update, and runs it once accepted", async () => {
    const b1 = buildOf(root);
    // The change: a new tagline in the page, then the build's last step (sw.js) as build.sh runs it.
    const idx = path.join(root, "index.html");
    const html = fs.readFileSync(idx, "utf8");
    const marker = "Second build for the update test.";
    assert.ok(/<p class="tagline">/.test(html));
    fs.writeFileSync(idx, html.replace(/(<p class="tagline">)/, `$1${marker} `));
    execFileSync("node", [path.resolve("tools/dist-extras.mjs"), "sw", root]);
    const b2 = buildOf(root);
    assert.notEqual(b2.id, b1.id, "the build id follows the files");
    refuse = false;
    await page.setOfflineMode(false);
    await page.reload({ waitUntil: "load" });
    await loaded();
    await page.waitForSelector("#update-ready:not([hidden])");
    assert.equal(await page.$eval("html", (e) => e.getAttribute("data-sw")), "update-ready");
    const tag = await page.$eval(".tagline", (e) => e.textContent);
    assert.ok(!tag.includes(marker), "until accepted, the old build is shown whole");
    const nav = page.waitForNavigation({ waitUntil: "load" });
    await page.click("#update-apply");
    await nav;
    await loaded();
    assert.ok((await page.$eval(".tagline", (e) => e.textContent)).includes(marker), "the new build runs");
    await page.waitForFunction((k) => caches.keys().then((ks) => ks.length === 1 && ks[0] === k), {}, `rectifield-${b2.id}`);
    assert.equal(await page.$eval("#update-ready", (e) => e.hidden), true);
    const vdo = await recomputes("400");
    assert.ok(Math.abs(vdo - 1.3505 * 400) < 0.5);
    assert.deepEqual(problems, []);
  });
});
