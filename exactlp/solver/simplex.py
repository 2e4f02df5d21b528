"""The bounded two-phase primal simplex, in exact arithmetic.  No I/O.

Columns (structural, logical, and in phase 1 artificial) each carry bounds
``l_j <= x_j <= u_j``.  A nonbasic column rests at a finite bound, or at
zero when it is free; the basic columns are whatever the rows ``A x = 0``
(with the logicals' ``-I``) make them.

Phase 1.  Start from the all-logical basis with every structural at a bound.
Where a logical's value ``a_i x`` lies outside ``[L_i, U_i]`` it is put at the
violated bound instead and an artificial column ``sigma e_i`` (``sigma = +-1``
so that the artificial starts positive) takes its place in the basis.
Phase 1 minimises the sum of the artificials.  Its optimum is zero exactly
when the model is feasible; when it is positive, the phase-1 duals ``y`` are
a Farkas certificate (see :func:`Simplex.farkas`).  Afterwards the
artificials are fixed at ``[0, 0]``: a basic one left on a redundant
(linearly dependent) equality row is harmless, it stays at zero, and the
ratio test lets it leave at step zero whenever a pivot would move it.

Phase 1 by the dual simplex.  Under the guarded rule, without a suggested
basis, when every structural column can rest on the bound its cost prefers
(so the all-logical basis is dual feasible), phase 1 is the dual simplex of
:mod:`exactlp.solver.dual` instead: no artificial columns, and the basis it
ends at is primal feasible and still dual feasible, i.e. optimal; phase 2
then only proves it.  (On D6CUBE, 6,184 columns and highly degenerate, the
primal method took 44,527 pivots and the dual 433.)

Phase 2 minimises ``c^T x`` (a maximised objective is negated in
:mod:`exactlp.solver.form`) from the feasible basis phase 1 left.

Pricing rules (``pricing=``):

``bland``
    enter the lowest-index column with an improving reduced cost; among
    basic columns tied in the ratio test, the lowest index leaves.  Bland's
    rule never cycles (R. G. Bland, Math. of Operations Research 2, 1977),
    also with bounds (treat a column at its upper bound as ``u - x``).
``dantzig``
    enter the column with the largest ``|d_j|``; ties and leaving as Bland.
    It can cycle on degenerate models: use it with an iteration limit.
``hybrid``
    Dantzig's choice, except that a pivot that would be degenerate (step 0)
    is re-chosen by Bland's rule, and Bland's rule then stays in force until
    a pivot makes a positive step.  Why this terminates: the objective never
    rises, and strictly falls on every pivot with a positive step, so a basis
    seen before can only come back within one run of degenerate pivots; in
    such a run every pivot was chosen by Bland's rule, and Bland's theorem
    says no sequence of Bland pivots returns to a basis.  So no basis repeats,
    and there are finitely many.
``guarded`` (the default)
    the entering column maximises ``d_j^2 / w_j`` with devex reference
    weights ``w_j`` (P. M. J. Harris, "Pivot selection methods of the Devex
    LP code", Math. Programming 5, 1973; cited from memory), which
    estimate the squared length of each column's edge so that steep edges
    win over merely large reduced costs; it takes far fewer pivots than
    Dantzig's choice on the Netlib problems.  Ratio ties go to the largest
    pivot ``|alpha_p|`` at first; once a run of degenerate pivots has lasted
    ``LEX_AFTER_FACTOR (m + 1)`` pivots, a lexicographic order is fixed from
    the basis of that moment and breaks the ties for the rest of the run
    (:meth:`Simplex._lex_choice`), which rules out cycling whatever enters, so
    the run ends; after ``GUARD_RUN_FACTOR (m + 1)`` degenerate pivots in one
    run Bland's rule takes over until a positive step, as a last resort that
    terminates by the argument for ``hybrid``.  (Lexicographic ties from the
    first degenerate pivot took 3,855 pivots on SCSD8; largest pivot first,
    1,092.)  On wide models (more than ``PARTIAL_FACTOR`` columns per row)
    the duals are kept up to date instead of every reduced cost, and each
    pivot prices only a part of the columns, by the largest ``|d_j|``
    (:meth:`Simplex._price_partial`); FIT1D (24 rows, 1,026 columns) took
    9.5 s with full devex pricing and 2.4 s so, and 1.4-1.6 s once the scan
    worked on integers (the same pivots).

Reduced costs are kept up to date pivot by pivot rather than recomputed
(:meth:`Simplex._update_reduced_costs`); the duals ``y`` are computed by one
btran only when a phase ends or stops.

Ratio test, for entering column ``q`` moving in direction ``dir`` (+1 up
from its lower bound, -1 down from its upper; a free column moves against
the sign of its reduced cost) by a step ``t >= 0``.  With
``alpha = B^-1 a_q`` the basic values move as ``x_B(t) = x_B - dir t alpha``.
Each basic ``x_b`` with ``alpha_b != 0`` limits ``t`` by the distance to the
bound it moves towards; the entering column is limited by its own opposite
bound (``u_q - l_q``).  Taking the smallest of these limits keeps every
basic value inside its bounds, which is why the basis stays feasible; if
the entering column's own bound is (jointly) smallest, it flips to that
bound and the basis does not change.  If nothing limits ``t``, the
objective falls without bound along ``(dir e_q, -dir alpha)``: the ray of
the unboundedness certificate.
"""

from __future__ import annotations

import time
from dataclasses import dataclass
from itertools import compress
from math import isqrt
from operator import mul as _mul

from gmpy2 import mpq, mpz

from .basis import EtaBasis, LongNumbers, factor_ft
from .dual import DualPhase
from .pricing import _log16, _log16_of
from .rows import TableauRows, _dual_ints
from . import steer as steer_mod
from .steer import SteeredPricing

#: the exact factorisation used to (re)build the basis: sparse LU (Markowitz),
#: with Forrest-Tomlin updates between refactorisations
FACTOR = factor_ft
from .events import Finish, PhaseEnd, Pivot, Start, WarmStart
from .form import Form, frac

ZERO = mpq(0)
ONE = mpq(1)
ONE_Z = mpz(1)

BASIC, AT_LOWER, AT_UPPER, AT_ZERO = 0, 1, 2, 3
WEIGHT_SKIP = True

PRICING_RULES = ("guarded", "hybrid", "bland", "dantzig")
#: under the guarded rule, Bland's rule takes over after this many degenerate
#: pivots in one run (times the number of rows): a last resort, never needed in tests
GUARD_RUN_FACTOR = 50
#: under the guarded rule, ratio ties go to the largest pivot for the first
#: LEX_AFTER_FACTOR (m + 1) degenerate pivots of a run, then lexicographically
LEX_AFTER_FACTOR = 1
#: the guarded rule prices partially when a model has more than this many columns
#: per row (then 1 / PARTIAL_PARTS of the columns at a time)
PARTIAL_FACTOR = 8
#: partial pricing gives way to full pricing with updated reduced costs once one
#: scan has had to look at 1 / PARTIAL_SWITCH of the columns to find an improving one
#: (0: never)
PARTIAL_SWITCH = 2
PARTIAL_PARTS = 8
#: under the guarded rule, a start without a suggested basis takes phase 1 by the
#: dual simplex (:mod:`exactlp.solver.dual`) instead of artificial columns
DUAL_START = True


def _gain(dj: mpq, state: int) -> mpq | None:
    """|d_j| when a nonbasic column in ``state`` with reduced cost ``dj`` improves, else None.

    At its lower bound it improves by rising (``d_j < 0``), at its upper bound
    by falling (``d_j > 0``); a free column at zero either way.
    """
    if dj < 0:
        return None if state == AT_UPPER else -dj
    if dj > 0:
        return None if state == AT_LOWER else dj
    return None


#: a suggested basis is checked by refinement (see refine.py) instead of exact
#: factorisation when the nucleus of its factorisation (what the singletons
#: leave) holds this many bits or more (numerators and denominators).  Measured
#: on the HiGHS bases of the Netlib problems up to 500 rows: GROW7, GROW15,
#: GROW22, PILOT4 and STAIR hold 66,000 to 203,000 bits there, and refinement
#: checked them in 24-83 ms against 34-145 ms factored; every other one holds
#: at most 31,000 (SCSD8), and factored in at most 17 ms, where refinement
#: took 1.2 to 9 times as long (its float inverse alone is O(m^3))
REFINE_WHEN = 50_000
#: ... on bases of at most this many rows.  Refinement's float inverse is dense
#: (O(m^3)) and each of its steps O(m^2), while the exact LU follows the
#: sparsity: on the HiGHS bases of PILOT.JA, PILOT.WE, PILOTNOV, 25FV47 and TRUSS
#: (625-1,000 rows, nuclei past REFINE_WHEN) refinement took 1.2-4 times as long
#: as the factorisation with its two solves, PEROLD (625) the same
REFINE_MAX_ROWS = 500

#: rebuild the eta file after this many updates
REINVERT_EVERY = 16
#: ... and after this many when the solves are scaled (long numbers: each update
#: then costs more against a fresh factorisation; GROW7 cold 4.9 -> 4.0 s)
REINVERT_EVERY_SCALED = 8
#: unscaled, after the square root of the number of rows when that is more than
#: REINVERT_EVERY (see refactor_every)
REINVERT_BY_ROWS = True
ETA_BUDGET = 1
#: largest model (rows x columns) for which the full tableau can be recorded
TABLEAU_LIMIT = 20_000


def refactor_every(m: int, scaled: bool) -> int:
    """After how many updates the basis is factored afresh (or sooner, when the
    updates' nonzeros pass ``ETA_BUDGET`` times the factors').

    A factorisation costs about in proportion to the basis (its singletons and
    nucleus), so to ``m`` on sparse models, while each update adds about the
    same work to every later solve (its row eta and spike: on a network some
    60 nonzeros whatever ``m``); the count of updates that makes the average
    cost of a pivot least then grows as ``sqrt(m)`` (the factorisation's cost
    against the sum of the updates' growing costs; a common rule, stated here
    from memory).  So unscaled solves refactor every ``max(REINVERT_EVERY,
    isqrt(m))`` updates: 16 up to 288 rows, as measured on the Netlib
    problems, 31 at 1,000 rows, 54 at 3,000.  Measured on the generated
    networks' cold solves: 1,000 rows 9.1-9.5 s every 32 against 9.5-10.5 s
    every 16; 3,000 rows 96-99 s every 48 or 96 against 114 s every 16.
    Scaled solves (long numbers, where an update costs more against a fresh
    factorisation) keep ``REINVERT_EVERY_SCALED``.  Exact either way: only the
    time changes, never a value or a pivot.
    """
    if scaled:
        return REINVERT_EVERY_SCALED
    return max(REINVERT_EVERY, isqrt(m)) if REINVERT_BY_ROWS else REINVERT_EVERY


@dataclass
class Outcome:
    status: str
    z: mpq | None = None
    y: list[mpq] | None = None
    ray: dict[int, mpq] | None = None
    #: at an optimum priced in full: the reduced cost of every nonbasic column that
    #: can move (None for basic and fixed columns), as kept by the pivot loop
    d: list[mpq | None] | None = None


@dataclass
class StartState:
    """An accepted starting basis, factored once, for solves that differ only in
    their costs (see :meth:`Simplex.start_state` and :meth:`Simplex._adopt`)."""

    form: Form
    x: list
    state: list
    head: list
    pos_of: list
    unit_row: dict
    basis: object  # never pivoted on: each solve pivots on its own fresh copy
    warm: WarmStart
    #: the matrix by rows and as integers, as the first solves make them
    caches: dict


class Simplex(DualPhase, SteeredPricing, TableauRows):
    #: tests set this to recompute the reduced costs after every update and compare
    check_updates = False

    def __init__(
        self,
        form: Form,
        *,
        pricing: str = "guarded",
        iteration_limit: int | None = None,
        time_limit: float | None = None,
        listener=None,
        tableau: bool = False,
        should_stop=None,
        hint=None,
        allow_repair: bool = True,
        refine: bool = False,
        integer_columns=None,
        start: "StartState | None" = None,
    ) -> None:
        if pricing not in PRICING_RULES:
            raise ValueError(pricing)
        self.f = form
        self.pricing = pricing
        self.iteration_limit = iteration_limit
        self.time_limit = time_limit
        self.listener = listener
        self.tableau = tableau
        self.should_stop = should_stop
        self.m = form.m
        self.cols = list(form.cols)
        self.lower = list(form.lower)
        self.upper = list(form.upper)
        self.labels = list(form.labels)
        self.kinds = list(form.kinds)
        self.iterations = 0
        self.pivots = {1: 0, 2: 0}
        self.flips = 0
        self.started = time.monotonic()
        self.artificials: list[int] = []
        self.warm: WarmStart | None = None
        self.repair: dict[int, tuple] = {}
        self.allow_repair = allow_repair
        self._after_step = None
        self._rows_cache = None
        self._int_cols_cache = None
        self._frac_cols_cache = None
        self._int_rows_cache = None
        self._np_rows_cache = None
        self.weights: list[int] = []
        self.scores: list[int] | None = None
        self.steer_scores: list[int] = []
        self._short_of = self._short = None  # the short copy of the factors (dual._short_factors)
        self._partial_start = 0
        self.partial_seen: dict[int, mpq] = {}  # reduced costs of the last full partial-pricing scan
        self.partial_looked = 0  # columns looked at by the last partial-pricing scan
        self.dual_cost: list[mpq] | None = None  # set when phase 1 is the dual simplex's
        self._basis = None
        #: the float inverse of a suggested basis checked by refinement, kept for its
        #: duals until phase 2 first prices (see _setup_refined)
        self._float_inverse = None
        self.refine = refine
        #: the columns as integers, for refinement (refine.IntegerColumns), made
        #: ahead by the caller if it had the time
        self.integer_columns = integer_columns
        if start is not None:
            self._adopt(start)
            return
        if hint is not None:
            reason = self._setup_warm(hint)
            if reason is None and self.repair:
                reason_text = (f"{len(self.repair)} basic values lie outside their bounds in exact "
                               "arithmetic; repairing from this basis")
            else:
                reason_text = reason or "the suggested basis is exactly primal feasible"
                if reason is None and self._float_inverse is not None:
                    reason_text += " (solved by refinement, checked exactly)"
            self.warm = WarmStart(hint.source, hint.float_status, reason is None, reason_text)
            if reason is None:
                return
        if hint is None and pricing == "guarded" and DUAL_START and self._dual_start_possible():
            self._setup_dual()
        else:
            self._setup()

    def _setup_warm(self, hint) -> str | None:
        """Start from a suggested basis; return why it was rejected, or None.

        The suggestion only names columns: the basis is factored exactly here,
        the basic values are recomputed from ``B x_B = -N x_N``, and the start
        is taken only if every basic value lies within its bounds exactly.
        Dual feasibility is not assumed: phase 2 prices from this basis and
        pivots on if any reduced cost still has the wrong sign.
        """
        f, m = self.f, self.m
        ncol = f.ncols
        basic = set(hint.basic)
        if any(not 0 <= j < ncol for j in basic):
            return "the suggested basis names a column the model does not have"
        if len(basic) != m:
            return "the suggested basis does not have one column per row"
        x = [ZERO] * ncol
        state = [BASIC] * ncol
        rhs: dict[int, mpq] = {}  # -N x_N, by row
        cols, at_upper, rest = self.cols, hint.at_upper, self._rest
        for j in range(ncol):
            if j in basic:
                continue
            v, state[j] = rest(j, prefer_upper=j in at_upper)
            if v:
                x[j] = v
                for i, a in cols[j]:
                    rhs[i] = rhs.get(i, ZERO) - a * v
        unit_row = {f.n + i: (i, -1) for i in range(m)}
        known = None
        try:
            try:
                # with refinement at hand, the exact factorisation gives up early on
                # a basis whose numbers grow long, and refinement is tried instead
                basis, head = FACTOR(m, sorted(basic), self.cols, unit_row,
                                     give_up=REFINE_WHEN if self.refine and m <= REFINE_MAX_ROWS else None)
            except LongNumbers:
                known = self._setup_refined(sorted(basic), rhs, x, state, unit_row)
                if known is True:
                    return None
                basis, head = FACTOR(m, sorted(basic), self.cols, unit_row)
        except ArithmeticError:
            return "the suggested basis is singular"
        if known is None:
            xb = basis.ftran([(i, v) for i, v in sorted(rhs.items()) if v])
            known = {c: xb.get(p, ZERO) for p, c in enumerate(head)}
        repair: dict[int, tuple] = {}
        for c in head:
            v = known[c]
            lo, hi = self.lower[c], self.upper[c]
            if (lo is not None and v < lo) or (hi is not None and v > hi):
                repair[c] = (lo, hi)
            x[c] = v
        if repair and not self.allow_repair:
            c = min(repair)
            return f"not primal feasible in exact arithmetic ({self.kinds[c]} {self.labels[c]!r} = {frac(x[c])})"
        self.repair = repair
        self.x, self.state, self.head, self.basis, self.unit_row = x, state, head, basis, unit_row
        self.pos_of = [-1] * ncol
        for p, c in enumerate(head):
            self.pos_of[c] = p
        return None

    _CACHES = ("_rows_cache", "_int_cols_cache", "_frac_cols_cache", "_int_rows_cache", "_np_rows_cache")

    def start_state(self) -> "StartState | None":
        """This solve's start, for other solves of the same rows and bounds under
        other costs; None unless it is a suggested basis accepted as it stands
        (factored, exactly primal feasible, no repair), before any pivot."""
        if (self.warm is None or not self.warm.accepted or self.repair or self._basis is None
                or self.artificials or self.iterations or self.dual_cost is not None):
            return None
        self._basis.make_rows()
        return StartState(self.f, list(self.x), list(self.state), list(self.head), list(self.pos_of),
                          dict(self.unit_row), self._basis, self.warm, {})

    def _adopt(self, st: "StartState") -> None:
        """Start where ``st`` was taken, under this form's costs (see :class:`StartState`).

        What :meth:`_setup_warm` would find for the same suggestion, since none of
        it depends on the costs: the same factorisation (a copy), the same basic
        values.  Dual feasibility is decided by phase 2's pricing as always."""
        f = self.f
        if (f.m, f.ncols) != (st.form.m, st.form.ncols) or f.lower != st.form.lower or f.upper != st.form.upper:
            raise ValueError("a start state is for a form with the same rows, columns and bounds")
        self.x, self.state, self.head = list(st.x), list(st.state), list(st.head)
        self.pos_of, self.unit_row = list(st.pos_of), dict(st.unit_row)
        self.repair = {}
        self.basis = st.basis.fresh_copy()
        self.warm = st.warm
        for name, value in st.caches.items():
            setattr(self, name, value)

    def keep_caches(self, st: "StartState") -> None:
        """Hand the matrix's copies this solve made (by rows, as integers) to
        ``st``, for the next solve that adopts it (the columns are the same)."""
        ncol = st.form.ncols
        for name in self._CACHES:
            got = getattr(self, name)
            if got is not None and got[0] == ncol and name not in st.caches:
                st.caches[name] = got

    def _setup_refined(self, head: list[int], rhs: dict, x: list, state: list, unit_row: dict):
        """Check a suggested basis without factoring it (see :mod:`.refine`).

        ``x_B`` is found by floating-point refinement and checked exactly
        (``B x_B = -N x_N`` in integers); if every basic value lies within its
        bounds and ``B`` is nonsingular (its determinant is not 0 modulo a
        prime), the start is taken, and the basis is factored only if a pivot
        or a solve needs it (see :attr:`basis`): at an optimal suggestion, the
        duals come from the same float inverse, checked exactly in turn.
        Returns True when taken; else the basic values by column if they were
        found (to spare the exact path its solve), or None.
        """
        from .refine import FloatInverse, IntegerColumns

        m = self.m
        if self.integer_columns is None:
            self.integer_columns = IntegerColumns(self.cols)
        ints = self.integer_columns
        try:
            fi = FloatInverse(m, [ints[c] for c in head], background=True)
        except ArithmeticError:
            return None
        fi.expired = self._expired
        # B nonsingular first: this pure-Python elimination runs while the float
        # inverse is made on the other core (see FloatInverse); a basis that fails
        # it (or is too dense for it) is factored exactly, which decides
        try:
            if not fi.nonsingular():
                return None
            xb = fi.primal([rhs.get(i, ZERO) for i in range(m)])
        finally:
            fi.wait()
        if xb is None:
            return None
        known = dict(zip(head, xb))
        lower, upper = self.lower, self.upper
        for c, v in known.items():
            lo, hi = lower[c], upper[c]
            if (lo is not None and v < lo) or (hi is not None and v > hi):
                return known
        for c, v in known.items():
            x[c] = v
        self.repair = {}
        self.x, self.state, self.head, self.unit_row = x, state, list(head), unit_row
        self._basis = None
        self._float_inverse = fi
        self.pos_of = [-1] * len(self.cols)
        for p, c in enumerate(head):
            self.pos_of[c] = p
        return True

    @property
    def basis(self):
        """The factored basis; factored here on first use after a refined start
        (positions follow the factorisation, so ``head`` is renumbered then)."""
        b = self._basis
        if b is None:
            self._float_inverse = None
            b, self.head = FACTOR(self.m, self.head, self.cols, self.unit_row)
            self._basis = b
            for p, c in enumerate(self.head):
                self.pos_of[c] = p
        return b

    @basis.setter
    def basis(self, value) -> None:
        self._basis = value

    # ------------------------------------------------------------------
    def _setup(self) -> None:
        f, m = self.f, self.m
        ncol = f.ncols
        x = [ZERO] * ncol
        state = [AT_LOWER] * ncol
        for j in range(f.n):
            x[j], state[j] = self._rest(j)
        r = self._activities(x)
        head = [-1] * m
        signs = [-1] * m
        self.unit_row: dict[int, tuple[int, int]] = {}
        for i in range(m):
            s = f.n + i
            self.unit_row[s] = (i, -1)
            lo, hi = self.lower[s], self.upper[s]
            if (lo is None or r[i] >= lo) and (hi is None or r[i] <= hi):
                head[i], x[s], state[s] = s, r[i], BASIC
                continue
            target = lo if (lo is not None and r[i] < lo) else hi
            x[s] = target
            state[s] = AT_LOWER if (lo is not None and target == lo) else AT_UPPER
            sigma = 1 if target - r[i] > 0 else -1
            a = len(self.cols)
            self.cols.append([(i, mpq(sigma))])
            self.lower.append(ZERO)
            self.upper.append(None)
            self.labels.append(self.labels[s])
            self.kinds.append("artificial")
            x.append((target - r[i]) * sigma)
            state.append(BASIC)
            self.unit_row[a] = (i, sigma)
            self.artificials.append(a)
            head[i] = a
            signs[i] = sigma
        self.x, self.state, self.head = x, state, head
        self.pos_of = [-1] * len(self.cols)
        for p, c in enumerate(head):
            self.pos_of[c] = p
        self.basis = EtaBasis(m, signs)

    def _activities(self, x: list[mpq]) -> list[mpq]:
        """``a_i x`` for every row, from the structural columns' values."""
        r = [ZERO] * self.m
        for j in range(self.f.n):
            v = x[j]
            if v:
                for i, a in self.cols[j]:
                    r[i] += a * v
        return r

    def _rest(self, j: int, prefer_upper: bool = False) -> tuple[mpq, int]:
        """Where a nonbasic column rests: its lower bound, else its upper, else zero (free)."""
        lo, hi = self.lower[j], self.upper[j]
        if prefer_upper and hi is not None and lo != hi:
            return hi, AT_UPPER
        if lo is not None:
            return lo, AT_LOWER
        if hi is not None:
            return hi, AT_UPPER
        return ZERO, AT_ZERO

    def ref(self, j: int) -> tuple[str, str]:
        return (self.labels[j], self.kinds[j])

    def _expired(self) -> bool:
        """Whether the time limit has passed or a stop was asked for."""
        return (self.time_limit is not None and self.elapsed() > self.time_limit) or \
            (self.should_stop is not None and bool(self.should_stop()))

    def elapsed(self) -> float:
        return time.monotonic() - self.started

    # ------------------------------------------------------------------
    def _repair(self) -> Outcome | None:
        """Phase 1 from a suggested basis whose basic values break some bounds.

        Each such basic column gets a temporary box from its current value to
        the bound it violates, and a cost of -1 (below its lower bound) or +1
        (above its upper bound): the phase-1 objective is then the sum of the
        infeasibilities (up to a constant).  Whenever one of them reaches its
        true bound, its own bounds and a zero cost are restored, and the current
        degenerate run is ended because the problem has changed; the box never
        lets a column become more infeasible.  This is a restriction of the
        true problem, so when it stalls with some infeasibility left nothing is
        concluded from it: the solve starts again from the slack basis, whose
        phase 1 proves infeasibility if there is any.  Returns None when every
        bound holds again, else the outcome that stopped it.
        """
        ncol = len(self.cols)
        cost = [ZERO] * ncol
        for c, (lo, hi) in self.repair.items():
            v = self.x[c]
            if lo is not None and v < lo:
                self.lower[c], self.upper[c], cost[c] = v, lo, -ONE
            else:
                self.lower[c], self.upper[c], cost[c] = hi, v, ONE

        def restore() -> bool:
            changed = False
            for c in list(self.repair):
                lo, hi = self.repair[c]
                v = self.x[c]
                if (lo is None or v >= lo) and (hi is None or v <= hi):
                    self.lower[c], self.upper[c], cost[c] = lo, hi, ZERO
                    if self.state[c] != BASIC:
                        self.state[c] = AT_LOWER if (lo is not None and v == lo) else AT_UPPER
                    del self.repair[c]
                    changed = True
            return changed

        self._after_step = restore
        out = self._phase(1, cost)
        self._after_step = None
        if out.status != "optimal":
            return out
        return None

    def _infeasibility(self) -> mpq:
        """During a warm-start repair: the sum of the bound violations left."""
        total = ZERO
        for c, (lo, hi) in self.repair.items():
            v = self.x[c]
            if lo is not None and v < lo:
                total += lo - v
            elif hi is not None and v > hi:
                total += v - hi
        return total

    def run(self) -> Outcome:
        if self.repair and self.listener:
            self.listener(self.warm)
            self._announced = True
            # the suggested basis the repair's pivots start from, its objective the
            # sum of the bound violations they drive out: without it a log's reader
            # could not replay them (phase 2 then has a start of its own)
            self.listener(self._start_event(1))
        if self.repair:
            out = self._repair()
            if out is not None:
                return self._finish(out)
            if self.repair:  # stalled: start again from the slack basis
                for c, (lo, hi) in self.repair.items():
                    self.lower[c], self.upper[c] = lo, hi
                self.repair = {}
                if self.listener:
                    self.listener(WarmStart(self.warm.source, self.warm.float_status, False,
                                            "the repair from the suggested basis stalled; "
                                            "starting again from the slack basis"))
                self.warm = WarmStart(self.warm.source, self.warm.float_status, False,
                                      "the repair from the suggested basis stalled")
                self._setup()
            elif self.listener:
                self.listener(PhaseEnd(1, frac(ZERO), self.pivots[1]))
        if self.dual_cost is not None:
            if not self._primal_infeasible():
                self.dual_cost = None  # the slack basis is feasible already: phase 2 as usual
            else:
                if self.listener:
                    if self.warm is not None:  # asked for, but no suggestion came
                        self.listener(self.warm)
                        self._announced = True
                    self.listener(self._start_event(1))
                out = self._dual_phase()
                if out.status == "restart":  # the dual phase's pivot budget ran out
                    self.dual_cost = None
                    self._setup()
                elif out.status != "optimal":
                    return self._finish(out)
                else:
                    if self.listener:
                        self.listener(PhaseEnd(1, frac(ZERO), self.pivots[1]))
                    return self._phase_two()
        ncol = len(self.cols)
        phase = 1 if self.artificials else 2
        if self.listener and self.warm is not None and not getattr(self, "_announced", False):
            self.listener(self.warm)
        if self.listener:
            at_up = tuple(self.ref(j) for j in range(ncol) if self.state[j] == AT_UPPER)
            z0 = sum((self.x[a] for a in self.artificials), ZERO) if phase == 1 else self._z(self.f.cost + [ZERO] * (ncol - self.f.ncols))
            self.listener(Start(
                tuple(self.labels[a] for a in self.artificials),
                tuple(self.ref(c) for c in self.head),
                at_up,
                phase,
                frac(z0) if phase == 1 else frac(self.f.sign * z0 + self.f.constant),
            ))
        if phase == 1:
            cost1 = [ZERO] * ncol
            for a in self.artificials:
                cost1[a] = ONE
            out = self._phase(1, cost1)
            if out.status != "optimal":
                return self._finish(out)
            if self.listener:
                self.listener(PhaseEnd(1, frac(out.z), self.pivots[1]))
            if out.z > 0:
                return self._finish(Outcome("infeasible", out.z, out.y))
            for a in self.artificials:  # fix the artificials at zero for phase 2
                self.upper[a] = ZERO
                self.x[a] = ZERO
                if self.state[a] != BASIC:
                    self.state[a] = AT_LOWER
        return self._phase_two()

    def _phase_two(self) -> Outcome:
        cost2 = list(self.f.cost) + [ZERO] * (len(self.cols) - self.f.ncols)
        out = self._phase(2, cost2)
        if out.status == "optimal" and self.listener:
            self.listener(PhaseEnd(2, frac(self.f.sign * out.z + self.f.constant), self.pivots[2]))
        return self._finish(out)

    def _finish(self, out: Outcome) -> Outcome:
        if self.listener:
            obj = None
            if out.status == "optimal":
                obj = frac(self.f.sign * out.z + self.f.constant)
            self.listener(Finish(out.status, obj, self.pivots[1], self.pivots[2], self.flips))
        return out

    def _z(self, cost: list[mpq]) -> mpq:
        x = self.x  # (over the nonzero costs, picked out in C: a range probe's is one column)
        return sum((cost[j] * x[j] for j in compress(range(len(self.cols)), cost) if x[j]), ZERO)

    # ------------------------------------------------------------------
    def _duals(self, cost: list[mpq]) -> list[mpq]:
        """y^T = c_B^T B^-1, by one btran (needed only when a phase ends or stops)."""
        return self.basis.btran({p: cost[c] for p, c in enumerate(self.head) if cost[c]})

    def _duals_scaled(self, cost: list[mpq]):
        """``(y, (D y, D))``, or ``(y, None)`` when the basis solves unscaled."""
        if self._basis is None and self._float_inverse is not None:
            # a refined start: y by refinement (checked exactly), once
            fi, self._float_inverse = self._float_inverse, None
            got = fi.dual([cost[c] for c in self.head])
            if got is not None:
                return got
        w, d = self.basis.btran_scaled({p: cost[c] for p, c in enumerate(self.head) if cost[c]})
        if d is None:
            return w, None
        y = [x / d if x else ZERO for x in w]
        # ``D`` can be far longer than the duals' own denominators (GROW22's optimal
        # basis: 7,930 bits against at most 368, the costs touch a small part of
        # it); then the short fractions are cheaper to sum than the long integers
        if 4 * max((x.denominator.bit_length() for x in y if x), default=0) < d.bit_length():
            return y, None
        return y, (w, d)

    def _update_duals(self, y: list[mpq], dq: mpq, p: int, alpha_pq: mpq) -> None:
        """``y' = y + theta rho`` with ``theta = d_q / alpha_pq`` (see :meth:`_update_reduced_costs`)."""
        theta = dq / alpha_pq
        rho, d = self.basis.btran_unit(p)
        if d is not None:
            theta /= d
        for i, r in rho.items():
            y[i] += theta * r

    def _price_partial(self, cost: list[mpq], y: list[mpq], lowest: bool):
        """Partial pricing: reduced costs of a part of the columns, from the duals.

        Returns (the reduced costs of the lowest eligible column and of the
        chosen one, by column -- all that the pivot loop reads of them; the
        lowest eligible column or -1; the best by ``|d_j|`` among those looked
        at).  With ``lowest`` (Bland's rule) the columns are scanned from the
        first until an eligible one is found.  Otherwise the scan starts where
        the last one stopped and goes on, wrapping around, until at least one
        part (``1 / PARTIAL_PARTS`` of the columns, and at least ``2 (m + 1)``)
        has been looked at and an eligible column found, or every column has
        been looked at; only then can "none eligible" be concluded, so
        optimality is always decided on all of them.  Then ``partial_seen``
        holds every movable column's reduced cost, which the result reports.

        The scan works on integers when the duals share a short common
        denominator (see :func:`_dual_ints`), and each column is summed in
        fractions only when its own denominators, or the duals', are not short
        (see :meth:`_int_cols`): on D6CUBE's first 3,000 pivots the scan in
        fractions was a quarter of the solve, most of it the gcd of each
        ``mpq`` product and difference.
        """
        ints = _dual_ints(y)
        if ints is None:  # nested denominators: every column in fractions (D_y = 1 below)
            yy, dy = None, ONE_Z
            icols = self._frac_cols()
        else:
            yy, dy = ints
            icols = self._int_cols()
        cols, state, lower, upper = self.cols, self.state, self.lower, self.upper
        ncol = len(cols)
        part = max(-(-ncol // PARTIAL_PARTS), 2 * (self.m + 1))
        start = 0 if lowest else self._partial_start % ncol
        # d_j = c_j - y^T a_j with y = Y / D_y, a_j = A_j / e_j and c_j = c_n / c_d
        # (Y, A_j, c_n, c_d integers): d_j = N_j / (D_y f_j) with
        # N_j = c_n D_y e_j - c_d (Y . A_j) and f_j = c_d e_j > 0; so N_j has the
        # sign of d_j, and |d_j| > |d_b| exactly when |N_j| f_b > |N_b| f_j (D_y cancels)
        best = first = -1
        best_n = best_f = 0
        first_d = best_d = (0, 1)
        for k in range(ncol):
            if k >= part and best >= 0:
                break
            j = start + k
            if j >= ncol:
                j -= ncol
            s = state[j]
            if s == BASIC:
                continue
            lo, hi = lower[j], upper[j]
            if lo is not None and hi is not None and lo == hi:
                continue
            e, pick, coefs = icols[j]
            c = cost[j]
            if e is None:  # a column in fractions: N_j and f_j from d_j itself
                dj = c
                for i, a in coefs:
                    yi = y[i]
                    if yi:
                        dj -= yi * a
                fj = dj.denominator
                nj = dj.numerator * dy
            else:
                # y^T a_j (times D_y e_j) in C loops: the column's entries of Y, times its integers
                t = sum(map(_mul, pick(yy), coefs)) if pick is not None else (yy[coefs[0][0]] * coefs[0][1] if coefs else 0)
                if c:
                    cd = c.denominator
                    fj = cd * e
                    nj = c.numerator * dy * e - cd * t
                else:
                    fj = e
                    nj = -t
            if nj < 0:
                if s == AT_UPPER:
                    continue
                a = -nj
            elif nj > 0:
                if s == AT_LOWER:
                    continue
                a = nj
            else:
                continue
            if lowest:
                return {j: mpq(nj, dy * fj)}, j, j
            if first < 0 or j < first:
                first, first_d = j, (nj, fj)
            if best < 0:
                best, best_n, best_f, best_d = j, a, fj, (nj, fj)
            else:
                lhs, rhs = a * best_f, best_n * fj
                if lhs > rhs or (lhs == rhs and j < best):
                    best, best_n, best_f, best_d = j, a, fj, (nj, fj)
        else:
            k = ncol
        self._partial_start = start + k
        self.partial_looked = k  # how many columns this scan looked at
        if best < 0:
            # every column was looked at and none improves: the optimum, whose
            # reduced costs the result reports (once a phase, so in fractions)
            self.partial_seen = self._reduced_costs_movable(cost, y)
            return {}, -1, -1
        d = {first: mpq(first_d[0], dy * first_d[1])}
        if best != first:
            d[best] = mpq(best_d[0], dy * best_d[1])
        return d, first, best

    def _reduced_costs_movable(self, cost: list[mpq], y: list[mpq]) -> dict[int, mpq]:
        """``d_j = c_j - y^T a_j`` for every nonbasic column that can move."""
        out = {}
        for j, dj in enumerate(self._reduced_costs(cost, y)):
            if dj is not None:
                out[j] = dj
        return out

    def _update_reduced_costs(self, d: list[mpq | None], q: int, b: int, p: int, alpha_pq: mpq,
                              row=None) -> None:
        """Bring ``d`` from the current basis to the one where ``q`` replaces ``b`` at position p.

        With ``rho = e_p^T B^-1`` (row p of the inverse of the *old* basis) and
        ``alpha_pj = rho . a_j``, the new duals are ``y' = y + theta rho`` with
        ``theta = d_q / alpha_pq``, so every reduced cost moves by
        ``d_j' = d_j - theta alpha_pj``.  Then ``d_q' = 0`` (q becomes basic), and
        the leaving column, for which ``alpha_pb = 1`` and ``d_b = 0``, gets
        ``d_b' = -theta``.  The arithmetic is exact, so the updated values are the
        recomputed ones (``check_updates`` asserts so in tests), at the cost of
        one btran of a unit vector and the rows of A where ``rho`` is nonzero,
        instead of ``c_B^T B^-1`` and every column of A.  ``row``: that tableau
        row when the caller has it already, as :meth:`_tableau_row` gives it.
        """
        theta = d[q] / alpha_pq  # type: ignore[operator]
        d[q] = None
        # the row comes as D alpha_pj when the solves are scaled: then
        # d_j -= (theta / D) (D alpha_pj), one division in all instead of one a column
        acc, scale = self._tableau_row(p) if row is None else row
        step = theta if scale is None else theta / scale
        score = self.scores  # None unless the guarded rule has priced by weights
        if score is None:
            for j, v in acc.items():
                dj = d[j]
                if dj is not None and v:
                    d[j] = dj - step * v
        else:
            # devex: w_j = max(w_j, (alpha_pj / alpha_pq)^2 w_q), w_b = max(w_q / alpha_pq^2, 1),
            # here as 16 log2 of each (of alpha_pj read as (D alpha_pj) / D, undivided)
            w = self.weights
            wq = w[q] - 2 * _log16(alpha_pq)
            log16 = _log16_of
            # _log16_of(n, D) < 16 (bits n - bits D + 1), and bits(den S) >= bits den +
            # bits S - 1: so where wq + 32 (bits n - bits den - bits S + 2) is at most
            # w_j, the new weight cannot pass w_j and its logarithm is not taken
            # (the same weights; the division it saves is most of the logarithm)
            top = wq + 32 * (2 - (1 if scale is None else scale.bit_length()))
            for j, v in acc.items():
                dj = d[j]
                if dj is not None and v:
                    dj = d[j] = dj - step * v
                    n = v.numerator
                    if n < 0:
                        n = -n
                    den = v.denominator
                    if WEIGHT_SKIP and top + 32 * (n.bit_length() - den.bit_length()) <= w[j]:
                        pass
                    else:
                        wj = wq + 2 * log16(n, den if scale is None else den * scale)
                        if wj > w[j]:
                            w[j] = wj
                    if dj:
                        n = dj.numerator
                        score[j] = 2 * log16(-n if n < 0 else n, dj.denominator) - w[j]
                    else:
                        score[j] = 0
            w[b] = max(wq, 0)
        lo, hi = self.lower[b], self.upper[b]
        if lo is not None and hi is not None and lo == hi:
            d[b] = None  # fixed (an artificial in phase 2, or a fixed variable): cannot move
        else:
            d[b] = -theta
            if score is not None:
                score[b] = 2 * _log16(theta) - self.weights[b]

    def _reduced_costs(self, cost: list[mpq], y: list[mpq], scaled=None) -> list[mpq | None]:
        """d_j = c_j - y^T a_j for every nonbasic column that can move (else None).

        With ``scaled = (D y, D)`` from the btran, ``y^T a_j`` is summed from
        ``D y`` (whose entries are nearly always integers, so each product meets
        only the short denominators of A) and divided by ``D`` once per column.
        """
        out: list[mpq | None] = [None] * len(self.cols)
        state, lower, upper, cols = self.state, self.lower, self.upper, self.cols
        if scaled is not None:
            w, dd = scaled
            for j in range(len(cols)):
                if state[j] == BASIC:
                    continue
                lo, hi = lower[j], upper[j]
                if lo is not None and hi is not None and lo == hi:
                    continue
                terms = [(i, a) for i, a in cols[j] if w[i]]
                if len(terms) < 3:  # one or two terms: the division would cost more than it saves
                    dj = cost[j]
                    for i, a in terms:
                        dj -= y[i] * a
                    out[j] = dj
                    continue
                s = ZERO
                for i, a in terms:
                    s += w[i] * a
                if s:
                    # c_j - s / D as one fraction: a single gcd of long numbers (s has
                    # the short denominators of A only), where the subtraction of
                    # s / D would pay one for the division and one more for itself
                    c = cost[j]
                    sd, cd = s.denominator, c.denominator
                    out[j] = mpq(c.numerator * sd * dd - cd * s.numerator, cd * sd * dd)
                else:
                    out[j] = cost[j]
            return out
        for j in range(len(cols)):
            if state[j] == BASIC:
                continue
            lo, hi = lower[j], upper[j]
            # (both tested against None first: an mpq compared with None costs 1.7 us,
            # gmpy2 tries to convert it; that was half of this loop's time)
            if lo is not None and hi is not None and lo == hi:
                continue  # fixed: cannot move
            d = cost[j]
            for i, a in cols[j]:
                yi = y[i]
                if yi:
                    d -= yi * a
            out[j] = d
        return out

    def _fixed_reduced_costs(self, cost: list[mpq], d: list[mpq | None], scaled) -> None:
        """At an optimum: fill in ``d_j`` for the nonbasic fixed columns, which
        pricing skips (they cannot move) but the result reports, from the same
        ``(D y, D)`` as the rest (one gcd per column, as in
        :meth:`_reduced_costs`; from the duals' own long fractions, the result
        paid one per term: a sixth of STAIR's time after the pivot loop)."""
        w, dd = scaled
        state, lower, upper, cols = self.state, self.lower, self.upper, self.cols
        for j in range(self.f.n):
            if state[j] == BASIC or d[j] is not None:
                continue
            lo, hi = lower[j], upper[j]
            if lo is None or hi is None or lo != hi:
                continue
            s = ZERO
            for i, a in cols[j]:
                if w[i]:
                    s += w[i] * a
            c = cost[j]
            if s:
                sd, cd = s.denominator, c.denominator
                d[j] = mpq(c.numerator * sd * dd - cd * s.numerator, cd * sd * dd)
            else:
                d[j] = c

    def _price(self, d: list[mpq | None], weighted: bool) -> tuple[int, int]:
        """Return (the lowest eligible column, the best one by the pricing score), or (-1, -1).

        Unweighted (Dantzig): the largest ``|d_j|``, ties to the lowest index.
        Weighted (devex): the largest ``d_j^2 / w_j`` with reference weights
        ``w_j`` that estimate the squared length of column j's edge (see
        :meth:`_update_reduced_costs`).  The weights only choose among improving
        columns, never decide whether one is improving, so they may be rough:
        they are kept as integers, 16 log2 w_j (:func:`_log16`), and compared
        with ``32 log2 |d_j|``; ties go to the larger ``|d_j|``, then the lower index.
        """
        state = self.state
        first = best = -1
        if weighted:
            # (_gain written out: this loop runs over every column at every pivot,
            # and |d_j| is needed only to break a tie of scores)
            best_score = None
            scores = self.scores  # 2 (16 log2 |d_j|) - 16 log2 w_j, kept with d and w
            # only the nonzero d_j can improve: ``compress`` picks them out in C
            # (None and 0 are both false), in index order; most of a range probe's
            # reduced costs are 0, and the loop below had read every column
            for j in compress(range(len(d)), d):
                dj = d[j]
                if dj < 0:
                    if state[j] == AT_UPPER:
                        continue
                elif state[j] == AT_LOWER:  # (dj > 0)
                    continue
                if first < 0:
                    first = j
                    if scores is None:
                        w = self.weights
                        scores = self.scores = [0] * len(d)
                        for i in compress(range(len(d)), d):
                            scores[i] = 2 * _log16(d[i]) - w[i]
                score = scores[j]
                if best_score is None or score > best_score:
                    best, best_score = j, score
                elif score == best_score and abs(dj) > abs(d[best]):  # type: ignore[arg-type]
                    best = j
            return first, best
        best_abs = ZERO
        for j in compress(range(len(d)), d):  # (the nonzero d_j: as above)
            dj = d[j]
            a = _gain(dj, state[j])
            if a is None:
                continue
            if first < 0:
                first = j
            if a > best_abs:
                best, best_abs = j, a
        return first, best

    def _eligible(self, j: int, d: mpq) -> int:
        """Direction in which column j improves the objective, or 0."""
        s = self.state[j]
        if s == AT_LOWER:
            return 1 if d < 0 else 0
        if s == AT_UPPER:
            return -1 if d > 0 else 0
        if s == AT_ZERO:
            return 1 if d < 0 else (-1 if d > 0 else 0)
        return 0

    def _ratio(self, q: int, direction: int, alpha: dict[int, mpq], rank: list[int] | None = None,
               prefer_large: bool = False, scale=None):
        """Return (t, leaving column or None for a flip or unbounded, bound hit).

        With ``scale = D``, ``alpha`` holds ``D B^-1 a_q``: every ratio is then
        ``1 / D`` of the true one, so the smallest, the ties among them and the
        largest ``|alpha_p|`` are the same, and only the step found is multiplied
        by ``D`` (before it is compared with the entering column's own span).  The
        lexicographic comparison divides each candidate's terms by its own
        ``|alpha_p|``, which leaves them all ``1 / D`` of the true ones or, for
        the entering column's own term, unchanged; the flip's terms are 2 and 0,
        and only their signs are compared with the others, so it chooses the same.

        Ties in the smallest ratio go to the lowest column index; with
        ``prefer_large``, to the largest ``|alpha_p|``; when ``rank`` is given
        (a long degenerate run under the guarded rule), to the lexicographically
        smallest perturbed ratio (:meth:`_lex_choice`).  Otherwise a tie with
        the entering column's own bound goes to the flip, which changes no basis.
        """
        best_t = None
        best_e = 0  # bit-length estimate of log2 best_t (see below)
        ties: list[tuple[int, int, str]] = []  # (column, position, bound)
        x, lower, upper, head = self.x, self.lower, self.upper, self.head
        for p, a in alpha.items():
            rate = -a if direction > 0 else a  # d x_b / d t
            b = head[p]
            if rate < 0:
                lo = lower[b]
                if lo is None:
                    continue
                gap, rate = x[b] - lo, -rate
                bound = "lower"
            else:
                hi = upper[b]
                if hi is None:
                    continue
                gap = hi - x[b]
                bound = "upper"
            # A positive n/d lies strictly between 2^(bits n - bits d - 1) and
            # 2^(bits n - bits d + 1), so t = gap/rate lies strictly between
            # 2^(e - 2) and 2^(e + 2) with e the difference of the two estimates.
            # A gap whose estimate is 4 or more above the best's cannot be smallest
            # nor tie: it is skipped without the division (a long gcd each).
            if gap > 0:
                e = (gap.numerator.bit_length() - gap.denominator.bit_length()
                     - rate.numerator.bit_length() + rate.denominator.bit_length())
                if best_t is not None and (not best_t or e >= best_e + 4) and best_t >= 0:
                    continue
            else:
                e = 0
            t = gap / rate
            if best_t is None or t < best_t:
                best_t, best_e, ties = t, e, [(b, p, bound)]
            elif t == best_t:
                ties.append((b, p, bound))
        if scale is not None and best_t is not None:
            best_t = best_t * scale
        lo, hi = lower[q], upper[q]
        flip_bound = "upper" if direction > 0 else "lower"
        flip = lo is not None and hi is not None and (best_t is None or hi - lo <= best_t)
        if flip and (best_t is None or hi - lo < best_t):
            return hi - lo, None, flip_bound
        if best_t is None:
            return None, None, None
        if rank is not None and (len(ties) > 1 or flip):
            choice = self._lex_choice(q, direction, alpha, ties, flip, rank)
            if choice is None:
                return best_t, None, flip_bound
            return best_t, choice[0], choice[2]
        if flip:  # a flip changes no basis: preferred on a tie
            return best_t, None, flip_bound
        if prefer_large and len(ties) > 1:
            # the largest |alpha_p| (then the lowest column): the pivot that
            # changes the basis least violently; not an anti-cycling rule by itself
            b, _, bound = min(ties, key=lambda c: (-abs(alpha[c[1]]), c[0]))
            return best_t, b, bound
        b, _, bound = min(ties)
        return best_t, b, bound

    def _lex_choice(self, q, direction, alpha, ties, flip, rank):
        """Break a ratio tie by the perturbed problem of the current degenerate run.

        Each bound is widened by its own infinitesimal, ``l_j - e_j`` and
        ``u_j + e_j``, with ``e_i >> e_j`` when ``rank[i] < rank[j]``; the
        columns basic when the run began rank first, so that basis is
        feasible for the perturbed problem (each basic value's own ``e_b``
        dominates the others in it).  The perturbed ratios of the tied rows
        differ, and taking the smallest keeps every basic value strictly
        inside its widened bounds: every pivot then makes a positive step in
        the perturbed problem, its objective strictly falls, and no basis can
        come back within the run, whichever improving column enters.

        In the perturbed problem ``x_B = -B^-1 sum_N a_j x_j`` with
        ``x_j = l_j - e_j`` (lower) or ``u_j + e_j`` (upper), so the ``e_j``
        part of basic ``x_b`` is ``-s_j (rho_b . a_j)``, ``rho_b`` the row of
        ``B^-1`` at b's position and ``s_j = -1`` at lower, ``+1`` at upper.
        Returns the winning tie ``(column, position, bound)``, or None for
        the entering column's own bound flip.

        The comparison is lazy: the ranks are walked in order and only the
        candidates still tied are kept.  At the rank of a basic column only
        that column's own distance has a term (``+e_b / |rate_b|``), which
        rules it out; at the rank of a nonbasic column ``j`` one ftran,
        ``B^-1 a_j``, gives the ``e_j`` term of every candidate at once, or,
        once that has cost as much, each candidate's row of ``B^-1`` does.
        """
        state = self.state
        # candidate: (column or None for the flip, position, bound, |rate|, sign of distance)
        alive = [(b, p, bound, abs(alpha[p]), 1 if bound == "lower" else -1) for b, p, bound in ties]
        if flip:
            alive.append((None, -1, None, ONE, 0))
        by_column = {c[0]: c for c in alive if c[0] is not None}
        rows: dict[int, list[mpq]] = {}  # position -> row of B^-1, fetched lazily
        walked = 0  # ftrans made so far in this tie-break
        for j in self._run_order:
            if len(alive) == 1:
                break
            sj = state[j]
            if sj == BASIC:
                if j in by_column and by_column[j] in alive:
                    alive = [c for c in alive if c[0] != j]  # +e_j / |rate_j| > 0 = the others' 0
                continue
            if sj == AT_ZERO:
                continue  # a free column at zero carries no perturbation
            # (B^-1 a_j) at each candidate's position: from one ftran, or from the
            # candidates' rows of B^-1 (one btran each, kept) once few candidates are
            # left or the walk has already cost as many ftrans as they would btrans
            if j == q:
                entry = lambda c: alpha.get(c[1], ZERO)  # noqa: E731
            elif len(alive) <= 3 or walked >= len(alive) or all(c[1] in rows for c in alive if c[0] is not None):
                for c in alive:
                    if c[0] is not None and c[1] not in rows:
                        rows[c[1]] = self.basis.btran({c[1]: ONE})
                col = self.cols[j]
                entry = lambda c: sum((rows[c[1]][i] * v for i, v in col if rows[c[1]][i]), ZERO)  # noqa: E731
            else:
                w = self.basis.ftran(self.cols[j])
                walked += 1
                entry = lambda c: w.get(c[1], ZERO)  # noqa: E731
            s_j = -1 if sj == AT_LOWER else 1
            coefs = []
            for c in alive:
                if c[0] is None:
                    coefs.append(mpq(2) if j == q else ZERO)  # the flip: span + 2 e_q
                else:
                    coefs.append(-s_j * entry(c) * c[4] / c[3])
            low = min(coefs)
            alive = [c for c, v in zip(alive, coefs) if v == low]
        if any(c[0] is None for c in alive):
            return None
        b, p, bound, _, _ = min(alive, key=lambda c: c[0])
        return b, p, bound

    def _check_states(self) -> None:
        """Test mode (``check_updates``): the states agree with the basis and the values.

        Each basic column is marked BASIC at its own position; each other column
        is not, and rests exactly on what its state names: its lower bound, its
        upper bound, or zero for a free column.  (A basic artificial left at
        phase 1's end stays BASIC; only the nonbasic ones are set at their
        lower bound, which phase 2 fixes at zero.)
        """
        state, x, head = self.state, self.x, self.head
        for p, c in enumerate(head):
            assert state[c] == BASIC and self.pos_of[c] == p, f"basic column {c} at {p} marked {state[c]}"
        basic = set(head)
        for j in range(len(self.cols)):
            if j in basic:
                continue
            s = state[j]
            want = self.lower[j] if s == AT_LOWER else self.upper[j] if s == AT_UPPER else ZERO if s == AT_ZERO else None
            assert want is not None and x[j] == want, f"nonbasic column {j} marked {s} at {x[j]}"

    def _run_rank(self) -> list[int]:
        """The perturbation order for a new degenerate run: basic columns first.

        Within each group the order is by column, not by basis position: any fixed
        order with the basic columns first makes the argument in :meth:`_lex_choice`
        work, and positions are renumbered by every refactorisation, so an order by
        position made the path depend on when (and with which updates) the basis
        was last refactored (TUFF: 790 pivots with eta columns, 813 with
        Forrest-Tomlin updates; by column, 680 with either).
        """
        rank = [0] * len(self.cols)
        order = sorted(self.head) + [j for j in range(len(self.cols)) if self.state[j] != BASIC]
        for r, j in enumerate(order):
            rank[j] = r
        self._run_order = order
        return rank

    def _phase(self, phase: int, cost: list[mpq]) -> Outcome:
        pricing = self.pricing
        bland_mode = pricing == "bland"
        rank: list[int] | None = None  # guarded: the perturbation order of the current degenerate run
        run_degenerate = 0
        guard_limit = GUARD_RUN_FACTOR * (self.m + 1)
        lex_after = LEX_AFTER_FACTOR * (self.m + 1)
        f = self.f
        z = self._z(cost)
        d: list[mpq | None] | None = None  # reduced costs, kept up to date pivot by pivot
        self.weights = [0] * len(self.cols)  # devex reference weights, 16 log2 w_j (1 at the start)
        # partial pricing (wide models under the guarded rule): the duals are kept
        # up to date instead, and reduced costs are computed for a part of the columns.
        # Not from an accepted float hint: few pivots remain there, and each partial
        # scan near an optimum prices most columns to find one that improves.
        partial = (pricing == "guarded" and len(self.cols) > PARTIAL_FACTOR * (self.m + 1)
                   and not (self.warm is not None and self.warm.accepted))
        y: list[mpq] | None = None
        fresh = None  # (D y, D) while d holds reduced costs priced afresh from it (no pivot since)
        afresh = False  # d holds reduced costs priced afresh (scaled or not), no pivot since
        # steered: while the factors are long, the reduced costs kept short (sd, in
        # fixed point) instead of exact (see steer.py); never under Bland's rule,
        # partial pricing or the tableau's display
        steer = (steer_mod.STEER_SHORT and pricing == "guarded" and not partial and not self.tableau
                 and not bland_mode)
        sd: list | None = None
        self._short_of = self._short = None
        while True:
            if self.check_updates:
                self._check_states()
            if sd is not None:
                if self.check_updates:
                    self._steer_check(cost, sd)
            elif partial:
                if y is None:
                    y = self._duals(cost)
                elif self.check_updates:
                    assert y == self._duals(cost), "dual update drifted"
                d = None
            elif d is None:
                y, ys = self._duals_scaled(cost)  # current until the next pivot
                d = self._reduced_costs(cost, y, ys)
                fresh = ys
                afresh = True
                if self.check_updates:
                    assert y == self._duals(cost) and d == self._reduced_costs(cost, y), "scaled pricing drifted"
                self.scores = None  # computed when first needed (not at all at an optimal start)
            elif self.check_updates:
                assert d == self._reduced_costs(cost, self._duals(cost)), "reduced-cost update drifted"
                assert y is None or y == self._duals(cost), "duals kept past a pivot"
                assert self.scores is None or all(
                    self.scores[j] == 2 * _log16(dj) - self.weights[j] for j, dj in enumerate(d) if dj), \
                    "pricing scores out of step"
            if self.should_stop is not None and self.should_stop():
                return Outcome("interrupted", z, self._duals(cost))
            if self.iteration_limit is not None and self.iterations >= self.iteration_limit:
                return Outcome("iteration_limit", z, self._duals(cost))
            if self.time_limit is not None and self.elapsed() > self.time_limit:
                return Outcome("time_limit", z, self._duals(cost))
            if steer and sd is None and d is not None and not bland_mode and self._steer_ready():
                sd = self._steer_enter(d)  # the factors have grown long: steer from here
            if sd is not None:
                first = best = self._steer_price(sd)
            elif partial:
                d, first, best = self._price_partial(cost, y, lowest=bland_mode)
                if first >= 0 and self.partial_looked * PARTIAL_SWITCH >= len(self.cols):
                    # The end game: 1 / PARTIAL_SWITCH of the columns (half) had to be
                    # priced to find one that improves, so every scan from here would
                    # cost about a full pricing pass.  Keep all the reduced costs
                    # instead and update them pivot by pivot, for the rest of the phase.
                    partial = False
                    d = self._reduced_costs(cost, y)  # y is current: partial pricing keeps it so
                    self.scores = None
                    first, best = self._price(d, weighted=pricing == "guarded")
            else:
                first, best = self._price(d, weighted=pricing == "guarded")
            if first < 0 and sd is not None:
                # the short values find no improving column: the proof is exact,
                # from reduced costs computed afresh (and should one improve after
                # all, under the dead zone, the phase ends on exact values).  With
                # no pivot since d was priced afresh (afresh), d is those exact
                # values still (the short ones were copied from it, and a pivot
                # would have updated only them), so it is kept: a range probe
                # that starts at its optimum pays one btran, not two
                sd = None
                if not afresh:
                    d = None
                steer = False
                continue
            if first < 0:
                if partial:  # the last scan priced every movable column, from these same duals
                    d = [None] * len(self.cols)
                    for j, dj in self.partial_seen.items():
                        d[j] = dj
                elif fresh is not None:
                    self._fixed_reduced_costs(cost, d, fresh)
                    if self.check_updates:
                        assert all(dj is None or dj == cost[j] - sum((y[i] * a for i, a in self.cols[j]), ZERO)
                                   for j, dj in enumerate(d)), "fixed columns' reduced costs wrong"
                return Outcome("optimal", z, list(y) if y is not None else self._duals(cost), d=d)
            fresh = None  # a pivot follows: d is updated from here, not priced afresh
            afresh = False
            if pricing == "dantzig" or (pricing in ("hybrid", "guarded") and not bland_mode):
                q, rule = best, ("partial dantzig" if partial else "devex" if pricing == "guarded" else "dantzig")
            else:
                q, rule = first, "bland"
            if sd is not None:
                v = sd[q]
                direction = self._eligible(q, mpq(v))  # (its sign: outside the dead zone)
            else:
                direction = self._eligible(q, d[q])  # type: ignore[arg-type]
            # alpha = B^-1 a_q, possibly as (D alpha, D): the ratio test and the step
            # of the basic values take it scaled (see _ratio), and only alpha_p is divided
            alpha, ad = self.basis.ftran_scaled(self.cols[q])
            if sd is not None:
                # the entering column's reduced cost exactly, from its exact column:
                # the step and the log use it, and if its sign does not make the
                # column improving the short values were wrong, and are given up
                dq = self._steer_dq(cost, q, alpha, ad)
                if self._eligible(q, dq) != direction:
                    sd = d = None
                    steer = False
                    continue
            guarded = pricing == "guarded" and not bland_mode
            t, b, bound = self._ratio(q, direction, alpha, rank if guarded else None, prefer_large=guarded,
                                      scale=ad)
            if guarded:
                if t is not None and t == 0 and rank is None and run_degenerate >= lex_after:
                    # a degenerate run has gone on: fix its perturbation from this basis
                    rank = self._run_rank()
                    t, b, bound = self._ratio(q, direction, alpha, rank, scale=ad)
                if rank is not None:
                    rule = rule + " (lexicographic ties)"
            elif pricing == "guarded":
                rule = "bland (last resort)"
            if pricing == "hybrid" and rule == "dantzig" and t is not None and t == 0:
                bland_mode = True
                if first != q:
                    q = first
                    direction = self._eligible(q, d[q])  # type: ignore[arg-type]
                    alpha, ad = self.basis.ftran_scaled(self.cols[q])
                    t, b, bound = self._ratio(q, direction, alpha, scale=ad)
                rule = "bland (degenerate run)"
            elif pricing == "hybrid" and rule == "bland":
                rule = "bland (degenerate run)"
            if t is None:
                ray = {q: mpq(direction)}
                for p, a in alpha.items():
                    ray[self.head[p]] = -direction * (a if ad is None else a / ad)
                return Outcome("unbounded", z, self._duals(cost), ray)
            if self.tableau:
                tab = self._tableau(self._reduced_costs(cost, self._duals(cost)) if partial else d,
                                    1 if phase == 1 else self.f.sign)  # (phase 1's own costs as they are)
            else:
                tab = None
            if sd is None:
                dq = d[q]
            # --- apply the step -------------------------------------------------
            self.iterations += 1
            if t:
                dt = t if direction > 0 else -t
                self.x[q] += dt
                per = dt if ad is None else dt / ad  # x_B -= dt alpha = (dt / D) (D alpha)
                for p, a in alpha.items():
                    self.x[self.head[p]] -= per * a
                z += dq * dt  # type: ignore[operator]
            if b is None:
                self.flips += 1
                self.state[q] = AT_UPPER if direction > 0 else AT_LOWER
                self.x[q] = self.upper[q] if direction > 0 else self.lower[q]
            else:
                self.pivots[phase] += 1
                p = self.pos_of[b]
                alpha_p = alpha[p] if ad is None else alpha[p] / ad
                if sd is not None:
                    self._steer_update(sd, q, b, p, alpha_p, dq)
                    y = None
                elif partial:
                    self._update_duals(y, d[q], p, alpha_p)
                else:
                    self._update_reduced_costs(d, q, b, p, alpha_p)
                    y = None  # no longer current
                if steer:
                    self._steer_follow(p, alpha, alpha_p)
                self.x[b] = self.lower[b] if bound == "lower" else self.upper[b]
                self.state[b] = AT_LOWER if bound == "lower" else AT_UPPER
                self.state[q] = BASIC
                self.pos_of[b] = -1
                self.pos_of[q] = p
                self.head[p] = q
                self.basis.replace(p, alpha, self.cols[q], ad)
                if self._refactor_due():
                    self._reinvert()
            changed = self._after_step is not None and self._after_step()
            if changed:
                z = self._z(cost)  # costs or bounds changed (warm-start repair)
                d = y = None
                if b is not None:
                    # a repaired column leaves at its own bound, which its temporary
                    # box held as the other end (below its lower bound, the box is
                    # [value, lower]): the event names the bound by the column's own
                    # bounds, as the restore set its state
                    bound = "lower" if self.state[b] == AT_LOWER else "upper"
            if t or changed:  # a positive step, or a changed problem, ends any degenerate run
                bland_mode = pricing == "bland"
                rank = None
                run_degenerate = 0
            elif pricing == "guarded":
                run_degenerate += 1
                if run_degenerate > guard_limit:
                    bland_mode = True  # last resort: Bland's rule for the rest of this run
                    if sd is not None:  # ... which reads exact signs
                        sd = d = None
                    steer = False
            if self.listener:
                shown = (self._infeasibility() if self._after_step is not None else z) if phase == 1 \
                    else f.sign * z + f.constant
                self.listener(Pivot(
                    iteration=self.iterations,
                    phase=phase,
                    entering=self.ref(q),
                    reduced_cost=frac(dq if phase == 1 else f.sign * dq),  # type: ignore[operator]
                    direction=direction,
                    leaving=None if b is None else self.ref(b),
                    leaving_bound=bound,
                    ratio=None if b is None else frac(t),
                    step=frac(t),
                    objective=frac(shown),
                    degenerate=not t,
                    rule=rule,
                    tableau=tab,
                ))

    def _refactor_due(self) -> bool:
        basis = self.basis
        if basis.updates >= refactor_every(self.m, basis.scale is not None):
            return True
        lu = getattr(basis, "lu_nonzeros", None)
        return lu is not None and basis.eta_nonzeros > ETA_BUDGET * (lu + self.m)

    def _reinvert(self) -> None:
        old = self.basis
        self.basis, self.head = FACTOR(self.m, self.head, self.cols, self.unit_row)
        self.basis.take_sizes(old.seen, old.nested)
        for p, c in enumerate(self.head):
            self.pos_of[c] = p

    def _tableau(self, d, sign) -> dict:
        """The tableau before a pivot, for the log: ``B^-1 A`` by rows, the basic
        values, and the reduced costs ``d`` times ``sign`` (the model's sense for
        its own objective, as each pivot's ``reduced_cost``; 1 for phase 1's
        costs of infeasibility)."""
        ncol = len(self.cols)
        if self.m * ncol > TABLEAU_LIMIT:
            return {"omitted": f"the model is larger than {TABLEAU_LIMIT} tableau entries"}
        rows = []
        for p in range(self.m):
            rows.append([ZERO] * ncol)
        for j in range(ncol):
            for p, a in self.basis.ftran(self.cols[j]).items():
                rows[p][j] = a
        return {
            "columns": [list(self.ref(j)) for j in range(ncol)],
            "basis": [list(self.ref(c)) for c in self.head],
            "values": [frac(self.x[c]) for c in self.head],
            "rows": [[frac(v) for v in r] for r in rows],
            "reduced_costs": [None if v is None else frac(sign * v) for v in d],
        }

    # ------------------------------------------------------------------
    def farkas(self, y: list[mpq]) -> tuple[dict[int, mpq], dict[int, mpq]]:
        """Farkas multipliers from the phase-1 duals ``y``.

        With ``g = A^T y`` and ``mu = -g``, every feasible ``x`` would satisfy
        ``0 = (y^T A + mu^T) x >= sum_i y_i [L_i if y_i > 0 else U_i]
        + sum_j mu_j [l_j if mu_j > 0 else u_j]``.  At the phase-1 optimum the
        right-hand side equals the positive sum of infeasibilities (each
        nonbasic column rests on the bound its reduced cost's sign selects),
        so no ``x`` is feasible: ``0 >= positive``.
        """
        rows = {i: y[i] for i in range(self.m) if y[i]}
        bounds: dict[int, mpq] = {}
        for j in range(self.f.n):
            g = ZERO
            for i, a in self.cols[j]:
                if y[i]:
                    g += y[i] * a
            if g:
                bounds[j] = -g
        return rows, bounds
