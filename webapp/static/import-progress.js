// The import page: upload progress, then "analyzing" (loaded by templates/imports/new.html;
// a static file, so the Content-Security-Policy needs no inline script).
(function () {
  // Our own small progress indicator: the upload's progress, then "analyzing"; without JS the form posts normally.
  var form = document.getElementById("import-form");
  if (!form || !window.XMLHttpRequest || !window.FormData) { return; }
  form.addEventListener("submit", function (ev) {
    ev.preventDefault();
    var bar = document.getElementById("import-progress"), status = document.getElementById("import-status");
    var xhr = new XMLHttpRequest();
    bar.hidden = false;
    xhr.upload.onprogress = function (e) {
      if (e.lengthComputable) { bar.value = Math.round(100 * e.loaded / e.total); status.textContent = "uploading " + bar.value + " %"; }
    };
    xhr.upload.onload = function () { bar.removeAttribute("value"); status.textContent = "analyzing and storing the runs…"; };
    xhr.onload = function () { document.open(); document.write(xhr.responseText); document.close(); };
    xhr.onerror = function () { status.textContent = "the upload failed; try again"; };
    xhr.open("POST", window.location.href);
    xhr.send(new FormData(form));
  });
})();
