// placer explore: the s-plane page. Plain JavaScript and SVG, nothing from outside.
// The server does every computation; this script draws what it returns and sends
// the edited target (each section's f0, Q and notch zero frequency, in hertz).
"use strict";
(function () {
  const TOKEN = document.querySelector('meta[name="placer-token"]').content;
  const SVGNS = "http://www.w3.org/2000/svg";
  const TWO_PI = 2 * Math.PI;
  const Q_MAX = 200;        // the steepest constant-Q ray a drag reaches
  const F_DIGITS = 5;       // significant digits of a dragged f0
  const Q_DIGITS = 4;       // ... and of a dragged Q
  const AXIS_SNAP_PX = 4;   // a pole pair dragged this close to the real axis turns real
  const G = { W: 330, H: 560, cx: 284, cy: 280, R: 264 };
  const Q_GUIDES = [0.5, 0.707, 1, 2, 5, 10];

  const state = {
    client: randomId(), seq: 0, drawnSeq: 0, inflight: false, pending: false, timer: null,
    info: null, slots: [], overrides: {}, results: [], unreachable: null, fieldErrors: {},
    selected: 0, mode: "log", lmin: 0, lmax: 1, rmaxLin: 1, drag: null, mask: null,
  };
  const $ = (id) => document.getElementById(id);
  const plane = $("plane");
  const layers = {};
  const rootElements = new Map();

  // -- small helpers ------------------------------------------------------------
  function randomId() {
    const bytes = new Uint8Array(9);
    crypto.getRandomValues(bytes);
    return Array.from(bytes, (b) => b.toString(16).padStart(2, "0")).join("");
  }
  function svg(tag, attrs, parent) {
    const el = document.createElementNS(SVGNS, tag);
    for (const [k, v] of Object.entries(attrs || {})) el.setAttribute(k, v);
    if (parent) parent.appendChild(el);
    return el;
  }
  function clamp(x, lo, hi) { return Math.min(hi, Math.max(lo, x)); }
  function round(x, digits) { return Number(x.toPrecision(digits)); }
  const PREFIXES = [[1e12, "T"], [1e9, "G"], [1e6, "M"], [1e3, "k"], [1, ""], [1e-3, "m"],
                    [1e-6, "µ"], [1e-9, "n"], [1e-12, "p"], [1e-15, "f"]];
  function eng(x, unit, digits) {
    if (x === null || x === undefined || !isFinite(x)) return "–";
    if (x === 0) return "0" + (unit ? " " + unit : "");
    const a = Math.abs(x);
    for (const [scale, prefix] of PREFIXES) {
      if (a >= scale * 0.9995) {
        const text = String(Number((x / scale).toPrecision(digits || 4)));
        return text + (unit || prefix ? " " + prefix + (unit || "") : "");
      }
    }
    return x.toExponential(2) + (unit ? " " + unit : "");
  }
  function pct(x) { return x === null || x === undefined ? "–" : (x >= 0 ? "+" : "") + x.toFixed(3) + " %"; }
  const UNIT = { resistor: "Ω", capacitor: "F", inductor: "H" };

  // -- the target's roots from its sections (rad/s) -----------------------------
  function polesOf(slot) {
    const w0 = TWO_PI * slot.f0;
    if (slot.order === 1) return [[-w0, 0]];
    const sigma = w0 / (2 * slot.q);
    const disc = 1 - 1 / (4 * slot.q * slot.q);
    if (disc > 0) { const w = w0 * Math.sqrt(disc); return [[-sigma, w], [-sigma, -w]]; }
    const d = w0 * Math.sqrt(-disc);
    return [[-sigma + d, 0], [-sigma - d, 0]];
  }
  function zerosOf(slot) {
    const poles = polesOf(slot);
    switch (slot.kind) {
      case "notch": { const w = TWO_PI * slot.zero; return [[0, w], [0, -w]]; }
      case "highpass": return poles.map(() => [0, 0]);
      case "bandpass": return [[0, 0]];
      case "allpass": return poles.map(([re, im]) => [-re, im]);
      default: return [];
    }
  }
  function rootsOf(slot, index) {
    const out = polesOf(slot).map((p, which) => ({ slot: index, role: "pole", which, re: p[0], im: p[1],
                                                   movable: true }));
    zerosOf(slot).forEach((z, which) => out.push({ slot: index, role: "zero", which, re: z[0], im: z[1],
                                                   movable: slot.kind === "notch" }));
    return out;
  }

  // -- the plane's mapping: log radius (default) or linear ----------------------
  function radiusPx(r) {
    if (state.mode === "log") {
      if (!(r > 0)) return 0;
      return clamp((Math.log10(r) - state.lmin) / (state.lmax - state.lmin), 0, 1) * G.R;
    }
    return Math.min(r * G.R / state.rmaxLin, G.R * 1.1);
  }
  function radiusAt(px) {
    if (state.mode === "log") return Math.pow(10, state.lmin + clamp(px / G.R, 0.002, 1) * (state.lmax - state.lmin));
    return Math.max(px, 0.5) * state.rmaxLin / G.R;
  }
  function toScreen(re, im) {
    const r = Math.hypot(re, im);
    const th = Math.atan2(im, re);
    const rho = radiusPx(r);
    return [G.cx + rho * Math.cos(th), G.cy - rho * Math.sin(th)];
  }
  function fitView() {
    const mags = [];
    state.slots.forEach((slot, i) => rootsOf(slot, i).forEach((r) => {
      const m = Math.hypot(r.re, r.im); if (m > 0) mags.push(m);
    }));
    const lo = Math.min(...mags), hi = Math.max(...mags);
    state.lmin = Math.log10(lo) - 1;
    state.lmax = Math.log10(hi) + 1;
    state.rmaxLin = hi * 1.35;
    drawGuides();
  }

  // -- drawing the plane --------------------------------------------------------
  function drawGuides() {
    const g = layers.guides;
    g.replaceChildren();
    // constant-f0 circles at 1-2-5 steps, labelled where they cross the jω axis
    const fmin = radiusAt(0) / TWO_PI, fmax = radiusAt(G.R) / TWO_PI;
    let lastLabel = -1e9;
    const steps = state.mode === "log" ? [1, 2, 5] : [1, 2, 2.5, 5];
    for (let e = Math.floor(Math.log10(Math.max(fmin, 1e-30))) - 1; e <= Math.log10(fmax) + 1; e++) {
      for (const m of steps) {
        const f = m * Math.pow(10, e);
        if (f < fmin * 0.9999 || f > fmax * 1.0001) continue;
        const rho = radiusPx(TWO_PI * f);
        if (rho <= 2) continue;
        if (state.mode !== "log" && rho < G.R / 9) continue;
        svg("path", { class: "guide", "data-f0-hz": f, "data-radius": rho,
                      d: `M ${G.cx} ${G.cy - rho} A ${rho} ${rho} 0 0 0 ${G.cx} ${G.cy + rho}` }, g);
        if (rho - lastLabel >= 22 || m === 1) {
          const t = svg("text", { class: "guide-label", x: G.cx + 3, y: G.cy - rho + 3.5 }, g);
          t.textContent = eng(f, "Hz", 3);
          lastLabel = rho;
        }
      }
    }
    for (const q of Q_GUIDES) {
      const th = Math.PI - Math.acos(1 / (2 * q));
      for (const sign of [1, -1]) {
        svg("line", { class: "guide", x1: G.cx, y1: G.cy, x2: G.cx + G.R * Math.cos(th),
                      y2: G.cy - sign * G.R * Math.sin(th) }, g);
      }
      if (q > 0.5 && q < 10) {
        const t = svg("text", { class: "guide-label", x: G.cx + (G.R + 2) * Math.cos(th) - 4,
                                y: Math.max(10, G.cy - (G.R + 2) * Math.sin(th)), "text-anchor": "end" }, g);
        t.textContent = "Q " + q;
      }
    }
    svg("line", { class: "axis", id: "real-axis", x1: 4, y1: G.cy, x2: G.W - 2, y2: G.cy }, g);
    svg("line", { class: "axis", id: "jw-axis", x1: G.cx, y1: 2, x2: G.cx, y2: G.H - 2 }, g);
    const jw = svg("text", { class: "axis-label", x: G.cx - 4, y: 12, "text-anchor": "end" }, g); jw.textContent = "jω";
    const re = svg("text", { class: "axis-label", x: 6, y: G.cy - 5 }, g);
    re.textContent = state.mode === "log" ? "σ (radius: log |s|)" : "σ";
  }
  function rootKey(r) { return `${r.slot}:${r.role}:${r.which}`; }
  function buildRoots() {
    layers.roots.replaceChildren();
    rootElements.clear();
    state.slots.forEach((slot, i) => rootsOf(slot, i).forEach((r) => {
      const g = svg("g", { class: `root ${r.role}` + (r.movable ? "" : " fixed"), "data-key": rootKey(r),
                           role: "button" }, layers.roots);
      if (r.movable) g.setAttribute("tabindex", "0");
      svg("circle", { class: "hit", r: 10 }, g);
      if (r.role === "pole") {
        svg("path", { class: "mark", d: "M -5.5 -5.5 L 5.5 5.5 M -5.5 5.5 L 5.5 -5.5" }, g);
      } else {
        svg("circle", { class: "mark", r: 5 }, g);
      }
      g.addEventListener("pointerdown", (ev) => startDrag(ev, r));
      g.addEventListener("keydown", (ev) => nudge(ev, r));
      g.addEventListener("focus", () => select(r.slot));
      rootElements.set(rootKey(r), g);
    }));
  }
  function drawRoots() {
    state.slots.forEach((slot, i) => {
      const label = slot.order === 1 ? `f0 ${eng(slot.f0, "Hz", 5)}` :
        `f0 ${eng(slot.f0, "Hz", 5)}, Q ${round(slot.q, Q_DIGITS)}`;
      rootsOf(slot, i).forEach((r) => {
        const g = rootElements.get(rootKey(r));
        if (!g) return;
        const [x, y] = toScreen(r.re, r.im);
        g.setAttribute("transform", `translate(${x.toFixed(2)} ${y.toFixed(2)})`);
        g.classList.toggle("selected", i === state.selected);
        const what = r.role === "pole" ? "pole" : "zero";
        const extra = r.role === "zero" && slot.kind === "notch" ? `, notch at ${eng(slot.zero, "Hz", 5)}` : "";
        g.setAttribute("aria-label", `section ${i + 1} ${what}: ${label}${extra}` +
                       (r.movable ? "; arrow keys move it" : " (fixed by the section's kind)"));
      });
    });
    const a = layers.achieved;
    a.replaceChildren();
    for (const entry of state.results) {
      if (!entry) continue;
      for (const [re, im] of entry.achieved.poles) {
        const [x, y] = toScreen(re, im);
        svg("path", { class: "achieved", d: `M ${x - 3} ${y - 3} L ${x + 3} ${y + 3} M ${x - 3} ${y + 3} L ${x + 3} ${y - 3}` }, a);
      }
      for (const [re, im] of entry.achieved.zeros) {
        const [x, y] = toScreen(re, im);
        svg("circle", { class: "achieved", cx: x, cy: y, r: 2.5 }, a);
      }
    }
  }

  // -- moving roots -------------------------------------------------------------
  function pointIn(ev) {
    const p = new DOMPoint(ev.clientX, ev.clientY).matrixTransform(plane.getScreenCTM().inverse());
    return [p.x, p.y];
  }
  // Below Q 0.5 a low-, high- or all-pass pair is two real poles, which the cascade
  // builds as first-order sections: such a drag stops just above 0.5.
  function qFloor(slot) { return slot.kind === "notch" || slot.kind === "bandpass" ? 0.05 : 0.501; }
  // Put root `r` of its section where the screen point (x, y) is; its conjugate follows.
  function moveRoot(r, x, y) {
    const slot = state.slots[r.slot];
    const dx = x - G.cx;
    let dy = G.cy - y;
    if (r.which === 1 && r.role === "zero") dy = -dy;
    const rad = radiusAt(Math.hypot(dx, dy));
    if (r.role === "zero") {                      // a notch zero pair, on the jω axis
      slot.zero = round(rad / TWO_PI, F_DIGITS);
    } else if (slot.order === 1) {                // a real pole
      slot.f0 = round(radiusAt(Math.max(-dx, 0.5)) / TWO_PI, F_DIGITS);
    } else {
      const complexNow = polesOf(slot)[0][1] !== 0;
      if (!complexNow && Math.abs(dy) < AXIS_SNAP_PX) {   // one real pole of a real pair
        const other = Math.abs(polesOf(slot)[1 - r.which][0]);
        const mine = radiusAt(Math.max(-dx, 0.5));
        const w0 = Math.sqrt(mine * other);
        slot.f0 = round(w0 / TWO_PI, F_DIGITS);
        slot.q = round(w0 / (mine + other), Q_DIGITS);
      } else if (Math.abs(dy) < AXIS_SNAP_PX && qFloor(slot) <= 0.5) {  // a pair brought onto the axis
        slot.f0 = round(radiusAt(Math.max(-dx, 0.5)) / TWO_PI, F_DIGITS);
        slot.q = 0.5;
      } else {
        const thMin = Math.PI - Math.acos(1 / (2 * Q_MAX));
        const th = clamp(Math.atan2(Math.abs(dy), dx), thMin, Math.PI);
        slot.f0 = round(rad / TWO_PI, F_DIGITS);
        slot.q = round(clamp(-1 / (2 * Math.cos(th)), qFloor(slot), Q_MAX), Q_DIGITS);
      }
    }
    for (const key of ["f0", "q", "zero_f0"]) {
      delete state.overrides[`${r.slot}.${key}`];
      delete state.fieldErrors[`${r.slot}.${key}`];
    }
    select(r.slot);
    drawRoots();
    renderFields();
    schedule(state.drag ? 90 : 30);
  }
  function startDrag(ev, r) {
    select(r.slot);
    if (!r.movable || ev.button !== 0) return;
    ev.preventDefault();
    rootElements.get(rootKey(r)).focus({ preventScroll: true });
    plane.setPointerCapture(ev.pointerId);
    plane.classList.add("dragging");
    state.drag = { root: r, pointer: ev.pointerId, moved: false };
  }
  plane.addEventListener("pointermove", (ev) => {
    if (!state.drag || ev.pointerId !== state.drag.pointer) return;
    const [x, y] = pointIn(ev);
    state.drag.moved = true;
    moveRoot(state.drag.root, x, y);
  });
  function endDrag(ev) {
    if (!state.drag || ev.pointerId !== state.drag.pointer) return;
    const moved = state.drag.moved;
    state.drag = null;
    plane.classList.remove("dragging");
    if (moved) schedule(0);
  }
  plane.addEventListener("pointerup", endDrag);
  plane.addEventListener("pointercancel", endDrag);
  function nudge(ev, r) {
    const steps = { ArrowLeft: [-1, 0], ArrowRight: [1, 0], ArrowUp: [0, -1], ArrowDown: [0, 1] };
    const step = steps[ev.key];
    if (!step || !r.movable) return;
    ev.preventDefault();
    const size = ev.shiftKey ? 25 : 5;
    const current = rootsOf(state.slots[r.slot], r.slot).find((x) => rootKey(x) === rootKey(r));
    const [x, y] = toScreen(current.re, current.im);
    moveRoot(r, x + step[0] * size, y + step[1] * size);
  }

  // -- the side panel -----------------------------------------------------------
  const FIELD_LABELS = { f0: "f0 (Hz)", q: "Q", zero_f0: "zero f0 (Hz)" };
  function fieldsOf(slot) {
    const out = ["f0"];
    if (slot.order === 2) out.push("q");
    if (slot.kind === "notch") out.push("zero_f0");
    return out;
  }
  function slotValue(slot, key) {
    const v = { f0: slot.f0, q: slot.q, zero_f0: slot.zero }[key];
    return key === "q" ? round(v, Q_DIGITS + 2) : round(v, F_DIGITS + 2);
  }
  function buildFields() {
    const box = $("sections");
    box.replaceChildren();
    state.slots.forEach((slot, i) => {
      const div = document.createElement("div");
      div.className = "section";
      div.id = `section-${i}`;
      const h = document.createElement("h3");
      h.textContent = `${i + 1} · ${slot.kind}, ${slot.order === 1 ? "first" : "second"} order`;
      div.appendChild(h);
      const fields = document.createElement("div");
      fields.className = "fields";
      for (const key of fieldsOf(slot)) {
        const label = document.createElement("label");
        label.textContent = FIELD_LABELS[key];
        const input = document.createElement("input");
        input.type = "text";
        input.inputMode = "decimal";
        input.id = `${key}-${i}`;
        input.name = key;
        input.autocomplete = "off";
        input.spellcheck = false;
        input.setAttribute("aria-describedby", `message-${i}`);
        input.addEventListener("focus", () => select(i));
        input.addEventListener("input", () => { delete state.fieldErrors[`${i}.${key}`]; });
        input.addEventListener("blur", () => renderFields());
        input.addEventListener("change", () => {
          state.overrides[`${i}.${key}`] = input.value.trim();
          delete state.fieldErrors[`${i}.${key}`];
          schedule(0);
        });
        label.appendChild(input);
        fields.appendChild(label);
      }
      div.appendChild(fields);
      const message = document.createElement("p");
      message.className = "message";
      message.id = `message-${i}`;
      message.hidden = true;
      div.appendChild(message);
      const result = document.createElement("p");
      result.className = "result";
      result.id = `result-${i}`;
      div.appendChild(result);
      div.addEventListener("pointerdown", () => select(i));
      box.appendChild(div);
    });
  }
  function renderFields() {
    state.slots.forEach((slot, i) => {
      const messages = [];
      for (const key of fieldsOf(slot)) {
        const input = $(`${key}-${i}`);
        const error = state.fieldErrors[`${i}.${key}`];
        const override = state.overrides[`${i}.${key}`];
        input.setAttribute("aria-invalid", error ? "true" : "false");
        if (error) messages.push(error);
        else if (override === undefined && document.activeElement !== input) input.value = String(slotValue(slot, key));
      }
      if (state.fieldErrors[`${i}.`]) messages.push(state.fieldErrors[`${i}.`]);
      const message = $(`message-${i}`);
      message.textContent = messages.join(" ");
      message.hidden = messages.length === 0;
      $(`section-${i}`).classList.toggle("selected", i === state.selected);
      const result = $(`result-${i}`);
      const entry = state.results[i];
      const blocked = state.unreachable && state.unreachable.slot === i;
      result.classList.toggle("bad", Boolean(blocked));
      if (blocked) result.textContent = "cannot be reached: " + state.unreachable.reason;
      else if (entry) result.textContent = `${entry.topology} · worst error ${entry.error.worst_pct.toFixed(3)} %`;
      else result.textContent = "";
    });
  }
  function select(i) {
    if (state.selected === i) return;
    state.selected = i;
    drawRoots();
    renderFields();
    renderDetails();
  }

  // -- the selected section's details -------------------------------------------
  function renderDetails() {
    const i = state.selected;
    const entry = state.results[i];
    const problem = $("problem");
    const blocked = state.unreachable && state.unreachable.slot === i;
    problem.hidden = !blocked;
    problem.textContent = blocked ? `Section ${i + 1} cannot be reached: ${state.unreachable.reason}` : "";
    if (!entry) {
      $("details-heading").textContent = `Section ${i + 1}`;
      $("summary").textContent = blocked ? "" : "placing…";
      return;
    }
    $("details-heading").textContent = `Section ${i + 1}: ${entry.title} (${entry.topology})` +
      (blocked ? " — as last placed" : "");
    const t = entry.target, a = entry.achieved, e = entry.error;
    let text = `target f0 ${eng(t.f0_hz, "Hz", 5)}` + (t.q ? `, Q ${t.q.toFixed(4)}` : "") +
      (t.zero_f0_hz ? `, zero ${eng(t.zero_f0_hz, "Hz", 5)}` : "") +
      ` → built f0 ${eng(a.f0_hz, "Hz", 5)} (${pct(e.f0_pct)})` +
      (a.q ? `, Q ${a.q.toFixed(4)} (${pct(e.q_pct)})` : "") +
      (a.zero_f0_hz ? `, zero ${eng(a.zero_f0_hz, "Hz", 5)} (${pct(e.zero_f0_pct)})` : "") +
      `, gain ${a.gain_db === null ? "–" : a.gain_db.toFixed(2) + " dB"}${a.inverting ? " (inverting)" : ""}` +
      `; worst error ${e.worst_pct.toFixed(3)} %`;
    $("summary").textContent = text;
    const body = $("parts").tBodies[0];
    body.replaceChildren();
    for (const p of entry.parts) {
      const row = body.insertRow();
      const unit = UNIT[p.kind] || "";
      const cells = [p.name, eng(p.value, unit, 4), p.series || "–", eng(p.continuous, unit, 5),
                     p.continuous ? pct(100 * (p.value / p.continuous - 1)) : "–"];
      cells.forEach((c, k) => { const cell = row.insertCell(); cell.textContent = c; if (k) cell.className = "n"; });
    }
    const others = entry.candidates.slice(1).map((c) => c.reachable ?
      `${c.topology} ${c.error_pct.toFixed(3)} %` : `${c.topology} (cannot: ${c.reason})`);
    $("candidates").textContent = others.length ? "Other candidates: " + others.join("; ") : "";
    $("schematic").src = "data:image/svg+xml;charset=utf-8," + encodeURIComponent(entry.schematic_svg);
    $("schematic").alt = `schematic of section ${i + 1}, ${entry.topology}, with its values`;
    renderMask(entry.mask || state.mask);
    const c = entry.curves;
    plot($("plot-mag"), c.frequency_hz, [[c.target_db, "target"], [c.built_db, "built"]], true, 100);
    plot($("plot-phase"), c.frequency_hz, [[c.target_phase_deg, "target"], [c.built_phase_deg, "built"]], true);
    plot($("plot-step"), c.time_s, [[c.target_step, "target"], [c.built_step, "built"]], false);
  }
  function renderMask(mask) {
    const box = $("mask");
    box.hidden = !mask;
    if (!mask) return;
    box.replaceChildren();
    const verdict = mask.pass ?? mask.passes ?? mask.ok ?? mask.verdict;
    box.classList.toggle("fail", verdict === false || verdict === "fail");
    const head = document.createElement("strong");
    head.textContent = "Mask: " + (verdict === true ? "met" : verdict === false ? "not met" : String(verdict ?? ""));
    box.appendChild(head);
    const parts = [];
    for (const [k, v] of Object.entries(mask)) {
      if (v === null || typeof v !== "object") parts.push(`${k} ${typeof v === "number" ? Number(v.toPrecision(4)) : v}`);
    }
    box.appendChild(document.createTextNode(" " + parts.join(", ")));
  }

  // -- plots ----------------------------------------------------------------------
  function niceTicks(lo, hi, count) {
    const span = hi - lo || 1;
    const raw = span / count;
    const mag = Math.pow(10, Math.floor(Math.log10(raw)));
    const step = [1, 2, 2.5, 5, 10].map((m) => m * mag).find((s) => span / s <= count) || 10 * mag;
    const out = [];
    for (let v = Math.ceil(lo / step) * step; v <= hi + step * 1e-9; v += step) out.push(Math.abs(v) < step * 1e-9 ? 0 : v);
    return out;
  }
  function plot(box, xs, series, logx, span) {
    const W = 220, H = 170, L = 40, Rm = 8, T = 8, B = 20;
    box.replaceChildren();
    const fx = logx ? (v) => Math.log10(v) : (v) => v;
    const x0 = fx(xs[0]), x1 = fx(xs[xs.length - 1]);
    let ys = series.flatMap(([y]) => y).filter((v) => isFinite(v));
    let y1 = Math.max(...ys), y0 = Math.min(...ys);
    if (span) y0 = Math.max(y0, y1 - span);
    if (y1 - y0 < 1e-9) { y0 -= 1; y1 += 1; }
    const pad = (y1 - y0) * 0.06; y0 -= pad; y1 += pad;
    const X = (v) => L + (fx(v) - x0) / (x1 - x0) * (W - L - Rm);
    const Y = (v) => T + (y1 - clamp(v, y0, y1)) / (y1 - y0) * (H - T - B);
    const xt = logx ? Array.from({ length: Math.floor(x1) - Math.ceil(x0) + 1 }, (_, k) => Math.pow(10, Math.ceil(x0) + k))
                    : niceTicks(x0, x1, 4);
    for (const v of xt) {
      svg("line", { class: "grid", x1: X(v), x2: X(v), y1: T, y2: H - B }, box);
      const anchor = X(v) > W - Rm - 14 ? "end" : X(v) < L + 8 ? "start" : "middle";
      const t = svg("text", { class: "tick", x: X(v), y: H - 7, "text-anchor": anchor }, box);
      t.textContent = eng(v, "", 2);
    }
    for (const v of niceTicks(y0, y1, 5)) {
      svg("line", { class: "grid", x1: L, x2: W - Rm, y1: Y(v), y2: Y(v) }, box);
      const t = svg("text", { class: "tick", x: L - 3, y: Y(v) + 3, "text-anchor": "end" }, box);
      t.textContent = String(Number(v.toPrecision(3)));
    }
    svg("rect", { class: "frame", x: L, y: T, width: W - L - Rm, height: H - T - B }, box);
    for (const [y, cls] of series) {
      const points = xs.map((v, k) => `${X(v).toFixed(1)},${Y(y[k]).toFixed(1)}`).join(" ");
      svg("polyline", { class: cls, points }, box);
    }
  }

  // -- talking to the server ------------------------------------------------------
  function api(path, body) {
    return fetch(path, {
      method: body === undefined ? "GET" : "POST", cache: "no-store", credentials: "omit",
      headers: { "X-Placer-Token": TOKEN, "Content-Type": "application/json" },
      body: body === undefined ? undefined : JSON.stringify(body),
    });
  }
  function payloadSections() {
    return state.slots.map((slot, i) => {
      const out = { kind: slot.kind };
      for (const key of fieldsOf(slot)) {
        const override = state.overrides[`${i}.${key}`];
        out[key] = override !== undefined ? override : { f0: slot.f0, q: slot.q, zero_f0: slot.zero }[key];
      }
      return out;
    });
  }
  function setStatus(text, cls) {
    const s = $("status");
    s.textContent = text;
    s.className = cls || "";
  }
  function idle() {
    document.body.dataset.idle = !state.inflight && !state.pending && state.timer === null && !state.drag ? "1" : "0";
  }
  function schedule(delay) {
    clearTimeout(state.timer);
    state.timer = setTimeout(() => { state.timer = null; send(); }, delay);
    idle();
  }
  async function send() {
    if (state.inflight) { state.pending = true; idle(); return; }
    state.inflight = true;
    state.pending = false;
    idle();
    const seq = ++state.seq;
    const sent = { ...state.overrides };
    const started = performance.now();
    setStatus("placing…", "busy");
    try {
      const res = await api("/api/place", { client: state.client, seq, sections: payloadSections() });
      const reply = await res.json().catch(() => ({ error: `HTTP ${res.status}` }));
      const seconds = ((performance.now() - started) / 1000).toFixed(2);
      if (res.status === 422) {
        // the typed text at fault stays in its field with the message beside it;
        // the next request sends the section's last good numbers instead
        for (const k of Object.keys(sent)) if (state.overrides[k] === sent[k]) delete state.overrides[k];
        if (reply.section !== null && reply.section !== undefined) {
          state.fieldErrors[`${reply.section}.${reply.field ?? ""}`] = reply.error;
        }
        setStatus(reply.error, "bad");
        renderFields();
      } else if (!res.ok) {
        setStatus(reply.error || `HTTP ${res.status}`, "bad");
      } else if (!reply.superseded && reply.seq >= state.drawnSeq) {
        state.drawnSeq = reply.seq;
        draw(reply, sent, seconds);
      }
    } catch (err) {
      setStatus("the server does not answer: " + err, "bad");
    } finally {
      state.inflight = false;
      if (state.pending) send();
      idle();
    }
  }
  function adoptEdits(edits) {
    edits.forEach((e, i) => {
      const slot = state.slots[i];
      slot.f0 = e.f0_hz; slot.q = e.q; slot.zero = e.zero_f0_hz;
    });
  }
  function draw(reply, sent, seconds) {
    const latest = reply.seq === state.seq && !state.pending && state.timer === null && !state.drag;
    for (const k of Object.keys(sent)) if (state.overrides[k] === sent[k]) delete state.overrides[k];
    if (latest) adoptEdits(reply.edits);
    if (reply.ok) {
      state.unreachable = null;
      state.mask = reply.mask || null;
      for (const entry of reply.sections) if (entry.slot !== null) state.results[entry.slot] = entry;
      const again = reply.sections.filter((s) => s.replaced).map((s) => s.slot + 1);
      setStatus(`placed in ${seconds} s` + (again.length ? ` (re-placed section ${again.join(", ")})` : " (nothing to re-place)"));
    } else {
      state.unreachable = reply.unreachable;
      setStatus(`section ${(reply.unreachable.slot ?? 0) + 1} cannot be reached (see the section)`, "bad");
    }
    document.body.dataset.drawnSeq = String(reply.seq);
    drawRoots();
    renderFields();
    renderDetails();
  }
  async function download(button) {
    const kind = button.dataset.kind;
    button.disabled = true;
    setStatus(kind === "spec" ? "writing the spec…" : "designing and writing the files (Monte Carlo included)…", "busy");
    try {
      const res = await api(`/api/download/${kind}`, { sections: payloadSections() });
      if (!res.ok) {
        const reply = await res.json().catch(() => ({ error: `HTTP ${res.status}` }));
        setStatus(reply.error, "bad");
        return;
      }
      const blob = await res.blob();
      const a = document.createElement("a");
      a.href = URL.createObjectURL(blob);
      a.download = state.info.downloads[kind];
      document.body.appendChild(a);
      a.click();
      a.remove();
      setTimeout(() => URL.revokeObjectURL(a.href), 10000);
      setStatus(`saved ${state.info.downloads[kind]}`);
    } catch (err) {
      setStatus("the server does not answer: " + err, "bad");
    } finally {
      button.disabled = false;
    }
  }

  // -- start ------------------------------------------------------------------------
  async function start() {
    layers.guides = svg("g", { "aria-hidden": "true" }, plane);
    layers.achieved = svg("g", { "aria-hidden": "true" }, plane);
    layers.roots = svg("g", {}, plane);
    const res = await api("/api/state");
    if (!res.ok) {
      const reply = await res.json().catch(() => ({ error: `HTTP ${res.status}` }));
      setStatus(reply.error, "bad");
      return;
    }
    const info = await res.json();
    state.info = info;
    $("title").textContent = `— ${info.title} (${info.spec})`;
    document.title = `placer explore: ${info.title}`;
    state.slots = info.edits.map((e) => ({ kind: e.kind, order: e.order, f0: e.f0_hz, q: e.q, zero: e.zero_f0_hz }));
    fitView();
    buildRoots();
    buildFields();
    drawRoots();
    renderFields();
    renderDetails();
    $("scale-toggle").addEventListener("click", (ev) => {
      state.mode = state.mode === "log" ? "linear" : "log";
      ev.currentTarget.textContent = state.mode === "log" ? "log radius" : "linear";
      ev.currentTarget.setAttribute("aria-pressed", String(state.mode === "log"));
      fitView();
      drawRoots();
    });
    $("fit").addEventListener("click", () => { fitView(); drawRoots(); });
    for (const b of document.querySelectorAll("button.download")) b.addEventListener("click", () => download(b));
    send();
  }
  start();
})();
