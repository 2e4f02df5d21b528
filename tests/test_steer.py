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

from .helpers import always_scaled, scipy_solve, solve_verified
from .models import KNOWN


def _dense_mixed(m: int, n: int, seed: int):
    """A dense model with fractional entries, some rows at most and some at
    least a bound, feasible at a point of its own (invented numbers): the slack
    basis is not dual feasible (maximise positive costs over ``x >= 0``), so
    both phases are the primal method's, and its bases carry long numbers."""
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
        if i % 3 == 2:
            lines.append(f"  r{i}: {terms} >= {act - rnd.randint(0, 3)}")
        else:
            lines.append(f"  r{i}: {terms} <= {act + rnd.randint(1, 30)}")
    return model_from_text("\n".join(lines) + "\n")


def _count(monkeypatch, name: str) -> list:
    """Count the calls of ``SteeredPricing.<name>`` (one entry a call)."""
    plain = getattr(steer_module.SteeredPricing, name)
    calls: list = []

    def counting(self, *a):
        calls.append(1)
        return plain(self, *a)

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
    # 2^80 units of 2^-SHIFT, times 1 + |d_j|): the same status and optimum as
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
