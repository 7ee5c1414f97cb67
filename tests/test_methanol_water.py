"""The separator's methanol-water equilibrium against published data.

Source (docs/references.md section 18): the methanol-water vapour-liquid
equilibrium at 1 atm of Perry's *Chemical Engineers' Handbook* (table number
not confirmed), x, y of methanol and T degC, the numbers seen as reproduced in
public repositories (the attribution to Perry's is theirs and from memory).

Each model's K = y/x of methanol and of water, by the engine's own separator
functions at the data's temperature and 1 atm, is compared with the measured
y/x: Henry-Raoult's Raoult's law with the Poynting factor
(:func:`purgeplan.case_checks.raoult_k`), times the UNIFAC activity
coefficients the loop applies where several components condense
(:func:`purgeplan.coefficients.separator_activity_coefficients`), and the
Peng-Robinson K-values of thermo's PRMIX with stored kij at the measured x and
y (:func:`purgeplan.physics.separation.peng_robinson_k_values`).
"""

from __future__ import annotations

import pytest
from conftest import loop_from_text
from test_separator import METHANOL

from purgeplan import case_checks, coefficients
from purgeplan.physics import separation

ATM_BAR = 1.01325

#: Methanol-water at 1 atm, (x methanol, y methanol, T degC): Perry's Chemical Engineers'
#: Handbook (seen as reproduced in public repositories, but T at x = 0.02-0.08 and 0.95
#: and the row x = 0.15 from memory; docs/references.md section 18).
PERRY_1_ATM = [
    (0.02, 0.134, 96.4), (0.04, 0.230, 93.5), (0.06, 0.304, 91.2), (0.08, 0.365, 89.3),
    (0.10, 0.418, 87.7), (0.15, 0.517, 84.4), (0.20, 0.579, 81.7), (0.30, 0.665, 78.0),
    (0.40, 0.729, 75.3), (0.50, 0.779, 73.1), (0.60, 0.825, 71.2), (0.70, 0.870, 69.3),
    (0.80, 0.915, 67.6), (0.90, 0.958, 66.0), (0.95, 0.979, 65.0),
]
#: The methanol-rich liquid a methanol-loop separator holds (about 60-90 mol % methanol).
METHANOL_RICH = [p for p in PERRY_1_ATM if 0.6 <= p[0] <= 0.9]


@pytest.fixture(scope="module")
def henry_raoult():
    return loop_from_text(METHANOL)


@pytest.fixture(scope="module")
def peng_robinson():
    text = METHANOL.replace("henry_constant_bar = { H2 = 20000, CO = 8000, CO2 = 600, "
                            "CH4 = 4000 }", 'model = "peng_robinson"')
    return loop_from_text(text)


def _measured_k(x: float, y: float) -> tuple[float, float]:
    """y/x of methanol and of water from a data point [-]."""
    return y / x, (1.0 - y) / (1.0 - x)


def _raoult(loop, x: float, t_c: float, activity: bool) -> tuple[float, float]:
    """K of methanol and water by the loop's Raoult's law at t_c and 1 atm, with or without
    its activity coefficients [-]."""
    t = t_c + 273.15
    gamma = (coefficients.separator_activity_coefficients(loop, {"CH3OH": x, "H2O": 1 - x}, t)
             if activity else {"CH3OH": 1.0, "H2O": 1.0})
    return tuple(gamma[c] * case_checks.raoult_k(loop.data[c], t, ATM_BAR)
                 for c in ("CH3OH", "H2O"))


@pytest.mark.parametrize(("x", "y", "t_c"), PERRY_1_ATM)
def test_unifac_raoult_k_values_match_the_methanol_water_data(henry_raoult, x, y, t_c):
    """Henry-Raoult with UNIFAC activity coefficients (the default where methanol and water
    both condense) against Perry's 1 atm data, over the whole range.

    Measured: methanol's K within -1.1 to +1.9 %, water's within -5.6 to +0.6 %.
    Tolerances 3 % and 8 %: y is tabulated to 0.001, which at x = 0.9 is 1.2 % of
    the water's 1 - y = 0.042, and a smoothed compilation of this age scatters by
    some 0.005 in y (common practice), several per cent of water's K in the
    methanol-rich end; the vapour pressures (Wagner) are good to well under 1 %.
    """
    k_methanol, k_water = _raoult(henry_raoult, x, t_c, activity=True)
    measured = _measured_k(x, y)
    assert k_methanol == pytest.approx(measured[0], rel=0.03)
    assert k_water == pytest.approx(measured[1], rel=0.08)


@pytest.mark.parametrize(("x", "y", "t_c"), METHANOL_RICH)
def test_ideal_raoult_understates_water_in_methanol_rich_liquid(henry_raoult, x, y, t_c):
    """Raoult's law for an ideal solution (gamma = 1, Henry-Raoult before activity
    coefficients) in the methanol-rich liquid: methanol's K is close (-0.5 to -6 %),
    but water's is 26 to 39 % below the data (its gamma there is 1.3 to 1.6), far
    outside the 8 % the data bear; hence the activity coefficients."""
    k_methanol, k_water = _raoult(henry_raoult, x, t_c, activity=False)
    measured = _measured_k(x, y)
    assert k_methanol == pytest.approx(measured[0], rel=0.07)
    assert k_water < 0.8 * measured[1]


@pytest.mark.parametrize(("x", "y", "t_c"), METHANOL_RICH)
def test_peng_robinson_understates_water_in_methanol_rich_liquid(peng_robinson, x, y, t_c):
    """Peng-Robinson with thermo's stored kij (-0.078 for methanol-water) at the measured x
    and y: methanol's K within 1 % of the data, water's 9 to 14 % below it, outside
    the 8 % the data bear, where UNIFAC-Raoult is within 6 %."""
    names = peng_robinson.components
    xs = [{"CH3OH": x, "H2O": 1 - x}.get(c, 1e-12) for c in names]
    ys = [{"CH3OH": y, "H2O": 1 - y}.get(c, 1e-12) for c in names]
    k = separation.peng_robinson_k_values(peng_robinson.separator_peng_robinson,
                                          t_c + 273.15, ATM_BAR, xs, ys)
    measured = _measured_k(x, y)
    assert k[names.index("CH3OH")] == pytest.approx(measured[0], rel=0.02)
    assert 0.80 * measured[1] < k[names.index("H2O")] < 0.92 * measured[1]


def test_ammonia_alone_condensing_has_no_activity_coefficients():
    """With one condensing component (ammonia and its dissolved gases) the liquid is
    nearly pure and gamma = 1: the loop carries no activity data, so its K-values are
    those of Raoult's and Henry's laws fixed at build, as checked against Larson and
    Black in tests/test_separator.py."""
    from test_separator import ammonia_text

    loop = loop_from_text(ammonia_text())
    assert loop.separator_activity is None
    assert not coefficients.separator_k_values_vary(loop)
    assert coefficients.separator_k_values(loop) == loop.separator_k_values
