"""The primal pricing steered by short reduced costs (exactlp/solver/steer.py).

The short values only choose which improving column enters; every step and
every proof stays exact.  Checked here: the short ``rho_p`` against the exact
btran of the same basis, the short reduced costs against the exact ones at
every pivot (``check_updates``), the end of a phase on an exact proof, the
way back to exact values when a short value is wrong, and the optimum and the
verified certificate against the exact path and scipy's HiGHS.
"""

from __future__ import annotations

import random
from fractions import Fraction as F

import pytest
from gmpy2 import mpq, mpz

import exactlp
from exactlp.io import model_from_text
from exactlp.solver import shadow
from exactlp.solver import simplex as simplex_module
from exactlp.solver import steer as steer_module

from .helpers import always_scaled, network, scipy_solve, solve_verified
from .models import KNOWN


def _dense_mixed(m: int, n: int, seed: int, equal_every: int = 0):
    """A dense model with fractional entries, some rows at most and some at
    least a bound, feasible at a point of its own (invented numbers): the slack
    basis is not dual feasible (maximise positive costs over ``x >= 0``), so
    both phases are the primal method's, and its bases carry long numbers.
    With ``equal_every`` k, every k-th row is an equality at that point."""
    rnd = random.Random(seed)
    frac = lambda: F(rnd.randint(1, 40), rnd.randint(1, 13))  # noqa: E731
    x0 = [F(rnd.randint(1, 9), rnd.randint(1, 5)) for _ in range(n)]
    cols = [f"x{j}" for j in range(n)]
    lines = ["maximize: " + " + ".join(f"{frac()} {c}" for c in cols), "variables:"]
    lines += [f"  {c}: {{}}" for c in cols] + ["constraints:"]
    for i in range(m):
        coef = {j: frac() for j in range(n) if rnd.random() < 0.6 or i == 0} or {0: F(1)}
        act = sum(a * x0[j] for j, a in coef.items())
        terms = " + ".join(f"{a} {cols[j]}" for j, a in coef.items())
        if equal_every and i % equal_every == equal_every - 1:
            lines.append(f"  r{i}: {terms} = {act}")
        elif i % 3 == 2:
            lines.append(f"  r{i}: {terms} >= {act - rnd.randint(0, 3)}")
        else:
            lines.append(f"  r{i}: {terms} <= {act + rnd.randint(1, 30)}")
    return model_from_text("\n".join(lines) + "\n")


def _count(monkeypatch, name: str) -> list:
    """Count the calls of ``SteeredPricing.<name>`` (one entry a call)."""
    plain = getattr(steer_module.SteeredPricing, name)
    calls: list = []

    def counting(self, *a, **kw):
        calls.append(1)
        return plain(self, *a, **kw)

    monkeypatch.setattr(steer_module.SteeredPricing, name, counting)
    return calls


def _exact_path(model):
    with pytest.MonkeyPatch.context() as mp:
        mp.setattr(steer_module, "STEER_SHORT", False)
        return solve_verified(model, warm_start=False)


MODELS = [_dense_mixed(12, 16, seed=1), _dense_mixed(25, 30, seed=2), _dense_mixed(40, 24, seed=5)]


@pytest.mark.parametrize("model", MODELS + [model_from_text(text) for _, text, *_ in KNOWN[:6]])
def test_steered_path_ends_on_the_exact_optimum(monkeypatch, model):
    # every basis gets a short copy (STEER_BITS 0), and check_updates compares
    # the short reduced costs with the exact ones before every pivot (within
    # 2^-160, times 1 + |d_j|): the same status and optimum as
    # the exact path, a verified certificate, and Fractions out
    monkeypatch.setattr(steer_module, "STEER_BITS", 0)
    monkeypatch.setattr(simplex_module.Simplex, "check_updates", True)
    updates = _count(monkeypatch, "_steer_update")
    r = solve_verified(model, warm_start=False)
    r0 = _exact_path(model)
    assert r.status is r0.status
    if r.status is exactlp.Status.OPTIMAL:
        assert r.objective == r0.objective and type(r.objective) is F
        assert all(type(v) is F for v in (*r.primal.values(), *r.duals.values(), *r.reduced_costs.values()))
    if model in MODELS:
        assert r.status is exactlp.Status.OPTIMAL and len(updates) > 5


def _primal_path(model):
    from exactlp.solver.events import Pivot

    events: list = []
    r = solve_verified(model, warm_start=False, listener=events.append)
    return r, [(e.phase, e.entering, e.leaving, e.rule, e.ratio, e.reduced_cost) for e in events
               if isinstance(e, Pivot)]


@pytest.mark.parametrize("model", MODELS + [_dense_mixed(30, 40, seed=7)])
def test_steered_primal_path_is_the_exact_rules_path(monkeypatch, model):
    # the devex choice made on short values (their scores, the ties by the larger
    # |d_j| and then the lower index, the weights updated from the short row) is
    # the exact rule's, pivot for pivot, on these models with fractional
    # entries: the same entering and leaving columns, rules, ratios and exact
    # reduced costs in the log as with the short values off
    monkeypatch.setattr(steer_module, "STEER_BITS", 0)
    updates = _count(monkeypatch, "_steer_update")
    r, steered = _primal_path(model)
    monkeypatch.setattr(steer_module, "STEER_SHORT", False)
    r0, exact = _primal_path(model)
    assert len(updates) > 5 and steered == exact and r.objective == r0.objective


WIDE = model_from_text(
    "minimize: -x0\nvariables: {x0: {}, x1: {}, x2: free, x3: {}, x4: free, x5: {}}\nconstraints:\n"
    "  r0: -100000 x4 + x5 >= 1\n  r1: x2 - x4 <= 0\n  r2: -100000 x4 + x5 >= 1\n"
    "  r3: -100000 x4 + x5 >= 1\n  r4: 1/100000 x2 + 10000 x5 >= 0\n")


def _forced_as_the_long_run(mp) -> None:
    """The settings of ``tests/long_differential.py --forced``: integer rows from
    the first step, every solve scaled, a short copy of every factorisation and
    a factorisation every 3 updates, the updates checked."""
    from exactlp.solver import basis as basis_module

    mp.setattr(basis_module, "INT_ROWS_BITS", 0)
    for name in ("SCALE_BITS", "SCALE_MIN_SEEN", "SCALE_SPREAD"):
        mp.setattr(basis_module, name, 0)
    for name in ("SCALE_RATIO", "SCALE_MAX_BITS"):
        mp.setattr(basis_module, name, 10**9)
    mp.setattr(steer_module, "STEER_BITS", 0)
    mp.setattr(simplex_module, "refactor_every", lambda m, scaled: 3)
    mp.setattr(simplex_module.Simplex, "check_updates", True)


def test_short_values_on_coefficients_of_ten_to_the_five_and_minus_five(monkeypatch):
    # Found by the forced differential run (thirty-second session): with entries
    # of 10^5 and 10^-5 the short reduced cost of a column whose exact one is 0
    # came out 2^-239.6 off, past the check's old bound of 2^-240 and far inside
    # what the reading needs (under half the grid, 2^-129: SNAP).  The check now
    # allows 2^-160 times 1 + |d_j|; the worst error met is pinned, the outcome
    # is the exact path's (unbounded, with a verified ray), and an error of
    # 2^-150 put into one short value is still caught.
    _forced_as_the_long_run(monkeypatch)
    worst = []
    check = steer_module.SteeredPricing._steer_check

    def measuring(self, cost, sd):
        exact = self._reduced_costs(cost, self._duals(cost))
        k = shadow.SHIFT
        worst.append(max((abs(v - (e.numerator << k) // e.denominator) for v, e in zip(sd, exact)
                          if v is not None), default=0))
        return check(self, cost, sd)

    monkeypatch.setattr(steer_module.SteeredPricing, "_steer_check", measuring)
    r = solve_verified(WIDE, warm_start=False)
    assert r.status is exactlp.Status.UNBOUNDED and r.status is _exact_path(WIDE).status
    assert len(worst) == 2 and max(worst).bit_length() == 81  # 2^80 <= error < 2^81 units of 2^-320
    assert max(worst) < 1 << (steer_module.SNAP - 32)

    update = steer_module.SteeredPricing._steer_update

    def spoiling(self, sd, *a, **kw):
        update(self, sd, *a, **kw)
        j = next(j for j, v in enumerate(sd) if v is not None and self.state[j] != simplex_module.BASIC)
        sd[j] += 1 << (shadow.SHIFT - 150)

    monkeypatch.setattr(steer_module.SteeredPricing, "_steer_update", spoiling)
    with pytest.raises(AssertionError, match="steered reduced costs drifted"):
        exactlp.solve(WIDE, warm_start=False)


def test_steered_optimum_matches_scipy():
    # the default rule (entries of 32 bits or more on average) on a model whose
    # bases grow long: the optimum agrees with scipy.optimize.linprog's HiGHS
    # within its tolerance (an outside reference, in double precision)
    model = _dense_mixed(40, 24, seed=5)
    with pytest.MonkeyPatch.context() as mp:
        updates = _count(mp, "_steer_update")
        r = solve_verified(model, warm_start=False)
    assert r.status is exactlp.Status.OPTIMAL and updates
    status, ref = scipy_solve(model)
    assert status == "optimal" and abs(float(r.objective) - ref) <= 1e-7 * max(1.0, abs(ref))


def test_short_row_of_the_inverse_is_the_exact_row_to_many_bits(monkeypatch):
    # ShortFactors.solve_t against the exact btran of the same basis (the LU
    # with its updates): each operation loses at most one unit of 2^-SHIFT
    always_scaled(monkeypatch)
    monkeypatch.setattr(steer_module, "STEER_BITS", 0)
    seen = []
    solve_t = shadow.ShortFactors.solve_t

    def checking(self, v):
        got = solve_t(self, dict(v))
        assert all(type(t) in (int, type(mpz(0))) for t in got.values())  # integers, no float
        unit = mpq(1, 1 << shadow.SHIFT)
        exact = self.basis.btran({i: a * unit for i, a in v.items()})
        exact = {i: x for i, x in enumerate(exact) if x}
        err = max(abs(mpq(got.get(i, 0)) * unit - exact.get(i, mpq(0))) for i in set(got) | set(exact))
        seen.append((err, max(abs(t) for t in exact.values()), len(self.etas)))
        return got

    monkeypatch.setattr(shadow.ShortFactors, "solve_t", checking)
    for model in MODELS:
        assert solve_verified(model, warm_start=False).status is exactlp.Status.OPTIMAL
    assert len(seen) > 30 and max(e for _, _, e in seen) >= 3  # copies followed several pivots
    for err, top, _ in seen:
        assert err <= (1 + top) / 2**120


def test_wrong_short_value_goes_back_to_exact(monkeypatch):
    # the short reduced costs turned to the wrong sign (after the first update,
    # every column): the chosen column's exact d_q does not improve, the loop
    # gives the short values up (no steered update follows in that phase) and
    # ends on exact ones, at the same optimum
    monkeypatch.setattr(steer_module, "STEER_BITS", 0)
    plain = steer_module.SteeredPricing._steer_update
    spoiled: list = []
    log: list = []

    def spoiling(self, sd, *a):
        plain(self, sd, *a)
        log.append(("update", self.pivots[2]))
        if not spoiled:
            spoiled.append(sd)
            for j, v in enumerate(sd):
                if v is not None:
                    sd[j] = -v
            self._steer_rescore(sd)

    plain_dq = steer_module.SteeredPricing._steer_dq

    def exact_dq(self, cost, q, alpha, ad):
        dq = plain_dq(self, cost, q, alpha, ad)
        if spoiled and spoiled[0][q] is not None:
            log.append(("wrong" if (dq < 0) != (spoiled[0][q] < 0) else "right", self.pivots[2]))
        return dq

    monkeypatch.setattr(steer_module.SteeredPricing, "_steer_update", spoiling)
    monkeypatch.setattr(steer_module.SteeredPricing, "_steer_dq", exact_dq)
    # the exact values priced again after the return meet weights that the
    # steered pivots have grown, and the scores made from them must read them
    # (check_updates would also check the short values, which this test spoils)
    from exactlp.solver.pricing import _log16

    plain_price = simplex_module.Simplex._price
    scored: list = []

    def checked_price(self, d, weighted):
        got = plain_price(self, d, weighted)
        if self.scores is not None:
            assert all(self.scores[j] == 2 * _log16(dj) - self.weights[j] for j, dj in enumerate(d) if dj)
            scored.append(any(self.weights))
        return got

    monkeypatch.setattr(simplex_module.Simplex, "_price", checked_price)
    model = MODELS[1]
    r = solve_verified(model, warm_start=False)
    assert r.status is exactlp.Status.OPTIMAL and r.objective == _exact_path(model).objective
    kinds = [k for k, _ in log]
    first_wrong = kinds.index("wrong")
    # the wrong column came right after the spoiled update, and no steered update
    # followed until the phase changed (pivots[2] counts phase 2's pivots: 0 in phase 1)
    assert kinds[first_wrong - 1] == "update"
    phase_of = lambda n: 2 if n else 1  # noqa: E731
    later = [n for k, n in log[first_wrong + 1:] if k == "update"]
    assert all(phase_of(n) != phase_of(log[first_wrong][1]) for n in later)
    assert any(scored)  # (scores made over grown weights were checked)


def test_phase_ends_only_on_an_exact_proof(monkeypatch):
    # short values that find no improving column at all (as if every one were in
    # the dead zone): each phase then prices exactly afresh, finds the improving
    # columns, and goes on with exact values to the same optimum
    monkeypatch.setattr(steer_module, "STEER_BITS", 0)
    monkeypatch.setattr(steer_module.SteeredPricing, "_steer_price", lambda self, sd: -1)
    entered = _count(monkeypatch, "_steer_enter")
    model = MODELS[0]
    r = solve_verified(model, warm_start=False)
    assert entered and r.status is exactlp.Status.OPTIMAL
    assert r.objective == _exact_path(model).objective and r.pivots_phase2 > 0


def test_a_start_at_the_optimum_is_priced_once(monkeypatch):
    # a solve from its own optimal basis (as each range probe's is): the exact
    # reduced costs are priced, the short ones made from them find no improving
    # column, and the exact ones, with no pivot since, are the proof as they
    # are: one btran of the duals, not a second for the same values
    from exactlp.floatlp import BasisHint

    monkeypatch.setattr(steer_module, "STEER_BITS", 0)
    monkeypatch.setattr(simplex_module.Simplex, "check_updates", True)
    model = MODELS[1]
    first = solve_verified(model, warm_start=False)
    own = BasisHint.of_result(first, len(model.variables), len(model.constraints))
    entered = _count(monkeypatch, "_steer_enter")
    priced: list = []
    plain = simplex_module.Simplex._duals_scaled
    monkeypatch.setattr(simplex_module.Simplex, "_duals_scaled", lambda self, c: priced.append(1) or plain(self, c))
    again = solve_verified(model, start_basis=own)
    assert again.iterations == 0 and again.objective == first.objective
    assert len(entered) == 1 and len(priced) == 1
    assert again.duals == first.duals and again.reduced_costs == first.reduced_costs
    assert all(type(v) is F for v in (*again.duals.values(), *again.reduced_costs.values()))


def test_dead_zone_is_not_improving():
    # a short value that rounds to zero on the grid of 2^SNAP units (under half a
    # unit) is read as zero; past it, by its sign; ties of scores to the larger
    # snapped |d_j|, then the lower index
    class Fake(steer_module.SteeredPricing):
        pass

    fake = Fake()
    zone = steer_module.DEAD_ZONE
    unit = 1 << steer_module.SNAP
    assert zone == unit // 2 and steer_module._snap(zone - 1) == 0 and steer_module._snap(-zone) == 1
    lo, up, free = steer_module.AT_LOWER, steer_module.AT_UPPER, steer_module.AT_ZERO
    fake.state = [lo, lo, up, free]
    fake.steer_scores = [0, 0, 0, 0]
    assert fake._steer_price([-(zone - 1), zone, -zone, zone - 1]) == -1
    assert fake._steer_price([-zone, None, None, None]) == 0
    assert fake._steer_price([None, None, zone, None]) == 2
    assert fake._steer_price([None, None, None, -zone]) == 3
    fake.steer_scores = [5, 0, 0, 7]
    assert fake._steer_price([-zone, None, None, zone]) == 3
    fake.steer_scores = [7, 0, 7, 7]
    # 3 units against 3 units less a quarter (both snap to 3): the lower index;
    # 3 units and a half snaps to 4, and wins
    assert fake._steer_price([-3 * unit, None, 3 * unit - unit // 4, None]) == 0
    assert fake._steer_price([-3 * unit, None, 3 * unit + unit // 2, None]) == 2


# --- the dual phase ---------------------------------------------------------


def _dense_dual_feasible(m: int, n: int, seed: int, infeasible: bool = False, free_every: int = 0,
                         shrink: int = 1, equal_every: int = 0):
    """Minimise positive costs over ``0 <= x <= u`` subject to ``>=`` rows with
    fractional entries (invented numbers): the slack basis is dual feasible, so
    phase 1 is the dual simplex's, with bound flips.  With ``infeasible``, two
    rows more that cannot both hold (the first half of the columns at most
    ``cap``, and at least ``cap + 1`` plus the last column), which the dual
    phase finds after some pivots.  With ``free_every`` k, every k-th column
    costs nothing (so some dual pivots are degenerate), and with ``shrink`` s
    every row's entries and side are divided by s (violations under 1); with
    ``equal_every`` k every k-th row is an equality (its slack fixed at 0)."""
    rnd = random.Random(seed)
    frac = lambda: F(rnd.randint(1, 40), rnd.randint(1, 13))  # noqa: E731
    cols = [f"x{j}" for j in range(n)]
    ub = [rnd.randint(2, 9) for _ in cols]
    costs = [frac() for _ in cols]
    if free_every:
        costs = [F(0) if j % free_every == 0 else c for j, c in enumerate(costs)]
    lines = ["minimize: " + " + ".join(f"{c} {x}" for c, x in zip(costs, cols)), "variables:"]
    lines += [f"  {c}: {{upper: {u}}}" for c, u in zip(cols, ub)] + ["constraints:"]
    for i in range(m):
        coef = {j: frac() / shrink for j in range(n) if rnd.random() < 0.6 or j == i % n}
        terms = " + ".join(f"{a} {cols[j]}" for j, a in coef.items())
        sense = "=" if equal_every and i % equal_every == equal_every - 1 else ">="
        lines.append(f"  r{i}: {terms} {sense} {sum(coef.values())}")
    if infeasible:
        half, cap = cols[: n // 2], sum(ub[: n // 2]) // 3
        lines.append(f"  cap: {' + '.join(half)} <= {cap}")
        lines.append(f"  need: {' + '.join(half)} - {cols[-1]} >= {cap + 1}")
    return model_from_text("\n".join(lines) + "\n")


def _events(model):
    from exactlp.solver.events import Pivot

    events: list = []
    r = solve_verified(model, warm_start=False, listener=events.append)
    return r, [(e.entering, e.leaving, e.flipped, e.ratio, e.reduced_cost) for e in events if isinstance(e, Pivot)]


DUAL_MODELS = [_dense_dual_feasible(20, 30, seed=1), _dense_dual_feasible(40, 50, seed=4)]


def _short_everywhere(monkeypatch) -> None:
    """A short copy of every factorisation (STEER_BITS 0), and a factorisation
    every 3 updates, so that small models are steered after a few pivots."""
    monkeypatch.setattr(steer_module, "STEER_BITS", 0)
    monkeypatch.setattr(simplex_module, "refactor_every", lambda m, scaled: 3)


@pytest.mark.parametrize("model", DUAL_MODELS + [_dense_dual_feasible(20, 30, seed=1, equal_every=3)])
def test_steered_dual_phase_takes_the_exact_path(monkeypatch, model):
    # a short copy of every factorisation (STEER_BITS 0) and the short values
    # checked against the exact ones before every dual pivot: the same pivots,
    # flips, ratios and reduced costs in the log as the exact dual phase (the
    # ratios and |alpha_pj| read rounded keep the exact ties), the same optimum.
    # Every short row leads to its pivot: no choice is made again on exact
    # values (the short values are right here), column 0 among those entering.
    # (The third model's equality rows: fixed slacks leave on short values and
    # take no reduced cost, so never enter again, as on the exact path)
    _short_everywhere(monkeypatch)
    monkeypatch.setattr(simplex_module.Simplex, "check_updates", True)
    rows = _count(monkeypatch, "_steer_dual_row")
    updates = _count(monkeypatch, "_steer_update")
    returns = _count(monkeypatch, "_unsteered")
    r, steered = _events(model)
    assert len(rows) > 5 and r.bound_flips > 0
    assert len(updates) == len(rows) and not returns
    assert ("x0", "variable") in [e for e, *_ in steered[-len(rows):]]
    monkeypatch.setattr(steer_module, "STEER_DUAL", False)
    r0, exact = _events(model)
    assert steered == exact and r.objective == r0.objective and type(r.objective) is F


def test_steered_dual_phase_proves_infeasibility_exactly(monkeypatch):
    # the short row finds no entering column only where the exact one does not
    # either; the Farkas row comes from the exact values, and the verifier
    # accepts it (solve_verified)
    _short_everywhere(monkeypatch)
    model = _dense_dual_feasible(20, 30, seed=1, infeasible=True)
    returns = []
    plain = steer_module.SteeredPricing._unsteered

    def counting(self, cost):
        returns.append(1)
        return plain(self, cost)

    monkeypatch.setattr(steer_module.SteeredPricing, "_unsteered", counting)
    r = solve_verified(model, warm_start=False)
    assert r.status is exactlp.Status.INFEASIBLE and r.farkas_rows
    assert returns  # (the last pivot, by the short row, was made again exactly)
    status, _ = scipy_solve(model)
    assert status == "infeasible"


def _traced(monkeypatch, spoil=None) -> list:
    """The steered dual phase's steps, in order: each ratio test on a short row
    ("short") or an exact one ("exact"), each short row made ("row"), each
    set of flips made or undone ("flip"), each exact ``d_q`` of a short choice
    ("dq"), each pivot's update of the short values ("update") and each return
    to exact values ("unsteered").  ``spoil(self, row, s, q, flips)`` may answer
    one short ratio test wrongly: it returns the wrong ``(q, flips)``, marked
    "spoiled" in the trace, or None to leave the answer as it is."""
    from exactlp.solver import dual as dual_module

    trace: list = []
    entering = dual_module.DualPhase._dual_entering

    def ratio_test(self, row, d, s, bland, slope=None, near=None, arrays=None):
        trace.append("exact" if near is None else "short")
        got = entering(self, row, d, s, bland, slope, near, arrays)
        if near is not None and spoil is not None and "spoiled" not in trace:
            wrong = spoil(self, row, s, *got)
            if wrong is not None:
                trace.append("spoiled")
                return wrong
        return got

    monkeypatch.setattr(dual_module.DualPhase, "_dual_entering", ratio_test)
    for cls, name, mark in ((dual_module.DualPhase, "_flip", "flip"),
                            (steer_module.SteeredPricing, "_steer_dq", "dq"),
                            (steer_module.SteeredPricing, "_steer_dual_row", "row"),
                            (steer_module.SteeredPricing, "_steer_update", "update"),
                            (steer_module.SteeredPricing, "_unsteered", "unsteered")):
        def step(self, *a, _plain=getattr(cls, name), _mark=mark, **kw):
            trace.append(_mark)
            return _plain(self, *a, **kw)

        monkeypatch.setattr(cls, name, step)
    return trace


def _moves(self, j, v, s) -> bool:
    """Does nonbasic column ``j``, with ``v`` its entry of the leaving row, move
    ``x_b`` towards its bound (``s`` the violation's sign)?"""
    st = self.state[j]
    return (st == steer_module.AT_LOWER and s * v > 0) or (st == steer_module.AT_UPPER and s * v < 0)


def _nonbasic_off(self, row, state):
    """A nonbasic column in ``state`` that the row does not hold (its exact
    entry 0 there), or None."""
    from exactlp.solver import dual as dual_module

    return next((j for j in range(len(self.state)) if self.state[j] == state and j not in row
                 and dual_module.BASIC != self.state[j] and self.lower[j] != self.upper[j]), None)


#: each wrong answer of the short ratio test, and the steps that must follow
#: it: the check that refuses it (the exact d_q of the choice, or the flips'
#: own check), the flips undone, the short values given up, and the ratio
#: test made again on the exact row
SPOILS = {
    # no column enters: the exact row is asked
    "none enters": (lambda self, row, s, q, flips: (-1, []) if q >= 0 and not flips else None,
                    ["unsteered", "exact"]),
    # a column whose pivot has the wrong sign for its bound
    "wrong sign": (lambda self, row, s, q, flips: next(
        ((j, []) for j, v in row.items() if not _moves(self, j, v, s)), None) if not flips else None,
        ["dq", "unsteered", "exact"]),
    # a column at its lower bound, or at its upper, whose exact pivot is 0 (no
    # flips beside it)
    "zero pivot at lower": (lambda self, row, s, q, flips: (
        None if (j := _nonbasic_off(self, row, steer_module.AT_LOWER)) is None else (j, [])),
        ["dq", "unsteered", "exact"]),
    "zero pivot at upper": (lambda self, row, s, q, flips: (
        None if (j := _nonbasic_off(self, row, steer_module.AT_UPPER)) is None else (j, [])),
        ["dq", "unsteered", "exact"]),
    # every boxed candidate flipped: x_b carried past its bound
    "flips overshoot": (lambda self, row, s, q, flips: (
        None if len(boxed := [j for j, v in row.items() if self.lower[j] is not None
                              and self.upper[j] is not None and _moves(self, j, v, s)]) < 2 else (q, boxed)),
        ["flip", "flip", "unsteered", "exact"]),
    # the flips it found (two or more), beside a column of the wrong sign
    "wrong sign after flips": (lambda self, row, s, q, flips: (
        None if len(flips) < 2 else next(((j, flips) for j, v in row.items() if not _moves(self, j, v, s)),
                                         None)),
        ["flip", "dq", "flip", "unsteered", "exact"]),
}


@pytest.mark.parametrize("spoil", SPOILS)
def test_a_wrong_short_choice_is_refused_undone_and_made_again_exactly(monkeypatch, spoil):
    # the ratio test on short values made to answer wrongly once; right after
    # the wrong answer come exactly the steps that must follow it (SPOILS);
    # the short values are given up once and for the rest of the phase (no
    # short row after that), and the phase ends on the exact optimum with the
    # exact path's count of flips: each flip undone is taken off with its
    # undoing.  The models, the first that meets the wrong answer's condition:
    # the two of DUAL_MODELS, one with violations under 1, and a network
    # (sparse rows: columns at their upper bounds off the leaving row)
    _short_everywhere(monkeypatch)
    wrong, after = SPOILS[spoil]
    trace = _traced(monkeypatch, wrong)
    for model in DUAL_MODELS + [_dense_dual_feasible(20, 30, seed=1, shrink=1000), network(20, 30)]:
        trace.clear()
        r, _ = _events(model)
        if "spoiled" not in trace:
            continue
        k = trace.index("spoiled")
        assert trace[k + 1:k + 1 + len(after)] == after, trace[k - 3:k + 8]
        assert trace.count("unsteered") == 1 and "row" not in trace[k:] and "short" not in trace[k + 1:]
        monkeypatch.setattr(steer_module, "STEER_DUAL", False)
        r0, _ = _events(model)
        monkeypatch.setattr(steer_module, "STEER_DUAL", True)
        assert r.status is exactlp.Status.OPTIMAL and r.objective == r0.objective and type(r.objective) is F
        assert r.bound_flips == r0.bound_flips
        return
    pytest.fail(f"no short ratio test could be spoiled as {spoil!r}")


def test_bland_takes_over_from_short_values_at_once(monkeypatch):
    # GUARD_RUN_FACTOR 0: the first degenerate dual pivot hands over to Bland's
    # choice, which reads exact values: a degenerate pivot made on short values
    # is followed at once by the return to exact values (before its event),
    # and no short row is made after it; the next pivot is Bland's, and the
    # optimum the exact one
    from exactlp.solver.events import Pivot

    _short_everywhere(monkeypatch)
    monkeypatch.setattr(simplex_module, "GUARD_RUN_FACTOR", 0)
    model = _dense_dual_feasible(40, 50, seed=4, free_every=4)
    trace = _traced(monkeypatch)
    r = solve_verified(model, warm_start=False, listener=lambda e: trace.append(
        (e.rule, e.degenerate) if isinstance(e, Pivot) else None))
    assert trace.count("unsteered") == 1
    k = trace.index("unsteered")
    assert trace[k - 1] == "update" and trace[k + 1] == ("dual", True)
    assert "short" in trace[:k] and "row" not in trace[k:] and "short" not in trace[k:]
    later = [e for e in trace[k + 2:] if type(e) is tuple]
    assert later and later[0][0] == "dual bland (last resort)"
    monkeypatch.setattr(steer_module, "STEER_DUAL", False)
    assert r.objective == exactlp.solve(model, warm_start=False).objective and type(r.objective) is F


def test_near_ratio_rounds_to_the_bits_of_the_value():
    # derived by hand: 1/3 lies in [2^-2, 2^-1), so 64 bits of it are
    # round(2^65 / 3) / 2^65; a value on the grid reads as itself; two values
    # 2^-200 apart (relative) read the same; the sign is kept
    near = steer_module.near_ratio
    assert steer_module.RATIO_BITS == 64
    m = ((1 << 66) // 3 + 1) >> 1
    assert near(mpq(1, 3)) == mpq(m, 1 << 65) and m.bit_length() == 64
    assert near(mpq(-1, 3)) == -mpq(m, 1 << 65)
    assert near(mpq(5, 4)) == mpq(5, 4) and near(mpq(0)) == 0 and near(mpq(3 << 200)) == 3 << 200
    t = mpq(10**30 + 7, 3**50)
    assert near(t * (1 + mpq(1, 1 << 200))) == near(t) == near(t * (1 - mpq(1, 1 << 200)))
    top = near(mpq((1 << 80) - 1))  # rounds up to the next power of two
    assert top == 1 << 80 and type(top) is type(mpq(0))




def test_short_rows_over_columns_kept_in_fractions_take_the_exact_path(monkeypatch):
    # DUAL_INTS_SLACK far below 0: every column is kept in fractions (as a column
    # whose denominators hold many different primes is), so each short row's
    # entry is summed from the short rho and the column's fractions and floored
    # (SteeredPricing._steer_sums), not read off the integer rows; the dual and
    # primal paths are still the exact ones, pivot for pivot
    from exactlp.solver import rows as rows_module

    _short_everywhere(monkeypatch)
    monkeypatch.setattr(rows_module, "DUAL_INTS_SLACK", -10**6)
    kept: list = []
    plain = steer_module.SteeredPricing._steer_sums

    def sums(self, p):
        kept.append(len(self._int_rows()[2]) == len(self.cols))
        return plain(self, p)

    monkeypatch.setattr(steer_module.SteeredPricing, "_steer_sums", sums)
    for model, path in ((DUAL_MODELS[0], _events), (MODELS[1], _primal_path)):
        kept.clear()
        r, steered = path(model)
        with pytest.MonkeyPatch.context() as mp:
            mp.setattr(steer_module, "STEER_SHORT", False)
            r0, exact = path(model)
        assert len(kept) > 5 and all(kept) and steered == exact and r.objective == r0.objective


def test_the_short_dual_row_drops_and_zeros_entries_as_its_rule_says():
    # _steer_dual_row, against its rule written out: a basic column is left out;
    # so is an entry whose magnitude is at most the row's largest magnitude over
    # 2^ROW_ZONE (a cancellation's error), and one inside the dead zone; a kept
    # entry is v / e_j; its reduced cost is None when fixed, 0 inside the dead
    # zone, else as it stands.  The largest magnitude is a negative entry (a
    # floor from the largest signed entry would keep the entries under it);
    # entries sit on both sides of the floor and of the zone's edges, with the
    # floor above the zone (a row of long entries) and below it.
    zone, rz = steer_module.DEAD_ZONE, steer_module.ROW_ZONE

    class Fake(steer_module.SteeredPricing):
        def __init__(self, state, escale):
            self.state, self.escale = state, escale

        def _int_rows(self):
            return None, self.escale, []

    def fr(v):
        return None if v is None else F(int(v.numerator), int(v.denominator)) if type(v) is type(mpq(0)) else F(v)

    for big, kept in ((-(zone << (rz + 3)), [0, 2, 3, 8, 9, 10, 11]), (-(zone << (rz - 3)), [0, 5, 6, 8])):
        floor = -big >> rz
        sums = {0: big, 1: floor, 2: floor + 1, 3: -(floor + 1), 4: zone - 1, 5: zone, 6: -zone, 7: 5,
                8: floor + zone, 9: floor + 2, 10: floor + 3, 11: floor + 4, 12: floor + 5, 13: -(zone - 1)}
        state = [1] * 12 + [0, 2]  # column 12 basic
        escale = [1, 1, 3, 1, 1, 1, 1, 1, 1, 1, 1, 1, 1, 1]
        sd = [3, 0, -zone + 1, zone - 1, 1, zone - 1, -zone, 1, None, zone, -zone, 2 * zone, 4, 1]
        row, dd = Fake(state, escale)._steer_dual_row(sums, sd)
        want_row, want_d = {}, {}
        for j, v in sums.items():
            if state[j] == 0 or abs(v) <= floor or abs(v) < zone:
                continue
            want_row[j] = F(v, escale[j])
            want_d[j] = None if sd[j] is None else F(0) if abs(sd[j]) < zone else F(sd[j])
        assert list(row) == list(dd) == list(want_row) == kept, big
        assert {j: fr(v) for j, v in row.items()} == want_row
        assert {j: fr(v) for j, v in dd.items()} == want_d
        assert type(row[0]) is int and dd[8] is None
    assert type(row[5]) is int and dd[5] == 0 and dd[6] == -zone  # (the second row)
    row, dd = Fake([1, 1, 1, 1], [1, 3, 1, 1])._steer_dual_row({0: zone << 4, 1: zone, 2: -zone, 3: zone - 1},
                                                               [zone, -zone + 1, zone - 1, 0])
    assert row == {0: zone << 4, 1: mpq(zone, 3), 2: -zone} and type(row[1]) is type(mpq(0))
    assert dd == {0: zone, 1: 0, 2: 0}


def test_the_primal_guard_returns_to_exact_values_at_once(monkeypatch):
    # GUARD_RUN_FACTOR 0: the first degenerate primal pivot hands over to
    # Bland's choice, which reads exact signs: the short values are dropped
    # there, so no pivot after it updates them (steering is off for the rest of
    # the phase), and the next pivot is Bland's, on exact values; the optimum
    # the exact one
    from exactlp.solver.events import Pivot

    _short_everywhere(monkeypatch)
    monkeypatch.setattr(simplex_module, "GUARD_RUN_FACTOR", 0)
    trace: list = []
    plain = steer_module.SteeredPricing._steer_update

    def update(self, *a, **kw):
        trace.append("update")
        return plain(self, *a, **kw)

    monkeypatch.setattr(steer_module.SteeredPricing, "_steer_update", update)
    # (invented numbers) a dense packing model with three rows x_a <= r x_b,
    # degenerate where both are 0: a degenerate pivot comes while steered
    rnd = random.Random(8)
    n = 20
    lines = ["maximize: " + " + ".join(f"{rnd.randint(1, 40)}/{rnd.randint(1, 13)} x{j}" for j in range(n)),
             "variables:"] + [f"  x{j}: {{}}" for j in range(n)] + ["constraints:"]
    for i in range(15):
        terms = " + ".join(f"{rnd.randint(1, 40)}/{rnd.randint(1, 13)} x{j}" for j in range(n) if rnd.random() < 0.6)
        if terms:
            lines.append(f"  r{i}: {terms} <= {rnd.randint(10, 60)}")
    for k in range(3):
        a, b = rnd.sample(range(n), 2)
        lines.append(f"  e{k}: x{a} - {rnd.randint(1, 5)}/{rnd.randint(1, 5)} x{b} <= 0")
    model = model_from_text("\n".join(lines) + "\n")
    def listener(e):
        if isinstance(e, Pivot):
            trace.append((e.phase, e.rule, e.degenerate))

    r = solve_verified(model, warm_start=False, listener=listener)
    pivots = [k for k, t in enumerate(trace) if type(t) is tuple]
    # the first degenerate pivot made while steered
    first = next(k for k in pivots if trace[k][2] and "update" in trace[:k])
    phase = trace[first][0]
    assert trace[first - 1] == "update"  # its own update of the short values ...
    rest = [t for t in trace[first + 1:] if t == "update" or t[0] == phase]
    assert rest and "update" not in rest  # ... and none after it in its phase
    assert rest[0][1] == "bland (last resort)"
    monkeypatch.setattr(steer_module, "STEER_SHORT", False)
    assert r.objective == exactlp.solve(model, warm_start=False).objective and type(r.objective) is F
