"""``lumpgraph export FILE [--depth NAME] --to OUT``: the model for other tools.

``OUT.npz``, ``OUT.mat`` or ``OUT.mtx`` write the matrices (``M``, ``C``,
``K``, ``H``, input and output maps, names); ``--form state-space`` with
``.npz`` or ``.mat`` the state space ``A, B, C, D`` that python-control and
scipy.signal load as they are; ``OUT.csv`` the modal model (frequencies,
damping, shapes at the body sensors). See :mod:`builder.export`.
"""

from __future__ import annotations

import argparse

from ..errors import InputError, Where
from ._common import add_model_options

HELP = "write the model's matrices, state space or modes for other tools"


def configure(parser: argparse.ArgumentParser) -> None:
    add_model_options(parser)
    parser.add_argument("--to", required=True, metavar="OUT",
                        help="output file: .npz, .mat or .mtx (matrices; .mtx writes one file "
                        "per matrix and a .json of names), .csv (modal model)")
    parser.add_argument("--form", default=None, metavar="FORM",
                        help="matrices (default), state-space (.npz or .mat) or modal (.csv, "
                        "the default for .csv)")
    parser.add_argument("--modes", default=None, metavar="N",
                        help="modal form: how many modes (default all of a small model)")


def _count(text: str | None) -> int | None:
    if text is None:
        return None
    try:
        value = int(text)
    except ValueError:
        raise InputError(f'must be a whole number, got "{text}"', Where(field="--modes")) from None
    if value < 1:
        raise InputError(f"must be at least 1, got {value}", Where(field="--modes"))
    return value


def run(args: argparse.Namespace) -> int:
    from ..export import check_form, output_files, write_export
    from ..io import output_path

    form = check_form(args.to, args.form, Where(field="--form" if args.form else "--to"))
    count = _count(args.modes)
    if count is not None and form != "modal":
        raise InputError("is for the modal form (an OUT.csv)", Where(field="--modes"))
    for path in output_files(args.to, form):
        output_path(path, (path[path.rfind("."):],), "--to")
    from ._common import load_model

    _, model = load_model(args)
    modes = None
    if form == "modal":
        from ..analysis.modes import compute_modes

        modes = compute_modes(model, count)
    from ..io import writing
    with writing("--to"):
        files = write_export(model, args.to, form, modes)
    what = {"matrices": "matrices", "state-space": "state space", "modal": "modal model"}[form]
    print(f"{model.name}: {what} of {model.n} DOFs, {len(model.inputs)} inputs, "
          f"{len(model.sensors)} sensors written to {', '.join(files)}")
    return 0
