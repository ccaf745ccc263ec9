"""The plots beside the results in headless Chromium: drawn with axis titles and legends, their text measured by
the browser itself never overlapping, values on hover, a download that is an SVG file, a live redraw on an
edit, and the same plots through a read-only link."""

from __future__ import annotations

import json
import urllib.request
from pathlib import Path

from browsertools import shot
from playwright.sync_api import expect

#: The boxes of every text of every plot as Chromium lays them out, and the pairs that overlap.
OVERLAPS_JS = """
() => {
  const out = [];
  for (const svg of document.querySelectorAll('#plots svg.plot')) {
    const boxes = [...svg.querySelectorAll('text')].map(t => [t.textContent, t.getBoundingClientRect()]);
    const shown = svg.getBoundingClientRect();
    for (let i = 0; i < boxes.length; i++) {
      const [ta, a] = boxes[i];
      if (a.left < shown.left - 0.5 || a.right > shown.right + 0.5 || a.top < shown.top - 0.5 || a.bottom > shown.bottom + 0.5)
        out.push([svg.closest('figure').id, ta, '(off the drawing)']);
      for (let j = i + 1; j < boxes.length; j++) {
        const [tb, b] = boxes[j];
        // Glyph boxes include the font's line gap: allow half a pixel of touching.
        if (a.left < b.right - 0.5 && b.left < a.right - 0.5 && a.top < b.bottom - 0.5 && b.top < a.bottom - 0.5)
          out.push([svg.closest('figure').id, ta, tb]);
      }
    }
  }
  return out;
}
"""


def _sheet_id(live, title_part: str) -> int:
    with urllib.request.urlopen(live.url + "/api/sheets") as response:
        sheets = json.loads(response.read())["sheets"]
    return next(s["id"] for s in sheets if title_part in s["title"])


def test_the_sheet_page_shows_readable_plots_with_values_on_hover_and_a_download(page, live):
    sid = _sheet_id(live, "rising main")
    page.goto(f"{live.url}/sheets/{sid}")
    figures = page.locator("#plots figure.plot")
    expect(figures).to_have_count(4)
    curves = page.locator("#plot-curves")
    expect(curves.locator("text.axis-title")).to_have_text(["Flow [L/s]", "Head [m]"])
    expect(page.locator("#plot-profile text.legend", has_text="EGL")).to_have_count(1)
    assert page.evaluate(OVERLAPS_JS) == []

    # Values on hover: a marker says its own value; elsewhere in the plot the readout follows the pointer.
    curves.scroll_into_view_if_needed()
    readout = curves.locator(".plot-readout")
    curves.locator("circle.point").first.hover()
    expect(readout).to_contain_text("Point 1 (design):")
    box = curves.locator("rect.frame").bounding_box()
    page.mouse.move(box["x"] + box["width"] * 0.1, box["y"] + box["height"] * 0.9)
    expect(readout).to_contain_text("Flow")
    expect(readout).to_contain_text("L/s · Head")
    shot(page, "30-plots-on-the-sheet")

    # The download link gives an SVG file.
    link = curves.locator("a.plot-download[href$=\".svg\"]")
    with page.expect_download() as info:
        link.click()
    download = info.value
    assert download.suggested_filename == "RW-PM-011-rev-1-curves.svg"
    text = Path(download.path()).read_text(encoding="utf-8")
    assert text.startswith("<?xml") and "<svg" in text and "Head [m]" in text
    response = page.request.get(live.url + link.get_attribute("href"))
    assert response.status == 200 and response.headers["content-type"].startswith("image/svg+xml")
    assert page.console_errors == []


def test_the_plots_redraw_when_the_sheet_changes(page, live):
    sid = _sheet_id(live, "rising main")
    page.goto(f"{live.url}/sheets/{sid}")
    before = page.locator("#plot-profile svg").inner_html()
    field = page.locator("input[value='2100 m']").first
    field.fill("2600 m")
    expect(page.locator("#plot-profile a.plot-download")).to_have_attribute(
        "href", f"/sheets/{sid}/revisions/2/plots/profile.svg")
    assert page.locator("#plot-profile svg").inner_html() != before
    assert page.evaluate(OVERLAPS_JS) == []
    assert page.console_errors == []


def test_a_narrow_screen_and_every_demo_keep_their_plot_text_apart(browser, live):
    with urllib.request.urlopen(live.url + "/api/sheets") as response:
        sheets = json.loads(response.read())["sheets"]
    context = browser.new_context(viewport={"width": 400, "height": 900})
    page = context.new_page()
    try:
        for s in sheets:
            page.goto(f"{live.url}/sheets/{s['id']}")
            expect(page.locator("#plots figure.plot").first).to_be_visible()
            assert page.evaluate(OVERLAPS_JS) == [], s["title"]
            width = page.evaluate("() => document.querySelector('#plots svg').getBoundingClientRect().width")
            assert width <= 400
        page.locator("#plots").scroll_into_view_if_needed()
        shot(page, "31-plots-at-400px")
    finally:
        context.close()


def test_a_read_only_link_shows_the_same_plots_and_downloads(browser, live):
    sid = _sheet_id(live, "enstock")
    token = live.app.state.store.create_view_link(sid, "plots").token
    context = browser.new_context(viewport={"width": 1366, "height": 900})
    page = context.new_page()
    errors: list = []
    page.on("console", lambda m: m.type == "error" and errors.append(m.text))
    page.on("pageerror", lambda e: errors.append(str(e)))
    try:
        page.goto(f"{live.url}/view/{token}/sheets/{sid}")
        # the grade lines, the load rejection's envelope and heads in time, the system curve, the power
        expect(page.locator("#plots figure.plot")).to_have_count(5)
        expect(page.locator("#plot-envelope-1 text.axis-title")).to_have_text(["Chainage along the line [m]",
                                                                               "Elevation and head [m]"])
        envelope = page.locator("#plot-envelope-1 a.plot-download")
        assert envelope.get_attribute("href") == f"/view/{token}/sheets/{sid}/revisions/1/plots/envelope-1.svg"
        with page.expect_download() as info:
            envelope.click()
        assert "Highest head" in Path(info.value.path()).read_text(encoding="utf-8")
        expect(page.locator("#plot-profile text.axis-title")).to_have_text(["Chainage along the line [m]",
                                                                            "Elevation and head [m]"])
        expect(page.locator("#plot-profile text.tag")).to_have_text(["V1", "T1"])
        link = page.locator("#plot-power a.plot-download")
        assert link.get_attribute("href") == f"/view/{token}/sheets/{sid}/revisions/1/plots/power.svg"
        with page.expect_download() as info:
            link.click()
        assert Path(info.value.path()).read_text(encoding="utf-8").startswith("<?xml")
        page.locator("#plots").scroll_into_view_if_needed()
        shot(page, "32-plots-read-only-link")
        assert errors == []
    finally:
        context.close()
