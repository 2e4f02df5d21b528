"""Priority tiers: solve each stage in order, holding earlier optima exactly.

Stage k is the linear program :func:`exactlp.model.stage_model` builds: every
constraint, plus one equality row per earlier stage holding its objective at the
optimum that stage's certificate proves.  An exact tool can hold these values
exactly; a floating-point one would have to relax them by a tolerance.
"""

from __future__ import annotations

from dataclasses import dataclass

from .model import Model, stage_model


@dataclass(frozen=True)
class StagedResult:
    #: (stage name, the stage's linear program, its SolveResult), in order; stops at
    #: the first stage that is not optimal
    stages: tuple

    @property
    def final(self):
        return self.stages[-1][2]


def solve_stages(model: Model, listener=None, **options) -> StagedResult:
    from .solver import Status, solve

    held = []
    out = []
    for k, st in enumerate(model.stages):
        mk = stage_model(model, k, held)
        if listener is not None:
            listener(("stage", k + 1, st.name))
        r = solve(mk, listener=listener, **options)
        out.append((st.name, mk, r))
        if r.status is not Status.OPTIMAL:
            break
        held.append(r.objective)
    return StagedResult(tuple(out))


def staged_certificate(model: Model, staged: StagedResult) -> dict:
    from .certificate import build_certificate

    inner = [{"name": name, "certificate": build_certificate(mk, r)} for name, mk, r in staged.stages]
    top = dict(inner[-1]["certificate"])
    top["model"] = {"name": model.name, "fingerprint": model.fingerprint}
    for k in ("primal", "activities", "duals", "reduced_costs", "dual_objective", "farkas", "crossed_bounds",
              "ray", "ray_activities", "ray_objective"):
        top.pop(k, None)
    top["stages"] = inner  # the top-level status and objective are the last stage's
    return top
