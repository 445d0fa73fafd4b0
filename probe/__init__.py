"""Golden-rule transition rates of a probe moving through a Bose-Einstein
condensate.

Quick start::

    import probe
    result = probe.rates_from_config("scenario.toml")
    print(result.up_rate, result.down_rate)

Every name below is imported on first use (the engines need numpy and scipy,
the configuration layer pint), so that ``import probe`` and the command
line's ``--help`` stay light; ``import probe`` installs the first release's
module names (``probe.engine``, ``probe.sweep`` ...: ``probe._aliases``).
"""
from importlib import import_module

from probe import _aliases
from probe.errors import InputError, ModelError

_aliases.install()

_LAZY = {
    "Condensate": "probe.gas.condensate",
    "DensityProbe": "probe.detectors",
    "TwoLevelProbe": "probe.detectors",
    "PROBE_MODELS": "probe.detectors",
    "coupling_from_scattering_length": "probe.detectors",
    "regime_warnings": "probe.engines.regime",
    "RateResult": "probe.engines.results",
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

#: sub-packages and modules reachable as attributes of ``probe`` before they
#: are imported (``probe.gas.Condensate`` after a bare ``import probe``)
_SUBMODULES = {"cli", "design", "detectors", "engines", "errors", "gas", "quantities",
               "scenarios", *_aliases.ALIASES}

__all__ = ["InputError", "ModelError", "__version__", *_LAZY]


def _package_version():
    from importlib.metadata import PackageNotFoundError, version
    try:
        return version("condensate-probe")
    except PackageNotFoundError:  # running from a source tree that is not installed
        return "0.1.0"


def __getattr__(name):
    if name in _LAZY:
        value = getattr(import_module(_LAZY[name]), name)
    elif name == "__version__":
        value = _package_version()
    elif name in _SUBMODULES:
        return import_module(f"{__name__}.{name}")
    else:
        raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
    globals()[name] = value
    return value


def __dir__():
    return sorted(set(globals()) | set(__all__) | _SUBMODULES)
