// Survey page: drag-and-drop into the upload form, and live status of processing.
(function () {
  "use strict";

  function setupDropzone() {
    var zone = document.getElementById("dropzone");
    var form = document.getElementById("upload-form");
    if (!zone || !form) return;
    var input = form.querySelector("input[name=files]");
    var photos = form.querySelector("input[name=photos]");
    var summary = document.getElementById("dropzone-summary");
    function describe() {
      var n = input.files ? input.files.length : 0;
      var p = photos && photos.files ? photos.files.length : 0;
      summary.textContent = n ? n + " thermogram file(s)" + (p ? " and " + p + " photo(s)" : "") + " chosen." : "";
    }
    ["dragenter", "dragover"].forEach(function (name) {
      zone.addEventListener(name, function (event) {
        event.preventDefault();
        zone.classList.add("dragging");
      });
    });
    ["dragleave", "drop"].forEach(function (name) {
      zone.addEventListener(name, function () { zone.classList.remove("dragging"); });
    });
    zone.addEventListener("drop", function (event) {
      event.preventDefault();
      var transfer = new DataTransfer();
      Array.prototype.forEach.call(input.files || [], function (f) { transfer.items.add(f); });
      Array.prototype.forEach.call(event.dataTransfer.files, function (f) { transfer.items.add(f); });
      input.files = transfer.files;
      describe();
    });
    input.addEventListener("change", describe);
    if (photos) photos.addEventListener("change", describe);
    form.addEventListener("submit", function () {
      var button = form.querySelector("button[type=submit]");
      button.disabled = true;
      button.textContent = "Uploading…";
    });
  }

  function setupStatus() {
    var progress = document.getElementById("batch-progress");
    if (!progress) return;
    var url = progress.getAttribute("data-status-url");
    var delay = 2000;
    function update(data) {
      data.thermograms.forEach(function (row) {
        var figure = document.querySelector("[data-thermogram-id='" + row.id + "']");
        if (!figure) return;
        var wasDone = !/status-(queued|processing)/.test(figure.className);
        figure.className = "thermogram status-" + row.status;
        figure.querySelector("[data-role=status]").textContent = row.stalled ? "Stalled" : row.status_display;
        figure.querySelector("[data-role=error]").textContent = row.error;
        if (!wasDone && row.status !== "queued" && row.status !== "processing") {
          window.location.reload();
        }
      });
      progress.textContent = data.total ? "(" + data.done + " of " + data.total + " processed)" : "";
      if (data.done < data.total) {
        window.setTimeout(poll, delay);
        delay = Math.min(delay * 1.5, 15000);
      }
    }
    function poll() {
      fetch(url, { credentials: "same-origin", headers: { Accept: "application/json" } })
        .then(function (response) { return response.ok ? response.json() : null; })
        .then(function (data) { if (data) update(data); })
        .catch(function () { window.setTimeout(poll, 15000); });
    }
    if (document.querySelector(".status-queued, .status-processing")) poll();
  }

  setupDropzone();
  setupStatus();
})();
