// Keyboard-first judging. The pages work without this file; it adds the keys, measures the
// time spent on each pair, and keeps focus and the status line sensible across htmx swaps.
//   0-9  grade the pair on screen (and go on)     x  cannot judge: opens the reasons,
//   b l d o  pick a reason while they are open    u  undo the last judgment
//   n    focus the note (Esc leaves it)           g  show or hide the guidelines
// On the comparing screen 1-4 give the answer of the button marked with that key
// (data-shortcut) and f ticks or clears the disturbing-content flag.
(function () {
  "use strict";
  let shownAt = performance.now();

  function typing(el) {
    // A ticked checkbox keeps focus, but the keys must still work there.
    if (el && el.tagName === "INPUT" && el.type === "checkbox") return false;
    return el && (el.tagName === "TEXTAREA" || el.tagName === "INPUT" || el.tagName === "SELECT" || el.isContentEditable);
  }

  function toggle(details, focusSelector) {
    if (!details) return;
    details.open = !details.open;
    if (details.open && focusSelector) {
      const target = details.querySelector(focusSelector);
      if (target) target.focus();
    }
  }

  document.addEventListener("keydown", function (ev) {
    if (ev.ctrlKey || ev.metaKey || ev.altKey) return;
    if (typing(ev.target)) {
      if (ev.key === "Escape") {
        ev.preventDefault();
        ev.target.blur();
      }
      return;
    }
    const pair = document.getElementById("pair");
    if (!pair) return;
    const cannot = document.getElementById("cannot");
    let handled = true;
    if (/^[0-9]$/.test(ev.key)) {
      const button = pair.querySelector('button[name="grade"][value="' + ev.key + '"]') ||
        pair.querySelector('button[data-shortcut="' + ev.key + '"]');
      if (button) button.click(); else handled = false;
    } else if (ev.key === "x") {
      toggle(cannot, "button");
    } else if (cannot && cannot.open && pair.querySelector('button[data-key="' + ev.key + '"]')) {
      pair.querySelector('button[data-key="' + ev.key + '"]').click();
    } else if (ev.key === "f" && document.getElementById("flag")) {
      const flag = document.getElementById("flag");
      flag.checked = !flag.checked;
    } else if (ev.key === "u") {
      const undo = document.getElementById("undo");
      if (undo) undo.click(); else handled = false;
    } else if (ev.key === "n") {
      const note = document.getElementById("note");
      if (note) note.focus(); else handled = false;
    } else if (ev.key === "g") {
      toggle(document.getElementById("guidelines"), ".guidelines-body");
    } else if (ev.key === "Escape") {
      if (cannot && cannot.open) cannot.open = false; else handled = false;
    } else {
      handled = false;
    }
    if (handled) ev.preventDefault();
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

  // A fresh pair: restart the clock, show its top, and put focus on the query so a screen
  // reader starts reading there (the status line has announced what was saved).
  document.addEventListener("htmx:afterSwap", function (ev) {
    const pair = ev.target;
    if (!pair || pair.id !== "pair") return;
    shownAt = performance.now();
    // htmx wires the new form up as it settles; do it now, so a key pressed at once is sent
    // by htmx too rather than as a full-page post.
    if (window.htmx) window.htmx.process(pair);
    const body = pair.querySelector(".doc-body");
    if (body) body.scrollTop = 0;
    if (pair.getBoundingClientRect().top < 0) pair.scrollIntoView({ block: "start" });
    const query = document.getElementById("query-text");
    if (query) query.focus({ preventScroll: true });
  });

  // Refusals (a pair that filled up, a change no longer allowed) go to the status line
  // instead of vanishing.
  document.addEventListener("htmx:responseError", function (ev) {
    const status = document.getElementById("status") || document.querySelector(".saved[role=status]");
    if (!status) return;
    const box = document.createElement("div");
    box.innerHTML = ev.detail.xhr.responseText;
    status.textContent = box.textContent.trim() || "That did not work; please try again.";
  });
})();
