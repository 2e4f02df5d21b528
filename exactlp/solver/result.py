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


_ZERO = Fraction(0)


class _DerivedMap(Mapping):
    """An immutable map over the keys of ``keys``, its values derived on access
    from ``own`` entries, a ``base`` map and a ``scale`` (the subclasses say how)."""

    __slots__ = ("_keys", "_own", "_base", "_scale")

    def __iter__(self):
        return iter(self._keys)

    def __len__(self) -> int:
        return len(self._keys)

    def __repr__(self) -> str:
        return f"{type(self).__name__}({dict(self)!r})"


class ScaledMap(_DerivedMap):
    """An immutable map over the keys of ``keys`` whose value at ``k`` is
    ``own[k]`` where given, else ``scale * base[k]`` (0 where ``base`` has no
    ``k``; ``base[k]`` itself when ``scale`` is 1).

    For results that differ from one they derive from in a few entries and by a
    multiple elsewhere: a range's end keeps its own few entries and shares the
    optimum's (its duals are ``u - w y*`` with ``u`` short).  The shared values
    are formed on each access, exactly; nothing is stored per key."""

    __slots__ = ("_one",)

    def __init__(self, keys: Mapping, own: dict, base: Mapping, scale: Fraction = Fraction(1)) -> None:
        self._keys, self._own, self._base, self._scale = keys, own, base, scale
        self._one = scale == 1

    def __getitem__(self, k: str) -> Fraction:
        got = self._own.get(k)
        if got is not None:
            return got
        if k not in self._keys:
            raise KeyError(k)
        b = self._base.get(k)
        if b is None or not self._scale:
            return _ZERO
        return b if self._one else self._scale * b

    def based_on(self, base: Mapping) -> bool:
        """Is this ``base`` itself with entries of its own (scale 1)?"""
        return base is self._base and self._one

    @property
    def own(self) -> Mapping:
        """The entries given as its own (read only)."""
        return MappingProxyType(self._own)

    def differing(self, base: Mapping) -> dict:
        """The entries that differ from ``base`` (in key order): only the own
        ones can, when this map is ``base`` itself with a few entries of its own."""
        if base is self._base and self._one:
            return {k: v for k, v in self._own.items() if v != base[k]}
        return {k: v for k, v in self.items() if v != base[k]}

    def nonzero(self) -> dict:
        """The nonzero entries, in key order, each formed once."""
        own, base, scale, one = self._own, self._base, self._scale, self._one
        if not scale:
            return {k: v for k, v in own.items() if v}
        out = {}
        for k in self._keys:
            v = own.get(k)
            if v is None:
                v = base.get(k)
                if v and not one:
                    v = scale * v
            if v:
                out[k] = v
        return out


class OffsetMap(_DerivedMap):
    """An immutable map over the keys of ``keys`` whose value at ``k`` is
    ``own[k] + scale * base[k]`` (each term 0 where its map has no ``k``).

    A range's end lifted from the optimal face has the duals ``u - w y*``: kept
    as ``u`` (``own``, its few nonzero entries), ``-w`` and the optimum's
    ``y*``, so the report reads ``u`` as it is (:func:`offsets_from`).  Each
    value is formed on access, exactly; nothing is stored per key."""

    __slots__ = ()

    def __init__(self, keys: Mapping, own: dict, base: Mapping, scale: Fraction) -> None:
        self._keys, self._own, self._base, self._scale = keys, own, base, scale

    def __getitem__(self, k: str) -> Fraction:
        got, b = self._own.get(k), self._base.get(k)
        if got is None and k not in self._keys:
            raise KeyError(k)
        v = _ZERO if got is None else got
        return v + self._scale * b if b and self._scale else v

    def nonzero(self) -> dict:
        """The nonzero entries, in key order, each formed once."""
        if not self._scale:
            return {k: v for k, v in self._own.items() if v}
        return {k: v for k in self._keys if (v := self[k])}


def offsets_from(m: Mapping, base: Mapping) -> dict | None:
    """``{k: m[k] - scale * base[k]}`` over the own entries of ``m`` when it is a
    :class:`ScaledMap` of ``base`` (every other entry is ``scale * base[k]``),
    or the own entries themselves for an :class:`OffsetMap` of ``base``; None
    for any other map.  (A new dict: the caller may change it.)"""
    if isinstance(m, OffsetMap) and m._base is base:
        return dict(m._own)
    if not isinstance(m, ScaledMap) or m._base is not base:
        return None
    return {k: v - m._scale * base[k] if k in base else v for k, v in m._own.items()}


def nonzero_entries(m: Mapping) -> dict:
    """``{k: v for k, v in m.items() if v}``, faster on a :class:`ScaledMap` or
    an :class:`OffsetMap`."""
    return m.nonzero() if isinstance(m, (ScaledMap, OffsetMap)) else {k: v for k, v in m.items() if v}


def entries_differing(m: Mapping, base: Mapping) -> dict:
    """``{k: v for k, v in m.items() if v != base[k]}``, faster on a :class:`ScaledMap` of ``base``."""
    return m.differing(base) if isinstance(m, ScaledMap) else {k: v for k, v in m.items() if v != base[k]}


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
