// Vendors uPlot into the staged page (run by build.sh):
//
//   node tools/vendor-uplot.mjs UPLOT_PACKAGE_DIR OUT_FILE
//
// uPlot builds two Intl formatters when its script runs (a number formatter
// for its default value labels and the local time zone for time scales).
// The first Intl object of a page starts the browser's ICU data: measured
// 35 to 80 ms in headless Chromium 156 on a slow 2-core host (2026-12-03),
// on the way to the page's first result.  Our plots give every axis and
// series their own formatters and use no time scale, so the two are made
// lazy: built on first use, which this page never makes.  Nothing else
// changes.  The readable source (dist/uPlot.iife.js of the pinned package)
// is patched by exact text, each patch found exactly once or the build
// stops (a new uPlot version must be looked at), then minified by terser.
import fs from "node:fs";
import path from "node:path";
import { execFileSync } from "node:child_process";

const [pkg, out] = process.argv.slice(2);
const die = (m) => {
  console.error(`vendor-uplot: ${m}`);
  process.exit(1);
};
if (!pkg || !out) die("usage: node tools/vendor-uplot.mjs UPLOT_PACKAGE_DIR OUT_FILE");

const PATCHES = [
  [
    "\tconst numFormatter = new Intl.NumberFormat(domEnv ? nav.language : 'en-US');\n\tconst fmtNum = val => numFormatter.format(val);\n",
    "\tlet numFormatter = null;\n\tconst fmtNum = val => (numFormatter || (numFormatter = new Intl.NumberFormat(domEnv ? nav.language : 'en-US'))).format(val);\n",
  ],
  [
    "\tconst localTz = new Intl.DateTimeFormat().resolvedOptions().timeZone;\n",
    "\tlet localTz = null;\n",
  ],
  [
    "\t\telse if (tz == localTz)\n",
    "\t\telse if (tz == (localTz || (localTz = new Intl.DateTimeFormat().resolvedOptions().timeZone)))\n",
  ],
];

let src = fs.readFileSync(path.join(pkg, "dist", "uPlot.iife.js"), "utf8");
// The two formatters are used nowhere but in the patched lines.
for (const name of ["numFormatter", "localTz"]) {
  const n = src.split(new RegExp(`\\b${name}\\b`)).length - 1;
  if (n !== 2) die(`expected ${name} twice in uPlot.iife.js (made and used once), found it ${n} times`);
}
for (const [from, to] of PATCHES) {
  const n = src.split(from).length - 1;
  if (n !== 1) die(`expected the text ${JSON.stringify(from)} once in uPlot.iife.js, found it ${n} times`);
  src = src.replace(from, () => to);
}
const tmp = out + ".src.js";
fs.writeFileSync(tmp, src);
const version = JSON.parse(fs.readFileSync(path.join(pkg, "package.json"), "utf8")).version;
const min = execFileSync(
  path.join("node_modules", ".bin", "terser"),
  [tmp, "--compress", "--mangle", "--comments", "false"],
  { encoding: "utf8", maxBuffer: 1 << 26 },
);
fs.unlinkSync(tmp);
fs.writeFileSync(out, `/*! https://github.com/leeoniya/uPlot (v${version}), its Intl formatters made lazy by tools/vendor-uplot.mjs */\n${min}`);
