"""The tables of planning under uncertainty: ``[uncertainty]`` and ``[readout]``.

``[uncertainty]`` takes, besides ``samples`` and ``seed``, entries named by
scenario keys, each with its standard uncertainty::

    [uncertainty]
    "condensate.density" = "15 %"          # relative
    "probe.coupling_length" = "2 a0"       # absolute, with units
    samples = 1000
    seed = 0

``[readout]`` describes how the probe's state is read at the end of a
transit: the probability ``false_excited`` of reading "excited" for a probe
in its ground state, ``missed_excited`` of reading "ground" for an excited
one, the ``significance`` z (standard errors) at which an effect should be
seen, and the ``reference`` setting it is compared with: the same switching
with the probe held at rest (``"rest"``), or zero (``"none"``).

The keys are declared here (collected by ``probe.scenarios.schema``); the
values are read, with the scenario they belong to, by
``probe.design.planning``.
"""
from __future__ import annotations

from probe.scenarios.keys import Key, Part

UNCERTAINTY = "uncertainty"
READOUT = "readout"

SAMPLES = Key(UNCERTAINTY, "samples", "1000", "Monte Carlo samples of the uncertain inputs, "
              "10 to 1e6; the other entries of the table are scenario keys in quotes with "
              "their standard uncertainty, relative (\"10 %\") or with units (\"2 a0\")",
              default=1000)
SEED = Key(UNCERTAINTY, "seed", "0", "seed of the random draws (the same seed gives the same "
           "numbers)", default=0)

FALSE_EXCITED = Key(READOUT, "false_excited", "0.03", "probability of reading \"excited\" "
                    "for a probe in its ground state, in [0, 1)", kind="dimensionless",
                    default=0.0)
MISSED_EXCITED = Key(READOUT, "missed_excited", "0.1", "probability of reading \"ground\" "
                     "for an excited probe, in [0, 1); with false_excited below 1 in sum",
                     kind="dimensionless", default=0.0)
SIGNIFICANCE = Key(READOUT, "significance", "3", "standard errors z at which the effect "
                   "should be seen (the number of shots follows)", kind="dimensionless",
                   default=3.0)
REFERENCE = Key(READOUT, "reference", '"rest"', "what the signal is compared with: the "
                "same switching with the probe held at rest, or zero (\"none\")",
                choices=("rest", "none"), default="rest")

#: the keys of ``[uncertainty]`` and ``[readout]``, in the order of the schema
PARTS = (Part(UNCERTAINTY, "", (SAMPLES, SEED)),
         Part(READOUT, "", (FALSE_EXCITED, MISSED_EXCITED, SIGNIFICANCE, REFERENCE)))


def is_entry(section, name):
    """True for an entry of ``[uncertainty]`` named by a scenario key
    (``"section.key"``); which keys may carry an uncertainty is checked with
    the scenario (``probe.design.planning``)."""
    return section == UNCERTAINTY and isinstance(name, str) and "." in name


def without_planning(raw):
    """The scenario dict without ``[uncertainty]`` and ``[readout]``: the
    nominal scenario, as the tools that search or compare (``probe solve``,
    ``probe compare``) take it."""
    return {section: body for section, body in raw.items()
            if section not in (UNCERTAINTY, READOUT)}
