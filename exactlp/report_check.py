"""Checking reports (conflict, ranges, sensitivity) from the model alone.

Like :mod:`exactlp.verifier`, on which it builds, this imports nothing from the
solver and works in ``fractions.Fraction``.  Each claim is re-derived:

conflict
    the named constraints and bounds (all other constraints dropped, all other
    variables' bounds freed) form a model whose infeasibility certificate is
    valid; and for each member, the given point satisfies all the others, so
    the set is minimal.
ranges
    the model's optimal certificate is valid and gives the objective ``z*``;
    the model plus the row ``objective == z*`` holds exactly the optimal set;
    a range found by solving is proven by the certificates of minimising and
    maximising that variable over it; a range decided by a nonzero reduced
    cost ``d_j`` follows from the zero-gap certificate (every optimum has
    ``d_j (x_j - bound_j) = 0``); a unique optimum decided without solves is
    proven when the equations every optimum must meet (``x_j`` at its bound where
    ``d_j != 0``, row ``i`` at its side where ``y_i != 0``, every equality row, and
    fixed variables) have exactly one solution.
sensitivity
    the model's optimal certificate is valid; each end of an objective range
    is re-proven with the same allocation and the duals moved along the
    range's ``dual_direction`` (at an infinite end, for ``+-x_j`` alone), and
    each end of a limit's range with the allocation moved along its
    ``allocation_direction`` and the same duals (a relaxed row, or a direction
    the allocation follows without end); each proof checks the verifier's
    conditions where the variant differs from the verified optimum (see
    :func:`_sensitivity`).
"""

from __future__ import annotations

from dataclasses import replace
from fractions import Fraction
from math import lcm

from .model import Model, Sense
from .numbers import format_number as fmt, parse_number
from .verifier import _LIMITS, Check, Verification, _over_common, verify


class _Bad(Exception):
    pass


def _part(doc, key: str, kind: type, where: str | None = None):
    """``doc[key]`` when it is a ``kind`` (dict or list), an empty one when absent;
    anything else is a malformed report, named by its field."""
    got = doc.get(key) if isinstance(doc, dict) else None
    if got is None:
        return kind()
    if not isinstance(got, kind):
        shown = repr(got) if len(repr(got)) <= 60 else repr(got)[:60] + "..."
        raise _Bad(f"{where or key}: expected a {'mapping' if kind is dict else 'list'}, found {shown}")
    return got


def _n(text, where):
    """An exact number of the report (as long as a certificate's may be), or None."""
    try:
        return parse_number(text, _LIMITS) if isinstance(text, str) else None
    except Exception:
        shown = repr(text) if len(text) <= 60 else f"{text[:40]!r}... ({len(text):,} characters)"
        raise _Bad(f"{where}: not an exact number: {shown}") from None


def _feasible(model: Model, point: dict, rows: set, bounded: set) -> str | None:
    """Why ``point`` is not a feasible point of :func:`_subset` ``(model, rows,
    bounded)``, or None: a value for every variable, the bounds of those in
    ``bounded``, the constraints in ``rows``, in the model's order.  The
    subset is not built (one per member of a conflict, each the size of the
    model: a 1,000-member conflict's check took 140 s, most of it here), and
    each activity is summed over the point's common denominator, in integers
    where the terms are whole (as the verifier sums ``A x``)."""
    x = {}
    for v in model.variables:
        name = v.name
        if name not in point:
            return f"the point has no value for '{name}'"
        val = x[name] = _n(point[name], f"point.{name}")
        if val is None:  # (not text: a list, a mapping, a YAML null)
            return f"point.{name} is not an exact number"
        if name in bounded and ((v.lower is not None and val < v.lower) or (v.upper is not None and val > v.upper)):
            return f"'{name}' = {fmt(val)} breaks its bounds"
    xs, big = _over_common(x)
    for c in model.constraints:
        if c.name not in rows:
            continue
        whole, rest = 0, Fraction(0)
        for n, k in c.terms:
            if (v := xs[n]) and k.denominator == 1 == v.denominator:
                whole += k.numerator * v.numerator
            elif v:
                rest += k * v
        a = (rest + whole) / big
        if (c.lower is not None and a < c.lower) or (c.upper is not None and a > c.upper):
            return f"constraint '{c.name}' fails at the point ({fmt(a)})"
    return None


def _subset(model: Model, rows: set, bounded: set) -> Model:
    return replace(model, constraints=tuple(c for c in model.constraints if c.name in rows),
                   variables=tuple(v if v.name in bounded else replace(v, lower=None, upper=None)
                                   for v in model.variables),
                   objective=(), objective_constant=Fraction(0), stages=())


def _cert(model: Model, cert, what: str, checks: list) -> Verification:
    v = verify(model, cert if isinstance(cert, dict) else {})
    if not v.valid:
        raise _Bad(f"{what}: {v.failure.detail}")
    checks.append(Check(what, True, f"certificate valid ({v.status})"))
    return v


def _conflict(model: Model, rep: dict, checks: list) -> str:
    rows, bounded = ({str(k) for k in _part(rep, key, list)} for key in ("constraints", "bounds"))
    names = {c.name for c in model.constraints}
    vnames = {v.name for v in model.variables}
    if not rows <= names or not bounded <= vnames:
        raise _Bad("the report names constraints or variables the model does not have")
    sub = _subset(model, rows, bounded)
    if _cert(sub, rep.get("certificate"), "the conflict is infeasible", checks).status != "infeasible":
        raise _Bad("the conflict's certificate does not prove infeasibility")
    given = {}
    for d in _part(rep, "minimality", list):
        if isinstance(d, dict):
            drop = _part(d, "drop", dict)
            key = (drop.get("kind"), drop.get("name"))
            if not all(isinstance(k, str) for k in key):
                raise _Bad(f"minimality: a drop's kind and name must be text, found {key[0]!r} and {key[1]!r}"[:200])
            given[key] = _part(d, "point", dict)
    for kind, group in (("constraint", rows), ("bound", bounded)):
        for name in sorted(group):
            if (kind, name) not in given:
                raise _Bad(f"minimality: no point shows that dropping {kind} '{name}' leaves a feasible set")
            problem = _feasible(model, given[(kind, name)], rows - {name} if kind == "constraint" else rows,
                                bounded - {name} if kind == "bound" else bounded)
            if problem:
                raise _Bad(f"minimality: dropping {kind} '{name}': {problem}")
    checks.append(Check("minimal", True, f"each of the {len(rows) + len(bounded)} members is needed"))
    return "a minimal conflict"


#: a prime for the rank test below (2^61 - 1)
_PRIME = (1 << 61) - 1


def _full_rank_mod(rows: list[dict], names: list[str], p: int | None = _PRIME) -> bool:
    """Full column rank of these equations (name -> coefficient), modulo the
    prime ``p``, or exactly in fractions when ``p`` is None.

    Modulo p, each row is first made whole (times its least common denominator:
    the same equation) and reduced; every minor modulo p is the exact minor
    modulo p, so a full rank modulo p is a full rank.  Sparse elimination: rows
    as dictionaries by column, each column's pivot the shortest row holding it."""
    col = {n: k for k, n in enumerate(names)}
    work = []
    for r in rows:
        if p is None:
            row = {col[n]: a for n, a in r.items() if a and n in col}
        else:
            e = 1
            for a in r.values():
                e = lcm(e, a.denominator)
            row = {col[n]: v for n, a in r.items() if n in col and (v := a.numerator * (e // a.denominator) % p)}
        if row:
            work.append(row)
    live = {id(row): row for row in work}
    by_col: dict = {}
    for row in work:
        for k in row:
            by_col.setdefault(k, set()).add(id(row))
    for k in range(len(names)):
        cands = [row for i in by_col.pop(k, ()) if (row := live.get(i)) is not None and k in row]
        if not cands:
            return False  # no equation left reaches this variable
        piv = min(cands, key=len)
        del live[id(piv)]
        inv = pow(piv[k], -1, p) if p is not None else 1 / piv[k]
        for row in cands:
            if row is piv:
                continue
            f = row.pop(k) * inv
            if p is not None:
                f %= p
            for j, v in piv.items():
                if j == k:
                    continue
                nv = row.get(j, 0) - f * v
                if p is not None:
                    nv %= p
                if nv:
                    if j not in row:
                        by_col.setdefault(j, set()).add(id(row))
                    row[j] = nv
                else:
                    row.pop(j, None)
    return True


def _full_rank(rows: list[dict], names: list[str]) -> bool:
    """Do these linear equations (name -> coefficient) determine every variable?

    Decided modulo a prime first (a yes there is exact); a no there is settled
    in fractions, since the prime might divide a nonzero minor."""
    return _full_rank_mod(rows, names) or _full_rank_mod(rows, names, None)


def _ranges(model: Model, rep: dict, checks: list) -> str:
    cert = _part(rep, "certificate", dict)
    v = _cert(model, cert, "the optimum", checks)
    if v.status != "optimal":
        raise _Bad("the ranges report needs an optimal certificate")
    z = _n(cert.get("objective"), "certificate.objective")
    if _n(rep.get("objective"), "objective") != z:
        raise _Bad("objective: the report and its certificate differ")
    fo = _part(rep, "fixed_objective", dict)
    if _n(fo.get("value"), "fixed_objective.value") != z - model.objective_constant:
        raise _Bad("fixed_objective: the held value is not the certified optimum")
    if str(fo.get("name")) in {c.name for c in model.constraints}:
        raise _Bad(f"fixed_objective: the model already has a constraint '{fo.get('name')}'")
    mat = _Matrix(model)
    x = {k: _n(val, f"primal.{k}") for k, val in (cert.get("primal") or {}).items()}
    d = {k: _n(val, f"reduced_costs.{k}") for k, val in (cert.get("reduced_costs") or {}).items()}
    y = {k: _n(val, f"duals.{k}") for k, val in (cert.get("duals") or {}).items()}
    names = [vv.name for vv in model.variables]
    # the equations every optimal solution meets (complementary slackness with the certified duals)
    eqs = [{vv.name: Fraction(1)} for vv in model.variables
           if d.get(vv.name) or (vv.lower is not None and vv.lower == vv.upper)]
    eqs += [dict(c.terms) for c in model.constraints if y.get(c.name) or c.is_equality]
    act = {k: _n(val, f"activities.{k}") for k, val in (cert.get("activities") or {}).items()}
    held = _Held(mat, y, d, act)
    known: list = []

    def determined() -> bool:  # (decided only if a claim needs it: it is the costly part)
        if not known:
            known.append(_full_rank(eqs, names))
        return known[0]
    claimed = _part(rep, "ranges", dict)
    for name, entry in claimed.items():
        if name not in names or not isinstance(entry, dict):
            raise _Bad(f"ranges: '{name}' is not a variable of the model")
        lo, hi, how = _n(entry.get("min"), f"{name}.min"), _n(entry.get("max"), f"{name}.max"), entry.get("method")
        var = model.variable(name)
        if how == "solved":
            for side, value, sp in (("min", lo, 1), ("max", hi, -1)):
                proof = _part(entry, "proofs", dict, f"ranges.{name}.proofs").get(side)
                _probe_end(mat, held, x, z - model.objective_constant, str(fo.get("name")), name, sp, value,
                           proof, f"ranges.{name}.{side}")
        elif how == "reduced cost":
            if not d.get(name) or lo != hi or lo != x.get(name) or x.get(name) not in (var.lower, var.upper):
                raise _Bad(f"ranges.{name}: not decided by a nonzero reduced cost at a bound")
        elif how == "fixed bounds":
            if not (var.lower is not None and var.lower == var.upper == lo == hi):
                raise _Bad(f"ranges.{name}: the variable is not fixed at {lo}")
        elif how == "unique optimum":
            if not determined() or lo != hi or lo != x.get(name):
                raise _Bad(f"ranges.{name}: the optimum is not shown to be unique")
        else:
            raise _Bad(f"ranges.{name}: unknown method {how!r}")
    widths = [_n(e.get("min"), "min") != _n(e.get("max"), "max") for e in claimed.values() if isinstance(e, dict)]
    unique = rep.get("unique")
    if unique is True or unique == "true":
        if not ((set(claimed) == set(names) and not any(widths)) or determined()):
            raise _Bad("unique: neither the duals nor the ranges prove the optimum unique")
    elif any(widths) is False and (unique is False or unique == "false") and set(claimed) == set(names):
        raise _Bad("unique: every range has zero width, so the optimum is unique")
    checks.append(Check("ranges", True, f"{len(claimed)} variables' ranges over the optimal set re-derived"))
    return "its ranges over the optimal set"


def _exact(text, where) -> Fraction:
    got = _n(text, where)
    if got is None:
        raise _Bad(f"{where}: expected an exact number as a string, found {text!r}")
    return got


def _direction(raw, names, where: str) -> dict:
    """A sparse vector, name -> exact number, over ``names``."""
    if not isinstance(raw, dict):
        raise _Bad(f"{where}: expected a mapping of names to exact numbers, found {raw!r}")
    for k in raw:
        if k not in names:
            raise _Bad(f"{where}: '{k}' is not in the model")
    return {k: _exact(v, f"{where}.{k}") for k, v in raw.items()}


def _lcm_capped(dens) -> int | None:
    """The least common multiple of these denominators, or None once it grows past
    twice the longest of them (many different primes: a hostile model's copy must
    not grow)."""
    dens = list(dens)
    e, cap = 1, 64 + 2 * max((d.bit_length() for d in dens), default=0)
    for d in dens:
        if (e := lcm(e, d)).bit_length() > cap:
            return None
    return e


def _lcm_of(terms) -> int | None:
    """The least common multiple of the coefficients' denominators, or None if it
    would be long."""
    return _lcm_capped(a.denominator for _, a in terms)


def _whole(vals: dict) -> tuple[dict, int]:
    """``({k: v L}, L)``, ``L`` the values' least common denominator, the entries
    as Python integers (as the verifier's :func:`_over_common` scales them); where
    ``L`` would be long, the values as they are over ``L = 1``.  Either way each
    value is ``entry / L``, and the sums and comparisons that read them are the same."""
    big = _lcm_capped(v.denominator for v in vals.values())
    if big is None:
        return vals, 1
    return {k: v.numerator * (big // v.denominator) for k, v in vals.items()}, big


def _scaled(terms, scale: dict) -> list:
    """Each coefficient ``a`` of the entry for ``o`` as the whole ``a scale[o]``
    (kept as it is where ``o`` has no scale)."""
    return [(o, a) if scale[o] is None else (o, a.numerator * (scale[o] // a.denominator)) for o, a in terms]


def _times(vec: dict, lines: dict, scale: dict) -> dict:
    """The sparse product ``sum_k vec_k line_k``, entry ``o`` divided by ``scale[o]``
    (``lines`` from :func:`_scaled`).  Summed over the common denominator ``L`` of
    ``vec`` as the verifier sums: ``L vec`` is whole, so every product is of
    integers, and each entry is divided once, by ``L scale[o]``."""
    acc, big = _accumulate(vec, lines)
    return {o: Fraction(t) / (big * (scale[o] or 1)) for o, t in acc.items()}


def _accumulate(vec: dict, lines: dict) -> tuple[dict, int]:
    """:func:`_times` before its division: ``({o: sum_k (L vec_k) line_k[o]}, L)``."""
    vs, big = _whole(vec)
    acc: dict = {}
    for k, vk in vs.items():
        if vk:
            for o, a in lines[k]:
                acc[o] = acc.get(o, 0) + vk * a
    return acc, big


def _times_whole(vec: dict, lines: dict, scale: dict) -> tuple[dict, int]:
    """:func:`_times` as ``({o: N_o}, E)``, each entry ``N_o / E`` over one
    denominator ``E``: ``L`` times the least common multiple ``C`` of the entries'
    scales, each ``N_o`` its sum times ``C / scale[o]``.  Where ``C`` would be long,
    the entries as :func:`_times` gives them, over ``E = 1``."""
    acc, big = _accumulate(vec, lines)
    common = _lcm_capped(scale[o] or 1 for o in acc)
    if common is None:
        return {o: Fraction(t) / (big * (scale[o] or 1)) for o, t in acc.items()}, 1
    return {o: t * (common // (scale[o] or 1)) for o, t in acc.items()}, big * common


class _Matrix:
    """The model's ``A`` by rows and by columns, for sparse products in integers:
    for ``A^T w`` each entry times its column's least common denominator, for
    ``A v`` times its row's (see :func:`_times`)."""

    def __init__(self, model: Model) -> None:
        self.rows = {c.name: c for c in model.constraints}
        self.variables = {v.name: v for v in model.variables}
        self.objective = model.objective
        cols: dict = {n: [] for n in self.variables}
        for c in model.constraints:
            for n, a in c.terms:
                cols[n].append((c.name, a))
        row_scale = {r: _lcm_of(c.terms) for r, c in self.rows.items()}
        col_scale = {n: _lcm_of(col) for n, col in cols.items()}
        self._by_rows = ({r: _scaled(c.terms, col_scale) for r, c in self.rows.items()}, col_scale)
        self._by_cols = ({n: _scaled(col, row_scale) for n, col in cols.items()}, row_scale)

    def times(self, v: dict) -> dict:
        """``A v`` by row (the rows ``v`` touches)."""
        return _times(v, *self._by_cols)

    def t_times(self, w: dict) -> dict:
        """``A^T w`` by variable (the columns ``w`` touches)."""
        return _times(w, *self._by_rows)

    def times_whole(self, v: dict) -> tuple[dict, int]:
        """``A v`` over one denominator (:func:`_times_whole`)."""
        return _times_whole(v, *self._by_cols)

    def t_times_whole(self, w: dict) -> tuple[dict, int]:
        """``A^T w`` over one denominator (:func:`_times_whole`)."""
        return _times_whole(w, *self._by_rows)


def _term(val: Fraction, lo, hi, s: int, what: str) -> Fraction:
    """The verifier's dual-objective term: ``val`` times the side its sign selects
    (minimising, a positive multiplier rests on the lower side), which must be finite."""
    if not val:
        return Fraction(0)
    return val * _rest(val, lo, hi, s, what)


class _Sides:
    """The model's finite sides (of rows and of bounds) as whole numbers over one
    denominator ``S``, their least common one (``S = 1`` and the sides as they
    are, where that would be long).  A value ``N / E`` (``E > 0``) lies below a
    side ``B / S`` exactly when ``N S < B E``, and its dual-objective term
    ``(N / E) (B / S)`` is ``N B / (E S)``: the terms of one range end that
    share ``E`` sum in integers, with one division at the end, where a sum of
    Fractions pays a gcd a step."""

    def __init__(self, mat: _Matrix) -> None:
        both = [*mat.rows.values(), *mat.variables.values()]
        common = _lcm_capped(b.denominator for c in both for b in (c.lower, c.upper) if b is not None)
        self.S = common or 1

        def over(b):
            return None if b is None else b if common is None else b.numerator * (common // b.denominator)
        self.row = {r: (over(c.lower), over(c.upper)) for r, c in mat.rows.items()}
        self.col = {n: (over(v.lower), over(v.upper)) for n, v in mat.variables.items()}

    def rest(self, num, den: int, side: tuple, s: int, what: str):
        """The side (over ``S``) that the nonzero multiplier ``num / den`` rests on,
        as :func:`_rest` chooses it; an infinite one refused as it refuses it."""
        got = side[0] if (num > 0) == (s > 0) else side[1]
        if got is None:
            _rest(Fraction(num, den), None, None, s, what)
        return got

    @staticmethod
    def outside(num, den: int, side: tuple, scale: int) -> bool:
        """Is ``num / den`` outside ``[lower, upper]`` (``side``, over ``scale``)?"""
        lo, hi = side
        return (lo is not None and num * scale < lo * den) or (hi is not None and num * scale > hi * den)


class _Held:
    """What the ends of solved ranges share: the held row ``c^T x = z*``, and the
    verified optimum's activities ``A x*``, duals ``y*`` and reduced costs
    ``d* = c - A^T y*``.

    An end's duals ``y`` with ``y_h`` on the held row give the reduced costs
    ``d = e_name - A^T y - y_h c``.  The verifier has checked ``A^T y* = c - d*``
    entry by entry, so with ``u = y + y_h y*``::

        y = u - y_h y*,    d = e_name - A^T u + y_h (c - d*) - y_h c = e_name - A^T u - y_h d*

    The same numbers, summed another way.  An end solved on the optimal face has
    ``u`` its own few duals, while ``y`` is as long as ``y*`` and ``d`` as long as
    ``c``.  Where ``u_r`` is 0, ``y_r = -y_h y*_r``; off the columns ``T`` that ``A^T u``
    and ``e_name`` reach, ``d_n = -y_h d*_n``.  Each of those terms rests on the side
    that the sign of ``-y_h`` times that of ``y*_r`` (or ``d*_n``) selects, so their
    sum is ``-y_h`` times a sum fixed by the sign of ``-y_h`` alone, taken once here,
    less the entries summed one by one.
    """

    def __init__(self, mat: _Matrix, ystar: dict, dstar: dict, activities: dict) -> None:
        self.mat = mat
        self.activities = activities  # A x* (checked by the verifier)
        self.cost = dict(mat.objective)
        self.ystar = {r: v for r, v in ystar.items() if v}
        self.dstar = {n: v for n, v in dstar.items() if v}
        self.open_cols: dict = {}  # q -> the columns whose side is infinite
        self.open_rows: dict = {}  # q -> the rows whose side is infinite
        self.sides: dict = {}  # (q, "row" or "col") -> ({name: side or None}, the sum over finite sides)
        for q in (1, -1):  # q: the sign of -y_h times the end's sense
            for kind, vals, of in (("row", self.ystar, mat.rows), ("col", self.dstar, mat.variables)):
                side = {k: of[k].lower if (v > 0) == (q > 0) else of[k].upper for k, v in vals.items()}
                total = sum((v * side[k] for k, v in vals.items() if side[k] is not None), Fraction(0))
                self.sides[q, kind] = (side, total)
            self.open_cols[q] = {n for n, s in self.sides[q, "col"][0].items() if s is None}
            self.open_rows[q] = {r for r, s in self.sides[q, "row"][0].items() if s is None}
        # the same in integers, for dual_total: y* over Dy and d* over Dd, the
        # sides over S, and each shared term y*_r side_r (d*_n side_n) over Dy S (Dd S)
        self.over = over = _Sides(mat)
        (self.Y, self.Dy), (self.D, self.Dd) = _whole(self.ystar), _whole(self.dstar)
        self.parts: dict = {}
        for q in (1, -1):
            for kind, whole, table in (("row", self.Y, over.row), ("col", self.D, over.col)):
                self.parts[q, kind] = {k: v * b for k, v in whole.items()
                                       if (b := table[k][0 if (v > 0) == (q > 0) else 1]) is not None}

    def face_duals(self, y: dict, yh: Fraction) -> dict:
        """``u = y + y_h y*``, its nonzero entries."""
        u = {r: yr for r, yr in y.items() if yr and r not in self.ystar}
        for r, ys in self.ystar.items():
            if ur := y.get(r, 0) + yh * ys:
                u[r] = ur
        return u

    def duals(self, u: dict, yh: Fraction) -> dict:
        """``y = u - y_h y*``, its nonzero entries (the whole duals of an end given
        by its face's, for the term-by-term sum)."""
        y = {r: ur for r, ur in u.items() if r not in self.ystar}
        for r, ys in self.ystar.items():
            if yr := u.get(r, 0) - yh * ys:
                y[r] = yr
        return y

    def dual_total(self, u: dict, yh: Fraction, name: str, sp: int, held: Fraction) -> Fraction | None:
        """The dual objective of the end with duals ``u - y_h y*`` and ``y_h`` on the
        held row (``u``: nonzero entries only), summed as above, or None if some
        term fails (a multiplier on an infinite side): the caller then sums term
        by term.

        In integers, as the sensitivity check sums (:class:`_Sides`): with
        ``u = U / Du``, ``A^T u = G / Dg``, ``y* = Y / Dy``, ``d* = D / Dd`` and
        ``y_h = hn / hd``, an end's dual is ``(U hd Dy - hn Y Du) / (Du hd Dy)`` and
        its reduced cost ``((e_name Dg - G) hd Dd - hn D Dg) / (Dg hd Dd)``: one
        denominator for each kind of term, and one division for each sum."""
        over, S = self.over, self.over.S
        hn, hd = yh.numerator, yh.denominator
        (U, Du), (G, Dg) = _whole(u), self.mat.t_times_whole(u)
        Y, Dy, D, Dd = self.Y, self.Dy, self.D, self.Dd
        er, ec = Du * hd * Dy, Dg * hd * Dd
        rows_in = cols_in = rows_out = cols_out = 0  # the terms taken one by one; the shared parts to take out
        try:
            if yh:
                q = sp if yh < 0 else -sp
                if not self.open_rows[q] <= u.keys():
                    return None  # a row with u_r = 0 whose -y_h y*_r needs an infinite side
                part = self.parts[q, "row"]
            for r, ur in U.items():
                if nr := ur * hd * Dy - hn * Y.get(r, 0) * Du:
                    rows_in += nr * over.rest(nr, er, over.row[r], sp, "")
                if yh and r in part:
                    rows_out += part[r]
            touched = set(G) | {name}
            for n in touched:  # (an exact sum: the order of a set does not change it)
                if nc := ((Dg if n == name else 0) - G.get(n, 0)) * hd * Dd - hn * D.get(n, 0) * Dg:
                    cols_in += nc * over.rest(nc, ec, over.col[n], sp, "")
        except _Bad:
            return None
        total = yh * held + Fraction(rows_in, er * S) + Fraction(cols_in, ec * S)
        if yh:
            if not self.open_cols[q] <= touched:
                return None
            part = self.parts[q, "col"]
            cols_out = sum(part[n] for n in touched if n in part)
            # -y_h (row sum + column sum - the entries summed one by one)
            total += yh * (Fraction(rows_out, Dy * S) + Fraction(cols_out, Dd * S)
                           - self.sides[q, "row"][1] - self.sides[q, "col"][1])
        return total


def _rest(val: Fraction, lo, hi, s: int, what: str = ""):
    """The side a nonzero multiplier ``val`` rests on, as :func:`_term` chooses it;
    an infinite one is refused, naming ``what``."""
    rests_low = (val > 0) == (s > 0)
    side = lo if rests_low else hi
    if side is None:
        raise _Bad(f"{what} is {fmt(val)}, which needs a finite {'lower' if rests_low else 'upper'} "
                   f"side, and it has none")
    return side


_ONE = Fraction(1)


def _fsum(values) -> Fraction:
    """``sum(values)`` of Fractions, as :func:`_dot` sums."""
    return _dot([(v, _ONE) for v in values])


def _dot(pairs: list) -> Fraction:
    """``sum(a * b)`` over pairs of Fractions, over their common denominator: one
    product of integers a term, and one reduction (the terms of a dual objective
    share the basis's denominators; a sum of Fractions reduces at every step).
    As Fractions if the common denominator grows past twice the longest."""
    common = _lcm_capped({a.denominator * b.denominator for a, b in pairs})
    if common is None:
        return sum((a * b for a, b in pairs), Fraction(0))
    return Fraction(sum(a.numerator * b.numerator * (common // (a.denominator * b.denominator)) for a, b in pairs),
                    common)


def _dual_total_by_terms(mat: _Matrix, y: dict, yh: Fraction, name: str, sp: int, held: Fraction,
                         held_name: str, where: str) -> Fraction:
    """The dual objective of an end (duals ``y``, ``y_h`` on the held row), with the
    reduced costs ``d = e_name - A^T y - y_h c`` formed in full and each term taken
    in turn: the definition that :meth:`_Held.dual_total` sums faster.  A term that
    needs an infinite side is refused, named."""
    rows, variables = mat.rows, mat.variables
    d = {n: -g for n, g in mat.t_times(y).items()}
    if yh:  # the held row's coefficients are the objective's
        for n, cn in mat.objective:
            d[n] = d.get(n, 0) - yh * cn
    d[name] = d.get(name, 0) + 1
    total = _term(yh, held, held, sp, f"{where}: dual of '{held_name}'")
    for r, yr in y.items():
        total += _term(yr, rows[r].lower, rows[r].upper, sp, f"{where}: dual of constraint '{r}'")
    for n, dn in d.items():
        total += _term(dn, variables[n].lower, variables[n].upper, sp, f"{where}: reduced cost of '{n}'")
    return total


def _probe_end(mat: _Matrix, shared: _Held, x: dict, held: Fraction, held_name: str, name: str, sp: int,
               value, proof, where: str) -> None:
    """One end of a solved range: ``x_name`` minimised (``sp`` 1) or maximised (-1)
    over the optimal set, the model with the row ``c^T x = held`` added.

    At an end (``value``): the point is the verified optimum ``x`` with the
    entries ``moved``, and the duals are the nonzero ones given (the held row's
    under its name), every other one zero.  The point meets the bounds and rows
    its moved entries touch, and the held row (``c^T`` of the moves is 0); the
    reduced costs ``e_name - A^T y - y_held c`` are nonzero only where those rows
    reach; each nonzero multiplier rests on a finite side of the right sign; and
    the dual objective (the terms, no constant) equals ``x_name``, the value:
    the verifier's conditions for the probe, entry by entry where they can fail.
    With no end (None): a ray from the optimum that meets no bound or row, keeps
    ``c^T r = 0`` and moves ``x_name`` the improving way without limit.
    """
    rows, variables = mat.rows, mat.variables
    cost = shared.cost
    if not isinstance(proof, dict):
        raise _Bad(f"{where}: no proof of this end")
    if value is None:
        if "ray" not in proof:
            raise _Bad(f"{where}: an infinite end needs a ray")
        ray = _direction(proof["ray"], variables, f"{where}.ray")
        for n, rn in ray.items():
            if (rn > 0 and variables[n].upper is not None) or (rn < 0 and variables[n].lower is not None):
                raise _Bad(f"{where}: the ray runs into a bound of '{n}'")
        for r, a in mat.times(ray).items():
            if (a > 0 and rows[r].upper is not None) or (a < 0 and rows[r].lower is not None):
                raise _Bad(f"{where}: the ray leaves constraint '{r}'")
        if sum((cost.get(n, 0) * rn for n, rn in ray.items()), Fraction(0)) != 0:
            raise _Bad(f"{where}: the ray changes the held objective")
        if not sp * ray.get(name, 0) < 0:
            raise _Bad(f"{where}: the ray does not move '{name}' the improving way")
        return
    if "ray" in proof:
        raise _Bad(f"{where}: a ray proves no finite end, and the report gives {fmt(value)}")
    moved = _direction(proof.get("moved"), variables, f"{where}.moved")
    if "face_duals" in proof:  # (exactlp-report/3) the duals u - y_h y*, y_h on the held row
        if "duals" in proof:
            raise _Bad(f"{where}: an end gives its duals or its face's duals, not both")
        u = {r: v for r, v in _direction(proof["face_duals"], rows, f"{where}.face_duals").items() if v}
        yh = _exact(proof.get("held_dual"), f"{where}.held_dual")
        y = None
    else:
        y = _direction(proof.get("duals"), set(rows) | {held_name}, f"{where}.duals")
        yh = y.pop(held_name, Fraction(0))
        u = shared.face_duals(y, yh)
    dx = {n: v - x[n] for n, v in moved.items()}
    for n, v in moved.items():
        var = variables[n]
        if (var.lower is not None and v < var.lower) or (var.upper is not None and v > var.upper):
            raise _Bad(f"{where}: '{n}' = {fmt(v)} breaks its bounds")
    for r, gain in mat.times(dx).items():
        c, act = rows[r], shared.activities[r] + gain  # A (x + dx) = A x + A dx
        if gain and ((c.lower is not None and act < c.lower) or (c.upper is not None and act > c.upper)):
            raise _Bad(f"{where}: constraint '{r}' fails at the point ({fmt(act)})")
    if sum((cost.get(n, 0) * v for n, v in dx.items()), Fraction(0)) != 0:
        raise _Bad(f"{where}: the point leaves the optimal set (the held objective moves)")
    got = moved.get(name, x[name])
    if shared.dual_total(u, yh, name, sp, held) == got == value:
        return
    # something fails: the whole sum, term by term, names what
    total = _dual_total_by_terms(mat, shared.duals(u, yh) if y is None else y, yh, name, sp, held, held_name, where)
    if total != got:
        raise _Bad(f"{where}: the duals leave a gap ({fmt(got)} against {fmt(total)})")
    if got != value:
        raise _Bad(f"{where}: the proof gives {fmt(got)}, the report {fmt(value)}")


def _sensitivity(model: Model, rep: dict, checks: list) -> str:
    """Each range end re-proven from the verified optimum and the range's direction.

    The optimal certificate is verified in full first: ``x`` is feasible,
    ``d = c - A^T y``, every nonzero multiplier rests on a finite side of the
    right sign, and ``c0 + sum(terms) = c^T x + c0 = z``.  A range end is a
    variant of the model (one coefficient or one side moved) with a point and
    duals built from the direction.  Those conditions are then checked again
    only where the variant differs from the model (the moved coefficient or
    side, the entries the direction moves); everywhere else the point, the
    multipliers and the sides are the verified ones, so they still hold.  With
    the variant's gap recomputed from the changed terms, that is the verifier's
    proof of optimality for each variant, at the cost of the direction's entries.

    The arithmetic is in integers: ``x``, ``y``, ``d``, the activities, each
    direction and its product with ``A`` are whole numbers over one denominator
    each (:func:`_whole`, :meth:`_Matrix.t_times_whole`), and the sides over
    ``S`` (:class:`_Sides`).  A moved entry ``p + t q`` with ``p = P / Dp``,
    ``q = Q / Dq`` and ``t = tn / td`` is ``(P td Dq + tn Q Dp) / (Dp td Dq)``:
    one denominator for every entry of an end, so its sign, its comparisons and
    its terms need no gcd.
    """
    base = _part(rep, "certificate", dict)
    if _cert(model, base, "the optimum", checks).status != "optimal":
        raise _Bad("the sensitivity report needs an optimal certificate")
    # all present and exact: the verifier has just read them
    x = {k: _exact(v, f"primal.{k}") for k, v in base["primal"].items()}
    act = {k: _exact(v, f"activities.{k}") for k, v in base["activities"].items()}
    y = {k: _exact(v, f"duals.{k}") for k, v in base["duals"].items()}
    d = {k: _exact(v, f"reduced_costs.{k}") for k, v in base["reduced_costs"].items()}
    z = _exact(base.get("objective"), "objective")
    if _n(rep.get("objective"), "objective") != z:
        raise _Bad("objective: the report and its certificate differ")
    s = 1 if model.sense is Sense.MINIMIZE else -1
    mat = _Matrix(model)
    rows, variables = mat.rows, mat.variables
    sides = _Sides(mat)
    S = sides.S
    (X, Dx), (AX, Da), (Y, Dy), (DC, Dd) = _whole(x), _whole(act), _whole(y), _whole(d)
    # the verified terms y_r side_r (over Dy S) and d_n side_n (over Dd S)
    row_old = {r: Y[r] and Y[r] * sides.rest(Y[r], Dy, sides.row[r], s, "") for r in rows}
    col_old = {n: DC[n] and DC[n] * sides.rest(DC[n], Dd, sides.col[n], s, "") for n in variables}
    dual_total = (model.objective_constant + Fraction(sum(row_old.values()), Dy * S)
                  + Fraction(sum(col_old.values()), Dd * S))
    cost = dict(model.objective)

    for name, e in _part(rep, "objective_ranges", dict).items():
        if name not in variables or not isinstance(e, dict):
            raise _Bad(f"objective_ranges: '{name}' is not a variable of the model")
        where = f"objective_ranges.{name}"
        lo, hi = _n(e.get("lower"), f"{where}.lower"), _n(e.get("upper"), f"{where}.upper")
        cj = cost.get(name, Fraction(0))
        if (lo is not None and lo > cj) or (hi is not None and hi < cj):
            raise _Bad(f"{where}: the range does not contain the coefficient {fmt(cj)}")
        w = _direction(e.get("dual_direction"), rows, f"{where}.dual_direction")
        (W, Dw), (U, Du) = _whole(w), mat.t_times_whole(w)  # U / Du = A^T w
        cols = [*U, *([] if name in U else [name])]  # (in a fixed order: the first fault named)
        for side, end, sign in (("lower", lo, -1), ("upper", hi, 1)):
            at = f"{where}.{side}"
            if end is not None:
                # c_name = end: the allocation x with duals y + t w, t = end - c_name,
                # so d_k - t (A^T w)_k, and d_name + t; primal objective z + t x_name.
                # The changed terms in, the verified ones they replace out.
                t = end - cj
                if not t:
                    continue
                tn, td = t.numerator, t.denominator
                er, ec = Dy * td * Dw, Dd * td * Du  # the denominators of y + t w and d - t A^T w
                new_r = old_r = new_c = old_c = 0
                for r, wr in W.items():
                    if wr:
                        if nr := Y[r] * td * Dw + tn * wr * Dy:
                            new_r += nr * sides.rest(nr, er, sides.row[r], s, f"{at}: dual of constraint '{r}'")
                        old_r += row_old[r]
                for k in cols:
                    nk = DC[k] * td * Du - tn * U.get(k, 0) * Dd + (tn * Dd * Du if k == name else 0)
                    if nk:
                        new_c += nk * sides.rest(nk, ec, sides.col[k], s, f"{at}: reduced cost of '{k}'")
                    old_c += col_old[k]
                total = (dual_total + Fraction(new_r, er * S) + Fraction(new_c, ec * S)
                         - Fraction(old_r, Dy * S) - Fraction(old_c, Dd * S))
                primal = z + t * x[name]
            else:
                # the objective sign * x_name alone (no constant): duals sign * w,
                # reduced costs sign * (e_name - A^T w), every other one zero
                new_r = new_c = 0
                for r, wr in W.items():
                    if nr := sign * wr:
                        new_r += nr * sides.rest(nr, Dw, sides.row[r], s, f"{at}: dual of constraint '{r}'")
                for k in cols:
                    if nk := sign * ((Du if k == name else 0) - U.get(k, 0)):
                        new_c += nk * sides.rest(nk, Du, sides.col[k], s, f"{at}: reduced cost of '{k}'")
                total = Fraction(new_r, Dw * S) + Fraction(new_c, Du * S)
                primal = sign * x[name]
            if total != primal:
                raise _Bad(f"{at}: the duals along the direction leave a gap ({fmt(primal)} against "
                           f"{fmt(total)}): the allocation is not shown optimal there")

    for name, e in _part(rep, "rhs_ranges", dict).items():
        con = rows.get(name)
        if con is None or not isinstance(e, dict):
            raise _Bad(f"rhs_ranges: '{name}' is not a constraint of the model")
        where = f"rhs_ranges.{name}"
        which, value, dual = e.get("bound"), _n(e.get("value"), f"{where}.value"), _n(e.get("dual"), f"{where}.dual")
        if dual != y.get(name):
            raise _Bad(f"{where}: the dual differs from the certificate's")
        side_value = {"upper": con.upper, "lower": con.lower, "equals": con.lower}.get(which if isinstance(which, str) else "", "?")
        if value is None or side_value != value or (which == "equals" and not con.is_equality):
            raise _Bad(f"{where}: the model's {which} side is not {value}")
        lo, hi = _n(e.get("lower"), f"{where}.lower"), _n(e.get("upper"), f"{where}.upper")
        if (lo is not None and lo > value) or (hi is not None and hi < value):
            raise _Bad(f"{where}: the range does not contain the limit {fmt(value)}")
        raw = e.get("allocation_direction")
        v = None if raw is None else _direction(raw, variables, f"{where}.allocation_direction")
        V, Dv = _whole(v or {})
        AV, Dav = mat.times_whole(v or {})  # A v by row: what the activities gain per unit of t
        cv = _dot([(cost.get(n, Fraction(0)), vn) for n, vn in (v or {}).items()])
        for side, end, sign in (("lower", lo, -1), ("upper", hi, 1)):
            at = f"{where}.{side}"
            if end is None and v is not None:
                # the limit moves without end and the allocation follows it along
                # sign * v: no bound or other row in the way, the row itself moving
                # at the limit's rate, the objective at the dual's
                for n, vn in V.items():
                    wn = sign * vn
                    if (wn > 0 and variables[n].upper is not None) or (wn < 0 and variables[n].lower is not None):
                        raise _Bad(f"{at}: the direction runs into a bound of '{n}'")
                if AV.get(name, 0) != Dav:
                    raise _Bad(f"{at}: the direction does not follow the limit")
                for r, ar in AV.items():
                    a, c = sign * ar, rows[r]
                    if r != name and ((a > 0 and c.upper is not None) or (a < 0 and c.lower is not None)):
                        raise _Bad(f"{at}: the direction leaves constraint '{r}'")
                if cv != dual:
                    raise _Bad(f"{at}: the objective does not move at the dual's rate")
                continue
            # the limit at ``end`` (None: that side removed): the allocation
            # x + t v (x itself without a direction) with the same duals
            t = Fraction(0) if end is None or v is None else end - value
            new_lo = end if which in ("lower", "equals") else con.lower
            new_hi = end if which in ("upper", "equals") else con.upper
            tn, td = t.numerator, t.denominator
            ex, ea = Dx * td * Dv, Da * td * Dav  # the denominators of x + t v and A x + t A v
            if t:
                for n, vn in V.items():
                    if sides.outside(xn := X[n] * td * Dv + tn * vn * Dx, ex, sides.col[n], S):
                        raise _Bad(f"{at}: the moved allocation breaks the bounds of '{n}' ({fmt(Fraction(xn, ex))})")
            for r in [*(AV if t else ()), *([] if t and name in AV else [name])]:  # (a fixed order, as above)
                if r == name:  # the moved row, against its moved side
                    ar = act[r] + t * Fraction(AV.get(r, 0), Dav)
                    if (new_lo is not None and ar < new_lo) or (new_hi is not None and ar > new_hi):
                        raise _Bad(f"{at}: the moved allocation breaks constraint '{r}' ({fmt(ar)})")
                elif sides.outside(nr := AX[r] * td * Dav + tn * AV[r] * Da, ea, sides.row[r], S):
                    raise _Bad(f"{at}: the moved allocation breaks constraint '{r}' ({fmt(Fraction(nr, ea))})")
            total = (dual_total - Fraction(row_old[name], Dy * S)
                     + _term(y[name], new_lo, new_hi, s, f"{at}: dual of constraint '{name}'"))
            primal = z + t * cv
            if total != primal:
                raise _Bad(f"{at}: the duals leave a gap ({fmt(primal)} against {fmt(total)}) with the limit there")
            if end is not None and primal != z + dual * (end - value):
                raise _Bad(f"{at}: the optimum there is not z + dual * change")
    checks.append(Check("sensitivity", True, "every range end re-derived from the optimum and its direction"))
    return "its sensitivity ranges"


def check_report(model: Model, report: dict) -> Verification:
    checks: list = []
    if not isinstance(report, dict):
        return Verification(False, None, (Check("report", False, "expected a mapping at the top of the report"),))
    kind = report.get("report")
    try:
        fmt_ = report.get("format")
        # 2 changed the sensitivity and ranges reports' layout: 1's conflict reports still read;
        # 3 lets a range's end give its duals as the optimal face's: 2's reports still read
        if fmt_ not in ("exactlp-report/3", "exactlp-report/2") and not (fmt_ == "exactlp-report/1"
                                                                          and kind == "conflict"):
            found = f"{fmt_!r}" + (f" (a {kind} report of an earlier layout: write it again)"
                                   if fmt_ == "exactlp-report/1" else "")
            raise _Bad(f"format: expected 'exactlp-report/3', found {found}")
        fp = (report.get("model") or {}).get("fingerprint") if isinstance(report.get("model"), dict) else None
        if fp != model.fingerprint:
            raise _Bad(f"fingerprint: the report is for {fp}, the model given is {model.fingerprint}")
        checks.append(Check("model fingerprint", True, model.fingerprint))
        if kind == "conflict":
            what = _conflict(model, report, checks)
        elif kind == "ranges":
            what = _ranges(model, report, checks)
        elif kind == "sensitivity":
            what = _sensitivity(model, report, checks)
        else:
            raise _Bad(f"report: unknown kind {kind!r}")
    except _Bad as exc:
        checks.append(Check("report", False, str(exc)))
        return Verification(False, None, tuple(checks))
    return Verification(True, what, tuple(checks))
