"""``lumpgraph frf FILE [--from INPUT]... [--to SENSOR]... [options]``: frequency response.

Every ``--from`` input to every ``--to`` sensor (default: all road inputs to
all sensors) on ``--points`` log-spaced frequencies over ``--band``
(default 0.5:50 Hz, 400 points). An input is a road input (``road.fl``) or a
DOF label (``engine.ry``: a unit generalised force on it). Prints the peak
of every FRF; ``--csv`` prints the full table, ``--json`` the format page's
object; ``--plot out.png`` draws magnitude and phase.
"""

from __future__ import annotations

import argparse
import math
import sys

from ..errors import InputError, Where
from ..io import writing
from ..quantities import to_si
from ._common import add_model_options, load_model, print_json

HELP = "frequency response from road inputs to sensors"


def configure(parser: argparse.ArgumentParser) -> None:
    add_model_options(parser)
    parser.add_argument("--from", dest="inputs", action="append", default=None,
                        metavar="INPUT", help="road input (road.fl) or DOF label for a unit "
                        "force (repeatable; default: every road input)")
    parser.add_argument("--to", dest="sensors", action="append", default=None,
                        metavar="SENSOR", help="sensor name (repeatable; default: every sensor)")
    parser.add_argument("--band", default=None, metavar="FMIN:FMAX",
                        help="frequency band in Hz (default 0.5:50)")
    parser.add_argument("--points", default=None, metavar="N",
                        help="number of log-spaced frequencies (default 400)")
    parser.add_argument("--plot", default=None, metavar="OUT.png",
                        help="write a PNG of magnitude and phase")
    out = parser.add_mutually_exclusive_group()
    out.add_argument("--csv", action="store_true", help="print the FRFs as CSV")
    out.add_argument("--json", action="store_true", help="print the FRFs as JSON")


def parse_band(text: str | None, default: tuple[float, float]) -> tuple[float, float]:
    """``FMIN:FMAX`` (Hz, units allowed) checked as 0 < FMIN < FMAX."""
    if text is None:
        return default
    where = Where(field="--band")
    parts = text.split(":")
    if len(parts) != 2:
        raise InputError(f'must be FMIN:FMAX in Hz, got "{text}"', where)
    try:
        fmin, fmax = (to_si(p.strip(), "frequency", where) for p in parts)
    except InputError:
        raise InputError(f'must be FMIN:FMAX in Hz, got "{text}"', where) from None
    if not (math.isfinite(fmin) and math.isfinite(fmax)) or fmin <= 0:
        raise InputError(f"needs 0 < FMIN < FMAX, got {fmin:g}:{fmax:g} Hz (FMIN must be "
                         "positive on a log grid)", where)
    if fmin >= fmax:
        raise InputError(f"needs FMIN < FMAX, got {fmin:g}:{fmax:g} Hz", where)
    return fmin, fmax


def parse_points(text: str | None, default: int) -> int:
    """A whole number of points, 2 to the ceiling (``builder.options.CEILINGS``)."""
    from ..options import whole

    if text is None:
        return default
    return whole(text, "--points", 2, ceiling_key="frf --points")


def run(args: argparse.Namespace) -> int:
    import numpy as np

    from ..analysis.frf import DEFAULT_BAND, DEFAULT_POINTS, frequency_response
    from ..io import csv_text, output_path

    band = parse_band(args.band, DEFAULT_BAND)
    points = parse_points(args.points, DEFAULT_POINTS)
    if args.plot:
        output_path(args.plot, (".png",), "--plot")
    _, model = load_model(args)
    if args.inputs is None and not model.inputs:
        raise InputError("the model has no road inputs: name a DOF for a unit force",
                         Where(field="--from"))
    if args.sensors is None and not model.sensors:
        raise InputError("the model has no sensors: add a sensors section to the file",
                         Where(field="--to"))
    for name in args.sensors or ():
        model.sensor_index(name)              # one-line error naming --to
    f = np.geomspace(band[0], band[1], points)
    result = frequency_response(model, f, inputs=args.inputs, sensors=args.sensors)
    if args.plot:
        with writing("--plot"):
            result.plot(args.plot)
    if args.json:
        print_json(result)
    elif args.csv:
        sys.stdout.write(csv_text(result.to_csv_rows()))
    else:
        print(result.table())
        if args.plot:
            print(f"FRF plot written to {args.plot}")
    return 0
