import math
from pathlib import Path

import numpy as np
import pytest
from scipy import constants as sc
from scipy.special import zeta

from probe.errors import InputError
from probe.gas.condensate import Condensate
from probe.detectors import DensityProbe, TwoLevelProbe
from probe.engines.regime import regime_warnings
from probe.engines.results import RateResult

from conftest import NA23_MASS, RB87_MASS

M_RB, M_NA = RB87_MASS, NA23_MASS
TWO_PI = 2 * math.pi
EXAMPLES = Path(__file__).resolve().parent.parent / "examples"


def rb3d(**kw):
    args = dict(dimension=3, mass=M_RB, density=1.2e20, scattering_length=5.3e-9)
    args.update(kw)
    return Condensate(**args)


def result_for(cond, probe, speed=0.0, up=1e-3, down=1e-2):
    res = RateResult(kind="inertial", model=probe.name, sound_speed=cond.sound_speed,
                     healing_length=cond.healing_length,
                     chemical_potential=cond.chemical_potential, speed=speed)
    if probe.has_gap:
        res.gap = probe.gap
        res.up_rate, res.down_rate = up, down
    else:
        res.emission_rate, res.absorption_rate = up, down
    return res


def two_level(gap_hz=200.0, width=0.0):
    return TwoLevelProbe(TWO_PI * gap_hz, 1e-51, width)


def warnings_for(cond, probe, **kw):
    return regime_warnings(cond, probe, result_for(cond, probe, **kw))


def matching(ws, text):
    return [w for w in ws if text in w]


def test_benign_case_has_no_warnings():
    cond = rb3d()
    assert warnings_for(cond, two_level(), speed=0.5 * cond.sound_speed) == []


def test_rate_not_small_against_gap():
    # first-order perturbation theory needs Gamma << Omega (golden rule
    # validity; e.g. Cohen-Tannoudji, Quantum Mechanics, ch. XIII)
    cond, p = rb3d(), two_level()
    omega = TWO_PI * 200
    ws = warnings_for(cond, p, up=0.2 * omega, down=0.05 * omega)
    hit = matching(ws, "first-order")
    assert len(hit) == 1 and "up rate" in hit[0] and "0.2 of the gap" in hit[0]
    assert matching(warnings_for(cond, p, up=0.05 * omega, down=0.09 * omega),
                    "first-order") == []
    # arrays of rates and gaps (a parameter scan) are handled element-wise
    res = result_for(cond, p, up=np.array([1.0, 2.0]), down=np.array([1.0, 300.0]))
    res.gap = np.array([omega, 2 * omega])
    hit = matching(regime_warnings(cond, p, res), "first-order")
    assert len(hit) == 1 and "down rate 300" in hit[0]


def test_density_model_has_no_gap_check():
    cond = rb3d()
    assert warnings_for(cond, DensityProbe(1e-51), up=1e9, down=1e9) == []


def test_3d_gas_parameter():
    # diluteness n a^3 << 1 (Bogoliubov expansion parameter; common-practice
    # limit 1e-3)
    ws = warnings_for(rb3d(density=1e20, scattering_length=1e-7), two_level())
    hit = matching(ws, "n a^3")
    assert len(hit) == 1 and "0.1 exceeds 0.001" in hit[0]
    assert matching(warnings_for(rb3d(density=1e20, scattering_length=1e-8),
                                 two_level()), "n a^3") == []


def test_1d_lieb_liniger_gamma():
    # gamma = m g_1 / (hbar^2 n) with g_1 = 2 hbar w_perp a (Olshanii 1998;
    # Lieb and Liniger 1963); Bogoliubov needs gamma << 1
    wperp = TWO_PI * 2e3
    gamma = lambda n: 2 * M_RB * wperp * 5.3e-9 / (sc.hbar * n)
    lo_n, hi_n = 1e6, 1e8
    assert gamma(lo_n) > 0.1 > gamma(hi_n)
    for n, expect in ((lo_n, 1), (hi_n, 0)):
        cond = Condensate(1, M_RB, n, 5.3e-9, transverse_frequency=wperp)
        assert len(matching(warnings_for(cond, two_level(1.0)), "Lieb-Liniger")) == expect


def test_2d_quasi_reduction_needs_mu_below_transverse_level():
    # quasi-2D needs mu < hbar w_perp (Petrov, Holzmann, Shlyapnikov 2000)
    wperp = TWO_PI * 1e3
    hot = Condensate(2, M_NA, 2e14, 2.75e-9, transverse_frequency=wperp)
    cold = Condensate(2, M_NA, 5e13, 2.75e-9, transverse_frequency=wperp)
    assert hot.chemical_potential > sc.hbar * wperp > cold.chemical_potential
    hit = matching(warnings_for(hot, two_level(50.0)), "quasi-2D reduction fails")
    assert len(hit) == 1 and "1000 Hz" in hit[0]
    assert matching(warnings_for(cold, two_level(50.0)), "quasi-2D") == []


def test_2d_gas_parameter():
    # g_2 m / hbar^2 = sqrt(8 pi) a / l_z (Petrov et al. 2000); large a, tight trap
    cond = Condensate(2, M_NA, 1e12, 5e-8, transverse_frequency=TWO_PI * 5e4)
    assert cond.gas_parameter > 0.1
    assert len(matching(warnings_for(cond, two_level(1.0)), "g_2 m / hbar^2")) == 1


def test_3d_temperature_against_ideal_gas_tc():
    # ideal-gas T_c = (2 pi hbar^2 / (m k_B)) (n / zeta(3/2))^(2/3)
    # (Pitaevskii and Stringari, ch. 3)
    n = 1.2e20
    tc = 2 * math.pi * sc.hbar**2 / (M_RB * sc.k) * (n / zeta(1.5)) ** (2 / 3)
    hot = warnings_for(rb3d(temperature=0.6 * tc), two_level())
    cool = warnings_for(rb3d(temperature=0.4 * tc), two_level())
    assert len(matching(hot, "T_c")) == 1 and "0.6 of the ideal-gas" in hot[0]
    assert matching(cool, "T_c") == []


def test_low_dimensional_temperature_against_mu():
    # common-practice criterion k_B T < mu for a quasi-condensate
    cond = Condensate(1, M_RB, 5e7, 5.3e-9, transverse_frequency=TWO_PI * 2e3)
    t_mu = cond.chemical_potential / sc.k
    for factor, expect in ((1.2, 1), (0.8, 0)):
        c = Condensate(1, M_RB, 5e7, 5.3e-9, transverse_frequency=TWO_PI * 2e3,
                       temperature=factor * t_mu)
        assert len(matching(warnings_for(c, two_level(10.0)), "thermal fluctuations")) == expect


def test_phonon_dispersion_where_curvature_matters():
    # Bogoliubov w = c k sqrt(1 + (k xi)^2 / 4) vs phonon w = c k
    # (Pitaevskii and Stringari, ch. 6): relevant k xi > 0.3 should warn
    phon = rb3d(dispersion="phonon")
    bog = rb3d()
    w0 = phon.sound_speed / phon.healing_length          # c/xi
    small = TwoLevelProbe(0.2 * w0, 1e-51)
    large = TwoLevelProbe(0.5 * w0, 1e-51)
    c = phon.sound_speed
    assert matching(warnings_for(phon, small), "phonon dispersion") == []
    assert len(matching(warnings_for(phon, large), "phonon dispersion")) == 1
    assert matching(warnings_for(bog, large), "phonon dispersion") == []
    # Doppler: resonance at k = Omega / (c - v); 0.2 / (1 - 0.5) = 0.4 > 0.3
    assert len(matching(warnings_for(phon, small, speed=0.5 * c), "phonon")) == 1
    # supersonic point probe: Cherenkov emission at every wavenumber
    dens = DensityProbe(1e-51)
    assert len(matching(warnings_for(phon, dens, speed=1.5 * c), "supersonic")) == 1
    assert matching(warnings_for(phon, dens, speed=0.5 * c), "phonon") == []


def test_wide_probe_is_informational():
    cond = rb3d()
    xi = cond.healing_length
    assert len(matching(warnings_for(cond, two_level(width=12 * xi)), "point-like")) == 1
    assert matching(warnings_for(cond, two_level(width=8 * xi)), "point-like") == []


def test_very_fast_probe():
    cond = rb3d()
    c = cond.sound_speed
    hit = matching(warnings_for(cond, two_level(), speed=12 * c), "sound speed")
    assert len(hit) == 1 and "12 times" in hit[0]
    assert matching(warnings_for(cond, two_level(), speed=8 * c), "sound speed") == []


def test_effective_temperature_of_a_subnormal_up_rate_is_finite():
    """Detailed balance T_eff = hbar Omega / (k_B ln(down/up)) (Birrell and
    Davies 1982, ch. 3) with up = 1e-310 s^-1: down/up overflows a double but
    ln(down/up) = ln(down) - ln(up) = 715.1 is finite, so T_eff is too."""
    import warnings
    from scipy import constants as sc
    from probe.detectors.two_level import effective_temperature
    gap = 2 * np.pi * 150
    up, down = np.array([1e-310]), np.array([10.0])
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        teff, pop = effective_temperature(gap, up, down, up * 1e-12, down * 1e-12,
                                          up_positive=True)
    want = sc.hbar * gap / (sc.k * (np.log(10.0) - np.log(1e-310)))
    assert teff[0] == pytest.approx(want, rel=1e-12)


def test_absurd_density_is_refused_naming_the_density():
    # n a^3 >= 1 (one atom per scattering-length cube) is no dilute gas at all:
    # refused naming condensate.density; 1e-3 < n a^3 < 1 stays a warning.
    a = 5.3e-9
    with pytest.raises(InputError) as exc:
        rb3d(density=1.5 / a**3, scattering_length=a)
    assert exc.value.key == "condensate.density" and "n a^3 = 1.5" in exc.value.message
    ws = warnings_for(rb3d(density=0.5 / a**3, scattering_length=a), two_level())
    assert len(matching(ws, "n a^3 = 0.5 exceeds 0.001")) == 1
    # quasi-2D and quasi-1D: the 3D density at the centre of the transverse
    # harmonic-oscillator ground state, |phi_0(0)|^2 = 1/(sqrt(pi) l) per frozen
    # direction with l = sqrt(hbar/(m w)) (textbook ground state)
    wperp = TWO_PI * 2e3
    l_perp = math.sqrt(sc.hbar / (M_RB * wperp))
    for d in (2, 1):
        at_one = (math.sqrt(math.pi) * l_perp) ** (3 - d) / a**3   # n_d with n_3 a^3 = 1
        with pytest.raises(InputError) as exc:
            Condensate(d, M_RB, 1.2 * at_one, a, transverse_frequency=wperp)
        assert exc.value.key == "condensate.density" and "n a^3 = 1.2," in exc.value.message
        assert f"n_{d}/(sqrt(pi) l)^{3 - d}" in exc.value.message
        Condensate(d, M_RB, 0.8 * at_one, a, transverse_frequency=wperp)


@pytest.mark.parametrize("density", ["1e14 um^-3", "1e20 nm^-3", "1e20 mm^-3"])
def test_density_unit_slip_is_blamed_on_the_density(density):
    # a density in the wrong unit used to be blamed on the gap, the start point,
    # or only warned about: it is refused first, naming the density
    from probe.scenarios.config import load_config
    with pytest.raises(InputError) as exc:
        load_config(EXAMPLES / "box3d_supersonic.toml",
                    overrides=[f"condensate.density={density}"])
    assert exc.value.key == "condensate.density"
    assert "n a^3 = " in exc.value.message and "check the density's unit" in exc.value.message


def test_absurd_atom_number_is_refused_naming_it():
    from probe.scenarios.config import load_config
    with pytest.raises(InputError) as exc:
        load_config(EXAMPLES / "passages" / "push3d_trap.toml",
                    overrides=["condensate.atom_number=1e24"])
    assert exc.value.key == "condensate.atom_number" and "peak density" in exc.value.message


def test_readme_limits_state_the_2d_weak_coupling_check():
    # g_2 m / hbar^2 = sqrt(8 pi) a / l_z (Petrov, Holzmann, Shlyapnikov 2000),
    # l_z = sqrt(hbar/(m w_z)); the README's example: 87Rb at 2 kHz gives 0.110
    from probe.engines.regime.limits import GAS_PARAMETER_2D_LIMIT
    a, wz = 5.3e-9, TWO_PI * 2e3
    closed = math.sqrt(8 * math.pi) * a / math.sqrt(sc.hbar / (M_RB * wz))
    cond = Condensate(2, M_RB, 1e14, a, transverse_frequency=wz)
    assert cond.gas_parameter == pytest.approx(closed, rel=1e-12)
    assert f"{closed:.3f}" == "0.110" and closed > GAS_PARAMETER_2D_LIMIT
    assert len(matching(warnings_for(cond, two_level(1.0)), "g_2 m / hbar^2 = 0.1102")) == 1
    readme = (EXAMPLES.parent / "README.md").read_text(encoding="utf-8")
    limits = readme.split("### Limits of the model", 1)[1].split("**Safety.**", 1)[0]
    assert "g_2 m/ħ² = √(8π) a/l_z ≪ 1 in 2D" in limits
    assert f"warned above {GAS_PARAMETER_2D_LIMIT:g}" in limits and "gives 0.110" in limits
    assert "Petrov, Holzmann & Shlyapnikov" in limits


def test_two_level_probe_scattering_length_is_checked_against_xi():
    """A two-level probe given by its probe-boson scattering length
    (coupling_length) gets the same Born-regime check as the dressed and
    Ramsey probes: |a| above 0.1 xi (common practice) is warned; a few nm
    is not; an explicit coupling has no length to check."""
    from probe.scenarios.config import rates_from_config
    example = Path(__file__).resolve().parents[1] / "examples" / "box3d_supersonic.toml"

    def warned(*overrides, removals=()):
        result = rates_from_config(str(example), list(overrides), list(removals))
        return [w for w in result.warnings if "scattering length" in w]
    assert warned() == []
    big = warned('probe.coupling_length="300 nm"')
    assert len(big) == 1 and "300 nm" in big[0] and "healing length" in big[0]
    assert warned('probe.coupling="1e-50 J m^3"',
                  removals=("probe.coupling_length", "probe.species")) == []
