"""Phase 1 by the dual simplex, from a dual-feasible slack basis.  No I/O.

A mix-in of :class:`exactlp.solver.simplex.Simplex` (it works on the same
basis, values and reduced costs); the pivot loop there calls it when the
guarded rule starts without a suggested basis.

The start.  Every logical is basic and every structural column rests on the
bound its cost prefers: its lower bound when ``c_j > 0``, its upper bound when
``c_j < 0``.  With the logicals basic the duals are ``y = 0``, so ``d_j = c_j``
and this basis is dual feasible (``d_j >= 0`` at a lower bound, ``<= 0`` at an
upper one, ``= 0`` for a free column).  The start is taken only when every
column can rest so (a column with ``c_j > 0`` and no lower bound cannot): the
primal method's phase 1 runs otherwise.  (Shifting such costs to zero for
phase 1, and pivoting on with the primal method afterwards, was measured on
the 29 Netlib problems up to 500 rows that would need it: slower by a fifth or
more on 9 of them (BANDM, DEGEN2 and SCAGR25 among them), faster on about as
many; no better overall.)  The basis is
usually primal infeasible: some logical ``a_i x`` lies outside ``[L_i, U_i]``.

A dual pivot.  Pick a basic column ``b`` (position ``p``) outside its bounds,
``delta = x_b - l_b < 0`` or ``delta = x_b - u_b > 0``; it will leave at the
bound it violates.  With ``rho = e_p^T B^-1`` and ``alpha_pj = rho . a_j``, a
nonbasic ``q`` moving by ``theta`` moves ``x_b`` by ``-theta alpha_pq``, so
``theta = delta / alpha_pq`` puts ``x_b`` on its bound.  After the pivot the
reduced costs are ``d_j' = d_j - (d_q / alpha_pq) alpha_pj`` and the leaving
column's is ``-d_q / alpha_pq``, which must be ``>= 0`` when it leaves at its
lower bound and ``<= 0`` at its upper one.  Write ``s = -1`` when ``delta < 0``
and ``s = +1`` when ``delta > 0``, and ``a_j = s alpha_pj``: then
``d_j' = d_j - t a_j`` with the dual step ``t = d_q / a_q >= 0``.  A column at
its lower bound with ``a_j > 0`` (``d_j >= 0``) stays dual feasible exactly
when ``t <= d_j / a_j``, one at its upper bound with ``a_j < 0`` (``d_j <= 0``)
likewise, a free one (``d_j = 0``) only when ``t = 0``, and every other column
moves its ``d_j`` the right way.  So ``q`` is the candidate with the smallest
ratio ``d_j / a_j`` (the dual ratio test), which keeps the basis dual feasible
at every pivot.  The leaving column's ``x_b`` lands exactly on its bound.

Infeasibility.  When no candidate exists, no column that can move brings
``x_b`` closer to its bound.  Take ``g = rho^T [A, -I]``: ``g x = 0`` for every
solution, ``g_b = 1``, and ``g_j = 0`` at the other basic columns.  For
``delta < 0`` no candidate means ``g_j >= 0`` at every column on its lower
bound and ``g_j <= 0`` on its upper bound (fixed columns cannot move), so the
least value of ``g x`` over the bounds is ``l_b + sum_j g_j x_j = l_b - x_b =
-delta > 0``, against ``g x = 0``; for ``delta > 0`` the same holds for
``-g``.  The row multipliers ``s rho`` are then a Farkas certificate
(:meth:`Simplex.farkas` with ``y = s rho``), independent of the costs.

When the phase ends every basic value is within its bounds: the basis is
primal feasible, and phase 2 (primal, with the true costs) goes on from it;
as every reduced cost kept its sign, it is optimal, and phase 2 only proves it.

Choice and termination.  The leaving row is the one with the largest
``delta^2 / beta`` (dual steepest edge, :meth:`DualPhase._dual_leaving`), the
entering column the smallest ratio with ties to the largest ``|a_j|``, then the
lowest index.  A positive dual step strictly raises the
dual objective, so a basis can only come back within a run of dual-degenerate
pivots (``t = 0``).  After ``GUARD_RUN_FACTOR (m + 1)`` of those in one run,
Bland's choice takes over until a positive step: the lowest-index column
outside its bounds leaves, and ratio ties go to the lowest index.  Bland's
rule applied to the dual is finite for the dual of a standard-form problem
(R. G. Bland, 1977); for bounded columns that is not proven here, so the phase
also stops after ``DUAL_LIMIT_FACTOR (m + n)`` pivots in all, and the solve then
starts again from the slack basis with the primal two-phase method, whose
termination is proven (see :mod:`exactlp.solver.simplex`).  No test or Netlib
problem has come near that limit.
"""

from __future__ import annotations

import heapq

from gmpy2 import mpq

from . import shadow
from . import steer as steer_mod
from . import whole
from .basis import EtaBasis
from .events import Pivot, Start
from .form import frac
from .rows import entry_bits

ZERO = mpq(0)
ONE = mpq(1)
BASIC, AT_LOWER, AT_UPPER, AT_ZERO = 0, 1, 2, 3  # the column states of simplex.py (a test checks)

#: the dual ratio test filters a row made by numpy's sums (rows.NumpyRow) in
#: arrays when it has at least this many entries (see _ratio_candidates)
ARRAY_RATIO_MIN = 256


_FAR = 1 << 40  # past any difference of bit lengths met (see _ratio_candidates)

#: the dual phase gives up (and the primal two-phase method starts from the slack
#: basis) after this many pivots per row and column
DUAL_LIMIT_FACTOR = 10
#: dual steepest-edge weights are kept rounded to this many significant bits
WEIGHT_BITS = 64
#: steepest-edge lengths measured on the rows scaled by powers of two (see _row_weights)
ROW_SCALED = True
#: the dual ratio test passes breakpoints of columns with two finite bounds by flipping them
BOUND_FLIPS = True
#: the heap of leaving-row keys is rebuilt when it holds more than twice the keys
#: and this many entries (see DualPhase._leaving_refresh)
LEAVE_HEAP_SLACK = 64
#: ... and set aside while the columns marked between two choices number at least
#: 1 / LEAVE_SCAN_SHARE of the rows (0: never): the largest key is then found by
#: a scan of the keys (see DualPhase._leaving_refresh)
LEAVE_SCAN_SHARE = 4


def _overshot(was: mpq, delta: mpq) -> bool:
    """After bound flips chosen on short values, with ``was`` the leaving row's
    violation before them and ``delta`` after: did they carry ``x_b`` onto or
    past its bound (``delta`` 0, or of the other sign)?  Each flip moves
    ``x_b`` towards its bound; the exact ratio test stops flipping while some
    violation is left, so flips that leave none passed a candidate it would
    have entered."""
    return not delta or (delta < 0) != (was < 0)


def _refused(state: int, s: int, alpha_pq: mpq, dq: mpq) -> bool:
    """Is the column chosen on short values not a choice the exact ratio test
    could make?  With ``a = s alpha_pq`` (``s`` the sign of the leaving row's
    violation), the column moves ``x_b`` towards its bound only if ``a > 0`` at
    its lower bound, ``a < 0`` at its upper, and ``a != 0`` if free and at 0;
    and the dual step ``d_q / a`` must be nonnegative, else the step would
    take the reduced costs out of their signs.  On a basis exactly dual
    feasible the second test only repeats the first (``d_q >= 0`` at a lower
    bound, ``<= 0`` at an upper); after a short choice that was not the least
    ratio it is the one that fails."""
    a = alpha_pq if s > 0 else -alpha_pq
    if not (a > 0 if state == AT_LOWER else a < 0 if state == AT_UPPER else a != 0):
        return True
    return dq / a < 0


def _round_bits(n, d) -> tuple[int, int]:
    """``(m, e)`` with ``m 2^e`` the quotient ``n / d`` (``d > 0``) truncated
    towards zero to ``WEIGHT_BITS`` significant bits (``(0, 0)`` for 0).  Integer
    arithmetic only: one division with a short quotient."""
    if not n:
        return 0, 0
    neg = n < 0
    if neg:
        n = -n
    k = WEIGHT_BITS - (n.bit_length() - d.bit_length())
    m = (n << k) // d if k >= 0 else n // (d << -k)
    return (-m if neg else m), -k


def _round(n, d) -> mpq:
    """:func:`_round_bits` as an exact rational with a power of two for
    denominator; 0 stays 0."""
    if not n:
        return ZERO
    m, e = _round_bits(n, d)
    return mpq(m, 1 << -e) if e <= 0 else mpq(m << e)


_OWN_ROUND = _round  # (tests replace _round by the exact quotient, to keep the weights exact)
#: the kept dual weights are updated on integers (DualPhase._weights_on_integers);
#: False: in fractions through _round, the form the tests compare it with
WEIGHTS_ON_INTEGERS = True
#: the weights' tau solved on short copies of the factors (shadow.py); False: exactly
TAU_SHORT = True
#: ... for a factorisation whose entries average this many bits or more (see shadow.py)
TAU_SHORT_BITS = 32


class DualPhase:
    """The dual simplex's phase 1 (a mix-in: ``self`` is a ``Simplex``)."""

    def _dual_start_possible(self) -> bool:
        """Can every structural column rest on the bound its cost prefers?"""
        f, lower, upper = self.f, self.lower, self.upper
        for j in range(f.n):
            c = f.cost[j]
            if (c > 0 and lower[j] is None) or (c < 0 and upper[j] is None):
                return False
        return True

    def _setup_dual(self) -> None:
        """The slack basis, with every structural on the bound its cost prefers
        (:meth:`_dual_start_possible` must hold): dual feasible, since ``y = 0``."""
        f, m = self.f, self.m
        ncol = f.ncols
        x = [ZERO] * ncol
        state = [AT_LOWER] * ncol
        lower, upper = self.lower, self.upper
        for j in range(f.n):
            c = f.cost[j]
            if c > 0:
                x[j], state[j] = lower[j], AT_LOWER
            elif c < 0:
                x[j], state[j] = upper[j], AT_UPPER
            else:
                x[j], state[j] = self._rest(j)
        r = self._activities(x)
        head = [f.n + i for i in range(m)]
        self.unit_row = {f.n + i: (i, -1) for i in range(m)}
        for i in range(m):
            x[f.n + i], state[f.n + i] = r[i], BASIC
        self.x, self.state, self.head = x, state, head
        self.pos_of = [-1] * ncol
        for p, c in enumerate(head):
            self.pos_of[c] = p
        self.basis = EtaBasis(m, [-1] * m)
        self.dual_cost = list(f.cost)

    def _violation(self, c: int) -> mpq:
        """``x_c - l_c`` below the lower bound, ``x_c - u_c`` above the upper, else 0."""
        v, lo, hi = self.x[c], self.lower[c], self.upper[c]
        if lo is not None and v < lo:
            return v - lo
        if hi is not None and v > hi:
            return v - hi
        return ZERO

    def _primal_infeasible(self) -> bool:
        return any(self._violation(c) for c in self.head)

    def _infeasibility_sum(self) -> mpq:
        return sum((abs(self._violation(c)) for c in self.head), ZERO)

    def _dual_leaving(self, bland: bool) -> tuple[int, mpq]:
        """(position, delta) of the basic column to leave, or (-1, 0) if none is infeasible.

        Dual steepest edge: the largest ``delta_c^2 / beta_c``, with ``beta_c``
        the squared length of the row of ``B^-1`` where ``c`` is basic (kept by
        column, see :meth:`_dual_weights_update`), and ``delta_c`` rounded the
        same way; ties to the larger ``|delta|``, then the lower column.  Under
        Bland's choice, the lowest column outside its bounds.

        The keys are kept between pivots (:meth:`_leaving_refresh`): a pivot
        changes the basic values and weights only where ``alpha = B^-1 a_q`` (or
        a flip's ftran) is nonzero, which on a sparse model is a few rows of
        hundreds outside their bounds; every key is the one a full scan
        (:meth:`_dual_leaving_scan`) would make, so the choice is the same.
        """
        keys = self._leaving_refresh()
        if not keys:
            return -1, ZERO
        heap = self._leave_heap
        if bland:
            c = min(keys)
        elif heap is None:  # set aside (most rows moved): the largest key by a scan
            c = max((k, c) for c, (k, _, _) in keys.items())[1]
        else:
            # the largest key: the top of a heap of (-key) entries, passing over
            # entries made stale by a later key for the same column
            while True:
                c, serial = heap[0][2], heap[0][3]
                got = keys.get(c)
                if got is not None and got[2] == serial:
                    break
                heapq.heappop(heap)
        return self.pos_of[c], keys[c][1]

    def _leaving_refresh(self) -> dict:
        """The kept keys ``{c: ((delta^2 / beta, |delta|, -c), delta, serial)}`` of the
        basic columns outside their bounds, after the columns marked since the last
        call (``_leave_dirty``: their value, their weight or whether they are basic
        changed) are looked at again; ``_leave_sum`` stays the sum of ``|delta|``
        (when ``_leave_track``: a listener or the tests' checks read it),
        and ``_leave_heap`` holds ``(-key, serial)`` for every key made (the current
        one of a column is the entry with its serial), rebuilt from the keys when
        the stale entries pass twice their number.

        When most rows moved (a dense ``alpha``: at least ``1 / LEAVE_SCAN_SHARE``
        of them marked), the heap is set aside (None) and the choice scans the
        keys, as a heap would then take every key and be rebuilt at nearly every
        pivot (GROW7, 140 rows: its kept keys with the heap cost about 2.5% of
        its cold solve more than the scan of every row they replaced); it is
        rebuilt from the keys once few rows move again."""
        keys, dirty, heap = self._leave_keys, self._leave_dirty, self._leave_heap
        if not dirty:
            return keys  # (nothing moved since the last call: the heap or its absence stands)
        pos_of, beta = self.pos_of, self.dual_weights
        track = self._leave_track
        total = self._leave_sum
        serial = self._leave_serial
        scan = bool(LEAVE_SCAN_SHARE) and len(dirty) * LEAVE_SCAN_SHARE >= self.m
        push = heap is not None and not scan
        for c in dirty:
            old = keys.pop(c, None)
            if old is not None and track:
                total -= old[0][1]
            if pos_of[c] < 0:
                continue  # left the basis
            delta = self._violation(c)
            if not delta:
                continue
            r = _round(delta.numerator, delta.denominator)
            mag = -delta if delta < 0 else delta
            score = r * r / beta[c]
            serial += 1
            keys[c] = ((score, mag, -c), delta, serial)
            if push:
                heapq.heappush(heap, (-score, -mag, c, serial))
            if track:
                total += mag
        dirty.clear()
        self._leave_sum = total
        self._leave_serial = serial
        if scan:
            self._leave_heap = None
        elif heap is None or len(heap) > 2 * len(keys) + LEAVE_HEAP_SLACK:
            heap = [(-k[0], -k[1], c, n) for c, (k, _, n) in keys.items()]
            heapq.heapify(heap)
            self._leave_heap = heap
        return keys

    def _dual_leaving_scan(self, bland: bool) -> tuple[int, mpq]:
        """:meth:`_dual_leaving` by a scan of every row (the tests' check of the kept keys)."""
        best, best_delta, best_key = -1, ZERO, None
        beta = self.dual_weights
        for p, c in enumerate(self.head):
            delta = self._violation(c)
            if not delta:
                continue
            if bland:
                if best_key is None or c < best_key:
                    best, best_delta, best_key = p, delta, c
                continue
            r = _round(delta.numerator, delta.denominator)
            mag = -delta if delta < 0 else delta
            key = (r * r / beta[c], mag, -c)
            if best_key is None or key > best_key:
                best, best_delta, best_key = p, delta, key
        return best, best_delta

    def _dual_weights_update(self, alpha: dict[int, mpq], alpha_pq: mpq, p: int, q: int, b: int) -> None:
        """Dual steepest-edge weights after ``q`` replaces ``b`` at position ``p``.

        With ``rho_i`` the rows of ``B^-1``, ``G`` the diagonal of the row weights
        ``g_k`` (:meth:`_row_weights`), ``beta_i = rho_i G rho_i^T``, ``alpha = B^-1 a_q``
        and ``tau = B^-1 G rho_p^T``: the new rows are ``rho_p / alpha_p`` and
        ``rho_i - (alpha_i / alpha_p) rho_p``, so (D. Goldfarb and J. K. Reid,
        Math. Programming 12, 1977; J. J. Forrest and D. Goldfarb, Math.
        Programming 57, 1992; both cited from memory)
        ``beta_p' = beta_p / alpha_p^2`` and
        ``beta_i' = beta_i - 2 (alpha_i / alpha_p) tau_i + (alpha_i / alpha_p)^2 beta_p``.
        ``beta_p`` is recomputed exactly from ``rho_p`` at every pivot (the
        btran of the tableau row left it in ``self.last_rho``); the others are
        kept rounded to ``WEIGHT_BITS`` significant bits (:func:`_round`): they
        only choose among the infeasible rows, never decide anything, and the
        rounding keeps them short while the exact values grow as long as ``B^-1``.
        A rounded weight is kept at or above ``1 / (a_c^T G^-1 a_c)``, a true
        lower bound (``rho_i . a_c = 1`` for the column ``c`` basic in row ``i``,
        and Cauchy-Schwarz).  The arithmetic is on integers only.
        ``tau`` is read only in that rounded update, so on a factorisation of long
        numbers it is solved on short fixed-point copies of the factors instead
        (:mod:`shadow`, :meth:`_short_factors`): an error far under the 64 bits
        kept, and the exact ftran's cost gone (GROW15's cold solve 40.6 s against
        55.3 s, the same 1,119 pivots).
        ``alpha`` may be any positive multiple of ``B^-1 a_q`` (a scaled ftran):
        only the ratios ``alpha_i / alpha_p`` are read from it; ``alpha_pq`` is the
        true pivot.
        """
        beta, head = self.dual_weights, self.head
        rho, rd = self.last_rho
        g = self._row_g
        w = [(i, v * g[i]) for i, v in rho.items()]  # (rho: its nonzeros, see btran_unit)
        # beta_p = ||rho_p||^2 exactly, with rho_p = rho / rd
        sq = sum((v * v * g[i] for i, v in rho.items()), ZERO)
        if rd is not None:
            sq = sq / (rd * rd)
        bp = _round(sq.numerator, sq.denominator)
        short = self._short_factors() if TAU_SHORT and WEIGHTS_ON_INTEGERS and _round is _OWN_ROUND else None
        if short is not None:
            # tau = B^-1 G rho_p in fixed point, on the short copies (see shadow.py):
            # its error is far under the 64 bits the weights keep
            big = rd if rd is not None else 1
            tau = short.solve({i: shadow.fixed(v.numerator, v.denominator * big) for i, v in w})
            tscale = None
        else:
            tau, td = self.basis.ftran_scaled(w)  # td B^-1 (rd rho_p)
            tscale = (rd if rd is not None else 1) * (td if td is not None else 1)
        ap = alpha[p]
        apn, apd = ap.numerator, ap.denominator
        if apn < 0:  # (the ratio's denominator must be positive for _round)
            apn, apd = -apn, -apd
        floor = self._beta_floor
        if not WEIGHTS_ON_INTEGERS or _round is not _OWN_ROUND:
            # in fractions (the tests' exact weights replace _round)
            for i, a in alpha.items():
                if i == p or not a:
                    continue
                c = head[i]
                r = _round(a.numerator * apd, a.denominator * apn)
                t = tau.get(i)
                new = beta[c] + r * r * bp
                if t:
                    new -= 2 * r * _round(t.numerator, t.denominator * tscale)
                lo = floor(c)
                beta[c] = lo if new < lo else _round(new.numerator, new.denominator)
        else:
            self._weights_on_integers(alpha, p, apn, apd, tau, tscale, bp)
            if short is not None:  # the pivot's eta: 1 / alpha_p, and alpha_i / alpha_p
                fixed = shadow.fixed
                short.add_eta(p, fixed(alpha_pq.denominator, alpha_pq.numerator),
                              [(i, fixed(a.numerator * apd, a.denominator * apn)) for i, a in alpha.items()
                               if i != p and a])
        sq = sq / (alpha_pq * alpha_pq)
        new = _round(sq.numerator, sq.denominator)
        lo = floor(q)
        beta[q] = lo if new < lo else new

    def _weights_on_integers(self, alpha, p, apn, apd, tau, tscale, bp) -> None:
        """The loop of :meth:`_dual_weights_update` over ``alpha``, on integers.

        The same arithmetic on integers.  Every number below is dyadic, ``M 2^E``
        (a weight, its floor, ``bp`` and each rounded ratio: :func:`_round` gives
        ``m / 2^k``), so the sum ``beta_c + r^2 bp - 2 r t`` is one integer over
        the least of the three powers of two, exactly the value the fractions
        gave from the same exact ``tau``, with no gcd (a short ``tau`` comes as
        integers over ``2^SHIFT``, see :mod:`shadow`, and is used as it is); and
        :func:`_round` of a dyadic ``n / 2^s`` keeps the
        top ``WEIGHT_BITS + 1`` bits of ``n`` (``k = WEIGHT_BITS + 1 - bits n + s``),
        truncated, which is the same for any ``M = n 2^z`` standing for it.  A weight goes back as an
        ``mpq`` of that value.  (D6CUBE: 0.77 s of loop over its 427 pivots with
        the fractions; the kept weights are the same, see tests/test_dual.py.)
        """
        beta, head, floor = self.dual_weights, self.head, self._beta_floor
        rounded = _round_bits
        keep = WEIGHT_BITS + 1
        bpm = bp.numerator
        bpe = 1 - bp.denominator.bit_length()  # bp = bpm 2^bpe
        short_shift = shadow.SHIFT
        for i, a in alpha.items():
            if i == p or not a:
                continue
            c = head[i]
            rm, re = rounded(a.numerator * apd, a.denominator * apn)  # r = rm 2^re
            bc = beta[c]
            # beta_c = bm 2^be, r^2 bp = (rm^2 bpm) 2^(2 re + bpe)
            bm, be = bc.numerator, 1 - bc.denominator.bit_length()
            e2 = 2 * re + bpe
            t = tau.get(i)
            if t is not None:
                # 2 r _round(t.numerator, t.denominator * tscale) = (2 rm tm) 2^(re + te)
                tm, te = (t, -short_shift) if tscale is None else rounded(t.numerator, t.denominator * tscale)
            else:
                tm = 0
            if tm:
                e3 = re + te
                e0 = min(be, e2, e3)
                big = (bm << (be - e0)) + ((rm * rm * bpm) << (e2 - e0)) - ((rm * tm) << (e3 - e0 + 1))
            else:
                e0 = be if be < e2 else e2
                big = (bm << (be - e0)) + ((rm * rm * bpm) << (e2 - e0))
            lo = floor(c)
            lm, le = lo.numerator, 1 - lo.denominator.bit_length()
            if (big < (lm << (le - e0))) if le >= e0 else ((big << (e0 - le)) < lm):
                beta[c] = lo
                continue
            nb = big.bit_length() - keep  # (big > 0 here: lo > 0)
            if nb > 0:
                big >>= nb
                e0 += nb
            beta[c] = mpq(big, 1 << -e0) if e0 < 0 else mpq(big << e0)

    def _short_factors(self, min_bits: int | None = None):
        """The short copy of the factors that follows ``self.basis`` (shadow.py),
        for a reader that wants factors whose entries average ``min_bits``
        (``TAU_SHORT_BITS``) bits or more; else, or once the copy is out of step
        with the basis, None (the exact solve).  Decided once after each
        factorisation, at the least length any reader wants (the weights' rule
        or the steered pricing's), so the order of the readers' first calls
        does not matter."""
        basis = self.basis
        if self._short_of is not basis:
            self._short_of = basis
            self._short = shadow.ShortFactors.of(basis, min(TAU_SHORT_BITS, steer_mod.STEER_BITS))
        short = self._short
        if short is None:
            return None
        if short.updates != basis.updates:
            self._short = None
            return None
        return short if short.long_enough(TAU_SHORT_BITS if min_bits is None else min_bits) else None

    def _row_weights(self) -> list:
        """``g_k = 4^e_k``: the steepest-edge lengths are those of the model with
        row k divided by ``2^e_k``, ``e_k`` the middle of the binary exponents of
        the row's largest and smallest entries (so its entries straddle 1).

        A row's scale changes only which row leaves, never a value: the dual
        simplex on the scaled model takes the same pivots (up to the weights' rounding)
        (the rows of ``(R B)^-1 = B^-1 R^-1`` have lengths ``rho_i G rho_i^T``
        with ``G = R^-2``; column scales cancel between ``delta^2`` and ``beta``).
        Measured with the weights of the unscaled rows: SCSD8 996 dual pivots
        against 765, GROW7 402 against 319 (TUFF 265 against 364).  All 1 when
        ``ROW_SCALED`` is off.
        """
        m = self.m
        if not ROW_SCALED:
            return [ONE] * m
        hi = [None] * m
        lo = [None] * m
        for j in range(self.f.n):
            for i, a in self.cols[j]:
                if not a:
                    continue
                e = abs(a.numerator).bit_length() - a.denominator.bit_length()
                if hi[i] is None or e > hi[i]:
                    hi[i] = e
                if lo[i] is None or e < lo[i]:
                    lo[i] = e
        out = []
        for i in range(m):
            if hi[i] is None:
                out.append(ONE)
                continue
            k = (hi[i] + lo[i]) // 2  # row i scaled by 2^-k
            out.append(mpq(1 << (2 * k)) if k >= 0 else mpq(1, 1 << (-2 * k)))
        return out

    def _beta_floor(self, c: int) -> mpq:
        """``1 / (a_c^T G^-1 a_c)``: no row of an inverse where column c is basic is shorter."""
        got = self._beta_floors.get(c)
        if got is None:
            sq = sum((a * a / self._row_g[i] for i, a in self.cols[c]), ZERO)
            got = self._beta_floors[c] = _round(sq.denominator, sq.numerator)
        return got

    def _dual_entering(self, row: dict, d: list, s: int, bland: bool, slope=None,
                       near=None, arrays=None) -> tuple[int, list[int]]:
        """The dual ratio test over the tableau row ``row`` (``S alpha_pj`` by column,
        ``S > 0`` the row's scale): ``(entering column, columns to flip)``, or
        ``(-1, flips)`` when no column can enter (the model is infeasible once the
        flips are made).

        Every ratio ``d_j / (s S alpha_pj)`` is ``1 / S`` of the true one, so the
        order of the ratios and their ties are the same.  Bound flipping (long
        steps; R. Fourer, 1994, and I. Maros, "Computational techniques of the
        simplex method", 2003, cited from memory), given ``slope = S |delta|``:
        the dual objective rises at the rate ``|delta|`` per unit of the dual step
        ``t``; passing the ratio of a candidate with two finite bounds, instead of
        letting it enter, flips it to its other bound, which keeps its reduced
        cost's sign right (the sign changes with the bound) and lowers the rate by
        ``|alpha_pj| (u_j - l_j)``.  So the candidates are taken in the order of
        their ratios, a whole group of equal ratios at a time, and a group is
        passed while the rate stays positive after it and every member has two
        bounds; the entering column is the best of the first group not passed
        (ties to the largest ``|alpha_pj|``, then the lowest index).  The rate
        left is ``|delta'|`` after the flips, so ``x_b`` is still outside the same
        bound and the pivot that follows is the ordinary one.  Without
        ``slope`` (Bland's choice) nothing is flipped.
        """
        lower, upper = self.lower, self.upper
        flipping = slope is not None and self._boxed
        if not flipping:
            if arrays is not None:
                # whole reduced costs: only the candidates that can be chosen go on,
                # with their d_j
                row, d = d.least(arrays, s, self.state)
            return self._dual_entering_plain(row, d, s, bland, near=near), []
        # The groups are taken off in the order of their ratios, and only the first
        # few are passed (a handful of flips against hundreds of candidates on a
        # network), so a ratio is divided out only when it could be next: as in
        # _dual_entering_plain, ``|t_j| > 2^(e_j - 2)`` from bit lengths alone, and a
        # ratio ``t = n / d`` is below ``2^(bits n - bits d + 1)``; while the least
        # such bound of the candidates not yet divided lies below that of the
        # smallest ratio in hand, the smallest of the divided is not yet known to be
        # the smallest of all, and the next candidate by bound is divided.  Once it
        # is, no candidate left can equal it either, so its group is whole.  (When
        # no candidate has two bounds, the first group cannot be passed and its
        # best enters: the least of all ratios, as without flips.)
        ready: list = []  # (|t_j|, -|a_j|, j)
        if arrays is not None:
            # whole reduced costs: the same candidates by arrays, on a heap a batch
            # at a time, each d_j read when divided (None till then)
            pending = d.collect(arrays, s, self.state, ready)
        else:
            pending: list = []  # (e_j - 2, j, d_j, |a_j|): not divided yet
            self._dual_entering_plain(row, d, s, bland, collect=(pending, ready), near=near)
        if not pending and not ready:
            return -1, []
        if bland:  # nothing is flipped: the least ratio, ties to the lowest index
            if arrays is not None:
                pending = [(k, j, d[j], a) for k, j, _, a in pending.entries()]
            cands = ready + [((-t if t < 0 else t), -a, j) for t, j, a in
                             ((dj / a if near is None else near(dj / a), j, a) for _, j, dj, a in pending)]
            t0 = min(c[0] for c in cands)
            return min(j for t, _, j in cands if t == t0), []
        if arrays is None:
            heapq.heapify(pending)
        heapq.heapify(ready)

        def settle() -> None:
            while pending:
                if ready:
                    t = ready[0][0]
                    if not t:
                        return  # 0 is the least any ratio can be, and those left are not 0
                    if pending[0][0] >= t.numerator.bit_length() - t.denominator.bit_length() + 1:
                        return
                _, j, dj, a = heapq.heappop(pending)
                if j < 0:  # (the sentinel of a BatchedPending: the next batch)
                    pending.refill()
                    continue
                if dj is None:
                    dj = d[j]
                if near is None:
                    t = dj / a
                else:  # (the ratio from the whole |a_j|, both read rounded)
                    t, a = near(dj / a), near(a)
                heapq.heappush(ready, (-t if t < 0 else t, -a, j))

        flips: list[int] = []
        # (from short values, near is set: a rate left within 2^-(RATIO_BITS - 8)
        # of the first counts as none left, since an exact zero comes out as the
        # error, here the rounding of each |a_j| to RATIO_BITS bits, summed)
        slack = ZERO if near is None else slope / (1 << (steer_mod.RATIO_BITS - 8))
        while True:
            settle()
            if not ready:
                return -1, flips  # every candidate passed: the rate never falls to zero
            first = heapq.heappop(ready)
            group = [first]
            while ready and ready[0][0] == first[0]:
                group.append(heapq.heappop(ready))
            drop = ZERO
            for _, na, j in group:
                lo, hi = lower[j], upper[j]
                if lo is None or hi is None:
                    return first[2], flips  # cannot be passed: the best of the group enters
                drop += -na * (hi - lo)
            if slope - drop <= slack:
                return first[2], flips
            slope -= drop
            flips.extend(j for _, _, j in group)

    def _dual_entering_plain(self, row: dict, d: list, s: int, bland: bool, collect=None, near=None) -> int:
        """The smallest ratio ``d_j / a_j`` (ties as in :meth:`_dual_entering`; under
        Bland's choice to the lowest index), with nothing to flip; -1 if none.

        The candidates are the columns the dual ratio test may choose (``a_j = s S
        alpha_pj``): at a lower bound with ``a_j > 0``, at an upper bound with
        ``a_j < 0``, or free (resting at zero with ``d_j = 0``) with ``a_j != 0``;
        fixed columns (``d_j`` None) never.  ``d_j`` has the sign of ``a_j`` or is
        0, so the ratio is ``|d_j| / |a_j|``.  With ``collect`` (two lists ``pending``
        and ``ready``), each candidate is appended instead, as ``(e_j - 2, j, d_j,
        |a_j|)`` to ``pending`` (``e_j`` as below) or, when ``d_j = 0``, as ``(0,
        -|a_j|, j)`` to ``ready``, and -1 returned.

        A positive ``n / d`` lies strictly between ``2^(bits n - bits d - 1)`` and
        ``2^(bits n - bits d + 1)``, so with ``e`` the difference of those bit
        lengths for ``d_j`` less that for ``|a_j|``, ``|t_j|`` lies strictly between
        ``2^(e - 2)`` and ``2^(e + 2)``: a candidate whose ``e`` is 4 or more above
        the best's can neither be smaller nor tie, and is passed over without its
        division (the same rule as the primal ratio test, ``Simplex._ratio``).
        """
        if collect is None and near is None and getattr(row, "cols", None) is not None \
                and len(row) >= ARRAY_RATIO_MIN:
            row = self._ratio_candidates(row, d, s)
        best, best_t, best_e, best_a = -1, None, 0, None
        pending, ready = collect if collect is not None else (None, None)
        state = self.state
        # (the filter in line: this loop meets every entry of the row, about 6,000
        # a pivot on D6CUBE, and a generator's yields were a sixth of its time)
        for j, v in row.items():
            dj = d[j]
            if dj is None or not v:
                continue  # fixed (cannot move)
            a = v if s > 0 else -v
            st = state[j]
            if st == AT_LOWER:
                if a <= 0:
                    continue
            elif st == AT_UPPER:
                if a >= 0:
                    continue
            if a < 0:
                a = -a
            if dj:
                n = dj.numerator
                e = (n.bit_length() - dj.denominator.bit_length()  # (bit_length ignores the sign)
                     - (a.bit_length() - 1 if type(a) is int else
                        a.numerator.bit_length() - a.denominator.bit_length()))
                if pending is not None:
                    pending.append((e - 2, j, dj, a))
                    continue
                if best_t is not None and (not best_t or e >= best_e + 4):
                    continue
            elif pending is not None:
                ready.append((ZERO, -a if near is None else -near(a), j))
                continue
            else:
                e = 0
            t = dj / a  # (a = |a_j|, and d_j has the sign of a_j or is 0)
            if near is not None:  # (the ratio from the whole |a_j|, both read rounded)
                t, a = near(t), near(a)
            if t < 0:
                t = -t
            if best_t is None or t < best_t:
                best, best_t, best_e, best_a = j, t, e, a
            elif t == best_t:
                if bland:
                    if j < best:
                        best, best_e, best_a = j, e, a
                elif a > best_a or (a == best_a and j < best):
                    best, best_e, best_a = j, e, a
        return best

    def _ratio_candidates(self, row, d: list, s: int) -> dict:
        """The entries of a numpy-made row (:class:`.rows.NumpyRow`) that the plain
        ratio test could choose, as a dictionary it then runs over: the same
        choice as over the whole row, with the candidates' signs tested and their
        bit lengths compared in arrays instead of one by one.

        The filter is the bit-length rule of :meth:`_dual_entering_plain`, taken
        over all candidates at once: with ``e_j`` as there (for ``|a_j| = N_j /
        E_j``, ``bits N_j - bits E_j``, or ``bits N_j - 1`` when ``E_j = 1``),
        ``|t_j|`` lies strictly between ``2^(e_j - 2)`` and ``2^(e_j + 2)``, so with
        ``e*`` the least ``e_j``, a candidate with ``e_j >= e* + 4`` has a ratio
        above that of the candidate at ``e*``, and can neither be the least nor
        tie with it.  A candidate with ``d_j = 0`` has the ratio 0: then only those
        can be chosen.  What is left goes to the plain test, whose ties (to the
        largest ``|a_j|``, then the lowest index; under Bland's choice the lowest)
        do not depend on which other entries it meets.
        """
        import numpy as np

        state = np.frombuffer(bytes(self.state), dtype=np.int8)[row.cols]  # (states 0..3)
        sums = row.sums
        up = sums > 0 if s > 0 else sums < 0  # a_j > 0 (s S alpha_pj, S > 0)
        ok = (state == AT_ZERO) | np.where(up, state == AT_LOWER, state == AT_UPPER)
        at = np.flatnonzero(ok)
        cols = row.cols[at].tolist()
        bits_a = entry_bits(row, at)
        # bits n - bits d of each d_j; a fixed column (d_j None) far above every
        # other, a zero d_j (ratio 0) marked far below
        bits_d = [x.numerator.bit_length() - x.denominator.bit_length() if x else
                  (_FAR if x is None else -_FAR) for x in map(d.__getitem__, cols)]
        bits_d = np.array(bits_d, dtype=np.int64)
        pick = np.flatnonzero(bits_d == -_FAR)  # ratio 0: only these can be chosen
        if not len(pick):
            e = bits_d - bits_a
            least = int(e.min()) if len(e) else _FAR
            if least >= _FAR // 2:
                return {}  # no candidate (every one fixed)
            pick = np.flatnonzero(e < least + 4)
        return {j: row[j] for j in map(cols.__getitem__, pick.tolist())}

    def _dual_phase(self):
        """Run dual pivots until the basis is primal feasible.

        Returns an ``Outcome``: ``optimal`` (the basis is now primal feasible),
        ``infeasible`` (with Farkas row multipliers), a limit, or ``restart``
        (the pivot budget ran out: start again with the primal method).
        """
        from .simplex import GUARD_RUN_FACTOR, Outcome

        cost, m = self.dual_cost, self.m
        d = self._reduced_costs(cost, [ZERO] * m)  # y = 0 at the slack basis
        if whole.WHOLE_COSTS and not self.tableau and len(self.cols) >= whole.MIN_COLUMNS:
            # whole numbers over one denominator where they are short (networks:
            # see whole.py); a list of mpq again as soon as they would not fit
            d = whole.WholeCosts.of(d) or d
        budget = DUAL_LIMIT_FACTOR * (m + len(self.cols))
        guard_limit = GUARD_RUN_FACTOR * (m + 1)
        run_degenerate = 0
        bland = False
        pivots = 0
        self._row_g = self._row_weights()
        self.dual_weights = [ONE] * len(self.cols)  # every row of B^-1 = -I has length 1
        for i in range(m):
            self.dual_weights[self.f.n + i] = self._row_g[i]
        self._beta_floors: dict[int, mpq] = {}
        self._short_of = self._short = None  # see _short_factors
        self._leave_keys: dict = {}  # see _leaving_refresh
        self._leave_dirty: set[int] = set(self.head)
        self._leave_heap: list = []
        self._leave_serial = 0
        self._leave_sum = ZERO
        # the sum of |delta| is kept only where it is read: in the log's events and
        # the tests' checks (on long numbers each term costs a gcd: GROW7's cold
        # solve took 3-4% longer keeping it)
        self._leave_track = bool(self.listener) or self.check_updates
        # any column with two finite bounds that differ (only those can be flipped)
        self._boxed = any(lo is not None and hi is not None and lo != hi
                          for lo, hi in zip(self.lower, self.upper))
        # steered: while the factors are long, the reduced costs kept short (sd)
        # and the ratio test run on them and a short row (see steer.py and the
        # checks below); never under Bland's choice or the tableau's display
        steer = steer_mod.STEER_SHORT and steer_mod.STEER_DUAL and not self.tableau
        sd: list | None = None
        unit = 1 << shadow.SHIFT  # the short row's scale
        while True:
            if self.check_updates:
                if sd is not None:
                    self._steer_check(cost, sd)
                else:
                    y = self._duals(cost)
                    assert d == self._reduced_costs(cost, y), "dual phase: reduced-cost update drifted"
            if self.should_stop is not None and self.should_stop():
                return Outcome("interrupted", self._infeasibility_sum(), self._duals(cost))
            if self.iteration_limit is not None and self.iterations >= self.iteration_limit:
                return Outcome("iteration_limit", self._infeasibility_sum(), self._duals(cost))
            if self.time_limit is not None and self.elapsed() > self.time_limit:
                return Outcome("time_limit", self._infeasibility_sum(), self._duals(cost))
            p, delta = self._dual_leaving(bland)
            if self.check_updates:
                assert (p, delta) == self._dual_leaving_scan(bland), "dual phase: kept leaving keys drifted"
                assert self._leave_sum == self._infeasibility_sum(), "dual phase: kept infeasibility drifted"
            if p < 0:
                return Outcome("optimal", ZERO, None)
            if pivots >= budget:
                return Outcome("restart")
            s = -1 if delta < 0 else 1
            if steer and sd is None and not bland and self._steer_ready():
                sd = self._steer_enter(d, devex=False)  # the factors have grown long
            if sd is not None:
                rho_s, sums = self._steer_sums(p)
                self.last_rho = (rho_s, 1 << shadow.SHIFT)  # (for the weights: rho = rho_s / 2^SHIFT)
                row, din = self._steer_dual_row(sums, sd)
                scale = unit
            else:
                row, scale = self._tableau_row(p, arrays=type(d) is whole.WholeCosts)
                din = d
            arrays = None
            if type(din) is whole.WholeCosts:
                arrays = whole.row_arrays(row)
                if arrays is None:  # (an entry not whole in 64 bits)
                    din = d = d.tolist()
            slope = None
            if not bland and BOUND_FLIPS:
                slope = -delta if s < 0 else delta
                if scale is not None:
                    slope = slope * scale
            q, flips = self._dual_entering(row, din, s, bland, slope,
                                           near=None if sd is None else steer_mod.near_ratio, arrays=arrays)
            if sd is not None and q < 0:
                # no column enters by the short row: the proof of infeasibility is
                # made on exact values (the pivot again, unsteered)
                sd, steer = None, False
                d = self._unsteered(cost)
                continue
            if flips:
                self._flip(flips)
                was, delta = delta, self._violation(self.head[p])  # same sign, closer to its bound
                if sd is not None and _overshot(was, delta):
                    # the short row passed too many (exactly, x_b came back within
                    # its bound): the flips undone, the pivot again unsteered
                    self._flip(flips)
                    self.flips -= 2 * len(flips)
                    sd, steer = None, False
                    d = self._unsteered(cost)
                    continue
            if q < 0:
                # no column can bring x_b back: s rho is a Farkas certificate
                rho = self.basis.btran({p: ONE})
                y = [-r for r in rho] if s < 0 else list(rho)
                return Outcome("infeasible", self._infeasibility_sum(), y)
            b = self.head[p]
            alpha, ad = self.basis.ftran_scaled(self.cols[q])
            if sd is not None and p not in alpha:  # (its exact pivot is 0: see below)
                alpha[p] = ZERO
            alpha_pq = alpha[p] if ad is None else alpha[p] / ad
            if sd is not None:
                # the entering column's exact pivot and reduced cost, from its exact
                # column: it must be a candidate of the exact ratio test (its pivot
                # of the sign its bound needs) and keep the dual step nonnegative,
                # else the short values are given up and the pivot made again
                dq = self._steer_dq(cost, q, alpha, ad)
                if _refused(self.state[q], s, alpha_pq, dq):
                    if flips:
                        self._flip(flips)
                        self.flips -= 2 * len(flips)
                    sd, steer = None, False
                    d = self._unsteered(cost)
                    continue
            else:
                if self.check_updates:
                    assert alpha_pq == (mpq(row[q]) if scale is None else mpq(row[q]) / scale), \
                        "dual phase: pivot mismatch"
                dq = d[q]
            t_dual = dq / alpha_pq * s  # = d_q / a_q >= 0 (see the module's notes)
            theta = delta / alpha_pq  # the entering column's move: puts x_b on its bound
            tab = None
            if self.tableau:
                tab = self._tableau(d, self.f.sign)  # (the model's objective, in its sense)
            # --- apply the step (x_b lands on its bound exactly) -------------------
            self.iterations += 1
            self.pivots[1] += 1
            pivots += 1
            self.x[q] += theta
            per = theta if ad is None else theta / ad
            head, x = self.head, self.x
            dirty = self._leave_dirty
            for r, a in alpha.items():
                c = head[r]
                x[c] -= per * a
                dirty.add(c)  # (b among them: its weight goes, its value lands on the bound)
            dirty.add(q)
            bound = "lower" if s < 0 else "upper"
            x[b] = self.lower[b] if s < 0 else self.upper[b]
            if sd is not None:
                self._steer_update(sd, q, b, p, alpha_pq, dq, sums=sums)
            elif type(d) is whole.WholeCosts and self.scores is None and d.update(
                    arrays, scale, q, b, dq / alpha_pq, self.lower[b] is not None and self.lower[b] == self.upper[b]):
                pass  # (the same values as below, in arrays)
            else:
                if type(d) is whole.WholeCosts:
                    d = d.tolist()  # (a bound would not hold: mpq from here on)
                self._update_reduced_costs(d, q, b, p, alpha_pq, row=(row, scale))
            self._dual_weights_update(alpha, alpha_pq, p, q, b)
            self.state[b] = AT_LOWER if s < 0 else AT_UPPER
            self.state[q] = BASIC
            self.pos_of[b] = -1
            self.pos_of[q] = p
            head[p] = q
            self.basis.replace(p, alpha, self.cols[q], ad)
            if self._refactor_due():
                self._reinvert()
            rule = "dual bland (last resort)" if bland else "dual"
            if t_dual:
                run_degenerate = 0
                bland = False
            else:
                run_degenerate += 1
                if run_degenerate > guard_limit:
                    bland = True
                    if sd is not None:  # Bland's choice reads exact values
                        sd, steer = None, False
                        d = self._unsteered(cost)
            if self.listener:
                self._leaving_refresh()  # (its sum of |delta| is the infeasibility shown)
                self.listener(Pivot(
                    iteration=self.iterations,
                    phase=1,
                    entering=self.ref(q),
                    reduced_cost=frac(self.f.sign * dq),
                    direction=1 if theta > 0 else -1,
                    leaving=self.ref(b),
                    leaving_bound=bound,
                    ratio=frac(t_dual),
                    step=frac(abs(theta)),
                    objective=frac(self._leave_sum),
                    degenerate=not t_dual,
                    rule=rule,
                    tableau=tab,
                    flipped=tuple((self.ref(j), "upper" if self.state[j] == AT_UPPER else "lower") for j in flips),
                ))

    def _flip(self, cols: list[int]) -> None:
        """Move each of ``cols`` (nonbasic, two finite bounds) to its other bound,
        and the basic values with them: ``x_B -= B^-1 (sum_j a_j dx_j)``, one ftran."""
        x, state, lower, upper = self.x, self.state, self.lower, self.upper
        moved: dict[int, mpq] = {}
        for j in cols:
            if state[j] == AT_LOWER:
                dx = upper[j] - lower[j]
                x[j], state[j] = upper[j], AT_UPPER
            else:
                dx = lower[j] - upper[j]
                x[j], state[j] = lower[j], AT_LOWER
            for i, a in self.cols[j]:
                moved[i] = moved.get(i, ZERO) + a * dx
        self.flips += len(cols)
        col = [(i, v) for i, v in sorted(moved.items()) if v]
        if not col:
            return
        w, wd = self.basis.ftran_scaled(col)
        head = self.head
        dirty = self._leave_dirty  # (the dual phase's kept keys: these values moved)
        for r, v in w.items():
            x[head[r]] -= v if wd is None else v / wd
            dirty.add(head[r])

    def _start_event(self, phase: int):
        at_up = tuple(self.ref(j) for j in range(len(self.cols)) if self.state[j] == AT_UPPER)
        return Start((), tuple(self.ref(c) for c in self.head), at_up, phase, frac(self._infeasibility_sum()))
