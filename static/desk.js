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
    var problem = document.getElementById("problem") || document.getElementById("created");
    if (problem) problem.focus();
    enableCopyButtons();
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

  // A file over the service's limit is said at once, before a long upload ends in a refusal.
  document.addEventListener("change", function (event) {
    var input = event.target;
    if (!(input instanceof HTMLInputElement) || input.type !== "file" || !input.hasAttribute("data-max-bytes")) return;
    var limit = Number(input.getAttribute("data-max-bytes"));
    var status = document.querySelector("[data-file-size-status]");
    var file = input.files && input.files[0];
    var tooLarge = Boolean(file && limit && file.size > limit);
    input.setCustomValidity(tooLarge ? "This file is larger than the service accepts." : "");
    if (tooLarge) input.setAttribute("aria-invalid", "true"); else input.removeAttribute("aria-invalid");
    if (status) {
      status.textContent = tooLarge ? "This file is " + (file.size / 1048576).toFixed(1) + " MB; the limit is " +
        (limit / 1048576).toFixed(1) + " MB. Cut it to the years that matter, or use monthly or annual values." : "";
    }
  });

  // "Copy" next to a read-only field (the owner token, the permanent link, the embed code) or a block of text (the
  // citation): shown only when a script can do the copying.
  function enableCopyButtons() {
    var buttons = document.querySelectorAll("button[data-copy]");
    for (var i = 0; i < buttons.length; i++) {
      var button = buttons[i];
      var field = document.getElementById(button.getAttribute("data-copy"));
      if (!field) continue;
      button.hidden = false;
      button.addEventListener("click", copier(field, statusBeside(button)));
    }
  }

  function statusBeside(button) {
    var next = button.nextElementSibling;
    return next && next.hasAttribute("data-copy-status") ? next : button.parentNode.querySelector("[data-copy-status]");
  }

  function selectText(field) {
    if (typeof field.select === "function") {
      field.focus();
      field.select();
      return;
    }
    var range = document.createRange();
    range.selectNodeContents(field);
    var selection = window.getSelection();
    selection.removeAllRanges();
    selection.addRange(range);
  }

  function copier(field, status) {
    return function () {
      selectText(field);
      var text = field.value !== undefined ? field.value : field.textContent;
      var say = function (words) { if (status) status.textContent = words; };
      var yourself = "Selected: copy it yourself.";
      if (navigator.clipboard && window.isSecureContext) {
        navigator.clipboard.writeText(text).then(function () { say("Copied."); }, function () { say(yourself); });
      } else {
        say(document.execCommand && document.execCommand("copy") ? "Copied." : yourself);
      }
    };
  }

  // Back-forward cache: a page restored after submitting must not stay disabled.
  window.addEventListener("pageshow", function (event) {
    if (!event.persisted) return;
    var statuses = document.querySelectorAll("[data-progress]");
    for (var i = 0; i < statuses.length; i++) statuses[i].hidden = true;
    var buttons = document.querySelectorAll("form[data-enhance] button");
    for (var j = 0; j < buttons.length; j++) buttons[j].disabled = false;
  });
})();
