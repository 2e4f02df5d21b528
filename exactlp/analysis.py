"""Post-optimal work: conflict explanation and sensitivity ranging, exactly.

Everything here is built on proven results: each step of the conflict filter is
an exact solve whose infeasibility is certified, and the ranges come from the
exact optimal basis.  No tolerance is used anywhere: a zero-width range is
exactly zero.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from fractions import Fraction
from typing import Mapping

from .errors import InputError
from .model import Constraint, Model, Sense


# ----------------------------------------------------------------------
# conflict explanation
# ----------------------------------------------------------------------

@dataclass(frozen=True)
class Conflict:
    """A minimal infeasible subset: removing any one member makes it feasible."""

    constraints: tuple[str, ...]  # constraints that take part
    bounds: tuple[str, ...]  # variables whose bounds take part
    model: Model  # the subset as a model of its own (others dropped, other bounds freed)
    result: object  # its infeasible SolveResult (with the Farkas multipliers)
    solves: int  # exact solves the filter made
    #: ("constraint" | "bound", name) -> a point that satisfies every other member
    #: (a :class:`Point`: the variable's name -> its value)
    witnesses: dict


class Point(Mapping):
    """A point over every variable of a model, read as the dictionary name ->
    value: the values in the variables' order over one map of the names, which
    the points of one conflict share (a 1,000-member conflict of a network of
    6,428 variables keeps a point for each member, and a dictionary each took
    several hundred MB more)."""

    __slots__ = ("_index", "_values")

    def __init__(self, index: dict, values: tuple) -> None:
        self._index, self._values = index, values  # name -> position; the values by position

    def __getitem__(self, name):
        return self._values[self._index[name]]

    def __iter__(self):
        return iter(self._index)

    def __len__(self) -> int:
        return len(self._values)


def _subset(model: Model, rows: set[str], bounded: set[str], freed: tuple | None = None) -> Model:
    """The members as a model of their own: the other constraints dropped, the
    other variables' bounds freed (``freed``: every variable freed, made once by
    the caller for its many subsets: a replace() per variable per subset took a
    fifth of a 1,000-member conflict's time)."""
    cons = tuple(c for c in model.constraints if c.name in rows)
    if freed is None:
        freed = tuple(replace(v, lower=None, upper=None) for v in model.variables)
    vars_ = tuple(v if v.name in bounded else f for v, f in zip(model.variables, freed))
    return replace(model, constraints=cons, variables=vars_, objective=(), objective_constant=Fraction(0), stages=())


def conflict(model: Model, progress=None, **solve_options) -> Conflict:
    """Find a minimal set of constraints and bounds that cannot all hold.

    A deletion filter: start from the support of the Farkas certificate (the
    constraints and bounds it uses, already infeasible together); then try to
    drop each member in turn, keeping the drop when what is left is still
    infeasible (proven by a new Farkas certificate, whose support then
    replaces the working set).  Each member the filter keeps was needed: the
    set without it was solved and found feasible.  So the final set is
    minimal: removing any one member makes it feasible.  ``progress``, if given,
    is called with a line of text before each step (the command line shows it).
    """
    from .solver import Status, solve

    first = solve(model, **solve_options)
    if first.status is not Status.INFEASIBLE:
        raise _not_proven_as_needed(model, first.status.value, "only an infeasible model has a conflict "
                                    "to explain")
    solves = 1
    if first.crossed is not None:
        kind, name = first.crossed
        rows = {name} if kind == "constraint" else set()
        bounded = {name} if kind == "variable" else set()
        sub = _subset(model, rows, bounded)
        # one member only: without it nothing is left, and any point satisfies nothing
        zero = {v.name: Fraction(0) for v in model.variables}
        wit = {("constraint" if rows else "bound", name): zero}
        return Conflict(tuple(sorted(rows)), tuple(sorted(bounded)), sub, solve(sub, **solve_options), solves + 1, wit)
    rows = set(first.farkas_rows)
    bounded = set(first.farkas_bounds)
    freed = tuple(replace(v, lower=None, upper=None) for v in model.variables)
    index = {v.name: k for k, v in enumerate(model.variables)}  # (shared by the points kept)
    names = tuple(index)
    order = [("constraint", c.name) for c in model.constraints] + [("bound", v.name) for v in model.variables]
    kept: set[tuple[str, str]] = set()
    witnesses: dict = {}
    # The cyclic collector paused over the trials (as over the range probes): the
    # solves make no reference cycles (a test holds the filter to that), and its
    # full passes over a heap that grows with the witness points took a fifth of
    # a 1,000-member conflict's filter (13.6 s of 64.9 s)
    from .solver import _collector_paused

    with _collector_paused(True):
        for item in order:
            kind, name = item
            if (kind == "constraint" and name not in rows) or (kind == "bound" and name not in bounded):
                continue
            if progress is not None:
                progress(f"conflict: {len(rows) + len(bounded)} rules left; trying without {kind} '{name}'")
            trial_rows = rows - {name} if kind == "constraint" else rows
            trial_bounded = bounded - {name} if kind == "bound" else bounded
            r = solve(_subset(model, trial_rows, trial_bounded, freed), **solve_options)
            solves += 1
            if r.status is Status.INFEASIBLE:
                # still infeasible without it: shrink to what the new proof uses
                # (a Farkas proof: no pair of sides crosses in a subset of a model
                # whose own sides do not, as the first solve found); members
                # already found necessary stay necessary for any subset
                rows = set(r.farkas_rows)
                bounded = set(r.farkas_bounds)
            elif not r.status.is_proven:
                raise InputError(f"a step of the conflict filter stopped ({r.status.value}); nothing is proven",
                                 field="conflict")
            else:
                # feasible without it: the point found stays feasible for every smaller set
                kept.add(item)
                witnesses[item] = Point(index, tuple(map(r.primal.__getitem__, names)))
    sub = _subset(model, rows, bounded, freed)
    final = solve(sub, **solve_options)
    solves += 1
    names = [c.name for c in model.constraints if c.name in rows]
    bnames = [v.name for v in model.variables if v.name in bounded]
    wit = {k: v for k, v in witnesses.items()
           if (k[0] == "constraint" and k[1] in rows) or (k[0] == "bound" and k[1] in bounded)}
    return Conflict(tuple(names), tuple(bnames), sub, final, solves, wit)


# ----------------------------------------------------------------------
# sensitivity ranging
# ----------------------------------------------------------------------

@dataclass(frozen=True)
class Interval:
    lower: Fraction | None  # None: minus infinity
    upper: Fraction | None  # None: plus infinity


@dataclass(frozen=True)
class RhsRange:
    bound: str  # "upper", "lower" or "equals": which finite side is ranged
    value: Fraction
    interval: Interval
    dual: Fraction
    #: binding rows: variable -> d x / d b (the allocation's rate as the bound moves)
    direction: dict | None = None


@dataclass(frozen=True)
class Sensitivity:
    result: object
    objective_ranges: dict  # variable -> Interval of its objective coefficient
    rhs_ranges: dict  # constraint -> RhsRange
    #: variable -> constraint -> d y / d c_j (model sense): how the duals move with c_j
    dual_directions: dict


#: what to do instead, by the outcome that is not an optimum
_INSTEAD = {
    "infeasible": "'exactlp conflict' names a minimal set of rules that clash",
    "unbounded": "the solve's certificate gives the improving ray",
    "optimal": "'exactlp sensitivity' and 'exactlp ranges' apply",
}


def _not_proven_as_needed(model: Model, status: str, needs: str) -> InputError:
    """One line naming the model's file (when it came from one), its outcome, what
    the analysis needs, and what to do instead."""
    hint = _INSTEAD.get(status, "nothing is proven: raise the limit")
    return InputError(f"the model is {status}: {needs} ({hint})",
                      file=model.source, field=None if model.source else "model")


def _single_objective(model: Model) -> None:
    if model.stages:
        raise InputError("this model has priority tiers: sensitivity and ranges apply to a single "
                         "objective, not yet to tiers", field="objectives")


def _clip(lo, hi, value):
    return Interval(None if lo is None else value + lo, None if hi is None else value + hi)


_ZERO_MARK = -(1 << 40)  # (below any difference of bit lengths met)


def _limit_arrays(state: list, fixed: frozenset, d: list):
    """What :func:`_limit_candidates` reads of the optimum, made once: the
    column states, a mask of the fixed columns, and for each ``d_k`` its ``bits
    n - bits d`` (``_ZERO_MARK`` for 0; the reduced costs do not change while
    the limits are found, so these do not either)."""
    import numpy as np

    fixed_mask = np.zeros(len(state), dtype=bool)
    fixed_mask[sorted(fixed)] = True
    bits_d = np.array([dk.numerator.bit_length() - dk.denominator.bit_length() if dk else _ZERO_MARK
                       for dk in d], dtype=np.int64)
    return np.frombuffer(bytes(state), dtype=np.int8), fixed_mask, bits_d


def _limit_candidates(acc, arrays) -> list[int]:
    """The columns of a basic column's tableau row (a :class:`.solver.rows.NumpyRow`)
    that can decide its cost limits, in increasing order: the same limits come
    from these as from the whole row.

    The limit of each side is the least ``|d_k / alpha_pk|`` over its columns
    (up: at lower with ``alpha_pk > 0`` or at upper with ``alpha_pk < 0``; down:
    the rest), so only the values matter, not which column gives them.  A
    movable free column puts both limits at 0: it alone is kept.  Else, with
    ``e_k = bits |d_k| - bits |alpha_pk|`` as in the loop (a ratio lies strictly
    between ``2^(e_k - 2)`` and ``2^(e_k + 2)``), only the columns within 4 of
    the side's least ``e_k`` can give its limit: the loop's own skipping rule,
    taken over the side at once.  A zero ``d_k`` (limit 0) is marked far below
    any ``e_k``, so on a side that has one only zeros are kept."""
    import numpy as np

    from .solver.rows import entry_bits
    from .solver.simplex import AT_LOWER, AT_UPPER, AT_ZERO

    states, fixed_mask, bits_d = arrays
    cols = acc.cols
    movable = ~fixed_mask[cols]
    st = states[cols]
    free = np.flatnonzero(movable & (st == AT_ZERO))
    if len(free):
        return [int(cols[free[0]])]
    pos = acc.sums > 0
    lower, upper = st == AT_LOWER, st == AT_UPPER
    bits_a = entry_bits(acc)
    keep: list[int] = []
    for side in (movable & ((lower & pos) | (upper & ~pos)), movable & ((lower & ~pos) | (upper & pos))):
        at = np.flatnonzero(side)
        if not len(at):
            continue
        e = bits_d[cols[at]] - bits_a[at]
        keep.extend(at[e < e.min() + 4].tolist())
    return sorted(cols[keep].tolist())


def sensitivity(model: Model, progress=None, **solve_options) -> Sensitivity:
    """Exact ranges over which the optimal basis stays optimal (costs) or feasible (bounds).

    Objective coefficient ``c_j`` (minimising sense ``c``, reduced costs ``d``):
    a nonbasic ``j`` keeps the basis optimal while ``d_j`` keeps its sign, so
    ``c_j`` may fall by ``d_j`` (at lower) or rise by ``-d_j`` (at upper); for a
    basic ``j`` at position ``p``, moving ``c_j`` by ``t`` moves every nonbasic
    ``d_k`` by ``-t alpha_pk`` (``alpha_p`` the row p of ``B^-1 A``), and ``t``
    is limited by the first ``d_k`` to change sign.

    A binding constraint bound ``b_i`` (its logical nonbasic): moving ``b_i`` by
    ``t`` moves the basic values by ``t B^-1 e_i``; the range is where all stay
    within their bounds, and the dual ``y_i`` is the objective's rate there.  A
    slack constraint's finite bound may move until it meets the activity.

    ``progress``, if given, is called with a line of text as the ranging goes
    (a solve of each row of ``B^-1`` or column; STAIR's 800 take about 17 s).
    """
    _single_objective(model)
    from .floatlp import BasisHint
    from .solver import Status, solve
    from .solver.form import ZERO, build_form, frac, q
    from .solver.rows import NUMPY_ROW_NONZEROS
    from .solver.simplex import AT_LOWER, AT_UPPER, BASIC, Simplex

    r = solve(model, **solve_options)
    if r.status is not Status.OPTIMAL:
        raise _not_proven_as_needed(model, r.status.value, "sensitivity ranging needs an optimum")
    form = build_form(model)
    n, m = form.n, form.m
    basic_cols = list(r.basis_columns)
    upper = frozenset(r.at_upper_columns)
    sx = Simplex(form, hint=BasisHint(tuple(basic_cols), upper, "optimal basis", "exact"), allow_repair=False)
    if sx.warm is None or not sx.warm.accepted or len(basic_cols) != m:
        # (the basis was just proven optimal: a fault of ours, not of the model)
        raise RuntimeError(f"the optimal basis just proven ({len(basic_cols)} columns for {m} rows) "
                           "could not be rebuilt")
    y = sx.basis.btran({p: form.cost[c] for p, c in enumerate(sx.head) if form.cost[c]})
    d = []
    for j in range(form.ncols):
        dj = form.cost[j]
        for i, a in form.cols[j]:
            if y[i]:
                dj -= y[i] * a
        d.append(dj)
    sign = form.sign
    nonbasic = [k for k in range(form.ncols) if sx.state[k] != BASIC]

    def movable(k):
        lo, hi = sx.lower[k], sx.upper[k]
        # (both tested for None: gmpy2's mpq == None takes about 5.6 us, against
        # 0.06 us for two mpq)
        return not (lo is not None and hi is not None and lo == hi)

    fixed = frozenset(k for k in nonbasic if not movable(k))

    # Row p of B^-1 (how the duals move with the cost of the column basic at p)
    # and column i (how the basic values move with row i's limit) come from the
    # same inverse: its columns are solved once each, and a row is read across
    # them, where a transposed solve per row cost as much again (STAIR: the
    # 351 btrans about 8.7 s of 19.6)
    columns: dict[int, dict] = {}

    def column(i: int) -> dict:  # B^-1 e_i by position
        got = columns.get(i)
        if got is None:
            got = columns[i] = sx.basis.ftran([(i, q(1))])
        return got

    step = max(1, (n + m) // 100)  # (about a hundred updates of the status line)
    inverse_rows: list[dict] = [{} for _ in range(m)]  # row p of B^-1, {i: value}, i ascending
    # each basic column's tableau row alpha_p = rho^T A: on a wide model, where the
    # pivot loop sums its rows by numpy (Simplex._np_rows), by the same sums (on
    # integers over rho's common denominator; D6CUBE's analysis 9.5-10.5 s to
    # 5.1-5.6 s, the same ranges); else by the rows rho reaches, over the movable
    # nonbasic columns only (a network's rho has a few entries, its nonbasic
    # columns thousands; the integer sums, over every nonbasic column, were 10-50%
    # slower on SC205, BANDM and a 400-row network)
    wide = sum(map(len, form.cols)) >= NUMPY_ROW_NONZEROS and sx._np_rows() is not None
    by_arrays = _limit_arrays(sx.state, fixed, d) if wide else None
    by_rows: list[list] = [[] for _ in range(m)]  # the movable nonbasic columns' entries, by row
    if any(sx.state[j] == BASIC for j in range(n)):
        for i in range(m):
            if progress is not None and i % step == 0:
                progress(f"sensitivity: column {i + 1} of {m} of the basis inverse")
            for p_, v_ in column(i).items():
                if v_:
                    inverse_rows[p_][i] = v_
        if not wide:
            for k in nonbasic:
                if k not in fixed:
                    for i, val in form.cols[k]:
                        by_rows[i].append((k, val))
    obj_ranges = {}
    dual_dirs: dict = {}
    for j, v in enumerate(model.variables):
        if progress is not None and j % step == 0:
            progress(f"sensitivity: objective coefficient {j + 1} of {n}")
        cj = form.cost[j]
        dual_dirs[v.name] = {}
        if sx.state[j] != BASIC:
            if not movable(j):
                lo_t, hi_t = None, None
            elif sx.state[j] == AT_LOWER:
                lo_t, hi_t = -d[j], None
            elif sx.state[j] == AT_UPPER:
                lo_t, hi_t = None, -d[j]
            else:  # free at zero: d_j is 0 and must stay 0
                lo_t = hi_t = q(0)
        else:
            rho = inverse_rows[sx.pos_of[j]]  # its nonzero entries, i ascending
            # model-sense duals move by t * rho when c_j (model sense) moves by t
            dual_dirs[v.name] = {model.constraints[i].name: frac(ri) for i, ri in rho.items()}
            # alpha_pk = rho^T a_k = acc_k / S for the nonbasic k, S > 0 (None: 1)
            if wide:
                acc, big_s = sx._row_times_a(rho, None, j)
            else:
                acc, big_s = {}, None
                for i, ri in rho.items():
                    for k, val in by_rows[i]:
                        acc[k] = acc.get(k, ZERO) + ri * val
            # d_k - t alpha_pk must keep d_k's sign: >= 0 at lower, <= 0 at upper, = 0
            # if free.  So t may rise to the least d_k / alpha_pk over the columns
            # where that limit is >= 0 (at lower with alpha_pk > 0, at upper with
            # alpha_pk < 0) and fall to minus the least |d_k / alpha_pk| over the
            # rest; a free column holds t at 0.  The least |limit| of each side is
            # kept (``near``: up, down), with ``e``: a positive n / d lies strictly
            # between 2^(bits n - bits d - 1) and 2^(bits n - bits d + 1), so with
            # ``e`` that difference for |d_k| less that for |acc_k|, |d_k S / acc_k|
            # lies strictly between 2^(e - 2) S' and 2^(e + 2) S' (S' the same for
            # the row): a column whose ``e`` is 4 or more above its side's best can
            # be neither less nor equal, and is passed over without its division
            # (the rule of the pivot loop's ratio tests)
            near: list = [None, None]
            near_e = [0, 0]
            state = sx.state
            arrays = getattr(acc, "cols", None) is not None
            for k in (_limit_candidates(acc, by_arrays) if arrays else sorted(acc)):  # (nonbasic order)
                a = acc[k]
                if not a or k in fixed:
                    continue
                st = state[k]
                if st == AT_LOWER:
                    side = 0 if a > 0 else 1
                elif st == AT_UPPER:
                    side = 1 if a > 0 else 0
                else:
                    near = [ZERO, ZERO]  # free: t stays 0 (nothing is less than 0)
                    continue
                best = near[side]
                if best is not None and not best:
                    continue  # 0 on this side already
                dk = d[k]
                if dk:
                    e = (dk.numerator.bit_length() - dk.denominator.bit_length()  # (bit_length ignores the sign)
                         - (a.bit_length() - 1 if type(a) is int else
                            a.numerator.bit_length() - a.denominator.bit_length()))
                    if best is not None and e >= near_e[side] + 4:
                        continue
                    t = dk / a if big_s is None else dk * big_s / a  # (the limit itself, exactly)
                    if t < 0:
                        t = -t
                else:
                    t, e = ZERO, 0
                if best is None or t < best:
                    near[side], near_e[side] = t, e
            hi_t = near[0]
            lo_t = None if near[1] is None else -near[1]
        # back to the model's sense: c_model = sign * c_min
        base = frac(sign * cj)
        if sign > 0:
            iv = _clip(None if lo_t is None else frac(lo_t), None if hi_t is None else frac(hi_t), base)
        else:
            iv = _clip(None if hi_t is None else -frac(hi_t), None if lo_t is None else -frac(lo_t), base)
        obj_ranges[v.name] = iv

    rhs_ranges = {}
    for i, c in enumerate(model.constraints):
        if progress is not None and i % step == 0:
            progress(f"sensitivity: constraint limit {i + 1} of {m}")
        s = n + i
        act = r.activities[c.name]
        dual = r.duals[c.name]
        if c.lower is None and c.upper is None:
            continue
        if sx.state[s] == BASIC:
            # slack: its finite bound(s) may move up to the activity
            if c.upper is not None and (c.lower is None or act - c.lower >= c.upper - act):
                rhs_ranges[c.name] = RhsRange("upper", c.upper, Interval(act, None), dual)
            else:
                rhs_ranges[c.name] = RhsRange("lower", c.lower, Interval(None, act), dual)
            continue
        which = "equals" if c.is_equality else ("upper" if sx.state[s] == AT_UPPER else "lower")
        b = c.upper if which == "upper" else c.lower
        w = column(i)  # d x_B / d b_i = B^-1 e_i
        lo_t = hi_t = None
        for p, wp in w.items():
            col = sx.head[p]
            x, lb, ub = sx.x[col], sx.lower[col], sx.upper[col]
            for bound, towards in ((lb, -1), (ub, 1)):
                if bound is None:
                    continue
                # x + t wp stays <= ub and >= lb
                if wp > 0:
                    lim = (bound - x) / wp
                    if towards > 0:
                        hi_t = lim if hi_t is None else min(hi_t, lim)
                    else:
                        lo_t = lim if lo_t is None else max(lo_t, lim)
                else:
                    lim = (bound - x) / wp
                    if towards > 0:
                        lo_t = lim if lo_t is None else max(lo_t, lim)
                    else:
                        hi_t = lim if hi_t is None else min(hi_t, lim)
        # the moving bound may not cross the row's other bound
        if which == "upper" and c.lower is not None:
            other = q(c.lower) - q(b)
            lo_t = other if lo_t is None else max(lo_t, other)
        if which == "lower" and c.upper is not None:
            other = q(c.upper) - q(b)
            hi_t = other if hi_t is None else min(hi_t, other)
        direction = {model.variables[col].name: frac(wp) for p, wp in w.items()
                     if (col := sx.head[p]) < n and wp}
        rhs_ranges[c.name] = RhsRange(which, b, _clip(None if lo_t is None else frac(lo_t),
                                                      None if hi_t is None else frac(hi_t), b), dual, direction)
    return Sensitivity(r, obj_ranges, rhs_ranges, dual_dirs)


# ----------------------------------------------------------------------
# allocation ranges over the optimal set, and uniqueness
# ----------------------------------------------------------------------

@dataclass(frozen=True)
class VarRange:
    minimum: Fraction | None  # None: unbounded below over the optimal set
    maximum: Fraction | None
    method: str  # "reduced cost" (decided by the optimal duals) or "solved" (two exact solves)


@dataclass(frozen=True)
class Ranges:
    result: object  # the optimal SolveResult
    ranges: dict  # variable -> VarRange
    unique: bool
    proof: str  # how uniqueness (or its absence) was decided
    fixed_model: Model  # the model with the objective held at its optimum (each end's result is of it)
    solves: int
    #: variable -> (probe model, its result) for each solved end: (min, max)
    endpoints: dict


def fixed_objective_model(model: Model, optimum: Fraction, name: str = "optimal_objective") -> Model:
    """The model plus one equality row holding the objective exactly at ``optimum``."""
    taken = {c.name for c in model.constraints}
    while name in taken:
        name = name + "_"
    value = optimum - model.objective_constant
    row = Constraint(name, model.objective, value, value, note="the objective held at its proven optimum")
    return replace(model, constraints=model.constraints + (row,))


def optimal_face_model(model: Model, r) -> Model:
    """The model's optimal set written without the objective: every variable with a
    nonzero reduced cost fixed at its optimal value, every row with a nonzero dual
    held at its optimal activity.  With the certified duals ``y`` and reduced
    costs ``d`` (``c = A^T y + d``), any feasible ``x`` has ``c^T x - z* = sum_j
    d_j (x_j - x*_j) + sum_i y_i (a_i x - a_i x*)`` (model sense), every term of
    the sign that makes it no gain, so ``x`` is optimal exactly when every term
    is zero: the same set as the model with ``c^T x = z*`` added, but sparse
    (no dense objective row in the basis), with the decided columns fixed."""
    basic = set(r.basis_columns)
    variables = tuple(
        replace(v, lower=r.primal[v.name], upper=r.primal[v.name])
        if j not in basic and r.reduced_costs[v.name] != 0 else v
        for j, v in enumerate(model.variables))
    constraints = tuple(
        replace(c, lower=r.activities[c.name], upper=r.activities[c.name]) if r.duals[c.name] != 0 else c
        for c in model.constraints)
    return replace(model, variables=variables, constraints=constraints)


def _face_pins(model: Model, r) -> dict | None:
    """The pinned items of :func:`optimal_face_model`: ``(is_row, name) -> (b,
    side)`` with ``b`` the optimum's nonzero reduced cost or dual, ``side`` 1 when
    the optimum rests on the lower side only, -1 on the upper side only, 0 on
    both (a fixed column or an equality row, whose multiplier takes any sign).

    For a proven optimum ``side b`` has one sign over every item with a side
    (the sign a multiplier needs on its side for the model's own sense: positive
    at a lower side when minimising); None if not, or if a nonzero multiplier's
    item rests on neither side (then the held row's probes are used)."""
    out = {}
    signs = set()
    for is_row, items, values, mult in ((False, model.variables, r.primal, r.reduced_costs),
                                        (True, model.constraints, r.activities, r.duals)):
        for it in items:
            b = mult[it.name]
            if not b:
                continue
            at = values[it.name]
            at_lo, at_hi = it.lower is not None and at == it.lower, it.upper is not None and at == it.upper
            if not (at_lo or at_hi):
                return None
            side = 0 if at_lo and at_hi else 1 if at_lo else -1
            if side:
                signs.add(side * b > 0)
            out[is_row, it.name] = (b, side)
    return out if len(signs) <= 1 else None


def _differing(new: Mapping, old: Mapping) -> dict:
    """The entries of ``new`` that differ from ``old``'s (Fractions, always in lowest
    terms, so equal exactly when numerator and denominator are: compared so, the
    comparison costs a tenth of ``!=``, whose type checks took a fifth of the
    1,000-row network's range probes; a face probe's result is ``old`` with a
    few entries of its own, and only those can differ)."""
    from .solver.result import ScaledMap

    if isinstance(new, ScaledMap) and new.based_on(old):
        new = new.own
    return {k: v for k, v in new.items()
            if (o := old[k]).numerator != v.numerator or o.denominator != v.denominator}


def _lift_face_end(face_result, probe: Model, pins: dict, r, act: dict):
    """A probe's result on the optimal face (:func:`optimal_face_model`) as the
    result of the same probe on the model with the held row ``c^T x = z*``
    (``probe``, whose last row that is), or None when it cannot be lifted.
    ``pins``: :func:`_face_pins` of the model's optimum ``r``; ``act``: its
    activities and the held row's value (one dict, shared by the ends).

    The point (or ray) is the same: it meets the face's pins, so every term of
    :func:`optimal_face_model`'s identity is zero and ``c^T x = z*`` holds (a
    ray's ``c^T r`` is 0 for the same reason).  The duals: with the face's row
    duals ``u`` and reduced costs ``r' = e_k - A^T u``, take ``u - w y*`` on the
    rows and ``w`` on the held row; the reduced costs become ``r' - w d*``
    (``d* = c - A^T y*``), unchanged wherever ``d*_j = 0`` and ``y*_i = 0``,
    where the face's own bounds and rows are the model's.  On a pinned item
    (value ``a`` on the face, ``b`` at the optimum) the face left the sign free;
    the model needs the sign ``sigma`` of the side the point rests on (the
    optimum's side: the pin holds it there; minimising, ``sigma = 1`` at a lower
    side), ``sigma (a - w b) >= 0``: ``w <= a / b`` when ``sigma b > 0``, else
    ``w >= a / b``.  ``side b`` has one sign over the items (:func:`_face_pins`),
    so every bound falls the same way, one ``w`` exists, and the one nearest 0
    is the extreme of the bounds that 0 breaks (``sigma a < 0``): only those
    are divided out.  Every multiplier then rests on a side the point meets,
    so the duals' objective is ``x_k``: no gap (the tests verify each end as a
    whole certificate).

    The lifted result keeps only its own entries and shares the optimum's: the
    point and activities where they differ from the optimum's
    (:class:`~exactlp.solver.result.ScaledMap`), the duals and reduced costs as
    ``u`` and ``r'`` (their nonzero entries) plus ``-w`` times the optimum's
    (:class:`~exactlp.solver.result.OffsetMap`).  A generated 1,000-row
    network's 2,510 ends took 2.2 GB as whole results."""
    from .solver import Status
    from .solver.result import OffsetMap, ScaledMap, nonzero_entries

    held = probe.constraints[-1]
    x = r.primal
    common = dict(primal=ScaledMap(x, _differing(face_result.primal, x), x),
                  activities=ScaledMap(act, _differing(face_result.activities, act), act),
                  basis=face_result.basis + (held.name,), at_upper=face_result.at_upper,
                  basis_columns=face_result.basis_columns + (len(probe.variables) + len(probe.constraints) - 1,),
                  at_upper_columns=face_result.at_upper_columns)
    if face_result.status is Status.UNBOUNDED:
        return replace(face_result, **common)
    if face_result.status is Status.INFEASIBLE:
        return None  # (the optimum lies on the face: never, but not lifted if it were)
    if face_result.status is not Status.OPTIMAL:
        return face_result  # a limit: nothing is proven, and the caller says so
    sp = 1 if probe.sense is Sense.MINIMIZE else -1
    # the face's nonzero multipliers: only they can break a sign (a = 0 never does)
    nonzero = tuple(nonzero_entries(face) for face in (face_result.reduced_costs, face_result.duals))  # by is_row
    w = Fraction(0)
    for is_row, got in enumerate(nonzero):
        for name, a in got.items():
            pin = pins.get((bool(is_row), name))
            if pin is None or not pin[1]:
                continue  # not pinned, or pinned with any sign
            b, side = pin
            if (a.numerator < 0 if sp * side > 0 else a.numerator > 0):  # sigma a < 0: w = 0 breaks this one
                t = a / b
                # (w <= t, t < 0, when sigma b > 0; else w >= t, t > 0: the extreme one)
                if (t < w) if sp * side * b > 0 else (t > w):
                    w = t
    # The duals u - w y* and reduced costs r' - w d*, kept as u and r' (their
    # nonzero entries) with -w and the optimum's maps: each entry is formed when
    # read, and the report reads u as it is (reports._face_proof), where forming
    # u - w b for every nonzero entry here and taking it back there cost a
    # conversion each way.  The held row's dual is w (the optimum's maps have no
    # such row, so its entry is w + 0).
    rows = dict(nonzero[1])
    rows[held.name] = w
    return replace(face_result, duals=OffsetMap(act, rows, r.duals, -w),
                   reduced_costs=OffsetMap(x, dict(nonzero[0]), r.reduced_costs, -w), **common)


def ranges(model: Model, variables: list[str] | None = None, progress=None, **solve_options) -> Ranges:
    """The exact minimum and maximum of each variable over all optimal solutions.

    First pass, no solves: a variable resting on a bound with a nonzero reduced
    cost takes that value in every optimal solution (with the certified duals,
    ``c^T x - z* = sum_j d_j (x_j - bound_j) + sum_i y_i (a_i x - side_i)``,
    every term >= 0 for feasible x, so an optimal x makes each term zero).  If
    that holds for every nonbasic column, the optimum is unique (the dual is
    nondegenerate).  Otherwise each undecided variable is minimised and
    maximised exactly over the optimal set: solved on :func:`optimal_face_model`
    and lifted (:func:`_lift_face_end`) to a result, with its own certificate,
    of the model with the objective held at its optimum by an equality row.  ``progress``, if
    given, is called with a line of text before each of them.
    """
    _single_objective(model)
    from .solver import Status, solve

    names = [v.name for v in model.variables]
    chosen = names if not variables else list(variables)
    for v in chosen:  # (before the solve: a misspelt name is known at once)
        if v not in names:
            from .errors import did_you_mean

            raise InputError(f"no variable '{v}'{did_you_mean(v, names)}", field="variables")
    r = solve(model, **solve_options)
    if r.status is not Status.OPTIMAL:
        raise _not_proven_as_needed(model, r.status.value, "allocation ranges need an optimum")
    basic = set(r.basis_columns)
    n = len(model.variables)
    decided: dict[str, VarRange] = {}
    nondegenerate = True
    for j, v in enumerate(model.variables):
        at_bound = j not in basic
        if at_bound and r.reduced_costs[v.name] != 0:
            decided[v.name] = VarRange(r.primal[v.name], r.primal[v.name], "reduced cost")
        elif at_bound and v.lower is not None and v.lower == v.upper:
            decided[v.name] = VarRange(v.lower, v.lower, "fixed bounds")
        elif at_bound:
            nondegenerate = False
    for i, c in enumerate(model.constraints):  # a nonbasic logical with a zero dual also leaves room
        if n + i not in basic and r.duals[c.name] == 0 and not c.is_equality:
            nondegenerate = False
    fixed = fixed_objective_model(model, r.objective)
    # Every probe starts from the optimal basis just proven, with the new row's
    # logical basic (at the optimum, which is both its bounds): that point is
    # feasible for every probe, so no float solve is needed and a few exact
    # pivots usually reach the probe's own optimum.  It is re-proven as usual.
    from .floatlp import BasisHint

    start = BasisHint.of_result(r, n, len(model.constraints), added_rows=1, source="optimum of the model")
    probes_of = None  # factored once, on the first probe that needs the held row
    # The probes are solved on the optimal face written with pins instead of the
    # held row (no dense row in the basis: a generated 1,000-row network's first
    # 40 variables took 2.1 s against 14.8), from the same optimal basis, and each
    # result lifted to the model with the held row; one that cannot be lifted is
    # solved with the held row as before.
    face = pins = held_act = face_start = face_probes = None  # made on the first probe
    out: dict[str, VarRange] = {}
    endpoints: dict[str, tuple] = {}
    solves = 1
    to_solve = 0 if nondegenerate else sum(1 for name in chosen if name not in decided)
    # The cyclic collector paused over the probes (as over a warm solve, see
    # solver._collector_paused): they make no reference cycles (a test holds
    # ranges to that), and its full passes over a heap that grows with the ends
    # kept took about 7% of a generated 1,000-row network's ranges
    from .solver import _collector_paused

    with _collector_paused(True):
        for name in chosen:
            if name in decided:
                out[name] = decided[name]
                continue
            if nondegenerate:  # the optimum is unique: the range is the point
                out[name] = VarRange(r.primal[name], r.primal[name], "unique optimum")
                continue
            if progress is not None:
                progress(f"ranges: '{name}', {len(endpoints) + 1} of {to_solve} to solve"
                         " (two exact solves each)")
            ends = []
            probes = []
            for sense in ("minimize", "maximize"):
                goal = dict(sense=Sense(sense), objective=((name, Fraction(1)),), objective_constant=Fraction(0))
                probe = replace(fixed, **goal)
                from .solver import ObjectiveProbes

                if face is None:
                    face, pins = optimal_face_model(model, r), _face_pins(model, r)
                    held_act = dict(r.activities)
                    held_act[fixed.constraints[-1].name] = fixed.constraints[-1].lower
                    face_start = BasisHint.of_result(r, n, len(model.constraints), added_rows=0,
                                                     source="optimum of the model")
                    if pins is not None:
                        # (the face's start is the optimum: its values come back as the
                        # optimum's own Fractions where they have not moved, see _differing)
                        face_probes = ObjectiveProbes(face, face_start, start_values=(r.primal, held_act),
                                                      **solve_options)
                pr = None
                if face_probes is not None:
                    pr = _lift_face_end(face_probes.solve(replace(face, **goal)), probe, pins, r, held_act)
                if pr is None:
                    if probes_of is None:
                        probes_of = ObjectiveProbes(fixed, start, **solve_options)
                    pr = probes_of.solve(probe)
                probes.append((probe, pr))
                solves += 1
                if pr.status is Status.OPTIMAL:
                    ends.append(pr.objective)
                elif pr.status is Status.UNBOUNDED:
                    ends.append(None)
                else:
                    raise InputError(f"ranging '{name}' stopped ({pr.status.value}); nothing is proven",
                                     field="ranges")
            out[name] = VarRange(ends[0], ends[1], "solved")
            endpoints[name] = tuple(probes)
    widths = [rg.minimum != rg.maximum for rg in out.values()]
    if nondegenerate:
        unique, proof = True, "every nonbasic column has a nonzero reduced cost: the dual is nondegenerate, so the optimum is unique"
    elif not any(widths) and set(chosen) == set(names):
        unique, proof = True, "every variable's range over the optimal set has zero width"
    elif any(widths):
        unique, proof = False, "some variables take different values in different optimal solutions"
    else:
        unique, proof = False, "undecided: only some variables were ranged, and all of those have zero width"
    return Ranges(r, out, unique, proof, fixed, solves, endpoints)
