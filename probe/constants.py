"""Physical constants: the CODATA values of ``scipy.constants``, and nothing else.

Every module of the project takes its constants from here
(``from probe import constants as sc``; ``sc.hbar``, ``sc.k`` ...), and every
value here is the one ``scipy.constants`` holds (CODATA, the edition of the
installed scipy): ``tests/test_constants.py`` checks each against it.

Importing ``scipy.constants`` costs about a fifth of a second (it loads
scipy's array-API layer, and with it numpy's testing and f2py modules),
more than a whole ``probe rates`` of a small scenario.  So the values are
read from ``scipy.constants`` once and kept in the user's cache folder
(``probe.cache``), under a key made of the names below and of the size and
modification time of the installed scipy's CODATA table: installing another
scipy makes a new file.  When scipy is imported already, or the cache is off
or cannot be read, the values come from ``scipy.constants`` directly.
"""
from __future__ import annotations

import os
import sys

from probe.cache import cache_dir, installed_stamp, read_cache, write_cache

#: the attributes of ``scipy.constants`` the project uses
NAMES = ("c", "h", "hbar", "e", "k", "N_A", "G", "Rydberg", "atomic_mass", "m_e",
         "m_p", "m_n", "alpha", "mu_0", "epsilon_0")
#: the entries of ``scipy.constants.physical_constants`` the project uses
TABLE_NAMES = ("Bohr radius", "Rydberg constant times hc in J", "Hartree energy",
               "Bohr magneton")
#: raised when what the cache holds changes shape
_CACHE_FORMAT = 1


def _from_scipy():
    """The values, read from ``scipy.constants`` (imports it)."""
    from scipy import constants
    values = {name: float(getattr(constants, name)) for name in NAMES}
    table = {name: tuple(constants.physical_constants[name]) for name in TABLE_NAMES}
    return {"values": values, "table": table}


def _key():
    """The cache key: the names asked for and the installed CODATA table's
    size and modification time (found without importing scipy); None when
    scipy's files cannot be found."""
    stamp = installed_stamp("scipy", os.path.join("constants", "_codata.py"))
    if stamp is None:
        return None
    return f"constants-{_CACHE_FORMAT}-{stamp}-" + ",".join(NAMES + TABLE_NAMES)


def _load():
    """The values: from scipy when it is imported already, else from the
    cache (filled from scipy when missing or of another key)."""
    if "scipy.constants" in sys.modules:
        return _from_scipy()
    folder = cache_dir()
    key = _key() if folder is not None else None
    if key is None:
        return _from_scipy()
    path = folder / f"constants-{_CACHE_FORMAT}.pickle"
    stored = read_cache(path, key, dict)
    if stored is not None and set(stored.get("values", ())) == set(NAMES) \
            and set(stored.get("table", ())) == set(TABLE_NAMES):
        return stored
    fresh = _from_scipy()
    write_cache(path, key, fresh)
    return fresh


_LOADED = _load()
globals().update(_LOADED["values"])
#: ``physical_constants[name] == (value, unit, uncertainty)`` as in scipy, for ``TABLE_NAMES``
physical_constants = dict(_LOADED["table"])
del _LOADED
