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
``hybrid`` (the default)
    Dantzig's choice, except that a pivot that would be degenerate (step 0)
    is re-chosen by Bland's rule, and Bland's rule then stays in force until
    a pivot makes a positive step.  Why this terminates: the objective never
    rises, and strictly falls on every pivot with a positive step, so a basis
    seen before can only come back within one run of degenerate pivots; in
    such a run every pivot was chosen by Bland's rule, and Bland's theorem
    says no sequence of Bland pivots returns to a basis.  So no basis repeats,
    and there are finitely many.

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

from gmpy2 import mpq

from .basis import EtaBasis, reinvert
from .events import Finish, PhaseEnd, Pivot, Start
from .form import Form, frac

ZERO = mpq(0)
ONE = mpq(1)

BASIC, AT_LOWER, AT_UPPER, AT_ZERO = 0, 1, 2, 3

PRICING_RULES = ("hybrid", "bland", "dantzig")
#: rebuild the eta file after this many updates
REINVERT_EVERY = 64
#: largest model (rows x columns) for which the full tableau can be recorded
TABLEAU_LIMIT = 20_000


@dataclass
class Outcome:
    status: str
    z: mpq | None = None
    y: list[mpq] | None = None
    ray: dict[int, mpq] | None = None


class Simplex:
    def __init__(
        self,
        form: Form,
        *,
        pricing: str = "hybrid",
        iteration_limit: int | None = None,
        time_limit: float | None = None,
        listener=None,
        tableau: bool = False,
        should_stop=None,
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
        self._setup()

    # ------------------------------------------------------------------
    def _setup(self) -> None:
        f, m = self.f, self.m
        ncol = f.ncols
        x = [ZERO] * ncol
        state = [AT_LOWER] * ncol
        for j in range(f.n):
            lo, hi = self.lower[j], self.upper[j]
            if lo is not None:
                x[j], state[j] = lo, AT_LOWER
            elif hi is not None:
                x[j], state[j] = hi, AT_UPPER
            else:
                x[j], state[j] = ZERO, AT_ZERO
        r = [ZERO] * m
        for j in range(f.n):
            if x[j]:
                for i, a in self.cols[j]:
                    r[i] += a * x[j]
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
            state[s] = AT_LOWER if target == lo else AT_UPPER
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

    def ref(self, j: int) -> tuple[str, str]:
        return (self.labels[j], self.kinds[j])

    def elapsed(self) -> float:
        return time.monotonic() - self.started

    # ------------------------------------------------------------------
    def run(self) -> Outcome:
        ncol = len(self.cols)
        phase = 1 if self.artificials else 2
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
        return sum((cost[j] * self.x[j] for j in range(len(self.cols)) if cost[j] and self.x[j]), ZERO)

    # ------------------------------------------------------------------
    def _reduced_costs(self, cost: list[mpq], y: list[mpq]) -> list[mpq | None]:
        """d_j = c_j - y^T a_j for every nonbasic column that can move (else None)."""
        out: list[mpq | None] = [None] * len(self.cols)
        state, lower, upper, cols = self.state, self.lower, self.upper, self.cols
        for j in range(len(cols)):
            if state[j] == BASIC:
                continue
            lo, hi = lower[j], upper[j]
            if lo is not None and lo == hi:
                continue  # fixed: cannot move
            d = cost[j]
            for i, a in cols[j]:
                yi = y[i]
                if yi:
                    d -= yi * a
            out[j] = d
        return out

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

    def _ratio(self, q: int, direction: int, alpha: dict[int, mpq]):
        """Return (t, leaving column or None for a flip or unbounded, bound hit)."""
        best_t = None
        best_b = -1
        best_bound = None
        x, lower, upper, head = self.x, self.lower, self.upper, self.head
        for p, a in alpha.items():
            rate = -a if direction > 0 else a  # d x_b / d t
            b = head[p]
            if rate < 0:
                lo = lower[b]
                if lo is None:
                    continue
                t = (x[b] - lo) / -rate
                bound = "lower"
            else:
                hi = upper[b]
                if hi is None:
                    continue
                t = (hi - x[b]) / rate
                bound = "upper"
            if best_t is None or t < best_t or (t == best_t and b < best_b):
                best_t, best_b, best_bound = t, b, bound
        lo, hi = lower[q], upper[q]
        if lo is not None and hi is not None:
            span = hi - lo
            if best_t is None or span <= best_t:
                return span, None, ("upper" if direction > 0 else "lower")
        if best_t is None:
            return None, None, None
        return best_t, best_b, best_bound

    def _phase(self, phase: int, cost: list[mpq]) -> Outcome:
        bland_mode = self.pricing == "bland"
        f = self.f
        z = self._z(cost)
        while True:
            cb = {p: cost[c] for p, c in enumerate(self.head) if cost[c]}
            y = self.basis.btran(cb)
            if self.should_stop is not None and self.should_stop():
                return Outcome("interrupted", z, y)
            if self.iteration_limit is not None and self.iterations >= self.iteration_limit:
                return Outcome("iteration_limit", z, y)
            if self.time_limit is not None and self.elapsed() > self.time_limit:
                return Outcome("time_limit", z, y)
            d = self._reduced_costs(cost, y)
            first = -1
            best = -1
            best_abs = ZERO
            for j, dj in enumerate(d):
                if dj is None or not self._eligible(j, dj):
                    continue
                if first < 0:
                    first = j
                a = abs(dj)
                if a > best_abs:
                    best, best_abs = j, a
            if first < 0:
                return Outcome("optimal", z, y)
            if self.pricing == "dantzig" or (self.pricing == "hybrid" and not bland_mode):
                q, rule = best, "dantzig"
            else:
                q, rule = first, "bland"
            direction = self._eligible(q, d[q])  # type: ignore[arg-type]
            alpha = self.basis.ftran(self.cols[q])
            t, b, bound = self._ratio(q, direction, alpha)
            if self.pricing == "hybrid" and rule == "dantzig" and t is not None and t == 0:
                bland_mode = True
                if first != q:
                    q = first
                    direction = self._eligible(q, d[q])  # type: ignore[arg-type]
                    alpha = self.basis.ftran(self.cols[q])
                    t, b, bound = self._ratio(q, direction, alpha)
                rule = "bland (degenerate run)"
            elif self.pricing == "hybrid" and rule == "bland":
                rule = "bland (degenerate run)"
            if t is None:
                ray = {q: mpq(direction)}
                for p, a in alpha.items():
                    ray[self.head[p]] = -direction * a
                return Outcome("unbounded", z, y, ray)
            tab = self._tableau(d, y, z, phase) if self.tableau else None
            dq = d[q]
            # --- apply the step -------------------------------------------------
            self.iterations += 1
            if t:
                dt = t if direction > 0 else -t
                self.x[q] += dt
                for p, a in alpha.items():
                    self.x[self.head[p]] -= dt * a
                z += dq * dt  # type: ignore[operator]
            if b is None:
                self.flips += 1
                self.state[q] = AT_UPPER if direction > 0 else AT_LOWER
                self.x[q] = self.upper[q] if direction > 0 else self.lower[q]
            else:
                self.pivots[phase] += 1
                p = self.pos_of[b]
                self.x[b] = self.lower[b] if bound == "lower" else self.upper[b]
                self.state[b] = AT_LOWER if bound == "lower" else AT_UPPER
                self.state[q] = BASIC
                self.pos_of[b] = -1
                self.pos_of[q] = p
                self.head[p] = q
                self.basis.replace(p, alpha)
                if len(self.basis.etas) >= REINVERT_EVERY:
                    self._reinvert()
            if t:
                bland_mode = self.pricing == "bland"
            if self.listener:
                shown = z if phase == 1 else f.sign * z + f.constant
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

    def _reinvert(self) -> None:
        self.basis, self.head = reinvert(self.m, self.head, self.cols, self.unit_row)
        for p, c in enumerate(self.head):
            self.pos_of[c] = p

    def _tableau(self, d, y, z, phase) -> dict:
        ncol = len(self.cols)
        if self.m * ncol > TABLEAU_LIMIT:
            return {"omitted": f"the model is larger than {TABLEAU_LIMIT} tableau entries"}
        rows = []
        for p in range(self.m):
            rows.append([ZERO] * ncol)
        for j in range(ncol):
            for p, a in self.basis.ftran(self.cols[j]).items():
                rows[p][j] = a
        sign = 1 if phase == 1 else self.f.sign
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
