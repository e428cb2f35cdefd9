// Plots for the page, drawn by uPlot (vendored into dist/vendor/ by build.sh;
// see DEVELOPERS.md): axes with units and SI prefixes, grid, legend with the
// cursor readout (mouse and touch), drag-to-zoom and buttons to zoom and pan
// the x axis, export as PNG and CSV.  A classic script: defines
// globalThis.RectifieldPlot.
"use strict";

(function (root) {
  const U = () => root.RectifieldUnits;

  function css(name, fallback) {
    const v = getComputedStyle(document.documentElement).getPropertyValue(name).trim();
    return v || fallback;
  }

  function download(filename, blob) {
    const a = document.createElement("a");
    a.download = filename;
    a.href = URL.createObjectURL(blob);
    document.body.appendChild(a);
    a.click();
    a.remove();
    setTimeout(() => URL.revokeObjectURL(a.href), 10000);
  }

  function button(text, title, onClick) {
    const b = document.createElement("button");
    b.type = "button";
    b.className = "tool";
    b.textContent = text;
    b.title = title;
    b.setAttribute("aria-label", title);
    b.addEventListener("click", onClick);
    return b;
  }

  // Markers only where the points in view are at least 12 px apart (a
  // 2000-point sweep would draw a thick line of dots; zoomed in they appear).
  function markersShow(u) {
    const idxs = u.series[0].idxs;
    if (!idxs || idxs[1] <= idxs[0]) return true;
    const xd = u.data[0];
    const dim = Math.abs(u.valToPos(xd[idxs[1]], "x", true) - u.valToPos(xd[idxs[0]], "x", true));
    return idxs[1] - idxs[0] <= dim / (12 * (root.devicePixelRatio || 1));
  }

  /**
   * Make a plot in `host` (emptied first).
   * spec: { title, name (file stem), x: {label, unit, values, csv},
   *         series: [{label, unit, values, color, dash, width, bars, scale, markers, csv}],
   *         height, yLabels: {scaleKey: text}, xIsOrder: bool,
   *         csv: {comments: [text], digits, notes: {label, values}} }
   * Series with the same `scale` share a y axis (first two scales get axes).
   * `markers`: a dot at each data point (for coarse data such as a sweep).
   * CSV export (all optional): `x.csv` / a series' `csv` = {unit, scale}
   * writes that column as value / scale under that unit (the plot keeps SI
   * values for its prefixed axes, a file is read in the units the user
   * works in); `csv.digits` rounds every number to that many significant
   * digits (no float noise such as 0.0020000000000000005); `csv.comments`
   * are written first, each as a line starting "# "; `csv.notes` is a last,
   * text column (e.g. why a point has no value).
   */
  function create(host, spec) {
    host.replaceChildren();
    host.classList.add("plot");
    // The plot's own title, shown in print only (on screen the tab names it):
    // first in its tab panel, above any figures that go with the plot.
    const panel = host.closest(".tabpanel") || host.parentNode;
    if (panel) {
      for (const old of panel.querySelectorAll(":scope > .plot-title")) old.remove();
      const h = document.createElement("h3");
      h.className = "plot-title print-only";
      h.textContent = spec.title || "";
      panel.prepend(h);
    }
    const ink = css("--ink", "#141414");
    const grid = css("--grid", "#d9d6cc");
    const fmt = (v, unit, sig) => U().formatEng(v, unit, sig);

    const scales = [];
    for (const s of spec.series) if (!scales.includes(s.scale)) scales.push(s.scale);
    const xUnit = spec.x.unit || "";
    const axes = [
      {
        stroke: ink,
        grid: { stroke: grid, width: 1 },
        ticks: { stroke: grid },
        label: spec.x.label,
        labelSize: 22,
        font: "13px system-ui, sans-serif",
        labelFont: "600 13px system-ui, sans-serif",
        values: spec.xIsOrder
          ? (u, vals) => vals.map((v) => (Number.isInteger(v) ? String(v) : ""))
          : (u, vals) => vals.map((v) => fmt(v, xUnit, 3)),
      },
    ];
    scales.slice(0, 2).forEach((key, i) => {
      const unit = (spec.series.find((s) => s.scale === key) || {}).unit || "";
      axes.push({
        scale: key,
        side: i === 0 ? 3 : 1,
        stroke: ink,
        grid: { show: i === 0, stroke: grid, width: 1 },
        ticks: { stroke: grid },
        label: (spec.yLabels && spec.yLabels[key]) || unit,
        labelSize: 22,
        size: 64,
        font: "13px system-ui, sans-serif",
        labelFont: "600 13px system-ui, sans-serif",
        values: (u, vals) => vals.map((v) => fmt(v, unit, 3)),
      });
    });

    const uScales = { x: { time: false } };
    for (const key of scales) uScales[key] = { auto: true };
    if (spec.yMin0) for (const key of scales) uScales[key] = { auto: true, range: (u, mn, mx) => [0, mx > 0 ? mx * 1.08 : 1] };

    const series = [
      {
        label: spec.x.label,
        value: (u, v) => (v === null || v === undefined ? "\u2014" : spec.xIsOrder ? String(v) : fmt(v, xUnit, 4)),
      },
    ];
    for (const s of spec.series) {
      const o = {
        label: s.label,
        scale: s.scale,
        stroke: s.color,
        width: s.width || 1.75,
        value: (u, v) => (v === null || v === undefined ? "\u2014" : fmt(v, s.unit, 4)),
        points: s.markers ? { show: markersShow, size: 7, width: 1, stroke: s.color, fill: s.color } : { show: false },
      };
      if (s.dash) o.dash = s.dash;
      if (s.bars) {
        o.paths = root.uPlot.paths.bars({ size: [0.6, 36], align: 0 });
        o.fill = s.color;
        o.width = 0;
      }
      if (s.limitTicks) {
        // a short level line at each order: the limit of that harmonic
        o.paths = (u, si, i0, i1) => {
          const p = new Path2D();
          const xd = u.data[0];
          const yd = u.data[si];
          const step = xd.length > 1 ? Math.abs(u.valToPos(xd[1], "x", true) - u.valToPos(xd[0], "x", true)) : 20;
          const half = Math.max(4, step * 0.42);
          for (let i = i0; i <= i1; i++) {
            if (yd[i] === null || yd[i] === undefined) continue;
            const cx = u.valToPos(xd[i], "x", true);
            const cy = u.valToPos(yd[i], s.scale, true);
            p.moveTo(cx - half, cy);
            p.lineTo(cx + half, cy);
          }
          return { stroke: p, fill: null, clip: null, band: null, gaps: null, flags: 0 };
        };
      }
      if (s.stepped) o.paths = root.uPlot.paths.stepped({ align: 0, extend: true });
      series.push(o);
    }

    const bar = document.createElement("div");
    bar.className = "plot-tools";
    const chart = document.createElement("div");
    chart.className = "plot-chart";
    host.appendChild(bar);
    host.appendChild(chart);

    const data = [spec.x.values, ...spec.series.map((s) => s.values)];
    const width = Math.max(280, Math.floor(host.clientWidth || 640));
    const height = spec.height || 300;
    const xs = spec.x.values;
    const full = [xs[0], xs[xs.length - 1]];
    const opts = {
      width,
      height,
      scales: uScales,
      axes,
      series,
      legend: { live: true },
      cursor: { drag: { x: true, y: false, setScale: true }, points: { size: 7 } },
    };
    const u = new root.uPlot(opts, data, chart);
    chart.querySelector("canvas").setAttribute("role", "img");
    chart.querySelector("canvas").setAttribute("aria-label", spec.title || "plot");

    // Touch: the readout follows a finger (uPlot's own cursor follows the mouse).
    const over = u.over;
    const touch = (ev) => {
      const t = ev.touches && ev.touches[0];
      if (!t) return;
      const r = over.getBoundingClientRect();
      u.setCursor({ left: t.clientX - r.left, top: t.clientY - r.top });
      ev.preventDefault();
    };
    over.addEventListener("touchstart", touch, { passive: false });
    over.addEventListener("touchmove", touch, { passive: false });
    // Double-click (or the reset button) shows everything again.
    over.addEventListener("dblclick", () => reset());

    function curX() {
      return [u.scales.x.min, u.scales.x.max];
    }
    function setX(a, b) {
      const lo = Math.max(full[0], Math.min(a, b));
      const hi = Math.min(full[1], Math.max(a, b));
      if (hi > lo) u.setScale("x", { min: lo, max: hi });
    }
    function zoom(f) {
      const [a, b] = curX();
      const c = (a + b) / 2;
      const h = ((b - a) / 2) * f;
      setX(c - h, c + h);
    }
    function pan(frac) {
      const [a, b] = curX();
      let d = (b - a) * frac;
      if (a + d < full[0]) d = full[0] - a;
      if (b + d > full[1]) d = full[1] - b;
      u.setScale("x", { min: a + d, max: b + d });
    }
    function reset() {
      u.setScale("x", { min: full[0], max: full[1] });
    }

    function toPNG() {
      const src = u.ctx.canvas;
      const pad = 36;
      const c = document.createElement("canvas");
      c.width = src.width;
      c.height = src.height + pad;
      const g = c.getContext("2d");
      g.fillStyle = css("--card", "#ffffff");
      g.fillRect(0, 0, c.width, c.height);
      g.fillStyle = ink;
      g.font = `600 ${Math.round(16 * (src.width / width))}px system-ui, sans-serif`;
      g.fillText((spec.title || "") + "  \u2014  " + spec.series.map((s) => s.label).join(", "), 10, 24);
      g.drawImage(src, 0, pad);
      c.toBlob((blob) => blob && download((spec.name || "plot") + ".png", blob), "image/png");
    }

    function csvText() {
      const opt = spec.csv || {};
      // each column: its header, unit and divisor in the file
      const cols = [
        { label: spec.x.label, unit: xUnit, ...(spec.x.csv || {}) },
        ...spec.series.map((s) => ({ label: s.label, unit: s.unit, ...(s.csv || {}) })),
      ];
      const head = cols.map((c) => `${c.label}${c.unit ? " (" + c.unit + ")" : ""}`);
      const notes = opt.notes && opt.notes.values ? opt.notes : null;
      if (notes) head.push(notes.label || "Note");
      const q = (t) => (/[",\r\n]/.test(t) ? '"' + t.replace(/"/g, '""') + '"' : t);
      const num = (v, c) => {
        if (v === null || v === undefined || !Number.isFinite(v)) return "";
        const w = c.scale ? v / c.scale : v;
        return String(opt.digits ? Number(w.toPrecision(opt.digits)) : w);
      };
      const lines = (opt.comments || []).map((t) => "# " + String(t).replace(/[\r\n]+/g, " "));
      lines.push(head.map(q).join(","));
      for (let i = 0; i < xs.length; i++) {
        const row = data.map((col, k) => num(col[i], cols[k]));
        if (notes) row.push(q(notes.values[i] ? String(notes.values[i]) : ""));
        lines.push(row.join(","));
      }
      return lines.join("\n") + "\n";
    }

    function toCSV() {
      download((spec.name || "plot") + ".csv", new Blob([csvText()], { type: "text/csv" }));
    }

    if (!spec.xIsOrder) {
      // named after the plot's own x axis ("time", "bus capacitance", ...);
      // a label's first letter is lowered unless it starts an abbreviation (X/R, RMS)
      const xl = String(spec.x.label || "x");
      const axis = (/^[A-Z][a-z]/.test(xl) ? xl[0].toLowerCase() + xl.slice(1) : xl) + " axis";
      bar.appendChild(button("+", `Zoom in along the ${axis}`, () => zoom(0.5)));
      bar.appendChild(button("\u2212", `Zoom out along the ${axis}`, () => zoom(2)));
      bar.appendChild(button("\u25c0", `Pan left along the ${axis}`, () => pan(-0.25)));
      bar.appendChild(button("\u25b6", `Pan right along the ${axis}`, () => pan(0.25)));
      bar.appendChild(button("Reset", `Show the whole ${axis}`, reset));
    }
    const hint = document.createElement("span");
    hint.className = "plot-hint";
    hint.textContent = spec.xIsOrder ? "Touch or hover for values." : "Drag across the plot to zoom; touch or hover for values.";
    bar.appendChild(hint);
    bar.appendChild(button("PNG", "Export this plot as a PNG image", toPNG));
    bar.appendChild(button("CSV", "Export this plot's data as CSV", toCSV));

    let ro = null;
    if (root.ResizeObserver) {
      ro = new ResizeObserver(() => {
        const w = Math.max(280, Math.floor(host.clientWidth));
        if (Math.abs(w - u.width) > 4) u.setSize({ width: w, height });
      });
      ro.observe(host);
    }

    return {
      u,
      zoom,
      pan,
      reset,
      csvText,
      toPNG,
      toCSV,
      destroy() {
        if (ro) ro.disconnect();
        u.destroy();
      },
    };
  }

  root.RectifieldPlot = { create, download };
})(globalThis);
