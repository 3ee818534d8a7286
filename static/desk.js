// Trend Audit desk: small enhancements only. Every form works without this file.
(function () {
  "use strict";

  // While an audit runs (several seconds of simulations), say so, and stop a second submission.
  function showProgress(form, submitter) {
    var status = form.querySelector("[data-progress]");
    if (!status) return;
    var message = submitter && submitter.getAttribute("data-progress-message");
    if (message) {
      var text = status.querySelector("[data-progress-text]");
      if (text) text.textContent = message;
    }
    status.hidden = false;
    var buttons = form.querySelectorAll("button[type=submit], button:not([type])");
    // Disabling in the same task would drop the submitter's name and value from the submission.
    window.setTimeout(function () {
      for (var i = 0; i < buttons.length; i++) buttons[i].disabled = true;
    }, 0);
  }

  document.addEventListener("submit", function (event) {
    var form = event.target;
    if (!(form instanceof HTMLFormElement) || !form.hasAttribute("data-enhance")) return;
    var submitter = event.submitter || null;
    if (submitter && submitter.hasAttribute("data-no-progress")) return;
    showProgress(form, submitter);
  });

  // A page that shows an input problem moves focus to it, so keyboard and screen-reader users hear it first.
  document.addEventListener("DOMContentLoaded", function () {
    var problem = document.getElementById("problem");
    if (problem) problem.focus();
    var permalink = document.getElementById("permalink-field");
    if (permalink && permalink.value.charAt(0) === "/") {
      // Without a configured public address the server can only give a path; the browser knows the rest,
      // and a printed copy needs the whole address.
      permalink.value = window.location.origin + permalink.value;
      var links = document.querySelectorAll("a.permalink");
      for (var k = 0; k < links.length; k++) links[k].textContent = permalink.value;
    }
    if (permalink) {
      permalink.addEventListener("focus", function () { permalink.select(); });
    }
  });

  // Back-forward cache: a page restored after submitting must not stay disabled.
  window.addEventListener("pageshow", function (event) {
    if (!event.persisted) return;
    var statuses = document.querySelectorAll("[data-progress]");
    for (var i = 0; i < statuses.length; i++) statuses[i].hidden = true;
    var buttons = document.querySelectorAll("form[data-enhance] button");
    for (var j = 0; j < buttons.length; j++) buttons[j].disabled = false;
  });
})();
