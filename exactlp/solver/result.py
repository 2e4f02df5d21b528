"""The result of a solve: a frozen, versioned record with an Enum status.

Infeasible and unbounded are outcomes, not exceptions; so are the limits.
Only ``OPTIMAL``, ``INFEASIBLE`` and ``UNBOUNDED`` carry a proof.
"""

from __future__ import annotations

import enum
from dataclasses import dataclass, field
from fractions import Fraction
from types import MappingProxyType
from typing import Mapping

RESULT_VERSION = 1


class Status(enum.Enum):
    OPTIMAL = "optimal"
    INFEASIBLE = "infeasible"
    UNBOUNDED = "unbounded"
    ITERATION_LIMIT = "iteration_limit"
    TIME_LIMIT = "time_limit"
    INTERRUPTED = "interrupted"

    @property
    def is_proven(self) -> bool:
        return self in (Status.OPTIMAL, Status.INFEASIBLE, Status.UNBOUNDED)


def frozen_map(d: Mapping | None) -> Mapping:
    return MappingProxyType(dict(d or {}))


@dataclass(frozen=True)
class SolveResult:
    status: Status
    #: exact optimal objective in the model's sense, constant included (optimal only)
    objective: Fraction | None = None
    #: variable -> value: the optimum, or for unbounded a feasible point
    primal: Mapping[str, Fraction] = field(default_factory=lambda: frozen_map({}))
    #: constraint -> row activity a_i x at ``primal``
    activities: Mapping[str, Fraction] = field(default_factory=lambda: frozen_map({}))
    #: constraint -> dual multiplier, model sense (d objective / d bound)
    duals: Mapping[str, Fraction] = field(default_factory=lambda: frozen_map({}))
    #: variable -> reduced cost c_j - a_j^T y, model sense
    reduced_costs: Mapping[str, Fraction] = field(default_factory=lambda: frozen_map({}))
    #: infeasible: constraint -> Farkas multiplier (nonzero ones)
    farkas_rows: Mapping[str, Fraction] = field(default_factory=lambda: frozen_map({}))
    #: infeasible: variable -> bound multiplier (nonzero ones)
    farkas_bounds: Mapping[str, Fraction] = field(default_factory=lambda: frozen_map({}))
    #: infeasible because one item's own bounds cross: ("variable" | "constraint", name)
    crossed: tuple[str, str] | None = None
    #: unbounded: variable -> direction of the improving ray (nonzero ones)
    ray: Mapping[str, Fraction] = field(default_factory=lambda: frozen_map({}))
    #: final basis: labels of the basic columns, and nonbasic columns at their upper bound
    basis: tuple[str, ...] = ()
    at_upper: tuple[str, ...] = ()
    #: the same basis by column index: structural j, or n + i for constraint i's logical
    basis_columns: tuple[int, ...] = ()
    at_upper_columns: tuple[int, ...] = ()
    pivots_phase1: int = 0
    pivots_phase2: int = 0
    bound_flips: int = 0
    seconds: float = 0.0
    pricing: str = "guarded"
    #: "off", or what became of a floating-point basis suggestion
    warm_start: str = "off"
    version: int = RESULT_VERSION

    @property
    def iterations(self) -> int:
        return self.pivots_phase1 + self.pivots_phase2 + self.bound_flips
