/* Proposed marks: listed beside the marks, drawn dashed on the picture, accepted (they
   become ordinary marks) or rejected with one key each while the list or the picture has
   focus, or with the buttons. Rejected places are remembered by the server. */

import { refreshTable, select } from "./marks.js";
import { afterRemoval, describe, keyAction, moved } from "./proposal_list.js";
import { draw, shapePath } from "./rendering.js";
import { api } from "./server.js";
import { $, canvas, ctx, drawHooks, root, state, status } from "./state.js";

var PROPOSAL_COLOUR = "#00e5ff";
var CURRENT_COLOUR = "#ff8c00";
var OUTLINE = "#002b33";

var list = $("ws-proposals");
var items = $("ws-proposals-list");
var proposals = { items: [], current: -1, url: null, canEdit: false, busy: false };

function current() { return proposals.items[proposals.current] || null; }

function render() {
  items.textContent = "";
  var count = proposals.items.length;
  proposals.items.forEach(function (item, i) {
    var li = document.createElement("li");
    li.className = "ws-proposal" + (i === proposals.current ? " ws-current" : "");
    if (i === proposals.current) { li.setAttribute("aria-current", "true"); }
    li.dataset.proposalId = String(item.id);
    var text = document.createElement("span");
    text.textContent = describe(item, i + 1, count);
    li.appendChild(text);
    if (proposals.canEdit) {
      var row = document.createElement("span");
      row.className = "ws-row";
      [["Accept", "accept"], ["Reject", "reject"]].forEach(function (pair) {
        var button = document.createElement("button");
        button.type = "button";
        button.className = pair[1] === "accept" ? "" : "secondary";
        button.textContent = pair[0];
        button.setAttribute("aria-label", pair[0] + " proposal " + (i + 1));
        button.addEventListener("click", function () { proposals.current = i; decide(pair[1]); });
        row.appendChild(button);
      });
      li.appendChild(row);
    }
    li.addEventListener("click", function (event) {
      if (event.target.tagName === "BUTTON") { return; }
      proposals.current = i; render(); draw();
    });
    items.appendChild(li);
  });
  $("ws-proposals-count").textContent = count ? "(" + count + ")" : "";
  list.hidden = count === 0;
}

export function loadProposals() {
  if (!state.meta || !state.meta.urls.proposals || state.meta.status !== "ready") {
    proposals.items = []; proposals.current = -1; render(); return Promise.resolve();
  }
  proposals.url = state.meta.urls.proposals;
  return api("GET", proposals.url).then(show).catch(function (error) { status(error.message, true); });
}

function show(data) {
  var keep = current() ? current().id : null;
  proposals.items = data.proposals;
  proposals.canEdit = data.can_edit;
  var index = proposals.items.findIndex(function (p) { return p.id === keep; });
  proposals.current = index >= 0 ? index : (proposals.items.length ? 0 : -1);
  $("ws-proposals-note").textContent = data.note || (proposals.items.length ? "" : "No proposals for this thermogram.");
  $("ws-propose").hidden = !data.can_edit;
  render();
  draw();
}

function decide(action) {
  var item = current();
  if (!item) { status("No proposal to " + action + "."); return; }
  if (!proposals.canEdit) { status("Your role can read proposals but not decide them.", true); return; }
  if (proposals.busy) { status("Still saving the last decision…"); return; }
  proposals.busy = true;
  var index = proposals.current, count = proposals.items.length;
  api("POST", action === "accept" ? item.accept : item.reject).then(function (mark) {
    // Decided: the next key may act on the next proposal while the readings reload.
    proposals.busy = false;
    proposals.items.splice(index, 1);
    proposals.current = afterRemoval(count, index);
    render();
    if (action === "accept") {
      status("Proposal accepted: mark " + mark.label + " added.");
      state.selectedId = mark.id;
      return refreshTable().then(function () { select(mark.id); return loadProposals(); });
    }
    status("Proposal rejected; this place will not be proposed again.");
    draw();
    return loadProposals();
  }).catch(function (error) { proposals.busy = false; status(error.message, true); return loadProposals(); });
}

function onKey(event) {
  if (!state.temps) { return; }
  var action = keyAction(event, event.currentTarget === list);
  if (!action) { return; }
  event.preventDefault();
  if (action === "next" || action === "previous") {
    proposals.current = moved(proposals.items.length, proposals.current, action === "next" ? 1 : -1);
    render();
    draw();
    var item = current();
    if (item) { status(describe(item, proposals.current + 1, proposals.items.length)); }
    return;
  }
  decide(action);
}

list.addEventListener("keydown", onKey);
canvas.addEventListener("keydown", onKey);

$("ws-propose").addEventListener("click", function () {
  if (!proposals.url) { return; }
  var button = this;
  button.disabled = true;
  status("Looking for places to mark…");
  api("POST", proposals.url).then(function (data) {
    show(data);
    status(data.proposals.length + " proposal" + (data.proposals.length === 1 ? "" : "s") + ".");
  }).catch(function (error) { status(error.message, true); })
    .then(function () { button.disabled = false; });
});

drawHooks.push(function () {
  proposals.items.forEach(function (item, i) {
    var highlighted = i === proposals.current;
    ctx.save();
    ctx.setLineDash([6, 4]);
    shapePath(item.kind, item.points, false);
    ctx.lineWidth = highlighted ? 4 : 3; ctx.strokeStyle = OUTLINE; ctx.stroke();
    ctx.lineWidth = highlighted ? 2.5 : 1.5;
    ctx.strokeStyle = highlighted ? CURRENT_COLOUR : PROPOSAL_COLOUR;
    ctx.stroke();
    ctx.restore();
  });
});

root.addEventListener("ws:loaded", function () { loadProposals(); });
