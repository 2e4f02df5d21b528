"""exactlp: exact rational linear programming with proofs.

The public façade.  Heavy parts (the solver, the verifier) are imported on
first use so that ``exactlp --help`` and ``exactlp check`` start quickly.
"""

from __future__ import annotations

__version__ = "0.1.0"

from .errors import ExactLPError, InputError, ModelError  # noqa: E402
from .io import load  # noqa: E402
from .model import Constraint, Model, Sense, Variable, build_model  # noqa: E402


def solve(model, **options):
    """Solve ``model`` exactly; see :func:`exactlp.solver.solve`.

    A model with priority tiers is solved tier by tier with :func:`solve_stages`.
    """
    if getattr(model, "stages", ()):
        raise InputError("this model has priority tiers (objectives:): solve it with exactlp.solve_stages(model)",
                         field="objectives")
    from .solver import solve as _solve

    return _solve(model, **options)


def solve_stages(model, **options):
    """Solve a model with priority tiers; see :func:`exactlp.stages.solve_stages`."""
    from .stages import solve_stages as _solve_stages

    return _solve_stages(model, **options)


def verify(model, certificate):
    """Check ``certificate`` against ``model``; see :func:`exactlp.verifier.verify`."""
    from .verifier import verify as _verify

    return _verify(model, certificate)


_LAZY = {
    "Status": ("exactlp.solver.result", "Status"),
    "SolveResult": ("exactlp.solver.result", "SolveResult"),
    "build_certificate": ("exactlp.certificate", "build_certificate"),
    "dump_certificate": ("exactlp.certificate", "dump_certificate"),
    "read_certificate": ("exactlp.certificate", "read_certificate"),
}


def __getattr__(name):
    if name in _LAZY:
        import importlib

        module, attr = _LAZY[name]
        return getattr(importlib.import_module(module), attr)
    raise AttributeError(f"module 'exactlp' has no attribute {name!r}")


__all__ = [
    "__version__", "ExactLPError", "InputError", "ModelError", "load", "solve", "solve_stages", "verify",
    "Model", "Variable", "Constraint", "Sense", "build_model", *_LAZY,
]
