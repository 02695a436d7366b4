/* The thermogram workspace: draws the °C array on a canvas, lets the inspector place marks
   and shows the server's readings. No framework; all numbers shown in the table come from
   the server (/api/...), the canvas only colours pixels and reads the value under the cursor.

   Native ES modules, one per part: units, geometry and readout are pure (tested with
   node --test in tests/js/); state holds what all share; server talks to the API; rendering
   draws; marks, input, photo and table handle their parts of the page; loading brings a
   thermogram in. This entry module wires the page up. */

import { setTool } from "./input.js";
import { goTo, load } from "./loading.js";
import "./photo.js";
import { resize } from "./rendering.js";
import { $, root } from "./state.js";

$("ws-prev").addEventListener("click", function () { goTo("previous"); });
$("ws-next").addEventListener("click", function () { goTo("next"); });
window.addEventListener("popstate", function (event) {
  if (event.state && event.state.api) { load(event.state.api, false); }
});

var resizeTimer = null;
window.addEventListener("resize", function () { clearTimeout(resizeTimer); resizeTimer = setTimeout(resize, 100); });

history.replaceState({ api: root.dataset.api }, "", window.location.href);
setTool("select");
load(root.dataset.api, false);
