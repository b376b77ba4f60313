"""Gathering for :func:`verify.evaluate.evaluate`: one characteristic's measurements as named
streams, its process summaries, its planned-size shortfall and the kinds of check that apply.

The measurements reach the checks as named :class:`~verify.checks.drafting.Stream` objects:
the declared reference (:data:`REFERENCE`, the old process) and the candidate streams compared
with it (:data:`CANDIDATES`: the new process; a ``data.stream`` column adds the new process's
sub-streams, each compared with the reference by the kinds that run per stream). Each check
reads one :class:`~verify.checks.drafting.Comparison` and never a process name.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace

import numpy as np

from . import decide
from .checks import CheckKind, kinds
from .checks.drafting import CANNOT_COMPUTE, CheckInput, Comparison, Draft, Stream
from .data import analysis_values, paired_values, stream_values
from .data.values import part_values
from .model import DiagnosticResult, Measurements, ProcessSummary
from .spec_model import Characteristic, Spec
from .stats import _memo, distributions
from .stats import variance_components as vc
from .stats._memo import hold
from .stats.core import mean_sd
from .stats.limits import BeyondLimits, beyond_limits_many
from .stats.samples import group_codes

REFERENCE = "old"  # the declared reference stream: every other stream is compared with it
CANDIDATES = ("new",)  # the streams compared with the reference, today the new process


@dataclass
class StreamDraft:
    """The per-stream checks of one ``data.stream`` sub-stream against the reference."""

    name: str
    values: np.ndarray
    checks: list[Draft] = field(default_factory=list)


@dataclass
class CharDraft:
    """One characteristic between gathering and finishing."""

    ch: Characteristic
    inp: CheckInput  # the streams and settings every check reads
    processes: dict  # name -> ProcessSummary (measured: filled by summarize)
    checks: list[Draft] = field(default_factory=list)
    diagnostics: list[DiagnosticResult] = field(default_factory=list)
    shortfall: str | None = None
    final_shortfall: str | None = None  # the shortfall a --final run overrode
    counts: dict = field(default_factory=dict)
    pairs: int | None = None
    unmatched: tuple = ()
    streams: list[StreamDraft] = field(default_factory=list)
    # measured: the gathered streams whose summaries the characteristic shows, as gathered
    # (a reference without values included when a check is a difference from it)
    shown: dict = field(default_factory=dict)
    kinds: list[CheckKind] | None = None  # applicable(ch), once known

    @property
    def data(self) -> Comparison:
        return self.inp.data

    def applicable(self) -> list[CheckKind]:
        """The kinds of check that run for this characteristic (:func:`applicable`)."""
        if self.kinds is None:
            self.kinds = applicable(self.ch)
        return self.kinds


def applicable(ch: Characteristic) -> list[CheckKind]:
    """The kinds of check that run for ``ch``: those its spec declares, of its measure."""
    return list(_declared(ch)[0])


# id(registry) -> (the registry, (kind, its name, its measure, its pairs_role hook or None)
# of each kind): what _declared reads of the registry, gathered once per registry
_PLANS: dict[int, tuple] = {}


def _plan(registry: tuple[CheckKind, ...]) -> tuple:
    hit = _PLANS.get(id(registry))
    if hit is None or hit[0] is not registry:
        if len(_PLANS) >= 8:
            _PLANS.clear()
        hit = _PLANS[id(registry)] = (registry, tuple(
            (k, k.name, k.measures, compute_hook_fn(k, "pairs_role")) for k in registry))
    return hit[1]


# id(ch) -> (ch, the registry, the kinds that apply, the roles of their matched pairs)
_DECLARED: dict[int, tuple] = {}


def _declared(ch: Characteristic) -> tuple[tuple[CheckKind, ...], frozenset[str]]:
    """The kinds of check that run for ``ch`` (those its spec declares, of its measure, in the
    registry's order) and the roles of the matched pairs their settings run them in (each
    kind's ``pairs_role`` hook: for data.pair declared; none when no kind runs on pairs).
    Worked out once per characteristic rather than once per evaluation: both read only the
    characteristic (a frozen spec object, held by the entry so that its id stays its) and the
    registry of kinds (the entry's own: a registry loaded anew is looked at anew) with its
    hooks, which do not change while verify runs (as :func:`compute_hook_fn` has it); each
    kind's name, measure and hook are read once per registry (:func:`_plan`), as fresh
    specs (a nightly run's) meet each characteristic once."""
    registry = kinds()
    hit = _DECLARED.get(id(ch))
    if hit is None or hit[0] is not ch or hit[1] is not registry:
        if len(_DECLARED) >= 4096:
            _DECLARED.clear()
        measures = "pass_fail" if ch.pass_fail else "measured"
        checks = ch.checks
        found: list[CheckKind] = []
        roles = set()
        for k, name, measure, role_of in _plan(registry):
            if measure == measures and (conf := getattr(checks, name, None)) is not None:
                found.append(k)
                if role_of is not None and (r := role_of(k, conf)) is not None:
                    roles.add(r)
        hit = _DECLARED[id(ch)] = (ch, registry, tuple(found), frozenset(roles))
    return hit[2], hit[3]


def _hook_says(kind: CheckKind, name: str, *args, default=None):
    """Ask the kind's compute hook an optional question (``default`` when it has no answer)."""
    fn = compute_hook_fn(kind, name)
    return default if fn is None else fn(kind, *args)


_HOOK_FNS: dict[tuple[str, str], tuple[CheckKind, object]] = {}


def compute_hook_fn(kind: CheckKind, name: str):
    """``getattr(kind.hook("compute"), name, None)``: an optional function of the kind's compute
    hook (``pairs_role``, ``rank_requests``, ...), looked up once per kind and name (the
    registry and its loaded hooks do not change while verify runs; a kind met first by its
    name, as evaluate_diagnostics.companions finds its hooks)."""
    hit = _HOOK_FNS.get((kind.name, name))
    if hit is None or hit[0] is not kind:
        hit = _HOOK_FNS[(kind.name, name)] = (kind, getattr(kind.hook("compute"), name, None))
    return hit[1]


def shows_reference(ch: Characteristic, kinds: list[CheckKind] | None = None) -> bool:
    """Whether a declared check is a difference from the reference (then its summary is shown
    even when the reference has no values); ``kinds``: ``applicable(ch)`` when known."""
    return any(_hook_says(k, "shows_empty_reference", default=False)
               for k in (applicable(ch) if kinds is None else kinds))


def sufficiency(spec: Spec, d: CharDraft, counts: dict, final: bool) -> None:
    """The shortfall against min_n (PENDING while planned units are still arriving)."""
    plans = None if spec.min_n is None else {k: spec.planned(k) for k in counts}
    d.shortfall = decide.SUFFICIENCY.shortfall(counts, plans, final)
    if final:
        d.final_shortfall = decide.SUFFICIENCY.shortfall(counts, plans, False)
    d.counts = counts


def _summary(process: str, values: np.ndarray, lots, n_parts: int,
             parts: np.ndarray | None = None, beyond: BeyondLimits | None = None,
             extremes: tuple[float, float] | None = None,
             shown_lots: tuple[str, ...] | None = None) -> ProcessSummary:
    """One stream's summary; ``extremes``: the values' (minimum, maximum) when known,
    ``shown_lots``: ``_lots_text(lots)`` when known."""
    n = int(values.size)
    mean = sd = None
    if n:
        _, m, s = mean_sd(values)
        mean = m
        sd = s if n >= 2 else None
        if extremes is None:  # values.min() and values.max(), unwrapped
            extremes = float(np.minimum.reduce(values)), float(np.maximum.reduce(values))
    within = between = None
    truncated = False
    if parts is not None and parts.size:
        try:
            within, between, truncated = vc.sd_components(parts, lots)
        except CANNOT_COMPUTE:
            pass  # fewer than 2 lots of 2 parts, or no within-lot variation: not estimable
    if shown_lots is None:
        shown_lots = _lots_text(lots)
    # by position, in the fields' order (SUMMARY_FIELDS; a keyword costs about 30 ns a field)
    return ProcessSummary(process, n, mean, sd, shown_lots, n_parts,
                          extremes[0] if n else None, extremes[1] if n else None, beyond,
                          within, between, truncated)


def _lots_text(lots) -> tuple[str, ...]:
    """The lots in order of first appearance, as text: the labels group_codes found (remembered
    for the stream's lots tuple) where they are text; labels of other types (1, 1.0 and True
    are one key to it, three lots as text) are each made text first, as always."""
    labels = group_codes(lots, len(lots))[0] if len(lots) else []
    # (text labels are their own text, and group_codes gives each once)
    return tuple(labels) if all(type(v) is str for v in labels) else tuple(
        dict.fromkeys(map(str, lots)))


#: The fields :func:`_summary` gives ``ProcessSummary`` by position, in order.
SUMMARY_FIELDS = ("process", "n", "mean", "sd", "lots", "n_parts", "minimum", "maximum",
                  "beyond_limits", "sd_within_lot", "sd_between_lot", "between_lot_set_to_zero")


def _extremes(samples: list[np.ndarray]) -> list[tuple[float, float] | None]:
    """(minimum, maximum) of each non-empty 1-D float sample (None for any other), those of one
    size reduced as the rows of one array. The minimum and maximum of numbers are exact
    whatever the order of reduction, but for a zero (0.0 and -0.0 compare equal, and which one
    a reduction keeps depends on its order) and NaN: a row whose extreme is either is reduced
    again alone, as one sample is."""
    out: list[tuple[float, float] | None] = [None] * len(samples)
    by_size: dict[int, list[int]] = {}
    for i, v in enumerate(samples):
        # (the batched pass remembers those of the rows it reduced: stats.batch._stacked)
        if (known := _memo.recall("extremes", v)) is not None:
            out[i] = known
        elif type(v) is np.ndarray and v.ndim == 1 and v.size and v.dtype == np.float64:
            by_size.setdefault(v.size, []).append(i)
    for n, rows in by_size.items():
        # np.stack's array, in one concatenation (np.stack makes a view of each row first)
        stacked = np.concatenate([samples[i] for i in rows]).reshape(len(rows), n)
        lows = np.minimum.reduce(stacked, axis=1).tolist()
        highs = np.maximum.reduce(stacked, axis=1).tolist()
        for i, lo, hi in zip(rows, lows, highs, strict=True):
            if lo != 0.0 and hi != 0.0 and lo == lo and hi == hi:
                out[i] = (lo, hi)
    return out


def _stream(spec: Spec, meas: Measurements, name: str, ch: Characteristic, part_spec: Spec
            ) -> Stream:
    """One named stream of ``ch``: its analysis units and parts, read-only (the statistics
    remember what they derive from a read-only sample, its mean and sd, its lots' codes,
    instead of deriving it again for each check and diagnostic)."""
    if part_spec is spec:  # analysed per part: the units are the parts (analysis_values')
        values, lots = part_values(meas, ch.name, name)
        values = hold(values)  # (frozen, and known to the memo from the start)
        return Stream(name, values, values, lots)  # (by position: name, values, parts, lots)
    units = analysis_values(meas, spec, ch.name, name)  # lot means
    parts = analysis_values(meas, part_spec, ch.name, name)
    return Stream(name=name, values=hold(units.values), parts=hold(parts.values),
                  lots=tuple(parts.lots))


_PART_SPECS: dict[int, tuple[Spec, Spec]] = {}  # id(spec) -> (spec, its part-unit copy)


def _part_spec(spec: Spec) -> Spec:
    """``spec`` read per part: itself, or for ``unit_of_analysis: lot`` one part-unit copy per
    spec (a copy per characteristic cost a replace and, in ``analysis_values``, a new set of
    the spec's names each: quadratic in the characteristics)."""
    if spec.unit_of_analysis != "lot":
        return spec
    hit = _PART_SPECS.get(id(spec))
    if hit is None or hit[0] is not spec:
        if len(_PART_SPECS) >= 8:
            _PART_SPECS.clear()
        hit = _PART_SPECS[id(spec)] = (spec, replace(spec, unit_of_analysis="part"))
    return hit[1]


def gather(spec: Spec, meas: Measurements, ch: Characteristic, final: bool) -> CharDraft:
    """The streams, fit and shortfall of one measured characteristic (its process summaries
    follow in :func:`summarize`, once the statistics of every characteristic's samples have
    been computed together)."""
    part_spec = _part_spec(spec)
    streams = {name: _stream(spec, meas, name, ch, part_spec)
               for name in (*CANDIDATES, REFERENCE)}
    ref = streams[REFERENCE]
    declared, roles = _declared(ch)
    kinds = list(declared)
    shown = [*CANDIDATES]
    if ref.values.size or shows_reference(ch, kinds):
        shown.insert(0, REFERENCE)
    # a reference without values holds None, so that no check reads an empty stream
    if not (ref.values.size and ref.parts.size):
        ref = replace(ref, values=ref.values if ref.values.size else None,
                      parts=ref.parts if ref.parts.size else None)
    # the matched pairs, for the kinds whose settings run them on pairs (data.pair declared)
    pairs = paired_values(meas, spec, ch.name) if roles else None
    (candidate,) = CANDIDATES  # one candidate today: several would give several comparisons
    data = Comparison(ref, streams[candidate], **{role: pairs for role in roles}) if roles \
        else Comparison(ref, streams[candidate])  # (by position: reference, candidate)
    fit = fit_error = None
    if ch.distribution in ("lognormal", "weibull", "box-cox"):
        try:
            fit = distributions.fit(data.candidate.parts, ch.distribution)
        except CANNOT_COMPUTE as err:
            fit_error = str(err)
    # by position, in the fields' order: spec, ch, data, final, fit, fit_error
    inp = CheckInput(spec, ch, data, final, fit, fit_error)
    d = CharDraft(ch=ch, inp=inp, processes={}, shown={name: streams[name] for name in shown},
                  kinds=kinds)
    counts = {p: int(st.values.size) for p, st in d.shown.items()}
    if pairs is not None:
        # a check that runs on the pairs has as many units as there are matched pairs
        d.pairs = len(pairs.keys)
        d.unmatched = tuple(pairs.unmatched)
        counts = {"pairs": d.pairs}
    sufficiency(spec, d, counts, final)
    return d


def samples_in_lots(d: CharDraft) -> list[tuple[np.ndarray, tuple]]:
    """The part samples whose lots :func:`summarize` will analyse (each with its lots)."""
    return [(st.parts, st.lots) for st in d.shown.values() if st.parts.size]


def summarize(measured: list[CharDraft]) -> None:
    """The process summaries of gathered measured characteristics (``d.processes``), one per
    stream each shows. The streams' minima and maxima and their parts beyond the limits are
    computed together (:func:`_extremes`, :func:`~verify.stats.limits.beyond_limits_many`:
    the same numbers as one stream at a time)."""
    shown = [(d, name, st) for d in measured for name, st in d.shown.items()]
    limited = [i for i, (d, _, _) in enumerate(shown)
               if d.ch.lower is not None or d.ch.upper is not None]
    # part values beyond the limits (none without limits): counted on parts, never lot means;
    # the expected ppm from the characteristic's declared distribution fitted to these parts
    beyond = dict(zip(limited, beyond_limits_many(
        [shown[i][2].parts for i in limited], lower=[shown[i][0].ch.lower for i in limited],
        upper=[shown[i][0].ch.upper for i in limited],
        distribution=[shown[i][0].ch.distribution for i in limited]), strict=True))
    extremes = _extremes([st.values for _, _, st in shown])
    for d in measured:
        d.processes = {}
    # the lots as text once per lots object (the streams hold theirs while this runs, so an id
    # stays its; the gathering gives the streams of equal lots one tuple): the same text
    texts: dict[int, tuple[str, ...]] = {}
    for i, (d, name, st) in enumerate(shown):
        lots = st.lots
        text = texts.get(id(lots))
        if text is None:
            text = texts[id(lots)] = _lots_text(lots)
        d.processes[name] = _summary(name, st.values, lots, int(st.parts.size), st.parts,
                                     beyond.get(i), extremes[i], text)


def sub_streams(meas: Measurements, d: CharDraft) -> list[tuple[StreamDraft, CheckInput]]:
    """The new process's ``data.stream`` sub-streams, each as a comparison with the reference
    (unpaired, whole-process lots not carried)."""
    out = []
    for name, values in stream_values(meas, d.ch.name).items():
        cand = Stream(name=name, values=values, parts=values, lots=())
        inp = replace(d.inp, data=Comparison(reference=d.data.reference, candidate=cand),
                      fit=None, fit_error=None)
        out.append((StreamDraft(name=name, values=values), inp))
    return out
