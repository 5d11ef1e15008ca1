"""Saturated vapour pressure: ITS-90 check values, CoolProp agreement, range handling."""
from __future__ import annotations

import numpy as np
import pytest
from scipy import constants

from porefill.physics.substances import vapour_pressure as vp


class TestITS90:
    def test_normal_boiling_point(self):
        # ITS-90 (Preston-Thomas, Metrologia 27, 3 (1990)): T90 = 4.2221 K at 101325 Pa
        assert vp.its90_helium4_temperature(101325.0) == pytest.approx(4.2221, abs=1e-4)
        assert vp.saturated_vapour_pressure("helium-4", 4.2221) == pytest.approx(101325.0, rel=3e-5)

    def test_lambda_point_from_both_ranges(self):
        # lambda point 2.1768 K at about 5042 Pa; both ranges of the equation meet there (docs/REFERENCES.md §3)
        low = vp._its90(np.log(5041.8), vp._ITS90_LOW)
        high = vp._its90(np.log(5041.8), vp._ITS90_HIGH)
        assert low == pytest.approx(2.1768, abs=2e-4) and high == pytest.approx(2.1768, abs=2e-4)
        assert vp.saturated_vapour_pressure("helium-4", 2.1768) == pytest.approx(5042.0, rel=1e-3)

    @pytest.mark.parametrize("t, p", [(1.25, 114.7), (2.0, 3129.7), (3.0, 24046.0)])
    def test_check_values(self, t, p):
        # docs/REFERENCES.md §3, recomputed from the ITS-90 coefficients; quoted to 4-5 digits
        assert vp.saturated_vapour_pressure("helium-4", t) == pytest.approx(p, rel=5e-4)

    @pytest.mark.parametrize("t", [2.2, 2.5, 3.0, 3.5, 4.0, 4.2, 4.5, 5.0])
    def test_agrees_with_coolprop_above_lambda(self, t):
        # CoolProp's helium model (a reference library from PyPI): within 0.3 % above the lambda point
        import CoolProp.CoolProp as CP
        assert vp.saturated_vapour_pressure("helium-4", t) == pytest.approx(CP.PropsSI("P", "T", t, "Q", 0, "Helium"),
                                                                             rel=3e-3)

    def test_extrapolation_below_range(self):
        # ideal-vapour Clausius–Clapeyron with L0 = 59.83 J/mol (Donnelly & Barenghi 1998): continuous at
        # 1.25 K, and d ln p / d(1/T) -> −L0/R − (5/2)T as T -> 0
        eps = 1e-7
        assert vp.saturated_vapour_pressure("helium-4", 1.25 - eps) == pytest.approx(
            vp.saturated_vapour_pressure("helium-4", 1.25 + eps), rel=1e-5)
        t1, t2 = 0.5, 0.5001
        slope = (np.log(vp.saturated_vapour_pressure("helium-4", t2)) - np.log(vp.saturated_vapour_pressure("helium-4", t1))) \
            / (1 / t2 - 1 / t1)
        assert slope == pytest.approx(-59.83 / constants.R - 2.5 * 0.50005, rel=1e-4)

    @pytest.mark.parametrize("t", [0.1, 5.2, -1.0, float("nan")])
    def test_refuses_outside_range(self, t):
        with pytest.raises(vp.VapourPressureRangeError, match="outside"):
            vp.saturated_vapour_pressure("helium-4", t)


def test_nitrogen_normal_boiling_point():
    # N2 normal boiling point 77.355 K (value from memory), p0 = 101325 Pa
    assert vp.saturated_vapour_pressure("nitrogen", 77.355) == pytest.approx(101325.0, rel=2e-3)


def test_classical_gas_range_is_triple_to_critical():
    lo, hi, what = vp.temperature_range("nitrogen")
    assert lo == pytest.approx(63.151, abs=0.01) and hi == pytest.approx(126.192, abs=0.01)   # CoolProp; value from memory
    with pytest.raises(vp.VapourPressureRangeError, match="nitrogen"):
        vp.saturated_vapour_pressure("nitrogen", 50.0)


def test_argon_range_reaches_its_supercooled_liquid():
    # argon: triple point 83.806 K, critical 150.687 K (CoolProp; value from memory); served down to 75 K as a
    # supercooled liquid (argon at 77 K is common practice), flagged as extrapolated
    lo, hi, what = vp.temperature_range("argon")
    assert lo == 75.0 and hi == pytest.approx(150.687, abs=0.01) and "supercooled" in what
    with pytest.raises(vp.VapourPressureRangeError, match="argon"):
        vp.saturated_vapour_pressure("argon", 50.0)


def test_liquid_density_of_helium():
    # Donnelly & Barenghi (1998): 0.14514 g/cm³ at T -> 0 = 0.021837 Å^-3
    n, _ = vp.liquid_number_density("helium-4")
    assert n == pytest.approx(0.14514 / 4.002602 * constants.Avogadro * 1e-24, rel=1e-4)


def test_helium_critical_temperature_is_coolprops_without_loading_it():
    import subprocess
    import sys

    from porefill.physics.substances.vapour_pressure import HELIUM4_CRITICAL_K
    CP = pytest.importorskip("CoolProp.CoolProp")
    # the held constant is CoolProp's own value (reference library from the registry), to its 5 digits
    assert HELIUM4_CRITICAL_K == pytest.approx(CP.PropsSI("Tcrit", "Helium"), abs=5e-5)
    code = ("import sys, io, contextlib; from porefill.explorer.cli.main import main\n"
            "with contextlib.redirect_stdout(io.StringIO()):\n"
            "    main(['isotherm', '--temperature', '1.5', '--site-model', 'classical', '--json'])\n"
            "print('CoolProp' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.strip() == "False"


@pytest.mark.parametrize("gas", ["hydrogen", "neon", "argon", "nitrogen"])
def test_held_equation_temperatures_are_coolprops(gas):
    # the held triple, critical and normal-boiling temperatures are CoolProp's own (reference library from
    # the registry: PropsSI 'Ttriple', 'Tcrit', and T at 1 atm on the saturated liquid), to 1e-9 relative
    from scipy import constants

    from porefill.physics.substances.materials import get_adsorbate
    CP = pytest.importorskip("CoolProp.CoolProp")
    name = get_adsorbate(gas).coolprop_name
    t_triple, t_crit, t_nbp = vp.EQUATION_TEMPERATURES_K[gas]
    assert t_triple == pytest.approx(CP.PropsSI("Ttriple", name), rel=1e-9)
    assert t_crit == pytest.approx(CP.PropsSI("Tcrit", name), rel=1e-9)
    assert t_nbp == pytest.approx(CP.PropsSI("T", "P", constants.atm, "Q", 0, name), rel=1e-9)


def test_temperature_windows_need_no_coolprop():
    # every page's sliders ask for these; loading CoolProp (seconds) for them froze the first page
    import subprocess
    import sys

    code = ("import sys; from porefill.physics.substances import vapour_pressure as vp\n"
            "w = [vp.temperature_range(g)[:2] + (vp.typical_temperature(g),) for g in\n"
            "     ('helium-4', 'hydrogen', 'neon', 'argon', 'nitrogen')]\n"
            "print('CoolProp' in sys.modules, w[4][2])")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout.split()
    assert out[0] == "False"
    assert float(out[1]) == pytest.approx(77.355, abs=1e-3)   # nitrogen's normal boiling point, CoolProp
