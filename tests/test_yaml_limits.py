"""Safe YAML (builder/yamlnodes.py): limits on nesting and alias expansion, places of
bad bytes and characters, inert messages. Each case ends with exit status 2 and one line."""

import pytest

from builder.errors import InputError
from builder.yamlnodes import MAX_ALIAS_NODES, MAX_DEPTH, parse_yaml

BODY = "format: 1\nmotion: bounce\nbodies:\n  b: {mass: 1, cg: [0, 0, 0]}\n"


def _one_line(run_cli, path):
    code, out, err = run_cli("check", path)
    lines = err.strip().splitlines()
    assert code == 2 and out == "" and len(lines) == 1, err
    assert "Traceback" not in err
    return lines[0]


def test_nesting_beyond_the_limit_is_refused_with_its_place():
    # PyYAML's recursive composer raised RecursionError at about 330 levels.
    text = BODY + "extra: " + "[" * 500 + "]" * 500 + "\n"
    with pytest.raises(InputError) as err:
        parse_yaml(text, "f.yaml")
    assert str(err.value).startswith("f.yaml:5: extra[0][0]")
    assert f"more than {MAX_DEPTH} levels deep" in str(err.value)


def test_nesting_within_the_limit_is_read():
    text = "a: " + "[" * (MAX_DEPTH - 1) + "1" + "]" * (MAX_DEPTH - 1) + "\n"
    node = parse_yaml(text, "f.yaml")
    depth, v = 0, node["a"]
    while v.is_list:
        depth, v = depth + 1, v.value[0]
    assert depth == MAX_DEPTH - 1 and v.value == 1


def test_aliases_nested_through_anchors_count_as_nesting():
    lines = ["a0: &a0 [1]"] + [f"a{i}: &a{i} [*a{i - 1}]" for i in range(1, 60)]
    with pytest.raises(InputError, match="levels deep"):
        parse_yaml("\n".join(lines) + "\n", "f.yaml")


@pytest.mark.parametrize("text, line, field", [
    ("format: 1\nbodies: &r [*r]\n", 2, "bodies"),
    ("format: 1\nbodies: &m\n  b: {<<: *m, mass: 1}\n", 3, "bodies.b"),
    ("format: 1\nlinks: &M\n  a: {x: [1, *M]}\n", 3, "links.a.x"),
])
def test_recursive_aliases(text, line, field, write_yaml, run_cli):
    path = write_yaml(text)
    msg = _one_line(run_cli, path)
    assert msg.startswith(f"{path}:{line}: {field}: ") and "recursive alias" in msg, msg


def test_alias_bomb_is_refused_quickly():
    lines = ['a: &a ["x","x","x","x","x","x","x","x","x","x"]']
    for i in range(1, 9):
        prev, cur = chr(ord("a") + i - 1), chr(ord("a") + i)
        lines.append(f"{cur}: &{cur} [{', '.join(['*' + prev] * 10)}]")
    with pytest.raises(InputError, match=f"more than {MAX_ALIAS_NODES} values"):
        parse_yaml("\n".join(lines) + "\n", "f.yaml")


def test_many_values_without_aliases_are_not_an_alias_bomb():
    # 20,000 bodies (260,000 values, more than the alias limit) and no alias: a large file
    # (once refused as an "alias expansion bomb").
    body = "  b{i}: {{mass: 10, cg: [{i}, 0, 0.5], dofs: [z], shape: {{box: [1, 1, 1]}}}}\n"
    text = "format: 1\nbodies:\n" + "".join(body.format(i=i) for i in range(20_000))
    node = parse_yaml(text, "big.yaml")
    assert len(node["bodies"].value) == 20_000


def test_aliases_and_merge_keys_keep_working_with_their_places():
    text = ("format: 1\nmotion: bounce\n"
            "wheel: &w {mass: 36 kg, cg: [0, 0.7, 0.3]}\n"          # line 3
            "bodies:\n  fl: *w\n  fr: {<<: *w, mass: -1 kg}\n")
    node = parse_yaml(text, "f.yaml")
    fl, fr = node["bodies"]["fl"], node["bodies"]["fr"]
    assert fl["mass"].value == "36 kg" and fl["mass"].where.field == "bodies.fl.mass"
    assert fl["mass"].line == 3                      # the value is written on line 3
    assert fr["cg"].where.field == "bodies.fr.cg" and fr["mass"].line == 6
    assert fl.where.line == 5


def test_alias_to_an_unknown_anchor():
    with pytest.raises(InputError, match=r"unknown alias \*nope"):
        parse_yaml("a: *nope\n", "f.yaml")


def test_bad_utf8_gives_line_and_column(tmp_path, run_cli):
    path = tmp_path / "latin1.yaml"
    path.write_bytes(b"format: 1\nname: caf\xe9 car\n")
    msg = _one_line(run_cli, path)
    assert msg.startswith(f"{path}:2: not UTF-8 text: byte 0xe9 at column 10"), msg


def test_bad_character_gives_line_and_column(write_yaml, run_cli):
    path = write_yaml("format: 1\nname: bell\x07car\n")
    msg = _one_line(run_cli, path)
    assert msg.startswith(f'{path}:2: not valid YAML: the character "\\x07" at column 11'), msg


def test_syntax_error_gives_line_and_column(write_yaml, run_cli):
    path = write_yaml("format: 1\nbodies: [1, 2\n")
    msg = _one_line(run_cli, path)
    assert msg.startswith(f"{path}:3: not valid YAML") and "column" in msg, msg


def test_escapes_and_newlines_in_names_are_shown_escaped(write_yaml, run_cli):
    # a double-quoted YAML string can hold ESC and a newline; neither reaches the terminal raw
    path = write_yaml(BODY.replace("  b: {", '  "b\\e[31m\\nx": {'))
    msg = _one_line(run_cli, path)
    assert "\x1b" not in msg and "\\x1b[31m\\nx" in msg, msg


def test_name_with_control_characters_is_refused(write_yaml, run_cli):
    path = write_yaml(BODY.replace("motion:", 'name: "car\\e[2J"\nmotion:'))
    msg = _one_line(run_cli, path)
    assert msg.startswith(f"{path}:2: name: must be a name without control characters")
    assert "\\x1b[2J" in msg


def test_long_values_are_cut(write_yaml, run_cli):
    # a 5 MB value was echoed whole on one stderr line
    path = write_yaml(BODY.replace("mass: 1,", f"mass: \"{'x' * 100_000} kg\","))
    msg = _one_line(run_cli, path)
    assert len(msg) < 300 + len(str(path)) and '..."' in msg, msg[:400]


def test_long_unknown_key_is_cut(write_yaml, run_cli):
    path = write_yaml(BODY + "? " + "z" * 50_000 + "\n: 1\n")   # an explicit (long) key
    msg = _one_line(run_cli, path)
    assert len(msg) < 300 + len(str(path)) and "unknown key" in msg
