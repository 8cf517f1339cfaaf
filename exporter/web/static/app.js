// settle rack board: positions from /api/v1/channels kept live by /api/v1/events, runs
// from /api/v1/runs, history from the journal. Plain DOM and canvas, no third-party
// code; every value from the server is set with textContent, never parsed as HTML.
"use strict";
(function () {
  const units = document.body.dataset.units === "F" ? "F" : "C";
  const toU = (c) => (units === "F" ? c * 9 / 5 + 32 : c);
  const fmtT = (c) => (c == null ? "—" : toU(c).toFixed(1));
  const deg = "°" + units;
  const NEARLY_MS = 10 * 60000; // "nearly there": due within ten minutes (data time)
  const board = document.getElementById("board");
  const tpl = document.getElementById("card-tpl");
  const cards = new Map(); // channel → {el, ch, series, history, recv, state}
  const runs = new Map(); // channel → active run
  const rooms = new Map(); // ambient channel → {el, ch, recv, pts}
  const S = { chimes: 0, skew: 0, demo: null, ready: [], historyLoads: 0 };
  window.settle = S; // read by the browser test

  // ---- settings (URL wins, then this browser) --------------------------------
  const qs = new URLSearchParams(location.search);
  const pref = (k, d) => qs.get(k) || localStorage.getItem("settle." + k) || d;
  const setPref = (k, v) => localStorage.setItem("settle." + k, v);
  function applyTheme(t) {
    document.documentElement.dataset.theme = t;
    document.getElementById("t-theme").textContent = t === "dark" ? "light" : "dark";
    for (const c of cards.values()) c.dirty = true;
  }
  function applyCompact(on) {
    document.body.classList.toggle("compact", on);
    document.getElementById("t-compact").setAttribute("aria-pressed", String(on));
    for (const c of cards.values()) c.dirty = true;
  }
  applyTheme(pref("theme", "light"));
  applyCompact(pref("compact", "0") === "1");
  document.getElementById("t-theme").onclick = () => {
    const t = document.documentElement.dataset.theme === "dark" ? "light" : "dark";
    setPref("theme", t); applyTheme(t);
  };
  document.getElementById("t-compact").onclick = () => {
    const on = !document.body.classList.contains("compact");
    setPref("compact", on ? "1" : "0"); applyCompact(on); fitCards(cards.size);
  };

  // ---- time ---------------------------------------------------------------
  // Times on the board are the data's own (simulated in the demo); ages are wall time.
  const two = (n) => String(n).padStart(2, "0");
  const hm = (d) => d.getHours() + ":" + two(d.getMinutes());
  const sameDay = (a, b) => a.getFullYear() === b.getFullYear() && a.getMonth() === b.getMonth() && a.getDate() === b.getDate();
  const MONTHS = ["Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov", "Dec"];
  // when: a clock time, with the date when it is not on the reference day.
  function when(ms, refMs) {
    const d = new Date(ms), r = new Date(refMs);
    return sameDay(d, r) ? hm(d) : d.getDate() + " " + MONTHS[d.getMonth()] + " " + hm(d);
  }
  // span: a plain duration, never "about under a minute".
  function span(ms) {
    const s = Math.round(Math.abs(ms) / 1000);
    if (s < 60) return "< 1 min";
    const m = Math.round(s / 60);
    if (m < 90) return m + " min";
    const h = Math.floor(m / 60), r = m % 60;
    return h + " h" + (r ? " " + r + " min" : "");
  }
  function age(ms) {
    const s = Math.max(0, Math.round(ms / 1000));
    if (s < 90) return s + " s ago";
    if (s < 5400) return Math.round(s / 60) + " min ago";
    return span(ms) + " ago";
  }
  const dataNow = (ch) => (ch && ch.latest ? Date.parse(ch.latest.time) : Date.now());
  const wallNow = () => Date.now() + S.skew; // the daemon's clock

  // ---- states --------------------------------------------------------------
  // A predicted handling target without a late end ("not before", an open-ended
  // interval) has no time to plan with: never fall back to its central estimate.
  const openEnded = (t) => t.state === "predicted" && !t.latest && !!t.earliest;
  const due = (t) => t.due || (t.kind === "handling" ? t.latest : t.at) || (t.kind === "handling" && openEnded(t) ? null : t.at) || null;
  const handlingOf = (ch) => (ch.targets || []).find((t) => t.kind === "handling");
  const LOOK = {
    hot: ["▲", "hot — not yet safe"], nearly: ["◆", "nearly there"], ready: ["●", "ready to handle (estimate)"],
    holding: ["◐", "holding"], fault: ["✕", "fault"], empty: ["○", "empty — no specimen"], wait: ["…", "learning the curve"],
    track: ["—", "tracking"],
  };
  // stateOf decides what a card says. Ready needs the API's "reached" for a handling
  // target AND the newest reading below that target AND no fault.
  function stateOf(ch) {
    if (ch.fault) return "fault";
    const ts = ch.targets || [];
    if (ch.empty || ts.some((t) => t.state === "empty")) return "empty";
    const h = handlingOf(ch);
    const cel = ch.latest && ch.latest.celsius != null ? ch.latest.celsius : null;
    if (h) {
      const below = cel != null && h.celsius != null && cel < h.celsius;
      if (h.state === "reached" && below) return "ready";
      if (h.state === "holding") return "holding";
      if (h.state === "predicted" && due(h) && Date.parse(due(h)) - dataNow(ch) <= NEARLY_MS) return "nearly";
      if (cel == null) return "wait";
      if (h.state === "insufficient" && below) return "wait";
      return "hot";
    }
    if (ts.some((t) => t.state === "holding")) return "holding";
    return ch.forecast ? "track" : "wait";
  }
  // rank sorts the board: what needs someone first, then by what is due next.
  const RANK = { ready: 0, fault: 1, nearly: 2, hot: 3, holding: 4, track: 5, wait: 6, empty: 8 };
  function sortKey(c) {
    let r = RANK[c.state] ?? 7;
    if (c.state === "ready" && acked(c)) r = 7;
    const nt = nextTarget(c.ch);
    return [r, nt && due(nt) ? Date.parse(due(nt)) : Infinity, c.ch.name];
  }
  function nextTarget(ch) {
    let best = null;
    for (const t of ch.targets || []) {
      if (t.state !== "predicted" && t.state !== "holding") continue;
      if (!due(t)) continue;
      if (!best || Date.parse(due(t)) < Date.parse(due(best))) best = t;
    }
    return best;
  }
  // acked: the daemon holds an acknowledgement of the specimen now on the position
  // (from any screen, kept across restarts).
  const acked = (c) => !!(c.ch && c.ch.acknowledged);

  // isAmbient: the API's role, else a channel that another names as its ambient.
  let ambientNames = new Set();
  const isAmbient = (ch) => (ch.role ? ch.role === "ambient" : ambientNames.has(ch.name));

  // ---- notes in plain words --------------------------------------------------
  function plainNotes(ch) {
    const f = ch.forecast, out = [];
    if (!f) return out;
    for (const n of f.notes || []) {
      if (/^model mismatch/i.test(n)) out.push("Rough forecast: the readings do not follow the model's shape, so the times are wide.");
      else if (/^no forecast yet/i.test(n)) out.push(n);
      else if (/lags the surface/i.test(n)) out.push("Handling is judged on the estimated centre (dotted line), which lags this surface sensor.");
      else if (/could not be fitted/i.test(n)) out.push(n);
      else if (/estimated/i.test(n) && /gap/i.test(n)) out.push(n);
    }
    if (f.out_of_range) out.push("Model used outside its valid range: treat the times as rough.");
    return out;
  }

  // ---- cards ---------------------------------------------------------------
  function card(name) {
    let c = cards.get(name);
    if (c) return c;
    const el = tpl.content.firstElementChild.cloneNode(true);
    el.dataset.channel = name;
    el.querySelector(".pos").textContent = name;
    el.querySelector(".unit").textContent = deg;
    el.querySelector(".ack").onclick = () => acknowledge(name);
    el.querySelector(".start").onclick = () => askStart(name);
    el.querySelector(".stop").onclick = () => stopRun(name);
    c = { el, ch: null, series: null, history: null, recv: 0, state: "", dirty: true, fetching: false, lastFetch: 0 };
    cards.set(name, c);
    return c;
  }

  function render(ch) {
    if (isAmbient(ch)) { dropCard(ch.name); renderRoom(ch); return; }
    if (rooms.has(ch.name)) { rooms.get(ch.name).el.remove(); rooms.delete(ch.name); }
    const c = card(ch.name), el = c.el;
    const was = c.state;
    c.ch = ch;
    c.state = stateOf(ch);
    el.className = "card st-" + c.state;
    el.dataset.state = c.state;
    el.dataset.fault = ch.fault ? ch.fault.kind : "";
    const [glyph, word] = LOOK[c.state];
    el.querySelector(".glyph").textContent = glyph;
    el.querySelector(".state-word").textContent = ch.fault ? faultWord(ch.fault) : word;
    renderWho(c);
    renderReading(c);
    renderNext(c);
    const ready = c.state === "ready";
    el.querySelector(".caution-line").hidden = !ready;
    el.querySelector(".notes").replaceChildren(...plainNotes(ch).slice(0, 2).map((n) => li(n)));
    el.querySelector(".notes").title = ch.forecast ? (ch.forecast.notes || []).join("\n") : "";
    el.toggleAttribute("data-acked", ready && acked(c));
    el.querySelector(".ack").hidden = !ready || acked(c);
    if (ready && was && was !== "ready" && !acked(c)) chime();
    c.dirty = true;
  }
  const li = (text) => { const e = document.createElement("li"); e.textContent = text; return e; };

  function faultWord(f) {
    return { open: "fault — open thermocouple", port_down: "fault — logger port lost", stale: "fault — no data" }[f.kind] || "fault — " + f.kind;
  }

  function renderWho(c) {
    const run = runs.get(c.ch.name);
    const el = c.el;
    // "no run" only once the runs list has answered: before that (a reload) it is unknown.
    el.querySelector(".specimen").textContent = run ? run.specimen : c.state === "empty" || !S.runsOK ? "" : "no run";
    const r = el.querySelector(".run");
    r.textContent = run ? "run since " + when(Date.parse(run.started), dataNow(c.ch)) : "";
    r.title = run ? "run " + run.id : "";
    el.querySelector(".start").hidden = !!run;
    el.querySelector(".stop").hidden = !run;
  }

  function renderReading(c) {
    const ch = c.ch, el = c.el;
    const cel = ch.latest && ch.latest.celsius != null ? ch.latest.celsius : null;
    const t = el.querySelector(".temp");
    t.textContent = fmtT(cel);
    t.dataset.celsius = cel == null ? "" : String(cel);
    renderLink(c);
  }

  // renderLink: the logger's link (from the daemon's fault kinds), never the browser's.
  function renderLink(c) {
    const ch = c.ch, el = c.el.querySelector(".link-state");
    const f = ch.fault;
    let kind = "ok", text;
    if (f && f.kind === "port_down") { kind = "port_down"; text = "logger port lost" + (f.since ? " since " + when(Date.parse(f.since), dataNow(ch)) : ""); }
    else if (f && f.kind === "stale") { kind = "stale"; text = "logger silent: " + (f.detail || "no recent reading"); }
    else if (!ch.latest) { kind = "none"; text = "no reading yet — check the logger's port and wiring"; }
    else if (f) { kind = "sensor"; text = f.detail || "sensor fault"; }
    else text = "logger sending";
    el.dataset.link = kind;
    el.textContent = text;
    el.title = f ? f.detail || "" : "";
  }

  function renderNext(c) {
    const ch = c.ch, p = c.el.querySelector(".next");
    const now = dataNow(ch);
    p.replaceChildren();
    const h = handlingOf(ch);
    const add = (cls, text) => { const s = document.createElement("span"); if (cls) s.className = cls; s.textContent = text; p.append(s); return s; };
    if (c.state === "empty") { add("", "Place a specimen and start a run to forecast it."); return; }
    if (c.state === "fault") { add("", ch.fault.detail || "Check the sensor and the logger."); return; }
    if (c.state === "ready") {
      add("", "Below " + fmtT(h.celsius) + " " + deg + (h.at ? " since " + when(Date.parse(h.at), now) + (h.estimated ? " (fitted)" : "") : ""));
      const a = ch.acknowledged;
      if (a) add("interval acked", "acknowledged " + when(Date.parse(a.at), now) + (a.by ? " by " + a.by : ""));
      const nt = nextTarget(ch);
      if (nt) add("interval", "next: " + nt.name + " " + dueText(nt, now));
      return;
    }
    if (h && h.state === "reached") {
      // The fit says reached but the newest reading is not below the target: not ready.
      add("", "Fit says below " + fmtT(h.celsius) + " " + deg + ", readings do not yet: wait.");
      return;
    }
    const t = nextTarget(ch);
    if (!t && h && openEnded(h)) {
      add("", "Below " + fmtT(h.celsius) + " " + deg + " not before ");
      add("due", when(Date.parse(h.earliest), now));
      add("interval", "no late end yet: it may settle above " + fmtT(h.celsius) + " " + deg);
      return;
    }
    // A target with only an early bound (readings still moving away from an unmeasured
    // room, or settling where the fit cannot say): no time to plan with, but not
    // "learning" nor "no target ahead" either.
    const nb = !t && (ch.targets || []).find((x) => x.kind !== "handling" && openEnded(x) && !due(x));
    if (nb) {
      add("", nb.name + (nb.celsius != null ? " · " + fmtT(nb.celsius) + " " + deg : "") + " not before ");
      add("due", when(Date.parse(nb.earliest), now));
      add("interval", "no time yet: the readings give only the soonest it can be");
      return;
    }
    if (!t) {
      if (h && h.state === "unreachable") add("", "Will not get below " + fmtT(h.celsius) + " " + deg + " on this curve (settles above it).");
      else if (!ch.forecast || (h && h.state === "insufficient")) add("", "Learning the curve: no forecast yet.");
      else add("", "No target ahead.");
      return;
    }
    const isH = t.kind === "handling";
    add("", (isH ? "Below " : t.name + " ") + (t.celsius != null ? (isH ? "" : "· ") + fmtT(t.celsius) + " " + deg + " " : "") + (t.state === "holding" ? "held until " : "by "));
    const d = Date.parse(due(t));
    add("due", when(d, now));
    add("", d - now > 0 ? " (in " + span(d - now) + ")" : " (due now)");
    const bits = [];
    if (isH && t.at && t.at !== due(t)) bits.push("likely " + when(Date.parse(t.at), now));
    if (t.earliest && t.latest && t.earliest !== t.latest) {
      const a = Date.parse(t.earliest), b = Date.parse(t.latest);
      bits.push("90 % interval " + when(a, now) + "–" + (sameDay(new Date(a), new Date(b)) ? hm(new Date(b)) : when(b, now)));
    } else if (openEnded(t)) bits.push("not before " + when(Date.parse(t.earliest), now) + ", no late end yet");
    if (bits.length) add("interval", bits.join(" · "));
    p.dataset.target = t.name;
    p.dataset.due = due(t);
  }
  function dueText(t, now) {
    const d = Date.parse(due(t));
    return "by " + when(d, now) + (d > now ? " (in " + span(d - now) + ")" : "");
  }

  function dropCard(name) {
    const c = cards.get(name);
    if (c) { c.el.remove(); cards.delete(name); }
  }

  // ---- the room (ambient sensors) -------------------------------------------
  function renderRoom(ch) {
    let r = rooms.get(ch.name);
    if (!r) {
      const el = document.createElement("div");
      el.className = "room-item";
      el.dataset.channel = ch.name;
      for (const cls of ["rt", "rn", "ra"]) { const s = document.createElement("span"); s.className = cls; el.append(s); }
      el.append(document.createElement("canvas"));
      document.getElementById("room-list").append(el);
      r = { el, ch, recv: 0, pts: [] };
      rooms.set(ch.name, r);
    }
    r.ch = ch;
    const cel = ch.latest && ch.latest.celsius != null ? ch.latest.celsius : null;
    r.el.querySelector(".rt").textContent = fmtT(cel) + " " + deg;
    r.el.querySelector(".rn").textContent = ch.name;
    r.el.toggleAttribute("data-fault", !!ch.fault);
    r.el.title = ch.fault ? faultWord(ch.fault) + ": " + (ch.fault.detail || "") : "ambient sensor " + ch.name;
    document.getElementById("room").hidden = rooms.size === 0;
  }

  // ---- header summary --------------------------------------------------------
  function renderSummary() {
    const list = [...cards.values()].filter((c) => c.ch);
    list.sort((a, b) => {
      const ka = sortKey(a), kb = sortKey(b);
      for (let i = 0; i < 3; i++) if (ka[i] !== kb[i]) return ka[i] < kb[i] ? -1 : 1;
      return 0;
    });
    // Reorder only when the order changed, so focus and hover are not disturbed.
    const order = list.map((c) => c.el);
    if (order.some((el, i) => board.children[i] !== el)) board.append(...order);
    const ready = list.filter((c) => c.state === "ready");
    S.ready = ready.map((c) => c.ch.name);
    const faults = list.filter((c) => c.state === "fault").length;
    const next = list.filter((c) => c.state === "nearly" || c.state === "hot").map((c) => [c, nextTarget(c.ch)]).filter(([, t]) => t && t.kind === "handling")[0];
    const sum = document.getElementById("summary");
    const parts = [];
    const b = (text) => { const e = document.createElement("b"); e.textContent = text; return e; };
    parts.push(b(String(ready.length)), document.createTextNode(" ready to handle (estimate)"));
    if (next) {
      const [c, t] = next;
      const now = dataNow(c.ch);
      parts.push(document.createTextNode(" · next: "), b((runs.get(c.ch.name) || {}).specimen || c.ch.name),
        document.createTextNode(" below " + fmtT(t.celsius) + " " + deg + " " + dueText(t, now)));
    }
    if (faults) parts.push(document.createTextNode(" · "), b(String(faults)), document.createTextNode(faults === 1 ? " fault" : " faults"));
    sum.replaceChildren(...parts);
    document.getElementById("cautions").toggleAttribute("data-ready", ready.length > 0);
    fitCards(list.length);
  }

  // fitCards lets a few cards use the screen: their height grows to fill it (never
  // below the CSS height, which fits 15 positions at 1920×1080; never above 30rem).
  function fitCards(n) {
    const rem = parseFloat(getComputedStyle(document.documentElement).fontSize);
    if (!n || document.body.classList.contains("compact") || innerWidth < 40 * rem) { board.style.removeProperty("--card-h"); return; }
    const cols = getComputedStyle(board).gridTemplateColumns.split(" ").length;
    const rows = Math.ceil(n / cols);
    const below = document.getElementById("cautions").offsetHeight + document.querySelector(".fine").offsetHeight + 2.2 * rem;
    const room = (innerHeight - board.getBoundingClientRect().top - below) / rows - 0.7 * rem;
    const h = Math.min(30 * rem, Math.max(17.2 * rem, room));
    board.style.setProperty("--card-h", Math.floor(h) + "px");
  }

  // ---- ages tick every second -------------------------------------------------
  function tick() {
    const now = Date.now();
    for (const c of [...cards.values(), ...rooms.values()]) {
      const el = c.el.querySelector(".age") || c.el.querySelector(".ra");
      if (!c.ch || !c.ch.latest) { if (el) el.textContent = "no reading yet"; continue; }
      if (!c.recv) continue;
      const a = now - c.recv;
      el.textContent = age(a);
      el.toggleAttribute("data-old", a > 30000);
    }
  }

  // ---- data ----------------------------------------------------------------
  const token = () => sessionStorage.getItem("settle.token") || "";
  async function getJSON(url) {
    const r = await fetch(url, { cache: "no-store" });
    if (!r.ok) throw new Error(url + ": " + r.status);
    return r.json();
  }

  function applyChannels(resp) {
    S.skew = Date.parse(resp.generated_at) - Date.now();
    S.demo = resp.demo || null;
    const demo = document.getElementById("demo");
    demo.hidden = !S.demo;
    if (S.demo) demo.textContent = "DEMO — " + S.demo.speed + "× time-lapse · simulated times";
    ambientNames = new Set(resp.channels.map((c) => c.ambient).filter(Boolean));
    const names = new Set(resp.channels.map((c) => c.name));
    for (const ch of resp.channels) render(ch);
    for (const name of [...cards.keys()]) if (!names.has(name)) dropCard(name);
    for (const [name, r] of rooms) if (!names.has(name)) { r.el.remove(); rooms.delete(name); }
    renderSummary();
    for (const ch of resp.channels) { fetchReceived(ch.name); if (cards.has(ch.name)) fetchSeries(ch.name); }
  }

  // fetchReceived learns when the newest reading reached the daemon (wall clock), so the
  // age ticks from the right moment after a page load.
  async function fetchReceived(name) {
    try {
      const d = await getJSON("/api/v1/channels/" + encodeURIComponent(name));
      const c = cards.get(name) || rooms.get(name);
      if (c && d.last_received) { c.recv = Date.parse(d.last_received) - S.skew; tick(); }
    } catch (e) { /* the next reading sets it */ }
  }

  async function fetchRuns() {
    try {
      const r = await getJSON("/api/v1/runs?active=true");
      runs.clear();
      for (const run of r.runs || []) runs.set(run.channel, run);
      S.runsOK = true;
    } catch (e) { S.runsOK = false; }
    for (const c of cards.values()) if (c.ch) { renderWho(c); }
    renderSummary();
    for (const name of cards.keys()) loadHistory(name);
  }

  async function fetchSeries(name) {
    const c = cards.get(name);
    if (!c || c.fetching || Date.now() - c.lastFetch < 2000) return;
    c.fetching = true;
    try {
      c.series = await getJSON("/api/v1/channels/" + encodeURIComponent(name) + "/series?max_points=500");
      c.lastFetch = Date.now();
      c.dirty = true;
      loadHistory(name);
    } catch (e) {
      /* the next forecast event retries */
    } finally {
      c.fetching = false;
    }
  }

  // loadHistory fills the chart from the journal (the run's readings, downsampled) when
  // the daemon's in-memory series starts after the run did: after a page reload, a
  // SIGHUP or a restart the chart keeps the whole run.
  async function loadHistory(name) {
    const c = cards.get(name), run = runs.get(name);
    if (!c || !run || !c.series || c.history === run.id || c.historyBusy) return;
    const first = c.series.readings.length ? c.series.readings[0][0] : Infinity;
    if (first - Date.parse(run.started) < 60000) { c.history = run.id; c.journal = []; return; }
    c.historyBusy = true;
    try {
      const r = await fetch("/api/v1/runs/" + encodeURIComponent(run.id) + "/readings.csv", { cache: "no-store" });
      if (!r.ok) throw new Error(String(r.status));
      c.journal = downsample(parseCSV(await r.text()), 400);
      c.history = run.id;
      S.historyLoads++;
      c.dirty = true;
    } catch (e) { /* keep the live series */ } finally { c.historyBusy = false; }
  }
  function parseCSV(text) {
    const out = [];
    const lines = text.split(/\r?\n/);
    for (let i = 1; i < lines.length; i++) {
      const f = lines[i].split(",");
      if (f.length < 6 || f[4] === "") continue;
      const t = Date.parse(f[0]), y = parseFloat(f[4]);
      if (isFinite(t) && isFinite(y)) out.push([t, y]);
    }
    return out;
  }
  // downsample keeps each bucket's lowest and highest reading, so peaks survive.
  function downsample(pts, n) {
    if (pts.length <= n) return pts;
    const out = [], per = pts.length / (n / 2);
    for (let b = 0; b < n / 2; b++) {
      const lo = Math.floor(b * per), hi = Math.min(pts.length, Math.floor((b + 1) * per));
      let a = pts[lo], z = pts[lo];
      for (let i = lo; i < hi; i++) { if (pts[i][1] < a[1]) a = pts[i]; if (pts[i][1] > z[1]) z = pts[i]; }
      if (a[0] <= z[0]) out.push(a, z); else out.push(z, a);
    }
    return out;
  }

  function onReading(ev) {
    const c = cards.get(ev.channel) || rooms.get(ev.channel);
    if (!c || !c.ch) return;
    if (c.ch.latest && Date.parse(ev.time) < Date.parse(c.ch.latest.time)) return; // queued before the snapshot
    c.ch.latest = { time: ev.time, celsius: ev.celsius, status: ev.status };
    c.recv = Date.now();
    if (rooms.has(ev.channel)) {
      if (ev.celsius != null) { c.pts.push([Date.parse(ev.time), ev.celsius]); if (c.pts.length > 300) c.pts.splice(0, 100); }
      renderRoom(c.ch); c.dirty = true; return;
    }
    const before = c.state;
    c.state = stateOf(c.ch);
    if (c.state !== before) render(c.ch); else renderReading(c);
    if (c.series && ev.celsius != null) {
      c.series.readings.push([Date.parse(ev.time), ev.celsius]);
      if (c.series.readings.length > 3000) fetchSeries(ev.channel);
    }
    c.dirty = true;
  }

  function connect() {
    const conn = document.getElementById("conn"), text = document.getElementById("conn-text");
    const es = new EventSource("/api/v1/events");
    const live = () => { conn.dataset.conn = "live"; text.textContent = "screen: live"; };
    es.addEventListener("open", live);
    es.addEventListener("channels", (e) => { live(); applyChannels(JSON.parse(e.data)); });
    es.addEventListener("reading", (e) => onReading(JSON.parse(e.data)));
    es.addEventListener("forecast", (e) => {
      const ch = JSON.parse(e.data);
      const old = cards.get(ch.name) || rooms.get(ch.name);
      if (old && old.ch && old.ch.latest && ch.latest && Date.parse(old.ch.latest.time) > Date.parse(ch.latest.time)) ch.latest = old.ch.latest;
      render(ch); renderSummary(); fetchSeries(ch.name);
    });
    es.addEventListener("fault", (e) => {
      const ev = JSON.parse(e.data);
      const c = cards.get(ev.channel) || rooms.get(ev.channel);
      if (c && c.ch) { c.ch.fault = ev.fault; render(c.ch); renderSummary(); }
    });
    es.addEventListener("heartbeat", live);
    es.onerror = () => { conn.dataset.conn = "down"; text.textContent = "screen: reconnecting to the daemon"; };
  }

  // ---- acting: token, runs, acknowledge, chime --------------------------------
  const msgEl = document.getElementById("msg");
  function say(text, kind) {
    msgEl.textContent = text;
    msgEl.dataset.kind = kind || "info";
    msgEl.hidden = false;
    clearTimeout(say.t);
    say.t = setTimeout(() => { msgEl.hidden = true; }, 12000);
  }
  function askToken() {
    return new Promise((resolve) => {
      const d = document.getElementById("token-dlg"), input = document.getElementById("token-in");
      input.value = "";
      d.onclose = () => {
        if (d.returnValue === "ok" && input.value) { sessionStorage.setItem("settle.token", input.value); updateSignIn(); resolve(input.value); }
        else resolve("");
      };
      d.returnValue = "";
      d.showModal();
    });
  }
  function updateSignIn() {
    document.getElementById("t-token").textContent = token() ? "sign out" : "sign in";
  }
  document.getElementById("t-token").onclick = () => {
    if (token()) { sessionStorage.removeItem("settle.token"); updateSignIn(); say("Token forgotten by this tab."); }
    else askToken();
  };
  updateSignIn();

  // post sends a state-changing request with the token, asking for it once if needed.
  async function post(url, body) {
    let tok = token() || (await askToken());
    if (!tok) { say("Not sent: starting or stopping a run, or acknowledging, needs the API token.", "error"); return null; }
    const send = async () => {
      const r = await fetch(url, { method: "POST", headers: { "Content-Type": "application/json", Authorization: "Bearer " + tok }, body: JSON.stringify(body || {}) });
      let data = {};
      try { data = await r.json(); } catch (e) { /* empty body */ }
      // The daemon answers a wrong token with 403 "wrong token", the runs API alone with 401.
      return { r, data, badToken: r.status === 401 || (r.status === 403 && /wrong token/i.test(data.error || "")) };
    };
    let res = await send();
    if (res.badToken) {
      sessionStorage.removeItem("settle.token"); updateSignIn();
      say("The daemon refused that token.", "error");
      tok = await askToken();
      if (!tok) return null;
      res = await send();
    }
    if (!res.r.ok) {
      if (res.badToken) { sessionStorage.removeItem("settle.token"); updateSignIn(); }
      say("Refused (" + res.r.status + "): " + (res.data.error || res.r.statusText), "error");
      return null;
    }
    return res.data;
  }

  let startFor = "";
  function askStart(name) {
    startFor = name;
    document.getElementById("start-ch").textContent = name;
    document.getElementById("start-specimen").value = "";
    document.getElementById("start-desc").value = "";
    document.getElementById("start-dlg").returnValue = "";
    document.getElementById("start-dlg").showModal();
  }
  document.getElementById("start-dlg").addEventListener("close", async () => {
    const d = document.getElementById("start-dlg");
    if (d.returnValue !== "ok") return;
    const specimen = document.getElementById("start-specimen").value.trim();
    const desc = document.getElementById("start-desc").value.trim();
    if (!specimen) return;
    const run = await post("/api/v1/runs", { channel: startFor, specimen, description: desc || undefined });
    if (run) { say("Run " + run.id + " started: " + run.specimen + " on " + run.channel + "."); await fetchRuns(); }
  });
  async function stopRun(name) {
    const run = runs.get(name);
    if (!run) return;
    // Two presses within five seconds: a stray tap on a wall screen must not end a run.
    // Each arming has its own five seconds: an earlier arming's timer, still pending
    // after a confirmed press, must not disarm a new one.
    const btn = cards.get(name).el.querySelector(".stop");
    const disarm = () => { clearTimeout(btn.disarmTimer); delete btn.dataset.armed; btn.textContent = "stop run"; };
    if (!btn.dataset.armed) {
      btn.dataset.armed = "1"; btn.textContent = "press again to stop " + run.specimen;
      clearTimeout(btn.disarmTimer);
      btn.disarmTimer = setTimeout(disarm, 5000);
      return;
    }
    disarm();
    const done = await post("/api/v1/runs/" + encodeURIComponent(run.id) + "/stop", {});
    if (done) { say("Run " + done.id + " stopped."); await fetchRuns(); }
  }
  // acknowledge tells the daemon (with the token) that a ready specimen was seen: the
  // daemon records it in the journal, every screen shows it, its chime stops and it
  // moves below the unacknowledged ones. The daemon refuses it unless the readings
  // show the specimen ready.
  async function acknowledge(name) {
    const c = cards.get(name);
    if (!c) return;
    const a = await post("/api/v1/channels/" + encodeURIComponent(name) + "/acknowledge", {});
    if (!a) return;
    c.ch.acknowledged = a;
    say(name + ": acknowledged; the record keeps who saw it ready and when.");
    render(c.ch); renderSummary();
  }

  let audio = null;
  const chimeBtn = document.getElementById("t-chime");
  chimeBtn.onclick = () => {
    const on = chimeBtn.getAttribute("aria-pressed") !== "true";
    chimeBtn.setAttribute("aria-pressed", String(on));
    chimeBtn.textContent = on ? "chime on" : "chime off";
    if (on) { audio = audio || new (window.AudioContext || window.webkitAudioContext)(); audio.resume(); chime(true); }
  };
  // chime plays two soft falling tones (a user gesture turned it on).
  function chime(test) {
    if (chimeBtn.getAttribute("aria-pressed") !== "true" || !audio) return;
    if (!test) S.chimes++;
    const t0 = audio.currentTime;
    [[880, 0], [660, 0.28]].forEach(([f, dt]) => {
      const o = audio.createOscillator(), g = audio.createGain();
      o.type = "sine"; o.frequency.value = f;
      g.gain.setValueAtTime(0.0001, t0 + dt);
      g.gain.exponentialRampToValueAtTime(0.25, t0 + dt + 0.03);
      g.gain.exponentialRampToValueAtTime(0.0001, t0 + dt + 0.5);
      o.connect(g).connect(audio.destination);
      o.start(t0 + dt); o.stop(t0 + dt + 0.55);
    });
  }

  // ---- plot ------------------------------------------------------------------
  const css = (name) => getComputedStyle(document.documentElement).getPropertyValue(name).trim();
  function niceStep(range, n) {
    const raw = range / n, p = Math.pow(10, Math.floor(Math.log10(raw)));
    const m = raw / p;
    return (m < 1.5 ? 1 : m < 3 ? 2 : m < 7 ? 5 : 10) * p;
  }
  const TIME_STEPS = [1, 2, 5, 10, 15, 20, 30, 60, 120, 180, 360, 720, 1440].map((m) => m * 60000);
  function timeStep(range, n) { return TIME_STEPS.find((s) => range / s <= n) || TIME_STEPS[TIME_STEPS.length - 1]; }

  function draw(c) {
    const cv = c.el.querySelector(".plot");
    const dpr = window.devicePixelRatio || 1;
    const w = cv.clientWidth, h = cv.clientHeight;
    if (!w || !h) return;
    if (cv.width !== Math.round(w * dpr) || cv.height !== Math.round(h * dpr)) { cv.width = Math.round(w * dpr); cv.height = Math.round(h * dpr); }
    const g = cv.getContext("2d");
    g.setTransform(dpr, 0, 0, dpr, 0, 0);
    g.clearRect(0, 0, w, h);
    const s = c.series, ch = c.ch;
    const live = s ? s.readings : [];
    const first = live.length ? live[0][0] : Infinity;
    const older = (c.journal || []).filter(([t]) => t < first);
    const reads = older.concat(live);
    const curve = s ? s.curve || [] : [];
    const centre = s ? s.centre || [] : [];
    const targets = (ch && ch.targets) || [];
    cv.dataset.readings = String(reads.length);
    cv.dataset.journal = String(older.length);
    cv.dataset.curve = String(curve.length);
    cv.dataset.centre = String(centre.length);
    const fs = Math.max(11, Math.round(parseFloat(getComputedStyle(document.documentElement).fontSize) * 0.72));
    g.font = fs + "px DejaVu Sans, sans-serif";
    const ink = css("--plot-read"), muted = css("--muted"), grid = css("--plot-grid"), stInk = getComputedStyle(c.el).getPropertyValue("--st-ink").trim();
    if (!reads.length) { g.fillStyle = muted; g.fillText("no readings yet", 8, fs + 4); cv.dataset.targets = "0"; return; }
    let t0 = reads[0][0], t1 = reads[reads.length - 1][0];
    const nt = ch && nextTarget(ch);
    if (nt && due(nt)) t1 = Math.max(t1, Math.min(Date.parse(due(nt)), t1 + (t1 - t0) * 2));
    if (t1 <= t0) t1 = t0 + 60000;
    let y0 = Infinity, y1 = -Infinity;
    const grow = (y) => { y0 = Math.min(y0, toU(y)); y1 = Math.max(y1, toU(y)); };
    for (const [, y] of reads) grow(y);
    for (const [t, y] of curve) if (t >= t0 && t <= t1) grow(y);
    for (const tg of targets) if (tg.celsius != null) grow(tg.celsius);
    const pad = Math.max(1, (y1 - y0) * 0.08);
    y0 -= pad; y1 += pad;
    const L = fs * 3.1, R = 6, T = 4, B = fs + 6;
    const X = (t) => L + (t - t0) / (t1 - t0) * (w - L - R);
    const Y = (y) => T + (y1 - y) / (y1 - y0) * (h - T - B);
    g.lineWidth = 1; g.strokeStyle = grid; g.fillStyle = muted;
    const ys = niceStep(y1 - y0, Math.max(2, Math.floor((h - T - B) / (fs * 2.2))));
    g.textAlign = "right";
    for (let y = Math.ceil(y0 / ys) * ys; y <= y1; y += ys) {
      g.beginPath(); g.moveTo(L, Y(y)); g.lineTo(w - R, Y(y)); g.stroke();
      g.fillText(y.toFixed(ys < 1 ? 1 : 0), L - 4, Y(y) + fs * 0.35);
    }
    g.textAlign = "center";
    const xs = timeStep(t1 - t0, Math.max(2, Math.floor((w - L - R) / (fs * 5))));
    const tz = new Date(t0).getTimezoneOffset() * 60000;
    for (let t = Math.ceil((t0 - tz) / xs) * xs + tz; t <= t1; t += xs) {
      g.beginPath(); g.moveTo(X(t), T); g.lineTo(X(t), h - B); g.stroke();
      const label = hm(new Date(t)), lw = g.measureText(label).width / 2;
      if (X(t) + lw <= w && X(t) - lw >= L - fs) g.fillText(label, X(t), h - 4);
    }
    g.textAlign = "left";
    let lines = 0;
    for (const tg of targets) {
      if (tg.celsius == null) continue;
      lines++;
      const yy = Y(toU(tg.celsius));
      const isH = tg.kind === "handling";
      if (tg === nt && tg.earliest && tg.latest) { // one band: the next target's interval
        const a = Math.max(L, X(Date.parse(tg.earliest))), b = Math.min(w - R, X(Date.parse(tg.latest)));
        if (b > a) {
          g.globalAlpha = 0.18; g.fillStyle = stInk; g.fillRect(a, T, Math.max(2, b - a), h - T - B);
          g.globalAlpha = 1; g.fillRect(a, yy - 2, Math.max(2, b - a), 4);
        }
      }
      g.setLineDash(isH ? [7, 4] : [2, 4]); g.strokeStyle = isH ? stInk : muted; g.lineWidth = isH ? 1.6 : 1.2;
      g.beginPath(); g.moveTo(L, yy); g.lineTo(w - R, yy); g.stroke(); g.setLineDash([]);
    }
    g.save(); g.beginPath(); g.rect(L, T, w - L - R, h - T - B); g.clip();
    const path = (pts, from, to) => {
      g.beginPath(); let on = false;
      for (const [t, y] of pts) {
        if (t < from || t > to || y == null) { on = false; continue; }
        on ? g.lineTo(X(t), Y(toU(y))) : g.moveTo(X(t), Y(toU(y)));
        on = true;
      }
      g.stroke();
    };
    const last = reads[reads.length - 1][0];
    g.strokeStyle = stInk; g.lineWidth = 1.5;
    g.setLineDash([]); path(curve, t0, last);
    g.setLineDash([5, 4]); path(curve, last, t1);
    if (centre.length) { g.setLineDash([1, 3]); g.lineWidth = 2; path(centre, t0, t1); }
    g.setLineDash([]); g.strokeStyle = ink; g.lineWidth = 2.2; path(reads, t0, t1);
    g.restore();
    cv.dataset.targets = String(lines);
    cv.setAttribute("aria-label", ch.name + ": " + reads.length + " readings, fitted curve, " + lines + " target lines");
  }

  function drawRoom(r) {
    const cv = r.el.querySelector("canvas");
    const w = cv.clientWidth, h = cv.clientHeight, dpr = window.devicePixelRatio || 1;
    if (!w || !h || r.pts.length < 2) return;
    cv.width = Math.round(w * dpr); cv.height = Math.round(h * dpr);
    const g = cv.getContext("2d");
    g.setTransform(dpr, 0, 0, dpr, 0, 0);
    let lo = Infinity, hi = -Infinity;
    for (const [, y] of r.pts) { lo = Math.min(lo, y); hi = Math.max(hi, y); }
    if (hi - lo < 2) { const m = (hi + lo) / 2; lo = m - 1; hi = m + 1; } // a calm line for a steady room
    const t0 = r.pts[0][0], t1 = r.pts[r.pts.length - 1][0] || t0 + 1;
    g.strokeStyle = css("--room"); g.lineWidth = 1.5; g.beginPath();
    r.pts.forEach(([t, y], i) => { const x = (t - t0) / Math.max(1, t1 - t0) * (w - 2) + 1, yy = h - 2 - (y - lo) / (hi - lo) * (h - 4); i ? g.lineTo(x, yy) : g.moveTo(x, yy); });
    g.stroke();
  }

  setInterval(() => {
    for (const c of cards.values()) if (c.dirty) { c.dirty = false; draw(c); }
    for (const r of rooms.values()) if (r.dirty) { r.dirty = false; drawRoom(r); }
  }, 400);
  setInterval(tick, 1000);
  setInterval(() => { for (const c of cards.values()) if (c.ch) renderNext(c); renderSummary(); }, 5000);
  setInterval(fetchRuns, 15000);
  window.addEventListener("resize", () => { fitCards(cards.size); for (const c of cards.values()) c.dirty = true; });

  getJSON("/api/v1/channels").then(applyChannels).then(fetchRuns).catch(() => {});
  connect();
})();
