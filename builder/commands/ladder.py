"""``lumpgraph ladder FILE [--detail] [--json]``: every depth against the full model.

Without response options every depth's modes are matched to the full
model's (MAC, frequency error). With ``--ride CLASS --speed V``, ``--bump
HEIGHT:LENGTH --speed V`` or ``--frf FROM:TO`` each depth is judged on those
response figures instead (``--sensors``, ``--tolerance``), and ``--propose``
searches depths built from the graph for the simplest one within the
tolerance.
"""

from __future__ import annotations

import argparse
import sys

from ..errors import InputError, Where
from ..linear import assemble
from ..load import load_assembly
from ._common import add_file_option, print_json

HELP = "compare every depth of the model with the full one"


def configure(parser: argparse.ArgumentParser) -> None:
    add_file_option(parser)
    parser.add_argument("--ride", default=None, metavar="CLASS",
                        help="judge the depths on the response to an ISO 8608 road of this "
                        "class (A to H): RMS and weighted RMS of the sensors")
    parser.add_argument("--bump", default=None, metavar="HEIGHT:LENGTH",
                        help='judge on a road event, e.g. "40 mm:0.6 m": peak and VDV of the '
                        "sensors (--shape bump, pothole or step)")
    parser.add_argument("--shape", default="bump", metavar="SHAPE",
                        help="--bump: bump (half-sine, default), pothole or step")
    parser.add_argument("--speed", default=None, metavar="V",
                        help='vehicle speed of --ride and --bump, e.g. "60 km/h"')
    parser.add_argument("--tracks", default="coherent", metavar="MODEL",
                        help="--ride: left and right tracks identical, independent or coherent")
    parser.add_argument("--frf", action="append", default=None, metavar="FROM:TO",
                        help="judge on the peak of an FRF and its frequency, e.g. "
                        "road.fl:floor_front (repeatable or comma-separated)")
    parser.add_argument("--band", default=None, metavar="FMIN:FMAX",
                        help="frequency band in Hz (default 0.5:80 for --ride, 0.5:50 for --frf)")
    parser.add_argument("--sensors", default=None, metavar="LIST",
                        help="sensors of the --ride and --bump figures, comma-separated "
                        "(default all)")
    parser.add_argument("--tolerance", default=None, metavar="P%",
                        help="largest error of a depth within, e.g. 5%% (default 5%%)")
    parser.add_argument("--propose", action="store_true",
                        help="build depths from the graph and search them from the smallest "
                        "upward for the first within the tolerance")
    parser.add_argument("--plot", default=None, metavar="OUT.png",
                        help="with response figures: a PNG of error against DOF count")
    parser.add_argument("--detail", action="store_true",
                        help="without response options: each mode of every depth against "
                        "its full-model match (MAC, frequency error)")
    parser.add_argument("--json", action="store_true", help="print the ladder as JSON")


def parse_tolerance(text: str | None) -> float:
    """``5%``, ``5 %`` or ``0.05`` as a ratio in (0, 1)."""
    from ..analysis.response_ladder import DEFAULT_TOLERANCE

    if text is None:
        return DEFAULT_TOLERANCE
    where = Where(field="--tolerance")
    raw = text.strip()
    scale = 1.0
    if raw.endswith("%"):
        raw, scale = raw[:-1].strip(), 0.01
    try:
        value = float(raw) * scale
    except ValueError:
        raise InputError(f'must be a percentage such as 5% (or a ratio such as 0.05), got '
                         f'"{text}"', where) from None
    if not 0 < value < 1:
        raise InputError(f"must be above 0 and below 100 %, got {text}", where)
    return value


def _question(args: argparse.Namespace, model_inputs: tuple[str, ...]) -> object:
    from ..analysis import road
    from ..analysis.response_ladder import Question
    from ..analysis.ride import DEFAULT_BAND as RIDE_BAND
    from ..analysis.transient import DEFAULT_RATE, SHAPES, road_event
    from .bump import _quantity
    from .frf import parse_band

    ride = bump = None
    if (args.ride or args.bump) and args.speed is None:
        raise InputError("needed with --ride and --bump, e.g. \"60 km/h\"",
                         Where(field="--speed"))
    speed = None if args.speed is None else road.check_speed(
        _quantity(args.speed, "--speed", "speed"))
    if args.ride is not None:
        cls = args.ride.strip().upper()
        road.class_value(cls)
        if args.tracks not in road.TRACK_MODELS:
            raise InputError(f'unknown track model "{args.tracks}": choose identical, '
                             "independent or coherent", Where(field="--tracks"))
        ride = (cls, speed, args.tracks, parse_band(args.band, RIDE_BAND))
    if args.bump is not None:
        if args.shape not in SHAPES:
            raise InputError(f'unknown shape "{args.shape}": choose bump, pothole or step',
                             Where(field="--shape"))
        parts = args.bump.split(":")
        if len(parts) != 2:
            raise InputError(f'must be HEIGHT:LENGTH, e.g. "40 mm:0.6 m", got "{args.bump}"',
                             Where(field="--bump"))
        event = road_event(args.shape, _quantity(parts[0].strip(), "--bump", "length"),
                           _quantity(parts[1].strip(), "--bump", "length"))
        bump = (event, speed, None, DEFAULT_RATE)
    pairs = []
    for item in args.frf or ():
        for text in (t.strip() for t in item.split(",") if t.strip()):
            a, sep, b = text.partition(":")
            if not sep or not a.strip() or not b.strip():
                raise InputError(f'must be FROM:TO (a road input or DOF, and a sensor), got '
                                 f'"{text}"', Where(field="--frf"))
            pairs.append((a.strip(), b.strip()))
    sensors = None
    if args.sensors is not None:
        sensors = tuple(s.strip() for s in args.sensors.split(",") if s.strip())
        if not sensors:
            raise InputError("name at least one sensor", Where(field="--sensors"))
    from ..analysis.frf import DEFAULT_BAND as FRF_BAND

    return Question(ride=ride, bump=bump, frf=tuple(pairs),
                    frf_band=parse_band(args.band, FRF_BAND), sensors=sensors)


def _progress(line: str) -> None:
    print(f"  ... {line}", file=sys.stderr, flush=True)


def run(args: argparse.Namespace) -> int:
    from ..analysis.ladder import compute_ladder
    from ..io import output_path

    responses = args.ride is not None or args.bump is not None or args.frf is not None
    if not responses:
        for option in ("tolerance", "sensors", "plot", "speed", "band"):
            if getattr(args, option) is not None:
                raise InputError("needs a response to judge: --ride CLASS, --bump "
                                 "HEIGHT:LENGTH or --frf FROM:TO",
                                 Where(field=f"--{option}"))
        if args.propose:
            raise InputError("needs a response to judge: --ride CLASS, --bump HEIGHT:LENGTH "
                             "or --frf FROM:TO", Where(field="--propose"))
        ladder = compute_ladder(assemble(load_assembly(args.file)))
        if args.json:
            print_json(ladder)
        else:
            print(ladder.table(detail=args.detail))
        return 0
    if args.detail:
        raise InputError("lists modal matches; the response figures are printed in full",
                         Where(field="--detail"))
    from ..analysis.response_ladder import response_ladder

    tolerance = parse_tolerance(args.tolerance)
    if args.plot:
        output_path(args.plot, (".png",), "--plot")
    assembly = load_assembly(args.file)
    model = assemble(assembly)
    question = _question(args, model.inputs)
    progress = None if (args.json or not sys.stderr.isatty()) else _progress
    from ..threads import blas_threads_for

    with blas_threads_for(2 * model.n):    # small dense problems: one BLAS thread
        if args.propose:
            from ..analysis.propose import search_depths

            result = search_depths(model, question, tolerance, progress=progress)
        else:
            result = response_ladder(model, question, tolerance=tolerance, progress=progress)
    if args.plot:
        result.plot(args.plot)
    if args.json:
        print_json(result)
    else:
        print(result.table())
        if args.plot:
            print(f"error plot written to {args.plot}")
    return 0
