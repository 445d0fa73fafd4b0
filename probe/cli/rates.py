"""``probe rates CONFIG [CONFIG ...]``: stationary rates as a table or JSON.

Bad input of any kind (unreadable file, TOML syntax, unknown key, wrong
units, impossible request) ends with one line ``error: <key>: <message>`` on
stderr and exit status 2.  Nothing is printed or written before every
scenario has been computed, and ``--output`` files are written whole or not
at all (a temporary file renamed into place).
"""
from __future__ import annotations

import json
import math
import warnings

import click
from probe import constants as sc

from probe.cli.app import cli
from probe.cli.cloud import cloud_derived_rows, cloud_input_rows, cloud_json
from probe.cli.common import (KIND_EXTRAS, fail, input_errors, json_option, json_value,
                              load_configs, num, out_option, outputs_json, q, report, result_rows)
from probe.cli.outputs import Outputs, json_by_suffix, scenario_inputs
from probe.cli.progress import Progress
from probe.cli.planning import attach, planning_blocks, planning_inputs, planning_json
from probe.quantities import stationary_outputs, table_unit


def kind_text(value, kind, dimension):
    """A value of a kind of quantity in its table unit (frequencies as
    ordinary frequencies with rad/s beside)."""
    if kind == "length":
        return q(value, "nm", 1e-9)
    if kind == "coupling":
        return q(value, "J m" if dimension == 1 else f"J m^{dimension}")
    unit, scale = table_unit(kind, dimension, value=value)
    extra = KIND_EXTRAS.get(kind)
    return q(value, unit, scale) + (extra(value, None) if extra else "")


def rows_inputs(sc_, info):
    cond = sc_.condensate
    gas, prb, trj = info["condensate"], info["probe"], info["trajectory"]
    d = cond.dimension
    c = cond.sound_speed
    rows = [("species", gas["species"] or "(mass given)"),
            ("dimension", f"{d}D"),
            ("boson mass", f"{q(cond.mass, 'kg')}  ({num(cond.mass / sc.atomic_mass)} u)"),
            ("density", q(cond.density, f"m^-{d}")),
            ("scattering length", q(cond.scattering_length, "nm", 1e-9))]
    if cond.transverse_frequency is not None:
        rows.append(("transverse frequency",
                     f"{q(cond.transverse_frequency / (2 * math.pi), 'Hz')}  "
                     f"(w_perp = {q(cond.transverse_frequency, 'rad/s')})"))
    if cond.size is not None:
        rows.append(("uniform region radius", q(cond.size, "um", 1e-6)))
    rows += cloud_input_rows(sc_)
    rows += [("temperature", kind_text(cond.temperature, "temperature", d)),
             ("dispersion", gas["dispersion"]),
             ("probe model", prb["model"])]
    rows += [(label, kind_text(value, kind, d)) for label, value, kind in
             sc_.probe.input_rows()]
    if prb["gap"] is not None:
        rows.append(("gap Omega/(2 pi)", f"{q(prb['gap'] / (2 * math.pi), 'Hz')}  "
                                         f"(Omega = {q(prb['gap'], 'rad/s')})"))
    rows.append(("coupling kappa", q(prb["coupling"], "J m" if d == 1 else f"J m^{d}")))
    if prb["mass"] is not None:
        label = prb["species"] or f"{num(prb['mass'] / sc.atomic_mass)} u"
        rows.append(("probe mass", f"{q(prb['mass'], 'kg')}  ({label})"))
    rows.append(("probe width", q(prb["width"], "um", 1e-6)))
    rows.append(("trajectory", trj["kind"]))
    rows.append(("speed", f"{q(trj['speed'], 'm/s')}  ({num(trj['speed'] / c)} c_s)"))
    if "radius" in trj:
        rows.append(("radius", f"{q(trj['radius'], 'um', 1e-6)}  "
                               f"({num(trj['radius'] / cond.healing_length)} xi)"))
        rows.append(("angular frequency", q(trj["angular_frequency"], "rad/s")))
    return rows


def rows_derived(sc_, info):
    der = info["derived"]
    mu = der["chemical_potential"]
    rows = [("chemical potential", f"{q(mu, 'J')}  (mu/h = {num(mu / sc.h)} Hz, "
                                   f"mu/k_B = {kind_text(mu / sc.k, 'temperature', 3)})"),
            ("sound speed c_s", q(der["sound_speed"], "m/s")),
            ("healing length", f"{q(der['healing_length'], 'um', 1e-6)}  "
                               "(xi = hbar/(m c))"),
            (f"gas parameter {der['gas_parameter_name']}", num(der["gas_parameter"]))]
    if der["critical_temperature"] is not None:
        rows.append(("ideal-gas T_c", kind_text(der["critical_temperature"], "temperature", 3)))
    if der["transverse_length"] is not None:
        rows.append(("transverse length", q(der["transverse_length"], "um", 1e-6)))
    return rows + cloud_derived_rows(sc_)


def rows_results(scenario, result):
    """The results block of the table: the quantities of stationary rates
    that the probe model and the motion give (``probe.quantities``), then the
    expected numbers for a straight transit of the uniform region."""
    names = stationary_outputs(scenario.probe)
    rows = result_rows(result, names, sound_speed=result.sound_speed,
                       dimension=scenario.condensate.dimension)
    transit = _transit(scenario, result)
    if transit is not None:
        rows.append(("transit time (uniform region)", q(transit["time"], "ms", 1e-3)))
        if transit["expected_up"] is not None:
            rows.append(("expected transitions in it",
                         f"up {num(transit['expected_up'])}, "
                         f"down {num(transit['expected_down'])}"))
        else:
            rows.append(("expected phonons emitted", num(transit["expected_emitted"])))
    return rows


def _transit(scenario, result):
    """The straight transit through the uniform region, or None."""
    from probe.engines.regime import transit_summary
    if not getattr(scenario.trajectory, "stationary", False):
        return None
    return transit_summary(scenario.condensate, scenario.trajectory, result)


def format_table(scenario, result, planning=None):
    """The readable report for one scenario and its result (and what its
    ``[uncertainty]`` adds: ``probe.cli.planning``)."""
    info = scenario.describe()
    blocks = [("Inputs", rows_inputs(scenario, info)),
              ("Derived", rows_derived(scenario, info)),
              ("Results", rows_results(scenario, result))]
    if planning is not None:
        blocks += planning_blocks(planning, scenario.condensate.dimension)
    return report(scenario.source, blocks, result.warnings)


def result_json(scenario, result, planning=None):
    """The JSON-ready dict for one scenario: every RateResult field and
    declared output (SI), the config path, and the validated inputs and
    derived quantities (and what ``[uncertainty]`` adds)."""
    out = {"config": scenario.source}
    out.update(outputs_json(result, stationary_outputs(scenario.probe)))
    if planning is not None:
        out.update(planning_json(planning))
    info = scenario.describe()
    out["gas_parameter"] = info["derived"]["gas_parameter"]
    out["gas_parameter_name"] = info["derived"]["gas_parameter_name"]
    out["healing_length_convention"] = "xi = hbar/(m c)"
    out.update(cloud_json(scenario))
    out["inputs"] = {k: info[k] for k in ("condensate", "probe", "trajectory", "numerics")}
    out["inputs"]["condensate"]["size"] = scenario.condensate.size
    if planning is not None:
        out["inputs"].update(planning_inputs(planning))
    transit = _transit(scenario, result)
    out["transit"] = None if transit is None else {
        k: json_value(v) for k, v in transit.items()}
    return out


def stage_report(outputs, out, as_json, objs, texts, key=None):
    """The report of ``probe rates`` or ``probe transit``: ``(text, or
    None when it went to ``out``)``.  JSON when ``--json`` is given or the
    file's name ends in .json (an object for one scenario, an array for
    several), the tables otherwise."""
    if as_json or json_by_suffix(out):
        items = objs()
        text = json.dumps(items[0] if len(items) == 1 else items, indent=2,
                          allow_nan=False)
    else:
        text = "\n\n".join(texts())
    if out is None:
        return text
    outputs.stage_text(out, text + "\n", key or OUT_KEY)
    return None


#: the key of the output file's refusals (its first spelling, kept)
OUT_KEY = "--output"


@cli.command()
@click.argument("configs", nargs=-1, required=True, metavar="CONFIG [CONFIG ...]")
@json_option("Print JSON (an object for one config, an array for several).")
@click.option("--set", "overrides", multiple=True, metavar="KEY=VALUE",
              help="Override a configuration entry, e.g. --set 'trajectory.speed=2 c_s'. "
                   "Repeatable; applied to every CONFIG.")
@click.option("--unset", "removals", multiple=True, metavar="KEY",
              help="Remove a configuration entry, e.g. --unset probe.gap (before any "
                   "--set). Repeatable; applied to every CONFIG.")
@out_option("FILE", "Write the table (JSON with --json or when FILE ends in .json) to "
                    "FILE instead of the terminal; FILE is written whole or left untouched.")
def rates(configs, as_json, overrides, removals, out):
    """Stationary up/down (or emission) rates for each scenario file CONFIG."""
    from probe.design.planning import plan_rates, planning_spec
    done = []
    try:
        with Outputs() as outputs:
            scenarios = load_configs(configs, overrides, removals)
            for s in scenarios:
                outputs.add_inputs(scenario_inputs(s.source, s.raw))
            outputs.check(out, OUT_KEY)
            specs = [planning_spec(s) for s in scenarios]
            with warnings.catch_warnings(), \
                    Progress(len(scenarios), "rates", delay=True) as bar:
                # numpy's overflow/invalid-value warnings are not for the reader:
                # every result passes the engine's guard (no NaN, inf or negative
                # number is returned; a ModelError says why instead)
                warnings.simplefilter("ignore", RuntimeWarning)
                for scenario, spec in zip(scenarios, specs):
                    result = scenario.rates()
                    plan = None if spec is None else plan_rates(scenario, result, spec)
                    if plan is not None:
                        attach(result, plan)
                    done.append((scenario, result, plan))
                    bar(1)
            text = stage_report(outputs, out, as_json,
                                 lambda: [result_json(*item) for item in done],
                                 lambda: [format_table(*item) for item in done])
            outputs.commit()
    except input_errors() as exc:
        fail(exc)
    if text is not None:
        click.echo(text)
