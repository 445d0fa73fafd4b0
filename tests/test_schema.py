"""The scenario keys: one declaration each, and what is derived from it.

Every key that the README's scenario blocks (its ``toml`` code blocks)
write, even in a comment, is a key of the schema in that section, and every
key of the schema is written in one of those blocks; the tables derived
from the declarations agree with the schema and with what the builders
read.
"""
from __future__ import annotations

import re
from pathlib import Path

import pytest
from conftest import PROBE_SECTIONS

from probe.detectors import PROBE_MODELS, ProbeModel
from probe.errors import InputError
from probe.scenarios.config import scenario_from_dict
from probe.scenarios.path import PATH_KINDS
from probe.scenarios.schema import (KEY_LABELS, KEYS, NUMERIC_KEYS, PARTS, SCHEMA,
                                    VECTOR_KEYS, markdown_tables)
from probe.scenarios.switching import SWITCHINGS
from probe.scenarios.units import KINDS

README = Path(__file__).resolve().parents[1] / "README.md"

_BLOCK = re.compile(r"^```toml\n(.*?)^```", re.M | re.S)
_SECTION = re.compile(r"^\s*#?\s*\[(\w+)\]\s*$")
#: a name assigned a TOML value (a string, number, array, table or boolean)
_ASSIGNMENT = re.compile(r"(?<![\w.])([a-z_][a-z0-9_]*)\s*=\s*(?=[\"'\d\[{+-]|true|false)")
_WORD = re.compile(r"(?<![\w.])[a-z_][a-z0-9_]*(?![\w.])")


def _settings(line):
    """The part of a line of a scenario block that sets keys: the code
    before a comment, or a commented-out setting without its remarks in
    parentheses; strings and inline tables and arrays (whose inner names,
    such as waypoint columns, are not keys) emptied."""
    code, hash_, comment = line.partition("#")
    text = code if code.strip() or not hash_ else comment
    text = re.sub(r'"[^"]*"', '""', text)
    for pattern, value in ((r"\([^()]*\)", ""), (r"\[[^\[\]{}]*\]", "0"),
                           (r"\{[^{}]*\}", "0")):
        while re.search(pattern, text):
            text = re.sub(pattern, value, text)
    return text


def _scenario_lines():
    """(section, line) of every line of the README's scenario blocks."""
    for block in _BLOCK.findall(README.read_text(encoding="utf-8")):
        section = None
        for line in block.splitlines():
            head = _SECTION.match(line)
            if head:
                section = head.group(1)
            else:
                yield section, line


def readme_keys():
    """(section, key) of every setting in the README's scenario blocks,
    commented-out ones included."""
    return {(section, name) for section, line in _scenario_lines()
            for name in _ASSIGNMENT.findall(_settings(line))}


def readme_mentions():
    """(section, word) of every word written in the README's scenario
    blocks, in settings and in comments."""
    return {(section, word) for section, line in _scenario_lines()
            for word in _WORD.findall(line)}


def test_readme_scenario_keys_are_in_the_schema():
    unknown = sorted(f"{s}.{k}" for s, k in readme_keys()
                     if s not in SCHEMA or k not in SCHEMA[s])
    assert not unknown, f"README scenario blocks set keys the schema lacks: {unknown}"


def test_every_schema_key_is_in_the_readme():
    written = readme_mentions()
    missing = [f"{s}.{k}" for s, keys in SCHEMA.items() for k in keys if (s, k) not in written]
    assert not missing, f"schema keys the README's scenario blocks do not mention: {missing}"


def test_readme_parser_finds_commented_and_inline_keys():
    keys = readme_keys()
    assert ("condensate", "transverse_frequency") in keys     # a commented-out setting
    assert ("trajectory", "switching_width") in keys          # after a comma
    assert ("trajectory", "t") not in keys                    # a waypoint column
    assert ("trajectory", "c_s") not in keys                  # prose in a comment
    assert ("trajectory", "normal") in readme_mentions()


def test_schema_is_the_declarations():
    assert list(SCHEMA) == ["condensate", "probe", "trajectory", "numerics", "uncertainty",
                            "readout"]
    for dotted, key in KEYS.items():
        assert SCHEMA[key.section][key.name] == key.example
    declared = {key.dotted for part in PARTS for key in part.keys}
    assert declared == set(KEYS)


def test_every_kind_of_quantity_is_one_the_parser_knows():
    for key in KEYS.values():
        assert key.kind is None or key.kind in KINDS, key.dotted
        if key.vary is not None:
            assert key.kind is not None and not key.vector, key.dotted


def test_numeric_keys_are_the_varied_ones_in_order():
    varied = sorted((k for k in KEYS.values() if k.vary is not None), key=lambda k: k.vary)
    # the declared numeric keys in their order, then the components of the
    # vector keys of lengths (trajectory.start[0..2], trajectory.centre[0..2])
    components = [f"trajectory.{name}[{i}]" for name in ("start", "centre") for i in range(3)]
    assert list(NUMERIC_KEYS) == [k.dotted for k in varied] + components
    ranks = [k.vary for k in varied]
    assert len(set(ranks)) == len(ranks)
    assert NUMERIC_KEYS["probe.gap"] == "frequency"
    assert NUMERIC_KEYS["trajectory.speed"] == "speed"
    assert "trajectory.start" not in NUMERIC_KEYS and "probe.model" not in NUMERIC_KEYS


def test_array_keys_and_labels():
    assert VECTOR_KEYS == {"trajectory.speed": "speed", "trajectory.radius": "radius",
                           "probe.gap": "gap"}
    assert set(KEY_LABELS) <= set(NUMERIC_KEYS)
    # the array keys a model declares for the engines are those of its keys
    for model in PROBE_MODELS.values():
        own = {k.dotted: k.array for k in model.config_keys if k.array}
        assert own == model.array_keys


def test_design_modules_use_the_schema():
    from probe.design import plots, sweep
    assert sweep.NUMERIC_KEYS is NUMERIC_KEYS
    assert sweep.VECTOR_KEYS is VECTOR_KEYS
    assert plots.KEY_LABELS is KEY_LABELS


def test_probe_keys_come_from_the_models():
    names = list(SCHEMA["probe"])
    assert names[0] == "model"
    for model in PROBE_MODELS.values():
        for key in (*model.config_keys, *ProbeModel.common_config_keys):
            assert key.section == "probe" and key.name in names


def test_every_registered_path_kind_and_switching_is_a_choice():
    assert KEYS["trajectory.kind"].choices == tuple(PATH_KINDS)
    assert KEYS["trajectory.switching"].choices == tuple(SWITCHINGS)
    assert KEYS["probe.model"].choices == tuple(PROBE_MODELS)


_BASE = {
    "condensate": {"dimension": 3, "species": "87Rb", "density": "1.2e20 m^-3",
                   "scattering_length": "5.3 nm"},
    "probe": {"gap": "200 Hz", "coupling_length": "1 nm"},
    "trajectory": {"kind": "linear", "speed": "1.5 c_s"},
}


@pytest.mark.parametrize("dotted", [k for k, key in KEYS.items() if key.required is True
                                    and k not in ("trajectory.radius",
                                                  "trajectory.switching_width",
                                                  "trajectory.stop")])
def test_missing_required_key_names_its_example(dotted):
    section, name = dotted.split(".")
    raw = {s: dict(b) for s, b in _BASE.items()}
    owner = [m for m, cls in PROBE_MODELS.items()
             if section == "probe" and name in {k.name for k in cls.config_keys}]
    if owner and "two-level" not in owner:      # a key of another model: use its section
        raw["probe"] = dict(PROBE_SECTIONS[owner[0]])
    raw[section].pop(name, None)
    with pytest.raises(InputError) as err:
        scenario_from_dict(raw)
    assert err.value.key == dotted
    assert str(err.value) == f"{dotted}: missing; add e.g. {name} = {KEYS[dotted].example}"


def test_markdown_tables_list_every_key_once_per_meaning():
    text = markdown_tables()
    for section, keys in SCHEMA.items():
        assert f"`[{section}]`" in text
        for name in keys:
            assert f"| `{name}` |" in text
    # the start point of a linear path and the start time of a window
    assert text.count("| `start` |") == 2
    assert '| `speed` | kind = "linear", kind = "circular" |' in text
