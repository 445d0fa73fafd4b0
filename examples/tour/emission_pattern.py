"""Directions of the phonons emitted by the structureless probe of
drag3d_density.toml during a finite supersonic transit, on the Mach cone.

The scenario is made a transit with a Gaussian switching of 12 xi/c, the
probe moves at 2 c_s and is given a width of 4 healing lengths, so that it
emits long-wavelength phonons, for which the cone is cos(theta) = c_s/v.
The direction histogram uses 120 bins in cos(theta).

    python examples/tour/emission_pattern.py [OUTDIR]
"""
from _where import output, scenario

from probe.scenarios.config import load_config
from probe.design.transit_plots import plot_emission_pattern
from probe.engines.transit import transit_probabilities


def main(argv=None):
    gas = load_config(scenario("drag3d_density")).condensate
    xi, tick = gas.healing_length, 1 / gas.frequency_unit       # m, s
    sc_ = load_config(scenario("drag3d_density"),
                      [f"probe.width={4 * xi!r} m", "trajectory.speed=2 c_s",
                       'trajectory.switching="gaussian"',
                       f"trajectory.switching_width={12 * tick!r} s"])
    res = transit_probabilities(sc_.condensate, sc_.probe, sc_.trajectory, sc_.switching,
                                rtol=sc_.transit_rtol, spectrum=True, spectrum_bins=120)
    path = output("emission_pattern.png", argv)
    plot_emission_pattern(res, path, speed=sc_.trajectory.stationary_parameters()["speed"],
                          scenario=sc_)
    print(path)
    return path


if __name__ == "__main__":
    main()
