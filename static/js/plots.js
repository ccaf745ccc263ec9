/* Values on hover for the plots beside the results (templates/fragments/plots.html).
   Each plot's SVG says where its plot area is (data-frame: left right top bottom, in viewBox units)
   and what its axes span (data-axes: x0 x1 y0 y1, in the units of its axis titles); a marker carries
   its own words (data-readout). One listener on the document serves every plot, so plots that an
   edit swaps in need nothing set up. No eval and no inline handlers: the page's policy forbids both. */
(function () {
  "use strict";

  function numbers(text) {
    return (text || "").split(" ").map(Number);
  }

  function titled(text) {
    // "Flow [L/s]" -> ["Flow", "L/s"]
    var m = /^(.*) \[(.*)\]$/.exec(text || "");
    return m ? [m[1], m[2]] : [text || "", ""];
  }

  function shown(value, span) {
    // As many decimals as the axis needs to tell a pixel apart, no more.
    var decimals = Math.max(0, Math.min(6, 3 - Math.floor(Math.log10(Math.abs(span) || 1))));
    var text = value.toFixed(decimals);
    return /^-0(\.0*)?$/.test(text) ? text.slice(1) : text;
  }

  function readoutOf(svg) {
    var figure = svg.closest("figure");
    return figure ? figure.querySelector(".plot-readout") : null;
  }

  function rest(out) {
    out.textContent = out.getAttribute("data-hint") || "";
  }

  function show(event) {
    var target = event.target;
    if (!(target instanceof Element)) return;
    var svg = target.closest("svg.plot[data-frame]");
    if (!svg) return;
    var out = readoutOf(svg);
    if (!out) return;
    var marked = target.closest("[data-readout]");
    if (marked) {
      out.textContent = marked.getAttribute("data-readout");
      return;
    }
    var ctm = svg.getScreenCTM();
    if (!ctm) return;
    var point = svg.createSVGPoint();
    point.x = event.clientX;
    point.y = event.clientY;
    var p = point.matrixTransform(ctm.inverse());
    var frame = numbers(svg.getAttribute("data-frame"));
    var axes = numbers(svg.getAttribute("data-axes"));
    if (p.x < frame[0] || p.x > frame[1] || p.y < frame[2] || p.y > frame[3]) {
      rest(out);
      return;
    }
    var x = axes[0] + (p.x - frame[0]) / (frame[1] - frame[0]) * (axes[1] - axes[0]);
    var y = axes[2] + (frame[3] - p.y) / (frame[3] - frame[2]) * (axes[3] - axes[2]);
    var xt = titled(svg.getAttribute("data-x-title"));
    var yt = titled(svg.getAttribute("data-y-title"));
    var text = xt[0] + " " + shown(x, axes[1] - axes[0]) + " " + xt[1] + " · " +
      yt[0] + " " + shown(y, axes[3] - axes[2]) + " " + yt[1];
    var curve = target.closest("polyline.series");
    var name = curve ? curve.querySelector("title") : null;
    out.textContent = name ? name.textContent + ": " + text : text;
  }

  document.addEventListener("pointermove", show);
  document.addEventListener("pointerdown", show);
  document.addEventListener("pointerout", function (event) {
    var target = event.target;
    if (!(target instanceof Element)) return;
    var svg = target.closest("svg.plot[data-frame]");
    var into = event.relatedTarget;
    if (!svg || (into instanceof Element && svg.contains(into))) return;
    var out = readoutOf(svg);
    if (out) rest(out);
  });
})();
