// The navigation on a phone: one "Menu" button opens and closes it. Without this script the
// links simply wrap under the brand (nothing is hidden that a script would have to show).
const header = document.getElementById("topbar");
const button = header && header.querySelector(".menu-toggle");
if (header && button) {
  button.hidden = false;
  header.classList.add("menu-ready");
  button.addEventListener("click", () => {
    const open = button.getAttribute("aria-expanded") !== "true";
    button.setAttribute("aria-expanded", String(open));
    header.classList.toggle("open", open);
  });
  document.addEventListener("keydown", (event) => {
    if (event.key === "Escape" && header.classList.contains("open")) {
      button.setAttribute("aria-expanded", "false");
      header.classList.remove("open");
      button.focus();
    }
  });
}
