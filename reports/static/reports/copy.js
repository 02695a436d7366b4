// "Copy link" beside each client link: one click puts the link on the clipboard.
// The buttons are hidden until this script runs (without it, the field is still selectable).
function say(id, text) {
  const status = document.querySelector(`[data-copy-status='${id}']`);
  if (status) status.textContent = text;
}

async function copy(id) {
  const field = document.getElementById(id);
  if (!field) return;
  try {
    await navigator.clipboard.writeText(field.value);
    say(id, "Copied.");
  } catch {
    // Without clipboard permission: select the text so Ctrl+C (or a long press) copies it.
    field.focus();
    field.select();
    say(id, "Selected: press Ctrl+C to copy.");
  }
}

for (const button of document.querySelectorAll(".copy-button")) {
  button.hidden = false;
  button.addEventListener("click", () => copy(button.dataset.copyTarget));
}
