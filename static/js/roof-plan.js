// Roof plan page: a click on the plan fills in the chosen thermogram's place (percent of
// the plan from the top-left corner); the user saves it with the row's button.
const plan = document.getElementById("roof-plan");
const target = document.getElementById("plan-target");

if (plan && target) {
  plan.addEventListener("click", (event) => {
    const box = plan.getBoundingClientRect();
    const x = ((event.clientX - box.left) / box.width) * 100;
    const y = ((event.clientY - box.top) / box.height) * 100;
    const form = document.querySelector(`form.plan-position[data-thermogram="${target.value}"]`);
    if (!form) return;
    const [across, down] = form.querySelectorAll("input[type=number]");
    across.value = Math.min(100, Math.max(0, x)).toFixed(1);
    down.value = Math.min(100, Math.max(0, y)).toFixed(1);
    form.querySelector("button").focus();
  });
}
