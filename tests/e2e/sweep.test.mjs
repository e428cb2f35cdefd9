// End-to-end tests of the page's sweep mode (the Sweep tab), opened from
// file:// in headless Chromium and headless Firefox: a sweep goes out of date
// when an input it depends on changes (on screen and in print), its CSV is in
// the units the page takes with its base case named, its plot has markers at
// the computed points and zoom buttons named after its x axis, and a failed
// point's reason is said in the field's unit.
//
// The sweeps here are of the default case's bus capacitance (the design
// question: how much capacitance for the ripple).  Expected values are the
// sweep's own x values as typed (µF), not computed figures; where figures are
// compared, the comparison is against the same page's single analysis.

import { test, before, after, describe } from "node:test";
import assert from "node:assert/strict";
import fs from "node:fs";
import path from "node:path";
import { pathToFileURL } from "node:url";
import { BROWSERS, openPage } from "./browsers.mjs";

const DIST = path.resolve(process.env.RECTIFIELD_DIST || "dist");
const INDEX = path.join(DIST, "index.html");
const INDEX_URL = pathToFileURL(INDEX).href;
const ARTIFACTS = path.resolve("tests/artifacts");
const TIMEOUT = 45000;

for (const b of BROWSERS) {
  describe(`sweep mode in ${b.name}`, { timeout: 180000 }, () => {
    let browser;
    let page;
    let profile;
    const problems = [];

    before(async () => {
      assert.ok(fs.existsSync(INDEX), `${INDEX} missing: run ./build.sh first`);
      ({ browser, page, profile } = await openPage(b, { prefix: "rectifield-sweep", viewport: { width: 1180, height: 900 }, timeout: TIMEOUT, problems }));
      await page.goto(INDEX_URL, { waitUntil: "load" });
      await page.waitForSelector('#results[data-state="current"]');
      // The default case with a constant-power load (the drive's DC link).
      if ((await page.$eval("#load_kind", (e) => e.value)) !== "constant_power") {
        const n = await computed();
        await page.select("#load_kind", "constant_power");
        await waitRecomputed(n);
      }
      await page.click('[data-tab="sweep"]');
    });

    after(async () => {
      if (page) {
        fs.mkdirSync(ARTIFACTS, { recursive: true });
        const h = await page.$("#panel-sweep");
        if (h) await h.screenshot({ path: path.join(ARTIFACTS, `${b.name}-sweep-panel.png`) }).catch(() => {});
      }
      if (browser) await browser.close();
      if (profile) fs.rmSync(profile, { recursive: true, force: true });
    });

    const computed = () => page.$eval("#results", (e) => Number(e.getAttribute("data-computed")));
    async function waitRecomputed(n) {
      await page.waitForFunction(
        (k) => {
          const r = document.querySelector("#results");
          return Number(r.getAttribute("data-computed")) > k && r.getAttribute("data-state") === "current";
        },
        {},
        n,
      );
    }
    async function typeInto(id, text) {
      const n = await computed();
      await page.$eval(`#${id}`, (e) => {
        const d = e.closest("details");
        if (d) d.open = true;
      });
      await page.click(`#${id}`, { clickCount: 3 });
      await page.$eval(`#${id}`, (e) => e.select());
      await page.keyboard.press("Backspace");
      await page.type(`#${id}`, text);
      return n;
    }
    async function runSweep(field, from, to, n, y) {
      await page.select("#sweep-field", field);
      await page.$eval("#sweep-from", (e, v) => (e.value = v), from);
      await page.$eval("#sweep-to", (e, v) => (e.value = v), to);
      await page.$eval("#sweep-n", (e, v) => (e.value = v), String(n));
      await page.select("#sweep-y", y);
      await page.click("#sweep-run");
      await page.waitForSelector('#panel-sweep[data-state="done"]', { timeout: 90000 });
      await page.waitForSelector("#plot-sweep canvas");
    }
    // Downloads: the text of each blob and the file name of each link clicked.
    async function captureDownloads() {
      await page.evaluate(() => {
        window.__saved = [];
        window.__names = [];
        if (!window.__origCreate) window.__origCreate = URL.createObjectURL;
        URL.createObjectURL = (blob) => {
          blob.text().then((t) => window.__saved.push(t));
          return window.__origCreate(blob);
        };
        if (!window.__origClick) {
          window.__origClick = HTMLAnchorElement.prototype.click;
          HTMLAnchorElement.prototype.click = function () {
            if (this.download) window.__names.push(this.download);
            else window.__origClick.call(this);
          };
        }
      });
    }
    const plotButton = (title) =>
      page.$$eval("#plot-sweep .plot-tools button", (bs, t) => {
        const k = bs.findIndex((x) => x.textContent === t);
        if (k < 0) return false;
        bs[k].click();
        return true;
      }, title);

    test("a sweep goes out of date when an input it depends on changes, and back when it is restored", async () => {
      await runSweep("cap_f", "1000", "3000", 5, "v_dc_ripple_pp_v");
      assert.match(await page.$eval("#sweep-msg", (e) => e.textContent), /Done: 5 points/);
      const staleShown = () =>
        page.$eval("#panel-sweep", (p) => {
          const vis = [...p.querySelectorAll(".stale-note")].filter((e) => !e.hidden && getComputedStyle(e).display !== "none");
          return vis.map((e) => e.textContent).join(" ");
        });
      assert.equal(await staleShown(), "", "a fresh sweep is not marked out of date");
      const opacity = () => page.$eval("#plot-sweep", (e) => Number(getComputedStyle(e).opacity));
      assert.equal(await opacity(), 1);

      // The varied field itself and the case's name do not make it stale.
      let n = await typeInto("cap_f", "1500");
      await waitRecomputed(n);
      n = await typeInto("case_name", "Line 4 drive");
      await waitRecomputed(n);
      assert.equal(await page.$eval("#panel-sweep", (e) => e.getAttribute("data-state")), "done");

      // The load power does.
      const kw = await page.$eval("#load_p_w", (e) => e.value);
      n = await typeInto("load_p_w", "20");
      await waitRecomputed(n);
      assert.equal(await page.$eval("#panel-sweep", (e) => e.getAttribute("data-state")), "stale");
      assert.match(await staleShown(), /inputs changed since this sweep; run it again/i);
      assert.ok((await opacity()) < 0.8, `the stale plot is not greyed (opacity ${await opacity()})`);
      await page.evaluate(() => window.scrollTo(0, 0));
      const h = await page.$("#panel-sweep");
      await h.screenshot({ path: path.join(ARTIFACTS, `${b.name}-sweep-stale.png`) }).catch(() => {});

      // In print: the stale sweep is not shown as a result of the inputs listed.
      await page.evaluate(() => window.dispatchEvent(new Event("beforeprint")));
      const printed = await page.$eval("#panel-sweep", (p) => p.textContent);
      assert.match(printed, /computed for other inputs/i, "print says the sweep is for other inputs");
      if (b.name === "chromium") {
        await page.emulateMediaType("print");
        try {
          const canvasShown = await page.$$eval("#plot-sweep canvas", (cs) => cs.some((c) => getComputedStyle(c).display !== "none" && c.getBoundingClientRect().height > 0));
          assert.equal(canvasShown, false, "a stale sweep's plot printed beside the new inputs");
          const note = await page.$eval("#panel-sweep", (p) =>
            [...p.querySelectorAll("p")].filter((e) => getComputedStyle(e).display !== "none" && /other inputs/i.test(e.textContent)).length,
          );
          assert.ok(note >= 1, "no printed note on the stale sweep");
        } finally {
          await page.emulateMediaType(null);
        }
      }
      await page.evaluate(() => window.dispatchEvent(new Event("afterprint")));

      // Back to the inputs the sweep was run for: current again.
      n = await typeInto("load_p_w", kw);
      await waitRecomputed(n);
      assert.equal(await page.$eval("#panel-sweep", (e) => e.getAttribute("data-state")), "done");
      assert.equal(await staleShown(), "");
      assert.equal(await opacity(), 1);
    });

    test("print shows the sweep's own range and point count", async () => {
      await runSweep("cap_f", "1000", "3000", 5, "v_dc_ripple_pp_v");
      await page.evaluate(() => window.dispatchEvent(new Event("beforeprint")));
      try {
        const text = await page.$eval("#panel-sweep", (p) => p.textContent);
        assert.match(text, /Bus capacitance from 1000 to 3000 µF, 5 points/);
        if (b.name === "chromium") {
          await page.emulateMediaType("print");
          try {
            const shown = await page.$eval("#panel-sweep", (p) =>
              [...p.querySelectorAll("p")].filter((e) => getComputedStyle(e).display !== "none" && /from 1000 to 3000 µF, 5 points/.test(e.textContent)).length,
            );
            assert.ok(shown >= 1, "the range is not printed");
            const canvasShown = await page.$$eval("#plot-sweep canvas", (cs) => cs.some((c) => getComputedStyle(c).display !== "none"));
            assert.equal(canvasShown, true, "a current sweep prints its plot");
          } finally {
            await page.emulateMediaType(null);
          }
        }
      } finally {
        await page.evaluate(() => window.dispatchEvent(new Event("afterprint")));
      }
    });

    test("sweep CSV: the page's units, rounded x, failed points with their reason, a named file, the base case", async () => {
      // -1000 µF cannot be computed; 0 is "no capacitor".  The x values are
      // computed as from + (to - from) i / (n - 1) in farads, which leaves
      // float noise (0.0020000000000000005 F) that the CSV must not show.
      await runSweep("cap_f", "-1000", "3000", 5, "v_dc_ripple_pp_v");
      await captureDownloads();
      assert.ok(await plotButton("CSV"), "no CSV button");
      await page.waitForFunction(() => window.__saved.length > 0 && window.__names.length > 0);
      const csv = await page.evaluate(() => window.__saved[0]);
      const name = await page.evaluate(() => window.__names[0]);
      assert.equal(name, "rectifield-sweep-bus-capacitance.csv");
      assert.match(name, /^[\x20-\x7e]+$/, "file name ASCII");

      const lines = csv.trim().split("\n");
      const comments = lines.filter((l) => l.startsWith("#"));
      const rows = lines.filter((l) => !l.startsWith("#"));
      assert.ok(lines[0].startsWith("#"), "the CSV begins with a comment");
      const about = comments.join("\n");
      assert.match(about, /Line 4 drive/, "base case name");
      assert.match(about, /Load power = \d+(\.\d+)? kW/, "base case load");
      assert.match(about, /Line-to-line voltage \(RMS\) = \d+ V/, "base case supply");
      assert.match(about, /Bus capacitance from -1000 to 3000 µF, 5 points/, "the sweep's range");

      const head = rows[0].split(",");
      assert.equal(head[0], "Bus capacitance (µF)");
      assert.match(rows[0], /"DC ripple, peak to peak \(V\)"/);
      const body = rows.slice(1);
      assert.equal(body.length, 5);
      const xsText = body.map((r) => r.split(",")[0]);
      assert.deepEqual(xsText, ["-1000", "0", "1000", "2000", "3000"]);
      // The failed point carries its reason, in the field's unit.
      const failed = body[0];
      assert.match(failed, /-1000 µF is out of range/, failed);
      // Computed points: a number in the plotted column; no error or
      // warning text from 1000 µF on, and at 0 µF (no capacitor under a
      // constant-power load) the engine's warning about it.
      for (const r of body.slice(1)) {
        const cells = r.split(",");
        assert.ok(Number.isFinite(Number(cells[1])) && cells[1] !== "", `row ${r}`);
      }
      assert.match(body[1], /no bus capacitor/, body[1]);
      for (const r of body.slice(2)) assert.ok(r.split(",").slice(2).every((c) => c === ""), `row ${r}`);
      // The ripple falls as the capacitance grows (1000 to 3000 µF).
      const ripple = body.slice(2).map((r) => Number(r.split(",")[1]));
      assert.ok(ripple[0] > ripple[1] && ripple[1] > ripple[2], `ripple ${ripple}`);
    });

    test("a failed point's reason on the page says the value in the field's unit", async () => {
      // The sweep of the test above: -1000 µF, refused by the engine in farads.
      const msg = await page.$eval("#sweep-msg", (e) => e.textContent);
      assert.match(msg, /1 point\(s\) could not be computed/);
      assert.match(msg, /-1000 µF is out of range/, msg);
      assert.doesNotMatch(msg, /-0\.001\b/, msg);
    });

    test("a sweep point the engine warned about says so on the page and in the CSV", async () => {
      // The default drive on 600 to 800 µF: at 650 and 700 µF the constant-
      // power load's periodic solution is unstable (tests/engine_reference.rs,
      // against ngspice), at 600 µF its bus swings too far; 750 and 800 µF
      // solve without a warning.
      await runSweep("cap_f", "600", "800", 5, "v_dc_ripple_pp_v");
      const msg = await page.$eval("#sweep-msg", (e) => e.textContent);
      assert.match(msg, /3 point\(s\) carry a warning \(first, at 600 µF: /, msg);
      await captureDownloads();
      assert.ok(await plotButton("CSV"), "no CSV button");
      await page.waitForFunction(() => window.__saved.length > 0);
      const csv = await page.evaluate(() => window.__saved[window.__saved.length - 1]);
      const rows = csv.trim().split("\n").filter((l) => !l.startsWith("#"));
      assert.match(rows[0], /Error or warnings/);
      const body = rows.slice(1);
      assert.equal(body.length, 5);
      assert.match(body[2], /^700,.*Floquet multiplier/, body[2]);
      assert.doesNotMatch(body[4], /Floquet|current constant/, body[4]);
    });

    test("steps in equal ratios: a capacitance across decades", async () => {
      await page.select("#sweep-steps", "log");
      try {
        await runSweep("cap_f", "100", "10000", 3, "v_dc_ripple_pp_v");
        const info = await page.$eval("#sweep-info", (e) => e.textContent);
        assert.match(info, /from 100 to 10000 µF, 3 points in equal ratios/, info);
        await captureDownloads();
        assert.ok(await plotButton("CSV"), "no CSV button");
        await page.waitForFunction(() => window.__saved.length > 0);
        const csv = await page.evaluate(() => window.__saved[window.__saved.length - 1]);
        const body = csv.trim().split("\n").filter((l) => !l.startsWith("#")).slice(1);
        assert.deepEqual(body.map((r) => r.split(",")[0]), ["100", "1000", "10000"]);
        // A bound at zero is refused with a reason.
        await page.$eval("#sweep-from", (e) => (e.value = "0"));
        await page.click("#sweep-run");
        const msg = await page.$eval("#sweep-msg", (e) => e.textContent);
        assert.match(msg, /equal ratios need From and To above zero/, msg);
      } finally {
        await page.select("#sweep-steps", "lin");
      }
    });

    test("the Vary list leaves out fields a sweep point cannot show", async () => {
      // The precharge bypass's time and level act only on the power-up
      // transient, which sweep points do not compute.
      const ids = await page.$$eval("#sweep-field option", (os) => os.map((o) => o.value));
      assert.ok(ids.includes("cap_f") && ids.includes("precharge_r_ohm"), ids.join(" "));
      assert.ok(!ids.includes("precharge_bypass_s") && !ids.includes("precharge_bypass_pu"), ids.join(" "));
    });

    test("the sweep plot's zoom buttons name its x axis", async () => {
      const titles = await page.$$eval("#plot-sweep .plot-tools button", (bs) => bs.map((x) => x.title));
      const zoom = titles.filter((t) => /zoom/i.test(t));
      assert.ok(zoom.length >= 2, `buttons: ${titles}`);
      for (const t of zoom) {
        assert.doesNotMatch(t, /time/i, t);
        assert.match(t, /bus capacitance/i, t);
      }
      // The waveform plot's still say time.
      const waves = await page.$$eval("#plot-waves .plot-tools button", (bs) => bs.map((x) => x.title));
      if (waves.length) assert.ok(waves.some((t) => /zoom in/i.test(t) && /time/.test(t)), `waveform buttons: ${waves}`);
    });

    test("the sweep plot marks each computed point", async () => {
      // A line-voltage sweep: the DC bus rises nearly in a straight line, so
      // the trace covers about the same pixels in every column except where
      // a marker sits.  Count the trace's pixels per column and find the
      // columns that stand out: one cluster per point.
      await runSweep("v_ll_rms_v", "380", "460", 6, "v_dc_avg_v");
      const r = await page.$eval("#plot-sweep", (host) => {
        const c = host.querySelector("canvas");
        const g = c.getContext("2d");
        const d = g.getImageData(0, 0, c.width, c.height).data;
        const dark = document.documentElement.getAttribute("data-theme") === "dark";
        const want = dark ? [0x6c, 0xb4, 0xff] : [0x0b, 0x5c, 0xad]; // app.js colors().a
        const per = new Array(c.width).fill(0);
        for (let y = 0; y < c.height; y++) {
          for (let x = 0; x < c.width; x++) {
            const k = (y * c.width + x) * 4;
            const dist = Math.abs(d[k] - want[0]) + Math.abs(d[k + 1] - want[1]) + Math.abs(d[k + 2] - want[2]);
            if (d[k + 3] > 200 && dist < 60) per[x] += 1;
          }
        }
        const used = per.filter((v) => v > 0).sort((a, b) => a - b);
        const median = used[Math.floor(used.length / 2)] || 0;
        let clusters = 0;
        let inside = false;
        for (const v of per) {
          const hi = v >= median * 1.8 && v >= 4;
          if (hi && !inside) clusters += 1;
          inside = hi;
        }
        return { clusters, median, columns: used.length };
      });
      assert.ok(r.columns > 200, `the trace was not found (${r.columns} columns)`);
      assert.equal(r.clusters, 6, `markers found: ${r.clusters} (median ${r.median} px per column)`);
    });

    test("no console errors", () => {
      assert.deepEqual(problems, []);
    });
  });
}
