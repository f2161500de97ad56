// The lead's keyboard: in the disagreement queue j/k move and Enter opens the pair; on the
// adjudication screen a digit picks the final grade and Enter sets it. Every page works
// without this file.
(function () {
  "use strict";

  function typing(el) {
    if (!el) return false;
    if (el.tagName === "INPUT") return el.type !== "radio" && el.type !== "checkbox";
    return el.tagName === "TEXTAREA" || el.tagName === "SELECT" || el.isContentEditable;
  }

  function queueRows() {
    return Array.prototype.slice.call(document.querySelectorAll("#queue tbody tr[data-href]"));
  }

  function select(rows, i) {
    rows.forEach(function (r) { r.classList.remove("current"); r.removeAttribute("aria-current"); });
    const row = rows[i];
    if (!row) return;
    row.classList.add("current");
    row.setAttribute("aria-current", "true");
    row.focus({ preventScroll: true });
    row.scrollIntoView({ block: "nearest" });
  }

  function current(rows) {
    for (let i = 0; i < rows.length; i++) {
      if (rows[i].classList.contains("current")) return i;
    }
    return -1;
  }

  function startQueue() {
    const rows = queueRows();
    if (rows.length && current(rows) < 0) select(rows, 0);
  }

  document.addEventListener("DOMContentLoaded", startQueue);
  document.addEventListener("htmx:afterSwap", startQueue);

  document.addEventListener("click", function (ev) {
    const row = ev.target.closest && ev.target.closest("#queue tbody tr[data-href]");
    if (row && !ev.target.closest("a")) window.location.href = row.getAttribute("data-href");
  });

  document.addEventListener("keydown", function (ev) {
    if (ev.ctrlKey || ev.metaKey || ev.altKey || typing(ev.target)) return;
    const rows = queueRows();
    if (rows.length) {
      const i = current(rows);
      if (ev.key === "j") { ev.preventDefault(); select(rows, Math.min(i + 1, rows.length - 1)); return; }
      if (ev.key === "k") { ev.preventDefault(); select(rows, Math.max(i - 1, 0)); return; }
      if (ev.key === "Enter" && i >= 0) { ev.preventDefault(); window.location.href = rows[i].getAttribute("data-href"); return; }
    }
    const form = document.getElementById("adjudication");
    if (!form) return;
    if (/^[0-9]$/.test(ev.key)) {
      const radio = form.querySelector('input[name="grade"][value="' + ev.key + '"]');
      if (radio) { ev.preventDefault(); radio.checked = true; radio.focus(); }
      return;
    }
    if (ev.key === "Enter" && form.querySelector('input[name="grade"]:checked')) {
      ev.preventDefault();
      form.requestSubmit();
    }
  });

  // One Enter can reach the form twice (the key handler and the browser's own implicit
  // submission): send it once.
  document.addEventListener("submit", function (ev) {
    const form = ev.target;
    if (form.id !== "adjudication") return;
    if (form.dataset.sent) { ev.preventDefault(); return; }
    form.dataset.sent = "1";
  });
})();
