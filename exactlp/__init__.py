"""exactlp: exact rational linear programming with proofs.

The public façade.  Heavy parts (the solver, the verifier) are imported on
first use so that ``exactlp --help`` and ``exactlp check`` start quickly.
"""

from __future__ import annotations

__version__ = "0.1.0"

from .errors import ExactLPError, InputError, ModelError  # noqa: E402

# The readers (PyYAML, the MPS parser) and the model classes are imported on
# first use, like the solver: ``exactlp --help`` needs none of them (about 80 ms).


def _need_model(model) -> None:
    """Refuse anything but a :class:`exactlp.Model` with one line that says how to get one."""
    from .model import Model

    if isinstance(model, Model):
        return
    import os

    if isinstance(model, (str, os.PathLike)):
        raise InputError(f"got the path {os.fspath(model)!r}, not a Model: load it first, "
                         f"exactlp.load({os.fspath(model)!r})", field="model")
    raise InputError(f"must be a Model (from exactlp.load or exactlp.build_model), "
                     f"not {type(model).__name__}", field="model")


def solve(model, **options):
    """Solve ``model`` exactly; see :func:`exactlp.solver.solve`.

    A model with priority tiers is solved tier by tier with :func:`solve_stages`.
    """
    _need_model(model)
    if getattr(model, "stages", ()):
        raise InputError("this model has priority tiers (objectives:): solve it with exactlp.solve_stages(model)",
                         field="objectives")
    from .solver import solve as _solve

    return _solve(model, **options)


def solve_stages(model, **options):
    """Solve a model with priority tiers; see :func:`exactlp.stages.solve_stages`."""
    _need_model(model)
    from .stages import solve_stages as _solve_stages

    return _solve_stages(model, **options)


def verify(model, certificate):
    """Check ``certificate`` against ``model``; see :func:`exactlp.verifier.verify`."""
    _need_model(model)
    from .verifier import verify as _verify

    return _verify(model, certificate)


_LAZY = {
    "load": ("exactlp.io", "load"),
    "Model": ("exactlp.model", "Model"),
    "Variable": ("exactlp.model", "Variable"),
    "Constraint": ("exactlp.model", "Constraint"),
    "Sense": ("exactlp.model", "Sense"),
    "build_model": ("exactlp.model", "build_model"),
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
    "__version__", "ExactLPError", "InputError", "ModelError", "solve", "solve_stages", "verify", *_LAZY,
]
