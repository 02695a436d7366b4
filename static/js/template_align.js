// Aligning a thermogram to a mark template by points: a click on either picture fills the
// next empty pair of numbers for that side (pixel centres at whole numbers, half-pixel steps).
const form = document.getElementById("align-form");
const note = document.getElementById("align-next");

function field(side, n, axis) {
  return form.querySelector(`input[name="${side}${n}_${axis}"]`);
}

function nextEmpty(side) {
  for (const n of [1, 2, 3]) {
    if (field(side, n, "x").value === "" || field(side, n, "y").value === "") { return n; }
  }
  return null;
}

function pixel(img, event) {
  const rect = img.getBoundingClientRect();
  const width = Number(img.dataset.width), height = Number(img.dataset.height);
  const x = (event.clientX - rect.left) / rect.width * width - 0.5;
  const y = (event.clientY - rect.top) / rect.height * height - 0.5;
  const clamp = (v, top) => Math.min(Math.max(Math.round(v * 2) / 2, 0), top - 1);
  return [clamp(x, width), clamp(y, height)];
}

document.querySelectorAll(".align-picture").forEach((img) => {
  img.addEventListener("click", (event) => {
    const side = img.dataset.side;
    const n = nextEmpty(side);
    if (n === null) { note.textContent = "All three points are set; change a number to correct one."; return; }
    const [x, y] = pixel(img, event);
    field(side, n, "x").value = x;
    field(side, n, "y").value = y;
    const other = side === "template" ? "this thermogram" : "the template";
    note.textContent = `Point ${n} set on ${side === "template" ? "the template" : "this thermogram"} at ${x}, ${y}; ` +
      `now the same point on ${other}, or the next point.`;
  });
});
