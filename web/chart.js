// halotank page: time-series charts drawn as SVG by hand (no chart library).
//
// A chart has a time axis, a left value axis and optionally a right one. Series are told apart by line
// style (solid, dashed, dotted) and by the legend's text, never by colour alone. Bands (a species'
// optimum) are shaded areas with their edges drawn and labelled.

const SVG = "http://www.w3.org/2000/svg";

function el(name, attrs = {}, text) {
  const node = document.createElementNS(SVG, name);
  for (const [k, v] of Object.entries(attrs)) {
    if (v !== undefined && v !== null) node.setAttribute(k, String(v));
  }
  if (text !== undefined) node.textContent = text;
  return node;
}

/** About `count` round tick values covering [lo, hi]. */
export function niceTicks(lo, hi, count = 5) {
  if (!(isFinite(lo) && isFinite(hi))) return [];
  if (hi <= lo) {
    const pad = Math.abs(lo) * 0.05 || 1;
    lo -= pad;
    hi += pad;
  }
  const raw = (hi - lo) / Math.max(1, count);
  const mag = Math.pow(10, Math.floor(Math.log10(raw)));
  const step = [1, 2, 2.5, 5, 10].map((m) => m * mag).find((s) => s >= raw) || 10 * mag;
  const ticks = [];
  for (let v = Math.ceil(lo / step) * step; v <= hi + step * 1e-9; v += step) {
    ticks.push(Math.abs(v) < step * 1e-9 ? 0 : v);
  }
  return ticks;
}

const HOUR = 3600e3;
const TIME_STEPS = [
  5 * 60e3, 15 * 60e3, 30 * 60e3, HOUR, 2 * HOUR, 3 * HOUR, 6 * HOUR, 12 * HOUR, 24 * HOUR, 2 * 24 * HOUR,
  7 * 24 * HOUR, 14 * 24 * HOUR,
];

/** Time ticks (ms) for [t0, t1] at local round hours or days, about `count` of them. */
export function timeTicks(t0, t1, count = 6) {
  const span = t1 - t0;
  const step = TIME_STEPS.find((s) => span / s <= count) || TIME_STEPS[TIME_STEPS.length - 1];
  const ticks = [];
  const start = new Date(t0);
  if (step >= 24 * HOUR) start.setHours(0, 0, 0, 0);
  else start.setMinutes(0, 0, 0);
  let t = start.getTime();
  while (t < t0) t += step;
  for (; t <= t1; t += step) ticks.push(t);
  return { ticks, step };
}

function timeLabel(t, step) {
  const d = new Date(t);
  const two = (n) => String(n).padStart(2, "0");
  if (step >= 24 * HOUR) return d.toLocaleDateString(undefined, { day: "numeric", month: "short" });
  const hm = `${two(d.getHours())}:${two(d.getMinutes())}`;
  if (d.getHours() === 0 && d.getMinutes() === 0) {
    return d.toLocaleDateString(undefined, { day: "numeric", month: "short" });
  }
  return hm;
}

function extent(values) {
  let lo = Infinity;
  let hi = -Infinity;
  for (const v of values) {
    if (v === null || v === undefined || !isFinite(v)) continue;
    if (v < lo) lo = v;
    if (v > hi) hi = v;
  }
  return [lo, hi];
}

/** Splits points where the gap is far longer than the usual spacing, so missing data shows as a gap. */
function segments(points, unbroken) {
  const ok = points.filter((p) => p.v !== null && p.v !== undefined && isFinite(p.v));
  if (unbroken || ok.length < 3) return ok.length ? [ok] : [];
  const gaps = [];
  for (let i = 1; i < ok.length; i++) gaps.push(ok[i].t - ok[i - 1].t);
  const sorted = [...gaps].sort((a, b) => a - b);
  const usual = sorted[Math.floor(sorted.length / 2)] || 0;
  const out = [[ok[0]]];
  for (let i = 1; i < ok.length; i++) {
    if (usual > 0 && gaps[i - 1] > usual * 5) out.push([]);
    out[out.length - 1].push(ok[i]);
  }
  return out;
}

/** A tick label with as many decimals as the tick step needs (2.5 -> one, 0.25 -> two). */
function fmtTick(v, step) {
  let decimals = 0;
  while (decimals < 3 && Math.abs(step * 10 ** decimals - Math.round(step * 10 ** decimals)) > 1e-6) decimals++;
  return v.toFixed(decimals);
}

/**
 * Draws a chart into `host` (replacing its content) at the host's width.
 *
 * opts: {
 *   title, height, from, to (ms),
 *   left: {label, unit}, right: {label, unit}?,
 *   series: [{label, axis: "left"|"right", style: "solid"|"dashed"|"dotted", cls, points: [{t, v}],
 *             noLegend? (a further part of a series already in the legend),
 *             stepped (hold each value until the next point), unbroken (never split at long gaps)}],
 *   now: ms, drawn as a marked vertical line when inside the range,
 *   envelopes: [{label, axis, cls, points: [{t, lo, hi}]}],
 *   bands: [{label, axis, cls, lo, hi}],
 *   empty: text shown when no series has a point
 * }
 */
export function drawChart(host, opts) {
  host.replaceChildren();
  const width = Math.max(280, Math.floor(host.clientWidth || 640));
  const height = opts.height || 280;
  const narrow = width < 480;
  const m = { top: 16, right: opts.right ? (narrow ? 46 : 58) : 14, bottom: 34, left: narrow ? 46 : 58 };
  const w = width - m.left - m.right;
  const h = height - m.top - m.bottom;
  const svg = el("svg", {
    class: "chart",
    width,
    height,
    viewBox: `0 0 ${width} ${height}`,
    role: "img",
    "aria-label": opts.title || "chart",
  });

  const series = opts.series || [];
  const envelopes = opts.envelopes || [];
  const bands = opts.bands || [];
  const hasData = series.some((s) => s.points.some((p) => p.v !== null && isFinite(p.v)));

  const t0 = opts.from;
  const t1 = opts.to > opts.from ? opts.to : opts.from + HOUR;
  const x = (t) => m.left + ((t - t0) / (t1 - t0)) * w;

  function axisDomain(axis) {
    const vals = [];
    for (const s of series) if (s.axis === axis) for (const p of s.points) vals.push(p.v);
    for (const e of envelopes) if (e.axis === axis) for (const p of e.points) vals.push(p.lo, p.hi);
    for (const b of bands) if (b.axis === axis && b.inDomain !== false) vals.push(b.lo, b.hi);
    let [lo, hi] = extent(vals);
    if (!isFinite(lo)) return null;
    const pad = (hi - lo) * 0.08 || Math.max(Math.abs(hi) * 0.02, 0.5);
    lo -= pad;
    hi += pad;
    const ticks = niceTicks(lo, hi, narrow ? 4 : 5);
    const step = ticks.length > 1 ? ticks[1] - ticks[0] : 1;
    lo = Math.min(lo, ticks[0] ?? lo);
    hi = Math.max(hi, ticks[ticks.length - 1] ?? hi);
    return { lo, hi, ticks, step, y: (v) => m.top + h - ((v - lo) / (hi - lo)) * h };
  }
  const axes = { left: axisDomain("left"), right: null };
  if (opts.right && opts.right.fromLeft && axes.left) {
    // The right axis is the left one in other units (a linear map): both lines share one picture.
    const f = opts.right.fromLeft;
    const a = f(axes.left.lo);
    const b = f(axes.left.hi);
    if (isFinite(a) && isFinite(b) && b !== a) {
      const ticks = niceTicks(a, b, narrow ? 4 : 5).filter((v) => v >= Math.min(a, b) && v <= Math.max(a, b));
      axes.right = { lo: a, hi: b, ticks, step: ticks.length > 1 ? ticks[1] - ticks[0] : 1, y: (v) => m.top + h - ((v - a) / (b - a)) * h };
    }
  }
  if (opts.right && !axes.right) axes.right = axisDomain("right");

  // Frame and grid.
  svg.append(el("rect", { class: "plot-bg", x: m.left, y: m.top, width: w, height: h }));
  const grid = el("g", { class: "grid" });
  const { ticks: tt, step: tstep } = timeTicks(t0, t1, narrow ? 3 : 6);
  for (const t of tt) {
    grid.append(el("line", { x1: x(t), x2: x(t), y1: m.top, y2: m.top + h }));
    svg.append(el("text", { class: "tick", x: x(t), y: m.top + h + 20, "text-anchor": "middle" }, timeLabel(t, tstep)));
  }
  if (axes.left) {
    for (const v of axes.left.ticks) {
      const yy = axes.left.y(v);
      grid.append(el("line", { x1: m.left, x2: m.left + w, y1: yy, y2: yy }));
      svg.append(el("text", { class: "tick", x: m.left - 6, y: yy + 4, "text-anchor": "end" }, fmtTick(v, axes.left.step)));
    }
  }
  if (axes.right) {
    for (const v of axes.right.ticks) {
      const yy = axes.right.y(v);
      svg.append(el("text", { class: "tick right", x: m.left + w + 6, y: yy + 4, "text-anchor": "start" }, fmtTick(v, axes.right.step)));
    }
  }
  svg.prepend(grid);
  svg.prepend(svg.querySelector(".plot-bg"));

  // Axis titles.
  if (opts.left) {
    svg.append(el("text", { class: "axis-title", x: 4, y: 11 }, opts.left.label));
  }
  if (opts.right) {
    svg.append(el("text", { class: "axis-title", x: width - 4, y: 11, "text-anchor": "end" }, opts.right.label));
  }

  const clipId = "clip-" + Math.random().toString(36).slice(2);
  const defs = el("defs");
  const clip = el("clipPath", { id: clipId });
  clip.append(el("rect", { x: m.left, y: m.top, width: w, height: h }));
  defs.append(clip);
  svg.append(defs);
  const plot = el("g", { "clip-path": `url(#${clipId})` });
  svg.append(plot);

  // Bands: shaded, with both edges drawn and the band's name written inside.
  for (const b of bands) {
    const a = axes[b.axis];
    if (!a || !isFinite(b.lo) || !isFinite(b.hi)) continue;
    const y1 = a.y(b.hi);
    const y2 = a.y(b.lo);
    plot.append(el("rect", { class: `band ${b.cls || ""}`, x: m.left, y: y1, width: w, height: Math.max(1, y2 - y1) }));
    plot.append(el("line", { class: `band-edge ${b.cls || ""}`, x1: m.left, x2: m.left + w, y1, y2: y1 }));
    plot.append(el("line", { class: `band-edge ${b.cls || ""}`, x1: m.left, x2: m.left + w, y1: y2, y2 }));
    if (b.inDomain !== false) {
      plot.append(el("text", { class: "band-label", x: m.left + 6, y: Math.max(y1 + 13, Math.min(y2 - 4, y1 + 14)) }, b.label));
    }
  }

  for (const e of envelopes) {
    const a = axes[e.axis];
    if (!a) continue;
    const pts = e.points.filter((p) => isFinite(p.lo) && isFinite(p.hi));
    if (pts.length < 2) continue;
    const upper = pts.map((p) => `${x(p.t).toFixed(1)},${a.y(p.hi).toFixed(1)}`);
    const lower = pts.map((p) => `${x(p.t).toFixed(1)},${a.y(p.lo).toFixed(1)}`).reverse();
    plot.append(el("polygon", { class: `envelope ${e.cls || ""}`, points: upper.concat(lower).join(" ") }));
  }

  for (const s of series) {
    const a = axes[s.axis];
    if (!a) continue;
    for (const seg of segments(s.points, s.stepped || s.unbroken)) {
      let d = "";
      seg.forEach((p, i) => {
        const px = x(p.t).toFixed(1);
        const py = a.y(p.v).toFixed(1);
        if (i === 0) d += `M${px},${py}`;
        else if (s.stepped) d += `H${px}V${py}`;
        else d += `L${px},${py}`;
      });
      if (s.stepped && seg.length) d += `H${x(t1).toFixed(1)}`;
      if (seg.length === 1) {
        plot.append(el("circle", { class: `dot ${s.cls || ""}`, cx: x(seg[0].t), cy: a.y(seg[0].v), r: 3 }));
      } else {
        plot.append(el("path", { class: `line ${s.style || "solid"} ${s.cls || ""}`, d }));
      }
    }
  }

  // "now", when the chart also shows what is planned ahead.
  if (opts.now && opts.now > t0 && opts.now < t1) {
    const nx = x(opts.now);
    svg.append(el("line", { class: "now-line", x1: nx, x2: nx, y1: m.top, y2: m.top + h }));
    svg.append(el("text", { class: "now-label", x: nx + 4, y: m.top + h - 6 }, "now"));
  }

  if (!hasData) {
    svg.append(el("text", { class: "empty", x: m.left + w / 2, y: m.top + h / 2, "text-anchor": "middle" }, opts.empty || "no readings in this range"));
  }

  svg.append(el("rect", { class: "frame", x: m.left, y: m.top, width: w, height: h }));

  const figure = document.createElement("figure");
  figure.className = "chart-figure";
  if (opts.title) {
    const cap = document.createElement("figcaption");
    cap.textContent = opts.title;
    figure.append(cap);
  }
  figure.append(svg);
  figure.append(legend(series, envelopes, bands));
  host.append(figure);
}

/** The legend: a line sample in the series' own style and its name in words. */
function legend(series, envelopes, bands) {
  const ul = document.createElement("ul");
  ul.className = "legend";
  const sample = (draw) => {
    const s = el("svg", { width: 30, height: 12, "aria-hidden": "true" });
    s.append(draw());
    return s;
  };
  for (const s of series) {
    if (s.noLegend) continue;
    const li = document.createElement("li");
    li.append(sample(() => el("line", { class: `line ${s.style || "solid"} ${s.cls || ""}`, x1: 1, x2: 29, y1: 6, y2: 6 })));
    li.append(document.createTextNode(s.label));
    ul.append(li);
  }
  for (const e of envelopes) {
    if (!e.points.length) continue;
    const li = document.createElement("li");
    li.append(sample(() => el("rect", { class: `envelope ${e.cls || ""}`, x: 1, y: 2, width: 28, height: 8 })));
    li.append(document.createTextNode(e.label));
    ul.append(li);
  }
  for (const b of bands) {
    if (!isFinite(b.lo) || !isFinite(b.hi)) continue;
    const li = document.createElement("li");
    li.append(sample(() => el("rect", { class: `band swatch ${b.cls || ""}`, x: 1, y: 1, width: 28, height: 10 })));
    li.append(document.createTextNode(b.label));
    ul.append(li);
  }
  return ul;
}
