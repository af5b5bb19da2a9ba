// cupcal: the room view. One tile per live run of the section; tiles with a warning come first.
(function () {
  "use strict";
  var STALE_S = 5;

  function start() {
    var root = document.getElementById("room");
    if (!root || !window.cupcalCurve) { return; }
    var C = window.cupcalCurve, runs = {}, cursor = root.getAttribute("data-cursor") || "";
    var lastWord = Date.now();

    function apply(items) {
      (items || []).forEach(function (d) {
        var r = runs[d.id];
        if (!r) {
          r = runs[d.id] = {rows: [], advice: {}, lastReading: Date.now() - 1000 * (d.stale_s || 0)};
        }
        if (d.readings && d.readings.length) { C.merge(r.rows, d.readings); r.lastReading = Date.now() - 1000 * (d.stale_s || 0); }
        if (d.advice) { r.advice = d.advice; }
        ["state", "bench", "group", "title", "page_url", "last_seq"].forEach(function (k) { if (d[k] !== undefined) { r[k] = d[k]; } });
        r.dirty = true;
      });
      render();
    }

    function warnings(r) {
      var out = ((r.advice || {}).warnings || []).map(function (w) { return (C.warningNames[w.code] || "Warning") + ": " + w.message; });
      var quiet = (Date.now() - r.lastReading) / 1000;
      if (r.state === "recording" && quiet > STALE_S && !((r.advice || {}).warnings || []).some(function (w) { return w.code === "readings_stopped"; })) {
        out.push("No new reading for " + Math.round(quiet) + " s");
      }
      return out;
    }

    function tile(id, r) {
      var li = document.getElementById("tile-" + id);
      if (!li) {
        li = document.createElement("li");
        li.id = "tile-" + id;
        li.className = "room-tile";
        li.innerHTML = '<h2 class="tile-head"><a></a> <span class="tile-group"></span></h2>' +
          '<p class="tile-status"></p><svg class="tile-curve" viewBox="0 0 240 80" role="img" aria-hidden="true"></svg>' +
          '<ul class="tile-warnings"></ul><p class="tile-foot"></p>';
      }
      var w = warnings(r), a = li.querySelector(".tile-head a");
      a.textContent = r.bench;
      a.href = r.page_url;
      li.querySelector(".tile-group").textContent = r.group ? "· " + r.group : "";
      li.querySelector(".tile-status").textContent = (r.advice || {}).status || "waiting for the first readings";
      li.querySelector(".tile-foot").textContent = r.state + " · " + (r.rows.length ? r.rows.length + " readings" : "no readings yet");
      var ul = li.querySelector(".tile-warnings"), key = w.join("|");
      if (ul.getAttribute("data-key") !== key) {
        ul.setAttribute("data-key", key);
        while (ul.firstChild) { ul.removeChild(ul.firstChild); }
        w.forEach(function (t) { var x = document.createElement("li"); x.textContent = t; ul.appendChild(x); });
      }
      li.classList.toggle("tile-warn", w.length > 0);
      li.classList.toggle("tile-stop", (r.advice || {}).phase === "can_stop");
      li.classList.toggle("tile-reach", (r.advice || {}).phase === "out_of_reach");
      li.setAttribute("data-state", r.state);
      if (r.dirty) {
        C.draw(li.querySelector("svg"), {readings: r.rows, periods: (r.advice || {}).periods,
          drift_lines: (r.advice || {}).drift_lines, compact: true});
        r.dirty = false;
      }
      return {li: li, warn: w.length > 0, bench: r.bench || ""};
    }

    function render() {
      var ul = document.getElementById("room-tiles"), ids = Object.keys(runs);
      var tiles = ids.map(function (id) { return tile(id, runs[id]); });
      tiles.sort(function (p, q) { return (q.warn - p.warn) || p.bench.localeCompare(q.bench, undefined, {numeric: true}); });
      tiles.forEach(function (t, i) { if (ul.children[i] !== t.li) { ul.insertBefore(t.li, ul.children[i] || null); } });
      document.getElementById("room-empty").hidden = ids.length > 0;
      var rec = ids.filter(function (id) { return runs[id].state === "recording"; }).length;
      var warn = tiles.filter(function (t) { return t.warn; }).length;
      var stop = ids.filter(function (id) { return (runs[id].advice || {}).phase === "can_stop"; }).length;
      var silent = (Date.now() - lastWord) / 1000;
      var reach = ids.filter(function (id) { return (runs[id].advice || {}).phase === "out_of_reach"; }).length;
      var line = rec + " recording · " + warn + " with a warning · " + stop + " may stop now";
      if (reach) { line += " · " + reach + " cannot reach the target U"; }
      if (silent > STALE_S) { line += " · no word from the notebook for " + Math.round(silent) + " s (the page keeps trying)"; }
      var s = document.getElementById("room-summary");
      if (s.textContent !== line) { s.textContent = line; }
    }

    apply(JSON.parse(root.getAttribute("data-initial")));
    C.follow({
      eventName: "room",
      eventsUrl: function () { return root.getAttribute("data-events") + "?since=" + encodeURIComponent(cursor); },
      pollUrl: function () { return root.getAttribute("data-poll") + "?since=" + encodeURIComponent(cursor); },
      onAlive: function () { lastWord = Date.now(); },
      onData: function (d) { if (d.cursor !== undefined) { cursor = d.cursor; } apply(d.items); },
      onMode: function (mode) { root.setAttribute("data-mode", mode); }
    });
    setInterval(render, 1000);
  }

  if (document.readyState === "loading") { document.addEventListener("DOMContentLoaded", start); } else { start(); }
})();
