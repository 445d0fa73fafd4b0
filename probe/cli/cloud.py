"""What every command prints about a trapped gas (``condensate.trap =
"harmonic"``): the trap among the inputs, the Thomas-Fermi cloud among the
derived quantities (table rows), and its keys in JSON."""
from __future__ import annotations

import math

from probe.cli.common import num, q


def _frequencies_text(w):
    hz = ", ".join(num(x / (2 * math.pi)) for x in w)
    rad = ", ".join(num(x) for x in w)
    return f"{hz} Hz  (w = {rad} rad/s)"


def cloud_input_rows(scenario):
    """Input rows of a harmonic trap: its frequencies."""
    trap = scenario.trap
    if trap is None:
        return []
    return [("trap", "harmonic (Thomas-Fermi cloud)"),
            ("trap frequencies", _frequencies_text(trap.frequencies))]


def cloud_derived_rows(scenario):
    """Derived rows of a harmonic trap: atom number, peak density and
    Thomas-Fermi radii (the chemical potential, sound speed and healing
    length shown are those of the centre)."""
    trap = scenario.trap
    if trap is None:
        return []
    d = trap.dimension
    return [("atom number", num(trap.atom_number)),
            ("peak density", f"{q(trap.peak_density, f'm^-{d}')}  (the centre: mu, c_s "
                             "and xi above are its)"),
            ("Thomas-Fermi radii", q(trap.radii, "um", 1e-6))]


def cloud_json(scenario):
    """JSON keys of a harmonic trap (SI): ``chemical_potential``,
    ``peak_density``, ``thomas_fermi_radii``, ``atom_number``, the central
    ``sound_speed`` and ``healing_length``, and ``trap_frequencies``
    (rad/s); empty for a uniform gas."""
    trap = scenario.trap
    if trap is None:
        return {}
    return {**trap.summary(), "trap_frequencies": trap.frequencies.tolist()}
