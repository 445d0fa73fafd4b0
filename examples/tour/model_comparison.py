"""The point probe of the 3D box under four changes of model: a density
probe, the phonon dispersion (diverges above the sound speed), a finite
width (cuts the spectrum) and a warm gas.

    python examples/tour/model_comparison.py [OUTDIR]

Same as: probe compare examples/box3d_supersonic.toml
           --vary trajectory.speed=0.5c_s:3c_s:51 --set probe.width=0um
           --width 0.5um --temperature 30nK --plot model_comparison.png
"""
from _where import output, scenario

from probe.design.compare import compare
from probe.design.plots import plot_comparison


def main(argv=None):
    cmp = compare(scenario("box3d_supersonic"),
                  vary=[("trajectory.speed", "0.5 c_s", "3 c_s", 51)],
                  overrides=["probe.width=0 um"], width="0.5 um", temperature="30 nK")
    print("\n".join(cmp.statements))
    path = output("model_comparison.png", argv)
    plot_comparison(cmp, path)
    print(path)
    return path


if __name__ == "__main__":
    main()
