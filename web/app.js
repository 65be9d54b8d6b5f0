// halotank page: the shell (navigation, unlock, notices), hash routing and the four views:
// #/ overview, #/tank/ID, #/alerts, #/plan.
import { api, ApiError, token, setToken, onTokenChange } from "./api.js";
import { drawChart } from "./chart.js";
import { h, mark, num, age, when, ago, words, severityShape } from "./dom.js";

const POLL_MS = 5000;
const view = document.getElementById("view");
const notice = document.getElementById("notice");

// ---------------------------------------------------------------- notices

let noticeTimer = null;
/** Shows a message under the header; `kind` is "error", "ok" or "info" and is written out too. */
function say(kind, text, { sticky = false } = {}) {
  clearTimeout(noticeTimer);
  const label = { error: "Problem", ok: "Done", info: "Note" }[kind] || "Note";
  const shape = { error: "diamond", ok: "check", info: "ring" }[kind] || "ring";
  notice.replaceChildren(
    h("div", { class: `notice notice-${kind}`, "data-kind": kind }, mark(shape), h("strong", {}, label + ": "), text,
      h("button", { class: "link", type: "button", "aria-label": "dismiss", onclick: () => notice.replaceChildren() }, "dismiss")),
  );
  if (!sticky) noticeTimer = setTimeout(() => notice.replaceChildren(), kind === "error" ? 20000 : 8000);
}

function explain(err) {
  if (err instanceof ApiError) {
    if (err.status === 401) setToken("");
    return err.message;
  }
  return String((err && err.message) || err);
}

// Cancel buttons are plain buttons, so Enter in a field submits the dialog's confirming button.
for (const b of document.querySelectorAll("dialog [data-close]")) {
  b.addEventListener("click", () => b.closest("dialog").close("cancel"));
}

// ---------------------------------------------------------------- unlock

const unlockButton = document.getElementById("unlock");
const unlockDialog = document.getElementById("unlock-dialog");
const tokenInput = document.getElementById("token-input");
let unlockWaiter = null;

function showLockState(unlocked) {
  unlockButton.replaceChildren(mark(unlocked ? "open" : "lock"), unlocked ? "Unlocked" : "Unlock");
  unlockButton.setAttribute("aria-pressed", unlocked ? "true" : "false");
  unlockButton.title = unlocked
    ? "Changes are allowed in this browser session. Click to lock (forget the token)."
    : "Enter the daemon's HTTP token to acknowledge alerts and run schedules.";
}
onTokenChange(showLockState);
showLockState(Boolean(token()));

function askToken() {
  return new Promise((resolve, reject) => {
    unlockWaiter = { resolve, reject };
    tokenInput.value = "";
    unlockDialog.returnValue = ""; // Escape keeps the last value: start each opening from "not confirmed"
    unlockDialog.showModal();
    tokenInput.focus();
  });
}

unlockButton.addEventListener("click", () => {
  if (token()) {
    setToken("");
    say("info", "Locked: the token is forgotten in this browser.");
  } else {
    askToken().then(
      () => say("ok", "Unlocked for this browser session."),
      () => {},
    );
  }
});

unlockDialog.addEventListener("close", () => {
  const w = unlockWaiter;
  unlockWaiter = null;
  const value = tokenInput.value.trim();
  tokenInput.value = "";
  if (unlockDialog.returnValue === "ok" && value) {
    setToken(value);
    if (w) w.resolve();
  } else if (w) {
    w.reject(new Error("cancelled"));
  }
});

/** Runs a state-changing call, asking for the token first when there is none; 401 asks to unlock again. */
async function withToken(action) {
  if (!token()) {
    try {
      await askToken();
    } catch (_) {
      say("info", "Not sent: this action needs the token (Unlock).");
      return undefined;
    }
  }
  try {
    return await action();
  } catch (err) {
    say("error", explain(err), { sticky: err instanceof ApiError && err.status === 401 });
    return undefined;
  }
}

// ---------------------------------------------------------------- shared pieces

const nameDialog = document.getElementById("name-dialog");
const nameInput = document.getElementById("name-input");

/** Asks who does a change (once; the name is remembered in this browser); "" when cancelled. */
function askName(title) {
  return new Promise((resolve) => {
    document.getElementById("name-title").textContent = title;
    nameInput.value = person();
    nameDialog.returnValue = "";
    nameDialog.addEventListener(
      "close",
      () => {
        const name = nameInput.value.trim();
        if (nameDialog.returnValue === "ok" && name) {
          rememberPerson(name);
          resolve(name);
        } else resolve("");
      },
      { once: true },
    );
    nameDialog.showModal();
    nameInput.focus();
  });
}

function person() {
  try {
    return localStorage.getItem("halotank.name") || "";
  } catch (_) {
    return "";
  }
}
function rememberPerson(name) {
  try {
    localStorage.setItem("halotank.name", name);
  } catch (_) {
    /* not kept */
  }
}

const TONICITY = {
  hyperosmotic: { shape: "up", label: "Hyperosmotic" },
  isosmotic: { shape: "level", label: "Isosmotic" },
  hypoosmotic: { shape: "down", label: "Hypoosmotic" },
  hyposmotic: { shape: "down", label: "Hypoosmotic" },
};

function movementWords(t) {
  const m = t && t.water_movement;
  return (
    {
      into_animal: "water moves into the animal",
      out_of_animal: "water moves out of the animal",
      little_net_movement: "little net water movement",
      follows_water: "body fluids follow the water",
    }[m] || (m ? words(m) : "")
  );
}

function tonicityLine(t, hasSpecies) {
  if (!t) {
    const why = hasSpecies ? "Tonicity not assessed for this reading" : "No species set: tonicity not known";
    return h("p", { class: "tonicity muted", "data-testid": "tonicity", "data-tonicity": "none" }, why);
  }
  const kind = TONICITY[t.tonicity];
  const plasma = t.plasma_osmolality_mOsm_kg;
  const head = kind
    ? h("span", { class: `tone tone-${t.tonicity}` }, mark(kind.shape), kind.label, plasma ? ` to plasma (${num(plasma, 0)} mOsm/kg)` : "")
    : h("span", { class: "tone" }, mark("ring"), "Osmoconformer");
  return h(
    "p",
    { class: "tonicity", "data-testid": "tonicity", "data-tonicity": t.tonicity || "conformer", title: t.message || "" },
    head,
    h("span", { class: "movement" }, movementWords(t)),
  );
}

/** Where the salinity sits against the species' tolerance and optimum: a drawn scale and words. */
function rangeGauge(sp, limits) {
  const opt = limits && limits.optimum_practical_salinity;
  const tol = limits && limits.tolerance_practical_salinity;
  if (!opt && !tol) return null;
  let verdict = "";
  let shape = "ring";
  if (typeof sp === "number") {
    if (tol && (sp < tol[0] || sp > tol[1])) {
      verdict = "outside tolerance";
      shape = "diamond";
    } else if (opt && (sp < opt[0] || sp > opt[1])) {
      verdict = "outside optimum";
      shape = "up";
    } else if (opt) {
      verdict = "within optimum";
      shape = "check";
    } else {
      verdict = "within tolerance";
      shape = "check";
    }
  }
  const lo = Math.min(...[tol && tol[0], opt && opt[0], sp].filter((v) => typeof v === "number"));
  const hi = Math.max(...[tol && tol[1], opt && opt[1], sp].filter((v) => typeof v === "number"));
  const span = hi - lo || 1;
  const pct = (v) => `${(((v - lo) / span) * 100).toFixed(1)}%`;
  const track = h("div", { class: "gauge-track", "aria-hidden": "true" });
  if (tol) {
    const t = h("div", { class: "gauge-tol" });
    t.style.left = pct(tol[0]);
    t.style.width = `calc(${pct(tol[1])} - ${pct(tol[0])})`;
    track.append(t);
  }
  if (opt) {
    const o = h("div", { class: "gauge-opt" });
    o.style.left = pct(opt[0]);
    o.style.width = `calc(${pct(opt[1])} - ${pct(opt[0])})`;
    track.append(o);
  }
  if (typeof sp === "number") {
    const p = h("div", { class: "gauge-pin" });
    p.style.left = pct(sp);
    track.append(p);
  }
  const bounds = [];
  if (opt) bounds.push(`optimum ${num(opt[0], 1)}–${num(opt[1], 1)}`);
  if (tol) bounds.push(`tolerance ${num(tol[0], 1)}–${num(tol[1], 1)}`);
  return h(
    "div",
    { class: `gauge verdict-${shape}`, "data-testid": "range", "data-verdict": verdict || "unknown" },
    track,
    h("p", { class: "gauge-words" }, verdict ? mark(shape, verdict) : null, h("span", { class: "muted" }, ` SP ${bounds.join(", ")}`)),
  );
}

function alertLine(a) {
  return h(
    "li",
    { class: `alert-line sev-${a.severity}`, "data-alert-id": a.id },
    mark(severityShape(a.severity)),
    h("span", { class: "sev-word" }, a.severity),
    "\u00a0",
    h("span", {}, words(a.kind)),
    a.state === "acknowledged" ? h("span", { class: "muted" }, "\u00a0· acknowledged") : null,
    a.state === "cleared_unacknowledged" ? h("span", { class: "muted" }, "\u00a0· cleared, awaiting ack") : null,
  );
}

function aheadBehind(p) {
  const n = p.steps_ahead || 0;
  if (n === 0) return "on time";
  const k = Math.abs(n);
  return `${k} step${k === 1 ? "" : "s"} ${n > 0 ? "ahead" : "behind"}`;
}

function scheduleBlock(p) {
  if (!p) return null;
  const total = p.steps_total || 0;
  const done = p.steps_done || 0;
  const bar = h("progress", { max: total || 1, value: done, "aria-label": `${done} of ${total} steps done` });
  const next = p.next_step;
  return h(
    "div",
    { class: "schedule", "data-testid": "schedule-progress", "data-steps-done": done, "data-steps-total": total },
    h("p", { class: "schedule-head" },
      h("strong", {}, `Schedule ${p.schedule_id ?? ""}`), ` · ${p.state} · step ${done} of ${total} · `,
      h("span", { class: p.steps_ahead < 0 ? "behind" : "" }, p.steps_ahead < 0 ? mark("up") : null, aheadBehind(p))),
    bar,
    h("p", { class: "muted" },
      `setpoint now SP ${num(p.setpoint_practical_salinity, 2)}`,
      next ? ` · next: step ${next.step} ${next.overdue ? "overdue since" : "due"} ${when(next.due)} (SP ${num(next.setpoint_practical_salinity, 2)})` : "",
    ),
  );
}

/** One tank card (overview and the head of the tank view). */
function tankCard(card, { link = true } = {}) {
  const l = card.latest;
  const stale = Boolean(card.stale);
  const species = card.species;
  const title = link ? h("a", { href: `#/tank/${encodeURIComponent(card.id)}` }, card.name || card.id) : card.name || card.id;
  let status;
  if (!l) status = h("p", { class: "status status-none", "data-testid": "age" }, mark("ring"), "No reading yet");
  else if (stale) {
    status = h("p", { class: "status status-stale", "data-testid": "age" },
      h("span", { class: "stale-flag", "data-testid": "stale" }, mark("clock"), "PROBE STALE"),
      ` last reading ${age(card.age_s)} ago`);
  } else status = h("p", { class: "status", "data-testid": "age" }, mark("dot"), `reading ${age(card.age_s)} old`);

  const value = (testid, label, v, decimals, unit) =>
    h("div", { class: "value" },
      h("span", { class: "value-label" }, label),
      h("span", { class: "value-num", "data-testid": testid, "data-value": typeof v === "number" ? String(v) : "" }, num(v, decimals)),
      h("span", { class: "value-unit" }, unit));

  const alerts = card.open_alerts || [];
  return h(
    "article",
    { class: `card${stale ? " is-stale" : ""}${alerts.length ? " has-alerts" : ""}`, "data-testid": "tank-card", "data-tank": card.id, "data-stale": String(stale) },
    h("header", { class: "card-head" },
      h("h2", { "data-testid": "tank-name" }, title),
      h("p", { class: "species", "data-testid": "species" },
        species ? [h("strong", {}, species.common_name), species.stage ? `, ${species.stage}` : ""] : "no species set",
        h("span", { class: "tank-id" }, ` · ${card.id}`))),
    status,
    h("div", { class: "values" },
      value("salinity", "Salinity SP", l && l.practical_salinity, 2, "PSS-78"),
      value("osmolality", "Osmolality", l && l.osmolality_mOsm_kg, 0, "mOsm/kg"),
      value("temperature", "Temperature", l && l.temperature_C, 1, "°C")),
    l ? tonicityLine(l.tonicity, Boolean(species)) : null,
    l ? rangeGauge(l.practical_salinity, card.limits) : null,
    h("div", { class: "card-alerts", "data-testid": "card-alerts", "data-count": alerts.length },
      alerts.length
        ? [h("p", { class: "alerts-head" }, mark("diamond"), `${alerts.length} open alert${alerts.length === 1 ? "" : "s"}`),
           h("ul", {}, alerts.slice(0, 3).map(alertLine))]
        : h("p", { class: "muted" }, mark("check"), "no open alerts")),
    scheduleBlock(card.schedule),
  );
}

function updatedStamp(text) {
  const s = document.getElementById("updated");
  if (s) s.textContent = text;
}

function setAlertCount(n) {
  const c = document.querySelector('[data-testid="nav-alert-count"]');
  if (c) c.textContent = n ? ` ${n} open` : "";
}

/** Calls `fn` now and every `ms` until the view is left; failures are shown, polling goes on. */
function poller(fn, ms) {
  let timer = null;
  let stopped = false;
  let failing = false;
  const tick = async () => {
    try {
      await fn();
      if (failing) say("ok", "Connection to the server is back.");
      failing = false;
    } catch (err) {
      if (!failing) say("error", explain(err) + " Retrying every few seconds.", { sticky: true });
      failing = true;
      updatedStamp("not updating: server unreachable");
    }
    if (!stopped) timer = setTimeout(tick, ms);
  };
  tick();
  return () => {
    stopped = true;
    clearTimeout(timer);
  };
}

// ---------------------------------------------------------------- overview

function overview() {
  const grid = h("div", { class: "cards", "data-testid": "cards" });
  const summary = h("p", { class: "summary muted" }, "Loading tanks…");
  view.replaceChildren(h("h1", {}, "Tanks"), summary, grid);
  const cards = new Map();
  return poller(async () => {
    const data = await api.tanks();
    const tanks = (data && data.tanks) || [];
    const seen = new Set();
    let open = 0;
    let stale = 0;
    tanks.forEach((t, i) => {
      seen.add(t.id);
      open += (t.open_alerts || []).length;
      if (t.stale) stale += 1;
      const fresh = tankCard(t);
      const old = cards.get(t.id);
      if (old) old.replaceWith(fresh);
      else grid.append(fresh);
      if (grid.children[i] !== fresh) grid.insertBefore(fresh, grid.children[i] || null);
      cards.set(t.id, fresh);
    });
    for (const [id, node] of cards) {
      if (!seen.has(id)) {
        node.remove();
        cards.delete(id);
      }
    }
    setAlertCount(open);
    summary.replaceChildren(
      `${tanks.length} tank${tanks.length === 1 ? "" : "s"}`,
      " · ", open ? mark("diamond", `${open} open alert${open === 1 ? "" : "s"}`) : "no open alerts",
      " · ", stale ? mark("clock", `${stale} stale probe${stale === 1 ? "" : "s"}`) : "all probes reporting",
    );
    updatedStamp(`updated ${new Date().toLocaleTimeString()}`);
  }, POLL_MS);
}

// ---------------------------------------------------------------- tank view

const RANGES = [
  ["6h", 6], ["24h", 24], ["3d", 72], ["7d", 168], ["14d", 336], ["30d", 720],
];

function tankView(id) {
  let hours = 24;
  let custom = null;
  const head = h("div", { class: "tank-head" }, h("p", { class: "muted" }, "Loading…"));
  const rangeBar = h("div", { class: "ranges", role: "group", "aria-label": "chart range" });
  const fromInput = h("input", { type: "datetime-local", "aria-label": "from", "data-testid": "range-from" });
  const toInput = h("input", { type: "datetime-local", "aria-label": "to", "data-testid": "range-to" });
  const customForm = h("form", { class: "custom-range", onsubmit: (e) => {
    e.preventDefault();
    const f = new Date(fromInput.value);
    const t = toInput.value ? new Date(toInput.value) : new Date();
    if (isNaN(f) || isNaN(t) || f >= t) {
      say("error", "Choose a 'from' time before the 'to' time.");
      return;
    }
    custom = [f, t];
    markRange();
    loadCharts();
  } }, h("label", {}, "from ", fromInput), h("label", {}, "to ", toInput), h("button", { type: "submit" }, "Show"));
  for (const [label, hrs] of RANGES) {
    rangeBar.append(h("button", { type: "button", "data-hours": hrs, "data-testid": `range-${label}`, onclick: () => {
      hours = hrs;
      custom = null;
      markRange();
      loadCharts();
    } }, label));
  }
  function markRange() {
    for (const b of rangeBar.querySelectorAll("button")) {
      b.setAttribute("aria-pressed", String(!custom && Number(b.dataset.hours) === hours));
    }
  }
  markRange();
  const chartSal = h("div", { class: "chart-host", "data-testid": "chart-salinity" });
  const chartTemp = h("div", { class: "chart-host", "data-testid": "chart-temperature" });
  const chartOsm = h("div", { class: "chart-host", "data-testid": "chart-osmolality" });
  const chartNote = h("p", { class: "muted chart-note" });
  const scheduleBox = h("section", { class: "panel", "data-testid": "schedule-panel" }, h("h2", {}, "Schedule"), h("p", { class: "muted" }, "Loading…"));
  const historyBox = h("section", { class: "panel", "data-testid": "alert-history" }, h("h2", {}, "Alert history"), h("p", { class: "muted" }, "Loading…"));

  view.replaceChildren(
    h("p", { class: "crumbs" }, h("a", { href: "#/" }, "← all tanks")),
    head,
    h("section", { class: "panel" }, h("h2", {}, "Salinity, osmolality and temperature"), rangeBar, customForm, chartNote, chartSal, chartOsm, chartTemp),
    scheduleBox,
    historyBox,
  );

  let card = null;
  let history = null;
  let shown = [0, 0];

  async function loadCard() {
    card = await api.tank(id);
    head.replaceChildren(tankCard(card, { link: false }));
  }

  function range() {
    if (custom) return custom;
    const to = new Date();
    return [new Date(to.getTime() - hours * 3600e3), to];
  }

  let asked = 0;
  async function loadCharts() {
    const [from, to] = range();
    const mine = ++asked;
    chartNote.textContent = "Loading history…";
    try {
      const answer = await api.history(id, from.toISOString(), to.toISOString(), 800);
      if (mine !== asked) return; // a later range was chosen meanwhile
      history = answer;
      shown = [from.getTime(), to.getTime()];
      renderCharts(...shown);
    } catch (err) {
      chartNote.textContent = "";
      say("error", explain(err));
    }
  }

  function renderCharts(from, to) {
    if (!history) return;
    const pts = history.points || [];
    const t = (p) => new Date(p.time).getTime();
    const limits = (card && card.limits) || {};
    const opt = limits.optimum_practical_salinity;
    const tol = limits.tolerance_practical_salinity;
    const topt = limits.optimum_temperature_C;
    const sp = history.setpoint || [];
    chartNote.textContent = `${pts.length} point${pts.length === 1 ? "" : "s"}${history.downsampled ? " (averaged per interval; the pale area spans each interval's lowest and highest salinity)" : ""}.`;
    // A running schedule's planned setpoints ahead of now widen the charts by up to half the range.
    const now = Date.now();
    const ahead = Math.max(0, ...sp.map((p) => t(p)).filter((x) => x > to));
    if (ahead > to && to >= now - 60000) {
      to = Math.min(ahead, to + (to - from) / 2);
      chartNote.textContent += " Right of the “now” line: the schedule's planned setpoint.";
    }
    drawChart(chartSal, {
      title: "Practical salinity",
      from,
      to,
      now,
      height: 280,
      left: { label: "SP" },
      bands: [
        tol ? { label: `tolerance SP ${tol[0]}–${tol[1]}`, axis: "left", cls: "band-tol", lo: tol[0], hi: tol[1], inDomain: false } : null,
        opt ? { label: `optimum SP ${opt[0]}–${opt[1]}`, axis: "left", cls: "band-opt", lo: opt[0], hi: opt[1] } : null,
      ].filter(Boolean),
      envelopes: history.downsampled
        ? [{ label: "lowest–highest SP per interval", axis: "left", cls: "env-sal", points: pts.filter((p) => p.min_practical_salinity !== undefined).map((p) => ({ t: t(p), lo: p.min_practical_salinity, hi: p.max_practical_salinity })) }]
        : [],
      series: [
        { label: "salinity SP (solid)", axis: "left", style: "solid", cls: "s-sal", points: pts.map((p) => ({ t: t(p), v: p.practical_salinity })) },
        // One line per schedule, so an ended schedule and the next are never joined.
        ...[...new Set(sp.map((p) => p.schedule_id))].map((id, i) => ({
          label: "schedule setpoint SP (dotted)", noLegend: i > 0, axis: "left", style: "dotted", cls: "s-set", unbroken: true,
          points: sp.filter((p) => p.schedule_id === id).map((p) => ({ t: t(p), v: p.practical_salinity })),
        })),
      ].filter(Boolean),
    });
    // Osmolality against the animal's plasma: above the band the water is hyperosmotic, below hypoosmotic.
    const ton = card && card.latest && card.latest.tonicity;
    const plasma = ton && ton.plasma_osmolality_mOsm_kg;
    const band = ton && ton.isosmotic_band_mOsm_kg;
    drawChart(chartOsm, {
      title: "Osmolality of the water",
      from,
      to,
      now,
      height: 220,
      left: { label: "mOsm/kg" },
      bands: plasma && band ? [{ label: `isosmotic with plasma ${Math.round(plasma - band)}–${Math.round(plasma + band)} mOsm/kg`, axis: "left", cls: "band-iso", lo: plasma - band, hi: plasma + band }] : [],
      series: [
        { label: "osmolality mOsm/kg (solid)", axis: "left", style: "solid", cls: "s-osm", points: pts.map((p) => ({ t: t(p), v: p.osmolality_mOsm_kg })) },
        plasma ? { label: `plasma ${Math.round(plasma)} mOsm/kg (dashed)`, axis: "left", style: "dashed", cls: "s-set", points: [{ t: from, v: plasma }, { t: to, v: plasma }] } : null,
      ].filter(Boolean),
    });
    drawChart(chartTemp, {
      title: "Temperature",
      from,
      to,
      now,
      height: 200,
      left: { label: "°C" },
      bands: topt ? [{ label: `optimum ${topt[0]}–${topt[1]} °C`, axis: "left", cls: "band-opt", lo: topt[0], hi: topt[1] }] : [],
      series: [{ label: "temperature °C (solid)", axis: "left", style: "solid", cls: "s-temp", points: pts.map((p) => ({ t: t(p), v: p.temperature_C })) }],
    });
  }

  async function loadSchedule() {
    const list = await api.schedules({ tank: id, state: "all" });
    const items = (list && list.schedules) || [];
    // The open schedule, else the latest one (completed or aborted) so its record stays in view.
    const isOpen = (x) => ["active", "paused"].includes((x.state && x.state.state) || x.state || (x.progress && x.progress.state));
    const pick = items.find(isOpen) || items[items.length - 1];
    if (!pick) {
      scheduleBox.replaceChildren(h("h2", {}, "Schedule"), h("p", { class: "muted" }, "No schedule runs on this tank. ", h("a", { href: `#/plan?tank=${encodeURIComponent(id)}` }, "Make a plan"), " to start one."));
      return;
    }
    const detail = await api.schedule(pick.id);
    const title = isOpen(pick) ? "Schedule" : "Last schedule";
    scheduleBox.replaceChildren(h("div", {}, h("h2", {}, title), scheduleDetail(detail, reloadSchedule),
      isOpen(pick) ? null : h("p", {}, h("a", { href: `#/plan?tank=${encodeURIComponent(id)}` }, "Make a new plan"))));
  }
  const reloadSchedule = () => loadSchedule().catch((err) => say("error", explain(err)));

  async function loadAlertHistory() {
    const data = await api.alerts({ tank: id, state: "all", limit: 50 });
    historyBox.replaceChildren(h("h2", {}, "Alert history"), alertTable((data && data.alerts) || [], { showTank: false, onChange: () => loadAlertHistory() }));
  }

  let lastWidth = 0;
  const onResize = () => {
    const w = chartSal.clientWidth;
    if (w && Math.abs(w - lastWidth) > 20 && history) {
      lastWidth = w;
      renderCharts(...shown);
    }
  };
  window.addEventListener("resize", onResize);

  const stopCard = poller(async () => {
    const first = !card;
    await loadCard();
    if (first) {
      loadCharts();
      reloadSchedule();
      loadAlertHistory().catch((err) => say("error", explain(err)));
    }
  }, POLL_MS);
  const slow = setInterval(() => {
    if (!custom) loadCharts();
    reloadSchedule();
    loadAlertHistory().catch(() => {});
  }, 60000);
  return () => {
    stopCard();
    clearInterval(slow);
    window.removeEventListener("resize", onResize);
  };
}

/**
 * The least-squares line y = a + b x through `pairs` as a function, or null with fewer than two distinct x.
 * Osmolality is close to linear in salinity at one temperature, so a right axis in mOsm/kg drawn from the
 * salinity axis through this fit reads correctly to within the chart's resolution.
 */
function linearFit(pairs) {
  const ok = pairs.filter(([x, y]) => isFinite(x) && isFinite(y));
  if (ok.length < 2) return null;
  const n = ok.length;
  const mx = ok.reduce((s, [x]) => s + x, 0) / n;
  const my = ok.reduce((s, [, y]) => s + y, 0) / n;
  let sxx = 0;
  let sxy = 0;
  for (const [x, y] of ok) {
    sxx += (x - mx) * (x - mx);
    sxy += (x - mx) * (y - my);
  }
  if (sxx < 1e-9) return null;
  const b = sxy / sxx;
  return (x) => my + b * (x - mx);
}

/** What a plan step asks staff to do, in words. */
function stepAction(s) {
  if (s.kind === "hold") return `hold at SP ${num(s.setpoint_practical_salinity, 2)}`;
  const parts = [];
  if (s.drain_L > 0) parts.push(`drain ${num(s.drain_L, 1)} L`);
  if (s.salt_kg > 0) parts.push(`dissolve ${num(s.salt_kg, 2)} kg salt`);
  if (s.add_L > 0) parts.push(`add ${num(s.add_L, 1)} L`);
  if (typeof s.flow_L_min === "number") parts.push(`set inflow ${num(s.flow_L_min, 2)} L/min`);
  return parts.join(", ") || "change";
}

/** Whether a step's moved due time differs from its planned time by a minute or more. */
function moved(due, planned) {
  if (!due) return false;
  return Math.abs(new Date(due).getTime() - new Date(planned).getTime()) >= 60000;
}

function stepTable(steps, { due = [], done = [], nextStep = null, onDone = null } = {}) {
  const rows = steps.map((s, i) => {
    const d = done.find((x) => x.step === s.index);
    const isNext = nextStep === s.index;
    let status;
    if (d) status = h("span", { class: "done" }, mark("check", "done"), h("span", { class: "muted" }, ` ${d.by}, ${when(d.done_at)}`));
    else if (isNext && onDone) {
      status = h("button", { type: "button", class: "primary", "data-testid": "step-done", "data-step": s.index, onclick: () => onDone(s.index) }, "Step done");
    } else status = h("span", { class: "muted" }, "to do");
    return h(
      "tr",
      { class: `${d ? "row-done" : ""}${isNext ? " row-next" : ""}`, "data-step": s.index },
      h("td", { class: "num" }, String(s.index)),
      h("td", {}, when(due[i] || s.time), moved(due[i], s.time) ? h("span", { class: "muted small" }, h("br"), `planned ${when(s.time)}`) : null),
      h("td", {}, stepAction(s)),
      h("td", { class: "num" }, num(s.from_practical_salinity, 2), " → ", h("strong", {}, num(s.setpoint_practical_salinity, 2))),
      h("td", { class: "num" }, num(s.setpoint_osmolality_mOsm_kg, 0)),
      h("td", { class: "num" }, num(s.duration_h, 1)),
      onDone || done.length ? h("td", {}, status) : null,
    );
  });
  return h(
    "div",
    { class: "table-wrap" },
    h("table", { class: "steps", "data-testid": "step-table" },
      h("thead", {}, h("tr", {},
        h("th", { class: "num" }, "Step"), h("th", {}, "Due"), h("th", {}, "Action"), h("th", { class: "num" }, "SP from → setpoint"),
        h("th", { class: "num" }, "mOsm/kg"), h("th", { class: "num" }, "Hours"), onDone || done.length ? h("th", {}, "Status") : null)),
      h("tbody", {}, rows)),
  );
}

function scheduleDetail(detail, reload) {
  const s = detail.schedule || detail;
  const p = detail.progress || null;
  const plan = s.plan || {};
  const state = (s.state && s.state.state) || (p && p.state) || "";
  const open = state === "active" || state === "paused";
  const act = (action, label) =>
    h("button", { type: "button", "data-testid": `schedule-${action}`, onclick: async () => {
      if (action === "abort" && !confirm(`Abort schedule ${s.id}? Its remaining steps will not be done.`)) return;
      const res = await withToken(() => api.scheduleAction(s.id, action, person() || undefined));
      if (res) {
        say("ok", `Schedule ${s.id}: ${label.toLowerCase()} done.`);
        reload();
      }
    } }, label);
  const onDone = open && state === "active"
    ? async (step) => {
        const by = person() || (await askName(`Mark step ${step} of schedule ${s.id} done`));
        if (!by) return;
        const res = await withToken(() => api.stepDone(s.id, step, by));
        if (res) {
          say("ok", `Step ${step} of schedule ${s.id} marked done by ${by}.`);
          reload();
        }
      }
    : null;
  return [
    p ? scheduleBlock(p) : null,
    h("p", { class: "muted" },
      `${plan.method || ""} plan, SP ${num(plan.from_practical_salinity, 2)} → ${num(plan.to_practical_salinity, 2)}`,
      p && p.expected_finish ? ` · expected finish ${when(p.expected_finish)}` : ""),
    open
      ? h("div", { class: "actions" },
          state === "active" ? act("pause", "Pause") : act("resume", "Resume"),
          act("abort", "Abort"))
      : null,
    stepTable(plan.steps || [], { due: detail.due || [], done: s.steps_done || [], nextStep: p && p.next_step ? p.next_step.step : null, onDone }),
    detail.caution || plan.caution ? h("p", { class: "caution-inline" }, mark("up"), detail.caution || plan.caution) : null,
  ];
}

// ---------------------------------------------------------------- alerts

const ackDialog = document.getElementById("ack-dialog");
const ackBy = document.getElementById("ack-by");
const ackNote = document.getElementById("ack-note");
const ackTitle = document.getElementById("ack-title");
let ackTarget = null;

function openAck(alert, onChange) {
  ackTarget = { alert, onChange };
  ackTitle.textContent = `Acknowledge alert ${alert.id}: ${words(alert.kind)} on ${alert.tank || ""}`;
  ackBy.value = person();
  ackNote.value = "";
  ackDialog.returnValue = "";
  ackDialog.showModal();
  (ackBy.value ? ackNote : ackBy).focus();
}

ackDialog.addEventListener("close", async () => {
  const target = ackTarget;
  ackTarget = null;
  if (ackDialog.returnValue !== "ok" || !target) return;
  const by = ackBy.value.trim();
  const note = ackNote.value.trim();
  if (!by) {
    say("error", "Not sent: an acknowledgement needs your name.");
    return;
  }
  rememberPerson(by);
  const res = await withToken(() => api.ack(target.alert.id, by, note));
  if (!res) return;
  say("info", `Acknowledgement of alert ${target.alert.id} sent (request ${res.request_id}); waiting for the daemon…`, { sticky: true });
  const outcome = await waitForAck(res.request_id);
  if (outcome.ok) say("ok", `Alert ${target.alert.id} acknowledged by ${by}.`);
  else say(outcome.pending ? "info" : "error", outcome.text, { sticky: true });
  if (target.onChange) target.onChange();
});

/** Polls an acknowledgement request until the daemon has handled it (or 20 s pass). */
async function waitForAck(requestId) {
  for (let i = 0; i < 40; i++) {
    await new Promise((r) => setTimeout(r, 500));
    let r;
    try {
      r = await api.ackRequest(requestId);
    } catch (err) {
      return { ok: false, text: explain(err) };
    }
    const status = String((r && (r.status || r.outcome || r.state)) || "");
    if (!status || status === "pending") continue;
    if (status.startsWith("acknowledged") || status === "applied" || status === "ok") return { ok: true };
    const reason = (r && (r.reason || r.message)) || status;
    return { ok: false, text: `The daemon refused the acknowledgement: ${reason}` };
  }
  return { ok: false, pending: true, text: `Request ${requestId} is still pending: is the daemon running? It applies acknowledgements every few seconds.` };
}

const STATE_WORDS = {
  raised: ["diamond", "raised"],
  acknowledged: ["check", "acknowledged"],
  cleared_unacknowledged: ["up", "cleared, not acknowledged"],
  cleared: ["ring", "cleared"],
};

function alertTable(alerts, { showTank = true, onChange = null } = {}) {
  if (!alerts.length) return h("p", { class: "muted", "data-testid": "no-alerts" }, mark("check"), "No alerts.");
  const rows = alerts.map((a) => {
    const [shape, stateText] = STATE_WORDS[a.state] || ["ring", words(a.state)];
    const canAck = a.state === "raised" || a.state === "cleared_unacknowledged";
    const ack = a.acknowledgement;
    return h(
      "li",
      { class: `alert-row row-sev-${a.severity} state-${a.state}`, "data-testid": "alert-row", "data-alert-id": a.id, "data-alert-state": a.state },
      h("div", { class: "alert-main" },
        h("p", { class: "alert-title" },
          h("span", { class: `sev sev-${a.severity}` }, mark(severityShape(a.severity)), a.severity),
          " ", h("strong", {}, words(a.kind)),
          showTank ? [" · ", h("a", { href: `#/tank/${encodeURIComponent(a.tank)}` }, a.tank)] : null,
          h("span", { class: "muted" }, ` · #${a.id}`)),
        h("p", { class: "alert-message" }, a.message || ""),
        h("p", { class: "muted small" },
          `raised ${when(a.raised_at)} (${ago(a.raised_at)})`,
          a.cleared_at ? ` · cleared ${when(a.cleared_at)}` : "",
          ack ? ` · acknowledged by ${ack.by} ${when(ack.at)}${ack.note ? `: “${ack.note}”` : ""}` : "")),
      h("div", { class: "alert-side" },
        h("p", { class: `alert-state state-${a.state}`, "data-testid": "alert-state" }, mark(shape), stateText),
        canAck ? h("button", { type: "button", class: "primary", "data-testid": "ack-button", onclick: () => openAck(a, onChange) }, "Acknowledge") : null),
    );
  });
  return h("ul", { class: "alert-list", "data-testid": "alert-list" }, rows);
}

function alertsView() {
  let state = "open";
  let tank = "";
  const listBox = h("div", {}, h("p", { class: "muted" }, "Loading alerts…"));
  const stateBar = h("div", { class: "ranges", role: "group", "aria-label": "which alerts" });
  const tankSelect = h("select", { "aria-label": "tank", "data-testid": "alert-tank", onchange: () => {
    tank = tankSelect.value;
    refresh();
  } }, h("option", { value: "" }, "all tanks"));
  for (const [key, label] of [["open", "Open"], ["all", "Open and recent"]]) {
    stateBar.append(h("button", { type: "button", "data-state": key, "data-testid": `alerts-${key}`, onclick: () => {
      state = key;
      mark2();
      refresh();
    } }, label));
  }
  const mark2 = () => {
    for (const b of stateBar.querySelectorAll("button")) b.setAttribute("aria-pressed", String(b.dataset.state === state));
  };
  mark2();
  view.replaceChildren(h("h1", {}, "Alerts"), h("div", { class: "filters" }, stateBar, h("label", {}, "Tank ", tankSelect)), listBox);

  api.tanks().then((d) => {
    for (const t of (d && d.tanks) || []) tankSelect.append(h("option", { value: t.id }, `${t.name || t.id} (${t.id})`));
  }, () => {});

  async function load() {
    const data = await api.alerts({ state, tank, limit: 200 });
    const alerts = (data && data.alerts) || [];
    if (state === "open" && !tank) setAlertCount(alerts.length);
    listBox.replaceChildren(alertTable(alerts, { onChange: refresh }));
    updatedStamp(`updated ${new Date().toLocaleTimeString()}`);
  }
  const refresh = () => load().catch((err) => say("error", explain(err)));
  return poller(load, POLL_MS);
}

// ---------------------------------------------------------------- plan

function field(label, input, hint) {
  return h("label", { class: "field" }, h("span", { class: "field-label" }, label), input, hint ? h("span", { class: "hint" }, hint) : null);
}

function numberInput(name, attrs = {}) {
  return h("input", { type: "number", name, step: "any", inputmode: "decimal", "data-testid": `plan-${name}`, ...attrs });
}

function planView(params) {
  const tankSel = h("select", { name: "tank", "data-testid": "plan-tank" }, h("option", { value: "" }, "no tank: enter volume and salinity"));
  const method = h("select", { name: "method", "data-testid": "plan-method" },
    ...[["exchange", "exchange (drain and refill)"], ["flow", "flow-through"], ["salt", "dry salt"], ["blend", "blend two sources"]].map(([v, l]) => h("option", { value: v }, l)));
  const shape = h("select", { name: "shape", "data-testid": "plan-shape" },
    h("option", { value: "" }, "planner default"), h("option", { value: "linear" }, "linear in SP"),
    h("option", { value: "proportional" }, "proportional (% per hour)"), h("option", { value: "osmolality" }, "linear in osmolality"));
  const inputs = {
    volume_L: numberInput("volume_L", { min: 0 }),
    from: numberInput("from", { min: 0, max: 42 }),
    to: numberInput("to", { min: 0, max: 42, required: true }),
    species: h("input", { type: "text", name: "species", "data-testid": "plan-species", autocomplete: "off" }),
    temperature_C: numberInput("temperature_C"),
    source_practical_salinity: numberInput("source_practical_salinity", { min: 0, max: 42 }),
    interval_h: numberInput("interval_h", { min: 0 }),
    rate: numberInput("rate", { min: 0 }),
    max_flow_L_min: numberInput("max_flow_L_min", { min: 0 }),
    holds: h("input", { type: "text", name: "holds", placeholder: "12@12, 20@6", "data-testid": "plan-holds", autocomplete: "off" }),
    start: h("input", { type: "datetime-local", name: "start", "data-testid": "plan-start-time" }),
    top_up_practical_salinity: numberInput("top_up_practical_salinity", { min: 0, max: 42 }),
    source_a_practical_salinity: numberInput("source_a_practical_salinity", { min: 0, max: 42 }),
    source_b_practical_salinity: numberInput("source_b_practical_salinity", { min: 0, max: 42 }),
    batch_volume_L: numberInput("batch_volume_L", { min: 0 }),
  };
  // Fields only some methods use: shown for those methods only.
  const only = (methods, node) => {
    node.dataset.methods = methods;
    return node;
  };
  const result = h("div", { class: "plan-result", "data-testid": "plan-result" });
  const form = h("form", { class: "plan-form panel", "data-testid": "plan-form", onsubmit: (e) => {
    e.preventDefault();
    makePlan();
  } },
    h("div", { class: "fields" },
      field("Tank", tankSel, "fills volume, species and current salinity"),
      field("Volume, L", inputs.volume_L),
      field("From SP", inputs.from, "now; blank: the tank's latest reading"),
      field("To SP (target)", inputs.to),
      field("Species id", inputs.species, "caps the rate at its limits"),
      field("Temperature, °C", inputs.temperature_C),
      field("Method", method),
      only("exchange flow", field("Source water SP", inputs.source_practical_salinity)),
      only("salt", field("Top-up water SP", inputs.top_up_practical_salinity, "the water the salt is dissolved in")),
      only("blend", field("Source A SP", inputs.source_a_practical_salinity)),
      only("blend", field("Source B SP", inputs.source_b_practical_salinity)),
      only("blend", field("Batch volume, L", inputs.batch_volume_L)),
      field("Interval, h", inputs.interval_h),
      field("Ramp shape", shape),
      field("Rate per hour", inputs.rate, "in the shape's unit: SP, % or mOsm/kg; blank: the species' limit"),
      field("Holds SP@hours", inputs.holds, "comma separated"),
      only("flow", field("Max flow, L/min", inputs.max_flow_L_min)),
      field("First step at", inputs.start, "blank: now")),
    h("div", { class: "actions" }, h("button", { type: "submit", class: "primary", "data-testid": "plan-submit" }, "Make plan")));
  view.replaceChildren(h("h1", {}, "Plan a salinity change"), form, result);
  const showMethodFields = () => {
    for (const f of form.querySelectorAll("[data-methods]")) f.hidden = !f.dataset.methods.split(" ").includes(method.value);
  };
  method.addEventListener("change", showMethodFields);
  showMethodFields();

  api.tanks().then((d) => {
    for (const t of (d && d.tanks) || []) tankSel.append(h("option", { value: t.id }, `${t.name || t.id} (${t.id})`));
    if (params.get("tank")) tankSel.value = params.get("tank");
  }, () => {});

  function readForm() {
    const f = { method: method.value };
    if (tankSel.value) f.tank = tankSel.value;
    const numeric = ["volume_L", "from", "to", "temperature_C", "source_practical_salinity", "interval_h", "rate", "max_flow_L_min",
      "top_up_practical_salinity", "source_a_practical_salinity", "source_b_practical_salinity", "batch_volume_L"];
    for (const k of numeric) {
      if (inputs[k].closest("[data-methods]")?.hidden) continue;
      const v = inputs[k].value.trim();
      if (v !== "") f[k] = Number(v);
    }
    if (inputs.species.value.trim()) f.species = inputs.species.value.trim();
    if (shape.value) f.shape = shape.value;
    const holds = inputs.holds.value.trim();
    if (holds) {
      f.holds = holds.split(",").map((part) => {
        const [s, hrs] = part.split("@").map((x) => Number(x.trim()));
        return { practical_salinity: s, hours: hrs };
      });
      if (f.holds.some((x) => !isFinite(x.practical_salinity) || !isFinite(x.hours))) {
        throw new Error("Holds are written SP@hours, e.g. 12@12, 20@6.");
      }
    }
    if (inputs.start.value) f.start = new Date(inputs.start.value).toISOString();
    return f;
  }

  async function makePlan() {
    let form;
    try {
      form = readForm();
    } catch (err) {
      say("error", err.message);
      return;
    }
    result.replaceChildren(h("p", { class: "muted" }, "Planning…"));
    let plan;
    try {
      plan = await api.plan(form);
    } catch (err) {
      result.replaceChildren();
      say("error", explain(err));
      return;
    }
    renderPlan(form, plan);
  }

  function renderBlend(batch) {
    result.replaceChildren(
      h("section", { class: "panel", "data-testid": "blend-result" },
        h("h2", {}, `Blend: ${num(batch.batch_volume_L, 0)} L at SP ${num(batch.target_practical_salinity, 2)}`,
          ` (${num(batch.target_osmolality_mOsm_kg, 0)} mOsm/kg)`),
        h("ul", {},
          h("li", { "data-testid": "blend-source-a" },
            `${num(batch.source_a_L, 1)} L of source A (SP ${num(batch.source_a_practical_salinity, 2)})`),
          h("li", { "data-testid": "blend-source-b" },
            `${num(batch.source_b_L, 1)} L of source B (SP ${num(batch.source_b_practical_salinity, 2)})`)),
        h("p", { class: "muted" },
          `at ${num(batch.temperature_C, 1)} °C; EOS-80 densities ${num(batch.density_a_kg_m3, 2)}, `,
          `${num(batch.density_b_kg_m3, 2)} and ${num(batch.density_batch_kg_m3, 2)} kg/m³ (A, B, batch). `,
          "A batch is made once: it is not a schedule."),
        batch.caution ? h("p", { class: "caution-inline" }, mark("up"), batch.caution) : null),
    );
  }

  function renderPlan(form, plan) {
    if (form.method === "blend") {
      renderBlend(plan);
      return;
    }
    const steps = plan.steps || [];
    const chartHost = h("div", { class: "chart-host", "data-testid": "plan-chart" });
    const start = new Date(plan.start).getTime();
    const end = new Date(plan.end).getTime();
    const startButton = form.tank
      ? h("button", { type: "button", class: "primary", "data-testid": "plan-start", onclick: async () => {
          // Start exactly the plan shown: the salinity, temperature, volume and start it was made from
          // (left blank, the server would fill them in afresh from the tank's latest reading and the clock).
          const shown = {
            ...form,
            from: plan.from_practical_salinity,
            start: plan.start,
            temperature_C: plan.assumptions && plan.assumptions.temperature_C,
            volume_L: plan.assumptions && plan.assumptions.tank_volume_L,
          };
          const res = await withToken(() => api.startSchedule(form.tank, shown, person() || undefined));
          if (res) {
            const sid = (res.schedule && res.schedule.id) ?? res.id;
            say("ok", `Schedule ${sid ?? ""} started on ${form.tank}.`);
            location.hash = `#/tank/${encodeURIComponent(form.tank)}`;
          }
        } }, `Start as schedule on ${form.tank}`)
      : h("p", { class: "muted" }, "Choose a tank to start this plan as a schedule.");
    const totals = plan.totals || {};
    result.replaceChildren(
      h("section", { class: "panel" },
        h("h2", {}, `${plan.method} plan: SP ${num(plan.from_practical_salinity, 2)} → ${num(plan.to_practical_salinity, 2)}`),
        h("p", {}, `${steps.length} steps over ${num(plan.total_duration_h, 1)} h, ${when(plan.start)} to ${when(plan.end)}`,
          ` · water ${num(totals.water_L, 0)} L`, totals.drain_L ? ` · drained ${num(totals.drain_L, 0)} L` : "",
          totals.salt_kg ? ` · salt ${num(totals.salt_kg, 2)} kg` : ""),
        (plan.warnings || []).length
          ? h("ul", { class: "warnings", "data-testid": "plan-warnings" }, plan.warnings.map((w) => h("li", {}, mark("up", "warning:\u00a0"), w.message)))
          : null,
        chartHost,
        stepTable(steps),
        h("div", { class: "actions" }, startButton),
        plan.caution ? h("p", { class: "caution-inline" }, mark("up"), plan.caution) : null),
    );
    const pts = [{ t: start, v: plan.from_practical_salinity, o: null }].concat(
      steps.map((s) => ({ t: new Date(s.time).getTime(), v: s.setpoint_practical_salinity, o: s.setpoint_osmolality_mOsm_kg })));
    drawChart(chartHost, {
      title: "Planned setpoint",
      from: start,
      to: end > start ? end : start + 3600e3,
      height: 260,
      left: { label: "SP" },
      right: { label: "≈ mOsm/kg", fromLeft: linearFit(pts.slice(1).map((p) => [p.v, p.o])) },
      series: [
        { label: "setpoint SP (solid steps; right axis: its osmolality, fitted; the table has each step's exact value)", axis: "left", style: "solid", cls: "s-sal", stepped: true, points: pts.slice(1) },
      ],
    });
  }
  return () => {};
}

// ---------------------------------------------------------------- routing

let leave = () => {};

function route() {
  leave();
  leave = () => {};
  const hash = location.hash || "#/";
  const [path, queryString] = hash.slice(1).split("?");
  const params = new URLSearchParams(queryString || "");
  const parts = path.split("/").filter(Boolean);
  let active = "overview";
  if (parts[0] === "tank" && parts[1]) {
    leave = tankView(decodeURIComponent(parts[1]));
    active = "overview";
  } else if (parts[0] === "alerts") {
    leave = alertsView();
    active = "alerts";
  } else if (parts[0] === "plan") {
    leave = planView(params);
    active = "plan";
  } else {
    leave = overview();
  }
  for (const a of document.querySelectorAll("[data-nav]")) {
    if (a.dataset.nav === active) a.setAttribute("aria-current", "page");
    else a.removeAttribute("aria-current");
  }
  view.focus({ preventScroll: true });
}

window.addEventListener("hashchange", route);
route();

// The count of open alerts is shown in the navigation on every view.
function refreshAlertCount() {
  api.tanks().then((d) => setAlertCount(((d && d.tanks) || []).reduce((n, t) => n + (t.open_alerts || []).length, 0)), () => {});
}
window.addEventListener("hashchange", refreshAlertCount);
refreshAlertCount();
setInterval(refreshAlertCount, 30000);
