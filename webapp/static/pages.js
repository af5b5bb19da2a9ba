// cupcal notebook: small page helpers. Every page works without this file.
(function () {
  "use strict";
  document.addEventListener("DOMContentLoaded", function () {
    // after a failed submit, move focus to the list of problems so it is read first
    var summary = document.getElementById("error-summary");
    if (summary) {
      if (!summary.hasAttribute("tabindex")) { summary.setAttribute("tabindex", "-1"); }
      summary.focus();
    }
    // a select marked .autosubmit sends its form when it changes (its button stays for keyboards without JS)
    document.querySelectorAll("select.autosubmit").forEach(function (sel) {
      sel.addEventListener("change", function () { if (sel.form) { sel.form.submit(); } });
    });
  });
})();
