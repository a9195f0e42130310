"""``lumpgraph evaluate RECORD.csv [options]``: ISO 2631-1 figures of a recorded vibration.

Reads a CSV (time column or ``--rate``) or WAV record (``--names``,
``--full-scale``), and prints per channel the weighted RMS, MTVV, VDV and
crest factor with the check of the basic method, and per point at a person
the vector sum with its comfort words; ``--json`` the same as one object,
``--plot OUT.png`` the time histories, ``--spectrum OUT.png`` the
one-third-octave band spectrum.
"""

from __future__ import annotations

import argparse

from ..errors import InputError, Where
from ..io import writing
from ..quantities import to_si
from ._common import print_json

HELP = "ISO 2631-1 evaluation of recorded acceleration (CSV or WAV)"


def configure(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("record", metavar="RECORD", help="record file: .csv or .wav")
    parser.add_argument("--rate", default=None, metavar="HZ",
                        help="sampling rate of a CSV file without a time column (or to "
                        "override a WAV header)")
    parser.add_argument("--weighting", action="append", default=[], metavar="CHANNEL=W",
                        help="frequency weighting of a channel: Wk, Wd, We, Wc, Wj, Wf or none "
                        "(repeatable or comma-separated; default by name: _z Wk, _x and _y Wd)")
    parser.add_argument("--person", action="append", default=[], metavar="PREFIX=WHERE",
                        help="the channels PREFIX_x, _y, _z are at a person: seat, back, feet or "
                        "floor (default: prefixes starting with 'seat' are a seat surface)")
    parser.add_argument("--names", default=None, metavar="A,B,...",
                        help="WAV: the channel names, in the file's order")
    parser.add_argument("--full-scale", default=None, metavar="ACC",
                        help='WAV: acceleration at digital full scale, e.g. "20 g" (one, or '
                        "one per channel, comma-separated)")
    parser.add_argument("--plot", default=None, metavar="OUT.png",
                        help="write a PNG of the time histories and running RMS")
    parser.add_argument("--spectrum", default=None, metavar="OUT.png",
                        help="write a PNG of the one-third-octave band spectrum")
    parser.add_argument("--json", action="store_true", help="print the figures as JSON")


def _pairs(items: list[str], option: str) -> dict[str, str]:
    out: dict[str, str] = {}
    for item in items:
        for part in item.split(","):
            if not part.strip():
                continue
            key, eq, value = part.partition("=")
            if not eq or not key.strip() or not value.strip():
                raise InputError(f'must be NAME=VALUE, got "{part.strip()}"', Where(field=option))
            out[key.strip()] = value.strip()
    return out


def _rate(text: str | None) -> float | None:
    if text is None:
        return None
    try:
        value = to_si(text, "frequency", Where(field="--rate"))
    except InputError as exc:
        raise InputError(exc.reason, Where(field="--rate")) from None
    if not value > 0:
        raise InputError(f"must be a positive frequency, got {text}", Where(field="--rate"))
    return value


def _full_scale(text: str | None) -> list[float] | None:
    from ..records import acceleration_value

    if text is None:
        return None
    values = [acceleration_value(p, Where(field="--full-scale")) for p in text.split(",")]
    if any(not v > 0 for v in values):
        raise InputError("must be positive", Where(field="--full-scale"))
    return values


def run(args: argparse.Namespace) -> int:
    from ..analysis.evaluate import evaluate_record
    from ..io import output_path
    from ..records import read_record

    weightings = _pairs(args.weighting, "--weighting")
    persons = _pairs(args.person, "--person")
    rate = _rate(args.rate)
    names = None
    if args.names is not None:
        names = [n.strip() for n in args.names.split(",")]
        if any(not n for n in names) or len(set(names)) != len(names):
            raise InputError("must be distinct names, comma-separated", Where(field="--names"))
    scale = _full_scale(args.full_scale)
    for option, path in (("--plot", args.plot), ("--spectrum", args.spectrum)):
        if path:
            output_path(path, (".png",), option)
    record = read_record(args.record, rate, names=names, full_scale=scale,
                         rate_where=Where(field="--rate"),
                         scale_where=Where(field="--full-scale"))
    for key in weightings:
        if key not in record.names:
            raise InputError(f'unknown channel "{key}" (channels: {", ".join(record.names)})',
                             Where(field="--weighting"))
    try:
        result = evaluate_record(record, weightings, persons, traces=bool(args.plot))
    except InputError as exc:
        field = {"weighting": "--weighting", "person": "--person"}.get(exc.where.field)
        if field is None:
            raise
        raise InputError(exc.reason, Where(field=field)) from None
    if args.plot:
        with writing("--plot"):
            result.plot(args.plot)
    if args.spectrum:
        result.plot_bands(args.spectrum)
    if args.json:
        print_json(result)
    else:
        print(result.table())
        for what, path in (("time history plot", args.plot), ("band spectrum", args.spectrum)):
            if path:
                print(f"{what} written to {path}")
    return 0
