"""Wavenumber spectrum of the phonons emitted while the 41K probe of
cross3d_gaussian.toml crosses the gas once faster than sound (Gaussian
switching of 2 ms), for a probe starting in its ground state and one
starting excited.

    python examples/tour/emission_spectrum.py [OUTDIR]

The same numbers: probe transit examples/cross3d_gaussian.toml --spectrum ...;
the spectrum beside the directions: probe transit examples/cross3d_gaussian.toml --plot FILE.png
"""
from _where import output, scenario

from probe.scenarios.config import load_config
from probe.design.transit_plots import plot_emission_spectrum


def main(argv=None):
    sc_ = load_config(scenario("cross3d_gaussian"))
    res = sc_.transit(spectrum=True)
    path = output("emission_spectrum.png", argv)
    plot_emission_spectrum(res, path, scenario=sc_)
    print(path)
    return path


if __name__ == "__main__":
    main()
