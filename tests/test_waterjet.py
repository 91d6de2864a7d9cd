"""Abrasive waterjet speed model: scaling laws of its own form, unit conversions, calibration."""

import pytest

from pathlen.estimates.cut import cutting_feed_mm_min
from pathlen.estimates.waterjet import (
    KG_PER_LB,
    MPA_PER_KSI,
    WaterjetInputs,
    calibrated_machinability,
    inch_pound_constant,
    waterjet_feed_mm_min,
)
from pathlen.profiles import load_profiles

JET = WaterjetInputs(pressure_mpa=380.0, orifice_mm=0.33, focus_tube_mm=1.02, abrasive_kg_min=0.4,
                     machinability=215.0)


@pytest.mark.parametrize(("h1", "q1", "h2", "q2"), [(10, 3, 20, 3), (10, 1, 10, 5), (6, 2, 25, 4)])
def test_speed_scales_as_quality_times_thickness_to_minus_1_15(h1, q1, h2, q2):
    # Zeng & Kim's machinability-number model (exponent 1.15 as recalled, # from memory): u ∝ (q·h)^-1.15.
    ratio = waterjet_feed_mm_min(JET, h2, q2) / waterjet_feed_mm_min(JET, h1, q1)
    assert ratio == pytest.approx(((q2 * h2) / (q1 * h1)) ** -1.15, rel=1e-12)


def test_the_two_circulating_constants_are_one_model_in_two_unit_systems():
    # Evaluate the model by hand in inch-pound units (in/min, ksi, in, lb/min) with the constant
    # converted from the metric one: the same speed, after converting (1 in = 25.4 mm,
    # 1 lb = 0.45359237 kg, 1 psi = 6894.757293168 Pa: exact definitions).  The converted constant is
    # the 163 that circulates beside 788 (both # from memory).
    c_inch = inch_pound_constant(788.0)
    assert c_inch == pytest.approx(163.3, abs=0.1)
    p, d_o, d_m, m_a, h = 380 / MPA_PER_KSI, 0.33 / 25.4, 1.02 / 25.4, 0.4 / KG_PER_LB, 10 / 25.4
    u_in_min = (215 * p**1.594 * d_o**1.374 * m_a**0.343 / (c_inch * 3 * h * d_m**0.618)) ** 1.15
    assert waterjet_feed_mm_min(JET, 10, 3) == pytest.approx(u_in_min * 25.4, rel=1e-12)
    assert MPA_PER_KSI == pytest.approx(1000 * 0.45359237 * 9.80665 / 0.0254**2 / 1e6, rel=1e-15)


def test_shipped_aluminium_example_lands_in_a_shop_range():
    # common practice: 10 mm aluminium on a ~380 MPa abrasive jet (0.33/1.02 mm, ~0.4 kg/min garnet) cuts
    # at a few hundred mm/min at a middle quality; separation cuts run faster still
    profile = load_profiles([])["aluminium-10mm-waterjet"]
    feed = cutting_feed_mm_min(profile)
    assert 200.0 <= feed <= 700.0, feed
    separation = waterjet_feed_mm_min(JET, 10, 1)
    assert 500.0 <= separation <= 2000.0, separation


def test_calibration_reproduces_the_test_cut():
    measured = 250.0
    n_m = calibrated_machinability(JET, 12.0, 2.0, measured)
    tuned = WaterjetInputs(**{**JET.__dict__, "machinability": n_m})
    assert waterjet_feed_mm_min(tuned, 12.0, 2.0) == pytest.approx(measured, rel=1e-12)
    # and it is a pure rescaling: N_m grows as (speed ratio)^(1/1.15)
    base = waterjet_feed_mm_min(JET, 12.0, 2.0)
    assert n_m == pytest.approx(215.0 * (measured / base) ** (1 / 1.15), rel=1e-12)
