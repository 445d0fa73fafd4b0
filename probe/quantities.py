"""Output quantities: one registry that every table, JSON object, CSV column,
plot label, solve target and comparison draws from.

A quantity is declared once, with

- ``name``: its JSON key and CSV column (a contract: never rename);
- ``kind``: the kind of physical quantity (``rate``, ``speed``, ``energy``,
  ``dimensionless`` ...), which fixes the SI unit and how it is displayed
  (``probe.design.sweep.display_unit``);
- ``unit``: the SI unit text written in CSV headers (``up_rate [1/s]``);
- ``label``: plain words for tables and messages; ``tex``: the plot label;
- ``guarded``: the engines refuse to return a NaN, an infinity or a negative
  number for it (a ``ModelError`` instead of a silent wrong number);
- ``target``: ``probe solve --target NAME=VALUE`` may aim at it;
- ``error``: the name of its error estimate, if it has one.

Which quantities a result carries is declared by the probe model that
produced it (``ProbeModel.rate_outputs`` / ``transit_outputs``).

To add a quantity: one ``_add(...)`` line below, and let the probe model that
produces it list its name.
"""
from __future__ import annotations

from dataclasses import dataclass

#: SI unit text (CSV headers, JSON docs) of each kind of quantity
SI_UNITS = {
    "rate": "1/s", "speed": "m/s", "length": "m", "temperature": "K", "time": "s",
    "frequency": "rad/s", "angular_frequency": "rad/s", "force": "N", "power": "W",
    "energy": "J", "mass": "kg", "dimensionless": "1", "count": "1",
    "coupling": "J m^d", "density": "m^-d", "phase": "rad",
}


@dataclass(frozen=True)
class Quantity:
    """One output quantity (see the module docstring)."""

    name: str
    kind: str
    label: str
    tex: str = ""
    guarded: bool = False
    target: bool = False
    error: str | None = None

    @property
    def unit(self):
        """SI unit text as written in CSV headers."""
        return SI_UNITS[self.kind]

    @property
    def plot_label(self):
        return self.tex or self.label


QUANTITIES: dict[str, Quantity] = {}


def _add(name, kind, label, tex="", guarded=False, target=False, error=None):
    QUANTITIES[name] = Quantity(name, kind, label, tex, guarded, target, error)


# --- stationary rates -------------------------------------------------------
_add("up_rate", "rate", "up rate", r"up rate $\Gamma_\uparrow$", True, True, "up_rate_error")
_add("up_rate_error", "rate", "error of the up rate", r"error of $\Gamma_\uparrow$", True)
_add("down_rate", "rate", "down rate", r"down rate $\Gamma_\downarrow$", True, True,
     "down_rate_error")
_add("down_rate_error", "rate", "error of the down rate", r"error of $\Gamma_\downarrow$", True)
_add("effective_temperature", "temperature", "effective temperature",
     r"effective temperature $T_\mathrm{eff}$", target=True)
_add("excited_population", "dimensionless", "excited population",
     "steady-state excited population", target=True)
_add("up_threshold_speed", "speed", "up threshold speed", r"threshold speed $v_\mathrm{th}$")
_add("emission_rate", "rate", "emission rate", "phonon emission rate", True, True,
     "emission_rate_error")
_add("emission_rate_error", "rate", "error of the emission rate",
     "error of the emission rate", True)
_add("absorption_rate", "rate", "absorption rate", "phonon absorption rate", True, True)
_add("drag_force", "force", "drag force", "drag force", True, True)
_add("power", "power", "power to the gas", "power given to the gas", True, True)
_add("harmonics", "count", "harmonics summed", "harmonics summed")

# --- finite transits ----------------------------------------------------------
_add("up_probability", "dimensionless", "up probability", r"up probability $P_\uparrow$",
     target=True, error="up_probability_error")
_add("up_probability_error", "dimensionless", "error of the up probability")
_add("down_probability", "dimensionless", "down probability",
     r"down probability $P_\downarrow$", target=True, error="down_probability_error")
_add("down_probability_error", "dimensionless", "error of the down probability")
_add("emitted_phonons", "dimensionless", "emitted phonons", "emitted phonons", target=True,
     error="emitted_phonons_error")
_add("emitted_phonons_error", "dimensionless", "error of the emitted phonons")
_add("emitted_phonons_excited", "dimensionless", "emitted phonons, excited start")
_add("absorbed_phonons", "dimensionless", "absorbed phonons")
_add("emitted_energy", "energy", "emitted energy")

# --- the gas and the grid (sweep columns) -----------------------------------
_add("speed", "speed", "speed")
_add("radius", "length", "radius")
_add("gap", "frequency", "gap")
_add("mach", "dimensionless", "speed over sound speed", "$v/c_s$")
_add("sound_speed", "speed", "sound speed")
_add("healing_length", "length", "healing length")
_add("density", "density", "density")
_add("temperature", "temperature", "temperature")


def quantity(name):
    """The registered :class:`Quantity` called ``name`` (KeyError if none)."""
    return QUANTITIES[name]


def guarded_names():
    """Names of the quantities the engines must never return non-finite or
    negative."""
    return tuple(q.name for q in QUANTITIES.values() if q.guarded)


def target_names():
    """Names that ``probe solve --target`` accepts, in registry order."""
    return tuple(q.name for q in QUANTITIES.values() if q.target)


def kind_of(name, default="dimensionless"):
    q = QUANTITIES.get(name)
    return q.kind if q is not None else default


__all__ = ["Quantity", "QUANTITIES", "SI_UNITS", "quantity", "guarded_names",
           "target_names", "kind_of"]
