"""``lumpgraph ride FILE --road CLASS --speed V [options]``: random road response.

Prints every sensor's RMS over the band, the ISO 2631-1 weighted RMS and
comfort reactions of acceleration sensors, suspension travel and the
dynamic tyre load ratio; ``--json`` prints the same as one object,
``--plot out.png`` draws the sensor PSDs.
"""

from __future__ import annotations

import argparse

from ..errors import InputError, Where
from ..io import writing
from ..options import choice, quantity, whole
from ..quantities import to_si
from ._common import add_model_options, load_model, print_json

HELP = "response to an ISO 8608 road at a speed, ISO 2631-1"


def configure(parser: argparse.ArgumentParser) -> None:
    add_model_options(parser)
    parser.add_argument("--road", default=None, metavar="CLASS",
                        help="ISO 8608 road class A to H")
    parser.add_argument("--profile", default=None, metavar="ROAD.csv",
                        help="a measured road profile (distance, elevation or left and right) "
                        "in place of a class: its PSD and class, and the exact response to it")
    parser.add_argument("--rate", default="1000", metavar="HZ",
                        help="--profile: sample rate of the response in Hz (default 1000)")
    parser.add_argument("--speed", required=True, metavar="V",
                        help='vehicle speed, e.g. "80 km/h" or 22.2 (m/s)')
    parser.add_argument("--waviness", default="2", metavar="W",
                        help="waviness w of the road PSD (default 2, the ISO 8608 value)")
    parser.add_argument("--tracks", default="coherent", metavar="MODEL",
                        help="left and right tracks: identical, independent or coherent "
                        "(isotropic road; default)")
    parser.add_argument("--band", default=None, metavar="FMIN:FMAX",
                        help="frequency band in Hz (default 0.5:80, the ISO 2631-1 band)")
    parser.add_argument("--points", default=None, metavar="N",
                        help="log-spaced frequencies to start from (default 400); points "
                        "are added at every mode and where the integral needs them")
    parser.add_argument("--sensor", action="append", default=None, metavar="NAME",
                        help="report only this sensor (repeatable; default all)")
    parser.add_argument("--plot", default=None, metavar="OUT.png",
                        help="write a PNG of the sensor PSDs")
    parser.add_argument("--json", action="store_true", help="print the result as JSON")
    parser.add_argument("--psd", action="store_true",
                        help="with --json, include the frequency grid and every PSD")


def _band(text: str | None) -> tuple[float, float]:
    from ..analysis.ride import DEFAULT_BAND

    if text is None:
        return DEFAULT_BAND
    parts = text.split(":")
    where = Where(field="--band")
    if len(parts) != 2:
        raise InputError(f'must be FMIN:FMAX in Hz, got "{text}"', where)
    try:
        fmin, fmax = (to_si(p.strip(), "frequency", where) for p in parts)
    except InputError:
        raise InputError(f'must be FMIN:FMAX in Hz, got "{text}"', where) from None
    if not 0 < fmin < fmax:
        raise InputError(f"needs 0 < FMIN < FMAX, got {fmin:g}:{fmax:g} Hz", where)
    return fmin, fmax


def _number(text: str, option: str, dimension: str) -> float:
    """A positive quantity read by :func:`builder.options.quantity`."""
    return quantity(text, option, dimension)


def _points(text: str | None) -> int:
    from ..analysis.ride import DEFAULT_POINTS

    if text is None:
        return DEFAULT_POINTS
    return whole(text, "--points", 2, ceiling_key="ride --points")


def _profile_run(args: argparse.Namespace) -> int:
    """``ride --profile``: the measured road's class and the exact response to it."""
    from ..analysis import road
    from ..analysis.measured_road import profile_ride
    from ..io import output_path
    from ..profiles import read_profile

    speed = road.check_speed(_number(args.speed, "--speed", "speed"))
    rate = _number(args.rate, "--rate", "frequency")
    if not rate > 0:
        raise InputError(f"must be positive, got {args.rate}", Where(field="--rate"))
    for option in ("--band", "--points", "--waviness", "--tracks"):
        given = getattr(args, option[2:])
        if given is not None and given != {"--waviness": "2", "--tracks": "coherent"}.get(option):
            raise InputError("is for a class road; a measured profile brings its own",
                             Where(field=option))
    if args.plot:
        output_path(args.plot, (".png",), "--plot")
    profile = read_profile(args.profile)
    assembly, model = load_model(args)
    result = profile_ride(model, profile, speed, rate, assembly=assembly, sensors=args.sensor)
    if args.plot:
        with writing("--plot"):
            result.plot(args.plot)
    if args.json:
        print_json(result.to_dict(psd=args.psd))
    else:
        print(result.table())
        if args.plot:
            print(f"profile PSD plot written to {args.plot}")
    return 0


def run(args: argparse.Namespace) -> int:
    from ..analysis import road
    from ..analysis.ride import ride_response
    from ..io import output_path

    if args.profile is not None and args.road is not None:
        raise InputError("give a road class or a measured profile, not both",
                         Where(field="--profile"))
    if args.profile is not None:
        return _profile_run(args)
    if args.road is None:
        raise InputError("needed: an ISO 8608 class (A to H), or --profile ROAD.csv",
                         Where(field="--road"))
    road.class_value(args.road)
    speed = road.check_speed(_number(args.speed, "--speed", "speed"))
    waviness = quantity(args.waviness, "--waviness", "dimensionless", low=0.5, high=5.0,
                        unit="(ISO 8608 roads: about 1.5 to 3.5)")
    args.tracks = choice(args.tracks, "--tracks", road.TRACK_MODELS)
    band, points = _band(args.band), _points(args.points)
    if args.plot:
        output_path(args.plot, (".png",), "--plot")
    assembly, model = load_model(args)
    result = ride_response(model, args.road, speed, waviness=waviness, tracks=args.tracks,
                           band=band, points=points, assembly=assembly, sensors=args.sensor)
    if args.plot:
        with writing("--plot"):
            result.plot(args.plot)
    if args.json:
        print_json(result.to_dict(psd=args.psd))
    else:
        print(result.table())
        if args.plot:
            print(f"PSD plot written to {args.plot}")
    return 0
