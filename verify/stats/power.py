"""Power, detectable shift and sample size for the t-tests, TOST and non-inferiority.

The public face of the planning statistics; the code lives by topic:

* :mod:`verify.stats.power_of_tests`: the power of the t-test, the exact TOST power (and its
  shifted-t approximation), the power of the non-inferiority test, the detectable shift;
  the conventions for ``sd``, ``tau`` and the degrees of freedom of each design;
* :mod:`verify.stats.sample_size`: the smallest lot sizes reaching a target power, one search
  skeleton for the three tests; :mod:`verify.stats.sample_size_many`: many TOST questions in
  one pass;
* :mod:`verify.stats.noncentral`: the noncentral t distribution (never NaN) and the
  distribution of the sample sd the exact TOST power integrates over.

Every target power defaults to :data:`DEFAULT_POWER`; callers with a planning power of their
own (the spec's ``plan.power``) pass it.
"""

from __future__ import annotations

from .noncentral import nct_cdf, nct_sf
from .power_of_tests import (
    DEFAULT_POWER,
    GL_POINTS,
    GL_TAIL_POINTS,
    QUADRATURES,
    detectable_shift,
    power_noninferiority,
    power_t,
    power_tost,
    power_tost_shifted_t,
)
from .sample_size import (
    MAX_N,
    SampleSize,
    sample_size_noninferiority,
    sample_size_t,
    sample_size_tost,
)
from .sample_size_many import plan_tost_many
from .ttests import DESIGNS

__all__ = [
    "DEFAULT_POWER",
    "DESIGNS",
    "GL_POINTS",
    "GL_TAIL_POINTS",
    "MAX_N",
    "QUADRATURES",
    "SampleSize",
    "detectable_shift",
    "nct_cdf",
    "nct_sf",
    "power_noninferiority",
    "power_t",
    "power_tost",
    "plan_tost_many",
    "power_tost_shifted_t",
    "sample_size_noninferiority",
    "sample_size_t",
    "sample_size_tost",
]
