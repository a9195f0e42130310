"""Mutations of assembly files and of command-line options, for robustness testing.

Used by tests/test_property_inputs.py (hypothesis draws the random source) and by
benchmarks/fuzz.py (thousands of cases in worker processes). Every function takes a
``random.Random`` and returns a new text or argument list; none needs the project.

Text mutations: a number set to an extreme (1e308, 1e-320, 400 digits, ``${10**400}``,
``5 km^999``), a line deleted or duplicated (missing and duplicate keys), a string
garbled (control characters, ANSI escapes, quotes, brackets, non-UTF-8-looking text),
a value nested deeply, anchors and aliases (recursive, undefined, bombs), merge keys,
indentation broken.
"""

from __future__ import annotations

import random
import re

__all__ = ["mutate_text", "TEXT_MUTATIONS", "EXTREME_VALUES", "odd_value"]

#: Values a number in a file (or an option) is replaced by.
EXTREME_VALUES = [
    "0", "-0", "-1", "1e308", "-1e308", "1e-308", "1e-320", "5e-324", "1e999", ".inf", ".nan",
    "1" + "0" * 400, "9" * 5000, "0x7fffffffffffffff", "1:30", "1_000", "~", "null", "yes",
    '"${10**400}"', '"${(x - x)**-1}"', '"${0**-1}"', '"${2**1e400}"', '"${(-2)**0.5}"',
    '"5 km^999"', '"5 m^-99999999999"', '"1e-300 kg"', '"1e300 N/m"', '"12 furlongs"',
    '"${' + "(" * 300 + "1" + ")" * 300 + '}"', '"${' + "-" * 500 + '1}"',
    '"${' + "sqrt(" * 200 + "1" + ")" * 200 + '}"', '"${nope}"', '"${1/0}"', '"${pi}"',
    "[]", "{}", "[1, 2]", '"\\e[31mred"', '"a\\nb"', '"' + "x" * 10_000 + '"',
]

_NUMBER = re.compile(r"(?<![\w.$])-?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?(?![\w.])")
_GARBAGE = ["\x1b[31m", "\x1b[2J", "\n", "\r", "\t", "\x00", "\x07", "\u202e", "\ufeff", "'",
            '"', "{", "}", "[", "]", ":", "- ", "#", "&a", "*a", "!!python/object:os.system ",
            "<<: ", "é", "µ", "𝔵", "\\", "%", "@", "`", "|", ">", "?", ","]


def _lines(text: str) -> list[str]:
    return text.split("\n")


def number_to_extreme(text: str, rng: random.Random) -> str:
    spots = list(_NUMBER.finditer(text))
    if not spots:
        return text
    m = rng.choice(spots)
    return text[:m.start()] + rng.choice(EXTREME_VALUES) + text[m.end():]


def scale_number(text: str, rng: random.Random) -> str:
    """A number times a factor a typing or unit slip could give (valid, but odd, models)."""
    spots = list(_NUMBER.finditer(text))
    if not spots:
        return text
    m = rng.choice(spots)
    factor = rng.choice([0.0, -1.0, 1e-9, 1e-6, 1e-3, 0.1, 0.5, 2.0, 10.0, 1e3, 1e6, 1e9])
    return text[:m.start()] + f"{float(m.group()) * factor:.6g}" + text[m.end():]


def delete_line(text: str, rng: random.Random) -> str:
    lines = _lines(text)
    del lines[rng.randrange(len(lines))]
    return "\n".join(lines)


def duplicate_line(text: str, rng: random.Random) -> str:
    lines = _lines(text)
    i = rng.randrange(len(lines))
    lines.insert(i, lines[i])
    return "\n".join(lines)


def garble_string(text: str, rng: random.Random) -> str:
    i = rng.randrange(max(len(text), 1))
    cut = rng.randrange(0, 8)
    noise = "".join(rng.choice(_GARBAGE) for _ in range(rng.randrange(1, 4)))
    return text[:i] + noise + text[i + cut:]


def nest_value(text: str, rng: random.Random) -> str:
    lines = _lines(text)
    candidates = [i for i, line in enumerate(lines) if re.match(r"^\s+\w+: \S", line)]
    if not candidates:
        return text
    i = rng.choice(candidates)
    key, value = lines[i].split(": ", 1)
    depth = rng.choice([2, 10, 39, 41, 100, 600])
    lines[i] = f"{key}: {'[' * depth}{value}{']' * depth}"
    return "\n".join(lines)


def add_alias(text: str, rng: random.Random) -> str:
    lines = _lines(text)
    keys = [i for i, line in enumerate(lines) if re.match(r"^\s*\w+:\s*$", line)]
    values = [i for i, line in enumerate(lines) if re.match(r"^\s+\w+: \S", line)]
    kind = rng.choice(["recursive", "copy", "undefined", "merge", "bomb"])
    if kind == "bomb":
        bomb = ['lol0: &l0 ["x","x","x","x","x","x","x","x","x","x"]']
        bomb += [f"lol{i}: &l{i} [{', '.join([f'*l{i - 1}'] * 10)}]" for i in range(1, 9)]
        return "\n".join(bomb) + "\n" + text
    if not keys or not values:
        return text
    k = rng.choice(keys)
    lines[k] = lines[k].rstrip() + " &a"
    v = rng.choice(values)
    key, _ = lines[v].split(": ", 1)
    if kind == "undefined":
        lines[v] = f"{key}: *nowhere"
    elif kind == "merge":
        lines[v] = f"{key}: {{<<: *a}}"
    else:   # an alias before (undefined), inside (recursive) or after (a copy) its anchor
        lines[v] = f"{key}: *a"
    return "\n".join(lines)


def shift_indent(text: str, rng: random.Random) -> str:
    lines = _lines(text)
    i = rng.randrange(len(lines))
    lines[i] = rng.choice(["", " ", "   ", "\t"]) + lines[i].lstrip(" ") if rng.random() < 0.5 \
        else "  " + lines[i]
    return "\n".join(lines)


def swap_lines(text: str, rng: random.Random) -> str:
    lines = _lines(text)
    i, j = rng.randrange(len(lines)), rng.randrange(len(lines))
    lines[i], lines[j] = lines[j], lines[i]
    return "\n".join(lines)


TEXT_MUTATIONS = [number_to_extreme, scale_number, delete_line, duplicate_line, garble_string, nest_value,
                  add_alias, shift_indent, swap_lines]


def mutate_text(text: str, rng: random.Random, count: int | None = None) -> str:
    """``text`` after 1 or 2 random mutations (changes of numbers weigh twice)."""
    ops = TEXT_MUTATIONS + [number_to_extreme, scale_number]
    for _ in range(count or rng.randint(1, 2)):
        text = rng.choice(ops)(text, rng)
    return text


def odd_value(rng: random.Random, good: list[str], paths: dict[str, str]) -> str:
    """An option value: a good one, an extreme, garbage, or an awkward output path."""
    pick = rng.random()
    if pick < 0.35 and good:
        return rng.choice(good)
    if pick < 0.6:
        return rng.choice(EXTREME_VALUES).strip('"')
    if pick < 0.8 and paths:
        return rng.choice(list(paths.values()))
    return "".join(rng.choice(_GARBAGE + list("abc019.-_/ ")) for _ in range(rng.randint(1, 12)))
