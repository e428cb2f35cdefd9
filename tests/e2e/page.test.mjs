// End-to-end tests of the offline page, opened from file:// in headless Chromium
// and headless Firefox (Debian's browsers, driven by puppeteer-core).
//
// Run by `./build.sh test` after dist/ is built.  Any console error, uncaught
// page error, or request other than dist's own files (or data: URLs) fails.
//
// Expected values are closed forms from outside the project:
// N. Mohan, T. M. Undeland, W. P. Robbins, "Power Electronics: Converters,
// Applications and Design", 3rd ed., Wiley 2003, ch. 5 (three-phase full
// bridge, Vdo = (3 sqrt2 / pi) V_LL = 1.3505 V_LL) and ch. 6 (phase control,
// Vd = Vdo cos(alpha) before the commutation drop); twelve-pulse with the two
// bridge outputs in series: Vdo = 2 x 1.3505 V_LL on equal secondaries.

import { test, before, after, describe } from "node:test";
import assert from "node:assert/strict";
import fs from "node:fs";
import os from "node:os";
import path from "node:path";
import { pathToFileURL } from "node:url";
import puppeteer from "puppeteer-core";

const DIST = path.resolve(process.env.RECTIFIELD_DIST || "dist");
const INDEX = path.join(DIST, "index.html");
const DIST_URL = pathToFileURL(DIST).href + "/";
const ARTIFACTS = path.resolve("tests/artifacts");
const K6 = (3 * Math.SQRT2) / Math.PI; // 1.3505
const TIMEOUT = 20000;

const BROWSERS = [
  {
    name: "chromium",
    exe: process.env.CHROMIUM_BIN || "/usr/bin/chromium",
    launch: (exe, profile) =>
      puppeteer.launch({
        browser: "chrome",
        executablePath: exe,
        headless: true,
        userDataDir: profile,
        args: [
          "--no-sandbox",
          "--disable-gpu",
          "--disable-quic",
          "--no-first-run",
          "--disable-background-networking",
          "--disable-component-update",
          "--disable-sync",
        ],
      }),
  },
  {
    name: "firefox",
    exe: process.env.FIREFOX_BIN || "/usr/bin/firefox-esr",
    launch: (exe, profile) =>
      puppeteer.launch({
        browser: "firefox",
        executablePath: exe,
        headless: true,
        userDataDir: profile,
        // puppeteer relaxes this by default; with it relaxed a file:// page that
        // would be broken for a real user (blocked sibling scripts) passes.
        extraPrefsFirefox: { "security.fileuri.strict_origin_policy": true },
      }),
  },
];

function close(got, want, rel) {
  return Math.abs(got - want) <= rel * Math.abs(want);
}

for (const b of BROWSERS) {
  describe(`page in ${b.name}`, { timeout: 120000 }, () => {
    let browser;
    let page;
    let profile;
    const problems = []; // console errors, page errors, foreign requests
    const requests = [];

    before(async () => {
      assert.ok(fs.existsSync(INDEX), `${INDEX} missing: run ./build.sh first`);
      assert.ok(fs.existsSync(b.exe), `${b.exe} missing`);
      profile = fs.mkdtempSync(path.join(os.tmpdir(), `rectifield-${b.name}-`));
      browser = await b.launch(b.exe, profile);
      page = await browser.newPage();
      page.setDefaultTimeout(TIMEOUT);
      await page.setViewport({ width: 1180, height: 900 }); // a landscape tablet
      page.on("console", (msg) => {
        if (msg.type() === "error") problems.push(`console error: ${msg.text()}`);
      });
      page.on("pageerror", (err) => problems.push(`page error: ${err.message || err}`));
      page.on("request", (req) => {
        const url = req.url();
        requests.push(url);
        // blob: is the page's own in-memory data (the saved case), not a network load.
        if (!(url.startsWith(DIST_URL) || url.startsWith("data:") || url.startsWith("blob:"))) {
          problems.push(`network request: ${url}`);
        }
      });
      await page.goto(pathToFileURL(INDEX).href, { waitUntil: "load" });
      await page.waitForSelector('#results[data-state="current"]');
    });

    after(async () => {
      if (page) {
        fs.mkdirSync(ARTIFACTS, { recursive: true });
        await page
          .screenshot({ path: path.join(ARTIFACTS, `page-${b.name}.png`), fullPage: true })
          .catch(() => {});
      }
      if (browser) await browser.close();
      if (profile) fs.rmSync(profile, { recursive: true, force: true });
    });

    const out = (key) =>
      page.$eval(`[data-out="${key}"]`, (e) => e.textContent.trim());
    const num = async (key) => {
      const t = await out(key);
      const v = Number(t);
      assert.ok(Number.isFinite(v), `${key} shows "${t}", not a number`);
      return v;
    };
    const computed = () =>
      page.$eval("#results", (e) => Number(e.getAttribute("data-computed")));
    async function typeInto(id, text) {
      const before = await computed();
      await page.click(`#${id}`, { clickCount: 3 });
      await page.$eval(`#${id}`, (e) => e.select());
      await page.keyboard.press("Backspace");
      await page.type(`#${id}`, text);
      return before;
    }
    async function waitRecomputed(before) {
      await page.waitForFunction(
        (n) => {
          const r = document.querySelector("#results");
          return Number(r.getAttribute("data-computed")) > n && r.getAttribute("data-state") === "current";
        },
        {},
        before
      );
    }

    test("starts from file:// with the engine version and default results", async () => {
      const version = await page.$eval("#version", (e) => e.textContent.trim());
      assert.match(version, /^\d+\.\d+\.\d+/);
      const v = Number(await page.$eval("#v_ll_rms_v", (e) => e.value));
      assert.equal(v, 400, "default scenario line voltage");
      const vdo = await num("textbook.vdo_v");
      assert.ok(close(vdo, K6 * v, 1e-4), `Vdo ${vdo} vs ${K6 * v}`);
      const caution = await page.$eval("#safety", (e) => e.innerText);
      assert.match(caution, /discharge time/i);
      assert.match(caution, /lock out/i);
      if (b.name === "chromium") {
        // The request listener sees file:// loads in Chromium (a control that the
        // network check below is live); Firefox's WebDriver BiDi does not report them.
        assert.ok(requests.includes(DIST_URL + "app.js"), `requests seen: ${requests.join(", ")}`);
      }
    });

    test("typing a new line voltage recomputes Vdo = 1.3505 V_LL", async () => {
      const n = await typeInto("v_ll_rms_v", "690");
      await waitRecomputed(n);
      const vdo = await num("textbook.vdo_v");
      assert.ok(close(vdo, K6 * 690, 1e-4), `Vdo ${vdo} vs ${K6 * 690}`);
      assert.ok(close(await num("textbook.device_piv_v"), Math.SQRT2 * 690, 1e-4), "PIV = sqrt2 V_LL");
    });

    test("a field that is not a number is marked; old results kept, out of date", async () => {
      const shown = await out("textbook.vdo_v");
      await typeInto("v_ll_rms_v", "6x0");
      await page.waitForSelector('#results[data-state="stale"]');
      const msg = await page.$eval("#v_ll_rms_v", (e) => e.closest(".field").querySelector(".msg").textContent);
      assert.match(msg, /number/);
      assert.equal(await out("textbook.vdo_v"), shown, "last good value kept");
      assert.equal(await page.$eval("#stale-note", (e) => e.hidden), false);
    });

    test("the engine's reason for a bad value appears beside the field", async () => {
      await typeInto("v_ll_rms_v", "-5");
      await page.waitForFunction(() => {
        const m = document.querySelector("#v_ll_rms_v").closest(".field").querySelector(".msg");
        return m.textContent.includes("positive");
      });
      assert.equal(await page.$eval("#results", (e) => e.getAttribute("data-state")), "stale");
      const n = await typeInto("v_ll_rms_v", "480");
      await waitRecomputed(n);
      assert.ok(close(await num("textbook.vdo_v"), K6 * 480, 1e-4));
      assert.equal(await page.$eval("#stale-note", (e) => e.hidden), true);
    });

    test("thyristor bridge: Vdo cos(alpha) follows the firing angle", async () => {
      let n = await computed();
      await page.select("#bridge_kind", "six_pulse_thyristor");
      await waitRecomputed(n);
      n = await typeInto("alpha_deg", "30");
      await waitRecomputed(n);
      const want = K6 * 480 * Math.cos(Math.PI / 6);
      const got = await num("textbook.vd_alpha_v");
      assert.ok(close(got, want, 1e-4), `Vdo cos(alpha) ${got} vs ${want}`);
    });

    test("twelve-pulse, outputs in series: Vdo doubles", async () => {
      const n = await computed();
      await page.select("#bridge_kind", "twelve_pulse_series");
      await waitRecomputed(n);
      assert.equal(await page.$eval("#alpha_deg", (e) => e.closest("[hidden]") !== null), true);
      const vdo = await num("textbook.vdo_v");
      assert.ok(close(vdo, 2 * K6 * 480, 1e-4), `Vdo ${vdo} vs ${2 * K6 * 480}`);
      const orders = await page.$$eval('[data-out="textbook.harmonics"] tbody tr td:first-child', (tds) =>
        tds.map((t) => Number(t.textContent))
      );
      assert.ok(orders.length > 0, "harmonic table empty");
      for (const h of orders) assert.ok(h % 12 === 1 || h % 12 === 11, `order ${h} is not 12k +- 1`);
    });

    test("a transformer source: short-circuit current from kVA and %Z", async () => {
      let n = await computed();
      await page.select("#source_kind", "transformer");
      await waitRecomputed(n);
      n = await typeInto("imp_tx_s_kva", "1000");
      await waitRecomputed(n);
      n = await typeInto("imp_tx_z_pct", "5");
      await waitRecomputed(n);
      // Common practice (per-unit method): I_sc = S / (sqrt3 V_LL z_pu) behind an
      // infinite bus; the page shows kA.  V_LL is 480 V from the earlier test.
      const want_ka = 1000e3 / (Math.sqrt(3) * 480 * 0.05) / 1e3;
      const got = await num("derived.i_sc_a");
      assert.ok(close(got, want_ka, 1e-4), `I_sc ${got} kA vs ${want_ka}`);
    });

    test("touch targets are at least 44 px high", async () => {
      const small = await page.$$eval("#inputs input:not([type=file]), #inputs select, #inputs button, #inputs label.button", (els) =>
        els
          .filter((e) => e.offsetParent !== null)
          .map((e) => [e.id, e.getBoundingClientRect().height])
          .filter(([, h]) => h < 44)
      );
      assert.deepEqual(small, []);
      const modes = await page.$$eval("#inputs input", (els) =>
        els
          .filter((e) => e.type !== "file" && e.getAttribute("data-type") !== "text")
          .filter((e) => e.getAttribute("inputmode") !== "decimal")
          .map((e) => e.id)
      );
      assert.deepEqual(modes, [], "number inputs without inputmode=decimal");
    });

    test("user text is never inserted as markup", async () => {
      await typeInto("v_ll_rms_v", "<b>1</b>");
      await page.waitForSelector('#results[data-state="stale"]');
      assert.equal(await page.$$eval("#inputs b", (x) => x.length), 0);
      const n = await typeInto("v_ll_rms_v", "400");
      await waitRecomputed(n);
    });

    test("opening a saved case fills the form and recomputes", async () => {
      // Our own demo case: a 690 V 60 Hz charger front end on a 1500 kVA transformer.
      const scenario = {
        name: "Charger <i>front end</i>, 690 V 60 Hz",
        supply: { v_ll_rms_v: 690, f_hz: 60 },
        source: { impedance: { kind: "transformer", s_kva: 1500, z_pct: 5.75, x_over_r: 7 } },
        bridge: { kind: "six_pulse_thyristor", alpha_deg: 20 },
      };
      const file = path.join(profile, "charger.rectifield.json");
      fs.writeFileSync(file, JSON.stringify(scenario));
      const n = await computed();
      const input = await page.$("#open_case");
      await input.uploadFile(file);
      await waitRecomputed(n);
      const val = (id) => page.$eval(`#${id}`, (e) => e.value);
      assert.equal(await val("v_ll_rms_v"), "690");
      assert.equal(await val("f_hz"), "60");
      assert.equal(await val("source_kind"), "transformer");
      assert.equal(await val("imp_tx_s_kva"), "1500");
      assert.equal(await val("bridge_kind"), "six_pulse_thyristor");
      assert.equal(await val("alpha_deg"), "20");
      assert.equal(await val("case_name"), scenario.name);
      assert.equal(await page.$$eval("i", (x) => x.length), 0, "name inserted as markup");
      assert.ok(close(await num("textbook.vdo_v"), K6 * 690, 1e-4));
      const vda = K6 * 690 * Math.cos((20 * Math.PI) / 180);
      assert.ok(close(await num("textbook.vd_alpha_v"), vda, 1e-4));
      // Common practice (per-unit method), as above.
      const isc = 1500e3 / (Math.sqrt(3) * 690 * 0.0575) / 1e3;
      assert.ok(close(await num("derived.i_sc_a"), isc, 1e-4));

      const bad = path.join(profile, "bad.rectifield.json");
      fs.writeFileSync(bad, JSON.stringify({ supply: { f_hz: "sixty" } }));
      await (await page.$("#open_case")).uploadFile(bad);
      await page.waitForFunction(() => document.querySelector("#case-msg").textContent.includes("supply.f_hz"));
      assert.equal(await val("v_ll_rms_v"), "690", "a bad file leaves the form alone");
    });

    test("saving a case writes the scenario as shown (Chromium download)", { skip: b.name !== "chromium" && "downloads are driven through CDP, Chromium only" }, async () => {
      const dir = fs.mkdtempSync(path.join(profile, "dl-"));
      const cdp = await page.createCDPSession();
      await cdp.send("Browser.setDownloadBehavior", { behavior: "allow", downloadPath: dir });
      await page.click("#save_case");
      const deadline = Date.now() + 10000;
      let files = [];
      while (Date.now() < deadline) {
        files = fs.readdirSync(dir).filter((f) => f.endsWith(".json"));
        if (files.length) break;
        await new Promise((r) => setTimeout(r, 100));
      }
      assert.equal(files.length, 1, `downloads: ${fs.readdirSync(dir).join(", ")}`);
      assert.match(files[0], /^Charger-i-front-end-i-690-V-60-Hz\.rectifield\.json$/);
      const saved = JSON.parse(fs.readFileSync(path.join(dir, files[0]), "utf8"));
      assert.equal(saved.supply.v_ll_rms_v, 690);
      assert.deepEqual(saved.source.impedance, { kind: "transformer", s_kva: 1500, z_pct: 5.75, x_over_r: 7 });
      assert.equal(saved.bridge.alpha_deg, 20);
      assert.equal(saved.dc.cap_f, 2.2e-3, "2200 uF saved in farads");
      assert.equal(saved.name, "Charger <i>front end</i>, 690 V 60 Hz");
    });

    test("the content security policy blocks connections", async () => {
      // In a second tab, so that the CSP error this provokes on purpose stays out
      // of the main page's console check.
      const tab = await browser.newPage();
      try {
        await tab.goto(pathToFileURL(INDEX).href, { waitUntil: "load" });
        const directive = await tab.evaluate(
          () =>
            new Promise((resolve) => {
              document.addEventListener("securitypolicyviolation", (e) => resolve(e.violatedDirective), {
                once: true,
              });
              // Loopback, closed port: even if the policy failed nothing would leave the machine.
              fetch("http://127.0.0.1:9/").catch(() => {});
              setTimeout(() => resolve("no violation reported"), 3000);
            })
        );
        assert.match(directive, /connect-src/);
      } finally {
        await tab.close();
      }
    });

    test("no console errors and no network requests", () => {
      assert.deepEqual(problems, []);
    });
  });
}
