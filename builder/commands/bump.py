"""``lumpgraph bump FILE --height H --length L --speed V [options]``: transient response.

A half-sine bump (default), a half-sine pothole or a ramp step of ``--height``
over ``--length`` met at ``--speed``; each road point meets it with its own
delay. The response is exact for the linear model (see
:mod:`builder.analysis.transient`). ``--road CLASS`` drives over a random ISO
8608 road instead (``--seed``, ``--tracks``). Prints peak, RMS and VDV per
sensor; ``--json`` the same as one object, ``--csv out.csv`` the time
histories, ``--plot out.png`` a picture of them.
"""

from __future__ import annotations

import argparse
import sys

from ..errors import InputError, Where
from ..io import writing
from ..options import choice, quantity, whole
from ._common import add_model_options, load_model, print_json

HELP = "transient response to a bump, pothole or step"


def configure(parser: argparse.ArgumentParser) -> None:
    add_model_options(parser)
    parser.add_argument("--height", default=None, metavar="H",
                        help='event height, e.g. "40 mm" (a pothole goes down by it)')
    parser.add_argument("--length", default=None, metavar="L",
                        help='event length along the road, e.g. "0.6 m" (ramp length of a step)')
    parser.add_argument("--speed", required=True, metavar="V",
                        help='vehicle speed, e.g. "30 km/h" or 8.3 (m/s)')
    parser.add_argument("--shape", default="bump", metavar="SHAPE",
                        help="bump (half-sine, default), pothole (half-sine dip) or step (ramp)")
    parser.add_argument("--road", default=None, metavar="CLASS",
                        help="drive over a random ISO 8608 road of this class (A to H) instead")
    parser.add_argument("--profile", default=None, metavar="ROAD.csv",
                        help="drive over a measured road profile (distance, elevation or left "
                        "and right) instead")
    parser.add_argument("--seed", default=None, metavar="N",
                        help="random seed of the --road realisation")
    parser.add_argument("--tracks", default="coherent", metavar="MODEL",
                        help="--road left and right tracks: identical, independent or coherent")
    parser.add_argument("--duration", default=None, metavar="S",
                        help="record length in s (default: until the last road point has passed "
                        "plus 3 s; 20 s for --road)")
    parser.add_argument("--rate", default="1000", metavar="HZ",
                        help="output sample rate in Hz (default 1000)")
    parser.add_argument("--plot", default=None, metavar="OUT.png",
                        help="write a PNG of the time histories")
    parser.add_argument("--csv", default=None, metavar="OUT.csv",
                        help="write the time histories as CSV")
    parser.add_argument("--json", action="store_true", help="print the figures as JSON")


def _quantity(text: str, option: str, dimension: str) -> float:
    """A positive quantity read by :func:`builder.options.quantity`."""
    return quantity(text, option, dimension)


def _profile(args: argparse.Namespace, speed: float, rate: float,
             duration: float | None) -> int:
    """``bump --profile``: the exact response to a measured road, its time histories."""
    from ..analysis.measured_road import profile_response
    from ..analysis.profile_psd import profile_spectrum
    from ..io import csv_text, output_path, write_atomic
    from ..profiles import read_profile

    for option, value in (("--road", args.road), ("--height", args.height),
                          ("--length", args.length), ("--duration", duration),
                          ("--seed", args.seed)):
        if value is not None:
            raise InputError("is not used with --profile (the profile sets the road and "
                             "its length the duration)", Where(field=option))
    if args.plot:
        output_path(args.plot, (".png",), "--plot")
    if args.csv:
        output_path(args.csv, (".csv",), "--csv")
    profile = read_profile(args.profile)
    spectrum = profile_spectrum(profile)
    assembly, model = load_model(args)
    result = profile_response(model, profile, speed, rate, assembly=assembly)
    if args.plot:
        with writing("--plot"):
            result.plot(args.plot)
    if args.csv:
        write_atomic(args.csv, csv_text(result.to_csv_rows()), "--csv")
    if args.json:
        out = result.to_dict()
        out["profile"] = spectrum.to_dict()
        print_json(out)
    else:
        print(spectrum.describe())
        print(result.table())
        for what, path in (("time history plot", args.plot), ("time histories", args.csv)):
            if path:
                print(f"{what} written to {path}")
    sys.stdout.flush()
    return 0


def run(args: argparse.Namespace) -> int:
    from ..analysis import road
    from ..analysis.transient import SHAPES, event_response, random_road_response, road_event
    from ..io import csv_text, output_path, write_atomic

    speed = road.check_speed(_quantity(args.speed, "--speed", "speed"))
    rate = _quantity(args.rate, "--rate", "frequency")
    duration = None if args.duration is None else _quantity(args.duration, "--duration", "time")
    if duration is not None and not duration > 0:
        raise InputError(f"duration must be positive, not {duration:g} s",
                         Where(field="--duration"))
    if not rate > 0:
        raise InputError(f"rate must be positive, not {rate:g} Hz", Where(field="--rate"))
    event = None
    if args.profile is not None:
        return _profile(args, speed, rate, duration)
    if args.road is None:
        args.shape = choice(args.shape, "--shape", SHAPES)
    if args.road is None:
        for option, value in (("--height", args.height), ("--length", args.length)):
            if value is None:
                raise InputError(f"needed for a {args.shape} (or give --road CLASS)",
                                 Where(field=option))
        event = road_event(args.shape, _quantity(args.height, "--height", "length"),
                           _quantity(args.length, "--length", "length"))
    else:
        road.class_value(args.road)
        args.tracks = choice(args.tracks, "--tracks", road.TRACK_MODELS)
    seed = None if args.seed is None else whole(args.seed, "--seed", 0, 2**32 - 1)
    if args.plot:
        output_path(args.plot, (".png",), "--plot")
    if args.csv:
        output_path(args.csv, (".csv",), "--csv")
    assembly, model = load_model(args)
    if event is not None:
        result = event_response(model, event, speed, duration, rate, assembly=assembly)
    else:
        result = random_road_response(model, args.road.strip().upper(), speed,
                                      20.0 if duration is None else duration, rate, seed=seed,
                                      tracks=args.tracks, assembly=assembly)
    if args.plot:
        with writing("--plot"):
            result.plot(args.plot)
    if args.csv:
        write_atomic(args.csv, csv_text(result.to_csv_rows()), "--csv")
    if args.json:
        print_json(result)
    else:
        print(result.table())
        for what, path in (("time history plot", args.plot), ("time histories", args.csv)):
            if path:
                print(f"{what} written to {path}")
    sys.stdout.flush()
    return 0
