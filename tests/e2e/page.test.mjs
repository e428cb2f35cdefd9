// End-to-end tests of the offline page, opened from file:// in headless Chromium
// and headless Firefox (Debian's browsers, driven by puppeteer-core).
//
// Run by `./build.sh test` after dist/ is built.  dist/index.html is the whole
// page in one file: any console error, uncaught page error, or request other
// than that file itself (or data:/blob: URLs) fails.
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
import { BROWSERS } from "./browsers.mjs";

const DIST = path.resolve(process.env.RECTIFIELD_DIST || "dist");
const INDEX = path.join(DIST, "index.html");
const INDEX_URL = pathToFileURL(INDEX).href;
const ARTIFACTS = path.resolve("tests/artifacts");
const K6 = (3 * Math.SQRT2) / Math.PI; // 1.3505
const TIMEOUT = 45000;


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
        fs.mkdirSync(ARTIFACTS, { recursive: true });
        // The cards far below the viewport are not painted (content-visibility:
        // auto, style.css); for the full-page picture paint them all.
        await page
          .addStyleTag({ content: "#sections > .card, #inputs > fieldset { content-visibility: visible !important; }" })
          .catch(() => {});
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
        // The page is one file: its own load is the only request.
        const loads = requests.filter((u) => !u.startsWith("data:") && !u.startsWith("blob:"));
        assert.deepEqual(loads, [INDEX_URL], `requests seen: ${loads.join(", ")}`);
      }
    });

    test("start-up to the first result makes no Intl object (no ICU start-up on that path)", async () => {
      // The first Intl object of a page starts the browser's ICU data (measured
      // 35 to 80 ms in headless Chromium on a slow host, 2026-12-03); uPlot made
      // two at load until tools/vendor-uplot.mjs made them lazy.  The page
      // formats numbers itself (units.js).
      const p2 = await browser.newPage();
      try {
        await p2.evaluateOnNewDocument(() => {
          window.__intlMade = [];
          for (const k of Object.getOwnPropertyNames(Intl)) {
            const C = Intl[k];
            if (typeof C !== "function") continue;
            Intl[k] = new Proxy(C, {
              construct(t, a) {
                window.__intlMade.push(k);
                return Reflect.construct(t, a);
              },
              apply(t, self, a) {
                window.__intlMade.push(k);
                return Reflect.apply(t, self, a);
              },
            });
          }
        });
        await p2.goto(INDEX_URL, { waitUntil: "load" });
        await p2.waitForSelector('#results[data-state="current"]', { timeout: TIMEOUT });
        const probed = await p2.evaluate(() => Array.isArray(window.__intlMade));
        assert.ok(probed, "the probe was not installed before the page's scripts");
        const made = await p2.evaluate(() => window.__intlMade);
        assert.deepEqual(made, [], `Intl objects made before the first result: ${made.join(", ")}`);
      } finally {
        await p2.close();
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
      assert.match(msg, /not a unit|number/);
      assert.equal(await out("textbook.vdo_v"), shown, "last good value kept");
      assert.equal(await page.$eval("#v_ll_rms_v", (e) => e.value), "6x0", "the typed text is kept");
      assert.equal(await page.$eval("#stale-note", (e) => e.hidden), false);
    });

    test("the engine's reason for a bad value appears beside the field", async () => {
      await typeInto("v_ll_rms_v", "-5");
      await page.waitForFunction(() => {
        const m = document.querySelector("#v_ll_rms_v").closest(".field").querySelector(".msg");
        return /positive|out of range/.test(m.textContent);
      });
      assert.equal(await page.$eval("#results", (e) => e.getAttribute("data-state")), "stale");
      const n = await typeInto("v_ll_rms_v", "480");
      await waitRecomputed(n);
      assert.ok(close(await num("textbook.vdo_v"), K6 * 480, 1e-4));
      assert.equal(await page.$eval("#stale-note", (e) => e.hidden), true);
      // The refused value is said in the field's unit (mH), not the engine's H.
      await page.$eval("#choke_l_h", (e) => {
        const d = e.closest("details");
        if (d) d.open = true;
      });
      await typeInto("choke_l_h", "-1");
      await page.waitForFunction(() => /out of range/.test(document.querySelector("#choke_l_h-msg").textContent));
      assert.match(await page.$eval("#choke_l_h-msg", (e) => e.textContent), /^-1 mH is out of range/);
      const m = await typeInto("choke_l_h", "0");
      await waitRecomputed(m);
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
      // A checkbox's touch target is its label (the whole row).
      const small = await page.$$eval("#inputs input:not([type=file]):not([type=checkbox]), #inputs select, #inputs button, #inputs label.button, #inputs label.check, #inputs summary, #results button", (els) =>
        els
          .filter((e) => e.offsetParent !== null)
          .map((e) => [e.id, e.getBoundingClientRect().height])
          .filter(([, h]) => h < 44)
      );
      assert.deepEqual(small, []);
      const modes = await page.$$eval("#inputs input", (els) =>
        els
          .filter((e) => e.type !== "file" && e.type !== "checkbox" && e.getAttribute("data-type") !== "text")
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

    // ---------------------------------------------------------------- the page in full

    const shot = (name) =>
      page.screenshot({ path: path.join(ARTIFACTS, `${b.name}-${name}.png`) }).catch(() => {});
    const shotOf = async (sel, name) => {
      const h = await page.$(sel);
      if (h) await h.screenshot({ path: path.join(ARTIFACTS, `${b.name}-${name}.png`) }).catch(() => {});
    };
    async function openCaseFile(scenario, name) {
      const file = path.join(profile, name || "case.rectifield.json");
      fs.writeFileSync(file, typeof scenario === "string" ? scenario : JSON.stringify(scenario));
      const n = await computed();
      await (await page.$("#open_case")).uploadFile(file);
      return n;
    }
    // Every field of the form: id -> value (checkboxes: checked).
    const formState = (pg) =>
      (pg || page).$$eval("#inputs [data-path], #inputs [data-variant], #inputs [data-harm]", (els) =>
        Object.fromEntries(els.map((e) => [e.id, e.type === "checkbox" ? e.checked : e.value]))
      );
    async function captureDownloads() {
      await page.evaluate(() => {
        window.__saved = [];
        if (!window.__origCreate) window.__origCreate = URL.createObjectURL;
        URL.createObjectURL = (blob) => {
          blob.text().then((t) => window.__saved.push(t));
          return window.__origCreate(blob);
        };
      });
    }

    // A stiff source and a resistor, no capacitor: the closed forms apply (continuous
    // conduction, negligible commutation).  Closed forms: six-pulse bridge
    // Vdo = (3 sqrt2 / pi) V_LL, Vd = Vdo cos(alpha) (Mohan, Undeland, Robbins,
    // 3rd ed., ch. 5 and 6); three-pulse (star, midpoint) rectifier
    // Vdc = (q / pi) Vm sin(pi / q) with q = 3 and Vm the peak phase voltage
    // (M. H. Rashid, "Power Electronics: Circuits, Devices and Applications",
    // 3rd ed., ch. 3, multiphase star rectifiers), times cos(alpha) for
    // thyristors while conduction stays continuous (alpha <= 30 deg on a
    // resistor); twelve-pulse: two six-pulse bridges on equal secondaries,
    // outputs in series = 2 Vdo, in parallel = Vdo.
    const K3 = ((3 / Math.PI) * Math.sin(Math.PI / 3) * Math.SQRT2) / Math.sqrt(3); // 0.6752
    const BRIDGES = [
      ["six_pulse_diode", 0, K6],
      ["six_pulse_thyristor", 30, K6 * Math.cos(Math.PI / 6)],
      ["three_pulse_diode", 0, K3],
      ["three_pulse_thyristor", 20, K3 * Math.cos((20 * Math.PI) / 180)],
      ["twelve_pulse_series", 0, 2 * K6],
      ["twelve_pulse_parallel", 0, K6],
    ];

    test("every bridge type: the simulated DC average matches its closed form", async () => {
      let n = await openCaseFile({
        name: "Stiff source, resistor",
        supply: { v_ll_rms_v: 400, f_hz: 50 },
        source: { impedance: { kind: "direct", r_ohm: 1e-4, l_h: 1e-6 }, reactor: { kind: "none" } },
        dc: { cap_f: 0, cap_esr_ohm: 0, load: { kind: "resistor", r_ohm: 50 } },
      });
      await waitRecomputed(n);
      for (const [kind, alpha, k] of BRIDGES) {
        n = await computed();
        await page.select("#bridge_kind", kind);
        await waitRecomputed(n);
        if (/thyristor/.test(kind)) {
          n = await typeInto("alpha_deg", String(alpha));
          await waitRecomputed(n);
        }
        const got = await num("results.dc.v_avg_v");
        const want = k * 400;
        assert.ok(close(got, want, 0.01), `${kind}: simulated V_dc ${got} V vs closed form ${want.toFixed(2)} V`);
        // the glance figure is the same number
        assert.ok(close(await num("glance.v_dc_avg_v"), got, 1e-3), `${kind}: glance figure`);
        assert.equal(await page.$eval("#schematic", (e) => e.getAttribute("data-bridge")), kind);
        const devs = await page.$$eval("#schematic path.dev:not(.gate)", (p) => p.length);
        const want_devs = { six: 12, thr: 6, twe: 24 }[kind.slice(0, 3)]; // triangle and bar per device
        assert.equal(devs, want_devs, `${kind}: devices drawn`);
        const gates = await page.$$eval("#schematic path.gate", (p) => p.length);
        assert.equal(gates > 0, /thyristor/.test(kind), `${kind}: gates drawn only for thyristors`);
        if (kind === "twelve_pulse_series" || kind === "three_pulse_diode") await shotOf("#out-schematic", `schematic-${kind}`);
      }
      n = await computed();
      await page.select("#bridge_kind", "six_pulse_diode");
      await waitRecomputed(n);
    });

    test("engineering notation is read; a wrong unit is marked beside its field", async () => {
      let n = await typeInto("cap_f", "2.2 mF");
      await waitRecomputed(n);
      let label = await page.$eval("#schematic", (e) => e.textContent);
      assert.match(label, /2\.2 mF/, "schematic shows the capacitor typed");
      n = await typeInto("choke_l_h", "400u");
      await waitRecomputed(n);
      label = await page.$eval("#schematic", (e) => e.textContent);
      assert.match(label, /choke 400 µH/);
      await typeInto("cap_f", "2.2 mH");
      await page.waitForSelector('#results[data-state="stale"]');
      assert.match(await page.$eval("#cap_f-msg", (e) => e.textContent), /not a unit/);
      assert.equal(await page.$eval("#cap_f", (e) => e.getAttribute("aria-invalid")), "true");
      n = await typeInto("cap_f", "0");
      await waitRecomputed(n);
      n = await typeInto("choke_l_h", "0");
      await waitRecomputed(n);
      // an engine refusal on a field inside a fold, and on a frequency
      await typeInto("f_hz", "2000");
      await page.waitForFunction(() => document.querySelector("#f_hz-msg").textContent.includes("1 kHz"));
      n = await typeInto("f_hz", "50");
      await waitRecomputed(n);
      await typeInto("imp_direct_l_h", "-1 mH");
      await page.waitForFunction(() => /positive|out of range/.test(document.querySelector("#imp_direct_l_h-msg").textContent));
      n = await typeInto("imp_direct_l_h", "1 uH");
      await waitRecomputed(n);
      // a bad value in a closed fold opens the fold, so that the mark is seen
      assert.equal(await page.$eval("#fold-unbalance", (d) => d.open), false);
      await page.$eval("#mag_b", (e) => {
        e.value = "98 Hz";
        e.dispatchEvent(new Event("input", { bubbles: true }));
      });
      await page.waitForFunction(() => document.querySelector("#mag_b-msg").textContent.includes('"Hz" is not'));
      assert.equal(await page.$eval("#fold-unbalance", (d) => d.open), true);
      n = await typeInto("mag_b", "100 %");
      await waitRecomputed(n);
    });

    test("a lost phase and an open device are drawn and computed", async () => {
      await page.$eval("#fold-unbalance", (d) => (d.open = true));
      let n = await computed();
      await page.click("label[for=open_a]");
      await waitRecomputed(n);
      assert.equal(await page.$eval("#schematic", (e) => e.getAttribute("data-lost")), "a");
      assert.match(await page.$eval("#schematic", (e) => e.textContent), /phase a lost/);
      // with phase a open its line current is zero
      const rms = await page.$eval("#out-exact-line table.grid tbody tr td:nth-child(2)", (e) => Number(e.textContent));
      assert.ok(Math.abs(rms) < 1e-3, `phase a current with the phase lost: ${rms} A`);
      // The warnings show beside the headline figures, not only far below.
      assert.match(await out("glance.warnings"), /⚠/);
      await shotOf("#out-schematic", "schematic-lost-phase");
      n = await computed();
      await page.click("label[for=open_a]");
      await waitRecomputed(n);
      n = await computed();
      await page.select("#open_device", "0");
      await waitRecomputed(n);
      assert.equal(await page.$eval("#schematic", (e) => e.getAttribute("data-open-device")), "0");
      assert.ok((await page.$$eval("#schematic path.dev.open", (p) => p.length)) >= 2, "open device drawn dashed");
      const state = await page.$eval("#out-ratings table.grid tbody tr td:last-child", (e) => e.textContent);
      assert.match(state, /OPEN/);
      n = await computed();
      await page.select("#open_device", "");
      await waitRecomputed(n);
    });

    test("no load: the drive's bus sits at the line-to-line peak, on the same reactor", async () => {
      // Common practice: an unloaded diode bridge charges its capacitor bus to
      // the peak of the line-to-line voltage, sqrt2 x 400 V = 565.7 V.  The
      // default drive states its 45 kW rating, so its 3 % reactor keeps its
      // henries when the load changes.
      let n = await computed();
      await page.click("#new_case"); // the default drive (earlier tests changed the case)
      await waitRecomputed(n);
      const lr = await num("derived.l_reactor_h");
      await page.$eval("#load_p_w", (e) => {
        const d = e.closest("details");
        if (d) d.open = true;
      });
      n = await typeInto("load_p_w", "0");
      await waitRecomputed(n);
      const v = await num("glance.v_dc_avg_v");
      assert.ok(close(v, Math.SQRT2 * 400, 2e-3), `no-load bus ${v} V`);
      assert.equal(await num("derived.l_reactor_h"), lr, "the reactor's inductance follows the rating, not the load");
      // The suggested class over the worst device voltage, as shown.
      const cls = await num("results.ratings.suggested_voltage_class_v");
      const worst = await num("results.ratings.worst_device_voltage_v");
      const ratio = await num("results.ratings.voltage_class_over_worst");
      assert.ok(close(ratio, cls / worst, 1e-3), `${ratio} vs ${cls} / ${worst}`);
      n = await typeInto("load_p_w", "45");
      await waitRecomputed(n);
    });

    test("examples open and compute; results at a glance and the grid verdict", async () => {
      const ids = await page.$$eval("#examples option", (o) => o.map((x) => x.value).filter(Boolean));
      assert.ok(ids.length >= 4, `examples: ${ids}`);
      let n = await computed();
      await page.select("#examples", "pumping_station_drive");
      await waitRecomputed(n);
      assert.equal(await page.$eval("#v_ll_rms_v", (e) => e.value), "480");
      assert.equal(await page.$eval("#f_hz", (e) => e.value), "60");
      assert.equal(await page.$eval("#reactor_pct_z_pct", (e) => e.value), "3");
      for (const k of ["v_dc_avg_v", "ripple_pp_v", "i_line_rms_a", "thd_max_pct", "power_factor", "device_v_peak_v"]) await num("glance." + k);
      const hasCompliance = await page.evaluate(() => !!document.querySelector('[data-out="compliance.verdict"]'));
      if (hasCompliance) {
        const v = await out("glance.verdict");
        assert.match(v, /Pass|Fail|Incomplete|Not applicable/, "the verdict is a word, not a colour");
      }
      await page.evaluate(() => window.scrollTo(0, 0));
      await shot("glance");
      for (const id of ids) {
        n = await computed();
        await page.select("#examples", id);
        await waitRecomputed(n);
        assert.equal(await page.$$eval("#sections .card", (c) => c.length > 3), true, `${id}: sections shown`);
      }
    });

    // The schematic as drawn: every wire end must touch another conductor (a
    // wire, a part, a device, a source or winding circle, the core), so that
    // a rail stopping short of the load or an unjoined tap is found; and no
    // wire may run through a text label.  Sampled from the SVG geometry.
    const schematicFaults = () =>
      page.$eval("#schematic svg", (svg) => {
        const sel = "path.w:not(.mark):not(.fault-w), path.dev, path.plate, circle.src, circle.winding, rect.core, rect.load";
        const els = [...svg.querySelectorAll(sel)];
        const samples = els.map((e) => {
          const out = [];
          if (e.tagName === "circle") {
            const [cx, cy, r] = ["cx", "cy", "r"].map((k) => Number(e.getAttribute(k)));
            for (let k = 0; k < 180; k++) out.push([cx + r * Math.cos((k * Math.PI) / 90), cy + r * Math.sin((k * Math.PI) / 90)]);
          } else if (e.tagName === "rect") {
            const [x, y, w, h] = ["x", "y", "width", "height"].map((k) => Number(e.getAttribute(k)));
            for (let t = 0; t <= w; t += 0.5) out.push([x + t, y], [x + t, y + h]);
            for (let t = 0; t <= h; t += 0.5) out.push([x, y + t], [x + w, y + t]);
          } else {
            const len = e.getTotalLength();
            for (let l = 0; l < len; l += 0.5) {
              const q = e.getPointAtLength(l);
              out.push([q.x, q.y]);
            }
            const q = e.getPointAtLength(len);
            out.push([q.x, q.y]);
          }
          return out;
        });
        const faults = [];
        els.forEach((e, i) => {
          if (!e.matches("path.w")) return;
          const ends = [samples[i][0], samples[i][samples[i].length - 1]];
          for (const [x, y] of ends) {
            const joined = samples.some((pts, j) => j !== i && pts.some(([u, v]) => Math.hypot(u - x, v - y) <= 1.5));
            if (!joined) faults.push(`open wire end at (${x.toFixed(0)}, ${y.toFixed(0)})`);
          }
        });
        for (const t of svg.querySelectorAll("text")) {
          const b = t.getBBox();
          const hit = samples.some((pts, j) => els[j].matches("path.w") && pts.some(([u, v]) => u > b.x + 1 && u < b.x + b.width - 1 && v > b.y + 2 && v < b.y + b.height - 2));
          if (hit) faults.push(`a wire runs through the label "${t.textContent}"`);
        }
        return faults;
      });

    test("schematics: every bridge's circuit is closed and its labels are clear", async () => {
      for (const id of ["twelve_pulse_supply", "electrolysis_twelve_pulse_parallel", "pumping_station_drive", "lab_supply_three_pulse_thyristor"]) {
        const n = await computed();
        await page.select("#examples", id);
        await waitRecomputed(n);
        assert.deepEqual(await schematicFaults(), [], `${id}: schematic`);
        // the parallel drawing shows the interphase reactor's value
        if (/parallel/.test(id)) assert.match(await page.$eval("#schematic", (e) => e.textContent), /interphase\s*4 mH/);
        await shotOf("#out-schematic", `schematic-${id}`);
      }
    });

    test("twelve-pulse: the IEEE 519 pulse-number allowance is stated, with the orders that block it", async () => {
      let n = await computed();
      await page.select("#examples", "twelve_pulse_supply");
      await waitRecomputed(n);
      const sel = '[data-out="compliance.ieee519.pulse_allowance"]';
      assert.equal(await page.$eval(sel, (e) => e.getAttribute("data-applied")), "true");
      assert.match(await out("compliance.ieee519.pulse_allowance"), /^Pulse number 12: .*h11, h13.* × 1\.414: applied/);
      // Unequal phase magnitudes (1.02 / 1.00 / 0.98 pu) bring non-characteristic
      // orders; IEEE 519 keeps the sqrt(q/6) multiplier only while each is under
      // 25 % of its limit.  The orders named must be such orders, shown in the
      // checks table with a value above a quarter of their limit.
      n = await openCaseFile({
        name: "12-pulse series, unequal phases",
        supply: { v_ll_rms_v: 400, f_hz: 50, phase_magnitude_pu: [1.02, 1.0, 0.98] },
        source: { impedance: { kind: "short_circuit_mva", s_sc_mva: 10, x_over_r: 8 }, reactor: { kind: "percent", z_pct: 3, x_over_r: 30 } },
        bridge: { kind: "twelve_pulse_series" },
        dc: { cap_f: 0, choke_l_h: 0.02, load: { kind: "resistor", r_ohm: 5 } },
        analysis: { rated_power_w: 230000, grid_points: 4096 },
      });
      await waitRecomputed(n);
      assert.equal(await page.$eval(sel, (e) => e.getAttribute("data-applied")), "false");
      const text = await out("compliance.ieee519.pulse_allowance");
      assert.match(text, /not applied, because these non-characteristic orders exceed 25 % of their limits: h\d+/);
      const named = [...text.matchAll(/h(\d+) [\d.]+ % of IL/g)].map((m) => Number(m[1]));
      assert.ok(named.length > 0, text);
      const rows = await page.$$eval('[data-out="compliance.ieee519.current"] tbody tr', (trs) => trs.map((tr) => [...tr.cells].map((c) => c.textContent.trim())));
      for (const h of named) {
        assert.ok(h % 12 !== 1 && h % 12 !== 11, `h${h} is characteristic of 12 pulses`);
        const row = rows.find((r) => r[0] === `h${h}`);
        assert.ok(row, `h${h} in the checks table`);
        // (shown to 4 digits: a rounding's room)
        assert.ok(Number(row[1]) >= 0.25 * Number(row[2]) * (1 - 1e-3), `h${h}: ${row[1]} vs 25 % of ${row[2]}`);
      }
      // and no order left out: every non-characteristic row above a quarter of its limit is named
      for (const r of rows) {
        const h = Number(r[0].slice(1));
        if (!/^h\d+$/.test(r[0]) || h % 12 === 1 || h % 12 === 11) continue;
        if (Number(r[1]) > 0.25 * Number(r[2]) * (1 + 1e-3)) assert.ok(named.includes(h), `h${h} above a quarter of its limit but not named`);
      }
      // The THD tile names the phase of the THD shown, the one the per-phase table gives.
      const lines = await page.$eval("#out-exact-line table.grid", (t) => [...t.tBodies[0].rows].map((tr) => [...tr.cells].map((c) => c.textContent.trim())));
      const thdMax = lines.reduce((m, r) => (Number(r[3]) > Number(m[3]) ? r : m));
      const tddMax = lines.reduce((m, r) => (Number(r[4]) > Number(m[4]) ? r : m));
      const sub = await page.$eval('[data-out="glance.thd_max_pct"]', (e) => e.closest(".tile").querySelector(".tile-sub").textContent);
      assert.equal(sub.match(/^phase (\w)/)[1], thdMax[0], `THD tile: ${sub}`);
      assert.equal(sub.match(/\(phase (\w)\)$/)[1], tddMax[0], `THD tile: ${sub}`);
    });

    test("plots: waveforms, spectrum with limits, power-up, sweep with cancel; CSV export", async () => {
      let n = await computed();
      await page.select("#examples", "pumping_station_drive");
      await waitRecomputed(n);
      await page.waitForSelector("#plot-waves canvas");
      const legend = () => page.$$eval("#plot-waves .u-legend .u-series th", (t) => t.map((x) => x.textContent.trim()));
      let names = await legend();
      assert.ok(names.includes("v_dc") && names.includes("i_a"), `legend: ${names}`);
      await page.click('#trace-choice input[value="i_cap"]');
      await page.waitForFunction(() => [...document.querySelectorAll("#plot-waves .u-legend th")].some((t) => t.textContent.includes("i_cap")));
      await page.$eval("#plot-waves", (e) => e.scrollIntoView());
      await shotOf("#out-plots", "plot-waveforms");
      await captureDownloads();
      await page.click("#plot-waves .plot-tools button:last-child"); // CSV
      await page.waitForFunction(() => window.__saved.length > 0);
      const csv = await page.evaluate(() => window.__saved[0]);
      const lines = csv.trim().split("\n");
      assert.match(lines[0], /^time \(s\),/);
      assert.ok(lines[0].includes("i_cap (A)"));
      const row = lines[1].split(",");
      assert.equal(row.length, lines[0].split(",").length);
      assert.ok(lines.length > 700, `CSV rows ${lines.length}`);

      await page.click('[data-tab="spectrum"]');
      await page.waitForSelector("#plot-spectrum canvas");
      if (await page.evaluate(() => !!document.querySelector('[data-out="compliance.verdict"]'))) {
        await page.select("#spectrum-basis", "ieee");
        await page.waitForFunction(() => [...document.querySelectorAll("#plot-spectrum .u-legend th")].some((t) => t.textContent.includes("IEEE 519 limit")));
      }
      await shotOf("#out-plots", "plot-spectrum");

      await page.click('[data-tab="transient"]');
      n = await computed();
      await page.click("#transient-on");
      await waitRecomputed(n);
      await page.waitForSelector("#plot-transient canvas");
      const inrush = await num("sim.transient.inrush_peak_a");
      assert.ok(inrush > 0, "inrush peak");
      // With a constant-power load the page says how the power-up models it,
      // and only then.
      const loadKind = await page.$eval("#load_kind", (e) => e.value);
      assert.equal(!!(await page.$("#transient-cpl-note")), loadKind === "constant_power", `power-up note, load ${loadKind}`);
      await shotOf("#out-plots", "plot-power-up");

      await page.click('[data-tab="sweep"]');
      await page.select("#sweep-field", "v_ll_rms_v");
      await page.$eval("#sweep-from", (e) => (e.value = "440"));
      await page.$eval("#sweep-to", (e) => (e.value = "520"));
      await page.$eval("#sweep-n", (e) => (e.value = "5"));
      await page.select("#sweep-y", "v_dc_avg_v");
      await page.click("#sweep-run");
      await page.waitForSelector('#panel-sweep[data-state="done"]', { timeout: 60000 });
      assert.match(await page.$eval("#sweep-msg", (e) => e.textContent), /Done: 5 points/);
      await page.waitForSelector("#plot-sweep canvas");
      await captureDownloads();
      await page.click("#plot-sweep .plot-tools button:last-child");
      await page.waitForFunction(() => window.__saved.length > 0);
      // (the sweep's CSV begins with "# " lines naming the base case)
      const sw = (await page.evaluate(() => window.__saved[0])).trim().split("\n").filter((l) => !l.startsWith("#")).slice(1).map((l) => l.split(",").map(Number));
      assert.equal(sw.length, 5);
      // the DC bus rises with the line voltage, close to in proportion (Vdo = 1.35 V_LL)
      for (let i = 1; i < sw.length; i++) assert.ok(sw[i][1] > sw[i - 1][1], `sweep not rising at ${sw[i][0]} V`);
      assert.ok(close(sw[4][1] / sw[0][1], 520 / 440, 0.03), `ratio ${sw[4][1] / sw[0][1]}`);
      await shotOf("#out-plots", "plot-sweep");
      // a long sweep can be cancelled
      await page.$eval("#sweep-n", (e) => (e.value = "2000"));
      await page.click("#sweep-run");
      await page.waitForFunction(() => document.querySelector("#sweep-progress").value >= 1);
      await page.click("#sweep-cancel");
      await page.waitForSelector('#panel-sweep[data-state="cancelled"]', { timeout: 30000 });
      const m = await page.$eval("#sweep-msg", (e) => e.textContent);
      const done = Number(/after (\d+) of 2000/.exec(m)[1]);
      assert.ok(done < 2000, m);
      await page.click('[data-tab="waves"]');
    });

    test("a sweep spread over Web Workers gives the one-run sweep's figures", async () => {
      // The page's sweep (app.js, sweepPoints) against one SweepRun on the
      // page's thread, the same points.  Each worker run's first point starts
      // cold where the one run starts warm, so the figures agree within the
      // warm-start tolerance (DEVELOPERS.md, "Warm starts": 8e-5 relative at
      // most, measured); the first point is cold in both and the same engine
      // computes it, so it agrees to the bit.
      const r = await page.evaluate(async () => {
        const s = wasm_bindgen.default_scenario();
        const v = s.supply.v_ll_rms_v;
        const xs = Array.from({ length: 40 }, (_, i) => v * (0.9 + (0.2 * i) / 39));
        const json = JSON.stringify(s);
        const par = await RectifieldSweep.run(json, "supply.v_ll_rms_v", xs);
        const run = new wasm_bindgen.SweepRun(json, "supply.v_ll_rms_v");
        const one = xs.map((x) => run.point(x));
        run.free();
        let worst = 0;
        let where = "";
        let missing = 0;
        for (let i = 0; i < xs.length; i++) {
          const a = par.points[i] && par.points[i].summary;
          const b = one[i].summary;
          if (!a || !b) {
            missing += 1;
            continue;
          }
          for (const k of Object.keys(b)) {
            if (typeof b[k] !== "number") continue;
            const d = Math.abs(a[k] - b[k]) / Math.max(Math.abs(b[k]), 1e-9);
            if (d > worst) [worst, where] = [d, `${k} at point ${i}`];
          }
        }
        const first = JSON.stringify(par.points[0]) === JSON.stringify(one[0]);
        return { workers: par.workers, n: par.points.length, missing, worst, where, first };
      });
      assert.ok(r.workers >= 1, `the sweep ran on the page's thread (workers ${r.workers})`);
      assert.equal(r.n, 40);
      assert.equal(r.missing, 0, "every point solved");
      assert.ok(r.worst <= 2e-4, `worst relative difference ${r.worst} (${r.where})`);
      assert.ok(r.first, "the first point, cold in both, is the same to the bit");
    });

    test("save and open restore every field", async () => {
      let n = await computed();
      await page.select("#examples", "plating_rectifier");
      await waitRecomputed(n);
      await page.click("#fold-unbalance summary").catch(() => {});
      await page.$eval("#fold-unbalance", (d) => (d.open = true));
      n = await typeInto("h5_pct", "2.5");
      await waitRecomputed(n);
      n = await typeInto("ang_c", "-4");
      await waitRecomputed(n);
      n = await typeInto("case_name", "Bath 3 <script>alert(1)</script>");
      await waitRecomputed(n);
      const before = await formState();
      await captureDownloads();
      await page.click("#save_case");
      await page.waitForFunction(() => window.__saved.length > 0);
      const saved = await page.evaluate(() => window.__saved[0]);
      assert.deepEqual(JSON.parse(saved).supply.harmonics.find((h) => h.order === 5).magnitude_pct, 2.5);
      n = await computed();
      await page.click("#new_case");
      await waitRecomputed(n);
      assert.notDeepEqual(await formState(), before);
      n = await openCaseFile(saved, "bath.rectifield.json");
      await waitRecomputed(n);
      assert.deepEqual(await formState(), before);
      assert.equal(await page.$$eval("#inputs script, #sections script", (x) => x.length), 0);
    });

    test("a share link restores every field in a new tab", async () => {
      const before = await formState();
      await page.click("#share_case");
      const link = await page.$eval("#share-link", (e) => e.value);
      assert.ok(link.startsWith(pathToFileURL(INDEX).href + "#scenario="), link.slice(0, 80));
      const tab = await browser.newPage();
      try {
        tab.on("console", (msg) => {
          if (msg.type() === "error") problems.push(`console error (link tab): ${msg.text()}`);
        });
        await tab.goto(link, { waitUntil: "load" });
        await tab.waitForSelector('#results[data-state="current"]');
        assert.deepEqual(await formState(tab), before);
        assert.match(await tab.$eval("#case-msg", (e) => e.textContent), /from the link/);
        // a damaged link leaves the page working, with a notice
        await tab.goto(pathToFileURL(INDEX).href + "#scenario=%%%broken", { waitUntil: "load" });
        await tab.reload({ waitUntil: "load" });
        await tab.waitForSelector('#results[data-state="current"]');
        assert.match(await tab.$eval("#case-msg", (e) => e.textContent), /could not be opened/);
      } finally {
        await tab.close();
      }
    });

    test("the last session comes back after a reload, typed text included", async () => {
      await typeInto("f_hz", "5x0");
      await page.waitForSelector('#results[data-state="stale"]');
      const before = await formState();
      await page.reload({ waitUntil: "load" });
      await page.waitForSelector("#f_hz-msg:not(:empty)");
      assert.deepEqual(await formState(), before);
      assert.equal(await page.$eval("#f_hz", (e) => e.value), "5x0");
      const n = await typeInto("f_hz", "50");
      await waitRecomputed(n);
    });

    test("corrupt storage is ignored with a notice", async () => {
      await page.evaluate(() => localStorage.setItem("rectifield.session", "{not json"));
      await page.reload({ waitUntil: "load" });
      await page.waitForSelector('#results[data-state="current"]');
      assert.match(await page.$eval("#case-msg", (e) => e.textContent), /could not be used/);
      assert.equal(await page.$eval("#v_ll_rms_v", (e) => e.value), "400", "default case");
      await page.evaluate(() => localStorage.setItem("rectifield.session", JSON.stringify({ store_version: 1, scenario: { supply: { v_ll_rms_v: "x" } } })));
      await page.reload({ waitUntil: "load" });
      await page.waitForSelector('#results[data-state="current"]');
      assert.match(await page.$eval("#case-msg", (e) => e.textContent), /could not be used.*supply\.v_ll_rms_v/);
    });

    test("hostile, broken and oversized files leave the work untouched", async () => {
      let n = await typeInto("v_ll_rms_v", "415");
      await waitRecomputed(n);
      const before = await formState();
      const cases = [
        ['{"supply": {"v_ll_rms_v": 48', "truncated.json", /not valid JSON/],
        [JSON.stringify({ schema_version: 99 }), "future.json", /schema_version/],
        [JSON.stringify({ supply: { volts: 400 } }), "unknown.json", /volts/],
        ["[1,2,3]", "array.json", /object/],
        ["x".repeat(1100000), "huge.json", /larger than 1 MB/],
      ];
      for (const [text, name, re] of cases) {
        await openCaseFile(text, name);
        await page.waitForFunction((nm) => document.querySelector("#case-msg").textContent.startsWith(nm), {}, name);
        assert.match(await page.$eval("#case-msg", (e) => e.textContent), re, name);
        assert.deepEqual(await formState(), before, `${name} changed the form`);
      }
      n = await openCaseFile({ name: '<img src=x onerror="window.__pwned=1">', notes: "<script>window.__pwned=2</script>" }, "hostile.json");
      await waitRecomputed(n);
      assert.equal(await page.$eval("#case_name", (e) => e.value), '<img src=x onerror="window.__pwned=1">');
      assert.equal(await page.$$eval("img", (x) => x.length), 0);
      assert.equal(await page.evaluate(() => window.__pwned), undefined);
    });

    test("an engine failure is reported and the inputs are kept", async () => {
      await page.evaluate(() => {
        window.__analyze = wasm_bindgen.analyze_json;
        wasm_bindgen.analyze_json = () => {
          throw new WebAssembly.RuntimeError("unreachable");
        };
      });
      await typeInto("v_ll_rms_v", "433");
      await page.waitForSelector("#engine-failure:not([hidden])");
      assert.match(await page.$eval("#engine-failure", (e) => e.textContent), /inputs are kept/);
      assert.equal(await page.$eval("#v_ll_rms_v", (e) => e.value), "433");
      assert.equal(await page.$eval("#results", (e) => e.getAttribute("data-state")), "stale");
      await page.evaluate(() => (wasm_bindgen.analyze_json = window.__analyze));
      const n = await typeInto("v_ll_rms_v", "400");
      await waitRecomputed(n);
      assert.equal(await page.$eval("#engine-failure", (e) => e.hidden), true);
    });

    test("dark theme", async () => {
      await page.click("#theme");
      assert.equal(await page.evaluate(() => document.documentElement.getAttribute("data-theme")), "dark");
      await page.waitForSelector("#plot-waves canvas");
      await page.evaluate(() => window.scrollTo(0, 0));
      await shot("dark");
      await page.click("#theme");
      assert.equal(await page.evaluate(() => document.documentElement.getAttribute("data-theme")), "light");
    });

    test("the print report renders (print media)", { skip: b.name !== "chromium" && "media emulation needs CDP, Chromium only" }, async () => {
      await page.emulateMediaType("print");
      try {
        assert.equal(await page.$eval("#inputs", (e) => getComputedStyle(e).display), "none");
        assert.notEqual(await page.$eval(".print-head", (e) => getComputedStyle(e).display), "none");
        assert.match(await page.$eval(".print-head", (e) => e.textContent), /version \d+\.\d+\.\d+ · \d{4}-\d\d-\d\d/);
        assert.notEqual(await page.$eval("#out-inputs", (e) => getComputedStyle(e).display), "none");
        assert.ok((await page.$$eval("#print-inputs tr", (r) => r.length)) > 10, "inputs listed");
        // Each plot drawn for print carries its own title, and no legend prints
        // a read-out placeholder (no cursor on paper).
        await page.evaluate(() => window.dispatchEvent(new Event("beforeprint")));
        const titles = await page.$$eval(".tabpanel .plot-title", (h) => h.filter((e) => getComputedStyle(e).display !== "none").map((e) => e.textContent));
        assert.ok(titles.includes("Waveforms (periodic steady state)") && titles.includes("Line-current spectrum"), `plot titles: ${titles}`);
        assert.equal(new Set(titles).size, titles.length, `plot titles repeat: ${titles}`);
        const legendText = await page.$$eval(".plot .u-legend", (ls) => ls.map((l) => l.innerText).join(" "));
        assert.ok(legendText.length > 0, "legends printed");
        assert.doesNotMatch(legendText, /\u2014/, "a legend prints a placeholder value");
        await page.evaluate(() => window.dispatchEvent(new Event("afterprint")));
        assert.notEqual(await page.$eval("#safety", (e) => getComputedStyle(e).display), "none");
        await page.evaluate(() => window.scrollTo(0, 0));
        await shot("print");
      } finally {
        await page.emulateMediaType(null);
      }
    });

    test("portrait tablet layout: one column, nothing wider than the screen", async () => {
      await page.setViewport({ width: 800, height: 1280 });
      try {
        await page.evaluate(() => window.scrollTo(0, 0));
        const wide = await page.evaluate(() => document.documentElement.scrollWidth);
        assert.ok(wide <= 800, `page scrolls sideways: ${wide} px`);
        await shot("portrait");
      } finally {
        await page.setViewport({ width: 1180, height: 900 });
      }
    });

    test("no console errors and no network requests", () => {
      assert.deepEqual(problems, []);
    });
  });
}
