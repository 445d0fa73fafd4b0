"""Up-transition threshold speed of straight motion versus the probe's gap
in the 3D box, with the sound speed, the configured gap and speed.

    python examples/tour/threshold_vs_gap.py [OUTDIR]

Same as: probe threshold examples/box3d_supersonic.toml --plot threshold_vs_gap.png
"""
from _where import output, scenario

from probe.design.solver import threshold_table
from probe.design.plots import plot_threshold


def main(argv=None):
    table = threshold_table(scenario("box3d_supersonic"))
    path = output("threshold_vs_gap.png", argv)
    plot_threshold(table, path)
    print(path)
    return path


if __name__ == "__main__":
    main()
