"""Capability indices and intervals against the R package qcc on the piston-ring data."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import integrate, special

from verify.stats.capability import bissell_lower_bound, capability
from verify.stats.diagnostics import D2_TABLE, d2, expected_range, individuals_chart
from verify.stats.errors import DegenerateDataError, NotApplicableError

REFERENCE = Path(__file__).resolve().parents[1].parent / "shared" / "reference"


def reference_csv(relative: str) -> pd.DataFrame:
    path = REFERENCE / relative
    if not path.is_file():
        pytest.skip(f"reference data not found: {path} (needs the ../shared/reference folder)")
    return pd.read_csv(path, comment="#")


def digits(printed: str) -> float:
    """Half a unit in the last printed digit: the tolerance a printed value allows."""
    decimals = len(printed.split(".")[1]) if "." in printed else 0
    return 0.5 * 10.0**-decimals + 1e-12


def close(value: float, printed: str) -> bool:
    return abs(value - float(printed)) <= digits(printed)


@pytest.fixture(scope="module")
def rings() -> pd.DataFrame:
    d = reference_csv("capability/pistonrings.csv")
    trial = d[d["trial"].astype(str).str.upper() == "TRUE"]
    assert len(trial) == 125 and trial["sample"].nunique() == 25
    return trial


# qcc on subgroups 1-25 (reference README, values computed with the R package qcc):
# (lower, upper, target, Cp, Cp interval, Cpk, Cpk interval, Cpm)
QCC_CASES = [
    (73.95, 74.05, 74.00, "1.703", ("1.491", "1.915"), "1.663", ("1.448", "1.878"), "1.691"),
    (73.99, 74.01, 74.00, "0.3407", ("0.2983", "0.3830"), "0.3006", ("0.2312", "0.3700"),
     "0.3382"),
    # qcc's default target is the midpoint of the limits: (73.99 + 74.1) / 2 = 74.045
    (73.99, 74.10, 74.045, "1.8736", ("1.6406", "2.1063"), "0.3807", ("0.3055", "0.4559"),
     "0.4083"),
]


@pytest.mark.parametrize("case", QCC_CASES, ids=["wide", "narrow", "off-centre"])
def test_capability_matches_qcc_piston_rings(rings, case):
    lower, upper, target, cp, cp_ci, cpk, cpk_ci, cpm = case
    r = capability(rings["diameter"], lower=lower, upper=upper, target=target,
                   subgroups=rings["sample"])
    # R qcc: process.capability(qcc(diameter[trial], type="xbar"), spec.limits=c(lower, upper))
    assert close(r.mean, "74.00118")  # qcc: center
    assert abs(r.sigma_within - 0.009785039) < 5e-10  # qcc: std.dev = Rbar / d2(5), d2 = 2.326
    assert r.sigma_method.startswith("mean subgroup range / d2(5)")
    assert r.n == 125 and r.n_subgroups == 25
    assert close(r.cp, cp)  # qcc: Cp
    assert close(r.cp_interval.low, cp_ci[0]) and close(r.cp_interval.high, cp_ci[1])
    assert close(r.cpk, cpk)  # qcc: Cp_k
    assert close(r.cpk_interval.low, cpk_ci[0]) and close(r.cpk_interval.high, cpk_ci[1])
    assert close(r.cpm, cpm)  # qcc: Cpm


def test_overall_indices_match_qcc(rings):
    r = capability(rings["diameter"], lower=73.95, upper=74.05, subgroups=rings["sample"])
    assert close(r.sigma_overall, "0.010070")  # reference README, overall sd
    assert close(r.pp, "1.6551")  # qcc-based reference value, Pp with the overall sd
    assert close(r.ppk, "1.6162")  # qcc-based reference value, Ppk with the overall sd


def test_cpm_interval_boyles_form(rings):
    """Cpm interval: Boyles (1991) chi-square approximation (derivation in capability.py).

    qcc's printed Cpm limits for the two centred cases are (1.480, 1.902) and (0.2960, 0.3804);
    Boyles' df differ slightly from the df behind those limits, so we compare only to 0.003
    there, and not at all for the off-centre case, where the two approximations part ways.
    """
    x = rings["diameter"].to_numpy()
    r = capability(x, lower=73.95, upper=74.05, target=74.0, subgroups=rings["sample"])
    a = (r.mean - 74.0) / r.sigma_within
    nu = 125 * (1 + a * a) ** 2 / (1 + 2 * a * a)
    lo = r.cpm * math.sqrt(special.chdtri(nu, 0.975) / nu)
    hi = r.cpm * math.sqrt(special.chdtri(nu, 0.025) / nu)
    assert (r.cpm_interval.low, r.cpm_interval.high) == pytest.approx((lo, hi), rel=1e-12)
    assert abs(r.cpm_interval.low - 1.480) < 0.003 and abs(r.cpm_interval.high - 1.902) < 0.003
    narrow = capability(x, lower=73.99, upper=74.01, target=74.0, subgroups=rings["sample"])
    assert abs(narrow.cpm_interval.low - 0.2960) < 0.003
    assert abs(narrow.cpm_interval.high - 0.3804) < 0.003


def test_cpm_interval_reduces_to_cp_form_on_target():
    # with the mean exactly on target, a = 0, nu = n and Cpm = Cp: same chi-square form (n df)
    x = np.array([9.0, 11.0, 10.0, 10.5, 9.5, 10.0, 9.8, 10.2])  # mean 10 exactly
    r = capability(x, lower=8.0, upper=12.0, target=10.0)
    assert r.cpm == pytest.approx(r.cp, rel=1e-12)
    lo = r.cp * math.sqrt(special.chdtri(8, 0.975) / 8)
    assert r.cpm_interval.low == pytest.approx(lo, rel=1e-12)


def test_one_sided_specification():
    x = [5.1, 5.3, 4.9, 5.0, 5.2, 5.1, 4.8, 5.0, 5.2, 5.1]
    r = capability(x, upper=6.0)
    assert r.cp is None and r.cpl is None and r.pp is None and r.cpm is None
    assert r.cp_interval is None and r.cpm_interval is None
    assert r.cpk == r.cpu == pytest.approx((6.0 - r.mean) / (3 * r.sigma_within))
    low = capability(x, lower=4.0, target=5.0)
    assert low.cpk == low.cpl and low.cpm is None  # Cpm needs both limits


def test_moving_range_sigma_agrees_with_individuals_chart():
    x = [5.1, 5.3, 4.9, 5.0, 5.2, 5.1, 4.8, 5.0, 5.2, 5.1]
    r = capability(x, lower=4.0, upper=6.0)
    assert r.sigma_within == pytest.approx(individuals_chart(x).sigma, rel=1e-12)
    assert r.n_subgroups is None and "moving range" in r.sigma_method
    assert r.cp == pytest.approx(2.0 / (6 * r.sigma_within))


def test_unequal_subgroups_pool_scaled_ranges_with_burr_weights():
    x = [1.0, 2.0, 4.0, 1.0, 1.5, 3.0, 3.0, 7.0]
    lots = ["a", "a", "a", "b", "b", "c", "c", "d"]  # sizes 3, 2, 2 and one single value
    r = capability(x, lower=-10.0, upper=15.0, subgroups=lots)
    # ranges 3 (n 3), 0.5 (n 2), 0 (n 2); lot d has one value and is left out. Each R_i / d2(n_i)
    # is unbiased; Burr (1969) weights them by f_i = d2(n_i)^2 / d3(n_i)^2 (ASTM E2587's
    # weighted form; both cited from memory). Tabled d2(2) = 1.128, d2(3) = 1.693,
    # d3(2) = 0.853, d3(3) = 0.888 (Montgomery, Appendix VI).
    f3, f2 = 1.693**2 / 0.888**2, 1.128**2 / 0.853**2
    expected = (f3 * 3 / 1.693 + f2 * 0.5 / 1.128 + f2 * 0 / 1.128) / (f3 + 2 * f2)
    assert r.sigma_within == pytest.approx(expected, rel=1e-12)
    assert r.n_subgroups == 3 and "Burr" in r.sigma_method and "left out" in r.sigma_method
    # the effective df of the pooled estimate: Var = sigma^2 / sum f_i, nu = sum f_i / 2
    assert r.sigma_within_df == pytest.approx((f3 + 2 * f2) / 2, rel=1e-12)


def test_equal_subgroups_keep_rbar_over_d2():
    # with equal sizes the weights are equal and the estimate is the familiar Rbar / d2(n)
    x = [1.0, 2.0, 4.0, 1.0, 1.5, 3.0]
    r = capability(x, lower=-10.0, upper=15.0, subgroups=["a"] * 3 + ["b"] * 3)
    assert r.sigma_within == pytest.approx((3 + 2) / 2 / 1.693, rel=1e-12)


def test_bissell_bounds():
    x = np.linspace(9.0, 11.0, 30)
    r = capability(x, lower=8.0, upper=12.5)
    z = special.ndtri(0.95)
    # Ppk rests on the overall sd (n - 1 df): Bissell (1990) as printed
    lb = r.ppk_lower_bound(0.95)
    se = math.sqrt(1 / (9 * 30) + r.ppk**2 / (2 * 29))  # Bissell (1990)
    assert lb == pytest.approx(r.ppk - z * se, rel=1e-12)
    # the one-sided 95% bound is the lower end of the two-sided 90% interval
    assert lb == pytest.approx(capability(x, lower=8.0, upper=12.5, level=0.9).ppk_interval.low)
    # for Ppk > 0 the additive form equals Ppk (1 - z sqrt(1/(9 n Ppk^2) + 1/(2(n-1))))
    mult = r.ppk * (1 - z * math.sqrt(1 / (9 * 30 * r.ppk**2) + 1 / (2 * 29)))
    assert lb == pytest.approx(mult, rel=1e-12)
    # Cpk's moving-range sigma has fewer effective df than n - 1, so its bound is lower
    nu = r.sigma_within_df
    assert nu < 29
    cpk_lb = r.cpk_lower_bound(0.95)
    assert cpk_lb == pytest.approx(r.cpk - z * math.sqrt(1 / 270 + r.cpk**2 / (2 * nu)), rel=1e-12)
    assert r.lower_bound("cpk") == cpk_lb and r.lower_bound("ppk") == lb
    assert math.isfinite(bissell_lower_bound(0.0, 30))  # defined at Cpk = 0


values = st.lists(st.floats(-100, 100, allow_nan=False), min_size=4, max_size=40).filter(
    lambda v: np.ptp(v) > 1e-2 and np.all(np.diff(v) != 0)
)


@settings(max_examples=50, deadline=None)
@given(values, st.floats(0.01, 100.0), st.floats(-1e3, 1e3))
def test_capability_invariant_to_units(x, scale, shift):
    x = np.asarray(x)
    lo, hi, tgt = x.min() - 5.0, x.max() + 3.0, float(np.median(x))
    base = capability(x, lower=lo, upper=hi, target=tgt)
    moved = capability(x * scale + shift, lower=lo * scale + shift, upper=hi * scale + shift,
                       target=tgt * scale + shift)
    for name in ("cp", "cpk", "cpl", "cpu", "pp", "ppk", "cpm"):
        assert getattr(moved, name) == pytest.approx(getattr(base, name), rel=1e-6, abs=1e-9)
    assert moved.cpk_interval.low == pytest.approx(base.cpk_interval.low, rel=1e-6, abs=1e-9)
    assert moved.cpm_interval.high == pytest.approx(base.cpm_interval.high, rel=1e-6)


def test_capability_errors():
    with pytest.raises(NotApplicableError, match="specification limit"):
        capability([1.0, 2.0, 3.0])
    with pytest.raises(ValueError, match="below the upper"):
        capability([1.0, 2.0, 3.0], lower=5.0, upper=4.0)
    with pytest.raises(DegenerateDataError, match="identical"):
        capability([2.0, 2.0, 2.0], lower=1.0, upper=3.0)
    with pytest.raises(DegenerateDataError, match="at least 2"):
        capability([2.0], lower=1.0, upper=3.0)
    with pytest.raises(DegenerateDataError, match="finite"):
        capability([2.0, np.nan, 2.5], lower=1.0, upper=3.0)
    with pytest.raises(NotApplicableError, match="no subgroup"):
        capability([1.0, 2.0, 3.0], lower=0.0, upper=4.0, subgroups=["a", "b", "c"])
    with pytest.raises(DegenerateDataError, match="range is zero"):
        capability([1.0, 1.0, 2.0, 2.0], lower=0.0, upper=4.0, subgroups=["a", "a", "b", "b"])
    with pytest.raises(ValueError, match="one label per value"):
        capability([1.0, 2.0, 3.0], lower=0.0, upper=4.0, subgroups=["a", "b"])


def test_d2_table_equals_expected_range_of_normals():
    # d2(n) = E[range of n standard normals]; recomputed by quadrature and rounded to the
    # table's three decimals (Montgomery, Appendix VI, control-chart constants)
    for n, tabled in D2_TABLE.items():
        assert round(expected_range(n), 3) == pytest.approx(tabled, abs=1e-9), n
    # beyond the table d2 comes from the integral itself
    assert d2(30) == pytest.approx(expected_range(30))
    # an independent route for n = 2: E|Z1 - Z2| = 2 / sqrt(pi)
    assert expected_range(2) == pytest.approx(2 / math.sqrt(math.pi), rel=1e-9)
    value, _ = integrate.quad(lambda x: 3 * x * special.ndtr(x) ** 2 * math.exp(-x * x / 2)
                              / math.sqrt(2 * math.pi), -np.inf, np.inf)
    assert expected_range(3) == pytest.approx(2 * value, rel=1e-8)  # E[max of 3] doubled
    with pytest.raises(NotApplicableError):
        d2(1)
