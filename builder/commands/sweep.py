"""``lumpgraph sweep FILE --vary NAME=LOW..HIGH:COUNT ... [options]``.

Sweeps the file's ``parameters:`` over a grid (several ``--vary``), a Latin
hypercube (``--lhs N``) or Monte Carlo scatter (``--scatter``, ``--samples``,
``--seed``), and reports tracked natural frequencies (``--result modes``,
the default), ride figures of sensors (``--result ride:SENSOR`` with
``--road`` and ``--speed``) or a number from a plugin's own analysis
(``--result plugin:NAME:PATH``, PATH dotted through its JSON result).
``--csv`` writes the table as it goes (``--resume`` continues an interrupted
one), ``--plot`` draws tracked frequencies against the last varied parameter
(or histograms for random designs). ``--workers N`` uses local processes, ``--cluster tcp://HOST:PORT``
a Dask scheduler. Two other uses of the same options:

- ``--sensitivity``: the ranked table of df/dp of every mode with respect to
  the ``--vary`` parameters (all file parameters when none is given);
- ``--target MODE=FREQ`` (repeatable, e.g. ``--target 1=1.2Hz``) or
  ``--minimise ride:SENSOR``: parameter values within the ``--vary`` ranges
  (COUNT not needed) that meet the targets, and the values achieved.
"""

from __future__ import annotations

import argparse
import re
import sys
from typing import Any

from ..errors import InputError, Where
from ..io import writing
from ..options import argtype, whole
from ._common import add_model_options, print_json

HELP = "sweeps, scatter, sensitivities and targets over file parameters"

_UNITS = {"stiffness": "N/m", "mass": "kg", "length": "m", "damping": "N s/m",
          "inertia": "kg m^2", "rotational_stiffness": "N m/rad",
          "rotational_damping": "N m s/rad", "force": "N", "speed": "m/s", "time": "s",
          "frequency": "Hz", "pressure": "Pa", "area": "m^2", "flexural_rigidity": "N m^2",
          "density": "kg/m^3", "dimensionless": "-"}


def configure(parser: argparse.ArgumentParser) -> None:
    add_model_options(parser)
    parser.add_argument("--vary", action="append", default=[], metavar="NAME=LOW..HIGH:COUNT",
                        help="sweep a file parameter, e.g. ks_front=15kN/m..30kN/m:16 "
                        "(repeatable: full grid)")
    parser.add_argument("--lhs", type=argtype(whole, "--lhs", 1, ceiling_key="sweep --lhs"),
                        default=None, metavar="N",
                        help="a Latin hypercube of N variants over the --vary ranges")
    parser.add_argument("--scatter", action="append", default=[], metavar="NAME=DIST",
                        help="Monte Carlo scatter: NAME=normal:MEAN,SD (SD may be 5%%) or "
                        "NAME=uniform:LOW,HIGH (repeatable)")
    parser.add_argument("--samples", default=None, metavar="N",
                        type=argtype(whole, "--samples", 1, ceiling_key="sweep --samples"),
                        help="number of Monte Carlo samples")
    parser.add_argument("--seed", type=argtype(whole, "--seed", 0, 2**32 - 1), default=0,
                        metavar="S",
                        help="seed of every random draw (default 0)")
    parser.add_argument("--result", action="append", default=None, metavar="WHAT",
                        help="modes (default), ride:SENSOR, or plugin:NAME:PATH (a number in "
                        "the plugin's JSON result, e.g. plugin:seat:seats.0.ride.x) "
                        "(repeatable)")
    parser.add_argument("--modes", type=argtype(whole, "--modes", 1, 10_000), default=None,
                        metavar="N",
                        help="number of tracked modes to report (default all, at most 12)")
    parser.add_argument("--road", default=None, metavar="CLASS",
                        help="ISO 8608 road class for ride results")
    parser.add_argument("--speed", default=None, metavar="V",
                        help='speed for ride results, e.g. "80 km/h"')
    parser.add_argument("--csv", default=None, metavar="OUT.csv",
                        help="write the table: a header row, then one row per variant")
    parser.add_argument("--resume", action="store_true",
                        help="keep the rows already in --csv and solve only the rest")
    parser.add_argument("--plot", default=None, metavar="OUT.png",
                        help="tracked frequencies against a parameter, or histograms")
    parser.add_argument("--plot-against", default=None, metavar="NAME",
                        help="parameter on the plot's x axis (default the last --vary)")
    parser.add_argument("--json", action="store_true", help="print the result as JSON")
    where = parser.add_mutually_exclusive_group()
    where.add_argument("--workers", type=argtype(whole, "--workers", 1, 256), default=None,
                       metavar="N",
                       help="run on N local processes")
    where.add_argument("--cluster", default=None, metavar="ADDRESS",
                       help="run on a Dask scheduler, e.g. tcp://10.0.0.5:8786")
    parser.add_argument("--chunk", type=argtype(whole, "--chunk", 1, 1_000_000), default=None,
                        metavar="N",
                        help="variants per task (default 500)")
    parser.add_argument("--no-progress", action="store_true", help="no progress bar")
    parser.add_argument("--sensitivity", action="store_true",
                        help="print the ranked frequency sensitivities instead of sweeping")
    parser.add_argument("--target", action="append", default=[], metavar="MODE=FREQ",
                        help="find --vary values that put mode MODE at FREQ (e.g. 1=1.2Hz)")
    parser.add_argument("--minimise", "--minimize", default=None, metavar="ride:SENSOR",
                        help="find --vary values that minimise a sensor's ride RMS")


def _unit(dim: tuple[int, int, int]) -> str:
    from ..quantities import DIMENSIONS
    for name, (d, _noun) in DIMENSIONS.items():
        if d == dim and name in _UNITS:
            return _UNITS[name]
    return "SI"


def _keep(args: argparse.Namespace) -> tuple[str, ...]:
    return tuple(k.strip() for k in (args.keep or "").split(",") if k.strip())


def _split_results(results: list[str], option: str) -> tuple[list[str], list[tuple[str, str]]]:
    """``ride:SENSOR`` and ``plugin:USE:PATH`` entries, apart."""
    ride, plugin = [], []
    for r in results:
        kind, _, rest = r.partition(":")
        use, _, path = rest.partition(":")
        if kind.strip() == "ride" and rest.strip():
            ride.append(rest.strip())
        elif kind.strip() == "plugin" and use.strip() and path.strip():
            plugin.append((use.strip(), path.strip()))
        else:
            raise InputError(f'expected "modes", "ride:SENSOR" or "plugin:NAME:PATH", got "{r}"',
                             Where(field=option))
    return ride, plugin


def _ride_sensors(results: list[str], option: str) -> list[str]:
    ride, plugin = _split_results(results, option)
    if plugin:
        raise InputError("expected ride:SENSOR", Where(field=option))
    return ride


def _speed(args: argparse.Namespace) -> tuple[str, float]:
    from ..analysis import road
    from ..quantities import to_si
    if args.road is None or args.speed is None:
        raise InputError("ride results need --road CLASS and --speed V", Where(field="--road"))
    road.class_value(args.road)
    return args.road.strip().upper(), road.check_speed(to_si(args.speed, "speed",
                                                             Where(field="--speed"),
                                                             sign="positive"))


def _check_count(args: argparse.Namespace, option: str, value: int | None) -> None:
    if value is not None and value < 1:
        raise InputError(f"must be at least 1, got {value}", Where(field=option))


def run(args: argparse.Namespace) -> int:
    from ..analysis import sampling
    from ..analysis import sweep as sw
    from ..io import output_path

    for opt in ("workers", "chunk", "modes"):
        _check_count(args, f"--{opt}", getattr(args, opt))
    if args.csv:
        output_path(args.csv, (".csv",), "--csv")
    if args.plot:
        output_path(args.plot, (".png",), "--plot")
    if args.cluster is not None and not re.fullmatch(r"(?:[a-z]+://)?[^\s:/]+:\d+",
                                                     args.cluster.strip()):
        raise InputError(f'expected a scheduler address such as tcp://10.0.0.5:8786, got '
                         f'"{args.cluster}"', Where(field="--cluster"))
    if args.resume and not args.csv:
        raise InputError("--resume continues the file given by --csv", Where(field="--resume"))
    keep = _keep(args)
    params = sw.file_parameters(args.file)

    if args.sensitivity:
        names = [sampling.parse_vary(v, need_count=False).name for v in args.vary] or None
        sens = sw.file_sensitivities(args.file, names, args.depth, keep)
        if args.json:
            print_json(sens)
        else:
            print(sens.table(modes=range(1, min(len(sens.frequencies_hz), args.modes or 12) + 1)))
        return 0

    if args.target or args.minimise:
        return _targets(args, params, keep)

    specs = [sampling.parse_vary(v, need_count=args.lhs is None) for v in args.vary]
    scatter = [sampling.parse_scatter(s) for s in args.scatter]
    names = [s.name for s in specs] + [s.name for s in scatter]
    sw._check_names(params, names, [s.dim for s in specs] + [s.dim for s in scatter])
    design = sampling.build_design(specs, scatter, args.lhs, args.samples, args.seed,
                                   base={n: params[n].value for n in names})
    if args.plot_against and args.plot_against not in design.names:
        raise InputError(f'"{args.plot_against}" is not a swept parameter',
                         Where(field="--plot-against"))
    units = tuple(_unit(params[n].dim) for n in design.names)
    results = args.result or ["modes"]
    if "modes" in results:
        if len(results) > 1:
            raise InputError("sweep either modes or ride results, not both in one run",
                             Where(field="--result"))
        spans = [s.high - s.low for s in specs] + [
            6 * s.b if s.kind == "normal" else s.b - s.a for s in scatter]
        family = sw.file_family(args.file, design.names, design.nominal, spans, args.depth,
                                keep)
        n = family.matrices(design.nominal[None, :])[0].shape[-1]
        problem: Any = sw.ModesProblem(family, min(args.modes or min(n, 12), n))
        path = "batched (matrices reused)" if isinstance(family, sw.AffineFamily) else \
            "each variant rebuilt from the file"
    else:
        sensors, figures = _split_results(results, "--result")
        if sensors and figures:
            raise InputError("sweep ride or plugin results, not both in one run",
                             Where(field="--result"))
        fm = sw.FileModel(args.file, tuple((k, q.dim) for k, q in params.items()), args.depth,
                          keep)
        if sensors:
            road_class, speed = _speed(args)
            func: Any = sw.FileRide(fm, tuple(sensors), road_class, speed)
        else:
            func = sw.FilePlugin(fm, tuple(figures))
            func(dict(zip(design.names, design.nominal, strict=True)))   # check paths first
        problem = sw.FunctionProblem(design.names, func, func.columns())
        path = "each variant rebuilt from the file"
    progress = not args.no_progress and sys.stderr.isatty() and len(design) > 1
    try:
        result = sw.run_sweep(problem, design, workers=args.workers, cluster=args.cluster,
                              chunk_size=args.chunk or sw.DEFAULT_CHUNK, csv_path=args.csv,
                              resume=args.resume, progress=progress, units=units)
    except KeyboardInterrupt:
        if args.csv:
            print(f"lumpgraph: interrupted; the finished variants are in {args.csv}, "
                  "--resume continues", file=sys.stderr)
        raise
    if isinstance(problem, sw.ModesProblem):
        result = _with_labels(result, design, args, params, keep)
    if args.plot:
        with writing("--plot"):
            result.plot(args.plot, args.plot_against)
    if args.json:
        print_json(result)
        return 0
    print(f"{len(design)} variants ({design.kind}) of {args.file}: {path}")
    if result.labels:
        start = "the first variant" if design.kind == "grid" else "the nominal design"
        print(f"tracked modes (by MAC), named as in {start}:")
        for col, label in zip(result.columns, result.labels, strict=False):
            print(f"  {col}: {label}")
    _print_table(result)
    if args.csv:
        print(f"table written to {args.csv}")
    if args.plot:
        print(f"plot written to {args.plot}")
    return 0


def _with_labels(result: Any, design: Any, args: argparse.Namespace, params: dict,
                 keep: tuple[str, ...]) -> Any:
    """The result with each curve named by the mode it starts as (the first
    variant of a grid, else the nominal design)."""
    import dataclasses

    from ..analysis import sampling
    from ..analysis import sweep as sw
    from ..analysis.modes import compute_modes
    row = design.values[0] if design.reference[0] == sampling.REF_NONE else design.nominal
    fm = sw.FileModel(args.file, tuple((k, q.dim) for k, q in params.items()), args.depth, keep)
    modes = compute_modes(fm.model(dict(zip(design.names, map(float, row), strict=True))))
    labels = tuple(m.label for m in modes.modes[:len(result.columns)])
    return dataclasses.replace(result, labels=labels)


def _print_table(result: Any) -> None:
    print(result.table())


def _targets(args: argparse.Namespace, params: dict, keep: tuple[str, ...]) -> int:
    from ..analysis import sampling
    from ..analysis import sweep as sw
    from ..quantities import to_si
    if not args.vary:
        raise InputError("give the parameters to adjust and their bounds with "
                         "--vary NAME=LOW..HIGH", Where(field="--target"))
    specs = [sampling.parse_vary(v, need_count=False) for v in args.vary]
    names = [s.name for s in specs]
    sw._check_names(params, names, [s.dim for s in specs])
    bounds = {s.name: (min(s.low, s.high), max(s.low, s.high)) for s in specs}
    nominal = [params[n].value for n in names]
    family = sw.file_family(args.file, names, nominal, [b - a for a, b in bounds.values()],
                            args.depth, keep)
    if args.target and args.minimise:
        raise InputError("give --target or --minimise, not both", Where(field="--minimise"))
    if args.target:
        targets: dict[int, float] = {}
        for t in args.target:
            mode, eq, freq = t.partition("=")
            if not eq or not mode.strip().isdigit():
                raise InputError(f'expected MODE=FREQ (e.g. 1=1.2Hz), got "{t}"',
                                 Where(field="--target"))
            targets[int(mode)] = to_si(freq.strip(), "frequency", Where(field="--target"),
                                       sign="positive")
        res = sw.find_parameters(family, bounds, targets=targets)
    else:
        [sensor] = _ride_sensors([args.minimise], "--minimise")
        road_class, speed = _speed(args)
        fm = sw.FileModel(args.file, tuple((k, q.dim) for k, q in params.items()), args.depth,
                          keep)
        ride = sw.FileRide(fm, (sensor,), road_class, speed)
        col = ride.columns()[-1]

        def objective(p: dict) -> float:
            return ride(p)[col]
        res = sw.find_parameters(family, bounds, objective=objective)
    if args.json:
        print_json(res)
    else:
        import dataclasses

        from ..formatting import unit_of_dimension
        print(dataclasses.replace(res, units={n: unit_of_dimension(params[n].dim)
                                              for n in res.names}).text())
    return 0
