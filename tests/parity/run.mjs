// Same numbers everywhere: every built-in example through the native CLI
// (`rectifield solve FILE --json`) and through the wasm build in dist/ (the
// same no-modules glue and embedded bytes the page loads), compared field by
// field.  Exits non-zero on any difference beyond floating-point noise.
//
// Usage: node tests/parity/run.mjs [path/to/rectifield]   (after ./build.sh)
import { readFileSync, readdirSync } from 'node:fs';
import { execFileSync } from 'node:child_process';
import vm from 'node:vm';
import { gunzipSync } from 'node:zlib';
import path from 'node:path';
import { fileURLToPath } from 'node:url';

const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../..');
const cli = process.argv[2] || path.join(root, 'target/release/rectifield');
const dist = path.join(root, 'dist');

// Load the page's engine scripts into a sandbox, as a classic-script page would:
// dist/index.html is one self-contained file, so they are taken from its inline
// <script> elements (tools/dist-extras.mjs marks each with its file name).
const html = readFileSync(path.join(dist, 'index.html'), 'utf8');
const ctx = vm.createContext({ console, TextDecoder, TextEncoder, WebAssembly, URL, Uint8Array, Float64Array });
for (const f of ['rectifield_wasm.js', 'rectifield_glue.js']) {
  const head = `<script>/* ${f} */\n`;
  const at = html.indexOf(head);
  if (at < 0) throw new Error(`dist/index.html has no inline ${f}`);
  const end = html.indexOf('\n</script>', at + head.length);
  vm.runInContext(html.slice(at + head.length, end), ctx, { filename: f });
}
vm.runInContext('this.__wb = wasm_bindgen; this.__b64 = RECTIFIELD_WASM_GZIP_BASE64;', ctx);
// The page inflates the gzipped engine with DecompressionStream; here zlib does.
ctx.__bytes = new Uint8Array(gunzipSync(Buffer.from(ctx.__b64, 'base64')));
// The init object must come from the sandbox's own realm (the glue checks its prototype).
await vm.runInContext('__wb({ module_or_path: __bytes })', ctx);
const wb = ctx.__wb;

// Relative tolerance: native and wasm use different sin/cos/exp libraries, so
// the last bits differ; iterated solves can grow that to ~1e-10.
const REL = 1e-7;
const ABS = 1e-9;
// Extremes (a waveform's min, max, peak or peak to peak, and what is built
// from them) are 1e-6: the settling windows of the leakage modes after a
// switching (DEVELOPERS.md, engine section) choose how far to carry a value
// back by comparing estimates against a threshold, and the last bits that
// differ between the two builds can tip that choice; measured 2.5e-7 at most
// on the examples (2026-12-03), far inside the extremes' own grid accuracy.
const REL_EXTREME = 1e-6;
const EXTREMES = new Set(['min', 'max', 'v_max_v', 'v_min_v', 'ripple_pp_v', 'i_peak_a', 'device_peak_a',
  'choke_i_peak_a', 'reactor_i_peak_a', 'v_forward_block_peak_v', 'v_reverse_peak_v', 'worst_device_voltage_v']);
let compared = 0;
let failures = [];

// `floor`: the size of the largest sibling value (an array's elements, or a
// harmonic table's magnitudes), so that noise-level entries (a harmonic at
// 1e-12 of its signal, or its phase) are compared against their table's
// scale, not their own.
function cmp(a, b, where, floor = 0) {
  if (typeof a === 'number' || typeof b === 'number') {
    compared++;
    if (a === null || b === null || a === undefined || b === undefined) {
      if (a !== b) failures.push(`${where}: ${a} vs ${b}`);
      return;
    }
    const scale = Math.max(Math.abs(a), Math.abs(b), floor);
    const rel = EXTREMES.has(where.slice(where.lastIndexOf('.') + 1)) ? REL_EXTREME : REL;
    if (!(Math.abs(a - b) <= ABS + rel * scale)) failures.push(`${where}: native ${a} wasm ${b}`);
    return;
  }
  if (Array.isArray(a) || Array.isArray(b)) {
    if (!Array.isArray(a) || !Array.isArray(b) || a.length !== b.length) {
      failures.push(`${where}: array length ${a && a.length} vs ${b && b.length}`);
      return;
    }
    const nums = a.filter((x) => typeof x === 'number');
    const f = nums.length ? Math.max(...nums.map(Math.abs)) : 0;
    // Harmonic tables: a phase is meaningful only where the magnitude is.
    const mags = a.map((x) => (x && typeof x === 'object' && typeof x.rms === 'number' ? x.rms : null));
    const magMax = Math.max(0, ...mags.filter((m) => m !== null));
    a.forEach((x, i) => {
      if (mags[i] !== null && magMax > 0 && mags[i] < 1e-6 * magMax) {
        // Noise-level harmonic: compare its magnitude against the table's scale only.
        cmp(x.rms, b[i] && b[i].rms, `${where}[${i}].rms`, magMax);
        return;
      }
      if (mags[i] !== null && magMax > 0 && typeof x.phase_deg === 'number') {
        // A small harmonic's phase is only as good as its magnitude against
        // the table: tolerance REL * magMax / rms radians.
        cmp(x.rms, b[i] && b[i].rms, `${where}[${i}].rms`, magMax);
        compared++;
        const tol = Math.max(1e-6, (REL * magMax / Math.max(mags[i], 1e-300)) * 180 / Math.PI);
        let d = Math.abs(x.phase_deg - b[i].phase_deg) % 360;
        d = Math.min(d, 360 - d);
        if (!(d <= tol)) failures.push(`${where}[${i}].phase_deg: native ${x.phase_deg} wasm ${b[i].phase_deg}`);
        for (const k of Object.keys(x)) if (k !== 'rms' && k !== 'phase_deg') cmp(x[k], b[i][k], `${where}[${i}].${k}`, 0);
        return;
      }
      cmp(x, b[i], `${where}[${i}]`, f);
    });
    return;
  }
  if (a && typeof a === 'object') {
    const keys = new Set([...Object.keys(a), ...Object.keys(b || {})]);
    // A signal's mean, rms, min and max share the signal's scale.
    const sigFloor = ['min', 'max', 'rms'].every((k) => typeof a[k] === 'number')
      ? Math.max(Math.abs(a.min), Math.abs(a.max), Math.abs(a.rms)) : 0;
    for (const k of keys) {
      if (k === 'version') continue;
      const f = ['mean', 'rms', 'min', 'max'].includes(k) ? sigFloor : 0;
      cmp(a[k], b ? b[k] : undefined, `${where}.${k}`, f);
    }
    return;
  }
  // serde writes None as null natively and as undefined through the binding.
  if ((a === null || a === undefined) && (b === null || b === undefined)) return;
  if (a !== b) failures.push(`${where}: ${JSON.stringify(a)} vs ${JSON.stringify(b)}`);
}

const dir = path.join(root, 'docs/examples');
const files = readdirSync(dir).filter((f) => f.endsWith('.json')).sort();
if (files.length === 0) throw new Error('no examples in docs/examples');
for (const f of files) {
  const text = readFileSync(path.join(dir, f), 'utf8');
  const native = JSON.parse(execFileSync(cli, ['solve', path.join(dir, f), '--json'], { maxBuffer: 1 << 28 }).toString());
  const wasm = wb.analyze_json(text);
  const flat = wb.waveforms();
  // Put the waveforms back where the native JSON has them.
  if (wasm.sim) {
    const n = native.sim.t_s.length;
    wasm.sim.t_s = Array.from(flat.subarray(0, n));
    wasm.sim.signals.forEach((s, i) => { s.samples = Array.from(flat.subarray((i + 1) * n, (i + 2) * n)); });
  }
  const before = compared;
  const fails = failures.length;
  cmp(native, JSON.parse(JSON.stringify(wasm)), f.replace('.json', ''));
  console.log(`${f}: ${compared - before} numbers compared, ${failures.length - fails} differ`);
}
if (failures.length) {
  console.log(failures.slice(0, 40).join('\n'));
  console.log(`parity: FAILED, ${failures.length} differences in ${compared} numbers`);
  process.exit(1);
}
console.log(`parity: ${files.length} examples, ${compared} numbers, native and wasm agree within ${REL} relative (extremes ${REL_EXTREME})`);
