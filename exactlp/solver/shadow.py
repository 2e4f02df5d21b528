"""Short copies of the basis factors in fixed point, for what only steers.

The readers: the dual weights' ``tau`` (:meth:`ShortFactors.solve`, below),
and ``rho_p = e_p^T B^-1`` (:meth:`ShortFactors.solve_t`) for the primal
pricing and the dual ratio test steered by short values (:mod:`.steer`).

The dual steepest-edge update needs ``tau = B^-1 G rho_p^T`` at every pivot
(:meth:`DualPhase._dual_weights_update`), but only to choose the leaving row:
each weight is kept rounded to 64 bits anyway.  On a basis of long numbers an
exact ftran of ``tau`` costs a quarter of the solve (GROW7, GROW15).  Here the
same solve runs on copies of the factors in fixed point: every entry is the
integer ``X = floor(x 2^SHIFT)``, a product is ``(X Y) >> SHIFT``, so each
operation is one product of short integers and one shift, with no gcd and no
floating point, and the result is the same on every machine.  A value under
``2^-SHIFT`` is lost, one of ``2^(64 - SHIFT)`` keeps 64 bits; on GROW7 the
factors' entries and ``tau`` lie between ``2^-60`` and ``2^35``.  Only the
choice of the leaving row reads the result: every value of the solve stays
exact, and so does every certificate.

A copy is made from an LU factorisation with no update yet and then follows the
pivots by product-form etas, from the pivot's column ``alpha = B^-1 a_q``,
which the weights' update has at hand exactly: ``1 / alpha_p`` and each
``alpha_i / alpha_p`` are divided to ``SHIFT`` places.  (Taking the ratios
from the weights' own 64-bit rounding left an error near ``2^-58`` in ``tau``.)
"""

from __future__ import annotations

#: the fixed point's binary places (192 for the weights alone, in the eighteenth
#: session; the steered ratio test divides small reduced costs by small row
#: entries, and each must keep its own bits: GROW7's lie down to 2^-60 of the
#: row's largest, with an error of the solve near 2^-147 of it at 192 places)
SHIFT = 320


def fixed(n, d) -> int:
    """``floor(n / d 2^SHIFT)``, ``d != 0`` of either sign."""
    if d < 0:
        n, d = -n, -d
    return (n << SHIFT) // d


class ShortFactors:
    """``B^-1 v`` in fixed point, on copies of the factors of ``B``."""

    __slots__ = ("basis", "updates", "m", "lsteps", "ucols", "etas", "size")

    def __init__(self, basis, lsteps, ucols, size=(0, 0)) -> None:
        self.basis = basis  # the exact factorisation this copy follows
        self.updates = basis.updates  # ... and its count of updates, kept in step
        self.m = basis.m
        self.lsteps = lsteps
        self.ucols = ucols
        self.etas: list = []
        self.size = size  # (bits, entries) of the factors copied

    def long_enough(self, min_bits: int) -> bool:
        """Do the copied factors' entries average ``min_bits`` bits or more?"""
        bits, count = self.size
        return bits >= min_bits * count

    @classmethod
    def of(cls, basis, min_bits: int) -> "ShortFactors | None":
        """A copy of the LU factorisation ``basis``, made before its first
        update, when its entries average ``min_bits`` bits or more (numerator
        and denominator together); else None, and the caller solves exactly
        until the next factorisation (on short numbers that is the quicker)."""
        lsteps = getattr(basis, "lsteps", None)
        if lsteps is None or basis.etas or getattr(basis, "rsteps", None) or getattr(basis, "_dicts", False):
            return None
        ucols = basis.ucols
        # Copies of one factorisation (the probes of allocation ranges each pivot on
        # a fresh copy of one start) share its lists, and the copy made from them is
        # the same: made once, each caller gets its own etas.  Kept with the very
        # lists it was made from, and used only while the basis still has them.
        # (The fixed-point lists are kept, not a ShortFactors, which refers to its
        # basis: the solver makes no reference cycles.)
        made = getattr(basis, "short_copies", {}).get(min_bits)
        if made is None or made[0] is not lsteps or made[1] is not ucols:
            made = (lsteps, ucols, cls._of(lsteps, ucols, min_bits))
            if hasattr(basis, "short_copies"):
                basis.short_copies[min_bits] = made
        return None if made[2] is None else cls(basis, *made[2])

    @staticmethod
    def _of(lsteps, ucols, min_bits: int) -> tuple | None:
        """The factors in fixed point, ``(lsteps, ucols, (bits, entries))``, or None."""
        bits = count = 0
        for _, steps in lsteps:
            count += len(steps)
            for _, x in steps:
                bits += x.numerator.bit_length() + x.denominator.bit_length()
        for _, ukk, above in ucols:
            count += len(above) + 1
            bits += ukk.numerator.bit_length() + ukk.denominator.bit_length()
            for _, x in above:
                bits += x.numerator.bit_length() + x.denominator.bit_length()
        if bits < min_bits * count:
            return None
        ls = [(r, [(i, fixed(x.numerator, x.denominator)) for i, x in steps]) for r, steps in lsteps]
        us = [(r, fixed(ukk.denominator, ukk.numerator), [(i, fixed(x.numerator, x.denominator)) for i, x in above])
              for r, ukk, above in ucols]
        return ls, us, (bits, count)

    def add_eta(self, p: int, inv_p: int, ratios: list) -> None:
        """The pivot at position ``p``, ``inv_p`` the fixed ``1 / alpha_p`` and
        ``ratios`` the pairs ``(i, alpha_i / alpha_p)`` in fixed point."""
        self.etas.append((p, inv_p, ratios))
        self.updates += 1

    def solve(self, v: dict[int, int]) -> dict[int, int]:
        """``B^-1 v`` for ``v`` in fixed point, by position."""
        k = SHIFT
        w = [0] * self.m
        for i, a in v.items():
            w[i] = a
        for r, ls in self.lsteps:  # L^-1, the row operations in order
            t = w[r]
            if t:
                for i, l in ls:
                    w[i] -= (l * t) >> k
        x = [0] * self.m
        for r, inv, above in reversed(self.ucols):  # U^-1, back-substitution
            t = w[r]
            if t:
                t = (t * inv) >> k
                x[r] = t
                for i, u in above:
                    w[i] -= (u * t) >> k
        w = x
        # After a pivot B' = B E, E the identity with column p replaced by alpha,
        # so B'^-1 v = E^-1 (B^-1 v), and E^-1 takes w_p to w_p / alpha_p and
        # each other w_i to w_i - (alpha_i / alpha_p) w_p: the etas in order.
        for p, inv, rest in self.etas:
            t = w[p]
            if t:
                w[p] = (t * inv) >> k
                for i, r in rest:
                    w[i] -= (r * t) >> k
        return {i: t for i, t in enumerate(w) if t}

    def solve_t(self, v: dict[int, int]) -> dict[int, int]:
        """``v^T B^-1`` for ``v`` in fixed point, by position in, by row out.

        The transposes of :meth:`solve`'s steps in reverse order: the etas last
        to first (``E^-T`` changes entry ``p`` only, ``w_p' = w_p / alpha_p -
        sum_i (alpha_i / alpha_p) w_i``), then ``w^T U = v^T`` forward by the
        columns of U, then L's row operations undone in reverse (``w_r -= sum_i
        l_i w_i``).
        """
        k = SHIFT
        w = [0] * self.m
        for i, a in v.items():
            w[i] = a
        for p, inv, rest in reversed(self.etas):
            t = (w[p] * inv) >> k
            for i, r in rest:
                wi = w[i]
                if wi:
                    t -= (r * wi) >> k
            w[p] = t
        for r, inv, above in self.ucols:
            t = w[r]
            for i, u in above:
                wi = w[i]
                if wi:
                    t -= (u * wi) >> k
            w[r] = (t * inv) >> k if t else 0
        for r, ls in reversed(self.lsteps):
            t = w[r]
            for i, l in ls:
                wi = w[i]
                if wi:
                    t -= (l * wi) >> k
            w[r] = t
        return {i: t for i, t in enumerate(w) if t}

