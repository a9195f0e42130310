"""Options and steps shared by the commands."""

from __future__ import annotations

import argparse
import json
import math
import sys
from typing import Any

import numpy as np

from ..assembly import Assembly
from ..errors import InputError, Where
from ..linear import LinearModel, assemble
from ..load import load_assembly
from ..reduce import reduce_keep, reduce_to_depth

__all__ = ["add_model_options", "load_model", "print_json", "to_jsonable", "add_file_option"]


def add_file_option(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("file", metavar="FILE", help="assembly file (YAML, format 1)")


def add_model_options(parser: argparse.ArgumentParser) -> None:
    """FILE, and the depth to analyse: ``--depth NAME`` or ``--keep a,b,...``."""
    add_file_option(parser)
    group = parser.add_mutually_exclusive_group()
    group.add_argument("--depth", metavar="NAME", help="analyse a depth of the file's ladder")
    group.add_argument("--keep", metavar="LIST",
                       help="analyse an ad hoc depth: DOFs or patterns, comma-separated")


def load_model(args: argparse.Namespace) -> tuple[Assembly, LinearModel]:
    """Load the file, assemble it, and reduce it to the chosen depth."""
    assembly = load_assembly(args.file)
    model = assemble(assembly)
    depth = getattr(args, "depth", None)
    keep = getattr(args, "keep", None)
    if depth:
        if depth not in assembly.depths:
            known = ", ".join(assembly.depths) or "none in this file"
            raise InputError(f'unknown depth "{depth}" (depths: {known})', Where(field="--depth"))
        model = reduce_to_depth(model, assembly.depths[depth])
    elif keep:
        model = reduce_keep(model, [k.strip() for k in keep.split(",") if k.strip()])
    return assembly, model


def to_jsonable(obj: Any) -> Any:
    """Numbers, arrays and result objects as plain JSON values (NaN/inf as null)."""
    if hasattr(obj, "to_dict"):
        return to_jsonable(obj.to_dict())
    if isinstance(obj, dict):
        return {str(k): to_jsonable(v) for k, v in obj.items()}
    if isinstance(obj, list | tuple):
        return [to_jsonable(v) for v in obj]
    if isinstance(obj, np.ndarray):
        return to_jsonable(obj.tolist())
    if isinstance(obj, np.generic):
        return to_jsonable(obj.item())
    if isinstance(obj, float):
        return obj if math.isfinite(obj) else None
    if isinstance(obj, complex):
        return {"re": to_jsonable(obj.real), "im": to_jsonable(obj.imag)}
    return obj


def print_json(obj: Any) -> None:
    """Print one JSON object on stdout."""
    json.dump(to_jsonable(obj), sys.stdout, indent=1)
    sys.stdout.write("\n")
