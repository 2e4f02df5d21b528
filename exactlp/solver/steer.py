"""The primal pricing steered by short copies, on bases of long numbers.

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
"""

from __future__ import annotations

from gmpy2 import mpq

from . import shadow
from .pricing import _log16, _log16_of
from .rows import _row_sums

BASIC, AT_LOWER, AT_UPPER, AT_ZERO = 0, 1, 2, 3

#: the primal loop keeps short reduced costs where the factors are long
STEER_SHORT = True
#: ... those whose entries average this many bits or more (the short copy's
#: rule, :meth:`ShortFactors.of`); tests set 0 to take every basis that way
STEER_BITS = 32
#: the short values are read (by the scores, their ties and the test for zero)
#: rounded to the nearest multiple of 2^-(SHIFT - SNAP): an exact value on that
#: grid, as the whole and dyadic reduced costs of many models are, then reads as
#: itself, so its devex score and its ties are the exact rule's
SNAP = 64
#: a short reduced cost that rounds to zero so is not improving (under 2^-129)
DEAD_ZONE = 1 << (SNAP - 1)
_HALF = 1 << (SNAP - 1)
#: the snapped values' unit, 2^(SHIFT - SNAP), for their logarithms
_ONE = 1 << (shadow.SHIFT - SNAP)


def _snap(v: int) -> int:
    """``|v|`` rounded to the nearest multiple of ``2^SNAP``, in those units."""
    return ((-v if v < 0 else v) + _HALF) >> SNAP


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

    def _steer_enter(self, d: list) -> list:
        """Exact reduced costs to short ones, with their devex scores."""
        k = shadow.SHIFT
        sd = [None if dj is None else (dj.numerator << k) // dj.denominator for dj in d]
        self._steer_rescore(sd)
        return sd

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

    def _steer_update(self, sd: list, q: int, b: int, p: int, alpha_pq: mpq, dq: mpq) -> None:
        """:meth:`Simplex._update_reduced_costs` on the short values: ``d_j -=
        theta alpha_pj`` with ``theta = d_q / alpha_pq`` exact and cut to fixed
        point, ``alpha_pj = rho_p . a_j`` from the short ``rho_p`` and the
        integer rows of ``A`` (``e_j a_j`` integers: the sum ``v_j`` is
        ``e_j alpha_pj 2^SHIFT``, so the step is ``theta v_j / (e_j 2^SHIFT)``),
        and the devex weights from the same ``v_j``."""
        k = shadow.SHIFT
        theta = dq / alpha_pq
        th = (theta.numerator << k) // theta.denominator
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
        sd[q] = None
        w, scores, state = self.weights, self.steer_scores, self.state
        wq = w[q] - 2 * _log16(alpha_pq)
        for j, v in acc.items():
            dj = sd[j]
            if dj is None or not v or state[j] == BASIC:
                continue
            e = escale[j]
            dj = sd[j] = dj - (th * v) // (e << k)
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
            w[b] = max(wq, 0)
            scores[b] = 2 * _log16(theta) - w[b] if theta else 0

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
