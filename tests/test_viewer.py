"""The offline viewer page, in a real headless browser (Chromium over the DevTools
protocol, tests/browser.py).  Skipped when no Chromium is installed, unless
HELIX_REQUIRE_BROWSER=1 (CI sets it and installs Debian's chromium)."""
import io
import os
import re
import sys
from pathlib import Path

import numpy as np
import pytest

import helix
from helix.exports.viewer import viewer_html

sys.path.insert(0, str(Path(__file__).parent))
import browser  # noqa: E402

REQUIRED = os.environ.get("HELIX_REQUIRE_BROWSER") == "1"

# In the page: ink (non-white pixels of the canvas, read back from WebGL) with every
# element shown, with all hidden by their check boxes, again shown, and after an orbit
# drag (a change of view changes the pixels).
PROBE = r"""(function () {
  var c = document.getElementById("view"), gl = c.getContext("webgl");
  function pixels() { var p = new Uint8Array(c.width * c.height * 4);
    gl.readPixels(0, 0, c.width, c.height, gl.RGBA, gl.UNSIGNED_BYTE, p); return p; }
  function ink(p) { var n = 0; for (var i = 0; i < p.length; i += 4) if (p[i] < 245 || p[i + 1] < 245 || p[i + 2] < 245) n++; return n; }
  var boxes = document.querySelectorAll("#elements input"), shown = pixels();
  boxes.forEach(function (b) { b.click(); }); var hidden = ink(pixels());
  boxes.forEach(function (b) { b.click(); });
  c.dispatchEvent(new MouseEvent("mousedown", {clientX: 600, clientY: 400, button: 0, bubbles: true}));
  window.dispatchEvent(new MouseEvent("mousemove", {clientX: 700, clientY: 380}));
  window.dispatchEvent(new MouseEvent("mouseup", {}));
  var moved = pixels(), changed = 0;
  for (var i = 0; i < moved.length; i++) if (moved[i] !== shown[i]) changed++;
  return {viewer: window.helixViewer, boxes: boxes.length, shown: ink(shown), hidden: hidden, changed: changed,
          total: c.width * c.height, legend: document.getElementById("elements").textContent,
          caution: document.querySelector(".caution").textContent, title: document.querySelector("h1").textContent};
})()"""


def test_page_is_self_contained():
    ev = helix.evaluate(helix.load_project("configs/demo-metric.yaml"))
    text = viewer_html(ev)
    assert text == viewer_html(ev)
    # No network: no URL, no external script, style or image, and a policy that forbids them.
    assert not re.search(r"https?:|//[a-z0-9.-]+\.[a-z]{2,}/|src=|href=|import\(|fetch\(|XMLHttpRequest", text)
    assert "default-src 'none'" in text
    assert "Design aid - verify" in text and ev.project.name in text
    assert len(text) < 2_000_000


def test_viewer_draws_in_a_headless_browser(tmp_path):
    if browser.chromium() is None:
        if REQUIRED:
            pytest.fail("HELIX_REQUIRE_BROWSER=1 but no chromium is installed")
        pytest.skip("no chromium (set HELIX_REQUIRE_BROWSER=1 to require it)")
    ev = helix.evaluate(helix.load_project("configs/demo-double.yaml"))
    page = tmp_path / "model.html"
    page.write_text(viewer_html(ev), encoding="utf-8")
    out = browser.load(page.as_uri(), PROBE)
    shot = tmp_path / "model.png"
    shot.write_bytes(out["png"])
    keep = os.environ.get("HELIX_VIEWER_SCREENSHOT")
    if keep:
        Path(keep).write_bytes(out["png"])
    assert out["exceptions"] == []
    assert [c for c in out["console"] if c["type"] in ("error", "assert", "warning")] == []
    assert [e for e in out["log"] if e["level"] == "error"] == []  # a blocked or failed fetch logs an error
    v = out["value"]
    assert v["viewer"]["ok"] is True
    n_meshes = 4 * len(ev.helix.threads) + 2  # per thread: surface, slab, two kerbs; wall and core
    assert v["viewer"]["meshes"] == v["boxes"] == n_meshes
    assert v["shown"] > 0.05 * v["total"] and v["hidden"] == 0 and v["changed"] > 0.01 * v["total"]
    assert "up thread: running surface" in v["legend"] and "outer wall" in v["legend"]
    assert v["caution"].startswith("Design aid - verify") and v["title"] == ev.project.name
    # The screenshot, as the user sees it: the model drawn beside the panel.
    from matplotlib.image import imread
    img = imread(io.BytesIO(out["png"]))
    right = img[:, 420:, :3]
    assert (right < 0.95).any(axis=2).mean() > 0.05
