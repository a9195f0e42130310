"""Mode labels an engineer can trust, and the depths proposed without `depths:`.

Outside checks: the classic two-DOF bounce-pitch closed form (frequencies and
oscillation centres, derived here from the equations of motion), the
free-free Euler-Bernoulli beam's mode shapes (nodes from the analytic shape
function, its frequency equation cos(bL) cosh(bL) = 1 solved here) and the
free-free shaft's torsion shape cos(n pi x / L). The rest are properties the
labels must have whatever the model (unique, in words, from the depth's
DOFs, the same in every command), checked on the demo files and on a light
van of invented data (tests/data/light_van.yaml).
"""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np
import pytest
import scipy.optimize

from builder.analysis.labels import describe_modes, vehicle_body
from builder.analysis.ladder import compute_ladder, proposed_depths
from builder.analysis.modes import compute_modes
from builder.linear import assemble
from builder.load import load_assembly, load_text
from builder.reduce import reduce_to_depth

ROOT = Path(__file__).resolve().parent.parent
VAN = ROOT / "tests" / "data" / "light_van.yaml"
DEMOS = ["compact_car", "compact_car_engine", "compact_car_seat", "compact_car_flexible",
         "quarter_car", "engine_on_mounts"]
ORDER = ("first", "second", "third", "fourth", "fifth", "sixth", "seventh", "eighth", "ninth",
         "tenth")


@pytest.fixture(scope="module")
def van():
    asm = load_assembly(VAN)
    model = assemble(asm)
    return asm, model, compute_modes(model)


def _rigid_van():
    """The van with a rigid body: the split block dropped, the body given six DOFs
    (the split body's segments have six)."""
    text = VAN.read_text().split("  # split:")[0]
    return load_text(text.replace("motion: vertical", "motion: spatial"), "van_rigid.yaml")


def _labels(modes):
    return [m.label for m in modes.modes]


def _assert_unique(labels, where):
    shown = [lab for lab in labels if lab != "rigid"]
    repeated = sorted({lab for lab in shown if shown.count(lab) > 1})
    assert not repeated, f"{where}: labels repeated: {repeated}"


def _assert_orders_in_sequence(labels, where):
    # "second X" only after a "first X" of the same unit, and so on.
    seen = set()
    for lab in labels:
        for unit, word, family in re.findall(
                r"(\w+) (" + "|".join(ORDER) + r"|\d+th|\d+st|\d+nd|\d+rd) ([a-z -]+?)"
                r"(?= \+|$| with| \()", lab):
            n = ORDER.index(word) + 1 if word in ORDER else int(re.match(r"\d+", word)[0])
            assert n == 1 or (unit, n - 1, family) in seen, \
                f"{where}: {lab!r} has no {ORDER[n - 2] if n <= 11 else n - 1} {family} before it"
            seen.add((unit, n, family))


# ------------------------------------------------------------- properties

@pytest.mark.parametrize("name", DEMOS)
def test_labels_are_unique_and_ordered_in_every_demo(name):
    # Issue 11: two different modes were both "body first vertical bending".
    asm = load_assembly(ROOT / "assemblies" / f"{name}.yaml")
    model = assemble(asm)
    labels = _labels(compute_modes(model))
    _assert_unique(labels, name)
    _assert_orders_in_sequence(labels, name)
    for depth in asm.depths.values():
        reduced = _labels(compute_modes(reduce_to_depth(model, depth)))
        _assert_unique(reduced, f"{name} [{depth.name}]")
        _assert_orders_in_sequence(reduced, f"{name} [{depth.name}]")


def test_van_labels_are_unique_ordered_and_in_words(van):
    asm, model, modes = van
    labels = _labels(modes)
    _assert_unique(labels, "van")
    _assert_orders_in_sequence(labels, "van")
    # Issue 11: internal body names such as "driver_occupant_x" were printed;
    # plugins name what they made in words.
    made = [b for b in asm.bodies if b.startswith(("driver_", "body_s")) or b == "engine"]
    for lab in labels:
        for body in made:
            assert not re.search(rf"\b{body}\b", lab), f"{lab!r} names the body {body}"
    assert "driver fore-aft" in labels and "driver whole-body vertical" in labels
    assert any(lab.startswith("powertrain roll about the crank") for lab in labels)
    assert "body first vertical bending" in labels and "body first lateral bending" in labels
    # a torsion shape shared by two modes (coupled with the powertrain's pitch):
    # both are the first torsion, told apart by what leads
    first_torsion = [lab for lab in labels if "body first torsion" in lab]
    assert len(first_torsion) == 2 and len(set(first_torsion)) == 2


def test_depth_labels_name_only_the_depth_s_dofs():
    # Issue 11: a 2-DOF depth without engine DOFs was labelled "+ engine bounce".
    asm = load_assembly(ROOT / "assemblies" / "compact_car.yaml")
    model = assemble(asm)
    two = compute_modes(reduce_to_depth(model, asm.depths["bounce_pitch"]))
    assert _labels(two) == ["body bounce with pitch", "body pitch with bounce"]
    one = compute_modes(reduce_to_depth(model, asm.depths["bounce"]))
    assert _labels(one) == ["body bounce"]        # no pitch: the depth has no body.ry
    # a tie keeps both wheels of an axle as one DOF: they are named as a pair
    half = _labels(compute_modes(reduce_to_depth(model, asm.depths["half_car"])))
    assert "front wheels hop, in phase" in half and not any("engine" in lab for lab in half)


def test_a_depth_names_what_its_dofs_carry_of_the_condensed_bodies(van):
    # A depth keeping one body segment and the powertrain: the segment's DOFs carry
    # the condensed segments (Guyan), so the body keeps the weight it has in the
    # full model and the modes read as there.
    from builder.reduce import reduce_keep
    _, model, full = van
    small = compute_modes(reduce_keep(model, ["body_s06.*", "engine.*"]))
    assert _labels(small)[:3] == _labels(full)[:3]


MUTATIONS = {
    "two segments": ("segments: 12", "segments: 2"),
    "a floppy body": ("GJ: 6.0e6 N m^2", "GJ: 6.0e3 N m^2"),
    "one-mass occupant": ("occupant: boileau_rakheja_1998", "occupant: fairley_griffin_1989"),
    "split named frame": ("    name: body\n    with:\n      body: body\n      segments",
                          "    name: frame\n    with:\n      body: body\n      segments"),
}


@pytest.mark.parametrize("change", MUTATIONS.values(), ids=list(MUTATIONS))
def test_mutated_vans_still_label_uniquely_in_words(change):
    from builder.analysis.labels import label_modes
    from builder.eigen import lowest_modes
    asm = load_text(VAN.read_text().replace(*change), "van.yaml")
    model = assemble(asm)
    lam, shapes = lowest_modes(model.K, model.M, min(model.n, 60))
    labels = list(label_modes(model, shapes, lam < 1e-9 * lam.max()))
    _assert_unique(labels, change[1])
    _assert_orders_in_sequence(labels, change[1])
    assert not any(re.search(r"driver_|_s\d\d|\bengine\b", lab) for lab in labels)


def test_modes_ladder_and_the_split_body_command_label_alike(van):
    # Issue 11: `modes` and `plugin split_body` named the same mode differently.
    from plugins.split_body.analysis import flexible_body_modes
    _, model, modes = van
    result = flexible_body_modes(model, count=40)
    assert list(result.labels) == _labels(modes)[:40]
    assert "* body first vertical bending" in result.table()
    ladder = compute_ladder(model)
    assert _labels(ladder.full) == _labels(modes)


def test_rigid_and_split_van_name_bounce_pitch_and_roll_alike(van):
    # Issue 11: bounce and pitch swapped names between the rigid and the flexible
    # model. The split body's rigid motion is the body's, about its cg.
    _, _, split = van
    rigid = compute_modes(assemble(_rigid_van()))
    for k in range(3):
        a, b = rigid.modes[k], split.modes[k]
        assert a.frequency_hz == pytest.approx(b.frequency_hz, rel=0.01)
        assert a.label == b.label


# ------------------------------------------------------- analytic checks

def _bounce_pitch_text(m, inertia, a, b, kf, kr, split):
    text = f"""
format: 1
name: bounce and pitch (invented)
motion: {"spatial" if split else "planar"}
bodies:
  body: {{mass: {m} kg, cg: [0, 0, 0.5], inertia: {{xx: 300, yy: {inertia}, zz: {inertia}}}}}
links:
  front_l: {{type: spring, a: {{body: body, at: [{a}, 0.5, 0.5]}}, b: ground, axis: z, stiffness: {kf / 2}}}
  front_r: {{type: spring, a: {{body: body, at: [{a}, -0.5, 0.5]}}, b: ground, axis: z, stiffness: {kf / 2}}}
  rear_l: {{type: spring, a: {{body: body, at: [{-b}, 0.5, 0.5]}}, b: ground, axis: z, stiffness: {kr / 2}}}
  rear_r: {{type: spring, a: {{body: body, at: [{-b}, -0.5, 0.5]}}, b: ground, axis: z, stiffness: {kr / 2}}}
"""
    if split:      # very stiff segments: the same body, as far as bounce and pitch go
        text += f"""
plugins:
  - use: split_body
    name: body
    with: {{body: body, segments: 12, start: {-b - 0.2} m, end: {a + 0.2} m, EA: 1e12 N,
           EIy: 1e11 N m^2, EIz: 1e11 N m^2, GJ: 1e11 N m^2}}
"""
    return text


@pytest.mark.parametrize("m, inertia, a, b, kf, kr", [
    (1000.0, 1500.0, 1.2, 1.5, 20e3, 22e3),     # both modes coupled ("with")
    (1200.0, 1400.0, 1.1, 1.6, 30e3, 16e3),     # soft rear: one mode nearly pure
])
def test_bounce_and_pitch_follow_the_closed_form_oscillation_centres(m, inertia, a, b, kf, kr):
    # Analytic (the classic bounce-pitch model, derived here; e.g. Gillespie,
    # "Fundamentals of Vehicle Dynamics", 1992, ch. 5): springs kf at x = a, kr
    # at x = -b; with pitch ry (nose down) the point x moves z - x ry, so
    # K = [[kf + kr, kr b - kf a], [kr b - kf a, kf a^2 + kr b^2]], M = diag(m, I).
    # Each mode turns about its oscillation centre x_n = z / ry = -K12 / (K11 - w^2 m);
    # M-orthogonality gives x_1 x_2 = -k^2 (k = sqrt(I / m), the pitch gyradius).
    # Kinetic energy m z^2 against I ry^2 = m k^2 ry^2: the mode is bounce when
    # |x_n| > k (its centre outside the gyradius), pitch otherwise, and the other
    # motion is named ("with") when its energy share k^2/x_n^2 (or its inverse) is
    # at least a quarter.
    K11, K12, K22 = kf + kr, kr * b - kf * a, kf * a * a + kr * b * b
    w2 = np.sort(np.roots([m * inertia, -(m * K22 + inertia * K11), K11 * K22 - K12 ** 2]).real)
    centres = -K12 / (K11 - w2 * m)
    k2 = inertia / m
    assert centres[0] * centres[1] == pytest.approx(-k2, rel=1e-9)
    expected = []
    for x in centres:
        ratio = k2 / x ** 2
        main, other = ("bounce", "pitch") if ratio < 1 else ("pitch", "bounce")
        expected.append(f"body {main}" + (f" with {other}" if min(ratio, 1 / ratio) >= 0.25
                                          else ""))
    rigid = compute_modes(assemble(load_text(_bounce_pitch_text(m, inertia, a, b, kf, kr,
                                                                False))))
    assert rigid.frequencies_hz == pytest.approx(np.sqrt(w2) / (2 * np.pi), rel=1e-10)
    assert _labels(rigid) == expected
    split = compute_modes(assemble(load_text(_bounce_pitch_text(m, inertia, a, b, kf, kr,
                                                                True))), 8)
    found = {}
    for mode in split.modes:
        for f, lab in zip(rigid.frequencies_hz, expected):
            if abs(mode.frequency_hz - f) < 1e-4 * f:
                found[lab] = mode.label
    assert found == {lab: lab for lab in expected}


def _free_free_nodes(order: int) -> list[float]:
    # Analytic Euler-Bernoulli free-free shape W(x) = cosh bx + cos bx
    # - s (sinh bx + sin bx), s = (cosh bL - cos bL) / (sinh bL - sin bL), bL the
    # order-th root of cos(bL) cosh(bL) = 1 (solved here); nodes = roots of W / L.
    bl = scipy.optimize.brentq(lambda z: np.cos(z) * np.cosh(z) - 1.0,
                               (order + 0.5) * np.pi - 0.3, (order + 0.5) * np.pi + 0.3)
    s = (np.cosh(bl) - np.cos(bl)) / (np.sinh(bl) - np.sin(bl))

    def shape(u):
        z = bl * u
        return np.cosh(z) + np.cos(z) - s * (np.sinh(z) + np.sin(z))

    grid = np.linspace(0.0, 1.0, 2001)
    v = shape(grid)
    return [scipy.optimize.brentq(shape, grid[i], grid[i + 1])
            for i in np.flatnonzero(np.sign(v[1:]) != np.sign(v[:-1]))]


def test_split_bar_labels_and_nodes_match_the_free_free_beam():
    # The first free-free bending shape has two nodes, 0.2242 L and 0.7758 L from
    # the ends (Blevins, "Formulas for Natural Frequency and Mode Shape", 1979,
    # table 8-1, from memory; computed here from the shape function). A free-free
    # shaft twists as cos(n pi x / L): its first torsion has one node, at L / 2.
    from plugins.split_body.split import uniform_bar
    L = 3.0
    asm = uniform_bar(60, L, 20.0, 3e-4, {"EA": 1e9, "EIy": 4e4, "EIz": 6e4, "GJ": 30.0})
    model = assemble(asm)
    modes = compute_modes(model, 18)
    found = {}
    for label in describe_modes(model, modes.shapes, [m.rigid for m in modes.modes]):
        if label.parts:
            found[label.text] = np.array(label.parts[0].motion.nodes) / L
    for order in (1, 2, 3):
        nodes = _free_free_nodes(order)
        assert len(nodes) == order + 1
        for plane in ("vertical", "lateral"):
            got = found[f"bar {ORDER[order - 1]} {plane} bending"]
            np.testing.assert_allclose(got, nodes, atol=2e-3)
    for n in (1, 2, 3):
        np.testing.assert_allclose(found[f"bar {ORDER[n - 1]} torsion"],
                                   [(2 * j + 1) / (2 * n) for j in range(n)], atol=2e-3)


# --------------------------------------------------------- proposed depths

def test_proposed_depths_centre_on_the_vehicle_body(van):
    # Issue 11: a split body's segments are each lighter than the powertrain, so
    # the proposal centred on the engine. The segments count as the body.
    asm, model, _ = van
    unit = vehicle_body(asm)
    assert unit.name == "body" and len(unit.bodies) == 12
    depths = proposed_depths(asm)
    (seg,) = {d.rpartition(".")[0] for d in depths["main_bounce"].keep}
    assert seg.startswith("body_s")
    # the kept segment is one nearest the body's cg (x = -1.50 m in the file)
    gaps = {b: abs(asm.bodies[b].cg[0] + 1.50) for b in unit.bodies}
    assert gaps[seg] <= min(gaps.values()) + 1e-9
    assert depths["main_bounce_pitch"].keep == (f"{seg}.z", f"{seg}.ry")
    assert not any(k.startswith(("engine.", "driver_")) for d in depths.values() for k in d.keep)
    ladder = compute_ladder(model)
    assert ladder.proposed
    first = ladder.rungs[0]
    assert first.modes.modes[0].label.startswith("body ")
    # the rigid van, and a seat heavier than it should be, keep the body too
    assert vehicle_body(_rigid_van()).bodies == ("body",)


# ------------------------------------------------------------- captions

def test_captions_wrap_to_the_picture_and_are_never_cut():
    # The caption band wraps a long label between words and shrinks it; when it
    # still does not fit, the band grows: every word is drawn, each line within
    # the room beside the number tile (Pillow's own text measure).
    from builder.render.look import band_layout, caption_of, fit_band
    from builder.render.modeshape import ModeRenderer
    from builder.render.scene import build_scene

    asm = load_assembly(ROOT / "assemblies" / "quarter_car.yaml")
    scene = build_scene(asm)
    long = ("driver cushion bounce + body second vertical bending + driver pelvis and thighs "
            "against lower torso + powertrain roll about the crank with motion across the crank")
    mode = {"number": 28, "frequency_hz": 38.49, "damping_ratio": 0.0197, "label": long}
    caption = caption_of(mode, "iso")
    for size, sheet in (((480, 360), True), ((320, 240), False), ((1024, 768), False)):
        band = fit_band(size, [caption], sheet=sheet, legend=not sheet)
        lay = band_layout(size[0], band, caption, not sheet, fit_band(size, [], sheet))
        assert lay.fits and " ".join(lay.label) == long          # nothing dropped
        from builder.render.look import _font

        assert all(_font(lay.label_size).getlength(line) <= lay.room for line in lay.label)
        with ModeRenderer(scene, size, band=band, legend=not sheet, sheet=sheet) as renderer:
            image = renderer.draw(None, caption, "iso")
        assert image.shape == (size[1], size[0], 3) and renderer.band == band
    # a short label keeps the standard band
    short = caption_of({**mode, "label": "body roll"}, "iso")
    assert fit_band((480, 360), [short], sheet=True) == fit_band((480, 360), [], sheet=True)


def test_readme_modes_table_is_what_the_command_prints():
    text = (ROOT / "README.md").read_text()
    shown = re.search(r"`lumpgraph modes assemblies/compact_car.yaml` prints.*?```\n(.*?)```",
                      text, re.S)[1]
    modes = compute_modes(assemble(load_assembly(ROOT / "assemblies" / "compact_car.yaml")))
    assert shown.strip() == modes.table().strip()
