/* The visual photo beside or under the thermogram, and aligning the two from point pairs
   (the server fits the transform: survey/thermal/alignment.py). */

import { draw, resize } from "./rendering.js";
import { api } from "./server.js";
import { $, canvas, photoImg, state, clampPixel, status } from "./state.js";

export function setupPhoto(meta) {
  var has = !!meta.photo;
  $("ws-photo-tools").hidden = !has;
  if (!has) { state.photoMode = "none"; $("ws-photo-box").hidden = true; return; }
  if (photoImg.getAttribute("src") !== meta.photo.url) {
    photoImg.src = meta.photo.url;
    photoImg.onload = draw;
  }
  var aligned = !!meta.photo.alignment;
  $("ws-photo-mode").querySelector("option[value=blend]").disabled = !aligned;
  if (!aligned && state.photoMode === "blend") { state.photoMode = "beside"; }
  $("ws-photo-mode").value = state.photoMode;
  $("ws-align-clear").hidden = !aligned;
  $("ws-align-save").hidden = true;
  $("ws-align-help").textContent = aligned ? "Aligned with " + meta.photo.alignment.pairs.length + " pairs of points." : "Not aligned yet.";
  applyPhotoMode();
}

export function applyPhotoMode() {
  $("ws-photo-box").hidden = !(state.photoMode === "beside" || state.aligning);
  resize();
}

function showAligning() {
  var a = state.aligning;
  // While matching, a finger on the picture places points instead of scrolling.
  canvas.classList.toggle("ws-drawing", state.tool !== "select" || !!a);
  $("ws-align-keys").hidden = !(a && a.pending);
}

export function alignClickThermogram(p) {
  var a = state.aligning;
  if (a.pairs.length >= 3) { return; }
  a.pending = clampPixel(p);
  // A first guess for the keyboard: the same place in proportion on the photo.
  if (photoImg.naturalWidth && state.w) {
    $("ws-align-x").value = Math.round((a.pending[0] + 0.5) * photoImg.naturalWidth / state.w);
    $("ws-align-y").value = Math.round((a.pending[1] + 0.5) * photoImg.naturalHeight / state.h);
  }
  $("ws-align-x").max = Math.max(0, photoImg.naturalWidth - 1);
  $("ws-align-y").max = Math.max(0, photoImg.naturalHeight - 1);
  $("ws-align-help").textContent = "Now click the same spot on the photo, or give its x and y below and press Add this pair.";
  showAligning();
  draw();
}

function addPhotoPoint(x, y) {
  var a = state.aligning;
  a.pairs.push([[x, y], a.pending]);
  a.pending = null;
  $("ws-align-save").hidden = a.pairs.length < 2;
  $("ws-align-help").textContent = a.pairs.length + " pair(s). " + (a.pairs.length < 3 ? "Add another, or save." : "Save the alignment.");
  showAligning();
  draw();
}

$("ws-photo-mode").addEventListener("change", function () { state.photoMode = this.value; applyPhotoMode(); });
$("ws-blend").addEventListener("input", function () { state.blend = this.value / 100; draw(); });
$("ws-align").addEventListener("click", function () {
  state.aligning = { pairs: [], pending: null };
  $("ws-align-help").textContent = "Click a spot on the thermogram, then the same spot on the photo. Two or three pairs. " +
    "From the keyboard: on the picture, move the cross-hair with the arrow keys and press Enter; then give the photo's x and y.";
  showAligning();
  applyPhotoMode();
});

$("ws-align-add").addEventListener("click", function () {
  var a = state.aligning;
  if (!a || !a.pending) { return; }
  var x = Number($("ws-align-x").value), y = Number($("ws-align-y").value);
  var w = photoImg.naturalWidth, h = photoImg.naturalHeight;
  if ($("ws-align-x").value === "" || $("ws-align-y").value === "" || !Number.isInteger(x) || !Number.isInteger(y) ||
      x < 0 || y < 0 || x >= w || y >= h) {
    status("Give the photo point as whole pixels, x from 0 to " + (w - 1) + " and y from 0 to " + (h - 1) + ".", true);
    return;
  }
  addPhotoPoint(x, y);
  canvas.focus();
});

photoImg.addEventListener("click", function (event) {
  var a = state.aligning;
  if (!a || !a.pending) { return; }
  var rect = photoImg.getBoundingClientRect();
  var x = (event.clientX - rect.left) * photoImg.naturalWidth / rect.width;
  var y = (event.clientY - rect.top) * photoImg.naturalHeight / rect.height;
  addPhotoPoint(Math.round(x), Math.round(y));
});

$("ws-align-save").addEventListener("click", function () {
  api("PUT", state.meta.urls.alignment, { pairs: state.aligning.pairs }).then(function (data) {
    state.meta.photo.alignment = data.alignment;
    state.aligning = null;
    showAligning();
    state.photoMode = "blend";
    status("Photo aligned.");
    setupPhoto(state.meta);
  }).catch(function (error) { status(error.message, true); });
});
$("ws-align-clear").addEventListener("click", function () {
  api("DELETE", state.meta.urls.alignment).then(function () {
    state.meta.photo.alignment = null;
    status("Alignment forgotten.");
    setupPhoto(state.meta);
  }).catch(function (error) { status(error.message, true); });
});
