// settle rack board: cards and plots from /api/v1, kept live by /api/v1/events.
// Plain DOM and canvas; no third-party code. Every value from the server is set with
// textContent, never parsed as HTML.
"use strict";
(function () {
  const units = document.body.dataset.units === "F" ? "F" : "C";
  const toUnits = (c) => (units === "F" ? c * 9 / 5 + 32 : c);
  const fmtT = (c) => (c == null ? "—" : toUnits(c).toFixed(1));
  const cards = new Map(); // channel name → {el, ch, series, dirty}
  const main = document.getElementById("cards");
  const tpl = document.getElementById("card-tpl");
  const state = { channels: [], plots: {}, events: 0 };
  window.settle = state; // read by the browser test

  // ---- time formatting -------------------------------------------------------
  const clock = (iso) => new Date(iso).toLocaleTimeString([], { hour: "2-digit", minute: "2-digit" });
  function span(ms) {
    const m = Math.round(Math.abs(ms) / 60000);
    if (m < 1) return "under a minute";
    if (m < 90) return m + " min";
    const h = Math.floor(m / 60), r = m % 60;
    return h + " h" + (r ? " " + r + " min" : "");
  }
  const dataNow = (ch) => (ch.latest ? Date.parse(ch.latest.time) : Date.now());

  // ---- cards -----------------------------------------------------------------
  function card(name) {
    let c = cards.get(name);
    if (c) return c;
    const el = tpl.content.firstElementChild.cloneNode(true);
    el.dataset.channel = name;
    el.querySelector(".name").textContent = name;
    el.querySelector(".unit").textContent = "°" + units;
    main.appendChild(el);
    c = { el, ch: null, series: null, dirty: true, fetching: false, lastFetch: 0 };
    cards.set(name, c);
    return c;
  }

  function heatColour(c) {
    if (c == null) return "var(--muted)";
    const f = Math.max(0, Math.min(1, (c - 20) / 280)); // 20 °C teal … 300 °C and up orange
    const hue = 175 - f * 150;
    return "hsl(" + hue + " 85% " + (50 + f * 8) + "%)";
  }

  function targetText(ch, t) {
    const now = dataNow(ch);
    switch (t.state) {
      case "reached": return ["reached" + (t.at ? " " + clock(t.at) : ""), ""];
      case "predicted": {
        const bounds = t.earliest && t.latest ? "between " + clock(t.earliest) + " and " + clock(t.latest) : "";
        return ["in " + span(Date.parse(t.at) - now) + " · " + clock(t.at), bounds];
      }
      case "holding": return ["holding · " + span(Date.parse(t.at) - now) + " left", t.at ? "done " + clock(t.at) : ""];
      case "unreachable": return ["not reached on this curve", ""];
      default: return ["not enough data yet", ""];
    }
  }

  function render(ch) {
    const c = card(ch.name);
    c.ch = ch;
    const el = c.el;
    const cel = ch.latest && ch.latest.celsius != null ? ch.latest.celsius : null;
    const tempEl = el.querySelector(".temp");
    tempEl.textContent = fmtT(cel);
    tempEl.dataset.celsius = cel == null ? "" : String(cel);
    el.querySelector(".heat").style.background = heatColour(cel);
    el.querySelector(".age").textContent = ch.latest ? "at " + new Date(ch.latest.time).toLocaleTimeString() : "no reading yet";
    const f = ch.forecast;
    el.querySelector(".model").textContent = f ? f.model + " · " + f.points + " pts" : "no fit yet";
    renderFault(el, ch.fault);
    renderTargets(el, ch);
    const val = el.querySelector(".validity");
    val.hidden = !(f && f.out_of_range);
    if (f && f.out_of_range) val.textContent = "Model used outside its validity range: " + (f.notes || []).join(" ");
    const handling = ch.targets.find((t) => t.kind === "handling");
    const ready = el.querySelector(".ready");
    const head = el.querySelector(".headline");
    const isReady = !!handling && handling.state === "reached" && !ch.fault;
    ready.hidden = !isReady;
    if (isReady) {
      const ul = ready.querySelector("ul");
      ul.replaceChildren(...(ch.cautions || []).map((s) => { const li = document.createElement("li"); li.textContent = s; return li; }));
    }
    head.classList.toggle("ready-now", isReady);
    head.textContent = headline(ch, handling, isReady);
    c.dirty = true;
  }

  function headline(ch, handling, isReady) {
    if (ch.fault) return "Check the sensor before trusting this card.";
    if (ch.empty) return "Empty — no specimen on this position.";
    if (isReady) return "Ready to handle (estimate) — see the cautions.";
    if (!handling) return ch.forecast ? "Tracking." : "Waiting for data.";
    if (handling.state === "predicted") return "Handle in about " + span(Date.parse(handling.at) - dataNow(ch)) + " (estimate)";
    return targetText(ch, handling)[0];
  }

  function renderFault(el, fault) {
    const b = el.querySelector(".fault-banner");
    el.classList.toggle("faulted", !!fault && fault.kind !== "stale");
    el.classList.toggle("stale", !!fault && fault.kind === "stale");
    el.dataset.fault = fault ? fault.kind : "";
    b.hidden = !fault;
    if (!fault) return;
    const title = { open: "OPEN THERMOCOUPLE", stale: "NO RECENT DATA", port_down: "LOGGER PORT LOST" }[fault.kind] || "SENSOR FAULT: " + fault.kind;
    const small = document.createElement("small");
    small.textContent = fault.detail || "";
    b.replaceChildren(document.createTextNode(title), small);
  }

  function renderTargets(el, ch) {
    const ul = el.querySelector(".targets");
    ul.replaceChildren(...ch.targets.map((t) => {
      const li = document.createElement("li");
      li.dataset.target = t.name;
      li.dataset.state = t.state;
      li.dataset.at = t.at || "";
      const [state, bounds] = targetText(ch, t);
      const name = document.createElement("span");
      name.className = "tname";
      name.textContent = t.name + (t.celsius != null ? " · " + fmtT(t.celsius) + " °" + units : "");
      const st = document.createElement("span");
      st.className = "tstate";
      st.textContent = state;
      li.append(name, st);
      if (bounds) {
        const b = document.createElement("span");
        b.className = "tbounds";
        b.textContent = bounds;
        li.append(b);
      }
      return li;
    }));
  }

  function renderNext() {
    const soon = [];
    for (const { ch } of cards.values()) {
      if (!ch) continue;
      const h = ch.targets.find((t) => t.kind === "handling");
      if (h && h.state === "predicted" && h.at) soon.push([Date.parse(h.at) - dataNow(ch), ch.name]);
    }
    const ready = [...cards.values()].filter(({ ch }) => ch && !ch.fault && ch.targets.some((t) => t.kind === "handling" && t.state === "reached")).length;
    const faults = [...cards.values()].filter(({ ch }) => ch && ch.fault).length;
    soon.sort((a, b) => a[0] - b[0]);
    const el = document.getElementById("next");
    const parts = [];
    if (soon.length) parts.push(["Next: ", soon[0][1], " in about " + span(soon[0][0])]);
    parts.push(["", String(ready), " ready to handle (estimate)"]);
    if (faults) parts.push(["", String(faults), faults === 1 ? " fault" : " faults"]);
    el.replaceChildren(...parts.flatMap(([a, b, c], i) => {
      const bold = document.createElement("b");
      bold.textContent = b;
      return [document.createTextNode((i ? " · " : "") + a), bold, document.createTextNode(c)];
    }));
  }

  // ---- data ------------------------------------------------------------------
  async function getJSON(url) {
    const r = await fetch(url, { cache: "no-store" });
    if (!r.ok) throw new Error(url + ": " + r.status);
    return r.json();
  }

  // Ambient sensors are the room, shown in the header, never as a specimen's card.
  function renderRoom(rooms) {
    const el = document.getElementById("room");
    if (!el) return;
    el.textContent = rooms.filter((ch) => ch.latest && ch.latest.celsius != null)
      .map((ch) => "room " + ch.name + " " + fmtT(ch.latest.celsius) + " °" + units).join(" · ");
  }

  function applyChannels(resp) {
    const positions = resp.channels.filter((c) => c.role !== "ambient");
    renderRoom(resp.channels.filter((c) => c.role === "ambient"));
    state.channels = positions.map((c) => c.name);
    for (const ch of positions) render(ch);
    for (const name of [...cards.keys()]) {
      if (!state.channels.includes(name)) { cards.get(name).el.remove(); cards.delete(name); }
    }
    renderNext();
    for (const name of state.channels) fetchSeries(name);
  }

  async function fetchSeries(name) {
    const c = cards.get(name);
    if (!c || c.fetching || Date.now() - c.lastFetch < 2000) return;
    c.fetching = true;
    try {
      c.series = await getJSON("/api/v1/channels/" + encodeURIComponent(name) + "/series?max_points=500");
      c.lastFetch = Date.now();
      c.dirty = true;
    } catch (e) {
      /* the next forecast event or poll retries */
    } finally {
      c.fetching = false;
    }
  }

  function onReading(ev) {
    const c = cards.get(ev.channel);
    if (!c || !c.ch) return;
    if (c.ch.latest && Date.parse(ev.time) < Date.parse(c.ch.latest.time)) return; // queued before the snapshot
    c.ch.latest = { time: ev.time, celsius: ev.celsius, status: ev.status };
    const el = c.el.querySelector(".temp");
    el.textContent = fmtT(ev.celsius);
    el.dataset.celsius = ev.celsius == null ? "" : String(ev.celsius);
    c.el.querySelector(".heat").style.background = heatColour(ev.celsius);
    if (c.series && ev.celsius != null) {
      const t = Date.parse(ev.time);
      c.series.readings.push([t, ev.celsius]);
      if (c.series.readings.length > 3000) fetchSeries(ev.channel);
    }
    c.dirty = true;
  }

  function connect() {
    const link = document.getElementById("link");
    const text = document.getElementById("link-text");
    const es = new EventSource("/api/v1/events");
    const live = () => { link.className = "link live"; text.textContent = "live"; };
    es.addEventListener("open", live);
    es.addEventListener("channels", (e) => { live(); applyChannels(JSON.parse(e.data)); });
    es.addEventListener("reading", (e) => { state.events++; onReading(JSON.parse(e.data)); });
    es.addEventListener("forecast", (e) => {
      const ch = JSON.parse(e.data);
      if (ch.role === "ambient") return;
      render(ch);
      renderNext();
      fetchSeries(ch.name);
    });
    es.addEventListener("fault", (e) => {
      const ev = JSON.parse(e.data);
      const c = cards.get(ev.channel);
      if (c && c.ch) { c.ch.fault = ev.fault; render(c.ch); renderNext(); }
    });
    es.addEventListener("heartbeat", live);
    es.onerror = () => { link.className = "link down"; text.textContent = "reconnecting"; };
  }

  // ---- plot ------------------------------------------------------------------
  function niceStep(range, n) {
    const raw = range / n, p = Math.pow(10, Math.floor(Math.log10(raw)));
    const m = raw / p;
    return (m < 1.5 ? 1 : m < 3 ? 2 : m < 7 ? 5 : 10) * p;
  }

  function draw(c) {
    const cv = c.el.querySelector(".plot");
    const dpr = window.devicePixelRatio || 1;
    const w = cv.clientWidth, h = cv.clientHeight;
    if (!w || !h) return;
    if (cv.width !== Math.round(w * dpr)) { cv.width = Math.round(w * dpr); cv.height = Math.round(h * dpr); }
    const g = cv.getContext("2d");
    g.setTransform(dpr, 0, 0, dpr, 0, 0);
    g.clearRect(0, 0, w, h);
    const s = c.series, ch = c.ch;
    const reads = s ? s.readings : [];
    const curve = s ? s.curve : [];
    const targets = (ch && ch.targets) || [];
    const info = { readings: reads.length, curve: curve.length, targets: 0, bands: 0 };
    state.plots[ch ? ch.name : ""] = info;
    cv.dataset.readings = String(reads.length);
    cv.dataset.curve = String(curve.length);
    if (!reads.length && !curve.length) {
      g.fillStyle = "#93a1b3"; g.font = "14px sans-serif"; g.fillText("waiting for readings…", 12, 24);
      return;
    }
    // Extent: readings, curve and the target crossings.
    let t0 = Infinity, t1 = -Infinity, y0 = Infinity, y1 = -Infinity;
    const grow = (t, y) => { if (t < t0) t0 = t; if (t > t1) t1 = t; if (y != null) { if (y < y0) y0 = y; if (y > y1) y1 = y; } };
    for (const [t, y] of reads) grow(t, toUnits(y));
    for (const [t, y] of curve) grow(t, toUnits(y));
    // The time axis runs to the end of the next target's interval, so the data and
    // the coming crossing fill the plot; later targets are drawn where they fall.
    const upcoming = targets.filter((tg) => tg.state === "predicted" && tg.latest).map((tg) => Date.parse(tg.latest));
    if (upcoming.length) t1 = Math.max(reads.length ? reads[reads.length - 1][0] : t0 + 60000, Math.min(...upcoming));
    const visible = curve.filter(([t]) => t <= t1);
    y0 = Infinity; y1 = -Infinity;
    for (const [, y] of reads) { y0 = Math.min(y0, toUnits(y)); y1 = Math.max(y1, toUnits(y)); }
    for (const [, y] of visible) { y0 = Math.min(y0, toUnits(y)); y1 = Math.max(y1, toUnits(y)); }
    for (const tg of targets) if (tg.celsius != null) { y0 = Math.min(y0, toUnits(tg.celsius)); y1 = Math.max(y1, toUnits(tg.celsius)); }
    if (t1 <= t0) t1 = t0 + 60000;
    const pad = Math.max(1, (y1 - y0) * 0.06);
    y0 -= pad; y1 += pad;
    const L = 46, R = 10, T = 8, B = 22;
    const X = (t) => L + (t - t0) / (t1 - t0) * (w - L - R);
    const Y = (y) => T + (y1 - y) / (y1 - y0) * (h - T - B);
    // Grid and axes.
    g.font = "11px sans-serif"; g.fillStyle = "#93a1b3"; g.strokeStyle = "#232c38"; g.lineWidth = 1;
    const ys = niceStep(y1 - y0, 4);
    for (let y = Math.ceil(y0 / ys) * ys; y <= y1; y += ys) {
      g.beginPath(); g.moveTo(L, Y(y)); g.lineTo(w - R, Y(y)); g.stroke();
      g.fillText(y.toFixed(ys < 1 ? 1 : 0), 4, Y(y) + 4);
    }
    const xs = niceStep((t1 - t0) / 60000, 4) * 60000;
    for (let t = Math.ceil(t0 / xs) * xs; t <= t1; t += xs) {
      g.beginPath(); g.moveTo(X(t), T); g.lineTo(X(t), h - B); g.stroke();
      g.fillText(new Date(t).toLocaleTimeString([], { hour: "2-digit", minute: "2-digit" }), X(t) - 15, h - 6);
    }
    // Interval bands and target lines.
    for (const tg of targets) {
      if (tg.celsius == null) continue;
      info.targets++;
      const yy = Y(toUnits(tg.celsius));
      if (tg.earliest && tg.latest) {
        info.bands++;
        const a = Math.max(L, X(Date.parse(tg.earliest))), b = Math.min(w - R, X(Date.parse(tg.latest)));
        if (b > a) {
          g.fillStyle = "rgba(79, 209, 197, 0.10)";
          g.fillRect(a, T, Math.max(2, b - a), h - T - B);
          g.fillStyle = "rgba(79, 209, 197, 0.85)";
          g.fillRect(a, yy - 3, Math.max(2, b - a), 6);
        }
      }
      g.setLineDash([6, 5]); g.strokeStyle = tg.state === "reached" ? "#7ee787" : "#93a1b3";
      g.beginPath(); g.moveTo(L, yy); g.lineTo(w - R, yy); g.stroke(); g.setLineDash([]);
      g.fillStyle = g.strokeStyle; g.fillText(tg.name, w - R - g.measureText(tg.name).width - 2, yy - 4);
    }
    g.save();
    g.beginPath(); g.rect(L, T, w - L - R, h - T - B); g.clip();
    // Readings.
    g.strokeStyle = "#ffc857"; g.lineWidth = 2.2; g.beginPath();
    reads.forEach(([t, y], i) => (i ? g.lineTo(X(t), Y(toUnits(y))) : g.moveTo(X(t), Y(toUnits(y)))));
    g.stroke();
    // Fitted curve: solid over the data, dashed beyond it.
    const last = reads.length ? reads[reads.length - 1][0] : t0;
    g.strokeStyle = "#9ecbff"; g.lineWidth = 1.6;
    for (const future of [false, true]) {
      g.setLineDash(future ? [4, 4] : []); g.beginPath();
      let on = false;
      for (const [t, y] of curve) {
        if ((t > last) !== future && !(future && t === last)) { continue; }
        on ? g.lineTo(X(t), Y(toUnits(y))) : g.moveTo(X(t), Y(toUnits(y)));
        on = true;
      }
      g.stroke();
    }
    g.setLineDash([]);
    g.restore();
    cv.dataset.targets = String(info.targets);
    cv.setAttribute("aria-label", (ch ? ch.name : "") + ": " + reads.length + " readings, fitted curve, " + info.targets + " targets");
  }

  setInterval(() => {
    for (const c of cards.values()) if (c.dirty) { c.dirty = false; draw(c); }
  }, 400);
  setInterval(renderNext, 5000);
  window.addEventListener("resize", () => { for (const c of cards.values()) c.dirty = true; });

  getJSON("/api/v1/channels").then(applyChannels).catch(() => {});
  connect();
})();
