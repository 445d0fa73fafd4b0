"""Directions of the phonons emitted by the structureless probe of
drag3d_density.toml during a finite supersonic transit (Gaussian switching
of 12 xi/c), on the Mach cone.  The probe is given a width of 4 healing
lengths so that it emits long-wavelength phonons, for which the cone is
cos(theta) = c_s/v.

    python examples/tour/emission_pattern.py [OUTDIR]
"""
from _where import output, scenario

from probe.config import load_config
from probe.plots import plot_emission_pattern
from probe.switching import Gaussian
from probe.transit import transit_probabilities
from trajectories import Linear


def main(argv=None):
    base = load_config(scenario("drag3d_density"))
    xi = base.condensate.healing_length
    sc_ = load_config(scenario("drag3d_density"),
                      [f"probe.width={4 * xi!r} m", "trajectory.speed=2 c_s"])
    cond = sc_.condensate
    speed = sc_.trajectory.stationary_parameters()["speed"]
    res = transit_probabilities(cond, sc_.probe, Linear(speed, (1.0, 0.0, 0.0)),
                                Gaussian(12 / cond.frequency_unit), rtol=1e-3,
                                spectrum=True, spectrum_bins=120)
    path = output("emission_pattern.png", argv)
    plot_emission_pattern(res, path, speed=speed)
    print(path)
    return path


if __name__ == "__main__":
    main()
