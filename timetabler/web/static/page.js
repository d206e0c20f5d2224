// timetabler local page: small helps, all optional (every page works without script).
// 1. Drag and drop a file onto the upload box; the upload shows its progress, then the reading.
// 2. Live progress of a solve, polled from this page's own server.
// 3. The counts table put in place when the (exact) counts arrive.
(function () {
  "use strict";

  function setupDrop() {
    var zone = document.getElementById("drop-zone");
    var input = document.getElementById("file-input");
    var form = document.getElementById("upload-form");
    if (!zone || !input || !form) return;
    ["dragenter", "dragover"].forEach(function (name) {
      zone.addEventListener(name, function (e) { e.preventDefault(); zone.classList.add("over"); });
    });
    ["dragleave", "drop"].forEach(function (name) {
      zone.addEventListener(name, function (e) { e.preventDefault(); zone.classList.remove("over"); });
    });
    zone.addEventListener("drop", function (e) {
      if (!e.dataTransfer || !e.dataTransfer.files.length) return;
      input.files = e.dataTransfer.files;
      var hint = document.getElementById("drop-hint");
      if (hint) hint.textContent = "Uploading " + e.dataTransfer.files[0].name + " …";
      form.requestSubmit ? form.requestSubmit() : form.submit();
    });
  }

  function megabytes(bytes) { return (bytes / (1024 * 1024)).toFixed(1); }

  // Send the chosen file with a progress bar (a large file takes a while to send), then say that
  // the page is reading it while the browser opens the overview (reading a large file takes a while too).
  function setupUploadProgress() {
    var form = document.getElementById("upload-form");
    var input = document.getElementById("file-input");
    var box = document.getElementById("upload-progress");
    if (!form || !input || !box || !window.XMLHttpRequest || !window.FormData) return;
    var bar = document.getElementById("upload-bar");
    var line = document.getElementById("upload-progress-text");
    var button = document.getElementById("upload-button");
    form.addEventListener("submit", function (event) {
      if (!input.files || !input.files.length) return;
      event.preventDefault();
      var file = input.files[0];
      box.hidden = false;
      if (button) button.disabled = true;
      bar.max = file.size || 1;
      bar.value = 0;
      line.textContent = "Sending " + file.name + " \u2026";
      var reading = null;
      function startReading() {
        if (reading !== null) return;
        var began = Date.now();
        bar.removeAttribute("value");  // no figure to show: an indeterminate bar
        line.textContent = "Sent. Reading and checking the file \u2026";
        reading = window.setInterval(function () {
          line.textContent = "Sent. Reading and checking the file \u2026 " + Math.round((Date.now() - began) / 1000) + " s";
        }, 1000);
      }
      var request = new XMLHttpRequest();
      request.open("POST", form.action);
      request.setRequestHeader("X-Timetabler-Upload", "progress");
      request.upload.addEventListener("progress", function (e) {
        if (!e.lengthComputable) return;
        bar.max = e.total;
        bar.value = e.loaded;
        line.textContent = "Sending " + file.name + ": " + megabytes(e.loaded) + " of " + megabytes(e.total) + " MB (" +
          Math.round(100 * e.loaded / e.total) + " %)";
      });
      request.upload.addEventListener("load", startReading);
      request.addEventListener("load", function () {
        var next = null;
        try { next = JSON.parse(request.responseText).next; } catch (ignored) { next = null; }
        if (request.status === 200 && next) {
          startReading();
          window.location.assign(next);  // the overview: the page reads the file for it
          return;
        }
        if (reading !== null) window.clearInterval(reading);
        document.open();  // the server's own message page (file too large, not a spreadsheet, ...)
        document.write(request.responseText);
        document.close();
      });
      request.addEventListener("error", function () {
        if (reading !== null) window.clearInterval(reading);
        line.textContent = "The file could not be sent: is the page server still running? Try again.";
        if (button) button.disabled = false;
      });
      request.send(new FormData(form));
    });
  }

  function text(value, digits) {
    if (value === null || value === undefined) return "\u2014";
    if (typeof value === "number") {
      if (Number.isInteger(value)) return value.toLocaleString("en-GB").replace(/,/g, "\u2009");
      return value.toFixed(digits === undefined ? 2 : digits);
    }
    return String(value);
  }

  var STOPPING = "Stopping: keeping the best timetable found so far \u2026";

  function setupProgress() {
    var box = document.getElementById("progress");
    if (!box) return;
    var source = box.getAttribute("data-source");
    var stateLine = document.getElementById("job-state");
    var stopping = false;
    function update(doc) {
      var rows = doc.slots.slice();
      if (doc.fewest) {
        var f = Object.assign({}, doc.fewest, { slots: "fewest", best: null, bound: null });
        f.status = doc.fewest.upper === null || doc.fewest.upper === undefined ? "" : doc.fewest.upper + " slots, " + doc.fewest.status;
        rows.push(f);
      }
      rows.forEach(function (s) {
        var row = document.getElementById("row-" + s.slots);
        if (!row) return;
        row.querySelector('[data-field="state"]').textContent = s.state + (s.phase ? " \u2014 " + s.phase : "");
        var bar = row.querySelector("progress");
        if (bar) bar.value = s.elapsed || 0;
        row.querySelector('[data-field="elapsed-text"]').textContent = s.elapsed === null ? "\u2014" : s.elapsed.toFixed(1) + " s";
        row.querySelector('[data-field="best"]').textContent = text(s.best);
        row.querySelector('[data-field="bound"]').textContent = text(s.bound);
        row.querySelector('[data-field="status"]').textContent = s.status || "";
      });
      if (doc.state === "finished") {
        stateLine.textContent = "Finished. Opening the timetables \u2026";
        window.location.assign(doc.next);
        return false;
      }
      if (doc.state === "stopping") { stateLine.textContent = STOPPING; return true; }
      if (doc.state === "cancelled") { stateLine.textContent = "Stopped."; return false; }
      if (doc.state === "failed") { stateLine.textContent = "The solve failed: " + doc.error; return false; }
      return true;
    }
    function poll() {
      fetch(source, { headers: { "Accept": "application/json" }, credentials: "same-origin" })
        .then(function (r) { return r.json(); })
        .then(function (doc) { if (update(doc) && !stopping) window.setTimeout(poll, 700); })
        .catch(function () { if (!stopping) window.setTimeout(poll, 2000); });
    }
    var stopForm = document.getElementById("stop-form");
    if (stopForm) stopForm.addEventListener("submit", function () {
      stopping = true;
      stateLine.textContent = STOPPING;
      var button = document.getElementById("stop-button");
      if (button) button.disabled = true;
    });
    poll();
  }

  // While the counts are worked out (first a quick look, then the exact count in the background),
  // poll this page's own server and put the new table in place: no reload, so the solve form
  // keeps what has been typed in it.
  function setupCounting() {
    var result = document.getElementById("count-result");
    var box = document.getElementById("counting");
    if (!result || !box) return;
    var source = box.getAttribute("data-source");
    var shownState = box.getAttribute("data-state");
    var ticksTouched = false;
    document.querySelectorAll('input[name="slots"]').forEach(function (tick) {
      tick.addEventListener("change", function () { ticksTouched = true; });
    });
    function place(doc) {
      result.innerHTML = doc.html;
      if (!ticksTouched && doc.suggested) {
        document.querySelectorAll('input[name="slots"]').forEach(function (tick) {
          tick.checked = doc.suggested.indexOf(Number(tick.value)) >= 0;
        });
      }
      box = document.getElementById("counting");
      shownState = box ? box.getAttribute("data-state") : doc.state;
      var error = result.querySelector(".error");
      if (error && error.scrollIntoView) error.scrollIntoView({ block: "center" });
    }
    function poll() {
      fetch(source, { headers: { "Accept": "application/json" }, credentials: "same-origin" })
        .then(function (r) { return r.json(); })
        .then(function (doc) {
          if (doc.state === "counting" || (doc.state === "refining" && shownState === "refining")) {
            var line = document.getElementById("counting-progress");
            if (line) line.textContent = doc.message || (doc.total ? "group " + doc.done + " of " + doc.total + " done" : "");
            window.setTimeout(poll, doc.state === "counting" ? 700 : 2000);
            return;
          }
          return fetch(source + "&html=1", { headers: { "Accept": "application/json" }, credentials: "same-origin" })
            .then(function (r) { return r.json(); })
            .then(function (full) {
              if (full.html !== undefined) place(full);
              if (full.state === "counting" || full.state === "refining") window.setTimeout(poll, 2000);
            });
        })
        .catch(function () { window.setTimeout(poll, 3000); });
    }
    poll();
  }

  document.addEventListener("DOMContentLoaded", function () {
    setupDrop(); setupUploadProgress(); setupProgress(); setupCounting();
  });
})();
