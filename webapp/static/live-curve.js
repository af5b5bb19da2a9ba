// cupcal: drawing a live run's temperature curve into an inline SVG (no library, no network).
// window.cupcalCurve.draw(svg, {readings: [[seq, t, T], ...], periods, drift_lines, compact})
(function () {
  "use strict";
  var NS = "http://www.w3.org/2000/svg";

  function el(name, attrs, text) {
    var e = document.createElementNS(NS, name);
    Object.keys(attrs).forEach(function (k) { e.setAttribute(k, attrs[k]); });
    if (text !== undefined) { e.textContent = text; }
    return e;
  }

  // round steps of 1, 2 or 5 × 10^n so that about `count` ticks cover [lo, hi]
  function ticks(lo, hi, count) {
    var span = hi - lo, raw = span / Math.max(count, 1);
    var mag = Math.pow(10, Math.floor(Math.log10(raw)));
    var step = [1, 2, 5, 10].map(function (m) { return m * mag; }).find(function (s) { return s >= raw; });
    var out = [], v = Math.ceil(lo / step) * step;
    for (; v <= hi + step * 1e-9; v += step) { out.push(Math.round(v / step) * step); }
    return {values: out, step: step};
  }

  function label(v, step) {
    var d = Math.max(0, -Math.floor(Math.log10(step) + 1e-9));
    return v.toFixed(Math.min(d, 4));
  }

  function bounds(rows, lines) {
    var t0 = Infinity, t1 = -Infinity, y0 = Infinity, y1 = -Infinity;
    rows.forEach(function (r) { t0 = Math.min(t0, r[1]); t1 = Math.max(t1, r[1]); y0 = Math.min(y0, r[2]); y1 = Math.max(y1, r[2]); });
    (lines || []).forEach(function (l) { y0 = Math.min(y0, l.T0, l.T1); y1 = Math.max(y1, l.T0, l.T1); });
    if (!isFinite(t0)) { t0 = 0; t1 = 60; y0 = 20; y1 = 21; }
    if (t1 - t0 < 30) { t1 = t0 + 30; }
    var pad = Math.max((y1 - y0) * 0.08, 0.05);
    return {t0: t0, t1: t1, y0: y0 - pad, y1: y1 + pad};
  }

  function draw(svg, data) {
    var compact = !!data.compact, box = svg.viewBox.baseVal;
    var W = box.width, H = box.height;
    var m = compact ? {l: 6, r: 6, t: 6, b: 6} : {l: 58, r: 14, t: 12, b: 40};
    var rows = data.readings || [], b = bounds(rows, data.drift_lines);
    var x = function (t) { return m.l + (t - b.t0) / (b.t1 - b.t0) * (W - m.l - m.r); };
    var y = function (v) { return H - m.b - (v - b.y0) / (b.y1 - b.y0) * (H - m.t - m.b); };
    var keep = svg.querySelector("title");
    while (svg.lastChild) { svg.removeChild(svg.lastChild); }
    if (keep) { svg.appendChild(keep); }
    var g = el("g", {"class": "plot"});
    svg.appendChild(g);
    var periods = data.periods || {};
    [["fore", "band-fore"], ["after", "band-after"]].forEach(function (p) {
      var span = periods[p[0]];
      if (span && span.length === 2) {
        g.appendChild(el("rect", {x: x(span[0]), y: m.t, width: Math.max(1, x(span[1]) - x(span[0])),
          height: H - m.t - m.b, "class": p[1]}));
      }
    });
    if (periods.mixing_time !== null && periods.mixing_time !== undefined) {
      g.appendChild(el("line", {x1: x(periods.mixing_time), x2: x(periods.mixing_time), y1: m.t, y2: H - m.b,
        "class": "mix-line"}));
    }
    if (!compact) { axes(g, b, x, y, W, H, m); }
    (data.drift_lines || []).forEach(function (l) {
      g.appendChild(el("line", {x1: x(l.t0), y1: y(l.T0), x2: x(l.t1), y2: y(l.T1), "class": "drift-line"}));
    });
    if (rows.length) {
      var pts = rows.map(function (r) { return x(r[1]).toFixed(1) + "," + y(r[2]).toFixed(1); }).join(" ");
      g.appendChild(el("polyline", {points: pts, "class": "curve"}));
      var last = rows[rows.length - 1];
      g.appendChild(el("circle", {cx: x(last[1]), cy: y(last[2]), r: compact ? 3 : 4, "class": "last-point"}));
    }
  }

  function axes(g, b, x, y, W, H, m) {
    var tx = ticks(b.t0, b.t1, 8), ty = ticks(b.y0, b.y1, 6);
    g.appendChild(el("line", {x1: m.l, x2: W - m.r, y1: H - m.b, y2: H - m.b, "class": "axis"}));
    g.appendChild(el("line", {x1: m.l, x2: m.l, y1: m.t, y2: H - m.b, "class": "axis"}));
    tx.values.forEach(function (v) {
      g.appendChild(el("line", {x1: x(v), x2: x(v), y1: H - m.b, y2: H - m.b + 4, "class": "axis"}));
      g.appendChild(el("text", {x: x(v), y: H - m.b + 16, "text-anchor": "middle", "class": "tick"}, label(v, tx.step)));
    });
    ty.values.forEach(function (v) {
      g.appendChild(el("line", {x1: m.l, x2: W - m.r, y1: y(v), y2: y(v), "class": "grid"}));
      g.appendChild(el("text", {x: m.l - 6, y: y(v) + 4, "text-anchor": "end", "class": "tick"}, label(v, ty.step)));
    });
    g.appendChild(el("text", {x: (m.l + W - m.r) / 2, y: H - 6, "text-anchor": "middle", "class": "axis-name"}, "time / s"));
    g.appendChild(el("text", {x: 12, y: (m.t + H - m.b) / 2, "text-anchor": "middle", "class": "axis-name",
      transform: "rotate(-90 12 " + (m.t + H - m.b) / 2 + ")"}, "T / °C"));
  }

  // merge new readings (by seq) into the list the page holds
  function merge(rows, fresh) {
    var last = rows.length ? rows[rows.length - 1][0] : -1;
    (fresh || []).forEach(function (r) { if (r[0] > last) { rows.push(r); last = r[0]; } });
    return rows;
  }

  // the page's words for the advisor's warning codes (the advisor's own message follows)
  var WARNING_NAMES = {fore_drift: "Fore period drifting", spike: "Spike in the readings",
    probe_out: "Probe out of the liquid", readings_stopped: "Readings stopped", fore_short: "Fore period short",
    too_noisy: "Readings noisy"};

  // follow a stream of Server-Sent Events; after three failures in a row (or with no EventSource, or
  // with ?poll=1 in the address) ask the JSON poll every second instead
  function follow(o) {
    var es = null, errors = 0, polling = false;
    function poll() {
      fetch(o.pollUrl(), {credentials: "same-origin", headers: {Accept: "application/json"}})
        .then(function (r) { return r.ok ? r.json() : Promise.reject(r.status); })
        .then(function (d) { o.onAlive(); o.onData(d); })
        .catch(function () { /* the page's own timer warns when nothing arrives */ })
        .then(function () { setTimeout(poll, 1000); });
    }
    function startPolling() {
      if (polling) { return; }
      polling = true;
      if (es) { es.close(); }
      o.onMode("poll");
      poll();
    }
    if (!window.EventSource || /[?&]poll=1/.test(window.location.search)) { startPolling(); return; }
    es = new EventSource(o.eventsUrl());
    o.onMode("stream");
    es.addEventListener(o.eventName, function (e) { errors = 0; o.onAlive(); o.onData(JSON.parse(e.data)); });
    es.addEventListener("ping", function () { errors = 0; o.onAlive(); });
    es.onerror = function () {
      errors += 1;
      if (errors >= 3 || es.readyState === 2) { startPolling(); }
    };
  }

  window.cupcalCurve = {draw: draw, merge: merge, follow: follow, warningNames: WARNING_NAMES};
})();
