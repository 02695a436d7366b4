// Survey page: drag-and-drop into the upload form (live status: static/js/batch.js).
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

  setupDropzone();
})();
