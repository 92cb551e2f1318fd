"""Synthetic hourly year (benchbook.model.profiles).

Sources: Cooper (1969) declination and the sunset hour angle as given in
Duffie & Beckman, Solar Engineering of Thermal Processes (ch. 1.6; equation
and example numbers from memory); scipy (root finding, quadrature) as an
independent reference; the daily load shape is common practice, no source.
"""

import math

import numpy as np
import pytest
from scipy.integrate import quad
from scipy.optimize import brentq

from benchbook.errors import ModelError
from benchbook.model.job import HourlyProfile, Job, Load
from benchbook.model.profiles import (DAILY_SHAPE, DAYS_IN_MONTH, HOURS_PER_YEAR, Profile, day_length_h,
                                      job_profile, load_profile_w, solar_declination_deg, solar_profile_w,
                                      sunset_hour_angle_deg, temperature_profile_c)

MONTHLY_KWH = (3.0, 3.5, 4.5, 5.5, 6.0, 6.5, 6.8, 6.2, 5.3, 4.2, 3.2, 2.8)


def _job(**kw):
    base = dict(site="Demo Ridge Hut", client="Example Alpine Club", application="cyclic", system_voltage_v=24.0,
                autonomy_days=2.0, max_dod=0.5, min_temp_c=5.0, design_margin=1.1, aging_factor=1.25,
                end_voltage_per_cell_v=1.85, inverter_efficiency=0.9,
                loads=(Load("lights", 60.0, 5.0), Load("fridge", 50.0, 24.0), Load("pump", 400.0, 1.5)),
                charge_source="solar", solar_kwh_per_day_by_month=MONTHLY_KWH, latitude_deg=46.0)
    base.update(kw)
    return Job(**base)


def test_cooper_declination():
    # Duffie & Beckman, example on 20 February (n = 51): δ = −11.58° (from memory)
    assert solar_declination_deg(51) == pytest.approx(-11.58, abs=0.005)
    # Cooper (1969): amplitude 23.45° near the June solstice (n = 172) and at n = 355
    assert solar_declination_deg(172) == pytest.approx(23.45, abs=0.001)
    assert solar_declination_deg(355) == pytest.approx(-23.45, abs=0.001)


def test_sunset_hour_angle_against_root_of_solar_altitude():
    # sin α = sin φ sin δ + cos φ cos δ cos ω (Duffie & Beckman ch. 1.6, from memory): sunset where α = 0,
    # found by scipy's brentq instead of the arccos formula
    for lat, n in ((43.0, 172), (-33.9, 172), (60.0, 355), (10.0, 80)):
        d = math.radians(solar_declination_deg(n))
        phi = math.radians(lat)
        ws = brentq(lambda w: math.sin(phi) * math.sin(d) + math.cos(phi) * math.cos(d) * math.cos(w), 0.0, math.pi)
        assert sunset_hour_angle_deg(lat, math.degrees(d)) == pytest.approx(math.degrees(ws), abs=1e-9)
    # 43° N at the June solstice: 2·113.86°/15 = 15.18 h (geometric, no refraction; from memory)
    assert day_length_h(43.0, 172) == pytest.approx(15.18, abs=0.01)


def test_day_length_limits():
    # equator: 12 h every day (tan 0 = 0); polar day and night at 70° (Duffie & Beckman, from memory)
    assert np.allclose(day_length_h(0.0, np.arange(1, 366)), 12.0)
    assert day_length_h(70.0, 172) == pytest.approx(24.0)
    assert day_length_h(70.0, 355) == pytest.approx(0.0)
    # hemispheres mirror each other
    # (arithmetic on the sunset formula: tan(-φ) = -tan φ, so ω_s(-φ) = 180° - ω_s(φ))
    assert day_length_h(-40.0, 172) == pytest.approx(24.0 - day_length_h(40.0, 172))


def test_solar_profile_keeps_each_days_energy_and_half_sine_shape():
    # 365 × 24 = 8760 h (arithmetic); each day holds its month's kWh/day (the profile's definition, benchbook's own
    # contract); the hourly half-sine is checked against scipy's quad below
    p = solar_profile_w(MONTHLY_KWH, 46.0)
    assert p.shape == (HOURS_PER_YEAR,)
    daily = p.reshape(365, 24).sum(axis=1) / 1000.0
    expect = np.repeat(MONTHLY_KWH, DAYS_IN_MONTH)
    assert np.allclose(daily, expect, rtol=1e-12)
    # day 172: hourly means equal the half-sine integrated by scipy's quad
    n_h = day_length_h(46.0, 172)
    tr = 12.0 - n_h / 2
    peak = expect[171] * 1000.0 * math.pi / (2 * n_h)
    day = p[171 * 24:172 * 24]
    for h in range(24):
        a, b = max(h, tr), min(h + 1, tr + n_h)
        ref = quad(lambda t: peak * math.sin(math.pi * (t - tr) / n_h), a, b)[0] if b > a else 0.0
        assert day[h] == pytest.approx(ref, abs=1e-9)
    assert day[11] == pytest.approx(day[12])  # symmetric about solar noon
    # arithmetic with the sunset formula (Duffie & Beckman, from memory): about 15.6 h of day at 46° N on day 172, so
    # the hours around midnight are dark
    assert day[0] == 0.0 and day[23] == 0.0


def test_solar_profile_errors():
    with pytest.raises(ModelError, match="no daylight"):
        # benchbook's own contract (ModelError messages); 75° N in December: -tan φ tan δ ≈ 1.6 > 1, no sunrise
        # (sunset hour angle formula, Duffie & Beckman ch. 1.6, from memory)
        solar_profile_w(MONTHLY_KWH, 75.0)  # polar night in December with energy asked for
    with pytest.raises(ModelError, match="12"):
        solar_profile_w(MONTHLY_KWH[:11], 40.0)
    with pytest.raises(ModelError):
        solar_profile_w([-1.0] * 12, 40.0)


def test_load_profile_spreads_by_the_daily_shape():
    loads = [Load("fridge", 50.0, 24.0), Load("tv", 100.0, 2.5)]
    p = load_profile_w(loads, inverter_efficiency=0.8)
    day = p[:24]
    # energy per day: (50·24 + 100·2.5)/0.8 = 1812.5 Wh (common practice, no source)
    assert day.sum() == pytest.approx(1812.5)
    assert np.allclose(p.reshape(365, 24), day)
    # the 2.5 h load runs in the two top-ranked hours (19-20, 18-19) and half of the third (20-21)
    # (benchbook's own DAILY_SHAPE, common practice, no source; the figures below are arithmetic on it)
    order = np.argsort(-np.asarray(DAILY_SHAPE), kind="stable")
    assert list(order[:3]) == [19, 18, 20]
    assert day[19] == pytest.approx((50 + 100) / 0.8) and day[18] == pytest.approx((50 + 100) / 0.8)
    assert day[20] == pytest.approx((50 + 50) / 0.8)
    assert day[3] == pytest.approx(50 / 0.8)
    assert sum(DAILY_SHAPE) == pytest.approx(1.0)
    with pytest.raises(ModelError):
        load_profile_w([Load("bad", 10.0, 25.0)])


def test_temperature_profile():
    # arithmetic on the calendar: 365 × 24 = 8760 h; January has 31 days, so index 31 × 24 is February's first hour; a
    # constant is broadcast (benchbook's own contract)
    t = temperature_profile_c(tuple(range(12)))
    assert t.shape == (HOURS_PER_YEAR,)
    assert t[0] == 0 and t[31 * 24 - 1] == 0 and t[31 * 24] == 1 and t[-1] == 11
    assert np.all(temperature_profile_c(None, 18.0) == 18.0)


def test_job_profile_sources():
    job = _job()
    # arithmetic: the year's load is 365 × the daily DC energy and the year's solar energy is Σ kWh/day × days of each
    # month; grid at the charger power, nothing from a generator-only source, an hourly profile used as given and the
    # error messages are benchbook's own contract (model/profiles.job_profile)
    p = job_profile(job)
    assert p.steps == HOURS_PER_YEAR and p.step_h == 1.0 and p.source == "solar"
    assert p.load_w.sum() == pytest.approx(365 * job.daily_dc_wh)
    assert p.charge_w.sum() / 1000 == pytest.approx(sum(k * d for k, d in zip(MONTHLY_KWH, DAYS_IN_MONTH)))
    grid = job_profile(_job(charge_source="grid", charger_power_w=800.0))
    assert np.all(grid.charge_w == 800.0)
    assert np.all(job_profile(_job(charge_source="generator")).charge_w == 0.0)
    hourly = HourlyProfile(load_w=tuple([100.0] * HOURS_PER_YEAR), charge_w=tuple([50.0] * HOURS_PER_YEAR))
    hp = job_profile(_job(hourly=hourly, monthly_temp_c=tuple([10.0] * 12)))
    assert hp.source == "hourly" and np.all(hp.load_w == 100.0) and np.all(hp.temp_c == 10.0)
    with pytest.raises(ModelError, match="monthly kWh"):
        job_profile(_job(solar_kwh_per_day_by_month=None))
    with pytest.raises(ModelError, match="charger power"):
        job_profile(_job(charge_source="grid"))


def test_profile_validation():
    # benchbook's own contract (Profile checks): 24 h / (7/60 h) = 205.7 steps is not whole (arithmetic); negative
    # power and arrays of different lengths are refused
    Profile([1.0] * 48, [0.0] * 48, 20.0, 0.5)  # a temperature constant is broadcast
    with pytest.raises(ModelError, match="whole number"):
        Profile([1.0] * 10, [0.0] * 10, [20.0] * 10, 7 / 60)
    with pytest.raises(ModelError, match="0 W or more"):
        Profile([-1.0] * 24, [0.0] * 24, [20.0] * 24, 1.0)
    with pytest.raises(ModelError, match="expected 24"):
        Profile([1.0] * 24, [0.0] * 23, [20.0] * 24, 1.0)
