// The batch page (a survey's thermograms): each thermogram's state follows a small JSON
// poll in place. Nothing reloads the page, so a half-filled form on it is never lost.
import { BUSY, changedRows, nextDelay, summarise } from "./batch-progress.js";

const box = document.getElementById("batch-progress");
const bar = document.getElementById("batch-progress-bar");
const label = document.getElementById("batch-progress-text");
const shown = new Map();

function statusText(row) {
  return row.stalled ? "Stalled" : row.status_display;
}

function showThumbnail(figure, row) {
  const slot = figure.querySelector("[data-role=thumb]");
  if (!slot || !row.thumbnail || slot.querySelector("img")) return;
  const img = document.createElement("img");
  img.src = row.thumbnail;
  img.alt = slot.dataset.alt || "Thermogram";
  img.width = 160;
  slot.replaceChildren(img);
}

function showMeasureLink(figure, row) {
  const slot = figure.querySelector("[data-role=measure]");
  if (!slot || !row.workspace || slot.querySelector("a")) return;
  const link = document.createElement("a");
  link.href = row.workspace;
  link.textContent = "Measure";
  slot.replaceChildren(link, document.createTextNode(" ·"));
}

function update(row) {
  const figure = document.querySelector(`[data-thermogram-id='${row.id}']`);
  if (!figure) return;
  figure.classList.remove(...[...figure.classList].filter((c) => c.startsWith("status-")));
  figure.classList.add(`status-${row.status}`);
  const set = (role, text) => {
    const node = figure.querySelector(`[data-role=${role}]`);
    if (node) node.textContent = text;
  };
  set("status", statusText(row));
  set("error", row.error || "");
  if (row.summary) set("summary", row.summary);
  showThumbnail(figure, row);
  showMeasureLink(figure, row);
}

function render(data) {
  for (const row of changedRows(shown, data.thermograms)) {
    update(row);
    shown.set(row.id, row);
  }
  const progress = summarise(data);
  box.hidden = progress.total === 0;
  bar.max = Math.max(progress.total, 1);
  bar.value = progress.done;
  label.textContent = progress.text;
  return progress;
}

let delay = 2000;

async function poll() {
  try {
    const response = await fetch(box.dataset.statusUrl, {
      credentials: "same-origin",
      headers: { Accept: "application/json" },
    });
    if (!response.ok) throw new Error(`status ${response.status}`);
    const progress = render(await response.json());
    if (progress.finished) return;
    window.setTimeout(poll, delay);
    delay = nextDelay(delay);
  } catch {
    window.setTimeout(poll, 15000);
  }
}

if (box && document.querySelector(`.${[...BUSY].map((s) => `status-${s}`).join(", .")}`)) {
  poll();
}
