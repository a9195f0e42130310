"""Tests of the HTML review report and the report command."""

from __future__ import annotations

import base64
import io
from html.parser import HTMLParser
from pathlib import Path

import numpy as np
import pytest
import pyvista as pv
import scipy.linalg
from PIL import Image

from builder.linear import assemble
from builder.load import load_assembly, load_text
from builder.report import CAUTION, report_html, write_report

pv.OFF_SCREEN = True

ROOT = Path(__file__).resolve().parent.parent
QUARTER = ROOT / "assemblies" / "quarter_car.yaml"

VOID = {"meta", "img", "br", "hr", "link", "input", "col", "area", "base", "wbr"}


class _Page(HTMLParser):
    """Collects images and links, and checks that every element is closed in order."""

    def __init__(self) -> None:
        super().__init__()
        self.stack: list[str] = []
        self.images: list[str] = []
        self.references: list[str] = []
        self.errors: list[str] = []
        self.text: list[str] = []

    def handle_starttag(self, tag, attrs):
        attrs = dict(attrs)
        if tag == "img":
            self.images.append(attrs.get("src", ""))
        for key in ("href", "src"):
            if key in attrs and tag != "img":
                self.references.append(attrs[key])
        if tag not in VOID:
            self.stack.append(tag)

    def handle_endtag(self, tag):
        if not self.stack or self.stack[-1] != tag:
            self.errors.append(f"unexpected </{tag}> with open {self.stack[-3:]}")
        else:
            self.stack.pop()

    def handle_data(self, data):
        self.text.append(data)


def _parse(text: str) -> _Page:
    page = _Page()
    page.feed(text)
    page.close()
    return page


@pytest.fixture(scope="module")
def quarter_report():
    assembly = load_assembly(QUARTER)
    model = assemble(assembly)
    return assembly, model, report_html(assembly, model, sheet=2)


def test_report_parses_and_embeds_every_image(quarter_report):
    _, _, text = quarter_report
    page = _parse(text)
    assert not page.errors and not page.stack
    assert len(page.images) >= 3            # review sheet, road responses, ride spectra
    for src in page.images:
        assert src.startswith("data:image/png;base64,")
        image = Image.open(io.BytesIO(base64.b64decode(src.split(",", 1)[1])))
        image.verify()
    assert page.references == []            # nothing outside the page


def test_report_lists_the_modes_of_the_file(quarter_report):
    # Independent check: the quarter car's two natural frequencies from the
    # file's values by scipy's generalised eigensolver (textbook 2-DOF
    # quarter car: M = diag(ms, mu), K = [[ks, -ks], [-ks, ks + kt]]).
    _, _, text = quarter_report
    ms, mu, ks, kt = 300.0, 36.0, 21e3, 210e3
    lam = scipy.linalg.eigh([[ks, -ks], [-ks, ks + kt]], np.diag([ms, mu]), eigvals_only=True)
    words = " ".join(_parse(text).text)
    for f in np.sqrt(lam) / (2 * np.pi):
        assert f"{f:.4g}" in words
    for title in ("Model summary", "Model checks", "Modes", "Model ladder", "Review sheet",
                  "Frequency response from the road", "Ride on a random road",
                  "Model ladder on the ride figures"):
        assert f"<h2>{title}</h2>" in text
    # the quarter car's bounce depth misses the tyre load (its Guyan wheel has no mass)
    assert "recommended: none of these depths" in text
    assert words.count(CAUTION) == 2
    assert "ISO 2631-1" in CAUTION and "screening estimates" in CAUTION


def test_report_without_road_leaves_out_road_sections():
    text = """
format: 1
name: Mounted mass (invented data)
motion: bounce
bodies:
  block: {mass: 20 kg, cg: [0, 0, 0.2], gyradius: {x: 0.1, y: 0.1, z: 0.1}}
links:
  pad: {type: spring, a: block, b: {body: ground, at: [0, 0, 0]}, axis: z, stiffness: 80 kN/m}
"""
    assembly = load_text(text, "block.yaml")
    page = report_html(assembly, assemble(assembly), sheet=1)
    assert "Ride on a random road" not in page and "Frequency response" not in page
    assert not _parse(page).errors
    # One mode: sqrt(k/m)/(2 pi) (analytic single-DOF oscillator).
    assert f"{np.sqrt(80e3 / 20.0) / (2 * np.pi):.4g}" in page


def test_write_report_creates_the_folder(tmp_path):
    assembly = load_assembly(QUARTER)
    path = write_report(assembly, assemble(assembly), tmp_path / "review" / "q", sheet=1)
    assert path == tmp_path / "review" / "q" / "report.html"
    assert path.read_text().startswith("<!DOCTYPE html>")


def test_report_command(run_cli, tmp_path):
    code, out, err = run_cli("report", QUARTER, "--out", tmp_path / "rep", "--sheet", "2",
                             "--road", "c", "--speed", "60 km/h")
    assert code == 0, err
    page = (tmp_path / "rep" / "report.html").read_text()
    assert "class C road at 60 km/h" in page
    code, _, err = run_cli("report", QUARTER, "--out", tmp_path / "rep", "--speed", "fast")
    assert code == 2 and err.count("\n") == 1
    code, _, err = run_cli("report", QUARTER, "--out", tmp_path / "rep", "--depth", "nope")
    assert code == 2 and "nope" in err


def test_long_tables_are_cut_with_a_count():
    from builder.report import _table

    page = _table(["body", "mass"], [[f"b{i}", str(i)] for i in range(75)], limit=60)
    parsed = _parse(page)
    assert not parsed.errors
    assert page.count("<tr>") == 1 + 60 + 1 and "... and 15 more" in page


def test_report_road_response_peak_matches_the_quarter_car_transfer_function(quarter_report):
    # Independent check: sympy solves the quarter car's Laplace-domain
    # equations (Newton's second law on sprung and unsprung masses) for the
    # body acceleration per unit road displacement, and scipy.signal.freqs
    # evaluates it on the report's grid (0.5 to 50 Hz, 400 log-spaced points).
    import scipy.signal
    import sympy as sp

    s, zs, zu = sp.symbols("s z_s z_u")
    ms, mu, ks, cs, kt = 300, 36, 21000, 1500, 210000
    eqs = [ms * s**2 * zs + cs * s * (zs - zu) + ks * (zs - zu),
           mu * s**2 * zu - cs * s * (zs - zu) - ks * (zs - zu) + kt * (zu - 1)]
    sol = sp.solve(eqs, [zs, zu], dict=True)[0]
    num, den = sp.fraction(sp.together(s**2 * sol[zs]))
    b = [float(c) for c in sp.Poly(num, s).all_coeffs()]
    a = [float(c) for c in sp.Poly(den, s).all_coeffs()]
    f = np.geomspace(0.5, 50.0, 400)
    _, h = scipy.signal.freqs(b, a, worN=2 * np.pi * f)
    k = int(np.argmax(np.abs(h)))
    _, _, text = quarter_report
    row = [line for line in text.split("<tr>") if "body_accel" in line and "road.contact" in line]
    assert row, "no peak row for body_accel"
    assert f"<td>{abs(h[k]):.4g}</td>" in row[0] and f"<td>{f[k]:.3g}</td>" in row[0]


def test_plugin_tables_come_from_each_plugin():
    # An applied plugin's tables (rows with the header first, or a Table)
    # appear in the report, escaped; the report's road options reach it.
    from builder.errors import Where
    from builder.plugin import PluginUse, Table

    seen = {}

    class FakePlugin:
        name = "fake"

        def tables(self, assembly, model, **options):
            seen.update(options)
            return [("Fake <mounts>", [["mount", "rate (N/m)"], ["left", 1.5e5]]),
                    ("Fake decoupling", Table("ignored", ("mode", "share"), ((1, 0.97),),
                                              ("energy in the roll direction",)))]

    assembly = load_assembly(QUARTER)
    use = PluginUse("fake", "demo", None, Where(), FakePlugin())
    assembly = assembly.replace(plugins=(use,))
    page = report_html(assembly, assemble(assembly), sheet=1, road_class="D")
    assert "<h3>Fake &lt;mounts&gt;</h3>" in page and "<th>rate (N/m)</th>" in page
    assert "<td>1.5e+05</td>" in page and "<td>0.97</td>" in page
    assert "energy in the roll direction" in page
    assert seen["road_class"] == "D"
    assert not _parse(page).errors
