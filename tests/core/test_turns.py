"""Turn physics against the handbook values (FAA PHAK, FAA Instrument Flying Handbook)."""

from __future__ import annotations

import math

import pytest

from planner.core import turns

PHAK = "FAA Pilot's Handbook of Aeronautical Knowledge, load factor chart"
IFH = "FAA Instrument Flying Handbook"


@pytest.mark.parametrize(
    ("bank", "printed", "rel_tol"),
    [
        pytest.param(30, 1.155, 0.001, id=f"30 deg -> 1.155 ({PHAK})"),
        pytest.param(45, 1.414, 0.001, id=f"45 deg -> 1.414 ({PHAK})"),
        pytest.param(60, 2.000, 0.001, id=f"60 deg -> 2.000 ({PHAK})"),
        pytest.param(80, 5.747, 0.005, id=f"80 deg printed 5.747, chart rounding ~0.5% ({PHAK})"),
    ],
)
def test_load_factor_matches_the_handbook_chart(bank, printed, rel_tol):
    assert turns.load_factor(bank) == pytest.approx(printed, rel=rel_tol)


def test_load_factor_at_80_degrees_is_the_formula_not_the_printed_value():
    # PHAK prints 5.747; the formula gives 5.759 (domain notes 4): our value is the formula's.
    assert turns.load_factor(80) == pytest.approx(5.759, abs=0.001)
    assert turns.load_factor(80) != pytest.approx(5.747, abs=0.001)


def test_wings_level_is_one_g_and_no_turn():
    assert turns.load_factor(0) == 1.0
    assert turns.rate_of_turn(100, 0) == 0.0
    assert math.isinf(turns.turn_radius_ft(100, 0))


def test_stall_speed_rises_41_percent_at_60_degrees():
    # PHAK: stall speed increases with the square root of the load factor; 60 deg -> about +41 %.
    assert turns.stall_speed_increase_percent(60) == pytest.approx(41.4, abs=0.1)
    assert turns.stall_speed_factor(45) == pytest.approx(math.sqrt(1.414), rel=0.001)


@pytest.mark.parametrize(
    ("tas", "bank", "radius_ft", "rate"),
    [
        pytest.param(100, 30, 1534, 6.3, id=f"100 kt 30 deg -> about 1,534 ft and 6.3 deg/s ({PHAK}; {IFH})"),
    ],
)
def test_radius_and_rate_of_turn_match_the_handbook(tas, bank, radius_ft, rate):
    assert turns.turn_radius_ft(tas, bank) == pytest.approx(radius_ft, abs=2)
    assert turns.rate_of_turn(tas, bank) == pytest.approx(rate, abs=0.05)


def test_radius_matches_the_knots_shortcut_v_squared_over_11_29_tan():
    # Domain notes 4 (PHAK): with V in knots and R in feet, R ~ V^2 / (11.29 tan(bank)).
    for tas, bank in [(90, 20), (120, 30), (150, 45)]:
        shortcut = tas**2 / (11.29 * math.tan(math.radians(bank)))
        assert turns.turn_radius_ft(tas, bank) == pytest.approx(shortcut, rel=0.001)


@pytest.mark.parametrize(
    ("tas", "exact", "fifteen", "tenth_plus_seven"),
    [
        pytest.param(100, 15.4, 15.0, 17.0,
                     id=f"100 kt: atan(V/364) 15.4 deg, 15% rule 15 deg ({IFH}), TAS/10+7 17 deg (common practice)"),
    ],
)
def test_standard_rate_bank_and_rules_of_thumb(tas, exact, fifteen, tenth_plus_seven):
    assert turns.standard_rate_bank(tas) == pytest.approx(exact, abs=0.05)
    assert turns.standard_rate_bank(tas) == pytest.approx(math.degrees(math.atan(tas / 364)), abs=0.01)
    assert turns.standard_rate_bank_fifteen_percent(tas) == pytest.approx(fifteen)
    assert turns.standard_rate_bank_tenth_plus_seven(tas) == pytest.approx(tenth_plus_seven)


def test_standard_rate_bank_gives_three_degrees_per_second():
    # IFH: standard rate is 3 deg/s, 360 deg in 2 minutes.
    for tas in (60, 100, 140, 180):
        assert turns.rate_of_turn(tas, turns.standard_rate_bank(tas)) == pytest.approx(3.0, rel=1e-9)
        assert 360 / turns.rate_of_turn(tas, turns.standard_rate_bank(tas)) == pytest.approx(120.0)


@pytest.mark.parametrize(
    ("rate", "seconds"),
    [
        pytest.param(0.5, 60.0, id="0.5 deg/s reaches 30 deg in 60 s (domain notes 3, common practice)"),
        pytest.param(1.5, 20.0, id="at the 1.5 deg/s threshold: 20 s (Benson et al. 1989)"),
    ],
)
def test_undetected_drift_time_to_thirty_degrees(rate, seconds):
    assert turns.drift_seconds(rate) == pytest.approx(seconds)


def test_ninety_degrees_over_three_minutes_is_below_the_threshold():
    # Domain notes 3: 90 deg spread over 3 minutes is 0.5 deg/s, well under ~1.5 deg/s (Benson et al. 1989).
    rate = 90 / 180
    assert rate == 0.5
    assert turns.is_below_vestibular_threshold(rate)
    assert not turns.is_below_vestibular_threshold(turns.STANDARD_RATE_DEG_S)


@pytest.mark.parametrize(
    ("call", "word"),
    [
        (lambda: turns.load_factor(90), "bank"),
        (lambda: turns.load_factor(-5), "bank"),
        (lambda: turns.turn_radius_ft(0, 30), "airspeed"),
        (lambda: turns.drift_seconds(0), "drift rate"),
    ],
)
def test_bad_input_names_the_quantity(call, word):
    with pytest.raises(ValueError, match=word):
        call()
