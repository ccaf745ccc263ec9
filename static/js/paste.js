/* Rows pasted from a spreadsheet or a maker's data sheet into a curve, a ground profile or a list of fittings,
   and a profile imported from a CSV file: the text goes to the server as it is (action "paste:<where>" or
   "import:<list>"), which reads the table and fills the rows (server/editing.py read_table, paste). */
(function () {
  "use strict";

  var form = document.getElementById("sheet-form");
  if (!form) return;
  //: The most text sent from a paste or a file [characters]; the server refuses more with a message.
  var MAX_CHARS = 200000;

  function say(text) {
    var box = document.getElementById("form-message");
    if (!box) return;
    box.textContent = "";
    var p = document.createElement("p");
    p.textContent = text;
    box.appendChild(p);
  }

  function send(action, text) {
    if (typeof htmx === "undefined") return;
    // Through the form, so it queues behind any edit in flight and carries what is typed elsewhere.
    htmx.ajax("POST", form.getAttribute("hx-post"), { source: form, values: { action: action, paste: text } });
  }

  document.addEventListener("paste", function (event) {
    var box = event.target && event.target.closest ? event.target.closest("[data-paste]") : null;
    if (!box || !form.contains(box)) return;
    var data = event.clipboardData;
    var text = data ? data.getData("text/plain") : "";
    // One value (no tab, no line break) goes into the field as typed.
    if (!/[\t\r\n]/.test(text.replace(/[\r\n]+$/, ""))) return;
    event.preventDefault();
    if (text.length > MAX_CHARS) {
      say("Nothing pasted: the copied text is too long for a table of this sheet.");
      return;
    }
    var list = box.getAttribute("data-paste");
    var name = event.target.name || "";
    send("paste:" + (name.indexOf(list + ".") === 0 ? name : list), text);
  });

  document.addEventListener("change", function (event) {
    var input = event.target;
    if (!input.matches || !input.matches("input[type=file][data-import]") || !form.contains(input)) return;
    var file = input.files && input.files[0];
    if (!file) return;
    if (file.size > MAX_CHARS) {
      input.value = "";
      say("Not imported: the file is larger than a ground profile can be (" + Math.round(file.size / 1000) + " kB).");
      return;
    }
    file.text().then(function (text) {
      input.value = "";
      send("import:" + input.getAttribute("data-import"), text);
    }, function () {
      input.value = "";
      say("Not imported: the file could not be read.");
    });
  });

  // The import controls work only with this script; they are shown once it runs, and after each redraw.
  function reveal() {
    var hidden = form.querySelectorAll("[data-needs-script][hidden]");
    for (var i = 0; i < hidden.length; i++) hidden[i].hidden = false;
  }
  reveal();
  document.addEventListener("htmx:afterSwap", reveal);
})();
