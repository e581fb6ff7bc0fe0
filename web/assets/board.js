// Progressive enhancement only: every page reads and works without it.
"use strict";
// Filter forms marked data-autosubmit submit when a choice changes.
document.querySelectorAll("form[data-autosubmit]").forEach(function (form) {
  form.addEventListener("change", function () { form.submit(); });
});
// The field check's airframe list: a new airframe starts a new choice of
// packs, so the old answer and pack choices are dropped before submitting.
document.querySelectorAll("select[data-autosubmit-field]").forEach(function (sel) {
  sel.addEventListener("change", function () {
    var form = sel.form;
    form.querySelectorAll("input[name=ask], input[name=pack]").forEach(function (el) { el.remove(); });
    form.submit();
  });
});
