"""The solver layer: model -> computational form -> exact simplex -> result.

:func:`solve` is the thin public entry.  It validates its options (naming
the bad one), builds the computational form, runs the pivot loop and turns
the exact ``mpq`` outcome back into Fractions in the model's own sense.
"""

from __future__ import annotations

import contextlib
import gc
import sys
import threading
import time
from dataclasses import replace
from fractions import Fraction
from itertools import compress
from operator import is_not

from gmpy2 import mpq

from ..errors import InputError
from ..model import Model, Sense
from .events import Finish, PhaseEnd, Pivot, Start, WarmStart
from .form import ZERO, build_form, frac
from .result import ScaledMap, SolveResult, Status, frozen_map
from .simplex import AT_LOWER, AT_UPPER, PRICING_RULES, REFINE_MAX_ROWS, Outcome, Simplex

#: the interpreter's switch interval (seconds) while work is done beside HiGHS
FILL_SWITCH_INTERVAL = 0.0002

__all__ = ["solve", "ObjectiveProbes", "SolveResult", "Status", "PRICING_RULES", "Start", "Pivot", "PhaseEnd", "Finish"]


_gc_lock = threading.Lock()
_gc_holders = 0  # warm solves running now with the collector paused
_gc_paused_by_us = False  # whether the first of them found it running and paused it


@contextlib.contextmanager
def _collector_paused(on: bool):
    """Pause Python's cyclic garbage collector for the block (when ``on``).

    A warm solve builds tens of thousands of short-lived containers (the
    exact form, the columns as integers, the result's maps), and the
    collector's young-generation passes scanned them over and over, with now
    and then a full pass over every object of the process: STAIR's warm solve
    took 66.6 ms at best with it and 59.9 without (32 solves each, in
    alternating processes).  Nothing is left uncollected by the pause: the
    solver makes no reference cycles (none over the solves of BANDM, STAIR,
    PILOT4 and four more, cold and warm; see
    ``test_solves_leave_nothing_to_the_cyclic_collector``), so its objects are
    freed by their counts as always.  Only for warm solves of models up to REFINE_MAX_ROWS rows,
    which take a fraction of a second when the suggestion holds; cold solves
    gained nothing measurable (BANDM 1.54-1.75 s either way).  The collector is
    the process's, so solves on several threads are counted: the first pauses
    it if it was running, and the last resumes it then (even after an error).
    """
    global _gc_holders, _gc_paused_by_us
    if not on:
        yield
        return
    with _gc_lock:
        if _gc_holders == 0:
            _gc_paused_by_us = gc.isenabled()
            if _gc_paused_by_us:
                gc.disable()
        _gc_holders += 1
    try:
        yield
    finally:
        with _gc_lock:
            _gc_holders -= 1
            if _gc_holders == 0 and _gc_paused_by_us:
                _gc_paused_by_us = False
                gc.enable()


def _fixed(lo, hi) -> bool:
    return lo is not None and hi is not None and lo == hi


def _check_options(pricing, iteration_limit, time_limit) -> None:
    if pricing not in PRICING_RULES:
        from ..errors import did_you_mean

        raise InputError(
            f"unknown pricing rule '{pricing}' (choose {', '.join(PRICING_RULES)})"
            + did_you_mean(str(pricing), PRICING_RULES),
            field="pricing",
        )
    if iteration_limit is not None and (not isinstance(iteration_limit, int) or iteration_limit < 0):
        raise InputError(f"must be a whole number >= 0, not {iteration_limit!r}", field="iteration_limit")
    if time_limit is not None and (isinstance(time_limit, bool) or not isinstance(time_limit, (int, float)) or time_limit < 0):
        raise InputError(f"must be a number of seconds >= 0, not {time_limit!r}", field="time_limit")


def solve(
    model: Model,
    *,
    pricing: str = "guarded",
    iteration_limit: int | None = None,
    time_limit: float | None = None,
    listener=None,
    tableau: bool = False,
    should_stop=None,
    warm_start: bool | None = None,
    start_basis=None,
) -> SolveResult:
    """Solve ``model`` exactly.

    ``listener`` receives every event (:mod:`exactlp.solver.events`);
    ``should_stop`` is polled once per iteration (for interruption).
    The time limit is the one float here: it bounds wall-clock time and
    never touches a number of the model.

    ``warm_start``: ``True`` asks a floating-point solver (highspy, the
    ``exactlp[fast]`` extra) for a starting basis, ``False`` never does, and
    ``None`` (the default) does so when highspy is installed and the model has
    at least ``exactlp.floatlp.WARM_START_MIN_ROWS`` rows.  The suggestion is
    re-proven exactly (see :meth:`Simplex._setup_warm`); the certificate never
    depends on it.

    ``start_basis``: an :class:`exactlp.floatlp.BasisHint` to start from instead
    (for example a related model's optimal basis, by column index); no float solve
    is made then.  It is checked exactly like a float suggestion: factored, its
    basic values recomputed, and repaired or dropped (for the slack basis) when
    it does not fit.
    """
    _check_options(pricing, iteration_limit, time_limit)
    started = time.monotonic()
    if start_basis is not None:
        from ..floatlp import BasisHint

        if not isinstance(start_basis, BasisHint):
            raise InputError(f"must be a BasisHint, not {type(start_basis).__name__}", field="start_basis")
        for part in ("basic", "at_upper"):
            wrong = next((j for j in getattr(start_basis, part) if type(j) is not int), None)
            if wrong is not None:
                raise InputError(f"{part} must hold column numbers, not {wrong!r}", field="start_basis")
    use_warm = warm_start if start_basis is None else False
    if use_warm is None:
        from ..floatlp import WARM_START_MIN_ROWS, highs_available

        use_warm = len(model.constraints) >= WARM_START_MIN_ROWS and highs_available()
    elif use_warm:
        from ..floatlp import highs_available

        if not highs_available():
            raise InputError("the warm start needs highspy: install the exactlp[fast] extra", field="warm_start")
    with _collector_paused(bool(use_warm) and 0 < len(model.constraints) <= REFINE_MAX_ROWS):
        return _solve(model, pricing, iteration_limit, time_limit, listener, tableau, should_stop,
                      use_warm, start_basis, started)


def _solve(model, pricing, iteration_limit, time_limit, listener, tableau, should_stop,
           use_warm, start_basis, started) -> SolveResult:
    pending = None
    if use_warm and model.constraints:
        from ..floatlp import start_highs

        # HiGHS runs on the other core while the exact form is built here
        left = None if time_limit is None else max(time_limit - (time.monotonic() - started), 0.0)
        pending = start_highs(model, left)
    form = build_form(model)
    if form.crossed is not None:
        # A variable or row whose own bounds cross (lower > upper) is infeasible by
        # itself; the simplex assumes l <= u, so this is settled before it starts.
        if pending is not None:
            pending.discard()
        if listener is not None:
            listener(Finish("infeasible", None, 0, 0, 0))
        return SolveResult(status=Status.INFEASIBLE, crossed=form.crossed,
                           seconds=time.monotonic() - started, pricing=pricing)
    integer_columns = None
    if pending is not None and form.m <= REFINE_MAX_ROWS and pending.running():
        # HiGHS is still at work: meanwhile, the columns as integers, which a
        # check by refinement would need (see refine.py); only as long as it runs
        from .refine import IntegerColumns

        integer_columns = IntegerColumns(form.cols)
        # A HiGHS thread that has finished needs the interpreter lock to return;
        # under the usual switch interval (5 ms) it would wait that long behind
        # this loop.  A short interval for the loop's time only: STAIR's warm
        # solve 86.5 -> 80.3 ms (best of ten in alternation) with a yield of the
        # lock at each check, and the same or better this way, without the cost
        # of the yields (about 0.3 ms each, when a column takes 1.3 us)
        # (the interval is the process's: lowered only, and put back only if no one
        # else changed it meanwhile, such as another solve on another thread)
        interval = sys.getswitchinterval()
        lowered = interval > FILL_SWITCH_INTERVAL
        if lowered:
            sys.setswitchinterval(FILL_SWITCH_INTERVAL)
        try:
            integer_columns.fill_while(pending.running)
            if pending.running():  # still time: what a check by refinement loads once a process
                from .refine import _load_controller

                _load_controller()
        finally:
            if lowered and sys.getswitchinterval() == FILL_SWITCH_INTERVAL:
                sys.setswitchinterval(interval)
    hint = pending.result() if pending is not None else start_basis
    sx = Simplex(
        form,
        pricing=pricing,
        iteration_limit=iteration_limit,
        time_limit=time_limit,
        listener=listener,
        tableau=tableau,
        should_stop=should_stop,
        hint=hint,
        # a float solver's basis is checked by refinement first (see refine.py)
        refine=pending is not None,
        integer_columns=integer_columns,
    )
    if pending is not None and hint is None and pending.reason:
        # asked for, but no suggestion came: said in the log and the result, not silently "off"
        sx.warm = WarmStart("highs", pending.float_status, False, pending.reason)
    return _run(model, form, sx, pricing, time_limit, started)


_NOTHING: dict = {}  # (the base of a map of nonzero entries: read only, never written)
_NO_SCALE = Fraction(0)


def _run(model, form, sx: Simplex, pricing, time_limit, started, known=None, out=None) -> SolveResult:
    """Run the pivot loop and turn its exact outcome into the model's result.

    ``known`` (:class:`ObjectiveProbes`): ``(x0, bases, keys)``, a start's
    values (``mpq``) by column, the same as Fractions by name (the variables'
    and the constraints', two complete maps), and the names as two dicts.  The
    point and activities are then the start's maps with the entries of their
    own where a value is no longer the start's own object (the probe's copy of
    the start's values shares the objects until a pivot moves one; most of a
    probe's point is the start's), and the duals and reduced costs their
    nonzero entries over the names (0 elsewhere: a probe's objective is one
    variable, so most of them are 0), each a :class:`ScaledMap`.  ``out``: the
    pivot loop's outcome when it is known without running it
    (:func:`_start_optimal`)."""
    if out is None:
        if time_limit is not None:
            sx.time_limit = max(time_limit - (time.monotonic() - started), 0.0)
        out = sx.run()
    n, m, sign = form.n, form.m, form.sign
    if known is not None:  # (the start's names, in order: a copy in C instead of a loop)
        vnames, cnames = list(known[2][0]), list(known[2][1])
    else:
        vnames = [v.name for v in model.variables]
        cnames = [c.name for c in model.constraints]
    state, labels, kinds = sx.state, sx.labels, sx.kinds
    up = tuple(compress(range(form.ncols), map(AT_UPPER.__eq__, state)))  # (the loop in C)
    common = dict(
        basis=tuple(labels[c] for c in sx.head if kinds[c] != "artificial"),
        at_upper=tuple(labels[j] for j in up if not _fixed(sx.lower[j], sx.upper[j])),
        # an artificial left basic on a redundant equality row stands in for that row's
        # logical (both are unit columns of the same row), so the basis is still one
        basis_columns=tuple(form.n + sx.unit_row[c][0] if kinds[c] == "artificial" else c for c in sx.head),
        at_upper_columns=up,
        pivots_phase1=sx.pivots[1],
        pivots_phase2=sx.pivots[2],
        bound_flips=sx.flips,
        pricing=pricing,
        warm_start=("off" if sx.warm is None else
                    ("accepted: " if sx.warm.accepted else "rejected: ") + sx.warm.reason),
    )
    status = Status(out.status)
    extra: dict = {}
    if status in (Status.OPTIMAL, Status.UNBOUNDED):
        x, lower, upper = sx.x, form.lower, form.upper

        def value(j: int, item) -> Fraction:
            # a value resting on one of its own bounds is that bound, already a
            # Fraction in the model: no conversion (the comparison is of mpq's)
            v = x[j]
            if v and state[j] != 0:
                lo, hi = lower[j], upper[j]  # (never compare an mpq with None: slow in gmpy2)
                b = item.lower if (lo is not None and v == lo) else item.upper if (hi is not None and v == hi) else None
                if type(b) is Fraction:
                    return b
            return frac(v)

        if known is not None:
            x0, (pbase, abase), (vkeys, ckeys) = known
            items = model.variables
            # (the moved entries picked out in C: a probe moves few of them)
            moved = compress(range(n + m), map(is_not, x, x0))
            own = {}
            rows_moved = []
            for j in moved:
                if j < n:
                    own[vnames[j]] = value(j, items[j])
                else:
                    rows_moved.append(j - n)
            extra["primal"] = ScaledMap(vkeys, own, pbase)
            items = model.constraints
            own = {cnames[i]: value(n + i, items[i]) for i in rows_moved}
            extra["activities"] = ScaledMap(ckeys, own, abase)
        else:
            extra["primal"] = frozen_map({v.name: value(j, v) for j, v in enumerate(model.variables)})
            extra["activities"] = frozen_map({c.name: value(n + i, c) for i, c in enumerate(model.constraints)})
    if status is Status.OPTIMAL:
        y = out.y
        extra["objective"] = frac(sign * out.z + form.constant)
        flip = sign < 0  # to the model's sense (a negation, not a multiplication, when needed)
        sparse = known is not None
        if sparse:
            duals = {cnames[i]: frac(-y[i] if flip else y[i]) for i in compress(range(m), y)}
        else:
            duals = {cnames[i]: frac(-y[i] if flip else y[i]) for i in range(m)}
        rc = {}
        kept = out.d  # the pivot loop's own reduced costs, when it priced in full
        if sparse and kept is not None:
            # only the nonzero entries, in column order: those kept (picked out in C)
            # and, of the nonbasic columns the loop did not price (fixed ones), those
            # with a cost or an entry in a row of nonzero dual (the rest are 0); the
            # loop below read every column for each probe
            rc_of = _sparse_reduced_costs(form, sx, kept, y, n)
            for j in sorted(rc_of):
                d = rc_of[j]
                rc[vnames[j]] = frac(-d if flip else d)
        else:
            for j in range(n):
                if kept is not None and kept[j] is not None:
                    d = kept[j]  # equal to c_j - y^T a_j exactly (checked in the solver tests)
                elif state[j] == 0:  # basic
                    d = ZERO
                else:
                    d = _reduced_cost(form, y, j)
                if d or not sparse:
                    rc[vnames[j]] = frac(-d if flip else d)
        if sparse:
            vkeys, ckeys = known[2]
            extra["duals"] = ScaledMap(ckeys, duals, _NOTHING, _NO_SCALE)
            extra["reduced_costs"] = ScaledMap(vkeys, rc, _NOTHING, _NO_SCALE)
        else:
            extra["duals"], extra["reduced_costs"] = frozen_map(duals), frozen_map(rc)
    elif status is Status.INFEASIBLE:
        rows, bounds = sx.farkas(out.y)
        extra["farkas_rows"] = frozen_map({cnames[i]: frac(v) for i, v in sorted(rows.items())})
        extra["farkas_bounds"] = frozen_map({vnames[j]: frac(v) for j, v in sorted(bounds.items())})
    elif status is Status.UNBOUNDED:
        extra["ray"] = frozen_map({vnames[j]: frac(v) for j, v in sorted(out.ray.items()) if j < n and v})
    return SolveResult(status=status, seconds=time.monotonic() - started, **common, **extra)


def _start_optimal(sx: Simplex, cost: list) -> Outcome | None:
    """The outcome of the pivot loop from an adopted start when the cost is on
    one nonbasic column held at the bound its cost's sign keeps it on (a range
    probe minimising a variable at its lower bound, or maximising one at its
    upper): else None.  Then ``c_B = 0``, so ``y = 0`` and every reduced cost
    is 0 but that column's own, ``d_j = c_j``, which has the sign that its
    bound makes no gain: the start is optimal, and the loop would price once
    and stop there with these values (its ``d`` holds 0 for the other movable
    columns, and the result keeps the nonzero entries only)."""
    at = list(compress(range(len(cost)), cost))
    if len(at) != 1:
        return None
    j = at[0]
    c, state = cost[j], sx.state[j]
    if not ((state == AT_LOWER and c > 0) or (state == AT_UPPER and c < 0)):
        return None
    d = [None] * len(sx.cols)
    d[j] = c
    return Outcome("optimal", c * sx.x[j], [ZERO] * sx.m, d=d)


def _reduced_cost(form, y, j: int) -> mpq:
    """``c_j - y^T a_j``."""
    d = form.cost[j]
    for i, a in form.cols[j]:
        if y[i]:
            d -= y[i] * a
    return d


def _sparse_reduced_costs(form, sx: Simplex, kept: list, y: list, n: int) -> dict[int, mpq]:
    """The nonzero reduced costs of the structural columns, by column: ``kept``'s
    own nonzero entries (``compress`` drops None and 0 alike), and for each
    nonbasic column ``kept`` has None for (a fixed column: pricing skips them)
    ``c_j - y^T a_j``, which is ``c_j`` unless the column meets a row of nonzero
    dual.  Those columns are found from the rows of the nonzero duals when there
    are few of them (a range probe's duals are a path through the basis), else
    every such column is summed as before."""
    out = {j: kept[j] for j in compress(range(n), kept)}
    state, cost = sx.state, form.cost
    duals_at = list(compress(range(len(y)), y))
    if len(duals_at) * 8 <= len(y):
        rows = sx._rows()
        look = {j for i in duals_at for j, _ in rows[i] if j < n}
        look.update(compress(range(n), cost))
    else:
        look = range(n)
    for j in look:
        if kept[j] is None and state[j] != 0:
            d = _reduced_cost(form, y, j)
            if d:
                out[j] = d
    return out


class ObjectiveProbes:
    """Exact solves of one model's rows and bounds under other objectives, all
    from one starting basis that is factored and checked once.

    ``solve(probe)`` gives what ``solve(probe, start_basis=start, **options)``
    gives, pivot for pivot (the start's factorisation, basic values and
    feasibility do not depend on the costs, so they are worked out once, and
    each probe pivots on its own copy), for any ``probe`` that shares ``model``'s
    variables and constraints; a probe that does not, or a start that is not
    accepted as it stands, is simply solved in full.  Allocation ranges make
    two such solves per variable (BANDM: 608).  One caller's sequence of
    probes: the matrix's copies are handed on from probe to probe, so one
    object is not for solves on several threads at once.
    """

    def __init__(self, model: Model, start, *, start_values=None, **options) -> None:
        """``start_values``: optionally ``(primal, activities)``, Fractions by name
        for the start's point; each that equals the start's own value is handed
        back, as that very object, wherever a probe's result keeps that value
        (so a caller can tell the unmoved entries by identity)."""
        from ..floatlp import BasisHint

        if not isinstance(start, BasisHint):
            raise InputError(f"must be a BasisHint, not {type(start).__name__}", field="start_basis")
        options.pop("warm_start", None)  # a start is given: no float solve either way
        _check_options(options.get("pricing", "guarded"), options.get("iteration_limit"), options.get("time_limit"))
        self.model, self.start, self.options = model, start, options
        self._state = None
        self._known = None  # the start's values and their Fractions (see _run)
        self._index = None  # the variables' columns by name
        self._start_values = start_values
        self._form = build_form(model)
        if self._form.crossed is None:
            sx = Simplex(self._form, pricing=options.get("pricing", "guarded"), hint=start)
            self._state = sx.start_state()

    def _bases(self, x0: list) -> tuple:
        """The start's point and activities as Fractions by name: the given
        ``start_values`` map itself when each of its values equals the start's
        (compared exactly), else a map of those that do and the rest made."""
        model = self.model
        n = len(model.variables)
        given = self._start_values or ({}, {})
        out = []
        for at, items, values in ((0, model.variables, given[0]), (n, model.constraints, given[1])):
            made, whole = {}, True
            for k, it in enumerate(items):
                v, got = x0[at + k], values.get(it.name)
                if type(got) is Fraction and v == mpq(got.numerator, got.denominator):
                    made[it.name] = got
                else:
                    made[it.name], whole = frac(v), False
            out.append(values if whole else made)
        return tuple(out)

    def solve(self, probe: Model) -> SolveResult:
        base, st = self.model, self._state
        if st is None or probe.variables is not base.variables or probe.constraints is not base.constraints:
            return solve(probe, start_basis=self.start, **self.options)
        started = time.monotonic()
        f = self._form
        if self._index is None:  # (the probes share the start's variables: made once)
            self._index = {v.name: j for j, v in enumerate(base.variables)}
        index = self._index
        sign = 1 if probe.sense is Sense.MINIMIZE else -1
        cost = [ZERO] * f.ncols
        for name, c in probe.objective:
            cost[index[name]] = mpq(c.numerator, c.denominator) * sign
        form = replace(f, cost=cost, sign=sign, constant=mpq(probe.objective_constant.numerator,
                                                             probe.objective_constant.denominator))
        o = self.options
        pricing = o.get("pricing", "guarded")
        sx = Simplex(form, pricing=pricing, iteration_limit=o.get("iteration_limit"),
                     time_limit=o.get("time_limit"), listener=o.get("listener"), tableau=o.get("tableau", False),
                     should_stop=o.get("should_stop"), start=st)
        if self._known is None:
            self._known = (st.x, self._bases(st.x), (dict.fromkeys(v.name for v in base.variables),
                                                     dict.fromkeys(c.name for c in base.constraints)))
        out = None
        if (o.get("listener") is None and o.get("should_stop") is None and o.get("time_limit") is None
                and o.get("iteration_limit") != 0 and not o.get("tableau")):
            # (with none of these, the loop's first pricing is all it would do: a
            # generated 1,000-row network's ranges have 1,219 such probes of 2,510)
            out = _start_optimal(sx, cost)
        try:
            return _run(probe, form, sx, pricing, o.get("time_limit"), started, self._known, out)
        finally:
            sx.keep_caches(st)
