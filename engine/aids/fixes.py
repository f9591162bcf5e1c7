"""Design aids on every result: sensitivity ranking per stage, fixes for failing or tight stages.

A stage fed a clipped signal gets no search, only a note to fix the first clipping stage: its
margins are those of the clipped input. A fix is the nearest IEC 60063 E24 and E96 value of one
of the stage's own resistors that makes the stage GO (every margin at least the required one, linear regime) without making any stage
that was GO fail, checked by re-running the method on the changed chain (montecarlo candidates
are checked with corners, which is stricter). Candidates lie on the side the limiting margin's
sensitivity says helps, within a decade; the search steps out 1, 2, 4, ... values and bisects
back to the nearest one that works. When a stage clips and the source amplitude is to blame,
the largest amplitude that keeps the chain linear (headroom_db) is offered as well.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from railroom.engine.aids.eseries import values_between
from railroom.engine.methods import corners
from railroom.engine.methods.montecarlo import layout_for
from railroom.engine.verdict.results import VOLTAGE_CHECKS, Fix, StageResult, check_unit
from railroom.engine.aids.sensitivity import direction, in_one_line, linearise, ranking
from railroom.engine.formats.values import format_si
from railroom.engine.walks.bounds_walk import plan_parents
from railroom.engine.methods.joint import envelope

SERIES = ("E24", "E96")
TIGHT = 2.0  # a GO stage is tight when its limiting voltage margin is under 2 x the required
REACH = 10.0  # candidates within a factor of 10 of the present value


def needs_fix(result: StageResult, required: float) -> bool:
    if result.regime == "saturated" and result.go:
        return False
    if not result.go:
        return True
    check = result.limiting
    return required > 0 and check in VOLTAGE_CHECKS and result.margins[check] < TIGHT * required


def fed_clipped(result: StageResult) -> bool:
    """A stage fed a clipped signal: its margins are those of the clipped input, which changes
    once the first clipping stage is fixed, so no value of its own is searched for it."""
    return "fed-clipped" in result.reasons


def design_aids(
    chain,
    plans,
    freqs,
    stages,
    corner_stages,
    headroom: float | None,
    lin=None,
    baseline: list[StageResult] | None = None,
    stop=None,
) -> list[StageResult]:
    """Stages with sensitivity (every stage) and fixes (failing or tight stages) filled in.
    `lin`: the full-band linearisation when the caller has it; `baseline`: the verdicts the
    Evaluator would find for the unchanged chain (see Evaluator), when the caller has them;
    `stop()`, called before each stage's search, raises to end a run gone stale
    (analysis.Stopper)."""
    lin = lin or linearise(layout_for(chain, plans, freqs, corner_stages, band="full"))
    statistical = chain.conditions.method != "corners"
    evaluate = Evaluator(chain, plans, freqs, baseline, lin)
    aided = []
    for plan, result in zip(plans, stages):
        if stop is not None:
            stop()
        sensitivity = ranking(lin, plan.index, result.limiting, statistical)
        fixes: tuple[Fix, ...] = ()
        if fed_clipped(result):
            fixes = (Fix(text="fed a clipped signal: fix the first clipping stage, then check again"),)
        elif needs_fix(result, chain.conditions.margin):
            fixes = tuple(value_fixes(evaluate, plan, result, lin))
            if result.regime == "clipping" and headroom is not None and headroom < 0:
                fixes += (amplitude_fix(chain, headroom),)
        aided.append(replace(result, sensitivity=sensitivity, fixes=fixes))
    return aided


class Evaluator:
    """Re-runs the chain's method with one stage value changed; remembers the unchanged verdicts.

    Corners re-walks only what a change at stage k can move: the stage it takes its input from
    (its load includes stage k's input) and the stages after it up to the last one that was GO
    (only those can be broken), each fed the signal the unchanged walk had where its own parent
    is not re-walked. The
    corner values and responses of the stages before k are reused. On a chain in one line (no
    `from`, no named nets) rss does the same and re-walks its linearisation over the same
    stages, fed the state the unchanged chain's had there (sensitivity.walk_linearised, `lin`:
    the unchanged chain's, with what each stage is fed); the stages before keep their rss
    results. On a tree or with nets rss re-runs its own method on the whole chain. With nets
    shared by stages corners re-walks the same stages once per joint corner of them and takes
    the envelope, as the method does (a walk with each net at every end of its own, stage by
    stage, would hold too, a superset of the joint corners, but it quotes smaller margins and
    proposes larger changes than needed)."""

    def __init__(self, chain, plans, freqs, baseline: list[StageResult] | None = None, lin=None):
        # `baseline`: results(plans) when the caller has them (corners results, or rss ones for
        # rss): only their GO verdicts are read, which the nominal notes do not touch (and for
        # rss the results of the stages before a change, which the notes do not touch either).
        self.chain, self.plans, self.freqs = chain, plans, freqs
        self._baseline = baseline
        self._lin = lin
        self._fed: list | None = None if lin is None else lin.entering
        self._prepared: corners.Prepared | None = None
        self._entering: list = []
        self._unchanged: list[StageResult] = []  # the unchanged chain's corners, with _prepared
        # with shared values: per joint corner its Prepared, what each stage was fed, its results
        self._variants: list | None = None

    def results(self, plans, changed: int | None = None, stop: int | None = None) -> list[StageResult]:
        """Results of stages up to `stop` (all by default) of the chain with `plans`; `changed`:
        the only stage whose plan differs from the unchanged chain's, when known."""
        rss = self.chain.conditions.method == "rss"
        downstream_rss = (
            rss and in_one_line(self.chain) and self._lin is not None and self._baseline is not None
        )
        if changed is None or (rss and not downstream_rss):
            found = corners.walk(corners.prepare(self.chain, plans, self.freqs))
            if rss:
                from railroom.engine.methods import Setup, rss as rss_method

                found = rss_method.run(Setup(self.chain, plans, self.freqs, None, corner_stages=found)).stages
            return found
        if self._prepared is None:
            self._prepared = corners.prepare(self.chain, self.plans, self.freqs)
            self._unchanged = corners.walk(self._prepared, entering=self._entering)
        if self._prepared.joint_walks:
            return self._joint_from(plans, changed, stop)
        first = self._first(self._prepared, changed)
        prepared = corners.prepare(
            self.chain,
            plans,
            self.freqs,
            reuse=self._prepared,
            first=changed,
            stop=None if stop is None else stop + 1,  # stage `stop`'s input loads the last walked
        )
        # stages from `first` on that are not downstream of it are fed what the full walk had
        found = [*self._unchanged[:first], *corners.run_from(prepared, first, self._entering, stop)]
        return self._rss_from(plans, prepared, found, first, stop) if rss else found

    def _first(self, prepared, changed: int) -> int:
        """The first stage a change at stage `changed` can move."""
        parents = plan_parents(self.plans)
        first = max(parents[changed], 0)  # the stage it takes from: its load includes this input
        # a passive stage shows (and hands on) what the stage after it loads it to, row by row
        # with that stage's corners: start from the last stage up its branch that stands alone
        while first > 0 and (prepared.joint[first] or not self.plans[first].block.uses_part):
            first = max(parents[first], 0)
        return first

    def _joint_from(self, plans, changed: int, stop: int | None) -> list[StageResult]:
        """With values the stages share (nets.joint_plans): the re-walk from the first stage
        the change moves, once per joint corner of them (each walk's stages pinned there, the
        change applied on top), and the envelope of the walks, as the method itself takes it
        (methods/joint.py): a fix is judged with every net at one value in every stage."""
        assert self._prepared is not None
        if self._variants is None:
            self._variants = []
            for variant in self._prepared.joint_walks:
                entering: list = []
                self._variants.append((variant, entering, corners.walk(variant, entering=entering)))
        # the change: the quantities of stage `changed` that differ from the unchanged plan's
        own = self.plans[changed].quantities
        delta = {f: q for f, q in plans[changed].quantities.items() if own.get(f) is not q}
        walks = []
        for variant, entering, unchanged in self._variants:
            plan = variant.plans[changed]
            pinned = list(variant.plans)
            pinned[changed] = replace(plan, quantities={**plan.quantities, **delta})
            first = self._first(variant, changed)
            prepared = corners.prepare(
                self.chain,
                pinned,
                self.freqs,
                reuse=variant,
                first=changed,
                stop=None if stop is None else stop + 1,
            )
            walks.append([*unchanged[:first], *corners.run_from(prepared, first, entering, stop)])
        return envelope(walks, plans[: len(walks[0])], self.chain.conditions.margin)

    def _rss_from(self, plans, prepared, found: list[StageResult], first: int, stop: int | None):
        """rss results of the changed chain: the unchanged ones before `first`, then the stages
        re-walked from the state the unchanged chain's linearisation had at `first`."""
        from railroom.engine.methods.rss import results_of
        from railroom.engine.walks.bounds_walk import load_behind, tree_children
        from railroom.engine.aids.sensitivity import walk_linearised

        assert self._lin is not None and self._baseline is not None
        if self._fed is None:  # a plain linearisation (few columns): one pass records the states
            self._fed = []
            walk_linearised(self._lin.layout, self._fed)
        stop = len(plans) if stop is None else stop
        # in one line each stage feeds the next one only (load_behind on the tree, as build_layout)
        children = tree_children(plan_parents(plans))
        rise = self.chain.conditions.worst_temperature_rise
        hottest = max(self.chain.conditions.temperature)
        layout = replace(
            self._lin.layout,
            plans=plans,
            loads=tuple(
                load_behind(plans, prepared.responses, k, rise, prepared.values, hottest, children)
                for k in range(len(plans))
            ),
            corner=(*found, *self._unchanged[len(found) :]),
        )
        draws = walk_linearised(layout, first=first, stop=stop, start=self._fed[first])
        clipped = any(r.regime == "clipping" for r in self._baseline[:first])
        new = results_of(self.chain, plans[first:stop], found[first:stop], draws, self._lin, clipped)
        return [*self._baseline[:first], *new]

    def works(self, k: int, field: str, value: float) -> StageResult | None:
        """The changed stage's result when the change makes it GO and breaks no other stage."""
        if self._baseline is None:
            self._baseline = self.results(self.plans)
        plan = self.plans[k]
        q = plan.quantities[field]
        changed = replace(plan, quantities={**plan.quantities, field: replace(q, value=value)})
        # only stages that were GO on the design's own signal can be broken (a fed-clipped
        # stage's go is read on a clipped signal): the walk stops after the last of them
        standing = [r.go and "fed-clipped" not in r.reasons for r in self._baseline]
        stop = max([k, *(j for j in range(k + 1, len(self.plans)) if standing[j])]) + 1
        found = self.results([*self.plans[:k], changed, *self.plans[k + 1 :]], changed=k, stop=stop)
        if found[k].go and all(new.go for new, kept in zip(found, standing) if kept):
            return found[k]
        return None


def resistor_fields(plan) -> list[str]:
    own = [name for name, spec in plan.block.fields.items() if spec.kind == "resistance"]
    own += [name for name in plan.quantities if name.startswith("inputs.") and name.endswith(".r")]
    return [name for name in own if name in plan.quantities]


def candidates(value: float, series: str, sign: float) -> list[float]:
    """Series values on the helpful side (both when unknown), nearest by ratio first."""
    values = values_between(value / REACH, value * REACH, series)
    values = values[np.abs(np.log(values / value)) > 1e-9]
    if sign > 0:
        values = values[values > value]
    elif sign < 0:
        values = values[values < value]
    return sorted(values.tolist(), key=lambda x: abs(np.log(x / value)))


def nearest_working(evaluate: Evaluator, k: int, field: str, values: list[float]):
    """Step out 1, 2, 4, ... candidates, then bisect back to the nearest that works."""
    last_failed, step, found = -1, 1, None
    while step - 1 < len(values):
        index = step - 1
        result = evaluate.works(k, field, values[index])
        if result is not None:
            found = (index, result)
            break
        last_failed, step = index, step * 2
    if found is None:
        return None
    lo, (hi, result) = last_failed, found
    while hi - lo > 1:
        middle = (lo + hi) // 2
        tried = evaluate.works(k, field, values[middle])
        if tried is not None:
            hi, result = middle, tried
        else:
            lo = middle
    return values[hi], result


def value_fixes(evaluate: Evaluator, plan, result: StageResult, lin) -> list[Fix]:
    k = plan.index - 1
    fixes = []
    for series in SERIES:
        best = None
        for field in resistor_fields(plan):
            old = plan.quantities[field].value
            sign = direction(lin, plan.index, result.limiting, field) if result.limiting else 0.0
            found = nearest_working(evaluate, k, field, candidates(old, series, sign))
            if found is not None and (
                best is None or abs(np.log(found[0] / old)) < abs(np.log(best[1] / best[2]))
            ):
                best = (field, found[0], old, found[1])
        if best is not None:
            field, new, old, after = best
            check = after.limiting
            text = f"{field} {format_si(old, 'Ω')} -> {format_si(new, 'Ω')} ({series})" + (
                f": {check} margin {format_si(after.margins[check], check_unit(check))}" if check else ""
            )
            fixes.append(Fix(text=text, field=field, value=new, series=(series,)))
    if len(fixes) == 2 and (fixes[0].field, fixes[0].value) == (fixes[1].field, fixes[1].value):
        # the nearest E24 value is also the nearest E96 one (150k is in both): say it once
        fixes = [
            replace(fixes[0], text=fixes[0].text.replace("(E24)", "(E24, E96)", 1), series=("E24", "E96"))
        ]
    return fixes


def amplitude_fix(chain, headroom: float) -> Fix:
    amplitude = chain.source.amplitude * 10 ** (headroom / 20)
    return Fix(
        text=f"source amplitude at most {format_si(amplitude, 'V')} peak "
        f"({headroom:+.2f} dB) keeps every stage linear",
        field="source.amplitude",
        value=amplitude,
    )
