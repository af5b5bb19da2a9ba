// cupcal: one live run's page. The curve, status line, warnings and estimate follow the notebook's
// events (or its JSON poll); the page warns by itself within 5 s when nothing new arrives.
(function () {
  "use strict";
  var STALE_S = 5;

  function start() {
    var root = document.getElementById("live-run");
    if (!root || !window.cupcalCurve) { return; }
    var C = window.cupcalCurve, first = JSON.parse(root.getAttribute("data-initial"));
    var st = {rows: [], advice: first.advice || {}, seq: -1, adviceSeq: first.advice_seq, state: first.state,
      shown: first.shown || {}, lastReading: Date.now() - 1000 * (first.stale_s || 0), lastWord: Date.now()};
    root.setAttribute("data-mode", "starting");

    function apply(d) {
      if (d.readings && d.readings.length) {
        C.merge(st.rows, d.readings);
        st.seq = st.rows[st.rows.length - 1][0];
        st.lastReading = Date.now() - 1000 * (d.stale_s || 0);  // the server knows when it came
      }
      if (d.advice) { st.advice = d.advice; st.adviceSeq = d.advice_seq; st.shown = d.shown || {}; }
      st.state = d.state || st.state;
      if (d.run_url) { st.runUrl = d.run_url; }
      render();
    }

    function render() {
      var a = st.advice || {};
      C.draw(document.getElementById("live-curve"), {readings: st.rows, periods: a.periods, drift_lines: a.drift_lines});
      text("live-count", String(st.seq + 1));
      text("live-state", st.state);
      document.getElementById("live-state").className = "live-state live-state-" + st.state;
      text("live-status", a.status || "waiting for the first readings");
      text("est-delta-t", st.shown.delta_t || "—");
      text("est-value", st.shown.value || "—");
      text("est-quantity", st.shown.quantity || "Result");
      text("est-periods", st.shown.periods || "none yet");
      root.setAttribute("data-phase", a.phase || "");
      if (st.runUrl) {
        document.getElementById("live-stored-link").href = st.runUrl;
        document.getElementById("live-stored").hidden = false;
      }
      root.setAttribute("data-seq", String(st.seq));
      alerts();
    }

    function text(id, value) {
      var e = document.getElementById(id);
      if (e && e.textContent !== value) { e.textContent = value; }
    }

    function alerts() {
      var items = ((st.advice || {}).warnings || []).map(function (w) {
        return {code: w.code, name: C.warningNames[w.code] || "Warning", message: w.message};
      });
      var now = Date.now(), quiet = (now - st.lastReading) / 1000, silent = (now - st.lastWord) / 1000;
      if (st.state === "recording" && quiet > STALE_S && !items.some(function (w) { return w.code === "readings_stopped"; })) {
        items.push({code: "page_stale", name: "No new reading",
          message: "nothing new for " + Math.round(quiet) + " s: check the probe, its cable and the recorder"});
      }
      if (silent > STALE_S) {
        items.push({code: "page_offline", name: "No word from the notebook",
          message: "for " + Math.round(silent) + " s; the page keeps trying"});
      }
      var box = document.getElementById("live-alerts");
      var key = items.map(function (w) { return w.code + w.message; }).join("|");
      if (box.getAttribute("data-key") === key) { return; }
      box.setAttribute("data-key", key);
      while (box.firstChild) { box.removeChild(box.firstChild); }
      items.forEach(function (w) {
        var p = document.createElement("p");
        p.className = "live-alert live-alert-" + w.code;
        var strong = document.createElement("strong");
        strong.textContent = w.name + ": ";
        p.appendChild(strong);
        p.appendChild(document.createTextNode(w.message));
        box.appendChild(p);
      });
    }

    apply(first);
    C.follow({
      eventName: "update",
      eventsUrl: function () { return root.getAttribute("data-events") + "?after=" + st.seq + "&advice=" + st.adviceSeq; },
      pollUrl: function () { return root.getAttribute("data-poll") + "?after=" + st.seq + "&advice=" + st.adviceSeq; },
      onAlive: function () { st.lastWord = Date.now(); },
      onData: apply,
      onMode: function (mode) { root.setAttribute("data-mode", mode); }
    });
    setInterval(alerts, 1000);
  }

  if (document.readyState === "loading") { document.addEventListener("DOMContentLoaded", start); } else { start(); }
})();
