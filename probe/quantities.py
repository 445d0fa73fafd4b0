"""Output quantities: one registry that every table, JSON object, CSV column,
plot label, solve target and comparison draws from.

A quantity is declared once, with

- ``name``: its JSON key and CSV column (a contract: never rename);
- ``kind``: the kind of physical quantity (``rate``, ``speed``, ``energy``,
  ``dimensionless`` ...), which fixes the SI unit (``SI_UNITS``: CSV headers,
  ``up_rate [1/s]``), the unit of printed tables (``TABLE_UNITS``:
  ``23.6 s^-1``) and of plots (``DISPLAY_UNITS``, through
  ``probe.design.sweep.display_unit``);
- ``label``: plain words for table rows and messages; ``tex``: the plot label;
- ``guarded``: the engines refuse to return a NaN, an infinity or a negative
  number for it (a ``ModelError`` instead of a silent wrong number);
- ``target``: ``probe solve --target NAME=VALUE`` may aim at it;
- ``error``: the name of its error estimate, if it has one (tables print
  ``value (+/- error)``);
- ``role``: ``output`` (listed by the probe models in ``rate_outputs`` /
  ``transit_outputs``), ``motion`` (an output of the stationary engine itself,
  whatever the probe), ``derived`` (formed by the tools from the outputs),
  ``grid`` (an engine argument: speed, radius, gap), ``gas`` (the gas at a
  point of a sweep) or ``passage`` (a total or a sample of a passage through
  a cloud, ``probe passage``: which of them a passage gives follows from
  the rates its model declares, ``probe.scenarios.passage``);
- ``needs``: for outputs that only some stationary motions have, what the
  motion's engine must declare: an argument (``"radius"``: motion on a
  circle) or a capability that is true (``"has_threshold"``);
- ``headline``: rank among the headline results (those compared between
  models, plotted by default and turned into mean rates of a transit): the
  headline of a result is its outputs of the smallest nonzero rank;
  ``plotted_with``: outputs drawn beside it in a default plot;
- ``mean_rate``: the quantity that is this one per unit effective duration
  of a transit (``mean_up_rate``);
- ``note``: words printed after the value in tables, and ``note_with``: a
  quantity whose presence in the result the note needs (the start of the
  probe is named only where the result has both starts);
- ``noun``: what the quantity is, in one word, for messages and shared plot
  axes (default: the word of its kind, ``KIND_NOUNS``);
- ``readout``: how reading the probe's state at the end sees this output
  (``probe.design.planning``): ``"excited"``, it is the probability of
  finding the probe excited; ``"contrast"``, a fringe contrast C, read as
  the probability (1 - C)/2 of the upper state after the closing pulse.

Which quantities a result carries is declared by the probe model that
produced it (``ProbeModel.rate_outputs`` / ``transit_outputs``) and by the
stationary engine of its motion.

To add a quantity: one ``_add(...)`` line below, and let the probe model that
produces it list its name.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

#: SI unit text (CSV headers, JSON docs) of each kind of quantity; ``d`` is
#: the dimension of the gas (see :func:`si_unit`)
SI_UNITS = {
    "rate": "1/s", "speed": "m/s", "length": "m", "temperature": "K", "time": "s",
    "frequency": "rad/s", "angular_frequency": "rad/s", "force": "N", "power": "W",
    "energy": "J", "mass": "kg", "dimensionless": "1", "count": "1",
    "coupling": "J m^d", "density": "m^-d", "phase": "rad",
}

#: unit and scale (value / scale is printed) of each kind in printed tables;
#: kinds not listed are printed in their SI unit
TABLE_UNITS = {
    "rate": ("s^-1", 1.0), "temperature": ("nK", 1e-9), "speed": ("m/s", 1.0),
    "force": ("N", 1.0), "power": ("W", 1.0), "energy": ("J", 1.0),
    "dimensionless": ("", 1.0), "count": ("", 1.0), "phase": ("rad", 1.0),
    # angular frequencies shown as ordinary ones, the angular value beside
    "frequency": ("Hz", 2 * math.pi),
}

#: units of each kind in plots and printed summaries, smallest first (the
#: first that keeps the largest magnitude below 1000 is used)
DISPLAY_UNITS = {
    "length": ("nm", "um", "mm", "m"),
    "speed": ("um/s", "mm/s", "m/s"),
    "temperature": ("pK", "nK", "uK", "mK", "K"),
    "time": ("us", "ms", "s"),
}

#: the SI value of one of each unit of ``DISPLAY_UNITS`` (``value / scale``
#: is printed)
UNIT_SCALES = {"pK": 1e-12, "nK": 1e-9, "uK": 1e-6, "mK": 1e-3, "K": 1.0,
               "nm": 1e-9, "um": 1e-6, "mm": 1e-3, "m": 1.0,
               "um/s": 1e-6, "mm/s": 1e-3, "m/s": 1.0, "us": 1e-6, "ms": 1e-3, "s": 1.0}

#: kinds printed in tables and messages in the unit of ``DISPLAY_UNITS`` that
#: fits the value (300 K as K, 20 nK as nK), not in one fixed unit
PREFIXED_KINDS = ("temperature",)

#: what a quantity of each kind is, in one word (a quantity's ``noun``
#: takes precedence)
KIND_NOUNS = {"rate": "rate"}

ROLES = ("output", "motion", "derived", "grid", "gas", "passage")


def counted(n, noun, plural=None):
    """``n`` and ``noun`` in the number that ``n`` asks for: ``"1 point"``,
    ``"3 points"`` (``plural``: default ``noun + "s"``)."""
    return f"{n} {noun if n == 1 else plural or noun + 's'}"


def si_unit(kind, dimension=3):
    """The SI unit (a pint-readable string) of ``kind`` in a gas of
    ``dimension`` (densities m^-d, couplings J m^d)."""
    if kind == "density":
        return f"m^-{dimension}"
    if kind == "coupling":
        return "J m" if dimension == 1 else f"J m^{dimension}"
    return SI_UNITS[kind]


def table_unit(kind, dimension=3, value=None):
    """``(unit, scale)`` of ``kind`` in printed tables: ``value / scale`` is
    printed, followed by ``unit``.  For a kind of ``PREFIXED_KINDS`` and a
    ``value`` (SI; an array: its largest finite magnitude) the unit is the
    one that fits it (:func:`fitting_unit`)."""
    if value is not None and kind in PREFIXED_KINDS:
        fit = fitting_unit(kind, value)
        if fit is not None:
            return fit
    return TABLE_UNITS.get(kind) or (si_unit(kind, dimension), 1.0)


def fitting_unit(kind, value):
    """``(unit, scale)`` from ``DISPLAY_UNITS[kind]`` for an SI ``value``:
    the largest unit in which its magnitude is at least 1 (the smallest unit
    for smaller values); None for 0 or no finite value."""
    a = np.abs(np.asarray(value, float))
    a = a[np.isfinite(a) & (a > 0)]
    if not a.size:
        return None
    big = float(np.max(a))
    units = DISPLAY_UNITS[kind]
    best = units[0]
    for unit in units:
        if big >= UNIT_SCALES[unit] * (1 - 1e-12):
            best = unit
    return best, UNIT_SCALES[best]


#: significant digits kept of a value computed from grid values given in
#: decimal (a Mach number from a linspace of speeds): the float noise of the
#: arithmetic, 1.3500000000000003 for 1.35, is below them
GRID_DIGITS = 12


_ROUNDED = np.frompyfunc(lambda v, spec: float(format(v, spec)), 2, 1)


def significant(x, digits=GRID_DIGITS):
    """``x`` (a number or array) rounded to ``digits`` significant digits;
    0, NaN and infinities unchanged."""
    a = np.asarray(x, float)
    # the nearest double to the decimal of ``digits`` digits (correctly
    # rounded by the formatting and reading of the decimal text)
    out = np.asarray(_ROUNDED(a, f".{int(digits)}g") if a.size else a, dtype=float)
    return out if out.ndim else float(out)


def num(x, digits=6):
    """A number as printed in tables and notebooks: ``digits`` significant
    digits, ``nan``/``inf``/``-inf`` spelled out, ``-`` for None; arrays
    element-wise in brackets."""
    if x is None:
        return "-"
    a = np.asarray(x)
    if a.ndim:
        return "[" + ", ".join(num(v, digits) for v in a.ravel()) + "]"
    x = float(a)
    if math.isnan(x):
        return "nan"
    if math.isinf(x):
        return "inf" if x > 0 else "-inf"
    return f"{x:.{digits}g}"


def display_text(kind, value, digits=6):
    """An SI ``value`` of ``kind`` as printed in tables and messages: in its
    table unit (:func:`table_unit`; a temperature in the unit that fits it,
    a frequency as an ordinary one in Hz with the angular one beside)."""
    unit, scale = table_unit(kind, value=value)
    text = f"{float(value) / scale:.{digits}g} {unit}".rstrip()
    if kind == "frequency":
        text += f" ({float(value):.{digits}g} rad/s)"
    return text


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
    role: str = "output"
    needs: str | None = None
    headline: int = 0
    plotted_with: tuple = ()
    mean_rate: str | None = None
    note: str = ""
    note_with: str | None = None
    noun: str | None = None
    readout: str | None = None

    @property
    def unit(self):
        """SI unit text as written in CSV headers (3D for densities and
        couplings; :func:`si_unit` for other dimensions)."""
        return si_unit(self.kind)

    @property
    def plot_label(self):
        return self.tex or self.label

    @property
    def word(self):
        """What the quantity is, in one word: its ``noun``, or that of its
        kind (``KIND_NOUNS``), or "result"."""
        return self.noun or KIND_NOUNS.get(self.kind, "result")



QUANTITIES: dict[str, Quantity] = {}


def _add(name, kind, label, tex="", guarded=False, target=False, error=None, **more):
    if more.get("role", "output") not in ROLES:
        raise ValueError(f"{name}: unknown role {more['role']!r}")
    QUANTITIES[name] = Quantity(name, kind, label, tex, guarded, target, error, **more)


# --- stationary rates (tables list a result's quantities in this order) ------
_add("up_rate", "rate", "up rate", r"up rate $\Gamma_\uparrow$", True, True, "up_rate_error",
     headline=1)
_add("up_rate_error", "rate", "error of the up rate", r"error of $\Gamma_\uparrow$", True)
_add("down_rate", "rate", "down rate", r"down rate $\Gamma_\downarrow$", True, True,
     "down_rate_error", headline=1)
_add("down_rate_error", "rate", "error of the down rate", r"error of $\Gamma_\downarrow$", True)
_add("up_threshold_speed", "speed", "up threshold speed", r"threshold speed $v_\mathrm{th}$",
     needs="has_threshold")
_add("effective_temperature", "temperature", "effective temperature",
     r"effective temperature $T_\mathrm{eff}$", target=True)
_add("excited_population", "dimensionless", "steady-state excited population",
     "steady-state excited population", target=True)
_add("emission_rate", "rate", "emission rate", "phonon emission rate", True, True,
     "emission_rate_error", headline=2, plotted_with=("absorption_rate",))
_add("emission_rate_error", "rate", "error of the emission rate",
     "error of the emission rate", True)
_add("absorption_rate", "rate", "absorption rate", "phonon absorption rate", True, True)
_add("drag_force", "force", "drag force", "drag force", True, True)
_add("power", "power", "power to the gas", "power given to the gas", True, True)
_add("dephasing_rate", "rate", "dephasing rate", r"dephasing rate $\gamma_\phi$", True, True,
     "dephasing_rate_error")
_add("dephasing_rate_error", "rate", "error of the dephasing rate",
     r"error of $\gamma_\phi$", True)
_add("transition_coupling", "coupling", "transition coupling",
     r"transition coupling $\kappa_t$")
_add("detuning_in_gas", "frequency", "detuning in the gas",
     r"detuning in the gas $\delta_\mathrm{gas}$")
_add("harmonics", "count", "harmonics summed", "harmonics summed", role="motion",
     needs="radius")

# --- finite transits ----------------------------------------------------------
_add("up_probability", "dimensionless", "up probability", r"up probability $P_\uparrow$",
     target=True, error="up_probability_error", headline=1, mean_rate="mean_up_rate",
     noun="probability", readout="excited")
_add("up_probability_error", "dimensionless", "error of the up probability")
_add("down_probability", "dimensionless", "down probability",
     r"down probability $P_\downarrow$", target=True, error="down_probability_error",
     headline=1, mean_rate="mean_down_rate", noun="probability")
_add("down_probability_error", "dimensionless", "error of the down probability")
_add("emitted_phonons", "dimensionless", "emitted phonons", "emitted phonons", target=True,
     error="emitted_phonons_error", headline=2, mean_rate="mean_emission_rate",
     note="(starting in the ground state: up transitions that emit a phonon)",
     note_with="emitted_phonons_excited")
_add("emitted_phonons_error", "dimensionless", "error of the emitted phonons")
_add("emitted_phonons_excited", "dimensionless", "emitted phonons, excited",
     note="(starting excited)")
_add("absorbed_phonons", "dimensionless", "absorbed phonons",
     note="(starting in the ground state: up transitions that absorb a thermal phonon, "
          "0 at T = 0; up probability = emitted + absorbed)", note_with="up_probability")
_add("emitted_energy", "energy", "emitted energy", note="(ground-state start)",
     note_with="emitted_phonons_excited")
_add("contrast", "dimensionless", "contrast", r"contrast $e^{-\Lambda}$", target=True,
     readout="contrast")
_add("decoherence_exponent", "dimensionless", "decoherence exponent",
     r"decoherence exponent $\Lambda$", target=True, error="decoherence_exponent_error")
_add("decoherence_exponent_error", "dimensionless", "error of the decoherence exponent")
_add("mean_field_phase", "phase", "mean-field phase", "mean-field phase")
_add("mean_up_rate", "rate", "mean up rate", role="derived",
     note="(P_up / effective duration)")
_add("mean_down_rate", "rate", "mean down rate", role="derived",
     note="(P_down / effective duration)")
_add("mean_emission_rate", "rate", "mean emission rate", role="derived",
     note="(emitted phonons / effective duration)")
_add("achieved_rtol", "dimensionless", "achieved accuracy", role="derived")
_add("measured_probability", "dimensionless", "measured probability",
     r"measured probability $p$", role="derived", noun="probability",
     note="(read excited: e0 + (1 - e0 - e1) P)")
_add("reference_probability", "dimensionless", "reference probability",
     r"reference probability $p_\mathrm{ref}$", role="derived", noun="probability",
     note="(the reference setting, read with the same errors)")
_add("shots_needed", "count", "shots needed", "shots per setting", role="derived")

# --- the gas and the grid (sweep columns) -----------------------------------
_add("speed", "speed", "speed", role="grid")
_add("radius", "length", "radius", role="grid")
_add("gap", "frequency", "gap", role="grid")
_add("mach", "dimensionless", "speed over sound speed", "$v/c_s$", role="gas")
_add("sound_speed", "speed", "sound speed", role="gas")
_add("healing_length", "length", "healing length", role="gas")
_add("density", "density", "density", role="gas")
_add("temperature", "temperature", "temperature", role="gas")
_add("atom_number", "dimensionless", "atom number", "atom number $N$", role="gas")

# --- passages through a cloud (probe passage) ----------------------------------
_add("excited_probability", "dimensionless", "excited probability",
     r"excited probability $p_e$", target=True, headline=1, role="passage",
     note="(rate equation, at the end of the passage)", noun="probability",
     readout="excited")
_add("first_order_up_probability", "dimensionless", "first-order up probability",
     r"first order $\int\Gamma_\uparrow dt$", target=True, role="passage",
     note="(int Gamma_up dt)", noun="probability")
_add("passage_duration", "time", "passage duration", role="passage")
_add("max_mach", "dimensionless", "largest Mach number", "largest $v/c_s$", role="passage",
     note="(v/c at the samples inside the cloud)")
_add("time", "time", "time", "time $t$", role="passage")
_add("x", "length", "x", "$x$", role="passage")
_add("y", "length", "y", "$y$", role="passage")
_add("z", "length", "z", "$z$", role="passage")


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


def error_names():
    """Names that are the error estimate of another quantity."""
    return frozenset(q.error for q in QUANTITIES.values() if q.error)


def in_registry_order(names):
    """The registered quantities among ``names``, in registry order."""
    wanted = set(names)
    return [n for n in QUANTITIES if n in wanted]


def headline(names):
    """The headline quantities among ``names`` (result columns or outputs):
    those of the smallest nonzero ``headline`` rank, in the given order;
    without any ranked one, the first output that is not an error estimate."""
    ranked = [n for n in names if n in QUANTITIES and QUANTITIES[n].headline]
    if ranked:
        best = min(QUANTITIES[n].headline for n in ranked)
        return [n for n in ranked if QUANTITIES[n].headline == best]
    errors = error_names()
    return [n for n in names if n in QUANTITIES and QUANTITIES[n].role == "output"
            and n not in errors][:1]


def default_plotted(names):
    """Quantities drawn when none is asked for: the headline ones and the
    outputs they are plotted with."""
    out = []
    for n in headline(names):
        out += [n] + [m for m in QUANTITIES[n].plotted_with if m in names]
    return out


def stationary_outputs(probe, engine=None):
    """Names of the quantities of stationary rates for ``probe``: the
    outputs the model lists (``rate_outputs``) and those of the motion's
    engine (role ``motion``), restricted to what ``engine`` produces (see
    :func:`produced_by`; every one when ``engine`` is None)."""
    names = list(probe.rate_outputs)
    names += [q.name for q in QUANTITIES.values() if q.role == "motion" and q.name not in names]
    return [n for n in names if engine is None or produced_by(engine, n)]


def shared_noun(names):
    """The word (:attr:`Quantity.word`) that names every quantity of
    ``names`` (for a shared axis), or None."""
    words = {QUANTITIES[n].word if n in QUANTITIES else "result" for n in names}
    return words.pop() if len(words) == 1 and words != {"result"} else None


def produced_by(engine, name):
    """True when stationary motion by ``engine`` (an entry of
    ``probe.engines.stationary.STATIONARY_ENGINES``) gives quantity
    ``name``: its ``needs`` is one of the engine's arguments or a capability
    the engine declares true."""
    need = QUANTITIES[name].needs
    return need is None or need in engine.arguments or getattr(engine, need, False) is True


__all__ = ["Quantity", "QUANTITIES", "SI_UNITS", "TABLE_UNITS", "DISPLAY_UNITS",
           "KIND_NOUNS", "ROLES", "UNIT_SCALES", "PREFIXED_KINDS", "si_unit", "table_unit",
           "fitting_unit", "display_text", "significant", "GRID_DIGITS", "quantity", "guarded_names",
           "target_names", "kind_of", "error_names", "in_registry_order", "headline",
           "default_plotted", "shared_noun", "stationary_outputs", "produced_by"]
