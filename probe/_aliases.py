"""Old module names kept working after the package was arranged by role.

Scripts written against the first release import ``probe.engine``,
``probe.sweep``, ``probe.config`` ...; each old name is served by the module
that now holds its code (the same module object, so ``probe.engine`` *is*
``probe.engines.stationary``).  New code imports the new names.
"""
from __future__ import annotations

import importlib
import importlib.machinery
import sys

#: old name (under ``probe.``) -> module that holds the code now
ALIASES = {
    "engine": "probe.engines.stationary",
    "transit": "probe.engines.transit",
    "amplitudes_fft": "probe.engines.fft_kernel",
    "quadrature": "probe.engines.quadrature",
    "bessel": "probe.engines.bessel",
    "results": "probe.engines.results",
    "regime": "probe.engines.regime",
    "condensate": "probe.gas.condensate",
    "dispersion": "probe.gas.dispersion",
    "probes": "probe.detectors",
    "switching": "probe.detectors.switching",
    "units": "probe.scenarios.units",
    "config": "probe.scenarios.config",
    "transit_config": "probe.scenarios.transit",
    "sweep": "probe.design.sweep",
    "compare": "probe.design.compare",
    "plots": "probe.design.plots",
    "transit_cli": "probe.cli.transit",
    "design_cli": "probe.cli.design",
}


class _AliasLoader:
    # the loader protocol (``importlib.abc.Loader``, not imported: it costs
    # importlib.resources and typing at start-up)
    def __init__(self, target):
        self.target = target

    def create_module(self, spec):
        return importlib.import_module(self.target)

    def exec_module(self, module):
        # the import system stamped the alias's spec on the real module:
        # give it back its own
        module.__spec__ = _REAL_SPECS[self.target]


_REAL_SPECS: dict = {}


class _AliasFinder:
    # the meta path finder protocol (``importlib.abc.MetaPathFinder``)
    def find_spec(self, fullname, path=None, target=None):
        if not fullname.startswith("probe."):
            return None
        name = fullname[len("probe."):]
        if name not in ALIASES:
            return None
        real = importlib.import_module(ALIASES[name])
        _REAL_SPECS.setdefault(ALIASES[name], real.__spec__)
        return importlib.machinery.ModuleSpec(fullname, _AliasLoader(ALIASES[name]))


def install():
    if not any(isinstance(f, _AliasFinder) for f in sys.meta_path):
        sys.meta_path.append(_AliasFinder())
