"""Physical constants (``probe.constants``) and the cached lookups that keep
heavy libraries out of a command's start-up (``probe.cache``).

The reference for every constant is ``scipy.constants`` itself (CODATA, the
edition of the installed scipy): the project's values must be the same
floats, whether read from scipy or from the cache.  zeta(3/2) is checked
against mpmath at 30 digits and against scipy.special.zeta; the isotope
masses against ``periodictable`` (the AME tables it ships).
"""
from __future__ import annotations

import math
import os
import pickle
import subprocess
import sys
from pathlib import Path

import mpmath
import periodictable
import pytest
from scipy import constants as scipy_constants
from scipy.special import zeta

from probe import cache, constants
from probe.errors import InputError
from probe.gas.condensate import _ZETA_3_2, Condensate
from probe.scenarios import values

ROOT = Path(__file__).resolve().parents[1]

_SHOW = ("import json, sys; from probe import constants as c; "
         "print(json.dumps({'values': {n: getattr(c, n) for n in c.NAMES}, "
         "'table': c.physical_constants, 'scipy': 'scipy.constants' in sys.modules}))")


def _fresh(cache_folder, code=_SHOW):
    """What ``code`` prints in a fresh process with ``cache_folder``."""
    env = dict(os.environ, PYTHONPATH=str(ROOT), PROBE_CACHE_DIR=str(cache_folder))
    done = subprocess.run([sys.executable, "-c", code], cwd=ROOT, env=env,
                          capture_output=True, text=True, check=True, timeout=120)
    import json
    return json.loads(done.stdout)


def _scipy_values():
    return {name: float(getattr(scipy_constants, name)) for name in constants.NAMES}


def test_every_constant_is_scipys_codata_value():
    for name in constants.NAMES:
        assert getattr(constants, name) == getattr(scipy_constants, name), name
    for name in constants.TABLE_NAMES:
        assert constants.physical_constants[name] == tuple(
            scipy_constants.physical_constants[name]), name


def test_constants_are_read_from_the_cache_without_importing_scipy(tmp_path):
    first = _fresh(tmp_path)
    assert first["scipy"]                       # a cold cache: filled from scipy
    second = _fresh(tmp_path)
    assert not second["scipy"]                  # a warm cache: scipy not imported
    assert first["values"] == second["values"] == _scipy_values()
    table = {k: list(v) for k, v in constants.physical_constants.items()}
    assert second["table"] == table


@pytest.mark.parametrize("damage", ["truncated", "other key", "missing name"])
def test_a_damaged_or_stale_cache_is_rebuilt_from_scipy(tmp_path, damage):
    _fresh(tmp_path)
    (path,) = tmp_path.glob("constants-*.pickle")
    key, content = pickle.loads(path.read_bytes())
    if damage == "truncated":
        path.write_bytes(path.read_bytes()[:20])
    elif damage == "other key":          # e.g. another scipy installed since
        content["values"]["hbar"] = 1.0
        path.write_bytes(pickle.dumps((key + "-another-scipy", content)))
    else:
        del content["values"]["hbar"]
        path.write_bytes(pickle.dumps((key, content)))
    again = _fresh(tmp_path)
    assert again["scipy"] and again["values"] == _scipy_values()
    assert not _fresh(tmp_path)["scipy"]        # and written back


def test_no_cache_folder_reads_scipy(tmp_path):
    env = dict(os.environ, PYTHONPATH=str(ROOT), PROBE_CACHE_DIR="")
    import json
    done = subprocess.run([sys.executable, "-c", _SHOW], cwd=ROOT, env=env,
                          capture_output=True, text=True, check=True, timeout=120)
    found = json.loads(done.stdout)
    assert found["scipy"] and found["values"] == _scipy_values()


def test_zeta_three_halves():
    """zeta(3/2), the critical phase-space density of the ideal Bose gas
    (Pitaevskii & Stringari, *Bose-Einstein Condensation and Superfluidity*,
    eq. 3.27): mpmath at 30 digits and scipy.special.zeta."""
    with mpmath.workdps(30):
        reference = float(mpmath.zeta(mpmath.mpf(3) / 2))
    assert _ZETA_3_2 == reference == zeta(1.5)


def test_critical_temperature_gives_the_critical_phase_space_density():
    """At T_c of the ideal 3D gas, n lambda_T^3 = zeta(3/2) with
    lambda_T = sqrt(2 pi hbar^2 / (m k_B T)) (Pitaevskii & Stringari eq. 3.27)."""
    m = 86.909180531 * scipy_constants.atomic_mass     # 87Rb (AME2016, from memory)
    gas = Condensate(density=1e20, scattering_length=5.3e-9, mass=m, dimension=3)
    tc = gas.critical_temperature
    lam = math.sqrt(2 * math.pi * scipy_constants.hbar ** 2 / (m * scipy_constants.k * tc))
    assert 1e20 * lam ** 3 == pytest.approx(float(zeta(1.5)), rel=1e-13)


# -- isotope masses ------------------------------------------------------------

@pytest.mark.parametrize("species,symbol,a", [("87Rb", "Rb", 87), ("Na-23", "Na", 23),
                                              ("k39", "K", 39), ("7Li", "Li", 7)])
def test_isotope_mass_is_periodictables(species, symbol, a):
    expected = periodictable.elements.symbol(symbol)[a].mass * scipy_constants.atomic_mass
    assert values.species_mass(species) == expected


def test_isotope_masses_are_read_back_without_periodictable(tmp_path):
    code = ("import json, sys; from probe.scenarios.values import species_mass; "
            "print(json.dumps({'mass': species_mass('87Rb'), "
            "'loaded': 'periodictable' in sys.modules}))")
    first = _fresh(tmp_path, code)
    second = _fresh(tmp_path, code)
    assert first["loaded"] and not second["loaded"]
    assert first["mass"] == second["mass"] == values.species_mass("87Rb")


@pytest.mark.parametrize("species,message", [
    ("87Xx", "unknown element symbol 'Xx'"),
    ("300Rb", "Rb has no isotope with mass number 300"),
    ("Rubidium", "is not an isotope")])
def test_isotope_refusals_are_not_cached(tmp_path, monkeypatch, species, message):
    monkeypatch.setenv(cache.CACHE_ENV, str(tmp_path))
    memo = cache.Memo("isotopes-test", lambda: "k")
    monkeypatch.setattr(values, "_ISOTOPE_MASSES", memo)
    for _ in range(2):
        with pytest.raises(InputError, match=message):
            values.species_mass(species)
    assert not list(tmp_path.glob("isotopes-test*"))


def test_memo_of_another_key_is_not_read(tmp_path, monkeypatch):
    monkeypatch.setenv(cache.CACHE_ENV, str(tmp_path))
    cache.Memo("m", lambda: "old").put("x", 1.0)
    assert cache.Memo("m", lambda: "old").get("x") == 1.0
    assert cache.Memo("m", lambda: "new").get("x") is None
    assert cache.Memo("m", lambda: None).get("x") is None   # no key: nothing kept


@pytest.mark.parametrize("written", ["87Rb", "Rb87", "rb-87", "87RB", " 87 rb "])
def test_isotope_is_shown_as_mass_number_and_symbol(written):
    assert values.species_name(written) == "87Rb"
    assert values.species_mass(written) == values.species_mass("87Rb")


def test_stale_files_of_other_keys_are_pruned(tmp_path):
    """Files of the same kind under another key unwritten for STALE_DAYS are
    removed when a new one is written; recent ones (another installation in
    use) and other kinds stay."""
    import os
    import time
    old = time.time() - 86400 * (cache.STALE_DAYS + 1)
    names = {"strings-1-py311-aaa.pickle": old, "strings-1-py311-bbb.pickle": time.time(),
             "units-1-pint0-py311-ccc.pickle": old}
    for name, when in names.items():
        (tmp_path / name).write_bytes(b"x")
        os.utime(tmp_path / name, (when, when))
    path = tmp_path / "strings-1-py311-new.pickle"
    cache.write_cache(path, "k", {})
    cache.prune_stale(path, "strings-1-")
    left = sorted(p.name for p in tmp_path.iterdir())
    assert left == ["strings-1-py311-bbb.pickle", "strings-1-py311-new.pickle",
                    "units-1-pint0-py311-ccc.pickle"]


def test_cache_folder_expands_the_home_folder(monkeypatch, tmp_path):
    monkeypatch.setenv("HOME", str(tmp_path))
    monkeypatch.setenv(cache.CACHE_ENV, "~/probe-cache")
    assert cache.cache_dir() == tmp_path / "probe-cache"
    monkeypatch.setenv(cache.CACHE_ENV, "")
    assert cache.cache_dir() is None
