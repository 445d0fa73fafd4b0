"""Map of the up rate of a probe stirred on a circle in the quasi-2D 23Na
gas, over speed and radius (log-spaced), with labelled contours and the
sound speed marked.

    python examples/tour/speed_radius_map.py [OUTDIR]

Same as: probe sweep examples/ring2d_circular.toml
           --vary trajectory.speed=0.2c_s:2c_s:40 --vary trajectory.radius=2um:50um:30
           --log trajectory.radius --workers 2 --out map.csv --plot speed_radius_map.png
"""
from _where import output, scenario

from probe.design.plots import plot_sweep
from probe.design.sweep import sweep


def main(argv=None):
    res = sweep(scenario("ring2d_circular"),
                vary=[("trajectory.speed", "0.2 c_s", "2 c_s", 40),
                      ("trajectory.radius", "2 um", "50 um", 30)],
                log=("trajectory.radius",))
    path = output("speed_radius_map.png", argv)
    plot_sweep(res, path, quantity="up_rate")
    print(path)
    return path


if __name__ == "__main__":
    main()
