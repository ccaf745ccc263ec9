/* Headsheet page helpers: the form token on plain forms, a readable message when a change is refused, and the
   sheet form's live editing: when a change is solved, what a relayout must not undo, and the draft this
   browser keeps of what is typed but not saved.
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

  document.addEventListener("htmx:sendError", function () {
    say("The server did not answer, so this change is not saved. Check that it is running, then type again.");
  });

  var form = document.getElementById("sheet-form");
  if (!form) return;

  // -- when a change is solved ------------------------------------------------------------------
  // At once on Tab (a text field's change event), on Enter and on a choice; after a short pause while
  // typing. htmx's trigger filters would need eval (refused by the page's security policy), so the
  // kinds of edit are told apart here and the form is sent one event, hs-solve.
  var timer = null;
  var sent = {}; // name -> the value last sent, for each field changed since the page loaded
  var dirty = {}; // name -> true: changed since it was last sent
  var sending = []; // the names of the request in flight, made dirty again should it fail
  var inFlight = 0;
  var editedSinceSend = {}; // name -> true: changed after the request in flight was made
  var restoring = false;
  var refused = false; // the last answer was a conflict: what was sent is not saved

  function pause() {
    var ms = parseInt(form.getAttribute("data-typing-pause") || "200", 10);
    return isNaN(ms) ? 200 : ms;
  }
  function unsent() {
    for (var name in dirty) if (Object.prototype.hasOwnProperty.call(dirty, name)) return true;
    return false;
  }
  function solve() {
    window.clearTimeout(timer);
    timer = null;
    // Nothing new to solve (a Tab after the typing pause has sent the value already): no request. The
    // fields changed are tracked by name, as serializing the whole form each time costs more than the rest.
    if (!unsent()) return;
    form.dispatchEvent(new CustomEvent("hs-solve"));
  }
  function later() {
    window.clearTimeout(timer);
    timer = window.setTimeout(solve, pause());
  }
  function field(el) {
    return el && el.form === form && el.name && el.type !== "hidden" && el.type !== "submit" && el.type !== "file";
  }
  var draftTimer = null;
  function touched(el) {
    if (!dirty[el.name] && Object.prototype.hasOwnProperty.call(sent, el.name) && sent[el.name] === el.value) {
      return; // a change event for the value the typing pause sent already
    }
    dirty[el.name] = true;
    if (inFlight > 0) editedSinceSend[el.name] = true;
    // Written a moment later rather than on every key (and at once when the page is left or hidden).
    window.clearTimeout(draftTimer);
    draftTimer = window.setTimeout(saveDraft, 300);
  }

  // A bare number takes the unit the field's placeholder shows ("e.g. 420 m"): the server does the same,
  // and this shows it in the field. A placeholder without a plain unit ("e.g. 0.85 or 85 %") gives none.
  var BARE = /^\s*[+-]?(?:\d[\d,]*(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?\s*$/;
  var EXAMPLE = /^e\.g\.\s+[+-]?(?:\d+\.?\d*|\.\d+)\s+([A-Za-z\u00b5\u03bc\u03a9\u00b0][A-Za-z0-9\u00b5\u03bc\u03a9\u00b0^*\/\u00b7]*)$/;
  function takeUnit(el) {
    if (el.tagName !== "INPUT" || !el.classList.contains("num") || !BARE.test(el.value)) return;
    var m = EXAMPLE.exec((el.getAttribute("placeholder") || "").trim());
    if (m) {
      el.value = el.value.trim() + " " + m[1];
      touched(el);
    }
  }

  form.addEventListener("input", function (event) {
    var el = event.target;
    if (!field(el)) return;
    touched(el);
    if (el.tagName !== "SELECT") later(); // a select's change event follows at once
  });
  form.addEventListener("change", function (event) {
    var el = event.target;
    if (!field(el)) return;
    touched(el);
    takeUnit(el);
    solve();
  });
  form.addEventListener("keydown", function (event) {
    var el = event.target;
    if (event.key !== "Enter" || event.isComposing || !field(el) || el.tagName !== "INPUT") return;
    // Enter in a field means "this value": solve now, rather than press the form's first button.
    event.preventDefault();
    takeUnit(el);
    solve();
  });

  function ours(event) {
    var d = event.detail || {};
    return d.elt === form || (d.requestConfig && d.requestConfig.elt === form);
  }

  document.addEventListener("htmx:configRequest", function (event) {
    if (!ours(event)) return;
    var trigger = event.detail.triggeringEvent;
    if (trigger && trigger.type === "hs-solve") {
      // htmx remembers the last button focused and sends its action; a field left with Tab for a
      // button must not press it, so a solve carries no action.
      delete event.detail.parameters.action;
    }
    window.clearTimeout(timer);
    timer = null;
    sending = [];
    Object.keys(dirty).forEach(function (name) {
      var el = form.elements.namedItem(name);
      if (el && el.value !== undefined) sent[name] = el.value;
      sending.push(name);
    });
    dirty = {};
    editedSinceSend = {};
    inFlight += 1;
  });

  // An answer that redraws the fields (after a choice that changes them, an added row, a paste) was
  // made from what was sent; what was typed or chosen since must survive it, or an arrow key pressed in
  // a select while the last one was being solved would be undone. It is put back, and sent again.
  var kept = null;
  document.addEventListener("htmx:beforeSwap", function (event) {
    if (!ours(event)) return;
    kept = {};
    Object.keys(editedSinceSend).forEach(function (name) {
      var el = form.elements.namedItem(name);
      if (el && el.value !== undefined) kept[name] = el.value;
    });
  });
  document.addEventListener("htmx:afterSwap", function (event) {
    if (!ours(event) || !kept) return;
    var again = false;
    Object.keys(kept).forEach(function (name) {
      var el = form.elements.namedItem(name);
      if (el && el.value !== undefined && el.value !== kept[name]) {
        el.value = kept[name];
        dirty[name] = true;
        again = true;
      }
    });
    kept = null;
    if (again) solve(); // queued behind the request now ending (hx-sync queue last)
  });
  document.addEventListener("htmx:afterRequest", function (event) {
    if (!ours(event)) return;
    inFlight = Math.max(0, inFlight - 1);
    var status = event.detail.xhr ? event.detail.xhr.status : 0;
    if (!event.detail.successful && status !== 409 && status !== 422) {
      // Not saved: what this request carried is to be sent again.
      sending.forEach(function (name) { dirty[name] = true; delete sent[name]; });
    }
    sending = [];
    // A change refused because the sheet moved on elsewhere is not saved: the page asks before it is
    // left, and the draft is kept for the reload, which puts it onto the new revision where it can.
    refused = status === 409;
    if (restoring) {
      restoring = false;
      // A draft that met a change made elsewhere is shown in the conflict panel, with the way to apply
      // it; kept on, it would meet the same change at every reload.
      if (refused) { dropDraft(); return; }
    }
    saveDraft();
  });

  // -- what a screen reader is told ---------------------------------------------------------------
  // Each field's message slot is filled in place by the answer. The field is marked aria-invalid while its
  // slot holds a message that refuses a value (not one that only asks for a value not given yet), and the
  // messages new since the last answer are said once, through one polite live region (#announce), a
  // moment after typing stops: a message is not talked over every key, nor said again on every answer.
  var announcer = document.getElementById("announce");
  var heard = {}; // slot id -> the text it held at the last answer
  var toSay = [];
  var sayTimer = null;
  var lastUndo = null;
  var focusedId = null;
  var SAY_AFTER = 700; // ms after the answer (and after the last key) before it is said

  function slots() { return form.querySelectorAll(".field-msg"); }
  function words(el) { return el ? (el.textContent || "").replace(/\s+/g, " ").trim() : ""; }
  // slot id -> the control it describes, read in one pass over the form (a selector per slot, run on
  // every answer, cost tens of milliseconds on a long sheet).
  function controls() {
    var out = {};
    Array.prototype.forEach.call(form.querySelectorAll("[aria-describedby]"), function (el) {
      el.getAttribute("aria-describedby").split(/\s+/).forEach(function (id) { if (id && !out[id]) out[id] = el; });
    });
    return out;
  }
  function nameOf(el) {
    if (!el) return "";
    return el.getAttribute("aria-label") || (el.labels && el.labels.length ? words(el.labels[0]) : "");
  }
  function markInvalid(byId) {
    byId = byId || controls();
    Array.prototype.forEach.call(slots(), function (slot) {
      var el = slot.id ? byId[slot.id] : null;
      if (!el) return;
      if (words(slot) !== "" && !slot.querySelector(".request")) el.setAttribute("aria-invalid", "true");
      else el.removeAttribute("aria-invalid");
    });
  }
  function sayLater() {
    window.clearTimeout(sayTimer);
    sayTimer = toSay.length ? window.setTimeout(function () {
      if (announcer) announcer.textContent = toSay.join(" ");
      toSay = [];
      sayTimer = null;
    }, SAY_AFTER) : null;
  }
  function listen() {
    var seen = {};
    var byId = controls();
    Array.prototype.forEach.call(slots(), function (slot) {
      var text = words(slot);
      seen[slot.id] = text;
      if (text && heard[slot.id] !== text) {
        var name = nameOf(slot.id ? byId[slot.id] : null);
        toSay.push(name ? name + ": " + text : text);
      }
    });
    heard = seen;
    var undo = document.getElementById("undo-notice");
    if (undo && undo !== lastUndo) {
      toSay.unshift(words(undo.querySelector("span")) + " Undo, under the sheet's title, puts it back.");
    }
    lastUndo = undo;
    markInvalid(byId);
    sayLater();
  }
  Array.prototype.forEach.call(slots(), function (slot) { heard[slot.id] = words(slot); });
  lastUndo = document.getElementById("undo-notice");
  markInvalid();
  form.addEventListener("input", function () { if (sayTimer !== null) sayLater(); });

  document.addEventListener("htmx:beforeSwap", function (event) {
    if (!ours(event)) return;
    var active = document.activeElement;
    focusedId = active && field(active) && active.id ? active.id : null;
  });
  document.addEventListener("htmx:afterSwap", function (event) {
    if (!ours(event)) return;
    // A field redrawn under the cursor (a select chosen with the arrow keys, whose answer reshapes the
    // form) keeps the cursor: the next arrow key goes to the same select.
    var active = document.activeElement;
    if (focusedId && (!active || active === document.body)) {
      var again = document.getElementById(focusedId);
      if (again && field(again)) again.focus({ preventScroll: true });
    }
    focusedId = null;
    listen();
  });

  // -- the draft: what is typed here and not saved, kept in this browser --------------------------
  // In localStorage, keyed by sheet: it never leaves this browser, and survives a reload, a closed tab
  // or a server restart. The server decides what it means on return (action "restore").
  var key = "headsheet:draft:" + (form.getAttribute("data-sheet") || location.pathname);
  var LEFT_OUT = ["csrf_token", "shown_errors", "base", "action", "paste", "undo_item", "undo_check"];

  function pending() {
    var box = document.getElementById("unapplied");
    return box ? parseInt(box.getAttribute("data-count") || "0", 10) || 0 : 0;
  }
  function unsaved() {
    return unsent() || inFlight > 0 || timer !== null || refused || pending() > 0;
  }
  function dropDraft() {
    try { window.localStorage.removeItem(key); } catch (e) { /* storage refused: nothing kept */ }
  }
  function saveDraft() {
    window.clearTimeout(draftTimer);
    draftTimer = null;
    if (restoring) return;
    if (!unsaved()) { dropDraft(); return; }
    var fields = {};
    new FormData(form).forEach(function (value, name) {
      if (typeof value === "string" && LEFT_OUT.indexOf(name) < 0) fields[name] = value;
    });
    var base = form.elements.namedItem("base");
    try {
      window.localStorage.setItem(key, JSON.stringify({ v: 1, base: base ? base.value : "", saved: Date.now(),
                                                         fields: fields }));
    } catch (e) { /* storage full or refused: the page still warns before leaving */ }
  }
  function restoreDraft() {
    var draft = null;
    try { draft = JSON.parse(window.localStorage.getItem(key) || "null"); } catch (e) { draft = null; }
    if (!draft || draft.v !== 1 || typeof draft.fields !== "object" || typeof htmx === "undefined") {
      dropDraft();
      return;
    }
    var differs = Object.keys(draft.fields).some(function (name) {
      var el = form.elements.namedItem(name);
      return !el || el.value !== draft.fields[name];
    });
    if (!differs) { dropDraft(); return; }
    var values = {};
    Object.keys(draft.fields).forEach(function (name) { values[name] = draft.fields[name]; });
    values.base = String(draft.base || "");
    values.action = "restore";
    restoring = true;
    htmx.ajax("POST", form.getAttribute("hx-post"), { source: form, values: values });
  }
  // After htmx has read its configuration (on DOMContentLoaded, before this listener runs).
  document.addEventListener("DOMContentLoaded", function () { window.setTimeout(restoreDraft, 0); });

  document.addEventListener("visibilitychange", function () {
    if (document.visibilityState === "hidden") saveDraft();
  });
  window.addEventListener("pagehide", saveDraft);
  // Leaving while something typed is not saved (or not valid) asks first.
  window.addEventListener("beforeunload", function (event) {
    saveDraft();
    if (!unsaved()) return;
    event.preventDefault();
    event.returnValue = "";
  });
})();
