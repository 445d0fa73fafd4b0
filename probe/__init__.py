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

from probe import _aliases
from probe.detectors import (PROBE_MODELS, DensityProbe, TwoLevelProbe,
                                    coupling_from_scattering_length)
from probe.engines.regime import regime_warnings
from probe.engines.results import RateResult
from probe.errors import InputError, ModelError
from probe.gas.condensate import Condensate

_aliases.install()

try:
    __version__ = _version("condensate-probe")
except PackageNotFoundError:  # running from a source tree that is not installed
    __version__ = "0.1.0"

_LAZY = {
    "load_config": "probe.scenarios.config",
    "rates_from_config": "probe.scenarios.config",
    "override": "probe.scenarios.config",
    "unset": "probe.scenarios.config",
    "Scenario": "probe.scenarios.config",
    "species_mass": "probe.scenarios.config",
    "parse_quantity": "probe.scenarios.units",
    "parse_vector": "probe.scenarios.units",
    "ureg": "probe.scenarios.units",
    "stationary_rates": "probe.engines.stationary",
}

__all__ = ["Condensate", "InputError", "ModelError", "DensityProbe",
           "TwoLevelProbe", "PROBE_MODELS", "coupling_from_scattering_length",
           "regime_warnings", "RateResult", "__version__", *_LAZY]


def __getattr__(name):
    if name in _LAZY:
        return getattr(import_module(_LAZY[name]), name)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
