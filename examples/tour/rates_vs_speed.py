"""Up and down rates of the 41K probe in the 3D 87Rb box versus its speed,
with the sound speed and the up-transition threshold marked.

    python examples/tour/rates_vs_speed.py [OUTDIR]

Same as: probe sweep examples/box3d_supersonic.toml
           --vary trajectory.speed=0.5c_s:3c_s:101 --out rates.csv --plot rates_vs_speed.png
"""
from _where import output, scenario

from probe.design.plots import plot_sweep
from probe.design.sweep import sweep


def main(argv=None):
    res = sweep(scenario("box3d_supersonic"),
                vary=[("trajectory.speed", "0.5 c_s", "3 c_s", 101)])
    path = output("rates_vs_speed.png", argv)
    plot_sweep(res, path)
    print(path)
    return path


if __name__ == "__main__":
    main()
