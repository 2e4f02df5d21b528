"""The long differential run: python tests/long_differential.py N [--forced] [--partial] [--refine] [--whole]
(N random models against scipy HiGHS).

--forced: the nucleus of every factorisation on integer rows from its first
step, every basis solve scaled, every factorisation copied for the dual weights'
short tau (solver/shadow.py) and the primal's steered pricing (solver/steer.py),
a factorisation every 3 updates (so that small models reach those paths),
and every reduced-cost and dual update checked
against a recomputation (the paths the Netlib problems take only on long numbers).
--partial: partial pricing on every model (the wide models' rule; its scans on
integers or, with nested denominators, on fractions).
--refine: every model also solved from HiGHS's basis checked by refinement
(solver/refine.py, forced on every basis, its float inverse made on a thread of
its own beside the nonsingularity check), which must give the same exact
result as the same start checked by factorisation.
--whole: the dual phase's reduced costs kept whole (solver/whole.py) on every
model, however few its columns.
"""
import sys
import time
from pathlib import Path
from hypothesis import given, settings, HealthCheck
sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
from tests.helpers import farkas_holds, optimum_holds, ray_holds, reference_failure, scipy_solve, solve_verified
from tests.strategies import lp_models
N = int(sys.argv[1])
if "--forced" in sys.argv[2:]:
    import exactlp.solver.basis as basis_module
    import exactlp.solver.simplex as simplex_module

    basis_module.INT_ROWS_BITS = 0
    basis_module.SCALE_BITS = basis_module.SCALE_MIN_SEEN = basis_module.SCALE_SPREAD = 0
    basis_module.SCALE_RATIO = basis_module.SCALE_MAX_BITS = 10**9
    simplex_module.Simplex.check_updates = True
    import exactlp.solver.dual as dual_module

    dual_module.TAU_SHORT_BITS = 0
    import exactlp.solver.steer as steer_module

    steer_module.STEER_BITS = 0
    # and a factorisation every 3 updates, so that small models get their
    # copies (and the steered pricing) after a few pivots
    simplex_module.refactor_every = lambda m, scaled: 3
if "--partial" in sys.argv[2:]:
    import exactlp.solver.simplex as simplex_module

    simplex_module.PARTIAL_FACTOR = 0
if "--whole" in sys.argv[2:]:
    import exactlp.solver.whole as whole_module

    whole_module.MIN_COLUMNS = 0
REFINE = "--refine" in sys.argv[2:]
if REFINE:
    import exactlp.solver.simplex as simplex_module
    from exactlp.floatlp import highs_available

    assert highs_available(), "--refine needs highspy"
    import exactlp.solver.refine as refine_module

    refine_module.BACKGROUND_ROWS = 1
count = {"n": 0}
@settings(max_examples=N, deadline=None, database=None, suppress_health_check=list(HealthCheck))
@given(lp_models(max_vars=7, max_rows=7))
def run(model):
    count["n"] += 1
    ours = solve_verified(model)
    if REFINE and model.constraints:
        simplex_module.REFINE_WHEN = 0
        refined = solve_verified(model, warm_start=True)
        simplex_module.REFINE_WHEN = 10**12
        plain = solve_verified(model, warm_start=True)
        same = ("status", "objective", "primal", "duals", "reduced_costs", "farkas_rows", "ray", "iterations")
        assert all(getattr(refined, k, None) == getattr(plain, k, None) for k in same), (refined, plain)
        if "refinement" in refined.warm_start:
            count["refined"] = count.get("refined", 0) + 1
    if ours.status.value == "infeasible" and ours.crossed is None:
        assert farkas_holds(model, ours.farkas_rows)  # (in Fractions, no code shared with the verifier)
    if ours.status.value == "unbounded":
        assert ray_holds(model, ours.ray)
    if ours.status.value == "optimal":
        assert optimum_holds(model, ours)
    st, obj, ref_x = scipy_solve(model, with_point=True)
    why = reference_failure(model, ours, st, obj, ref_x)
    if why:
        # settled in Fractions (see tests/helpers.py); ours is verified
        count[why] = count.get(why, 0) + 1
        return
    assert ours.status.value == st, (ours.status, st)
    if obj is not None:
        assert abs(float(ours.objective) - obj) <= 1e-6 * max(1, abs(obj)), (ours.objective, obj)
t=time.time(); run(); print("tried", count, "in", round(time.time()-t,1), "s")
