"""Events the pivot loop emits.  The loop does no I/O: listeners do.

Numbers are Fractions in the model's sense (phase 2) or the sum of
infeasibilities (phase 1: the artificials' sum, or in a phase 1 by the
dual simplex the basic values' distances outside their bounds; there a pivot's
``ratio`` is the dual step ``|d_q / alpha_pq|`` and ``reduced_cost`` is in the
model's sense).  Column references are (label, kind) with kind
one of ``variable``, ``slack`` (the logical of a constraint) and
``artificial`` (phase 1 only).
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction


@dataclass(frozen=True)
class WarmStart:
    """A basis suggested by a floating-point solver, and what the exact check made of it."""

    source: str  # e.g. "highs"
    float_status: str  # what the float solver said (information only)
    accepted: bool
    reason: str  # why it was accepted or rejected, in words


@dataclass(frozen=True)
class Start:
    artificial_rows: tuple[str, ...]  # constraints that needed an artificial column
    basis: tuple[tuple[str, str], ...]  # (label, kind) by position
    at_upper: tuple[tuple[str, str], ...]  # nonbasic columns starting at their upper bound
    phase: int  # 1 if phase 1 is needed, else 2
    objective: Fraction


@dataclass(frozen=True)
class Pivot:
    iteration: int
    phase: int
    entering: tuple[str, str]
    reduced_cost: Fraction
    direction: int  # +1 the entering column increases, -1 it decreases
    leaving: tuple[str, str] | None  # None for a bound flip
    leaving_bound: str | None  # "lower" | "upper"
    ratio: Fraction | None
    step: Fraction
    objective: Fraction
    degenerate: bool
    rule: str
    tableau: dict | None = None
    #: a dual pivot's bound flips, made before it: (column, the bound it moved to)
    flipped: tuple = ()


@dataclass(frozen=True)
class PhaseEnd:
    phase: int
    objective: Fraction
    pivots: int


@dataclass(frozen=True)
class Finish:
    status: str
    objective: Fraction | None
    pivots_phase1: int
    pivots_phase2: int
    bound_flips: int
