"""The gas: a uniform condensate (``Condensate``: g_d, mu, c, xi, T_c in SI)
and its excitation spectra (``DISPERSIONS``: Bogoliubov, phonon), in the
gas's own units (q = k xi, frequencies in c/xi)."""
from probe.gas.condensate import Condensate
from probe.gas.dispersion import DISPERSIONS, Bogoliubov, Dispersion, Phonon

__all__ = ["Condensate", "DISPERSIONS", "Bogoliubov", "Dispersion", "Phonon"]
