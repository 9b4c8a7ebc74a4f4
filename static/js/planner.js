// Small behaviours of the planner's own pages. Everything works without it;
// it only stops a second tap sending a form twice, asks before deleting, and
// selects a number field's content when it gets focus (quick re-entry).
(function () {
  "use strict";

  var RETRY_AFTER_MS = 8000;

  function buttonsOf(form) {
    return form.querySelectorAll("button[type=submit], button:not([type])");
  }

  function release(form) {
    delete form.dataset.sent;
    buttonsOf(form).forEach(function (button) {
      button.disabled = false;
      button.removeAttribute("aria-busy");
    });
  }

  document.addEventListener("submit", function (event) {
    var form = event.target;
    if (!(form instanceof HTMLFormElement) || event.defaultPrevented) {
      return;
    }
    var submitter = event.submitter;
    var question = (submitter && submitter.getAttribute("data-confirm")) ||
      form.getAttribute("data-confirm");
    if (question && !window.confirm(question)) {
      event.preventDefault();
      return;
    }
    if (form.hasAttribute("hx-post")) {
      return; // htmx sends it and disables the buttons itself (hx-disabled-elt)
    }
    if (form.dataset.sent === "yes") {
      event.preventDefault();
      return;
    }
    form.dataset.sent = "yes";
    // After the browser has read the form: a disabled submitter would drop its value.
    window.setTimeout(function () {
      buttonsOf(form).forEach(function (button) {
        button.disabled = true;
        button.setAttribute("aria-busy", "true");
      });
    }, 0);
    // A lost connection leaves the page as it was: let the user send it again
    // (the form's id makes the retry safe).
    window.setTimeout(function () { release(form); }, RETRY_AFTER_MS);
  }, false);

  window.addEventListener("pageshow", function () {
    document.querySelectorAll("form[data-sent]").forEach(release);
  });

  // A form shown again with errors: put the cursor in the first field to correct.
  document.addEventListener("DOMContentLoaded", function () {
    var wrong = document.querySelector("form [aria-invalid=true]");
    if (wrong && typeof wrong.focus === "function") {
      wrong.focus();
    }
  });

  document.addEventListener("focusin", function (event) {
    var field = event.target;
    if (field instanceof HTMLInputElement && field.classList.contains("numeric")) {
      window.setTimeout(function () { field.select(); }, 0);
    }
  });
})();
