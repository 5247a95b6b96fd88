// etchlog lab pages: the pages work without this file; it only moves the
// keyboard focus to the first refused field after a form comes back.
document.addEventListener("DOMContentLoaded", function () {
  var bad = document.querySelector('[aria-invalid="true"]');
  if (bad) { bad.focus(); return; }
  var problem = document.getElementById("problem");
  if (problem) { problem.setAttribute("tabindex", "-1"); problem.focus(); }
});
