"""``lumpgraph report FILE --out DIR [--depth NAME] [--sheet N] [--road CLASS] [--speed V]``.

Writes ``DIR/report.html``: one self-contained page (images embedded) with
the model summary and checks, modes, ladder, review sheet, road responses
and ride figures (when the file has road points and sensors), and plugin
tables; with ``--measured TEST`` also the correlation with a modal test.
See :mod:`builder.report`.
"""

from __future__ import annotations

import argparse

from ..options import argtype, quantity, whole
from ._common import add_model_options, load_model
from ._measured import add_measured_option, parse_threshold

HELP = "self-contained HTML review report"


def configure(parser: argparse.ArgumentParser) -> None:
    add_model_options(parser)
    parser.add_argument("--out", required=True, metavar="DIR",
                        help="folder for report.html (created if missing)")
    parser.add_argument("--sheet", type=argtype(whole, "--sheet", 1, ceiling_key="render --sheet"),
                        default=12, metavar="N",
                        help="modes on the review sheet (default 12)")
    parser.add_argument("--road", default="B", metavar="CLASS",
                        help="ISO 8608 road class A..H for the ride section (default B)")
    parser.add_argument("--speed", default="80 km/h", metavar="V",
                        help='vehicle speed for the ride section (default "80 km/h"; bare: m/s)')
    add_measured_option(parser, required=False)


def run(args: argparse.Namespace) -> int:
    from ..analysis import road
    from ..io import output_folder
    from ..render.scene import import_pyvista
    from ..report import write_report

    speed = quantity(args.speed, "--speed", "speed")
    road.class_value(args.road)
    output_folder(args.out, "--out")
    threshold = parse_threshold(args.threshold)
    measured = None
    if args.measured:
        from ..measured_files import read_measured
        measured = read_measured(args.measured)
    import_pyvista()
    assembly, model = load_model(args)
    path = write_report(assembly, model, args.out, sheet=args.sheet,
                        road_class=args.road.strip().upper(), speed_m_s=float(speed),
                        measured=measured, threshold=threshold)
    print(f"wrote {path}")
    return 0
