"""Fuzzing the scenario reader through the CLI (hypothesis + click's CliRunner).

Random and mutated TOML files and ``--set`` values must never end in a
traceback: either exit status 0 with a result (JSON whose rates are finite
and non-negative) or exit status 2 with one ``error: <key>: <message>`` line
on stderr and nothing on stdout.  Mutations: dropped keys and sections,
unknown keys, swapped units, random strings, NaN and infinities, negative
numbers, extreme magnitudes, wrong types (lists, ints, floats, bools, tables
where strings are expected) and broken TOML syntax.

Derandomized on CI (environment variable CI); PROBE_HYPOTHESIS_SCALE
multiplies the number of examples for a longer local campaign.
"""
import copy
import json
import math
import os
import re

from click.testing import CliRunner
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from probe.cli import cli

CI = bool(os.environ.get("CI"))
SCALE = max(1, int(os.environ.get("PROBE_HYPOTHESIS_SCALE", "1")))


def fuzz(n):
    return settings(max_examples=n * SCALE, deadline=None, derandomize=CI,
                    database=None,
                    suppress_health_check=[HealthCheck.too_slow,
                                           HealthCheck.function_scoped_fixture])


BASES = [
    {"condensate": {"dimension": 3, "species": "87Rb", "density": "1.2e20 m^-3",
                    "scattering_length": "5.3 nm", "temperature": "20 nK"},
     "probe": {"model": "two-level", "gap": "200 Hz", "coupling_length": "1 nm",
               "width": "0.1 um"},
     "trajectory": {"kind": "linear", "speed": "1.5 c_s", "direction": [1, 0, 0]},
     "numerics": {"rtol": 1e-8}},
    {"condensate": {"dimension": 2, "species": "23Na", "density": "1e14 m^-2",
                    "scattering_length": "2.75 nm", "transverse_frequency": "1 kHz"},
     "probe": {"gap": "100 Hz", "coupling": "1e-44 J m^2"},
     "trajectory": {"kind": "circular", "radius": "5 um", "speed": "0.8 c_s",
                    "centre": ["0 um", "0 um"]}},
    {"condensate": {"dimension": 1, "species": "87Rb", "density": "5e7 m^-1",
                    "scattering_length": "5.3 nm", "transverse_frequency": "2 kHz"},
     "probe": {"model": "density", "coupling_length": "1 nm", "species": "133Cs"},
     "trajectory": {"kind": "linear", "speed": "2 mm/s"}},
    {"condensate": {"dimension": 3, "mass": "86.909 u", "density": "1e20 m^-3",
                    "scattering_length": "5.3 nm", "size": "40 um",
                    "dispersion": "phonon"},
     "probe": {"gap": "1 kHz", "coupling_length": "2 nm", "width": "0.3 um"},
     "trajectory": {"kind": "linear", "speed": "0.7 c_s",
                    "start": ["-30 um", "5 um", "0 um"], "direction": [1, 0.2, 0]}},
]

UNITS = ["m", "um", "nm", "a0", "s", "ms", "Hz", "kHz", "rad/s", "1/s", "K", "nK",
         "degC", "delta_degC", "kg", "u", "m^-3", "m^-2", "m^-1", "cm^-3", "J m^3",
         "J m^2", "J m", "eV", "c_s", "c", "m/s", "um/ms", "", "furlong", "xyz",
         "m**2**3", "Hz Hz", "1/0"]
NUMBERS = ["1", "0", "-0", "-5", "2.5e3", "1e300", "1e-300", "1e400", "nan", "inf",
           "-inf", "1e-320", "0x10", "1_000", "9**9**9", "3j", "()", ""]

keys = st.text(alphabet="abcdefghijklmnopqrstuvwxyz_.", min_size=1, max_size=12)
junk = st.text(max_size=30)
weird = st.one_of(
    st.integers(-10**30, 10**30), st.floats(allow_nan=True, allow_infinity=True),
    st.booleans(), st.lists(st.one_of(st.integers(-5, 5), junk), max_size=4),
    st.dictionaries(keys, st.integers(), max_size=2), junk)


def toml_value(v):
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int):
        return str(v)
    if isinstance(v, float):
        if math.isnan(v):
            return "nan"
        if math.isinf(v):
            return "inf" if v > 0 else "-inf"
        return repr(v)
    if isinstance(v, str):
        return json.dumps(v)
    if isinstance(v, list):
        return "[" + ", ".join(toml_value(x) for x in v) + "]"
    if isinstance(v, dict):
        return "{" + ", ".join(f"{json.dumps(k)} = {toml_value(x)}"
                               for k, x in v.items()) + "}"
    raise TypeError(v)


def to_toml(raw):
    lines = []
    for section, body in raw.items():
        if not isinstance(body, dict):
            lines.insert(0, f"{json.dumps(section)} = {toml_value(body)}")
            continue
        lines.append(f"[{json.dumps(section)}]")
        lines += [f"{json.dumps(k)} = {toml_value(v)}" for k, v in body.items()]
    return "\n".join(lines) + "\n"


@st.composite
def mutated(draw):
    raw = copy.deepcopy(draw(st.sampled_from(BASES)))
    for _ in range(draw(st.integers(1, 4))):
        if not raw:
            break
        section = draw(st.sampled_from(sorted(raw)))
        body = raw[section]
        if not isinstance(body, dict) or not body:
            continue
        key = draw(st.sampled_from(sorted(body)))
        value = body[key]
        how = draw(st.sampled_from(["drop", "drop_section", "unknown", "unknown_section",
                                    "unit", "number", "string", "weird", "negative",
                                    "type"]))
        if how == "drop":
            del body[key]
        elif how == "drop_section":
            del raw[section]
        elif how == "unknown":
            body[draw(keys)] = draw(weird)
        elif how == "unknown_section":
            raw[draw(keys)] = {draw(keys): draw(weird)}
        elif how == "unit" and isinstance(value, str):
            number = value.split()[0] if value.split() else "1"
            body[key] = f"{number} {draw(st.sampled_from(UNITS))}".strip()
        elif how == "number" and isinstance(value, str):
            unit = " ".join(value.split()[1:])
            body[key] = f"{draw(st.sampled_from(NUMBERS))} {unit}".strip()
        elif how == "string":
            body[key] = draw(junk)
        elif how == "weird":
            body[key] = draw(weird)
        elif how == "negative":
            body[key] = ("-" + value) if isinstance(value, str) else -1
        elif how == "type":
            body[key] = draw(st.sampled_from([[value], 3, 2.5, True, {"a": 1},
                                              [1, 2, 3], -7]))
    return raw


def check(result):
    """Exit 0 with a clean result, or exit 2 with one error line; never a
    traceback."""
    assert result.exception is None or isinstance(result.exception, SystemExit), \
        repr(result.exception)
    assert result.exit_code in (0, 2), (result.exit_code, result.output)
    assert "Traceback" not in result.stdout and "Traceback" not in result.stderr
    if result.exit_code == 0:
        data = json.loads(result.stdout)
        for obj in data if isinstance(data, list) else [data]:
            for name in ("up_rate", "down_rate", "emission_rate", "drag_force",
                         "up_rate_error", "down_rate_error"):
                v = obj.get(name)
                if v is not None:
                    assert isinstance(v, float) and math.isfinite(v) and v >= 0, (name, v)
    else:
        assert result.stdout == ""
        lines = result.stderr.strip().splitlines()
        assert len(lines) == 1 and lines[0].startswith("error: "), result.stderr


def run(tmp_path, text, *args):
    path = tmp_path / "fuzz.toml"
    path.write_text(text, encoding="utf-8", errors="surrogatepass")
    return CliRunner().invoke(cli, ["rates", "--json", str(path), *args])


def test_the_bases_are_valid(tmp_path):
    for raw in BASES:
        r = run(tmp_path, to_toml(raw))
        assert r.exit_code == 0, r.stderr


@fuzz(150)
@given(raw=mutated())
def test_mutated_configs_never_give_a_traceback(tmp_path, raw):
    check(run(tmp_path, to_toml(raw)))


@fuzz(60)
@given(base=st.sampled_from(BASES), edits=st.lists(
    st.tuples(st.integers(0, 10**6), st.sampled_from(["delete", "insert", "dup"]),
              st.sampled_from(list("[]{}=\"',#.\n") + ["\\", "\\u", "'''", "\x00", "é"])),
    min_size=1, max_size=5))
def test_broken_toml_syntax_never_gives_a_traceback(tmp_path, base, edits):
    text = to_toml(base)
    for pos, how, ch in edits:
        i = pos % (len(text) + 1)
        if how == "delete" and text:
            text = text[:max(0, i - 1)] + text[i:]
        elif how == "insert":
            text = text[:i] + ch + text[i:]
        else:
            lines = text.splitlines(keepends=True)
            if lines:
                j = pos % len(lines)
                lines.insert(j, lines[j])
                text = "".join(lines)
    check(run(tmp_path, text))


@fuzz(60)
@given(base=st.sampled_from(BASES),
       sets=st.lists(st.tuples(st.sampled_from(
           ["condensate.density", "condensate.dimension", "probe.gap", "probe.width",
            "trajectory.speed", "trajectory.kind", "trajectory.radius",
            "condensate.temperature", "numerics.rtol", "condensate.size",
            "trajectory.direction", "probe.model", "condensate.specis", "nope.key",
            "trajectory", ".", "condensate."]),
           st.one_of(junk, st.sampled_from(NUMBERS).map(lambda n: f"{n} c_s"),
                     st.sampled_from(["[1, 2]", "true", "3", "nan", "inf", "{a = 1}",
                                      '"87Rb"', "[", "\"", "1e999 K"]))),
           min_size=1, max_size=3))
def test_set_values_never_give_a_traceback(tmp_path, base, sets):
    args = []
    for key, value in sets:
        args += ["--set", f"{key}={value}"]
    check(run(tmp_path, to_toml(base), *args))


@fuzz(30)
@given(text=st.text(max_size=200))
def test_random_text_files_never_give_a_traceback(tmp_path, text):
    check(run(tmp_path, text))


def test_binary_and_empty_files(tmp_path):
    for data in (b"", b"\xff\xfe\x00\x01", b"[condensate]\ndimension = 3\n" * 1000,
                 ("a = " + "[" * 5000 + "]" * 5000 + "\n").encode()):
        path = tmp_path / "bin.toml"
        path.write_bytes(data)
        check(CliRunner().invoke(cli, ["rates", "--json", str(path)]))


def test_error_lines_name_a_key(tmp_path):
    # every exit-2 line has the form 'error: <key>: <message>' (key without spaces)
    raw = copy.deepcopy(BASES[0])
    raw["trajectory"]["speed"] = "fast"
    r = run(tmp_path, to_toml(raw))
    assert r.exit_code == 2
    assert re.match(r"^error: [^\s:]+: ", r.stderr)
