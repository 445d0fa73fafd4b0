"""Side-by-side comparison of detector-response models on one grid.

``compare(config, vary)`` evaluates the sweep grid for the configured model
and for variants that change one modelling choice each:

* ``probe``: the configured probe model versus each other registered model
  that takes the same parameters apart from its array keys (two-level
  versus the structureless density probe; a density configuration needs
  ``gap`` for its two-level variant);
* ``dispersion``: Bogoliubov versus linear phonon dispersion;
* ``width``: point probe versus finite width (a point-probe configuration
  needs ``width`` for its finite-width variant);
* ``temperature``: T = 0 versus the configured temperature (a T = 0
  configuration needs ``temperature``).

Points where a model has no finite answer (the engine's ``ModelError``, e.g.
the supersonic point probe with the phonon dispersion, whose emitted
wavenumbers are unbounded) are kept as NaN with status ``diverges``.  The
``statements`` list says, in words, where each variant differs from the
configured model.

Python use::

    from probe.design.compare import compare
    cmp = compare("examples/box3d_supersonic.toml",
                  vary=[("trajectory.speed", "0.5 c_s", "3 c_s", 51)])
    cmp.columns, cmp.units, cmp.data      # the side-by-side table (SI)
    print("\\n".join(cmp.statements))
"""
from __future__ import annotations

import copy
import re
from dataclasses import dataclass, field

import numpy as np

from probe.errors import InputError
from probe.design.gapscan import sweep_over_gaps
from probe.design.sweep import (axis_value_text, cell_text, format_value, plan_sweep,
                                raw_config, sweep, write_csv)
from probe.design.sweep.evaluators import model_parameters
from probe.quantities import counted, headline, kind_of, si_unit
from probe.scenarios.planning import without_planning

COMPARISONS = ("probe", "dispersion", "width", "temperature")
#: relative difference above which two models are said to differ
TOLERANCE = 0.1


@dataclass
class Variant:
    """One model: ``name`` (used in column names), ``label`` (in plots and
    text), the comparison it belongs to ('' for the configured model), its
    configuration dict and its :class:`probe.sweep.SweepResult`."""

    name: str
    label: str
    comparison: str
    raw: dict
    result: object = None
    plan: object = None

    @property
    def quantities(self):
        """The headline quantities of the result (``probe.quantities``)."""
        names = headline(self.result.columns)
        if not names:
            raise KeyError("no headline column (rate or probability)")
        return names

    @property
    def main(self):
        return self.quantities[0]

    def status(self):
        """'ok', 'diverges' or 'no result' per point."""
        out = []
        for w in self.result.warnings:
            if w.startswith("no result"):
                out.append("diverges" if "diverges" in w.split(" | ")[0] else "no result")
            else:
                out.append("ok")
        return out

    def reason(self):
        """The engine's message at the first point without a result."""
        for w in self.result.warnings:
            if w.startswith("no result"):
                return w.split(" | ")[0][len("no result: "):]
        return None


@dataclass
class Comparison:
    """The models evaluated on one grid, the side-by-side table and the
    stated differences."""

    variants: list
    axes: list
    shape: tuple
    tolerance: float
    notes: list = field(default_factory=list)
    statements: list = field(default_factory=list)

    @property
    def base(self):
        return self.variants[0]

    @property
    def columns(self):
        return [c for c, _ in self._spec()]

    @property
    def units(self):
        return [u for _, u in self._spec()]

    def _spec(self):
        base = self.base.result
        spec = [("point", "1")] + [(a.key, base.unit(a.key)) for a in self.axes]
        spec += [("sound_speed", "m/s")]
        for v in self.variants:
            spec += [(f"{q}:{v.name}", v.result.unit(q)) for q in v.quantities]
        spec += [(f"status:{v.name}", "text") for v in self.variants]
        return spec

    @property
    def data(self):
        """Numeric part of the table (points, numeric columns), SI."""
        base = self.base.result
        cols = [base.column("point")] + [base.column(a.key) for a in self.axes]
        cols.append(base.column("sound_speed"))
        for v in self.variants:
            cols += [v.result.column(q) for q in v.quantities]
        return np.column_stack(cols)

    def column(self, name):
        spec = self.columns
        if name not in spec:
            raise KeyError(f"no column {name!r}; columns: {', '.join(spec)}")
        if name.startswith("status:"):
            v = next(v for v in self.variants if f"status:{v.name}" == name)
            return np.array(v.status(), dtype=object)
        return self.data[:, spec.index(name)]

    def to_csv(self, path):
        """Write the side-by-side table (atomically)."""
        header = [f"{c} [{u}]" for c, u in self._spec()]
        data = self.data
        names = self.columns
        status = [v.status() for v in self.variants]
        rows = []
        for i in range(data.shape[0]):
            cells = [cell_text(x, integer=(names[j] == "point")) for j, x in enumerate(data[i])]
            cells += [s[i] for s in status]
            rows.append(cells)
        write_csv(path, header, rows)

    def summary(self, max_rows=11):
        """Printed summary: the models, the differences and a short table."""
        lines = []
        grid = ", ".join(f"{a.key} = {a.start} .. {a.stop} ({counted(a.size, 'point')}"
                         f"{', log' if a.log else ''})" for a in self.axes)
        lines.append(f"Model comparison over {grid}")
        lines.append(f"  configured: {self.base.label}")
        for v in self.variants[1:]:
            lines.append(f"  {v.comparison:<11} {v.label}")
        lines.append(f"Differences (tolerance {self.tolerance:.0%} relative)")
        lines += [f"  - {s}" for s in self.statements] or ["  (none)"]
        if self.notes:
            lines.append("Not compared")
            lines += [f"  - {n}" for n in self.notes]
        if len(self.axes) == 1:
            lines.append("Table (selected rows; the full table with --out)")
            lines += self._short_table(max_rows)
        return "\n".join(lines)

    def _short_table(self, max_rows):
        base = self.base.result
        n = base.data.shape[0]
        pick = np.unique(np.linspace(0, n - 1, min(n, max_rows)).round().astype(int))
        ax = self.axes[0]
        c = base.column("sound_speed")
        heads = [ax.key] + [f"{v.main}:{v.name}" for v in self.variants]
        cells = []
        for i in pick:
            row = [axis_value_text(ax, base.column(ax.key)[i], c[i])]
            for v in self.variants:
                st = v.status()[i]
                row.append(st if st != "ok" else f"{v.result.column(v.main)[i]:.4g}")
            cells.append(row)
        widths = [max(len(h), *(len(r[k]) for r in cells)) for k, h in enumerate(heads)]
        out = ["  " + "  ".join(h.rjust(w) for h, w in zip(heads, widths))]
        out += ["  " + "  ".join(x.rjust(w) for x, w in zip(r, widths)) for r in cells]
        unit = "1/s" if all(v.result.unit(v.main) == "1/s" for v in self.variants) else ""
        if unit:
            out.append(f"  (rates in {unit})")
        return out


# ---------------------------------------------------------------------------
# building the variants
# ---------------------------------------------------------------------------
def _describe(raw, scenario):
    p, cond = scenario.probe, scenario.condensate
    own = [f"{arg} {format_value(kind_of(arg), si_unit(kind_of(arg)), getattr(p, arg))}"
           for arg in p.array_keys.values()]
    parts = [f"{p.name} probe" + (f" ({', '.join(own)})" if own else "")]
    parts.append(f"{cond.dispersion.name} dispersion")
    parts.append("point probe" if p.width == 0 else
                 f"width {format_value('length', 'm', p.width)}")
    parts.append(f"T = {format_value('temperature', 'K', cond.temperature)}"
                 if cond.temperature > 0 else "T = 0")
    return ", ".join(parts)


class _Skip(Exception):
    """A comparison that does not apply to this configuration (why)."""


def _counterparts(probe):
    """The other registered probe models that take the same parameters as
    ``probe`` apart from array keys (parameters such as the gap): name ->
    class."""
    from probe.detectors import PROBE_MODELS

    mine = type(probe)

    def common(model):
        return set(model_parameters(model)) - set(model.array_keys.values())
    return {name: model for name, model in PROBE_MODELS.items()
            if model is not mine and common(model) == common(mine)}


def _probe_variants(raw, base, varied, given):
    """The configured probe model swapped for each counterpart: its array
    parameters that the counterpart lacks are removed (not while varied),
    those the counterpart needs come from ``given`` (configuration key ->
    value, from --gap)."""
    mine = type(base.probe).array_keys
    out = []
    for name, model in _counterparts(base.probe).items():
        r = copy.deepcopy(raw)
        r["probe"]["model"] = name
        for key, arg in mine.items():
            if key not in model.array_keys:
                if key in varied:
                    raise _Skip(f"{key} is varied and the {name} probe has no {arg}")
                r["probe"].pop(key.split(".", 1)[1], None)
        needed = [(key, arg) for key, arg in model.array_keys.items() if key not in mine]
        for key, arg in needed:
            if given.get(key) is None:
                raise _Skip(f"the configured probe is a {base.probe.name} probe; give "
                            f"--{arg} for its {name} variant")
            r["probe"][key.split(".", 1)[1]] = given[key]
        what = ", ".join(f"{arg} {given[key]}" for key, arg in needed) or "structureless"
        out.append((name.replace("-", "_"), f"{name} probe ({what})", r))
    for name, label, table in base.probe.reference_detectors(base.condensate.dimension):
        r = copy.deepcopy(raw)
        r["probe"] = table
        out.append((name, label, r))
    return out


def _dispersion_variants(raw, base, varied, given):
    other = "phonon" if base.condensate.dispersion.name == "bogoliubov" else "bogoliubov"
    r = copy.deepcopy(raw)
    r["condensate"]["dispersion"] = other
    return [(other, f"{other} dispersion", r)]


def _width_variants(raw, base, varied, given):
    if "probe.width" in varied:
        raise _Skip("probe.width is varied")
    r = copy.deepcopy(raw)
    r["probe"].pop("tweezer_frequency", None)     # the other way to set the width
    if base.probe.width > 0:
        r["probe"]["width"] = "0 um"
        return [("point", "point probe (width 0)", r)]
    width = given.get("probe.width")
    if width is None:
        raise _Skip("the configured probe is point-like; give --width "
                    "for a finite-width variant")
    r["probe"]["width"] = width
    return [("wide", f"finite width {_spaced(width)}", r)]


def _temperature_variants(raw, base, varied, given):
    if "condensate.temperature" in varied:
        raise _Skip("condensate.temperature is varied")
    r = copy.deepcopy(raw)
    if base.condensate.temperature > 0:
        r["condensate"]["temperature"] = "0 K"
        return [("T0", "T = 0", r)]
    temperature = given.get("condensate.temperature")
    if temperature is None:
        raise _Skip("the configured gas is at T = 0; give --temperature "
                    "for a thermal variant")
    r["condensate"]["temperature"] = temperature
    return [("thermal", f"T = {_spaced(temperature)}", r)]


def _spaced(text):
    """A value as written, with a space between number and unit ('10nK' ->
    '10 nK')."""
    return re.sub(r"^\s*([-+]?[0-9.]+(?:[eE][-+]?[0-9]+)?)\s*(?=\S)", r"\1 ", str(text))


#: comparison -> the variants it makes: ``f(raw, base scenario, varied
#: keys, given values) -> [(name, label, raw)]`` (``_Skip`` where it does
#: not apply)
_BUILDERS = {"probe": _probe_variants, "dispersion": _dispersion_variants,
             "width": _width_variants, "temperature": _temperature_variants}


def _variants(raw, base, varied, wanted, given):
    """[(comparison, name, label, raw)] and notes for those skipped;
    ``given`` maps configuration keys to the values of --gap, --width and
    --temperature."""
    out, notes = [], []
    for comp in (list(COMPARISONS) if wanted is None else wanted):
        if comp not in _BUILDERS:
            raise InputError("--models", f"unknown comparison {comp!r}; allowed: "
                                         f"{', '.join(COMPARISONS)}")
        try:
            out += [(comp, *v) for v in _BUILDERS[comp](raw, base, varied, given)]
        except _Skip as why:
            if wanted is not None:
                raise InputError("--models", f"{comp}: {why}") from None
            notes.append(f"{comp}: {why}")
    return out, notes


def compare(config, vary, log=(), models=None, overrides=(), gap=None, width=None,
            temperature=None, workers=1, scheduler=None, tolerance=TOLERANCE,
            removals=(), progress=None):
    """Evaluate the grid for the configured model and its variants.

    ``models``: a list from ``COMPARISONS`` (default: all that apply; those
    that cannot apply are listed in ``notes``).  ``gap``, ``width`` and
    ``temperature`` (strings with units) supply the parameter of a variant
    that the configuration does not have.  ``removals`` ("section.key") and
    ``overrides`` ("section.key=value") edit the configuration first, as
    ``--unset`` and ``--set``.  ``progress`` is called with the number of
    points just finished (as by :func:`sweep`); its ``grow(n)``, when it
    has one, is told the points of all models first.  Returns a
    :class:`Comparison`.
    """
    from probe.scenarios.config import scenario_from_dict

    raw, source = raw_config(config, overrides, removals=removals)
    raw = without_planning(raw)          # the models compared at the nominal inputs
    plan = plan_sweep(raw, vary, log, source=source)
    base = plan.scenario
    varied = {a.key for a in plan.axes}
    if models is not None:
        if not models:
            raise InputError("--models", f"give at least one of {', '.join(COMPARISONS)}")
        for m in models:
            if m not in COMPARISONS:
                raise InputError("--models", f"unknown comparison {m!r}; allowed: "
                                             f"{', '.join(COMPARISONS)}")
    given = {"probe.gap": gap, "probe.width": width, "condensate.temperature": temperature}
    specs, notes = _variants(raw, base, varied, models, given)
    variants = [Variant("configured", _describe(raw, base), "", raw)]
    for comp, name, label, r in specs:
        try:
            scenario_from_dict(r, source=source)
            plan_v = plan_sweep(r, vary, log, source=source)
        except InputError as exc:
            raise InputError(exc.key, f"{label}: {exc.message}") from None
        variants.append(Variant(name, label, comp, r))
        variants[-1].plan = plan_v
    variants[0].plan = plan
    if hasattr(progress, "grow"):
        progress.grow(sum(v.plan.size for v in variants))
    for v in variants:
        # a transit over its probe's gap: every point from shared lag sums
        v.result = sweep_over_gaps(v.plan, workers=workers, scheduler=scheduler,
                                   progress=progress)
    cmp = Comparison(variants=variants, axes=plan.axes, shape=plan.shape,
                     tolerance=float(tolerance), notes=notes)
    cmp.statements = _statements(cmp)
    return cmp


# ---------------------------------------------------------------------------
# stating the differences
# ---------------------------------------------------------------------------
def _extent(cmp, mask):
    """Where ``mask`` holds, as 'key a .. b' for each axis."""
    base = cmp.base.result
    c = base.column("sound_speed")
    parts = []
    for ax in cmp.axes:
        vals = base.column(ax.key)[mask]
        cs = c[mask]
        lo, hi = int(np.argmin(vals)), int(np.argmax(vals))
        a = axis_value_text(ax, vals[lo], cs[lo])
        b = axis_value_text(ax, vals[hi], cs[hi])
        parts.append(f"{ax.key} = {a}" if lo == hi else f"{ax.key} {a} .. {b}")
    return ", ".join(parts)


def _at(cmp, i):
    base = cmp.base.result
    c = base.column("sound_speed")[i]
    return ", ".join(f"{ax.key} = {axis_value_text(ax, base.column(ax.key)[i], c)}"
                     for ax in cmp.axes)


def _onset(cmp, v, q):
    """1D grids: the first grid value where ``q`` is > 0 (None if never)."""
    vals = v.result.column(q)
    pos = np.nonzero(np.isfinite(vals) & (vals > 0))[0]
    if pos.size == 0:
        return None
    return _at(cmp, int(pos[0])) if pos[0] > 0 else "from the start of the grid"


def _statements(cmp):
    out = []
    base = cmp.base
    n = base.result.data.shape[0]
    tol = cmp.tolerance
    for v in cmp.variants[1:]:
        st = np.array(v.status())
        bad = st != "ok"
        if bad.any():
            word = "diverges" if (st == "diverges").any() else "has no result"
            out.append(f"{v.label}: {v.main} {word} at {int(bad.sum())} of "
                       f"{counted(n, 'point')} "
                       f"({_extent(cmp, bad)}): {v.reason()}")
        bst = np.array(base.status())
        if (bst != "ok").any() and not bad.all():
            out.append(f"configured model has no result at "
                       f"{counted(int((bst != 'ok').sum()), 'point')} where the {v.label} "
                       "has one")
        shared = [q for q in v.quantities if q in base.quantities]
        for q in shared:
            a, b = base.result.column(q), v.result.column(q)
            ok = np.isfinite(a) & np.isfinite(b)
            with np.errstate(invalid="ignore", divide="ignore"):
                scale = np.maximum(np.abs(a), np.abs(b))
                rel = np.where(scale > 0, np.abs(a - b) / np.where(scale > 0, scale, 1), 0.0)
            rel = np.where(ok, rel, 0.0)
            only_base = ok & (a > 0) & (b == 0)
            only_var = ok & (b > 0) & (a == 0)
            if only_base.any():
                out.append(f"{v.label}: {q} vanishes at {counted(int(only_base.sum()), 'point')} "
                           f"where the configured model's is nonzero ({_extent(cmp, only_base)})")
            if only_var.any():
                out.append(f"{v.label}: {q} is nonzero at {counted(int(only_var.sum()), 'point')} "
                           f"where the configured model's vanishes ({_extent(cmp, only_var)})")
            big = rel > tol
            both = int(ok.sum())
            where = "every point" if both == n else f"the {counted(both, 'point')} where both are finite"
            if big.any():
                out.append(f"{v.label}: {q} differs by more than {tol:.0%} at "
                           f"{int(big.sum())} of {counted(both, 'point')} with both finite "
                           f"({_extent(cmp, big)}); {_largest(cmp, v, q, a, b, ok)}")
            elif ok.any() and np.all((a[ok] == 0) & (b[ok] == 0)):
                out.append(f"{v.label}: {q} vanishes in both models at {where}")
            elif ok.any():
                out.append(f"{v.label}: {q} agrees within {tol:.0%} at {where} "
                           f"(largest difference {float(rel.max()):.2%})")
        if v.comparison == "width":
            out.append(_width_note(cmp, v))
        if not shared or v.comparison == "probe":
            for q_var in v.quantities[:1]:
                out.append(_support_statement(cmp, base, base.main, v, q_var))
    return [s for s in out if s]


def _value_text(x, unit):
    return f"{x:.4g} {unit}" if unit not in ("", "1") else f"{x:.4g}"


def _largest(cmp, v, q, a, b, ok):
    """The largest absolute difference of ``q`` between the configured
    model (``a``) and variant ``v`` (``b``) over the points ``ok`` (both
    finite), with both values; then, where both are nonzero, the largest
    ratio (where one of them vanishes the ratio is infinite: those points
    are stated on their own)."""
    unit = v.result.unit(q)
    diff = np.where(ok, np.abs(a - b), -np.inf)
    i = int(np.argmax(diff))
    text = (f"largest difference {_value_text(abs(b[i] - a[i]), unit)} at {_at(cmp, i)} "
            f"({v.name} {_value_text(b[i], unit)}, configured {_value_text(a[i], unit)})")
    nonzero = ok & (a != 0) & (b != 0)
    if nonzero.any():
        with np.errstate(divide="ignore", invalid="ignore"):
            spread = np.where(nonzero, np.maximum(b / a, a / b), -np.inf)
        j = int(np.argmax(spread))
        text += (f"; where both are nonzero the largest ratio is {v.name}/configured = "
                 f"{b[j] / a[j]:.3g} at {_at(cmp, j)}")
    return text


def _support_statement(cmp, base, qb, v, qv):
    a, b = base.result.column(qb), v.result.column(qv)
    na = int(np.sum(np.isfinite(a) & (a > 0)))
    nb = int(np.sum(np.isfinite(b) & (b > 0)))
    text = (f"{v.label}: {qv} is nonzero at {counted(nb, 'point')}, the configured "
            f"{qb} at {counted(na, 'point')}")
    if len(cmp.axes) == 1:
        oa, ob = _onset(cmp, base, qb), _onset(cmp, v, qv)
        text += (f"; onset of {qb}: {oa or 'none on the grid'}, of {qv}: "
                 f"{ob or 'none on the grid'}")
    return text


def _width_note(cmp, v):
    """Where the form factor cuts the spectrum: wavenumbers above 1/s."""
    def width_of(var):
        return float(var.result.meta["scenario"]["probe"]["width"])
    s = max(width_of(v), width_of(cmp.base))
    xi = float(cmp.base.result.column("healing_length")[0])
    if s <= 0:
        return ""
    return (f"the form factor exp(-k^2 s^2) of the {s * 1e6:.3g} um wide probe cuts "
            f"the spectrum above k ~ 1/s = {xi / s:.3g}/xi "
            f"(k xi ~ 1 is where the Bogoliubov spectrum turns from phonons to particles)")


__all__ = ["compare", "Comparison", "Variant", "COMPARISONS", "TOLERANCE"]
