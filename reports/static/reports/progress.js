// Polls each report version that is being rendered and shows its stage and percent;
// reloads the page when a version is done so its PDF link appears.
(function () {
  "use strict";
  var POLL_MS = 1500;
  var MAX_POLLS = 2400; // an hour at most, then the user reloads by hand

  function watch(box) {
    var url = box.getAttribute("data-progress-url");
    var bar = box.querySelector("progress");
    var stage = box.querySelector(".progress-stage");
    var pct = box.querySelector(".progress-pct");
    var polls = 0;

    function poll() {
      polls += 1;
      fetch(url, { credentials: "same-origin", headers: { Accept: "application/json" } })
        .then(function (response) {
          if (!response.ok) { throw new Error("status " + response.status); }
          return response.json();
        })
        .then(function (data) {
          bar.value = data.progress_pct;
          pct.textContent = data.progress_pct + " %";
          stage.textContent = data.stage || data.status_label;
          if (data.done || data.failed) {
            window.location.reload();
          } else if (polls < MAX_POLLS) {
            window.setTimeout(poll, POLL_MS);
          }
        })
        .catch(function () {
          stage.textContent = "Progress unavailable; reload the page to check.";
        });
    }
    window.setTimeout(poll, POLL_MS);
  }

  document.querySelectorAll("[data-progress-url]").forEach(watch);
})();
