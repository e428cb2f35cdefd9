// The schematic of the chosen circuit, drawn as SVG from the scenario: the
// three-phase source, its impedance, the point of common coupling, the line
// reactor, the bridge (six-pulse, three-pulse midpoint, or two six-pulse
// bridges on star and delta secondaries), the DC choke, precharge, capacitor,
// bleed resistor and the load.  A lost phase and an open device are drawn as
// such.  All text goes in through textContent.  Defines
// globalThis.RectifieldSchematic.
"use strict";

(function (root) {
  const NS = "http://www.w3.org/2000/svg";
  const eng = (v, u) => root.RectifieldUnits.formatEng(v, u, 3);

  function svg(tag, attrs, text) {
    const e = document.createElementNS(NS, tag);
    for (const [k, v] of Object.entries(attrs || {})) e.setAttribute(k, String(v));
    if (text !== undefined) e.textContent = text;
    return e;
  }

  function draw(host, s) {
    const W = 980;
    const H = 330;
    const g = svg("svg", { viewBox: `0 0 ${W} ${H}`, class: "schematic", role: "img" });
    const title = svg("title", {}, describe(s));
    g.appendChild(title);
    const add = (tag, attrs, text) => {
      const e = svg(tag, attrs, text);
      g.appendChild(e);
      return e;
    };
    const wire = (d, cls) => add("path", { d, class: cls || "w" });
    const label = (x, y, t, cls, anchor) => add("text", { x, y, class: cls || "lbl", "text-anchor": anchor || "middle" }, t);

    // horizontal inductor (humps) from x to x+40 at y
    const coilH = (x, y, n) => {
      const k = n || 4;
      const w = 40 / k;
      let d = `M${x} ${y}`;
      for (let i = 0; i < k; i++) d += ` a${w / 2} ${w / 2} 0 0 1 ${w} 0`;
      wire(d, "w part");
    };
    // vertical resistor (zigzag) from y to y+40 at x
    const resV = (x, y) => {
      let d = `M${x} ${y} l0 6`;
      for (let i = 0; i < 6; i++) d += ` l${i % 2 ? -7 : 7} 2.5 l${i % 2 ? 7 : -7} 2.5`;
      d += " l0 4";
      wire(d, "w part");
    };
    const resH = (x, y) => {
      let d = `M${x} ${y} l6 0`;
      for (let i = 0; i < 6; i++) d += ` l2.5 ${i % 2 ? -7 : 7} l2.5 ${i % 2 ? 7 : -7}`;
      d += " l4 0";
      wire(d, "w part");
    };
    // a device conducting upwards (anode below), centred at (x, y); thyristor adds a gate
    const device = (x, y, name, thy, open) => {
      const cls = open ? "dev open" : "dev";
      add("path", { d: `M${x - 9} ${y + 7} L${x + 9} ${y + 7} L${x} ${y - 7} Z`, class: cls });
      add("path", { d: `M${x - 10} ${y - 7} L${x + 10} ${y - 7}`, class: cls });
      if (thy) add("path", { d: `M${x + 4} ${y - 4} l10 8 l6 0`, class: cls + " gate" });
      label(x - 14, y + 4, name, "dev-lbl", "end");
      if (open) {
        add("path", { d: `M${x - 12} ${y - 12} l24 24 M${x + 12} ${y - 12} l-24 24`, class: "fault" });
        label(x + 16, y + 18, "open", "fault-lbl", "start");
      }
    };

    const kind = (s.bridge && s.bridge.kind) || "six_pulse_diode";
    const thy = /thyristor/.test(kind);
    const three = /^three/.test(kind);
    const twelve = /^twelve/.test(kind);
    const openDev = s.bridge && typeof s.bridge.open_device === "number" ? s.bridge.open_device : -1;
    const lost = (s.supply && s.supply.phase_open) || [false, false, false];
    const rows = [110, 160, 210];
    const names = ["a", "b", "c"];

    // ---- source: three EMFs joined at a star point
    const xs = 50;
    wire(`M${xs - 22} ${rows[0]} L${xs - 22} ${rows[2]}`);
    // left of the star point when the neutral return runs down from it (three-pulse)
    if (three) label(xs - 28, rows[2] + 24, "N", "lbl small", "end");
    else label(xs - 22, rows[2] + 24, "N", "lbl small");
    rows.forEach((y, i) => {
      wire(`M${xs - 22} ${y} L${xs - 12} ${y}`);
      add("circle", { cx: xs, cy: y, r: 12, class: "src" });
      add("path", { d: `M${xs - 7} ${y} q3.5 -7 7 0 t7 0`, class: "w thin mark" }); // the sine symbol, not a wire
      label(xs, y - 17, names[i], "lbl small");
    });
    label(xs - 30, 62, `${eng(s.supply.v_ll_rms_v, "V")} ${eng(s.supply.f_hz, "Hz")}`, "lbl strong", "start");

    // ---- per phase: source impedance, PCC, reactor, (lost phase)
    const imp = (s.source && s.source.impedance) || {};
    const impText =
      imp.kind === "transformer"
        ? `${eng(imp.s_kva * 1e3, "VA")}, ${imp.z_pct} %Z`
        : imp.kind === "short_circuit_mva"
          ? `Ssc ${eng(imp.s_sc_mva * 1e6, "VA")}`
          : imp.kind === "short_circuit_ka"
            ? `Isc ${eng(imp.i_sc_ka * 1e3, "A")}`
            : imp.kind === "direct"
              ? `${eng(imp.l_h, "H")}, ${eng(imp.r_ohm, "Ω")}`
              : "";
    const re = (s.source && s.source.reactor) || { kind: "none" };
    const hasReactor = re.kind !== "none";
    const reText = re.kind === "percent" ? `reactor ${re.z_pct} %` : re.kind === "henry" ? `reactor ${eng(re.l_h, "H")}` : "";
    const xB = twelve ? 430 : 430; // bridge input column
    rows.forEach((y, i) => {
      wire(`M${xs + 12} ${y} L70 ${y}`);
      coilH(70, y, 3);
      if (lost[i]) {
        // Lost phase: the line is open upstream of the PCC (the engine opens
        // it at the source), so that phase's PCC floats with the bridge.
        wire(`M110 ${y} L116 ${y}`);
        add("path", { d: `M116 ${y} l14 -9`, class: "w fault-w" });
        add("path", { d: `M126 ${y - 8} l10 10 M136 ${y - 8} l-10 10`, class: "fault" });
        label(128, y + 20, `phase ${names[i]} lost`, "fault-lbl");
        wire(`M142 ${y} L170 ${y}`);
      } else wire(`M110 ${y} L170 ${y}`);
      add("circle", { cx: 150, cy: y, r: 3, class: "dot" });
      if (hasReactor) {
        wire(`M170 ${y} L190 ${y}`);
        coilH(190, y, 4);
        wire(`M230 ${y} L250 ${y}`);
      } else wire(`M170 ${y} L250 ${y}`);
      wire(`M250 ${y} L300 ${y}`);
    });
    label(90, rows[0] - 22, "source", "lbl small");
    label(90, rows[2] + 34, impText, "lbl small");
    add("path", { d: `M150 ${rows[0] - 30} L150 ${rows[2] + 30}`, class: "pcc" });
    label(150, rows[0] - 36, "PCC", "lbl strong");
    if (hasReactor) label(210, rows[2] + 34, reText, "lbl small");

    // ---- bridge
    const top = 50;
    const bot = 280;
    let xOut; // x where the DC rails leave the bridge
    if (twelve) {
      // transformer: one primary, star and delta secondaries, two bridges
      rows.forEach((y) => wire(`M300 ${y} L318 ${y}`));
      add("rect", { x: 318, y: rows[0] - 16, width: 18, height: rows[2] - rows[0] + 32, class: "core" });
      add("circle", { cx: 360, cy: 110, r: 20, class: "winding" });
      add("circle", { cx: 360, cy: 210, r: 20, class: "winding" });
      add("circle", { cx: 340, cy: 160, r: 22, class: "winding" });
      label(360, 115, "Y", "lbl strong");
      label(360, 215, "Δ", "lbl strong");
      label(352, 262, "30° apart", "lbl small");
      // Bridge 1's + rail and bridge 2's - rail are the DC rails (y = top,
      // bot); the secondaries' leads come in between the device labels.
      const bridges = [
        { y0: top, y1: 140, feed: 110, tag: "1" },
        { y0: 190, y1: bot, feed: 210, tag: "2" },
      ];
      const legs = [450, 510, 570];
      const xR = 600; // right end of the rails that stay inside the bridge block
      const series = kind === "twelve_pulse_series";
      xOut = series ? 620 : 680;
      bridges.forEach((b, bi) => {
        const mid = (b.y0 + b.y1) / 2;
        // one line for the three conductors (marked), from the winding to the legs' midpoints
        wire(`M380 ${b.feed} L396 ${b.feed} L396 ${mid} L${legs[2]} ${mid}`, "w thin");
        add("path", { d: `M402 ${mid + 7} l8 -14 M408 ${mid + 7} l8 -14 M414 ${mid + 7} l8 -14`, class: "w thin mark" }); // three conductors
        legs.forEach((x, li) => {
          wire(`M${x} ${b.y0} L${x} ${b.y1}`);
          add("circle", { cx: x, cy: mid, r: 2.5, class: "dot" });
          const up = bi * 6 + li;
          const dn = bi * 6 + 3 + li;
          device(x, b.y0 + 22, names[li] + b.tag + "+", false, openDev === up);
          device(x, b.y1 - 22, names[li] + b.tag + "−", false, openDev === dn);
        });
      });
      // the - rail of bridge 2 is the DC - rail in both connections
      wire(`M${legs[0]} ${bot} L${xOut} ${bot}`);
      if (series) {
        // bridge 1's + is the DC +; bridge 1's - joined to bridge 2's +
        wire(`M${legs[0]} ${top} L${xOut} ${top}`);
        wire(`M${legs[0]} 140 L${xR} 140 L${xR} 190 L${legs[0]} 190`);
        label(xR - 8, 169, "in series", "lbl small", "end");
      } else {
        // The positives meet at the interphase reactor's centre tap (the DC
        // +), the negatives are joined: one half of the reactor on the top
        // rail, the other coming up from bridge 2's + rail.
        const xc = 660; // centre tap
        wire(`M${legs[0]} ${top} L${xR} ${top}`);
        coilH(xR, top, 4);
        wire(`M${xR + 40} ${top} L${xOut} ${top}`);
        wire(`M${xc} ${top} L${xc} ${top + 20}`);
        let d = `M${xc} ${top + 20}`;
        for (let i = 0; i < 4; i++) d += " a5 5 0 0 1 0 10";
        wire(d, "w part");
        add("circle", { cx: xc, cy: top, r: 3, class: "dot" });
        label(xc - 10, top + 36, "interphase", "lbl small", "end");
        if (s.bridge.interphase_l_h > 0) label(xc - 10, top + 50, eng(s.bridge.interphase_l_h, "H"), "lbl small", "end");
        // bridge 1's - down to the - rail; bridge 2's + hops over it to the reactor
        const xn = 630;
        wire(`M${legs[0]} 140 L${xn} 140 L${xn} ${bot}`);
        add("circle", { cx: xn, cy: bot, r: 3, class: "dot" });
        wire(`M${legs[0]} 190 L${xn - 6} 190 a6 6 0 0 1 12 0 L${xc} 190 L${xc} ${top + 60}`);
      }
    } else if (three) {
      const legs = [xB + 20, xB + 80, xB + 140];
      rows.forEach((y, i) => {
        wire(`M300 ${y} L${legs[i]} ${y} L${legs[i]} ${top + 47}`); // to the anode (the triangle's base)
        device(legs[i], top + 40, names[i] + "+", thy, openDev === i);
        wire(`M${legs[i]} ${top + 33} L${legs[i]} ${top}`);
      });
      wire(`M${legs[0]} ${top} L${legs[2] + 40} ${top}`);
      // neutral return from the star point along the bottom
      wire(`M${xs - 22} ${rows[2]} L${xs - 22} ${bot} L${legs[2] + 40} ${bot}`);
      label(xB + 80, bot - 8, "neutral return", "lbl small");
      xOut = legs[2] + 40;
    } else {
      const legs = [xB + 30, xB + 90, xB + 150];
      wire(`M${legs[0]} ${top} L${legs[2] + 40} ${top}`);
      wire(`M${legs[0]} ${bot} L${legs[2] + 40} ${bot}`);
      legs.forEach((x, i) => {
        wire(`M${x} ${top} L${x} ${bot}`);
        device(x, top + 30, names[i] + "+", thy, openDev === i);
        device(x, bot - 30, names[i] + "−", thy, openDev === 3 + i);
      });
      // phase i enters leg i at its row; a small hop where it crosses another leg
      rows.forEach((y, i) => {
        let d = `M300 ${y}`;
        for (let j = 0; j < i; j++) d += ` L${legs[j] - 6} ${y} a6 6 0 0 1 12 0`;
        d += ` L${legs[i]} ${y}`;
        wire(d);
        add("circle", { cx: legs[i], cy: y, r: 3, class: "dot" });
      });
      xOut = legs[2] + 40;
    }
    label(twelve ? 500 : xB + 90, 28, bridgeName(kind), "lbl strong");

    // ---- DC side along the top rail: precharge, choke, then the bus
    const dc = s.dc || {};
    let x = xOut;
    if (dc.precharge_r_ohm > 0) {
      resH(x, top);
      label(x + 20, top - 12, `precharge ${eng(dc.precharge_r_ohm, "Ω")}`, "lbl small");
      // bypass contact above the resistor
      wire(`M${x} ${top} L${x} ${top + 22} L${x + 10} ${top + 22}`, "w thin");
      add("path", { d: `M${x + 10} ${top + 22} l20 ${dc.precharge_stuck ? -9 : -9}`, class: dc.precharge_stuck ? "w fault-w" : "w thin" });
      wire(`M${x + 32} ${top + 22} L${x + 40} ${top + 22} L${x + 40} ${top}`, "w thin");
      if (dc.precharge_stuck) label(x + 20, top + 38, "bypass failed", "fault-lbl");
      x += 40;
    }
    wire(`M${x} ${top} L${x + 20} ${top}`);
    x += 20;
    if (dc.choke_l_h > 0) {
      coilH(x, top, 4);
      // above the precharge label when both are drawn (they would overlap)
      label(x + 20, dc.precharge_r_ohm > 0 ? top - 26 : top - 12, `choke ${eng(dc.choke_l_h, "H")}`, "lbl small");
      x += 40;
    }
    wire(`M${x} ${top} L${x + 20} ${top}`);
    x += 20;
    const busStart = x;
    const branch = (fn) => {
      wire(`M${x} ${top} L${x} ${top + 75}`);
      fn(x, top + 75);
      wire(`M${x} ${top + 115} L${x} ${bot}`);
      add("circle", { cx: x, cy: top, r: 3, class: "dot" });
      add("circle", { cx: x, cy: bot, r: 3, class: "dot" });
    };
    if (dc.cap_f > 0) {
      x += 20;
      branch((cx, cy) => {
        wire(`M${cx} ${cy} L${cx} ${cy + 16}`);
        add("path", { d: `M${cx - 14} ${cy + 16} L${cx + 14} ${cy + 16}`, class: "plate" });
        add("path", { d: `M${cx - 14} ${cy + 24} q14 -6 28 0`, class: "plate" });
        wire(`M${cx} ${cy + 22} L${cx} ${cy + 40}`);
        label(cx + 18, cy + 14, eng(dc.cap_f, "F"), "lbl small", "start");
        if (dc.cap_esr_ohm > 0) label(cx + 18, cy + 30, `ESR ${eng(dc.cap_esr_ohm, "Ω")}`, "lbl small", "start");
      });
      x += 95;
    }
    if (dc.bleed_r_ohm > 0) {
      branch((cx, cy) => {
        resV(cx, cy);
        label(cx + 14, cy + 24, `bleed ${eng(dc.bleed_r_ohm, "Ω")}`, "lbl small", "start");
      });
      x += 70;
    }
    // the load
    const load = dc.load || {};
    x += 20;
    wire(`M${busStart} ${top} L${x} ${top}`);
    wire(`M${xOut} ${bot} L${x} ${bot}`);
    const lx = x;
    if (load.kind === "resistor") {
      wire(`M${lx} ${top} L${lx} ${top + 95}`);
      resV(lx, top + 95);
      wire(`M${lx} ${top + 135} L${lx} ${bot}`);
      label(lx + 14, top + 120, `${eng(load.r_ohm, "Ω")}`, "lbl small", "start");
    } else if (load.kind === "rle") {
      wire(`M${lx} ${top} L${lx} ${top + 40}`);
      resV(lx, top + 40);
      wire(`M${lx} ${top + 80} L${lx} ${top + 92}`);
      let d = `M${lx} ${top + 92}`;
      for (let i = 0; i < 4; i++) d += " a6 6 0 0 1 0 12";
      wire(d, "w part");
      wire(`M${lx} ${top + 140} L${lx} ${top + 160}`);
      add("circle", { cx: lx, cy: top + 174, r: 14, class: "src" });
      label(lx, top + 170, "+", "lbl small");
      label(lx, top + 184, "−", "lbl small");
      wire(`M${lx} ${top + 188} L${lx} ${bot}`);
      label(lx + 14, top + 64, eng(load.r_ohm, "Ω"), "lbl small", "start");
      label(lx + 14, top + 118, eng(load.l_h, "H"), "lbl small", "start");
      label(lx + 20, top + 178, `E ${eng(load.e_v, "V")}`, "lbl small", "start");
    } else if (load.kind === "constant_current") {
      wire(`M${lx} ${top} L${lx} ${top + 100}`);
      add("circle", { cx: lx, cy: top + 115, r: 15, class: "src" });
      add("path", { d: `M${lx} ${top + 125} L${lx} ${top + 105} m-5 6 l5 -6 l5 6`, class: "w thin mark" }); // arrow symbol
      wire(`M${lx} ${top + 130} L${lx} ${bot}`);
      label(lx + 20, top + 119, eng(load.i_a, "A"), "lbl small", "start");
    } else {
      wire(`M${lx} ${top} L${lx} ${top + 90}`);
      add("rect", { x: lx - 22, y: top + 90, width: 44, height: 50, rx: 4, class: "load" });
      label(lx, top + 112, "P", "lbl strong");
      label(lx, top + 130, "const", "lbl small");
      wire(`M${lx} ${top + 140} L${lx} ${bot}`);
      label(lx + 28, top + 119, eng(load.p_w, "W"), "lbl small", "start");
    }
    label(lx - 8, top - 8, "+", "lbl strong");
    label(lx - 8, bot + 18, "−", "lbl strong");
    label((busStart + lx) / 2, bot + 30, "DC bus", "lbl small");

    const width = Math.max(W, lx + 110);
    g.setAttribute("viewBox", `0 0 ${width} ${H}`);
    host.replaceChildren(g);
    host.setAttribute("data-bridge", kind);
    host.setAttribute("data-lost", lost.map((v, i) => (v ? names[i] : "")).join(""));
    host.setAttribute("data-open-device", openDev >= 0 ? String(openDev) : "");
  }

  function bridgeName(kind) {
    return (
      {
        six_pulse_diode: "six-pulse diode bridge",
        six_pulse_thyristor: "six-pulse thyristor bridge",
        three_pulse_diode: "three-pulse midpoint, diodes",
        three_pulse_thyristor: "three-pulse midpoint, thyristors",
        twelve_pulse_series: "twelve-pulse, bridges in series",
        twelve_pulse_parallel: "twelve-pulse, bridges in parallel",
      }[kind] || kind
    );
  }

  function describe(s) {
    const parts = [`Schematic: ${bridgeName(s.bridge.kind)} on ${s.supply.v_ll_rms_v} V ${s.supply.f_hz} Hz`];
    if (s.source.reactor.kind !== "none") parts.push("with a line reactor");
    if (s.dc.choke_l_h > 0) parts.push("a DC choke");
    if (s.dc.cap_f > 0) parts.push("a bus capacitor");
    parts.push(`load: ${String(s.dc.load.kind).replace(/_/g, " ")}`);
    const lost = ["a", "b", "c"].filter((_, i) => s.supply.phase_open[i]);
    if (lost.length) parts.push(`phase ${lost.join(", ")} lost`);
    if (typeof s.bridge.open_device === "number") parts.push(`device ${s.bridge.open_device} open`);
    return parts.join(", ") + ".";
  }

  root.RectifieldSchematic = { draw, describe };
})(globalThis);
