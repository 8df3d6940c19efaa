// growband clinic: small conveniences; the page works without them.
(function () {
  "use strict";
  document.documentElement.classList.add("js");

  // Choosing another reference reloads the page for it.
  document.querySelectorAll("select[data-autosubmit]").forEach(function (sel) {
    sel.addEventListener("change", function () { sel.form.submit(); });
  });

  // "Add a visit" copies the last visit row instead of a round trip.
  var add = document.querySelector("[data-add-visit]");
  if (add) {
    add.addEventListener("click", function (ev) {
      var rows = document.querySelectorAll("[data-visit]");
      if (rows.length === 0 || rows.length >= 60) { return; }
      ev.preventDefault();
      var last = rows[rows.length - 1];
      var row = last.cloneNode(true);
      var n = rows.length + 1;
      row.querySelector(".vn").textContent = String(n);
      row.querySelectorAll(".err").forEach(function (e) { e.remove(); });
      row.querySelectorAll(".field").forEach(function (f) { f.classList.remove("bad"); });
      row.querySelectorAll("input").forEach(function (inp) {
        var base = inp.name;
        inp.value = "";
        inp.id = base + "-" + n;
        inp.removeAttribute("aria-invalid");
        inp.removeAttribute("aria-describedby");
        var lab = inp.parentNode.querySelector("label");
        if (lab) { lab.htmlFor = inp.id; }
      });
      last.parentNode.insertBefore(row, last.nextSibling);
      row.querySelector("input").focus();
    });
  }

  // The date printed defaults to today, on this computer only: the print
  // fields have no name and lie outside the form, so nothing sends them.
  var today = document.querySelector("[data-today]");
  if (today && !today.value) {
    var d = new Date();
    today.value = d.getFullYear() + "-" + String(d.getMonth() + 1).padStart(2, "0") + "-" + String(d.getDate()).padStart(2, "0");
  }

  var pr = document.querySelector("[data-print]");
  if (pr) {
    pr.hidden = false;
    pr.addEventListener("click", function () { window.print(); });
  }
})();
