"""An offline 3-D viewer page of the helix (``model.html``): the model's meshes and a
small WebGL viewer of our own in one file, no network fetches, no libraries.

Mouse: drag to orbit, shift-drag or right-drag to pan, wheel to zoom; a check box per
element shows or hides it; the legend gives each kind's colour.  Coordinates are the
site grid's (easting, northing, level) relative to the helix axis, whose grid
coordinates the page prints.  The page sets ``window.helixViewer`` to
``{ok, triangles}`` once it has drawn (tests read it), or ``{ok: false, error}``.
Needs numpy only (core).

References
----------
Khronos Group, WebGL 1.0 Specification (2014); the perspective and look-at matrices
as in any graphics text, e.g. Shirley and Marschner, *Fundamentals of Computer
Graphics*, 3rd ed. (2009), chapter 7.
"""
from __future__ import annotations

import base64
import html
import json

import numpy as np

from ..evaluate import Evaluation
from .model import axis_origin, groups, model_parts, site_xyz

__all__ = ["viewer_html", "viewer_files", "COLOURS"]

#: Okabe and Ito colours by element kind (the figures' palette); second threads use the
#: alternative of their kind.
COLOURS = {"running_surface": ("#E69F00", "#D55E00"), "slab": ("#56B4E9", "#0072B2"),
           "kerb": ("#009E73", "#009E73"), "outer_wall": ("#CC79A7", "#CC79A7"), "core": ("#999999", "#999999")}
_ALPHA = {"outer_wall": 0.3}  # see-through, so the ramp inside shows


def _b64(a: np.ndarray) -> str:
    return base64.b64encode(np.ascontiguousarray(a).tobytes()).decode("ascii")


def _meshes(ev: Evaluation) -> list[dict]:
    grid = ev.project.site.grid
    e0, n0 = axis_origin(ev)
    threads = [t.name for t in ev.helix.threads]
    out = []
    for name, parts in groups(model_parts(ev)).items():
        v = np.concatenate([site_xyz(p.vertices, grid) - [e0, n0, 0.0] for p in parts])
        offsets = np.cumsum([0] + [len(p.vertices) for p in parts[:-1]])
        tri = np.concatenate([p.faces + o for p, o in zip(parts, offsets)])
        kind = parts[0].kind
        which = threads.index(parts[0].thread) % 2 if parts[0].thread in threads else 0
        out.append({"name": name, "kind": kind, "colour": COLOURS[kind][which], "alpha": _ALPHA.get(kind, 1.0),
                    "positions": _b64(np.round(v, 4).astype("<f4")), "indices": _b64(tri.astype("<u4"))})
    return out


_SCRIPT = r"""
(function () {
  "use strict";
  var data = JSON.parse(document.getElementById("helix-data").textContent);
  var canvas = document.getElementById("view");
  function fail(msg) {
    window.helixViewer = {ok: false, error: msg};
    document.getElementById("status").textContent = "Cannot draw the model: " + msg;
  }
  var gl = canvas.getContext("webgl", {antialias: true, preserveDrawingBuffer: true});
  if (!gl) { fail("this browser has no WebGL"); return; }
  function decode(b64, Type) {
    var s = atob(b64), bytes = new Uint8Array(s.length);
    for (var i = 0; i < s.length; i++) bytes[i] = s.charCodeAt(i);
    return new Type(bytes.buffer);
  }
  function rgb(hex) {
    return [1, 3, 5].map(function (i) { return parseInt(hex.substr(i, 2), 16) / 255; });
  }
  var VS = "attribute vec3 p; attribute vec3 n; uniform mat4 m; varying vec3 vn;" +
           "void main() { vn = n; gl_Position = m * vec4(p, 1.0); }";
  var FS = "precision mediump float; varying vec3 vn; uniform vec3 c; uniform float a;" +
           "void main() { vec3 l = normalize(vec3(0.4, -0.5, 0.8));" +
           "float d = abs(dot(normalize(vn), l)); gl_FragColor = vec4(c * (0.35 + 0.65 * d), a); }";
  function shader(type, src) {
    var s = gl.createShader(type);
    gl.shaderSource(s, src); gl.compileShader(s);
    if (!gl.getShaderParameter(s, gl.COMPILE_STATUS)) throw new Error(gl.getShaderInfoLog(s));
    return s;
  }
  var prog = gl.createProgram();
  gl.attachShader(prog, shader(gl.VERTEX_SHADER, VS));
  gl.attachShader(prog, shader(gl.FRAGMENT_SHADER, FS));
  gl.linkProgram(prog);
  if (!gl.getProgramParameter(prog, gl.LINK_STATUS)) { fail(gl.getProgramInfoLog(prog)); return; }
  var loc = {p: gl.getAttribLocation(prog, "p"), n: gl.getAttribLocation(prog, "n"),
             m: gl.getUniformLocation(prog, "m"), c: gl.getUniformLocation(prog, "c"),
             a: gl.getUniformLocation(prog, "a")};
  // Triangles unrolled with one normal each (flat shading); bounds for the camera.
  var lo = [Infinity, Infinity, Infinity], hi = [-Infinity, -Infinity, -Infinity], total = 0;
  var meshes = data.meshes.map(function (m) {
    var v = decode(m.positions, Float32Array), f = decode(m.indices, Uint32Array);
    var pos = new Float32Array(f.length * 3), nor = new Float32Array(f.length * 3);
    for (var t = 0; t < f.length; t += 3) {
      var a = f[t] * 3, b = f[t + 1] * 3, c = f[t + 2] * 3;
      var ux = v[b] - v[a], uy = v[b + 1] - v[a + 1], uz = v[b + 2] - v[a + 2];
      var wx = v[c] - v[a], wy = v[c + 1] - v[a + 1], wz = v[c + 2] - v[a + 2];
      var nx = uy * wz - uz * wy, ny = uz * wx - ux * wz, nz = ux * wy - uy * wx;
      [a, b, c].forEach(function (k, j) {
        for (var i = 0; i < 3; i++) {
          pos[(t + j) * 3 + i] = v[k + i];
          lo[i] = Math.min(lo[i], v[k + i]); hi[i] = Math.max(hi[i], v[k + i]);
        }
        nor[(t + j) * 3] = nx; nor[(t + j) * 3 + 1] = ny; nor[(t + j) * 3 + 2] = nz;
      });
    }
    var pb = gl.createBuffer(); gl.bindBuffer(gl.ARRAY_BUFFER, pb); gl.bufferData(gl.ARRAY_BUFFER, pos, gl.STATIC_DRAW);
    var nb = gl.createBuffer(); gl.bindBuffer(gl.ARRAY_BUFFER, nb); gl.bufferData(gl.ARRAY_BUFFER, nor, gl.STATIC_DRAW);
    total += f.length / 3;
    return {name: m.name, colour: rgb(m.colour), alpha: m.alpha, pb: pb, nb: nb, count: f.length, visible: true,
            behind: m.kind !== "running_surface"};
  });
  var centre = [0, 0, 0.5 * (lo[2] + hi[2])];
  var size = Math.max(hi[0] - lo[0], hi[1] - lo[1], hi[2] - lo[2]);
  var cam = {yaw: -0.6, pitch: 0.45, dist: 1.8 * size, target: centre.slice()};
  // Column-major 4 x 4 matrices, as WebGL takes them.
  function mul(a, b) {
    var r = new Float32Array(16);
    for (var i = 0; i < 4; i++) for (var j = 0; j < 4; j++) {
      var s = 0; for (var k = 0; k < 4; k++) s += a[k * 4 + j] * b[i * 4 + k]; r[i * 4 + j] = s;
    }
    return r;
  }
  function perspective(fovy, aspect, near, far) {
    var f = 1 / Math.tan(fovy / 2), r = new Float32Array(16);
    r[0] = f / aspect; r[5] = f; r[10] = (far + near) / (near - far); r[11] = -1; r[14] = 2 * far * near / (near - far);
    return r;
  }
  function eye() {
    var cp = Math.cos(cam.pitch);
    return [cam.target[0] + cam.dist * cp * Math.sin(cam.yaw), cam.target[1] - cam.dist * cp * Math.cos(cam.yaw),
            cam.target[2] + cam.dist * Math.sin(cam.pitch)];
  }
  function sub(a, b) { return [a[0] - b[0], a[1] - b[1], a[2] - b[2]]; }
  function cross(a, b) { return [a[1] * b[2] - a[2] * b[1], a[2] * b[0] - a[0] * b[2], a[0] * b[1] - a[1] * b[0]]; }
  function unit(a) { var l = Math.hypot(a[0], a[1], a[2]) || 1; return [a[0] / l, a[1] / l, a[2] / l]; }
  function dot(a, b) { return a[0] * b[0] + a[1] * b[1] + a[2] * b[2]; }
  function basis() {  // the camera's right, up and backward directions (level up: +z)
    var e = eye(), z = unit(sub(e, cam.target)), x = unit(cross([0, 0, 1], z)), y = cross(z, x);
    return {e: e, x: x, y: y, z: z};
  }
  function view() {
    var b = basis(), r = new Float32Array(16);
    r[0] = b.x[0]; r[4] = b.x[1]; r[8] = b.x[2]; r[12] = -dot(b.x, b.e);
    r[1] = b.y[0]; r[5] = b.y[1]; r[9] = b.y[2]; r[13] = -dot(b.y, b.e);
    r[2] = b.z[0]; r[6] = b.z[1]; r[10] = b.z[2]; r[14] = -dot(b.z, b.e);
    r[15] = 1;
    return r;
  }
  function draw() {
    var w = canvas.clientWidth, h = canvas.clientHeight;
    if (canvas.width !== w || canvas.height !== h) { canvas.width = w; canvas.height = h; }
    gl.viewport(0, 0, w, h);
    gl.clearColor(1, 1, 1, 1);
    gl.clear(gl.COLOR_BUFFER_BIT | gl.DEPTH_BUFFER_BIT);
    gl.enable(gl.DEPTH_TEST);
    gl.useProgram(prog);
    gl.uniformMatrix4fv(loc.m, false, mul(perspective(0.8, w / Math.max(h, 1), size / 100, size * 20), view()));
    [true, false].forEach(function (opaque) {  // see-through elements last, without writing depth
      gl.depthMask(opaque);
      if (opaque) gl.disable(gl.BLEND); else { gl.enable(gl.BLEND); gl.blendFunc(gl.SRC_ALPHA, gl.ONE_MINUS_SRC_ALPHA); }
      meshes.forEach(function (m) {
        if (!m.visible || (m.alpha >= 1) !== opaque) return;
        gl.bindBuffer(gl.ARRAY_BUFFER, m.pb); gl.enableVertexAttribArray(loc.p);
        gl.vertexAttribPointer(loc.p, 3, gl.FLOAT, false, 0, 0);
        gl.bindBuffer(gl.ARRAY_BUFFER, m.nb); gl.enableVertexAttribArray(loc.n);
        gl.vertexAttribPointer(loc.n, 3, gl.FLOAT, false, 0, 0);
        gl.uniform3fv(loc.c, m.colour); gl.uniform1f(loc.a, m.alpha);
        // The running surface is the slab's top face: push the slab back so it shows.
        if (m.behind) { gl.enable(gl.POLYGON_OFFSET_FILL); gl.polygonOffset(1, 2); } else gl.disable(gl.POLYGON_OFFSET_FILL);
        gl.drawArrays(gl.TRIANGLES, 0, m.count);
      });
    });
    gl.depthMask(true);
  }
  // Legend and visibility toggles.
  var list = document.getElementById("elements");
  meshes.forEach(function (m, i) {
    var row = document.createElement("label"), box = document.createElement("input"), sw = document.createElement("span");
    box.type = "checkbox"; box.checked = true; box.id = "show-" + i;
    box.addEventListener("change", function () { m.visible = box.checked; draw(); });
    sw.className = "swatch"; sw.style.background = data.meshes[i].colour; sw.style.opacity = Math.max(m.alpha, 0.5);
    row.appendChild(box); row.appendChild(sw); row.appendChild(document.createTextNode(m.name));
    list.appendChild(row);
  });
  // Mouse: drag orbits, shift-drag or right-drag pans, the wheel zooms.
  var drag = null;
  canvas.addEventListener("contextmenu", function (e) { e.preventDefault(); });
  canvas.addEventListener("mousedown", function (e) { drag = {x: e.clientX, y: e.clientY, pan: e.shiftKey || e.button === 2}; });
  window.addEventListener("mouseup", function () { drag = null; });
  window.addEventListener("mousemove", function (e) {
    if (!drag) return;
    var dx = e.clientX - drag.x, dy = e.clientY - drag.y;
    drag.x = e.clientX; drag.y = e.clientY;
    if (drag.pan) {
      var b = basis(), k = cam.dist / canvas.clientHeight;
      for (var i = 0; i < 3; i++) cam.target[i] += k * (-dx * b.x[i] + dy * b.y[i]);
    } else {
      cam.yaw -= dx * 0.008;
      cam.pitch = Math.max(-1.5, Math.min(1.5, cam.pitch + dy * 0.008));
    }
    draw();
  });
  canvas.addEventListener("wheel", function (e) {
    e.preventDefault();
    cam.dist = Math.max(size / 50, Math.min(size * 10, cam.dist * Math.exp(e.deltaY * 0.001)));
    draw();
  }, {passive: false});
  window.addEventListener("resize", draw);
  draw();
  window.helixViewer = {ok: true, triangles: total, meshes: meshes.length};
  document.getElementById("status").textContent = total + " triangles";
})();
"""

_PAGE = """<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta http-equiv="Content-Security-Policy" content="default-src 'none'; script-src 'unsafe-inline'; style-src 'unsafe-inline'">
<title>{title}</title>
<style>
html, body {{ margin: 0; height: 100%; font: 14px sans-serif; color: #222; }}
#view {{ position: absolute; left: 0; top: 0; width: 100%; height: 100%; display: block; }}
#panel {{ position: absolute; left: 10px; top: 10px; background: rgba(255,255,255,0.9); padding: 8px 12px;
          border: 1px solid #bbb; max-width: 360px; }}
#panel h1 {{ font-size: 16px; margin: 0 0 4px; }}
#elements label {{ display: block; white-space: nowrap; }}
.swatch {{ display: inline-block; width: 12px; height: 12px; margin: 0 6px 0 4px; border: 1px solid #555; }}
.caution {{ color: #a00; font-weight: bold; }}
.small {{ font-size: 12px; color: #555; }}
</style>
</head>
<body>
<canvas id="view"></canvas>
<div id="panel">
<h1>{name}</h1>
<div class="caution">Design aid - verify. Local codes and licensed professionals govern.</div>
<div class="small">{where}</div>
<div class="small">Drag: orbit; shift-drag or right-drag: pan; wheel: zoom.</div>
<div id="elements"></div>
<div class="small" id="status"></div>
</div>
<script type="application/json" id="helix-data">{data}</script>
<script>{script}</script>
</body>
</html>
"""


def viewer_html(ev: Evaluation) -> str:
    """The page as text."""
    e0, n0 = axis_origin(ev)
    data = json.dumps({"meshes": _meshes(ev)}, separators=(",", ":")).replace("</", "<\\/")
    where = (f"Site grid, metres, relative to the helix axis at easting {e0:.3f}, northing {n0:.3f}; "
             "levels as in the project; +z up.")
    return _PAGE.format(title=html.escape(f"{ev.project.name}: helix model"), name=html.escape(ev.project.name),
                        where=html.escape(where), data=data, script=_SCRIPT)


def viewer_files(ev: Evaluation) -> dict[str, bytes]:
    """``model.html`` (the registry's writer)."""
    return {"model.html": viewer_html(ev).encode("utf-8")}
