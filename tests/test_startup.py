"""Start-up of the command line: what ``probe --help`` and ``probe rates``
import, the static table of commands, old module names, and the cache of the
unit registry.

Nothing here is timed (``tests/bench_startup.py`` measures the times); the
tests check the imports that make start-up slow, in fresh processes
(``sys.modules`` after the command), so that a module-level import of a
heavy library cannot come back unnoticed.
"""
from __future__ import annotations

import inspect
import json
import os
import pickle
import re
import subprocess
import sys
import threading
from pathlib import Path

import pytest
from click.testing import CliRunner
from scipy import constants as sc

from probe.cli.app import COMMANDS, LazyGroup, cli
from probe.scenarios import units

ROOT = Path(__file__).resolve().parents[1]
EXAMPLE = "examples/box3d_supersonic.toml"

#: what ``probe --help`` must not import: plotting, quadrature, the cluster
#: scheduler, the unit library and its registry, the commands' own modules
HELP_FORBIDDEN = ("matplotlib", "scipy.integrate", "dask", "pint", "numpy", "scipy",
                  *sorted({module for module, _ in COMMANDS.values()}))

#: what ``probe rates`` of a straight path must not import
RATES_FORBIDDEN = ("matplotlib", "scipy.integrate", "scipy.optimize", "scipy.interpolate",
                   "dask", "probe.design.sweep", "probe.design.solver", "probe.design.plots",
                   "probe.engines.transit")

_RUN = """
import json, sys
from probe.cli import main
try:
    main(sys.argv[1:])
except SystemExit:
    pass
units = sys.modules.get("probe.scenarios.units")
sys.stderr.write("\\nMODULES " + json.dumps({
    "modules": sorted(sys.modules),
    "registry": units is not None and units._REGISTRY is not None}) + "\\n")
"""


def _modules_after(*args, cache=None):
    """(modules imported, unit registry built) by ``probe ARGS`` in a fresh process."""
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    if cache is not None:
        env[units.CACHE_ENV] = str(cache)
    done = subprocess.run([sys.executable, "-c", _RUN, *args], cwd=ROOT, env=env,
                          capture_output=True, text=True, timeout=120)
    line = [ln for ln in done.stderr.splitlines() if ln.startswith("MODULES ")][-1]
    found = json.loads(line[len("MODULES "):])
    return set(found["modules"]), found["registry"], done.stdout


def _imported(modules, names):
    return sorted(m for m in modules for name in names
                  if m == name or m.startswith(name + "."))


def test_help_imports_no_heavy_library(tmp_path):
    modules, registry, out = _modules_after("--help", cache=tmp_path)
    assert all(name in out for name in COMMANDS)
    assert not _imported(modules, HELP_FORBIDDEN)
    assert not registry


def test_rates_of_a_straight_path_import_no_plotting_solver_or_scheduler(tmp_path):
    modules, registry, out = _modules_after("rates", EXAMPLE, "--json", cache=tmp_path)
    assert json.loads(out)["up_rate"] > 0          # the command ran
    assert registry                                # a cold cache: pint read the strings
    assert not _imported(modules, RATES_FORBIDDEN)
    warm, registry, again = _modules_after("rates", EXAMPLE, "--json", cache=tmp_path)
    assert again == out
    # a warm cache: neither pint, nor scipy (the constants: probe.constants),
    # nor periodictable (the isotope's mass: probe.scenarios.values)
    assert not registry
    assert not _imported(warm, ("pint", "scipy", "periodictable") + RATES_FORBIDDEN)


def test_import_probe_is_light():
    code = ("import sys, probe; "
            "print(sorted(m for m in sys.modules if m.split('.')[0] in "
            "('numpy', 'scipy', 'pint', 'click')))")
    out = subprocess.run([sys.executable, "-c", code], cwd=ROOT, capture_output=True,
                         text=True, check=True, env=dict(os.environ, PYTHONPATH=str(ROOT)))
    assert out.stdout.strip() == "[]"


# -- the static table of commands -------------------------------------------

def _first_paragraph(command):
    return " ".join(inspect.cleandoc(command.help).split("\n\n")[0].split())


def test_command_table_matches_the_commands():
    """Every command of ``COMMANDS`` is defined by the module it names, with
    the help the table gives; no module defines a command the table lacks."""
    for module, _ in COMMANDS.values():
        __import__(module)
    assert set(cli.commands) == set(COMMANDS)
    for name, (module, text) in COMMANDS.items():
        command = cli.commands[name]
        assert command.callback.__module__ == module, name
        assert _first_paragraph(command) == text, name


def test_help_lists_what_the_loaded_commands_would_print():
    """``probe --help`` from the table (a group with no command imported)
    equals the help click prints from the commands themselves."""
    import click
    for module, _ in COMMANDS.values():
        __import__(module)
    settings = {"help_option_names": ["-h", "--help"]}
    plain = click.Group(name="cli", commands=dict(cli.commands), help=cli.help,
                        params=cli.params, context_settings=settings)
    lazy = LazyGroup(name="cli", help=cli.help, params=cli.params, context_settings=settings)
    assert not lazy.commands
    expected = CliRunner().invoke(plain, ["--help"], prog_name="probe").output
    assert "Commands:" in expected
    assert CliRunner().invoke(lazy, ["--help"], prog_name="probe").output == expected
    assert not lazy.commands                   # listing imported nothing


def test_unknown_command_is_refused():
    result = CliRunner().invoke(cli, ["ratse"])
    assert result.exit_code == 2 and "ratse" in result.output


# -- old module names and the names the README uses --------------------------

def test_old_module_names_are_the_new_modules():
    """Each old name (``probe.engine`` ...) is the module that holds the code
    now, with that module's own spec, in a fresh process."""
    from probe import _aliases
    code = "\n".join(["import importlib"] + [
        f"import probe.{old} as a; b = importlib.import_module('{new}'); "
        f"assert a is b and a.__spec__.name == '{new}', '{old}'"
        for old, new in _aliases.ALIASES.items()])
    subprocess.run([sys.executable, "-c", code], cwd=ROOT, check=True,
                   env=dict(os.environ, PYTHONPATH=str(ROOT)))


def _readme_imports():
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    blocks = re.findall(r"```python\n(.*?)```", text, flags=re.S)
    return [line.strip() for block in blocks for line in block.splitlines()
            if re.match(r"\s*(from \S+ import |import )", line)]


def test_readme_python_names_import():
    """The import lines of the README's Python blocks and the dotted names of
    its section on Python use resolve (in a fresh process: lazily)."""
    lines = _readme_imports()
    assert any("probe" in line for line in lines)
    names = ["probe.units.parse_quantity", "probe.engine.stationary_rates",
             "trajectories.Linear", "trajectories.Circular", "trajectories.Spline",
             "trajectories.Piecewise", "probe.rates_from_config", "probe.Condensate",
             "probe.TwoLevelProbe", "probe.engine.inertial_rates", "probe.engine.circular_rates"]
    code = "\n".join(lines + ["import importlib, probe, trajectories"] + [
        f"assert getattr(importlib.import_module('{n.rsplit('.', 1)[0]}'), "
        f"'{n.rsplit('.', 1)[1]}') is not None" for n in names])
    subprocess.run([sys.executable, "-c", code], cwd=ROOT, check=True,
                   env=dict(os.environ, PYTHONPATH=str(ROOT)))


def test_package_names_are_listed_and_reachable():
    import probe
    for name in probe.__all__:
        assert getattr(probe, name) is not None, name
    assert probe.gas.condensate.Condensate is probe.Condensate


# -- the unit registry's cache ------------------------------------------------

def _roots(reg):
    """{unit name: (factor to its root units, root units), or the error that
    reading the name raises} of every multiplicative unit."""
    out = {}
    for name in sorted(reg._units):
        if not reg._units[name].is_multiplicative:
            continue
        try:
            factor, root = reg.get_root_units(name)
            out[name] = (factor, str(root))
        except Exception as exc:  # noqa: BLE001 - names pint cannot read back
            out[name] = type(exc).__name__
    return out


def test_cached_registry_equals_the_registry_built_from_the_files(tmp_path, monkeypatch):
    """A registry filled from the cache converts every unit as one built
    from pint's definitions file (independent route: the file parsed again),
    and the CODATA constants are scipy's."""
    monkeypatch.setenv(units.CACHE_ENV, str(tmp_path))
    units.build_registry()                       # writes the cache
    assert len(list(tmp_path.glob("*.pickle"))) == 1
    cached = units.build_registry()              # reads it
    fresh = units.build_registry(cache=False)
    assert _roots(cached) == _roots(fresh)
    assert sum(isinstance(v, tuple) for v in _roots(fresh).values()) > 500
    bohr = sc.physical_constants["Bohr radius"][0]
    assert cached.Quantity(1, "a0").to("m").magnitude == bohr       # CODATA via scipy
    assert cached.Quantity(1, "hbar").to("J s").magnitude == sc.hbar
    assert cached.parse_expression("2 c_s").dimensionality == fresh.c_s.dimensionality


def _cache_file(folder):
    (path,) = folder.glob("*.pickle")
    return path


@pytest.mark.parametrize("damage", ["truncated", "garbage", "other key", "empty"])
def test_damaged_cache_is_rebuilt(tmp_path, monkeypatch, damage):
    monkeypatch.setenv(units.CACHE_ENV, str(tmp_path))
    units.build_registry()
    path = _cache_file(tmp_path)
    good = path.read_bytes()
    path.write_bytes({"truncated": good[: len(good) // 2],     # a writer stopped half-way
                      "garbage": b"\x00not a pickle",
                      "other key": pickle.dumps(("units-0-other", [])),
                      "empty": b""}[damage])
    reg = units.build_registry()
    assert reg.Quantity(1, "mile").to("m").magnitude == pytest.approx(1609.344, rel=1e-15)
    assert pickle.loads(path.read_bytes())[0] == units.cache_key(units._pint())


def test_concurrent_builders_leave_one_readable_cache(tmp_path, monkeypatch):
    """Writers replace the file atomically: builders racing on an empty cache
    all get full registries and leave a cache that reads back."""
    monkeypatch.setenv(units.CACHE_ENV, str(tmp_path))
    found, errors = [], []

    def build():
        try:
            found.append(units.build_registry().Quantity(1, "inch").to("m").magnitude)
        except Exception as exc:  # noqa: BLE001 - reported below
            errors.append(exc)

    threads = [threading.Thread(target=build) for _ in range(4)]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    assert not errors and found == [0.0254] * 4
    assert [p.name for p in tmp_path.iterdir()] == [_cache_file(tmp_path).name]   # no leftovers
    key, definitions = pickle.loads(_cache_file(tmp_path).read_bytes())
    assert key == units.cache_key(units._pint()) and len(definitions) > 400


def test_empty_cache_setting_writes_nothing(tmp_path, monkeypatch):
    monkeypatch.setenv(units.CACHE_ENV, "")
    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path))
    assert units.cache_dir() is None
    assert units.build_registry().Quantity(1, "kHz").to("Hz").magnitude == 1000
    assert not list(tmp_path.iterdir())


def test_unwritable_cache_folder_still_builds(tmp_path, monkeypatch):
    blocker = tmp_path / "file"
    blocker.write_text("not a folder")
    monkeypatch.setenv(units.CACHE_ENV, str(blocker / "cache"))
    assert units.build_registry().Quantity(1, "um").to("m").magnitude == 1e-6


# -- strings read by earlier runs ---------------------------------------------

STRINGS = [("1.2e20 m^-3", "density", 3), ("5e7 1/m", "density", 1), ("5 um", "length", None),
           ("3 a0", "length", None), ("86.909 u", "mass", None), ("50 nK", "temperature", None),
           ("2 ms", "time", None), ("200 Hz", "frequency", None), ("1257 rad/s", "frequency", None),
           ("1e-30 J", "frequency", None), ("160 Hz", "angular_frequency", None),
           ("1000 rad/s", "angular_frequency", None), ("1e-50 J m^3", "coupling", 3),
           ("2 mm/s", "speed", None), ("1e-8", "dimensionless", None), ("10**3 um", "length", None)]

_READ = """
import json, sys
from probe.scenarios.units import parse_quantity
out = [parse_quantity(t, "k", kind, dimension=d) for t, kind, d in json.loads(sys.argv[1])]
out.append(parse_quantity("1.5 c_s", "k", "speed", sound_speed=float(sys.argv[2])))
print(json.dumps({"values": [v.hex() for v in out], "pint": "pint" in sys.modules}))
"""


def _read_strings(cache, sound_speed):
    env = dict(os.environ, PYTHONPATH=str(ROOT), **{units.CACHE_ENV: str(cache)})
    done = subprocess.run([sys.executable, "-c", _READ, json.dumps(STRINGS), str(sound_speed)],
                          cwd=ROOT, env=env, capture_output=True, text=True, check=True)
    return json.loads(done.stdout)


def test_strings_read_again_give_the_same_bits_without_pint(tmp_path):
    """A second run reads every string from the file the first wrote, without
    importing pint, to the same bits as pint reads them with no cache at all
    (the independent route); a speed in c_s keeps its number of sound speeds."""
    first = _read_strings(tmp_path, 2e-3)
    second = _read_strings(tmp_path, 3e-3)
    plain = _read_strings("", 3e-3)
    assert first["pint"] and not second["pint"] and plain["pint"]
    assert second["values"] == plain["values"]
    assert first["values"][:-1] == plain["values"][:-1]
    assert float.fromhex(second["values"][-1]) == 1.5 * 3e-3


def test_remembered_strings_keep_their_refusals(tmp_path, monkeypatch):
    """A speed in c_s without a known sound speed, and strings that cannot be
    read, are refused however often they are read."""
    from probe.errors import InputError
    monkeypatch.setattr(units, "_MEMO", {})
    monkeypatch.setattr(units, "_MEMO_NEW", {})
    assert units.parse_quantity("2 c_s", "k", "speed", sound_speed=1e-3) == 2e-3
    for _ in range(2):
        with pytest.raises(InputError, match="sound speed c_s"):
            units.parse_quantity("2 c_s", "k", "speed")
        with pytest.raises(InputError, match="units of"):
            units.parse_quantity("5 um", "k", "time")
        with pytest.raises(InputError):
            units.parse_quantity("5 blorbs/s", "k", "speed")
    assert list(units._MEMO_NEW) == [("2 c_s", "speed", None)]


def test_strings_file_is_named_by_this_code_and_pint():
    key = units.memo_key()
    assert key.startswith("strings-") and key == units.memo_key()


def test_strings_file_keeps_the_newest_strings(tmp_path, monkeypatch):
    """Beyond the limit the oldest strings leave the file, so that a full
    file still takes the strings of new scenarios."""
    path = tmp_path / "strings.pickle"
    monkeypatch.setattr(units, "MEMO_LIMIT", 3)
    units._write_cache(path, "k", {("1 m", "length", None): 1.0, ("2 m", "length", None): 2.0,
                                   ("3 m", "length", None): 3.0})
    monkeypatch.setattr(units, "_MEMO_NEW", {("4 m", "length", None): 4.0,
                                             ("1 m", "length", None): 1.0})
    units._save_memo(path, "k")
    assert list(units._read_cache(path, "k", dict).values()) == [3.0, 4.0, 1.0]
