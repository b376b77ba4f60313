"""The capability check's recheck rows: Cp, Cpk, Pp, Ppk, Cpm and their lower bounds.

The within sigma comes from the lot ranges when the spec's capability sets ``subgroup: lot``,
else from the average moving range in production order; a result whose ``distribution`` is not
normal (``PercentileCapabilityDetails``) is the percentile capability of a fitted model, rebuilt
from its fitted quantiles.
"""

from __future__ import annotations

from verify.model import CharacteristicResult, CheckResult
from verify.report.formulas import bissell_lower
from verify.report.layout import VALUE_COLUMN
from verify.report.recheck_blocks import prepare_samples, why_no_block
from verify.report.recheck_lookup import used_block
from verify.report.recheck_sheet import Sheet, Subject, as_number
from verify.report.recheck_within import moving_range, subgroup_sigma
from verify.spec_model import TARGET_KEY

from .result import CapabilityDetails, PercentileCapabilityDetails

__all__ = ["prepare", "recheck"]

# the samples of both processes, written once per characteristic before its checks
prepare = prepare_samples


def recheck(sh: Sheet, on: Subject, check: CheckResult) -> None:
    """Append the rows that rebuild the capability check from the used values (see
    :func:`verify.checks.location.recheck.recheck` for the parameters)."""
    if isinstance(check.details, PercentileCapabilityDetails):
        _percentile_capability(sh, on.result, check, check.details)
    else:
        _capability(sh, on.evaluation, on.layout, on.result, check, check.details)


def _sigma_from_lots(c: CharacteristicResult) -> bool:
    """Whether the within sigma comes from lot ranges (the spec's ``subgroup: lot``)."""
    conf = c.spec.checks.capability
    return conf is not None and conf.subgroup == "lot"


def _capability(sh: Sheet, ev, layout, c: CharacteristicResult, ch: CheckResult,
                d: CapabilityDetails) -> None:
    """Cp, Cpk, Pp, Ppk and Cpm from the new parts, with Bissell's lower bounds."""
    block = used_block(sh, ev, layout, c.name, "new")
    if block is None:
        sh.unavailable("capability", why_no_block(layout, c.name, "new"))
        return
    ref = block.ref(VALUE_COLUMN)
    lsl = None if c.spec.lower is None else sh.param("lower limit", c.spec.lower, "the spec's")
    usl = None if c.spec.upper is None else sh.param("upper limit", c.spec.upper, "the spec's")
    if lsl is None and usl is None:
        sh.unavailable("capability", "the spec gives no limits")
        return
    n = sh.qty("new: n (parts)", f"COUNT({ref})", d.n, "COUNT of the new parts")
    m = sh.qty("new: mean (parts)", f"AVERAGE({ref})", d.mean, "AVERAGE")
    so = sh.qty("overall sigma", f"_xlfn.STDEV.S({ref})", d.sigma_overall, "STDEV.S")
    by_lot = _sigma_from_lots(c)
    if by_lot:
        found = subgroup_sigma(sh, layout, c.name, block)
        if found is None:
            return
        ranges, weights = found
        sw = sh.qty(
            "within sigma",
            f"SUMPRODUCT({weights},{ranges})/SUM({weights})",
            d.sigma_within,
            "range / d2(size) over the lots, weighted d2^2 / d3^2 (the mean for equal sizes)",
        )
    else:
        mr = moving_range(sh, ev, layout, c.name, block, n)
        if mr is None:
            return
        sw = sh.qty(
            "within sigma",
            f"{mr}/1.128",
            d.sigma_within,
            "average moving range / d2(2) = 1.128",
        )
    idx = {}
    # the engine's one-sided, two-sided and smaller indices (it reports no one-sided Pp)
    engines = {"c": (d.cpl, d.cpu, d.cp, d.cpk), "p": (None, None, d.pp, d.ppk)}
    for key, sigma, label in (("c", sw, "within"), ("p", so, "overall")):
        engine = engines[key]
        lo = hi = None
        if lsl is not None:
            lo = sh.qty(
                f"{key.upper()}pl ({label} sigma)",
                f"({m}-{lsl})/(3*{sigma})",
                engine[0],
                "(mean - lower) / (3 sigma)",
            )
        if usl is not None:
            hi = sh.qty(
                f"{key.upper()}pu ({label} sigma)",
                f"({usl}-{m})/(3*{sigma})",
                engine[1],
                "(upper - mean) / (3 sigma)",
            )
        if lsl is not None and usl is not None:
            sh.qty(
                f"{key.upper()}p ({label} sigma)",
                f"({usl}-{lsl})/(6*{sigma})",
                engine[2],
                "(upper - lower) / (6 sigma)",
            )
        both = [x for x in (lo, hi) if x is not None]
        idx[key] = sh.qty(
            f"{key.upper()}pk ({label} sigma)",
            f"MIN({','.join(both)})",
            engine[3],
            "the smaller one-sided index",
        )
    if lsl is not None and usl is not None and c.spec.target is not None:
        # labelled with the characteristic's key for its nominal value
        tgt = sh.param(TARGET_KEY, c.spec.target, "the spec's target")
        sh.qty(
            "Cpm",
            f"({usl}-{lsl})/(6*SQRT({sw}^2+({m}-{tgt})^2))",
            d.cpm,
            "(upper - lower) / (6 SQRT(sigma_within^2 + (mean - target)^2))",
        )
    # the bounds: Bissell's form on the df of the sigma behind the index (n - 1 for Ppk; the
    # effective df of the range-based within sigma for Cpk)
    if not by_lot and d.bound_df is not None:
        nu = sh.qty(
            "effective df of the moving-range sigma",
            f"(4/PI())/(2*((({n}-1)*(2-4/PI())+2*MAX({n}-2,0)*(4/PI()*(SQRT(3)/2+PI()/12-1)))"
            f"/({n}-1)^2))",
            d.bound_df if d.index == "cpk" else None,
            "E(MRbar)^2 / (2 Var(MRbar)), neighbouring moving ranges correlated",
        )
    elif d.index == "cpk" and as_number(d.bound_df) is not None:
        nu = sh.param("effective df of the subgroup-range sigma", d.bound_df,
                      "the engine's sum d2^2 / (2 d3^2) over the lots (Burr's weights)")
    else:
        nu = None
    cpk = idx["c"]
    if nu is not None:
        sh.qty(
            "Cpk lower 95% bound",
            bissell_lower(cpk, "0.95", n, nu),
            d.cpk_lower_95,
            "Cpk - NORM.S.INV(0.95) SQRT(1/(9n) + Cpk^2/(2 nu)), nu the effective df",
        )
    if d.index == "ppk" and as_number(d.confidence) is not None:
        conf = sh.param("confidence of the lower bound", d.confidence, "the spec's")
        ppk = idx["p"]
        sh.qty(
            "Ppk lower bound (Bissell)",
            bissell_lower(ppk, conf, n, f"({n}-1)"),
            d.lower_bound,
            "Ppk - NORM.S.INV(confidence) SQRT(1/(9n) + Ppk^2/(2(n-1)))",
        )
    elif nu is not None and as_number(d.confidence) not in (None, 0.95):
        conf = sh.param("confidence of the lower bound", d.confidence, "the spec's")
        sh.qty(
            "Cpk lower bound at the spec's confidence",
            bissell_lower(cpk, conf, n, nu),
            d.lower_bound,
            "Cpk - NORM.S.INV(confidence) SQRT(1/(9n) + Cpk^2/(2 nu))",
        )


def _percentile_capability(sh: Sheet, c: CharacteristicResult, ch: CheckResult,
                           d: PercentileCapabilityDetails) -> None:
    """Percentile indices rebuilt from the fitted quantiles (given as values: they come from
    the maximum-likelihood fit, which the spreadsheet does not redo)."""
    xl = sh.param("fitted 0.135% quantile", d.x_0_135, d.fit)
    xm = sh.param("fitted median", d.x_50, "the same fit")
    xh = sh.param("fitted 99.865% quantile", d.x_99_865, "the same fit")
    both = []
    if c.spec.lower is not None:
        lsl = sh.param("lower limit", c.spec.lower, "the spec's")
        both.append(sh.qty("Ppl (percentile)", f"({xm}-{lsl})/({xm}-{xl})", d.ppl,
                           "(median - lower) / (median - X0.135%)"))
    if c.spec.upper is not None:
        usl = sh.param("upper limit", c.spec.upper, "the spec's")
        both.append(sh.qty("Ppu (percentile)", f"({usl}-{xm})/({xh}-{xm})", d.ppu,
                           "(upper - median) / (X99.865% - median)"))
    sh.qty("Ppk (percentile)", f"MIN({','.join(both)})", d.ppk,
           "the smaller one-sided index")
