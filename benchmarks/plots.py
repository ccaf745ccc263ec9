"""Benchmark: what the plots cost per re-solve, for each demo sheet, and what matplotlib would cost instead.

Run by hand: python benchmarks/plots.py [repeats] [--browser]
For each demo sheet: the analysis (parse, solve, checks, band: what every edit pays already), then each
plot drawn by calc.record.plots (the numbers and the SVG text), median of ``repeats`` runs, and the
sum: the plots' share of a re-solve. The page redraws every plot on each edit, so the sum must stay
far below the page's 100 ms budget for the change to be painted.

With ``--browser``, Chromium (Debian's, or HEADSHEET_CHROMIUM) times what painting the plots costs on the
page: the plots' HTML swapped into a page as an edit's answer swaps it, until the frame after next is drawn.

When matplotlib can be imported, the same figures are drawn with it from the same numbers (lines,
markers, legend, grid, axis titles; SVG backend with text kept as text, like ours) and timed the same
way, and its import is timed in a fresh interpreter. matplotlib is not a dependency of Headsheet; to
measure it without installing it into the project's environment:
    pip install --target /tmp/mpl matplotlib    (or --no-deps with what the environment lacks)
    PYTHONPATH=/tmp/mpl python benchmarks/plots.py
Prints figures and asserts nothing.
"""

from __future__ import annotations

import io
import json
import statistics
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from calc.analysis import analyse
from calc.record import plots
from calc.record.plots import series as S
from calc.record.plots.figures import FIGURES, KEYS, _Units

#: The page must paint a re-solve within this [ms]; a plotting library costing 200 ms an edit is out.
PAGE_BUDGET_MS = 100.0


def median_ms(fn, repeats: int) -> tuple[float, object]:
    times, out = [], None
    for _ in range(repeats):
        t = time.perf_counter()
        out = fn()
        times.append((time.perf_counter() - t) * 1e3)
    return statistics.median(times), out


def demos() -> list[tuple[str, dict]]:
    return [(p.stem, json.loads(p.read_text(encoding="utf-8"))) for p in sorted((ROOT / "examples").glob("*.json"))]


# ----------------------------------------------------------------------------- matplotlib, for comparison

def _mpl():
    try:
        import matplotlib
    except ImportError:
        return None
    matplotlib.use("svg")
    matplotlib.rcParams["svg.fonttype"] = "none"  # text as text, as ours
    matplotlib.rcParams["font.family"] = "DejaVu Sans"
    import matplotlib.pyplot as plt

    return plt


def _save(plt, fig) -> str:
    buf = io.StringIO()
    fig.savefig(buf, format="svg")
    plt.close(fig)
    return buf.getvalue()


def mpl_figures(plt, analysis, system: str) -> dict:
    """The same figures drawn with matplotlib from the same numbers: {key: callable giving SVG text}."""
    u = _Units(system)
    line = analysis.line
    sol = analysis.solution
    out = {}

    def flows():
        return S.flows(S.flow_top(analysis))

    if sol.design is not None:
        def profile():
            st = sol.design["profile"]
            ch = [s["chainage"] * u.kl for s in st]
            fig, ax = plt.subplots(figsize=(6.0, 3.6))
            ax.plot(ch, [s["elevation"] * u.kh for s in st], color="#333333", lw=3, label="Pipe centreline")
            ax.plot(ch, [s["hgl"] * u.kh for s in st], color="#1f5fbf", lw=2.4, label="HGL")
            ax.plot(ch, [s["egl"] * u.kh for s in st], color="#d35400", lw=1.8, ls="--", label="EGL")
            hv = S.vapour_head(line)
            ax.plot(ch, [(s["elevation"] + hv) * u.kh for s in st], color="#8e44ad", ls=":", label="Vapour")
            for k, el in enumerate(line.elements):
                at = [s for s in st if s["element"] == k]
                if el.kind != "pipe" and at:
                    ax.annotate(el.kind[0].upper(), (at[0]["chainage"] * u.kl, at[0]["egl"] * u.kh))
            ax.set_xlabel(f"Chainage along the line [{u.l}]")
            ax.set_ylabel(f"Elevation and head [{u.h}]")
            ax.grid(True, color="#e3e3e3")
            ax.legend(loc="upper center", bbox_to_anchor=(0.5, -0.2), ncol=2, fontsize=8)
            return _save(plt, fig)
        out["profile"] = profile

    def curves():
        Q = flows()
        fig, ax = plt.subplots(figsize=(6.0, 3.6))
        for s in S.system_curves(analysis, Q):
            ax.plot(s.Q * u.kq, s.H * u.kh, color="#1f5fbf", lw=2.4, label=s.name)
            for m in s.points:
                ax.plot([m.Q * u.kq], [m.y * u.kh], "ko")
                ax.annotate(m.label, (m.Q * u.kq, m.y * u.kh), xytext=(6, 6), textcoords="offset points")
        for c in S.machine_curves(line, Q):
            ax.plot(c.Q * u.kq, c.y * u.kh, color="#c0392b", lw=2.2, label=c.name)
            if c.typed:
                ax.plot([q * u.kq for q, _ in c.typed], [v * u.kh for _, v in c.typed], "o", mfc="white", mec="#c0392b")
        ax.set_xlabel(f"Flow [{u.q}]")
        ax.set_ylabel(f"Head [{u.h}]")
        ax.grid(True, color="#e3e3e3")
        ax.legend(loc="upper center", bbox_to_anchor=(0.5, -0.2), ncol=2, fontsize=8)
        return _save(plt, fig)
    out["curves"] = curves

    def simple(key, series_of, unit):
        def draw():
            Q = flows()
            fig, ax = plt.subplots(figsize=(6.0, 3.6))
            for c in series_of(line, Q):
                ax.plot(c.Q * u.kq, c.y * unit, lw=2.2, label=c.name)
                ax.plot([q * u.kq for q, _ in c.typed], [v * unit for _, v in c.typed], "o", mfc="white")
            ax.set_xlabel(f"Flow [{u.q}]")
            ax.grid(True, color="#e3e3e3")
            ax.legend(loc="upper center", bbox_to_anchor=(0.5, -0.2), ncol=2, fontsize=8)
            return _save(plt, fig)
        return draw

    if S.efficiency_curves(line, flows()):
        out["efficiency"] = simple("efficiency", S.efficiency_curves, 100.0)
    if S.npsh_required_curves(line, flows()):
        out["npsh"] = simple("npsh", S.npsh_required_curves, u.kh)
    turbines = [m for m in sol.machines if m["kind"] == "turbine"]
    if turbines:
        def power():
            Q = flows()
            fig, ax = plt.subplots(figsize=(6.0, 3.6))
            for m in turbines:
                ax.plot(Q * u.kq, S.turbine_power(line, m["index"], Q) * u.kp, lw=2.2)
            ax.set_xlabel(f"Flow [{u.q}]")
            ax.set_ylabel(f"Shaft power [{u.p}]")
            ax.grid(True, color="#e3e3e3")
            return _save(plt, fig)
        out["power"] = power
    return out


def mpl_import_ms() -> float | None:
    """matplotlib's import in a fresh interpreter [ms]: what a server process pays once, and a PDF worker each time."""
    code = ("import time; t = time.perf_counter(); import matplotlib; matplotlib.use('svg'); "
            "import matplotlib.pyplot; print((time.perf_counter() - t) * 1e3)")
    try:
        done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120, check=True)
        return float(done.stdout.strip().splitlines()[-1])
    except (subprocess.SubprocessError, ValueError, IndexError):
        return None


PAINT_JS = """
async ([html, n]) => {
  const host = document.getElementById('host');
  const times = [];
  for (let k = 0; k < n; k++) {
    const t = performance.now();
    host.innerHTML = html;
    host.getBoundingClientRect();
    await new Promise(r => requestAnimationFrame(() => requestAnimationFrame(r)));
    times.push(performance.now() - t);
    await new Promise(r => setTimeout(r, 20));
  }
  times.sort((a, b) => a - b);
  return times[Math.floor(n / 2)];
}
"""


def paint_ms(pages: dict, repeats: int) -> dict:
    """Median time for Chromium to swap in and paint each sheet's plots [ms] (the plots alone, at 560 px wide)."""
    import os
    import shutil

    from playwright.sync_api import sync_playwright

    path = os.environ.get("HEADSHEET_CHROMIUM") or shutil.which("chromium") or shutil.which("chromium-browser")
    out = {}
    with sync_playwright() as p:
        # Frames as fast as they can be drawn, not at the display's 60 Hz, so the time is the work's.
        browser = p.chromium.launch(executable_path=path, args=["--no-sandbox", "--disable-gpu",
                                                                "--disable-frame-rate-limit", "--disable-gpu-vsync"])
        page = browser.new_page(viewport={"width": 1366, "height": 900})
        page.set_content('<div id="host" style="width:560px"></div>')
        for name, html in pages.items():
            page.evaluate(PAINT_JS, [html, 3])  # warm up
            out[name] = page.evaluate(PAINT_JS, [html, repeats])
        browser.close()
    return out


def main(repeats: int = 21, browser: bool = False) -> None:
    plt = _mpl()
    print(f"plots per re-solve, median of {repeats} runs each [ms]; page budget {PAGE_BUDGET_MS:g} ms "
          "from the change to the painted result")
    worst = 0.0
    worst_mpl = 0.0
    html = {}
    for name, doc in demos():
        system = doc.get("header", {}).get("units", "SI")
        solve_ms, a = median_ms(lambda doc=doc: analyse(doc), max(3, repeats // 3))
        print(f"\n{name} ({len(doc.get('elements', []))} elements, {system}): analysis {solve_ms:6.1f} ms")
        ours = 0.0
        for key, fn in zip(KEYS, FIGURES):
            ms, plot = median_ms(lambda fn=fn, a=a, system=system: fn(a, system), repeats)
            if plot is None:
                continue
            ours += ms
            print(f"  {key:11s} ours {ms:6.2f} ms  ({len(plot.svg) / 1e3:5.1f} kB SVG)")
        total, got = median_ms(lambda a=a, system=system: plots.all_plots(a, system), repeats)
        print(f"  all plots   ours {total:6.2f} ms  ({len(got)} plots; {100 * total / (solve_ms + total):.0f} % of "
              "analysis + plots)")
        worst = max(worst, total)
        html[name] = "".join(f'<figure>{p.svg}</figure>' for p in got)
        if plt is not None:
            mpl_total = 0.0
            for key, draw in mpl_figures(plt, a, system).items():
                draw()  # first call builds font caches: not counted
                ms, svg = median_ms(draw, max(5, repeats // 3))
                mpl_total += ms
                print(f"  {key:11s} matplotlib {ms:6.1f} ms  ({len(svg) / 1e3:5.1f} kB SVG)")
            print(f"  all plots   matplotlib {mpl_total:6.1f} ms")
            worst_mpl = max(worst_mpl, mpl_total)
    print(f"\nworst sheet, all plots: ours {worst:.2f} ms per re-solve", end="")
    if plt is not None:
        imp = mpl_import_ms()
        print(f"; matplotlib {worst_mpl:.1f} ms per re-solve, import {imp:.0f} ms in a fresh process"
              if imp is not None else f"; matplotlib {worst_mpl:.1f} ms per re-solve")
    else:
        print("; matplotlib not importable here (see this file's docstring to measure it)")
    if browser:
        print("\npainting the plots in Chromium (swap in, then two frames), median [ms]:")
        for name, ms in paint_ms(html, repeats).items():
            print(f"  {name:16s} {ms:6.1f} ms  ({len(html[name]) / 1e3:5.1f} kB of SVG)")


if __name__ == "__main__":
    args = [a for a in sys.argv[1:] if not a.startswith("--")]
    main(int(args[0]) if args else 21, "--browser" in sys.argv)
