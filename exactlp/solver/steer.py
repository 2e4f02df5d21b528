"""The pricing steered by short copies, on bases of long numbers: the primal
phases' choice of the entering column and the dual phase's ratio test.

In the primal simplex the reduced costs ``d_j`` do two things: they choose
the entering column (the devex rule), and at the end they prove the basis
optimal.  Only the proof needs them exact.  Kept exact, each pivot pays for
``rho_p = e_p^T B^-1`` by an exact btran and for the tableau row ``rho_p A``,
and on a basis of long numbers that was two fifths of STAIR's cold solve
(its entries run to thousands of bits near the optimum).

So while the factors are long (:mod:`.shadow`: a short copy of them exists),
the pivot loop keeps the reduced costs in fixed point instead, each the
integer ``floor(d_j 2^SHIFT)``, and updates them from ``rho_p`` solved on the
short copies and the integer rows of ``A``: short-integer products and
shifts, no gcd, no floating point, the same result on every machine.  What
the pivot does stays exact:

* the entering column's own reduced cost is recomputed exactly from its
  exact column ``alpha = B^-1 a_q`` (``d_q = c_q - c_B^T alpha``, a sum over
  the basic costs); when its sign does not make the column improving (the
  short value was wrong), the loop goes back to exact reduced costs;
* the ratio test, the step, the basic values, the objective and the update
  of the factors are the exact ones, so every basis on the path is exactly
  primal feasible, and the log records exact values;
* when the short values find no improving column, the reduced costs are
  computed exactly afresh (one btran, as at the start of a phase) and priced
  again: the phase ends only on an exact proof, and if a column does improve
  (its ``|d_j|`` under the short values' dead zone), the phase goes on with
  exact reduced costs to its end.

A degenerate run long enough to call Bland's rule goes back to exact
reduced costs too, since Bland's choice reads the signs of values that may
be zero.  The only thing the short values decide is which improving column
enters, and they are right to about 2^-140 of the values.  They are read on
a grid of ``2^-128`` (``SNAP``), so that an exact whole or dyadic value reads
as itself and its devex score and ties are the exact rule's; apart from ties
of values off that grid, which the last bits of the error may break the
other way, the path is the exact rule's (STAIR's and FORPLAN's are).

The dual phase (phase 1 by the dual simplex, :mod:`.dual`) keeps its reduced
costs short in the same way, and its ratio test, which chooses the entering
column and the bound flips, reads them with the short row ``rho_p A``
(:meth:`SteeredPricing._steer_dual_row`).  There the row's signs decide which
columns are candidates, so the checks are made on the exact column of the one
chosen: its exact pivot ``alpha_pq`` must have the sign its bound needs and
its exact ``d_q`` must keep the dual step nonnegative; the flips must leave
the leaving row's value on the same side of its bound, exactly; and when no
column enters by the short row, the exact row is asked (the infeasibility is
proved on exact values).  If any check fails, the flips are undone, the
short values are given up for the rest of the phase, and the pivot is made
again exactly.  The exact ratio test groups equal ratios and breaks ties by
``|alpha_pj|``; from short values each ratio and each ``|alpha_pj|`` is read
rounded to ``RATIO_BITS`` bits (:func:`near_ratio`), an exact zero of the
row (a cancellation, which comes out as the error of the solve) is read
under ``2^-ROW_ZONE`` of the row's largest entry, and a rate of the dual
objective left within ``2^-56`` of its start counts as none: with these,
GROW7's and GROW15's paths are the exact ones, pivot for pivot and flip for
flip.
"""

from __future__ import annotations

from gmpy2 import mpq

from . import shadow
from .pricing import _log16, _log16_of
from .rows import _row_sums

BASIC, AT_LOWER, AT_UPPER, AT_ZERO = 0, 1, 2, 3

#: the primal loop keeps short reduced costs where the factors are long
STEER_SHORT = True
#: ... and so does the dual phase (phase 1 by the dual simplex)
STEER_DUAL = True
#: ... those whose entries average this many bits or more (the short copy's
#: rule, :meth:`ShortFactors.of`); tests set 0 to take every basis that way
STEER_BITS = 32
#: the short values are read (by the scores, their ties and the test for zero)
#: rounded to the nearest multiple of 2^-(SHIFT - SNAP): an exact value on that
#: grid, as the whole and dyadic reduced costs of many models are, then reads as
#: itself, so its devex score and its ties are the exact rule's.  The grid is
#: 2^-128: the error of the short values grows with the numbers of the basis
#: (on GROW22 from 2^-266 to 2^-216 of a unit over its first 1,070 dual pivots,
#: its least nonzero reduced cost then 2^-45)
SNAP = shadow.SHIFT - 128
#: a short reduced cost that rounds to zero so is not improving, nor a ratio's
#: numerator (under 2^-129)
DEAD_ZONE = 1 << (SNAP - 1)
_HALF = 1 << (SNAP - 1)
#: the dual ratio test's short row reads an entry under 2^-ROW_ZONE of its
#: largest as zero (see _steer_dual_row)
ROW_ZONE = 96
#: the snapped values' unit, 2^(SHIFT - SNAP), for their logarithms
_ONE = 1 << (shadow.SHIFT - SNAP)


def _snap(v: int) -> int:
    """``|v|`` rounded to the nearest multiple of ``2^SNAP``, in those units."""
    return ((-v if v < 0 else v) + _HALF) >> SNAP


#: the dual ratio test on short values compares ratios rounded to this many
#: significant bits (see near_ratio)
RATIO_BITS = 64


def near_ratio(t: mpq) -> mpq:
    """``t`` with its magnitude rounded to ``RATIO_BITS`` significant bits.

    The dual ratio test groups equal ratios (bound flipping passes a whole
    group or none); from short values two ratios that are equal exactly differ
    by the error (about 2^-140 of them), so a group would split and its flips
    change.  Rounded to 64 bits they are equal again, unless a midpoint of
    the grid falls between them."""
    n, d = t.numerator, t.denominator
    if not n:
        return t
    neg = n < 0
    if neg:
        n = -n
    # e = floor(log2 t), from the value (the bit lengths alone leave it one
    # uncertain, and the rounding must not depend on the fraction's form)
    e = n.bit_length() - d.bit_length()
    if (n < d << e) if e >= 0 else (n << -e < d):
        e -= 1
    k = RATIO_BITS - 1 - e
    # to the nearest (a value on the grid, as many exact ratios are, then reads
    # as itself from either side of its error)
    m = mpq(((n << (k + 1)) // d + 1) >> 1, 1 << k) if k >= 0 else mpq((((n << 1) // (d << -k)) + 1) >> 1 << -k)
    return -m if neg else m


def _score(v: int, w: int) -> int:
    """The devex score ``2 (16 log2 |d_j|) - 16 log2 w_j`` of a short value, snapped (0 if that is 0)."""
    a = _snap(v)
    return 2 * _log16_of(a, _ONE) - w if a else 0


class SteeredPricing:
    """A mix-in of :class:`.simplex.Simplex`: the short reduced costs."""

    def _steer_ready(self) -> bool:
        """True when the factors have a short copy in step (see ``_short_factors``);
        False before the basis is first factored (a refined start factors it only
        when a pivot needs it)."""
        return self._basis is not None and self._short_factors(STEER_BITS) is not None

    def _steer_enter(self, d: list, devex: bool = True) -> list:
        """Exact reduced costs to short ones (with their devex scores for the
        primal rule)."""
        k = shadow.SHIFT
        sd = [None if dj is None else (dj.numerator << k) // dj.denominator for dj in d]
        if devex:
            self._steer_rescore(sd)
        return sd

    def _unsteered(self, cost: list) -> list:
        """The short values given up: the exact reduced costs afresh (one btran)."""
        return self._reduced_costs(cost, self._duals(cost))

    def _steer_check(self, cost: list, sd: list) -> None:
        """(Tests, ``check_updates``.) The short values against the exact reduced
        costs recomputed: the same columns, each within ``2^-(SHIFT - SNAP + 32)``
        (``2^-160``) times ``1 + |d_j|``.

        What the reading needs is an error under half the grid, ``2^-129``, so
        that a value on the grid reads as itself: the check leaves 31 bits of
        margin, and a wrong update (an error the size of ``d_j`` itself) is far
        outside it.  (It was ``2^-240`` until a forced differential run met a
        model with coefficients of ``10^5`` and ``10^-5``, whose error reached
        ``2^-239.6`` on a reduced cost of 0; GROW22's reaches ``2^-216``, see
        ``SNAP``.)"""
        exact = self._reduced_costs(cost, self._duals(cost))
        k = shadow.SHIFT
        tol = 1 << (SNAP - 32)
        assert all((v is None) == (e is None) for v, e in zip(sd, exact)) and all(
            abs(v - (e.numerator << k) // e.denominator) <= tol * (1 + abs(e))
            for v, e in zip(sd, exact) if v is not None), "steered reduced costs drifted"

    def _steer_rescore(self, sd: list) -> None:
        w = self.weights
        self.steer_scores = [_score(v, w[j]) if v else 0 for j, v in enumerate(sd)]

    def _steer_price(self, sd: list) -> int:
        """The improving column of the best devex score, ties to the larger
        ``|d_j|``, then the lower index (as :meth:`Simplex._price`); -1 if none.
        A value within ``DEAD_ZONE`` of zero is not improving."""
        state, scores = self.state, self.steer_scores
        best, best_score, best_abs = -1, None, 0
        zone = DEAD_ZONE
        for j, v in enumerate(sd):
            if v is None:
                continue
            if v <= -zone:
                if state[j] == AT_UPPER:
                    continue
            elif v >= zone:
                if state[j] == AT_LOWER:
                    continue
            else:
                continue
            score = scores[j]
            if best_score is not None and score < best_score:
                continue
            a = _snap(v)
            if best_score is None or score > best_score or (score == best_score and a > best_abs):
                best, best_score, best_abs = j, score, a
        return best

    def _steer_dq(self, cost: list, q: int, alpha: dict, ad) -> mpq:
        """The exact ``d_q = c_q - c_B^T B^-1 a_q`` from ``alpha = B^-1 a_q`` (or
        ``(D alpha, D)`` with ``ad = D``)."""
        head = self.head
        s = mpq(0)
        for p, a in alpha.items():
            c = cost[head[p]]
            if c:
                s += c * a
        if ad is not None and s:
            s = s / ad
        return cost[q] - s

    def _steer_rho(self, p: int) -> dict[int, int]:
        """``rho_p = e_p^T B^-1`` in fixed point, by row: on the short copy when
        it is in step, else exactly and then cut to fixed point."""
        short = self._short_factors(STEER_BITS)
        if short is not None:
            return short.solve_t({p: 1 << shadow.SHIFT})
        rho, d = self.basis.btran_unit(p)
        k = shadow.SHIFT
        if d is None:
            return {i: (r.numerator << k) // r.denominator for i, r in rho.items()}
        return {i: (r.numerator << k) // (r.denominator * d) for i, r in rho.items()}

    def _steer_sums(self, p: int) -> tuple[dict[int, int], dict[int, int]]:
        """``(rho, v)``: the short ``rho_p`` (:meth:`_steer_rho`) and, by column,
        ``v_j = e_j alpha_pj 2^SHIFT`` summed from it on the integer rows of
        ``A`` (``e_j a_j`` integers; floored for a column kept in fractions)."""
        rho = self._steer_rho(p)
        irows, escale, fcols = self._int_rows()
        acc = _row_sums(irows, rho.items())
        for j, col in fcols:  # columns kept in fractions (a long common denominator)
            s = 0
            for i, a in col:
                r = rho.get(i)
                if r:
                    s += r * a
            if s:
                acc[j] = s.numerator // s.denominator if type(s) is not int else s
        return rho, acc

    def _steer_update(self, sd: list, q: int, b: int, p: int, alpha_pq: mpq, dq: mpq,
                      sums: dict[int, int] | None = None) -> None:
        """:meth:`Simplex._update_reduced_costs` on the short values: ``d_j -=
        theta alpha_pj`` with ``theta = d_q / alpha_pq`` exact and cut to fixed
        point, ``alpha_pj`` from :meth:`_steer_sums` (the step is ``theta v_j /
        (e_j 2^SHIFT)``), and the primal devex weights from the same ``v_j``
        (not with ``sums``, the dual phase's, which has its own weights)."""
        k = shadow.SHIFT
        theta = dq / alpha_pq
        th = (theta.numerator << k) // theta.denominator
        devex = sums is None
        acc = self._steer_sums(p)[1] if devex else sums
        escale = self._int_rows()[1]
        sd[q] = None
        w, scores, state = self.weights, self.steer_scores, self.state
        wq = w[q] - 2 * _log16(alpha_pq) if devex else 0
        for j, v in acc.items():
            dj = sd[j]
            if dj is None or not v or state[j] == BASIC:
                continue
            e = escale[j]
            dj = sd[j] = dj - (th * v) // (e << k)
            if not devex:
                continue
            a = _snap(v)
            if a:
                wj = wq + 2 * _log16_of(a, e * _ONE)
                if wj > w[j]:
                    w[j] = wj
            scores[j] = _score(dj, w[j])
        lo, hi = self.lower[b], self.upper[b]
        if lo is not None and hi is not None and lo == hi:
            sd[b] = None
        else:
            sd[b] = -th
            if devex:
                w[b] = max(wq, 0)
                scores[b] = 2 * _log16(theta) - w[b] if theta else 0

    def _steer_dual_row(self, sums: dict[int, int], sd: list) -> tuple[dict, dict]:
        """The dual ratio test's inputs from short values: ``(row, d)`` by
        column, ``row_j = alpha_pj 2^SHIFT`` and ``d_j 2^SHIFT``, the row
        without the basic columns and those it reads as zero (see ``floor``),
        ``d_j`` None for a fixed column and 0 within the dead zone.  The
        ratio test reads each ratio and each ``|row_j|`` rounded to
        ``RATIO_BITS`` bits (:func:`near_ratio`).  The row's scale is
        ``2^SHIFT``.  (Not snapped to the grid of ``2^-(SHIFT - SNAP)``: a
        ratio of two small values would lose its own bits to it.)"""
        escale, state = self._int_rows()[1], self.state
        row: dict = {}
        dd: dict = {}
        zone = DEAD_ZONE
        # an exact zero of the row (a cancellation) comes out as the error of
        # the short solve, which grows with the numbers met on the way: so an
        # entry under 2^-ROW_ZONE of the row's largest counts as zero too
        floor = max((-v if v < 0 else v for v in sums.values()), default=0) >> ROW_ZONE
        for j, v in sums.items():
            if state[j] == BASIC or (v if v > 0 else -v) <= floor or (-zone < v < zone):
                continue
            e = escale[j]
            row[j] = v if e == 1 else mpq(v, e)
            dj = sd[j]
            dd[j] = None if dj is None else mpq(0) if -zone < dj < zone else mpq(dj)
        return row, dd

    def _steer_follow(self, p: int, alpha: dict, alpha_pq: mpq) -> None:
        """The pivot's eta on the short copy, when there is one in step (the
        copy is dropped otherwise, and the exact btran serves until the next
        factorisation)."""
        short = self._short_factors(STEER_BITS)
        if short is None:
            return
        ap = alpha[p]
        apn, apd = ap.numerator, ap.denominator
        fixed = shadow.fixed
        short.add_eta(p, fixed(alpha_pq.denominator, alpha_pq.numerator),
                      [(i, fixed(a.numerator * apd, a.denominator * apn)) for i, a in alpha.items()
                       if i != p and a])
