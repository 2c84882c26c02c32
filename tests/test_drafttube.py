"""Tests of penstock.drafttube.

Sources: Gibson (1910), Proc. R. Soc. Lond. A 83, 366-378 (cone loss curve, read from
figure, from memory); Crane TP-410 gradual-enlargement formula K = 2.6 sin(theta/2)
(1 - beta^2)^2, itself based on Gibson's tests, as coded in the `fluids` reference
library; de Siervo & de Leva (1976, 1977) sigma correlations (coefficients from memory);
IAPWS-97 vapour pressure and density from the `iapws` reference library.
"""

import numpy as np
import pandas as pd
import pytest
from fluids.fittings import diffuser_conical
from iapws import IAPWS97

from penstock import drafttube as dt
from penstock.constants import GRAVITY, P_ATM_SEA_LEVEL

WATER_20C = IAPWS97(T=293.15, x=0)  # saturated liquid at 20 degC (reference library)
VAPOUR_PRESSURE = WATER_20C.P * 1e6  # [Pa], 2339 Pa
DENSITY = WATER_20C.rho


# --- Gibson's cone ---------------------------------------------------------------------------

@pytest.mark.parametrize("angle, expected, tolerance", [
    (5.5, 0.135, 0.05),  # Gibson (1910): minimum loss near 5.5-6 deg, k ~ 0.13-0.14
    (45.0, 1.0, 0.1),    # about the loss of an abrupt enlargement near 40-50 deg
    (180.0, 1.0, 0.0),   # a 180 deg "cone" is an abrupt (Borda-Carnot) enlargement
])
def test_gibson_curve_landmarks(angle, expected, tolerance):
    assert dt.diffuser_loss_coefficient_gibson(np.radians(angle)) == pytest.approx(expected,
                                                                       abs=tolerance + 1e-12)


def test_gibson_wide_cones_worse_than_abrupt():
    # Gibson (1910): between about 50 and 90 deg a cone loses more than an abrupt enlargement.
    assert np.all(dt.diffuser_loss_coefficient_gibson(np.radians([55.0, 60.0, 75.0])) > 1.0)


@pytest.mark.parametrize("angle", [15.0, 20.0, 30.0, 40.0, 45.0])
def test_gibson_vs_crane_formula_in_fluids(angle):
    # Crane TP-410 (via fluids.diffuser_conical, method "Crane"): K1 = 2.6 sin(theta/2)
    # (1 - beta^2)^2 for theta <= 45 deg; divide by (1 - beta^2)^2 to get Gibson's k.
    # Both come from Gibson's tests; +-0.07 covers reading his curve from memory.
    beta = 0.6
    k_crane = diffuser_conical(beta, 1.0, angle=angle, method="Crane") / (1 - beta ** 2) ** 2
    k = dt.diffuser_loss_coefficient_gibson(np.radians(angle))
    assert k == pytest.approx(k_crane, abs=0.07)


def test_recovery_plus_draft_tube_loss_is_abrupt_exit_loss():
    flow, d1, ratio, angle = 3.0, 1.0, 2.5, np.radians(8.0)
    v1 = flow / (np.pi * d1 ** 2 / 4)
    v2 = v1 / ratio
    recovered = dt.velocity_head_recovery(flow, d1, ratio, angle)
    k = dt.diffuser_loss_coefficient_gibson(angle)
    # hand energy balance: V1^2/2g = recovered + V2^2/2g + k (V1 - V2)^2 / 2g
    lost = v2 ** 2 / (2 * GRAVITY) + k * (v1 - v2) ** 2 / (2 * GRAVITY)
    assert recovered + lost == pytest.approx(dt.abrupt_exit_loss(flow, d1), rel=1e-12)
    assert 0 < recovered < (v1 ** 2 - v2 ** 2) / (2 * GRAVITY)


def test_recovery_array_equals_loop_and_keeps_series():
    flows = pd.Series([0.0, 1.0, 2.5, 4.0], index=pd.date_range("2001", periods=4, freq="h"))
    out = dt.velocity_head_recovery(flows, 1.2, 3.0, np.radians(7.0))
    assert isinstance(out, pd.Series) and out.iloc[0] == 0.0
    np.testing.assert_array_equal(out.to_numpy(),
                                  [dt.velocity_head_recovery(q, 1.2, 3.0, np.radians(7.0))
                                   for q in flows])


@pytest.mark.parametrize("angle, ratio, match", [(2.0, 2.0, "cone_angle"),
                                                 (8.0, 0.9, "area_ratio")])
def test_diffuser_bad_input(angle, ratio, match):
    with pytest.raises(ValueError, match=match):
        dt.diffuser_efficiency_gibson(np.radians(angle), ratio)


# --- Thoma -----------------------------------------------------------------------------------

@pytest.mark.parametrize("turbine_type, ns, expected", [
    # de Siervo & de Leva (1976) Francis sigma = 7.54e-5 ns^1.41 (from memory): ns = 200
    ("francis", 200.0, 0.1324),
    ("francis", 100.0, 0.04982),
    # de Siervo & de Leva (1977) Kaplan sigma = 6.40e-5 ns^1.46 (from memory): ns = 500
    ("kaplan", 500.0, 0.558),
    ("propeller", 800.0, 1.108),
])
def test_thoma_sigma_published_correlations(turbine_type, ns, expected):
    # expected values are the published equations evaluated by hand to 3-4 figures
    assert dt.thoma_sigma(ns, turbine_type) == pytest.approx(expected, rel=2e-3)


def test_thoma_sigma_errors():
    with pytest.raises(ValueError, match="impulse turbine"):
        dt.thoma_sigma(20.0, "pelton")
    with pytest.raises(ValueError, match="outside the francis range"):
        dt.thoma_sigma(900.0, "francis")


def test_allowable_suction_head_hand_value():
    sigma, head = 0.12, 80.0
    # H_s = (p_atm - p_v)/(rho g) - sigma H with IAPWS-97 water at 20 degC:
    # (101325 - 2339.2)/(998.2 * 9.80665) - 9.6 = 10.112 - 9.6 = 0.512 m
    hs = dt.allowable_suction_head(P_ATM_SEA_LEVEL, VAPOUR_PRESSURE, DENSITY, sigma, head)
    assert hs == pytest.approx(0.512, abs=1e-3)


def test_cavitation_margin_per_flow():
    tailwater = np.array([100.0, 100.5, 101.5])
    heads = np.array([82.0, 80.0, 76.0])
    margin = dt.cavitation_margin(101.0, tailwater, P_ATM_SEA_LEVEL, VAPOUR_PRESSURE, DENSITY,
                                  0.12, heads)
    hs = dt.allowable_suction_head(P_ATM_SEA_LEVEL, VAPOUR_PRESSURE, DENSITY, 0.12, heads)
    np.testing.assert_allclose(margin, hs - (101.0 - tailwater))
    np.testing.assert_array_equal(margin, [dt.cavitation_margin(101.0, t, P_ATM_SEA_LEVEL,
                                                                VAPOUR_PRESSURE, DENSITY, 0.12,
                                                                h)
                                           for t, h in zip(tailwater, heads)])


def test_impulse_clearance_rule():
    # common practice clearance (IMPULSE_CLEARANCE, 1.0 m for Pelton): runner at 103 m,
    # flood tailwater 101.5 m -> 0.5 m to spare; at 102.5 m -> 0.5 m short.
    margin = dt.impulse_clearance_margin(103.0, np.array([101.5, 102.5]), "pelton")
    np.testing.assert_allclose(margin, [0.5, -0.5])
    with pytest.raises(ValueError, match="not an impulse turbine"):
        dt.impulse_clearance_margin(103.0, 101.0, "francis")
