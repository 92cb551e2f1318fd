"""Rate of discharge: Peukert's law and KiBaM (benchbook.model.rate).

Sources are named beside each check. "M&M 1993" is Manwell & McGowan, Solar
Energy 50(5):399-405, 1993, as summarised in docs/references.md [text].
"""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.integrate import solve_ivp

from benchbook.errors import ModelError, SpecError
from benchbook.model.battery import ratings_at_least
from benchbook.model.catalog import DEFAULT_CATALOG
from benchbook.model.rate import (
    Kibam,
    fit_kibam,
    fit_peukert,
    kibam_step,
    peukert_hours,
)

from benchbook.model.rate_bank import BankAtLoad, bank_at_load  # noqa: E402

MM = Kibam(c=0.315, k_per_h=1.24, q_max_ah=100.0)  # M&M 1993 indicative lead-acid values


def _ode(kb, q1, q2, current, dt):
    """The KiBaM ODE of M&M 1993 integrated by scipy's solve_ivp (Radau, tight tolerances)."""
    c, k = kb.c, kb.k_per_h

    def rhs(_t, y):
        return [-current - k * (1 - c) * y[0] + k * c * y[1], k * (1 - c) * y[0] - k * c * y[1]]

    sol = solve_ivp(rhs, (0.0, dt), [q1, q2], method="Radau", rtol=1e-12, atol=1e-10)
    return sol.y[0, -1], sol.y[1, -1]


# ---- closed-form step against the ODE ---------------------------------------------------------
@pytest.mark.parametrize("current, dt", [
    (20.0, 1.5),    # discharge
    (-15.0, 2.0),   # charge
    (0.0, 6.0),     # rest: bound charge flows back
    (250.0, 0.01),  # short, heavy step (series branch of the helper)
])
def test_step_matches_ode(current, dt):
    q1, q2 = 20.0, 50.0
    # reference: scipy.integrate.solve_ivp on the M&M 1993 ODE
    ref = _ode(MM, q1, q2, current, dt)
    got = kibam_step(MM, q1, q2, current, dt)
    assert got == pytest.approx(ref, rel=1e-8, abs=1e-8)


def test_step_vectorised_over_options_matches_scalar():
    kbs = [Kibam(0.3, 0.8, 100.0), Kibam(0.45, 2.0, 250.0), Kibam(0.6, 0.1, 50.0)]
    stacked = Kibam.stack(kbs)
    q1 = np.array([10.0, 60.0, 25.0])
    q2 = np.array([40.0, 100.0, 15.0])
    cur = np.array([5.0, -30.0, 0.0])
    g1, g2 = kibam_step(stacked, q1, q2, cur, 0.25)
    for j, kb in enumerate(kbs):
        # each element against the ODE (solve_ivp), option by option
        r1, r2 = _ode(kb, q1[j], q2[j], cur[j], 0.25)
        assert g1[j] == pytest.approx(r1, rel=1e-8, abs=1e-8)
        assert g2[j] == pytest.approx(r2, rel=1e-8, abs=1e-8)


def test_zero_step_is_identity():
    # dt = 0 changes nothing (follows from the ODE; common practice, no source)
    assert kibam_step(MM, 12.0, 34.0, 50.0, 0.0) == pytest.approx((12.0, 34.0), abs=1e-12)


# ---- capacity at constant current ---------------------------------------------------------------
def test_capacity_check_value():
    # q(1 h) = 44.519 Ah for c=0.315, k=1.24 1/h, q_max=100 Ah (M&M 1993 indicative values, docs/references.md)
    assert MM.capacity_ah(1.0) == pytest.approx(44.519, abs=5e-4)


def test_capacity_limits():
    # q -> c q_max as T -> 0 and q -> q_max as T -> inf (M&M 1993, docs/references.md)
    assert MM.capacity_ah(0.0) == pytest.approx(31.5, rel=1e-12)
    assert MM.capacity_ah(1e-9) == pytest.approx(31.5, rel=1e-8)
    assert MM.capacity_ah(math.inf) == 100.0
    assert MM.capacity_ah(1e4) == pytest.approx(100.0, rel=1e-3)
    assert not np.any(np.isnan(MM.capacity_ah(np.array([0.0, 1e-300, 1e300, np.inf]))))


def test_runtime_is_inverse_of_capacity():
    t = np.array([0.1, 1.0, 5.0, 20.0, 100.0])
    current = MM.capacity_ah(t) / t
    # q(T) = I T defines the runtime (M&M 1993)
    assert MM.runtime_h(current) == pytest.approx(t, rel=1e-10)
    # at the runtime the ODE (solve_ivp) from full has emptied the available tank
    q1, _ = _ode(MM, 31.5, 68.5, float(current[2]), 5.0)
    assert q1 == pytest.approx(0.0, abs=1e-7)
    assert MM.runtime_h(0.0) == math.inf and MM.runtime_h(-5.0) == math.inf


def test_max_current_empties_q1_in_one_step():
    q1, q2 = MM.full_state()
    for dt in (0.05, 1.0, 7.0):
        i = MM.max_current_a(q1, q2, dt)
        # step with I_dmax leaves q1 = 0 (M&M 1993 maximum discharge current)
        assert kibam_step(MM, q1, q2, i, dt)[0] == pytest.approx(0.0, abs=1e-9)
        # and the ODE (solve_ivp) agrees
        assert _ode(MM, q1, q2, i, dt)[0] == pytest.approx(0.0, abs=1e-7)


def test_max_charge_current_fills_q1_to_c_qmax():
    q1, q2 = 5.0, 40.0
    mag = MM.max_current_a(q1, q2, 0.5, charging=True)
    assert mag > 0
    # charging at -I_cmax brings q1 to c q_max at the end of the step (M&M 1993 maximum charge current)
    assert kibam_step(MM, q1, q2, -mag, 0.5)[0] == pytest.approx(31.5, rel=1e-10)
    # a full battery takes no charge current (follows from the same formula)
    assert MM.max_current_a(*MM.full_state(), 0.5, charging=True) == pytest.approx(0.0, abs=1e-9)


def test_kibam_validation_names_every_bad_field():
    # benchbook's own contract: every bad field named at once (c is a fraction and k a rate constant by their M&M 1993
    # definitions); a zero-length step has no maximum current
    with pytest.raises(SpecError) as e:
        Kibam(c=1.2, k_per_h=-1.0, q_max_ah=float("nan"))
    assert [p.field for p in e.value.problems] == ["c", "k_per_h", "q_max_ah"]
    with pytest.raises(ModelError):
        MM.max_current_a(10.0, 10.0, 0.0)


# ---- hypothesis properties ---------------------------------------------------------------------
_c = st.floats(0.05, 0.95)
_k = st.floats(0.01, 10.0)
_q = st.floats(1.0, 5000.0)


@settings(max_examples=60, deadline=None)
@given(_c, _k, _q, st.floats(0.0, 1.0), st.floats(-2.0, 2.0), st.floats(1e-4, 50.0))
def test_charge_is_conserved(c, k, q, frac1, rate_c, dt):
    kb = Kibam(c, k, q)
    q1, q2 = frac1 * c * q, 0.7 * (1 - c) * q
    current = rate_c * q / 10.0
    n1, n2 = kibam_step(kb, q1, q2, current, dt)
    # q1 + q2 falls by exactly I dt: sum of the two ODEs is d(q1+q2)/dt = -I (M&M 1993)
    assert (n1 + n2) == pytest.approx(q1 + q2 - current * dt, rel=1e-9, abs=1e-9 * q)


@settings(max_examples=60, deadline=None)
@given(_c, _k, _q, st.floats(0.01, 200.0), st.floats(1.001, 10.0))
def test_lower_current_never_delivers_less(c, k, q, t, stretch):
    kb = Kibam(c, k, q)
    # capacity is monotone in discharge time, i.e. falls as the current rises (M&M 1993, docs/references.md)
    assert kb.capacity_ah(t * stretch) >= kb.capacity_ah(t) * (1 - 1e-12)
    i_hi = kb.capacity_ah(t) / t
    assert kb.runtime_h(i_hi / stretch) * i_hi / stretch >= kb.capacity_ah(t) * (1 - 1e-9)


# ---- fitting -----------------------------------------------------------------------------------
def test_fit_recovers_known_parameters():
    hours = np.array([1.0, 3.0, 5.0, 8.0, 10.0, 20.0, 100.0])
    for truth in (MM, Kibam(0.45, 0.3, 230.0), Kibam(0.2, 4.0, 1200.0)):
        # synthetic table generated by the M&M 1993 closed form q(T)
        table = list(zip(hours, truth.capacity_ah(hours)))
        fit = fit_kibam(table)
        assert fit.c == pytest.approx(truth.c, rel=1e-5)
        assert fit.k_per_h == pytest.approx(truth.k_per_h, rel=1e-5)
        assert fit.q_max_ah == pytest.approx(truth.q_max_ah, rel=1e-5)
        assert fit.residual < 1e-8


#: RMS relative capacity error of the fit on ratings >= 1 h, per catalog entry (measured, see report).
CATALOG_RESIDUAL_CEILING = 0.02


@pytest.mark.parametrize("spec", DEFAULT_CATALOG, ids=lambda s: s.model)
def test_fit_catalog(spec):
    rows = ratings_at_least(spec, 1.0)
    fit = fit_kibam(rows)
    # invented catalog data: the fit must follow the rate table within 2 % RMS (common practice, no source)
    assert 0 < fit.residual < CATALOG_RESIDUAL_CEILING
    hours = np.array([h for h, _ in rows])
    ah = np.array([a for _, a in rows])
    rms = np.sqrt(np.mean((fit.capacity_ah(hours) / ah - 1) ** 2))
    assert fit.residual == pytest.approx(rms, rel=1e-9)
    assert fit.q_max_ah >= ah.max() * (1 - 1e-12)
    assert 0 < fit.c < 1 and fit.k_per_h > 0


def test_fit_with_sub_hour_rows_is_worse_and_min_hours_filters():
    spec = next(s for s in DEFAULT_CATALOG if s.model == "IL-2F-420")
    whole = fit_kibam(spec.rate_table)
    hour_up = fit_kibam(spec.rate_table, min_hours=1.0)
    # KiBaM cannot follow 1-min ratings (q -> c q_max as T -> 0; M&M 1993): residual grows
    assert whole.residual > 3 * hour_up.residual
    assert hour_up == fit_kibam(ratings_at_least(spec, 1.0))


def test_fit_needs_three_ratings():
    # KiBaM has three parameters (c, k, q_max; M&M 1993), so a fit needs three ratings; a negative capacity is refused
    # (benchbook's own contract)
    with pytest.raises(SpecError) as e:
        fit_kibam([(10, 100.0), (20, 110.0)])
    assert "3 or more" in str(e.value)
    with pytest.raises(SpecError):
        fit_kibam([(10, 100.0), (20, -1.0), (5, 80.0)])


# ---- Peukert ----------------------------------------------------------------------------------
def test_peukert_two_ratings():
    # C20 = 100 Ah, C5 = 85 Ah -> k = ln(20/5) / ln(17/5) = 1.1328 (Peukert 1897 rated-capacity form, docs/references.md [text])
    k = fit_peukert([(20, 100.0), (5, 85.0)])
    assert k == pytest.approx(1.1328, abs=5e-5)
    assert k == pytest.approx(math.log(4) / math.log(3.4), rel=1e-12)
    # the fitted law gives both ratings back: 5 A for 20 h, 17 A for 5 h (Peukert 1897, rated form)
    assert peukert_hours(5.0, 100.0, 20.0, k) == pytest.approx(20.0, rel=1e-12)
    assert peukert_hours(17.0, 100.0, 20.0, k) == pytest.approx(5.0, rel=1e-12)


def test_peukert_least_squares_matches_polyfit():
    table = [(1, 58.0), (5, 88.0), (10, 100.0), (20, 110.0), (100, 122.0)]
    h = np.array([t[0] for t in table], dtype=float)
    i = np.array([t[1] for t in table]) / h
    # reference: numpy.polyfit of ln H on ln I; k is minus the slope
    slope, _ = np.polyfit(np.log(i), np.log(h), 1)
    assert fit_peukert(table) == pytest.approx(-slope, rel=1e-12)
    # order of the rows does not matter
    assert fit_peukert(table[::-1]) == pytest.approx(-slope, rel=1e-12)


def test_peukert_hours_arrays_and_limits():
    cur = np.array([2.5, 5.0, 10.0, 0.0, -3.0])
    t = peukert_hours(cur, 100.0, 20.0, 1.2)
    # t = H (C / (I H))^k by hand: 20 * 2^1.2, 20, 20 * 0.5^1.2
    assert t[:3] == pytest.approx([20 * 2 ** 1.2, 20.0, 20 * 0.5 ** 1.2], rel=1e-12)
    # zero or charging current never empties the battery: infinite runtime (benchbook's own convention); bad arguments
    # are named at once (benchbook's own contract); one rating cannot fit an exponent (Peukert 1897 needs two)
    assert np.all(np.isinf(t[3:]))
    with pytest.raises(SpecError) as e:
        peukert_hours(5.0, -100.0, 0.0, 1.2)
    assert [p.field for p in e.value.problems] == ["rated_ah", "rated_hours"]
    with pytest.raises(SpecError):
        fit_peukert([(20, 100.0)])


# ---- the bank at one load ---------------------------------------------------------------------
_BY = {s.model: s for s in DEFAULT_CATALOG}
_FITS = {s.model: (fit_kibam(ratings_at_least(s, 1.0)), fit_peukert(ratings_at_least(s, 1.0)))
         for s in DEFAULT_CATALOG}


def _ode_discharge_then_rest(kb, current, t_cut, rest):
    """solve_ivp reference: from full at constant current to t_cut, then rest at zero current."""
    q1, q2 = _ode(kb, kb.c * kb.q_max_ah, (1 - kb.c) * kb.q_max_ah, current, t_cut)
    return q1, q2, _ode(kb, 0.0, q2, 0.0, rest)


def test_bank_power_load_and_single_string():
    spec = _BY["IL-12A-100"]
    b = bank_at_load(spec, 4, 1, load_w=1200.0)
    assert isinstance(b, BankAtLoad)
    # 4 x 12 V blocks = 24 cells at 2 V nominal = 48 V; 1200 W / 48 V = 25 A (common practice, no source)
    assert b.bank_voltage_v == 48.0 and b.bank_current_a == pytest.approx(25.0) and b.load_basis == "power"
    # one string: no parallel gain, by the definition of the gain
    assert b.kibam_parallel_gain == pytest.approx(1.0, rel=1e-12)
    assert b.peukert_parallel_gain == pytest.approx(1.0, rel=1e-12)
    # KiBaM usable charge is q(T) = I T at the runtime (M&M 1993)
    assert b.kibam_usable_ah == pytest.approx(b.kibam.capacity_ah(b.kibam_runtime_h), rel=1e-9)
    assert b.kibam_usable_kwh == pytest.approx(b.kibam_usable_ah * 48.0 / 1000.0, rel=1e-12)
    # 25 A lies between the 3 h (26 A) and 5 h (17 A) ratings of the invented table: runtime inside
    assert 3.0 < b.kibam_runtime_h < 5.0 and b.in_table
    # Peukert anchored at C20 = 100 Ah: t = 20 (100 / (25 * 20))^k (Peukert 1897 rated form)
    assert b.peukert_runtime_h == pytest.approx(20 * (100 / 500) ** b.peukert_k, rel=1e-9)


def test_bank_parallel_gain():
    spec = _BY["IL-2F-420"]
    b = bank_at_load(spec, 24, 3, load_a=120.0)
    assert b.string_current_a == pytest.approx(40.0)
    # Peukert: the gain is P^(k-1) (algebra on Peukert 1897 rated form)
    assert b.peukert_parallel_gain == pytest.approx(3 ** (b.peukert_k - 1), rel=1e-9)
    # KiBaM: the gain is T(I/P) / (P T(I)) with T from q(T) = I T (M&M 1993)
    kb = b.kibam
    assert b.kibam_parallel_gain == pytest.approx(kb.runtime_h(40.0) / (3 * kb.runtime_h(120.0)), rel=1e-9)
    assert b.kibam_parallel_gain > 1.0 and b.peukert_parallel_gain > 1.0


def test_bank_bound_charge_and_rest_against_ode():
    spec = _BY["IL-12F-110"]
    kb, kp = _FITS[spec.model]
    b = bank_at_load(spec, 2, 2, load_a=40.0, rest_h=6.0, kibam=kb, peukert_k=kp)
    # reference: scipy.integrate.solve_ivp on the M&M 1993 ODE, one string, then times 2 strings
    q1_cut, q2_cut, (q1_rest, _q2_rest) = _ode_discharge_then_rest(kb, 20.0, b.kibam_runtime_h, 6.0)
    assert q1_cut == pytest.approx(0.0, abs=1e-6)
    assert b.bound_ah_at_cutoff == pytest.approx(2 * q2_cut, rel=1e-7)
    assert b.recovered_ah_after_rest == pytest.approx(2 * q1_rest, rel=1e-7)
    # after a very long rest the tanks level: q1 = c (q1 + q2) (equilibrium of the M&M 1993 ODE)
    long = bank_at_load(spec, 2, 2, load_a=40.0, rest_h=1000.0, kibam=kb, peukert_k=kp)
    assert long.recovered_ah_after_rest == pytest.approx(kb.c * long.bound_ah_at_cutoff, rel=1e-9)


def test_bank_nominal_current_gives_nominal_hours_by_peukert():
    spec = _BY["IL-2F-1000"]
    # at the C10 current (100 A per string) Peukert's rated form returns exactly 10 h (Peukert 1897)
    b = bank_at_load(spec, 24, 2, load_a=200.0)
    assert b.peukert_rated_hours == 10.0 and b.peukert_rated_ah == pytest.approx(1000.0)
    assert b.peukert_runtime_h == pytest.approx(10.0, rel=1e-12)
    assert b.peukert_usable_ah == pytest.approx(2000.0, rel=1e-12)


def test_bank_tiny_load_is_flagged_out_of_table():
    spec = _BY["IL-12G-90"]
    kb, kp = _FITS[spec.model]
    # 0.2 A lasts far longer than the 100 h rating of the invented table (common practice, no source)
    b = bank_at_load(spec, 1, 1, load_a=0.2, kibam=kb, peukert_k=kp)
    assert not b.in_table and b.kibam_runtime_h > 100.0
    # KiBaM never delivers more than q_max; Peukert does, which is why KiBaM is the default (M&M 1993)
    assert b.kibam_usable_ah <= kb.q_max_ah


def test_bank_reports_every_bad_argument():
    # benchbook's own contract: every bad argument named at once; power and current are exclusive
    spec = _BY["IL-12A-100"]
    with pytest.raises(SpecError) as e:
        bank_at_load(spec, 0, 1.5, load_w=-5.0, rest_h=-1.0)
    assert [p.field for p in e.value.problems] == ["series", "parallel", "load_w", "rest_h"]
    with pytest.raises(SpecError) as e:
        bank_at_load(spec, 4, 1, load_w=100.0, load_a=2.0)
    assert "exactly one" in str(e.value)


@settings(max_examples=40, deadline=None)
@given(st.sampled_from(sorted(_BY)), st.integers(1, 24), st.integers(1, 5), st.floats(50.0, 20000.0))
def test_more_strings_never_deliver_less(model, series, parallel, load_w):
    spec = _BY[model]
    kb, kp = _FITS[model]
    a = bank_at_load(spec, series, parallel, load_w=load_w, kibam=kb, peukert_k=kp)
    b = bank_at_load(spec, series, parallel + 1, load_w=load_w, kibam=kb, peukert_k=kp)
    # more parallel strings never deliver less usable energy (DESIGN.md invariant; M&M 1993 and Peukert 1897)
    assert b.kibam_usable_kwh >= a.kibam_usable_kwh * (1 - 1e-12)
    assert b.peukert_usable_kwh >= a.peukert_usable_kwh * (1 - 1e-12)
    assert b.kibam_parallel_gain >= 1.0 - 1e-12
