"""Checks of ``tea.finance`` against outside sources.

Sources named beside each check:

* numpy-financial docstring example: the worked examples printed in the
  numpy-financial docstrings, each re-run here with numpy-financial 1.0.0;
* numpy_financial (1.0.0) as a reference library, called in the test itself;
* standard textbook identities (annuity factor, capital recovery, equivalent
  annual annuity, payback), each value re-computed with numpy_financial;
* hand calculations written out in the comment beside the check;
* ``from memory (standard identity)`` where no document was at hand.

Tolerances follow the printed precision of the source (half a unit in its
last printed digit) or, against the reference library, 1e-9.
"""

from __future__ import annotations

import math

import numpy as np
import numpy_financial as npf
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from hypothesis.extra import numpy as hnp

from tea.methods import finance as fin

# The npv example of the numpy-financial docstring, reused below.
NPV_EXAMPLE = [-40_000.0, 5_000.0, 8_000.0, 12_000.0, 30_000.0]


# ---------------------------------------------------------------------------
# helpers (generators of test flows and an independent root check)
# ---------------------------------------------------------------------------
def _one_sign_change_flows(rng, cases, years):
    """Rows with costs in the first 1-4 years and receipts after: one sign change."""
    f = rng.uniform(1.0, 1000.0, (cases, years))
    n_costs = rng.integers(1, 5, cases)
    costs = np.arange(years)[None, :] < n_costs[:, None]
    f[costs] *= -rng.uniform(1.0, 10.0, costs.sum())
    # some zeros, which the sign rule ignores
    f[:, 1:][rng.random((cases, years - 1)) < 0.05] = 0.0
    return f


def _mixed_sign_flows(rng, cases, years):
    """Rows like the above with random late costs: one or several sign changes."""
    f = _one_sign_change_flows(rng, cases, years)
    late = rng.random((cases, years)) < 0.12
    late[:, :3] = False
    f[late] = -rng.uniform(10.0, 3000.0, late.sum())
    return f


def _clearly_one_root(row):
    """True if the NPV polynomial has one root in (-1, inf) and no near-real pair.

    Decided independently of tea from ``np.roots`` (the method of
    numpy_financial.irr): exactly one root x = 1/(1+r) > 0 with zero
    imaginary part, and no complex root near the positive real axis.
    """
    roots = np.roots(np.trim_zeros(np.asarray(row, dtype=float)[::-1]))
    roots = roots[roots != 0]
    real = (roots.imag == 0) & (roots.real > 0)
    near = (roots.imag != 0) & (np.abs(roots.imag) < 1e-6 * np.abs(roots)) & (roots.real > 0)
    return real.sum() == 1 and not near.any()


def _polyval(u, coef):
    return float(np.polynomial.polynomial.polyval(u, coef))


def _is_root(rate, flows, rtol=1e-9):
    """Whether ``rate`` makes the NPV of ``flows`` zero, relative to the flows' scale.

    Evaluated in x = 1/(1+r) for r > 0 and in y = 1 + r (reversed flows) for
    r <= 0, so that the polynomial is only evaluated on [0, 1]. Accepts the
    rate if |NPV| <= rtol * sum |v_t| w^t, or if the NPV changes sign within
    a window around w of rtol relative plus a few float steps of the rate
    itself (a rate next to -100 % or beyond the float range cannot be
    written more precisely).
    """
    v = np.asarray(flows, dtype=float)
    v = v / np.max(np.abs(v))
    g = 1.0 + rate
    ulp = np.spacing(abs(rate)) if math.isfinite(rate) else 0.0
    if g <= 1.0:
        w, a = g, v[::-1]
        h = rtol * w + 4.0 * ulp
    else:
        w, a = 1.0 / g, v
        h = rtol * w + 4.0 * ulp * w * w + 1e-300
    value = _polyval(w, a)
    if abs(value) <= rtol * _polyval(w, np.abs(a)):
        return True
    left, right = _polyval(max(w - h, 0.0), a), _polyval(min(w + h, 1.0), a)
    return left == 0 or right == 0 or (left < 0) != (right < 0)


# ---------------------------------------------------------------------------
class TestDiscountFactors:
    @pytest.mark.parametrize("rate", [0.0, 0.05, 0.08, -0.5, 2.0])
    def test_against_numpy_financial_npv(self, rate):
        # numpy_financial.npv of a unit flow in year t is the discount factor of year t
        n = 6
        expected = [npf.npv(rate, np.eye(n)[t]) for t in range(n)]
        np.testing.assert_allclose(fin.discount_factors(rate, n), expected, rtol=1e-12)

    def test_hand_values(self):
        # hand calculation: 1/1.08 = 0.9259259..., 1/1.08**2 = 0.8573388...
        np.testing.assert_allclose(
            fin.discount_factors(0.08, 3), [1.0, 0.9259259, 0.8573388], atol=5e-8
        )

    def test_one_rate_per_case(self):
        rates = np.array([0.0, 0.03, 0.1])
        got = fin.discount_factors(rates, 4)
        assert got.shape == (3, 4)
        for row, r in zip(got, rates):
            # numpy_financial.npv as reference library
            np.testing.assert_allclose(row, [npf.npv(r, np.eye(4)[t]) for t in range(4)], rtol=1e-12)


# ---------------------------------------------------------------------------
class TestNpv:
    def test_docstring_example(self):
        # numpy-financial docstring example: npv(0.08, [-40000, 5000, 8000, 12000, 30000])
        # = 3065.22267, printed to 5 decimals
        assert fin.npv(0.08, NPV_EXAMPLE) == pytest.approx(3065.22267, abs=5e-6)

    @pytest.mark.parametrize(
        "row, expected",
        [
            # numpy-financial docstring example: npv([0, 0.05, 0.10], [[-4000, 500, 800],
            # [-5000, 600, 900]]) = [[-2700, -3500], [-2798.19, -3612.24],
            # [-2884.30, -3710.74]], printed to 2 decimals (one column per row here)
            ([-4000, 500, 800], [-2700.0, -2798.19, -2884.30]),
            ([-5000, 600, 900], [-3500.0, -3612.24, -3710.74]),
        ],
    )
    def test_docstring_example_several_rates(self, row, expected):
        np.testing.assert_allclose(fin.npv([0.0, 0.05, 0.10], row), expected, atol=5e-3)

    def test_against_numpy_financial_random(self):
        # numpy_financial.npv as reference library, one rate per row
        rng = np.random.default_rng(11)
        flows = rng.normal(0.0, 1000.0, (60, 15))
        rates = rng.uniform(-0.5, 1.0, 60)
        expected = [npf.npv(r, row) for r, row in zip(rates, flows)]
        np.testing.assert_allclose(fin.npv(rates, flows), expected, rtol=1e-9, atol=1e-9)

    def test_scalar_rate_2d(self):
        # numpy_financial.npv as reference library
        rng = np.random.default_rng(12)
        flows = rng.normal(0.0, 500.0, (5, 9))
        np.testing.assert_allclose(
            fin.npv(0.07, flows), [npf.npv(0.07, row) for row in flows], rtol=1e-9, atol=1e-9
        )

    def test_list_tuple_ndarray(self):
        # numpy-financial docstring example value, through each input type
        for flows in (NPV_EXAMPLE, tuple(NPV_EXAMPLE), np.array(NPV_EXAMPLE)):
            got = fin.npv(0.08, flows)
            assert isinstance(got, float)
            assert got == pytest.approx(3065.22267, abs=5e-6)

    def test_bad_rate_shape(self):
        with pytest.raises(ValueError, match="rate must be a scalar or shaped"):
            fin.npv(np.zeros((2, 2)), [1.0, 2.0])
        with pytest.raises(ValueError, match="rate must be a scalar or shaped"):
            fin.npv([0.1, 0.2, 0.3], np.ones((2, 4)))


# ---------------------------------------------------------------------------
class TestSignChanges:
    @pytest.mark.parametrize(
        "flows, expected",
        [
            ([-100, 39, 59, 55, 20], 1),  # counted by hand: - + + + +
            ([-100, 100, 0, -7], 2),  # counted by hand: - + (0) -
            ([-5, 10.5, 1, -8, 1], 3),  # counted by hand: - + + - +
            ([0, -1, 0, 0, 2, 0, -3], 2),  # counted by hand, zeros ignored
            ([0, 0, 0], 0),
            ([5, 5], 0),
        ],
    )
    def test_hand_counts(self, flows, expected):
        assert fin.sign_changes(flows) == expected

    def test_2d(self):
        # counted by hand, row by row
        got = fin.sign_changes([[-1, 2, -3], [1, 0, 2], [0, -1, 1]])
        assert got.tolist() == [2, 0, 1]


#: numpy-financial docstring examples of irr, printed to 5 decimals
IRR_DOCSTRING_EXAMPLES = [
    ([-100, 39, 59, 55, 20], 0.28095),  # numpy-financial docstring example
    ([-100, 0, 0, 74], -0.0955),  # numpy-financial docstring example
    ([-100, 100, 0, 7], 0.06206),  # numpy-financial docstring example
]


# ---------------------------------------------------------------------------
class TestIrr:
    @pytest.mark.parametrize(
        "flows, expected",
        IRR_DOCSTRING_EXAMPLES,
    )
    def test_docstring_examples(self, flows, expected):
        # printed to 5 decimals (-0.0955 is -0.09550 rounded)
        assert fin.irr(flows) == pytest.approx(expected, abs=5e-6)
        assert fin.irr(np.array([flows, flows], dtype=float))[1] == pytest.approx(expected, abs=5e-6)

    def test_docstring_example_full_precision(self):
        # numpy-financial docstring example, full value 0.2809484211599611
        assert fin.irr([-100, 39, 59, 55, 20]) == pytest.approx(0.2809484211599611, rel=1e-12)

    def test_npv_example(self):
        # IRR of the numpy-financial npv docstring flows, 0.105823 as computed by
        # numpy_financial.irr (checked here as well)
        assert npf.irr(NPV_EXAMPLE) == pytest.approx(0.105823, abs=5e-7)
        assert fin.irr(NPV_EXAMPLE) == pytest.approx(0.105823, abs=5e-7)

    def test_docstring_example_with_two_roots(self):
        # numpy-financial docstring example: irr([-100, 100, 0, -7]) = -0.0833, the
        # root nearest zero of two. Two sign changes: tea reports no unique rate,
        # and names the documented one among the roots.
        flows = [-100, 100, 0, -7]
        assert npf.npv(-0.0833, flows) == pytest.approx(0.0, abs=0.05)  # it is a root
        assert math.isnan(fin.irr(flows))
        rate, reason = fin.irr_explained(flows)
        assert math.isnan(rate)
        assert reason.startswith("2 rates make NPV zero") and "-8.3 %" in reason

    def test_docstring_example_with_three_roots(self):
        # numpy-financial docstring example: irr([-5, 10.5, 1, -8, 1]) = 0.0886, the
        # root nearest zero of three (np.roots of the polynomial gives 3 positive x)
        flows = [-5, 10.5, 1, -8, 1]
        roots = np.roots(flows[::-1])
        assert ((roots.imag == 0) & (roots.real > 0)).sum() == 3
        assert math.isnan(fin.irr(flows))
        rate, reason = fin.irr_explained(flows)
        assert reason.startswith("3 rates make NPV zero") and "8.9 %" in reason

    def test_two_roots_hand_worked(self):
        # hand-worked quadratic: with g = 1 + r, -100 g^2 + 230 g - 132 = 0,
        # g = (230 -+ 10) / 200 = 1.1 or 1.2, so r = 10 % and 20 %
        flows = [-100, 230, -132]
        assert fin.npv(0.10, flows) == pytest.approx(0.0, abs=1e-9)
        assert fin.npv(0.20, flows) == pytest.approx(0.0, abs=1e-9)
        assert math.isnan(fin.irr(flows))
        assert math.isnan(fin.irr_scalar(flows))
        assert np.isnan(fin.irr(np.array([flows, flows], dtype=float))).all()
        rate, reason = fin.irr_explained(flows)
        assert math.isnan(rate)
        assert reason == "2 rates make NPV zero (10.0 %, 20.0 %); see MIRR"

    @pytest.mark.parametrize(
        "flows, expected",
        [
            # hand calculation: NPV(0) = -100 + 50 + 50 = 0, one sign change
            ([-100, 50, 50], 0.0),
            # hand calculation: -100/(1+r) + 110/(1+r)^2 = 0 gives 1 + r = 1.1
            ([0, -100, 110], 0.10),
            ([-100, 110, 0], 0.10),
            # hand calculation: -100 + 121/(1+r)^2 = 0 gives 1 + r = 1.1
            ([-100, 0, 121], 0.10),
            # hand calculation: sign flipped flows have the same root
            ([100, -110], 0.10),
        ],
    )
    def test_hand_calculations(self, flows, expected):
        assert fin.irr(flows) == pytest.approx(expected, abs=1e-12)
        assert fin.irr(np.array([flows], dtype=float))[0] == pytest.approx(expected, abs=1e-12)

    @pytest.mark.parametrize("flows", [[100, 20, 30], [-10, -5, 0], [0, 0, 0], [5.0], []])
    def test_no_sign_change_is_nan(self, flows):
        # no sign change: no rate makes NPV zero (Descartes' rule of signs)
        assert math.isnan(fin.irr(flows))

    def test_npv_irr_congruence(self):
        # the numpy-financial test suite's identity: npv(irr(x), x) ~ 0, atol 1e-9
        rng = np.random.default_rng(2024)
        flows = _one_sign_change_flows(rng, 400, 25)
        assert (fin.sign_changes(flows) == 1).all()
        rates = fin.irr(flows)
        assert np.isfinite(rates).all() and (rates > -1).all()
        np.testing.assert_allclose(fin.npv(rates, flows), 0.0, atol=1e-9)
        for row, r in zip(flows[:50], rates[:50]):
            assert npf.npv(r, row) == pytest.approx(0.0, abs=1e-9)

    def test_agrees_with_numpy_financial_where_one_root(self):
        # numpy_financial.irr as reference library, on rows with exactly one
        # real root in (-1, inf) (decided from np.roots in the test)
        rng = np.random.default_rng(7)
        flows = np.vstack(
            [_one_sign_change_flows(rng, 300, 12), _mixed_sign_flows(rng, 700, 12)]
        )
        one = np.array([_clearly_one_root(row) for row in flows])
        several = fin.sign_changes(flows) >= 3
        assert one.sum() > 500 and (one & several).sum() > 20  # both paths exercised
        expected = np.array([npf.irr(row) for row in flows[one]])
        got = fin.irr(flows)
        np.testing.assert_allclose(got[one], expected, rtol=1e-9, atol=1e-9)
        got_scalar = np.array([fin.irr_scalar(row) for row in flows[one]])
        np.testing.assert_allclose(got_scalar, expected, rtol=1e-9, atol=1e-9)

    def test_nan_where_several_roots(self):
        # rows whose polynomial has two or more real roots in (-1, inf), as
        # found by np.roots (numpy_financial's method), are reported as NaN
        rng = np.random.default_rng(8)
        flows = _mixed_sign_flows(rng, 600, 10)
        got = fin.irr(flows)
        for row, r in zip(flows, got):
            roots = np.roots(np.trim_zeros(row[::-1]))
            real = roots[(np.abs(roots.imag) <= 1e-6 * np.abs(roots)) & (roots.real > 0)]
            if real.size >= 2:
                assert math.isnan(r)

    def test_non_finite_rows(self):
        flows = np.array(
            [[-100, 39, 59, 55, 20], [-100, np.nan, 59, 55, 20], [-100, 39, np.inf, 55, 20]]
        )
        got = fin.irr(flows)
        assert got[0] == pytest.approx(0.28095, abs=5e-6)  # numpy-financial docstring example
        assert np.isnan(got[1:]).all()
        assert math.isnan(fin.irr([-1.0, -np.inf, 3.0]))

    def test_input_types_give_the_same_value(self):
        # numpy-financial docstring example [-100, 39, 59, 55, 20] -> 0.28095
        flows = [-100, 39, 59, 55, 20]
        values = [
            fin.irr(flows),
            fin.irr(tuple(flows)),
            fin.irr(np.array(flows)),
            fin.irr(np.array(flows, dtype=float)),
            float(fin.irr(np.array([flows], dtype=float))[0]),
            fin.irr_scalar(flows),
            fin.irr_scalar(np.array(flows, dtype=float)),
        ]
        assert all(isinstance(v, float) for v in values)
        np.testing.assert_allclose(values, 0.28095, atol=5e-6)
        np.testing.assert_allclose(values, values[0], rtol=0, atol=1e-13)

    def test_shapes(self):
        assert isinstance(fin.irr([-1.0, 2.0]), float)
        out = fin.irr(np.tile([-1.0, 2.0], (4, 1)))
        assert out.shape == (4,)
        # hand calculation: -1 + 2/(1+r) = 0 gives r = 1
        np.testing.assert_allclose(out, 1.0, atol=1e-12)
        assert fin.irr(np.zeros((0, 5))).shape == (0,)
        with pytest.raises(ValueError, match="flows must be shaped"):
            fin.irr(np.zeros((2, 2, 2)))

    def test_across_chunks(self):
        # more rows than one solver block; every row the numpy-financial
        # docstring example [-100, 39, 59, 55, 20] -> 0.28095
        flows = np.tile([-100.0, 39.0, 59.0, 55.0, 20.0], (70_000, 1))
        flows[::3] *= 2.0  # scaling a row does not change its IRR
        got = fin.irr(flows)
        np.testing.assert_allclose(got, 0.2809484211599611, rtol=1e-12)

    @settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])
    @given(
        hnp.arrays(
            np.float64,
            st.integers(1, 40),
            elements=st.floats(allow_nan=False, allow_infinity=False, width=64),
        )
    )
    def test_never_raises_1d(self, flows):
        self._never_raises(flows)

    def test_a_root_near_zero_is_solved_to_the_end(self):
        # z = 1/(1+r) near 1e-162: a step's cube underflows to 0 in absolute terms, so the stop
        # that predicts the next step must work relative to z (found by the property test above)
        self._never_raises(np.array([0.0, -1.61737073e16, 4.79551136e270, 0.0, 0.0, 1.14008190e270]))

    def _never_raises(self, flows):
        # crash check in the manner of the numpy-financial fuzz tests; the
        # result must be NaN or a root of the NPV relative to the flows' scale
        rate = fin.irr(flows)
        assert isinstance(rate, float)
        assert math.isnan(rate) or (rate >= -1.0 and _is_root(rate, flows))
        # the vectorised path on the same row: same verdict, same rate (or a root too)
        vector = fin.irr(flows[np.newaxis, :])[0]
        assert math.isnan(vector) == math.isnan(rate)
        if not math.isnan(rate):
            assert abs(vector - rate) <= 1e-12 * (1.0 + abs(rate)) or _is_root(vector, flows)
        rate_e, reason = fin.irr_explained(flows)
        assert (reason is None) != math.isnan(rate_e)

    @settings(max_examples=200, deadline=None, suppress_health_check=[HealthCheck.too_slow])
    @given(
        hnp.arrays(
            np.float64,
            st.tuples(st.integers(1, 12), st.integers(1, 30)),
            elements=st.floats(allow_nan=False, allow_infinity=False, width=64),
        )
    )
    def test_never_raises_2d(self, flows):
        rates = fin.irr(flows)
        assert rates.shape == (flows.shape[0],)
        for row, rate in zip(flows, rates):
            assert math.isnan(rate) or (rate >= -1.0 and _is_root(rate, row))


# ---------------------------------------------------------------------------
class TestIrrScalar:
    @pytest.mark.parametrize(
        "flows, expected",
        IRR_DOCSTRING_EXAMPLES,
    )
    def test_docstring_examples(self, flows, expected):
        assert fin.irr_scalar(flows) == pytest.approx(expected, abs=5e-6)

    def test_same_as_vectorised(self):
        # same rule and method as irr: equal to 1e-12 on one- and several-sign-change
        # rows (the vectorised value is itself checked against numpy_financial above)
        rng = np.random.default_rng(5)
        flows = np.vstack([_one_sign_change_flows(rng, 300, 21), _mixed_sign_flows(rng, 300, 21)])
        vector = fin.irr(flows)
        scalar = np.array([fin.irr_scalar(row) for row in flows])
        assert np.array_equal(np.isnan(vector), np.isnan(scalar))
        assert np.isfinite(vector).sum() > 300
        np.testing.assert_allclose(scalar, vector, rtol=1e-12, atol=1e-12)

    def test_stand_against_numpy_financial(self):
        # numpy_financial.irr as reference library, on a 21-year stand
        # (establishment cost, ramp-up, plateau, a final year net of removal)
        stand = [-2500.0, -200.0, 450.0, 850.0] + [1000.0] * 16 + [350.0]
        assert fin.irr_scalar(stand) == pytest.approx(npf.irr(stand), abs=1e-9)

    def test_rejects_2d(self):
        with pytest.raises(ValueError, match="one case"):
            fin.irr_scalar(np.ones((2, 3)))


# ---------------------------------------------------------------------------
class TestIrrExplained:
    def test_unique(self):
        # numpy-financial docstring example [-100, 39, 59, 55, 20] -> 0.28095
        rate, reason = fin.irr_explained([-100, 39, 59, 55, 20])
        assert reason is None
        assert rate == pytest.approx(0.28095, abs=5e-6)

    @pytest.mark.parametrize(
        "flows, reason",
        [
            ([10, 20, 0], "the net flows are never negative (no year costs more than it brings in)"),
            ([-10, -20, 0], "the net flows are never positive (no year brings in more than it costs)"),
            # hand-worked quadratic (see TestIrr.test_two_roots_hand_worked)
            ([-100, 230, -132], "2 rates make NPV zero (10.0 %, 20.0 %); see MIRR"),
            # hand calculation: -100 g^2 + 50 g - 100 = 0 has discriminant
            # 2500 - 40000 < 0, so no real g = 1 + r
            ([-100, 50, -100], "no rate in (-100 %, inf) makes NPV zero"),
            # hand calculation: -1 + 2x - x^2 = -(1 - x)^2, a double root at r = 0
            ([-1, 2, -1], "NPV touches zero at 0.0 % without changing sign; see MIRR"),
            ([0, 0], "the flows are all zero"),
            ([-1, np.nan, 2], "the flows contain a missing or infinite value"),
        ],
    )
    def test_reasons(self, flows, reason):
        rate, got = fin.irr_explained(flows)
        assert math.isnan(rate)
        assert got == reason

    def test_removal_cost_turns_last_flow_negative(self):
        # a stand whose last year is net of a removal cost larger than its
        # harvest: two sign changes, so no unique rate (Descartes' rule of signs)
        stand = [-2500.0, -200.0, 450.0, 850.0] + [1000.0] * 16 + [-600.0]
        rate, reason = fin.irr_explained(stand)
        assert math.isnan(rate)
        assert reason.startswith("2 rates make NPV zero (") and reason.endswith("); see MIRR")
        # both listed rates are roots: numpy_financial.npv as reference library
        listed = reason[reason.index("(") + 1 : reason.index(")")].split(", ")
        for text in listed:
            r = float(text.rstrip(" %")) / 100.0
            window = [npf.npv(r - 0.0006, stand), npf.npv(r + 0.0006, stand)]
            assert window[0] * window[1] <= 0  # sign change within the printed precision


# ---------------------------------------------------------------------------
class TestMirr:
    @pytest.mark.parametrize(
        "flows, finance, reinvest, expected, tol",
        [
            # numpy-financial docstring example, full value
            ([-100, 50, -60, 70], 0.10, 0.12, -0.03909366594356467, 1e-12),
            # numpy-financial docstring example, printed to 8 decimals
            ([-120000, 39000, 30000, 21000, 37000], 0.08, 0.10, 0.05437856, 5e-9),
            # MIRR of the numpy-financial npv docstring flows at 10 % / 12 %,
            # 0.108980 as computed by numpy_financial.mirr
            (NPV_EXAMPLE, 0.10, 0.12, 0.108980, 5e-7),
        ],
    )
    def test_examples(self, flows, finance, reinvest, expected, tol):
        assert npf.mirr(flows, finance, reinvest) == pytest.approx(expected, abs=tol)
        assert fin.mirr(flows, finance, reinvest) == pytest.approx(expected, abs=tol)

    def test_against_numpy_financial_random(self):
        # numpy_financial.mirr as reference library, vectorised with one pair of rates per row
        rng = np.random.default_rng(3)
        flows = rng.normal(0.0, 1000.0, (80, 11))
        finance = rng.uniform(0.0, 0.2, 80)
        reinvest = rng.uniform(0.0, 0.2, 80)
        expected = [npf.mirr(row, f, r) for row, f, r in zip(flows, finance, reinvest)]
        np.testing.assert_allclose(fin.mirr(flows, finance, reinvest), expected, rtol=1e-9)

    def test_nan_without_both_signs(self):
        # numpy-financial definition: NaN unless there are positive and negative flows
        assert math.isnan(npf.mirr([1, 2, 3], 0.1, 0.1))
        assert math.isnan(fin.mirr([1, 2, 3], 0.1, 0.1))
        got = fin.mirr([[1, 2, 3], [-1, -2, 0], [-100, 50, 70]], 0.1, 0.1)
        assert np.isnan(got[:2]).all()
        assert got[2] == pytest.approx(npf.mirr([-100, 50, 70], 0.1, 0.1), rel=1e-9)


# ---------------------------------------------------------------------------
LOAN_GRID = [
    (rate, nper, pv, fv, when)
    for rate in (0.0, 0.01, 0.075 / 12, 0.1, -0.02)
    for nper in (1, 12, 30)
    for pv in (2500.0, -1000.0)
    for fv in (0.0, 500.0)
    for when in ("end", "begin")
]


class TestPmt:
    def test_docstring_example(self):
        # numpy-financial docstring example: pmt(0.075/12, 12*15, 200000) = -1854.0247200054619
        assert fin.pmt(0.075 / 12, 12 * 15, 200_000) == pytest.approx(-1854.0247200054619, rel=1e-12)

    @pytest.mark.parametrize("rate, nper, pv, fv, when", LOAN_GRID)
    def test_against_numpy_financial(self, rate, nper, pv, fv, when):
        # numpy_financial.pmt as reference library (rate 0 included)
        with np.errstate(divide="ignore", invalid="ignore"):
            expected = float(npf.pmt(rate, nper, pv, fv, when))
        assert fin.pmt(rate, nper, pv, fv, when) == pytest.approx(expected, rel=1e-9, abs=1e-9)

    def test_broadcasting(self):
        # numpy_financial.pmt as reference library
        rates = np.array([0.0, 0.05, 0.1])
        nper = np.array([[10], [20]])
        got = fin.pmt(rates, nper, 1000.0)
        assert got.shape == (2, 3)
        with np.errstate(divide="ignore", invalid="ignore"):
            np.testing.assert_allclose(got, npf.pmt(*np.broadcast_arrays(rates, nper), 1000.0), rtol=1e-9)

    def test_bad_when(self):
        with pytest.raises(ValueError, match="when must be"):
            fin.pmt(0.1, 10, 100, when="middle")


class TestIpmtPpmt:
    def test_docstring_amortisation(self):
        # numpy-financial docstring example: 2500 over 12 months at 8.24 %/yr:
        # per 1: ppmt -200.58, ipmt -17.17; per 12: ppmt -216.26, ipmt -1.49;
        # total interest -112.98 (printed to 2 decimals)
        per = np.arange(1, 13)
        interest = fin.ipmt(0.0824 / 12, per, 12, 2500.0)
        principal = fin.ppmt(0.0824 / 12, per, 12, 2500.0)
        np.testing.assert_allclose(principal[[0, 11]], [-200.58, -216.26], atol=5e-3)
        np.testing.assert_allclose(interest[[0, 11]], [-17.17, -1.49], atol=5e-3)
        assert interest.sum() == pytest.approx(-112.98, abs=5e-3)
        # the same docstring: each ipmt + ppmt equals pmt
        np.testing.assert_allclose(interest + principal, fin.pmt(0.0824 / 12, 12, 2500.0), rtol=1e-12)

    @pytest.mark.parametrize("rate, nper, pv, fv, when", LOAN_GRID)
    def test_against_numpy_financial(self, rate, nper, pv, fv, when):
        # numpy_financial.ipmt / ppmt as reference library, every period
        per = np.arange(1, nper + 1)
        with np.errstate(divide="ignore", invalid="ignore"):
            exp_i = npf.ipmt(rate, per, nper, pv, fv, when)
            exp_p = npf.ppmt(rate, per, nper, pv, fv, when)
        np.testing.assert_allclose(fin.ipmt(rate, per, nper, pv, fv, when), exp_i, rtol=1e-9, atol=1e-9)
        np.testing.assert_allclose(fin.ppmt(rate, per, nper, pv, fv, when), exp_p, rtol=1e-9, atol=1e-9)

    def test_scalar_returns_float(self):
        # numpy-financial docstring example: per 1 interest -17.17
        got = fin.ipmt(0.0824 / 12, 1, 12, 2500.0)
        assert isinstance(got, float) and got == pytest.approx(-17.17, abs=5e-3)


# ---------------------------------------------------------------------------
class TestAnnuityFactor:
    def test_textbook_value(self):
        # standard annuity identity (1 - 1.08^-10)/0.08 = 6.710081, re-computed
        # with numpy_financial: -npf.pv(0.08, 10, 1) = 6.7100814
        assert -npf.pv(0.08, 10, 1) == pytest.approx(6.710081, abs=5e-7)
        assert fin.annuity_factor(0.08, 10) == pytest.approx(6.710081, abs=5e-7)

    def test_rate_zero(self):
        # standard identity: with no discounting the factor is the number of years
        np.testing.assert_allclose(fin.annuity_factor([0.0, 0.0], [7, 25]), [7.0, 25.0])

    @pytest.mark.parametrize("rate", [0.0, 0.02, 0.08, 0.15, -0.03])
    @pytest.mark.parametrize("n", [1, 5, 20, 40])
    def test_against_numpy_financial(self, rate, n):
        # numpy_financial.pv of a unit annuity as reference library
        with np.errstate(divide="ignore", invalid="ignore"):
            expected = -float(npf.pv(rate, n, 1))
        assert fin.annuity_factor(rate, n) == pytest.approx(expected, rel=1e-9)


class TestCapitalRecoveryFactor:
    def test_textbook_value(self):
        # standard identity CRF = 1/AF = 0.149029 at 8 %, 10 yr, re-computed with
        # numpy_financial: -npf.pmt(0.08, 10, 1) = 0.1490295
        assert -npf.pmt(0.08, 10, 1) == pytest.approx(0.149029, abs=5e-7)
        assert fin.capital_recovery_factor(0.08, 10) == pytest.approx(0.149029, abs=5e-7)

    @pytest.mark.parametrize("rate", [0.0, 0.04, 0.08, 0.2])
    def test_against_numpy_financial(self, rate):
        # numpy_financial.pmt of a unit loan as reference library
        with np.errstate(divide="ignore", invalid="ignore"):
            expected = -float(npf.pmt(rate, 12, 1))
        assert fin.capital_recovery_factor(rate, 12) == pytest.approx(expected, rel=1e-9)


class TestEquivalentAnnualValue:
    def test_textbook_value(self):
        # standard equivalent annual annuity NPV/AF: NPV 3065.22 at 8 % over 4 yr
        # = 925.454, re-computed with numpy_financial: -npf.pmt(0.08, 4, 3065.22) = 925.4537
        assert -npf.pmt(0.08, 4, 3065.22) == pytest.approx(925.454, abs=5e-4)
        assert fin.equivalent_annual_value(3065.22, 0.08, 4) == pytest.approx(925.454, abs=5e-4)

    def test_same_npv(self):
        # definition: the level amount over n years has the given NPV
        # (numpy_financial.npv as reference library)
        eav = fin.equivalent_annual_value(1234.5, 0.06, 7)
        assert npf.npv(0.06, [0.0] + [eav] * 7) == pytest.approx(1234.5, rel=1e-12)

    def test_vectorised(self):
        # numpy_financial.pmt as reference library
        got = fin.equivalent_annual_value(np.array([100.0, 200.0]), 0.05, np.array([10, 20]))
        np.testing.assert_allclose(got, [-npf.pmt(0.05, 10, 100.0), -npf.pmt(0.05, 20, 200.0)], rtol=1e-9)


class TestFisher:
    def test_textbook_value(self):
        # from memory (standard identity): 8 % nominal with 2 % inflation is
        # 1.08/1.02 - 1 = 5.882 % real
        assert fin.fisher_real_rate(0.08, 0.02) == pytest.approx(0.05882, abs=5e-6)

    @pytest.mark.parametrize("nominal", [0.0, 0.03, 0.08, 0.25])
    @pytest.mark.parametrize("inflation", [-0.01, 0.0, 0.02, 0.1])
    def test_round_trip(self, nominal, inflation):
        # from memory (standard identity): (1 + i) = (1 + real)(1 + inflation)
        real = fin.fisher_real_rate(nominal, inflation)
        assert (1 + nominal) == pytest.approx((1 + real) * (1 + inflation), rel=1e-12)
        assert fin.fisher_nominal_rate(real, inflation) == pytest.approx(nominal, abs=1e-12)

    def test_vectorised(self):
        # from memory (standard identity), hand calculation: 1.05/1.05 - 1 = 0, 1.1/1.0 - 1 = 0.1
        np.testing.assert_allclose(fin.fisher_real_rate([0.05, 0.1], [0.05, 0.0]), [0.0, 0.1], atol=1e-12)


# ---------------------------------------------------------------------------
class TestPayback:
    def test_simple(self):
        # standard payback, hand calculation on the numpy-financial npv docstring
        # flows: cumulative -40000, -35000, -27000, -15000, +15000, so year 4 and
        # 3 + 15000/30000 = 3.5 years
        assert fin.payback(NPV_EXAMPLE) == (4.0, 3.5)

    def test_discounted(self):
        # standard discounted payback at 8 % on the same flows: 3.861 years. Re-computed
        # with numpy_financial: npv of the first 4 flows = -18985.67, of all 5 = +3065.22,
        # so 3 + 18985.67 / (18985.67 + 3065.22) = 3.861
        before = npf.npv(0.08, NPV_EXAMPLE[:4])
        after = npf.npv(0.08, NPV_EXAMPLE)
        assert 3 + (-before) / (after - before) == pytest.approx(3.861, abs=5e-4)
        year, years = fin.payback(NPV_EXAMPLE, rate=0.08)
        assert year == 4.0
        assert years == pytest.approx(3.861, abs=5e-4)

    def test_never_and_at_once(self):
        # hand calculations: cumulative -100, -50, -10 never recovers -> NaN;
        # never negative -> paid back at once
        year, years = fin.payback([-100, 50, 40])
        assert math.isnan(year) and math.isnan(years)
        assert fin.payback([10, 5, -3]) == (0.0, 0.0)

    @pytest.mark.parametrize(
        "flows, year, years",
        [
            # hand calculation: cumulative -100, 20, -80, 40 recovers first in
            # year 1, at 0 + 100/120 of that year
            ([-100, 120, -100, 120], 1.0, 100 / 120),
            # hand calculation: cumulative 0, -100, 50: negative from year 1,
            # recovered in year 2, at 1 + 100/150
            ([0, -100, 150], 2.0, 1 + 100 / 150),
        ],
    )
    def test_first_recovery(self, flows, year, years):
        got_year, got_years = fin.payback(flows)
        assert got_year == year and got_years == pytest.approx(years, rel=1e-12)

    def test_vectorised(self):
        # hand calculations of the two rows above, and the discounted row
        # checked against the scalar discounted payback
        flows = np.array([NPV_EXAMPLE, [-100, 50, 40, 0, 0]], dtype=float)
        year, years = fin.payback(flows)
        assert year[0] == 4.0 and years[0] == 3.5
        assert np.isnan(year[1]) and np.isnan(years[1])
        year_d, years_d = fin.payback(flows, rate=np.array([0.08, 0.0]))
        assert years_d[0] == pytest.approx(3.861, abs=5e-4)
        assert np.isnan(years_d[1])


class TestPeakFunding:
    @pytest.mark.parametrize(
        "flows, need, year",
        [
            (NPV_EXAMPLE, 40_000.0, 0),  # hand calculation: cumulative lowest at t = 0
            ([-2500, -300, 400, 1200, 1500], 2800.0, 1),  # hand: -2500, -2800, -2400, ...
            ([100, 50, 20], 0.0, 0),  # hand: never negative, lowest cumulative 100 at t = 0
            ([-10, 30, -50, 5], 30.0, 2),  # hand: -10, 20, -30, -25
        ],
    )
    def test_hand_calculations(self, flows, need, year):
        assert fin.peak_funding(flows) == (need, year)

    def test_vectorised(self):
        # hand calculations of the rows above
        need, year = fin.peak_funding(np.array([[-2500, -300, 400, 1200], [-10, 30, -50, 5]], dtype=float))
        assert need.tolist() == [2800.0, 30.0]
        assert year.tolist() == [1, 2]


def test_an_undefined_irr_points_to_a_figure_that_is_shown():
    """Several rates leave the IRR of an incremental cash flow undefined: the reason points to what the
    reader can judge by (common practice: with several IRRs, NPV decides), and to the MIRR only for the
    flow whose MIRR is shown."""
    from tea.model.results import summarise
    from tea.inputs.case import load_case

    from conftest import CASES_DIR

    case = load_case(CASES_DIR / "sandy_slope_switchgrass.toml")
    res = summarise(case)
    note = res.notes["irr_vs_current_use"]
    assert note.startswith("IRR undefined: 2 rates make NPV zero (")  # the demo's incremental flow has two
    assert note.endswith("judge the gain by NPV vs current use") and "MIRR" not in note
    assert res.per_ha["npv_vs_current_use"] is not None  # the figure pointed to is there
    rate, reason = fin.irr_explained([-100, 230, -132], instead="judge by NPV")
    assert math.isnan(rate) and reason == "2 rates make NPV zero (10.0 %, 20.0 %); judge by NPV"
