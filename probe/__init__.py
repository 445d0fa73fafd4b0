"""Golden-rule transition rates of a probe moving through a Bose-Einstein
condensate.

Quick start::

    import probe
    result = probe.rates_from_config("scenario.toml")
    print(result.up_rate, result.down_rate)

The configuration layer (``load_config``, ``rates_from_config``,
``parse_quantity``) needs pint and is imported on first use, so that
``import probe`` stays light for code that only uses the physics objects.
"""
from importlib import import_module
from importlib.metadata import PackageNotFoundError, version as _version

from .condensate import Condensate
from .errors import InputError, ModelError
from .probes import (DensityProbe, PROBE_MODELS, TwoLevelProbe,
                     coupling_from_scattering_length)
from .regime import regime_warnings
from .results import RateResult

try:
    __version__ = _version("condensate-probe")
except PackageNotFoundError:  # running from a source tree that is not installed
    __version__ = "0.1.0"

_LAZY = {
    "load_config": "config",
    "rates_from_config": "config",
    "override": "config",
    "unset": "config",
    "Scenario": "config",
    "species_mass": "config",
    "parse_quantity": "units",
    "parse_vector": "units",
    "ureg": "units",
    "stationary_rates": "engine",
}

__all__ = ["Condensate", "InputError", "ModelError", "DensityProbe",
           "TwoLevelProbe", "PROBE_MODELS", "coupling_from_scattering_length",
           "regime_warnings", "RateResult", "__version__", *_LAZY]


def __getattr__(name):
    if name in _LAZY:
        return getattr(import_module(f".{_LAZY[name]}", __name__), name)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
