// Shared launch settings for the e2e tests (Debian's Chromium and Firefox).
import fs from "node:fs";
import os from "node:os";
import path from "node:path";
import puppeteer from "puppeteer-core";

// How long a browser may take to start (puppeteer's default is 30 s).  The
// test files run side by side, so several browsers start at once on this
// 2-core machine: on 2026-12-03 a fresh-clone `./build.sh test` had Firefox
// not ready after 30 s once, and its whole suite was cancelled.
const LAUNCH_TIMEOUT_MS = 120000;

export const BROWSERS = [
  {
    name: "chromium",
    exe: process.env.CHROMIUM_BIN || "/usr/bin/chromium",
    launch: (exe, profile) =>
      puppeteer.launch({
        browser: "chrome",
        executablePath: exe,
        timeout: LAUNCH_TIMEOUT_MS,
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
          // the address bar pop-up's renderer, preloaded per browser context
          // (about a second of CPU each; bench/wasm.mjs says more)
          "--disable-features=PreloadTopChromeWebUI,WebUIOmniboxPopup,WebUIOmniboxFullPopup,WebUIOmniboxAimPopup",
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
        timeout: LAUNCH_TIMEOUT_MS,
        headless: true,
        userDataDir: profile,
        // puppeteer relaxes this by default; with it relaxed a file:// page that
        // would be broken for a real user (blocked sibling scripts) passes.
        extraPrefsFirefox: { "security.fileuri.strict_origin_policy": true },
      }),
  },
];

// A fresh browser (its own profile directory) and a page with the test
// timeout and viewport set, its console errors and page errors pushed to
// `problems` (the test files assert the list stays empty).
export async function openPage(b, { prefix, viewport, timeout, problems }) {
  const profile = fs.mkdtempSync(path.join(os.tmpdir(), `${prefix}-${b.name}-`));
  const browser = await b.launch(b.exe, profile);
  const page = await browser.newPage();
  page.setDefaultTimeout(timeout);
  await page.setViewport(viewport);
  page.on("console", (msg) => {
    if (msg.type() === "error") problems.push(`console error: ${msg.text()}`);
  });
  page.on("pageerror", (err) => problems.push(`page error: ${err.message || err}`));
  return { browser, page, profile };
}
