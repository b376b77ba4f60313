"""p-value adjustment against statsmodels.stats.multitest.multipletests."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from verify.stats.multiplicity import adjust

pvalue_lists = st.lists(
    st.one_of(st.floats(0.0, 1.0), st.sampled_from([0.0, 0.01, 0.05, 0.5, 1.0])),
    min_size=1,
    max_size=25,
)


@settings(max_examples=50, deadline=None)
@given(pvalue_lists, st.sampled_from(["holm", "bonferroni"]))
def test_adjust_matches_statsmodels(p, method):
    from statsmodels.stats.multitest import multipletests

    ours = adjust(p, method)
    # statsmodels: multipletests(p, method="holm" | "bonferroni")[1]
    ref = multipletests(p, method=method)[1]
    np.testing.assert_allclose(ours, ref, rtol=1e-12, atol=1e-15)


@settings(max_examples=50, deadline=None)
@given(pvalue_lists)
def test_holm_is_monotone_capped_and_between_raw_and_bonferroni(p):
    raw = np.asarray(p)
    holm = adjust(raw, "holm")
    bonf = adjust(raw, "bonferroni")
    assert np.all(holm <= 1.0) and np.all(holm >= raw - 1e-15)
    assert np.all(holm <= bonf + 1e-15)
    order = np.argsort(raw, kind="stable")
    assert np.all(np.diff(holm[order]) >= 0)  # the adjusted values keep the raw order


def test_holm_by_hand():
    # Holm (1979) step-down by hand: sorted 0.01, 0.03, 0.04 times 3, 2, 1 -> 0.03, 0.06, 0.04,
    # running maximum -> 0.03, 0.06, 0.06
    assert adjust([0.01, 0.04, 0.03], "holm") == pytest.approx([0.03, 0.06, 0.06])
    assert adjust([0.01, 0.04, 0.03], "bonferroni") == pytest.approx([0.03, 0.12, 0.09])
    assert adjust([0.6, 0.9], "bonferroni").tolist() == [1.0, 1.0]
    out = adjust([0.2, 0.7], "none")
    assert out.tolist() == [0.2, 0.7]


def test_adjust_edge_cases_and_errors():
    assert adjust([], "holm").size == 0
    p = np.array([0.2, 0.1])
    adjust(p, "none")[0] = 9.0
    assert p[0] == 0.2  # "none" returns a copy
    with pytest.raises(ValueError, match="method"):
        adjust([0.1], "hochberg")
    with pytest.raises(ValueError, match="between 0 and 1"):
        adjust([0.1, 1.5], "holm")
    with pytest.raises(ValueError, match="between 0 and 1"):
        adjust([0.1, float("nan")], "holm")
