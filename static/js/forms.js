/* Headsheet page helpers: the form token on plain forms, and a readable message when a change is refused.
   Every form the server renders already carries the token; this covers any that does not, so a
   plain post is never refused for want of it. htmx sends the token itself (hx-headers on body). */
(function () {
  "use strict";

  function token() {
    var meta = document.querySelector('meta[name="csrf-token"]');
    return meta ? meta.content : "";
  }

  document.addEventListener("submit", function (event) {
    var form = event.target;
    if (!(form instanceof HTMLFormElement) || (form.getAttribute("method") || "").toLowerCase() !== "post") return;
    if (form.querySelector('input[name="csrf_token"]')) return;
    var input = document.createElement("input");
    input.type = "hidden";
    input.name = "csrf_token";
    input.value = token();
    form.appendChild(input);
  }, true);

  function say(text) {
    var box = document.getElementById("form-message");
    if (!box) { window.alert(text); return; }
    box.textContent = "";
    var p = document.createElement("p");
    p.textContent = text;
    box.appendChild(p);
  }

  // htmx leaves refusals it is not told to swap (401, 403, 413, 5xx) unseen; say what the server said.
  document.addEventListener("htmx:responseError", function (event) {
    var xhr = event.detail.xhr;
    var text = "";
    try {
      var doc = new DOMParser().parseFromString(xhr.responseText, "text/html");
      var lead = doc.querySelector(".lead");
      text = lead ? lead.textContent.trim() : "";
    } catch (e) { text = ""; }
    say(text || ("The server refused this change (status " + xhr.status + "). Nothing was saved; reload the page."));
  });

  // The sheet form re-solves after a pause in typing and at once on a choice. htmx's trigger filters
  // would need eval (refused by the page's security policy), so the two kinds of edit are told apart
  // here and re-sent from the field as events of their own: hs-typed and hs-chose.
  document.addEventListener("input", function (event) {
    var field = event.target;
    if (field.tagName === "SELECT" || !field.form || field.form.id !== "sheet-form") return;
    field.dispatchEvent(new CustomEvent("hs-typed", { bubbles: true }));
  });
  document.addEventListener("change", function (event) {
    var field = event.target;
    if (field.tagName !== "SELECT" || !field.form || field.form.id !== "sheet-form") return;
    field.dispatchEvent(new CustomEvent("hs-chose", { bubbles: true }));
  });

  document.addEventListener("htmx:sendError", function () {
    say("The server did not answer, so this change is not saved. Check that it is running, then type again.");
  });
})();
