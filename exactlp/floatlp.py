"""The floating-point side, off the trust path: it only *suggests* a basis.

Nothing computed here reaches a certificate.  A basis suggested by a float
solver is a list of column indices and bound choices; the exact solver
factors it in rational arithmetic, recomputes every value, checks primal and
dual feasibility exactly, and pivots exactly from it when it is not optimal.
If the suggestion is unusable (singular, or not primal feasible), the solver
starts from its own slack basis.  highspy (the ``exactlp[fast]`` extra) and
scipy are imported only when these functions run.
"""

from __future__ import annotations

import contextlib
import itertools
import os
import sys
from dataclasses import dataclass
from fractions import Fraction

from .model import Model, Sense

#: with highspy installed, the warm start is used by default above this many rows
WARM_START_MIN_ROWS = 50


def highs_available() -> bool:
    try:
        import highspy  # noqa: F401
    except ImportError:
        return False
    return True


@dataclass(frozen=True)
class BasisHint:
    """A suggested basis: for each column (structurals, then logicals) its status.

    Made by HiGHS here, or from an exact optimal basis (:meth:`of_result`).
    """

    basic: tuple[int, ...]  # column indices (structural j, logical n + i)
    at_upper: frozenset[int]  # nonbasic columns resting on their upper bound
    source: str
    float_status: str  # what the float solver said; "exact" when no float solver made it

    @classmethod
    def of_result(cls, result, n: int, m: int, added_rows: int = 0, source: str = "exact basis") -> "BasisHint":
        """The final basis of ``result`` (a model with ``n`` variables and ``m`` rows),
        for the same model with ``added_rows`` rows appended: their logicals
        (columns ``n + m``, ...) join the basis, so the old point stays where it was."""
        basic = tuple(result.basis_columns) + tuple(range(n + m, n + m + added_rows))
        return cls(basic, frozenset(result.at_upper_columns), source, "exact")


# Fraction's two slots, read directly where they are exactly these (as
# ``solver.form`` does): ``a._numerator`` costs a sixth of the ``numerator``
# property's call, and the float copy is made before HiGHS can start
_SLOTS = getattr(Fraction, "__slots__", None) == ("_numerator", "_denominator")


def _f(x) -> float:
    """A Fraction rounded to the nearest double (int / int is correctly rounded)."""
    if _SLOTS and type(x) is Fraction:
        return x._numerator / x._denominator
    return x.numerator / x.denominator


def _doubles(xs: list, none: float) -> list[float]:
    """Each of ``xs`` (exact numbers, or None for ``none``) as the nearest double."""
    if _SLOTS:
        try:
            return [none if x is None else x._numerator / x._denominator for x in xs]
        except AttributeError:  # (other exact numbers than Fractions: their properties)
            pass
    return [none if x is None else x.numerator / x.denominator for x in xs]


def _arrays(model: Model, rowwise: bool = False):
    """The model in doubles: sizes, sense sign, costs (minimising), bounds, and the matrix.

    The matrix is compressed by columns, or with ``rowwise`` by rows (the
    model's own order, which needs no regrouping): ``start``, ``index``, ``value``.
    """
    import numpy as np

    n, m = len(model.variables), len(model.constraints)
    index = {v.name: j for j, v in enumerate(model.variables)}
    sign = 1.0 if model.sense is Sense.MINIMIZE else -1.0
    cost = np.zeros(n)
    for name, c in model.objective:
        cost[index[name]] = sign * _f(c)
    inf = float("inf")  # an absent bound in the float copy, which only ever suggests a basis
    lo = np.array(_doubles([v.lower for v in model.variables], -inf))
    hi = np.array(_doubles([v.upper for v in model.variables], inf))
    rlo = np.array(_doubles([c.lower for c in model.constraints], -inf))
    rhi = np.array(_doubles([c.upper for c in model.constraints], inf))
    start, idx, val = [0], [], []
    if rowwise:
        # every value divided where it stands (int / int, correctly rounded): a
        # dictionary of the distinct values cost more than the divisions it saved,
        # even where a few values repeat thousands of times (STAIR 1.05 -> 0.61 ms,
        # SHIP04L 1.59 -> 1.14, SCSD8 2.14 -> 1.52; the same doubles)
        rows = [c.terms for c in model.constraints]
        val = None
        if _SLOTS:
            try:  # (a Model made by hand may hold other exact numbers: then the properties)
                val = [a._numerator / a._denominator for terms in rows for _, a in terms]
            except AttributeError:
                pass
        if val is None:
            val = [a.numerator / a.denominator for terms in rows for _, a in terms]
        idx = [index[name] for terms in rows for name, _ in terms]
        start.extend(itertools.accumulate(map(len, rows)))
    else:
        cols: list[list[tuple[int, float]]] = [[] for _ in range(n)]
        for i, c in enumerate(model.constraints):
            for name, a in c.terms:
                cols[index[name]].append((i, _f(a)))
        for col in cols:
            for i, a in col:
                idx.append(i)
                val.append(a)
            start.append(len(idx))
    return n, m, sign, cost, lo, hi, rlo, rhi, np.array(start), np.array(idx, dtype=np.int32), np.array(val, dtype=float)


@contextlib.contextmanager
def _quiet_stdout():
    """Silence C-level writes to stdout (HiGHS prints a banner when first created).

    Our own stdout may carry a JSON document, so nothing else may reach it.
    """
    try:
        sys.stdout.flush()
        fd = sys.__stdout__.fileno() if sys.__stdout__ is not None else 1
        saved = os.dup(fd)
    except (OSError, ValueError, AttributeError):
        yield
        return
    try:
        with open(os.devnull, "w") as null:
            os.dup2(null.fileno(), fd)
            yield
    finally:
        os.dup2(saved, fd)
        os.close(saved)


def highs_basis(model: Model, time_limit: float | None = None) -> BasisHint | None:
    """Solve in double precision with HiGHS and return its final basis, or None."""
    return start_highs(model, time_limit, background=False).result()


class PendingHint:
    """A HiGHS solve under way (or done), whose suggested basis :meth:`result` gives.

    HiGHS releases the interpreter lock while it runs, so the exact form can be
    built at the same time on the other core.  Nothing is shared with the
    caller but the finished basis; HiGHS runs with one thread and a fixed seed,
    so what it suggests does not depend on timing.
    """

    def __init__(self, h, m: int, background: bool) -> None:
        self._h, self._m = h, m
        self._error: BaseException | None = None
        #: when result() gives None: what HiGHS said, and why there is no suggestion
        self.float_status = "-"
        self.reason = ""
        self._thread = None
        if background:
            import threading

            self._thread = threading.Thread(target=self._run, name="exactlp-float-hint", daemon=True)
            self._thread.start()
        else:
            self._run()

    def _run(self) -> None:
        try:
            self._h.run()
        except BaseException as exc:  # handed to the caller in result()
            self._error = exc

    def discard(self) -> None:
        """Wait for HiGHS to finish and drop what it found (errors included)."""
        if self._thread is not None:
            self._thread.join()

    def running(self) -> bool:
        """Whether HiGHS is still at work (on its own thread).  (A HiGHS thread that
        has finished needs the interpreter lock to return: work done meanwhile
        should run under a short switch interval, see ``solve``.)"""
        return self._thread is not None and self._thread.is_alive()

    def result(self) -> BasisHint | None:
        if self._thread is not None:
            self._thread.join()
        if self._error is not None:
            if not isinstance(self._error, Exception):
                raise self._error  # an interrupt or exit, not a failure of the suggestion
            # the float side only ever suggests: a failure there costs the suggestion, not the solve
            self.reason = f"the float solver failed ({type(self._error).__name__}); no suggestion"
            return None
        import highspy

        h, m = self._h, self._m
        status = self.float_status = h.modelStatusToString(h.getModelStatus())
        basis = h.getBasis()
        if not basis.valid:
            self.reason = f"the float solver gave no basis (it reported: {status})"
            return None
        # Enum members compare slowly one by one; their integer values are read
        # once per list instead (each ``col_status`` access converts the whole list).
        basic_code = int(highspy.HighsBasisStatus.kBasic)
        upper_code = int(highspy.HighsBasisStatus.kUpper)
        codes = [s.value for s in basis.col_status] + [s.value for s in basis.row_status]
        basic = [j for j, s in enumerate(codes) if s == basic_code]
        if len(basic) != m:
            self.reason = "the float solver's basis does not have one column per row"
            return None
        upper = frozenset(j for j, s in enumerate(codes) if s == upper_code)
        return BasisHint(tuple(basic), upper, "highs", status)


class _NoHint:
    """No float solve was made (or HiGHS refused the model), and why."""

    float_status = "-"

    def __init__(self, reason: str = "") -> None:
        self.reason = reason

    def result(self) -> None:
        return None

    def discard(self) -> None:
        return None

    def running(self) -> bool:
        return False


def start_highs(model: Model, time_limit: float | None = None, background: bool = True):
    """Hand the model to HiGHS and start it (in a background thread by default).

    Returns an object whose ``result()`` waits for HiGHS and gives its basis
    (or None).  The float copy is built here, before the thread starts.
    """
    import highspy
    import numpy as np

    try:
        n, m, _, cost, lo, hi, rlo, rhi, start, idx, val = _arrays(model, rowwise=True)
    except OverflowError:  # a model number beyond the double range (the model allows 1e400)
        return _NoHint("the model holds a number beyond the floating-point range; no float solve was made")
    if m == 0:
        return _NoHint()
    with _quiet_stdout():
        h = highspy.Highs()
        h.setOptionValue("output_flag", False)
    # highspy's wrapper installs a Python callback, which HiGHS then calls while it
    # solves: each call needs the interpreter lock, held here while the exact form
    # is built, so the two sides took turns instead of running side by side (AGG:
    # 8.9 ms to the hint with it, 5.0 ms without).  Nothing here uses callbacks.
    disable = getattr(h, "disableCallbacks", None)
    if disable is not None:
        disable()
    h.setOptionValue("random_seed", 0)
    h.setOptionValue("threads", 1)
    if time_limit is not None:
        # wall-clock seconds for HiGHS (the one float a solve takes); no model number
        h.setOptionValue("time_limit", float(max(time_limit, 0.01)))
    # The model goes over as plain arrays in one call (the overload with an
    # integrality array, all zero: every column continuous), which copies them
    # once; filling a HighsLp attribute by attribute cost 0.3-0.8 ms more.
    # Rows are compressed with one start per row (HiGHS's own convention).
    big = highspy.kHighsInf
    status = h.passModel(
        n, m, len(val), int(highspy.MatrixFormat.kRowwise), int(highspy.ObjSense.kMinimize), 0.0,
        cost, np.where(np.isinf(lo), -big, lo), np.where(np.isinf(hi), big, hi),
        np.where(np.isinf(rlo), -big, rlo), np.where(np.isinf(rhi), big, rhi),
        start[:-1].astype(np.int32), idx, val, np.zeros(n, dtype=np.int32))
    if status == highspy.HighsStatus.kError:
        return _NoHint("the float solver refused the model")  # it only ever suggests: start from the slack basis
    return PendingHint(h, m, background)


def linprog_arguments(model: Model):
    """Arguments for scipy.optimize.linprog(method="highs") (sparse), and the sense sign."""
    import numpy as np
    from scipy.sparse import csr_matrix

    n, m, sign, cost, lo, hi, rlo, rhi, start, idx, val = _arrays(model)
    rows_ub, cols_ub, vals_ub, b_ub = [], [], [], []
    rows_eq, cols_eq, vals_eq, b_eq = [], [], [], []
    per_row: list[list[tuple[int, float]]] = [[] for _ in range(m)]
    for j in range(n):
        for k in range(start[j], start[j + 1]):
            per_row[idx[k]].append((j, val[k]))
    for i in range(m):
        terms = per_row[i]
        if rlo[i] == rhi[i]:
            r = len(b_eq)
            for j, a in terms:
                rows_eq.append(r), cols_eq.append(j), vals_eq.append(a)
            b_eq.append(rlo[i])
            continue
        for side, bound in ((1.0, rhi[i]), (-1.0, rlo[i])):
            if np.isinf(bound):
                continue
            r = len(b_ub)
            for j, a in terms:
                rows_ub.append(r), cols_ub.append(j), vals_ub.append(side * a)
            b_ub.append(side * bound)
    bounds = [(None if np.isinf(a) else a, None if np.isinf(b) else b) for a, b in zip(lo, hi)]
    kw = dict(c=cost if n else np.zeros(1), bounds=bounds if n else [(0, 0)], method="highs")
    if b_ub:
        kw.update(A_ub=csr_matrix((vals_ub, (rows_ub, cols_ub)), shape=(len(b_ub), n)), b_ub=np.array(b_ub))
    if b_eq:
        kw.update(A_eq=csr_matrix((vals_eq, (rows_eq, cols_eq)), shape=(len(b_eq), n)), b_eq=np.array(b_eq))
    return kw, sign
