"""A transit posed once: gas, probe channel, path and switching in the gas's
natural units (q = k xi, t in xi/c, speeds in c), with the scales that fix
the grids (switching support, bandwidth and correlation length, path speeds
and acceleration, wavenumber cutoff); and the path sampled on the time grid
of one pass."""
from __future__ import annotations

import math
import os
from dataclasses import dataclass

import numpy as np
from probe import constants as sc
from scipy.optimize import brentq

from probe.engines.transit.geometry import Geometry, path_samples
from probe.engines.transit.grids import TimeGrid
from probe.engines.transit.rules import RuleBook, airy_depth
from probe.engines.transit.threads import available_cpus
from probe.errors import InputError, ModelError

HBAR = sc.hbar
KB = sc.k
#: bytes per node of a time grid: t, chi and the two trapezoid rules (32),
#: the amplitude columns (complex, two per detuning: 64), positions and
#: velocities with their temporaries (~96), and margin; the work arrays of
#: one direction per thread (64 each) come on top
BYTES_PER_TIME_NODE = 256.0


def physical_memory():
    """Bytes of physical memory of the machine (8 GB where it cannot be
    read)."""
    try:
        return float(os.sysconf("SC_PHYS_PAGES") * os.sysconf("SC_PAGE_SIZE"))
    except (AttributeError, ValueError, OSError):
        return 8e9


def _largest_root(g, start=1.0):
    """Largest positive root of an increasing-at-infinity convex g with
    g(0) < 0."""
    hi = start
    for _ in range(200):
        if g(hi) > 0:
            break
        hi *= 2
    else:
        return math.inf
    return brentq(g, 0.0, hi, xtol=1e-12, rtol=1e-12)


@dataclass
class Resolution:
    """The resolution of one pass: factors on the time step (``time``: the
    step is divided by it), the radial step (``radial``, likewise; 0.5 puts
    the full rule at the conjugate-length bound), the angular degree
    (``angular``: multiplies it) and the wavenumber cutoff ``q_max``."""

    q_max: float
    time: float = 1.0
    radial: float = 0.5
    angular: float = 1.0

    def refine(self, bad):
        """Refine the parts whose error estimate missed its share of rtol
        (``bad``: part -> bool): h or dt halved, angular degree x 1.4,
        q_max x 1.5."""
        if bad["radial"]:
            self.radial *= 2
        if bad["time"]:
            self.time *= 2
        if bad["angular"]:
            self.angular *= 1.4
        if bad["cutoff"]:
            self.q_max *= 1.5


@dataclass
class PathSample:
    """The path on the time grid of one pass: the grid, the positions X (in
    xi, minus ``centre``), the path's geometry, the amplitude columns
    chi w_t e^{i D t} (:meth:`TimeGrid.columns`) and the pass's rules."""

    time: TimeGrid
    X: np.ndarray
    centre: np.ndarray
    geom: Geometry
    cols: np.ndarray
    rules: RuleBook


class TransitProblem:
    """The scales of a transit in one of the probe's channels (an item of
    ``probe.channels()``), computed once for all passes.

    A gapped channel has the detunings D = +-Omega (up, down), an ungapped
    one D = 0; its coupling sets the prefactor.  Attributes in natural units: ``d``, ``xi``, ``c``, ``w0``
    (c/xi), ``tu`` (xi/c in s), ``s`` (probe width), ``Tdl`` (k_B T/m c^2),
    ``Om``, ``Ds``, ``t_lo``/``t_hi`` (switching support), ``bw``
    (switching bandwidth), ``corr`` (its correlation length), ``vmax``,
    ``amax`` (path speed and acceleration), ``chirp`` (Airy depth of the
    chirp tail), ``q_max`` (first cutoff), ``edges`` (direction-spectrum bin
    edges or None); ``warnings`` of the switching and the path."""

    def __init__(self, condensate, probe, trajectory, switching, rtol, channel, spectrum=False,
                 spectrum_bins=None, method="auto", max_memory=500e6, workers=None):
        self.condensate, self.probe = condensate, probe
        self.trajectory, self.switching = trajectory, switching
        self.rtol, self.spectrum, self.spectrum_bins = rtol, spectrum, spectrum_bins
        self.method, self.max_memory = method, max_memory
        self.d = condensate.dimension
        self.disp = condensate.dispersion
        self.xi, self.c = condensate.healing_length, condensate.sound_speed
        self.w0 = condensate.frequency_unit
        self.tu = 1.0 / self.w0                         # time unit xi/c, s
        self.s = probe.width / self.xi
        self.Tdl = KB * condensate.temperature / condensate.energy_unit
        self._detunings(channel)
        self.workers = workers or available_cpus()
        self.warnings = list(switching.warnings)
        self.warnings += list(getattr(trajectory, "warnings", []) or [])
        self._switching_scales()
        self._path_scales()
        self.q_max = self._wavenumber_cutoff()
        self.edges = self._spectrum_edges()
        #: what a route keeps from one pass to the next (the pair route's
        #: lag moments of a coarser time grid serve as the next one's sub-rule)
        self.route_cache = {}

    def _detunings(self, channel):
        self.channel = channel
        if channel.gapped:
            gap = np.asarray(channel.detuning, float)
            if gap.ndim:
                raise InputError(channel.key, "a transit needs a single gap, got an array")
            self.Om = float(gap) / self.w0
            self.Ds = (self.Om, -self.Om)
        else:
            self.Om = 0.0
            self.Ds = (0.0,)
        self.nD = len(self.Ds)

    def _switching_scales(self):
        sw, tu, rtol = self.switching, self.tu, self.rtol
        eps_t = max(1e-16, 1e-3 * rtol ** 2)
        self.t_lo, self.t_hi = (x / tu for x in sw.extent(eps_t))
        if sw.hard_cut:
            self.t_lo, self.t_hi = (x / tu for x in sw.support)
        # amplitude level of the switching spectrum treated as negligible:
        # weak channels (off-resonant, thermal) sit far below the resonant scale
        eps_a = 1e-3 * rtol
        bw = sw.bandwidth(eps_a) * tu
        self.corr = sw.correlation_length(1e-2 * rtol) / tu
        if not math.isfinite(bw):
            if self.s == 0:
                raise ModelError(
                    "trajectory.ramp",
                    "a hard-cut switching (ramp = 0) with a point probe (width 0) "
                    "excites phonons of every wavenumber: the k-integral converges "
                    "only algebraically; give the switching a ramp or the probe a width")
            bw = None
        self.bw = bw

    def _path_scales(self):
        """A coarse look at the path for its largest speed and acceleration.
        Acceleration broadens the local frequency by ~ sqrt(q |a|) (a chirp
        of rate q a over its coherence time); it enters the detuning cutoff
        and the time step with the depth of its Airy-like tail at the
        tolerance."""
        t_probe = np.linspace(self.t_lo, self.t_hi, 4097)
        _, V0 = path_samples(self.trajectory, t_probe * self.tu, self.d, self.xi, self.c)
        self.vmax = float(np.sqrt((V0 ** 2).sum(axis=1)).max()) * 1.01
        A0 = np.asarray(self.trajectory.acceleration(t_probe * self.tu),
                        float).reshape(t_probe.size, -1)
        self.amax = float(np.sqrt((A0 ** 2).sum(axis=1)).max()) * self.tu / self.c
        self.chirp = airy_depth(0.1 * self.rtol)

    def _wavenumber_cutoff(self):
        """Where the form factor or the detuning (off-resonance beyond the
        switching bandwidth) makes the integrand negligible; sets the
        bandwidth of a hard cut from it."""
        disp, s, vmax = self.disp, self.s, self.vmax
        q_form = math.sqrt(math.log(1.0 / (1e-1 * self.rtol))) / s if s > 0 else math.inf
        self._q_form = q_form
        q_res = math.inf
        if self.bw is not None:
            W = abs(self.Om) + self.bw
            if disp.bounded_windows or vmax < 1:
                q_res = _largest_root(lambda q: float(disp.omega(q)) - vmax * q - W
                                      - self.chirp * math.sqrt(q * self.amax),
                                      start=max(1.0, W))
        q_max = min(q_form, q_res) * 1.05
        if not math.isfinite(q_max):
            raise ModelError(
                "condensate.dispersion",
                "the emitted wavenumbers are unbounded (phonon dispersion at or "
                "above the sound speed with a point probe): the probability "
                "diverges; give the probe a width or use 'bogoliubov'")
        if self.bw is None:
            self.bw = float(disp.omega(q_max)) + q_max * vmax
        return q_max

    def _spectrum_edges(self):
        """Bin edges of the direction spectrum: 3D in cos theta (40 bins by
        default), 2D in phi (72); None without a spectrum and in 1D."""
        if not self.spectrum:
            return None
        if self.d == 3:
            return np.linspace(-1, 1, (self.spectrum_bins or 40) + 1)
        if self.d == 2:
            return np.linspace(-np.pi, np.pi, (self.spectrum_bins or 72) + 1)
        return None

    @property
    def prefactor(self):
        """A xi^-d (xi/c)^2 with A = (kappa/hbar)^2 n: the dimensionless
        integrals -> probabilities."""
        A = (self.channel.coupling / HBAR) ** 2 * self.condensate.density
        return A * self.xi ** (-self.d) * self.tu ** 2

    def highest_frequency(self, q_max, switching=True):
        """The highest frequency of the amplitudes' integrands up to q_max:
        gap, phonon frequency, Doppler shift, the chirp's margin and (with
        ``switching``) the switching's bandwidth."""
        F = (abs(self.Om) + float(self.disp.omega(q_max)) + q_max * self.vmax
             + self.chirp * math.sqrt(q_max * self.amax))
        return max(F + (self.bw if switching else 0.0), 1e-12)

    def sample(self, res):
        """The path on the time grid of a pass at resolution ``res``: 2 dt
        clears the highest frequency plus the switching bandwidth."""
        q_max = res.q_max
        F = self.highest_frequency(q_max)
        dt_target = math.pi / F / res.time
        nt = max(8, int(math.ceil(min((self.t_hi - self.t_lo) / dt_target, 1e300))))
        nt += nt % 2
        self.check_time_nodes(nt, q_max)
        grid = TimeGrid(self.t_lo, self.t_hi, nt, self.switching, self.tu)
        X, V = path_samples(self.trajectory, grid.t * self.tu, self.d, self.xi, self.c)
        vmax_grid = float(np.sqrt((V ** 2).sum(axis=1)).max())
        mask = grid.chi >= 1e-2 * self.rtol
        geom, centre = Geometry.of_path(self.d, X, V, grid.chi, mask, self.corr,
                                        max(self.vmax, vmax_grid))
        X = np.ascontiguousarray(X - centre)
        return PathSample(grid, X, centre, geom, grid.columns(self.Ds),
                          RuleBook(geom, self.edges))

    def on_steps(self, sample, nt):
        """The same pass on a time grid of exactly ``nt`` steps over the
        support: the even nodes of 2 nt steps are the nodes of nt."""
        grid = TimeGrid(self.t_lo, self.t_hi, nt, self.switching, self.tu)
        X, _ = path_samples(self.trajectory, grid.t * self.tu, self.d, self.xi, self.c)
        X = np.ascontiguousarray(X - sample.centre)
        return PathSample(grid, X, sample.centre, sample.geom, None, sample.rules)

    def resample(self, sample, dt):
        """The same pass on a time grid of step ``dt`` from t_lo (covering
        the support, extended by under one step); geometry, centre and rules
        are kept."""
        nt = int(math.ceil((self.t_hi - self.t_lo) / dt * (1 - 1e-12)))
        nt += nt % 2
        self.check_time_nodes(nt, self.q_max)
        grid = TimeGrid(self.t_lo, self.t_hi, nt, self.switching, self.tu, dt)
        X, _ = path_samples(self.trajectory, grid.t * self.tu, self.d, self.xi, self.c)
        X = np.ascontiguousarray(X - sample.centre)
        return PathSample(grid, X, sample.centre, sample.geom, grid.columns(self.Ds),
                          sample.rules)

    def check_time_nodes(self, nt, q_max):
        """ModelError before a time grid of ``nt`` nodes is allocated that
        would not fit in the machine: each node holds about
        BYTES_PER_TIME_NODE bytes (grid, amplitude columns, positions and a
        direction's work arrays per thread), and half the physical memory is
        the most a pass may take.  The key named is that of the largest term
        of the highest frequency the step resolves: the gap, the Doppler
        shift q_max v (speed), the phonon frequency w(q_max) where the probe
        width sets q_max, or the switching's bandwidth."""
        per_node = BYTES_PER_TIME_NODE + 64.0 * self.workers
        limit = 0.5 * physical_memory() / per_node
        if nt <= limit:
            return
        phonons = float(self.disp.omega(q_max)) + q_max * self.vmax
        # where the resonance sets q_max, w(q_max) ~ gap + speed q_max +
        # bandwidth is counted in those; where the form factor does, the width
        terms = {"trajectory.speed": q_max * self.vmax, "trajectory.switching": self.bw}
        if self.channel.gapped:
            terms[self.channel.key] = abs(self.Om)
        if self.s > 0 and q_max < 1.1 * self._q_form:
            terms["probe.width"] = float(self.disp.omega(q_max))
        key = max(terms, key=terms.get)
        span = self.t_hi - self.t_lo
        raise ModelError(
            key, f"the transit's time grid needs {nt:.3g} nodes (about "
                 f"{nt * per_node / 1e9:.3g} GB) to resolve its highest frequency "
                 f"(gap {abs(self.Om):.3g}, phonons up to {phonons:.3g}, switching bandwidth "
                 f"{self.bw:.3g} c/xi) over the switching's {span:.3g} xi/c; this machine holds "
                 f"at most {limit:.3g} ({physical_memory() / 2e9:.3g} GB, half its memory): "
                 "lower the gap or speed, widen the probe or shorten the switching")

    def node_tolerances(self, grid, per_frequency=False):
        """Relative accuracy each node's angular integral needs, from its
        weight q^(d-1) S |F|^2 dq against the largest one (|a|^2 is bounded
        by (int chi)^2 at every node; the angular check confirms it); on a
        frequency-uniform grid dq per node carries 1/v_g."""
        q_e = grid.qeval
        wnode = q_e ** (self.d - 1) * self.disp.structure_factor(q_e) * np.exp(
            -(q_e * self.s) ** 2)
        if per_frequency:
            wnode = wnode / self.disp.group_velocity(grid.qn)
        return np.clip(0.1 * self.rtol * wnode.max() / np.maximum(wnode, 1e-300), 1e-16, 0.3)
