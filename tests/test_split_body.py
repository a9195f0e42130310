"""The beam link through the core, and splitting a body into beam-joined segments.

External checks (sources beside each): analytic cantilever deflection, the
parallel-axis theorem computed independently here, analytic free-free beam
frequencies and torsion frequencies, and convergence of a split-then-stiffened
vehicle to the same vehicle with a rigid body.
"""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest
import scipy.optimize

import builder.elements.beam  # noqa: F401  (registers the beam link type)
from builder.assembly import Assembly, Body, End, Link, Sensor
from builder.eigen import lowest_modes
from builder.elements.beam import natural_deformations
from builder.elements.beam_matrix import beam_global_stiffness
from builder.errors import InputError
from builder.kinematics import DOF_NAMES
from builder.linear import assemble
from builder.load import load_assembly, load_text
from plugins.split_body.split import SectionTable, SplitSpec, split_body

ROOT = Path(__file__).resolve().parent.parent

# ------------------------------------------------------------ the beam link

CANTILEVER = """
format: 1
name: cantilever
motion: spatial
bodies:
  tip: {mass: 1 kg, cg: [1.2, 0, 0], inertia: {xx: 1, yy: 1, zz: 1}}
links:
  arm:
    type: beam
    a: {body: ground, at: [0, 0, 0]}
    b: {body: tip, at: [1.2, 0, 0]}
    frame: {z: [0, 0, 1]}
    EA: 2.0e8 N
    EIy: "30 kN m^2"
    EIz: 4.5e4 N m^2
    GJ: 1.2e4 N m^2
    %SHEAR%
sensors:
  arm_force: {link: arm, measure: force}
  arm_stretch: {link: arm, measure: deflection}
"""


@pytest.mark.parametrize("shear", [None, 5.0e6])
def test_beam_link_cantilever_through_the_core(shear):
    # Analytic end-loaded cantilever (Timoshenko & Gere, Mechanics of Materials):
    # w = P L^3/(3 EI) + P L/(k G A); u = N L/EA; twist T L/GJ.
    text = CANTILEVER.replace("%SHEAR%", "" if shear is None else
                              f"shear_y: {shear} N\n    shear_z: {shear} N")
    model = assemble(load_text(text))
    L, P = 1.2, 800.0
    k = model.K.toarray()
    extra = 0.0 if shear is None else P * L / shear
    for direction, EI in (("z", 3.0e4), ("y", 4.5e4)):
        q = np.linalg.solve(k, model.force_input("tip", [L, 0, 0], {"y": [0, 1, 0],
                                                                     "z": [0, 0, 1]}[direction]))
        assert q[model.dof_index(f"tip.{direction}")] * P == pytest.approx(
            P * L ** 3 / (3 * EI) + extra, rel=1e-9)
    q = np.linalg.solve(k, model.force_input("tip", None, "rx") * P)
    assert q[model.dof_index("tip.rx")] == pytest.approx(P * L / 1.2e4, rel=1e-9)
    q = np.linalg.solve(k, model.force_input("tip", None, [1, 0, 0]) * P)
    assert q[model.dof_index("tip.x")] == pytest.approx(P * L / 2.0e8, rel=1e-9)
    # The force sensor reads the axial force N = P, the deflection N L/EA.
    y = model.Sd.toarray() @ q
    assert y[model.sensor_index("arm_force")] == pytest.approx(P, rel=1e-9)
    assert y[model.sensor_index("arm_stretch")] == pytest.approx(P * L / 2.0e8, rel=1e-9)


def test_beam_natural_deformations_rebuild_the_stiffness():
    pa, pb = np.array([0.3, -1.2, 0.8]), np.array([1.1, -0.6, 0.0])
    props = builder.elements.beam.beam_props(pa, pb, 2e9, 3e6, 4.5e6, 1.2e6, 3e8, None,
                                             z_axis=[0.1, 0.2, 1.0])
    d, k = natural_deformations(pa, pb, props)
    full = beam_global_stiffness(pa, pb, [0.1, 0.2, 1.0], 2e9, 3e6, 4.5e6, 1.2e6, 3e8, None)
    np.testing.assert_allclose(d.T @ np.diag(k) @ d, full, atol=1e-12 * np.abs(full).max())


def test_beam_link_refusals():
    bad = CANTILEVER.replace("%SHEAR%", "").replace("frame: {z: [0, 0, 1]}",
                                                    "frame: {z: [1, 0, 0]}")
    with pytest.raises(InputError, match="parallel"):
        load_text(bad, "bad.yaml")
    with pytest.raises(InputError, match="EIy"):
        load_text(CANTILEVER.replace("%SHEAR%", "").replace('"30 kN m^2"', "-1"), "bad.yaml")
    with pytest.raises(InputError, match="EIy"):
        load_text(CANTILEVER.replace("%SHEAR%", "").replace('"30 kN m^2"', '"30 kN"'),
                  "bad.yaml")


# ------------------------------------------------------------- the split


def parallel_axis_sum(bodies):
    """Mass, cg, inertia of several bodies: the parallel-axis (Huygens-Steiner)
    theorem, written out here independently of the code under test."""
    m = sum(b.mass for b in bodies)
    c = sum(b.mass * b.cg for b in bodies) / m
    j = np.zeros((3, 3))
    for b in bodies:
        x, y, z = b.cg - c
        j += b.inertia + b.mass * np.array([[y * y + z * z, -x * y, -x * z],
                                            [-x * y, x * x + z * z, -y * z],
                                            [-x * z, -y * z, x * x + y * y]])
    return m, c, j


SECTION = {"EA": 5e9, "EIy": 2.0e6, "EIz": 3.0e6, "GJ": 1.5e6}


def car():
    return load_assembly(ROOT / "assemblies" / "compact_car.yaml")


@pytest.mark.parametrize("segments, mass_table", [(7, None),
                                                  (12, ((-2.6, -1.0, 0.3), (1.0, 0.6, 1.6)))])
def test_split_keeps_mass_cg_and_inertia(segments, mass_table):
    asm = car()
    split = split_body(asm, SplitSpec("body", segments=segments, section=SECTION,
                                      mass_table=mass_table))
    segs = [b for n, b in split.bodies.items() if n.startswith("body_s")]
    assert len(segs) == segments and "body" not in split.bodies
    assert all(b.dofs == DOF_NAMES for b in segs)
    m, c, j = parallel_axis_sum(segs)
    orig = asm.bodies["body"]
    assert m == pytest.approx(orig.mass, rel=1e-12)
    np.testing.assert_allclose(c, orig.cg, atol=1e-12)
    np.testing.assert_allclose(j, orig.inertia, atol=1e-9 * np.abs(orig.inertia).max())
    links = [lk for lk in split.links.values() if lk.type == "beam"]
    assert len(links) == segments - 1


def test_split_reattaches_links_and_sensors_to_the_segment_holding_the_point():
    asm = car()
    split = split_body(asm, SplitSpec("body", segments=4, section=SECTION))
    # The default span is that of the attached points along x: -2.60 .. 0.30 m,
    # cut into four equal segments of 0.725 m: edges -2.6, -1.875, -1.15, -0.425.
    expect = {"susp_fl": "body_s04", "susp_rl": "body_s01", "mount_left": "body_s04",
              "mount_rear": "body_s04"}
    for name, segment in expect.items():
        lk = split.links[name]
        ends = {lk.a.node, lk.b.node}
        assert segment in ends, (name, ends)
        np.testing.assert_array_equal(lk.a.at, asm.links[name].a.at)
    assert split.sensors["floor_front"].target == "body_s03"        # x = -0.9
    assert split.sensors["floor_rear"].target == "body_s01"         # x = -2.1
    assert split.sensors["engine_accel"].target == "engine"


def test_split_refusals():
    asm = car()
    with pytest.raises(InputError, match="unknown body"):
        split_body(asm, SplitSpec("bodyy", section=SECTION))
    with pytest.raises(InputError, match="at least 2"):
        split_body(asm, SplitSpec("body", segments=1, section=SECTION))
    with pytest.raises(InputError, match="not physical"):
        split_body(asm, SplitSpec("body", start=-6.0, end=4.0, section=SECTION))
    with pytest.raises(InputError, match="GJ"):
        split_body(asm, SplitSpec("body", section={"EA": 1e9, "EIy": 1e6, "EIz": 1e6}))


# -------------------------------------------------- a free-free split beam


def slender_body(length, rho_a, rho_iy, rho_iz):
    """A uniform slender bar as one rigid body (thin-rod inertia plus section)."""
    m = rho_a * length
    inertia = np.diag([(rho_iy + rho_iz) * length,
                       m * length ** 2 / 12 + rho_iy * length,
                       m * length ** 2 / 12 + rho_iz * length])
    bar = Body("bar", m, np.array([length / 2, 0.0, 0.0]), inertia, DOF_NAMES)
    return Assembly("bar", "spatial", {"bar": bar})


def test_split_free_free_bar_matches_beam_theory():
    # Analytic: Euler-Bernoulli free-free beta L (roots of cos(bL) cosh(bL) = 1,
    # 4.7300, 7.8532, 10.9956), and the free-free shaft f_n = n/(2L) sqrt(GJ/(rho Ip)).
    L, rho_a, rho_iy, rho_iz = 3.0, 20.0, 1e-4, 2e-4
    EIy, EIz, GJ = 4.0e4, 6.0e4, 30.0
    N = 120
    split = split_body(slender_body(L, rho_a, rho_iy, rho_iz),
                       SplitSpec("bar", segments=N, start=0.0, end=L,
                                 section={"EA": 1e9, "EIy": EIy, "EIz": EIz, "GJ": GJ}))
    model = assemble(split)
    lam, x = lowest_modes(model.K, model.M, 20)
    energy = x * (model.M @ x)
    kind = np.argmax([energy[j::6].sum(axis=0) for j in range(6)], axis=0)
    elastic = lam > 1e-6 * lam.max()
    roots = np.array([scipy.optimize.brentq(lambda b: np.cos(b) * np.cosh(b) - 1,
                                            r - .01, r + .01)
                      for r in (4.7300, 7.8532, 10.9956)])
    for dof, EI in ((2, EIy), (1, EIz)):
        omega = np.sqrt(lam[elastic & (kind == dof)][:3])
        exact = roots ** 2 * np.sqrt(EI / (rho_a * L ** 4))
        np.testing.assert_allclose(omega, exact, rtol=2e-3)
    omega = np.sqrt(lam[elastic & (kind == 3)][:2])
    exact = np.arange(1, 3) * np.pi / L * np.sqrt(GJ / (rho_iy + rho_iz))
    np.testing.assert_allclose(omega, exact, rtol=1e-3)


# ----------------------------------------------------- split, then stiffen


def vehicle_frequencies(asm):
    model = assemble(asm)
    lam, _ = lowest_modes(model.K, model.M, 13)
    return np.sqrt(np.clip(lam, 0, None))


def test_split_then_stiffen_converges_to_the_rigid_body():
    # A very stiff split body must behave as the rigid body with the same six
    # DOFs (a limit of the model, no external data). The difference falls as
    # 1/stiffness (first-order perturbation of a constraint), so the frequencies
    # at stiffness scales s1 < s2 extrapolate to the limit (Richardson):
    # f_inf = (s2 f2 - s1 f1)/(s2 - s1), which must match the rigid body's to
    # 1e-6. (Pushing the scale further does not help: in double precision the
    # round-off of the stiff entries, about eps * max(K_jj/M_jj), then swamps
    # the softest vehicle modes.)
    asm = car()
    rigid = asm.replace(bodies={n: replace(b, dofs=DOF_NAMES) if n == "body" else b
                                for n, b in asm.bodies.items()})
    reference = vehicle_frequencies(rigid)
    freqs, errors = {}, []
    scales = (1e2, 1e3, 1e4)
    for scale in scales:
        section = {k: v * scale for k, v in SECTION.items()}
        split = split_body(asm, SplitSpec("body", segments=3, section=section))
        freqs[scale] = vehicle_frequencies(split)[: reference.size]
        errors.append(np.max(np.abs(freqs[scale] / reference - 1)))
    # First-order convergence: ten times stiffer, ten times closer.
    assert 8 < errors[0] / errors[1] < 12 and 8 < errors[1] / errors[2] < 12
    assert errors[-1] < 3e-6
    s1, s2 = scales[:2]                 # the pair least touched by round-off
    limit = (s2 * freqs[s2] - s1 * freqs[s1]) / (s2 - s1)
    np.testing.assert_allclose(limit, reference, rtol=1e-6)


def test_section_table_interpolates_along_the_axis():
    asm = car()
    table = SectionTable(np.array([-2.6, 0.3]),
                         {"EA": np.array([1e9, 3e9]), "EIy": np.array([1e6, 3e6]),
                          "EIz": np.array([1e6, 3e6]), "GJ": np.array([1e6, 3e6])})
    split = split_body(asm, SplitSpec("body", segments=3, section_table=table))
    beams = [lk for lk in split.links.values() if lk.type == "beam"]
    mids = [0.5 * (lk.a.at[0] + lk.b.at[0]) for lk in beams]
    for lk, s in zip(beams, mids):
        expected = 1e6 + 2e6 * (s + 2.6) / 2.9                 # linear interpolation
        assert lk.props["EIy"] == pytest.approx(expected, rel=1e-12)


def test_sensors_and_links_stay_consistent_after_assembly():
    asm = car()
    extra = Sensor("nose", "body", "body", "acceleration", at=np.array([0.25, 0, 0.5]),
                   direction=np.array([0, 0, 1.0, 0, 0, 0]))
    asm = asm.replace(sensors={**asm.sensors, "nose": extra},
                      links={**asm.links, "tow": Link("tow", "spring",
                                                      End("body", np.array([-2.6, 0, 0.4])),
                                                      End("ground", np.array([-2.6, 0, 0.4])),
                                                      {"axis": np.array([1.0, 0, 0]),
                                                       "stiffness": 1e3, "damping": 0.0,
                                                       "loss_factor": 0.0})})
    split = split_body(asm, SplitSpec("body", segments=5, section=SECTION))
    model = assemble(split)
    assert model.sensors == tuple(split.sensors)
    assert split.sensors["nose"].target == "body_s05"
    assert split.links["tow"].a.node == "body_s01"


def test_labels_name_bending_and_torsion_in_the_analytic_order():
    # The free-free bar's elastic modes, labelled as `lumpgraph modes` labels them,
    # come in the order of the analytic frequencies (Euler-Bernoulli bending in the
    # two planes, beta L = 4.7300, 7.8532, 10.9956, 14.1372 (from memory, the roots
    # of cos(bL) cosh(bL) = 1); free-free shaft torsion n pi/L sqrt(GJ/rho Ip)).
    from builder.analysis.labels import describe_modes
    from builder.analysis.modes import compute_modes
    from plugins.split_body.split import uniform_bar
    L, rho_a, rho_ip = 3.0, 20.0, 3e-4
    EIy, EIz, GJ = 4.0e4, 6.0e4, 30.0
    asm = uniform_bar(60, L, rho_a, rho_ip, {"EA": 1e9, "EIy": EIy, "EIz": EIz, "GJ": GJ})
    model = assemble(asm)
    modes = compute_modes(model, 18)
    expected = []
    for order, bl in ((1, 4.7300), (2, 7.8532), (3, 10.9956), (4, 14.1372)):
        word = ("first", "second", "third", "fourth")[order - 1]
        expected.append((bl ** 2 * np.sqrt(EIy / (rho_a * L ** 4)), f"bar {word} vertical bending"))
        expected.append((bl ** 2 * np.sqrt(EIz / (rho_a * L ** 4)), f"bar {word} lateral bending"))
        expected.append((order * np.pi / L * np.sqrt(GJ / rho_ip), f"bar {word} torsion"))
    expected = [label for _, label in sorted(expected)][:10]
    assert [m.label for m in modes.modes[6:16]] == expected
    # The six zero-frequency modes are "rigid" (the format's word); described on
    # their own, they are motions of the bar as a whole, with no family.
    assert [m.label for m in modes.modes[:6]] == ["rigid"] * 6
    for d in describe_modes(model, modes.shapes[:, :6]):
        assert d.parts[0].unit.name == "bar" and not d.parts[0].motion.family


def flexible_car(segments):
    from builder.errors import Where
    from builder.plugin import PluginUse
    from plugins.split_body.plugin import PLUGIN
    asm = car()
    asm = asm.replace(bodies={n: replace(b, dofs=DOF_NAMES) if n == "engine" else b
                              for n, b in asm.bodies.items()})
    spec = SplitSpec("body", segments=segments, start=-3.0, end=0.8,
                     section={"EA": 2e9, "EIy": 8e6, "EIz": 1.2e7, "GJ": 4.3e6})
    # recorded as the plugin use a file would make, so that labels know the split body
    return split_body(asm, spec).replace(plugins=(PluginUse("split_body", "body", spec,
                                                            Where(), PLUGIN),))


def test_craig_bampton_of_the_split_body_in_the_car():
    # Craig-Bampton (Craig & Bampton 1968, from memory) with enough modes must
    # reproduce the full model's lowest modes within 0.1 %, with far fewer DOFs.
    from plugins.split_body.reduce import reduce_flexible_body
    model = assemble(flexible_car(60))
    reduced, cb = reduce_flexible_body(model, "body", 30)
    assert reduced.n < model.n / 3
    full, _ = lowest_modes(model.K, model.M, 22)      # up to about 60 Hz
    small, shapes = lowest_modes(reduced.K, reduced.M, 22)
    moving = full > 1e-6 * full.max()
    np.testing.assert_allclose(np.sqrt(small[moving]), np.sqrt(full[moving]), rtol=1e-3)
    assert np.all(small[moving] >= full[moving] * (1 - 1e-9))      # Rayleigh-Ritz bound
    # The reduced model's modal coordinates stand for the body's segments: its
    # first elastic body modes label as in the full model.
    from builder.analysis.modes import compute_modes
    labels = [m.label for m in compute_modes(reduced, 22).modes]
    full_labels = [m.label for m in compute_modes(model, 22).modes]
    assert "body first torsion" in labels and "body first vertical bending" in labels
    assert labels == full_labels


WITH_BLOCK = """
body: body
segments: 6
start: -3.0 m
end: 800 mm
EA: 2.0e9 N
EIy: 8 MN m^2
EIz: 1.2e7 N m^2
GJ: 4.3e6 N m^2
mass: table
mass_table:
  - {at: -3.0 m, weight: 1.2}
  - {at: 0.8 m, weight: 1.0}
"""


def _with(text):
    from builder.yamlnodes import parse_yaml
    from plugins.split_body.params import parse_split_spec
    node = parse_yaml(text, "car.yaml")
    return parse_split_spec(node.mapping(), "body", {}, node.where)


def test_with_block_parses_units_and_tables():
    spec = _with(WITH_BLOCK)
    assert spec.segments == 6 and spec.end == pytest.approx(0.8)
    assert spec.section["EIy"] == pytest.approx(8e6)
    split = split_body(car(), spec)
    masses = [b.mass for n, b in split.bodies.items() if n.startswith("body_s")]
    assert masses[0] > masses[-1]          # heavier where the table says so
    assert sum(masses) == pytest.approx(1050.0)


@pytest.mark.parametrize("change, message", [
    (("segments: 6", "segmnts: 6"), "unknown parameter"),
    (("body: body\n", ""), "needs \"body\""),
    (("EIy: 8 MN m^2\n", ""), "EIy"),
    (("EIy: 8 MN m^2", "EIy: 8 MN"), "EIy"),
    (("mass: table\n", "mass: lumpy\n"), "uniform, table"),
    (("{at: 0.8 m, weight: 1.0}", "{at: -3.5 m, weight: 1.0}"), "increase"),
])
def test_with_block_errors_are_one_line(change, message):
    with pytest.raises(InputError) as err:
        _with(WITH_BLOCK.replace(*change))
    assert message in str(err.value) and "\n" not in str(err.value)


FORMAT_EXAMPLE = """
format: 1
name: two segments
bodies:
  seg_3: {mass: 40 kg, cg: [-1.0, 0, 0.5], inertia: {xx: 2, yy: 3, zz: 3}}
  seg_4: {mass: 40 kg, cg: [-1.5, 0, 0.5], inertia: {xx: 2, yy: 3, zz: 3}}
links:
  spar_3:
    type: beam
    a: {body: seg_3, at: [-1.0, 0, 0.5]}
    b: {body: seg_4, at: [-1.5, 0, 0.5]}
    frame: {z: [0, 0, 1]}
    EA: 2.0e9 N
    EIy: 3.0e6 N m^2
    EIz: 4.5e6 N m^2
    GJ: 1.2e6 N m^2
    shear_y: 4.0e8 N
    shear_z: 4.0e8 N
"""


def test_format_example_of_a_beam_link_loads_and_assembles():
    # The example of docs (assembly-format.md) as written; its stiffness is the
    # element's on the two points (both at the cgs), with motion spatial.
    asm = load_text(FORMAT_EXAMPLE, "example.yaml")
    model = assemble(asm)
    k = beam_global_stiffness([-1.0, 0, 0.5], [-1.5, 0, 0.5], [0, 0, 1], 2.0e9, 3.0e6, 4.5e6,
                              1.2e6, 4.0e8, 4.0e8)
    np.testing.assert_allclose(model.K.toarray(), k, atol=1e-9 * np.abs(k).max())
    # Local x runs from a to b (-x globally); the section's y is then -y.
    r = builder.elements.beam.beam_rotation([-1.0, 0, 0.5], [-1.5, 0, 0.5], [0, 0, 1])
    np.testing.assert_allclose(r, [[-1, 0, 0], [0, -1, 0], [0, 0, 1]], atol=1e-15)


def test_flexible_body_modes_table():
    from plugins.split_body.analysis import flexible_body_modes
    model = assemble(flexible_car(10))
    result = flexible_body_modes(model, count=20, craig_bampton_modes=12)
    first = {lab: f for f, lab in zip(result.frequencies_hz, result.labels)}
    # The demo's invented stiffness puts the first torsion and vertical bending
    # in 20-40 Hz (common practice, no source: bodies are designed above ~25 Hz).
    assert 20 < first["body first torsion"] < 40
    assert 20 < first["body first vertical bending"] < 40
    flagged = [lab for lab, el in zip(result.labels, result.elastic) if el]
    assert "body first torsion" in flagged and "body bounce with engine bounce" not in flagged
    # Craig-Bampton (12 modes) against the full model below 40 Hz, 0.1 %.
    # (This car's suspension springs act along z only: three rigid-body modes.)
    low = result.frequencies_hz < 40
    np.testing.assert_allclose(result.reduced_frequencies_hz[low], result.frequencies_hz[low],
                               rtol=1e-3, atol=1e-4)
    assert "body first torsion" in result.table()
    assert result.to_dict()["craig_bampton"]["dofs"] == result.reduced_dofs


def test_command_line_on_the_flexible_demo(run_cli):
    demo = ROOT / "assemblies" / "compact_car_flexible.yaml"
    code, out, err = run_cli("modes", demo, "--json")
    assert code == 0, err
    import json
    modes = json.loads(out)["modes"]
    labels: dict[str, float] = {}
    for m in modes:                                          # first mode of each label
        labels.setdefault(m["label"], m["frequency_hz"])
    assert 20 < labels["body first torsion"] < 40            # the demo's stated range
    assert 20 < labels["body first vertical bending"] < 40
    code, out, err = run_cli("plugin", "split_body", demo, "--craig-bampton", "12",
                             "--count", "20")
    assert code == 0, err
    assert "* body first torsion" in out and "Craig-Bampton" in out
    code, out, err = run_cli("plugin", "split_body", demo, "--count", "0")
    assert code == 2 and "--count" in err and "\n" not in err.strip()
