// Keyboard-first judging: digits grade the pair on screen. The page works without this
// file; it only adds keys and measures the time spent on each pair.
(function () {
  "use strict";
  let shownAt = performance.now();

  function typing(el) {
    return el && (el.tagName === "TEXTAREA" || el.tagName === "INPUT" || el.tagName === "SELECT" || el.isContentEditable);
  }

  document.addEventListener("keydown", function (ev) {
    if (ev.ctrlKey || ev.metaKey || ev.altKey || typing(ev.target)) return;
    if (/^[0-9]$/.test(ev.key)) {
      const button = document.querySelector('#pair button[name="grade"][value="' + ev.key + '"]');
      if (button) {
        ev.preventDefault();
        button.click();
      }
    }
  });

  // Stamp the time spent just before the form goes, whichever way it is sent.
  document.addEventListener("submit", function (ev) {
    const field = ev.target.querySelector('input[name="elapsed_ms"]');
    if (field) field.value = String(Math.round(performance.now() - shownAt));
  }, true);
  document.addEventListener("htmx:configRequest", function (ev) {
    if (ev.detail.parameters && "elapsed_ms" in ev.detail.parameters) {
      ev.detail.parameters.elapsed_ms = String(Math.round(performance.now() - shownAt));
    }
  });
  document.addEventListener("htmx:afterSwap", function (ev) {
    if (ev.detail.target && ev.detail.target.id === "pair") {
      shownAt = performance.now();
      const body = document.querySelector("#pair .doc-body");
      if (body) body.scrollTop = 0;
    }
  });
})();
