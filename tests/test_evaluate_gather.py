"""The process summaries computed together (``evaluate_gather.summarize``) against one stream
at a time.

The reference route is the plain one of this package: each stream's own ``_summary`` with its
extremes reduced alone (``np.minimum.reduce`` / ``np.maximum.reduce``) and its parts beyond
the limits from ``stats.limits.beyond_limits``; the summaries must be equal field for field,
every float the same bits.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from verify import evaluate_gather as eg
from verify.data import load_measurements
from verify.spec import load_spec
from verify.stats import _memo, batch
from verify.stats import variance_components as vc
from verify.stats.errors import StatsError
from verify.stats.limits import beyond_limits
from verify.stats.samples import finite_values


def _same(a, b) -> bool:
    """Equal, with NaN equal to NaN and 0.0 told apart from -0.0."""
    if isinstance(a, float) and isinstance(b, float):
        return (math.isnan(a) and math.isnan(b)) or (a == b and math.copysign(1, a)
                                                     == math.copysign(1, b))
    return type(a) is type(b) and a == b


@pytest.mark.parametrize("batched", [False, True])
@pytest.mark.parametrize("name", ["bushing-supplier", "filler-paired", "housing-resin"])
def test_summaries_together_equal_each_alone_on_demo_specs(demo, name, batched):
    spec = load_spec(demo / "specs" / f"{name}.yaml")
    meas = load_measurements(spec)
    try:
        drafts = [eg.gather(spec, meas, ch, False) for ch in spec.characteristics
                  if not ch.pass_fail]
        for d in drafts:  # known finite, as the evaluation's batched pass leaves them
            for st in d.shown.values():
                if st.parts.size:
                    finite_values(st.parts)
        if batched:  # the lots' one-way analyses (and the sds from them) and the samples'
            # extremes, as evaluate has them
            batch.prefetch([x for d in drafts for st in d.shown.values()
                            for x in (st.values, st.parts)],
                           in_lots=[q for d in drafts for q in eg.samples_in_lots(d)])
        eg.summarize(drafts)
        compared = 0
        for d in drafts:
            assert list(d.processes) == list(d.shown)
            for name_, st in d.shown.items():
                ch = d.ch
                beyond = None if ch.lower is None and ch.upper is None else beyond_limits(
                    st.parts, lower=ch.lower, upper=ch.upper, distribution=ch.distribution)
                alone = eg._summary(name_, st.values, st.lots, int(st.parts.size), st.parts,
                                    beyond)
                got = d.processes[name_]
                # the fields _summary itself derives by shortcuts, from their plain routes: the
                # lots as text in order of first appearance, the lot sds of the one-way
                # random-effects analysis (variance_components)
                assert got.lots == tuple(dict.fromkeys(map(str, st.lots)))
                try:
                    plain = vc.variance_components(np.array(st.parts), list(st.lots))
                except StatsError:
                    assert got.sd_within_lot is None and got.sd_between_lot is None
                else:
                    assert (got.sd_within_lot, got.sd_between_lot) == (plain.sd_within,
                                                                         plain.sd_between)
                for field, want in vars(alone).items():
                    have = getattr(got, field)
                    if field == "beyond_limits" and want is not None:
                        assert vars(have) == vars(want)
                    else:
                        assert _same(have, want), (ch.name, name_, field, have, want)
                compared += 1
        assert compared >= 2 * len(drafts) - 1
    finally:
        _memo.forget()


def test_extremes_together_are_each_samples_own_signed_zeros_and_nan_included():
    rng = np.random.default_rng(3)
    samples = [rng.normal(0.0, 1.0, 8) for _ in range(6)]
    samples[1] = np.abs(samples[1])
    samples[1][:2] = (0.0, -0.0)  # the minimum is a zero: which one is the row's own
    samples[2] = np.abs(samples[2])
    samples[2][3] = 0.0
    samples[3][5] = np.nan
    samples[4] = -np.abs(samples[4])
    samples[4][0] = -0.0  # the maximum is a zero
    samples += [np.array([-0.0, 0.0, 1.0]), np.array([0.0, -0.0, 1.0]), np.array([]),
                np.array([2.0]), np.arange(3)]  # an int sample: not reduced together
    got = eg._extremes(samples)
    for v, e in zip(samples, got, strict=True):
        if e is None:  # left to the summary's own reduction
            continue
        assert _same(e[0], float(np.minimum.reduce(v)))
        assert _same(e[1], float(np.maximum.reduce(v)))
    assert got[0] is not None and got[5] is not None and got[8] is None and got[10] is None
    assert got[1] is None and got[3] is None and got[4] is None  # a zero or NaN extreme


def test_a_lot_unit_spec_is_read_per_part_through_one_copy(demo):
    # the part-unit copy is dataclasses.replace(spec, unit_of_analysis="part"), made once per
    # spec; a part-unit spec is read as it is
    from dataclasses import replace

    spec = load_spec(demo / "specs" / "bushing-supplier.yaml")
    part = replace(spec, unit_of_analysis="part")
    lot = replace(spec, unit_of_analysis="lot")
    assert eg._part_spec(part) is part
    got = eg._part_spec(lot)
    assert got == replace(lot, unit_of_analysis="part") and eg._part_spec(lot) is got
    meas = load_measurements(spec)
    try:
        d = eg.gather(lot, meas, lot.characteristics[0], False)
        alone = eg.gather(spec, meas, spec.characteristics[0], False)
        for name, st in d.shown.items():  # the parts as the part-unit spec reads them
            np.testing.assert_array_equal(st.parts, alone.shown[name].parts)
            assert st.lots == alone.shown[name].lots
            assert st.values.size == len(set(st.lots))  # lot means, one per lot
    finally:
        _memo.forget()


@pytest.mark.parametrize("name", ["bushing-supplier", "filler-paired", "housing-resin"])
def test_a_part_unit_stream_is_what_analysis_values_reads(demo, name):
    # the streams of a spec analysed per part come from the index straight
    # (data.values.part_values); the plain route is analysis_values, the public reading of the
    # table: the same values bit for bit, the same lots, the parts the units themselves
    from dataclasses import replace

    from verify.data import analysis_values

    spec = replace(load_spec(demo / "specs" / f"{name}.yaml"), unit_of_analysis="part")
    meas = load_measurements(spec)
    for ch in spec.characteristics:
        if ch.pass_fail:
            continue
        for process in ("old", "new"):
            st = eg._stream(spec, meas, process, ch, eg._part_spec(spec))
            plain = analysis_values(meas, spec, ch.name, process)
            assert st.values.tobytes() == plain.values.tobytes()
            assert st.values.dtype == plain.values.dtype and st.lots == plain.lots
            assert st.parts is st.values and not st.values.flags.writeable
            assert st.values.flags.owndata  # (the memo remembers only such samples)


def test_lot_labels_that_are_not_text_are_each_made_text_as_before():
    """The summary's lots come from the lot codes' remembered labels where those are text;
    labels of other types (1, 1.0 and True are one key to a dict, three lots as text) are each
    made text first: ("1", "1.0", "True", "A"), as ``tuple(dict.fromkeys(map(str, lots)))``
    gives them."""
    values = np.array([1.0, 2.0, 3.0, 4.0])
    lots = (1, 1.0, True, "A")
    got = eg._summary("new", values, lots, 4)
    assert got.lots == ("1", "1.0", "True", "A")
    text = ("L2", "L1", "L2", "L1")
    assert eg._summary("new", values, text, 4).lots == ("L2", "L1")


def test_hook_functions_looked_up_once_are_the_hooks_own():
    # compute_hook_fn and evaluate_finish._review_of remember what the plain lookups
    # (getattr of the kind's hook module, verify.checks.find) give; a kind object of the same
    # name that is another object (a test's stand-in) is looked up for itself
    from dataclasses import replace

    from verify import evaluate_finish as ef
    from verify.checks import kinds

    names = ("pairs_role", "rank_requests", "shows_empty_reference", "companions", "no_such")
    for _ in range(2):  # the second time from what was remembered
        for k in kinds():
            for name in names:
                assert eg.compute_hook_fn(k, name) is getattr(k.hook("compute"), name, None)
            assert ef._review_of(k.name) == (k, getattr(k.hook("rule"), "review", None))
        assert ef._review_of("sufficiency") == (None, None)  # a check of no kind
    k = kinds()[0]
    other = replace(k, package="capability")  # same name, another object and compute hook
    assert eg.compute_hook_fn(other, "draft") is other.hook("compute").draft
    assert eg.compute_hook_fn(k, "draft") is k.hook("compute").draft


def test_results_built_by_position_name_their_fields_in_order():
    # _summary builds ProcessSummary, beyond_limits_many BeyondLimits by position: the fields
    # (dataclasses.fields, their declared order) must be those the calls give, in that order
    import dataclasses

    from verify.checks.drafting import CheckInput, Comparison, Stream
    from verify.model import CharacteristicResult, ProcessSummary
    from verify.stats.limits import BeyondLimits, beyond_limits, beyond_limits_many

    names = [f.name for f in dataclasses.fields(ProcessSummary)]
    assert tuple(names[:len(eg.SUMMARY_FIELDS)]) == eg.SUMMARY_FIELDS
    # gather's Stream, Comparison and CheckInput, finish's CharacteristicResult, as their
    # calls' comments list them
    for cls, order in [
            (Stream, ["name", "values", "parts", "lots"]),
            (Comparison, ["reference", "candidate"]),
            (CheckInput, ["spec", "ch", "data", "final", "fit", "fit_error"]),
            (CharacteristicResult, [
                "name", "unit", "decision", "reasons", "review", "processes", "checks",
                "diagnostics", "spec", "pairs", "unmatched_pairs", "distribution", "streams"])]:
        assert [f.name for f in dataclasses.fields(cls)][:len(order)] == order, cls
    assert [f.name for f in dataclasses.fields(BeyondLimits)] == [
        "n", "below", "above", "expected_ppm", "expected_ppm_below", "expected_ppm_above",
        "model", "note"]
    # and the batched counts equal the one-sample route's (its keyword call), field by field
    rng = np.random.default_rng(5)
    samples = [_memo.freeze(rng.normal(10.0, 0.02, 30)) for _ in range(3)]
    try:
        for x in samples:
            finite_values(x)  # known finite, as the batched pass leaves them
        got = beyond_limits_many(samples, lower=[9.97, None, 9.99], upper=[10.03, 10.01, None],
                                 distribution=["normal"] * 3)
        for x, g, lo, hi in zip(samples, got, [9.97, None, 9.99], [10.03, 10.01, None],
                                strict=True):
            assert vars(g) == vars(beyond_limits(np.array(x), lower=lo, upper=hi))
    finally:
        _memo.forget()
