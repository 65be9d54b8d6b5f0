// halotank page: DOM building (text only, never HTML strings from data) and number/time wording.

/** h("div", {class: "x", "data-testid": "y", onclick: fn}, child, "text", [children]) */
export function h(tag, attrs, ...children) {
  const node = document.createElement(tag);
  for (const [k, v] of Object.entries(attrs || {})) {
    if (v === undefined || v === null || v === false) continue;
    if (k.startsWith("on") && typeof v === "function") node.addEventListener(k.slice(2), v);
    else if (k === "class") node.className = v;
    else if (k === "dataset") Object.assign(node.dataset, v);
    else if (v === true) node.setAttribute(k, "");
    else node.setAttribute(k, String(v));
  }
  append(node, children);
  return node;
}

function append(node, children) {
  for (const c of children) {
    if (c === undefined || c === null || c === false) continue;
    if (Array.isArray(c)) append(node, c);
    else if (c instanceof Node) node.append(c);
    else node.append(document.createTextNode(String(c)));
  }
}

/** A small shape drawn in SVG, shown beside a word (the word carries the meaning; the shape helps scan). */
export function mark(shape, label) {
  const ns = "http://www.w3.org/2000/svg";
  const s = document.createElementNS(ns, "svg");
  s.setAttribute("viewBox", "0 0 16 16");
  s.setAttribute("class", `mark mark-${shape}`);
  s.setAttribute("aria-hidden", "true");
  const shapes = {
    up: ["path", { d: "M8 2 L14.5 13.5 H1.5 Z" }],
    down: ["path", { d: "M8 14 L14.5 2.5 H1.5 Z" }],
    level: ["rect", { x: 1.5, y: 5.5, width: 13, height: 5, rx: 1.5 }],
    ring: ["circle", { cx: 8, cy: 8, r: 5.5, "stroke-width": 2.5, fill: "none" }],
    dot: ["circle", { cx: 8, cy: 8, r: 5.5 }],
    diamond: ["path", { d: "M8 1 L15 8 L8 15 L1 8 Z" }],
    square: ["rect", { x: 2.5, y: 2.5, width: 11, height: 11 }],
    clock: ["path", { d: "M8 1.5 a6.5 6.5 0 1 0 0.01 0 Z M7 4 V9 H11.5 V7.5 H8.5 V4 Z", "fill-rule": "evenodd" }],
    check: ["path", { d: "M2 8.5 L6 12.5 L14 3.5", fill: "none", "stroke-width": 2.5 }],
    lock: ["path", { d: "M4 7 V5 a4 4 0 0 1 8 0 V7 H13 V15 H3 V7 Z M6 7 H10 V5 a2 2 0 0 0 -4 0 Z", "fill-rule": "evenodd" }],
    open: ["path", { d: "M4 7 V5 a4 4 0 0 1 7.8 -1.2 L10 4.4 A2 2 0 0 0 6 5 V7 H13 V15 H3 V7 Z" }],
  };
  const [tag, attrs] = shapes[shape] || shapes.dot;
  const child = document.createElementNS(ns, tag);
  for (const [k, v] of Object.entries(attrs)) child.setAttribute(k, String(v));
  s.append(child);
  if (!label) return s;
  const wrap = document.createElement("span");
  wrap.className = `marked marked-${shape}`;
  wrap.append(s, document.createTextNode(label));
  return wrap;
}

export function num(v, decimals) {
  return typeof v === "number" && isFinite(v) ? v.toFixed(decimals) : "–";
}

/** "42 s", "7 min", "3 h 5 min", "2 d 4 h". */
export function age(seconds) {
  if (typeof seconds !== "number" || !isFinite(seconds)) return "no reading";
  const s = Math.max(0, Math.round(seconds));
  if (s < 90) return `${s} s`;
  const min = Math.round(s / 60);
  if (min < 90) return `${min} min`;
  const hrs = Math.floor(s / 3600);
  if (hrs < 48) return `${hrs} h ${Math.round((s - hrs * 3600) / 60)} min`;
  const d = Math.floor(hrs / 24);
  return `${d} d ${hrs - d * 24} h`;
}

/** The browser's local date and time to the minute. */
export function when(iso) {
  if (!iso) return "–";
  const d = new Date(iso);
  if (isNaN(d)) return String(iso);
  const two = (n) => String(n).padStart(2, "0");
  return `${d.getFullYear()}-${two(d.getMonth() + 1)}-${two(d.getDate())} ${two(d.getHours())}:${two(d.getMinutes())}`;
}

export function ago(iso, now = Date.now()) {
  const d = new Date(iso);
  if (isNaN(d)) return "";
  return age((now - d.getTime()) / 1000) + " ago";
}

/** Alert kind `salinity_tolerance` as words. */
export function words(code) {
  return String(code || "").replace(/_/g, " ");
}

/** The shape that goes with an alert severity (text says the severity too). */
export function severityShape(severity) {
  return { critical: "diamond", warning: "up", info: "ring" }[severity] || "ring";
}
