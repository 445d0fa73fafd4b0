"""What ``[uncertainty]`` and ``[readout]`` add to the tables and JSON of
``probe rates`` and ``probe transit`` (computed by ``probe.design.planning``).

Table: an "Uncertainty" block (the inputs with their standard uncertainty,
then for every main output its nominal value, the median, the 68 % and 95 %
intervals and the input that moves it most), a "Sensitivity" block (the
elasticities d ln Y / d ln X at the nominal point) and a "Readout" block
(the measured and reference probabilities and the shots needed, in words).

JSON: ``measured_probability``, ``reference_probability`` and
``shots_needed`` beside the other outputs; ``uncertainty``: ``levels`` and,
per output, its quantiles at those levels; ``sensitivity``: per output, the
elasticity to every uncertain input; ``dominant_input``: per output, the
input that moves it most; ``inputs.uncertainty`` and ``inputs.readout``: the
tables as read (SI).
"""
from __future__ import annotations

import math

from probe.cli.common import json_value, num, q, quantity_text
from probe.design.planning import READOUT_OUTPUTS
from probe.quantities import quantity, table_unit


def _value(name, value, dimension):
    """A value of output ``name`` in its table unit (no error, no note)."""
    if value is None or not math.isfinite(value):
        return "-"
    if quantity(name).kind == "count":
        return f"{int(value):,}"
    unit, scale = table_unit(quantity(name).kind, dimension)
    return q(value, unit, scale)


def _bare(name, value, dimension):
    """A value of output ``name`` in its table unit, without the unit."""
    if quantity(name).kind == "count":
        return "-" if not math.isfinite(value) else f"{value:,.0f}"
    return num(value / table_unit(quantity(name).kind, dimension)[1])


def _band_text(plan, name, dimension):
    qs = plan.quantiles[name]
    unit = "" if quantity(name).kind == "count" else table_unit(quantity(name).kind,
                                                                dimension)[0]
    tail = f" {unit}" if unit else ""
    lo95, lo68, median, hi68, hi95 = (_bare(name, v, dimension) for v in qs)
    text = (f"{_value(name, plan.nominal[name], dimension)}; median {median}{tail}, "
            f"68 % [{lo68}, {hi68}], 95 % [{lo95}, {hi95}]")
    key = plan.dominant.get(name)
    return text + (f"; mostly from {key}" if key else "")


def _input_text(u, dimension):
    """An uncertain input: nominal value +/- standard uncertainty (in the
    table unit of its kind; lengths in nm) and its distribution."""
    from probe.scenarios.schema import KEYS

    kind = KEYS[u.key].kind
    unit, scale = ("nm", 1e-9) if kind == "length" else table_unit(kind, dimension)
    spread = f"{num(100 * u.relative, 4)} %" if u.relative is not None else \
        q(u.absolute, unit, scale)
    law = "log-normal" if u.positive else "normal"
    return f"{q(u.nominal, unit, scale)} +/- {spread} ({law})"


def planning_blocks(plan, dimension):
    """The table blocks ``[(title, rows)]`` of a :class:`Planning`."""
    spec, blocks = plan.spec, []
    if spec.inputs:
        rows = [(f"input {u.key}", _input_text(u, dimension)) for u in spec.inputs]
        rows += [(quantity(m).label, _band_text(plan, m, dimension)) for m in plan.names]
        blocks.append((f"Uncertainty ({spec.samples:,} samples, seed {spec.seed}; "
                       "nominal; median, 68 % and 95 % intervals)", rows))
        rows = []
        for m in plan.names:
            parts = [f"{k} {e:+.3f}" if math.isfinite(e) else f"{k} -"
                     for k, e in plan.sensitivity[m].items()]
            rows.append((quantity(m).label, ", ".join(parts)))
        blocks.append(("Sensitivity (d ln Y / d ln X at the nominal point)", rows))
    if spec.readout is not None:
        blocks.append(("Readout", _readout_rows(plan, dimension)))
    return blocks


def _readout_rows(plan, dimension):
    r = plan.spec.readout
    how = "read as it is" if quantity(plan.signal).readout == "excited" else \
        "read as (1 - contrast)/2"
    reference = ("the same switching with the probe held at rest" if r.reference == "rest"
                 else "a true probability of zero")
    rows = [("readout errors", f"false excited e0 = {num(r.false_excited)}, "
                               f"missed excited e1 = {num(r.missed_excited)}"),
            ("signal", f"{quantity(plan.signal).label} ({how})"),
            ("reference", reference)]
    for m in READOUT_OUTPUTS[:2]:
        rows.append((quantity(m).label, quantity_text(m, plan.nominal[m], note=quantity(m).note,
                                                      dimension=dimension)))
    rows.append((quantity("shots_needed").label,
                 f"{int(plan.nominal['shots_needed']):,}  ({plan.sentence()})"))
    return rows


def planning_json(plan):
    """The JSON fields a :class:`Planning` adds (SI; NaN as null)."""
    spec, out = plan.spec, {}
    if spec.readout is not None:
        out.update({m: json_value(plan.nominal[m]) for m in READOUT_OUTPUTS[:2]})
        out["shots_needed"] = int(plan.nominal["shots_needed"])
    if spec.inputs:
        out["uncertainty"] = {"levels": plan.levels,
                              **{m: json_value(plan.quantiles[m]) for m in plan.names}}
        out["sensitivity"] = {m: {k: json_value(e) for k, e in plan.sensitivity[m].items()}
                              for m in plan.names}
        out["dominant_input"] = dict(plan.dominant)
    return out


def planning_inputs(plan):
    """``inputs.uncertainty`` and ``inputs.readout`` of the JSON."""
    spec, out = plan.spec, {}
    if spec.inputs:
        out["uncertainty"] = {
            "samples": spec.samples, "seed": spec.seed,
            "inputs": {u.key: {"nominal": u.nominal, "relative": u.relative,
                               "absolute": u.absolute,
                               "distribution": "log-normal" if u.positive else "normal"}
                       for u in spec.inputs}}
    if spec.readout is not None:
        r = spec.readout
        out["readout"] = {"false_excited": r.false_excited,
                          "missed_excited": r.missed_excited,
                          "significance": r.significance, "reference": r.reference,
                          "signal": plan.signal}
    return out


def attach(result, plan):
    """Add the planning's notes to the result's warnings."""
    for w in plan.warnings:
        if w not in result.warnings:
            result.warnings.append(w)
