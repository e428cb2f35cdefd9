// Shared launch settings for the e2e tests (Debian's Chromium and Firefox).
import puppeteer from "puppeteer-core";

export const BROWSERS = [
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
