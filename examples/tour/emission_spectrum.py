"""Wavenumber spectrum of the phonons emitted while the 41K probe of
box3d_supersonic.toml crosses the gas once faster than sound (Gaussian
switching of 10 xi/c), for a probe starting in its ground state and one
starting excited.  The probe-boson scattering length is lowered to 1 nm to
stay well inside first-order perturbation theory.

    python examples/tour/emission_spectrum.py [OUTDIR]
"""
from _where import output, scenario

from probe.config import load_config
from probe.plots import plot_emission_spectrum
from probe.switching import Gaussian
from probe.transit import transit_probabilities
from trajectories import Linear


def main(argv=None):
    sc_ = load_config(scenario("box3d_supersonic"), ["probe.coupling_length=1 nm"])
    cond = sc_.condensate
    speed = sc_.trajectory.stationary_parameters()["speed"]
    res = transit_probabilities(cond, sc_.probe, Linear(speed, (1.0, 0.0, 0.0)),
                                Gaussian(10 / cond.frequency_unit), rtol=1e-3,
                                spectrum=True)
    path = output("emission_spectrum.png", argv)
    plot_emission_spectrum(res, path)
    print(path)
    return path


if __name__ == "__main__":
    main()
