"""The interactive 3D view of the review page: choose a mode, rotate, zoom, play.

The scene of :func:`builder.render.build_scene` and the modes' point
displacements are written into the page as base64 arrays (float32 points,
displacements as int16 steps of a per-mode step in m, uint32 triangles,
uint8 colours and amplitudes) and drawn
in the browser by three.js (``builder/assets/three.min.js``, MIT licence,
version 0.147: one self-contained file, written into the page, so the page
works offline from a single file without a server). three.js was chosen as
the most used and best kept WebGL library on the npm registry, small enough
(0.6 MB) to embed; the controls and the look are this project's own (the
palette of :mod:`builder.render.look`: parts pale at rest and deep where
they move, the caption band under the view).

The page exposes ``window.lumpgraphView`` (``mode``: the shown mode's
index, ``frames``: frames drawn, ``ready``) so a browser test can check it.
"""

from __future__ import annotations

import base64
import json
from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np
from numpy.typing import NDArray

__all__ = ["view_payload", "view_section", "THREE_JS", "MAX_VIEW_MODES"]

THREE_JS = Path(__file__).parent / "assets" / "three.min.js"
#: Modes offered in the view (the lowest vibration modes), to keep the page small.
MAX_VIEW_MODES = 16


def _b64(array: NDArray, dtype: str) -> str:
    return base64.b64encode(np.ascontiguousarray(array, dtype=dtype).tobytes()).decode("ascii")


def _triangles(faces: NDArray, offset: int) -> list[NDArray]:
    out, k = [], 0
    while k < len(faces):
        n = int(faces[k])
        cell = faces[k + 1:k + 1 + n] + offset
        for j in range(1, n - 1):
            out.append(np.array([cell[0], cell[j], cell[j + 1]]))
        k += n + 1
    return out


def _mesh(parts: Sequence[Any]) -> tuple[NDArray, NDArray, NDArray, list[int]]:
    from .render.look import hex_rgb

    points, tris, colours, sizes, offset = [], [], [], [], 0
    for part in parts:
        g = part.geometry
        points.append(g.points)
        tris += _triangles(g.faces, offset) if g.faces.size else []
        colours.append(np.tile(hex_rgb(part.color), (len(g.points), 1)))
        sizes.append(len(g.points))
        offset += len(g.points)
    if not points:
        return np.zeros((0, 3)), np.zeros((0, 3), int), np.zeros((0, 3)), []
    return (np.vstack(points), np.array(tris, dtype=np.int64).reshape(-1, 3),
            np.vstack(colours), sizes)


def view_payload(scene: Any, dofs: Sequence[str], modes: Sequence[Any],
                 scale: float = 0.08) -> dict[str, Any]:
    """The data of the view: meshes (m), colours, and per mode the drawn displacement
    (m, the largest point moving ``scale`` times the vehicle size) and amplitude (0..255)."""
    from .render import choose_view, mode_field
    from .render.look import caption_of
    from .render.scene import PALETTE

    moving = [k for k, p in enumerate(scene.parts) if p.moving and p.geometry.faces.size]
    solid = [k for k in moving if scene.parts[k].opacity >= 1.0]
    clear = [k for k in moving if scene.parts[k].opacity < 1.0]
    still = [p for p in scene.parts if not p.moving and p.geometry.faces.size]
    groups = []
    for members, opacity in ((solid, 1.0), (clear, 0.3)):
        if not members:
            continue
        points, tris, colours, _ = _mesh([scene.parts[k] for k in members])
        groups.append({"members": members, "opacity": opacity, "points": points,
                       "tris": tris, "colours": colours})
    out_modes = []
    for mode in modes[:MAX_VIEW_MODES]:
        field = mode_field(scene, dofs, getattr(mode, "shape", None) if not isinstance(
            mode, dict) else mode["shape"])
        factor = field.factor(scene, scale)
        per_group = []
        for g in groups:
            u = np.vstack([field.displacements[k] for k in g["members"]]) * factor
            a = np.concatenate([field.amplitude[k] for k in g["members"]])
            step = max(float(np.abs(np.real(u)).max(initial=0.0)),
                       float(np.abs(np.imag(u)).max(initial=0.0)), 1e-30) / 32767.0
            per_group.append({"step": step,
                              "re": _b64(np.round(np.real(u) / step), "<i2"),
                              "im": _b64(np.round(np.imag(u) / step), "<i2"),
                              "amp": _b64(np.round(255 * np.clip(a, 0, 1)), "u1")})
        caption = caption_of(mode)
        out_modes.append({"number": caption.number, "head": caption.line(),
                          "label": caption.label, "view": choose_view(scene, dofs, mode),
                          "groups": per_group})
    spoints, stris, scolours, _ = _mesh(still)
    return {
        "name": scene.name, "size": float(scene.size), "centre": scene.center.tolist(),
        "paper": PALETTE["paper"], "shadow": PALETTE["shadow"],
        "groups": [{"opacity": g["opacity"], "points": _b64(g["points"], "<f4"),
                    "tris": _b64(g["tris"], "<u4"), "colours": _b64(g["colours"], "u1"),
                    "n": len(g["points"])} for g in groups],
        "still": {"points": _b64(spoints, "<f4"), "tris": _b64(stris, "<u4"),
                  "colours": _b64(scolours, "u1"), "n": len(spoints)},
        "modes": out_modes,
    }


_STYLE = """
.lgv { background: #f3eee3; border: 1px solid #cfc6b4; margin: 0.6em 0 1.2em; }
.lgv canvas { display: block; width: 100%; height: 520px; cursor: grab; }
.lgv .band { display: flex; align-items: center; gap: 0.8em; background: #262d36;
             color: #f3eee3; padding: 0.45em 0.7em; font-size: 0.95em; }
.lgv .tile { background: #c8643b; color: #f3eee3; font-weight: bold; font-size: 1.4em;
             min-width: 1.8em; text-align: center; padding: 0.1em 0.3em; }
.lgv .words { min-width: 14em; }
.lgv .words b { display: block; white-space: pre; }
.lgv .words span { color: #b9b2a3; font-size: 0.9em; }
.lgv .tools { margin-left: auto; display: flex; gap: 0.4em; align-items: center; }
.lgv select { max-width: 18em; }
.lgv select, .lgv button { background: #f3eee3; color: #262d36; border: 0; padding: 0.2em 0.5em;
             font: inherit; font-size: 0.9em; cursor: pointer; }
.lgv .hint { color: #b9b2a3; font-size: 0.8em; }
"""

_SCRIPT = r"""
(function () {
  const marks = { start: performance.now() };
  const D = JSON.parse(document.getElementById('lgv-data').textContent);
  marks.data = performance.now();
  const state = window.lumpgraphView = { mode: 0, frames: 0, ready: false, playing: true,
                                         marks };
  const dec = (s, T) => { const b = atob(s); const u = new Uint8Array(b.length);
    for (let i = 0; i < b.length; i++) u[i] = b.charCodeAt(i); return new T(u.buffer); };
  const canvas = document.getElementById('lgv-canvas');
  const renderer = new THREE.WebGLRenderer({ canvas, antialias: true,
                                            preserveDrawingBuffer: true });
  renderer.setPixelRatio(window.devicePixelRatio || 1);
  marks.context = performance.now();
  const scene = new THREE.Scene();
  scene.background = new THREE.Color(D.paper);
  scene.add(new THREE.HemisphereLight(0xffffff, 0x8a8272, 0.75));
  const sun = new THREE.DirectionalLight(0xffffff, 0.55); sun.position.set(2, 3, 4);
  scene.add(sun);
  const paper = new THREE.Color(D.paper);
  const groups = D.groups.map(g => {
    const geo = new THREE.BufferGeometry();
    const base = dec(g.points, Float32Array);
    geo.setAttribute('position', new THREE.BufferAttribute(base.slice(), 3));
    geo.setAttribute('color', new THREE.BufferAttribute(new Float32Array(3 * g.n), 3));
    geo.setIndex(new THREE.BufferAttribute(dec(g.tris, Uint32Array), 1));
    geo.computeVertexNormals();
    const mat = new THREE.MeshLambertMaterial({ vertexColors: true, flatShading: true,
      transparent: g.opacity < 1, opacity: g.opacity, depthWrite: g.opacity >= 1,
      side: THREE.DoubleSide });
    const mesh = new THREE.Mesh(geo, mat); scene.add(mesh);
    return { geo, base, colour: dec(g.colours, Uint8Array), n: g.n };
  });
  if (D.still.n) {
    const geo = new THREE.BufferGeometry();
    geo.setAttribute('position', new THREE.BufferAttribute(dec(D.still.points, Float32Array), 3));
    const c = dec(D.still.colours, Uint8Array), f = new Float32Array(c.length);
    for (let i = 0; i < c.length; i++) f[i] = c[i] / 255;
    geo.setAttribute('color', new THREE.BufferAttribute(f, 3));
    geo.setIndex(new THREE.BufferAttribute(dec(D.still.tris, Uint32Array), 1));
    geo.computeVertexNormals();
    scene.add(new THREE.Mesh(geo, new THREE.MeshLambertMaterial({ vertexColors: true,
      flatShading: true })));
  }
  // camera: orbit about the vehicle centre; ISO 8855 axes (x forward, y left, z up)
  const camera = new THREE.PerspectiveCamera(30, 2, D.size / 100, D.size * 50);
  camera.up.set(0, 0, 1);
  const target = new THREE.Vector3(...D.centre);
  const views = { side: [Math.PI / 2, 0], front: [0, 0], top: [0, 1.5], iso: [0.9, 0.55] };
  let az = 0.9, el = 0.55, dist = 1.5 * D.size;
  function place() {
    camera.position.set(target.x + dist * Math.cos(el) * Math.cos(az),
                        target.y + dist * Math.cos(el) * Math.sin(az),
                        target.z + dist * Math.sin(el));
    camera.lookAt(target);
  }
  let drag = null;
  canvas.addEventListener('pointerdown', e => { drag = [e.clientX, e.clientY, az, el];
    canvas.setPointerCapture(e.pointerId); });
  canvas.addEventListener('pointermove', e => { if (!drag) return;
    az = drag[2] - (e.clientX - drag[0]) * 0.01;
    el = Math.max(-1.5, Math.min(1.5, drag[3] + (e.clientY - drag[1]) * 0.01)); });
  canvas.addEventListener('pointerup', () => { drag = null; });
  canvas.addEventListener('wheel', e => { e.preventDefault();
    dist *= Math.exp(0.001 * e.deltaY);
    dist = Math.max(0.3 * D.size, Math.min(20 * D.size, dist)); }, { passive: false });
  const select = document.getElementById('lgv-mode');
  D.modes.forEach((m, k) => { const o = document.createElement('option'); o.value = k;
    o.textContent = 'mode ' + m.number + ' - ' + m.head.split('   ').slice(0, 1) + ' - ' + m.label;
    select.appendChild(o); });
  let re = [], im = [];
  function setMode(k) {
    const m = D.modes[k]; state.mode = k;
    document.getElementById('lgv-tile').textContent = m.number;
    document.getElementById('lgv-head').textContent = m.head;
    document.getElementById('lgv-label').textContent = m.label;
    re = []; im = [];
    groups.forEach((g, j) => {
      const q = m.groups[j], r = dec(q.re, Int16Array), i2 = dec(q.im, Int16Array);
      const fr = new Float32Array(r.length), fi = new Float32Array(r.length);
      for (let i = 0; i < r.length; i++) { fr[i] = r[i] * q.step; fi[i] = i2[i] * q.step; }
      re.push(fr); im.push(fi);
      const amp = dec(m.groups[j].amp, Uint8Array), col = g.geo.attributes.color.array;
      for (let i = 0; i < g.n; i++) {
        const s = 0.28 + 0.72 * Math.pow(amp[i] / 255, 0.7);
        col[3 * i] = (paper.r * 255 + s * (g.colour[3 * i] - paper.r * 255)) / 255;
        col[3 * i + 1] = (paper.g * 255 + s * (g.colour[3 * i + 1] - paper.g * 255)) / 255;
        col[3 * i + 2] = (paper.b * 255 + s * (g.colour[3 * i + 2] - paper.b * 255)) / 255;
      }
      g.geo.attributes.color.needsUpdate = true;
    });
    select.value = String(k);
    canvas.dataset.mode = String(k);
  }
  state.setMode = setMode;
  select.addEventListener('change', () => setMode(Number(select.value)));
  document.querySelectorAll('.lgv [data-view]').forEach(b => b.addEventListener('click', () => {
    [az, el] = views[b.dataset.view]; }));
  const play = document.getElementById('lgv-play');
  play.addEventListener('click', () => { state.playing = !state.playing;
    play.textContent = state.playing ? 'pause' : 'play'; });
  let phase = 0, last = performance.now();
  function frame(now) {
    const w = canvas.clientWidth, h = canvas.clientHeight;
    if (canvas.width !== Math.round(w * renderer.getPixelRatio())) {
      renderer.setSize(w, h, false); camera.aspect = w / h; camera.updateProjectionMatrix(); }
    if (state.playing) phase += (now - last) / 1000 * 2 * Math.PI / 1.6;
    last = now;
    const c = Math.cos(phase), s = Math.sin(phase);
    groups.forEach((g, j) => { const p = g.geo.attributes.position.array;
      for (let i = 0; i < p.length; i++) p[i] = g.base[i] + c * re[j][i] - s * im[j][i];
      g.geo.attributes.position.needsUpdate = true; g.geo.computeVertexNormals(); });
    place(); renderer.render(scene, camera); state.frames++;
    requestAnimationFrame(frame);
  }
  marks.meshes = performance.now();
  if (D.modes.length) { setMode(0); [az, el] = views[D.modes[0].view] || views.iso; }
  state.ready = true; state.readyAt = performance.now();
  requestAnimationFrame(frame);
})();
"""


def view_section(payload: dict[str, Any]) -> str:
    """HTML of the view (canvas, caption band with the controls, data and scripts)."""
    if not payload["modes"]:
        return '<p class="note">No vibration modes to show.</p>'
    data = json.dumps(payload, separators=(",", ":")).replace("</", "<\\/")
    three = THREE_JS.read_text(encoding="utf-8").replace("</script", "<\\/script")
    buttons = "".join(f'<button data-view="{v}">{v}</button>'
                      for v in ("side", "front", "top", "iso"))
    return (f"<style>{_STYLE}</style>"
            '<div class="lgv"><canvas id="lgv-canvas" width="1100" height="520"></canvas>'
            '<div class="band"><div class="tile" id="lgv-tile"></div>'
            '<div class="words"><b id="lgv-head"></b><span id="lgv-label"></span></div>'
            '<div class="tools"><select id="lgv-mode" aria-label="mode"></select>'
            f'<button id="lgv-play">pause</button>{buttons}'
            '<span class="hint">drag to turn, wheel to zoom</span></div></div></div>'
            f'<script type="application/json" id="lgv-data">{data}</script>'
            f"<script>{three}</script><script>{_SCRIPT}</script>")
