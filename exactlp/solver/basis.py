"""Exact basis factorisation in product form (an eta file), with reinversion.

The basis matrix is kept as ``B = B0 E1 E2 ... Ek`` where ``B0`` is a
diagonal of +1/-1 (unit columns: logicals and artificials, one per row) and
each ``Et`` is the identity with one column, ``p``, replaced by the vector
``w`` (the entering column expressed in the previous basis).  Then

    ftran:  B^-1 a   = Ek^-1 ... E1^-1 B0^-1 a
    btran:  c^T B^-1 = c^T Ek^-1 ... E1^-1 B0^-1

and ``E^-1 v`` changes ``v_p`` to ``v_p / w_p`` and every other ``v_i`` to
``v_i - w_i v_p / w_p``.  All arithmetic is exact (gmpy2 ``mpq``), so the
file never drifts; it is rebuilt only to keep it short and sparse.

Reinversion rebuilds the file from the current set of basic columns: unit
columns keep the position of their row, and the other columns are brought
in one at a time, fewest nonzeros first (column singletons first cause no
fill), each at the free position with the fewest remaining nonzeros in its
row among the columns still to place.  With exact numbers any nonzero is an
acceptable pivot, so the order aims purely at sparsity.
"""

from __future__ import annotations

from gmpy2 import mpq

ZERO = mpq(0)


class EtaBasis:
    def __init__(self, m: int, signs: list[int]) -> None:
        self.m = m
        self.signs = list(signs)  # B0 diagonal
        self.etas: list[tuple[int, mpq, list[tuple[int, mpq]]]] = []  # (p, w_p, other entries)
        self.eta_nonzeros = 0
        #: etas added by pivots since the file was last built (reinversion's own do not count)
        self.updates = 0

    # -- solves --------------------------------------------------------
    def ftran(self, col: list[tuple[int, mpq]]) -> dict[int, mpq]:
        signs = self.signs
        v: dict[int, mpq] = {}
        for i, a in col:
            v[i] = a if signs[i] > 0 else -a
        for p, wp, rest in self.etas:
            vp = v.get(p)
            if not vp:
                continue
            vp = vp / wp
            v[p] = vp
            for i, wi in rest:
                nv = v.get(i, ZERO) - wi * vp
                if nv:
                    v[i] = nv
                else:
                    v.pop(i, None)
        return v

    def btran(self, cb: dict[int, mpq]) -> list[mpq]:
        u = [ZERO] * self.m
        for p, c in cb.items():
            u[p] = c
        for p, wp, rest in reversed(self.etas):
            s = u[p]
            for i, wi in rest:
                ui = u[i]
                if ui:
                    s -= ui * wi
            u[p] = s / wp if s else ZERO
        signs = self.signs
        return [x if signs[i] > 0 else -x for i, x in enumerate(u)]

    def replace(self, p: int, w: dict[int, mpq]) -> None:
        """Record that position ``p`` now holds the column whose ftran is ``w``."""
        wp = w[p]
        rest = [(i, wi) for i, wi in sorted(w.items()) if i != p]
        self.etas.append((p, wp, rest))
        self.eta_nonzeros += len(rest) + 1
        self.updates += 1


def reinvert(
    m: int,
    head: list[int],
    cols: list[list[tuple[int, mpq]]],
    unit_row: dict[int, tuple[int, int]],
) -> tuple[EtaBasis, list[int]]:
    """Rebuild a short eta file for the basic columns ``head``.

    ``unit_row`` maps a column that is a signed unit vector to (row, sign).
    Returns the new factorisation and the new position -> column list.
    """
    signs = [-1] * m
    new_head = [-1] * m
    others = []
    for c in head:
        if c in unit_row:
            r, s = unit_row[c]
            signs[r] = s
            new_head[r] = c
        else:
            others.append(c)
    basis = EtaBasis(m, signs)
    free = [new_head[i] == -1 for i in range(m)]
    # remaining nonzeros of each row among the columns still to place
    row_count = [0] * m
    for c in others:
        for i, _ in cols[c]:
            row_count[i] += 1
    others.sort(key=lambda c: (len(cols[c]), c))
    for c in others:
        w = basis.ftran(cols[c])
        best = -1
        for i, wi in w.items():
            if wi and free[i] and (best < 0 or (row_count[i], i) < (row_count[best], best)):
                best = i
        if best < 0:  # pragma: no cover - impossible for a nonsingular basis
            raise ArithmeticError("singular basis during reinversion")
        for i, _ in cols[c]:
            row_count[i] -= 1
        basis.replace(best, w)
        free[best] = False
        new_head[best] = c
    basis.updates = 0
    return basis, new_head
